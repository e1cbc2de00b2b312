"""Retrieval from Python: the full fit (Retriever), the table inversion (PwvTable, scalar and
vectorised) and night mode (retrieve_night) on a small simulated night, with its flags,
summary and result group."""
import concurrent.futures
import gc

import numpy as np
import pytest

import wvr

# The demo site's surface temperature is 270 K; a narrow table range keeps the build short.
TABLE_RANGE_K = {"min_surface_temperature_k": 266.0, "max_surface_temperature_k": 274.0}


@pytest.fixture(scope="module")
def small_scenario(testdata):
    # The demo night made by the retrieval's own model: the pulls below are measured against
    # thermal noise, which only holds when the model made the brightness.
    scenario = wvr.load_scenario(testdata / "scenarios" / "matched-demo.toml")
    return scenario.with_overrides(duration_s=600.0, antenna_count=6)


@pytest.fixture(scope="module")
def small_night(small_scenario):
    return wvr.simulate_night(small_scenario, threads=2)


@pytest.fixture(scope="module")
def night_retrieval(small_night, small_scenario):
    return wvr.retrieve_night(small_night, small_scenario.site, threads=2)


@pytest.fixture(scope="module")
def table(demo_site, radiometer_183):
    return wvr.PwvTable(demo_site, radiometer_183, **TABLE_RANGE_K)


# --- full fit -------------------------------------------------------------------------------


@pytest.mark.parametrize("pwv_mm, elevation_deg", [(0.3, 60.0), (1.0, 35.0), (3.0, 80.0)])
def test_fit_of_noiseless_model_brightness_returns_the_true_pwv(fast_183, radiometer_183,
                                                                pwv_mm, elevation_deg):
    brightness = fast_183.evaluate(pwv_mm, elevation_deg)["brightness_k"]
    result = wvr.Retriever(fast_183).fit(brightness, radiometer_183.noise_k, elevation_deg)
    assert result.ok and result.status == "converged", result.brief_report()
    assert result.pwv_mm == pytest.approx(pwv_mm, rel=1e-6)
    assert result.chi2 < 1e-8
    np.testing.assert_allclose(result.model_brightness_k, brightness, atol=1e-6)
    assert result.parameter_names == ["pwv_mm"]
    assert result.covariance.shape == (1, 1)
    assert np.sqrt(result.covariance[0, 0]) == pytest.approx(result.pwv_sigma_mm, rel=1e-9)
    # dof = 4 channels - 1 parameter.
    assert result.dof == 3 and result.iterations >= 1
    assert result.to_dict()["pwv_mm"] == result.pwv_mm
    assert "converged" in repr(result)


def test_fit_options_add_parameters(fast_183, radiometer_183):
    brightness = fast_183.evaluate(1.5, 50.0)["brightness_k"]
    noise = radiometer_183.noise_k
    liquid = wvr.Retriever(fast_183, fit_liquid=True, liquid_prior_kg_m2=(0.0, 0.5))
    result = liquid.fit(brightness, noise, 50.0, initial_pwv_mm=1.0)
    assert result.parameter_names == ["pwv_mm", "liquid_kg_m2"]
    assert result.covariance.shape == (2, 2)
    assert result.pwv_mm == pytest.approx(1.5, rel=1e-5)
    assert liquid.options["liquid_prior_kg_m2"] == {"mean": 0.0, "sigma": 0.5}
    gain = wvr.Retriever(fast_183, calibration="common_gain",
                         pwv_prior_mm={"mean": 1.0, "sigma": 5.0})
    result = gain.fit(brightness, noise, 50.0)
    assert "gain" in result.parameter_names and result.ok
    offsets = wvr.Retriever(fast_183, calibration="channel_offsets", fit_temperature_offset=True)
    assert offsets.options["calibration"] == "channel_offsets"
    result = offsets.fit(brightness, noise, 50.0)
    assert result.channel_offsets_k.shape == (4,)
    assert "temperature_offset_k" in result.parameter_names


