"""SkyModel from Python: spectra, channel brightness with Jacobians and slant paths, checked
against an independent numpy transfer calculation, finite differences and the skyphase
program built from the same library."""
import json
import math
import os
import subprocess

import numpy as np
import pytest

import wvr

DB_PER_KM_PER_NP_PER_M = 10.0 * math.log10(math.e) * 1000.0


def numpy_plane_parallel_rj_k(profile, freq_ghz, elevation_deg, cosmic_background_k=2.725):
    """Upward-looking transfer through the profile's layers written out in numpy:
    J = sum_i J(T_i) (1 - exp(-tau_i)) exp(-sum_{j<i} tau_j) + J(T_cmb) exp(-tau), with
    tau_i = alpha_i dz_i / sin(elevation) and alpha_i from wvr.absorption (P.676-13 Annex 1)
    plus cloud liquid (P.840-9). Returns (RJ brightness K, opacity Np) per frequency."""
    f = np.asarray(freq_ghz, dtype=float)
    e = profile.vapour_pressure_hpa
    t = profile.temperature_k
    # wvr.absorption takes the P.676 density convention e = rho T / 216.7; pass the density
    # that reproduces the profile's ideal-gas vapour pressure exactly.
    rho_p676_g_m3 = e * 216.7 / t
    gamma = wvr.absorption(f[None, :], (profile.pressure_hpa - e)[:, None], t[:, None],
                           rho_p676_g_m3[:, None])["gamma_total_db_per_km"]
    alpha = gamma / DB_PER_KM_PER_NP_PER_M
    liquid = profile.liquid_density_kg_m3
    for i in np.flatnonzero(liquid > 0.0):
        alpha[i] += liquid[i] * wvr.cloud_liquid_absorption_m2_per_kg(f, t[i])
    ds = (profile.top_m - profile.base_m) / math.sin(math.radians(elevation_deg))
    tau = alpha * ds[:, None]
    below = np.vstack([np.zeros_like(f), np.cumsum(tau, axis=0)[:-1]])
    source = wvr.rj_brightness_k(f[None, :], t[:, None])
    rj = np.sum(source * -np.expm1(-tau) * np.exp(-below), axis=0)
    total = tau.sum(axis=0)
    rj += wvr.rj_brightness_k(f, cosmic_background_k) * np.exp(-total)
    return rj, total


FREQS = np.array([22.235, 31.4, 60.0, 90.0, 183.31, 186.0, 230.0, 345.0, 650.0, 999.0])


def test_spectrum_fields_shapes_and_units(sky, demo_profile):
    s = sky.spectrum(demo_profile, FREQS, 45.0)
    assert isinstance(s, wvr.SkySpectrum)
    for name in ("freq_ghz", "brightness_k", "rj_brightness_k", "opacity_np", "transmission"):
        values = getattr(s, name)
        assert values.shape == FREQS.shape and values.dtype == np.float64, name
        assert not values.flags.writeable, name
    np.testing.assert_array_equal(s.freq_ghz, FREQS)
    assert s.pwv_mm == pytest.approx(1.0, rel=1e-12)
    assert s.elevation_deg == 45.0
    assert s.model == "ITU-R P.676-13 Annex 1" == sky.model
    np.testing.assert_allclose(s.transmission, np.exp(-s.opacity_np), rtol=1e-12)
    np.testing.assert_allclose(s.brightness_k, wvr.planck_brightness_k(FREQS, s.rj_brightness_k),
                               rtol=1e-12)
    assert np.all(s.brightness_k > s.rj_brightness_k)
    # The opaque 60 GHz oxygen band and 183 GHz line radiate nearly at the air temperature near
    # the ground (270 K at the demo site); the 22 GHz line at 1 mm PWV is nearly transparent.
    assert 250.0 < s.brightness_k[2] < 270.0
    assert 240.0 < s.brightness_k[4] < 270.0
    assert s.transmission[0] > 0.95
    d = s.to_dict()
    assert set(d) == {"freq_ghz", "brightness_k", "rj_brightness_k", "opacity_np", "transmission",
                      "pwv_mm", "elevation_deg", "model"}
    one = sky.spectrum(demo_profile, 183.31, 45.0)
    assert one.brightness_k.shape == (1,)
    assert one.brightness_k[0] == s.brightness_k[4]


