"""``toymc validate``: the generator and detector checked against the analytic fold and
against themselves, with plots and a markdown summary.

Cases: the demo detector (``geometries/demo.toml``) with the demo configs at
several masses and channels (:data:`CASES`).  Checks (one pass/fail line each
in ``summary.md``):

``fold``
    MC efficiency vs the analytic fold at log-spaced c*tau from 1e-3 cm to
    1e5 cm.  Here the profile is the only efficiency: the MC efficiency is the
    fraction of generated events whose TRUE decay point (``llp_dx, llp_dy,
    llp_dz``) lies inside the selection's window and which are then accepted
    at random with probability ``eps(llp_dr)`` (the detector's own profile,
    :func:`toymc.detector.vertexing.profile_efficiency`) -- the accept logic of
    ``vtx_found``, on truth.  Each c*tau point is an independent sample (own
    seed) generated at that c*tau; the fold uses another independent truth
    sample of the same config.
``reweight``
    Full-selection efficiency (``cut_mass``, the last cutflow step) of a
    reference sample at ``c*tau_0`` reweighted to other c*tau
    (:mod:`toymc.analysis.reweight`) vs samples generated directly there.  The effective
    sample size (ESS) is reported per point; below ``ESS_FRACTION`` of the
    events a :class:`toymc.analysis.reweight.LowEffectiveSampleWarning` is recorded and
    the point, like every point with ``c*tau_1 >= 2 c*tau_0`` (infinite weight
    variance), is shown but not used in the criterion.
``radial``
    Radius of found vertices (``vtx_r`` of ``cut_vertex`` events) vs the truth
    prediction ``sum eps(llp_dr) * [true point in window]`` over events with a
    vertex candidate (``cut_tracks``), binned in the true radius.  Same
    events, so the difference in a bin is a sum of ``(accept_i - eps_i)`` with
    variance ``sum eps_i (1 - eps_i)``; vertex smearing moves vertices between
    bins and is assumed small against the bin width.
``mass``
    Reconstructed mass of selected events per case.  For channels whose
    daughters are all tracks (mu mu) the pull ``(rec_m - m)/sigma_m`` is formed
    with ``sigma_m`` from linear propagation of each track's stored
    resolutions (``trk_spt, trk_sphi, trk_slam``) and its robust width
    (1.4826 * median absolute deviation, error by bootstrap) must be 1.
    Channels with photons are reported without a criterion.
``diphoton``
    a -> gamma gamma: mean of ``rec_m - m_geo`` per bin of the true decay
    radius, where ``m_geo`` is the di-photon mass of the TRUE photon energies
    with directions from the nominal interaction point to the TRUE impact
    points on the calorimeter face: the mass shift that the geometry alone
    predicts for a displaced decay (:mod:`toymc.detector.calorimeter`), times
    the second-order shift ``1 - (r1^2 + r2^2)/8`` that Gaussian energy
    smearing of relative widths r1, r2 gives to ``sqrt(E1 E2)``
    (:func:`ip_pointing_mass`; without it the mean is off by ~2e-4 relative,
    which the full-size sample resolves).  The second-order effect of the
    cluster-position smearing (~3e-5 relative for a 0.6 GeV-wide opening
    angle) is neglected.

Pass criteria (the same for every check with several points)
------------------------------------------------------------
Each point gets a pull ``z`` under the hypothesis that the two sides agree:

* Gaussian regime (efficiencies: ``n f >= 10`` and ``n (1 - f) >= 10``),
  ``z = (k/n - f)/sqrt(f (1 - f)/n + sigma_f^2)`` with the binomial variance
  evaluated at the reference ``f`` and ``sigma_f`` its own (independent) error;
  for weighted or mean-value comparisons ``z = difference / sqrt(sum of
  squared errors)``.
* Small counts: the exact two-sided binomial p-value of ``k`` given ``n`` and
  ``f`` (twice the smaller tail, capped at 1; ``sigma_f`` neglected), turned
  into ``|z| = Phi^-1(1 - p/2)`` with the sign of ``k - n f``.

A check passes when both

1. the chi-square ``sum z^2`` of the Gaussian-regime points has a p-value
   ``>= ALPHA`` for ``ndf`` = their number (no fitted parameters), and
2. the largest ``|z|`` over all N points is below the Bonferroni-corrected
   two-sided threshold ``z_B = Phi^-1(1 - ALPHA/(2 N))``,

with ``ALPHA = 0.001``.  Each criterion falsely fails a correct program with
probability at most ALPHA (Bonferroni's inequality for the second), so a
correct program fails a given check with probability below 0.002.  (Normal
quantiles and chi-square tails from ``scipy.stats``; pull and chi-square
conventions as in the PDG review "Statistics".)
"""

