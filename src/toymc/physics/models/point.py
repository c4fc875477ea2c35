"""One physics point: (model, mass, coupling) -> c*tau, branching fractions, production rate.

This is the bridge between the model formulas (toymc.physics.models.alp,
vector_boson, b_to_k) and the generator and the reach: a config's
``[model]`` section, or a (mass, coupling) grid point, gives

* ``ctau`` [cm] from the total width (c*tau = hbar c / Gamma),
* ``br_decay``: BR(LLP -> the generated final state) (with BR(pi0 -> gamma gamma) per pi0),
* ``br_production``: for ``b_meson``, BR(B+ -> K+ X) and BR(B0 -> K0 X) (or the K*
  modes) from the flavour-violating coupling ``g_bs`` with the form factors of
  toymc.physics.models.b_to_k, or one value given directly; 1 for ``radiative``,
* ``sigma_fb``: the production cross-section per generated event before the
  branching fractions: sigma_bb * 2 [f_+- BR(B+) + (1 - f_+-) BR(B0)] / BR... see
  :func:`signal_cross_section`.

Main coupling per model (``coupling`` in the config):

===================  =================  ===========================================
model                coupling           meaning
===================  =================  ===========================================
``alp_photon``       g_agg [GeV^-1]     L = -(g_agg/4) a F Fdual
``alp_gluon``        1/f [GeV^-1]       L = (alpha_s/(8 pi)) (a/f) G Gdual
``dark_photon``      eps                kinetic mixing (couplings eps e Q_f)
``b_minus_l`` ...    g                  gauge coupling of the named charge set
``custom_vector``    g                  with ``charges`` given in the config
===================  =================  ===========================================
"""

import math
import warnings

import numpy as np

from toymc.errors import ConfigError
from toymc.physics.channels import CHANNELS
from toymc.physics.models import alp, b_to_k, vector_boson

__all__ = (
    "MODELS", "model_spin", "decay_properties", "production_brs", "point",
    "signal_cross_section", "electron_coupling",
)

VECTOR_MODELS = ("dark_photon", "b_minus_l", "le_minus_lmu", "le_minus_ltau", "lmu_minus_ltau",
                 "protophobic", "custom_vector")
MODELS = ("alp_photon", "alp_gluon") + VECTOR_MODELS


def model_spin(model):
    return 0 if model.startswith("alp_") else 1


def _widths(model, mass, coupling, kinetic_mixing=None, charges=None):
    if model == "alp_photon":
        return alp.photon_alp_widths(mass, coupling)
    if model == "alp_gluon":
        return alp.gluon_alp_widths(mass, 1.0 / np.asarray(coupling, dtype=float))
    if model == "custom_vector":
        c = vector_boson.couplings_from_charges(charges or {}, coupling, kinetic_mixing or 0.0)
    else:
        c = vector_boson.model_couplings(model, coupling, kinetic_mixing, **(charges or {}))
    return vector_boson.widths(mass, c)


def electron_coupling(model, coupling, kinetic_mixing=None, charges=None):
    """V-electron vector coupling c_e (dimensionless) of a vector model."""
    if model == "custom_vector":
        c = vector_boson.couplings_from_charges(charges or {}, coupling, kinetic_mixing or 0.0)
    else:
        c = vector_boson.model_couplings(model, coupling, kinetic_mixing, **(charges or {}))
    return c["e"]


def decay_properties(model, mass, coupling, channel, kinetic_mixing=None, charges=None):
    """(ctau [cm], BR of the generated final state, all BRs) of the LLP at (mass, coupling).

    The second value is BR(LLP -> channel) times the branching fractions of the sub-decays
    the generator forces (BR(pi0 -> gamma gamma) per pi0: :attr:`Channel.forced_br`), the
    one convention for every yield toymc computes (metadata ``br_decay``, reach, weights);
    the dict holds the models' BR(LLP -> channel) of every channel, without that factor.
    Raises ConfigError if the model has no such channel.
    """
    w = _widths(model, mass, coupling, kinetic_mixing, charges)
    if channel not in w:
        raise ConfigError(None, "llp.channel", channel,
                          f"a decay of model {model}: one of {', '.join(sorted(w))}")
    total = sum(np.asarray(v, dtype=float) for v in w.values())
    from toymc.physics.constants import HBARC_GEV_CM

    with np.errstate(divide="ignore", invalid="ignore"):
        ctau = np.where(total > 0, HBARC_GEV_CM / total, np.inf)
        brs = {k: np.where(total > 0, np.asarray(v, dtype=float) / total, 0.0) for k, v in w.items()}
    forced = CHANNELS[channel].forced_br if channel in CHANNELS else 1.0  # width-only: 1
    return ctau, brs[channel] * forced, brs


