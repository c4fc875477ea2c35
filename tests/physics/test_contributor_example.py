"""The worked example of DEVELOPERS.md ("Adding a decay channel", "Adding a production
process") runs as printed: its Python blocks are taken from the document, imported as user
modules from outside the package, and a config that uses them generates events.

Checks against outside references: the LLP momentum is the configured one, every event's
direct daughters add up to the LLP four-momentum (four-momentum conservation), and the
daughters' masses are the PDG masses of `particle` (MeV -> GeV).
"""

import importlib
import re
import sys

import numpy as np
from _demo import ROOT
from particle import Particle

import toymc
from toymc.physics import channels, processes


def _blocks(section):
    text = (ROOT / "DEVELOPERS.md").read_text()
    body = re.search(rf"^## {re.escape(section)}\n(.*?)^## ", text, re.S | re.M).group(1)
    return re.findall(r"```python\n(.*?)```", body, re.S)


def test_the_documented_channel_and_process_run(tmp_path, monkeypatch):
    chan = next(b for b in _blocks("Adding a decay channel") if b.startswith("# my_channels.py"))
    proc = next(b for b in _blocks("Adding a production process")
                if b.startswith("# my_process.py"))
    (tmp_path / "my_channels.py").write_text(chan)
    (tmp_path / "my_process.py").write_text(proc)
    monkeypatch.syspath_prepend(str(tmp_path))
    cfg = tmp_path / "run.toml"
    cfg.write_text('[run]\nevents = 5000\nseed = 3\n\n[beams]\ne_minus = 7.0\ne_plus = 4.0\n\n'
                   '[production]\nprocess = "fixed_momentum"\nllp_p = "2.5 GeV"\n\n'
                   '[llp]\nmass = 1.2\nctau = "2 cm"\nchannel = "k_k_pi0"\n')
    try:
        importlib.import_module("my_channels")
        importlib.import_module("my_process")
        ev = toymc.generate(cfg)
    finally:
        for name in ("my_channels", "my_process"):
            sys.modules.pop(name, None)
        for ch in ("k_k_pi0", "k_k"):
            if ch in channels.names():
                channels.unregister(ch)
        if "fixed_momentum" in processes.PROCESSES:
            processes.unregister("fixed_momentum")
    assert len(ev) == 5000
    p = np.sqrt(np.asarray(ev.llp_px) ** 2 + np.asarray(ev.llp_py) ** 2
                + np.asarray(ev.llp_pz) ** 2)
    np.testing.assert_allclose(p, 2.5, rtol=1e-12)
    d = ev.dau
    four = [np.stack([np.asarray(d[c][:, j]) for c in ("px", "py", "pz", "e")]) for j in range(3)]
    llp = np.stack([np.asarray(ev[f"llp_{c}"]) for c in ("px", "py", "pz", "e")])
    np.testing.assert_allclose(four[0] + four[1] + four[2], llp, atol=1e-9)
    for j, pdg in enumerate((321, -321, 111)):
        m = np.sqrt(np.maximum(four[j][3] ** 2 - (four[j][:3] ** 2).sum(axis=0), 0))
        np.testing.assert_allclose(m, Particle.from_pdgid(pdg).mass / 1000.0, atol=1e-6)
    # the stored list: the three direct daughters, then the pi0's photons (mother index 2)
    assert np.all(np.asarray(d.pdg[:, :5]) == [321, -321, 111, 22, 22])
    assert np.all(np.asarray(d.mother[:, :5]) == [-1, -1, -1, 2, 2])
    photons = sum(np.stack([np.asarray(d[c][:, j]) for c in ("px", "py", "pz", "e")])
                  for j in (3, 4))
    np.testing.assert_allclose(photons, four[2], atol=1e-9)