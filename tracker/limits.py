"""One set of limits for the settings the review, the suggestions, the CLI and
the dashboard share: one name, one default, one range, one check each.

- *target reject rate*: the rate (fraction of castings inspected) a pattern is
  held to. The review flags a pattern whose reject or shrinkage rate is surely
  above it; the suggestions size risers to bring a zone's shrinkage rate down
  to it. 0 means "no rejects at all"; above one half it no longer separates
  good patterns from bad ones.
- *weeks*: ISO weeks in the review window, the review week included.
"""

from __future__ import annotations

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
