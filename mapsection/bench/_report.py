"""What the benchmarks share: the sample project they default to and the medians they
report."""

from __future__ import annotations

import statistics
from pathlib import Path


def sample_project() -> Path:
    """The sample area's project file in the source tree (made by its generate.py)."""
    return Path(__file__).resolve().parents[2] / "sample_area" / "project.toml"


def medians(*samples: list[float]) -> tuple[float, ...]:
    """The median of each list of timings, in the order given (s)."""
    return tuple(statistics.median(s) for s in samples)


def median_ms(values: list[float], scale: float = 1e3) -> float:
    """The median of ``values`` times ``scale`` (seconds to ms by default); NaN when empty."""
    return statistics.median(values) * scale if values else float("nan")
