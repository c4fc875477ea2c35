"""Axion-like particles (ALPs): partial widths, branching fractions, c*tau.

Two benchmark couplings, each a pure function of numbers (numpy-vectorised in
the mass):

Photon-coupled ALP
    L = -(g_agg/4) a F_{mu nu} Fdual^{mu nu},  g_agg in GeV^-1.
    Gamma(a -> gamma gamma) = g_agg^2 m_a^3 / (64 pi)
    (PDG review "Axions and other similar particles"; derived from the
    polarisation sum in ``tests/physics/models/test_alp.py``).

Gluon-coupled ALP
    L = (alpha_s / (8 pi)) (a / f) G^b_{mu nu} Gdual^{b mu nu},  f in GeV
    (the normalisation of the QCD axion with f = f_a).  In the convention of
    arXiv:1708.00443, L = g_s^2 C_GG (a/Lambda) G Gdual, this is
    C_GG / Lambda = 1 / (32 pi^2 f).

    Leading-order two-flavour chiral perturbation theory, in the quark basis
    without a-pi0 mass mixing (axial rotation kappa_q proportional to 1/m_q),
    delta = (m_d - m_u)/(m_d + m_u), F = f_pi/sqrt(2) ~ 92 MeV,
    s = m^2(pi+ pi-), r = m_pi^2/m_a^2:

    * A(a -> pi+ pi- pi0) = K (s - m_pi^2)/(m_a^2 - m_pi^2),
      A(a -> 3 pi0) = K m_a^2/(m_a^2 - m_pi^2),  K = m_pi^2 delta/(2 f F);
      the two obey the Delta I = 1 relation A_000 = A(s) + A(t) + A(u).  Both
      are re-derived from the LO chiral Lagrangian in
      ``tests/physics/models/test_alp_chiral_derivation.py``.
    * Gamma(pi+ pi- pi0) = P g_+-(r),  Gamma(3 pi0) = P g_00(r) (1/3! included),
      P = m_a m_pi^4 delta^2 / (12288 pi^3 f^2 F^2); this equals the
      arXiv:1708.00443 result (pi/6) m_a m_pi^4 [C_GG delta]^2 g/(Lambda^2 f_pi^2)
      with f_pi = sqrt(2) F ~ 130 MeV and Lambda = 32 pi^2 C_GG f.
    * induced photon coupling (pi0 mixing plus the chiral-rotation anomaly term):
      |g_agg| = (alpha / (2 pi f)) |5/3 + delta m_pi0^2/(m_pi0^2 - m_a^2)|
      (arXiv:1708.00443, C_gg^eff for C_gg = 0, two-flavour form, from memory;
      the m_a -> 0 limit 5/3 + delta is the LO value of the QCD-axion
      coefficient, 1.92 at next-to-leading order).

Pion masses: the amplitude normalisation K uses m_pi0 (the pion mass without
its electromagnetic shift is close to m_pi0); the phase space uses
r = m_pi+^2/m_a^2 in g_+- (so that the channel never opens below 3 m_pi+, a
slightly conservative threshold, 4.6 MeV above 2 m_pi+ + m_pi0) and
r = m_pi0^2/m_a^2 in g_00.  Quark masses m_u, m_d are the PDG quark-mass
review values (MS-bar at 2 GeV) read from `particle` through
:func:`toymc.physics.constants.mass`; F = 130.2 MeV/sqrt(2) is the PDG review
"Leptonic decays of charged pseudoscalar mesons" value (from memory).

Validity (a :class:`ModelValidityWarning` is emitted outside it):

* m_a <= ``GLUON_ALP_MAX_MASS`` = 1 GeV.  Above it the LO expressions are
  used unchanged (they grow ~ m_a g(r), i.e. almost linearly in m_a, because
  g -> 1); channels that open above ~1 GeV (eta pi pi, K Kbar pi, gluon
  jets) are not included.  Even below 1 GeV the LO result is only a
  rough guide: the chiral expansion fails soon above the 3 pi threshold
  (arXiv:2206.04061), and the eta (not in the two-flavour theory) matters
  near m_a ~ m_eta; see arXiv:2012.12272 for a full treatment.
* perturbative a-pi0 mixing: theta = (F/(2f)) delta m_a^2/|m_a^2 - m_pi0^2| < 0.1.

Decay channels (keys of the width dicts): ``"gamma_gamma"``, ``"pi_pi_pi0"``
(pi+ pi- pi0), ``"pi0_pi0_pi0"``.
"""

import math as _math
import warnings as _warnings

import numpy as _np
from numba.extending import register_jitable as _register_jitable

