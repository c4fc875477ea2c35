"""Shared by the generator tests: the demo configs as truth-only TOML dicts.

The demo configs name the demo detector with a path relative to the config
file; tests that rebuild a config from a dict (without its path) test the
generator alone, so they drop the [detector] and [selection] sections.
"""

import tomllib


def truth_dict(path):
    """The TOML document at `path` without its detector sections."""
    data = tomllib.loads(path.read_text())
    data.pop("detector", None)
    data.pop("selection", None)
    return data
