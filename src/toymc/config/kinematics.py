"""Checks of a run against physics: what the production and the decay can make.

The LLP mass must lie above the decay channel's threshold and below the production
limit, the beams must reach the B pair for ``b_meson``, the channel must suit the
production (``radiative`` makes a vector) and the model; a model's coupling must give a
finite c*tau and a production branching fraction <= 1.  Each failure is a
:class:`toymc.errors.ConfigError` naming the key.  The loader runs these checks once per
config; the scan, reach and tuning readers run :func:`check_kinematics` for each grid mass.
"""

import math

from toymc.config import ranges as R
from toymc.errors import ConfigError
from toymc.physics import processes
from toymc.physics.decays import CHANNELS, threshold
from toymc.physics.models.point import model_spin

__all__ = ("check_kinematics", "check_production_br", "model_ctau", "production_limit")


def production_limit(cfg):
    """Largest LLP mass (GeV) the configured production can make (its process's ``limit``)."""
    return processes.get(cfg.production.process).limit(cfg)


def check_kinematics(cfg):
    """Raise ConfigError if the LLP mass, spin or options do not suit the channel and process."""
    p, llp = cfg.production, cfg.llp
    proc = processes.get(p.process)
    ch = CHANNELS[llp.channel]
    thr = threshold(llp.channel)
    if llp.mass <= thr:
        raise ConfigError(cfg.path, "llp.mass", llp.mass,
                          f"must be above the {llp.channel} threshold {thr:.6f} GeV")
    lim = proc.limit(cfg)
    if llp.mass >= lim:
        raise ConfigError(cfg.path, "llp.mass", llp.mass,
                          f"must be below the {p.process} production limit {lim:.6f} GeV"
                          + proc.note(cfg))
    if proc.check is not None:
        proc.check(cfg)
    if ch.spin not in proc.spins:
        what = "a vector" if proc.spins == (1,) else f"spin {' or '.join(map(str, proc.spins))}"
        raise ConfigError(cfg.path, "llp.channel", llp.channel,
                          f"{p.process} production makes {what}; use one of "
                          + ", ".join(n for n, c in CHANNELS.items() if c.spin in proc.spins))
    if llp.matrix_element not in ch.matrix_elements:
        with_me = [n for n, c in CHANNELS.items() if llp.matrix_element in c.matrix_elements]
        raise ConfigError(cfg.path, "llp.matrix_element", llp.matrix_element,
                          f"'{llp.matrix_element}' applies to channel {', '.join(with_me)} only;"
                          " use 'flat'")
    if cfg.model is not None and not proc.models:
        raise ConfigError(cfg.path, "model.name", cfg.model.name,
                          f"the models give rates for production b_meson and radiative only, not"
                          f" {p.process}; remove [model] and give llp.ctau")


def check_production_br(path, model, mass, recoil):
    """BR(B -> K(*) X) from g_bs must be a branching fraction (<= 1)."""
    from toymc.physics.models.point import production_brs

    brs = [float(b) for b in production_brs(mass, recoil, model.g_bs, None)]
    if not max(brs) <= 1.0:
        raise ConfigError(path, "model.g_bs", model.g_bs,
                          f"gives BR(B -> {recoil} X) = {max(brs):.3g} > 1 at m = {mass:g} GeV: "
                          "a smaller coupling (BR is proportional to g_bs^2)")


def model_ctau(path, model, llp):
    """c*tau (cm) of the [model] at the [llp] mass and channel (a dict of [llp] values)."""
    from toymc.physics.models.point import decay_properties

    ch = CHANNELS[llp["channel"]]
    if model_spin(model.name) != ch.spin:
        raise ConfigError(path, "llp.channel", llp["channel"],
                          f"a spin-{model_spin(model.name)} decay for model {model.name}: one of "
                          + ", ".join(n for n, c in CHANNELS.items()
                                      if c.spin == model_spin(model.name)))
    try:
        ctau, br, _ = decay_properties(model.name, llp["mass"], model.coupling, llp["channel"],
                                       model.kinetic_mixing, model.charges)
    except ConfigError as exc:
        raise ConfigError(path, exc.key, exc.value, exc.allowed) from None
    ctau = float(ctau)
    if not (0 < ctau < math.inf) or br <= 0:
        raise ConfigError(path, "model.coupling", model.coupling,
                          f"gives c*tau = {ctau} cm and BR({llp['channel']}) = {float(br):.3g} at "
                          f"m = {llp['mass']} GeV: the channel must be open and c*tau finite")
    if ctau > R.MAX_CTAU:
        raise ConfigError(path, "model.coupling", model.coupling,
                          f"gives c*tau = {ctau:.3g} cm at m = {llp['mass']} GeV: at most "
                          f"{R.MAX_CTAU:g} cm (a larger coupling)")
    return ctau
