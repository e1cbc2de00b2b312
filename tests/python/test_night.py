"""Nights from Python: scenarios and the simulator, night files written and read bit for bit
(also against the skyphase program), nights built from numpy and the errors that name the
dataset path, result groups and the night summary."""
import collections.abc
import gc
import hashlib
import os
import re
import subprocess
import time

import numpy as np
import pytest

import wvr

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")


@pytest.fixture(scope="module")
def demo_scenario(testdata):
    return wvr.load_scenario(testdata / "demo-scenario.toml")


@pytest.fixture(scope="module")
def small_scenario(demo_scenario):
    return demo_scenario.with_overrides(duration_s=600.0, antenna_count=6)


@pytest.fixture(scope="module")
def small_night(small_scenario):
    return wvr.simulate_night(small_scenario, threads=2)


def same_bits(a, b, where):
    a, b = np.asarray(a), np.asarray(b)
    assert a.dtype == b.dtype, where
    assert a.shape == b.shape, where
    assert a.tobytes() == b.tobytes(), where


def assert_identical(a, b, where="night"):
    """Recursive bit-for-bit comparison of Night.to_dict() values."""
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        same_bits(a, b, where)
    elif isinstance(a, dict):
        assert isinstance(b, dict) and list(a) == list(b), where
        for key in a:
            assert_identical(a[key], b[key], f"{where}[{key!r}]")
    elif isinstance(a, (list, tuple)):
        assert type(a) is type(b) and len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b)):
            assert_identical(x, y, f"{where}[{i}]")
    elif isinstance(a, wvr.Radiometer):
        assert (a.name, a.lo_freq_ghz, a.quadrature_points_per_sideband, a.channels) == (
            b.name, b.lo_freq_ghz, b.quadrature_points_per_sideband, b.channels), where
    elif isinstance(a, wvr.ResultGroup):
        assert (a.stage, a.attributes, a.units, a.dataset_attributes) == (
            b.stage, b.attributes, b.units, b.dataset_attributes), where
        assert list(a) == list(b), where
        for name in a:
            same_bits(a[name], b[name], f"{where}/{name}")
    elif isinstance(a, float):
        same_bits(np.float64(a), np.float64(b), where)
    else:
        assert type(a) is type(b) and a == b, where


def assert_nights_identical(a, b):
    assert_identical(a.to_dict(), b.to_dict())


def file_digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


# --- scenarios and the simulator ------------------------------------------------------------


def test_scenario_fields(demo_scenario):
    assert demo_scenario.name == "Cerro Viento demo night"
    assert demo_scenario.seed == 20261114
    assert demo_scenario.duration_s == 7200.0
    assert demo_scenario.integration_s == 1.0
    assert demo_scenario.time_count == 7200
    assert demo_scenario.antenna_count == 40
    assert demo_scenario.layout == "extended"
    assert demo_scenario.pwv_mm == 1.2
    assert isinstance(demo_scenario.site, wvr.SiteConfig)
    assert isinstance(demo_scenario.radiometer, wvr.Radiometer)
    assert [f["antenna"] for f in demo_scenario.faults] == [11, 27]
    assert demo_scenario.clouds[0]["liquid_water_path_kg_m2"] == 0.08


def test_overrides_return_a_valid_copy(demo_scenario, small_scenario):
    assert (small_scenario.duration_s, small_scenario.antenna_count) == (600.0, 6)
    assert small_scenario.time_count == 600
    assert small_scenario.seed == demo_scenario.seed
    # Faults of the antennas removed go with them; the original is untouched.
    assert small_scenario.faults == []
    assert len(demo_scenario.faults) == 2 and demo_scenario.antenna_count == 40
    twelve = demo_scenario.with_overrides(antenna_count=12, seed=7)
    assert [f["antenna"] for f in twelve.faults] == [11]
    assert twelve.seed == 7 and twelve.duration_s == 7200.0


@pytest.mark.parametrize("overrides, field", [
    ({"antenna_count": 1}, "antenna_count"),
    ({"duration_s": -5.0}, "duration_s"),
    ({"duration_s": "long"}, "duration_s"),
    ({"seed": -1}, "seed"),
    ({"seed": 1.5}, "seed"),
])
def test_bad_overrides_raise_naming_the_field(demo_scenario, overrides, field):
    with pytest.raises(wvr.WvrValueError, match=field):
        demo_scenario.with_overrides(**overrides)


