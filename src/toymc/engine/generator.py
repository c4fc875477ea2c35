"""Run the generator block by block: config -> truth (and reco) blocks.

This module is the only place that turns a :class:`toymc.config.schema.RunConfig`
into kernel arguments; kernels never see the config.
"""

import functools

import numpy as np

from toymc.config.kinematics import check_kinematics, production_limit
from toymc.engine.block import Block, concatenate
from toymc.engine.malloc import keep_buffers
from toymc.engine.rng import DETECTOR, GENERATOR, block_generator, block_sizes
from toymc.physics import constants as C
from toymc.physics.decays import CHANNELS, KCONST
from toymc.physics.kinematics.elementary import exp_array
from toymc.physics.production import _layout as L
from toymc.physics.production import b_meson, radiative

__all__ = ("check_kinematics", "generate_block", "iter_chunks", "normalisation",
           "production_limit", "B_CONST", "llp_pdg")

#: B-sector constants passed to the b_meson kernel (GeV, cm)
B_CONST = np.array([C.M_B, C.M_B0, C.CTAU_B, C.CTAU_B0, C.M_K, C.M_K0,
                    C.M_KSTP, C.G_KSTP, C.M_KST0, C.G_KST0])

ME_CODES = {"flat": 0, "chiral": 1}


def llp_pdg(cfg):
    if cfg.llp.pdg:
        return cfg.llp.pdg
    return 54 if CHANNELS[cfg.llp.channel].spin == 0 else 55


def ctau_values(cfg):
    """The c*tau of the run, or the values of its mixture (cm)."""
    mix = cfg.llp.ctau_mixture
    return np.array(mix if mix else [cfg.llp.ctau], dtype=np.float64)


def mixture_density(ct, ctaus):
    """Density (1/cm) of the proper decay length ct for an equal-weight exponential mixture."""
    ctaus = np.asarray(ctaus, dtype=np.float64)
    ct = np.asarray(ct, dtype=np.float64)
    # exp_array: the same bits on every CPU (numpy's vectorised exp depends on the CPU)
    return np.mean(exp_array(-ct[..., None] / ctaus) / ctaus, axis=-1)


def _kernel_arrays(cfg, rng, n):
    ch = CHANNELS[cfg.llp.channel]
    if cfg.production.process == "b_meson":
        return b_meson.generate(rng, n, cfg.beams, cfg.production.recoil == "K*", cfg.llp.mass,
                                ctau_values(cfg), ch, ME_CODES[cfg.llp.matrix_element],
                                cfg.production.charged_fraction, KCONST, B_CONST)
    return radiative.generate(rng, n, cfg.beams, cfg.llp.mass, ctau_values(cfg), ch,
                              cfg.production.photon_cos_min, cfg.production.photon_cos_max,
                              KCONST)


@functools.lru_cache(maxsize=8)
def _constant_columns(channel, n, pdg, mass):
    """Columns that are the same in every block of n events of a run, made once.

    Read-only: blocks share them (a block that needs other values makes new
    arrays, as concatenation and the readers do).
    """
    ch = CHANNELS[channel]
    out = {"llp_pdg": np.full(n, pdg, dtype=np.int32), "llp_m": np.full(n, mass),
           "w_gen": np.ones(n), "counts": np.full(n, ch.k),
           "pdg": np.tile(ch.pdg, n), "q": np.tile(ch.q, n), "status": np.tile(ch.status, n),
           "mother": np.tile(ch.mother, n)}
    for a in out.values():
        a.flags.writeable = False
    return out


def generate_block(cfg, index, n=None, detector=None, counter=None):
    """Generate block `index` of the run (n events; default: its size in the run).

    Parameters
    ----------
    detector : callable or None
        ``detector(block, rng)`` adds reco columns, with the block's detector stream.
    counter : numpy int64 array of 3 or None
        Incremented by the (uniform, normal, exponential) draws made, the
        detector's included (for the benchmark); `detector` must then accept it
        as a third argument.
    """
    keep_buffers()
    if n is None:
        n = int(block_sizes(cfg.run.events)[index])
    rng = block_generator(cfg.run.seed, index, GENERATOR)
    (E, IE, D, R, IR), cnt = _kernel_arrays(cfg, rng, n)
    if counter is not None:
        counter += cnt
    b = Block(n=n)
    for j, name in enumerate(L.EVENT_FLOAT):
        b.event[name] = E[j]
    for j, name in enumerate(L.EVENT_INT):
        b.event[name] = IE[j]
    const = _constant_columns(cfg.llp.channel, n, llp_pdg(cfg), cfg.llp.mass)
    for name in ("llp_pdg", "llp_m", "w_gen"):
        b.event[name] = const[name]
    dau = {name: D[j] for j, name in enumerate(L.DAU_FLOAT)}
    for name in ("pdg", "q", "status", "mother"):
        dau[name] = const[name]
    b.add_group("dau", const["counts"], dau)
    k_r = R.shape[1] // n if n else 0
    rcld = {name: R[j] for j, name in enumerate(L.RCLD_FLOAT)}
    rcld.update({name: IR[j] for j, name in enumerate(L.RCLD_INT)})
    b.add_group("rcld", np.full(n, k_r), rcld)
    if detector is not None:
        drng = block_generator(cfg.run.seed, index, DETECTOR)
        if counter is None:
            detector(b, drng)
        else:  # the benchmark counts the detector's draws too
            detector(b, drng, counter)
    return b


