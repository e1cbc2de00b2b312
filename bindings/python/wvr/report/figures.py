"""The night report's figures: one function per figure, each drawing a night, its processing
result and the report data (wvr.report.data) into a matplotlib figure with the Agg backend.
A figure whose inputs are missing raises FigureUnavailable with the reason, which the page
shows in its place. Curves of fitted models are the library's own (evaluate_m2)."""
import io
import math

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402  (the backend must be chosen first)
import matplotlib.ticker  # noqa: E402
import numpy as np  # noqa: E402

import wvr  # noqa: E402

__all__ = ["FIGURES", "FigureUnavailable", "VERDICT_COLOURS", "png_bytes", "rounded_fit_label"]

# Colours of the verdicts (colour-blind safe: the Okabe-Ito palette).
VERDICT_COLOURS = {
    "corrected": "#009E73",
    "quiet sky": "#56B4E9",
    "dry turbulence": "#E69F00",
    "cloud": "#999999",
    "radiometer fault": "#D55E00",
    "scale off": "#CC79A7",
    "cannot judge": "#F0E442",
    "outside retrieval domain": "#0072B2",
}
UNKNOWN_VERDICT_COLOUR = "#000000"

# Plain text everywhere: Debian 12's matplotlib 3.6 builds its mathtext parser with
# pyparsing 3.0 warnings, which would break callers that turn warnings into errors. Log axes
# get plain tick labels (1e-08) instead of mathtext powers of ten.
RC_PARAMS = {"text.parse_math": False, "axes.formatter.use_mathtext": False}


class FigureUnavailable(wvr.WvrError):
    """The figure cannot be drawn; the message says why, for the page."""


def png_bytes(figure):
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=90)
    plt.close(figure)
    return buffer.getvalue()


def _plain_log_ticks(axes, which="xy"):
    formatter = matplotlib.ticker.FuncFormatter(lambda value, _: f"{value:g}")
    for name in which:
        axis = axes.xaxis if name == "x" else axes.yaxis
        axis.set_major_formatter(formatter)
        # Minor labels at 2 and 5 x 10^n, so that an axis spanning less than a decade has some.
        axis.set_minor_formatter(matplotlib.ticker.FuncFormatter(
            lambda value, _: f"{value:g}" if value > 0 and round(value / 10 ** math.floor(
                math.log10(value)), 6) in (2.0, 5.0) else ""))


def _time_axis(duration_s):
    """(divisor, label) for times after the epoch: minutes for short nights, hours else."""
    if duration_s <= 3 * 3600.0:
        return 60.0, "time after epoch (min)"
    return 3600.0, "time after epoch (h)"


def _column_percentiles(values, percentiles):
    """Percentiles over axis 0 of a [N, T] array ignoring NaN; NaN where a column is empty."""
    out = np.full((len(percentiles), values.shape[1]), np.nan)
    has = np.isfinite(values).any(axis=0)
    if has.any():
        out[:, has] = np.nanpercentile(values[:, has], percentiles, axis=0)
    return out


def pwv(night, processed, data):
    """Median PWV over antennas with the 10-90 % band, and the radiometer path rms per window."""
    retrieval = processed.retrieval
    pwv_mm = np.array(retrieval.pwv_mm, dtype=float)
    unusable = (np.asarray(retrieval.flags).astype(int) & int(wvr.RETRIEVAL_UNUSABLE)) != 0
    pwv_mm[unusable] = np.nan
    if not np.isfinite(pwv_mm).any():
        raise FigureUnavailable("no usable retrieved PWV (every radiometer sample is unusable)")
    divisor, label = _time_axis(data["night"]["duration_s"])
    p10, p50, p90 = _column_percentiles(pwv_mm, [10, 50, 90])
    figure, (top, bottom) = plt.subplots(2, 1, figsize=(9.0, 5.5), sharex=True)
    t = np.asarray(night.time_s, dtype=float) / divisor
    top.fill_between(t, p10, p90, color="#56B4E9", alpha=0.4, linewidth=0,
                     label="10-90 % over antennas")
    top.plot(t, p50, color="#0072B2", linewidth=1.0, label="median over antennas")
    top.set_ylabel("PWV (mm)")
    top.set_title("PWV and radiometer path rms")
    top.legend(loc="upper right", fontsize=8)
    drawn = False
    for w in data["windows"]:
        rms_um = w["numbers"]["radiometer_path_rms_um"]
        if rms_um is not None and rms_um > 0:
            bottom.hlines(rms_um, w["start_s"] / divisor, w["stop_s"] / divisor,
                          color="#D55E00", linewidth=2.0,
                          label=None if drawn else "path rms in window (diagnosis)")
            drawn = True
    if drawn:
        bottom.set_yscale("log")
        _plain_log_ticks(bottom, "y")
        bottom.legend(loc="upper right", fontsize=8)
    else:
        bottom.text(0.5, 0.5, "not available: no window has a radiometer path rms",
                    ha="center", va="center", transform=bottom.transAxes)
    bottom.set_ylabel("path (um)")
    bottom.set_xlabel(label)
    figure.tight_layout()
    return figure


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


