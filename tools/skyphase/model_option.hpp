#pragma once
// The --absorption-model option shared by the sky-model and processing subcommands.

#include <CLI/CLI.hpp>
#include <string>

namespace skyphase {

// Registers --absorption-model (p676 | r17, default p676) storing the key in `key`. An unknown
// key is a parse error (exit 2) naming the option and the value.
void add_absorption_model_option(CLI::App& command, std::string& key);

}  // namespace skyphase
