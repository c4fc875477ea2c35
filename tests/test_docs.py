"""The README documents every ntuple column with its unit, and states what it promises.

The config reference (every section and key) is checked by tests/config/test_config_reference.py.
"""

import re
from pathlib import Path

from toymc.io.columns import all_columns

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text()


def _table_rows(prefix):
    return {m.group(1): m.group(0) for m in re.finditer(r"^\| `([^`]+)` \|.*$", README, re.M)
            if m.group(1).startswith(prefix) or not prefix}


def test_every_column_in_readme_with_unit():
    rows = _table_rows("")
    for name, unit, meaning in all_columns():
        assert name in rows, f"README lacks column {name}"
        assert f"| {unit} |" in rows[name], f"README row of {name} lacks its unit {unit!r}"


def test_ci_runs_the_readme_test_command():
    m = re.search(r"Install and run the tests:\s*```bash\s*(.+?)\s*```", README, re.S)
    assert m, "README has no test command"
    assert m.group(1).strip() in (ROOT / ".ci" / "run").read_text()


def test_readme_states_the_caution():
    # the caution stands before the first section, where a new user reads it
    intro = README.split("\n## ", 1)[0]
    assert "parametric toy" in intro and "not a substitute" in intro


def _subparsers():
    import argparse

    from toymc.cli.main import build_parser

    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return parser, sub.choices


def _usage_spans():
    """`toymc <command> ...` inline code spans of the README (usage lines)."""
    return [m.group(1) for m in re.finditer(r"`(toymc [^`]+)`", README)]


def _example_lines():
    """Command lines of the README's code blocks that run toymc."""
    out = []
    for block in re.findall(r"^```[a-z]*\n(.*?)^```", README, re.S | re.M):
        out += [ln.strip() for ln in block.splitlines() if ln.strip().startswith("toymc ")]
    return out


def test_every_command_of_the_parser_is_documented():
    _, commands = _subparsers()
    documented = {s.split()[1] for s in _usage_spans() + _example_lines()}
    missing = sorted(set(commands) - documented)
    assert not missing, f"README shows no usage of toymc {missing}"


def test_options_in_readme_usage_lines_exist():
    """Every option a README usage line names is an option of that command's real parser."""
    _, commands = _subparsers()
    checked = 0
    for span in _usage_spans():
        words = span.split()
        if len(words) < 2 or words[1] not in commands:
            continue
        known = {o for a in commands[words[1]]._actions for o in a.option_strings}
        for w in re.findall(r"(?<![\w-])(--?[a-z][a-z-]*)", " ".join(words[2:])):
            assert w in known, f"README: `{span}` names {w}, not an option of toymc {words[1]}"
            checked += 1
    assert checked >= 10


def test_readme_example_command_lines_parse():
    """Every toymc command line of the README's code blocks is accepted by the real parser
    (parsed only, nothing runs)."""
    import shlex

    parser, _ = _subparsers()
    lines = _example_lines()
    assert len(lines) >= 5
    for line in lines:
        args = parser.parse_args(shlex.split(line, comments=True)[1:])
        assert callable(args.func), line


def test_readme_python_version_is_the_one_pyproject_requires():
    import tomllib

    req = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["requires-python"]
    m = re.fullmatch(r">=\s*(\d+)\.(\d+)", req.strip())
    assert m, f"requires-python {req!r} is not of the form >=X.Y"
    stated = re.findall(r"Python (\d+)\.(\d+) or newer", README)
    assert stated, "README does not say which Python it needs"
    assert set(stated) == {m.groups()}, (stated, req)


def test_validate_quick_duration_is_stated_alike():
    # the figure is measured by hand; README and --help must give the same one
    from toymc.cli.main import build_parser

    m = re.search(r"`--quick`: about ([^\s]+ s)", README)
    assert m, "README does not say how long validate --quick takes"
    sub = build_parser()._subparsers._group_actions[0].choices["validate"]
    quick = next(a for a in sub._actions if "--quick" in a.option_strings)
    assert f"about {m.group(1)}" in quick.help, (m.group(1), quick.help)


def test_readme_demo_cutflow_reproduces():
    # the README's first command and `toymc cutflow`: with the numpy and numba versions the
    # README names, the table must come out digit for digit (events are the same bits on any
    # x86-64 CPU, tests/engine/test_cpu_independence.py); with other versions the bit streams may
    # differ, so each count must agree within 5 binomial standard deviations
    import re

    import numba

    from toymc.cli.main import main

    readme = (ROOT / "README.md").read_text()
    block = readme[readme.index("<!-- demo-cutflow -->"):readme.index("<!-- /demo-cutflow -->")]
    want = block.split("```")[1].strip().splitlines()
    np_v, nb_v = re.search(r"made with\s+numpy (\S+) and numba (\S+),", readme).groups()
    return_lines = []

    import tempfile

    with tempfile.TemporaryDirectory() as d:
        out = Path(d) / "alp_3pi.root"
        assert main(["generate", str(ROOT / "configs" / "alp_3pi_bka.toml"), "--events",
                     "200000", "--seed", "1", "--output", str(out), "-q"]) == 0
        import contextlib
        import io

        buf = io.StringIO()
        with contextlib.redirect_stdout(buf):
            assert main(["cutflow", str(out)]) == 0
        return_lines = buf.getvalue().strip().splitlines()
    got = [line.replace(str(out), "alp_3pi.root") for line in return_lines]
    import numpy as np

    if (np.__version__, numba.__version__) == (np_v, nb_v):
        assert got == want
    else:
        rows_w = {r.split()[0]: int(r.split()[1]) for r in want[2:]}
        rows_g = {r.split()[0]: int(r.split()[1]) for r in got[2:]}
        assert rows_w.keys() == rows_g.keys()
        for k, n in rows_w.items():
            p = n / 200000
            assert abs(rows_g[k] - n) <= 5 * (200000 * p * (1 - p)) ** 0.5 + 1, k
