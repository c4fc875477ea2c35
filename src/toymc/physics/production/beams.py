"""Asymmetric e+e- beams: centre-of-mass energy, boost and luminous region.

The e- beam travels towards +z and the e+ beam towards -z; with a full
crossing angle alpha both are tilted by alpha/2 towards +x in the xz plane,
so the collision frame moves along (sin(alpha/2)(E- + E+), 0, cos(alpha/2)(E- - E+)).
Beams are massless here (m_e/E ~ 1e-4): s = 2 E- E+ (1 + cos alpha).
The primary vertex is Gaussian with widths (sigma_x, sigma_y, sigma_z);
the beam-energy spread is not modelled.
"""

from dataclasses import dataclass

import numpy as np

from toymc.physics.kinematics.elementary import sincos_1
from toymc.physics.kinematics.lorentz import boost

__all__ = ("Beams",)


@dataclass(frozen=True)
class Beams:
    """Beam energies (GeV), full crossing angle (rad) and luminous-region widths (cm)."""

    e_minus: float
    e_plus: float
    crossing_angle: float = 0.0
    sigma_x: float = 0.0
    sigma_y: float = 0.0
    sigma_z: float = 0.0

    def four_momenta(self):
        """Lab four-momenta (px, py, pz, E) of the e- and e+ beams, GeV."""
        h = 0.5 * self.crossing_angle
        sh, ch = sincos_1(h)  # same bits on every CPU (toymc.physics.kinematics.elementary)
        em = np.array([self.e_minus * sh, 0.0, self.e_minus * ch, self.e_minus])
        ep = np.array([self.e_plus * sh, 0.0, -self.e_plus * ch, self.e_plus])
        return em, ep

    @property
    def total(self):
        em, ep = self.four_momenta()
        return em + ep

    @property
    def sqrt_s(self):
        """Centre-of-mass energy, GeV."""
        p = self.total
        return float(np.sqrt(p[3] ** 2 - p[0] ** 2 - p[1] ** 2 - p[2] ** 2))

    @property
    def beta(self):
        """Velocity (units of c) of the collision frame in the lab."""
        p = self.total
        return p[:3] / p[3]

    def electron_direction_cm(self):
        """Unit vector of the e- beam in the collision frame (axes parallel to the lab's)."""
        em, _ = self.four_momenta()
        b = self.beta
        px, py, pz, _e = boost(em[0], em[1], em[2], em[3], -b[0], -b[1], -b[2])
        v = np.array([px[0], py[0], pz[0]])
        return v / np.linalg.norm(v)

    @property
    def sigmas(self):
        return np.array([self.sigma_x, self.sigma_y, self.sigma_z])
