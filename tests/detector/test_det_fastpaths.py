"""Tests of the detector's draw counter and of the exact shortcuts inside the kernels."""

import math

import numpy as np
import pytest
from detector_synth import GEOMETRIES, make_block

from toymc.config.geometry import load_geometry, parse_selection
from toymc.detector.helix import _cos_sin, _wrap, layer_crossings
from toymc.detector.response import respond
from toymc.detector.tracking import _polar_cut, track_kernel

GEOM = load_geometry(GEOMETRIES / "demo.toml")
LAYERS = GEOM.tracking_layers()
SEL = parse_selection({"r_min": "0.5 cm", "r_max": "90 cm", "z_min": -70, "z_max": 150,
                       "profile": {"kind": "tabulated", "eps0": 0.9,
                                   "points": [[0.5, 1.0], [90, 0.2]]}}, None, GEOM)


@pytest.mark.parametrize("channel", ["pipipi0", "gg", "pipi"])
def test_counter_counts_every_draw(channel):
    blk = make_block(np.random.default_rng(3), 4000, channel, 0.6, 2.0, r_range=(0.5, 120))
    rng = np.random.Generator(np.random.PCG64(21))
    counter = np.array([5, 7], dtype=np.int64)  # the counter is added to, not overwritten
    respond(blk, GEOM, SEL, rng, counter=counter)
    n_uni, n_norm = int(counter[0]) - 5, int(counter[1]) - 7
    # hand count from the output: 3 normals per smeared track (px not NaN), 3 per cluster on
    # the face (x not NaN), 4 per vertex candidate with tracks (vtx_x not NaN), 1 uniform per
    # event
    trk, clu = blk.groups["trk"][1], blk.groups["clu"][1]
    hand = (3 * np.count_nonzero(~np.isnan(trk["px"])) + 3 * np.count_nonzero(~np.isnan(clu["x"]))
            + 4 * np.count_nonzero(~np.isnan(blk.event["vtx_x"])))
    assert n_norm == hand > 0
    assert n_uni == blk.n
    # numpy's own Generator as reference: all normals are drawn before the uniforms, so
    # drawing the counted numbers from a fresh generator of the same seed must leave it in
    # exactly the same state (one draw more or less would not)
    ref = np.random.Generator(np.random.PCG64(21))
    ref.standard_normal(n_norm)
    ref.random(n_uni)
    assert ref.bit_generator.state == rng.bit_generator.state


def test_counter_is_optional_and_output_does_not_depend_on_it():
    a = make_block(np.random.default_rng(4), 1500, "pipipi0", 0.5, 1.5, r_range=(1, 50))
    b = make_block(np.random.default_rng(4), 1500, "pipipi0", 0.5, 1.5, r_range=(1, 50))
    respond(a, GEOM, SEL, np.random.default_rng(9))
    respond(b, GEOM, SEL, np.random.default_rng(9), counter=np.zeros(2, dtype=np.int64))
    for key in a.event:
        np.testing.assert_array_equal(a.event[key], b.event[key])


def test_kernel_hits_equal_the_crossings_of_the_wrapper():
    # track_kernel walks without recording per-cylinder flags; layer_crossings records them.
    # The hit count must be the number of crossed measuring cylinders in both.
    rng = np.random.default_rng(12)
    n = 400
    r0 = rng.uniform(0, 80, n)
    ph = rng.uniform(0, 2 * np.pi, n)
    x0, y0, z0 = r0 * np.cos(ph), r0 * np.sin(ph), rng.uniform(-40, 80, n)
    pt, a, pz = rng.uniform(0.05, 2.0, n), rng.uniform(0, 2 * np.pi, n), rng.uniform(-2, 2, n)
    q = np.where(rng.random(n) < 0.5, 1.0, -1.0)
    px, py = pt * np.cos(a), pt * np.sin(a)
    e = np.sqrt(pt**2 + pz**2 + 0.14**2)
    hits = track_kernel(np.ones(n, bool), q, px, py, pz, e, x0, y0, z0,
                        LAYERS["radius"], LAYERS["z_min"], LAYERS["z_max"],
                        LAYERS["resolution"], LAYERS["thickness"], LAYERS["measuring"],
                        GEOM.field, 0.0, math.pi, 6, 0.05, np.random.default_rng(1))[0]
    meas = LAYERS["measuring"] == 1
    exp = [np.count_nonzero(layer_crossings(x0[i], y0[i], z0[i], px[i], py[i], pz[i], q[i],
                                            GEOM.field, LAYERS)[meas]) for i in range(n)]
    np.testing.assert_array_equal(hits, exp)
    assert 0 < np.mean(hits) < meas.sum()


