"""Detector response of a truth block: tracks, clusters, vertex, mass, cutflow.

:func:`respond` adds reconstructed columns to a truth
:class:`toymc.engine.block.Block` in place.  Group columns are stored without the
group prefix (``block.groups['trk'][1]['px']``); the ntuple name is
``<group>_<column>`` (``trk_px``).  :data:`RECO_COLUMNS` lists every added
column with its unit and meaning.

Reconstructed LLP
-----------------
``rec_m`` and ``rec_p`` are the invariant mass and momentum of the sum of all
FOUND status-1 daughters: tracks with the true particle's PDG mass as mass
hypothesis (``toymc.physics.constants.mass``) and photon clusters (massless, direction
from the nominal interaction point).  They are filled for every event, also
where a daughter is missing (then they are low); the cutflow says whether the
event is complete.

Cutflow (each flag includes the previous ones)
----------------------------------------------
``cut_tracks``    every charged status-1 daughter is a found track, with at
                  least one of each charge (true for photon-only decays)
``cut_fiducial``  reconstructed vertex inside the selection's window (photon-only
                  decays: the true decay point, see below)
``cut_vertex``    vertex accepted by the efficiency profile (random flag)
``cut_photons``   every status-1 photon gives a found cluster
``cut_mass``      ``rec_m`` inside the mass window (= cut_photons without one)

An all-photon final state (a -> gamma gamma, 3 pi0) has no tracks, so the
tracker cannot measure its vertex: the fiducial window and the profile are
applied to the TRUE decay point (a stand-in for a calorimeter-pointing or
timing estimate of the decay position, which this toy does not model), the
vertex columns stay NaN, and the photons must all be found as clusters.
"""

import math as _math

import numpy as _np
from numba import njit as _njit

from toymc.detector.calorimeter import _cluster_block
from toymc.detector.tracking import _track_block
from toymc.detector.vertexing import _vertex_block
from toymc.detector.vertexing import profile_efficiency as _profile_efficiency
from toymc.physics.constants import mass as _pdg_mass

__all__ = ("CUT_STEPS", "RECO_COLUMNS", "cutflow", "respond")

#: cutflow steps, in order; column ``cut_<step>``
CUT_STEPS = ("tracks", "fiducial", "vertex", "photons", "mass")

#: (name, unit, meaning) of every column added by :func:`respond`
RECO_COLUMNS = (
    ("ntrk", "", "number of charged status-1 daughters (entries of the trk group)"),
    ("nclu", "", "number of status-1 photons (entries of the clu group)"),
    ("trk_px", "GeV", "reconstructed track momentum x at its origin (NaN with < 3 hits)"),
    ("trk_py", "GeV", "reconstructed track momentum y"),
    ("trk_pz", "GeV", "reconstructed track momentum z"),
    ("trk_hits", "", "measured hits (vertex layers + drift-chamber sense layers crossed)"),
    ("trk_found", "", "track found: hits >= min_hits, true pT >= min_pt, in polar acceptance"),
    ("trk_q", "e", "track charge (true)"),
    ("trk_dau", "", "index of the truth daughter in the event's dau list"),
    ("trk_spt", "", "relative transverse-momentum resolution sigma(pT)/pT used in smearing (NaN with < 3 hits)"),
    ("trk_sphi", "rad", "azimuth resolution at the origin used in smearing (NaN with < 3 hits)"),
    ("trk_slam", "rad", "dip-angle resolution at the origin used in smearing (NaN with < 3 hits)"),
    ("clu_e", "GeV", "smeared cluster energy (0 if the photon misses the face)"),
    ("clu_x", "cm", "cluster position x on the calorimeter face (NaN if missed)"),
    ("clu_y", "cm", "cluster position y"),
    ("clu_z", "cm", "cluster position z"),
    ("clu_found", "", "cluster found: on the face, E >= photon_min_e, in polar acceptance"),
    ("clu_dau", "", "index of the truth photon in the event's dau list"),
    ("vtx_x", "cm", "reconstructed vertex x (NaN without a track pair)"),
    ("vtx_y", "cm", "reconstructed vertex y"),
    ("vtx_z", "cm", "reconstructed vertex z"),
    ("vtx_r", "cm", "reconstructed vertex transverse radius"),
    ("vtx_found", "", "vertex found: pair inside the fiducial window, accepted by the profile"),
    ("vtx_w", "", "vertex efficiency weight: profile value if the pair is in the window, else 0"),
    ("rec_m", "GeV", "invariant mass of all found status-1 daughters"),
    ("rec_p", "GeV", "momentum of the sum of all found status-1 daughters"),
    ("rec_ntrk", "", "number of found tracks"),
    ("rec_nclu", "", "number of found clusters"),
    ("cut_tracks", "", "all charged daughters found, both charges present"),
    ("cut_fiducial", "", "cut_tracks and reconstructed vertex in the fiducial window"),
    ("cut_vertex", "", "cut_fiducial and vertex accepted (vtx_found)"),
    ("cut_photons", "", "cut_vertex and every photon found as a cluster"),
    ("cut_mass", "", "cut_photons and rec_m in the mass window (if any)"),
)


