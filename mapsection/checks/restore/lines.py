"""The pin and loose lines of a restoration (Dahlstrom 1969): given, or by default at the
ends of the section where every horizon exists, the pin in the least-dipping end domain;
checked to lie inside the section and clear of the faults."""

from __future__ import annotations

import numpy as np
from shapely.geometry import LineString

from ...draft import Draft
from ...errors import CheckError
from ..geometry import line_xy


def _vertical_hits_fault(draft: Draft, x: float, lo_y: float, hi_y: float) -> str | None:
    v = LineString([(x, lo_y), (x, hi_y)])
    for f in draft.faults:
        if f.geometry is not None and not f.geometry.is_empty and f.geometry.intersects(v):
            return f.name
    return None


def _y_range(draft: Draft, joined) -> tuple[float, float]:
    # The horizons' depth range: a detachment flat below every horizon does not count.
    ys = [(line_xy(g)[:, 1].min(), line_xy(g)[:, 1].max()) for g in joined.values()]
    lo = min(y[0] for y in ys)
    hi = max(y[1] for y in ys)
    return float(lo), float(hi)


def _common_range(joined) -> tuple[float, float]:
    ext: dict[str, list[float]] = {}
    for (top_of, _), g in joined.items():
        c = line_xy(g)[:, 0]
        e = ext.setdefault(top_of, [np.inf, -np.inf])
        e[0], e[1] = min(e[0], c.min()), max(e[1], c.max())
    lo = max(e[0] for e in ext.values())
    hi = min(e[1] for e in ext.values())
    if hi <= lo:  # no distance where every horizon exists: use the widest
        lo = min(e[0] for e in ext.values())
        hi = max(e[1] for e in ext.values())
    return float(lo), float(hi)


def _default_lines(draft: Draft, joined, y_lo, y_hi) -> tuple[float, float, bool, str]:
    lo, hi = _common_range(joined)
    inset = 1e-6 * max(draft.line.length, 1.0)
    lo, hi = lo + inset, hi - inset
    at_start = True
    why = "start of the section (no dip domains)"
    if draft.domains:
        first = min(draft.domains, key=lambda d: d.start_m)
        last = max(draft.domains, key=lambda d: d.end_m)
        at_start = abs(first.dip) <= abs(last.dip)
        why = (f"{'start' if at_start else 'end'} of the section, in its least-dipping end "
               f"domain ({abs(first.dip if at_start else last.dip):.1f} degrees)")

    def clear(x: float, inward: int) -> float:
        # Step a default line inward past any fault that it would cut.
        for _ in range(len(draft.faults) + 1):
            name = _vertical_hits_fault(draft, x, y_lo, y_hi)
            if name is None:
                return x
            f = next(f for f in draft.faults if f.name == name)
            fx = line_xy(f.geometry)[:, 0]
            x = (fx.max() if inward > 0 else fx.min()) + inward * 1.0
        return x

    return float(clear(lo, +1)), float(clear(hi, -1)), at_start, "default: " + why


def _check_line(draft: Draft, what: str, x: float, y_lo: float, y_hi: float) -> None:
    name = draft.name or "(unnamed)"
    if x is None or not np.isfinite(x) or x < 0.0 or x > draft.line.length:
        raise CheckError(f"section {name}: {what} line at {x} m lies outside the section "
                         f"(0 to {draft.line.length:.1f} m)")
    hit = _vertical_hits_fault(draft, x, y_lo, y_hi)
    if hit is not None:
        raise CheckError(f"section {name}: {what} line at {x:.1f} m crosses fault {hit}; "
                         "place it inside one fault block")


def pin_and_loose(draft: Draft, joined, pin: float | None, loose: float | None
                   ) -> tuple[float, float, str]:
    """The pin and loose lines, given or by default, and how they were chosen; checked to
    lie inside the section, clear of the faults and apart."""
    name = draft.name or "(unnamed)"
    y_lo, y_hi = _y_range(draft, joined)
    if pin is None and loose is None:
        a, b, at_start, source = _default_lines(draft, joined, y_lo, y_hi)
        pin, loose = (a, b) if at_start else (b, a)
    elif pin is None or loose is None:
        # One line given: the other goes to the farther default end.
        a, b, _, _ = _default_lines(draft, joined, y_lo, y_hi)
        given = float(pin if pin is not None else loose)
        other = a if abs(a - given) > abs(b - given) else b
        pin, loose = (given, other) if pin is not None else (other, given)
        source = "given pin, default loose line" if pin == given else "given loose, default pin"
    else:
        pin, loose, source = float(pin), float(loose), "given"
    _check_line(draft, "pin", pin, y_lo, y_hi)
    _check_line(draft, "loose", loose, y_lo, y_hi)
    if abs(loose - pin) < 1e-6:
        raise CheckError(f"section {name}: pin and loose lines coincide at {pin:.1f} m")
    return pin, loose, source


__all__ = ["pin_and_loose"]
