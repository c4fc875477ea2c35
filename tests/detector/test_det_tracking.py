"""Tests of toymc.detector.helix and toymc.detector.tracking: helix, crossings, resolution
formulas."""

import math

import numpy as np
import pytest
from detector_synth import GEOMETRIES
from scipy import constants as sc
from scipy.integrate import solve_ivp

from toymc.config.geometry import load_geometry
from toymc.detector.helix import helix_centre, helix_max_radius, helix_radius, layer_crossings
from toymc.detector.tracking import curvature_resolution, highland_theta0, track_kernel
from toymc.physics.constants import M_PI

GEOM = load_geometry(GEOMETRIES / "demo.toml")
LAYERS = GEOM.tracking_layers()


def test_helix_radius_against_si_units():
    # p = |q| e B R in SI units; p [kg m/s] = pT[GeV] * 1e9 e / c (scipy.constants, CODATA)
    for pt, q, b in ((1.0, 1, 1.5), (0.2, -1, 1.5), (0.35, 2, 1.0)):
        r_m = pt * 1e9 * sc.e / sc.c / (abs(q) * sc.e * b)
        assert helix_radius(pt, q, b) == pytest.approx(100.0 * r_m, rel=1e-12)
    # PDG review "Kinematics": pT [GeV] = 0.29979 B[T] R[m]
    assert helix_radius(0.29979, 1, 1.0) == pytest.approx(100.0, rel=1e-5)


def _lorentz_path(x0, px, q, bfield, s_end):
    """Integrate du/ds = (q e / p) u x B (SI), positions in cm, s = 3D path length."""
    p = np.linalg.norm(px)
    p_si = p * 1e9 * sc.e / sc.c
    kappa = q * sc.e * bfield / p_si / 100.0  # per cm

    def rhs(_s, y):
        u = y[3:]
        return np.concatenate([u, kappa * np.cross(u, [0.0, 0.0, 1.0])])

    y0 = np.concatenate([x0, np.asarray(px) / p])
    return solve_ivp(rhs, (0, s_end), y0, rtol=1e-10, atol=1e-10, dense_output=True)


@pytest.mark.parametrize("q", [1.0, -1.0])
def test_helix_equations_match_lorentz_force(q):
    # REFERENCES helix: x = x0 + hR[sin(phi0 + h s/R) - sin phi0], y = y0 - hR[cos(..) - cos phi0],
    # z = z0 + s tan(lambda), h = -sign(qB); checked against the Lorentz force.
    x0 = np.array([12.0, -5.0, 3.0])
    p = np.array([0.12, 0.25, 0.1])
    b = 1.5
    pt = math.hypot(p[0], p[1])
    rr = helix_radius(pt, q, b)
    h = -math.copysign(1.0, q * b)
    phi0 = math.atan2(p[1], p[0])
    sol = _lorentz_path(x0, p, q, b, 2.0 * math.pi * rr / (pt / np.linalg.norm(p)))
    for s_t in np.linspace(0, 2 * math.pi * rr, 9):
        s3 = s_t * np.linalg.norm(p) / pt
        num = sol.sol(s3)[:3]
        ana = np.array([
            x0[0] + h * rr * (math.sin(phi0 + h * s_t / rr) - math.sin(phi0)),
            x0[1] - h * rr * (math.cos(phi0 + h * s_t / rr) - math.cos(phi0)),
            x0[2] + s_t * p[2] / pt,
        ])
        np.testing.assert_allclose(num, ana, atol=1e-5)


