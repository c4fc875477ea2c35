"""Read toymc ntuples into awkward arrays with `vector` four-momenta.

Structure of what :func:`read` and :func:`iterate` return (one record per
event):

* every stored column under its stored name, unchanged: per-event columns
  (``llp_px``, ``llp_m``, ``w_gen``, ...), group counters (``ndau``) and
  jagged group columns (``dau_px``: one list per event); the column table
  with units is :mod:`toymc.io.columns` (and ``toymc info FILE``);
* one record per per-event four-momentum, named by its prefix: for every
  prefix ``P`` with columns ``P_px, P_py, P_pz, P_e`` (``llp``, ``par`` the
  parent, ``rcl`` the recoil), ``events.P`` is a `vector` ``Momentum4D``
  with fields ``px, py, pz, e``: ``events.llp.mass``, ``events.rcl.pt``;
* one jagged record per group (``dau``, ``rcld``, and later detector
  groups), named by the group: ``events.dau`` has every ``dau_<field>`` as
  ``events.dau.<field>`` (``pdg``, ``q``, ``status``, ``mother``, ``px`` ..
  ``e``, ``vx`` ..), and is a ``Momentum4D`` when the group has
  ``px, py, pz, e`` (``Momentum3D`` with ``px, py, pz`` only), so
  ``events.dau.pt`` and ``ak.sum(events.dau[events.dau.status == 1], axis=1).mass``
  work;
* ``w_lumi`` when a luminosity is given (see :mod:`toymc.io.weights`).

The records share their buffers with the flat columns (no copy).  Records
are built only when all their columns were read.  `vector`'s awkward
behaviours are registered globally (``vector.register_awkward()``) on first
use.

Selections are Python callables, ``cut(events) -> mask`` (one boolean per
event), applied chunk by chunk to the structure above.  Strings are refused:
toymc never evaluates text from a file, a config or an argument as code.
"""

from pathlib import Path

import awkward as ak
import numpy as np

from toymc.config.ranges import suggest
from toymc.errors import InputFileError, ToymcError
from toymc.io.info import load_meta
from toymc.io.rootfile import TREE, open_root
from toymc.io.verify import _reason

__all__ = ("DEFAULT_STEP_SIZE", "VECTOR_FIELDS", "add_records", "iterate", "layout", "read")

#: default chunk size for reading: an uproot step size (bytes as a string, or events)
DEFAULT_STEP_SIZE = "100 MB"

#: field names with a meaning in `vector`: a group with any of these besides
#: px, py, pz, e is left a plain record
VECTOR_FIELDS = frozenset(("x", "y", "z", "t", "E", "energy", "rho", "pt", "phi", "eta", "theta",
                           "mass", "m", "M", "tau", "mass2", "p", "beta", "gamma"))

_REGISTERED = []


def _register_vector():
    if not _REGISTERED:
        import vector

        vector.register_awkward()
        _REGISTERED.append(True)


def _open_tree(path):
    """The open file (:func:`toymc.io.rootfile.open_root`) and its events tree."""
    f = open_root(path)
    try:
        return f, f[TREE]
    except Exception as exc:  # noqa: BLE001 - uproot raises many types for bad files
        f.close()
        raise InputFileError(f"{path}: cannot read the events tree ({type(exc).__name__})") from None


def layout(tree):
    """Column layout of an ``events`` tree.

    Parameters
    ----------
    tree : uproot.TTree

    Returns
    -------
    event : list of str
        Per-event columns (not counters), in stored order.
    groups : dict
        ``group -> list of field names`` (the branch ``<group>_<field>`` is
        jagged with counter ``n<group>``), in stored order.
    types : dict
        ``branch -> type name`` for every branch (for comparing files).
    """
    groups, counters, jagged, types = {}, set(), set(), {}
    for name in tree.keys():
        br = tree[name]
        types[name] = br.typename
        cb = getattr(br, "count_branch", None)
        if cb is not None:
            group = cb.name[1:]
            prefix = group + "_"
            if not (cb.name.startswith("n") and name.startswith(prefix)):
                raise InputFileError(f"jagged column {name} does not follow the n<group>, "
                                     "<group>_<field> layout of toymc")
            counters.add(cb.name)
            jagged.add(name)
            groups.setdefault(group, []).append(name[len(prefix):])
    event = [n for n in tree.keys() if n not in counters and n not in jagged]
    return event, groups, types


def _four_prefixes(names):
    out = []
    for n in names:
        if n.endswith("_px"):
            p = n[:-3]
            if all(f"{p}_{c}" in names for c in ("py", "pz", "e")):
                out.append(p)
    return out


