"""The night report's HTML page from its data (wvr.report.data) and figures.

The page opens with what happened, in sentences with numbers, then the tables and figures.
Every number or data value on it is printed by format_value inside an element whose
``data-json`` attribute is its path in report.json (keys and list indices joined by dots, e.g.
``correction.improvement_factor`` or ``episodes.2.start_utc``), so that the page can be
checked against the file.
"""
import base64
import html
import math

from wvr.report.data import OUTSIDE_DOMAIN_VERDICT, UNJUDGED_VERDICT
from wvr.report.figures import UNKNOWN_VERDICT_COLOUR, VERDICT_COLOURS

__all__ = ["format_value", "render_page"]

_STYLE = """
body { font-family: sans-serif; margin: 1.5em; max-width: 70em; color: #222; }
p.story { font-size: 1.08em; line-height: 1.45; }
table { border-collapse: collapse; margin: 0.5em 0; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.5em; text-align: left; vertical-align: top; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
.swatch { display: inline-block; width: 0.9em; height: 0.9em; margin-right: 0.3em;
          vertical-align: middle; border: 1px solid #888; }
.unavailable { color: #a00; font-weight: bold; }
figure { margin: 1em 0; } img { max-width: 100%; }
"""


def format_value(value):
    """The text the page shows for one JSON value: "n/a" for null or non-finite numbers,
    "yes"/"no" for booleans, integers in full, floats to 4 significant digits (1 decimal from
    10^4 up to 10^7, scientific notation outside 10^-3 .. 10^7), strings as they are."""
    if value is None:
        return "n/a"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            return "n/a"
        magnitude = abs(value)
        if value == 0.0:
            return "0"
        if 1e-3 <= magnitude < 1e4:
            return f"{value:.4g}"
        if 1e4 <= magnitude < 1e7:
            return f"{value:.1f}"
        return f"{value:.3e}"
    return str(value)


def _lookup(document, path):
    node = document
    for part in path.split("."):
        node = node[int(part)] if isinstance(node, list) else node[part]
    return node


class _Tags:
    """Prints values of one document as data-json elements."""

    def __init__(self, document):
        self.document = document

    def __call__(self, path, element="span", digits=None):
        """`digits`: significant digits of a float (the sentences round harder than tables)."""
        value = _lookup(self.document, path)
        text = format_value(value)
        if digits is not None and isinstance(value, float) and text != "n/a" and value != 0.0:
            text = f"{value:.{digits}g}"
        return (f'<{element} data-json="{html.escape(path)}">'
                f"{html.escape(text)}</{element}>")


def _swatch(verdict):
    colour = VERDICT_COLOURS.get(verdict, UNKNOWN_VERDICT_COLOUR)
    return f'<span class="swatch" style="background:{colour}"></span>'


def _join(parts):
    if len(parts) <= 1:
        return "".join(parts)
    return ", ".join(parts[:-1]) + " and " + parts[-1]


def _plural(count, word):
    return f"{count} {word}" + ("" if count == 1 else "s")


# ---------------------------------------------------------------- what happened


