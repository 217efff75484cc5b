"""What the section page asks of the server, as plain functions over a loaded project.

:class:`ViewState` reads a project once (map, attitudes, open DEM) and answers
the page's requests without reading an input file again:

* :meth:`ViewState.project_info` -- CRS, extent, column, sections and the
  transform grids between longitude/latitude and the project CRS;
* :meth:`ViewState.units_geojson`, :meth:`ViewState.faults_geojson`,
  :meth:`ViewState.attitudes_geojson` -- the map in EPSG:4326;
* :meth:`ViewState.hillshade` -- a shaded-relief PNG of the DEM and its bounds;
* :meth:`ViewState.section` -- profile, surface geology and apparent dips along
  a line, and (``draft``) the draft to depth and the four checks' verdicts;
* :meth:`ViewState.save` -- the line written into the project file (comments and
  layout kept, the previous file kept as ``<name>.bak``);
* :meth:`ViewState.build` -- the normal ``build`` of one section.

Nothing here imports the web framework: :mod:`mapsection.web.app` wraps these
functions into HTTP endpoints. Every bad request raises a
:class:`~mapsection.errors.MapsectionError` (or :class:`RequestError`) whose
one-line message the page shows.
"""

from __future__ import annotations

import dataclasses
import io
import json
import math
import re
import shutil
import threading
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pyproj
import shapely
from shapely import STRtree

from .._messages import Warn
from ..checks.results import TESTS
from ..errors import MapsectionError
from ..render.colours import fault_kind, unit_colours

STATUSES = ("pass", "fail", "not_tested")
MAX_VERTICES = 200
MAX_HILLSHADE_PX = 1200  # longest side of the shaded relief sent to the page
GRID_N = 33  # nodes per side of the lon/lat <-> project CRS interpolation grids




class RequestError(MapsectionError):
    """A request the page sent is malformed (not JSON, a missing or wrong field).

    ``status`` is the HTTP status the server answers with.
    """

    def __init__(self, message: str, status: int = 400) -> None:
        super().__init__(message)
        self.status = status


# --- small helpers ------------------------------------------------------------------------
def _num_list(values, ndigits: int = 2) -> list[float | None]:
    """Floats rounded for JSON, NaN and infinities as null."""
    a = np.round(np.asarray(values, float), ndigits)
    ok = np.isfinite(a)
    if ok.all():
        return a.tolist()
    return [v if f else None for v, f in zip(a.tolist(), ok.tolist(), strict=True)]


def _num(value, ndigits: int = 3) -> float | None:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return None
    return round(v, ndigits) if math.isfinite(v) else None


def _coords(geom, ndigits: int = 2) -> list[list[list[float]]]:
    """The parts of a (multi)line as lists of [x, y] pairs."""
    if geom is None or geom.is_empty:
        return []
    parts = getattr(geom, "geoms", [geom])
    return [np.round(shapely.get_coordinates(p), ndigits).tolist() for p in parts]


def _rings(geom, ndigits: int = 2) -> list[list[list[list[float]]]]:
    """The polygons of a (multi)polygon, each a list of rings of [x, y] pairs."""
    if geom is None or geom.is_empty:
        return []
    polys = getattr(geom, "geoms", [geom])
    out = []
    for p in polys:
        if p.geom_type != "Polygon" or p.is_empty:
            continue
        rings = [p.exterior, *p.interiors]
        out.append([np.round(shapely.get_coordinates(r), ndigits).tolist() for r in rings])
    return out


def check_status(test: dict) -> str:
    """A test's verdict as ``"pass"``, ``"fail"`` or ``"not_tested"``.

    The one place that maps a check result to the page's vocabulary: a
    ``status`` the check gives itself wins; otherwise ``passed`` True / False /
    None (not measured) maps to pass / fail / not_tested. A check never shows
    "pass" for what it did not measure.
    """
    status = test.get("status")
    if isinstance(status, str):
        s = status.strip().lower().replace(" ", "_").replace("-", "_")
        if s in STATUSES:
            return s
        if s in ("passed", "ok"):
            return "pass"
        if s in ("failed",):
            return "fail"
        return "not_tested"
    passed = test.get("passed")
    if passed is True:
        return "pass"
    if passed is False:
        return "fail"
    return "not_tested"


