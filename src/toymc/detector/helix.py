"""Helix geometry and the walk of a track through the tracking cylinders.

The geometric half of the charged-track response (:mod:`toymc.detector.tracking`
turns the walk's outcome into resolutions and smeared momenta): the helix of a
charged particle in the solenoid, which cylinders its first outward leg crosses,
the hits they give and the material it meets.

Model
-----
*Helix.*  The solenoid field B (T) points along +z.  A particle of charge
q (units of e) and transverse momentum p_T (GeV) moves on a helix of
transverse radius ``R[m] = p_T / (0.299792458 |q| B)`` (PDG review
"Kinematics" / "Passage of particles through matter": p_T = 0.3 z B R).
With ``h = -sign(q B)``, transverse arc length s, azimuth phi0 of the
momentum at the origin (x0, y0, z0) and ``tan(lambda) = p_z / p_T``::

    x = x0 + h R [sin(phi0 + h s/R) - sin(phi0)]
    y = y0 - h R [cos(phi0 + h s/R) - cos(phi0)]
    z = z0 + s tan(lambda)

(checked against a numerical integration of the Lorentz force in
``tests/detector/test_det_tracking.py``).  The circle's centre is at
``(x0 - h R sin phi0, y0 + h R cos phi0)``, at distance d from the beam
axis; the radius from the axis oscillates between |d - R| and ``d + R``.

*Hits.*  Only the first outward leg counts: a cylinder of radius r_L is
crossed when ``r0 < r_L < d + R`` (r0 = origin radius), at the first arc
length s where the helix reaches r_L, and only if z(s) lies inside that
cylinder's z extent.  Nothing is counted inside the origin radius, after the
maximum radius (curlers never come back for more hits), or once z has left
the cylinder's extent.  Every crossed measuring cylinder (vertex layer or
drift-chamber sense layer) gives one hit; hit efficiency is 100 %.

*Material.*  Each crossed cylinder contributes x/X0 / cos(alpha), alpha
being the angle between the track and the cylinder's normal at the crossing.

Implementation
--------------
:func:`_walk_tracks` walks every candidate (branchy, one track at a time).  It
visits only the cylinders with ``r0 < r_L < d + R`` (looked up on a uniform
radius grid, :func:`_radius_grid`), and works run by run of cylinders sharing
one z extent: inside a run the crossed cylinders are one contiguous radius
interval, so its hit count and resolution sum are differences of prefix tables
(:func:`_layer_tables`) and its material is summed over three index ranges.
Two numba costs shape the walk: every call of a helper that is passed an array
(inlined or not) is bracketed by atomic reference-count updates, so the walk's
look-ups are closures over the arrays instead; and numba wraps negative
indices, which for a signed index it cannot rule out turns a loop's loads into
gathers, so the material loop runs over unsigned indices.  The radius at an arc
length comes from the cosine of the turning angle by angle addition, with cos
and sin of the small angle from their Taylor series (:func:`_cos_sin`).
"""

import math as _math

import numpy as _np
from numba import njit as _njit

from toymc.physics.kinematics.elementary import acos_1 as _acos
from toymc.physics.kinematics.elementary import atan2_1 as _atan2
from toymc.physics.kinematics.elementary import sincos_1 as _sincos

__all__ = (
    "PT_PER_TM",
    "helix_centre",
    "helix_max_radius",
    "helix_radius",
    "layer_crossings",
)

#: p_T [GeV] = PT_PER_TM * |q| * B[T] * R[m]  (c / 1e9 in SI units)
PT_PER_TM = 0.299792458
_TWO_PI = 2.0 * _math.pi


@_njit(cache=True, error_model="numpy")
def helix_radius(pt, q, bfield):
    """Transverse helix radius in cm.

    Parameters
    ----------
    pt : float
        Transverse momentum, GeV.
    q : float
        Charge in units of e (non-zero).
    bfield : float
        Field along +z, tesla.

    Returns
    -------
    float
        R = p_T / (0.299792458 |q| B) m, converted to cm.
    """
    return 100.0 * pt / (PT_PER_TM * abs(q) * bfield)


