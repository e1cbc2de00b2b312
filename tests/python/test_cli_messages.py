"""Errors and output stay in the project's words whatever the input holds: no library
internals on stderr (std::bad_alloc, a JSON library's exception, filesystem wording)."""
import json
import os
import subprocess

import h5py
import pytest
from conftest import cut_demo_scenario

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")

pytestmark = pytest.mark.usefixtures("skyphase")


def run(*args):
    return subprocess.run([SKYPHASE, *args], capture_output=True, text=True, timeout=300,
                          errors="replace")


def test_a_device_as_site_file_is_refused_by_name():
    # Before: read until memory ran out and printed std::bad_alloc.
    result = run("spectrum", "--freq-ghz", "183", "--site", "/dev/zero")
    assert result.returncode == 2
    assert result.stderr.strip() == "skyphase: error: site file /dev/zero is not a regular file"


def test_a_name_that_is_not_utf8_is_printed_not_fatal(tmp_path):
    # Before: the JSON library's type_error 316 after the whole command had run.
    scenario = cut_demo_scenario(tmp_path / "s.toml", duration_s=120.0, antenna_count=4)
    night = tmp_path / "n.h5"
    assert run("simulate", str(scenario), "-o", str(night)).returncode == 0
    with h5py.File(night, "r+") as f:
        names = f["array/antenna_names"]
        names[0] = b"CV\xff1"
    result = run("inspect", str(night), "--format", "json")
    assert result.returncode == 0, result.stderr
    document = json.loads(result.stdout)
    assert "CV\ufffd1" in json.dumps(document, ensure_ascii=False)
