"""One set of limits for the settings the review, the suggestions, the CLI and
the dashboard share: one name, one default, one range, one check each.

- *target reject rate*: the rate (fraction of castings inspected) a pattern is
  held to. The review flags a pattern whose reject or shrinkage rate is surely
  above it; the suggestions size risers to bring a zone's shrinkage rate down
  to it. 0 means "no rejects at all"; above one half it no longer separates
  good patterns from bad ones.
- *weeks*: ISO weeks in the review window, the review week included.
- *plausibility*: the dates (1950 to a year ahead) and the physical range of
  each size, weight and cost column an import or a form may carry.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np

from tracker.errors import BadInput

TARGET_DEFAULT = 0.02
TARGET_MIN = 0.0
TARGET_MAX = 0.5
TARGET_NAME = "target reject rate"
TARGET_HELP = (f"Target reject rate as a fraction of castings inspected, {TARGET_MIN:g} to {TARGET_MAX:g} "
               f"(0.02 = 2 %): the review flags a pattern whose rate is surely above it; suggestions "
               f"size risers to bring a zone's shrinkage rate down to it.")

WEEKS_DEFAULT = 13
WEEKS_MIN = 1
WEEKS_MAX = 520
WEEKS_HELP = f"Weeks in the review window, the review week included ({WEEKS_MIN} to {WEEKS_MAX})."


def check_target(target) -> float:
    """The target reject rate as a float, or ``BadInput`` naming the range."""
    try:
        t = float(target)
    except (TypeError, ValueError):
        t = math.nan
    if isinstance(target, bool) or not TARGET_MIN <= t <= TARGET_MAX:
        raise BadInput("target", target, f"the {TARGET_NAME} is a fraction from {TARGET_MIN:g} to "
                                         f"{TARGET_MAX:g}, e.g. 0.02 for 2 %")
    return t


def check_weeks(weeks) -> int:
    """Weeks in the window as an int, or ``BadInput`` naming the range."""
    if isinstance(weeks, bool) or not isinstance(weeks, (int, np.integer)) \
            or not WEEKS_MIN <= weeks <= WEEKS_MAX:
        raise BadInput("weeks", weeks, f"weeks must be a whole number from {WEEKS_MIN} to {WEEKS_MAX}, "
                                       "e.g. 13")
    return int(weeks)


# --- plausibility of what is imported or logged --------------------------------------
#
# A value outside these is refused, naming the range, because it is almost always a
# typing or unit slip (a year 0001, kilograms typed as grams, a cost of 1e300) and,
# stored, it would quietly distort every figure built on it. The ranges are wide on
# purpose: they span the trade, not one shop. Common practice (no published source):
# the heaviest single castings poured are a few hundred tonnes, risers and sleeves run
# from a few millimetres to a few metres.

EARLIEST_DATE = dt.date(1950, 1, 1)  # no log holds pours or inspections before this
DAYS_AHEAD = 366  # a planned revision may take effect up to a year ahead


def latest_date(today: dt.date) -> dt.date:
    """The latest date any value may carry: a year after ``today``."""
    return today + dt.timedelta(days=DAYS_AHEAD)


# column -> (lowest, highest, unit): both ends allowed
RANGES = {
    # patterns
    "casting_weight_kg": (0.001, 300_000.0, "kg"),
    "metal_cost_per_kg": (0.0, 100_000.0, "per kg"),
    "processing_cost_per_casting": (0.0, 10_000_000.0, "per casting"),
    # zones: a section of up to 100 m³ (a 300 t steel casting is about 40 m³)
    "volume_cm3": (0.001, 1e8, "cm³"),
    "cooling_area_cm2": (0.01, 1e7, "cm²"),
    "thickness_mm": (0.1, 5_000.0, "mm"),
    "length_mm": (0.1, 20_000.0, "mm"),
    "width_mm": (0.1, 20_000.0, "mm"),
    # sleeves and risers
    "inner_diameter_mm": (5.0, 3_000.0, "mm"),
    "diameter_mm": (5.0, 3_000.0, "mm"),
    "height_mm": (5.0, 5_000.0, "mm"),
    "neck_diameter_mm": (2.0, 3_000.0, "mm"),
    "unit_cost": (0.0, 100_000.0, "per sleeve"),
}

# Pour temperature, °C: from below the light alloys' usual pours to above steel's.
POUR_TEMP_RANGE_C = (400.0, 1800.0)


def check_review_week(week: str, monday: dt.date) -> dt.date:
    """The Monday of a review week, or ``BadInput`` when the week lies outside
    the years a log can hold (the calendar's own ends, year 1 and 9999, would
    overflow the window around the week)."""
    last = latest_date(dt.date.today()).year
    if not EARLIEST_DATE.year <= monday.year <= last:
        raise BadInput("week", week, f"the log holds dates from {EARLIEST_DATE.year} to {last} only; give a week "
                                     "in those years")
    return monday
