"""``mapsection build`` / ``demo``: folder layout, whole replacement, failure leaves the old build.

Runs on the invented sample area (self-consistency); the file formats are checked
with their own readers (pyogrio for GeoPackage, Pillow for PNG, the XML parser
for SVG).
"""

from __future__ import annotations

import hashlib
import json
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pyogrio
import pytest
import shapely
from click.testing import CliRunner
from PIL import Image

from mapsection.checks.summary import (
    AreaFigures,
    KeyFigures,
    KinematicsFigures,
    RestorationFigures,
    TopographyFigures,
)
from mapsection.cli.main import cli
from mapsection.errors import ConstructionError, ParameterError
from mapsection.project import Thresholds

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area" / "project.toml"
FILES = {"section.gpkg", "section_3d.gpkg", "section.png", "section.svg", "section.pdf",
         "build.log"}


def _digest(folder: Path) -> dict[str, str]:
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    from mapsection.build import build_project

    out = tmp_path_factory.mktemp("build") / "out"
    timings: dict[str, float] = {}
    folders = build_project(SAMPLE, out, warn=lambda m: None, timings=timings)
    return out, folders, timings


def test_folder_layout(built):
    from mapsection.project import load_project

    out, folders, timings = built
    names = [s.name for s in load_project(SAMPLE).sections]
    assert [f.name for f in folders] == names
    assert sorted(p.name for p in out.iterdir()) == sorted(names)  # no temporary leftovers
    for folder in folders:
        files = {p.name for p in folder.iterdir()}
        assert FILES <= files
        assert not [f for f in files if f.endswith(".aux.xml") or f.startswith(".")]
        layers = dict(pyogrio.list_layers(folder / "section.gpkg"))
        for layer in ("profile", "surface_geology", "dips", "horizons", "faults", "units"):
            assert layer in layers
        info = pyogrio.read_info(folder / "section.gpkg", layer="horizons")
        assert {"top_of", "above_ground", "block"} <= set(info["fields"])
        assert info["features"] > 0
        info3 = pyogrio.read_info(folder / "section_3d.gpkg", layer="horizons")
        assert info3["geometry_type"] == "LineString Z" and info3["crs"] == "EPSG:32611"
        assert Image.open(folder / "section.png").size[0] > 1000
        svg = ET.parse(folder / "section.svg").getroot()
        n_h = sum(1 for el in svg.iter() if (el.get("id") or "").startswith("horizon-"))
        hz = pyogrio.read_dataframe(folder / "section.gpkg", layer="horizons")
        assert n_h == int((~hz.geometry.is_empty & hz.geometry.notna()).sum())
        # The dip ticks: one collection, a path per reading.
        (ticks,) = [el for el in svg.iter() if el.get("id") == "dip-ticks"]
        n_d = sum(1 for el in ticks.iter() if el.tag.rsplit("}", 1)[-1] in ("path", "use"))
        assert n_d == pyogrio.read_info(folder / "section.gpkg", layer="dips")["features"]
        log = (folder / "build.log").read_text(encoding="utf-8")
        assert f"section {folder.name}" in log and "CAUTION" in log
        # The checks' outputs (issue 5): checks.json, report, restored state, sequence.
        checks = json.loads((folder / "checks.json").read_text(encoding="utf-8"))
        for test in ("topography", "restoration", "area_balance", "kinematics"):
            assert isinstance(checks[test]["passed"], bool)
        assert {"report.html", "restored.png", "restored.svg", "restored.pdf"} <= files
        assert {"restored_horizons", "restored_units"} <= set(layers)
        assert (folder / "sequence" / "sequence.gif").is_file()
    assert set(timings) >= {"load", "section data", "construction", "figures", "geopackages"}


def test_rebuild_replaces_the_folder_whole(built):
    from mapsection.build import build_project

    out, _, _ = built
    stray = out / "A" / "left over.txt"
    stray.write_text("from an older build", encoding="utf-8")
    before_b = _digest(out / "B")
    build_project(SAMPLE, out, section="A", warn=lambda m: None)
    assert not stray.exists()
    assert FILES <= {p.name for p in (out / "A").iterdir()}
    assert _digest(out / "B") == before_b  # the other section is not touched
    assert sorted(p.name for p in out.iterdir()) == ["A", "B"]


def test_failed_build_keeps_the_previous_folder(built, monkeypatch):
    import mapsection.construct

    out, _, _ = built
    before = _digest(out / "A")

    def fail(*args, **kwargs):
        raise ConstructionError("section A: contradictory contacts at 1200 m and 3400 m")

    monkeypatch.setattr(mapsection.construct, "build_draft", fail)
    result = CliRunner().invoke(cli, ["build", str(SAMPLE), "-o", str(out), "--section", "A"])
    assert result.exit_code == 2
    err = [ln for ln in result.output.splitlines() if ln.startswith("mapsection: error:")]
    assert err == ["mapsection: error: section A: contradictory contacts at 1200 m and 3400 m"]
    assert "Traceback" not in result.output
    assert _digest(out / "A") == before
    assert sorted(p.name for p in out.iterdir()) == ["A", "B"]  # no temporary folder left


