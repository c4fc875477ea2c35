"""Tests of toymc.detector.response: columns, mass peak, vertex profile, cutflow."""

import itertools
import math

import numpy as np
import pytest
from detector_synth import GEOMETRIES, make_block
from scipy import stats

from toymc.config.geometry import load_geometry, parse_selection
from toymc.detector.profile import profile_efficiency
from toymc.detector.response import CUT_STEPS, RECO_COLUMNS, cutflow, respond
from toymc.detector.vertexing import radial_profile, vertex_line_error
from toymc.engine.block import Block
from toymc.physics.constants import M_PI
from toymc.plots.geometry import draw_geometry

GEOM = load_geometry(GEOMETRIES / "demo.toml")
SEL = parse_selection({"r_min": "0.5 cm", "r_max": "90 cm", "z_min": -70, "z_max": 150,
                       "profile": {"kind": "flat", "eps0": 1.0}}, None, GEOM)


def _run(channel, n, seed, sel=SEL, **kw):
    blk = make_block(np.random.default_rng(seed), n, channel, **kw)
    respond(blk, GEOM, sel, np.random.default_rng(seed + 1000))
    return blk


def test_columns_types_and_table():
    blk = _run("pipipi0", 3000, 1, mass=0.6, p_llp=2.0, r_range=(0.5, 60))
    names = {name for name, _unit, _meaning in RECO_COLUMNS}
    added = set(blk.event) - {"llp_m", "llp_px", "llp_py", "llp_pz", "llp_e", "llp_dx",
                              "llp_dy", "llp_dz", "llp_dr", "w_gen"}
    for grp in ("trk", "clu"):
        counts, cols = blk.groups[grp]
        assert len(counts) == blk.n
        added.add(f"n{grp}")  # the counter branch written for the group
        for key, col in cols.items():
            added.add(f"{grp}_{key}")
            assert len(col) == counts.sum()
    assert added == names
    for key in added - {"ntrk", "nclu"}:
        grp, _, col = key.partition("_")
        arr = blk.groups[grp][1][col] if grp in ("trk", "clu") else blk.event[key]
        assert arr.dtype in (np.float64, np.int32, np.bool_), key
    assert [f"cut_{s}" for s in CUT_STEPS] == [n for n, *_ in RECO_COLUMNS if n[:4] == "cut_"]
    # two tracks and two clusters per a -> pi+ pi- pi0 (gamma gamma) event
    assert np.all(blk.groups["trk"][0] == 2) and np.all(blk.groups["clu"][0] == 2)
    assert np.all(blk.groups["trk"][1]["dau"][:2] == [0, 1])
    assert np.all(blk.groups["clu"][1]["dau"][:2] == [3, 4])


def test_same_rng_same_output():
    a = make_block(np.random.default_rng(5), 2000, "pipipi0", 0.5, 1.5, r_range=(1, 50))
    b = make_block(np.random.default_rng(5), 2000, "pipipi0", 0.5, 1.5, r_range=(1, 50))
    respond(a, GEOM, SEL, np.random.default_rng(77))
    respond(b, GEOM, SEL, np.random.default_rng(77))
    for key in a.event:
        np.testing.assert_array_equal(a.event[key], b.event[key])
    for grp in ("trk", "clu"):
        for key in a.groups[grp][1]:
            np.testing.assert_array_equal(a.groups[grp][1][key], b.groups[grp][1][key])
    c = make_block(np.random.default_rng(5), 2000, "pipipi0", 0.5, 1.5, r_range=(1, 50))
    respond(c, GEOM, SEL, np.random.default_rng(78))
    assert not np.array_equal(a.event["rec_m"], c.event["rec_m"])


def _pair_mass(p1, p2):
    e = np.sqrt(np.sum(p1**2, 0) + M_PI**2) + np.sqrt(np.sum(p2**2, 0) + M_PI**2)
    return np.sqrt(e**2 - np.sum((p1 + p2) ** 2, 0))


def _from_params(pt, phi, lam):
    return np.stack([pt * np.cos(phi), pt * np.sin(phi), pt * np.tan(lam)])


