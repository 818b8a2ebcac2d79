"""The Suggestions page's data: the suggestions as a display table, a what-if's
rule margins, and the riser and sleeve pickers (see :mod:`tracker.views.common`
for the conventions)."""

from __future__ import annotations

import datetime as dt

import pandas as pd

from tracker import units
from tracker.design import rules
from tracker.design.assess import revision_in_effect
from tracker.log.settings import DEFAULT_CURRENCY
from tracker.log.store import Store
from tracker.review import stats
from tracker.review.rates import POURED, scope_text
from tracker.views.common import in_system, labels, length_text, pct_column

MONEY_UNIT = "currency units/year"
SUGGESTION_COLUMNS = {
    "pattern": "pattern", "zone": "zone", "riser": "riser", "action": "action",
    "current_diameter_mm": "now: diameter (mm)", "current_sleeve": "now: sleeve",
    "suggested_diameter_mm": "suggested: diameter (mm)", "suggested_sleeve": "suggested: sleeve",
    "reject_rate_pct": "observed now (%)", "predicted_rate_now_pct": "predicted now (%)",
    "predicted_rate_after_pct": "predicted after (%)",
    "added_metal_kg_per_mold": "added metal (kg per mold)",
    "yield_before_pct": "yield now (%)", "yield_after_pct": "yield after (%)",
    "scrap_saved_per_year": f"scrap saved ({MONEY_UNIT})", "extra_cost_per_year": f"extra cost ({MONEY_UNIT})",
    "yearly_balance": f"balance ({MONEY_UNIT})", "pays_off": "pays off",
    "probability_pays_off_pct": "chance it pays off (%)", "balance_range": f"balance, 90 % range ({MONEY_UNIT})",
    "rate_after_range": "predicted after, 90 % range (%)", "reason": "why",
}


# The two halves of ``suggestions_table``: what to change, and what it brings.
CHANGE_PART = ["pattern", "zone", "riser", "action", "now: diameter (mm)", "now: sleeve",
               "suggested: diameter (mm)", "suggested: sleeve"]


BALANCE_PART = ["pattern", "zone", "observed now (%)", "predicted now (%)", "predicted after (%)",
                f"balance ({MONEY_UNIT})", "pays off", "chance it pays off (%)", f"balance, 90 % range ({MONEY_UNIT})",
                "predicted after, 90 % range (%)", f"scrap saved ({MONEY_UNIT})", f"extra cost ({MONEY_UNIT})",
                "added metal (kg per mold)", "yield now (%)", "yield after (%)"]


def money_per_year(code: str | None) -> str:
    """The unit of a yearly money column: "EUR/year" (the log's currency code)."""
    return f"{code or DEFAULT_CURRENCY}/year"


def with_currency(columns: list[str], code: str | None) -> list[str]:
    """Column headings with the placeholder money unit replaced by the log's currency."""
    return [c.replace(MONEY_UNIT, money_per_year(code)) for c in columns]


def change_part(system: str = units.METRIC) -> list[str]:
    """CHANGE_PART's columns in ``system``."""
    return labels(CHANGE_PART, system)


def balance_part(code: str | None = None, system: str = units.METRIC) -> list[str]:
    """BALANCE_PART's columns in ``system``, money headed with the currency ``code``."""
    cols = labels(BALANCE_PART, system)
    return with_currency(cols, code) if code else cols


def observed_scope(week: str, weeks: int) -> str:
    """Which figure the suggestions' observed rate is: "shrinkage rejects, each problem zone,
    last 13 weeks (2026-W35 to 2026-W47), % of castings poured"
    (:func:`tracker.advice.features.zone_shrinkage_rates`)."""
    first = stats.iso_week(stats.week_start(week) - dt.timedelta(weeks=int(weeks) - 1))
    return scope_text("shrinkage", who="each problem zone", weeks=int(weeks), first_week=first, last_week=week,
                      basis=POURED)


def _ranges(s: pd.DataFrame, key: str, fmt, changes: pd.Series) -> pd.Series:
    """"low to high" of a figure's 90 % interval per row (None where unknown or nothing changes)."""
    lo = s[f"{key}_low"] if f"{key}_low" in s else pd.Series(None, index=s.index, dtype=object)
    hi = s[f"{key}_high"] if f"{key}_high" in s else pd.Series(None, index=s.index, dtype=object)
    return pd.Series([f"{fmt(a)} to {fmt(b)}" if c and pd.notna(a) and pd.notna(b) else None
                      for a, b, c in zip(lo, hi, changes, strict=True)], index=s.index, dtype=object)