@_njit(cache=True, error_model="numpy")
def helix_centre(x0, y0, px, py, q, bfield):
    """Centre (cm) and radius (cm) of the transverse circle of a helix.

    Returns
    -------
    tuple of float
        (xc, yc, R) with ``xc = x0 - h R sin(phi0)``, ``yc = y0 + h R cos(phi0)``,
        ``h = -sign(q B)``.
    """
    pt = _math.hypot(px, py)
    r = helix_radius(pt, q, bfield)
    h = -1.0 if q * bfield > 0 else 1.0
    return x0 - h * r * py / pt, y0 + h * r * px / pt, r


@_njit(cache=True, error_model="numpy")
def helix_max_radius(x0, y0, px, py, q, bfield):
    """Largest distance from the beam axis reached by the helix, cm (d + R)."""
    xc, yc, r = helix_centre(x0, y0, px, py, q, bfield)
    return _math.hypot(xc, yc) + r



@_njit(cache=True, error_model="numpy")
def _wrap(a):
    """Angle mapped to [0, 2 pi).

    Equal to ``a % (2 pi)`` (Python semantics); for |a| < 4 pi without fmod:
    a +- 2 pi is exact there (Sterbenz lemma) and so equals fmod's exact result.
    """
    if a >= 0.0:
        if a < _TWO_PI:
            return a + 0.0
        if a < 2.0 * _TWO_PI:
            return a - _TWO_PI
    elif a > -2.0 * _TWO_PI:
        if a > -_TWO_PI:
            return a + _TWO_PI
        a += _TWO_PI
        return a + _TWO_PI if a < 0.0 else a + 0.0
    a = a % _TWO_PI
    if a < 0.0:
        a += _TWO_PI
    return a


@_njit(cache=True, error_model="numpy")
def _hyp(x, y):
    """sqrt(x^2 + y^2) (no overflow guard: all values here are far from the limits)."""
    return _math.sqrt(x * x + y * y)


#: Taylor coefficients (-1)^k / (2k)! and (-1)^k / (2k+1)!, k = 0..9
_COS_C = tuple((-1.0) ** k / _math.factorial(2 * k) for k in range(10))
_SIN_C = tuple((-1.0) ** k / _math.factorial(2 * k + 1) for k in range(10))
_C0, _C1, _C2, _C3, _C4, _C5, _C6, _C7, _C8, _C9 = _COS_C
_S0, _S1, _S2, _S3, _S4, _S5, _S6, _S7, _S8, _S9 = _SIN_C


@_njit(cache=True, error_model="numpy")
def _cos_sin(b):
    """(cos b, sin b) from their Taylor series for |b| < 1, libm beyond.

    For |b| < 0.03 the series stop after the b^8 (cos) and b^9 (sin) terms,
    otherwise after b^18 and b^19; the first omitted term is below 2e-22
    (respectively 1/20! = 4e-19) relative, far under the rounding error.
    """
    ab = abs(b)
    if ab >= 1.0:
        sb, cb = _sincos(b)
        return cb, sb
    b2 = b * b
    if ab < 0.03:
        c = _C0 + b2 * (_C1 + b2 * (_C2 + b2 * (_C3 + b2 * _C4)))
        sn = _S0 + b2 * (_S1 + b2 * (_S2 + b2 * (_S3 + b2 * _S4)))
        return c, b * sn
    c = _C5 + b2 * (_C6 + b2 * (_C7 + b2 * (_C8 + b2 * _C9)))
    c = _C0 + b2 * (_C1 + b2 * (_C2 + b2 * (_C3 + b2 * (_C4 + b2 * c))))
    sn = _S5 + b2 * (_S6 + b2 * (_S7 + b2 * (_S8 + b2 * _S9)))
    sn = _S0 + b2 * (_S1 + b2 * (_S2 + b2 * (_S3 + b2 * (_S4 + b2 * sn))))
    return c, b * sn



