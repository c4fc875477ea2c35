"""Luminosity weights: events expected per generated event for an integrated luminosity.

For a sample of ``N`` unweighted events of one physics point, every event
gets the weight

    w = L_int * (sigma x BR) / N,

so that the sum of the weights of all events is ``L_int * sigma x BR``, the
number of signal decays expected before any selection (the weighted sum of
the events that pass a selection is the expected selected yield).  Units:
``L_int`` in fb^-1, ``sigma x BR`` in fb.  The generator weight ``w_gen`` (1
for the unweighted events toymc writes) is not folded in.

``sigma x BR`` is built from the file's ``normalisation`` metadata:

b_meson (e+e- -> Upsilon(4S) -> B Bbar, either B may decay to K(*) X)
    sigma x BR = sigma_fb * [f_+- BR(B+ -> K+ X) + (1 - f_+-) BR(B0 -> K0 X)] * BR(X -> channel),
    with ``sigma_fb = sigma_bb_fb * b_per_event`` (``b_per_event = 2``: two B
    per event) unless the normalisation gives ``sigma_fb`` itself, and
    ``f_+- = charged_fraction``.  (The factor 2 and the isospin average
    follow from counting B mesons; see :func:`toymc.engine.generator.normalisation`.)
radiative (e+e- -> gamma V inside the photon angle range)
    sigma x BR = sigma_per_eps2_fb * eps^2 * BR(V -> channel),
    unless the normalisation gives ``sigma_fb`` (the cross-section at the
    model's coupling), in which case ``sigma x BR = sigma_fb * BR(V -> channel)``.

Normalisation keys a model layer may store (all optional; shown by
``toymc info``):

``br_production``
    BR(B -> K(*) X) used for charged and neutral B alike (isospin), or the
    production branching fraction of any other process (default 1 for
    radiative production).
``br_production_charged``, ``br_production_neutral``
    BR(B+ -> K(*)+ X) and BR(B0 -> K(*)0 X) separately (take precedence over
    ``br_production``).
``br_decay``
    BR(X -> channel) for the file's channel.
``couplings``
    dict of the model's couplings; ``couplings["eps"]`` (kinetic mixing) is
    used for radiative production.
``sigma_fb``
    effective production cross-section per event before branching fractions
    (fb), replacing the process formula above.
``sigma_times_br_fb``
    the whole product, if the model computes it.

A quantity that is needed and unknown raises :class:`toymc.errors.InputFileError`
naming it and the override that supplies it: ``br_production``,
``br_decay``, ``eps`` or ``sigma_times_br_fb`` (``--br-production``,
``--br-decay``, ``--eps``, ``--sigma-times-br`` on the command line).
Overrides take precedence over the stored values.

Several files of one physics point read or merged together form one sample
of ``N = sum of their events``; :func:`sample_weights` normalises them
jointly, so that reading two halves gives the same weights as reading their
merge, and refuses files holding the same random blocks (the same events).
"""

import math
from collections import defaultdict

from toymc.config.units import parse_quantity
from toymc.errors import ConfigError, InputFileError
from toymc.io.info import blocks_of, leaf_inputs, point_key

__all__ = (
    "OVERRIDES",
    "group_samples",
    "lumi_weight",
    "parse_lumi",
    "sample_weights",
    "sigma_times_br",
)

#: names of the normalisation overrides accepted by the functions here
OVERRIDES = ("br_production", "br_decay", "eps", "sigma_times_br_fb")

_HINT = {"br_production": "--br-production", "br_decay": "--br-decay", "eps": "--eps",
         "sigma_times_br_fb": "--sigma-times-br"}


def parse_lumi(value):
    """Integrated luminosity in fb^-1 from a number (fb^-1) or a string like ``"1 ab-1"``.

    Raises
    ------
    ConfigError
        Not a positive finite number or not one of the units ab-1, fb-1, pb-1, nb-1.
    """
    if isinstance(value, str):
        try:
            value = float(value)
        except ValueError:
            pass
    try:
        lumi = parse_quantity(value, "inverse_area")
    except ValueError as exc:
        raise ConfigError(None, "lumi", value, str(exc) + " (internal unit fb^-1)") from None
    if not (math.isfinite(lumi) and lumi > 0):
        raise ConfigError(None, "lumi", value, "a positive finite luminosity")
    return lumi


def _check_override(name, value):
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ConfigError(None, name, value, "a number")
    value = float(value)
    if name in ("br_production", "br_decay"):
        ok, allowed = 0.0 <= value <= 1.0, "a branching fraction in [0, 1]"
    elif name == "eps":
        ok, allowed = math.isfinite(value) and value > 0, "a positive finite coupling"
    else:
        ok, allowed = math.isfinite(value) and value >= 0, "a cross-section >= 0 fb"
    if not ok:
        raise ConfigError(None, name, value, allowed)
    return value


