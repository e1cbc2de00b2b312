"""`--step-times` reports where a night's processing time goes: one line per step run, in
pipeline order, and none of the steps a command does not run."""
import os
import re
import subprocess

import pytest

from conftest import cut_demo_scenario

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")

pytestmark = pytest.mark.usefixtures("skyphase")


@pytest.fixture(scope="module")
def small_night(tmp_path_factory):
    work = tmp_path_factory.mktemp("step-times")
    scenario = cut_demo_scenario(work / "small.toml", duration_s=600.0, antenna_count=6)
    night = work / "small.h5"
    subprocess.run([SKYPHASE, "simulate", str(scenario), "-o", str(night)], check=True,
                   capture_output=True)
    return night


def step_times(stderr):
    steps = []
    for line in stderr.splitlines():
        match = re.fullmatch(r"step time: (\w+) (\d+\.\d+) s", line)
        if match:
            steps.append((match.group(1), float(match.group(2))))
    return steps


@pytest.mark.parametrize("command, expected", [
    ("process", ["read", "retrieval", "paths", "calibration", "prediction", "metrics", "correction",
                 "diagnosis", "turbulence", "write"]),
    ("retrieve", ["read", "retrieval", "paths", "write"]),
])
def test_each_step_is_timed_once_in_order(small_night, tmp_path, command, expected):
    result = subprocess.run([SKYPHASE, command, str(small_night), "-o", str(tmp_path / "out.h5"),
                             "--step-times"], capture_output=True, text=True)
    assert result.returncode == 0, result.stderr
    steps = step_times(result.stderr)
    assert [name for name, _ in steps] == expected, result.stderr
    assert all(seconds >= 0.0 for _, seconds in steps)
    # Without the flag nothing is printed.
    quiet = subprocess.run([SKYPHASE, command, str(small_night), "-o", str(tmp_path / "q.h5")],
                           capture_output=True, text=True)
    assert quiet.returncode == 0, quiet.stderr
    assert step_times(quiet.stderr) == []


def memory_line(stderr):
    return [line for line in stderr.splitlines() if line.startswith("memory: ")]


def test_large_allocations_go_on_huge_pages_unless_the_user_says_otherwise(small_night, tmp_path):
    # skyphase re-executes itself with glibc.malloc.hugetlb=1 (glibc 2.35+), added to whatever
    # GLIBC_TUNABLES already holds; a value the user gave for that tunable stands.
    env = {k: v for k, v in os.environ.items() if k != "GLIBC_TUNABLES"}
    cases = [
        ({}, "huge pages"),
        ({"GLIBC_TUNABLES": "glibc.malloc.check=0"}, "huge pages"),
        ({"GLIBC_TUNABLES": "glibc.malloc.hugetlb=0"}, "4 KiB pages"),
    ]
    for extra, expected in cases:
        result = subprocess.run([SKYPHASE, "process", str(small_night), "-o", str(tmp_path / "m.h5"),
                                 "--overwrite", "--step-times"], capture_output=True, text=True,
                                env={**env, **extra})
        assert result.returncode == 0, result.stderr
        lines = memory_line(result.stderr)
        assert len(lines) == 1 and expected in lines[0], (extra, result.stderr)
