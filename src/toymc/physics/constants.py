"""PDG values used by toymc, read from the `particle` package once, on import.

`particle` gives masses and widths in MeV and c*tau in mm; they are converted
here, once, to GeV and cm.  No mass, width or lifetime is typed by hand
anywhere else in toymc: take it from this module.

Physical constants come from `hepunits` and `scipy.constants` (CODATA values).
"""

from functools import lru_cache as _lru_cache

import hepunits as _u
from hepunits import constants as _c
from particle import Particle as _Particle
from scipy import constants as _sc

__all__ = (
    "mass",
    "width",
    "ctau",
    "charge",
    "HBARC_GEV_CM",
    "FB_PER_INV_GEV2",
    "ALPHA_EM",
    "C_LIGHT_CM_NS",
    "BR_PI0_GG",
    "PDG",
    "M_E",
    "M_MU",
    "M_PI",
    "M_PI0",
    "M_K",
    "M_K0",
    "M_KST0",
    "M_KSTP",
    "G_KST0",
    "G_KSTP",
    "M_B",
    "M_B0",
    "CTAU_B",
    "CTAU_B0",
    "M_UPS4S",
    "M_KS",
    "CTAU_KS",
    "M_KL",
    "CTAU_KL",
    "M_LAMBDA",
    "CTAU_LAMBDA",
    "M_P",
)

#: PDG Monte Carlo particle numbers used by toymc
PDG = {
    "gamma": 22,
    "e-": 11,
    "mu-": 13,
    "pi+": 211,
    "pi0": 111,
    "K+": 321,
    "K0": 311,
    "K(S)0": 310,
    "K(L)0": 130,
    "K*(892)0": 313,
    "K*(892)+": 323,
    "B+": 521,
    "B0": 511,
    "Upsilon(4S)": 300553,
    "Lambda": 3122,
    "p": 2212,
}


@_lru_cache(maxsize=None)
def _particle(pdgid):
    return _Particle.from_pdgid(pdgid)


def mass(pdgid):
    """PDG mass of `pdgid` in GeV."""
    return float(_particle(abs(pdgid)).mass) * _u.MeV / _u.GeV


def width(pdgid):
    """PDG total width of `pdgid` in GeV (0 for stable particles)."""
    w = _particle(abs(pdgid)).width
    return 0.0 if w is None else float(w) * _u.MeV / _u.GeV


def ctau(pdgid):
    """PDG proper decay length c*tau of `pdgid` in cm (inf for stable particles)."""
    p = _particle(abs(pdgid))
    if p.width is None or p.width <= 0:
        return float("inf")
    return float(p.ctau) * _u.mm / _u.cm


def charge(pdgid):
    """Electric charge of `pdgid` in units of e."""
    p = _particle(abs(pdgid))
    return float(p.charge) * (1 if pdgid > 0 else -1)


#: hbar*c in GeV cm
HBARC_GEV_CM = _c.hbarc / (_u.GeV * _u.cm)
#: 1 GeV^-2 in fb (cross-sections): (hbar c)^2 in GeV^2 cm^2 over 1 fb = 1e-39 cm^2
FB_PER_INV_GEV2 = HBARC_GEV_CM**2 / 1e-39
#: fine-structure constant at zero momentum transfer (CODATA, via scipy.constants)
ALPHA_EM = _sc.fine_structure
#: speed of light in cm/ns
C_LIGHT_CM_NS = _c.c_light / (_u.cm / _u.ns)
#: BR(pi0 -> gamma gamma) (PDG listing: (98.823 +- 0.034) %, from memory; `particle` has no
#: branching fractions).  The generator decays every pi0 to two photons, so every yield of a
#: final state with pi0s carries this factor once per pi0 (physics.channels.Channel.forced_br).
BR_PI0_GG = 0.98823

M_E = mass(11)
M_MU = mass(13)
M_PI = mass(211)
M_PI0 = mass(111)
M_K = mass(321)
M_K0 = mass(311)
M_KST0 = mass(313)
M_KSTP = mass(323)
G_KST0 = width(313)
G_KSTP = width(323)
M_B = mass(521)
M_B0 = mass(511)
CTAU_B = ctau(521)
CTAU_B0 = ctau(511)
M_UPS4S = mass(300553)
M_KS = mass(310)
CTAU_KS = ctau(310)
M_KL = mass(130)
CTAU_KL = ctau(130)
M_LAMBDA = mass(3122)
CTAU_LAMBDA = ctau(3122)
M_P = mass(2212)
