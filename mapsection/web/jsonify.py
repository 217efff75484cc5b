"""The section page's JSON: numbers, geometries, sections, drafts, checks and map layers.

Pure functions from the library's values (a section's data, a draft, the checks'
key figures, the map) to the plain dicts and lists the page reads (docs/view.md
lists their fields). Numbers are rounded for a small response; NaN and
infinities become null, so that every response is valid JSON.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np
import shapely

from ..checks.results import TESTS
from ..render.colours import fault_kind

__all__ = ["attitudes_collection", "checks_json", "coords", "draft_json", "faults_collection",
           "feature_collection", "not_tested", "num", "num_list", "page_figures", "rings",
           "rounded", "section_json", "spec_json", "summary_line", "units_collection"]


# --- numbers and geometries -------------------------------------------------------------
def num_list(values, ndigits: int = 2) -> list[float | None]:
    """Floats rounded for JSON, NaN and infinities as null."""
    a = np.round(np.asarray(values, float), ndigits)
    ok = np.isfinite(a)
    if ok.all():
        return a.tolist()
    return [v if f else None for v, f in zip(a.tolist(), ok.tolist(), strict=True)]


def num(value, ndigits: int = 3) -> float | None:
    """One float rounded for JSON; None (null) for NaN, infinities and non-numbers."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return None
    return round(v, ndigits) if math.isfinite(v) else None


def _text(value) -> str | None:
    """A map attribute as text; None (null) where it is missing or NaN."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    return str(value)


def coords(geom, ndigits: int = 2) -> list[list[list[float]]]:
    """The parts of a (multi)line as lists of [x, y] pairs."""
    if geom is None or geom.is_empty:
        return []
    parts = getattr(geom, "geoms", [geom])
    return [np.round(shapely.get_coordinates(p), ndigits).tolist() for p in parts]


def rings(geom, ndigits: int = 2) -> list[list[list[list[float]]]]:
    """The polygons of a (multi)polygon, each a list of rings of [x, y] pairs."""
    if geom is None or geom.is_empty:
        return []
    polys = getattr(geom, "geoms", [geom])
    out = []
    for p in polys:
        if p.geom_type != "Polygon" or p.is_empty:
            continue
        rs = [p.exterior, *p.interiors]
        out.append([np.round(shapely.get_coordinates(r), ndigits).tolist() for r in rs])
    return out


def rounded(geo: dict, ndigits: int = 7) -> dict:
    """A GeoJSON geometry mapping with coordinates rounded (smaller JSON)."""
    def r(c):
        if isinstance(c, tuple | list) and c and isinstance(c[0], int | float):
            return [round(float(v), ndigits) for v in c[:2]]
        return [r(v) for v in c]
    return {"type": geo["type"], "coordinates": r(geo["coordinates"])}


# --- the map's layers, GeoJSON in EPSG:4326 -----------------------------------------------
def feature_collection(geoms: Iterable, properties: Iterable[dict]) -> dict:
    """A GeoJSON FeatureCollection of the non-empty ``geoms``, each with its ``properties``."""
    feats = [{"type": "Feature", "properties": props,
              "geometry": rounded(shapely.geometry.mapping(g))}
             for g, props in zip(geoms, properties, strict=True)
             if g is not None and not g.is_empty]
    return {"type": "FeatureCollection", "features": feats}


def units_collection(map_data, colours: Mapping[str, str]) -> dict:
    """The map's unit polygons with their unit name and colour."""
    md = map_data
    geoms = md.units.geometry.to_crs("EPSG:4326") if md.crs is not None \
        else md.units.geometry
    return feature_collection(geoms, ({"unit": name, "colour": colours.get(name)}
                                      for name in md.unit_names))


def faults_collection(map_data) -> dict:
    """The map's faults with their name, dip, dip direction, sense and kind of line."""
    md = map_data
    if md.faults is None or not len(md.faults):
        return feature_collection([], [])
    rows = np.arange(len(md.faults))
    cols = {r: md.fault_value(r, rows) for r in ("dip", "dip_direction", "sense", "name")}
    props = []
    for i in range(len(rows)):
        sense = _text(cols["sense"][i])
        props.append({"name": _text(cols["name"][i]), "dip": num(cols["dip"][i], 1),
                      "dip_direction": num(cols["dip_direction"][i], 1),
                      "sense": sense, "kind": fault_kind(sense)})
    return feature_collection(md.faults.geometry.to_crs("EPSG:4326"), props)


def attitudes_collection(attitudes, to_lonlat) -> dict:
    """The attitudes as points with their id, strike, dip and whether overturned."""
    a = attitudes
    lon, lat = to_lonlat.transform(np.asarray(a.x, float), np.asarray(a.y, float))
    ids = [str(v) for v in np.asarray(a.id).tolist()]
    strike = num_list(a.strike, 1)
    dip = num_list(a.dip, 1)
    over = np.asarray(a.overturned, bool).tolist()
    feats = [{"type": "Feature",
              "geometry": {"type": "Point", "coordinates": [round(x, 7), round(y, 7)]},
              "properties": {"id": i, "strike": s, "dip": d, "overturned": o}}
             for x, y, i, s, d, o in zip(lon.tolist(), lat.tolist(), ids, strike, dip,
                                         over, strict=True)]
    return {"type": "FeatureCollection", "features": feats}


