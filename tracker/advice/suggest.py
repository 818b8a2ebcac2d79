"""Riser suggestions for problem patterns, with their yield and money: the run.

For each problem pattern of the weekly review (or the pattern asked for):

- a zone whose shrinkage reject rate under the current riser revision is
  above the target (and at least ``MIN_REJECTS`` shrinkage rejects, so that a
  lone reject is not acted on) gets candidate actions for the riser feeding
  it: enlarge (bare, in the shop's diameter steps), fit a catalogue sleeve
  (``sleeve``; ``enlarge_and_sleeve`` where the sleeve is wider than the
  riser is now), or enlarge the neck. Every candidate of every problem zone
  is judged by the rules in one ``assess_frame`` and by the reject model in
  one prediction, on the zone's calibrated rate (``calibration``). Among the
  candidates that meet every rule, the one with the highest expected yearly
  balance is chosen where one pays off (reaching the target is shown, not a
  gate); where none pays off, the cheapest that meets every rule, said so;
  the others are kept as alternatives;
- a riser that already passes every rule with margin while shrinkage
  persists gets ``no_riser_change`` pointing at feeding distance, neck or
  pouring practice;
- a pattern whose rejects are not shrinkage gets ``no_riser_change`` naming
  the defect that dominates.

Where each part lives in ``tracker.advice``:

- ``zones``: the review window, the designs in effect (judged) and the problem zones;
- ``candidates``: the candidate risers of a zone (a new kind of candidate goes there);
- ``pricing``: weights, yield and money of a change (the money's basis is in its docstring);
- ``wording``: the reason texts;
- ``what_if``: one changed riser, priced as a suggestion is;
- ``fitting``: the reject model, stored or fitted;
- here: the choice of one candidate per zone and the records of a run.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker import limits, units
from tracker.advice.candidates import DEFAULT_STEP_MM, zone_candidates
from tracker.advice.fitting import get_model
from tracker.advice.pricing import (
    check_remelt_charge,
    money_fields,
    no_change_money,
    now_interval,
    pattern_money,
    price_candidates,
)
from tracker.advice.wording import (
    comfortable_text,
    pattern_text,
    reason_text,
)
from tracker.advice.zones import (
    designs_in_effect,
    problem_zones,
    review_window,
    risers_of,
    sleeve_or_none,
    window_statistics,
)
from tracker.cautions import SAFETY_CAUTION
from tracker.errors import BadInput
from tracker.log.store import Store
from tracker.numbers import finite
from tracker.review.stats import wilson_interval
from tracker.review.weekly import problem_patterns
from tracker.thermal import checks as thermal_checks

ACTIONS = ("enlarge", "sleeve", "enlarge_and_sleeve", "neck", "no_riser_change")
MAX_ALTERNATIVES = 8


def _choose(priced: pd.DataFrame) -> pd.DataFrame:
    """One candidate per zone (``_z``), with ``tier`` saying how it was chosen.

    Choice by money; reaching the target is shown (``meets_target``), not a gate.
    0: passes every rule (``full_ok``) and pays off (yearly balance above 0):
       the highest expected yearly balance;
    1: passes every rule, none pays off (or there is no model to price the
       scrap saved): the cheapest (lowest extra cost per year), then the
       lowest predicted rate after;
    2: none passes every rule: the cheapest, to be sized by hand.
    A change that loses money is never chosen over a passing one that makes
    money. A further filter (a thermal check) narrows ``full_ok`` before this step.
    """
    pays = priced["yearly_balance"].fillna(0.0) > 0
    p = priced.assign(tier=np.where(priced["full_ok"] & pays, 0, np.where(priced["full_ok"], 1, 2)))
    p["_k1"] = np.where(p["tier"] == 0, -p["yearly_balance"].fillna(0.0), 0.0)
    p["_k2"] = p["predicted_rate_after"].fillna(0.0)
    p = p.sort_values(["_z", "tier", "_k1", "extra_cost_per_year", "_k2"], kind="stable")
    return (p.groupby("_z").head(1).drop(columns=["_k1", "_k2"]).rename_axis("_cand").reset_index()
            .set_index("_z"))


def _empty_fields() -> dict:
    return {"zone": None, "riser": None, "current_diameter_mm": None, "current_sleeve": None,
            "suggested_diameter_mm": None, "suggested_height_mm": None, "suggested_sleeve": None,
            "suggested_neck_diameter_mm": None, "changed_risers": [], "reject_rate": None,
            "yield_before": None, "yield_after": None, "alternatives": []}


def _alternatives(zone_priced: list[dict], choice_id, m) -> list[dict]:
    """The zone's other candidates, those passing every rule first, best yearly balance first."""
    alts = sorted((a for a in zone_priced if a["_cand"] != choice_id),
                  key=lambda a: (not a["full_ok"], -np.nan_to_num(a["yearly_balance"], nan=0.0)))
    out = []
    for a in alts[:MAX_ALTERNATIVES]:
        f = money_fields(a, m)
        out.append({"action": a["action"], "diameter_mm": float(a["diameter_mm"]),
                    "sleeve": sleeve_or_none(a["sleeve"]), "passes": bool(a["full_ok"]),
                    "meets_target": bool(a["meets_target"]), "predicted_rate": f["predicted_rate_after"],
                    **{k: f[k] for k in ("added_metal_kg_per_mold", "extra_cost_per_year",
                                         "scrap_saved_per_year", "yearly_balance", "pays_off",
                                         "predicted_rate_after_low", "predicted_rate_after_high",
                                         "yearly_balance_low", "yearly_balance_high", "probability_pays_off")}})
    return out


