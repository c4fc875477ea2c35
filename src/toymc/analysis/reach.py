"""Expected reach in (mass, coupling): signal yield against a Poisson upper limit.

For a model (``[model]``), a decay channel (``[llp] channel``) and a production
process (``[production]``), every point of a (mass, coupling) grid gets the
expected number of selected signal events

    N = L_int * sigma_prod * BR(LLP -> channel) * eps(m, c*tau(m, coupling)),

with

* ``L_int`` the integrated luminosity in fb^-1 (``[reach] lumi``, e.g. ``"1 ab-1"``);
* ``sigma_prod`` [fb] the production cross-section before the LLP decay, from
  :func:`toymc.physics.models.point.signal_cross_section`:

  - ``b_meson``: ``sigma_bb * 2 * [f_+- BR(B+ -> K+ X) + (1 - f_+-) BR(B0 -> K0 X)]``
    (either B of the pair can decay to the signal; K* modes for recoil ``"K*"``).
    The flavour coupling ``g_bs`` (or ``br_production``) of the config's
    ``[model]`` section is **held fixed** while the grid varies the model's main
    coupling (for ``alp_gluon`` 1/f), which sets c*tau and BR(decay) only; the
    plot title says so.
  - ``radiative``: ``sigma(e+e- -> gamma V)`` in the photon angle range of
    ``[production]`` for the model's electron coupling c_e at each grid point
    (:func:`toymc.physics.models.point.electron_coupling`).

* ``BR(LLP -> channel)`` and ``c*tau = hbar c / Gamma_total`` from
  :func:`toymc.physics.models.point.decay_properties`;
* ``eps`` the signal efficiency at (m, c*tau) from one of three sources
  (:data:`EFFICIENCY_SOURCES`):

  ``"fold"``
      One truth-only sample of ``events_per_mass`` events per mass (the LLP
      kinematics do not depend on c*tau); its production points, directions and
      beta*gamma are folded analytically with the selection's fiducial window
      and vertex-efficiency profile at every c*tau (:func:`toymc.analysis.fold.fold_efficiency`;
      profile from :func:`toymc.detector.vertexing.fold_profile`).
      This is the decay-in-window probability times the vertex efficiency at the
      TRUE decay radius; track finding, the photon clusters and the mass window
      are not simulated.  They may be represented by the constant
      ``reco_factor`` (default 1, i.e. none), which multiplies eps everywhere:
      an approximation that ignores how those efficiencies vary with the decay
      radius and the mass.  The window is applied to the true decay point (the
      detector applies it to the reconstructed vertex).  A ``"hits"`` profile
      depends on the tracks; it is folded as a radius table for stiff radial
      tracks, an upper estimate, with a warning (use ``"mc"`` for it).
  ``"mc"``
      Samples generated with the detector (``[detector] geometry``); eps is the
      fraction of events passing the cutflow step ``efficiency_step`` (column
      ``cut_<step>``).  Per mass, reference samples are generated at a ladder
      of c*tau_0 values, one per decade (``10^k`` cm) covering the c*tau values
      the coupling grid needs, limited to ``[mc_ctau_min, mc_ctau_max]``.  Each
      grid c*tau_1 is reweighted (:mod:`toymc.analysis.reweight`) from the smallest
      reference c*tau_0 >= c*tau_1, so ``c*tau_1/c*tau_0 = r`` lies in
      ``(0.1, 1]``, the weights are bounded by ``1/r <= 10`` and the expected
      effective sample size is ``ESS/N = r (2 - r) >= 0.19``.  Outside the
      ladder (c*tau beyond the limits) the nearest reference is used; where the
      Kish ESS of the weights is below ``ess_min_fraction * N`` the point gets
      ``eps = 0`` (conservative: no sensitivity claimed) with status
      ``"low_ess"`` in the table, and one warning counts such points.
  ``"map"``
      An efficiency map ``efficiency_map.csv`` written by the mass x c*tau scan
      (:mod:`toymc.analysis.scan`; columns mass_gev, ctau_cm, efficiency, ...),
      interpolated bilinearly in (mass, log10 c*tau) (:func:`interpolate_map`);
      points outside the map get eps = 0 with a warning.

The signal region at confidence level CL is ``N > N_up``, with ``N_up`` the
expected CLs upper limit for the expected background ``b`` (``[reach] background``,
events after the selection, with an optional relative uncertainty):
:func:`toymc.analysis.stats.expected_upper_limit`, by default for the continuous count
n = b ("asimov"; smooth and increasing in b).  For ``b = 0`` it is ``-ln(1 - CL)``:
2.303 events at 90 % and 2.996 at 95 % CL (PDG review "Statistics"; n = 0).

The ``[reach]`` section (parsed here from the raw TOML, see :data:`REACH_SCHEMA`):
masses (``mass_min``, ``mass_max``, ``mass_points``, ``mass_spacing``, or an
explicit ``masses`` list), couplings (``coupling_min``, ``coupling_max``,
``coupling_points``, log-spaced, or a ``couplings`` list), ``lumi``,
``background``, ``cl``, ``limit``, ``efficiency``, ``map``, ``events_per_mass``,
``reco_factor``, ``efficiency_step``, ``mc_ctau_min``, ``mc_ctau_max``,
``ess_min_fraction``.

Outputs of :func:`run_reach` in the output folder: ``reach.csv`` (one row per
grid point), ``reach.json`` (settings, N_up, timing, units) and ``reach.png``
(the region N > N_up in the (mass, coupling) plane with lines of constant c*tau).

Units: masses GeV, c*tau cm, cross-sections fb, luminosity fb^-1; the coupling
in the model's unit (:data:`COUPLING_LABELS`).
"""

