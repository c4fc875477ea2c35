"""A production process and decay channels registered from user code, without editing toymc.

The test registers, from here, a process (an LLP of fixed lab momentum along an isotropic
direction, with its own config key) and two channels (X -> K+ K- pi0 on the Dalitz plot with
flat phase space, a spin-1 X -> K+ K-), generates events with toymc.generate from a TOML file,
and checks the physics against outside references named beside each check:

* four-momentum conservation (sum of the direct daughters = LLP; pi0 = its two photons);
* daughters' masses from the PDG tables of `particle` (MeV -> GeV);
* flat three-body phase space: dGamma/dm12^2 ~ m23^2 range at fixed m12^2 (PDG review
  "Kinematics", Dalitz plot limits, eq. for (m23^2)_max/min), chi-square with scipy;
* c*t exponential with mean c*tau (PDG review "Kinematics"), KS test with scipy;
* a vector from B -> K V has helicity 0, so V -> K+ K- follows |d^1_00|^2 = cos^2(theta)
  about the helicity axis (PDG review "Clebsch-Gordan coefficients, spherical harmonics and
  d functions"); KS test with CDF (c^3 + 1)/2 (vector library for the boosts).
"""

import numpy as np
import pytest
import vector
from particle import Particle
from scipy import stats

import toymc
from toymc.errors import ConfigError
from toymc.physics import channels, layout, processes

ALPHA = 1e-3
N = 40_000


def _pdg_mass(pdg):
    return Particle.from_pdgid(pdg).mass / 1000.0  # MeV -> GeV


def _fixed_momentum_generate(rng, n, beams, mass, options):
    """Production rows of n events: X with |p| = options["llp_p"] along an isotropic lab
    direction, made at the beam spot (numpy over arrays; no loop over events)."""
    E, IE, _, R, IR = layout.allocate(n, 0, 0)
    counter = np.zeros(3, dtype=np.int64)
    pv = rng.standard_normal((3, n)) * np.asarray(beams.sigmas)[:, None]
    c = 2.0 * rng.random(n) - 1.0
    phi = 2.0 * np.pi * rng.random(n)
    counter[0] += 2 * n
    counter[1] += 3 * n
    p = options["llp_p"]
    s = np.sqrt(1.0 - c * c)
    E[layout.PV_X:layout.PV_Z + 1] = pv
    em, ep = beams.four_momenta()
    E[layout.PAR_PX:layout.PAR_E + 1] = (em + ep)[:, None]
    E[layout.PAR_CT] = 0.0
    E[layout.RCL_PX:layout.RCL_E + 1] = 0.0
    E[layout.LLP_PX] = p * s * np.cos(phi)
    E[layout.LLP_PY] = p * s * np.sin(phi)
    E[layout.LLP_PZ] = p * c
    E[layout.LLP_E] = np.sqrt(p * p + mass * mass)
    E[layout.LLP_VX:layout.LLP_VZ + 1] = pv
    IE[:] = 0
    return (E, IE, R, IR), counter


USER_PROCESS = processes.Process(
    "fixed_momentum", generate=_fixed_momentum_generate,
    keys={"llp_p": dict(kind="float", default=1.0, doc="fixed_momentum: LLP lab momentum",
                        dim="energy", lo=0, hi=10)},
    limit=lambda cfg: cfg.beams.sqrt_s, limit_note=" (sqrt(s))",
    normalisation=lambda cfg: {"process": "fixed_momentum",
                               "llp_p": cfg.production.options["llp_p"]})
KKPI0 = channels.Channel.from_daughters("k_k_pi0", spin=0, daughters=(321, -321, 111))
KK = channels.Channel.from_daughters("k_k", spin=1, daughters=(321, -321))


@pytest.fixture(scope="module")
def registered():
    processes.register(USER_PROCESS)
    channels.register(KKPI0)
    channels.register(KK)
    yield
    processes.unregister("fixed_momentum")
    channels.unregister("k_k_pi0")
    channels.unregister("k_k")


def _write(tmp_path, production, llp):
    lines = ["[run]", f"events = {N}", "seed = 5", "",
             "[beams]", "e_minus = 7.0", "e_plus = 4.0", "sigma_z = 0.03", "", "[production]"]
    lines += [f"{k} = {v!r}".replace("'", '"') for k, v in production.items()]
    lines += ["", "[llp]"] + [f"{k} = {v!r}".replace("'", '"') for k, v in llp.items()]
    path = tmp_path / "user.toml"
    path.write_text("\n".join(lines) + "\n")
    return path


def _four(ev, j=None):
    d = ev.dau
    if j is None:
        return np.stack([np.asarray(ev[f"llp_{c}"]) for c in ("px", "py", "pz", "e")])
    return np.stack([np.asarray(d[c][:, j]) for c in ("px", "py", "pz", "e")])