def suggest(store: Store, pattern: str | None = None, target: float = limits.TARGET_DEFAULT,
            week: str | None = None, weeks: int = limits.WEEKS_DEFAULT, step_mm: float = DEFAULT_STEP_MM,
            model=None, refit: bool = False,
            remelt_charge: float | None = None, riser_metal_charge: float | None = None,
            thermal: bool | None = None, plant: str | None = None, system: str = units.METRIC) -> list[dict]:
    """Suggestions for each problem pattern (or for ``pattern`` alone), of one
    ``plant`` (default: every plant; the reject model is the whole log's).

    system: the unit system (tracker.units) the reasons word their lengths
    in; every number of the records stays metric (``units.convert_record``
    renames and converts them for display).

    thermal: check each chosen riser by a solidification solve and take the
    next candidate where it fails (``tracker.thermal.checks``); None: only
    where all problem zones' solves fit in a minute.
    target: the target reject rate (``tracker.limits``), fraction (0.02 = 2 %): the
    review flags patterns by it, and a zone's shrinkage rate is brought down to it.
    step_mm: the shop's standard riser diameter step, mm.
    remelt_charge: share of the metal price per kg lost on metal poured that
    does not ship (scrapped castings and extra riser metal alike; default
    DEFAULT_REMELT_CHARGE). riser_metal_charge: its old name.
    Returns one dict per problem zone (or per pattern for no_riser_change).
    The predicted rate now is the zone's calibrated rate, the rate after
    that rate shifted by the model's change for the changed design
    (RATE_BASIS); see ``pricing``'s docstring for the money.
    """
    target = limits.check_target(target)
    if not step_mm > 0:
        raise BadInput(units.column_name("step_mm", system), units.value_in("step_mm", step_mm, system),
                       f"the diameter step must be above 0 {units.symbol('step_mm', system)}")
    charge = check_remelt_charge(remelt_charge, riser_metal_charge)
    with store.plant_scope(plant):
        return _suggest(store, pattern, target, week, weeks, step_mm, model, refit, charge, thermal, system)


def _suggest(store, pattern, target, week, weeks, step_mm, model, refit, charge, thermal, system) -> list[dict]:
    """The run of :func:`suggest` on checked arguments, inside the plant scope."""
    week, first, last = review_window(store, week, weeks)
    start, end = first.isoformat(), last.isoformat()
    if pattern is not None:
        store.pattern(pattern)
        patterns = [pattern]
    else:
        patterns = problem_patterns(store, week=week, weeks=weeks, target=target)  # the review's, alone
    if not patterns:
        return []
    if model is None:
        with store.every_plant():  # the model learns from every plant's history
            model = get_model(store, refit=refit)
    pats = store.table("patterns")
    pats = pats[pats["pattern"].isin(patterns)]
    risers = risers_of(store, patterns)
    win = window_statistics(store, patterns, start, end, weeks, risers)
    designs = designs_in_effect(store, patterns, end, risers=risers)
    money = pattern_money(pats, designs, win, charge)
    zones = problem_zones(win, designs, target)
    to_change = zones[~zones["comfortable"]]
    cands = zone_candidates(to_change, designs, store.table("sleeves"), step_mm, model is not None)
    priced, rate_now = price_candidates(cands, zones, designs, money, model, target)
    priced, thermal_notes = thermal_checks.suggest_filter(store, priced, cands, len(to_change), thermal, _choose,
                                                          system=system)
    chosen = _choose(priced) if len(priced) else priced.assign(_cand=[], tier=[])
    ctx = {"win": win, "designs": designs, "money": money.to_dict("index"), "target": target, "start": start,
           "end": end, "alloy": dict(zip(pats["pattern"], pats["alloy"], strict=False)),
           "rate_now": rate_now.to_dict("index"),
           "current": designs["current"].to_dict(), "chosen": chosen.to_dict("index"),
           "defects": _groups(win["defects"], "pattern"), "zone_stats": _groups(win["zones"], ["pattern", "revision"]),
           "zones": _groups(zones, "pattern"), "priced": _records_by(priced.reset_index(), "_z"),
           "risers_by_zone": _groups(designs["judged"][["pattern", "zone", "riser", "full_ok"]], ["pattern", "zone"]),
           "thermal_notes": thermal_notes, "system": system}
    out: list[dict] = []
    for pat in patterns:
        out.extend(_pattern_records(pat, ctx))
    return out


def _groups(frame: pd.DataFrame, key) -> dict:
    """A frame split by ``key`` once (filtering per pattern would scan it each time)."""
    return {k: g for k, g in frame.groupby(key, sort=False)}


