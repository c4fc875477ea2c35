"""Geometry of the parametric cylindrical detector, and the [selection] section.

A geometry is a set of frozen dataclasses, loaded once from TOML and
validated there; kernels never see these objects, only the flat arrays
returned by :meth:`Geometry.tracking_layers` and plain numbers.

Units: lengths in cm, field in tesla, energies in GeV, angles in rad,
material thickness as a fraction of a radiation length ``x/X0``.  Every
length, field, energy or angle in a TOML file may be a plain number (in the
internal unit) or a string such as ``"15 mm"``, ``"1.5 T"``, ``"20 deg"``
(parsed by :func:`toymc.config.units.parse_quantity`).

Calorimeter energy resolution
-----------------------------
``sigma_E / E = a / sqrt(E) (+) b / E (+) c`` with ``(+)`` addition in
quadrature and E in GeV: ``a`` is the stochastic term (GeV^1/2, key
``stochastic``), ``b`` the noise term (GeV, key ``noise``), ``c`` the
constant term (dimensionless, key ``constant``).  The three-term
quadrature form is the parametrisation of the PDG review "Calorimetry"
(section on electromagnetic calorimeters).  The letter assignment is from
memory and could not be checked against the review's text: texts differ in
which letter goes with the 1/E and the constant term (a/sqrt(E) (+) b/E (+) c
versus a/sqrt(E) (+) b (+) c/E).  The TOML keys are therefore named after the
terms, not the letters, so a geometry file means the same under either
convention.

TOML layout (see ``geometries/demo.toml``)::

    name = "toy-barrel-1"
    field = "1.5 T"
    [beampipe]       radius, thickness
    [[vertex_layers]] radius, z_min, z_max, resolution, thickness
    [chamber]        r_inner, r_outer, z_min, z_max, resolution,
                     layer_thickness, inner_wall, outer_wall, and either
                     radii = [...] or n_layers, r_first, r_last
    [calorimeter]    radius, z_min, z_max, stochastic, noise, constant,
                     position_resolution
    [calorimeter.forward] / [calorimeter.backward]   z, r_inner, r_outer
    [acceptance]     tracker_theta_min, tracker_theta_max,
                     calo_theta_min, calo_theta_max   (optional)

The file and the [selection] section of a run config are read and validated by
:mod:`toymc.config.geometry` (keys, units and ranges in :mod:`toymc.config.schema`), which
builds these dataclasses.
"""

import math as _math
from dataclasses import dataclass
from dataclasses import field as _field

import numpy as _np

from toymc.detector.profile import Profile as _Profile

__all__ = (
    "Acceptance",
    "Calorimeter",
    "DriftChamber",
    "Endcap",
    "Geometry",
    "Selection",
    "VertexLayer",
)


@dataclass(frozen=True)
class VertexLayer:
    """A thin cylindrical measuring layer close to the beam.

    Attributes
    ----------
    radius, z_min, z_max : float
        Radius and z extent in cm.
    resolution : float
        Point resolution in cm (same in r-phi and z).
    thickness : float
        Material as a fraction of a radiation length, x/X0, at normal incidence.
    """

    radius: float
    z_min: float
    z_max: float
    resolution: float
    thickness: float


@dataclass(frozen=True)
class DriftChamber:
    """Cylindrical gas tracker with concentric sense layers.

    Attributes
    ----------
    r_inner, r_outer, z_min, z_max : float
        Volume in cm; z need not be symmetric about 0.
    radii : tuple of float
        Sense-layer radii in cm, increasing, inside (r_inner, r_outer).
    resolution : float
        Hit resolution in cm.
    layer_thickness : float
        x/X0 of gas and wires per sense layer.
    inner_wall, outer_wall : float
        x/X0 of the inner and outer cylinder walls.
    """

    r_inner: float
    r_outer: float
    z_min: float
    z_max: float
    radii: tuple
    resolution: float
    layer_thickness: float
    inner_wall: float
    outer_wall: float


@dataclass(frozen=True)
class Endcap:
    """Flat calorimeter endcap: a disk at ``z`` (cm) from ``r_inner`` to ``r_outer`` (cm)."""

    z: float
    r_inner: float
    r_outer: float