@pytest.mark.parametrize("q", [1.0, -1.0])
def test_max_radius_from_displaced_origin(q):
    # plane geometry: the centre lies at distance R from the origin, along the force
    # q v x B; the largest distance from the axis is |centre| + R.
    x0 = np.array([20.0, 7.0, 0.0])
    p = np.array([-0.1, 0.18, 0.05])
    b = 1.5
    rr = helix_radius(math.hypot(p[0], p[1]), q, b)
    f = q * np.cross(p, [0.0, 0.0, 1.0])
    f = f[:2] / np.linalg.norm(f[:2])
    centre = x0[:2] + rr * f
    xc, yc, r2 = helix_centre(x0[0], x0[1], p[0], p[1], q, b)
    np.testing.assert_allclose([xc, yc, r2], [centre[0], centre[1], rr], rtol=1e-12)
    expect = np.linalg.norm(centre) + rr
    assert helix_max_radius(x0[0], x0[1], p[0], p[1], q, b) == pytest.approx(expect, rel=1e-12)
    # and the numerically integrated track reaches exactly that radius, no more
    sol = _lorentz_path(x0, p, q, b, 2 * math.pi * rr * np.linalg.norm(p) / np.hypot(*p[:2]))
    s = np.linspace(0, sol.t[-1], 200001)
    r = np.hypot(*sol.sol(s)[:2])
    assert r.max() == pytest.approx(expect, rel=1e-6)


def test_curler_below_curl_up_pt_never_reaches_layer():
    # from the axis the helix reaches at most 2R: pT_curl = 0.29979 B r_L / 2
    b = GEOM.field
    for r_layer in (GEOM.chamber.radii[0], GEOM.chamber.radii[20]):
        pt_curl = 0.299792458 * b * (r_layer / 100.0) / 2.0
        for fac, reach in ((0.98, False), (1.02, True)):
            pt = fac * pt_curl
            hit = layer_crossings(0.0, 0.0, 0.0, pt, 0.0, 0.0, 1.0, b, LAYERS)
            k = int(np.searchsorted(LAYERS["radius"], r_layer))
            assert hit[k] == reach
            # every cylinder beyond 2R is missed, every one inside it is crossed
            two_r = 2 * helix_radius(pt, 1.0, b)
            np.testing.assert_array_equal(hit, LAYERS["radius"] < two_r)


def test_no_hits_inside_origin_radius_and_beyond_max_radius():
    x0, y0 = 30.0, -4.0
    px, py = -0.05, -0.12  # pointing inwards first
    hit = layer_crossings(x0, y0, 0.0, px, py, 0.0, -1.0, GEOM.field, LAYERS)
    r0 = math.hypot(x0, y0)
    rmax = helix_max_radius(x0, y0, px, py, -1.0, GEOM.field)
    np.testing.assert_array_equal(hit, (LAYERS["radius"] > r0) & (LAYERS["radius"] < rmax))


def test_track_leaving_through_z_end_stops_counting():
    # steep forward track: straight-ish, leaves the chamber through z_max
    pt, pz = 1.0, 2.0
    hit = layer_crossings(0.0, 0.0, 0.0, pt, 0.0, pz, 1.0, GEOM.field, LAYERS)
    rr = helix_radius(pt, 1.0, GEOM.field)
    # transverse arc length at z = z_max; radius there from the chord 2R sin(s/2R)
    s_exit = GEOM.chamber.z_max * pt / pz
    r_exit = 2 * rr * math.sin(s_exit / (2 * rr))
    ch = (LAYERS["radius"] >= GEOM.chamber.r_inner)
    np.testing.assert_array_equal(hit[ch], LAYERS["radius"][ch] < r_exit)


def _brute(x0, y0, z0, px, py, pz, q, b, layers=LAYERS):
    pt = math.hypot(px, py)
    rr = helix_radius(pt, q, b)
    h = -math.copysign(1.0, q * b)
    phi0 = math.atan2(py, px)
    s = np.linspace(0, 2 * math.pi * rr, 200001)
    x = x0 + h * rr * (np.sin(phi0 + h * s / rr) - math.sin(phi0))
    y = y0 - h * rr * (np.cos(phi0 + h * s / rr) - math.cos(phi0))
    z = z0 + s * pz / pt
    r = np.hypot(x, y)
    dr = np.diff(r)
    peaks = np.where((dr[:-1] > 0) & (dr[1:] <= 0))[0]
    end = peaks[0] + 1 if len(peaks) else len(r) - 1
    out = np.zeros(len(layers["radius"]), bool)
    for k, rl in enumerate(layers["radius"]):
        if rl <= r[0]:
            continue
        idx = np.nonzero(r[: end + 1] >= rl)[0]
        if len(idx):
            out[k] = layers["z_min"][k] <= z[idx[0]] <= layers["z_max"][k]
    return out


