"""Benchmark of the survey: the same nights on a local cluster of one worker and of two
(1 thread each). Prints the wall time of each, the speed-up, and the scheduler overhead per
night: (workers x wall time - sum of the nights' task times) / nights, against the mean task
time. Cluster start-up is excluded (the cluster is started before the clock).

    PYTHONPATH=build/python /usr/bin/python3 tools/bench/survey_scaling.py --nights 48 \
        --antennas 16 --duration-s 3600 --work /tmp/survey-bench
"""
import argparse
import pathlib
import time
import warnings

import wvr.survey
from wvr.survey.season import generate_season

ROOT = pathlib.Path(__file__).resolve().parents[2]


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--nights", type=int, default=48)
    parser.add_argument("--antennas", type=int, default=16)
    parser.add_argument("--duration-s", type=float, default=3600.0)
    parser.add_argument("--work", default="/tmp/survey-bench")
    args = parser.parse_args()
    work = pathlib.Path(args.work)
    nights_dir = work / "nights"
    if not (nights_dir / "nights.txt").exists():
        spec = (ROOT / "testdata" / "seasons" / "demo-season.toml").read_text()
        spec = (spec.replace("nights = 12", f"nights = {args.nights}")
                .replace("duration_s = 900.0", f"duration_s = {args.duration_s}")
                .replace("antenna_count = 4", f"antenna_count = {args.antennas}")
                .replace('base_scenario = "../demo-scenario.toml"',
                         f'base_scenario = "{ROOT / "testdata" / "demo-scenario.toml"}"'))
        work.mkdir(parents=True, exist_ok=True)
        (work / "spec.toml").write_text(spec)
        started = time.perf_counter()
        generate_season(work / "spec.toml", nights_dir, threads=2)
        print(f"simulated {args.nights} nights in {time.perf_counter() - started:.1f} s")
    from distributed import Client, LocalCluster

    warnings.simplefilter("ignore", DeprecationWarning)
    results = {}
    for workers in (1, 2):
        catalogue = work / f"catalogue-{workers}.sqlite"
        for suffix in ("", "-wal", "-shm"):
            pathlib.Path(str(catalogue) + suffix).unlink(missing_ok=True)
        with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                          dashboard_address=None) as cluster, Client(cluster):
            summary = wvr.survey.survey([], catalogue, manifests=[nights_dir / "nights.txt"],
                                        scheduler_address=cluster.scheduler_address,
                                        progress=False)
        assert summary.ok == args.nights, summary.text()
        overhead_s = (workers * summary.wall_s - summary.processing_s) / summary.processed
        mean_s = summary.processing_s / summary.processed
        results[workers] = summary.wall_s
        print(f"{workers} worker(s): wall {summary.wall_s:.1f} s, night task mean {mean_s:.2f} s, "
              f"overhead {overhead_s:.3f} s per night = {100 * overhead_s / mean_s:.1f} % of a night")
    print(f"speed-up 2 vs 1 worker: {results[1] / results[2]:.2f}x")


if __name__ == "__main__":
    main()
