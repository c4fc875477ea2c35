"""Every detector module exports exactly its documented public names."""

import importlib

import pytest

MODULES = ["detector.geometry", "detector.helix", "detector.tracking", "detector.calorimeter",
           "detector.vertexing", "detector.response", "detector.profile", "detector.fold",
           "detector.fold_kernels", "plots.geometry"]


@pytest.mark.parametrize("name", MODULES)
def test_all_names_exist_and_public_dir_matches(name):
    mod = importlib.import_module(f"toymc.{name}")
    assert isinstance(mod.__all__, tuple)
    for item in mod.__all__:
        assert hasattr(mod, item), item
    public = {n for n in dir(mod) if not n.startswith("_")}
    # the dataclass decorator is the only other public name allowed
    assert public - set(mod.__all__) <= {"dataclass"}
