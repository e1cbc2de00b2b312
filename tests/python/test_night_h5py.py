"""The h5py + numpy example of libwvr/FORMAT.md ("Reading a night with h5py and numpy only"),
taken from the document itself and run on a simulated night: it must run as written and its
numbers must equal what wvr.read_night gives."""
import pathlib
import re

# h5py is a declared dependency (tools/install-deps.sh): without it this module fails.
import h5py  # noqa: F401  (the FORMAT.md example imports it too)
import numpy as np
import pytest

import wvr

FORMAT_MD = pathlib.Path(__file__).resolve().parents[2] / "libwvr" / "FORMAT.md"
SECTION = "## Reading a night with h5py and numpy only"


def format_example():
    """The first python code block after SECTION in FORMAT.md."""
    text = FORMAT_MD.read_text()
    assert SECTION in text, "FORMAT.md lost its h5py example section"
    block = re.search(r"```python\n(.*?)```", text[text.index(SECTION):], flags=re.DOTALL)
    assert block, "no python code block in the h5py section of FORMAT.md"
    return block.group(1)


@pytest.fixture(scope="module")
def night_with_gaps_and_results(testdata):
    """A simulated night, with a run of invalid samples (NaN brightness) on one antenna and a
    result group, so that the example's masking and results dict have work to do."""
    scenario = wvr.load_scenario(testdata / "demo-scenario.toml")
    night = wvr.simulate_night(scenario.with_overrides(duration_s=600.0, antenna_count=6))
    arrays = night.to_dict()
    valid = np.array(night.valid)
    brightness = np.array(night.brightness_k)
    valid[0, 50:80] = 0
    brightness[0, 50:80, :] = np.nan
    arrays.update(valid=valid, brightness_k=brightness)
    night = wvr.Night.from_arrays(**arrays)
    group = wvr.ResultGroup("screening", {
        "spread_k": (np.nanstd(brightness, axis=1), "K"),
        "flags": (1 - valid, "1"),
    }, {"method": "standard deviation per antenna and channel"})
    return night.with_result_group(group)


def test_format_example_runs_and_agrees_with_read_night(tmp_path, monkeypatch, capsys,
                                                        night_with_gaps_and_results):
    code = format_example()
    assert 'h5py.File("night.h5", "r")' in code
    # The example opens "night.h5" in the working directory.
    wvr.write_night(night_with_gaps_and_results, tmp_path / "night.h5")
    monkeypatch.chdir(tmp_path)
    namespace = {}
    exec(compile(code, str(FORMAT_MD), "exec"), namespace)
    printed = capsys.readouterr().out

    night = wvr.read_night(tmp_path / "night.h5")
    assert list(namespace["antennas"]) == night.antenna_names
    assert list(namespace["channels"]) == night.channel_names
    np.testing.assert_array_equal(namespace["time_s"], night.time_s)
    valid = night.valid.astype(bool)
    np.testing.assert_array_equal(namespace["valid"], valid)
    expected_tb = np.where(valid[:, :, None], night.brightness_k, np.nan)
    assert np.isnan(expected_tb[0, 50:80]).all()
    np.testing.assert_array_equal(namespace["tb_k"], expected_tb)
    np.testing.assert_array_equal(namespace["elevation_deg"], night.elevation_deg)
    assert list(namespace["intent"]) == [scan["intent"] for scan in night.scans]
    results = namespace["results"]
    assert list(results) == list(night.results)
    for stage, group in night.results.items():
        assert list(results[stage]) == list(group), stage
        for name in group:
            np.testing.assert_array_equal(results[stage][name], group[name])
            assert results[stage][name].dtype == group[name].dtype, name

    # The printed line: first antenna and its mean brightness per channel over valid samples.
    mean_k = night.brightness_k[0][valid[0]].mean(axis=0)
    assert printed.startswith(night.antenna_names[0] + " ")
    values = dict(re.findall(r"'(\w+)': (?:np\.float64\()?([-+0-9.eE]+)\)?", printed))
    assert list(values) == night.channel_names
    for name, mean in zip(night.channel_names, mean_k):
        assert float(values[name]) == pytest.approx(mean, rel=1e-12), name
