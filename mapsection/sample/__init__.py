"""The sample area: an invented foreland fold-thrust belt and its generator.

The Varrow Range scenario (all names invented): a train of parallel kink folds
in a six-unit Devonian-Cretaceous cover, plunging gently north-east, cut by one
thrust (the Kelmby Thrust) that dips toward the hinterland (north-west) and
carries its hanging wall a few hundred metres up-dip toward the foreland.

The model is exact and cylindrical. In the profile plane (perpendicular to the
fold axis) the top of the column is a polyline with straight dip domains; every
deeper horizon is its parallel (constant perpendicular thickness) offset with
mitre joins, which is the kink-band construction: axial surfaces bisect the
limbs, and where two meet at depth one new axial surface continues (Suppe 1985,
Principles of Structural Geology). The hanging wall is the footwall geometry
translated rigidly along the planar fault.

Profile coordinates, from map coordinates (x, y, z) relative to the centre:
``a`` horizontal along the axis trend, ``u`` horizontal toward trend + 90
(toward the foreland), ``v = z cos(p) + a sin(p)`` (up, perpendicular to the
plunging axis). The geometry is independent of the along-axis coordinate.

``generate(folder)`` writes the committed sample area (DEM, map, attitudes,
project files) deterministically from the model and a fixed random seed.
These files are invented data for the demo and self-consistency tests only.

The package's modules: :mod:`.model` (the model), :mod:`.generator` (the DEM, map and
attitudes drawn from it) and :mod:`.files` (the files written).
"""

from .files import (
    FLAWED_FACTOR,
    FLAWED_UNIT,
    generate,
    model_summary,
    polygonal,
    project_text,
    sample_project,
)
from .generator import (  # noqa: F401 - _domain_key, _line_domains: the sample-area tests
    _domain_key,
    _line_domains,
    bilinear,
    dem_surface,
    fault_trace,
    make_attitudes,
    make_dem,
    map_units,
)
from .model import (
    CELL,
    COLUMN,
    CRS,
    DEFAULT_SEED,
    NCOLS,
    NROWS,
    SAMPLE_MODEL,
    SECTIONS,
    SUPERSAMPLE,
    X0,
    Y0,
    SampleModel,
)

__all__ = ["SampleModel", "SAMPLE_MODEL", "SECTIONS", "generate", "DEFAULT_SEED", "bilinear",
           "project_text", "model_summary", "CELL", "COLUMN", "CRS", "FLAWED_FACTOR",
           "FLAWED_UNIT", "NCOLS", "NROWS", "SUPERSAMPLE", "X0", "Y0", "dem_surface",
           "fault_trace", "make_attitudes", "make_dem", "map_units", "polygonal",
           "sample_project"]
