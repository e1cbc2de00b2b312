"""MeasurementSets in and out: a test MS written by python-casacore (ms_writer.py, no libwvr
code) from a simulated night is imported, processed, exported and checked with casacore's own
TaQL. Skipped only when libwvr was built without casacore (the optional component; ctest says
so through WVR_EXPECT_ARCHIVE); python-casacore is then a declared dependency too."""
import os
import pathlib
import subprocess
import sys

import numpy as np
import pytest

import wvr

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))

if not wvr.HAS_MEASUREMENT_SETS:
    assert os.environ.get("WVR_EXPECT_ARCHIVE") != "1", "built with casacore but wvr._archive missing"
    pytest.skip("libwvr built without casacore (optional component)", allow_module_level=True)

from casacore import tables as ct  # noqa: E402
import ms_writer  # noqa: E402
from conftest import correct_ms_with_skyphase, simulate_ms_night, tree_digest  # noqa: E402


@pytest.fixture(scope="module")
def work(tmp_path_factory):
    return tmp_path_factory.mktemp("ms")


@pytest.fixture(scope="module")
def night_file(work):
    return simulate_ms_night(work / "night.h5")


@pytest.fixture(scope="module")
def ms(work, night_file):
    path = work / "night.ms"
    ms_writer.write_ms(night_file, str(path))
    return path


def import_ms(path, **options):
    options.setdefault("brightness", "rayleigh-jeans")
    return wvr.import_measurement_set(path, **options)


def site_provenance(night, tmp_path):
    import h5py
    path = tmp_path / "provenance.h5"
    wvr.write_night(night, path)
    with h5py.File(path, "r") as f:
        value = f["site"].attrs["provenance"]
    return value.decode() if isinstance(value, bytes) else str(value)


def test_import_gives_back_the_night(ms, night_file, tmp_path):
    truth = wvr.read_night(night_file)
    night, report = import_ms(ms, array_centre=(truth.reference_latitude_deg,
                                                truth.reference_longitude_deg,
                                                truth.reference_height_m))
    assert night.antenna_names == truth.antenna_names
    np.testing.assert_allclose(night.position_enu_m, truth.position_enu_m, atol=1e-3)
    np.testing.assert_array_equal(night.valid, truth.valid)
    valid = truth.valid.astype(bool)
    # DATA is single precision: 24-bit mantissa, about 2e-5 K at 300 K.
    np.testing.assert_allclose(night.brightness_k[valid], truth.brightness_k[valid], atol=5e-5)
    assert night.time_epoch_utc.endswith("T00:00:00Z")  # midnight UTC of the first TIME
    shift_s = ms_writer.mjd_seconds(night.time_epoch_utc) - ms_writer.mjd_seconds(truth.time_epoch_utc)
    np.testing.assert_allclose(night.time_s + shift_s, truth.time_s, atol=1e-6)
    np.testing.assert_allclose(night.elevation_deg, truth.elevation_deg, atol=0.01)
    scans, scans_truth = night.scans, truth.scans
    assert [s["intent"] for s in scans] == [s["intent"] for s in scans_truth]
    assert [s["source"] for s in scans] == [s["source"] for s in scans_truth]
    np.testing.assert_allclose([s["obs_freq_ghz"] for s in scans],
                               [s["obs_freq_ghz"] for s in scans_truth], rtol=1e-12)
    w, wt = night.weather, truth.weather
    np.testing.assert_allclose(w["temperature_k"], wt["temperature_k"], atol=1e-9)
    np.testing.assert_allclose(w["pressure_hpa"], wt["pressure_hpa"], atol=1e-9)
    np.testing.assert_allclose(w["relative_humidity_pct"], wt["relative_humidity_pct"], atol=1e-9)
    cp, cpt = night.calibrator_phases, truth.calibrator_phases
    np.testing.assert_array_equal(cp["antenna_pair"], cpt["antenna_pair"])
    np.testing.assert_allclose(cp["time_s"] + shift_s, cpt["time_s"], atol=1e-6)
    dphi = np.angle(np.exp(1j * (cp["phase_rad"] - cpt["phase_rad"])))
    assert np.max(np.abs(dphi)) < 1e-6
    assert site_provenance(night, tmp_path).startswith("imported")


