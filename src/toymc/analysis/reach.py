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
      and vertex-efficiency profile at every c*tau (:func:`toymc.detector.fold.fold_efficiency`;
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
      interpolated bilinearly in (mass, log10 c*tau) (:func:`interpolate_map`; the file is read by
      :func:`toymc.io.effmap.read_map`);
      points outside the map get eps = 0 with a warning.

The signal region at confidence level CL is ``N > N_up``, with ``N_up`` the
expected CLs upper limit for the expected background ``b`` (``[reach] background``,
events after the selection, with an optional relative uncertainty):
:func:`toymc.analysis.stats.expected_upper_limit`, by default for the continuous count
n = b ("asimov"; smooth and increasing in b).  For ``b = 0`` it is ``-ln(1 - CL)``:
2.303 events at 90 % and 2.996 at 95 % CL (PDG review "Statistics"; n = 0).

The ``[reach]`` section (parsed by :mod:`toymc.config.reach`, see :data:`REACH_SCHEMA`):
masses (``mass_min``, ``mass_max``, ``mass_points``, ``mass_spacing``, or an
explicit ``masses`` list), couplings (``coupling_min``, ``coupling_max``,
``coupling_points``, log-spaced, or a ``couplings`` list), ``lumi``,
``background``, ``cl``, ``limit``, ``efficiency``, ``map``, ``events_per_mass``,
``reco_factor``, ``efficiency_step``, ``mc_ctau_min``, ``mc_ctau_max``,
``ess_min_fraction``.

The computation (:func:`prepare_reach`, then :func:`compute_reach`) writes nothing;
``toymc reach`` (:mod:`toymc.cli.reach`) writes into its output folder ``reach.csv``
(one row per grid point, :func:`reach_rows`), ``reach.json`` (settings, N_up, timing,
units: :func:`reach_summary`) and ``reach.png`` (:func:`toymc.plots.reach.plot_reach`:
the region N > N_up in the (mass, coupling) plane with lines of constant c*tau).
The samples are made in :mod:`toymc.analysis.reach_samples`, the model's c*tau, BR and
cross-section tables in :mod:`toymc.analysis.model_tables`.

Units: masses GeV, c*tau cm, cross-sections fb, luminosity fb^-1; the coupling
in the model's unit (:data:`COUPLING_LABELS`).
"""

import warnings as _warnings
from dataclasses import dataclass as _dataclass
from dataclasses import field as _field
from dataclasses import replace as _replace

import numpy as _np

from toymc.config import loader as _config
from toymc.config.reach import REACH_SCHEMA, ReachGrid, parse_reach
from toymc.config.reach import load_reach as _load
from toymc.config.reach import unused_source_keys as _unused_source_keys
from toymc.config.tables import missing_section_hint as _missing_section_hint
from toymc.errors import ConfigError as _ConfigError

__all__ = (
    "COUPLING_LABELS",
    "EFFICIENCY_SOURCES",
    "REACH_COLUMNS",
    "REACH_SCHEMA",
    "ReachGrid",
    "ReachPlan",
    "ReachResult",
    "compute_reach",
    "expected_yield",
    "interpolate_map",
    "output_names",
    "parse_reach",
    "prepare_reach",
    "reach_rows",
    "reach_summary",
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


# ----------------------------------------------------------------------------- efficiency map


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


# ----------------------------------------------------------------------------- driver


@_dataclass
class ReachResult:
    """Everything :func:`compute_reach` computed (arrays of shape (n_mass, n_coupling)).

    ``config`` is the run config the grid was computed for; ``seconds`` and ``files``
    are filled by the command that writes the outputs.
    """

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
    config: object = None
    seconds: float = 0.0
    files: dict = _field(default_factory=dict)

    @property
    def excluded(self):
        """Boolean mask N > N_up (the signal region)."""
        return self.yield_ > self.n_up




@_dataclass(frozen=True)
class ReachPlan:
    """A checked reach request: the config's tables (without [reach]), its path, the
    [reach] grid with the overrides applied, and the run config."""

    data: dict
    path: str
    grid: ReachGrid
    cfg: object


def prepare_reach(config, efficiency=None, map_path=None, events_per_mass=None):
    """Read and check a reach config; nothing is generated yet.

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
    events_per_mass : int, optional
        Overrides ``reach.events_per_mass``.

    Returns
    -------
    ReachPlan
    """
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
                           + _missing_section_hint("model", data))
    cfg = _config.from_dict(data, path)
    return ReachPlan(data=data, path=path, grid=grid, cfg=cfg)


def output_names(plot=True):
    """The files a reach writes into its folder."""
    return ["reach.csv", "reach.json"] + (["reach.png"] if plot else [])


def compute_reach(plan, progress=None):
    """Efficiency, yield and limit at every grid point of a :class:`ReachPlan`.

    Parameters
    ----------
    plan : ReachPlan
    progress : callable, optional
        ``progress(total)`` returns a bar with ``update(n)`` and ``close()``, advanced
        once per mass (not used for the map source).

    Returns
    -------
    ReachResult
    """
    from toymc.analysis.reach_samples import (
        fold_row,
        fold_window,
        mc_row,
        sample_config,
        selection_of,
    )

    data, path, grid, cfg = plan.data, plan.path, plan.grid, plan.cfg
    for key, m in (("reach.mass_min", grid.masses[0]), ("reach.mass_max", grid.masses[-1])):
        try:
            sample_config(data, path, m, 1.0, 1, 0, "")
        except _ConfigError as exc:
            raise _ConfigError(path, key, float(m), f"a generable mass: {exc.allowed}") from None

    from toymc.analysis.model_tables import decay_table, production_table

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
        window, profile = fold_window(selection_of(cfg), cfg.detector)
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
    if progress is not None and grid.efficiency != "map":
        bar = progress(grid.masses.size)
    if grid.efficiency == "fold":
        for i, m in enumerate(grid.masses):
            scfg = sample_config(data, path, m, 1.0, grid.events_per_mass,
                                 point_seed(cfg.run.seed, float(m)), "")
            eff[i], err[i], status[i] = fold_row(scfg, window, profile, ctau[i],
                                                 grid.reco_factor)
            if bar is not None:
                bar.update(1)
    elif grid.efficiency == "mc":
        low = 0
        for i, m in enumerate(grid.masses):
            eff[i], err[i], status[i], _ = mc_row(
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
        from toymc.io.effmap import read_map

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
    n_up = signal_limit(grid.background, grid.cl, grid.limit, grid.background_uncertainty)
    nsig = expected_yield(grid.lumi, sigma, br, eff)
    return ReachResult(model=model.name, channel=cfg.llp.channel, process=cfg.production.process,
                       masses=grid.masses, couplings=grid.couplings, ctau=ctau, sigma_fb=sigma,
                       br_decay=br, eff=eff, eff_err=err, status=status.astype(str),
                       yield_=nsig, n_up=n_up, grid=grid, config=cfg)


def run_reach(config, efficiency=None, map_path=None, events_per_mass=None, progress=None):
    """The reach of a config, computed without writing anything
    (:func:`prepare_reach` then :func:`compute_reach`; ``toymc reach`` writes the files)."""
    return compute_reach(prepare_reach(config, efficiency, map_path, events_per_mass), progress)


# ----------------------------------------------------------------------------- tables

#: columns of reach.csv, one row per (mass, coupling)
REACH_COLUMNS = ("mass_gev", "coupling", "ctau_cm", "sigma_br_prod_fb", "br_decay",
                 "efficiency", "efficiency_error", "status", "yield", "above_limit")


def reach_rows(res):
    """The rows of reach.csv (:data:`REACH_COLUMNS`), numbers as ``repr`` (exact)."""
    for i, m in enumerate(res.masses):
        for j, g in enumerate(res.couplings):
            yield [repr(float(m)), repr(float(g)), repr(float(res.ctau[i, j])),
                   repr(float(res.sigma_fb[i, j])), repr(float(res.br_decay[i, j])),
                   repr(float(res.eff[i, j])), repr(float(res.eff_err[i, j])),
                   res.status[i, j], repr(float(res.yield_[i, j])),
                   int(res.yield_[i, j] > res.n_up)]


def reach_summary(res):
    """The content of reach.json: settings, N_up, units, timing and files of a result."""
    g = res.grid
    cfg = res.config
    unit = COUPLING_LABELS.get(res.model, ("g", ""))[1]
    return {"model": res.model, "channel": res.channel, "process": res.process,
            "coupling_unit": unit.replace("$", "").replace("^{-1}", "^-1") or "dimensionless",
            "lumi_fb_inv": g.lumi, "background": g.background,
            "background_uncertainty": g.background_uncertainty, "cl": g.cl, "limit": g.limit,
            "n_up": res.n_up, "efficiency": g.efficiency, "events_per_mass": g.events_per_mass,
            "reco_factor": g.reco_factor, "map": g.map_path,
            "g_bs": cfg.model.g_bs, "br_production": cfg.model.br_production,
            "sqrt_s_gev": cfg.beams.sqrt_s, "masses_gev": res.masses.tolist(),
            "couplings": res.couplings.tolist(), "points_above_limit": int(res.excluded.sum()),
            "seconds": res.seconds, "files": res.files, "config": cfg.path}
