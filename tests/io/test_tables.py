"""The table writers (toymc.io.tables) and the efficiency map file (toymc.io.effmap): the
output policy of every writer, and an exact round trip of the map a scan writes and the
reach reads."""

import csv
import json
import os

import numpy as np
import pytest

from toymc.errors import OutputError
from toymc.io.effmap import MAP_COLUMNS, read_map, write_map
from toymc.io.files import replacing
from toymc.io.tables import write_csv, write_json


def _hidden(folder):
    return [n for n in os.listdir(folder) if n.startswith(".")]


def test_csv_and_json_writers_follow_the_output_policy(tmp_path):
    p = tmp_path / "t.csv"
    write_csv(p, ["a", "b"], [["1", "x"], [2, "y,z"]])
    with open(p, newline="") as fh:
        assert list(csv.reader(fh)) == [["a", "b"], ["1", "x"], ["2", "y,z"]]
    before = p.read_bytes()
    with pytest.raises(OutputError, match="t.csv"):  # no overwrite without force
        write_csv(p, ["c"], [])
    assert p.read_bytes() == before
    with replacing(True):  # the command's --force
        write_csv(p, ["c"], [["3"]])
    assert p.read_text().splitlines() == ["c", "3"]

    q = tmp_path / "t.json"
    doc = {"b": [1, 2.5, None], "a": {"y": 1, "x": "s"}}
    write_json(q, doc, sort_keys=True)
    text = q.read_text()
    assert json.loads(text) == doc
    assert text.index('"a"') < text.index('"b"') and text.index('"x"') < text.index('"y"')
    assert text == json.dumps(doc, indent=1, sort_keys=True)
    with pytest.raises(OutputError, match="t.json"):
        write_json(q, {})
    write_json(q, [1], force=True)
    assert json.loads(q.read_text()) == [1]
    assert not _hidden(tmp_path)  # no temporary left behind


def test_efficiency_map_round_trip_is_exact_and_ordered(tmp_path):
    rng = np.random.default_rng(11)
    masses = [0.3, 0.7, 1.1]
    ctaus = np.geomspace(0.1, 100.0, 4)
    eff = rng.random((3, 4)) / 3.0  # not short decimals: the round trip must be exact
    points = [{"mass_index": i, "ctau_index": j, "mass": m, "ctau": float(c),
               "efficiency": float(eff[i, j]), "error": 1e-3, "method": "reweight",
               "events": 1000}
              for i, m in enumerate(masses) for j, c in enumerate(ctaus)]
    order = rng.permutation(len(points))  # finished masses arrive in any order
    path = tmp_path / "efficiency_map.csv"
    write_map(path, [points[k] for k in order])
    with open(path, newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert tuple(rows[0]) == MAP_COLUMNS
    assert [(float(r["mass_gev"]), float(r["ctau_cm"])) for r in rows] == [
        (p["mass"], p["ctau"]) for p in points]
    mm, cc, ee = read_map(path)
    np.testing.assert_array_equal(mm, masses)
    np.testing.assert_array_equal(cc, ctaus)
    np.testing.assert_array_equal(ee, eff)