@pytest.mark.parametrize("elevation_deg", [90.0, 30.0, 12.0])
def test_spectrum_equals_an_independent_numpy_transfer(demo_profile, elevation_deg):
    plane = wvr.SkyModel(geometry="plane_parallel")
    cloudy = demo_profile.with_cloud(300.0, 800.0, 0.05)
    for profile in (demo_profile, cloudy):
        s = plane.spectrum(profile, FREQS, elevation_deg)
        rj, tau = numpy_plane_parallel_rj_k(profile, FREQS, elevation_deg)
        np.testing.assert_allclose(s.opacity_np, tau, rtol=1e-10)
        np.testing.assert_allclose(s.rj_brightness_k, rj, rtol=1e-10)
    assert (plane.spectrum(cloudy, [31.4], elevation_deg).brightness_k[0]
            > plane.spectrum(demo_profile, [31.4], elevation_deg).brightness_k[0] + 1.0)


def test_geometries_agree_at_zenith_and_spherical_is_thinner_at_low_elevation(demo_profile):
    spherical = wvr.SkyModel()
    plane = wvr.SkyModel(geometry="plane_parallel")
    no_bending = wvr.SkyModel(refraction=False)
    np.testing.assert_allclose(spherical.spectrum(demo_profile, FREQS, 90.0).rj_brightness_k,
                               plane.spectrum(demo_profile, FREQS, 90.0).rj_brightness_k,
                               rtol=1e-9)
    low = [m.slant_path(demo_profile, 10.0).airmass for m in (spherical, no_bending, plane)]
    # Earth curvature shortens the path; bending lengthens it back a little.
    assert low[2] == pytest.approx(1.0 / math.sin(math.radians(10.0)), rel=1e-12)
    assert low[1] < low[0] < low[2]


def test_cosmic_background_adds_its_transmitted_brightness(demo_profile):
    with_cmb = wvr.SkyModel(cosmic_background_k=2.725).spectrum(demo_profile, FREQS, 60.0)
    without = wvr.SkyModel(cosmic_background_k=0.0).spectrum(demo_profile, FREQS, 60.0)
    np.testing.assert_allclose(with_cmb.rj_brightness_k - without.rj_brightness_k,
                               wvr.rj_brightness_k(FREQS, 2.725) * with_cmb.transmission,
                               rtol=1e-9, atol=1e-12)


def test_slant_path(sky, demo_profile):
    plane = wvr.SkyModel(geometry="plane_parallel")
    p = plane.slant_path(demo_profile, 30.0)
    assert isinstance(p, wvr.SlantPath)
    assert p.layer_path_m.shape == (len(demo_profile),)
    np.testing.assert_allclose(p.layer_path_m, 2.0 * (demo_profile.top_m - demo_profile.base_m),
                               rtol=1e-12)
    assert p.airmass == pytest.approx(2.0, rel=1e-12)
    assert p.pwv_slant_mm == pytest.approx(2.0 * demo_profile.pwv_mm, rel=1e-12)
    zenith = sky.slant_path(demo_profile, 90.0)
    assert zenith.airmass == pytest.approx(1.0, rel=1e-12)
    # Common practice (REFERENCES.md): about 6.3-6.5 mm of wet path per mm of PWV at temperate
    # sites, more in colder air (k3 / Tm): the demo site is at 270 K.
    assert 6.0 < zenith.wet_path_m * 1000.0 / demo_profile.pwv_mm < 7.0
    assert set(zenith.to_dict()) == {"layer_path_m", "airmass", "wet_path_m",
                                     "hydrostatic_path_m", "pwv_slant_mm"}


