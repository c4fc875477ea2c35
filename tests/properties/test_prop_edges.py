"""Numerical edges: no NaN or inf in any output column except the documented ones.

Property tests (hypothesis, ``derandomize=True``: the same examples on every
run) over c*tau from 1e-6 cm to 1e9 cm, masses at every channel threshold
+ 1 MeV (and - 1 MeV, which must be a ConfigError), masses just below the
production limit, boosts with gamma > 1000 (a few-MeV vector from radiative
production), LLPs along the beam axis, photons into the barrel-endcap gap and
events with no found track.

Documented-NaN columns (toymc/detector/response.py, RECO_COLUMNS, and the
module docstring) and the condition under which each may be NaN:

=========================================  ==========================================
column                                     NaN allowed where
=========================================  ==========================================
trk_px, trk_py, trk_pz                     trk_hits < 3 ("NaN with < 3 hits")
trk_spt, trk_sphi, trk_slam                trk_hits < 3 (no fit: same rule as trk_p*)
clu_x, clu_y, clu_z                        the photon misses the face (clu_e == 0)
vtx_x, vtx_y, vtx_z, vtx_r                 no found track pair (rec_ntrk < 2), and
                                           always for photon-only decays
=========================================  ==========================================

Every other column, per event or per object, must be finite.
"""

import copy
import math
import tomllib

import awkward as ak
import numpy as np
import pytest
from _demo import GEOMETRY, ROOT
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import toymc
from toymc.config.kinematics import production_limit
from toymc.config.loader import from_dict
from toymc.errors import ConfigError
from toymc.physics.decays import CHANNELS, threshold

EVENTS = 2000

SETTINGS = {"derandomize": True, "deadline": None, "database": None,
            "suppress_health_check": [HealthCheck.too_slow]}

TRK_NAN = ("px", "py", "pz", "spt", "sphi", "slam")
CLU_NAN = ("x", "y", "z")
VTX_NAN = ("vtx_x", "vtx_y", "vtx_z", "vtx_r")


def config(name="darkphoton_mumu", detector=True, **changes):
    """A demo config dict with the demo geometry by absolute path; changes as
    {"section.key": value}."""
    data = tomllib.loads((ROOT / "configs" / f"{name}.toml").read_text())
    data["run"]["events"] = EVENTS
    if detector:
        data["detector"]["geometry"] = str(GEOMETRY)
    else:
        data.pop("detector")
        data.pop("selection")
    for dotted, v in changes.items():
        sec, key = dotted.split(".", 1)
        data.setdefault(sec, {})[key] = v
    return data


def _flat(a):
    return np.asarray(ak.flatten(a, axis=None), dtype=np.float64)


def check_columns(ev, channel):
    """Assert finiteness of every column, and the documented NaN rules."""
    photon_only = all(q == 0 for q, s in zip(CHANNELS[channel].q, CHANNELS[channel].status)
                      if s == 1)
    for f in ev.fields:
        col = ev[f]
        if col.fields:  # a group: trk, clu, dau, rcld
            for g in col.fields:
                x = _flat(col[g])
                bad = ~np.isfinite(x)
                if f == "trk" and g in TRK_NAN:
                    hits = _flat(col["hits"])
                    assert not np.isinf(x).any(), f"{f}_{g}: inf"
                    assert np.all(hits[bad] < 3), f"{f}_{g}: NaN with >= 3 hits"
                elif f == "clu" and g in CLU_NAN:
                    e = _flat(col["e"])
                    assert not np.isinf(x).any(), f"{f}_{g}: inf"
                    assert np.all(e[bad] == 0), f"{f}_{g}: NaN for a photon on the face"
                    assert not _flat(col["found"])[bad].any()
                else:
                    assert not bad.any(), f"{f}_{g}: {bad.sum()} non-finite of {len(x)}"
        else:
            x = np.asarray(col, dtype=np.float64)
            bad = ~np.isfinite(x)
            if f in VTX_NAN:
                assert not np.isinf(x).any(), f"{f}: inf"
                if photon_only:
                    assert bad.all(), f"{f}: a vertex for a photon-only decay"
                else:
                    assert np.all(np.asarray(ev.rec_ntrk)[bad] < 2), f"{f}: NaN with a track pair"
                    assert not np.asarray(ev.vtx_found)[bad].any()
            else:
                assert not bad.any(), f"{f}: {bad.sum()} non-finite of {len(x)}"


def generate(data, events=EVENTS):
    return toymc.generate(from_dict(data), events=events)


# ------------------------------------------------------------------ c*tau
@settings(max_examples=8, **SETTINGS)
@given(log_ctau=st.floats(min_value=-6.0, max_value=9.0),
       name=st.sampled_from(["darkphoton_mumu", "alp_3pi_bka", "alp_gg_bksta"]))
def test_ctau_range_finite(log_ctau, name):
    ctau = 10.0 ** log_ctau
    data = config(name, **{"llp.ctau": ctau})
    ev = generate(data)
    check_columns(ev, data["llp"]["channel"])
    ct = np.asarray(ev.llp_ct)
    assert np.all(ct >= 0)
    # mean proper decay length: exponential law (PDG review "Kinematics"); 6 sigma of the mean
    assert abs(ct.mean() - ctau) < 6 * ctau / math.sqrt(len(ct))


