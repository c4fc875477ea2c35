"""The schema: every section and key of a run config and of a geometry file.

:data:`SCHEMA` holds every section of a run config ([run], [beams], [production], [llp],
[model], [detector], [selection], [scan], [reach], [tuning], [backgrounds]) and
:data:`GEOMETRY_SCHEMA` every table of a geometry file, each key with its type, unit,
default, allowed range and meaning (:func:`toymc.config.ranges.spec`).  A dotted section
name is a table inside a section (``selection.profile``; ``backgrounds.<species>`` stands
for each species' table).  The validator (:func:`toymc.config.tables.check_table`), the
readers of each section and the README's config reference
(``python -m toymc.cli.readme README.md``) all take their keys from here.  Relations
between keys (r_min < r_max, radii increasing, ...) are checked by the section readers.

The run-config loader (``load``, ``loads``, ``from_dict``, ``to_toml``, ``RunConfig``, ...)
is :mod:`toymc.config.loader`.
"""

import math

from toymc.config import ranges as R
from toymc.detector.profile import PROFILE_KINDS
from toymc.physics import channels, processes
from toymc.physics.models.point import MODELS

__all__ = ("GEOMETRY_DOCS", "GEOMETRY_SCHEMA", "PROFILE_KINDS", "SCHEMA", "SECTION_DOCS",
           "SPECIES", "FOMS", "LIMIT_METHODS", "rows")

_AXIS, _EV, _SAMPLE = R.MAX_GRID_AXIS, R.MAX_EVENTS, R.MAX_SAMPLE_EVENTS
_k = R.spec

#: expected-limit methods of toymc.analysis.stats.expected_upper_limit (first: default);
#: the one list, which stats imports
LIMIT_METHODS = ("asimov", "mean", "median")


def _req(kind, doc, default=None, required=True, **kw):
    return R.spec(kind, default, doc, required=required, **kw)


#: vertex-finding efficiency profiles of [selection]
#: standard-model background species of [backgrounds]
SPECIES = ("ks", "kl", "lambda", "conversion", "combo")
#: figures of merit of [tuning]
FOMS = ("punzi", "s_over_sqrt_b", "upper_limit")

_RADIUS = dict(dim="length", lo=0.0, lo_open=True, hi=R.MAX_LENGTH)
_Z = dict(dim="length", lo=-R.MAX_LENGTH, hi=R.MAX_LENGTH)
_X0 = dict(lo=0.0, hi=R.MAX_X0, unit="x/X0")
_RES = dict(dim="length", lo=0.0, lo_open=True, hi=R.MAX_RESOLUTION)
_THETA = dict(dim="angle", lo=0.0, hi=math.pi)
_CUT = dict(dim="length", lo=0.0, hi=R.MAX_LENGTH, max_len=R.MAX_GRID_AXIS)
_MOM = dict(dim="energy", lo=0.0, lo_open=True, hi=R.MAX_MASS)
_SHAPE = dict(lo=0.0, lo_open=True, hi=100.0)

#: the {start, stop, points} form of tuning.r_min and tuning.r_max
_TUNING_RANGE = {
    "start": _k("float", None, "first cut", dim="length", lo=0.0, hi=R.MAX_LENGTH),
    "stop": _k("float", None, "last cut (> start)", dim="length", lo=0.0, hi=R.MAX_LENGTH),
    "points": _k("int", None, "number of cuts", lo=1, hi=R.MAX_GRID_AXIS),
}