@pytest.mark.parametrize("options, field", [
    ({"calibration": "per_antenna"}, "calibration"),
    ({"pwv_prior_mm": (1.0, 0.0)}, "pwv_prior_mm.sigma"),
    ({"pwv_prior_mm": (1.0,)}, "pwv_prior_mm"),
    ({"liquid_prior_kg_m2": {"mean": 0.0}}, "liquid_prior_kg_m2"),
    ({"gain_prior_sigma": -1.0}, "gain_prior_sigma"),
    ({"max_iterations": 0}, "max_iterations"),
])
def test_bad_options_raise_naming_the_option(fast_183, options, field):
    with pytest.raises(wvr.WvrValueError, match=field):
        wvr.Retriever(fast_183, **options)


def test_bad_data_comes_back_as_a_status(fast_183, radiometer_183):
    retriever = wvr.Retriever(fast_183)
    good = fast_183.evaluate(1.0, 45.0)["brightness_k"]
    noise = radiometer_183.noise_k
    cases = {
        "invalid input": [(np.where(np.arange(4) == 1, np.nan, good), noise, 45.0),
                          (good[:3], noise, 45.0),
                          (good, -noise, 45.0)],
        "out of domain": [(good, noise, 2.0)],
    }
    for status, inputs in cases.items():
        for brightness, sigma, elevation in inputs:
            result = retriever.fit(brightness, sigma, elevation)
            assert result.status == status and not result.ok, result.brief_report()
            assert result.message
    # The retriever still works afterwards.
    assert retriever.fit(good, noise, 45.0).ok


def test_retriever_keeps_its_model_alive(demo_profile, radiometer_183):
    fast = wvr.FastSkyModel(demo_profile, radiometer_183)
    brightness = fast.evaluate(2.0, 40.0)["brightness_k"]
    retriever = wvr.Retriever(fast)
    del fast
    gc.collect()
    assert retriever.fit(brightness, radiometer_183.noise_k, 40.0).pwv_mm == pytest.approx(
        2.0, rel=1e-6)


def test_one_retriever_shared_by_threads_gives_the_serial_answers(fast_183, radiometer_183):
    pwv = np.linspace(0.5, 4.0, 16)
    brightness = [fast_183.evaluate(p, 50.0)["brightness_k"] for p in pwv]
    retriever = wvr.Retriever(fast_183)
    serial = [retriever.fit(b, radiometer_183.noise_k, 50.0).pwv_mm for b in brightness]
    with concurrent.futures.ThreadPoolExecutor(max_workers=4) as pool:
        parallel = list(pool.map(
            lambda b: retriever.fit(b, radiometer_183.noise_k, 50.0).pwv_mm, brightness))
    assert parallel == serial
    np.testing.assert_allclose(serial, pwv, rtol=1e-6)


# --- table inversion ------------------------------------------------------------------------


def test_table_options_and_errors(table, demo_site, radiometer_183):
    assert table.channel_count == 4
    assert table.options["min_surface_temperature_k"] == 266.0
    with pytest.raises(wvr.WvrValueError, match="pwv_points"):
        wvr.PwvTable(demo_site, radiometer_183, pwv_points=2, **TABLE_RANGE_K)


def test_table_agrees_with_the_full_fit(table, fast_183, radiometer_183):
    # pwv_table.hpp: within 0.5 % of the full fit over 0.05-10 mm and 15-90 deg.
    retriever = wvr.Retriever(fast_183)
    for pwv_mm in (0.1, 0.8, 2.5, 6.0):
        for elevation_deg in (20.0, 45.0, 85.0):
            brightness = fast_183.evaluate(pwv_mm, elevation_deg)["brightness_k"]
            fit = retriever.fit(brightness, radiometer_183.noise_k, elevation_deg)
            out = table.invert(brightness, radiometer_183.noise_k, elevation_deg, 270.0)
            assert out["status"] == wvr.PwvTableStatus.OK
            assert out["pwv_mm"] == pytest.approx(fit.pwv_mm, rel=5e-3)


