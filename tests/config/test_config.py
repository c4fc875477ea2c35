"""Config validation: every user mistake raises ConfigError (or InputFileError) naming the
key, the value and what is allowed, in one line.

Outside references: PDG masses from `particle` for the thresholds and production limits
(m_X < m_B - m_K for B -> K X, two-body kinematics, PDG review "Kinematics"); unit values
from `hepunits`.
"""

import math

import hepunits as u
import pytest
from _demo import CONFIGS, truth_dict
from particle import Particle

from toymc.config import loader as config
from toymc.errors import ConfigError, InputFileError
from toymc.physics.decays import CHANNELS

DEMOS = ("alp_3pi_bka.toml", "alp_gg_bksta.toml", "darkphoton_mumu.toml")


def _m(pdgid):
    return float(Particle.from_pdgid(pdgid).mass) / 1000.0


def _data(demo="darkphoton_mumu.toml"):
    return truth_dict(CONFIGS / demo)


def _error(data, exc=ConfigError):
    with pytest.raises(exc) as info:
        config.from_dict(data, path="cfg.toml")
    msg = str(info.value)
    assert "\n" not in msg
    return info.value, msg


def test_demo_configs_load_with_units():
    for name in DEMOS:
        cfg = config.load(CONFIGS / name)
        assert cfg.beams.crossing_angle == pytest.approx(45 * u.mrad / u.rad, rel=1e-12)
        assert cfg.beams.sigma_x == pytest.approx(15 * u.micrometer / u.cm, rel=1e-12)
        assert cfg.beams.sigma_y == pytest.approx(0.5 * u.micrometer / u.cm, rel=1e-12)
        assert cfg.beams.sigma_z == pytest.approx(0.4 * u.mm / u.cm, rel=1e-12)
        assert cfg.beams.e_minus == pytest.approx(6.60, rel=1e-12)
    cfg = config.load(CONFIGS / "darkphoton_mumu.toml")
    assert cfg.llp.mass == pytest.approx(0.8) and cfg.llp.ctau == pytest.approx(10.0)
    data = _data()
    data["llp"].update(mass="800 MeV", ctau="100 mm")
    cfg2 = config.from_dict(data)
    assert cfg2.llp.mass == pytest.approx(0.8, rel=1e-12)
    assert cfg2.llp.ctau == pytest.approx(10.0, rel=1e-12)


def test_resolved_toml_round_trip():
    for name in DEMOS:
        cfg = config.load(CONFIGS / name)
        again = config.loads(config.to_toml(cfg))
        assert (again.run, again.beams, again.production, again.llp) == \
            (cfg.run, cfg.beams, cfg.production, cfg.llp)


def test_unknown_key_suggests_closest():
    data = _data()
    data["llp"]["ctua"] = 3.0
    err, msg = _error(data)
    assert err.key == "llp.ctua" and err.value == 3.0
    assert "did you mean 'ctau'" in msg and "cfg.toml" in msg


def test_unknown_section_suggests_closest():
    data = _data()
    data["beam"] = {"e_minus": 1.0}
    err, msg = _error(data)
    assert err.key == "beam" and "did you mean 'beams'" in msg


@pytest.mark.parametrize("section,key,value", [
    ("run", "events", "many"), ("run", "events", 1.5), ("run", "seed", -1),
    ("run", "events", 0), ("llp", "mass", "heavy"), ("llp", "mass", True),
    ("llp", "mass", "0.8 parsec"), ("llp", "channel", 3), ("beams", "e_minus", [1, 2]),
    ("llp", "mass", math.nan), ("beams", "crossing_angle", 0.8),
    ("production", "photon_cos_max", 1.0), ("run", "compression", "gzip"),
])
def test_wrong_type_or_range(section, key, value):
    data = _data()
    data[section][key] = value
    err, msg = _error(data)
    assert err.key == f"{section}.{key}"
    assert f"{section}.{key}" in msg and repr(value) in msg


