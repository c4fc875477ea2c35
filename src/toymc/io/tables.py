"""Small writers of tables: CSV rows and JSON documents, through the output policy.

Both write under a temporary name and rename when complete
(:func:`toymc.io.files.atomic_write`); whether an existing file may be replaced
follows ``force`` or, by default, :func:`toymc.io.files.replacing` of the command.
The caller formats the cells: the writers change no value.
"""

import csv
import json

from toymc.io.files import atomic_write

__all__ = ("write_csv", "write_json")


def write_csv(path, header, rows, force=None):
    """Write a header line and rows (sequences of cells, already formatted) as CSV.

    Parameters
    ----------
    path : str or Path
    header : sequence of str
    rows : iterable of sequences
        Written in order; cells go through :mod:`csv` as they are.
    force : bool, optional
        Replace an existing file (default: the command's :func:`toymc.io.files.replacing`).
    """
    def write(tmp):
        with open(tmp, "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(header)
            for row in rows:
                w.writerow(row)

    atomic_write(path, write, force=force)


def write_json(path, doc, sort_keys=False, force=None):
    """Write `doc` as JSON with one-space indentation (``json.dumps(doc, indent=1)``).

    Parameters
    ----------
    path : str or Path
    doc : JSON-serialisable object
    sort_keys : bool
        Sort the keys of every object.
    force : bool, optional
        As :func:`write_csv`.
    """
    text = json.dumps(doc, indent=1, sort_keys=sort_keys)
    atomic_write(path, lambda tmp: tmp.write_text(text), force=force)