def _story(d, tag):
    """The opening paragraph: the night, the correction overall, where it worked, where and why
    it did not, and which radiometers failed. Numbers to 3 significant digits."""
    def num(path):
        return tag(path, digits=3)

    night = d["night"]
    sentences = [
        f"{html.escape(night['name'])}: {_plural_tag(tag, 'night.antenna_count', 'antenna')} "
        f"observed from {tag('night.start_utc')} to {tag('night.stop_utc')} UTC on "
        f"{tag('night.date_utc')} in {_plural_tag(tag, 'night.scan_count', 'scan')}; "]
    if d["retrieval"]["pwv_median_mm"] is not None:
        sentences[0] += (f"the median PWV was {num('retrieval.pwv_median_mm')} mm (10-90 %: "
                         f"{num('retrieval.pwv_p10_mm')} to {num('retrieval.pwv_p90_mm')} mm).")
    else:
        sentences[0] += "no usable PWV was retrieved."
    sentences.append(_correction_sentence(d, tag, num))
    episodes = d["episodes"]
    working = [k for k, e in enumerate(episodes) if e["correction_usable"]]
    unjudged = [k for k, e in enumerate(episodes) if e["verdict"] == UNJUDGED_VERDICT]
    # No radiometer path at all (the source set below the retrieval's elevation limit, say):
    # the correction was not tried, which is neither a failure nor missing evidence.
    outside = [k for k, e in enumerate(episodes) if e["verdict"] == OUTSIDE_DOMAIN_VERDICT]
    failing = [k for k, e in enumerate(episodes)
               if not e["correction_usable"] and k not in unjudged and k not in outside]
    if not episodes:
        sentences.append("No window could be judged: the night has no scans.")
    if working:
        parts = []
        for k in working:
            p = f"episodes.{k}"
            part = f"{tag(p + '.start_utc')} to {tag(p + '.stop_utc')} ({tag(p + '.verdict')}"
            if episodes[k]["median_phase_rms_after_deg"] is not None:
                part += (f", median rms {num(p + '.median_phase_rms_before_deg')} to "
                         f"{num(p + '.median_phase_rms_after_deg')} deg")
            parts.append(part + ")")
        count = sum(episodes[k]["window_count"] for k in working)
        sentences.append(f"Correction worked in {count} of "
                         f"{_plural(len(d['windows']), 'window')}: {_join(parts)} UTC.")
    for indices, opening in ((failing, "It did not work from"),
                             (outside, "The retrieval gave no radiometer path from"),
                             (unjudged, "It could not be judged from")):
        if indices:
            parts = [f"{tag(f'episodes.{k}.start_utc')} to {tag(f'episodes.{k}.stop_utc')} "
                     f"({tag(f'episodes.{k}.verdict')}: {tag(f'episodes.{k}.reason')})"
                     for k in indices]
            sentences.append(f"{opening} {_join(parts)} UTC.")
    if episodes and not failing and not unjudged and not outside:
        sentences.append("It worked in every window.")
    sentences.append(_faults_sentence(d, tag))
    return '<p class="story" id="what-happened">' + " ".join(s for s in sentences if s) + "</p>"


def _scaling_clause(calibration, tag, num):
    """Which scaling the solve kept and, when the data chose it, the test's numbers."""
    kept = "one per antenna" if calibration["per_antenna_scale"] else "one for the array"
    if calibration["antenna_scale_statistic"] is None:
        return f" ({kept}, as asked)"
    return (f" ({kept}: the per-antenna fit's test statistic "
            f"{num('calibration.antenna_scale_statistic')} against the threshold "
            f"{num('calibration.antenna_scale_threshold')})")


def _correction_sentence(d, tag, num):
    correction, calibration = d["correction"], d["calibration"]
    if correction is None:
        return "The night was not corrected, so no phase numbers are given."
    if calibration is not None and not calibration["ok"]:
        scale = (f" The scaling solve found no scale ({tag('calibration.status')}: "
                 f"{tag('calibration.message')}; scale left at {num('calibration.scale')}).")
    elif calibration is not None:
        scale = (f" with a path-to-phase scale of {num('calibration.scale')} "
                 f"&plusmn; {tag('calibration.scale_sigma', digits=2)}"
                 f"{_scaling_clause(calibration, tag, num)}")
    else:
        scale = ""
    if correction["phase_rms_before_deg"] is None or correction["phase_rms_after_deg"] is None:
        return ("The correction's effect could not be measured: the night has no usable "
                "calibrator phases." + (scale if scale.startswith(" The") else ""))
    sentence = (
        f"Over the night the radiometer correction{'' if scale.startswith(' The') else scale} "
        f"brought the calibrator phase rms from {num('correction.phase_rms_before_deg')} deg to "
        f"{num('correction.phase_rms_after_deg')} deg (a factor "
        f"{num('correction.improvement_factor')}; coherence "
        f"{num('correction.coherence_before')} to {num('correction.coherence_after')}).")
    return sentence + (scale if scale.startswith(" The") else "")


def _plural_tag(tag, path, word):
    count = _lookup(tag.document, path)
    return f"{tag(path)} {word}" + ("" if count == 1 else "s")