@_njit(cache=True, error_model="numpy")
def _extent_groups(lzmin, lzmax):
    """Start indices of the runs of consecutive cylinders with the same z extent.

    Returns an int64 array ``g`` of length (number of runs + 1): run k holds
    cylinders ``g[k] .. g[k+1]-1``; ``g[-1]`` is the number of cylinders.
    """
    nl = lzmin.shape[0]
    tmp = _np.empty(nl + 1, dtype=_np.int64)
    ng = 0
    for i in range(nl):
        if i == 0 or not (lzmin[i] == lzmin[i - 1] and lzmax[i] == lzmax[i - 1]):
            tmp[ng] = i
            ng += 1
    tmp[ng] = nl
    return tmp[:ng + 1].copy()


@_njit(cache=True, error_model="numpy")
def _layer_tables(lres, lmeas):
    """Look-up tables of the measuring cylinders, for O(1) sums over a radius interval.

    Returns ``(nxt, prv, cnt, r2c)`` (int64, int64, int64, float64): ``nxt[i]``
    is the first measuring cylinder at index >= i (n if none; length n + 1),
    ``prv[i]`` the last one at index <= i (-1 if none), ``cnt[i]`` and
    ``r2c[i]`` the number of measuring cylinders and the sum of their squared
    resolutions at indices < i (length n + 1).
    """
    nl = lres.shape[0]
    nxt = _np.empty(nl + 1, dtype=_np.int64)
    prv = _np.empty(nl, dtype=_np.int64)
    cnt = _np.zeros(nl + 1, dtype=_np.int64)
    r2c = _np.zeros(nl + 1)
    nxt[nl] = nl
    for i in range(nl - 1, -1, -1):
        nxt[i] = i if lmeas[i] == 1 else nxt[i + 1]
    last = -1
    for i in range(nl):
        if lmeas[i] == 1:
            last = i
            cnt[i + 1] = cnt[i] + 1
            r2c[i + 1] = r2c[i] + lres[i] * lres[i]
        else:
            cnt[i + 1] = cnt[i]
            r2c[i + 1] = r2c[i]
        prv[i] = last
    return nxt, prv, cnt, r2c


#: largest number of cells of the radius grid (see :func:`_radius_grid`)
_GRID_MAX = 4096


@_njit(cache=True, error_model="numpy")
def _radius_grid(lr):
    """Uniform grid over radius, for O(1) look-ups in the sorted radii lr (cm).

    Returns ``(lpad, base, inv_h, x_cap)``: lr with +inf appended; for every
    cell c of width h, the number of radii below c h; 1/h; and the largest
    radius looked up on the grid (beyond it the last cell answers).  h is half
    the smallest gap between radii, so that a cell holds at most one radius,
    unless that needs more than ``_GRID_MAX`` cells.  The grid gives a guess
    that the walk checks (and replaces by a bisection if wrong).
    """
    nl = lr.shape[0]
    lpad = _np.empty(nl + 1)
    lpad[:nl] = lr
    lpad[nl] = _np.inf
    if nl == 0 or not lr[nl - 1] > 0.0:
        return lpad, _np.zeros(1, dtype=_np.int64), 0.0, 0.0
    gap = lr[nl - 1]
    for i in range(nl - 1):
        if lr[i + 1] - lr[i] > 0.0:
            gap = min(gap, lr[i + 1] - lr[i])
    h = 0.5 * gap
    ncell = int(lr[nl - 1] / h) + 2
    if ncell > _GRID_MAX:
        ncell = _GRID_MAX
        h = lr[nl - 1] / (ncell - 2)
    base = _np.empty(ncell, dtype=_np.int64)
    k = 0
    for c in range(ncell):
        while k < nl and lr[k] < c * h:
            k += 1
        base[c] = k
    return lpad, base, 1.0 / h, (ncell - 1) * h


