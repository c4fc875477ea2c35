"""The house plan in DEVELOPERS.md matches the package tree: every module is listed in its
room, and every listed module exists."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PKG = ROOT / "src" / "toymc"


def _plan():
    """Paths (relative to src/toymc) named in the fenced block under '## Rooms'."""
    text = (ROOT / "DEVELOPERS.md").read_text()
    block = re.search(r"^## Rooms\n.*?^```\n(.*?)^```", text, re.S | re.M)
    assert block, "DEVELOPERS.md has no fenced block under '## Rooms'"
    lines = block.group(1).splitlines()
    assert lines[0].strip() == "src/toymc/", lines[0]
    stack, names = [], set()
    for line in lines[1:]:
        m = re.match(r"^( +)(\S+)", line)
        if not m or len(m.group(1)) > 2 * (len(stack) + 1):
            continue  # a continuation line of a description
        depth = len(m.group(1)) // 2 - 1
        assert len(m.group(1)) % 2 == 0 and re.fullmatch(r"[A-Za-z_]\w*(\.py|/)", m.group(2)), \
            f"not an entry of the form 'name.py' or 'folder/': {line!r}"
        stack = stack[:depth] + [m.group(2).rstrip("/")]
        names.add("/".join(stack) + ("/" if m.group(2).endswith("/") else ""))
    return names


def _tree():
    names = set()
    for p in PKG.rglob("*.py"):
        rel = p.relative_to(PKG)
        if "__pycache__" in rel.parts or p.name == "__init__.py" and len(rel.parts) > 1:
            continue
        names.add(str(rel))
    for p in PKG.rglob("__init__.py"):
        rel = p.parent.relative_to(PKG)
        if rel.parts:
            names.add(str(rel) + "/")
    return names


def test_every_module_is_in_the_house_plan():
    missing = _tree() - _plan()
    assert not missing, f"DEVELOPERS.md's Rooms lack {sorted(missing)}"


def test_every_planned_module_exists():
    extra = _plan() - _tree()
    assert not extra, f"DEVELOPERS.md's Rooms list modules that do not exist: {sorted(extra)}"


def test_the_layer_order_is_the_contracts():
    """The layer order the house plan states is the one import-linter enforces."""
    import tomllib

    layers = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["importlinter"][
        "contracts"][0]["layers"]
    text = (ROOT / "DEVELOPERS.md").read_text()
    stated = re.search(r"^Layers \(top imports bottom\): (.*)$", text, re.M)
    assert stated, "DEVELOPERS.md does not state the layer order"
    assert [f"toymc.{r.strip()}" for r in stated.group(1).rstrip(".").split(">")] == layers
