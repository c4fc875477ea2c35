"""Radial-cut and mass-window tuning per mass point, signal against SM backgrounds.

For each signal mass the tuner generates signal (the run config's
production and decay, at its c*tau) and uses one set of background samples
(:mod:`toymc.engine.backgrounds`), all through the same detector response
(:func:`toymc.detector.respond`) and the same selection:

1. the [selection] cuts of the run config up to ``cut_vertex`` (tracks found,
   vertex in the broad fiducial window, vertex accepted); its
   ``mass_window`` is ignored: the window is tuned here;
2. the signal topology: exactly two found tracks (one of each charge) and,
   for pi_pi_pi0, exactly two found clusters;
3. the candidate mass ``m`` under the signal hypothesis: the tracks with the
   signal daughters' PDG mass (pion for pi_pi_pi0 and pi_pi, e for e_e,
   mu for mu_mu), clusters massless with their direction from the nominal
   interaction point;
4. vetoes on the two-track mass: K_S (both tracks as pions,
   |m_pipi - m_KS| < ``ks_veto``) and Lambda (p pi- or pbar pi+,
   |m_ppi - m_Lambda| < ``lambda_veto``); the K_S veto is dropped at a
   pi_pi mass point whose widest window reaches into the veto band (there
   the veto would remove the signal itself);
5. the mass window m0 +- k sigma_m with m0 the median and sigma_m half the
   central 68.3 % interval (16th to 84th percentile) of the signal's
   candidate mass after steps 1-2, measured at each mass point; k from the
   ``windows`` list;
6. the radial window r_min <= vtx_r < r_max, both scanned on grids.

Figures of merit (maximised; ``upper_limit`` is minimised)
----------------------------------------------------------
``punzi``          eps / (a/2 + sqrt(B)) (physics/0308063, eq. 7 from memory;
                   :func:`toymc.analysis.stats.punzi_fom`); finite at B = 0.
``s_over_sqrt_b``  S / sqrt(B) with S = eps * L_int * ``signal_sigma``;
                   B is replaced by max(B, B_1), B_1 the largest mean
                   expected background carried by one MC event of a
                   species with topology candidates: a window with no MC background is credited
                   with the background the samples can resolve, not zero.
``upper_limit``    the expected CLs upper limit on the signal count for
                   background B (continuous count n = B, toymc.analysis.stats), divided
                   by eps: the smallest produced signal that could be
                   excluded; smaller is better.

Background estimate and its error: B = sum over MC events of
L_int * sigma * BR * w_gen / N_MC (per species), error sqrt(sum of squared
weights).  With no MC event in the window the error is the 68.27 % upper
bound for zero observed events, -ln(1 - 0.6827) = 1.148 events, times the
mean weight of one MC event, summed over the species that give at least one
candidate after the topology cut (a species with none, such as K_S -> pi+ pi-
under the pi+ pi- pi0 hypothesis, cannot make the topology at the simulated
level and is left out of the bound and of the floor B_1).  A point whose estimate
rests on fewer than ``min_mc_events`` effective MC events
(n_eff = (sum w)^2 / sum w^2, 0 with none) is flagged ``low_mc``.
Signal efficiency eps = N_pass / N_generated, binomial error
sqrt(eps (1 - eps) / N_generated).

Reproducibility: signal mass point i uses blocks i * n_b .. i * n_b + n_b - 1
(n_b blocks per mass) of the tuning seed, so no two mass points share a
stream; backgrounds use their own stages (toymc.engine.backgrounds.stages).
"""

import math as _math
from dataclasses import replace

import numpy as np

from toymc.analysis.candidates import HYPOTHESES, candidates, mass_resolution
from toymc.config.schema import FOMS
from toymc.config.tuning import (
    TUNING_RANGE_SCHEMA,
    TUNING_SCHEMA,
    TuningConfig,
    parse_tuning,
)
from toymc.config.tuning import load_tuning as _load_tuning
from toymc.engine import backgrounds as _bkg
from toymc.engine.rng import block_sizes, n_blocks
from toymc.io.names import default_output as _default_output
from toymc.physics import constants as C

