"""The caution every output of mapsection carries (kept apart so that any module can
import it without importing the package's heavier parts)."""

from __future__ import annotations

CAUTION = (
    "A draft section is an interpretation, not a survey: have it reviewed by a qualified "
    "geologist (licensed where local rules require it) before it informs drilling, "
    "tunnelling, slope or groundwater decisions; local codes and practice prevail."
)

__all__ = ["CAUTION"]