#: PDG id -> mass (GeV), filled on first use
_MASS_CACHE = {}


def _mass_table(ids):
    """Masses (GeV) of the PDG ids, NaN for an id without a PDG mass.

    A NaN is only an error if a found track needs it: :func:`respond` then
    repeats the lookup so that the PDG table's own exception is raised.
    """
    out = _np.empty(len(ids))
    for k, pid in enumerate(ids):
        pid = int(pid)
        if pid not in _MASS_CACHE:
            try:
                _MASS_CACHE[pid] = _pdg_mass(pid)
            except (RuntimeError, TypeError, ValueError):
                out[k] = _np.nan
                continue
        out[k] = _MASS_CACHE[pid]
    return out


@_njit(cache=True, error_model="numpy")
def _candidates(status, q, pdg):
    """Masks of the track candidates (status 1, charged) and of the status-1 photons, and
    the distinct PDG ids of the track candidates in order of appearance (one pass; the
    ids seen so far are few, so a linear search finds them)."""
    nd = status.shape[0]
    is_trk = _np.empty(nd, dtype=_np.bool_)
    is_gam = _np.empty(nd, dtype=_np.bool_)
    ids = _np.empty(8, dtype=_np.int64)
    m = 0
    for i in range(nd):
        trk = status[i] == 1 and q[i] != 0.0
        is_trk[i] = trk
        is_gam[i] = status[i] == 1 and pdg[i] == 22
        if not trk:
            continue
        v = _np.int64(pdg[i])
        k = 0
        while k < m and ids[k] != v:
            k += 1
        if k < m:
            continue
        if m == ids.shape[0]:
            bigger = _np.empty(2 * m, dtype=_np.int64)
            bigger[:m] = ids
            ids = bigger
        ids[m] = v
        m += 1
    return is_trk, is_gam, ids[:m].copy()


@_njit(cache=True, error_model="numpy")
def _gather(counts, is_trk, is_gam, q, px, py, pz, vx, vy, vz):
    """Per-event counts, daughter indices and the tracks' true origin and momentum.

    Returns (n_trk, n_gam, track offsets (n + 1), q as int32 and as float,
    index in the event's dau list of every track and of every cluster, flat
    daughter index of every track, vx, vy, vz, px, py, pz of every track).
    """
    n = counts.shape[0]
    ntr = 0
    ngm = 0
    for i in range(is_trk.shape[0]):
        ntr += is_trk[i]
        ngm += is_gam[i]
    n_trk = _np.zeros(n, dtype=_np.int64)
    n_gam = _np.zeros(n, dtype=_np.int64)
    toff = _np.zeros(n + 1, dtype=_np.int64)
    tq = _np.empty(ntr, dtype=_np.int32)
    tqf = _np.empty(ntr)
    tdau = _np.empty(ntr, dtype=_np.int32)
    tsrc = _np.empty(ntr, dtype=_np.int64)
    cdau = _np.empty(ngm, dtype=_np.int32)
    tvx = _np.empty(ntr)
    tvy = _np.empty(ntr)
    tvz = _np.empty(ntr)
    tpx = _np.empty(ntr)
    tpy = _np.empty(ntr)
    tpz = _np.empty(ntr)
    i = 0
    t = 0
    c = 0
    for ev in range(n):
        for k in range(counts[ev]):
            if is_trk[i]:
                tq[t] = _np.int32(q[i])
                tqf[t] = q[i]
                tdau[t] = k
                tsrc[t] = i
                tvx[t] = vx[i]
                tvy[t] = vy[i]
                tvz[t] = vz[i]
                tpx[t] = px[i]
                tpy[t] = py[i]
                tpz[t] = pz[i]
                t += 1
            if is_gam[i]:
                cdau[c] = k
                c += 1
                n_gam[ev] += 1
            i += 1
        toff[ev + 1] = t
        n_trk[ev] = t - toff[ev]
    return n_trk, n_gam, toff, tq, tqf, tdau, tsrc, cdau, tvx, tvy, tvz, tpx, tpy, tpz


