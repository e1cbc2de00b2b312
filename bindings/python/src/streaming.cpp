// The real-time StreamingCorrector from Python, for prototyping correlator-side correction:
// the same kernel the offline correction runs, fed one integration (or a block of them) at a
// time. Coefficients come as arrays or from a retrieval's coefficient window.
#include <memory>
#include <string>
#include <vector>

#include "arrays.hpp"
#include "common.hpp"
#include "wvr/correction.hpp"
#include "wvr/error.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/streaming_corrector.hpp"

namespace wvr::python {
namespace {

template <typename T>
py::array owned(std::vector<T> values, const std::vector<py::ssize_t>& shape) {
  auto* heap = new std::vector<T>(std::move(values));
  py::capsule free_when_done(heap, [](void* p) { delete static_cast<std::vector<T>*>(p); });
  return read_only_view(heap->data(), shape, free_when_done);
}

std::vector<double> antenna_values(const py::object& object,
                                   const std::string& field,
                                   std::size_t antennas,
                                   double fallback) {
  if (object.is_none()) return std::vector<double>(antennas, fallback);
  return doubles_of_shape(object, field, {static_cast<py::ssize_t>(antennas)}, "[antenna]");
}

CorrectorCoefficients coefficients_from_arrays(const CorrectorConfig& config,
                                               const py::object& weight_mm_per_k,
                                               const py::object& reference_brightness_k,
                                               const py::object& reference_path_mm,
                                               const py::object& scale,
                                               const py::object& usable) {
  const auto na = static_cast<py::ssize_t>(config.antennas);
  const auto nc = static_cast<py::ssize_t>(config.channels);
  CorrectorCoefficients c;
  c.weight_mm_per_k =
      doubles_of_shape(weight_mm_per_k, "weight_mm_per_k", {na, nc}, "[antenna, channel]");
  c.reference_brightness_k = doubles_of_shape(reference_brightness_k, "reference_brightness_k",
                                              {na, nc}, "[antenna, channel]");
  c.reference_path_mm = doubles_of_shape(reference_path_mm, "reference_path_mm", {na}, "[antenna]");
  c.scale = antenna_values(scale, "scale", config.antennas, 1.0);
  if (usable.is_none()) {
    c.usable.assign(config.antennas, 1);
  } else {
    for (std::int64_t u : integers_of_shape(usable, "usable", {na}, "[antenna]", 0, 1))
      c.usable.push_back(static_cast<std::uint8_t>(u));
  }
  return c;
}

// One coefficient window of a retrieval (the window holding time_s), scaled per antenna.
CorrectorCoefficients coefficients_from_retrieval(const NightRetrieval& retrieval,
                                                  double time_s,
                                                  const py::object& scale) {
  const CoefficientWindows windows = CoefficientWindows::from_retrieval(retrieval);
  if (windows.windows == 0) throw InvalidInput("retrieval has no coefficient windows");
  const std::vector<double> s = antenna_values(scale, "scale", windows.antennas, 1.0);
  return windows.corrector_coefficients(windows.window_at(time_s), s);
}

// The corrector with the configuration kept beside it for shape checks on every call.
class PyStreamingCorrector {
 public:
  PyStreamingCorrector(const CorrectorConfig& config, const CorrectorCoefficients& initial)
      : corrector_(std::make_unique<StreamingCorrector>(config, initial)) {}

  const CorrectorConfig& config() const { return corrector_->config(); }

  void update(const CorrectorCoefficients& coefficients) {
    py::gil_scoped_release release;
    corrector_->update_coefficients(coefficients);
  }

