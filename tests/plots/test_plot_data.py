"""The data behind the plots and the cutflow table: round bin widths, one series per
distinct set of passing events, and only the cutflow steps that apply to a channel."""

import math

import numpy as np
import pytest
from _demo import CONFIGS, ROOT
from hypothesis import given, settings
from hypothesis import strategies as st

import toymc
from toymc.analysis.binning import round_edges, round_width
from toymc.analysis.cutflow import TRUE_POINT_NOTE, channel_steps, cutflow_table, step_flags
from toymc.analysis.report import efficiency_series
from toymc.detector.response import CUT_STEPS
from toymc.physics.decays import CHANNELS

# ----------------------------------------------------------------- round bin widths

def _mantissa(w):
    k = math.floor(math.log10(w) + 1e-12)
    return w / 10.0 ** k


@given(span=st.floats(1e-6, 1e6), bins=st.integers(1, 500))
@settings(max_examples=300, deadline=None)
def test_round_width_is_round_and_near_the_request(span, bins):
    w = round_width(span, bins)
    assert min(abs(_mantissa(w) - m) for m in (1.0, 2.0, 2.5, 5.0, 10.0)) < 1e-9, w
    # neighbouring round widths are at most a factor 2 apart: the nearest is within sqrt(2)
    assert 1 / math.sqrt(2) - 1e-12 <= w / (span / bins) <= math.sqrt(2) + 1e-12
    assert f"{w:g}" == f"{w:.6g}"  # prints as a short decimal ("2.5", "0.005")


@given(lo=st.floats(-1e4, 1e4), span=st.floats(1e-3, 1e4), bins=st.integers(5, 200))
@settings(max_examples=300, deadline=None)
def test_round_edges_cover_the_range_on_multiples_of_the_width(lo, span, bins):
    hi = lo + span
    e = round_edges(lo, hi, bins)
    w = round_width(hi - lo, bins)
    # covered up to a relative 1e-9 of a bin (float noise in lo, hi does not add a bin)
    assert e[0] <= lo + 1e-9 * w and e[-1] >= hi - 1e-9 * w
    ulp = 4 * np.finfo(float).eps * np.abs(e).max()  # float spacing of the edges' magnitude
    assert np.allclose(np.diff(e), w, rtol=0, atol=2 * ulp)
    k = e / w
    assert np.allclose(k, np.round(k), rtol=0, atol=1e-6)  # edges at multiples of w
    assert e.size - 1 <= math.ceil(math.sqrt(2) * bins) + 2


def test_round_width_examples():
    # the report's radius histogram: 0 to 279.6 cm in 60 bins was 4.66 cm per bin
    assert round_width(279.6, 60) == 5.0
    assert round_width(60.0 - 1.5, 24) == 2.5
    assert round_width(0.09, 80) == 0.001


# ----------------------------------------------------------------- efficiency vs radius

def test_efficiency_series_merges_steps_passed_by_the_same_events():
    r = np.array([1.0, 2.0, 3.0, 11.0, 12.0, 13.0, 14.0, 25.0])
    a = np.array([1, 1, 1, 1, 1, 0, 1, 1], bool)
    b = np.array([1, 0, 1, 1, 0, 0, 1, 0], bool)
    steps = [("tracks", a), ("fiducial", b), ("vertex", b.copy()), ("photons", b & (r > 2)),
             ("mass", b & (r > 2))]
    edges = np.array([0.0, 10.0, 20.0, 30.0])
    out = efficiency_series(r, steps, edges)
    assert [s[0] for s in out] == ["tracks", "fiducial = vertex (same events)",
                                   "photons = mass (same events)"]
    # binomial efficiency per bin, by hand: bin counts 3, 4, 1
    tot = np.array([3.0, 4.0, 1.0])
    for (label, eff, err), flags in zip(out, (a, b, b & (r > 2))):
        k = np.array([flags[:3].sum(), flags[3:7].sum(), flags[7:].sum()], float)
        assert np.allclose(eff, k / tot)
        assert np.allclose(err, np.sqrt(k / tot * (1 - k / tot) / tot))


def test_efficiency_series_keeps_equal_steps_that_are_not_neighbours():
    r = np.linspace(0.5, 9.5, 10)
    a = r < 5
    out = efficiency_series(r, [("x", a), ("y", r < 3), ("z", a)], np.array([0.0, 10.0]))
    assert [s[0] for s in out] == ["x", "y", "z"]


# ----------------------------------------------------------------- steps per channel

def test_channel_steps():
    for name, ch in CHANNELS.items():
        final = ch.status == 1
        charged = bool(np.any(ch.q[final] != 0))
        photons = bool(np.any(ch.pdg[final] == 22))
        steps = dict(channel_steps(name))
        assert ("tracks" in steps) == charged, name
        assert ("photons" in steps) == photons, name
        assert {"fiducial", "vertex", "mass"} <= set(steps), name
        star = "" if charged else "*"
        assert steps["fiducial"] == "fiducial" + star and steps["vertex"] == "vertex" + star
    assert [s for s, _ in channel_steps("gamma_gamma")] == ["fiducial", "vertex", "photons",
                                                            "mass"]
    assert [s for s, _ in channel_steps("mu_mu")] == ["tracks", "fiducial", "vertex", "mass"]
    assert [s for s, _ in channel_steps("pi_pi_pi0")] == list(CUT_STEPS)
    assert [s for s, _ in channel_steps("unknown")] == list(CUT_STEPS)


