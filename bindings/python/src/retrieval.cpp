// Retrieval: the full fit of one sample (Retriever), the real-time table inversion (PwvTable)
// and night mode (retrieve_night), with the per-sample status codes and flag bits.
#include "wvr/retrieval.hpp"

#include <pybind11/stl.h>

#include <array>
#include <cmath>
#include <cstdint>
#include <limits>
#include <memory>
#include <mutex>
#include <optional>
#include <span>
#include <sstream>
#include <string>
#include <type_traits>
#include <utility>
#include <variant>

#include "arrays.hpp"
#include "common.hpp"
#include "result_fields.hpp"
#include "wvr/error.hpp"
#include "wvr/night_retrieval.hpp"
#include "wvr/night_site.hpp"
#include "wvr/pwv_table.hpp"
#include "wvr/site_config.hpp"

namespace wvr::python {
namespace {

// --- full fit -------------------------------------------------------------------------------

CalibrationTerms calibration_by_name(const std::string& name) {
  if (name == "none") return CalibrationTerms::kNone;
  if (name == "channel_offsets") return CalibrationTerms::kChannelOffsets;
  if (name == "common_gain") return CalibrationTerms::kCommonGain;
  throw InvalidInput("calibration = '" + name +
                     "' is not one of none, channel_offsets, common_gain");
}

std::string calibration_name(CalibrationTerms terms) {
  switch (terms) {
    case CalibrationTerms::kChannelOffsets:
      return "channel_offsets";
    case CalibrationTerms::kCommonGain:
      return "common_gain";
    case CalibrationTerms::kNone:
      break;
  }
  return "none";
}

// None, (mean, sigma) or a dict with keys mean and sigma.
std::optional<GaussianPrior> prior_from_object(const py::handle& object, const std::string& name) {
  if (object.is_none()) return std::nullopt;
  GaussianPrior prior;
  if (py::isinstance<py::dict>(object)) {
    const auto d = py::reinterpret_borrow<py::dict>(object);
    for (auto item : d) {
      const std::string key = py::str(item.first);
      if (key != "mean" && key != "sigma") {
        throw InvalidInput(name + ": unknown key '" + key + "' (expected mean, sigma)");
      }
    }
    if (!d.contains("mean") || !d.contains("sigma")) {
      throw InvalidInput(name + " needs both 'mean' and 'sigma'");
    }
    prior.mean = number_of(d["mean"], name + ".mean");
    prior.sigma = number_of(d["sigma"], name + ".sigma");
    return prior;
  }
  if (py::isinstance<py::str>(object) || !py::isinstance<py::sequence>(object) ||
      py::len(object) != 2) {
    throw InvalidInput(name + ": expected None, (mean, sigma) or a dict with mean and sigma");
  }
  const auto items = py::reinterpret_borrow<py::sequence>(object);
  prior.mean = number_of(items[0], name + ".mean");
  prior.sigma = number_of(items[1], name + ".sigma");
  return prior;
}

py::object prior_to_object(const std::optional<GaussianPrior>& prior) {
  if (!prior) return py::none();
  py::dict d;
  d["mean"] = prior->mean;
  d["sigma"] = prior->sigma;
  return d;
}

// A Retriever reused across calls from Python: fit() releases the GIL, and the mutex keeps
// two Python threads from sharing the retriever's scratch state at once.
struct BoundRetriever {
  BoundRetriever(const FastSkyModel& model, RetrievalOptions options)
      : retriever(model, std::move(options)) {}
  Retriever retriever;
  std::mutex mutex;
};

std::unique_ptr<BoundRetriever> make_retriever(const FastSkyModel& fast_model,
                                               bool fit_liquid,
                                               bool fit_temperature_offset,
                                               const std::string& calibration,
                                               const py::object& pwv_prior_mm,
                                               const py::object& liquid_prior_kg_m2,
                                               const py::object& temperature_offset_prior_k,
                                               double channel_offset_prior_sigma_k,
                                               double gain_prior_sigma,
                                               double temperature_offset_limit_k,
                                               int max_iterations) {
  RetrievalOptions options;
  options.fit_liquid = fit_liquid;
  options.fit_temperature_offset = fit_temperature_offset;
  options.calibration = calibration_by_name(calibration);
  options.pwv_prior_mm = prior_from_object(pwv_prior_mm, "pwv_prior_mm");
  options.liquid_prior_kg_m2 = prior_from_object(liquid_prior_kg_m2, "liquid_prior_kg_m2");
  options.temperature_offset_prior_k =
      prior_from_object(temperature_offset_prior_k, "temperature_offset_prior_k");
  options.channel_offset_prior_sigma_k = channel_offset_prior_sigma_k;
  options.gain_prior_sigma = gain_prior_sigma;
  options.temperature_offset_limit_k = temperature_offset_limit_k;
  options.max_iterations = max_iterations;
  options.validate();
  return std::make_unique<BoundRetriever>(fast_model, options);
}

RetrievalResult fit(BoundRetriever& self,
                    const py::handle& brightness_k,
                    const py::handle& noise_k,
                    double elevation_deg,
                    double initial_pwv_mm,
                    double temperature_offset_k) {
  const std::vector<double> tb = as_vector(brightness_k, "brightness_k");
  const std::vector<double> noise = as_vector(noise_k, "noise_k");
  py::gil_scoped_release release;
  const std::lock_guard<std::mutex> lock(self.mutex);
  return self.retriever.fit(
      RetrievalInput{tb, noise, elevation_deg, initial_pwv_mm, temperature_offset_k});
}

py::dict retriever_options(const BoundRetriever& self) {
  const RetrievalOptions& o = self.retriever.options();
  py::dict d;
  d["fit_liquid"] = o.fit_liquid;
  d["fit_temperature_offset"] = o.fit_temperature_offset;
  d["calibration"] = calibration_name(o.calibration);
  d["pwv_prior_mm"] = prior_to_object(o.pwv_prior_mm);
  d["liquid_prior_kg_m2"] = prior_to_object(o.liquid_prior_kg_m2);
  d["temperature_offset_prior_k"] = prior_to_object(o.temperature_offset_prior_k);
  d["channel_offset_prior_sigma_k"] = o.channel_offset_prior_sigma_k;
  d["gain_prior_sigma"] = o.gain_prior_sigma;
  d["temperature_offset_limit_k"] = o.temperature_offset_limit_k;
  d["max_iterations"] = o.max_iterations;
  return d;
}

const char* const kResultKeys[] = {"status",
                                   "ok",
                                   "message",
                                   "pwv_mm",
                                   "pwv_sigma_mm",
                                   "liquid_kg_m2",
                                   "liquid_sigma_kg_m2",
                                   "temperature_offset_k",
                                   "temperature_offset_sigma_k",
                                   "gain",
                                   "channel_offsets_k",
                                   "parameter_names",
                                   "covariance",
                                   "chi2",
                                   "dof",
                                   "chi2_per_dof",
                                   "iterations",
                                   "model_brightness_k"};

// --- table inversion ------------------------------------------------------------------------

constexpr std::array<std::pair<PwvTableStatus, const char*>, 6> kTableStatusNames = {{
    {PwvTableStatus::kOk, "OK"},
    {PwvTableStatus::kBrightnessInvalid, "BRIGHTNESS_INVALID"},
    {PwvTableStatus::kElevationOutOfDomain, "ELEVATION_OUT_OF_DOMAIN"},
    {PwvTableStatus::kTemperatureOutOfDomain, "TEMPERATURE_OUT_OF_DOMAIN"},
    {PwvTableStatus::kPwvOutOfDomain, "PWV_OUT_OF_DOMAIN"},
    {PwvTableStatus::kNoSensitiveChannel, "NO_SENSITIVE_CHANNEL"},
}};

PwvTable make_pwv_table(const SiteConfig& site,
                        const RadiometerConfig& radiometer,
                        double min_pwv_mm,
                        double max_pwv_mm,
                        int pwv_points,
                        double min_elevation_deg,
                        int airmass_points,
                        double min_surface_temperature_k,
                        double max_surface_temperature_k,
                        double temperature_step_k,
                        const std::optional<SkyModel>& sky_model) {
  PwvTableOptions options;
  options.min_pwv_mm = min_pwv_mm;
  options.max_pwv_mm = max_pwv_mm;
  options.pwv_points = pwv_points;
  options.min_elevation_deg = min_elevation_deg;
  options.airmass_points = airmass_points;
  options.min_surface_temperature_k = min_surface_temperature_k;
  options.max_surface_temperature_k = max_surface_temperature_k;
  options.temperature_step_k = temperature_step_k;
  options.validate();
  const SkyModel sky = sky_model ? *sky_model : SkyModel();
  py::gil_scoped_release release;
  return PwvTable(site.parameters, radiometer, options, sky);
}

py::dict table_options(const PwvTable& table) {
  const PwvTableOptions& o = table.options();
  py::dict d;
  d["min_pwv_mm"] = o.min_pwv_mm;
  d["max_pwv_mm"] = o.max_pwv_mm;
  d["pwv_points"] = o.pwv_points;
  d["min_elevation_deg"] = o.min_elevation_deg;
  d["airmass_points"] = o.airmass_points;
  d["min_surface_temperature_k"] = o.min_surface_temperature_k;
  d["max_surface_temperature_k"] = o.max_surface_temperature_k;
  d["temperature_step_k"] = o.temperature_step_k;
  return d;
}

// One inversion into caller-owned outputs; every float output is NaN unless the status is OK.
struct InversionOutputs {
  double* pwv_mm;
  double* pwv_sigma_mm;
  double* wet_path_per_pwv_m_per_mm;
  double* chi2;
  std::int8_t* status;
  double* d_brightness_d_pwv_k_per_mm;  // channel_count() values
};

void invert_into(const PwvTable& table,
                 std::span<const double> brightness_k,
                 std::span<const double> noise_k,
                 double elevation_deg,
                 double surface_temperature_k,
                 const InversionOutputs& out) noexcept {
  const std::size_t channels = table.channel_count();
  const std::span<double> slope(out.d_brightness_d_pwv_k_per_mm, channels);
  const PwvTableResult r =
      table.invert(brightness_k, noise_k, elevation_deg, surface_temperature_k, slope);
  *out.status = static_cast<std::int8_t>(r.status);
  if (r.status == PwvTableStatus::kOk) {
    *out.pwv_mm = r.pwv_mm;
    *out.pwv_sigma_mm = r.pwv_sigma_mm;
    *out.wet_path_per_pwv_m_per_mm = r.wet_path_per_pwv_m_per_mm;
    *out.chi2 = r.chi2;
    return;
  }
  const double nan = std::numeric_limits<double>::quiet_NaN();
  *out.pwv_mm = *out.pwv_sigma_mm = *out.wet_path_per_pwv_m_per_mm = *out.chi2 = nan;
  std::fill(slope.begin(), slope.end(), nan);
}

py::dict invert_one(const PwvTable& table,
                    const py::handle& brightness_k,
                    const py::handle& noise_k,
                    double elevation_deg,
                    double surface_temperature_k) {
  const std::vector<double> tb = as_vector(brightness_k, "brightness_k");
  const std::vector<double> noise = as_vector(noise_k, "noise_k");
  const auto c = static_cast<py::ssize_t>(table.channel_count());
  py::array_t<double> slope(c);
  std::array<double, 4> values{};
  std::int8_t status = 0;
  {
    py::gil_scoped_release release;
    invert_into(table, tb, noise, elevation_deg, surface_temperature_k,
                {&values[0], &values[1], &values[2], &values[3], &status, slope.mutable_data()});
  }
  py::dict d;
  d["status"] = static_cast<int>(status);
  d["pwv_mm"] = values[0];
  d["pwv_sigma_mm"] = values[1];
  d["wet_path_per_pwv_m_per_mm"] = values[2];
  d["chi2"] = values[3];
  d["d_brightness_d_pwv_k_per_mm"] = slope;
  return d;
}

py::dict invert_many(const PwvTable& table,
                     const py::handle& brightness_k,
                     const py::handle& noise_k,
                     const py::handle& elevation_deg,
                     const py::handle& surface_temperature_k) {
  const auto c = static_cast<py::ssize_t>(table.channel_count());
  const py::array tb_input = numeric_array(brightness_k, "brightness_k");
  require_shape(tb_input, "brightness_k", {-1, c}, "[sample, channel]");
  const DoubleArray tb = DoubleArray::ensure(tb_input);
  const py::ssize_t n = tb.shape(0);
  const py::array noise_input = numeric_array(noise_k, "noise_k");
  if (noise_input.ndim() == 2) {
    require_shape(noise_input, "noise_k", {n, c}, "[sample, channel]");
  } else {
    require_shape(noise_input, "noise_k", {c}, "[channel]");
  }
  const DoubleArray noise = DoubleArray::ensure(noise_input);
  const std::size_t noise_step = noise.ndim() == 2 ? static_cast<std::size_t>(c) : 0;
  // Per-sample columns: a number (or length 1) applies to every sample.
  const std::array<DoubleArray, 2> columns = {
      as_double_array(elevation_deg, "elevation_deg"),
      as_double_array(surface_temperature_k, "surface_temperature_k")};
  const char* const column_names[] = {"elevation_deg", "surface_temperature_k"};
  std::array<std::size_t, 2> step{};
  for (std::size_t k = 0; k < columns.size(); ++k) {
    if (columns[k].ndim() > 1 || (columns[k].size() != 1 && columns[k].size() != n)) {
      const std::vector<py::ssize_t> shape(columns[k].shape(),
                                           columns[k].shape() + columns[k].ndim());
      throw InvalidInput(std::string(column_names[k]) + " has shape " + shape_text(shape) +
                         ", expected a number or [sample] = (" + std::to_string(n) + ",)");
    }
    step[k] = columns[k].size() == 1 ? 0 : 1;
  }
  py::array_t<double> pwv(n), sigma(n), wet(n), chi2(n), slope({n, c});
  py::array_t<std::int8_t> status(n);
  {
    const auto samples = static_cast<std::size_t>(n);
    const auto channels = static_cast<std::size_t>(c);
    const double* tb_data = tb.data();
    const double* noise_data = noise.data();
    const double* elevation = columns[0].data();
    const double* temperature = columns[1].data();
    InversionOutputs out{pwv.mutable_data(),  sigma.mutable_data(),  wet.mutable_data(),
                         chi2.mutable_data(), status.mutable_data(), slope.mutable_data()};
    py::gil_scoped_release release;
    // Straight into the output arrays: no allocation per sample.
    for (std::size_t i = 0; i < samples; ++i) {
      invert_into(table, std::span<const double>(tb_data + i * channels, channels),
                  std::span<const double>(noise_data + i * noise_step, channels),
                  elevation[i * step[0]], temperature[i * step[1]],
                  {out.pwv_mm + i, out.pwv_sigma_mm + i, out.wet_path_per_pwv_m_per_mm + i,
                   out.chi2 + i, out.status + i, out.d_brightness_d_pwv_k_per_mm + i * channels});
    }
  }
  py::dict d;
  d["status"] = status;
  d["pwv_mm"] = pwv;
  d["pwv_sigma_mm"] = sigma;
  d["wet_path_per_pwv_m_per_mm"] = wet;
  d["chi2"] = chi2;
  d["d_brightness_d_pwv_k_per_mm"] = slope;
  return d;
}

// --- night mode -----------------------------------------------------------------------------

constexpr std::array<std::pair<RetrievalFlag, const char*>, 7> kFlagNames = {{
    {kFlagInvalidInFile, "INVALID_IN_FILE"},
    {kFlagBadBrightness, "BAD_BRIGHTNESS"},
    {kFlagOutOfDomain, "OUT_OF_DOMAIN"},
    {kFlagNoWeather, "NO_WEATHER"},
    {kFlagFitFailed, "FIT_FAILED"},
    {kFlagNoValidSamples, "NO_VALID_SAMPLES"},
    {kFlagElevationOutOfDomain, "ELEVATION_OUT_OF_DOMAIN"},
}};

py::dict retrieval_summary(const NightRetrieval& retrieval) {
  const NightRetrievalSummary s = summarize(retrieval);
  py::dict d;
  for (const NightRetrievalSummaryField& field : night_retrieval_summary_fields()) {
    std::visit(
        [&](auto member) {
          const auto& value = s.*member;
          if constexpr (std::is_same_v<std::decay_t<decltype(value)>, std::vector<double>>) {
            d[field.name] = read_only_array(value);
          } else {
            d[field.name] = value;
          }
        },
        field.member);
  }
  return d;
}

// The summary() docstring, from the field table.
const char* retrieval_summary_doc() {
  static const std::string doc = [] {
    std::string text = "Numbers for a one-screen summary, a dict of:\n";
    for (const NightRetrievalSummaryField& field : night_retrieval_summary_fields())
      text += std::string(field.name) + " (" + field.units + "): " + field.meaning + "\n";
    return text;
  }();
  return doc.c_str();
}

NightRetrieval retrieve(const Night& night,
                        const std::optional<SiteConfig>& site,
                        double coefficient_window_s,
                        bool fit_liquid,
                        bool fit_temperature_offset,
                        int threads,
                        const std::string& absorption_model) {
  if (threads < 0) throw InvalidInput("threads = " + std::to_string(threads) + " must be >= 0");
  NightRetrievalOptions options;
  options.coefficient_window_s = coefficient_window_s;
  options.window_fit.fit_liquid = fit_liquid;
  options.window_fit.fit_temperature_offset = fit_temperature_offset;
  options.threads = threads;
  options.absorption_model = absorption_model;
  options.validate();
  const ResolvedSite resolved = resolve_night_site(night, site);
  py::gil_scoped_release release;
  return retrieve_night(night, resolved.site.parameters, options);
}

}  // namespace

void export_retrieval(py::module_& m) {
  py::class_<RetrievalResult>(m, "RetrievalResult", R"doc(
Outcome of Retriever.fit: status and message, the estimates with their formal 1-sigma errors,
chi-square and the model brightness at the solution. Immutable.
)doc")
      .def_property_readonly(
          "status", [](const RetrievalResult& r) { return std::string(to_string(r.status)); },
          "\"converged\", \"no convergence\", \"invalid input\", \"out of domain\" or "
          "\"solver failure\".")
      .def_property_readonly("ok", &RetrievalResult::ok, "True when the fit converged.")
      .def_readonly("message", &RetrievalResult::message, "Why, when not converged.")
      .def_readonly("pwv_mm", &RetrievalResult::pwv_mm, "Zenith PWV (mm).")
      .def_readonly("pwv_sigma_mm", &RetrievalResult::pwv_sigma_mm, "1-sigma error of pwv_mm.")
      .def_readonly("liquid_kg_m2", &RetrievalResult::liquid_kg_m2,
                    "Zenith cloud liquid water path (kg/m^2); 0 unless fitted.")
      .def_readonly("liquid_sigma_kg_m2", &RetrievalResult::liquid_sigma_kg_m2)
      .def_readonly("temperature_offset_k", &RetrievalResult::temperature_offset_k,
                    "Fitted profile temperature offset (K); 0 unless fitted.")
      .def_readonly("temperature_offset_sigma_k", &RetrievalResult::temperature_offset_sigma_k)
      .def_readonly("gain", &RetrievalResult::gain, "Common gain; 1 unless fitted.")
      .def_property_readonly(
          "channel_offsets_k",
          [](const RetrievalResult& r) { return read_only_array(r.channel_offsets_k); },
          "Per-channel calibration offsets (K); empty unless fitted.")
      .def_readonly("parameter_names", &RetrievalResult::parameter_names,
                    "Free parameters in covariance order, pwv_mm first.")
      .def_property_readonly(
          "covariance",
          [](const RetrievalResult& r) {
            const auto p = static_cast<py::ssize_t>(r.parameter_names.size());
            py::array_t<double> out({p, p});
            if (r.covariance.size() == static_cast<std::size_t>(p * p)) {
              std::copy(r.covariance.begin(), r.covariance.end(), out.mutable_data());
            } else {
              std::fill_n(out.mutable_data(), p * p, std::numeric_limits<double>::quiet_NaN());
            }
            make_read_only(out);
            return out;
          },
          "Formal covariance of the parameters [p, p] (units of parameter_names).")
      .def_readonly("chi2", &RetrievalResult::chi2, "Chi-square of the channel residuals.")
      .def_readonly("dof", &RetrievalResult::dof,
                    "Degrees of freedom: channels + prior terms - free parameters.")
      .def_readonly("chi2_per_dof", &RetrievalResult::chi2_per_dof,
                    "(chi2 + prior terms) / dof; NaN when dof <= 0.")
      .def_readonly("iterations", &RetrievalResult::iterations)
      .def_property_readonly(
          "model_brightness_k",
          [](const RetrievalResult& r) { return read_only_array(r.model_brightness_k); },
          "Model channel brightness at the solution (K).")
      .def("brief_report", &RetrievalResult::brief_report,
           "One line: status, PWV +/- sigma, extra parameters, chi2/dof, iterations.")
      .def("to_dict",
           [](const py::object& self) {
             py::dict out;
             for (const char* key : kResultKeys) out[key] = self.attr(key);
             return out;
           })
      .def("__repr__",
           [](const RetrievalResult& r) { return "RetrievalResult(" + r.brief_report() + ")"; });

  py::class_<BoundRetriever>(m, "Retriever", R"doc(
Maximum-likelihood fit (Ceres Solver, Levenberg-Marquardt) of a FastSkyModel to one
radiometer sample: PWV, optionally cloud liquid, a profile temperature offset and calibration
terms, with Gaussian priors. Reusable; calls from several threads are serialised (make one
Retriever per thread for parallel fits).
)doc")
      .def(py::init(&make_retriever), py::keep_alive<1, 2>(), py::arg("fast_model"), py::kw_only(),
           py::arg("fit_liquid") = false, py::arg("fit_temperature_offset") = false,
           py::arg("calibration") = "none", py::arg("pwv_prior_mm") = py::none(),
           py::arg("liquid_prior_kg_m2") = py::none(),
           py::arg("temperature_offset_prior_k") = py::none(),
           py::arg("channel_offset_prior_sigma_k") = 1.0, py::arg("gain_prior_sigma") = 0.05,
           py::arg("temperature_offset_limit_k") = 15.0, py::arg("max_iterations") = 50, R"doc(
fast_model: the wvr.FastSkyModel to fit (kept alive by the retriever). fit_liquid: fit the
zenith cloud liquid water path (kg/m^2); fit_temperature_offset: fit a uniform profile
temperature offset (K, bounded by temperature_offset_limit_k); calibration: "none",
"channel_offsets" (one additive offset per channel, prior N(0, channel_offset_prior_sigma_k))
or "common_gain" (one gain, prior N(1, gain_prior_sigma)). Priors pwv_prior_mm,
liquid_prior_kg_m2, temperature_offset_prior_k: None, (mean, sigma) or {"mean", "sigma"}.
max_iterations: Levenberg-Marquardt iteration limit. Raises WvrValueError for bad options.
)doc")
      .def("fit", &fit, py::arg("brightness_k"), py::arg("noise_k"), py::arg("elevation_deg"),
           py::arg("initial_pwv_mm") = -1.0, py::arg("temperature_offset_k") = 0.0, R"doc(
Fits one sample: brightness_k and noise_k (K, one value per channel; noise > 0),
elevation_deg (deg). initial_pwv_mm (mm): start value, < 0 starts from a coarse scan of the
model. temperature_offset_k (K): known offset of the sample's profile temperature from the
model's (a fitted offset adds to it). Returns a RetrievalResult; bad data (NaN, wrong channel
count, non-positive noise, elevation outside the model) come back as its status, never as an
exception. Releases the GIL.
)doc")
      .def_property_readonly("options", &retriever_options,
                             "The options the retriever was built with (a dict).")
      .def("__repr__", [](const BoundRetriever& r) {
        const RetrievalOptions& o = r.retriever.options();
        std::ostringstream out;
        out << "Retriever(fit_liquid=" << (o.fit_liquid ? "True" : "False")
            << ", fit_temperature_offset=" << (o.fit_temperature_offset ? "True" : "False")
            << ", calibration='" << calibration_name(o.calibration) << "')";
        return out.str();
      });

