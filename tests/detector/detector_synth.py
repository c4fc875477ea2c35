"""Synthetic truth blocks for the detector tests and the speed benchmark.

An LLP of mass M and fixed momentum |p| is produced at the origin with a
direction uniform in cos(theta) within a range and uniform in phi, and decays
at a chosen transverse radius (fixed, or uniform in a range) into
pi+ pi-, gamma gamma, or pi+ pi- pi0 (uniform Dalitz plot) with pi0 -> gamma
gamma at the same point.  Two-body momenta from the PDG review "Kinematics"
(p* = sqrt(lambda(M^2, m1^2, m2^2)) / (2M)); masses from toymc.physics.constants.
"""

import pathlib

import numpy as np

from toymc.engine.block import Block
from toymc.physics.constants import M_PI, M_PI0

#: the project's geometries/ folder
GEOMETRIES = pathlib.Path(__file__).resolve().parents[2] / "geometries"

__all__ = ("GEOMETRIES", "boost", "make_block", "two_body")


def _kallen(x, y, z):
    return x * x + y * y + z * z - 2 * x * y - 2 * y * z - 2 * z * x


def _iso(rng, n):
    c = rng.uniform(-1, 1, n)
    s = np.sqrt(1 - c * c)
    ph = rng.uniform(0, 2 * np.pi, n)
    return np.stack([s * np.cos(ph), s * np.sin(ph), c], axis=1)


def two_body(rng, mparent, m1, m2):
    """Rest-frame four-momenta (n, 4) of an isotropic decay of masses mparent -> m1 m2."""
    mparent = np.asarray(mparent, dtype=float)
    n = mparent.shape[0]
    pst = np.sqrt(np.maximum(_kallen(mparent**2, m1**2, m2**2), 0)) / (2 * mparent)
    u = _iso(rng, n) * pst[:, None]
    e1 = np.sqrt(pst**2 + m1**2)
    e2 = np.sqrt(pst**2 + m2**2)
    return np.column_stack([u, e1]), np.column_stack([-u, e2])


def boost(p4, parent):
    """Boost rest-frame four-vectors p4 (n, 4) into the frame where parent (n, 4) moves."""
    b = parent[:, :3] / parent[:, 3:4]
    b2 = np.sum(b * b, axis=1)
    g = 1 / np.sqrt(1 - b2)
    bp = np.sum(b * p4[:, :3], axis=1)
    g2 = np.where(b2 > 0, (g - 1) / np.where(b2 > 0, b2, 1), 0)
    p = p4[:, :3] + (g2 * bp + g * p4[:, 3])[:, None] * b
    e = g * (p4[:, 3] + bp)
    return np.column_stack([p, e])


def make_block(rng, n, channel, mass, p_llp, r=None, r_range=None, cos_range=(-0.6, 0.8),
               z0=0.0):
    """Synthetic truth block (see the module docstring).

    channel is "pipi", "gg" or "pipipi0"; give either a fixed decay radius r
    (cm) or r_range = (lo, hi) for a uniform radius.
    """
    ct = rng.uniform(*cos_range, n)
    st = np.sqrt(1 - ct**2)
    ph = rng.uniform(0, 2 * np.pi, n)
    dirv = np.stack([st * np.cos(ph), st * np.sin(ph), ct], axis=1)
    e_llp = np.sqrt(p_llp**2 + mass**2)
    llp = np.column_stack([dirv * p_llp, np.full(n, e_llp)])
    rad = np.full(n, float(r)) if r is not None else rng.uniform(*r_range, n)
    lab = rad / st
    dv = dirv * lab[:, None]
    dv[:, 2] += z0
    mvec = np.full(n, mass)
    if channel == "pipi":
        a, b = two_body(rng, mvec, M_PI, M_PI)
        parts = [(211, 1.0, 1, -1, boost(a, llp)), (-211, -1.0, 1, -1, boost(b, llp))]
    elif channel == "gg":
        a, b = two_body(rng, mvec, 0.0, 0.0)
        parts = [(22, 0.0, 1, -1, boost(a, llp)), (22, 0.0, 1, -1, boost(b, llp))]
    elif channel == "pipipi0":
        # uniform Dalitz plot: m12^2 with density proportional to its m23^2 range
        m12 = np.empty(n)
        todo = np.arange(n)
        lo, hi = 2 * M_PI, mass - M_PI0
        while todo.size:
            cand = np.sqrt(rng.uniform(lo**2, hi**2, todo.size))
            q12 = np.sqrt(np.maximum(_kallen(cand**2, M_PI**2, M_PI**2), 0)) / cand**2
            q3 = np.sqrt(np.maximum(_kallen(mass**2, cand**2, M_PI0**2), 0))
            w = q12 * q3  # m23^2 range at this m12^2 (PDG review 'Kinematics'), up to a constant
            grid = np.linspace(lo, hi, 2001)[1:-1]
            wmax = np.max(np.sqrt(_kallen(grid**2, M_PI**2, M_PI**2)) / grid**2
                          * np.sqrt(_kallen(mass**2, grid**2, M_PI0**2))) * 1.01
            keep = rng.uniform(0, wmax, todo.size) < w
            m12[todo[keep]] = cand[keep]
            todo = todo[~keep]
        pair, pi0 = two_body(rng, mvec, m12, M_PI0)
        pair_l = boost(pair, llp)
        pi0_l = boost(pi0, llp)
        a, b = two_body(rng, m12, M_PI, M_PI)
        g1, g2 = two_body(rng, np.full(n, M_PI0), 0.0, 0.0)
        parts = [(211, 1.0, 1, -1, boost(a, pair_l)), (-211, -1.0, 1, -1, boost(b, pair_l)),
                 (111, 0.0, 2, -1, pi0_l), (22, 0.0, 1, 2, boost(g1, pi0_l)),
                 (22, 0.0, 1, 2, boost(g2, pi0_l))]
    else:
        raise ValueError(channel)
    k = len(parts)
    cols = {key: np.empty((n, k)) for key in ("px", "py", "pz", "e", "vx", "vy", "vz")}
    ints = {key: np.empty((n, k), dtype=np.int32) for key in ("pdg", "status", "mother")}
    q = np.empty((n, k))
    for j, (pid, ch, stt, mo, p4) in enumerate(parts):
        cols["px"][:, j], cols["py"][:, j], cols["pz"][:, j], cols["e"][:, j] = p4.T
        cols["vx"][:, j], cols["vy"][:, j], cols["vz"][:, j] = dv.T
        ints["pdg"][:, j], ints["status"][:, j], ints["mother"][:, j] = pid, stt, mo
        q[:, j] = ch
    blk = Block(n=n)
    blk.event.update({
        "llp_m": mvec, "llp_px": llp[:, 0], "llp_py": llp[:, 1], "llp_pz": llp[:, 2],
        "llp_e": llp[:, 3], "llp_dx": dv[:, 0], "llp_dy": dv[:, 1], "llp_dz": dv[:, 2],
        "llp_dr": rad, "w_gen": np.ones(n),
    })
    flat = {key: v.reshape(-1) for key, v in cols.items()}
    flat.update({key: v.reshape(-1) for key, v in ints.items()})
    flat["q"] = q.reshape(-1)
    blk.add_group("dau", np.full(n, k), flat)
    return blk
