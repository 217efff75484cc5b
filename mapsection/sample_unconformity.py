"""A second sample area: an angular unconformity (invented data) and its generator.

The Carrick Tableland scenario (all names invented): a folded older sequence (four
Palaeozoic units over a thick quartzite) was eroded flat, then buried under a flat-lying
younger sequence (a conglomerate resting on the erosion surface, a sandstone above it).
Today's valleys cut through the younger beds into the folded older ones, and (an option of
the generator) their floors carry alluvium (``kind = "cover"``).

The model is exact. The older beds are parallel layers under one tilted plane (a tilted
layer-cake, one limb) or under the lower of two planes (a kink anticline, two limbs: the
layer at depth ``t`` is where the smaller of the distances below the limb planes equals
``t``, its axial surface bisecting the limbs; Suppe 1985, Principles of Structural
Geology). The unconformity is the horizontal plane ``z = unconformity_z``: older beds
above it were eroded; the younger beds are horizontal above it. The DEM is a smooth
surface of ridges and valleys.

``generate(folder)`` writes dem.tif, geology.gpkg, attitudes.csv, project.toml and
model.json; the tests build the analytic variant (:func:`layer_cake_model`) into a
temporary folder and compare the section with the model.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .stratigraphy import Column, Unit

__all__ = ["UnconformityModel", "TABLELAND", "layer_cake_model", "generate", "true_elevation",
           "unconformity_project"]

CRS = "EPSG:32612"
X0, Y0 = 402_000.0, 4_310_000.0  # lower-left corner
CELL = 25.0
NCOLS, NROWS = 280, 240  # 7 km x 6 km
SUPERSAMPLE = 2  # the map is polygonised on a 12.5 m grid
CENTRE = (X0 + NCOLS * CELL / 2, Y0 + NROWS * CELL / 2)

YOUNGER = Column((
    Unit("Tarrow Sandstone", 150.0, None, "Neogene", "flat-lying fluvial sandstone"),
    Unit("Carrick Conglomerate", 100.0, None, "Paleogene",
         "polymict conglomerate on the erosion surface", unconformity=True),
))
OLDER = Column((
    Unit("Bellin Shale", 300.0, None, "Permian", "grey shale"),
    Unit("Ardle Limestone", 250.0, None, "Carboniferous", "bioclastic limestone"),
    Unit("Mourne Siltstone", 350.0, None, "Devonian", "red siltstone"),
    Unit("Quill Sandstone", 200.0, None, "Silurian", "quartz sandstone"),
    Unit("Skerry Quartzite", 1800.0, None, "Ordovician", "massive quartzite"),
))
ALLUVIUM = Unit("Valley alluvium", 10.0, None, "Quaternary", "gravel and sand of the valley floors",
                kind="cover")


@dataclass(frozen=True)
class UnconformityModel:
    """Older beds under one or two limb planes, cut flat at ``unconformity_z``; flat
    younger beds above. ``limbs`` are (dip, dip direction) in degrees; ``crest_z`` the
    elevation of the top of the older column above ``hinge`` (map x, y). Two limbs make a
    kink anticline (the layer at depth t is where the smaller of the distances below the
    limb planes is t) or, with ``syncline``, a kink syncline (the larger)."""

    def _planes(self, x, y, z):
        """Distance below each limb plane through the hinge's top (along its normal)."""
        out = []
        for dip, az in self.limbs:
            d, a = np.radians(dip), np.radians(az)
            n = np.array([np.sin(d) * np.sin(a), np.sin(d) * np.cos(a), np.cos(d)])
            out.append(-((x - self.hinge[0]) * n[0] + (y - self.hinge[1]) * n[1]
                         + (z - self.crest_z) * n[2]))
        return np.array(out)

    limbs: tuple[tuple[float, float], ...]
    crest_z: float
    hinge: tuple[float, float] = CENTRE
    syncline: bool = False  # two limbs: concave up (else an anticline)
    unconformity_z: float = 620.0
    younger: Column = YOUNGER
    older: Column = OLDER
    alluvium_below: float | None = None  # valley floors below this elevation: alluvium
    title: str = "Carrick Tableland sample area"
    ve: float = 1.0  # the sections' vertical exaggeration and depth below the lowest ground
    depth: float = 3000.0
    sections: dict = field(default_factory=lambda: {
        "U": [(X0 + 300.0, CENTRE[1]), (X0 + NCOLS * CELL - 300.0, CENTRE[1])]})

    @property
    def column(self) -> Column:
        units = (*self.younger.units, *self.older.units)
        if self.alluvium_below is not None:
            units = (ALLUVIUM, *units)
        return Column(units)

    def older_depth(self, x, y, z):
        """Stratigraphic depth below the top of the older column (perpendicular to bedding)."""
        planes = self._planes(*np.broadcast_arrays(*(np.asarray(v, float) for v in (x, y, z))))
        return planes.max(axis=0) if self.syncline else planes.min(axis=0)

    def unit_index(self, x, y, z, ground=None):
        """Index into :attr:`column` of the rock at (x, y, z)."""
        x, y, z = np.broadcast_arrays(*(np.asarray(v, float) for v in (x, y, z)))
        shift = 1 if self.alluvium_below is not None else 0
        ny = len(self.younger.units)
        out = np.zeros(z.shape, int)
        above = z > self.unconformity_z
        h = z - self.unconformity_z  # height above the erosion surface
        tops = np.cumsum([u.thickness for u in self.younger.units[::-1]])  # oldest first
        yi = ny - 1 - np.minimum(np.searchsorted(tops, h, side="left"), ny - 1)
        s = self.older_depth(x, y, z)
        otops = self.older.depth_to_top
        oi = np.clip(np.searchsorted(otops, s, side="right") - 1, 0, len(otops) - 1)
        out = np.where(above, yi, ny + oi) + shift
        if self.alluvium_below is not None and ground is not None:
            out = np.where(np.asarray(ground) < self.alluvium_below, 0, out)
        return out

    def attitude(self, x, y, z):
        """(strike, dip), right-hand rule: flat above the unconformity, the limb below."""
        x, y, z = (np.asarray(v, float) for v in (x, y, z))
        planes = self._planes(x, y, z)
        k = planes.argmax(axis=0) if self.syncline else planes.argmin(axis=0)
        dip = np.array([self.limbs[i][0] for i in k])
        strike = np.array([(self.limbs[i][1] - 90.0) % 360.0 for i in k])
        flat = z > self.unconformity_z
        return np.where(flat, 0.0, strike), np.where(flat, 0.0, dip)


