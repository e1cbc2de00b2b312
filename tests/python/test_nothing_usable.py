"""A night that holds nothing a stage can use (every radiometer sample flagged, impossible
brightness, no calibrator row) is refused with exit status 3 and one line saying why, with
counts; --format json prints the same as {"status", "reason"}; no output file is written. From
Python it is wvr.WvrNothingUsable. Before, these exited 0 with "PWV median nan"."""
import json
import os
import pathlib
import subprocess

import h5py
import pytest

import wvr
from conftest import cut_demo_scenario

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")
TESTDATA = os.path.abspath(os.environ.get("WVR_TESTDATA_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "testdata")))
NOTHING_USABLE_EXIT_STATUS = 3  # tools/skyphase/main.cpp and the README

pytestmark = pytest.mark.usefixtures("skyphase")


@pytest.fixture(scope="module")
def small_night(tmp_path_factory):
    """The demo scenario cut to 8 antennas x 10 minutes, its radiometer faults dropped."""
    work = tmp_path_factory.mktemp("nothing-usable")
    scenario = cut_demo_scenario(work / "small.toml", duration_s=600.0, antenna_count=8)
    night = work / "small.h5"
    subprocess.run([SKYPHASE, "simulate", str(scenario), "-o", str(night)], check=True, capture_output=True)
    return night


def damaged_copy(night, tmp_path, name, damage):
    copy = tmp_path / name
    copy.write_bytes(night.read_bytes())
    with h5py.File(copy, "r+") as f:
        damage(f)
    return copy


def all_flagged(f):
    f["radiometer/valid"][...] = 0


def impossible_brightness(f):
    f["radiometer/brightness_k"][...] = 5000.0


def refused_as_nothing_usable(*args):
    result = subprocess.run([SKYPHASE, *args], capture_output=True, text=True, timeout=300)
    assert result.returncode == NOTHING_USABLE_EXIT_STATUS, (args, result.returncode, result.stderr)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and "nothing usable" in lines[0], result.stderr
    return lines[0], result.stdout


@pytest.mark.parametrize("damage, reason", [(all_flagged, "4800 invalid in file"),
                                            (impossible_brightness, "4800 bad brightness")])
@pytest.mark.parametrize("command", ["retrieve", "calibrate", "correct", "diagnose", "process", "report"])
def test_a_night_without_a_usable_radiometer_sample_exits_3(small_night, tmp_path, damage, reason, command):
    night = damaged_copy(small_night, tmp_path, "damaged.h5", damage)
    output = tmp_path / "out.h5"
    message, _ = refused_as_nothing_usable(command, str(night), "-o", str(output))
    assert "4800 radiometer samples (8 antennas x 600 times)" in message and reason in message, message
    assert not output.exists()


def test_json_says_the_same(small_night, tmp_path):
    night = damaged_copy(small_night, tmp_path, "flagged.h5", all_flagged)
    message, stdout = refused_as_nothing_usable("process", str(night), "-o", str(tmp_path / "o.h5"),
                                                "--format", "json")
    document = json.loads(stdout)
    assert document["status"] == "nothing_usable"
    assert document["reason"] in message


def test_calibrate_without_a_usable_calibrator_row_exits_3(small_night, tmp_path):
    def no_calibrator_scans(f):
        f["scans/intent"][...] = b"target"
    night = damaged_copy(small_night, tmp_path, "no-calibrator.h5", no_calibrator_scans)
    message, _ = refused_as_nothing_usable("calibrate", str(night), "-o", str(tmp_path / "o.h5"))
    assert "scaling solve: the night has no calibrator scans" in message, message
    # The correction itself does not need the scale: it applies the model's path unscaled.
    result = subprocess.run([SKYPHASE, "correct", str(night), "-o", str(tmp_path / "c.h5")],
                            capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stderr


def test_python_raises_wvr_nothing_usable(small_night, tmp_path):
    night = damaged_copy(small_night, tmp_path, "flagged.h5", all_flagged)
    with pytest.raises(wvr.WvrNothingUsable, match="8 antennas x 600 times"):
        wvr.process_night(wvr.read_night(str(night)))
    assert issubclass(wvr.WvrNothingUsable, wvr.WvrError)


def test_a_night_without_calibrator_scans_is_processed_to_the_end(tmp_path):
    """Without calibrator scans the scale is unknown but the radiometer science still runs;
    before, the wind fit returned 8197 m/s as "ok" (lags of noise across a 12-antenna array)
    and the calibrator structure function refused it, so the whole pass failed."""
    scenario = tmp_path / "short.toml"
    text = (pathlib.Path(TESTDATA) / "scenarios" / "short-eventful-night.toml").read_text()
    scenario.write_text(text.replace('site_file = "../', f'site_file = "{TESTDATA}/')
                        .replace('radiometer_file = "../', f'radiometer_file = "{TESTDATA}/'))
    night_path = tmp_path / "short.h5"
    subprocess.run([SKYPHASE, "simulate", str(scenario), "-o", str(night_path)], check=True,
                   capture_output=True)
    with h5py.File(night_path, "r+") as f:
        f["scans/intent"][...] = b"target"
    result = wvr.process_night(wvr.read_night(str(night_path)))
    wind = result.turbulence.wind
    # Frozen-flow speeds above the measurable limit are reported as not converged; a speed the
    # fit does report stays below what the atmosphere carries (~100 m/s, common practice).
    assert (not wind.ok) or wind.speed_m_s < 100.0, (wind.speed_m_s, wind.message)
    assert not result.calibration.ok
