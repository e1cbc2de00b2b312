#include "model_option.hpp"

#include "wvr/absorption.hpp"

namespace skyphase {

void add_absorption_model_option(CLI::App& command, std::string& key) {
  key = wvr::kDefaultAbsorptionModel;
  command
      .add_option("--absorption-model", key,
                  "Gaseous absorption model: p676 (ITU-R P.676-13) or r17 (Rosenkranz 2017 water "
                  "vapour with P.676 oxygen)")
      ->capture_default_str()
      ->check(CLI::IsMember(wvr::absorption_model_keys()));
}

}  // namespace skyphase
