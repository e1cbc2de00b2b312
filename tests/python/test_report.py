"""The night report (wvr.report): figures, numbers traced to the JSON summary, bad nights."""
import base64
import decimal
import html.parser
import json
import math
import os
import pathlib
import re
import struct
import subprocess
import sys

import numpy as np
import pytest

import wvr
import wvr.report

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")
TESTDATA = pathlib.Path(os.environ.get("WVR_TESTDATA_DIR")
                        or pathlib.Path(__file__).resolve().parent.parent.parent / "testdata")
SITE = TESTDATA / "sites" / "demo-site.toml"
FIGURES = ("pwv", "phases", "timeline", "structure", "antennas")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


# ---------------------------------------------------------------- reading the page back


class _Page(html.parser.HTMLParser):
    """Images and data-json elements (path, text) of a report page, and its visible text."""

    def __init__(self):
        super().__init__()
        self.images, self.tagged, self.text = [], [], []
        self._open = []  # [path, text parts, depth] of data-json elements being read

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "img":
            self.images.append(attrs)
        for entry in self._open:
            entry[2] += 1
        if "data-json" in attrs:
            self._open.append([attrs["data-json"], [], 0])

    def handle_endtag(self, tag):
        if self._open and self._open[-1][2] == 0:
            path, parts, _ = self._open.pop()
            self.tagged.append((path, "".join(parts)))
        for entry in self._open:
            entry[2] -= 1

    def handle_data(self, data):
        self.text.append(data)
        for entry in self._open:
            entry[1].append(data)


def read_page(folder):
    page = _Page()
    page.feed((folder / "index.html").read_text(encoding="utf-8"))
    page.visible = re.sub(r"\s+", " ", "".join(page.text))
    return page


def lookup(document, path):
    node = document
    for part in path.split("."):
        node = node[int(part)] if isinstance(node, list) else node[part]
    return node


def assert_shown(text, value, path):
    """The text shows the JSON value to its displayed precision (half a unit of its last
    digit)."""
    if value is None:
        assert text == "n/a", path
    elif isinstance(value, bool):
        assert text == ("yes" if value else "no"), path
    elif isinstance(value, (int, float)):
        assert text != "n/a", f"{path}: finite {value} shown as n/a"
        shown = decimal.Decimal(text)
        tolerance = 0.5 * 10.0 ** shown.as_tuple().exponent
        assert abs(float(shown) - value) <= tolerance * (1 + 1e-9), (path, text, value)
    else:
        assert text == str(value), path


def png_size(data):
    assert data[:8] == PNG_SIGNATURE
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def check_report(folder, summary):
    """Everything a report folder must hold, whatever the night; returns (page, document)."""
    document = json.loads((folder / "summary.json").read_text())
    for key, value in summary.items():  # the summary is copied unchanged, only enriched
        assert document[key] == value, key
    page = read_page(folder)
    assert len(page.images) == len(FIGURES)
    for image, name in zip(page.images, FIGURES):
        prefix = "data:image/png;base64,"
        assert image["src"].startswith(prefix), name
        data = base64.b64decode(image["src"][len(prefix):], validate=True)
        width, height = png_size(data)
        assert width > 300 and height > 100, name
        assert (folder / f"{name}.png").read_bytes() == data, name
    paths = [path for path, _ in page.tagged]
    for path, text in page.tagged:
        assert_shown(text, lookup(document, path), path)
    for key in summary["summary"]:
        if key != "verdict_counts":
            assert f"summary.{key}" in paths, key
    for verdict in summary["summary"]["verdict_counts"]:
        assert f"summary.verdict_counts.{verdict}" in paths, verdict
    for k, window in enumerate(summary["windows"]):
        for key in ("start_s", "stop_s", "verdict", "reason"):
            assert f"windows.{k}.{key}" in paths, (k, key)
        for name in window["numbers"]:
            assert f"windows.{k}.numbers.{name}" in paths, (k, name)
    for k in range(len(summary.get("notes", []))):
        assert f"notes.{k}" in paths
    for name in document["report"]["not_available"]:
        assert f"report.not_available.{name}" in paths
    return page, document