@_njit(cache=True, error_model="numpy")
def _assemble(counts, n_trk, n_gam, pdg, vx, vy, vz, tsrc, found, rpx, rpy, rpz,
              cf, ce, cpx, cpy, cpz, cand, ox, oy, rtrue, oz, mass_ids, mass_val):
    """Window point, true radius of photon-only events, and the reconstructed LLP.

    ``cand`` and ``rtrue`` are updated in place for photon-only events (no
    track, at least one daughter: the window and the profile see the true
    decay point, the origin of the event's first daughter).  Returns (vtx_r,
    window radius, window z, rec_m, rec_p, found tracks, found clusters, index
    of a found track whose mass is unknown or -1).  Per-event sums are taken
    over found tracks, then over found clusters, in their order.
    """
    n = counts.shape[0]
    vr = _np.empty(n)
    wr = _np.empty(n)
    wz = _np.empty(n)
    rec_m = _np.empty(n)
    rec_p = _np.empty(n)
    nt_found = _np.zeros(n, dtype=_np.int32)
    nc_found = _np.zeros(n, dtype=_np.int32)
    bad = -1
    t0 = 0
    c0 = 0
    d0 = 0
    for ev in range(n):
        vr[ev] = _math.sqrt(ox[ev] * ox[ev] + oy[ev] * oy[ev])
        if n_trk[ev] == 0 and counts[ev] > 0:
            cand[ev] = True
            rtrue[ev] = _math.sqrt(vx[d0] * vx[d0] + vy[d0] * vy[d0])
            wr[ev] = rtrue[ev]
            wz[ev] = vz[d0]
        else:
            wr[ev] = vr[ev]
            wz[ev] = oz[ev]
        tx = 0.0
        ty = 0.0
        tz = 0.0
        te = 0.0
        t1 = t0 + n_trk[ev]
        for t in range(t0, t1):
            if found[t]:
                mk = _np.nan
                for u in range(mass_ids.shape[0]):
                    if mass_ids[u] == pdg[tsrc[t]]:
                        mk = mass_val[u]
                        break
                if _math.isnan(mk) and bad < 0:
                    bad = t
                tx += rpx[t]
                ty += rpy[t]
                tz += rpz[t]
                te += _math.sqrt(rpx[t] * rpx[t] + rpy[t] * rpy[t] + rpz[t] * rpz[t] + mk * mk)
                nt_found[ev] += 1
        gx = 0.0
        gy = 0.0
        gz = 0.0
        ge = 0.0
        c1 = c0 + n_gam[ev]
        for c in range(c0, c1):
            if cf[c]:
                gx += cpx[c]
                gy += cpy[c]
                gz += cpz[c]
                ge += ce[c]
                nc_found[ev] += 1
        spx = tx + gx
        spy = ty + gy
        spz = tz + gz
        se = te + ge
        p2 = spx * spx + spy * spy + spz * spz
        m2 = se * se - p2
        rec_m[ev] = 0.0 if m2 < 0.0 else _math.sqrt(m2)  # NaN stays NaN
        rec_p[ev] = _math.sqrt(p2)
        t0 = t1
        c0 = c1
        d0 += counts[ev]
    return vr, wr, wz, rec_m, rec_p, nt_found, nc_found, bad


