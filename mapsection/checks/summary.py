"""The key figures of a section's four tests: what a summary line or table shows.

:func:`key_figures` reads them off a :class:`mapsection.checks.CheckReport` (typed
attributes, never the keys of ``to_dict()``), once, for every summary: the table
``mapsection check`` prints, the head of report.html and the lines ``mapsection
demo`` prints. A figure not measured is NaN (or None), shown as a dash.

Example::

    from mapsection.checks import key_figures
    figures = key_figures(report)
    print(figures.statuses, figures.topography.contact_rms_m)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ..project import Thresholds
from .area import AreaBalance, DetachmentFit
from .results import CheckReport

__all__ = [
    "AreaFigures",
    "FaultFigures",
    "KeyFigures",
    "KinematicsFigures",
    "RestorationFigures",
    "TopographyFigures",
    "key_figures",
    "worst_unit",
]

NAN = float("nan")


class _Verdict:
    """``passed`` from ``status``: True, False, or None when not tested."""

    status: str

    @property
    def passed(self) -> bool | None:
        return None if self.status == "not_tested" else self.status == "pass"


@dataclass(frozen=True)
class TopographyFigures(_Verdict):
    status: str = "not_tested"  # "pass", "fail" or "not_tested"
    reasons: tuple[str, ...] = ()
    contact_rms_m: float = NAN
    contact_threshold_m: float = NAN
    unit_agreement: float = NAN
    dip_rms_deg: float = NAN
    unpaired_contacts: int = 0  # map and section contacts left without a partner
    max_unpaired: int = 0
    diagnosis: tuple[str, ...] = ()  # likely causes of a failure, strongest first


@dataclass(frozen=True)
class FaultFigures:
    """One fault's restoration: worst cutoff mismatch and separation spread."""

    fault: str
    cutoff_status: str
    worst_mismatch_m: float
    mismatch_threshold_m: float
    worst_top_of: str | None
    separation_status: str
    separations_m: tuple[float, ...]
    spread_m: float
    spread_threshold_m: float


@dataclass(frozen=True)
class RestorationFigures(_Verdict):
    status: str = "not_tested"  # "pass", "fail" or "not_tested"
    reasons: tuple[str, ...] = ()
    shortening_pct: float = NAN
    shortening_m: float = NAN
    line_length_mismatch_pct: float = NAN  # the spread of the restored line lengths
    faults: tuple[FaultFigures, ...] = ()


@dataclass(frozen=True)
class AreaFigures(_Verdict):
    status: str = "not_tested"  # "pass", "fail" or "not_tested"
    reasons: tuple[str, ...] = ()
    worst_unit: str = ""  # the unit whose deformed area departs most from its restored
    worst_mismatch_pct: float | None = None
    detachment: DetachmentFit | None = None  # None: fewer than two horizons


@dataclass(frozen=True)
class KinematicsFigures(_Verdict):
    status: str = "not_tested"  # "pass", "fail" or "not_tested"
    reasons: tuple[str, ...] = ()
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
    def statuses(self) -> dict[str, str]:
        """Each test's status, in the order of :data:`mapsection.checks.TESTS`."""
        return {"topography": self.topography.status,
                "restoration": self.restoration.status,
                "area_balance": self.area_balance.status,
                "kinematics": self.kinematics.status}

    @property
    def results(self) -> dict[str, bool | None]:
        """Each test's verdict: True (pass), False (fail), None (not tested)."""
        return {k: None if st == "not_tested" else st == "pass"
                for k, st in self.statuses.items()}

    @property
    def passed(self) -> bool:
        """True when no test fails (not tested is neither a pass nor a failure)."""
        return "fail" not in self.statuses.values()


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
    topo, rest, area, kin = (report.topography, report.restoration, report.area_balance,
                             report.kinematics)
    unit, worst = worst_unit(area)
    at_faults = rest.at_faults
    return KeyFigures(
        report.section, report.method, report.ve, report.thresholds,
        TopographyFigures(
            topo.status, tuple(topo.reasons), topo.contact_rms_m, topo.contact_threshold_m,
            topo.unit_agreement, topo.dip_rms_deg,
            len(topo.unpaired_map_contacts) + len(topo.unpaired_section_contacts),
            topo.max_unpaired,
            tuple(topo.diagnosis.lines()) if topo.diagnosis is not None else ()),
        RestorationFigures(rest.status, tuple(rest.reasons), rest.shortening_pct,
                           rest.shortening_m, rest.line_length_mismatch_pct,
                           tuple(_fault_figures(at_faults)) if at_faults is not None else ()),
        AreaFigures(area.status, tuple(area.reasons), unit, worst, area.detachment),
        KinematicsFigures(kin.status, tuple(kin.reasons), len(kin.failures), kin.transport_name,
                          dict(kin.fault_bend)),
    )


def _fault_figures(at_faults) -> list[FaultFigures]:
    """Per fault: the worst cutoff mismatch and the separations' spread."""
    seps = {f.fault: f for f in at_faults.separations.faults}
    out = []
    for c in at_faults.cutoffs.faults:
        s = seps.get(c.fault)
        out.append(FaultFigures(
            c.fault, c.status, c.worst_m, c.threshold_m, c.worst_top_of,
            s.status if s else "not_tested",
            tuple(s.separations_m.values()) if s else (),
            s.spread_m if s else NAN, s.threshold_m if s else NAN))
    return out
