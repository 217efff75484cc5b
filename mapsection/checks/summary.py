"""The key figures of a section's four tests: what a summary line or table shows.

:func:`key_figures` reads them off a :class:`mapsection.checks.CheckReport` (typed
attributes, never the keys of ``to_dict()``), once, for every summary: the table
``mapsection check`` prints, the head of report.html and the lines ``mapsection
demo`` prints. A figure not measured is NaN (or None), shown as a dash. Every test's
figures carry its ``status`` ("pass", "fail" or "not_tested") and ``reasons``.
:func:`summary_lines` (the table of ``mapsection check``, also written to build.log),
:func:`result_line` (the line ``mapsection demo`` and ``mapsection build`` print per
section) and :func:`verdict_line` put them in words: PASS, FAIL or NOT TESTED.

Example::

    from mapsection.checks import key_figures
    figures = key_figures(report)
    print(figures.statuses, figures.topography.contact_rms_m)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from ..settings import Thresholds
from ..stratigraphy import horizon_name
from .area import AreaBalance, DetachmentFit

if TYPE_CHECKING:
    from .results import CheckReport

__all__ = [
    "AreaFigures",
    "FaultFigures",
    "KeyFigures",
    "KinematicsFigures",
    "RestorationFigures",
    "TopographyFigures",
    "key_figures",
    "result_line",
    "status_word",
    "summary_lines",
    "verdict_line",
    "worst_unit",
]

NAN = float("nan")


@dataclass(frozen=True)
class _Verdict:
    """A test's ``status`` and ``reasons`` (the first fields of each test's figures);
    ``passed`` from ``status``: True, False, or None when not tested."""

    status: str = "not_tested"  # "pass", "fail" or "not_tested"
    reasons: tuple[str, ...] = ()

    @property
    def passed(self) -> bool | None:
        return None if self.status == "not_tested" else self.status == "pass"


@dataclass(frozen=True)
class TopographyFigures(_Verdict):
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
    shortening_pct: float = NAN
    shortening_m: float = NAN
    line_length_mismatch_pct: float = NAN  # the spread of the restored line lengths
    faults: tuple[FaultFigures, ...] = ()


@dataclass(frozen=True)
class AreaFigures(_Verdict):
    worst_unit: str = ""  # the unit whose deformed area departs most from its restored
    worst_mismatch_pct: float | None = None
    detachment: DetachmentFit | None = None  # None: fewer than two horizons


@dataclass(frozen=True)
class KinematicsFigures(_Verdict):
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


# ---------------------------------------------------------------------------
# the table of 'mapsection check', the line of 'demo' and 'build'


def _num(v, fmt: str) -> str:
    return "-" if v is None or (isinstance(v, float) and not math.isfinite(v)) else format(v, fmt)


def _detachment_text(fit: DetachmentFit | None) -> str:
    """The area-depth result for the table: a depth only when the fit can be trusted."""
    if fit is None:
        return "depth to detachment not measured (fewer than 2 horizons)"
    r2 = _num(fit.r_squared, ".3f")
    if not fit.reliable:
        why = "; ".join(str(i).split(":")[0] for i in fit.issues)
        return f"depth to detachment not determined ({why}; R² {r2})"
    return (f"detachment at elevation {_num(fit.detachment_elevation_m, '.0f')} m, "
            f"{_num(fit.depth_to_detachment_m, '.0f')} m below {fit.datum} "
            f"(R² {r2})")


def _fault_bend_text(fault_bend: dict) -> str:
    """The fault-bend fold comparison (``Kinematics.fault_bend``): a count only of what was
    compared."""
    if fault_bend.get("compared"):
        return f"{fault_bend['compared']} fault-bend fold(s) compared ({fault_bend.get('status')})"
    return "fault-bend fold comparison not tested"


def _figure_texts(key: KeyFigures) -> dict[str, str]:
    """Each test's key figures against its thresholds, as the table shows them."""
    t = key.thresholds
    topo, rest, area, kin = key.topography, key.restoration, key.area_balance, key.kinematics
    n_kin = kin.inconsistencies
    unit = area.worst_unit
    return {
        "topography": (
            f"contact RMS {_num(topo.contact_rms_m, '.1f')} m "
            f"(<= {_num(topo.contact_threshold_m, '.1f')}), "
            f"unit agreement {_num(topo.unit_agreement, '.3f')} "
            f"(>= {t.unit_agreement:.2f}), dip RMS {_num(topo.dip_rms_deg, '.1f')} deg "
            f"(<= {t.dip_rms_deg:g}), unpaired contacts "
            f"{topo.unpaired_contacts} (<= {topo.max_unpaired})"
        ),
        "restoration": (
            f"shortening {_num(rest.shortening_pct, '.1f')} % "
            f"({_num(rest.shortening_m, '.0f')} m), line-length spread "
            f"{_num(rest.line_length_mismatch_pct, '.2f')} % "
            f"(<= {t.line_length_spread_pct:g})"
        ),
        "area_balance": (
            f"worst unit mismatch {_num(area.worst_mismatch_pct, '.2f')} %"
            f"{f' ({unit})' if unit else ''} "
            f"(<= {t.area_mismatch_pct:g}), {_detachment_text(area.detachment)}"
        ),
        "kinematics": (f"{n_kin} inconsistenc{'y' if n_kin == 1 else 'ies'}, transport "
                       f"{kin.transport_direction or '-'}, "
                       + _fault_bend_text(kin.fault_bend)),
    }


