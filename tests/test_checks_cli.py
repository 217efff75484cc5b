"""`mapsection check` end to end on the sample area (self-consistency; invented data).

The sample area is an invented structural model (mapsection.sample); its map, DEM and
attitudes are generated from it, so a good construction must pass all four tests, and
the flawed variant (one unit 40 % too thick) must miss the mapped contacts. The
hand-thinned horizon is checked against the restored area, thickness x length
(Epard & Groshong 1993, AAPG Bull. 77: area is conserved in plane strain).
"""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path

import geopandas as gpd
import numpy as np
import pytest
import shapely
from click.testing import CliRunner
from shapely.geometry import LineString

from mapsection.cli.main import cli
from mapsection.project import load_project

pytestmark = pytest.mark.filterwarnings("ignore:.crs. was not provided")

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area"
PROJECT = SAMPLE / "project.toml"
FLAWED = SAMPLE / "project_flawed.toml"


def _run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def _rows(output: str) -> dict[str, str]:
    """test name -> PASS/FAIL from the printed table (last section printed wins)."""
    out = {}
    for line in output.splitlines():
        parts = line.split()
        if len(parts) >= 2 and parts[1] in ("PASS", "FAIL"):
            out[parts[0]] = parts[1]
    return out


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    out = tmp_path_factory.mktemp("build") / "out"
    res = _run("build", PROJECT, "-o", out, "--section", "A")
    assert res.exit_code in (0, 1), res.output
    return out / "A"


def test_sample_area_passes():
    res = _run("check", PROJECT)
    rows = _rows(res.stdout)
    assert rows == dict.fromkeys(("topography", "restoration", "area_balance", "kinematics"),
                                 "PASS"), res.output
    assert res.stdout.count("PASS") == 8  # two sections, four tests each
    assert res.exit_code == 0, res.output


def test_flawed_variant_fails_topography(tmp_path):
    # The Talvo Limestone 40 % too thick: the horizons below it miss their contacts.
    res = _run("check", FLAWED, "--section", "A", "--json", tmp_path / "c.json",
               "--html", tmp_path / "r.html")
    assert res.exit_code == 1, res.output
    assert _rows(res.stdout)["topography"] == "FAIL", res.output
    topo = json.loads((tmp_path / "c.json").read_text())["topography"]
    assert topo["passed"] is False
    assert topo["contact_rms_m"] > topo["contact_threshold_m"] or topo["unpaired_map_contacts"]
    html = (tmp_path / "r.html").read_text("utf-8")
    assert html.count('src="data:image/png;base64,') >= 3  # section, restored, sequence


def test_unedited_file_passes_like_the_build(built, tmp_path):
    res = _run("check", PROJECT, "--from", built / "section.gpkg", "--json", tmp_path / "c.json")
    assert res.exit_code == 0, res.output
    assert "method edited" in res.stdout
    # read back, the same draft gives the build's figures (same default pin and loose lines)
    again = json.loads((tmp_path / "c.json").read_text())["restoration"]
    first = json.loads((built / "checks.json").read_text())["restoration"]
    for key in ("pin_m", "loose_m", "shortening_pct", "line_length_mismatch_pct"):
        assert again[key] == pytest.approx(first[key], rel=1e-6, abs=1e-6), key


def test_check_writes_the_report_the_build_writes(built, tmp_path):
    # self-consistency: 'check --html/--json' and 'build' share one writer of a section's
    # check outputs, so for the same section they write the same files, byte for byte
    res = _run("check", PROJECT, "--section", "A", "--html", tmp_path / "report.html",
               "--json", tmp_path / "checks.json")
    assert res.exit_code == 0, res.output
    for name in ("checks.json", "report.html"):
        assert (tmp_path / name).read_bytes() == (built / name).read_bytes(), name
    html = (tmp_path / "report.html").read_text("utf-8")
    assert 'src="data:image/gif;base64,' in html  # the sequence's GIF, as the build's has
    assert sorted(p.name for p in tmp_path.iterdir()) == ["checks.json", "report.html"]


def _below_older(names: list[str], unit: str) -> str:
    """The horizon closing ``unit`` below: the next older top, or the column's base."""
    i = names.index(unit)
    return names[i + 1] if i + 1 < len(names) else f"base of {unit}"


