#pragma once
// Umbrella header: the whole public libwvr API.

#include "wvr/absorption.hpp"
#include "wvr/atmosphere.hpp"
#include "wvr/cloud_liquid.hpp"
#include "wvr/constants.hpp"
#include "wvr/error.hpp"
#include "wvr/fast_sky_model.hpp"
#include "wvr/planck.hpp"
#include "wvr/radiometer.hpp"
#include "wvr/refractivity.hpp"
#include "wvr/site_config.hpp"
#include "wvr/sky_model.hpp"
#include "wvr/sounding.hpp"
#include "wvr/standard_atmosphere.hpp"
#include "wvr/water_vapour.hpp"