@_njit(cache=True, error_model="numpy")
def _walk_tracks(sel, vx, vy, vz, px, py, pz, q, bfield, lr, lzmin, lzmax, lres, lthick, lmeas,
                 hit):
    """Walk the first outward leg of the tracks ``sel`` through the cylinders.

    The cylinders are sorted by radius (lr, cm) with z extents lzmin, lzmax
    (cm), resolutions lres (cm), thicknesses lthick (x/X0) and measuring flags
    lmeas.  Only the cylinders with ``r0 < r_L < d + R`` are visited (found on
    the radius grid of :func:`_radius_grid`), run by run of equal z extent
    (:func:`_extent_groups`); inside a
    run the crossed cylinders are the contiguous radius interval
    ``[r(s_lo), r(s_hi)]`` of the z window, so hit counts and resolution sums
    are differences of prefix tables (:func:`_layer_tables`) and the material
    is summed over three index ranges (before and at the run's first measuring
    cylinder, up to its last, after it).  If ``hit`` has a row per track,
    hit[k, i] is set to 1 for every cylinder i crossed by track sel[k] (the
    caller zeroes it); with no rows nothing is recorded.

    Returns
    -------
    tuple of ndarray, one entry per track
        ``(d, R, delta0, h, n_hits, first, last, sum_res2, x_first, x_last)``:
        the circle (centre distance d and radius R, cm; start angle delta0 from
        the maximum-radius point; rotation sense h), the number of measured
        hits, the indices of the first and last measuring cylinders crossed (-1
        without), the sum of their squared resolutions (cm^2) and the material
        (x/X0, incidence-corrected) crossed up to and including the first and
        the last measured hit.

    Notes
    -----
    The look-ups and sums are closures over the cylinder arrays, not helper
    functions taking them: numba brackets every call of a helper that is passed
    an array (inlined or not) with atomic reference-count updates, which in
    this loop cost more than the walk itself.
    """
    nt = sel.shape[0]
    nl = lr.shape[0]
    o_d = _np.zeros(nt)
    o_rr = _np.zeros(nt)
    o_delta0 = _np.zeros(nt)
    o_h = _np.zeros(nt)
    o_nh = _np.zeros(nt, dtype=_np.int64)
    o_first = _np.full(nt, -1, dtype=_np.int64)
    o_last = _np.full(nt, -1, dtype=_np.int64)
    o_res2 = _np.zeros(nt)
    o_xf = _np.zeros(nt)
    o_xl = _np.zeros(nt)
    groups = _extent_groups(lzmin, lzmax)
    nxt, prv, cnt, r2c = _layer_tables(lres, lmeas)
    inv2r = 0.5 / lr
    buf = _np.empty(nl)
    record = hit.shape[0] > 0

    def bisect(lo, hi, x, above):
        # first k in [lo, hi) with lr[k] > x (above) or x <= lr[k]; hi if none (also for
        # NaN x); a bisection whose halving step is a select
        n = hi - lo
        if n <= 0:
            return lo
        k = lo
        while n > 1:
            half = n >> 1
            m = k + half
            ok = lr[m] > x if above else x <= lr[m]
            k = k if ok else m
            n -= half
        ok = lr[k] > x if above else x <= lr[k]
        return k if ok else k + 1

    lpad, gbase, inv_h, x_cap = _radius_grid(lr)

    def first_true(lo, hi, x, above):
        # as bisect, from the radius grid's guess k: moved up by one where lr[k] is still
        # below x, then checked (lr[k-1] < x <= lr[k], or <= and < for above); a failed
        # check (x on a cell edge up to rounding, several radii in a cell) bisects
        if hi <= lo:
            return lo
        if not (x == x):
            return hi
        xc = min(max(x, 0.0), x_cap)
        k = gbase[int(xc * inv_h)]
        if above:
            k = k + 1 if lpad[k] <= x else k
            ok = lpad[k] > x and (k == 0 or lpad[k - 1] <= x)
        else:
            k = k + 1 if lpad[k] < x else k
            ok = lpad[k] >= x and (k == 0 or lpad[k - 1] < x)
        if not ok:
            k = bisect(0, nl, x, above)
        return min(max(k, lo), hi)

    def sum4(lo, hi):
        # sum of buf[lo:hi] in four interleaved partial sums (shorter dependency chains)
        s0 = 0.0
        s1 = 0.0
        s2 = 0.0
        s3 = 0.0
        i = lo
        while i + 4 <= hi:
            s0 += buf[i]
            s1 += buf[i + 1]
            s2 += buf[i + 2]
            s3 += buf[i + 3]
            i += 4
        while i < hi:
            s0 += buf[i]
            i += 1
        return (s0 + s1) + (s2 + s3)

    for k in range(nt):
        t = sel[k]
        x0 = vx[t]
        y0 = vy[t]
        z0 = vz[t]
        pt = _hyp(px[t], py[t])
        if pt <= 0.0 or q[t] == 0.0:
            continue
        rr = helix_radius(pt, q[t], bfield)
        h = -1.0 if q[t] * bfield > 0 else 1.0
        xc = x0 - h * rr * py[t] / pt
        yc = y0 + h * rr * px[t] / pt
        d = _hyp(xc, yc)
        o_d[k] = d
        o_rr[k] = rr
        o_h[k] = h
        if d <= 1e-12 * rr:
            continue
        r0 = _hyp(x0, y0)
        rmax = d + rr
        i0 = first_true(0, nl, r0, True)          # first cylinder above the origin radius
        i1 = first_true(i0, nl, rmax, False)      # first cylinder at or beyond d + R
        if i0 >= i1:
            continue
        # angle of (origin - centre) minus angle of the centre, in (-pi, pi]
        ux = x0 - xc
        uy = y0 - yc
        dcross = xc * uy - yc * ux
        ddot = xc * ux + yc * uy
        delta0 = _atan2(dcross, ddot)
        o_delta0[k] = delta0
        cd = ddot / (d * rr)
        sd = dcross / (d * rr)
        # arc length to the maximum radius (delta = 0), moving with d(delta)/ds = h/R
        s_max = rr * _wrap(-h * delta0)
        tanl = pz[t] / pt
        inv_tanl = pt / pz[t] if pz[t] != 0.0 else 0.0
        cosl = pt / _math.sqrt(pt * pt + pz[t] * pz[t])
        d2r2 = d * d + rr * rr
        twodr = 2.0 * d * rr
        dd = d * d
        rr2 = rr * rr
        inv_rr = 1.0 / rr
        nh = 0
        first = -1
        last = -1
        sumres2 = 0.0
        xcum = 0.0
        x_first = 0.0
        x_last = 0.0
        g = 0
        while groups[g + 1] <= i0:
            g += 1
        while groups[g] < i1:
            a = max(groups[g], i0)
            b = min(groups[g + 1], i1)
            g += 1
            zlo = lzmin[a]
            zhi = lzmax[a]
            # arc-length window where z is inside this run's extent
            if tanl > 0.0:
                s_lo = (zlo - z0) * inv_tanl
                s_hi = (zhi - z0) * inv_tanl
            elif tanl < 0.0:
                s_lo = (zhi - z0) * inv_tanl
                s_hi = (zlo - z0) * inv_tanl
            elif zlo <= z0 <= zhi:
                s_lo = -_math.inf
                s_hi = _math.inf
            else:
                continue
            if s_lo > s_max or s_hi < 0.0 or s_hi < s_lo:
                continue
            # r(s) increases from r0 to rmax on the part of [0, s_max] above r0,
            # and stays below r0 before it, so radii map one to one to arc lengths
            # r(s)^2 = d^2 + R^2 + 2 d R cos(delta0 + h s / R), the cosine by angle addition
            if s_lo > 0.0:
                ct, st = _cos_sin(s_lo / rr)
                r_lo = _math.sqrt(max(d2r2 + twodr * (cd * ct - h * sd * st), 0.0))
                a = first_true(a, b, r_lo, False)
            if s_hi < s_max:
                ct, st = _cos_sin(s_hi / rr)
                r_hi = _math.sqrt(max(d2r2 + twodr * (cd * ct - h * sd * st), 0.0))
                b = first_true(a, b, r_hi, True)
            if a >= b:
                continue
            # material x/X0 / cos(alpha) of each crossed cylinder: at the crossing the
            # cylinder's normal and the circle's radius make an angle psi with
            # cos(psi) = (r_L^2 - d^2 + R^2) / (2 r_L R) (triangle axis-centre-point); the
            # track is perpendicular to the circle's radius, so cos(alpha) =
            # sin(psi) cos(lambda), floored at 0.01 (1/(2 r_L) precomputed); a loop
            # without branches, which vectorises (unsigned indices: numba wraps negative
            # indices, and for a signed index it cannot rule out, the wrap turns the
            # loads into gathers)
            for i in range(_np.uint64(a), _np.uint64(b)):
                pn = (lr[i] * lr[i] - dd + rr2) * inv2r[i] * inv_rr
                ci = _math.sqrt(max(0.0, 1.0 - pn * pn)) * cosl
                buf[i] = lthick[i] / max(ci, 0.01)
            if record:
                for i in range(a, b):
                    hit[k, i] = 1
            fm = nxt[a]       # first measuring cylinder of [a, b) (if fm < b)
            if fm >= b:
                xcum += sum4(a, b)
                continue
            lm = prv[b - 1]   # last measuring cylinder of [a, b)
            nh += cnt[lm + 1] - cnt[fm]
            sumres2 += r2c[lm + 1] - r2c[fm]
            xcum += sum4(a, fm + 1)
            if first < 0:
                first = fm
                x_first = xcum
            xcum += sum4(fm + 1, lm + 1)
            last = lm
            x_last = xcum
            xcum += sum4(lm + 1, b)
        o_nh[k] = nh
        o_first[k] = first
        o_last[k] = last
        o_res2[k] = sumres2
        o_xf[k] = x_first
        o_xl[k] = x_last
    return o_d, o_rr, o_delta0, o_h, o_nh, o_first, o_last, o_res2, o_xf, o_xl


