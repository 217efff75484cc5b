"""Settings defined once (mapsection.settings) and the input checks that go with them:
ranges, defaults, the DEM's vertical unit, self-crossing lines, overlapping units,
attitudes off the DEM, numbers written for people."""

from __future__ import annotations

import inspect

import numpy as np
import pytest
from conftest import SampleCopy, write_dem_variant

from mapsection import settings
from mapsection.errors import (
    AttitudeError,
    CheckError,
    LineError,
    ParameterError,
    ProjectFileError,
    SettingError,
    ThresholdError,
)

LINE_A = np.array([[604658.0, 5218819.0], [612195.0, 5213542.0]])


def test_section_defaults_are_written_once():
    # the tool's defaults: the project reader and build_draft take them from settings
    from mapsection.construct import build_draft
    from mapsection.project import SectionSpec

    d = settings.DEFAULTS
    assert (d.corridor, d.method, d.projection, d.ve, d.dip_tolerance) == \
        (500.0, "kink", "perpendicular", 1.0, 5.0)
    spec = SectionSpec(name="A", line=((0.0, 0.0), (1.0, 0.0)))
    assert isinstance(spec, settings.SectionSettings) and spec.corridor == d.corridor
    params = inspect.signature(build_draft).parameters
    for key in ("method", "ve", "dip_tolerance"):
        assert params[key].default == getattr(d, key)


def test_choices_defined_once():
    from mapsection import attitudes, construct, project

    assert construct.METHODS is settings.METHODS
    assert project.CONVENTIONS is settings.CONVENTIONS is attitudes.CONVENTIONS
    assert settings.PROJECTIONS == ("perpendicular", "strike", "plunge")


@pytest.mark.parametrize("key, bad", [("ve", 1e4), ("ve", 1e-6), ("depth", 1e7),
                                      ("corridor", 1e9), ("corridor", 0.0),
                                      ("dip_tolerance", -1.0), ("default_dip", 90.0),
                                      ("ve", float("nan")), ("pin", -1.0)])
def test_out_of_range_refused_naming_the_key(key, bad):
    with pytest.raises(SettingError) as err:
        settings.SectionSettings(**{key: bad})
    assert err.value.key == key and str(err.value).startswith(f"{key}: ")
    assert "e+" not in str(err.value)  # numbers written without exponent


def test_large_values_accepted_with_a_note():
    s = settings.SectionSettings(corridor=30_000.0, ve=25.0)
    notes = s.notes()
    assert len(notes) == 2 and notes[0].startswith("corridor = 30000 is large")
    assert settings.SectionSettings().notes() == []


def test_every_range_is_documented():
    # self-consistency: each numeric setting appears in the ranges table of docs/index.md
    from pathlib import Path

    doc = (Path(__file__).resolve().parents[1] / "docs" / "index.md").read_text("utf-8")
    table = doc.split("**Ranges.**", 1)[1].split("\n\n", 2)[1]
    for key in settings.RANGES:
        assert f"`{key}`" in table or f"--{key}" in table, key


def test_thresholds_checked_where_made():
    with pytest.raises(ThresholdError, match="unit_agreement"):
        settings.Thresholds(unit_agreement=1.5)
    assert issubclass(ThresholdError, CheckError) and issubclass(SettingError, ParameterError)
    from mapsection.project import Thresholds

    assert Thresholds is settings.Thresholds


def test_large_value_in_project_is_said(sample_copy: SampleCopy):
    from mapsection.project import load_project

    sample_copy.edit_project("corridor = 600.0", "corridor = 25000.0")
    said: list[str] = []
    load_project(sample_copy.project, said.append)
    assert said == ["project.toml: section[0].corridor = 25000 is large (above 20000 m): "
                    "attitudes this far from the line may not belong to the section; "
                    "accepted as given"]


def test_pin_beyond_the_line_refused(sample_copy: SampleCopy):
    from mapsection.project import load_project

    sample_copy.add_to_section(0, "pin = 9300.0")  # line A is 9200.7 m long
    with pytest.raises(ProjectFileError, match=r"section\[0\]\.pin: 9300\.0 m lies beyond"):
        load_project(sample_copy.project)


def test_human_numbers():
    from mapsection._messages import human

    assert human(1e9) == "1000000000" and human(1e-6) == "0.000001"
    assert human(8476.736195115833, 1) == "8476.7" and human(2.5) == "2.5"


# --- DEM vertical unit ---------------------------------------------------------------------
# 1 international foot = 0.3048 m exactly; 1 US survey foot = 1200/3937 m (NIST SP 811).
@pytest.mark.parametrize("units, factor", [("ft", 0.3048), ("US survey foot", 1200 / 3937)])
def test_dem_in_feet_converted(sample_copy: SampleCopy, units, factor):
    from mapsection.readers.dem import Dem

    feet = write_dem_variant(sample_copy.dem, sample_copy.root / "ft.tif", units=units,
                             scale=1.0 / factor)
    said: list[str] = []
    x, y = np.array([606000.0, 610000.0]), np.array([5215000.0, 5219000.0])
    with Dem.open(sample_copy.dem) as m, Dem.open(feet, warn=said.append) as f:
        np.testing.assert_allclose(f.sample(x, y), m.sample(x, y), rtol=1e-6)
    assert len(said) == 1 and "converted to metres" in said[0] and "ft.tif" in said[0]


def test_dem_vertical_axis_of_a_compound_crs(sample_copy: SampleCopy):
    # EPSG:6360 is NAVD88 height in US survey feet (EPSG registry)
    import rasterio.crs

    from mapsection.readers.dem import Dem

    feet = write_dem_variant(sample_copy.dem, sample_copy.root / "ftcrs.tif",
                             crs=rasterio.crs.CRS.from_user_input("EPSG:32611+6360"),
                             scale=3937 / 1200)
    with Dem.open(sample_copy.dem) as m, Dem.open(feet, warn=lambda _m: None) as f:
        assert f.vertical_unit == "us-foot"
        np.testing.assert_allclose(f.sample([608000.0], [5217000.0]),
                                   m.sample([608000.0], [5217000.0]), rtol=1e-6)


