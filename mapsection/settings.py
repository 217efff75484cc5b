"""Every setting of mapsection, defined once with its default and its documented range.

The project reader (:mod:`mapsection.project`), the command line and the library
functions all take their choices, defaults and ranges from here:

* the named choices: :data:`METHODS` (construction), :data:`PROJECTIONS` (how
  attitudes reach the section plane), :data:`CONVENTIONS` (how attitudes are
  written), :data:`VERTICAL_UNITS` (the DEM's elevations);
* the numeric ranges (:data:`RANGES`): a value outside its range is refused
  with :class:`~mapsection.errors.SettingError` naming the key; a few are
  accepted above a ``large`` value with a note, where a large value can be meant;
* :class:`SectionSettings` -- the settings of one section with their defaults,
  validated once, where they are made (``__post_init__``);
* :class:`Thresholds` -- the pass thresholds of the checks, validated the same
  way (:class:`~mapsection.errors.ThresholdError`).

The ranges are the tool's defaults, chosen wide enough for any real section and
narrow enough to catch a typing slip (``ve = 1e4``, ``corridor = 1e9``); the
user guide lists them (docs/index.md).

Example::

    from mapsection.settings import SectionSettings
    SectionSettings(ve=2.0).ve          # 2.0
    SectionSettings(ve=1e4)             # SettingError: ve: vertical exaggeration must be ...
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

from ._messages import human
from .errors import SettingError, ThresholdError

METHODS = ("kink", "arc")
PROJECTIONS = ("perpendicular", "strike", "plunge")
CONVENTIONS = ("rhr", "dip-direction", "quadrant")
# The DEM's vertical unit -> metres per unit (international foot; US survey foot 1200/3937 m).
VERTICAL_UNITS = {"metre": 1.0, "foot": 0.3048, "us-foot": 1200.0 / 3937.0}

# The longest section line accepted (the tool's default): 1000 km, far beyond any draft section.
MAX_LINE_LENGTH_M = 1_000_000.0

# What each choice is, for messages.
_CHOICE_LABEL = {"method": "construction method", "projection": "projection",
                 "convention": "attitude convention", "vertical_unit": "vertical unit",
                 "kind": "unit kind"}
# [[stratigraphy]] kind: see mapsection.stratigraphy
KINDS = ("layered", "cover", "intrusive")
CHOICES: dict[str, tuple[str, ...]] = {"method": METHODS, "projection": PROJECTIONS,
                                       "convention": CONVENTIONS,
                                       "vertical_unit": tuple(VERTICAL_UNITS),
                                       "kind": KINDS}


@dataclass(frozen=True)
class Range:
    """A documented range of a numeric setting (the tool's default ranges).

    ``lo_ok``/``hi_ok``: whether the limit itself is allowed. ``large``: values
    above it are accepted with a note (a large value that can be meant).
    """

    lo: float
    hi: float
    unit: str = ""
    lo_ok: bool = True
    hi_ok: bool = True
    large: float | None = None
    label: str = ""  # what the setting is, said before "must be"

    def text(self) -> str:
        """The range in words, e.g. ``from 0.1 to 100`` or ``above 0 and at most 100000 m``."""
        u = f" {self.unit}" if self.unit else ""
        lo, hi = human(self.lo), human(self.hi)
        if self.lo_ok and self.hi_ok:
            return f"from {lo} to {hi}{u}"
        if not self.lo_ok and self.hi_ok:
            return f"above {lo} and at most {hi}{u}"
        if self.lo_ok:
            return f"from {lo} to below {hi}{u}"
        return f"between {lo} and {hi}{u}, both excluded"

    def problem(self, value: object) -> str | None:
        """What is wrong with ``value`` (None when it is in range)."""
        ok = isinstance(value, int | float) and not isinstance(value, bool) \
            and math.isfinite(value)
        if ok:
            v = float(value)
            ok = (v >= self.lo if self.lo_ok else v > self.lo) and \
                 (v <= self.hi if self.hi_ok else v < self.hi)
        if ok:
            return None
        what = f"{self.label} must be" if self.label else "must be"
        got = human(value) if isinstance(value, int | float) and not isinstance(value, bool) \
            else repr(value)
        return f"{what} {self.text()}, got {got}"


# Every numeric setting with its range (the tool's defaults; see docs/index.md).
RANGES: dict[str, Range] = {
    # [[section]]
    "corridor": Range(0.0, 100_000.0, "m", lo_ok=False, large=20_000.0,
                      label="corridor half-width"),
    "ve": Range(0.1, 100.0, label="vertical exaggeration", large=20.0),
    "dip_tolerance": Range(0.0, 45.0, "degrees", label="dip tolerance"),
    "depth": Range(0.0, 100_000.0, "m", lo_ok=False, large=30_000.0, label="depth"),
    "fault_depth": Range(0.0, 100_000.0, "m", lo_ok=False, large=30_000.0,
                         label="fault depth"),
    "default_dip": Range(-90.0, 90.0, "degrees", lo_ok=False, hi_ok=False,
                         label="default apparent dip"),
    "pin": Range(0.0, 1_000_000.0, "m along the section", label="pin line"),
    "loose": Range(0.0, 1_000_000.0, "m along the section", label="loose line"),
    # the figure: horizons and faults dashed below this depth (m below the lowest ground)
    "constrained_depth": Range(0.0, 100_000.0, "m", lo_ok=False, label="constrained depth"),
    # [map] and [[fault]]
    "default_fault_dip": Range(0.0, 90.0, "degrees", lo_ok=False, label="default fault dip"),
    "dip": Range(0.0, 90.0, "degrees", lo_ok=False, label="fault dip"),
    "radius": Range(0.0, 1_000_000.0, "m", lo_ok=False, label="bend radius"),
    # [[stratigraphy]]
    "thickness": Range(0.0, 20_000.0, "m", lo_ok=False, label="thickness"),
    # profile sample spacing (mapsection profile --step, SectionSession step)
    "step": Range(0.0, 10_000.0, "m", lo_ok=False, label="sample step"),
    # [checks]
    "contact_rms_m": Range(0.0, 10_000.0, "m"),
    "contact_rms_pixels": Range(0.0, 100.0, "pixels"),
    "unit_agreement": Range(0.0, 1.0),
    "dip_rms_deg": Range(0.0, 90.0, "degrees"),
    "area_mismatch_pct": Range(0.0, 100.0, "%", lo_ok=False),
    "line_length_spread_pct": Range(0.0, 100.0, "%", lo_ok=False),
    "cutoff_mismatch_fraction": Range(0.0, 1.0),
    "cutoff_mismatch_pixels": Range(0.0, 100.0, "pixels"),
    "separation_spread_fraction": Range(0.0, 10.0),
    "separation_spread_pixels": Range(0.0, 100.0, "pixels"),
}

_LARGE_WHY = {
    "corridor": "attitudes this far from the line may not belong to the section",
    "ve": "dips are drawn much steeper than they are",
    "depth": "the section reaches below the usual depth of a draft section",
    "fault_depth": "the faults reach below the usual depth of a draft section",
}


def check_choice(key: str, value: object) -> str:
    """``value`` when it is one of the choices of ``key``; else SettingError naming them."""
    choices = CHOICES[key]
    if value not in choices:
        raise SettingError(key, f"unknown {_CHOICE_LABEL[key]} {value!r} "
                                f"(use one of {', '.join(choices)})")
    return str(value)


def check_number(key: str, value: object) -> float:
    """``value`` as a float when it lies in the documented range of ``key``.

    Raises
    ------
    SettingError
        naming ``key``, its range and the value given.
    """
    problem = RANGES[key].problem(value)
    if problem is not None:
        raise SettingError(key, problem)
    return float(value)  # type: ignore[arg-type]


def large_note(key: str, value: float | None) -> str | None:
    """A note when ``value`` is in range but above the ``large`` mark of ``key`` (else None)."""
    r = RANGES[key]
    if value is None or r.large is None or value <= r.large:
        return None
    return (f"{key} = {human(value)} is large (above {human(r.large)}"
            f"{' ' + r.unit if r.unit else ''}): {_LARGE_WHY[key]}; accepted as given")


@dataclass(frozen=True)
class SectionSettings:
    """The settings of one section, with their defaults (the tool's defaults).

    ``corridor``: half-width in metres of the strip of attitudes projected;
    ``method``: one of :data:`METHODS`; ``projection``: one of :data:`PROJECTIONS`;
    ``ve``: vertical exaggeration of the figure; ``dip_tolerance``: degrees, dips
    closer than this share a dip domain; ``depth``: metres below the lowest ground
    to the section's base (default: from the column); ``fault_depth``: metres below
    the lowest ground that faults reach; ``default_dip``: signed apparent dip used,
    with a warning, where no dips fall in the corridor; ``pin``, ``loose``: the pin
    and loose lines, metres along the section (default: chosen by the checks).

    Every value is checked here, once; a bad one raises
    :class:`~mapsection.errors.SettingError` naming its key.
    """

    corridor: float = 500.0
    method: str = "kink"
    projection: str = "perpendicular"
    ve: float = 1.0
    dip_tolerance: float = 5.0
    depth: float | None = None
    fault_depth: float | None = None
    default_dip: float | None = None
    pin: float | None = None
    loose: float | None = None

    def __post_init__(self) -> None:
        for f in fields(SectionSettings):
            value = getattr(self, f.name)
            if f.name in CHOICES:
                check_choice(f.name, value)
            elif value is not None or f.default is not None:
                object.__setattr__(self, f.name, check_number(f.name, value))

    def notes(self) -> list[str]:
        """Notes on values accepted although large (see :data:`RANGES`)."""
        out = (large_note(f.name, getattr(self, f.name)) for f in fields(SectionSettings)
               if f.name in RANGES)
        return [n for n in out if n]


DEFAULTS = SectionSettings()


@dataclass(frozen=True)
class Thresholds:
    """Pass thresholds of the balance checks (defaults are common practice).

    Checked once, here: a value outside its range (:data:`RANGES`) raises
    :class:`~mapsection.errors.ThresholdError` naming its key.
    """

    contact_rms_m: float = 50.0  # the larger of this and 2 DEM pixels
    contact_rms_pixels: float = 2.0
    unit_agreement: float = 0.95
    dip_rms_deg: float = 5.0
    area_mismatch_pct: float = 5.0
    line_length_spread_pct: float = 5.0
    # Restoration at each fault (the tool's defaults, not common practice): a restored
    # cutoff mismatch may reach the larger of this share of the fault's mean separation
    # and this many DEM pixels; the separations along one straight stretch of a fault may
    # spread by the larger of this share of their mean and this many pixels.
    cutoff_mismatch_fraction: float = 0.10
    cutoff_mismatch_pixels: float = 2.0
    separation_spread_fraction: float = 0.20
    separation_spread_pixels: float = 2.0

    def __post_init__(self) -> None:
        problem = threshold_problem(self)
        if problem is not None:
            raise ThresholdError(*problem)


def threshold_problem(thresholds: Thresholds) -> tuple[str, str] | None:
    """The first threshold out of its range, as (key, what is wrong); None when all are fine."""
    for f in fields(Thresholds):
        problem = RANGES[f.name].problem(getattr(thresholds, f.name))
        if problem is not None:
            return f.name, problem
    if thresholds.contact_rms_m <= 0 and thresholds.contact_rms_pixels <= 0:
        return "contact_rms_m", "at least one of it and contact_rms_pixels must be > 0"
    for frac, px in (("cutoff_mismatch_fraction", "cutoff_mismatch_pixels"),
                     ("separation_spread_fraction", "separation_spread_pixels")):
        if getattr(thresholds, frac) <= 0 and getattr(thresholds, px) <= 0:
            return frac, f"at least one of it and {px} must be > 0"
    return None


@dataclass(frozen=True)
class FaultSpec:
    """What the project says of one mapped fault (a ``[[fault]]`` table), matched by the
    faults layer's name field; the construction takes it as it is
    (:mod:`mapsection.construct.faults`).

    ``dip``: true dip (degrees) where the layer has none; ``detachment``: the elevation
    (m) of the flat the fault soles into, or the name of the footwall unit along whose
    base the flat runs; ``radius``: metres, the curvature of the bend into the flat
    (listric; default a sharp bend); ``cuts``: the faults this one cuts (it is younger).
    """

    name: str
    dip: float | None = None
    detachment: float | str | None = None
    radius: float | None = None
    cuts: tuple[str, ...] = ()
    fold: str | None = None


SECTION_SETTING_KEYS = frozenset(f.name for f in fields(SectionSettings))
THRESHOLD_KEYS = frozenset(f.name for f in fields(Thresholds))

__all__ = ["CHOICES", "CONVENTIONS", "DEFAULTS", "MAX_LINE_LENGTH_M", "METHODS",
           "FaultSpec", "PROJECTIONS", "RANGES", "SECTION_SETTING_KEYS", "THRESHOLD_KEYS",
           "VERTICAL_UNITS",
           "Range", "SectionSettings", "Thresholds", "check_choice", "check_number",
           "large_note", "threshold_problem"]
