"""Shared fixtures of the Python tests: test-data locations, the demo site and radiometers,
models built on them, a reader for the reference CSV tables, the skyphase program, and the rule
that a skipped test fails unless it is marked optional_dependency."""
import csv
import hashlib
import os
import pathlib
import subprocess

import numpy as np
import pytest

import wvr

# Every dependency the project declares (tools/install-deps.sh: numpy, h5py, matplotlib; the
# skyphase program when WVR_BUILD_TOOLS=ON) must be present: a test that skips because one is
# missing fails instead, so a run cannot stay green while silently checking less. Only a test
# marked optional_dependency(reason) may skip.
OPTIONAL_MARKER = "optional_dependency"


def pytest_configure(config):
    config.addinivalue_line(
        "markers", OPTIONAL_MARKER + "(reason): the test may skip; what it needs is optional")


@pytest.hookimpl(hookwrapper=True)
def pytest_runtest_makereport(item, call):
    outcome = yield
    report = outcome.get_result()
    if not report.skipped or hasattr(report, "wasxfail"):
        return
    if item.get_closest_marker(OPTIONAL_MARKER):
        return
    reason = report.longrepr[2] if isinstance(report.longrepr, tuple) else str(report.longrepr)
    report.outcome = "failed"
    report.longrepr = (f"{item.nodeid} skipped ({reason}), but what it needs is a declared "
                       f"dependency; mark the test {OPTIONAL_MARKER} if it is optional")


TESTDATA = pathlib.Path(
    os.environ.get("WVR_TESTDATA_DIR")
    or pathlib.Path(__file__).resolve().parent.parent.parent / "testdata"
)


def read_table(relative_path, skip_rows_after_header=0):
    """Columns of a CSV under testdata/ as a dict: float arrays for numeric columns, lists of
    str otherwise. Lines starting with '#' are comments."""
    with open(TESTDATA / relative_path, newline="") as handle:
        rows = [row for row in csv.reader(handle) if row and not row[0].startswith("#")]
    header, body = rows[0], rows[1 + skip_rows_after_header:]
    columns = {}
    for index, name in enumerate(header):
        cells = [row[index].strip() for row in body]
        try:
            columns[name.strip()] = np.array([float(c) for c in cells])
        except ValueError:
            columns[name.strip()] = cells
    return columns


def cut_demo_scenario(path, *, duration_s, antenna_count):
    """Writes the demo scenario cut to `duration_s` and `antenna_count` to `path`, its site
    and radiometer files named by absolute path and its radiometer faults dropped (they name
    antennas a small array lacks); returns `path`."""
    data = pathlib.Path(TESTDATA).resolve()
    text = (data / "demo-scenario.toml").read_text()
    text = text.replace("duration_s = 7200.0", f"duration_s = {duration_s}")
    text = text.replace("antenna_count = 40", f"antenna_count = {antenna_count}")
    text = text.replace('site_file = "', f'site_file = "{data}/')
    text = text.replace('radiometer_file = "', f'radiometer_file = "{data}/')
    path.write_text(text[:text.index("[[faults]]")])
    return path


def simulate_ms_night(path):
    """The short demo night behind the MeasurementSet tests (600 s, 5 antennas), written to
    `path`; returns `path`."""
    scenario = wvr.load_scenario(TESTDATA / "demo-scenario.toml").with_overrides(
        duration_s=600.0, antenna_count=5)
    wvr.write_night(wvr.simulate_night(scenario, threads=1), path)
    return path


def correct_ms_with_skyphase(skyphase, ms, work, name):
    """skyphase import, retrieve, calibrate and correct of `ms` (files work/name-*.h5); returns
    the corrected night file."""
    def run(*args):
        done = subprocess.run([skyphase, *map(str, args)], capture_output=True, text=True)
        assert done.returncode == 0, done.stderr

    source = work / f"{name}-import.h5"
    run("import", ms, "-o", source, "--brightness", "rayleigh-jeans")
    for command in ("retrieve", "calibrate", "correct"):
        out = work / f"{name}-{command}.h5"
        run(command, source, "-o", out)
        source = out
    return source


def tree_digest(path):
    """SHA-256 over the names and bytes of every file under `path` (a table directory)."""
    digest = hashlib.sha256()
    for f in sorted(pathlib.Path(path).rglob("*")):
        digest.update(str(f.relative_to(path)).encode())
        if f.is_file():
            digest.update(f.read_bytes())
    return digest.hexdigest()


@pytest.fixture(scope="session")
def testdata():
    return TESTDATA


@pytest.fixture(scope="session")
def table():
    return read_table


@pytest.fixture(scope="session")
def demo_site():
    return wvr.load_site(TESTDATA / "sites" / "demo-site.toml")


@pytest.fixture(scope="session")
def demo_profile(demo_site):
    return wvr.profile_from_site(demo_site)


@pytest.fixture(scope="session")
def radiometer_183():
    return wvr.Radiometer.load(TESTDATA / "radiometers" / "demo-183-dsb.toml")


@pytest.fixture(scope="session")
def radiometer_22():
    return wvr.Radiometer.load(TESTDATA / "radiometers" / "demo-22-ssb.toml")


@pytest.fixture(scope="session")
def sky():
    return wvr.SkyModel()


@pytest.fixture(scope="session")
def fast_183(demo_profile, radiometer_183, sky):
    return wvr.FastSkyModel(demo_profile, radiometer_183, sky)


@pytest.fixture(scope="module")
def skyphase(request):
    """Path of the skyphase program (WVR_SKYPHASE, set by ctest). A build configured with
    WVR_BUILD_TOOLS=OFF has no skyphase and says so (WVR_BUILD_TOOLS=OFF in the environment):
    only then do these tests skip (the module is marked optional_dependency). Anywhere else a
    missing program is a failure."""
    path = os.environ.get("WVR_SKYPHASE", "")
    if not path and os.environ.get("WVR_BUILD_TOOLS", "").upper() == "OFF":
        request.node.add_marker(pytest.mark.optional_dependency("WVR_BUILD_TOOLS=OFF"))
        pytest.skip("skyphase is not part of this build (WVR_BUILD_TOOLS=OFF)")
    if not path:
        pytest.fail("WVR_SKYPHASE is not set; skyphase is part of the build (WVR_BUILD_TOOLS=ON)")
    if not os.access(path, os.X_OK):
        pytest.fail(f"WVR_SKYPHASE = {path} is not an executable program")
    return path


def pytest_collection_modifyitems(config, items):
    """WVR_SKYPHASE_TESTS_ONLY=1 keeps only the tests that run the skyphase program: the
    sanitizer run (tools/sanitize.sh) points them at a sanitized build, while the Python module
    stays the regular one, so the other tests would only repeat the regular run."""
    if os.environ.get("WVR_SKYPHASE_TESTS_ONLY") != "1":
        return
    runs_skyphase = {item: "skyphase" in getattr(item, "fixturenames", ()) for item in items}
    config.hook.pytest_deselected(items=[item for item in items if not runs_skyphase[item]])
    items[:] = [item for item in items if runs_skyphase[item]]