import csv as _csv
import json as _json
import math as _math
import time as _time
import warnings as _warnings
from dataclasses import dataclass as _dataclass
from dataclasses import field as _field
from dataclasses import replace as _replace
from pathlib import Path as _Path

import numpy as _np

from toymc.config import schema as _config
from toymc.config.ranges import MAX_GRID_CELLS
from toymc.config.ranges import parse_toml as _parse_toml
from toymc.errors import ConfigError as _ConfigError
from toymc.errors import InputFileError as _InputFileError
from toymc.io.files import atomic_write as _atomic_write
from toymc.io.files import check_output_dir as _check_output_dir
from toymc.io.files import make_dir as _make_dir
from toymc.io.files import replacing as _replacing

__all__ = (
    "COUPLING_LABELS",
    "EFFICIENCY_SOURCES",
    "REACH_SCHEMA",
    "ReachGrid",
    "ReachResult",
    "decay_table",
    "expected_yield",
    "fold_window",
    "interpolate_map",
    "parse_reach",
    "plot_reach",
    "production_table",
    "read_map",
    "run_reach",
    "signal_limit",
)

#: where eps(m, c*tau) comes from
EFFICIENCY_SOURCES = ("fold", "mc", "map")

#: model -> (axis label, unit) of its main coupling
COUPLING_LABELS = {
    "alp_photon": (r"$g_{a\gamma\gamma}$", r"GeV$^{-1}$"),
    "alp_gluon": (r"$1/f$", r"GeV$^{-1}$"),
    "dark_photon": (r"kinetic mixing $\varepsilon$", ""),
}


#: key -> specification of the [reach] section (the entry of toymc.config.schema.SCHEMA)
REACH_SCHEMA = _config.SCHEMA["reach"]


# ----------------------------------------------------------------------------- [reach] section


@_dataclass(frozen=True)
class ReachGrid:
    """The validated [reach] section.

    Attributes
    ----------
    masses : numpy.ndarray
        Grid masses, GeV, strictly increasing.
    couplings : numpy.ndarray
        Grid couplings (model's unit), strictly increasing, > 0.
    lumi : float
        Integrated luminosity, fb^-1.
    background, cl, limit
        Expected background (events), confidence level, expected-limit method.
    efficiency, map_path, events_per_mass, reco_factor, efficiency_step,
    mc_ctau_min, mc_ctau_max, ess_min_fraction
        Efficiency source and its settings (see the module docstring); lengths in cm.
    """

    masses: _np.ndarray
    couplings: _np.ndarray
    lumi: float
    background: float
    cl: float
    limit: str
    efficiency: str
    map_path: str
    events_per_mass: int
    reco_factor: float
    efficiency_step: str
    mc_ctau_min: float
    mc_ctau_max: float
    ess_min_fraction: float


def _increasing(path, key, vals, positive_allowed):
    arr = _np.asarray(vals, dtype=float)
    if arr.size < 2:
        raise _ConfigError(path, key, list(vals), "at least two grid points")
    if not _np.all(_np.isfinite(arr)) or _np.any(arr <= 0):
        raise _ConfigError(path, key, list(vals), positive_allowed)
    if _np.any(_np.diff(arr) <= 0):
        raise _ConfigError(path, key, list(vals), "strictly increasing values (sorted, no "
                           "duplicates)")
    return arr


def parse_reach(table, path=""):
    """Validate a raw ``[reach]`` table (from tomllib) into a :class:`ReachGrid`.

    Parameters
    ----------
    table : dict
        The ``[reach]`` table; keys in :data:`REACH_SCHEMA`.
    path : str
        Config file, for messages and to resolve a relative ``map``.

    Raises
    ------
    toymc.errors.ConfigError
        Naming ``reach.<key>``: unknown key, wrong type or unit, value out of
        range, a grid with fewer than two points, unsorted or non-positive
        masses or couplings, both a list and min/max given, or neither.
    """
    if table is None:
        raise _ConfigError(path, "reach", None, "a [reach] section (keys: "
                           + ", ".join(REACH_SCHEMA) + ")")
    if not isinstance(table, dict):
        raise _ConfigError(path, "reach", table, "a table [reach]")
    for key in table:
        if key not in REACH_SCHEMA:
            raise _ConfigError(path, f"reach.{key}", table[key], "unknown key; allowed: "
                               + ", ".join(REACH_SCHEMA) + _config._closest(key, REACH_SCHEMA))
    v = {}
    for key, spec in REACH_SCHEMA.items():
        if key in table:
            v[key] = _config._value(path, f"reach.{key}", table[key], spec)
        elif spec["required"]:
            raise _ConfigError(path, f"reach.{key}", None, "required; " + _config._allowed(spec))
        else:
            v[key] = spec["default"]
    _config._list_or_range(path, "reach", table)

    def axis(name, list_key, unit_hint, points_key, spacing):
        lst, lo, hi = v[list_key], v[name + "_min"], v[name + "_max"]
        if lst is not None:
            if lo is not None or hi is not None:
                raise _ConfigError(path, f"reach.{list_key}", lst, f"give either "
                                   f"reach.{list_key} or reach.{name}_min/{name}_max, not both")
            return _increasing(path, f"reach.{list_key}", lst, f"finite {unit_hint} > 0")
        if lo is None or hi is None:
            key = f"reach.{name}_min" if lo is None else f"reach.{name}_max"
            raise _ConfigError(path, key, None, f"required (or give reach.{list_key}): "
                               f"{unit_hint} > 0")
        if not hi > lo:
            raise _ConfigError(path, f"reach.{name}_max", hi, f"above reach.{name}_min = {lo:g}")
        n = v[points_key]
        return _np.geomspace(lo, hi, n) if spacing == "log" else _np.linspace(lo, hi, n)

    masses = axis("mass", "masses", "masses (GeV)", "mass_points", v["mass_spacing"])
    couplings = axis("coupling", "couplings", "couplings", "coupling_points", "log")
    cells = masses.size * couplings.size
    if cells > MAX_GRID_CELLS:
        key = "reach.couplings" if v["couplings"] is not None else "reach.coupling_points"
        raise _ConfigError(path, key, couplings.size if v["couplings"] is None else
                           f"{couplings.size} couplings", f"at most {MAX_GRID_CELLS:,} grid "
                           f"points in all: {masses.size} masses x {couplings.size} couplings = "
                           f"{cells:,}")
    if v["mc_ctau_min"] >= v["mc_ctau_max"]:
        raise _ConfigError(path, "reach.mc_ctau_max", v["mc_ctau_max"],
                           f"above reach.mc_ctau_min = {v['mc_ctau_min']:g} cm")
    map_path = v["map"]
    if map_path and path and not _Path(map_path).is_absolute():
        map_path = str((_Path(path).parent / map_path).resolve())
    return ReachGrid(masses=masses, couplings=couplings, lumi=v["lumi"],
                     background=v["background"], cl=v["cl"], limit=v["limit"],
                     efficiency=v["efficiency"], map_path=map_path,
                     events_per_mass=v["events_per_mass"], reco_factor=v["reco_factor"],
                     efficiency_step=v["efficiency_step"], mc_ctau_min=v["mc_ctau_min"],
                     mc_ctau_max=v["mc_ctau_max"], ess_min_fraction=v["ess_min_fraction"])


