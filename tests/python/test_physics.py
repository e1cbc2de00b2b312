"""Absorption and the small physics helpers against published tables and formulas."""
import math

import numpy as np
import pytest

import wvr

# CODATA 2018 exact values of the SI (2019 redefinition).
PLANCK_J_S = 6.62607015e-34
BOLTZMANN_J_PER_K = 1.380649e-23


def test_p676_matches_the_itu_validation_examples(table):
    # ITU-R P.676-13 validation examples, workbook CG-3M3J-13-ValEx-Rev5_1.xlsx, sheet
    # ITURP676-13_gamma (testdata/reference/itu-r-p676-13/ITURP676-13_gamma.csv; P is the
    # dry-air pressure, rho in g/m^3). An exact Annex 1 implementation agrees to ~1e-9.
    t = table("reference/itu-r-p676-13/ITURP676-13_gamma.csv", skip_rows_after_header=1)
    assert len(t["f"]) == 350
    # Element by element (every argument an array) ...
    g = wvr.absorption(t["f"], t["P"], t["T"], t["rho"])
    np.testing.assert_allclose(g["gamma_oxygen_db_per_km"], t["gamma0"], rtol=1e-6)
    np.testing.assert_allclose(g["gamma_water_db_per_km"], t["gammaw"], rtol=1e-6)
    np.testing.assert_allclose(g["gamma_total_db_per_km"], t["gamma"], rtol=1e-6)
    # ... and all frequencies at one state give the same numbers.
    assert len(set(t["P"])) == len(set(t["T"])) == len(set(t["rho"])) == 1
    one = wvr.absorption(t["f"], t["P"][0], t["T"][0], t["rho"][0])
    for key in g:
        np.testing.assert_allclose(one[key], g[key], rtol=1e-14, err_msg=key)


def test_p676_matches_itur_py_exact_to_1000_ghz(table):
    # ITU-Rpy commit 6d7f35c, itur.models.itu676.gamma0_exact / gammaw_exact / gamma_exact
    # (P.676-13 Annex 1): testdata/reference/itur_p676_specific_attenuation.csv.
    t = table("reference/itur_p676_specific_attenuation.csv")
    assert t["f_GHz"].max() >= 1000.0
    g = wvr.absorption(t["f_GHz"], t["p_hPa"], t["T_K"], t["rho_gm3"])
    np.testing.assert_allclose(g["gamma_oxygen_db_per_km"], t["gamma_oxygen_dBkm"], rtol=1e-6)
    np.testing.assert_allclose(g["gamma_water_db_per_km"], t["gamma_water_dBkm"], rtol=1e-6)
    np.testing.assert_allclose(g["gamma_total_db_per_km"], t["gamma_total_dBkm"], rtol=1e-6)


def test_absorption_broadcasts_and_returns_floats_for_scalars():
    scalar = wvr.absorption(183.0, 1013.25, 288.15, 7.5)
    assert set(scalar) == {"gamma_oxygen_db_per_km", "gamma_water_db_per_km",
                           "gamma_total_db_per_km"}
    assert all(isinstance(v, float) for v in scalar.values())
    # REFERENCES.md, P.676-13 validation values at 183 GHz: 0.0127339 and 27.665008 dB/km.
    assert scalar["gamma_oxygen_db_per_km"] == pytest.approx(0.0127339, rel=1e-5)
    assert scalar["gamma_water_db_per_km"] == pytest.approx(27.665008, rel=1e-6)
    grid = wvr.absorption(np.array([[22.235], [183.31]]), 1013.25, 288.15, [0.0, 1.0, 7.5])
    assert grid["gamma_water_db_per_km"].shape == (2, 3)
    assert np.all(grid["gamma_water_db_per_km"][:, 0] == 0.0)
    assert np.all(np.diff(grid["gamma_water_db_per_km"], axis=1) > 0)
    np.testing.assert_allclose(grid["gamma_total_db_per_km"],
                               grid["gamma_oxygen_db_per_km"] + grid["gamma_water_db_per_km"],
                               rtol=1e-15)
    assert "P.676-13" in wvr.absorption_model_name()