@pytest.mark.parametrize("ctau", [0.0, -1.0, "-2 cm", "0 mm", math.inf])
def test_nonpositive_or_infinite_ctau(ctau):
    data = _data()
    data["llp"]["ctau"] = ctau
    err, msg = _error(data)
    assert err.key == "llp.ctau" and repr(ctau) in msg and "> 0" in msg


def test_missing_required_key():
    data = _data()
    del data["llp"]["mass"]
    err, msg = _error(data)
    assert err.key == "llp.mass" and "missing" in msg and "required" in msg


@pytest.mark.parametrize("key,value,suggest", [
    ("channel", "tau_tau", None), ("channel", "mumu", "mu_mu"),
])
def test_unknown_channel(key, value, suggest):
    data = _data()
    data["llp"][key] = value
    err, msg = _error(data)
    assert err.key == "llp.channel" and repr(value) in msg
    for name in CHANNELS:
        assert repr(name) in msg
    if suggest:
        assert f"did you mean '{suggest}'" in msg


def test_unknown_process_and_recoil():
    data = _data()
    data["production"]["process"] = "drell_yan"
    err, msg = _error(data)
    assert err.key == "production.process" and "'b_meson'" in msg and "'radiative'" in msg
    data = _data("alp_3pi_bka.toml")
    data["production"]["recoil"] = "K0"
    err, msg = _error(data)
    assert err.key == "production.recoil" and "'K0'" in msg


# thresholds: sum of the direct daughters' PDG masses
THRESHOLDS = {"gamma_gamma": 0.0, "pi_pi_pi0": 2 * _m(211) + _m(111), "pi0_pi0_pi0": 3 * _m(111),
              "e_e": 2 * _m(11), "mu_mu": 2 * _m(13), "pi_pi": 2 * _m(211)}


@pytest.mark.parametrize("channel", sorted(THRESHOLDS))
def test_mass_at_or_below_threshold(channel):
    thr = THRESHOLDS[channel]
    data = _data("alp_3pi_bka.toml")
    data["llp"].update(channel=channel, matrix_element="flat")
    if thr > 0:
        data["llp"]["mass"] = thr * (1 - 1e-6)
        err, msg = _error(data)
        assert err.key == "llp.mass" and "threshold" in msg
        data["llp"]["mass"] = thr * (1 + 1e-6)
        assert config.from_dict(data).llp.mass == pytest.approx(thr * (1 + 1e-6))
    else:
        data["llp"]["mass"] = 1e-9
        assert config.from_dict(data).llp.mass == 1e-9


def test_mass_above_production_limit():
    """m_X must be below m_B - m_K (B -> K X) with the lighter B and heavier K (both charges)."""
    lim_k = min(_m(521), _m(511)) - max(_m(321), _m(311))
    data = _data("alp_3pi_bka.toml")
    data["llp"].update(channel="gamma_gamma", matrix_element="flat", mass=lim_k + 1e-6)
    err, msg = _error(data)
    assert err.key == "llp.mass" and "production limit" in msg and "m_B - m_K" in msg
    data["llp"]["mass"] = lim_k - 1e-6
    config.from_dict(data)
    # B -> K* X needs room for the lightest K pi pair of either charge
    lim_ks = min(_m(521), _m(511)) - max(_m(321) + _m(111), _m(311) + _m(211))
    data["production"]["recoil"] = "K*"
    data["llp"]["mass"] = lim_ks + 1e-6
    err, msg = _error(data)
    assert err.key == "llp.mass"
    data["llp"]["mass"] = lim_ks - 1e-6
    config.from_dict(data)
    # radiative: below sqrt(s)
    data = _data()
    data["llp"]["mass"] = 11.0
    err, msg = _error(data)
    assert err.key == "llp.mass" and "sqrt(s)" in msg