# ----------------------------------------------------------------------------- pure functions


def signal_limit(background, cl=0.95, method="asimov", rel_unc=0.0):
    """Events a signal must exceed: the expected CLs upper limit N_up.

    Parameters
    ----------
    background : float
        Expected background events (>= 0).
    cl : float
        Confidence level.
    method : {"asimov", "mean", "median"}
        See :func:`toymc.analysis.stats.expected_upper_limit`.
    rel_unc : float
        Relative uncertainty of the background.

    Returns
    -------
    float
        ``N_up``; for ``background = 0``, ``-ln(1 - cl)`` (2.996 at 95 % CL;
        PDG review "Statistics", n = 0).
    """
    from toymc.analysis.stats import expected_upper_limit

    return float(expected_upper_limit(background, cl, method, rel_unc))


def expected_yield(lumi_fb, sigma_fb, br_decay, eff):
    """Expected selected signal events ``N = L_int sigma BR eps`` (broadcast).

    Parameters
    ----------
    lumi_fb : float
        Integrated luminosity, fb^-1.
    sigma_fb : array_like
        Production cross-section times production branching fractions, fb.
    br_decay : array_like
        BR(LLP -> channel).
    eff : array_like
        Signal efficiency.

    Returns
    -------
    numpy.ndarray
    """
    return float(lumi_fb) * _np.asarray(sigma_fb) * _np.asarray(br_decay) * _np.asarray(eff)


def decay_table(model, masses, couplings, channel, kinetic_mixing=None, charges=None):
    """c*tau [cm] and BR(channel) on the grid, shape (n_mass, n_coupling).

    From :func:`toymc.physics.models.point.decay_properties` (c*tau = hbar c / Gamma_total).
    Model-validity warnings are collected and re-emitted once each.
    """
    from toymc.physics.models.point import decay_properties

    m = _np.asarray(masses, dtype=float)
    g = _np.asarray(couplings, dtype=float)
    ctau = _np.empty((m.size, g.size))
    br = _np.empty((m.size, g.size))
    seen = {}
    with _warnings.catch_warnings(record=True) as caught:
        _warnings.simplefilter("always")
        for j, gj in enumerate(g):  # the vector-model couplings take one number at a time
            c, b, _ = decay_properties(model, m, float(gj), channel, kinetic_mixing, charges)
            ctau[:, j] = c
            br[:, j] = b
    for w in caught:
        seen.setdefault(str(w.message), w.category)
    for msg, cat in seen.items():
        _warnings.warn(f"reach grid: {msg}", cat, stacklevel=2)
    return ctau, br


def production_table(cfg_model, production, sqrt_s, masses, couplings):
    """Production cross-section times production BRs [fb], shape (n_mass, n_coupling).

    b_meson: ``sigma_bb * 2 * [f_+- BR(B+) + (1 - f_+-) BR(B0)]`` with the BRs
    from the fixed ``g_bs`` (or ``br_production``) of ``cfg_model``; the same
    for every coupling.  radiative: ``sigma(e+e- -> gamma V)`` for the electron
    coupling at each grid coupling (:func:`toymc.physics.models.point.signal_cross_section`).

    Raises
    ------
    toymc.errors.ConfigError
        b_meson without ``model.g_bs`` or ``model.br_production``.
    """
    from toymc.physics.models.point import electron_coupling, production_brs, signal_cross_section

    m = _np.asarray(masses, dtype=float)
    g = _np.asarray(couplings, dtype=float)
    out = _np.empty((m.size, g.size))
    if production.process == "b_meson":
        if cfg_model.g_bs is None and cfg_model.br_production is None:
            raise _ConfigError(None, "model.g_bs", None, "required for a b_meson reach (or give "
                               "model.br_production): the flavour coupling is held fixed")
        for i, mi in enumerate(m):
            bp, b0 = production_brs(float(mi), production.recoil, cfg_model.g_bs,
                                    cfg_model.br_production)
            out[i, :] = signal_cross_section("b_meson", sigma_bb=production.sigma_bb,
                                             charged_fraction=production.charged_fraction,
                                             br_b=(bp, b0))
        return out
    for j, gj in enumerate(g):
        c_e = electron_coupling(cfg_model.name, float(gj), cfg_model.kinetic_mixing,
                                cfg_model.charges)
        for i, mi in enumerate(m):
            out[i, j] = signal_cross_section(
                "radiative", sqrt_s=sqrt_s, mass=float(mi), cos_min=production.photon_cos_min,
                cos_max=production.photon_cos_max, c_e=c_e)
    return out


