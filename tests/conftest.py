"""Builders shared by the tests: hand-made drafts and their parts (invented data).

* :func:`flat_draft` -- a straight east-west draft over flat ground, horizons given
  (restoration, area balance, kinematics); :func:`parallel` offsets a kinked line
  exactly (Suppe 1985 kink geometry), ``KINK_COLUMN``/``KINK_DEPTHS`` its column.
* :func:`homocline_draft` -- beds dipping ``HOMOCLINE_DIP`` under flat or shaped ground
  with the map contacts where the beds meet it (topography check, report).
* :func:`hand_draft` -- a small draft with a bend, a fault and six dips (figure, export).
* :func:`recovery_errors` -- elevation errors of a built draft against the sample model.

* :class:`LayerCake` -- an analytic dipping layer-cake under a valley, with its map, cover and
  intrusive stretches cut in (cover and intrusive units); :func:`with_map_units` -- a copy of
  a map with polygons cut into its units layer.

* :class:`SampleCopy` / the ``sample_copy`` fixture -- a private copy of the sample area, and
  bad variants of its inputs (the error catalogue); the sample area itself is never touched.

Import them with ``from conftest import ...`` (the tests folder is on the path).
"""

from __future__ import annotations

import hashlib
import math
import shutil
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import shapely
from shapely.geometry import LineString, Polygon, box

from mapsection.dips import ProjectedDips
from mapsection.draft import (
    AxialSurface,
    Draft,
    FaultTrace,
    Horizon,
    UnitPolygon,
)
from mapsection.geology import Contact, FaultCrossing, SurfaceGeology, UnitInterval
from mapsection.line import SectionLine
from mapsection.stratigraphy import BASE_PREFIX, Column, Unit
from mapsection.topo_profile import Profile

# --- a draft over flat ground (restoration, area balance, kinematics) ------------------

KINK_COLUMN = Column((Unit("A", 300.0), Unit("B", 400.0), Unit("C", 500.0), Unit("D", 800.0)))
KINK_DEPTHS = {"A": 0.0, "B": 300.0, "C": 700.0, "D": 1200.0}
TAN30 = np.tan(np.radians(30.0))


def flat_draft(horizons, faults=(), domains=(), length=10000.0, column=KINK_COLUMN, *,
               ground=1500.0, method="kink") -> Draft:
    """A straight east-west draft over flat ground at ``ground`` m, no dips, no map."""
    line = SectionLine(np.array([[0.0, 0.0], [length, 0.0]]), name="T")
    d = np.linspace(0.0, length, 101)
    profile = Profile(d, d, np.zeros_like(d), np.full_like(d, ground), line)
    return Draft("T", method, line, profile, SurfaceGeology((), (), ()), no_dips(), column,
                 horizons=list(horizons), faults=list(faults), domains=list(domains))


def parallel(ref, t):
    """Exact parallel of a kinked line at perpendicular distance t below it (mitre joins:
    each offset vertex lies on the bisector of the two segments, Suppe 1985 kink geometry)."""
    p = np.asarray(ref, float)
    d = np.diff(p, axis=0)
    d /= np.hypot(d[:, 0], d[:, 1])[:, None]
    n = np.column_stack([d[:, 1], -d[:, 0]])  # right-hand normal: downward for travel +x
    m = np.vstack([n[:1], (n[:-1] + n[1:]) / (1.0 + np.sum(n[:-1] * n[1:], axis=1))[:, None],
                   n[-1:]])
    return p + t * m


# --- a homocline under the ground, with its map (topography check, report) -----------

HOMOCLINE_LENGTH = 10_000.0
HOMOCLINE_DIP = 10.0  # degrees; beds descend toward increasing distance
TOP_B = 3000.0  # where the top of B meets a flat ground at 100 m


def homocline_profile(z_fn, step=5.0, pixel=10.0):
    d = np.arange(0.0, HOMOCLINE_LENGTH + step / 2, step)
    line = SectionLine(np.array([[0.0, 0.0], [HOMOCLINE_LENGTH, 0.0]]), name="T")
    return Profile(d, d.copy(), np.zeros_like(d), z_fn(d), line, None, pixel)


