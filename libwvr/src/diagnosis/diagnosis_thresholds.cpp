// Diagnosis thresholds: their names and meanings, and reading them from a TOML file
// (wvr/diagnosis.hpp).

#include <algorithm>
#include <array>
#include <optional>
#include <string>
#include <vector>

#include "core/config_text.hpp"
#include "wvr/diagnosis.hpp"
#include "wvr/error.hpp"

namespace wvr {

std::span<const DiagnosisThresholdField> diagnosis_threshold_fields() {
  using T = DiagnosisThresholds;
  static constexpr std::array<DiagnosisThresholdField, 14> kFields = {{
      {"cloud_chi2_per_dof", &T::cloud_chi2_per_dof,
       "an antenna's residual chi2/dof against the radiometer floor above this counts as cloudy"},
      {"cloud_antenna_fraction", &T::cloud_antenna_fraction,
       "a window is cloud when more than this fraction of antennas is cloudy"},
      {"quiet_floor_ratio", &T::quiet_floor_ratio,
       "quiet sky: phase scatter before correction within this x the noise floor"},
      {"dry_floor_ratio", &T::dry_floor_ratio,
       "dry turbulence: residual after correction above this x the noise floor"},
      {"scale_min_correlation", &T::scale_min_correlation,
       "scale off needs observed/predicted correlation above this"},
      {"scale_tolerance", &T::scale_tolerance,
       "scale off: observed/predicted slope outside 1 +/- this"},
      {"fault_unusable_fraction", &T::fault_unusable_fraction,
       "antenna fault: unusable retrieval samples above this fraction of those inside the "
       "retrieval's domain; an antenna is outside the domain in a scan when more than this "
       "fraction of its samples are"},
      {"stuck_noise_fraction", &T::stuck_noise_fraction,
       "stuck channel: brightness varies less than this x its noise"},
      {"spike_chi2_per_dof", &T::spike_chi2_per_dof,
       "a sample with chi2/dof above this is a spike"},
      {"spike_fraction", &T::spike_fraction, "antenna fault: spikes in more than this fraction"},
      {"fault_chi2_ratio", &T::fault_chi2_ratio,
       "antenna fault: chi2/dof above this x the array median"},
      {"fault_residual_ratio", &T::fault_residual_ratio,
       "antenna fault: phase residual above this x the array's at that baseline length"},
      {"fault_array_fraction", &T::fault_array_fraction,
       "the array verdict is radiometer fault (outside retrieval domain) only when more than "
       "this fraction of antennas is flagged (outside the domain); else it describes the "
       "others"},
      {"systematic_window_s", &T::systematic_window_s,
       "span (s) of the running median that takes the slow array-common model error out of the "
       "radiometer residual before clouds and faults are judged"},
  }};
  return kFields;
}

DiagnosisThresholds parse_diagnosis_thresholds(const std::string& toml_text,
                                               const std::string& source_name) {
  const toml::table table = detail::parse_toml(toml_text, source_name);
  DiagnosisThresholds thresholds;
  const std::span<const DiagnosisThresholdField> fields = diagnosis_threshold_fields();
  for (const auto& [key, node] : table) {
    const std::string_view name = key.str();  // a structured binding cannot be captured (clang 14)
    const auto field = std::find_if(fields.begin(), fields.end(),
                                    [name](const auto& f) { return name == f.name; });
    if (field == fields.end()) {
      std::vector<std::string> known;
      for (const DiagnosisThresholdField& f : fields) known.emplace_back(f.name);
      std::string hint;
      if (const std::optional<std::string> suggestion = detail::nearest_key(key.str(), known)) {
        hint = " (did you mean '" + *suggestion + "'?)";
      } else {
        hint = " (known:";
        for (const std::string& known_name : known) hint += " " + known_name;
        hint += ")";
      }
      throw InvalidInput(source_name + ":" + std::to_string(key.source().begin.line) +
                         ": unknown threshold '" + std::string(key.str()) + "'" + hint);
    }
    const std::optional<double> value = node.value<double>();
    if (!value) throw InvalidInput(source_name + ": " + field->name + " is not a number");
    thresholds.*(field->member) = *value;
  }
  try {
    thresholds.validate();
  } catch (const InvalidInput& error) {
    throw InvalidInput(source_name + ": " + error.what());
  }
  return thresholds;
}

DiagnosisThresholds load_diagnosis_thresholds(const std::filesystem::path& path) {
  return parse_diagnosis_thresholds(detail::read_text_file(path, "thresholds file"), path.string());
}

}  // namespace wvr