def test_wrap_equals_python_float_modulo():
    # Python's float % takes the sign of the divisor (language reference, "Binary arithmetic
    # operations"); the kernel avoids fmod for |a| < 4 pi and must give the same number
    two_pi = 2.0 * math.pi
    rng = np.random.default_rng(2)
    vals = list(rng.uniform(-30, 30, 20000)) + [0.0, -0.0, two_pi, -two_pi, 2 * two_pi,
                                                 -2 * two_pi, 1e-300, -1e-300, -1e-17,
                                                 math.nextafter(two_pi, 0.0),
                                                 math.nextafter(-two_pi, 0.0),
                                                 math.nextafter(2 * two_pi, 0.0),
                                                 math.nextafter(-2 * two_pi, 0.0), 1e6, -1e6]
    for a in vals:
        exp = a % two_pi
        if exp < 0.0:
            exp += two_pi
        assert _wrap(a) == exp, a


def test_small_angle_cos_sin_match_libm():
    # Taylor series against math.cos / math.sin: equal within 2 units in the last place
    rng = np.random.default_rng(3)
    for b in np.concatenate([rng.uniform(-1.2, 1.2, 20000), rng.uniform(-0.04, 0.04, 20000),
                             [0.0, 0.03, -0.03, 0.999999, 1.0]]):
        c, s = _cos_sin(b)
        assert abs(c - math.cos(b)) <= 2 * math.ulp(math.cos(b))
        assert abs(s - math.sin(b)) <= 2 * math.ulp(math.sin(b)) + 1e-300


def test_walk_bounds_at_cylinder_radii():
    # the walk bisects for the first cylinder strictly above the origin radius and for the
    # first at or beyond the largest radius d + R: an origin exactly on a cylinder does not
    # count that cylinder, one just inside does; a NaN origin crosses nothing
    rad = LAYERS["radius"]
    for k in range(len(rad) - 1):
        r = float(rad[k])
        for x0, counted in ((r, False), (math.nextafter(r, 0.0), True)):
            # radially outward, stiff, in the transverse plane at z = 0
            hit = layer_crossings(x0, 0.0, 0.0, 50.0, 0.0, 0.0, 1.0, GEOM.field, LAYERS)
            inside = (LAYERS["z_min"] <= 0.0) & (0.0 <= LAYERS["z_max"])
            exp = (rad > x0) & inside
            np.testing.assert_array_equal(hit, exp)
            assert hit[k] == (counted and inside[k])
    hit = layer_crossings(np.nan, 0.0, 0.0, 1.0, 0.0, 0.0, 1.0, GEOM.field, LAYERS)
    assert not hit.any()


def test_polar_cut_agrees_with_the_angle_outside_its_guard_band():
    t_min, t_max = math.radians(17), math.radians(150)
    c_max, c_min = math.cos(t_max), math.cos(t_min)
    rng = np.random.default_rng(5)
    theta = np.concatenate([rng.uniform(0, math.pi, 20000), [t_min, t_max]])
    for t in theta:
        res = _polar_cut(math.cos(t), c_max, c_min)
        if res < 0:  # undecided only within 1e-9 of a bound (in cos theta)
            assert min(abs(math.cos(t) - c_max), abs(math.cos(t) - c_min)) <= 1e-9
        else:
            assert res == (1 if t_min <= t <= t_max else 0)
    assert _polar_cut(math.cos(t_min), c_max, c_min) == -1


def test_found_track_without_pdg_mass_raises_the_table_error():
    # the mass hypothesis comes from the PDG table (toymc.physics.constants.mass); an id the table
    # does not know is an error once a found track needs it, as a direct lookup would be
    from particle import ParticleNotFound

    blk = make_block(np.random.default_rng(6), 200, "pipi", 0.5, 1.5, r_range=(1, 20))
    blk.groups["dau"][1]["pdg"] = np.where(np.abs(blk.groups["dau"][1]["pdg"]) == 211,
                                           999999, blk.groups["dau"][1]["pdg"])
    with pytest.raises(ParticleNotFound):
        respond(blk, GEOM, SEL, np.random.default_rng(1))


