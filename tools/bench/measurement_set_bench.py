"""Benchmark of MeasurementSet import and export (reports numbers; checks nothing).

Writes (python-casacore) a one-hour MS of 64 antennas: a 4-channel radiometer window sampled
every second as autocorrelations, and 4 science windows of 64 channels (one correlation) with
all 2016 baselines every `integration_s`; then times, each in its own process with its peak
resident memory (GNU time): `skyphase import`, `skyphase export` of a night carrying a
correction (the corrected copy, and separately the gain table: one row per second, window and
antenna, whatever the integration), and casacore's `taql` copying the DATA column into a new
table (the same bytes the export copies and writes again). --scale 4 shortens the integration
4x (4x the visibility rows and bytes). The corrected copy and the taql copy run alternately,
--repeats times each, each after a sync (median reported).

    /usr/bin/python3 tools/bench/measurement_set_bench.py WORKDIR [--scale 4] [--repeats 3]
        [--skyphase PATH]
"""
import argparse
import json
import os
import pathlib
import shutil
import statistics
import subprocess
import sys
import time

import numpy as np
from casacore import tables as ct

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[2] / "tests" / "python"))
import ms_writer  # noqa: E402

ANTENNAS, HOURS_S, WINDOWS, CHANNELS = 64, 3600.0, 4, 64
EPOCH_MJD_S = 61000.0 * 86400.0 + 3600.0


def run(command):
    """Wall time and peak resident memory of `command` alone. The peak comes from GNU time
    (its own small fork): a child started from this Python process would report Python's
    resident size as its peak, whatever it used itself."""
    start = time.perf_counter()
    done = subprocess.run(["/usr/bin/time", "-f", "peak_rss_kb=%M", *command],
                          capture_output=True, text=True)
    elapsed = time.perf_counter() - start
    out, err = done.stdout, done.stderr
    # taql exits 0 after a TaQL error, so its message is looked for too.
    if done.returncode != 0 or "Error in TaQL" in out + err:
        raise SystemExit(f"{command[0]} failed: {err or out}")
    peak_kb = int(err.strip().splitlines()[-1].split("=")[1])
    return {"seconds": round(elapsed, 2), "peak_rss_mb": round(peak_kb / 1024, 1)}


def median_of(runs):
    """Median wall time of repeated runs (each listed) and their largest peak memory."""
    return {"seconds": statistics.median(r["seconds"] for r in runs),
            "runs_s": [r["seconds"] for r in runs],
            "peak_rss_mb": max(r["peak_rss_mb"] for r in runs)}


