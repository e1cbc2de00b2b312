// Slab thickness of one or several nights' radiometer structure functions with a
// delete-a-group jackknife over time (wvr/structure_fits.hpp).

#include <algorithm>
#include <cmath>
#include <sstream>

#include "core/parallel_for.hpp"
#include "turbulence/radiometer_structure_without.hpp"
#include "wvr/error.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {
namespace {

// Selection `j` of every night's structure functions, the baselines pooled before binning,
// then fitted.
SlabThicknessFit pooled_fit(const std::vector<std::vector<SpatialStructureResult>>& by_night,
                            std::size_t j,
                            double bins_per_decade) {
  SpatialStructureResult pooled;
  std::string messages;
  for (const std::vector<SpatialStructureResult>& night : by_night) {
    const SpatialStructureResult& sf = night[j];
    if (!sf.ok()) {
      messages += (messages.empty() ? "" : "; ") + sf.message;
      continue;
    }
    pooled.baselines.insert(pooled.baselines.end(), sf.baselines.begin(), sf.baselines.end());
  }
  if (pooled.baselines.empty()) {
    SlabThicknessFit none;
    none.message = messages;
    return none;
  }
  const StructureFunctionEstimate binned = bin_structure_function(pooled, bins_per_decade);
  return fit_slab_thickness(binned.separation, binned.value_m2);
}

}  // namespace

std::string NightSlabThickness::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << fit.brief_report() << "; jackknife over " << segment_thickness_m.size() << " groups ("
      << segments_dropped << " dropped): sigma ln W " << log_thickness_sigma << " (W "
      << jackknife_low_m << " .. " << jackknife_high_m << " m); points-only interval "
      << profile_low_m << " .. " << profile_high_m << " m";
  return out.str();
}

NightSlabThickness pooled_slab_thickness(std::span<const Night> nights,
                                         std::span<const AntennaPaths> paths,
                                         const SpatialStructureOptions& options,
                                         double bins_per_decade,
                                         int groups) {
  if (groups < 2 || groups > 100) {
    throw InvalidInput("groups = " + std::to_string(groups) + " must be in [2, 100]");
  }
  if (nights.empty()) throw InvalidInput("nights: no night to fit");
  if (paths.size() != nights.size()) {
    throw InvalidInput("paths has " + std::to_string(paths.size()) + " entries for " +
                       std::to_string(nights.size()) + " nights");
  }
  // Delete-a-group jackknife (Quenouille 1956, Tukey 1958; textbook): the nights' samples, in
  // order, are cut into `groups` contiguous groups and the fit is repeated without each; the
  // spread of ln W over the refits, times sqrt((G - 1) / G) summed, estimates the error of
  // ln W from the sky's own sample variance, which the points' scatter about the model does
  // not see (the bins share one realisation of the screen and are strongly correlated).
  // Selection 0 of each night keeps every sample; selection g + 1 leaves out the night's part
  // of group g.
  std::size_t total = 0;
  for (const AntennaPaths& p : paths) total += p.time_s.size();
  const auto g_count = static_cast<std::size_t>(groups);
  std::vector<std::vector<SpatialStructureResult>> by_night;
  std::size_t offset = 0;
  for (std::size_t n = 0; n < nights.size(); ++n) {
    const std::size_t nt = paths[n].time_s.size();
    std::vector<detail::SampleSpan> left_out(1 + g_count);
    for (std::size_t g = 0; g < g_count; ++g) {
      const std::size_t first = g * total / g_count, last = (g + 1) * total / g_count;
      const std::size_t lo = std::max(first, offset), hi = std::min(last, offset + nt);
      if (lo < hi) left_out[g + 1] = {lo - offset, hi - offset};
    }
    by_night.push_back(
        detail::radiometer_structure_without(nights[n], paths[n], options, left_out));
    offset += nt;
  }
  NightSlabThickness out;
  out.fit = pooled_fit(by_night, 0, bins_per_decade);
  out.profile_low_m = out.fit.thickness_low_m;
  out.profile_high_m = out.fit.thickness_high_m;
  // A limit has no error bar to estimate.
  if (!out.fit.ok() || out.fit.constraint != ThicknessConstraint::kMeasured) return out;
  // Refits are independent: spread over threads; a refit's slot holds its W, or NaN when it
  // was dropped.
  std::vector<double> refit_thickness_m(g_count, std::nan(""));
  detail::parallel_blocks(g_count, detail::worker_count(options.threads, g_count),
                          [&](std::size_t begin, std::size_t end, std::size_t) {
                            for (std::size_t g = begin; g < end; ++g) {
                              const SlabThicknessFit f =
                                  pooled_fit(by_night, g + 1, bins_per_decade);
                              // A refit that only gives a limit would bias the spread: dropped.
                              if (f.ok() && f.constraint == ThicknessConstraint::kMeasured)
                                refit_thickness_m[g] = f.thickness_m;
                            }
                          });
  std::vector<double> logs;
  for (double w : refit_thickness_m) {
    if (std::isnan(w)) {
      ++out.segments_dropped;
      continue;
    }
    out.segment_thickness_m.push_back(w);
    logs.push_back(std::log(w));
  }
  const double k = static_cast<double>(logs.size());
  if (logs.size() < 2) return out;
  double mean = 0.0, spread = 0.0;
  for (double v : logs) mean += v / k;
  for (double v : logs) spread += (v - mean) * (v - mean);
  out.log_thickness_sigma = std::sqrt(spread * (k - 1.0) / k);
  out.jackknife_low_m = out.fit.thickness_m * std::exp(-out.log_thickness_sigma);
  out.jackknife_high_m = out.fit.thickness_m * std::exp(out.log_thickness_sigma);
  // The stated 1-sigma interval: the wider of the two on each side (the jackknife can come
  // out narrower than the points' scatter by chance with few groups).
  out.fit.thickness_low_m = std::min(out.profile_low_m, out.jackknife_low_m);
  out.fit.thickness_high_m = std::max(out.profile_high_m, out.jackknife_high_m);
  return out;
}

NightSlabThickness night_slab_thickness(const Night& night,
                                        const AntennaPaths& paths,
                                        const SpatialStructureOptions& options,
                                        double bins_per_decade,
                                        int segments) {
  if (segments < 2 || segments > 100) {
    throw InvalidInput("segments = " + std::to_string(segments) + " must be in [2, 100]");
  }
  return pooled_slab_thickness(std::span<const Night>(&night, 1),
                               std::span<const AntennaPaths>(&paths, 1), options, bins_per_decade,
                               segments);
}

}  // namespace wvr
