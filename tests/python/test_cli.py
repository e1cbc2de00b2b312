"""The skyphase command line: output formats, options and error handling."""
import json
import re
import os
import subprocess

import pytest

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")
TESTDATA = os.environ.get("WVR_TESTDATA_DIR", os.path.join(os.path.dirname(__file__), "..", "..", "testdata"))
SITE = os.path.join(TESTDATA, "sites", "demo-site.toml")
RADIOMETER = os.path.join(TESTDATA, "radiometers", "demo-183-dsb.toml")

# The fixture fails every test here when skyphase is missing from a build that declares it.
pytestmark = pytest.mark.usefixtures("skyphase")


def run(*args, check=True):
    result = subprocess.run([SKYPHASE, *args], capture_output=True, text=True, timeout=120)
    if check:
        assert result.returncode == 0, result.stderr
    return result


def test_spectrum_json_has_the_documented_fields():
    out = json.loads(run("spectrum", "--freq-ghz", "22.235,183.31,230", "--site", SITE,
                         "--pwv-mm", "1.5", "--elevation-deg", "45", "--format", "json").stdout)
    for key in ("freq_ghz", "brightness_k", "rj_brightness_k", "opacity_np", "transmission"):
        assert len(out[key]) == 3, key
    assert out["pwv_mm"] == pytest.approx(1.5, rel=1e-9)
    assert out["elevation_deg"] == 45
    assert out["model"] == "ITU-R P.676-13 Annex 1"
    # Opaque line centre: near the surface temperature of the demo site (270 K).
    assert 240 < out["brightness_k"][1] < 270
    for t, tau in zip(out["transmission"], out["opacity_np"]):
        assert t == pytest.approx(pow(2.718281828459045, -tau), rel=1e-9)


def test_spectrum_options_override_the_site_file():
    base = json.loads(run("spectrum", "--freq-ghz", "90", "--site", SITE, "--format", "json").stdout)
    dense = json.loads(run("spectrum", "--freq-ghz", "90", "--site", SITE, "--surface-pressure-hpa", "700",
                           "--format", "json").stdout)
    # 90 GHz emission is mostly dry air: more air above the antenna, more brightness.
    assert dense["brightness_k"][0] > 1.2 * base["brightness_k"][0]


def test_spectrum_csv_and_table():
    csv = run("spectrum", "--freq-ghz", "183.31,186", "--format", "csv").stdout.splitlines()
    assert csv[0] == "freq_ghz,brightness_k,rj_brightness_k,opacity_np,transmission"
    assert len(csv) == 3
    table = run("spectrum", "--freq-ghz", "183.31,186").stdout
    assert "brightness_k" in table and table.startswith("#")


def test_spectrum_from_a_sounding():
    sounding = os.path.join(TESTDATA, "reference", "soundings", "jan20_sounding.csv")
    out = json.loads(run("spectrum", "--freq-ghz", "22.235,31.4", "--sounding", sounding,
                         "--format", "json").stdout)
    # MetPy precipitable_water for this sounding: 15.30 mm (testdata/reference/soundings).
    assert out["pwv_mm"] == pytest.approx(15.30, rel=0.02)


def test_absorption_matches_p676_validation_values():
    # ITU-R P.676-13 validation examples (REFERENCES): 183 GHz, 1013.25 hPa, 288.15 K, 7.5 g/m^3.
    out = json.loads(run("absorption", "--freq-ghz", "183", "--dry-pressure-hpa", "1013.25",
                         "--temp-k", "288.15", "--vapour-density-g-m3", "7.5", "--format", "json").stdout)
    assert out["gamma_oxygen_db_per_km"][0] == pytest.approx(0.0127339, rel=1e-5)
    assert out["gamma_water_db_per_km"][0] == pytest.approx(27.665008, rel=1e-6)
    assert out["gamma_total_db_per_km"][0] == pytest.approx(0.0127339 + 27.665008, rel=1e-6)


def test_channels_json():
    out = json.loads(run("channels", "--radiometer", RADIOMETER, "--site", SITE, "--pwv-mm", "0.5,2",
                         "--elevation-deg", "30,90", "--format", "json").stdout)
    assert out["channels"] == ["w1", "w2", "w3", "w4"]
    assert len(out["points"]) == 4
    for point in out["points"]:
        assert len(point["brightness_k"]) == 4
        assert all(s > 0 for s in point["path_sensitivity_k_per_mm"])


@pytest.mark.parametrize("args, field", [
    (["spectrum", "--freq-ghz", "183", "--elevation-deg", "4"], "elevation_deg = 4"),
    (["spectrum", "--freq-ghz", "183", "--elevation-deg", "91"], "elevation_deg = 91"),
    (["spectrum", "--freq-ghz", "1200"], "freq_ghz[0] = 1200"),
    (["spectrum", "--freq-ghz", "nan"], "freq_ghz[0] = nan"),
    (["spectrum", "--freq-ghz", "183", "--pwv-mm", "-1"], "pwv_mm = -1"),
    (["spectrum", "--freq-ghz", "183", "--surface-temp-k", "nan"], "surface_temperature_k = nan"),
    (["spectrum", "--freq-ghz", "183,abc"], "--freq-ghz"),
    (["absorption", "--freq-ghz", "0.5"], "freq_ghz[0] = 0.5"),
    (["channels", "--radiometer", SITE], "lo_freq_ghz"),
])
def test_bad_input_is_one_line_on_stderr_with_nonzero_exit(args, field):
    result = run(*args, check=False)
    assert result.returncode == 2
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert field in lines[0], lines[0]


