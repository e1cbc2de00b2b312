"""Surveys: the night pipeline over many nights on a dask cluster, a catalogue of the results,
a season report and a season generator for the simulator.

Python::

    import wvr.survey
    summary = wvr.survey.survey(["nights/*.h5"], "season.sqlite")   # local cluster, 2 workers
    print(summary.text())
    wvr.survey.season_report("season.sqlite", "season-report/")      # index.html, season.json

Command line (``skyphase survey ...`` runs the same)::

    python3 -m wvr.survey run 'nights/*.h5' --catalogue season.sqlite [--scheduler tcp://host:8786]
    python3 -m wvr.survey report season.sqlite -o season-report/
    python3 -m wvr.survey generate season-spec.toml -o nights/

Each night is one task (:func:`process_one`): ``wvr.process_night`` in C++ with the GIL released,
reduced to one catalogue row. See :mod:`wvr.survey.catalogue` for the columns.
"""
from wvr.survey._inputs import SurveyInputError, canonical_options, content_sha256, resolve_nights
from wvr.survey._night_task import process_one
from wvr.survey._runner import SurveySummary, run_survey
from wvr.survey.catalogue import COLUMNS, Catalogue, CatalogueError


def survey(nights=(), catalogue="survey.sqlite", *, manifests=(), options=None,
           scheduler_address=None, workers=2, threads_per_worker=1, retry_failed=False,
           progress=True, on_night_done=None):
    """Runs the night pipeline over many nights and catalogues them; returns a SurveySummary.

    nights: night files, MeasurementSet directories or glob patterns; manifests: text files
    listing more (one per line). catalogue: the SQLite file (created if missing). options:
    wvr.process_night's options (window_s, per_antenna_scale, obs_freq_ghz, ...) plus
    site_file and thresholds_file, and for MeasurementSets wvr.import_measurement_set's
    arguments prefixed "ms_" (ms_brightness required; ms_radiometer_file for its radiometer).
    scheduler_address: an existing dask cluster's scheduler (e.g. "tcp://host:8786");
    None starts a local cluster of `workers` processes with `threads_per_worker` threads.
    Nights already catalogued with the same content and options are skipped (failed ones
    too, unless retry_failed). on_night_done(row) is called after each night is recorded.
    """
    return run_survey(nights, catalogue, manifests=manifests, options=options,
                      scheduler_address=scheduler_address, workers=workers,
                      threads_per_worker=threads_per_worker, retry_failed=retry_failed,
                      progress=progress, on_night_done=on_night_done)


def season_report(catalogue, directory):
    """Writes the season report (index.html with figures, season.json) of a catalogue; returns
    the path of index.html. See wvr.survey.season_report."""
    from wvr.survey.season_report import build_season_report

    return build_season_report(catalogue, directory)


__all__ = [
    "COLUMNS",
    "Catalogue",
    "CatalogueError",
    "SurveyInputError",
    "SurveySummary",
    "canonical_options",
    "content_sha256",
    "process_one",
    "resolve_nights",
    "run_survey",
    "season_report",
    "survey",
]