  py::dict table_codes;
  for (const auto& [status, name] : kTableStatusNames) table_codes[name] = static_cast<int>(status);
  // Private: wvr/__init__.py builds wvr.PwvTableStatus from them.
  m.attr("_PWV_TABLE_STATUS_CODES") = table_codes;
  m.def(
      "_pwv_table_status_description",
      [](int code) {
        for (const auto& entry : kTableStatusNames) {
          if (static_cast<int>(entry.first) == code) return std::string(to_string(entry.first));
        }
        throw InvalidInput("status code = " + std::to_string(code) + " is not a PwvTable status");
      },
      py::arg("code"), "Text of a PwvTable inversion status code.");

  py::class_<PwvTable>(m, "PwvTable", R"doc(
Table-based PWV inversion for real time: the fast model tabulated over PWV (log-spaced),
airmass and surface temperature; a sample is inverted per channel on cubic Hermite curves,
the channels combined by inverse variance and refined by one Gauss-Newton step. Agrees with
the full fit (Retriever) to < 0.5 % in PWV over 0.05-10 mm and elevation 15-90 deg.
Thread-safe: inversions release the GIL and only read the table.
)doc")
      .def(py::init(&make_pwv_table), py::arg("site"), py::arg("radiometer"), py::kw_only(),
           py::arg("min_pwv_mm") = 0.04, py::arg("max_pwv_mm") = 11.0, py::arg("pwv_points") = 96,
           py::arg("min_elevation_deg") = 14.0, py::arg("airmass_points") = 96,
           py::arg("min_surface_temperature_k") = 255.0,
           py::arg("max_surface_temperature_k") = 285.0, py::arg("temperature_step_k") = 1.0,
           py::arg("sky_model") = py::none(), R"doc(
Tabulates radiometer (wvr.Radiometer) on the atmosphere shape of site (wvr.SiteConfig; its
humidity setting is ignored, each temperature node overrides its surface temperature) with the
options of sky_model (default SkyModel()): PWV min_pwv_mm-max_pwv_mm (mm) in pwv_points,
elevation min_elevation_deg-90 (deg) in airmass_points, surface temperature
min_surface_temperature_k-max_surface_temperature_k (K) every temperature_step_k (K). Building
takes about a second per temperature node; releases the GIL. Raises WvrValueError.
)doc")
      .def_property_readonly("channel_count", &PwvTable::channel_count)
      .def_property_readonly("options", &table_options, "The table's options (a dict).")
      .def("invert", &invert_one, py::arg("brightness_k"), py::arg("noise_k"),
           py::arg("elevation_deg"), py::arg("surface_temperature_k"), R"doc(
Inverts one sample: brightness_k and noise_k (K, one per channel), elevation_deg (deg),
surface_temperature_k (K). Returns a dict: status (int, a wvr.PwvTableStatus code; bad data
come back as a status, never as an exception), pwv_mm (mm), pwv_sigma_mm (mm),
wet_path_per_pwv_m_per_mm (slant wet path per mm of zenith PWV), chi2 (channels against the
model, dof = channels - 1) and d_brightness_d_pwv_k_per_mm [C] (K/mm). Every float is NaN
unless status is OK.
)doc")
      .def("invert_many", &invert_many, py::arg("brightness_k"), py::arg("noise_k"),
           py::arg("elevation_deg"), py::arg("surface_temperature_k"), R"doc(
Inverts n samples: brightness_k [n, C] (K), noise_k [C] or [n, C] (K), elevation_deg and
surface_temperature_k numbers or [n] arrays (deg, K). Returns the fields of invert as arrays:
status (int8 [n]), pwv_mm, pwv_sigma_mm, wet_path_per_pwv_m_per_mm, chi2 ([n]) and
d_brightness_d_pwv_k_per_mm [n, C]; identical to calling invert on each sample. Releases the
GIL and allocates nothing per sample. Raises WvrValueError only for wrong shapes.
)doc")
      .def("__repr__", [](const PwvTable& t) {
        const PwvTableOptions& o = t.options();
        std::ostringstream out;
        out << "PwvTable(" << t.channel_count() << " channels, pwv_mm " << o.min_pwv_mm << "-"
            << o.max_pwv_mm << ", elevation_deg " << o.min_elevation_deg
            << "-90, surface_temperature_k " << o.min_surface_temperature_k << "-"
            << o.max_surface_temperature_k << ")";
        return out.str();
      });