# ----------------------------------------------------------------------------- efficiency map


def read_map(path):
    """Read an ``efficiency_map.csv`` of a scan into a rectangular grid.

    Returns
    -------
    masses : ndarray (GeV), ctaus : ndarray (cm), eff : ndarray (n_mass, n_ctau)

    Raises
    ------
    toymc.errors.InputFileError
        Missing file, missing columns, non-numeric or NaN entries, a grid that
        is not a full rectangle, fewer than two masses or two c*tau values.
    """
    p = _Path(path)
    if not p.is_file():
        raise _InputFileError(f"{p}: efficiency map not found")
    try:
        with open(p, newline="") as f:
            rows = list(_csv.DictReader(f))
    except (OSError, UnicodeDecodeError, _csv.Error) as exc:
        raise _InputFileError(f"{p}: cannot read efficiency map ({exc})") from None
    need = ("mass_gev", "ctau_cm", "efficiency")
    if not rows or any(k not in rows[0] for k in need):
        raise _InputFileError(f"{p}: an efficiency map needs the columns {', '.join(need)}")
    try:
        trip = _np.array([[float(r[k]) for k in need] for r in rows])
    except (TypeError, ValueError):
        raise _InputFileError(f"{p}: non-numeric mass_gev, ctau_cm or efficiency entry") from None
    if not _np.all(_np.isfinite(trip)):
        bad = int(_np.argwhere(~_np.all(_np.isfinite(trip), axis=1))[0, 0]) + 2
        raise _InputFileError(f"{p}: line {bad}: mass, c*tau and efficiency must be finite")
    masses = _np.unique(trip[:, 0])
    ctaus = _np.unique(trip[:, 1])
    if masses.size < 2 or ctaus.size < 2 or _np.any(ctaus <= 0):
        raise _InputFileError(f"{p}: need at least two masses and two c*tau values > 0")
    if len(rows) != masses.size * ctaus.size:
        raise _InputFileError(f"{p}: {len(rows)} rows do not fill the {masses.size} x "
                              f"{ctaus.size} grid of its masses and c*tau values")
    eff = _np.full((masses.size, ctaus.size), _np.nan)
    eff[_np.searchsorted(masses, trip[:, 0]), _np.searchsorted(ctaus, trip[:, 1])] = trip[:, 2]
    if _np.any(_np.isnan(eff)):
        raise _InputFileError(f"{p}: duplicate (mass, c*tau) rows; the grid is not complete")
    return masses, ctaus, eff


def interpolate_map(masses, ctaus, eff, mass, ctau):
    """Bilinear interpolation of eff in (mass, log10 c*tau); 0 outside the map.

    Parameters
    ----------
    masses, ctaus : array_like
        Map nodes, GeV and cm, strictly increasing.
    eff : array_like, shape (len(masses), len(ctaus))
    mass, ctau : array_like
        Points (broadcast together), GeV and cm.

    Returns
    -------
    eff : ndarray
        Interpolated efficiency; exactly the map value at its nodes.
    outside : ndarray of bool
        Points outside the map (eps set to 0 there).
    """
    from scipy.interpolate import RegularGridInterpolator

    mm, cc = _np.broadcast_arrays(_np.asarray(mass, dtype=float), _np.asarray(ctau, dtype=float))
    lc = _np.log10(_np.where(cc > 0, cc, _np.nan))
    pts = _np.stack([mm.ravel(), lc.ravel()], axis=-1)
    interp = RegularGridInterpolator((_np.asarray(masses, float), _np.log10(ctaus)),
                                     _np.asarray(eff, float), method="linear",
                                     bounds_error=False, fill_value=_np.nan)
    with _np.errstate(invalid="ignore"):
        val = interp(pts).reshape(mm.shape)
    outside = ~_np.isfinite(val)
    return _np.where(outside, 0.0, val), outside


# ----------------------------------------------------------------------------- samples


def fold_window(selection, geometry=None):
    """Fiducial window (cm) and :class:`toymc.analysis.fold.Profile` of a detector selection.

    The profile comes from :func:`toymc.detector.vertexing.fold_profile`: flat
    and linear one to one, tabulated points times eps0.  A ``"hits"`` profile
    depends on the tracks; it becomes a radius table for stiff radial tracks
    (an upper estimate of the efficiency) and a warning says so.

    Parameters
    ----------
    selection : toymc.detector.geometry.Selection
    geometry : toymc.detector.geometry.Geometry, optional
        Needed for a ``"hits"`` profile.

    Returns
    -------
    (r_min, r_max, z_min, z_max), toymc.analysis.fold.Profile
    """
    from toymc.detector.vertexing import fold_profile

    if selection.profile.kind == "hits":
        if geometry is None:
            raise _ConfigError(None, "selection.profile.kind", "hits",
                               "flat, linear or tabulated without a geometry")
        _warnings.warn("reach: the 'hits' vertex profile is folded as a radius table for stiff "
                       "radial tracks, an upper estimate of the efficiency; use --efficiency mc "
                       "for the per-track profile", UserWarning, stacklevel=2)
    win = (selection.r_min, selection.r_max, selection.z_min, selection.z_max)
    return win, fold_profile(selection, geometry)


