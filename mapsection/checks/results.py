"""The result of the four tests of one section: :class:`CheckReport`, typed by test.

``CheckReport.to_dict()`` is what checks.json holds (:func:`jsonable` makes it plain JSON).
"""

from __future__ import annotations

import dataclasses
import math
import os
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..caution import CAUTION
from ..settings import Thresholds
from .area import AreaBalance
from .kinematics import Kinematics
from .restore import Restoration
from .status import passed_of, worst
from .topography import TopographyCheck

__all__ = ["TESTS", "CheckReport", "jsonable"]

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


@dataclass
class CheckReport:
    """The four tests of one section; ``to_dict()`` is what checks.json holds."""

    section: str
    method: str
    ve: float
    thresholds: Thresholds
    topography: TopographyCheck
    restoration: Restoration
    area_balance: AreaBalance
    kinematics: Kinematics
    notes: list[str] = field(default_factory=list)
    # A column with unconformities: each sequence's restoration, area balance and eroded
    # part (mapsection.checks.sequences), youngest first; empty for one sequence.
    sequences: list[dict] = field(default_factory=list)

    # -- each test as a dict with its own "passed", "status" and "reasons" ---
    def test_dicts(self) -> dict[str, dict]:
        """Each test's ``to_dict()`` with its pass thresholds: the sections of checks.json.

        Each holds ``passed`` (true, false, or null when not tested), ``status``
        ("pass", "fail" or "not_tested"), ``reasons`` and ``parts`` (each sub-test's
        status and reasons).
        """
        t = self.thresholds
        topo = self.topography.to_dict()
        topo["thresholds"] = {
            "contact_rms_m": topo.get("contact_threshold_m"),
            "contact_rms_pixels": t.contact_rms_pixels,
            "unit_agreement": t.unit_agreement,
            "dip_rms_deg": t.dip_rms_deg,
            "max_unpaired_contacts": topo.get("max_unpaired"),
        }

        rest = self.restoration.to_dict()
        rest["thresholds"] = {"line_length_spread_pct": t.line_length_spread_pct,
                              "cutoff_mismatch_fraction": t.cutoff_mismatch_fraction,
                              "cutoff_mismatch_pixels": t.cutoff_mismatch_pixels,
                              "separation_spread_fraction": t.separation_spread_fraction,
                              "separation_spread_pixels": t.separation_spread_pixels}

        area = self.area_balance.to_dict()
        area["thresholds"] = {"area_mismatch_pct": t.area_mismatch_pct}

        kin = self.kinematics.to_dict()
        out = {"topography": topo, "restoration": rest, "area_balance": area, "kinematics": kin}
        for name, d in out.items():  # one form for every test
            st = self.statuses[name]
            d["status"], d["passed"] = st, passed_of(st)
            d["reasons"] = list(getattr(self, name).reasons)
        return out

    @property
    def statuses(self) -> dict[str, str]:
        """Each test's status ("pass", "fail" or "not_tested"), in the order of :data:`TESTS`."""
        return {k: getattr(self, k).status for k in TESTS}

    @property
    def results(self) -> dict[str, bool | None]:
        """Each test's verdict: True (pass), False (fail), None (not tested)."""
        return {k: passed_of(st) for k, st in self.statuses.items()}

    @property
    def status(self) -> str:
        """"fail" when any test fails, else "pass" when any passed, else "not_tested"."""
        return worst(self.statuses.values())

    @property
    def passed(self) -> bool:
        """True when no test fails (a test not tested is no failure, and no pass either)."""
        return self.status != "fail"

    def to_dict(self) -> dict:
        tests = self.test_dicts()
        out: dict[str, Any] = {
            "section": self.section,
            "method": self.method,
            "passed": passed_of(self.status),
            "status": self.status,
            "caution": CAUTION,
        }
        out.update(tests)
        if self.sequences:
            out["sequences"] = self.sequences
        return jsonable(out)