def test_channel_layout_from_spectral_window_and_radiometer_file(ms, testdata):
    night, _ = import_ms(ms)
    design = wvr.Radiometer.load(testdata / "radiometers" / "demo-183-dsb.toml")
    np.testing.assert_allclose(night.radiometer.if_centre_ghz, design.if_centre_ghz, atol=1e-9)
    np.testing.assert_allclose(night.radiometer.bandwidth_ghz, design.bandwidth_ghz, atol=1e-9)
    assert night.radiometer.lo_freq_ghz == pytest.approx(design.lo_freq_ghz)
    # Noise estimated from the data: near the design's per-sample noise.
    np.testing.assert_allclose(night.radiometer.noise_k, design.noise_k, rtol=0.5)
    given, _ = import_ms(ms, radiometer=testdata / "radiometers" / "demo-183-dsb.toml")
    np.testing.assert_array_equal(given.radiometer.noise_k, design.noise_k)


def test_pointing_from_field_matches_casacore_measures(work, night_file):
    from casacore.measures import measures
    from casacore import quanta
    path = work / "no-pointing.ms"
    ms_writer.write_ms(night_file, str(path), pointing="none")
    night, report = import_ms(path)
    assert any("FIELD" in n for n in report["notes"])
    antennas = ct.table(str(path / "ANTENNA"), ack=False).getcol("POSITION")
    field = ct.table(str(path / "FIELD"), ack=False)
    main = ct.table(str(path), ack=False)
    rad = main.query("ANTENNA1 == ANTENNA2 && DATA_DESC_ID == 1")
    dm = measures()
    checked = 0
    for row in range(0, rad.nrows(), 397):
        a, t, f = rad.getcell("ANTENNA1", row), rad.getcell("TIME", row), rad.getcell("FIELD_ID", row)
        ra, dec = field.getcell("PHASE_DIR", f)[0]
        dm.do_frame(dm.position("ITRF", *[quanta.quantity(x, "m") for x in antennas[a]]))
        dm.do_frame(dm.epoch("UTC", quanta.quantity(t, "s")))
        azel = dm.measure(dm.direction("J2000", quanta.quantity(ra, "rad"),
                                       quanta.quantity(dec, "rad")), "AZEL")
        k = int(np.argmin(np.abs(night.time_s - (t - rad.getcell("TIME", 0) + night.time_s[0]))))
        assert abs(night.elevation_deg[a, k] - np.degrees(azel["m1"]["value"])) < 0.01
        checked += 1
    assert checked >= 5


