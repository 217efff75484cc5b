"""Unit thicknesses measured from the map: mapped contacts on the DEM, fitted by planes.

A geologic contact is a surface. Where it meets the ground its trace on the map,
with each point's elevation taken from the DEM, is a set of 3D points on that
surface. Three such points fix the plane of a planar contact (the three-point
problem); many points are fitted here by least squares, as the plane that
minimises the sum of squared perpendicular distances (orthogonal regression: the
normal is the singular vector of the centred points with the smallest singular
value). A unit's thickness is the distance, perpendicular to bedding, between
the planes of its top and base contacts. On level ground this reduces to
thickness from outcrop width, ``t = w sin(d)``, and on ground sloping ``s``
across the strike to ``t = w |sin(d +/- s)|`` (see :func:`outcrop_thickness`).
Both constructions: Ragan, D. M., *Structural Geology: An Introduction to
Geometrical Techniques* (Cambridge University Press), the chapters on the
three-point problem and on thickness and depth of strata.

Folded and faulted ground: one plane does not fit a contact that crosses a
hinge or a fault. Each contact is therefore fitted by several planes:

- *fault blocks*: a point belongs to the side of each mapped fault trace
  (extended straight past its ends to the map's edge) it lies on; a side is
  named the hanging wall where the fault's dip direction points into it. Points
  within two pixels of a fault trace are left out (units juxtaposed across a
  fault are no contact).
- *dip domains*: the bedding attitudes are clustered by orientation (poles
  within ``tolerance`` degrees, average linkage).
- *seeds*: in each block the contact points are grouped by the cluster of their
  nearest attitude, and split into connected stretches that share a plane; and
  for each cluster, the points lying on a plane of the cluster's mean attitude
  are found by a vote over their offsets along its pole (a Hough transform), so
  that a stretch whose nearest attitudes lie across a hinge still finds its limb.
- *k-planes refinement*: each point of a block goes to the plane it lies closest
  to (within three RMS, at least half a pixel) and the planes are refitted,
  three times (the k-planes scheme: Bradley & Mangasarian 2000, J. Global
  Optimization 16). A plane's dip domain is the attitude cluster closest to it
  in orientation; a plane more than ``tolerance`` degrees from every cluster
  (points of two limbs, or a contact bent through a hinge) is left out, and
  planes of one domain that coincide are merged.

Each plane is fitted robustly (points further than three robust standard
deviations, at least half a pixel, are dropped until none changes). A unit's
top and base planes of one block and domain that are each other's nearest face
each other across its outcrop; its thickness is measured between them, then
averaged over such pairs weighted by their uncertainty.

Uncertainty: a moving-block bootstrap (Kunsch 1989, Annals of Statistics 17):
the points of each contact are resampled in runs of ten consecutive points along
the trace (neighbouring points share the same DEM and mapping errors, so single points
are not independent), both planes are refitted and the thickness recomputed, 200
times with a fixed seed; the uncertainty is twice the standard deviation of
those thicknesses (about a 95 % interval). Combined over groups (weights: one
over its square) it is the larger of the weighted mean's own uncertainty and
twice the standard error from the scatter between groups, and at least 1 % of
the thickness (the tool's default: a map's contacts resolve no better).

Where a unit has only one mapped contact (the youngest unit, whose top is the
ground, or the oldest exposed unit) the map gives only a lower bound: the unit's
outcrop reaches that far from its one contact, measured perpendicular to it.

The estimator reads no file: the map, the attitudes and a DEM sampling function
come in loaded (:func:`estimate_column`; :func:`project_estimate` and
:func:`resolve_map_thicknesses` for a project's loaded inputs). The one edge that
reads a project's files is :func:`measure_column`.

The package's modules: :mod:`.results` (the result classes), :mod:`.planes` (plane fits,
closed forms, the tool's defaults), :mod:`.mapped` (contact points, fault blocks, attitude
clusters), :mod:`.groups` (the planes one contact fits), :mod:`.unit` (one unit's
thickness), :mod:`.estimate` (the whole column) and :mod:`.project` (a project's column).
"""

from .estimate import AttitudeIndex, attitude_index, estimate_column
from .groups import ContactGroup
from .mapped import MAX_CLUSTERED, contact_points, fault_blocks, orientation_clusters, sample_lines
from .planes import (
    BOOTSTRAP,
    CHUNK_PIXELS,
    DOMAIN_TOLERANCE,
    MIN_PERCENTILE,
    MIN_POINTS,
    RESOLUTION,
    Elevation,
    Warn,
    fit_plane,
    outcrop_thickness,
    robust_plane,
)
from .project import (
    measure_column,
    project_estimate,
    resolve_map_thicknesses,
    stratigraphy_toml,
    suggestion,
    unit_line,
)
from .results import ColumnEstimate, ContactFit, GroupThickness, Plane, UnitThickness
from .unit import _between  # noqa: F401 - the tests check it against a closed form

__all__ = ["BOOTSTRAP", "CHUNK_PIXELS", "DOMAIN_TOLERANCE", "MAX_CLUSTERED", "MIN_PERCENTILE",
           "MIN_POINTS", "RESOLUTION", "AttitudeIndex", "ColumnEstimate", "ContactFit",
           "ContactGroup", "Elevation", "GroupThickness", "Plane", "UnitThickness", "Warn",
           "attitude_index", "contact_points", "estimate_column", "fault_blocks", "fit_plane",
           "measure_column", "orientation_clusters", "outcrop_thickness", "project_estimate",
           "resolve_map_thicknesses", "robust_plane", "sample_lines", "stratigraphy_toml",
           "suggestion", "unit_line"]
