"""Reading a (possibly hand-edited) ``section.gpkg`` back into a
:class:`~mapsection.draft.Draft` (see :mod:`mapsection.export`)."""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio
import shapely
from shapely.geometry import LineString, MultiPolygon, Polygon

from .._messages import first_line
from ..dips import ProjectedDips
from ..draft import AxialSurface, DipDomain, Draft, FaultTrace, Horizon, Unconformity, UnitPolygon
from ..errors import MapLayerError
from ..geology import Contact, FaultCrossing, SurfaceGeology, UnitInterval
from ..line import SectionLine
from ..stratigraphy import Column
from ..topo_profile import Profile
from .layers import ERODED_LAYER, LAYERS, UNCONFORMITY_LAYER

# Fields written since a later version: files without them still read.
_OPTIONAL_FIELDS = {("faults", "segments")}


def _read_layer(path: Path, layer: str, layers: set[str], required: bool = True):
    if layer not in layers:
        if required:
            raise MapLayerError(f"{path}: no layer {layer!r} (layers: "
                                f"{', '.join(sorted(layers)) or 'none'})")
        return None
    frame = pyogrio.read_dataframe(path, layer=layer)
    need = LAYERS.get(layer, (None, ()))[1]
    missing = [f for f in need if f not in frame.columns and (layer, f) not in _OPTIONAL_FIELDS]
    if missing:
        raise MapLayerError(f"{path}: layer {layer!r} has no field {missing[0]!r}")
    return frame


def _lines(path: Path, layer: str, geom, row: int) -> list[LineString]:
    if geom is None or geom.is_empty:
        return []
    parts = [p for p in shapely.get_parts(geom) if not p.is_empty]
    if not all(p.geom_type == "LineString" for p in parts):
        raise MapLayerError(f"{path}: layer {layer!r} row {row}: holds a {geom.geom_type}; "
                            f"expected LineStrings")
    return [LineString(np.asarray(p.coords)[:, :2]) for p in parts]


def _text(v) -> str | None:
    if v is None or (isinstance(v, float) and np.isnan(v)) or v is pd.NA:
        return None
    return str(v)


def _num(v, default=float("nan")) -> float:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return default
    return f if np.isfinite(f) else default


def _flag(v) -> bool:
    if isinstance(v, str):
        return v.strip().lower() in ("1", "true", "yes", "t", "y")
    return bool(_num(v, 0.0))


def read_section_gpkg(path: str | os.PathLike, column: Column, line: SectionLine, name: str = "",
                      profile: Profile | None = None, geology: SurfaceGeology | None = None,
                      dips: ProjectedDips | None = None) -> Draft:
    """Read a section.gpkg (possibly edited by hand in a GIS) back into a Draft.

    Horizons, faults and unit polygons come from the file (``method="edited"``);
    the profile, surface geology and dips come from the arguments when given, else
    from the file's ``profile_points``, ``surface_geology``/``contacts``/
    ``fault_crossings`` and ``dips`` layers. A missing layer or field raises
    MapLayerError naming the file and the layer/field.

    Parameters
    ----------
    path
        The section GeoPackage (as :func:`mapsection.export.write_section_gpkg` wrote it).
    column
        The stratigraphic column: every horizon and unit of the file must be in it.
    line
        The section line the file was drawn along.
    name
        The section's name (default: the one the file records, else the line's).
    profile, geology, dips
        The ground profile, surface geology and projected dips, when known; else read
        from the file.

    Returns
    -------
    Draft
        ``method="edited"``; for a column with unconformities, with its sequences.

    Examples
    --------
    >>> edited = read_section_gpkg("out/A/section.gpkg", draft.column,
    ...                            draft.line)  # doctest: +SKIP
    """
    path = Path(path)
    if not path.is_file():
        raise MapLayerError(f"{path}: no such section file")
    try:
        layers = {str(r[0]) for r in pyogrio.list_layers(path)}
    except Exception as exc:
        raise MapLayerError(f"{path}: not a readable GeoPackage "
                            f"({first_line(exc)})") from None
    # The base of the oldest unit is a horizon too (named by the construction).
    known = set(column.names) | {column.base_name}
    meta = section_info(path, layers)
    horizons = _read_horizons(path, layers, known, column)
    faults = _read_faults(path, layers)
    units = _read_units(path, layers, column)
    axial, domains = _read_axes_and_domains(path, layers)
    unconformities = _read_unconformities(path, layers, column)
    eroded = _read_eroded(path, layers, known)
    if profile is None:
        profile = _read_profile(path, layers, line, meta.get("pixel_size_m"))
    if geology is None:
        geology = _read_geology(path, layers)
    if dips is None:
        dips = _read_dips(path, layers)
    base = min((g.geometry.bounds[1] for g in units), default=float("nan"))
    draft = Draft(
        name=name or meta.get("section") or line.name,
        method="edited",
        line=line,
        profile=profile,
        geology=geology,
        dips=dips,
        column=column,
        horizons=horizons,
        faults=faults,
        units=units,
        axial_surfaces=axial,
        domains=domains,
        ve=_num(meta.get("ve"), 1.0),
        base_elevation_m=_num(meta.get("base_elevation_m"), base),
        log=[f"read from {path.name} (edited section: horizons, faults and units as in the file)"],
        unconformities=unconformities,
        eroded_horizons=eroded,
    )
    if len(column.layered().sequences()) > 1:  # each sequence checked on its own
        from ..construct.sequences import split_sequences

        draft.sequences = split_sequences(draft)
    return draft


