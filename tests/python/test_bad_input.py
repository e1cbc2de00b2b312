"""The command line refuses numbers that cannot be meant (NaN, zero, negative) with exit 2 and
the option named, before any file is read."""
import os
import subprocess

import pytest

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")
TESTDATA = os.environ.get("WVR_TESTDATA_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "testdata"))
# Any existing file passes the night argument's existence check; the options fail first.
SOME_FILE = os.path.join(TESTDATA, "sites", "demo-site.toml")

pytestmark = pytest.mark.usefixtures("skyphase")


def refused(*args):
    result = subprocess.run([SKYPHASE, *args], capture_output=True, text=True, timeout=120)
    assert result.returncode == 2, (args, result.returncode, result.stderr)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    return lines[0]


@pytest.mark.parametrize("value", ["nan", "0", "-5", "inf"])
def test_observing_frequency_must_be_a_positive_number(value):
    message = refused("diagnose", SOME_FILE, "--obs-freq-ghz", value)
    assert "--obs-freq-ghz" in message and value in message


@pytest.mark.parametrize("option", ["--advice-layer-height-m", "--advice-separation-deg",
                                    "--advice-target-rms-deg"])
@pytest.mark.parametrize("value", ["nan", "-1"])
def test_advice_options_must_be_finite_and_not_negative(option, value):
    message = refused("process", SOME_FILE, option, value)
    assert option in message and value in message


def test_negative_thread_counts_are_refused():
    assert "--threads" in refused("simulate", SOME_FILE, "-o", "/nonexistent/x.h5", "--threads", "-1")
    assert "--threads" in refused("process", SOME_FILE, "--threads", "-1")
