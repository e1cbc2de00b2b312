// Selection of an absorption model by a short key, for option files, the command line and
// Python.
#include "wvr/absorption.hpp"
#include "wvr/error.hpp"

namespace wvr {

const std::vector<std::string>& absorption_model_keys() {
  static const std::vector<std::string> keys = {"p676", "r17"};
  return keys;
}

std::shared_ptr<const AbsorptionModel> make_absorption_model(const std::string& key,
                                                             double water_continuum_scale,
                                                             const std::string& field) {
  if (key == "p676") {
    return water_continuum_scale == 1.0 ? make_p676_annex1_model()
                                        : make_p676_annex1_model(water_continuum_scale);
  }
  if (key == "r17") return make_rosenkranz2017_model(water_continuum_scale);
  throw InvalidInput(field + " = \"" + key +
                     "\" is not a known absorption model (p676 = ITU-R P.676-13, r17 = "
                     "Rosenkranz 2017 water vapour)");
}

}  // namespace wvr
