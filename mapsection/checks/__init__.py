"""The four tests of a credible section, measured on a draft.

* topography — the section against the DEM profile, the map's contacts and
  units, and the measured dips (:mod:`mapsection.checks.topography`);
* restoration — flexural-slip restoration between a pin line and a loose line,
  and line-length balance (Dahlstrom 1969) (:mod:`mapsection.checks.restore`);
* area balance — each unit's deformed against restored area, and excess area
  against depth (Chamberlin 1910; Epard & Groshong 1993, AAPG Bull. 77)
  (:mod:`mapsection.checks.area`);
* kinematics — fault-bend folding after Suppe (1983, Am. J. Sci. 283) and the
  consistency of transport, cut-up and separations
  (:mod:`mapsection.checks.kinematics`).

:func:`run_checks` runs all four and returns a :class:`CheckReport`
(:mod:`mapsection.checks.results`). A test that fails is a result, reported with
its figures. Every test and each of its parts is ``pass``, ``fail`` or ``not_tested``
with its reasons (:mod:`mapsection.checks.status`): a test passes only when something
was measured and met its threshold. Only input that makes a test impossible (no horizons, a pin line
through a fault, thresholds out of range) raises :class:`CheckError`.

The package measures and nothing else: no drawing and no files (it imports without
matplotlib). The geometry every test shares is :mod:`mapsection.checks.geometry`; the
figures the report needs, per section, come from :func:`key_figures`. Drawing the
results and writing them (checks.json, the figures, report.html) is
:mod:`mapsection.render`.

Example::

    from mapsection.build import build_section
    from mapsection.checks import key_figures, run_checks
    from mapsection.project import load_project
    from mapsection.render.section_folder import write_checks_json

    project = load_project("sample_area/project.toml")
    spec = project.sections[0]
    report = run_checks(build_section(project, spec), project.thresholds)
    write_checks_json(report, "checks.json")
    print(report.status, key_figures(report).restoration.shortening_pct)
"""

from __future__ import annotations

from collections.abc import Callable

from ..draft import Draft
from ..errors import CheckError
from ..settings import Thresholds
from .area import area_balance
from .cutoffs import check_fault_restoration
from .diagnosis import diagnose
from .kinds import layered_draft, unlayered_notes
from .kinematics import check_kinematics
from .restore import Restoration, restore_section, with_fault_checks
from .results import TESTS, CheckReport, jsonable
from .summary import KeyFigures, key_figures
from .topography import TopographyCheck, check_topography, validate_thresholds


def run_checks(
    draft: Draft,
    thresholds: Thresholds | None = None,
    pin: float | None = None,
    loose: float | None = None,
    *,
    warn: Callable[[str], None] | None = None,
    attitude_xy=None,
    corridor_m: float | None = None,
) -> CheckReport:
    """Run the four tests on a draft section.

    Parameters
    ----------
    draft
        The draft section (built, or read back from a section.gpkg).
    thresholds
        The pass thresholds (the project's ``[checks]``; default :class:`Thresholds`).
    pin, loose
        Distances along the line in metres (default: the pin at the end of the
        section in the least-dipping domain, the loose line at the other end;
        chosen by the restoration).
    warn
        Called with one line naming the failed tests, when any fails.
    attitude_xy, corridor_m
        Map positions (n, 2) of the attitudes near the line (inside the corridor or
        not) and the corridor's half-width: when the topography test fails, the
        diagnosis (:func:`mapsection.checks.diagnosis.diagnose`) uses them to suggest
        a wider corridor over sparse stretches.

    Returns
    -------
    CheckReport
        Each test pass, fail or not tested with its reasons. A failed test is a
        result; CheckError (no horizons, pin or loose line outside the section or
        through a fault, thresholds out of range) propagates.
    """
    thresholds = thresholds or Thresholds()
    validate_thresholds(thresholds)
    _require_horizons(draft)
    topo = check_topography(draft, thresholds)
    whole, draft = draft, layered_draft(draft)  # cover and intrusive units: not restored
    if topo.status == "fail":  # name the likely fix, ranked (issue 12)
        topo.diagnosis = diagnose(draft, attitude_xy=attitude_xy, corridor_m=corridor_m)
    restoration, area, kin, per_sequence = _balance(draft, thresholds, pin, loose)
    notes = unlayered_notes(whole) + _notes(draft)
    if per_sequence:
        notes.append("unconformities: restoration and area balance measured per sequence, "
                     "each to its own datum; the figures shown are the oldest sequence's, its "
                     "eroded part reported under 'sequences' and not drawn")
    report = CheckReport(draft.name, draft.method, float(draft.ve), thresholds, topo,
                         restoration, area, kin, notes, per_sequence)
    if warn is not None:
        failed = [k for k, st in report.statuses.items() if st == "fail"]
        if failed:
            warn(f"section {draft.name}: failed {', '.join(failed)}")
    return report


def _require_horizons(draft: Draft) -> None:
    """CheckError for a draft with no horizon below the ground (nothing to measure)."""
    if not any(h.geometry is not None and not h.geometry.is_empty and not h.above_ground
               for h in draft.horizons):
        raise CheckError(f"section {draft.name or '(unnamed)'}: has no horizons below the ground")


def _balance(draft: Draft, thresholds: Thresholds, pin: float | None, loose: float | None):
    """The restoration, area balance and kinematics of the layered draft, and the results
    per sequence (empty without unconformities)."""
    if draft.sequences:  # unconformities: each sequence restored to its own datum
        from .sequences import check_sequences

        return check_sequences(draft, thresholds, pin, loose)
    restoration = _restoration(draft, thresholds, pin, loose)
    area = area_balance(draft, restoration, thresholds.area_mismatch_pct)
    kin = check_kinematics(draft, restoration)
    return restoration, area, kin, []


def _restoration(draft: Draft, thresholds: Thresholds, pin: float | None,
                 loose: float | None) -> Restoration:
    """The flexural-slip restoration with the cutoffs and separations at each fault as
    its parts."""
    restoration = restore_section(draft, pin=pin, loose=loose,
                                  threshold_pct=thresholds.line_length_spread_pct)
    at_faults = check_fault_restoration(
        draft, restoration=restoration,
        cutoff_fraction=thresholds.cutoff_mismatch_fraction,
        cutoff_pixels=thresholds.cutoff_mismatch_pixels,
        spread_fraction=thresholds.separation_spread_fraction,
        spread_pixels=thresholds.separation_spread_pixels)
    return with_fault_checks(restoration, at_faults)


def _notes(draft: Draft) -> list[str]:
    """What a reader of the report should know about how the draft was made and drawn."""
    notes = []
    if draft.method == "edited":
        notes.append("horizons and faults were read from an edited section file, not rebuilt")
    if draft.ve != 1:
        notes.append(f"the figures are drawn at vertical exaggeration {draft.ve:g}: "
                     "dips and thicknesses look steeper and thicker than they are; "
                     "every check is measured at true scale")
    return notes


__all__ = [
    "TESTS",
    "CheckReport",
    "KeyFigures",
    "TopographyCheck",
    "check_topography",
    "jsonable",
    "key_figures",
    "run_checks",
]
