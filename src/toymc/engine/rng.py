"""Random streams: one per fixed-size block, independent of chunking and workers.

Block ``i`` of a run with master seed ``seed`` draws its generator-level
numbers from ``SeedSequence(seed, spawn_key=(i, 0))`` and its detector
response from ``SeedSequence(seed, spawn_key=(i, 1))`` (PCG64).  Each block
is reached directly, without spawning the ones before it, and the events of
a run do not depend on how blocks are grouped into chunks or spread over
worker processes.  ``BLOCK_SIZE`` is part of that contract: changing it
changes the events; so is the kernels' sub-block size
(``toymc.physics.production._layout.SUB_BLOCK``), since a kernel draws one quantity
for all events of a sub-block before the next.  The numpy version is stored in every output file,
since its bit streams may change between releases.
"""

import numpy as np

__all__ = ("BLOCK_SIZE", "block_generator", "n_blocks", "block_sizes", "GENERATOR", "DETECTOR")

BLOCK_SIZE = 1 << 16
GENERATOR, DETECTOR = 0, 1


def block_generator(seed, block, stage=GENERATOR):
    """numpy Generator for block `block` and stage (GENERATOR or DETECTOR)."""
    return np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed, spawn_key=(block, stage))))


def n_blocks(events):
    return (events + BLOCK_SIZE - 1) // BLOCK_SIZE


def block_sizes(events):
    """Number of events in each block of a run of `events` events."""
    nb = n_blocks(events)
    sizes = np.full(nb, BLOCK_SIZE, dtype=np.int64)
    if nb:
        sizes[-1] = events - BLOCK_SIZE * (nb - 1)
    return sizes
