"""Three verdicts for every test and sub-test: pass, fail or not tested, each with its reasons.

A test passes only when something was measured and met its threshold; what could not be
measured is ``not_tested`` with the reason (no fault on the section, no attitude in the
corridor...), never a pass. A test made of parts fails when any part fails, passes when
at least one part passed and none failed, and is not tested when no part was measured.

Example::

    from mapsection.checks.status import Part, combine
    parts = {"dips": Part.measured(True), "contacts": Part.not_tested("no map contact")}
    combine(parts)  # ("pass", ["contacts: not tested (no map contact)"])
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass

__all__ = ["BY_CONSTRUCTION", "FAIL", "LABELS", "NOT_TESTED", "PASS", "STATUSES", "Part",
           "combine", "label", "passed_of", "status_of", "worst"]

PASS, FAIL, NOT_TESTED = "pass", "fail", "not_tested"
STATUSES = (PASS, FAIL, NOT_TESTED)
# Said beside a test that a constant-thickness draft built by mapsection cannot fail.
BY_CONSTRUCTION = "holds by construction"


# How a part's name reads in a sentence (others: underscores become spaces).
LABELS = {"line_length_balance": "line-length balance", "block_gaps": "gaps between fault blocks",
          "fault_cutoffs": "cutoffs at faults", "fault_bend_fold": "fault-bend fold comparison",
          "cut_up_section": "cut up-section"}


def label(name: str) -> str:
    """A part's name as it reads in a sentence."""
    return LABELS.get(name, name.replace("_", " "))


def passed_of(status: str) -> bool | None:
    """checks.json's ``passed``: True, False, or None (null) when not tested."""
    return None if status == NOT_TESTED else status == PASS


def status_of(result: Mapping) -> str:
    """A check result's verdict (a dict of checks.json) as ``"pass"``, ``"fail"`` or
    ``"not_tested"``: the inverse of :func:`passed_of`.

    A ``status`` the result gives itself wins (spelt with spaces or hyphens, or as
    "passed", "ok", "failed"); otherwise ``passed`` True / False / None (not
    measured) maps to pass / fail / not_tested. Never "pass" for what was not measured.
    """
    status = result.get("status")
    if isinstance(status, str):
        s = status.strip().lower().replace(" ", "_").replace("-", "_")
        if s in STATUSES:
            return s
        return {"passed": PASS, "ok": PASS, "failed": FAIL}.get(s, NOT_TESTED)
    passed = result.get("passed")
    return PASS if passed is True else FAIL if passed is False else NOT_TESTED


def worst(statuses: Iterable[str]) -> str:
    """fail over pass over not_tested."""
    s = set(statuses)
    return FAIL if FAIL in s else PASS if PASS in s else NOT_TESTED


@dataclass(frozen=True)
class Part:
    """The verdict of one sub-test: ``status`` and the ``reasons`` behind it."""

    status: str
    reasons: tuple[str, ...] = ()

    @classmethod
    def measured(cls, ok: bool, *reasons: str) -> Part:
        return cls(PASS if ok else FAIL, tuple(reasons))

    @classmethod
    def not_tested(cls, why: str) -> Part:
        return cls(NOT_TESTED, (why,))

    @property
    def passed(self) -> bool | None:
        return passed_of(self.status)

    def to_dict(self) -> dict:
        return {"status": self.status, "passed": self.passed, "reasons": list(self.reasons)}


def combine(parts: Mapping[str, Part]) -> tuple[str, list[str]]:
    """A test's status from its parts, and its reasons: each failed part's reasons, each
    part not tested with why, and each part holding by construction."""
    status = worst(p.status for p in parts.values())
    reasons: list[str] = []
    for name, p in parts.items():
        text = label(name)
        if p.status == FAIL:
            reasons += ([r if r.lower().startswith(text) else f"{text}: {r}" for r in p.reasons]
                        or [f"{text}: failed"])
        elif p.status == NOT_TESTED:
            reasons.append(f"{text}: not tested ({'; '.join(p.reasons)})")
        elif any(BY_CONSTRUCTION in r for r in p.reasons):
            reasons.append(f"{text}: {BY_CONSTRUCTION}")
    return status, reasons
