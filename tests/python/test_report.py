"""The night report (wvr.report): data equal to the night pipeline's typed results, a page that
opens with what happened, figures, a report folder that appears whole or not at all."""
import base64
import decimal
import html.parser
import json
import os
import pathlib
import re
import signal
import struct
import subprocess
import sys
import time

import numpy as np
import pytest

import wvr
import wvr.report
from wvr.report import figures as report_figures

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")
TESTDATA = pathlib.Path(os.environ.get("WVR_TESTDATA_DIR")
                        or pathlib.Path(__file__).resolve().parent.parent.parent / "testdata")
SCENARIO = TESTDATA / "scenarios" / "short-eventful-night.toml"
FIGURES = ("pwv", "phases", "timeline", "structure", "antennas")
SECTIONS = {"schema", "title", "night", "site", "processing", "retrieval", "calibration",
            "correction", "verdict_counts", "episodes", "radiometer_faults", "antennas",
            "windows", "turbulence", "thresholds", "path_prediction"}
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


# ---------------------------------------------------------------- reading the page back


class _Page(html.parser.HTMLParser):
    """Title, images and data-json elements (path, text) of a report page, and the text of
    its opening paragraph and of the whole page."""

    def __init__(self):
        super().__init__()
        self.images, self.tagged, self.text, self.story, self.title = [], [], [], [], []
        self._open = []  # [path, text parts, depth] of data-json elements being read
        self._in_story = self._in_title = False

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "img":
            self.images.append(attrs)
        self._in_story = self._in_story or attrs.get("id") == "what-happened"
        self._in_title = tag == "title"
        for entry in self._open:
            entry[2] += 1
        if "data-json" in attrs:
            self._open.append([attrs["data-json"], [], 0])

    def handle_endtag(self, tag):
        if tag == "p":
            self._in_story = False
        self._in_title = False
        if self._open and self._open[-1][2] == 0:
            path, parts, _ = self._open.pop()
            self.tagged.append((path, "".join(parts)))
        for entry in self._open:
            entry[2] -= 1

    def handle_data(self, data):
        self.text.append(data)
        if self._in_story:
            self.story.append(data)
        if self._in_title:
            self.title.append(data)
        for entry in self._open:
            entry[1].append(data)


def read_page(folder):
    page = _Page()
    page.feed((folder / "index.html").read_text(encoding="utf-8"))
    page.visible = re.sub(r"\s+", " ", "".join(page.text))
    page.story_text = re.sub(r"\s+", " ", "".join(page.story))
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


def siblings(folder):
    """Everything beside `folder` whose name starts with its name (partial or old copies)."""
    return sorted(p.name for p in folder.parent.iterdir()
                  if p.name.lstrip(".").startswith(folder.name))


# ---------------------------------------------------------------- one processed night


@pytest.fixture(scope="module")
def scenario():
    return wvr.load_scenario(SCENARIO)


@pytest.fixture(scope="module")
def night(scenario):
    return wvr.simulate_night(scenario)


@pytest.fixture(scope="module")
def processed(night):
    return wvr.process_night(night)


@pytest.fixture(scope="module")
def data(night, processed, scenario):
    return wvr.report.report_data(night, processed, name=scenario.name)


@pytest.fixture(scope="module")
def report(night, processed, scenario, tmp_path_factory):
    """(folder, report.json) of the scenario night's report."""
    folder = tmp_path_factory.mktemp("report") / "night report"
    index = wvr.report.write_report(night, processed, folder, name=scenario.name)
    assert index == folder / "index.html"
    return folder, json.loads((folder / "report.json").read_text())


@pytest.fixture(scope="module")
def processed_night_file(night, processed, tmp_path_factory):
    """The night with its result groups, so that a report of it reuses the stored stages."""
    path = tmp_path_factory.mktemp("night") / "eventful-night.h5"
    with_results = night
    for group in processed.result_groups:
        with_results = with_results.with_result_group(group, replace=True)
    wvr.write_night(with_results, path)
    return path


# ---------------------------------------------------------------- data