def _read_horizons(path: Path, layers: set[str], known: set[str], column: Column
                   ) -> list[Horizon]:
    hz_frame = _read_layer(path, "horizons", layers)
    horizons = []
    for i, (top, above, block, g) in enumerate(zip(hz_frame["top_of"], hz_frame["above_ground"],
                                                   hz_frame["block"], hz_frame.geometry,
                                                   strict=True)):
        top = _text(top)
        if top is None:
            raise MapLayerError(f"{path}: layer 'horizons' row {i}: empty top_of")
        if top not in known:
            raise MapLayerError(f"{path}: layer 'horizons' row {i}: top_of {top!r} is not a unit "
                                f"of the column ({', '.join(column.names)})")
        for ls in _lines(path, "horizons", g, i):
            horizons.append(Horizon(top, ls, _flag(above), int(_num(block, 0.0))))
    return horizons


def _read_faults(path: Path, layers: set[str]) -> list[FaultTrace]:
    f_frame = _read_layer(path, "faults", layers)
    faults = []
    for i, row in enumerate(f_frame.itertuples(index=False)):
        try:
            seps = json.loads(row.separations) if _text(row.separations) else {}
            seps = {str(k): float(v) for k, v in dict(seps).items()}
        except (ValueError, TypeError, AttributeError):
            raise MapLayerError(f"{path}: layer 'faults' row {i}: separations is not JSON "
                                f"{{unit: metres}}") from None
        text = _text(getattr(row, "segments", None))
        try:
            segs = tuple((str(k), float(m)) for k, m in json.loads(text)) if text else ()
        except (ValueError, TypeError):
            raise MapLayerError(f"{path}: layer 'faults' row {i}: segments is not JSON "
                                "[[kind, metres], ...]") from None
        for ls in _lines(path, "faults", row.geometry, i):
            faults.append(FaultTrace(_text(row.name) or f"fault {i + 1}", ls, _num(row.dip),
                                     _num(row.dip_direction), _num(row.apparent_dip),
                                     _text(row.sense), seps, segs))
    return faults


def _read_units(path: Path, layers: set[str], column: Column) -> list[UnitPolygon]:
    u_frame = _read_layer(path, "units", layers)
    units = []
    for i, (unit, block, g) in enumerate(zip(u_frame["unit"], u_frame["block"],
                                             u_frame.geometry, strict=True)):
        if g is None or g.is_empty:
            continue
        if not isinstance(g, Polygon | MultiPolygon):
            raise MapLayerError(f"{path}: layer 'units' row {i}: holds a {g.geom_type}; "
                                f"expected polygons")
        unit = _text(unit)
        if unit not in column.names:
            raise MapLayerError(f"{path}: layer 'units' row {i}: unit {unit!r} is not in the "
                                f"column")
        units.append(UnitPolygon(unit, shapely.force_2d(g), int(_num(block, 0.0))))
    return units


def _read_axes_and_domains(path: Path, layers: set[str]
                           ) -> tuple[list[AxialSurface], list[DipDomain]]:
    """The axial surfaces and dip domains, where the file has them."""
    axial = []
    a_frame = _read_layer(path, "axial_surfaces", layers, required=False)
    if a_frame is not None:
        for i, row in enumerate(a_frame.itertuples(index=False)):
            for ls in _lines(path, "axial_surfaces", row.geometry, i):
                axial.append(AxialSurface(ls, _num(row.ground_distance_m), _num(row.dip_left),
                                          _num(row.dip_right)))
    domains = []
    d_frame = _read_layer(path, "dip_domains", layers, required=False)
    if d_frame is not None:
        domains = [DipDomain(_num(r.start_m), _num(r.end_m), _num(r.dip),
                             int(_num(r.n_dips, 0.0)), int(_num(r.block, 0.0)))
                   for r in d_frame.itertuples(index=False)]
    return axial, domains


