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
from ..project import Thresholds
from .area import AreaBalance
from .kinematics import Kinematics
from .restore import Restoration
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

    # -- each test as a dict with its own "passed" ---------------------------
    def test_dicts(self) -> dict[str, dict]:
        """Each test's ``to_dict()`` with its pass thresholds: the sections of checks.json."""
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
        rest["passed"] = bool(rest["passed"])
        rest["thresholds"] = {"line_length_spread_pct": t.line_length_spread_pct}

        area = self.area_balance.to_dict()
        area["passed"] = bool(area["passed"])
        area["thresholds"] = {"area_mismatch_pct": t.area_mismatch_pct}

        kin = self.kinematics.to_dict()
        kin["passed"] = bool(kin["passed"])
        return {"topography": topo, "restoration": rest, "area_balance": area, "kinematics": kin}

    @property
    def results(self) -> dict[str, bool]:
        """Each test's verdict, in the order of :data:`TESTS`."""
        return {"topography": bool(self.topography.passed),
                "restoration": bool(self.restoration.passed),
                "area_balance": bool(self.area_balance.passed),
                "kinematics": bool(self.kinematics.passed)}

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