def test_inconsistent_combinations():
    data = _data()
    data["llp"]["channel"] = "gamma_gamma"
    err, _ = _error(data)
    assert err.key == "llp.channel"  # radiative production makes a vector
    data = _data("alp_gg_bksta.toml")
    data["llp"]["matrix_element"] = "chiral"
    err, _ = _error(data)
    assert err.key == "llp.matrix_element"
    data = _data()
    data["production"].update(photon_cos_min=0.5, photon_cos_max=0.2)
    err, _ = _error(data)
    assert err.key == "production.photon_cos_min"
    data = _data("alp_3pi_bka.toml")
    data["beams"].update(e_minus="5 GeV", e_plus="5 GeV")  # sqrt(s) < 2 m_B
    err, msg = _error(data)
    assert err.key == "beams.e_minus" and "2 m_B0" in msg


def test_missing_and_bad_files(tmp_path):
    with pytest.raises(InputFileError) as info:
        config.load(tmp_path / "nothere.toml")
    assert "nothere.toml" in str(info.value) and "not found" in str(info.value)
    bad = tmp_path / "bad.toml"
    bad.write_text("[llp\nmass = 1\n")
    with pytest.raises(InputFileError) as info:
        config.load(bad)
    assert str(info.value).startswith(f"{bad}: not a valid TOML file (")


# every unit name the config accepts, with its value from hepunits' full names
UNIT_VALUES = {
    "nm": u.nanometer, "um": u.micrometer, "micrometer": u.micrometer, "mm": u.millimeter,
    "cm": u.centimeter, "m": u.meter, "km": u.kilometer,
    "eV": u.electronvolt, "keV": u.kiloelectronvolt, "MeV": u.megaelectronvolt,
    "GeV": u.gigaelectronvolt, "TeV": u.teraelectronvolt,
    "fs": u.femtosecond, "ps": u.picosecond, "ns": u.nanosecond, "us": u.microsecond,
    "microsecond": u.microsecond, "ms": u.millisecond, "s": u.second,
    "T": u.tesla, "tesla": u.tesla, "gauss": u.gauss, "kilogauss": u.kilogauss,
    "rad": u.radian, "mrad": u.milliradian, "urad": 1e-6 * u.radian, "deg": u.degree,
    "degree": u.degree,
    "ab": u.attobarn, "fb": u.femtobarn, "pb": u.picobarn, "nb": u.nanobarn,
    "ub": u.microbarn, "mb": u.millibarn, "barn": u.barn,
    "ab-1": 1 / u.attobarn, "fb-1": 1 / u.femtobarn, "pb-1": 1 / u.picobarn,
    "nb-1": 1 / u.nanobarn,
}
INTERNAL = {"length": u.centimeter, "energy": u.gigaelectronvolt, "time": u.nanosecond,
            "field": u.tesla, "angle": u.radian, "area": u.femtobarn,
            "inverse_area": 1 / u.femtobarn}


def test_every_listed_unit_converts():
    """Each unit name the config advertises converts to its hepunits value (no crash)."""
    from toymc.config.units import DIMENSIONS, parse_quantity

    for dim, (_, names) in DIMENSIONS.items():
        for name in names:
            want = 2.5 * UNIT_VALUES[name] / INTERNAL[dim]
            assert parse_quantity(f"2.5 {name}", dim) == pytest.approx(want, rel=1e-12), name
    with pytest.raises(ValueError):
        parse_quantity("2 parsec", "length")
    data = _data()
    data["beams"]["sigma_y"] = "300 nm"
    assert config.from_dict(data).beams.sigma_y == pytest.approx(3e-5, rel=1e-12)


# ------------------------------------------------------------------ one reader, one validator
def _readers():
    """(name, function reading a file) of every kind of TOML file a user gives."""
    from toymc.config.geometry import load_geometry
    from toymc.config.reach import load_reach
    from toymc.config.tuning import load_tuning

    return [("config", config.load), ("geometry", load_geometry), ("config", load_tuning),
            ("config", load_reach)]