def _faults_sentence(d, tag):
    """Which radiometers were flagged; antennas flagged alike (same faults, same windows) are
    named together."""
    faults = d["radiometer_faults"]
    if not faults:
        return "No radiometer was flagged." if d["windows"] else ""
    groups = {}
    for k, f in enumerate(faults):
        key = (f["faults"], f["window_count"], f["start_s"], f["stop_s"])
        groups.setdefault(key, []).append(k)
    parts = []
    for members in groups.values():
        first = f"radiometer_faults.{members[0]}"
        count = faults[members[0]]["window_count"]
        names = _join([tag(f"radiometer_faults.{k}.antenna") for k in members])
        parts.append(f"{names} ({tag(first + '.faults')}; flagged in "
                     f"{tag(first + '.window_count')} window{'' if count == 1 else 's'} from "
                     f"{tag(first + '.start_utc')} to {tag(first + '.stop_utc')} UTC)")
    verb = "was" if len(faults) == 1 else "were"
    return (f"Radiometers flagged as faulty: {'; '.join(parts)}. "
            f"{'It' if len(faults) == 1 else 'They'} {verb} left out of the array's verdicts "
            "in the windows where flagged.")


# ---------------------------------------------------------------- tables


def _rows(tag, section, labels):
    out = []
    for key, label in labels:
        out.append(f'<tr><th>{html.escape(label)}</th><td class="num">{tag(f"{section}.{key}")}'
                   "</td></tr>")
    return "<table>" + "".join(out) + "</table>"


def _scalar_paths(node, path):
    """Paths of every scalar leaf under a JSON node; lists of numbers are left to the JSON."""
    if isinstance(node, dict):
        for key, child in node.items():
            yield from _scalar_paths(child, f"{path}.{key}")
    elif isinstance(node, list):
        if not all(isinstance(v, (int, float)) or v is None for v in node):
            for k, child in enumerate(node):
                yield from _scalar_paths(child, f"{path}.{k}")
    else:
        yield path


def _key_value_table(tag, document, root):
    """Every scalar under the node at path `root`, with its path below `root` as the label."""
    paths = list(_scalar_paths(_lookup(document, root), root))
    body = "".join(f"<tr><th>{html.escape(p[len(root) + 1:])}</th>"
                   f'<td class="num">{tag(p)}</td></tr>' for p in paths)
    return f"<table>{body}</table>"


def _episodes_table(d, tag):
    out = ["<table><tr><th>from (UTC)</th><th>to (UTC)</th><th>verdict</th><th>windows</th>"
           "<th>median rms before (deg)</th><th>median rms after (deg)</th>"
           "<th>median improvement</th><th>reason</th></tr>"]
    for k, e in enumerate(d["episodes"]):
        p = f"episodes.{k}"
        out.append(
            f"<tr><td>{tag(p + '.start_utc')}</td><td>{tag(p + '.stop_utc')}</td>"
            f"<td>{_swatch(e['verdict'])}{tag(p + '.verdict')}</td>"
            f'<td class="num">{tag(p + ".window_count")}</td>'
            f'<td class="num">{tag(p + ".median_phase_rms_before_deg")}</td>'
            f'<td class="num">{tag(p + ".median_phase_rms_after_deg")}</td>'
            f'<td class="num">{tag(p + ".median_improvement_factor")}</td>'
            f"<td>{tag(p + '.reason')}</td></tr>")
    out.append("</table>")
    return "".join(out)


def _faults_table(d, tag):
    if not d["radiometer_faults"]:
        return "<p>No radiometer was flagged in any window.</p>"
    out = ["<table><tr><th>antenna</th><th>faults</th><th>windows flagged</th>"
           "<th>from (UTC)</th><th>to (UTC)</th></tr>"]
    for k in range(len(d["radiometer_faults"])):
        p = f"radiometer_faults.{k}"
        out.append(f"<tr><td>{tag(p + '.antenna')}</td><td>{tag(p + '.faults')}</td>"
                   f'<td class="num">{tag(p + ".window_count")}</td>'
                   f"<td>{tag(p + '.start_utc')}</td><td>{tag(p + '.stop_utc')}</td></tr>")
    out.append("</table>")
    return "".join(out)


