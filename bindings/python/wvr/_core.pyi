"""Signatures and units of wvr._core, the compiled part of the wvr package.

Import the public names from ``wvr``; this module is private. Every argument and result carries
its unit in its name. Functions documented as "broadcasting" accept numbers or numpy arrays and
return a float for all-scalar input, an array of the broadcast shape otherwise. Bad input raises
WvrValueError (a WvrError and a ValueError) whose message names the field and its value.
"""

import os
from typing import Any, Dict, List, Optional, Sequence, Tuple, TypedDict, Union

import numpy as np
import numpy.typing as npt

ArrayLike = npt.ArrayLike
FloatArray = npt.NDArray[np.float64]
PathLike = Union[str, "os.PathLike[str]"]

__version__: str

class WvrError(Exception):
    """Base class of every error raised by libwvr."""

class WvrValueError(WvrError, ValueError):
    """Bad input; the message names the offending field and its value."""

# --- atmosphere -----------------------------------------------------------------------------

class InversionDict(TypedDict):
    base_above_ground_m: float  # m above the ground
    depth_m: float  # m
    temperature_jump_k: float  # K

class AtmosphereProfile:
    """Layered atmosphere upward from the antenna; immutable."""

    def __init__(
        self,
        base_m: ArrayLike,  # layer bases, m above sea level
        top_m: ArrayLike,  # layer tops, m above sea level (= next base)
        pressure_hpa: ArrayLike,  # total pressure, hPa
        temperature_k: ArrayLike,  # K
        vapour_density_kg_m3: ArrayLike,  # kg/m^3
        liquid_density_kg_m3: Optional[ArrayLike] = None,  # kg/m^3, default 0
    ) -> None: ...
    def __len__(self) -> int: ...
    @property
    def base_m(self) -> FloatArray: ...  # m above sea level, read-only
    @property
    def top_m(self) -> FloatArray: ...  # m above sea level, read-only
    @property
    def pressure_hpa(self) -> FloatArray: ...  # hPa, read-only
    @property
    def temperature_k(self) -> FloatArray: ...  # K, read-only
    @property
    def vapour_density_kg_m3(self) -> FloatArray: ...  # kg/m^3, read-only
    @property
    def liquid_density_kg_m3(self) -> FloatArray: ...  # kg/m^3, read-only
    @property
    def vapour_pressure_hpa(self) -> FloatArray: ...  # hPa, read-only
    @property
    def ground_altitude_m(self) -> float: ...  # m above sea level
    @property
    def top_altitude_m(self) -> float: ...  # m above sea level
    @property
    def pwv_mm(self) -> float: ...  # precipitable water vapour, mm
    @property
    def liquid_water_path_kg_m2(self) -> float: ...  # kg/m^2
    def to_dict(self) -> Dict[str, FloatArray]: ...  # the constructor's arguments
    def scaled_to_pwv(self, pwv_mm: float) -> AtmosphereProfile: ...
    def with_cloud(
        self,
        base_above_ground_m: float,  # m above the lowest layer's base
        thickness_m: float,  # m
        liquid_water_path_kg_m2: float,  # kg/m^2
    ) -> AtmosphereProfile: ...

def parametric_profile(
    *,
    altitude_m: float = 0.0,  # m above sea level
    surface_temperature_k: float = 288.15,  # K
    surface_pressure_hpa: float = 1013.25,  # hPa
    lapse_rate_k_per_km: float = 6.5,  # K/km
    tropopause_m: float = 11000.0,  # m above sea level
    water_scale_height_m: float = 2000.0,  # m
    pwv_mm: Optional[float] = None,  # mm; exactly one of pwv_mm and
    surface_relative_humidity_pct: Optional[float] = None,  # % must be given
    inversion: Union[None, InversionDict, Tuple[float, float, float]] = None,
    layer_count: int = 48,
    top_altitude_m: float = 40000.0,  # m above sea level
) -> AtmosphereProfile: ...

# --- site files -----------------------------------------------------------------------------