  // brightness_k [block, antenna, channel] and valid [block, antenna]; returns path_mm,
  // phase_correction_rad and flags [block, antenna].
  py::dict process_block(const py::handle& brightness_k,
                         const py::handle& valid,
                         py::ssize_t block,
                         bool single) const {
    const auto na = static_cast<py::ssize_t>(config().antennas);
    const auto nc = static_cast<py::ssize_t>(config().channels);
    const std::vector<py::ssize_t> sample_shape =
        single ? std::vector<py::ssize_t>{na, nc} : std::vector<py::ssize_t>{block, na, nc};
    const std::vector<py::ssize_t> antenna_shape =
        single ? std::vector<py::ssize_t>{na} : std::vector<py::ssize_t>{block, na};
    const std::string sample_axes = single ? "[antenna, channel]" : "[time, antenna, channel]";
    const std::string antenna_axes = single ? "[antenna]" : "[time, antenna]";
    const std::vector<double> tb =
        doubles_of_shape(brightness_k, "brightness_k", sample_shape, sample_axes);
    std::vector<std::uint8_t> ok(static_cast<std::size_t>(block * na), 1);
    if (!valid.is_none()) {
      const std::vector<std::int64_t> v =
          integers_of_shape(valid, "valid", antenna_shape, antenna_axes, 0, 1);
      for (std::size_t k = 0; k < v.size(); ++k) ok[k] = static_cast<std::uint8_t>(v[k]);
    }
    const auto n_antennas = static_cast<std::size_t>(na);
    const auto n_channels = static_cast<std::size_t>(nc);
    std::vector<double> path(ok.size()), phase(ok.size());
    std::vector<std::uint8_t> flags(ok.size());
    bool sizes_ok = true;
    {
      py::gil_scoped_release release;
      for (std::size_t k = 0; k < static_cast<std::size_t>(block) && sizes_ok; ++k) {
        const std::size_t a0 = k * n_antennas;
        sizes_ok =
            corrector_->process(
                std::span<const double>(tb).subspan(a0 * n_channels, n_antennas * n_channels),
                std::span<const std::uint8_t>(ok).subspan(a0, n_antennas),
                std::span<double>(path).subspan(a0, n_antennas),
                std::span<double>(phase).subspan(a0, n_antennas),
                std::span<std::uint8_t>(flags).subspan(a0, n_antennas)) == CorrectorStatus::kOk;
      }
    }
    // Shapes were checked above, so a mismatch here is a bug in these bindings.
    if (!sizes_ok) throw Error("StreamingCorrector.process: buffer size mismatch");
    py::dict d;
    d["path_mm"] = owned(std::move(path), antenna_shape);
    d["phase_correction_rad"] = owned(std::move(phase), antenna_shape);
    d["flags"] = owned(std::move(flags), antenna_shape);
    return d;
  }

