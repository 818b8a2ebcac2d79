"""The bounds of what ``size`` takes, one figure at a time: the import's plausible
range for the section's volume, cooling area, thickness, width and feeding length
(:data:`tracker.limits.RANGES`), and a shop's diameter step. A figure outside them
(1e-300 cm³, a step of 1e300 mm, NaN) is refused, naming the value and the range
in the unit the figure was given in, instead of answering with a riser no shop
could make.
"""

from __future__ import annotations

import math

from tracker import units
from tracker.errors import BadInput
from tracker.limits import RANGES
from tracker.numbers import bound_text

# A shop's riser diameter step, mm: from a fine 0.5 mm to 500 mm (past it every riser rounds to one
# size). Common practice: 5 to 25 mm steps, or 1/4 to 1 in.
STEP_RANGE_MM = (0.5, 500.0)

# size's figure -> the import column whose range it takes
_SECTION = {"volume_cm3": "volume_cm3", "area_cm2": "cooling_area_cm2", "thickness_mm": "thickness_mm",
            "width_mm": "width_mm", "length_mm": "length_mm"}


def _refuse(name: str, value: float, low: float, high: float, system: str, what: str) -> None:
    shown = units.value_in(name, value, system)
    lo, hi = (units.value_in(name, x, system) for x in (low, high))
    raise BadInput(units.column_name(name, system), shown,
                   f"{what} must be a number of at least {bound_text(lo, lower=True)} and at most "
                   f"{bound_text(hi, lower=False)} {units.symbol(name, system)}; check the figure and its unit")


def check_in_range(name: str, value, low: float, high: float, system: str = units.METRIC,
                   what: str | None = None) -> float | None:
    """``value`` (metric, or None where not given) as a float within [low, high];
    else BadInput in the unit of ``system``. NaN and infinity are refused."""
    if value is None:
        return None
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = math.nan
    if not (low <= v <= high):
        _refuse(name, v, low, high, system, what or name)
    return v


def check_section_figures(system: str = units.METRIC, **figures) -> None:
    """Refuse a section figure of ``size`` (volume_cm3, area_cm2, thickness_mm,
    width_mm, length_mm; None where not given) outside the range an import takes."""
    for name, value in figures.items():
        low, high, _ = RANGES[_SECTION[name]]
        check_in_range(name, value, low, high, system, what=units.column_name(name, system))


def check_step(step_mm, system: str = units.METRIC) -> float:
    """A shop's diameter step (mm) within STEP_RANGE_MM, else BadInput in ``system``'s unit."""
    low, high = STEP_RANGE_MM
    step = check_in_range("step_mm", step_mm, low, high, system, what="the diameter step")
    return math.nan if step is None else step
