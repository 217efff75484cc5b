"""The project file: keys, defaults, relative paths and one-line errors naming the key."""

from __future__ import annotations

from pathlib import Path

import pytest
from conftest import GOOD_PROJECT as GOOD

from mapsection.errors import ProjectFileError
from mapsection.project import load_project


def write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "project.toml"
    p.write_text(text)
    return p


def test_keys_as_written(tmp_path):
    # self-consistency: the documented keys load as written
    proj = load_project(write(tmp_path, GOOD))
    assert proj.crs.to_epsg() == 32611
    assert proj.dem_path == tmp_path.resolve() / "dem.tif"
    assert proj.map_path.name == "geology.gpkg" and proj.units_layer == "units"
    assert proj.unit_field == "unit" and proj.faults_layer == "faults"
    assert proj.column.names == ["Upper", "Lower"]
    assert proj.column.depth_to_top.tolist() == [0.0, 250.0]
    assert [s.name for s in proj.sections] == ["A", "B"]
    assert proj.sections[1].method == "arc" and len(proj.sections[1].line) == 3
    assert proj.sections[1].corridor == 500.0  # default
    assert proj.thresholds.unit_agreement == 0.95  # common practice default


@pytest.mark.parametrize(
    "old, new, key",
    [
        ('crs = "EPSG:32611"', 'crs = "EPSG:4326"', "crs"),
        ('crs = "EPSG:32611"', 'crs = "EPSG:999999"', "crs"),
        ('crs = "EPSG:32611"', 'crs = "EPSG:2227"', "crs"),  # projected, but in US feet
        ('[dem]\npath = "dem.tif"\n', "", "dem"),
        ('unit = "Upper"', 'unti = "Upper"', "stratigraphy[0].unti"),
        ("corridor = 500.0", "coridor = 500.0", "section[0].coridor"),
        ('units_layer = "units"', "", "map.units_layer"),
        ("corridor = 500.0", "corridor = -5.0", "section[0].corridor"),
        ('method = "kink"', 'method = "zigzag"', "section[0].method"),
        ("thickness = 250.0", "thickness = 0.0", "stratigraphy[0].thickness"),
        ("thickness = 250.0", 'thickness = "thick"', "stratigraphy[0].thickness"),
        ("[505000.0, 4001000.0]", "[505000.0]", "section[0].line[1]"),
        ('[dem]\npath = "dem.tif"', '[dem]\nfile = "dem.tif"', "dem.file"),
        ("corridor = 500.0", "corridor = 500.0\nfold_axis = [10.0]", "section[0].fold_axis"),
        ("corridor = 500.0", "corridor = 500.0\nfold_axis = [10.0, 95.0]",
         "section[0].fold_axis"),
    ],
)
def test_bad_key_named(tmp_path, old, new, key):
    text = GOOD.replace(old, new, 1)
    assert text != GOOD
    with pytest.raises(ProjectFileError) as err:
        load_project(write(tmp_path, text))
    msg = str(err.value)
    assert msg.startswith("project.toml: ") and key in msg and "\n" not in msg


def test_stratigraphy_and_sections_must_be_lists(tmp_path):
    import re

    no_strat = re.sub(r"\[\[stratigraphy\]\][^\[]*", "", GOOD)
    for text, key in ((no_strat, "stratigraphy: missing"),
                      ('stratigraphy = "Upper, Lower"\n' + no_strat, "stratigraphy: must be"),
                      (GOOD.split("[[section]]")[0], "section: missing")):
        with pytest.raises(ProjectFileError, match=f"^project.toml: {key}"):
            load_project(write(tmp_path, text))


def test_missing_and_invalid_file(tmp_path):
    with pytest.raises(ProjectFileError, match="no such project file"):
        load_project(tmp_path / "nope.toml")
    with pytest.raises(ProjectFileError, match="not valid TOML"):
        load_project(write(tmp_path, "crs = [unclosed"))


def test_thresholds_out_of_range(tmp_path):
    with pytest.raises(ProjectFileError, match="checks.unit_agreement"):
        load_project(write(tmp_path, GOOD + "\n[checks]\nunit_agreement = 1.5\n"))
    with pytest.raises(ProjectFileError, match=r"project.toml: checks.dip_rms_deg: must be from 0"):
        load_project(write(tmp_path, GOOD + "\n[checks]\ndip_rms_deg = 120\n"))
    with pytest.raises(ProjectFileError, match="checks.area_mismatch_pct"):
        load_project(write(tmp_path, GOOD + "\n[checks]\narea_mismatch_pct = 0\n"))
    proj = load_project(write(tmp_path, GOOD + "\n[checks]\ndip_rms_deg = 3\n"))
    assert proj.thresholds.dip_rms_deg == 3.0


@pytest.mark.parametrize("line, key", [
    ("cutoff_mismatch_fraction = 1.5", "checks.cutoff_mismatch_fraction: must be from 0 to 1"),
    ("cutoff_mismatch_pixels = -1", "checks.cutoff_mismatch_pixels: must be from 0 to 100"),
    ("separation_spread_fraction = nan", "checks.separation_spread_fraction"),
    ("separation_spread_pixels = 500", "checks.separation_spread_pixels"),
    ("cutoff_mismatch_fraction = 0\ncutoff_mismatch_pixels = 0",
     "checks.cutoff_mismatch_fraction: at least one of it and cutoff_mismatch_pixels"),
])
def test_fault_restoration_thresholds_out_of_range(tmp_path, line, key):
    # the tool's own ranges for the restoration-at-faults settings (issue 12)
    with pytest.raises(ProjectFileError, match=r"project.toml: " + key):
        load_project(write(tmp_path, GOOD + f"\n[checks]\n{line}\n"))


