"""The [backgrounds] section: standard-model long-lived background species for tune-cuts.

Keys, units and ranges are in ``SCHEMA["backgrounds"]`` and
``SCHEMA["backgrounds.<species>"]`` (:mod:`toymc.config.schema`); the generator of each
species is :mod:`toymc.engine.backgrounds`; its kernels and formulas, with their sources, are in
:mod:`toymc.physics.backgrounds`.
"""

from dataclasses import dataclass, field

from toymc.config.schema import SCHEMA, SPECIES
from toymc.config.tables import check_table
from toymc.errors import ConfigError
from toymc.physics.constants import BR_PI0_GG

__all__ = ("BACKGROUND_SCHEMA", "DEFAULT_BR", "SPECIES", "BackgroundConfig",
           "Species", "parse_backgrounds")

#: visible branching fractions (PDG listing, from memory; `particle` has none):
#: K_S -> pi+ pi-, K_L -> pi+ pi- pi0, Lambda -> p pi-; conversions: 1
DEFAULT_BR = {"ks": 0.692, "kl": 0.1254, "lambda": 0.639, "conversion": 1.0}

#: [backgrounds] as one flat table: "sigma_ref" and "<species>.key" -> specification
BACKGROUND_SCHEMA = dict(SCHEMA["backgrounds"], **{
    f"<species>.{k}": s for k, s in SCHEMA["backgrounds.<species>"].items()})


@dataclass(frozen=True)
class Species:
    """One background species, internal units (GeV, cm, fb).

    Attributes
    ----------
    name : str
        One of :data:`SPECIES`.
    sigma : float
        Effective production cross-section sigma_ref * yield (fb), before BR.
    br : float
        Visible branching fraction.
    p_mean, p_shape : float
        Gamma-distribution mean (GeV) and shape of the collision-frame momentum.
    cos2 : float
        a of dN/dcos(theta) ~ 1 + a cos^2(theta), a >= -1.
    force_decay : float
        Lab length (cm) inside which the decay is forced; 0: not forced.
    anti_fraction : float
        lambda: fraction of anti-Lambda.
    vertex : str
        combo: "ks" or "lambda", the source of the two-track vertex.
    pi0_p_mean, pi0_p_shape : float
        combo: spectrum of the independent prompt pi0.
    """

    name: str
    sigma: float
    br: float
    p_mean: float
    p_shape: float = 2.0
    cos2: float = 0.0
    force_decay: float = 0.0
    anti_fraction: float = 0.5
    vertex: str = "ks"
    pi0_p_mean: float = 0.5
    pi0_p_shape: float = 2.0


@dataclass(frozen=True)
class BackgroundConfig:
    """The [backgrounds] section: species by name."""

    sigma_ref: float
    species: dict = field(default_factory=dict)


def _fail(path, key, value, allowed):
    raise ConfigError(path, key, value, allowed)


def parse_backgrounds(raw, path=None):
    """Validate the raw [backgrounds] table of a TOML document.

    Parameters
    ----------
    raw : dict
        ``sigma_ref`` (area, reference cross-section of the events the
        yields are counted in) and one sub-table per species in
        :data:`SPECIES` with keys ``yield`` (per reference event) or
        ``sigma`` (area), ``br``, ``p_mean`` (energy), ``p_shape``, ``cos2``,
        ``force_decay`` (length), ``anti_fraction`` (lambda), ``vertex``,
        ``pi0_p_mean``, ``pi0_p_shape`` (combo).
    path : str, optional
        File name for error messages.

    Returns
    -------
    BackgroundConfig

    Raises
    ------
    ConfigError
        Unknown keys or species, missing yields, values out of range.
    """
    pre = "backgrounds."
    sigma_ref = check_table(path, "backgrounds", raw, SCHEMA["backgrounds"],
                            extra=SPECIES)["sigma_ref"]
    out = {}
    for name in SPECIES:
        if name not in raw:
            continue
        t = raw[name]
        sp = f"{pre}{name}."
        v = check_table(path, pre + name, t, SCHEMA["backgrounds.<species>"])
        if ("yield" in t) == ("sigma" in t):
            _fail(path, sp + "yield", t.get("yield"),
                  "give exactly one of yield (per reference event, needs backgrounds.sigma_ref)"
                  " or sigma (a cross-section)")
        if "yield" in t:
            if sigma_ref is None:
                _fail(path, pre + "sigma_ref", None, f"required by {sp}yield: a cross-section")
            sigma = sigma_ref * v["yield"]
        else:
            sigma = v["sigma"]
        vertex = v["vertex"] if name == "combo" else "ks"
        if name != "combo":
            for k in ("vertex", "pi0_p_mean", "pi0_p_shape"):
                if k in t:
                    _fail(path, sp + k, t[k], "only for backgrounds.combo")
        if name != "lambda" and "anti_fraction" in t:
            _fail(path, sp + "anti_fraction", t["anti_fraction"], "only for backgrounds.lambda")
        if name == "conversion" and "force_decay" in t:
            _fail(path, sp + "force_decay", t["force_decay"],
                  "not for conversions (always forced in the material)")
        if v["br"] is None:
            # the generated final state: pi0 -> gamma gamma is forced (kl, combo)
            v["br"] = (DEFAULT_BR[vertex] * BR_PI0_GG if name == "combo"
                       else DEFAULT_BR[name] * (BR_PI0_GG if name == "kl" else 1.0))
        out[name] = Species(
            name=name, sigma=sigma, br=v["br"], p_mean=v["p_mean"], p_shape=v["p_shape"],
            cos2=v["cos2"], force_decay=v["force_decay"], anti_fraction=v["anti_fraction"],
            vertex=vertex, pi0_p_mean=v["pi0_p_mean"], pi0_p_shape=v["pi0_p_shape"],
        )
    if not out:
        _fail(path, "backgrounds", raw, "at least one species table, from: " + ", ".join(SPECIES))
    return BackgroundConfig(sigma_ref=sigma_ref if sigma_ref is not None else 0.0, species=out)