import math as _math
import time as _time
import warnings as _warnings

import numpy as _np
from numba import njit as _njit

from toymc.detector.calorimeter import energy_resolution as _energy_resolution
from toymc.detector.calorimeter import face_impact as _face_impact
from toymc.io.files import atomic_write as _atomic_write
from toymc.io.files import check_output_dir as _check_output_dir
from toymc.io.files import make_dir as _make_dir
from toymc.io.files import replacing as _replacing

__all__ = (
    "ALPHA",
    "CASES",
    "ESS_FRACTION",
    "assess",
    "binomial_pull",
    "ip_pointing_mass",
    "output_names",
    "propagated_mass_sigma",
    "run_validation",
)

#: significance of each pass criterion (chi-square p-value, family-wise max pull)
ALPHA = 0.001
#: smallest acceptable ESS as a fraction of the reference sample
ESS_FRACTION = 0.1

#: (name, demo config shipped in toymc/data/configs, mass GeV, label)
CASES = (
    ("alp_3pi_m0.6", "alp_3pi_bka.toml", 0.6, r"ALP $\to\pi^+\pi^-\pi^0$, m = 0.6 GeV"),
    ("alp_3pi_m1.5", "alp_3pi_bka.toml", 1.5, r"ALP $\to\pi^+\pi^-\pi^0$, m = 1.5 GeV"),
    ("dp_mumu_m0.4", "darkphoton_mumu.toml", 0.4, r"A' $\to\mu^+\mu^-$, m = 0.4 GeV"),
    ("dp_mumu_m2.0", "darkphoton_mumu.toml", 2.0, r"A' $\to\mu^+\mu^-$, m = 2.0 GeV"),
    ("alp_gg_m1.0", "alp_gg_bksta.toml", 1.0, r"ALP $\to\gamma\gamma$, m = 1.0 GeV"),
)

_SETTINGS = {
    # fold: c*tau points, MC events per point, fold sample events
    "full": {"n_ctau": 36, "n_mc": 100_000, "n_fold": 200_000, "n_ref": 400_000,
             "n_direct": 200_000, "ctau0": 20.0,
             "ctau_rw": (3.0, 6.0, 12.0, 25.0, 32.0, 38.0, 80.0), "n_boot": 200},
    "quick": {"n_ctau": 12, "n_mc": 4_000, "n_fold": 8_000, "n_ref": 30_000,
              "n_direct": 15_000, "ctau0": 20.0,
              "ctau_rw": (4.0, 10.0, 25.0, 32.0, 38.0, 80.0), "n_boot": 100},
}


# ----------------------------------------------------------------------------- statistics


def binomial_pull(k, n, f, f_err=0.0):
    """Pull of k passes in n trials against a reference efficiency f (see module doc).

    Parameters
    ----------
    k, n : int
        Passing and total events of the measurement.
    f : float
        Reference efficiency.
    f_err : float
        Standard error of f (independent of k).

    Returns
    -------
    z : float
        Signed pull.
    gaussian : bool
        True if ``n f >= 10`` and ``n (1 - f) >= 10`` (Gaussian formula used).
    """
    from scipy import stats

    if n * f >= 10 and n * (1 - f) >= 10:
        var = f * (1 - f) / n + f_err ** 2
        return (k / n - f) / _math.sqrt(var), True
    f = min(max(f, 0.0), 1.0)
    lo = stats.binom.cdf(k, n, f)
    hi = stats.binom.sf(k - 1, n, f)
    p = min(1.0, 2.0 * min(lo, hi))
    z = float(stats.norm.isf(p / 2)) if p < 1.0 else 0.0
    return (z if k >= n * f else -z), False