def _selection(cfg):
    if cfg.selection is None:
        raise _ConfigError(cfg.path, "selection", None,
                           "a [detector] geometry and a [selection] section (fiducial window "
                           "and vertex profile) for the fold source")
    return cfg.selection


def _sample_config(data, path, mass, ctau, events, seed, geometry):
    d = {k: (dict(v) if isinstance(v, dict) else v) for k, v in data.items()}
    d.pop("model", None)
    d.pop("scan", None)
    if not geometry:
        d.pop("selection", None)  # a truth-only sample has no detector to select with
    d["llp"] = dict(d["llp"], mass=float(mass), ctau=float(ctau))
    d["detector"] = {"geometry": geometry}
    d["run"] = dict(d.get("run", {}), events=int(events), seed=int(seed))
    return _config.from_dict(d, path)


def _truth_kinematics(cfg):
    from toymc.engine.generator import iter_chunks

    cols = {k: [] for k in ("llp_vx", "llp_vy", "llp_vz", "llp_px", "llp_py", "llp_pz", "llp_m",
                            "w_gen")}
    for chunk in iter_chunks(cfg):
        for k, lst in cols.items():
            lst.append(chunk.event[k])
    c = {k: _np.concatenate(v) for k, v in cols.items()}
    p = _np.sqrt(c["llp_px"] ** 2 + c["llp_py"] ** 2 + c["llp_pz"] ** 2)
    return (c["llp_vx"], c["llp_vy"], c["llp_vz"], c["llp_px"], c["llp_py"], c["llp_pz"],
            p / c["llp_m"], c["w_gen"])


def _fold_row(cfg, window, profile, ctaus, reco_factor):
    """eps, err, status for one mass row of c*tau values."""
    x0, y0, z0, ux, uy, uz, bg, w = _truth_kinematics(cfg)
    from toymc.analysis.fold import fold_efficiency

    eps = _np.zeros(ctaus.size)
    err = _np.zeros(ctaus.size)
    ok = _np.isfinite(ctaus) & (ctaus > 0)
    if _np.any(ok):
        e, s = fold_efficiency(x0, y0, z0, ux, uy, uz, bg, ctaus[ok], *window, profile,
                               weights=w)
        eps[ok] = reco_factor * e
        err[ok] = reco_factor * s
    return eps, err, _np.where(ok, "fold", "no_decay")


def _ladder(ctaus, lo, hi):
    """Reference c*tau values (cm): the decades 10^k covering `ctaus`, within [lo, hi]."""
    c = ctaus[_np.isfinite(ctaus) & (ctaus > 0)]
    if c.size == 0:
        return _np.array([])
    k_lo = _math.ceil(_math.log10(max(c.min(), lo)) - 1e-12)
    k_hi = _math.ceil(_math.log10(min(c.max(), hi)) - 1e-12)
    refs = 10.0 ** _np.arange(k_lo, max(k_hi, k_lo) + 1)
    refs = refs[(refs >= lo * (1 - 1e-12)) & (refs <= hi * (1 + 1e-12))]
    return refs if refs.size else _np.array([min(max(c.min(), lo), hi)])


def _mc_row(data, cfg, mass, ctaus, grid, seed_of):
    """eps, err, status, ess for one mass row from detector samples and reweighting."""
    from toymc.analysis.reweight import effective_sample_size, reweighted_efficiency, weights
    from toymc.engine.api import detector_for
    from toymc.engine.generator import iter_chunks

    refs = _ladder(ctaus, grid.mc_ctau_min, grid.mc_ctau_max)
    eps = _np.zeros(ctaus.size)
    err = _np.zeros(ctaus.size)
    ess = _np.zeros(ctaus.size)
    status = _np.full(ctaus.size, "no_decay", dtype=object)
    ok = _np.isfinite(ctaus) & (ctaus > 0)
    if not refs.size:
        return eps, err, status.astype(str), ess
    use = _np.searchsorted(refs, ctaus * (1 - 1e-12))  # smallest ref >= ctau
    use = _np.clip(use, 0, refs.size - 1)
    key = f"cut_{grid.efficiency_step}"
    for r_i, c0 in enumerate(refs):
        targets = _np.flatnonzero(ok & (use == r_i))
        if not targets.size:
            continue
        scfg = _sample_config(data, cfg.path, mass, c0, grid.events_per_mass,
                              seed_of(mass, c0), cfg.geometry)
        det = detector_for(scfg)
        if det is None:
            raise _ConfigError(cfg.path, "detector.geometry", "", "a geometry: the mc efficiency "
                               "source needs the detector")
        ct, passed = [], []
        for chunk in iter_chunks(scfg, detector=det):
            if key not in chunk.event:
                raise _ConfigError(cfg.path, "reach.efficiency_step", grid.efficiency_step,
                                   "a cutflow step: one of " + ", ".join(
                                       k[4:] for k in chunk.event if k.startswith("cut_")))
            ct.append(chunk.event["llp_ct"])
            passed.append(chunk.event[key].astype(bool))
        ct = _np.concatenate(ct)
        passed = _np.concatenate(passed)
        n = ct.size
        for j in targets:
            w = weights(ct, c0, float(ctaus[j]))
            if not _np.all(_np.isfinite(w)) or not w.sum() > 0:
                status[j] = "low_ess"
                continue
            ess[j] = effective_sample_size(w)
            if ess[j] < grid.ess_min_fraction * n:
                status[j] = "low_ess"
                continue
            eps[j], err[j] = reweighted_efficiency(passed, w)
            status[j] = "reweight"
    return eps, err, status.astype(str), ess