__all__ = (
    "FOMS",
    "TABLE_COLUMNS",
    "TUNING_RANGE_SCHEMA",
    "TUNING_SCHEMA",
    "ZERO_EVENT_BOUND",
    "TuningConfig",
    "best_point",
    "load_tuning",
    "parse_tuning",
    "scan_window",
    "table_document",
    "table_rows",
    "tune",
    "tune_mass",
)

#: -ln(1 - 0.6827): 68.27 % CL upper bound on a Poisson mean with 0 observed
ZERO_EVENT_BOUND = -_math.log(1.0 - 0.6827)


#: channel -> (track mass hypothesis, number of photons)
_HYP = HYPOTHESES

#: columns of the output table: (name, unit, meaning)
TABLE_COLUMNS = (
    ("mass", "GeV", "signal mass"),
    ("sigma_m", "GeV", "measured candidate-mass resolution (half the central 68.3 % interval)"),
    ("m_center", "GeV", "median candidate mass of the signal"),
    ("r_min", "cm", "optimal lower vertex radius"),
    ("r_max", "cm", "optimal upper vertex radius"),
    ("window", "sigma_m", "optimal mass-window half-width in units of sigma_m"),
    ("m_low", "GeV", "mass window low edge"),
    ("m_high", "GeV", "mass window high edge"),
    ("eff", "", "signal efficiency at the optimum"),
    ("eff_err", "", "binomial error of eff"),
    ("bkg", "events", "expected background at L_int"),
    ("bkg_err", "events", "MC statistical error of bkg (68.27 % bound when no MC event)"),
    ("bkg_mc", "", "effective number of background MC events in the window"),
    ("fom", "", "figure of merit at the optimum"),
    ("low_mc", "", "1 if bkg_mc < min_mc_events"),
    ("ks_veto", "", "1 if the K_S veto was applied"),
)


def load_tuning(path):
    """(RunConfig, TuningConfig, BackgroundConfig) of a tuning config file
    (:func:`toymc.config.tuning.load_tuning`), the output stem defaulting to
    ``tune_<config stem>``."""
    cfg, tcfg, bcfg = _load_tuning(path)
    if tcfg.output is None:
        tcfg = replace(tcfg, output=_default_output("tune", path))
    return cfg, tcfg, bcfg


# ------------------------------------------------------------------ scan
def scan_window(sig_r, n_sig_gen, bkg_r, bkg_w, r_min, r_max):
    """Signal efficiency and background on the (r_min, r_max) grid, for r_min <= r < r_max.

    Parameters
    ----------
    sig_r : array_like
        Vertex radii (cm) of signal events passing every other cut.
    n_sig_gen : int
        Signal events generated (denominator of the efficiency).
    bkg_r, bkg_w : array_like
        Radii and expected-event weights of background MC events passing
        every other cut.
    r_min, r_max : array_like
        Grids (cm).

    Returns
    -------
    dict of numpy.ndarray, shape (len(r_min), len(r_max))
        ``eff``, ``bkg`` (sum of weights), ``bkg_w2`` (sum of squared
        weights), ``n_mc`` (MC events), ``valid`` (r_min < r_max).
    """
    r_min = np.asarray(r_min, dtype=np.float64)
    r_max = np.asarray(r_max, dtype=np.float64)
    s = np.sort(np.asarray(sig_r, dtype=np.float64))
    order = np.argsort(np.asarray(bkg_r, dtype=np.float64), kind="stable")
    br = np.asarray(bkg_r, dtype=np.float64)[order]
    bw = np.asarray(bkg_w, dtype=np.float64)[order]
    cw = np.concatenate([[0.0], np.cumsum(bw)])
    cw2 = np.concatenate([[0.0], np.cumsum(bw * bw)])

    def below(sorted_r, x):
        return np.searchsorted(sorted_r, x, side="left")

    s_lo, s_hi = below(s, r_min), below(s, r_max)
    b_lo, b_hi = below(br, r_min), below(br, r_max)
    valid = r_min[:, None] < r_max[None, :]
    ns = np.where(valid, s_hi[None, :] - s_lo[:, None], 0)
    bkg = np.where(valid, cw[b_hi][None, :] - cw[b_lo][:, None], 0.0)
    bkg2 = np.where(valid, cw2[b_hi][None, :] - cw2[b_lo][:, None], 0.0)
    nmc = np.where(valid, b_hi[None, :] - b_lo[:, None], 0)
    return {"eff": ns / float(n_sig_gen), "bkg": np.maximum(bkg, 0.0),
            "bkg_w2": np.maximum(bkg2, 0.0), "n_mc": nmc, "valid": valid}