def test_report_data_numbers_are_the_typed_results(data, night, processed):
    assert set(data) == SECTIONS
    json.dumps(data, allow_nan=False)  # plain JSON values only
    metrics, calibration = processed.metrics, processed.calibration
    correction = data["correction"]
    assert correction["phase_rms_before_deg"] == metrics.phase_rms_before_deg
    assert correction["phase_rms_after_deg"] == metrics.phase_rms_after_deg
    assert correction["improvement_factor"] == metrics.improvement_factor
    assert correction["coherence_after"] == metrics.coherence_after
    assert correction["obs_freq_ghz"] == processed.obs_freq_ghz
    assert data["calibration"]["scale"] == calibration.scale
    assert data["calibration"]["scale_sigma"] == calibration.scale_sigma
    assert data["calibration"]["per_antenna_scale"] == calibration.per_antenna_scale
    for key in ("antenna_scale_statistic", "antenna_scale_threshold"):  # NaN when forced: None
        value = getattr(calibration, key)
        assert data["calibration"][key] == (value if np.isfinite(value) else None), key
    summary = processed.retrieval.summary()
    assert set(data["retrieval"]) == set(summary) | {"coefficient_windows"}
    assert data["retrieval"]["pwv_median_mm"] == summary["pwv_median_mm"]
    assert data["retrieval"]["samples"] == summary["samples"]
    assert data["retrieval"]["path_sensitivity_k_per_mm"] == list(
        summary["path_sensitivity_k_per_mm"])
    windows = processed.diagnosis.windows
    assert len(data["windows"]) == len(windows) == len(night.scans)
    for row, window in zip(data["windows"], windows):
        assert (row["start_s"], row["stop_s"]) == (window.start_s, window.stop_s)
        assert row["verdict"] == window.verdict and row["reason"] == window.reason
        assert row["correction_usable"] == window.correction_usable
        assert row["numbers"]["phase_rms_after_deg"] == (
            window.rms_after_deg if np.isfinite(window.rms_after_deg) else None)
        flagged = np.flatnonzero(window.antenna_faults)
        assert [f["antenna"] for f in row["flagged_antennas"]] == [
            night.antenna_names[a] for a in flagged]
    assert sum(data["verdict_counts"].values()) == len(windows)
    for a, row in enumerate(data["antennas"]):
        assert row["antenna"] == night.antenna_names[a]
        assert row["phase_rms_after_deg"] == metrics.antenna_phase_rms_after_deg[a]
        assert row["scale"] == processed.corrections.antenna_scale[a]
    turbulence = data["turbulence"]
    for key in ("before", "after", "radiometer"):
        series, typed = turbulence["structure_functions"][key], getattr(processed.turbulence, key)
        assert series["measured"] == typed.measured, key
        assert series["separation_m"] == list(typed.points.separation), key
        assert series["value_m2"] == list(typed.points.value_m2), key
        assert series["fit"]["slope_short"] == typed.fit.slope_short, key
        assert series["fit"]["break_m"] == typed.fit.break_m, key
        assert series["fitted_m2"] == list(typed.fit.evaluate_m2(typed.points.separation)), key
    assert turbulence["wind"]["speed_m_s"] == processed.turbulence.wind.speed_m_s
    assert turbulence["slab"]["thickness_m"] == processed.turbulence.slab.fit.thickness_m
    assert data["thresholds"] == processed.diagnosis.thresholds.to_dict()


def test_episodes_cover_the_windows_in_order(data):
    covered = [k for e in data["episodes"] for k in e["windows"]]
    assert covered == list(range(len(data["windows"])))
    assert {e["verdict"] for e in data["episodes"] if e["correction_usable"]} == {"corrected"}
    for before, after in zip(data["episodes"], data["episodes"][1:]):
        assert before["verdict"] != after["verdict"]
        assert before["stop_s"] == after["start_s"]


# ---------------------------------------------------------------- the written report


def test_report_folder_holds_the_data_the_page_and_the_figures(report, data):
    folder, document = report
    assert sorted(p.name for p in folder.iterdir()) == sorted(
        ["index.html", "report.json"] + [f"{name}.png" for name in FIGURES])
    assert {k: v for k, v in document.items() if k != "figures"} == json.loads(json.dumps(data))
    assert [f["name"] for f in document["figures"]] == list(FIGURES)
    assert not [f for f in document["figures"] if f["not_available"]]
    page = read_page(folder)
    assert len(page.images) == len(FIGURES)
    for image, name in zip(page.images, FIGURES):
        prefix = "data:image/png;base64,"
        assert image["src"].startswith(prefix), name
        png = base64.b64decode(image["src"][len(prefix):], validate=True)
        width, height = png_size(png)
        assert width > 300 and height > 100, name
        assert (folder / f"{name}.png").read_bytes() == png, name
    for path, text in page.tagged:
        assert_shown(text, lookup(document, path), path)
    paths = {path for path, _ in page.tagged}
    for key in document["correction"]:
        assert f"correction.{key}" in paths, key
    for k, window in enumerate(document["windows"]):
        for key in ("start_utc", "stop_utc", "verdict", "reason"):
            assert f"windows.{k}.{key}" in paths, (k, key)
        for name in window["numbers"]:
            assert f"windows.{k}.numbers.{name}" in paths, (k, name)
    assert siblings(folder) == [folder.name]  # no partial or old copy left beside it