def _check_random_crossings(layers, seed, n, r0_max, pt_min):
    """layer_crossings equals the stepped helix for n random displaced tracks."""
    rng = np.random.default_rng(seed)
    for _ in range(n):
        r0 = rng.uniform(0, r0_max)
        ph = rng.uniform(0, 2 * np.pi)
        x0, y0, z0 = r0 * np.cos(ph), r0 * np.sin(ph), rng.uniform(-20, 40)
        pt, a, pz = rng.uniform(pt_min, 1.0), rng.uniform(0, 2 * np.pi), rng.uniform(-1, 1)
        q = rng.choice([-1.0, 1.0])
        got = layer_crossings(x0, y0, z0, pt * np.cos(a), pt * np.sin(a), pz, q, GEOM.field,
                              layers)
        exp = _brute(x0, y0, z0, pt * np.cos(a), pt * np.sin(a), pz, q, GEOM.field, layers)
        np.testing.assert_array_equal(got, exp)


def test_crossings_agree_with_stepping_along_the_helix():
    _check_random_crossings(LAYERS, 11, 60, 60.0, 0.05)


def test_crossings_with_nearly_equal_radii_agree_with_stepping():
    # radii 1e-6 cm apart overflow the walk's radius grid (several radii per cell), so its
    # look-ups fall back to bisection; the crossings must not change
    from toymc.detector.helix import _GRID_MAX, _radius_grid

    extra = {key: np.insert(val, 10, val[9]) for key, val in LAYERS.items()}
    extra["radius"][10] = extra["radius"][9] + 1e-6
    _lpad, base, inv_h, _cap = _radius_grid(extra["radius"])
    assert len(base) == _GRID_MAX and 1.0 / inv_h > 1e-6
    # origins between, on and just below the two close radii (radially outward, stiff): the
    # look-up of the first cylinder above the origin lands in the crowded cell
    r9 = extra["radius"][9]
    for x0 in (r9, r9 + 5e-7, extra["radius"][10], math.nextafter(r9, 0.0)):
        got = layer_crossings(x0, 0.0, 0.0, 50.0, 0.0, 0.0, 1.0, GEOM.field, extra)
        inside = (extra["z_min"] <= 0.0) & (0.0 <= extra["z_max"])
        np.testing.assert_array_equal(got, (extra["radius"] > x0) & inside)
    _check_random_crossings(extra, 23, 40, 30.0, 0.1)


def test_radius_grid_counts_the_radii_below_each_cell():
    from toymc.detector.helix import _radius_grid

    rad = LAYERS["radius"]
    lpad, base, inv_h, x_cap = _radius_grid(rad)
    h = 1.0 / inv_h
    assert h <= 0.5 * np.min(np.diff(rad)) * (1 + 1e-12)
    cells = np.arange(len(base)) * h
    np.testing.assert_array_equal(base, np.searchsorted(rad, cells, side="left"))
    assert lpad[-1] == np.inf and x_cap >= rad[-1]


def _highland_independent(p, m, x, z=1.0):
    # PDG review "Passage of particles through matter", multiple scattering:
    # theta0 = 13.6 MeV/(beta c p) z sqrt(x/X0) [1 + 0.038 ln(x z^2/(X0 beta^2))]
    beta = p / math.sqrt(p * p + m * m)
    return 13.6e-3 / (beta * p) * z * math.sqrt(x) * (1 + 0.038 * math.log(x * z * z / beta**2))


@pytest.mark.parametrize("p,x", [(1.0, 0.01), (0.3, 0.002), (0.1, 0.05), (2.0, 1.0)])
def test_highland_worked_points(p, x):
    beta = p / math.hypot(p, M_PI)
    assert highland_theta0(p, beta, 1.0, x) == pytest.approx(_highland_independent(p, M_PI, x),
                                                             rel=1e-12)


