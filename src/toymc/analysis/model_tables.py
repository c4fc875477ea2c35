"""A model's numbers on a (mass, coupling) grid: c*tau and BR(LLP -> channel)
(:func:`decay_table`), and the production cross-section times production branching
fractions (:func:`production_table`), from :mod:`toymc.physics.models.point`.

Arrays have the shape (n_mass, n_coupling); c*tau in cm, cross-sections in fb.
"""

import warnings as _warnings

import numpy as _np

from toymc.errors import ConfigError as _ConfigError

__all__ = ("decay_table", "production_table")


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
