"""Radiometer configurations from files, TOML text and Python dicts."""
import numpy as np
import pytest

import wvr


def test_demo_183_ghz_file(radiometer_183):
    r = radiometer_183
    assert r.name == "Cerro Viento demo 183 GHz radiometer"
    assert r.lo_freq_ghz == 183.31
    assert len(r) == 4 and r.quadrature_points_per_sideband == 4
    assert r.channel_names == ["w1", "w2", "w3", "w4"]
    np.testing.assert_array_equal(r.if_centre_ghz, [1.1, 2.7, 4.9, 7.6])
    np.testing.assert_array_equal(r.bandwidth_ghz, [0.4, 0.9, 1.6, 2.4])
    np.testing.assert_array_equal(r.noise_k, [0.10, 0.08, 0.07, 0.07])
    assert r.channels[0] == {"name": "w1", "if_centre_ghz": 1.1, "bandwidth_ghz": 0.4,
                             "sideband": "double", "sideband_ratio": 1.0, "noise_k": 0.1}
    with pytest.raises(ValueError):
        r.noise_k[0] = 1.0
    assert "4 channels" in repr(r)


def test_quadrature_covers_both_sidebands(radiometer_183):
    q = radiometer_183.quadrature()
    assert len(q) == 4
    for channel, nodes in zip(radiometer_183.channels, q):
        assert nodes["freq_ghz"].shape == nodes["weight"].shape == (8,)
        assert np.sum(nodes["weight"]) == pytest.approx(1.0, rel=1e-14)
        offsets = np.abs(nodes["freq_ghz"] - 183.31)
        half = channel["bandwidth_ghz"] / 2
        assert np.all(offsets > channel["if_centre_ghz"] - half)
        assert np.all(offsets < channel["if_centre_ghz"] + half)
        # Equal sideband gains: half the weight below the LO, half above.
        assert np.sum(nodes["weight"][nodes["freq_ghz"] < 183.31]) == pytest.approx(0.5, rel=1e-14)


def test_single_sideband_file(radiometer_22):
    assert radiometer_22.lo_freq_ghz == 19.0
    assert [c["sideband"] for c in radiometer_22.channels] == ["upper"] * 4
    for channel, nodes in zip(radiometer_22.channels, radiometer_22.quadrature()):
        assert nodes["freq_ghz"].shape == (4,)
        assert np.all(nodes["freq_ghz"] > 19.0)
        assert np.mean(nodes["freq_ghz"]) == pytest.approx(19.0 + channel["if_centre_ghz"],
                                                           rel=1e-12)


def test_dicts_text_and_file_build_the_same_radiometer(testdata, radiometer_183):
    text = (testdata / "radiometers" / "demo-183-dsb.toml").read_text()
    from_text = wvr.Radiometer.from_toml(text, "demo text")
    from_dicts = wvr.Radiometer(name=radiometer_183.name, lo_freq_ghz=183.31,
                                channels=radiometer_183.channels)
    for r in (from_text, from_dicts):
        assert r.channels == radiometer_183.channels
        assert r.name == radiometer_183.name
        for a, b in zip(r.quadrature(), radiometer_183.quadrature()):
            np.testing.assert_array_equal(a["freq_ghz"], b["freq_ghz"])
            np.testing.assert_array_equal(a["weight"], b["weight"])
    with pytest.raises(wvr.WvrValueError, match="demo text"):
        wvr.Radiometer.from_toml(text.replace("lo_freq_ghz = 183.310", "lo_freq_ghz = -1"),
                                 "demo text")


def test_defaults_and_options_of_dict_channels():
    r = wvr.Radiometer(lo_freq_ghz=90.0,
                       channels=[{"if_centre_ghz": 4.0, "bandwidth_ghz": 2.0},
                                 {"if_centre_ghz": 8.0, "bandwidth_ghz": 2.0, "sideband": "lower",
                                  "name": "low", "noise_k": 0.2}],
                       quadrature_points_per_sideband=6)
    assert r.name == "unnamed radiometer"
    assert r.channel_names == ["channels[0]", "low"]
    assert r.channels[0]["sideband"] == "double" and r.channels[0]["noise_k"] == 0.0
    q = r.quadrature()
    assert q[0]["freq_ghz"].shape == (12,) and q[1]["freq_ghz"].shape == (6,)
    assert np.all(q[1]["freq_ghz"] < 90.0)
    unequal = wvr.Radiometer(lo_freq_ghz=90.0, channels=[
        {"if_centre_ghz": 4.0, "bandwidth_ghz": 2.0, "sideband_ratio": 3.0}])
    weights = unequal.quadrature()[0]
    upper = weights["weight"][weights["freq_ghz"] > 90.0].sum()
    assert upper == pytest.approx(0.75, rel=1e-14)  # ratio 3: 3 / (1 + 3) of the gain above
