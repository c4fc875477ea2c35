"""Private: refresh the generated parts of README.md (``python -m toymc.cli.readme README.md``).

The whole config reference (every section of a run config and every table of a geometry
file, each key with its type, unit, default, allowed values and meaning) comes from
:mod:`toymc.config.schema`, the toy bounds from :data:`toymc.config.ranges.LIMITS` and the
column table from :func:`toymc.io.columns.all_columns`.  tests/config/test_config_reference.py
checks that the README lists every key and that regenerating it changes nothing;
tests/test_docs.py checks the columns.
"""

import re
import sys
from pathlib import Path

from toymc.config import ranges
from toymc.config.schema import GEOMETRY_DOCS, GEOMETRY_SCHEMA, SCHEMA, SECTION_DOCS
from toymc.io.columns import markdown

__all__ = ("config_reference", "refresh", "tables")

_CONFIG_INTRO = """\
A config is a TOML file with the sections below. Values with a unit may be plain numbers in the
internal unit (GeV, cm, ns, T, rad, fb) or strings such as `"15 cm"`, `"350 MeV"`, `"45 mrad"`,
`"1.1 nb"`. Unknown keys and sections are errors (with the closest valid name suggested), and so
is a missing required key. Nothing in a config is evaluated as code. See `configs/` for the
demos. Every key is listed under its full dotted name; `allowed` gives the choices or the range
(a list's bounds apply to each value)."""

_GEOMETRY_INTRO = """\
A geometry file (`geometries/*.toml`, named by `detector.geometry`) describes the detector;
`geometries/demo.toml` shows every key with its unit. Material is in radiation lengths (x/X0)."""


def _heading(name, geometry=False):
    if geometry:
        if not name:
            return "top level"
        if name.endswith("[]"):
            return f"`[[{name[:-2]}]]`"
    return f"`[{name}]`"


def _tables(schema, docs, geometry=False):
    out = []
    for name, keys in schema.items():
        rows = ((f"{name}.{k}" if name else k, s) for k, s in keys.items())
        out += [f"#### {_heading(name, geometry)}", "", docs[name][0].upper() + docs[name][1:]
                + ".", "", ranges.markdown(rows), ""]
    return out


def config_reference():
    """The config reference: every run-config section, then the geometry file."""
    lines = [_CONFIG_INTRO, ""] + _tables(SCHEMA, SECTION_DOCS)
    lines += ["### Geometry files", "", _GEOMETRY_INTRO, ""]
    lines += _tables(GEOMETRY_SCHEMA, GEOMETRY_DOCS, geometry=True)
    return "\n".join(lines).rstrip()


def tables():
    """{marker name: generated Markdown}."""
    return {"config-reference": config_reference(), "limits-table": ranges.limits_markdown(),
            "column-table": markdown()}


def refresh(text):
    """`text` with the part between each pair of markers regenerated; a marker pair missing
    from `text` is an error (the README would silently lose its table)."""
    for name, table in tables().items():
        pattern = rf"<!-- {name} -->.*?<!-- /{name} -->"
        if not re.search(pattern, text, flags=re.S):
            raise ValueError(f"README has no <!-- {name} --> ... <!-- /{name} --> markers")
        text = re.sub(pattern, lambda _m, n=name, t=table: f"<!-- {n} -->\n{t}\n<!-- /{n} -->",
                      text, flags=re.S)
    return text


if __name__ == "__main__":
    path = Path(sys.argv[1] if len(sys.argv) > 1 else "README.md")
    path.write_text(refresh(path.read_text()))
