"""libwvr: sky emission models for water-vapour radiometers.

Every quantity carries its unit in its name (``pwv_mm``, ``freq_ghz``, ``brightness_k``,
``elevation_deg``); arrays go in and come out as numpy arrays. Bad input raises
:class:`WvrValueError`, which is both a :class:`WvrError` and a :class:`ValueError`, with a
message naming the offending field and its value. Every error the package raises derives from
:class:`WvrError` (a missing name: :class:`WvrKeyError`, also a :class:`KeyError`; a night
with nothing usable in it: :class:`WvrNothingUsable`).

Example::

    import wvr
    site = wvr.load_site("demo-site.toml")
    profile = wvr.profile_from_site(site, pwv_mm=1.2)
    radiometer = wvr.Radiometer.load("demo-183-dsb.toml")
    sky = wvr.SkyModel()
    channels = sky.channels(profile, radiometer, elevation_deg=45.0)
    fast = wvr.FastSkyModel(profile, radiometer, sky)
    night = fast.evaluate_many(pwv_mm_array, elevation_deg_array)

Nights (night files, the simulator and the retrieval)::

    scenario = wvr.load_scenario("demo-scenario.toml").with_overrides(
        duration_s=600.0, antenna_count=6)
    night = wvr.simulate_night(scenario)
    wvr.write_night(night, "night.h5")
    night = wvr.read_night("night.h5")            # night.brightness_k: [antenna, time, channel]
    retrieval = wvr.retrieve_night(night, scenario.site)
    print(retrieval.summary()["pwv_median_mm"])
    wvr.add_result_group("night.h5", "night-retrieved.h5", retrieval.to_result_group(night))

The whole night pipeline in one call (the same as ``skyphase process``)::

    result = wvr.process_night(night)             # the night's own site; every stage
    result.metrics.phase_rms_after_deg            # calibrator phase rms after correction
    result.corrections.phase_correction_rad       # [antenna, time], added to the antenna phase
    [w.verdict for w in result.diagnosis.windows]
    result.turbulence.wind.speed_m_s

Single stages::

    scale = wvr.solve_scaling(night, retrieval)   # CalibrationResult
    corrections, metrics = wvr.correct_night(night, retrieval,
                                             antenna_scale=scale.antenna_scale)

Real-time correction, one integration at a time (prototyping correlator-side code)::

    corrector = wvr.StreamingCorrector.from_retrieval(
        retrieval, time_s=0.0, obs_freq_ghz=230.0, scale=scale.antenna_scale,
        phase_per_path=corrections.phase_per_path)
    out = corrector.process(night.brightness_k[:, 0, :], night.valid[:, 0])
    out["phase_correction_rad"]                   # [antenna]
"""

import collections.abc as _collections_abc
import enum as _enum

