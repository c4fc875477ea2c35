"""Light vector bosons V: couplings, partial widths, branching fractions, c*tau, e+e- -> gamma V.

Conventions
-----------
V couples to each fermion through L = sum_f c_f V_mu fbar gamma^mu f, with a
dimensionless coupling per fermion

    c_f = g x_f + eps e Q_f          (charged fermions; vector coupling),
    c_nu = g x_nu                    (left-handed neutrinos only: nubar gamma^mu P_L nu),

g >= 0 the gauge coupling, x_f the charges, eps the kinetic mixing with the
photon and e = sqrt(4 pi alpha) (alpha = alpha(0), ``toymc.physics.constants.ALPHA_EM``).
Fermion names: ``FERMIONS`` = e, mu, tau, nu_e, nu_mu, nu_tau, u, d, s, c, b.
Any other name raises :class:`toymc.errors.ConfigError`.

Named models (``MODEL_CHARGES``; :func:`model_couplings`):

* ``dark_photon``: x_f = e Q_f, so that with g = eps the couplings are eps e Q_f
  (arXiv:0906.0580, arXiv:0903.0363); no neutrino coupling at O(eps) for m << m_Z.
* ``b_minus_l``: x_q = 1/3, x_l = x_nu = -1.
* ``le_minus_lmu``, ``le_minus_ltau``, ``lmu_minus_ltau``: x = +1 for the first
  lepton doublet, -1 for the second.  L_mu - L_tau has no tree-level electron
  coupling; by default it gets the one-loop (mu, tau) kinetic mixing at q^2 = 0,
  eps = -(e g/(6 pi^2)) ln(m_tau/m_mu) ~ -g/70 (:func:`lmu_ltau_loop_mixing`,
  derived from the vacuum-polarisation mixing; cf. arXiv:1803.05466, from memory).
* ``protophobic``: x_u = x_c = -1/3, x_d = x_s = x_b = +2/3 (zero proton charge
  2 x_u + x_d = 0, neutron charge 1), the quark assignment of arXiv:1604.07411
  (from memory, extended to all generations here); lepton charges are free
  parameters of that model and default to 0 here: set them with keyword
  arguments of :func:`model_couplings` (e.g. ``e=-1e-3 / g``).

Widths (m = mass of V, y = m_f^2/m^2)
-------------------------------------
* leptons: Gamma(l l) = c_l^2 m/(12 pi) (1 + 2 y) sqrt(1 - 4 y), i.e.
  (alpha eps^2 m/3)(1 + 2y) sqrt(1 - 4y) for the dark photon (arXiv:0906.0580).
* neutrinos: Gamma(nu nubar) = c_nu^2 m/(24 pi) per flavour (left-handed only),
  summed over flavours in ``"nu_nu"``.
* hadrons: Gamma_had = (alpha m/3) R_V(m^2), the massless Gamma(mu mu)-like
  factor times an R-ratio R_V for the couplings of V (PDG review "Plots of cross
  sections and related quantities", R = sigma(e+e- -> hadrons)/sigma_mumu with
  sigma_mumu = 4 pi alpha^2/(3 s)).  R is a toy parametrisation (:func:`r_ratio`):

  - rho(770), omega(782), phi(1020) as an incoherent sum of Breit-Wigner
    peaks normalised to the narrow-resonance peak R_peak = 9 B_ee/alpha^2
    (peak sigma = 12 pi B_ee B_had/M^2, B_had = 1):
    R_V(s) = R_peak phi_V(s) M^2 Gamma^2/((s - M^2)^2 + M^2 Gamma_V(s)^2).
    For the rho, phi(s) = (beta/beta_M)^3 and Gamma(s) = Gamma (M/sqrt s)(p(s)/p(M))^3
    (p-wave pi pi; this is the pion form factor |F_pi|^2 beta^3/4 with
    |F_pi|^2 ~ M^4/((s - M^2)^2 + M^2 Gamma(s)^2) scaled to the measured peak),
    zero below 2 m_pi; omega and phi have a constant width and phi = 1 above
    the 3 pi threshold.  M and Gamma from `particle`; B_ee from the PDG
    listings (from memory, ``VMD_BEE``).  Interference (e.g. rho-omega) and the
    excited states rho(1450), ... are neglected.
  - a continuum 3 sum_q r_q^2 (1 + alpha_s/pi) (PDG review "Quantum
    chromodynamics", R at O(alpha_s)): u, d, s switched on by a logistic step
    T = 1/(1 + exp(-(sqrt s - 1.2 GeV)/0.05 GeV)), c and b with the
    velocity factor beta(3 - beta^2)/2 above 2 m_D0 and 2 m_B0; alpha_s at
    one loop from alpha_s(m_Z) = 0.1180 (PDG QCD review, from memory) with
    flavour thresholds at the PDG m_c, m_b, frozen below 1 GeV.  The resonances
    are multiplied by (1 - T), so the continuum takes over above ~1.3 GeV.
    Narrow charmonium and bottomonium states are not included.

  For general couplings (r_q = c_q/e) each piece is rescaled by the ratio of the
  V current to the electromagnetic current in its isospin channel: rho by
  (r_u - r_d)^2/(Q_u - Q_d)^2, omega by (r_u + r_d)^2/(Q_u + Q_d)^2, phi by
  r_s^2/Q_s^2, and the continuum sum uses r_q^2 directly (the vector-meson
  dominance scaling of arXiv:1801.04847, from memory).  For the dark photon this
  is exactly eps^2 R.
* channels: ``"pi_pi"`` is the rho part (pi+ pi-, dominant below ~1 GeV),
  ``"hadrons"`` is all other hadronic final states (omega, phi, continuum), so
  that the branching fractions of ``"e_e"``, ``"mu_mu"``, ``"tau_tau"``,
  ``"nu_nu"``, ``"pi_pi"``, ``"hadrons"`` sum to one; the total hadronic width
  is ``pi_pi + hadrons`` (:func:`hadronic_width`).

Production: e+e- -> gamma V (massless electrons, CM frame, theta = photon angle,
x = m^2/s, V-electron vector coupling c_e):
dsigma/dcos = (alpha c_e^2/(2 s)) (1 - x)[(1 + cos^2) + 4x/(1 - x)^2]/sin^2, and
integrated over |cos| < c0
sigma = (alpha c_e^2/(2 s)) [2(1 + x^2)/(1 - x) ln((1 + c0)/(1 - c0)) - 2 c0 (1 - x)]
(crossing of q qbar -> V g; for c_e = eps e it is (2 pi alpha^2 eps^2/s)[...];
checked against quadrature of the differential form in the tests).  The real
photon vertex uses alpha(0).  Both are evaluated by the one formula of the
production process, :mod:`toymc.physics.production.radiative`, with
eps^2 = c_e^2/(4 pi alpha).
"""

