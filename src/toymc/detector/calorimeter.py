"""Photon response of the calorimeter face.

Model
-----
Only status-1 photons make clusters; electrons, positrons and other charged
particles are seen by the tracker only, and neutral hadrons are ignored.
Photon conversions in the tracker material are not modelled.

*Impact point.*  Each photon flies on a straight line from its TRUE origin
(the LLP decay point, or the pi0 decay point, which is the same for a prompt
pi0).  The face is the barrel cylinder ``r = radius``, ``z_min <= z <= z_max``
and the two endcap disks ``z = z_f`` (``r_inner <= r <= r_outer``); the first
surface met along the line is the impact point.  A photon that passes
through the gap between barrel and endcap, through an endcap's inner hole,
or starts outside the face, is lost.

*Energy.*  Gaussian smearing with
``sigma_E / E = a / sqrt(E) (+) b / E (+) c`` (E in GeV; a stochastic, b
noise, c constant term; quadrature sum), the parametrisation of the PDG
review "Calorimetry" (letter convention: see
:mod:`toymc.detector.geometry`).  A cluster with smeared energy below the
selection's threshold is not found.

*Position.*  The impact point is smeared on the face with a Gaussian of
width ``position_resolution`` per coordinate (r*phi and z on the barrel,
x and y on an endcap).  The polar acceptance applies to the cluster position
seen from the nominal interaction point.

*Direction.*  The reconstructed photon momentum points from the NOMINAL
interaction point (0, 0, 0) to the cluster: ``p = E' (x, y, z) / |(x, y, z)|``.
For a displaced decay the two photons' true directions are more open than
the directions from the origin, so the di-photon mass comes out low; this
follows from the geometry alone, no correction is applied.
"""

import math as _math

import numpy as _np
from numba import njit as _njit

from toymc.detector.helix import _cos_sin
from toymc.detector.tracking import _polar_cut
from toymc.physics.kinematics.elementary import acos_1 as _acos
from toymc.physics.kinematics.elementary import cos_1 as _cos

__all__ = ("cluster_kernel", "energy_resolution", "face_impact")


@_njit(cache=True, error_model="numpy")
def energy_resolution(energy, stochastic, noise, constant):
    """Absolute energy resolution sigma_E in GeV.

    ``sigma_E / E = a/sqrt(E) (+) b/E (+) c`` (PDG review "Calorimetry").

    Parameters
    ----------
    energy : float
        GeV (> 0).
    stochastic, noise, constant : float
        a (GeV^1/2), b (GeV), c.
    """
    rel2 = stochastic * stochastic / energy + (noise / energy) ** 2 + constant * constant
    return energy * _math.sqrt(rel2)


@_njit(cache=True, error_model="numpy")
def face_impact(x0, y0, z0, ux, uy, uz, rb, zb_min, zb_max,
                zf, rf_in, rf_out, zbk, rb_in, rb_out):
    """First point where a straight line meets the calorimeter face.

    Parameters
    ----------
    x0, y0, z0 : float
        Origin, cm.
    ux, uy, uz : float
        Direction (need not be normalised).
    rb, zb_min, zb_max : float
        Barrel radius and z extent, cm.
    zf, rf_in, rf_out, zbk, rb_in, rb_out : float
        Forward and backward endcap planes and radial extents, cm.

    Returns
    -------
    tuple
        (part, x, y, z): part 0 barrel, 1 forward, 2 backward, -1 lost.
    """
    best = _math.inf
    part = -1
    r02 = x0 * x0 + y0 * y0
    if r02 >= rb * rb:
        return -1, 0.0, 0.0, 0.0
    a = ux * ux + uy * uy
    if a > 0.0:
        b = 2.0 * (x0 * ux + y0 * uy)
        c = r02 - rb * rb
        t = (-b + _math.sqrt(b * b - 4.0 * a * c)) / (2.0 * a)
        z = z0 + t * uz
        if zb_min <= z <= zb_max:
            best = t
            part = 0
    if uz > 0.0 and z0 < zf:
        t = (zf - z0) / uz
        rx = x0 + t * ux
        ry = y0 + t * uy
        r = _math.sqrt(rx * rx + ry * ry)
        if rf_in <= r <= rf_out and t < best:
            best = t
            part = 1
    elif uz < 0.0 and z0 > zbk:
        t = (zbk - z0) / uz
        rx = x0 + t * ux
        ry = y0 + t * uy
        r = _math.sqrt(rx * rx + ry * ry)
        if rb_in <= r <= rb_out and t < best:
            best = t
            part = 2
    if part < 0:
        return -1, 0.0, 0.0, 0.0
    return part, x0 + best * ux, y0 + best * uy, z0 + best * uz


