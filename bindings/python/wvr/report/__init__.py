"""Night report: one self-contained HTML page that shows site scientists how a night went.

A night is processed by the library's night pipeline (wvr.process_night; stages stored in
the night file are reused) and the report is made of its typed results in three steps:

- data (wvr.report.data.report_data): the report's numbers as plain JSON values, written as
  report.json;
- figures (wvr.report.figures): one matplotlib function per figure, PNGs beside the page;
- page (wvr.report.page.render_page): index.html with the figures embedded, opening with what
  happened in a few sentences with numbers.

The folder is built beside the output and renamed into place (wvr.report.output).

Usage::

    python3 -m wvr.report night.h5 -o report/

    import wvr.report
    index_html = wvr.report.report_night("night.h5", "report/")
    index_html = wvr.report.write_report(night, wvr.process_night(night), "report/",
                                         name="demo night")
"""
import json
import pathlib

import wvr
from wvr.report.data import SCHEMA, report_data
from wvr.report.figures import render_all
from wvr.report.output import ReportOutputError, check_output, report_directory
from wvr.report.page import format_value, render_page

__all__ = ["SCHEMA", "ReportOutputError", "format_value", "report_data", "report_night",
           "write_report"]


def write_report(night, processed, output, *, name, night_file=None):
    """Writes the report of `night` processed into `processed` (wvr.process_night's result)
    to the directory `output` and returns the path of its index.html. `name` names the night
    in the title. Raises ReportOutputError when `output` holds something else than a report."""
    data = report_data(night, processed, name=name, night_file=night_file)
    with report_directory(output) as folder:
        figures = render_all(night, processed, data)
        data["figures"] = [{"name": name_, "file": f"{name_}.png", "caption": caption,
                            "not_available": reason}
                           for name_, caption, _, reason in figures]
        for name_, _, png, _ in figures:
            (folder / f"{name_}.png").write_bytes(png)
        (folder / "report.json").write_text(json.dumps(data, indent=2, allow_nan=False),
                                            encoding="utf-8")
        (folder / "index.html").write_text(render_page(data, figures), encoding="utf-8")
    return pathlib.Path(output) / "index.html"


def report_night(night_path, output, *, name=None, **processing_options):
    """Processes the night file `night_path` with wvr.process_night(**processing_options) and
    writes its report to `output` (see write_report). `name` defaults to the file's stem.
    Checks the output before the processing, so that a refused output costs nothing."""
    check_output(output)
    night_path = pathlib.Path(night_path)
    night = wvr.read_night(night_path)
    processed = wvr.process_night(night, **processing_options)
    return write_report(night, processed, output, name=name or night_path.stem,
                        night_file=night_path.name)
