"""The vertex-finding efficiency profile: one type for the detector response and the fold.

A :class:`Profile` gives the probability eps that a displaced vertex is found, as a
function of the true transverse decay radius r (cm), or, for kind ``"hits"``, of the
hit counts of the two vertex tracks.  The detector response evaluates it per event
(:func:`profile_efficiency`); the analytic fold (:mod:`toymc.detector.fold`)
integrates it along each flight line, for which a ``"hits"`` profile is first turned
into a radius table (:func:`toymc.detector.vertexing.radial_profile`).
"""

import math as _math
import numbers as _numbers
from dataclasses import dataclass as _dataclass

import numpy as _np

from toymc.errors import ConfigError as _ConfigError

__all__ = ("PROFILE_KINDS", "RADIAL_KINDS", "Profile", "profile_efficiency")

#: every kind of vertex-finding efficiency profile
PROFILE_KINDS = ("flat", "linear", "tabulated", "hits")
#: the kinds that depend on the decay radius alone (the ones the analytic fold takes)
RADIAL_KINDS = ("flat", "linear", "tabulated")


def _error(key, value, allowed):
    return _ConfigError(None, key, value, allowed)


@_dataclass(frozen=True)
class Profile:
    """Vertex-finding efficiency eps as a function of the true decay radius r.

    Parameters
    ----------
    kind : str
        ``"flat"``: ``eps(r) = eps0``.
        ``"linear"``: eps0 at ``r[0]`` falling linearly to 0 at ``r[1]`` (eps0
        below ``r[0]``, 0 beyond ``r[1]``); the table is the two radii with
        ``eps = (1, 0)`` (the default when only ``r`` is given).  Without a table
        the two radii are the window's ``r_min`` and ``r_max``, given when the
        profile is evaluated.
        ``"tabulated"``: ``eps(r) = eps0 *`` linear interpolation through
        ``(r[i], eps[i])``, constant beyond the first and last points.
        ``"hits"``: per event ``eps = eps0 * prod over the two vertex tracks of
        min(1, n_hits / full_hits)`` (no table).
    eps0 : float
        Overall scale, in [0, 1] (default 1).
    r : tuple of float
        Radii in cm, finite, >= 0 and strictly increasing.
    eps : tuple of float
        Efficiencies in [0, 1], one per radius.

    Raises
    ------
    toymc.errors.ConfigError
        Unknown kind, eps0 or eps outside [0, 1], radii not finite or not
        strictly increasing, table lengths that differ, a table for a flat or
        hits profile, a linear table other than two radii with eps (1, 0).
    """

    kind: str
    eps0: float = 1.0
    r: tuple = ()
    eps: tuple = ()

    def __post_init__(self):
        if self.kind not in PROFILE_KINDS:
            raise _error("profile.kind", self.kind, f"one of {', '.join(PROFILE_KINDS)}")
        e0 = self.eps0
        if isinstance(e0, bool) or not isinstance(e0, _numbers.Real) or not 0.0 <= e0 <= 1.0:
            raise _error("profile.eps0", e0, "a number in [0, 1]")
        object.__setattr__(self, "eps0", float(e0))
        try:
            r = tuple(float(v) for v in self.r)
            eps = tuple(float(v) for v in self.eps)
        except (TypeError, ValueError):
            raise _error("profile.r/eps", (self.r, self.eps), "sequences of numbers") from None
        if self.kind == "linear" and r and not eps:
            eps = (1.0, 0.0)
        if self.kind in ("flat", "hits"):
            if r or eps:
                raise _error("profile.r", self.r, f"no table for a {self.kind} profile")
        elif r or eps or self.kind == "tabulated":
            if len(r) < 2:
                raise _error("profile.r", self.r, "at least two radii (cm)")
            if len(eps) != len(r):
                raise _error("profile.eps", self.eps, f"{len(r)} values, one per radius")
            if not all(_math.isfinite(v) and v >= 0.0 for v in r):
                raise _error("profile.r", self.r, "finite radii >= 0 cm")
            if any(r1 <= r0 for r0, r1 in zip(r, r[1:])):
                raise _error("profile.r", self.r, "strictly increasing radii (cm)")
            if not all(0.0 <= v <= 1.0 for v in eps):
                raise _error("profile.eps", self.eps, "efficiencies in [0, 1]")
            if self.kind == "linear" and (len(r) != 2 or eps != (1.0, 0.0)):
                raise _error("profile.r", self.r, "two radii (start and end of the fall) with "
                             "eps (1, 0), or no table (the window's r_min and r_max)")
        object.__setattr__(self, "r", r)
        object.__setattr__(self, "eps", eps)


def profile_efficiency(profile, r, hits1=None, hits2=None, full_hits=20, *, window=None):
    """Vertex-finding efficiency of each event, vectorised.

    Parameters
    ----------
    profile : Profile
    r : array_like
        True transverse decay radius, cm (NaN gives 0).
    hits1, hits2 : array_like of int, optional
        Hit counts of the two vertex tracks (kind "hits").
    full_hits : int
        Hits at which a track is fully efficient (kind "hits").
    window : (r_min, r_max), optional
        Transverse fiducial window, cm: the efficiency is 0 unless
        ``r_min < r < r_max``, and a linear profile without a table falls over it.
        Without it the profile alone is evaluated (the detector response applies
        its window to the reconstructed vertex instead).

    Returns
    -------
    ndarray of float64
        Efficiency in [0, 1].
    """
    r = _np.asarray(r, dtype=_np.float64)
    kind = profile.kind
    if kind == "flat":
        eff = _np.full(r.shape, profile.eps0)
    elif kind == "linear":
        if profile.r:
            (r1, r2), (e1, e2) = profile.r, profile.eps
        elif window is not None:
            (r1, r2), (e1, e2) = window, (1.0, 0.0)
        else:
            raise _error("window", None, "the window (r_min, r_max) for a linear profile "
                         "without radii")
        eff = profile.eps0 * _np.clip(e1 + (e2 - e1) * (r - r1) / (r2 - r1), 0.0, 1.0)
    elif kind == "tabulated":
        eff = profile.eps0 * _np.interp(r, _np.asarray(profile.r), _np.asarray(profile.eps))
    else:  # "hits" (the only other kind a Profile can have)
        f1 = _np.minimum(1.0, _np.asarray(hits1, dtype=_np.float64) / full_hits)
        f2 = _np.minimum(1.0, _np.asarray(hits2, dtype=_np.float64) / full_hits)
        eff = profile.eps0 * f1 * f2
    inside = _np.isfinite(r)
    if window is not None:
        inside &= (r > window[0]) & (r < window[1])
    return _np.where(inside, eff, 0.0)