#: section -> key -> specification (toymc.config.ranges.spec: kind, default, meaning, unit, range)
SCHEMA = {
    "run": {
        "events": _k("int", 100_000, "number of events to generate", lo=1, hi=_EV),
        "seed": _k("int", 1, "master seed; block i uses SeedSequence(seed, spawn_key=(i, 0))", lo=0,
                   hi=R.MAX_SEED),
        "chunk_blocks": _k("int", 1, "blocks (of 65536 events) per write chunk, held in memory "
                           "together; does not change the events", lo=1, hi=R.MAX_CHUNK_BLOCKS),
        "output": _k("str", "toymc.root", "output ROOT file"),
        "decay_weights": _k("bool", False, "with a geometry: also write w_fold, each event's fold "
                            "probability (decay inside the window x profile; slower)"),
        "compression": _k("str", "lz4", "ROOT basket compression: lz4 (fast, ROOT 6), zlib (every "
                          "ROOT version, slow), zstd (small, ROOT >= 6.20) or none",
                          choices=("lz4", "zlib", "zstd", "none")),
    },
    "beams": {
        "e_minus": _k("float", None, "e- beam energy (travels towards +z)", dim="energy",
                      lo=R.MIN_BEAM_ENERGY, hi=R.MAX_BEAM_ENERGY, required=True),
        "e_plus": _k("float", None, "e+ beam energy (travels towards -z)", dim="energy",
                     lo=R.MIN_BEAM_ENERGY, hi=R.MAX_BEAM_ENERGY, required=True),
        "crossing_angle": _k("float", 0.0, "full crossing angle in the xz plane", dim="angle",
                             lo=0, hi=0.5),
        "sigma_x": _k("float", 0.0, "luminous-region width in x", dim="length", lo=0,
                      hi=R.MAX_SPREAD),
        "sigma_y": _k("float", 0.0, "luminous-region width in y", dim="length", lo=0,
                      hi=R.MAX_SPREAD),
        "sigma_z": _k("float", 0.0, "luminous-region length in z", dim="length", lo=0,
                      hi=R.MAX_SPREAD),
    },
    "production": {
        "process": _k("str", None, "production process", choices=processes.CHOICES,
                      required=True),
        "recoil": _k("str", "K", "b_meson: B -> K X or B -> K*(892) X", choices=("K", "K*")),
        "charged_fraction": _k("float", 0.514, "b_meson: fraction of Upsilon(4S) -> B+ B- "
                               "(PDG listing, from memory)", lo=0, hi=1),
        "sigma_bb": _k("float", 1.1e6, "b_meson: sigma(e+e- -> Upsilon(4S) -> B Bbar) "
                       "(about 1.1 nb, common practice, from memory)", dim="area", lo=0,
                       hi=R.MAX_CROSS_SECTION),
        "photon_cos_min": _k("float", -0.95, "radiative: lowest cos(theta) of the photon in "
                             "the collision frame", lo=-1, hi=1, lo_open=True, hi_open=True),
        "photon_cos_max": _k("float", 0.95, "radiative: highest cos(theta) of the photon",
                             lo=-1, hi=1, lo_open=True, hi_open=True),
    },
    "llp": {
        "mass": _k("float", None, "LLP mass", dim="energy", lo=0, lo_open=True, hi=R.MAX_MASS,
                   required=True),
        "ctau": _k("float", None, "proper decay length c*tau (required unless [model] gives it)",
                   dim="length", lo=0, lo_open=True, hi=R.MAX_CTAU),
        "ctau_mixture": _k("list", None, "c*tau values of an equal-weight mixture of exponential "
                           "decay-time laws (replaces ctau; for reweighting across a range)",
                           dim="length", lo=0, lo_open=True, hi=R.MAX_CTAU,
                           max_len=R.MAX_MIXTURE),
        "channel": _k("str", None, "decay channel", choices=channels.CHOICES, required=True),
        "matrix_element": _k("str", "flat", "three-body channels: flat phase space or the "
                             "leading-order chiral weight (s - m_pi^2)^2 of a -> pi+ pi- pi0",
                             choices=("flat", "chiral")),
        "pdg": _k("int", 0, "PDG id written for the LLP; 0 picks 54 (spin 0) or 55 (spin 1), "
                  "the hidden-sector mediator codes of the PDG numbering scheme (from memory)",
                  lo=-R.MAX_PDG, hi=R.MAX_PDG),
    },
    "model": {
        "name": _k("str", None, "physics model giving c*tau, branching fractions and the "
                   "production rate (toymc.physics.models.point)", choices=MODELS, required=True),
        "coupling": _k("float", None, "main coupling: g_agg [GeV^-1] (alp_photon), 1/f [GeV^-1] "
                       "(alp_gluon), eps (dark_photon), g (gauge models)", lo=0, lo_open=True,
                       hi=R.MAX_COUPLING, required=True),
        "kinetic_mixing": _k("float", None, "vector models: kinetic mixing eps added to the "
                             "gauge couplings (default 0; one-loop value for lmu_minus_ltau)",
                             lo=-1, hi=1),
        "g_bs": _k("float", None, "b_meson: flavour-violating b -> s coupling (toymc.physics.models."
                   "b_to_k); or give br_production; BR(B -> K(*) X) must come out <= 1",
                   lo=0, lo_open=True, hi=1e-3, unit="GeV^-1"),
        "br_production": _k("float", None, "b_meson: BR(B -> K(*) X) given directly", lo=0, hi=1),
        "charges": _k("table", None, "vector models: fermion -> charge (e, mu, tau, nu_e, nu_mu, "
                      "nu_tau, u, d, s, c, b; each from -%g to %g), replacing the model's "
                      "(custom_vector: all)" % (R.MAX_CHARGE, R.MAX_CHARGE)),
    },
    "detector": {
        "geometry": _k("str", "", "geometry file (relative to the config file); empty: truth only"),
    },
    "selection": {
        "r_min": _req("float", "fiducial window of the reconstructed vertex: lowest radius",
                      dim="length", lo=0.0, hi=R.MAX_LENGTH),
        "r_max": _req("float", "highest radius (> r_min, inside the tracker)", dim="length",
                      lo=0.0, lo_open=True, hi=R.MAX_LENGTH),
        "z_min": _req("float", "lowest z (inside the tracker)", **_Z),
        "z_max": _req("float", "highest z (> z_min, inside the tracker)", **_Z),
        "profile": _req("table", "vertex-finding efficiency: {kind, eps0, points}",
                        default={"kind": "flat", "eps0": 1.0}, required=False),
        "min_hits": _req("int", "measured hits of a found track (at most the geometry's "
                         "measuring layers)", default=6, required=False, lo=3, hi=R.MAX_LAYERS),
        "min_pt": _req("float", "transverse-momentum threshold of a found track", default=0.05,
                       required=False, dim="energy", lo=0.0, hi=R.MAX_MASS),
        "photon_min_e": _req("float", "cluster energy threshold", default=0.03, required=False,
                             dim="energy", lo=0.0, hi=R.MAX_MASS),
        "mass_window": _req("list", "optional [low, high] window on rec_m", required=False,
                            dim="energy", lo=0.0, hi=R.MAX_MASS, min_len=2, max_len=2),
        "full_hits": _req("int", "hits profile only: hits at which a track is fully efficient",
                          default=20, required=False, lo=1, hi=R.MAX_LAYERS),
    },
    "selection.profile": {
        "kind": _req("str", "flat; linear (eps0 at r_min to 0 at r_max); tabulated (points); "
                     "hits (from the tracks' hit counts)", default="flat", required=False,
                     choices=PROFILE_KINDS),
        "eps0": _req("float", "overall scale of the profile", default=1.0, required=False,
                     lo=0.0, hi=1.0),
        "points": _req("list", "tabulated only: [[r, eps], ...], r increasing (cm), eps in "
                       "[0, 1]", required=False, min_len=2, max_len=R.MAX_GRID_AXIS),
    },
    "scan": {
        "masses": _k("list", None, "explicit LLP masses of the grid, increasing; or "
                     "mass_min/max/points", dim="energy", lo=0, lo_open=True, hi=R.MAX_MASS,
                     min_len=2, max_len=_AXIS),
        "mass_min": _k("float", None, "lowest grid mass", dim="energy", lo=0, lo_open=True,
                       hi=R.MAX_MASS),
        "mass_max": _k("float", None, "highest grid mass", dim="energy", lo=0, lo_open=True,
                       hi=R.MAX_MASS),
        "mass_points": _k("int", 10, "number of grid masses (linear spacing; with mass_min/max)",
                          lo=2, hi=_AXIS),
        "ctau_min": _k("float", 0.1, "smallest grid c*tau (log spacing)", dim="length", lo=0,
                       lo_open=True, hi=R.MAX_CTAU),
        "ctau_max": _k("float", 1e4, "largest grid c*tau", dim="length", lo=0, lo_open=True,
                       hi=R.MAX_CTAU),
        "ctau_points": _k("int", 20, "number of grid c*tau values (masses x c*tau values <= "
                          "10^6)", lo=2, hi=_AXIS),
        "events_per_mass": _k("int", 100_000, "events of the reference sample of each mass",
                              lo=1, hi=_EV),
        "events_direct": _k("int", 0, "events of a directly generated point (0: events_per_mass)",
                            lo=0, hi=_EV),
        "mixture_ratio": _k("float", 10.0, "largest ratio of neighbouring c*tau values in the "
                            "exponential mixture of each mass's sample (at most %d components)"
                            % R.MAX_MIXTURE, lo=1, lo_open=True, hi=1e6),
        "ess_min_fraction": _k("float", 0.05, "reweight when ESS/N >= this, else generate "
                               "directly", lo=0, hi=1),
        "efficiency_step": _k("str", "mass", "cutflow step whose pass flag defines the "
                              "efficiency (column cut_<step>)"),
    },
    "reach": {
        "masses": _k("list", None, "explicit LLP masses of the reach grid (increasing); or "
                     "mass_min/mass_max/mass_points", dim="energy", lo=0, lo_open=True,
                     hi=R.MAX_MASS, min_len=2, max_len=_AXIS),
        "mass_min": _k("float", None, "lowest grid mass", dim="energy", lo=0, lo_open=True,
                       hi=R.MAX_MASS),
        "mass_max": _k("float", None, "highest grid mass", dim="energy", lo=0, lo_open=True,
                       hi=R.MAX_MASS),
        "mass_points": _k("int", 20, "number of grid masses (with mass_min/mass_max)", lo=2,
                          hi=_AXIS),
        "mass_spacing": _k("str", "log", "spacing of the grid masses (with mass_min/mass_max)",
                           choices=("log", "linear")),
        "couplings": _k("list", None, "explicit grid couplings (model's unit, increasing); or "
                        "coupling_min/coupling_max/coupling_points", lo=0, lo_open=True,
                        hi=R.MAX_COUPLING, min_len=2, max_len=_AXIS),
        "coupling_min": _k("float", None, "smallest grid coupling (model's unit: GeV^-1 for ALPs, "
                           "eps for dark_photon)", lo=0, lo_open=True, hi=R.MAX_COUPLING),
        "coupling_max": _k("float", None, "largest grid coupling", lo=0, lo_open=True,
                           hi=R.MAX_COUPLING),
        "coupling_points": _k("int", 40, "number of grid couplings (log spacing; masses x "
                              "couplings <= 10^6)", lo=2, hi=_AXIS),
        "lumi": _k("float", None, "integrated luminosity (or a string such as '1 ab-1')",
                   dim="inverse_area", lo=0, lo_open=True, hi=R.MAX_LUMI, required=True),
        "background": _k("float", 0.0, "expected background events after the selection", lo=0,
                         hi=R.MAX_BACKGROUND),
        "cl": _k("float", 0.95, "confidence level of the upper limit", lo=0, hi=1, lo_open=True,
                 hi_open=True),
        "background_uncertainty": _k("float", 0.0, "relative uncertainty of the background "
                                     "(log-normal; 0: known)", lo=0, hi=10),
        "limit": _k("str", "asimov", "expected CLs limit: for the count n = b (asimov; smooth "
                    "and increasing in b), the Poisson-weighted mean, or at the median count "
                    "(stepped in b)", choices=LIMIT_METHODS),
        "efficiency": _k("str", "fold", "source of the signal efficiency",
                         choices=("fold", "mc", "map")),
        "map": _k("str", "", "efficiency_map.csv of a scan (relative to the config file); "
                  "efficiency = 'map' only"),
        "events_per_mass": _k("int", 20_000, "events per sample of each mass (fold, mc; held in "
                              "memory)", lo=2, hi=_SAMPLE),
        "reco_factor": _k("float", 1.0, "fold: constant reconstruction efficiency multiplying the "
                          "folded efficiency", lo=0, hi=1, lo_open=True),
        "efficiency_step": _k("str", "mass", "mc: cutflow step whose pass flag defines the "
                              "efficiency (column cut_<step>)"),
        "mc_ctau_min": _k("float", 1e-3, "mc: smallest reference c*tau of the ladder",
                          dim="length", lo=0, lo_open=True, hi=R.MAX_CTAU),
        "mc_ctau_max": _k("float", 1e6, "mc: largest reference c*tau of the ladder", dim="length",
                          lo=0, lo_open=True, hi=R.MAX_CTAU),
        "ess_min_fraction": _k("float", 0.05, "mc: eps = 0 (status low_ess) where ESS/N is below "
                               "this", lo=0, hi=1),
    },
    "tuning": {
        "masses": _k("list", None, "signal masses", dim="energy", lo=0.0, lo_open=True,
                     hi=R.MAX_MASS, max_len=R.MAX_GRID_AXIS, required=True),
        "r_min": _k("list", None, "lower vertex-radius cuts: a list or {start, stop, points} "
                    "(linear, both ends included)", required=True, **_CUT),
        "r_max": _k("list", None, "upper vertex-radius cuts: a list or {start, stop, points}",
                    required=True, **_CUT),
        "windows": _k("list", [1.0, 1.5, 2.0, 2.5, 3.0], "mass-window half-widths", lo=0.0,
                      lo_open=True, hi=100.0, max_len=R.MAX_GRID_AXIS, unit="units of sigma_m"),
        "fom": _k("str", "punzi", "figure of merit", choices=FOMS),
        "punzi_a": _k("float", 3.0, "punzi: significance a (Gaussian sigmas)", lo=0.0,
                      lo_open=True, hi=20.0),
        "cl": _k("float", 0.9, "upper_limit: confidence level of the expected CLs limit (count "
                 "n = b)", lo=0.0, hi=1.0, lo_open=True, hi_open=True),
        "background_uncertainty": _k("float", 0.0, "upper_limit: relative uncertainty of the "
                                     "background (log-normal; 0: known)", lo=0, hi=10),
        "signal_sigma": _k("float", None, "s_over_sqrt_b: signal cross-section times BR "
                           "(required there)", dim="area", lo=0.0, lo_open=True,
                           hi=R.MAX_CROSS_SECTION),
        "lumi": _k("float", None, "integrated luminosity", dim="inverse_area", lo=0.0,
                   lo_open=True, hi=R.MAX_LUMI, required=True),
        "signal_events": _k("int", 100_000, "signal events per mass", lo=1, hi=_SAMPLE),
        "background_events": _k("int", 200_000, "events per background species (or a table "
                                "species -> events)", lo=1, hi=_SAMPLE),
        "min_mc_events": _k("int", 10, "flag low_mc below this effective number of background "
                            "MC events", lo=1, hi=_SAMPLE),
        "seed": _k("int", None, "seed of the tuning samples (default: run.seed)", lo=0,
                   hi=R.MAX_SEED),
        "ks_veto": _k("float", 0.010, "half-width of the K_S veto on m_pipi", dim="energy",
                      lo=0.0, hi=1.0),
        "lambda_veto": _k("float", 0.004, "half-width of the Lambda veto on m_ppi",
                          dim="energy", lo=0.0, hi=1.0),
        "output": _k("str", None, "output file stem (default: tune_<config stem>)"),
    },
    "tuning.r_min": _TUNING_RANGE,
    "tuning.r_max": _TUNING_RANGE,
    "backgrounds": {
        "sigma_ref": _k("float", None, "reference cross-section the per-event yields count in",
                        dim="area", lo=0.0, lo_open=True, hi=R.MAX_CROSS_SECTION),
    },
    "backgrounds.<species>": {
        "yield": _k("float", None, "entries per reference event (or sigma)", lo=0.0,
                    lo_open=True, hi=1000.0),
        "sigma": _k("float", None, "production cross-section (or yield)", dim="area", lo=0.0,
                    lo_open=True, hi=R.MAX_CROSS_SECTION),
        "br": _k("float", None, "visible branching fraction (default: PDG value)", lo=0.0,
                 lo_open=True, hi=1.0),
        "p_mean": _k("float", None, "mean momentum in the collision frame", required=True,
                     **_MOM),
        "p_shape": _k("float", 2.0, "gamma-distribution shape of the momentum", **_SHAPE),
        "cos2": _k("float", 0.0, "a of dN/dcos(theta) ~ 1 + a cos^2(theta)", lo=-1.0,
                   hi=100.0),
        "force_decay": _k("float", 0.0, "lab length inside which the decay is forced (0: not "
                          "forced; not for conversion)", dim="length", lo=0.0, hi=R.MAX_LENGTH),
        "anti_fraction": _k("float", 0.5, "lambda only: fraction of anti-Lambda", lo=0.0,
                            hi=1.0),
        "vertex": _k("str", "ks", "combo only: source of the two-track vertex",
                     choices=("ks", "lambda")),
        "pi0_p_mean": _k("float", 0.5, "combo only: mean momentum of the prompt pi0", **_MOM),
        "pi0_p_shape": _k("float", 2.0, "combo only: its gamma shape", **_SHAPE),
    },
}