from toymc.errors import ConfigError as _ConfigError
from toymc.physics import constants as _const
from toymc.physics.kinematics.threebody import pipipi0_msq as _pipipi0_msq
from toymc.physics.models._common import as_coupling as _as_coupling
from toymc.physics.models._common import as_mass as _as_mass
from toymc.physics.models._common import branching_fractions as _branching_fractions
from toymc.physics.models._common import ctau_from_width as _ctau_from_width
from toymc.physics.models._common import total_width as _total_width
from toymc.physics.models.three_pion import g00 as _g00
from toymc.physics.models.three_pion import gpm_physical as _gpm_physical

__all__ = (
    "F_PI_DEFAULT",
    "GLUON_ALP_MAX_MASS",
    "MIXING_ANGLE_MAX",
    "ModelValidityWarning",
    "branching_fractions",
    "ctau",
    "gluon_alp_mixing_angle",
    "gluon_alp_photon_coupling",
    "gluon_alp_widths",
    "isospin_delta",
    "photon_alp_widths",
    "pipipi0_weight",
    "pipipi0_weight_max",
    "width_3pi0",
    "width_gamma_gamma",
    "width_pipipi0",
)


class ModelValidityWarning(UserWarning):
    """A model is evaluated outside the range in which its formulas hold."""


#: upper end of the leading-order chiral description of the gluon-coupled ALP, GeV
GLUON_ALP_MAX_MASS = 1.0
#: largest a-pi0 mixing angle treated as perturbative (warning above)
MIXING_ANGLE_MAX = 0.1
#: F = f_pi/sqrt(2) in GeV, f_pi+ = 130.2 MeV (PDG review "Leptonic decays of
#: charged pseudoscalar mesons", from memory)
F_PI_DEFAULT = 0.1302 / _math.sqrt(2.0)

_M_PI = _const.M_PI
_M_PI0 = _const.M_PI0


def isospin_delta(m_u=None, m_d=None):
    """Isospin-breaking ratio delta = (m_d - m_u)/(m_d + m_u).

    Parameters
    ----------
    m_u, m_d : float, optional
        Light-quark masses (any common unit).  Default: the PDG quark-mass
        review values (MS-bar at 2 GeV) from `particle`, via
        :func:`toymc.physics.constants.mass` (PDG ids 2 and 1).

    Returns
    -------
    float
    """
    m_u = _const.mass(2) if m_u is None else float(m_u)
    m_d = _const.mass(1) if m_d is None else float(m_d)
    return (m_d - m_u) / (m_d + m_u)


# --- photon coupling ---------------------------------------------------------------------
def width_gamma_gamma(m, g_agg):
    """Gamma(a -> gamma gamma) = g_agg^2 m^3/(64 pi) in GeV.

    For L = -(g_agg/4) a F Fdual (PDG review "Axions and other similar
    particles"; derived from the photon polarisation sum in the tests).

    Parameters
    ----------
    m : array_like
        ALP mass in GeV (> 0).
    g_agg : array_like
        Photon coupling magnitude in GeV^-1 (>= 0).

    Returns
    -------
    numpy.ndarray
        Width in GeV.
    """
    m = _as_mass(m, "alp.mass")
    g = _as_coupling(g_agg, "alp.g_agg", unit="GeV^-1")
    return g * g * m**3 / (64.0 * _math.pi)


def photon_alp_widths(m, g_agg):
    """Partial widths of the photon-coupled ALP: ``{"gamma_gamma": Gamma}`` in GeV.

    Parameters
    ----------
    m : array_like
        ALP mass in GeV.
    g_agg : array_like
        Photon coupling in GeV^-1 (L = -(g_agg/4) a F Fdual).

    Returns
    -------
    dict
    """
    return {"gamma_gamma": width_gamma_gamma(m, g_agg)}


# --- gluon coupling ----------------------------------------------------------------------
def _delta(delta):
    return isospin_delta() if delta is None else float(delta)


def _check_f(f):
    arr = _np.asarray(f, dtype=_np.float64)
    bad = ~_np.isfinite(arr) | (arr <= 0.0)
    if _np.any(bad):
        raise _ConfigError(None, "alp.f", arr[bad].flat[0].item(), "a finite scale f > 0 in GeV")
    return arr


def _mixing_angle(m, f, delta, fpi):
    m2, mp2 = m * m, _M_PI0 * _M_PI0
    with _np.errstate(divide="ignore"):
        return _np.abs(fpi / (2.0 * f) * delta * m2 / (m2 - mp2))


def _warn_validity(m, f, delta, fpi):
    m = _np.asarray(m)
    if _np.any(m > GLUON_ALP_MAX_MASS):
        _warnings.warn(
            f"gluon-coupled ALP: leading-order chiral widths are valid for m_a <= "
            f"{GLUON_ALP_MAX_MASS} GeV; got m_a = {float(_np.max(m))} GeV (LO formulas "
            "extrapolated, channels opening above 1 GeV not included)",
            ModelValidityWarning,
            stacklevel=3,
        )
    theta = _mixing_angle(m, f, delta, fpi)
    if _np.any(theta > MIXING_ANGLE_MAX):
        _warnings.warn(
            f"gluon-coupled ALP: a-pi0 mixing angle {float(_np.max(theta)):.3g} > "
            f"{MIXING_ANGLE_MAX} (m_a too close to m_pi0 for f): mixing not perturbative",
            ModelValidityWarning,
            stacklevel=3,
        )