@_njit(cache=True, error_model="numpy")
def _finish_kernel(cand, wr, wz, eff, u, nc_found, n_gam, rec_m, r_min, r_max, z_min, z_max,
                   use_mass, m_lo, m_hi):
    """Fiducial window, vertex weight and accept flag, and the cumulative cutflow."""
    n = cand.shape[0]
    vtx_w = _np.zeros(n)
    vtx_found = _np.zeros(n, dtype=_np.bool_)
    cut_fid = _np.zeros(n, dtype=_np.bool_)
    cut_vtx = _np.zeros(n, dtype=_np.bool_)
    cut_pho = _np.zeros(n, dtype=_np.bool_)
    cut_mass = _np.zeros(n, dtype=_np.bool_)
    for ev in range(n):
        in_win = (cand[ev] and wr[ev] >= r_min and wr[ev] <= r_max and wz[ev] >= z_min
                  and wz[ev] <= z_max)
        if not in_win:
            continue
        vtx_w[ev] = eff[ev]
        ok = u[ev] < eff[ev]
        vtx_found[ev] = ok
        cut_fid[ev] = True
        if not ok:
            continue
        cut_vtx[ev] = True
        if nc_found[ev] != n_gam[ev]:
            continue
        cut_pho[ev] = True
        cut_mass[ev] = (not use_mass) or (rec_m[ev] >= m_lo and rec_m[ev] <= m_hi)
    return vtx_w, vtx_found, cut_fid, cut_vtx, cut_pho, cut_mass