def run_report(night_path, summary_path, folder):
    result = subprocess.run(
        [sys.executable, "-m", "wvr.report", str(night_path), "--summary", str(summary_path),
         "-o", str(folder)], capture_output=True, text=True, timeout=300)
    return result


# ---------------------------------------------------------------- nights


@pytest.fixture(scope="module")
def night(tmp_path_factory):
    scenario = wvr.load_scenario(TESTDATA / "demo-scenario.toml").with_overrides(
        duration_s=1200.0, antenna_count=8)
    return wvr.simulate_night(scenario)


def variant(night, kind):
    """A copy of `night` with its calibrator scans removed, only its first antenna kept, or
    every radiometer sample marked invalid."""
    d = night.to_dict()
    d.pop("results", None)
    if kind == "no calibrator scans":
        d["scans"] = [s for s in d["scans"] if s["intent"] != "calibrator"]
        d["calibrator_phases"] = {k: v[:0] for k, v in d["calibrator_phases"].items()}
    elif kind == "single antenna":
        for key in ("position_enu_m", "brightness_k", "elevation_deg", "azimuth_deg", "valid"):
            d[key] = d[key][:1]
        d["antenna_names"] = d["antenna_names"][:1]
        d["radiometer_ids"] = d["radiometer_ids"][:1]
        d["calibrator_phases"] = {k: v[:0] for k, v in d["calibrator_phases"].items()}
        d["truth"] = None
    elif kind == "all radiometers invalid":
        d["valid"] = np.zeros_like(d["valid"])
    return wvr.Night.from_arrays(**d)


def handmade_summary(night_path, night):
    """A summary in the schema of skyphase diagnose, with numbers derived from the night, for
    the tests that do not need the command."""
    verdicts = ["corrected", "quiet sky", "dry turbulence", "cloud", "radiometer fault",
                "scale off", "cannot judge"]
    windows, counts = [], {}
    phases = night.calibrator_phases
    for k, scan in enumerate(night.scans):
        verdict = verdicts[k % len(verdicts)]
        counts[verdict] = counts.get(verdict, 0) + 1
        rows = (phases["time_s"] >= scan["start_s"]) & (phases["time_s"] < scan["stop_s"])
        rms_deg = float(np.degrees(np.std(phases["phase_rad"][rows]))) if rows.any() else None
        windows.append({
            "start_s": scan["start_s"], "stop_s": scan["stop_s"], "kind": scan["intent"],
            "verdict": verdict, "inherited": scan["intent"] == "target",
            "reason": f"scan {k} <{scan['source']}> & neighbours",
            "antennas": [{"antenna": night.antenna_names[k % night.antenna_count],
                          "faults": "spikes"}] if verdict == "radiometer fault" else [],
            "numbers": {"phase_rms_before_deg": rms_deg, "phase_rms_after_deg": None,
                        "floor_deg": 1.23456e-4, "improvement_factor": 3.0 + k,
                        "correlation": 0.987654, "slope": 1.0 + 0.01 * k,
                        "radiometer_path_rms_um": 123456.789, "chi2_per_dof": 1.5}})
    separation_m = [20.0, 50.0, 100.0, 200.0, 400.0]
    fit = {"amplitude_m2": 1e-8, "alpha_short": 5.0 / 3.0, "alpha_long": 2.0 / 3.0,
           "break_m": 100.0, "transition_width": 0.5, "saturation_m2": 0.0}
    return {
        "night": str(night_path), "output": str(night_path),
        "antennas": list(night.antenna_names),
        "summary": {"windows": len(windows), "verdict_counts": counts, "scale": 0.987,
                    "scale_sigma": 0.0123, "phase_rms_before_deg": 19.4677,
                    "phase_rms_after_deg": 3.6725, "improvement_factor": 5.3009,
                    "coherence_before": 0.94391, "coherence_after": 0.99795},
        "windows": windows,
        "thresholds": {"cloud_chi2_per_dof": 6.0, "dry_floor_ratio": 2.0},
        "notes": ["target scans have no phases of their own"],
        "structure_function": {"radiometer": {
            "separation_m": separation_m,
            "structure_m2": [float(v) for v in wvr.report.broken_power_law_m2(separation_m, fit)],
            "fit": fit}},
        "wind_speed_m_s": 8.25, "wind_direction_deg": None,
    }


