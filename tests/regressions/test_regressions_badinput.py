"""Regression cases of bugs found by the bad-input table and the property tests.

Each test names the bug it pins.  A hypothesis failure found later belongs
here as an explicit case (the failing example written out, or the
``@reproduce_failure`` blob hypothesis prints), so that it stays checked even
if the property test's strategies change.
"""

import json
import tomllib

import pytest
import uproot
from _demo import ROOT

import toymc
from toymc.analysis.scan import run_scan
from toymc.config.loader import from_dict
from toymc.errors import ConfigError


def _config(**scan):
    data = tomllib.loads((ROOT / "configs" / "darkphoton_mumu.toml").read_text())
    data["detector"]["geometry"] = str(ROOT / "geometries" / "demo.toml")
    data["run"]["events"] = 300
    if scan:
        data["scan"] = {"masses": [0.4, 0.8], "ctau_points": 2, "events_per_mass": 300, **scan}
    return data


def test_run_accepts_a_path_output(tmp_path):
    """toymc.run(output=pathlib.Path) crashed with TypeError in the metadata writer."""
    out = tmp_path / "out.root"
    toymc.run(from_dict(_config()), output=out)
    with uproot.open(out) as f:
        meta = json.loads(str(f["toymc_meta"]))
    assert f'output = "{out}"' in meta["config_toml"]


def test_scan_bad_efficiency_step_writes_nothing(tmp_path):
    """A bad scan.efficiency_step was found only inside the first task, after the
    scan folder and index.json had been written."""
    with pytest.raises(ConfigError, match="scan.efficiency_step"):
        run_scan(from_dict(_config(efficiency_step="bogus")), tmp_path / "scan", workers=1)
    assert not (tmp_path / "scan").exists()