import math as _math

import numpy as _np
from scipy.special import expit as _expit

from toymc.errors import ConfigError as _ConfigError
from toymc.physics import constants as _const
from toymc.physics.models._common import as_coupling as _as_coupling
from toymc.physics.models._common import as_mass as _as_mass
from toymc.physics.models._common import branching_fractions as _branching_fractions
from toymc.physics.models._common import ctau_from_width as _ctau_from_width

__all__ = (
    "ALPHA_S_MZ",
    "EM_CHARGES",
    "E_CHARGE",
    "FERMIONS",
    "MODEL_CHARGES",
    "VMD_BEE",
    "alpha_s",
    "branching_fractions",
    "couplings_from_charges",
    "ctau",
    "dark_photon_couplings",
    "dsigma_radiative_dcos",
    "hadronic_width",
    "lmu_ltau_loop_mixing",
    "model_couplings",
    "r_ratio",
    "r_ratio_components",
    "sigma_radiative",
    "total_width",
    "widths",
)

FERMIONS = ("e", "mu", "tau", "nu_e", "nu_mu", "nu_tau", "u", "d", "s", "c", "b")
_NEUTRINOS = ("nu_e", "nu_mu", "nu_tau")
_LEPTONS = {"e": 11, "mu": 13, "tau": 15}
_QUARKS = ("u", "d", "s", "c", "b")

