"""Shared fixtures of the Python tests: test-data locations, the demo site and radiometers,
models built on them, and a reader for the reference CSV tables."""
import csv
import os
import pathlib

import numpy as np
import pytest

import wvr

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