def _thin_one_unit(src: Path, dst: Path, names: list[str], thicknesses: dict[str, float],
                   share: float = 0.25):
    """Lower the top of one unit by share x its thickness (perpendicular to bedding) over the
    middle 80 % of its longest below-ground piece, as a geologist dragging vertices in a GIS
    would. Returns the unit, the stretch (m) and the area taken from it (m2)."""
    shutil.copy(src, dst)
    hz = gpd.read_file(dst, layer="horizons")
    below = ~hz["above_ground"].astype(bool)
    present = set(zip(hz["top_of"], hz["block"], strict=True))
    ok = [below[i] and t in thicknesses and t != names[0]
          and (_below_older(names, t), b) in present
          for i, (t, b) in enumerate(zip(hz["top_of"], hz["block"], strict=True))]
    i = hz[ok].geometry.length.idxmax()
    unit = hz.loc[i, "top_of"]
    line = hz.geometry[i].segmentize(20.0)  # vertices to drag
    c = shapely.get_coordinates(line).copy()
    x0, x1 = c[:, 0].min(), c[:, 0].max()
    lo, hi = x0 + 0.1 * (x1 - x0), x0 + 0.9 * (x1 - x0)
    slope = np.gradient(c[:, 1], c[:, 0])
    move = (c[:, 0] >= lo) & (c[:, 0] <= hi)
    # Perpendicular thinning t x share is a vertical shift t x share / cos(dip).
    c[move, 1] -= share * thicknesses[unit] * np.sqrt(1.0 + slope[move] ** 2)
    moved = LineString(c)
    # Area between the old and the new line, by shapely (reference library).
    taken = shapely.Polygon(np.vstack([shapely.get_coordinates(line),
                                       c[::-1]])).buffer(0).area
    hz.loc[i, "geometry"] = moved
    hz.to_file(dst, layer="horizons", driver="GPKG")
    return unit, hi - lo, taken


def test_hand_thinned_unit_fails_area_balance(built, tmp_path):
    project = load_project(PROJECT)
    names = project.column.names
    thick = {u.name: u.thickness for u in project.column.units}
    edited = tmp_path / "A" / "section.gpkg"
    edited.parent.mkdir()
    unit, stretch, taken = _thin_one_unit(built / "section.gpkg", edited, names, thick)
    assert stretch > 1000.0
    before = hashlib.sha256(edited.read_bytes()).hexdigest()
    out = tmp_path / "checks.json"
    res = _run("check", PROJECT, "--from", edited, "--json", out)
    assert res.exit_code == 1, res.output
    assert _rows(res.stdout)["area_balance"] == "FAIL", res.output
    assert hashlib.sha256(edited.read_bytes()).hexdigest() == before  # input left alone
    # The thinned unit lost the area between the old and the moved horizon (shapely),
    # against the build's own checks.json of the unedited section.
    old = {u["unit"]: u for u in json.loads((built / "checks.json").read_text())
           ["area_balance"]["units"]}
    new = {u["unit"]: u for u in json.loads(out.read_text())["area_balance"]["units"]}
    lost = old[unit]["deformed_area_m2"] - new[unit]["deformed_area_m2"]
    assert lost == pytest.approx(taken, rel=0.02)
    assert new[unit]["mismatch_pct"] < -project.thresholds.area_mismatch_pct
    assert not new[unit]["passed"]


def test_from_file_without_horizons(tmp_path):
    bad = tmp_path / "A" / "section.gpkg"
    bad.parent.mkdir()
    gpd.GeoDataFrame({"name": ["x"]}, geometry=[LineString([(0, 0), (1, 1)])]).to_file(
        bad, layer="profile", driver="GPKG")
    res = _run("check", PROJECT, "--from", bad)
    assert res.exit_code == 2
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and "horizons" in lines[0] and "section.gpkg" in lines[0], res.stderr


def test_from_section_with_no_horizons(built, tmp_path):
    empty = tmp_path / "A" / "section.gpkg"
    empty.parent.mkdir()
    shutil.copy(built / "section.gpkg", empty)
    hz = gpd.read_file(empty, layer="horizons")
    hz.iloc[0:0].to_file(empty, layer="horizons", driver="GPKG")
    res = _run("check", PROJECT, "--from", empty)
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and "horizons" in lines[0], res.stderr


def test_threshold_out_of_range(tmp_path):
    # Paths made absolute so the copied project file still finds the sample data.
    text = PROJECT.read_text("utf-8")
    for name in ("dem.tif", "geology.gpkg", "attitudes.csv"):
        text = text.replace(f'"{name}"', f'"{(SAMPLE / name).as_posix()}"')
    bad = tmp_path / "project.toml"
    bad.write_text(text + "\n[checks]\ndip_rms_deg = 120.0\n", "utf-8")
    res = _run("check", bad, "--section", "A")
    assert res.exit_code == 2
    assert "dip_rms_deg" in res.stderr and len(res.stderr.strip().splitlines()) == 1


def test_from_needs_a_section_when_ambiguous(built, tmp_path):
    loose = tmp_path / "edited.gpkg"
    shutil.copy(built / "section.gpkg", loose)
    import pyogrio

    # Without the file's own record of its section, the folder name is not a section.
    layers = [r[0] for r in pyogrio.list_layers(loose)]
    meta = pyogrio.read_info(loose, layer=layers[0]).get("dataset_metadata") or {}
    if meta.get("mapsection_section"):
        res = _run("check", PROJECT, "--from", loose)
        assert res.exit_code == 0, res.output  # inferred from the file's record
    res = _run("check", PROJECT, "--from", loose, "--section", "nosuch")
    assert res.exit_code == 2 and "nosuch" in res.stderr


def test_from_finds_the_section_recorded_in_the_file(built, tmp_path):
    # self-consistency: a copied file outside its build folder is still known as section A
    copy = tmp_path / "edited.gpkg"
    shutil.copy(built / "section.gpkg", copy)
    res = _run("check", PROJECT, "--from", copy)
    assert res.exit_code == 0, res.output
    assert res.stdout.startswith("section A (method edited")
