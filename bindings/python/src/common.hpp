#pragma once
// Shared pieces of the Python bindings: the export function of every concept and the
// conversions between numpy arrays and std::vector used at the API boundary.

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "wvr/atmosphere.hpp"
#include "wvr/calibration.hpp"
#include "wvr/refractivity.hpp"

namespace wvr::python {

namespace py = pybind11;

// Raised for a name that is not there; reaches Python as wvr.WvrKeyError (a KeyError).
struct MissingKey : std::runtime_error {
  using std::runtime_error::runtime_error;
};

void export_errors(py::module_& m);
void export_atmosphere(py::module_& m);
void export_site_config(py::module_& m);
void export_sounding(py::module_& m);
void export_absorption(py::module_& m);
void export_cloud_liquid(py::module_& m);
void export_planck(py::module_& m);
void export_water_vapour(py::module_& m);
void export_refractivity(py::module_& m);
void export_standard_atmosphere(py::module_& m);
void export_radiometer(py::module_& m);
void export_sky_model(py::module_& m);
void export_fast_sky_model(py::module_& m);
void export_night(py::module_& m);
void export_simulator(py::module_& m);
void export_retrieval(py::module_& m);
void export_sky_dip(py::module_& m);
void export_correction(py::module_& m);
void export_night_processing(py::module_& m);
void export_streaming(py::module_& m);
void export_radiometer_cross_calibration(py::module_& m);

// per_antenna_scale as Python passes it: None = chosen by the data, True or False = forced.
inline AntennaScaling antenna_scaling_of(std::optional<bool> per_antenna_scale) {
  if (!per_antenna_scale) return AntennaScaling::kChosenByData;
  return *per_antenna_scale ? AntennaScaling::kPerAntenna : AntennaScaling::kOneForArray;
}

// C-contiguous float64 arrays, converted from any array-like (lists, scalars, integer arrays).
using DoubleArray = py::array_t<double, py::array::c_style | py::array::forcecast>;

// Converts an array-like; throws InvalidInput naming `field` when the object is None or holds
// something other than numbers.
DoubleArray as_double_array(const py::handle& object, const std::string& field);

// The values of a scalar or one-dimensional array-like; throws InvalidInput naming `field` for
// more dimensions or non-numbers.
std::vector<double> as_vector(const py::handle& object, const std::string& field);

// A read-only one-dimensional numpy copy of `values`: results handed to Python cannot be
// mistaken for views into the model.
py::array_t<double> read_only_array(const std::vector<double>& values);

// Clears the writeable flag of a freshly made array.
void make_read_only(py::array& array);

// Refractivity constants by name: "thayer_1974" or "bevis_1994"; throws InvalidInput.
RefractivityConstants refractivity_by_name(const std::string& name);
// The name of a preset, or "custom" for constants that match none.
std::string refractivity_name(const RefractivityConstants& k);

// Temperature inversion from None, a dict (base_above_ground_m, depth_m, temperature_jump_k)
// or a sequence of those three numbers; throws InvalidInput naming the bad key.
std::optional<Inversion> inversion_from_object(const py::handle& object);
py::object inversion_to_object(const std::optional<Inversion>& inversion);

}  // namespace wvr::python
