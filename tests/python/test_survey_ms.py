"""MeasurementSets in a survey: MS directories (written by python-casacore's independent
writer, ms_writer.py) sit beside night files in one survey on a two-worker local dask cluster;
each is imported with the survey's ms_* options and gives the row that importing and
processing it by hand gives; the MS is left byte-identical; a rerun recognises it by content;
an MS without the brightness option, or a directory that is no MS, is refused by name."""
import json
import os
import pathlib
import shutil
import sys

import pytest

import wvr
import wvr.survey
from wvr.survey._night_task import night_row

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))

if not wvr.HAS_MEASUREMENT_SETS:
    assert os.environ.get("WVR_EXPECT_ARCHIVE") != "1", "built with casacore but wvr._archive missing"
    pytest.skip("libwvr built without casacore (optional component)", allow_module_level=True)

import ms_writer  # noqa: E402
from conftest import TESTDATA, tree_digest  # noqa: E402
from test_survey import RUN_COLUMNS, assert_rows_equal  # noqa: E402

pytestmark = [
    pytest.mark.filterwarnings("ignore::DeprecationWarning:tornado.*"),
    pytest.mark.filterwarnings("ignore::DeprecationWarning:distributed.*"),
]

OPTIONS = {"ms_brightness": "rayleigh-jeans", "window_s": 120.0}


@pytest.fixture(scope="module")
def archive(tmp_path_factory):
    """Two MeasurementSets (demo nights of 5 antennas x 600 s, seeds 301 and 302) and one
    night file (seed 303) in one folder."""
    folder = tmp_path_factory.mktemp("archive")
    base = wvr.load_scenario(TESTDATA / "demo-scenario.toml")
    for seed in (301, 302, 303):
        night = wvr.simulate_night(
            base.with_overrides(seed=seed, duration_s=600.0, antenna_count=5), threads=1)
        wvr.write_night(night, folder / f"night-{seed}.h5")
    for seed in (301, 302):
        ms_writer.write_ms(folder / f"night-{seed}.h5", str(folder / f"night-{seed}.ms"))
        (folder / f"night-{seed}.h5").unlink()
    return folder


@pytest.fixture(scope="module")
def surveyed(archive, tmp_path_factory):
    digests = {ms: tree_digest(ms) for ms in archive.glob("*.ms")}
    catalogue = tmp_path_factory.mktemp("catalogue") / "archive.sqlite"
    summary = wvr.survey.survey([str(archive / "*.ms"), str(archive / "*.h5")], catalogue,
                                options=OPTIONS, workers=2, progress=False)
    return catalogue, summary, digests


def stored_rows(catalogue):
    with wvr.survey.Catalogue(catalogue) as cat:
        return {pathlib.Path(row["path"]).name: row for row in cat.rows()}


def test_measurement_sets_and_night_files_are_surveyed_together(surveyed):
    catalogue, summary, _ = surveyed
    assert (summary.nights, summary.ok, summary.failed) == (3, 3, 0), summary.text()
    rows = stored_rows(catalogue)
    assert sorted(rows) == ["night-301.ms", "night-302.ms", "night-303.h5"]
    assert rows["night-301.ms"]["night_name"] == "night-301"
    assert rows["night-301.ms"]["antennas"] == 5
    # The two MS hold different skies: different rows, not one night twice.
    assert rows["night-301.ms"]["pwv_median_mm"] != rows["night-302.ms"]["pwv_median_mm"]


def test_measurement_set_row_equals_importing_and_processing_by_hand(archive, surveyed):
    catalogue, _, _ = surveyed
    rows = stored_rows(catalogue)
    for name in ("night-301.ms", "night-302.ms"):
        night, report = wvr.import_measurement_set(str(archive / name), brightness="rayleigh-jeans")
        by_hand = night_row(night, wvr.process_night(night, window_s=120.0, threads=1))
        stored = {k: v for k, v in rows[name].items() if k not in RUN_COLUMNS}
        # What the importer said comes first in the row's notes, then the pipeline's.
        import_notes = [f"import: {n}" for n in report["notes"]]
        assert stored.pop("notes") == import_notes + json.loads(by_hand.pop("notes_json"))
        for key, value in by_hand.items():
            if key.endswith("_json"):
                key, value = key[:-len("_json")], json.loads(value)
            assert_rows_equal(stored[key], value, f"{name}.{key}")


def test_measurement_sets_are_left_byte_identical(surveyed):
    _, _, digests = surveyed
    for ms, digest in digests.items():
        assert tree_digest(ms) == digest, ms


def test_rerun_recognises_measurement_sets_by_content(archive, surveyed):
    catalogue, _, _ = surveyed
    again = wvr.survey.survey([str(archive / "*.ms"), str(archive / "*.h5")], catalogue,
                              options=OPTIONS, workers=1, progress=False)
    assert (again.skipped, again.processed) == (3, 0), again.text()