def test_ctau_extremes_finite():
    """The two ends of the range themselves (hypothesis may not draw them)."""
    for ctau in (1e-6, 1e9):
        data = config("darkphoton_mumu", **{"llp.ctau": ctau})
        check_columns(generate(data), "mu_mu")


# ------------------------------------------------------------------ thresholds
def _base_for(channel):
    """A config whose production can make this channel's spin."""
    if CHANNELS[channel].spin == 1:
        return "darkphoton_mumu"
    return "alp_3pi_bka"


@pytest.mark.parametrize("channel", sorted(CHANNELS))
def test_threshold_plus_1mev_finite(channel):
    base = _base_for(channel)
    changes = {"llp.channel": channel, "llp.mass": threshold(channel) + 1e-3}
    if base == "alp_3pi_bka" and channel != "pi_pi_pi0":
        changes["llp.matrix_element"] = "flat"
    data = config(base, **changes)
    ev = generate(data)
    check_columns(ev, channel)
    # daughters' invariant mass is the LLP mass (four-momentum conservation); the
    # tolerance is float64 rounding of E^2 - p^2 at these energies
    dau = ev.dau[ev.dau.status == 1]
    e, px, py, pz = (np.asarray(ak.sum(dau[k], axis=1)) for k in ("e", "px", "py", "pz"))
    m = np.sqrt(np.maximum(e**2 - px**2 - py**2 - pz**2, 0))
    assert np.allclose(m, data["llp"]["mass"], rtol=0, atol=1e-6 * e.max())


def test_threshold_reference_values():
    """Channel thresholds are sums of PDG masses from `particle` (PDG listings)."""
    from particle import Particle

    def m(pdg):
        return Particle.from_pdgid(pdg).mass / 1000.0  # MeV -> GeV

    assert threshold("mu_mu") == pytest.approx(2 * m(13), rel=1e-12)
    assert threshold("e_e") == pytest.approx(2 * m(11), rel=1e-12)
    assert threshold("pi_pi") == pytest.approx(2 * m(211), rel=1e-12)
    assert threshold("gamma_gamma") == 0.0
    assert threshold("pi_pi_pi0") == pytest.approx(2 * m(211) + m(111), rel=1e-12)
    assert threshold("pi0_pi0_pi0") == pytest.approx(3 * m(111), rel=1e-12)


@settings(max_examples=12, **SETTINGS)
@given(channel=st.sampled_from(sorted(c for c in CHANNELS if threshold(c) > 0)),
       below=st.floats(min_value=0.0, max_value=1e-3))
def test_below_threshold_is_config_error(channel, below):
    """At or below threshold (down to - 1 MeV): a ConfigError naming llp.mass, no events."""
    base = _base_for(channel)
    changes = {"llp.channel": channel, "llp.mass": threshold(channel) - below}
    if base == "alp_3pi_bka":
        changes["llp.matrix_element"] = "flat"
    if changes["llp.mass"] <= 0:
        return
    with pytest.raises(ConfigError) as exc:
        from_dict(config(base, **changes))
    assert exc.value.key == "llp.mass"
    assert "threshold" in str(exc.value)


# ------------------------------------------------------------------ production limit
@pytest.mark.parametrize("name", ["darkphoton_mumu", "alp_3pi_bka", "alp_gg_bksta"])
def test_just_below_production_limit_finite(name):
    lim = production_limit(from_dict(config(name)))
    data = config(name, **{"llp.mass": lim - 1e-3})
    ev = generate(data)
    check_columns(ev, data["llp"]["channel"])
    with pytest.raises(ConfigError):
        from_dict(config(name, **{"llp.mass": lim}))


def test_production_limit_reference():
    """m_B - m_K limits from PDG masses via `particle` (B+ 521, B0 511, K+ 321, K0 311)."""
    from particle import Particle

    def m(pdg):
        return Particle.from_pdgid(pdg).mass / 1000.0

    lim = production_limit(from_dict(config("alp_3pi_bka")))
    assert lim == pytest.approx(min(m(521), m(511)) - max(m(321), m(311)), rel=1e-12)


# ------------------------------------------------------------------ large boosts
@settings(max_examples=5, **SETTINGS)
@given(mass=st.floats(min_value=threshold("e_e") + 1e-3, max_value=5e-3))
def test_gamma_above_1000_finite(mass):
    """A few-MeV vector from e+e- -> gamma V: gamma = E/m > 1000 at sqrt(s) ~ 10.6 GeV."""
    data = config("darkphoton_mumu", **{"llp.channel": "e_e", "llp.mass": mass,
                                        "llp.ctau": 1e-3})
    ev = generate(data)
    check_columns(ev, "e_e")
    gamma = np.asarray(ev.llp_e) / mass
    assert np.median(gamma) > 1000
    # lab decay length = beta gamma c t (PDG review "Kinematics", sec. 49.2)
    p = np.sqrt(np.asarray(ev.llp_px) ** 2 + np.asarray(ev.llp_py) ** 2
                + np.asarray(ev.llp_pz) ** 2)
    assert np.allclose(np.asarray(ev.llp_l), p / mass * np.asarray(ev.llp_ct), rtol=1e-9)
    dau = ev.dau[ev.dau.status == 1]
    e, px, py, pz = (np.asarray(ak.sum(dau[k], axis=1)) for k in ("e", "px", "py", "pz"))
    # four-momentum conservation to float64 rounding: |E^2 - p^2 - m^2| <~ 1e-15 E^2 per term
    assert np.all(np.abs(e**2 - px**2 - py**2 - pz**2 - mass**2) < 1e-12 * e**2)