def assess(z, gaussian, alpha=ALPHA):
    """Chi-square and Bonferroni max-pull criteria of a set of pulls.

    Parameters
    ----------
    z : array_like
        Pulls of all points.
    gaussian : array_like of bool
        Which points enter the chi-square.
    alpha : float

    Returns
    -------
    dict
        ``n``, ``chi2``, ``ndf``, ``p_chi2``, ``max_pull`` (signed, largest
        ``|z|``), ``z_limit``, ``passed``.
    """
    from scipy import stats

    z = _np.asarray(z, dtype=float)
    g = _np.asarray(gaussian, dtype=bool)
    n = int(z.size)
    if n == 0:
        return {"n": 0, "chi2": 0.0, "ndf": 0, "p_chi2": 1.0, "max_pull": 0.0, "z_limit": 0.0,
                "passed": False}
    chi2 = float(_np.sum(z[g] ** 2))
    ndf = int(g.sum())
    p = float(stats.chi2.sf(chi2, ndf)) if ndf else 1.0
    zl = float(stats.norm.isf(alpha / (2 * n)))
    imax = int(_np.argmax(_np.abs(z)))
    return {"n": n, "chi2": chi2, "ndf": ndf, "p_chi2": p, "max_pull": float(z[imax]),
            "z_limit": zl, "passed": bool(p >= alpha and abs(z[imax]) < zl)}


# ----------------------------------------------------------------------------- samples


def _seed(base, *key):
    return int(_np.random.SeedSequence(base, spawn_key=tuple(int(k) for k in key))
               .generate_state(1, dtype=_np.uint32)[0])


def _case_cfg(case, ctau):
    from toymc.config import schema as config
    from toymc.data import config_path

    _name, name, mass, _ = case
    cfg = config.load(config_path(name))
    return cfg.with_llp(mass=float(mass), ctau=float(ctau))


def _reco_block(cfg, events, seed):
    from toymc.engine.api import detector_for
    from toymc.engine.block import concatenate
    from toymc.engine.generator import iter_chunks

    c = cfg.with_run(events=int(events), seed=int(seed))
    return concatenate(list(iter_chunks(c, detector=detector_for(c))))


def _truth_pass(ev, selection, rng):
    """Window on the true decay point and random accept with eps(true radius)."""
    from toymc.detector.vertexing import profile_efficiency

    r = _np.asarray(ev["llp_dr"])
    z = _np.asarray(ev["llp_dz"])
    inw = ((r >= selection.r_min) & (r <= selection.r_max) & (z >= selection.z_min)
           & (z <= selection.z_max))
    eps = profile_efficiency(selection.profile, r)
    return inw & (rng.random(r.size) < eps)


# ----------------------------------------------------------------------------- kernels


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


def _mass_from_params(pt, phi, lam, m):
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
                d = (_mass_from_params(*up, m) - _mass_from_params(*dn, m)) / (2 * h)
            var += _np.where(h > 0, (d * sig[j][:, t]) ** 2, 0.0)
    return _np.sqrt(var)


# ----------------------------------------------------------------------------- checks


def _check_fold(cases, st, seed, outdir, log):
    from scipy import stats

    from toymc.analysis.fold_sample import fold_curve, truth_sample
    from toymc.plots.figures import compare_pull_plot

    grid = _np.geomspace(1e-3, 1e5, st["n_ctau"])
    z_lim = float(stats.norm.isf(ALPHA / (2 * grid.size * len(cases))))
    rows, zs, gs, pngs = [], [], [], []
    for ci, case in enumerate(cases):
        cfg = _case_cfg(case, 1.0)
        ev = truth_sample(cfg, st["n_fold"], _seed(seed, 1, ci))
        f, ferr = fold_curve(ev, cfg.selection, cfg.detector, grid)
        rng = _np.random.default_rng(_seed(seed, 2, ci))
        mc, mcerr, z = (_np.empty(grid.size) for _ in range(3))
        for k, ct in enumerate(grid):
            evk = truth_sample(cfg.with_llp(ctau=float(ct)), st["n_mc"], _seed(seed, 3, ci, k))
            kpass = int(_np.count_nonzero(_truth_pass(evk, cfg.selection, rng)))
            n = st["n_mc"]
            mc[k] = kpass / n
            mcerr[k] = _math.sqrt(max(mc[k] * (1 - mc[k]), 1.0 / n) / n)
            z[k], g = binomial_pull(kpass, n, f[k], ferr[k])
            zs.append(z[k])
            gs.append(g)
            rows.append((case[0], ct, mc[k], mcerr[k], f[k], ferr[k], z[k], g))
        png = outdir / f"fold_{case[0]}.png"
        compare_pull_plot(grid, [("MC: true decay point in window, profile accept", mc,
                                  mcerr)], (f"analytic fold ({st['n_fold']} events)", f, ferr),
                          z, png, r"proper decay length $c\tau$ [cm]",
                          "efficiency (window x profile)",
                          f"{case[3]}: MC ({st['n_mc']} events per point) vs fold",
                          z_limit=z_lim)
        pngs.append(png)
        log(f"fold {case[0]}: max |pull| {_np.abs(z).max():.2f}")
    res = assess(zs, gs)
    res.update(rows=rows, pngs=pngs)
    return res