def test_fault_restoration_thresholds_read(tmp_path):
    proj = load_project(write(tmp_path, GOOD + "\n[checks]\ncutoff_mismatch_fraction = 0.2\n"
                              "separation_spread_pixels = 4\n"))
    t = proj.thresholds
    assert (t.cutoff_mismatch_fraction, t.cutoff_mismatch_pixels) == (0.2, 2.0)
    assert (t.separation_spread_fraction, t.separation_spread_pixels) == (0.2, 4.0)


def test_cli_reports_project_key_through_console_script(tmp_path):
    # The real console script: one line naming the file and the key path, exit code 2.
    import subprocess

    bad = write(tmp_path, GOOD.replace("corridor = 500.0", "corridor = -5.0", 1))
    res = subprocess.run(["mapsection", "build", str(bad), "-o", str(tmp_path / "out")],
                         capture_output=True, text=True, timeout=120)
    assert res.returncode == 2, res.stderr
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in res.stderr
    assert lines[0].startswith("mapsection: error: project.toml: section[0].corridor")
    assert not (tmp_path / "out").exists()


def _documented_keys() -> dict[str, set[str]]:
    """Keys of each table in the project-file block of docs/index.md (comments included)."""
    import re

    doc = (Path(__file__).resolve().parents[1] / "docs" / "index.md").read_text("utf-8")
    block = doc.split("## The project file", 1)[1].split("```toml", 1)[1].split("```", 1)[0]
    keys: dict[str, set[str]] = {"": set()}
    table = ""
    for line in block.splitlines():
        head = re.match(r"^\[\[?(\w+)\]\]?", line)
        if head:
            table = head.group(1)
            keys[""].add(table)
            keys.setdefault(table, set())
            continue
        keys[table] |= set(re.findall(r"\b([a-z_]+)\s*=", line))
        keys[table] |= set(re.findall(r"\b([a-z_]+_field)\b", line))
    return keys


def test_documented_keys_are_exactly_the_accepted_keys():
    # self-consistency: the user guide's project-file block against what load_project accepts
    from mapsection import project as pj

    accepted = {"": pj.TOP_KEYS, "dem": pj.DEM_KEYS, "map": pj.MAP_KEYS,
                "attitudes": pj.ATTITUDE_KEYS, "stratigraphy": pj.UNIT_KEYS,
                "section": pj.SECTION_KEYS, "fault": pj.FAULT_KEYS, "checks": pj.CHECK_KEYS}
    documented = _documented_keys()
    assert set(documented) == set(accepted)
    for table, keys in accepted.items():
        assert documented[table] == set(keys), table


def test_keep_readings_and_fold_axis(tmp_path):
    # self-consistency: the keys documented in docs/index.md load as written
    text = GOOD.replace("corridor = 500.0", "corridor = 500.0\nfold_axis = [10, 15]", 1)
    text = text.replace("[attitudes]\n", '[attitudes]\nkeep_readings = ["VR076", 12]\n', 1)
    proj = load_project(write(tmp_path, text))
    assert proj.keep_readings == ("VR076", "12")
    assert proj.sections[0].fold_axis == (10.0, 15.0)
    bad = GOOD.replace("[attitudes]\n", "[attitudes]\nkeep_readings = [1.5]\n", 1)
    with pytest.raises(ProjectFileError, match=r"^project.toml: attitudes.keep_readings\[0\]"):
        load_project(write(tmp_path, bad))


# [[stratigraphy]] kind / unconformity / depth (the interface, exactly as named)
_COVER = '[[stratigraphy]]\nunit = "Valley alluvium"\nkind = "cover"\n'


def test_cover_unit_thickness_optional_and_kinds_named(tmp_path):
    # the tool's default veneer (stratigraphy.COVER_THICKNESS) when no thickness is given
    from mapsection.stratigraphy import COVER_THICKNESS

    text = GOOD.replace("[[stratigraphy]]", _COVER + "[[stratigraphy]]", 1)
    proj = load_project(write(tmp_path, text))
    alluvium = proj.column.units[0]
    assert (alluvium.kind, alluvium.thickness) == ("cover", COVER_THICKNESS)
    assert proj.column.layered().names == ["Upper", "Lower"]


@pytest.mark.parametrize("unit, match", [
    # a unit both cover and unconformity
    ('[[stratigraphy]]\nunit = "Qal"\nkind = "cover"\nunconformity = true\n',
     r"^project.toml: stratigraphy\[0\] \(Qal\): a cover unit cannot carry unconformity"),
    ('[[stratigraphy]]\nunit = "Qal"\nkind = "sill"\n',
     r"^project.toml: stratigraphy\[0\]\.kind: unknown unit kind 'sill'"),
    ('[[stratigraphy]]\nunit = "Qal"\nkind = "cover"\nthickness = "map"\n',
     r'^project.toml: stratigraphy\[0\] \(Qal\): thickness = "map" is measured'),
])
def test_bad_unit_kinds(tmp_path, unit, match):
    text = GOOD.replace("[[stratigraphy]]", unit + "[[stratigraphy]]", 1)
    with pytest.raises(ProjectFileError, match=match):
        load_project(write(tmp_path, text))


def test_unconformity_on_oldest_unit_refused(tmp_path):
    text = GOOD.replace('thickness = 300\n', 'thickness = 300\nunconformity = true\n', 1)
    with pytest.raises(ProjectFileError, match=r"\(Lower\): unconformity = true on the oldest"):
        load_project(write(tmp_path, text))
    ok = GOOD.replace('thickness = 250.0\n', 'thickness = 250.0\nunconformity = true\n', 1)
    seqs = load_project(write(tmp_path, ok)).column.sequences()
    assert [c.names for c in seqs] == [["Upper"], ["Lower"]]