def _antennas_table(d, tag):
    if d["correction"] is None:
        return '<p class="unavailable">Not available: the night was not corrected.</p>'
    keys = ("phase_rms_before_deg", "phase_rms_after_deg", "scale", "windows_flagged")
    out = ["<table><tr><th>antenna</th>"
           + "".join(f"<th>{k.replace('_', ' ')}</th>" for k in keys) + "</tr>"]
    for k in range(len(d["antennas"])):
        p = f"antennas.{k}"
        out.append(f"<tr><td>{tag(p + '.antenna')}</td>"
                   + "".join(f'<td class="num">{tag(f"{p}.{key}")}</td>' for key in keys)
                   + "</tr>")
    out.append("</table>")
    return "".join(out)


_PREDICTION_COLUMNS = (("predicted_samples", "predicted samples"),
                       ("frozen_flow_samples", "by frozen flow"),
                       ("expected_residual_um", "expected residual (um)"),
                       ("expected_residual_deg", "expected residual (deg)"),
                       ("expected_phase_rms_after_deg", "expected rms after (deg)"),
                       ("phase_rms_after_deg", "measured rms after (deg)"))


def _path_prediction_table(d, tag):
    """Antennas whose radiometer gave no samples, corrected with a predicted path."""
    out = [f"<p>Predicted by {tag('path_prediction.method')}; the healthy antennas' corrected "
           f"calibrator phase rms is {tag('path_prediction.healthy_phase_rms_after_deg')} deg "
           f"(median of {tag('path_prediction.healthy_antennas')}); phases at "
           f"{tag('path_prediction.freq_ghz')} GHz. {tag('path_prediction.message')}</p>",
           "<table><tr><th>antenna</th>"
           + "".join(f"<th>{html.escape(label)}</th>" for _, label in _PREDICTION_COLUMNS)
           + "</tr>"]
    for k in range(len(d["path_prediction"]["antennas"])):
        p = f"path_prediction.antennas.{k}"
        out.append(f"<tr><td>{tag(p + '.antenna')}</td>"
                   + "".join(f'<td class="num">{tag(f"{p}.{key}")}</td>'
                             for key, _ in _PREDICTION_COLUMNS)
                   + "</tr>")
    out.append("</table>")
    return "".join(out)


_WINDOW_NUMBERS = ("phase_rms_before_deg", "phase_rms_after_deg", "floor_deg",
                   "improvement_factor", "correlation", "slope", "radiometer_path_rms_um",
                   "chi2_per_dof")


def _windows_table(d, tag):
    windows = d["windows"]
    out = [f"<details><summary>{_plural(len(windows), 'window')}</summary>"]
    if not windows:
        out.append('<p class="unavailable">Not available: the night has no scans.</p>')
        return "".join(out) + "</details>"
    out.append("<table><tr><th>from (UTC)</th><th>to (UTC)</th><th>kind</th><th>verdict</th>"
               "<th>inherited</th>"
               + "".join(f"<th>{n.replace('_', ' ')}</th>" for n in _WINDOW_NUMBERS)
               + "<th>flagged antennas</th><th>reason</th></tr>")
    for k, w in enumerate(windows):
        p = f"windows.{k}"
        cells = [f"<td>{tag(p + '.start_utc')}</td>", f"<td>{tag(p + '.stop_utc')}</td>",
                 f"<td>{tag(p + '.kind')}</td>",
                 f"<td>{_swatch(w['verdict'])}{tag(p + '.verdict')}</td>",
                 f"<td>{tag(p + '.inherited')}</td>"]
        cells += [f'<td class="num">{tag(f"{p}.numbers.{n}")}</td>' for n in _WINDOW_NUMBERS]
        flagged = [f"{tag(f'{p}.flagged_antennas.{a}.antenna')} "
                   f"({tag(f'{p}.flagged_antennas.{a}.faults')})"
                   for a in range(len(w["flagged_antennas"]))]
        cells.append(f"<td>{'; '.join(flagged)}</td>")
        cells.append(f"<td>{tag(p + '.reason')}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</table></details>")
    return "".join(out)