def suggestions_table(suggestions: list[dict], currency: str | None = None,
                      system: str = units.METRIC) -> pd.DataFrame:
    """Suggestions (``tracker.advice.suggest.suggest``) as a display table, rates and yields in %,
    diameters and added metal in ``system``.

    Money columns are headed "(CODE/year)" with the log's ``currency`` code
    when it is given, else with the placeholder ``MONEY_UNIT``.

    The observed rate and the model's rates now and after stand side by
    side; a row that changes nothing shows no predicted-after rate and no
    money. Columns the suggestions lack are left out; the order is
    SUGGESTION_COLUMNS'.
    """
    if not suggestions:
        cols = labels(SUGGESTION_COLUMNS.values(), system)
        return pd.DataFrame(columns=with_currency(cols, currency) if currency else cols)
    s = pd.DataFrame(suggestions)
    changes = s["action"] != "no_riser_change"
    s["action"] = s["action"].str.replace("_", " ")
    for key in ("predicted_rate_after", "scrap_saved_per_year", "extra_cost_per_year", "yearly_balance"):
        if key in s:
            s[key] = pd.to_numeric(s[key], errors="coerce").where(changes)
    if "pays_off" in s:
        pays = s["pays_off"].fillna(False).astype(bool)
        s["pays_off"] = pd.Series([("yes" if p else "no") if c else None for c, p in zip(changes, pays, strict=True)],
                                  index=s.index, dtype=object)
    if "probability_pays_off" not in s:
        s["probability_pays_off"] = float("nan")
    for key in ("reject_rate", "predicted_rate_now", "predicted_rate_after", "yield_before", "yield_after",
                "probability_pays_off"):
        if key in s:
            s[f"{key}_pct"] = pct_column(s[key]).where(changes) if key == "probability_pays_off" else pct_column(s[key])
    s["balance_range"] = _ranges(s, "yearly_balance", lambda v: f"{v:,.0f}", changes)
    s["rate_after_range"] = _ranges(s, "predicted_rate_after", lambda v: f"{100 * v:.2f}", changes)
    has_riser = s["riser"].notna() if "riser" in s else pd.Series(False, index=s.index)
    for key in ("suggested_sleeve", "current_sleeve"):
        if key in s:  # "none" = a bare riser; blank where no riser is concerned
            fill = pd.Series(["none" if h else None for h in has_riser], index=s.index, dtype=object)
            s[key] = s[key].astype(object).where(s[key].notna(), fill)
    cols = [c for c in SUGGESTION_COLUMNS if c in s]
    out = in_system(s[cols].rename(columns=SUGGESTION_COLUMNS).reset_index(drop=True), system)
    if currency:
        out.columns = with_currency(list(out.columns), currency)
    return out


WHAT_IF_RULES = (("modulus rule", "modulus_ratio", rules.DEFAULT_MODULUS_FACTOR),
                 ("Caine's curve", "caine_margin", 0.0),
                 ("feed volume", "feed_margin", 0.0))


def what_if_margins(result: dict) -> pd.DataFrame:
    """Rule margins of a what-if (``tracker.advice.suggest.what_if``), now and changed.

    One row per rule and design ("now", "changed"): ``margin`` is how far the
    riser clears the rule (0 = just passes): modulus ratio less 1.2, Caine
    margin, feed margin. Caine's rows are left out where the alloy has no
    constants.
    """
    rows = []
    for rule, key, need in WHAT_IF_RULES:
        now, new = result.get(f"{key}_now"), result.get(key)
        if now is None and new is None:
            continue
        for design, v in (("now", now), ("changed", new)):
            rows.append({"rule": rule, "design": design,
                         "margin": float("nan") if v is None else float(v) - need})
    return pd.DataFrame(rows, columns=["rule", "design", "margin"])


def riser_options(store: Store, on: str | None = None, system: str = units.METRIC) -> pd.DataFrame:
    """Risers of each pattern's revision in effect on ``on`` (default: the newest one of each).

    Columns: pattern, revision, riser, zone, alloy, placement, diameter_mm,
    height_mm (metric), sleeve and a picker label (its diameter in ``system``).
    """
    r = store.risers_frame()
    cols = ["pattern", "revision", "riser", "zone", "alloy", "placement", "diameter_mm", "height_mm",
            "sleeve", "label"]
    if r.empty:
        return pd.DataFrame(columns=cols)
    revs = store.revisions_frame()
    current = (revision_in_effect(revs, on) if on else
               revs.sort_values(["pattern", "effective_from"]).groupby("pattern", as_index=False).tail(1))
    r = r.merge(current[["pattern", "revision"]], on=["pattern", "revision"])
    r["label"] = (r["pattern"] + " · " + r["riser"] + " on " + r["zone"] + " · "
                  + r["diameter_mm"].map(lambda d: length_text(d, system))
                  + f" {units.symbol('diameter_mm', system)}"
                  + r["sleeve"].map(lambda s: f", sleeve {s}" if isinstance(s, str) and s else ", no sleeve"))
    return r[cols].sort_values(["pattern", "riser"]).reset_index(drop=True)


def sleeve_options(store: Store, system: str = units.METRIC) -> pd.DataFrame:
    """The sleeve catalogue, smallest inner diameter first, with a picker label
    (kind, inner diameter, height in ``system``, factor); the columns stay metric."""
    s = store.table("sleeves")
    if s.empty:
        return pd.DataFrame(columns=["sleeve", "kind", "inner_diameter_mm", "label"])
    s = s.sort_values(["inner_diameter_mm", "height_mm", "kind", "sleeve"], kind="stable")
    size = lambda v: length_text(v, system)  # noqa: E731 (a one-line local helper)
    s["label"] = (s["sleeve"] + " · " + s["kind"] + " · " + s["inner_diameter_mm"].map(size)
                  + " x " + s["height_mm"].map(size) + f" {units.symbol('height_mm', system)} · factor "
                  + s["modulus_factor"].map(lambda v: f"{v:g}"))
    return s.reset_index(drop=True)