def _check_reweight(cases, st, seed, outdir, log, refs):
    from toymc.analysis.reweight import (
        LowEffectiveSampleWarning,
        check_ess,
        reweighted_efficiency,
        weights,
    )
    from toymc.plots.figures import compare_pull_plot

    ct0 = st["ctau0"]
    rows, zs, pngs, notes = [], [], [], []
    for ci, case in enumerate(cases):
        blk = refs[case[0]]
        passed = _np.asarray(blk.event["cut_mass"], dtype=bool)
        ct = _np.asarray(blk.event["llp_ct"])
        targets = st["ctau_rw"]
        rw, rwe, di, die, z, ess = (_np.empty(len(targets)) for _ in range(6))
        used = _np.zeros(len(targets), dtype=bool)
        for k, ct1 in enumerate(targets):
            w = weights(ct, ct0, ct1)
            with _warnings.catch_warnings(record=True) as caught:
                _warnings.simplefilter("always", LowEffectiveSampleWarning)
                ess[k] = check_ess(w, ESS_FRACTION * w.size)
            low = any(issubclass(c.category, LowEffectiveSampleWarning) for c in caught)
            for c in caught:
                if issubclass(c.category, LowEffectiveSampleWarning):
                    notes.append(f"{case[0]}, c*tau = {ct1:g} cm: {c.message}")
            rw[k], rwe[k] = reweighted_efficiency(passed, w)
            d = _reco_block(_case_cfg(case, ct1), st["n_direct"], _seed(seed, 5, ci, k))
            dp = _np.asarray(d.event["cut_mass"], dtype=bool)
            di[k], die[k] = reweighted_efficiency(dp, _np.ones(dp.size))
            z[k] = (rw[k] - di[k]) / _math.sqrt(rwe[k] ** 2 + die[k] ** 2)
            used[k] = (not low) and ct1 < 2 * ct0
            if used[k]:
                zs.append(z[k])
            rows.append((case[0], ct1, rw[k], rwe[k], ess[k], di[k], die[k], z[k], bool(used[k])))
        png = outdir / f"reweight_{case[0]}.png"
        zplot = _np.where(used, z, _np.nan)
        compare_pull_plot(
            _np.asarray(targets),
            [(f"reweighted from $c\\tau_0$ = {ct0:g} cm ({blk.n} events)", rw, rwe),
             (f"generated directly ({st['n_direct']} events each)", di, die)],
            None, zplot, png, r"target proper decay length $c\tau$ [cm]",
            "efficiency (full selection, cut_mass)",
            f"{case[3]}: lifetime reweighting vs direct generation\n"
            f"(pulls only where ESS >= {ESS_FRACTION:g} N and $c\\tau < 2 c\\tau_0$)")
        pngs.append(png)
        log(f"reweight {case[0]}: ESS/N " + " ".join(f"{e / blk.n:.2f}" for e in ess))
    res = assess(zs, _np.ones(len(zs), dtype=bool))
    res.update(rows=rows, pngs=pngs, notes=notes)
    return res