@pytest.mark.parametrize("column, temperature_c", [("Kl_T0C", 0.0), ("Kl_Tm10C", -10.0),
                                                   ("Kl_Tm20C", -20.0)])
def test_cloud_liquid_matches_itur_py_p840(table, column, temperature_c):
    # ITU-Rpy commit 6d7f35c, itur.models.itu840.specific_attenuation_coefficients (P.840-9):
    # testdata/reference/itur_p840_cloud_liquid_coefficient.csv, (dB/km)/(g/m^3).
    t = table("reference/itur_p840_cloud_liquid_coefficient.csv")
    k = wvr.cloud_liquid_specific_attenuation(t["f_GHz"], temperature_c + 273.15)
    assert k.shape == t["f_GHz"].shape
    np.testing.assert_allclose(k, t[column], rtol=1e-6)


def test_cloud_liquid_mass_coefficient_is_the_same_law_in_si_units():
    f = np.array([22.0, 90.0, 183.31, 650.0])
    k_db = wvr.cloud_liquid_specific_attenuation(f, 268.0)
    k_si = wvr.cloud_liquid_absorption_m2_per_kg(f, 268.0)
    # (dB/km)/(g/m^3) -> (Np/m)/(kg/m^3): / (10 log10(e) * 1000) * 1000.
    np.testing.assert_allclose(k_si, k_db / (10.0 * math.log10(math.e)), rtol=1e-12)
    assert isinstance(wvr.cloud_liquid_specific_attenuation(90.0, 268.0), float)


def test_saturation_pressure_matches_itur_py_p453(table):
    # ITU-Rpy commit 6d7f35c, itur.models.itu453.saturation_vapour_pressure (P.453-13
    # eqs. 9-10): testdata/reference/itur_p453_saturation_vapour_pressure.csv.
    t = table("reference/itur_p453_saturation_vapour_pressure.csv")
    tk = t["T_C"] + 273.15
    water = wvr.saturation_vapour_pressure_hpa(tk, t["P_hPa"])
    np.testing.assert_allclose(water, t["es_water_hPa"], rtol=1e-8)
    ice_rows = ~np.isnan(t["es_ice_hPa"])
    ice = wvr.saturation_vapour_pressure_hpa(tk[ice_rows], t["P_hPa"][ice_rows], phase="ice")
    np.testing.assert_allclose(ice, t["es_ice_hPa"][ice_rows], rtol=1e-8)


def test_saturation_pressure_without_enhancement():
    # REFERENCES.md (P.453 Buck form with EF = 1, computed): 0 C 6.1121 hPa, 20 C 23.3834 hPa.
    es = wvr.saturation_vapour_pressure_hpa([273.15, 293.15])
    np.testing.assert_allclose(es, [6.1121, 23.3834], rtol=1e-5)


def test_vapour_pressure_is_the_ideal_gas_law():
    # rho_v = 216.7 e / T g/m^3 (P.453 / REFERENCES.md); R_v = 461.5228 J/(kg K) gives 216.68.
    e = wvr.vapour_pressure_hpa(7.5e-3, 288.15)
    assert e == pytest.approx(7.5 * 288.15 / 216.7, rel=2e-4)


def test_us_standard_atmosphere_matches_its_table():
    # U.S. Standard Atmosphere 1976, Table I (REFERENCES.md), pressure in Pa, 1e-4 relative.
    heights = np.arange(0.0, 7000.0, 1000.0)
    level = wvr.us_standard_atmosphere_1976(heights)
    np.testing.assert_allclose(level["pressure_hpa"] * 100.0,
                               [101325, 89876, 79501, 70121, 61660, 54048, 47217], rtol=1e-4)
    np.testing.assert_allclose(level["temperature_k"][[1, 2, 4]], [281.651, 275.154, 262.166],
                               rtol=1e-5)
    top = wvr.us_standard_atmosphere_1976(86000.0)
    assert isinstance(top["temperature_k"], float)


