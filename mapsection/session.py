"""A section session: the map, the DEM and the attitudes loaded once, the line moved many times.

While choosing a section line the geologist moves it again and again. A
:class:`SectionSession` reads every file once, keeps the open DEM (which caches
its decoded blocks), the map with its STRtrees and the attitudes with their
ground elevations and a spatial index, so that :meth:`SectionSession.shift_line`
re-runs the profile, the surface geology and the dip projection without
reading any file again::

    from mapsection.project import load_project
    from mapsection.session import SectionSession

    project = load_project("sample_area/project.toml")
    session = SectionSession.from_project(project, project.sections[0])
    data = session.run()                       # the section line of the project file
    data = session.shift_line([[x1, y1], [x2, y2]])  # a new line, same CRS and name
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING

import numpy as np
import pyproj
import shapely
from shapely import STRtree

from ._messages import Warn
from ._messages import default_warn as _default_warn
from .crs import same_crs
from .errors import LineError, ParameterError, ProjectFileError
from .geology import SurfaceGeology, surface_geology
from .line import SectionLine
from .mapdata import MapData, check_map_on_dem
from .readers.map import read_map
from .topo_profile import Profile

if TYPE_CHECKING:  # pragma: no cover - typing only
    from .attitudes import Attitudes
    from .corridor import CorridorContacts
    from .dips import ProjectedDips
    from .foldaxis import FoldAxis
    from .project import Project, SectionSpec
    from .readers.dem import Dem
    from .thickness import ColumnEstimate





def given_axis(trend: float, plunge: float) -> FoldAxis:
    """A fold axis given by the geologist (no fabric: nothing to judge its cylindricity by)."""
    from .foldaxis import FoldAxis

    return FoldAxis(float(trend), float(plunge), (float("nan"),) * 3, float("nan"), 0)


@dataclass(frozen=True, eq=False)
class SectionData:
    """Everything the map, the DEM and the attitudes say along one section line."""

    line: SectionLine
    profile: Profile
    geology: SurfaceGeology
    dips: ProjectedDips
    # The map contacts beside the line are found on first use (a moving line rarely needs
    # them): ``beside`` computes them, while the session is open.
    beside: Callable[[], CorridorContacts] | None = field(default=None, repr=False)

    @cached_property
    def corridor_contacts(self) -> CorridorContacts | None:
        """The map's contacts within the corridor, projected into the section
        (:meth:`SectionSession.contacts_beside`); None without a session."""
        return None if self.beside is None else self.beside()


@dataclass(eq=False)
class ProjectInputs:
    """A project's map, attitudes and open DEM, read once and shared by its sections."""

    map_data: MapData
    attitudes: Attitudes
    dem: Dem
    _axis: FoldAxis | None = None
    # thickness = "map": the map's estimate of the column, made once (mapsection.thickness)
    _column_estimate: ColumnEstimate | None = None
    _thickness_said: bool = False
    # Which attitudes have had their ground elevation looked for (sample_corridors)
    _z_sought: np.ndarray | None = field(default=None, repr=False)
    # A build's read (load_inputs with sections): the box around the corridors within which
    # the column's thicknesses are compared with the map's (mapsection.extent)
    near: tuple[float, float, float, float] | None = None
    _near_partial: bool = False  # the thickness comparison saw only the map near the sections

    def sample_corridors(self, lines: Sequence[SectionLine], corridors: Sequence[float],
                         warn: Warn | None = None) -> None:
        """Give the attitudes within the corridors of ``lines`` their ground elevation.

        Only these attitudes are sampled on the DEM (all corridors at once, through
        its block cache), each once however many sections ask; the others keep a NaN
        z, as they are never projected into these sections.
        """
        from .attitudes import with_ground_elevations, within_corridors

        att = self.attitudes
        if self._z_sought is None or len(self._z_sought) != len(att):
            self._z_sought = np.zeros(len(att), bool)
        lines = [ln if ln.crs is None or att.crs is None or same_crs(ln.crs, att.crs)
                 else ln.to_crs(att.crs) for ln in lines]
        want = within_corridors(att, lines, corridors) & ~self._z_sought
        if not want.any():
            return
        self.attitudes, off = with_ground_elevations(att, self.dem, where=want)
        self._z_sought |= want
        if off:
            (warn or _default_warn)(f"attitudes: {off} of {int(want.sum())} in the section "
                                    "corridors lie off the DEM (no elevation)")

    def axis(self) -> FoldAxis:
        """The fold axis of all attitudes (Woodcock 1977), for down-plunge projection."""
        if self._axis is None:
            from .foldaxis import fold_axis

            self._axis = fold_axis(np.asarray(self.attitudes.strike, float),
                                   np.asarray(self.attitudes.dip, float),
                                   source=self.attitudes.source)
        return self._axis

    def close(self) -> None:
        self.dem.close()