def _check_radial(cases, st, outdir, log, refs):
    from toymc.detector.vertexing import profile_efficiency
    from toymc.plots.figures import histogram_plot, round_edges

    zs, gs, pngs, rows, migrations = [], [], [], [], []
    for case in cases:
        cfg = _case_cfg(case, st["ctau0"])
        if case[0].startswith("alp_gg"):
            continue  # no tracks: vtx_r is not measured for photon-only decays
        sel = cfg.selection
        e = refs[case[0]].event
        edges = round_edges(sel.r_min, sel.r_max, 24)
        found = _np.asarray(e["cut_vertex"], dtype=bool)
        h_found = _np.histogram(_np.asarray(e["vtx_r"])[found], edges)[0].astype(float)
        cand = _np.asarray(e["cut_tracks"], dtype=bool)
        r = _np.asarray(e["llp_dr"])
        z = _np.asarray(e["llp_dz"])
        inw = cand & (r >= sel.r_min) & (r <= sel.r_max) & (z >= sel.z_min) & (z <= sel.z_max)
        eps = _np.where(inw, profile_efficiency(sel.profile, r), 0.0)
        h_pred = _np.histogram(r, edges, weights=eps)[0]
        nb = edges.size - 1
        tb = _np.digitize(r, edges) - 1
        rb = _np.digitize(_np.where(found, _np.asarray(e["vtx_r"]), -1.0), edges) - 1
        tb = _np.where(inw & (tb >= 0) & (tb < nb), tb, -1)
        rb = _np.where(found & (rb >= 0) & (rb < nb), rb, -1)
        f = found.astype(float)
        same = (tb == rb) & (tb >= 0)
        # variance of sum_i d_i, d_i = [found, reco r in bin] - eps_i [true r in bin]:
        # sum of d_i^2 (events that stay in their bin, events that migrate in, and out)
        h_var = (_np.bincount(tb[same], weights=(f - eps)[same] ** 2, minlength=nb)
                 + _np.bincount(rb[(rb >= 0) & ~same], minlength=nb)
                 + _np.bincount(tb[(tb >= 0) & ~same], weights=eps[(tb >= 0) & ~same] ** 2,
                                minlength=nb))
        n_mig = int(_np.count_nonzero((rb >= 0) & (tb != rb)))
        ok = h_var > 0
        zz = _np.full(h_found.size, _np.nan)
        zz[ok] = (h_found[ok] - h_pred[ok]) / _np.sqrt(h_var[ok])
        # Gaussian regime: expected count >= 10 in the bin
        g = ok & (h_pred >= 10)
        for b in _np.nonzero(ok)[0]:
            zs.append(zz[b])
            gs.append(bool(g[b]))
            rows.append((case[0], edges[b], edges[b + 1], h_found[b], h_pred[b], zz[b]))
        migrations.append((case[0], n_mig, int(found.sum())))
        png = outdir / f"radial_{case[0]}.png"
        histogram_plot(edges, [
            {"label": "truth x profile: sum eps(true r) over candidates in the window",
             "counts": h_pred},
            {"label": "found vertices (cut_vertex), reconstructed r", "counts": h_found,
             "errors": _np.sqrt(_np.maximum(h_var, 0))}],
            png, "transverse vertex radius r [cm]", "vertices per bin",
            f"{case[3]}, $c\\tau$ = {st['ctau0']:g} cm: radial distribution of found vertices",
            pulls=zz)
        pngs.append(png)
        log(f"radial {case[0]}: max |pull| {_np.nanmax(_np.abs(zz)):.2f}")
    res = assess(zs, gs)
    res.update(rows=rows, pngs=pngs, migrations=migrations)
    return res


def _robust_width(x):
    return 1.4826 * float(_np.median(_np.abs(x - _np.median(x))))