#: geometry file: table -> key -> specification ("" is the top level, "vertex_layers[]" each
#: [[vertex_layers]] table)
GEOMETRY_SCHEMA = {
    "": {
        "name": _req("str", "detector name (non-empty)"),
        "field": _req("float", "solenoid field along z", dim="field", lo=0.0, lo_open=True,
                      hi=R.MAX_FIELD),
    },
    "beampipe": {
        "radius": _req("float", "beam-pipe radius", **_RADIUS),
        "thickness": _req("float", "beam-pipe material", **_X0),
    },
    "vertex_layers[]": {
        "radius": _req("float", "layer radius, above the beam pipe and the previous layer",
                       **_RADIUS),
        "z_min": _req("float", "layer z start", **_Z),
        "z_max": _req("float", "layer z end (> z_min)", **_Z),
        "resolution": _req("float", "point resolution (r-phi and z)", **_RES),
        "thickness": _req("float", "layer material", **_X0),
    },
    "chamber": {
        "r_inner": _req("float", "inner wall radius, above the last vertex layer", **_RADIUS),
        "r_outer": _req("float", "outer wall radius", **_RADIUS),
        "z_min": _req("float", "z start (< 0)", **_Z),
        "z_max": _req("float", "z end (> 0)", **_Z),
        "radii": _req("list", "sense-layer radii, increasing, between the walls; or n_layers, "
                      "r_first, r_last", required=False, max_len=R.MAX_LAYERS, **_RADIUS),
        "n_layers": _req("int", "number of equally spaced sense layers", required=False, lo=1,
                         hi=R.MAX_LAYERS),
        "r_first": _req("float", "first sense-layer radius (with n_layers)", required=False,
                        **_RADIUS),
        "r_last": _req("float", "last sense-layer radius (with n_layers)", required=False,
                       **_RADIUS),
        "resolution": _req("float", "hit resolution", **_RES),
        "layer_thickness": _req("float", "material per sense layer", **_X0),
        "inner_wall": _req("float", "inner wall material", **_X0),
        "outer_wall": _req("float", "outer wall material", **_X0),
    },
    "calorimeter": {
        "radius": _req("float", "barrel face radius, above the chamber", **_RADIUS),
        "z_min": _req("float", "barrel z start (< 0)", **_Z),
        "z_max": _req("float", "barrel z end (> 0)", **_Z),
        "stochastic": _req("float", "a of sigma_E/E = a/sqrt(E) (+) b/E (+) c", lo=0.0, hi=1.0,
                           unit="GeV^1/2"),
        "noise": _req("float", "b (noise term)", dim="energy", lo=0.0, hi=1.0),
        "constant": _req("float", "c (constant term)", lo=0.0, hi=1.0),
        "position_resolution": _req("float", "cluster position resolution per coordinate",
                                    dim="length", lo=0.0, hi=10.0),
    },
    "calorimeter.forward": {
        "z": _req("float", "forward endcap plane (> chamber z_max)", **_Z),
        "r_inner": _req("float", "forward endcap inner radius", dim="length", lo=0.0,
                        hi=R.MAX_LENGTH),
        "r_outer": _req("float", "forward endcap outer radius", **_RADIUS),
    },
    "calorimeter.backward": {
        "z": _req("float", "backward endcap plane (< chamber z_min)", **_Z),
        "r_inner": _req("float", "backward endcap inner radius", dim="length", lo=0.0,
                        hi=R.MAX_LENGTH),
        "r_outer": _req("float", "backward endcap outer radius", **_RADIUS),
    },
    "acceptance": {
        "tracker_theta_min": _req("float", "tracker polar-angle acceptance start", default=0.0,
                                  required=False, **_THETA),
        "tracker_theta_max": _req("float", "tracker acceptance end", default=math.pi,
                                  required=False, **_THETA),
        "calo_theta_min": _req("float", "calorimeter acceptance start", default=0.0,
                               required=False, **_THETA),
        "calo_theta_max": _req("float", "calorimeter acceptance end", default=math.pi,
                               required=False, **_THETA),
    },
}

