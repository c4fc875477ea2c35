"""Small writers of tables: CSV rows and JSON documents, through the output policy.

Both write under a temporary name and rename when complete
(:func:`toymc.io.files.atomic_write`); whether an existing file may be replaced
follows ``force`` or, by default, :func:`toymc.io.files.replacing` of the command.
The caller formats the cells: the writers change no value.
"""

import csv
import json

from toymc.io.files import atomic_write

__all__ = ("csv_writer", "json_writer", "write_csv", "write_json")


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
    atomic_write(path, csv_writer(header, rows), force=force)


def csv_writer(header, rows):
    """The write function of :func:`write_csv`: ``write(tmp)`` writes the table to `tmp`
    (for :func:`toymc.io.files.atomic_write_all`, several files as one output)."""
    def write(tmp):
        with open(tmp, "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(header)
            for row in rows:
                w.writerow(row)

    return write


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
    atomic_write(path, json_writer(doc, sort_keys), force=force)


def json_writer(doc, sort_keys=False):
    """The write function of :func:`write_json` (see :func:`csv_writer`)."""
    text = json.dumps(doc, indent=1, sort_keys=sort_keys)
    return lambda tmp: tmp.write_text(text)
