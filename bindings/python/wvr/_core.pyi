"""Signatures and units of wvr._core, the compiled part of the wvr package.

Import the public names from ``wvr``; this module is private. Every argument and result carries
its unit in its name. Functions documented as "broadcasting" accept numbers or numpy arrays and
return a float for all-scalar input, an array of the broadcast shape otherwise. Bad input raises
WvrValueError (a WvrError and a ValueError) whose message names the field and its value.
"""

import os
from collections.abc import Mapping
from typing import Any, Dict, List, Optional, Sequence, Tuple, TypedDict, Union, overload

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

class WvrKeyError(WvrError, KeyError):
    """A name that is not there, e.g. a dataset a result group does not hold."""

class WvrNothingUsable(WvrError):
    """Valid input holding nothing a stage can use; the message says why, with counts."""

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
    *,
    absorption_model: str = "p676",  # or "r17" (Rosenkranz 2017 water vapour)
) -> GasAttenuation: ...  # ITU-R P.676-13 Annex 1 (or R17 water); broadcasting
def absorption_model_name(absorption_model: str = "p676") -> str: ...
def absorption_model_keys() -> List[str]: ...
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
        water_continuum_scale: float = 1.0,  # factor on the model's water-vapour continuum
        absorption_model: str = "p676",  # or "r17" (Rosenkranz 2017 water vapour)
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

# --- nights ---------------------------------------------------------------------------------
# Shapes: A antennas, T radiometer samples, C channels, W weather samples, P phase rows.

UInt8Array = npt.NDArray[np.uint8]
Int32Array = npt.NDArray[np.int32]

class ScanDict(TypedDict):
    start_s: float  # s after time_epoch_utc
    stop_s: float  # s
    intent: str  # "calibrator" or "target"
    source: str
    obs_freq_ghz: float  # GHz, the array's sky frequency

class WeatherDict(TypedDict):
    time_s: FloatArray  # s, [W], strictly increasing
    temperature_k: FloatArray  # K, [W]
    pressure_hpa: FloatArray  # hPa, [W]
    relative_humidity_pct: FloatArray  # %, [W]

class CalibratorPhasesDict(TypedDict):
    time_s: FloatArray  # s, [P], non-decreasing
    antenna_pair: Int32Array  # [P, 2]
    phase_rad: FloatArray  # rad, [P]: phase(pair[:, 1]) - phase(pair[:, 0])
    freq_ghz: FloatArray  # GHz, [P]

class EpisodeDict(TypedDict):
    start_s: float  # s
    stop_s: float  # s
    antenna: int  # antenna index or -1 for the whole array
    label: str

class TruthDict(TypedDict, total=False):
    wet_path_m: FloatArray  # m, [A, T] (required)
    dry_path_m: FloatArray  # m, [A, T] (required)
    pwv_mm: FloatArray  # mm, [A, T] (required)
    episodes: List[EpisodeDict]

# (array, units) or (array, units, attributes)
DatasetSpec = Union[Tuple[ArrayLike, str], Tuple[ArrayLike, str, Dict[str, str]]]

class ResultGroup(Mapping[str, np.ndarray]):
    """Read-only mapping dataset name -> numpy array of one processing stage
    (__getitem__, __contains__ and __iter__ as a Mapping's)."""

    def __init__(
        self,
        stage: str,
        datasets: Dict[str, DatasetSpec],
        attributes: Optional[Dict[str, str]] = None,
    ) -> None: ...
    @property
    def stage(self) -> str: ...
    @property
    def attributes(self) -> Dict[str, str]: ...
    @property
    def units(self) -> Dict[str, str]: ...  # name -> units ("1" = dimensionless)
    @property
    def dataset_attributes(self) -> Dict[str, Dict[str, str]]: ...
    def get(self, name: str, default: Any = None) -> Any: ...
    def __len__(self) -> int: ...
    def keys(self) -> List[str]: ...
    def values(self) -> List[np.ndarray]: ...
    def items(self) -> List[Tuple[str, np.ndarray]]: ...
    def to_dict(self) -> Dict[str, Tuple[np.ndarray, str, Dict[str, str]]]: ...

