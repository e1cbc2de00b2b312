"""SIGKILL at any moment of a writing command leaves either nothing or a complete file at the
output path, never touches the input, and the next write to that path succeeds and removes the
temporary file the killed writer left (named ".<name>.tmp-<pid>-..." beside the output).

The kill times are spread from before the program has started to after it has finished; the
assertions hold whatever the moment, so the test does not depend on the machine's speed."""
import hashlib
import os
import signal
import subprocess
import time

import pytest

import wvr
from conftest import cut_demo_scenario

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")
KILL_AFTER_S = [0.0, 0.01, 0.03, 0.06, 0.1, 0.2, 0.4, 0.8, 1.6]

pytestmark = pytest.mark.usefixtures("skyphase")


def digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    """The demo scenario cut to 12 antennas x 20 minutes: a write takes a fraction of a second."""
    work = tmp_path_factory.mktemp("kill")
    path = cut_demo_scenario(work / "kill.toml", duration_s=1200.0, antenna_count=12)
    return path


@pytest.fixture(scope="module")
def night(scenario):
    path = scenario.parent / "night.h5"
    subprocess.run([SKYPHASE, "simulate", str(scenario), "-o", str(path)], check=True, capture_output=True)
    return path


def killed_runs(arguments, output, input_path):
    before = digest(input_path)
    for delay in KILL_AFTER_S:
        process = subprocess.Popen([SKYPHASE, *arguments, "-o", str(output), "--overwrite"],
                                   stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        time.sleep(delay)
        process.send_signal(signal.SIGKILL)
        process.wait()
        assert digest(input_path) == before, f"input changed by a writer killed after {delay} s"
        if output.exists():
            wvr.read_night(str(output))  # complete: reads, every checksum verified


def kill_when_the_temporary_appears(arguments, output):
    """Starts the writer and kills it the moment its temporary file exists beside `output`;
    returns whether it was caught writing (it may finish first)."""
    prefix = "." + output.name + ".tmp-"
    process = subprocess.Popen([SKYPHASE, *arguments, "-o", str(output), "--overwrite"],
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    caught = False
    while process.poll() is None:
        if any(name.startswith(prefix) for name in os.listdir(output.parent)):
            process.send_signal(signal.SIGKILL)
            caught = True
            break
    process.wait()
    return caught and process.returncode == -signal.SIGKILL


@pytest.mark.parametrize("command", ["simulate", "retrieve", "process"])
def test_a_writer_killed_while_writing_leaves_its_temporary_to_the_next_write(command, scenario, night, tmp_path):
    source = scenario if command == "simulate" else night
    output = tmp_path / "out.h5"
    before = digest(source)
    left_a_temporary = 0
    for _ in range(5):
        output.unlink(missing_ok=True)
        if not kill_when_the_temporary_appears([command, str(source)], output):
            continue  # the writer finished first
        assert digest(source) == before
        if output.exists():
            wvr.read_night(str(output))  # renamed just before the kill: whole
        elif any(p.name.startswith(".out.h5.tmp-") for p in tmp_path.iterdir()):
            left_a_temporary += 1  # killed before its rename: nothing at the output path
    assert left_a_temporary >= 1, "no writer was killed between creating its temporary and renaming it"
    subprocess.run([SKYPHASE, command, str(source), "-o", str(output), "--overwrite"], check=True,
                   capture_output=True)
    wvr.read_night(str(output))
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.h5"]


@pytest.mark.parametrize("command", ["simulate", "retrieve", "process"])
def test_a_killed_writer_leaves_nothing_or_a_whole_file(command, scenario, night, tmp_path):
    source = scenario if command == "simulate" else night
    output = tmp_path / "out.h5"
    killed_runs([command, str(source)], output, source)
    # The next write succeeds, and no temporary of a dead writer stays beside the output.
    subprocess.run([SKYPHASE, command, str(source), "-o", str(output), "--overwrite"],
                   check=True, capture_output=True)
    wvr.read_night(str(output))
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.h5"]
