"""Mass x lifetime grid scans: one reference sample per mass, lifetime reweighting,
direct generation where reweighting is too weak, local processes or a Dask cluster.

Plan of a scan (``[scan]`` section of a config; its keys are in the README):

* grid: masses (explicit list, or mass_min..mass_max linear) times
  ctau_points values log-spaced in [ctau_min, ctau_max];
* for each mass one *task*: generate ``events_per_mass`` events through the
  detector, written to ``points/m<mass>_ref.root``, with proper decay lengths
  drawn from an equal-weight mixture of exponentials whose c*tau values are
  log-spaced over the grid range, neighbours at most ``mixture_ratio`` apart
  (``llp.ctau_mixture``).  Every grid c*tau_1 gets its efficiency from the
  weights w = f_1(t)/g(t), the exponential density at c*tau_1 over the
  mixture density g (for a single c*tau_0 this is the lifetime weight
  (tau0/tau1) exp(-t/tau1 + t/tau0) of toymc.analysis.reweight), accumulated chunk by
  chunk.  With a single exponential the weights have infinite variance for
  c*tau_1 > 2 c*tau_0 and an effective sample size ESS/N = rho(2 - rho),
  rho = c*tau_1/c*tau_0, so one c*tau_0 cannot serve a grid of many decades;
  the mixture keeps ESS/N of order 1/K over the whole range (K components).
  Where ESS/N < ``ess_min_fraction`` the point is generated directly at
  c*tau_1 (``points/m<mass>_ct<ctau>.root``);
* efficiency = weighted fraction of events passing the cutflow step
  ``efficiency_step`` (column ``cut_<step>``), with the ratio-estimator error
  (toymc.analysis.reweight.reweighted_efficiency; binomial for unit weights).

Seeds come from the grid coordinates, never from task order: the sample of mass
m (or of the point (m, c*tau)) uses the master seed combined with the bits of the
float values, so the same seed gives the same efficiency map whatever the number
of workers or the executor.  Tasks run inline (1 worker), in local worker
processes, or on a dask.distributed cluster (``scheduler``).

The scan keeps ``index.json`` in its folder (config, grid, and one row per point:
status, method, efficiency and error, events, ESS, file, seed), rewritten
atomically after each finished mass.  ``resume`` skips finished masses and
redoes unfinished ones; a resume against a scan made with another config is
refused, naming what differs.  Sample files are written atomically (temporary
name, then rename), so a killed scan leaves no truncated file under a final
name; stale temporary files are removed on resume.  The index and the folder checks
are in :mod:`toymc.io.scanindex`, the executors in :mod:`toymc.analysis.executors`.
"""

import math
import os
import struct
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

from toymc.config import loader as _config
from toymc.config.scan import Grid, grid_from_config
from toymc.config.scan import point_data as _as_data
from toymc.errors import ConfigError, OutputError
from toymc.io.scanindex import INDEX, check_rows, check_scan_dir, write_index
from toymc.physics.kinematics.elementary import exp_array

__all__ = ("Grid", "efficiency_map", "grid_from_config", "point_seed",
           "run_mass_task", "run_scan")

#: largest weight table (c*tau values x events) computed at once, about 32 MB
_WEIGHT_CELLS = 1 << 22


def point_seed(seed, mass, ctau=None):
    """Seed of the sample of (mass[, ctau]) from the master seed and the float bits.

    Uses numpy's SeedSequence on (seed, tag, the IEEE-754 bits of mass and ctau),
    so it depends on the grid coordinates only.
    """
    words = [int(seed), 0 if ctau is None else 1]
    for v in (mass, ctau if ctau is not None else 0.0):
        hi, lo = struct.unpack("<II", struct.pack("<d", float(v)))
        words += [hi, lo]
    state = np.random.SeedSequence(words).generate_state(4, dtype=np.uint32)
    return int(sum(int(x) << (32 * i) for i, x in enumerate(state)))


def _sample_cfg(cfg, mass, ctau, events, seed, output):
    c = _config.from_dict(_as_data(cfg, mass, ctau), cfg.path)
    return replace(c, run=replace(c.run, events=events, seed=seed, output=str(output)),
                   path=cfg.path)


def _fname(mass, ctau=None):
    return f"m{mass:.6g}_ref.root" if ctau is None else f"m{mass:.6g}_ct{ctau:.6g}.root"