def test_unknown_method_is_refused(tmp_path):
    result = CliRunner().invoke(cli, ["build", str(SAMPLE), "-o", str(tmp_path / "o"),
                                      "--method", "spline"])
    assert result.exit_code == 2
    assert "spline" in result.output and "kink" in result.output
    assert not (tmp_path / "o").exists()
    from mapsection.build import build_project

    with pytest.raises(ParameterError, match="method 'spline'"):
        build_project(SAMPLE, tmp_path / "o", method="spline")
    with pytest.raises(ParameterError, match="vertical exaggeration"):
        build_project(SAMPLE, tmp_path / "o", ve=0.0)
    assert not (tmp_path / "o").exists()


def test_unknown_section_and_missing_project(tmp_path):
    runner = CliRunner()
    result = runner.invoke(cli, ["build", str(tmp_path / "nope.toml"), "-o", str(tmp_path)])
    assert result.exit_code == 2 and "nope.toml" in result.output
    result = runner.invoke(cli, ["build", str(SAMPLE), "-o", str(tmp_path / "o"),
                                 "--section", "Z"])
    assert result.exit_code == 2 and "no section named 'Z'" in result.output
    afile = tmp_path / "a_file"
    afile.write_text("not a folder", encoding="utf-8")
    result = runner.invoke(cli, ["build", str(SAMPLE), "-o", str(afile)])
    assert result.exit_code == 2 and "a_file: exists and is not a folder" in result.output
    assert afile.read_text(encoding="utf-8") == "not a folder"


def test_demo_uses_the_sample_area_or_generates_it(tmp_path, monkeypatch):
    import mapsection.build
    import mapsection.sample

    calls = []

    def fake_build(project, outdir, **kw):
        calls.append(Path(project))
        assert Path(project).is_file()
        folder = Path(outdir) / "A"
        folder.mkdir(parents=True, exist_ok=True)
        status = "fail" if "flawed" in Path(project).name else "pass"
        # the demo prints the key figures the build hands back (it reads no file back)
        kw["summaries"][folder] = KeyFigures(
            "A", "kink", 1.0, Thresholds(), TopographyFigures(status),
            RestorationFigures(status), AreaFigures(status), KinematicsFigures("not_tested"))
        return [folder]

    monkeypatch.setattr(mapsection.build, "build_project", fake_build)
    runner = CliRunner()
    result = runner.invoke(cli, ["demo", "-o", str(tmp_path / "d")])
    assert result.exit_code == 0, result.output
    # the sample area, then its flawed variant, then the second sample area (an angular
    # unconformity), each with its one-line summary
    assert calls[:2] == [SAMPLE, SAMPLE.with_name("project_flawed.toml")]
    assert calls[2].parent.name == "sample_unconformity" and len(calls) == 3
    assert "CAUTION" in result.output and str(tmp_path / "d" / "A") in result.output
    assert "topography PASS" in result.output and "topography FAIL" in result.output
    assert "kinematics NOT TESTED" in result.output  # never shown as a pass

    def fake_generate(folder):
        p = Path(folder) / "project.toml"
        p.write_text("# generated\n", encoding="utf-8")
        return {"project.toml": p}

    monkeypatch.setattr(mapsection.sample, "sample_project", lambda: None)
    monkeypatch.setattr(mapsection.sample, "generate", fake_generate)
    result = runner.invoke(cli, ["demo", "-o", str(tmp_path / "d")])
    assert result.exit_code == 0, result.output
    assert calls[-3].name == "project.toml" and calls[-3].parent != SAMPLE.parent


def test_help_carries_the_caution():
    from mapsection import CAUTION

    for name in ("build", "demo"):
        result = CliRunner().invoke(cli, [name, "--help"])
        assert result.exit_code == 0
        assert " ".join(CAUTION.split()[:6]) in " ".join(result.output.split())