def read_window(project: Project, sections: Sequence[SectionSpec] | None) \
        -> tuple[float, float, float, float] | None:
    """The box of the map (and attitudes) a build of ``sections`` reads, or None: all.

    The neighbourhood of the sections (:func:`mapsection.extent.sections_box`: their
    corridors and location maps, plus ``NEIGHBOURHOOD_M``; and ``THICKNESS_NEAR_M`` around
    the corridors, where the thickness comparison looks). None (the whole map and every
    attitude) when no sections are given, when a unit takes its thickness from the map
    (``thickness = "map"``: the column is measured on the whole map, whatever sections
    are built), or when a section projects down-plunge on the fold axis of all the
    attitudes (no ``fold_axis`` given).
    """
    from .extent import sections_box

    if not sections or project.crs is None:
        return None
    if any(u.thickness_from_map for u in project.column.units):
        return None
    if any(s.projection == "plunge" and s.fold_axis is None for s in sections):
        return None
    lines = [project.section_line(s) for s in sections]
    target = pyproj.CRS(project.crs)
    lines = [ln if ln.crs is None or same_crs(ln.crs, target) else ln.to_crs(target)
             for ln in lines]
    view = sections_box([ln.vertices for ln in lines], [s.corridor for s in sections])
    near = _near_box(project, sections)  # the thickness comparison's reach
    return (min(view[0], near[0]), min(view[1], near[1]), max(view[2], near[2]),
            max(view[3], near[3]))


def _near_box(project: Project, sections: Sequence[SectionSpec]):
    from .extent import corridors_box

    target = pyproj.CRS(project.crs)
    lines = [project.section_line(s) for s in sections]
    lines = [ln if ln.crs is None or same_crs(ln.crs, target) else ln.to_crs(target)
             for ln in lines]
    return corridors_box([ln.vertices for ln in lines], [s.corridor for s in sections])


def load_inputs(project: Project, warn: Warn | None = None,
                sections: Sequence[SectionSpec] | None = None) -> ProjectInputs:
    """Read the map and the attitudes and open the DEM of a project (once).

    Every map unit must be in the project's column. With ``sections`` (those a build
    makes), only their neighbourhood of the map is read (:func:`read_window`) and only the
    attitudes within ``extent.THICKNESS_NEAR_M`` of their corridors are kept (a CSV read
    chunk by chunk, :func:`mapsection.readers.attitudes.read_attitudes_in_box`, every row
    still checked and every message as for the whole file); the unit checks then see that
    part of the map.
    """
    from .attitudes import check_attitudes_on_dem
    from .readers.attitudes import read_attitudes, read_attitudes_in_box
    from .readers.dem import Dem

    warn = warn or _default_warn
    window = read_window(project, sections)
    map_data = read_map(project.map_path, project.units_layer, project.unit_field,
                        project.faults_layer, project.fault_fields, crs=project.crs, warn=warn,
                        bbox=window)
    project.column.check_map_units(
        map_data.unit_list, source=f"{project.map_path.name}: layer {project.units_layer!r}")
    check_fault_tables(project, map_data)
    near = _near_box(project, sections) if window is not None else None
    kw = dict(convention=project.convention, layer=project.attitudes_layer,
              fields=project.attitude_fields, crs=project.crs, warn=warn)
    if near is None:
        attitudes = read_attitudes(project.attitudes_path, **kw)
        everywhere = None
    else:
        # Only the attitudes near the corridors are used (projected, beside the contacts,
        # in the thickness comparison): the others are let go as the file is read, chunk
        # by chunk, every row still checked.
        got = read_attitudes_in_box(project.attitudes_path, near, **kw)
        attitudes, everywhere = got.attitudes, got
    dem = Dem.open(project.dem_path, vertical_unit=project.dem_vertical_unit, warn=warn)
    try:
        check_map_on_dem(map_data, dem, f"{project.map_path.name}: layer {project.units_layer!r}")
        if everywhere is None:
            check_attitudes_on_dem(attitudes, dem)
        elif not (len(attitudes) and dem.inside(np.asarray(attitudes.x, float),
                                                np.asarray(attitudes.y, float),
                                                crs=attitudes.crs).any()):
            check_attitudes_on_dem(everywhere.everywhere(), dem)  # the whole file's check
    except BaseException:
        dem.close()
        raise
    return ProjectInputs(map_data, attitudes, dem, near=near)


