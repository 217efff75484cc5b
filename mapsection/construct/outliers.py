"""Readings that one reading alone would make into a dip domain, kept out of the domains
before they are grouped (:func:`mapsection.construct.domains.screen_readings`), each
block on its own (readings across a fault are not compared), and listed: in the log
and as ``draft.outliers``.

The geologist keeps a reading in anyway by its id (``keep``; the project's
``[attitudes] keep_readings``).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Iterable

import numpy as np

from ..dips import ProjectedDips
from ..draft import DipOutlier
from ..notes import Notes
from .domains import plane_dip, screen_readings, travel_angle


def subset_dips(dips: ProjectedDips, mask) -> ProjectedDips:
    """The readings of ``dips`` where ``mask`` holds (every per-reading array cut alike)."""
    m = np.asarray(mask, bool)
    return dataclasses.replace(dips, **{f.name: np.asarray(getattr(dips, f.name))[m]
                                        for f in dataclasses.fields(dips)})


Support = Callable[[float, float, np.ndarray, int], bool]


def screen_dips(dips: ProjectedDips, ranges: list[tuple[float, float]], tolerance: float,
                keep: Iterable[str] = (), notes: Notes | None = None,
                support: Support | None = None) -> tuple[ProjectedDips, list[DipOutlier]]:
    """The readings that make dip domains, and those kept out of them.

    Parameters
    ----------
    dips
        The attitudes projected into the section.
    ranges
        Each fault block's stretch of ground (``start``, ``end``) along the line.
    tolerance
        The section's dip tolerance, degrees.
    keep
        Ids of readings the geologist keeps whatever their neighbours say.
    notes
        Where the log lines go (one per reading left out).
    support
        ``support(start, end, used, i)``: whether the map contacts of the block
        ``start``-``end`` need reading ``i`` as a dip domain of its own, given the readings
        ``used`` (a mask) without it; such a reading stays (a domain "supported by a
        contact").

    Returns
    -------
    (ProjectedDips, list of DipOutlier)
        The readings left in (the others untouched: poorly constrained or non-finite
        readings are left as they are, for the construction's own rules), and the ones
        left out, by distance.

    Examples
    --------
    >>> import numpy as np
    >>> from mapsection.dips import ProjectedDips
    >>> d = np.arange(7) * 100.0
    >>> app = np.array([30, 31, 29, 70, 30, 31, 30.0])
    >>> z = np.zeros(7)
    >>> pd = ProjectedDips(np.array([f"s{i}" for i in range(7)]), d, z, d, z, z, z, app,
    ...                    app, np.zeros(7, bool), np.zeros(7, bool))
    >>> kept, out = screen_dips(pd, [(0.0, 1000.0)], 5.0)
    >>> len(kept), [o.id for o in out]
    (6, ['s3'])
    """
    if dips is None or len(dips) == 0:
        return dips, []
    keep_ids = {str(k) for k in keep}
    d = np.asarray(dips.distance_m, float)
    a = np.asarray(dips.apparent_dip, float)
    ok = np.isfinite(d) & np.isfinite(a)
    poor = np.asarray(dips.poorly_constrained, bool)
    if (poor & ok).any() and not poor[ok].all():
        ok &= ~poor  # the construction leaves these out anyway (see section_dips)
    phi = travel_angle(np.where(ok, a, 0.0), np.asarray(dips.overturned, bool))
    ids = np.array([str(v) for v in dips.id], dtype=object)
    kept_mark = np.array([i in keep_ids for i in ids], bool)
    out_mask = np.zeros(len(d), bool)
    found: list[DipOutlier] = []
    for b, (lo, hi) in enumerate(ranges):
        idx = np.flatnonzero(ok & (d >= lo) & (d < hi))
        if len(idx) < 2:
            continue
        sc = screen_readings(d[idx], phi[idx], tolerance, kept_mark[idx])
        for k in np.flatnonzero(sc.left_out):
            out_mask[idx[k]] = True
        for k in np.flatnonzero(sc.left_out):
            i = idx[k]
            if support is not None and support(lo, hi, ~out_mask, int(i)):
                out_mask[i] = False
                if notes is not None:
                    notes.log(f"reading {ids[i]} at {d[i]:.0f} m (block {b}): "
                              f"{sc.why[k]}; kept: the map contacts need it (a dip domain "
                              "supported by the contacts)")
                continue
            exp = float(plane_dip(sc.expected[k]))
            app = float(plane_dip(phi[i]))
            found.append(DipOutlier(str(ids[i]), float(d[i]), float(dips.elevation_m[i]),
                                    app, exp, app - exp, sc.kind[k], sc.why[k], b))
    for o in sorted(found, key=lambda o: o.distance_m):
        if notes is not None:
            what = "outlier" if o.kind == "outlier" else "hinge reading"
            notes.log(f"{what} {o.id} at {o.distance_m:.0f} m (block {o.block}): {o.why}; "
                      f"misfit {o.misfit_deg:+.1f}°; left out of the dip domains (keep it "
                      "with [attitudes] keep_readings)")
    if notes is not None and keep_ids:
        known = set(ids)
        used = sorted(keep_ids & known)
        if used:
            notes.log(f"readings kept whatever their neighbours say: {', '.join(used)}")
    found.sort(key=lambda o: o.distance_m)
    return subset_dips(dips, ~out_mask), found


__all__ = ["screen_dips", "subset_dips"]
