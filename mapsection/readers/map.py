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

from .._messages import default_warn as _default_warn
from .._messages import first_line
from ..crs import same_crs
from ..errors import MapLayerError
from ..mapdata import (
    _LINES,
    _POLYGONS,
    OPTIONAL_FAULT_FIELDS,
    REQUIRED_FAULT_FIELDS,
    MapData,
    Warn,
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
) -> MapData:
    """Read the unit polygons (and fault lines) of a geologic map.

    ``fault_fields`` maps the roles ``dip``, ``dip_direction``, ``sense`` and
    ``name`` to the column names of the faults layer (default: the role names).
    Layers in another CRS than ``crs`` are reprojected to it (said once through
    ``warn``); a layer without a CRS is taken to be in ``crs`` (with a warning).
    """
    warn = warn or _default_warn
    path = Path(path)
    target = pyproj.CRS(crs) if crs is not None else None
    if not path.exists():
        raise MapLayerError(f"{path}: no such map file")
    import pyogrio

    try:
        layers = [str(name) for name in pyogrio.list_layers(path)[:, 0]]
    except Exception as exc:  # the vector driver raises several kinds for unreadable files
        raise MapLayerError(f"{path}: not a readable map file ({first_line(exc)})") from None

    def read(layer: str, fields: list[str], role: str) -> gpd.GeoDataFrame:
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
            return pyogrio.read_dataframe(path, layer=layer)
        except Exception as exc:
            raise MapLayerError(f"{path.name}: layer {layer!r} unreadable ({first_line(exc)})") \
                from None

    units = read(units_layer, [unit_field], "unit")
    units = _clean(units, _POLYGONS, f"{path.name}: layer {units_layer!r}", warn)
    faults = None
    roles: dict[str, str] = {}
    if faults_layer is not None:
        given = dict(fault_fields or {})
        wanted = {r: given.get(r, r) for r in REQUIRED_FAULT_FIELDS + OPTIONAL_FAULT_FIELDS}
        faults = read(faults_layer, [wanted[r] for r in REQUIRED_FAULT_FIELDS], "fault")
        roles = {r: c for r, c in wanted.items() if c in faults.columns}
        faults = _clean(faults, _LINES, f"{path.name}: layer {faults_layer!r}", warn)
        _check_fault_values(faults, roles, f"{path.name}: layer {faults_layer!r}")

    # Bring every layer into one CRS; name all reprojected layers in one message.
    target = target or (pyproj.CRS(units.crs) if units.crs is not None else None)
    moved, assumed = [], []
    frames = {units_layer: units, **({faults_layer: faults} if faults is not None else {})}
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
    units = frames[units_layer]
    if faults is not None:
        faults = frames[faults_layer]
    units = units[[unit_field, "geometry"]].reset_index(drop=True)
    if units[unit_field].isna().any():
        n = int(units[unit_field].isna().sum())
        warn(f"{path.name}: layer {units_layer!r}: {n} polygon(s) with no {unit_field!r} value "
             "are treated as unmapped ground")
    return MapData(units, unit_field, faults, roles, target)


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
            v = df[col].iloc[i]
            shown = f"{float(v):g}" if isinstance(v, float | np.floating) else repr(v)
            raise MapLayerError(f"{where}: feature {i + 1}: {col} = {shown}, "
                                f"expected a number {lo:g}-{hi:g}")
        df[col] = vals


def _crs_name(crs) -> str:
    crs = pyproj.CRS(crs)
    epsg = crs.to_epsg()
    return f"EPSG:{epsg}" if epsg else crs.name


__all__ = ["read_map"]
