"""The Pattern file page's data: one pattern's summary, zones, risers by revision
with their rule margins, its pours and rejects per week, and the marks of its
revisions on a time axis (see :mod:`tracker.views.common` for the conventions)."""

from __future__ import annotations

import datetime as dt
from typing import cast

import numpy as np
import pandas as pd

from tracker import units
from tracker.advice import track_record as record
from tracker.design import rules
from tracker.design.alloys import ALLOYS
from tracker.design.assess import assess_frame
from tracker.log.store import Store
from tracker.review import stats
from tracker.views.common import in_system, labels


def pattern_weekly(store: Store, pattern: str, start: str | None = None,
                   end: str | None = None) -> pd.DataFrame:
    """One pattern's pours and rejects per ISO week of pour, every week in between included.

    Counted as the weekly review counts (``tracker.review.weekly``): a casting is
    *inspected* when its lot holds a current inspection record; rates are
    castings rejected / castings inspected. Columns: week, week_start (the
    Monday, a date), lots, poured, inspected, rejected, shrinkage_rejected
    (castings), reject_rate_pct and shrinkage_rate_pct (%; NaN in a week
    with nothing inspected).
    """
    store.pattern(pattern)  # NotFound with a hint for an unknown pattern
    cols = ["week", "week_start", "lots", "poured", "inspected", "rejected", "shrinkage_rejected",
            "reject_rate_pct", "shrinkage_rate_pct"]
    counts = ["lots", "poured", "inspected", "rejected", "shrinkage_rejected"]
    pours = cast(pd.DataFrame, store.pours_by_day(start, end, pattern))
    if pours.empty:
        return pd.DataFrame(columns=cols)
    pours["week"] = stats.iso_week(pours["poured_on"]).to_numpy()
    w = (pours.groupby("week")[["lots", "castings", "inspected_castings"]].sum()
         .rename(columns={"castings": "poured", "inspected_castings": "inspected"}))
    rej = cast(pd.DataFrame, store.rejects_by_day(start, end, pattern))
    rej = rej[rej["result"] == "reject"]
    if not rej.empty:
        rej = rej.assign(week=stats.iso_week(rej["poured_on"]).to_numpy(),
                         shrink=np.where(rej["defect"] == "shrinkage", rej["quantity"], 0))
        g = rej.groupby("week")
        w["rejected"] = g["quantity"].sum()
        w["shrinkage_rejected"] = g["shrink"].sum()
    first, last = stats.week_start(w.index.min()), stats.week_start(w.index.max())
    weeks = [stats.iso_week(first + dt.timedelta(weeks=i)) for i in range((last - first).days // 7 + 1)]
    w = w.reindex(weeks).rename_axis("week").reset_index()
    for c in counts:
        w[c] = pd.to_numeric(w[c], errors="coerce").fillna(0).astype(np.int64) if c in w else 0
    w["week_start"] = [stats.week_start(x) for x in w["week"]]
    seen = w["inspected"] > 0
    w["reject_rate_pct"] = (100.0 * w["rejected"] / w["inspected"]).where(seen)
    w["shrinkage_rate_pct"] = (100.0 * w["shrinkage_rejected"] / w["inspected"]).where(seen)
    return w[cols]


DESIGN_COLUMNS = {
    "revision": "revision", "effective_from": "effective from", "riser": "riser", "zone": "zone",
    "placement": "placement", "top": "top", "diameter_mm": "diameter (mm)", "height_mm": "height (mm)",
    "sleeve": "sleeve", "section_modulus_cm": "zone modulus (cm)", "riser_modulus_cm": "riser modulus (cm)",
    "modulus_ratio": "modulus ratio", "caine_margin": "Caine margin", "feed_margin": "feed margin",
    "riser_weight_kg": "riser weight (kg)", "rule_set": "rule set", "passes": "passes all rules",
    "failed_rules": "failed rules", "notes": "notes",
}


# The two halves of ``risers_by_revision``, for two narrower tables.
DESIGN_PART = ["revision", "effective from", "riser", "zone", "placement", "top", "diameter (mm)",
               "height (mm)", "sleeve", "riser weight (kg)"]


MARGIN_PART = ["revision", "riser", "zone", "passes all rules", "failed rules", "modulus ratio", "Caine margin",
               "feed margin", "rule set", "zone modulus (cm)", "riser modulus (cm)", "notes"]  # verdict first


def design_part(system: str = units.METRIC) -> list[str]:
    """DESIGN_PART's columns in ``system``."""
    return labels(DESIGN_PART, system)


def margin_part(system: str = units.METRIC) -> list[str]:
    """MARGIN_PART's columns in ``system``."""
    return labels(MARGIN_PART, system)


def pattern_summary(store: Store, pattern: str) -> dict:
    """A pattern's master data, its revisions and its pour totals (castings; rate in %
    of castings inspected, as the weekly review counts)."""
    p = store.pattern(pattern)
    w = pattern_weekly(store, pattern)
    poured, inspected, rejected = (int(w[c].sum()) if not w.empty else 0
                                   for c in ("poured", "inspected", "rejected"))
    lots = store.lots_frame(pattern=pattern)
    alloy = ALLOYS.get(str(p.get("alloy")))
    return {**p, "alloy_name": alloy.name if alloy else p.get("alloy"),
            "lots": int(len(lots)), "poured": poured, "inspected": inspected, "rejected": rejected,
            "reject_rate_pct": 100.0 * rejected / inspected if inspected else float("nan"),
            "first_pour": lots["poured_on"].min() if not lots.empty else None,
            "last_pour": lots["poured_on"].max() if not lots.empty else None,
            "revisions": store.revisions_frame(pattern).to_dict("records")}


ZONE_COLUMNS = {  # the feeding-distance geometry first: it must show at a tablet's width
    "zone": "zone", "thickness_mm": "thickness (mm)", "width_mm": "width (mm)",
    "length_mm": "feeding length (mm)", "section": "section", "modulus_cm": "modulus (cm)",
    "volume_cm3": "volume (cm³)", "cooling_area_cm2": "cooling area (cm²)", "required_xray_level": "x-ray level",
}


def pattern_zones(store: Store, pattern: str, system: str = units.METRIC) -> pd.DataFrame:
    """The zones of ``pattern`` for display: size, modulus V/A, thickness, width,
    feeding length and the section's shape for the feeding distance (bar or
    plate by width over thickness; blank where either is missing); in ``system``."""
    store.pattern(pattern)
    z = store.zones_frame(pattern)
    z["modulus_cm"] = z["volume_cm3"].astype(float) / z["cooling_area_cm2"].astype(float)
    z["section"] = rules.section_shape(z["thickness_mm"].astype(float), z["width_mm"].astype(float))
    return in_system(z[list(ZONE_COLUMNS)].rename(columns=ZONE_COLUMNS), system)


def risers_by_revision(store: Store, pattern: str, system: str = units.METRIC) -> pd.DataFrame:
    """Every riser of every revision of ``pattern`` with its rule margins, for display.

    Margins as ``tracker.design.assess.assess_frame``: modulus ratio = effective riser
    modulus / zone modulus (rule: 1.2 or more); Caine margin = freezing ratio
    above the curve (0 or more passes; blank where the alloy has no
    constants); feed margin = feed volume held above the need, as a fraction
    of the need (0 or more passes). Sizes and weights in ``system``
    (``design_part`` and ``margin_part`` name its two halves' columns).
    """
    store.pattern(pattern)
    r = store.risers_frame(pattern=pattern)
    if r.empty:
        return pd.DataFrame(columns=labels(DESIGN_COLUMNS.values(), system))
    a = assess_frame(r)
    a["effective_from"] = r["effective_from"].to_numpy()
    a["sleeve"] = a["sleeve"].fillna("none")
    a["caine_margin"] = a["caine_margin"].where(a["caine_applied"].astype(bool))
    a["failed_rules"] = a["failed_rules_text"].replace("", "none")
    a["rule_set"] = a["rule_set"].str.replace("_", " ")
    a = a.sort_values(["effective_from", "revision", "riser"], kind="stable")
    return in_system(a[list(DESIGN_COLUMNS)].rename(columns=DESIGN_COLUMNS).reset_index(drop=True), system)


def revision_marks(store: Store, pattern: str) -> pd.DataFrame:
    """Revision codes, their effective dates (as dates) and ISO weeks, for marking a time axis."""
    r = store.revisions_frame(pattern)
    r = r.assign(effective_from=pd.to_datetime(r["effective_from"]).dt.date,
                 label="revision " + r["revision"].astype(str))
    r["week"] = [stats.iso_week(d) for d in r["effective_from"]]
    return r[["revision", "effective_from", "week", "label"]].reset_index(drop=True)


def pattern_track_record(store: Store, pattern: str) -> dict:
    """The model's track record on ``pattern``'s riser changes
    (``tracker.advice.track_record.track_record``, the figures the CLI prints)."""
    return record.track_record(store, pattern)