class SiteConfig:
    """A site TOML file: name, latitude and the parameters of parametric_profile."""

    @property
    def name(self) -> str: ...
    @property
    def latitude_deg(self) -> float: ...  # deg
    @property
    def altitude_m(self) -> float: ...  # m above sea level
    @property
    def surface_temperature_k(self) -> float: ...  # K
    @property
    def surface_pressure_hpa(self) -> float: ...  # hPa
    @property
    def lapse_rate_k_per_km(self) -> float: ...  # K/km
    @property
    def tropopause_m(self) -> float: ...  # m above sea level
    @property
    def water_scale_height_m(self) -> float: ...  # m
    @property
    def pwv_mm(self) -> Optional[float]: ...  # mm
    @property
    def surface_relative_humidity_pct(self) -> Optional[float]: ...  # %
    @property
    def inversion(self) -> Optional[InversionDict]: ...
    def to_dict(self) -> Dict[str, Any]: ...

def load_site(path: PathLike) -> SiteConfig: ...
def parse_site(toml_text: str, source_name: str = "<string>") -> SiteConfig: ...
def profile_from_site(
    site: SiteConfig,
    *,
    pwv_mm: Optional[float] = None,  # mm; replaces the site's humidity when given
    layer_count: int = 48,
    top_altitude_m: float = 40000.0,  # m above sea level
) -> AtmosphereProfile: ...

# --- soundings ------------------------------------------------------------------------------

class SoundingLevels(TypedDict):
    height_m: FloatArray  # m above sea level
    pressure_hpa: FloatArray  # hPa
    temperature_k: FloatArray  # K
    vapour_density_kg_m3: FloatArray  # kg/m^3

def profile_from_sounding(
    height_m: ArrayLike,  # m above sea level, increasing
    pressure_hpa: ArrayLike,  # hPa, decreasing
    temperature_k: ArrayLike,  # K
    vapour_density_kg_m3: ArrayLike,  # kg/m^3
    *,
    layer_count: int = 48,
) -> AtmosphereProfile: ...
def read_sounding_csv(path: PathLike) -> SoundingLevels: ...

# --- absorption and small physics helpers ---------------------------------------------------

class GasAttenuation(TypedDict):
    gamma_oxygen_db_per_km: Union[float, FloatArray]  # dB/km, oxygen lines + dry continuum
    gamma_water_db_per_km: Union[float, FloatArray]  # dB/km, water-vapour lines
    gamma_total_db_per_km: Union[float, FloatArray]  # dB/km

def absorption(
    freq_ghz: ArrayLike,  # GHz, 1-1000
    dry_pressure_hpa: ArrayLike,  # hPa, dry-air partial pressure (P.676 convention)
    temperature_k: ArrayLike,  # K
    vapour_density_g_m3: ArrayLike,  # g/m^3; e = rho T / 216.7 hPa
) -> GasAttenuation: ...  # ITU-R P.676-13 Annex 1; broadcasting
def absorption_model_name() -> str: ...
def cloud_liquid_specific_attenuation(
    freq_ghz: ArrayLike, temperature_k: ArrayLike
) -> Union[float, FloatArray]: ...  # (dB/km)/(g/m^3), ITU-R P.840-9; broadcasting
def cloud_liquid_absorption_m2_per_kg(
    freq_ghz: ArrayLike, temperature_k: ArrayLike
) -> Union[float, FloatArray]: ...  # (Np/m)/(kg/m^3) = m^2/kg; broadcasting
def rj_brightness_k(
    freq_ghz: ArrayLike, temperature_k: ArrayLike
) -> Union[float, FloatArray]: ...  # K, Rayleigh-Jeans-equivalent brightness; broadcasting
def planck_brightness_k(
    freq_ghz: ArrayLike, rj_brightness_k: ArrayLike
) -> Union[float, FloatArray]: ...  # K, inverse of rj_brightness_k; broadcasting
def saturation_vapour_pressure_hpa(
    temperature_k: ArrayLike,  # K
    total_pressure_hpa: ArrayLike = 0.0,  # hPa; 0 = pure vapour (no enhancement factor)
    phase: str = "water",  # "water" or "ice"
) -> Union[float, FloatArray]: ...  # hPa, ITU-R P.453-13 eqs. (9)-(10); broadcasting
def vapour_pressure_hpa(
    vapour_density_kg_m3: ArrayLike, temperature_k: ArrayLike
) -> Union[float, FloatArray]: ...  # hPa, ideal gas; broadcasting
def saastamoinen_zenith_hydrostatic_delay_m(
    surface_pressure_hpa: ArrayLike,  # hPa
    latitude_deg: ArrayLike,  # deg
    height_m: ArrayLike,  # m above sea level
) -> Union[float, FloatArray]: ...  # m; broadcasting
def bevis_wet_delay_per_pwv(
    surface_temperature_k: ArrayLike,  # K
    refractivity: str = "thayer_1974",  # or "bevis_1994"
) -> Union[float, FloatArray]: ...  # m of zenith wet delay per m of PWV (~6.5); broadcasting