 private:
  std::unique_ptr<StreamingCorrector> corrector_;
};

CorrectorConfig make_config(std::int64_t antennas,
                            std::int64_t channels,
                            double obs_freq_ghz,
                            double phase_per_path,
                            double max_brightness_k) {
  if (antennas < 1) throw InvalidInput("antennas = " + std::to_string(antennas) + " must be >= 1");
  if (channels < 1) throw InvalidInput("channels = " + std::to_string(channels) + " must be >= 1");
  CorrectorConfig config;
  config.antennas = static_cast<std::size_t>(antennas);
  config.channels = static_cast<std::size_t>(channels);
  config.obs_freq_ghz = obs_freq_ghz;
  config.phase_per_path = phase_per_path;
  config.max_brightness_k = max_brightness_k;
  config.validate();
  return config;
}

}  // namespace

void export_streaming(py::module_& m) {
  py::class_<PyStreamingCorrector>(m, "StreamingCorrector", R"doc(
The real-time phase corrector: one integration of every antenna's radiometer at a time, with
the kernel the offline correction uses. Per antenna a, the wet path
  path_mm = reference_path_mm[a] + sum_c weight_mm_per_k[a, c] (T[a, c] - reference_brightness_k[a, c])
and the phase correction (rad, added to the antenna's phase)
  phase_correction_rad = -(2 pi obs_freq / c) phase_per_path scale[a] path.
A dead, missing or implausible radiometer flags its own antenna only (flags != 0, phase 0,
path NaN). Coefficients can be replaced between integrations (update_coefficients).
)doc")
      .def(py::init([](std::int64_t antennas, std::int64_t channels, double obs_freq_ghz,
                       const py::object& weight_mm_per_k, const py::object& reference_brightness_k,
                       const py::object& reference_path_mm, const py::object& scale,
                       const py::object& usable, double phase_per_path, double max_brightness_k) {
             const CorrectorConfig config =
                 make_config(antennas, channels, obs_freq_ghz, phase_per_path, max_brightness_k);
             return std::make_unique<PyStreamingCorrector>(
                 config, coefficients_from_arrays(config, weight_mm_per_k, reference_brightness_k,
                                                  reference_path_mm, scale, usable));
           }),
           py::arg("antennas"), py::arg("channels"), py::arg("obs_freq_ghz"), py::kw_only(),
           py::arg("weight_mm_per_k"), py::arg("reference_brightness_k"),
           py::arg("reference_path_mm"), py::arg("scale") = py::none(),
           py::arg("usable") = py::none(), py::arg("phase_per_path") = 1.0,
           py::arg("max_brightness_k") = 400.0)
      .def_static(
          "from_retrieval",
          [](const NightRetrieval& retrieval, double time_s, double obs_freq_ghz,
             const py::object& scale, double phase_per_path, double max_brightness_k) {
            const CorrectorConfig config =
                make_config(static_cast<std::int64_t>(retrieval.antennas),
                            static_cast<std::int64_t>(retrieval.channels), obs_freq_ghz,
                            phase_per_path, max_brightness_k);
            return std::make_unique<PyStreamingCorrector>(
                config, coefficients_from_retrieval(retrieval, time_s, scale));
          },
          py::arg("retrieval"), py::arg("time_s"), py::arg("obs_freq_ghz"), py::kw_only(),
          py::arg("scale") = py::none(), py::arg("phase_per_path") = 1.0,
          py::arg("max_brightness_k") = 400.0,
          "A corrector with the coefficients of the retrieval's window that holds time_s.")
      .def_property_readonly("antennas",
                             [](const PyStreamingCorrector& c) { return c.config().antennas; })
      .def_property_readonly("channels",
                             [](const PyStreamingCorrector& c) { return c.config().channels; })
      .def_property_readonly("obs_freq_ghz",
                             [](const PyStreamingCorrector& c) { return c.config().obs_freq_ghz; })
      .def_property_readonly(
          "phase_per_path", [](const PyStreamingCorrector& c) { return c.config().phase_per_path; })
      .def_property_readonly(
          "max_brightness_k",
          [](const PyStreamingCorrector& c) { return c.config().max_brightness_k; })
      .def(
          "update_coefficients",
          [](PyStreamingCorrector& self, const py::object& weight_mm_per_k,
             const py::object& reference_brightness_k, const py::object& reference_path_mm,
             const py::object& scale, const py::object& usable) {
            self.update(coefficients_from_arrays(self.config(), weight_mm_per_k,
                                                 reference_brightness_k, reference_path_mm, scale,
                                                 usable));
          },
          py::kw_only(), py::arg("weight_mm_per_k"), py::arg("reference_brightness_k"),
          py::arg("reference_path_mm"), py::arg("scale") = py::none(),
          py::arg("usable") = py::none(),
          "Replaces the coefficients (validated first: a bad set raises and changes nothing).")
      .def(
          "update_from_retrieval",
          [](PyStreamingCorrector& self, const NightRetrieval& retrieval, double time_s,
             const py::object& scale) {
            if (retrieval.antennas != self.config().antennas ||
                retrieval.channels != self.config().channels) {
              throw InvalidInput("retrieval has " + std::to_string(retrieval.antennas) +
                                 " antennas x " + std::to_string(retrieval.channels) +
                                 " channels, the corrector " +
                                 std::to_string(self.config().antennas) + " x " +
                                 std::to_string(self.config().channels));
            }
            self.update(coefficients_from_retrieval(retrieval, time_s, scale));
          },
          py::arg("retrieval"), py::arg("time_s"), py::kw_only(), py::arg("scale") = py::none(),
          "Switches to the coefficients of the retrieval's window that holds time_s.")
      .def(
          "process",
          [](const PyStreamingCorrector& self, const py::object& brightness_k,
             const py::object& valid) { return self.process_block(brightness_k, valid, 1, true); },
          py::arg("brightness_k"), py::arg("valid") = py::none(), R"doc(
One integration: brightness_k [antenna, channel] (K), valid [antenna] (1 = usable, default
all). Returns a dict of read-only arrays [antenna]: path_mm (NaN when flagged),
phase_correction_rad (0 when flagged) and flags (wvr.CorrectorFlag bits, 0 = corrected).
)doc")
      .def(
          "process_many",
          [](const PyStreamingCorrector& self, const py::object& brightness_k,
             const py::object& valid) {
            const py::array tb = numeric_array(brightness_k, "brightness_k");
            if (tb.ndim() != 3)
              throw InvalidInput("brightness_k has " + std::to_string(tb.ndim()) +
                                 " dimensions, expected [time, antenna, channel]");
            return self.process_block(tb, valid, tb.shape(0), false);
          },
          py::arg("brightness_k"), py::arg("valid") = py::none(), R"doc(
A block of integrations with the current coefficients, in C++ without the GIL:
brightness_k [time, antenna, channel], valid [time, antenna]. Returns the arrays of process
with a leading time axis.
)doc");

  // Private: wvr/__init__.py builds wvr.CorrectorFlag from them.
  m.attr("_CORRECTOR_FLAG_CODES") =
      py::make_tuple(py::make_tuple("NO_DATA", static_cast<int>(kCorrectorNoData)),
                     py::make_tuple("BAD_BRIGHTNESS", static_cast<int>(kCorrectorBadBrightness)),
                     py::make_tuple("NO_COEFFICIENTS", static_cast<int>(kCorrectorNoCoefficients)));
}

}  // namespace wvr::python
