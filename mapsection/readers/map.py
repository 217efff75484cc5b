"""Reading the geologic map: unit polygons and fault lines from a vector file into a
:class:`mapsection.mapdata.MapData`."""

from __future__ import annotations

import os
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyproj
import shapely

from .._messages import Warn, first_line, human
from .._messages import default_warn as _default_warn
from ..crs import same_crs
from ..errors import MapLayerError
from ..mapdata import (
    _LINES,
    _POLYGONS,
    OPTIONAL_FAULT_FIELDS,
    REQUIRED_FAULT_FIELDS,
    MapData,
    _names,
)


def read_map(
    path: str | os.PathLike,
    units_layer: str,
    unit_field: str,
    faults_layer: str | None = None,
    fault_fields: dict[str, str] | None = None,
    crs: str | pyproj.CRS | None = None,
    warn: Warn | None = None,
    bbox: tuple[float, float, float, float] | None = None,
) -> MapData:
    """Read the unit polygons (and fault lines) of a geologic map.

    ``fault_fields`` maps the roles ``dip``, ``dip_direction``, ``sense`` and
    ``name`` to the column names of the faults layer (default: the role names).
    Layers in another CRS than ``crs`` are reprojected to it (said once through
    ``warn``); a layer without a CRS is taken to be in ``crs`` (with a warning).

    ``bbox`` (xmin, ymin, xmax, ymax in ``crs``): only the unit polygons whose bounding box
    meets it are read (a GeoPackage answers from its R-tree spatial index; other formats are
    scanned; the faults layer is read whole); the MapData then knows the window, how many
    unit polygons were left out and the whole layer's extent (:attr:`MapData.partial`,
    :meth:`MapData.layer_bounds`). The checks made on the polygons (overlaps, empty unit
    names) and those made later (units missing from the column) see only those read.
    """
    warn = warn or _default_warn
    path = Path(path)
    target = pyproj.CRS(crs) if crs is not None else None
    layers = _list_layers(path)
    counts: dict[str, tuple] = {}
    units = _read_layer(path, layers, units_layer, [unit_field], "unit", bbox, target, counts)
    units = _clean(units, _POLYGONS, f"{path.name}: layer {units_layer!r}", warn)
    faults, roles = None, {}
    if faults_layer is not None:
        faults, roles = _read_faults(path, layers, faults_layer, fault_fields, target, counts,
                                     warn)
    target = target or (pyproj.CRS(units.crs) if units.crs is not None else None)
    frames = _one_crs(path, {units_layer: units,
                             **({faults_layer: faults} if faults is not None else {})},
                      target, warn)
    units = frames[units_layer]
    if faults is not None:
        faults = frames[faults_layer]
    units = units[[unit_field, "geometry"]].reset_index(drop=True)
    if not len(units):
        _no_units(path, units_layer, unit_field, crs, bbox)
    _warn_overlaps(units, unit_field, f"{path.name}: layer {units_layer!r}", warn)
    if units[unit_field].isna().any():
        n = int(units[unit_field].isna().sum())
        warn(f"{path.name}: layer {units_layer!r}: {n} polygon(s) with no {unit_field!r} value "
             "are treated as unmapped ground")
    if bbox is None:
        return MapData(units, unit_field, faults, roles, target)
    total, got, extent, layer_crs = counts[units_layer]
    return MapData(units, unit_field, faults, roles, target,
                   window=tuple(float(v) for v in bbox),
                   left_out=max(total - got, 0) if total >= 0 else 1,
                   extent=_layer_extent(extent, layer_crs, target))


def _layer_extent(extent, layer_crs, target) -> tuple[float, float, float, float] | None:
    """The whole layer's extent, in the map's CRS, for the location map's framing."""
    if extent is not None and np.all(np.isfinite(extent)):
        return _to_target(tuple(float(v) for v in extent), layer_crs, target)
    return None


def _list_layers(path: Path) -> list[str]:
    """The names of the map file's layers (MapLayerError when it is missing or unreadable)."""
    if not path.exists():
        raise MapLayerError(f"{path}: no such map file")
    import pyogrio

    try:
        return [str(name) for name in pyogrio.list_layers(path)[:, 0]]
    except Exception as exc:  # the vector driver raises several kinds for unreadable files
        raise MapLayerError(f"{path}: not a readable map file ({first_line(exc)})") from None