def phases(night, processed, data):
    """Calibrator phase before and after correction on the shortest, a middle and the longest
    baseline."""
    if night.antenna_count < 2:
        raise FigureUnavailable("a single antenna has no baselines")
    measured = night.calibrator_phases
    if len(measured["time_s"]) == 0:
        raise FigureUnavailable("the night has no calibrator phases")
    if processed.metrics is None:
        raise FigureUnavailable("the night was not corrected")
    after = np.asarray(processed.metrics.corrected_phase_rad, dtype=float)
    pairs = np.asarray(measured["antenna_pair"])
    picks = _pick_baselines(pairs, np.asarray(night.position_enu_m))
    divisor, label = _time_axis(data["night"]["duration_s"])
    names = data["night"]["antenna_names"]
    figure, axes = plt.subplots(len(picks), 1, figsize=(9.0, 2.2 * len(picks) + 0.6),
                                sharex=True, squeeze=False)
    for row, ((a, b), length_m) in zip(axes[:, 0], picks):
        rows = (pairs[:, 0] == a) & (pairs[:, 1] == b)
        t = np.asarray(measured["time_s"])[rows] / divisor
        row.plot(t, _wrap_deg(np.asarray(measured["phase_rad"])[rows]), ".", markersize=2,
                 color="#E69F00", label="before")
        row.plot(t, _wrap_deg(after[rows]), ".", markersize=2, color="#0072B2", label="after")
        row.set_ylim(-180, 180)
        row.set_ylabel("phase (deg)")
        row.set_title(f"{names[a]}-{names[b]} ({length_m:.0f} m)", fontsize=9)
        row.legend(loc="upper right", fontsize=8, markerscale=4)
    axes[-1, 0].set_xlabel(label)
    figure.suptitle("Calibrator phase before and after correction")
    figure.tight_layout()
    return figure


def timeline(night, processed, data):
    """Verdict per window, and the windows in which each antenna is flagged."""
    windows = data["windows"]
    if processed.diagnosis is None:
        raise FigureUnavailable("the night was not diagnosed")
    if not windows:
        raise FigureUnavailable("the night has no scans, so there are no windows to judge")
    names = data["night"]["antenna_names"]
    divisor, label = _time_axis(data["night"]["duration_s"])
    rows = 1 + len(names)
    height_in = 1.0 + 0.28 * rows + 0.8
    figure, axes = plt.subplots(figsize=(9.0, height_in))
    seen = {}
    for w in windows:
        start = w["start_s"] / divisor
        width = (w["stop_s"] - w["start_s"]) / divisor
        colour = VERDICT_COLOURS.get(w["verdict"], UNKNOWN_VERDICT_COLOUR)
        patch = axes.barh(rows - 1, width, left=start, height=0.8, color=colour,
                          hatch="//" if w["inherited"] else None, edgecolor="white")
        seen.setdefault(w["verdict"], patch)
        for flagged in w["flagged_antennas"]:
            a = names.index(flagged["antenna"])
            axes.barh(rows - 2 - a, width, left=start, height=0.6, color="#D55E00")
    axes.set_yticks(range(rows))
    axes.set_yticklabels(list(reversed(names)) + ["array verdict"], fontsize=8)
    axes.set_xlabel(label)
    axes.set_title("Verdicts per window (hatched: inherited) and flagged antennas (red)")
    # The legend in a fixed 0.45 inch strip at the bottom, whatever the number of antennas.
    figure.legend(seen.values(), seen.keys(), loc="lower center", ncol=4, fontsize=8,
                  frameon=False)
    figure.tight_layout(rect=(0.0, 0.45 / height_in, 1.0, 1.0))
    return figure


def _round_significant(value, digits=2):
    if value is None or not math.isfinite(value) or value == 0:
        return value
    return round(value, digits - 1 - int(math.floor(math.log10(abs(value)))))


def rounded_fit_label(series_name, fit):
    """The legend text of a fit from its report data (a "fit" section): slopes to one decimal,
    the break to two significant digits; the full numbers are in report.json."""
    if fit["model"] == "single power law" or fit["break_m"] is None:
        return f"{series_name}: slope {fit['slope_short']:.1f}"
    return (f"{series_name}: slopes {fit['slope_short']:.1f} / {fit['slope_long']:.1f}, "
            f"break {_round_significant(fit['break_m']):g} m")


# The series a site scientist compares, in drawing order: (key, legend name, colour, marker).
STRUCTURE_SERIES = (
    ("before", "before correction", "#E69F00", "o"),
    ("after", "after correction", "#0072B2", "s"),
    ("radiometer", "radiometer", "#009E73", "^"),
)