def production_brs(mass, recoil, g_bs=None, br_production=None):
    """(BR(B+ -> K+ X), BR(B0 -> K0 X)) (or the K* modes) from g_bs [GeV^-1] or given."""
    if br_production is not None:
        return br_production, br_production
    if recoil == "K":
        return b_to_k.br_b_to_k(mass, g_bs, "B+"), b_to_k.br_b_to_k(mass, g_bs, "B0")
    return b_to_k.br_b_to_kstar(mass, g_bs, "B+"), b_to_k.br_b_to_kstar(mass, g_bs, "B0")


def signal_cross_section(process, *, sigma_bb=None, charged_fraction=None, br_b=None,
                         sqrt_s=None, mass=None, cos_min=None, cos_max=None, c_e=None):
    """Signal production cross-section [fb] before the LLP decay branching fraction.

    b_meson:   sigma_bb * 2 * [f_+- BR(B+ -> K+ X) + (1 - f_+-) BR(B0 -> K0 X)]
               (either B of the pair may decay to the signal).
    radiative: sigma(e+e- -> gamma V) in the photon angle range for the electron
               coupling c_e (toymc.physics.production.radiative.sigma with eps = c_e/e).
    """
    if process == "b_meson":
        bp, b0 = br_b
        return sigma_bb * 2.0 * (charged_fraction * np.asarray(bp) + (1 - charged_fraction) * np.asarray(b0))
    from toymc.physics.constants import ALPHA_EM
    from toymc.physics.production.radiative import sigma

    eps = np.asarray(c_e, dtype=float) / math.sqrt(4 * math.pi * ALPHA_EM)
    return sigma(sqrt_s, mass, cos_min, cos_max, 1.0) * eps**2


def point(cfg_model, mass, channel, production, sqrt_s):
    """Everything the generator and the metadata need for one config's [model].

    Parameters
    ----------
    cfg_model : toymc.config.loader.Model
    mass : float, GeV
    channel : str
    production : toymc.config.loader.Production
    sqrt_s : float, GeV

    Returns
    -------
    dict with ctau_cm, br_decay, brs, br_production (pair or None), sigma_fb, model, coupling
    """
    m = cfg_model
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        ctau, br, brs = decay_properties(m.name, mass, m.coupling, channel, m.kinetic_mixing,
                                         m.charges)
    out = {"model": m.name, "coupling": m.coupling, "ctau_cm": float(ctau),
           "br_decay": float(br), "brs": {k: float(v) for k, v in brs.items()},
           "warnings": [str(w.message) for w in caught]}
    if production.process == "b_meson":
        if m.g_bs is None and m.br_production is None:
            out["br_production"] = None
            out["sigma_fb"] = None
        else:
            bp, b0 = production_brs(mass, production.recoil, m.g_bs, m.br_production)
            out["br_production"] = [float(bp), float(b0)]
            out["sigma_fb"] = float(signal_cross_section(
                "b_meson", sigma_bb=production.sigma_bb,
                charged_fraction=production.charged_fraction, br_b=(bp, b0)))
    else:
        c_e = electron_coupling(m.name, m.coupling, m.kinetic_mixing, m.charges)
        out["br_production"] = None
        out["coupling_e"] = float(c_e)
        out["sigma_fb"] = float(signal_cross_section(
            "radiative", sqrt_s=sqrt_s, mass=mass, cos_min=production.photon_cos_min,
            cos_max=production.photon_cos_max, c_e=c_e))
    for w in out["warnings"]:
        warnings.warn(w, alp.ModelValidityWarning, stacklevel=2)
    return out
