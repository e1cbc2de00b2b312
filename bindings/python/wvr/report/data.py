"""The numbers of a night report: one pure function from a night and its processing result
(wvr.process_night) to plain dicts, lists, strings and numbers, written as report.json.

Nothing here is measured or judged: every number is a field of the typed results, copied
(non-finite values become None), or a grouping of them for reading (consecutive windows with
one verdict form an episode; an antenna's flagged windows are listed together).
"""
import datetime
import math

import numpy as np

import wvr

__all__ = ["SCHEMA", "report_data", "clock_utc"]

# Names the layout of report.json; a reader checks it before trusting the keys.
SCHEMA = "wvr-night-report/1"

# The verdict that says the evidence was missing (wvr::Verdict's name).
UNJUDGED_VERDICT = "cannot judge"
# The verdict that says the retrieval had no path to give: the source below its elevation limit,
# or a surface temperature or PWV outside its table (wvr::Verdict's name).
OUTSIDE_DOMAIN_VERDICT = "outside retrieval domain"


def _number(value):
    """float, or None for NaN and infinities (JSON has no NaN)."""
    value = float(value)
    return value if math.isfinite(value) else None


def _numbers(values):
    return [_number(v) for v in np.asarray(values, dtype=float).ravel()]


def _epoch(night):
    return datetime.datetime.strptime(night.time_epoch_utc, "%Y-%m-%dT%H:%M:%SZ").replace(
        tzinfo=datetime.timezone.utc)


def clock_utc(epoch, time_s):
    """'hh:mm' UTC, to the nearest minute, of a time in s after the night's epoch (a
    datetime)."""
    minutes = round(float(time_s) / 60.0)
    return (epoch + datetime.timedelta(minutes=minutes)).strftime("%H:%M")


def _night_section(night, name, night_file, epoch):
    time_s = np.asarray(night.time_s, dtype=float)
    valid = np.asarray(night.valid).astype(bool)
    first_s, last_s = (float(time_s[0]), float(time_s[-1])) if time_s.size else (0.0, 0.0)
    return {
        "name": name,
        "file": night_file,
        "epoch_utc": night.time_epoch_utc,
        "date_utc": (epoch + datetime.timedelta(seconds=first_s)).strftime("%Y-%m-%d"),
        "start_utc": clock_utc(epoch, first_s),
        "stop_utc": clock_utc(epoch, last_s),
        "duration_s": last_s - first_s,
        "sample_count": int(night.time_count),
        "valid_sample_fraction": float(valid.mean()) if valid.size else 0.0,
        "antenna_count": int(night.antenna_count),
        "antenna_names": list(night.antenna_names),
        "channel_names": list(night.channel_names),
        "scan_count": len(night.scans),
        "calibrator_scan_count": sum(1 for s in night.scans if s["intent"] == "calibrator"),
    }


def _retrieval_section(retrieval):
    section = {}
    # Every key of the summary's field table: counts as int, values as float or None, per-channel
    # values as lists.
    for name, value in retrieval.summary().items():
        if isinstance(value, int):
            section[name] = value
        elif np.ndim(value):
            section[name] = _numbers(value)
        else:
            section[name] = _number(value)
    section["coefficient_windows"] = int(retrieval.windows)
    return section


def _calibration_section(calibration):
    if calibration is None:
        return None
    section = {
        "status": calibration.status,
        "ok": bool(calibration.ok),
        "message": calibration.message,
    }
    # Every scalar of the result's field table, under its own name.
    for name, value in calibration.scalars().items():
        section[name] = value if isinstance(value, bool) else _number(value)
    section["rows_used"] = int(calibration.rows_used)
    section["rows_skipped"] = int(calibration.rows_skipped)
    return section


def _correction_section(processed):
    metrics = processed.metrics
    if metrics is None:
        return None
    return {
        "obs_freq_ghz": _number(processed.obs_freq_ghz) if processed.obs_freq_ghz else None,
        "obs_freq_source": processed.obs_freq_source,
        "phase_rms_before_deg": _number(metrics.phase_rms_before_deg),
        "phase_rms_after_deg": _number(metrics.phase_rms_after_deg),
        "improvement_factor": _number(metrics.improvement_factor),
        "coherence_before": _number(metrics.coherence_before),
        "coherence_after": _number(metrics.coherence_after),
    }


