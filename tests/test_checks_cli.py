"""`mapsection check` end to end on the sample area (self-consistency; invented data).

The sample area is an invented structural model (mapsection.sample); its map, DEM and
attitudes are generated from it, so a good construction must pass the topography test,
and the flawed variant (one unit 40 % too thick) must miss the mapped contacts. Judged at
its fault, the sample area's thrust restores with separations that disagree along one
straight fault (the construction's own shortcoming): restoration fails, honestly. The
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

from mapsection.checks import TESTS
from mapsection.cli.main import cli
from mapsection.project import load_project

pytestmark = pytest.mark.filterwarnings("ignore:.crs. was not provided")

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area"
PROJECT = SAMPLE / "project.toml"
FLAWED = SAMPLE / "project_flawed.toml"


def _run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def _rows(output: str) -> dict[str, str]:
    """test name -> PASS/FAIL/NOT TESTED from the printed table (last section printed
    wins)."""
    out = {}
    for line in output.splitlines():
        parts = line.split()
        if len(parts) >= 2 and parts[0] in TESTS and parts[1] in ("PASS", "FAIL"):
            out[parts[0]] = parts[1]
        elif len(parts) >= 3 and parts[0] in TESTS and parts[1:3] == ["NOT", "TESTED"]:
            out[parts[0]] = "NOT TESTED"
    return out


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    out = tmp_path_factory.mktemp("build") / "out"
    res = _run("build", PROJECT, "-o", out, "--section", "A")
    assert res.exit_code in (0, 1), res.output
    return out / "A"


def test_sample_area_verdicts():
    # Issue 12: the restoration is judged at the fault. The sample model's hanging wall is
    # rigid on a planar thrust (sample_area/README.md), and the draft's separations agree
    # along it, the eroded top of the Brantel Shale included (its hanging wall carried from
    # the footwall): restoration passes; area balance holds by construction and says so.
    res = _run("check", PROJECT)
    rows = _rows(res.stdout)
    assert rows == {"topography": "PASS", "restoration": "PASS", "area_balance": "PASS",
                    "kinematics": "PASS"}, res.output
    assert res.exit_code == 0, res.output  # nothing fails
    assert "fault Kelmby Thrust: separations" in res.stdout
    assert "line-length balance: holds by construction" in res.stdout
    assert "unit areas: holds by construction" in res.stdout
    # the fault-bend fold model never ran: said, and no "compared" count
    assert "fault-bend fold comparison: not tested" in res.stdout
    assert "compared" not in res.stdout
    assert res.stdout.strip().splitlines()[-1].startswith("no test fails (8 passed, 0 failed")


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


def test_unedited_file_checks_like_the_build(built, tmp_path):
    res = _run("check", PROJECT, "--from", built / "section.gpkg", "--json", tmp_path / "c.json")
    assert res.exit_code == 0, res.output  # nothing fails, as built
    assert _rows(res.stdout)["area_balance"] == "PASS"  # measured: an edited file may fail
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
    assert res.exit_code == 0, res.output  # nothing fails
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
        assert res.exit_code == 0, res.output  # inferred from the file's record; checked
    res = _run("check", PROJECT, "--from", loose, "--section", "nosuch")
    assert res.exit_code == 2 and "nosuch" in res.stderr


def test_from_finds_the_section_recorded_in_the_file(built, tmp_path):
    # self-consistency: a copied file outside its build folder is still known as section A
    copy = tmp_path / "edited.gpkg"
    shutil.copy(built / "section.gpkg", copy)
    res = _run("check", PROJECT, "--from", copy)
    assert res.exit_code == 0, res.output  # checked (nothing fails)
    assert res.stdout.startswith("section A (method edited")


def test_flawed_variant_diagnosis_names_the_thick_unit(tmp_path):
    # Issue 12: a failed topography test names the likely fix, in the CLI's failure lines
    # and in checks.json (the flawed variant's Talvo Limestone is 252 m in its column; the
    # invented model's true thickness is 180 m, mapsection.sample).
    res = _run("check", FLAWED, "--section", "B", "--json", tmp_path / "c.json")
    assert res.exit_code == 1, res.output
    assert "likely causes, strongest first:" in res.stdout
    assert "1. Talvo Limestone: the contacts fit" in res.stdout
    diag = json.loads((tmp_path / "c.json").read_text())["topography"]["diagnosis"]
    first = diag["causes"][0]
    assert first["kind"] == "thickness" and first["subject"] == "Talvo Limestone"
    assert first["figures"]["fitted_m"] == pytest.approx(180.0, rel=0.15)


def test_checks_json_three_states(tmp_path):
    # the flawed variant fails (its topography): a failed section says so at the top
    _run("check", FLAWED, "--section", "A", "--json", tmp_path / "f.json")
    flawed = json.loads((tmp_path / "f.json").read_text())
    assert flawed["status"] == "fail" and flawed["passed"] is False
    assert flawed["topography"]["status"] == "fail" and flawed["topography"]["passed"] is False
    _run("check", PROJECT, "--section", "A", "--json", tmp_path / "c.json")
    data = json.loads((tmp_path / "c.json").read_text())
    assert data["status"] == "pass" and data["passed"] is True
    for k in TESTS:
        assert data[k]["status"] in ("pass", "fail", "not_tested")
        assert data[k]["passed"] is {"pass": True, "fail": False}.get(data[k]["status"])
        assert isinstance(data[k]["reasons"], list)
        for part in data[k]["parts"].values():
            assert part["status"] in ("pass", "fail", "not_tested")
            assert part["passed"] is {"pass": True, "fail": False}.get(part["status"])
    rest = data["restoration"]
    assert rest["status"] == "pass" and rest["parts"]["separation_consistency"]["status"] == "pass"
    (fault,) = rest["faults"]["separations"]["faults"]
    assert fault["fault"] == "Kelmby Thrust" and fault["spread_m"] <= fault["threshold_m"]
    # the threshold is the tool's default: the larger of 20 % of the mean separation and
    # 2 DEM pixels (the sample DEM has 25 m pixels)
    assert fault["threshold_m"] == pytest.approx(max(0.2 * abs(fault["mean_m"]), 50.0))
    (cut,) = rest["faults"]["cutoffs"]["faults"]
    assert cut["threshold_m"] == pytest.approx(
        max(0.1 * abs(cut["mean_separation_m"]), 2 * 25.0))
    assert rest["parts"]["line_length_balance"]["reasons"][0].startswith("holds by construction")
    assert data["area_balance"]["reasons"] == ["unit areas: holds by construction"]
    fbf = data["kinematics"]["parts"]["fault_bend_fold"]
    assert fbf["status"] == "not_tested" and "mode-I" in fbf["reasons"][0]
    assert data["topography"]["diagnosis"] is None  # passed: nothing to diagnose


def test_from_file_whose_faults_carry_no_separations(built, tmp_path):
    # Bad input of issue 12: a hand-edited section.gpkg without separations on its faults
    # cannot be restored by its slip: the cutoffs are not tested, with the reason.
    edited = tmp_path / "A" / "section.gpkg"
    edited.parent.mkdir()
    shutil.copy(built / "section.gpkg", edited)
    faults = gpd.read_file(edited, layer="faults")
    faults["separations"] = None
    faults.to_file(edited, layer="faults", driver="GPKG")
    res = _run("check", PROJECT, "--from", edited, "--json", tmp_path / "c.json")
    assert res.exit_code in (0, 1), res.output
    cutoffs = json.loads((tmp_path / "c.json").read_text())["restoration"]["faults"]["cutoffs"]
    assert cutoffs["status"] == "not_tested" and cutoffs["passed"] is None
    assert "records no separations" in cutoffs["reasons"][0]
    assert "cutoffs at faults: not tested" in res.stdout


def test_fault_threshold_out_of_range_is_one_line(tmp_path):
    text = PROJECT.read_text("utf-8")
    for name in ("dem.tif", "geology.gpkg", "attitudes.csv"):
        text = text.replace(f'"{name}"', f'"{(SAMPLE / name).as_posix()}"')
    bad = tmp_path / "project.toml"
    bad.write_text(text + "\n[checks]\nseparation_spread_fraction = -0.5\n", "utf-8")
    res = _run("check", bad, "--section", "A")
    assert res.exit_code == 2
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "project.toml" in lines[0]
    assert "separation_spread_fraction" in lines[0] and "Traceback" not in res.stderr


def test_build_prints_verdicts_and_logs_the_diagnosis(tmp_path):
    # Issue 12: 'build' prints each section's verdicts, and build.log carries the check
    # table with the failed topography test's likely causes (the flawed variant's column
    # gives the Talvo Limestone 252 m; the invented model has 180 m, mapsection.sample).
    res = _run("build", FLAWED, "-o", tmp_path / "out", "--section", "A")
    assert res.exit_code == 0, res.output  # a failed test is a result, not an error
    assert "A: topography FAIL  restoration PASS" in res.stdout
    log = (tmp_path / "out" / "A" / "build.log").read_text("utf-8")
    assert "likely causes, strongest first:" in log
    assert "1. Talvo Limestone: the contacts fit" in log
    assert "restoration   PASS" in log and "holds by construction" in log