def test_candidate_ids_are_the_distinct_charged_ids_in_order_of_appearance():
    # the kernel must give what a plain Python scan gives, also with more distinct ids than
    # its first buffer holds (growth) and with negative ids
    from toymc.detector.response import _candidates

    rng = np.random.default_rng(6)
    pool = np.array([211, -211, 321, -321, 13, -13, 11, -11, 2212, -2212, 22, 111,
                     16 + 211, 32 + 211, 64 + 211, 1024 + 211, 9000211, -9000211] +
                    list(range(400, 440)), dtype=np.int64)
    for n in (0, 1, 7, 500, 5000):
        pdg = rng.choice(pool, n)
        q = np.where(rng.random(n) < 0.8, rng.choice([-1.0, 1.0], n), 0.0)
        status = np.where(rng.random(n) < 0.9, 1, 2).astype(np.int32)
        is_trk, is_gam, ids = _candidates(status, q, pdg)
        exp_trk = (status == 1) & (q != 0.0)
        np.testing.assert_array_equal(is_trk, exp_trk)
        np.testing.assert_array_equal(is_gam, (status == 1) & (pdg == 22))
        exp_ids = list(dict.fromkeys(int(v) for v in pdg[exp_trk]))
        assert ids.tolist() == exp_ids


_ACOS_POINTS = np.concatenate([
    np.random.default_rng(7).uniform(-1, 1, 30000), 1 - np.random.default_rng(8).uniform(0, 1e-6, 3000),
    -1 + np.random.default_rng(9).uniform(0, 1e-6, 3000),
    np.random.default_rng(10).uniform(0.49, 0.51, 3000),
    np.random.default_rng(11).uniform(-0.51, -0.49, 3000),
    np.random.default_rng(12).uniform(-1e-9, 1e-9, 1000),
    [0.0, -0.0, 0.5, -0.5, 1.0, -1.0, math.nextafter(0.5, 1.0), math.nextafter(-0.5, -1.0),
     math.nextafter(1.0, 0.0), math.nextafter(-1.0, 0.0)]])


def _acos_reference(x):
    """arccos in extended precision where the platform has it (x86-64: 64-bit mantissa,
    libm's acosl), so the reference error is ~1/2000 ulp of a double; else libm's acos."""
    if np.finfo(np.longdouble).nmant >= 63:
        return np.arccos(np.asarray(x, dtype=np.longdouble)), 1.5
    return np.arccos(np.asarray(x, dtype=np.float64)), 2.5  # libm: within 1 ulp itself


def _ulp_errors(values, xs):
    ref, _ = _acos_reference(xs)
    ulp = np.array([math.ulp(float(r)) for r in ref])
    return np.abs(np.asarray(values, dtype=np.longdouble) - ref) / ulp


def test_acos_polynomial_within_one_and_a_half_ulp():
    # the error bound that matters, against an extended-precision reference (not against
    # this machine's libm, whose last bit varies with the CPU's instruction set)
    from toymc.physics.kinematics.elementary import acos_1 as _acos

    _, bound = _acos_reference(0.5)
    err = _ulp_errors([_acos(float(x)) for x in _ACOS_POINTS], _ACOS_POINTS)
    assert err.max() <= bound, _ACOS_POINTS[np.argmax(err)]
    # exact values: acos(1) = 0, acos(-1) = pi, acos(0) = pi/2, acos(1/2) = pi/3
    assert _acos(1.0) == 0.0
    assert _acos(-1.0) == math.pi
    assert _acos(0.0) == math.pi / 2
    assert abs(_acos(0.5) - math.pi / 3) <= math.ulp(math.pi / 3)


def test_acos_fit_script_gives_a_polynomial_as_accurate_as_the_stored_one():
    # least-squares coefficients are ill-conditioned: their digits depend on the machine's
    # LAPACK, so compare what they are for, the polynomial's accuracy, not the digits
    import importlib.util
    from pathlib import Path

    from toymc.physics.kinematics.elementary import _ASIN_P

    path = Path(__file__).resolve().parents[2] / "validation" / "fit_acos_poly.py"
    spec = importlib.util.spec_from_file_location("fit_acos_poly", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    coef = mod.fit()
    assert len(coef) == len(_ASIN_P)
    zt = np.linspace(0.0, 0.25, 801)
    ref = np.array([mod.p_reference(v) for v in zt])
    for c in (coef, np.asarray(_ASIN_P)):
        rel = np.abs(np.polynomial.polynomial.polyval(zt, c) / ref - 1.0)
        # P enters asin(s) = s + s z P(z) with z P(z) <= 0.05: 4e-15 relative in P is
        # below 2e-16 relative in asin
        assert rel.max() < 4e-15
