"""Detector response of a truth block: tracks, clusters, vertex, mass, cutflow.

:func:`respond` adds reconstructed columns to a truth
:class:`toymc.truth.Block` in place.  Group columns are stored without the
group prefix (``block.groups['trk'][1]['px']``); the ntuple name is
``<group>_<column>`` (``trk_px``).  :data:`RECO_COLUMNS` lists every added
column with its unit and meaning.

Reconstructed LLP
-----------------
``rec_m`` and ``rec_p`` are the invariant mass and momentum of the sum of all
FOUND status-1 daughters: tracks with the true particle's PDG mass as mass
hypothesis (``toymc.constants.mass``) and photon clusters (massless, direction
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

from toymc.constants import mass as _pdg_mass
from toymc.detector.calorimeter import cluster_kernel as _cluster_kernel
from toymc.detector.tracking import track_kernel as _track_kernel
from toymc.detector.vertexing import profile_efficiency as _profile_efficiency
from toymc.detector.vertexing import vertex_kernel as _vertex_kernel

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


def _masses(pdg):
    """PDG masses (GeV) for an array of PDG ids, looked up once per distinct id."""
    ids, inv = _np.unique(pdg, return_inverse=True)
    table = _np.array([_pdg_mass(int(i)) for i in ids], dtype=_np.float64)
    return table[inv]


def respond(block, geometry, selection, rng):
    """Add the detector response to a truth block (in place).

    Parameters
    ----------
    block : toymc.truth.Block
        Truth block with group ``dau`` (pdg, q, status, mother, px, py, pz, e,
        vx, vy, vz).
    geometry : toymc.detector.geometry.Geometry
    selection : toymc.detector.geometry.Selection
    rng : numpy.random.Generator
        Consumed in a fixed order (tracks, clusters, vertices, accept flags):
        the same generator state gives the same output.

    Returns
    -------
    None
        Adds groups ``trk`` and ``clu`` and the event columns of
        :data:`RECO_COLUMNS`.
    """
    n = block.n
    counts, dau = block.groups["dau"]
    counts = _np.asarray(counts, dtype=_np.int64)
    off = block.offsets("dau")
    status = _np.asarray(dau["status"])
    pdg = _np.asarray(dau["pdg"])
    qd = _np.asarray(dau["q"], dtype=_np.float64)
    cols = {k: _np.ascontiguousarray(dau[k], dtype=_np.float64)
            for k in ("px", "py", "pz", "e", "vx", "vy", "vz")}
    ev = _np.repeat(_np.arange(n, dtype=_np.int64), counts)
    local = (_np.arange(len(ev), dtype=_np.int64) - off[:-1][ev]).astype(_np.int32)
    is_trk = (status == 1) & (qd != 0.0)
    is_gam = (status == 1) & (pdg == 22)

    # ---------------------------------------------------------------- tracks
    lay = geometry.tracking_layers()
    acc = geometry.acceptance
    hits, found, rpx, rpy, rpz, spt, sphi, slam, s1, res1 = _track_kernel(
        is_trk, qd, cols["px"], cols["py"], cols["pz"], cols["e"],
        cols["vx"], cols["vy"], cols["vz"],
        lay["radius"], lay["z_min"], lay["z_max"], lay["resolution"], lay["thickness"],
        lay["measuring"], float(geometry.field), float(acc.tracker_theta_min),
        float(acc.tracker_theta_max), int(selection.min_hits), float(selection.min_pt), rng)
    ev_t = ev[is_trk]
    q_t = qd[is_trk]
    n_trk = _np.bincount(ev_t, minlength=n)
    block.add_group("trk", n_trk, {
        "px": rpx, "py": rpy, "pz": rpz, "hits": hits, "found": found,
        "q": q_t.astype(_np.int32), "dau": local[is_trk],
        "spt": spt, "sphi": sphi, "slam": slam,
    })

    # -------------------------------------------------------------- clusters
    cal = geometry.calorimeter
    ce, cx, cy, cz, cf, cpx, cpy, cpz = _cluster_kernel(
        is_gam, cols["px"], cols["py"], cols["pz"], cols["e"],
        cols["vx"], cols["vy"], cols["vz"],
        float(cal.radius), float(cal.z_min), float(cal.z_max),
        float(cal.forward.z), float(cal.forward.r_inner), float(cal.forward.r_outer),
        float(cal.backward.z), float(cal.backward.r_inner), float(cal.backward.r_outer),
        float(cal.stochastic), float(cal.noise), float(cal.constant),
        float(cal.position_resolution), float(acc.calo_theta_min), float(acc.calo_theta_max),
        float(selection.photon_min_e), rng)
    ev_g = ev[is_gam]
    n_gam = _np.bincount(ev_g, minlength=n)
    block.add_group("clu", n_gam, {
        "e": ce, "x": cx, "y": cy, "z": cz, "found": cf, "dau": local[is_gam],
    })

    # ---------------------------------------------------------------- vertex
    toff = _np.zeros(n + 1, dtype=_np.int64)
    _np.cumsum(n_trk, out=toff[1:])
    tx, ty, tz = cols["vx"][is_trk], cols["vy"][is_trk], cols["vz"][is_trk]
    tpx, tpy, tpz = cols["px"][is_trk], cols["py"][is_trk], cols["pz"][is_trk]
    cand, vx, vy, vz, rtrue, h1, h2 = _vertex_kernel(
        toff, q_t, found, hits, tx, ty, tz, tpx, tpy, tpz, s1, res1, sphi, slam, rng)
    vr = _np.hypot(vx, vy)
    sel = selection
    # photon-only decays (gamma gamma, 3 pi0): the tracker sees no vertex; the window and
    # the profile apply to the true decay point (the daughters' origin), a stand-in for a
    # calorimeter-pointing or timing estimate; vtx_x, vtx_y, vtx_z, vtx_r stay NaN
    photon_only = (n_trk == 0) & (counts > 0)
    if photon_only.any():
        first = off[:-1][photon_only]
        wx, wy, wz = cols["vx"][first], cols["vy"][first], cols["vz"][first]
        cand = cand | photon_only
        rtrue = rtrue.copy()
        rtrue[photon_only] = _np.hypot(wx, wy)
        wr, wzz = _np.full(n, _np.nan), _np.full(n, _np.nan)
        wr[photon_only], wzz[photon_only] = rtrue[photon_only], wz
    else:
        wr, wzz = vr, vz
    wr = _np.where(photon_only, wr, vr)
    wzz = _np.where(photon_only, wzz, vz)
    with _np.errstate(invalid="ignore"):
        in_win = cand & (wr >= sel.r_min) & (wr <= sel.r_max) & (wzz >= sel.z_min) & (
            wzz <= sel.z_max)
    eff = _profile_efficiency(sel.profile, rtrue, h1, h2, sel.full_hits)
    u = rng.random(n)
    vtx_w = _np.where(in_win, eff, 0.0)
    vtx_found = in_win & (u < eff)

    # ------------------------------------------------------- reconstructed LLP
    ft = found
    m_t = _masses(pdg[is_trk]) if ft.any() else _np.zeros(len(ft))
    e_t = _np.sqrt(_np.where(ft, rpx ** 2 + rpy ** 2 + rpz ** 2 + m_t ** 2, 0.0))
    sums = []
    for comp_t, comp_c in ((rpx, cpx), (rpy, cpy), (rpz, cpz), (e_t, ce)):
        st = _np.bincount(ev_t, weights=_np.where(ft, comp_t, 0.0), minlength=n)
        sc = _np.bincount(ev_g, weights=_np.where(cf, comp_c, 0.0), minlength=n)
        sums.append(st + sc)
    spx, spy, spz, se = sums
    p2 = spx ** 2 + spy ** 2 + spz ** 2
    rec_m = _np.sqrt(_np.maximum(se ** 2 - p2, 0.0))
    rec_p = _np.sqrt(p2)
    ntrk_found = _np.bincount(ev_t, weights=ft.astype(_np.float64), minlength=n)
    nclu_found = _np.bincount(ev_g, weights=cf.astype(_np.float64), minlength=n)

    cut_tracks = cand
    cut_fiducial = cut_tracks & in_win
    cut_vertex = cut_fiducial & vtx_found
    cut_photons = cut_vertex & (nclu_found == n_gam)
    if sel.mass_window is None:
        cut_mass = cut_photons.copy()
    else:
        lo, hi = sel.mass_window
        cut_mass = cut_photons & (rec_m >= lo) & (rec_m <= hi)

    block.event.update({
        "vtx_x": vx, "vtx_y": vy, "vtx_z": vz, "vtx_r": vr,
        "vtx_found": vtx_found, "vtx_w": vtx_w,
        "rec_m": rec_m, "rec_p": rec_p,
        "rec_ntrk": ntrk_found.astype(_np.int32), "rec_nclu": nclu_found.astype(_np.int32),
        "cut_tracks": cut_tracks, "cut_fiducial": cut_fiducial, "cut_vertex": cut_vertex,
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
