// Fast-switching advice and its direct check on a frozen-flow screen (wvr/fast_switching.hpp).

#include "wvr/fast_switching.hpp"

#include <algorithm>
#include <cmath>
#include <memory>
#include <numbers>
#include <sstream>
#include <utility>

#include "wvr/constants.hpp"
#include "wvr/error.hpp"

namespace wvr {
namespace {

constexpr double kPi = std::numbers::pi;
constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

double radians(double deg) { return deg * kPi / 180.0; }

// Phase (deg) per metre of non-dispersive path at freq_ghz: 360 nu / c.
double deg_per_path_m(double freq_ghz) {
  return 360.0 * freq_ghz * 1e9 / constants::speed_of_light_m_per_s;
}

void require_non_negative(const std::string& field, double value, const char* unit) {
  require_finite(field, value);
  if (value < 0.0) throw InvalidInput(describe_value(field, value) + " must be >= 0 " + unit);
}

void require_positive(const std::string& field, double value, const char* unit) {
  require_finite(field, value);
  if (!(value > 0.0)) throw InvalidInput(describe_value(field, value) + " must be > 0 " + unit);
}

// Residual (deg) of the rule for one structure function and cycle time.
double rule_residual_deg(const PathStructureFunction& structure,
                         const FastSwitchingInput& input,
                         double cycle_time_s) {
  const double d_eff = fast_switching_effective_separation_m(
      input.wind_speed_m_s, cycle_time_s, input.layer_height_m, input.calibrator_separation_deg);
  return deg_per_path_m(input.freq_ghz) * std::sqrt(structure.path_m2(d_eff));
}

// Longest cycle time such that the residual stays <= target for every shorter cycle. A log grid
// over (0, max_cycle_time_s] finds the first crossing (so a fitted function that is not
// monotonic cannot send bisection to a later crossing); bisection then refines it.
CycleTimeSolution solve_cycle_time(const PathStructureFunction& structure,
                                   const FastSwitchingInput& input) {
  CycleTimeSolution solution;
  const double k = deg_per_path_m(input.freq_ghz);
  const double target = input.target_rms_deg;
  const double offset_m = input.layer_height_m * radians(input.calibrator_separation_deg);
  solution.floor_deg = k * std::sqrt(structure.path_m2(offset_m));
  solution.saturation_deg = k * std::sqrt(structure.saturation_m2());
  std::ostringstream message;
  message.precision(4);
  if (solution.floor_deg > target) {
    solution.status = CycleTimeStatus::kUnreachable;
    message << "calibrator offset h theta = " << offset_m << " m alone leaves "
            << solution.floor_deg << " deg > target " << target << " deg";
    solution.message = message.str();
    return solution;
  }
  if (solution.saturation_deg <= target || input.wind_speed_m_s == 0.0) {
    solution.status = CycleTimeStatus::kAlwaysMet;
    solution.cycle_time_s = kInf;
    solution.effective_separation_m = kInf;
    if (input.wind_speed_m_s == 0.0) {
      message << "no wind: the residual " << solution.floor_deg
              << " deg does not grow with the cycle time";
    } else {
      message << "saturation " << solution.saturation_deg << " deg <= target " << target << " deg";
    }
    solution.message = message.str();
    return solution;
  }
  constexpr int kGridPoints = 400;
  constexpr double kDecades = 6.0;
  double met = 0.0;
  double exceeded = kNaN;
  for (int j = 0; j <= kGridPoints; ++j) {
    const double t =
        input.max_cycle_time_s * std::pow(10.0, -kDecades * (1.0 - double(j) / kGridPoints));
    if (rule_residual_deg(structure, input, t) > target) {
      exceeded = t;
      break;
    }
    met = t;
  }
  if (std::isnan(exceeded)) {
    solution.status = CycleTimeStatus::kAlwaysMet;
    solution.cycle_time_s = kInf;
    solution.effective_separation_m = kInf;
    message << "met at every cycle time up to max_cycle_time_s = " << input.max_cycle_time_s
            << " s";
    solution.message = message.str();
    return solution;
  }
  for (int iteration = 0; iteration < 100 && exceeded - met > 1e-10 * exceeded; ++iteration) {
    const double mid = 0.5 * (met + exceeded);
    (rule_residual_deg(structure, input, mid) > target ? exceeded : met) = mid;
  }
  solution.status = CycleTimeStatus::kSolved;
  solution.cycle_time_s = met;
  solution.effective_separation_m = fast_switching_effective_separation_m(
      input.wind_speed_m_s, met, input.layer_height_m, input.calibrator_separation_deg);
  message << "t_cyc " << met << " s (d_eff " << solution.effective_separation_m << " m)";
  solution.message = message.str();
  return solution;
}

double cycle_time_gain(const CycleTimeSolution& without, const CycleTimeSolution& with) {
  using S = CycleTimeStatus;
  if (without.status == S::kSolved && with.status == S::kSolved) {
    return with.cycle_time_s / without.cycle_time_s;
  }
  const bool with_better = (with.status == S::kAlwaysMet && without.status != S::kAlwaysMet) ||
                           (with.status != S::kUnreachable && without.status == S::kUnreachable);
  return with_better ? kInf : kNaN;
}

void append_solution(std::ostringstream& out, const char* name, const CycleTimeSolution& s) {
  out << name << " " << to_string(s.status);
  if (s.status == CycleTimeStatus::kSolved) out << " t_cyc <= " << s.cycle_time_s << " s";
  out << " (floor " << s.floor_deg << " deg)";
}

}  // namespace

void BrokenPowerLaw::validate() const {
  require_finite("inner_slope", inner_slope);
  if (!(inner_slope > 0.0 && inner_slope <= 2.0)) {
    throw InvalidInput(describe_value("inner_slope", inner_slope) + " is outside (0, 2]");
  }
  require_in_range("outer_slope", outer_slope, 0.0, 2.0);
  require_positive("break_m", break_m, "m");
  require_positive("path_m2_at_break", path_m2_at_break, "m^2");
  if (std::isnan(saturation_m2) || !(saturation_m2 > 0.0)) {
    throw InvalidInput(describe_value("saturation_m2", saturation_m2) +
                       " must be > 0 m^2 (+inf for no saturation)");
  }
}

PathStructureFunction::PathStructureFunction(std::function<double(double)> function,
                                             double saturation_m2,
                                             std::string label)
    : function_(std::move(function)), saturation_m2_(saturation_m2), label_(std::move(label)) {}

PathStructureFunction PathStructureFunction::from_layer(const TurbulentLayer& layer) {
  auto spectrum = std::make_shared<const LayerSpectrum>(layer);
  const double saturation = spectrum->saturation_m2();
  return PathStructureFunction(
      [spectrum](double d_m) { return spectrum->structure_function_m2(d_m); }, saturation,
      "layer theory");
}

PathStructureFunction PathStructureFunction::from_broken_power_law(const BrokenPowerLaw& fit) {
  fit.validate();
  return PathStructureFunction(
      [fit](double d_m) {
        const double slope = d_m <= fit.break_m ? fit.inner_slope : fit.outer_slope;
        return std::min(fit.path_m2_at_break * std::pow(d_m / fit.break_m, slope),
                        fit.saturation_m2);
      },
      fit.saturation_m2, "broken power law");
}

PathStructureFunction PathStructureFunction::from_function(std::function<double(double)> path_m2,
                                                           double saturation_m2,
                                                           std::string label) {
  if (!path_m2) throw InvalidInput("path_m2 is an empty function");
  if (std::isnan(saturation_m2) || saturation_m2 < 0.0) {
    throw InvalidInput(describe_value("saturation_m2", saturation_m2) +
                       " must be >= 0 m^2 (+inf when unknown)");
  }
  return PathStructureFunction(std::move(path_m2), saturation_m2, std::move(label));
}

double PathStructureFunction::path_m2(double d_m) const {
  require_non_negative("d_m", d_m, "m");
  if (!function_) throw InvalidInput("path structure function is unset (empty)");
  const double value = function_(d_m);
  if (!std::isfinite(value) || value < 0.0) {
    throw InvalidInput(
        describe_value(label_ + " path_m2(d_m = " + std::to_string(d_m) + ")", value) +
        " must be finite and >= 0 m^2");
  }
  return value;
}

double fast_switching_effective_separation_m(double wind_speed_m_s,
                                             double cycle_time_s,
                                             double layer_height_m,
                                             double calibrator_separation_deg) {
  require_non_negative("wind_speed_m_s", wind_speed_m_s, "m/s");
  require_non_negative("cycle_time_s", cycle_time_s, "s");
  require_non_negative("layer_height_m", layer_height_m, "m");
  require_in_range("calibrator_separation_deg", calibrator_separation_deg, 0.0, 180.0, "deg");
  return 0.5 * wind_speed_m_s * cycle_time_s + layer_height_m * radians(calibrator_separation_deg);
}

double fast_switching_residual_deg(const PathStructureFunction& structure,
                                   double wind_speed_m_s,
                                   double cycle_time_s,
                                   double layer_height_m,
                                   double calibrator_separation_deg,
                                   double freq_ghz) {
  require_positive("freq_ghz", freq_ghz, "GHz");
  const double d_eff = fast_switching_effective_separation_m(
      wind_speed_m_s, cycle_time_s, layer_height_m, calibrator_separation_deg);
  return deg_per_path_m(freq_ghz) * std::sqrt(structure.path_m2(d_eff));
}

void FastSwitchingInput::validate() const {
  if (uncorrected.empty()) throw InvalidInput("uncorrected structure function is not set");
  if (corrected && corrected->empty()) {
    throw InvalidInput("corrected structure function is present but empty");
  }
  require_non_negative("wind_speed_m_s", wind_speed_m_s, "m/s");
  require_non_negative("layer_height_m", layer_height_m, "m");
  require_in_range("calibrator_separation_deg", calibrator_separation_deg, 0.0, 180.0, "deg");
  require_positive("freq_ghz", freq_ghz, "GHz");
  require_positive("target_rms_deg", target_rms_deg, "deg");
  require_positive("max_cycle_time_s", max_cycle_time_s, "s");
  for (std::size_t i = 0; i < report_cycle_times_s.size(); ++i) {
    require_positive("report_cycle_times_s[" + std::to_string(i) + "]", report_cycle_times_s[i],
                     "s");
  }
}

const char* to_string(CycleTimeStatus status) {
  switch (status) {
    case CycleTimeStatus::kSolved:
      return "solved";
    case CycleTimeStatus::kUnreachable:
      return "unreachable";
    case CycleTimeStatus::kAlwaysMet:
      return "always met";
  }
  return "unknown";
}

FastSwitchingAdvice advise_fast_switching(const FastSwitchingInput& input) {
  input.validate();
  FastSwitchingAdvice advice;
  advice.target_rms_deg = input.target_rms_deg;
  advice.freq_ghz = input.freq_ghz;
  advice.uncorrected = solve_cycle_time(input.uncorrected, input);
  if (input.corrected) {
    advice.corrected = solve_cycle_time(*input.corrected, input);
    advice.cycle_time_gain = cycle_time_gain(advice.uncorrected, *advice.corrected);
  }
  for (double t : input.report_cycle_times_s) {
    advice.cycle_time_s.push_back(t);
    advice.effective_separation_m.push_back(fast_switching_effective_separation_m(
        input.wind_speed_m_s, t, input.layer_height_m, input.calibrator_separation_deg));
    advice.residual_uncorrected_deg.push_back(rule_residual_deg(input.uncorrected, input, t));
    if (input.corrected) {
      advice.residual_corrected_deg.push_back(rule_residual_deg(*input.corrected, input, t));
    }
  }
  return advice;
}

std::string FastSwitchingAdvice::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << "fast switching for " << target_rms_deg << " deg at " << freq_ghz << " GHz: ";
  append_solution(out, "uncorrected", uncorrected);
  if (corrected) {
    out << "; ";
    append_solution(out, "corrected", *corrected);
    out << "; cycle-time gain " << cycle_time_gain;
  }
  return out.str();
}