def test_hydrostatic_path_of_a_sea_level_profile_matches_saastamoinen():
    # Integrating N_h through 40 km recovers the Saastamoinen zenith delay (REFERENCES.md
    # formula) to within the ~0.1 % left above 40 km and from the gravity model.
    profile = wvr.parametric_profile(pwv_mm=10.0)
    zhd = wvr.SkyModel().slant_path(profile, 90.0).hydrostatic_path_m
    reference = wvr.saastamoinen_zenith_hydrostatic_delay_m(1013.25, 45.0, 0.0)
    assert zhd == pytest.approx(reference, rel=0.006)


def test_refractivity_constants_change_the_wet_path(demo_profile):
    thayer = wvr.SkyModel()
    bevis = wvr.SkyModel(refractivity="bevis_1994")
    assert thayer.refractivity == "thayer_1974" and bevis.refractivity == "bevis_1994"
    ratio = (bevis.slant_path(demo_profile, 90.0).wet_path_m
             / thayer.slant_path(demo_profile, 90.0).wet_path_m)
    # Same ratio as the Bevis conversion factors at the profile's temperatures.
    assert ratio != 1.0
    assert ratio == pytest.approx(wvr.bevis_wet_delay_per_pwv(250.0, "bevis_1994")
                                  / wvr.bevis_wet_delay_per_pwv(250.0), rel=0.01)


def test_water_continuum_scale_strengthens_the_window_emission(demo_profile):
    nominal = wvr.SkyModel()
    stronger = wvr.SkyModel(water_continuum_scale=1.12)
    assert stronger.model.startswith("ITU-R P.676-13 Annex 1 (water continuum x1.12")
    assert wvr.SkyModel(water_continuum_scale=1.0).model == nominal.model
    a = nominal.spectrum(demo_profile, [90.0, 230.0, 345.0], 45.0)
    b = stronger.spectrum(demo_profile, [90.0, 230.0, 345.0], 45.0)
    assert np.all(b.opacity_np > a.opacity_np)
    assert np.all(b.brightness_k > a.brightness_k)


def test_sky_model_options_are_visible():
    m = wvr.SkyModel(geometry="plane_parallel", refraction=False, cosmic_background_k=2.728,
                     min_elevation_deg=10.0)
    assert m.geometry == "plane_parallel" and m.refraction is False
    assert m.cosmic_background_k == 2.728 and m.min_elevation_deg == 10.0
    assert "plane_parallel" in repr(m)
    profile = wvr.parametric_profile(pwv_mm=1.0)
    with pytest.raises(wvr.WvrValueError, match="elevation_deg = 8"):
        m.spectrum(profile, 90.0, 8.0)


def test_channels_are_passband_averages_of_the_spectrum(sky, demo_profile, radiometer_183,
                                                        radiometer_22):
    for radiometer in (radiometer_183, radiometer_22):
        c = sky.channels(demo_profile, radiometer, 40.0)
        assert isinstance(c, wvr.ChannelBrightness)
        for name in ("brightness_k", "d_brightness_d_pwv_k_per_mm", "d_brightness_d_temperature",
                     "path_sensitivity_k_per_mm"):
            assert getattr(c, name).shape == (len(radiometer),), name
        expected = []
        for q in radiometer.quadrature():
            spectrum = sky.spectrum(demo_profile, q["freq_ghz"], 40.0)
            expected.append(np.sum(q["weight"] * spectrum.rj_brightness_k))
        np.testing.assert_allclose(c.brightness_k, expected, rtol=1e-12)
        assert c.pwv_mm == pytest.approx(demo_profile.pwv_mm, rel=1e-15)
        assert c.elevation_deg == 40.0
        assert c.wet_path_m == pytest.approx(sky.slant_path(demo_profile, 40.0).wet_path_m,
                                             rel=1e-12)
        assert c.d_wet_path_d_pwv_m_per_mm == pytest.approx(c.wet_path_m / c.pwv_mm, rel=1e-12)
        np.testing.assert_allclose(
            c.path_sensitivity_k_per_mm,
            c.d_brightness_d_pwv_k_per_mm / (c.d_wet_path_d_pwv_m_per_mm * 1000.0), rtol=1e-12)
        assert np.all(c.d_brightness_d_pwv_k_per_mm > 0)
        assert set(c.to_dict()) >= {"brightness_k", "wet_path_m", "d_wet_path_d_pwv_m_per_mm"}


