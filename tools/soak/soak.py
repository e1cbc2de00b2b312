"""Soak test (a documented command, not part of CI): streams a simulated week of nights through
the night pipeline and the streaming corrector in one process and shows that memory stays flat.

Each night is simulated from the demo scenario with its own seed, processed by
wvr.process_night (every stage), then replayed integration by integration (in blocks) through
a wvr.StreamingCorrector whose coefficients follow the night's retrieval windows. The resident
set size (VmRSS) is printed after every night. The run fails (exit 1) when the RSS of the last
quarter of the nights exceeds that of the second quarter by more than --max-growth-mb: a leak of
even a few hundred bytes per integration would show as tens of MB over a week.

  PYTHONPATH=build/python /usr/bin/python3 tools/soak/soak.py                 # a week: 84 x 2 h
  PYTHONPATH=build/python /usr/bin/python3 tools/soak/soak.py --nights 12     # a shorter check
"""
import argparse
import os
import pathlib
import re
import statistics
import sys
import time

import numpy as np

import wvr

TESTDATA = pathlib.Path(__file__).resolve().parents[2] / "testdata"


def rss_mb():
    with open("/proc/self/status") as status:
        for line in status:
            if line.startswith("VmRSS:"):
                return int(line.split()[1]) / 1024.0
    raise RuntimeError("no VmRSS in /proc/self/status")


def scenario_text(seed, antennas, duration_s):
    text = (TESTDATA / "demo-scenario.toml").read_text()
    text = re.sub(r"(?m)^seed = .*$", f"seed = {seed}", text)
    text = re.sub(r"(?m)^duration_s = .*$", f"duration_s = {duration_s}", text)
    text = re.sub(r"(?m)^antenna_count = .*$", f"antenna_count = {antennas}", text)
    # The demo's faults name antennas by index; keep only those that exist.
    head, _, _ = text.partition("[[faults]]")
    return head


def stream_night(night, processed, block):
    """Replays the night through the streaming corrector, changing coefficients at every
    retrieval window; returns the number of integrations corrected."""
    retrieval = processed.retrieval
    time_s = night.time_s
    scale = processed.calibration.antenna_scale
    obs_freq_ghz = processed.obs_freq_ghz
    corrector = wvr.StreamingCorrector.from_retrieval(
        retrieval, float(time_s[0]), obs_freq_ghz, scale=scale,
        phase_per_path=processed.phase_per_path(obs_freq_ghz))
    brightness = np.ascontiguousarray(np.transpose(night.brightness_k, (1, 0, 2)))  # [T, A, C]
    valid = np.ascontiguousarray(night.valid.T)
    window_start_s = retrieval.window_start_s
    done = 0
    for start in range(0, len(time_s), block):
        stop = min(start + block, len(time_s))
        window = int(np.searchsorted(window_start_s, time_s[start], side="right")) - 1
        corrector.update_from_retrieval(retrieval, float(window_start_s[max(window, 0)]), scale=scale)
        corrector.process_many(brightness[start:stop], valid[start:stop])
        done += stop - start
    return done


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--nights", type=int, default=84, help="nights to run (default 84: a week of 2-hour nights)")
    parser.add_argument("--antennas", type=int, default=16)
    parser.add_argument("--duration-s", type=float, default=7200.0)
    parser.add_argument("--block", type=int, default=60, help="integrations per streaming call")
    parser.add_argument("--max-growth-mb", type=float, default=20.0)
    args = parser.parse_args()
    if args.nights < 4:
        parser.error(f"--nights = {args.nights}: at least 4 are needed to compare quarters")

    rss = []
    integrations = 0
    started = time.monotonic()
    print(f"{'night':>5} {'seed':>5} {'integrations':>12} {'RSS MB':>8} {'s':>6}", flush=True)
    for k in range(args.nights):
        seed = 1000 + k
        scenario = wvr.parse_scenario(scenario_text(seed, args.antennas, args.duration_s),
                                      "soak.toml", TESTDATA)
        t0 = time.monotonic()
        night = wvr.simulate_night(scenario)
        processed = wvr.process_night(night)
        integrations += stream_night(night, processed, args.block)
        del night, processed
        rss.append(rss_mb())
        print(f"{k + 1:5d} {seed:5d} {integrations:12d} {rss[-1]:8.1f} {time.monotonic() - t0:6.1f}", flush=True)

    quarter = len(rss) // 4
    second = statistics.median(rss[quarter:2 * quarter])
    last = statistics.median(rss[-quarter:])
    print(f"\n{args.nights} nights, {integrations} integrations x {args.antennas} antennas streamed "
          f"in {time.monotonic() - started:.0f} s")
    print(f"RSS median: second quarter {second:.1f} MB, last quarter {last:.1f} MB, "
          f"growth {last - second:+.1f} MB (limit {args.max_growth_mb:.0f} MB)")
    return 0 if last - second <= args.max_growth_mb else 1


if __name__ == "__main__":
    sys.exit(main())
