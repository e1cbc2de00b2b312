"""Phase correction from Python: radiometer paths, the scaling solve and the corrections with
their metrics as typed results, and the whole night pipeline in one call, on a small simulated night (wet turbulence, no dry layer), checked against the
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
    assert paths.path_mm.shape == (night.antenna_count, night.time_count)
    assert paths.flags.dtype == np.uint8
    assert not paths.path_mm.flags.writeable
    np.testing.assert_array_equal(paths.time_s, night.time_s)
    truth_mm = 1e3 * np.asarray(night.truth["wet_path_m"])
    for a in range(night.antenna_count):
        usable = paths.flags[a] == 0
        assert usable.mean() > 0.95
        measured = paths.path_mm[a, usable] - paths.path_mm[a, usable].mean()
        true = truth_mm[a, usable] - truth_mm[a, usable].mean()
        # Fluctuations agree to a few per cent (the retrieval's PWV scale is within 2 %).
        assert np.corrcoef(measured, true)[0, 1] > 0.99
        assert np.std(measured - true) < 0.1 * np.std(true)


def test_scaling_and_correction_improve_the_calibrator_phases(wet_night):
    scenario, night, retrieval = wet_night
    cal = wvr.solve_scaling(night, retrieval, scenario.site)
    assert cal.ok, cal.brief_report()
    # The simulated sky is the model's: the scale is 1 within its error (3 sigma).
    assert abs(cal.scale - 1.0) < 3.0 * cal.scale_sigma + 0.02
    assert cal.antenna_scale.shape == (night.antenna_count,)
    # The default chose between one scale and one per antenna and says by which test; forced
    # choices run no test.
    assert np.isfinite(cal.antenna_scale_statistic) and cal.antenna_scale_threshold > 0
    assert cal.per_antenna_scale == (cal.antenna_scale_statistic > cal.antenna_scale_threshold)
    for forced in (True, False):
        one = wvr.solve_scaling(night, retrieval, scenario.site, per_antenna_scale=forced)
        assert one.per_antenna_scale is forced and np.isnan(one.antenna_scale_statistic)
    # scalars() holds exactly the scalar properties, with their values.
    scalars = cal.scalars()
    assert list(scalars) == ["scale", "scale_sigma", "per_antenna_scale",
                             "antenna_scale_statistic", "antenna_scale_threshold"]
    assert all(value == getattr(cal, name) for name, value in scalars.items())
    assert type(scalars["per_antenna_scale"]) is bool and type(scalars["scale"]) is float
    corrected, metrics = wvr.correct_night(night, retrieval, scenario.site,
                                           antenna_scale=cal.antenna_scale)
    assert corrected.obs_freq_ghz == pytest.approx(230.0)
    assert metrics.phase_rms_after_deg < 0.5 * metrics.phase_rms_before_deg
    assert metrics.improvement_factor > 2.0
    assert np.all(metrics.antenna_phase_rms_after_deg < metrics.antenna_phase_rms_before_deg)
    phase = corrected.phase_correction_rad
    assert phase.shape == (night.antenna_count, night.time_count)
    # Added to the antenna's phase: -scale * k * dispersion * path (path in mm; 0 where flagged).
    k_rad_per_mm = 2 * np.pi * 230e9 / 299792458.0 * 1e-3
    usable = corrected.flags == 0
    expected = -(cal.antenna_scale[:, None] * k_rad_per_mm * corrected.phase_per_path
                 * corrected.path_mm)
    np.testing.assert_allclose(phase[usable], expected[usable], rtol=1e-9)
    assert metrics.corrected_phase_rad.shape == (
        len(night.calibrator_phases["phase_rad"]),)


def test_a_scalar_scale_and_another_frequency_are_accepted(wet_night):
    scenario, night, retrieval = wet_night
    one, _ = wvr.correct_night(night, retrieval, scenario.site, antenna_scale=1.0)
    none, _ = wvr.correct_night(night, retrieval, scenario.site)
    np.testing.assert_array_equal(one.phase_correction_rad, none.phase_correction_rad)
    high, _ = wvr.correct_night(night, retrieval, scenario.site, obs_freq_ghz=345.0)
    # The phase grows with frequency (and the dispersion factor with it).
    ratio = high.phase_correction_rad[none.flags == 0] / none.phase_correction_rad[
        none.flags == 0]
    assert np.nanmedian(ratio) == pytest.approx(
        345.0 / 230.0 * high.phase_per_path / none.phase_per_path, rel=1e-9)


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


@pytest.fixture(scope="module")
def processed(wet_night):
    return wvr.process_night(wet_night[1], threads=2)


def test_process_night_gives_every_stage_as_typed_results(wet_night, processed):
    scenario, night, _ = wet_night
    r = processed
    assert r.site.source == "night record"  # simulated nights carry their site
    assert r.last_stage == "turbulence" and r.obs_freq_ghz == pytest.approx(230.0)
    assert r.calibration.ok and r.metrics.phase_rms_after_deg < r.metrics.phase_rms_before_deg
    phase = r.corrections.phase_correction_rad
    assert phase.shape == (night.antenna_count, night.time_count) and not phase.flags.writeable
    assert phase.base is not None  # a view of the result, not a copy
    assert len(r.diagnosis.windows) == len(night.scans)
    assert {w.verdict for w in r.diagnosis.windows} <= {
        "corrected", "quiet sky", "dry turbulence", "cloud", "radiometer fault", "scale off",
        "cannot judge", "outside retrieval domain"}
    t = r.turbulence
    assert t.wind.ok and t.wind.speed_m_s > 0
    assert t.radiometer.measured
    assert t.radiometer.points.separation.shape == t.radiometer.points.value_m2.shape
    assert [g.stage for g in r.result_groups] == ["retrieval", "calibration", "correction", "diagnosis"]
    # The same numbers as the single-stage calls.
    assert wvr.solve_scaling(night, r.retrieval).scale == r.calibration.scale
    # Stages stop where asked, and bad options name the field.
    assert wvr.process_night(night, last_stage="calibration", threads=2).diagnosis is None
    with pytest.raises(wvr.WvrValueError, match="last_stage"):
        wvr.process_night(night, last_stage="everything")
    with pytest.raises(wvr.WvrValueError, match="advice_target_rms_deg"):
        wvr.process_night(night, advice_target_rms_deg=-1.0)
    thresholds = wvr.DiagnosisThresholds()
    thresholds.cloud_chi2_per_dof = 1e5
    relaxed = wvr.process_night(night, thresholds=thresholds, last_stage="diagnosis", threads=2)
    assert relaxed.diagnosis.thresholds.cloud_chi2_per_dof == 1e5


# Properties of the typed results that their result groups do not store (scalars() is a dict of
# the stored scalars).
NOT_STORED = {
    "retrieval": {"antennas", "samples", "channels", "windows", "seconds", "summary",
                  "to_result_group", "scalars"},
    "calibration": {"status", "ok", "message", "rows_used", "rows_skipped", "brief_report",
                    "scalars"},
}


@pytest.mark.parametrize("stage", sorted(NOT_STORED))
def test_typed_results_hold_exactly_the_fields_of_their_result_groups(processed, stage):
    # Group and properties follow from one field table per result type: every stored dataset
    # is a property with the same values, and every other property is a known unstored one.
    typed = getattr(processed, stage)
    group = next(g for g in processed.result_groups if g.stage == stage)
    properties = {name for name in dir(type(typed)) if not name.startswith("_")}
    assert properties - NOT_STORED[stage] == set(group.keys())
    for name in group.keys():
        value = getattr(typed, name)
        if isinstance(value, np.ndarray):
            assert not value.flags.writeable, name
        np.testing.assert_array_equal(value, group[name], err_msg=name)
