"""FastSkyModel from Python: agreement with the exact model, the scalar and vectorised
evaluations, per-sample status codes and thread safety."""
import concurrent.futures
import math

import numpy as np
import pytest

import wvr

KEYS = ("brightness_k", "d_brightness_d_pwv_k_per_mm", "d_brightness_d_temperature",
        "d_brightness_d_liquid_k_per_kg_m2")


def test_properties(fast_183, demo_profile):
    assert fast_183.channel_count == 4
    assert fast_183.layer_count == len(demo_profile)
    assert fast_183.frequency_count == 4 * 2 * 4  # channels x sidebands x quadrature nodes
    assert fast_183.max_pwv_mm == 12.0
    assert fast_183.polynomial_degree == 6
    assert fast_183.min_elevation_deg == 5.0
    assert fast_183.cloud_base_above_ground_m == 1000.0
    assert fast_183.cloud_thickness_m == 1000.0
    assert fast_183.max_liquid_water_path_kg_m2 == 2.0


def test_evaluate_returns_channel_arrays(fast_183):
    out = fast_183.evaluate(1.0, 45.0)
    assert set(out) == set(KEYS)
    for key in KEYS:
        assert out[key].shape == (4,) and out[key].dtype == np.float64, key


@pytest.mark.parametrize("radiometer_name", ["radiometer_183", "radiometer_22"])
def test_fast_agrees_with_exact_within_20_mk(request, demo_profile, sky, radiometer_name):
    radiometer = request.getfixturevalue(radiometer_name)
    fast = wvr.FastSkyModel(demo_profile, radiometer, sky)
    worst = 0.0
    for pwv in (0.1, 0.5, 1.0, 2.5, 5.0, 8.0):
        for elevation in (15.0, 30.0, 55.0, 90.0):
            out = fast.evaluate(pwv, elevation)
            exact = sky.channels(demo_profile.scaled_to_pwv(pwv), radiometer, elevation)
            difference = np.abs(out["brightness_k"] - exact.brightness_k)
            worst = max(worst, difference.max())
            np.testing.assert_allclose(out["d_brightness_d_pwv_k_per_mm"],
                                       exact.d_brightness_d_pwv_k_per_mm, rtol=1e-3, atol=1e-4)
            np.testing.assert_allclose(out["d_brightness_d_temperature"],
                                       exact.d_brightness_d_temperature, rtol=1e-3, atol=1e-4)
    assert worst < 0.02


def test_default_sky_model_is_the_default_exact_model(demo_profile, radiometer_183, fast_183):
    implicit = wvr.FastSkyModel(demo_profile, radiometer_183)
    for key in KEYS:
        np.testing.assert_array_equal(implicit.evaluate(2.0, 33.0)[key],
                                      fast_183.evaluate(2.0, 33.0)[key])


def test_plane_parallel_fast_model_follows_its_exact_model(demo_profile, radiometer_22):
    plane = wvr.SkyModel(geometry="plane_parallel")
    fast = wvr.FastSkyModel(demo_profile, radiometer_22, plane, max_pwv_mm=20.0,
                            polynomial_degree=8)
    assert fast.max_pwv_mm == 20.0 and fast.polynomial_degree == 8
    out = fast.evaluate(15.0, 20.0)
    exact = plane.channels(demo_profile.scaled_to_pwv(15.0), radiometer_22, 20.0)
    np.testing.assert_allclose(out["brightness_k"], exact.brightness_k, atol=0.02)


def test_evaluate_many_equals_a_loop_of_evaluate_bit_for_bit(fast_183):
    rng = np.random.default_rng(20240611)
    pwv = rng.uniform(0.0, 12.0, 300)
    elevation = rng.uniform(5.0, 90.0, 300)
    pwv[:2] = [0.0, 12.0]
    elevation[:2] = [5.0, 90.0]
    many = fast_183.evaluate_many(pwv, elevation)
    assert set(many) == set(KEYS) | {"status"}
    for key in KEYS:
        assert many[key].shape == (300, 4) and many[key].dtype == np.float64
    assert many["status"].shape == (300,) and many["status"].dtype == np.int8
    assert np.all(many["status"] == wvr.FastModelStatus.OK)
    for i in range(len(pwv)):
        one = fast_183.evaluate(pwv[i], elevation[i])
        for key in KEYS:
            assert np.array_equal(many[key][i], one[key]), (key, i)