def _channel_config(tmp_path, channel):
    demo = "darkphoton_mumu.toml" if CHANNELS[channel].spin == 1 else "alp_3pi_bka.toml"
    text = (CONFIGS / demo).read_text()
    old = 'channel = "mu_mu"' if "mu_mu" in demo else 'channel = "pi_pi_pi0"'
    text = text.replace(old, f'channel = "{channel}"')
    if channel != "pi_pi_pi0":  # the chiral matrix element of the demo is for pi+ pi- pi0
        text = text.replace('matrix_element = "chiral"', "")
    text = text.replace('"../geometries/', f'"{ROOT}/geometries/')
    p = tmp_path / f"{channel}.toml"
    p.write_text(text)
    return p


@pytest.mark.parametrize("channel", sorted(CHANNELS))
def test_steps_left_out_pass_the_same_events_as_the_step_before(channel, tmp_path):
    ev = toymc.generate(_channel_config(tmp_path, channel), events=4000, seed=7)
    cols = {f"cut_{s}": np.asarray(ev[f"cut_{s}"]) for s in CUT_STEPS}
    kept = [s for s, _ in channel_steps(channel)]
    prev = np.ones(len(ev), bool)
    for s in CUT_STEPS:
        if s not in kept:
            assert np.array_equal(cols[f"cut_{s}"], prev), (channel, s)
        prev = cols[f"cut_{s}"]
    # the flags left after step_flags are the steps of the channel (nothing kept for safety)
    assert [s for s, _, _ in step_flags(cols, channel)] == kept


def test_photon_only_cutflow_table(tmp_path):
    f = tmp_path / "gg.root"
    toymc.run(CONFIGS / "alp_gg_bksta.toml", output=str(f), events=3000, seed=4)
    text = cutflow_table(str(f))
    steps = [line.split()[0] for line in text.splitlines()[3:] if not line.startswith("*")]
    assert steps == ["fiducial*", "vertex*", "photons", "mass"]
    assert text.splitlines()[-1] == TRUE_POINT_NOTE
    f2 = tmp_path / "mm.root"
    toymc.run(CONFIGS / "darkphoton_mumu.toml", output=str(f2), events=3000, seed=4)
    text = cutflow_table(str(f2))
    assert [line.split()[0] for line in text.splitlines()[3:]] == ["tracks", "fiducial",
                                                                    "vertex", "mass"]
    assert "*" not in text


# ----------------------------------------------------------------- efficiency map

def test_heatmap_floor():
    from toymc.plots.figures import heatmap_floor

    e = np.array([[0.0, 1e-7, 0.02], [0.4, np.nan, 3e-3]])
    assert heatmap_floor(e) == pytest.approx(0.4e-4)  # four decades below the largest
    assert heatmap_floor(np.array([0.0, 0.2, 0.1])) == 0.1  # smallest positive is higher
    assert heatmap_floor(np.zeros(3)) is None


@pytest.mark.parametrize("demo,needles", [
    ("scan_demo.toml", (r"$B \to K$ X", r"\pi^+\pi^-\pi^0", "(chiral)", "cut_mass",
                        "1.5 cm < r < 60 cm", "-40 cm < z < 120 cm", "linear vertex profile",
                        "100000 events per mass")),
])
def test_efficiency_map_title_names_the_point(demo, needles):
    from toymc.analysis import scan
    from toymc.config import loader as config
    from toymc.plots.scan import map_title

    cfg = config.load(CONFIGS / demo)
    idx = {"config": scan._scan_identity(cfg), "grid": scan.grid_from_config(cfg).as_dict()}
    title = map_title(idx)
    for n in needles:
        assert n in title, (n, title)
    assert title.count("\n") == 2  # three lines


def test_efficiency_map_title_radiative(tmp_path):
    from toymc.analysis import scan
    from toymc.config import loader as config
    from toymc.plots.scan import map_title

    text = (CONFIGS / "darkphoton_mumu.toml").read_text().replace(
        '"../geometries/', f'"{ROOT}/geometries/')
    p = tmp_path / "s.toml"
    p.write_text(text + "\n[scan]\nmass_min = 0.3\nmass_max = 1.0\nmass_points = 2\n"
                 "ctau_points = 2\nevents_per_mass = 5000\nefficiency_step = \"vertex\"\n")
    cfg = config.load(p)
    idx = {"config": scan._scan_identity(cfg), "grid": scan.grid_from_config(cfg).as_dict()}
    title = map_title(idx)
    for n in (r"$e^+e^- \to \gamma$ X", r"\mu^+\mu^-", "cut_vertex", "5000 events per mass"):
        assert n in title, (n, title)
