"""Signal candidates of reconstructed blocks under a two-track signal hypothesis, for the
cut tuning (:mod:`toymc.analysis.tuning`, steps 1-4 of its docstring).

A candidate is an event with exactly two found tracks (one of each charge) and, for
pi_pi_pi0, exactly two found clusters.  Its mass is formed with the signal daughters'
PDG masses for the tracks (:data:`HYPOTHESES`) and massless clusters pointing from the
nominal interaction point; the two-track masses under the K_S (pi pi) and Lambda
(p pi) hypotheses feed the vetoes.
"""

import numpy as np

from toymc.physics import constants as C

__all__ = ("HYPOTHESES", "candidates", "mass_resolution")

#: channel -> (track mass hypothesis, number of photons)
HYPOTHESES = {"pi_pi_pi0": (C.M_PI, 2), "pi_pi": (C.M_PI, 0), "e_e": (C.M_E, 0),
              "mu_mu": (C.M_MU, 0)}


def _pair_mass(px1, py1, pz1, m1, px2, py2, pz2, m2):
    e = np.sqrt(px1 ** 2 + py1 ** 2 + pz1 ** 2 + m1 ** 2) + np.sqrt(
        px2 ** 2 + py2 ** 2 + pz2 ** 2 + m2 ** 2)
    return np.sqrt(np.maximum(e ** 2 - (px1 + px2) ** 2 - (py1 + py2) ** 2 - (pz1 + pz2) ** 2,
                              0.0))


def candidates(block, channel):
    """Candidate columns of a reconstructed block under the signal hypothesis `channel`.

    Parameters
    ----------
    block : toymc.engine.block.Block
        After :func:`toymc.detector.respond`.
    channel : str
        Signal channel (pi_pi_pi0, pi_pi, e_e, mu_mu).

    Returns
    -------
    dict of numpy.ndarray
        ``sel`` (steps 1-2 of the tuning's module docstring), ``r`` (vtx_r, cm),
        ``m`` (candidate mass, GeV), ``m_pipi`` (both tracks as pions),
        ``m_ppi`` (positive track as proton, negative as pion), ``m_pip``
        (positive as pion, negative as antiproton), ``w`` (w_gen).
    """
    m_trk, n_gam = HYPOTHESES[channel]
    n = block.n
    ev = block.event
    tc, trk = block.groups["trk"]
    tc = np.asarray(tc)
    off = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(tc, out=off[1:])
    sel = np.asarray(ev["cut_vertex"], dtype=bool) & (tc == 2)
    if n_gam:
        sel &= np.asarray(ev["rec_nclu"]) == n_gam
    i0 = np.minimum(off[:-1], max(len(trk["px"]) - 1, 0))
    i1 = np.minimum(i0 + 1, max(len(trk["px"]) - 1, 0))
    out = {"sel": sel, "r": np.asarray(ev["vtx_r"], dtype=np.float64),
           "w": np.asarray(ev["w_gen"], dtype=np.float64)}
    if len(trk["px"]) == 0:
        z = np.full(n, np.nan)
        out.update(m=z, m_pipi=z, m_ppi=z, m_pip=z)
        out["sel"] = np.zeros(n, dtype=bool)
        return out
    q0 = np.asarray(trk["q"])[i0]
    ip = np.where(q0 > 0, i0, i1)
    im = np.where(q0 > 0, i1, i0)
    px, py, pz = (np.asarray(trk[k], dtype=np.float64) for k in ("px", "py", "pz"))
    a = (px[ip], py[ip], pz[ip])
    b = (px[im], py[im], pz[im])
    with np.errstate(invalid="ignore"):
        m_pipi = _pair_mass(*a, C.M_PI, *b, C.M_PI)
        m_ppi = _pair_mass(*a, C.M_P, *b, C.M_PI)
        m_pip = _pair_mass(*a, C.M_PI, *b, C.M_P)
        ea = np.sqrt(a[0] ** 2 + a[1] ** 2 + a[2] ** 2 + m_trk ** 2)
        eb = np.sqrt(b[0] ** 2 + b[1] ** 2 + b[2] ** 2 + m_trk ** 2)
        sx, sy, sz, se = a[0] + b[0], a[1] + b[1], a[2] + b[2], ea + eb
        if n_gam:
            cc, clu = block.groups["clu"]
            ce = np.asarray(clu["e"], dtype=np.float64)
            cf = np.asarray(clu["found"], dtype=bool)
            pos = [np.asarray(clu[k], dtype=np.float64) for k in ("x", "y", "z")]
            rr = np.sqrt(pos[0] ** 2 + pos[1] ** 2 + pos[2] ** 2)
            evc = np.repeat(np.arange(n), np.asarray(cc))
            good = cf & (rr > 0) & np.isfinite(rr)
            rr_safe = np.where(good, rr, 1.0)
            comps = [np.bincount(evc, weights=np.where(good, ce * p / rr_safe, 0.0), minlength=n)
                     for p in pos]
            sx, sy, sz = sx + comps[0], sy + comps[1], sz + comps[2]
            se = se + np.bincount(evc, weights=np.where(good, ce, 0.0), minlength=n)
        m = np.sqrt(np.maximum(se ** 2 - sx ** 2 - sy ** 2 - sz ** 2, 0.0))
    valid = tc == 2
    nan = np.full(n, np.nan)
    out.update(m=np.where(valid, m, nan), m_pipi=np.where(valid, m_pipi, nan),
               m_ppi=np.where(valid, m_ppi, nan), m_pip=np.where(valid, m_pip, nan))
    out["sel"] = sel & np.isfinite(out["m"]) & np.isfinite(out["r"])
    return out


def mass_resolution(m):
    """(median, sigma) of candidate masses: sigma = (q84.13 - q15.87)/2, GeV."""
    m = np.asarray(m, dtype=np.float64)
    q16, q50, q84 = np.percentile(m, [15.865, 50.0, 84.135])
    return float(q50), float(0.5 * (q84 - q16))