def _page_figures(key) -> dict[str, dict[str, Any]]:
    """The few figures the page shows beside each verdict, from the one set of key figures
    (:func:`mapsection.checks.key_figures`) the command line and the report use too."""
    t, r, a, k = key.topography, key.restoration, key.area_balance, key.kinematics
    worst_cutoff = [f.worst_mismatch_m for f in r.faults if math.isfinite(f.worst_mismatch_m)]
    area: dict[str, Any] = {"worst_unit": a.worst_unit or None,
                            "worst_mismatch_pct": _num(a.worst_mismatch_pct, 2)}
    if a.detachment is not None and a.detachment.reliable:
        area["depth_to_detachment_m"] = _num(a.detachment.depth_to_detachment_m, 0)
    return {
        "topography": {"contact_rms_m": _num(t.contact_rms_m, 1),
                       "contact_threshold_m": _num(t.contact_threshold_m, 1),
                       "unit_agreement": _num(t.unit_agreement, 3),
                       "dip_rms_deg": _num(t.dip_rms_deg, 1)},
        "restoration": {"shortening_pct": _num(r.shortening_pct, 1),
                        "shortening_m": _num(r.shortening_m, 0),
                        "line_length_mismatch_pct": _num(r.line_length_mismatch_pct, 2),
                        **({"worst_cutoff_mismatch_m": _num(max(worst_cutoff), 0)}
                           if worst_cutoff else {})},
        "area_balance": area,
        "kinematics": {"inconsistencies": k.inconsistencies, "transport": k.transport_direction,
                       # a count only of what was compared (never "0 compared")
                       **({"fault_bend_folds": int(k.fault_bend["compared"])}
                          if k.fault_bend.get("compared") else
                          {"fault_bend_fold_comparison": "not tested"})},
    }


def _not_tested(why: str) -> dict[str, dict]:
    return {t: {"status": "not_tested", "figures": {}, "reasons": [why]} for t in TESTS}


def shift_line(session, vertices: np.ndarray):
    """Re-run a session for moved vertices: the page's one call of
    :meth:`~mapsection.session.SectionSession.shift_line`."""
    return session.shift_line(vertices)


def parse_line(value: Any, what: str = "line") -> np.ndarray:
    """``[[x, y], ...]`` from a request as an (n, 2) float array; RequestError if malformed."""
    if not isinstance(value, list):
        raise RequestError(f"{what}: must be a list of [x, y] pairs in the project CRS")
    if len(value) < 2:
        raise RequestError(f"{what}: needs at least two vertices, got {len(value)}", 422)
    if len(value) > MAX_VERTICES:
        raise RequestError(f"{what}: at most {MAX_VERTICES} vertices, got {len(value)}", 422)
    out = np.empty((len(value), 2), float)
    for i, p in enumerate(value):
        if (not isinstance(p, list | tuple) or len(p) != 2
                or not all(isinstance(c, int | float) and not isinstance(c, bool) for c in p)):
            raise RequestError(f"{what}[{i}]: must be a pair of numbers [x, y], got {p!r}"[:200])
        out[i] = p
    if not np.all(np.isfinite(out)):
        raise RequestError(f"{what}: vertices must be finite numbers", 422)
    if float(np.hypot(*np.diff(out, axis=0).T).sum()) <= 0:
        raise RequestError(f"{what}: has zero length", 422)
    return out


_NAME_OK = re.compile(r"^[^\x00-\x1f\x7f]{1,60}$")


