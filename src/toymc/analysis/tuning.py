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

import csv as _csv
import difflib as _difflib
import itertools
import json as _json
import math as _math
from dataclasses import dataclass, replace
from pathlib import Path as _Path

import numpy as np

from toymc.config import ranges as _R
from toymc.engine import backgrounds as _bkg
from toymc.engine.rng import block_sizes, n_blocks
from toymc.errors import ConfigError, InputFileError
from toymc.io.files import atomic_write as _atomic_write
from toymc.io.names import default_output as _default_output
from toymc.physics import constants as C

__all__ = (
    "FOMS",
    "TABLE_COLUMNS",
    "TUNING_RANGE_SCHEMA",
    "TUNING_SCHEMA",
    "TuningConfig",
    "best_point",
    "candidates",
    "load_tuning",
    "mass_resolution",
    "parse_tuning",
    "plot_windows",
    "scan_window",
    "tune",
    "tune_mass",
    "write_table",
)

FOMS = ("punzi", "s_over_sqrt_b", "upper_limit")
#: -ln(1 - 0.6827): 68.27 % CL upper bound on a Poisson mean with 0 observed
ZERO_EVENT_BOUND = -_math.log(1.0 - 0.6827)


#: channel -> (track mass hypothesis, number of photons)
_HYP = {"pi_pi_pi0": (C.M_PI, 2), "pi_pi": (C.M_PI, 0), "e_e": (C.M_E, 0), "mu_mu": (C.M_MU, 0)}

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


@dataclass(frozen=True)
class TuningConfig:
    """The [tuning] section in internal units (GeV, cm, fb, fb^-1)."""

    masses: tuple
    r_min: tuple
    r_max: tuple
    windows: tuple
    fom: str = "punzi"
    punzi_a: float = 3.0
    cl: float = 0.9
    signal_sigma: float = 0.0
    lumi: float = 1.0
    signal_events: int = 100_000
    background_events: dict = None
    min_mc_events: int = 10
    seed: int = 1
    ks_veto: float = 0.010
    lambda_veto: float = 0.004
    output: str = "tuning"


def _fail(path, key, value, allowed):
    raise ConfigError(path, key, value, allowed)


def _closest(name, options):
    m = _difflib.get_close_matches(str(name), list(options), n=1)
    return f" (did you mean '{m[0]}'?)" if m else ""


_EV = _R.MAX_SAMPLE_EVENTS
_CUT = dict(dim="length", lo=0.0, hi=_R.MAX_LENGTH, max_len=_R.MAX_GRID_AXIS)

#: [tuning]: key -> specification (toymc.config.ranges.spec).  r_min and r_max may also be
#: {start, stop, points} tables (TUNING_RANGE_SCHEMA); r_min x r_max x windows <= 10^6.
TUNING_SCHEMA = {
    "masses": _R.spec("list", None, "signal masses", dim="energy", lo=0.0, lo_open=True,
                      hi=_R.MAX_MASS, max_len=_R.MAX_GRID_AXIS, required=True),
    "r_min": _R.spec("list", None, "lower vertex-radius cuts: a list or {start, stop, points} "
                     "(linear, both ends included)", required=True, **_CUT),
    "r_max": _R.spec("list", None, "upper vertex-radius cuts: a list or {start, stop, points}",
                     required=True, **_CUT),
    "windows": _R.spec("list", [1.0, 1.5, 2.0, 2.5, 3.0], "mass-window half-widths",
                       lo=0.0, lo_open=True, hi=100.0, max_len=_R.MAX_GRID_AXIS,
                       unit="units of sigma_m"),
    "fom": _R.spec("str", "punzi", "figure of merit", choices=FOMS),
    "punzi_a": _R.spec("float", 3.0, "punzi: significance a (Gaussian sigmas)", lo=0.0,
                       lo_open=True, hi=20.0),
    "cl": _R.spec("float", 0.9, "upper_limit: confidence level", lo=0.0, hi=1.0, lo_open=True,
                  hi_open=True),
    "signal_sigma": _R.spec("float", None, "s_over_sqrt_b: signal cross-section times BR "
                            "(required there)", dim="area", lo=0.0, lo_open=True,
                            hi=_R.MAX_CROSS_SECTION),
    "lumi": _R.spec("float", None, "integrated luminosity", dim="inverse_area", lo=0.0,
                    lo_open=True, hi=_R.MAX_LUMI, required=True),
    "signal_events": _R.spec("int", 100_000, "signal events per mass", lo=1, hi=_EV),
    "background_events": _R.spec("int", 200_000, "events per background species (or a table "
                                 "species -> events)", lo=1, hi=_EV),
    "min_mc_events": _R.spec("int", 10, "flag low_mc below this effective number of background "
                             "MC events", lo=1, hi=_EV),
    "seed": _R.spec("int", None, "seed of the tuning samples (default: run.seed)", lo=0,
                    hi=_R.MAX_SEED),
    "ks_veto": _R.spec("float", 0.010, "half-width of the K_S veto on m_pipi", dim="energy",
                       lo=0.0, hi=1.0),
    "lambda_veto": _R.spec("float", 0.004, "half-width of the Lambda veto on m_ppi",
                           dim="energy", lo=0.0, hi=1.0),
    "output": _R.spec("str", "tuning", "output file stem"),
}
_KEYS = tuple(TUNING_SCHEMA)
#: the {start, stop, points} form of r_min and r_max
TUNING_RANGE_SCHEMA = {
    "start": _R.spec("float", None, "first cut", dim="length", lo=0.0, hi=_R.MAX_LENGTH),
    "stop": _R.spec("float", None, "last cut (> start)", dim="length", lo=0.0,
                    hi=_R.MAX_LENGTH),
    "points": _R.spec("int", None, "number of cuts", lo=1, hi=_R.MAX_GRID_AXIS),
}


