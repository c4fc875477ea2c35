"""``toymc validate``: the generator and detector checked against the analytic fold and
against themselves, with plots and a markdown summary.

This module holds the cases, the statistics of the pass criteria, the driver of the
checks (:func:`run_checks`, which writes nothing) and the text of ``summary.md``
(:func:`summary`); the checks are in :mod:`toymc.analysis.validation_checks`, the mass
predictions in :mod:`toymc.analysis.mass_predictions`, the figures in
:mod:`toymc.plots.validation`, and the command that writes the files in
:mod:`toymc.cli.validate`.

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
    sample size (ESS) is reported per point; below ``ESS_FRACTION`` (:mod:`toymc.analysis.validation_checks`) of the
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
   two-sided threshold ``z_B = Phi^-1(1 - ALPHA/(2 N))``
   (:mod:`toymc.analysis.pulls`),

with ``ALPHA = 0.001``.  Each criterion falsely fails a correct program with
probability at most ALPHA (Bonferroni's inequality for the second), so a
correct program fails a given check with probability below 0.002.  (Normal
quantiles and chi-square tails from ``scipy.stats``; pull and chi-square
conventions as in the PDG review "Statistics".)
"""

import time as _time
from pathlib import Path as _Path

from toymc.analysis import validation_checks as _checks
from toymc.analysis.pulls import ALPHA as _ALPHA

__all__ = (
    "CASES",
    "output_names",
    "run_checks",
    "settings",
    "summary",
)

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


# ----------------------------------------------------------------------------- driver


def _fmt_check(name, res, what):
    state = "PASS" if res["passed"] else "FAIL"
    return (f"| {name} | **{state}** | {what} | {res['n']} | {res['chi2']:.1f} / {res['ndf']} | "
            f"{res['p_chi2']:.3g} | {res['max_pull']:+.2f} | {res['z_limit']:.2f} |")


def summary(results, st, mode, seconds, seed):
    """The text of ``summary.md``: one line per check, the reweighting points, the mass
    resolutions, the di-photon bias and the figure names."""
    lines = [
        "# toymc validation summary", "",
        (f"Mode: {mode}; seed {seed}; wall time {seconds:.0f} s.  Detector: geometries/demo.toml "
        "with the [selection] of the demo configs."), "",
        (f"Criteria per check (ALPHA = {_ALPHA}): chi-square p-value of the Gaussian-regime "
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
        lines += [f"- {k}: " + ", ".join(f"`{_Path(p).name}`" for p in res["pngs"])]
    return "\n".join(lines) + "\n"


def output_names(cases=CASES):
    """The files ``toymc validate`` writes into its folder."""
    names = []
    for case in cases:
        gg = case[0].startswith("alp_gg")
        names += [f"fold_{case[0]}.png", f"reweight_{case[0]}.png", f"mass_{case[0]}.png"]
        names.append(f"diphoton_bias_{case[0]}.png" if gg else f"radial_{case[0]}.png")
    return names + ["summary.md"]


def settings(quick=False, events=None):
    """Sample sizes and c*tau points of a mode (``quick`` or full); `events` sets the
    reference samples' size and scales the others with it (at least 1000 each)."""
    st = dict(_SETTINGS["quick" if quick else "full"])
    if events is not None:
        scale = int(events) / st["n_ref"]
        for k in ("n_mc", "n_fold", "n_ref", "n_direct"):
            st[k] = max(1000, int(st[k] * scale))
    return st


def run_checks(st, seed, progress=None, t0=None):
    """Run every check with the settings `st` (:func:`settings`) and the master `seed`.

    Parameters
    ----------
    progress : callable or None
        Called with one line per finished step, prefixed with the time since `t0`.
    t0 : float, optional
        ``time.perf_counter()`` at the start (default: now).

    Returns
    -------
    dict
        Check name -> result (:func:`toymc.analysis.pulls.assess` with rows, figure names and figure data).
    """
    V = _checks
    t0 = _time.perf_counter() if t0 is None else t0

    def log(msg):
        if progress is not None:
            progress(f"[{_time.perf_counter() - t0:6.1f} s] {msg}")

    results = {}
    results["fold"] = V.check_fold(CASES, st, seed, log)
    refs = {}
    for ci, case in enumerate(CASES):
        refs[case[0]] = V.reco_block(V.case_config(case, st["ctau0"]), st["n_ref"],
                                     V.seed_of(seed, 4, ci))
    log("reference samples generated")
    results["reweight"] = V.check_reweight(CASES, st, seed, log, refs)
    results["radial"] = V.check_radial(CASES, st, log, refs)
    results["mass"] = V.check_mass(CASES, st, seed, log, refs)
    results["diphoton"] = V.check_diphoton(CASES, st, log, refs)
    return results