def spec_json(s) -> dict:
    """A project section's name, line and settings as the page lists them."""
    return {"name": s.name, "line": [list(map(float, v)) for v in s.line],
            "corridor_m": s.corridor, "method": s.method, "projection": s.projection,
            "ve": s.ve}


# --- a section, its draft and its checks --------------------------------------------------
def section_json(data, colours: Mapping[str, str]) -> dict:
    """A section's line, profile, surface geology and apparent dips."""
    prof, geo, dips = data.profile, data.geology, data.dips
    col = colours
    return {
        "line": {"vertices": np.round(data.line.vertices, 2).tolist(),
                 "length_m": round(float(data.line.length), 2)},
        "profile": {"distance_m": num_list(prof.distance, 1),
                    "elevation_m": num_list(prof.z, 1)},
        "geology": {
            "intervals": [{"start_m": num(i.start_m, 1), "end_m": num(i.end_m, 1),
                           "unit": i.unit, "colour": col.get(i.unit)}
                          for i in geo.intervals],
            "contacts": [{"distance_m": num(c.distance_m, 1),
                          "elevation_m": num(c.elevation_m, 1),
                          "unit_before": c.unit_before, "unit_after": c.unit_after}
                         for c in geo.contacts],
            "faults": [{"distance_m": num(f.distance_m, 1),
                        "elevation_m": num(f.elevation_m, 1),
                        "apparent_dip": num(f.apparent_dip, 1), "sense": f.sense,
                        "name": f.name} for f in geo.faults],
        },
        "dips": {"distance_m": num_list(dips.distance_m, 1),
                 "elevation_m": num_list(dips.elevation_m, 1),
                 "apparent_dip": num_list(dips.apparent_dip, 1),
                 "id": [str(v) for v in np.asarray(dips.id).tolist()],
                 "poorly_constrained": np.asarray(dips.poorly_constrained, bool).tolist()},
    }


def draft_json(draft, colours: Mapping[str, str]) -> dict:
    """A draft's horizons, faults and unit polygons, base elevation and method."""
    col = colours
    return {
        "horizons": [{"top_of": h.top_of, "colour": col.get(h.top_of),
                      "above_ground": bool(h.above_ground), "block": int(h.block),
                      "parts": coords(h.geometry)} for h in draft.horizons],
        "faults": [{"name": f.name, "sense": f.sense,
                    "apparent_dip": num(f.apparent_dip, 1), "parts": coords(f.geometry)}
                   for f in draft.faults],
        "units": [{"unit": u.unit, "colour": col.get(u.unit), "block": int(u.block),
                   "polygons": rings(u.geometry)} for u in draft.units],
        "base_elevation_m": num(draft.base_elevation_m, 1),
        "method": draft.method,
    }


def page_figures(key) -> dict[str, dict[str, Any]]:
    """The few figures the page shows beside each verdict, from the one set of key figures
    (:func:`mapsection.checks.key_figures`) the command line and the report use too."""
    t, r, a, k = key.topography, key.restoration, key.area_balance, key.kinematics
    worst_cutoff = [f.worst_mismatch_m for f in r.faults if math.isfinite(f.worst_mismatch_m)]
    area: dict[str, Any] = {"worst_unit": a.worst_unit or None,
                            "worst_mismatch_pct": num(a.worst_mismatch_pct, 2)}
    if a.detachment is not None and a.detachment.reliable:
        area["depth_to_detachment_m"] = num(a.detachment.depth_to_detachment_m, 0)
    return {
        "topography": {"contact_rms_m": num(t.contact_rms_m, 1),
                       "contact_threshold_m": num(t.contact_threshold_m, 1),
                       "unit_agreement": num(t.unit_agreement, 3),
                       "dip_rms_deg": num(t.dip_rms_deg, 1)},
        "restoration": {"shortening_pct": num(r.shortening_pct, 1),
                        "shortening_m": num(r.shortening_m, 0),
                        "line_length_mismatch_pct": num(r.line_length_mismatch_pct, 2),
                        **({"worst_cutoff_mismatch_m": num(max(worst_cutoff), 0)}
                           if worst_cutoff else {})},
        "area_balance": area,
        "kinematics": {"inconsistencies": k.inconsistencies, "transport": k.transport_direction,
                       # a count only of what was compared (never "0 compared")
                       **({"fault_bend_folds": int(k.fault_bend["compared"])}
                          if k.fault_bend.get("compared") else
                          {"fault_bend_fold_comparison": "not tested"})},
    }


def checks_json(key) -> dict:
    """Each test's status, figures and first reasons, from the checks' key figures."""
    figures = page_figures(key)
    return {t: {"status": key.statuses[t], "figures": figures[t],
                "reasons": list(getattr(key, t).reasons)[:8]} for t in TESTS}


def not_tested(why: str) -> dict[str, dict]:
    """Every test not tested, for the one reason ``why``."""
    return {t: {"status": "not_tested", "figures": {}, "reasons": [why]} for t in TESTS}


def summary_line(key) -> str:
    """Each test's verdict of a build (its key figures), on one line."""
    if key is None:
        return "no check results"
    words = {"pass": "pass", "fail": "FAIL", "not_tested": "not tested"}
    return ", ".join(f"{t.replace('_', ' ')} {words[st]}" for t, st in key.statuses.items())