def test_highland_hand_worked_value():
    # beta = 1, p = 1 GeV, x/X0 = 0.01: 13.6e-3 * 0.01**0.5 * (1 + 0.038 ln 0.01) = 1.36e-3 * 0.825004
    # = 1.122005e-3 rad
    assert highland_theta0(1.0, 1.0, 1.0, 0.01) == pytest.approx(1.122005e-3, rel=1e-6)


@pytest.mark.parametrize("n_pts", [10, 40, 100])
def test_curvature_error_formula_against_parabola_fit(n_pts):
    # Nucl. Instrum. Meth. 24 (1963) 381: dk = eps/L^2 sqrt(720/(N+4)) for N equally spaced points
    # of resolution eps over L.  Exact least squares for y = a + b x + k x^2/2 gives
    # var(k) = eps^2 [(V^T V)^-1]_kk; its closed form (derived here, from memory)
    # 720 (N-1)^3 / ((N-2) N (N+1) (N+2)) eps^2/L^4 tends to the large-N form.
    length, eps = 0.8, 1e-4
    x = np.linspace(0, length, n_pts)
    vand = np.vstack([np.ones(n_pts), x, x * x / 2]).T
    var_exact = eps**2 * np.linalg.inv(vand.T @ vand)[2, 2]
    nn = n_pts
    closed = 720 * (nn - 1) ** 3 / ((nn - 2) * nn * (nn + 1) * (nn + 2)) * eps**2 / length**4
    assert var_exact == pytest.approx(closed, rel=1e-8)
    gl = curvature_resolution(eps, length, n_pts)
    assert gl == pytest.approx(eps / length**2 * math.sqrt(720 / (nn + 4)), rel=1e-14)
    # ratio exact/large-N form: 1 - (5N^2 - 15N + 4)/(N^4 + N^3 - 4N^2 - 4N), i.e. 1 - O(5/N^2)
    ratio = var_exact / gl**2
    assert ratio == pytest.approx(1 - (5 * nn**2 - 15 * nn + 4) / (nn**4 + nn**3 - 4 * nn**2
                                                                  - 4 * nn), rel=1e-8)
    # Monte Carlo: the spread of fitted curvatures matches the exact variance (4 sigma of
    # the sample standard deviation, sigma/sqrt(2(n-1)))
    rng = np.random.default_rng(5)
    trials = 20000
    noise = rng.normal(0, eps, (trials, n_pts))
    coef, *_ = np.linalg.lstsq(vand, noise.T, rcond=None)
    sd = coef[2].std(ddof=1)
    assert abs(sd - math.sqrt(var_exact)) < 4 * math.sqrt(var_exact) / math.sqrt(2 * (trials - 1))


def test_smearing_pulls_follow_stated_resolutions():
    n = 40000
    rng = np.random.default_rng(8)
    phi = rng.uniform(0, 2 * np.pi, n)
    pt = np.full(n, 0.6)
    pz = np.full(n, 0.2)
    px, py = pt * np.cos(phi), pt * np.sin(phi)
    e = np.sqrt(pt**2 + pz**2 + M_PI**2)
    zero = np.zeros(n)
    q = np.where(rng.random(n) < 0.5, 1.0, -1.0)
    out = track_kernel(np.ones(n, bool), q, px, py, pz, e, zero + 3.0, zero, zero,
                       LAYERS["radius"], LAYERS["z_min"], LAYERS["z_max"],
                       LAYERS["resolution"], LAYERS["thickness"], LAYERS["measuring"],
                       GEOM.field, 0.0, math.pi, 6, 0.05, np.random.default_rng(9))
    _hits, found, rpx, rpy, rpz, spt, sphi, slam, _s1, _res1 = out
    assert found.all()
    rpt = np.hypot(rpx, rpy)
    # curvature is Gaussian: (1/pT_rec - 1/pT) / (spt / pT) ~ N(0, 1)
    pull_k = (1 / rpt - 1 / pt) / (spt / pt)
    dphi = np.angle(np.exp(1j * (np.arctan2(rpy, rpx) - phi)))
    pull_phi = dphi / sphi
    pull_lam = (np.arctan2(rpz, rpt) - np.arctan2(pz, pt)) / slam
    for pull in (pull_k, pull_phi, pull_lam):
        assert abs(pull.mean()) < 4 / math.sqrt(n)
        assert abs(pull.std() - 1) < 4 / math.sqrt(2 * n)