# ----------------------------------------------------------------------------- driver


@_dataclass
class ReachResult:
    """Everything :func:`run_reach` computed (arrays of shape (n_mass, n_coupling))."""

    model: str
    channel: str
    process: str
    masses: _np.ndarray
    couplings: _np.ndarray
    ctau: _np.ndarray
    sigma_fb: _np.ndarray
    br_decay: _np.ndarray
    eff: _np.ndarray
    eff_err: _np.ndarray
    status: _np.ndarray
    yield_: _np.ndarray
    n_up: float
    grid: ReachGrid
    title: str
    seconds: float = 0.0
    files: dict = _field(default_factory=dict)

    @property
    def excluded(self):
        """Boolean mask N > N_up (the signal region)."""
        return self.yield_ > self.n_up


#: [reach] keys that only some efficiency sources use
SOURCE_KEYS = {"events_per_mass": ("fold", "mc"), "reco_factor": ("fold",),
               "efficiency_step": ("mc",), "mc_ctau_min": ("mc",), "mc_ctau_max": ("mc",),
               "ess_min_fraction": ("mc",), "map": ("map",)}


def _unused_source_keys(path, table, source):
    """Refuse [reach] keys the config's own efficiency source does not use (a source chosen
    on the command line may leave the other sources' keys in place)."""
    for key, sources in SOURCE_KEYS.items():
        if key in table and source not in sources:
            raise _ConfigError(path, f"reach.{key}", table[key], "used only with reach."
                               f"efficiency = {' or '.join(repr(x) for x in sources)} (this "
                               f"config: {source!r}); remove it")


def _load(config):
    p = _Path(config)
    if not p.is_file():
        raise _InputFileError(f"{config}: config file not found")
    try:
        text = p.read_text()
    except (OSError, UnicodeDecodeError) as exc:
        raise _InputFileError(f"{config}: cannot read config: {exc}") from None
    data = _parse_toml(text, str(p))
    reach = data.pop("reach", None)
    hint = _config.missing_section_hint("reach", data) if reach is None else ""
    if hint:
        raise _ConfigError(str(p), "reach", None, "a [reach] section" + hint)
    return data, reach, str(p)


def _fmt_lumi(fb):
    if fb >= 1e3:
        return f"{fb / 1e3:g} ab$^{{-1}}$"
    return f"{fb:g} fb$^{{-1}}$"


_CHANNEL_TEX = {"gamma_gamma": r"$\gamma\gamma$", "pi_pi_pi0": r"$\pi^+\pi^-\pi^0$",
                "pi0_pi0_pi0": r"$3\pi^0$", "e_e": r"$e^+e^-$", "mu_mu": r"$\mu^+\mu^-$",
                "pi_pi": r"$\pi^+\pi^-$"}


def _source_text(grid):
    if grid.efficiency == "fold":
        extra = f" x reco factor {grid.reco_factor:g}" if grid.reco_factor != 1.0 else ""
        return f"efficiency: fold of {grid.events_per_mass} truth events per mass{extra}"
    if grid.efficiency == "mc":
        return (f"efficiency: detector MC, {grid.events_per_mass} events per reference "
                f"c$\\tau$, step {grid.efficiency_step}")
    return f"efficiency: map {_Path(grid.map_path).name}"


def _title(cfg, grid):
    m = cfg.model
    ch = _CHANNEL_TEX.get(cfg.llp.channel, cfg.llp.channel.replace("_", " "))
    t = (f"{m.name} ({cfg.production.process}), LLP $\\to$ {ch}: "
         f"$L_{{int}}$ = {_fmt_lumi(grid.lumi)}, b = {grid.background:g}, "
         f"{100 * grid.cl:g}% CL")
    if cfg.production.process == "b_meson":
        fixed = (f"$g_{{bs}}$ = {m.g_bs:.3g} GeV$^{{-1}}$" if m.g_bs is not None
                 else f"BR(B$\\to$K X) = {m.br_production:.3g}")
        t += f"\n{fixed} held fixed; {_source_text(grid)}"
    else:
        t += f"\n{_source_text(grid)}"
    return t


