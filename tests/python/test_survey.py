"""The survey over many nights on a two-worker local dask cluster: catalogue rows equal to
processing each night serially, broken nights recorded with their error, a worker killed
mid-run, reruns that skip what is done, and a survey killed with SIGKILL that resumes with
only the remaining nights."""
import os
import pathlib
import shutil
import signal
import sqlite3
import subprocess
import sys

import pytest

import wvr
import wvr.survey
from wvr.survey.season import generate_season

# Debian 12's dask.distributed 2022.12 calls tornado APIs that tornado 6.2 deprecates; those
# warnings come from the cluster's own modules, not from wvr.
pytestmark = [
    pytest.mark.filterwarnings("ignore::DeprecationWarning:tornado.*"),
    pytest.mark.filterwarnings("ignore::DeprecationWarning:distributed.*"),
]

# Columns that say where and when a night ran, not what it gave.
RUN_COLUMNS = {"worker", "processing_s", "finished_utc", "traceback"}


@pytest.fixture(scope="module")
def season(tmp_path_factory, testdata):
    """Ten small simulated nights (4 antennas, 10 minutes) and two broken files."""
    folder = tmp_path_factory.mktemp("season")
    spec = (testdata / "seasons" / "demo-season.toml").read_text()
    spec = spec.replace("nights = 12", "nights = 10").replace("duration_s = 900.0",
                                                               "duration_s = 600.0")
    spec = spec.replace('base_scenario = "../demo-scenario.toml"',
                        f'base_scenario = "{(testdata / "demo-scenario.toml").resolve()}"')
    (folder / "spec.toml").write_text(spec)
    nights = generate_season(folder / "spec.toml", folder / "nights", threads=1)
    truncated = folder / "nights" / "night-broken-truncated.h5"
    data = nights[0].read_bytes()
    truncated.write_bytes(data[: len(data) // 3])
    not_hdf5 = folder / "nights" / "night-broken-text.h5"
    not_hdf5.write_text("this is not a night file\n")
    return folder, sorted(nights) + [truncated, not_hdf5]


def comparable(row):
    return {k: v for k, v in row.items() if k not in RUN_COLUMNS}


def assert_rows_equal(stored, serial, where):
    """Equal rows: text, integers and structure exactly; floating-point numbers to 1e-12
    relative (the scaling solve's sigma differs in its last bit between processes)."""
    if isinstance(stored, float) and isinstance(serial, float):
        assert stored == pytest.approx(serial, rel=1e-12, abs=0.0), where
    elif isinstance(stored, dict):
        assert isinstance(serial, dict) and stored.keys() == serial.keys(), where
        for key in stored:
            assert_rows_equal(stored[key], serial[key], f"{where}.{key}")
    elif isinstance(stored, list):
        assert isinstance(serial, list) and len(stored) == len(serial), where
        for k, (a, b) in enumerate(zip(stored, serial)):
            assert_rows_equal(a, b, f"{where}[{k}]")
    else:
        assert stored == serial, where


@pytest.fixture(scope="module")
def surveyed(season, tmp_path_factory):
    folder, nights = season
    catalogue = tmp_path_factory.mktemp("catalogue") / "season.sqlite"
    seen = []
    summary = wvr.survey.survey([str(folder / "nights" / "*.h5")], catalogue, workers=2,
                                threads_per_worker=1, progress=False, on_night_done=seen.append)
    return catalogue, summary, seen


def test_cluster_rows_equal_serial_processing(season, surveyed):
    folder, nights = season
    catalogue, summary, seen = surveyed
    assert (summary.nights, summary.processed, summary.ok, summary.failed) == (12, 12, 10, 2)
    with wvr.survey.Catalogue(catalogue) as cat:
        rows = {r["path"]: r for r in cat.rows()}
    assert sorted(rows) == sorted(str(p.resolve()) for p in nights)
    for path in nights:
        serial = wvr.survey.process_one(str(path.resolve()), {}, threads=1)
        stored = rows[str(path.resolve())]
        with wvr.survey.Catalogue(":memory:") as scratch:  # the same JSON decoding
            scratch.record(serial)
            (serial_decoded,) = scratch.rows()
        assert_rows_equal(comparable(stored), comparable(serial_decoded), path.name)


def test_broken_nights_are_recorded_with_their_error(season, surveyed):
    catalogue, summary, _ = surveyed
    with wvr.survey.Catalogue(catalogue) as cat:
        failed = cat.rows("status = 'failed'")
        good = cat.rows("status = 'ok'")
    assert sorted(r["night_name"] for r in failed) == ["night-broken-text", "night-broken-truncated"]
    for row in failed:
        assert row["error"] and "WvrValueError" in row["error"], row["error"]
        assert row["night_name"] in row["error"] or "night" in row["error"].lower()
        assert row["pwv_median_mm"] is None
    assert len(good) == 10
    for row in good:
        assert row["start_utc"].startswith("2026-")
        assert 0.1 < row["pwv_median_mm"] < 10.0
        assert row["scale"] > 0 and row["scale_sigma"] > 0
        assert abs(sum(row["verdict_fractions"].values()) - 1.0) < 1e-9
        assert set(row["radiometer_health"]) and row["software_version"] == wvr.__version__
    assert {p for p, _ in summary.failures} == {r["path"] for r in failed}


def test_a_rerun_skips_done_nights_and_can_retry_failed_ones(surveyed):
    catalogue, _, _ = surveyed
    again = wvr.survey.survey([str(pathlib.Path(r) ) for r in _paths(catalogue)], catalogue,
                              progress=False)
    assert (again.skipped, again.processed) == (12, 0)
    retried = wvr.survey.survey(_paths(catalogue), catalogue, retry_failed=True, progress=False)
    assert (retried.skipped, retried.processed, retried.failed) == (10, 2, 2)
    with wvr.survey.Catalogue(catalogue) as cat:
        assert cat.count() == 12


def _paths(catalogue):
    with wvr.survey.Catalogue(catalogue) as cat:
        return [r["path"] for r in cat.rows()]


def test_other_options_are_another_survey(surveyed, tmp_path):
    catalogue, _, _ = surveyed
    copy = tmp_path / "copy.sqlite"
    shutil.copy(catalogue, copy)
    paths = [p for p in _paths(copy) if "broken" not in p][:2]
    summary = wvr.survey.survey(paths, copy, options={"window_s": 120.0}, progress=False)
    assert (summary.skipped, summary.processed, summary.ok) == (0, 2, 2)
    with wvr.survey.Catalogue(copy) as cat:
        assert cat.count() == 14
        assert len(cat.rows("options_json = ?", ('{"window_s":120.0}',))) == 2


def test_a_killed_worker_does_not_lose_or_repeat_nights(season, tmp_path):
    from distributed import Client, LocalCluster

    folder, nights = season
    catalogue = tmp_path / "killed.sqlite"
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                           dashboard_address=None)
    client = Client(cluster)
    killed = []

    def kill_a_busy_worker(row):
        if killed:
            return
        busy = [w for w, tasks in client.processing().items() if tasks]
        if busy:
            pid = client.run(os.getpid, workers=[busy[0]])[busy[0]]
            os.kill(pid, signal.SIGKILL)
            killed.append(pid)

    seen = []
    try:
        summary = wvr.survey.survey(
            [str(p) for p in nights], catalogue, scheduler_address=cluster.scheduler_address,
            progress=False, on_night_done=lambda row: (seen.append(row["path"]),
                                                       kill_a_busy_worker(row)))
    finally:
        client.close()
        cluster.close()
    assert killed, "no worker was busy after the first night"
    assert sorted(seen) == sorted(str(p.resolve()) for p in nights)  # each night once
    assert (summary.processed, summary.ok, summary.failed) == (12, 10, 2)
    with wvr.survey.Catalogue(catalogue) as cat:
        assert cat.count() == 12


def test_a_survey_killed_with_sigkill_resumes_with_the_remaining_nights(season, tmp_path):
    folder, nights = season
    catalogue = tmp_path / "resumed.sqlite"
    env = dict(os.environ)
    command = [sys.executable, "-m", "wvr.survey", "run", "--manifest",
               str(folder / "nights" / "nights.txt"), "--catalogue", str(catalogue),
               "--no-progress"]
    # Its own session, so that SIGKILL reaches the survey and its local cluster's workers.
    process = subprocess.Popen(command, env=env, start_new_session=True,
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        while _count(catalogue) < 4 and process.poll() is None:
            try:
                process.wait(timeout=0.2)
            except subprocess.TimeoutExpired:
                pass
    finally:
        os.killpg(process.pid, signal.SIGKILL)
        process.wait()
    done = _count(catalogue)
    assert 4 <= done < 10, "the survey finished before it could be killed"
    with wvr.survey.Catalogue(catalogue) as cat:
        before = {r["path"]: r["finished_utc"] for r in cat.rows()}
    summary = wvr.survey.survey([], catalogue, manifests=[folder / "nights" / "nights.txt"],
                                progress=False)
    assert summary.skipped == done and summary.processed == 10 - done
    with wvr.survey.Catalogue(catalogue) as cat:
        after = {r["path"]: r["finished_utc"] for r in cat.rows()}
    assert len(after) == 10
    assert all(after[p] == t for p, t in before.items())  # done nights were not redone


def _count(catalogue):
    if not pathlib.Path(catalogue).exists():
        return 0
    try:
        with sqlite3.connect(catalogue) as db:
            return db.execute("SELECT COUNT(*) FROM nights").fetchone()[0]
    except sqlite3.OperationalError:  # the table is not created yet
        return 0
