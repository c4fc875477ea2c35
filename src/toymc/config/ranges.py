"""Allowed values of everything a user types: config and geometry keys, command-line numbers.

Every reader of a config section or geometry file describes its keys with
:func:`spec` (kind, unit dimension, bounds, choices, default, meaning) and
reads them with :func:`check`, which returns the value in the internal unit
or raises :class:`toymc.errors.ConfigError` naming the file, the key, the
value and what is allowed (:func:`allowed` writes that text, which is also
the "allowed" column of the README's config reference).  Rules shared by
every number:

* a float is never NaN and never infinite (no key gives infinity a meaning);
* an integer is a TOML integer (not a float, not a boolean);
* every number has a lower and an upper bound.  The bounds are physical
  (a beam energy is positive) or toy bounds chosen far beyond any use of a
  toy at an e+e- collider near 10 GeV but small enough that no formula
  overflows and no array outgrows memory (the constants below, each stated
  in the README).

:func:`suggest` is the one closest-name hint of every "unknown key" or "not one of the
choices" message.
"""

import difflib
import math

from toymc.config.units import DIMENSIONS, parse_quantity
from toymc.errors import ConfigError

__all__ = (
    "MAX_BEAM_ENERGY", "MIN_BEAM_ENERGY", "MAX_MASS", "MAX_LENGTH", "MAX_SPREAD", "MAX_CTAU",
    "MAX_FIELD", "MAX_X0", "MAX_RESOLUTION", "MAX_EVENTS", "MAX_SAMPLE_EVENTS", "MAX_SEED",
    "MAX_CHUNK_BLOCKS", "MAX_GRID_AXIS", "MAX_GRID_CELLS", "MAX_MIXTURE", "MAX_LAYERS",
    "MAX_CROSS_SECTION", "MAX_LUMI", "MAX_COUPLING", "MAX_CHARGE", "MAX_PDG", "MAX_BACKGROUND",
    "MAX_TOML_DEPTH", "MAX_WORKERS", "LIMITS", "spec", "allowed", "allowed_short", "check",
    "number", "fmt", "suggest", "closest_name", "markdown", "limits_markdown", "unit_of",
    "bounds_text",
)

#: GeV: largest beam energy (and 10 MeV the smallest: the beams are massless here)
MAX_BEAM_ENERGY = 1000.0
MIN_BEAM_ENERGY = 0.01
#: GeV: largest LLP mass, mass window or momentum (sqrt(s) of two 1000 GeV beams)
MAX_MASS = 2 * MAX_BEAM_ENERGY
#: cm: largest detector dimension, fiducial window or forced-decay length (100 m)
MAX_LENGTH = 1e4
#: cm: largest luminous-region size
MAX_SPREAD = 100.0
#: cm: largest c*tau (a decay inside 100 m then has a probability below 1e-11)
MAX_CTAU = 1e15
#: T: largest solenoid field of the toy detector
MAX_FIELD = 10.0
#: x/X0 of one thin cylinder (the multiple-scattering and conversion formulas are thin-layer)
MAX_X0 = 1.0
#: cm: largest point or hit resolution
MAX_RESOLUTION = 1.0
#: events of a run written to disk (block by block): 10^12, a day of one core
MAX_EVENTS = 10**12
#: events of a sample held in memory (fold, reach, tuning, validation samples; up to
#: about 1 kB per event with the detector response)
MAX_SAMPLE_EVENTS = 2 * 10**6
#: largest seed: 128 bits of SeedSequence entropy (scan and reach samples get such seeds)
MAX_SEED = 2**128 - 1
#: blocks of 65536 events held in memory per write chunk
MAX_CHUNK_BLOCKS = 16
#: points per grid axis (masses, c*tau values, couplings, radial cuts)
MAX_GRID_AXIS = 5000
#: cells of a two-dimensional grid (scan mass x c*tau, reach mass x coupling, tuning cuts)
MAX_GRID_CELLS = 10**6
#: c*tau components of an exponential mixture
MAX_MIXTURE = 32
#: measuring layers of a geometry (and the hit counts of the selection)
MAX_LAYERS = 500
#: fb: largest cross-section (1 mb)
MAX_CROSS_SECTION = 1e12
#: fb^-1: largest integrated luminosity (10^5 ab^-1)
MAX_LUMI = 1e8
#: largest main coupling in the model's unit (g_agg, 1/f in GeV^-1; eps; gauge g)
MAX_COUPLING = 10.0
#: largest |charge| of a fermion in a vector model
MAX_CHARGE = 10.0
#: largest |PDG id|: the seven-digit codes of the PDG numbering scheme
MAX_PDG = 9_999_999
#: largest expected background count of a limit (the mean-limit sum grows with it: about a
#: second at 10^4, a minute at 10^6)
MAX_BACKGROUND = 1e4
#: levels of nesting of a TOML file (tables, dotted keys, arrays, inline tables)
MAX_TOML_DEPTH = 32
#: local worker processes
MAX_WORKERS = 1024