def test_title_names_the_night_not_its_file(report, scenario, processed_night_file):
    folder, document = report
    page = read_page(folder)
    assert document["title"] == f"Night report: {scenario.name}"
    assert "".join(page.title) == document["title"]
    assert ("title", document["title"]) in page.tagged


def test_opening_summary_tells_what_happened(report, night, processed):
    folder, document = report
    page = read_page(folder)
    story = page.story_text
    # It comes first, before the tables.
    assert page.visible.index(story[:40]) < page.visible.index("Episodes")
    assert f"{processed.metrics.phase_rms_before_deg:.3g} deg to " \
           f"{processed.metrics.phase_rms_after_deg:.3g} deg" in story
    assert "Correction worked in" in story
    # Every episode of the scenario's truth is named with its verdict and a time span that
    # overlaps it; the sick radiometer is named among the faulty ones.
    for episode in night.truth["episodes"]:
        if episode["antenna"] >= 0:
            name = night.antenna_names[episode["antenna"]]
            faults = story[story.index("Radiometers flagged as faulty"):]
            assert name in faults, (name, faults)
            flagged = [f for f in document["radiometer_faults"] if f["antenna"] == name]
            assert flagged and flagged[0]["start_s"] < episode["stop_s"]
            continue
        matching = [e for e in document["episodes"] if e["verdict"] == episode["label"]
                    and e["start_s"] < episode["stop_s"] and e["stop_s"] > episode["start_s"]]
        assert matching, (episode, [e["verdict"] for e in document["episodes"]])
        e = matching[0]
        assert f"{e['start_utc']} to {e['stop_utc']} ({e['verdict']}: " in story, episode


def test_structure_figure_labels_are_rounded_and_the_json_keeps_the_fit(report):
    folder, document = report
    fit = document["turbulence"]["structure_functions"]["radiometer"]["fit"]
    label = report_figures.rounded_fit_label("radiometer", fit)
    assert f"{fit['slope_short']:.1f}" in label and str(fit["slope_short"]) not in label
    for key in ("slope_short_sigma", "break_sigma_m", "amplitude_m2", "transition_width",
                "saturation_m2"):
        assert key in fit
    drawn = [s[0] for s in report_figures.STRUCTURE_SERIES]
    assert drawn == ["before", "after", "radiometer"]
    assert all(document["turbulence"]["structure_functions"][k]["measured"] for k in drawn)


# ---------------------------------------------------------------- nights that lack something


def variant(night, kind):
    """A copy of `night` without its result groups, and without its calibrator scans, with
    only its first antenna, or with every radiometer sample marked invalid."""
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


@pytest.fixture(scope="module")
def small_night():
    scenario = wvr.load_scenario(TESTDATA / "demo-scenario.toml").with_overrides(
        duration_s=1200.0, antenna_count=8)
    return wvr.simulate_night(scenario)


@pytest.mark.parametrize("kind, missing, words", [
    ("no calibrator scans", {"phases", "antennas"}, "no calibrator phases"),
    ("single antenna", {"phases", "structure", "antennas"}, "single antenna"),
])
def test_a_night_that_lacks_something_says_what_could_not_be_judged(small_night, kind, missing,
                                                                   words):
    night = variant(small_night, kind)
    processed = wvr.process_night(night)
    data = wvr.report.report_data(night, processed, name=kind)
    made = report_figures.render_all(night, processed, data)
    data["figures"] = [{"name": name, "file": f"{name}.png", "caption": caption,
                        "not_available": reason} for name, caption, _, reason in made]
    page = wvr.report.render_page(data, made)
    assert {f["name"] for f in data["figures"] if f["not_available"]} == missing
    reasons = " ".join(f["not_available"] or "" for f in data["figures"])
    assert words in reasons
    story = page[page.index('id="what-happened"'):page.index("</p>", page.index("what-happened"))]
    assert "could not be measured: the night has no usable calibrator phases" in story
    assert "n/a" not in story  # what is missing is said in words, not as blank numbers
    assert "It could not be judged from" in story


# ---------------------------------------------------------------- the output folder


