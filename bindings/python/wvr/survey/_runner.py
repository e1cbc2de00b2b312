"""The survey loop: nights to do, one dask task per night, one catalogue transaction per
finished night, progress on the terminal and a summary at the end."""
import dataclasses
import sys
import time

from wvr.survey._inputs import canonical_options, content_sha256, resolve_nights
from wvr.survey._night_task import check_input_options, check_options, options_for, process_one
from wvr.survey.catalogue import Catalogue

#: Statuses a rerun does not repeat (failed nights too unless retry_failed).
_DONE = ("ok",)


@dataclasses.dataclass
class SurveySummary:
    """What a survey run did."""

    nights: int  # nights named by the inputs
    skipped: int  # already in the catalogue with the same content and options
    processed: int  # finished now (ok + failed)
    ok: int
    failed: int
    wall_s: float  # s, the whole run including cluster start-up
    processing_s: float  # s, sum of the nights' task times on their workers
    failures: list  # [(path, error)]

    def text(self):
        lines = [f"survey: {self.nights} nights, {self.skipped} already catalogued, "
                 f"{self.processed} processed ({self.ok} ok, {self.failed} failed) "
                 f"in {self.wall_s:.1f} s"]
        if self.processed:
            lines.append(f"  night processing: {self.processing_s:.1f} s in total on the workers, "
                         f"{self.processing_s / self.processed:.2f} s per night")
        for path, error in self.failures:
            lines.append(f"  failed: {path}: {error}")
        return "\n".join(lines)


def _client(scheduler_address, workers, threads_per_worker):
    """A dask client on the given scheduler, or on a new local cluster of worker processes."""
    from distributed import Client, LocalCluster

    if scheduler_address:
        return Client(scheduler_address), None
    cluster = LocalCluster(n_workers=workers, threads_per_worker=threads_per_worker,
                           processes=True, dashboard_address=None)
    return Client(cluster), cluster


def run_survey(nights=(), catalogue="survey.sqlite", *, manifests=(), options=None,
               scheduler_address=None, workers=2, threads_per_worker=1, retry_failed=False,
               progress=True, on_night_done=None):
    """Processes every night not yet in the catalogue on a dask cluster; returns a
    SurveySummary. See wvr.survey.survey for the arguments."""
    started = time.perf_counter()
    options = dict(options or {})
    check_options(options)
    canonical_options(options)  # refuses options JSON cannot hold, before any work
    paths = resolve_nights(nights, manifests)
    check_input_options(paths, options)
    with Catalogue(catalogue) as cat:
        done = {}  # {options JSON: {content_sha256: status}}
        skip = _DONE if retry_failed else _DONE + ("failed",)
        todo = []
        for path in paths:
            path_options = canonical_options(options_for(path, options))
            if path_options not in done:
                done[path_options] = cat.statuses(path_options)
            sha = content_sha256(path)
            if done[path_options].get(sha) not in skip:
                todo.append((path, sha))
        summary = SurveySummary(nights=len(paths), skipped=len(paths) - len(todo), processed=0,
                                ok=0, failed=0, wall_s=0.0, processing_s=0.0, failures=[])
        if todo:
            _run(cat, todo, options, summary, scheduler_address, workers, threads_per_worker,
                 progress, on_night_done)
    summary.wall_s = time.perf_counter() - started
    return summary


def _run(cat, todo, options, summary, scheduler_address, workers, threads_per_worker, progress,
         on_night_done):
    from distributed import as_completed
    from tqdm import tqdm

    client, cluster = _client(scheduler_address, workers, threads_per_worker)
    bar = tqdm(total=len(todo), unit="night", disable=not progress, file=sys.stderr,
               dynamic_ncols=True)
    try:
        # One task per night, each with its own key (content and position) so that two files
        # with equal content still get their own task; pure=False: never served from a cache.
        futures = {}
        for index, (path, sha) in enumerate(todo):
            future = client.submit(process_one, str(path), options, sha, threads_per_worker,
                                   key=f"night-{index}-{sha[:16]}", pure=False)
            futures[future] = (path, sha)
        for future in as_completed(futures):
            path, sha = futures[future]
            try:
                row = future.result()
            except Exception as error:  # noqa: BLE001  e.g. the night killed its workers
                row = _lost_row(path, sha, options, error)
            cat.record(row)
            summary.processed += 1
            summary.processing_s += row.get("processing_s") or 0.0
            if row["status"] == "ok":
                summary.ok += 1
            else:
                summary.failed += 1
                summary.failures.append((str(path), row["error"]))
            bar.set_postfix(ok=summary.ok, failed=summary.failed, refresh=False)
            bar.update(1)
            if on_night_done is not None:
                on_night_done(row)
    finally:
        bar.close()
        client.close()
        if cluster is not None:
            cluster.close()


def _lost_row(path, sha, options, error):
    import wvr

    return {
        "path": str(path), "night_name": path.stem, "content_sha256": sha,
        "options_json": canonical_options(options_for(path, options)),
        "software_version": wvr.__version__,
        "status": "failed", "error": f"{type(error).__name__}: {error}",
    }

