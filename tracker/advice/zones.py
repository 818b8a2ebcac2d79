"""What a suggestion acts on: the review window, the castings and shrinkage
rejects per zone in it, the riser designs in effect judged by the rules, and
the problem zones (above the target rate, with the riser to change).

A zone is a problem zone where its shrinkage reject rate under the current
riser revision is above the target and it has at least ``MIN_REJECTS``
shrinkage rejects (a lone reject is not acted on). Its riser is
"comfortable" where it already passes every rule with margin (``COMFORT``):
then the suggestion points elsewhere instead of enlarging it.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd

from tracker.advice.features import zone_lot_features, zone_shrinkage_rates
from tracker.design import rules
from tracker.design.assess import assess_frame, revision_in_effect
from tracker.log.store import Store
from tracker.review import rates

MIN_REJECTS = 3
# "With margin": the riser clears each rule by this much (common practice: a
# few per cent above the rule before blaming something else).
COMFORT = {"modulus_ratio": 1.05, "caine_margin": 0.05, "feed_margin": 0.10}


def review_window(store: Store, week: str | None, weeks: int) -> tuple[str, dt.date, dt.date]:
    """(ISO week, first day, last day) of a window of ``weeks`` ending with ``week``
    (:func:`tracker.review.rates.window`)."""
    win = rates.window(store, week, weeks)
    return win["week"], dt.date.fromisoformat(win["start"]), dt.date.fromisoformat(win["end"])


def _weeks_covered(store: Store, start: str, end: str, weeks: int) -> float:
    """Weeks of the window the log covers (a log younger than the window
    would otherwise understate the yearly volume)."""
    first, _ = store.pour_span()
    if first is None or first <= start:
        return float(weeks)
    days = (dt.date.fromisoformat(end) - dt.date.fromisoformat(first)).days + 1
    return min(float(weeks), max(days / 7.0, 1.0))


def window_statistics(store: Store, patterns: list[str], start: str, end: str, weeks: int,
                       risers: pd.DataFrame) -> dict:
    """What the window holds for ``patterns``, fetched once for all of them
    (``risers``: their ``risers_frame``, or every pattern's).

    ``poured``: castings per pattern; ``defects``: rejects per pattern and
    defect, most first; ``zones``: castings and shrinkage rejects per
    pattern, revision and zone; ``weeks_covered``: the weeks the log covers.
    """
    lots = store.lots_frame(start, end, patterns)
    fetched = store.rejects_by_lot(start, end, patterns)
    rej = fetched[fetched["result"] == "reject"].merge(lots[["lot", "pattern"]], on="lot")
    defects = (rej.groupby(["pattern", "defect"])["quantity"].sum().reset_index()
               .sort_values(["pattern", "quantity", "defect"], ascending=[True, False, True]))
    feats = zone_lot_features(store, start, end, patterns, lots=lots, rejects=fetched, risers=risers)
    zones = zone_shrinkage_rates(store, features=feats)
    return {"poured": lots.groupby("pattern")["castings"].sum(), "defects": defects, "zones": zones,
            "weeks_covered": _weeks_covered(store, start, end, weeks)}


def riser_weight_kg(riser_volume_cm3, density_kg_dm3):
    """Weight of a riser, kg, from its volume (cm³) and the alloy's density (kg/dm³)."""
    return np.asarray(riser_volume_cm3, dtype=float) * np.asarray(density_kg_dm3, dtype=float) / 1000.0


def sleeve_or_none(v):
    """A sleeve code as stored, or None for a bare riser (empty, None or NaN)."""
    return v if isinstance(v, str) and v else None


def judge(risers: pd.DataFrame) -> pd.DataFrame:
    """Rule margins of riser rows (``risers_frame`` columns), with the
    model's other inputs, the riser weight and the sleeve cost."""
    a = assess_frame(risers)
    a.index = risers.index
    a["thickness_mm"] = risers["thickness_mm"].astype(float).to_numpy()
    a["pour_temp_dev_c"] = 0.0  # the pattern's usual (median) pouring temperature, before and after
    a["rules_ok"] = (a["modulus_ok"] & a["feed_ok"] & (a["caine_ok"].fillna(1.0) == 1.0)
                     & ~a["oversized"].astype(bool))
    a["full_ok"] = a["rules_ok"] & (a["neck_ok"].isna() | (a["neck_ok"] == 1.0))
    a["weight_kg"] = riser_weight_kg(a["riser_volume_cm3"], risers["density_kg_dm3"])
    a["sleeve_unit_cost"] = risers["sleeve_unit_cost"].astype(float).fillna(0.0).to_numpy()
    return a


def risers_of(store: Store, patterns: list[str]) -> pd.DataFrame:
    """``risers_frame`` of one pattern, or of every pattern when several are asked (one query)."""
    return store.risers_frame(pattern=patterns[0] if len(patterns) == 1 else None)


def designs_in_effect(store: Store, patterns: list[str], on: str, revision: str | None = None,
             risers: pd.DataFrame | None = None) -> dict:
    """The risers of each pattern's revision in effect on ``on`` (or of
    ``revision``), as stored (``risers``) and judged (``judged``, same index).
    risers: ``risers_of(store, patterns)`` when the caller has it already."""
    revs = store.revisions_frame(patterns[0] if len(patterns) == 1 else None)
    revs = revs[revs["pattern"].isin(patterns)]
    current = (revs[revs["revision"] == revision] if revision is not None
               else revision_in_effect(revs, on))[["pattern", "revision"]]
    risers = risers_of(store, patterns) if risers is None else risers
    risers = risers.merge(current, on=["pattern", "revision"]).reset_index(drop=True)
    return {"current": current.set_index("pattern")["revision"], "risers": risers, "judged": judge(risers)}


def _comfortable(j: pd.DataFrame) -> pd.Series:
    """Risers that pass every rule with margin (COMFORT), the modulus ratio
    against the one the riser's own rule set asks (pressure control for
    ductile iron asks less)."""
    caine = j["caine_margin"].astype(float)
    required = j["modulus_required_ratio"].astype(float).fillna(rules.DEFAULT_MODULUS_FACTOR) \
        if "modulus_required_ratio" in j else rules.DEFAULT_MODULUS_FACTOR
    return (j["rules_ok"] & (j["neck_ok"] != 0.0)  # a failing neck never "passes every rule"
            & (j["modulus_ratio"] >= required * COMFORT["modulus_ratio"])
            & (caine.isna() | (caine >= COMFORT["caine_margin"]))
            & (j["feed_margin"] >= COMFORT["feed_margin"]))


def problem_zones(win: dict, designs: dict, target: float) -> pd.DataFrame:
    """Zones of the current revisions above the target rate, with the zone's
    weakest riser (lowest modulus ratio; the one to change) as ``primary``."""
    cur = designs["current"].rename("revision").reset_index()
    z = win["zones"].merge(cur, on=["pattern", "revision"])
    z["rate"] = z["shrinkage_rate"].fillna(0.0)  # the figure of zone_shrinkage_rates; 0 where nothing was poured
    z = z[(z["rate"] > target) & (z["shrinkage_rejects"] >= MIN_REJECTS)]
    j = designs["judged"]
    primary = j.groupby(["pattern", "zone"])["modulus_ratio"].idxmin().rename("primary").reset_index()
    z = z.merge(primary, on=["pattern", "zone"]).reset_index(drop=True)
    z.index.name = "_z"
    z["comfortable"] = _comfortable(j.loc[z["primary"]]).to_numpy()
    return z
