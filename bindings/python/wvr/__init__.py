"""libwvr: sky emission models for water-vapour radiometers.

Every quantity carries its unit in its name (``pwv_mm``, ``freq_ghz``, ``brightness_k``,
``elevation_deg``); arrays go in and come out as numpy arrays. Bad input raises
:class:`WvrValueError`, which is both a :class:`WvrError` and a :class:`ValueError`, with a
message naming the offending field and its value.

Example::

    import wvr
    site = wvr.load_site("demo-site.toml")
    profile = wvr.profile_from_site(site, pwv_mm=1.2)
    radiometer = wvr.Radiometer.load("demo-183-dsb.toml")
    sky = wvr.SkyModel()
    channels = sky.channels(profile, radiometer, elevation_deg=45.0)
    fast = wvr.FastSkyModel(profile, radiometer, sky)
    night = fast.evaluate_many(pwv_mm_array, elevation_deg_array)
"""

import enum as _enum

from wvr import _core
from wvr._core import (
    AtmosphereProfile,
    ChannelBrightness,
    FastSkyModel,
    Radiometer,
    SiteConfig,
    SkyModel,
    SkySpectrum,
    SlantPath,
    WvrError,
    WvrValueError,
    __version__,
    absorption,
    absorption_model_name,
    bevis_wet_delay_per_pwv,
    cloud_liquid_absorption_m2_per_kg,
    cloud_liquid_specific_attenuation,
    load_site,
    p835_reference_vapour_density_kg_m3,
    parametric_profile,
    parse_site,
    planck_brightness_k,
    profile_from_site,
    profile_from_sounding,
    read_sounding_csv,
    rj_brightness_k,
    saastamoinen_zenith_hydrostatic_delay_m,
    saturation_vapour_pressure_hpa,
    us_standard_atmosphere_1976,
    vapour_pressure_hpa,
)


class _FastModelStatusBase(_enum.IntEnum):
    @property
    def description(self) -> str:
        """What the code means, in words."""
        return _core.fast_status_description(int(self))


# Members come from the library so that codes never drift from the C++ enum.
FastModelStatus = _FastModelStatusBase(
    "FastModelStatus", _core.FAST_STATUS_CODES, module=__name__, qualname="FastModelStatus")
FastModelStatus.__doc__ = (
    "Per-sample status codes of FastSkyModel.evaluate_many (its int8 'status' array): "
    + ", ".join(f"{s.name} = {s.value}" for s in FastModelStatus) + ".")


__all__ = [
    "AtmosphereProfile",
    "ChannelBrightness",
    "FastModelStatus",
    "FastSkyModel",
    "Radiometer",
    "SiteConfig",
    "SkyModel",
    "SkySpectrum",
    "SlantPath",
    "WvrError",
    "WvrValueError",
    "__version__",
    "absorption",
    "absorption_model_name",
    "bevis_wet_delay_per_pwv",
    "cloud_liquid_absorption_m2_per_kg",
    "cloud_liquid_specific_attenuation",
    "load_site",
    "p835_reference_vapour_density_kg_m3",
    "parametric_profile",
    "parse_site",
    "planck_brightness_k",
    "profile_from_site",
    "profile_from_sounding",
    "read_sounding_csv",
    "rj_brightness_k",
    "saastamoinen_zenith_hydrostatic_delay_m",
    "saturation_vapour_pressure_hpa",
    "us_standard_atmosphere_1976",
    "vapour_pressure_hpa",
]
