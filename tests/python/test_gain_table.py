"""The antenna-based gain table of `skyphase export --gain-table` / wvr.export_gain_table,
checked with python-casacore and casacore's own `taql` program (casacore-tools 3.5), not with
the project's C++: its layout, and the gains applied in numpy as V_ij / (g_i conj(g_j)) against
the CORRECTED_DATA of the corrected-copy export. Skipped only when libwvr was built without
casacore (see test_measurement_set.py)."""
import os
import pathlib
import shutil
import subprocess
import sys

import h5py
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

# Two science windows (230 and 345 GHz) of three channels each, the middle one at the window's
# centre; the radiometer window (index 2) follows.
CHANNEL_OFFSETS_GHZ = (-1.5, 0.0, 1.5)
SCIENCE_WINDOWS = (0, 1)
CENTRE_CHANNEL = 1


@pytest.fixture(scope="module")
def work(tmp_path_factory):
    return tmp_path_factory.mktemp("gains")


@pytest.fixture(scope="module")
def ms(work):
    night_file = simulate_ms_night(work / "night.h5")
    path = work / "two-windows.ms"
    ms_writer.write_ms(night_file, str(path), extra_science_windows=(345.0,),
                       science_channel_offsets_ghz=CHANNEL_OFFSETS_GHZ)
    return path


@pytest.fixture(scope="module")
def corrected_file(work, ms, skyphase):
    return correct_ms_with_skyphase(skyphase, ms, work, "gains")