def test_unreadable_files_are_reported(tmp_path):
    bad = tmp_path / "broken.toml"
    bad.write_text("lo_freq_ghz = [\n")
    result = run("channels", "--radiometer", str(bad), check=False)
    assert result.returncode == 2
    assert "broken.toml" in result.stderr and "TOML" in result.stderr
    empty = tmp_path / "empty.toml"
    empty.write_text('lo_freq_ghz = 183.31\nchannels = []\n')
    result = run("channels", "--radiometer", str(empty), check=False)
    assert result.returncode == 2 and "channel list is empty" in result.stderr
    overlap = tmp_path / "overlap.toml"
    overlap.write_text('lo_freq_ghz = 183.31\n[[channels]]\nif_centre_ghz = 2.0\nbandwidth_ghz = 1.0\n'
                       '[[channels]]\nif_centre_ghz = 2.4\nbandwidth_ghz = 1.0\n')
    result = run("channels", "--radiometer", str(overlap), check=False)
    assert result.returncode == 2 and "overlaps" in result.stderr
    zero = tmp_path / "zero.toml"
    zero.write_text('lo_freq_ghz = 183.31\n[[channels]]\nif_centre_ghz = 2.0\nbandwidth_ghz = 0.0\n')
    result = run("channels", "--radiometer", str(zero), check=False)
    assert result.returncode == 2 and "bandwidth_ghz = 0" in result.stderr
    sounding = tmp_path / "sounding.csv"
    sounding.write_text("height_m,pressure_hpa,temperature_c,dewpoint_c\n100,1000,15,5\n90,990,14,4\n")
    result = run("spectrum", "--freq-ghz", "183", "--sounding", str(sounding), check=False)
    assert result.returncode == 2 and "level 2" in result.stderr


def small_demo_scenario(tmp_path, duration_s=900.0):
    """The demo scenario shortened to 15 minutes (its faults stay on antennas 11 and 27; the
    spikes of antenna 11 start at 1200 s)."""
    with open(os.path.join(TESTDATA, "demo-scenario.toml")) as f:
        text = f.read()
    text = text.replace("duration_s = 7200.0", f"duration_s = {duration_s}").replace("antenna_count = 40", "antenna_count = 30")
    data = os.path.abspath(TESTDATA) + "/"
    text = text.replace('site_file = "', 'site_file = "' + data).replace('radiometer_file = "', 'radiometer_file = "' + data)
    path = tmp_path / "scenario.toml"
    path.write_text(text)
    return path


def test_the_whole_chain_and_the_report(tmp_path):
    night = tmp_path / "night.h5"
    run("simulate", str(small_demo_scenario(tmp_path)), "-o", str(night))
    before = night.read_bytes()
    inspected = json.loads(run("inspect", str(night), "--format", "json").stdout)
    assert list(inspected) == [
        "file", "time_epoch_utc", "antennas", "antenna_names", "antenna_valid_fraction", "channels",
        "samples", "start_s", "stop_s", "duration_s", "median_cadence_s", "gaps", "valid_fraction",
        "calibrator_scans", "target_scans", "weather_samples", "calibrator_phase_rows", "truth",
        "result_groups"]
    assert inspected["antennas"] == 30 and inspected["gaps"] == [] and inspected["truth"] is True
    summary = json.loads(run("correct", str(night), "-o", str(tmp_path / "corrected.h5"), "--site", SITE,
                             "--format", "json").stdout)
    for key in ("scale", "scale_sigma", "per_antenna_scale", "antenna_scale_statistic", "antenna_scale_threshold",
                "phase_rms_before_deg", "phase_rms_after_deg", "improvement_factor",
                "coherence_before", "coherence_after", "antennas"):
        assert key in summary, key
    # correct on a night without a calibration runs the scaling solve first (the night pipeline)
    assert summary["calibrated"] is True and summary["status"].startswith("converged")
    assert summary["phase_rms_after_deg"] < summary["phase_rms_before_deg"]
    diagnosis = json.loads(run("diagnose", str(night), "-o", str(tmp_path / "diagnosed.h5"), "--site", SITE,
                               "--format", "json").stdout)
    assert diagnosis["windows"] and all("verdict" in w and "start_s" in w and "stop_s" in w for w in diagnosis["windows"])
    for key in ("structure_function", "wind_speed_m_s", "wind_direction_deg"):
        assert key in diagnosis, key
    sf = diagnosis["structure_function"]
    assert set(sf) >= {"radiometer", "radiometer_by_time", "before", "after", "before_by_lag",
                       "after_by_lag"}
    assert sf["radiometer"]["slab"]["thickness_m"] > 0
    by_time = sf["radiometer_by_time"]
    assert by_time["status"] == "ok" and len(by_time["baselines"]) == 3
    lengths = [b["length_m"] for b in by_time["baselines"]]
    assert lengths == sorted(lengths)
    for b in by_time["baselines"]:
        assert len(b["path_structure_m2"]) == len(by_time["lag_s"])
        # D grows with lag over the first decade (frozen flow over the baseline).
        assert b["path_structure_m2"][3] > b["path_structure_m2"][0]
    assert sf["after_by_lag"]["status"] == "ok"
    assert diagnosis["fast_switching"]["corrected_structure"].startswith("corrected calibrator")
    report_dir = tmp_path / "report"
    run("report", str(night), "-o", str(report_dir), "--site", SITE)
    html = (report_dir / "index.html").read_text()
    assert "<img" in html and "data-json" in html
    report = json.loads((report_dir / "report.json").read_text())
    assert report["windows"] and report["title"] == "Night report: night"
    assert report["site"]["source"] == "given"
    assert night.read_bytes() == before  # inputs are never modified


