// The line-by-line sky emission model and its result types.
#include "wvr/sky_model.hpp"

#include <pybind11/stl.h>

#include <sstream>

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

RayGeometry geometry_by_name(const std::string& name) {
  if (name == "spherical") return RayGeometry::kSpherical;
  if (name == "plane_parallel") return RayGeometry::kPlaneParallel;
  throw InvalidInput("geometry = '" + name + "' is not one of spherical, plane_parallel");
}

std::string geometry_name(RayGeometry geometry) {
  return geometry == RayGeometry::kSpherical ? "spherical" : "plane_parallel";
}

SkyModel make_sky_model(const std::string& geometry,
                        bool refraction,
                        double cosmic_background_k,
                        const std::string& refractivity,
                        double min_elevation_deg,
                        double water_continuum_scale,
                        const std::string& absorption_model) {
  SkyOptions options;
  options.geometry = geometry_by_name(geometry);
  options.refraction = refraction;
  options.cosmic_background_k = cosmic_background_k;
  options.refractivity = refractivity_by_name(refractivity);
  options.min_elevation_deg = min_elevation_deg;
  return SkyModel(make_absorption_model(absorption_model, water_continuum_scale), options);
}

template <typename Result>
auto array_field(std::vector<double> Result::*field) {
  return [field](const Result& r) { return read_only_array(r.*field); };
}

}  // namespace