def test_an_existing_directory_that_is_not_a_report_is_refused(night, processed, tmp_path):
    folder = tmp_path / "results"
    folder.mkdir()
    (folder / "notes.txt").write_text("mine")
    with pytest.raises(wvr.report.ReportOutputError, match="results.*is not a night report"):
        wvr.report.write_report(night, processed, folder, name="n")
    assert sorted(p.name for p in folder.iterdir()) == ["notes.txt"]
    assert siblings(folder) == ["results"]
    result = subprocess.run([sys.executable, "-m", "wvr.report", str(tmp_path / "absent.h5"),
                             "-o", str(folder)], capture_output=True, text=True, timeout=60)
    assert result.returncode == 2
    assert "is not a night report" in result.stderr and len(result.stderr.splitlines()) == 1


def test_a_missing_night_is_named_and_nothing_is_written(tmp_path):
    result = subprocess.run([sys.executable, "-m", "wvr.report", str(tmp_path / "absent.h5"),
                             "-o", str(tmp_path / "report")], capture_output=True, text=True,
                            timeout=60)
    assert result.returncode == 2
    assert "absent.h5" in result.stderr and len(result.stderr.splitlines()) == 1
    assert list(tmp_path.iterdir()) == []


def test_a_report_is_replaced_whole(report, processed_night_file, tmp_path):
    folder = tmp_path / "report"
    folder.mkdir()
    for path in report[0].iterdir():
        (folder / path.name).write_bytes(path.read_bytes())
    (folder / "stale.png").write_bytes(b"left over")
    result = subprocess.run([sys.executable, "-m", "wvr.report", str(processed_night_file),
                             "-o", str(folder)], capture_output=True, text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    assert not (folder / "stale.png").exists()  # a new folder, not the old one rewritten
    document = json.loads((folder / "report.json").read_text())
    assert document["title"] == "Night report: eventful-night"  # the file's stem
    assert document["processing"]["retrieval_reused"]
    assert siblings(folder) == ["report"]


def _children(pid):
    """Process ids whose parent is `pid`, zombies left out."""
    found = []
    for entry in pathlib.Path("/proc").iterdir():
        if not entry.name.isdigit():
            continue
        try:
            stat = (entry / "stat").read_text()
        except OSError:
            continue
        fields = stat[stat.rindex(")") + 2:].split()
        if int(fields[1]) == pid and fields[0] != "Z":
            found.append(int(entry.name))
    return found


def _alive(pid):
    try:
        stat = pathlib.Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return False
    return stat[stat.rindex(")") + 2] != "Z"


def _wait_for(condition, timeout_s, step_s=0.005):
    """Polls `condition` until it is true or `timeout_s` passed; returns its last value."""
    deadline = time.monotonic() + timeout_s
    while True:
        value = condition()
        if value or time.monotonic() > deadline:
            return value
        time.sleep(step_s)


@pytest.mark.usefixtures("skyphase")
def test_killing_skyphase_report_leaves_no_renderer_and_no_partial_output(
        processed_night_file, tmp_path):
    folder = tmp_path / "report"
    parent = subprocess.Popen([SKYPHASE, "report", str(processed_night_file), "-o", str(folder)],
                              stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        renderer = _wait_for(lambda: _children(parent.pid), 60)
        assert renderer, "skyphase report started no renderer"
        # Kill the command while the renderer is writing its partial folder.
        partial = _wait_for(lambda: [p for p in tmp_path.iterdir() if ".partial-" in p.name], 60)
        assert partial, f"no partial folder appeared (renderer status {parent.poll()})"
        parent.send_signal(signal.SIGKILL)
        parent.wait(timeout=10)
        assert _wait_for(lambda: not any(_alive(pid) for pid in renderer), 30), \
            "the renderer outlived skyphase"
        # A renderer that outlived skyphase would have finished the report.
        assert list(tmp_path.iterdir()) == [], "a partial or complete report was left"
    finally:
        if parent.poll() is None:
            parent.kill()


def test_sigterm_right_after_the_partial_directory_is_made_leaves_nothing(tmp_path, monkeypatch):
    """A SIGTERM that arrives the moment mkdtemp has made the partial directory (before the
    cleanup knows its name) still leaves no partial directory and no output."""
    from wvr.report import output as report_output

    made = []
    real_mkdtemp = report_output.tempfile.mkdtemp

    def mkdtemp_then_sigterm(*args, **kwargs):
        path = real_mkdtemp(*args, **kwargs)
        made.append(path)
        os.kill(os.getpid(), signal.SIGTERM)  # delivered as soon as it is not blocked
        return path

    monkeypatch.setattr(report_output.tempfile, "mkdtemp", mkdtemp_then_sigterm)
    with pytest.raises(SystemExit):
        with report_output.report_directory(tmp_path / "report") as partial:
            (partial / "index.html").write_text("never finished")
    assert made, "mkdtemp was not called"
    assert list(tmp_path.iterdir()) == [], "a partial or complete report was left"
