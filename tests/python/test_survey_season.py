"""The season generator (scenarios drawn from a spec), the season report's numbers from a
hand-made catalogue, and the survey command line's bad-input handling."""
import json
import os
import pathlib
import subprocess
import sys
import tomllib

import numpy as np
import pytest

import wvr
import wvr.survey
from wvr.survey.season import SeasonSpecError, generate_season
from wvr.survey.season_data import season_data
from wvr.survey.season_report import build_season_report


def write_spec(folder, testdata, **replacements):
    spec = (testdata / "seasons" / "demo-season.toml").read_text()
    spec = spec.replace('base_scenario = "../demo-scenario.toml"',
                        f'base_scenario = "{(testdata / "demo-scenario.toml").resolve()}"')
    for old, new in replacements.items():
        assert old in spec, old
        spec = spec.replace(old, new)
    path = folder / "spec.toml"
    path.write_text(spec)
    return path


def test_the_generator_draws_reproducible_dated_nights(tmp_path, testdata):
    spec = write_spec(tmp_path, testdata)
    first = generate_season(spec, tmp_path / "a", simulate=False)
    second = generate_season(spec, tmp_path / "b", simulate=False)
    assert len(first) == 12
    for a, b in zip(first, second):
        assert a.read_text() == b.read_text()
    scenarios = [tomllib.loads(p.read_text()) for p in first]
    assert scenarios[0]["start_utc"] == "2026-03-01T23:30:00Z"
    assert scenarios[1]["start_utc"] == "2026-03-16T23:30:00Z"  # 15 days later
    assert len({s["seed"] for s in scenarios}) == 12
    for s in scenarios:
        assert s["array"]["antenna_count"] == 4 and s["duration_s"] == 900.0
        wet = [t for t in s["turbulence"] if t["kind"] == "wet"][0]
        speed = (wet["wind_east_m_s"] ** 2 + wet["wind_north_m_s"] ** 2) ** 0.5
        assert 3.0 <= speed <= 12.0  # the spec's uniform bounds
        for cloud in s.get("clouds", []):
            assert 0.03 <= cloud["liquid_water_path_kg_m2"] <= 0.1
        for fault in s.get("faults", []):
            assert fault["kind"] in ("spike", "gain_drift") and fault["antenna"] != 0
    for path in first:
        wvr.load_scenario(path)  # the library reads what the generator wrote
    truth = json.loads((tmp_path / "a" / "season-truth.json").read_text())
    assert [t["pwv_mm"] for t in truth] == [s["atmosphere"]["pwv_mm"] for s in scenarios]
    assert (tmp_path / "a" / "nights.txt").read_text().split() == [p.name for p in first]


def test_certain_events_appear_in_every_night(tmp_path, testdata):
    spec = write_spec(tmp_path, testdata, **{"probability = 0.3\n": "probability = 1.0\n",
                                             "probability = 0.25\n": "probability = 1.0\n",
                                             "probability = 0.35\n": "probability = 1.0\n"})
    for path in generate_season(spec, tmp_path / "out", simulate=False):
        s = tomllib.loads(path.read_text())
        assert len(s["faults"]) == 1 and len(s["clouds"]) == 1
        dry = [t for t in s["turbulence"] if t["kind"] == "dry"]
        assert len(dry) == 1 and max(v for _, v in dry[0]["schedule"]) == 1.0


@pytest.mark.parametrize("old, new, field", [
    ('distribution = "lognormal"\nmedian = 1.2', 'distribution = "gamma"\nmedian = 1.2',
     "pwv_mm.distribution"),
    ("low = 3.0\nhigh = 12.0", "low = 13.0\nhigh = 12.0", "wind_speed_m_s.low"),
    ("probability = 0.3\n", "probability = 1.5\n", "fault.probability"),
    ("nights = 12", "nights = 0", "nights"),
    ('first_night_utc = "2026-03-01T23:30:00Z"', 'first_night_utc = "March"', "first_night_utc"),
])
def test_a_bad_spec_names_the_field(tmp_path, testdata, old, new, field):
    spec = write_spec(tmp_path, testdata, **{old: new})
    with pytest.raises(SeasonSpecError, match=field):
        generate_season(spec, tmp_path / "out", simulate=False)
    assert issubclass(SeasonSpecError, wvr.WvrValueError)


