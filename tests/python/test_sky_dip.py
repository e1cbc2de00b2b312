"""Sky dips from Python and from skyphase dip: a simulated dip with known offsets and gains is
fitted back (truth: the project's own layered sky model, ITU-R P.676-13 Annex 1 absorption), the
slab form's disagreement is reported, and bad input is refused naming the field and the value."""
import json
import subprocess

import numpy as np
import pytest

import wvr

OFFSET_K = [1.2, -0.8, 0.5, 1.6]
GAIN = [1.03, 0.98, 1.02, 0.97]


def test_python_dip_recovers_pwv_offsets_and_opacity(demo_profile, radiometer_183):
    # The demo site at 1 mm; the demo radiometer's noise (0.07-0.10 K per 1 s sample), seed 11.
    dips = wvr.simulate_sky_dips(demo_profile, radiometer_183,
                                 [{"antenna": "a1", "offset_k": OFFSET_K, "gain": GAIN}], seed=11)
    assert dips[0]["brightness_k"].shape == (35, 4)
    fit = wvr.fit_sky_dip(demo_profile.scaled_to_pwv(2.0), radiometer_183, **dips[0])
    assert fit["converged"]
    assert fit["pwv_mm"] == pytest.approx(1.0, abs=0.01)
    clean = wvr.simulate_sky_dips(demo_profile, radiometer_183, [{"antenna": "t"}], noise=False)
    truth = wvr.fit_sky_dip(demo_profile, radiometer_183, **clean[0])
    np.testing.assert_allclose(fit["zenith_opacity_np"], truth["zenith_opacity_np"], rtol=0.02)
    # w2-w4: offsets within 0.3 K; w1 (near saturation) carries its uncertainty and a note.
    np.testing.assert_allclose(fit["offset_k"][1:], OFFSET_K[1:], atol=0.3)
    assert abs(fit["offset_k"][0] - OFFSET_K[0]) < 4 * fit["offset_sigma_k"][0]
    assert "offset and gain nearly degenerate" in fit["channel_notes"][0]
    np.testing.assert_allclose(fit["gain"], GAIN, atol=0.005)


def test_python_dip_bad_input_names_the_field(demo_profile, radiometer_183):
    dip = wvr.simulate_sky_dips(demo_profile, radiometer_183, [{"antenna": "a1"}])[0]
    brightness = np.array(dip["brightness_k"])
    brightness[4, 1] = np.nan
    with pytest.raises(wvr.WvrValueError, match=r"brightness_k\[4\]\[1\] = nan"):
        wvr.fit_sky_dip(demo_profile, radiometer_183, dip["elevation_deg"], brightness)
    with pytest.raises(wvr.WvrValueError, match="elevation_deg holds 2 distinct elevations"):
        wvr.fit_sky_dip(demo_profile, radiometer_183, [90.0, 90.0, 30.0],
                        dip["brightness_k"][:3])
    with pytest.raises(wvr.WvrValueError, match="brightness_k has shape"):
        wvr.fit_sky_dip(demo_profile, radiometer_183, dip["elevation_deg"],
                        dip["brightness_k"][:, :3])


def test_skyphase_dip_simulates_writes_and_refits(skyphase, testdata, tmp_path):
    radiometer = str(testdata / "radiometers" / "demo-183-dsb.toml")
    site = str(testdata / "sites" / "demo-site.toml")
    csv_path = tmp_path / "dips.csv"
    simulated = subprocess.run(
        [skyphase, "dip", "--radiometer", radiometer, "--site", site, "--pwv-mm", "4",
         "--surface-temp-k", "290",
         "--offset-k", "0.5", "--antenna", "u1,u2", "--write-csv", str(csv_path),
         "--format", "json"], capture_output=True, text=True, check=True)
    result = json.loads(simulated.stdout)
    assert [d["antenna"] for d in result["dips"]] == ["u1", "u2"]
    # A thick, warm sky: the slab's disagreement is stated in the line channel.
    w1 = result["dips"][0]["channels"][0]
    assert w1["slab_opacity_difference"] < -0.02
    assert "slab opacity" in w1["note"]
    refit = subprocess.run([skyphase, "dip", "--radiometer", radiometer, "--site", site,
                            "--input", str(csv_path)], capture_output=True, text=True, check=True)
    assert "# u1: PWV" in refit.stdout and "# u2: PWV" in refit.stdout
    # Bad input: exit 2 with one line naming the field and the value.
    text = csv_path.read_text().splitlines()
    fields = text[5].split(",")  # u1's fifth sample
    text[5] = ",".join(fields[:2] + ["3.0"] + fields[3:])
    bad = tmp_path / "bad.csv"
    bad.write_text("\n".join(text) + "\n")
    refused = subprocess.run([skyphase, "dip", "--radiometer", radiometer, "--site", site,
                              "--input", str(bad)], capture_output=True, text=True)
    assert refused.returncode == 2
    assert "antenna u1: elevation_deg[4] = 3" in refused.stderr
    assert len(refused.stderr.strip().splitlines()) == 1