#: (name, value, unit, what it bounds) for the README
LIMITS = (
    ("beam energy", f"{MIN_BEAM_ENERGY:g} to {MAX_BEAM_ENERGY:g}", "GeV",
     "the beams are massless here; the upper bound keeps every boost finite"),
    ("mass, momentum, energy threshold", f"<= {MAX_MASS:g}", "GeV", "sqrt(s) of two such beams"),
    ("detector lengths, fiducial windows", f"-{MAX_LENGTH:g} to {MAX_LENGTH:g}", "cm", "100 m"),
    ("luminous-region size", f"<= {MAX_SPREAD:g}", "cm", ""),
    ("c*tau", f"<= {MAX_CTAU:g}", "cm", "beyond it a decay inside 100 m has a probability "
     "below 1e-11"),
    ("field", f"0 < B <= {MAX_FIELD:g}", "T", "a toy solenoid"),
    ("material per cylinder", f"<= {MAX_X0:g}", "x/X0", "thin-layer formulas"),
    ("resolutions", f"<= {MAX_RESOLUTION:g}", "cm", ""),
    ("events written to a file", "10^12", "", "split larger runs by seed and merge them"),
    ("events of a sample held in memory", "2 x 10^6", "", "fold, reach, tuning and "
     "validation samples (up to about 1 kB per event)"),
    ("seed", "0 to 2^128 - 1", "", "128 bits of SeedSequence entropy"),
    ("chunk_blocks", f"<= {MAX_CHUNK_BLOCKS}", "", "blocks of 65536 events in memory at once"),
    ("points per grid axis", f"<= {MAX_GRID_AXIS}", "", "masses, c*tau values, couplings, cuts"),
    ("cells of a grid", "10^6", "", "scan, reach and tuning grids"),
    ("c*tau components of a mixture", f"<= {MAX_MIXTURE}", "", ""),
    ("measuring layers, hit counts", f"<= {MAX_LAYERS}", "", ""),
    ("cross-sections", f"<= {MAX_CROSS_SECTION:g}", "fb", "1 mb"),
    ("integrated luminosity", f"<= {MAX_LUMI:g}", "fb^-1", ""),
    ("main model coupling", f"<= {MAX_COUPLING:g}", "model's unit", "the widths stay finite"),
    ("fermion charges", f"-{MAX_CHARGE:g} to {MAX_CHARGE:g}", "", ""),
    ("PDG id", f"-{MAX_PDG} to {MAX_PDG}", "", "seven-digit codes (0: the default)"),
    ("expected background", f"<= {MAX_BACKGROUND:g}", "events", "beyond it the Gaussian "
     "regime: s/sqrt(b)"),
    ("TOML nesting", f"<= {MAX_TOML_DEPTH} levels", "", "tables, dotted keys, arrays, inline "
     "tables"),
    ("local worker processes", f"<= {MAX_WORKERS}", "", ""),
)

#: internal unit of each dimension, as shown to users
UNIT = {"energy": "GeV", "length": "cm", "angle": "rad", "area": "fb", "inverse_area": "fb^-1",
        "field": "T", "time": "ns", None: ""}

_KIND_TEXT = {"int": "an integer", "float": "a number", "str": "a string", "table": "a table",
              "list": "a list", "bool": "true or false"}