def test_invert_many_equals_a_loop_of_invert(table, small_night, radiometer_183):
    brightness = np.array(small_night.brightness_k[0, :200])
    elevation = np.array(small_night.elevation_deg[0, :200])
    temperature = np.full(200, 270.0)
    # Samples each inversion must refuse.
    brightness[10, 2] = np.nan
    elevation[20] = 5.0
    temperature[30] = 300.0
    brightness[40] = 1.0
    noise = radiometer_183.noise_k
    many = table.invert_many(brightness, noise, elevation, temperature)
    assert set(many) == {"status", "pwv_mm", "pwv_sigma_mm", "wet_path_per_pwv_m_per_mm", "chi2",
                         "d_brightness_d_pwv_k_per_mm"}
    assert many["status"].dtype == np.int8 and many["d_brightness_d_pwv_k_per_mm"].shape == (200, 4)
    for i in range(200):
        one = table.invert(brightness[i], noise, elevation[i], temperature[i])
        assert one["status"] == many["status"][i], i
        for key, value in one.items():
            np.testing.assert_array_equal(many[key][i], value, err_msg=f"{key}[{i}]")
    status = [wvr.PwvTableStatus(s) for s in many["status"][[10, 20, 30, 40]]]
    assert status == [wvr.PwvTableStatus.BRIGHTNESS_INVALID,
                      wvr.PwvTableStatus.ELEVATION_OUT_OF_DOMAIN,
                      wvr.PwvTableStatus.TEMPERATURE_OUT_OF_DOMAIN,
                      wvr.PwvTableStatus.PWV_OUT_OF_DOMAIN]
    assert np.isnan(many["pwv_mm"][[10, 20, 30, 40]]).all()
    assert (many["status"] == 0).sum() == 196
    # Numbers and per-sample noise broadcast like arrays.
    per_sample_noise = np.tile(noise, (200, 1))
    same = table.invert_many(brightness, per_sample_noise, elevation, 270.0)
    ok = many["status"] == 0
    np.testing.assert_array_equal(same["pwv_mm"][ok], many["pwv_mm"][ok])


def test_invert_many_rejects_wrong_shapes(table, radiometer_183):
    noise = radiometer_183.noise_k
    with pytest.raises(wvr.WvrValueError, match="brightness_k has shape"):
        table.invert_many(np.ones((5, 3)), noise, 45.0, 270.0)
    with pytest.raises(wvr.WvrValueError, match="noise_k has shape"):
        table.invert_many(np.ones((5, 4)), noise[:2], 45.0, 270.0)
    with pytest.raises(wvr.WvrValueError, match="elevation_deg has shape"):
        table.invert_many(np.ones((5, 4)), noise, np.ones(4), 270.0)
    assert wvr.PwvTableStatus.PWV_OUT_OF_DOMAIN.description == "pwv outside the table"


# --- night mode -----------------------------------------------------------------------------


def test_night_retrieval_shapes(night_retrieval, small_night):
    r = night_retrieval
    a, t, c = small_night.antenna_count, small_night.time_count, small_night.channel_count
    w = r.windows
    assert (r.antennas, r.samples, r.channels) == (a, t, c)
    assert w == 10  # 600 s in 60 s windows
    for name in ("pwv_mm", "pwv_sigma_mm", "chi2_per_dof", "flags"):
        assert getattr(r, name).shape == (a, t), name
    for name in ("window_pwv_mm", "window_pwv_sigma_mm", "window_chi2_per_dof",
                 "window_liquid_kg_m2", "window_flags", "path_noise_mm", "window_wet_path_mm",
                 "window_elevation_deg"):
        assert getattr(r, name).shape == (a, w), name
    for name in ("path_sensitivity_k_per_mm", "combination_weight_mm_per_k",
                 "window_model_brightness_k"):
        assert getattr(r, name).shape == (a, w, c), name
    assert r.window_start_s.shape == r.window_stop_s.shape == (w,)
    assert r.flags.dtype == np.uint8 and not r.pwv_mm.flags.writeable


def test_night_retrieval_finds_the_true_pwv_within_noise(night_retrieval, small_night):
    truth = small_night.truth["pwv_mm"]
    pull = (night_retrieval.pwv_mm - truth) / night_retrieval.pwv_sigma_mm
    assert (night_retrieval.flags == 0).all()
    # Gaussian channel noise: pulls of unit spread, centred, and nothing beyond 5 sigma.
    assert 0.8 < pull.std() < 1.25
    assert abs(pull.mean()) < 0.3
    assert np.abs(pull).max() < 5.0
    # Window fits of the mean brightness follow the window mean of the truth.
    for k, (start, stop) in enumerate(zip(night_retrieval.window_start_s,
                                          night_retrieval.window_stop_s)):
        inside = (small_night.time_s >= start) & (small_night.time_s < stop)
        np.testing.assert_allclose(night_retrieval.window_pwv_mm[:, k],
                                   truth[:, inside].mean(axis=1), rtol=0.01)