def _grid(path, key, v):
    """A list of values, or a table {start, stop, points} (linear, both ends included)."""
    if isinstance(v, dict):
        for k in v:
            if k not in TUNING_RANGE_SCHEMA:
                _fail(path, f"{key}.{k}", v[k], "one of start, stop, points")
        for k in TUNING_RANGE_SCHEMA:
            if k not in v:
                _fail(path, f"{key}.{k}", None, "required in a {start, stop, points} range")
        a, b, n = (_R.check(path, f"{key}.{k}", v[k], s) for k, s in TUNING_RANGE_SCHEMA.items())
        if n > 1 and not b > a:
            _fail(path, key + ".stop", v["stop"], f"above start ({a:g}): an empty scan range")
        vals = np.linspace(a, b, n) if n > 1 else np.array([a])
        return tuple(float(x) for x in vals)
    if not isinstance(v, list) or not v:
        _fail(path, key, v, "a non-empty list of values or a table {start, stop, points}")
    vals = tuple(_R.check(path, key, v, TUNING_SCHEMA[key.split(".")[-1]]))
    if any(b <= a for a, b in itertools.pairwise(vals)):
        _fail(path, key, v, "strictly increasing values")
    return vals


def parse_tuning(raw, path=None, run_seed=1, species=()):
    """Validate the raw [tuning] table.

    Parameters
    ----------
    raw : dict
        Keys of :data:`TUNING_SCHEMA` (see the README): ``masses`` (list
        of energies), ``r_min``, ``r_max`` (lists of lengths or {start, stop,
        points}), ``windows`` (half-widths in units of sigma_m), ``fom``,
        ``punzi_a``, ``cl``, ``signal_sigma`` (area), ``lumi`` (inverse
        area, e.g. "1 ab-1"), ``signal_events``, ``background_events`` (an
        integer for every species or a table species -> integer),
        ``min_mc_events``, ``seed``, ``ks_veto``, ``lambda_veto``
        (energies), ``output`` (file stem; default ``tune_<config stem>``).
    path : str, optional
    run_seed : int
        Default seed ([run] seed).
    species : sequence of str
        Species present in [backgrounds] (for ``background_events``).

    Returns
    -------
    TuningConfig

    Raises
    ------
    ConfigError
    """
    pre = "tuning."
    S = TUNING_SCHEMA
    if not isinstance(raw, dict):
        _fail(path, "tuning", raw, "a table [tuning]")
    for k in raw:
        if k not in _KEYS:
            _fail(path, pre + k, raw[k], "unknown key; allowed: " + ", ".join(_KEYS)
                  + _closest(k, _KEYS))
    for k, s in S.items():
        if s["required"] and k not in raw:
            _fail(path, pre + k, None, "required; " + _R.allowed(s))

    def get(k):
        if k not in raw:
            return S[k]["default"]
        return _R.check(path, pre + k, raw[k], S[k])

    masses = tuple(get("masses"))
    r_min = _grid(path, pre + "r_min", raw["r_min"])
    r_max = _grid(path, pre + "r_max", raw["r_max"])
    if min(r_min) >= max(r_max):
        _fail(path, pre + "r_min", raw["r_min"],
              f"values below the largest r_max ({max(r_max):g} cm): no r_min < r_max pair")
    w = get("windows")
    cells = len(r_min) * len(r_max) * len(w)
    if cells > _R.MAX_GRID_CELLS:
        _fail(path, pre + "r_min", f"{len(r_min)} cuts", f"at most {_R.MAX_GRID_CELLS:,} "
              f"grid points in all: {len(r_min)} r_min x {len(r_max)} r_max x {len(w)} windows "
              f"= {cells:,}")
    fom = get("fom")
    if "signal_sigma" in raw:
        sig = get("signal_sigma")
        if fom != "s_over_sqrt_b":
            _fail(path, pre + "signal_sigma", raw["signal_sigma"],
                  f"used only with fom = 's_over_sqrt_b' (this config: '{fom}'); remove it")
    elif fom == "s_over_sqrt_b":
        _fail(path, pre + "signal_sigma", None,
              "required for fom = 's_over_sqrt_b': the signal cross-section times BR (area)")
    else:
        sig = 0.0
    for key, f in (("punzi_a", "punzi"), ("cl", "upper_limit")):
        if key in raw and fom != f:
            _fail(path, pre + key, raw[key], f"used only with fom = '{f}' (this config: "
                  f"'{fom}'); remove it")
    be = raw.get("background_events", S["background_events"]["default"])
    if isinstance(be, dict):
        for k in be:
            if k not in species:
                _fail(path, f"{pre}background_events.{k}", be[k],
                      "a species of [backgrounds]: " + ", ".join(species))
        bev = {s: _R.check(path, f"{pre}background_events.{s}",
                           be.get(s, S["background_events"]["default"]),
                           S["background_events"]) for s in species}
    else:
        n = get("background_events")
        bev = {s: n for s in species}
    seed = get("seed")
    return TuningConfig(
        masses=masses, r_min=r_min, r_max=r_max, windows=tuple(float(x) for x in w), fom=fom,
        punzi_a=float(get("punzi_a")), cl=float(get("cl")), signal_sigma=sig,
        lumi=get("lumi"), signal_events=get("signal_events"), background_events=bev,
        min_mc_events=get("min_mc_events"), seed=run_seed if seed is None else seed,
        ks_veto=get("ks_veto"), lambda_veto=get("lambda_veto"),
        output=(get("output") if raw.get("output") is not None
                else _default_output("tune", path) if path else "tuning"),
    )