@_njit(cache=True, error_model="numpy")
def _cluster_block(is_gam, px, py, pz, e, vx, vy, vz,
                   rb, zb_min, zb_max, zf, rf_in, rf_out, zbk, rb_in, rb_out,
                   stochastic, noise, constant, pos_res, theta_min, theta_max, e_min, rng):
    """:func:`cluster_kernel`, also returning the number of normal numbers drawn."""
    n = 0
    for i in range(is_gam.shape[0]):
        if is_gam[i]:
            n += 1
    ce = _np.zeros(n)
    cx = _np.full(n, _np.nan)
    cy = _np.full(n, _np.nan)
    cz = _np.full(n, _np.nan)
    cf = _np.zeros(n, dtype=_np.bool_)
    cpx = _np.zeros(n)
    cpy = _np.zeros(n)
    cpz = _np.zeros(n)
    cos_min = _cos(theta_min)
    cos_max = _cos(theta_max)
    ndraw = 0
    j = -1
    for i in range(is_gam.shape[0]):
        if not is_gam[i]:
            continue
        j += 1
        part, x, y, z = face_impact(vx[i], vy[i], vz[i], px[i], py[i], pz[i], rb, zb_min,
                                    zb_max, zf, rf_in, rf_out, zbk, rb_in, rb_out)
        if part < 0 or e[i] <= 0.0:
            continue
        es = e[i] + energy_resolution(e[i], stochastic, noise, constant) * rng.standard_normal()
        if part == 0:
            # azimuth phi + (pos_res / rb) g on the barrel, by angle addition
            rxy = _math.sqrt(x * x + y * y)
            cb, sb = _cos_sin(pos_res / rb * rng.standard_normal())
            cphi = x / rxy
            sphi = y / rxy
            x = rb * (cphi * cb - sphi * sb)
            y = rb * (sphi * cb + cphi * sb)
            z = z + pos_res * rng.standard_normal()
        else:
            x = x + pos_res * rng.standard_normal()
            y = y + pos_res * rng.standard_normal()
        ce[j] = max(es, 0.0)
        cx[j] = x
        cy[j] = y
        cz[j] = z
        dist = _math.sqrt(x * x + y * y + z * z)
        ok = es >= e_min and es > 0.0
        if ok:
            inside = _polar_cut(z / dist, cos_max, cos_min)
            if inside < 0:
                theta = _acos(z / dist)
                inside = 1 if theta_min <= theta <= theta_max else 0
            ok = inside == 1
        cf[j] = ok
        if ok:
            cpx[j] = es * x / dist
            cpy[j] = es * y / dist
            cpz[j] = es * z / dist
        ndraw += 3
    return ce, cx, cy, cz, cf, cpx, cpy, cpz, ndraw


@_njit(cache=True, error_model="numpy")
def cluster_kernel(is_gam, px, py, pz, e, vx, vy, vz,
                   rb, zb_min, zb_max, zf, rf_in, rf_out, zbk, rb_in, rb_out,
                   stochastic, noise, constant, pos_res, theta_min, theta_max, e_min, rng):
    """Clusters of all photons among the flat daughter arrays.

    Parameters
    ----------
    is_gam : ndarray of bool
        Which daughters are status-1 photons.
    px, py, pz, e, vx, vy, vz : ndarray of float64
        Four-momentum (GeV) and origin (cm).
    rb ... rb_out : float
        Face geometry (see :func:`face_impact`), cm.
    stochastic, noise, constant : float
        Energy-resolution terms a (GeV^1/2), b (GeV), c.
    pos_res : float
        Position resolution, cm.
    theta_min, theta_max : float
        Polar acceptance of the cluster seen from the origin, rad.
    e_min : float
        Minimum smeared energy, GeV.
    rng : numpy.random.Generator
        Three normal numbers per photon on the face, in photon order.

    Returns
    -------
    tuple of ndarray
        For every photon: smeared energy e (GeV; 0 when lost), x, y, z of the
        cluster (cm; NaN when lost), found (bool), reconstructed px, py, pz
        from the origin (GeV; 0 when not found).
    """
    out = _cluster_block(is_gam, px, py, pz, e, vx, vy, vz, rb, zb_min, zb_max, zf, rf_in,
                         rf_out, zbk, rb_in, rb_out, stochastic, noise, constant, pos_res,
                         theta_min, theta_max, e_min, rng)
    return out[:8]
