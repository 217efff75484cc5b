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

:func:`run_checks` runs all four. A test that fails is a result, reported with
its figures; only input that makes a test impossible (no horizons, a pin line
through a fault, thresholds out of range) raises :class:`CheckError`.

Example::

    from mapsection.build import build_section
    from mapsection.checks import run_checks, write_checks_json
    from mapsection.project import load_project

    project = load_project("sample_area/project.toml")
    spec = project.sections[0]
    report = run_checks(build_section(project, spec), project.thresholds)
    write_checks_json(report, "checks.json")
    print(report.passed)
"""

from __future__ import annotations

import dataclasses
import json
import math
import os
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .. import CAUTION
from .._atomic import atomic_file
from ..draft import Draft
from ..errors import CheckError
from ..settings import Thresholds
from .topography import TopographyCheck, check_topography, validate_thresholds

TESTS = ("topography", "restoration", "area_balance", "kinematics")


def jsonable(value: Any) -> Any:
    """Plain JSON values: NaN and infinities become null; arrays, tuples and geometries plain."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        value = value.to_dict() if hasattr(value, "to_dict") else dataclasses.asdict(value)
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple | set):
        return [jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return [jsonable(v) for v in value.tolist()]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, bool) or value is None or isinstance(value, str | int):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if hasattr(value, "wkt"):  # a shapely geometry
        return value.wkt
    if isinstance(value, os.PathLike):
        return os.fspath(value)
    return str(value)


def _to_dict(obj: Any) -> dict:
    if obj is None:
        return {}
    if hasattr(obj, "to_dict"):
        return dict(obj.to_dict())
    if dataclasses.is_dataclass(obj):
        return dataclasses.asdict(obj)
    return dict(obj)


def units_worst(units) -> tuple[str, float | None]:
    """The unit with the largest |mismatch_pct| in an area-balance ``units`` entry."""
    items = units.items() if isinstance(units, dict) else (
        (u.get("unit", u.get("name", "?")), u) for u in (units or []))
    worst, value = "", None
    for name, u in items:
        m = u.get("mismatch_pct") if isinstance(u, dict) else None
        if m is not None and math.isfinite(m) and (value is None or abs(m) > abs(value)):
            worst, value = str(name), float(m)
    return worst, value



@dataclass
class CheckReport:
    """The four tests of one section; ``to_dict()`` is what checks.json holds."""

    section: str
    method: str
    ve: float
    thresholds: Thresholds
    topography: TopographyCheck
    restoration: Any  # mapsection.checks.restore.Restoration
    area_balance: Any  # mapsection.checks.area result
    kinematics: Any  # mapsection.checks.kinematics result
    notes: list[str] = field(default_factory=list)

    # -- each test as a dict with its own "passed" ---------------------------
    def test_dicts(self) -> dict[str, dict]:
        t = self.thresholds
        topo = _to_dict(self.topography)
        topo["thresholds"] = {
            "contact_rms_m": topo.get("contact_threshold_m"),
            "contact_rms_pixels": t.contact_rms_pixels,
            "unit_agreement": t.unit_agreement,
            "dip_rms_deg": t.dip_rms_deg,
            "max_unpaired_contacts": topo.get("max_unpaired"),
        }

        rest = _to_dict(self.restoration)
        if "passed" not in rest:  # a restoration without its own verdict: judge the spread
            spread = rest.get("line_length_mismatch_pct")
            rest["passed"] = bool(spread is not None and math.isfinite(float(spread))
                                  and float(spread) <= t.line_length_spread_pct)
        rest["passed"] = bool(rest["passed"])
        rest.setdefault("thresholds", {"line_length_spread_pct": t.line_length_spread_pct})

        area = _to_dict(self.area_balance)
        area["passed"] = bool(area.get("passed", False))
        area.setdefault("thresholds", {"area_mismatch_pct": t.area_mismatch_pct})

        kin = _to_dict(self.kinematics)
        kin["passed"] = bool(kin.get("passed", False))
        return {"topography": topo, "restoration": rest, "area_balance": area, "kinematics": kin}

    @property
    def results(self) -> dict[str, bool]:
        return {k: bool(v["passed"]) for k, v in self.test_dicts().items()}

    @property
    def passed(self) -> bool:
        return all(self.results.values())

    def to_dict(self) -> dict:
        tests = self.test_dicts()
        out: dict[str, Any] = {
            "section": self.section,
            "method": self.method,
            "passed": all(v["passed"] for v in tests.values()),
            "caution": CAUTION,
        }
        out.update(tests)
        return jsonable(out)


