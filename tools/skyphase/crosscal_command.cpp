// skyphase crosscal: the array's radiometers calibrated against each other, the units that
// disagree or drift named, and optionally a copy of the night with the solution applied.
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "output.hpp"
#include "wvr/night_file.hpp"
#include "wvr/radiometer_cross_calibration.hpp"

namespace skyphase {
namespace {

struct CrosscalOptions {
  std::string night_file;
  std::string output_file;  // empty: report only
  wvr::CrossCalibrationOptions solve;
  bool include_drift = false;
  bool at_mean_sky = false;
  bool overwrite = false;
  Format format = Format::kTable;
};

nlohmann::ordered_json to_json(const wvr::CrossCalibration& x) {
  nlohmann::ordered_json j;
  j["reference"] = "relative to the array: mean offset 0 K, mean gain 1 per channel";
  j["blocks"] = x.blocks;
  j["channels"] = x.channel_names;
  j["flagged_units"] = x.flagged_units();
  j["report"] = x.brief_report();
  nlohmann::ordered_json units = nlohmann::ordered_json::array();
  for (const wvr::UnitCalibration& u : x.units) {
    nlohmann::ordered_json channels = nlohmann::ordered_json::array();
    for (std::size_t c = 0; c < u.channels.size(); ++c) {
      const wvr::ChannelCalibration& cal = u.channels[c];
      channels.push_back({{"channel", x.channel_names[c]},
                          {"solved", cal.solved},
                          {"offset_k", cal.offset_k},
                          {"offset_sigma_k", cal.offset_sigma_k},
                          {"gain", cal.gain},
                          {"gain_sigma", cal.gain_sigma},
                          {"offset_drift_k_per_h", cal.offset_drift_k_per_h},
                          {"gain_drift_per_h", cal.gain_drift_per_h},
                          {"drift_chi2", cal.drift_chi2},
                          {"drift_change_k", cal.drift_change_k},
                          {"residual_rms_k", cal.residual_rms_k}});
    }
    units.push_back({{"antenna", u.antenna},
                     {"radiometer_id", u.radiometer_id},
                     {"disagrees", u.disagrees},
                     {"drifting", u.drifting},
                     {"verdict", u.verdict},
                     {"channels", channels}});
  }
  j["units"] = units;
  return j;
}

void print_table(const wvr::CrossCalibration& x) {
  std::cout << x.brief_report() << "\n";
  Table table({"antenna", "channel", "offset_k", "offset_sigma_k", "gain", "gain_sigma",
               "drift_change_k", "drift_chi2"});
  for (const wvr::UnitCalibration& u : x.units) {
    for (std::size_t c = 0; c < u.channels.size(); ++c) {
      const wvr::ChannelCalibration& cal = u.channels[c];
      table.add_row({u.antenna, x.channel_names[c], fixed(cal.offset_k, 3),
                     fixed(cal.offset_sigma_k, 3), fixed(cal.gain, 5), fixed(cal.gain_sigma, 5),
                     fixed(cal.drift_change_k, 3), fixed(cal.drift_chi2, 1)});
    }
  }
  table.print_text(std::cout);
  for (const wvr::UnitCalibration& u : x.units)
    if (u.disagrees || u.drifting) std::cout << u.antenna << ": " << u.verdict << "\n";
}

void run_crosscal(const CrosscalOptions& o) {
  const wvr::Night night = wvr::read_night(o.night_file);
  const wvr::CrossCalibration x = wvr::cross_calibrate(night, o.solve);
  if (!o.output_file.empty()) {
    wvr::Night corrected = o.at_mean_sky ? wvr::apply_cross_calibration_at_mean_sky(night, x)
                                         : wvr::apply_cross_calibration(night, x, o.include_drift);
    // Results computed from the uncorrected brightness no longer hold.
    corrected.results.clear();
    corrected.results.push_back(wvr::cross_calibration_result_group(x));
    wvr::NightWriteOptions write;
    write.overwrite_output = o.overwrite;
    wvr::write_night(corrected, o.output_file, write);
  }
  if (o.format == Format::kJson) {
    nlohmann::ordered_json j = to_json(x);
    j["output"] = o.output_file;
    print_json(j);
    return;
  }
  print_table(x);
  if (!o.output_file.empty()) std::cout << "-> " << o.output_file << " (brightness corrected)\n";
}

}  // namespace

void add_crosscal_command(CLI::App& app) {
  auto o = std::make_shared<CrosscalOptions>();
  CLI::App* cmd = app.add_subcommand(
      "crosscal",
      "Calibrate the radiometers against each other (offset and gain per unit and channel, "
      "relative to the array) and name units that disagree or drift");
  cmd->add_option("night", o->night_file, "Night file (HDF5)")->required();
  cmd->add_option("-o,--output", o->output_file,
                  "Write a copy of the night with the solution applied (earlier results dropped)");
  cmd->add_option("--block-s", o->solve.block_s, "Averaging block length (s)")
      ->capture_default_str();
  cmd->add_option("--offset-limit-k", o->solve.offset_limit_k,
                  "A unit disagrees beyond this offset (K)")
      ->capture_default_str();
  cmd->add_option("--gain-limit", o->solve.gain_limit,
                  "A unit disagrees beyond this gain deviation from 1")
      ->capture_default_str();
  cmd->add_option("--min-drift-k", o->solve.min_drift_k,
                  "Smallest change over the night called a drift (K)")
      ->capture_default_str();
  CLI::Option* include_drift =
      cmd->add_flag("--include-drift", o->include_drift,
                    "Apply the drifting units' drift too when writing the corrected night");
  cmd->add_flag("--at-mean-sky", o->at_mean_sky,
                "Write the corrected night with each unit shifted by its reading at the array's "
                "mean sky, offset + (gain - 1) x mean sky, instead of (T - offset) / gain: well "
                "determined where the sky changes too little to separate offset and gain")
      ->excludes(include_drift);
  cmd->add_flag("--overwrite", o->overwrite, "Replace an existing output file");
  add_format_option(*cmd, o->format);
  cmd->callback([o] { run_crosscal(*o); });
}

}  // namespace skyphase
