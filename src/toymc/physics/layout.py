"""Row indices of the per-event arrays filled by the production kernels.

Kernels write per-event floats into ``E[row, i]`` and integers into
``IE[row, i]``; recoil daughters into ``R`` (px, py, pz, e) and ``IR``
(pdg, q).  :func:`toymc.engine.generator.generate_block` turns the rows into named
columns of a :class:`toymc.engine.block.Block`.
"""

import numpy as np
from numba import njit

__all__ = (
    "EVENT_FLOAT", "EVENT_INT", "DAU_FLOAT", "RCLD_FLOAT", "RCLD_INT", "PV_X", "PV_Y", "PV_Z",
    "PAR_PX", "PAR_PY", "PAR_PZ", "PAR_E", "PAR_CT", "RCL_PX", "RCL_PY", "RCL_PZ", "RCL_E",
    "LLP_PX", "LLP_PY", "LLP_PZ", "LLP_E", "LLP_VX", "LLP_VY", "LLP_VZ", "LLP_DX", "LLP_DY",
    "LLP_DZ", "LLP_DR", "LLP_CT", "LLP_L", "LLP_CTAU", "PAR_PDG", "PAR_Q", "RCL_PDG", "RCL_Q",
    "SUB_BLOCK", "S", "scratch", "copy_out", "allocate", "primary_vertex", "pick_ctau", "put4",
    "get4", "store_llp",
)

EVENT_FLOAT = (
    "pv_x", "pv_y", "pv_z",
    "par_px", "par_py", "par_pz", "par_e", "par_ct",
    "rcl_px", "rcl_py", "rcl_pz", "rcl_e",
    "llp_px", "llp_py", "llp_pz", "llp_e",
    "llp_vx", "llp_vy", "llp_vz",
    "llp_dx", "llp_dy", "llp_dz", "llp_dr", "llp_ct", "llp_l", "llp_ctau",
)
EVENT_INT = ("par_pdg", "par_q", "rcl_pdg", "rcl_q")
DAU_FLOAT = ("px", "py", "pz", "e", "vx", "vy", "vz")
RCLD_FLOAT = ("px", "py", "pz", "e")
RCLD_INT = ("pdg", "q")

(PV_X, PV_Y, PV_Z, PAR_PX, PAR_PY, PAR_PZ, PAR_E, PAR_CT, RCL_PX, RCL_PY, RCL_PZ, RCL_E,
 LLP_PX, LLP_PY, LLP_PZ, LLP_E, LLP_VX, LLP_VY, LLP_VZ,
 LLP_DX, LLP_DY, LLP_DZ, LLP_DR, LLP_CT, LLP_L, LLP_CTAU) = range(len(EVENT_FLOAT))
PAR_PDG, PAR_Q, RCL_PDG, RCL_Q = range(len(EVENT_INT))


#: events per sub-block inside a kernel: the scratch rows of one sub-block stay in
#: cache; writing 25+ far-apart rows of a whole block event by event is several
#: times slower on machines with few write-combining streams.  Part of the
#: reproducibility contract (toymc.engine.rng): the draws are ordered by sub-block.
SUB_BLOCK = 1024
#: row stride of the flat scratch arrays: a compile-time constant, so that the
#: compiler sees fixed distances between rows and vectorises the event loops;
#: padded by 8 entries (64 bytes), since rows a power of two apart in memory
#: all fall into the same L1 cache sets (measured 20-30 % slower kernels)
S = SUB_BLOCK + 8


@njit(cache=True)
def scratch(E, IE, D, k, R, IR, n):
    """Flat scratch arrays for one sub-block: row r of event i at ``r * S + i``.

    Daughter d of an event (k per event, kr recoil daughters) has its rows at
    ``(d * rows + r) * S + i``; :func:`copy_out` interleaves them.
    """
    kr = R.shape[1] // n if n > 0 else 0
    return (np.empty(E.shape[0] * S), np.empty(IE.shape[0] * S, dtype=np.int32),
            np.empty(D.shape[0] * k * S), np.empty(R.shape[0] * kr * S),
            np.empty(IR.shape[0] * kr * S, dtype=np.int32))


