"""Faults in the section: their traces (a straight ramp at the apparent dip, or a ramp that
bends into a detachment flat). The fault blocks they bound, which fault cuts which, and
the separation of each horizon across each fault are :mod:`mapsection.construct.fault_regions`.

A fault crossing (distance ``d``, elevation ``z``, signed apparent dip ``a``: positive
descends toward increasing distance) becomes a ramp through ``(d, z)`` at ``a``. With a
detachment (an elevation, or the base of a named unit in the footwall) the ramp bends
into the flat there and the flat runs on under the hanging wall; with a ``radius`` the
bend is a circular arc of that radius tangent to the ramp and the flat (a listric
fault). Without a detachment the ramp runs down to the faults' depth.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
import shapely
from shapely.geometry import LineString, Point

from ..dips import apparent_dip
from ..errors import ConstructionError
from ..geology import FaultCrossing
from ..notes import Notes
from ..settings import FaultSpec
from .fault_regions import block_polygons, ground_ranges, order_crossings, separations
from .frame import SectionFrame

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..stratigraphy import Column
    from .methods import BlockModel

_MIN_FAULT_DIP = 1.0  # degrees; a flatter trace cannot bound blocks along the line
_ARC_STEP = 2.0  # degrees between the vertices of a listric bend


# What the project says of one fault ([[fault]]): the settings' own class, taken as it is.
FaultSetting = FaultSpec


@dataclass(frozen=True)
class FaultLine:
    """A fault in section space.

    ``path``: vertices from the ground point ``p0`` down the fault to the drawn lower end
    (a ramp; with a detachment, the bend and the flat out to the section's end);
    ``kinds``: what each segment of ``path`` is (``"ramp"``, ``"bend"``, ``"flat"``).
    """

    crossing: FaultCrossing
    p0: np.ndarray  # ground point (distance, elevation)
    down: np.ndarray  # unit vector down the ramp in section space
    bottom: float  # elevation of a straight trace's lower end
    path: np.ndarray = field(default=None)  # type: ignore[assignment]
    kinds: tuple[str, ...] = ()
    setting: FaultSetting | None = None

    def __post_init__(self) -> None:
        if self.path is None:
            dz = self.p0[1] - self.bottom
            length = max(dz / max(-self.down[1], 1e-9), 1e-3)
            object.__setattr__(self, "path", np.vstack([self.p0, self.p0 + length * self.down]))
            object.__setattr__(self, "kinds", ("ramp",))

    @property
    def up(self) -> np.ndarray:
        return -self.down

    @property
    def name(self) -> str:
        return self.crossing.name or f"at {self.crossing.distance_m:.0f} m"

    @property
    def detached(self) -> bool:
        return "flat" in self.kinds

    def full(self, reach: float) -> LineString:
        """The fault's line through the whole section (for cutoffs and block bounds):
        the path with its ramp extended up and its last segment extended on."""
        p = self.path
        last = p[-1] - p[-2]
        last = last / max(float(np.hypot(*last)), 1e-12)
        return LineString(np.vstack([self.p0 + reach * self.up, p[1:-1], p[-1] + reach * last]))

    def trace(self, frame: SectionFrame) -> LineString:
        """From the ground down to its lower end (clipped to the section's ends)."""
        line = LineString(self.path)
        clipped = line.intersection(shapely.box(0.0, frame.base - 1.0, frame.length, frame.top))
        if clipped.geom_type == "MultiLineString":
            clipped = shapely.line_merge(clipped)
        if clipped.geom_type == "MultiLineString":  # keep the piece from the ground point
            clipped = min(clipped.geoms, key=lambda g: g.distance(Point(self.p0)))
        return clipped if clipped.geom_type == "LineString" and not clipped.is_empty else line

    def segments(self, frame: SectionFrame) -> list[tuple[str, LineString]]:
        """The trace's segments by kind (ramp, bend, flat), consecutive ones of a kind joined."""
        box = shapely.box(0.0, frame.base - 1.0, frame.length, frame.top)
        out: list[tuple[str, list[np.ndarray]]] = []
        for i, kind in enumerate(self.kinds):
            if out and out[-1][0] == kind:
                out[-1][1].append(self.path[i + 1])
            else:
                out.append((kind, [self.path[i], self.path[i + 1]]))
        res = []
        for kind, pts in out:
            g = LineString(pts).intersection(box)
            for part in getattr(g, "geoms", [g]):
                if part.geom_type == "LineString" and part.length > 1e-6:
                    res.append((kind, part))
        return res

    @property
    def hanging_wall_right(self) -> bool:
        """True when the block toward increasing distance is the hanging wall."""
        return bool(self.down[0] > 0)


def fault_settings(specs: Sequence) -> dict[str, FaultSetting]:
    """The project's ``[[fault]]`` tables (objects with name, dip, detachment, radius,
    cuts, fold) by name."""
    return {s.name: FaultSetting(s.name, s.dip, s.detachment, getattr(s, "radius", None),
                                 tuple(getattr(s, "cuts", ())), getattr(s, "fold", None))
            for s in specs}


def fault_lines(faults, frame: SectionFrame, ground: Callable, fault_depth: float | None,
                notes: Notes, *, settings: dict[str, FaultSetting] | None = None,
                default_fault_dip: float | None = None, azimuth: Callable | None = None
                ) -> list[FaultLine]:
    """The faults the line crosses within the section, as ramps at their apparent dip.

    Parameters
    ----------
    faults
        The fault crossings of the line (:class:`~mapsection.geology.FaultCrossing`).
    frame, ground
        The section's frame and the ground elevation at distances.
    fault_depth
        Metres below the lowest ground to a straight fault's lower end (default: the
        section's base); not used by a fault with a detachment.
    notes
        The section's notes (log and warnings).
    settings
        The project's ``[[fault]]`` tables by name (:func:`fault_settings`). A detachment
        given by elevation bends the ramp into its flat here; one given by a unit is
        placed later by :func:`detach_on_horizon`, once the footwall is constructed.
    default_fault_dip
        True dip (degrees) of a fault with no dip on the map nor in its ``[[fault]]``
        (said in the log); with neither, the fault is refused.
    azimuth
        The section line's azimuth at a distance: turns a true dip taken from the
        project into the apparent dip in the section.

    Returns
    -------
    list of FaultLine
        Sorted by distance along the line.

    Examples
    --------
    >>> from mapsection.construct.frame import SectionFrame
    >>> from mapsection.geology import FaultCrossing
    >>> from mapsection.notes import Notes
    >>> f = FaultCrossing(500.0, 0.0, 30.0, 270.0, -30.0, "thrust", "T")
    >>> frame = SectionFrame(1000.0, -1000.0, 500.0, 0.0, 0.0)
    >>> (fl,) = fault_lines([f], frame, lambda x: 0.0, None, Notes(),
    ...                     settings={"T": FaultSetting("T", detachment=-300.0)})
    >>> fl.kinds, [round(float(v)) for v in fl.path[1]]
    (('ramp', 'flat'), [-20, -300])
    """
    settings = settings or {}
    bottom = frame.base if fault_depth is None else max(frame.base, frame.ground_min - fault_depth)
    out = []
    for f in sorted(faults, key=lambda f: f.distance_m):
        label = f.name or f"at {f.distance_m:.0f} m"
        st = settings.get(f.name) if f.name else None
        if not 0.0 < f.distance_m < frame.length:
            notes.log(f"fault {label}: outside the section's ends, left out")
            continue
        out.append(_fault_line(f, st, frame, ground, bottom, notes, default_fault_dip, azimuth))
        if fault_depth is not None and st is not None and st.detachment is not None:
            notes.log(f"fault {label}: fault_depth not used: the fault soles into its detachment")
    return out


def _fault_line(f: FaultCrossing, st: FaultSetting | None, frame: SectionFrame,
                ground: Callable, bottom: float, notes: Notes, default_fault_dip: float | None,
                azimuth: Callable | None) -> FaultLine:
    """One fault crossing inside the section as a ramp (bent into its detachment when
    that is given by elevation)."""
    a = float(f.apparent_dip)
    if not np.isfinite(f.dip):
        f, a = _dip_from_project(f, st, default_fault_dip, azimuth, notes)
    z = f.elevation_m if np.isfinite(f.elevation_m) else float(ground(f.distance_m))
    fl = FaultLine(f, np.array([f.distance_m, z], float), _down_dip(f, a, notes), bottom,
                   setting=st)
    if st is not None and isinstance(st.detachment, float):
        fl = _detach_at_elevation(fl, st.detachment, frame, notes)
    return fl


def _down_dip(f: FaultCrossing, a: float, notes: Notes) -> np.ndarray:
    """Unit vector down the fault from its trace at apparent dip ``a`` (degrees; + dips
    toward increasing distance); a fault with no dip is drawn vertical, a nearly flat
    one at the steepest dip taken as flat (both said)."""
    label = f.name or f"at {f.distance_m:.0f} m"
    if not np.isfinite(a):
        notes.warn(f"fault {label}: no apparent dip; drawn vertical", logged=False)
        a = 90.0
    if abs(a) < _MIN_FAULT_DIP:
        notes.warn(f"fault {label}: apparent dip {a:.1f}° is nearly flat; drawn at "
                   f"{_MIN_FAULT_DIP:.0f}°", logged=False)
        a = _MIN_FAULT_DIP if a >= 0 else -_MIN_FAULT_DIP
    if abs(a) >= 90.0:
        return np.array([0.0, -1.0])
    r = np.radians(a)
    return np.array([np.cos(r), -np.sin(r)]) * (1.0 if a > 0 else -1.0)


def _dip_from_project(f: FaultCrossing, st: FaultSetting | None, default: float | None,
                      azimuth: Callable | None, notes: Notes) -> tuple[FaultCrossing, float]:
    label = f.name or f"at {f.distance_m:.0f} m"
    if st is not None and st.dip is not None:
        dip, src = st.dip, "its [[fault]] dip"
    elif default is not None:
        dip, src = default, "the project's default_fault_dip"
    else:
        raise ConstructionError(
            f"fault {label}: the faults layer gives no dip: add a [[fault]] table with "
            "name and dip, or set default_fault_dip in [map]")
    if azimuth is None or not np.isfinite(f.dip_direction):
        app = float(dip) if np.isfinite(f.apparent_dip) else float("nan")
    else:
        app = float(apparent_dip((f.dip_direction - 90.0) % 360.0, dip,
                                 azimuth(f.distance_m)))
    notes.log(f"fault {label}: no dip on the map: {dip:g}° from {src} (apparent dip "
              f"{app:.1f}° in the section)")
    return dataclasses.replace(f, dip=float(dip), apparent_dip=app), app


def _detach_at_elevation(fl: FaultLine, zd: float, frame: SectionFrame,
                         notes: Notes) -> FaultLine:
    if zd >= fl.p0[1]:
        raise ConstructionError(
            f"fault {fl.name}: detachment at {zd:g} m lies above the fault's surface trace "
            f"({fl.p0[1]:.0f} m): a fault soles into a flat below the ground")
    if fl.down[1] > -1e-9:
        raise ConstructionError(f"fault {fl.name}: a flat fault cannot sole into a detachment")
    bend = fl.p0 + (fl.p0[1] - zd) / -fl.down[1] * fl.down
    flat_dir = np.array([1.0 if fl.down[0] >= 0 else -1.0, 0.0])
    if abs(fl.down[0]) < 1e-9:  # a vertical fault: its flat runs under its hanging wall
        flat_dir = np.array([-1.0, 0.0])
    far = bend + (frame.size * 4) * flat_dir
    return _with_bend(fl, bend, np.vstack([bend, far]), f"elevation {zd:.0f} m", notes)


def _with_bend(fl: FaultLine, bend: np.ndarray, flat: np.ndarray, where: str,
               notes: Notes) -> FaultLine:
    """The fault as ramp ``p0``-``bend`` then the ``flat`` path (starting at ``bend``); a
    radius rounds the bend into a circular arc tangent to both (listric)."""
    radius = fl.setting.radius if fl.setting is not None else None
    ramp_len = float(np.hypot(*(bend - fl.p0)))
    u1 = fl.down
    u2 = flat[1] - flat[0]
    u2 = u2 / float(np.hypot(*u2))
    turn = float(np.arccos(np.clip(u1 @ u2, -1.0, 1.0)))
    if radius is None or turn < 1e-6:
        path = np.vstack([fl.p0, flat])
        kinds = ["ramp"] + ["flat"] * (len(flat) - 1)
    else:
        tangent = radius * np.tan(turn / 2)
        if tangent > ramp_len + 1e-6:
            radius = ramp_len / np.tan(turn / 2)
            tangent = ramp_len
            notes.log(f"fault {fl.name}: the bend's radius is cut to {radius:.0f} m to fit "
                      "between the ground and the detachment")
        a_pt, c_pt = bend - tangent * u1, bend + tangent * u2
        inner = u2 - u1
        centre = bend + inner / float(np.hypot(*inner)) * radius / np.cos(turn / 2)
        a0 = np.arctan2(*(a_pt - centre)[::-1])
        a1 = np.arctan2(*(c_pt - centre)[::-1])
        da = (a1 - a0 + np.pi) % (2 * np.pi) - np.pi
        n = max(int(np.ceil(abs(np.degrees(da)) / _ARC_STEP)), 2)
        ang = a0 + da * np.linspace(0.0, 1.0, n + 1)
        arc = centre + radius * np.column_stack([np.cos(ang), np.sin(ang)])
        head = [fl.p0] if tangent < ramp_len - 1e-6 else []
        along = np.hypot(*(flat - bend).T)
        rest = flat[along > tangent + 1e-6]
        path = np.vstack([*head, arc, rest])
        kinds = ["ramp"] * len(head) + ["bend"] * n + ["flat"] * len(rest)
        notes.log(f"fault {fl.name}: listric, bending into its flat with a radius of "
                  f"{radius:.0f} m")
    notes.log(f"fault {fl.name}: ramp from the ground at {fl.p0[0]:.0f} m into a detachment "
              f"flat at {where} (bend at {bend[0]:.0f} m, elevation {bend[1]:.0f} m)")
    return FaultLine(fl.crossing, fl.p0, fl.down, fl.bottom, np.asarray(path, float),
                     tuple(kinds), fl.setting)


def detach_on_horizon(fl: FaultLine, horizon: np.ndarray, unit: str, frame: SectionFrame,
                      notes: Notes) -> FaultLine:
    """Bend ``fl`` into a flat along the footwall ``horizon`` (the base of ``unit``): the
    ramp runs down to where it meets that horizon, the flat follows the horizon on under
    the hanging wall.

    Parameters
    ----------
    fl
        The fault (a straight ramp from its ground point).
    horizon
        The footwall's base of ``unit`` as an (n, 2) path in section space.
    unit
        The detachment unit's name (for the log and the errors).
    frame, notes
        The section's frame and notes.

    Returns
    -------
    FaultLine
        The fault with its ramp, bend (when it has a ``radius``) and flat; a
        :class:`~mapsection.errors.ConstructionError` when the ramp never meets the
        horizon below the ground (the detachment lies above the fault's trace).
    """
    reach = frame.size * 4
    ray = LineString([fl.p0, fl.p0 + reach * fl.down])
    hz = LineString(horizon)
    x = ray.intersection(hz)
    pts = shapely.get_coordinates(x)
    if not len(pts):
        raise ConstructionError(
            f"fault {fl.name}: detachment at the base of {unit} lies above the fault's surface "
            "trace (the footwall's base of that unit does not reach below the fault's ground "
            "point): a fault soles into a flat below the ground")
    bend = pts[np.argmin(np.hypot(*(pts - fl.p0).T))]
    s = hz.project(Point(bend))
    c = np.asarray(hz.coords)
    along = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(c, axis=0).T))])
    ahead = c[along > s + 1e-6]
    behind = c[along < s - 1e-6][::-1]
    # the flat runs under the hanging wall: the way the ramp descends
    sign = 1.0 if fl.down[0] >= 0 else -1.0
    pick = ahead if len(ahead) and (ahead[0][0] - bend[0]) * sign > 0 else behind
    if not len(pick):
        pick = np.array([bend + reach * np.array([sign, 0.0])])
    flat = np.vstack([bend, pick])
    return _with_bend(fl, bend, flat, f"the base of {unit}", notes)



def detach_on_units(faults: list[FaultLine], models: list[BlockModel], column: Column,
                     frame: SectionFrame, notes: Notes) -> list[FaultLine]:
    """Faults whose detachment is a unit: the flat runs along the base of that unit in
    the footwall block, as that block was constructed."""
    out = []
    for k, fl in enumerate(faults):
        st = fl.setting
        if st is not None and isinstance(st.detachment, str):
            fw = k if fl.hanging_wall_right else k + 1
            level = float(column.depth_to_top[column.index(st.detachment)]
                          + column.thicknesses[column.index(st.detachment)])
            fl = detach_on_horizon(fl, models[fw].horizon_path(level), st.detachment, frame,
                                   notes)
        out.append(fl)
    return out


# What the fault lines bound lives in fault_regions; its names stay importable from here.
__all__ = ["FaultLine", "FaultSetting", "block_polygons", "detach_on_horizon", "detach_on_units",
           "fault_lines", "fault_settings", "ground_ranges", "order_crossings", "separations"]