def test_183_ghz_channels_fall_off_from_the_line_centre(sky, demo_profile, radiometer_183):
    tb = sky.channels(demo_profile, radiometer_183, 50.0).brightness_k
    assert np.all(np.diff(tb) < 0)


def test_jacobians_match_finite_differences(demo_profile, radiometer_183, radiometer_22):
    # Finite differences on the same definitions: vapour scaled at fixed shape, and a uniform
    # temperature offset at fixed pressures and vapour densities. Plane-parallel geometry keeps
    # the ray independent of the perturbation.
    plane = wvr.SkyModel(geometry="plane_parallel")
    layers = demo_profile.to_dict()
    for radiometer in (radiometer_183, radiometer_22):
        c = plane.channels(demo_profile, radiometer, 35.0)
        h = 1e-3
        up = plane.channels(demo_profile.scaled_to_pwv(1.0 + h), radiometer, 35.0).brightness_k
        down = plane.channels(demo_profile.scaled_to_pwv(1.0 - h), radiometer, 35.0).brightness_k
        np.testing.assert_allclose(c.d_brightness_d_pwv_k_per_mm, (up - down) / (2 * h), rtol=1e-4)
        dt = 0.01
        warm = wvr.AtmosphereProfile(**{**layers, "temperature_k": layers["temperature_k"] + dt})
        cold = wvr.AtmosphereProfile(**{**layers, "temperature_k": layers["temperature_k"] - dt})
        fd_t = (plane.channels(warm, radiometer, 35.0).brightness_k
                - plane.channels(cold, radiometer, 35.0).brightness_k) / (2 * dt)
        np.testing.assert_allclose(c.d_brightness_d_temperature, fd_t, rtol=1e-4, atol=1e-7)


SKYPHASE = os.environ.get("WVR_SKYPHASE", "")


@pytest.mark.usefixtures("skyphase")
def test_python_and_skyphase_give_the_same_numbers(testdata, sky, demo_site, radiometer_183):
    site = str(testdata / "sites" / "demo-site.toml")
    radiometer = str(testdata / "radiometers" / "demo-183-dsb.toml")
    run = lambda *args: json.loads(subprocess.run([SKYPHASE, *args], capture_output=True,
                                                  text=True, check=True, timeout=120).stdout)
    cli = run("spectrum", "--freq-ghz", "22.235,183.31,230", "--site", site, "--pwv-mm", "1.5",
              "--elevation-deg", "45", "--format", "json")
    profile = wvr.profile_from_site(demo_site, pwv_mm=1.5)
    s = sky.spectrum(profile, [22.235, 183.31, 230.0], 45.0)
    for key in ("brightness_k", "rj_brightness_k", "opacity_np", "transmission"):
        np.testing.assert_allclose(getattr(s, key), cli[key], rtol=1e-12, err_msg=key)
    cli = run("channels", "--radiometer", radiometer, "--site", site, "--pwv-mm", "1.5",
              "--elevation-deg", "45", "--format", "json")
    assert cli["channels"] == radiometer_183.channel_names
    c = sky.channels(profile, radiometer_183, 45.0)
    point = cli["points"][0]
    for key in ("brightness_k", "d_brightness_d_pwv_k_per_mm", "d_brightness_d_temperature",
                "path_sensitivity_k_per_mm"):
        np.testing.assert_allclose(getattr(c, key), point[key], rtol=1e-12, err_msg=key)
