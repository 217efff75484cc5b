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
functions into HTTP endpoints. The JSON shapes are made in
:mod:`mapsection.web.jsonify`, the map's tiles, shaded relief and CRS grids in
:mod:`mapsection.web.maplayers`, a request's fields checked in
:mod:`mapsection.web.payload`, and the project file written by
:mod:`mapsection.web.project_file`. Every bad request raises a
:class:`~mapsection.errors.MapsectionError` (or :class:`RequestError`) whose
one-line message the page shows.
"""

from __future__ import annotations

import dataclasses
import json
import math
import threading
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pyproj

from .._messages import Warn
from ..errors import MapsectionError
from ..render.colours import unit_colours
from . import jsonify as js
from .maplayers import hillshade, hillshade_png, tiled_map, transform_grids
from .payload import RequestError, parse_line, section_name
from .project_file import save_line

__all__ = ["RequestError", "ViewState", "hillshade", "parse_line", "save_line", "shift_line",
           "tiled_map"]


def shift_line(session, vertices: np.ndarray):
    """Re-run a session for moved vertices: the page's one call of
    :meth:`~mapsection.session.SectionSession.shift_line`."""
    return session.shift_line(vertices)


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
        """The lon/lat <-> project CRS grids over the extent (:func:`transform_grids`)."""
        return transform_grids(self.extent(), self._to_lonlat, self._from_lonlat)

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
            "sections": [js.spec_json(s) for s in p.sections],
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

    def _geojson(self, key: str, make: Callable[[], dict]) -> bytes:
        if key not in self._cache:
            self._cache[key] = json.dumps(make(), allow_nan=False,
                                          separators=(",", ":")).encode()
        return self._cache[key]

    def units_geojson(self) -> bytes:
        return self._geojson("units", lambda: js.units_collection(self.inputs.map_data,
                                                                   self.colours))

    def faults_geojson(self) -> bytes:
        return self._geojson("faults", lambda: js.faults_collection(self.inputs.map_data))

    def attitudes_geojson(self) -> bytes:
        return self._geojson("attitudes", lambda: js.attitudes_collection(
            self.inputs.attitudes, self._to_lonlat))

    def hillshade(self) -> tuple[bytes, list[list[float]]]:
        """A PNG of the DEM's shaded relief in Web Mercator and its [[south, west], [north, east]].

        Computed once: the DEM is read decimated to at most MAX_HILLSHADE_PX on its
        longer side, shaded in its own CRS, then warped to EPSG:3857 (the grid the map
        library draws in) so that it lies exactly under the map.
        """
        if "hillshade" not in self._cache:
            self._cache["hillshade"] = hillshade_png(self.inputs.dem.path)
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
        name = section_name(payload.get("section", self.default_section))
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
            out = js.section_json(data, self.colours)
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
            out["checks"] = js.not_tested(f"no draft: {exc}")
            return out
        out.update(js.draft_json(draft, self.colours))
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
            return js.not_tested(str(exc))
        return js.checks_json(key_figures(report))

    # --- save and build ---------------------------------------------------------------
    def save(self, payload: Any) -> dict:
        """Write the line into the project file's ``[[section]]`` of that name (new or not)."""
        if not isinstance(payload, dict):
            raise RequestError("request body: must be a JSON object with 'section' and 'line'")
        name = section_name(payload.get("section"))
        vertices = parse_line(payload.get("line"))
        base = payload.get("base", self.default_section)
        with self.lock:
            known = {s.name for s in self.project.sections}
            if name not in known:
                base = section_name(base)
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
                "sections": [js.spec_json(s) for s in self.project.sections]}

    def build(self, payload: Any) -> dict:
        """Run the normal build of one saved section into the folder the user names."""
        from ..build import _folder_name, build_project

        if not isinstance(payload, dict):
            raise RequestError("request body: must be a JSON object with 'section' and 'output'")
        name = section_name(payload.get("section"))
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
                "summary": js.summary_line(summaries.get(folder)),
                "report": "/api/report?section=" + _quote(name)}


def _quote(text: str) -> str:
    from urllib.parse import quote

    return quote(text, safe="")