@pytest.fixture(scope="module")
def exported(work, ms, corrected_file, skyphase):
    """Both outputs of one `skyphase export` run, and the input's digest before and after."""
    before = tree_digest(ms)
    gains, copy = work / "night.gains", work / "corrected.ms"
    done = subprocess.run([skyphase, "export", str(corrected_file), "--ms", str(ms), "-o", str(copy),
                           "--gain-table", str(gains)], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert "gain table:" in done.stdout and "spectral windows 0,1" in done.stdout
    return {"gains": gains, "copy": copy, "before": before, "after": tree_digest(ms)}


def correction_of(path):
    """(time MJD s, phase [antenna, time], flags [antenna, time]) of a corrected night file."""
    with h5py.File(path, "r") as f:
        group = f["results/correction"]
        epoch = f.attrs["time_epoch_utc"]
        epoch = epoch.decode() if isinstance(epoch, bytes) else str(epoch)
        return (ms_writer.mjd_seconds(epoch) + group["time_s"][()],
                group["phase_correction_rad"][()], group["flags"][()])


def read_table(path, columns):
    with ct.table(str(path), ack=False) as t:
        return {c: t.getcol(c) for c in columns}


def window_frequencies_hz(ms):
    with ct.table(str(ms / "SPECTRAL_WINDOW"), ack=False) as t:
        return [t.getcell("CHAN_FREQ", w) for w in range(t.nrows())]


def test_layout_keywords_and_subtables(exported, ms, corrected_file):
    path = exported["gains"]
    assert exported["after"] == exported["before"]  # the input MS is byte-identical
    with ct.table(str(path), ack=False) as t:
        keywords = t.getkeywords()
        info = t.info()
        columns = set(t.colnames())
        nrows = t.nrows()
        cparam_desc = t.getcoldesc("CPARAM")
    assert keywords["ParType"] == "Complex"
    assert keywords["VisCal"] == "G Jones"
    assert keywords["MSName"] == ms.name
    assert info["type"] == "Calibration" and info["subType"] == "G Jones"
    assert {"TIME", "INTERVAL", "FIELD_ID", "SPECTRAL_WINDOW_ID", "ANTENNA1", "ANTENNA2",
            "SCAN_NUMBER", "OBSERVATION_ID", "CPARAM", "PARAMERR", "FLAG", "SNR"} <= columns
    assert cparam_desc["valueType"] == "complex"
    for name in ("ANTENNA", "FIELD", "SPECTRAL_WINDOW", "OBSERVATION", "HISTORY"):
        assert keywords[name].endswith("/" + name), keywords[name]
        assert ct.tableexists(str(path / name))
    for name, column in (("ANTENNA", "NAME"), ("FIELD", "NAME"), ("ANTENNA", "POSITION")):
        np.testing.assert_array_equal(read_table(path / name, [column])[column],
                                      read_table(ms / name, [column])[column])
    # One channel per window in the table's SPECTRAL_WINDOW: the centre the phase is exact at.
    spw = read_table(path / "SPECTRAL_WINDOW", ["NUM_CHAN", "CHAN_FREQ"])
    np.testing.assert_array_equal(spw["NUM_CHAN"], 1)
    np.testing.assert_allclose(spw["CHAN_FREQ"][:, 0],
                               [np.mean(f) for f in window_frequencies_hz(ms)], rtol=1e-15)
    history = read_table(path / "HISTORY", ["MESSAGE"])["MESSAGE"]
    assert len(history) == 1 and "V_ij / (g_i conj(g_j))" in history[0]

    time_mjd_s, phase, _ = correction_of(corrected_file)
    antennas = phase.shape[0]
    assert nrows == len(time_mjd_s) * len(SCIENCE_WINDOWS) * antennas
    rows = read_table(path, ["TIME", "SPECTRAL_WINDOW_ID", "ANTENNA1", "ANTENNA2", "CPARAM",
                             "FIELD_ID", "SCAN_NUMBER"])
    assert set(rows["SPECTRAL_WINDOW_ID"]) == set(SCIENCE_WINDOWS)  # the radiometer's left out
    np.testing.assert_array_equal(rows["ANTENNA2"], -1)
    np.testing.assert_allclose(np.unique(rows["TIME"]), time_mjd_s, rtol=0, atol=1e-6)
    assert rows["CPARAM"].shape == (nrows, 1, 2)  # python-casacore: [channel, polarisation]
    np.testing.assert_allclose(np.abs(rows["CPARAM"]), 1.0, atol=1e-6)
    # Field and scan of each solution: those of the MS's cross-correlation rows at its time.
    main = read_table(ms, ["TIME", "ANTENNA1", "ANTENNA2", "FIELD_ID", "SCAN_NUMBER"])
    cross = main["ANTENNA1"] != main["ANTENNA2"]
    checked = 0
    for k in range(0, nrows, 97):
        at = cross & (np.abs(main["TIME"] - rows["TIME"][k]) < 1e-3)
        if at.any():
            assert set(main["FIELD_ID"][at]) == {rows["FIELD_ID"][k]}
            assert set(main["SCAN_NUMBER"][at]) == {rows["SCAN_NUMBER"][k]}
            checked += 1
    assert checked > 10


def test_gains_applied_give_the_corrected_data(exported, ms, corrected_file):
    """V_ij / (g_i conj(g_j)) at each window's centre channel equals the corrected copy's
    CORRECTED_DATA to float precision; at the other channels the two differ by the correction
    phase times the difference of the dispersion scalings s(nu) = nu f(nu) / (nu_obs f(nu_obs))
    between the channel and the centre."""
    gains = read_table(exported["gains"], ["TIME", "SPECTRAL_WINDOW_ID", "ANTENNA1", "CPARAM",
                                           "FLAG"])
    solution_times = np.unique(gains["TIME"])
    lookup = {(k, w, a): r for r, (k, w, a) in enumerate(zip(
        np.searchsorted(solution_times, gains["TIME"]), gains["SPECTRAL_WINDOW_ID"],
        gains["ANTENNA1"]))}
    with ct.table(str(exported["copy"]), ack=False) as copy:
        calibrator = copy.query("STATE_ID == 0 && ANTENNA1 != ANTENNA2 && !FLAG_ROW")
        rows = {c: calibrator.getcol(c) for c in ("TIME", "ANTENNA1", "ANTENNA2", "DATA_DESC_ID",
                                                   "DATA", "CORRECTED_DATA")}
        calibrator.close()
    with ct.table(str(ms / "DATA_DESCRIPTION"), ack=False) as t:
        window_of_dd = t.getcol("SPECTRAL_WINDOW_ID")
    time_mjd_s, phase, _ = correction_of(corrected_file)
    night = wvr.read_night(corrected_file)
    obs_freq_ghz = float(night.results["correction"].attributes["obs_freq_ghz"])
    # The site's dispersion factor f(nu), from the library's night processing of the same night.
    processed = wvr.process_night(night, last_stage="retrieval", threads=1)
    freqs_ghz = [f / 1e9 for f in window_frequencies_hz(ms)]

    def scale(f_ghz):
        return f_ghz * processed.phase_per_path(f_ghz) / (
            obs_freq_ghz * processed.phase_per_path(obs_freq_ghz))

    centre_errors, channel_errors, dispersive = [], [], []
    for r in range(len(rows["TIME"])):
        k = int(np.argmin(np.abs(solution_times - rows["TIME"][r])))
        if abs(solution_times[k] - rows["TIME"][r]) > 1e-3:
            continue
        i, j = rows["ANTENNA1"][r], rows["ANTENNA2"][r]
        w = window_of_dd[rows["DATA_DESC_ID"][r]]
        g_i = gains["CPARAM"][lookup[(k, w, i)]][0]  # [polarisation]
        g_j = gains["CPARAM"][lookup[(k, w, j)]][0]
        applied = rows["DATA"][r] / (g_i * np.conj(g_j))[None, :]  # [channel, polarisation]
        corrected = rows["CORRECTED_DATA"][r]
        centre_errors.append(np.max(np.abs(applied[CENTRE_CHANNEL] - corrected[CENTRE_CHANNEL])))
        centre = np.mean(freqs_ghz[w])
        for c, f in enumerate(freqs_ghz[w]):
            expected = (phase[j, k] - phase[i, k]) * (scale(f) - scale(centre))
            difference = np.angle(corrected[c] * np.conj(applied[c]))
            channel_errors.append(np.max(np.abs(np.angle(np.exp(1j * (difference - expected))))))
            dispersive.append(abs(expected))
    assert len(centre_errors) > 100
    assert max(centre_errors) < 2e-6  # unit amplitudes in single precision
    assert max(channel_errors) < 2e-6
    assert max(dispersive) > 1e-3  # the channels' differences are there to be checked


def flagged_night(corrected_file, path, antenna, samples):
    """A copy of the corrected night with the correction of one antenna flagged (bit 1, no
    data) at the given sample indices."""
    shutil.copy(corrected_file, path)
    with h5py.File(path, "r+") as f:
        flags = f["results/correction/flags"]
        values = flags[()]
        values[antenna, samples] = 1
        flags[...] = values
    return path


def test_flagged_solutions_where_the_correction_is_unusable(work, ms, corrected_file):
    night_path = flagged_night(corrected_file, work / "flagged.h5", 2, slice(10, 20))
    out = work / "flagged.gains"
    result = wvr.export_gain_table(wvr.read_night(night_path), ms, out)
    assert result["solutions_flagged"] == 10 * len(SCIENCE_WINDOWS)
    assert result["spectral_windows"] == list(SCIENCE_WINDOWS) and result["radiometer_window"] == 2
    time_mjd_s, _, flags = correction_of(night_path)
    rows = read_table(out, ["TIME", "ANTENNA1", "FLAG", "CPARAM"])
    k = np.searchsorted(time_mjd_s, rows["TIME"] - 1e-6)
    expected = flags[rows["ANTENNA1"], k] != 0
    assert expected.sum() == 10 * len(SCIENCE_WINDOWS)
    np.testing.assert_array_equal(rows["FLAG"].all(axis=(1, 2)), expected)
    np.testing.assert_array_equal(rows["FLAG"].any(axis=(1, 2)), expected)
    np.testing.assert_array_equal(rows["CPARAM"][expected], 1.0)
    # casacore's taql program (casacore-tools) sees the same table.
    assert taql_count(f"select TIME from {out} where any(FLAG)") == 10 * len(SCIENCE_WINDOWS)
    assert taql_count(f"select TIME from {out} where any(FLAG) && ANTENNA1 != 2") == 0


def taql_count(query):
    """Rows of a TaQL selection counted by casacore's `taql` program (casacore-tools 3.5)."""
    done = subprocess.run(["taql", f"calc count([{query}])"], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    return int(done.stdout.split()[-1])


def test_taql_reads_the_table(exported, corrected_file):
    path = exported["gains"]
    time_mjd_s, phase, flags = correction_of(corrected_file)
    antennas = phase.shape[0]
    assert taql_count(f"select TIME from {path}") == len(time_mjd_s) * 2 * antennas
    assert taql_count(f"select TIME from {path} where SPECTRAL_WINDOW_ID == 1 && ANTENNA1 == 0") \
        == len(time_mjd_s)
    assert taql_count(f"select TIME from {path} where any(FLAG)") == 2 * np.count_nonzero(flags)
    assert taql_count(f"select TIME from {path} where ANTENNA2 != -1") == 0


def test_existing_output_refused_and_overwrite(work, ms, corrected_file, skyphase):
    out = work / "kept.gains"
    night = wvr.read_night(corrected_file)
    wvr.export_gain_table(night, ms, out)
    before = tree_digest(out)
    with pytest.raises(wvr.WvrValueError, match="kept.gains exists"):
        wvr.export_gain_table(night, ms, out)
    done = subprocess.run([skyphase, "export", str(corrected_file), "--ms", str(ms), "--gain-table",
                           str(out)], capture_output=True, text=True)
    assert done.returncode == 2 and done.stderr.count("\n") == 1 and "kept.gains" in done.stderr
    # Refused before anything is written: an -o given beside it is not created either.
    copy = work / "not-written.ms"
    done = subprocess.run([skyphase, "export", str(corrected_file), "--ms", str(ms), "-o", str(copy),
                           "--gain-table", str(out)], capture_output=True, text=True)
    assert done.returncode == 2 and not copy.exists()
    assert tree_digest(out) == before
    result = wvr.export_gain_table(night, ms, out, overwrite=True)
    assert result["solutions"] > 0 and ct.tableexists(str(out))
    with pytest.raises(wvr.WvrValueError, match="input MS"):
        wvr.export_gain_table(night, ms, ms, overwrite=True)


def test_export_needs_an_output(ms, corrected_file, skyphase):
    done = subprocess.run([skyphase, "export", str(corrected_file), "--ms", str(ms)],
                          capture_output=True, text=True)
    assert done.returncode == 2 and "--gain-table" in done.stderr


def leftovers(folder, name):
    return [p.name for p in folder.iterdir() if name in p.name]


def test_failures_leave_no_output(work, ms, corrected_file):
    # A night without /results/correction: refused before anything is written.
    uncorrected = wvr.read_night(work / "gains-import.h5")
    out = work / "uncorrected.gains"
    with pytest.raises(wvr.WvrValueError, match="correction"):
        wvr.export_gain_table(uncorrected, ms, out)
    assert leftovers(work, "uncorrected.gains") == []
    # A failure while writing (the MS lacks its HISTORY subtable, copied last): the temporary
    # table is removed and the output never appears.
    broken = work / "no-history.ms"
    shutil.copytree(ms, broken)
    shutil.rmtree(broken / "HISTORY")
    out = work / "broken.gains"
    with pytest.raises(wvr.WvrValueError, match="HISTORY"):
        wvr.export_gain_table(wvr.read_night(corrected_file), broken, out)
    assert leftovers(work, "broken.gains") == []
    # An MS of another array.
    other = work / "other-array.ms"
    shutil.copytree(ms, other)
    with ct.table(str(other / "ANTENNA"), readonly=False, ack=False) as t:
        t.removerows([4])
    with pytest.raises(wvr.WvrValueError, match="ANTENNA has 4 rows"):
        wvr.export_gain_table(wvr.read_night(corrected_file), other, work / "other.gains")
    assert leftovers(work, "other.gains") == []


def test_radiometer_window_named_or_absent(work, ms, corrected_file):
    night = wvr.read_night(corrected_file)
    named = wvr.export_gain_table(night, ms, work / "named.gains", radiometer_window="radiometer")
    assert named["spectral_windows"] == [0, 1] and named["radiometer_window"] == 2
    # Naming a science window leaves that one out instead.
    other = wvr.export_gain_table(night, ms, work / "other-window.gains", radiometer_window="1")
    assert other["spectral_windows"] == [0, 2]
    with pytest.raises(wvr.WvrValueError, match="radiometer_window = 'nine'"):
        wvr.export_gain_table(night, ms, work / "none.gains", radiometer_window="nine")
    # Without a window near 183.31 GHz every window gets solutions, and a note says so.
    no_radiometer = work / "no-radiometer.ms"
    ms_writer.write_ms(work / "night.h5", str(no_radiometer), radiometer_window=False)
    result = wvr.export_gain_table(night, no_radiometer, work / "all.gains")
    assert result["spectral_windows"] == [0] and result["radiometer_window"] == -1
    assert any("no radiometer spectral window" in n for n in result["notes"])


def test_relative_output_paths(work, ms, corrected_file, skyphase):
    """Outputs named relative to the working directory (casacore fails to reopen a copy made
    under a relative name unless the library makes it absolute)."""
    done = subprocess.run([skyphase, "export", str(corrected_file), "--ms", str(ms), "-o",
                           "relative.ms", "--gain-table", "relative.gains"],
                          capture_output=True, text=True, cwd=work)
    assert done.returncode == 0, done.stderr
    assert ct.tableexists(str(work / "relative.ms")) and ct.tableexists(str(work / "relative.gains"))
    assert leftovers(work, ".tmp-") == []