# ---------------------------------------------------------------- units


def test_format_value_is_consistent():
    assert wvr.report.format_value(None) == "n/a"
    assert wvr.report.format_value(float("nan")) == "n/a"
    assert wvr.report.format_value(True) == "yes"
    assert wvr.report.format_value(12) == "12"
    assert wvr.report.format_value(4.321987) == "4.322"
    assert wvr.report.format_value(0.0) == "0"
    assert wvr.report.format_value(123456.78) == "123456.8"
    assert wvr.report.format_value(1.5e-5) == "1.500e-05"
    assert wvr.report.format_value("cloud") == "cloud"


def test_broken_power_law_has_the_fitted_asymptotes():
    fit = {"amplitude_m2": 2e-8, "alpha_short": 5.0 / 3.0, "alpha_long": 2.0 / 3.0,
           "break_m": 300.0, "transition_width": 0.5}
    d = np.array([1.0, 2.0, 1e5, 2e5])
    value = wvr.report.broken_power_law_m2(d, fit)
    assert math.log(value[1] / value[0]) / math.log(2) == pytest.approx(5.0 / 3.0, abs=1e-3)
    assert math.log(value[3] / value[2]) / math.log(2) == pytest.approx(2.0 / 3.0, abs=1e-3)
    # At the break the smooth joint lies (alpha_long - alpha_short) w ln 2 above the asymptotes.
    at_break = wvr.report.broken_power_law_m2([300.0], fit)[0]
    assert at_break == pytest.approx(2e-8 * 2 ** (-0.5), rel=1e-12)
    saturated = wvr.report.broken_power_law_m2([1e9], dict(fit, saturation_m2=1e-6))[0]
    assert saturated == pytest.approx(1e-6, rel=1e-9)


# ---------------------------------------------------------------- pages from a hand-made summary


@pytest.fixture(scope="module")
def retrieved_night(night, tmp_path_factory):
    folder = tmp_path_factory.mktemp("retrieved")
    wvr.write_night(night, folder / "night.h5")
    retrieval = wvr.retrieve_night(night, wvr.load_site(SITE))
    wvr.add_result_group(folder / "night.h5", folder / "night-retrieved.h5",
                         retrieval.to_result_group(night))
    return folder / "night-retrieved.h5"


def test_report_of_a_retrieved_night_with_a_handmade_summary(night, retrieved_night, tmp_path):
    summary = handmade_summary(retrieved_night, night)
    (tmp_path / "summary-in.json").write_text(json.dumps(summary))
    result = run_report(retrieved_night, tmp_path / "summary-in.json", tmp_path / "report")
    assert result.returncode == 0, result.stderr
    assert result.stdout.strip() == str(tmp_path / "report" / "index.html")
    page, document = check_report(tmp_path / "report", summary)
    assert "structure_function.radiometer.fit.alpha_short" in [p for p, _ in page.tagged]
    assert "wind_speed_m_s" in [p for p, _ in page.tagged]
    # Without calibration and correction results the per-antenna figure says so; the PWV,
    # phase (uncorrected only), timeline and structure figures are drawn.
    assert set(document["report"]["not_available"]) == {"antennas"}
    assert "not available: the night has no correction results" in page.visible
    assert document["report"]["night"]["antenna_count"] == night.antenna_count
    assert document["report"]["night"]["channel_names"] == list(night.channel_names)
    assert document["report"]["night"]["duration_s"] == pytest.approx(
        night.time_s[-1] - night.time_s[0])
    # Reasons are escaped, not interpreted as markup.
    assert "<" + night.scans[0]["source"] + ">" in page.visible