@dataclass(frozen=True)
class Calorimeter:
    """Calorimeter front face: a barrel cylinder and two endcap disks.

    Attributes
    ----------
    radius, z_min, z_max : float
        Barrel face radius and z extent (cm).
    forward, backward : Endcap
        Disks at z > 0 and z < 0.
    stochastic : float
        a in sigma_E/E = a/sqrt(E) (+) b/E (+) c, GeV^1/2.
    noise : float
        b, GeV.
    constant : float
        c, dimensionless.
    position_resolution : float
        Cluster position resolution on the face, cm, per coordinate.
    """

    radius: float
    z_min: float
    z_max: float
    forward: Endcap
    backward: Endcap
    stochastic: float
    noise: float
    constant: float
    position_resolution: float


@dataclass(frozen=True)
class Acceptance:
    """Polar-angle acceptance (rad) of the tracker and of the calorimeter."""

    tracker_theta_min: float = 0.0
    tracker_theta_max: float = _math.pi
    calo_theta_min: float = 0.0
    calo_theta_max: float = _math.pi


@dataclass(frozen=True)
class Geometry:
    """A complete detector geometry (cm, T, GeV, rad, x/X0)."""

    name: str
    field: float
    beampipe_radius: float
    beampipe_thickness: float
    vertex_layers: tuple
    chamber: DriftChamber
    calorimeter: Calorimeter
    acceptance: Acceptance = _field(default_factory=Acceptance)

    def tracking_layers(self):
        """All cylinders a track may cross, sorted by radius, as flat arrays.

        Returns
        -------
        dict of numpy.ndarray
            ``radius, z_min, z_max`` (cm), ``resolution`` (cm, 0 for a
            passive cylinder), ``thickness`` (x/X0 at normal incidence) and
            ``measuring`` (int32, 1 for vertex layers and sense layers).
            Passive cylinders: the beam pipe and the two chamber walls (both
            with the chamber's z extent).
        """
        ch = self.chamber
        rows = [(self.beampipe_radius, ch.z_min, ch.z_max, 0.0, self.beampipe_thickness, 0)]
        for lay in self.vertex_layers:
            rows.append((lay.radius, lay.z_min, lay.z_max, lay.resolution, lay.thickness, 1))
        rows.append((ch.r_inner, ch.z_min, ch.z_max, 0.0, ch.inner_wall, 0))
        for r in ch.radii:
            rows.append((r, ch.z_min, ch.z_max, ch.resolution, ch.layer_thickness, 1))
        rows.append((ch.r_outer, ch.z_min, ch.z_max, 0.0, ch.outer_wall, 0))
        rows.sort(key=lambda t: t[0])
        arr = _np.array(rows, dtype=_np.float64)
        return {
            "radius": arr[:, 0].copy(),
            "z_min": arr[:, 1].copy(),
            "z_max": arr[:, 2].copy(),
            "resolution": arr[:, 3].copy(),
            "thickness": arr[:, 4].copy(),
            "measuring": arr[:, 5].astype(_np.int32),
        }

    @property
    def n_measuring_layers(self):
        """Number of measuring layers (vertex layers + sense layers)."""
        return len(self.vertex_layers) + len(self.chamber.radii)


# ----------------------------------------------------------------------------- selection


@dataclass(frozen=True)
class Selection:
    """Reconstruction and selection cuts of a run ([selection] section).

    Attributes
    ----------
    r_min, r_max, z_min, z_max : float
        Fiducial window for the reconstructed vertex, cm.
    profile : toymc.detector.profile.Profile
        Vertex efficiency profile.
    min_hits : int
        Minimum number of measured hits for a found track (>= 3).
    min_pt : float
        Minimum transverse momentum of a found track, GeV.
    photon_min_e : float
        Minimum reconstructed cluster energy, GeV.
    mass_window : tuple of float or None
        (low, high) reconstructed-mass window in GeV, or None for no cut.
    full_hits : int
        Hit count at which a track counts as fully efficient ("hits" profile).
    """

    r_min: float
    r_max: float
    z_min: float
    z_max: float
    profile: _Profile
    min_hits: int = 6
    min_pt: float = 0.05
    photon_min_e: float = 0.03
    mass_window: tuple = None
    full_hits: int = 20
