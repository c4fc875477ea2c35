"""The one validator of a config table: unknown keys (with the closest name), types,
units, ranges, required keys and defaults, from a table of key specifications
(:func:`toymc.config.ranges.spec`); and the message for a missing top-level section."""

from toymc.config import ranges as R
from toymc.errors import ConfigError

__all__ = ("check_table", "missing_section_hint", "require_section")


def check_table(path, name, table, specs, extra=(), what=None):
    """Validate the table `table` at dotted `name` against `specs` (key -> spec).

    Parameters
    ----------
    path : str or None
        The file, for messages.
    name : str
        Dotted name of the table ("" for a file's top level); keys are named ``name.key``.
    table : object
        The parsed TOML value; it must be a dict.
    specs : dict
        Key -> specification (:func:`toymc.config.ranges.spec`).
    extra : sequence of str
        Further keys allowed in the table that the caller reads itself (sub-tables, values
        of more than one form): returned unchecked when present, unless `specs` has them,
        in which case only the presence of a required key is checked.
    what : str, optional
        What to say when `table` is not a table (default ``a table [name]``).

    Returns
    -------
    dict
        Key -> value in internal units, the default for absent keys (None if none).
    """
    if not isinstance(table, dict):
        raise ConfigError(path, name, table, what or f"a table [{name}]")
    allowed = list(specs) + [k for k in extra if k not in specs]
    for key in table:
        if key not in allowed:
            raise ConfigError(path, _dotted(name, key), table[key], "unknown key; allowed: "
                              + ", ".join(allowed) + R.suggest(key, allowed))
    out = {}
    for key, s in specs.items():
        if key in table:
            out[key] = table[key] if key in extra else R.check(path, _dotted(name, key),
                                                                table[key], s)
        elif s["required"]:
            raise ConfigError(path, _dotted(name, key), None, "required; " + R.allowed(s))
        else:
            out[key] = s["default"]
    out.update((k, table[k]) for k in extra if k not in specs and k in table)
    return out


def _dotted(name, key):
    return f"{name}.{key}" if name else key


def missing_section_hint(name, data):
    """Hint for a required top-level section `name` that `data` (parsed TOML) lacks.

    ``" (found [x]: misspelt?)"`` when a top-level table with a close name is present
    (difflib's similarity ratio >= 0.6), else ``""``.
    """
    m = R.closest_name(name, [k for k, v in data.items() if isinstance(v, dict)])
    return f" (found [{m}]: misspelt?)" if m else ""


def require_section(path, data, name, allowed):
    """Refuse a document without the top-level section `name`: ``<allowed>`` plus a hint."""
    if name not in data:
        raise ConfigError(path, name, None, allowed + missing_section_hint(name, data))
