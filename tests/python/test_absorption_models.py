"""The second absorption model (Rosenkranz 2017 water vapour) from Python and skyphase, the
true sky of simulated nights, and the model uncertainty of the path coefficients."""
import json
import os
import subprocess

import numpy as np
import pytest

import wvr

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")
TESTDATA = os.environ.get("WVR_TESTDATA_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "testdata"))
SITE = os.path.join(TESTDATA, "sites", "demo-site.toml")
RADIOMETER = os.path.join(TESTDATA, "radiometers", "demo-183-dsb.toml")
needs_skyphase = pytest.mark.skipif(not SKYPHASE, reason="skyphase was not built (WVR_BUILD_TOOLS=OFF)")


def run(*args, check=True):
    result = subprocess.run([SKYPHASE, *args], capture_output=True, text=True, timeout=120)
    if check:
        assert result.returncode == 0, result.stderr
    return result


def test_models_are_selected_by_key(demo_profile, radiometer_183):
    assert wvr.absorption_model_keys() == ["p676", "r17"]
    assert "Rosenkranz (2017)" in wvr.absorption_model_name("r17")
    p676 = wvr.SkyModel()
    r17 = wvr.SkyModel(absorption_model="r17")
    assert r17.model != p676.model
    a = p676.channels(demo_profile, radiometer_183, 60.0)
    b = r17.channels(demo_profile, radiometer_183, 60.0)
    difference = np.asarray(b.brightness_k) - np.asarray(a.brightness_k)
    # Same oxygen, different water: the channels differ by ~0.1-2 K, not tens of K.
    assert 0.1 < np.max(np.abs(difference)) < 5.0
    gamma = wvr.absorption(183.31, 550.0, 270.0, 1.0, absorption_model="r17")
    gamma_p676 = wvr.absorption(183.31, 550.0, 270.0, 1.0)
    assert gamma["gamma_oxygen_db_per_km"] == pytest.approx(gamma_p676["gamma_oxygen_db_per_km"], rel=1e-12)
    assert gamma["gamma_water_db_per_km"] != gamma_p676["gamma_water_db_per_km"]
    with pytest.raises(wvr.WvrValueError, match='absorption_model = "mpm"'):
        wvr.SkyModel(absorption_model="mpm")


def test_mismatched_scenario_truth_records_the_sky(testdata):
    scenario = wvr.load_scenario(testdata / "scenarios" / "mismatched-small.toml").with_overrides(duration_s=60.0)
    assert scenario.true_sky["absorption_model"] == "r17"
    assert scenario.true_sky["lapse_rate_k_per_km"] == "5.5"
    night = wvr.simulate_night(scenario)
    truth = night.truth
    assert truth["true_sky"]["absorption_model"] == "r17"
    assert truth["calibration_offset_k"].shape == (8, 4)
    assert 0.5 < float(np.std(truth["calibration_offset_k"])) < 3.0
    matched = wvr.load_scenario(testdata / "scenarios" / "matched-demo.toml")
    assert matched.true_sky == {}


def test_retrieval_takes_the_absorption_model(testdata):
    scenario = wvr.load_scenario(testdata / "scenarios" / "mismatched-small.toml").with_overrides(duration_s=120.0)
    night = wvr.simulate_night(scenario)
    site = wvr.load_site(testdata / "sites" / "demo-site.toml")
    p676 = wvr.retrieve_night(night, site)
    r17 = wvr.retrieve_night(night, site, absorption_model="r17")
    assert not np.allclose(np.nanmedian(p676.pwv_mm), np.nanmedian(r17.pwv_mm), rtol=1e-4)
    with pytest.raises(wvr.WvrValueError, match="absorption_model"):
        wvr.retrieve_night(night, site, absorption_model="liebe")


@needs_skyphase
def test_channels_compare_models_reports_the_path_model_uncertainty():
    out = json.loads(run("channels", "--radiometer", RADIOMETER, "--site", SITE, "--pwv-mm", "1",
                         "--elevation-deg", "60", "--compare-models", "--format", "json").stdout)
    point = out["points"][0]
    assert len(point["brightness_p676_k"]) == 4 and len(point["path_sensitivity_r17_k_per_mm"]) == 4
    relative = np.array(point["path_sensitivity_relative_difference"])
    expected = np.array(point["path_sensitivity_r17_k_per_mm"]) / np.array(point["path_sensitivity_p676_k_per_mm"]) - 1
    assert relative == pytest.approx(expected, rel=1e-9)
    assert point["path_model_uncertainty"] == pytest.approx(abs(point["path_scale_r17_seen_by_p676"] - 1), rel=1e-9)
    assert 0.0 < point["path_model_uncertainty"] < 0.2
    table = run("channels", "--radiometer", RADIOMETER, "--site", SITE, "--compare-models").stdout
    assert "path_model_uncertainty_pct" in table


@needs_skyphase
def test_absorption_model_option_of_the_sky_commands():
    p676 = json.loads(run("spectrum", "--freq-ghz", "230", "--site", SITE, "--format", "json").stdout)
    r17 = json.loads(run("spectrum", "--freq-ghz", "230", "--site", SITE, "--absorption-model", "r17",
                         "--format", "json").stdout)
    assert "Rosenkranz" in r17["model"] and p676["brightness_k"][0] != r17["brightness_k"][0]
    bad = run("spectrum", "--freq-ghz", "230", "--absorption-model", "mpm", check=False)
    assert bad.returncode == 2 and "--absorption-model" in bad.stderr
    assert len(bad.stderr.strip().splitlines()) == 1