def load_tuning(path):
    """Read a tuning config file: (RunConfig, TuningConfig, BackgroundConfig).

    The [tuning] and [backgrounds] tables are validated here; the rest goes
    to :func:`toymc.config.schema.from_dict`.
    """
    from toymc.config import schema as _config

    p = _Path(path)
    if not p.is_file():
        raise InputFileError(f"{path}: config file not found")
    try:
        text = p.read_text()
    except (OSError, UnicodeDecodeError) as exc:
        raise InputFileError(f"{path}: cannot read config: {exc}") from None
    data = _R.parse_toml(text, str(p))
    for name in ("tuning", "backgrounds"):
        if name not in data:
            raise ConfigError(str(p), name, None, f"a [{name}] section is required"
                              + _config.missing_section_hint(name, data))
    raw_t = data.pop("tuning")
    raw_b = data.pop("backgrounds")
    cfg = _config.from_dict(data, str(p))
    if cfg.llp.channel not in _HYP:
        raise ConfigError(str(p), "llp.channel", cfg.llp.channel,
                          "a channel with a two-track vertex for tuning: " + ", ".join(_HYP))
    bcfg = _bkg.parse_backgrounds(raw_b, str(p))
    tcfg = parse_tuning(raw_t, str(p), cfg.run.seed, tuple(bcfg.species))
    from toymc.engine.generator import check_kinematics

    for i, m in enumerate(tcfg.masses):
        try:
            check_kinematics(cfg.with_llp(mass=m))
        except ConfigError as exc:
            raise ConfigError(str(p), f"tuning.masses[{i}]", m, exc.allowed) from None
    return cfg, tcfg, bcfg