def test_parse_scenario_resolves_files_against_base_directory(testdata):
    text = (testdata / "demo-scenario.toml").read_text()
    scenario = wvr.parse_scenario(text, "demo", base_directory=testdata)
    assert scenario.name == "Cerro Viento demo night"
    with pytest.raises(wvr.WvrValueError, match="site"):
        wvr.parse_scenario(text, "demo", base_directory=testdata / "radiometers")


def test_simulated_night_shapes_and_types(small_night):
    a, t, c = 6, 600, 4
    n = small_night
    assert (n.antenna_count, n.time_count, n.channel_count) == (a, t, c)
    assert n.time_epoch_utc == "2026-11-14T01:00:00Z"
    assert n.time_s.shape == (t,) and n.time_s.dtype == np.float64
    assert np.all(np.diff(n.time_s) == 1.0)
    assert n.brightness_k.shape == (a, t, c)
    assert n.valid.shape == (a, t) and n.valid.dtype == np.uint8
    assert n.elevation_deg.shape == (a, t) and n.azimuth_deg.shape == (a, t)
    assert n.position_enu_m.shape == (a, 3)
    assert len(n.antenna_names) == a and len(n.radiometer_ids) == a
    assert n.channel_names == n.radiometer.channel_names
    phases = n.calibrator_phases
    rows = phases["time_s"].shape[0]
    assert rows > 0 and phases["antenna_pair"].shape == (rows, 2)
    assert phases["antenna_pair"].dtype == np.int32
    assert phases["phase_rad"].shape == phases["freq_ghz"].shape == (rows,)
    assert set(n.weather) == {"time_s", "temperature_k", "pressure_hpa", "relative_humidity_pct"}
    assert [s["intent"] for s in n.scans[:2]] == ["calibrator", "target"]
    truth = n.truth
    for key in ("wet_path_m", "dry_path_m", "pwv_mm"):
        assert truth[key].shape == (a, t), key
    # The demo atmosphere: 1.2 mm drifting by 0.15 mm/h, plus the wet screen.
    assert 1.0 < np.median(truth["pwv_mm"]) < 1.4
    assert n.results == {}
    # Cold sky through a 183 GHz line wing: every channel between the CMB and the ground.
    assert np.all((n.brightness_k > 3.0) & (n.brightness_k < 290.0))


def test_night_arrays_are_read_only_views_that_keep_the_night_alive(small_scenario):
    night = wvr.simulate_night(small_scenario)
    brightness = night.brightness_k
    expected = brightness.copy()
    assert not brightness.flags.writeable
    with pytest.raises(ValueError):
        brightness[0, 0, 0] = 1.0
    del night
    gc.collect()
    np.testing.assert_array_equal(brightness, expected)


def test_simulation_does_not_depend_on_threads_and_follows_the_seed(small_scenario, small_night):
    assert_nights_identical(wvr.simulate_night(small_scenario, threads=1), small_night)
    other = wvr.simulate_night(small_scenario.with_overrides(seed=1))
    assert not np.array_equal(other.brightness_k, small_night.brightness_k)
    with pytest.raises(wvr.WvrValueError, match="threads"):
        wvr.simulate_night(small_scenario, threads=-1)


# --- night files ----------------------------------------------------------------------------


@pytest.mark.parametrize("compression_level", [0, 4])
def test_write_then_read_is_bit_for_bit(tmp_path, small_night, compression_level):
    path = tmp_path / "night.h5"
    wvr.write_night(small_night, path, compression_level=compression_level)
    assert_nights_identical(wvr.read_night(path), small_night)
    # str paths work as well as path-like ones.
    assert_nights_identical(wvr.read_night(str(path)), small_night)


def test_write_threads_do_not_change_the_file(tmp_path, small_night):
    for threads in (1, 3):
        wvr.write_night(small_night, tmp_path / f"night-{threads}.h5", threads=threads)
        # The next write starts in a later second: a time stored in the file would differ.
        time.sleep(1.1)
    assert (tmp_path / "night-1.h5").read_bytes() == (tmp_path / "night-3.h5").read_bytes()
    with pytest.raises(wvr.WvrValueError, match="threads = -1"):
        wvr.write_night(small_night, tmp_path / "bad.h5", threads=-1)
    assert not (tmp_path / "bad.h5").exists()


