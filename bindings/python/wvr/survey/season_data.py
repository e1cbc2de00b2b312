"""The numbers of the season report, from a survey catalogue: PWV by month and by hour of the
night, when correction was effective against PWV and wind, dry turbulence by hour, the
scale's trend and each radiometer's health. Plain dicts and lists (the report's JSON)."""
import datetime
import math

import numpy as np

from wvr.survey._night_task import EFFECTIVE_VERDICTS
from wvr.survey.catalogue import Catalogue

DRY_VERDICT = "dry turbulence"
#: Edges of the PWV bins (mm) and wind bins (m/s) of the effectiveness tables.
PWV_EDGES_MM = (0.0, 0.5, 1.0, 1.5, 2.0, 3.0, 5.0, math.inf)
WIND_EDGES_M_S = (0.0, 3.0, 6.0, 9.0, 12.0, 20.0, math.inf)


def _epoch(text):
    return datetime.datetime.strptime(text, "%Y-%m-%dT%H:%M:%SZ").replace(
        tzinfo=datetime.timezone.utc)


def _percentiles(values):
    values = np.asarray(values, dtype=float)
    if values.size == 0:
        return {"count": 0, "p10_mm": None, "median_mm": None, "p90_mm": None}
    p10, p50, p90 = np.percentile(values, [10, 50, 90])
    return {"count": int(values.size), "p10_mm": float(p10), "median_mm": float(p50),
            "p90_mm": float(p90)}


def _bin_label(edges, k, unit):
    lo, hi = edges[k], edges[k + 1]
    return f">= {lo:g} {unit}" if math.isinf(hi) else f"{lo:g}-{hi:g} {unit}"


def _pwv_at(timeline, t_s):
    """PWV (mm) of the window holding t_s on the night's PWV timeline."""
    starts = [start for start, _ in timeline]
    k = int(np.searchsorted(starts, t_s, side="right")) - 1
    return timeline[max(k, 0)][1] if timeline else None


def season_data(catalogue_path):
    with Catalogue(catalogue_path) as cat:
        rows = cat.rows()
    ok = [r for r in rows if r["status"] == "ok" and r.get("start_utc")]
    failed = [{"path": r["path"], "error": r["error"]} for r in rows if r["status"] != "ok"]
    pwv_month, pwv_hour = {}, {h: [] for h in range(24)}
    dry_s, diagnosed_s = np.zeros(24), np.zeros(24)
    pwv_bins = [[0.0, 0.0] for _ in PWV_EDGES_MM[:-1]]  # [effective s, diagnosed s]
    wind_bins = [[0.0, 0.0] for _ in WIND_EDGES_M_S[:-1]]
    health = {}
    scale_trend = []
    for r in ok:
        epoch = _epoch(r["start_utc"])
        for start_s, pwv_mm in r.get("pwv_timeline") or []:
            when = epoch + datetime.timedelta(seconds=start_s)
            pwv_month.setdefault(when.strftime("%Y-%m"), []).append(pwv_mm)
            pwv_hour[when.hour].append(pwv_mm)
        wind = r.get("wind_speed_m_s")
        for start_s, stop_s, verdict in r.get("verdict_timeline") or []:
            duration = max(0.0, stop_s - start_s)
            hour = (epoch + datetime.timedelta(seconds=0.5 * (start_s + stop_s))).hour
            diagnosed_s[hour] += duration
            dry_s[hour] += duration * (verdict == DRY_VERDICT)
            effective = duration * (verdict in EFFECTIVE_VERDICTS)
            pwv = _pwv_at(r.get("pwv_timeline") or [], 0.5 * (start_s + stop_s))
            if pwv is not None:
                k = int(np.searchsorted(PWV_EDGES_MM, pwv, side="right")) - 1
                pwv_bins[k][0] += effective
                pwv_bins[k][1] += duration
            if wind is not None:
                k = int(np.searchsorted(WIND_EDGES_M_S, wind, side="right")) - 1
                wind_bins[k][0] += effective
                wind_bins[k][1] += duration
        for antenna, fraction in (r.get("radiometer_health") or {}).items():
            health.setdefault(antenna, []).append(
                {"start_utc": r["start_utc"], "faulty_fraction": fraction})
        if r.get("scale") is not None:
            scale_trend.append({"start_utc": r["start_utc"], "scale": r["scale"],
                                "scale_sigma": r.get("scale_sigma")})
    return {
        "nights": len(rows),
        "nights_ok": len(ok),
        "nights_failed": len(failed),
        "failed": failed,
        "first_night_utc": ok[0]["start_utc"] if ok else None,
        "last_night_utc": ok[-1]["start_utc"] if ok else None,
        "pwv_by_month": {m: _percentiles(v) for m, v in sorted(pwv_month.items())},
        "pwv_by_hour_utc": {str(h): _percentiles(v) for h, v in pwv_hour.items() if v},
        "effective_by_pwv": [
            {"bin": _bin_label(PWV_EDGES_MM, k, "mm"), "diagnosed_s": d,
             "effective_fraction": (e / d if d > 0 else None)}
            for k, (e, d) in enumerate(pwv_bins)],
        "effective_by_wind": [
            {"bin": _bin_label(WIND_EDGES_M_S, k, "m/s"), "diagnosed_s": d,
             "effective_fraction": (e / d if d > 0 else None)}
            for k, (e, d) in enumerate(wind_bins)],
        "dry_turbulence_by_hour_utc": {
            str(h): {"diagnosed_s": float(diagnosed_s[h]), "fraction": float(dry_s[h] / diagnosed_s[h])}
            for h in range(24) if diagnosed_s[h] > 0},
        "scale_trend": {"nights": scale_trend, **_scale_fit(scale_trend)},
        "radiometer_health": {a: {"nights": v,
                                  "mean_faulty_fraction": float(np.mean([x["faulty_fraction"] for x in v])),
                                  "nights_with_fault": sum(x["faulty_fraction"] > 0 for x in v)}
                              for a, v in sorted(health.items())},
    }


def _scale_fit(trend):
    """Weighted least-squares line through the nights' scales against time (weights
    1/sigma^2): the slope per 30 days and its 1-sigma error."""
    points = [(_epoch(p["start_utc"]).timestamp() / 86400.0, p["scale"], p["scale_sigma"])
              for p in trend if p["scale_sigma"] and p["scale_sigma"] > 0]
    if len(points) < 3:
        return {"slope_per_30_days": None, "slope_sigma_per_30_days": None}
    days, scale, sigma = (np.array(c, dtype=float) for c in zip(*points))
    weights = 1.0 / sigma**2
    design = np.column_stack([np.ones_like(days), days - days.mean()])
    normal = design.T @ (weights[:, None] * design)
    covariance = np.linalg.inv(normal)
    coefficients = covariance @ design.T @ (weights * scale)
    return {"slope_per_30_days": float(30.0 * coefficients[1]),
            "slope_sigma_per_30_days": float(30.0 * math.sqrt(covariance[1, 1]))}