class Night:
    """One observing night; immutable, arrays are read-only views."""

    @staticmethod
    def from_arrays(
        *,
        time_epoch_utc: str,  # "YYYY-MM-DDThh:mm:ssZ"
        antenna_names: Sequence[str],  # [A]
        position_enu_m: ArrayLike,  # m, [A, 3] east, north, up
        radiometer: Radiometer,
        time_s: ArrayLike,  # s, [T], strictly increasing
        brightness_k: ArrayLike,  # K, [A, T, C]
        elevation_deg: ArrayLike,  # deg, [A, T]
        azimuth_deg: ArrayLike,  # deg, [A, T]
        valid: Optional[ArrayLike] = None,  # [A, T] bool or 0/1; default: all channels finite
        radiometer_ids: Optional[Sequence[str]] = None,  # [A], default empty
        reference_latitude_deg: float = 0.0,  # deg
        reference_longitude_deg: float = 0.0,  # deg
        reference_height_m: float = 0.0,  # m above the ellipsoid
        scans: Optional[Sequence[ScanDict]] = None,
        weather: Optional[WeatherDict] = None,
        calibrator_phases: Optional[CalibratorPhasesDict] = None,
        truth: Optional[TruthDict] = None,
        results: Union[None, Dict[str, ResultGroup], Sequence[ResultGroup]] = None,
    ) -> Night: ...  # raises WvrValueError naming the dataset path
    def to_dict(self) -> Dict[str, Any]: ...  # from_arrays keyword arguments
    def with_result_group(self, group: ResultGroup, *, replace: bool = False) -> Night: ...
    @property
    def time_epoch_utc(self) -> str: ...
    @property
    def antenna_count(self) -> int: ...
    @property
    def time_count(self) -> int: ...
    @property
    def channel_count(self) -> int: ...
    @property
    def antenna_names(self) -> List[str]: ...
    @property
    def radiometer_ids(self) -> List[str]: ...
    @property
    def position_enu_m(self) -> FloatArray: ...  # m, [A, 3]
    @property
    def reference_latitude_deg(self) -> float: ...  # deg
    @property
    def reference_longitude_deg(self) -> float: ...  # deg
    @property
    def reference_height_m(self) -> float: ...  # m
    @property
    def radiometer(self) -> Radiometer: ...
    @property
    def channel_names(self) -> List[str]: ...
    @property
    def time_s(self) -> FloatArray: ...  # s, [T]
    @property
    def brightness_k(self) -> FloatArray: ...  # K, [A, T, C]
    @property
    def valid(self) -> UInt8Array: ...  # [A, T], 1 = usable
    @property
    def elevation_deg(self) -> FloatArray: ...  # deg, [A, T]
    @property
    def azimuth_deg(self) -> FloatArray: ...  # deg, [A, T]
    @property
    def scans(self) -> List[ScanDict]: ...
    @property
    def weather(self) -> WeatherDict: ...
    @property
    def calibrator_phases(self) -> CalibratorPhasesDict: ...
    @property
    def truth(self) -> Optional[TruthDict]: ...
    @property
    def results(self) -> Dict[str, ResultGroup]: ...

def read_night(path: PathLike, *, threads: int = 0) -> Night: ...
def write_night(
    night: Night,
    path: PathLike,
    *,
    overwrite: bool = False,
    compression_level: int = 1,
    threads: int = 0,
) -> None: ...
@overload
def add_result_group(
    input_path: PathLike,
    output_path: PathLike,
    group: ResultGroup,
    *,
    overwrite: bool = False,
    replace: bool = False,
    compression_level: int = 1,
    threads: int = 0,
) -> None: ...
@overload
def add_result_group(
    input_path: PathLike,
    output_path: PathLike,
    stage: str,
    datasets: Dict[str, DatasetSpec],
    attributes: Optional[Dict[str, str]] = None,
    *,
    overwrite: bool = False,
    replace: bool = False,
    compression_level: int = 1,
    threads: int = 0,
) -> None: ...

class GapDict(TypedDict):
    start_s: float  # s, last sample before the gap
    stop_s: float  # s, first sample after it

class NightSummaryDict(TypedDict):
    time_epoch_utc: str
    antenna_count: int
    channel_count: int
    channel_names: List[str]
    time_count: int
    start_s: float  # s
    stop_s: float  # s
    duration_s: float  # s
    median_cadence_s: float  # s, 0 with fewer than 2 samples
    gaps: List[GapDict]
    valid_fraction: float
    antenna_names: List[str]
    antenna_valid_fraction: FloatArray  # [A]
    calibrator_scan_count: int
    target_scan_count: int
    weather_count: int
    calibrator_phase_count: int
    has_truth: bool
    result_stages: List[str]

def summarize_night(night: Night) -> NightSummaryDict: ...
def format_night_summary(night_or_summary: Union[Night, NightSummaryDict]) -> str: ...

# --- scenarios and the simulator ------------------------------------------------------------

class CloudDict(TypedDict):
    start_s: float  # s
    stop_s: float  # s
    liquid_water_path_kg_m2: float  # kg/m^2
    ramp_s: float  # s

class FaultDict(TypedDict):
    antenna: int
    kind: str  # spike, gain_drift, stuck_channel, dead_channel, dropout
    start_s: float  # s
    stop_s: float  # s
    channel: int  # -1 = every channel
    magnitude: float

class Scenario:
    """A synthetic observing night read from a scenario TOML file; immutable."""

    @property
    def name(self) -> str: ...
    @property
    def seed(self) -> int: ...
    @property
    def start_utc(self) -> str: ...
    @property
    def duration_s(self) -> float: ...  # s
    @property
    def integration_s(self) -> float: ...  # s
    @property
    def time_count(self) -> int: ...
    @property
    def antenna_count(self) -> int: ...
    @property
    def layout(self) -> str: ...  # compact, extended, random or explicit
    @property
    def site(self) -> SiteConfig: ...
    @property
    def radiometer(self) -> Radiometer: ...
    @property
    def pwv_mm(self) -> float: ...  # mm
    @property
    def pwv_drift_mm_per_hour(self) -> float: ...  # mm/h
    @property
    def water_continuum_scale(self) -> float: ...
    @property
    def true_sky(self) -> Dict[str, str]: ...
    @property
    def obs_freq_ghz(self) -> float: ...  # GHz
    @property
    def clouds(self) -> List[CloudDict]: ...
    @property
    def faults(self) -> List[FaultDict]: ...
    def with_overrides(
        self,
        *,
        seed: Optional[int] = None,
        duration_s: Optional[float] = None,  # s
        antenna_count: Optional[int] = None,  # drops faults of removed antennas
    ) -> Scenario: ...

