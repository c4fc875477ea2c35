"""The heat map of a scan's efficiency map, titled with the sample it was made from
(:func:`map_title`)."""

from toymc.analysis.scan import efficiency_map
from toymc.plots.figures import efficiency_heatmap

__all__ = ("draw_map", "map_title")


def draw_map(index, path):
    """Draw the efficiency map of a scan index (:func:`toymc.analysis.scan.efficiency_map`)
    as a heat map PNG at `path`."""
    m, c, e, _ = efficiency_map(index)
    efficiency_heatmap(m, c, e, path, title=map_title(index))


#: channel names as the plots write them (matplotlib mathtext)
_CHANNEL_TEX = {"gamma_gamma": r"\gamma\gamma", "pi_pi_pi0": r"\pi^+\pi^-\pi^0",
                "pi0_pi0_pi0": r"3\pi^0", "e_e": r"e^+e^-", "mu_mu": r"\mu^+\mu^-",
                "pi_pi": r"\pi^+\pi^-"}


def map_title(index):
    """Title of a scan's efficiency map: process and channel, the efficiency's cutflow
    step and selection window, and how each mass was sampled."""
    import tomllib

    try:
        cfg = tomllib.loads(index.get("config", ""))
    except tomllib.TOMLDecodeError:
        cfg = {}
    g = index["grid"]
    prod, llp, sel = cfg.get("production", {}), cfg.get("llp", {}), cfg.get("selection", {})
    ch = llp.get("channel", "?")
    decay = f"X$\\to {_CHANNEL_TEX[ch]}$" if ch in _CHANNEL_TEX else f"X -> {ch}"
    if llp.get("matrix_element") == "chiral":
        decay += " (chiral)"
    if prod.get("process") == "b_meson":
        k = "K^*(892)" if prod.get("recoil") == "K*" else "K"
        head = f"$B \\to {k}$ X, {decay}"
    elif prod.get("process") == "radiative":
        head = f"$e^+e^- \\to \\gamma$ X, {decay}"
    else:
        head = decay

    def cm(v):
        return f"{v:g} cm" if isinstance(v, (int, float)) else str(v)

    window = ": none"
    if sel:
        window = (f": {cm(sel.get('r_min', '?'))} < r < {cm(sel.get('r_max', '?'))}, "
                  f"{cm(sel.get('z_min', '?'))} < z < {cm(sel.get('z_max', '?'))}")
        prof = sel.get("profile") or {}
        if prof.get("kind"):
            window += f", {prof['kind']} vertex profile"
        if sel.get("mass_window"):
            window += ", mass window " + " - ".join(str(v) for v in sel["mass_window"])
    mix = g.get("mixture") or []
    sampling = (f"{g['events_per_mass']} events per mass, c$\\tau$ mixture of {len(mix)} "
                f"exponentials, reweighted (direct where ESS/N < {g['ess_min_fraction']:g})")
    return (f"{head}: signal efficiency (events passing cut_{g['efficiency_step']})\n"
            f"selection{window}\n{sampling}")