def flip_a_data_byte(table_directory):
    """Flips one bit in the middle of the first data file of a casacore table directory."""
    data_file = sorted(table_directory.glob("table.f*"))[0]
    data = bytearray(data_file.read_bytes())
    data[len(data) // 2] ^= 0x01
    data_file.write_bytes(bytes(data))


def test_content_hash_follows_the_data_not_the_lock_file(archive, tmp_path):
    copy = tmp_path / "copy.ms"
    shutil.copytree(archive / "night-301.ms", copy)
    original = wvr.survey.content_sha256(copy)
    assert original == wvr.survey.content_sha256(archive / "night-301.ms")
    (copy / "table.lock").write_bytes(b"another program held this table")
    assert wvr.survey.content_sha256(copy) == original
    flip_a_data_byte(copy)
    assert wvr.survey.content_sha256(copy) != original


def test_symlinked_subtables_are_hashed_through_the_link(archive, tmp_path):
    # A subtable kept elsewhere and linked in hashes as the same MS; a change behind the link
    # is seen.
    copy = tmp_path / "linked.ms"
    shutil.copytree(archive / "night-301.ms", copy)
    elsewhere = tmp_path / "elsewhere-ANTENNA"
    shutil.move(copy / "ANTENNA", elsewhere)
    (copy / "ANTENNA").symlink_to(elsewhere, target_is_directory=True)
    original = wvr.survey.content_sha256(archive / "night-301.ms")
    assert wvr.survey.content_sha256(copy) == original
    flip_a_data_byte(elsewhere)
    assert wvr.survey.content_sha256(copy) != original


def test_recursive_patterns_take_measurement_sets_whole(archive):
    found = wvr.survey.resolve_nights([str(archive / "**")])
    assert [p.name for p in found] == ["night-301.ms", "night-302.ms", "night-303.h5"]
    part = archive / "night-301.ms" / "table.dat"
    with pytest.raises(wvr.survey.SurveyInputError, match="is a part of the MeasurementSet"):
        wvr.survey.resolve_nights([str(part)])


def test_adding_measurement_set_options_keeps_night_files_done(archive, tmp_path):
    catalogue = tmp_path / "mixed.sqlite"
    first = wvr.survey.survey([str(archive / "night-303.h5")], catalogue,
                              options={"window_s": 120.0}, workers=1, progress=False)
    assert (first.processed, first.ok) == (1, 1), first.text()
    second = wvr.survey.survey([str(archive / "*.h5"), str(archive / "night-301.ms")], catalogue,
                               options=OPTIONS, workers=1, progress=False)
    assert (second.skipped, second.processed, second.ok) == (1, 1, 1), second.text()


def test_measurement_set_without_brightness_option_fails_by_name(archive, tmp_path):
    # A survey refuses before any work (and writes no catalogue)...
    catalogue = tmp_path / "c.sqlite"
    with pytest.raises(wvr.survey.SurveyInputError, match="night-301.ms: a MeasurementSet needs "
                                                            "the option ms_brightness"):
        wvr.survey.survey([str(archive / "*")], catalogue, options={"window_s": 120.0},
                          progress=False)
    assert not catalogue.exists()
    with pytest.raises(wvr.survey.SurveyInputError, match=r"\(given: 'rayleigh_jeans'\)"):
        wvr.survey.survey([str(archive / "*.ms")], catalogue,
                          options={"ms_brightness": "rayleigh_jeans"}, progress=False)
    assert not catalogue.exists()
    # ...and a single night's task records it as the night's error.
    row = wvr.survey.process_one(archive / "night-301.ms", {"window_s": 120.0})
    assert row["status"] == "failed"
    assert "ms_brightness" in row["error"] and "night-301.ms" in row["error"]


def test_directory_that_is_no_measurement_set_is_refused(tmp_path):
    (tmp_path / "empty.ms").mkdir()
    with pytest.raises(wvr.survey.SurveyInputError, match="empty.ms' is not a file or a "
                                                            "MeasurementSet"):
        wvr.survey.survey([str(tmp_path / "empty.ms")], tmp_path / "c.sqlite", progress=False)
    with pytest.raises(wvr.survey.SurveyInputError, match="matches no file or MeasurementSet"):
        wvr.survey.survey([str(tmp_path / "*.ms")], tmp_path / "c.sqlite", progress=False)


def test_unknown_measurement_set_option_is_refused(archive, tmp_path):
    with pytest.raises(wvr.survey.SurveyInputError, match="ms_brightnes'"):
        wvr.survey.survey([str(archive / "*.ms")], tmp_path / "c.sqlite",
                          options={"ms_brightnes": "planck"}, progress=False)