def load_scenario(path: PathLike) -> Scenario: ...
def parse_scenario(
    toml_text: str, source_name: str = "<string>", base_directory: Optional[PathLike] = None
) -> Scenario: ...
def simulate_night(scenario: Scenario, *, threads: int = 0) -> Night: ...  # releases the GIL

# --- retrieval ------------------------------------------------------------------------------

class PriorDict(TypedDict):
    mean: float
    sigma: float  # > 0

Prior = Union[None, Tuple[float, float], PriorDict]

class RetrievalResult:
    @property
    def status(self) -> str: ...  # converged, no convergence, invalid input, out of domain, ...
    @property
    def ok(self) -> bool: ...
    @property
    def message(self) -> str: ...
    @property
    def pwv_mm(self) -> float: ...  # mm, zenith
    @property
    def pwv_sigma_mm(self) -> float: ...  # mm
    @property
    def liquid_kg_m2(self) -> float: ...  # kg/m^2
    @property
    def liquid_sigma_kg_m2(self) -> float: ...  # kg/m^2
    @property
    def temperature_offset_k(self) -> float: ...  # K
    @property
    def temperature_offset_sigma_k(self) -> float: ...  # K
    @property
    def gain(self) -> float: ...
    @property
    def channel_offsets_k(self) -> FloatArray: ...  # K, empty unless fitted
    @property
    def parameter_names(self) -> List[str]: ...
    @property
    def covariance(self) -> FloatArray: ...  # [p, p]
    @property
    def chi2(self) -> float: ...
    @property
    def dof(self) -> int: ...
    @property
    def chi2_per_dof(self) -> float: ...
    @property
    def iterations(self) -> int: ...
    @property
    def model_brightness_k(self) -> FloatArray: ...  # K, [C]
    def brief_report(self) -> str: ...
    def to_dict(self) -> Dict[str, Any]: ...

class Retriever:
    def __init__(
        self,
        fast_model: FastSkyModel,
        *,
        fit_liquid: bool = False,
        fit_temperature_offset: bool = False,
        calibration: str = "none",  # or "channel_offsets", "common_gain"
        pwv_prior_mm: Prior = None,  # mm
        liquid_prior_kg_m2: Prior = None,  # kg/m^2
        temperature_offset_prior_k: Prior = None,  # K
        channel_offset_prior_sigma_k: float = 1.0,  # K
        gain_prior_sigma: float = 0.05,
        temperature_offset_limit_k: float = 15.0,  # K
        max_iterations: int = 50,
    ) -> None: ...
    def fit(
        self,
        brightness_k: ArrayLike,  # K, [C]
        noise_k: ArrayLike,  # K, [C], > 0
        elevation_deg: float,  # deg
        initial_pwv_mm: float = -1.0,  # mm, < 0: coarse scan
        temperature_offset_k: float = 0.0,  # K, known offset of the profile temperature
    ) -> RetrievalResult: ...  # never raises for bad data
    @property
    def options(self) -> Dict[str, Any]: ...

# PwvTable status codes and the retrieval flag bits reach Python through wvr.PwvTableStatus,
# wvr.RetrievalFlag and wvr.RETRIEVAL_UNUSABLE, built by the package from private names of
# this module.

class PwvInversion(TypedDict):
    status: int  # PwvTableStatus code; the floats are NaN unless OK
    pwv_mm: float  # mm
    pwv_sigma_mm: float  # mm
    wet_path_per_pwv_m_per_mm: float  # m of slant wet path per mm of zenith PWV
    chi2: float  # dof = C - 1
    d_brightness_d_pwv_k_per_mm: FloatArray  # K/mm, [C]

class PwvInversionSeries(TypedDict):
    status: npt.NDArray[np.int8]  # [n]
    pwv_mm: FloatArray  # mm, [n]
    pwv_sigma_mm: FloatArray  # mm, [n]
    wet_path_per_pwv_m_per_mm: FloatArray  # m/mm, [n]
    chi2: FloatArray  # [n]
    d_brightness_d_pwv_k_per_mm: FloatArray  # K/mm, [n, C]

class PwvTable:
    def __init__(
        self,
        site: SiteConfig,
        radiometer: Radiometer,
        *,
        min_pwv_mm: float = 0.04,  # mm
        max_pwv_mm: float = 11.0,  # mm
        pwv_points: int = 96,
        min_elevation_deg: float = 14.0,  # deg
        airmass_points: int = 96,
        min_surface_temperature_k: float = 255.0,  # K
        max_surface_temperature_k: float = 285.0,  # K
        temperature_step_k: float = 1.0,  # K
        sky_model: Optional[SkyModel] = None,
    ) -> None: ...
    @property
    def channel_count(self) -> int: ...
    @property
    def options(self) -> Dict[str, float]: ...
    def invert(
        self,
        brightness_k: ArrayLike,  # K, [C]
        noise_k: ArrayLike,  # K, [C]
        elevation_deg: float,  # deg
        surface_temperature_k: float,  # K
    ) -> PwvInversion: ...
    def invert_many(
        self,
        brightness_k: ArrayLike,  # K, [n, C]
        noise_k: ArrayLike,  # K, [C] or [n, C]
        elevation_deg: ArrayLike,  # deg, number or [n]
        surface_temperature_k: ArrayLike,  # K, number or [n]
    ) -> PwvInversionSeries: ...  # equals invert per sample; releases the GIL

def describe_retrieval_flags(flags: int) -> str: ...