def spec(kind, default=None, doc="", dim=None, lo=None, hi=None, lo_open=False, hi_open=False,
         choices=None, required=False, min_len=1, max_len=None, unit=None):
    """The specification of one key (a dict; see the module docstring).

    Parameters
    ----------
    kind : {"int", "float", "str", "bool", "list", "table"}
        A "list" is a list of numbers; its bounds, dimension and unit apply to each element,
        ``min_len`` / ``max_len`` to its length.
    dim : str, optional
        Unit dimension (toymc.config.units.DIMENSIONS): the value may be a '<number> <unit>' string.
    lo, hi : number, optional
        Bounds, closed unless ``lo_open`` / ``hi_open``.
    unit : str, optional
        Unit shown for a number without a dimension (e.g. "x/X0", "GeV^1/2").
    """
    return dict(kind=kind, default=default, doc=doc, dim=dim, lo=lo, hi=hi, lo_open=lo_open,
                hi_open=hi_open, choices=choices, required=required, min_len=min_len,
                max_len=max_len, unit=unit)


def fmt(x):
    """A bound as people write it: 10^12, 2^63 - 1, 0.5, 1e+15."""
    if isinstance(x, int) and not isinstance(x, bool):
        if x > 2**32 and (x + 1) & x == 0:
            return f"2^{(x + 1).bit_length() - 1} - 1"
        if x >= 10**6:
            k = len(str(x)) - 1
            d, r = divmod(x, 10**k)
            if r == 0:
                return f"10^{k}" if d == 1 else f"{d} x 10^{k}"
        return str(x)
    return f"{x:g}"


def unit_of(s):
    return s.get("unit") or UNIT[s["dim"]]


def bounds_text(s):
    """'> 0 and <= 1000' for a spec (no kind, no unit)."""
    parts = []
    if s["lo"] is not None:
        parts.append(("> " if s["lo_open"] else ">= ") + fmt(s["lo"]))
    if s["hi"] is not None:
        parts.append(("< " if s["hi_open"] else "<= ") + fmt(s["hi"]))
    return " and ".join(parts)


def allowed(s):
    """What is allowed for a key, in words (the second half of an error line)."""
    if s["choices"]:
        return "one of " + ", ".join(repr(c) for c in s["choices"])
    kind = _KIND_TEXT[s["kind"]]
    if s["kind"] == "list":
        kind = f"a list of {_length_text(s)}, each a number"
    if s["dim"]:
        names = ", ".join(DIMENSIONS[s["dim"]][1])
        kind += (f" in {UNIT[s['dim']]} or a '<number> <unit>' string with unit one of "
                 f"{names}")
    elif s.get("unit"):
        kind += f" ({s['unit']})"
    b = bounds_text(s)
    return kind + (("; " if s["dim"] else ", ") + b if b else "")


def allowed_short(s):
    """The "allowed" column of the README: choices, or bounds (and a list's length)."""
    if s["choices"]:
        return ", ".join(str(c) for c in s["choices"])
    b = bounds_text(s)
    if s["kind"] == "list":
        return _length_text(s) + (f", each {b}" if b else "")
    return b


def _length_text(s):
    if s["max_len"] == s["min_len"]:
        return f"{s['min_len']} values"
    if s["max_len"]:
        return f"{s['min_len']} to {fmt(s['max_len'])} values"
    return f"at least {s['min_len']} values"


def markdown(rows):
    """A Markdown table of (key, spec) rows: key, type, unit, default, allowed, meaning."""
    out = ["| key | type | unit | default | allowed | meaning |", "|---|---|---|---|---|---|"]
    for key, s in rows:
        d = "required" if s["required"] else ("" if s["default"] is None else repr(s["default"]))
        out.append(f"| `{key}` | {s['kind']} | {unit_of(s)} | {d} | {allowed_short(s)} "
                   f"| {s['doc']} |")
    return "\n".join(out)


def limits_markdown():
    """The table of toy bounds (:data:`LIMITS`) for the README."""
    out = ["| quantity | bound | unit | note |", "|---|---|---|---|"]
    out += [f"| {a} | {b} | {c} | {d} |" for a, b, c, d in LIMITS]
    return "\n".join(out)


