// Slab thickness of a night's radiometer structure function with a delete-one-segment
// jackknife over time (wvr/structure_function.hpp).

#include <cmath>
#include <sstream>

#include "wvr/error.hpp"
#include "wvr/structure_function.hpp"

namespace wvr {

std::string NightSlabThickness::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << fit.brief_report() << "; jackknife over " << segment_thickness_m.size() << " segments ("
      << segments_dropped << " dropped): sigma ln W " << log_thickness_sigma << " (W "
      << jackknife_low_m << " .. " << jackknife_high_m << " m)";
  return out.str();
}

NightSlabThickness night_slab_thickness(const Night& night,
                                        const AntennaPaths& paths,
                                        const SpatialStructureOptions& options,
                                        double bins_per_decade,
                                        int segments) {
  if (segments < 2 || segments > 100) {
    throw InvalidInput("segments = " + std::to_string(segments) + " must be in [2, 100]");
  }
  NightSlabThickness out;
  const auto fit_of = [&](const AntennaPaths& p) {
    const SpatialStructureResult sf = radiometer_structure_function(night, p, options);
    if (!sf.ok()) {
      SlabThicknessFit none;
      none.message = sf.message;
      return none;
    }
    const StructureFunctionEstimate binned = bin_structure_function(sf, bins_per_decade);
    return fit_slab_thickness(binned.separation, binned.value_m2);
  };
  out.fit = fit_of(paths);
  // A limit has no error bar to estimate.
  if (!out.fit.ok() || out.fit.constraint != ThicknessConstraint::kMeasured) return out;
  // Delete-one-segment jackknife (Quenouille 1956, Tukey 1958; textbook): refit with each time
  // segment removed; the spread of ln W over the refits, times sqrt((K - 1) / K) summed,
  // estimates the error of ln W from the night's own sample variance.
  const std::size_t nt = paths.time_s.size();
  const auto k_segments = static_cast<std::size_t>(segments);
  double sum = 0.0;
  std::vector<double> logs;
  for (std::size_t k = 0; k < k_segments; ++k) {
    AntennaPaths reduced = paths;
    for (std::size_t a = 0; a < reduced.antennas; ++a) {
      for (std::size_t i = k * nt / k_segments; i < (k + 1) * nt / k_segments; ++i)
        reduced.path_mm[a * nt + i] = std::nan("");
    }
    const SlabThicknessFit f = fit_of(reduced);
    if (!f.ok() || f.constraint != ThicknessConstraint::kMeasured) {
      ++out.segments_dropped;  // a refit that only gives a limit would bias the spread
      continue;
    }
    out.segment_thickness_m.push_back(f.thickness_m);
    logs.push_back(std::log(f.thickness_m));
    sum += logs.back();
  }
  const double k = static_cast<double>(logs.size());
  if (logs.size() >= 2) {
    const double mean = sum / k;
    double spread = 0.0;
    for (double v : logs) spread += (v - mean) * (v - mean);
    out.log_thickness_sigma = std::sqrt(spread * (k - 1.0) / k);
    out.jackknife_low_m = out.fit.thickness_m * std::exp(-out.log_thickness_sigma);
    out.jackknife_high_m = out.fit.thickness_m * std::exp(out.log_thickness_sigma);
  }
  return out;
}

}  // namespace wvr