def _check_mass(cases, st, seed, outdir, log, refs):
    from toymc.physics.constants import mass as pdg_mass
    from toymc.plots.figures import histogram_plot, round_edges

    rows, zs, pngs = [], [], []
    for ci, case in enumerate(cases):
        blk = refs[case[0]]
        e = blk.event
        sel = _np.asarray(e["cut_mass"], dtype=bool)
        m_true = case[2]
        rec = _np.asarray(e["rec_m"])[sel]
        width = _robust_width(rec)
        med = float(_np.median(rec))
        row = {"case": case[0], "n": int(sel.sum()), "median": med, "sigma68": width,
               "pull_width": None, "pull_err": None, "z": None}
        cnt_t, trk = blk.groups["trk"]
        cnt_d, dau = blk.groups["dau"]
        cnt_c = blk.groups["clu"][0]
        all_tracks = (bool(_np.all(_np.asarray(cnt_c) == 0)) and bool(_np.all(_np.asarray(cnt_t) == 2))
                      and bool(_np.all(_np.asarray(cnt_d) == 2)))
        if all_tracks and sel.sum() > 20:
            idx = _np.nonzero(sel)[0]
            toff = blk.offsets("trk")
            doff = blk.offsets("dau")
            ti = toff[idx][:, None] + _np.arange(2)[None, :]
            di = doff[idx][:, None] + _np.asarray(trk["dau"])[ti]
            px, py, pz = (_np.asarray(dau[k])[di] for k in ("px", "py", "pz"))
            pt = _np.hypot(px, py)
            phi = _np.arctan2(py, px)
            lam = _np.arctan2(pz, pt)
            mhyp = _np.vectorize(lambda p: pdg_mass(int(p)))(_np.asarray(dau["pdg"])[di])
            sig = propagated_mass_sigma(pt, phi, lam, mhyp, _np.asarray(trk["spt"])[ti],
                                        _np.asarray(trk["sphi"])[ti], _np.asarray(trk["slam"])[ti])
            pull = (rec - m_true) / sig
            wdt = _robust_width(pull)
            rng = _np.random.default_rng(_seed(seed, 7, ci))
            boot = [_robust_width(pull[rng.integers(0, pull.size, pull.size)])
                    for _ in range(st["n_boot"])]
            werr = float(_np.std(boot, ddof=1))
            zval = (wdt - 1.0) / werr
            row.update(pull_width=wdt, pull_err=werr, z=zval,
                       sigma_pred_median=float(_np.median(sig)))
            zs.append(zval)
        rows.append(row)
        edges = round_edges(1e3 * (m_true - 6 * width), 1e3 * (m_true + 6 * width), 60) / 1e3
        series = [{"label": f"selected events (cut_mass): median {med:.4f} GeV, "
                            f"1.4826 MAD {1e3 * width:.1f} MeV",
                   "counts": _np.histogram(rec, edges)[0]}]
        png = outdir / f"mass_{case[0]}.png"
        histogram_plot(edges, series, png, "reconstructed mass rec_m [GeV]",
                       f"events per {round(1e3 * (edges[1] - edges[0]), 9):g} MeV",
                       f"{case[3]}, $c\\tau$ = {st['ctau0']:g} cm: reconstructed mass "
                       f"(true {m_true:g} GeV)")
        pngs.append(png)
        log(f"mass {case[0]}: median {med:.4f} GeV, width {width * 1e3:.2f} MeV"
            + (f", pull width {row['pull_width']:.3f} +- {row['pull_err']:.3f}"
               if row["pull_width"] is not None else ""))
    res = assess(zs, _np.ones(len(zs), dtype=bool))
    res.update(rows=rows, pngs=pngs)
    return res


def _check_diphoton(cases, st, outdir, log, refs):
    from toymc.plots.figures import compare_pull_plot, round_edges

    zs, pngs, rows = [], [], []
    for case in cases:
        if not case[0].startswith("alp_gg"):
            continue
        cfg = _case_cfg(case, st["ctau0"])
        blk = refs[case[0]]
        e = blk.event
        sel = _np.asarray(e["cut_photons"], dtype=bool)
        mgeo, efac = ip_pointing_mass(blk, cfg.detector)
        mgeo = mgeo * efac
        sel &= _np.isfinite(mgeo)
        r = _np.asarray(e["llp_dr"])[sel]
        rec = _np.asarray(e["rec_m"])[sel]
        mg = mgeo[sel]
        m = case[2]
        edges = round_edges(cfg.selection.r_min, cfg.selection.r_max, 12)
        b = _np.digitize(r, edges) - 1
        mid, bias, bias_err, geo, geo_err, z = ([] for _ in range(6))
        for j in range(edges.size - 1):
            s = b == j
            if s.sum() < 20:
                continue
            dlt = rec[s] - mg[s]
            zj = float(dlt.mean() / (dlt.std(ddof=1) / _math.sqrt(s.sum())))
            mid.append(0.5 * (edges[j] + edges[j + 1]))
            bias.append(rec[s].mean() / m - 1)
            bias_err.append(rec[s].std(ddof=1) / _math.sqrt(s.sum()) / m)
            geo.append(mg[s].mean() / m - 1)
            geo_err.append(mg[s].std(ddof=1) / _math.sqrt(s.sum()) / m)
            z.append(zj)
            rows.append((case[0], edges[j], edges[j + 1], int(s.sum()), bias[-1], geo[-1], zj))
        zs += z
        png = outdir / f"diphoton_bias_{case[0]}.png"
        compare_pull_plot(_np.asarray(mid), [("reconstructed: mean rec_m / m - 1",
                                              _np.asarray(bias), _np.asarray(bias_err))],
                          ("prediction: true energies, IP-pointing to true impact point",
                           _np.asarray(geo), _np.asarray(geo_err)),
                          _np.asarray(z), png, "true transverse decay radius [cm]",
                          "relative mass bias (mean m_reco / m_true - 1)",
                          f"{case[3]}: di-photon mass bias vs decay radius "
                          f"(pull of mean rec_m - m_geo)", logx=False)
        pngs.append(png)
        log(f"diphoton {case[0]}: bias at largest radius {bias[-1]:.3f}")
    res = assess(zs, _np.ones(len(zs), dtype=bool))
    res.update(rows=rows, pngs=pngs)
    return res


