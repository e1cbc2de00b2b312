"""skyphase on a night whose source sets below the retrieval's elevation limit: the scans below it
say so, and no radiometer is blamed."""
import json
import os
import re
import subprocess

import pytest
from conftest import cut_demo_scenario

SKYPHASE = os.environ.get("WVR_SKYPHASE", "")
SITE = os.path.join(os.environ.get("WVR_TESTDATA_DIR", os.path.join(
    os.path.dirname(__file__), "..", "..", "testdata")), "sites", "demo-site.toml")

pytestmark = pytest.mark.usefixtures("skyphase")

# Latitude -24 deg (the demo site), declination -35 deg: from 5.7 h west of the meridian the source
# sets from about 17 deg to 12 deg in 1500 s, through the PWV table's 14 deg limit near 910 s, in
# the calibrator scan at 900-960 s (scans: 60 s calibrator, 240 s target).
SETTING_FROM_S = 960.0


def run(*args):
    result = subprocess.run([SKYPHASE, *args], capture_output=True, text=True, timeout=300)
    assert result.returncode == 0, result.stderr
    return result.stdout


def test_scans_below_the_elevation_limit_are_outside_the_domain_not_faulty(tmp_path):
    scenario = cut_demo_scenario(tmp_path / "s.toml", duration_s=1500.0, antenna_count=6)
    text = scenario.read_text().replace("start_hour_angle_h = -1.5", "start_hour_angle_h = 5.7")
    scenario.write_text(text)
    night = tmp_path / "n.h5"
    run("simulate", str(scenario), "-o", str(night))
    diagnosis = json.loads(run("diagnose", str(night), "-o", str(tmp_path / "d.h5"), "--site", SITE,
                               "--format", "json"))
    windows = diagnosis["windows"]
    below = [w for w in windows if w["start_s"] >= SETTING_FROM_S]
    assert len(below) == 3
    for w in windows:
        assert w["verdict"] != "radiometer fault", w
        assert not w["antennas"], w  # no antenna flagged, least of all for "no data"
    for w in below:
        assert w["verdict"] == "outside retrieval domain", w
        assert re.match(r"source below the retrieval's 14 deg elevation limit \(lowest elevation "
                        r"1[0-3]\.\d+ deg\) in 100 % of the samples", w["reason"]), w
    # The calibrator scan the source sets in is below the limit for most of its samples.
    setting = next(w for w in windows if w["start_s"] == 900.0)
    assert setting["verdict"] == "outside retrieval domain", setting
    assert re.search(r"14 deg elevation limit .* in [1-9]\d % of the samples", setting["reason"])
    assert diagnosis["summary"]["verdict_counts"]["outside retrieval domain"] == 4
