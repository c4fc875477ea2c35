"""LLP decays for channels and processes registered from user code (no per-channel code).

The production kernels compile their own code for each built-in channel (channel code as a
numba literal, toymc.physics.decays).  A channel registered at run time cannot add code
there; it is decayed here instead, from a description passed in arrays: the kinematics
family (two-body or three-body), the direct daughters' masses (GeV, from `particle`), the
angular law of a spin-1 LLP and the polarisation code of the production
(toymc.physics.decays docstring), the three-body matrix element, and which direct daughters
are pi0 (each followed by pi0 -> gamma gamma, isotropic).  It uses the same scalar helpers
as the built-in kernels:

* the decay length: c*t = c*tau x (standard exponential), lab decay point
  x0 + (p/m) c*t (PDG review "Kinematics");
* two-body: |p*| = sqrt(lambda(M^2, m1^2, m2^2))/(2M), E1 = (M^2 + m1^2 - m2^2)/(2M)
  (PDG review "Kinematics", two-body decays); direction isotropic (:func:`decays.iso_1`),
  helicity 0 about the parent (pol 1, :func:`decays.helicity_local_1`) or correlated with
  the beams (pol 2, :func:`decays.polarised_direction`);
* three-body: a Dalitz point (:func:`threebody.dalitz_1`, flat or with a matrix element),
  momenta in the decay plane (:func:`threebody.momenta3_1`), the plane oriented by an
  isotropic direction and a uniform azimuth;
* boosts by the LLP (:func:`lorentz.boost_rest_1`).

Used for (a) a user channel with a built-in process: the production kernel runs with a
gamma gamma stand-in of the LLP's spin, whose decay point is kept, and this kernel draws
the daughters (``draw_point`` False); (b) a user process (any channel): the process fills the
production rows and this kernel draws c*tau (of a mixture), the decay point and the
daughters (``draw_point`` True).  Draws continue the block's generator stream after the
production's, event by event.
"""

import numpy as np
from numba import njit

from toymc.physics import layout as L
from toymc.physics.channels import MATRIX_ELEMENTS, TWO_BODY
from toymc.physics.constants import M_PI0
from toymc.physics.decays import circle_1, helicity_local_1, iso_1, polarised_direction
from toymc.physics.kinematics.lorentz import boost_rest_1, frame_rotate_1
from toymc.physics.kinematics.threebody import dalitz_1, momenta3_1

__all__ = ("decay",)

_ANGULAR = {"fermion": 0, "scalar": 1, "isotropic": 2}


@njit(inline="always", cache=True)
def _put(D, k, i, d, p, dx, dy, dz):
    j = i * k + d
    D[0, j], D[1, j], D[2, j], D[3, j] = p[0], p[1], p[2], p[3]
    D[4, j], D[5, j], D[6, j] = dx, dy, dz