def _photon_coupling(m, f, delta):
    mp2 = _M_PI0 * _M_PI0
    with _np.errstate(divide="ignore"):
        c = 5.0 / 3.0 + delta * mp2 / (mp2 - m * m)
    return _const.ALPHA_EM / (2.0 * _math.pi * f) * _np.abs(c)


def _prefactor(m, f, delta, fpi):
    return m * _M_PI0**4 * delta**2 / (12288.0 * _math.pi**3 * f**2 * fpi**2)


def _w_pipipi0(m, f, delta, fpi):
    return _prefactor(m, f, delta, fpi) * _gpm_physical(m)


def _w_3pi0(m, f, delta, fpi):
    return _prefactor(m, f, delta, fpi) * _g00((_M_PI0 / m) ** 2)


def gluon_alp_mixing_angle(m, f, delta=None, fpi=F_PI_DEFAULT):
    """LO a-pi0 mixing angle theta = (F/(2f)) delta m_a^2/|m_a^2 - m_pi0^2|.

    In the quark basis without a-pi0 mass mixing (the basis of this module);
    the angle is basis dependent, only amplitudes are physical.  Used as the
    perturbativity criterion (theta < ``MIXING_ANGLE_MAX``).

    Parameters
    ----------
    m : array_like
        ALP mass in GeV.
    f : array_like
        Scale f in GeV of L = (alpha_s/(8 pi)) (a/f) G Gdual.
    delta : float, optional
        (m_d - m_u)/(m_d + m_u); default :func:`isospin_delta`.
    fpi : float
        F = f_pi/sqrt(2) in GeV.

    Returns
    -------
    numpy.ndarray
    """
    m = _as_mass(m, "alp.mass")
    return _mixing_angle(m, _check_f(f), _delta(delta), float(fpi))


def gluon_alp_photon_coupling(m, f, delta=None):
    """Induced photon coupling |g_agg| in GeV^-1 of the gluon-coupled ALP (LO).

    |g_agg| = (alpha/(2 pi f)) |5/3 + delta m_pi0^2/(m_pi0^2 - m_a^2)|,
    from C_gg^eff of arXiv:1708.00443 (two-flavour LO, from memory) with
    C_GG/Lambda = 1/(32 pi^2 f) and g_agg = 16 pi alpha C_gg^eff/Lambda.
    The 5/3 + delta piece is 2 N_c Tr(kappa Q^2) of the axial rotation
    kappa_q = m_q^-1/sum(m^-1) (derived in the tests).  Near m_a = m_pi0 the
    expression has a pole: check :func:`gluon_alp_mixing_angle`.

    Parameters
    ----------
    m : array_like
        ALP mass in GeV.
    f : array_like
        Scale f in GeV.
    delta : float, optional
        (m_d - m_u)/(m_d + m_u); default :func:`isospin_delta`.

    Returns
    -------
    numpy.ndarray
        |g_agg| in GeV^-1.
    """
    m = _as_mass(m, "alp.mass")
    return _photon_coupling(m, _check_f(f), _delta(delta))


def width_pipipi0(m, f, delta=None, fpi=F_PI_DEFAULT):
    """Gamma(a -> pi+ pi- pi0) in GeV, leading-order chiral perturbation theory.

    Gamma = m_a m_pi0^4 delta^2/(12288 pi^3 f^2 F^2) G(m_a)
    (arXiv:1708.00443 with f_pi = sqrt(2) F and Lambda = 32 pi^2 C_GG f; see
    the module docstring for the conventions), with G = :func:`gpm_physical`: the
    phase space of pi+ pi- pi0 with the physical pi0 mass (the paper's g_+-(m_pi^2/m_a^2)
    takes three equal masses, which near threshold halves the width and shifts the
    threshold from 2 m_pi+ + m_pi0 = 0.4141 GeV to 3 m_pi+ = 0.4187 GeV).  No validity warning here:
    :func:`gluon_alp_widths` checks the range.

    Parameters
    ----------
    m : array_like
        ALP mass in GeV.
    f : array_like
        Scale f in GeV.
    delta : float, optional
        (m_d - m_u)/(m_d + m_u); default :func:`isospin_delta`.
    fpi : float
        F = f_pi/sqrt(2) in GeV (default 92.1 MeV).

    Returns
    -------
    numpy.ndarray
    """
    m = _as_mass(m, "alp.mass")
    return _w_pipipi0(m, _check_f(f), _delta(delta), float(fpi))


