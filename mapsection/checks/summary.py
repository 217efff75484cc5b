"""The key figures of a section's four tests: what a summary line or table shows.

:func:`key_figures` reads them off a :class:`mapsection.checks.CheckReport` (typed
attributes, never the keys of ``to_dict()``), once, for every summary: the table
``mapsection check`` prints, the head of report.html and the lines ``mapsection
demo`` prints. A figure not measured is NaN (or None), shown as a dash.

Example::

    from mapsection.checks import key_figures
    figures = key_figures(report)
    print(figures.passed, figures.topography.contact_rms_m)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ..project import Thresholds
from .area import AreaBalance, DetachmentFit
from .results import CheckReport

__all__ = [
    "AreaFigures",
    "KeyFigures",
    "KinematicsFigures",
    "RestorationFigures",
    "TopographyFigures",
    "key_figures",
    "worst_unit",
]

NAN = float("nan")


@dataclass(frozen=True)
class TopographyFigures:
    passed: bool
    contact_rms_m: float = NAN
    contact_threshold_m: float = NAN
    unit_agreement: float = NAN
    dip_rms_deg: float = NAN
    unpaired_contacts: int = 0  # map and section contacts left without a partner
    max_unpaired: int = 0


@dataclass(frozen=True)
class RestorationFigures:
    passed: bool
    shortening_pct: float = NAN
    shortening_m: float = NAN
    line_length_mismatch_pct: float = NAN  # the spread of the restored line lengths


@dataclass(frozen=True)
class AreaFigures:
    passed: bool
    worst_unit: str = ""  # the unit whose deformed area departs most from its restored
    worst_mismatch_pct: float | None = None
    detachment: DetachmentFit | None = None  # None: fewer than two horizons


@dataclass(frozen=True)
class KinematicsFigures:
    passed: bool
    inconsistencies: int = 0
    transport_direction: str | None = None  # in words
    fault_bend: dict = field(default_factory=dict)  # Kinematics.fault_bend: status, compared


@dataclass(frozen=True)
class KeyFigures:
    """One section's key figures, per test, with the thresholds they were judged by."""

    section: str
    method: str
    ve: float
    thresholds: Thresholds
    topography: TopographyFigures
    restoration: RestorationFigures
    area_balance: AreaFigures
    kinematics: KinematicsFigures

    @property
    def results(self) -> dict[str, bool]:
        """Each test's verdict, in the order of :data:`mapsection.checks.TESTS`."""
        return {"topography": self.topography.passed,
                "restoration": self.restoration.passed,
                "area_balance": self.area_balance.passed,
                "kinematics": self.kinematics.passed}

    @property
    def passed(self) -> bool:
        return all(self.results.values())


def worst_unit(area: AreaBalance) -> tuple[str, float | None]:
    """The unit with the largest |mismatch_pct| of an area balance, and that mismatch."""
    worst, value = "", None
    for u in area.units:
        m = u.mismatch_pct
        if m is not None and math.isfinite(m) and (value is None or abs(m) > abs(value)):
            worst, value = str(u.unit), float(m)
    return worst, value


def key_figures(report: CheckReport) -> KeyFigures:
    """The key figures of a check report (see :class:`KeyFigures`)."""
    results = report.results
    topo, rest, area, kin = (report.topography, report.restoration, report.area_balance,
                             report.kinematics)
    unit, worst = worst_unit(area)
    return KeyFigures(
        report.section, report.method, report.ve, report.thresholds,
        TopographyFigures(
            results["topography"], topo.contact_rms_m, topo.contact_threshold_m,
            topo.unit_agreement, topo.dip_rms_deg,
            len(topo.unpaired_map_contacts) + len(topo.unpaired_section_contacts),
            topo.max_unpaired),
        RestorationFigures(results["restoration"], rest.shortening_pct, rest.shortening_m,
                           rest.line_length_mismatch_pct),
        AreaFigures(results["area_balance"], unit, worst, area.detachment),
        KinematicsFigures(results["kinematics"], len(kin.failures), kin.transport_name,
                          dict(kin.fault_bend)),
    )
