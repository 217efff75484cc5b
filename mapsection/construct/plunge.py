"""Plunging folds: the section constructed in the down-plunge view and carried back.

In a cylindrical fold the beds contain the fold axis, and their true thickness and
true dips are seen in the *profile plane*, normal to the axis. A vertical section is
the profile seen obliquely: projecting the section along the axis onto the profile
(the down-plunge view, Ragan, Structural Geology: An Introduction to Geometrical
Techniques, "orthographic projection" / "down-plunge projection") is a linear map of
section coordinates ``(u, z)`` (distance along the line, elevation) to profile
coordinates ``(u', w)``. With the axis trending ``T`` and plunging ``p``, the line's
azimuth ``A``, the horizontal profile direction ``b = ±(cos T, -sin T, 0)`` and the
profile's "up" ``w = (sin T sin p, cos T sin p, cos p)``:

    u' = |sin(A - T)| u
    w  = sin p cos(A - T) s_b u + cos p z        (s_b = sign of sin(A - T))

Derivation: a section point is ``u l + z e_z`` with ``l = (sin A, cos A, 0)``; its
profile coordinates are its components along ``b`` and ``w`` (the component along
the axis is what the projection removes): ``l . b = |sin(A - T)|``, ``e_z . b = 0``,
``l . w = sin p cos(A - T)``, ``e_z . w = cos p``. The map's determinant,
``|sin(A - T)| cos p``, is ``cos θ``, θ the angle between the axis and the section
plane's normal ``n = (cos A, -sin A, 0)`` (``a . n = cos p sin(T - A)``): areas are
``1 / cos θ`` times larger in the section than in the profile. For a line normal to
the trend the map is a vertical shortening by ``cos p = cos θ``, and a unit of true
thickness ``t`` spans ``t / cos θ`` vertically (1/cos 15° = 3.5 % more); for an
oblique line the map also stretches and shears horizontally, and the apparent
thickness depends on the beds' dip.

On a bent line each straight segment has its own map (its own ``A``), continuous at
the bends: the profile coordinate ``u'`` and the offset of ``w`` are sums over the
segments.

So the construction (kink or arc, with true thicknesses) is done in the profile view,
from the section's data carried there (ground, contacts, dips, faults), and its
horizons, units, faults and axial surfaces are carried back into the section: the
section then holds each unit at its apparent thickness.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import shapely

from ..draft import AxialSurface, ContactResidual, DipDomain, DipOutlier, Draft, FaultTrace
from ..geology import SurfaceGeology
from ..line import SectionLine
from ..topo_profile import Profile

MIN_ANGLE_DEG = 10.0  # a line this close to the axis' trend has no useful profile view
SEGMENTIZE_M = 10.0  # geometry is densified to this before it is carried back (bent lines)


@dataclasses.dataclass(frozen=True)
class PlungeMap:
    """The map of section coordinates to down-plunge (profile) coordinates: linear on
    each straight segment of the line (``knots``: distances of the line's vertices),
    continuous across its bends.

    On segment ``i`` (azimuth ``A_i``): ``du' = |sin(A_i - T)| du`` and
    ``w = G(u) + cos p z`` with ``dG = sin p cos(A_i - T) sign(sin(A_i - T)) du``.
    """

    knots: np.ndarray  # distances of the line's vertices
    m11: np.ndarray  # per segment
    g: np.ndarray  # per segment
    trend: float
    plunge: float
    azimuth: float  # of the whole line (first to last vertex)

    @property
    def cos_p(self) -> float:
        return float(np.cos(np.radians(self.plunge)))

    @property
    def up_knots(self) -> np.ndarray:
        return np.concatenate([[0.0], np.cumsum(self.m11 * np.diff(self.knots))])

    @property
    def g_knots(self) -> np.ndarray:
        return np.concatenate([[0.0], np.cumsum(self.g * np.diff(self.knots))])

    @property
    def m(self) -> np.ndarray:
        """The linear map of the first segment (of the whole line, when straight)."""
        return np.array([[self.m11[0], 0.0], [self.g[0], self.cos_p]])

    @property
    def cos_theta(self) -> float:
        """cos of the angle between the axis and the section plane's normal (the
        length-weighted mean over the segments of a bent line)."""
        return float(np.average(self.m11, weights=np.diff(self.knots)) * self.cos_p)

    @property
    def cos_theta_range(self) -> tuple[float, float]:
        return float(self.m11.min() * self.cos_p), float(self.m11.max() * self.cos_p)

    def _seg(self, u) -> np.ndarray:
        i = np.searchsorted(self.knots, np.asarray(u, float), side="right") - 1
        return np.clip(i, 0, len(self.m11) - 1)

    def _seg_back(self, up) -> np.ndarray:
        i = np.searchsorted(self.up_knots, np.asarray(up, float), side="right") - 1
        return np.clip(i, 0, len(self.m11) - 1)

    def _along(self, u):
        u = np.asarray(u, float)
        i = self._seg(u)
        du = u - self.knots[i]
        return self.up_knots[i] + self.m11[i] * du, self.g_knots[i] + self.g[i] * du

    def points(self, u, z) -> tuple[np.ndarray, np.ndarray]:
        up, gu = self._along(u)
        return up, gu + self.cos_p * np.asarray(z, float)

    def points_back(self, up, w) -> tuple[np.ndarray, np.ndarray]:
        up = np.asarray(up, float)
        i = self._seg_back(up)
        u = self.knots[i] + (up - self.up_knots[i]) / self.m11[i]
        _, gu = self._along(u)
        return u, (np.asarray(w, float) - gu) / self.cos_p

    def dip(self, apparent, u=0.0) -> np.ndarray:
        """An apparent dip in the section at distance ``u`` (degrees, + descending toward
        larger u) as seen in the profile."""
        i = self._seg(u)
        a = np.radians(np.asarray(apparent, float))
        vx, vz = np.cos(a), -np.sin(a)
        px, pz = self.m11[i] * vx, self.g[i] * vx + self.cos_p * vz
        return np.degrees(np.arctan2(-pz, px))

    def dip_back(self, apparent, up=0.0) -> np.ndarray:
        """A dip of the profile at profile distance ``up``, as seen in the section."""
        i = self._seg_back(up)
        a = np.radians(np.asarray(apparent, float))
        px, pz = np.cos(a), -np.sin(a)
        vx = px / self.m11[i]
        vz = (pz - self.g[i] * vx) / self.cos_p
        return np.degrees(np.arctan2(-vz, vx))

    def stretch_back(self, direction, up) -> float:
        """Section length of a unit profile length along ``direction`` at ``up``."""
        i = int(self._seg_back(up))
        px, pz = direction
        vx = px / self.m11[i]
        vz = (pz - self.g[i] * vx) / self.cos_p
        return float(np.hypot(vx, vz))

    def geometry_back(self, geom):
        if len(self.m11) > 1:
            geom = shapely.segmentize(geom, SEGMENTIZE_M)

        def back(c):
            u, z = self.points_back(c[:, 0], c[:, 1])
            return np.column_stack([u, z])

        return shapely.transform(geom, back)


def plunge_map(line: SectionLine, trend: float, plunge: float) -> PlungeMap | None:
    """The down-plunge map for a line, or None where a segment runs within
    ``MIN_ANGLE_DEG`` of the axis' trend or the line turns across it."""
    v = line.vertices
    az = float(np.degrees(np.arctan2(v[-1, 0] - v[0, 0], v[-1, 1] - v[0, 1])) % 360.0)
    d = np.radians(np.asarray(line.segment_azimuths, float) - trend)
    sb = np.sin(d)
    if np.any(np.abs(sb) < np.sin(np.radians(MIN_ANGLE_DEG))) or len(set(np.sign(sb))) > 1:
        return None
    p = np.radians(plunge)
    return PlungeMap(np.asarray(line.cumulative, float), np.abs(sb),
                     np.sin(p) * np.cos(d) * np.sign(sb), float(trend), float(plunge), az)