def _fom(eff, bkg, tcfg, b_floor):
    from toymc.analysis.stats import expected_upper_limit, punzi_fom

    if tcfg.fom == "punzi":
        return punzi_fom(np.clip(eff, 0.0, 1.0), bkg, tcfg.punzi_a)
    if tcfg.fom == "s_over_sqrt_b":
        s = eff * tcfg.lumi * tcfg.signal_sigma
        den = np.sqrt(np.maximum(bkg, b_floor))
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(den > 0, s / np.where(den > 0, den, 1.0),
                            np.where(s > 0, np.inf, 0.0))
    # upper_limit: minimise UL/eps; returned as -UL/eps so that larger is better
    flat = np.asarray(bkg, dtype=np.float64).ravel()
    key = np.round(flat, 12)
    uniq, inv = np.unique(key, return_inverse=True)
    ul = np.asarray(expected_upper_limit(uniq, tcfg.cl, "asimov", tcfg.background_uncertainty),
                    dtype=np.float64)[inv].reshape(np.shape(bkg))
    with np.errstate(divide="ignore"):
        return np.where(eff > 0, -ul / np.where(eff > 0, eff, 1.0), -np.inf)


def best_point(grids, tcfg, b_floor=0.0):
    """Index (window, i_rmin, i_rmax) and value of the best figure of merit.

    Parameters
    ----------
    grids : list of dict
        :func:`scan_window` results, one per mass-window width.
    tcfg : TuningConfig
        Supplies the fom and its parameters.
    b_floor : float
        Background floor of ``s_over_sqrt_b``.

    Returns
    -------
    (k, i, j, fom) : tuple
        Ties go to the first index in (window, r_min, r_max) order.
    """
    best = (-1, -1, -1, -np.inf)
    for k, g in enumerate(grids):
        f = np.where(g["valid"] & (g["eff"] > 0), _fom(g["eff"], g["bkg"], tcfg, b_floor),
                     -np.inf)
        i, j = np.unravel_index(int(np.argmax(f)), f.shape)
        if f[i, j] > best[3]:
            best = (k, int(i), int(j), float(f[i, j]))
    return best


# ------------------------------------------------------------ full run
def _selected_candidates(blocks, channel):
    """Candidates of a stream of blocks, keeping only selected events (``sel``), and the
    sum of ``w_gen`` over all events.  One block is in memory at a time, so a sample's
    memory grows with its candidates, not with its events."""
    parts, w_sum = [], 0.0
    for blk in blocks:
        c = candidates(blk, channel)
        w_sum += float(np.sum(blk.event["w_gen"]))
        keep = c["sel"]
        parts.append({k: v[keep] for k, v in c.items()})
    out = {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}
    return out, w_sum


def _signal_candidates(cfg, tcfg, mass, i_mass, detector):
    from toymc.engine.generator import generate_block

    cfg_m = cfg.with_llp(mass=float(mass)).with_run(seed=tcfg.seed)
    nb = n_blocks(tcfg.signal_events)
    sizes = block_sizes(tcfg.signal_events)
    blocks = (generate_block(cfg_m, i_mass * nb + b, int(sizes[b]), detector)
              for b in range(nb))
    return _selected_candidates(blocks, cfg.llp.channel)[0]


