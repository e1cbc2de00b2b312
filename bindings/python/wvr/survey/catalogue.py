"""The survey's catalogue: one SQLite row per night and set of options.

A night is identified by the SHA-256 of its file's bytes and the canonical JSON of the options
it was processed with; a rerun skips nights whose identity already has a row. Each finished
night is written in its own transaction, in write-ahead-log mode, so that killing the survey
(even with SIGKILL) loses only the nights still being processed.

Columns holding JSON (names ending in _json) are text that sqlite's json functions read, e.g.
``SELECT json_extract(verdict_fractions_json, '$."dry turbulence"') FROM nights``.
"""
import json
import sqlite3

import wvr

#: (name, SQL type, meaning with unit). Identity columns first.
COLUMNS = (
    ("content_sha256", "TEXT NOT NULL",
     "SHA-256 of the night file's bytes (of a MeasurementSet: its files' names and bytes)"),
    ("options_json", "TEXT NOT NULL", "processing options, canonical JSON"),
    ("path", "TEXT NOT NULL", "night file or MeasurementSet directory (absolute)"),
    ("night_name", "TEXT", "its name without extension"),
    ("status", "TEXT NOT NULL", "ok or failed"),
    ("error", "TEXT", "why the night failed (type: message)"),
    ("traceback", "TEXT", "where it failed"),
    ("software_version", "TEXT NOT NULL", "wvr.__version__ that processed it"),
    ("worker", "TEXT", "host:pid of the worker process"),
    ("processing_s", "REAL", "wall time of the night's task on its worker, s"),
    ("finished_utc", "TEXT NOT NULL", "when the row was written (UTC)"),
    ("start_utc", "TEXT", "the night's time epoch (UTC)"),
    ("duration_s", "REAL", "last minus first radiometer time, s"),
    ("antennas", "INTEGER", "antenna count"),
    ("pwv_p10_mm", "REAL", "10th percentile of retrieved PWV, mm"),
    ("pwv_median_mm", "REAL", "median retrieved PWV, mm"),
    ("pwv_p90_mm", "REAL", "90th percentile of retrieved PWV, mm"),
    ("pwv_timeline_json", "TEXT", "[[window start s, array median PWV mm], ...]"),
    ("calibration_status", "TEXT", "status of the scaling solve"),
    ("scale", "REAL", "radiometer-to-phase scale"),
    ("scale_sigma", "REAL", "its 1-sigma uncertainty"),
    ("phase_rms_before_deg", "REAL", "calibrator phase rms before correction, deg"),
    ("phase_rms_after_deg", "REAL", "after correction, deg"),
    ("improvement_factor", "REAL", "phase rms before / after"),
    ("coherence_before", "REAL", "calibrator coherence before correction"),
    ("coherence_after", "REAL", "after correction"),
    ("effective_fraction", "REAL", "fraction of diagnosed time with verdict 'corrected'"),
    ("verdict_fractions_json", "TEXT", "{verdict: fraction of diagnosed time}"),
    ("verdict_timeline_json", "TEXT", "[[start s, stop s, verdict], ...]"),
    ("radiometer_health_json", "TEXT", "{antenna: fraction of time its radiometer was faulty}"),
    ("faulty_radiometers_json", "TEXT", "[antennas with a faulty radiometer at any time]"),
    ("wind_speed_m_s", "REAL", "wind speed of the turbulent layer, m/s"),
    ("wind_speed_sigma_m_s", "REAL", "its 1-sigma uncertainty, m/s"),
    ("wind_direction_to_deg", "REAL", "direction the wind blows to, deg east of north"),
    ("slab_thickness_m", "REAL", "turbulent slab thickness, m"),
    ("slab_thickness_low_m", "REAL", "lower end of its interval, m"),
    ("slab_thickness_high_m", "REAL", "upper end of its interval, m"),
    ("notes_json", "TEXT", "notes of the night pipeline (defaults used, stages reused)"),
)
COLUMN_NAMES = tuple(name for name, _, _ in COLUMNS)


class CatalogueError(wvr.WvrValueError):
    """A catalogue file that is not one (or of an incompatible layout)."""


class Catalogue:
    """An open catalogue. Use as a context manager, or call close()."""

    def __init__(self, path):
        self.path = str(path)
        try:
            # Autocommit mode: every write below states its own transaction.
            self._db = sqlite3.connect(self.path, isolation_level=None, timeout=30.0)
            self._db.execute("PRAGMA journal_mode=WAL")
            self._db.execute("PRAGMA synchronous=NORMAL")
            self._create()
        except sqlite3.DatabaseError as error:
            raise CatalogueError(f"catalogue: {self.path} is not usable: {error}") from error

    def _create(self):
        columns = ",\n  ".join(f"{name} {kind}" for name, kind, _ in COLUMNS)
        self._db.execute(f"CREATE TABLE IF NOT EXISTS nights (\n  {columns},\n"
                         "  PRIMARY KEY (content_sha256, options_json))")
        present = {r[1] for r in self._db.execute("PRAGMA table_info(nights)")}
        missing = [n for n in COLUMN_NAMES if n not in present]
        if missing:
            raise CatalogueError(f"catalogue: {self.path} has no column(s) {', '.join(missing)}")

    def close(self):
        self._db.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def statuses(self, options_json):
        """{content_sha256: status} of the nights already catalogued with these options."""
        rows = self._db.execute(
            "SELECT content_sha256, status FROM nights WHERE options_json = ?", (options_json,))
        return dict(rows.fetchall())

    def record(self, row):
        """Writes one night's row in one transaction, replacing an earlier row of the same
        night and options (a retried failure)."""
        values = dict(row)
        values.setdefault("finished_utc", _utc_now())
        unknown = set(values) - set(COLUMN_NAMES)
        if unknown:
            raise CatalogueError(f"catalogue: unknown column(s) {', '.join(sorted(unknown))}")
        names = [n for n in COLUMN_NAMES if n in values]
        placeholders = ", ".join("?" for _ in names)
        with self._db:  # BEGIN ... COMMIT, or ROLLBACK on an exception
            self._db.execute("BEGIN IMMEDIATE")
            self._db.execute(
                f"INSERT OR REPLACE INTO nights ({', '.join(names)}) VALUES ({placeholders})",
                [values[n] for n in names])

    def rows(self, where="1", parameters=()):
        """Rows as dicts (JSON columns decoded), ordered by start time then path."""
        cursor = self._db.execute(
            f"SELECT {', '.join(COLUMN_NAMES)} FROM nights WHERE {where} "
            "ORDER BY start_utc, path", parameters)
        return [decode_row(dict(zip(COLUMN_NAMES, r))) for r in cursor.fetchall()]

    def count(self):
        return self._db.execute("SELECT COUNT(*) FROM nights").fetchone()[0]


def decode_row(row):
    """A row with its *_json columns parsed."""
    decoded = {}
    for name, value in row.items():
        if name.endswith("_json") and value is not None:
            decoded[name[:-5]] = json.loads(value)
        else:
            decoded[name] = value
    return decoded


def _utc_now():
    import datetime

    return datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
