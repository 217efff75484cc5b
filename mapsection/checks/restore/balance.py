"""Line-length balance (Dahlstrom 1969): each horizon's deformed and restored lengths, and
how far the horizons that reach the loose line agree; the restored units between them."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from shapely.geometry import Polygon

from ...stratigraphy import horizon_name
from .flatten import unit_pairs
from .results import HorizonBalance, RestoredHorizon, RestoredUnit


def restored_units(column, pieces: list[RestoredHorizon]) -> list[RestoredUnit]:
    """Restored units between consecutive horizons of a block."""
    units: list[RestoredUnit] = []
    by_block: dict[int, dict[str, RestoredHorizon]] = {}
    for rp in pieces:
        by_block.setdefault(rp.block, {})[rp.top_of] = rp
    for b, rps in by_block.items():
        for top, base in unit_pairs(column, set(rps)):
            a, c = rps[top], rps[base]
            poly = Polygon([(a.restored_x0_m, a.restored_elevation_m),
                            (a.restored_x1_m, a.restored_elevation_m),
                            (c.restored_x1_m, c.restored_elevation_m),
                            (c.restored_x0_m, c.restored_elevation_m)])
            if not poly.is_valid:
                poly = poly.buffer(0)
            units.append(RestoredUnit(top, b, base, a.restored_elevation_m - c.restored_elevation_m,
                                      poly, float(poly.area)))
    return units


def horizon_balances(pieces: list[RestoredHorizon], ys: dict[str, float], pin: float,
                      loose: float, direction: int, tol: float) -> list[HorizonBalance]:
    """Per horizon: lengths, shortening, where it restores at the loose line."""
    balances: list[HorizonBalance] = []
    for t in sorted(ys, key=lambda t: -ys[t]):
        rps = [rp for rp in pieces if rp.top_of == t]
        if not rps:
            continue
        far_def = max(rp.deformed_x1_m * direction for rp in rps) * direction
        far_res = max(rp.restored_x1_m * direction for rp in rps) * direction
        deformed = direction * (far_def - pin)
        restored = direction * (far_res - pin)
        bed = sum(rp.bed_length_m for rp in rps)
        short = restored - deformed
        pct = 100.0 * short / restored if restored > 0 else float("nan")
        balances.append(HorizonBalance(t, ys[t], float(deformed), float(bed), float(restored),
                                       float(short), float(pct), bool(abs(far_def - loose) <= tol),
                                       float(far_res)))
    return balances


@dataclass(frozen=True)
class LineLengths:
    """The line-length balance of the horizons that reach the loose line."""

    mismatch_pct: float
    loose_spread_m: float
    loose_angle_deg: float
    loose_departure_m: float
    shortening_pct: float
    shortening_m: float
    failures: list[str]


def line_lengths(balances: list[HorizonBalance], loose: float, direction: int,
                  threshold_pct: float) -> LineLengths:
    full = [h for h in balances if h.reaches_loose]
    failures: list[str] = []
    if full:
        lengths = np.array([h.restored_length_m for h in full])
        mismatch = float(100.0 * (lengths.max() - lengths.min()) / lengths.mean())
        xs = np.array([h.restored_loose_x_m for h in full])
        yv = np.array([h.restored_elevation_m for h in full])
        spread = float(xs.max() - xs.min())
        if len(full) >= 2 and np.ptp(yv) > 0:
            slope, icpt = np.polyfit(yv, xs, 1)
            # From the vertical; positive when the upper horizons restore longer.
            angle = float(np.degrees(np.arctan(direction * slope)))
            departure = float(np.max(np.abs(xs - (icpt + slope * yv))))
        else:
            angle, departure = 0.0, 0.0
        short_pct = float(np.mean([h.shortening_pct for h in full]))
        short_m = float(np.mean([h.shortening_m for h in full]))
        if mismatch > threshold_pct:
            worst = max(full, key=lambda h: abs(h.restored_length_m - lengths.mean()))
            failures.append(f"restored line lengths spread {mismatch:.2f} % "
                            f"(> {threshold_pct:g} %); farthest from the mean: "
                            f"{horizon_name(worst.top_of)}, "
                            f"{worst.restored_length_m:.0f} m against {lengths.mean():.0f} m")
    else:
        mismatch = spread = angle = departure = short_pct = short_m = float("nan")
        failures.append(f"no horizon reaches the loose line at {loose:.1f} m")
    missing = [h.top_of for h in balances if not h.reaches_loose]
    if missing and full:
        failures.append("horizons ending before the loose line (not in the balance): "
                        + ", ".join(missing))
    return LineLengths(mismatch, spread, angle, departure, short_pct, short_m, failures)


__all__ = ["LineLengths", "horizon_balances", "line_lengths", "restored_units"]