def _spt_of(pt_val, layers):
    px = np.array([pt_val])
    z = np.zeros(1)
    e = np.sqrt(px**2 + M_PI**2)
    return track_kernel(np.ones(1, bool), np.ones(1), px, z, z, e, z, z, z,
                        layers["radius"], layers["z_min"], layers["z_max"],
                        layers["resolution"], layers["thickness"], layers["measuring"],
                        GEOM.field, 0.0, math.pi, 6, 0.05, np.random.default_rng(1))[5][0]


@pytest.mark.parametrize("pt", [0.4, 1.0, 3.0])
def test_resolution_terms_at_worked_points(pt):
    # a track from the axis in the transverse plane crosses every cylinder; arc length to
    # radius r on a circle through the axis: s = 2R asin(r / 2R); incidence cos = sqrt(1 - (r/2R)^2)
    meas = LAYERS["measuring"] == 1
    rr = helix_radius(pt, 1.0, GEOM.field)
    rad = LAYERS["radius"]
    arc = 2 * rr * np.arcsin(rad / (2 * rr))
    length = (arc[meas][-1] - arc[meas][0]) / 100.0
    k = 100.0 / rr
    # measurement term only (no material): Nucl. Instrum. Meth. 24 (1963) 381
    eps = math.sqrt(np.mean(LAYERS["resolution"][meas] ** 2)) / 100.0
    n_hits = int(meas.sum())
    dk = eps / length**2 * math.sqrt(720 / (n_hits + 4))
    no_mat = dict(LAYERS, thickness=np.zeros_like(LAYERS["thickness"]))
    assert _spt_of(pt, no_mat) == pytest.approx(dk / k, rel=1e-9)
    # scattering term only: (0.016/0.0136) theta0(X)/L with X the material after the first
    # and up to the last measured cylinder (PDG review "Passage of particles through matter")
    no_res = dict(LAYERS, resolution=np.where(meas, 1e-15, 0.0))
    r_first, r_last = rad[meas][0], rad[meas][-1]
    sel = (rad > r_first) & (rad <= r_last)
    x_tot = np.sum(LAYERS["thickness"][sel] / np.sqrt(1 - (rad[sel] / (2 * rr)) ** 2))
    dk_ms = 0.016 / 0.0136 * _highland_independent(pt, M_PI, x_tot) / length
    assert _spt_of(pt, no_res) == pytest.approx(dk_ms / k, rel=1e-6)