@pytest.mark.usefixtures("skyphase")
def test_night_written_by_skyphase_equals_the_python_simulation(tmp_path, testdata, demo_scenario):
    # The demo scenario shortened to 5 antennas x 300 s, without its faults (they are on
    # antennas 11 and 27), written by the C++ program and read here.
    text = (testdata / "demo-scenario.toml").read_text()
    text = text[:text.index("[[faults]]")]
    replacements = {
        r"^duration_s = .*$": "duration_s = 300.0",
        r"^antenna_count = .*$": "antenna_count = 5",
        r"^site_file = .*$": f'site_file = "{(testdata / "sites" / "demo-site.toml").as_posix()}"',
        r"^radiometer_file = .*$":
            f'radiometer_file = "{(testdata / "radiometers" / "demo-183-dsb.toml").as_posix()}"',
    }
    for pattern, line in replacements.items():
        text, count = re.subn(pattern, line, text, flags=re.MULTILINE)
        assert count == 1, pattern
    scenario_file = tmp_path / "short.toml"
    scenario_file.write_text(text)
    night_file = tmp_path / "short.h5"
    result = subprocess.run([SKYPHASE, "simulate", str(scenario_file), "-o", str(night_file),
                             "--threads", "2"], capture_output=True, text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    from_cpp = wvr.read_night(night_file)
    assert (from_cpp.antenna_count, from_cpp.time_count) == (5, 300)
    assert_nights_identical(from_cpp, wvr.simulate_night(wvr.load_scenario(scenario_file)))
    # with_overrides makes the same scenario from the demo file.
    shortened = demo_scenario.with_overrides(duration_s=300.0, antenna_count=5)
    assert_nights_identical(from_cpp, wvr.simulate_night(shortened))


def test_write_refuses_an_existing_file_unless_asked(tmp_path, small_night):
    path = tmp_path / "night.h5"
    wvr.write_night(small_night, path)
    digest = file_digest(path)
    with pytest.raises(wvr.WvrValueError):
        wvr.write_night(small_night, path)
    assert file_digest(path) == digest
    wvr.write_night(small_night, path, overwrite=True)
    with pytest.raises(wvr.WvrValueError, match="compression_level"):
        wvr.write_night(small_night, tmp_path / "other.h5", compression_level=12)


def test_reading_a_missing_or_foreign_file_names_it(tmp_path):
    missing = tmp_path / "missing.h5"
    with pytest.raises(wvr.WvrValueError, match="missing.h5"):
        wvr.read_night(missing)
    foreign = tmp_path / "foreign.h5"
    foreign.write_text("not a night\n")
    with pytest.raises(wvr.WvrValueError, match="foreign.h5"):
        wvr.read_night(foreign)


# --- nights built from numpy ----------------------------------------------------------------


def test_from_arrays_of_to_dict_rebuilds_the_night(small_night):
    assert_nights_identical(wvr.Night.from_arrays(**small_night.to_dict()), small_night)


def own_night(radiometer, antennas=3, times=50, rng=None):
    """A night as a user with their own data would build it: plain numpy arrays."""
    rng = rng or np.random.default_rng(5)
    c = len(radiometer)
    brightness = (rng.uniform(20.0, 200.0, size=(antennas, times, c))).astype(np.float32)
    valid = np.ones((antennas, times), dtype=bool)
    valid[1, 7:11] = False
    brightness[1, 7:11, :] = np.nan
    return dict(
        time_epoch_utc="2025-03-01T00:00:00Z",
        antenna_names=[f"ant{i}" for i in range(antennas)],
        position_enu_m=rng.normal(0.0, 100.0, size=(antennas, 3)),
        radiometer=radiometer,
        time_s=np.arange(times) * 2.0 + 10.0,
        brightness_k=brightness,
        elevation_deg=np.full((antennas, times), 55.0),
        azimuth_deg=np.linspace(0.0, 360.0, antennas * times).reshape(antennas, times),
        valid=valid,
        reference_latitude_deg=-23.0,
        reference_longitude_deg=292.0,
        reference_height_m=4800.0,
        scans=[{"start_s": 10.0, "stop_s": 40.0, "intent": "calibrator", "source": "q1",
                "obs_freq_ghz": 100.0},
               {"start_s": 40.0, "stop_s": 108.0, "intent": "target", "source": "t1",
                "obs_freq_ghz": 100.0}],
        weather={"time_s": [0.0, 60.0], "temperature_k": [270.0, 269.5],
                 "pressure_hpa": [560.0, 560.1], "relative_humidity_pct": [10, 12]},
        calibrator_phases={"time_s": [12.0, 12.0, 14.0],
                           "antenna_pair": np.array([[0, 1], [0, 2], [0, 1]], dtype=np.int64),
                           "phase_rad": [0.1, -0.2, 0.3], "freq_ghz": [100.0] * 3},
    )


def test_night_built_from_numpy_round_trips(tmp_path, radiometer_183):
    kwargs = own_night(radiometer_183)
    group = wvr.ResultGroup("my-stage.v1", {
        "mean_k": (np.arange(6, dtype=np.float32).reshape(3, 2), "K"),
        "counts": (np.array([1, 2, 3], dtype=np.int16), "1", {"note": "int16 is stored as int32"}),
        "big": (np.array([2**40], dtype=np.int64), "1"),
        "mask": (np.array([True, False]), "1"),
        "scale": (1.25, "1"),
        "nothing": (np.zeros((0, 4)), "s"),
    }, {"method": "test"})
    night = wvr.Night.from_arrays(**kwargs, results=[group])
    # Converted on the way in: float32 brightness to float64, bool valid to uint8.
    assert night.brightness_k.dtype == np.float64 and night.valid.dtype == np.uint8
    np.testing.assert_array_equal(night.brightness_k, kwargs["brightness_k"].astype(np.float64))
    np.testing.assert_array_equal(night.valid, kwargs["valid"].astype(np.uint8))
    assert night.truth is None
    # Without valid, a sample is usable where every channel is finite.
    implicit = wvr.Night.from_arrays(**{k: v for k, v in kwargs.items() if k != "valid"})
    np.testing.assert_array_equal(implicit.valid, night.valid)
    assert implicit.valid[1, 7:11].sum() == 0 and implicit.valid.sum() == 3 * 50 - 4
    stored = night.results["my-stage.v1"]
    assert {name: stored[name].dtype for name in stored} == {
        "mean_k": np.float32, "counts": np.int32, "big": np.int64, "mask": np.uint8,
        "scale": np.float64, "nothing": np.float64}
    assert stored["scale"].shape == () and stored["nothing"].shape == (0, 4)
    assert stored.units["mean_k"] == "K"
    assert stored.dataset_attributes["counts"] == {"note": "int16 is stored as int32"}
    assert stored.attributes == {"method": "test"}

    path = tmp_path / "own.h5"
    wvr.write_night(night, path)
    assert_nights_identical(wvr.read_night(path), night)


def with_changes(night, **changes):
    kwargs = night.to_dict()
    kwargs.update(changes)
    return wvr.Night.from_arrays(**kwargs)


def swapped(values, i, j):
    out = np.array(values)
    out[[i, j]] = out[[j, i]]
    return out


BROKEN = {
    "time not increasing": (lambda d: {"time_s": swapped(d["time_s"], 3, 4)},
                            "/radiometer/time_s", "not strictly increasing at index 4"),
    "brightness transposed": (lambda d: {"brightness_k": d["brightness_k"].transpose(0, 2, 1)},
                              "/radiometer/brightness_k", "has shape (6, 4, 600), expected"),
    "brightness of text": (lambda d: {"brightness_k": [["a"]]}, "/radiometer/brightness_k",
                           "expected numbers"),
    "brightness NaN where valid": (
        lambda d: {"brightness_k": np.where(np.arange(4) == 2, np.nan, d["brightness_k"])},
        "/radiometer/brightness_k", "is not finite"),
    "valid one sample short": (lambda d: {"valid": d["valid"][:, :-1]}, "/radiometer/valid",
                               "has shape (6, 599), expected [antenna, time] = (6, 600)"),
    "valid not 0 or 1": (lambda d: {"valid": d["valid"] * 2}, "/radiometer/valid",
                         "outside [0, 1]"),
    "valid as floats": (lambda d: {"valid": d["valid"].astype(float)}, "/radiometer/valid",
                        "expected integers"),
    "elevation above zenith": (lambda d: {"elevation_deg": d["elevation_deg"] + 80.0},
                               "/pointing/elevation_deg", "outside [-90, 90]"),
    "positions without up": (lambda d: {"position_enu_m": d["position_enu_m"][:, :2]},
                             "/array/position_enu_m", "has shape (6, 2)"),
    "duplicate antenna": (lambda d: {"antenna_names": ["A"] * 6}, "/array/antenna_names",
                          "duplicate"),
    "epoch not a date": (lambda d: {"time_epoch_utc": "2026-13-01T00:00:00Z"},
                         "time_epoch_utc", ""),
    "weather without pressure": (
        lambda d: {"weather": {k: v for k, v in d["weather"].items() if k != "pressure_hpa"}},
        "/weather", "missing 'pressure_hpa'"),
    "weather temperature short": (
        lambda d: {"weather": {**d["weather"], "temperature_k": d["weather"]["temperature_k"][1:]}},
        "/weather/temperature_k", "has shape"),
    "phase pair beyond the array": (
        lambda d: {"calibrator_phases": {**d["calibrator_phases"], "antenna_pair":
                                         d["calibrator_phases"]["antenna_pair"] + 10}},
        "/calibrator_phases/antenna_pair", "is not a pair of two different antennas"),
    "truth pwv transposed": (
        lambda d: {"truth": {**d["truth"], "pwv_mm": d["truth"]["pwv_mm"].T}},
        "/truth/pwv_mm", "has shape (600, 6)"),
    "scan intent unknown": (
        lambda d: {"scans": [{**d["scans"][0], "intent": "pointing"}] + d["scans"][1:]},
        "/scans/intent[0]", "is not one of calibrator, target"),
    "scans overlapping": (
        lambda d: {"scans": [{**d["scans"][0], "stop_s": d["scans"][1]["start_s"] + 5.0}]
                   + d["scans"][1:]},
        "/scans/start_s[1]", "before the end of the previous scan"),
}


@pytest.mark.parametrize("case", sorted(BROKEN))
def test_broken_night_from_numpy_raises_naming_the_dataset(small_night, case):
    change, path, detail = BROKEN[case]
    with pytest.raises(wvr.WvrValueError) as error:
        with_changes(small_night, **change(small_night.to_dict()))
    message = str(error.value)
    assert message.startswith("night: "), message
    assert path in message and detail in message, message


def test_result_group_is_a_read_only_mapping(small_night):
    group = wvr.ResultGroup("stage", {"a_k": ([1.0, 2.0], "K"), "b": (np.int32(3), "1")})
    assert isinstance(group, collections.abc.Mapping)
    assert list(group) == ["a_k", "b"] and len(group) == 2 and "a_k" in group
    assert group.keys() == ["a_k", "b"]
    assert [name for name, _ in group.items()] == ["a_k", "b"]
    assert group.get("missing") is None
    with pytest.raises(KeyError, match="missing"):
        group["missing"]
    assert not group["a_k"].flags.writeable
    rebuilt = wvr.ResultGroup(group.stage, group.to_dict(), group.attributes)
    assert_identical(rebuilt, group)
    with pytest.raises(wvr.WvrValueError, match="/results/stage/c: expected"):
        wvr.ResultGroup("stage", {"c": np.zeros(3)})
    with pytest.raises(wvr.WvrValueError, match="/results/stage/c: expected numbers"):
        wvr.ResultGroup("stage", {"c": (np.array(["x"]), "1")})
    # Names are checked when the group enters a night.
    with pytest.raises(wvr.WvrValueError, match="invalid dataset name"):
        small_night.with_result_group(wvr.ResultGroup("stage", {"bad name": ([1.0], "1")}))


def test_with_result_group_adds_and_replaces(small_night):
    first = wvr.ResultGroup("extra", {"x_m": (np.arange(3.0), "m")})
    second = wvr.ResultGroup("extra", {"y_s": (np.arange(2.0), "s")})
    night = small_night.with_result_group(first)
    assert list(night.results) == ["extra"] and small_night.results == {}
    with pytest.raises(wvr.WvrValueError, match="already exists"):
        night.with_result_group(second)
    replaced = night.with_result_group(second, replace=True)
    assert list(replaced.results["extra"]) == ["y_s"]


def test_add_result_group_copies_the_input_and_leaves_it_untouched(tmp_path, small_night):
    source = tmp_path / "night.h5"
    wvr.write_night(small_night, source)
    digest = file_digest(source)
    flags = np.zeros((6, 600), dtype=np.uint8)
    flags[2, 5] = 3
    output = tmp_path / "with-results.h5"
    wvr.add_result_group(source, output, "screening", {"flags": (flags, "1"),
                                                       "threshold_k": (0.5, "K")},
                         {"method": "test"})
    assert file_digest(source) == digest
    night = wvr.read_night(output)
    group = night.results["screening"]
    same_bits(group["flags"], flags, "flags")
    assert group.units == {"flags": "1", "threshold_k": "K"}
    assert group.attributes == {"method": "test"}
    assert_identical(night.to_dict()["brightness_k"], small_night.brightness_k)

    # A ResultGroup object works too; an existing stage is replaced only on request.
    again = tmp_path / "again.h5"
    group = wvr.ResultGroup("screening", {"flags": (flags * 0, "1")})
    with pytest.raises(wvr.WvrValueError, match="screening"):
        wvr.add_result_group(output, again, group)
    wvr.add_result_group(output, again, group, replace=True)
    assert wvr.read_night(again).results["screening"]["flags"].max() == 0
    with pytest.raises(wvr.WvrValueError):
        wvr.add_result_group(output, output, group, replace=True, overwrite=True)


# --- summary --------------------------------------------------------------------------------


def test_summary_fields(small_night):
    s = wvr.summarize_night(small_night)
    assert s["time_epoch_utc"] == "2026-11-14T01:00:00Z"
    assert (s["antenna_count"], s["channel_count"], s["time_count"]) == (6, 4, 600)
    assert s["channel_names"] == small_night.channel_names
    assert (s["start_s"], s["stop_s"], s["duration_s"]) == (0.0, 599.0, 599.0)
    assert s["median_cadence_s"] == 1.0 and s["gaps"] == []
    assert s["valid_fraction"] == 1.0
    np.testing.assert_array_equal(s["antenna_valid_fraction"], np.ones(6))
    assert s["antenna_names"] == small_night.antenna_names
    intents = [scan["intent"] for scan in small_night.scans]
    assert s["calibrator_scan_count"] == intents.count("calibrator") > 0
    assert s["target_scan_count"] == intents.count("target") > 0
    assert s["weather_count"] == small_night.weather["time_s"].size
    assert s["calibrator_phase_count"] == small_night.calibrator_phases["time_s"].size
    assert s["has_truth"] is True and s["result_stages"] == []


def test_summary_counts_gaps_and_invalid_samples(radiometer_183):
    kwargs = own_night(radiometer_183)
    kwargs["time_s"] = np.concatenate([kwargs["time_s"][:20], kwargs["time_s"][20:] + 30.0])
    night = wvr.Night.from_arrays(**kwargs)
    s = wvr.summarize_night(night)
    assert s["gaps"] == [{"start_s": 48.0, "stop_s": 80.0}]
    assert s["valid_fraction"] == pytest.approx(1.0 - 4.0 / 150.0)
    np.testing.assert_allclose(s["antenna_valid_fraction"], [1.0, 1.0 - 4.0 / 50.0, 1.0])


def test_every_summary_key_is_documented_and_read_back_by_its_own_name(small_night):
    # Dict, docstring and reader all follow from the summary's one field table.
    s = wvr.summarize_night(small_night)
    for key in s:
        assert f"{key} (" in wvr.summarize_night.__doc__, key
        with pytest.raises(wvr.WvrValueError, match=f"summary is missing '{key}'"):
            wvr.format_night_summary({k: v for k, v in s.items() if k != key})
        with pytest.raises(wvr.WvrValueError, match=re.escape(f"summary['{key}']")):
            wvr.format_night_summary({**s, key: object()})


def test_format_night_summary_takes_a_night_or_its_summary(small_night):
    text = wvr.format_night_summary(small_night)
    assert text == wvr.format_night_summary(wvr.summarize_night(small_night))
    assert "antennas" in text and "CV01" in text
    with pytest.raises(wvr.WvrValueError, match="summary"):
        wvr.format_night_summary({"antenna_count": 3})
