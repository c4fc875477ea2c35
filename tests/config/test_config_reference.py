"""One schema for every config section and geometry table, and the README generated from it.

* The README's config reference lists every key of every section of a run config and every
  key of a geometry file, each with its type, unit, default and allowed values, and
  regenerating the README (``python -m toymc.cli.readme README.md``) changes nothing.
* Every key used by the demo configs and geometries is in the schema, and every section the
  loader accepts has a schema entry and a description.
* The layering: the config room does not import the engine, the detector does not import
  the config room.
"""

import ast
import re
import tomllib

import pytest
from _demo import ROOT

from toymc.cli import readme
from toymc.config import ranges as R
from toymc.config.loader import SECTIONS
from toymc.config.schema import GEOMETRY_DOCS, GEOMETRY_SCHEMA, SCHEMA, SECTION_DOCS, SPECIES, rows

README = (ROOT / "README.md").read_text()
SRC = ROOT / "src" / "toymc"


def _readme_rows():
    """README table rows by their first cell: {key: [type, unit, default, allowed, meaning]}."""
    out = {}
    for m in re.finditer(r"^\| `([^`]+)` \|(.*)\|$", README, re.M):
        cells = [c.strip() for c in m.group(2).split(" | ")]
        out[m.group(1)] = cells
    return out


ALL_KEYS = list(rows(SCHEMA)) + list(rows(GEOMETRY_SCHEMA))


def test_regenerating_the_readme_changes_nothing():
    assert readme.refresh(README) == README, \
        "README is stale: run PYTHONPATH=src python -m toymc.cli.readme README.md"


@pytest.mark.parametrize("key,s", ALL_KEYS, ids=[k for k, _ in ALL_KEYS])
def test_readme_lists_key_with_type_unit_default_and_range(key, s):
    got = _readme_rows().get(key)
    assert got is not None, f"README lacks key {key}"
    assert len(got) == 5, got
    kind, unit, default, allowed, meaning = got
    assert kind == s["kind"]
    assert unit == (s.get("unit") or R.UNIT[s["dim"]])
    if s["required"]:
        assert default == "required"
    elif s["default"] is not None:
        assert default == repr(s["default"])
    else:
        assert default == ""
    if s["lo"] is not None or s["hi"] is not None:
        assert R.bounds_text(s) in allowed, (key, allowed)
    for choice in s["choices"] or ():
        assert str(choice) in allowed.split(", "), (key, choice, allowed)
    assert meaning == s["doc"] and meaning


def test_readme_has_a_heading_and_description_for_every_section():
    section = README[README.index("<!-- config-reference -->"):
                     README.index("<!-- /config-reference -->")]
    for name in SCHEMA:
        assert f"#### `[{name}]`" in section, name
        assert SECTION_DOCS[name] and SECTION_DOCS[name][1:] in section, name
    for name in GEOMETRY_SCHEMA:
        assert GEOMETRY_DOCS[name] and GEOMETRY_DOCS[name][1:] in section, name
    assert "#### `[[vertex_layers]]`" in section


def test_the_loader_accepts_exactly_the_schema_sections():
    assert set(SECTIONS) == {s.split(".")[0] for s in SCHEMA}
    assert set(SECTION_DOCS) == set(SCHEMA) and set(GEOMETRY_DOCS) == set(GEOMETRY_SCHEMA)


def _keys_of(table, prefix, tables):
    """Dotted keys of a parsed TOML table; sub-tables named in `tables` are walked."""
    for k, v in table.items():
        dotted = f"{prefix}{k}"
        if isinstance(v, dict) and dotted in tables:
            yield from _keys_of(v, dotted + ".", tables)
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for x in v:
                yield from _keys_of(x, dotted + "[].", tables)
        else:
            yield dotted


def test_every_key_of_the_demo_files_is_in_the_schema():
    config_keys = {k for k, _ in rows(SCHEMA)}
    n = 0
    species = re.compile(r"^backgrounds\.(" + "|".join(SPECIES) + r")\.")
    # tuning.r_min / r_max tables stay whole: the key itself takes a list or a range
    tables = (set(SCHEMA) - {"tuning.r_min", "tuning.r_max"}) | {
        f"backgrounds.{sp}" for sp in SPECIES} | {"tuning.background_events"}
    for path in sorted((ROOT / "configs").glob("*.toml")):
        data = tomllib.loads(path.read_text())
        for key in _keys_of(data, "", tables):
            key = species.sub("backgrounds.<species>.", key)  # each species' table alike
            if key.startswith("tuning.background_events."):
                key = "tuning.background_events"  # the table form of that key
            assert key in config_keys, f"{path.name}: {key} is not in config.schema.SCHEMA"
            n += 1
    geo_keys = {k for k, _ in rows(GEOMETRY_SCHEMA)}
    for path in sorted((ROOT / "geometries").glob("*.toml")):
        data = tomllib.loads(path.read_text())
        for key in _keys_of(data, "", set(GEOMETRY_SCHEMA)):
            assert key in geo_keys, f"{path.name}: {key} is not in GEOMETRY_SCHEMA"
            n += 1
    assert n > 100


def _imports(path):
    tree = ast.parse(path.read_text())
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module:
            yield node.module
        elif isinstance(node, ast.Import):
            yield from (a.name for a in node.names)


@pytest.mark.parametrize("room,forbidden", [("config", "toymc.engine"),
                                            ("detector", "toymc.config")])
def test_room_does_not_import(room, forbidden):
    # the layer contract of pyproject (import-linter), checked without the tool
    for path in sorted((SRC / room).glob("*.py")):
        for mod in _imports(path):
            assert not (mod == forbidden or mod.startswith(forbidden + ".")), (path.name, mod)