# ----------------------------------------------------------------------------- driver


def _fmt_check(name, res, what):
    state = "PASS" if res["passed"] else "FAIL"
    return (f"| {name} | **{state}** | {what} | {res['n']} | {res['chi2']:.1f} / {res['ndf']} | "
            f"{res['p_chi2']:.3g} | {res['max_pull']:+.2f} | {res['z_limit']:.2f} |")


def _summary(results, st, mode, seconds, seed):
    lines = [
        "# toymc validation summary", "",
        (f"Mode: {mode}; seed {seed}; wall time {seconds:.0f} s.  Detector: geometries/demo.toml "
        "with the [selection] of the demo configs."), "",
        (f"Criteria per check (ALPHA = {ALPHA}): chi-square p-value of the Gaussian-regime "
        "pulls >= ALPHA, and max |pull| over all N points < z_B = Phi^-1(1 - ALPHA/(2N)) "
        "(Bonferroni).  Pulls: binomial errors at the reference efficiency (exact binomial "
        "tail for expected counts < 10), weighted (ratio-estimator) errors for reweighting."), "",
        "| check | result | what | N | chi2 / ndf | p(chi2) | largest pull | z_B |",
        "|---|---|---|---|---|---|---|---|",
    ]
    what = {
        "fold": f"MC (true point in window, profile accept) vs analytic fold, "
                f"{st['n_ctau']} c*tau in [1e-3, 1e5] cm per case",
        "reweight": f"cut_mass efficiency reweighted from c*tau_0 = {st['ctau0']:g} cm vs "
                    "direct samples",
        "radial": "found-vertex radius vs truth x profile (charged channels)",
        "mass": "mu mu mass pull width vs linear propagation of track resolutions",
        "diphoton": "gamma gamma mass shift vs radius against the IP-pointing geometry",
    }
    for k, res in results.items():
        lines.append(_fmt_check(k, res, what[k]))
    allp = all(r["passed"] for r in results.values())
    lines += ["", f"Overall: **{'PASS' if allp else 'FAIL'}**", ""]
    lines += ["## Reweighting points", "",
              "| case | c*tau [cm] | reweighted | ESS | ESS/N | direct | pull | used |",
              "|---|---|---|---|---|---|---|---|"]
    nref = st["n_ref"]
    for c, ct1, rw, rwe, ess, di, die, z, used in results["reweight"]["rows"]:
        lines.append(f"| {c} | {ct1:g} | {rw:.4f} +- {rwe:.4f} | {ess:.0f} | {ess / nref:.3f} | "
                     f"{di:.4f} +- {die:.4f} | {z:+.2f} | {'yes' if used else 'no'} |")
    if results["reweight"]["notes"]:
        lines += ["", "Low effective sample size warnings:", ""]
        lines += [f"- {n}" for n in results["reweight"]["notes"]]
    lines += ["", "Radial check: found vertices whose reconstructed radius falls in another "
              "bin than the true one: " + ", ".join(
                  f"{c} {m} of {n}" for c, m, n in results["radial"]["migrations"]) + "."]
    lines += ["", "## Mass resolution (selected events, cut_mass)", "",
              "| case | events | median rec_m [GeV] | 1.4826 MAD [MeV] | pull width | pull |",
              "|---|---|---|---|---|---|"]
    for r in results["mass"]["rows"]:
        pw = (f"{r['pull_width']:.3f} +- {r['pull_err']:.3f}" if r["pull_width"] is not None
              else "no prediction (photons)")
        zz = f"{r['z']:+.2f}" if r["z"] is not None else "-"
        lines.append(f"| {r['case']} | {r['n']} | {r['median']:.4f} | {1e3 * r['sigma68']:.2f} | "
                     f"{pw} | {zz} |")
    lines += ["", "## Di-photon mass bias vs true decay radius", "",
              "| case | r [cm] | events | mean m_reco/m - 1 | geometry m_geo/m - 1 | pull |",
              "|---|---|---|---|---|---|"]
    for c, r0, r1, n, b, g, z in results["diphoton"]["rows"]:
        lines.append(f"| {c} | {r0:.1f}-{r1:.1f} | {n} | {b:+.4f} | {g:+.4f} | {z:+.2f} |")
    lines += ["", "## Plots", ""]
    for k, res in results.items():
        lines += [f"- {k}: " + ", ".join(f"`{p.name}`" for p in res["pngs"])]
    return "\n".join(lines) + "\n"


