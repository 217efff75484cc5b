"""report.html and checks.json of a hand-made draft (self-consistency; invented data).

References: the PNG file signature (ISO/IEC 15948, PNG specification: the 8 bytes
89 50 4E 47 0D 0A 1A 0A); RFC 2397 data URIs; the JSON grammar (RFC 8259: no NaN).
"""

from __future__ import annotations

import base64
import json
import re
from html import escape

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import pytest  # noqa: E402
from conftest import TOP_B, TOP_C  # noqa: E402
from conftest import homocline_draft as _draft  # noqa: E402

from mapsection import CAUTION  # noqa: E402
from mapsection.checks import run_checks  # noqa: E402
from mapsection.errors import OutputError  # noqa: E402
from mapsection.project import Thresholds  # noqa: E402
from mapsection.render.report import write_report  # noqa: E402
from mapsection.render.section_folder import write_checks_json  # noqa: E402

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification, section 5.2


@pytest.fixture(scope="module")
def checked():
    draft = _draft(map_bounds=(TOP_C + 40.0, TOP_B - 60.0))
    draft.log = ["kink construction: 1 dip domain", "<script>alert('x')</script> & more"]
    return draft, run_checks(draft, Thresholds())


def _png(path):
    fig, ax = plt.subplots(figsize=(2, 1))
    ax.plot([0, 1], [0, 1])
    fig.savefig(path)
    plt.close(fig)
    return path


def test_report_is_self_contained(checked, tmp_path):
    draft, report = checked
    figs = {"section": _png(tmp_path / "section.png"), "restored": _png(tmp_path / "r.png"),
            "area_depth": tmp_path / "missing.png"}
    out = write_report(tmp_path / "report.html", draft, report, figs)
    html = out.read_text(encoding="utf-8")
    # No external resource: no http(s) src/href, no stylesheet links, no scripts.
    assert not re.search(r"""(src|href)\s*=\s*["']?\s*(https?:)?//""", html, re.I)
    assert "<link" not in html.lower() and "<script" not in html.lower()
    srcs = re.findall(r'<img[^>]*src="([^"]+)"', html)
    assert len(srcs) == 2  # the missing figure is left out
    for src in srcs:
        assert src.startswith("data:image/png;base64,")  # RFC 2397
        assert base64.b64decode(src.split(",", 1)[1]).startswith(PNG_SIGNATURE)


def test_report_lists_tests_misfits_and_caution(checked, tmp_path):
    draft, report = checked
    html = write_report(tmp_path / "report.html", draft, report, {}).read_text("utf-8")
    for name in ("topography", "restoration", "area_balance", "kinematics"):
        assert f'id="{name}"' in html
    assert escape(CAUTION) in html
    assert html.count("FAIL") >= 1  # the topography test fails on this draft
    # Every contact misfit, with its distances along the line.
    assert len(report.topography.contact_misfits) == 2
    for m in report.topography.contact_misfits:
        assert f"{m.map_distance_m:.1f}" in html
        assert f"{m.section_distance_m:.1f}" in html
        assert f"{m.misfit_m:.1f}" in html
    assert "vertical exaggeration 1" in html
    # The area-depth verdict in plain words (a depth, or why there is none), R² beside it.
    fit = report.area_balance.detachment
    assert fit is not None and "R²" in fit.summary
    assert escape(fit.summary) in html
    # Log text is escaped, never markup.
    assert "<script>alert" not in html
    assert escape("<script>alert('x')</script> & more") in html


def test_report_into_missing_folder(checked, tmp_path):
    draft, report = checked
    with pytest.raises(OutputError):
        write_report(tmp_path / "nope" / "report.html", draft, report, {})
    assert not (tmp_path / "nope").exists()


def test_checks_json_keys(checked, tmp_path):
    _, report = checked
    path = write_checks_json(report, tmp_path / "checks.json")
    text = path.read_text("utf-8")
    assert "NaN" not in text and "Infinity" not in text  # RFC 8259
    data = json.loads(text)
    for k in ("topography", "restoration", "area_balance", "kinematics"):
        # three states (issue 12): passed is null exactly when the test was not tested
        assert data[k]["status"] in ("pass", "fail", "not_tested")
        assert data[k]["passed"] is {"pass": True, "fail": False}.get(data[k]["status"])
        assert isinstance(data[k]["reasons"], list)
    assert set(data) == {"section", "method", "passed", "status", "caution",
                         "topography", "restoration", "area_balance", "kinematics"}
    assert data["topography"]["contact_rms_m"] == pytest.approx(report.topography.contact_rms_m)
    assert 0 <= data["topography"]["unit_agreement"] <= 1
    for k in ("shortening_pct", "line_length_mismatch_pct"):
        assert k in data["restoration"]
    units = data["area_balance"]["units"]
    rows = units.values() if isinstance(units, dict) else units
    assert rows and all("mismatch_pct" in u for u in rows)
    assert data["passed"] is False and data["topography"]["passed"] is False


def test_report_tables_are_for_people(checked, tmp_path):
    # Issue 12: badges PASS / FAIL / NOT TESTED with reasons, a summary line per test,
    # labelled columns with units, no raw lists and no "-0".
    draft, report = checked
    html = write_report(tmp_path / "report.html", draft, report, {}).read_text("utf-8")
    assert 'class="nottested">NOT TESTED<' in html  # e.g. no fault on this draft
    assert "holds by construction" in html
    assert html.count('class="summary"') == 4
    assert "Misfit (m)" in html and "Map contact at (m)" in html
    cells = re.findall(r"<td[^>]*>([^<]*)</td>", html)
    assert cells and not [c for c in cells if re.fullmatch(r"-0(\.0+)?", c.strip())]
    assert not [c for c in cells if c.strip().startswith(("[", "{"))]


def test_number_and_bearing_formats():
    from mapsection.render.report import compass, fmt

    assert fmt(-0.04, 1) == "0.0" and fmt(-0.4) == "0" and fmt(-12.34, 1) == "-12.3"
    assert fmt(float("nan")) == "–" and fmt(None) == "–"
    # the 16-point compass rose: each point spans 22.5 degrees centred on its bearing
    assert compass(62.0) == "062° (ENE)" and compass(359.0) == "359° (N)"
    assert compass(-90.0) == "270° (W)" and compass(191.0) == "191° (S)"
