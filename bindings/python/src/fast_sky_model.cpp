// Fast channel model: scalar evaluation that raises, and a vectorised evaluation over whole
// time series that reports a status per sample instead.
#include "wvr/fast_sky_model.hpp"

#include <pybind11/stl.h>

#include <algorithm>
#include <array>
#include <cstdint>
#include <limits>
#include <span>
#include <utility>

#include "common.hpp"
#include "wvr/error.hpp"

namespace wvr::python {
namespace {

// Python names of the status codes (wvr.FastModelStatus members).
constexpr std::array<std::pair<FastModelStatus, const char*>, 5> kStatusNames = {{
    {FastModelStatus::kOk, "OK"},
    {FastModelStatus::kPwvOutOfDomain, "PWV_OUT_OF_DOMAIN"},
    {FastModelStatus::kElevationOutOfDomain, "ELEVATION_OUT_OF_DOMAIN"},
    {FastModelStatus::kLiquidOutOfDomain, "LIQUID_OUT_OF_DOMAIN"},
    {FastModelStatus::kBufferSizeMismatch, "BUFFER_SIZE_MISMATCH"},
}};

const char* const kOutputNames[] = {"brightness_k", "d_brightness_d_pwv_k_per_mm",
                                    "d_brightness_d_temperature",
                                    "d_brightness_d_liquid_k_per_kg_m2"};

FastSkyModel make_fast_model(const AtmosphereProfile& base_profile,
                             const RadiometerConfig& radiometer,
                             const std::optional<SkyModel>& sky_model,
                             double max_pwv_mm,
                             int polynomial_degree,
                             double cloud_base_above_ground_m,
                             double cloud_thickness_m,
                             double max_liquid_water_path_kg_m2) {
  FastSkyModelOptions options;
  options.max_pwv_mm = max_pwv_mm;
  options.polynomial_degree = polynomial_degree;
  options.cloud_base_above_ground_m = cloud_base_above_ground_m;
  options.cloud_thickness_m = cloud_thickness_m;
  options.max_liquid_water_path_kg_m2 = max_liquid_water_path_kg_m2;
  const SkyModel exact = sky_model ? *sky_model : SkyModel();
  py::gil_scoped_release release;
  return FastSkyModel(base_profile, radiometer, exact, options);
}

py::dict evaluate(const FastSkyModel& fast,
                  double pwv_mm,
                  double elevation_deg,
                  double liquid_water_path_kg_m2) {
  const FastSkyModelOptions& o = fast.options();
  require_in_range("pwv_mm", pwv_mm, 0.0, o.max_pwv_mm, "mm (fast model domain)");
  require_in_range("elevation_deg", elevation_deg, fast.min_elevation_deg(), 90.0,
                   "deg (fast model domain)");
  require_in_range("liquid_water_path_kg_m2", liquid_water_path_kg_m2, 0.0,
                   o.max_liquid_water_path_kg_m2, "kg/m^2 (fast model domain)");
  const std::size_t n = fast.channel_count();
  std::array<py::array_t<double>, 4> out;
  std::array<double*, 4> data{};
  for (std::size_t k = 0; k < out.size(); ++k) {
    out[k] = py::array_t<double>(static_cast<py::ssize_t>(n));
    data[k] = out[k].mutable_data();
  }
  FastModelStatus status;
  {
    py::gil_scoped_release release;
    FastSkyModel::Workspace ws = fast.make_workspace();
    status =
        fast.evaluate(FastSkyState{pwv_mm, elevation_deg, liquid_water_path_kg_m2}, ws,
                      std::span<double>(data[0], n),
                      FastSkyJacobians{std::span<double>(data[1], n), std::span<double>(data[2], n),
                                       std::span<double>(data[3], n)});
  }
  if (status != FastModelStatus::kOk) throw Error(to_string(status));
  py::dict result;
  for (std::size_t k = 0; k < out.size(); ++k) result[kOutputNames[k]] = out[k];
  return result;
}

py::dict evaluate_many(const FastSkyModel& fast,
                       const py::handle& pwv_mm,
                       const py::handle& elevation_deg,
                       const py::handle& liquid_water_path_kg_m2) {
  const std::array<DoubleArray, 3> inputs = {
      as_double_array(pwv_mm, "pwv_mm"), as_double_array(elevation_deg, "elevation_deg"),
      as_double_array(liquid_water_path_kg_m2, "liquid_water_path_kg_m2")};
  const char* const input_names[] = {"pwv_mm", "elevation_deg", "liquid_water_path_kg_m2"};
  // numpy broadcasting of one-dimensional arrays: equal lengths, or length 1. The first input
  // whose length is not 1 sets the sample count.
  for (std::size_t k = 0; k < inputs.size(); ++k) {
    if (inputs[k].ndim() > 1) {
      throw InvalidInput(std::string(input_names[k]) + " has " + std::to_string(inputs[k].ndim()) +
                         " dimensions; a number or a one-dimensional array is needed");
    }
  }
  std::size_t reference = 0;
  while (reference + 1 < inputs.size() && inputs[reference].size() == 1) ++reference;
  const py::ssize_t n = inputs[reference].size();
  std::array<std::size_t, 3> step{};
  for (std::size_t k = 0; k < inputs.size(); ++k) {
    if (inputs[k].size() != 1 && inputs[k].size() != n) {
      throw InvalidInput(std::string(input_names[k]) + " has " + std::to_string(inputs[k].size()) +
                         " samples but " + input_names[reference] + " has " + std::to_string(n));
    }
    step[k] = inputs[k].size() == 1 ? 0 : 1;
  }
  const auto c = static_cast<py::ssize_t>(fast.channel_count());
  std::array<py::array_t<double>, 4> out;
  std::array<double*, 4> data{};
  for (std::size_t k = 0; k < out.size(); ++k) {
    out[k] = py::array_t<double>({n, c});
    data[k] = out[k].mutable_data();
  }
  py::array_t<std::int8_t> status(n);
  {
    const double* pwv = inputs[0].data();
    const double* elevation = inputs[1].data();
    const double* liquid = inputs[2].data();
    std::int8_t* status_data = status.mutable_data();
    const auto samples = static_cast<std::size_t>(n);
    const std::size_t channels = fast.channel_count();
    const double nan = std::numeric_limits<double>::quiet_NaN();
    py::gil_scoped_release release;
    // One workspace for the whole call; every sample writes straight into its output rows.
    FastSkyModel::Workspace ws = fast.make_workspace();
    for (std::size_t i = 0; i < samples; ++i) {
      const std::size_t row = i * channels;
      const FastSkyState state{pwv[i * step[0]], elevation[i * step[1]], liquid[i * step[2]]};
      const FastModelStatus s =
          fast.evaluate(state, ws, std::span<double>(data[0] + row, channels),
                        FastSkyJacobians{std::span<double>(data[1] + row, channels),
                                         std::span<double>(data[2] + row, channels),
                                         std::span<double>(data[3] + row, channels)});
      status_data[i] = static_cast<std::int8_t>(s);
      if (s != FastModelStatus::kOk) {
        for (double* d : data) std::fill_n(d + row, channels, nan);
      }
    }
  }
  py::dict result;
  for (std::size_t k = 0; k < out.size(); ++k) result[kOutputNames[k]] = out[k];
  result["status"] = status;
  return result;
}

}  // namespace

void export_fast_sky_model(py::module_& m) {
  py::dict codes;
  for (const auto& [status, name] : kStatusNames) codes[name] = static_cast<int>(status);
  m.attr("FAST_STATUS_CODES") = codes;
  m.def(
      "fast_status_description",
      [](int code) {
        for (const auto& entry : kStatusNames) {
          if (static_cast<int>(entry.first) == code) return std::string(to_string(entry.first));
        }
        throw InvalidInput("status code = " + std::to_string(code) + " is not a status");
      },
      py::arg("code"), "Text of a FastSkyModel.evaluate_many status code.");

  py::class_<FastSkyModel>(m, "FastSkyModel", R"doc(
Fast channel model of one radiometer on one atmosphere shape: per-layer absorption tabulated as
polynomials in PWV, so that an evaluation costs a polynomial per layer and frequency and one
pass of the transfer equation. Cloud liquid enters as a uniform layer at a fixed height whose
opacity is linear in the liquid water path. Agrees with SkyModel.channels to < 0.02 K over
PWV 0.1-8 mm and elevation 15-90 deg. Thread-safe: evaluations release the GIL and share no
scratch memory.
)doc")
      .def(py::init(&make_fast_model), py::arg("base_profile"), py::arg("radiometer"),
           py::arg("sky_model") = py::none(), py::kw_only(), py::arg("max_pwv_mm") = 12.0,
           py::arg("polynomial_degree") = 6, py::arg("cloud_base_above_ground_m") = 1000.0,
           py::arg("cloud_thickness_m") = 1000.0, py::arg("max_liquid_water_path_kg_m2") = 2.0,
           R"doc(
Tabulates radiometer's channels on base_profile (its layers, temperatures and vapour shape; its
PWV is irrelevant but must be > 0) with the options of sky_model (default SkyModel()), for PWV
0-max_pwv_mm (mm) by Chebyshev interpolation of degree polynomial_degree. Cloud liquid, when
evaluated, fills cloud_base_above_ground_m (m above the ground) to + cloud_thickness_m (m)
uniformly, up to max_liquid_water_path_kg_m2 (kg/m^2).
)doc")
      .def_property_readonly("channel_count", &FastSkyModel::channel_count)
      .def_property_readonly("layer_count", &FastSkyModel::layer_count)
      .def_property_readonly("frequency_count", &FastSkyModel::frequency_count,
                             "Quadrature frequencies over all channels.")
      .def_property_readonly(
          "max_pwv_mm", [](const FastSkyModel& f) { return f.options().max_pwv_mm; },
          "Upper end of the PWV domain (mm); the lower end is 0.")
      .def_property_readonly("polynomial_degree",
                             [](const FastSkyModel& f) { return f.options().polynomial_degree; })
      .def_property_readonly("min_elevation_deg", &FastSkyModel::min_elevation_deg,
                             "Lowest elevation of the domain (deg); the highest is 90.")
      .def_property_readonly(
          "cloud_base_above_ground_m",
          [](const FastSkyModel& f) { return f.options().cloud_base_above_ground_m; },
          "Base of the modelled cloud layer (m above the ground).")
      .def_property_readonly(
          "cloud_thickness_m", [](const FastSkyModel& f) { return f.options().cloud_thickness_m; },
          "Thickness of the modelled cloud layer (m).")
      .def_property_readonly(
          "max_liquid_water_path_kg_m2",
          [](const FastSkyModel& f) { return f.options().max_liquid_water_path_kg_m2; },
          "Upper end of the liquid water path domain (kg/m^2); the lower end is 0.")
      .def("evaluate", &evaluate, py::arg("pwv_mm"), py::arg("elevation_deg"),
           py::arg("liquid_water_path_kg_m2") = 0.0, R"doc(
Channel brightness at zenith PWV pwv_mm (mm), elevation_deg (deg) and zenith cloud liquid water
path liquid_water_path_kg_m2 (kg/m^2, default 0). Returns a dict of arrays of length
channel_count: brightness_k (RJ-equivalent, K), d_brightness_d_pwv_k_per_mm (K/mm),
d_brightness_d_temperature (K/K) and d_brightness_d_liquid_k_per_kg_m2 (K per kg/m^2).
Raises WvrValueError outside the domain.
)doc")
      .def("evaluate_many", &evaluate_many, py::arg("pwv_mm"), py::arg("elevation_deg"),
           py::arg("liquid_water_path_kg_m2") = 0.0, R"doc(
Evaluates many samples without raising: pwv_mm (mm), elevation_deg (deg) and
liquid_water_path_kg_m2 (kg/m^2, default 0) are numbers or one-dimensional arrays of equal
length (length 1 broadcasts). Returns a dict with brightness_k (K),
d_brightness_d_pwv_k_per_mm (K/mm), d_brightness_d_temperature (K/K) and
d_brightness_d_liquid_k_per_kg_m2 (K per kg/m^2), each of shape (n, channel_count), and status
(int8, shape (n,)): wvr.FastModelStatus codes, 0 = ok; rows of samples that are not ok hold
NaN. Releases the GIL and uses one scratch buffer for the whole call.
)doc")
      .def(
          "wet_path_per_pwv_m_per_mm",
          [](const FastSkyModel& fast, const py::object& elevation_deg) {
            return py::vectorize([&fast](double e) {
              require_in_range("elevation_deg", e, fast.min_elevation_deg(), 90.0, "deg");
              return fast.wet_path_per_pwv_m_per_mm(e);
            })(elevation_deg);
          },
          py::arg("elevation_deg"),
          "Slant wet path per mm of zenith PWV (m/mm) at elevation_deg (deg), on the base "
          "profile's ray geometry. Broadcasts.");
}

}  // namespace wvr::python