def _fail(path, key, raw, s, extra=""):
    if isinstance(raw, int) and not isinstance(raw, bool) and abs(raw) >= 10**30:
        digits = len(str(abs(raw)))
        raw = _Shown(f"{str(raw)[:8]}... ({digits} digits)")
    raise ConfigError(path, key, raw, (extra + "; " if extra else "") + allowed(s))


def number(path, key, raw, s):
    """A float or int value of spec `s` (kind int or float), range-checked."""
    if isinstance(raw, bool):
        _fail(path, key, raw, s)
    if s["kind"] == "int":
        if not isinstance(raw, int):
            _fail(path, key, raw, s)
        val = raw
    else:
        if isinstance(raw, int) and abs(raw) > 10**300:
            _fail(path, key, raw, s)  # float() would overflow
        if s["dim"]:
            try:
                val = parse_quantity(raw, s["dim"])
            except ValueError:
                _fail(path, key, raw, s)
            except OverflowError:
                _fail(path, key, raw, s)
        elif isinstance(raw, (int, float)):
            val = float(raw)
        else:
            _fail(path, key, raw, s)
        if not math.isfinite(val):
            _fail(path, key, raw, s)
    lo, hi = s["lo"], s["hi"]
    if lo is not None and (val < lo or (s["lo_open"] and val == lo)):
        _fail(path, key, raw, s)
    if hi is not None and (val > hi or (s["hi_open"] and val == hi)):
        _fail(path, key, raw, s)
    return val


def check(path, key, raw, s):
    """The value of `raw` (from TOML) for key `key` of spec `s`, in internal units.

    Raises
    ------
    ConfigError
        Wrong type, unit or length, NaN, infinity, out of range, not among the choices.
    """
    kind = s["kind"]
    if kind == "bool":
        if not isinstance(raw, bool):
            _fail(path, key, raw, s)
        return raw
    if kind in ("int", "float"):
        return number(path, key, raw, s)
    if kind == "list":
        if not isinstance(raw, list) or len(raw) < s["min_len"] or (
                s["max_len"] is not None and len(raw) > s["max_len"]):
            _fail(path, key, _short(raw), s)
        el = dict(s, kind="float")
        out = []
        for v in raw:
            if isinstance(v, (list, dict)):
                _fail(path, key, _short(raw), s)
            try:
                out.append(number(path, key, v, el))
            except ConfigError:
                _fail(path, key, _short(raw), s, f"{v!r} is not allowed")
        return out
    if kind == "table":
        if not isinstance(raw, dict):
            _fail(path, key, raw, s)
        return dict(raw)
    if not isinstance(raw, str):
        _fail(path, key, raw, s)
    if s["choices"] and raw not in s["choices"]:
        raise ConfigError(path, key, raw, allowed(s) + suggest(raw, s["choices"]))
    return raw


def closest_name(name, options, cutoff=0.6, fold_case=False):
    """The option closest to `name` (difflib's similarity ratio >= `cutoff`), or None;
    with `fold_case`, compared in lower case and returned as spelt in `options`."""
    opts = [str(o) for o in options]
    if fold_case:
        known = {o.lower(): o for o in sorted(opts)}
        m = difflib.get_close_matches(str(name).lower(), list(known), n=1, cutoff=cutoff)
        return known[m[0]] if m else None
    m = difflib.get_close_matches(str(name), opts, n=1, cutoff=cutoff)
    return m[0] if m else None


def suggest(name, options, cutoff=0.6, fold_case=False):
    """`` (did you mean 'x'?)`` for the option closest to `name` (see :func:`closest_name`),
    or ``""``: the one name suggester of every message."""
    m = closest_name(name, options, cutoff, fold_case)
    return f" (did you mean '{m}'?)" if m else ""


def _short(raw):
    """A long list shown by its length and first values (one readable line)."""
    if isinstance(raw, list) and len(raw) > 8:
        return _Shown(f"[{', '.join(repr(v) for v in raw[:3])}, ... ({len(raw)} values)]")
    return raw


class _Shown(str):
    def __repr__(self):
        return str(self)
