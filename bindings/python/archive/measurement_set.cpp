// The optional compiled module wvr._archive: MeasurementSet import and export (built when
// casacore is found). Nights cross the boundary as wvr.Night, registered by wvr._core, which
// must be imported first (wvr/__init__.py does); C++ errors become wvr.WvrValueError through
// _core's translator.
#include "wvr/measurement_set.hpp"

#include <pybind11/pybind11.h>
#include <pybind11/stl.h>
#include <pybind11/stl/filesystem.h>

#include "wvr/error.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/site_config.hpp"

namespace py = pybind11;

namespace {

py::dict offset_dict(const wvr::ClockOffset& c) {
  py::dict d;
  d["offset_s"] = c.offset_s;
  d["sigma_s"] = c.sigma_s;
  d["rows"] = c.rows;
  d["estimated"] = c.estimated;
  return d;
}

wvr::ClockOffsetMode clock_mode(const py::object& clock_offset, double* seconds) {
  if (clock_offset.is_none()) return wvr::ClockOffsetMode::kNone;
  if (py::isinstance<py::str>(clock_offset)) {
    const std::string text = clock_offset.cast<std::string>();
    if (text == "none") return wvr::ClockOffsetMode::kNone;
    if (text == "night") return wvr::ClockOffsetMode::kNight;
    if (text == "per-antenna") return wvr::ClockOffsetMode::kPerAntenna;
    throw wvr::InvalidInput("clock_offset = '" + text +
                            "' is not None, 'none', 'night', 'per-antenna' or seconds");
  }
  *seconds = clock_offset.cast<double>();
  return wvr::ClockOffsetMode::kGiven;
}

py::tuple import_ms(const std::filesystem::path& ms,
                    const std::string& brightness,
                    const std::string& radiometer_window,
                    const std::optional<std::filesystem::path>& radiometer,
                    int reference_antenna,
                    const std::optional<std::array<double, 3>>& array_centre,
                    const py::object& clock_offset,
                    double clock_search_s,
                    std::size_t chunk_rows) {
  wvr::MsImportOptions options;
  options.brightness = wvr::parse_brightness_convention(brightness);
  options.radiometer_window = radiometer_window;
  if (radiometer) options.radiometer = wvr::load_radiometer_config(*radiometer);
  options.reference_antenna = reference_antenna;
  options.array_centre = array_centre;
  options.clock_offset = clock_mode(clock_offset, &options.clock_offset_s);
  options.clock_search_halfwidth_s = clock_search_s;
  options.chunk_rows = chunk_rows;
  wvr::MsImport imported;
  {
    py::gil_scoped_release release;
    imported = wvr::import_measurement_set(ms, options);
  }
  py::dict report;
  report["notes"] = imported.notes;
  py::list offsets;
  for (const auto& c : imported.clock_offsets) offsets.append(offset_dict(c));
  report["clock_offsets"] = offsets;
  return py::make_tuple(std::move(imported.night), report);
}

}  // namespace

PYBIND11_MODULE(_archive, m) {
  m.doc() = "MeasurementSet import and export (optional part of wvr, needs casacore)";
  py::module_::import("wvr._core");
  m.def("import_measurement_set", &import_ms, py::arg("ms_path"), py::kw_only(),
        py::arg("brightness"), py::arg("radiometer_window") = "",
        py::arg("radiometer") = py::none(), py::arg("reference_antenna") = -1,
        py::arg("array_centre") = py::none(), py::arg("clock_offset") = py::none(),
        py::arg("clock_search_s") = 6.0, py::arg("chunk_rows") = 20000, R"doc(
Reads a MeasurementSet into a night: returns (night, report) where report holds "notes" (what
was assumed, skipped or flagged) and "clock_offsets" (one dict per antenna when applied).

brightness: "rayleigh-jeans" or "planck" (how the radiometer window stores brightness).
radiometer_window: index or NAME (default: the window near 183.31 GHz). radiometer: a radiometer
file replacing the SPECTRAL_WINDOW channel layout. reference_antenna: keep only calibrator
baselines to it (-1: all). array_centre: (lat_deg, lon_deg, height_m) of the east/north/up
origin (default: the mean antenna position). clock_offset: None, "night", "per-antenna" or
seconds (radiometer stamp - correlator time).)doc");
  m.def(
      "estimate_clock_offsets",
      [](const wvr::Night& night, double halfwidth_s, bool per_antenna) {
        py::list out;
        for (const auto& c : wvr::estimate_clock_offsets(night, halfwidth_s, per_antenna))
          out.append(offset_dict(c));
        return out;
      },
      py::arg("night"), py::kw_only(), py::arg("halfwidth_s") = 6.0, py::arg("per_antenna") = false,
      "Radiometer-versus-correlator clock offsets (one dict per antenna: offset_s, sigma_s, rows, "
      "estimated).");
  m.def(
      "export_measurement_set",
      [](const wvr::Night& night, const std::filesystem::path& ms,
         const std::filesystem::path& output, const std::optional<std::filesystem::path>& site,
         bool overwrite, std::size_t chunk_rows) {
        wvr::MsExportOptions options;
        if (site) options.site = wvr::load_site_config(*site);
        options.overwrite_output = overwrite;
        options.chunk_rows = chunk_rows;
        wvr::MsExport result;
        {
          py::gil_scoped_release release;
          result = wvr::export_measurement_set(night, ms, output, options);
        }
        py::dict d;
        d["rows"] = result.rows;
        d["rows_flagged"] = result.rows_flagged;
        d["notes"] = result.notes;
        return d;
      },
      py::arg("night"), py::arg("ms_path"), py::arg("output_path"), py::kw_only(),
      py::arg("site") = py::none(), py::arg("overwrite") = false, py::arg("chunk_rows") = 20000,
      "Writes a copy of the MS whose CORRECTED_DATA holds the night's correction applied; returns "
      "{rows, rows_flagged, notes}. The input MS is never written.");
  m.def(
      "export_gain_table",
      [](const wvr::Night& night, const std::filesystem::path& ms,
         const std::filesystem::path& output, const std::optional<std::filesystem::path>& site,
         const std::string& radiometer_window, bool overwrite, std::size_t chunk_rows) {
        wvr::GainTableOptions options;
        if (site) options.site = wvr::load_site_config(*site);
        options.radiometer_window = radiometer_window;
        options.overwrite_output = overwrite;
        options.chunk_rows = chunk_rows;
        wvr::GainTableExport result;
        {
          py::gil_scoped_release release;
          result = wvr::export_gain_table(night, ms, output, options);
        }
        py::dict d;
        d["solutions"] = result.solutions;
        d["solutions_flagged"] = result.solutions_flagged;
        d["spectral_windows"] = result.spectral_windows;
        d["radiometer_window"] = result.radiometer_window;
        d["notes"] = result.notes;
        return d;
      },
      py::arg("night"), py::arg("ms_path"), py::arg("output_path"), py::kw_only(),
      py::arg("site") = py::none(), py::arg("radiometer_window") = "", py::arg("overwrite") = false,
      py::arg("chunk_rows") = 20000, R"doc(
Writes a new antenna-based gain table (casacore's calibration-table layout, complex gains) for
the MS: one solution per correction time sample, spectral window (except the radiometer's, found
as on import or named by radiometer_window) and antenna, g = exp(i phi s) at the window's centre
frequency, flagged where the correction is unusable. Applied as V_ij / (g_i conj(g_j)) it gives
export_measurement_set's CORRECTED_DATA at that frequency. Returns {solutions,
solutions_flagged, spectral_windows, radiometer_window (-1: none identified), notes}. The input
MS is never written.)doc");
}