def test_dem_vertical_unit_setting_when_the_file_is_silent(sample_copy: SampleCopy):
    from mapsection.project import load_project
    from mapsection.session import load_inputs

    s = sample_copy
    write_dem_variant(s.dem, s.root / "dem_ft.tif", scale=1 / 0.3048)  # no unit type
    s.edit_project('path = "dem.tif"', 'path = "dem_ft.tif"\nvertical_unit = "foot"')
    said: list[str] = []
    project = load_project(s.project, said.append)
    assert project.dem_vertical_unit == "foot"
    inputs = load_inputs(project, said.append)
    try:
        from mapsection.readers.dem import Dem

        with Dem.open(s.dem) as m:
            np.testing.assert_allclose(inputs.dem.sample([608000.0], [5217000.0]),
                                       m.sample([608000.0], [5217000.0]), rtol=1e-6)
    finally:
        inputs.close()
    assert any("dem_ft.tif: elevations are in feet ([dem] vertical_unit)" in m for m in said)


# --- lines, maps, attitudes -----------------------------------------------------------------
def test_self_crossing_line_refused_at_the_crossing():
    from mapsection.line import SectionLine

    # analytic: the diagonals of the square (0,0)-(10,10) cross at (5, 5)
    with pytest.raises(LineError, match=r"crosses itself at \(5\.0, 5\.0\)"):
        SectionLine(np.array([[0.0, 0.0], [10.0, 10.0], [10.0, 0.0], [0.0, 10.0]]))
    SectionLine(np.array([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0]]))  # a bend is fine


def test_overlapping_units_warned_with_area_and_place():
    import geopandas as gpd
    from shapely.geometry import box

    from mapsection.readers.map import _warn_overlaps

    # analytic: the boxes share the strip x 900-1000, y 0-500: 100 m x 500 m = 50000 m²
    units = gpd.GeoDataFrame({"unit": ["Upper", "Lower", "Other"]},
                             geometry=[box(0, 0, 1000, 500), box(900, 0, 2000, 500),
                                       box(0, 500, 2000, 900)])
    said: list[str] = []
    _warn_overlaps(units, "unit", "map.gpkg: layer 'units'", said.append)
    assert len(said) == 1
    assert "Upper (feature 1) and Lower (feature 2) overlap by 50000.0 m²" in said[0]
    x, y = (float(v) for v in said[0].split("near (")[1].split(")")[0].split(", "))
    assert 900 <= x <= 1000 and 0 <= y <= 500
    said.clear()
    _warn_overlaps(units.iloc[[0, 2]], "unit", "m", said.append)  # touching only
    assert said == []


def test_attitudes_all_off_the_dem(sample_copy: SampleCopy):
    from mapsection.attitudes import Attitudes, check_attitudes_on_dem
    from mapsection.readers.dem import Dem

    att = Attitudes.from_arrays([5217000.0, 5216000.0], [608000.0, 609000.0], [10.0, 20.0],
                                [30.0, 40.0])
    with Dem.open(sample_copy.dem) as dem:
        with pytest.raises(AttitudeError, match="all 2 attitudes lie outside the DEM dem.tif.*"
                                                "are x and y swapped"):
            check_attitudes_on_dem(att, dem)
        far = Attitudes.from_arrays([0.0], [0.0], [10.0], [30.0])
        with pytest.raises(AttitudeError, match="check their coordinates"):
            check_attitudes_on_dem(far, dem)
        check_attitudes_on_dem(Attitudes.from_arrays([608000.0], [5217000.0], [10.0], [30.0]),
                               dem)


def test_check_from_accepts_a_file_built_along_the_same_line(sample_copy: SampleCopy):
    import geopandas as gpd
    from shapely.geometry import Point

    from mapsection.checking import check_recorded_line
    from mapsection.project import load_project

    project = load_project(sample_copy.project)
    spec = project.section("A")
    d = np.linspace(0.0, 9200.7, 5)
    t = d / d[-1]
    x = LINE_A[0, 0] + t * (LINE_A[1, 0] - LINE_A[0, 0])
    y = LINE_A[0, 1] + t * (LINE_A[1, 1] - LINE_A[0, 1])
    path = sample_copy.root / "same.gpkg"
    gpd.GeoDataFrame({"distance_m": np.hypot(x - x[0], y - y[0]), "x": x, "y": y},
                     geometry=[Point(v, 0.0) for v in d], crs="EPSG:32611").to_file(
        path, layer="profile_points", driver="GPKG")
    check_recorded_line(path, project, spec)  # no error
    with pytest.raises(CheckError, match="differs from the section line of section B"):
        check_recorded_line(path, project, project.section("B"))


def test_dem_unit_of_the_file_wins_over_the_setting(sample_copy: SampleCopy):
    from mapsection.readers.dem import Dem

    feet = write_dem_variant(sample_copy.dem, sample_copy.root / "ft.tif", units="ft",
                             scale=1 / 0.3048)
    metres = write_dem_variant(sample_copy.dem, sample_copy.root / "m.tif", units="metre")
    said: list[str] = []
    with Dem.open(feet, vertical_unit="metre", warn=said.append) as f:
        assert f.vertical_unit == "foot"
    assert "[dem] vertical_unit = 'metre' is not used" in said[0]
    said.clear()
    with Dem.open(metres, warn=said.append) as m:
        assert m.vertical_unit == "metre"
    assert said == []