def add_records(events, groups=None):
    """Add the `vector` records described in the module docstring to flat events.

    Parameters
    ----------
    events : ak.Array
        Records of flat columns as stored (``llp_px``, ``ndau``, ``dau_px``, ...).
    groups : dict, optional
        ``group -> fields``; default: every ``n<group>`` counter whose
        ``<group>_<field>`` columns are present.

    Returns
    -------
    ak.Array
    """
    _register_vector()
    names = list(events.fields)
    if groups is None:
        groups = {}
        for n in names:
            if n.startswith("n") and len(n) > 1:
                g = n[1:]
                fields = [c[len(g) + 1:] for c in names if c.startswith(g + "_")
                          and events[c].ndim == 2]
                if fields:
                    groups[g] = fields
    out = {n: events[n] for n in names}
    grouped = {f"{g}_{f}" for g, fs in groups.items() for f in fs}
    flat = [n for n in names if n not in grouped]
    for p in _four_prefixes(flat):
        if p in out:
            continue
        out[p] = ak.zip({c: events[f"{p}_{c}"] for c in ("px", "py", "pz", "e")},
                        with_name="Momentum4D")
    for g, fields in groups.items():
        present = [f for f in fields if f"{g}_{f}" in out]
        if not present or g in out:
            continue
        name = None
        if not (set(present) & VECTOR_FIELDS):
            if {"px", "py", "pz", "e"} <= set(present):
                name = "Momentum4D"
            elif {"px", "py", "pz"} <= set(present):
                name = "Momentum3D"
        out[g] = ak.zip({f: events[f"{g}_{f}"] for f in present}, with_name=name)
    return ak.zip(out, depth_limit=1)


def _paths(path_or_paths):
    if isinstance(path_or_paths, (str, Path)):
        paths = [path_or_paths]
    else:
        try:
            paths = list(path_or_paths)
        except TypeError:
            raise ToymcError(f"paths must be a file name or a list of file names, not "
                             f"{type(path_or_paths).__name__}") from None
    if not paths:
        raise ToymcError("no input files given")
    for p in paths:
        if not isinstance(p, (str, Path)):
            raise ToymcError(f"paths must be file names, not {type(p).__name__}")
    return [str(p) for p in paths]


def _expand(columns, event, groups, path):
    """Branches to read for the requested column names."""
    branches = set(event) | {f"n{g}" for g in groups} | {
        f"{g}_{f}" for g, fs in groups.items() for f in fs}
    if columns is None:
        return None
    if isinstance(columns, str):
        columns = [columns]
    want, missing = [], []
    fours = _four_prefixes(event)
    for c in columns:
        if not isinstance(c, str):
            raise ToymcError(f"columns must be column names (strings), not {type(c).__name__}")
        if c in branches:
            want.append(c)
        elif c in groups:
            want += [f"n{c}"] + [f"{c}_{f}" for f in groups[c]]
        elif c in fours:
            want += [f"{c}_{k}" for k in ("px", "py", "pz", "e")]
        elif c == "w_lumi":
            continue
        else:
            missing.append(c)
    if missing:
        hints = []
        known = branches | set(groups) | set(fours)
        for m in missing:
            hints.append(m + suggest(m, known, cutoff=0.75, fold_case=True))
        raise InputFileError(f"{path}: no column(s) {', '.join(hints)}; see toymc info {path}")
    if not want:
        raise ToymcError(f"columns = {list(columns)!r} selects no stored column; name at least "
                         "one (see toymc info)")
    out = []
    for w in want:
        if w not in out:
            out.append(w)
    for g, fs in groups.items():
        if any(f"{g}_{f}" in out for f in fs) and f"n{g}" not in out:
            out.append(f"n{g}")
    return out


def _check_cut(cut):
    if cut is None:
        return
    if isinstance(cut, (str, bytes)):
        raise ToymcError("cut must be a Python callable cut(events) -> boolean mask; strings are "
                         "not evaluated (e.g. cut=lambda ev: ev.llp_dr > 1)")
    if not callable(cut):
        raise ToymcError(f"cut must be a callable cut(events) -> boolean mask, not "
                         f"{type(cut).__name__}")


def _apply_cut(cut, events):
    mask = cut(events)
    try:
        mask = ak.to_numpy(mask) if isinstance(mask, ak.Array) else np.asarray(mask)
    except Exception:  # noqa: BLE001
        raise ToymcError("cut(events) must return one boolean per event") from None
    if mask.dtype != np.bool_ or mask.shape != (len(events),):
        raise ToymcError(f"cut(events) must return one boolean per event ({len(events)}), got "
                         f"dtype {mask.dtype} and shape {mask.shape}")
    return events[mask]


def _prepare(path_or_paths, columns, cut, lumi_fb, overrides):
    from toymc.io.weights import OVERRIDES, sample_weights

    _check_cut(cut)
    overrides = dict(overrides or {})
    unknown = sorted(set(overrides) - set(OVERRIDES))
    if unknown:
        raise ToymcError(f"unknown normalisation override(s) {', '.join(unknown)}; allowed: "
                         + ", ".join(OVERRIDES))
    paths = _paths(path_or_paths)
    files, plans = [], []
    first = None
    for p in paths:
        meta = load_meta(p)
        f, tree = _open_tree(p)
        try:
            event, groups, types = layout(tree)
        except InputFileError as exc:
            raise InputFileError(f"{p}: {exc}") from None
        finally:
            f.close()
        if first is None:
            first = (p, meta["schema_version"], types)
        elif meta["schema_version"] != first[1]:
            raise InputFileError(f"{p}: schema version {meta['schema_version']} differs from "
                                 f"{first[0]} (version {first[1]}); read them separately")
        elif set(types) != set(first[2]):
            extra = sorted(set(types) ^ set(first[2]))
            raise InputFileError(f"{p}: columns differ from {first[0]} ({', '.join(extra[:5])})")
        branches = _expand(columns, event, groups, p)
        if lumi_fb is not None and meta.get("mixed") and branches is not None \
                and "w_xsec" not in branches:
            branches.append("w_xsec")
        files.append((p, meta))
        plans.append((p, branches, groups))
    weights = sample_weights(files, lumi_fb, **overrides) if lumi_fb is not None else None
    lumi = None
    if lumi_fb is not None:
        from toymc.io.weights import parse_lumi

        lumi = parse_lumi(lumi_fb)
    return plans, weights, lumi


