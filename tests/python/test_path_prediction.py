"""An antenna whose radiometer gave no samples: the night pipeline corrects it with a path
predicted from the other antennas, and the Python results, the report and the skyphase JSON
give its expected residual beside the healthy antennas' residual."""
import json
import os
import pathlib
import subprocess

import numpy as np
import pytest

import wvr
import wvr.report

TESTDATA = pathlib.Path(os.environ.get("WVR_TESTDATA_DIR")
                        or pathlib.Path(__file__).resolve().parent.parent.parent / "testdata")
DEAD = 7  # the dropout fault of testdata/scenarios/dead-radiometer.toml


@pytest.fixture(scope="module")
def night():
    scenario = wvr.load_scenario(TESTDATA / "scenarios" / "dead-radiometer.toml")
    return wvr.simulate_night(scenario.with_overrides(duration_s=1200.0))


@pytest.fixture(scope="module")
def processed(night):
    return wvr.process_night(night, last_stage="correction")


def test_the_dead_antenna_is_corrected_with_a_marked_prediction(night, processed):
    predicted = processed.path_prediction
    assert predicted is not None and predicted.any()
    samples = night.time_count
    assert predicted.predicted_samples[DEAD] == samples
    assert sum(predicted.predicted_samples) == samples
    assert predicted.method in ("frozen_flow", "neighbours")
    corrections = processed.corrections
    assert np.all(corrections.path_predicted[DEAD] != 0)
    assert np.all(corrections.path_predicted[DEAD - 1] == 0)
    assert np.all(corrections.flags[DEAD] == 0)
    assert np.all(np.isfinite(corrections.path_mm[DEAD]))
    assert corrections.predicted_expected_residual_mm[DEAD] > 0
    assert np.isnan(corrections.predicted_expected_residual_mm[DEAD - 1])
    summary = processed.path_prediction_summary()
    assert summary.healthy_antennas == len(predicted.predicted_samples) - 1
    [antenna] = summary.antennas
    assert antenna.antenna == DEAD
    assert antenna.expected_residual_mm == pytest.approx(predicted.expected_residual_mm[DEAD])
    assert antenna.phase_rms_after_deg == pytest.approx(
        processed.metrics.antennas[DEAD].rms_after_deg)
    assert antenna.expected_phase_rms_after_deg >= summary.healthy_phase_rms_after_deg
    assert "expected residual" in predicted.brief_report(night)


def test_without_prediction_the_dead_antenna_stays_flagged(night):
    processed = wvr.process_night(night, last_stage="correction", path_prediction="off")
    assert processed.path_prediction is None
    assert processed.path_prediction_summary() is None
    assert np.all(processed.corrections.flags[DEAD] != 0)
    assert processed.metrics.antennas[DEAD].samples == 0
    with pytest.raises(wvr.WvrValueError, match="nearest"):
        wvr.process_night(night, last_stage="correction", path_prediction="nearest")


def test_the_report_sets_the_expected_residual_beside_the_healthy_antennas(night, processed):
    data = wvr.report.report_data(night, processed, name="dead radiometer")
    section = data["path_prediction"]
    assert section["healthy_phase_rms_after_deg"] > 0
    [antenna] = section["antennas"]
    assert antenna["antenna"] == night.antenna_names[DEAD]
    assert antenna["expected_residual_um"] == pytest.approx(
        1e3 * processed.path_prediction.expected_residual_mm[DEAD])
    json.dumps(data)  # serialisable
    page = wvr.report.render_page({**data, "figures": []}, [])
    assert 'data-json="path_prediction.antennas.0.expected_residual_um"' in page
    assert 'data-json="path_prediction.healthy_phase_rms_after_deg"' in page


def test_skyphase_correct_json_gives_the_prediction(night, skyphase, tmp_path):
    path = tmp_path / "dead.h5"
    wvr.write_night(night, path)
    result = subprocess.run([skyphase, "correct", str(path), "-o", str(tmp_path / "out.h5"),
                             "--format", "json"], capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stderr
    out = json.loads(result.stdout)["path_prediction"]
    assert out["healthy_phase_rms_after_deg"] > 0
    [antenna] = out["antennas"]
    assert antenna["antenna"] == night.antenna_names[DEAD]
    for key in ("expected_residual_um", "expected_residual_deg", "expected_phase_rms_after_deg",
                "phase_rms_after_deg"):
        assert antenna[key] > 0, key
    stored = wvr.read_night(tmp_path / "out.h5").results["correction"]
    assert np.all(stored["path_predicted"][DEAD] != 0)
    assert np.all(stored["path_predicted"][DEAD - 1] == 0)
    assert stored["predicted_path_expected_residual_mm"][DEAD] == pytest.approx(
        1e-3 * antenna["expected_residual_um"])
