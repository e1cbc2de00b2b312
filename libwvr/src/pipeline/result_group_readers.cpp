#include "wvr/result_group_readers.hpp"

#include <cstdlib>
#include <optional>

#include "wvr/error.hpp"

namespace wvr {
namespace {

// Typed access to the datasets of one group, with errors naming the dataset.
class GroupReader {
 public:
  GroupReader(const ResultGroup& group, const std::string& source)
      : group_(group), where_(source + ": /results/" + group.stage + "/") {}

  template <typename T>
  const std::vector<T>& values(const char* name, std::vector<std::size_t> shape) const {
    const ResultDataset* d = group_.find(name);
    if (d == nullptr) throw InvalidInput(where_ + name + " is missing");
    const auto* v = std::get_if<std::vector<T>>(&d->values);
    if (v == nullptr || d->shape != shape)
      throw InvalidInput(where_ + name + " has an unexpected shape or type");
    return *v;
  }
  std::size_t extent(const char* name, std::size_t axis) const {
    const ResultDataset* d = group_.find(name);
    if (d == nullptr || d->shape.size() <= axis) throw InvalidInput(where_ + name + " is missing");
    return d->shape[axis];
  }
  double number_attribute(const char* name) const {
    const auto it = group_.attributes.find(name);
    if (it == group_.attributes.end())
      throw InvalidInput(where_ + " attribute " + name + " is missing");
    char* end = nullptr;
    const double v = std::strtod(it->second.c_str(), &end);
    if (end == it->second.c_str())
      throw InvalidInput(where_ + " attribute " + name + " = \"" + it->second +
                         "\" is not a number");
    return v;
  }

 private:
  const ResultGroup& group_;
  std::string where_;
};

}  // namespace

StoredCorrection correction_from_result_group(const ResultGroup& group, const std::string& source) {
  const GroupReader in(group, source);
  const std::size_t na = in.extent("phase_correction_rad", 0);
  const std::size_t nt = in.extent("phase_correction_rad", 1);
  const std::size_t nb = in.extent("baseline_antennas", 0);
  const std::size_t nr = in.extent("corrected_calibrator_phase_rad", 0);
  StoredCorrection out;
  PhaseCorrections& c = out.corrections;
  c.obs_freq_ghz = in.number_attribute("obs_freq_ghz");
  c.phase_per_path = in.number_attribute("phase_per_path");
  c.time_s = in.values<double>("time_s", {nt});
  c.phase_correction_rad = in.values<double>("phase_correction_rad", {na, nt});
  c.path_mm = in.values<double>("wet_path_mm", {na, nt});
  c.flags = in.values<std::uint8_t>("flags", {na, nt});
  c.antenna_scale = in.values<double>("antenna_scale", {na});
  CorrectionMetrics& m = out.metrics;
  m.corrected_phase_rad = in.values<double>("corrected_calibrator_phase_rad", {nr});
  const auto& pairs = in.values<std::int32_t>("baseline_antennas", {nb, 2});
  const auto& before = in.values<double>("baseline_phase_rms_before_deg", {nb});
  const auto& after = in.values<double>("baseline_phase_rms_after_deg", {nb});
  const auto& coherence_before = in.values<double>("baseline_coherence_before", {nb});
  const auto& coherence_after = in.values<double>("baseline_coherence_after", {nb});
  for (std::size_t b = 0; b < nb; ++b) {
    BaselineMetrics bm;
    bm.antenna_a = pairs[2 * b];
    bm.antenna_b = pairs[2 * b + 1];
    bm.rms_before_deg = before[b];
    bm.rms_after_deg = after[b];
    bm.coherence_before = coherence_before[b];
    bm.coherence_after = coherence_after[b];
    bm.improvement_factor = after[b] > 0.0 ? before[b] / after[b] : 0.0;
    m.baselines.push_back(bm);
  }
  const auto& antenna_before = in.values<double>("antenna_phase_rms_before_deg", {na});
  const auto& antenna_after = in.values<double>("antenna_phase_rms_after_deg", {na});
  for (std::size_t a = 0; a < na; ++a) {
    AntennaMetrics am;
    am.rms_before_deg = antenna_before[a];
    am.rms_after_deg = antenna_after[a];
    am.improvement_factor = antenna_after[a] > 0.0 ? antenna_before[a] / antenna_after[a] : 0.0;
    m.antennas.push_back(am);
  }
  return out;
}

NightDiagnosis diagnosis_from_result_group(const ResultGroup& group,
                                           const std::vector<std::string>& antenna_names,
                                           const std::string& source) {
  const GroupReader in(group, source);
  const std::size_t nw = in.extent("window_start_s", 0);
  const std::size_t na = antenna_names.size();
  const auto& start = in.values<double>("window_start_s", {nw});
  const auto& stop = in.values<double>("window_stop_s", {nw});
  const auto& verdict = in.values<std::uint8_t>("verdict", {nw});
  const auto& calibrator = in.values<std::uint8_t>("calibrator", {nw});
  const auto& inherited = in.values<std::uint8_t>("inherited", {nw});
  const auto& before = in.values<double>("phase_rms_before_deg", {nw});
  const auto& after = in.values<double>("phase_rms_after_deg", {nw});
  const auto& floor = in.values<double>("floor_deg", {nw});
  const auto& correlation = in.values<double>("correlation", {nw});
  const auto& slope = in.values<double>("slope", {nw});
  const auto& chi2 = in.values<double>("chi2_per_dof", {nw});
  const auto& path = in.values<double>("radiometer_path_rms_um", {nw});
  const auto& faults = in.values<std::uint8_t>("antenna_faults", {na, nw});
  NightDiagnosis d;
  d.antenna_names = antenna_names;
  for (std::size_t w = 0; w < nw; ++w) {
    if (verdict[w] > static_cast<std::uint8_t>(Verdict::kOutsideDomain))
      throw InvalidInput(source + ": /results/" + group.stage + "/verdict[" + std::to_string(w) +
                         "] = " + std::to_string(verdict[w]) + " is not a verdict code");
    WindowDiagnosis wd;
    wd.start_s = start[w];
    wd.stop_s = stop[w];
    wd.verdict = static_cast<Verdict>(verdict[w]);
    wd.calibrator = calibrator[w] != 0;
    wd.inherited = inherited[w] != 0;
    wd.rms_before_deg = before[w];
    wd.rms_after_deg = after[w];
    wd.floor_deg = floor[w];
    wd.improvement_factor = after[w] > 0.0 ? before[w] / after[w] : 0.0;
    wd.correlation = correlation[w];
    wd.slope = slope[w];
    wd.chi2_per_dof = chi2[w];
    wd.radiometer_path_rms_um = path[w];
    for (std::size_t a = 0; a < na; ++a) wd.antenna_faults.push_back(faults[a * nw + w]);
    d.windows.push_back(std::move(wd));
  }
  return d;
}

}  // namespace wvr
