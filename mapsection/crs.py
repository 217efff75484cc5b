"""Coordinate reference systems, compared one way and transformed with transformers
built once per pair of CRSs.

Examples
--------
>>> from mapsection.crs import same_crs, transformer
>>> same_crs("EPSG:32611", "EPSG:32611"), same_crs("EPSG:32611", None)
(True, True)
>>> transformer("EPSG:32611", "EPSG:32611") is None
True
"""

from __future__ import annotations

from functools import lru_cache

import pyproj


def as_crs(crs) -> pyproj.CRS | None:
    """``crs`` as a :class:`pyproj.CRS` (None stays None; a CRS object is kept as is)."""
    if crs is None or isinstance(crs, pyproj.CRS):
        return crs
    return pyproj.CRS(crs)


def same_crs(a, b) -> bool:
    """True when two CRSs are the same, or when either is unknown (None)."""
    return a is None or b is None or a is b or as_crs(a) == as_crs(b)


@lru_cache(maxsize=64)
def _transformer(src_wkt: str, dst_wkt: str) -> pyproj.Transformer | None:
    src, dst = pyproj.CRS.from_wkt(src_wkt), pyproj.CRS.from_wkt(dst_wkt)
    if src == dst:
        return None
    return pyproj.Transformer.from_crs(src, dst, always_xy=True)


def transformer(src, dst) -> pyproj.Transformer | None:
    """The (x, y order) transformer from ``src`` to ``dst``, built once per pair of CRSs;
    None when they are the same CRS."""
    return _transformer(as_crs(src).to_wkt(), as_crs(dst).to_wkt())


__all__ = ["as_crs", "same_crs", "transformer"]