def run_reach(config, efficiency=None, map_path=None, output_dir=None, events_per_mass=None,
              force=False, plot=True, progress=False):
    """Scan the [reach] grid of a config; write reach.csv, reach.json and reach.png.

    Parameters
    ----------
    config : str or Path
        TOML config with [beams], [production], [llp] (channel; mass is a
        reference point), [model] (name; coupling is a reference value; g_bs or
        br_production for b_meson), [selection] (fold), [detector] (mc) and [reach].
    efficiency : {"fold", "mc", "map"}, optional
        Overrides ``reach.efficiency``.
    map_path : str, optional
        Overrides ``reach.map`` (efficiency_map.csv of a scan).
    output_dir : str or Path, optional
        Output folder (default ``reach_<config stem>``, the stem alone if it starts
        with ``reach``: :func:`toymc.io.names.default_output`).
    events_per_mass : int, optional
        Overrides ``reach.events_per_mass``.
    force : bool
        Overwrite existing outputs.
    plot : bool
        Draw reach.png (needs matplotlib).

    Returns
    -------
    ReachResult
    """
    t0 = _time.perf_counter()
    data, table, path = _load(config)
    grid = parse_reach(table, path)
    if efficiency is not None:
        if efficiency not in EFFICIENCY_SOURCES:
            raise _ConfigError(None, "--efficiency", efficiency,
                               "one of " + ", ".join(EFFICIENCY_SOURCES))
        grid = _replace(grid, efficiency=efficiency)
    if map_path is not None:
        grid = _replace(grid, map_path=str(map_path))
    if events_per_mass is not None:
        if int(events_per_mass) < 2:
            raise _ConfigError(None, "--events-per-mass", events_per_mass, "an integer >= 2")
        grid = _replace(grid, events_per_mass=int(events_per_mass))
    if efficiency is None:
        _unused_source_keys(path, table, grid.efficiency)
    if "model" not in data:
        raise _ConfigError(path, "model", None, "a [model] section: the reach needs the model's "
                           "c*tau, branching fractions and production rate"
                           + _config.missing_section_hint("model", data))
    cfg = _config.from_dict(data, path)
    from toymc.io.names import default_output

    out = _check_output_dir(output_dir or default_output("reach", path),
                            ["reach.csv", "reach.json"] + (["reach.png"] if plot else []),
                            force=force, inputs=[path, grid.map_path])
    names = {"csv": out / "reach.csv", "json": out / "reach.json", "png": out / "reach.png"}
    for key, m in (("reach.mass_min", grid.masses[0]), ("reach.mass_max", grid.masses[-1])):
        try:
            _sample_config(data, path, m, 1.0, 1, 0, "")
        except _ConfigError as exc:
            raise _ConfigError(path, key, float(m), f"a generable mass: {exc.allowed}") from None

    model = cfg.model
    ctau, br = decay_table(model.name, grid.masses, grid.couplings, cfg.llp.channel,
                           model.kinetic_mixing, model.charges)
    sigma = production_table(model, cfg.production, cfg.beams.sqrt_s, grid.masses,
                             grid.couplings)
    eff = _np.zeros_like(ctau)
    err = _np.zeros_like(ctau)
    status = _np.full(ctau.shape, "", dtype=object)
    from toymc.analysis.scan import point_seed

    # every check of the user's input before the progress bar appears
    if grid.efficiency == "fold":
        window, profile = fold_window(_selection(cfg), cfg.detector)
    elif grid.efficiency == "mc":
        from toymc.detector.response import CUT_STEPS

        if not cfg.geometry:
            raise _ConfigError(cfg.path, "detector.geometry", "", "a geometry: the mc "
                               "efficiency source needs the detector")
        if grid.efficiency_step not in CUT_STEPS:
            raise _ConfigError(cfg.path, "reach.efficiency_step", grid.efficiency_step,
                               "a cutflow step: one of " + ", ".join(CUT_STEPS))
    elif not grid.map_path:
        raise _ConfigError(path, "reach.map", "", "an efficiency_map.csv (or --map FILE) "
                           "for the map source")
    bar = None
    if progress and grid.efficiency != "map":
        from tqdm import tqdm

        bar = tqdm(total=grid.masses.size, unit="mass", desc="reach", leave=False)
    if grid.efficiency == "fold":
        for i, m in enumerate(grid.masses):
            scfg = _sample_config(data, path, m, 1.0, grid.events_per_mass,
                                  point_seed(cfg.run.seed, float(m)), "")
            eff[i], err[i], status[i] = _fold_row(scfg, window, profile, ctau[i],
                                                  grid.reco_factor)
            if bar is not None:
                bar.update(1)
    elif grid.efficiency == "mc":
        low = 0
        for i, m in enumerate(grid.masses):
            eff[i], err[i], status[i], _ = _mc_row(
                data, cfg, float(m), ctau[i], grid,
                lambda mm, c0: point_seed(cfg.run.seed, mm, c0))
            low += int(_np.sum(status[i] == "low_ess"))
            if bar is not None:
                bar.update(1)
        if low:
            from toymc.analysis.reweight import LowEffectiveSampleWarning

            _warnings.warn(f"reach: {low} grid points have an effective sample size below "
                           f"{grid.ess_min_fraction:g} N after reweighting; their efficiency "
                           "is set to 0 (status low_ess)", LowEffectiveSampleWarning,
                           stacklevel=2)
    else:
        mm, cc, ee = read_map(grid.map_path)
        mesh = _np.broadcast_to(grid.masses[:, None], ctau.shape)
        eff, outside = interpolate_map(mm, cc, ee, mesh, ctau)
        status[:] = "map"
        status[outside] = "outside_map"
        if _np.any(outside):
            _warnings.warn(f"reach: {int(outside.sum())} of {outside.size} grid points lie "
                           f"outside the efficiency map {grid.map_path} (masses "
                           f"{mm[0]:g}-{mm[-1]:g} GeV, c*tau {cc[0]:g}-{cc[-1]:g} cm); "
                           "efficiency 0 there", UserWarning, stacklevel=2)
    if bar is not None:
        bar.close()
    n_up = signal_limit(grid.background, grid.cl, grid.limit)
    nsig = expected_yield(grid.lumi, sigma, br, eff)
    res = ReachResult(model=model.name, channel=cfg.llp.channel, process=cfg.production.process,
                      masses=grid.masses, couplings=grid.couplings, ctau=ctau, sigma_fb=sigma,
                      br_decay=br, eff=eff, eff_err=err, status=status.astype(str),
                      yield_=nsig, n_up=n_up, grid=grid, title=_title(cfg, grid))
    _make_dir(out)
    with _replacing(force):
        _write_csv(res, names["csv"])
        if plot:
            plot_reach(res, names["png"])
            res.files["png"] = str(names["png"])
        res.files["csv"] = str(names["csv"])
        res.seconds = _time.perf_counter() - t0
        res.files["json"] = str(names["json"])
        _write_json(res, cfg, names["json"])
    return res


