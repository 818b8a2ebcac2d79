"""One function per rate a page, a command or the report shows of one pattern or
one zone, with its window and its scope in its arguments and in the words that
label it, so two places never show two figures under one name.

- :func:`pattern_reject_rate`: a pattern's rejects (all defects, or one) over the
  castings inspected in a review window, read from the weekly review itself, so
  the page that shows one pattern and the review of every pattern cannot differ.
- A zone's shrinkage rate over the castings poured in a window (the design map's
  and the suggestions' observed rate) is
  :func:`tracker.advice.features.zone_shrinkage_rates`, which both call.
- :func:`scope_text`: the words that say which figure a rate is ("shrinkage
  rejects, zone flange-B, last 13 weeks (2026-W35 to 2026-W47), % of castings
  poured").

Rates are fractions 0..1 (None where nothing was inspected or poured); counts
are castings. A window is ``weeks`` ISO weeks ending with ``week`` (default: the
review's default week), or the pour days ``start`` to ``end``.
"""

from __future__ import annotations

import datetime as dt

from tracker import limits
from tracker.log.store import Store
from tracker.review import stats
from tracker.review.weekly import default_week, weekly_review

INSPECTED = "castings inspected"
POURED = "castings poured"


def window(store: Store, week: str | None = None, weeks: int = limits.WEEKS_DEFAULT) -> dict:
    """The window of ``weeks`` ISO weeks ending with ``week`` (default the review's
    default week): ``week`` (as given, or the default), ``first_week``, ``last_week``,
    ``start``, ``end`` (ISO days), ``weeks``. The suggestions' window is this one too."""
    weeks = limits.check_weeks(weeks)
    if week is None:
        week = default_week(store)
    monday = limits.check_review_week(week, stats.week_start(week))
    first = monday - dt.timedelta(weeks=weeks - 1)
    return {"week": week, "first_week": stats.iso_week(first), "last_week": stats.iso_week(monday),
            "start": first.isoformat(), "end": (monday + dt.timedelta(days=6)).isoformat(), "weeks": weeks}


def scope_text(defect: str | None = None, zone: str | None = None, *, weeks: int | None = None,
               first_week: str | None = None, last_week: str | None = None, start: str | None = None,
               end: str | None = None, basis: str = INSPECTED, who: str | None = None) -> str:
    """Which figure a rate is, in words: what is counted (``defect``: None for all
    rejects), where (``zone``, or ``who``: "each pattern", "pattern P-1017"), over
    which window (``weeks`` ending with ``last_week``, or the days ``start`` to
    ``end``) and on which basis (``basis``: castings inspected or poured).

    Example: "shrinkage rejects, zone boss, last 52 weeks (2025-W48 to 2026-W47), % of castings poured".
    """
    what = "all rejects" if defect is None else f"{defect} rejects"
    where = f"zone {zone}" if zone is not None else who
    when = ""
    if weeks is not None:
        when = f"last {weeks} weeks" + (f" ({first_week} to {last_week})" if first_week and last_week else "")
    elif start and end:
        when = f"poured {start} to {end}"
    return ", ".join(p for p in (what, where, when, f"% of {basis}") if p)


def pattern_reject_rate(store: Store, pattern: str, defect: str | None = None, *, week: str | None = None,
                        weeks: int = limits.WEEKS_DEFAULT) -> dict:
    """``pattern``'s castings rejected (for ``defect``, or all defects) over its
    castings inspected in the window of ``weeks`` ending with ``week``, as the
    weekly review of that window shows it (its ``reject_rate``; for a defect, the
    pattern's ``by_defect`` count over the same castings). Returns ``rejected``,
    ``inspected`` (castings), ``rate`` (fraction or None), ``window`` (see
    :func:`window`) and ``scope`` (:func:`scope_text`)."""
    store.pattern(pattern)  # NotFound with a hint for an unknown pattern
    win = window(store, week, weeks)
    review = weekly_review(store, win["last_week"], win["weeks"])
    row = next((p for p in review["patterns"] if p["pattern"] == pattern), None)
    inspected = int(row["inspected"]) if row else 0
    if row is None:
        rejected = 0
    elif defect is None:
        rejected = int(row["rejected"])
    else:
        rejected = int((row["by_defect"] or {}).get(defect, 0))
    return {"pattern": pattern, "defect": defect, "rejected": rejected, "inspected": inspected,
            "rate": rejected / inspected if inspected else None, "window": win,
            "scope": scope_text(defect, weeks=win["weeks"], first_week=win["first_week"],
                                last_week=win["last_week"], who=f"pattern {pattern}")}
