"""The real-time StreamingCorrector from Python: its arithmetic against the path and phase
formulas of wvr/streaming_corrector.hpp, its agreement with the offline correction (the same
kernel), per-antenna flagging and bad input."""
import math

import numpy as np
import pytest

import wvr

SPEED_OF_LIGHT_M_S = 299792458.0  # exact, SI definition of the metre


@pytest.fixture(scope="module")
def corrected_night(testdata):
    scenario = wvr.load_scenario(testdata / "demo-scenario.toml").with_overrides(
        duration_s=600.0, antenna_count=4)
    night = wvr.simulate_night(scenario, threads=2)
    retrieval = wvr.retrieve_night(night, scenario.site, threads=2)
    cal = wvr.solve_scaling(night, retrieval, scenario.site)
    corrections, _ = wvr.correct_night(night, retrieval, scenario.site,
                                       antenna_scale=cal.antenna_scale)
    return night, retrieval, corrections


def two_antenna_corrector(**overrides):
    arguments = dict(weight_mm_per_k=[[0.5], [0.25]], reference_brightness_k=[[100.0], [120.0]],
                     reference_path_mm=[10.0, 20.0], scale=[1.0, 2.0], phase_per_path=1.1)
    arguments.update(overrides)
    return wvr.StreamingCorrector(2, 1, 230.0, **arguments)


def test_path_and_phase_follow_the_linear_model():
    corrector = two_antenna_corrector()
    out = corrector.process([[110.0], [116.0]])
    # path = reference_path + weight (T - reference_T): 10 + 0.5*10 and 20 + 0.25*(-4)
    np.testing.assert_allclose(out["path_mm"], [15.0, 19.0], rtol=1e-15)
    k_rad_per_mm = 2.0 * math.pi * 230e9 / SPEED_OF_LIGHT_M_S * 1e-3
    np.testing.assert_allclose(out["phase_correction_rad"],
                               [-k_rad_per_mm * 1.1 * 1.0 * 15.0, -k_rad_per_mm * 1.1 * 2.0 * 19.0],
                               rtol=1e-12)
    np.testing.assert_array_equal(out["flags"], [0, 0])
    assert not out["path_mm"].flags.writeable


def test_a_dead_or_implausible_radiometer_flags_only_its_antenna():
    corrector = two_antenna_corrector()
    out = corrector.process([[110.0], [116.0]], valid=[0, 1])
    assert out["flags"][0] & wvr.CorrectorFlag.NO_DATA and out["flags"][1] == 0
    assert out["phase_correction_rad"][0] == 0.0 and math.isnan(out["path_mm"][0])
    assert out["path_mm"][1] == pytest.approx(19.0)
    out = corrector.process([[110.0], [math.nan]])
    assert out["flags"][0] == 0 and out["flags"][1] & wvr.CorrectorFlag.BAD_BRIGHTNESS
    out = corrector.process([[500.0], [116.0]])  # above max_brightness_k = 400 K
    assert out["flags"][0] & wvr.CorrectorFlag.BAD_BRIGHTNESS and out["flags"][1] == 0
    unusable = two_antenna_corrector(usable=[1, 0]).process([[110.0], [116.0]])
    assert unusable["flags"][1] & wvr.CorrectorFlag.NO_COEFFICIENTS and unusable["flags"][0] == 0


def test_updated_coefficients_apply_and_a_bad_set_changes_nothing():
    corrector = two_antenna_corrector()
    corrector.update_coefficients(weight_mm_per_k=[[1.0], [1.0]],
                                  reference_brightness_k=[[100.0], [100.0]],
                                  reference_path_mm=[0.0, 0.0])
    np.testing.assert_allclose(corrector.process([[103.0], [105.0]])["path_mm"], [3.0, 5.0])
    with pytest.raises(wvr.WvrValueError, match="weight_mm_per_k"):
        corrector.update_coefficients(weight_mm_per_k=[1.0, 1.0],
                                      reference_brightness_k=[[0.0], [0.0]],
                                      reference_path_mm=[0.0, 0.0])
    np.testing.assert_allclose(corrector.process([[103.0], [105.0]])["path_mm"], [3.0, 5.0])


@pytest.mark.parametrize("call, field", [
    (lambda c: c.process([[110.0, 1.0], [116.0, 1.0]]), "brightness_k"),
    (lambda c: c.process([[110.0], [116.0]], valid=[1, 1, 1]), "valid"),
    (lambda c: c.process([[110.0], [116.0]], valid=[2, 1]), "valid"),
    (lambda c: c.process_many(np.zeros((3, 2))), "brightness_k"),
    (lambda c: c.process_many(np.zeros((3, 2, 1)), valid=np.ones((2, 2))), "valid"),
])
def test_bad_input_names_the_field(call, field):
    with pytest.raises(wvr.WvrValueError, match=field):
        call(two_antenna_corrector())


def test_bad_configuration_names_the_field():
    with pytest.raises(wvr.WvrValueError, match="antennas"):
        wvr.StreamingCorrector(0, 1, 230.0, weight_mm_per_k=[], reference_brightness_k=[],
                               reference_path_mm=[])
    with pytest.raises(wvr.WvrValueError, match="reference_path_mm"):
        two_antenna_corrector(reference_path_mm=[1.0])
    with pytest.raises(wvr.WvrValueError, match="obs_freq_ghz"):
        wvr.StreamingCorrector(2, 1, -5.0, weight_mm_per_k=[[0.5], [0.25]],
                               reference_brightness_k=[[100.0], [120.0]],
                               reference_path_mm=[10.0, 20.0])


def test_window_by_window_streaming_equals_the_offline_correction(corrected_night):
    night, retrieval, corrected = corrected_night
    scale = corrected.antenna_scale
    time_s = night.time_s
    corrector = wvr.StreamingCorrector.from_retrieval(
        retrieval, float(time_s[0]), corrected.obs_freq_ghz, scale=scale,
        phase_per_path=corrected.phase_per_path)
    assert (corrector.antennas, corrector.channels) == (night.antenna_count, night.channel_count)
    compared = 0
    for start, stop in zip(retrieval.window_start_s, retrieval.window_stop_s):
        inside = np.flatnonzero((time_s >= start) & (time_s < stop))
        if inside.size == 0:
            continue
        corrector.update_from_retrieval(retrieval, float(time_s[inside[0]]), scale=scale)
        out = corrector.process_many(np.transpose(night.brightness_k[:, inside, :], (1, 0, 2)),
                                     night.valid[:, inside].T)
        # The offline correction runs the same compiled kernel: identical numbers.
        np.testing.assert_array_equal(out["phase_correction_rad"],
                                      corrected.phase_correction_rad[:, inside].T)
        np.testing.assert_array_equal(out["flags"], corrected.flags[:, inside].T)
        single = corrector.process(night.brightness_k[:, inside[0], :], night.valid[:, inside[0]])
        np.testing.assert_array_equal(single["phase_correction_rad"],
                                      out["phase_correction_rad"][0])
        compared += inside.size
    assert compared > 0.9 * night.time_count