def night_row(name, start_utc, scale, timeline, verdicts, health, wind=None):
    return {
        "content_sha256": name * 8, "options_json": "{}", "path": f"/nights/{name}.h5",
        "night_name": name, "status": "ok", "software_version": "test",
        "start_utc": start_utc, "scale": scale, "scale_sigma": 0.01,
        "pwv_timeline_json": json.dumps(timeline), "verdict_timeline_json": json.dumps(verdicts),
        "radiometer_health_json": json.dumps(health), "wind_speed_m_s": wind,
    }


@pytest.fixture
def hand_made_catalogue(tmp_path):
    path = tmp_path / "hand.sqlite"
    with wvr.survey.Catalogue(path) as cat:
        # 23:30 UTC, 1 h: PWV 0.8 mm then 1.2 mm (from 00:00); corrected, then dry turbulence.
        cat.record(night_row("a", "2026-03-01T23:30:00Z", 1.00,
                             [[0.0, 0.8], [1800.0, 1.2]],
                             [[0.0, 1800.0, "corrected"], [1800.0, 3600.0, "dry turbulence"]],
                             {"A1": 0.0, "A2": 0.5}, wind=4.0))
        # 30 days later, 00:00 UTC, 1 h at 2.5 mm, all corrected; scale 0.1 higher.
        cat.record(night_row("b", "2026-03-31T00:00:00Z", 1.10, [[0.0, 2.5]],
                             [[0.0, 3600.0, "corrected"]], {"A1": 0.0, "A2": 0.0}, wind=10.0))
        # 60 days after the first: scale 0.2 higher (a straight line, 0.1 per 30 days).
        cat.record(night_row("c", "2026-04-30T23:30:00Z", 1.20, [[0.0, 1.0]],
                             [[0.0, 1800.0, "cloud"]], {"A1": 1.0, "A2": 0.0}))
        cat.record({"content_sha256": "d" * 64, "options_json": "{}", "path": "/nights/d.h5",
                    "status": "failed", "error": "WvrValueError: broken", "software_version": "t"})
    return path


def test_season_numbers_follow_the_catalogue(hand_made_catalogue):
    data = season_data(hand_made_catalogue)
    assert (data["nights"], data["nights_ok"], data["nights_failed"]) == (4, 3, 1)
    assert data["failed"] == [{"path": "/nights/d.h5", "error": "WvrValueError: broken"}]
    assert data["pwv_by_month"]["2026-03"]["count"] == 3  # 0.8 and 1.2 (night a), 2.5 (b)
    assert data["pwv_by_month"]["2026-03"]["median_mm"] == pytest.approx(1.2)
    assert data["pwv_by_month"]["2026-04"]["median_mm"] == pytest.approx(1.0)
    assert data["pwv_by_hour_utc"]["23"]["count"] == 2  # a's first window, c
    assert data["pwv_by_hour_utc"]["0"]["count"] == 2  # a's second window, b
    dry = data["dry_turbulence_by_hour_utc"]
    # Window midpoints: a 23:45 corrected, 00:15 dry; b 00:30 corrected; c 23:45 cloud.
    assert dry["0"] == {"diagnosed_s": 5400.0, "fraction": pytest.approx(1800.0 / 5400.0)}
    assert dry["23"]["fraction"] == 0.0
    by_pwv = {e["bin"]: e for e in data["effective_by_pwv"]}
    assert by_pwv["0.5-1 mm"]["effective_fraction"] == 1.0  # a's first half at 0.8 mm
    assert by_pwv["1-1.5 mm"]["diagnosed_s"] == 3600.0  # a's dry half and c's cloud
    assert by_pwv["1-1.5 mm"]["effective_fraction"] == 0.0
    assert by_pwv["2-3 mm"]["effective_fraction"] == 1.0
    by_wind = {e["bin"]: e for e in data["effective_by_wind"]}
    assert by_wind["3-6 m/s"]["effective_fraction"] == 0.5 and by_wind["9-12 m/s"]["effective_fraction"] == 1.0
    trend = data["scale_trend"]
    # Equal sigmas: the ordinary least-squares line through (days, scale).
    days = np.array([0.0, 29.0 + 1.0 / 48.0, 60.0])
    expected = np.polyfit(days, [1.0, 1.1, 1.2], 1)[0] * 30.0
    assert trend["slope_per_30_days"] == pytest.approx(expected, rel=1e-9)
    assert trend["slope_sigma_per_30_days"] > 0
    health = data["radiometer_health"]
    assert health["A2"]["nights_with_fault"] == 1 and health["A1"]["nights_with_fault"] == 1
    assert health["A1"]["mean_faulty_fraction"] == pytest.approx(1.0 / 3.0)


