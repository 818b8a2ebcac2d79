"""Plausibility limits: one place for the dates and physical ranges a value may take.

A value outside these is refused, naming the range, because it is almost
always a typing or unit slip (a year 0001, kilograms typed as grams, a cost
of 1e300) and, stored, it would quietly distort every figure built on it.
The ranges are wide on purpose: they span the trade, not one shop. Values are
common practice (no published source): the heaviest single castings poured
are a few hundred tonnes, risers and sleeves run from a few millimetres to a
few metres.
"""

from __future__ import annotations

import datetime as dt

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
    # sleeves and risers
    "inner_diameter_mm": (5.0, 3_000.0, "mm"),
    "diameter_mm": (5.0, 3_000.0, "mm"),
    "height_mm": (5.0, 5_000.0, "mm"),
    "neck_diameter_mm": (2.0, 3_000.0, "mm"),
    "unit_cost": (0.0, 100_000.0, "per sleeve"),
}
