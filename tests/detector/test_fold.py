"""Tests of toymc.detector.fold and the profile type: window geometry, fold integrals, limits, a Monte Carlo check.

References used below:
* survival probability P(L > x0) = exp(-M x0 Gamma/|p|) = exp(-x0/lambda),
  lambda = beta gamma c tau (PDG review "Kinematics", sec. 40.4.1, eq. 40.14 in
  the 2012 booklet numbering), hence P(L1 < L < L2) = exp(-L1/lambda) -
  exp(-L2/lambda);
* numerical integration and root finding from scipy (scipy.integrate.quad,
  scipy.optimize.brentq), independent of the kernels under test;
* binomial standard deviation sqrt(p (1 - p)/n) (PDG review "Statistics",
  binomial distribution).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats
from scipy.integrate import quad
from scipy.optimize import brentq

from toymc.detector import fold
from toymc.detector.fold import (
    fold_efficiency,
    fold_probability,
    line_window,
)
from toymc.detector.profile import Profile, profile_efficiency
from toymc.errors import ConfigError

WIN = (1.0, 30.0, -20.0, 35.0)  # r_min, r_max, z_min, z_max in cm (demo numbers)

PROFILES = {
    "flat": Profile("flat", eps0=0.8),
    "linear": Profile("linear"),
    "linear06": Profile("linear", eps0=0.6),
    # nodes below r_min (constant extension inside the window is not used here),
    # inside the window, and one beyond r_max
    "tabulated": Profile("tabulated", r=(0.5, 2.0, 5.0, 12.0, 40.0), eps=(0.2, 1.0, 0.7, 0.3, 0.0)),
    # table narrower than the window: constant extension at both ends
    "tab_narrow": Profile("tabulated", r=(3.0, 8.0, 20.0), eps=(0.9, 0.5, 0.1)),
}

# (name, origin, direction): on/off axis, forward/backward, z-limited, beam axis,
# two-interval lines
GEOMETRIES = [
    ("on_axis_fwd", (0.0, 0.0, 0.0), (0.6, 0.3, 0.5)),
    ("on_axis_bwd", (0.0, 0.0, 0.0), (-0.4, -0.7, -0.6)),
    ("off_axis_fwd", (0.05, -0.03, 0.2), (1.0, 0.3, 0.5)),
    ("off_axis_bwd", (0.05, -0.03, 0.2), (-0.2, -1.0, -0.4)),
    ("z_limited_fwd", (0.04, 0.02, 0.5), (0.1, 0.05, 1.0)),
    ("z_limited_bwd", (-0.03, 0.05, -0.5), (0.1, -0.1, -1.0)),
    ("beam_axis_dir", (1.5, 0.5, 0.0), (0.0, 0.0, 1.0)),
    ("inside_two_intervals", (3.0, 0.0, 0.0), (-1.0, 0.1, 0.2)),
    ("inside_through_closest", (3.0, 0.0, 0.0), (-1.0, 0.6, 0.1)),
    ("outside_inward", (40.0, 0.0, 5.0), (-1.0, 0.02, 0.0)),
]


# ----------------------------------------------------------------- independent references


def _unit(u):
    u = np.asarray(u, dtype=float)
    return u / np.linalg.norm(u)


def _eps_ref(r, prof, r_min=WIN[0], r_max=WIN[1]):
    """eps(r) written directly from the profile definitions (0 outside the window)."""
    r = np.asarray(r, dtype=float)
    if prof.kind == "flat":
        e = np.full_like(r, prof.eps0)
    elif prof.kind == "linear" and not prof.r:
        e = prof.eps0 * (r_max - r) / (r_max - r_min)
    else:  # a table; a linear one is (r0, 1), (r1, 0)
        e = prof.eps0 * np.interp(r, prof.r, prof.eps)  # constant beyond the table ends
    return np.where((r > r_min) & (r < r_max), e, 0.0)


def _line(o, u):
    x0, y0, z0 = o
    ux, uy, uz = _unit(u)

    def rad(L):
        return np.hypot(x0 + L * ux, y0 + L * uy)

    def zz(L):
        return z0 + L * uz

    return rad, zz


def _roots_on_grid(f, grid):
    vals = f(grid)
    out = list(grid[vals == 0.0])
    for i in np.nonzero(np.sign(vals[:-1]) * np.sign(vals[1:]) < 0)[0]:
        out.append(brentq(f, grid[i], grid[i + 1], xtol=1e-14, rtol=1e-15))
    return out


_GRID = np.concatenate((np.linspace(0.0, 200.0, 40001), np.geomspace(200.0, 1e6, 400)[1:]))


def _ref_window(o, u, win=WIN):
    """Window intervals from brentq on r(L) - R and z(L) - Z (no closed forms)."""
    r_min, r_max, z_min, z_max = win
    rad, zz = _line(o, u)
    pts = [0.0]
    for f in (lambda L: rad(L) - r_min, lambda L: rad(L) - r_max,
              lambda L: zz(L) - z_min, lambda L: zz(L) - z_max):
        pts += _roots_on_grid(f, _GRID)
    pts = sorted(set(pts)) + [_GRID[-1]]
    out = []
    for a, b in zip(pts[:-1], pts[1:]):
        m = 0.5 * (a + b)
        if r_min < rad(m) < r_max and z_min < zz(m) < z_max:
            if out and abs(out[-1][1] - a) < 1e-12:
                out[-1][1] = b
            else:
                out.append([a, b])
    return out


def _ref_fold(o, u, bg, ctau, prof, win=WIN, moment=None):
    """quad of (1/lam) exp(-L/lam) eps(r(L)) over the brentq window, split at kinks.

    With ``moment = k`` the integrand is ``L^k eps(r(L))`` instead.
    """
    lam = bg * ctau
    rad, _ = _line(o, u)
    ux, uy, _ = _unit(u)

    def f(L):
        e = float(_eps_ref(rad(L), prof, win[0], win[1]))
        if moment is None:
            return math.exp(-L / lam) / lam * e
        return L**moment * e

    total = 0.0
    for a, b in _ref_window(o, u, win):
        cuts = [a, b]
        for rn in prof.r:
            cuts += [x for x in _roots_on_grid(lambda L, rn=rn: rad(L) - rn, _GRID) if a < x < b]
        if ux or uy:  # closest approach to the axis: r(L) has its minimum there
            ls = -(o[0] * ux + o[1] * uy) / (ux * ux + uy * uy)
            if a < ls < b:
                cuts.append(ls)
        if moment is None:
            cuts += [a + lam * k for k in (0.5, 1, 2, 4, 8, 16, 32, 64) if a + lam * k < b]
        cuts = sorted(cuts)
        for s, e in zip(cuts[:-1], cuts[1:]):
            total += quad(f, s, e, epsabs=0.0, epsrel=1e-13, limit=400)[0]
    return total


# ----------------------------------------------------------------------------- Profile


@pytest.mark.parametrize(
    "kwargs",
    [
        dict(kind="gaussian"),
        dict(kind="flat", eps0=1.5),
        dict(kind="linear", eps0=-0.1),
        dict(kind="flat", r=(1.0, 2.0), eps=(1.0, 1.0)),
        dict(kind="tabulated", r=(1.0, 3.0, 2.0), eps=(1.0, 0.5, 0.2)),
        dict(kind="tabulated", r=(1.0, 1.0), eps=(1.0, 0.5)),
        dict(kind="tabulated", r=(1.0, 2.0), eps=(1.0, 1.2)),
        dict(kind="tabulated", r=(1.0, 2.0), eps=(-0.1, 0.5)),
        dict(kind="tabulated", r=(1.0, 2.0, 3.0), eps=(1.0, 0.5)),
        dict(kind="tabulated", r=(1.0,), eps=(1.0,)),
        dict(kind="tabulated", r=(1.0, float("nan")), eps=(1.0, 0.5)),
        dict(kind="tabulated"),
        dict(kind="hits", r=(1.0, 2.0), eps=(1.0, 1.0)),
        dict(kind="linear", r=(1.0, 2.0), eps=(1.0, 0.5)),
        dict(kind="linear", r=(1.0, 2.0, 3.0)),
        dict(kind="linear", r=(2.0, 1.0)),
    ],
)
def test_profile_rejects_bad_input(kwargs):
    with pytest.raises(ConfigError):
        Profile(**kwargs)


@pytest.mark.parametrize(
    "win",
    [(2.0, 2.0, -1.0, 1.0), (3.0, 2.0, -1.0, 1.0), (-1.0, 2.0, -1.0, 1.0), (1.0, 2.0, 1.0, 1.0),
     (1.0, float("inf"), -1.0, 1.0), (1.0, 2.0, float("nan"), 1.0)],
)
def test_window_rejects_bad_input(win):
    with pytest.raises(ConfigError):
        fold.check_window(*win)
    with pytest.raises(ConfigError):
        fold_probability(0, 0, 0, 1, 0, 0, 1.0, 1.0, *win, PROFILES["flat"])


def test_bad_event_inputs():
    p = PROFILES["linear"]
    with pytest.raises(ConfigError):
        fold_probability(0, 0, 0, 1, 0, 0, 1.0, 0.0, *WIN, p)  # ctau = 0
    with pytest.raises(ConfigError):
        fold_probability(0, 0, 0, 1, 0, 0, 1.0, -2.0, *WIN, p)
    with pytest.raises(ConfigError):
        fold_probability(0, 0, 0, 1, 0, 0, -1.0, 1.0, *WIN, p)  # betagamma < 0
    with pytest.raises(ConfigError):
        fold_probability(0, 0, 0, 0, 0, 0, 1.0, 1.0, *WIN, p)  # no direction
    with pytest.raises(ConfigError):
        fold_probability([0, 0], [0, 0, 0], 0, 1, 0, 0, 1.0, 1.0, *WIN, p)
    with pytest.raises(ConfigError):
        fold_probability(0, 0, np.nan, 1, 0, 0, 1.0, 1.0, *WIN, p)
    with pytest.raises(ConfigError):
        fold_probability(0, 0, 0, 1, 0, 0, 1.0, 1.0, *WIN, "flat")  # not a Profile
    with pytest.raises(ConfigError):
        fold_efficiency(0, 0, 0, 1, 0, 0, 1.0, [1.0, np.inf], *WIN, p)
    with pytest.raises(ConfigError):
        fold_efficiency([0, 0], 0, 0, 1, 0, 0, 1.0, [1.0], *WIN, p, weights=[1.0])


@pytest.mark.parametrize("name", sorted(PROFILES))
def test_profile_efficiency_matches_definition(name):
    prof = PROFILES[name]
    r = np.linspace(0.0, 45.0, 2001)
    np.testing.assert_allclose(profile_efficiency(prof, r, window=WIN[:2]), _eps_ref(r, prof),
                               rtol=1e-14, atol=1e-15)


def test_linear_profile_with_radii():
    # the form a [selection] stores: eps0 at r0 falling to 0 at r1, eps0 inside r0, 0
    # beyond r1, in the detector's evaluation and in the fold (same as the two-point table)
    prof = Profile("linear", eps0=0.7, r=(5.0, 20.0))
    assert prof.eps == (1.0, 0.0)
    r = np.array([0.5, 5.0, 8.0, 12.5, 20.0, 25.0])
    want = 0.7 * np.clip((20.0 - r) / 15.0, 0.0, 1.0)
    np.testing.assert_allclose(profile_efficiency(prof, r), want, rtol=1e-14, atol=1e-15)
    np.testing.assert_allclose(profile_efficiency(prof, r, window=WIN[:2]), _eps_ref(r, prof),
                               rtol=1e-14, atol=1e-15)
    table = Profile("tabulated", eps0=0.7, r=(5.0, 20.0), eps=(1.0, 0.0))
    for o, u in ((0.0, 0.0, 0.0), (0.6, 0.3, 0.5)), ((2.0, -1.0, 3.0), (-0.2, 1.0, 0.1)):
        got = fold_probability(*o, *u, 1.3, 12.0, *WIN, prof)[0]
        assert got == fold_probability(*o, *u, 1.3, 12.0, *WIN, table)[0]
        assert got == pytest.approx(_ref_fold(o, u, 1.3, 12.0, prof), rel=1e-8)


def test_radius_profile_needed():
    # the fold and a linear profile without radii need the window; "hits" needs hit counts
    with pytest.raises(ConfigError):
        profile_efficiency(Profile("linear"), [1.0, 2.0])
    with pytest.raises(ConfigError):
        fold_probability(0, 0, 0, 1, 0, 0, 1.0, 1.0, *WIN, Profile("hits", eps0=0.9))
    got = profile_efficiency(Profile("hits", eps0=0.9), [3.0, np.nan, 3.0],
                             [10, 25, 25], [20, 20, 5], full_hits=20)
    np.testing.assert_allclose(got, [0.9 * 0.5, 0.0, 0.9 * 0.25], rtol=1e-15)


def test_public_names():
    assert sorted(n for n in dir(fold) if not n.startswith("_")) == sorted(fold.__all__)


# ----------------------------------------------------------------------------- windows


@pytest.mark.parametrize("name,o,u", GEOMETRIES, ids=[g[0] for g in GEOMETRIES])
def test_line_window_vs_root_finding(name, o, u):
    lin, lout = line_window(*o, *u, *WIN)
    got = [(a, b) for a, b in zip(lin[0], lout[0]) if b > a]
    ref = _ref_window(o, u)
    assert len(got) == len(ref), (got, ref)
    for (a, b), (ra, rb) in zip(got, ref):
        assert a == pytest.approx(ra, rel=1e-10, abs=1e-10)
        assert b == pytest.approx(rb, rel=1e-10, abs=1e-10)
    expected_count = {"inside_two_intervals": 2, "outside_inward": 2}.get(name, 1)
    assert len(got) == expected_count


def test_line_window_empty_cases():
    # along the beam axis from the axis: r = 0 < r_min, never inside
    lin, lout = line_window(0.0, 0.0, 0.0, 0.0, 0.0, 1.0, *WIN)
    assert np.all(lin == lout)
    # outward from outside r_max
    lin, lout = line_window(40.0, 0.0, 0.0, 1.0, 0.0, 0.0, *WIN)
    assert np.all(lin == lout)
    # transverse flight outside the z slab
    lin, lout = line_window(0.0, 0.0, 50.0, 1.0, 0.0, 0.0, *WIN)
    assert np.all(lin == lout)
    p = fold_probability([0.0, 40.0, 0.0], [0.0, 0.0, 0.0], [0.0, 0.0, 50.0],
                         [0.0, 1.0, 1.0], [0.0, 0.0, 0.0], [1.0, 0.0, 0.0], 1.0, 5.0,
                         *WIN, PROFILES["flat"])
    assert np.all(p == 0.0)


# ----------------------------------------------------------------------------- fold vs quad


@pytest.mark.parametrize("ctau", [0.02, 2.0, 300.0])
@pytest.mark.parametrize("pname", sorted(PROFILES))
@pytest.mark.parametrize("name,o,u", GEOMETRIES, ids=[g[0] for g in GEOMETRIES])
def test_fold_vs_quad(name, o, u, pname, ctau):
    bg = 1.7
    prof = PROFILES[pname]
    got = fold_probability(*o, *u, bg, ctau, *WIN, prof)[0]
    ref = _ref_fold(o, u, bg, ctau, prof)
    assert np.isfinite(got)
    assert got == pytest.approx(ref, rel=1e-8, abs=1e-300)


WIN_AXIS = (0.0, 30.0, -20.0, 35.0)  # window down to the beam axis
AXIS_GEOMETRIES = [
    # passes 5e-4 cm from the axis: r(L) has a sharp minimum inside the window
    ("near_axis_pass", (0.05, 0.0, 0.0), (-1.0, 0.01, 0.2)),
    # through the axis exactly (q = 0): r(L) = |L - L*| sin(theta), closed form
    ("through_axis", (0.05, 0.0, 0.0), (-1.0, 0.0, 0.3)),
    ("origin_inside_fwd", (0.05, -0.03, 0.2), (1.0, 0.3, 0.5)),
]
AXIS_PROFILES = {
    "linear": Profile("linear"),
    "tab_axis": Profile("tabulated", r=(0.0, 0.02, 0.1, 5.0, 30.0),
                        eps=(0.3, 1.0, 0.8, 0.5, 0.1)),
}


@pytest.mark.parametrize("ctau", [1e-3, 0.05, 20.0])
@pytest.mark.parametrize("pname", sorted(AXIS_PROFILES))
@pytest.mark.parametrize("name,o,u", AXIS_GEOMETRIES, ids=[g[0] for g in AXIS_GEOMETRIES])
def test_fold_vs_quad_window_to_axis(name, o, u, pname, ctau):
    bg = 1.3
    prof = AXIS_PROFILES[pname]
    got = fold_probability(*o, *u, bg, ctau, *WIN_AXIS, prof)[0]
    ref = _ref_fold(o, u, bg, ctau, prof, win=WIN_AXIS)
    assert got == pytest.approx(ref, rel=1e-8, abs=1e-300)


def test_fold_vectorised_equals_single():
    rng = np.random.default_rng(11)
    n = 50
    o = rng.normal(0.0, 0.05, (2, n))
    u = rng.normal(size=(3, n))
    bg = rng.uniform(0.5, 5.0, n)
    prof = PROFILES["tabulated"]
    many = fold_probability(o[0], o[1], 0.3, *u, bg, 4.0, *WIN, prof)
    one = [fold_probability(o[0, i], o[1, i], 0.3, *u[:, i], bg[i], 4.0, *WIN, prof)[0]
           for i in range(n)]
    np.testing.assert_array_equal(many, one)


@pytest.mark.parametrize("ctau", [0.05, 3.0, 80.0, 1e5])
@pytest.mark.parametrize("u", [(0.6, 0.3, 0.5), (0.1, 0.05, 1.0), (-0.5, 0.2, -0.3)])
def test_survival_probability_on_axis(u, ctau):
    """Flat eps = 1, origin on the axis: P = exp(-L1/lam) - exp(-L2/lam) (PDG Kinematics)."""
    r_min, r_max, z_min, z_max = WIN
    ux, uy, uz = _unit(u)
    st_ = math.hypot(ux, uy)
    l1 = r_min / st_
    l2 = r_max / st_
    if uz > 0:
        l2 = min(l2, z_max / uz)
    elif uz < 0:
        l2 = min(l2, z_min / uz)
    lin, lout = line_window(0.0, 0.0, 0.0, ux, uy, uz, *WIN)
    assert lin[0, 0] == pytest.approx(l1, rel=1e-14)
    assert lout[0, 0] == pytest.approx(l2, rel=1e-14)
    bg = 2.5
    lam = bg * ctau
    got = fold_probability(0.0, 0.0, 0.0, ux, uy, uz, bg, ctau, *WIN, Profile("flat"))[0]
    assert got == pytest.approx(math.exp(-l1 / lam) - math.exp(-l2 / lam), rel=1e-12)


# ----------------------------------------------------------------------------- limits


@pytest.mark.parametrize("pname", ["linear", "tabulated", "tab_narrow"])
def test_short_lifetime_limit_origin_inside(pname):
    """lam -> 0 with the origin in the window: P -> eps(r(0)) + lam eps'(0) + O(lam^2).

    Derived: Int_0 (1/lam) e^{-L/lam} g(L) dL = g(0) + lam g'(0) + lam^2 g''(0) + ...
    (repeated integration by parts).  With lam = 1e-9 cm the first correction is
    already below 1e-8 relative, so P must equal eps(r0) to that accuracy.
    """
    prof = PROFILES[pname]
    o = (4.0, 1.0, 0.0)
    got = fold_probability(*o, 0.3, 0.4, 0.2, 1e-3, 1e-6, *WIN, prof)[0]
    eps0 = _eps_ref(math.hypot(o[0], o[1]), prof)
    assert got == pytest.approx(float(eps0), rel=1e-8)


def test_short_lifetime_limit_laplace():
    """lam -> 0, window starting at L_in > 0, linear profile, off-axis origin.

    Derived (repeated integration by parts): e^{L_in/lam} P = g + lam g1 + lam^2 g2
    + lam^3 g3 + ... at L = L_in (gk = k-th derivative of g), with
    g = eps0 (r_max - r)/(r_max - r_min) and r1 = (a L + b)/r, r2 = (a - r1^2)/r,
    r3 = -3 r1 r2/r (a = ux^2 + uy^2, b = x0 ux + y0 uy).  The remainder after the
    lam^2 term is lam^3 g3 up to the variation of g3 over a few lam: bounded here
    by 2 lam^3 |g3|.
    """
    r_min, r_max = WIN[0], WIN[1]
    x0, y0, z0 = 0.6, 0.2, 0.1
    ux, uy, uz = _unit((0.3, 1.0, 0.5))
    lin, _ = line_window(x0, y0, z0, ux, uy, uz, *WIN)
    l_in = lin[0, 0]
    lam = l_in / 200.0
    a = ux * ux + uy * uy
    b = x0 * ux + y0 * uy
    r = math.hypot(x0 + l_in * ux, y0 + l_in * uy)
    assert r == pytest.approx(r_min, rel=1e-12)
    r1 = (a * l_in + b) / r
    r2 = (a - r1 * r1) / r
    r3 = -3.0 * r1 * r2 / r
    k = -1.0 / (r_max - r_min)
    g, g1, g2, g3 = k * (r - r_max), k * r1, k * r2, k * r3
    got = fold_probability(x0, y0, z0, ux, uy, uz, 1.0, lam, *WIN, Profile("linear"))[0]
    scaled = got * math.exp(l_in / lam)
    bound = 2.0 * lam**3 * abs(g3)
    assert abs(scaled - (g + lam * g1 + lam**2 * g2)) <= bound
    # the lam^2 term is resolved: without it the same bound fails
    assert abs(scaled - (g + lam * g1)) > bound


@pytest.mark.parametrize("pname", ["linear", "tabulated", "flat"])
@pytest.mark.parametrize("name,o,u", [g for g in GEOMETRIES if g[0] in (
    "off_axis_fwd", "z_limited_bwd", "inside_two_intervals", "outside_inward")])
def test_long_lifetime_limit(name, o, u, pname):
    """lam -> inf: lam P = I0 - I1/lam + I2/(2 lam^2) - ..., I_k = Int_window L^k eps dL.

    Derived from e^{-x} = 1 - x + x^2/2 - x^3 e^{-xi}/6 (Taylor with Lagrange
    remainder, x >= 0), so |lam P - (I0 - I1/lam + I2/(2 lam^2))| <= I3/(6 lam^3).
    """
    prof = PROFILES[pname]
    i0, i1, i2, i3 = (_ref_fold(o, u, 1.0, 1.0, prof, moment=k) for k in range(4))
    # the extreme end of the range: ctau = 1e9 cm, beta gamma = 1e4
    lam = 1e13
    got = fold_probability(*o, *u, 1e4, 1e9, *WIN, prof)[0]
    assert got * lam == pytest.approx(i0, rel=1e-9)
    # a moderate lam where the first three terms are needed
    lam = 400.0
    got = fold_probability(*o, *u, 2.0, lam / 2.0, *WIN, prof)[0]
    series = i0 - i1 / lam + i2 / (2 * lam**2)
    assert abs(got * lam - series) <= i3 / (6 * lam**3) + 1e-12 * i0
    assert abs(got * lam - (i0 - i1 / lam)) > i3 / (6 * lam**3)


# ----------------------------------------------------------------------------- Monte Carlo


@pytest.mark.parametrize("case,pname,spread", [(0, "tabulated", "beam_spot"),
                                                (1, "linear", "wide"),
                                                (2, "linear", "beam_spot"),
                                                (3, "tabulated", "wide")])
def test_monte_carlo_decays(case, pname, spread):
    """Sample exponential decay lengths, accept with eps(r), compare with the fold.

    Pulls z = (k/n - <P>)/sqrt(<P>(1 - <P>)/n) at 12 ctau points (binomial standard
    deviation, PDG review "Statistics"; the spread of P over events only makes the
    true variance smaller, so the pulls are at most unit-width).  Each point must
    lie within 3 sigma as long as the family of 12 allows it: the assertion is
    (a) sum z^2 below the 99.9% quantile of chi^2(12) and (b) max |z| below the
    Bonferroni threshold for a family-wise rate of 0.1% (norm.isf(0.0005/12) =
    3.9), so a correct fold fails with probability ~0.2% per case, while a 3%
    bias in the fold at these sample sizes (pulls of 5-20) fails surely.
    """
    prof = PROFILES[pname]
    rng = np.random.default_rng(np.random.SeedSequence(20261201, spawn_key=(case,)))
    n_dir, n_rep = 4000, 5
    u = rng.normal(size=(3, n_dir))
    u /= np.linalg.norm(u, axis=0)
    if spread == "beam_spot":
        o = np.stack((rng.normal(0.0, 0.05, n_dir), rng.normal(0.0, 0.01, n_dir),
                      rng.normal(0.0, 1.0, n_dir)))
    else:  # production points spread through the volume: inward lines, two intervals
        o = np.stack((rng.uniform(-35, 35, n_dir), rng.uniform(-35, 35, n_dir),
                      rng.uniform(-25, 40, n_dir)))
    bg = rng.uniform(0.5, 4.0, n_dir)
    grid = np.geomspace(0.03, 3e4, 12)
    eff, _ = fold_efficiency(*o, *u, bg, grid, *WIN, prof)
    n = n_dir * n_rep
    pulls = []
    for ctau, p in zip(grid, eff):
        L = rng.exponential(np.repeat(bg * ctau, n_rep))
        x = np.repeat(o[0], n_rep) + L * np.repeat(u[0], n_rep)
        y = np.repeat(o[1], n_rep) + L * np.repeat(u[1], n_rep)
        z = np.repeat(o[2], n_rep) + L * np.repeat(u[2], n_rep)
        inside = (z > WIN[2]) & (z < WIN[3])
        acc = inside & (rng.uniform(size=n) < _eps_ref(np.hypot(x, y), prof))
        k = int(acc.sum())
        sigma = math.sqrt(p * (1.0 - p) / n)
        pulls.append((k / n - p) / sigma)
    pulls = np.array(pulls)
    assert np.sum(pulls**2) < stats.chi2.ppf(0.999, len(pulls)), pulls
    assert np.max(np.abs(pulls)) < stats.norm.isf(0.0005 / len(pulls)), pulls


# ----------------------------------------------------------------------------- efficiency


def test_fold_efficiency_mean_and_error():
    rng = np.random.default_rng(5)
    n = 300
    o = rng.normal(0.0, 0.05, (2, n))
    u = rng.normal(size=(3, n))
    bg = rng.uniform(0.5, 5.0, n)
    prof = PROFILES["tabulated"]
    grid = [0.5, 7.0, 120.0]
    eff, err = fold_efficiency(o[0], o[1], 0.0, *u, bg, grid, *WIN, prof)
    for k, ct in enumerate(grid):
        p = fold_probability(o[0], o[1], 0.0, *u, bg, ct, *WIN, prof)
        assert eff[k] == pytest.approx(np.mean(p), rel=1e-13)
        assert err[k] == pytest.approx(np.std(p, ddof=1) / math.sqrt(n), rel=1e-12)
    # integer weights: the weighted mean equals the mean over duplicated events
    w = rng.integers(1, 4, n)
    effw, _ = fold_efficiency(o[0], o[1], 0.0, *u, bg, grid, *WIN, prof, weights=w)
    rep = [np.repeat(v, w) for v in (o[0], o[1], u[0], u[1], u[2], bg)]
    effr, _ = fold_efficiency(rep[0], rep[1], 0.0, *rep[2:5], rep[5], grid, *WIN, prof)
    np.testing.assert_allclose(effw, effr, rtol=1e-12)


# ----------------------------------------------------------------------------- properties

_PROPERTY_PROFILES = [Profile("flat"), Profile("linear", eps0=0.7), PROFILES["tabulated"],
                      PROFILES["tab_narrow"]]


@settings(max_examples=300, deadline=None)
@given(
    x0=st.floats(-40.0, 40.0), y0=st.floats(-40.0, 40.0), z0=st.floats(-30.0, 45.0),
    ux=st.floats(-1.0, 1.0), uy=st.floats(-1.0, 1.0), uz=st.floats(-1.0, 1.0),
    log_ctau=st.floats(-6.0, 9.0), log_bg=st.floats(-3.0, 4.0),
    k=st.integers(0, len(_PROPERTY_PROFILES) - 1),
    r_min=st.sampled_from([0.0, 0.02, 1.0, 4.0]), dr=st.floats(0.05, 100.0),
    z_min=st.floats(-50.0, 0.0), dz=st.floats(0.1, 100.0),
)
def test_fold_in_unit_interval(x0, y0, z0, ux, uy, uz, log_ctau, log_bg, k, r_min, dr,
                               z_min, dz):
    if ux == uy == uz == 0.0:
        ux = 1.0
    prof = _PROPERTY_PROFILES[k]
    args = (x0, y0, z0, ux, uy, uz, 10.0**log_bg, 10.0**log_ctau, r_min, r_min + dr,
            z_min, z_min + dz)
    p = fold_probability(*args, prof)[0]
    top = fold_probability(*args, Profile("flat"))[0]
    assert np.isfinite(p) and np.isfinite(top)
    assert 0.0 <= p <= 1.0
    assert 0.0 <= top <= 1.0
    assert p <= top * (1.0 + 1e-12)  # eps <= 1


@pytest.mark.parametrize("ctau,bg", [(1e-6, 1e-3), (1e-6, 1e4), (1e9, 1e-3), (1e9, 1e4)])
def test_extreme_corners_finite(ctau, bg):
    """Corners of the ctau (1e-6..1e9 cm) x beta gamma (1e-3..1e4) range, all geometries."""
    o = np.array([g[1] for g in GEOMETRIES + AXIS_GEOMETRIES]).T
    u = np.array([g[2] for g in GEOMETRIES + AXIS_GEOMETRIES]).T
    for prof in list(PROFILES.values()) + list(AXIS_PROFILES.values()):
        for win in (WIN, WIN_AXIS):
            p = fold_probability(*o, *u, bg, ctau, *win, prof)
            assert np.all(np.isfinite(p)) and np.all((p >= 0.0) & (p <= 1.0))
            eff, err = fold_efficiency(*o, *u, bg, [ctau], *win, prof)
            assert np.isfinite(eff[0]) and np.isfinite(err[0])
