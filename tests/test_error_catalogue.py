"""The catalogue of bad inputs (docs/errors.md), each run through the real command line.

Every case builds one bad input from a private copy of the sample area and asserts what
the user guide promises for bad input: exit code 2; exactly one line on stderr starting
``mapsection: error:``, naming the file, row, layer or key at fault (any other lines are
warnings or notes); no traceback; every input byte-identical afterwards (sha256) and no file
added beside them; nothing, visible or hidden, left in the output location. The message
shown in docs/errors.md is compared with the real one.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import pytest
from click.testing import CliRunner
from conftest import SampleCopy, everything_in, snapshot, write_dem_variant, write_map_variant

from mapsection.cli.main import cli

LINE_A = "604658,5218819;612195,5213542"
DOC = Path(__file__).resolve().parents[1] / "docs" / "errors.md"


@dataclass(frozen=True)
class Case:
    id: str
    cls: str  # the class of docs/errors.md
    make: Callable[[SampleCopy], list[str]]  # builds the bad input; the command's arguments
    names: tuple[str, ...]  # what the line must name (file, row, layer or key)


def build(s: SampleCopy) -> list[str]:
    return ["build", str(s.project), "-o", str(s.out)]


def check(s: SampleCopy, *extra: str) -> list[str]:
    return ["check", str(s.project), *extra]


def edited(old: str, new: str) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        s.edit_project(old, new)
        return build(s)
    return make


def section_key(text: str, index: int = 0) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        s.add_to_section(index, text)
        return build(s)
    return make


def appended(text: str) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        s.project.write_text(s.project.read_text("utf-8") + "\n" + text + "\n", "utf-8")
        return build(s)
    return make


def attitudes_csv(text: str, *keys: tuple[str, str]) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        s.write("attitudes.csv", text)
        for old, new in keys:
            s.edit_project(old, new)
        return build(s)
    return make


def dem_variant(**kw) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        write_dem_variant(s.dem, s.root / "dem2.tif", **kw)
        s.edit_project('path = "dem.tif"', 'path = "dem2.tif"')
        return build(s)
    return make


def map_variant(make_layers: Callable[[Path], dict]) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        write_map_variant(s.map, s.root / "geology2.gpkg", **make_layers(s.map))
        s.edit_project('path = "geology.gpkg"', 'path = "geology2.gpkg"')
        return build(s)
    return make


def _layer(path: Path, name: str):
    import pyogrio

    return pyogrio.read_dataframe(path, layer=name)


def profile(line: str, *extra: str) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        return ["profile", str(s.dem), line, "-o", str(s.out / "profile.csv"), *extra]
    return make


def dips(line: str, *extra: str) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        return ["dips", str(s.attitudes), line, "--dem", str(s.dem), "-o",
                str(s.out / "dips.csv"), *extra]
    return make


def line_file(geoms: Callable[[], list], *extra: str) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        import geopandas as gpd

        path = s.root / "line.gpkg"
        gpd.GeoDataFrame({"name": [f"g{i}" for i in range(len(geoms()))]}, geometry=geoms(),
                         crs="EPSG:32611").to_file(path, driver="GPKG")
        return ["profile", str(s.dem), str(path), "-o", str(s.out / "profile.csv"), *extra]
    return make


def section_gpkg(profile_xy: tuple[tuple[float, float], tuple[float, float]] | None,
                 horizons: bool = True, top_of: str = "Osk Sandstone"
                 ) -> Callable[[SampleCopy], list[str]]:
    """A small section.gpkg as 'build' writes it (layers horizons and profile_points)."""
    def make(s: SampleCopy) -> list[str]:
        import warnings

        with warnings.catch_warnings():  # section space has no CRS, as 'build' writes it
            warnings.filterwarnings("ignore", message=".*crs.*not provided")
            return _section_gpkg(s, profile_xy, horizons, top_of)
    return make


def _section_gpkg(s: SampleCopy, profile_xy, horizons: bool, top_of: str) -> list[str]:
    """The bad section.gpkg of the C cases (see section_gpkg)."""
    import geopandas as gpd
    import numpy as np
    from shapely.geometry import LineString, Point

    path = s.root / "section.gpkg"
    if horizons:
        gpd.GeoDataFrame({"top_of": [top_of], "above_ground": [0], "block": [0]},
                         geometry=[LineString([(0, 100), (9000, 200)])]).to_file(
            path, layer="horizons", driver="GPKG")
    else:
        gpd.GeoDataFrame({"name": ["x"]}, geometry=[LineString([(0, 0), (1, 1)])]).to_file(
            path, layer="lines", driver="GPKG")
    if profile_xy is not None:
        (x0, y0), (x1, y1) = profile_xy
        t = np.linspace(0.0, 1.0, 11)
        x, y = x0 + t * (x1 - x0), y0 + t * (y1 - y0)
        d = np.hypot(x - x0, y - y0)
        gpd.GeoDataFrame({"distance_m": d, "x": x, "y": y, "elevation_m": np.full(11, 1500.0)},
                         geometry=[Point(a, 1500.0) for a in d]).to_file(
            path, layer="profile_points", driver="GPKG")
    return check(s, "--section", "A", "--from", str(path))


def bom_then(make_rest: Callable[[SampleCopy], list[str]]) -> Callable[[SampleCopy], list[str]]:
    def make(s: SampleCopy) -> list[str]:
        s.project.write_bytes(b"\xef\xbb\xbf" + s.project.read_bytes())
        return make_rest(s)
    return make


def _units_as_lines(p: Path) -> dict:
    u = _layer(p, "units")
    u["geometry"] = u.geometry.boundary
    return {"units": u}


def _units_empty(p: Path) -> dict:
    return {"units": _layer(p, "units").iloc[0:0]}


def _unit_renamed(p: Path) -> dict:
    u = _layer(p, "units")
    u.loc[0, "unit"] = "Black Tuff"
    return {"units": u}


def _fault_dip(p: Path) -> dict:
    f = _layer(p, "faults")
    f["dip"] = 120.0
    return {"faults": f}


def _fault_no_dip(p: Path) -> dict:
    return {"faults": _layer(p, "faults").drop(columns=["dip"])}


def _faults_as_polygons(p: Path) -> dict:
    f = _layer(p, "faults")
    f["geometry"] = f.geometry.buffer(10.0)
    return {"faults": f}


def _attitudes_swapped(s: SampleCopy) -> list[str]:
    lines = s.attitudes.read_text("utf-8").splitlines()
    head = lines[0].split(",")
    ix, iy = head.index("x"), head.index("y")
    head[ix], head[iy] = "y", "x"
    s.write("attitudes.csv", "\n".join([",".join(head), *lines[1:]]) + "\n")
    return build(s)


def _attitudes_vector(geom_kind: str, layer_key: str | None = None):
    def make(s: SampleCopy) -> list[str]:
        import geopandas as gpd
        from shapely.geometry import LineString, Point

        g = (Point(608000, 5217000) if geom_kind == "point"
             else LineString([(608000, 5217000), (608100, 5217100)]))
        gpd.GeoDataFrame({"strike": [30.0], "dip": [20.0]}, geometry=[g],
                         crs="EPSG:32611").to_file(s.root / "att.gpkg", layer="att",
                                                   driver="GPKG")
        s.edit_project('path = "attitudes.csv"', 'path = "att.gpkg"')
        if layer_key is not None:
            s.edit_project('convention = "rhr"', f'convention = "rhr"\nlayer = "{layer_key}"')
        return build(s)
    return make


def _one_attitude_plunge(s: SampleCopy) -> list[str]:
    lines = s.attitudes.read_text("utf-8").splitlines()
    s.write("attitudes.csv", "\n".join(lines[:2]) + "\n")
    s.add_to_section(0, 'projection = "plunge"')
    return build(s)


def _several_sections_json(s: SampleCopy) -> list[str]:
    return check(s, "--json", str(s.out / "checks.json"))


P, D, M, A, L, C = "Project file", "DEM", "Map", "Attitudes", "Line", "check --from"
CASES = [
    # --- project file ------------------------------------------------------------------
    Case("P01", P, lambda s: ["build", str(s.root / "nope.toml"), "-o", str(s.out)],
         ("nope.toml",)),
    Case("P02", P, lambda s: ["build", str(s.root), "-o", str(s.out)], ("inputs",)),
    Case("P03", P, edited('title = "Varrow', 'title = Varrow'), ("project.toml", "TOML")),
    Case("P04", P, lambda s: [*build(s)[:1], str(s.write("bad.toml", b"crs = \"\xff\xfe\"\n")),
                              *build(s)[2:]], ("bad.toml",)),
    Case("P05", P, edited('crs = "EPSG:32611"', ""), ("project.toml", "crs")),
    Case("P06", P, edited('crs = "EPSG:32611"', 'crs = "EPSG:999999"'), ("project.toml", "crs")),
    Case("P07", P, edited('crs = "EPSG:32611"', 'crs = "EPSG:4326"'), ("project.toml", "crs")),
    Case("P08", P, edited('crs = "EPSG:32611"', 'crs = "EPSG:2227"'), ("project.toml", "crs")),
    Case("P09", P, edited('[dem]\npath = "dem.tif"\n', ""), ("project.toml", "dem")),
    Case("P10", P, edited('[dem]\npath = "dem.tif"', '[dem]\nfile = "dem.tif"'),
         ("project.toml", "dem.file")),
    Case("P11", P, edited('title = "', 'titel = "'), ("project.toml", "titel")),
    Case("P12", P, edited('units_layer = "units"\n', ""), ("project.toml", "map.units_layer")),
    Case("P13", P, edited("corridor = 600.0", "coridor = 600.0"),
         ("project.toml", "section[0].coridor")),
    Case("P14", P, edited("corridor = 600.0", "corridor = -5.0"),
         ("project.toml", "section[0].corridor")),
    Case("P15", P, edited("corridor = 600.0", "corridor = 1e9"),
         ("project.toml", "section[0].corridor")),
    Case("P16", P, section_key("ve = 1e4"), ("project.toml", "section[0].ve")),
    Case("P17", P, section_key("ve = 1e-6"), ("project.toml", "section[0].ve")),
    Case("P18", P, section_key("depth = 1e7"), ("project.toml", "section[0].depth")),
    Case("P19", P, edited('method = "kink"', 'method = "zigzag"'),
         ("project.toml", "section[0].method")),
    Case("P20", P, section_key('projection = "sideways"'),
         ("project.toml", "section[0].projection")),
    Case("P21", P, edited('convention = "rhr"', 'convention = "compass"'),
         ("project.toml", "attitudes.convention")),
    Case("P22", P, section_key("dip_tolerance = 120"),
         ("project.toml", "section[0].dip_tolerance")),
    Case("P23", P, section_key("default_dip = 95"), ("project.toml", "section[0].default_dip")),
    Case("P24", P, section_key("pin = 20000.0"), ("project.toml", "section[0].pin")),
    Case("P25", P, edited("line = [[604658, 5218819], [612195, 5213542]]",
                          "line = [[604658, 5218819]]"), ("project.toml", "section[0].line")),
    Case("P26", P, edited("[612195, 5213542]]", '["612195", 5213542]]'),
         ("project.toml", "section[0].line[1]")),
    Case("P27", P, edited("[612195, 5213542]]", "[604658, 5218819]]"),
         ("project.toml", "section[0].line")),
    Case("P28", P, edited("line = [[604658, 5218819], [612195, 5213542]]",
                          "line = [[604658, 5218819], [612195, 5213542], [612195, 5218000], "
                          "[604658, 5214000]]"), ("project.toml", "section[0].line")),
    Case("P29", P, edited("thickness = 300.0", "thickness = 0.0"),
         ("project.toml", "stratigraphy[0].thickness")),
    Case("P30", P, edited("thickness = 300.0", 'thickness = "thick"'),
         ("project.toml", "stratigraphy[0].thickness")),
    Case("P31", P, edited('age = "Jurassic"', 'colour = "yellow"\nage = "Jurassic"'),
         ("project.toml", "stratigraphy[1].colour")),
    Case("P32", P, edited('name = "B"', 'name = "A"'), ("project.toml", "'A'")),
    Case("P33", P, edited('unit = "Osk Sandstone"', 'unit = "Brantel Shale"'),
         ("project.toml", "Brantel Shale")),
    Case("P34", P, appended("[checks]\nunit_agreement = 1.5"),
         ("project.toml", "checks.unit_agreement")),
    Case("P35", P, appended("[checks]\narea_mismatch_pct = 0"),
         ("project.toml", "checks.area_mismatch_pct")),
    Case("P36", P, appended("[checks]\ncontact_rms_m = 0\ncontact_rms_pixels = 0"),
         ("project.toml", "checks.contact_rms_m")),
    Case("P37", P, edited('[dem]\npath = "dem.tif"', '[dem]\npath = "dem.tif"\n'
                          'vertical_unit = "furlong"'), ("project.toml", "dem.vertical_unit")),
    Case("P38", P, lambda s: [*build(s), "--section", "Z"], ("project.toml", "'Z'")),
    Case("P39", P, bom_then(section_key("ve = inf")), ("project.toml", "section[0].ve")),
    Case("P40", P, lambda s: [*build(s), "--ve", "1e4"], ("ve",)),
    Case("P41", P, edited('unit = "Osk Sandstone"', 'unit = ""'),
         ("project.toml", "stratigraphy[1].unit")),
    Case("P42", P, edited('name = "A"', 'name = " "'), ("project.toml", "section[0].name")),
    Case("P43", P, edited("line = [[604658, 5218819], [612195, 5213542]]",
                          "line = [[1e20, 5218819], [612195, 5213542]]"),
         ("project.toml", "section[0].line")),
    # units that are not layers, and unconformities (issue 10)
    Case("P44", P, edited("[[stratigraphy]]\n", '[[stratigraphy]]\nunit = "Valley alluvium"\n'
                          'kind = "cover"\nunconformity = true\n\n[[stratigraphy]]\n'),
         ("project.toml", "stratigraphy[0]", "Valley alluvium")),
    Case("P45", P, edited("[[stratigraphy]]\n", '[[stratigraphy]]\nunit = "Valley alluvium"\n'
                          'kind = "veneer"\n\n[[stratigraphy]]\n'),
         ("project.toml", "stratigraphy[0].kind")),
    Case("P46", P, edited("[[stratigraphy]]\n", '[[stratigraphy]]\nunit = "Valley alluvium"\n'
                          'kind = "cover"\nthickness = "map"\n\n[[stratigraphy]]\n'),
         ("project.toml", "stratigraphy[0]", "Valley alluvium")),
    Case("P47", P, edited("thickness = 240.0", "thickness = 240.0\nunconformity = true"),
         ("project.toml", "stratigraphy", "Hesk Quartzite")),
    Case("P48", P, edited("thickness = 240.0", 'thickness = 240.0\n\n[[stratigraphy]]\n'
                          'unit = "Grey Limestone"\nthickness = "map"'),
         ("project.toml", "stratigraphy[6].thickness", "Grey Limestone")),
    # --- DEM ---------------------------------------------------------------------------
    Case("D01", D, edited('path = "dem.tif"', 'path = "nodem.tif"'), ("nodem.tif",)),
    Case("D02", D, lambda s: (s.root.joinpath("demdir").mkdir(),
                              edited('path = "dem.tif"', 'path = "demdir"')(s))[1], ("demdir",)),
    Case("D03", D, lambda s: (s.write("text.tif", "not a raster\n"),
                              edited('path = "dem.tif"', 'path = "text.tif"')(s))[1],
         ("text.tif",)),
    Case("D04", D, dem_variant(crs=None), ("dem2.tif", "CRS")),
    Case("D05", D, dem_variant(transform=__import__("affine").Affine.identity()),
         ("dem2.tif",)),
    Case("D06", D, dem_variant(units="cm"), ("dem2.tif", "'cm'")),
    Case("D07", D, dem_variant(shift=(50_000.0, 0.0)), ("dem2.tif", "geology.gpkg")),
    Case("D08", D, dem_variant(shift=(0.0, 8_000.0)), ("dem2.tif", "section line A")),
    # --- map ---------------------------------------------------------------------------
    Case("M01", M, edited('path = "geology.gpkg"', 'path = "nomap.gpkg"'), ("nomap.gpkg",)),
    Case("M02", M, lambda s: (s.write("text.gpkg", "not a map\n"),
                              edited('path = "geology.gpkg"', 'path = "text.gpkg"')(s))[1],
         ("text.gpkg",)),
    Case("M03", M, edited('units_layer = "units"', 'units_layer = "polygons"'),
         ("geology.gpkg", "'polygons'")),
    Case("M04", M, edited('unit_field = "unit"', 'unit_field = "formation"'),
         ("geology.gpkg", "'units'", "'formation'")),
    Case("M05", M, edited('faults_layer = "faults"', 'faults_layer = "fault"'),
         ("geology.gpkg", "'fault'")),
    # real maps rarely store fault dips: a missing dip field is taken from the project
    # ([[fault]] dip or [map] default_fault_dip, issue 11); with neither, the keys are named
    Case("M06", M, map_variant(_fault_no_dip), ("Kelmby Thrust", "[[fault]]",
                                                "default_fault_dip")),
    Case("M07", M, map_variant(_fault_dip), ("geology2.gpkg", "'faults'", "feature 1")),
    Case("M08", M, map_variant(_units_as_lines), ("geology2.gpkg", "'units'")),
    Case("M09", M, map_variant(_units_empty), ("geology2.gpkg", "'units'")),
    Case("M10", M, map_variant(_unit_renamed), ("geology2.gpkg", "'units'", "Black Tuff")),
    Case("M11", M, map_variant(_faults_as_polygons), ("geology2.gpkg", "'faults'")),
    # --- attitudes ---------------------------------------------------------------------
    Case("A01", A, edited('path = "attitudes.csv"', 'path = "noatt.csv"'), ("noatt.csv",)),
    Case("A02", A, lambda s: (s.root.joinpath("attdir").mkdir(),
                              edited('path = "attitudes.csv"', 'path = "attdir"')(s))[1],
         ("attdir",)),
    Case("A03", A, attitudes_csv("id,x,y,strike\nV1,608000,5217000,30\n"),
         ("attitudes.csv", "'dip'")),
    Case("A04", A, attitudes_csv(""), ("attitudes.csv",)),
    Case("A05", A, attitudes_csv("id,x,y,strike,dip\n"), ("attitudes.csv",)),
    Case("A06", A, attitudes_csv("id,x,y,strike,dip\nV1,608000,5217000,30,steep\n"),
         ("attitudes.csv",)),
    Case("A07", A, attitudes_csv("id,x,y,strike,dip,dip\nV1,608000,5217000,30,20,25\n"),
         ("attitudes.csv", "'dip'")),
    Case("A08", A, lambda s: (s.write("attitudes.csv", b"x,y,strike,dip\n\xff\xfe,1,2,3\n"),
                              build(s))[1], ("attitudes.csv",)),
    Case("A09", A, _attitudes_swapped, ("attitudes.csv", "swapped")),
    Case("A10", A, attitudes_csv("id,x,y,dip_direction,dip\nV1,608000,5217000,30,20\n"),
         ("attitudes.csv", "'strike'", "dip-direction")),
    Case("A11", A, attitudes_csv("id,x,y,strike,dip\nV1,608000,5217000,30,20\n",
                                 ('convention = "rhr"', 'convention = "quadrant"')),
         ("attitudes.csv",)),
    Case("A12", A, _attitudes_vector("point", "nolayer"), ("att.gpkg", "'nolayer'")),
    Case("A13", A, _attitudes_vector("line"), ("att.gpkg", "feature 1")),
    Case("A14", A, _one_attitude_plunge, ("attitudes.csv", "1 row")),
    Case("A15", A, edited('convention = "rhr"', 'convention = "rhr"\ndip_field = "inclination"'),
         ("attitudes.csv", "'inclination'")),
    # --- section line (mapsection profile and dips) ------------------------------------
    Case("L01", L, profile("604658,5218819;612195"), ("604658,5218819;612195",)),
    Case("L02", L, profile("line.gpkg"), ("line.gpkg",)),
    Case("L03", L, line_file(lambda: [__import__("shapely").LineString([(604658, 5218819),
                                                                        (612195, 5213542)]),
                                      __import__("shapely").LineString([(605000, 5219000),
                                                                        (611000, 5214000)])]),
         ("line.gpkg", "2 lines")),
    Case("L04", L, line_file(lambda: [__import__("shapely").box(605000, 5214000, 611000,
                                                                5219000)]),
         ("line.gpkg", "Polygon")),
    Case("L05", L, profile("604658,5218819;604658,5218819"), ("section line",)),
    Case("L06", L, profile("605000,5213000;612000,5220000;612000,5213000;605000,5220000"),
         ("section line", "crosses itself")),
    Case("L07", L, profile("704658,5218819;712195,5213542"), ("section line", "dem.tif")),
    Case("L08", L, profile(LINE_A, "--step", "-1"), ("step",)),
    Case("L09", L, profile(LINE_A, "--step", "1e9"), ("step",)),
    Case("L10", L, dips(LINE_A, "--corridor", "1e9"), ("corridor",)),
    Case("L11", L, lambda s: (s.write("line.gpkg", "not a vector file\n"),
                              profile(str(s.root / "line.gpkg"))(s))[1], ("line.gpkg",)),
    Case("L12", L, profile(LINE_A, "--step", "ten"), ("--step",)),
    # --- check --from ------------------------------------------------------------------
    Case("F01", C, lambda s: check(s, "--section", "A", "--from", str(s.root / "none.gpkg")),
         ("none.gpkg",)),
    Case("F02", C, lambda s: (s.write("section.gpkg", "not a geopackage\n"),
                              check(s, "--section", "A", "--from",
                                    str(s.root / "section.gpkg")))[1], ("section.gpkg",)),
    Case("F03", C, section_gpkg(None, horizons=False), ("section.gpkg", "'horizons'")),
    Case("F04", C, section_gpkg(((605000.0, 5219000.0), (612000.0, 5214000.0))),
         ("section.gpkg", "section line", "project.toml")),
    Case("F05", C, section_gpkg(None, top_of="Black Tuff"),
         ("section.gpkg", "'horizons'", "row 0", "Black Tuff")),
    Case("F06", C, _several_sections_json, ("--section",)),
]


def _message(line: str, s: SampleCopy) -> str:
    """The error line as docs/errors.md shows it: no prefix, paths relative to the inputs."""
    text = line.removeprefix("mapsection: error: ")
    for folder, name in ((s.out, "out"), (s.root, "")):
        text = text.replace(str(folder) + "/", f"{name}/" if name else "")
        text = text.replace(str(folder), name or ".")
    return text


def _documented() -> dict[str, str]:
    """id -> the message column of docs/errors.md."""
    rows = {}
    for line in DOC.read_text("utf-8").splitlines():
        m = re.match(r"^\| ([A-Z]\d\d) \| .*? \| `(.*)` \| .* \|$", line)
        if m:
            rows[m.group(1)] = m.group(2).replace("\\|", "|")
    return rows


def run_case(case: Case, s: SampleCopy):
    argv = case.make(s)
    before = snapshot(s.root)
    result = CliRunner().invoke(cli, argv)
    return result, before


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_bad_input_gives_one_line(case: Case, sample_copy: SampleCopy):
    s = sample_copy
    result, before = run_case(case, s)
    err = result.stderr
    assert result.exit_code == 2, (result.exit_code, err, result.exception)
    assert "Traceback" not in err and "Traceback" not in result.output
    lines = err.strip("\n").splitlines()
    errors = [ln for ln in lines if ln.startswith("mapsection: error: ")]
    assert len(errors) == 1, err
    assert lines[-1] == errors[0], err
    others = [ln for ln in lines[:-1]
              if not ln.startswith(("mapsection: warning: ", "mapsection: note: "))]
    assert not others, err
    for name in case.names:
        assert name in errors[0], (name, errors[0])
    # Inputs byte-identical, nothing added beside them; nothing left in the output folder.
    assert snapshot(s.root) == before
    assert everything_in(s.out) == []
    # The user guide shows the message the user sees.
    documented = _documented().get(case.id)
    assert documented is not None, f"{case.id} is not in docs/errors.md"
    actual = _message(errors[0], s)
    if documented.endswith(" (...)"):  # a reason given by the file-reading library
        assert actual.startswith(documented[:-len("(...)")]) and actual.endswith(")"), actual
    else:
        assert documented == actual


def test_catalogue_counts():
    # issue: at least 50 catalogued bad inputs in these classes
    by_class: dict[str, int] = {}
    for c in CASES:
        by_class[c.cls] = by_class.get(c.cls, 0) + 1
    assert sum(by_class.values()) >= 50
    assert set(by_class) == {P, D, M, A, L, C}
    # docs/errors.md lists each of these cases once, and no other case of these classes
    ids = re.findall(r"^\| ([PDMALF]\d\d) \|", DOC.read_text("utf-8"), flags=re.M)
    assert sorted(ids) == sorted(c.id for c in CASES)


def test_project_file_with_byte_order_mark_is_read(sample_copy: SampleCopy):
    from mapsection.project import load_project

    s = sample_copy
    s.project.write_bytes(b"\xef\xbb\xbf" + s.project.read_bytes())
    assert [sec.name for sec in load_project(s.project).sections] == ["A", "B"]
