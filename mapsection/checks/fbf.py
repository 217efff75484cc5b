"""Fault-bend folding after Suppe (1983, Geometry and kinematics of fault-bend
folding, American Journal of Science 283): the comparison of a draft's hanging wall with
the forward model. The model itself (Suppe's mode-I relations and the kink-band
migration forward model) lives in :mod:`mapsection.models.fbf` and is re-exported here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString

from ..models.fbf import (
    FBFHorizon,
    FBFModel,
    ModelAxialSurface,
    axial_angle,
    fault_bend_angle,
    fault_bend_fold,
    front_limb_dip,
    slip_ratio,
)
from .geometry import fault_blocks, joined_horizons

__all__ = [
    "FBFModel",
    "FBFHorizon",
    "ModelAxialSurface",
    "FBFMisfit",
    "axial_angle",
    "fault_bend_angle",
    "slip_ratio",
    "front_limb_dip",
    "fault_bend_fold",
    "compare_with_draft",
]


# --- comparison with a draft ------------------------------------------------------


@dataclass(frozen=True)
class FBFMisfit:
    fault: str
    rms_m: float
    max_m: float
    max_at_m: float  # distance of the worst misfit
    n_points: int
    per_horizon: dict[str, float]  # top_of -> RMS misfit, metres
    # Largest distance along the line from a model hinge (an axial surface meeting a
    # horizon) to the nearest hinge of the draft's horizon (NaN: no kinked hinge to compare,
    # e.g. a Busk arc draft).
    hinge_offset_m: float = float("nan")
    hinge_at_m: float = float("nan")  # the model hinge farthest from the draft's

    def to_dict(self) -> dict:
        return {"fault": self.fault, "rms_m": self.rms_m, "max_m": self.max_m,
                "max_at_m": self.max_at_m, "n_points": self.n_points,
                "per_horizon_rms_m": dict(self.per_horizon),
                "hinge_offset_m": self.hinge_offset_m, "hinge_at_m": self.hinge_at_m}


def _kink_x(c: np.ndarray, min_deg: float = 2.0) -> np.ndarray:
    """Distances of the vertices where a line turns by more than ``min_deg``."""
    d = np.diff(c, axis=0)
    keep = np.hypot(d[:, 0], d[:, 1]) > 1e-9
    d, starts = d[keep], c[:-1][keep]
    if len(d) < 2:
        return np.empty(0)
    a = np.degrees(np.arctan2(d[:, 1], d[:, 0]))
    turn = np.abs((np.diff(a) + 180.0) % 360.0 - 180.0)
    return starts[1:][turn > min_deg, 0]


def _y_at(line: LineString, xs: np.ndarray) -> np.ndarray:
    c = np.asarray(line.coords)[:, :2]
    order = np.argsort(c[:, 0], kind="stable")
    return np.interp(xs, c[order, 0], c[order, 1], left=np.nan, right=np.nan)


def compare_with_draft(draft, fault, model: FBFModel, *, n: int = 200) -> FBFMisfit:
    """RMS elevation misfit (m) of the draft's hanging-wall horizons against the model.

    Compared within the model's fold (from axial surface A to B' of each horizon)
    and within the draft's own fold (where its horizon leaves the level of its
    hinterland end by more than 1 m), wherever the draft's hanging-wall horizon of
    the same ``top_of`` exists: a fold drawn in the wrong place is compared too.
    """
    name = fault.name if hasattr(fault, "name") else str(fault)
    fb = fault_blocks(draft).get(name)
    joined = joined_horizons(draft)
    res_all, x_all, per = [], [], {}
    hinge_off: list[tuple[float, float]] = []
    for mh in model.horizons:
        if fb is None:
            break
        line = joined.get((mh.name, fb.hanging_wall))
        if line is None:
            continue
        lc = np.asarray(line.coords)[:, :2]
        lx = lc[:, 0]
        # the draft's fold: where it leaves the level of its hinterland end
        regional = lc[0, 1] if model.direction > 0 else lc[-1, 1]
        off = lx[np.abs(lc[:, 1] - regional) > 1.0]
        f0, f1 = mh.fold_x
        if len(off):
            f0, f1 = min(f0, float(off.min())), max(f1, float(off.max()))
        lo, hi = max(f0, lx.min()), min(f1, lx.max())
        if hi <= lo:
            continue
        xs = np.linspace(lo, hi, n)
        d = _y_at(line, xs) - _y_at(mh.geometry, xs)
        ok = np.isfinite(d)
        if not ok.any():
            continue
        per[mh.name] = float(np.sqrt(np.mean(d[ok] ** 2)))
        res_all.append(d[ok])
        x_all.append(xs[ok])
        # Hinges: where the model's axial surfaces meet the horizon, against the draft's kinks.
        kinks = _kink_x(lc)
        for ax in model.axial_surfaces:
            hit = ax.geometry.intersection(mh.geometry)
            for px in np.asarray(shapely.get_coordinates(hit))[:, 0]:
                if len(kinks) and lx.min() < px < lx.max():
                    hinge_off.append((float(np.min(np.abs(kinks - px))), float(px)))
    if not res_all:
        return FBFMisfit(name, float("nan"), float("nan"), float("nan"), 0, {})
    d = np.concatenate(res_all)
    x = np.concatenate(x_all)
    i = int(np.argmax(np.abs(d)))
    h_off, h_at = max(hinge_off) if hinge_off else (float("nan"), float("nan"))
    return FBFMisfit(name, float(np.sqrt(np.mean(d**2))), float(abs(d[i])), float(x[i]),
                     int(len(d)), per, h_off, h_at)