class NightRetrievalSummary(TypedDict):
    antennas: int
    samples: int  # antennas x samples per antenna
    samples_flagged: int
    pwv_median_mm: float  # mm
    pwv_p10_mm: float  # mm
    pwv_p90_mm: float  # mm
    chi2_per_dof_median: float
    path_sensitivity_k_per_mm: FloatArray  # K/mm, [C]

class NightRetrieval:
    """Read-only arrays: [A, T] per sample, [A, W] and [A, W, C] per coefficient window."""

    @property
    def antennas(self) -> int: ...
    @property
    def samples(self) -> int: ...  # per antenna
    @property
    def channels(self) -> int: ...
    @property
    def windows(self) -> int: ...
    @property
    def seconds(self) -> float: ...  # s, wall time
    @property
    def pwv_mm(self) -> FloatArray: ...  # mm, [A, T]
    @property
    def pwv_sigma_mm(self) -> FloatArray: ...  # mm, [A, T]
    @property
    def chi2_per_dof(self) -> FloatArray: ...  # [A, T]
    @property
    def flags(self) -> UInt8Array: ...  # [A, T], RetrievalFlag bits
    @property
    def window_start_s(self) -> FloatArray: ...  # s, [W]
    @property
    def window_stop_s(self) -> FloatArray: ...  # s, [W]
    @property
    def window_pwv_mm(self) -> FloatArray: ...  # mm, [A, W]
    @property
    def window_pwv_sigma_mm(self) -> FloatArray: ...  # mm, [A, W]
    @property
    def window_chi2_per_dof(self) -> FloatArray: ...  # [A, W]
    @property
    def window_liquid_kg_m2(self) -> FloatArray: ...  # kg/m^2, [A, W]
    @property
    def window_flags(self) -> UInt8Array: ...  # [A, W]
    @property
    def path_sensitivity_k_per_mm(self) -> FloatArray: ...  # K/mm, [A, W, C]
    @property
    def combination_weight_mm_per_k(self) -> FloatArray: ...  # mm/K, [A, W, C]
    @property
    def path_noise_mm(self) -> FloatArray: ...  # mm, [A, W]
    @property
    def window_model_brightness_k(self) -> FloatArray: ...  # K, [A, W, C]
    @property
    def window_wet_path_mm(self) -> FloatArray: ...  # mm, [A, W]
    @property
    def window_elevation_deg(self) -> FloatArray: ...  # deg, [A, W]
    @property
    def table_min_elevation_deg(self) -> float: ...  # deg; NaN when not recorded
    def scalars(self) -> dict[str, float | bool]: ...
    def summary(self) -> NightRetrievalSummary: ...
    def to_result_group(self, night: Night) -> ResultGroup: ...

def retrieve_night(
    night: Night,
    site: Optional[SiteConfig] = None,  # None: the night's own site record, or defaults
    *,
    coefficient_window_s: float = 60.0,  # s
    fit_liquid: bool = False,
    fit_temperature_offset: bool = False,
    threads: int = 0,  # 0 = all cores
    absorption_model: str = "p676",  # or "r17"
) -> NightRetrieval: ...  # releases the GIL

class StructureFunctionEstimate:
    @property
    def pair_count(self) -> List[int]: ...
    @property
    def separation(self) -> FloatArray: ...
    @property
    def value_m2(self) -> FloatArray: ...

class BrokenPowerLawFit:
    @property
    def amplitude_m2(self) -> float: ...
    @property
    def break_m(self) -> float: ...
    @property
    def break_sigma_m(self) -> float: ...
    def brief_report(self) -> str: ...
    def evaluate_m2(self, separation_m: Union[float, Sequence[float], FloatArray]) -> FloatArray: ...
    @property
    def has_break(self) -> bool: ...
    @property
    def message(self) -> str: ...
    @property
    def ok(self) -> bool: ...
    @property
    def points_used(self) -> int: ...
    @property
    def saturation_m2(self) -> float: ...
    @property
    def slope_at_bound(self) -> bool: ...
    @property
    def slope_long(self) -> float: ...
    @property
    def slope_long_sigma(self) -> float: ...
    @property
    def slope_short(self) -> float: ...
    @property
    def slope_short_sigma(self) -> float: ...
    @property
    def transition_width(self) -> float: ...

class RegimeSlope:
    @property
    def measured(self) -> bool: ...
    @property
    def message(self) -> str: ...
    @property
    def points(self) -> int: ...
    @property
    def slope(self) -> float: ...
    @property
    def slope_sigma(self) -> float: ...

class SlabThicknessFit:
    def brief_report(self) -> str: ...
    @property
    def constraint(self) -> str: ...
    def evaluate_m2(self, separation_m: Union[float, Sequence[float], FloatArray]) -> FloatArray: ...
    @property
    def message(self) -> str: ...
    @property
    def ok(self) -> bool: ...
    @property
    def outer_scale_m(self) -> float: ...
    @property
    def path_m2_at_thickness(self) -> float: ...
    @property
    def thick(self) -> RegimeSlope: ...
    @property
    def thickness_high_m(self) -> float: ...
    @property
    def thickness_low_m(self) -> float: ...
    @property
    def thickness_m(self) -> float: ...
    @property
    def thin(self) -> RegimeSlope: ...