def tune(cfg, tcfg, bcfg, geometry, selection, progress=None, info=None):
    """Tune (r_min, r_max, window) at every mass of `tcfg`.

    Parameters
    ----------
    cfg : toymc.config.loader.RunConfig
    tcfg : TuningConfig
    bcfg : toymc.engine.backgrounds.BackgroundConfig
    geometry : toymc.detector.geometry.Geometry
    selection : toymc.detector.geometry.Selection
        Its mass_window is ignored.
    progress : callable or None
        Called with a message string after each step.
    info : dict or None
        If given, filled with ``species``: name -> {mc_events, expected
        (entries at L_int), weight_per_mc_event (mean), topology_candidates}
        and ``b_floor``.

    Returns
    -------
    list of dict
        One row per mass with the keys of :data:`TABLE_COLUMNS` plus
        ``bkg_species`` (expected background per species at the optimum) and
        ``signal_too_few`` (True when fewer than 20 signal events passed and
        no window could be measured; the scan is then skipped).
    """
    from toymc.detector import respond

    sel = replace(selection, mass_window=None)

    def detector(block, rng):
        respond(block, geometry, sel, rng)

    layers = geometry.tracking_layers()
    bk = {}
    for name, sp in bcfg.species.items():
        nev = tcfg.background_events[name]
        blocks = (_bkg.generate_species_block(sp, cfg.beams, layers, tcfg.seed, i, int(n),
                                              detector)
                  for i, n in enumerate(block_sizes(int(nev))))
        c, w_sum = _selected_candidates(blocks, cfg.llp.channel)
        scale = _bkg.expected_count(sp, tcfg.lumi) / nev
        c["w"] = c["w"] * scale
        c["w1"] = scale * w_sum / nev
        bk[name] = c
        if progress:
            progress(f"background {name}: {nev} events, {int(c['sel'].sum())} candidates")
    # species with no candidate after the topology cut (e.g. K_S -> pi+ pi- under a
    # pi+ pi- pi0 hypothesis) set neither the floor nor the zero-event bound
    seen = [c["w1"] for c in bk.values() if c["sel"].any()]
    b_floor = max(seen) if seen else 0.0
    for c in bk.values():
        c["bound"] = bool(c["sel"].any())
    if info is not None:
        info["b_floor"] = b_floor
        info["species"] = {
            n: {"mc_events": tcfg.background_events[n],
                "expected": _bkg.expected_count(bcfg.species[n], tcfg.lumi),
                "weight_per_mc_event": c["w1"], "topology_candidates": int(c["sel"].sum())}
            for n, c in bk.items()}
    rows = []
    for i_m, mass in enumerate(tcfg.masses):
        s = _signal_candidates(cfg, tcfg, mass, i_m, detector)
        row = tune_mass(mass, s, bk, tcfg, b_floor, cfg.llp.channel)
        rows.append(row)
        if progress:
            progress(f"m = {mass:.4f} GeV: r = [{row['r_min']:.3g}, {row['r_max']:.3g}) cm, "
                     f"window {row['window']:.3g} sigma, eff {row['eff']:.3g}, "
                     f"bkg {row['bkg']:.3g}")
    return rows