def structure(night, processed, data):
    """Spatial structure function of the path before and after correction (calibrator phases)
    and of the radiometer paths, each with its fitted broken power law."""
    turbulence = processed.turbulence
    if turbulence is None:
        raise FigureUnavailable("the night's turbulence was not analysed")
    sections = data["turbulence"]["structure_functions"]
    drawn = [key for key, *_ in STRUCTURE_SERIES if sections[key]["measured"]]
    if not drawn:
        reasons = "; ".join(f"{key}: {sections[key]['message']}" for key, *_ in STRUCTURE_SERIES)
        raise FigureUnavailable(f"no structure function was measured ({reasons})")
    figure, axes = plt.subplots(figsize=(8.0, 5.2))
    for key, name, colour, marker in STRUCTURE_SERIES:
        section = sections[key]
        if not section["measured"]:
            continue
        s = np.array([np.nan if v is None else v for v in section["separation_m"]])
        v = np.array([np.nan if v is None else v for v in section["value_m2"]])
        keep = np.isfinite(s) & np.isfinite(v) & (s > 0) & (v > 0)
        axes.loglog(s[keep], v[keep], marker, color=colour, markersize=4, linestyle="none",
                    label=f"{name} (measured)")
        if section["fitted"] and keep.any():
            grid = np.geomspace(s[keep].min() / 1.3, s[keep].max() * 1.3, 200)
            curve = np.asarray(getattr(turbulence, key).fit.evaluate_m2(grid), dtype=float)
            axes.loglog(grid, curve, "-", color=colour,
                        label=rounded_fit_label(name, section["fit"]))
    _plain_log_ticks(axes)
    axes.set_xlabel("baseline (m)")
    axes.set_ylabel("D (m^2 of path)")
    axes.set_title("Spatial structure function of the path")
    axes.legend(fontsize=8)
    figure.tight_layout()
    return figure


def antennas(night, processed, data):
    """Phase rms per antenna before and after correction."""
    if processed.metrics is None:
        raise FigureUnavailable("the night was not corrected")
    rows = data["antennas"]
    before = np.array([np.nan if r["phase_rms_before_deg"] is None else r["phase_rms_before_deg"]
                       for r in rows])
    after = np.array([np.nan if r["phase_rms_after_deg"] is None else r["phase_rms_after_deg"]
                      for r in rows])
    if not (np.isfinite(before).any() or np.isfinite(after).any()):
        raise FigureUnavailable(
            "no antenna has measured calibrator phases (no calibrator scans or baselines)")
    names = [r["antenna"] for r in rows]
    x = np.arange(len(names))
    figure, axes = plt.subplots(figsize=(9.0, 3.8))
    axes.bar(x - 0.2, np.nan_to_num(before), width=0.4, color="#E69F00", label="before")
    axes.bar(x + 0.2, np.nan_to_num(after), width=0.4, color="#0072B2", label="after")
    for k in np.flatnonzero(~np.isfinite(before) & ~np.isfinite(after)):
        axes.text(x[k], 0, "n/a", ha="center", va="bottom", fontsize=8)
    axes.set_xticks(x)
    axes.set_xticklabels(names, rotation=45 if len(names) > 12 else 0, fontsize=8)
    axes.set_ylabel("phase rms (deg)")
    axes.set_title("Phase rms per antenna before and after correction")
    axes.legend(fontsize=8)
    figure.tight_layout()
    return figure


# (name, caption, function) in page order; the name is the PNG's file stem.
FIGURES = (
    ("pwv", "Median PWV over antennas with the 10-90 % band, and the radiometer path rms per "
            "window", pwv),
    ("phases", "Calibrator phase before and after correction on the shortest, a middle and the "
               "longest baseline", phases),
    ("timeline", "Verdict per window, and the windows in which each antenna is flagged",
     timeline),
    ("structure", "Spatial structure function of the path before and after correction and of "
                  "the radiometers, with fitted broken power laws (rounded in the legend; every "
                  "fit number is in report.json under turbulence.structure_functions)",
     structure),
    ("antennas", "Phase rms per antenna before and after correction", antennas),
)


def unavailable_png(title, reason):
    """A small figure that says what is missing, so that the page keeps its layout."""
    figure, axes = plt.subplots(figsize=(9.0, 2.2))
    axes.set_axis_off()
    axes.set_title(title)
    axes.text(0.5, 0.5, "not available: " + reason, ha="center", va="center", fontsize=12,
              transform=axes.transAxes, wrap=True)
    return png_bytes(figure)


def render_all(night, processed, data):
    """[(name, caption, png bytes, reason or None)] of every figure, in page order."""
    made = []
    with matplotlib.rc_context(RC_PARAMS):
        for name, caption, draw in FIGURES:
            try:
                made.append((name, caption, png_bytes(draw(night, processed, data)), None))
            except FigureUnavailable as missing:
                reason = str(missing)
                made.append((name, caption, unavailable_png(caption, reason), reason))
    return made
