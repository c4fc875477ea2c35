"""The five checks of ``toymc validate`` (see :mod:`toymc.analysis.validate` for what each
compares and the pass criteria) and the samples they use.

Each check returns the dict of :func:`toymc.analysis.pulls.assess` with its table
rows, the names of its figures (``pngs``) and the data of each figure (``figures``: a
list of (file name, kind, data) that :func:`toymc.plots.validation.draw` turns into a
PNG).  Nothing is written here.
"""

import math as _math
import warnings as _warnings

import numpy as _np

from toymc.analysis import pulls as _v
from toymc.analysis.binning import round_edges as _round_edges
from toymc.analysis.mass_predictions import ip_pointing_mass as _ip_pointing_mass
from toymc.analysis.mass_predictions import propagated_mass_sigma as _propagated_mass_sigma

__all__ = ("ESS_FRACTION", "case_config", "check_diphoton", "check_fold", "check_mass", "check_radial",
           "check_reweight", "reco_block", "seed_of")

#: smallest acceptable ESS as a fraction of the reference sample
ESS_FRACTION = 0.1


def seed_of(base, *key):
    """A 32-bit seed derived from the master seed and a key (one stream per sample)."""
    return int(_np.random.SeedSequence(base, spawn_key=tuple(int(k) for k in key))
               .generate_state(1, dtype=_np.uint32)[0])


def case_config(case, ctau):
    """The demo config of a validation case at its mass and the given c*tau."""
    from toymc.config import loader as config
    from toymc.data import config_path

    _name, name, mass, _ = case
    cfg = config.load(config_path(name))
    return cfg.with_llp(mass=float(mass), ctau=float(ctau))


def reco_block(cfg, events, seed):
    """One Block of `events` events of `cfg` through its detector, with `seed`."""
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



def check_fold(cases, st, seed, log):
    """MC efficiency (true point in window, profile accept) vs the analytic fold."""
    from scipy import stats

    from toymc.analysis.fold_sample import fold_curve, truth_sample

    grid = _np.geomspace(1e-3, 1e5, st["n_ctau"])
    z_lim = float(stats.norm.isf(_v.ALPHA / (2 * grid.size * len(cases))))
    rows, zs, gs, pngs, figures = [], [], [], [], []
    for ci, case in enumerate(cases):
        cfg = case_config(case, 1.0)
        ev = truth_sample(cfg, st["n_fold"], seed_of(seed, 1, ci))
        f, ferr = fold_curve(ev, cfg.selection, cfg.detector, grid)
        rng = _np.random.default_rng(seed_of(seed, 2, ci))
        mc, mcerr, z = (_np.empty(grid.size) for _ in range(3))
        for k, ct in enumerate(grid):
            evk = truth_sample(cfg.with_llp(ctau=float(ct)), st["n_mc"], seed_of(seed, 3, ci, k))
            kpass = int(_np.count_nonzero(_truth_pass(evk, cfg.selection, rng)))
            n = st["n_mc"]
            mc[k] = kpass / n
            mcerr[k] = _math.sqrt(max(mc[k] * (1 - mc[k]), 1.0 / n) / n)
            z[k], g = _v.binomial_pull(kpass, n, f[k], ferr[k])
            zs.append(z[k])
            gs.append(g)
            rows.append((case[0], ct, mc[k], mcerr[k], f[k], ferr[k], z[k], g))
        png = f"fold_{case[0]}.png"
        figures.append((png, "fold", {"label": case[3], "ctau": grid, "mc": mc, "mc_err": mcerr,
                                      "fold": f, "fold_err": ferr, "pulls": z,
                                      "z_limit": z_lim, "n_fold": st["n_fold"],
                                      "n_mc": st["n_mc"]}))
        pngs.append(png)
        log(f"fold {case[0]}: max |pull| {_np.abs(z).max():.2f}")
    res = _v.assess(zs, gs)
    res.update(rows=rows, pngs=pngs, figures=figures)
    return res


def check_reweight(cases, st, seed, log, refs):
    """cut_mass efficiency reweighted from c*tau_0 vs samples generated directly."""
    from toymc.analysis.reweight import (
        LowEffectiveSampleWarning,
        check_ess,
        reweighted_efficiency,
        weights,
    )

    ct0 = st["ctau0"]
    rows, zs, pngs, notes, figures = [], [], [], [], []
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
            d = reco_block(case_config(case, ct1), st["n_direct"], seed_of(seed, 5, ci, k))
            dp = _np.asarray(d.event["cut_mass"], dtype=bool)
            di[k], die[k] = reweighted_efficiency(dp, _np.ones(dp.size))
            z[k] = (rw[k] - di[k]) / _math.sqrt(rwe[k] ** 2 + die[k] ** 2)
            used[k] = (not low) and ct1 < 2 * ct0
            if used[k]:
                zs.append(z[k])
            rows.append((case[0], ct1, rw[k], rwe[k], ess[k], di[k], die[k], z[k], bool(used[k])))
        png = f"reweight_{case[0]}.png"
        figures.append((png, "reweight", {
            "label": case[3], "ctau": _np.asarray(targets), "reweighted": rw, "reweighted_err": rwe,
            "direct": di, "direct_err": die, "pulls": _np.where(used, z, _np.nan),
            "ctau0": ct0, "n_ref": blk.n, "n_direct": st["n_direct"],
            "ess_fraction": ESS_FRACTION}))
        pngs.append(png)
        log(f"reweight {case[0]}: ESS/N " + " ".join(f"{e / blk.n:.2f}" for e in ess))
    res = _v.assess(zs, _np.ones(len(zs), dtype=bool))
    res.update(rows=rows, pngs=pngs, notes=notes, figures=figures)
    return res


