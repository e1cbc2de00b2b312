// Summary of a night for inspection (the `skyphase inspect` report).

#include <algorithm>
#include <cstdio>
#include <sstream>
#include <string>
#include <vector>

#include "night/night_file_detail.hpp"
#include "wvr/night.hpp"
#include "wvr/night_summary_fields.hpp"

namespace wvr {

std::span<const NightSummaryField> night_summary_fields() {
  using S = NightSummary;
  // In the order of the inspect JSON.
  static const NightSummaryField fields[] = {
      {"time_epoch_utc", &S::time_epoch_utc, "time_epoch_utc", "1",
       "zero of the night's times (ISO 8601, UTC)"},
      {"antenna_count", &S::antenna_count, "antennas", "1", "antennas of the array (A)"},
      {"antenna_names", &S::antenna_names, "antenna_names", "1", "name of each antenna [A]"},
      {"antenna_valid_fraction", &S::antenna_valid_fraction, "antenna_valid_fraction", "1",
       "fraction of each antenna's samples valid in the file [A]"},
      {"channel_count", &S::channel_count, nullptr, "1", "radiometer channels (C)"},
      {"channel_names", &S::channel_names, "channels", "1", "name of each channel [C]"},
      {"time_count", &S::time_count, "samples", "1", "radiometer samples per antenna (T)"},
      {"start_s", &S::start_s, "start_s", "s", "first radiometer time"},
      {"stop_s", &S::stop_s, "stop_s", "s", "last radiometer time"},
      {"duration_s", &S::duration_s, "duration_s", "s", "stop_s - start_s"},
      {"median_cadence_s", &S::median_cadence_s, "median_cadence_s", "s",
       "median time step, 0 with fewer than 2 samples"},
      {"gaps", &S::gaps, "gaps", "s",
       "time steps longer than 1.5 x the median cadence, each start_s (last sample before) "
       "and stop_s (first sample after)"},
      {"valid_fraction", &S::valid_fraction, "valid_fraction", "1",
       "fraction of all antenna x time samples valid in the file"},
      {"calibrator_scan_count", &S::calibrator_scan_count, "calibrator_scans", "1",
       "calibrator scans"},
      {"target_scan_count", &S::target_scan_count, "target_scans", "1", "target scans"},
      {"weather_count", &S::weather_count, "weather_samples", "1", "weather samples"},
      {"calibrator_phase_count", &S::calibrator_phase_count, "calibrator_phase_rows", "1",
       "calibrator phase rows"},
      {"has_truth", &S::has_truth, "truth", "1",
       "the night holds the atmosphere it was simulated with (/truth)"},
      {"result_stages", &S::result_stages, "result_groups", "1",
       "stage of each stored result group (/results)"},
  };
  return fields;
}

NightSummary summarize(const Night& night) {
  NightSummary summary;
  summary.time_epoch_utc = night.time_epoch_utc;
  summary.antenna_count = night.antenna_count();
  summary.channel_count = night.channel_count();
  for (const RadiometerChannel& channel : night.radiometer.config.channels) {
    summary.channel_names.push_back(channel.name);
  }
  const std::vector<double>& time_s = night.radiometer.time_s;
  summary.time_count = time_s.size();
  if (!time_s.empty()) {
    summary.start_s = time_s.front();
    summary.stop_s = time_s.back();
    summary.duration_s = time_s.back() - time_s.front();
  }
  if (time_s.size() >= 2) {
    std::vector<double> steps(time_s.size() - 1);
    for (std::size_t i = 0; i + 1 < time_s.size(); ++i) steps[i] = time_s[i + 1] - time_s[i];
    std::vector<double> sorted = steps;
    const std::size_t middle = sorted.size() / 2;
    std::nth_element(sorted.begin(), sorted.begin() + static_cast<std::ptrdiff_t>(middle),
                     sorted.end());
    double median = sorted[middle];
    if (sorted.size() % 2 == 0) {
      median =
          0.5 * (median + *std::max_element(sorted.begin(),
                                            sorted.begin() + static_cast<std::ptrdiff_t>(middle)));
    }
    summary.median_cadence_s = median;
    for (std::size_t i = 0; i < steps.size(); ++i) {
      if (steps[i] > 1.5 * median) summary.gaps.push_back({time_s[i], time_s[i + 1]});
    }
  }

  const std::size_t times = night.time_count();
  summary.antenna_names = night.array.antenna_names;
  std::size_t valid_total = 0;
  for (std::size_t a = 0; a < night.antenna_count(); ++a) {
    std::size_t valid = 0;
    for (std::uint8_t flag : night.antenna_valid(a)) valid += flag != 0 ? 1 : 0;
    valid_total += valid;
    summary.antenna_valid_fraction.push_back(
        times > 0 ? static_cast<double>(valid) / static_cast<double>(times) : 0.0);
  }
  const std::size_t samples = night.antenna_count() * times;
  summary.valid_fraction =
      samples > 0 ? static_cast<double>(valid_total) / static_cast<double>(samples) : 0.0;

  for (const Scan& scan : night.scans) {
    if (scan.intent == ScanIntent::kCalibrator) {
      ++summary.calibrator_scan_count;
    } else {
      ++summary.target_scan_count;
    }
  }
  summary.weather_count = night.weather.time_s.size();
  summary.calibrator_phase_count = night.calibrator_phases.time_s.size();
  summary.has_truth = night.truth.has_value();
  for (const ResultGroup& group : night.results) summary.result_stages.push_back(group.stage);
  return summary;
}

namespace {

std::string fixed(double value, int decimals) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  return buffer;
}

std::string join(const std::vector<std::string>& items) {
  std::string text;
  for (std::size_t i = 0; i < items.size(); ++i) text += (i > 0 ? ", " : "") + items[i];
  return text;
}

}  // namespace