def warm_up(cfg, detector=None, n=64):
    """Run the config's kernels on `n` events that no run uses, then discard them.

    numba compiles the kernels (or loads them from its cache) here, so that a run's
    progress bar, rate and ETA count generation only.  The events come from the stream
    of block 0 but are thrown away: the run's own events do not depend on this call.
    """
    generate_block(cfg, 0, n=min(n, max(int(cfg.run.events), 1)), detector=detector)


def iter_chunks(cfg, detector=None, blocks=None, counter=None):
    """Yield chunks (Blocks of up to ``cfg.run.chunk_blocks`` blocks) in order."""
    sizes = block_sizes(cfg.run.events)
    indices = range(len(sizes)) if blocks is None else blocks
    buf = []
    for i in indices:
        buf.append(generate_block(cfg, i, int(sizes[i]), detector, counter))
        if len(buf) == cfg.run.chunk_blocks:
            yield concatenate(buf)
            buf = []
    if buf:
        yield concatenate(buf)


def normalisation(cfg):
    """Cross-section and branching-fraction bookkeeping stored in the metadata.

    b_meson: N(signal) = L_int * sigma_bb * 2 * [f_+- BR(B+ -> K+ X) + (1 - f_+-) BR(B0 -> K0 X)]
    * BR(X -> channel): the factor 2 counts either B of the pair; the BRs come
    from a model (toymc.physics.models) and are not known to the generator alone.
    radiative: sigma(e+e- -> gamma V) per unit eps^2 inside the photon angle range, fb.

    With a [model] section the model's numbers are added (toymc.physics.models.point):
    ``sigma_signal_fb`` (signal production cross-section before the LLP decay BR:
    for b_meson it includes BR(B -> K(*) X)), ``sigma_times_br_fb`` (times
    BR(X -> channel): the luminosity weight uses it, toymc.io.weights),
    ``br_decay``, ``br_production_charged``/``_neutral`` (BR(B+ -> K+ X),
    BR(B0 -> K0 X)), ``brs``, ``model``, ``coupling``; radiative also
    ``sigma_fb`` (sigma(e+e- -> gamma V) for the coupling) and ``couplings.eps``.
    """
    p = cfg.production
    if p.process == "b_meson":
        out = {"process": "b_meson", "sigma_bb_fb": p.sigma_bb, "charged_fraction":
               p.charged_fraction, "b_per_event": 2.0, "recoil": p.recoil}
    else:
        out = {"process": "radiative", "sigma_per_eps2_fb": radiative.sigma(
            cfg.beams.sqrt_s, cfg.llp.mass, p.photon_cos_min, p.photon_cos_max),
            "photon_cos_min": p.photon_cos_min, "photon_cos_max": p.photon_cos_max}
    if cfg.model is not None:
        from toymc.physics.models.point import point

        info = point(cfg.model, cfg.llp.mass, cfg.llp.channel, p, cfg.beams.sqrt_s)
        info.pop("ctau_cm")
        sig = info.pop("sigma_fb")
        brp = info.pop("br_production")
        if brp is not None:
            info["br_production_charged"], info["br_production_neutral"] = brp
        info["couplings"] = {"model": cfg.model.name, "coupling": cfg.model.coupling}
        for key in ("g_bs", "br_production", "kinetic_mixing"):
            if getattr(cfg.model, key) is not None:
                info["couplings"][key] = getattr(cfg.model, key)
        if p.process == "radiative":
            info["sigma_fb"] = sig
            info["couplings"]["eps"] = info["coupling_e"] / (4 * np.pi * C.ALPHA_EM) ** 0.5
        if sig is not None:
            info["sigma_signal_fb"] = sig
            info["sigma_times_br_fb"] = sig * info["br_decay"]
        out.update(info)
    return out