def _path_prediction_section(processed, names):
    """Antennas corrected with a path predicted from the others, each with its expected
    residual beside the healthy antennas' corrected calibrator phase rms; None when nothing
    was predicted."""
    predicted = processed.path_prediction
    if predicted is None or processed.metrics is None or processed.obs_freq_ghz is None:
        return None
    summary = processed.path_prediction_summary()
    return {
        "method": summary.method,
        "message": summary.message,
        "freq_ghz": _number(summary.freq_ghz),
        "healthy_antennas": int(summary.healthy_antennas),
        "healthy_phase_rms_after_deg": _number(summary.healthy_phase_rms_after_deg),
        "antennas": [{
            "antenna": names[a.antenna],
            "predicted_samples": int(a.predicted_samples),
            "frozen_flow_samples": int(a.frozen_flow_samples),
            "expected_residual_um": _number(1e3 * a.expected_residual_mm),
            "expected_residual_deg": _number(a.expected_residual_deg),
            "expected_phase_rms_after_deg": _number(a.expected_phase_rms_after_deg),
            "phase_rms_after_deg": _number(a.phase_rms_after_deg),
        } for a in summary.antennas],
    }


def _window_rows(diagnosis, names, epoch):
    rows = []
    for k, w in enumerate(diagnosis.windows):
        faults = np.asarray(w.antenna_faults).astype(int)
        rows.append({
            "index": k,
            "start_s": float(w.start_s),
            "stop_s": float(w.stop_s),
            "start_utc": clock_utc(epoch, w.start_s),
            "stop_utc": clock_utc(epoch, w.stop_s),
            "kind": "calibrator" if w.calibrator else "target",
            "verdict": w.verdict,
            "correction_usable": bool(w.correction_usable),
            "inherited": bool(w.inherited),
            "reason": w.reason,
            "numbers": {
                "phase_rms_before_deg": _number(w.rms_before_deg),
                "phase_rms_after_deg": _number(w.rms_after_deg),
                "floor_deg": _number(w.floor_deg),
                "improvement_factor": _number(w.improvement_factor),
                "correlation": _number(w.correlation),
                "slope": _number(w.slope),
                "radiometer_path_rms_um": _number(w.radiometer_path_rms_um),
                "chi2_per_dof": _number(w.chi2_per_dof),
            },
            "flagged_antennas": [
                {"antenna": names[a], "faults": wvr.describe_antenna_faults(int(faults[a]))}
                for a in np.flatnonzero(faults)],
        })
    return rows


def _median_or_none(values):
    finite = [v for v in values if v is not None]
    return float(np.median(finite)) if finite else None


def _episodes(windows, epoch):
    """Runs of consecutive windows with one verdict (so one answer to whether the correction
    is usable there, from the library), with the medians of their windows'
    numbers and the reason of their first window that has its own evidence."""
    episodes = []
    for w in windows:
        if episodes and episodes[-1]["verdict"] == w["verdict"]:
            episodes[-1]["windows"].append(w)
        else:
            episodes.append({"verdict": w["verdict"], "windows": [w]})
    out = []
    for e in episodes:
        members = e["windows"]
        own = [w for w in members if not w["inherited"]] or members
        out.append({
            "verdict": e["verdict"],
            "correction_usable": all(w["correction_usable"] for w in members),
            "start_s": members[0]["start_s"],
            "stop_s": members[-1]["stop_s"],
            "start_utc": clock_utc(epoch, members[0]["start_s"]),
            "stop_utc": clock_utc(epoch, members[-1]["stop_s"]),
            "window_count": len(members),
            "windows": [w["index"] for w in members],
            "reason": own[0]["reason"],
            "median_phase_rms_before_deg": _median_or_none(
                [w["numbers"]["phase_rms_before_deg"] for w in members]),
            "median_phase_rms_after_deg": _median_or_none(
                [w["numbers"]["phase_rms_after_deg"] for w in members]),
            "median_improvement_factor": _median_or_none(
                [w["numbers"]["improvement_factor"] for w in members]),
        })
    return out