def _chunks(plans, weights, lumi, cut, step_size):
    for path, branches, groups in plans:
        f, tree = _open_tree(path)
        try:
            it = tree.iterate(branches, step_size=step_size, library="ak")
            while True:
                try:
                    chunk = next(it)
                except StopIteration:
                    break
                except Exception as exc:  # noqa: BLE001 - damaged baskets, truncated files
                    raise InputFileError(f"{path}: cannot read events ({_reason(exc)})") from None
                gsel = {g: [x for x in fs if f"{g}_{x}" in chunk.fields] for g, fs in groups.items()}
                events = add_records(chunk, {g: fs for g, fs in gsel.items() if fs})
                if weights is not None:
                    w = weights[path]
                    if w is None:
                        wl = lumi * chunk["w_xsec"]
                    else:
                        wl = np.full(len(chunk), w)
                    events = ak.with_field(events, wl, "w_lumi")
                if cut is not None:
                    events = _apply_cut(cut, events)
                yield events
        finally:
            f.close()


def iterate(path_or_paths, columns=None, cut=None, step_size=DEFAULT_STEP_SIZE, lumi_fb=None,
            overrides=None):
    """Yield the events of one or many toymc files chunk by chunk.

    Every file is checked (toymc metadata, schema version, columns, weights)
    when :func:`iterate` is called, before any event is read; then the files
    are read one after the other, each in chunks of `step_size`, so memory
    holds one chunk at a time.

    Parameters
    ----------
    path_or_paths : str, Path or list of them
        ROOT files written by toymc (no wildcards; pass a list).
    columns : list of str, optional
        Stored column names (``"llp_dr"``), group names (``"dau"``: its
        counter and every field) or four-momentum prefixes (``"llp"``: its
        px, py, pz, e).  Default: all.  An unknown name raises
        :class:`toymc.errors.InputFileError` naming it.
    cut : callable, optional
        ``cut(events) -> mask`` on each chunk (the structure in the module
        docstring); only events with ``mask`` True are kept.
    step_size : int or str
        Events per chunk (int) or a size such as ``"100 MB"`` (uproot's
        ``step_size``).
    lumi_fb : float or str, optional
        Integrated luminosity (fb^-1, or ``"1 ab-1"``): adds the column
        ``w_lumi`` (:func:`toymc.io.weights.sample_weights`: files of one
        physics point form one sample).
    overrides : dict, optional
        Normalisation overrides for the weights: ``br_production``,
        ``br_decay``, ``eps``, ``sigma_times_br_fb``.

    Returns
    -------
    generator of ak.Array
        One chunk of events at a time.

    Raises
    ------
    InputFileError
        A file is missing, not a toymc file, damaged or truncated, of another
        schema version, lacks a requested column or a needed normalisation.
    ToymcError
        `cut` is not a callable or does not return one boolean per event.
    """
    plans, weights, lumi = _prepare(path_or_paths, columns, cut, lumi_fb, overrides)
    return _chunks(plans, weights, lumi, cut, step_size)


def read(path_or_paths, columns=None, cut=None, step_size=DEFAULT_STEP_SIZE, lumi_fb=None,
         overrides=None):
    """All (selected) events of one or many toymc files as one awkward array.

    Parameters and errors as :func:`iterate`, which reads the files chunk by
    chunk; only the selected events are kept in memory.

    Returns
    -------
    ak.Array
        The structure in the module docstring.

    Examples
    --------
    >>> ev = read(["a.root", "b.root"], lumi_fb="1 ab-1",
    ...           cut=lambda ev: ev.llp_dr > 1.0)  # doctest: +SKIP
    >>> ev.llp.mass, ev.dau.pt, ak.sum(ev.w_lumi)  # doctest: +SKIP
    """
    plans, weights, lumi = _prepare(path_or_paths, columns, cut, lumi_fb, overrides)
    parts = list(_chunks(plans, weights, lumi, cut, step_size))
    if not parts:
        path, branches, groups = plans[0]
        f, tree = _open_tree(path)
        try:
            empty = add_records(tree.arrays(branches, entry_stop=0, library="ak"), groups)
        finally:
            f.close()
        if weights is not None:
            empty = ak.with_field(empty, np.zeros(0), "w_lumi")
        return empty
    if len(parts) == 1:
        return parts[0]
    return ak.concatenate(parts)