class NightSlabThickness:
    def brief_report(self) -> str: ...
    @property
    def fit(self) -> SlabThicknessFit: ...
    @property
    def jackknife_high_m(self) -> float: ...
    @property
    def jackknife_low_m(self) -> float: ...
    @property
    def log_thickness_sigma(self) -> float: ...
    @property
    def profile_high_m(self) -> float: ...
    @property
    def profile_low_m(self) -> float: ...
    @property
    def segment_thickness_m(self) -> FloatArray: ...

class FittedStructureFunction:
    @property
    def fit(self) -> BrokenPowerLawFit: ...
    @property
    def fitted(self) -> bool: ...
    @property
    def measured(self) -> bool: ...
    @property
    def message(self) -> str: ...
    @property
    def points(self) -> StructureFunctionEstimate: ...
    @property
    def source(self) -> str: ...

class RadiometerTemporalStructure:
    @property
    def baseline_length_m(self) -> FloatArray: ...
    @property
    def baselines(self) -> List[List[int]]: ...
    @property
    def lag_s(self) -> FloatArray: ...
    @property
    def message(self) -> str: ...
    @property
    def ok(self) -> bool: ...
    @property
    def source(self) -> str: ...
    @property
    def structure_m2(self) -> List[FloatArray]: ...

class WindEstimate:
    def brief_report(self) -> str: ...
    @property
    def direction_sigma_deg(self) -> float: ...
    @property
    def direction_to_deg(self) -> float: ...
    @property
    def east_m_s(self) -> float: ...
    @property
    def message(self) -> str: ...
    @property
    def north_m_s(self) -> float: ...
    @property
    def ok(self) -> bool: ...
    @property
    def pairs_used(self) -> int: ...
    @property
    def speed_m_s(self) -> float: ...
    @property
    def speed_sigma_m_s(self) -> float: ...

class CycleTimeSolution:
    @property
    def cycle_time_s(self) -> float: ...
    @property
    def effective_separation_m(self) -> float: ...
    @property
    def floor_deg(self) -> float: ...
    @property
    def message(self) -> str: ...
    @property
    def saturation_deg(self) -> float: ...
    @property
    def status(self) -> str: ...

class FastSwitchingAdvice:
    def brief_report(self) -> str: ...
    @property
    def corrected(self) -> Optional[CycleTimeSolution]: ...
    @property
    def cycle_time_gain(self) -> float: ...
    @property
    def cycle_time_s(self) -> FloatArray: ...
    @property
    def effective_separation_m(self) -> FloatArray: ...
    @property
    def freq_ghz(self) -> float: ...
    @property
    def residual_corrected_deg(self) -> FloatArray: ...
    @property
    def residual_uncorrected_deg(self) -> FloatArray: ...
    @property
    def target_rms_deg(self) -> float: ...
    @property
    def uncorrected(self) -> CycleTimeSolution: ...

class SwitchingAdvice:
    @property
    def advice(self) -> Optional[FastSwitchingAdvice]: ...
    @property
    def calibrator_separation_deg(self) -> float: ...
    @property
    def layer_height_m(self) -> float: ...
    @property
    def message(self) -> str: ...
    @property
    def notes(self) -> List[str]: ...
    @property
    def ok(self) -> bool: ...
    @property
    def residual_used(self) -> bool: ...
    @property
    def wet_model(self) -> str: ...

class NightTurbulence:
    @property
    def after(self) -> FittedStructureFunction: ...
    @property
    def after_by_lag(self) -> FittedStructureFunction: ...
    @property
    def after_by_lag_lag_s(self) -> FloatArray: ...
    @property
    def before(self) -> FittedStructureFunction: ...
    @property
    def before_by_lag(self) -> FittedStructureFunction: ...
    @property
    def before_by_lag_lag_s(self) -> FloatArray: ...
    @property
    def radiometer(self) -> FittedStructureFunction: ...
    @property
    def radiometer_by_time(self) -> RadiometerTemporalStructure: ...
    @property
    def radiometer_noise_subtracted_m2_mean(self) -> float: ...
    @property
    def slab(self) -> Optional[NightSlabThickness]: ...
    @property
    def switching(self) -> SwitchingAdvice: ...
    @property
    def wind(self) -> WindEstimate: ...

class AntennaPaths:
    @property
    def antennas(self) -> int: ...
    @property
    def flags(self) -> UInt8Array: ...
    @property
    def path_mm(self) -> FloatArray: ...
    @property
    def time_s(self) -> FloatArray: ...

class CalibrationResult:
    @property
    def antenna_scale(self) -> FloatArray: ...
    @property
    def antenna_scale_sigma(self) -> FloatArray: ...
    @property
    def antenna_scale_statistic(self) -> float: ...
    @property
    def antenna_scale_threshold(self) -> float: ...
    def brief_report(self) -> str: ...
    @property
    def message(self) -> str: ...
    @property
    def ok(self) -> bool: ...
    @property
    def per_antenna_scale(self) -> bool: ...
    @property
    def rows_skipped(self) -> int: ...
    @property
    def rows_used(self) -> int: ...
    @property
    def scale(self) -> float: ...
    @property
    def scale_sigma(self) -> float: ...
    def scalars(self) -> dict[str, float | bool]: ...
    @property
    def segment_scale(self) -> FloatArray: ...
    @property
    def segment_scale_sigma(self) -> FloatArray: ...
    @property
    def segment_start_s(self) -> FloatArray: ...
    @property
    def status(self) -> str: ...

