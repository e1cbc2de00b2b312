"""Error mapping: every bad input reaches Python as wvr.WvrValueError, which is also a
ValueError and a wvr.WvrError, with the field name (and value) in the message."""
import math

import numpy as np
import pytest

import wvr

NAN = math.nan


def test_exception_hierarchy():
    assert issubclass(wvr.WvrError, Exception)
    assert not issubclass(wvr.WvrError, ValueError)
    assert issubclass(wvr.WvrValueError, wvr.WvrError)
    assert issubclass(wvr.WvrValueError, ValueError)
    assert wvr.WvrValueError.__module__ == "wvr"
    assert wvr.WvrError.__doc__ and wvr.WvrValueError.__doc__


def test_either_base_catches_a_value_error():
    for base in (wvr.WvrError, ValueError, wvr.WvrValueError):
        with pytest.raises(base):
            wvr.parametric_profile(pwv_mm=-1.0)


def good_channel(**overrides):
    channel = {"name": "a", "if_centre_ghz": 2.0, "bandwidth_ghz": 1.0}
    channel.update(overrides)
    return channel


# (description, call, text the message must contain). Each call gets the fixtures as a dict.
BAD_INPUT = [
    ("negative pwv", lambda f: wvr.parametric_profile(pwv_mm=-1.0), "pwv_mm = -1"),
    ("nan surface temperature",
     lambda f: wvr.parametric_profile(surface_temperature_k=NAN, pwv_mm=1.0),
     "surface_temperature_k = nan"),
    ("no humidity", lambda f: wvr.parametric_profile(), "pwv_mm and surface_relative_humidity_pct"),
    ("both humidities",
     lambda f: wvr.parametric_profile(pwv_mm=1.0, surface_relative_humidity_pct=20.0),
     "surface_relative_humidity_pct"),
    ("bad layer count", lambda f: wvr.parametric_profile(pwv_mm=1.0, layer_count=2), "layer_count = 2"),
    ("inversion key", lambda f: wvr.parametric_profile(pwv_mm=1.0, inversion={"depth": 1.0}),
     "inversion: unknown key 'depth'"),
    ("inversion length", lambda f: wvr.parametric_profile(pwv_mm=1.0, inversion=(1.0, 2.0)),
     "inversion has 2 values"),
    ("inversion range",
     lambda f: wvr.parametric_profile(pwv_mm=1.0, inversion=(100.0, 200.0, 99.0)),
     "inversion.temperature_jump_k = 99"),
    ("site pwv", lambda f: wvr.profile_from_site(f["demo_site"], pwv_mm=-2.0), "pwv_mm = -2"),
    ("scaled pwv", lambda f: f["demo_profile"].scaled_to_pwv(-1.0), "pwv_mm = -1"),
    ("scaled nan", lambda f: f["demo_profile"].scaled_to_pwv(NAN), "pwv_mm = nan"),
    ("cloud thickness", lambda f: f["demo_profile"].with_cloud(500.0, 0.0, 0.1),
     "cloud.thickness_m = 0"),
    ("elevation 4 deg", lambda f: f["sky"].spectrum(f["demo_profile"], 183.31, 4.0),
     "elevation_deg = 4"),
    ("elevation 91 deg", lambda f: f["sky"].spectrum(f["demo_profile"], 183.31, 91.0),
     "elevation_deg = 91"),
    ("frequency 1200 GHz", lambda f: f["sky"].spectrum(f["demo_profile"], [183.0, 1200.0], 45.0),
     "freq_ghz[1] = 1200"),
    ("nan frequency", lambda f: f["sky"].spectrum(f["demo_profile"], NAN, 45.0),
     "freq_ghz[0] = nan"),
    ("no frequency", lambda f: f["sky"].spectrum(f["demo_profile"], [], 45.0), "freq_ghz is empty"),
    ("2-d frequency", lambda f: f["sky"].spectrum(f["demo_profile"], np.ones((2, 2)), 45.0),
     "freq_ghz has 2 dimensions"),
    ("text frequency", lambda f: f["sky"].spectrum(f["demo_profile"], ["abc"], 45.0), "freq_ghz"),
    ("none frequency", lambda f: f["sky"].spectrum(f["demo_profile"], None, 45.0),
     "freq_ghz is None"),
    ("channels elevation", lambda f: f["sky"].channels(f["demo_profile"], f["radiometer_183"], 4.0),
     "elevation_deg = 4"),
    ("channels dry profile",
     lambda f: f["sky"].channels(f["demo_profile"].scaled_to_pwv(0.0), f["radiometer_183"], 45.0),
     "pwv_mm = 0"),
    ("slant elevation", lambda f: f["sky"].slant_path(f["demo_profile"], NAN), "elevation_deg = nan"),
    ("geometry name", lambda f: wvr.SkyModel(geometry="flat"), "geometry = 'flat'"),
    ("refractivity name", lambda f: wvr.SkyModel(refractivity="smith"), "refractivity = 'smith'"),
    ("continuum scale", lambda f: wvr.SkyModel(water_continuum_scale=-1.0),
     "water_continuum_scale = -1"),
    ("cosmic background", lambda f: wvr.SkyModel(cosmic_background_k=-1.0),
     "cosmic_background_k = -1"),
    ("fast negative pwv", lambda f: f["fast_183"].evaluate(-0.5, 45.0), "pwv_mm = -0.5"),
    ("fast pwv above domain", lambda f: f["fast_183"].evaluate(12.5, 45.0), "pwv_mm = 12.5"),
    ("fast nan pwv", lambda f: f["fast_183"].evaluate(NAN, 45.0), "pwv_mm = nan"),
    ("fast elevation 4 deg", lambda f: f["fast_183"].evaluate(1.0, 4.0), "elevation_deg = 4"),
    ("fast series lengths", lambda f: f["fast_183"].evaluate_many([1.0, 2.0, 3.0], [30.0, 40.0]),
     "elevation_deg has 2 samples but pwv_mm has 3"),
    ("fast wet path elevation", lambda f: f["fast_183"].wet_path_per_pwv_m_per_mm(4.0),
     "elevation_deg = 4"),
    ("fast domain", lambda f: wvr.FastSkyModel(f["demo_profile"], f["radiometer_183"], max_pwv_mm=-1.0),
     "max_pwv_mm = -1"),
    ("fast dry base",
     lambda f: wvr.FastSkyModel(f["demo_profile"].scaled_to_pwv(0.0), f["radiometer_183"]),
     "base profile pwv_mm = 0"),
    ("empty channel list", lambda f: wvr.Radiometer(lo_freq_ghz=183.31, channels=[]),
     "channel list is empty"),
    ("zero bandwidth",
     lambda f: wvr.Radiometer(lo_freq_ghz=183.31, channels=[good_channel(bandwidth_ghz=0.0)]),
     "channels[0].bandwidth_ghz = 0"),
    ("nan noise", lambda f: wvr.Radiometer(lo_freq_ghz=183.31, channels=[good_channel(noise_k=NAN)]),
     "channels[0].noise_k = nan"),
    ("misspelt key",
     lambda f: wvr.Radiometer(lo_freq_ghz=183.31,
                              channels=[{"if_centre_ghz": 2.0, "bandwith_ghz": 1.0}]),
     "unknown key 'bandwith_ghz'"),
    ("missing key", lambda f: wvr.Radiometer(lo_freq_ghz=183.31, channels=[{"if_centre_ghz": 2.0}]),
     "channels[0] is missing 'bandwidth_ghz'"),
    ("sideband name",
     lambda f: wvr.Radiometer(lo_freq_ghz=183.31, channels=[good_channel(sideband="both")]),
     "channels[0].sideband = 'both'"),
    ("text number",
     lambda f: wvr.Radiometer(lo_freq_ghz=183.31, channels=[good_channel(noise_k="0.1")]),
     "channels[0].noise_k is not a number"),
    ("overlapping channels",
     lambda f: wvr.Radiometer(lo_freq_ghz=183.31,
                              channels=[good_channel(), good_channel(name="b", if_centre_ghz=2.4)]),
     "overlaps"),
    ("sky frequency above 1000 GHz",
     lambda f: wvr.Radiometer(lo_freq_ghz=999.5, channels=[good_channel()]), "sky band edge"),
    ("absorption 1200 GHz", lambda f: wvr.absorption(1200.0, 1013.25, 288.15, 7.5),
     "freq_ghz = 1200"),
    ("absorption nan", lambda f: wvr.absorption([100.0, NAN], 1013.25, 288.15, 7.5),
     "freq_ghz[1] = nan"),
    ("absorption negative vapour", lambda f: wvr.absorption(100.0, 1013.25, 288.15, -1.0),
     "vapour_density_g_m3 = -1"),
    ("cloud 1200 GHz", lambda f: wvr.cloud_liquid_specific_attenuation(1200.0, 273.15),
     "freq_ghz = 1200"),
    ("cloud nan temperature", lambda f: wvr.cloud_liquid_absorption_m2_per_kg(90.0, NAN),
     "temperature_k = nan"),
    ("planck nan", lambda f: wvr.rj_brightness_k(NAN, 10.0), "freq_ghz = nan"),
    ("planck negative", lambda f: wvr.planck_brightness_k(183.0, [1.0, -1.0]),
     "rj_brightness_k = -1"),
    ("saturation phase", lambda f: wvr.saturation_vapour_pressure_hpa(270.0, phase="steam"),
     "phase = 'steam'"),
    ("saturation temperature", lambda f: wvr.saturation_vapour_pressure_hpa(NAN),
     "temperature_k = nan"),
    ("saastamoinen latitude", lambda f: wvr.saastamoinen_zenith_hydrostatic_delay_m(1000.0, 95.0, 0.0),
     "latitude_deg = 95"),
    ("bevis temperature", lambda f: wvr.bevis_wet_delay_per_pwv(NAN), "surface_temperature_k = nan"),
    ("standard atmosphere height", lambda f: wvr.us_standard_atmosphere_1976(-10.0),
     "height_m = -10"),
    ("profile lengths",
     lambda f: wvr.AtmosphereProfile([0.0, 10.0], [10.0, 20.0, 30.0], [1000.0, 990.0], [280.0, 279.0],
                                     [0.0, 0.0]),
     "top_m has 3 values but base_m has 2"),
    ("profile none", lambda f: wvr.AtmosphereProfile(None, [1.0], [1000.0], [280.0], [0.0]),
     "base_m is None"),
    ("profile gap",
     lambda f: wvr.AtmosphereProfile([0.0, 11.0], [10.0, 20.0], [1000.0, 990.0], [280.0, 279.0],
                                     [0.0, 0.0]),
     "layer[1].base_m = 11"),
    ("profile temperature",
     lambda f: wvr.AtmosphereProfile([0.0], [10.0], [1000.0], [NAN], [0.0]),
     "layer[0].temperature_k = nan"),
    ("sounding lengths",
     lambda f: wvr.profile_from_sounding([0.0, 1000.0], [1000.0], [280.0, 270.0], [0.001, 0.0005]),
     "pressure_hpa has 1 values but height_m has 2"),
    ("sounding order",
     lambda f: wvr.profile_from_sounding([1000.0, 0.0], [900.0, 1000.0], [270.0, 280.0],
                                         [0.001, 0.001]),
     "level 2"),
]


