"""The ``toymc info`` summary of a toymc file: its physics point, normalisation, blocks,
selection and, given a luminosity, the weight per event and the expected yield."""


from toymc.errors import InputFileError
from toymc.io import weights
from toymc.io.info import blocks_of, config_sections, load_meta, point_key

__all__ = ("format_summary", "summary")


def summary(path, lumi_fb=None, **overrides):
    """Everything ``toymc info`` shows about one file, as a JSON-ready dict.

    Parameters
    ----------
    path : str or Path
    lumi_fb : float, str or None
        Integrated luminosity (fb^-1, or a string such as ``"1 ab-1"``): adds
        the per-event weight and the expected yield.
    **overrides
        ``br_production``, ``br_decay``, ``eps``, ``sigma_times_br_fb``: see
        :func:`toymc.io.weights.sigma_times_br`.

    Returns
    -------
    dict
        Keys: file, schema_version, process, channel, mass_gev, ctau_cm,
        sqrt_s_gev, couplings, events, seed, blocks, versions, normalisation,
        sigma_times_br_fb (None when unknown) and sigma_times_br_terms or
        sigma_times_br_missing, geometry, selection, columns, inputs (merged
        files), and lumi_fb, weight_per_event, expected_yield when asked.
    """
    meta = load_meta(path)
    cfg = config_sections(meta["inputs"][0] if meta.get("mixed") else meta, path)
    norm = meta.get("normalisation") or {}
    out = {
        "file": str(path),
        "schema_version": meta["schema_version"],
        "mixed": bool(meta.get("mixed", False)),
        "process": meta.get("process"),
        "channel": meta.get("channel"),
        "mass_gev": meta.get("mass_gev"),
        "ctau_cm": meta.get("ctau_cm"),
        "sqrt_s_gev": meta.get("sqrt_s_gev"),
        "couplings": norm.get("couplings"),
        "events": meta["events"],
        "seed": meta.get("seed"),
        "blocks": None if meta.get("inputs") else blocks_of(meta),
        "versions": meta.get("versions"),
        "normalisation": meta.get("normalisation"),
        "geometry": meta.get("geometry"),
        "selection": cfg.get("selection"),
        "columns": [list(c) for c in meta["columns"]],
    }
    if meta.get("inputs"):
        out["inputs"] = [{"file": m.get("file"), "events": m.get("events"), "seed": m.get("seed"),
                          "blocks": m.get("blocks"), "mass_gev": m.get("mass_gev"),
                          "ctau_cm": m.get("ctau_cm"), "channel": m.get("channel")}
                         for m in meta["inputs"]]
    if meta.get("mixed"):
        if overrides:
            raise InputFileError(f"{path}: a mixed-point merge's weights (w_xsec) were fixed "
                                 "when it was merged; normalisation overrides do not apply")
        per_point = {}
        for entry, leaf in zip(out["inputs"], meta["inputs"]):
            entry["sigma_times_br_fb"] = weights.sigma_times_br(leaf, path=path)[0]
            per_point[point_key(leaf, path)] = entry["sigma_times_br_fb"]
        out["sigma_times_br_fb"] = None
        out["sigma_times_br_missing"] = (f"{path}: {len(per_point)} physics points (sigma x BR "
                                         "per input; per-event weight column w_xsec)")
        if lumi_fb is not None:
            lumi = weights.parse_lumi(lumi_fb)
            out.update(lumi_fb=lumi, weight_per_event=None,
                       expected_yield=lumi * sum(per_point.values()))
        return out
    try:
        value, terms = weights.sigma_times_br(meta, path=path, **overrides)
        out["sigma_times_br_fb"], out["sigma_times_br_terms"] = value, terms
    except InputFileError as exc:
        if lumi_fb is not None:
            raise
        out["sigma_times_br_fb"], out["sigma_times_br_missing"] = None, str(exc)
    if lumi_fb is not None:
        lumi = weights.parse_lumi(lumi_fb)
        out["lumi_fb"] = lumi
        out["weight_per_event"] = weights.lumi_weight(meta, lumi, path=path, **overrides)
        out["expected_yield"] = lumi * out["sigma_times_br_fb"]
    return out


