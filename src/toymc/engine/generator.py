"""Run the generator block by block: config -> truth (and reco) blocks.

This module is the only place that turns a :class:`toymc.config.loader.RunConfig`
into kernel arguments; kernels never see the config.
"""

import functools

import numpy as np

from toymc.engine.block import Block, concatenate
from toymc.engine.malloc import keep_buffers
from toymc.engine.rng import DETECTOR, GENERATOR, block_generator, block_sizes
from toymc.physics import constants as C
from toymc.physics import generic_decay, processes
from toymc.physics import layout as L
from toymc.physics.channels import GG, MATRIX_ELEMENTS, Channel
from toymc.physics.decays import CHANNELS
from toymc.physics.kinematics.elementary import exp_array
from toymc.physics.production.spec import ctau_values

__all__ = (
    "generate_block", "iter_chunks", "llp_pdg", "normalisation", "mixture_density", "warm_up",
)

#: matrix-element codes (toymc.physics.kinematics.threebody)
ME_CODES = MATRIX_ELEMENTS


def llp_pdg(cfg):
    if cfg.llp.pdg:
        return cfg.llp.pdg
    return 54 if CHANNELS[cfg.llp.channel].spin == 0 else 55


def mixture_density(ct, ctaus):
    """Density (1/cm) of the proper decay length ct for an equal-weight exponential mixture."""
    ctaus = np.asarray(ctaus, dtype=np.float64)
    ct = np.asarray(ct, dtype=np.float64)
    # exp_array: the same bits on every CPU (numpy's vectorised exp depends on the CPU)
    return np.mean(exp_array(-ct[..., None] / ctaus) / ctaus, axis=-1)


@functools.lru_cache(maxsize=2)
def _stand_in(spin):
    """A gamma gamma channel of the given LLP spin: what a built-in production kernel decays
    when the run's channel is a user one (its decay point is kept, its photons replaced)."""
    gg = CHANNELS["gamma_gamma"]
    return Channel("stand_in", GG, spin, gg.pdg, gg.q, gg.status, gg.mother, gg.family)


def _kernel_arrays(cfg, rng, n):
    """The layout arrays of n events: the process's kernel, then for a user channel or a user
    process the generic decay (toymc.physics.generic_decay)."""
    ch = CHANNELS[cfg.llp.channel]
    proc = processes.get(cfg.production.process)
    if proc.run is not None and ch.code is not None:
        return proc.run(cfg, rng, n, ch)  # the built-in channel's compiled code
    if proc.run is not None:
        (E, IE, _, R, IR), cnt = proc.run(cfg, rng, n, _stand_in(ch.spin))
        draw_point = False
    else:
        (E, IE, R, IR), cnt = proc.generate(rng, n, cfg.beams, cfg.llp.mass,
                                            dict(cfg.production.options))
        _check_arrays(proc.name, n, E, IE, R, IR, cnt)
        draw_point = True
    em, ep = cfg.beams.four_momenta()
    D = generic_decay.decay(rng, n, cfg.llp.mass, ctau_values(cfg), ch, proc.polarisation(cfg),
                            cfg.llp.matrix_element, np.concatenate([em, ep]), draw_point, E, cnt)
    return (E, IE, D, R, IR), cnt


def _check_arrays(name, n, E, IE, R, IR, cnt):
    """A user process's output must have the layout of layout.allocate (a bug otherwise)."""
    want = ((E, (len(L.EVENT_FLOAT), n), np.float64), (IE, (len(L.EVENT_INT), n), np.int32),
            (R, (len(L.RCLD_FLOAT), None), np.float64), (IR, (len(L.RCLD_INT), None), np.int32),
            (cnt, (3,), np.int64))
    for a, shape, dtype in want:
        ok = isinstance(a, np.ndarray) and a.dtype == dtype and a.ndim == len(shape) and all(
            w is None or s == w for s, w in zip(a.shape, shape))
        if not ok or (shape[1:] == (None,) and a.shape[1] % max(n, 1)):
            raise TypeError(f"process {name}: generate must return ((E, IE, R, IR), counter) "
                            "with the shapes and types of toymc.physics.layout.allocate(n, 0, "
                            "k_recoil) and an int64[3] counter")


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
    out = dict(processes.get(p.process).normalisation(cfg))
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