def write_ms(path, integration_s, rng):
    ct.default_ms(str(path)).close()
    enu = np.column_stack([rng.uniform(-2000, 2000, ANTENNAS), rng.uniform(-2000, 2000, ANTENNAS),
                           rng.uniform(-5, 5, ANTENNAS)])
    with ct.table(f"{path}/ANTENNA", readonly=False, ack=False) as t:
        t.addrows(ANTENNAS)
        t.putcol("NAME", [f"A{i:02d}" for i in range(ANTENNAS)])
        t.putcol("POSITION", ms_writer.itrf_from_enu(enu, -24.0, -67.0, 4850.0))
    with ct.table(f"{path}/SPECTRAL_WINDOW", readonly=False, ack=False) as t:
        t.addrows(WINDOWS + 1)
        for w in range(WINDOWS):
            t.putcell("NAME", w, f"science-{w}")
            t.putcell("CHAN_FREQ", w, (230.0 + 2.0 * w + 0.0156 * np.arange(CHANNELS)) * 1e9)
            t.putcell("CHAN_WIDTH", w, np.full(CHANNELS, 0.0156e9))
            t.putcell("NUM_CHAN", w, CHANNELS)
        t.putcell("NAME", WINDOWS, "radiometer")
        t.putcell("CHAN_FREQ", WINDOWS, (183.31 + np.array([1.1, 2.7, 4.9, 7.6])) * 1e9)
        t.putcell("CHAN_WIDTH", WINDOWS, np.array([0.4, 0.9, 1.6, 2.4]) * 1e9)
        t.putcell("NUM_CHAN", WINDOWS, 4)
    with ct.table(f"{path}/POLARIZATION", readonly=False, ack=False) as t:
        t.addrows(1)
        t.putcell("NUM_CORR", 0, 1)
        t.putcell("CORR_TYPE", 0, np.array([9], dtype=np.int32))
        t.putcell("CORR_PRODUCT", 0, np.array([[0, 0]], dtype=np.int32))
    with ct.table(f"{path}/DATA_DESCRIPTION", readonly=False, ack=False) as t:
        t.addrows(WINDOWS + 1)
        t.putcol("SPECTRAL_WINDOW_ID", np.arange(WINDOWS + 1, dtype=np.int32))
        t.putcol("POLARIZATION_ID", np.zeros(WINDOWS + 1, dtype=np.int32))
    with ct.table(f"{path}/FIELD", readonly=False, ack=False) as t:
        t.addrows(2)
        t.putcol("NAME", ["cal", "target"])
        for i in range(2):
            t.putcell("PHASE_DIR", i, np.array([[1.0 + 0.2 * i, -0.5]]))
    with ct.table(f"{path}/STATE", readonly=False, ack=False) as t:
        t.addrows(2)
        t.putcol("OBS_MODE", ["CALIBRATE_PHASE#ON_SOURCE", "OBSERVE_TARGET#ON_SOURCE"])

    def scan_of(t):  # 5-minute cycles: 1 minute calibrator, 4 minutes target
        return (t // 300).astype(np.int32), np.where(t % 300 < 60, 0, 1).astype(np.int32)

    main = ct.table(str(path), readonly=False, ack=False)
    main.addcols(ct.maketabdesc(ct.makearrcoldesc("DATA", 0j, ndim=2, valuetype="complex")))

    def append(time_s, a1, a2, dd, data):
        n = len(time_s)
        start = main.nrows()
        main.addrows(n)
        scan, state = scan_of(time_s)
        for column, values in (("TIME", EPOCH_MJD_S + time_s), ("INTERVAL", np.ones(n)),
                               ("ANTENNA1", a1), ("ANTENNA2", a2), ("DATA_DESC_ID", dd),
                               ("SCAN_NUMBER", scan + 1), ("FIELD_ID", state), ("STATE_ID", state),
                               ("FLAG_ROW", np.zeros(n, dtype=bool)), ("DATA", data),
                               ("FLAG", np.zeros(data.shape, dtype=bool)),
                               ("WEIGHT", np.ones((n, 1), dtype=np.float32)),
                               ("SIGMA", np.ones((n, 1), dtype=np.float32))):
            main.putcol(column, values, startrow=start, nrow=n)

    seconds = np.arange(HOURS_S)
    t = np.repeat(seconds, ANTENNAS)
    a = np.tile(np.arange(ANTENNAS, dtype=np.int32), len(seconds))
    tb = 40.0 + rng.normal(0, 0.1, (len(t), 4, 1))
    append(t, a, a, np.full(len(t), WINDOWS, dtype=np.int32), tb.astype(np.complex64))
    a1, a2 = np.triu_indices(ANTENNAS, 1)
    nb = len(a1)
    for t0 in np.arange(0.0, HOURS_S, integration_s):
        n = nb * WINDOWS
        phase = rng.uniform(-np.pi, np.pi, (n, 1, 1))
        data = np.broadcast_to(np.exp(1j * phase), (n, CHANNELS, 1)).astype(np.complex64)
        append(np.full(n, t0 + 0.5 * integration_s), np.tile(a1, WINDOWS).astype(np.int32),
               np.tile(a2, WINDOWS).astype(np.int32),
               np.repeat(np.arange(WINDOWS, dtype=np.int32), nb), data)
    rows = main.nrows()
    main.close()
    return rows


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("workdir", type=pathlib.Path)
    parser.add_argument("--scale", type=int, default=1)
    parser.add_argument("--integration-s", type=float, default=30.0)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--skyphase", default=str(pathlib.Path(__file__).resolve().parents[2] /
                                                 "build" / "tools" / "skyphase"))
    args = parser.parse_args()
    import wvr
    work = args.workdir
    work.mkdir(parents=True, exist_ok=True)
    ms = work / f"bench-x{args.scale}.ms"
    for p in (ms, work / "copy.ms", work / "corrected.ms", work / "bench.gains"):
        shutil.rmtree(p, ignore_errors=True)
    start = time.perf_counter()
    rows = write_ms(ms, args.integration_s / args.scale, np.random.default_rng(1))
    report = {"scale": args.scale, "rows": rows, "write_seconds": round(time.perf_counter() - start, 1),
              "ms_mb": round(sum(f.stat().st_size for f in ms.rglob("*") if f.is_file()) / 2**20, 1)}
    night = work / "bench-night.h5"
    report["import"] = run([args.skyphase, "import", str(ms), "-o", str(night), "--brightness",
                            "rayleigh-jeans", "--overwrite"])
    n = wvr.read_night(night)
    rng = np.random.default_rng(2)
    group = wvr.ResultGroup("correction", {
        "time_s": (n.time_s, "s"),
        "phase_correction_rad": (rng.normal(0, 0.3, (n.antenna_count, n.time_count)), "rad"),
        "flags": (np.zeros((n.antenna_count, n.time_count), dtype=np.uint8), "1")},
        {"obs_freq_ghz": "230.0"})
    corrected = work / "bench-corrected.h5"
    wvr.write_night(n.with_result_group(group), corrected, overwrite=True)
    site = pathlib.Path(__file__).resolve().parents[2] / "testdata" / "sites" / "demo-site.toml"
    report["export_gain_table"] = run([args.skyphase, "export", str(corrected), "--ms", str(ms),
                                       "--gain-table", str(work / "bench.gains"), "--site",
                                       str(site)])
    report["gain_table_rows"] = n.time_count * WINDOWS * n.antenna_count
    # The corrected copy and taql's copy of DATA, alternately, each after a sync so that neither
    # pays for the other's (or the MS writer's) pending writes; the median of the repeats.
    export, taql = [], []
    for _ in range(args.repeats):
        for p in (work / "corrected.ms", work / "copy.ms"):
            shutil.rmtree(p, ignore_errors=True)
        os.sync()
        export.append(run([args.skyphase, "export", str(corrected), "--ms", str(ms), "-o",
                           str(work / "corrected.ms"), "--site", str(site)]))
        os.sync()
        # The output name is quoted: TaQL does not parse a bare absolute path after GIVING.
        taql.append(run(["taql", f"select DATA from {ms} giving '{work / 'copy.ms'}' as plain"]))
    report["export"], report["taql_copy_data"] = median_of(export), median_of(taql)
    report["export_over_taql"] = round(report["export"]["seconds"] /
                                       report["taql_copy_data"]["seconds"], 2)
    print(json.dumps(report, indent=2))


if __name__ == "__main__":
    main()
