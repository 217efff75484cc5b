"""GeoPackages of a draft section: in section space, georeferenced in 3D, and read back.

``section.gpkg`` (:func:`write_section_gpkg`) holds the section in *section space*:
x = distance along the section line in metres (cumulative over bends), y =
elevation in metres. That plane has no geographic CRS, so its layers are written
without one (a GIS shows them as a plain metric drawing). Layers:

- ``profile``: the ground line (one LineString per stretch with elevations),
  fields ``section``, ``start_m``, ``end_m``, and the draft's ``method``, ``ve``,
  ``base_elevation_m`` and the DEM's ``pixel_size_m`` (read back by
  :func:`read_section_gpkg`; kept in a layer rather than as file metadata, which
  GDAL would mirror into a side-car file on reading);
- ``profile_points``: every profile sample, fields ``distance_m``, ``elevation_m``,
  ``x``, ``y`` (map coordinates in the project CRS);
- ``surface_geology``: the unit at the ground, LineStrings along the ground, fields
  ``unit``, ``start_m``, ``end_m``;
- ``contacts``: map contacts on the ground, points, fields ``distance_m``,
  ``elevation_m``, ``unit_before``, ``unit_after``;
- ``fault_crossings``: mapped faults on the ground, points, fields ``distance_m``,
  ``elevation_m``, ``dip``, ``dip_direction``, ``apparent_dip``, ``sense``, ``name``;
- ``dips``: projected attitudes, points, fields ``id``, ``apparent_dip``, ``strike``,
  ``dip``, ``offset_m``, ``poorly_constrained``, ``overturned``, ``distance_m``,
  ``elevation_m``, ``x``, ``y``;
- ``horizons``: LineStrings, fields ``top_of`` (the unit whose top it is),
  ``above_ground`` (true for the projected part above the ground), ``block``;
- ``faults``: LineStrings, one per fault, fields ``name``, ``dip``, ``dip_direction``,
  ``apparent_dip``, ``sense``, ``separations`` (JSON text: top_of -> metres),
  ``segments`` (JSON text: the trace's segments from the ground down as
  ``[kind, metres along the fault]``, kind ``ramp``, ``bend`` or ``flat``; optional on
  reading);
- ``units``: polygons, fields ``unit``, ``block``; the veneers of cover units and the
  intrusive bodies come after the layered units, which they overlie
  (:mod:`mapsection.construct.cover`);
- ``axial_surfaces``: LineStrings, fields ``ground_distance_m``, ``dip_left``,
  ``dip_right``;
- ``dip_domains``: the ground over each dip domain, LineStrings, fields ``start_m``,
  ``end_m``, ``dip``, ``n_dips``, ``block`` (read back so that the checks choose the same
  default pin line for an edited file as for the build);
- any ``extra_layers`` given; the checks' outputs add ``restored_horizons`` and
  ``restored_units`` (:func:`restoration_frames`, :func:`add_layers`).

``section_3d.gpkg`` (:func:`write_section_3d`) holds the ground, the horizons and
the faults as LineString Z in the project CRS, so the section stands in place in a
3D view. :func:`read_section_gpkg` reads a (possibly hand-edited) section.gpkg back
into a :class:`~mapsection.draft.Draft` with ``method="edited"``.

Example::

    from mapsection.export import write_section_gpkg, read_section_gpkg
    write_section_gpkg(draft, "out/A/section.gpkg")
    edited = read_section_gpkg("out/A/section.gpkg", draft.column, draft.line)

The package's modules: :mod:`.layers` (the layers as GeoDataFrames), :mod:`.write`
(writing them) and :mod:`.read` (reading a section back).
"""

from .layers import ERODED_LAYER, LAYERS, UNCONFORMITY_LAYER, restoration_frames, section_frames
from .read import read_section_gpkg, section_info
from .write import (
    add_layers,
    section_3d_frames,
    to_map_3d,
    write_section_3d,
    write_section_gpkg,
)

__all__ = ["ERODED_LAYER", "LAYERS", "UNCONFORMITY_LAYER", "add_layers", "read_section_gpkg",
           "restoration_frames", "section_3d_frames", "section_frames", "section_info",
           "to_map_3d", "write_section_3d", "write_section_gpkg"]
