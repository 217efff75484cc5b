"""Three verdicts: pass, fail or not tested, with reasons (issue 12; self-consistency on
invented drafts).

A test passes only when something was measured and met its threshold; what could not be
measured is not tested with the reason, never a pass; a part that a constant-thickness
draft built by mapsection cannot fail says "holds by construction".
"""

from __future__ import annotations

import json

from conftest import homocline_draft

from mapsection.checks import key_figures, run_checks
from mapsection.checks.status import Part, combine
from mapsection.checks.summary import result_line, summary_lines, verdict_line
from mapsection.project import Thresholds


def test_combine_three_states():
    ok, bad, none = Part.measured(True), Part.measured(False, "too far"), Part.not_tested("x")
    assert combine({"a": ok, "b": none}) == ("pass", ["b: not tested (x)"])
    assert combine({"a": ok, "b": bad})[0] == "fail"
    assert combine({"a": none, "b": none})[0] == "not_tested"  # nothing measured: no pass
    assert combine({"a": bad})[1] == ["a: too far"]
    assert ok.passed is True and bad.passed is False and none.passed is None


def test_draft_without_faults_or_dips_says_what_it_did_not_test(tmp_path):
    report = run_checks(homocline_draft(), Thresholds())
    topo, rest, area, kin = (report.topography, report.restoration, report.area_balance,
                             report.kinematics)
    assert topo.parts["dip_misfit"].status == "not_tested"
    assert "no attitude" in topo.parts["dip_misfit"].reasons[0]
    assert topo.status == "pass"  # the contacts and units were measured and agree
    assert any(r.startswith("dip misfit: not tested") for r in topo.reasons)
    assert rest.parts["fault_cutoffs"].status == "not_tested"
    assert rest.parts["fault_cutoffs"].reasons == ("the section has no fault",)
    assert rest.parts["separation_consistency"].status == "not_tested"
    # built by mapsection (method kink): holds by construction, and says so
    assert rest.parts["line_length_balance"].reasons[0].startswith("holds by construction")
    assert area.reasons == ["unit areas: holds by construction"]
    assert kin.parts["transport"].status == "not_tested"
    assert kin.parts["fault_bend_fold"].status == "not_tested"
    data = report.to_dict()
    assert data["kinematics"]["transport"]["passed"] is None  # null, not a pass
    assert data["restoration"]["parts"]["fault_cutoffs"]["passed"] is None
    assert data["topography"]["parts"]["dip_misfit"]["passed"] is None
    json.dumps(data, allow_nan=False)  # RFC 8259


def test_edited_draft_is_measured_not_by_construction():
    report = run_checks(homocline_draft(method="edited"), Thresholds())
    assert report.area_balance.status == "pass"
    assert not any("by construction" in r for r in report.area_balance.reasons)
    assert not any("by construction" in r for r in report.restoration.reasons)


def test_not_tested_is_shown_and_never_counted_as_a_pass():
    report = run_checks(homocline_draft(), Thresholds())
    key = key_figures(report)
    assert key.topography.status == "pass" and key.topography.passed is True
    text = "\n".join(summary_lines(report))
    assert "not tested (the section has no fault)" in text
    line = result_line(key)
    assert line.startswith("topography PASS")
    assert verdict_line(["pass", "not_tested"]) == "no test fails (1 passed, 0 failed, " \
                                                   "1 not tested)"
    assert verdict_line(["pass", "fail"]).startswith("some tests FAIL")