def run_checks(
    draft: Draft,
    thresholds: Thresholds | None = None,
    pin: float | None = None,
    loose: float | None = None,
    *,
    warn: Callable[[str], None] | None = None,
) -> CheckReport:
    """Run the four tests on a draft section.

    ``pin`` and ``loose`` are distances along the line in metres (default: the
    pin at the end of the section in the least-dipping domain, the loose line at
    the other end; chosen by the restoration). A failed test is a result;
    CheckError (no horizons, pin or loose line outside the section or through a
    fault, thresholds out of range) propagates.
    """
    from .area import area_balance
    from .kinematics import check_kinematics
    from .restore import restore_section

    thresholds = thresholds or Thresholds()
    validate_thresholds(thresholds)
    if not any(h.geometry is not None and not h.geometry.is_empty and not h.above_ground
               for h in draft.horizons):
        raise CheckError(f"section {draft.name or '(unnamed)'}: has no horizons below the ground")
    topo = check_topography(draft, thresholds)
    restoration = restore_section(draft, pin=pin, loose=loose,
                                  threshold_pct=thresholds.line_length_spread_pct)
    area = area_balance(draft, restoration, thresholds.area_mismatch_pct)
    kin = check_kinematics(draft, restoration)
    notes = []
    if draft.method == "edited":
        notes.append("horizons and faults were read from an edited section file, not rebuilt")
    if draft.ve != 1:
        notes.append(f"the figures are drawn at vertical exaggeration {draft.ve:g}: "
                     "dips and thicknesses look steeper and thicker than they are; "
                     "every check is measured at true scale")
    report = CheckReport(draft.name, draft.method, float(draft.ve), thresholds, topo,
                         restoration, area, kin, notes)
    if warn is not None:
        failed = [k for k, ok in report.results.items() if not ok]
        if failed:
            warn(f"section {draft.name}: failed {', '.join(failed)}")
    return report


def restoration_layers(report: CheckReport) -> dict:
    """``restored_horizons`` and ``restored_units`` GeoDataFrames for section.gpkg."""
    from .restore import restoration_frames

    return restoration_frames(report.restoration)


def write_check_figures(report: CheckReport, draft: Draft, folder: str | os.PathLike,
                        n_steps: int = 8) -> dict[str, Path]:
    """Draw the checks' figures into ``folder``; returns name -> PNG path for the report.

    Writes ``restored.png/.svg/.pdf``, ``area_depth.png`` (when the excess-area
    fit has at least two horizons) and the incremental sequence
    ``sequence_01.png`` ... with ``sequence.gif`` (``n_steps`` steps, at least 8).
    """
    from .area import draw_area_depth
    from .restore import draw_restoration
    from .sequence import incremental_sequence, write_sequence

    folder = Path(folder)
    figures: dict[str, Path] = {}
    for p in draw_restoration(report.restoration, folder / "restored"):
        if p.suffix == ".png":
            figures["restored"] = p
    fit = getattr(report.area_balance, "detachment", None)
    if fit is not None and len(fit.points) >= 2:
        figures["area_depth"] = draw_area_depth(fit, folder / "area_depth.png")
    frames = incremental_sequence(draft, report.restoration, max(8, int(n_steps)))
    pngs = [p for p in write_sequence(frames, folder, column=draft.column,
                                      title=f"section {draft.name}") if p.suffix == ".png"]
    if pngs:
        figures["sequence_first"], figures["sequence_last"] = pngs[0], pngs[-1]
    return figures


def write_check_outputs(report: CheckReport, draft: Draft, folder: str | os.PathLike,
                        figures: dict[str, str | os.PathLike] | None = None) -> list[Path]:
    """checks.json, the checks' figures and report.html in ``folder`` (a section folder).

    ``figures`` adds figures drawn elsewhere (e.g. ``{"section": "section.png"}``).
    """
    from ..report import write_report

    folder = Path(folder)
    figs: dict[str, str | os.PathLike] = dict(figures or {})
    if "section" not in figs and (folder / "section.png").is_file():
        figs["section"] = folder / "section.png"
    figs.update(write_check_figures(report, draft, folder))
    return [write_checks_json(report, folder / "checks.json"),
            write_report(folder / "report.html", draft, report, figs)]


def write_checks_json(report: CheckReport, path: str | os.PathLike) -> Path:
    """Write ``report.to_dict()`` as JSON, all-or-nothing."""
    path = Path(path)
    text = json.dumps(report.to_dict(), indent=2, allow_nan=False)
    with atomic_file(path) as tmp:
        tmp.write_text(text + "\n", encoding="utf-8")
    return path


__all__ = [
    "TESTS",
    "CheckReport",
    "TopographyCheck",
    "check_topography",
    "jsonable",
    "restoration_layers",
    "run_checks",
    "units_worst",
    "write_check_figures",
    "write_check_outputs",
    "write_checks_json",
]