def _read_layer(path: Path, layers: list[str], layer: str, fields: list[str], role: str,
                box, target, counts: dict[str, tuple]) -> gpd.GeoDataFrame:
    """One layer, checked for its ``fields`` (the ``role`` names them in a message), read
    within ``box`` (in ``target``) when given; ``counts[layer]`` gets (features in the
    layer, features read, the layer's bounds, its CRS)."""
    import pyogrio

    if layer not in layers:
        raise MapLayerError(f"{path.name}: no layer {layer!r} (layers: {', '.join(layers)})")
    try:
        info = pyogrio.read_info(path, layer=layer)
        existing = [str(f) for f in info["fields"]]
    except Exception as exc:
        raise MapLayerError(f"{path.name}: layer {layer!r} unreadable ({first_line(exc)})") \
            from None
    for f in fields:
        if f not in existing:
            raise MapLayerError(
                f"{path.name}: layer {layer!r} has no {role} field {f!r} "
                f"(fields: {_names(existing)})"
            )
    try:
        window = None if box is None else _layer_box(box, info.get("crs"), target)
        df = pyogrio.read_dataframe(path, layer=layer, bbox=window)
        counts[layer] = (int(info.get("features", -1)), len(df), info.get("total_bounds"),
                         info.get("crs"))
        return df
    except Exception as exc:
        raise MapLayerError(f"{path.name}: layer {layer!r} unreadable ({first_line(exc)})") \
            from None


def _read_faults(path: Path, layers: list[str], faults_layer: str,
                 fault_fields: dict[str, str] | None, target, counts: dict[str, tuple],
                 warn: Warn) -> tuple[gpd.GeoDataFrame, dict[str, str]]:
    """The faults layer, cleaned and its values checked, and its columns by role."""
    given = dict(fault_fields or {})
    wanted = {r: given.get(r, r) for r in REQUIRED_FAULT_FIELDS + OPTIONAL_FAULT_FIELDS}
    # The faults layer is read whole (faults are few): every [[fault]] table finds its
    # fault, and a bad value is named by its feature number in the layer.
    faults = _read_layer(path, layers, faults_layer, [wanted[r] for r in REQUIRED_FAULT_FIELDS],
                         "fault", None, target, counts)
    roles = {r: c for r, c in wanted.items() if c in faults.columns}
    faults = _clean(faults, _LINES, f"{path.name}: layer {faults_layer!r}", warn)
    _check_fault_values(faults, roles, f"{path.name}: layer {faults_layer!r}")
    return faults, roles


def _one_crs(path: Path, frames: dict[str, gpd.GeoDataFrame], target, warn: Warn
             ) -> dict[str, gpd.GeoDataFrame]:
    """Every layer in ``target``: reprojected, or taken to be in it when it has no CRS;
    all the layers reprojected are named in one message."""
    moved, assumed = [], []
    for name, df in frames.items():
        if target is None:
            continue
        if df.crs is None:
            df.set_crs(target, inplace=True)
            assumed.append(name)
        elif not same_crs(df.crs, target):
            moved.append(f"{name!r} from {_crs_name(df.crs)}")
            frames[name] = df.to_crs(target)
    if assumed:
        warn(f"{path.name}: layer(s) {', '.join(map(repr, assumed))} have no CRS; "
             f"assuming {_crs_name(target)}")
    if moved:
        warn(f"{path.name}: reprojected layer(s) {', '.join(moved)} to {_crs_name(target)}")
    return frames


def _no_units(path: Path, units_layer: str, unit_field: str, crs, bbox) -> None:
    """Raise MapLayerError for a units layer with no polygons (near the section lines)."""
    if bbox is not None:
        # The whole layer read again (only on this error) says whether it has none at all.
        read_map(path, units_layer, unit_field, crs=crs, warn=lambda message: None)
        raise MapLayerError(f"{path.name}: layer {units_layer!r} has no unit polygons "
                            f"near the section lines (x {bbox[0]:.1f} to {bbox[2]:.1f}, "
                            f"y {bbox[1]:.1f} to {bbox[3]:.1f}): is it the map of this "
                            "area, with the right CRS?")
    raise MapLayerError(f"{path.name}: layer {units_layer!r} has no unit polygons "
                        "(no features with a geometry)")


def _layer_box(bbox, layer_crs, target) -> tuple[float, float, float, float]:
    """``bbox`` (in ``target``) in the layer's CRS, for a spatially filtered read."""
    if layer_crs is None or target is None or same_crs(layer_crs, target):
        return tuple(float(v) for v in bbox)
    t = pyproj.Transformer.from_crs(target, layer_crs, always_xy=True)
    return tuple(float(v) for v in t.transform_bounds(*bbox, densify_pts=21))


def _to_target(box, layer_crs, target) -> tuple[float, float, float, float]:
    if layer_crs is None or target is None or same_crs(layer_crs, target):
        return box
    t = pyproj.Transformer.from_crs(layer_crs, target, always_xy=True)
    return tuple(float(v) for v in t.transform_bounds(*box, densify_pts=21))


