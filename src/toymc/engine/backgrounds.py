"""Standard-model long-lived backgrounds in the truth-block layout of the signal.

Each background species is generated as a :class:`toymc.engine.block.Block` with the
same columns as a signal block (:mod:`toymc.engine.block`): the long-lived
standard-model particle takes the place of the LLP (``llp_*`` columns, its
PDG id in ``llp_pdg``), its decay products fill the ``dau`` group, the
parent and recoil columns are zero and ``rcld`` is empty.  The same
:func:`toymc.detector.respond` and the same selection therefore apply to
signal and background alike.  ``w_gen`` carries the weight of a forced
process (forced decay inside a distance, forced photon conversion); it is 1
otherwise.

Species (:data:`SPECIES`; daughters in the stored order)
--------------------------------------------------------
``ks``          K_S -> pi+ pi-, isotropic in the K_S rest frame.
``kl``          K_L -> pi+ pi- pi0 (pi0 -> gamma gamma), Dalitz plot with the
                measured slopes (toymc.physics.kinematics.threebody.kl_msq_1).
``lambda``      Lambda -> p pi- and anti-Lambda -> pbar pi+ (fraction
                ``anti_fraction``), isotropic: the parity-violating decay
                asymmetry times the (unknown, sample-dependent)
                polarisation is neglected.
``conversion``  gamma -> e- e+ in the material (beam pipe, vertex layers,
                chamber walls and sense layers: every cylinder of
                :meth:`toymc.detector.geometry.Geometry.tracking_layers`).
``combo``       random pairing for the three-pion channel: a displaced
                two-track vertex (K_S -> pi+ pi- or Lambda -> p pi-, key
                ``vertex``) combined with the two photons of an independent
                prompt pi0 (from the primary vertex, its own momentum
                spectrum).  Stored like the pi_pi_pi0 signal channel:
                track, track, pi0 (status 2), gamma, gamma.

The kinematics of the long-lived particle (collision-frame momentum spectrum,
angular law, boost, forced decay length), the photon conversions in the material
and the decays are computed by the kernels of :mod:`toymc.physics.backgrounds`,
whose docstring gives the formulas and their sources; this module turns a species
into kernel arguments, runs the kernel on the species' random stream and builds
the Block.

Yields and normalisation
------------------------
A species' expected number of MC-like entries in a sample of integrated
luminosity L_int is L_int * sigma_ref * yield * BR (:func:`expected_count`):
``yield`` is the mean number per reference event (e.g. per hadronic
e+e- event of cross-section ``sigma_ref``), or a species may give its own
``sigma``; BR is the visible branching fraction (defaults from the PDG
listing, from memory, :data:`DEFAULT_BR`; ``particle`` has none).  All demo
numbers in configs are illustrative values of our own.

Random streams: species number s uses ``SeedSequence(seed, spawn_key=(block,
STAGE_OFFSET + 2 s))`` for the generator and ``... + 2 s + 1`` for the
detector (toymc.engine.rng), never a signal stream (stages 0 and 1).
"""

import numpy as np

from toymc.config.backgrounds import (
    BACKGROUND_SCHEMA,
    DEFAULT_BR,
    SPECIES,
    BackgroundConfig,
    Species,
    parse_backgrounds,
)
from toymc.engine.block import Block, concatenate
from toymc.engine.rng import BLOCK_SIZE, block_generator, block_sizes
from toymc.errors import ConfigError
from toymc.physics import constants as C
from toymc.physics import layout as L
from toymc.physics.backgrounds import (
    CONV,
    layer_arrays,
    species_kernel,
    species_layout,
)

__all__ = (
    "BACKGROUND_SCHEMA",
    "DEFAULT_BR",
    "SPECIES",
    "STAGE_OFFSET",
    "BackgroundConfig",
    "Species",
    "expected_count",
    "generate_species",
    "generate_species_block",
    "parse_backgrounds",
    "stages",
)

#: first rng stage used by backgrounds (signal uses 0 and 1)
STAGE_OFFSET = 16


def stages(species):
    """(generator, detector) rng stages of `species` (name)."""
    s = SPECIES.index(species)
    return STAGE_OFFSET + 2 * s, STAGE_OFFSET + 2 * s + 1


