"""Season report of a survey catalogue: index.html (figures embedded, and beside it as PNG)
and season.json (every number on the page; see wvr.survey.season_data)."""
import base64
import html
import io
import json
import math
import pathlib

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402  (the backend must be chosen first)

from wvr.survey.season_data import season_data  # noqa: E402

# Plain text: Debian 12's matplotlib 3.6 mathtext parser warns under pytest -W error.
_RC = {"text.parse_math": False, "axes.formatter.use_mathtext": False}


def _percentile_figure(table, title, xlabel):
    keys = list(table)
    fig, ax = plt.subplots(figsize=(7, 3.2))
    x = range(len(keys))
    median = [table[k]["median_mm"] for k in keys]
    low = [table[k]["median_mm"] - table[k]["p10_mm"] for k in keys]
    high = [table[k]["p90_mm"] - table[k]["median_mm"] for k in keys]
    ax.errorbar(x, median, yerr=[low, high], fmt="o", capsize=3, color="#0072B2")
    ax.set_xticks(list(x), keys, rotation=45 if len(keys) > 8 else 0)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("PWV (mm): median, 10th-90th percentile")
    ax.set_title(title)
    return fig


def _fraction_figure(entries, title, xlabel):
    used = [e for e in entries if e["effective_fraction"] is not None]
    fig, ax = plt.subplots(figsize=(7, 3.2))
    ax.bar(range(len(used)), [e["effective_fraction"] for e in used], color="#009E73")
    ax.set_xticks(range(len(used)), [e["bin"] for e in used])
    ax.set_ylim(0, 1)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("fraction of time corrected")
    ax.set_title(title)
    return fig


def _dry_figure(table):
    hours = sorted(table, key=int)
    fig, ax = plt.subplots(figsize=(7, 3.2))
    ax.bar([int(h) for h in hours], [table[h]["fraction"] for h in hours], color="#E69F00")
    ax.set_xlim(-0.5, 23.5)
    ax.set_ylim(0, 1)
    ax.set_xlabel("hour (UTC)")
    ax.set_ylabel("fraction of time")
    ax.set_title("Dry turbulence by hour")
    return fig


def _scale_figure(trend):
    import datetime

    nights = trend["nights"]
    fig, ax = plt.subplots(figsize=(7, 3.2))
    dates = [datetime.datetime.strptime(n["start_utc"], "%Y-%m-%dT%H:%M:%SZ") for n in nights]
    sigma = [n["scale_sigma"] if n["scale_sigma"] is not None else 0.0 for n in nights]
    ax.errorbar(dates, [n["scale"] for n in nights], yerr=sigma, fmt="o", capsize=3,
                color="#CC79A7")
    ax.axhline(1.0, color="#999999", linewidth=0.8)
    ax.set_ylabel("scale")
    slope = trend.get("slope_per_30_days")
    ax.set_title("Scale over the season" + (
        f" (trend {slope:+.3f} +- {trend['slope_sigma_per_30_days']:.3f} per 30 days)"
        if slope is not None else ""))
    fig.autofmt_xdate()
    return fig


def _health_figure(health):
    import datetime

    fig, ax = plt.subplots(figsize=(7, 0.6 + 0.35 * max(1, len(health))))
    for row, (antenna, entry) in enumerate(health.items()):
        for night in entry["nights"]:
            when = datetime.datetime.strptime(night["start_utc"], "%Y-%m-%dT%H:%M:%SZ")
            fraction = night["faulty_fraction"]
            ax.scatter([when], [row], s=40, c=[[0.84, 0.37, 0.0, max(0.08, fraction)]]
                       if fraction > 0 else [[0.0, 0.62, 0.45, 0.5]])
    ax.set_yticks(range(len(health)), list(health))
    ax.set_title("Radiometer health (green: healthy night; orange: faulty, darker = longer)")
    fig.autofmt_xdate()
    return fig


def _figures(data):
    figures = {}
    if data["pwv_by_month"]:
        figures["pwv-by-month"] = _percentile_figure(data["pwv_by_month"], "PWV by month", "month")
    if data["pwv_by_hour_utc"]:
        figures["pwv-by-hour"] = _percentile_figure(data["pwv_by_hour_utc"], "PWV by hour of night",
                                                    "hour (UTC)")
    if any(e["effective_fraction"] is not None for e in data["effective_by_pwv"]):
        figures["effective-by-pwv"] = _fraction_figure(
            data["effective_by_pwv"], "Correction effective against PWV", "PWV")
    if any(e["effective_fraction"] is not None for e in data["effective_by_wind"]):
        figures["effective-by-wind"] = _fraction_figure(
            data["effective_by_wind"], "Correction effective against wind", "wind speed")
    if data["dry_turbulence_by_hour_utc"]:
        figures["dry-by-hour"] = _dry_figure(data["dry_turbulence_by_hour_utc"])
    if data["scale_trend"]["nights"]:
        figures["scale-trend"] = _scale_figure(data["scale_trend"])
    if data["radiometer_health"]:
        figures["radiometer-health"] = _health_figure(data["radiometer_health"])
    return figures


def _fmt(value):
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    return f"{value:.3g}" if isinstance(value, float) else str(value)


def _page(data, images):
    e = html.escape
    parts = [
        "<!DOCTYPE html><html><head><meta charset='utf-8'><title>Season report</title>",
        "<style>body{font-family:sans-serif;max-width:60em;margin:auto}"
        "td,th{padding:2px 8px;text-align:left}</style></head><body>",
        f"<h1>Season report: {e(_fmt(data['first_night_utc']))} to "
        f"{e(_fmt(data['last_night_utc']))}</h1>",
        f"<p>{data['nights']} nights catalogued, {data['nights_ok']} processed, "
        f"{data['nights_failed']} failed.</p>",
    ]
    if data["failed"]:
        parts.append("<h2>Failed nights</h2><table><tr><th>night</th><th>error</th></tr>")
        parts += [f"<tr><td>{e(f['path'])}</td><td>{e(str(f['error']))}</td></tr>"
                  for f in data["failed"]]
        parts.append("</table>")
    for name, png in images.items():
        data_uri = base64.b64encode(png).decode()
        parts.append(f"<h2>{e(name.replace('-', ' '))}</h2>"
                     f"<img alt='{e(name)}' src='data:image/png;base64,{data_uri}'>")
    parts.append("<h2>Radiometers</h2><table><tr><th>antenna</th><th>nights with a fault</th>"
                 "<th>mean faulty fraction</th></tr>")
    for antenna, entry in data["radiometer_health"].items():
        parts.append(f"<tr><td>{e(antenna)}</td><td>{entry['nights_with_fault']}</td>"
                     f"<td>{_fmt(entry['mean_faulty_fraction'])}</td></tr>")
    parts.append("</table><p>Every number: season.json.</p></body></html>")
    return "\n".join(parts)


def build_season_report(catalogue, directory):
    """Writes index.html, season.json and the figures' PNGs into directory; returns index.html."""
    out = pathlib.Path(directory)
    out.mkdir(parents=True, exist_ok=True)
    data = season_data(catalogue)
    (out / "season.json").write_text(json.dumps(data, indent=1), encoding="utf-8")
    images = {}
    with plt.rc_context(_RC):
        for name, fig in _figures(data).items():
            buffer = io.BytesIO()
            fig.tight_layout()
            fig.savefig(buffer, format="png", dpi=90)
            plt.close(fig)
            images[name] = buffer.getvalue()
            (out / f"{name}.png").write_bytes(images[name])
    index = out / "index.html"
    index.write_text(_page(data, images), encoding="utf-8")
    return index