@pytest.mark.parametrize("description, call, expected", BAD_INPUT, ids=[b[0] for b in BAD_INPUT])
def test_bad_input_raises_value_error_naming_the_field(
        description, call, expected, demo_site, demo_profile, sky, radiometer_183, fast_183):
    fixtures = {"demo_site": demo_site, "demo_profile": demo_profile, "sky": sky,
                "radiometer_183": radiometer_183, "fast_183": fast_183}
    with pytest.raises(wvr.WvrValueError) as raised:
        call(fixtures)
    assert isinstance(raised.value, ValueError)
    assert isinstance(raised.value, wvr.WvrError)
    assert expected in str(raised.value)


def test_unreadable_and_broken_files(tmp_path):
    missing = tmp_path / "missing.toml"
    for load in (wvr.load_site, wvr.Radiometer.load, wvr.read_sounding_csv):
        with pytest.raises(wvr.WvrValueError, match="missing.toml"):
            load(missing)
        with pytest.raises(ValueError):
            load(str(missing))
    broken = tmp_path / "broken.toml"
    broken.write_text("lo_freq_ghz = [\n")
    with pytest.raises(wvr.WvrValueError, match=r"broken\.toml: not valid TOML at line"):
        wvr.Radiometer.load(broken)
    empty = tmp_path / "empty.toml"
    empty.write_text("lo_freq_ghz = 183.31\nchannels = []\n")
    with pytest.raises(wvr.WvrValueError, match="channel list is empty"):
        wvr.Radiometer.load(empty)
    site = tmp_path / "site.toml"
    site.write_text('altitude_m = 5000.0\nsurface_temperature_k = "cold"\npwv_mm = 1.0\n')
    with pytest.raises(wvr.WvrValueError, match="surface_temperature_k is not a number"):
        wvr.load_site(site)
    with pytest.raises(wvr.WvrValueError, match="<text>: not valid TOML"):
        wvr.parse_site("altitude_m = = 3", "<text>")
    sounding = tmp_path / "sounding.csv"
    sounding.write_text("height_m,pressure_hpa,temperature_c,dewpoint_c\n100,1000,15,5\n90,990,14,4\n")
    with pytest.raises(wvr.WvrValueError, match="level 2"):
        wvr.read_sounding_csv(sounding)
    with pytest.raises(wvr.WvrValueError):
        wvr.Radiometer.load(tmp_path)  # a folder, not a file