def expected_count(species, lumi):
    """Expected number of (weight-1) entries of `species` at integrated luminosity `lumi`.

    Parameters
    ----------
    species : Species
    lumi : float
        Integrated luminosity in fb^-1.

    Returns
    -------
    float
        lumi * sigma * br.
    """
    return float(lumi) * species.sigma * species.br


def generate_species_block(species, beams, layers, seed, index, n=BLOCK_SIZE, detector=None):
    """Truth block `index` of background `species` (n events), optionally with the detector.

    Parameters
    ----------
    species : Species
    beams : toymc.physics.production.beams.Beams
        Collision-frame velocity, e- direction and luminous region.
    layers : dict or None
        Material cylinders (``Geometry.tracking_layers()``); needed for
        ``conversion``.
    seed : int
        Master seed; the streams are those of :func:`stages`.
    index : int
        Block index.
    n : int
        Events in the block.
    detector : callable or None
        ``detector(block, rng)`` adding reco columns, called with the
        species' detector stream of this block.

    Returns
    -------
    toymc.engine.block.Block
        ``w_gen`` holds the forced-process weight.  The combo's pi0 is stored
        with mother -1 like a signal pi0; its origin (the primary vertex)
        shows that it is unrelated to the vertex particle.
    """
    code, pdg0, m, ctau, m1, m2, dp, dq, dst, dmo = species_layout(species.name, species.vertex)
    if code == CONV and layers is None:
        raise ConfigError(None, "detector.geometry", None,
                          "a geometry (material layers) for photon conversions")
    k = len(dp)
    E, IE, D, _R, _IR = L.allocate(n, k, 0)
    W = np.empty(n)
    S = np.empty(n, dtype=np.int64)
    lay = layer_arrays(layers) if layers is not None else (np.zeros(0),) * 4
    g_stage, d_stage = stages(species.name)
    rng = block_generator(seed, index, g_stage)
    anti = species.anti_fraction if (species.name == "lambda" or (
        species.name == "combo" and species.vertex == "lambda")) else 0.0
    species_kernel(rng, n, code, float(m), float(ctau), float(m1), float(m2), species.p_shape,
                   species.p_mean, species.cos2, species.force_decay, anti, species.pi0_p_shape,
                   species.pi0_p_mean, np.ascontiguousarray(beams.electron_direction_cm()),
                   np.ascontiguousarray(beams.beta, dtype=np.float64),
                   np.ascontiguousarray(beams.sigmas, dtype=np.float64), C.M_PI0, C.M_E, *lay,
                   E, IE, D, W, S)
    b = Block(n=n)
    for j, name in enumerate(L.EVENT_FLOAT):
        b.event[name] = E[j]
    for j, name in enumerate(L.EVENT_INT):
        b.event[name] = IE[j]
    b.event["llp_pdg"] = (S * pdg0).astype(np.int32)
    b.event["llp_m"] = np.full(n, m)
    b.event["llp_ctau"] = np.full(n, ctau)
    b.event["w_gen"] = W
    pdg = np.tile(np.asarray(dp, dtype=np.int32), n)
    q = np.tile(np.asarray(dq, dtype=np.int32), n)
    if anti > 0.0:
        # anti-Lambda -> pi+ pbar (positive track first): the kernel stored the pion first
        rows = pdg.reshape(n, k)
        rows[S < 0, 0] = 211
        rows[S < 0, 1] = -2212
    dau = {name: D[j] for j, name in enumerate(L.DAU_FLOAT)}
    dau["pdg"] = pdg
    dau["q"] = q
    dau["status"] = np.tile(np.asarray(dst, dtype=np.int32), n)
    dau["mother"] = np.tile(np.asarray(dmo, dtype=np.int32), n)
    b.add_group("dau", np.full(n, k), dau)
    b.add_group("rcld", np.zeros(n, dtype=np.int64),
                {"px": np.zeros(0), "py": np.zeros(0), "pz": np.zeros(0), "e": np.zeros(0),
                 "pdg": np.zeros(0, dtype=np.int32), "q": np.zeros(0, dtype=np.int32)})
    if detector is not None:
        detector(b, block_generator(seed, index, d_stage))
    return b


def generate_species(species, beams, layers, seed, events, detector=None):
    """All blocks of `events` events of `species`, joined into one block (see above)."""
    blocks = [generate_species_block(species, beams, layers, seed, i, int(s), detector)
              for i, s in enumerate(block_sizes(int(events)))]
    return concatenate(blocks)
