"""Tests of toymc.detector.calorimeter and of the displaced di-photon mass."""

import dataclasses
import math

import numpy as np
import pytest
from detector_synth import GEOMETRIES, boost, two_body

from toymc.config.geometry import load_geometry, parse_selection
from toymc.detector.calorimeter import cluster_kernel, energy_resolution, face_impact
from toymc.detector.response import respond
from toymc.engine.block import Block

GEOM = load_geometry(GEOMETRIES / "demo.toml")
CAL = GEOM.calorimeter


@pytest.mark.parametrize("e", [0.05, 0.3, 1.0, 4.0])
def test_energy_resolution_worked_points(e):
    # PDG review "Calorimetry": sigma/E = a/sqrt(E) (+) b/E (+) c, quadrature sum
    a, b, c = 0.02, 0.002, 0.012
    rel = math.sqrt((a / math.sqrt(e)) ** 2 + (b / e) ** 2 + c**2)
    assert energy_resolution(e, a, b, c) == pytest.approx(rel * e, rel=1e-12)
    # each term alone
    assert energy_resolution(e, a, 0, 0) == pytest.approx(a * math.sqrt(e), rel=1e-12)
    assert energy_resolution(e, 0, b, 0) == pytest.approx(b, rel=1e-12)
    assert energy_resolution(e, 0, 0, c) == pytest.approx(c * e, rel=1e-12)


def _kernel(px, py, pz, vx, vy, vz, cal=CAL, e_min=0.0, seed=3, theta=(0.0, math.pi)):
    px, py, pz = (np.asarray(v, dtype=float) for v in (px, py, pz))
    e = np.sqrt(px**2 + py**2 + pz**2)
    vx, vy, vz = (np.broadcast_to(np.asarray(v, dtype=float), px.shape).copy()
                  for v in (vx, vy, vz))
    return cluster_kernel(np.ones(px.shape, bool), px, py, pz, e, vx, vy, vz,
                          cal.radius, cal.z_min, cal.z_max, cal.forward.z, cal.forward.r_inner,
                          cal.forward.r_outer, cal.backward.z, cal.backward.r_inner,
                          cal.backward.r_outer, cal.stochastic, cal.noise, cal.constant,
                          cal.position_resolution, theta[0], theta[1], e_min,
                          np.random.default_rng(seed))


def test_energy_smearing_width():
    n = 50000
    e0 = 0.4
    out = _kernel(np.full(n, e0), np.zeros(n), np.zeros(n), 0.0, 0.0, 0.0)
    es = out[0]
    sig = energy_resolution(e0, CAL.stochastic, CAL.noise, CAL.constant)
    assert abs(es.mean() - e0) < 4 * sig / math.sqrt(n)
    assert abs(es.std(ddof=1) - sig) < 4 * sig / math.sqrt(2 * (n - 1))


def test_face_impact_barrel_endcap_gap():
    args = (CAL.radius, CAL.z_min, CAL.z_max, CAL.forward.z, CAL.forward.r_inner,
            CAL.forward.r_outer, CAL.backward.z, CAL.backward.r_inner, CAL.backward.r_outer)
    # straight up from the origin: barrel at (0, R, 0)
    part, x, y, z = face_impact(0, 0, 0, 0, 1, 0, *args)
    assert part == 0 and (x, y, z) == pytest.approx((0, CAL.radius, 0))
    # forward: aim at r = 80 cm on the forward plane
    part, x, y, z = face_impact(0, 0, 0, 80.0, 0, CAL.forward.z, *args)
    assert part == 1 and (x, z) == pytest.approx((80.0, CAL.forward.z))
    # backward
    part, *_ = face_impact(0, 0, 0, 60.0, 0, CAL.backward.z, *args)
    assert part == 2
    # the gap: barrel ends at z_max, forward disk stops at r_outer < radius
    zr = 0.5 * (CAL.z_max / CAL.radius + CAL.forward.z / CAL.forward.r_outer)
    part, *_ = face_impact(0, 0, 0, 1.0, 0, zr * 1.0, *args)
    r_at_plane = CAL.forward.z / zr
    z_at_barrel = zr * CAL.radius
    assert r_at_plane > CAL.forward.r_outer and z_at_barrel > CAL.z_max
    assert part == -1
    # the beam hole of the forward endcap
    part, *_ = face_impact(0, 0, 0, 0.1, 0, 1.0, *args)
    assert part == -1
    # a photon that starts outside the face is lost
    part, *_ = face_impact(CAL.radius + 1, 0, 0, 1, 0, 0, *args)
    assert part == -1


def test_gap_photons_are_not_found():
    zr = 0.5 * (CAL.z_max / CAL.radius + CAL.forward.z / CAL.forward.r_outer)
    out = _kernel([1.0, 1.0], [0.0, 0.0], [zr, 0.2], 0.0, 0.0, 0.0)
    assert list(out[4]) == [False, True]


def _line_cylinder(v, u, radius):
    """Own straight-line / cylinder intersection for the test (t > 0 root)."""
    a = u[0] ** 2 + u[1] ** 2
    b = 2 * (v[0] * u[0] + v[1] * u[1])
    c = v[0] ** 2 + v[1] ** 2 - radius**2
    t = (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)
    return v + t * u