@_njit(cache=True, error_model="numpy")
def _arc_to_radius(rl, d, rr, delta0, h):
    """First arc length (cm) at which the helix reaches radius rl on its way out."""
    c = (rl * rl - d * d - rr * rr) / (2.0 * d * rr)
    c = min(1.0, max(-1.0, c))
    return rr * _wrap(-h * delta0 - _acos(c))


def layer_crossings(x0, y0, z0, px, py, pz, q, bfield, layers):
    """Which tracking cylinders a helix crosses (Python convenience wrapper).

    Parameters
    ----------
    x0, y0, z0 : float
        Origin, cm.
    px, py, pz : float
        Momentum at the origin, GeV.
    q : float
        Charge, e.
    bfield : float
        Field, T.
    layers : dict
        As returned by :meth:`toymc.detector.geometry.Geometry.tracking_layers`.

    Returns
    -------
    numpy.ndarray of bool
        One entry per cylinder (sorted by radius), True where crossed.
    """
    one = _np.zeros(1, dtype=_np.int64)
    hit = _np.zeros((1, len(layers["radius"])), dtype=_np.int32)
    _walk_tracks(one, *(_np.array([float(v)]) for v in (x0, y0, z0, px, py, pz, q)),
                 float(bfield), layers["radius"], layers["z_min"], layers["z_max"],
                 layers["resolution"], layers["thickness"], layers["measuring"], hit)
    return hit[0].astype(bool)
