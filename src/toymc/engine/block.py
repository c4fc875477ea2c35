"""The block: toymc's in-memory unit of events (structure of arrays).

A :class:`Block` holds ``n`` events as flat numpy arrays.  Per-event columns
live in ``Block.event`` (each of length ``n``).  Per-object columns (the LLP
daughters, the K* daughters, later tracks and clusters) live in
``Block.groups[name] = (counts, columns)``: ``counts`` has length ``n`` and
each column is one flat array of length ``counts.sum()``, event after event.
awkward arrays are made from this only at the edges (:func:`block_to_arrays`, for the
writer and for ``toymc.generate``).

Truth layout (units: GeV, cm, ns; see :mod:`toymc.io.columns` for the table)

per event
    ``pv_x, pv_y, pv_z``            primary vertex (luminous region)
    ``par_pdg, par_q``              parent of the LLP (B meson; 0 for e+e- -> gamma V)
    ``par_px..par_e``               parent four-momentum (lab); e+e- total for radiative
    ``par_ct``                      parent proper decay length c*t
    ``rcl_pdg, rcl_q, rcl_px..rcl_e``  the particle recoiling against the LLP
                                    (K, K*, or the photon of e+e- -> gamma V)
    ``llp_pdg, llp_m, llp_ctau``    LLP id, mass, sample's proper decay length
    ``llp_px..llp_e``               LLP four-momentum (lab)
    ``llp_vx, llp_vy, llp_vz``      LLP production vertex
    ``llp_dx, llp_dy, llp_dz``      LLP decay vertex
    ``llp_dr``                      transverse radius of the decay vertex
    ``llp_ct``                      proper decay length c*t of this LLP
    ``llp_l``                       lab decay length
    ``w_gen``                       generator weight (1 for unweighted events)
groups
    ``dau``   LLP decay products: ``pdg, q, status`` (1 final, 2 decayed, e.g. a
              pi0), ``mother`` (index in this list, -1 for the LLP),
              ``px, py, pz, e`` and origin ``vx, vy, vz``
    ``rcld``  daughters of the recoil (K* -> K pi; empty otherwise):
              ``pdg, q, px, py, pz, e``
"""

from dataclasses import dataclass, field

import numpy as np

__all__ = ("Block", "block_to_arrays", "concatenate", "versions")


@dataclass
class Block:
    """`n` events as flat arrays; see the module docstring for the layout."""

    n: int
    event: dict = field(default_factory=dict)
    groups: dict = field(default_factory=dict)

    def add_group(self, name, counts, columns):
        counts = np.asarray(counts, dtype=np.int64)
        total = int(counts.sum())
        for key, col in columns.items():
            if len(col) != total:
                raise ValueError(f"group {name}: column {key} has {len(col)} entries, not {total}")
        self.groups[name] = (counts, dict(columns))

    def offsets(self, name):
        """Start offsets (length n + 1) of group `name` in its flat arrays."""
        counts = self.groups[name][0]
        off = np.zeros(len(counts) + 1, dtype=np.int64)
        np.cumsum(counts, out=off[1:])
        return off


def concatenate(blocks):
    """Join blocks with the same columns into one block, in order."""
    blocks = list(blocks)
    out = Block(n=sum(b.n for b in blocks))
    for key in blocks[0].event:
        out.event[key] = np.concatenate([b.event[key] for b in blocks])
    for name in blocks[0].groups:
        counts = np.concatenate([b.groups[name][0] for b in blocks])
        cols = {
            key: np.concatenate([b.groups[name][1][key] for b in blocks])
            for key in blocks[0].groups[name][1]
        }
        out.add_group(name, counts, cols)
    return out


def block_to_arrays(block):
    """Dict of numpy arrays (per event) and awkward records (groups) of a block.

    The form the writer stores (one branch per column, ``n<group>`` counters) and
    the fields of ``toymc.generate``'s array.
    """
    import awkward as ak

    out = dict(block.event)
    for name, (counts, cols) in block.groups.items():
        out[name] = ak.zip({k: ak.unflatten(v, counts) for k, v in cols.items()},
                           depth_limit=None) if cols else None
        if out[name] is None:
            del out[name]
    return out


def versions():
    """Versions of toymc and the libraries that determine the events."""
    import awkward as ak
    import numba
    import particle
    import uproot

    from toymc import __version__

    return {"toymc": __version__, "numpy": np.__version__, "numba": numba.__version__,
            "awkward": ak.__version__, "uproot": uproot.__version__,
            "particle": particle.__version__}