def test_evaluate_many_reports_out_of_domain_samples_without_raising(fast_183):
    nan = math.nan
    pwv = np.array([1.0, -0.1, 12.5, nan, 1.0, 1.0, 1.0, -1.0, 1.0])
    elevation = np.array([45.0, 45.0, 45.0, 45.0, 4.0, 90.5, nan, 4.0, 45.0])
    many = fast_183.evaluate_many(pwv, elevation)
    status = many["status"]
    S = wvr.FastModelStatus
    expected = [S.OK, S.PWV_OUT_OF_DOMAIN, S.PWV_OUT_OF_DOMAIN, S.PWV_OUT_OF_DOMAIN,
                S.ELEVATION_OUT_OF_DOMAIN, S.ELEVATION_OUT_OF_DOMAIN, S.ELEVATION_OUT_OF_DOMAIN,
                S.PWV_OUT_OF_DOMAIN, S.OK]
    np.testing.assert_array_equal(status, expected)
    bad = status != S.OK
    for key in KEYS:
        assert np.all(np.isnan(many[key][bad])), key
        assert np.all(np.isfinite(many[key][~bad])), key
    np.testing.assert_array_equal(many["brightness_k"][0], many["brightness_k"][-1])
    assert S.PWV_OUT_OF_DOMAIN.description == "pwv outside the fast model's domain"
    assert {s.name: int(s) for s in S} == {
        "OK": 0, "PWV_OUT_OF_DOMAIN": 1, "ELEVATION_OUT_OF_DOMAIN": 2, "LIQUID_OUT_OF_DOMAIN": 3,
        "BUFFER_SIZE_MISMATCH": 4}
    assert "ELEVATION_OUT_OF_DOMAIN = 2" in S.__doc__
    with pytest.raises(wvr.WvrValueError, match="status code = 9"):
        wvr._core.fast_status_description(9)


def test_cloud_liquid(fast_183, sky, demo_profile, radiometer_183):
    # The fast model's cloud fills 1000-2000 m above the ground; the exact model gets the same
    # cloud through AtmosphereProfile.with_cloud.
    for lwp in (0.0, 0.05, 0.3):
        out = fast_183.evaluate(1.5, 50.0, liquid_water_path_kg_m2=lwp)
        cloudy = demo_profile.scaled_to_pwv(1.5).with_cloud(1000.0, 1000.0, lwp)
        exact = sky.channels(cloudy, radiometer_183, 50.0)
        np.testing.assert_allclose(out["brightness_k"], exact.brightness_k, atol=0.02)
        h = 1e-6
        up = fast_183.evaluate(1.5, 50.0, lwp + h)["brightness_k"]
        down = fast_183.evaluate(1.5, 50.0, max(lwp - h, 0.0))["brightness_k"]
        fd = (up - down) / (2 * h if lwp > 0 else h)
        np.testing.assert_allclose(out["d_brightness_d_liquid_k_per_kg_m2"], fd, rtol=1e-4)
        assert np.all(out["d_brightness_d_liquid_k_per_kg_m2"] > 0)
    lwp = np.array([0.0, 0.1, 2.0, 2.5, -0.1, math.nan])
    many = fast_183.evaluate_many(1.0, 40.0, lwp)
    S = wvr.FastModelStatus
    np.testing.assert_array_equal(many["status"], [S.OK, S.OK, S.OK, S.LIQUID_OUT_OF_DOMAIN,
                                                   S.LIQUID_OUT_OF_DOMAIN,
                                                   S.LIQUID_OUT_OF_DOMAIN])
    for i in range(3):
        one = fast_183.evaluate(1.0, 40.0, lwp[i])
        for key in KEYS:
            assert np.array_equal(many[key][i], one[key]), (key, i)
    assert np.all(np.isnan(many["brightness_k"][3:]))
    with pytest.raises(wvr.WvrValueError, match="liquid_water_path_kg_m2 = 2.5"):
        fast_183.evaluate(1.0, 40.0, 2.5)


