// Slab thickness of one or several nights' radiometer structure functions with a
// delete-a-group jackknife over time (wvr/structure_fits.hpp).

#include <algorithm>
#include <cmath>
#include <sstream>

#include "core/parallel_for.hpp"
#include "wvr/error.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {
namespace {

// The baselines of every night pooled before binning, then fitted.
SlabThicknessFit pooled_fit(std::span<const Night> nights,
                            const std::vector<AntennaPaths>& paths,
                            const SpatialStructureOptions& options,
                            double bins_per_decade) {
  SpatialStructureResult pooled;
  std::string messages;
  for (std::size_t i = 0; i < nights.size(); ++i) {
    const SpatialStructureResult sf = radiometer_structure_function(nights[i], paths[i], options);
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
  NightSlabThickness out;
  out.fit = pooled_fit(nights, std::vector<AntennaPaths>(paths.begin(), paths.end()), options,
                       bins_per_decade);
  out.profile_low_m = out.fit.thickness_low_m;
  out.profile_high_m = out.fit.thickness_high_m;
  // A limit has no error bar to estimate.
  if (!out.fit.ok() || out.fit.constraint != ThicknessConstraint::kMeasured) return out;
  // Delete-a-group jackknife (Quenouille 1956, Tukey 1958; textbook): the nights' samples, in
  // order, are cut into `groups` contiguous groups and the fit is repeated without each; the
  // spread of ln W over the refits, times sqrt((G - 1) / G) summed, estimates the error of
  // ln W from the sky's own sample variance, which the points' scatter about the model does
  // not see (the bins share one realisation of the screen and are strongly correlated).
  std::size_t total = 0;
  for (const AntennaPaths& p : paths) total += p.time_s.size();
  const auto g_count = static_cast<std::size_t>(groups);
  // Refits are independent: spread over threads, each with its own copy of the paths; a
  // refit's slot holds its W, or NaN when it was dropped.
  std::vector<double> refit_thickness_m(g_count, std::nan(""));
  detail::parallel_blocks(
      g_count, detail::worker_count(options.threads, g_count),
      [&](std::size_t begin, std::size_t end, std::size_t) {
        std::vector<AntennaPaths> without(paths.begin(), paths.end());
        for (std::size_t g = begin; g < end; ++g) {
          const std::size_t first = g * total / g_count, last = (g + 1) * total / g_count;
          std::size_t offset = 0;
          for (std::size_t n = 0; n < without.size(); ++n) {
            without[n].path_mm = paths[n].path_mm;
            const std::size_t nt = paths[n].time_s.size();
            const std::size_t lo = std::max(first, offset), hi = std::min(last, offset + nt);
            for (std::size_t a = 0; a < without[n].antennas && lo < hi; ++a) {
              for (std::size_t i = lo - offset; i < hi - offset; ++i)
                without[n].path_mm[a * nt + i] = std::nan("");
            }
            offset += nt;
          }
          const SlabThicknessFit f = pooled_fit(nights, without, options, bins_per_decade);
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