def _number(norm, key, path):
    v = norm.get(key)
    if v is None:
        return None
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0:
        raise InputFileError(f"{path}: damaged toymc metadata (normalisation.{key} = {v!r})")
    return float(v)


def _missing(path, what, key, meta):
    alt = "sigma_times_br_fb" if key != "sigma_times_br_fb" else None
    extra = f" or {_HINT[alt]} ({alt}=)" if alt else ""
    point = f"{meta.get('process')}, {meta.get('channel')}, m = {meta.get('mass_gev')} GeV"
    return InputFileError(f"{path}: sigma x BR needs {what}, which is not stored ({point}; no "
                          f"normalisation.{key}): pass {_HINT[key]} ({key}=){extra}")


def sigma_times_br(meta, path="", br_production=None, br_decay=None, eps=None,
                   sigma_times_br_fb=None):
    """Cross-section times branching fractions of a file's physics point, in fb.

    Parameters
    ----------
    meta : dict
        File metadata (:func:`toymc.io.info.load_meta`).
    path : str
        File name for messages.
    br_production, br_decay, eps, sigma_times_br_fb : float, optional
        Overrides of the stored normalisation (see the module docstring).

    Returns
    -------
    value : float
        sigma x BR in fb.
    terms : dict
        The factors whose product is `value`, in order (for display).

    Raises
    ------
    InputFileError
        A needed quantity is not stored and not given, or the file is a
        merge of different physics points (use its ``w_xsec`` column).
    ConfigError
        An override is out of range.
    """
    br_production = _check_override("br_production", br_production)
    br_decay = _check_override("br_decay", br_decay)
    eps = _check_override("eps", eps)
    sigma_times_br_fb = _check_override("sigma_times_br_fb", sigma_times_br_fb)
    if meta.get("mixed"):
        raise InputFileError(f"{path}: a merge of different physics points has no single "
                             "normalisation; its per-event column w_xsec (fb) gives the weight "
                             "w_lumi = L * w_xsec (toymc.io.reader.read(..., lumi_fb=L))")
    norm = meta.get("normalisation")
    if not isinstance(norm, dict):
        raise InputFileError(f"{path}: damaged toymc metadata (no normalisation dict)")
    if sigma_times_br_fb is not None:
        return sigma_times_br_fb, {"sigma_times_br_fb (given)": sigma_times_br_fb}
    stored = _number(norm, "sigma_times_br_fb", path)
    if stored is not None:
        return stored, {"sigma_times_br_fb (model)": stored}
    if br_decay is None:
        br_decay = _number(norm, "br_decay", path)
    if br_decay is None:
        raise _missing(path, f"BR(X -> {meta.get('channel')})", "br_decay", meta)
    process = norm.get("process", meta.get("process"))
    sigma = _number(norm, "sigma_fb", path)
    terms = {}
    if process == "b_meson":
        if sigma is None:
            sigma_bb, per = _number(norm, "sigma_bb_fb", path), _number(norm, "b_per_event", path)
            if sigma_bb is None or per is None:
                raise InputFileError(f"{path}: damaged toymc metadata (normalisation needs "
                                     "sigma_bb_fb and b_per_event)")
            terms.update(sigma_bb_fb=sigma_bb, b_per_event=per)
            sigma = sigma_bb * per
        else:
            terms["sigma_fb"] = sigma
        f = _number(norm, "charged_fraction", path)
        if f is None or f > 1:
            raise InputFileError(f"{path}: damaged toymc metadata (normalisation.charged_fraction)")
        if br_production is not None:
            br_c = br_n = br_production
        else:
            br_c = _number(norm, "br_production_charged", path)
            br_n = _number(norm, "br_production_neutral", path)
            both = _number(norm, "br_production", path)
            br_c = both if br_c is None else br_c
            br_n = both if br_n is None else br_n
        if br_c is None or br_n is None:
            raise _missing(path, f"BR(B -> {norm.get('recoil', 'K')} X)", "br_production", meta)
        br_prod = f * br_c + (1.0 - f) * br_n
        terms["br_production"] = br_prod
    elif process == "radiative":
        if sigma is None:
            s_eps2 = _number(norm, "sigma_per_eps2_fb", path)
            if s_eps2 is None:
                raise InputFileError(f"{path}: damaged toymc metadata (no "
                                     "normalisation.sigma_per_eps2_fb)")
            if eps is None:
                couplings = norm.get("couplings") or {}
                eps = _number(couplings, "eps", path) if isinstance(couplings, dict) else None
            if eps is None:
                raise _missing(path, "the coupling eps", "eps", meta)
            terms.update(sigma_per_eps2_fb=s_eps2, eps2=eps * eps)
            sigma = s_eps2 * eps * eps
        else:
            terms["sigma_fb"] = sigma
        br_prod = br_production if br_production is not None else (
            _number(norm, "br_production", path) or 1.0)
        if br_prod != 1.0:
            terms["br_production"] = br_prod
    else:
        raise InputFileError(f"{path}: damaged toymc metadata (unknown process {process!r})")
    terms["br_decay"] = br_decay
    return sigma * br_prod * br_decay, terms


