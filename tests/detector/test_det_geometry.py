"""Tests of geometry and selection loading and validation."""

import math
import re

import pytest
from detector_synth import GEOMETRIES

from toymc.config.geometry import load_geometry, parse_selection
from toymc.detector.geometry import Geometry, Selection
from toymc.detector.profile import Profile
from toymc.errors import ConfigError, InputFileError

DEMO = GEOMETRIES / "demo.toml"


def test_demo_and_large_load_with_units():
    g = load_geometry(DEMO)
    assert isinstance(g, Geometry)
    assert g.name == "toy-barrel-1"
    assert g.field == pytest.approx(1.5)
    assert g.vertex_layers[0].resolution == pytest.approx(15e-4)  # "15 um" in cm
    assert g.calorimeter.noise == pytest.approx(0.002)  # "2 MeV" in GeV
    assert g.acceptance.tracker_theta_min == pytest.approx(math.radians(17))
    assert len(g.chamber.radii) == 48
    assert g.chamber.z_min != -g.chamber.z_max  # asymmetric
    lay = g.tracking_layers()
    assert list(lay["radius"]) == sorted(lay["radius"])
    assert int(lay["measuring"].sum()) == g.n_measuring_layers
    big = load_geometry(GEOMETRIES / "large_chamber.toml")
    assert big.chamber.r_outer > g.chamber.r_outer


def _write(tmp_path, text):
    with open(DEMO) as fh:
        src = fh.read()
    p = tmp_path / "g.toml"
    p.write_text(text(src))
    return p


@pytest.mark.parametrize("edit,key", [
    (lambda s: s.replace('radius = "2.3 cm"', 'radius = "1.2 cm"'), "vertex_layers[1].radius"),
    (lambda s: s.replace('resolution = "120 um"', 'resolution = "-120 um"'),
     "chamber.resolution"),
    (lambda s: s.replace('r_inner = "16 cm"', 'r_inner = "12 cm"'), "chamber.r_inner"),
    (lambda s: s.replace('r_last = "107 cm"', 'r_last = "115 cm"'), "chamber.r_last"),
    (lambda s: s.replace('radius = "125 cm"', 'radius = "100 cm"'), "calorimeter.radius"),
    (lambda s: s.replace('field = "1.5 T"', 'field = "1.5 m"'), "field"),
    (lambda s: s.replace('z_max = "6.5 cm"', 'z_max = "-6.5 cm"'), "vertex_layers[0].z_max"),
    (lambda s: s.replace('stochastic = 0.02', 'stochastic = -0.02'), "calorimeter.stochastic"),
    (lambda s: s.replace('[beampipe]\nradius', '[beampipe]\nradus'), "beampipe.radus"),
    (lambda s: s.replace('n_layers = 48\nr_first = "17.5 cm"\nr_last = "107 cm"',
                         'radii = [20, 30, 25]'), "chamber.radii[2]"),
    (lambda s: s.replace('z = "200 cm"', 'z = "100 cm"'), "calorimeter.forward.z"),
])
def test_bad_geometry_names_the_key(tmp_path, edit, key):
    p = _write(tmp_path, edit)
    with pytest.raises(ConfigError) as exc:
        load_geometry(p)
    assert exc.value.key == key
    assert key in str(exc.value) and str(p) in str(exc.value)


def test_unknown_key_suggests_closest(tmp_path):
    p = _write(tmp_path, lambda s: s.replace("layer_thickness", "layer_thicknes"))
    with pytest.raises(ConfigError, match=re.escape("did you mean 'layer_thickness'")):
        load_geometry(p)


def test_missing_and_broken_files(tmp_path):
    with pytest.raises(InputFileError, match="not found"):
        load_geometry(tmp_path / "nope.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("name = \n")
    with pytest.raises(InputFileError, match="TOML"):
        load_geometry(bad)


BASE = {"r_min": "1 cm", "r_max": "60 cm", "z_min": -50, "z_max": 100}


def test_selection_parse():
    s = parse_selection(dict(BASE, min_pt="80 MeV", mass_window=["0.4 GeV", 0.6],
                             profile={"kind": "tabulated", "eps0": 0.9,
                                      "points": [[1, 1.0], ["30 cm", 0.8], [60, 0.2]]}),
                        "run.toml", load_geometry(DEMO))
    assert isinstance(s, Selection)
    assert s.min_pt == pytest.approx(0.08)
    assert s.mass_window == pytest.approx((0.4, 0.6))
    assert s.profile == Profile("tabulated", 0.9, (1.0, 30.0, 60.0), (1.0, 0.8, 0.2))


@pytest.mark.parametrize("change,key", [
    ({"r_max": "0.5 cm"}, "selection.r_max"),
    ({"z_max": -60}, "selection.z_max"),
    ({"r_max": 300}, "selection.r_max"),
    ({"z_min": -500}, "selection.z_min"),
    ({"profile": {"kind": "flat", "eps0": 1.2}}, "selection.profile.eps0"),
    ({"profile": {"kind": "tabulated", "points": [[1, 0.5], [2, 1.5]]}},
     "selection.profile.points[1][1]"),
    ({"profile": {"kind": "tabulated", "points": [[10, 0.5], [2, 0.5]]}},
     "selection.profile.points[1][0]"),
    ({"profile": {"kind": "linear", "points": [[10, 0.5]]}}, "selection.profile.points"),
    ({"profile": {"kind": "flatt"}}, "selection.profile.kind"),
    ({"min_hits": 2}, "selection.min_hits"),
    ({"mass_window": [0.6, 0.4]}, "selection.mass_window"),
    ({"rmin": 3}, "selection.rmin"),
])
def test_bad_selection_names_the_key(change, key):
    with pytest.raises(ConfigError) as exc:
        parse_selection(dict(BASE, **change), "run.toml", load_geometry(DEMO))
    assert exc.value.key == key