std::string format_night_summary(const NightSummary& summary) {
  using detail::format_number;
  std::ostringstream out;
  const auto line = [&out](const std::string& label, const std::string& value) {
    out << label << std::string(label.size() < 20 ? 20 - label.size() : 1, ' ') << value << '\n';
  };
  line("time epoch (UTC)", summary.time_epoch_utc);
  line("antennas", std::to_string(summary.antenna_count));
  line("channels",
       std::to_string(summary.channel_count) + " (" + join(summary.channel_names) + ")");
  line("samples", std::to_string(summary.time_count) + " per antenna, median cadence " +
                      format_number(summary.median_cadence_s) + " s");
  line("time span", format_number(summary.start_s) + " s to " + format_number(summary.stop_s) +
                        " s (" + fixed(summary.duration_s / 3600.0, 2) + " h)");
  std::string gaps = std::to_string(summary.gaps.size());
  for (std::size_t i = 0; i < summary.gaps.size() && i < 10; ++i) {
    gaps += (i == 0 ? ": " : ", ") + format_number(summary.gaps[i].start_s) + "-" +
            format_number(summary.gaps[i].stop_s) + " s";
  }
  if (summary.gaps.size() > 10) gaps += ", ...";
  line("gaps", gaps);
  std::string valid = fixed(100.0 * summary.valid_fraction, 1) + " %";
  if (!summary.antenna_valid_fraction.empty()) {
    const auto lowest = std::min_element(summary.antenna_valid_fraction.begin(),
                                         summary.antenna_valid_fraction.end());
    const auto index = static_cast<std::size_t>(lowest - summary.antenna_valid_fraction.begin());
    std::string name = "antenna ";
    name +=
        index < summary.antenna_names.size() ? summary.antenna_names[index] : std::to_string(index);
    valid += " (lowest " + name + ": " + fixed(100.0 * *lowest, 1) + " %)";
  }
  line("valid samples", valid);
  line("scans", std::to_string(summary.calibrator_scan_count) + " calibrator, " +
                    std::to_string(summary.target_scan_count) + " target");
  line("weather samples", std::to_string(summary.weather_count));
  line("calibrator phases", std::to_string(summary.calibrator_phase_count));
  line("truth", summary.has_truth ? "present (simulated night)" : "absent");
  line("result groups", summary.result_stages.empty() ? "none" : join(summary.result_stages));
  return out.str();
}

}  // namespace wvr
