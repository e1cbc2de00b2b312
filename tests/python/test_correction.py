"""Phase correction from Python: radiometer paths, the scaling solve and the corrections with
their metrics, on a small simulated night (wet turbulence, no dry layer), checked against the
night's truth and the library's own conventions."""
import numpy as np
import pytest

import wvr


@pytest.fixture(scope="module")
def wet_night(testdata):
    # The demo night shortened to 15 minutes before its dry-turbulence episode and cloud.
    scenario = wvr.load_scenario(testdata / "demo-scenario.toml").with_overrides(
        duration_s=900.0, antenna_count=8)
    night = wvr.simulate_night(scenario, threads=2)
    retrieval = wvr.retrieve_night(night, scenario.site, threads=2)
    return scenario, night, retrieval


def test_paths_follow_the_true_wet_path(wet_night):
    scenario, night, retrieval = wet_night
    paths = wvr.radiometer_paths(night, retrieval)
    assert paths["path_mm"].shape == (night.antenna_count, night.time_count)
    assert paths["flags"].dtype == np.uint8
    assert not paths["path_mm"].flags.writeable
    np.testing.assert_array_equal(paths["time_s"], night.time_s)
    truth_mm = 1e3 * np.asarray(night.truth["wet_path_m"])
    for a in range(night.antenna_count):
        usable = paths["flags"][a] == 0
        assert usable.mean() > 0.95
        measured = paths["path_mm"][a, usable] - paths["path_mm"][a, usable].mean()
        true = truth_mm[a, usable] - truth_mm[a, usable].mean()
        # Fluctuations agree to a few per cent (the retrieval's PWV scale is within 2 %).
        assert np.corrcoef(measured, true)[0, 1] > 0.99
        assert np.std(measured - true) < 0.1 * np.std(true)


def test_scaling_and_correction_improve_the_calibrator_phases(wet_night):
    scenario, night, retrieval = wet_night
    cal = wvr.solve_scaling(night, retrieval, scenario.site)
    assert cal["ok"], cal["report"]
    # The simulated sky is the model's: the scale is 1 within its error (3 sigma).
    assert abs(cal["scale"] - 1.0) < 3.0 * cal["scale_sigma"] + 0.02
    assert cal["antenna_scale"].shape == (night.antenna_count,)
    corrected = wvr.correct_night(night, retrieval, scenario.site,
                                  antenna_scale=cal["antenna_scale"])
    assert corrected["obs_freq_ghz"] == pytest.approx(230.0)
    metrics = corrected["metrics"]
    assert metrics["phase_rms_after_deg"] < 0.5 * metrics["phase_rms_before_deg"]
    assert metrics["improvement_factor"] > 2.0
    assert np.all(metrics["antenna_phase_rms_after_deg"] < metrics["antenna_phase_rms_before_deg"])
    phase = corrected["phase_correction_rad"]
    assert phase.shape == (night.antenna_count, night.time_count)
    # Added to the antenna's phase: -scale * k * dispersion * path (path in mm; 0 where flagged).
    k_rad_per_mm = 2 * np.pi * 230e9 / 299792458.0 * 1e-3
    usable = corrected["flags"] == 0
    expected = -(cal["antenna_scale"][:, None] * k_rad_per_mm * corrected["phase_per_path"]
                 * corrected["path_mm"])
    np.testing.assert_allclose(phase[usable], expected[usable], rtol=1e-9)
    assert corrected["corrected_calibrator_phase_rad"].shape == (
        len(night.calibrator_phases["phase_rad"]),)


def test_a_scalar_scale_and_another_frequency_are_accepted(wet_night):
    scenario, night, retrieval = wet_night
    one = wvr.correct_night(night, retrieval, scenario.site, antenna_scale=1.0)
    none = wvr.correct_night(night, retrieval, scenario.site)
    np.testing.assert_array_equal(one["phase_correction_rad"], none["phase_correction_rad"])
    high = wvr.correct_night(night, retrieval, scenario.site, obs_freq_ghz=345.0)
    # The phase grows with frequency (and the dispersion factor with it).
    ratio = high["phase_correction_rad"][none["flags"] == 0] / none["phase_correction_rad"][
        none["flags"] == 0]
    assert np.nanmedian(ratio) == pytest.approx(
        345.0 / 230.0 * high["phase_per_path"] / none["phase_per_path"], rel=1e-9)


def test_bad_input_names_the_field(wet_night, testdata):
    scenario, night, retrieval = wet_night
    with pytest.raises(wvr.WvrValueError, match="antenna_scale has 2 values for 8 antennas"):
        wvr.correct_night(night, retrieval, scenario.site, antenna_scale=[1.0, 2.0])
    with pytest.raises(wvr.WvrValueError, match=r"antenna_scale\[0\] = -1"):
        wvr.correct_night(night, retrieval, scenario.site, antenna_scale=-1.0)
    with pytest.raises(wvr.WvrValueError, match="obs_freq_ghz"):
        wvr.correct_night(night, retrieval, scenario.site, obs_freq_ghz=0.0)
    other = wvr.simulate_night(
        wvr.load_scenario(testdata / "demo-scenario.toml").with_overrides(
            duration_s=120.0, antenna_count=4))
    with pytest.raises(wvr.WvrValueError, match="retrieval has 8 antennas"):
        wvr.radiometer_paths(other, retrieval)
    with pytest.raises(wvr.WvrValueError, match="reference_antenna"):
        wvr.solve_scaling(night, retrieval, scenario.site, reference_antenna=99)