# ------------------------------------------------------------------ along the beam axis
@settings(max_examples=4, **SETTINGS)
@given(cos_max=st.floats(min_value=-0.99999999, max_value=-0.99999))
def test_llp_along_beam_axis_finite(cos_max):
    """Photon within a hair of the -z axis: the vector and its muons go along +z."""
    cos_min = -0.999999999
    data = config("darkphoton_mumu", **{"production.photon_cos_min": cos_min,
                                        "production.photon_cos_max": cos_max,
                                        "llp.mass": 0.3})
    ev = generate(data)
    check_columns(ev, "mu_mu")


# ------------------------------------------------------------------ no found tracks
def test_zero_found_tracks_finite():
    """min_pt far above every track: nothing found, rec_m and rec_p finite (zero)."""
    for name in ("darkphoton_mumu", "alp_3pi_bka"):
        data = config(name)
        data["selection"]["min_pt"] = "20 GeV"
        ev = generate(data)
        check_columns(ev, data["llp"]["channel"])
        assert ak.sum(ev.trk.found) == 0
        assert np.all(np.asarray(ev.rec_ntrk) == 0)
        assert not np.asarray(ev.cut_tracks).any()
        assert np.all(np.isnan(np.asarray(ev.vtx_x)))


# ------------------------------------------------------------------ barrel-endcap gap
def test_photons_into_barrel_endcap_gap():
    """Photons from the origin aimed between the barrel's forward end and the forward
    endcap's outer rim miss the calorimeter: clu_e = 0, clu_x NaN, not found, and
    nothing else non-finite.  The gap's polar range is computed from the geometry:
    straight lines from the origin, tan(theta) = r/z."""
    from toymc.config.geometry import load_geometry, parse_selection
    from toymc.detector.response import respond
    from toymc.engine.block import Block

    geo = load_geometry(GEOMETRY)
    sel = parse_selection(config()["selection"], None, geo)
    cal = geo.calorimeter
    th_lo = math.atan2(cal.forward.r_outer, cal.forward.z)  # misses the endcap above this
    th_hi = math.atan2(cal.radius, cal.z_max)  # misses the barrel below this
    assert th_lo < th_hi, "the demo geometry has a gap"
    rng = np.random.default_rng(7)
    n = 500
    th = rng.uniform(th_lo + 1e-4, th_hi - 1e-4, 2 * n)
    ph = rng.uniform(0, 2 * np.pi, 2 * n)
    e = rng.uniform(0.1, 3.0, 2 * n)
    b = Block(n=n)
    b.add_group("dau", np.full(n, 2), {
        "pdg": np.full(2 * n, 22, dtype=np.int32), "q": np.zeros(2 * n, dtype=np.int32),
        "status": np.ones(2 * n, dtype=np.int32), "mother": np.full(2 * n, -1, dtype=np.int32),
        "px": e * np.sin(th) * np.cos(ph), "py": e * np.sin(th) * np.sin(ph),
        "pz": e * np.cos(th), "e": e,
        "vx": np.zeros(2 * n), "vy": np.zeros(2 * n), "vz": np.zeros(2 * n)})
    respond(b, geo, sel, np.random.default_rng(8))
    clu = b.groups["clu"][1]
    assert np.all(np.asarray(clu["e"]) == 0)
    assert not np.asarray(clu["found"]).any()
    assert np.all(np.isnan(np.asarray(clu["x"])))
    for k, v in b.event.items():
        v = np.asarray(v, dtype=np.float64)
        if k in VTX_NAN:
            assert np.all(np.isnan(v))
        else:
            assert np.all(np.isfinite(v)), k
    assert np.all(np.asarray(b.event["rec_m"]) == 0)
    assert not np.asarray(b.event["cut_photons"]).any()
    # photons just inside the barrel's end are found (the gap is not the whole forward region)
    th_in = np.full(2 * n, th_hi + 0.02)
    b2 = copy.deepcopy(b)
    b2.groups.pop("clu")
    b2.groups.pop("trk")
    d = b2.groups["dau"][1]
    d["px"], d["py"], d["pz"] = (e * np.sin(th_in) * np.cos(ph), e * np.sin(th_in) * np.sin(ph),
                                 e * np.cos(th_in))
    respond(b2, geo, sel, np.random.default_rng(8))
    assert np.mean(np.asarray(b2.groups["clu"][1]["e"]) > 0) > 0.99