def _radiometer_faults(diagnosis, names, epoch):
    """Each antenna flagged in at least one window: its windows, their span and the reasons."""
    out = []
    for a, name in enumerate(names):
        flagged = [(w, int(w.antenna_faults[a])) for w in diagnosis.windows
                   if int(w.antenna_faults[a]) != 0]
        if not flagged:
            continue
        bits = 0
        for _, faults in flagged:
            bits |= faults
        out.append({
            "antenna": name,
            "antenna_index": a,
            "faults": wvr.describe_antenna_faults(bits),
            "window_count": len(flagged),
            "start_s": float(flagged[0][0].start_s),
            "stop_s": float(flagged[-1][0].stop_s),
            "start_utc": clock_utc(epoch, flagged[0][0].start_s),
            "stop_utc": clock_utc(epoch, flagged[-1][0].stop_s),
        })
    return out


def _antenna_rows(processed, names, faults):
    metrics, corrections = processed.metrics, processed.corrections
    windows_flagged = {f["antenna"]: f["window_count"] for f in faults}
    rows = []
    for a, name in enumerate(names):
        rows.append({
            "antenna": name,
            "phase_rms_before_deg": _number(metrics.antenna_phase_rms_before_deg[a])
            if metrics is not None else None,
            "phase_rms_after_deg": _number(metrics.antenna_phase_rms_after_deg[a])
            if metrics is not None else None,
            "scale": _number(corrections.antenna_scale[a]) if corrections is not None else None,
            "windows_flagged": windows_flagged.get(name, 0)
            if processed.diagnosis is not None else None,
        })
    return rows


def _fit_section(fit):
    return {
        "ok": bool(fit.ok),
        "message": fit.message,
        "model": "broken power law" if fit.has_break else "single power law",
        "slope_short": _number(fit.slope_short),
        "slope_short_sigma": _number(fit.slope_short_sigma),
        "slope_long": _number(fit.slope_long),
        "slope_long_sigma": _number(fit.slope_long_sigma),
        "break_m": _number(fit.break_m),
        "break_sigma_m": _number(fit.break_sigma_m),
        "amplitude_m2": _number(fit.amplitude_m2),
        "saturation_m2": _number(fit.saturation_m2),
        "transition_width": _number(fit.transition_width),
        "points_used": int(fit.points_used),
        "slope_at_bound": bool(fit.slope_at_bound),
    }


def _structure_section(series):
    out = {"source": series.source, "measured": bool(series.measured),
           "fitted": bool(series.fitted), "message": series.message}
    if not series.measured:
        return out
    separation = np.asarray(series.points.separation, dtype=float)
    out["separation_m"] = _numbers(separation)
    out["value_m2"] = _numbers(series.points.value_m2)
    out["pair_count"] = [int(n) for n in series.points.pair_count]
    out["fit"] = _fit_section(series.fit)
    # The library's model at the points, so that a reader can compare without refitting.
    out["fitted_m2"] = _numbers(series.fit.evaluate_m2(separation)) if series.fitted else None
    return out


def _regime_section(regime):
    return {"measured": bool(regime.measured), "slope": _number(regime.slope),
            "slope_sigma": _number(regime.slope_sigma), "points": int(regime.points),
            "message": regime.message}


def _slab_section(slab):
    if slab is None:
        return None
    fit = slab.fit
    return {
        "ok": bool(fit.ok),
        "message": fit.message,
        "constraint": fit.constraint,
        "thickness_m": _number(fit.thickness_m),
        "thickness_low_m": _number(fit.thickness_low_m),
        "thickness_high_m": _number(fit.thickness_high_m),
        "jackknife_low_m": _number(slab.jackknife_low_m),
        "jackknife_high_m": _number(slab.jackknife_high_m),
        "profile_low_m": _number(slab.profile_low_m),
        "profile_high_m": _number(slab.profile_high_m),
        "outer_scale_m": _number(fit.outer_scale_m),
        "path_m2_at_thickness": _number(fit.path_m2_at_thickness),
        "thin": _regime_section(fit.thin),
        "thick": _regime_section(fit.thick),
    }