def _m23_range(m12sq, M, m1, m2, m3):
    """Dalitz-plot limits of m23^2 at fixed m12^2 (PDG review "Kinematics")."""
    e2 = (m12sq - m1 * m1 + m2 * m2) / (2 * np.sqrt(m12sq))
    e3 = (M * M - m12sq - m3 * m3) / (2 * np.sqrt(m12sq))
    p2 = np.sqrt(np.maximum(e2 * e2 - m2 * m2, 0))
    p3 = np.sqrt(np.maximum(e3 * e3 - m3 * m3, 0))
    return (e2 + e3) ** 2 - (p2 - p3) ** 2 - ((e2 + e3) ** 2 - (p2 + p3) ** 2)


def test_user_process_and_three_body_channel(registered, tmp_path):
    mass, ctau = 1.6, 12.0
    cfg = _write(tmp_path, {"process": "fixed_momentum", "llp_p": 2.5},
                 {"mass": mass, "ctau": ctau, "channel": "k_k_pi0"})
    ev = toymc.generate(str(cfg))
    assert len(ev) == N
    assert ev.dau.pdg[0].tolist() == [321, -321, 111, 22, 22]
    assert ev.dau.mother[0].tolist() == [-1, -1, -1, 2, 2]
    assert ev.dau.q[0].tolist() == [1, -1, 0, 0, 0]
    # the process's kinematics: |p| = llp_p (its config key reached generate)
    X = _four(ev)
    assert np.allclose(np.sqrt((X[:3] ** 2).sum(0)), 2.5, rtol=1e-12)
    # four-momentum conservation (direct daughters; the pi0's photons)
    tot = _four(ev, 0) + _four(ev, 1) + _four(ev, 2)
    assert np.max(np.abs(tot - X)) < 1e-9 * np.max(X[3])
    assert np.max(np.abs(_four(ev, 3) + _four(ev, 4) - _four(ev, 2))) < 1e-9 * np.max(X[3])
    # daughters' masses: PDG via `particle`
    for j, pdg in enumerate((321, -321, 111)):
        p = _four(ev, j)
        m = np.sqrt(np.maximum(p[3] ** 2 - (p[:3] ** 2).sum(0), 0))
        assert np.allclose(m, _pdg_mass(pdg), rtol=0, atol=2e-6 * p[3].max())
    # flat Dalitz plot: m12^2 density ~ the m23^2 range (PDG "Kinematics")
    mk, mpi0 = _pdg_mass(321), _pdg_mass(111)
    p12 = _four(ev, 0) + _four(ev, 1)
    m12sq = p12[3] ** 2 - (p12[:3] ** 2).sum(0)
    edges = np.linspace((2 * mk) ** 2, (mass - mpi0) ** 2, 21)
    obs, _ = np.histogram(m12sq, edges)
    fine = np.linspace(edges[0], edges[-1], 20 * 400 + 1)
    dens = _m23_range(0.5 * (fine[1:] + fine[:-1]), mass, mk, mk, mpi0)
    exp = dens.reshape(20, 400).sum(1)
    exp = exp / exp.sum() * obs.sum()
    assert stats.chisquare(obs, exp).pvalue > ALPHA
    # proper decay length: exponential with mean c*tau (KS, scipy)
    assert stats.kstest(np.asarray(ev.llp_ct), "expon", args=(0, ctau)).pvalue > ALPHA
    assert np.allclose(np.asarray(ev.llp_ctau), ctau)
    # decay point = production point + (p/m) c*t
    d = np.asarray(ev.llp_dz) - np.asarray(ev.llp_vz)
    assert np.allclose(d, X[2] / mass * np.asarray(ev.llp_ct), rtol=1e-12, atol=1e-12)


def test_user_vector_channel_with_b_meson_helicity_law(registered, tmp_path):
    mass = 1.5
    cfg = _write(tmp_path, {"process": "b_meson", "recoil": "K"},
                 {"mass": mass, "ctau": 5.0, "channel": "k_k"})
    ev = toymc.generate(str(cfg))
    assert ev.dau.pdg[0].tolist() == [321, -321]
    X = _four(ev)
    a, b = _four(ev, 0), _four(ev, 1)
    assert np.max(np.abs(a + b - X)) < 1e-9 * np.max(X[3])
    for p, pdg in ((a, 321), (b, -321)):
        m = np.sqrt(np.maximum(p[3] ** 2 - (p[:3] ** 2).sum(0), 0))
        assert np.allclose(m, _pdg_mass(pdg), rtol=0, atol=2e-6 * p[3].max())
    # helicity angle: K+ direction against minus the B direction, both in the X rest frame
    x = vector.array({"px": X[0], "py": X[1], "pz": X[2], "E": X[3]})
    bm = vector.array({"px": np.asarray(ev.par_px), "py": np.asarray(ev.par_py),
                       "pz": np.asarray(ev.par_pz), "E": np.asarray(ev.par_e)})
    k = vector.array({"px": a[0], "py": a[1], "pz": a[2], "E": a[3]})
    kr, br = k.boost_beta3(-x.to_beta3()), bm.boost_beta3(-x.to_beta3())
    c = -(kr.px * br.px + kr.py * br.py + kr.pz * br.pz) / (kr.p * br.p)
    assert stats.kstest(np.asarray(c), lambda t: (t ** 3 + 1) / 2).pvalue > ALPHA