def tune_mass(mass, s, bk, tcfg, b_floor, channel):
    """Best (r_min, r_max, window) at one mass from candidate columns.

    Parameters
    ----------
    mass : float
        Signal mass (GeV), for the row.
    s : dict
        Signal candidates (:func:`candidates`), ``tcfg.signal_events`` generated.
    bk : dict
        Species name -> candidates whose ``w`` is already the expected number
        of events per MC event at L_int, plus ``w1`` (mean weight of one MC
        event of the species).
    tcfg : TuningConfig
    b_floor : float
        Background floor of ``s_over_sqrt_b`` (events).
    channel : str
        Signal channel (decides whether the K_S veto applies).

    Returns
    -------
    dict
        A table row (:data:`TABLE_COLUMNS`, ``bkg_species``, ``signal_too_few``).
    """
    n_gen = tcfg.signal_events
    ms = s["m"][s["sel"]]
    row = {"mass": float(mass), "signal_too_few": False}
    if ms.size < 20:
        row.update(sigma_m=np.nan, m_center=np.nan, r_min=np.nan, r_max=np.nan,
                   window=np.nan, m_low=np.nan, m_high=np.nan, eff=0.0, eff_err=0.0,
                   bkg=np.nan, bkg_err=np.nan, bkg_mc=0.0, fom=np.nan, low_mc=1, ks_veto=0,
                   bkg_species={}, signal_too_few=True)
        return row
    m0, sig_m = mass_resolution(ms)
    kmax = max(tcfg.windows)
    use_ks = tcfg.ks_veto > 0 and not (
        channel == "pi_pi" and abs(m0 - C.M_KS) < tcfg.ks_veto + kmax * sig_m)

    def vetoed(c):
        v = np.zeros(len(c["m"]), dtype=bool)
        with np.errstate(invalid="ignore"):
            if use_ks:
                v |= np.abs(c["m_pipi"] - C.M_KS) < tcfg.ks_veto
            if tcfg.lambda_veto > 0:
                v |= np.abs(c["m_ppi"] - C.M_LAMBDA) < tcfg.lambda_veto
                v |= np.abs(c["m_pip"] - C.M_LAMBDA) < tcfg.lambda_veto
        return v

    s_ok = s["sel"] & ~vetoed(s)
    b_ok = {n: c["sel"] & ~vetoed(c) for n, c in bk.items()}
    grids = []
    for k in tcfg.windows:
        lo, hi = m0 - k * sig_m, m0 + k * sig_m
        sm = s_ok & (s["m"] >= lo) & (s["m"] <= hi)
        rb, wb = [], []
        for n, c in bk.items():
            bm = b_ok[n] & (c["m"] >= lo) & (c["m"] <= hi)
            rb.append(c["r"][bm])
            wb.append(c["w"][bm])
        grids.append(scan_window(s["r"][sm], n_gen, np.concatenate(rb), np.concatenate(wb),
                                 tcfg.r_min, tcfg.r_max))
    k, i, j, f = best_point(grids, tcfg, b_floor)
    if k < 0:  # no signal anywhere on the grid
        k, i, j = 0, 0, len(tcfg.r_max) - 1
        f = np.nan
    g = grids[k]
    eff = float(g["eff"][i, j])
    bkg = float(g["bkg"][i, j])
    w2 = float(g["bkg_w2"][i, j])
    n_eff = bkg * bkg / w2 if w2 > 0 else 0.0
    kk = tcfg.windows[k]
    lo, hi = m0 - kk * sig_m, m0 + kk * sig_m
    r_lo, r_hi = tcfg.r_min[i], tcfg.r_max[j]
    per = {}
    for n, c in bk.items():
        bm = b_ok[n] & (c["m"] >= lo) & (c["m"] <= hi) & (c["r"] >= r_lo) & (c["r"] < r_hi)
        per[n] = float(c["w"][bm].sum())
    if g["n_mc"][i, j] == 0:
        bkg_err = ZERO_EVENT_BOUND * sum(c["w1"] for c in bk.values() if c.get("bound", True))
    else:
        bkg_err = _math.sqrt(w2)
    if tcfg.fom == "upper_limit" and _math.isfinite(f):
        f = -f
    row.update(sigma_m=sig_m, m_center=m0, r_min=r_lo, r_max=r_hi, window=kk, m_low=lo,
               m_high=hi, eff=eff, eff_err=_math.sqrt(max(eff * (1 - eff), 0.0) / n_gen),
               bkg=bkg, bkg_err=bkg_err, bkg_mc=n_eff, fom=f,
               low_mc=int(n_eff < tcfg.min_mc_events), ks_veto=int(use_ks), bkg_species=per)
    return row


# --------------------------------------------------------------- output
def table_rows(rows):
    """The cells of the CSV table (:data:`TABLE_COLUMNS`): floats with 6 significant digits."""
    names = [c[0] for c in TABLE_COLUMNS]
    return [[f"{r[n]:.6g}" if isinstance(r[n], float) else r[n] for n in names] for r in rows]


def _clean(v):
    """JSON-ready value: NaN and infinities become None, numpy scalars plain numbers."""
    if isinstance(v, float) and not _math.isfinite(v):
        return None
    if isinstance(v, dict):
        return {k: _clean(x) for k, x in v.items()}
    if isinstance(v, (np.floating, np.integer)):
        return _clean(v.item())
    return v


def table_document(rows, meta=None):
    """The JSON document of a tuning: the column table, the rows (with per-species
    backgrounds) and `meta`."""
    return {"columns": [{"name": n, "unit": u, "meaning": d} for n, u, d in TABLE_COLUMNS],
            "rows": [{k: _clean(v) for k, v in r.items()} for r in rows], "meta": meta or {}}