def _clean(df: gpd.GeoDataFrame, kinds: tuple[str, ...], where: str, warn: Warn) \
        -> gpd.GeoDataFrame:
    """Drop empty geometries, refuse the wrong geometry type, repair invalid polygons."""
    if df.geometry is None or "geometry" not in df:
        raise MapLayerError(f"{where}: has no geometry")
    geoms = df.geometry.values
    empty = shapely.is_missing(geoms) | shapely.is_empty(geoms)
    if empty.any():
        warn(f"{where}: {int(empty.sum())} feature(s) without geometry ignored")
        df = df[~empty].copy()
    names = set(df.geometry.geom_type.unique())
    bad = sorted(names - set(kinds))
    if bad:
        raise MapLayerError(f"{where}: holds {', '.join(bad)} features; expected "
                            f"{' or '.join(kinds)}")
    if "Polygon" in kinds:
        invalid = ~shapely.is_valid(df.geometry.values)
        if invalid.any():
            warn(f"{where}: {int(invalid.sum())} invalid polygon(s) repaired")
            fixed = shapely.make_valid(df.geometry.values[invalid])
            # Keep only the areal parts of a repaired polygon.
            fixed = [shapely.union_all([p for p in shapely.get_parts(g)
                                        if p.geom_type in _POLYGONS]) for g in fixed]
            df = df.copy()
            df.loc[invalid, df.geometry.name] = fixed
    return df.reset_index(drop=True)


def _warn_overlaps(units: gpd.GeoDataFrame, unit_field: str, where: str, warn: Warn,
                   grid: int = 128, shown: int = 3) -> None:
    """Warn where unit polygons overlap: a point of the map would belong to two units.

    The map's extent is sampled on a ``grid`` x ``grid`` lattice (prepared
    point-in-polygon tests, cheap even for detailed polygons); for each pair of
    polygons found sharing a lattice point the overlap is measured exactly, and
    the ``shown`` largest are named with their units, area and a point inside.
    Overlaps narrower than a lattice cell (1/``grid`` of the extent) may pass
    unseen: digitising slivers that small do not change a section.
    """
    geoms = np.asarray(units.geometry.values, dtype=object)
    if len(geoms) < 2:
        return
    left, bottom, right, top = (float(v) for v in units.total_bounds)
    cell = max(right - left, top - bottom) / grid
    if not np.isfinite(cell) or cell <= 0:
        return
    xs = np.arange(left + cell / 2, right, cell)
    ys = np.arange(bottom + cell / 2, top, cell)
    owner = np.full((len(ys), len(xs)), -1, np.intp)
    pairs: set[tuple[int, int]] = set()
    shapely.prepare(geoms)
    for k, (x0, y0, x1, y1) in enumerate(shapely.bounds(geoms)):
        c0, c1 = np.searchsorted(xs, [x0, x1])
        r0, r1 = np.searchsorted(ys, [y0, y1])
        if c0 >= c1 or r0 >= r1:
            continue
        xx, yy = np.meshgrid(xs[c0:c1], ys[r0:r1])
        inside = shapely.contains_xy(geoms[k], xx, yy)
        block = owner[r0:r1, c0:c1]
        pairs |= {(int(a), k) for a in np.unique(block[inside & (block >= 0)])}
        block[inside & (block < 0)] = k
    if not pairs:
        return
    left_i, right_i = np.array(sorted(pairs)).T
    with np.errstate(all="ignore"):
        inter = shapely.intersection(geoms[left_i], geoms[right_i])
    area = shapely.area(inter)
    names = units[unit_field].to_numpy()
    order = np.argsort(-area)
    parts = []
    for k in order[:shown]:
        p = shapely.point_on_surface(inter[k])
        parts.append(f"{names[left_i[k]]} (feature {left_i[k] + 1}) and {names[right_i[k]]} "
                     f"(feature {right_i[k] + 1}) overlap by {area[k]:.1f} m² "
                     f"near ({p.x:.1f}, {p.y:.1f})")
    more = f"; and {len(order) - shown} more overlap(s)" if len(order) > shown else ""
    warn(f"{where}: unit polygons overlap: {'; '.join(parts)}{more}; the section takes one "
         "unit there: fix the map")


def _check_fault_values(df: gpd.GeoDataFrame, roles: dict[str, str], where: str) -> None:
    for role, lo, hi in (("dip", 0.0, 90.0), ("dip_direction", 0.0, 360.0)):
        if role not in roles:
            continue
        col = roles[role]
        vals = pd.to_numeric(df[col], errors="coerce").to_numpy(float)
        # an empty dip is allowed (the project's dip is used); a wrong one is not
        missing = df[col].isna().to_numpy() if role == "dip" else np.zeros(len(vals), bool)
        bad = np.flatnonzero(~missing & (~np.isfinite(vals) | (vals < lo) | (vals > hi)))
        if len(bad):
            i = int(bad[0])
            raise MapLayerError(f"{where}: feature {i + 1}: {col} = {_shown(df[col].iloc[i])}, "
                                f"expected a number {lo:g}-{hi:g}")
        df[col] = vals


def _shown(value) -> str:
    """A field value for a message: numbers without exponent, anything else quoted."""
    if isinstance(value, int | float | np.number) and not isinstance(value, bool):
        return human(float(value))
    return repr(value if not isinstance(value, np.generic) else value.item())


def _crs_name(crs) -> str:
    crs = pyproj.CRS(crs)
    epsg = crs.to_epsg()
    return f"EPSG:{epsg}" if epsg else crs.name


__all__ = ["read_map"]