def _generate(cfg, step, ctaus, components):
    """Write cfg's sample; return (S_w, S_wp, S_w2, S_w2p) per target ctau.

    The sample's proper decay lengths follow the equal-weight mixture of
    exponentials with c*tau `components` (one value: a plain exponential); the
    weight to target c*tau_1 is its exponential density over the mixture's.
    """
    from toymc.engine.api import detector_for, metadata
    from toymc.engine.generator import iter_chunks, mixture_density
    from toymc.io.columns import all_columns
    from toymc.io.ntuple import NtupleWriter

    det = detector_for(cfg)
    if det is None:
        raise ConfigError(cfg.path, "detector.geometry", "", "a geometry: a scan needs the detector")
    meta = metadata(cfg)
    meta["columns"] = [list(c) for c in all_columns(with_reco=True)]
    ctaus = np.asarray(ctaus, dtype=float)
    sums = np.zeros((len(ctaus), 4))
    key = f"cut_{step}"
    with NtupleWriter(cfg.run.output, meta, force=True, compression=cfg.run.compression) as w:
        for chunk in iter_chunks(cfg, detector=det):
            if key not in chunk.event:
                raise ConfigError(cfg.path, "scan.efficiency_step", step,
                                  "a cutflow step: one of " + ", ".join(
                                      k[4:] for k in chunk.event if k.startswith("cut_")))
            ct = chunk.event["llp_ct"]
            ok = chunk.event[key].astype(bool)
            g = mixture_density(ct, components)
            # a few c*tau rows at a time: the weight table stays below _WEIGHT_CELLS numbers
            step = max(1, _WEIGHT_CELLS // max(ct.size, 1))
            for a in range(0, len(ctaus), step):
                c = ctaus[a:a + step, None]
                with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
                    wt = exp_array(-ct[None, :] / c) / c / g[None, :]
                wt = np.where(np.isfinite(wt), wt, 0.0)
                sums[a:a + step, 0] += wt.sum(axis=1)
                sums[a:a + step, 1] += (wt * ok).sum(axis=1)
                w2 = wt * wt
                sums[a:a + step, 2] += w2.sum(axis=1)
                sums[a:a + step, 3] += (w2 * ok).sum(axis=1)
            w.write(chunk)
    return sums


def _eff(sums):
    """(eff, err, ess) from S_w, S_wp, S_w2, S_w2p (ratio-estimator error, Kish ESS)."""
    sw, swp, sw2, sw2p = sums
    if not (sw > 0 and math.isfinite(sw) and math.isfinite(sw2)):
        return float("nan"), float("nan"), 0.0
    eff = swp / sw
    var = ((1 - eff) ** 2 * sw2p + eff**2 * (sw2 - sw2p)) / sw**2
    return float(eff), float(math.sqrt(max(var, 0.0))), float(sw * sw / sw2)


def run_mass_task(task):
    """One mass of a scan (runs in a worker): reference sample, reweighting, direct points.

    Parameters
    ----------
    task : dict
        cfg (RunConfig), grid (Grid), mass_index, outdir.

    Returns
    -------
    list of dict: the index rows of this mass.
    """
    cfg, grid, i, outdir = task["cfg"], task["grid"], task["mass_index"], Path(task["outdir"])
    mass = grid.masses[i]
    comps = grid.mixture
    seed = point_seed(cfg.run.seed, mass)
    ref = outdir / "points" / _fname(mass)
    rcfg = _sample_cfg(cfg, mass, comps if len(comps) > 1 else comps[0], grid.events_per_mass,
                       seed, ref)
    sums = _generate(rcfg, grid.efficiency_step, grid.ctaus, comps)
    rows = []
    for j, ctau in enumerate(grid.ctaus):
        eff, err, ess = _eff(sums[j])
        row = {"mass_index": i, "ctau_index": j, "mass": mass, "ctau": ctau, "status": "done",
               "method": "reweight", "efficiency": eff, "error": err,
               "events": grid.events_per_mass, "ess": ess, "file": str(ref.relative_to(outdir)),
               "seed": str(seed)}
        if not ess >= grid.ess_min_fraction * grid.events_per_mass:
            dseed = point_seed(cfg.run.seed, mass, ctau)
            dfile = outdir / "points" / _fname(mass, ctau)
            dcfg = _sample_cfg(cfg, mass, ctau, grid.events_direct, dseed, dfile)
            eff, err, ess = _eff(_generate(dcfg, grid.efficiency_step, [ctau], [ctau])[0])
            row.update(method="direct", efficiency=eff, error=err, events=grid.events_direct,
                       ess=ess, file=str(dfile.relative_to(outdir)), seed=str(dseed))
        rows.append(row)
    return rows


def _config_diff(a, b):
    la, lb = a.splitlines(), b.splitlines()
    sec, out = "", []
    da, db = {}, {}
    for lines, d in ((la, da), (lb, db)):
        sec = ""
        for line in lines:
            if line.startswith("["):
                sec = line.strip("[]")
            elif "=" in line and not line.startswith("#"):
                k, v = line.split("=", 1)
                d[f"{sec}.{k.strip()}"] = v.strip()
    for k in sorted(set(da) | set(db)):
        if da.get(k) != db.get(k):
            out.append(f"{k}: {db.get(k, '(absent)')} here vs {da.get(k, '(absent)')} in the scan")
    return out


def _scan_identity(cfg):
    """Config text that defines a scan's results (not its output name or chunking)."""
    return _config.to_toml(replace(cfg, run=replace(cfg.run, output="", chunk_blocks=1)))


def run_scan(config, outdir, workers=None, scheduler=None, resume=False, progress=False,
             events_per_mass=None):
    """Run (or resume) a scan; returns the index dict.

    Writes the samples under ``points/``, ``index.json`` (:mod:`toymc.io.scanindex`) and
    ``efficiency_map.csv`` (:mod:`toymc.io.effmap`); ``toymc scan`` then draws
    ``efficiency_map.png`` (:func:`toymc.plots.scan.draw_map`).

    Parameters
    ----------
    config : str, Path or RunConfig
    outdir : str or Path
        Scan folder (created; must be writable).
    workers : int, optional
        Local worker processes (default: all cores); ignored with ``scheduler``.
    scheduler : str, optional
        Address of a dask.distributed scheduler.
    resume : bool
        Continue a scan in ``outdir`` made with the same config.
    """
    cfg = config if isinstance(config, _config.RunConfig) else _config.load(config)
    if events_per_mass is not None:
        cfg = replace(cfg, scan=dict(cfg.scan or {}, events_per_mass=events_per_mass))
    grid = grid_from_config(cfg)
    out = Path(outdir)
    # every check before anything is created: a refused resume leaves the folder as it was
    old = check_scan_dir(out, resume)
    ident = _scan_identity(cfg)
    if old is not None:
        if old["config"] != ident:
            diff = _config_diff(old["config"], ident)
            raise ConfigError(cfg.path, "scan", "--resume",
                              "refused: the scan in " + str(out) + " was made with another config ("
                              + "; ".join(diff[:5]) + ")")
        check_rows(old, grid, out / INDEX)
    # connect to a Dask scheduler before anything is written: an unreachable address
    # then leaves no scan folder behind
    from toymc.analysis.executors import executor

    early = executor(run_mass_task, 1, scheduler) if scheduler else None
    try:
        return _run_scan(cfg, grid, out, workers, scheduler, old, progress, early, ident)
    except BaseException:
        if early is not None:
            early[1]()
        raise


def _run_scan(cfg, grid, out, workers, scheduler, old, progress, early, ident):
    from toymc.analysis.executors import executor
    from toymc.io.effmap import write_map

    try:
        (out / "points").mkdir(parents=True, exist_ok=True)
        probe = out / f".write-test-{os.getpid()}"
        probe.write_text("")
        probe.unlink()
    except OSError as exc:
        raise OutputError(f"{out}: scan folder not writable ({exc.strerror or exc})") from None
    if old is not None:
        for stale in (out / "points").glob(".*.tmp"):
            stale.unlink()
    index = {"config": ident, "grid": grid.as_dict(), "toymc_seed": cfg.run.seed,
             "points": old["points"] if old else []}
    done = {r["mass_index"] for r in index["points"] if r["status"] == "done"}
    todo = [i for i in range(len(grid.masses)) if i not in done]
    index["points"] = [r for r in index["points"] if r["mass_index"] in done]
    # a new scan's first index is written without replacing: of two scans started into
    # the same folder at once, one stops here
    write_index(out / INDEX, index, force=old is not None)
    tasks = [{"cfg": cfg, "grid": grid, "mass_index": i, "outdir": str(out)} for i in todo]
    workers = workers or os.cpu_count() or 1
    run_all, close = early or executor(run_mass_task, min(workers, max(len(tasks), 1)),
                                       scheduler)
    bar = None
    if progress:
        from tqdm import tqdm

        bar = tqdm(total=len(grid.masses) * len(grid.ctaus), initial=len(done) * len(grid.ctaus),
                   unit="pt", desc="scan", leave=False)
    t0 = time.perf_counter()
    finished = False
    try:
        for rows in run_all(tasks):
            index["points"].extend(rows)
            index["points"].sort(key=lambda r: (r["mass_index"], r["ctau_index"]))
            write_index(out / INDEX, index)
            if bar is not None:
                bar.update(len(rows))
        finished = True
    finally:
        close(abort=not finished)  # on an error or a signal: stop the workers at once
        if bar is not None:
            bar.close()
    index["seconds"] = time.perf_counter() - t0
    # the map belongs to the scan: a resumed scan replaces it
    write_map(out / "efficiency_map.csv", index["points"], force=True)
    return index


def efficiency_map(index):
    """(masses, ctaus, eff[m, ct], err[m, ct]) arrays from an index."""
    g = index["grid"]
    eff = np.full((len(g["masses"]), len(g["ctaus"])), np.nan)
    err = eff.copy()
    for r in index["points"]:
        eff[r["mass_index"], r["ctau_index"]] = r["efficiency"]
        err[r["mass_index"], r["ctau_index"]] = r["error"]
    return np.array(g["masses"]), np.array(g["ctaus"]), eff, err
