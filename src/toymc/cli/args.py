"""Command-line numbers: one set of argparse types with bounds, and errors as one line.

Every number typed on the command line goes through one of the types below
(bounds from :mod:`toymc.config.ranges`, stated in ``--help`` and the README).  A bad
value gives one line ``toymc: error: --events = '0': an integer >= 1 and <=
10^12`` and exit status 2 (:class:`Parser` replaces argparse's usage block by
that line; ``--help`` still shows the usage).
"""

import argparse
import math
import re
import sys

from toymc.config import ranges as R

__all__ = ("Parser", "int_type", "float_type", "quantity_type", "EVENTS", "SAMPLE_EVENTS",
           "SEED", "CHUNK_BLOCKS", "WORKERS", "REPEAT", "FRACTION", "EPS", "CROSS_SECTION")

_ARG = re.compile(r"argument (\S+): (.*)", re.S)


class Parser(argparse.ArgumentParser):
    """argparse with one-line errors ``toymc: error: ...`` (exit status 2)."""

    def error(self, message):
        m = _ARG.fullmatch(message)
        if m:
            opt = m.group(1).split("/")[0]
            rest = m.group(2)
            message = f"{opt} {rest}" if rest.startswith("= ") else f"{opt}: {rest}"
        else:
            message += f" (see '{self.prog} --help')"
        sys.stderr.write(f"toymc: error: {' '.join(message.split())}\n")
        sys.exit(2)


def _range_text(lo, hi, lo_open=False, hi_open=False):
    parts = []
    if lo is not None:
        parts.append(("> " if lo_open else ">= ") + R.fmt(lo))
    if hi is not None:
        parts.append(("< " if hi_open else "<= ") + R.fmt(hi))
    return " and ".join(parts)


def int_type(lo, hi, name="integer"):
    """An argparse type: an integer in [lo, hi]."""
    allowed = f"an integer {_range_text(lo, hi)}"

    def parse(text):
        try:
            v = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"= {text!r}: {allowed}") from None
        if not lo <= v <= hi:
            raise argparse.ArgumentTypeError(f"= {text!r}: {allowed}")
        return v

    parse.__name__ = name
    parse.allowed = allowed
    return parse


def float_type(lo, hi, lo_open=False, hi_open=False, name="number"):
    """An argparse type: a finite number within the bounds."""
    allowed = f"a finite number {_range_text(lo, hi, lo_open, hi_open)}"

    def parse(text):
        try:
            v = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"= {text!r}: {allowed}") from None
        if not (math.isfinite(v) and (v > lo if lo_open else v >= lo)
                and (v < hi if hi_open else v <= hi)):
            raise argparse.ArgumentTypeError(f"= {text!r}: {allowed}")
        return v

    parse.__name__ = name
    parse.allowed = allowed
    return parse


def quantity_type(dim, lo, hi, lo_open=False, name="quantity"):
    """An argparse type: a number in the internal unit of `dim` or '<number> <unit>'."""
    from toymc.config.units import parse_quantity

    allowed = (f"a finite number in {R.UNIT[dim]} or a '<number> <unit>' string, "
               f"{_range_text(lo, hi, lo_open)}")

    def parse(text):
        try:
            v = parse_quantity(float(text) if _is_number(text) else text, dim)
        except (ValueError, OverflowError) as exc:
            raise argparse.ArgumentTypeError(f"= {text!r}: {exc}; {allowed}") from None
        if not (math.isfinite(v) and (v > lo if lo_open else v >= lo) and v <= hi):
            raise argparse.ArgumentTypeError(f"= {text!r}: {allowed}")
        return v

    parse.__name__ = name
    parse.allowed = allowed
    return parse


def _is_number(text):
    try:
        float(text)
    except ValueError:
        return False
    return True


#: events of a run written to a file
EVENTS = int_type(1, R.MAX_EVENTS, "events")
#: events of a sample held in memory (fold, reach, validation)
SAMPLE_EVENTS = int_type(1, R.MAX_SAMPLE_EVENTS, "events")
SEED = int_type(0, R.MAX_SEED, "seed")
CHUNK_BLOCKS = int_type(1, R.MAX_CHUNK_BLOCKS, "blocks")
WORKERS = int_type(1, R.MAX_WORKERS, "workers")
REPEAT = int_type(1, 100, "repeat")
FRACTION = float_type(0.0, 1.0, name="fraction")
#: a kinetic-mixing coupling
EPS = float_type(0.0, 1.0, lo_open=True, name="eps")
CROSS_SECTION = quantity_type("area", 0.0, R.MAX_CROSS_SECTION, name="cross_section")
