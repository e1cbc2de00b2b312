"""Season generator for the simulator: N nights whose PWV, turbulence, dry-turbulence
episodes, clouds and radiometer faults are drawn from distributions in a spec (TOML), written
as scenario files, simulated into night files, and listed in a manifest for the survey.

A spec (every number invented for demo data; see testdata/seasons/demo-season.toml)::

    name = "demo season"
    nights = 12
    seed = 7
    base_scenario = "../demo-scenario.toml"   # array, source, observing, site, radiometer
    first_night_utc = "2026-03-01T23:30:00Z"
    days_between_nights = 15.0
    duration_s = 900.0                        # optional overrides of the base scenario
    antenna_count = 4

    [pwv_mm]                                  # each night's PWV at its start
    distribution = "lognormal"                # lognormal(median, sigma_ln), uniform(low, high),
    median = 1.0                              # normal(mean, sigma), fixed(value)
    sigma_ln = 0.5

    [wet_path_rms_um]                         # the wet layer's strength
    [wind_speed_m_s]
    [wind_direction_to_deg]
    [dry_episode]      probability, path_rms_um, duration_fraction (of the night)
    [cloud]            probability, liquid_water_path_kg_m2, duration_fraction
    [fault]            probability, kinds = ["spike", "gain_drift", ...], [fault.magnitude.<kind>]

The night's date is the scenario's start_utc, which the simulator writes as the night file's
time epoch; the catalogue reads it from there.
"""
import datetime
import json
import math
import pathlib
import tomllib

import numpy as np

import wvr

_DISTRIBUTIONS = ("lognormal", "uniform", "normal", "fixed")
_EPISODE_RAMP_S = 60.0  # s, rise and fall of a dry episode's strength (common practice: smooth)


class SeasonSpecError(wvr.WvrValueError):
    """A season spec with a missing or bad field; the message names it."""


def draw(rng, spec, field):
    """One value from a distribution table {distribution = ..., parameters}."""
    if not isinstance(spec, dict):
        raise SeasonSpecError(f"season spec: '{field}' must be a table with 'distribution'")
    kind = spec.get("distribution")

    def number(name):
        value = spec.get(name)
        if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
            raise SeasonSpecError(f"season spec: {field}.{name} = {value!r} must be a finite number")
        return float(value)

    if kind == "fixed":
        return number("value")
    if kind == "uniform":
        low, high = number("low"), number("high")
        if not low <= high:
            raise SeasonSpecError(f"season spec: {field}.low = {low} is above high = {high}")
        return float(rng.uniform(low, high))
    if kind == "normal":
        mean, sigma = number("mean"), number("sigma")
        if sigma < 0:
            raise SeasonSpecError(f"season spec: {field}.sigma = {sigma} must be >= 0")
        return float(rng.normal(mean, sigma))
    if kind == "lognormal":
        median, sigma_ln = number("median"), number("sigma_ln")
        if median <= 0 or sigma_ln < 0:
            raise SeasonSpecError(f"season spec: {field}: median = {median} must be > 0 and "
                                  f"sigma_ln = {sigma_ln} >= 0")
        return float(median * math.exp(rng.normal(0.0, sigma_ln)))
    raise SeasonSpecError(f"season spec: {field}.distribution = {kind!r} is not one of "
                          f"{', '.join(_DISTRIBUTIONS)}")


def _probability(spec, field):
    p = spec.get("probability", 0.0)
    if not isinstance(p, (int, float)) or not 0.0 <= p <= 1.0:
        raise SeasonSpecError(f"season spec: {field}.probability = {p!r} must be in [0, 1]")
    return float(p)


def _positive(value, field):
    if not value > 0:
        raise SeasonSpecError(f"season spec: {field} drew {value}, which must be > 0")
    return value


def load_spec(path):
    path = pathlib.Path(path)
    try:
        spec = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, tomllib.TOMLDecodeError) as error:
        raise SeasonSpecError(f"season spec: cannot read {path}: {error}") from error
    spec["_directory"] = path.resolve().parent
    return spec


def _epoch(text, field):
    try:
        return datetime.datetime.strptime(text, "%Y-%m-%dT%H:%M:%SZ").replace(
            tzinfo=datetime.timezone.utc)
    except (TypeError, ValueError) as error:
        raise SeasonSpecError(f"season spec: {field} = {text!r} is not YYYY-MM-DDThh:mm:ssZ") \
            from error