def test_cloud_layer_options(demo_profile, radiometer_22, sky):
    for base in (0.0, 3000.0):
        fast = wvr.FastSkyModel(demo_profile, radiometer_22, sky, cloud_base_above_ground_m=base,
                                cloud_thickness_m=500.0, max_liquid_water_path_kg_m2=5.0)
        assert fast.cloud_base_above_ground_m == base and fast.cloud_thickness_m == 500.0
        assert fast.max_liquid_water_path_kg_m2 == 5.0
        exact = sky.channels(demo_profile.with_cloud(base, 500.0, 1.0), radiometer_22, 60.0)
        np.testing.assert_allclose(fast.evaluate(1.0, 60.0, 1.0)["brightness_k"],
                                   exact.brightness_k, atol=0.02)
    with pytest.raises(wvr.WvrValueError, match="cloud_thickness_m = 1"):
        wvr.FastSkyModel(demo_profile, radiometer_22, cloud_thickness_m=1.0)


def test_evaluate_many_broadcasts_numbers_and_length_one_arrays(fast_183):
    pwv = np.linspace(0.2, 6.0, 7)
    scalar_elevation = fast_183.evaluate_many(pwv, 50.0)
    full = fast_183.evaluate_many(pwv, np.full(7, 50.0))
    one = fast_183.evaluate_many([2.0], np.array([20.0, 40.0, 60.0]))
    assert one["brightness_k"].shape == (3, 4)
    for key in KEYS:
        np.testing.assert_array_equal(scalar_elevation[key], full[key])
        np.testing.assert_array_equal(one[key][1], fast_183.evaluate(2.0, 40.0)[key])
    both = fast_183.evaluate_many(1.0, 45.0)
    assert both["brightness_k"].shape == (1, 4)
    empty = fast_183.evaluate_many(np.array([]), np.array([]))
    assert empty["brightness_k"].shape == (0, 4) and empty["status"].shape == (0,)
    # Integer and list inputs are converted.
    np.testing.assert_array_equal(fast_183.evaluate_many([1, 2], [45, 45])["brightness_k"],
                                  fast_183.evaluate_many([1.0, 2.0], 45.0)["brightness_k"])
    with pytest.raises(wvr.WvrValueError, match="pwv_mm has 2 dimensions"):
        fast_183.evaluate_many(np.ones((2, 2)), 45.0)
    with pytest.raises(wvr.WvrValueError, match="liquid_water_path_kg_m2 has 2 samples but pwv_mm has 7"):
        fast_183.evaluate_many(pwv, 45.0, [0.0, 0.1])


def test_wet_path_per_pwv_follows_the_exact_slant_path(fast_183, sky, demo_profile):
    elevations = np.array([10.0, 30.0, 90.0])
    fast = fast_183.wet_path_per_pwv_m_per_mm(elevations)
    assert fast.shape == (3,)
    exact = [sky.slant_path(demo_profile, e).wet_path_m / demo_profile.pwv_mm for e in elevations]
    np.testing.assert_allclose(fast, exact, rtol=1e-9)
    assert isinstance(fast_183.wet_path_per_pwv_m_per_mm(45.0), float)


def test_threads_evaluate_concurrently_with_the_same_results(fast_183, sky, demo_profile):
    rng = np.random.default_rng(7)
    series = [(rng.uniform(0.1, 8.0, 2000), rng.uniform(15.0, 90.0, 2000)) for _ in range(4)]
    serial = [fast_183.evaluate_many(p, e) for p, e in series]
    with concurrent.futures.ThreadPoolExecutor(max_workers=4) as pool:
        parallel = list(pool.map(lambda pe: fast_183.evaluate_many(*pe), series))
        spectra = list(pool.map(lambda e: sky.spectrum(demo_profile, [183.31, 230.0], e),
                                [20.0, 40.0, 60.0, 80.0]))
    for a, b in zip(serial, parallel):
        for key in KEYS:
            np.testing.assert_array_equal(a[key], b[key])
    for e, s in zip([20.0, 40.0, 60.0, 80.0], spectra):
        np.testing.assert_array_equal(s.brightness_k,
                                      sky.spectrum(demo_profile, [183.31, 230.0], e).brightness_k)
