"""Lorentz boosts, rotations and invariant masses (numba kernels).

Scalar helpers (``*_1``) are ``@njit(inline="always")`` functions of plain
floats, used inside the event kernels; the array functions are thin
vectorised wrappers for users and tests.

Formulas: PDG review "Kinematics", sec. 49.1 (Lorentz transformations):
for a boost with velocity beta (|beta| < 1) and gamma = 1/sqrt(1-beta^2),
    E'   = gamma (E + beta.p)
    p'   = p + [ (gamma - 1)(beta.p)/beta^2 + gamma E ] beta
which takes a four-vector from the rest frame of a system moving with
velocity beta to the frame in which it moves.
"""

import numpy as np
from numba import njit

__all__ = ("boost", "invariant_mass", "boost_1", "boost_gamma_1", "boost_rest_1", "rotate_to_1",
           "frame_rotate_1", "mass_1")


@njit(inline="always", cache=True)
def boost_1(px, py, pz, e, bx, by, bz):
    """Boost (px, py, pz, e) by velocity (bx, by, bz); returns the boosted tuple."""
    b2 = bx * bx + by * by + bz * bz
    if b2 <= 0.0:
        return px, py, pz, e
    g = 1.0 / np.sqrt(1.0 - b2)
    bp = bx * px + by * py + bz * pz
    # (gamma - 1)/beta^2 = gamma^2/(gamma + 1), stable for small beta
    k = g * g / (g + 1.0) * bp + g * e
    return px + k * bx, py + k * by, pz + k * bz, g * (e + bp)


@njit(inline="always", cache=True)
def boost_gamma_1(px, py, pz, e, bx, by, bz, g, g2):
    """:func:`boost_1` with gamma ``g`` and ``g2 = g^2/(g + 1)`` precomputed (no sqrt)."""
    bp = bx * px + by * py + bz * pz
    k = g2 * bp + g * e
    return px + k * bx, py + k * by, pz + k * bz, g * (e + bp)


@njit(inline="always", cache=True)
def boost_rest_1(qx, qy, qz, qe, px, py, pz, pe, f, im):
    """Boost q from the rest frame of a particle P of mass M to the frame where it has P.

    The same Lorentz transformation as :func:`boost_1` with beta = P/E_P and
    gamma = E_P/M substituted, so that no square root is needed:
        E'  = (E_P q_e + P.q) / M
        q'  = q + P [ (P.q)/(E_P + M) + q_e ] / M
    (from gamma^2/(gamma + 1) beta.q = E_P (P.q) / (M (E_P + M))).  The caller
    passes ``f = 1/(E_P + M)`` and ``im = 1/M``, so daughters of one parent
    share the divisions.  A boost by -P (``px, py, pz`` negated) takes lab
    vectors into the rest frame of P.
    """
    pq = px * qx + py * qy + pz * qz
    k = (pq * f + qe) * im
    return qx + k * px, qy + k * py, qz + k * pz, (pe * qe + pq) * im


@njit(inline="always", cache=True)
def frame_rotate_1(px, py, pz, nx, ny, nz):
    """Rotate a vector given in a right-handed frame whose z axis is the unit vector n.

    Branch-free orthonormal basis (b1, b2, n) with s = sign(n_z),
    a = -1/(s + n_z), b = n_x n_y a:
        b1 = (1 + s n_x^2 a, s b, -s n_x),   b2 = (b, s + n_y^2 a, -n_y)
    ("Building an orthonormal basis, revisited", J. Computer Graphics
    Techniques 6 (2017) no. 1; orthonormality and b1 x b2 = n are checked in
    tests/physics/test_kinematics.py).  One division, no square root; used where only
    the relative orientation matters (the azimuth about n is uniform).
    """
    s = 1.0 if nz >= 0.0 else -1.0
    a = -1.0 / (s + nz)
    b = nx * ny * a
    b1x, b1y, b1z = 1.0 + s * nx * nx * a, s * b, -s * nx
    b2x, b2y, b2z = b, s + ny * ny * a, -ny
    return (px * b1x + py * b2x + pz * nx,
            px * b1y + py * b2y + pz * ny,
            px * b1z + py * b2z + pz * nz)


@njit(inline="always", cache=True)
def rotate_to_1(px, py, pz, nx, ny, nz):
    """Rotate a vector given in a frame whose z axis is the unit vector n.

    The frame's x axis is chosen perpendicular to n (and to the lab y axis
    unless n is along it); only relative orientations of the sampled
    azimuths matter, which are uniform.  Returns the vector in the lab axes.
    """
    # build e1 perpendicular to n
    if abs(nz) < 0.9:
        # e1 = normalise(z_hat x n) ... use (-ny, nx, 0)
        a = np.sqrt(nx * nx + ny * ny)
        e1x, e1y, e1z = -ny / a, nx / a, 0.0
    else:
        a = np.sqrt(ny * ny + nz * nz)
        e1x, e1y, e1z = 0.0, nz / a, -ny / a
    # e2 = n x e1
    e2x = ny * e1z - nz * e1y
    e2y = nz * e1x - nx * e1z
    e2z = nx * e1y - ny * e1x
    return (
        px * e1x + py * e2x + pz * nx,
        px * e1y + py * e2y + pz * ny,
        px * e1z + py * e2z + pz * nz,
    )


@njit(inline="always", cache=True)
def mass_1(px, py, pz, e):
    """Invariant mass sqrt(max(E^2 - p^2, 0))."""
    m2 = e * e - (px * px + py * py + pz * pz)
    return np.sqrt(m2) if m2 > 0.0 else 0.0


@njit(cache=True)
def _boost_arrays(px, py, pz, e, bx, by, bz, out):
    for i in range(px.shape[0]):
        out[0, i], out[1, i], out[2, i], out[3, i] = boost_1(
            px[i], py[i], pz[i], e[i], bx[i], by[i], bz[i]
        )


def boost(px, py, pz, e, bx, by, bz):
    """Boost four-vectors (arrays, GeV) by velocities (arrays, units of c).

    Returns
    -------
    tuple of four float64 arrays (px, py, pz, e) in the new frame.
    """
    arrs = np.broadcast_arrays(*(np.asarray(a, dtype=np.float64) for a in (px, py, pz, e, bx, by, bz)))
    arrs = [np.ascontiguousarray(a).ravel() for a in arrs]
    out = np.empty((4, arrs[0].shape[0]))
    _boost_arrays(*arrs, out)
    return out[0], out[1], out[2], out[3]


def invariant_mass(px, py, pz, e):
    """Invariant mass (GeV) of four-vectors given as arrays in GeV."""
    px, py, pz, e = (np.asarray(a, dtype=np.float64) for a in (px, py, pz, e))
    m2 = e * e - (px * px + py * py + pz * pz)
    return np.sqrt(np.clip(m2, 0.0, None))
