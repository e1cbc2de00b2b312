#pragma once
// skyphase subcommands. Each add_* registers one subcommand and its callback.

#include <CLI/CLI.hpp>

namespace skyphase {

void add_spectrum_command(CLI::App& app);
void add_absorption_command(CLI::App& app);
void add_channels_command(CLI::App& app);
void add_simulate_command(CLI::App& app);
void add_inspect_command(CLI::App& app);
void add_retrieve_command(CLI::App& app);
void add_calibrate_command(CLI::App& app);
void add_correct_command(CLI::App& app);
void add_diagnose_command(CLI::App& app);
void add_process_command(CLI::App& app);
void add_report_command(CLI::App& app);
void add_survey_command(CLI::App& app);
// MeasurementSet commands, built when casacore is found (WVR_HAVE_ARCHIVE).
void add_import_command(CLI::App& app);
void add_export_command(CLI::App& app);
void add_crosscal_command(CLI::App& app);
void add_dip_command(CLI::App& app);

}  // namespace skyphase
