"""Atmosphere profiles from Python: parametric, from site files, from soundings and from
arrays; their read-only array views and derived profiles."""
import numpy as np
import pytest

import wvr


def mid_m(profile):
    return 0.5 * (profile.base_m + profile.top_m)


def test_parametric_profile_layers_follow_the_lapse_rate_and_close_the_column():
    p = wvr.parametric_profile(pwv_mm=5.0)
    assert isinstance(p, wvr.AtmosphereProfile)
    # 48 geometric layers plus one boundary at the tropopause knot.
    assert len(p) == 49
    for name in ("base_m", "top_m", "pressure_hpa", "temperature_k", "vapour_density_kg_m3",
                 "liquid_density_kg_m3", "vapour_pressure_hpa"):
        values = getattr(p, name)
        assert values.shape == (49,) and values.dtype == np.float64, name
    assert p.ground_altitude_m == 0.0 and p.top_altitude_m == 40000.0
    np.testing.assert_array_equal(p.base_m[1:], p.top_m[:-1])
    z = mid_m(p)
    expected_t = np.where(z < 11000.0, 288.15 - 6.5e-3 * z, 288.15 - 6.5e-3 * 11000.0)
    np.testing.assert_allclose(p.temperature_k, expected_t, rtol=0, atol=1e-9)
    assert np.all(np.diff(p.pressure_hpa) < 0)
    assert p.pwv_mm == pytest.approx(5.0, rel=1e-12)
    # The column is the sum of density times thickness (1 kg/m^2 = 1 mm).
    assert p.pwv_mm == pytest.approx(np.sum(p.vapour_density_kg_m3 * (p.top_m - p.base_m)),
                                     rel=1e-12)
    assert p.liquid_water_path_kg_m2 == 0.0
    # Vapour pressure is the ideal-gas partial pressure, rho R_v T (hPa).
    np.testing.assert_allclose(p.vapour_pressure_hpa,
                               p.vapour_density_kg_m3 * 461.5228 * p.temperature_k / 100.0,
                               rtol=1e-6)
    assert "49 layers" in repr(p)


def test_sea_level_defaults_match_the_us_standard_atmosphere():
    # Same surface state, lapse rate and tropopause as U.S. Standard Atmosphere 1976; the
    # profile integrates hydrostatics with 1/r^2 gravity instead of geopotential height and
    # puts the tropopause at 11 km geometric (11.02 km in the standard), hence 1e-3.
    p = wvr.parametric_profile(pwv_mm=1.0)
    z = mid_m(p)
    below = z < 20000.0
    standard = wvr.us_standard_atmosphere_1976(z[below])
    np.testing.assert_allclose(p.pressure_hpa[below], standard["pressure_hpa"], rtol=1e-3)


def test_layer_count_and_top_are_honoured():
    p = wvr.parametric_profile(pwv_mm=1.0, layer_count=120, top_altitude_m=30000.0)
    # 120 geometric layers; the tropopause (11 km) becomes a boundary, either by moving a
    # nearby one onto it or by splitting a layer.
    assert len(p) in (120, 121)
    assert 11000.0 in p.base_m
    assert len(wvr.parametric_profile(pwv_mm=1.0, layer_count=240)) >= 240
    assert p.top_altitude_m == 30000.0


def test_relative_humidity_sets_the_surface_vapour():
    p = wvr.parametric_profile(surface_relative_humidity_pct=50.0)
    ratio = p.vapour_pressure_hpa[0] / wvr.saturation_vapour_pressure_hpa(p.temperature_k[0])
    # The lowest layer holds the layer mean of an exponential that starts at 50 % at the ground.
    assert ratio == pytest.approx(0.5, rel=0.02)
    assert p.pwv_mm > 1.0


def test_inversion_as_dict_or_tuple():
    plain = wvr.parametric_profile(altitude_m=4850.0, surface_temperature_k=270.0,
                                   surface_pressure_hpa=565.0, tropopause_m=16500.0, pwv_mm=1.0)
    as_dict = wvr.parametric_profile(
        altitude_m=4850.0, surface_temperature_k=270.0, surface_pressure_hpa=565.0,
        tropopause_m=16500.0, pwv_mm=1.0,
        inversion={"base_above_ground_m": 200.0, "depth_m": 300.0, "temperature_jump_k": 4.0})
    as_tuple = wvr.parametric_profile(
        altitude_m=4850.0, surface_temperature_k=270.0, surface_pressure_hpa=565.0,
        tropopause_m=16500.0, pwv_mm=1.0, inversion=(200.0, 300.0, 4.0))
    np.testing.assert_array_equal(as_dict.temperature_k, as_tuple.temperature_k)
    z = mid_m(as_dict) - 4850.0
    lapse = np.interp(mid_m(as_dict), mid_m(plain), plain.temperature_k)
    offset = as_dict.temperature_k - lapse
    # Below the inversion nothing changes; above it the lapse rate resumes 4 K warmer.
    np.testing.assert_allclose(offset[z < 200.0], 0.0, atol=1e-9)
    above = (z > 500.0) & (z < 10000.0)
    assert above.sum() > 10
    np.testing.assert_allclose(offset[above], 4.0, atol=1e-9)