def test_loading_never_modifies_the_input_files(testdata, tmp_path):
    for relative in ("sites/demo-site.toml", "radiometers/demo-183-dsb.toml",
                     "reference/soundings/may4_sounding.csv"):
        path = testdata / relative
        before = path.read_bytes()
        stat_before = path.stat().st_mtime_ns
        if relative.startswith("sites"):
            wvr.load_site(path)
        elif relative.startswith("radiometers"):
            wvr.Radiometer.load(path)
        else:
            wvr.read_sounding_csv(path)
        assert path.read_bytes() == before
        assert path.stat().st_mtime_ns == stat_before


def test_wrong_python_types_raise_type_error(demo_profile, sky):
    with pytest.raises(TypeError):
        sky.spectrum("not a profile", 183.31, 45.0)
    with pytest.raises(TypeError):
        wvr.parametric_profile(pwv_mm="one")


def test_every_exception_class_of_the_package_derives_from_wvr_error():
    import importlib
    import pkgutil

    # Every module of the package except the command-line entry points (importing runs them).
    modules = [wvr] + [importlib.import_module(info.name)
                       for info in pkgutil.walk_packages(wvr.__path__, prefix="wvr.")
                       if not info.name.endswith("__main__")]
    found = []
    for module in modules:
        for value in vars(module).values():
            if (isinstance(value, type) and issubclass(value, BaseException)
                    and value.__module__.startswith("wvr")):
                found.append(value)
                assert issubclass(value, wvr.WvrError), value
    assert {wvr.WvrError, wvr.WvrValueError, wvr.WvrKeyError} <= set(found)
    assert len(found) > 3  # the report's input error too


def test_a_missing_dataset_is_a_key_error_and_a_wvr_error():
    assert issubclass(wvr.WvrKeyError, KeyError) and issubclass(wvr.WvrKeyError, wvr.WvrError)
    group = wvr.ResultGroup("stage", {"a_k": ([1.0], "K")})
    for base in (KeyError, wvr.WvrError, wvr.WvrKeyError):
        with pytest.raises(base, match="no dataset 'b'"):
            group["b"]