def _fmt(v):
    if isinstance(v, float):
        return f"{v:.6g}"
    return str(v)


def format_summary(s, columns=True):
    """The text ``toymc info`` prints for one :func:`summary` dict."""
    lines = [f"{s['file']}:"]

    def row(name, value):
        lines.append(f"  {name:<18s} {value}")

    if s["mixed"]:
        row("physics point", "mixed (merge of different points; per-event weight column w_xsec)")
    row("process", _fmt(s["process"]))
    row("channel", s["channel"] or "mixed")
    row("mass", f"{_fmt(s['mass_gev'])} GeV" if s["mass_gev"] is not None else "mixed")
    row("c*tau", f"{_fmt(s['ctau_cm'])} cm" if s["ctau_cm"] is not None else "mixed")
    row("sqrt(s)", f"{_fmt(s['sqrt_s_gev'])} GeV" if s["sqrt_s_gev"] is not None else "mixed")
    row("couplings", ", ".join(f"{k} = {_fmt(v)}" for k, v in s["couplings"].items())
        if s["couplings"] else "not stored (no model)")
    row("events", s["events"])
    if s.get("inputs"):
        row("seed", f"{_fmt(s['seed'])} (merge of {len(s['inputs'])} inputs)" if s["seed"]
            is not None else f"per input (merge of {len(s['inputs'])} inputs)")
    else:
        row("seed", f"{_fmt(s['seed'])}, blocks {_blocks_text(s['blocks'])}")
    row("schema version", s["schema_version"])
    row("versions", ", ".join(f"{k} {v}" for k, v in (s["versions"] or {}).items()))
    norm = s["normalisation"] or {}
    row("normalisation", ", ".join(f"{k} = {_fmt(v)}" for k, v in norm.items()
                                   if not isinstance(v, dict)) or "mixed")
    if s["mixed"]:
        row("sigma x BR", "per input, below (per-event weight column w_xsec)")
    elif s["sigma_times_br_fb"] is not None:
        terms = " x ".join(f"{k} {_fmt(v)}" for k, v in s["sigma_times_br_terms"].items())
        row("sigma x BR", f"{_fmt(s['sigma_times_br_fb'])} fb  (= {terms})")
    else:
        row("sigma x BR", "unknown: " + s["sigma_times_br_missing"].split(": ", 1)[-1]
            .replace("sigma x BR needs ", "needs "))
    if "lumi_fb" in s:
        row("luminosity", f"{_fmt(s['lumi_fb'])} fb^-1")
        row("weight per event", _fmt(s["weight_per_event"]) if s["weight_per_event"] is not None
            else "per event: L * w_xsec (column)")
        row("expected yield", f"{_fmt(s['expected_yield'])} events (before any selection)")
    row("geometry", s["geometry"] or "none (truth only)")
    sel = s["selection"]
    row("selection", ", ".join(f"{k} = {_fmt(v)}" for k, v in sel.items()) if sel else "none")
    for m in s.get("inputs", []):
        row("input", f"{m['file']}: {m['events']} events, seed {m['seed']}, blocks "
            f"{_blocks_text(m['blocks'])}, mass {_fmt(m['mass_gev'])} GeV, "
            f"c*tau {_fmt(m['ctau_cm'])} cm, {m['channel']}"
            + (f", sigma x BR {_fmt(m['sigma_times_br_fb'])} fb" if "sigma_times_br_fb" in m else ""))
    if columns:
        lines.append(f"  columns ({len(s['columns'])}):")
        width = max(len(c[0]) for c in s["columns"]) if s["columns"] else 0
        for name, unit, meaning in s["columns"]:
            lines.append(f"    {name:<{width}s}  {unit or '-':<4s} {meaning}")
    return "\n".join(lines)


def _blocks_text(blocks):
    if not blocks:
        return "-"
    blocks = sorted(blocks)
    if blocks == list(range(blocks[0], blocks[-1] + 1)) and len(blocks) > 2:
        return f"{blocks[0]}..{blocks[-1]}"
    return ",".join(str(b) for b in blocks)
