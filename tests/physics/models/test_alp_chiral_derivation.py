"""Derivation check of the LO chiral a -> 3 pi amplitudes used by toymc.physics.models.alp.

The standard two-flavour leading-order chiral Lagrangian (from memory:
L = (F^2/4) Tr(dU dU^+) + (F^2 B0/2) Tr(M_a U^+ + U M_a^+), U = exp(i Phi/F), F ~ 92 MeV,
m_pi^2 = B0 (m_u + m_d))
with the gluon-coupled ALP rotated into the quark mass matrix by the isospin-symmetric
axial rotation M_a = exp(i a/(2f)) M (so there is no derivative coupling, only a-pi0
mass mixing) is expanded here with plane-wave modes, and the tree amplitude

    A = V(a 3pi) - V(a pi0) V(pi0* 3pi)/(m_a^2 - m_pi^2)

is compared with the closed forms in the module docstring (REFERENCES.md):
A(+-0) = K (s - m^2)/(m_a^2 - m^2), A(000) = K m_a^2/(m_a^2 - m^2), K = m^2 delta/(2 f F).
The amplitude is basis independent; this basis makes the algebra short.
"""

import itertools
import math

import numpy as np
import pytest


# --- multilinear polynomials in plane-wave mode amplitudes: {frozenset(modes): complex} ---
def _pmul(p, q):
    out = {}
    for a, x in p.items():
        for b, y in q.items():
            if a & b:
                continue  # each mode appears at most once (multilinear part)
            k = a | b
            out[k] = out.get(k, 0.0) + x * y
    return out


def _padd(*ps):
    out = {}
    for p in ps:
        for k, v in p.items():
            out[k] = out.get(k, 0.0) + v
    return out


def _pscale(p, c):
    return {k: c * v for k, v in p.items()}


def _mmul(a, b):
    return [
        [_padd(_pmul(a[i][0], b[0][j]), _pmul(a[i][1], b[1][j])) for j in range(2)]
        for i in range(2)
    ]


def _mtrace(a):
    return _padd(a[0][0], a[1][1])


def _field(modes):
    return {frozenset([m]): 1.0 for m in modes}


def _lagrangian_coefficient(pi0, pip, pim, kdot, target, F, f, B0, mu, md):
    """Coefficient of the monomial `target` in L (fields given as lists of modes)."""
    r2 = math.sqrt(2.0)
    phi = [
        [_field(pi0), _pscale(_field(pip), r2)],
        [_pscale(_field(pim), r2), _pscale(_field(pi0), -1)],
    ]
    one = {frozenset(): 1.0}
    ident = [[one, {}], [{}, one]]

    def expo(sign):
        u, power = ident, ident
        for n in range(1, 5):
            power = _mmul(power, [[_pscale(e, sign * 1j / F) for e in row] for row in phi])
            u = [
                [_padd(u[i][j], _pscale(power[i][j], 1.0 / math.factorial(n))) for j in range(2)]
                for i in range(2)
            ]
        return u

    u, ud = expo(+1), expo(-1)
    modes = sorted(set(pi0) | set(pip) | set(pim))

    def part(mat, j):  # c_j dU/dc_j of a multilinear polynomial
        return [[{k: v for k, v in e.items() if j in k} for e in row] for row in mat]

    kin = {}
    for j, l in itertools.product(modes, modes):
        kin = _padd(kin, _pscale(_mtrace(_mmul(part(u, j), part(ud, l))), -kdot(j, l) * F * F / 4))
    mq = [[{frozenset(): mu}, {}], [{}, {frozenset(): md}]]
    theta_p = {frozenset(): 1.0, frozenset(["a"]): 1j / (2 * f)}
    theta_m = {frozenset(): 1.0, frozenset(["a"]): -1j / (2 * f)}
    mass = _padd(_pmul(theta_p, _mtrace(_mmul(mq, ud))), _pmul(theta_m, _mtrace(_mmul(u, mq))))
    lag = _padd(kin, _pscale(mass, F * F * B0 / 2))
    return lag.get(frozenset(target), 0.0)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_lo_amplitudes_from_chiral_lagrangian(seed):
    rng = np.random.default_rng(seed)
    F, f, B0, mu, md = 0.092, 1000.0, 2.7, 0.0022, 0.0047  # GeV; any values work
    m2 = B0 * (mu + md)  # LO pion mass^2
    M2 = rng.uniform(0.2, 0.9)  # a mass^2, off-shell pi0* momentum^2
    # a random point inside the Dalitz plot: s = (p1+p2)^2 (pi+ pi-), t = (p2+p3)^2
    M, m = math.sqrt(M2), math.sqrt(m2)
    while True:
        s, t = rng.uniform(4 * m2, (M - m) ** 2, 2)
        u = M2 + 3 * m2 - s - t
        if u > 4 * m2 and s * t * u - m2 * (M2 - m2) ** 2 > 0:  # Kibble boundary
            break
    # all-incoming momenta: k0 = P, k1 = -p1 (pi+), k2 = -p2 (pi-), k3 = -p3 (pi0)
    pdot_p = {"1": (M2 + m2 - t) / 2, "2": (M2 + m2 - u) / 2, "3": (M2 + m2 - s) / 2}
    pp = {("1", "2"): (s - 2 * m2) / 2, ("2", "3"): (t - 2 * m2) / 2, ("1", "3"): (u - 2 * m2) / 2}

    def kdot(j, l):
        if j == l:
            return M2 if j == "0" else m2
        if "0" in (j, l):
            return -pdot_p[l if j == "0" else j]
        return pp[tuple(sorted((j, l)))]

    args = (F, f, B0, mu, md)
    mix = _lagrangian_coefficient(["0"], [], [], kdot, {"a", "0"}, *args)
    delta = (md - mu) / (md + mu)
    K = m2 * delta / (2 * f * F)

    # pi+ pi- pi0: pi+ created by the pi^- field, pi- by the pi^+ field
    v4 = _lagrangian_coefficient(["0", "3"], ["2"], ["1"], kdot, {"0", "1", "2", "3"}, *args)
    v3 = _lagrangian_coefficient(["3"], ["2"], ["1"], kdot, {"a", "1", "2", "3"}, *args)
    amp = v3 - mix * v4 / (M2 - m2)
    assert amp == pytest.approx(K * (s - m2) / (M2 - m2), rel=1e-9)

    # 3 pi0
    v4 = _lagrangian_coefficient(["0", "1", "2", "3"], [], [], kdot, {"0", "1", "2", "3"}, *args)
    v3 = _lagrangian_coefficient(["1", "2", "3"], [], [], kdot, {"a", "1", "2", "3"}, *args)
    amp0 = v3 - mix * v4 / (M2 - m2)
    assert amp0 == pytest.approx(K * M2 / (M2 - m2), rel=1e-9)