def _section_name(value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise RequestError("section: must be a section name (text)")
    name = value.strip()
    if not _NAME_OK.match(name):
        raise RequestError("section: a name of 1 to 60 characters without control characters",
                           422)
    return name


def tiled_map(map_data, cells: int = 24, min_vertices: int = 2000):
    """The map with its unit polygons cut along a grid of ``cells`` x ``cells`` tiles.

    Each piece keeps its unit name and its feature's place in the layer (so that
    where polygons overlap the first feature still wins). Surface geology merges
    neighbouring stretches of one unit, so the tiles leave no trace in the result;
    they only make each intersection with a line cheap. Maps with fewer than
    ``min_vertices`` polygon vertices are returned as they are.
    """
    import geopandas as gpd

    from ..mapdata import MapData

    units = map_data.units
    if not len(units) or int(shapely.get_num_coordinates(map_data.unit_geoms).sum()) \
            < min_vertices:
        return map_data
    left, bottom, right, top = (float(v) for v in units.total_bounds)
    xs = np.linspace(left, right, cells + 1)
    ys = np.linspace(bottom, top, cells + 1)
    gx0, gy0 = np.meshgrid(xs[:-1], ys[:-1])
    gx1, gy1 = np.meshgrid(xs[1:], ys[1:])
    boxes = shapely.box(gx0.ravel(), gy0.ravel(), gx1.ravel(), gy1.ravel())
    feat, box = STRtree(boxes).query(map_data.unit_geoms, predicate="intersects")
    pieces = shapely.intersection(map_data.unit_geoms[feat], boxes[box])
    parts, index = shapely.get_parts(pieces, return_index=True)
    poly = shapely.get_type_id(parts) == 3
    rows = feat[index[poly]]
    order = np.argsort(rows, kind="stable")
    rows, parts = rows[order], parts[poly][order]
    tiles = gpd.GeoDataFrame({map_data.unit_field: units[map_data.unit_field].to_numpy()[rows]},
                             geometry=parts, crs=units.crs)
    tiled = MapData(tiles, map_data.unit_field, map_data.faults, dict(map_data.fault_fields),
                    map_data.crs)
    object.__setattr__(tiled, "unit_tree", _LineQueryTree(tiled.unit_tree))
    return tiled


class _LineQueryTree:
    """An STRtree whose plain query with a line keeps only the pieces the line meets.

    The envelope of a diagonal line covers most tiles of a map; the surface
    geology would intersect the line with each of them. Pieces the line does not
    meet add nothing to that intersection, so leaving them out changes no result.
    """

    def __init__(self, tree: STRtree) -> None:
        self._tree = tree

    def query(self, geometry, predicate=None, **kwargs):
        if predicate is None and not isinstance(geometry, np.ndarray) \
                and geometry.geom_type in ("LineString", "MultiLineString"):
            predicate = "intersects"
        return self._tree.query(geometry, predicate=predicate, **kwargs)

    def __getattr__(self, name: str):
        return getattr(self._tree, name)


# --- hillshade --------------------------------------------------------------------------
def hillshade(z: np.ndarray, dx: float, dy: float, azimuth: float = 315.0,
              altitude: float = 45.0) -> np.ndarray:
    """Shaded relief (0-1) of a grid of elevations, lit from ``azimuth`` at ``altitude``.

    The Lambertian illumination of the surface slope and aspect (the standard
    analytical hillshade; e.g. Burrough & McDonnell 1998, Principles of GIS,
    ch. 8), with the slope from central differences (numpy.gradient). Rows run
    north to south (a north-up raster); ``dx``, ``dy`` are the cell sizes in
    metres. NaN cells stay NaN.

    Parameters
    ----------
    z : (rows, cols) array of elevations in metres.
    dx, dy : cell width and height in metres.
    azimuth : direction of the light, degrees clockwise from north (the tool's default 315).
    altitude : height of the light above the horizon, degrees (the tool's default 45).

    Returns
    -------
    Array of the same shape, 0 (dark) to 1 (lit).

    Examples
    --------
    >>> z = np.tile(np.arange(4.0), (3, 1)) * 10   # rising to the east
    >>> float(np.round(hillshade(z, 10.0, 10.0)[1, 1], 3))   # a 45 deg slope facing west
    0.854
    """
    gy, gx = np.gradient(np.asarray(z, float), dy, dx)
    # rows go south: d z / d north = -gy
    dzdx, dzdy = gx, -gy
    slope = np.arctan(np.hypot(dzdx, dzdy))
    aspect = np.arctan2(-dzdx, -dzdy)  # downslope direction, radians clockwise from north
    zen = np.radians(90.0 - altitude)
    az = np.radians(azimuth)
    shade = np.cos(zen) * np.cos(slope) + np.sin(zen) * np.sin(slope) * np.cos(az - aspect)
    return np.clip(shade, 0.0, 1.0)


# --- the state of one served project ------------------------------------------------------
class ViewState:
    """A project loaded once, with one section session per section, shared by every request.

    Computations that touch the sessions (and the DEM's block cache) run one at a
    time under ``lock``; builds run under their own lock.
    """

    def __init__(self, project_path: str | Path, section: str | None = None,
                 warn: Warn | None = None) -> None:
        from ..project import load_project
        from ..session import load_inputs

        self.project_path = Path(project_path).expanduser().resolve()
        self.said: list[str] = []
        self._warn_out = warn
        self.project = load_project(self.project_path)
        if section is not None:
            self.project.section(section)  # an unknown name: the project's own error
        self.default_section = section or self.project.sections[0].name
        self.inputs = load_inputs(self.project, self.warn)
        # The sessions see the map cut into tiles: a moved line is intersected with the few
        # small pieces near it instead of whole map-wide polygons (same units and contacts).
        self.map_tiles = tiled_map(self.inputs.map_data)
        self.lock = threading.Lock()
        self.draft_lock = threading.Lock()
        self.build_lock = threading.Lock()
        self._sessions: dict[str, Any] = {}
        self._cache: dict[str, Any] = {}
        self.reports: dict[str, Path] = {}
        self.colours = unit_colours(self.project.column, self.inputs.map_data.unit_list)
        self._to_lonlat = pyproj.Transformer.from_crs(self.project.crs, "EPSG:4326",
                                                      always_xy=True)
        self._from_lonlat = pyproj.Transformer.from_crs("EPSG:4326", self.project.crs,
                                                        always_xy=True)

    def warn(self, message: str) -> None:
        self.said.append(message)
        if len(self.said) > 500:
            del self.said[:-50]
        if self._warn_out is not None:
            self._warn_out(message)

    def close(self) -> None:
        for s in self._sessions.values():
            s.dem = None  # shared DEM, closed once below
        self._sessions.clear()
        self.inputs.close()

    def warm(self) -> None:
        """Run the first section once with its draft and checks, so that the page's first
        request does not pay for first-call costs (imports, caches)."""
        spec = self._spec(self.default_section)
        self.section({"section": spec.name, "line": [list(v) for v in spec.line],
                      "draft": True})
        self.hillshade()

    # --- project and map ----------------------------------------------------------------
    def extent(self) -> tuple[float, float, float, float]:
        """Left, bottom, right, top of the map units and the DEM, in the project CRS."""
        cached = self._cache.get("extent")
        if cached is None:
            dem = self.inputs.dem
            b = dem.bounds
            boxes = [(b.left, b.bottom, b.right, b.top)]
            if dem.crs is not None and not dem.crs.equals(self.project.crs):
                t = pyproj.Transformer.from_crs(dem.crs, self.project.crs, always_xy=True)
                boxes = [t.transform_bounds(*boxes[0])]
            units = self.inputs.map_data.units
            if len(units):
                boxes.append(tuple(float(v) for v in units.total_bounds))
            arr = np.asarray(boxes, float)
            cached = (float(arr[:, 0].min()), float(arr[:, 1].min()), float(arr[:, 2].max()),
                      float(arr[:, 3].max()))
            self._cache["extent"] = cached
        return cached

    def _grids(self) -> dict:
        """Grids for the page to convert lon/lat <-> project CRS by bilinear interpolation.

        The map library works in longitude/latitude; the page shows and sends
        project coordinates. Two regular GRID_N x GRID_N grids over the extent
        (padded by a quarter on each side) carry the exact pyproj transform at their
        nodes; between nodes the page interpolates (sub-centimetre on a map sheet,
        see tests/test_web_api.py).
        """
        left, bottom, right, top = self.extent()
        w, h = right - left, top - bottom
        left, right, bottom, top = left - w / 4, right + w / 4, bottom - h / 4, top + h / 4
        xs = np.linspace(left, right, GRID_N)
        ys = np.linspace(bottom, top, GRID_N)
        xx, yy = np.meshgrid(xs, ys)
        lon, lat = self._to_lonlat.transform(xx, yy)
        lon0, lat0, lon1, lat1 = float(lon.min()), float(lat.min()), float(lon.max()), \
            float(lat.max())
        lons = np.linspace(lon0, lon1, GRID_N)
        lats = np.linspace(lat0, lat1, GRID_N)
        gl, gp = np.meshgrid(lons, lats)
        gx, gy = self._from_lonlat.transform(gl, gp)
        return {
            "n": GRID_N,
            "xy_to_lonlat": {"x0": left, "y0": bottom, "dx": (right - left) / (GRID_N - 1),
                             "dy": (top - bottom) / (GRID_N - 1),
                             "a": np.round(lon, 9).ravel().tolist(),
                             "b": np.round(lat, 9).ravel().tolist()},
            "lonlat_to_xy": {"x0": lon0, "y0": lat0, "dx": (lon1 - lon0) / (GRID_N - 1),
                             "dy": (lat1 - lat0) / (GRID_N - 1),
                             "a": np.round(gx, 4).ravel().tolist(),
                             "b": np.round(gy, 4).ravel().tolist()},
        }

    def project_info(self) -> dict:
        from ..caution import CAUTION

        p = self.project
        left, bottom, right, top = self.extent()
        lon, lat = self._to_lonlat.transform([left, right, right, left], [bottom, bottom, top, top])
        auth = p.crs.to_authority()
        return {
            "title": self._title(),
            "file": p.path.name,
            "crs": {"name": p.crs.name, "code": ":".join(auth) if auth else None},
            "extent": [left, bottom, right, top],
            "extent_lonlat": [min(lon), min(lat), max(lon), max(lat)],
            "column": [{"unit": u.name, "colour": self.colours.get(u.name),
                        # an intrusive unit has no thickness (None, not NaN, in JSON)
                        "thickness_m": u.thickness if math.isfinite(u.thickness) else None,
                        "kind": u.kind, "age": u.age, "lithology": u.lithology}
                       for u in p.column.units],
            "sections": [self._spec_dict(s) for s in p.sections],
            "default_section": self.default_section,
            "hillshade": {"url": "/api/map/hillshade.png", "bounds": self.hillshade()[1]},
            "grids": self._grids(),
            "caution": CAUTION,
        }

    def _title(self) -> str:
        import tomllib

        try:
            title = tomllib.loads(self.project_path.read_text(encoding="utf-8")).get("title")
        except (OSError, ValueError):
            title = None
        return str(title) if title else self.project_path.stem

    @staticmethod
    def _spec_dict(s) -> dict:
        return {"name": s.name, "line": [list(map(float, v)) for v in s.line],
                "corridor_m": s.corridor, "method": s.method, "projection": s.projection,
                "ve": s.ve}

    def _geojson(self, key: str, make: Callable[[], dict]) -> bytes:
        if key not in self._cache:
            self._cache[key] = json.dumps(make(), allow_nan=False,
                                          separators=(",", ":")).encode()
        return self._cache[key]

    def units_geojson(self) -> bytes:
        def make() -> dict:
            md = self.inputs.map_data
            geoms = md.units.geometry.to_crs("EPSG:4326") if md.crs is not None \
                else md.units.geometry
            feats = []
            for g, name in zip(geoms, md.unit_names, strict=True):
                if g is None or g.is_empty:
                    continue
                feats.append({"type": "Feature",
                              "properties": {"unit": name, "colour": self.colours.get(name)},
                              "geometry": _rounded(shapely.geometry.mapping(g))})
            return {"type": "FeatureCollection", "features": feats}
        return self._geojson("units", make)

    def faults_geojson(self) -> bytes:
        def make() -> dict:
            md = self.inputs.map_data
            feats: list[dict] = []
            if md.faults is not None and len(md.faults):
                geoms = md.faults.geometry.to_crs("EPSG:4326")
                rows = np.arange(len(md.faults))
                cols = {r: md.fault_value(r, rows) for r in ("dip", "dip_direction", "sense",
                                                             "name")}
                for i, g in enumerate(geoms):
                    if g is None or g.is_empty:
                        continue
                    sense = cols["sense"][i]
                    sense = None if sense is None or (isinstance(sense, float)
                                                      and math.isnan(sense)) else str(sense)
                    name = cols["name"][i]
                    feats.append({"type": "Feature", "properties": {
                        "name": None if name is None or (isinstance(name, float)
                                                         and math.isnan(name)) else str(name),
                        "dip": _num(cols["dip"][i], 1),
                        "dip_direction": _num(cols["dip_direction"][i], 1),
                        "sense": sense, "kind": fault_kind(sense)},
                        "geometry": _rounded(shapely.geometry.mapping(g))})
            return {"type": "FeatureCollection", "features": feats}
        return self._geojson("faults", make)

    def attitudes_geojson(self) -> bytes:
        def make() -> dict:
            a = self.inputs.attitudes
            lon, lat = self._to_lonlat.transform(np.asarray(a.x, float), np.asarray(a.y, float))
            ids = [str(v) for v in np.asarray(a.id).tolist()]
            strike = _num_list(a.strike, 1)
            dip = _num_list(a.dip, 1)
            over = np.asarray(a.overturned, bool).tolist()
            feats = [{"type": "Feature",
                      "geometry": {"type": "Point", "coordinates": [round(x, 7), round(y, 7)]},
                      "properties": {"id": i, "strike": s, "dip": d, "overturned": o}}
                     for x, y, i, s, d, o in zip(lon.tolist(), lat.tolist(), ids, strike, dip,
                                                 over, strict=True)]
            return {"type": "FeatureCollection", "features": feats}
        return self._geojson("attitudes", make)

    def hillshade(self) -> tuple[bytes, list[list[float]]]:
        """A PNG of the DEM's shaded relief in Web Mercator and its [[south, west], [north, east]].

        Computed once: the DEM is read decimated to at most MAX_HILLSHADE_PX on its
        longer side, shaded in its own CRS, then warped to EPSG:3857 (the grid the map
        library draws in) so that it lies exactly under the map.
        """
        if "hillshade" not in self._cache:
            self._cache["hillshade"] = _hillshade_png(self.inputs.dem.path)
        return self._cache["hillshade"]

    # --- the section ------------------------------------------------------------------
    def _session(self, name: str):
        from ..session import SectionSession

        if name not in self._sessions:
            spec = self._spec(name)
            inputs = dataclasses.replace(self.inputs, map_data=self.map_tiles)
            # The line moves anywhere: the elevations under every attitude of the map.
            self._sessions[name] = SectionSession.from_inputs(inputs, self.project, spec,
                                                              self.warn, anywhere=True)
        return self._sessions[name]

    def _spec(self, name: str):
        for s in self.project.sections:
            if s.name == name:
                return s
        names = ", ".join(s.name for s in self.project.sections)
        raise RequestError(f"section {name!r}: not in {self.project.path.name} "
                           f"(sections: {names}); save the line under a new name first", 404)

    def section(self, payload: Any) -> dict:
        """The section along ``payload["line"]`` (see the module docstring and docs/view.md)."""
        if not isinstance(payload, dict):
            raise RequestError("request body: must be a JSON object with 'line' and 'section'")
        name = _section_name(payload.get("section", self.default_section))
        vertices = parse_line(payload.get("line"))
        draft = payload.get("draft", False)
        if not isinstance(draft, bool):
            raise RequestError("draft: must be true or false")
        t0 = time.perf_counter()
        with self.lock:
            n_said = len(self.said)
            spec = self._spec(name)
            session = self._session(name)
            data = shift_line(session, vertices)
            out = self._section_json(data)
            out["warnings"] = self.said[n_said:] if len(self.said) > n_said else []
        t1 = time.perf_counter()
        if draft:
            # Construction and checks work on the data alone: outside the session lock, so
            # that the quick requests of a drag never wait for a draft in progress.
            with self.draft_lock:
                out.update(self._draft_json(spec, data))
        t2 = time.perf_counter()
        out["section"] = name
        out["draft"] = draft
        out["timing_ms"] = {"section": round(1e3 * (t1 - t0), 1),
                            "draft": round(1e3 * (t2 - t1), 1) if draft else None}
        return out

    def _section_json(self, data) -> dict:
        prof, geo, dips = data.profile, data.geology, data.dips
        col = self.colours
        return {
            "line": {"vertices": np.round(data.line.vertices, 2).tolist(),
                     "length_m": round(float(data.line.length), 2)},
            "profile": {"distance_m": _num_list(prof.distance, 1),
                        "elevation_m": _num_list(prof.z, 1)},
            "geology": {
                "intervals": [{"start_m": _num(i.start_m, 1), "end_m": _num(i.end_m, 1),
                               "unit": i.unit, "colour": col.get(i.unit)}
                              for i in geo.intervals],
                "contacts": [{"distance_m": _num(c.distance_m, 1),
                              "elevation_m": _num(c.elevation_m, 1),
                              "unit_before": c.unit_before, "unit_after": c.unit_after}
                             for c in geo.contacts],
                "faults": [{"distance_m": _num(f.distance_m, 1),
                            "elevation_m": _num(f.elevation_m, 1),
                            "apparent_dip": _num(f.apparent_dip, 1), "sense": f.sense,
                            "name": f.name} for f in geo.faults],
            },
            "dips": {"distance_m": _num_list(dips.distance_m, 1),
                     "elevation_m": _num_list(dips.elevation_m, 1),
                     "apparent_dip": _num_list(dips.apparent_dip, 1),
                     "id": [str(v) for v in np.asarray(dips.id).tolist()],
                     "poorly_constrained": np.asarray(dips.poorly_constrained, bool).tolist()},
        }

    def _draft_json(self, spec, data) -> dict:
        from ..construct import build_draft

        said: list[str] = []
        out: dict[str, Any] = {"horizons": [], "faults": [], "units": [], "base_elevation_m":
                               None, "draft_error": None, "notes": said}
        try:
            draft = build_draft(data.line, data.profile, data.geology, data.dips,
                                self.project.column, name=spec.name, method=spec.method,
                                ve=spec.ve, dip_tolerance=spec.dip_tolerance, depth=spec.depth,
                                fault_depth=spec.fault_depth, default_dip=spec.default_dip,
                                warn=said.append)
        except MapsectionError as exc:
            out["draft_error"] = str(exc)
            out["checks"] = _not_tested(f"no draft: {exc}")
            return out
        col = self.colours
        out["horizons"] = [{"top_of": h.top_of, "colour": col.get(h.top_of),
                            "above_ground": bool(h.above_ground), "block": int(h.block),
                            "parts": _coords(h.geometry)} for h in draft.horizons]
        out["faults"] = [{"name": f.name, "sense": f.sense,
                          "apparent_dip": _num(f.apparent_dip, 1), "parts": _coords(f.geometry)}
                         for f in draft.faults]
        out["units"] = [{"unit": u.unit, "colour": col.get(u.unit), "block": int(u.block),
                         "polygons": _rings(u.geometry)} for u in draft.units]
        out["base_elevation_m"] = _num(draft.base_elevation_m, 1)
        out["method"] = draft.method
        out["checks"] = self._checks_json(draft, spec, said)
        return out

    def _checks_json(self, draft, spec, said: list[str]) -> dict:
        from ..checks import key_figures, run_checks

        length = float(draft.line.length)
        # The section's pin and loose lines are distances along the saved line; on a moved
        # line they are kept only where they still fall on it.
        pin = spec.pin if spec.pin is not None and 0 <= spec.pin <= length else None
        loose = spec.loose if spec.loose is not None and 0 <= spec.loose <= length else None
        try:
            report = run_checks(draft, self.project.thresholds, pin=pin, loose=loose,
                                warn=said.append)
        except MapsectionError as exc:
            return _not_tested(str(exc))
        key = key_figures(report)
        figures = _page_figures(key)
        return {t: {"status": key.statuses[t], "figures": figures[t],
                    "reasons": list(getattr(key, t).reasons)[:8]} for t in TESTS}

    # --- save and build ---------------------------------------------------------------
    def save(self, payload: Any) -> dict:
        """Write the line into the project file's ``[[section]]`` of that name (new or not)."""
        if not isinstance(payload, dict):
            raise RequestError("request body: must be a JSON object with 'section' and 'line'")
        name = _section_name(payload.get("section"))
        vertices = parse_line(payload.get("line"))
        base = payload.get("base", self.default_section)
        with self.lock:
            known = {s.name for s in self.project.sections}
            if name not in known:
                base = _section_name(base)
                self._spec(base)
            backup = save_line(self.project_path, name, vertices,
                               base=None if name in known else base)
            from ..project import load_project

            self.project = load_project(self.project_path)
            old = self._sessions.pop(name, None)
            if old is not None:
                old.dem = None
        return {"saved": self.project_path.name, "backup": backup.name, "section": name,
                "new": name not in known,
                "sections": [self._spec_dict(s) for s in self.project.sections]}

    def build(self, payload: Any) -> dict:
        """Run the normal build of one saved section into the folder the user names."""
        from ..build import _folder_name, build_project

        if not isinstance(payload, dict):
            raise RequestError("request body: must be a JSON object with 'section' and 'output'")
        name = _section_name(payload.get("section"))
        output = payload.get("output")
        if not isinstance(output, str) or not output.strip():
            raise RequestError("output: the folder to build into (relative to the project "
                               "file's folder)")
        self._spec(name)
        outdir = Path(output.strip()).expanduser()
        if not outdir.is_absolute():
            outdir = self.project_path.parent / outdir
        outdir = outdir.resolve()
        target = outdir / _folder_name(name)
        p = self.project
        for src in (p.path, p.dem_path, p.map_path, p.attitudes_path):
            src = Path(src).resolve()
            if src == target or target in src.parents:
                raise RequestError(f"output: {target} would replace the folder holding the "
                                   f"input {src.name}; name another folder", 422)
        if not self.build_lock.acquire(blocking=False):
            raise RequestError("a build is already running; wait for it to finish", 409)
        try:
            t0 = time.perf_counter()
            summaries: dict = {}
            folders = build_project(self.project_path, outdir, section=name, warn=self.warn,
                                    summaries=summaries)
            seconds = time.perf_counter() - t0
        finally:
            self.build_lock.release()
        folder = folders[0]
        self.reports[name] = folder / "report.html"
        return {"section": name, "folder": str(folder), "seconds": round(seconds, 2),
                "summary": _summary(summaries.get(folder)),
                "report": "/api/report?section=" + _quote(name)}


def _summary(key) -> str:
    """Each test's verdict of a build (its key figures), on one line."""
    if key is None:
        return "no check results"
    words = {"pass": "pass", "fail": "FAIL", "not_tested": "not tested"}
    return ", ".join(f"{t.replace('_', ' ')} {words[st]}" for t, st in key.statuses.items())


def _quote(text: str) -> str:
    from urllib.parse import quote

    return quote(text, safe="")


def _rounded(geo: dict, ndigits: int = 7) -> dict:
    """A GeoJSON geometry mapping with coordinates rounded (smaller JSON)."""
    def r(c):
        if isinstance(c, tuple | list) and c and isinstance(c[0], int | float):
            return [round(float(v), ndigits) for v in c[:2]]
        return [r(v) for v in c]
    return {"type": geo["type"], "coordinates": r(geo["coordinates"])}


def _hillshade_png(dem_path: Path) -> tuple[bytes, list[list[float]]]:
    import rasterio
    from PIL import Image
    from rasterio.enums import Resampling
    from rasterio.warp import calculate_default_transform, reproject, transform_bounds

    with rasterio.open(dem_path) as ds:
        scale = max(ds.width, ds.height) / MAX_HILLSHADE_PX
        scale = max(scale, 1.0)
        w, h = max(int(round(ds.width / scale)), 2), max(int(round(ds.height / scale)), 2)
        z = ds.read(1, out_shape=(h, w), resampling=Resampling.average, masked=True)
        z = np.ma.filled(z.astype(float), np.nan)
        transform = ds.transform * ds.transform.scale(ds.width / w, ds.height / h)
        src_crs = ds.crs
        dx, dy = abs(transform.a), abs(transform.e)
        if src_crs.is_geographic:  # degrees -> metres at the DEM's centre
            lat = math.radians((ds.bounds.bottom + ds.bounds.top) / 2)
            dx, dy = dx * 111_320 * math.cos(lat), dy * 110_540
        shade = hillshade(z, dx, dy).astype(np.float32)
        dst_crs = "EPSG:3857"
        dt, dw, dh = calculate_default_transform(src_crs, dst_crs, w, h, *ds.bounds)
        out = np.full((dh, dw), np.nan, np.float32)
        reproject(shade, out, src_transform=transform, src_crs=src_crs, dst_transform=dt,
                  dst_crs=dst_crs, resampling=Resampling.bilinear, src_nodata=np.nan,
                  dst_nodata=np.nan)
        left, top = dt.c, dt.f
        right, bottom = left + dt.a * dw, top + dt.e * dh
        west, south, east, north = transform_bounds(dst_crs, "EPSG:4326", left, bottom, right,
                                                    top)
    ok = np.isfinite(out)
    grey = np.where(ok, 40 + 215 * np.nan_to_num(out), 0).astype(np.uint8)
    rgba = np.dstack([grey, grey, grey, np.where(ok, 255, 0).astype(np.uint8)])
    buf = io.BytesIO()
    Image.fromarray(rgba, "RGBA").save(buf, "PNG", optimize=False)
    return buf.getvalue(), [[south, west], [north, east]]


# --- writing the project file ------------------------------------------------------------
def save_line(project_path: Path, name: str, vertices: np.ndarray, base: str | None = None
              ) -> Path:
    """Write ``vertices`` as the line of section ``name`` in the project file.

    The file is edited with tomlkit, so its comments, order and layout stay as
    they were; only the ``line`` value of that ``[[section]]`` changes. A new
    section (``base`` given) is appended as a new ``[[section]]`` with the
    corridor, method and projection of section ``base``. The previous file is
    kept as ``<file>.bak``; the new one is written to a temporary file, checked
    by loading it as a project, and only then moved into place.

    Parameters
    ----------
    project_path : the project file.
    name : the section's name.
    vertices : (n, 2) vertices in the project CRS.
    base : for a new section, the existing section whose settings it takes.

    Returns
    -------
    The path of the backup.
    """
    import os
    import tempfile

    import tomlkit

    from ..errors import ProjectFileError
    from ..project import load_project

    text = project_path.read_text(encoding="utf-8")
    doc = tomlkit.parse(text)
    line = tomlkit.array()
    for x, y in np.asarray(vertices, float).tolist():
        pair = tomlkit.array()
        pair.extend([round(x, 2), round(y, 2)])
        line.append(pair)
    sections = doc.get("section")
    target = None
    if sections is not None:
        for table in sections:
            if table.get("name") == name:
                target = table
                break
    if target is not None:
        target["line"] = line
    else:
        src = None
        for table in sections or []:
            if table.get("name") == base:
                src = table
        new = tomlkit.table()
        new["name"] = name
        new["line"] = line
        for key in ("corridor", "method", "projection", "ve"):
            if src is not None and key in src:
                new[key] = src[key]
        if sections is None:
            aot = tomlkit.aot()
            aot.append(new)
            doc["section"] = aot
        else:
            sections.append(new)
    new_text = tomlkit.dumps(doc)
    folder = project_path.parent
    fd, tmp_name = tempfile.mkstemp(prefix=f".{project_path.name}.", suffix=".tmp", dir=folder)
    tmp = Path(tmp_name)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(new_text)
        try:
            load_project(tmp)  # the new file must still be a valid project
        except ProjectFileError as exc:
            raise RequestError(f"not saved: {str(exc).replace(tmp.name, project_path.name)}",
                               422) from None
        shutil.copymode(project_path, tmp)
        backup = project_path.with_name(project_path.name + ".bak")
        shutil.copy2(project_path, backup)
        os.replace(tmp, project_path)
    finally:
        if tmp.exists():
            tmp.unlink()
    return backup