@pytest.mark.parametrize("r_decay", [10.0, 40.0, 80.0])
def test_diphoton_mass_bias_from_geometry(r_decay):
    # a -> gamma gamma decaying at radius r in the plane z = 0, photons in the transverse
    # plane.  Expected reconstructed mass from the geometry only: the photons hit the
    # barrel at points P1, P2; seen from the origin their opening angle psi gives
    # m_rec^2 = 2 E1 E2 (1 - cos psi) (massless photons, PDG review "Kinematics").
    m_a, p_a = 0.3, 1.2
    rng = np.random.default_rng(21)
    n = 200
    ph = rng.uniform(0, 2 * np.pi, n)
    llp = np.column_stack([p_a * np.cos(ph), p_a * np.sin(ph), np.zeros(n),
                           np.full(n, math.hypot(p_a, m_a))])
    # decay axis in the transverse plane: rest-frame photons along (cos a, sin a, 0)
    alpha = rng.uniform(0, 2 * np.pi, n)
    k = m_a / 2
    g1 = np.column_stack([k * np.cos(alpha), k * np.sin(alpha), np.zeros(n), np.full(n, k)])
    g2 = np.column_stack([-g1[:, :3], g1[:, 3]])
    l1, l2 = boost(g1, llp), boost(g2, llp)
    vtx = np.column_stack([r_decay * np.cos(ph), r_decay * np.sin(ph), np.zeros(n)])

    expected = np.empty(n)
    for i in range(n):
        p1 = _line_cylinder(vtx[i], l1[i, :3], CAL.radius)
        p2 = _line_cylinder(vtx[i], l2[i, :3], CAL.radius)
        cpsi = p1 @ p2 / (np.linalg.norm(p1) * np.linalg.norm(p2))
        expected[i] = math.sqrt(2 * l1[i, 3] * l2[i, 3] * (1 - cpsi))

    perfect = dataclasses.replace(
        GEOM, calorimeter=dataclasses.replace(CAL, stochastic=0.0, noise=0.0, constant=0.0,
                                              position_resolution=0.0),
        acceptance=dataclasses.replace(GEOM.acceptance, calo_theta_min=0.0,
                                       calo_theta_max=math.pi))
    blk = Block(n=n)
    cols = {"pdg": np.full(2 * n, 22, np.int32), "q": np.zeros(2 * n),
            "status": np.ones(2 * n, np.int32), "mother": np.full(2 * n, -1, np.int32)}
    for j, key in enumerate(("px", "py", "pz", "e")):
        cols[key] = np.column_stack([l1[:, j], l2[:, j]]).reshape(-1)
    for j, key in enumerate(("vx", "vy", "vz")):
        cols[key] = np.repeat(vtx[:, j], 2)
    blk.add_group("dau", np.full(n, 2), cols)
    sel = parse_selection({"r_min": 0.5, "r_max": 100, "z_min": -70, "z_max": 150,
                           "photon_min_e": 0.0})
    respond(blk, perfect, sel, np.random.default_rng(1))
    clu = blk.groups["clu"][1]
    assert clu["found"].all()
    np.testing.assert_allclose(blk.event["rec_m"], expected, rtol=1e-9)
    # the bias is downward and grows with the decay radius
    assert np.all(expected < m_a)


def test_diphoton_bias_grows_with_radius():
    # mean reconstructed/true mass ratio at three radii, from the same construction
    rng = np.random.default_rng(4)
    ratios = []
    for r_decay in (2.0, 30.0, 90.0):
        n = 2000
        ph = rng.uniform(0, 2 * np.pi, n)
        llp = np.column_stack([0.8 * np.cos(ph), 0.8 * np.sin(ph), np.zeros(n),
                               np.full(n, math.hypot(0.8, 0.2))])
        a, b = two_body(rng, np.full(n, 0.2), 0.0, 0.0)
        l1, l2 = boost(a, llp), boost(b, llp)
        px = np.concatenate([l1[:, 0], l2[:, 0]])
        py = np.concatenate([l1[:, 1], l2[:, 1]])
        pz = np.concatenate([l1[:, 2], l2[:, 2]])
        vx = np.tile(r_decay * np.cos(ph), 2)
        vy = np.tile(r_decay * np.sin(ph), 2)
        nocal = dataclasses.replace(CAL, stochastic=0.0, noise=0.0, constant=0.0,
                                    position_resolution=0.0)
        out = _kernel(px, py, pz, vx, vy, 0.0, cal=nocal)
        ok = out[4][:n] & out[4][n:]
        e1, e2 = out[0][:n][ok], out[0][n:][ok]
        p1 = np.stack([out[5][:n][ok], out[6][:n][ok], out[7][:n][ok]])
        p2 = np.stack([out[5][n:][ok], out[6][n:][ok], out[7][n:][ok]])
        m = np.sqrt(np.maximum(2 * (e1 * e2 - np.sum(p1 * p2, axis=0)), 0))
        ratios.append(np.mean(m) / 0.2)
    assert 1.0 >= ratios[0] > ratios[1] > ratios[2]