void export_sky_model(py::module_& m) {
  py::class_<SkySpectrum>(m, "SkySpectrum", "Sky brightness spectrum along one line of sight.")
      .def_property_readonly("freq_ghz", array_field(&SkySpectrum::freq_ghz),
                             "Frequencies (GHz), read-only array.")
      .def_property_readonly("brightness_k", array_field(&SkySpectrum::brightness_k),
                             "Planck brightness temperature (K), read-only array.")
      .def_property_readonly("rj_brightness_k", array_field(&SkySpectrum::rj_brightness_k),
                             "Rayleigh-Jeans-equivalent brightness (K), read-only array.")
      .def_property_readonly("opacity_np", array_field(&SkySpectrum::opacity_np),
                             "Total slant opacity (Np), read-only array.")
      .def_property_readonly("transmission", array_field(&SkySpectrum::transmission),
                             "exp(-opacity_np), read-only array.")
      .def_readonly("pwv_mm", &SkySpectrum::pwv_mm, "Zenith PWV of the profile (mm).")
      .def_readonly("elevation_deg", &SkySpectrum::elevation_deg, "Elevation (deg).")
      .def_readonly("model", &SkySpectrum::model, "Absorption model name and source.")
      .def("to_dict", [](const py::object& self) {
        py::dict out;
        for (const char* key : {"freq_ghz", "brightness_k", "rj_brightness_k", "opacity_np",
                                "transmission", "pwv_mm", "elevation_deg", "model"}) {
          out[key] = self.attr(key);
        }
        return out;
      });

  py::class_<ChannelBrightness>(m, "ChannelBrightness",
                                "Radiometer channel brightness with Jacobians.")
      .def_property_readonly("brightness_k", array_field(&ChannelBrightness::brightness_k),
                             "Passband-averaged RJ-equivalent brightness (K), per channel.")
      .def_property_readonly(
          "d_brightness_d_pwv_k_per_mm",
          array_field(&ChannelBrightness::d_brightness_d_pwv_k_per_mm),
          "Derivative per mm of zenith PWV (K/mm), vapour profile shape fixed, per channel.")
      .def_property_readonly(
          "d_brightness_d_temperature", array_field(&ChannelBrightness::d_brightness_d_temperature),
          "Derivative per K of uniform profile temperature offset (K/K), per channel.")
      .def_property_readonly("path_sensitivity_k_per_mm",
                             array_field(&ChannelBrightness::path_sensitivity_k_per_mm),
                             "dT_b / dL_wet: K per mm of slant wet path, per channel.")
      .def_readonly("pwv_mm", &ChannelBrightness::pwv_mm, "Zenith PWV of the profile (mm).")
      .def_readonly("elevation_deg", &ChannelBrightness::elevation_deg, "Elevation (deg).")
      .def_readonly("wet_path_m", &ChannelBrightness::wet_path_m, "Slant wet path (m).")
      .def_readonly("d_wet_path_d_pwv_m_per_mm", &ChannelBrightness::d_wet_path_d_pwv_m_per_mm,
                    "Slant wet path per mm of zenith PWV (m/mm).")
      .def("to_dict", [](const py::object& self) {
        py::dict out;
        for (const char* key : {"brightness_k", "d_brightness_d_pwv_k_per_mm",
                                "d_brightness_d_temperature", "path_sensitivity_k_per_mm", "pwv_mm",
                                "elevation_deg", "wet_path_m", "d_wet_path_d_pwv_m_per_mm"}) {
          out[key] = self.attr(key);
        }
        return out;
      });

  py::class_<SlantPath>(m, "SlantPath", "Ray geometry and refractive path through a profile.")
      .def_property_readonly("layer_path_m", array_field(&SlantPath::layer_path_m),
                             "Geometric ray length in each layer (m), read-only array.")
      .def_readonly("airmass", &SlantPath::airmass,
                    "Slant length / vertical thickness of the modelled column.")
      .def_readonly("wet_path_m", &SlantPath::wet_path_m, "1e-6 * integral of N_w ds (m).")
      .def_readonly("hydrostatic_path_m", &SlantPath::hydrostatic_path_m,
                    "1e-6 * integral of N_h ds over the modelled layers (m).")
      .def_readonly("pwv_slant_mm", &SlantPath::pwv_slant_mm,
                    "Water-vapour column along the ray (mm).")
      .def("to_dict", [](const py::object& self) {
        py::dict out;
        for (const char* key :
             {"layer_path_m", "airmass", "wet_path_m", "hydrostatic_path_m", "pwv_slant_mm"}) {
          out[key] = self.attr(key);
        }
        return out;
      });

  py::class_<SkyModel>(m, "SkyModel", R"doc(
Line-by-line sky emission model (ITU-R P.676-13 Annex 1 gases by default, or Rosenkranz 2017
water vapour; ITU-R P.840-9 cloud liquid):
upward-looking radiative transfer through a layered profile along the (refracted) slant path.
)doc")
      .def(py::init(&make_sky_model), py::kw_only(), py::arg("geometry") = "spherical",
           py::arg("refraction") = true, py::arg("cosmic_background_k") = 2.725,
           py::arg("refractivity") = "thayer_1974", py::arg("min_elevation_deg") = 5.0,
           py::arg("water_continuum_scale") = 1.0,
           py::arg("absorption_model") = std::string(kDefaultAbsorptionModel), R"doc(
geometry: "spherical" (concentric shells) or "plane_parallel" (no refraction, for
comparisons); refraction: bend the ray by Bouguer's invariant (spherical only);
cosmic_background_k: background brightness (K); refractivity: "thayer_1974" or "bevis_1994"
constants; min_elevation_deg: lowest accepted elevation (deg); water_continuum_scale: factor on
the strength of the model's water-vapour continuum (1 = as published), to simulate skies that
differ from a retrieval's model; absorption_model: "p676" (ITU-R P.676-13 Annex 1) or "r17"
(Rosenkranz 2017 water vapour with P.676 oxygen and dry continuum).
)doc")
      .def_property_readonly("geometry",
                             [](const SkyModel& s) { return geometry_name(s.options().geometry); })
      .def_property_readonly("refraction", [](const SkyModel& s) { return s.options().refraction; })
      .def_property_readonly("cosmic_background_k",
                             [](const SkyModel& s) { return s.options().cosmic_background_k; })
      .def_property_readonly(
          "refractivity",
          [](const SkyModel& s) { return refractivity_name(s.options().refractivity); })
      .def_property_readonly("min_elevation_deg",
                             [](const SkyModel& s) { return s.options().min_elevation_deg; })
      .def_property_readonly("model", [](const SkyModel& s) { return s.absorption_model().name(); })
      .def(
          "spectrum",
          [](const SkyModel& self, const AtmosphereProfile& profile, const py::handle& freq_ghz,
             double elevation_deg) {
            const std::vector<double> f = as_vector(freq_ghz, "freq_ghz");
            py::gil_scoped_release release;
            return self.spectrum(profile, f, elevation_deg);
          },
          py::arg("profile"), py::arg("freq_ghz"), py::arg("elevation_deg"), R"doc(
Brightness, opacity and transmission at each frequency of freq_ghz (GHz, 1-1000; a number or a
one-dimensional array) looking at elevation_deg (deg, min_elevation_deg-90) through profile.
Returns a SkySpectrum. Raises WvrValueError for out-of-range or non-finite input.
)doc")
      .def(
          "channels",
          [](const SkyModel& self, const AtmosphereProfile& profile,
             const RadiometerConfig& radiometer, double elevation_deg) {
            py::gil_scoped_release release;
            return self.channels(profile, radiometer, elevation_deg);
          },
          py::arg("profile"), py::arg("radiometer"), py::arg("elevation_deg"), R"doc(
Channel brightness of a radiometer at elevation_deg (deg) with its Jacobians per mm of zenith
PWV and per K of uniform temperature offset, and the path sensitivity (K per mm of slant wet
path). The profile must hold water vapour. Returns a ChannelBrightness.
)doc")
      .def(
          "slant_path",
          [](const SkyModel& self, const AtmosphereProfile& profile, double elevation_deg) {
            py::gil_scoped_release release;
            return self.slant_path(profile, elevation_deg);
          },
          py::arg("profile"), py::arg("elevation_deg"),
          "Ray geometry, airmass and refractive path delays at elevation_deg (deg). Returns a "
          "SlantPath.")
      .def("__repr__", [](const SkyModel& s) {
        std::ostringstream out;
        out << "SkyModel(geometry='" << geometry_name(s.options().geometry)
            << "', refraction=" << (s.options().refraction ? "True" : "False")
            << ", cosmic_background_k=" << s.options().cosmic_background_k << ", refractivity='"
            << refractivity_name(s.options().refractivity)
            << "', min_elevation_deg=" << s.options().min_elevation_deg << ")";
        return out.str();
      });
}

}  // namespace wvr::python