def lumi_weight(meta, lumi_fb, path="", events=None, **overrides):
    """Per-event luminosity weight ``w = L_int * sigma x BR / N`` of a file.

    Parameters
    ----------
    meta : dict
        File metadata.
    lumi_fb : float or str
        Integrated luminosity, fb^-1 or a string such as ``"1 ab-1"``.
    path : str
        File name for messages.
    events : int, optional
        Events of the whole sample, if it spans several files (default: the
        file's own ``events``).
    **overrides
        See :func:`sigma_times_br`.

    Returns
    -------
    float
        The weight of every event (dimensionless: expected events per
        generated event).
    """
    lumi = parse_lumi(lumi_fb)
    value, _ = sigma_times_br(meta, path=path, **overrides)
    n = int(meta["events"] if events is None else events)
    if n <= 0:
        raise InputFileError(f"{path}: no events")
    return lumi * value / n


def group_samples(files):
    """Group files into samples of one physics point and check they are independent.

    Parameters
    ----------
    files : list of (path, meta)

    Returns
    -------
    dict
        ``point key -> {"paths": [...], "events": total events, "meta": first meta}``
        for the files that are not mixed-point merges.

    Raises
    ------
    InputFileError
        Two files (or a file twice) hold the same random block of the same
        seed and point (their events would be counted twice), or a physics
        point appears both inside a mixed-point merge and in another file.
    """
    groups = {}
    seen = {}
    mixed_points = defaultdict(list)
    for path, meta in files:
        for leaf in leaf_inputs(meta, path):
            key = point_key(leaf, path)
            if meta.get("mixed") and path not in mixed_points[key]:
                mixed_points[key].append(path)
            for b in leaf.get("blocks") or blocks_of(leaf):
                tag = (key, leaf.get("seed"), int(b))
                if tag in seen:
                    raise InputFileError(
                        f"{path}: holds seed {leaf.get('seed')} block {b} of the same physics "
                        f"point as {seen[tag]}: the events would be counted twice")
                seen[tag] = path
        if not meta.get("mixed"):
            key = point_key(meta, path)
            g = groups.setdefault(key, {"paths": [], "events": 0, "meta": meta})
            g["paths"].append(path)
            g["events"] += int(meta["events"])
    for key, owners in mixed_points.items():
        if key in groups or len(owners) > 1:
            other = groups[key]["paths"][0] if key in groups else owners[1]
            raise InputFileError(f"{owners[0]}: a mixed-point merge sharing a physics point with "
                                 f"{other}: its weights cannot be renormalised; merge the "
                                 "original files together instead")
    return groups


def sample_weights(files, lumi_fb, **overrides):
    """Per-file luminosity weights for files read together.

    Files of one physics point are one sample: each of their events gets
    ``L_int * sigma x BR / N_total``.

    Parameters
    ----------
    files : list of (path, meta)
    lumi_fb : float or str
    **overrides
        See :func:`sigma_times_br` (applied to every file).

    Returns
    -------
    dict
        ``path -> weight`` (float), or ``path -> None`` for a mixed-point
        merge, whose events carry ``w_xsec`` (fb): their weight is
        ``L_int * w_xsec``.
    """
    lumi = parse_lumi(lumi_fb)
    given = {k: v for k, v in overrides.items() if v is not None}
    for path, meta in files:
        if meta.get("mixed") and given:
            raise InputFileError(f"{path}: a mixed-point merge's weights (w_xsec) were fixed when "
                                 f"it was merged; the overrides {', '.join(sorted(given))} do "
                                 "not apply to it")
    out = {}
    for group in group_samples(files).values():
        w = lumi_weight(group["meta"], lumi, path=group["paths"][0], events=group["events"],
                        **overrides)
        for p in group["paths"]:
            out[p] = w
    for path, meta in files:
        if meta.get("mixed"):
            out[path] = None
    return out