#: what each section of a run config is for (the README's config reference)
SECTION_DOCS = {
    "run": "events, seed and output of `toymc generate`",
    "beams": "the two beams and the luminous region",
    "production": "how the LLP is made",
    "llp": "the long-lived particle and its decay",
    "model": "optional: a physics model giving c*tau, branching fractions and the production "
             "rate from a coupling (replaces `llp.ctau`)",
    "detector": "the geometry file; without one the sample is truth only",
    "selection": "reconstruction and selection cuts (needs `detector.geometry`)",
    "selection.profile": "the vertex-finding efficiency profile, an inline table "
                         "`profile = {kind = ..., ...}`",
    "scan": "the mass x c*tau grid of `toymc scan`",
    "reach": "the (mass, coupling) grid and the limit of `toymc reach`",
    "tuning": "the radial and mass-window grid of `toymc tune-cuts` (needs [backgrounds])",
    "tuning.r_min": "`tuning.r_min` given as a range `{start, stop, points}` (linear, both "
                    "ends included)",
    "tuning.r_max": "`tuning.r_max` given as a range `{start, stop, points}`",
    "backgrounds": "standard-model long-lived backgrounds of `toymc tune-cuts`: `sigma_ref` "
                   "and one table per species",
    "backgrounds.<species>": "one table per species, `<species>` one of "
                             + ", ".join(SPECIES) + "; each needs `yield` or `sigma`",
}

#: what each table of a geometry file is for
GEOMETRY_DOCS = {
    "": "the detector's name and its solenoid field (keys before any table)",
    "beampipe": "the beam pipe, a passive cylinder",
    "vertex_layers[]": "each `[[vertex_layers]]` table: a thin measuring cylinder, inside out",
    "chamber": "the drift chamber: walls, z range (may be asymmetric) and sense layers",
    "calorimeter": "the calorimeter face: barrel and resolution "
                   "sigma_E/E = a/sqrt(E) (+) b/E (+) c",
    "calorimeter.forward": "the forward endcap disk",
    "calorimeter.backward": "the backward endcap disk",
    "acceptance": "optional: polar-angle acceptance of the tracker and the calorimeter",
}


def rows(schema):
    """(dotted key, spec) of every key of `schema` (SCHEMA or GEOMETRY_SCHEMA), in order."""
    for table, keys in schema.items():
        for key, s in keys.items():
            yield (f"{table}.{key}" if table else key), s