#: electric charges in units of e
EM_CHARGES = {
    "e": -1.0, "mu": -1.0, "tau": -1.0,
    "nu_e": 0.0, "nu_mu": 0.0, "nu_tau": 0.0,
    "u": 2.0 / 3.0, "d": -1.0 / 3.0, "s": -1.0 / 3.0, "c": 2.0 / 3.0, "b": -1.0 / 3.0,
}  # fmt: skip

#: elementary charge e = sqrt(4 pi alpha(0))
E_CHARGE = _math.sqrt(4.0 * _math.pi * _const.ALPHA_EM)


def _lepton_number(first, second):
    x = dict.fromkeys(FERMIONS, 0.0)
    x[first], x["nu_" + first] = 1.0, 1.0
    x[second], x["nu_" + second] = -1.0, -1.0
    return x


#: charges x_f of the named models (see the module docstring)
MODEL_CHARGES = {
    "dark_photon": {f: E_CHARGE * q for f, q in EM_CHARGES.items()},
    "b_minus_l": {f: (1.0 / 3.0 if f in _QUARKS else -1.0) for f in FERMIONS},
    "le_minus_lmu": _lepton_number("e", "mu"),
    "le_minus_ltau": _lepton_number("e", "tau"),
    "lmu_minus_ltau": _lepton_number("mu", "tau"),
    "protophobic": {
        **dict.fromkeys(FERMIONS, 0.0),
        "u": -1.0 / 3.0, "c": -1.0 / 3.0, "d": 2.0 / 3.0, "s": 2.0 / 3.0, "b": 2.0 / 3.0,
    },
}  # fmt: skip

#: vector-meson e+e- branching fractions (PDG listings, from memory)
VMD_BEE = {"rho": 4.72e-5, "omega": 7.38e-5, "phi": 2.974e-4}
#: alpha_s(m_Z) (PDG review "Quantum chromodynamics" world average, from memory)
ALPHA_S_MZ = 0.1180

_RES = {"rho": 113, "omega": 223, "phi": 333}
_T_CENTRE, _T_WIDTH = 1.2, 0.05  # GeV, u d s continuum switch-on
_ALPHA_S_FREEZE = 1.0  # GeV


# --- couplings -------------------------------------------------------------------------
def _check_names(charges, key):
    for name in charges:
        if name not in FERMIONS:
            raise _ConfigError(None, key, name, f"a fermion name, one of {', '.join(FERMIONS)}")


def couplings_from_charges(charges, g, eps=0.0):
    """Per-fermion couplings c_f = g x_f + eps e Q_f (neutrinos: g x_nu).

    Parameters
    ----------
    charges : dict
        fermion name -> charge x_f (missing fermions have x_f = 0).
    g : float
        Gauge coupling, >= 0 (signs belong in the charges).
    eps : float
        Kinetic mixing with the photon (either sign).

    Returns
    -------
    dict
        fermion name -> coupling c_f (dimensionless), for all ``FERMIONS``.

    Raises
    ------
    toymc.errors.ConfigError
        Unknown fermion name, negative or non-finite g, non-finite charge or eps.
    """
    _check_names(charges, "vector.charges")
    g = float(_as_coupling(g, "vector.g"))
    eps = float(_as_coupling(eps, "vector.eps", allow_negative=True))
    out = {}
    for f in FERMIONS:
        x = float(_as_coupling(charges.get(f, 0.0), f"vector.charges.{f}", allow_negative=True))
        out[f] = g * x + (0.0 if f in _NEUTRINOS else eps * E_CHARGE * EM_CHARGES[f])
    return out