def dips_at(d, e, app, ids=None):
    n = len(d)
    return ProjectedDips(
        id=np.array(ids if ids is not None else [f"s{i}" for i in range(n)]),
        x=np.asarray(d, float), y=np.zeros(n), distance_m=np.asarray(d, float),
        offset_m=np.zeros(n), elevation_m=np.asarray(e, float), strike=np.zeros(n),
        dip=np.abs(app), apparent_dip=np.asarray(app, float),
        poorly_constrained=np.zeros(n, bool), overturned=np.zeros(n, bool),
    )


def no_dips():
    return dips_at(np.empty(0), np.empty(0), np.empty(0))


def homocline_stack(tops, profile, column, base=-3000.0):
    """Horizons (split at the ground) and unit polygons from full-width top lines."""
    ground = ground_line_of(profile)
    below = Polygon(list(ground.coords) + [(HOMOCLINE_LENGTH, base), (0.0, base)])
    horizons, units = [], []
    for name, line in tops.items():
        for part in shapely.get_parts(line.intersection(below)):
            horizons.append(Horizon(name, part, False))
        for part in shapely.get_parts(line.difference(below)):
            horizons.append(Horizon(name, part, True))
    names = column.names
    region = below
    for i, name in enumerate(names):
        nxt = names[i + 1] if i + 1 < len(names) else None
        if nxt is None or nxt not in tops:
            poly = region
        else:
            c = shapely.get_coordinates(tops[nxt])
            under = Polygon(list(map(tuple, c)) + [(c[-1, 0], base - 1e4), (c[0, 0], base - 1e4)])
            poly = region.difference(under)
            region = region.intersection(under)
        if not poly.is_empty:
            units.append(UnitPolygon(name, poly))
    return horizons, units


def ground_line_of(profile):
    return LineString(np.column_stack([profile.distance, profile.z]))


def straight_tops(column, shift=0.0, dip=HOMOCLINE_DIP, ground=100.0):
    """Top lines y = ground - tan(dip) (x - x0), x0 of B at TOP_B + shift; parallel below."""
    t = math.tan(math.radians(dip))
    tops = {}
    for i, name in enumerate(column.names[1:], start=1):
        depth = float(column.depth_to_top[i] - column.depth_to_top[1])  # below the top of B
        x0 = TOP_B + shift - depth / math.cos(math.radians(dip)) / t
        xs = np.array([0.0, HOMOCLINE_LENGTH])
        tops[name] = LineString(np.column_stack([xs, ground - t * (xs - x0)]))
    return tops


def map_geology(bounds, units):
    """Map intervals between the given contact distances (units in map order)."""
    edges = [0.0, *bounds, HOMOCLINE_LENGTH]
    iv = tuple(UnitInterval(a, b, u) for a, b, u in zip(edges[:-1], edges[1:], units, strict=True))
    ct = tuple(Contact(b, 100.0, u0, u1)
               for b, u0, u1 in zip(bounds, units[:-1], units[1:], strict=True))
    return SurfaceGeology(iv, ct, ())


HOMOCLINE_COLUMN = Column((Unit("A", 200.0), Unit("B", 300.0), Unit("C", 400.0)))
# Top of C meets flat ground 300 m / sin(10 deg) before the top of B (analytic).
TOP_C = TOP_B - 300.0 / math.sin(math.radians(HOMOCLINE_DIP))


def homocline_draft(shift=0.0, map_bounds=(TOP_C, TOP_B), z_fn=None, dips=None, with_units=True,
           column=HOMOCLINE_COLUMN, method="kink"):
    prof = homocline_profile(z_fn or (lambda d: np.full_like(d, 100.0)))
    horizons, units = homocline_stack(straight_tops(column, shift), prof, column)
    return Draft(
        name="T", method=method, line=prof.line, profile=prof,
        geology=map_geology(list(map_bounds), ["C", "B", "A"]), dips=dips or no_dips(),
        column=column, horizons=horizons, units=units if with_units else [],
    )