def _write_csv(res, path):
    def write(tmp):
        with open(tmp, "w", newline="") as f:
            w = _csv.writer(f)
            w.writerow(["mass_gev", "coupling", "ctau_cm", "sigma_br_prod_fb", "br_decay",
                        "efficiency", "efficiency_error", "status", "yield", "above_limit"])
            for i, m in enumerate(res.masses):
                for j, g in enumerate(res.couplings):
                    w.writerow([repr(float(m)), repr(float(g)), repr(float(res.ctau[i, j])),
                                repr(float(res.sigma_fb[i, j])), repr(float(res.br_decay[i, j])),
                                repr(float(res.eff[i, j])), repr(float(res.eff_err[i, j])),
                                res.status[i, j], repr(float(res.yield_[i, j])),
                                int(res.yield_[i, j] > res.n_up)])

    _atomic_write(path, write)


def _write_json(res, cfg, path):
    g = res.grid
    unit = COUPLING_LABELS.get(res.model, ("g", ""))[1]
    info = {"model": res.model, "channel": res.channel, "process": res.process,
            "coupling_unit": unit.replace("$", "").replace("^{-1}", "^-1") or "dimensionless",
            "lumi_fb_inv": g.lumi, "background": g.background, "cl": g.cl, "limit": g.limit,
            "n_up": res.n_up, "efficiency": g.efficiency, "events_per_mass": g.events_per_mass,
            "reco_factor": g.reco_factor, "map": g.map_path,
            "g_bs": cfg.model.g_bs, "br_production": cfg.model.br_production,
            "sqrt_s_gev": cfg.beams.sqrt_s, "masses_gev": res.masses.tolist(),
            "couplings": res.couplings.tolist(), "points_above_limit": int(res.excluded.sum()),
            "seconds": res.seconds, "files": res.files, "config": cfg.path}
    _atomic_write(path, lambda tmp: tmp.write_text(_json.dumps(info, indent=1)))


# ----------------------------------------------------------------------------- plot


def plot_reach(res, path):
    """Draw the region N > N_up in (mass, coupling), log axes, with lines of constant c*tau.

    Parameters
    ----------
    res : ReachResult
    path : str or Path
        PNG file (written atomically).
    """
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    from toymc.extras import matplotlib_pyplot
    from toymc.plots.figures import save

    plt = matplotlib_pyplot()
    fig, ax = plt.subplots(figsize=(7.5, 5.5))
    m, g = res.masses, res.couplings
    ratio = (res.yield_ / res.n_up).T  # rows: couplings
    handles = []
    if _np.nanmax(ratio) > 1.0:
        ax.contourf(m, g, ratio, levels=[1.0, _np.inf], colors=["tab:blue"], alpha=0.35)
        ax.contour(m, g, ratio, levels=[1.0], colors=["tab:blue"], linewidths=2)
        handles.append(Patch(facecolor="tab:blue", alpha=0.35, edgecolor="tab:blue",
                             label=f"N > {res.n_up:.3g} events (signal region)"))
    else:
        ax.text(0.5, 0.5, f"no grid point with N > {res.n_up:.3g}", transform=ax.transAxes,
                ha="center", va="center")
    lct = _np.log10(_np.where(_np.isfinite(res.ctau) & (res.ctau > 0), res.ctau, _np.nan)).T
    lo, hi = _np.nanmin(lct), _np.nanmax(lct)
    levels = _np.arange(_math.ceil(lo), _math.floor(hi) + 1)
    if levels.size > 7:
        step = _math.ceil(levels.size / 7)
        levels = levels[::step]
    if levels.size:
        cs = ax.contour(m, g, lct, levels=levels, colors="0.35", linestyles="dashed",
                        linewidths=1)

        def fmt(v):
            c = 10.0**v
            return (rf"$c\tau$ = {c:g} cm" if 1e-2 <= c <= 1e4
                    else rf"$c\tau = 10^{{{round(v)}}}$ cm")

        ax.clabel(cs, fmt=fmt, fontsize=8, inline=True)
        handles.append(Line2D([], [], color="0.35", ls="dashed", lw=1,
                              label=r"constant $c\tau$ (labelled)"))
    ax.set_xscale("log")
    ax.set_yscale("log")
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    if m[-1] / m[0] < 1e3:  # up to 3 decades: plain numbers at 1, 2, 5 x 10^k (or 1..9)
        subs = (1.0, 2.0, 5.0) if m[-1] / m[0] > 4 else tuple(float(k) for k in range(1, 10))
        ax.xaxis.set_major_locator(LogLocator(subs=subs))
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
        ax.xaxis.set_minor_formatter(NullFormatter())
    ax.set_xlabel("LLP mass $m$ [GeV]")
    label, unit = COUPLING_LABELS.get(res.model, ("coupling $g$", ""))
    ax.set_ylabel(f"{label} [{unit}]" if unit else f"{label} (dimensionless)")
    ax.set_title(res.title, fontsize=9)
    if handles:
        ax.legend(handles=handles, loc="best", fontsize=8, framealpha=0.9)
    save(fig, path)
