"""Private helpers shared by the model modules (input checks, widths -> BRs, c*tau).

Internal module: the public functions live in :mod:`toymc.physics.models.alp`,
:mod:`toymc.physics.models.vector_boson` and :mod:`toymc.physics.models.b_to_k`.
"""

import numpy as _np

from toymc.errors import ConfigError as _ConfigError
from toymc.physics.channels import names as _channel_names
from toymc.physics.constants import HBARC_GEV_CM as _HBARC

__all__ = (
    "CHANNELS",
    "as_coupling",
    "as_mass",
    "branching_fractions",
    "ctau_from_width",
    "total_width",
)

#: decay-channel names used as keys of the width tables: the built-in names of the one channel
#: table (toymc.physics.channels), generated or width-only
CHANNELS = _channel_names()


def _first_bad(arr, bad):
    return arr[bad].flat[0].item()


def as_mass(m, key="mass"):
    """Return `m` as a float64 array, raising ConfigError unless finite and > 0 (GeV)."""
    arr = _np.asarray(m, dtype=_np.float64)
    bad = ~_np.isfinite(arr) | (arr <= 0.0)
    if _np.any(bad):
        raise _ConfigError(None, key, _first_bad(arr, bad), "a finite mass > 0 in GeV")
    return arr


def as_coupling(g, key="coupling", allow_negative=False, unit=""):
    """Return `g` as a float64 array, raising ConfigError unless finite (and >= 0)."""
    arr = _np.asarray(g, dtype=_np.float64)
    bad = ~_np.isfinite(arr)
    if not allow_negative:
        bad |= arr < 0.0
    if _np.any(bad):
        what = "a finite number" if allow_negative else "a finite coupling magnitude >= 0"
        if unit:
            what += f" in {unit}"
        if not allow_negative:
            what += " (only |g|^2 enters; signs belong in the charges)"
        raise _ConfigError(None, key, _first_bad(arr, bad), what)
    return arr


def total_width(widths):
    """Sum of the partial widths in `widths` (dict channel -> GeV)."""
    return sum(_np.asarray(v, dtype=_np.float64) for v in widths.values())


def branching_fractions(widths):
    """Partial widths (dict channel -> GeV) divided by their sum; 0 where the sum is 0."""
    tot = total_width(widths)
    with _np.errstate(invalid="ignore", divide="ignore"):
        return {k: _np.where(tot > 0, _np.asarray(v) / tot, 0.0) for k, v in widths.items()}


def ctau_from_width(gamma):
    """Proper decay length c*tau = hbar c / Gamma in cm (inf where Gamma = 0).

    Parameters
    ----------
    gamma : array_like
        Total width in GeV.
    """
    g = _np.asarray(gamma, dtype=_np.float64)
    with _np.errstate(divide="ignore"):
        return _np.where(g > 0, _HBARC / _np.where(g > 0, g, 1.0), _np.inf)
