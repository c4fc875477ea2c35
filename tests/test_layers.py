"""The package's structure: the layer contract, no import cycles, and who may print or exit.

* The import-linter contracts declared in pyproject.toml hold (each room imports only the
  rooms below it; the foundation modules import no room).
* No import cycle between modules, counting imports inside functions as well: every
  strongly connected component of the module import graph (grimp) has one module.
* Only the command line (toymc.cli, toymc.__main__) prints or ends the process: other
  modules raise toymc.errors.ToymcError subclasses and return values.
"""

import ast
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import grimp
import pytest
from _demo import ROOT

PACKAGE = ROOT / "src" / "toymc"


def _lint_imports_command():
    # the console script installed beside this interpreter, else the one on PATH
    here = shutil.which("lint-imports", path=str(Path(sys.executable).parent))
    exe = here or shutil.which("lint-imports")
    if exe is None:
        pytest.fail("lint-imports (import-linter, a test dependency) is not installed")
    return exe


def test_import_contracts_hold():
    env = dict(os.environ, PYTHONPATH=str(ROOT / "src"))
    r = subprocess.run([_lint_imports_command(), "--no-cache"], cwd=ROOT, env=env,
                       capture_output=True, text=True, timeout=600, check=False)
    assert r.returncode == 0, f"import contracts broken:\n{r.stdout}\n{r.stderr}"
    kept = re.search(r"(\d+) kept, 0 broken", r.stdout)
    assert kept and int(kept.group(1)) >= 2, r.stdout  # it read pyproject's contracts


def strongly_connected(nodes, edges):
    """Strongly connected components of a directed graph (Tarjan, iterative).

    Parameters
    ----------
    nodes : iterable of hashable
    edges : dict
        node -> iterable of the nodes it points to.

    Returns
    -------
    list of list
    """
    index, low, on_stack, stack, comps = {}, {}, set(), [], []
    counter = 0
    for root in nodes:
        if root in index:
            continue
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack.add(root)
        work = [(root, iter(edges.get(root, ())))]
        while work:
            v, it = work[-1]
            for w in it:
                if w not in index:
                    index[w] = low[w] = counter
                    counter += 1
                    stack.append(w)
                    on_stack.add(w)
                    work.append((w, iter(edges.get(w, ()))))
                    break
                if w in on_stack:
                    low[v] = min(low[v], index[w])
            else:
                work.pop()
                if work:
                    parent = work[-1][0]
                    low[parent] = min(low[parent], low[v])
                if low[v] == index[v]:
                    comp = []
                    while True:
                        w = stack.pop()
                        on_stack.discard(w)
                        comp.append(w)
                        if w == v:
                            break
                    comps.append(comp)
    return comps


def test_strongly_connected_finds_cycles():
    # a -> b -> c -> a is one component; d -> a and the self-free e are their own
    edges = {"a": ["b"], "b": ["c"], "c": ["a"], "d": ["a"], "e": []}
    comps = sorted(sorted(c) for c in strongly_connected("abcde", edges))
    assert comps == [["a", "b", "c"], ["d"], ["e"]]


def _import_graph():
    sys.path.insert(0, str(ROOT / "src"))  # the worktree's package, as pytest's pythonpath
    try:
        graph = grimp.build_graph("toymc", include_external_packages=False, cache_dir=None)
    finally:
        sys.path.remove(str(ROOT / "src"))
    nodes = sorted(graph.modules)
    return nodes, {m: sorted(graph.find_modules_directly_imported_by(m)) for m in nodes}


def test_no_import_cycles():
    nodes, edges = _import_graph()
    assert "toymc.engine.api" in nodes and "toymc.physics.kinematics.twobody" in nodes
    # grimp sees imports inside functions too
    assert "toymc.detector.response" in edges["toymc.engine.api"]
    cycles = [sorted(c) for c in strongly_connected(nodes, edges) if len(c) > 1]
    assert not cycles, "import cycles: " + "; ".join(" <-> ".join(c) for c in cycles)


#: modules that may print and end the process: the command line
_CLI = ("cli",)
_CLI_FILES = ("__main__.py",)
_EXIT_ATTRS = {("sys", "exit"), ("os", "_exit")}
_BUILTINS = {"print", "exit", "quit"}
#: the one exception, with its reason: the signal handler that the command line installs
#: (and worker processes of a scan) must end the process from inside the handler, because
#: an exception raised there can land in numba's dispatcher or a finaliser (toymc.io.signals)
_ALLOWED = {("io/signals.py", "os._exit")}


def _calls(tree):
    """(line, what) of every print/exit call in a module's syntax tree."""
    aliases = {}  # local name -> (module, attribute) from "from sys import exit as bye"
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module in ("sys", "os"):
            for a in node.names:
                if (node.module, a.name) in _EXIT_ATTRS:
                    aliases[a.asname or a.name] = (node.module, a.name)
    found = []
    for node in ast.walk(tree):
        if not isinstance(node, ast.Call):
            continue
        f = node.func
        if isinstance(f, ast.Name) and (f.id in _BUILTINS or f.id in aliases):
            found.append((node.lineno, f.id))
        elif (isinstance(f, ast.Attribute) and isinstance(f.value, ast.Name)
              and (f.value.id, f.attr) in _EXIT_ATTRS):
            found.append((node.lineno, f"{f.value.id}.{f.attr}"))
    return found


def test_print_exit_scan_finds_calls():
    src = ("import os\nimport sys\nfrom sys import exit as bye\n"
           "def f():\n    print('x')\n    sys.exit(2)\n    os._exit(1)\n    bye(3)\n"
           "    quit()\n    exit()\n    log.print_me()\n")
    assert [w for _, w in _calls(ast.parse(src))] == [
        "print", "sys.exit", "os._exit", "bye", "quit", "exit"]


def test_only_the_command_line_prints_or_exits():
    offenders = []
    files = sorted(PACKAGE.rglob("*.py"))
    assert len(files) > 50
    for path in files:
        rel = path.relative_to(PACKAGE)
        if rel.parts[0] in _CLI or str(rel) in _CLI_FILES:
            continue
        for line, what in _calls(ast.parse(path.read_text(), filename=str(path))):
            if (str(rel), what) in _ALLOWED:
                continue
            offenders.append(f"src/toymc/{rel}:{line}: {what}(")
    assert not offenders, "print or exit outside the command line:\n" + "\n".join(offenders)


def test_every_module_has_a_strict_all():
    """Every module names its public API in ``__all__``: each listed name exists, and every
    public function or class the module defines itself is listed."""
    import importlib
    import inspect

    problems = []
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE.parent).with_suffix("")
        parts = rel.parts[:-1] if rel.name == "__init__" else rel.parts
        if parts[-1] == "__main__":
            continue
        name = ".".join(parts)
        mod = importlib.import_module(name)
        if not hasattr(mod, "__all__"):
            problems.append(f"{name}: no __all__")
            continue
        problems += [f"{name}: __all__ names missing {n}" for n in mod.__all__
                     if not hasattr(mod, n)]
        own = [n for n, v in vars(mod).items() if not n.startswith("_")
               and (inspect.isfunction(v) or inspect.isclass(v))
               and getattr(v, "__module__", None) == name]
        problems += [f"{name}: {n} is public but not in __all__" for n in own
                     if n not in mod.__all__]
    assert not problems, "\n".join(problems)