# --- a hand-made draft with a bend, a fault and dips (figure, export) -----------------

APPARENT = np.array([10.0, -20.0, 35.0, 0.0, 60.0, -75.0])


def hand_draft(ve: float = 1.0) -> Draft:
    """A small invented draft with a bend, a normal fault, 4 horizons and 6 dips."""
    line = SectionLine(np.array([[1000.0, 2000.0], [4000.0, 6000.0], [8000.0, 6000.0]]),
                       "EPSG:32611", "A")
    d = line.densify(50.0)
    x, y = line.point_at(d)
    z = 800 + 60 * np.sin(d / 900.0)
    prof = Profile(d, x, y, z, line, line.crs, 10.0)
    col = Column((Unit("Tu", 150.0, age="Eocene", lithology="sandstone"),
                  Unit("Km", 200.0, "#88cc44"), Unit("Jl", 300.0)))
    length = line.length
    slope = math.tan(math.radians(3.0))
    hz = [Horizon(n, LineString([(0, top), (length, top - length * slope)]), False, 0)
          for n, top in zip(col.names, [900.0, 750.0, 550.0], strict=True)]
    hz.append(Horizon("Tu", LineString([(0, 1000), (2000, 950)]), True, 0))
    units = [UnitPolygon("Tu", box(0, 600, length / 2, 800)),
             UnitPolygon("Km", box(0, 300, length, 600)),
             UnitPolygon("Jl", box(0, 0, length, 300), 1)]
    n = len(APPARENT)
    dd = np.linspace(500, length - 500, n)
    dx, dy = line.point_at(dd)
    dips = ProjectedDips(np.array([f"d{i}" for i in range(n)]), dx, dy, dd,
                         np.linspace(-200, 200, n), prof.elevation_at(dd), np.full(n, 30.0),
                         np.abs(APPARENT), APPARENT.copy(),
                         np.arange(n) == 2, np.zeros(n, bool))
    zc = float(prof.elevation_at(np.array([3000.0]))[0])
    zf = float(prof.elevation_at(np.array([4000.0]))[0])
    geo = SurfaceGeology((UnitInterval(0, 3000, "Tu"), UnitInterval(3000, length, "Km")),
                         (Contact(3000.0, zc, "Tu", "Km"),),
                         (FaultCrossing(4000.0, zf, 60.0, 90.0, 55.0, "normal", "Fa"),))
    fault = FaultTrace("Fa", LineString([(4000, zf), (4700, -200)]), 60.0, 90.0, 55.0,
                       "normal", {"Km": -120.0})
    axial = AxialSurface(LineString([(2500, 900), (2600, 0)]), 2510.0, 5.0, 20.0)
    return Draft("A", "kink", line, prof, geo, dips, col, hz, [fault], units, [], [axial], [],
                 ve, 0.0, ["built by hand"])


# --- the sample model recovered by a built draft ----------------------------------------