class StandardLevel(TypedDict):
    temperature_k: Union[float, FloatArray]  # K
    pressure_hpa: Union[float, FloatArray]  # hPa

def us_standard_atmosphere_1976(height_m: ArrayLike) -> StandardLevel: ...  # 0-86000 m
def p835_reference_vapour_density_kg_m3(
    height_m: ArrayLike,
) -> Union[float, FloatArray]: ...  # kg/m^3

# --- radiometers ----------------------------------------------------------------------------

class ChannelDict(TypedDict, total=False):
    name: str
    if_centre_ghz: float  # GHz, required
    bandwidth_ghz: float  # GHz, required
    sideband: str  # "double" (default), "upper" or "lower"
    sideband_ratio: float  # upper / lower gain, default 1
    noise_k: float  # K rms per sample, default 0

class QuadratureDict(TypedDict):
    freq_ghz: FloatArray  # sky frequencies, GHz
    weight: FloatArray  # sums to 1 per channel

class Radiometer:
    """Local oscillator and channels of a radiometer; immutable."""

    def __init__(
        self,
        *,
        name: str = "unnamed radiometer",
        lo_freq_ghz: float,  # GHz
        channels: Sequence[ChannelDict],
        quadrature_points_per_sideband: int = 4,
    ) -> None: ...
    @staticmethod
    def load(path: PathLike) -> Radiometer: ...
    @staticmethod
    def from_toml(toml_text: str, source_name: str = "<string>") -> Radiometer: ...
    @property
    def name(self) -> str: ...
    @property
    def lo_freq_ghz(self) -> float: ...  # GHz
    @property
    def quadrature_points_per_sideband(self) -> int: ...
    @property
    def channels(self) -> List[ChannelDict]: ...
    @property
    def channel_names(self) -> List[str]: ...
    @property
    def if_centre_ghz(self) -> FloatArray: ...  # GHz
    @property
    def bandwidth_ghz(self) -> FloatArray: ...  # GHz
    @property
    def noise_k(self) -> FloatArray: ...  # K
    def __len__(self) -> int: ...
    def quadrature(self) -> List[QuadratureDict]: ...

# --- sky model ------------------------------------------------------------------------------

class SkySpectrum:
    @property
    def freq_ghz(self) -> FloatArray: ...  # GHz
    @property
    def brightness_k(self) -> FloatArray: ...  # K, Planck brightness temperature
    @property
    def rj_brightness_k(self) -> FloatArray: ...  # K, Rayleigh-Jeans-equivalent
    @property
    def opacity_np(self) -> FloatArray: ...  # Np, slant
    @property
    def transmission(self) -> FloatArray: ...  # exp(-opacity_np)
    @property
    def pwv_mm(self) -> float: ...  # mm, zenith
    @property
    def elevation_deg(self) -> float: ...  # deg
    @property
    def model(self) -> str: ...
    def to_dict(self) -> Dict[str, Any]: ...

class ChannelBrightness:
    @property
    def brightness_k(self) -> FloatArray: ...  # K, RJ-equivalent passband average
    @property
    def d_brightness_d_pwv_k_per_mm(self) -> FloatArray: ...  # K per mm of zenith PWV
    @property
    def d_brightness_d_temperature(self) -> FloatArray: ...  # K per K of temperature offset
    @property
    def path_sensitivity_k_per_mm(self) -> FloatArray: ...  # K per mm of slant wet path
    @property
    def pwv_mm(self) -> float: ...  # mm, zenith
    @property
    def elevation_deg(self) -> float: ...  # deg
    @property
    def wet_path_m(self) -> float: ...  # m, slant
    @property
    def d_wet_path_d_pwv_m_per_mm(self) -> float: ...  # m per mm of zenith PWV
    def to_dict(self) -> Dict[str, Any]: ...

class SlantPath:
    @property
    def layer_path_m(self) -> FloatArray: ...  # m, per layer
    @property
    def airmass(self) -> float: ...  # slant / vertical length
    @property
    def wet_path_m(self) -> float: ...  # m
    @property
    def hydrostatic_path_m(self) -> float: ...  # m, modelled layers only
    @property
    def pwv_slant_mm(self) -> float: ...  # mm along the ray
    def to_dict(self) -> Dict[str, Any]: ...

