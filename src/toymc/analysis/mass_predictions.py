"""Predictions of reconstructed masses that the validation compares with the detector:
the di-photon mass that the calorimeter geometry alone gives a displaced decay
(:func:`ip_pointing_mass`), and the mass resolution propagated from the tracks' stored
resolutions (:func:`propagated_mass_sigma`)."""

import math as _math

import numpy as _np
from numba import njit as _njit

from toymc.detector.calorimeter import energy_resolution as _energy_resolution
from toymc.detector.calorimeter import face_impact as _face_impact

__all__ = ("ip_pointing_mass", "mass_from_params", "propagated_mass_sigma")


@_njit(cache=True)
def _ip_mass_kernel(off, px, py, pz, e, vx, vy, vz, is_gam, rb, zb_min, zb_max, zf, rf_in,
                    rf_out, zbk, rb_in, rb_out, stochastic, noise, constant):
    n = off.shape[0] - 1
    out = _np.full(n, _np.nan)
    corr = _np.full(n, _np.nan)
    for ev in range(n):
        sx = 0.0
        sy = 0.0
        sz = 0.0
        se = 0.0
        r2 = 0.0
        ok = True
        ng = 0
        for k in range(off[ev], off[ev + 1]):
            if not is_gam[k]:
                continue
            part, x, y, z = _face_impact(vx[k], vy[k], vz[k], px[k], py[k], pz[k], rb, zb_min,
                                        zb_max, zf, rf_in, rf_out, zbk, rb_in, rb_out)
            if part < 0:
                ok = False
                break
            d = _math.sqrt(x * x + y * y + z * z)
            sx += e[k] * x / d
            sy += e[k] * y / d
            sz += e[k] * z / d
            se += e[k]
            rel = _energy_resolution(e[k], stochastic, noise, constant) / e[k]
            r2 += rel * rel
            ng += 1
        if ok and ng > 0:
            out[ev] = _math.sqrt(max(se * se - sx * sx - sy * sy - sz * sz, 0.0))
            corr[ev] = 1.0 - r2 / 8.0 if ng == 2 else 1.0
    return out, corr


def ip_pointing_mass(block, geometry):
    """Di-photon mass from true energies and IP-to-true-impact-point directions (GeV).

    Parameters
    ----------
    block : toymc.engine.block.Block
        With the ``dau`` group.
    geometry : toymc.detector.geometry.Geometry
        Calorimeter face (:func:`toymc.detector.calorimeter.face_impact`).

    Returns
    -------
    m_geo : ndarray
        Per event, GeV; NaN if a photon misses the face.
    energy_factor : ndarray
        Expected factor from the Gaussian energy smearing of two photons,
        ``E[sqrt(E1' E2')]/sqrt(E1 E2) = 1 - (r1^2 + r2^2)/8 + O(r^4)``,
        ``r_i = sigma_E/E`` at the true energy (second-order Taylor expansion
        of the square root, ``E[sqrt(1 + x)] = 1 - var(x)/8``); 1 for other
        photon counts.  The mass is proportional to ``sqrt(E1 E2)`` at fixed
        directions.
    """
    _counts, dau = block.groups["dau"]
    off = block.offsets("dau")
    is_gam = (_np.asarray(dau["status"]) == 1) & (_np.asarray(dau["pdg"]) == 22)
    cal = geometry.calorimeter
    f = {k: _np.ascontiguousarray(dau[k], dtype=_np.float64)
         for k in ("px", "py", "pz", "e", "vx", "vy", "vz")}
    return _ip_mass_kernel(off, f["px"], f["py"], f["pz"], f["e"], f["vx"], f["vy"], f["vz"],
                           is_gam, float(cal.radius), float(cal.z_min), float(cal.z_max),
                           float(cal.forward.z), float(cal.forward.r_inner),
                           float(cal.forward.r_outer), float(cal.backward.z),
                           float(cal.backward.r_inner), float(cal.backward.r_outer),
                           float(cal.stochastic), float(cal.noise), float(cal.constant))


def mass_from_params(pt, phi, lam, m):
    """Invariant mass (GeV) of tracks given as arrays (events, tracks) of pT, phi, lambda."""
    px, py, pz = pt * _np.cos(phi), pt * _np.sin(phi), pt * _np.tan(lam)
    e = _np.sqrt(px ** 2 + py ** 2 + pz ** 2 + m ** 2)
    s = [a.sum(axis=1) for a in (px, py, pz, e)]
    return _np.sqrt(_np.maximum(s[3] ** 2 - s[0] ** 2 - s[1] ** 2 - s[2] ** 2, 0.0))


def propagated_mass_sigma(pt, phi, lam, m, s_pt, s_phi, s_lam):
    """Linear propagation of track resolutions to the invariant mass.

    Parameters
    ----------
    pt, phi, lam : ndarray, shape (n, k)
        True transverse momentum (GeV), azimuth and dip angle (rad) of k tracks.
    m : ndarray, shape (n, k)
        Mass hypotheses, GeV.
    s_pt : ndarray
        Relative pT resolution sigma(pT)/pT (first order of the curvature smearing).
    s_phi, s_lam : ndarray
        Angular resolutions, rad.

    Returns
    -------
    ndarray, shape (n,)
        ``sigma_m = sqrt(sum_j (dm/dtheta_j sigma_j)^2)``, derivatives by central
        differences with steps of 1e-3 sigma (independent smearing of every
        parameter, as in :mod:`toymc.detector.tracking`).
    """
    par = [pt, phi, lam]
    sig = [s_pt * pt, s_phi, s_lam]
    var = _np.zeros(pt.shape[0])
    for j in range(3):
        for t in range(pt.shape[1]):
            h = 1e-3 * sig[j][:, t]
            up = [p.copy() for p in par]
            dn = [p.copy() for p in par]
            up[j][:, t] += h
            dn[j][:, t] -= h
            with _np.errstate(invalid="ignore", divide="ignore"):
                d = (mass_from_params(*up, m) - mass_from_params(*dn, m)) / (2 * h)
            var += _np.where(h > 0, (d * sig[j][:, t]) ** 2, 0.0)
    return _np.sqrt(var)