def _v_frame_cos(ev):
    """cos of the angle between daughter 0 and the e- beam (+z), both in the V rest frame."""
    X, a = _four(ev), _four(ev, 0)
    beta = vector.array({"px": X[0], "py": X[1], "pz": X[2], "E": X[3]}).to_beta3()
    d = vector.array({"px": a[0], "py": a[1], "pz": a[2], "E": a[3]}).boost_beta3(-beta)
    beam = vector.array({"px": np.zeros(len(ev)), "py": np.zeros(len(ev)),
                         "pz": np.full(len(ev), 7.0), "E": np.full(len(ev), 7.0)})
    b = beam.boost_beta3(-beta)
    return np.asarray((d.px * b.px + d.py * b.py + d.pz * b.pz) / (d.p * b.p))


def test_user_vector_channel_with_radiative_matches_the_built_in_law(registered, tmp_path):
    """A user copy of mu_mu decays through the generic kernel with the beams' spin
    correlation (pol 2); its V-frame angular law must agree (two-sample KS, scipy) with the
    built-in mu_mu kernel, whose law tests/physics/test_radiative.py and tests/physics/test_angular.py check
    against the e+e- -> gamma V tensor and e+e- -> f fbar."""
    user = channels.register(channels.Channel.from_daughters("mu_mu_copy", 1, (13, -13)))
    try:
        samples = []
        for ch, seed in (("mu_mu_copy", 3), ("mu_mu", 4)):
            path = _write(tmp_path, {"process": "radiative"},
                          {"mass": 0.5, "ctau": 1.0, "channel": ch})
            ev = toymc.generate(str(path), seed=seed)
            assert ev.dau.pdg[0].tolist() == [13, -13]
            samples.append(_v_frame_cos(ev))
    finally:
        channels.unregister(user.name)
    assert stats.ks_2samp(*samples).pvalue > ALPHA
    # the law is far from isotropic at this sample size (the check has power)
    assert stats.kstest(samples[0], "uniform", args=(-1, 2)).pvalue < ALPHA


def test_registries_drive_config_validation(registered, tmp_path):
    from toymc.config.loader import load

    bad = _write(tmp_path, {"process": "nope"}, {"mass": 1.0, "ctau": 1.0, "channel": "k_k"})
    with pytest.raises(ConfigError) as err:
        load(bad)
    assert err.value.key == "production.process" and "'fixed_momentum'" in str(err.value)
    other = _write(tmp_path, {"process": "b_meson", "llp_p": 2.0},
                   {"mass": 1.0, "ctau": 1.0, "channel": "k_k"})
    with pytest.raises(ConfigError, match="used only by production.process = 'fixed_momentum'"):
        load(other)
    low = _write(tmp_path, {"process": "fixed_momentum"},
                 {"mass": 0.9, "ctau": 1.0, "channel": "k_k_pi0"})  # below 2 m_K + m_pi0
    with pytest.raises(ConfigError, match="threshold"):
        load(low)
    cfg = load(_write(tmp_path, {"process": "fixed_momentum", "llp_p": 3.0},
                      {"mass": 1.2, "ctau": 1.0, "channel": "k_k"}))
    assert cfg.production.options == {"llp_p": 3.0}
    from toymc.config.loader import loads, to_toml

    assert loads(to_toml(cfg)).production.options == {"llp_p": 3.0}


def test_register_unregister_and_refusals():
    ch = channels.register(channels.Channel.from_daughters("p_pbar", 1, (2212, -2212)))
    assert "p_pbar" in channels.CHOICES and ch.angular == "fermion"  # spin-1/2 pair
    channels.unregister("p_pbar")
    assert "p_pbar" not in channels.CHOICES and "p_pbar" not in channels.names()
    assert "tau_tau" in channels.names() and "tau_tau" not in channels.CHANNELS  # width-only
    with pytest.raises(channels.ChannelError):
        channels.register(channels.Channel.from_daughters("e_e", 1, (11, -11)))
    with pytest.raises(channels.ChannelError, match="charge"):
        channels.Channel.from_daughters("bad", 0, (211, 211))
    with pytest.raises(processes.ProcessError):
        processes.register(processes.Process("b_meson", generate=print, limit=print,
                                             normalisation=print))