def night_scenarios(spec, output_directory):
    """The scenario of every night (dicts in the scenario file's layout) and what was drawn."""
    directory = spec["_directory"]
    nights = spec.get("nights")
    if not isinstance(nights, int) or nights < 1:
        raise SeasonSpecError(f"season spec: nights = {nights!r} must be an integer >= 1")
    base_path = directory / str(spec.get("base_scenario", ""))
    try:
        base = tomllib.loads(base_path.read_text(encoding="utf-8"))
    except (OSError, tomllib.TOMLDecodeError) as error:
        raise SeasonSpecError(f"season spec: base_scenario: cannot read {base_path}: {error}") \
            from error
    for key in ("site_file", "radiometer_file"):
        if key in base:
            absolute = (base_path.parent / base[key]).resolve()
            base[key] = str(pathlib.Path(_relative(absolute, output_directory)))
    first = _epoch(spec.get("first_night_utc"), "first_night_utc")
    step_days = float(spec.get("days_between_nights", 1.0))
    rng = np.random.default_rng(int(spec.get("seed", 0)))
    scenarios, drawn = [], []
    for index in range(nights):
        s = json.loads(json.dumps(base))  # deep copy
        start = first + datetime.timedelta(days=step_days * index)
        s["name"] = f"{spec.get('name', 'season')} night {index + 1}"
        s["seed"] = int(rng.integers(1, 2**31 - 1))
        s["start_utc"] = start.strftime("%Y-%m-%dT%H:%M:%SZ")
        if "duration_s" in spec:
            s["duration_s"] = float(spec["duration_s"])
        if "antenna_count" in spec:
            s.setdefault("array", {})["antenna_count"] = int(spec["antenna_count"])
        duration = float(s["duration_s"])
        antennas = int(s.get("array", {}).get("antenna_count", 1))
        truth = {"start_utc": s["start_utc"]}
        pwv = _positive(draw(rng, spec.get("pwv_mm"), "pwv_mm"), "pwv_mm")
        s.setdefault("atmosphere", {})["pwv_mm"] = truth["pwv_mm"] = pwv
        layers = s.get("turbulence", [])
        wet = [t for t in layers if t.get("kind") == "wet"]
        dry = [t for t in layers if t.get("kind") == "dry"]
        speed = _positive(draw(rng, spec.get("wind_speed_m_s"), "wind_speed_m_s"),
                          "wind_speed_m_s")
        direction = draw(rng, spec.get("wind_direction_to_deg"), "wind_direction_to_deg")
        truth.update(wind_speed_m_s=speed, wind_direction_to_deg=direction % 360.0)
        for layer in wet:
            layer["path_rms_um"] = truth["wet_path_rms_um"] = _positive(
                draw(rng, spec.get("wet_path_rms_um"), "wet_path_rms_um"), "wet_path_rms_um")
            layer["wind_east_m_s"] = speed * math.sin(math.radians(direction))
            layer["wind_north_m_s"] = speed * math.cos(math.radians(direction))
        episode = spec.get("dry_episode", {})
        truth["dry_episode"] = None
        if rng.uniform() < _probability(episode, "dry_episode") and dry:
            fraction = draw(rng, episode.get("duration_fraction"), "dry_episode.duration_fraction")
            length = min(max(fraction, 0.0), 0.9) * duration
            t0 = float(rng.uniform(0.0, duration - length))
            for layer in dry:
                layer["path_rms_um"] = _positive(
                    draw(rng, episode.get("path_rms_um"), "dry_episode.path_rms_um"),
                    "dry_episode.path_rms_um")
                layer["schedule"] = [[0.0, 0.0], [t0, 0.0], [t0 + _EPISODE_RAMP_S, 1.0],
                                     [t0 + length, 1.0], [t0 + length + _EPISODE_RAMP_S, 0.0]]
            truth["dry_episode"] = [t0, t0 + length]
        else:
            s["turbulence"] = [t for t in layers if t.get("kind") != "dry"]
        cloud = spec.get("cloud", {})
        s["clouds"] = []
        truth["cloud"] = None
        if rng.uniform() < _probability(cloud, "cloud"):
            fraction = draw(rng, cloud.get("duration_fraction"), "cloud.duration_fraction")
            length = min(max(fraction, 0.0), 0.9) * duration
            t0 = float(rng.uniform(0.0, duration - length))
            lwp = _positive(draw(rng, cloud.get("liquid_water_path_kg_m2"),
                                 "cloud.liquid_water_path_kg_m2"), "cloud.liquid_water_path_kg_m2")
            s["clouds"] = [{"start_s": t0, "stop_s": t0 + length, "liquid_water_path_kg_m2": lwp,
                            "ramp_s": min(90.0, length / 4)}]
            truth["cloud"] = [t0, t0 + length]
        fault = spec.get("fault", {})
        s["faults"] = []
        truth["fault"] = None
        if rng.uniform() < _probability(fault, "fault") and antennas > 1:
            kinds = fault.get("kinds", [])
            if not kinds:
                raise SeasonSpecError("season spec: fault.kinds must list at least one kind")
            kind = str(kinds[int(rng.integers(len(kinds)))])
            antenna = int(rng.integers(1, antennas))  # never the reference antenna 0
            magnitude = draw(rng, fault.get("magnitude", {}).get(kind), f"fault.magnitude.{kind}")
            t0 = float(rng.uniform(0.0, 0.5 * duration))
            s["faults"] = [{"antenna": antenna, "kind": kind, "start_s": t0, "stop_s": duration,
                            "magnitude": magnitude}]
            truth["fault"] = {"antenna": antenna, "kind": kind, "start_s": t0}
        for key in ("turbulence", "clouds", "faults"):
            if not s.get(key):
                s.pop(key, None)  # absent rather than an empty array of tables
        scenarios.append(s)
        drawn.append(truth)
    return scenarios, drawn