def lmu_ltau_loop_mixing(g):
    """One-loop kinetic mixing of the L_mu - L_tau boson at q^2 = 0.

    eps = -(e g/(6 pi^2)) ln(m_tau/m_mu), from the mu and tau vacuum-polarisation
    loops, (e g/(2 pi^2)) sum_f Q_f x_f Int_0^1 dx x(1-x) ln(m_f^2) (derived; cf.
    arXiv:1803.05466, from memory).  Sign convention: c_f = g x_f + eps e Q_f with
    x_mu = +1.  Numerically eps ~ -g/70.  The q^2 dependence for m ~ 2 m_mu is
    neglected.

    Parameters
    ----------
    g : float
        L_mu - L_tau gauge coupling (>= 0).

    Returns
    -------
    float
    """
    g = float(_as_coupling(g, "vector.g"))
    return -E_CHARGE * g / (6.0 * _math.pi**2) * _math.log(_const.mass(15) / _const.M_MU)


def model_couplings(name, g, eps=None, **charges):
    """Couplings of a named model (``MODEL_CHARGES``), optionally with charges overridden.

    Parameters
    ----------
    name : str
        One of ``MODEL_CHARGES`` (dark_photon, b_minus_l, le_minus_lmu,
        le_minus_ltau, lmu_minus_ltau, protophobic).  For ``dark_photon`` g is
        the kinetic mixing eps itself (x_f = e Q_f).
    g : float
        Gauge coupling (>= 0).
    eps : float, optional
        Kinetic mixing.  Default: :func:`lmu_ltau_loop_mixing` for
        ``lmu_minus_ltau``, 0 otherwise.
    **charges
        fermion name -> charge, replacing the model's value (e.g. the lepton
        charges of the protophobic model).

    Returns
    -------
    dict
        fermion name -> coupling.
    """
    if name not in MODEL_CHARGES:
        raise _ConfigError(None, "vector.model", name, f"one of {', '.join(MODEL_CHARGES)}")
    _check_names(charges, "vector.charges")
    x = {**MODEL_CHARGES[name], **charges}
    if eps is None:
        eps = lmu_ltau_loop_mixing(g) if name == "lmu_minus_ltau" else 0.0
    return couplings_from_charges(x, g, eps)


def dark_photon_couplings(eps):
    """Couplings eps e Q_f of a kinetically mixed dark photon (eps >= 0).

    Parameters
    ----------
    eps : float
        Kinetic mixing parameter.

    Returns
    -------
    dict
    """
    eps = float(_as_coupling(eps, "vector.eps"))
    return couplings_from_charges(MODEL_CHARGES["dark_photon"], eps)


# --- R ratio -------------------------------------------------------------------------------
def alpha_s(mu):
    """Strong coupling alpha_s(mu) at one loop, from alpha_s(m_Z) = 0.1180.

    1/alpha_s(mu) = 1/alpha_s(mu0) + beta0/(4 pi) ln(mu^2/mu0^2), beta0 = 11 - 2 n_f/3,
    with n_f = 5, 4, 3 between the PDG masses m_Z, m_b, m_c (PDG QCD review,
    one-loop running); frozen below 1 GeV.  A toy-level value: one loop is
    ~10% below the world average at 2 GeV.

    Parameters
    ----------
    mu : array_like
        Scale in GeV.

    Returns
    -------
    numpy.ndarray
    """
    mu = _np.maximum(_np.asarray(mu, dtype=_np.float64), _ALPHA_S_FREEZE)
    mz, mb, mc = _const.mass(23), _const.mass(5), _const.mass(4)

    def b(nf):
        return (11.0 - 2.0 * nf / 3.0) / (4.0 * _math.pi)

    inv_mb = 1.0 / ALPHA_S_MZ + b(5) * _math.log(mb**2 / mz**2)
    inv_mc = inv_mb + b(4) * _math.log(mc**2 / mb**2)
    inv = _np.where(
        mu >= mb,
        1.0 / ALPHA_S_MZ + b(5) * _np.log(mu**2 / mz**2),
        _np.where(
            mu >= mc, inv_mb + b(4) * _np.log(mu**2 / mb**2), inv_mc + b(3) * _np.log(mu**2 / mc**2)
        ),
    )
    return 1.0 / inv


