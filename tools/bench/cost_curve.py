#!/usr/bin/python3
"""Cost curve of a night's processing: wall time and peak memory of every stage against the
array size and the night length, with reference baselines and with every baseline stored.

For each (antennas, hours, baselines) it simulates a night from the demo scenario (not timed
as processing) and then times, each as its own skyphase process:
  retrieve, calibrate, correct, diagnose  -- each stage on the previous stage's output, so
                                             every stage reuses the stored earlier results;
  process                                 -- the whole pass from the simulated night.
It prints one table row per night and the log-log slope of each stage's time against
antennas (at each length) and against hours (at each array size): 1 means linear.

  /usr/bin/python3 tools/bench/cost_curve.py                      # 16..128 antennas x 1..8 h
  /usr/bin/python3 tools/bench/cost_curve.py --antennas 16 32 --hours 1 2 --threads 1

Wall times on a shared machine are noisy: run it when the machine is quiet (see `uptime`).
"""
import argparse
import math
import os
import re
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
STAGES = ["retrieve", "calibrate", "correct", "diagnose"]


def scenario_text(antennas, hours, all_baselines):
    """The demo scenario with the array size, length and baseline set replaced."""
    text = (ROOT / "testdata/scenarios/matched-demo.toml").read_text()
    replacements = {
        r"^duration_s = .*$": f"duration_s = {hours * 3600.0}",
        r"^antenna_count = .*$": f"antenna_count = {antennas}",
        r"^phase_baselines = .*$": 'phase_baselines = "{}"'.format(
            "all" if all_baselines else "reference"),
        r'^site_file = "\.\./': 'site_file = "' + str(ROOT / "testdata") + "/",
        r'^radiometer_file = "\.\./': 'radiometer_file = "' + str(ROOT / "testdata") + "/",
    }
    for pattern, value in replacements.items():
        text, n = re.subn(pattern, value, text, count=1, flags=re.M)
        if n != 1:
            sys.exit(f"cost_curve: the demo scenario has no line matching {pattern}")
    # The demo's episodes (cloud and a spiking radiometer in the first hour, dry turbulence in
    # the second) stay where they are on other lengths; its last fault (antenna 27, second
    # hour) is dropped so that small arrays and one-hour nights stay valid.
    last_fault = text.rfind("[[faults]]")
    if last_fault < 0 or "antenna = 27" not in text[last_fault:]:
        sys.exit("cost_curve: the demo scenario no longer ends with the antenna 27 fault")
    return text[:last_fault]


def timed(command):
    """Runs command under /usr/bin/time; returns (wall seconds, peak resident MB)."""
    with tempfile.NamedTemporaryFile("r", suffix=".time") as report:
        result = subprocess.run(["/usr/bin/time", "-f", "%e %M", "-o", report.name] + command,
                                stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        if result.returncode != 0:
            sys.exit("cost_curve: {} failed ({}): {}".format(
                " ".join(command), result.returncode, result.stderr.strip()))
        wall_s, peak_kb = report.read().split()[-2:]
        return float(wall_s), float(peak_kb) / 1024.0


def slope(points):
    """Least-squares slope of log(y) against log(x); None with fewer than two x values."""
    points = [(math.log(x), math.log(y)) for x, y in points if y > 0]
    if len({x for x, _ in points}) < 2:
        return None
    mx = sum(x for x, _ in points) / len(points)
    my = sum(y for _, y in points) / len(points)
    sxx = sum((x - mx) ** 2 for x, _ in points)
    return sum((x - mx) * (y - my) for x, y in points) / sxx


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--antennas", type=int, nargs="+", default=[16, 32, 64, 128])
    parser.add_argument("--hours", type=float, nargs="+", default=[1, 2, 4, 8])
    parser.add_argument("--baselines", choices=["reference", "all", "both"], default="both")
    parser.add_argument("--threads", type=int, default=0, help="worker threads (0 = all cores)")
    parser.add_argument("--skyphase", default=str(ROOT / "build/tools/skyphase"))
    parser.add_argument("--workdir", default=None, help="keep the nights here (default: temp)")
    args = parser.parse_args()
    if not os.access(args.skyphase, os.X_OK):
        sys.exit(f"cost_curve: skyphase = {args.skyphase} is not an executable (build it first)")
    baseline_sets = {"reference": [False], "all": [True], "both": [False, True]}[args.baselines]
    threads = ["--threads", str(args.threads)]

    rows = []
    with tempfile.TemporaryDirectory() as scratch:
        work = Path(args.workdir or scratch)
        work.mkdir(parents=True, exist_ok=True)
        print("{:>8} {:>5} {:>9} {:>10} | {}".format(
            "antennas", "hours", "baselines", "simulate", " ".join(
                f"{s:>10}" for s in STAGES + ["process"])) + " | peak MB (process)", flush=True)
        for all_baselines in baseline_sets:
            for antennas in args.antennas:
                for hours in args.hours:
                    name = "{}a-{}h-{}".format(antennas, hours, "all" if all_baselines else "ref")
                    scenario = work / f"{name}.toml"
                    scenario.write_text(scenario_text(antennas, hours, all_baselines))
                    night = work / f"{name}.h5"
                    sim_s, _ = timed([args.skyphase, "simulate", str(scenario), "-o", str(night),
                                      "--overwrite"] + threads)
                    times = {}
                    source = night
                    for stage in STAGES:
                        out = work / f"{name}.{stage}.h5"
                        extra = threads if stage == "retrieve" else []
                        times[stage], _ = timed([args.skyphase, stage, str(source), "-o",
                                                 str(out), "--overwrite"] + extra)
                        if source != night:
                            source.unlink()
                        source = out
                    source.unlink()
                    out = work / f"{name}.process.h5"
                    times["process"], peak_mb = timed([args.skyphase, "process", str(night), "-o",
                                                       str(out), "--overwrite"] + threads)
                    out.unlink()
                    night.unlink()
                    rows.append((antennas, hours, all_baselines, times, peak_mb))
                    print("{:>8} {:>5g} {:>9} {:>9.1f}s | {} | {:.0f}".format(
                        antennas, hours, "all" if all_baselines else "reference", sim_s,
                        " ".join(f"{times[s]:>9.2f}s" for s in STAGES + ["process"]), peak_mb),
                        flush=True)

    print("\nLog-log slopes of wall time (1 = linear):")
    for all_baselines in baseline_sets:
        label = "all" if all_baselines else "reference"
        for stage in STAGES + ["process"]:
            against_antennas = []
            for hours in args.hours:
                s = slope([(a, t[stage]) for a, h, b, t, _ in rows if h == hours and b == all_baselines])
                if s is not None:
                    against_antennas.append(f"{hours:g} h: {s:.2f}")
            against_hours = []
            for antennas in args.antennas:
                s = slope([(h, t[stage]) for a, h, b, t, _ in rows
                           if a == antennas and b == all_baselines])
                if s is not None:
                    against_hours.append(f"{antennas} ant: {s:.2f}")
            print(f"  {label:>9} {stage:>9}  vs antennas [{', '.join(against_antennas)}]"
                  f"  vs hours [{', '.join(against_hours)}]")


if __name__ == "__main__":
    main()