def test_us_standard_atmosphere_matches_itur_py_p835(table):
    # ITU-Rpy commit 6d7f35c, itur.models.itu835 standard_temperature / standard_pressure /
    # standard_water_vapour_density (P.835-6): testdata/reference/itur_p835_reference_atmosphere.csv.
    t = table("reference/itur_p835_reference_atmosphere.csv")
    h = t["h_km"] * 1000.0
    level = wvr.us_standard_atmosphere_1976(h)
    np.testing.assert_allclose(level["temperature_k"], t["T_K"], rtol=1e-6)
    np.testing.assert_allclose(level["pressure_hpa"], t["P_hPa"], rtol=1e-6)
    np.testing.assert_allclose(wvr.p835_reference_vapour_density_kg_m3(h) * 1e3, t["rho_gm3"],
                               rtol=1e-8)


def test_rayleigh_jeans_brightness_is_the_planck_law():
    f = np.array([22.235, 183.31, 650.0])[:, None]
    t = np.array([2.725, 30.0, 270.0])[None, :]
    x = PLANCK_J_S * f * 1e9 / BOLTZMANN_J_PER_K
    expected = x / np.expm1(x / t)
    j = wvr.rj_brightness_k(f, t)
    assert j.shape == (3, 3)
    np.testing.assert_allclose(j, expected, rtol=1e-13)
    np.testing.assert_allclose(wvr.planck_brightness_k(f, j), np.broadcast_to(t, j.shape),
                               rtol=1e-12)
    # REFERENCES.md: h f / 2k = 4.3988 K at 183.31 GHz (CODATA), the Planck - RJ offset in the
    # high-temperature limit (the next term, (h f / k)^2 / 12 T, is 6e-7 K at 1e7 K).
    assert 1e7 - wvr.rj_brightness_k(183.31, 1e7) == pytest.approx(4.3988, abs=1e-4)
    assert wvr.rj_brightness_k(183.31, 0.0) == 0.0


def test_saastamoinen_delay():
    # REFERENCES.md (Saastamoinen 1972 with the Davis et al. 1985 gravity term, computed):
    # 2.30697 m at 1013.25 hPa, 45 deg, 0 m; 2.27629 m at 1000 hPa, 48 deg, 200 m.
    zhd = wvr.saastamoinen_zenith_hydrostatic_delay_m([1013.25, 1000.0], [45.0, 48.0],
                                                      [0.0, 200.0])
    np.testing.assert_allclose(zhd, [2.30697, 2.27629], atol=1e-5)
    assert isinstance(wvr.saastamoinen_zenith_hydrostatic_delay_m(565.0, -24.0, 4850.0), float)


def test_bevis_wet_delay_per_pwv():
    # REFERENCES.md, Bevis et al. (1992) with the Bevis et al. (1994) constants (computed,
    # +/- 0.5 %): 6.568 at 273.15 K, 6.316 at 288.15 K, 6.131 at 300 K.
    ratio = wvr.bevis_wet_delay_per_pwv([273.15, 288.15, 300.0], refractivity="bevis_1994")
    np.testing.assert_allclose(ratio, [6.568, 6.316, 6.131], rtol=5e-3)
    # Thayer (1974) constants, the default: k2' = 64.8 - 0.621977 * 77.6 K/hPa, k3 = 3.776e5.
    tm = 70.2 + 0.72 * 270.0
    k2p = (64.8 - 0.621977 * 77.6) / 100.0
    expected = 1e-6 * 1000.0 * 461.5228 * (3.776e5 / 100.0 / tm + k2p)
    assert wvr.bevis_wet_delay_per_pwv(270.0) == pytest.approx(expected, rel=1e-12)