def _bw_r(s, name):
    """R contribution of one vector meson for photon couplings (see module docstring)."""
    pdg = _RES[name]
    M, G = _const.mass(pdg), _const.width(pdg)
    r_peak = 9.0 * VMD_BEE[name] / _const.ALPHA_EM**2
    sqrt_s = _np.sqrt(s)
    if name == "rho":
        mpi2 = _const.M_PI**2
        p = _np.sqrt(_np.clip(s / 4.0 - mpi2, 0.0, None))
        p0 = _math.sqrt(M * M / 4.0 - mpi2)
        gs = G * (M / sqrt_s) * (p / p0) ** 3
        shape = (p * M / (p0 * sqrt_s)) ** 3  # (beta/beta_M)^3
    else:
        gs = _np.full_like(s, G)
        shape = _np.where(sqrt_s > 2 * _const.M_PI + _const.M_PI0, 1.0, 0.0)
    return r_peak * shape * M * M * G * G / ((s - M * M) ** 2 + M * M * gs * gs)


def _heavy_factor(s, m_threshold):
    beta2 = _np.clip(1.0 - 4.0 * m_threshold**2 / s, 0.0, None)
    beta = _np.sqrt(beta2)
    return beta * (3.0 - beta2) / 2.0


def _r_parts(sqrt_s, r):
    """(R_rho, R_rest) for couplings r_q = c_q/e (dict of the five quarks)."""
    sqrt_s = _np.asarray(sqrt_s, dtype=_np.float64)
    s = sqrt_s * sqrt_s
    t = _expit((sqrt_s - _T_CENTRE) / _T_WIDTH)
    qu, qd, qs = EM_CHARGES["u"], EM_CHARGES["d"], EM_CHARGES["s"]
    k_rho = ((r["u"] - r["d"]) / (qu - qd)) ** 2
    k_omega = ((r["u"] + r["d"]) / (qu + qd)) ** 2
    k_phi = (r["s"] / qs) ** 2
    r_rho = (1.0 - t) * k_rho * _bw_r(s, "rho")
    qcd = 3.0 * (1.0 + alpha_s(sqrt_s) / _math.pi)
    rest = (1.0 - t) * (k_omega * _bw_r(s, "omega") + k_phi * _bw_r(s, "phi"))
    rest = rest + qcd * t * (r["u"] ** 2 + r["d"] ** 2 + r["s"] ** 2)
    rest = rest + qcd * r["c"] ** 2 * _heavy_factor(s, _const.mass(421))
    rest = rest + qcd * r["b"] ** 2 * _heavy_factor(s, _const.mass(511))
    return r_rho, rest


def r_ratio_components(sqrt_s):
    """Pieces of the toy R(s) for the photon: ``{"rho", "omega", "phi", "continuum"}``.

    See the module docstring for the parametrisation.

    Parameters
    ----------
    sqrt_s : array_like
        CM energy in GeV.

    Returns
    -------
    dict
        name -> R contribution (numpy.ndarray).
    """
    sqrt_s = _as_mass(sqrt_s, "sqrt_s")
    s = sqrt_s * sqrt_s
    t = _expit((sqrt_s - _T_CENTRE) / _T_WIDTH)
    qcd = 3.0 * (1.0 + alpha_s(sqrt_s) / _math.pi)
    q2 = {q: EM_CHARGES[q] ** 2 for q in _QUARKS}
    cont = qcd * (
        t * (q2["u"] + q2["d"] + q2["s"])
        + q2["c"] * _heavy_factor(s, _const.mass(421))
        + q2["b"] * _heavy_factor(s, _const.mass(511))
    )
    out = {k: (1.0 - t) * _bw_r(s, k) for k in _RES}
    out["continuum"] = cont
    return out