# ------------------------------------------------------------ candidates
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
        ``sel`` (steps 1-2 of the module docstring), ``r`` (vtx_r, cm),
        ``m`` (candidate mass, GeV), ``m_pipi`` (both tracks as pions),
        ``m_ppi`` (positive track as proton, negative as pion), ``m_pip``
        (positive as pion, negative as antiproton), ``w`` (w_gen).
    """
    m_trk, n_gam = _HYP[channel]
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
    ul = np.array([expected_upper_limit(float(b), tcfg.cl) for b in uniq])[inv].reshape(
        np.shape(bkg))
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
    cfg : toymc.config.schema.RunConfig
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
def write_table(rows, stem, meta=None):
    """Write ``<stem>.csv`` and ``<stem>.json`` (each through a temporary name); return the paths.

    The CSV has the columns of :data:`TABLE_COLUMNS`; the JSON holds the rows
    (with per-species backgrounds), the column table and `meta`.
    """
    stem = _Path(stem)
    stem.parent.mkdir(parents=True, exist_ok=True)
    names = [c[0] for c in TABLE_COLUMNS]
    csv_path, json_path = stem.with_suffix(".csv"), stem.with_suffix(".json")

    def write_csv(tmp):
        with open(tmp, "w", newline="") as fh:
            wr = _csv.writer(fh)
            wr.writerow(names)
            for r in rows:
                wr.writerow([f"{r[n]:.6g}" if isinstance(r[n], float) else r[n] for n in names])

    _atomic_write(csv_path, write_csv)

    def clean(v):
        if isinstance(v, float) and not _math.isfinite(v):
            return None
        if isinstance(v, dict):
            return {k: clean(x) for k, x in v.items()}
        if isinstance(v, (np.floating, np.integer)):
            return clean(v.item())
        return v

    doc = {"columns": [{"name": n, "unit": u, "meaning": d} for n, u, d in TABLE_COLUMNS],
           "rows": [{k: clean(v) for k, v in r.items()} for r in rows], "meta": meta or {}}
    _atomic_write(json_path, lambda tmp: tmp.write_text(_json.dumps(doc, indent=1)))
    return csv_path, json_path


def plot_windows(rows, path, title=None, min_mc=None):
    """PNG of the optimal radial window and mass window versus mass.

    Points flagged ``low_mc`` are marked; `min_mc` (the threshold) goes into
    the legend.
    """
    from toymc.extras import matplotlib_pyplot
    from toymc.plots.figures import save

    plt = matplotlib_pyplot()
    ok = [r for r in rows if not r["signal_too_few"]]
    m = np.array([r["mass"] for r in ok])
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(7, 6.5), sharex=True,
                                   gridspec_kw={"height_ratios": [3, 2]})
    rmin = np.array([r["r_min"] for r in ok])
    rmax = np.array([r["r_max"] for r in ok])
    ax1.fill_between(m, rmin, rmax, step=None, alpha=0.25, color="C0",
                     label=r"accepted $r_{\min} \leq r_{\rm vtx} < r_{\max}$")
    ax1.plot(m, rmin, "o-", color="C0", label=r"optimal $r_{\min}$")
    ax1.plot(m, rmax, "s-", color="C1", label=r"optimal $r_{\max}$")
    low = np.array([bool(r["low_mc"]) for r in ok])
    if low.any():
        ax1.plot(m[low], rmin[low], "x", color="k", ms=9,
                 label="background estimate from < "
                 + (f"{min_mc}" if min_mc is not None else "min_mc_events") + " MC events")
    ax1.set_ylabel("vertex radius [cm]")
    ax1.set_yscale("log")
    ax1.legend(fontsize=8, loc="best")
    if title:
        ax1.set_title(title)
    half = np.array([0.5 * (r["m_high"] - r["m_low"]) for r in ok]) * 1e3
    sig = np.array([r["sigma_m"] for r in ok]) * 1e3
    ax2.plot(m, half, "o-", color="C2", label="optimal window half-width")
    ax2.plot(m, sig, "--", color="C3", label=r"measured resolution $\sigma_m$")
    ax2.set_xlabel("signal mass [GeV]")
    ax2.set_ylabel("mass [MeV]")
    ax2.legend(fontsize=8, loc="best")
    save(fig, path)
    return path
