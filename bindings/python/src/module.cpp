// The compiled module wvr._core. It is private: users import the package wvr, which
// re-exports these names (bindings/python/wvr/__init__.py).
#include "common.hpp"

PYBIND11_MODULE(_core, m) {
  namespace wp = wvr::python;
  m.doc() = "libwvr sky emission model (compiled core of the wvr package)";
  m.attr("__version__") = WVR_VERSION;
  // Errors first: the other exports raise them.
  wp::export_errors(m);
  wp::export_atmosphere(m);
  wp::export_site_config(m);
  wp::export_sounding(m);
  wp::export_absorption(m);
  wp::export_cloud_liquid(m);
  wp::export_planck(m);
  wp::export_water_vapour(m);
  wp::export_refractivity(m);
  wp::export_standard_atmosphere(m);
  wp::export_radiometer(m);
  wp::export_sky_model(m);
  wp::export_fast_sky_model(m);
  // Night before the simulator and the retrieval, which return nights and result groups.
  wp::export_night(m);
  wp::export_simulator(m);
  wp::export_retrieval(m);
  wp::export_night_processing(m);
  wp::export_correction(m);
  wp::export_streaming(m);
  wp::export_radiometer_cross_calibration(m);
  wp::export_sky_dip(m);
}