def check_radial(cases, st, log, refs):
    """Radius of found vertices vs truth x profile (charged channels)."""
    from toymc.detector.vertexing import profile_efficiency

    zs, gs, pngs, rows, migrations, figures = [], [], [], [], [], []
    for case in cases:
        cfg = case_config(case, st["ctau0"])
        if case[0].startswith("alp_gg"):
            continue  # no tracks: vtx_r is not measured for photon-only decays
        sel = cfg.selection
        e = refs[case[0]].event
        edges = _round_edges(sel.r_min, sel.r_max, 24)
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
        png = f"radial_{case[0]}.png"
        figures.append((png, "radial", {"label": case[3], "edges": edges, "predicted": h_pred,
                                        "found": h_found,
                                        "found_err": _np.sqrt(_np.maximum(h_var, 0)),
                                        "pulls": zz, "ctau0": st["ctau0"]}))
        pngs.append(png)
        log(f"radial {case[0]}: max |pull| {_np.nanmax(_np.abs(zz)):.2f}")
    res = _v.assess(zs, gs)
    res.update(rows=rows, pngs=pngs, migrations=migrations, figures=figures)
    return res


def _robust_width(x):
    return 1.4826 * float(_np.median(_np.abs(x - _np.median(x))))


def check_mass(cases, st, seed, log, refs):
    """Reconstructed mass; for all-track channels the pull width against the propagated resolution."""
    from toymc.physics.constants import mass as pdg_mass

    rows, zs, pngs, figures = [], [], [], []
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
            sig = _propagated_mass_sigma(pt, phi, lam, mhyp, _np.asarray(trk["spt"])[ti],
                                        _np.asarray(trk["sphi"])[ti], _np.asarray(trk["slam"])[ti])
            pull = (rec - m_true) / sig
            wdt = _robust_width(pull)
            rng = _np.random.default_rng(seed_of(seed, 7, ci))
            boot = [_robust_width(pull[rng.integers(0, pull.size, pull.size)])
                    for _ in range(st["n_boot"])]
            werr = float(_np.std(boot, ddof=1))
            zval = (wdt - 1.0) / werr
            row.update(pull_width=wdt, pull_err=werr, z=zval,
                       sigma_pred_median=float(_np.median(sig)))
            zs.append(zval)
        rows.append(row)
        edges = _round_edges(1e3 * (m_true - 6 * width), 1e3 * (m_true + 6 * width), 60) / 1e3
        png = f"mass_{case[0]}.png"
        figures.append((png, "mass", {"label": case[3], "edges": edges,
                                      "counts": _np.histogram(rec, edges)[0], "median": med,
                                      "width": width, "m_true": m_true, "ctau0": st["ctau0"]}))
        pngs.append(png)
        log(f"mass {case[0]}: median {med:.4f} GeV, width {width * 1e3:.2f} MeV"
            + (f", pull width {row['pull_width']:.3f} +- {row['pull_err']:.3f}"
               if row["pull_width"] is not None else ""))
    res = _v.assess(zs, _np.ones(len(zs), dtype=bool))
    res.update(rows=rows, pngs=pngs, figures=figures)
    return res


def check_diphoton(cases, st, log, refs):
    """Di-photon mass shift vs decay radius against the IP-pointing geometry."""

    zs, pngs, rows, figures = [], [], [], []
    for case in cases:
        if not case[0].startswith("alp_gg"):
            continue
        cfg = case_config(case, st["ctau0"])
        blk = refs[case[0]]
        e = blk.event
        sel = _np.asarray(e["cut_photons"], dtype=bool)
        mgeo, efac = _ip_pointing_mass(blk, cfg.detector)
        mgeo = mgeo * efac
        sel &= _np.isfinite(mgeo)
        r = _np.asarray(e["llp_dr"])[sel]
        rec = _np.asarray(e["rec_m"])[sel]
        mg = mgeo[sel]
        m = case[2]
        edges = _round_edges(cfg.selection.r_min, cfg.selection.r_max, 12)
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
        png = f"diphoton_bias_{case[0]}.png"
        figures.append((png, "diphoton", {"label": case[3], "radius": _np.asarray(mid),
                                          "bias": _np.asarray(bias),
                                          "bias_err": _np.asarray(bias_err),
                                          "geo": _np.asarray(geo), "geo_err": _np.asarray(geo_err),
                                          "pulls": _np.asarray(z)}))
        pngs.append(png)
        log(f"diphoton {case[0]}: bias at largest radius {bias[-1]:.3f}")
    res = _v.assess(zs, _np.ones(len(zs), dtype=bool))
    res.update(rows=rows, pngs=pngs, figures=figures)
    return res