def _records_by(frame: pd.DataFrame, key: str) -> dict:
    """The rows of a frame as dicts, in lists by ``key``."""
    out: dict = {}
    for r in frame.to_dict("records"):
        out.setdefault(r[key], []).append(r)
    return out


def _pattern_records(pat: str, ctx: dict) -> list[dict]:
    """The records of one pattern: one per problem zone, or one for the pattern."""
    m = ctx["money"][pat]
    base_out = {"pattern": pat, "alloy": ctx["alloy"][pat], "caution": SAFETY_CAUTION}
    if pat not in ctx["current"]:
        return [{**base_out, **_empty_fields(), **no_change_money(m, None), "action": "no_riser_change",
                 "reason": f"no riser revision of {pat} is in effect on {ctx['end']}; import its risers first"}]
    rev = ctx["current"][pat]
    defects = ctx["defects"].get(pat, ctx["win"]["defects"].iloc[0:0])
    poured = int(ctx["win"]["poured"].get(pat, 0))
    base_out.update(revision=rev, castings_poured=poured, yield_before=float(m["yield_before"]),
                    dominant_defect=defects["defect"].iat[0] if len(defects) else None)
    zones = ctx["zones"].get(pat)
    if zones is None:
        wz = ctx["zone_stats"].get((pat, rev), ctx["win"]["zones"].iloc[0:0])  # the current revision's
        total = int(defects["quantity"].sum())
        return [{**_empty_fields(), **base_out, **no_change_money(m, None), "action": "no_riser_change",
                 "reject_rate": total / poured if poured else None,
                 "reason": pattern_text(pat, defects, wz, poured, ctx["target"],
                                         ctx["start"], ctx["end"])}]
    return [_zone_record(z_id, z, base_out, m, ctx) for z_id, z in zones.iterrows()]


def _zone_record(z_id, z, base_out: dict, m: dict, ctx: dict) -> dict:
    """The record of one problem zone: the chosen change, or why there is none."""
    base, now = ctx["designs"]["risers"].loc[z["primary"]], ctx["designs"]["judged"].loc[z["primary"]]
    lo, hi = wilson_interval(int(z["shrinkage_rejects"]), int(z["castings"]))
    zone_j = ctx["risers_by_zone"][(z["pattern"], z["zone"])]
    siblings = [r for i, r, ok in zip(zone_j.index, zone_j["riser"], zone_j["full_ok"], strict=False)
                if i != z["primary"] and not ok]
    common = {**_empty_fields(), **base_out, "zone": z["zone"], "riser": base["riser"], "rule_set": now["rule_set"],
              "zone_castings": int(z["castings"]), "shrinkage_rejects": int(z["shrinkage_rejects"]),
              "reject_rate": float(z["rate"]), "reject_rate_low": lo, "reject_rate_high": hi,
              "current_diameter_mm": float(base["diameter_mm"]), "current_sleeve": sleeve_or_none(base["sleeve"])}
    r_now = ctx["rate_now"].get(z_id)
    if z["comfortable"]:
        return {**common, **no_change_money(m, r_now), "action": "no_riser_change",
                "reason": comfortable_text(base, now, float(z["rate"]), ctx["system"])}
    if z_id not in ctx["chosen"]:
        return {**common, **no_change_money(m, r_now), "action": "no_riser_change",
                "reason": "no candidate riser could be formed; size it by hand"}
    c_id = ctx["chosen"][z_id]["_cand"]
    zone_priced = ctx["priced"][z_id]
    choice = {**next(c for c in zone_priced if c["_cand"] == c_id), "tier": ctx["chosen"][z_id]["tier"]}
    return {
        **common, **money_fields(choice, m), **now_interval(r_now), "action": choice["action"],
        "suggested_diameter_mm": float(choice["diameter_mm"]), "suggested_height_mm": float(choice["height_mm"]),
        "suggested_sleeve": sleeve_or_none(choice["sleeve"]),
        "suggested_neck_diameter_mm": finite(choice["neck_diameter_mm"]),
        "changed_risers": [base["riser"]] + (siblings if choice["action"] != "neck" else []),
        "modulus_ratio_before": float(now["modulus_ratio"]), "modulus_ratio_after": float(choice["modulus_ratio"]),
        "caine_margin_before": finite(now["caine_margin"]), "caine_margin_after": finite(choice["caine_margin"]),
        "feed_margin_before": float(now["feed_margin"]), "feed_margin_after": float(choice["feed_margin"]),
        "passes_after": bool(choice["full_ok"]), "meets_target": bool(choice["meets_target"]),
        "reason": (reason_text(z, base, now, choice, zone_priced, siblings, ctx["system"])
                   + ctx["thermal_notes"].get(z_id, "")),
        "thermal_ok": choice.get("thermal_ok"), "thermal_verdict": choice.get("thermal_verdict"),
        "last_to_freeze": choice.get("last_to_freeze"),
        "alternatives": _alternatives(zone_priced, c_id, m),
    }
