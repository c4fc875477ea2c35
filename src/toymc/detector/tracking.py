"""Charged-track response: resolutions, smearing and the track-finding decision.

The helix, the layer crossings, the hits and the material come from the walk of
:mod:`toymc.detector.helix` (its docstring gives that part of the model); this
module turns them into resolutions and smeared momenta.

Model
-----
*Momentum resolution.*  The curvature k = 1/R (1/m) is smeared with a
Gaussian of width ``dk = dk_meas (+) dk_ms``:

- measurement term (Nucl. Instrum. Meth. 24 (1963) 381), N measured points over
  the transverse arc length L (m) between the first and last hit, eps the rms
  point resolution (m) of the hit layers:
  ``dk_meas = eps / L^2 * sqrt(720 / (N + 4))``;
- multiple scattering: ``dk_ms = (0.016/0.0136) theta0(X) / (L cos^(3/2) lambda)``
  with theta0 the Highland angle (PDG review "Passage of particles through
  matter", multiple-scattering section, eq. for theta0 with the 0.038 ln term)
  for the material X crossed between the first and last hit.  For a uniform
  medium without the log term this is the PDG form
  ``dk_ms = 0.016 GeV |z| / (L p beta cos^2 lambda) sqrt(L/X0)`` (PDG review
  "Particle detectors at accelerators", tracking section; recalled from memory).

So ``sigma(p_T)/p_T = dk / k`` is ``a p_T (+) b / beta``.  Only the sign of
the charge is taken as measured correctly (a curvature that flips sign is
folded back).

*Angles.*  Azimuth phi and dip lambda at the origin are smeared with
Gaussians (approximations, no full covariance):

- ``sigma_phi^2 = (eps/L)^2 12 (N-1)/(N(N+1)) + (dk_meas (L/2 + s1))^2
  + (theta0(X1)/cos lambda)^2``: straight-line slope error of N equally
  spaced points, the curvature error propagated from the middle of the lever
  arm to the origin (s1 = arc length from the origin to the first hit, m),
  and scattering in the material X1 from the origin up to and including the
  first measured layer;
- ``sigma_lambda^2 = (cos^2 lambda eps/L)^2 12 (N-1)/(N(N+1)) + theta0(X1)^2``;
  the z resolution of every layer is taken equal to its r-phi resolution
  (a stereo chamber measures z less well: an optimistic approximation).

Energy loss, hit inefficiency, decays in flight, secondary interactions and
track-finding confusion are not modelled.

Implementation
--------------
Kernels are pure functions of flat arrays and plain numbers, in two stages:
:func:`toymc.detector.helix._walk_tracks` walks every candidate (branchy, one
track at a time), then the smearing loop of :func:`_track_block` turns the
walk's outcome into resolutions and smeared momenta.  Angles are not formed
where an algebraic form is exact up to rounding: cos(phi0) = p_x/p_T, the
smeared direction by angle addition (cos and sin of the small smearing angle
from their Taylor series), the polar-angle acceptance on cos(theta) (the angle
itself is compared only within 1e-9 of a bound).  The results agree with the
angle-based forms to rounding (about 1e-16 relative, more where the model
itself amplifies rounding, e.g. a curvature smeared close to zero).
"""

import math as _math

import numpy as _np
from numba import njit as _njit

from toymc.detector.helix import _arc_to_radius, _cos_sin, _hyp, _walk_tracks
from toymc.physics.kinematics.elementary import atan2_1 as _atan2
from toymc.physics.kinematics.elementary import cos_1 as _cos
from toymc.physics.kinematics.elementary import log_1 as _log

__all__ = (
    "curvature_resolution",
    "highland_theta0",
    "track_kernel",
)

#: ratio of the multiple-scattering constants 0.016 GeV (curvature) and 0.0136 GeV (Highland)
_MS_CURV = 0.016 / 0.0136


