"""The corrected copy of `wvr.export_measurement_set`, checked with python-casacore (not the
project's C++): rows without a correction are flagged and keep DATA, every other column is the
input's, and a read-only input gives a writable copy. Skipped only when libwvr was built without
casacore (see test_measurement_set.py)."""
import os
import pathlib
import shutil
import stat
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

FLAGGED_ANTENNA = 2


@pytest.fixture(scope="module")
def work(tmp_path_factory):
    return tmp_path_factory.mktemp("corrected-copy")


@pytest.fixture(scope="module")
def ms(work):
    """Two science windows of 3 channels and the radiometer window of 4, so that rows of
    different shapes alternate in the main table."""
    night_file = simulate_ms_night(work / "night.h5")
    path = work / "two-windows.ms"
    ms_writer.write_ms(night_file, str(path), extra_science_windows=(345.0,),
                       science_channel_offsets_ghz=(-1.5, 0.0, 1.5))
    return path


@pytest.fixture(scope="module")
def flagged_night(work, ms, skyphase):
    """The corrected night with one antenna's correction flagged (bit 1, no data) over a
    stretch, and at the last sample of every antenna."""
    path = work / "flagged.h5"
    shutil.copy(correct_ms_with_skyphase(skyphase, ms, work, "copy"), path)
    with h5py.File(path, "r+") as f:
        flags = f["results/correction/flags"]
        values = flags[()]
        values[FLAGGED_ANTENNA, 10:40] = 1
        values[:, -1] = 1
        flags[...] = values
    return path


def usable_at(row_time_mjd_s, antenna, time_mjd_s, usable):
    """Whether the correction of `antenna` exists at a row's time: a usable sample at that
    time, or usable samples on both sides to interpolate between."""
    j = np.searchsorted(time_mjd_s, row_time_mjd_s)
    if j == len(time_mjd_s):
        return False
    if time_mjd_s[j] == row_time_mjd_s:
        return bool(usable[antenna, j])
    return j > 0 and bool(usable[antenna, j - 1] and usable[antenna, j])


def main_table(path, columns):
    """The columns of a main table, cell by cell for the array columns (their shapes differ
    between spectral windows)."""
    with ct.table(str(path), ack=False) as t:
        return {c: [t.getcell(c, r) for r in range(t.nrows())] if c in ("DATA", "CORRECTED_DATA",
                                                                         "FLAG")
                else t.getcol(c) for c in columns}


def test_rows_without_a_correction_are_flagged_and_keep_data(work, ms, flagged_night):
    out = work / "flagged.ms"
    before = tree_digest(ms)
    result = wvr.export_measurement_set(wvr.read_night(flagged_night), ms, out)
    assert tree_digest(ms) == before

    with h5py.File(flagged_night, "r") as f:
        epoch = f.attrs["time_epoch_utc"]
        epoch = epoch.decode() if isinstance(epoch, bytes) else str(epoch)
        group = f["results/correction"]
        time_mjd_s = ms_writer.mjd_seconds(epoch) + group["time_s"][()]
        usable = (group["flags"][()] == 0) & np.isfinite(group["phase_correction_rad"][()])
    columns = ("TIME", "ANTENNA1", "ANTENNA2", "FLAG_ROW", "FLAG", "DATA")
    source = main_table(ms, columns)
    copy = main_table(out, columns + ("CORRECTED_DATA",))
    cross = source["ANTENNA1"] != source["ANTENNA2"]
    expected = np.array([bool(x) and not (usable_at(t, a, time_mjd_s, usable) and
                                          usable_at(t, b, time_mjd_s, usable))
                         for t, a, b, x in zip(source["TIME"], source["ANTENNA1"],
                                               source["ANTENNA2"], cross)])
    involved = cross & ((source["ANTENNA1"] == FLAGGED_ANTENNA) |
                        (source["ANTENNA2"] == FLAGGED_ANTENNA))
    # Both flagged stretches reach rows, and the flagged antenna's other rows stay unflagged.
    assert 0 < expected.sum() < involved.sum()
    assert result["rows_flagged"] == expected.sum()
    np.testing.assert_array_equal(copy["FLAG_ROW"], source["FLAG_ROW"] | expected)
    for r in range(len(expected)):
        if expected[r]:
            assert copy["FLAG"][r].all(), r
        else:
            np.testing.assert_array_equal(copy["FLAG"][r], source["FLAG"][r])
        np.testing.assert_array_equal(copy["DATA"][r], source["DATA"][r])
        if expected[r] or not cross[r]:  # flagged rows and autocorrelations: DATA as it is
            np.testing.assert_array_equal(copy["CORRECTED_DATA"][r], source["DATA"][r])
    corrected_rows = cross & ~expected
    assert any(not np.array_equal(copy["CORRECTED_DATA"][r], source["DATA"][r])
               for r in np.flatnonzero(corrected_rows))


def test_read_only_input_gives_a_writable_copy(work, ms, flagged_night):
    frozen = work / "frozen.ms"
    shutil.copytree(ms, frozen)
    for p in [frozen, *frozen.rglob("*")]:
        p.chmod(p.stat().st_mode & ~(stat.S_IWUSR | stat.S_IWGRP | stat.S_IWOTH))
    before = tree_digest(frozen)
    out = work / "from-frozen.ms"
    try:
        wvr.export_measurement_set(wvr.read_night(flagged_night), frozen, out)
        assert tree_digest(frozen) == before
        assert all(p.stat().st_mode & stat.S_IWUSR for p in [out, *out.rglob("*")])
        with ct.table(str(out), readonly=False, ack=False) as t:
            assert "CORRECTED_DATA" in t.colnames()
    finally:
        for p in [frozen, *frozen.rglob("*")]:
            p.chmod(p.stat().st_mode | stat.S_IWUSR)


def test_output_inside_the_input_is_refused(ms, flagged_night):
    before = tree_digest(ms)
    night = wvr.read_night(flagged_night)
    for out in (ms / "corrected.ms", ms / "ANTENNA" / "corrected.ms"):
        with pytest.raises(wvr.WvrValueError, match="inside the input MS"):
            wvr.export_measurement_set(night, ms, out)
        with pytest.raises(wvr.WvrValueError, match="inside the input MS"):
            wvr.export_gain_table(night, ms, out)
    assert tree_digest(ms) == before


def test_row_without_data_is_an_error_and_writes_nothing(work, ms, flagged_night):
    holed = work / "holed.ms"
    shutil.copytree(ms, holed)
    with ct.table(str(holed), readonly=False, ack=False) as t:
        row = t.nrows()
        t.addrows(1)  # every scalar at its default; DATA and FLAG left undefined
        t.putcell("ANTENNA2", row, 1)
    out = work / "holed-corrected.ms"
    with pytest.raises(wvr.WvrValueError, match=f"row {row} has no DATA array"):
        wvr.export_measurement_set(wvr.read_night(flagged_night), holed, out)
    assert not out.exists()
    assert not [p for p in work.iterdir() if p.name.startswith(".tmp-holed-corrected")]