def test_night_retrieval_summary(night_retrieval, small_night):
    s = night_retrieval.summary()
    assert set(s) == {"antennas", "samples", "samples_flagged", "pwv_median_mm", "pwv_p10_mm",
                      "pwv_p90_mm", "chi2_per_dof_median", "path_sensitivity_k_per_mm"}
    assert (s["antennas"], s["samples"], s["samples_flagged"]) == (6, 3600, 0)
    assert s["pwv_p10_mm"] <= s["pwv_median_mm"] <= s["pwv_p90_mm"]
    assert s["pwv_median_mm"] == pytest.approx(np.median(small_night.truth["pwv_mm"]), abs=0.01)
    # chi2 per dof of pure channel noise.
    assert 0.5 < s["chi2_per_dof_median"] < 1.5
    assert s["path_sensitivity_k_per_mm"].shape == (4,)
    assert (s["path_sensitivity_k_per_mm"] > 0).all()


def test_night_retrieval_does_not_depend_on_threads(night_retrieval, small_night,
                                                    small_scenario):
    single = wvr.retrieve_night(small_night, small_scenario.site, threads=1)
    for name in ("pwv_mm", "pwv_sigma_mm", "window_pwv_mm", "combination_weight_mm_per_k"):
        np.testing.assert_array_equal(getattr(single, name), getattr(night_retrieval, name))


def test_invalid_samples_are_flagged(small_night, small_scenario):
    valid = np.array(small_night.valid)
    valid[2, 100:130] = 0
    night = wvr.Night.from_arrays(**{**small_night.to_dict(), "valid": valid})
    r = wvr.retrieve_night(night, small_scenario.site, coefficient_window_s=120.0)
    assert r.windows == 5
    flagged = (r.flags & wvr.RETRIEVAL_UNUSABLE) != 0
    np.testing.assert_array_equal(flagged, valid == 0)
    assert (r.flags[2, 100:130] & wvr.RetrievalFlag.INVALID_IN_FILE).all()
    assert r.summary()["samples_flagged"] == 30


def test_retrieval_result_group_goes_into_the_night_file(tmp_path, night_retrieval, small_night):
    source = tmp_path / "night.h5"
    output = tmp_path / "retrieved.h5"
    wvr.write_night(small_night, source)
    wvr.add_result_group(source, output, night_retrieval.to_result_group(small_night))
    group = wvr.read_night(output).results["retrieval"]
    np.testing.assert_array_equal(group["pwv_mm"], night_retrieval.pwv_mm)
    np.testing.assert_array_equal(group["path_sensitivity_k_per_mm"],
                                  night_retrieval.path_sensitivity_k_per_mm)
    assert group.units["pwv_mm"] == "mm"


def test_retrieval_options_are_checked(small_night, small_scenario):
    with pytest.raises(wvr.WvrValueError, match="coefficient_window_s"):
        wvr.retrieve_night(small_night, small_scenario.site, coefficient_window_s=-1.0)
    with pytest.raises(wvr.WvrValueError, match="threads"):
        wvr.retrieve_night(small_night, small_scenario.site, threads=-2)


def test_flag_descriptions():
    assert wvr.describe_retrieval_flags(0) == "ok"
    assert wvr.describe_retrieval_flags(2 | 8) == "bad brightness, no weather"
    assert [f.name for f in wvr.RetrievalFlag] == [
        "INVALID_IN_FILE", "BAD_BRIGHTNESS", "OUT_OF_DOMAIN", "NO_WEATHER", "FIT_FAILED",
        "NO_VALID_SAMPLES", "ELEVATION_OUT_OF_DOMAIN"]
    assert [int(f) for f in wvr.RetrievalFlag] == [1, 2, 4, 8, 16, 32, 64]
    # No weather is advisory: every other bit makes a sample unusable.
    assert int(wvr.RETRIEVAL_UNUSABLE) == 63 - 8
    assert wvr.RetrievalFlag.FIT_FAILED.description == "fit failed"
    with pytest.raises(wvr.WvrValueError, match="flags"):
        wvr.describe_retrieval_flags(256)