@njit(cache=True)
def _kernel(rng, n, three, ang, pol, M, ctaus, md, me_code, me_par, pi0, mpi0, ref,
            draw_point, E, D, k, counter):
    """Decay the LLPs of n events whose four-momenta and production points are in E."""
    im = 1.0 / M
    m1, m2, m3 = md[0], md[1], md[2]
    e1 = (M * M + m1 * m1 - m2 * m2) * 0.5 * im
    lam = (M * M - (m1 + m2) ** 2) * (M * M - (m1 - m2) ** 2)
    q2 = np.sqrt(max(lam, 0.0)) * 0.5 * im
    betaf2 = max(0.0, 1.0 - 4.0 * m1 * m1 * im * im)
    scalar = ang == 1
    nd = 3 if three else 2
    for i in range(n):
        px, py, pz, e = E[L.LLP_PX, i], E[L.LLP_PY, i], E[L.LLP_PZ, i], E[L.LLP_E, i]
        if draw_point:
            ctau = L.pick_ctau(rng, counter, ctaus)
            ct = rng.standard_exponential() * ctau
            counter[2] += 1
            dx = E[L.LLP_VX, i] + px * im * ct
            dy = E[L.LLP_VY, i] + py * im * ct
            dz = E[L.LLP_VZ, i] + pz * im * ct
            E[L.LLP_CTAU, i], E[L.LLP_CT, i] = ctau, ct
            E[L.LLP_L, i] = np.sqrt(px * px + py * py + pz * pz) * im * ct
            E[L.LLP_DX, i], E[L.LLP_DY, i], E[L.LLP_DZ, i] = dx, dy, dz
            E[L.LLP_DR, i] = np.sqrt(dx * dx + dy * dy)
        else:
            dx, dy, dz = E[L.LLP_DX, i], E[L.LLP_DY, i], E[L.LLP_DZ, i]
        f = 1.0 / (e + M)
        if not three:
            if ang == 2 or pol == 0:
                nx, ny, nz = iso_1(rng, counter)
            elif pol == 1:
                # helicity axis: opposite to the parent in the LLP rest frame
                A = boost_rest_1(E[L.PAR_PX, i], E[L.PAR_PY, i], E[L.PAR_PZ, i],
                                 E[L.PAR_E, i], -px, -py, -pz, e, f, im)
                ia = -1.0 / np.sqrt(A[0] * A[0] + A[1] * A[1] + A[2] * A[2])
                lx, ly, lz = helicity_local_1(rng, counter, scalar, betaf2)
                nx, ny, nz = frame_rotate_1(lx, ly, lz, A[0] * ia, A[1] * ia, A[2] * ia)
            else:
                nx, ny, nz = polarised_direction(rng, counter, 2, scalar, betaf2, px / e,
                                                 py / e, pz / e, ref)
            a = boost_rest_1(q2 * nx, q2 * ny, q2 * nz, e1, px, py, pz, e, f, im)
            b = boost_rest_1(-q2 * nx, -q2 * ny, -q2 * nz, M - e1, px, py, pz, e, f, im)
            _put(D, k, i, 0, a, dx, dy, dz)
            _put(D, k, i, 1, b, dx, dy, dz)
        else:
            m12sq, m23sq = dalitz_1(rng, M, m1, m2, m3, me_code, me_par, counter)
            nx, ny, nz = iso_1(rng, counter)
            cp, sp = circle_1(rng, counter)
            p1x, p1z, ea, p2x, p2z, eb, p3z, ec = momenta3_1(M, m1, m2, m3, m12sq, m23sq)
            r1 = frame_rotate_1(p1x * cp, p1x * sp, p1z, nx, ny, nz)
            r2 = frame_rotate_1(p2x * cp, p2x * sp, p2z, nx, ny, nz)
            _put(D, k, i, 0, boost_rest_1(r1[0], r1[1], r1[2], ea, px, py, pz, e, f, im),
                 dx, dy, dz)
            _put(D, k, i, 1, boost_rest_1(r2[0], r2[1], r2[2], eb, px, py, pz, e, f, im),
                 dx, dy, dz)
            _put(D, k, i, 2, boost_rest_1(p3z * nx, p3z * ny, p3z * nz, ec, px, py, pz, e, f,
                                          im), dx, dy, dz)
        for j in range(pi0.shape[0]):
            s = i * k + pi0[j]
            qx, qy, qz, qe = D[0, s], D[1, s], D[2, s], D[3, s]
            gx, gy, gz = iso_1(rng, counter)
            h = 0.5 * mpi0
            fp, ip = 1.0 / (qe + mpi0), 1.0 / mpi0
            _put(D, k, i, nd + 2 * j, boost_rest_1(h * gx, h * gy, h * gz, h, qx, qy, qz, qe,
                                                   fp, ip), dx, dy, dz)
            _put(D, k, i, nd + 2 * j + 1, boost_rest_1(-h * gx, -h * gy, -h * gz, h, qx, qy,
                                                       qz, qe, fp, ip), dx, dy, dz)


def decay(rng, n, mass, ctaus, channel, pol, matrix_element, ref, draw_point, E, counter):
    """Daughters (layout rows ``DAU_FLOAT`` x n * channel.k) of the LLPs in E.

    Parameters
    ----------
    rng : numpy.random.Generator
    mass : float
        LLP mass (GeV).
    ctaus : float64 array
        c*tau values (cm; one, or a mixture), used when ``draw_point``.
    channel : toymc.physics.channels.Channel
    pol : int
        Polarisation code of a spin-1 LLP (0 for spin 0).
    matrix_element : str
        ``llp.matrix_element`` (three-body channels).
    ref : float64[8]
        Lab four-momenta of the e- and e+ beams (pol 2).
    draw_point : bool
        Draw c*tau and the decay point (True: a user process filled only the production
        rows) or read them from E (False).
    E : float64 array (rows of layout.EVENT_FLOAT, n)
        Per-event rows; the decay rows are filled when ``draw_point``.
    counter : int64[3]
        Draw counts, incremented.
    """
    three = channel.family != TWO_BODY
    md = np.zeros(3)
    md[:len(channel.final_masses)] = channel.final_masses
    me = MATRIX_ELEMENTS[matrix_element]
    D = np.empty((len(L.DAU_FLOAT), n * channel.k))
    _kernel(rng, n, three, _ANGULAR[channel.angular], int(pol if channel.spin == 1 else 0),
            float(mass), np.atleast_1d(np.asarray(ctaus, dtype=np.float64)), md, me,
            md[0] * md[0], np.asarray(channel.pi0_slots, dtype=np.int64), M_PI0,
            np.asarray(ref, dtype=np.float64), bool(draw_point), E, D, channel.k, counter)
    return D