def output_names(cases=CASES):
    """The files :func:`run_validation` writes into its folder."""
    names = []
    for case in cases:
        gg = case[0].startswith("alp_gg")
        names += [f"fold_{case[0]}.png", f"reweight_{case[0]}.png", f"mass_{case[0]}.png"]
        names.append(f"diphoton_bias_{case[0]}.png" if gg else f"radial_{case[0]}.png")
    return names + ["summary.md"]


def run_validation(output_dir="validation_out", quick=False, events=None, seed=12345,
                   progress=print, force=False):
    """Run every check, write the PNGs and ``summary.md``.

    Parameters
    ----------
    output_dir : str or Path
        Created if missing.
    quick : bool
        Smaller samples and fewer c*tau points (about 10-30 s on 2 cores once the
        kernels are compiled).
    events : int, optional
        Events of each reference (reco) sample, overriding the mode's default;
        the other sample sizes scale with it.
    seed : int
        Master seed; every sample has its own stream derived from it.
    progress : callable or None
        Called with one line per finished step.
    force : bool
        Replace files of an earlier validation in `output_dir` (otherwise
        OutputError naming the first one, before any work).

    Returns
    -------
    dict
        ``passed`` (bool), ``results`` (per check), ``summary`` (path),
        ``seconds``.
    """
    t0 = _time.perf_counter()
    mode = "quick" if quick else "full"
    st = dict(_SETTINGS[mode])
    if events is not None:
        scale = int(events) / st["n_ref"]
        for k in ("n_mc", "n_fold", "n_ref", "n_direct"):
            st[k] = max(1000, int(st[k] * scale))
    out = _make_dir(_check_output_dir(output_dir, output_names(), force=force))
    with _replacing(force):
        return _run_checks(out, st, mode, seed, progress, t0)


def _run_checks(out, st, mode, seed, progress, t0):

    def log(msg):
        if progress is not None:
            progress(f"[{_time.perf_counter() - t0:6.1f} s] {msg}")

    results = {}
    results["fold"] = _check_fold(CASES, st, seed, out, log)
    refs = {}
    for ci, case in enumerate(CASES):
        refs[case[0]] = _reco_block(_case_cfg(case, st["ctau0"]), st["n_ref"], _seed(seed, 4, ci))
    log("reference samples generated")
    results["reweight"] = _check_reweight(CASES, st, seed, out, log, refs)
    results["radial"] = _check_radial(CASES, st, out, log, refs)
    results["mass"] = _check_mass(CASES, st, seed, out, log, refs)
    results["diphoton"] = _check_diphoton(CASES, st, out, log, refs)
    seconds = _time.perf_counter() - t0
    text = _summary(results, st, mode, seconds, seed)
    path = out / "summary.md"
    _atomic_write(path, lambda tmp: tmp.write_text(text))
    return {"passed": all(r["passed"] for r in results.values()), "results": results,
            "summary": str(path), "seconds": seconds}
