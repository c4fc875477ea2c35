"""The ntuple column table: name, unit and meaning of every column toymc writes.

One table serves the README, the metadata stored in each file and the
reader.  Jagged groups are stored with a counter branch ``n<group>``
(e.g. ``ndau``) and one branch per field, ``<group>_<field>``.  Columns are
64-bit floats except those in :data:`INT_COLUMNS` (32-bit integers) and
:data:`BOOL_COLUMNS`; :func:`branch_type` gives the stored type, which
:mod:`toymc.io.verify` checks in every file before it is read.
"""

__all__ = ("BOOL_COLUMNS", "INT_COLUMNS", "TRUTH_COLUMNS", "all_columns", "branch_type",
           "groups", "markdown")

TRUTH_COLUMNS = (
    ("pv_x", "cm", "primary vertex x (luminous region)"),
    ("pv_y", "cm", "primary vertex y"),
    ("pv_z", "cm", "primary vertex z"),
    ("par_pdg", "", "PDG id of the LLP's parent (B+, B0, their antiparticles; 0 for e+e- -> gamma V)"),
    ("par_q", "e", "parent charge"),
    ("par_px", "GeV", "parent momentum x (lab); the e+e- total for radiative production"),
    ("par_py", "GeV", "parent momentum y"),
    ("par_pz", "GeV", "parent momentum z"),
    ("par_e", "GeV", "parent energy"),
    ("par_ct", "cm", "parent proper decay length c*t (0 for radiative)"),
    ("rcl_pdg", "", "PDG id of the particle recoiling against the LLP (K, K*(892), or the photon)"),
    ("rcl_q", "e", "recoil charge"),
    ("rcl_px", "GeV", "recoil momentum x (lab)"),
    ("rcl_py", "GeV", "recoil momentum y"),
    ("rcl_pz", "GeV", "recoil momentum z"),
    ("rcl_e", "GeV", "recoil energy"),
    ("llp_pdg", "", "PDG id written for the LLP"),
    ("llp_m", "GeV", "LLP mass"),
    ("llp_ctau", "cm", "proper decay length c*tau the sample was generated with"),
    ("llp_px", "GeV", "LLP momentum x (lab)"),
    ("llp_py", "GeV", "LLP momentum y"),
    ("llp_pz", "GeV", "LLP momentum z"),
    ("llp_e", "GeV", "LLP energy"),
    ("llp_vx", "cm", "LLP production vertex x (the B decay point, or the primary vertex)"),
    ("llp_vy", "cm", "LLP production vertex y"),
    ("llp_vz", "cm", "LLP production vertex z"),
    ("llp_dx", "cm", "LLP decay vertex x"),
    ("llp_dy", "cm", "LLP decay vertex y"),
    ("llp_dz", "cm", "LLP decay vertex z"),
    ("llp_dr", "cm", "transverse radius of the LLP decay vertex, sqrt(dx^2 + dy^2)"),
    ("llp_ct", "cm", "proper decay length c*t of this LLP"),
    ("llp_l", "cm", "lab decay length, beta*gamma*c*t"),
    ("w_gen", "", "generator weight (1: unweighted events)"),
    ("ndau", "", "number of stored LLP decay products"),
    ("dau_pdg", "", "decay product PDG id"),
    ("dau_q", "e", "decay product charge"),
    ("dau_status", "", "1: final state; 2: decayed further (pi0 -> gamma gamma)"),
    ("dau_mother", "", "index of the mother in this event's dau list; -1: the LLP"),
    ("dau_px", "GeV", "decay product momentum x (lab)"),
    ("dau_py", "GeV", "decay product momentum y"),
    ("dau_pz", "GeV", "decay product momentum z"),
    ("dau_e", "GeV", "decay product energy"),
    ("dau_vx", "cm", "decay product origin x"),
    ("dau_vy", "cm", "decay product origin y"),
    ("dau_vz", "cm", "decay product origin z"),
    ("nrcld", "", "number of recoil decay products (2 for K* -> K pi, else 0)"),
    ("rcld_pdg", "", "recoil decay product PDG id (K0 stored as 311)"),
    ("rcld_q", "e", "recoil decay product charge"),
    ("rcld_px", "GeV", "recoil decay product momentum x (lab)"),
    ("rcld_py", "GeV", "recoil decay product momentum y"),
    ("rcld_pz", "GeV", "recoil decay product momentum z"),
    ("rcld_e", "GeV", "recoil decay product energy"),
)


#: columns stored as 32-bit integers (group fields: per entry); every other column not in
#: BOOL_COLUMNS is a 64-bit float.  Counters ``n<group>`` are 32-bit integers too.
INT_COLUMNS = frozenset((
    "par_pdg", "par_q", "rcl_pdg", "rcl_q", "llp_pdg", "ndau", "dau_pdg", "dau_q", "dau_status",
    "dau_mother", "nrcld", "rcld_pdg", "rcld_q",
    # detector response
    "ntrk", "nclu", "trk_hits", "trk_q", "trk_dau", "clu_dau", "rec_ntrk", "rec_nclu",
))
#: columns stored as booleans
BOOL_COLUMNS = frozenset(("trk_found", "clu_found", "vtx_found", "cut_tracks", "cut_fiducial",
                          "cut_vertex", "cut_photons", "cut_mass"))

#: ROOT type names of the three storage kinds (as uproot reports them)
_TYPENAMES = {"int": "int32_t", "bool": "bool", "float": "double"}


def groups(names):
    """``{group: [field names]}`` of a list of column names: a group ``g`` has the counter
    ``n<g>`` and at least one field ``<g>_<field>``."""
    names = list(names)
    out = {}
    for n in names:
        if n.startswith("n") and len(n) > 1:
            fields = [c[len(n):] for c in names if c.startswith(n[1:] + "_")]
            if fields:
                out[n[1:]] = fields
    return out


def branch_type(name, jagged=False):
    """The ROOT type name (uproot's ``typename``) toymc writes for column `name`:
    ``int32_t``, ``bool`` or ``double``, with ``[]`` appended for a group field."""
    kind = "int" if name in INT_COLUMNS else "bool" if name in BOOL_COLUMNS else "float"
    return _TYPENAMES[kind] + ("[]" if jagged else "")


def all_columns(with_reco=True):
    """The full table: truth columns, then the detector's columns if asked."""
    cols = list(TRUTH_COLUMNS)
    if with_reco:
        try:
            from toymc.detector.response import RECO_COLUMNS
        except ImportError:
            RECO_COLUMNS = ()
        cols += list(RECO_COLUMNS)
        cols.append(("w_fold", "", "with run.decay_weights: probability that this event's LLP "
                     "decays inside the window and passes the profile (analytic fold, true "
                     "kinematics)"))
    return tuple(cols)


def markdown(columns=None):
    """Markdown table of `columns` (default: all)."""
    rows = ["| column | unit | meaning |", "|---|---|---|"]
    for name, unit, meaning in columns or all_columns():
        rows.append(f"| `{name}` | {unit} | {meaning} |")
    return "\n".join(rows)

