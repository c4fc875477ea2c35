"""Two-body decays in the parent rest frame.

PDG review "Kinematics", sec. 49.4.2: for M -> m1 m2,
    p* = sqrt(lambda(M^2, m1^2, m2^2)) / (2 M),
    E1* = (M^2 + m1^2 - m2^2) / (2 M),
with the Kallen function lambda(x, y, z) = x^2 + y^2 + z^2 - 2xy - 2yz - 2zx.
"""

import numpy as np
from numba import njit
from numba.extending import register_jitable

__all__ = ("kallen", "pstar", "pstar_1", "decay2_1")


@register_jitable(inline="always")
def kallen(x, y, z):
    """Kallen triangle function lambda(x, y, z) = x^2 + y^2 + z^2 - 2xy - 2yz - 2zx.

    The one definition: kernels call it (inlined), Python code calls it on floats or
    numpy arrays of float64 (GeV^4 for masses squared).
    """
    return x * x + y * y + z * z - 2.0 * (x * y + y * z + z * x)


@njit(inline="always", cache=True)
def pstar_1(m, m1, m2):
    """Daughter momentum (GeV) in the rest frame of a parent of mass m (GeV); 0 below threshold."""
    lam = kallen(m * m, m1 * m1, m2 * m2)
    return np.sqrt(lam) / (2.0 * m) if lam > 0.0 else 0.0


def pstar(m, m1, m2):
    """Array version of :func:`pstar_1`: two-body momentum p* in GeV."""
    m, m1, m2 = (np.asarray(a, dtype=np.float64) for a in (m, m1, m2))
    lam = kallen(m * m, m1 * m1, m2 * m2)
    return np.sqrt(np.clip(lam, 0.0, None)) / (2.0 * m)


@njit(inline="always", cache=True)
def decay2_1(m, m1, m2, cost, phi):
    """Momenta of daughter 1 (px, py, pz, e1) and e2 in the parent rest frame.

    Daughter 1 is emitted at polar cosine `cost` and azimuth `phi` of the
    frame in which the caller samples the angles; daughter 2 is back to back.
    """
    p = pstar_1(m, m1, m2)
    sint = np.sqrt(max(0.0, 1.0 - cost * cost))
    px = p * sint * np.cos(phi)
    py = p * sint * np.sin(phi)
    pz = p * cost
    e1 = np.sqrt(p * p + m1 * m1)
    e2 = np.sqrt(p * p + m2 * m2)
    return px, py, pz, e1, e2