def test_parallel_writing_gives_the_same_outputs(built, tmp_path):
    # self-consistency: writing the sections' outputs in worker processes changes nothing
    from mapsection.build import build_project

    out, _, _ = built
    serial = tmp_path / "serial"
    build_project(SAMPLE, serial, warn=lambda m: None, workers=1)
    for name in ("A", "B"):
        a = json.loads((serial / name / "checks.json").read_text())
        b = json.loads((out / name / "checks.json").read_text())
        assert a == b
        assert {p.relative_to(serial / name) for p in (serial / name).rglob("*")} == \
            {p.relative_to(out / name) for p in (out / name).rglob("*")}
        # the drafts were constructed in the workers too: the same horizons (pyogrio
        # reads them back), within 1e-6 m
        h0 = pyogrio.read_dataframe(serial / name / "section.gpkg", layer="horizons")
        h1 = pyogrio.read_dataframe(out / name / "section.gpkg", layer="horizons")
        assert list(h0["top_of"]) == list(h1["top_of"]) and len(h0) > 3
        for g0, g1 in zip(h0.geometry, h1.geometry, strict=True):
            c0, c1 = shapely.get_coordinates(g0), shapely.get_coordinates(g1)
            assert c0.shape == c1.shape and np.abs(c0 - c1).max() <= 1e-6
        assert (serial / name / "build.log").read_text() == (out / name / "build.log").read_text()


def test_a_section_that_cannot_be_constructed_in_a_worker_leaves_nothing(built, monkeypatch):
    # A construction error raised in a worker process comes back as the command's one
    # error line (exit 2), and no section folder is swapped in.
    import mapsection.construct

    out, _, _ = built
    before = {name: _digest(out / name) for name in ("A", "B")}
    real = mapsection.construct.build_draft

    def fail_on_b(*args, **kwargs):
        if kwargs.get("name") == "B":
            raise ConstructionError("section B: no dips within the corridor and no default_dip")
        return real(*args, **kwargs)

    monkeypatch.setattr(mapsection.construct, "build_draft", fail_on_b)
    result = CliRunner().invoke(cli, ["build", str(SAMPLE), "-o", str(out), "--workers", "2"])
    assert result.exit_code == 2, result.output
    assert "mapsection: error: section B: no dips" in result.output
    assert "Traceback" not in result.output
    assert {name: _digest(out / name) for name in ("A", "B")} == before
    assert sorted(p.name for p in out.iterdir()) == ["A", "B"]


def test_workers_from_the_environment(monkeypatch):
    from mapsection.build import _workers

    monkeypatch.setenv("MAPSECTION_WORKERS", "3")
    assert _workers(None) == 3 and _workers(1) == 1
    monkeypatch.setenv("MAPSECTION_WORKERS", "many")
    with pytest.raises(ParameterError, match="MAPSECTION_WORKERS"):
        _workers(None)


def test_a_failing_section_leaves_every_folder_as_it_was(built, monkeypatch):
    import mapsection.build
    from mapsection.errors import CheckError

    out, _, _ = built
    before = {name: _digest(out / name) for name in ("A", "B")}
    real = mapsection.build._write_checks

    def fail_on_b(folder, draft, *args, **kwargs):
        if draft.name == "B":
            raise CheckError("section B: pin line at 0.0 m runs through the Kelmby Thrust")
        return real(folder, draft, *args, **kwargs)

    monkeypatch.setattr(mapsection.build, "_write_checks", fail_on_b)
    result = CliRunner().invoke(cli, ["build", str(SAMPLE), "-o", str(out)])
    assert result.exit_code == 2, result.output
    assert "section B: pin line" in result.output and "Traceback" not in result.output
    # A was written in its own worker, but is not swapped in when B fails
    assert {name: _digest(out / name) for name in ("A", "B")} == before
    assert sorted(p.name for p in out.iterdir()) == ["A", "B"]


def test_failed_first_build_leaves_no_folder(tmp_path, monkeypatch):
    import mapsection.construct

    def fail(*args, **kwargs):
        raise ConstructionError("section A: no dips within the corridor and no default_dip")

    monkeypatch.setattr(mapsection.construct, "build_draft", fail)
    result = CliRunner().invoke(cli, ["build", str(SAMPLE), "-o", str(tmp_path / "new")])
    assert result.exit_code == 2
    assert not (tmp_path / "new").exists()


def test_every_pdf_has_truetype_fonts_and_the_sheet_is_a3(built):
    # The PDFs a build writes embed TrueType (Type 42) fonts, never Type 3 (pypdf reads the
    # font dictionaries); the section sheet is ISO 216 A3 landscape, 420 x 297 mm.
    pypdf = pytest.importorskip("pypdf")
    _, folders, _ = built
    for folder in folders:
        for pdf in sorted(folder.glob("*.pdf")):
            page = pypdf.PdfReader(pdf).pages[0]
            subtypes = {str(ref.get_object()["/Subtype"])
                        for ref in page["/Resources"]["/Font"].values()}
            assert "/Type3" not in subtypes, pdf.name
        box = pypdf.PdfReader(folder / "section.pdf").pages[0].mediabox
        assert (float(box.width), float(box.height)) == pytest.approx(
            (420 * 72 / 25.4, 297 * 72 / 25.4), abs=0.01)
