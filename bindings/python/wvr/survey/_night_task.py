"""One night of a survey: the night pipeline (wvr.process_night, in C++ with the GIL
released) on one night file or MeasurementSet (imported first), reduced to one catalogue row. Runs on a dask worker; never raises for a bad
night: the row then says status "failed" and holds the error."""
import json
import math
import os
import pathlib
import socket
import time
import traceback

import numpy as np

import wvr

from wvr.survey._inputs import SurveyInputError, content_sha256, is_measurement_set

#: Options of wvr.process_night a survey passes through (besides the two files below).
PROCESS_OPTIONS = (
    "window_s", "fit_liquid", "fit_temperature", "per_antenna_scale",
    "antenna_scale_prior_sigma", "segment_s", "reference_antenna", "obs_freq_ghz",
    "advice_layer_height_m", "advice_separation_deg", "advice_target_rms_deg",
    "reuse_stored_results",
)
#: Options naming files: a site TOML replacing the night's own site, diagnosis thresholds.
FILE_OPTIONS = ("site_file", "thresholds_file")
#: Options for MeasurementSet inputs: wvr.import_measurement_set's arguments with an "ms_"
#: prefix, ms_radiometer_file for its radiometer TOML (ms_brightness is required when the
#: survey holds a MeasurementSet: archives differ).
IMPORT_OPTIONS = ("ms_brightness", "ms_radiometer_window", "ms_radiometer_file",
                  "ms_reference_antenna", "ms_array_centre", "ms_clock_offset",
                  "ms_clock_search_s")
#: Values of ms_brightness (wvr::BrightnessConvention).
BRIGHTNESS_CONVENTIONS = ("rayleigh-jeans", "planck")

#: Verdicts under which the correction did its job (the sky needed it and it worked, or the
#: sky was quiet enough that it did not matter).
EFFECTIVE_VERDICTS = ("corrected",)


def check_options(options):
    """Raises SurveyInputError naming an option the survey does not know."""
    for name in options or {}:
        if name not in PROCESS_OPTIONS + FILE_OPTIONS + IMPORT_OPTIONS:
            known = ", ".join(PROCESS_OPTIONS + FILE_OPTIONS + IMPORT_OPTIONS)
            raise SurveyInputError(f"options: unknown option '{name}' (known: {known})")


def _process_arguments(options, threads):
    arguments = {k: v for k, v in options.items() if k in PROCESS_OPTIONS}
    if options.get("site_file"):
        arguments["site"] = wvr.load_site(options["site_file"])
    if options.get("thresholds_file"):
        arguments["thresholds"] = wvr.load_diagnosis_thresholds(options["thresholds_file"])
    arguments["threads"] = threads
    return arguments


def options_for(path, options):
    """The options that bear on the night at `path`: the ms_* options only for a
    MeasurementSet, so that adding them to a survey does not make its night files new."""
    if is_measurement_set(path):
        return dict(options)
    return {k: v for k, v in options.items() if k not in IMPORT_OPTIONS}


def check_input_options(paths, options):
    """Raises SurveyInputError before any work when a MeasurementSet among `paths` cannot be
    imported with `options` (no ms_brightness, or no MeasurementSet support)."""
    first_ms = next((p for p in paths if is_measurement_set(p)), None)
    if first_ms is not None:
        _require_import(first_ms, options)


def _require_import(path, options):
    if not wvr.HAS_MEASUREMENT_SETS:
        raise SurveyInputError(f"{path}: a MeasurementSet, but this wvr was built without "
                               "casacore (no MeasurementSet import)")
    if options.get("ms_brightness") not in BRIGHTNESS_CONVENTIONS:
        given = (f" (given: {options['ms_brightness']!r})" if "ms_brightness" in options
                 else "")
        raise SurveyInputError(f"{path}: a MeasurementSet needs the option ms_brightness "
                               "('rayleigh-jeans' or 'planck': how its radiometer window stores "
                               f"brightness){given}")


def read_input(path, options):
    """The night at `path` and notes on how it was read: a night file as it is; a
    MeasurementSet through wvr.import_measurement_set with the survey's ms_* options."""
    if not is_measurement_set(path):
        return wvr.read_night(str(path)), []
    _require_import(path, options)
    arguments = {name[len("ms_"):]: options[name] for name in IMPORT_OPTIONS if name in options}
    if "radiometer_file" in arguments:
        arguments["radiometer"] = arguments.pop("radiometer_file")
    night, report = wvr.import_measurement_set(str(path), **arguments)
    notes = [f"import: {note}" for note in report["notes"]]
    offsets = [c for c in report["clock_offsets"] if c["estimated"]]
    if offsets:
        notes.append("import: radiometer clock offsets applied (s): " + ", ".join(
            f"{c['offset_s']:+.3f} +/- {c['sigma_s']:.3f}" for c in offsets))
    return night, notes


def _finite(value):
    value = float(value)
    return value if math.isfinite(value) else None


def _verdict_fractions(windows):
    """Fraction of the diagnosed time under each verdict."""
    seconds = {}
    for w in windows:
        seconds[w.verdict] = seconds.get(w.verdict, 0.0) + max(0.0, w.stop_s - w.start_s)
    total = sum(seconds.values())
    return {v: s / total for v, s in sorted(seconds.items())} if total > 0 else {}


