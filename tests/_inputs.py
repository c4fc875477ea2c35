"""Good inputs that the bad-input tests edit: the demo configs and geometry as dicts, a
small scan and tuning setup, and a TOML writer for the edited documents."""

import tomllib

from _demo import GEOMETRY as DEMO_GEOMETRY
from _demo import ROOT

from toymc.config.toml import toml_value

__all__ = ("DEMO_GEOMETRY", "SCAN", "base_config", "base_geometry", "dumps", "small_tune_data")




def dumps(data, prefix=""):
    """Minimal TOML writer for the test documents (tables, arrays of tables)."""
    lines, later = [], []
    for k, v in data.items():
        if isinstance(v, dict):
            if prefix and k == "profile":  # selection.profile stays inline
                lines.append(f"{k} = {toml_value(v)}")
            else:
                later.append((k, v))
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for item in v:
                later.append(([k], item))
        else:
            lines.append(f"{k} = {toml_value(v)}")
    out = "\n".join(lines) + "\n"
    for k, v in later:
        if isinstance(k, list):
            name = prefix + k[0]
            out += f"\n[[{name}]]\n" + dumps(v, name + ".")
        else:
            name = prefix + k
            out += f"\n[{name}]\n" + dumps(v, name + ".")
    return out


def base_config(name="darkphoton_mumu"):
    """A demo config as a dict, with the demo geometry by absolute path and few events."""
    data = tomllib.loads((ROOT / "configs" / f"{name}.toml").read_text())
    data["detector"]["geometry"] = str(DEMO_GEOMETRY)
    data["run"]["events"] = 2000
    return data


def base_geometry():
    return tomllib.loads(DEMO_GEOMETRY.read_text())


SCAN = {"masses": [0.4, 0.8], "ctau_min": "1 cm", "ctau_max": "100 cm", "ctau_points": 2,
        "events_per_mass": 2000}


def small_tune_data():
    """The dark-photon tuning demo as a dict, made small (2 masses, 3 r_min, 500 events)."""
    data = tomllib.loads((ROOT / "configs" / "tune_darkphoton_ee.toml").read_text())
    data["detector"]["geometry"] = str(DEMO_GEOMETRY)
    t = data["tuning"]
    t["masses"] = ["0.05 GeV", "0.2 GeV"]
    t["r_min"] = {"start": "0.2 cm", "stop": "20 cm", "points": 3}
    t["signal_events"] = 500
    t["background_events"] = {"ks": 500, "lambda": 500, "conversion": 500}
    return data