def test_arrays_are_read_only_copies(demo_profile):
    t = demo_profile.temperature_k
    with pytest.raises(ValueError):
        t[0] = 0.0
    assert not t.flags.writeable
    assert demo_profile.temperature_k is not t


def test_round_trip_through_arrays(demo_profile):
    rebuilt = wvr.AtmosphereProfile(**demo_profile.to_dict())
    assert len(rebuilt) == len(demo_profile)
    for key, values in demo_profile.to_dict().items():
        np.testing.assert_array_equal(getattr(rebuilt, key), values, err_msg=key)
    assert rebuilt.pwv_mm == demo_profile.pwv_mm


def test_profile_from_plain_lists_without_liquid():
    p = wvr.AtmosphereProfile(base_m=[0, 100, 300], top_m=[100, 300, 600],
                              pressure_hpa=[1000, 985, 960], temperature_k=[288, 287, 285],
                              vapour_density_kg_m3=[0.01, 0.008, 0.006])
    np.testing.assert_array_equal(p.liquid_density_kg_m3, [0.0, 0.0, 0.0])
    assert p.pwv_mm == pytest.approx(0.01 * 100 + 0.008 * 200 + 0.006 * 300, rel=1e-12)


def test_scaled_to_pwv_keeps_the_shape(demo_profile):
    wetter = demo_profile.scaled_to_pwv(3.5)
    assert wetter.pwv_mm == pytest.approx(3.5, rel=1e-12)
    assert demo_profile.pwv_mm == pytest.approx(1.0, rel=1e-12)  # the original is unchanged
    ratio = wetter.vapour_density_kg_m3 / demo_profile.vapour_density_kg_m3
    np.testing.assert_allclose(ratio, 3.5, rtol=1e-12)
    np.testing.assert_array_equal(wetter.temperature_k, demo_profile.temperature_k)
    np.testing.assert_array_equal(wetter.pressure_hpa, demo_profile.pressure_hpa)
    assert demo_profile.scaled_to_pwv(0.0).pwv_mm == 0.0


def test_with_cloud_puts_the_liquid_between_base_and_top(demo_profile):
    cloudy = demo_profile.with_cloud(base_above_ground_m=500.0, thickness_m=1000.0,
                                     liquid_water_path_kg_m2=0.2)
    assert cloudy.liquid_water_path_kg_m2 == pytest.approx(0.2, rel=1e-12)
    ground = demo_profile.ground_altitude_m
    outside = (cloudy.top_m <= ground + 500.0) | (cloudy.base_m >= ground + 1500.0)
    assert np.all(cloudy.liquid_density_kg_m3[outside] == 0.0)
    assert np.all(cloudy.liquid_density_kg_m3[~outside] > 0.0)
    inside = (cloudy.base_m >= ground + 500.0) & (cloudy.top_m <= ground + 1500.0)
    np.testing.assert_allclose(cloudy.liquid_density_kg_m3[inside], 0.2 / 1000.0, rtol=1e-12)
    twice = cloudy.with_cloud(500.0, 1000.0, 0.2)
    assert twice.liquid_water_path_kg_m2 == pytest.approx(0.4, rel=1e-12)


def test_site_file_fields(demo_site):
    assert demo_site.name == "Cerro Viento plateau (fictional)"
    assert demo_site.latitude_deg == -24.0
    assert demo_site.altitude_m == 4850.0
    assert demo_site.surface_temperature_k == 270.0
    assert demo_site.surface_pressure_hpa == 565.0
    assert demo_site.lapse_rate_k_per_km == 6.5
    assert demo_site.tropopause_m == 16500.0
    assert demo_site.water_scale_height_m == 1500.0
    assert demo_site.pwv_mm == 1.0
    assert demo_site.surface_relative_humidity_pct is None
    assert demo_site.inversion is None
    d = demo_site.to_dict()
    assert d["name"] == demo_site.name and d["pwv_mm"] == 1.0 and d["inversion"] is None
    assert "Cerro Viento" in repr(demo_site)