@pytest.mark.parametrize("case,content,phrase", [
    ("missing", None, "{kind} file not found"),
    ("folder", "dir", "{kind} file not found (a folder)"),
    ("not UTF-8", b"name = \"\xff\xfe\"\n", "not a valid TOML file ("),
    ("not TOML", b"[llp\nmass = 1\n", "not a valid TOML file ("),
    ("nested too deeply", b"a = " + b"[" * 100 + b"]" * 100 + b"\n", "nesting depth"),
])
def test_every_file_reader_gives_the_same_error(tmp_path, case, content, phrase):
    """Configs, geometries, tuning and reach configs are read by one reader: the same
    mistake gives the same one line (file name first) for each."""
    f = tmp_path / "f.toml"
    if content == "dir":
        f.mkdir()
    elif content is not None:
        f.write_bytes(content)
    for kind, read in _readers():
        with pytest.raises(InputFileError) as info:
            read(f)
        msg = str(info.value)
        assert msg.startswith(f"{f}: ") and "\n" not in msg, msg
        assert phrase.format(kind=kind) in msg, (read.__name__, msg)


def test_every_section_reader_suggests_the_same_way(tmp_path):
    """An unknown key in any section or geometry table: 'unknown key; allowed: ...' and the
    closest name, in one form (the one validator)."""
    from _inputs import base_geometry, small_tune_data

    from toymc.config.backgrounds import parse_backgrounds
    from toymc.config.geometry import geometry_from_dict, parse_selection
    from toymc.config.reach import parse_reach
    from toymc.config.tuning import parse_tuning

    geo = base_geometry()
    geo["chamber"]["r_iner"] = 1.0
    tune = small_tune_data()
    cases = [
        (lambda: config.from_dict(dict(_data(), run={"evnets": 1}), "c.toml"), "run.evnets",
         "events"),
        (lambda: parse_selection({"r_min": 1, "r_max": 2, "z_min": 0, "z_max": 1, "min_hit": 3},
                                 "c.toml"), "selection.min_hit", "min_hits"),
        (lambda: parse_selection({"r_min": 1, "r_max": 2, "z_min": 0, "z_max": 1,
                                  "profile": {"knd": "flat"}}, "c.toml"),
         "selection.profile.knd", "kind"),
        (lambda: geometry_from_dict(geo, "g.toml"), "chamber.r_iner", "r_inner"),
        (lambda: parse_tuning(dict(tune["tuning"], fmo="punzi"), "c.toml"), "tuning.fmo", "fom"),
        (lambda: parse_backgrounds(dict(tune["backgrounds"], sigma_rf=1.0), "c.toml"),
         "backgrounds.sigma_rf", "sigma_ref"),
        (lambda: parse_backgrounds({"ks": {"sigma": 1.0, "p_maen": 1.0}}, "c.toml"),
         "backgrounds.ks.p_maen", "p_mean"),
        (lambda: parse_reach({"lumi": 1.0, "backgroud": 1.0}, "c.toml"), "reach.backgroud",
         "background"),
    ]
    for run, key, hint in cases:
        with pytest.raises(ConfigError) as info:
            run()
        err = info.value
        assert err.key == key, (err.key, key)
        assert err.allowed.startswith("unknown key; allowed: "), err.allowed
        assert err.allowed.endswith(f" (did you mean '{hint}'?)"), err.allowed
        assert hint in err.allowed.split("; allowed: ")[1].split(" (did")[0].split(", ")


def test_tuning_channels_are_those_the_tuner_forms_a_mass_for():
    # config.tuning refuses other channels; the tuner needs a track-mass hypothesis for each
    from toymc.analysis.tuning import _HYP
    from toymc.config.tuning import TUNING_CHANNELS

    assert set(TUNING_CHANNELS) == set(_HYP)