def recovery_errors(draft, model, step: float = 25.0, within: float = 1500.0) -> np.ndarray:
    """Elevation errors of the below-ground horizons within ``within`` m below the ground,
    sampled every ``step`` m, against the model's true surface in the same fault block."""
    ground = draft.profile.elevation_at
    hw_block = {}
    for k, f in enumerate(draft.faults):
        # The hanging wall lies on the side toward which the fault descends.
        left, right = k, k + 1
        hw_block[left], hw_block[right] = ((False, True) if f.apparent_dip > 0 else (True, False))
    errs = []
    for h in draft.horizons:
        if h.above_ground:
            continue
        geom = h.geometry
        n = max(int(geom.length // step), 1)
        pts = shapely.get_coordinates(shapely.line_interpolate_point(
            geom, np.linspace(0.0, geom.length, n + 1)))
        d, z = pts[:, 0], pts[:, 1]
        keep = ground(d) - z <= within
        if not keep.any():
            continue
        x, y = draft.line.point_at(d[keep])
        name = model.basement if h.top_of.startswith(BASE_PREFIX) else h.top_of
        block = None
        if draft.faults:
            block = "hanging_wall" if hw_block.get(h.block, False) else "footwall"
        true = model.horizon_elevation(name, x, y, block=block)
        ok = np.isfinite(true)
        errs.append(np.abs(z[keep][ok] - true[ok]))
    return np.concatenate(errs)


def fault_draft(horizons, faults=(), length=10000.0, column=KINK_COLUMN) -> Draft:
    """A flat draft for the kinematic and cutoff checks (method "edited")."""
    return flat_draft(horizons, faults, length=length, column=column, method="edited")


def thrust_draft(xf=6000.0, slip=1000.0, toward=-1, name="F1", sense="thrust", hw_dip=0.0,
           depths=KINK_DEPTHS, x0=0.0, x1=10000.0, block0=0):
    """Flat beds cut by a fault dipping 30 degrees (toward decreasing distance when
    toward = -1); the hanging wall moved ``slip`` up the fault (analytic cutoffs)."""
    c, s = np.cos(np.radians(30.0)), np.sin(np.radians(30.0))
    hz = []
    for n, t in depths.items():
        # cutoffs on the plane through (xf, 0); the hanging wall moved up-dip by the slip
        x_fw = xf + toward * t / TAN30
        x_hw, y_hw = x_fw - toward * slip * c, -t + slip * s
        if toward < 0:
            hw_line = [(x0, y_hw - (x_hw - x0) * np.tan(np.radians(hw_dip))), (x_hw, y_hw)]
            fw_line = [(x_fw, -t), (x1, -t)]
            hz += [Horizon(n, LineString(hw_line), block=block0),
                   Horizon(n, LineString(fw_line), block=block0 + 1)]
        else:
            hw_line = [(x_hw, y_hw), (x1, y_hw)]
            fw_line = [(x0, -t), (x_fw, -t)]
            hz += [Horizon(n, LineString(fw_line), block=block0),
                   Horizon(n, LineString(hw_line), block=block0 + 1)]
    top = (xf - toward * 1500.0 / TAN30, 1500.0)
    bottom = (xf + toward * 2500.0 / TAN30, -2500.0)
    fault = FaultTrace(name, LineString([top, bottom]), 30.0, 270.0 if toward < 0 else 90.0,
                       30.0 * toward, sense, {n: slip for n in depths})
    return hz, fault


# --- a private copy of the sample area, and bad variants of its inputs ------------------

SAMPLE_AREA = Path(__file__).resolve().parents[1] / "sample_area"
SAMPLE_INPUTS = ("project.toml", "dem.tif", "geology.gpkg", "attitudes.csv")


@dataclass
class SampleCopy:
    """The sample area's inputs copied into ``root``, and an empty output folder ``out``."""

    root: Path
    out: Path

    @property
    def project(self) -> Path:
        return self.root / "project.toml"

    @property
    def dem(self) -> Path:
        return self.root / "dem.tif"

    @property
    def map(self) -> Path:
        return self.root / "geology.gpkg"

    @property
    def attitudes(self) -> Path:
        return self.root / "attitudes.csv"

    def edit_project(self, old: str, new: str, count: int = 1) -> Path:
        """Replace ``old`` by ``new`` in project.toml (``old`` must be there)."""
        text = self.project.read_text(encoding="utf-8")
        assert old in text, old
        self.project.write_text(text.replace(old, new, count), encoding="utf-8")
        return self.project

    def add_to_section(self, index: int, lines: str) -> Path:
        """Add key lines to the ``index``-th [[section]] table of project.toml."""
        text = self.project.read_text(encoding="utf-8")
        parts = text.split("[[section]]\n")
        parts[index + 1] = lines.rstrip("\n") + "\n" + parts[index + 1]
        self.project.write_text("[[section]]\n".join(parts), encoding="utf-8")
        return self.project

    def write(self, name: str, content: str | bytes) -> Path:
        p = self.root / name
        if isinstance(content, bytes):
            p.write_bytes(content)
        else:
            p.write_text(content, encoding="utf-8")
        return p


@pytest.fixture
def sample_copy(tmp_path: Path) -> SampleCopy:
    """The sample area's project, DEM, map and attitudes in tmp_path/inputs; tmp_path/out empty."""
    root = tmp_path / "inputs"
    root.mkdir()
    for name in SAMPLE_INPUTS:
        shutil.copy2(SAMPLE_AREA / name, root / name)
    out = tmp_path / "out"
    out.mkdir()
    return SampleCopy(root, out)


def snapshot(folder: Path) -> dict[str, str]:
    """sha256 of every file under ``folder``, hidden files included, by relative path."""
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def everything_in(folder: Path) -> list[str]:
    """Every entry under ``folder`` (files and folders, hidden ones included)."""
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


def write_dem_variant(src: Path, dst: Path, *, crs=..., transform=None, units: str | None = None,
                      shift: tuple[float, float] = (0.0, 0.0), scale: float = 1.0) -> Path:
    """A copy of the GeoTIFF ``src`` with another CRS (None: none), transform, unit type,
    a shift of its origin (map units) or its values multiplied by ``scale``."""
    import rasterio
    from affine import Affine

    with rasterio.open(src) as ds:
        profile = ds.profile
        data = ds.read(1)
    if crs is not ...:
        profile["crs"] = crs
    t = transform if transform is not None else profile["transform"]
    profile["transform"] = Affine.translation(*shift) * t
    if scale != 1.0:
        nd = profile.get("nodata")
        data = data.copy()
        valid = data != nd if nd is not None else slice(None)
        data[valid] = data[valid] * scale
    import warnings

    with warnings.catch_warnings():  # an identity transform is what some cases want
        warnings.simplefilter("ignore", rasterio.errors.NotGeoreferencedWarning)
        out = rasterio.open(dst, "w", **profile)
    with out:
        out.write(data, 1)
        if units is not None:
            out.units = (units,)
    return dst


def write_map_variant(src: Path, dst: Path, **layers) -> Path:
    """A copy of the GeoPackage ``src`` whose layers are replaced: ``name=GeoDataFrame``
    (or ``name=None`` to leave that layer out); the other layers are copied as they are."""
    import pyogrio

    names = [str(r[0]) for r in pyogrio.list_layers(src)]
    frames = {n: pyogrio.read_dataframe(src, layer=n) for n in names}
    frames.update(layers)
    for name, frame in frames.items():
        if frame is not None:
            pyogrio.write_dataframe(frame, dst, layer=name, driver="GPKG")
    return dst


@pytest.fixture(autouse=True)
def _no_progress_display(monkeypatch):
    # Progress lines depend on how fast the machine is; tests that count stderr lines must not
    # see them. tests/test_progress.py drives the display directly.
    monkeypatch.setenv("MAPSECTION_PROGRESS", "off")


@pytest.fixture(scope="session")
def sample_statuses():
    """Each test's status for the sample area's sections, as ``mapsection check`` gives them
    (the library's own verdicts: what the page and other front ends must show)."""
    from mapsection.checking import check_section
    from mapsection.project import load_project

    project = load_project(SAMPLE_AREA / "project.toml")
    cache: dict[str, dict[str, str]] = {}

    def statuses(name: str) -> dict[str, str]:
        if name not in cache:
            _, report = check_section(project, project.section(name), warn_fn=lambda m: None)
            cache[name] = report.statuses
        return cache[name]

    return statuses


# --- a small map around hand_draft, and a complete project file --------------------------


def hand_map(draft: Draft):
    """Three unit boxes and two faults around a hand-made draft's line (invented)."""
    import geopandas as gpd

    from mapsection.mapdata import MapData

    v = draft.line.vertices
    (x0, y0), (x1, y1) = v.min(0) - 2000, v.max(0) + 2000
    xm = (x0 + x1) / 2
    units = gpd.GeoDataFrame({"unit": ["Tu", "Km", "Jl"]},
                             geometry=[box(x0, y0, xm, y1), box(xm, y0, x1, (y0 + y1) / 2),
                                       box(xm, (y0 + y1) / 2, x1, y1)], crs=draft.line.crs)
    faults = gpd.GeoDataFrame({"dip": [60.0, 30.0], "dip_direction": [90.0, 0.0],
                               "sense": ["normal", "thrust"], "name": ["Fa", "Fb"]},
                              geometry=[LineString([(5000, 1000), (5200, 9000)]),
                                        LineString([(x0, 4500), (x1, 4800)])],
                              crs=draft.line.crs)
    return MapData(units, "unit", faults, {k: k for k in ("dip", "dip_direction", "sense",
                                                          "name")})


def project_inputs(crs: str = "EPSG:32611") -> str:
    """The head of a project file: its CRS and the four inputs under the sample's names."""
    return (f'crs = "{crs}"\n[dem]\npath = "dem.tif"\n[map]\npath = "geology.gpkg"\n'
            'units_layer = "units"\nunit_field = "unit"\nfaults_layer = "faults"\n'
            '[attitudes]\npath = "attitudes.csv"\n')


GOOD_PROJECT = "  # a complete project file (docs/index.md keys)\n\n" + project_inputs() + """\
[[stratigraphy]]
unit = "Upper"
thickness = 250.0
[[stratigraphy]]
unit = "Lower"
thickness = 300
age = "Jurassic"
[[section]]
name = "A"
line = [[500000.0, 4000000.0], [505000.0, 4001000.0]]
corridor = 500.0
method = "kink"
[[section]]
name = "B"
line = [[500000, 4000000], [502000, 4003000], [506000, 4003500]]
method = "arc"
"""


@pytest.fixture(scope="module")
def project_copy(tmp_path_factory, request) -> Path:
    """The sample area copied once per test module (the page's tests save into it)."""
    folder = tmp_path_factory.mktemp(request.module.__name__.rsplit(".", 1)[-1]) / "area"
    shutil.copytree(SAMPLE_AREA, folder)
    return folder / "project.toml"


# --- an analytic dipping layer-cake under a valley, with its map (cover, intrusive units) ---

CAKE_LENGTH = 8000.0
CAKE_COLUMN = Column((Unit("A", 200.0), Unit("B", 250.0), Unit("C", 300.0), Unit("D", 400.0)))


def apparent_dip_deg(dip: float, angle_to_strike: float) -> float:
    """tan a = tan d sin b (Ragan, Structural Geology: An Introduction to Geometrical
    Techniques; b the angle between the strike and the section line)."""
    return math.degrees(math.atan(math.tan(math.radians(dip))
                                  * math.sin(math.radians(angle_to_strike))))


@dataclass
class LayerCake:
    """Beds of ``column`` dipping ``dip`` degrees, striking ``angle_to_strike`` degrees from the
    section line (so that they descend toward increasing distance at the apparent dip), under
    a ground with a valley at ``valley_m``; the top of ``column.names[1]`` meets the plain
    (z = ``plain``) at ``anchor_m``. Everything is closed form; contacts are where the planes'
    traces meet the ground."""

    column: Column = CAKE_COLUMN
    dip: float = 25.0
    angle_to_strike: float = 90.0
    plain: float = 400.0
    valley_m: float = 4000.0
    valley_depth: float = 120.0
    valley_width: float = 500.0
    anchor_m: float = 2000.0
    step: float = 5.0

    @property
    def apparent(self) -> float:
        return apparent_dip_deg(self.dip, self.angle_to_strike)

    def ground(self, d):
        d = np.asarray(d, float)
        return self.plain - self.valley_depth * np.exp(-((d - self.valley_m)
                                                         / self.valley_width) ** 2)

    def top(self, unit: str, d):
        """Elevation of the top of ``unit`` (its vertical spacing t / cos a for a line down
        the dip, b = 90 degrees)."""
        a = math.radians(self.apparent)
        depth = float(self.column.depth_to_top[self.column.index(unit)]
                      - self.column.depth_to_top[1])
        return self.plain - math.tan(a) * (np.asarray(d, float) - self.anchor_m) \
            - depth / math.cos(math.radians(self.dip))  # vertical spacing t / cos d

    def contacts(self) -> list[tuple[float, str]]:
        """(distance, top of unit) where each top meets the ground (sign changes)."""
        d = np.arange(0.0, CAKE_LENGTH + self.step / 2, self.step)
        out = []
        for name in self.column.names[1:]:
            h = self.top(name, d) - self.ground(d)
            k = np.flatnonzero(np.sign(h[:-1]) != np.sign(h[1:]))
            for i in k:  # linear between samples of 5 m: well within any tolerance here
                out.append((float(d[i] - h[i] * (d[i + 1] - d[i]) / (h[i + 1] - h[i])), name))
        return sorted(out)

    def unit_at(self, d) -> list[str]:
        g = self.ground(d)
        out = []
        for x, z in zip(np.atleast_1d(d), np.atleast_1d(g), strict=True):
            name = self.column.names[0]
            for n in self.column.names[1:]:
                if self.top(n, x) >= z:
                    name = n
            out.append(name)
        return out

    def section(self, cover=(), intrusive=(), dip_every=500.0):
        """(line, profile, geology, dips) with ``cover`` and ``intrusive`` stretches
        ``(unit, start, end)`` replacing the bedrock on the map."""
        d = np.arange(0.0, CAKE_LENGTH + self.step / 2, self.step)
        line = SectionLine(np.array([[0.0, 0.0], [CAKE_LENGTH, 0.0]]), name="K")
        prof = Profile(d, d.copy(), np.zeros_like(d), self.ground(d), line, None, self.step)
        edges = [0.0, *[c for c, _ in self.contacts()], CAKE_LENGTH]
        runs = [(a, b, self.unit_at(0.5 * (a + b))[0])
                for a, b in zip(edges[:-1], edges[1:], strict=True)]
        for unit, s, e in [*intrusive, *cover]:  # cut each stretch in, the cover last
            kept = []
            for a, b, u in runs:
                if b <= s or a >= e:
                    kept.append((a, b, u))
                    continue
                if a < s:
                    kept.append((a, s, u))
                if b > e:
                    kept.append((e, b, u))
            runs = sorted([*kept, (s, e, unit)])
        iv = tuple(UnitInterval(a, b, u) for a, b, u in runs)
        ct = tuple(Contact(b, float(self.ground(b)), u0, u1)
                   for (_, b, u0), (_, _, u1) in zip(runs[:-1], runs[1:], strict=True))
        xs = np.arange(dip_every / 2, CAKE_LENGTH, dip_every)
        dips = dips_at(xs, self.ground(xs), np.full(len(xs), self.apparent))
        return line, prof, SurfaceGeology(iv, ct, ()), dips


def with_map_units(src: Path, dst: Path, added: dict) -> Path:
    """A copy of the map ``src`` with the polygons ``added`` (unit -> geometry, in the map's
    CRS) cut into its ``units`` layer: they replace whatever was mapped under them."""
    import geopandas as gpd
    import pyogrio

    units = pyogrio.read_dataframe(src, layer="units")
    for name, geom in added.items():
        units["geometry"] = units.geometry.difference(geom)
        row = units.iloc[[0]].copy()
        row["unit"] = name
        row["geometry"] = [geom]
        units = gpd.GeoDataFrame(_concat([units, row]), crs=units.crs)
    return write_map_variant(src, dst, units=units)


def _concat(frames):
    import pandas as pd

    return pd.concat(frames, ignore_index=True)


def point_on_line(line_xy, distance: float):
    """The map point ``distance`` metres along a straight line [[x0, y0], [x1, y1]]."""
    (x0, y0), (x1, y1) = line_xy
    f = distance / math.hypot(x1 - x0, y1 - y0)
    return x0 + f * (x1 - x0), y0 + f * (y1 - y0)
# --- an angular unconformity (invented; mapsection.sample_unconformity) ----------------


@pytest.fixture(scope="module")
def unconformity_cake(tmp_path_factory):
    """The analytic angular unconformity written once per module: beds dipping 20° east cut
    flat at 620 m under horizontal younger beds. Returns (model, project.toml path)."""
    from mapsection.sample_unconformity import generate, layer_cake_model

    model = layer_cake_model()
    paths = generate(tmp_path_factory.mktemp("unconformity"), model)
    return model, paths["project.toml"]


def section_to_map(line, d):
    """Map (x, y) of distances along a straight section line."""
    (ax, ay), (bx, by) = np.asarray(line.vertices, float)[[0, -1]]
    t = np.asarray(d, float) / math.hypot(bx - ax, by - ay)
    return ax + t * (bx - ax), ay + t * (by - ay)
# --- a long train of kink folds (construction cost along long lines) ------------------

TRAIN_COLUMN = Column((Unit("Ash", 200.0), Unit("Bay", 300.0), Unit("Cob", 400.0),
                       Unit("Dun", 500.0), Unit("Eld", 600.0), Unit("Fen", 600.0)))


def fold_train(length: float, half: float = 2500.0, spacing: float = 500.0,
               dip: float = 30.0, noise: float = 1.5, seed: int = 0):
    """Kink folds (limbs ±``dip``, axial surfaces every ``half`` m) under flat ground
    at 0 m along a straight line of ``length`` m: a dip every ``spacing`` m (none within
    300 m of a hinge) with uniform noise of ±``noise`` degrees, and the map contacts
    where the tops of TRAIN_COLUMN meet the ground (Suppe 1985 kink geometry: the
    stratigraphic depth at the ground changes by sin(dip) per metre along a limb).
    Returns (line, profile, geology, dips)."""
    line = SectionLine(np.array([[0.0, 0.0], [length, 0.0]]), name="K")
    d = np.arange(0.0, length + 5.0, 10.0)
    prof = Profile(d, d, np.zeros_like(d), np.zeros_like(d), line, None, 10.0)
    sn = math.sin(math.radians(dip))

    def phase(x):
        return np.mod(x, 2 * half) / half  # 0..1 the depth rises, 1..2 it falls

    xs = np.arange(spacing / 2, length, spacing)
    ph = phase(xs)
    xs = xs[np.abs(ph - np.round(ph)) * half >= 300.0]
    ph = phase(xs)
    rng = np.random.default_rng(seed)
    apparent = np.where(ph < 1, -dip, dip) + rng.uniform(-noise, noise, len(xs))
    k = len(xs)
    z = np.zeros(k)
    dips = ProjectedDips(np.arange(k), xs, z, xs, z, z, z, np.abs(apparent), apparent,
                         np.zeros(k, bool), np.zeros(k, bool))
    pd = phase(d)
    s = 300.0 + sn * half * np.where(pd < 1, pd, 2 - pd)
    tops = TRAIN_COLUMN.depth_to_top
    names = TRAIN_COLUMN.names
    idx = np.searchsorted(tops, s, side="right") - 1
    contacts = []
    for i in np.flatnonzero(np.diff(idx) != 0):
        top = tops[max(idx[i], idx[i + 1])]
        x = d[i] + (top - s[i]) / (s[i + 1] - s[i]) * (d[i + 1] - d[i])
        contacts.append(Contact(float(x), 0.0, names[idx[i]], names[idx[i + 1]]))
    geology = SurfaceGeology((UnitInterval(0.0, length, names[idx[0]]),), tuple(contacts), ())
    return line, prof, geology, dips
