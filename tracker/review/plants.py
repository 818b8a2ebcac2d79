"""The plants side by side for one alloy: each plant's weekly review (same week
and window for all) summed over its patterns of the alloy."""

from __future__ import annotations

from tracker import numbers
from tracker.cautions import SAFETY_CAUTION
from tracker.design.alloys import ALLOYS
from tracker.errors import BadInput, UnknownAlloy
from tracker.log.store import Store
from tracker.review import stats
from tracker.review.weekly import default_week, rate, weekly_review

PLANT_COMPARE_KEYS = [
    "plant", "patterns", "poured", "inspected", "rejected", "reject_rate", "wilson_low", "wilson_high",
    "shrinkage_rejected", "shrinkage_rate", "scrap_cost", "week_poured", "week_inspected",
    "week_rejected", "week_reject_rate", "week_wilson_low", "week_wilson_high", "week_scrap_cost",
    "problems",
]
NO_PLANTS = ("the log names no plants: give patterns a plant column, or set "
             "`pourback init --plant CODE` before importing them")


def compare_plants(store: Store, alloy: str, week: str | None = None, weeks: int = 13,
                   target: float = 0.02, *, confidence: float = 0.95) -> dict:
    """The plants side by side for one alloy: each plant's review (same week and
    window for all) summed over its patterns of ``alloy``.

    Returns ``alloy``, ``week``, ``window`` (as in :func:`weekly_review`),
    ``target``, ``confidence``, ``rate_basis``, ``units``, ``plants`` (one dict
    per plant, keys ``PLANT_COMPARE_KEYS``: rates (fractions) with Wilson
    intervals over the window and the review week, scrap cost, problem
    patterns) and ``caution``. A plant that poured none of the alloy in the
    window has zeros and None rates. A log that names no plant raises
    ``BadInput``; an alloy not known, ``UnknownAlloy``.
    """
    if alloy not in ALLOYS:
        raise UnknownAlloy(alloy, ALLOYS)
    plants = store.plants()
    if not plants:
        raise BadInput("plant", None, NO_PLANTS)
    if week is None:
        week = default_week(store)
    rows: list[dict] = []
    head: dict = {}
    for plant in plants:
        r = weekly_review(store, week=week, weeks=weeks, target=target, confidence=confidence, plant=plant)
        head = head or r
        rows.append(_plant_row(plant, [p for p in r["patterns"] if p["alloy"] == alloy], confidence))
    return numbers.jsonable({
        "alloy": alloy, "week": head["week"], "window": head["window"], "target": head["target"],
        "confidence": confidence, "rate_basis": head["rate_basis"], "units": head["units"],
        "currency": head.get("currency"),
        "plants": rows, "caution": SAFETY_CAUTION,
    }, day_only=True)


def _plant_row(plant: str, mine: list[dict], confidence: float) -> dict:
    """One plant's row: its review's pattern rows ``mine`` summed (castings,
    currency units), rates as fractions with Wilson intervals at ``confidence``."""
    row: dict = {"plant": plant, "patterns": len(mine)}
    for k in ("poured", "inspected", "rejected", "shrinkage_rejected", "week_poured", "week_inspected",
              "week_rejected"):
        row[k] = int(sum(p[k] or 0 for p in mine))
    row["scrap_cost"] = float(sum(p["scrap_cost"] or 0.0 for p in mine))
    row["week_scrap_cost"] = float(sum(p["week_scrap_cost"] or 0.0 for p in mine))
    row["reject_rate"] = float(rate(row["rejected"], row["inspected"]))
    row["wilson_low"], row["wilson_high"] = stats.wilson_interval(row["rejected"], row["inspected"], confidence)
    row["shrinkage_rate"] = float(rate(row["shrinkage_rejected"], row["inspected"]))
    row["week_reject_rate"] = float(rate(row["week_rejected"], row["week_inspected"]))
    row["week_wilson_low"], row["week_wilson_high"] = stats.wilson_interval(
        row["week_rejected"], row["week_inspected"], confidence)
    row["problems"] = [p["pattern"] for p in mine if p["problem"]]
    return {k: row[k] for k in PLANT_COMPARE_KEYS}