def _relative(path, start):
    import os

    return os.path.relpath(path, pathlib.Path(start).resolve())


def generate_season(spec_path, output_directory, *, simulate=True, threads=0):
    """Writes night-NNN.toml (scenario), night-NNN.h5 (simulated, unless simulate=False),
    nights.txt (manifest of the night files) and season-truth.json (what was drawn) into
    output_directory; returns the paths of the night files (or scenarios)."""
    out = pathlib.Path(output_directory)
    out.mkdir(parents=True, exist_ok=True)
    spec = load_spec(spec_path)
    scenarios, drawn = night_scenarios(spec, out)
    written = []
    for index, scenario in enumerate(scenarios):
        stem = f"night-{index + 1:03d}"
        scenario_path = out / f"{stem}.toml"
        scenario_path.write_text(to_toml(scenario), encoding="utf-8")
        drawn[index]["scenario"] = scenario_path.name
        if simulate:
            night = wvr.simulate_night(wvr.load_scenario(scenario_path), threads=threads)
            night_path = out / f"{stem}.h5"
            wvr.write_night(night, night_path, overwrite=True, threads=threads)
            drawn[index]["night"] = night_path.name
            written.append(night_path)
        else:
            written.append(scenario_path)
    (out / "nights.txt").write_text("".join(f"{p.name}\n" for p in written), encoding="utf-8")
    (out / "season-truth.json").write_text(json.dumps(drawn, indent=1), encoding="utf-8")
    return written


def _toml_value(value):
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        if not math.isfinite(value):
            raise SeasonSpecError(f"scenario: non-finite value {value}")
        return repr(float(value))
    if isinstance(value, str):
        return json.dumps(value)  # a TOML basic string for our names and paths
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    raise SeasonSpecError(f"scenario: cannot write {value!r} as TOML")


def to_toml(document):
    """A scenario dict as TOML: scalars, then tables, then arrays of tables."""
    lines = [f"{k} = {_toml_value(v)}" for k, v in document.items()
             if not isinstance(v, dict) and not _is_table_array(v)]
    for key, value in document.items():
        if isinstance(value, dict):
            lines += _toml_table(key, value)
    for key, value in document.items():
        if _is_table_array(value):
            for table in value:
                lines += ["", f"[[{key}]]"] + [f"{k} = {_toml_value(v)}" for k, v in table.items()]
    return "\n".join(lines) + "\n"


def _toml_table(name, table):
    """[name] with its scalars, then its sub-tables as [name.key] (e.g. [true_sky.calibration])."""
    lines = ["", f"[{name}]"] + [f"{k} = {_toml_value(v)}" for k, v in table.items()
                                 if not isinstance(v, dict)]
    for key, value in table.items():
        if isinstance(value, dict):
            lines += _toml_table(f"{name}.{key}", value)
    return lines


def _is_table_array(value):
    return isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)