STATUS_WORDS = {"pass": "PASS", "fail": "FAIL", "not_tested": "NOT TESTED"}


def status_word(status: str) -> str:
    """PASS, FAIL or NOT TESTED."""
    return STATUS_WORDS.get(status, status.upper())


def _restoration_fault_lines(key: KeyFigures) -> list[str]:
    """Per fault: the worst restored cutoff mismatch and the separations' spread."""
    out = []
    for f in key.restoration.faults:
        if f.cutoff_status != "not_tested":
            out.append(f"fault {f.fault}: worst cutoff mismatch {_num(f.worst_mismatch_m, '.0f')} m"
                       f" at the {horizon_name(f.worst_top_of)} (<= "
                       f"{_num(f.mismatch_threshold_m, '.0f')} m) "
                       f"{status_word(f.cutoff_status)}")
        if f.separation_status != "not_tested":
            seps = "/".join(f"{v:.0f}" for v in f.separations_m)
            out.append(f"fault {f.fault}: separations {seps} m, spread "
                       f"{_num(f.spread_m, '.0f')} m (<= {_num(f.spread_threshold_m, '.0f')} m) "
                       f"{status_word(f.separation_status)}")
    return out


def concealed_text(topo) -> str:
    """What the topography test left uncompared under cover and intrusive units ("" if
    nothing)."""
    stretches = getattr(topo, "concealed", [])
    if not stretches:
        return ""
    out = []
    for kind, what in (("cover", "concealed under cover"),
                       ("intrusive", "intrusive at the ground (in the section by construction)")):
        mine = [c for c in stretches if c.kind == kind]
        if mine:
            units = ", ".join(dict.fromkeys(c.unit for c in mine))
            out.append(f"{sum(c.to_m - c.from_m for c in mine):.0f} m {what} "
                       f"({len(mine)} stretch(es): {units})")
    hidden = len(getattr(topo, "concealed_section_contacts", []))
    text = "; ".join(out) + ": not compared (no unit agreement, no contact pairing there)"
    if hidden:
        text += f"; {hidden} section contact(s) there, not counted as unpaired"
    return text


def summary_lines(report: CheckReport) -> list[str]:
    """One line per test: name, PASS / FAIL / NOT TESTED and its key figures against the
    thresholds; then, under a test that did not pass, why (and, for a failed topography
    test, its likely causes, ranked)."""
    key = key_figures(report)
    lines = [f"section {key.section} (method {key.method}, VE {key.ve:g})",
             f"  {'test':<13} {'result':<10} figures (thresholds)"]
    verdicts = {"topography": key.topography, "restoration": key.restoration,
                "area_balance": key.area_balance, "kinematics": key.kinematics}
    for k, text in _figure_texts(key).items():
        v = verdicts[k]
        lines.append(f"  {k:<13} {status_word(v.status):<10} {text}")
        if k == "topography" and concealed_text(report.topography):
            lines.append(f"{'':26}{concealed_text(report.topography)}")
        if k in ("restoration", "area_balance"):
            lines += [f"{'':26}{n}" for n in _unlayered_lines(report, k)]
        reasons = list(v.reasons)
        if k == "restoration":
            fault_lines = _restoration_fault_lines(key)
            lines += [f"{'':26}{t}" for t in fault_lines]
            if fault_lines:  # the per-fault lines say it; keep what they do not
                reasons = [r for r in reasons if not r.startswith(
                    ("cutoffs at faults: fault", "separation consistency: fault"))]
        lines += [f"{'':26}- {r}" for r in reasons]
        diag = key.topography.diagnosis if k == "topography" else ()
        if diag and diag[0].startswith("no likely cause"):
            lines.append(f"{'':26}diagnosis: {diag[0]}")
        elif diag:
            lines.append(f"{'':26}likely causes, strongest first:")
            lines += [f"{'':28}{t}" for t in diag]
    return lines


def _unlayered_lines(report: CheckReport, test: str) -> list[str]:
    """Under the restoration and the area balance: the units they leave out."""
    stretches = getattr(report.topography, "concealed", [])  # the units at the ground
    what = "line-length balance" if test == "restoration" else "area balance"
    out = []
    for kind, word in (("intrusive", "intrusive bodies not restored"),
                       ("cover", "cover not restored")):
        units = list(dict.fromkeys(c.unit for c in stretches if c.kind == kind))
        if units:
            out.append(f"{word} ({', '.join(units)}): left out of the {what}")
    return out


def result_line(key: KeyFigures) -> str:
    """One line: each test PASS, FAIL or NOT TESTED (what ``mapsection demo`` and
    ``mapsection build`` print per section)."""
    return "  ".join(f"{k} {status_word(st)}" for k, st in key.statuses.items())


def verdict_line(statuses) -> str:
    """The closing line of ``mapsection check``: how many tests passed, failed and were
    not tested."""
    statuses = list(statuses)
    n = {st: statuses.count(st) for st in ("pass", "fail", "not_tested")}
    counts = f"{n['pass']} passed, {n['fail']} failed, {n['not_tested']} not tested"
    return (f"some tests FAIL ({counts})" if n["fail"] else
            f"no test fails ({counts})")