def _stepped_resolutions(x0, y0, z0, px, py, pz, q, m):
    """Resolutions of one track from the helix equations alone (module docstring model):
    crossings from the dense stepping of `_brute`, crossing arc lengths by root finding on
    r(s), incidence from the helix direction at the crossing."""
    from scipy.optimize import brentq

    b = GEOM.field
    pt = math.hypot(px, py)
    p = math.hypot(pt, pz)
    rr = helix_radius(pt, q, b)
    h = -math.copysign(1.0, q * b)
    phi0 = math.atan2(py, px)
    tanl = pz / pt
    cosl = pt / p

    def pos(s):
        return (x0 + h * rr * (math.sin(phi0 + h * s / rr) - math.sin(phi0)),
                y0 - h * rr * (math.cos(phi0 + h * s / rr) - math.cos(phi0)))

    crossed = _brute(x0, y0, z0, px, py, pz, q, b)
    meas = (LAYERS["measuring"] == 1) & crossed
    nh = int(meas.sum())
    if nh < 3:
        return nh, None
    # bracket each crossing on a fine grid of the first turn
    s_grid = np.linspace(0, 2 * math.pi * rr, 200001)
    r_grid = np.hypot(x0 + h * rr * (np.sin(phi0 + h * s_grid / rr) - math.sin(phi0)),
                      y0 - h * rr * (np.cos(phi0 + h * s_grid / rr) - math.cos(phi0)))
    arc, mat = {}, {}
    for k in np.nonzero(crossed)[0]:
        rl = LAYERS["radius"][k]
        i = int(np.nonzero(r_grid >= rl)[0][0])
        s_k = brentq(lambda s: math.hypot(*pos(s)) - rl, s_grid[i - 1], s_grid[i], xtol=1e-13,
                     rtol=1e-15)
        x, y = pos(s_k)
        phi = phi0 + h * s_k / rr
        cos_alpha = abs(math.cos(phi) * x + math.sin(phi) * y) / rl * cosl
        arc[k] = s_k
        mat[k] = LAYERS["thickness"][k] / max(cos_alpha, 0.01)
    idx = np.nonzero(meas)[0]
    first, last = int(idx[0]), int(idx[-1])
    x_first = sum(v for k, v in mat.items() if k <= first)
    x_last = sum(v for k, v in mat.items() if k <= last)
    length = (arc[last] - arc[first]) / 100.0
    eps = math.sqrt(np.mean(LAYERS["resolution"][idx] ** 2)) / 100.0
    dk_meas = eps / length**2 * math.sqrt(720 / (nh + 4))     # Nucl. Instrum. Meth. 24 (1963) 381
    dk_ms = (0.016 / 0.0136 * _highland_independent(p, m, x_last - x_first)
             / (length * cosl**1.5))
    k_m = 100.0 / rr
    geo = 12.0 * (nh - 1) / (nh * (nh + 1))
    th1 = _highland_independent(p, m, x_first)
    sp = math.sqrt((eps / length) ** 2 * geo + (dk_meas * (0.5 * length + arc[first] / 100)) ** 2
                   + (th1 / cosl) ** 2)
    sl = math.sqrt((cosl**2 * eps / length) ** 2 * geo + th1**2)
    return nh, (math.hypot(dk_meas, dk_ms) / k_m, sp, sl, arc[first],
                LAYERS["resolution"][first])


def test_resolutions_of_displaced_tracks_against_the_stepped_helix():
    # displaced origins (inside the vertex layers, in the drift chamber, beyond the end of a
    # vertex layer in z) and curlers: hit count, lever arm, material before the first and
    # between the first and the last hit, all from the helix itself
    rng = np.random.default_rng(17)
    n = 60
    r0 = rng.uniform(0, 70, n)
    ph = rng.uniform(0, 2 * np.pi, n)
    x0, y0, z0 = r0 * np.cos(ph), r0 * np.sin(ph), rng.uniform(-30, 60, n)
    pt, a, pz = rng.uniform(0.12, 1.5, n), rng.uniform(0, 2 * np.pi, n), rng.uniform(-1, 1, n)
    q = np.where(rng.random(n) < 0.5, 1.0, -1.0)
    px, py = pt * np.cos(a), pt * np.sin(a)
    e = np.sqrt(pt**2 + pz**2 + M_PI**2)
    out = track_kernel(np.ones(n, bool), q, px, py, pz, e, x0, y0, z0,
                       LAYERS["radius"], LAYERS["z_min"], LAYERS["z_max"],
                       LAYERS["resolution"], LAYERS["thickness"], LAYERS["measuring"],
                       GEOM.field, 0.0, math.pi, 6, 0.05, np.random.default_rng(1))
    hits, spt, sphi, slam, s1, res1 = out[0], out[5], out[6], out[7], out[8], out[9]
    checked = 0
    for i in range(n):
        nh, exp = _stepped_resolutions(x0[i], y0[i], z0[i], px[i], py[i], pz[i], q[i], M_PI)
        assert hits[i] == nh
        if exp is None:
            assert np.isnan(spt[i])
            continue
        checked += 1
        for got, want in zip((spt[i], sphi[i], slam[i], s1[i], res1[i]), exp):
            assert got == pytest.approx(want, rel=1e-7)
    assert checked > n // 2
