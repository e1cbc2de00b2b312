"""Radiometer cross-calibration from Python and from skyphase crosscal: a unit whose gain drifts
(the simulator's gain_drift fault) is named, the solution is relative to the array, and the
corrected night comes back."""
import json
import os
import subprocess

import numpy as np
import pytest

import wvr

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")

SCENARIO = """
name = "cross-calibration"
seed = 3
duration_s = 3600.0
integration_s = 2.0
site_file = "{testdata}/sites/demo-site.toml"
radiometer_file = "{testdata}/radiometers/demo-183-dsb.toml"
[array]
layout = "random"
antenna_count = 6
radius_m = 200.0
[atmosphere]
pwv_mm = 1.0
pwv_drift_mm_per_hour = 0.3
[source]
declination_deg = -35.0
start_hour_angle_h = -0.5
[observing]
obs_freq_ghz = 230.0
[[turbulence]]
kind = "wet"
height_m = 500.0
thickness_m = 500.0
outer_scale_m = 4000.0
wind_east_m_s = 8.0
wind_north_m_s = 0.0
path_rms_um = 50.0
[[faults]]
antenna = 4
kind = "gain_drift"
start_s = 0.0
stop_s = 3600.0
magnitude = 0.03
"""


@pytest.fixture(scope="module")
def scenario_text(testdata):
    return SCENARIO.format(testdata=testdata.resolve())


@pytest.fixture(scope="module")
def night(scenario_text):
    return wvr.simulate_night(wvr.parse_scenario(scenario_text, "crosscal.toml"))


def test_names_the_drifting_unit_relative_to_the_array(night):
    x = wvr.cross_calibrate(night, apply=True)
    assert x["flagged_units"] == [night.antenna_names[4]]
    assert list(x["drifting"]) == [False, False, False, False, True, False]
    assert x["offset_k"].shape == (6, night.channel_count)
    reference = [a for a in range(6) if a != 4]
    assert np.allclose(x["gain"][reference].mean(axis=0), 1.0, atol=1e-9)
    assert np.allclose(x["offset_k"][reference].mean(axis=0), 0.0, atol=1e-9)
    # No injected offsets or gains: every reference unit agrees to a fraction of a kelvin.
    assert np.abs(x["offset_k"][reference]).max() < 0.5
    assert x["night"].brightness_k.shape == night.brightness_k.shape
    assert x["result_group"].stage == "cross_calibration"


def test_applied_at_the_mean_sky_each_unit_is_shifted_by_one_value_per_channel(night):
    x = wvr.cross_calibrate(night, apply=True, at_mean_sky=True)
    shift = night.brightness_k - x["night"].brightness_k  # [antenna, time, channel]
    assert np.allclose(shift, shift[:, :1, :], atol=1e-9)
    # offset + (gain - 1) x the array's mean sky: the same mean sky for every unit of a channel.
    mean_sky = (shift[:, 0, :] - x["offset_k"]) / (x["gain"] - 1.0)
    assert np.allclose(mean_sky, mean_sky[0], rtol=1e-6)
    with pytest.raises(wvr.WvrValueError, match="at_mean_sky"):
        wvr.cross_calibrate(night, apply=True, include_drift=True, at_mean_sky=True)


def test_bad_options_name_the_field(night):
    with pytest.raises(wvr.WvrValueError, match="block_s"):
        wvr.cross_calibrate(night, block_s=-1.0)


@pytest.mark.skipif(not SKYPHASE, reason="skyphase was not built (WVR_BUILD_TOOLS=OFF)")
def test_skyphase_crosscal_json_and_corrected_night(tmp_path, scenario_text):
    scenario = tmp_path / "crosscal.toml"
    scenario.write_text(scenario_text)
    night_file = tmp_path / "night.h5"
    subprocess.run([SKYPHASE, "simulate", str(scenario), "-o", str(night_file)], check=True,
                   capture_output=True)
    out_file = tmp_path / "night-xcal.h5"
    result = subprocess.run([SKYPHASE, "crosscal", str(night_file), "-o", str(out_file),
                             "--include-drift", "--format", "json"],
                            capture_output=True, text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    out = json.loads(result.stdout)
    assert out["flagged_units"] == [out["units"][4]["antenna"]]
    assert out["units"][4]["drifting"] and "drifts" in out["units"][4]["verdict"]
    assert "relative to the array" in out["reference"]
    corrected = wvr.read_night(out_file)
    assert "cross_calibration" in corrected.results
    bad = subprocess.run([SKYPHASE, "crosscal", str(night_file), "--block-s", "0"],
                         capture_output=True, text=True)
    assert bad.returncode == 2 and "block_s" in bad.stderr
    at_mean_sky = tmp_path / "night-mean-sky.h5"
    result = subprocess.run([SKYPHASE, "crosscal", str(night_file), "-o", str(at_mean_sky),
                             "--at-mean-sky"], capture_output=True, text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    shift = wvr.read_night(night_file).brightness_k - wvr.read_night(at_mean_sky).brightness_k
    assert np.allclose(shift, shift[:, :1, :], atol=1e-9)
    both = subprocess.run([SKYPHASE, "crosscal", str(night_file), "-o", str(tmp_path / "x.h5"),
                           "--at-mean-sky", "--include-drift"], capture_output=True, text=True)
    assert both.returncode == 2 and "include-drift" in both.stderr
