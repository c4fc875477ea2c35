"""TOML text: the one reader of config and geometry files, and the writer of resolved configs.

:func:`read_toml` reads a file (a run config, a tuning or reach config, a geometry) and
returns its table; every reader of a user's TOML file goes through it, so a missing,
unreadable, non-UTF-8, too deeply nested or malformed file gives the same one-line error
(:class:`toymc.errors.InputFileError`) wherever it is read.  :func:`check_depth` refuses
text nested deeper than :data:`toymc.config.ranges.MAX_TOML_DEPTH` before ``tomllib``'s
recursion (or its memory for long dotted keys) can blow up.  :func:`dumps` and
:func:`toml_value` write TOML back (resolved configs stored in metadata).
"""

import math
import re
import tomllib
from pathlib import Path

from toymc.config.ranges import MAX_TOML_DEPTH
from toymc.errors import InputFileError

__all__ = ("check_depth", "dumps", "parse_toml", "read_toml", "toml_value")

# ----------------------------------------------------------------------------- nesting

_TOKEN = re.compile(r'"""|\'\'\'|["\'#\[\]{}=,.\n]')
_BASIC = re.compile(r'"(?:[^"\\\n]|\\.)*("|$)', re.M)


def check_depth(text, path, limit=MAX_TOML_DEPTH):
    """Refuse TOML text nested deeper than `limit` levels, before parsing it.

    Levels: a key at the top of the file is level 1; each part of a table
    header or dotted key, each array and each inline table adds one (``[a.b]``
    then ``c = [[1]]`` reaches level 5).  Strings and comments are skipped.
    The scan is linear in the text; ``tomllib`` recurses once per level and
    keeps every prefix of a dotted key, so a file nested thousands of levels
    deep would exhaust the recursion limit or the memory.

    Raises
    ------
    InputFileError
        ``<file>: line <n>: nesting depth > <limit>: ...`` (one line).
    """
    pos, line, n = 0, 1, len(text)
    stack = []  # (bracket, level of the container's value)
    mode, dots, header, cur, aot = "key", 0, 0, 0, False

    def too_deep(level):
        if level > limit:
            raise InputFileError(f"{path}: line {line}: TOML nesting depth = more than {limit}: "
                                 f"at most {limit} levels of tables, dotted keys, arrays and "
                                 "inline tables")

    while pos < n:
        m = _TOKEN.search(text, pos)
        if m is None:
            break
        t, pos = m.group(), m.end()
        if t in ('"""', "'''"):
            end = pos
            while True:
                j = text.find(t, end)
                if j < 0:
                    return  # unterminated: tomllib reports it
                if t == '"""':
                    k = j
                    while k > pos and text[k - 1] == "\\":
                        k -= 1
                    if (j - k) % 2:  # an escaped quote
                        end = j + 1
                        continue
                break
            end = j + 3
            while end < n and text[end] == t[0] and end - j < 5:
                end += 1
            line += text.count("\n", pos, end)
            pos = end
        elif t == '"':
            s = _BASIC.match(text, pos - 1)
            pos = s.end() if s else pos
        elif t == "'":
            j = text.find("'", pos)
            k = text.find("\n", pos)
            pos = j + 1 if j >= 0 and (k < 0 or j < k) else (k if k >= 0 else n)
        elif t == "#":
            k = text.find("\n", pos)
            pos = k if k >= 0 else n
        elif t == "\n":
            line += 1
            if not stack:
                mode, dots = "key", 0
        elif t == ".":
            if mode in ("key", "ikey", "header"):
                dots += 1
                base = stack[-1][1] if mode == "ikey" else (0 if mode == "header" else header)
                too_deep(base + dots + 1)
        elif t == "[":
            if mode == "key" and not stack:
                aot = text.startswith("[", pos)
                pos += aot
                mode, dots = "header", 0
            elif mode == "value":
                stack.append(("[", cur))
                cur += 1
                too_deep(cur)
        elif t == "]":
            if mode == "header":
                header = dots + 1 + aot
                pos += aot and text.startswith("]", pos)
                too_deep(header)
                mode = "after"
            elif stack and stack[-1][0] == "[":
                cur = stack.pop()[1]
                mode = "value"
        elif t == "{":
            if mode == "value":
                stack.append(("{", cur))
                mode, dots = "ikey", 0
        elif t == "}":
            if stack and stack[-1][0] == "{":
                cur = stack.pop()[1]
                mode = "value"
        elif t == "=":
            if mode == "key":
                cur, mode = header + dots + 1, "value"
            elif mode == "ikey":
                cur, mode = stack[-1][1] + dots + 1, "value"
            too_deep(cur)
        elif t == ",":
            if stack and stack[-1][0] == "{":
                mode, dots = "ikey", 0
            elif stack:
                cur = stack[-1][1] + 1




def parse_toml(text, path):
    """``tomllib.loads(text)`` after :func:`check_depth`; InputFileError if not TOML."""
    check_depth(text, path)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputFileError(f"{path}: not a valid TOML file ({exc})") from None
    except RecursionError:  # not reached after check_depth; kept as a last guard
        raise InputFileError(f"{path}: TOML nested too deeply: at most {MAX_TOML_DEPTH} "
                             "levels") from None


def read_toml(path, kind="config"):
    """The table of the TOML file at `path` (a `kind` file: config, geometry, ...).

    Raises
    ------
    InputFileError
        ``<file>: <kind> file not found`` (also for a folder),
        ``<file>: cannot read <kind> file (<reason>)``
        or ``<file>: not a valid TOML file (<reason>)``: one line each.
    """
    p = Path(path)
    if not p.exists():
        raise InputFileError(f"{p}: {kind} file not found")
    if p.is_dir():
        raise InputFileError(f"{p}: {kind} file not found (a folder)")
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise InputFileError(f"{p}: cannot read {kind} file ({exc.strerror})") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputFileError(f"{p}: not a valid TOML file ({exc})") from None
    return parse_toml(text, str(p))


def toml_value(v):
    """One TOML value (numbers incl. inf and nan, strings, booleans, lists, inline tables)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        if isinstance(v, float) and math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, Path):
        v = str(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{k} = {toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def dumps(data):
    """TOML text of {section: {key: value}}; nested tables become inline tables.

    None values are left out.  The inverse of tomllib.loads for such documents.
    """
    lines = []
    for name, table in data.items():
        lines.append(f"[{name}]")
        lines.extend(f"{k} = {toml_value(v)}" for k, v in table.items() if v is not None)
        lines.append("")
    return "\n".join(lines)