@_njit(cache=True, error_model="numpy")
def highland_theta0(p, beta, q, x):
    """Highland rms projected multiple-scattering angle, rad.

    ``theta0 = 13.6 MeV / (beta c p) |z| sqrt(x/X0) [1 + 0.038 ln(x z^2 / (X0 beta^2))]``
    (PDG review "Passage of particles through matter", multiple scattering
    through small angles).  Applied to the total thickness; clipped at 0 where
    the log term would turn it negative (x/X0 below ~1e-11).

    Parameters
    ----------
    p : float
        Momentum, GeV.
    beta : float
        Velocity v/c.
    q : float
        Charge, units of e.
    x : float
        Thickness in radiation lengths.
    """
    if x <= 0.0 or p <= 0.0:
        return 0.0
    corr = 1.0 + 0.038 * _log(x * q * q / (beta * beta))
    corr = max(corr, 0.0)
    return 0.0136 / (beta * p) * abs(q) * _math.sqrt(x) * corr


@_njit(cache=True, error_model="numpy")
def curvature_resolution(eps, length, n):
    """Measurement error on the curvature (N-point fit), 1/m.

    ``dk = eps / L^2 sqrt(720 / (N + 4))`` (Nucl. Instrum. Meth. 24 (1963) 381),
    N equally spaced points of resolution eps (m) over a length L (m).
    """
    return eps / (length * length) * _math.sqrt(720.0 / (n + 4.0))


@_njit(cache=True, error_model="numpy")
def _polar_cut(c, cos_max, cos_min):
    """Polar-angle cut theta_min <= theta <= theta_max decided on c = cos(theta).

    Returns 1 (inside: cos(theta_max) <= c <= cos(theta_min)), 0 (outside), or
    -1 when c is within 1e-9 of a bound: the caller then compares the angle
    itself, so that rounding in the cosines cannot move a decision.
    """
    if abs(c - cos_max) <= 1e-9 or abs(c - cos_min) <= 1e-9:
        return -1
    return 1 if cos_max <= c <= cos_min else 0



@_njit(cache=True, error_model="numpy")
def _track_block(is_trk, q, px, py, pz, e, vx, vy, vz, lr, lzmin, lzmax, lres, lthick, lmeas,
                 bfield, theta_min, theta_max, min_hits, min_pt, rng):
    """:func:`track_kernel`, also returning the number of normal numbers drawn."""
    sel = _np.empty(is_trk.shape[0], dtype=_np.int64)   # flat index of every candidate
    n = 0
    for i in range(is_trk.shape[0]):
        if is_trk[i]:
            sel[n] = i
            n += 1
    sel = sel[:n]
    hits = _np.zeros(n, dtype=_np.int32)
    found = _np.zeros(n, dtype=_np.bool_)
    rpx = _np.full(n, _np.nan)
    rpy = _np.full(n, _np.nan)
    rpz = _np.full(n, _np.nan)
    spt = _np.full(n, _np.nan)
    sphi = _np.full(n, _np.nan)
    slam = _np.full(n, _np.nan)
    s1 = _np.full(n, _np.nan)
    res1 = _np.full(n, _np.nan)
    # stage A: the walk of every candidate; stage B (below): lever arm, resolutions, smearing
    w_d, w_rr, w_delta0, w_h, w_nh, w_first, w_last, w_res2, w_xf, w_xl = _walk_tracks(
        sel, vx, vy, vz, px, py, pz, q, bfield, lr, lzmin, lzmax, lres, lthick, lmeas,
        _np.zeros((0, lr.shape[0]), dtype=_np.int32))
    cos_min = _cos(theta_min)
    cos_max = _cos(theta_max)
    ndraw = 0
    for j in range(n):
        i = sel[j]
        nh = w_nh[j]
        hits[j] = nh
        if nh < 3:
            continue
        pt = _hyp(px[i], py[i])
        p = _math.sqrt(pt * pt + pz[i] * pz[i])
        beta = p / e[i]
        cosl = pt / p
        d = w_d[j]
        rr = w_rr[j]
        delta0 = w_delta0[j]
        h = w_h[j]
        first = w_first[j]
        last = w_last[j]
        sumres2 = w_res2[j]
        x_first = w_xf[j]
        x_last = w_xl[j]
        sa = _arc_to_radius(lr[first], d, rr, delta0, h)
        sb = _arc_to_radius(lr[last], d, rr, delta0, h)
        length = (sb - sa) / 100.0
        if length <= 0.0:
            continue
        eps = _math.sqrt(sumres2 / nh) / 100.0
        k_m = 100.0 / rr
        dk_meas = curvature_resolution(eps, length, nh)
        th_lever = highland_theta0(p, beta, q[i], x_last - x_first)
        dk_ms = _MS_CURV * th_lever / (length * (cosl * _math.sqrt(cosl)))
        dk = _math.sqrt(dk_meas * dk_meas + dk_ms * dk_ms)
        th1 = highland_theta0(p, beta, q[i], x_first)
        geo = 12.0 * (nh - 1.0) / (nh * (nh + 1.0))
        s1m = sa / 100.0
        sp = _math.sqrt((eps / length) ** 2 * geo + (dk_meas * (0.5 * length + s1m)) ** 2
                        + (th1 / cosl) ** 2)
        sl = _math.sqrt((cosl * cosl * eps / length) ** 2 * geo + th1 * th1)
        # smear curvature, azimuth and dip
        kr = abs(k_m + dk * rng.standard_normal())
        kr = max(kr, 1e-9)
        ptr = pt * k_m / kr
        # phi' = phi + sp g, lambda' = lambda + sl g' by angle addition from
        # cos phi = px/pT, sin phi = py/pT and tan lambda = pz/pT
        cb, sb = _cos_sin(sp * rng.standard_normal())
        cphi = px[i] / pt
        sphi0 = py[i] / pt
        cb2, sb2 = _cos_sin(sl * rng.standard_normal())
        tlam = pz[i] / pt
        rpx[j] = ptr * (cphi * cb - sphi0 * sb)
        rpy[j] = ptr * (sphi0 * cb + cphi * sb)
        rpz[j] = ptr * ((tlam * cb2 + sb2) / (cb2 - tlam * sb2))
        spt[j] = dk / k_m
        sphi[j] = sp
        slam[j] = sl
        s1[j] = sa
        res1[j] = lres[first]
        if nh >= min_hits and pt >= min_pt:
            inside = _polar_cut(pz[i] / p, cos_max, cos_min)
            if inside < 0:
                theta = _atan2(pt, pz[i])
                inside = 1 if theta_min <= theta <= theta_max else 0
            found[j] = inside == 1
        ndraw += 3
    return hits, found, rpx, rpy, rpz, spt, sphi, slam, s1, res1, ndraw