class BaselineMetrics:
    @property
    def antenna_a(self) -> int: ...
    @property
    def antenna_b(self) -> int: ...
    @property
    def coherence_after(self) -> float: ...
    @property
    def coherence_before(self) -> float: ...
    @property
    def improvement_factor(self) -> float: ...
    @property
    def rms_after_deg(self) -> float: ...
    @property
    def rms_before_deg(self) -> float: ...
    @property
    def samples(self) -> int: ...

class AntennaMetrics:
    @property
    def coherence_after(self) -> float: ...
    @property
    def coherence_before(self) -> float: ...
    @property
    def improvement_factor(self) -> float: ...
    @property
    def rms_after_deg(self) -> float: ...
    @property
    def rms_before_deg(self) -> float: ...
    @property
    def samples(self) -> int: ...

class CorrectionMetrics:
    @property
    def antenna_phase_rms_after_deg(self) -> FloatArray: ...
    @property
    def antenna_phase_rms_before_deg(self) -> FloatArray: ...
    @property
    def antennas(self) -> List[AntennaMetrics]: ...
    @property
    def baselines(self) -> List[BaselineMetrics]: ...
    @property
    def coherence_after(self) -> float: ...
    @property
    def coherence_before(self) -> float: ...
    @property
    def corrected_phase_rad(self) -> FloatArray: ...
    @property
    def improvement_factor(self) -> float: ...
    @property
    def phase_rms_after_deg(self) -> float: ...
    @property
    def phase_rms_before_deg(self) -> float: ...

class PhaseCorrections:
    @property
    def antenna_scale(self) -> FloatArray: ...
    @property
    def flags(self) -> UInt8Array: ...
    @property
    def obs_freq_ghz(self) -> float: ...
    @property
    def path_mm(self) -> FloatArray: ...
    @property
    def phase_correction_rad(self) -> FloatArray: ...
    @property
    def phase_per_path(self) -> float: ...
    @property
    def time_s(self) -> FloatArray: ...
    @property
    def path_predicted(self) -> UInt8Array: ...  # [antenna, time] 0 measured, 1 neighbours, 2 frozen flow
    @property
    def predicted_expected_residual_mm(self) -> FloatArray: ...  # mm, [antenna]; NaN: none

class PredictedPaths:
    @property
    def method(self) -> str: ...  # "neighbours" | "frozen_flow"
    @property
    def paths(self) -> AntennaPaths: ...
    @property
    def sample_method(self) -> UInt8Array: ...  # [antenna, time] 0 measured, 1 neighbours, 2 frozen flow
    @property
    def predicted_samples(self) -> List[int]: ...
    @property
    def frozen_flow_samples(self) -> List[int]: ...
    @property
    def expected_residual_mm(self) -> FloatArray: ...  # mm, [antenna]; NaN: none predicted
    @property
    def mean_donors(self) -> FloatArray: ...
    @property
    def structure_thickness_m(self) -> float: ...  # m; 0: a power law was used
    @property
    def wind_speed_m_s(self) -> float: ...
    @property
    def wind_direction_to_deg(self) -> float: ...
    @property
    def message(self) -> str: ...
    def any(self) -> bool: ...
    def brief_report(self, night: Night) -> str: ...

class PredictedAntennaResidual:
    @property
    def antenna(self) -> int: ...
    @property
    def predicted_samples(self) -> int: ...
    @property
    def frozen_flow_samples(self) -> int: ...
    @property
    def expected_residual_mm(self) -> float: ...  # mm
    @property
    def expected_residual_deg(self) -> float: ...  # deg at the summary's frequency
    @property
    def expected_phase_rms_after_deg(self) -> float: ...  # deg
    @property
    def phase_rms_after_deg(self) -> float: ...  # deg, NaN without calibrator samples

class PathPredictionSummary:
    @property
    def method(self) -> str: ...
    @property
    def message(self) -> str: ...
    @property
    def freq_ghz(self) -> float: ...
    @property
    def healthy_phase_rms_after_deg(self) -> float: ...  # deg, median over healthy antennas
    @property
    def healthy_antennas(self) -> int: ...
    @property
    def antennas(self) -> List[PredictedAntennaResidual]: ...

class WindowDiagnosis:
    @property
    def antenna_faults(self) -> UInt8Array: ...
    @property
    def calibrator(self) -> bool: ...
    @property
    def chi2_per_dof(self) -> float: ...
    @property
    def correlation(self) -> float: ...
    @property
    def floor_deg(self) -> float: ...
    @property
    def improvement_factor(self) -> float: ...
    @property
    def inherited(self) -> bool: ...
    @property
    def radiometer_path_rms_um(self) -> float: ...
    @property
    def reason(self) -> str: ...
    @property
    def rms_after_deg(self) -> float: ...
    @property
    def rms_before_deg(self) -> float: ...
    @property
    def slope(self) -> float: ...
    @property
    def start_s(self) -> float: ...
    @property
    def stop_s(self) -> float: ...
    @property
    def verdict(self) -> str: ...
    @property
    def correction_usable(self) -> bool: ...  # corrected, or a quiet sky