def _cycle_section(solution):
    if solution is None:
        return None
    return {"status": solution.status, "message": solution.message,
            "cycle_time_s": _number(solution.cycle_time_s),
            "effective_separation_m": _number(solution.effective_separation_m),
            "floor_deg": _number(solution.floor_deg),
            "saturation_deg": _number(solution.saturation_deg)}


def _switching_section(switching):
    advice = switching.advice
    return {
        "ok": bool(switching.ok),
        "message": switching.message,
        "wet_model": switching.wet_model,
        "residual_used": bool(switching.residual_used),
        "layer_height_m": _number(switching.layer_height_m),
        "calibrator_separation_deg": _number(switching.calibrator_separation_deg),
        "notes": list(switching.notes),
        "target_rms_deg": _number(advice.target_rms_deg) if advice is not None else None,
        "freq_ghz": _number(advice.freq_ghz) if advice is not None else None,
        "uncorrected": _cycle_section(advice.uncorrected) if advice is not None else None,
        "corrected": _cycle_section(advice.corrected) if advice is not None else None,
        "cycle_time_gain": _number(advice.cycle_time_gain) if advice is not None else None,
    }


def _wind_section(wind):
    return {"ok": bool(wind.ok), "message": wind.message,
            "speed_m_s": _number(wind.speed_m_s), "speed_sigma_m_s": _number(wind.speed_sigma_m_s),
            "direction_to_deg": _number(wind.direction_to_deg),
            "direction_sigma_deg": _number(wind.direction_sigma_deg),
            "pairs_used": int(wind.pairs_used)}


def _turbulence_section(turbulence):
    if turbulence is None:
        return None
    return {
        "structure_functions": {
            "before": _structure_section(turbulence.before),
            "after": _structure_section(turbulence.after),
            "radiometer": _structure_section(turbulence.radiometer),
            "before_by_lag": _structure_section(turbulence.before_by_lag),
            "after_by_lag": _structure_section(turbulence.after_by_lag),
        },
        "radiometer_noise_subtracted_m2_mean":
            _number(turbulence.radiometer_noise_subtracted_m2_mean),
        "slab": _slab_section(turbulence.slab),
        "wind": _wind_section(turbulence.wind),
        "switching": _switching_section(turbulence.switching),
    }


def report_data(night, processed, *, name, night_file=None):
    """The report's numbers of `night` (a wvr.Night) processed into `processed` (the
    wvr.NightProcessingResult of wvr.process_night on it). `name` names the night in the title
    (e.g. the night file's stem or the scenario's name); `night_file`, when given, is recorded
    as it is. Returns a JSON-serialisable dict; sections whose stage was not run are None."""
    names = list(night.antenna_names)
    epoch = _epoch(night)
    diagnosis = processed.diagnosis
    windows = _window_rows(diagnosis, names, epoch) if diagnosis is not None else []
    faults = _radiometer_faults(diagnosis, names, epoch) if diagnosis is not None else []
    verdict_counts = {}
    for w in windows:
        verdict_counts[w["verdict"]] = verdict_counts.get(w["verdict"], 0) + 1
    site = processed.site
    notes = list(processed.notes) + (list(diagnosis.notes) if diagnosis is not None else [])
    return {
        "schema": SCHEMA,
        "title": f"Night report: {name}",
        "night": _night_section(night, name, night_file, epoch),
        "site": {"name": site.site.name, "description": site.description, "source": site.source},
        "processing": {
            "last_stage": processed.last_stage,
            "retrieval_reused": bool(processed.retrieval_reused),
            "calibration_reused": bool(processed.calibration_reused),
            "notes": notes,
        },
        "retrieval": _retrieval_section(processed.retrieval),
        "calibration": _calibration_section(processed.calibration),
        "correction": _correction_section(processed),
        "path_prediction": _path_prediction_section(processed, names),
        "verdict_counts": verdict_counts,
        "episodes": _episodes(windows, epoch),
        "radiometer_faults": faults,
        "antennas": _antenna_rows(processed, names, faults),
        "windows": windows,
        "turbulence": _turbulence_section(processed.turbulence),
        "thresholds": diagnosis.thresholds.to_dict() if diagnosis is not None else None,
    }