def _radiometer_health(windows, antenna_names):
    """Per antenna, the fraction of diagnosed time its radiometer was judged faulty."""
    faulty_s = np.zeros(len(antenna_names))
    total_s = 0.0
    for w in windows:
        duration = max(0.0, w.stop_s - w.start_s)
        total_s += duration
        faults = np.asarray(w.antenna_faults)
        if faults.size == len(antenna_names):
            faulty_s += duration * (faults != 0)
    if total_s <= 0:
        return {}
    return {name: float(f / total_s) for name, f in zip(antenna_names, faulty_s)}


def _pwv_timeline(retrieval):
    """Per coefficient window: start (s after the night's epoch) and the array's median PWV."""
    pwv = np.asarray(retrieval.window_pwv_mm)
    timeline = []
    for k, start in enumerate(np.asarray(retrieval.window_start_s)):
        column = pwv[:, k] if pwv.ndim == 2 else pwv[k:k + 1]
        column = column[np.isfinite(column)]
        if column.size:
            timeline.append([float(start), float(np.median(column))])
    return timeline


def night_row(night, result):
    """The catalogue's numbers of one processed night (see wvr.survey.catalogue.COLUMNS)."""
    summary = result.retrieval.summary()
    row = {
        "start_utc": night.time_epoch_utc,
        "duration_s": float(night.time_s[-1] - night.time_s[0]) if night.time_count else 0.0,
        "antennas": int(night.antenna_count),
        "pwv_p10_mm": _finite(summary["pwv_p10_mm"]),
        "pwv_median_mm": _finite(summary["pwv_median_mm"]),
        "pwv_p90_mm": _finite(summary["pwv_p90_mm"]),
        "pwv_timeline_json": json.dumps(_pwv_timeline(result.retrieval)),
    }
    cal = result.calibration
    row["calibration_status"] = cal.status if cal is not None else None
    row["scale"] = _finite(cal.scale) if cal is not None else None
    row["scale_sigma"] = _finite(cal.scale_sigma) if cal is not None else None
    m = result.metrics
    if m is not None:
        row.update(phase_rms_before_deg=_finite(m.phase_rms_before_deg),
                   phase_rms_after_deg=_finite(m.phase_rms_after_deg),
                   improvement_factor=_finite(m.improvement_factor),
                   coherence_before=_finite(m.coherence_before),
                   coherence_after=_finite(m.coherence_after))
    diagnosis = result.diagnosis
    if diagnosis is not None:
        windows = list(diagnosis.windows)
        fractions = _verdict_fractions(windows)
        health = _radiometer_health(windows, list(diagnosis.antenna_names))
        row["verdict_fractions_json"] = json.dumps(fractions, sort_keys=True)
        row["effective_fraction"] = sum(fractions.get(v, 0.0) for v in EFFECTIVE_VERDICTS)
        row["verdict_timeline_json"] = json.dumps(
            [[float(w.start_s), float(w.stop_s), w.verdict] for w in windows])
        row["radiometer_health_json"] = json.dumps(health, sort_keys=True)
        row["faulty_radiometers_json"] = json.dumps(
            sorted(name for name, fraction in health.items() if fraction > 0.0))
    turbulence = result.turbulence
    if turbulence is not None:
        wind = turbulence.wind
        if wind.ok:
            row.update(wind_speed_m_s=_finite(wind.speed_m_s),
                       wind_speed_sigma_m_s=_finite(wind.speed_sigma_m_s),
                       wind_direction_to_deg=_finite(wind.direction_to_deg))
        slab = turbulence.slab
        if slab is not None and slab.fit.ok:
            row.update(slab_thickness_m=_finite(slab.fit.thickness_m),
                       slab_thickness_low_m=_finite(slab.fit.thickness_low_m),
                       slab_thickness_high_m=_finite(slab.fit.thickness_high_m))
    row["notes_json"] = json.dumps(list(result.notes))
    return row


def process_one(path, options=None, sha256=None, threads=1):
    """Processes the night file or MeasurementSet at `path` with the survey options (see check_options) and
    returns its catalogue row: the identity (path, content_sha256, options_json), the numbers
    of night_row, status "ok" or "failed" with the error, the software version, the worker and
    the processing time. Never raises for a bad night."""
    from wvr.survey._inputs import canonical_options

    options = dict(options or {})
    row = {
        "path": str(path),
        "night_name": pathlib.Path(path).stem,
        "content_sha256": sha256,
        "options_json": canonical_options(options_for(path, options)),
        "software_version": wvr.__version__,
        "worker": f"{socket.gethostname()}:{os.getpid()}",
    }
    started = time.perf_counter()
    try:
        if row["content_sha256"] is None:
            row["content_sha256"] = content_sha256(path)
        check_options(options)
        night, input_notes = read_input(path, options)
        result = wvr.process_night(night, **_process_arguments(options, threads))
        row.update(night_row(night, result))
        row["notes_json"] = json.dumps(input_notes + json.loads(row["notes_json"]))
        row["status"] = "ok"
        row["error"] = None
    except Exception as error:  # noqa: BLE001  a bad night is recorded, never fatal
        row["status"] = "failed"
        row["error"] = f"{type(error).__name__}: {error}"
        row["traceback"] = traceback.format_exc(limit=8)
    row["processing_s"] = time.perf_counter() - started
    return row