@njit(cache=True)
def copy_out(Es, IEs, Ds, Rs, IRs, E, IE, D, R, IR, a, m, k, kr):
    """Copy the first m events of the scratch arrays to events a.. of the outputs."""
    for r in range(E.shape[0]):
        E[r, a:a + m] = Es[r * S:r * S + m]
    for r in range(IE.shape[0]):
        IE[r, a:a + m] = IEs[r * S:r * S + m]
    nd = D.shape[0]
    for d in range(k):
        for r in range(nd):
            src = (d * nd + r) * S
            D[r, a * k + d:(a + m) * k:k] = Ds[src:src + m]
    for d in range(kr):
        for r in range(R.shape[0]):
            src = (d * R.shape[0] + r) * S
            R[r, a * kr + d:(a + m) * kr:kr] = Rs[src:src + m]
        for r in range(IR.shape[0]):
            src = (d * IR.shape[0] + r) * S
            IR[r, a * kr + d:(a + m) * kr:kr] = IRs[src:src + m]


def allocate(n, k, k_rcld):
    """Uninitialised arrays for n events with k LLP daughters and k_rcld recoil daughters.

    Every entry is written by the kernels (np.empty: no page-zeroing cost).
    """
    return (
        np.empty((len(EVENT_FLOAT), n)),
        np.empty((len(EVENT_INT), n), dtype=np.int32),
        np.empty((len(DAU_FLOAT), n * k)),
        np.empty((len(RCLD_FLOAT), n * k_rcld)),
        np.empty((len(RCLD_INT), n * k_rcld), dtype=np.int32),
    )


@njit(inline="always", cache=True)
def primary_vertex(rng, counter, sig, E, i):
    """Gaussian luminous region; counter[1] counts normal draws."""
    E[PV_X, i] = sig[0] * rng.standard_normal()
    E[PV_Y, i] = sig[1] * rng.standard_normal()
    E[PV_Z, i] = sig[2] * rng.standard_normal()
    counter[1] += 3


@njit(inline="always", cache=True)
def pick_ctau(rng, counter, ctaus):
    """c*tau of this event: the only value, or one of an equal-weight mixture.

    A mixture of exponentials (``llp.ctau_mixture``) lets one sample be
    reweighted to any c*tau across its range with a usable effective sample
    size (toymc.analysis.scan); a single value draws no random number.
    """
    k = ctaus.shape[0]
    if k == 1:
        return ctaus[0]
    counter[0] += 1
    j = int(rng.random() * k)
    return ctaus[j if j < k else k - 1]


@njit(inline="always", cache=True)
def put4(E, row, i, p):
    """Four-vector p of event i into rows row .. row + 3 of a flat scratch array."""
    E[row * S + i], E[(row + 1) * S + i], E[(row + 2) * S + i], E[(row + 3) * S + i] = (
        p[0], p[1], p[2], p[3])


@njit(inline="always", cache=True)
def get4(E, row, i):
    """Four-vector of event i from rows row .. row + 3 of a flat scratch array."""
    return E[row * S + i], E[(row + 1) * S + i], E[(row + 2) * S + i], E[(row + 3) * S + i]


@njit(inline="always", cache=True)
def store_llp(E, i, p, v, res):
    """Store LLP four-momentum p, production vertex v and decay result res (flat scratch)."""
    put4(E, LLP_PX, i, p)
    E[LLP_VX * S + i], E[LLP_VY * S + i], E[LLP_VZ * S + i] = v[0], v[1], v[2]
    ct, lab, dx, dy, dz = res
    E[LLP_CT * S + i], E[LLP_L * S + i] = ct, lab
    E[LLP_DX * S + i], E[LLP_DY * S + i], E[LLP_DZ * S + i] = dx, dy, dz
    E[LLP_DR * S + i] = np.sqrt(dx * dx + dy * dy)
