"""Night report: one self-contained HTML page that shows site scientists how a night went.

Input: a night file that ``skyphase diagnose`` wrote (result groups retrieval, calibration,
correction and diagnosis) and the JSON summary that the command printed. Output, in a
folder: ``index.html`` (figures embedded as PNG data URIs, so the page works offline and
when moved alone), the same figures as ``*.png`` beside it, and ``summary.json``: the
command's summary with one added key, ``report``, holding the numbers the page takes from
the night file (epoch, duration, channels, per-antenna phase rms, what was not available).

Every number on the page is printed by :func:`format_value` inside an element whose
``data-json`` attribute is its path in ``summary.json`` (keys and list indices joined by
dots, e.g. ``summary.improvement_factor`` or ``windows.3.numbers.floor_deg``), so the page
can be checked against the file.

Usage::

    python3 -m wvr.report night-diagnosed.h5 --summary summary.json -o report/

    import wvr.report
    index_html = wvr.report.build_report("night-diagnosed.h5", summary_dict, "report/")
"""
import argparse
import base64
import html
import io
import json
import math
import pathlib
import sys
import warnings

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402  (the backend must be chosen first)
import matplotlib.ticker  # noqa: E402
import numpy as np  # noqa: E402

import wvr  # noqa: E402

__all__ = ["build_report", "format_value", "main"]

# Colours of the verdicts on the timeline and in the table (colour-blind safe, Okabe-Ito).
VERDICT_COLOURS = {
    "corrected": "#009E73",
    "quiet sky": "#56B4E9",
    "dry turbulence": "#E69F00",
    "cloud": "#999999",
    "radiometer fault": "#D55E00",
    "scale off": "#CC79A7",
    "cannot judge": "#F0E442",
}
_UNKNOWN_VERDICT_COLOUR = "#000000"

# Plain text everywhere: Debian 12's matplotlib 3.6 builds its mathtext parser with
# pyparsing 3.0 warnings, which would break callers that turn warnings into errors. Log axes
# get plain tick labels (1e-08) instead of mathtext powers of ten.
_RC = {"text.parse_math": False, "axes.formatter.use_mathtext": False}


class ReportInputError(wvr.WvrValueError):
    """A report input (night file or summary) is missing or malformed."""


# ---------------------------------------------------------------- formatting


def format_value(value):
    """The text the page shows for one JSON value: "n/a" for null or non-finite numbers,
    "yes"/"no" for booleans, integers in full, floats to 4 significant digits (1 decimal from
    10^4 up to 10^7, scientific notation outside 10^-3 .. 10^7), strings as they are."""
    if value is None:
        return "n/a"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            return "n/a"
        magnitude = abs(value)
        if value == 0.0:
            return "0"
        if 1e-3 <= magnitude < 1e4:
            return f"{value:.4g}"
        if 1e4 <= magnitude < 1e7:
            return f"{value:.1f}"
        return f"{value:.3e}"
    return str(value)


def _tag(path, value, element="span"):
    return (f'<{element} data-json="{html.escape(path)}">'
            f"{html.escape(format_value(value))}</{element}>")


def _lookup(document, path):
    node = document
    for part in path.split("."):
        node = node[int(part)] if isinstance(node, list) else node[part]
    return node


def _as_float(value):
    """JSON number or null -> float (NaN for null)."""
    if value is None or isinstance(value, bool):
        return math.nan
    try:
        return float(value)
    except (TypeError, ValueError):
        return math.nan


# ---------------------------------------------------------------- numbers that ignore NaN


def _column_percentiles(values, percentiles):
    """Percentiles over axis 0 of a [N, T] array ignoring NaN; NaN where a column is empty
    (without numpy's all-NaN warnings)."""
    out = np.full((len(percentiles), values.shape[1]), np.nan)
    finite = np.isfinite(values)
    has = finite.any(axis=0)
    if has.any():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            out[:, has] = np.nanpercentile(values[:, has], percentiles, axis=0)
    return out


def _median(values):
    values = np.asarray(values, dtype=float)
    values = values[np.isfinite(values)]
    return float(np.median(values)) if values.size else math.nan


# ---------------------------------------------------------------- figures


def _plain_log_ticks(axes, which="xy"):
    formatter = matplotlib.ticker.FuncFormatter(lambda value, _: f"{value:g}")
    for name in which:
        axis = axes.xaxis if name == "x" else axes.yaxis
        axis.set_major_formatter(formatter)
        # Minor labels at 2 and 5 x 10^n, so that an axis spanning less than a decade has some.
        axis.set_minor_formatter(matplotlib.ticker.FuncFormatter(
            lambda value, _: f"{value:g}" if round(value / 10 ** math.floor(
                math.log10(value)), 6) in (2.0, 5.0) else ""))