def layer_cake_model(alluvium: bool = False) -> UnconformityModel:
    """The analytic case: older beds dipping 20° east (one plane), cut flat at 620 m."""
    return UnconformityModel(limbs=((20.0, 90.0),), crest_z=1650.0,
                             alluvium_below=575.0 if alluvium else None,
                             title="Angular unconformity (analytic test case)")


# The demo: a kink syncline (limbs 25° east and 20° west) eroded flat, under flat beds.
TABLELAND = UnconformityModel(
    limbs=((25.0, 90.0), (20.0, 270.0)), crest_z=660.0, hinge=CENTRE, syncline=True,
    older=Column((*OLDER.units[:-1], Unit("Skerry Quartzite", 700.0, None, "Ordovician",
                                          "massive quartzite"))),
    alluvium_below=568.0, ve=2.0, depth=2000.0)


def dem_surface(x, y):
    """Ridges capped by the younger beds and valleys cut into the older ones (invented)."""
    u = (np.asarray(x, float) - X0) / 2800.0
    v = (np.asarray(y, float) - Y0) / 3500.0
    return 560.0 + 210.0 * (0.5 - 0.5 * np.cos(2 * np.pi * u)) + 25.0 * np.sin(2 * np.pi * v)


def true_elevation(model: UnconformityModel, name: str, x, y, eroded_nan: bool = True
                   ) -> np.ndarray:
    """The model's elevation of a horizon at map points: ``"top of U"`` for a unit, or
    ``"unconformity"`` (NaN where the older horizon lies above the unconformity: eroded)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    if name.startswith("base of "):  # the base of the older column
        name = f"top of {name.removeprefix('base of ')}"
        extra = model.older.unit(name.removeprefix("top of ")).thickness
    else:
        extra = 0.0
    if name == "unconformity":
        return np.full(x.shape, model.unconformity_z)
    unit = name.removeprefix("top of ")
    if unit in model.younger.names:
        below = model.younger.names[model.younger.index(unit):]
        return np.full(x.shape, model.unconformity_z
                       + sum(model.younger.unit(n).thickness for n in below))
    t = float(model.older.depth_to_top[model.older.index(unit)]) + extra
    # the layer at depth t: each limb plane shifted t along its normal; the lower of them
    # under an anticline, the higher in a syncline
    zs = []
    for dip, az in model.limbs:
        d, a = np.radians(dip), np.radians(az)
        n = np.array([np.sin(d) * np.sin(a), np.sin(d) * np.cos(a), np.cos(d)])
        zs.append(model.crest_z
                  - (t + (x - model.hinge[0]) * n[0] + (y - model.hinge[1]) * n[1]) / n[2])
    z = np.max(zs, axis=0) if model.syncline else np.min(zs, axis=0)
    return np.where(z < model.unconformity_z, z, np.nan) if eroded_nan else z


def _grid(n: int, cell: float, origin: float) -> np.ndarray:
    return origin + (np.arange(n) + 0.5) * cell


def _map(model: UnconformityModel):
    from affine import Affine

    from .sample.generator import polygonised_units

    fine = CELL / SUPERSAMPLE
    xs = _grid(NCOLS * SUPERSAMPLE, fine, X0)
    ys = _grid(NROWS * SUPERSAMPLE, fine, Y0)[::-1]
    gx, gy = np.meshgrid(xs, ys)
    z = dem_surface(gx, gy)
    idx = model.unit_index(gx, gy, z, ground=z).astype(np.int16)
    tr = Affine(fine, 0, X0, 0, -fine, Y0 + NROWS * CELL)
    keys, geoms = polygonised_units(idx, tr, fine)
    return [model.column.names[k] for k in keys], geoms


def _attitudes(model: UnconformityModel, rng: np.random.Generator) -> dict:
    n = 90
    x = rng.uniform(X0 + 100, X0 + NCOLS * CELL - 100, n)
    y = rng.uniform(Y0 + 100, Y0 + NROWS * CELL - 100, n)
    for (ax, ay), (bx, by) in (v for v in model.sections.values()):
        d = np.arange(250.0, np.hypot(bx - ax, by - ay), 400.0)
        t = d / np.hypot(bx - ax, by - ay)
        off = np.where(np.arange(len(d)) % 2 == 0, 120.0, -120.0)
        x = np.concatenate([x, ax + t * (bx - ax)])
        y = np.concatenate([y, ay + t * (by - ay) + off])
    z = dem_surface(x, y)
    strike, dip = model.attitude(x, y, z)
    keep = np.ones(len(x), bool)
    if model.alluvium_below is not None:
        keep = z >= model.alluvium_below  # no bedding measured on the valley floors
    ids = [f"CT{i + 1:03d}" for i in range(int(keep.sum()))]
    return {"id": ids, "x": x[keep], "y": y[keep], "strike": np.rint(strike[keep]).astype(int),
            "dip": np.rint(dip[keep]).astype(int)}


def project_text(model: UnconformityModel) -> str:
    out = [f"# {model.title} (invented data; see README.md).",
           "# An angular unconformity: generated by generate.py from "
           "mapsection.sample_unconformity.",
           f'title = "{model.title}"', f'crs = "{CRS}"', "",
           "[dem]", 'path = "dem.tif"', "",
           "[map]", 'path = "geology.gpkg"', 'units_layer = "units"', 'unit_field = "unit"', "",
           "[attitudes]", 'path = "attitudes.csv"', 'convention = "rhr"', "",
           "# Stratigraphic column, youngest first; thickness perpendicular to bedding (m).",
           "# unconformity = true: the unit's base is an erosion surface (an angular",
           "# unconformity); it and the units above it form a younger sequence."]
    for u in model.column.units:
        out += ["[[stratigraphy]]", f'unit = "{u.name}"']
        if u.kind != "layered":
            out.append(f'kind = "{u.kind}"')
        out.append(f"thickness = {u.thickness:.1f}")
        if u.unconformity:
            out.append("unconformity = true")
        out += [f'age = "{u.age}"', f'lithology = "{u.lithology}"', ""]
    for name, verts in model.sections.items():
        pts = ", ".join(f"[{x:.0f}, {y:.0f}]" for x, y in verts)
        out += [f"# Section {name}: across the fold, through ridges capped by the younger beds.",
                "[[section]]", f'name = "{name}"', f"line = [{pts}]", "corridor = 600.0",
                'method = "kink"', f"ve = {model.ve:g}", f"depth = {model.depth:g}", ""]
    return "\n".join(out)


def generate(folder: str | os.PathLike, model: UnconformityModel = TABLELAND,
             seed: int = 20251107) -> dict[str, Path]:
    """Write the project into ``folder``: dem.tif, geology.gpkg, attitudes.csv, project.toml
    and model.json. Deterministic for a given seed. Returns the paths written, by name."""
    import geopandas as gpd
    import rasterio
    from affine import Affine

    from ._atomic import atomic_file
    from .sample import polygonal

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    paths = {k: folder / k for k in ("dem.tif", "geology.gpkg", "attitudes.csv",
                                     "project.toml", "model.json")}
    gx, gy = np.meshgrid(_grid(NCOLS, CELL, X0), _grid(NROWS, CELL, Y0)[::-1])
    dem = dem_surface(gx, gy).astype("float32")
    profile = dict(driver="GTiff", width=NCOLS, height=NROWS, count=1, dtype="float32",
                   crs=CRS, transform=Affine(CELL, 0.0, X0, 0.0, -CELL, Y0 + NROWS * CELL),
                   nodata=-9999.0, compress="deflate", predictor=3)
    with atomic_file(paths["dem.tif"]) as tmp, rasterio.open(tmp, "w", **profile) as dst:
        dst.write(dem, 1)
    names, geoms = _map(model)
    col = model.column
    units = gpd.GeoDataFrame({"unit": names, "age": [col.unit(n).age for n in names],
                              "lithology": [col.unit(n).lithology for n in names]},
                             geometry=[polygonal(g) for g in geoms], crs=CRS)
    with atomic_file(paths["geology.gpkg"]) as tmp:
        tmp.unlink()
        units.to_file(tmp, layer="units", driver="GPKG")
    att = _attitudes(model, rng)
    rows = ["id,x,y,strike,dip"] + [
        f"{i},{x:.1f},{y:.1f},{s:d},{d:d}"
        for i, x, y, s, d in zip(att["id"], att["x"], att["y"], att["strike"], att["dip"],
                                 strict=True)]
    with atomic_file(paths["attitudes.csv"]) as tmp:
        tmp.write_text("\n".join(rows) + "\n", encoding="utf-8")
    with atomic_file(paths["project.toml"]) as tmp:
        tmp.write_text(project_text(model) + "\n", encoding="utf-8")
    summary = {"scenario": model.title, "crs": CRS, "seed": seed,
               "grid": {"x0": X0, "y0": Y0, "cell_m": CELL, "ncols": NCOLS, "nrows": NROWS},
               "limbs": [list(v) for v in model.limbs], "crest_z": model.crest_z,
               "hinge": list(model.hinge), "syncline": model.syncline,
               "unconformity_z": model.unconformity_z,
               "alluvium_below": model.alluvium_below,
               "column": [{"unit": u.name, "thickness": u.thickness, "kind": u.kind,
                           "unconformity": u.unconformity} for u in col.units],
               "sections": {k: [list(p) for p in v] for k, v in model.sections.items()}}
    with atomic_file(paths["model.json"]) as tmp:
        tmp.write_text(json.dumps(summary, indent=2) + "\n", encoding="utf-8")
    for p in paths.values():
        p.chmod(0o644)
    return paths


def unconformity_project() -> Path | None:
    """The committed second sample area's project file in a source checkout, or None."""
    path = Path(__file__).resolve().parents[1] / "sample_unconformity" / "project.toml"
    return path if path.is_file() else None