  py::list flag_codes;
  for (const auto& [flag, name] : kFlagNames) {
    flag_codes.append(py::make_tuple(name, static_cast<int>(flag)));
  }
  // Private: wvr/__init__.py builds wvr.RetrievalFlag and wvr.RETRIEVAL_UNUSABLE from them.
  m.attr("_RETRIEVAL_FLAG_CODES") = flag_codes;
  m.attr("_RETRIEVAL_UNUSABLE") = static_cast<int>(kRetrievalUnusable);
  m.def(
      "describe_retrieval_flags",
      [](const py::handle& flags) {
        return describe_retrieval_flags(
            static_cast<std::uint8_t>(integer_of(flags, "flags", 0, 255)));
      },
      py::arg("flags"),
      "Text of the set bits of a retrieval flag byte (0-255), e.g. \"bad brightness, no "
      "weather\"; \"ok\" for 0.");

  auto night_retrieval =
      py::class_<NightRetrieval>(m, "NightRetrieval", R"doc(
Retrieval of every antenna of a night (wvr.retrieve_night). Per sample [A, T]: PWV from the
table inversion with its error, chi2 per dof and flag bits (wvr.RetrievalFlag). Per coefficient
window [A, W] (and [A, W, C]): the full fit of the window's mean brightness and the path
coefficients at it. Arrays are read-only views. Immutable.
)doc")
          .def_readonly("antennas", &NightRetrieval::antennas)
          .def_readonly("samples", &NightRetrieval::samples, "Samples per antenna (T).")
          .def_readonly("channels", &NightRetrieval::channels)
          .def_readonly("windows", &NightRetrieval::windows, "Coefficient windows (W).")
          .def_readonly("seconds", &NightRetrieval::seconds, "Wall time of the retrieval (s).")
          .def("summary", &retrieval_summary, retrieval_summary_doc())
          .def(
              "to_result_group",
              [](const NightRetrieval& r, const Night& night) { return to_result_group(r, night); },
              py::arg("night"),
              "The \"retrieval\" result group of the night file (wvr.ResultGroup), for "
              "wvr.add_result_group or Night.with_result_group.")
          .def("__repr__", [](const NightRetrieval& r) {
            std::ostringstream out;
            out << "NightRetrieval(" << r.antennas << " antennas x " << r.samples << " samples, "
                << r.windows << " windows, " << r.channels << " channels)";
            return out.str();
          });
  // Every array from the one field table (wvr/night_retrieval.hpp), as a read-only view.
  bind_result_fields(night_retrieval, night_retrieval_fields(),
                     "a antennas, t samples, w windows, c channels");

  m.def("retrieve_night", &retrieve, py::arg("night"), py::arg("site") = py::none(), py::kw_only(),
        py::arg("coefficient_window_s") = 60.0, py::arg("fit_liquid") = false,
        py::arg("fit_temperature_offset") = false, py::arg("threads") = 0,
        py::arg("absorption_model") = std::string(kDefaultAbsorptionModel), R"doc(
Retrieves every antenna of night (wvr.Night) on the atmosphere shape of site (wvr.SiteConfig;
None: the night's own site record, or defaults from its weather and array height):
per sample the table inversion at the sample's elevation and the surface temperature of the
night's weather (the site's when there is none), per coefficient_window_s (s) window the full
fit of the window's mean brightness (fitting cloud liquid / a temperature offset on request)
and the path coefficients, with the absorption model absorption_model ("p676" or "r17").
threads: 0 = all cores; results do not depend on it. Releases the GIL. Returns a NightRetrieval. Raises WvrValueError for bad options.
)doc");
}

}  // namespace wvr::python
