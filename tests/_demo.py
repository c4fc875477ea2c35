"""Shared by the tests: the project's paths and the demo configs as truth-only TOML dicts.

The demo configs name the demo detector with a path relative to the config
file; tests that rebuild a config from a dict (without its path) test the
generator alone, so they drop the [detector] and [selection] sections.
"""

import tomllib
from pathlib import Path

#: the project folder, its demo configs and geometries (links into the package data)
ROOT = Path(__file__).resolve().parents[1]
CONFIGS = ROOT / "configs"
GEOMETRIES = ROOT / "geometries"
GEOMETRY = GEOMETRIES / "demo.toml"


def truth_dict(path):
    """The TOML document at `path` without its detector sections."""
    data = tomllib.loads(path.read_text())
    data.pop("detector", None)
    data.pop("selection", None)
    return data