def width_3pi0(m, f, delta=None, fpi=F_PI_DEFAULT):
    """Gamma(a -> 3 pi0) in GeV, leading-order chiral perturbation theory.

    Gamma = m_a m_pi0^4 delta^2/(12288 pi^3 f^2 F^2) g_00(m_pi0^2/m_a^2), the
    1/3! for identical pions included (arXiv:1708.00443 conventions as in
    :func:`width_pipipi0`).

    Parameters
    ----------
    m, f, delta, fpi
        As in :func:`width_pipipi0`.

    Returns
    -------
    numpy.ndarray
    """
    m = _as_mass(m, "alp.mass")
    return _w_3pi0(m, _check_f(f), _delta(delta), float(fpi))


def gluon_alp_widths(m, f, delta=None, fpi=F_PI_DEFAULT):
    """Partial widths of the gluon-coupled ALP in GeV.

    Channels ``"gamma_gamma"`` (induced coupling :func:`gluon_alp_photon_coupling`),
    ``"pi_pi_pi0"`` (:func:`width_pipipi0`) and ``"pi0_pi0_pi0"``
    (:func:`width_3pi0`).  Emits :class:`ModelValidityWarning` for
    m_a > ``GLUON_ALP_MAX_MASS`` or a non-perturbative a-pi0 mixing angle.

    Parameters
    ----------
    m : array_like
        ALP mass in GeV.
    f : array_like
        Scale f in GeV of L = (alpha_s/(8 pi)) (a/f) G Gdual.
    delta : float, optional
        (m_d - m_u)/(m_d + m_u); default :func:`isospin_delta`.
    fpi : float
        F = f_pi/sqrt(2) in GeV.

    Returns
    -------
    dict
        channel -> width (numpy.ndarray, GeV).
    """
    m = _as_mass(m, "alp.mass")
    f = _check_f(f)
    d = _delta(delta)
    fpi = float(fpi)
    _warn_validity(m, f, d, fpi)
    g = _photon_coupling(m, f, d)
    return {
        "gamma_gamma": g * g * m**3 / (64.0 * _math.pi),
        "pi_pi_pi0": _w_pipipi0(m, f, d, fpi),
        "pi0_pi0_pi0": _w_3pi0(m, f, d, fpi),
    }


def branching_fractions(widths):
    """Branching fractions from a dict of partial widths (channel -> GeV).

    Parameters
    ----------
    widths : dict
        As returned by :func:`photon_alp_widths` or :func:`gluon_alp_widths`.

    Returns
    -------
    dict
        channel -> branching fraction (sums to 1 where the total width > 0).
    """
    return _branching_fractions(widths)


def ctau(widths):
    """Proper decay length c*tau = hbar c/Gamma_total in cm from a dict of partial widths.

    Parameters
    ----------
    widths : dict
        channel -> width in GeV.

    Returns
    -------
    numpy.ndarray
        c*tau in cm (inf where the total width is 0).
    """
    return _ctau_from_width(_total_width(widths))


# --- Dalitz weight of a -> pi+ pi- pi0 ---------------------------------------------------
@_register_jitable
def pipipi0_weight(s, m_pi=_M_PI):
    """Matrix-element weight |A|^2 ~ (s - m_pi^2)^2 of a -> pi+ pi- pi0, in GeV^4.

    From A = K (s - m_pi^2)/(m_a^2 - m_pi^2) (LO chiral perturbation theory,
    arXiv:1708.00443 conventions; see the module docstring), s = m^2(pi+ pi-)
    in GeV^2.  The Dalitz density is phase space (uniform in s, t) times this
    weight, the one of the generator's matrix-element code 1
    (:func:`toymc.physics.kinematics.threebody.pipipi0_msq`).  Callable from
    Python on arrays and from numba-compiled code.

    Parameters
    ----------
    s : float or numpy.ndarray
        m^2(pi+ pi-) in GeV^2.
    m_pi : float
        Pion mass in GeV in the amplitude (default m_pi+, as in :func:`gpm`).

    Returns
    -------
    float or numpy.ndarray
    """
    return _pipipi0_msq(s, m_pi * m_pi)


@_register_jitable
def pipipi0_weight_max(m_a, m_pi=_M_PI, m_pi0=_M_PI0):
    """Maximum of :func:`pipipi0_weight` over the Dalitz plot, at s = (m_a - m_pi0)^2.

    Parameters
    ----------
    m_a : float
        ALP mass in GeV (above 2 m_pi+ + m_pi0).
    m_pi, m_pi0 : float
        Pion masses in GeV.

    Returns
    -------
    float
        In GeV^4; use as the envelope of an accept-reject step.
    """
    return _pipipi0_msq((m_a - m_pi0) ** 2, m_pi * m_pi)