class DiagnosisThresholds:
    def __init__(self) -> None: ...
    @property
    def cloud_antenna_fraction(self) -> float: ...
    @cloud_antenna_fraction.setter
    def cloud_antenna_fraction(self, value: float) -> None: ...
    @property
    def cloud_chi2_per_dof(self) -> float: ...
    @cloud_chi2_per_dof.setter
    def cloud_chi2_per_dof(self, value: float) -> None: ...
    @property
    def dry_floor_ratio(self) -> float: ...
    @dry_floor_ratio.setter
    def dry_floor_ratio(self, value: float) -> None: ...
    @property
    def fault_chi2_ratio(self) -> float: ...
    @fault_chi2_ratio.setter
    def fault_chi2_ratio(self, value: float) -> None: ...
    @property
    def fault_residual_ratio(self) -> float: ...
    @fault_residual_ratio.setter
    def fault_residual_ratio(self, value: float) -> None: ...
    @property
    def fault_array_fraction(self) -> float: ...
    @fault_array_fraction.setter
    def fault_array_fraction(self, value: float) -> None: ...
    @property
    def systematic_window_s(self) -> float: ...
    @systematic_window_s.setter
    def systematic_window_s(self, value: float) -> None: ...
    @property
    def fault_unusable_fraction(self) -> float: ...
    @fault_unusable_fraction.setter
    def fault_unusable_fraction(self, value: float) -> None: ...
    @property
    def quiet_floor_ratio(self) -> float: ...
    @quiet_floor_ratio.setter
    def quiet_floor_ratio(self, value: float) -> None: ...
    @property
    def scale_min_correlation(self) -> float: ...
    @scale_min_correlation.setter
    def scale_min_correlation(self, value: float) -> None: ...
    @property
    def scale_tolerance(self) -> float: ...
    @scale_tolerance.setter
    def scale_tolerance(self, value: float) -> None: ...
    @property
    def spike_chi2_per_dof(self) -> float: ...
    @spike_chi2_per_dof.setter
    def spike_chi2_per_dof(self, value: float) -> None: ...
    @property
    def spike_fraction(self) -> float: ...
    @spike_fraction.setter
    def spike_fraction(self, value: float) -> None: ...
    @property
    def stuck_noise_fraction(self) -> float: ...
    @stuck_noise_fraction.setter
    def stuck_noise_fraction(self, value: float) -> None: ...
    def to_dict(self) -> Dict[str, float]: ...
    def validate(self) -> None: ...

class NightDiagnosis:
    @property
    def antenna_names(self) -> List[str]: ...
    @property
    def notes(self) -> List[str]: ...
    @property
    def thresholds(self) -> DiagnosisThresholds: ...
    @property
    def windows(self) -> List[WindowDiagnosis]: ...

class ResolvedSite:
    @property
    def description(self) -> str: ...
    @property
    def site(self) -> SiteConfig: ...
    @property
    def source(self) -> str: ...

class NightProcessingResult:
    @property
    def calibration(self) -> Optional[CalibrationResult]: ...
    @property
    def calibration_reused(self) -> bool: ...
    @property
    def corrections(self) -> Optional[PhaseCorrections]: ...
    @property
    def diagnosis(self) -> Optional[NightDiagnosis]: ...
    @property
    def last_stage(self) -> str: ...
    @property
    def metrics(self) -> Optional[CorrectionMetrics]: ...
    @property
    def notes(self) -> List[str]: ...
    @property
    def obs_freq_ghz(self) -> Optional[float]: ...
    @property
    def obs_freq_source(self) -> Optional[str]: ...
    @property
    def paths(self) -> AntennaPaths: ...
    @property
    def path_prediction(self) -> Optional[PredictedPaths]: ...
    def path_prediction_summary(
        self, freq_ghz: Optional[float] = None  # GHz; None: the observing frequency
    ) -> Optional[PathPredictionSummary]: ...
    def phase_per_path(self, freq_ghz: float) -> float: ...  # dimensionless
    @property
    def result_groups(self) -> List[ResultGroup]: ...
    @property
    def retrieval(self) -> NightRetrieval: ...
    @property
    def retrieval_reused(self) -> bool: ...
    @property
    def site(self) -> ResolvedSite: ...
    @property
    def turbulence(self) -> Optional[NightTurbulence]: ...

def radiometer_paths(night: Night, retrieval: NightRetrieval) -> AntennaPaths: ...

def solve_scaling(
    night: Night,
    retrieval: NightRetrieval,
    site: Optional[SiteConfig] = None,  # None: the night's own site
    *,
    per_antenna_scale: Optional[bool] = None,
    antenna_scale_prior_sigma: float = 0.1,
    segment_s: float = 0.0,  # s; > 0: one scale per segment
    reference_antenna: int = 0,
) -> CalibrationResult: ...  # releases the GIL

def correct_night(
    night: Night,
    retrieval: NightRetrieval,
    site: Optional[SiteConfig] = None,  # None: the night's own site
    *,
    antenna_scale: Union[None, float, Sequence[float], FloatArray] = None,
    obs_freq_ghz: Optional[float] = None,  # GHz; default: the night's scans'
) -> Tuple[PhaseCorrections, CorrectionMetrics]: ...  # releases the GIL

def process_night(
    night: Night,
    *,
    site: Optional[SiteConfig] = None,  # None: the night's own site record, or defaults
    window_s: Optional[float] = None,  # s; None: the stored retrieval's, or 60
    fit_liquid: bool = False,
    fit_temperature: bool = False,
    per_antenna_scale: Optional[bool] = None,
    antenna_scale_prior_sigma: float = 0.1,
    segment_s: float = 0.0,  # s
    reference_antenna: int = 0,
    obs_freq_ghz: Optional[float] = None,  # GHz; None: the night's scans'
    thresholds: Optional[DiagnosisThresholds] = None,
    advice_layer_height_m: float = 1000.0,  # m
    advice_separation_deg: float = 2.0,  # deg
    advice_target_rms_deg: float = 30.0,  # deg
    last_stage: str = "turbulence",  # retrieval | calibration | correction | diagnosis | turbulence
    reuse_stored_results: bool = True,
    threads: int = 0,  # 0 = all cores
    path_prediction: str = "frozen_flow",  # frozen_flow | neighbours | off
) -> NightProcessingResult: ...  # releases the GIL