def test_round_trip_metrics_recomputed_with_taql(work, ms, skyphase):
    before = tree_digest(ms)
    corrected_file = correct_ms_with_skyphase(skyphase, ms, work, "round-trip")
    out = work / "corrected.ms"
    done = subprocess.run([skyphase, "export", str(corrected_file), "--ms", str(ms), "-o", str(out)],
                          capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert tree_digest(ms) == before

    corrected = wvr.read_night(corrected_file)
    group = corrected.results["correction"]
    pairs = [tuple(p) for p in group["baseline_antennas"]]
    # casacore's TaQL: channel- and polarisation-averaged phase of calibrator rows.
    query = ("select TIME, ANTENNA1, ANTENNA2, SCAN_NUMBER, ARG(SUM(DATA)) as BEFORE, "
             "ARG(SUM(CORRECTED_DATA)) as AFTER, FLAG_ROW from $t "
             "where STATE_ID == 0 and ANTENNA1 != ANTENNA2 and DATA_DESC_ID == 0")
    t = ct.table(str(out), ack=False)
    result = ct.taql(query, tables=[t])
    cols = {c: result.getcol(c) for c in ("ANTENNA1", "ANTENNA2", "SCAN_NUMBER", "BEFORE",
                                          "AFTER", "FLAG_ROW")}
    metrics = {}
    for which in ("BEFORE", "AFTER"):
        rms = []
        for a, b in pairs:
            sel = (cols["ANTENNA1"] == a) & (cols["ANTENNA2"] == b) & ~cols["FLAG_ROW"]
            dev = []
            for s in np.unique(cols["SCAN_NUMBER"][sel]):
                phi = cols[which][sel & (cols["SCAN_NUMBER"] == s)]
                dev.extend(np.angle(np.exp(1j * (phi - np.angle(np.mean(np.exp(1j * phi)))))))
            rms.append(np.degrees(np.sqrt(np.mean(np.square(dev)))))
        metrics[which] = np.array(rms)
    np.testing.assert_allclose(metrics["BEFORE"], group["baseline_phase_rms_before_deg"], atol=1e-6)
    np.testing.assert_allclose(metrics["AFTER"], group["baseline_phase_rms_after_deg"], atol=1e-6)
    history = ct.table(str(out / "HISTORY"), ack=False).getcol("MESSAGE")
    assert any("CORRECTED_DATA" in m for m in history)


def test_clock_offset_recovered_and_correction_matches(work, night_file, ms, skyphase):
    shifted = work / "clock.ms"
    ms_writer.write_ms(night_file, str(shifted), clock_offset_s=2.0)
    night, report = import_ms(shifted, clock_offset="night")
    offset = report["clock_offsets"][0]
    assert offset["estimated"]
    assert abs(offset["offset_s"] - 2.0) < 0.2, offset
    assert 0 < offset["sigma_s"] < 0.2
    reference, _ = import_ms(ms)
    # Brightness moved onto the correlator clock matches the offset-free import where both exist.
    k0 = int(np.searchsorted(reference.time_s, night.time_s[0]))
    ref_tb, ref_valid = reference.brightness_k[:, k0:], reference.valid[:, k0:].astype(bool)
    m = ref_tb.shape[1]
    both = night.valid[:, :m].astype(bool) & ref_valid
    diff = night.brightness_k[:, :m][both] - ref_tb[both]
    noise = np.std(np.diff(ref_tb, axis=1)[..., 0])
    assert np.sqrt(np.mean(diff ** 2)) < noise
    no_offset = import_ms(shifted)[0]
    assert abs(wvr.estimate_clock_offsets(no_offset)[0]["offset_s"] - 2.0) < 0.2

    # The correction made from the re-timed night matches the offset-free night's.
    corrections = {}
    for name, night_path in (("shifted", work / "clock.h5"), ("reference", work / "noclock.h5")):
        source = shifted if name == "shifted" else ms
        options = ["--clock-offset", "night"] if name == "shifted" else []
        for args in (["import", source, "-o", night_path, "--brightness", "rayleigh-jeans", *options],
                     ["correct", night_path, "-o", work / f"{name}-corrected.h5"]):
            done = subprocess.run([skyphase, *map(str, args)], capture_output=True, text=True)
            assert done.returncode == 0, done.stderr
        result = wvr.read_night(work / f"{name}-corrected.h5")
        group = result.results["correction"]
        corrections[name] = (result.time_s, np.array(group["phase_correction_rad"]),
                             np.array(group["flags"]) == 0,
                             np.array(group["baseline_phase_rms_after_deg"]))
    t_s, phi_s, ok_s, rms_s = corrections["shifted"]
    t_r, phi_r, ok_r, rms_r = corrections["reference"]
    k0 = int(np.searchsorted(t_r, t_s[0]))
    m = len(t_r) - k0
    both = ok_s[:, :m] & ok_r[:, k0:]
    dphi = np.angle(np.exp(1j * (phi_s[:, :m] - phi_r[:, k0:])))[both]
    spread = np.std(phi_r[:, k0:][both])
    assert np.sqrt(np.mean(dphi ** 2)) < 0.1 * spread
    np.testing.assert_allclose(rms_s, rms_r, rtol=0.05)


def test_no_radiometer_window_names_what_was_searched(work, night_file):
    path = work / "no-radiometer.ms"
    ms_writer.write_ms(night_file, str(path), radiometer_window=False)
    with pytest.raises(wvr.WvrValueError, match=r"no radiometer spectral window.*183.31.*searched"):
        import_ms(path)


def test_missing_weather_and_pointing_rows(work, night_file):
    path = work / "bare.ms"
    ms_writer.write_ms(night_file, str(path), weather=False, pointing="none")
    night, report = import_ms(path)
    assert night.weather["time_s"].size == 0
    assert any("WEATHER" in n for n in report["notes"])
    assert any("no site record" in n for n in report["notes"])


def test_flagged_rows_and_missing_autocorrelations_become_invalid(work, night_file):
    path = work / "flagged.ms"
    ms_writer.write_ms(night_file, str(path), drop_autocorrelations=(3,),
                       flag_radiometer_rows={(1, 10), (1, 11)})
    night, report = import_ms(path)
    valid = night.valid
    assert not valid[3].any()
    assert not valid[1, 10] and not valid[1, 11] and valid[1, 12]
    assert any("antennas" in n and night.antenna_names[3] in n for n in report["notes"])


def test_float_data_holds_brightness_but_no_phases(work, night_file):
    # Radiometer rows in FLOAT_DATA, calibrator visibilities in DATA: both read.
    both = work / "float-radiometer.ms"
    ms_writer.write_ms(night_file, str(both), float_data="radiometer")
    truth = wvr.read_night(night_file)
    night, report = import_ms(both)
    valid = truth.valid.astype(bool)
    # FLOAT_DATA is single precision, as DATA: about 2e-5 K at 300 K.
    np.testing.assert_allclose(night.brightness_k[valid], truth.brightness_k[valid], atol=5e-5)
    assert night.calibrator_phases["time_s"].size == truth.calibrator_phases["time_s"].size
    assert not any("FLOAT_DATA" in n for n in report["notes"])
    # Every row in FLOAT_DATA: the brightness still, the calibrator phases not, and a note says
    # why rather than a silently empty calibrator table.
    only = work / "float-only.ms"
    ms_writer.write_ms(night_file, str(only), float_data=True)
    night, report = import_ms(only)
    np.testing.assert_allclose(night.brightness_k[valid], truth.brightness_k[valid], atol=5e-5)
    assert night.calibrator_phases["time_s"].size == 0
    calibrator_rows = truth.calibrator_phases["time_s"].size
    note = f"{calibrator_rows} calibrator cross-correlation rows without a DATA cell"
    assert note in " ".join(report["notes"])
    # Both columns, the other way round: radiometer rows in DATA (their FLOAT_DATA cells
    # undefined), calibrator rows in FLOAT_DATA (their DATA cells undefined).
    swapped = work / "float-science.ms"
    ms_writer.write_ms(night_file, str(swapped), float_data="science")
    night, report = import_ms(swapped)
    np.testing.assert_allclose(night.brightness_k[valid], truth.brightness_k[valid], atol=5e-5)
    assert night.calibrator_phases["time_s"].size == 0
    assert note in " ".join(report["notes"])


def test_several_windows_and_fields(work, night_file):
    path = work / "windows.ms"
    ms_writer.write_ms(night_file, str(path), extra_science_windows=(345.0,))
    night, _ = import_ms(path)
    freqs = np.unique(night.calibrator_phases["freq_ghz"])
    np.testing.assert_allclose(freqs, [230.0, 345.0], rtol=1e-9)
    assert len({s["source"] for s in night.scans}) == 2


def test_ms_cut_short_is_an_error_and_writes_nothing(work, night_file, skyphase):
    path = work / "short.ms"
    ms_writer.write_ms(night_file, str(path))
    biggest = max((f for f in path.iterdir() if f.is_file()), key=lambda f: f.stat().st_size)
    with open(biggest, "r+b") as f:
        f.truncate(biggest.stat().st_size // 3)
    out = work / "short.h5"
    done = subprocess.run([skyphase, "import", str(path), "-o", str(out), "--brightness",
                           "rayleigh-jeans"], capture_output=True, text=True)
    assert done.returncode == 2, done.stderr
    assert done.stderr.count("\n") == 1 and "short.ms" in done.stderr
    assert not out.exists()


def test_export_refuses_night_without_correction_and_writes_nothing(work, ms):
    night, _ = import_ms(ms)
    out = work / "nothing.ms"
    with pytest.raises(wvr.WvrValueError, match="correction"):
        wvr.export_measurement_set(night, ms, out)
    assert not out.exists()


def test_brightness_convention_is_required(ms):
    with pytest.raises(wvr.WvrValueError, match="rayleigh-jeans or planck"):
        wvr.import_measurement_set(ms, brightness="kelvin")