def test_diagnosis_thresholds_come_from_a_file(tmp_path):
    night = tmp_path / "night.h5"
    run("simulate", str(small_demo_scenario(tmp_path, duration_s=1500.0)), "-o", str(night))
    thresholds = tmp_path / "thresholds.toml"
    # Nothing counts as a fault: no window may name an antenna any more.
    thresholds.write_text("fault_unusable_fraction = 1.0\nspike_fraction = 1.0\n"
                          "fault_chi2_ratio = 1e6\nfault_residual_ratio = 1e6\n"
                          "stuck_noise_fraction = 0.0\n")
    default = json.loads(run("diagnose", str(night), "-o", str(tmp_path / "a.h5"), "--site", SITE,
                             "--format", "json").stdout)
    relaxed = json.loads(run("diagnose", str(night), "-o", str(tmp_path / "b.h5"), "--site", SITE,
                             "--thresholds", str(thresholds), "--format", "json").stdout)
    assert default["thresholds_source"] == "defaults"
    assert relaxed["thresholds_source"] == str(thresholds)
    assert relaxed["thresholds"]["fault_chi2_ratio"] == 1e6
    assert relaxed["thresholds"]["cloud_chi2_per_dof"] == default["thresholds"]["cloud_chi2_per_dof"]
    assert any(w["antennas"] for w in default["windows"])  # antenna 11's spikes
    assert not any(w["antennas"] for w in relaxed["windows"])
    thresholds.write_text("cloud_chi2 = 3\n")
    result = run("diagnose", str(night), "-o", str(tmp_path / "c.h5"), "--site", SITE, "--thresholds",
                 str(thresholds), check=False)
    assert result.returncode == 2 and "unknown threshold 'cloud_chi2'" in result.stderr


def test_text_tables_fit_their_content_and_numbers_print_at_their_precision(tmp_path):
    night = tmp_path / "night.h5"
    run("simulate", str(small_demo_scenario(tmp_path, duration_s=1500.0)), "-o", str(night))
    lines = run("diagnose", str(night), "-o", str(tmp_path / "d.h5"), "--site", SITE).stdout.splitlines()
    # "scale 0.98 +/- 0.012, phase rms 24.40 -> 5.65 deg": no number with more than 4 decimals.
    assert re.match(r"scale [0-9.]+ \+/- [0-9.]+, phase rms [0-9.]+ -> [0-9.]+ deg", lines[0]), lines[0]
    assert not re.search(r"\d\.\d{5,}", lines[0]), lines[0]
    header = next(k for k, line in enumerate(lines) if line.startswith("start_s"))
    table = lines[header:header + 1 + sum(1 for line in lines[header + 1:] if line[:1] == " ")]
    assert len(table) > 3
    reason_column = table[0].index("reason")
    verdict_column = table[0].index("verdict")
    # Text columns start where their header starts (left-aligned), no trailing blanks, and the
    # header is no wider than the widest cells before the last column need.
    widest_verdict = max(len(row[verdict_column:reason_column].rstrip()) for row in table[1:])
    assert reason_column == verdict_column + widest_verdict + 2
    for row in table:
        assert row == row.rstrip()
        assert row[reason_column - 2:reason_column] == "  " and row[reason_column] != " "
    calibrated = run("calibrate", str(night), "-o", str(tmp_path / "c.h5"), "--site", SITE).stdout
    first = calibrated.splitlines()[0]
    value, sigma = re.match(r"scale ([0-9.]+) \+/- ([0-9.]+)", first).groups()
    # Decimals follow two significant digits of the uncertainty.
    assert len(value.split(".")[1]) == len(sigma.split(".")[1])
    assert 10 <= int(sigma.replace(".", "").lstrip("0")) <= 99