def test_profile_from_site_equals_the_parametric_profile(demo_site, demo_profile):
    params = {k: v for k, v in demo_site.to_dict().items() if k not in ("name", "latitude_deg")}
    direct = wvr.parametric_profile(**params)
    np.testing.assert_array_equal(direct.temperature_k, demo_profile.temperature_k)
    np.testing.assert_array_equal(direct.vapour_density_kg_m3, demo_profile.vapour_density_kg_m3)
    assert demo_profile.ground_altitude_m == 4850.0
    assert demo_profile.pressure_hpa[0] < 565.0
    wetter = wvr.profile_from_site(demo_site, pwv_mm=2.5, layer_count=64)
    assert wetter.pwv_mm == pytest.approx(2.5, rel=1e-12)
    assert len(wetter) >= 64


def test_site_text_with_humidity_and_inversion():
    site = wvr.parse_site(
        'name = "text site"\naltitude_m = 2000.0\nsurface_relative_humidity_pct = 30.0\n'
        "[inversion]\nbase_above_ground_m = 100.0\ndepth_m = 200.0\ntemperature_jump_k = 3.0\n")
    assert site.pwv_mm is None and site.surface_relative_humidity_pct == 30.0
    assert site.inversion == {"base_above_ground_m": 100.0, "depth_m": 200.0,
                              "temperature_jump_k": 3.0}
    from_humidity = wvr.profile_from_site(site)
    # A given PWV replaces the relative humidity.
    from_pwv = wvr.profile_from_site(site, pwv_mm=from_humidity.pwv_mm * 2.0)
    assert from_pwv.pwv_mm == pytest.approx(2.0 * from_humidity.pwv_mm, rel=1e-12)


def test_sounding_csv_reads_levels_in_si_units(testdata, table):
    path = testdata / "reference" / "soundings" / "may4_sounding.csv"
    levels = wvr.read_sounding_csv(path)
    assert set(levels) == {"height_m", "pressure_hpa", "temperature_k", "vapour_density_kg_m3"}
    raw = table("reference/soundings/may4_sounding.csv")
    np.testing.assert_array_equal(levels["height_m"], raw["height_m"])
    np.testing.assert_array_equal(levels["pressure_hpa"], raw["pressure_hpa"])
    np.testing.assert_allclose(levels["temperature_k"], raw["temperature_c"] + 273.15, rtol=1e-15)
    # vapour_density_g_m3 is the first humidity column the reader uses when present.
    np.testing.assert_allclose(levels["vapour_density_kg_m3"], raw["vapour_density_g_m3"] * 1e-3,
                               rtol=1e-15)
    assert not levels["height_m"].flags.writeable


@pytest.mark.parametrize("name", ["may4_sounding", "jan20_sounding", "dec9_sounding"])
def test_sounding_pwv_matches_metpy(testdata, table, name):
    # MetPy precipitable_water (commit 79abf129, trapezoid over pressure with Bolton's
    # saturation pressure): testdata/reference/soundings/results_metpy_pwv.csv. The formulas
    # differ (layer integration, saturation formula), hence 2 %.
    metpy = table("reference/soundings/results_metpy_pwv.csv")
    expected = metpy["pw_metpy_mm"][metpy["profile"].index(name)]
    levels = wvr.read_sounding_csv(testdata / "reference" / "soundings" / f"{name}.csv")
    profile = wvr.profile_from_sounding(**levels)
    assert profile.ground_altitude_m == levels["height_m"][0]
    assert profile.top_altitude_m == pytest.approx(levels["height_m"][-1], abs=1e-6)
    assert profile.pwv_mm == pytest.approx(expected, rel=0.02)


def test_sounding_layer_count_refines_the_grid(testdata):
    levels = wvr.read_sounding_csv(testdata / "reference" / "soundings" / "jan20_sounding.csv")
    coarse = wvr.profile_from_sounding(**levels)
    fine = wvr.profile_from_sounding(**levels, layer_count=200)
    assert len(fine) > len(coarse)
    assert fine.pwv_mm == pytest.approx(coarse.pwv_mm, rel=1e-3)


def test_profile_from_sounding_accepts_lists():
    p = wvr.profile_from_sounding([5000.0, 6000.0, 8000.0], [550.0, 480.0, 360.0],
                                  [268.0, 262.0, 249.0], [1.5e-3, 0.8e-3, 0.2e-3], layer_count=8)
    assert p.ground_altitude_m == 5000.0
    assert p.pwv_mm > 0.0