void FastSwitchingTrack::validate() const {
  require_finite("east_m", east_m);
  require_finite("north_m", north_m);
  require_finite("start_time_s", start_time_s);
  require_positive("duration_s", duration_s, "s");
  require_positive("cycle_time_s", cycle_time_s, "s");
  require_in_range("calibrator_separation_deg", calibrator_separation_deg, 0.0, 180.0, "deg");
  require_finite("offset_from_wind_deg", offset_from_wind_deg);
  if (target_samples_per_cycle < 1) {
    throw InvalidInput("target_samples_per_cycle = " + std::to_string(target_samples_per_cycle) +
                       " must be >= 1");
  }
}

FastSwitchingSimulationResult simulate_fast_switching(const PhaseScreen& screen,
                                                      const FastSwitchingTrack& track) {
  track.validate();
  const bool linear = track.transfer == CalibratorTransfer::kLinearInterpolation;
  const auto visits = static_cast<std::size_t>(std::floor(track.duration_s / track.cycle_time_s)) +
                      (linear ? 1 : 0);
  const std::size_t cycles = linear ? (visits > 0 ? visits - 1 : 0) : visits;
  if (cycles < 1) {
    throw InvalidInput(describe_value("duration_s", track.duration_s) +
                       " s holds no whole switching cycle of " +
                       describe_value("cycle_time_s", track.cycle_time_s) + " s" +
                       (linear ? " with a closing calibrator visit" : ""));
  }
  // Calibrator pierce-point offset at the layer, rotated from the wind direction. With no wind
  // the screen's along axis points east, and so does the reference direction here.
  const TurbulentLayer& layer = screen.layer();
  const double speed = std::hypot(layer.wind_east_m_s, layer.wind_north_m_s);
  const double wind_e = speed > 0.0 ? layer.wind_east_m_s / speed : 1.0;
  const double wind_n = speed > 0.0 ? layer.wind_north_m_s / speed : 0.0;
  const double angle = radians(track.offset_from_wind_deg);
  const double offset = layer.height_m * radians(track.calibrator_separation_deg);
  const double cal_east =
      track.east_m + offset * (wind_e * std::cos(angle) - wind_n * std::sin(angle));
  const double cal_north =
      track.north_m + offset * (wind_n * std::cos(angle) + wind_e * std::sin(angle));
  const double end_s = track.start_time_s + static_cast<double>(cycles) * track.cycle_time_s;
  // Both pierce points move in a straight line over the screen, so covering the ends suffices.
  for (double t : {track.start_time_s, end_s}) {
    if (!screen.covers(track.east_m, track.north_m, t) || !screen.covers(cal_east, cal_north, t)) {
      throw InvalidInput(describe_value("start_time_s", track.start_time_s) + " with " +
                         describe_value("duration_s", track.duration_s) +
                         " s takes the target or calibrator pierce point off the screen grid");
    }
  }
  std::vector<double> calibrator(visits);
  for (std::size_t k = 0; k < calibrator.size(); ++k) {
    calibrator[k] = screen.path_m(cal_east, cal_north,
                                  track.start_time_s + static_cast<double>(k) * track.cycle_time_s);
  }
  const auto samples = static_cast<std::size_t>(track.target_samples_per_cycle);
  double residual_sum2 = 0.0, target_sum = 0.0, target_sum2 = 0.0;
  for (std::size_t k = 0; k < cycles; ++k) {
    for (std::size_t m = 0; m < samples; ++m) {
      const double w = (static_cast<double>(m) + 0.5) / static_cast<double>(samples);
      const double t = track.start_time_s + (static_cast<double>(k) + w) * track.cycle_time_s;
      const double target = screen.path_m(track.east_m, track.north_m, t);
      const double transferred =
          linear ? (1.0 - w) * calibrator[k] + w * calibrator[k + 1] : calibrator[k];
      residual_sum2 += (target - transferred) * (target - transferred);
      target_sum += target;
      target_sum2 += target * target;
    }
  }
  FastSwitchingSimulationResult result;
  result.cycles = cycles;
  result.target_samples = cycles * samples;
  const double n = static_cast<double>(result.target_samples);
  result.residual_path_rms_m = std::sqrt(residual_sum2 / n);
  const double mean = target_sum / n;
  result.target_path_rms_m = std::sqrt(std::max(0.0, target_sum2 / n - mean * mean));
  return result;
}

double simulate_fast_switching_residual_rad(const PhaseScreen& screen,
                                            const FastSwitchingTrack& track,
                                            double freq_ghz) {
  require_positive("freq_ghz", freq_ghz, "GHz");
  return radians(deg_per_path_m(freq_ghz)) *
         simulate_fast_switching(screen, track).residual_path_rms_m;
}

}  // namespace wvr