def check_fault_tables(project: Project, map_data: MapData) -> None:
    """Every ``[[fault]]`` table must name a fault of the map's faults layer."""
    if not project.faults:
        return
    known = map_data.fault_names()
    for i, f in enumerate(project.faults):
        if f.name not in known:
            where = (f"layer {project.faults_layer!r}" if project.faults_layer
                     else "the map (no faults_layer in [map])")
            names = ", ".join(known) if known else "none"
            raise ProjectFileError(f"{project.path.name}: fault[{i}].name: {f.name!r} matches "
                                   f"no fault of {where} (fault names: {names})")


class SectionSession:
    """Loaded inputs of one section, ready to be re-run for any line.

    ``dem`` is an open :class:`mapsection.readers.dem.Dem` (or a path, opened here);
    ``attitudes`` get their ground elevation sampled from the DEM once, here,
    where they have none. ``corridor`` is the half-width in metres of the strip
    of attitudes projected; ``projection`` is ``perpendicular``, ``strike`` or
    ``plunge`` (the latter needs ``axis``, a fold axis); ``step`` is the profile
    sample spacing (default: the profile's own). ``elevations=False``: the attitudes
    already carry the z they need (:meth:`ProjectInputs.sample_corridors`), none is
    sampled here. ``warm=False``: the DEM blocks under the map are not decoded ahead (a
    line that does not move needs only those under it).
    """

    def __init__(self, dem: Dem | str | os.PathLike, map_data: MapData, attitudes: Attitudes,
                 corridor: float, projection: str = "perpendicular",
                 axis: FoldAxis | None = None, step: float | None = None,
                 warn: Warn | None = None, *, elevations: bool = True,
                 warm: bool = True) -> None:
        from .readers.dem import Dem
        from .settings import check_choice, check_number

        corridor = check_number("corridor", corridor)
        check_choice("projection", projection)
        if projection == "plunge" and axis is None:
            raise ParameterError("projection 'plunge': needs a fold axis")
        if step is not None:
            step = check_number("step", step)
        self.dem = dem if isinstance(dem, Dem) else Dem.open(dem)
        self.map_data = map_data
        self.corridor = float(corridor)
        self.projection = projection
        self.axis = axis
        self.step = step
        self.warn = warn or _default_warn
        crs = map_data.crs if map_data.crs is not None else getattr(attitudes, "crs", None)
        self.crs = pyproj.CRS(crs) if crs is not None and not isinstance(crs, pyproj.CRS) else crs
        self.line: SectionLine | None = None
        self._said_line_crs = False
        if self.crs is not None and not same_crs(getattr(attitudes, "crs", None), self.crs):
            from .attitudes import reproject_attitudes

            attitudes = reproject_attitudes(attitudes, self.crs, warn=self.warn)
        self.attitudes = self._with_elevations(attitudes) if elevations else attitudes
        # Index of the attitude points: a shifted line only looks at the points near the new line.
        self._points = shapely.points(np.asarray(self.attitudes.x, float),
                                      np.asarray(self.attitudes.y, float))
        self._tree = STRtree(self._points)
        if warm:
            self._warm_dem()

    # --- loading --------------------------------------------------------------------------
    def _with_elevations(self, attitudes: Attitudes) -> Attitudes:
        """Attitudes with z from the DEM where they carry none (sampled once, vectorised)."""
        from .attitudes import with_ground_elevations

        attitudes, off = with_ground_elevations(attitudes, self.dem)
        if off:
            self.warn(f"attitudes: {off} of {len(attitudes)} lie off the DEM (no elevation)")
        return attitudes

    def _warm_dem(self, budget_bytes: int = 256 * 2**20) -> None:
        """Decode the DEM blocks under the map once, so that shifted lines within it read no file.

        Skipped when those blocks would exceed ``budget_bytes``; the DEM's own
        block cache then reads each new block once, the first time a line needs it.
        """
        bounds = self.map_data.units.total_bounds if len(self.map_data.units) else None
        if bounds is None or not np.all(np.isfinite(bounds)):
            return
        px = float(self.dem.pixel_size)
        bh, bw = getattr(self.dem, "block_shape", (256, 256))
        left, bottom, right, top = bounds
        n_px = ((right - left) / px + 2 * bw) * ((top - bottom) / px + 2 * bh)
        if not np.isfinite(n_px) or n_px * 4 > budget_bytes:
            return
        # One sample per half block reaches every block under the map.
        spacing = 0.5 * px * min(bh, bw)
        gx = np.arange(left, right + spacing, spacing)
        gy = np.arange(bottom, top + spacing, spacing)
        xx, yy = np.meshgrid(gx, gy)
        self.dem.sample(xx.ravel(), yy.ravel(), crs=self.map_data.crs)

    @classmethod
    def from_inputs(cls, inputs: ProjectInputs, project: Project, spec: SectionSpec,
                    warn: Warn | None = None, *, anywhere: bool = False) -> SectionSession:
        """A session for one section over inputs already loaded (shared, not owned).

        The attitudes' elevations are sampled within the corridors of all the project's
        sections (:meth:`ProjectInputs.sample_corridors`); ``anywhere=True``: under every
        attitude of the map, for a line that may be moved anywhere.
        """
        warn = warn or _default_warn
        line = project.section_line(spec)
        if not anywhere:
            specs = [*project.sections, spec]
            inputs.sample_corridors([project.section_line(s) for s in specs],
                                    [s.corridor for s in specs], warn)
        axis = None
        if spec.projection == "plunge" and spec.fold_axis is not None:
            axis = given_axis(*spec.fold_axis)
        elif spec.projection == "plunge":
            axis = inputs.axis()
            for why in axis.cylindrical_problems():
                warn(f"section {spec.name}: down-plunge projection may mislead: {why}")
        session = cls(inputs.dem, inputs.map_data, inputs.attitudes, spec.corridor,
                      spec.projection, axis, warn=warn, elevations=anywhere, warm=anywhere)
        session.line = session._as_line(line)
        return session

    @classmethod
    def from_project(cls, project: Project, spec: SectionSpec | str,
                     warn: Warn | None = None) -> SectionSession:
        """Open the DEM, read the map and the attitudes of a project, for one section."""
        spec = project.section(spec)
        inputs = load_inputs(project, warn)
        try:
            session = cls.from_inputs(inputs, project, spec, warn)
            session._warm_dem()  # the line will move: the blocks under the map, ahead
            return session
        except BaseException:
            inputs.close()
            raise

    def close(self) -> None:
        self.dem.close()

    def __enter__(self) -> SectionSession:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # --- running --------------------------------------------------------------------------
    def _as_line(self, line: SectionLine | np.ndarray | Sequence | None) -> SectionLine:
        if line is None:
            if self.line is None:
                raise LineError("section session: no section line given yet")
            return self.line
        if isinstance(line, SectionLine):
            if line.crs is self.crs or self.crs is None:
                return line
            if line.crs is None or same_crs(line.crs, self.crs):
                # The session's own CRS object: later CRS comparisons are identity checks.
                return SectionLine(line.vertices, self.crs, line.name)
            # The map and attitudes are in the session's CRS: bring the line there (said once).
            if not self._said_line_crs:
                self.warn(f"section line {line.name}: reprojected from {line.crs.name} to "
                          f"{self.crs.name}, the CRS of the map and attitudes".replace(" :", ":"))
                self._said_line_crs = True
            return line.to_crs(self.crs)
        vertices = np.asarray(line, float)
        if self.line is not None:
            return self.line.moved(vertices)
        return SectionLine(vertices, self.crs)

    def near(self, line: SectionLine) -> np.ndarray:
        """Indices of the attitudes that may lie within the corridor of the line.

        A cheap superset from the STRtree: the line is cut into pieces about one
        corridor long and the envelope of each piece, widened by the corridor, is
        queried (envelopes only, no distance test). The projection then applies the
        exact corridor to these few points instead of to every attitude.
        """
        if not same_crs(line.crs, self.crs):
            line = line.to_crs(self.crs)
        c = self.corridor
        d = line.densify(max(c, line.length / 2000.0))
        x, y = line.point_at(d)
        pad = c * (1 + 1e-9) + 1e-6
        boxes = shapely.box(np.minimum(x[:-1], x[1:]) - pad, np.minimum(y[:-1], y[1:]) - pad,
                            np.maximum(x[:-1], x[1:]) + pad, np.maximum(y[:-1], y[1:]) + pad)
        hit = np.zeros(len(self._points), bool)
        hit[self._tree.query(boxes)[1]] = True
        return np.flatnonzero(hit)

    def project_dips(self, line: SectionLine) -> ProjectedDips:
        """The attitudes of the corridor projected into the section plane of ``line``."""
        from .dips import project_attitudes

        return project_attitudes(self.attitudes.subset(self.near(line)), line, self.corridor,
                                 method=self.projection, axis=self.axis, warn=self.warn)

    def contacts_beside(self, line: SectionLine) -> CorridorContacts:
        """The map's contacts within the corridor of ``line``, projected into the section
        by the session's projection (:func:`mapsection.corridor.corridor_contacts`); each
        point's elevation from the DEM; along strike, the strike of the nearest attitude."""
        from .corridor import corridor_contacts

        if not same_crs(line.crs, self.crs):
            line = line.to_crs(self.crs)
        strike = np.asarray(self.attitudes.strike, float)

        def strike_at(x, y):
            if not len(strike):
                return np.full(len(x), np.nan)
            return strike[self._tree.nearest(shapely.points(x, y))]

        px = float(self.dem.pixel_size)
        spacing = max(25.0, px) if np.isfinite(px) else 25.0
        return corridor_contacts(self.map_data, line, self.corridor,
                                 lambda x, y: self.dem.sample(x, y, crs=self.crs),
                                 method=self.projection, axis=self.axis, strike_at=strike_at,
                                 spacing=spacing)

    def run(self, line: SectionLine | np.ndarray | Sequence | None = None) -> SectionData:
        """Profile, surface geology, projected dips and the contacts beside the line along
        ``line`` (default: the current one)."""
        from .topo_profile import profile

        line = self._as_line(line)
        prof = profile(self.dem, line, self.step, warn=self.warn)
        geology = surface_geology(self.map_data, line, prof, warn=self.warn)
        dips = self.project_dips(line)
        self.line = line
        return SectionData(line, prof, geology, dips, lambda: self.contacts_beside(line))

    def shift_line(self, new_line: SectionLine | np.ndarray | Sequence) -> SectionData:
        """Re-run for a shifted line (a SectionLine or its vertices); reads no file."""
        return self.run(self._as_line(new_line))