class SkyModel:
    def __init__(
        self,
        *,
        geometry: str = "spherical",  # or "plane_parallel"
        refraction: bool = True,
        cosmic_background_k: float = 2.725,  # K
        refractivity: str = "thayer_1974",  # or "bevis_1994"
        min_elevation_deg: float = 5.0,  # deg
        water_continuum_scale: float = 1.0,  # factor on P.676's water-vapour continuum
    ) -> None: ...
    @property
    def geometry(self) -> str: ...
    @property
    def refraction(self) -> bool: ...
    @property
    def cosmic_background_k(self) -> float: ...  # K
    @property
    def refractivity(self) -> str: ...
    @property
    def min_elevation_deg(self) -> float: ...  # deg
    @property
    def model(self) -> str: ...
    def spectrum(
        self, profile: AtmosphereProfile, freq_ghz: ArrayLike, elevation_deg: float
    ) -> SkySpectrum: ...  # freq_ghz: GHz, number or 1-D; elevation_deg: deg
    def channels(
        self, profile: AtmosphereProfile, radiometer: Radiometer, elevation_deg: float
    ) -> ChannelBrightness: ...
    def slant_path(self, profile: AtmosphereProfile, elevation_deg: float) -> SlantPath: ...

# --- fast model -----------------------------------------------------------------------------

# Status names and codes of FastSkyModel.evaluate_many (wvr.FastModelStatus is built from it):
# OK, PWV_OUT_OF_DOMAIN, ELEVATION_OUT_OF_DOMAIN, LIQUID_OUT_OF_DOMAIN, BUFFER_SIZE_MISMATCH.
FAST_STATUS_CODES: Dict[str, int]

def fast_status_description(code: int) -> str: ...

class FastChannels(TypedDict):
    brightness_k: FloatArray  # K, shape (channels,)
    d_brightness_d_pwv_k_per_mm: FloatArray  # K/mm
    d_brightness_d_temperature: FloatArray  # K/K
    d_brightness_d_liquid_k_per_kg_m2: FloatArray  # K per kg/m^2 of zenith liquid water path

class FastChannelSeries(TypedDict):
    brightness_k: FloatArray  # K, shape (n, channels); NaN where status != 0
    d_brightness_d_pwv_k_per_mm: FloatArray  # K/mm, shape (n, channels)
    d_brightness_d_temperature: FloatArray  # K/K, shape (n, channels)
    d_brightness_d_liquid_k_per_kg_m2: FloatArray  # K per kg/m^2, shape (n, channels)
    status: npt.NDArray[np.int8]  # shape (n,), FastModelStatus codes

class FastSkyModel:
    def __init__(
        self,
        base_profile: AtmosphereProfile,
        radiometer: Radiometer,
        sky_model: Optional[SkyModel] = None,
        *,
        max_pwv_mm: float = 12.0,  # mm
        polynomial_degree: int = 6,
        cloud_base_above_ground_m: float = 1000.0,  # m above the ground
        cloud_thickness_m: float = 1000.0,  # m
        max_liquid_water_path_kg_m2: float = 2.0,  # kg/m^2
    ) -> None: ...
    @property
    def channel_count(self) -> int: ...
    @property
    def layer_count(self) -> int: ...
    @property
    def frequency_count(self) -> int: ...
    @property
    def max_pwv_mm(self) -> float: ...  # mm
    @property
    def polynomial_degree(self) -> int: ...
    @property
    def min_elevation_deg(self) -> float: ...  # deg
    @property
    def cloud_base_above_ground_m(self) -> float: ...  # m above the ground
    @property
    def cloud_thickness_m(self) -> float: ...  # m
    @property
    def max_liquid_water_path_kg_m2(self) -> float: ...  # kg/m^2
    def evaluate(
        self, pwv_mm: float, elevation_deg: float, liquid_water_path_kg_m2: float = 0.0
    ) -> FastChannels: ...  # raises WvrValueError outside the domain
    def evaluate_many(
        self,
        pwv_mm: ArrayLike,  # mm, number or 1-D
        elevation_deg: ArrayLike,  # deg, number or 1-D
        liquid_water_path_kg_m2: ArrayLike = 0.0,  # kg/m^2, number or 1-D
    ) -> FastChannelSeries: ...  # never raises for out-of-domain samples
    def wet_path_per_pwv_m_per_mm(
        self, elevation_deg: ArrayLike
    ) -> Union[float, FloatArray]: ...  # m/mm; broadcasting