def to_profile(pm: PlungeMap, line: SectionLine, profile: Profile, geology: SurfaceGeology,
               dips, corridor_contacts):
    """The section's inputs carried into the down-plunge view."""
    length = float(pm.up_knots[-1])
    pline = SectionLine(np.array([[0.0, 0.0], [length, 0.0]]), line.crs, line.name)
    d, z = pm.points(profile.distance, profile.z)
    pprof = Profile(d, np.asarray(profile.x), np.asarray(profile.y), z, pline, profile.crs,
                    profile.pixel_size)

    def pt(dist, elev):
        a, b = pm.points([dist], [elev])
        return float(a[0]), float(b[0])

    ivs = tuple(dataclasses.replace(iv, start_m=float(pm.points(iv.start_m, 0.0)[0]),
                                    end_m=float(pm.points(iv.end_m, 0.0)[0]))
                for iv in geology.intervals)
    cts = []
    for c in geology.contacts:
        dd, zz = pt(c.distance_m, c.elevation_m)
        cts.append(dataclasses.replace(c, distance_m=dd, elevation_m=zz))
    fts = []
    for f in geology.faults:
        dd, zz = pt(f.distance_m, f.elevation_m)
        fts.append(dataclasses.replace(f, distance_m=dd, elevation_m=zz,
                                       apparent_dip=float(pm.dip(f.apparent_dip,
                                                                 f.distance_m))))
    pgeo = SurfaceGeology(ivs, tuple(cts), tuple(fts))
    pdips = dips
    if dips is not None and len(dips):
        dd, zz = pm.points(dips.distance_m, dips.elevation_m)
        pdips = dataclasses.replace(dips, distance_m=dd, elevation_m=zz,
                                    apparent_dip=pm.dip(dips.apparent_dip, dips.distance_m))
    pcc = corridor_contacts
    if corridor_contacts is not None and len(corridor_contacts):
        dd, zz = pm.points(corridor_contacts.distance_m, corridor_contacts.elevation_m)
        pcc = dataclasses.replace(corridor_contacts, distance_m=dd, elevation_m=zz)
    return pline, pprof, pgeo, pdips, pcc


