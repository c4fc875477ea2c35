"""Displaced-vertex reconstruction: pair choice, smearing, window, efficiency.

Model
-----
*Pair.*  An event has a vertex candidate when every charged status-1
daughter of the LLP is a found track and at least one positive and one
negative track exist.  The vertex is made from the first found positive and
the first found negative track (for a -> pi+ pi- pi0 this is the charged
pair; for four charged daughters the others only enter the mass).

*Smearing.*  Each track i is a line through the true vertex with its true
transverse direction phi_i and dip lambda_i at the vertex.  Its transverse
offset is measured with

    sigma_perp,i^2 = sigma_1,i^2 + (s_1,i sigma_phi,i)^2

and its z with

    sigma_z,i^2 = sigma_1,i^2 + (s_1,i sigma_lambda,i / cos^2 lambda_i)^2,

where sigma_1 is the resolution of the first measured hit, s_1 the
transverse arc length from the vertex to that hit and sigma_phi,
sigma_lambda the track's angular resolutions at the vertex (see
:mod:`toymc.detector.tracking`).  A vertex at larger radius loses the hits
inside it: its first hit is further out and coarser, fewer hits remain (so
the angular errors grow) and the extrapolation distance s_1 jumps each time
a layer is lost; all three enlarge the vertex error.  The transverse vertex
is the intersection of the two measured lines, ``n_i . V = a_i``
(n_i = unit normal of line i), so its error is
``delta V = N^-1 delta a`` with ``det N = sin(phi_2 - phi_1)``:
the error along the pair's bisector grows like ``1/|sin(opening angle)|``
for a small transverse opening angle (|det N| is floored at 1e-4).
The vertex z is the weighted mean of the two tracks' z.

*Window and efficiency.*  The fiducial window applies to the reconstructed
vertex (``r_min <= r <= r_max``, ``z_min <= z <= z_max``).  The efficiency
profile (:class:`toymc.detector.profile.Profile`, evaluated by
:func:`toymc.detector.profile.profile_efficiency`) is evaluated at the
TRUE vertex radius (or at the two tracks' hit counts for kind "hits").  It is
returned both as a weight ``vtx_w`` (eps for events with a candidate inside
the window, else 0) and as a random accept flag ``vtx_found``
(candidate inside the window and u < eps, u uniform in [0, 1)).  Use one or
the other, not both.
"""

import math as _math

import numpy as _np
from numba import njit as _njit

from toymc.detector.profile import Profile as _Profile
from toymc.detector.profile import profile_efficiency
from toymc.physics.kinematics.elementary import sincos_1 as _sincos

__all__ = (
    "fold_profile", "profile_efficiency", "radial_profile", "vertex_kernel", "vertex_line_error",
)


@_njit(cache=True, error_model="numpy")
def vertex_line_error(phi1, phi2, d1, d2):
    """Transverse vertex displacement from two line offsets d1, d2 (cm).

    The lines pass through the vertex with azimuths phi1, phi2; their normal
    offsets are shifted by d1, d2.  Returns (dx, dy) in cm.
    """
    s1, c1 = _sincos(phi1)
    s2, c2 = _sincos(phi2)
    return _line_error(c1, s1, c2, s2, d1, d2)


@_njit(cache=True, error_model="numpy")
def _line_error(c1, s1, c2, s2, d1, d2):
    """:func:`vertex_line_error` from the direction cosines (cos phi_i, sin phi_i)."""
    n1x = -s1
    n1y = c1
    n2x = -s2
    n2y = c2
    det = n1x * n2y - n1y * n2x
    if abs(det) < 1e-4:
        det = 1e-4 if det >= 0.0 else -1e-4
    return (d1 * n2y - d2 * n1y) / det, (n1x * d2 - n2x * d1) / det


@_njit(cache=True, error_model="numpy")
def _pair(lo, hi, q, found):
    """Vertex pair among tracks lo..hi-1: (a, b) = first positive and first negative.

    Returns (-1, -1) unless every track is found and both charges occur.
    """
    a = -1
    b = -1
    for k in range(lo, hi):
        if not found[k]:
            return -1, -1
        if q[k] > 0 and a < 0:
            a = k
        elif q[k] < 0 and b < 0:
            b = k
    if a < 0 or b < 0:
        return -1, -1
    return a, b