def _figure_html(number, figure):
    name, caption, png, reason = figure
    data = base64.b64encode(png).decode("ascii")
    text = f"Figure {number}. {html.escape(caption)}"
    if reason:
        text += f' <span class="unavailable">Not available: {html.escape(reason)}.</span>'
    return (f'<figure id="figure-{name}"><img src="data:image/png;base64,{data}" '
            f'alt="{html.escape(caption)}" data-file="{name}.png">'
            f"<figcaption>{text}</figcaption></figure>")


def render_page(d, figures):
    """The HTML page of report data `d` (with its "figures" entry) and figures
    [(name, caption, png bytes, reason or None)]."""
    tag = _Tags(d)
    title = html.escape(d["title"])
    out = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
           f"<title>{title}</title>", f"<style>{_STYLE}</style></head><body>",
           f"<h1>{tag('title')}</h1>", "<h2>What happened</h2>", _story(d, tag)]
    notes = d["processing"]["notes"]
    unavailable = [k for k, f in enumerate(d["figures"]) if f["not_available"]]
    out.append('<h2 id="not-judged">What could not be judged</h2>')
    if notes or unavailable:
        out.append("<ul>")
        out += [f"<li>{tag(f'processing.notes.{k}')}</li>" for k in range(len(notes))]
        out += [f'<li class="unavailable">{tag(f"figures.{k}.name")}: not available: '
                f"{tag(f'figures.{k}.not_available')}</li>" for k in unavailable]
        out.append("</ul>")
    else:
        out.append("<p>Everything could be judged.</p>")
    out.append("<h2>Episodes</h2>" + _episodes_table(d, tag))
    out.append("<h2>Radiometer faults</h2>" + _faults_table(d, tag))
    out.append("<h2>Night</h2>" + _rows(tag, "night", (
        ("epoch_utc", "epoch (UTC)"), ("duration_s", "duration (s)"), ("sample_count", "samples"),
        ("valid_sample_fraction", "usable samples (fraction)"),
        ("antenna_count", "antennas"), ("scan_count", "scans"),
        ("calibrator_scan_count", "calibrator scans"))))
    out.append("<h3>Site</h3>" + _rows(tag, "site", (("name", "site"),
                                                     ("description", "site model"))))
    out.append("<h2>Correction</h2>")
    if d["correction"] is not None:
        out.append(_key_value_table(tag, d, "correction"))
    if d["path_prediction"] is not None:
        out.append("<h3>Antennas corrected with a predicted path</h3>"
                   + _path_prediction_table(d, tag))
    if d["calibration"] is not None:
        out.append("<h3>Calibration</h3>" + _key_value_table(tag, d, "calibration"))
    out.append("<h3>Retrieval</h3>" + _key_value_table(tag, d, "retrieval"))
    out.append("<h3>Verdicts</h3><table>")
    for verdict in d["verdict_counts"]:
        out.append(f"<tr><th>{_swatch(verdict)}{html.escape(verdict)}</th><td class=\"num\">"
                   f"{tag('verdict_counts.' + verdict)}</td></tr>")
    out.append("</table>")
    out.append("<h2>Figures</h2>")
    out += [_figure_html(k, figure) for k, figure in enumerate(figures, start=1)]
    out.append("<h2>Antennas</h2>" + _antennas_table(d, tag))
    out.append("<h2>Windows</h2>" + _windows_table(d, tag))
    if d["turbulence"] is not None:
        for key, title_text in (("wind", "Wind"), ("slab", "Slab thickness"),
                                ("switching", "Fast-switching advice")):
            if d["turbulence"][key] is not None:
                out.append(f"<h2>{title_text}</h2>" + _key_value_table(tag, d, f"turbulence.{key}"))
    if d["thresholds"] is not None:
        out.append("<h2>Thresholds</h2>" + _key_value_table(tag, d, "thresholds"))
    out.append("</body></html>")
    return "\n".join(out)