def _read_eroded(path: Path, layers: set[str], known: set[str]) -> list[Horizon]:
    """The older beds above an unconformity, as constructed (a column with unconformities)."""
    eroded = []
    if ERODED_LAYER[0] in layers:
        e_frame = pyogrio.read_dataframe(path, layer=ERODED_LAYER[0])
        for i, row in enumerate(e_frame.itertuples(index=False)):
            top = _text(getattr(row, "top_of", None))
            if top not in known:
                raise MapLayerError(f"{path}: layer {ERODED_LAYER[0]!r} row {i}: top_of {top!r} "
                                    "is not a unit of the column")
            for ls in _lines(path, ERODED_LAYER[0], row.geometry, i):
                eroded.append(Horizon(top, ls, True, int(_num(getattr(row, "block", 0), 0.0))))
    return eroded


def _read_unconformities(path: Path, layers: set[str], column: Column) -> list:
    """The ``unconformities`` layer (a column with unconformities), if any."""
    name, _gtype, need = UNCONFORMITY_LAYER
    if name not in layers:
        return []
    frame = pyogrio.read_dataframe(path, layer=name)
    missing = [f for f in need[:1] if f not in frame.columns]
    if missing:
        raise MapLayerError(f"{path}: layer {name!r} has no field {missing[0]!r}")
    out = []
    for i, row in enumerate(frame.itertuples(index=False)):
        unit = _text(row.unit)
        if unit not in column.names:
            raise MapLayerError(f"{path}: layer {name!r} row {i}: unit {unit!r} is not in the "
                                "column")
        above = _flag(getattr(row, "above_ground", False))
        block = int(_num(getattr(row, "block", 0), 0.0))
        for ls in _lines(path, name, row.geometry, i):
            out.append(Unconformity(unit, ls, above, block))
    return out


def section_info(path: Path, layers: set[str]) -> dict:
    """Section name, method, VE, base and pixel size from the ``profile`` layer, if any."""
    if "profile" not in layers:
        return {}
    frame = pyogrio.read_dataframe(path, layer="profile", read_geometry=False, max_features=1)
    if not len(frame):
        return {}
    row = frame.iloc[0]
    return {k: row[k] for k in ("section", "method", "ve", "base_elevation_m", "pixel_size_m")
            if k in frame.columns and _text(row[k]) is not None}


def _read_profile(path: Path, layers: set[str], line: SectionLine, pixel_size) -> Profile:
    pts = _read_layer(path, "profile_points", layers)
    order = np.argsort(pts["distance_m"].to_numpy(float), kind="stable")
    col = {k: pts[k].to_numpy(float)[order] for k in ("distance_m", "elevation_m", "x", "y")}
    return Profile(col["distance_m"], col["x"], col["y"], col["elevation_m"], line, line.crs,
                   _num(pixel_size))


def _read_geology(path: Path, layers: set[str]) -> SurfaceGeology:
    sg = _read_layer(path, "surface_geology", layers)
    intervals = tuple(UnitInterval(_num(s), _num(e), _text(u))
                      for u, s, e in zip(sg["unit"], sg["start_m"], sg["end_m"], strict=True))
    ct = _read_layer(path, "contacts", layers)
    contacts = tuple(Contact(_num(d), _num(z), _text(a), _text(b))
                     for d, z, a, b in zip(ct["distance_m"], ct["elevation_m"], ct["unit_before"],
                                           ct["unit_after"], strict=True))
    fx = _read_layer(path, "fault_crossings", layers, required=False)
    faults = ()
    if fx is not None:
        faults = tuple(FaultCrossing(_num(r.distance_m), _num(r.elevation_m), _num(r.dip),
                                     _num(r.dip_direction), _num(r.apparent_dip), _text(r.sense),
                                     _text(r.name))
                       for r in fx.itertuples(index=False))
    return SurfaceGeology(intervals, contacts, faults)


def _read_dips(path: Path, layers: set[str]) -> ProjectedDips:
    dp = _read_layer(path, "dips", layers)
    order = np.argsort(dp["distance_m"].to_numpy(float), kind="stable")
    dp = dp.iloc[order]

    def f(k):
        return dp[k].to_numpy(float)

    def b(k):
        return np.array([_flag(v) for v in dp[k]], bool)

    return ProjectedDips(
        id=dp["id"].astype(str).to_numpy(), x=f("x"), y=f("y"), distance_m=f("distance_m"),
        offset_m=f("offset_m"), elevation_m=f("elevation_m"), strike=f("strike"), dip=f("dip"),
        apparent_dip=f("apparent_dip"), poorly_constrained=b("poorly_constrained"),
        overturned=b("overturned"))


__all__ = ["read_section_gpkg", "section_info"]