def test_report_says_when_the_structure_function_is_missing(night, retrieved_night, tmp_path):
    summary = handmade_summary(retrieved_night, night)
    del summary["structure_function"]
    index = wvr.report.build_report(retrieved_night, summary, tmp_path)
    page, document = check_report(tmp_path, summary)
    assert index == tmp_path / "index.html"
    assert "structure" in document["report"]["not_available"]
    assert "not available: the summary has no structure function" in page.visible


@pytest.mark.parametrize("change, field", [
    (lambda s: s.pop("windows"), "'windows'"),
    (lambda s: s["windows"].pop(), "'windows' has"),
    (lambda s: s["windows"][0].pop("verdict"), "'windows.0.verdict'"),
])
def test_report_rejects_a_summary_that_does_not_fit(night, retrieved_night, tmp_path, change,
                                                   field):
    summary = handmade_summary(retrieved_night, night)
    change(summary)
    (tmp_path / "summary.json").write_text(json.dumps(summary))
    result = run_report(retrieved_night, tmp_path / "summary.json", tmp_path / "report")
    assert result.returncode == 2
    assert field in result.stderr and "summary" in result.stderr
    assert not (tmp_path / "report" / "index.html").exists()


def test_report_rejects_a_missing_night(tmp_path):
    (tmp_path / "summary.json").write_text(json.dumps({"summary": {}, "windows": []}))
    result = run_report(tmp_path / "absent.h5", tmp_path / "summary.json", tmp_path / "report")
    assert result.returncode == 2
    assert "absent.h5" in result.stderr


# ---------------------------------------------------------------- end to end with skyphase


def diagnose(night, folder):
    wvr.write_night(night, folder / "night.h5")
    result = subprocess.run(
        [SKYPHASE, "diagnose", str(folder / "night.h5"), "-o", str(folder / "diagnosed.h5"),
         "--site", str(SITE), "--format", "json"], capture_output=True, text=True, timeout=600)
    assert result.returncode == 0, result.stderr
    (folder / "summary.json").write_text(result.stdout)
    return folder / "diagnosed.h5", json.loads(result.stdout)


@pytest.mark.usefixtures("skyphase")
def test_report_of_a_diagnosed_night(night, tmp_path):
    diagnosed, summary = diagnose(night, tmp_path)
    result = run_report(diagnosed, tmp_path / "summary.json", tmp_path / "report")
    assert result.returncode == 0, result.stderr
    page, document = check_report(tmp_path / "report", summary)
    # A simulated night with calibrator scans on 8 antennas: every figure but possibly the
    # structure function (present only when the command reports it) is drawn.
    assert set(document["report"]["not_available"]) <= {"structure"}
    assert len(document["report"]["antennas"]) == night.antenna_count
    assert sum(summary["summary"]["verdict_counts"].values()) == len(night.scans)


@pytest.mark.usefixtures("skyphase")
@pytest.mark.parametrize("kind, figure, words", [
    ("no calibrator scans", "phases", "no calibrator phases"),
    ("single antenna", "phases", "single antenna"),
    ("all radiometers invalid", "pwv", "unusable"),
])
def test_report_of_a_bad_night_names_what_could_not_be_judged(night, tmp_path, kind, figure,
                                                              words):
    diagnosed, summary = diagnose(variant(night, kind), tmp_path)
    result = run_report(diagnosed, tmp_path / "summary.json", tmp_path / "report")
    assert result.returncode == 0, result.stderr
    page, document = check_report(tmp_path / "report", summary)
    reason = document["report"]["not_available"][figure]
    assert words in reason
    assert f"not available: {reason}" in page.visible
    # The command's own notes are on the page too.
    for note in summary["notes"]:
        assert note in page.visible
    if kind != "all radiometers invalid":
        assert summary["notes"], "the command names what it could not judge"