def respond(block, geometry, selection, rng, counter=None):
    """Add the detector response to a truth block (in place).

    Parameters
    ----------
    block : toymc.engine.block.Block
        Truth block with group ``dau`` (pdg, q, status, mother, px, py, pz, e,
        vx, vy, vz).
    geometry : toymc.detector.geometry.Geometry
    selection : toymc.detector.geometry.Selection
    rng : numpy.random.Generator
        Consumed in a fixed order, so that the same generator state gives the
        same output: normal numbers for all tracks (3 per track with at least
        3 hits: curvature, azimuth, dip; daughter order), then all clusters
        (3 per photon on the calorimeter face: energy, then two position
        coordinates), then all vertex candidates (4 per event with a track
        pair: two transverse offsets, two z), then one uniform per event
        (vertex accept flag).
    counter : numpy.ndarray of int64, optional
        Length >= 2; if given, ``counter[0]`` is incremented by the number of
        uniform and ``counter[1]`` by the number of normal random numbers
        drawn in this call.

    Returns
    -------
    None
        Adds groups ``trk`` and ``clu`` and the event columns of
        :data:`RECO_COLUMNS`.
    """
    n = block.n
    counts, dau = block.groups["dau"]
    counts = _np.ascontiguousarray(counts, dtype=_np.int64)
    status = _np.ascontiguousarray(dau["status"])
    pdg = _np.ascontiguousarray(dau["pdg"])
    qd = _np.ascontiguousarray(dau["q"], dtype=_np.float64)
    cols = [_np.ascontiguousarray(dau[k], dtype=_np.float64)
            for k in ("px", "py", "pz", "e", "vx", "vy", "vz")]
    is_trk, is_gam, ids = _candidates(status, qd, pdg)
    masses = _mass_table(ids)
    lay = geometry.tracking_layers()
    acc = geometry.acceptance
    cal = geometry.calorimeter
    sel = selection
    px, py, pz, e, vx, vy, vz = cols
    # the three kernels are called from here (not from one numba kernel): numba's cache
    # tracks each kernel's own file only
    hits, found, rpx, rpy, rpz, spt, sphi, slam, s1, res1, nn_t = _track_block(
        is_trk, qd, px, py, pz, e, vx, vy, vz,
        lay["radius"], lay["z_min"], lay["z_max"], lay["resolution"], lay["thickness"],
        lay["measuring"], float(geometry.field), float(acc.tracker_theta_min),
        float(acc.tracker_theta_max), int(sel.min_hits), float(sel.min_pt), rng)
    ce, cx, cy, cz, cf, cpx, cpy, cpz, nn_c = _cluster_block(
        is_gam, px, py, pz, e, vx, vy, vz,
        float(cal.radius), float(cal.z_min), float(cal.z_max),
        float(cal.forward.z), float(cal.forward.r_inner), float(cal.forward.r_outer),
        float(cal.backward.z), float(cal.backward.r_inner), float(cal.backward.r_outer),
        float(cal.stochastic), float(cal.noise), float(cal.constant),
        float(cal.position_resolution), float(acc.calo_theta_min), float(acc.calo_theta_max),
        float(sel.photon_min_e), rng)
    (n_trk, n_gam, toff, tq, tqf, tdau, tsrc, cdau,
     tvx, tvy, tvz, tpx, tpy, tpz) = _gather(counts, is_trk, is_gam, qd, px, py, pz, vx, vy, vz)
    cand, ox, oy, oz, rtrue, h1, h2, nn_v = _vertex_block(
        toff, tqf, found, hits, tvx, tvy, tvz, tpx, tpy, tpz, s1, res1, sphi, slam, rng)
    n_norm = nn_t + nn_c + nn_v
    vr, wr, wz, rec_m, rec_p, nt_found, nc_found, bad = _assemble(
        counts, n_trk, n_gam, pdg, vx, vy, vz, tsrc, found, rpx, rpy, rpz,
        cf, ce, cpx, cpy, cpz, cand, ox, oy, rtrue, oz, ids, masses)
    if bad >= 0:  # a found track of a particle without a PDG mass: let the lookup say why
        _pdg_mass(int(pdg[tsrc[bad]]))
    block.add_group("trk", n_trk, {
        "px": rpx, "py": rpy, "pz": rpz, "hits": hits, "found": found,
        "q": tq, "dau": tdau, "spt": spt, "sphi": sphi, "slam": slam,
    })
    block.add_group("clu", n_gam, {
        "e": ce, "x": cx, "y": cy, "z": cz, "found": cf, "dau": cdau,
    })
    eff = _profile_efficiency(sel.profile, rtrue, h1, h2, sel.full_hits)
    u = rng.random(n)
    if counter is not None:
        counter[0] += n
        counter[1] += n_norm
    lo, hi = sel.mass_window if sel.mass_window is not None else (0.0, 0.0)
    vtx_w, vtx_found, cut_fiducial, cut_vertex, cut_photons, cut_mass = _finish_kernel(
        cand, wr, wz, eff, u, nc_found, n_gam, rec_m, float(sel.r_min), float(sel.r_max),
        float(sel.z_min), float(sel.z_max), sel.mass_window is not None, float(lo), float(hi))
    block.event.update({
        "vtx_x": ox, "vtx_y": oy, "vtx_z": oz, "vtx_r": vr,
        "vtx_found": vtx_found, "vtx_w": vtx_w,
        "rec_m": rec_m, "rec_p": rec_p,
        "rec_ntrk": nt_found, "rec_nclu": nc_found,
        "cut_tracks": cand, "cut_fiducial": cut_fiducial, "cut_vertex": cut_vertex,
        "cut_photons": cut_photons, "cut_mass": cut_mass,
    })


def cutflow(event_columns):
    """Events passing each cutflow step, with step efficiencies.

    Parameters
    ----------
    event_columns : dict
        Per-event columns containing ``cut_<step>`` booleans (cumulative, as
        written by :func:`respond`).

    Returns
    -------
    list of tuple
        ``(step, n_pass, eff, err)`` for each step present, in the order of
        :data:`CUT_STEPS`; ``eff = n_pass / n_previous`` (n_previous = all
        events for the first step) and ``err = sqrt(eff (1 - eff) / n_previous)``
        (binomial).
    """
    steps = [s for s in CUT_STEPS if f"cut_{s}" in event_columns]
    if not steps:
        return []
    n_prev = len(event_columns[f"cut_{steps[0]}"])
    out = []
    for s in steps:
        n_pass = int(_np.count_nonzero(event_columns[f"cut_{s}"]))
        eff = n_pass / n_prev if n_prev else 0.0
        err = _math.sqrt(eff * (1.0 - eff) / n_prev) if n_prev else 0.0
        out.append((s, n_pass, eff, err))
        n_prev = n_pass
    return out