def test_charged_mass_peaks_at_true_mass_within_stated_resolution():
    # a -> pi+ pi-: the reconstructed mass minus the true mass, divided by the mass error
    # propagated (linearly, numerical derivatives) from the stated track resolutions, is
    # N(0, 1).  Momenta smeared in curvature, azimuth and dip independently.
    m_true = 0.5
    blk = _run("pipi", 20000, 2, mass=m_true, p_llp=1.5, r_range=(1, 40))
    ok = blk.event["cut_tracks"]
    trk = blk.groups["trk"][1]
    dau = blk.groups["dau"][1]
    n = blk.n
    sl = slice(0, 2 * n)
    tp = np.stack([dau["px"], dau["py"], dau["pz"]]).reshape(3, n, 2)
    params = []
    for j in (0, 1):
        pt = np.hypot(tp[0, :, j], tp[1, :, j])
        params.append([pt, np.arctan2(tp[1, :, j], tp[0, :, j]), np.arctan2(tp[2, :, j], pt)])
    sig = {k: trk[k][sl].reshape(n, 2) for k in ("spt", "sphi", "slam")}
    var = np.zeros(n)
    base = [[v.copy() for v in params[0]], [v.copy() for v in params[1]]]
    m0 = _pair_mass(_from_params(*base[0]), _from_params(*base[1]))
    assert np.allclose(m0, m_true, rtol=1e-9)
    for j in (0, 1):
        for k, name in enumerate(("spt", "sphi", "slam")):
            s = sig[name][:, j] * (params[j][0] if name == "spt" else 1.0)
            h = 1e-6 * np.where(k == 0, params[j][0], 1.0)
            shifted = [[v.copy() for v in params[0]], [v.copy() for v in params[1]]]
            shifted[j][k] = shifted[j][k] + h
            dm = (_pair_mass(_from_params(*shifted[0]), _from_params(*shifted[1])) - m0) / h
            var += (dm * s) ** 2
    pull = (blk.event["rec_m"][ok] - m_true) / np.sqrt(var[ok])
    npull = pull.size
    assert npull > 0.9 * n
    assert abs(np.mean(pull)) < 4 / math.sqrt(npull)
    assert abs(np.std(pull) - 1) < 4 / math.sqrt(2 * npull)
    # and the peak (median) sits at the true mass within 4 standard errors of the median
    res = np.sqrt(var[ok])
    err_median = 1.2533 * np.std(blk.event["rec_m"][ok]) / math.sqrt(npull)
    assert abs(np.median(blk.event["rec_m"][ok]) - m_true) < 4 * err_median
    assert np.median(res) / m_true < 0.05


def test_found_vertices_follow_truth_times_profile():
    # tabulated profile; in bins of the true decay radius the number of found vertices is
    # binomial with expectation sum(eps(r_i)) over candidates in the window; chi-square test.
    table = [[0.5, 0.95], [10, 0.9], [30, 0.6], [60, 0.2], [90, 0.1]]
    sel = parse_selection({"r_min": 1, "r_max": 80, "z_min": -70, "z_max": 150,
                           "profile": {"kind": "tabulated", "eps0": 0.9, "points": table}},
                          None, GEOM)
    blk = _run("pipi", 60000, 3, sel=sel, mass=0.6, p_llp=1.5, r_range=(0.5, 90))
    ev = blk.event
    r_true = ev["llp_dr"]
    eps = 0.9 * np.interp(r_true, [t[0] for t in table], [t[1] for t in table])
    cand = ev["cut_fiducial"]
    np.testing.assert_allclose(ev["vtx_w"][cand], eps[cand], rtol=1e-12)
    assert np.all(ev["vtx_w"][~cand] == 0)
    edges = np.linspace(2, 78, 20)
    found, _ = np.histogram(r_true[ev["vtx_found"]], edges)
    expect, _ = np.histogram(r_true[cand], edges, weights=eps[cand])
    var, _ = np.histogram(r_true[cand], edges, weights=(eps * (1 - eps))[cand])
    chi2 = np.sum((found - expect) ** 2 / var)
    assert stats.chi2.sf(chi2, len(expect)) > 1e-3
    # vtx_found is never set outside the window
    assert not np.any(ev["vtx_found"] & ~cand)


def test_vertex_resolution_grows_with_radius():
    # median transverse miss distance (robust against the 1/sin(opening angle) tail):
    # precise vertex layers outside 3 cm, coarser ones outside 12 cm, chamber only at 50 cm
    med = []
    for r in (3.0, 12.0, 50.0):
        blk = _run("pipi", 4000, int(r), mass=0.5, p_llp=1.5, r=r)
        ok = blk.event["cut_tracks"]
        dx = blk.event["vtx_x"][ok] - blk.event["llp_dx"][ok]
        dy = blk.event["vtx_y"][ok] - blk.event["llp_dy"][ok]
        med.append(np.median(np.hypot(dx, dy)))
    assert med[0] < med[1] < med[2]