def test_the_season_report_page_and_json(hand_made_catalogue, tmp_path):
    index = build_season_report(hand_made_catalogue, tmp_path / "report")
    page = index.read_text()
    assert "2026-03-01T23:30:00Z" in page and "/nights/d.h5" in page
    assert page.count("data:image/png;base64,") == 7
    for name in ("pwv-by-month", "pwv-by-hour", "effective-by-pwv", "effective-by-wind",
                 "dry-by-hour", "scale-trend", "radiometer-health"):
        assert (tmp_path / "report" / f"{name}.png").stat().st_size > 1000
    assert json.loads((tmp_path / "report" / "season.json").read_text()) == \
        json.loads(json.dumps(season_data(hand_made_catalogue)))


def run_cli(*args, cwd):
    # The package this test imported, wherever the child's working folder is.
    env = dict(os.environ, PYTHONPATH=str(pathlib.Path(wvr.__file__).resolve().parents[1]))
    return subprocess.run([sys.executable, "-m", "wvr.survey", *args], env=env,
                          capture_output=True, text=True, cwd=cwd)


@pytest.mark.parametrize("args, field", [
    (["run", "/no/such/night.h5", "--catalogue", "x.sqlite"], "/no/such/night.h5"),
    (["run", "/no/such/*.h5", "--catalogue", "x.sqlite"], "/no/such/*.h5"),
    (["run", "--manifest", "/no/such/manifest.txt", "--catalogue", "x.sqlite"], "manifest"),
    (["run", "--catalogue", "x.sqlite"], "nights: none given"),
    (["run", "n.h5", "--catalogue", "x.sqlite", "--options", '{"window": 1}'], "'window'"),
    (["run", "n.h5", "--catalogue", "x.sqlite", "--options", "[1]"], "--options"),
    (["run", "n.h5", "--catalogue", "x.sqlite", "--workers", "0"], "--workers = 0"),
])
def test_command_line_bad_input_exits_2_with_one_line(tmp_path, args, field):
    (tmp_path / "n.h5").write_text("x")
    result = run_cli(*args, cwd=tmp_path)
    assert result.returncode == 2, result.stderr
    assert len(result.stderr.strip().splitlines()) == 1 and field in result.stderr, result.stderr
    assert not (tmp_path / "x.sqlite").exists()


def test_skyphase_survey_runs_the_python_command(tmp_path, skyphase):
    env = dict(os.environ)
    result = subprocess.run([skyphase, "survey", "run", str(tmp_path / "none.h5"),
                             "--catalogue", str(tmp_path / "c.sqlite")],
                            env=env, capture_output=True, text=True)
    assert result.returncode == 2 and "none.h5" in result.stderr, result.stderr
    result = subprocess.run([skyphase, "survey", "run", "--help"], env=env, capture_output=True,
                            text=True)
    assert result.returncode == 0 and "--catalogue" in result.stdout