def load_diagnosis_thresholds(path: PathLike) -> DiagnosisThresholds: ...
def describe_antenna_faults(faults: int) -> str: ...

# --- real-time correction -------------------------------------------------------------------

class CorrectorOutput(TypedDict):
    path_mm: FloatArray  # mm, [antenna] ([time, antenna] from process_many); NaN when flagged
    phase_correction_rad: FloatArray  # rad, added to the antenna phase; 0 when flagged
    flags: UInt8Array  # wvr.CorrectorFlag bits, 0 = corrected

class StreamingCorrector:
    """The real-time corrector: one integration of every antenna at a time."""

    def __init__(
        self,
        antennas: int,
        channels: int,
        obs_freq_ghz: float,  # GHz
        *,
        weight_mm_per_k: ArrayLike,  # mm/K, [antenna, channel]
        reference_brightness_k: ArrayLike,  # K, [antenna, channel]
        reference_path_mm: ArrayLike,  # mm, [antenna]
        scale: Optional[ArrayLike] = None,  # [antenna], default 1
        usable: Optional[ArrayLike] = None,  # [antenna] 0/1, default 1
        phase_per_path: float = 1.0,  # dispersion factor (correct_night's "phase_per_path")
        max_brightness_k: float = 400.0,  # K; above, below 0 or NaN: implausible
    ) -> None: ...
    @staticmethod
    def from_retrieval(
        retrieval: NightRetrieval,
        time_s: float,  # s; the coefficient window holding this time
        obs_freq_ghz: float,  # GHz
        *,
        scale: Optional[ArrayLike] = None,  # [antenna], default 1
        phase_per_path: float = 1.0,
        max_brightness_k: float = 400.0,  # K
    ) -> StreamingCorrector: ...
    @property
    def antennas(self) -> int: ...
    @property
    def channels(self) -> int: ...
    @property
    def obs_freq_ghz(self) -> float: ...  # GHz
    @property
    def phase_per_path(self) -> float: ...
    @property
    def max_brightness_k(self) -> float: ...  # K
    def update_coefficients(
        self,
        *,
        weight_mm_per_k: ArrayLike,  # mm/K, [antenna, channel]
        reference_brightness_k: ArrayLike,  # K, [antenna, channel]
        reference_path_mm: ArrayLike,  # mm, [antenna]
        scale: Optional[ArrayLike] = None,
        usable: Optional[ArrayLike] = None,
    ) -> None: ...
    def update_from_retrieval(
        self, retrieval: NightRetrieval, time_s: float, *, scale: Optional[ArrayLike] = None
    ) -> None: ...
    def process(
        self,
        brightness_k: ArrayLike,  # K, [antenna, channel]
        valid: Optional[ArrayLike] = None,  # [antenna] 0/1
    ) -> CorrectorOutput: ...
    def process_many(
        self,
        brightness_k: ArrayLike,  # K, [time, antenna, channel]
        valid: Optional[ArrayLike] = None,  # [time, antenna] 0/1
    ) -> CorrectorOutput: ...
# --- radiometer cross-calibration -----------------------------------------------------------

def cross_calibrate(
    night: Night,
    *,
    block_s: float = 60.0,  # s
    offset_limit_k: float = 1.5,  # K
    gain_limit: float = 0.03,
    min_drift_k: float = 0.2,  # K
    apply: bool = False,
    include_drift: bool = False,
    at_mean_sky: bool = False,
) -> Dict[str, Any]: ...  # offset_k, gain [A, C] relative to the array, ..., flagged_units, night

# --- sky dips --------------------------------------------------------------------------------

def simulate_sky_dips(
    profile: AtmosphereProfile,
    radiometer: Radiometer,
    units: Sequence[Dict[str, Any]],  # antenna, offset_k (K), gain: one value or one per channel
    *,
    elevation_deg: Optional[ArrayLike] = None,  # deg, scan order; default 90 -> 20 in 7 steps
    dwell_s: float = 5.0,  # s
    sample_interval_s: float = 1.0,  # s
    absorption_model: str = "p676",
    noise: bool = True,
    seed: int = 1,
) -> List[Dict[str, Any]]: ...  # antenna, time_s, elevation_deg, brightness_k [sample, channel]
def fit_sky_dip(
    profile: AtmosphereProfile,
    radiometer: Radiometer,
    elevation_deg: ArrayLike,  # deg [sample]
    brightness_k: ArrayLike,  # K [sample, channel], RJ-equivalent
    *,
    antenna: str = "",
    time_s: Optional[ArrayLike] = None,
    absorption_model: str = "p676",
    gain_prior_sigma: float = 0.05,
    slab_temperature_prior_sigma_k: float = 15.0,  # K
    slab_tolerance: float = 0.02,
) -> Dict[str, Any]: ...  # pwv_mm, offset_k, gain, zenith_opacity_np, slab_*, notes, ...
