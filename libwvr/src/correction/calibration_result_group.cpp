// The calibration's field table and its night-file result group.
#include <algorithm>

#include "core/result_field_io.hpp"
#include "wvr/calibration.hpp"
#include "wvr/correction.hpp"
#include "wvr/error.hpp"

namespace wvr {

std::span<const ResultArrayField<CalibrationResult>> calibration_fields() {
  using R = CalibrationResult;
  // The segment fields came with segmented solves, the last three with the per-night choice of
  // the scaling: files written before them lack them.
  static const ResultArrayField<R> fields[] = {
      {"scale", &R::scale, "", "1", "array scale (the first segment's when segmented)"},
      {"scale_sigma", &R::scale_sigma, "", "1", "1-sigma error of scale"},
      {"antenna_scale", &R::antenna_scale, "a", "1",
       "scale of each antenna (equal to scale when one for the array)"},
      {"antenna_scale_sigma", &R::antenna_scale_sigma, "a", "1", "1-sigma error of antenna_scale"},
      {"segment_start_s", &R::segment_start_s, "s", "s",
       "start of each time segment holding calibrator rows", true},
      {"segment_scale", &R::segment_scale, "s", "1", "array scale of each segment", true},
      {"segment_scale_sigma", &R::segment_scale_sigma, "s", "1",
       "1-sigma error of segment_scale (NaN without covariance)", true},
      {"per_antenna_scale", &R::per_antenna_scale, "", "1",
       "the scaling kept: true one per antenna, false one for the array", true},
      {"antenna_scale_statistic", &R::antenna_scale_statistic, "", "1",
       "BIC test n ln(C_array / C_per_antenna) that chose it (NaN when forced)", true},
      {"antenna_scale_threshold", &R::antenna_scale_threshold, "", "1",
       "its threshold (A - 1) ln n (NaN when forced)", true},
  };
  return fields;
}

std::size_t axis_extent(const CalibrationResult& c, char axis) {
  switch (axis) {
    case 'a':
      return c.antenna_scale.size();
    case 's':
      return c.segment_start_s.size();
  }
  throw InvalidInput(std::string("CalibrationResult has no axis '") + axis + "'");
}

ResultGroup calibration_result_group(const CalibrationResult& c) {
  ResultGroup g;
  g.stage = "calibration";
  g.attributes["status"] = to_string(c.status);
  g.attributes["report"] = c.brief_report();
  detail::write_result_fields(g, c, calibration_fields());
  return g;
}

CalibrationResult calibration_from_result_group(const ResultGroup& group,
                                                std::size_t antennas,
                                                const std::string& source) {
  CalibrationResult c;
  const auto status = group.attributes.find("status");
  c.status = CalibrationStatus::kNoData;
  if (status != group.attributes.end()) {
    for (CalibrationStatus s : {CalibrationStatus::kConverged, CalibrationStatus::kNoConvergence,
                                CalibrationStatus::kNoData, CalibrationStatus::kSolverFailure})
      if (status->second == to_string(s)) c.status = s;
  } else {
    c.status = CalibrationStatus::kConverged;  // early files recorded no status
  }
  const auto report = group.attributes.find("report");
  if (report != group.attributes.end()) c.message = report->second;
  const ResultDataset* starts = group.find("segment_start_s");
  const std::size_t segments =
      starts != nullptr && starts->shape.size() == 1 ? starts->shape.front() : 0;
  const auto extent = [&](char axis) {
    return axis == 'a' ? antennas : axis == 's' ? segments : axis_extent(c, axis);
  };
  detail::read_result_fields(group, c, calibration_fields(), extent, source);
  // Files written before the scaling was chosen per night tell a per-antenna scale by antenna
  // scales that differ.
  if (group.find("per_antenna_scale") == nullptr) {
    c.per_antenna_scale = std::any_of(c.antenna_scale.begin(), c.antenna_scale.end(),
                                      [&](double s) { return s != c.scale; });
  }
  return c;
}

}  // namespace wvr
