"""The figures of ``toymc validate``, from the data of the checks
(:mod:`toymc.analysis.validation_checks`)."""

from toymc.plots.figures import compare_pull_plot as _compare_pull_plot
from toymc.plots.figures import histogram_plot as _histogram_plot

__all__ = ("draw", "draw_check")


def _fold(d, path):
    _compare_pull_plot(d["ctau"], [("MC: true decay point in window, profile accept", d["mc"],
                                   d["mc_err"])],
                      (f"analytic fold ({d['n_fold']} events)", d["fold"], d["fold_err"]),
                      d["pulls"], path, r"proper decay length $c\tau$ [cm]",
                      "efficiency (window x profile)",
                      f"{d['label']}: MC ({d['n_mc']} events per point) vs fold",
                      z_limit=d["z_limit"])


def _reweight(d, path):
    _compare_pull_plot(
        d["ctau"],
        [(f"reweighted from $c\\tau_0$ = {d['ctau0']:g} cm ({d['n_ref']} events)",
          d["reweighted"], d["reweighted_err"]),
         (f"generated directly ({d['n_direct']} events each)", d["direct"], d["direct_err"])],
        None, d["pulls"], path, r"target proper decay length $c\tau$ [cm]",
        "efficiency (full selection, cut_mass)",
        f"{d['label']}: lifetime reweighting vs direct generation\n"
        f"(pulls only where ESS >= {d['ess_fraction']:g} N and $c\\tau < 2 c\\tau_0$)")


def _radial(d, path):
    _histogram_plot(d["edges"], [
        {"label": "truth x profile: sum eps(true r) over candidates in the window",
         "counts": d["predicted"]},
        {"label": "found vertices (cut_vertex), reconstructed r", "counts": d["found"],
         "errors": d["found_err"]}],
        path, "transverse vertex radius r [cm]", "vertices per bin",
        f"{d['label']}, $c\\tau$ = {d['ctau0']:g} cm: radial distribution of found vertices",
        pulls=d["pulls"])


def _mass(d, path):
    edges = d["edges"]
    series = [{"label": f"selected events (cut_mass): median {d['median']:.4f} GeV, "
                        f"1.4826 MAD {1e3 * d['width']:.1f} MeV",
               "counts": d["counts"]}]
    _histogram_plot(edges, series, path, "reconstructed mass rec_m [GeV]",
                   f"events per {round(1e3 * (edges[1] - edges[0]), 9):g} MeV",
                   f"{d['label']}, $c\\tau$ = {d['ctau0']:g} cm: reconstructed mass "
                   f"(true {d['m_true']:g} GeV)")


def _diphoton(d, path):
    _compare_pull_plot(d["radius"], [("reconstructed: mean rec_m / m - 1", d["bias"],
                                     d["bias_err"])],
                      ("prediction: true energies, IP-pointing to true impact point",
                       d["geo"], d["geo_err"]),
                      d["pulls"], path, "true transverse decay radius [cm]",
                      "relative mass bias (mean m_reco / m_true - 1)",
                      f"{d['label']}: di-photon mass bias vs decay radius "
                      f"(pull of mean rec_m - m_geo)", logx=False)


_KINDS = {"fold": _fold, "reweight": _reweight, "radial": _radial, "mass": _mass,
          "diphoton": _diphoton}


def draw(kind, data, path):
    """Draw one figure of a check: `kind` is the check's name, `data` its figure data."""
    _KINDS[kind](data, path)


def draw_check(res, folder):
    """Draw every figure of one check's result into `folder`; returns the paths."""
    paths = []
    for name, kind, data in res["figures"]:
        draw(kind, data, folder / name)
        paths.append(folder / name)
    return paths