def r_ratio(sqrt_s):
    """Toy R(s) = sigma(e+e- -> hadrons)/sigma_mumu for photon couplings.

    Sum of :func:`r_ratio_components` (rho, omega, phi Breit-Wigner peaks and a
    perturbative continuum 3 sum Q_q^2 (1 + alpha_s/pi)); an approximation good
    to tens of percent between the peaks, see the module docstring.

    Parameters
    ----------
    sqrt_s : array_like
        CM energy in GeV.

    Returns
    -------
    numpy.ndarray
    """
    return sum(r_ratio_components(sqrt_s).values())


# --- widths --------------------------------------------------------------------------------
def _check_couplings(couplings):
    _check_names(couplings, "vector.couplings")
    return {
        f: float(_as_coupling(couplings.get(f, 0.0), f"vector.couplings.{f}", allow_negative=True))
        for f in FERMIONS
    }


def _fermion_width(m, c, mf, colours=1.0):
    y = _np.where(m > 0, (mf / m) ** 2, _np.inf)
    ps = _np.sqrt(_np.clip(1.0 - 4.0 * y, 0.0, None)) * (1.0 + 2.0 * y)
    return _np.where(m > 2.0 * mf, colours * c * c * m / (12.0 * _math.pi) * ps, 0.0)


def widths(m, couplings):
    """Partial widths of V in GeV: e_e, mu_mu, tau_tau, nu_nu, pi_pi, hadrons.

    Formulas in the module docstring: massive vector coupling to leptons,
    left-handed neutrinos (summed over flavours), hadrons via the toy R
    ratio ("pi_pi" = rho part, "hadrons" = the rest).

    Parameters
    ----------
    m : array_like
        Mass of V in GeV.
    couplings : dict
        fermion name -> coupling c_f (e.g. from :func:`model_couplings`).

    Returns
    -------
    dict
        channel -> width (numpy.ndarray, GeV).
    """
    m = _as_mass(m, "llp.mass")
    c = _check_couplings(couplings)
    out = {
        "e_e": _fermion_width(m, c["e"], _const.M_E),
        "mu_mu": _fermion_width(m, c["mu"], _const.M_MU),
        "tau_tau": _fermion_width(m, c["tau"], _const.mass(15)),
        "nu_nu": sum(c[n] ** 2 for n in _NEUTRINOS) * m / (24.0 * _math.pi),
    }
    r = {q: c[q] / E_CHARGE for q in _QUARKS}
    r_rho, r_rest = _r_parts(m, r)
    had = _const.ALPHA_EM * m / 3.0
    thr = m > 2.0 * _const.M_PI
    out["pi_pi"] = _np.where(thr, had * r_rho, 0.0)
    out["hadrons"] = _np.where(thr, had * r_rest, 0.0)
    return out


def hadronic_width(m, couplings):
    """Total hadronic width Gamma_had = (alpha m/3) R_V(m^2) in GeV (pi_pi + hadrons).

    Parameters
    ----------
    m : array_like
        Mass of V in GeV.
    couplings : dict
        fermion name -> coupling.

    Returns
    -------
    numpy.ndarray
    """
    w = widths(m, couplings)
    return w["pi_pi"] + w["hadrons"]


def total_width(m, couplings):
    """Total width of V in GeV (sum of :func:`widths`)."""
    return sum(widths(m, couplings).values())