def inner_depth(pm: PlungeMap, line: SectionLine, profile: Profile, base: float) -> float:
    """The depth below the lowest ground of the profile view that covers the section down
    to ``base`` (its frame is a sheared copy of the section's)."""
    _, w = pm.points(profile.distance, profile.z)
    lowest = pm.cos_p * base + float(pm.g_knots.min())
    return float(np.nanmin(w)) - lowest + 1.0


def from_profile(pm: PlungeMap, inner: Draft, line: SectionLine, profile: Profile,
                 geology: SurfaceGeology, dips, base: float, log: list[str]) -> Draft:
    """The draft built in the down-plunge view, carried back into the section (clipped
    to the section's frame, from ``base`` up)."""
    back = pm.geometry_back
    top = float(np.nanmax(profile.z)) + inner.column.total_thickness / pm.cos_theta_range[0]

    def u_back(up):
        return float(pm.points_back(up, 0.0)[0])
    box = shapely.box(0.0, base, float(line.length), top)

    def clip(g):
        return back(g).intersection(box)

    horizons = []
    for h in inner.horizons:
        for part in _lines(clip(h.geometry)):
            horizons.append(dataclasses.replace(h, geometry=part))
    units = []
    for un in inner.units:
        g = clip(un.geometry)
        if not g.is_empty and g.area > 1e-6:
            units.append(dataclasses.replace(un, geometry=_polys(g)))
    axial = []
    for a in inner.axial_surfaces:
        gd = a.ground_distance_m
        at = gd if np.isfinite(gd) else 0.0
        axial.extend(AxialSurface(part, u_back(gd) if np.isfinite(gd) else gd,
                                  float(pm.dip_back(a.dip_left, at)),
                                  float(pm.dip_back(a.dip_right, at)))
                     for part in _lines(clip(a.geometry)))
    domains = [DipDomain(u_back(dm.start_m), u_back(dm.end_m),
                         float(pm.dip_back(dm.dip, 0.5 * (dm.start_m + dm.end_m))), dm.n_dips,
                         dm.block) for dm in inner.domains]
    residuals, outliers = _points_back(pm, inner)
    return Draft(name=inner.name, method=inner.method, line=line, profile=profile,
                 geology=geology, dips=dips, column=inner.column, horizons=horizons,
                 faults=_faults_back(pm, inner.faults), units=units, domains=domains,
                 axial_surfaces=axial, residuals=residuals, ve=inner.ve,
                 base_elevation_m=base, log=log, outliers=outliers)


def _faults_back(pm: PlungeMap, faults: list[FaultTrace]) -> list[FaultTrace]:
    """Fault traces carried back into the section, their separations stretched from
    profile length to section length."""
    out = []
    for f in faults:
        c = np.asarray(f.geometry.coords)
        unit = (c[-1] - c[0]) / max(np.hypot(*(c[-1] - c[0])), 1e-12)
        stretch = pm.stretch_back(unit, c[0, 0])  # profile length -> section length
        seps = {k: v * stretch for k, v in f.separations.items()}
        out.append(FaultTrace(f.name, pm.geometry_back(f.geometry), f.dip, f.dip_direction,
                              f.apparent_dip, f.sense, seps))
    return out


def _points_back(pm: PlungeMap, inner: Draft) -> tuple[list[ContactResidual], list[DipOutlier]]:
    """The contact residuals and dip outliers carried back into the section."""

    def pt_back(d, z):
        u, zz = pm.points_back(d, z)
        return float(u), float(zz)

    residuals = [ContactResidual(*pt_back(r.distance_m, r.elevation_m), r.top_of, r.residual_m)
                 for r in inner.residuals]
    outliers = [DipOutlier(o.id, *pt_back(o.distance_m, o.elevation_m),
                           float(pm.dip_back(o.apparent_dip, o.distance_m)),
                           float(pm.dip_back(o.expected_dip, o.distance_m)),
                           float(pm.dip_back(o.apparent_dip, o.distance_m)
                                 - pm.dip_back(o.expected_dip, o.distance_m)),
                           o.kind, o.why, o.block) for o in inner.outliers]
    return residuals, outliers


def _lines(g) -> list:
    out = []
    for part in shapely.get_parts(g):
        if part.geom_type == "LineString" and part.length > 1e-6:
            out.append(part)
        elif part.geom_type in ("MultiLineString", "GeometryCollection"):
            out.extend(_lines(part))
    return out


def _polys(g):
    if g.geom_type in ("Polygon", "MultiPolygon"):
        return g
    polys = [p for p in shapely.get_parts(g) if p.geom_type in ("Polygon", "MultiPolygon")]
    return shapely.union_all(polys)


__all__ = ["PlungeMap", "from_profile", "inner_depth", "plunge_map", "to_profile"]