def _png_bytes(figure):
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=90)
    plt.close(figure)
    return buffer.getvalue()


def _unavailable_figure(title, reason, height_in=2.2):
    figure, axes = plt.subplots(figsize=(9.0, height_in))
    axes.set_axis_off()
    axes.set_title(title)
    axes.text(0.5, 0.5, "not available: " + reason, ha="center", va="center", fontsize=12,
              transform=axes.transAxes, wrap=True)
    return _png_bytes(figure)


def _time_axis(duration_s):
    """(divisor, label) for times after the epoch: minutes for short nights, hours else."""
    if duration_s <= 3 * 3600.0:
        return 60.0, "time after epoch (min)"
    return 3600.0, "time after epoch (h)"


def _figure_pwv(info, retrieval, windows):
    title = "PWV and radiometer path rms"
    if retrieval is None or "pwv_mm" not in retrieval:
        return _unavailable_figure(title, "the night has no retrieval results"), \
            "the night has no retrieval results"
    time_s = info["time_s"]
    pwv_mm = np.array(retrieval["pwv_mm"], dtype=float)
    if "flags" in retrieval:
        unusable = (np.asarray(retrieval["flags"]).astype(int) & int(wvr.RETRIEVAL_UNUSABLE)) != 0
        pwv_mm[unusable] = np.nan
    if not np.isfinite(pwv_mm).any():
        reason = "no usable retrieved PWV (every radiometer sample is unusable)"
        return _unavailable_figure(title, reason), reason
    divisor, label = _time_axis(info["duration_s"])
    p10, p50, p90 = _column_percentiles(pwv_mm, [10, 50, 90])
    figure, (top, bottom) = plt.subplots(2, 1, figsize=(9.0, 5.5), sharex=True)
    t = time_s / divisor
    top.fill_between(t, p10, p90, color="#56B4E9", alpha=0.4, linewidth=0,
                     label="10-90 % over antennas")
    top.plot(t, p50, color="#0072B2", linewidth=1.0, label="median over antennas")
    top.set_ylabel("PWV (mm)")
    top.set_title(title)
    top.legend(loc="upper right", fontsize=8)
    drawn = False
    for w in windows:
        rms_um = _as_float(w.get("numbers", {}).get("radiometer_path_rms_um"))
        if math.isfinite(rms_um):
            bottom.hlines(rms_um, _as_float(w["start_s"]) / divisor,
                          _as_float(w["stop_s"]) / divisor, color="#D55E00", linewidth=2.0,
                          label=None if drawn else "path rms in window (diagnosis)")
            drawn = True
    if retrieval is not None and "path_noise_mm" in retrieval and "window_start_s" in retrieval:
        noise_um = 1000.0 * np.asarray(retrieval["path_noise_mm"], dtype=float)
        starts = np.asarray(retrieval["window_start_s"], dtype=float)
        stops = np.asarray(retrieval["window_stop_s"], dtype=float)
        median_noise = _column_percentiles(noise_um, [50])[0] if noise_um.size else []
        for k, value in enumerate(median_noise):
            if math.isfinite(value):
                bottom.hlines(value, starts[k] / divisor, stops[k] / divisor, color="#000000",
                              linewidth=1.0, linestyle="--",
                              label=None if drawn else "path noise of one sample (median)")
                drawn = True
    if drawn:
        bottom.set_yscale("log")
        _plain_log_ticks(bottom, "y")
        bottom.legend(loc="upper right", fontsize=8)
    else:
        bottom.text(0.5, 0.5, "not available: no window has a radiometer path rms", ha="center",
                    va="center", transform=bottom.transAxes)
    bottom.set_ylabel("path (um)")
    bottom.set_xlabel(label)
    figure.tight_layout()
    return _png_bytes(figure), None