@_njit(cache=True, error_model="numpy")
def _vertex_block(off, q, found, hits, vx, vy, vz, px, py, pz, s1, res1, sphi, slam, rng):
    """:func:`vertex_kernel`, also returning the number of normal numbers drawn."""
    n = off.shape[0] - 1
    cand = _np.zeros(n, dtype=_np.bool_)
    ox = _np.full(n, _np.nan)
    oy = _np.full(n, _np.nan)
    oz = _np.full(n, _np.nan)
    rtrue = _np.full(n, _np.nan)
    h1 = _np.zeros(n, dtype=_np.int32)
    h2 = _np.zeros(n, dtype=_np.int32)
    ndraw = 0
    for ev in range(n):
        a, b = _pair(off[ev], off[ev + 1], q, found)
        if a < 0:
            continue
        cand[ev] = True
        ndraw += 4
        pt2a = px[a] * px[a] + py[a] * py[a]
        pt2b = px[b] * px[b] + py[b] * py[b]
        pta = _math.sqrt(pt2a)
        ptb = _math.sqrt(pt2b)
        sa = _math.sqrt(res1[a] ** 2 + (s1[a] * sphi[a]) ** 2)
        sb = _math.sqrt(res1[b] ** 2 + (s1[b] * sphi[b]) ** 2)
        dx, dy = _line_error(px[a] / pta, py[a] / pta, px[b] / ptb, py[b] / ptb,
                             sa * rng.standard_normal(), sb * rng.standard_normal())
        # cos^2 lambda of each track
        ca = pt2a / (pt2a + pz[a] * pz[a])
        cb = pt2b / (pt2b + pz[b] * pz[b])
        sza = _math.sqrt(res1[a] ** 2 + (s1[a] * slam[a] / ca) ** 2)
        szb = _math.sqrt(res1[b] ** 2 + (s1[b] * slam[b] / cb) ** 2)
        za = vz[a] + sza * rng.standard_normal()
        zb = vz[b] + szb * rng.standard_normal()
        wa = 1.0 / (sza * sza)
        wb = 1.0 / (szb * szb)
        tx = 0.5 * (vx[a] + vx[b])
        ty = 0.5 * (vy[a] + vy[b])
        ox[ev] = tx + dx
        oy[ev] = ty + dy
        oz[ev] = (wa * za + wb * zb) / (wa + wb)
        rtrue[ev] = _math.sqrt(tx * tx + ty * ty)
        h1[ev] = hits[a]
        h2[ev] = hits[b]
    return cand, ox, oy, oz, rtrue, h1, h2, ndraw


@_njit(cache=True, error_model="numpy")
def vertex_kernel(off, q, found, hits, vx, vy, vz, px, py, pz, s1, res1, sphi, slam, rng):
    """Vertex candidates of all events from the flat track arrays.

    Parameters
    ----------
    off : ndarray of int64
        Track offsets per event (length n + 1).
    q, found, hits : ndarray
        Charge, found flag and hit count of every track.
    vx, vy, vz, px, py, pz : ndarray of float64
        True origin (cm) and momentum (GeV) of every track.
    s1, res1, sphi, slam : ndarray of float64
        Arc length to the first hit (cm), its resolution (cm) and angular
        resolutions (rad), as from :func:`toymc.detector.tracking.track_kernel`.
    rng : numpy.random.Generator
        Four normal numbers per candidate, in event order.

    Returns
    -------
    tuple of ndarray
        Per event: candidate (bool), reconstructed x, y, z (cm; NaN without a
        candidate), true vertex radius (cm), hits of the positive and of the
        negative track (int32).
    """
    out = _vertex_block(off, q, found, hits, vx, vy, vz, px, py, pz, s1, res1, sphi, slam, rng)
    return out[:7]


def radial_profile(profile, geometry, full_hits, radii):
    """The profile as a function of the decay radius only (e.g. for an analytic fold).

    "flat", "linear" and "tabulated" profiles are returned unchanged.  A "hits"
    profile becomes a "tabulated" one at the given radii, for stiff tracks
    leaving the decay point radially at z = 0: each track then crosses every
    measuring cylinder outside r whose z extent contains 0, n(r) of them, and
    ``eps(r) = eps0 * min(1, n(r) / full_hits)^2``.  Curling, inclined or
    forward tracks have fewer hits, so this is an upper estimate.

    Parameters
    ----------
    profile : toymc.detector.profile.Profile
    geometry : toymc.detector.geometry.Geometry
    full_hits : int
        ``Selection.full_hits``.
    radii : sequence of float
        Increasing radii in cm at which to tabulate.

    Returns
    -------
    toymc.detector.profile.Profile
    """
    if profile.kind != "hits":
        return profile
    lay = geometry.tracking_layers()
    meas = (lay["measuring"] == 1) & (lay["z_min"] <= 0.0) & (lay["z_max"] >= 0.0)
    r_meas = lay["radius"][meas]
    radii = _np.asarray(radii, dtype=_np.float64)
    n_out = _np.array([_np.count_nonzero(r_meas > r) for r in radii], dtype=_np.float64)
    eps = _np.minimum(1.0, n_out / full_hits) ** 2
    return _Profile("tabulated", profile.eps0, tuple(float(r) for r in radii),
                          tuple(float(e) for e in eps))


def fold_profile(selection, geometry, radii=None):
    """The selection's profile as a function of the decay radius alone, for the analytic fold.

    flat, linear and tabulated profiles are returned unchanged; a "hits" profile
    becomes a radius table through :func:`radial_profile` (an upper estimate, see
    there) at `radii` (default: 60 radii across the window).
    """
    prof = selection.profile
    if prof.kind == "hits":
        if radii is None:
            radii = _np.linspace(selection.r_min, selection.r_max, 60)
        prof = radial_profile(prof, geometry, selection.full_hits, radii)
    return prof
