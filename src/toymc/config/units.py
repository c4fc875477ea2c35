"""Units: plain floats in GeV, cm, ns and tesla inside toymc.

Config values may be plain numbers (taken in the documented internal unit of
the key) or strings such as ``"15 cm"``, ``"1.2 mm"``, ``"350 MeV"``,
``"1.5 T"``.  Strings are parsed here, with `hepunits` supplying the unit
values; nothing in a string is evaluated as code.  `hepunits` itself works in
mm, ns and MeV, so every conversion divides by the internal unit below.
"""

import re as _re

import hepunits as _u

__all__ = ("GEV", "CM", "NS", "TESLA", "DIMENSIONS", "parse_quantity")

#: internal units expressed in hepunits' base units
GEV = _u.GeV
CM = _u.cm
NS = _u.ns
TESLA = _u.tesla

# unit names accepted per dimension, and the internal unit they are divided by
DIMENSIONS = {
    "length": (CM, ("nm", "um", "micrometer", "mm", "cm", "m", "km")),
    "energy": (GEV, ("eV", "keV", "MeV", "GeV", "TeV")),
    "time": (NS, ("fs", "ps", "ns", "us", "microsecond", "ms", "s")),
    "field": (TESLA, ("T", "tesla", "gauss", "kilogauss")),
    "angle": (_u.rad, ("rad", "mrad", "deg", "degree")),
    "area": (_u.fb, ("ab", "fb", "pb", "nb", "ub", "mb", "barn")),
    "inverse_area": (1.0 / _u.fb, ("ab-1", "fb-1", "pb-1", "nb-1")),
}

_ALIASES = {"nm": "nanometer", "um": "micrometer", "us": "microsecond", "T": "tesla",
            "deg": "degree"}
_PATTERN = _re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z]+(?:-1)?)\s*$")


def _unit_value(name):
    if name.endswith("-1"):
        return 1.0 / getattr(_u, name[:-2])
    return getattr(_u, _ALIASES.get(name, name))


def parse_quantity(value, dimension):
    """Return `value` as a float in toymc's internal unit of `dimension`.

    Parameters
    ----------
    value : float, int or str
        A plain number (already in the internal unit) or ``"<number> <unit>"``.
    dimension : str
        One of ``DIMENSIONS``: length (cm), energy (GeV), time (ns),
        field (T), angle (rad), area (fb), inverse_area (fb^-1).

    Returns
    -------
    float

    Raises
    ------
    ValueError
        With a message listing the allowed units; callers turn it into a
        :class:`toymc.errors.ConfigError` naming the key.

    Examples
    --------
    >>> parse_quantity("15 mm", "length")
    1.5
    >>> parse_quantity(2, "energy")
    2.0
    """
    internal, names = DIMENSIONS[dimension]
    if isinstance(value, bool):
        raise ValueError(f"a number or a '<number> <unit>' string ({dimension})")
    if isinstance(value, (int, float)):
        return float(value)
    if isinstance(value, str):
        m = _PATTERN.match(value)
        if m and m.group(2) in names:
            return float(m.group(1)) * _unit_value(m.group(2)) / internal
    raise ValueError(
        f"a number or a '<number> <unit>' string with unit one of {', '.join(names)}"
    )