@_njit(cache=True, error_model="numpy")
def track_kernel(is_trk, q, px, py, pz, e, vx, vy, vz,
                 lr, lzmin, lzmax, lres, lthick, lmeas,
                 bfield, theta_min, theta_max, min_hits, min_pt, rng):
    """Hits, resolutions and smeared momenta of all charged daughters.

    Parameters
    ----------
    is_trk : ndarray of bool
        Which entries of the flat daughter arrays are track candidates.
    q, px, py, pz, e, vx, vy, vz : ndarray of float64
        Charge (e), four-momentum (GeV) and origin (cm) of every daughter.
    lr, lzmin, lzmax, lres, lthick : ndarray of float64
        Cylinders sorted by radius: radius, z extent (cm), resolution (cm),
        thickness (x/X0).
    lmeas : ndarray of int32
        1 for measuring cylinders.
    bfield : float
        Field, T.
    theta_min, theta_max : float
        Tracker polar-angle acceptance, rad (true direction at the origin).
    min_hits : int
        Hits needed for a found track.
    min_pt : float
        Minimum true p_T of a found track, GeV.
    rng : numpy.random.Generator
        Three normal numbers are drawn per track with at least 3 hits, in
        candidate order (curvature, azimuth, dip).

    Returns
    -------
    tuple of ndarray
        For every candidate in order (length ``is_trk.sum()``): hits (int32),
        found (bool), reconstructed px, py, pz (GeV; NaN with fewer than 3
        hits), sigma(pT)/pT, sigma_phi, sigma_lambda (rad), s1 = transverse arc
        length to the first hit (cm) and the first hit's resolution (cm).
    """
    out = _track_block(is_trk, q, px, py, pz, e, vx, vy, vz, lr, lzmin, lzmax, lres, lthick,
                       lmeas, bfield, theta_min, theta_max, min_hits, min_pt, rng)
    return out[:10]