from wvr import _core
from wvr._core import (
    AntennaMetrics,
    AntennaPaths,
    AtmosphereProfile,
    BaselineMetrics,
    BrokenPowerLawFit,
    CalibrationResult,
    ChannelBrightness,
    CorrectionMetrics,
    CycleTimeSolution,
    DiagnosisThresholds,
    FastSkyModel,
    FastSwitchingAdvice,
    FittedStructureFunction,
    Night,
    NightDiagnosis,
    NightProcessingResult,
    NightRetrieval,
    NightSlabThickness,
    NightTurbulence,
    PathPredictionSummary,
    PhaseCorrections,
    PredictedAntennaResidual,
    PredictedPaths,
    PwvTable,
    Radiometer,
    RadiometerTemporalStructure,
    RegimeSlope,
    ResolvedSite,
    ResultGroup,
    RetrievalResult,
    Retriever,
    Scenario,
    SiteConfig,
    SkyModel,
    SkySpectrum,
    SlabThicknessFit,
    SlantPath,
    StructureFunctionEstimate,
    SwitchingAdvice,
    WindEstimate,
    WindowDiagnosis,
    StreamingCorrector,
    WvrError,
    WvrKeyError,
    WvrNothingUsable,
    WvrValueError,
    __version__,
    absorption,
    absorption_model_keys,
    absorption_model_name,
    add_result_group,
    bevis_wet_delay_per_pwv,
    cross_calibrate,
    cloud_liquid_absorption_m2_per_kg,
    cloud_liquid_specific_attenuation,
    correct_night,
    describe_antenna_faults,
    describe_retrieval_flags,
    fit_sky_dip,
    format_night_summary,
    load_diagnosis_thresholds,
    load_scenario,
    load_site,
    p835_reference_vapour_density_kg_m3,
    parametric_profile,
    parse_scenario,
    parse_site,
    planck_brightness_k,
    process_night,
    profile_from_site,
    profile_from_sounding,
    radiometer_paths,
    read_night,
    read_sounding_csv,
    retrieve_night,
    rj_brightness_k,
    saastamoinen_zenith_hydrostatic_delay_m,
    saturation_vapour_pressure_hpa,
    simulate_night,
    simulate_sky_dips,
    solve_scaling,
    summarize_night,
    us_standard_atmosphere_1976,
    vapour_pressure_hpa,
    write_night,
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


class _PwvTableStatusBase(_enum.IntEnum):
    @property
    def description(self) -> str:
        """What the code means, in words."""
        return _core._pwv_table_status_description(int(self))


PwvTableStatus = _PwvTableStatusBase(
    "PwvTableStatus", _core._PWV_TABLE_STATUS_CODES, module=__name__, qualname="PwvTableStatus")
PwvTableStatus.__doc__ = (
    "Status codes of PwvTable.invert and invert_many (their 'status'): "
    + ", ".join(f"{s.name} = {s.value}" for s in PwvTableStatus) + ".")


class _RetrievalFlagBase(_enum.IntFlag):
    @property
    def description(self) -> str:
        """The set bits in words, e.g. "bad brightness, no weather"."""
        return _core.describe_retrieval_flags(int(self))


# Bits of NightRetrieval.flags and window_flags, taken from the library.
RetrievalFlag = _RetrievalFlagBase(
    "RetrievalFlag", _core._RETRIEVAL_FLAG_CODES, module=__name__, qualname="RetrievalFlag")
RetrievalFlag.__doc__ = (
    "Flag bits of NightRetrieval.flags and window_flags: "
    + ", ".join(f"{s.name} = {s.value}" for s in RetrievalFlag)
    + ". RETRIEVAL_UNUSABLE masks the bits after which a PWV is not usable; NO_WEATHER is "
    "advisory.")

# Bits of StreamingCorrector's 'flags' output, taken from the library.
CorrectorFlag = _enum.IntFlag(
    "CorrectorFlag", list(_core._CORRECTOR_FLAG_CODES), module=__name__, qualname="CorrectorFlag")
CorrectorFlag.__doc__ = (
    "Flag bits of StreamingCorrector.process (its 'flags', 0 = corrected): "
    + ", ".join(f"{s.name} = {s.value}" for s in CorrectorFlag) + ".")

#: Bits of RetrievalFlag after which the retrieved PWV is not usable.
RETRIEVAL_UNUSABLE = RetrievalFlag(_core._RETRIEVAL_UNUSABLE)

# A result group reads like a dict name -> array.
_collections_abc.Mapping.register(ResultGroup)


__all__ = [
    "AntennaMetrics",
    "AntennaPaths",
    "AtmosphereProfile",
    "BaselineMetrics",
    "BrokenPowerLawFit",
    "CalibrationResult",
    "ChannelBrightness",
    "CorrectorFlag",
    "CorrectionMetrics",
    "CycleTimeSolution",
    "DiagnosisThresholds",
    "FastModelStatus",
    "FastSkyModel",
    "FastSwitchingAdvice",
    "FittedStructureFunction",
    "Night",
    "NightDiagnosis",
    "NightProcessingResult",
    "NightRetrieval",
    "NightSlabThickness",
    "NightTurbulence",
    "PathPredictionSummary",
    "PhaseCorrections",
    "PredictedAntennaResidual",
    "PredictedPaths",
    "PwvTable",
    "PwvTableStatus",
    "RETRIEVAL_UNUSABLE",
    "Radiometer",
    "RadiometerTemporalStructure",
    "RegimeSlope",
    "ResolvedSite",
    "ResultGroup",
    "RetrievalFlag",
    "RetrievalResult",
    "Retriever",
    "Scenario",
    "SiteConfig",
    "SkyModel",
    "SkySpectrum",
    "SlabThicknessFit",
    "SlantPath",
    "StructureFunctionEstimate",
    "SwitchingAdvice",
    "WindEstimate",
    "WindowDiagnosis",
    "StreamingCorrector",
    "WvrError",
    "WvrKeyError",
    "WvrNothingUsable",
    "WvrValueError",
    "__version__",
    "absorption",
    "absorption_model_keys",
    "absorption_model_name",
    "add_result_group",
    "bevis_wet_delay_per_pwv",
    "cloud_liquid_absorption_m2_per_kg",
    "cloud_liquid_specific_attenuation",
    "correct_night",
    "cross_calibrate",
    "describe_antenna_faults",
    "describe_retrieval_flags",
    "fit_sky_dip",
    "format_night_summary",
    "load_diagnosis_thresholds",
    "load_scenario",
    "load_site",
    "p835_reference_vapour_density_kg_m3",
    "parametric_profile",
    "parse_scenario",
    "parse_site",
    "planck_brightness_k",
    "process_night",
    "profile_from_site",
    "profile_from_sounding",
    "radiometer_paths",
    "read_night",
    "read_sounding_csv",
    "retrieve_night",
    "rj_brightness_k",
    "saastamoinen_zenith_hydrostatic_delay_m",
    "saturation_vapour_pressure_hpa",
    "simulate_night",
    "simulate_sky_dips",
    "solve_scaling",
    "summarize_night",
    "us_standard_atmosphere_1976",
    "vapour_pressure_hpa",
    "write_night",
]

# MeasurementSet import and export: present when libwvr was built with casacore.
try:
    from wvr._archive import (estimate_clock_offsets, export_gain_table, export_measurement_set,
                              import_measurement_set)
except ImportError:
    HAS_MEASUREMENT_SETS = False
else:
    HAS_MEASUREMENT_SETS = True
    __all__ += ["estimate_clock_offsets", "export_gain_table", "export_measurement_set",
                "import_measurement_set"]