def _pick_baselines(pairs, positions_m):
    """Shortest, middle and longest of the distinct baselines in `pairs` ([P, 2])."""
    unique = sorted({(int(a), int(b)) for a, b in pairs})
    lengths = [float(np.hypot(*(positions_m[b, :2] - positions_m[a, :2]))) for a, b in unique]
    order = np.argsort(lengths, kind="stable")
    picks = []
    for index in (order[0], order[len(order) // 2], order[-1]):
        if unique[index] not in [p[0] for p in picks]:
            picks.append((unique[index], lengths[index]))
    return picks


def _wrap_deg(phase_rad):
    return np.degrees(np.angle(np.exp(1j * np.asarray(phase_rad, dtype=float))))


def _figure_phases(info, night, correction):
    title = "Calibrator phase before and after correction"
    phases = night.calibrator_phases
    if info["antenna_count"] < 2:
        reason = "a single antenna has no baselines"
        return _unavailable_figure(title, reason), reason
    if len(phases["time_s"]) == 0:
        reason = "the night has no calibrator phases"
        return _unavailable_figure(title, reason), reason
    after = None
    if correction is not None and "corrected_calibrator_phase_rad" in correction:
        after = np.asarray(correction["corrected_calibrator_phase_rad"], dtype=float)
    pairs = np.asarray(phases["antenna_pair"])
    picks = _pick_baselines(pairs, np.asarray(night.position_enu_m))
    divisor, label = _time_axis(info["duration_s"])
    names = info["antenna_names"]
    figure, axes = plt.subplots(len(picks), 1, figsize=(9.0, 2.2 * len(picks) + 0.6),
                                sharex=True, squeeze=False)
    for row, ((a, b), length_m) in zip(axes[:, 0], picks):
        rows = (pairs[:, 0] == a) & (pairs[:, 1] == b)
        t = np.asarray(phases["time_s"])[rows] / divisor
        row.plot(t, _wrap_deg(np.asarray(phases["phase_rad"])[rows]), ".", markersize=2,
                 color="#E69F00", label="before")
        if after is not None:
            row.plot(t, _wrap_deg(after[rows]), ".", markersize=2, color="#0072B2",
                     label="after")
        row.set_ylim(-180, 180)
        row.set_ylabel("phase (deg)")
        row.set_title(f"{names[a]}-{names[b]} ({length_m:.0f} m)", fontsize=9)
        row.legend(loc="upper right", fontsize=8, markerscale=4)
    axes[-1, 0].set_xlabel(label)
    figure.suptitle(title if after is not None
                    else title + " (no corrected phases in the night file)")
    figure.tight_layout()
    return _png_bytes(figure), None


def _figure_timeline(info, windows, diagnosis):
    title = "Verdicts per window and flagged antennas"
    if not windows:
        reason = "the night has no scans, so there are no windows to judge"
        return _unavailable_figure(title, reason), reason
    names = info["antenna_names"]
    faults = None
    if diagnosis is not None and "antenna_faults" in diagnosis:
        faults = np.asarray(diagnosis["antenna_faults"]).astype(int)
        if faults.shape != (len(names), len(windows)):
            faults = None
    if faults is None:  # the summary lists the flagged antennas of each window
        faults = np.zeros((len(names), len(windows)), dtype=int)
        for k, w in enumerate(windows):
            for entry in w.get("antennas", []):
                if entry.get("antenna") in names and entry.get("faults", "ok") != "ok":
                    faults[names.index(entry["antenna"]), k] = 1
    divisor, label = _time_axis(info["duration_s"])
    rows = 1 + len(names)
    height_in = 1.0 + 0.28 * rows + 0.8
    figure, axes = plt.subplots(figsize=(9.0, height_in))
    seen = {}
    for k, w in enumerate(windows):
        start = _as_float(w["start_s"]) / divisor
        width = (_as_float(w["stop_s"]) - _as_float(w["start_s"])) / divisor
        colour = VERDICT_COLOURS.get(w["verdict"], _UNKNOWN_VERDICT_COLOUR)
        patch = axes.barh(rows - 1, width, left=start, height=0.8, color=colour,
                          hatch="//" if w.get("inherited") else None, edgecolor="white")
        seen.setdefault(w["verdict"], patch)
        for a in range(len(names)):
            if faults[a, k]:
                axes.barh(rows - 2 - a, width, left=start, height=0.6, color="#D55E00")
    axes.set_yticks(range(rows))
    axes.set_yticklabels(list(reversed(names)) + ["array verdict"], fontsize=8)
    axes.set_xlabel(label)
    axes.set_title(title + " (hatched: inherited; red: antenna flagged)")
    # The legend in a fixed 0.45 inch strip at the bottom, whatever the number of antennas.
    strip = 0.45 / height_in
    figure.legend(seen.values(), seen.keys(), loc="lower center", ncol=4, fontsize=8,
                  frameon=False)
    figure.tight_layout(rect=(0.0, strip, 1.0, 1.0))
    return _png_bytes(figure), None


def _numeric_list(value):
    return isinstance(value, list) and value and all(
        isinstance(v, (int, float)) and not isinstance(v, bool) or v is None for v in value)


def _find_structure_sets(node, path):
    """Every dict under `node` that holds separations and structure values (two numeric lists
    of one length: a key naming a separation or baseline in m, a key in m^2) with the fit
    beside them if there is one; yields (path, separation, value, fit)."""
    if not isinstance(node, dict):
        return
    separation_key = next((k for k, v in node.items() if _numeric_list(v) and (
        "separation" in k or "baseline" in k) and k.endswith("_m")), None)
    # The measured values, not the model's values at the points (fitted_m2).
    value_key = next((k for k, v in node.items() if _numeric_list(v) and k.endswith("_m2")
                      and not k.startswith("fitted")), None)
    if separation_key and value_key and len(node[separation_key]) == len(node[value_key]):
        fit = node.get("fit") if isinstance(node.get("fit"), dict) else node
        fitted = node.get("fitted_m2")
        if not (_numeric_list(fitted) and len(fitted) == len(node[value_key])):
            fitted = None
        yield path, node[separation_key], node[value_key], _normalise_fit(fit), fitted
    for key, child in node.items():
        if isinstance(child, dict):
            yield from _find_structure_sets(child, f"{path}.{key}")


# Accepted names of the fit parameters: the library's (wvr::BrokenPowerLawFit) first.
_FIT_NAMES = {
    "amplitude_m2": ("amplitude_m2", "amplitude_at_break_m2"),
    "alpha_short": ("alpha_short", "slope_short"),
    "alpha_long": ("alpha_long", "slope_long"),
    "break_m": ("break_m",),
    "transition_width": ("transition_width",),
    "saturation_m2": ("saturation_m2",),
    "model": ("model",),
}


def _normalise_fit(node):
    """The fit parameters of a JSON node under the names of broken_power_law_m2, or None when
    it has no usable fit."""
    fit = {}
    for name, aliases in _FIT_NAMES.items():
        found = next((node[a] for a in aliases if a in node), None)
        if found is not None:
            fit[name] = found
    return fit if _fit_usable(fit) else None


def broken_power_law_m2(separation_m, fit):
    """D(d) in m^2 of the broken power law in a fit dict (keys amplitude_m2, alpha_short,
    alpha_long, break_m, transition_width, saturation_m2 as wvr::BrokenPowerLawFit):
    ln D = ln A + a_s x + (a_l - a_s) w ln(1 + e^(x / w)), x = ln(d / d_break), saturating as
    D_sat (1 - exp(-D / D_sat)) when D_sat > 0."""
    d = np.asarray(separation_m, dtype=float)
    amplitude = _as_float(fit.get("amplitude_m2"))
    alpha_short = _as_float(fit.get("alpha_short"))
    alpha_long = _as_float(fit.get("alpha_long", alpha_short))
    break_m = _as_float(fit.get("break_m"))
    width = _as_float(fit.get("transition_width", 0.5))
    if not width > 0:
        width = 0.5
    x = np.log(d / break_m)
    value = np.exp(np.log(amplitude) + alpha_short * x
                   + (alpha_long - alpha_short) * width * np.logaddexp(0.0, x / width))
    saturation = _as_float(fit.get("saturation_m2", 0.0))
    if saturation > 0 and math.isfinite(saturation):
        value = saturation * (1.0 - np.exp(-value / saturation))
    return value


def _fit_usable(fit):
    keys = ("amplitude_m2", "alpha_short", "break_m")
    values = [_as_float(fit.get(k)) for k in keys]
    return all(math.isfinite(v) for v in values) and values[0] > 0 and values[2] > 0


def _figure_structure(summary):
    title = "Spatial structure function of the path"
    node = summary.get("structure_function")
    if not isinstance(node, dict):
        reason = "the summary has no structure function (too few antennas or no usable paths)"
        return _unavailable_figure(title, reason), reason
    sets = list(_find_structure_sets(node, "structure_function"))
    points = []
    for path, separation, value, fit, fitted in sets:
        s = np.array([_as_float(v) for v in separation])
        v = np.array([_as_float(v) for v in value])
        f = np.array([_as_float(v) for v in fitted]) if fitted else np.full(s.shape, np.nan)
        keep = np.isfinite(s) & np.isfinite(v) & (s > 0) & (v > 0)
        if keep.any():
            points.append((path, s[keep], v[keep], fit, f[keep]))
    if not points:
        message = node.get("message") or node.get("status") or "no usable points"
        reason = f"structure function has no usable points ({message})"
        return _unavailable_figure(title, reason), reason
    figure, axes = plt.subplots(figsize=(7.5, 5.0))
    colours = ["#0072B2", "#E69F00", "#009E73", "#CC79A7", "#D55E00"]
    for k, (path, s, v, fit, fitted) in enumerate(points):
        colour = colours[k % len(colours)]
        label = path.split(".", 1)[1] if "." in path else "points"
        axes.loglog(s, v, "o", color=colour, markersize=4, label=label.replace("_", " "))
        if fit is None:
            continue
        if fit.get("model") == "single power law":
            label_fit = (f"{label.replace('_', ' ')} fit: single power law, slope "
                         f"{format_value(_as_float(fit.get('alpha_short')))}")
        else:
            label_fit = (f"{label.replace('_', ' ')} fit: slopes "
                         f"{format_value(_as_float(fit.get('alpha_short')))} / "
                         f"{format_value(_as_float(fit.get('alpha_long')))}, break "
                         f"{format_value(_as_float(fit.get('break_m')))} m")
        # The smooth curve needs the transition width unless both slopes are equal; without it
        # the model values the summary gives at the points are joined instead.
        width_known = "transition_width" in fit or fit.get("alpha_short") == fit.get(
            "alpha_long")
        if width_known:
            grid = np.geomspace(s.min() / 1.5, s.max() * 1.5, 200)
            axes.loglog(grid, broken_power_law_m2(grid, fit), "-", color=colour,
                        label=label_fit)
        elif np.isfinite(fitted).all() and (fitted > 0).all():
            order = np.argsort(s)
            axes.loglog(s[order], fitted[order], "-", color=colour, label=label_fit)
    _plain_log_ticks(axes)
    axes.set_xlabel("baseline (m); wind x lag for the by-lag sets")
    axes.set_ylabel("D (m^2 of path)")
    axes.set_title(title)
    axes.legend(fontsize=8)
    figure.tight_layout()
    return _png_bytes(figure), None


def _figure_antennas(info, correction):
    title = "Phase rms per antenna before and after correction"
    if correction is None or "antenna_phase_rms_before_deg" not in correction:
        reason = "the night has no correction results"
        return _unavailable_figure(title, reason), reason
    before = np.asarray(correction["antenna_phase_rms_before_deg"], dtype=float)
    after = np.asarray(correction["antenna_phase_rms_after_deg"], dtype=float)
    if not (np.isfinite(before).any() or np.isfinite(after).any()):
        reason = "no antenna has measured calibrator phases (no calibrator scans or baselines)"
        return _unavailable_figure(title, reason), reason
    names = info["antenna_names"]
    x = np.arange(len(names))
    figure, axes = plt.subplots(figsize=(9.0, 3.8))
    axes.bar(x - 0.2, np.nan_to_num(before), width=0.4, color="#E69F00", label="before")
    axes.bar(x + 0.2, np.nan_to_num(after), width=0.4, color="#0072B2", label="after")
    for k in np.flatnonzero(~np.isfinite(before) & ~np.isfinite(after)):
        axes.text(x[k], 0, "n/a", ha="center", va="bottom", fontsize=8)
    axes.set_xticks(x)
    axes.set_xticklabels(names, rotation=45 if len(names) > 12 else 0, fontsize=8)
    axes.set_ylabel("phase rms (deg)")
    axes.set_title(title)
    axes.legend(fontsize=8)
    figure.tight_layout()
    return _png_bytes(figure), None


# ---------------------------------------------------------------- page


_STYLE = """
body { font-family: sans-serif; margin: 1.5em; max-width: 70em; color: #222; }
table { border-collapse: collapse; margin: 0.5em 0; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.5em; text-align: left; vertical-align: top; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
.swatch { display: inline-block; width: 0.9em; height: 0.9em; margin-right: 0.3em;
          vertical-align: middle; border: 1px solid #888; }
.unavailable { color: #a00; font-weight: bold; }
figure { margin: 1em 0; } img { max-width: 100%; }
"""


def _night_info(night):
    time_s = np.asarray(night.time_s, dtype=float)
    duration = float(time_s[-1] - time_s[0]) if time_s.size > 1 else 0.0
    valid = np.asarray(night.valid).astype(bool)
    return {
        "epoch_utc": night.time_epoch_utc,
        "antenna_names": list(night.antenna_names),
        "antenna_count": int(night.antenna_count),
        "channel_names": list(night.channel_names),
        "channel_count": int(night.channel_count),
        "sample_count": int(night.time_count),
        "duration_s": duration,
        "valid_sample_fraction": float(valid.mean()) if valid.size else 0.0,
        "scan_count": len(night.scans),
        "calibrator_scan_count": sum(1 for s in night.scans if s["intent"] == "calibrator"),
        "calibrator_phase_rows": int(len(night.calibrator_phases["time_s"])),
        "time_s": time_s,
    }


def _figure_html(number, name, png, reason, caption):
    data = base64.b64encode(png).decode("ascii")
    parts = [f'<figure id="figure-{name}">',
             f'<img src="data:image/png;base64,{data}" alt="{html.escape(caption)}" '
             f'data-file="{name}.png">']
    text = f"Figure {number}. {html.escape(caption)}"
    if reason:
        text += f' <span class="unavailable">Not available: {html.escape(reason)}.</span>'
    parts.append(f"<figcaption>{text}</figcaption></figure>")
    return "\n".join(parts)


def _scalar_rows(node, path):
    """(path, value) of every scalar leaf under a JSON node, lists of numbers left out."""
    if isinstance(node, dict):
        for key, child in node.items():
            yield from _scalar_rows(child, f"{path}.{key}")
    elif isinstance(node, list):
        if not _numeric_list(node):
            for k, child in enumerate(node):
                yield from _scalar_rows(child, f"{path}.{k}")
    else:
        yield path, node


def _key_value_table(document, root):
    if root not in document or document[root] is None:
        return None
    rows = list(_scalar_rows(document[root], root))
    if not rows:
        return None
    body = "".join(f"<tr><th>{html.escape(path.split('.', 1)[1])}</th>"
                   f"<td class=\"num\">{_tag(path, value)}</td></tr>" for path, value in rows)
    return f"<table>{body}</table>"


def _page(document, figures):
    s = document["summary"]
    info = document["report"]["night"]
    out = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
           f"<title>Night report: {html.escape(str(document.get('night', '')))}</title>",
           f"<style>{_STYLE}</style></head><body>",
           f"<h1>Night report: {_tag('night', document.get('night'))}</h1>",
           "<h2>Night</h2><table>",
           f"<tr><th>epoch (UTC)</th><td>{_tag('report.night.epoch_utc', info['epoch_utc'])}"
           "</td></tr>",
           f"<tr><th>duration (s)</th><td class=\"num\">"
           f"{_tag('report.night.duration_s', info['duration_s'])}</td></tr>",
           f"<tr><th>samples</th><td class=\"num\">"
           f"{_tag('report.night.sample_count', info['sample_count'])}</td></tr>",
           f"<tr><th>usable samples (fraction)</th><td class=\"num\">"
           f"{_tag('report.night.valid_sample_fraction', info['valid_sample_fraction'])}"
           "</td></tr>",
           f"<tr><th>antennas ({_tag('report.night.antenna_count', info['antenna_count'])})"
           "</th><td>" + ", ".join(_tag(f"antennas.{k}", name)
                                   for k, name in enumerate(document.get("antennas", [])))
           + "</td></tr>",
           f"<tr><th>channels ({_tag('report.night.channel_count', info['channel_count'])})"
           "</th><td>" + ", ".join(_tag(f"report.night.channel_names.{k}", name)
                                   for k, name in enumerate(info["channel_names"]))
           + "</td></tr>",
           f"<tr><th>scans (calibrator)</th><td class=\"num\">"
           f"{_tag('report.night.scan_count', info['scan_count'])} "
           f"({_tag('report.night.calibrator_scan_count', info['calibrator_scan_count'])})"
           "</td></tr>",
           "</table>"]
    out.append("<h2>Overall</h2><table>")
    for key, label in (("scale", "path-to-phase scale"), ("scale_sigma", "scale 1-sigma"),
                       ("phase_rms_before_deg", "phase rms before (deg)"),
                       ("phase_rms_after_deg", "phase rms after (deg)"),
                       ("improvement_factor", "improvement factor"),
                       ("coherence_before", "coherence before"),
                       ("coherence_after", "coherence after"), ("windows", "windows")):
        if key in s:
            out.append(f"<tr><th>{label}</th><td class=\"num\">"
                       f"{_tag('summary.' + key, s[key])}</td></tr>")
    for key, label in (("wind_speed_m_s", "wind speed (m/s)"),
                       ("wind_direction_deg", "wind direction (deg)")):
        if key in document:
            out.append(f"<tr><th>{label}</th><td class=\"num\">{_tag(key, document[key])}"
                       "</td></tr>")
    out.append("</table><h3>Verdicts</h3><table>")
    for verdict, count in s.get("verdict_counts", {}).items():
        colour = VERDICT_COLOURS.get(verdict, _UNKNOWN_VERDICT_COLOUR)
        out.append(f'<tr><th><span class="swatch" style="background:{colour}"></span>'
                   f"{html.escape(verdict)}</th><td class=\"num\">"
                   f"{_tag('summary.verdict_counts.' + verdict, count)}</td></tr>")
    out.append("</table>")
    notes = document.get("notes", [])
    unavailable = document["report"]["not_available"]
    out.append('<h2 id="not-judged">What could not be judged</h2>')
    if notes or unavailable:
        out.append("<ul>")
        out += [f"<li>{_tag(f'notes.{k}', note)}</li>" for k, note in enumerate(notes)]
        out += [f'<li class="unavailable">{html.escape(name)}: not available: '
                f"{_tag(f'report.not_available.{name}', reason)}</li>"
                for name, reason in unavailable.items()]
        out.append("</ul>")
    else:
        out.append("<p>Everything could be judged.</p>")
    out.append("<h2>Figures</h2>")
    out += figures
    out.append("<h2>Antennas</h2>")
    antennas = document["report"]["antennas"]
    if antennas:
        out.append("<table><tr><th>antenna</th><th>phase rms before (deg)</th>"
                   "<th>phase rms after (deg)</th><th>scale</th><th>windows flagged</th></tr>")
        for k, row in enumerate(antennas):
            cells = [_tag(f"report.antennas.{k}.antenna", row["antenna"])]
            cells += [_tag(f"report.antennas.{k}.{key}", row[key]) for key in (
                "phase_rms_before_deg", "phase_rms_after_deg", "scale", "windows_flagged")]
            out.append("<tr><td>" + cells[0] + "</td>"
                       + "".join(f'<td class="num">{c}</td>' for c in cells[1:]) + "</tr>")
        out.append("</table>")
    else:
        out.append('<p class="unavailable">Not available: the night has no correction '
                   "results.</p>")
    out.append(_windows_table(document))
    for root, title in (("structure_function", "Structure function"),
                        ("fast_switching", "Fast switching"), ("thresholds", "Thresholds")):
        table = _key_value_table(document, root)
        if table:
            out.append(f"<h2>{title}</h2>{table}")
    out.append("</body></html>")
    return "\n".join(out)


def _windows_table(document):
    windows = document.get("windows", [])
    out = [f"<h2>Windows</h2><details open><summary>{len(windows)} windows</summary>"]
    if not windows:
        out.append('<p class="unavailable">Not available: the night has no scans.</p>')
        out.append("</details>")
        return "\n".join(out)
    numbers = ("phase_rms_before_deg", "phase_rms_after_deg", "floor_deg", "improvement_factor",
               "correlation", "slope", "radiometer_path_rms_um", "chi2_per_dof")
    out.append("<table><tr><th>start (s)</th><th>stop (s)</th><th>kind</th><th>verdict</th>"
               "<th>inherited</th>" + "".join(f"<th>{n.replace('_', ' ')}</th>" for n in numbers)
               + "<th>flagged antennas</th><th>reason</th></tr>")
    for k, w in enumerate(windows):
        p = f"windows.{k}"
        colour = VERDICT_COLOURS.get(w.get("verdict"), _UNKNOWN_VERDICT_COLOUR)
        cells = [f'<td class="num">{_tag(p + ".start_s", w.get("start_s"))}</td>',
                 f'<td class="num">{_tag(p + ".stop_s", w.get("stop_s"))}</td>',
                 f"<td>{_tag(p + '.kind', w.get('kind'))}</td>",
                 f'<td><span class="swatch" style="background:{colour}"></span>'
                 f"{_tag(p + '.verdict', w.get('verdict'))}</td>",
                 f"<td>{_tag(p + '.inherited', w.get('inherited'))}</td>"]
        got = w.get("numbers", {})
        cells += [f'<td class="num">{_tag(f"{p}.numbers.{n}", got[n])}</td>' if n in got
                  else "<td></td>" for n in numbers]
        flagged = [f"{_tag(f'{p}.antennas.{a}.antenna', entry.get('antenna'))} "
                   f"({_tag(f'{p}.antennas.{a}.faults', entry.get('faults'))})"
                   for a, entry in enumerate(w.get("antennas", []))
                   if entry.get("faults", "ok") != "ok"]
        cells.append(f"<td>{'; '.join(flagged)}</td>")
        cells.append(f"<td>{_tag(p + '.reason', w.get('reason'))}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</table></details>")
    return "\n".join(out)


def _validate_summary(summary):
    if not isinstance(summary, dict):
        raise ReportInputError("summary: expected a JSON object, got "
                               f"{type(summary).__name__}")
    for key, kind in (("summary", dict), ("windows", list)):
        if not isinstance(summary.get(key), kind):
            raise ReportInputError(f"summary: field '{key}' is missing or not a "
                                   f"{'object' if kind is dict else 'list'}")
    for k, w in enumerate(summary["windows"]):
        for key in ("start_s", "stop_s", "verdict"):
            if key not in w:
                raise ReportInputError(f"summary: field 'windows.{k}.{key}' is missing")


def build_report(night_path, summary, output_dir):
    """Writes the report of a diagnosed night into `output_dir` (created if needed) and
    returns the path of its index.html. `summary` is the JSON object that
    ``skyphase diagnose --format json`` printed (a dict, or the path of a file holding it).
    Raises ReportInputError for a malformed summary and wvr.WvrValueError for a bad night
    file; never modifies its inputs."""
    if isinstance(summary, (str, pathlib.Path)):
        try:
            summary = json.loads(pathlib.Path(summary).read_text())
        except (OSError, json.JSONDecodeError) as error:
            raise ReportInputError(f"summary: cannot read {summary}: {error}") from error
    _validate_summary(summary)
    night = wvr.read_night(night_path)
    info = _night_info(night)
    names = info["antenna_names"]
    if len(summary["windows"]) != len(night.scans):
        # The page would put one night's windows on another night's axis.
        raise ReportInputError(f"summary: field 'windows' has {len(summary['windows'])} "
                               f"entries but {night_path} has {len(night.scans)} scans")
    results = night.results
    retrieval = results.get("retrieval")
    correction = results.get("correction")
    calibration = results.get("calibration")
    diagnosis = results.get("diagnosis")

    output_dir = pathlib.Path(output_dir)
    output_dir.mkdir(parents=True, exist_ok=True)
    with matplotlib.rc_context(_RC):
        made = [
            ("pwv", "Median PWV over antennas with the 10-90 % band, and the radiometer path "
                    "rms per window", _figure_pwv(info, retrieval, summary["windows"])),
            ("phases", "Calibrator phase before and after correction on the shortest, a middle "
                       "and the longest baseline", _figure_phases(info, night, correction)),
            ("timeline", "Verdict per window, and the windows in which each antenna is flagged",
             _figure_timeline(info, summary["windows"], diagnosis)),
            ("structure", "Spatial structure function of the path with the fitted broken power "
                          "law", _figure_structure(summary)),
            ("antennas", "Phase rms per antenna before and after correction",
             _figure_antennas(info, correction)),
        ]
    antennas = []
    if correction is not None and "antenna_phase_rms_before_deg" in correction:
        before = np.asarray(correction["antenna_phase_rms_before_deg"], dtype=float)
        after = np.asarray(correction["antenna_phase_rms_after_deg"], dtype=float)
        scale = np.asarray(correction["antenna_scale"], dtype=float) \
            if "antenna_scale" in correction else np.full(len(names), np.nan)
        faults = np.asarray(diagnosis["antenna_faults"]).astype(int) \
            if diagnosis is not None and "antenna_faults" in diagnosis else None
        for a, name in enumerate(names):
            flagged = int(np.count_nonzero(faults[a])) if faults is not None else None
            antennas.append({
                "antenna": name,
                "phase_rms_before_deg": float(before[a]) if math.isfinite(before[a]) else None,
                "phase_rms_after_deg": float(after[a]) if math.isfinite(after[a]) else None,
                "scale": float(scale[a]) if math.isfinite(scale[a]) else None,
                "windows_flagged": flagged})
    document = dict(summary)
    night_json = {k: v for k, v in info.items() if k != "time_s"}
    document["report"] = {
        "night_file": str(night_path),
        "night": night_json,
        "calibration_status": calibration.attributes.get("status") if calibration else None,
        "antennas": antennas,
        "figures": [f"{name}.png" for name, _, _ in made],
        "not_available": {name: reason for name, _, (_, reason) in made if reason},
    }
    figures = []
    for number, (name, caption, (png, reason)) in enumerate(made, start=1):
        (output_dir / f"{name}.png").write_bytes(png)
        figures.append(_figure_html(number, name, png, reason, caption))
    (output_dir / "summary.json").write_text(json.dumps(document, indent=2, allow_nan=False))
    index = output_dir / "index.html"
    index.write_text(_page(document, figures), encoding="utf-8")
    return index


def main(argv=None):
    parser = argparse.ArgumentParser(
        prog="python3 -m wvr.report",
        description="Writes the HTML report of a night diagnosed by 'skyphase diagnose'.")
    parser.add_argument("night", help="night file written by skyphase diagnose")
    parser.add_argument("--summary", required=True,
                        help="JSON printed by skyphase diagnose --format json ('-' = stdin)")
    parser.add_argument("-o", "--output", required=True, help="folder for index.html")
    args = parser.parse_args(argv)
    try:
        summary = json.load(sys.stdin) if args.summary == "-" else args.summary
        index = build_report(args.night, summary, args.output)
    except (ReportInputError, wvr.WvrError, json.JSONDecodeError) as error:
        print(f"wvr.report: {error}", file=sys.stderr)
        return 2
    print(index)
    return 0


if __name__ == "__main__":
    sys.exit(main())
