// Links against the installed libwvr and prints the zenith brightness at 183.31 GHz for a
// 1 mm PWV sea-level atmosphere; exits non-zero if the value is not a plausible brightness.
#include <iostream>
#include <vector>
#include <wvr/wvr.hpp>

int main() {
  wvr::SiteParameters site;
  site.pwv_mm = 1.0;
  const wvr::AtmosphereProfile profile = wvr::make_parametric_profile(site);
  const std::vector<double> freq_ghz = {183.31};
  const wvr::SkySpectrum spectrum = wvr::SkyModel().spectrum(profile, freq_ghz, 90.0);
  std::cout << spectrum.brightness_k[0] << "\n";
  return spectrum.brightness_k[0] > 100.0 && spectrum.brightness_k[0] < 300.0 ? 0 : 1;
}