def test_hits_profile_and_curlers():
    sel = parse_selection({"r_min": 0.5, "r_max": 100, "z_min": -70, "z_max": 150,
                           "full_hits": 30, "profile": {"kind": "hits", "eps0": 0.8}},
                          None, GEOM)
    blk = _run("pipi", 5000, 4, sel=sel, mass=0.5, p_llp=1.0, r_range=(0.5, 100))
    ev = blk.event
    _counts, trk = blk.groups["trk"]
    h = trk["hits"].reshape(-1, 2)
    expect = 0.8 * np.minimum(1, h[:, 0] / 30) * np.minimum(1, h[:, 1] / 30)
    cand = ev["cut_fiducial"]
    np.testing.assert_allclose(ev["vtx_w"][cand], expect[cand], rtol=1e-12)
    # tracks from decays beyond the chamber's last sense layer have no hits
    outside = np.repeat(ev["llp_dr"] > GEOM.chamber.radii[-1], 2)
    assert np.all(trk["hits"][outside] == 0) and not np.any(trk["found"][outside])


def test_cutflow_counts_and_binomial_errors():
    sel = parse_selection({"r_min": 1, "r_max": 60, "z_min": -70, "z_max": 150,
                           "mass_window": [0.45, 0.55],
                           "profile": {"kind": "flat", "eps0": 0.7}}, None, GEOM)
    blk = _run("pipipi0", 8000, 6, sel=sel, mass=0.5, p_llp=1.5, r_range=(0.5, 80))
    rows = cutflow(blk.event)
    assert [r[0] for r in rows] == list(CUT_STEPS)
    n_prev = blk.n
    for step, n_pass, eff, err in rows:
        col = blk.event[f"cut_{step}"]
        assert n_pass == int(col.sum())
        assert eff == pytest.approx(n_pass / n_prev)
        assert err == pytest.approx(math.sqrt(eff * (1 - eff) / n_prev))
        n_prev = n_pass
    # cumulative flags
    for a, b in itertools.pairwise(CUT_STEPS):
        assert not np.any(blk.event[f"cut_{b}"] & ~blk.event[f"cut_{a}"])
    # the flat profile's acceptance: vertex step efficiency is 0.7 within 4 binomial sigma
    step = {r[0]: r for r in rows}["vertex"]
    assert abs(step[2] - 0.7) < 4 * math.sqrt(0.7 * 0.3 / rows[1][1])


def test_draw_geometry(tmp_path):
    out = draw_geometry(GEOM, tmp_path / "g.png")
    assert out.exists() and out.stat().st_size > 10000


def test_photon_only_and_empty_blocks():
    blk = _run("gg", 500, 7, mass=0.3, p_llp=1.0, r_range=(1, 50))
    # no tracks: nothing to find, no tracker vertex; the window applies to the true decay point
    assert blk.event["cut_tracks"].all()
    assert np.all(blk.groups["trk"][0] == 0)
    assert np.isnan(blk.event["vtx_r"]).all()
    _, dau = blk.groups["dau"]
    off = blk.offsets("dau")[:-1]
    r_true = np.hypot(dau["vx"][off], dau["vy"][off])
    z_true = dau["vz"][off]
    inside = ((r_true >= SEL.r_min) & (r_true <= SEL.r_max) & (z_true >= SEL.z_min)
              & (z_true <= SEL.z_max))
    np.testing.assert_array_equal(blk.event["cut_fiducial"], inside)
    both = blk.event["rec_nclu"] == 2
    assert both.mean() > 0.5 and np.all(blk.event["rec_m"][both] > 0)
    empty = make_block(np.random.default_rng(1), 0, "pipipi0", 0.5, 1.0, r=5.0)
    respond(empty, GEOM, SEL, np.random.default_rng(2))
    assert all(len(v) == 0 for v in empty.event.values())
    assert cutflow(empty.event)[0][1:] == (0, 0.0, 0.0)