def branching_fractions(m, couplings):
    """Branching fractions of V (dict channel -> array, summing to 1).

    Parameters
    ----------
    m : array_like
        Mass of V in GeV.
    couplings : dict
        fermion name -> coupling.

    Returns
    -------
    dict
    """
    return _branching_fractions(widths(m, couplings))


def ctau(m, couplings):
    """Proper decay length c*tau = hbar c/Gamma_total of V in cm.

    Parameters
    ----------
    m : array_like
        Mass of V in GeV.
    couplings : dict
        fermion name -> coupling.

    Returns
    -------
    numpy.ndarray
    """
    return _ctau_from_width(total_width(m, couplings))


# --- e+e- -> gamma V -----------------------------------------------------------------------
def _check_radiative(sqrt_s, m):
    sqrt_s = _as_mass(sqrt_s, "beam.sqrt_s")
    m = _as_mass(m, "llp.mass")
    if _np.any(m >= sqrt_s):
        raise _ConfigError(
            None,
            "llp.mass",
            float(_np.max(m)),
            f"a mass below sqrt(s) = {float(_np.min(sqrt_s))} GeV",
        )
    return sqrt_s, m


def dsigma_radiative_dcos(sqrt_s, m, cos_theta, coupling_e):
    """dsigma/dcos(theta)(e+e- -> gamma V) in fb, theta the CM photon angle.

    dsigma/dcos = (alpha c_e^2/(2 s))(1 - x)[(1 + cos^2) + 4x/(1 - x)^2]/(1 - cos^2),
    x = m^2/s, massless electrons (module docstring).

    Parameters
    ----------
    sqrt_s : float
        CM energy in GeV.
    m : array_like
        Mass of V in GeV (< sqrt_s).
    cos_theta : array_like
        Photon cos(theta), |cos| < 1.
    coupling_e : float
        V-electron vector coupling c_e (e.g. eps e; 1 for the rate per unit c_e^2).

    Returns
    -------
    numpy.ndarray
    """
    sqrt_s, m = _check_radiative(sqrt_s, m)
    ce = _as_coupling(coupling_e, "vector.couplings.e", allow_negative=True)
    c = _np.asarray(cos_theta, dtype=_np.float64)
    if _np.any(~(_np.abs(c) < 1.0)):
        raise _ConfigError(None, "cos_theta", float(_np.max(_np.abs(c))), "|cos(theta)| < 1")
    from toymc.physics.production.radiative import dsigma_dcos

    return dsigma_dcos(c, sqrt_s, m, eps=ce / E_CHARGE)


def sigma_radiative(sqrt_s, m, cos_max, coupling_e):
    """sigma(e+e- -> gamma V) in fb with the photon in |cos(theta)| < cos_max (CM frame).

    sigma = (alpha c_e^2/(2 s))[2(1 + x^2)/(1 - x) ln((1 + c0)/(1 - c0)) - 2 c0 (1 - x)],
    x = m^2/s, c0 = cos_max; for c_e = eps e this is the dark-photon expression
    (2 pi alpha^2 eps^2/s)[...] (module docstring).

    Parameters
    ----------
    sqrt_s : float
        CM energy in GeV.
    m : array_like
        Mass of V in GeV (< sqrt_s).
    cos_max : float
        Photon acceptance, 0 < cos_max < 1.
    coupling_e : float
        V-electron vector coupling c_e (1 gives the cross-section per unit c_e^2).

    Returns
    -------
    numpy.ndarray
        Cross-section in fb.
    """
    sqrt_s, m = _check_radiative(sqrt_s, m)
    ce = _as_coupling(coupling_e, "vector.couplings.e", allow_negative=True)
    c0 = float(cos_max)
    if not 0.0 < c0 < 1.0:
        raise _ConfigError(None, "production.cos_max", cos_max, "a number with 0 < cos_max < 1")
    from toymc.physics.production.radiative import sigma

    return sigma(sqrt_s, m, -c0, c0, eps=ce / E_CHARGE)