def test_vertex_line_error_solves_the_two_line_system():
    # two lines n_i . V = a_i (n_i unit normals); a shift of the offsets by d_i moves the
    # intersection by N^-1 d (checked with numpy.linalg.solve); |dV| grows as 1/|sin(angle)|
    rng = np.random.default_rng(13)
    for _ in range(50):
        p1, p2 = rng.uniform(0, 2 * np.pi, 2)
        if abs(math.sin(p2 - p1)) < 1e-3:
            continue
        d = rng.normal(0, 0.01, 2)
        nmat = np.array([[-math.sin(p1), math.cos(p1)], [-math.sin(p2), math.cos(p2)]])
        np.testing.assert_allclose(vertex_line_error(p1, p2, d[0], d[1]),
                                   np.linalg.solve(nmat, d), rtol=1e-9, atol=1e-15)
    # lines at -alpha/2 and +alpha/2 about the x axis: opposite offsets (d, -d) move the
    # intersection along the bisector by d / sin(alpha/2); equal offsets across it by
    # d / cos(alpha/2)
    for alpha in (1.0, 0.1, 0.01):
        dx, dy = vertex_line_error(-alpha / 2, alpha / 2, 0.01, -0.01)
        assert (abs(dx), dy) == pytest.approx((0.01 / math.sin(alpha / 2), 0.0), abs=1e-12)
        dx, dy = vertex_line_error(-alpha / 2, alpha / 2, 0.01, 0.01)
        assert (dx, abs(dy)) == pytest.approx((0.0, 0.01 / math.cos(alpha / 2)), abs=1e-12)


@pytest.mark.parametrize("kind,points", [
    ("linear", None),
    ("tabulated", [[5.0, 0.8], [20.0, 0.9], [60.0, 0.1]]),
])
def test_profile_efficiency_shapes(kind, points):
    prof = {"kind": kind, "eps0": 0.8}
    if points is not None:
        prof["points"] = points
    sel = parse_selection({"r_min": 1, "r_max": 80, "z_min": -50, "z_max": 100, "profile": prof})
    r = np.array([0.0, 5.0, 10.0, 30.0, 50.0, 70.0, 200.0, np.nan])
    got = profile_efficiency(sel.profile, r)
    if kind == "linear":
        # the linear profile: eps0 at r_min = 1 falling to 0 at r_max = 80
        exp = 0.8 * np.clip((80.0 - r) / (80.0 - 1.0), 0, 1)
    else:
        rs, es = np.array(points).T
        exp = 0.8 * np.interp(r, rs, es)
    np.testing.assert_allclose(got[:-1], exp[:-1], rtol=1e-12)
    assert got[-1] == 0.0


def test_hits_profile_as_radial_table_for_stiff_radial_pairs():
    # two stiff (10 GeV), nearly radial, opposite-charge tracks from (r, 0, 0): vtx_w of the
    # "hits" profile equals the radial table's value at r (no interpolation: tabulated at r)
    sel = parse_selection({"r_min": 0.5, "r_max": 100, "z_min": -70, "z_max": 150,
                           "full_hits": 40, "profile": {"kind": "hits", "eps0": 0.9}},
                          None, GEOM)
    radii = np.array([1.2, 3.0, 5.0, 11.0, 15.0, 30.5, 60.3, 95.2])
    n = len(radii)
    blk = Block(n=n)
    px = np.column_stack([np.full(n, 10.0), np.full(n, 10.0)]).reshape(-1)
    py = np.column_stack([np.full(n, 0.3), np.full(n, -0.3)]).reshape(-1)
    pz = np.zeros(2 * n)
    cols = {"pdg": np.tile(np.array([211, -211], np.int32), n), "q": np.tile([1.0, -1.0], n),
            "status": np.ones(2 * n, np.int32), "mother": np.full(2 * n, -1, np.int32),
            "px": px, "py": py, "pz": pz, "e": np.sqrt(px**2 + py**2 + M_PI**2),
            "vx": np.repeat(radii, 2), "vy": np.zeros(2 * n), "vz": np.zeros(2 * n)}
    blk.add_group("dau", np.full(n, 2), cols)
    respond(blk, GEOM, sel, np.random.default_rng(3))
    table = radial_profile(sel.profile, GEOM, sel.full_hits, radii)
    assert table.kind == "tabulated" and table.r == tuple(radii)
    ok = blk.event["cut_fiducial"]
    assert ok.all()
    np.testing.assert_allclose(blk.event["vtx_w"], 0.9 * np.array(table.eps), rtol=1e-12)
    # a radius-only profile passes through unchanged
    flat = parse_selection({"r_min": 1, "r_max": 80, "z_min": -50, "z_max": 100}).profile
    assert radial_profile(flat, GEOM, 20, radii) is flat
