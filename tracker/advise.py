"""Riser suggestions for problem patterns, with their yield and cost.

For each problem pattern of the weekly review (or the pattern asked for):

- a zone whose shrinkage reject rate under the current riser revision is
  above the target (and at least ``MIN_REJECTS`` shrinkage rejects, so that a
  lone reject is not acted on) gets candidate actions for the riser feeding
  it: enlarge (bare, in the shop's diameter steps), fit a catalogue sleeve
  (``sleeve``; ``enlarge_and_sleeve`` where the sleeve is wider than the
  riser is now), or enlarge the neck. Each candidate is judged by the rules
  and by the reject model; the cheapest that meets every rule and the target
  rate is chosen, the others are kept as alternatives;
- a riser that already passes every rule with margin while shrinkage
  persists gets ``no_riser_change`` pointing at feeding distance, neck or
  pouring practice;
- a pattern whose rejects are not shrinkage gets ``no_riser_change`` naming
  the defect that dominates.

Yield here is casting weight over casting plus riser weight per casting; the
gating system is not in the log and is left out. Extra riser metal is
charged at the pattern's full metal cost per kg (remelting returns reduce
that in practice). Every figure is a screening estimate.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pandas as pd

from tracker import geometry, limits, rules
from tracker.assess import assess_frame, revision_in_effect
from tracker.cautions import SAFETY_CAUTION
from tracker.errors import BadInput, NotFound
from tracker.features import aggregate_for_fit, zone_lot_features
from tracker.model import ShrinkageRejectModel
from tracker.sizing import size_riser
from tracker.stats import week_start, wilson_interval
from tracker.store import Store

ACTIONS = ("enlarge", "sleeve", "enlarge_and_sleeve", "neck", "no_riser_change")
MIN_REJECTS = 3
DEFAULT_STEP_MM = 10.0
NECK_STEP_MM = 5.0
# "With margin": the riser clears each rule by this much (common practice: a
# few per cent above the rule before blaming something else).
COMFORT = {"modulus_ratio": 1.05, "caine_margin": 0.05, "feed_margin": 0.10}
MAX_GROWTH = 2.0  # never suggest more than twice the present diameter

# Where to look when the rejects are not a riser matter (common practice).
DEFECT_POINTERS = {
    "gas": "gas porosity: look at mould and core venting and moisture, melt hydrogen and deoxidation, "
           "and pouring temperature",
    "sand": "sand inclusions: look at mould and core strength, erosion at the gating, and cleanliness "
            "of the mould cavity",
    "slag": "slag inclusions: look at skimming, ladle practice, filters and the pouring basin",
    "misrun": "misruns: look at pouring temperature and speed, and the gating for thin sections",
    "cold_shut": "cold shuts: look at pouring temperature and speed, and where metal streams meet",
    "hot_tear": "hot tears: look at mould and core restraint, fillet radii and sand collapsibility",
    "crack": "cracks: look at restraint, shake-out timing and heat treatment",
    "dimensional": "dimensional rejects: look at the pattern, core setting and mould movement",
    "other": "other defects: read the inspection notes",
}


# --- model --------------------------------------------------------------------

def fit_model(store: Store, *, alpha: float = 10.0, save: bool = True) -> ShrinkageRejectModel | None:
    """Fit the shrinkage reject model on the log's whole history (and store it).

    None when the log has no lot under a known riser design.
    """
    feats = zone_lot_features(store)
    if feats.empty or feats["castings"].sum() == 0:
        return None
    model = ShrinkageRejectModel(alpha=alpha).fit(aggregate_for_fit(feats))  # sets data_until_
    if save:
        store.save_model(model.to_bytes(), rows=int(model.n_rows_), castings=int(model.n_castings_),
                         data_until=model.data_until_)
    return model


def get_model(store: Store, refit: bool = False) -> ShrinkageRejectModel | None:
    """The stored model if it was fitted on the log as it is now, else a new fit."""
    from tracker.errors import IncompatibleModel

    if not refit:
        saved = store.latest_model()
        _, last = store.pour_span()
        if saved is not None and saved["data_until"] == last:
            try:
                return ShrinkageRejectModel.from_bytes(saved["blob"])
            except IncompatibleModel:
                pass  # fitted by another version: refit below
    return fit_model(store)


# --- window -------------------------------------------------------------------

def review_window(store: Store, week: str | None, weeks: int) -> tuple[str, dt.date, dt.date]:
    """(ISO week, first day, last day) of a window of ``weeks`` ending with ``week``."""
    from tracker.review import default_week

    weeks = limits.check_weeks(weeks)
    if week is None:
        week = default_week(store)
    monday = limits.check_review_week(week, week_start(week))
    return week, monday - dt.timedelta(weeks=int(weeks) - 1), monday + dt.timedelta(days=6)


# --- candidates -----------------------------------------------------------------

def _candidate_row(base: pd.Series, *, diameter_mm=None, height_mm=None, sleeve: dict | None | str = "keep",
                   neck_diameter_mm="keep") -> dict:
    row = base.to_dict()
    if sleeve != "keep":
        if sleeve is None:
            row.update(sleeve=None, sleeve_kind=None, sleeve_factor=np.nan, sleeve_efficiency=np.nan,
                       sleeve_unit_cost=np.nan)
        else:
            row.update(sleeve=sleeve["sleeve"], sleeve_kind=sleeve["kind"],
                       sleeve_factor=sleeve["modulus_factor"], sleeve_efficiency=sleeve["feeding_efficiency"],
                       sleeve_unit_cost=sleeve["unit_cost"], diameter_mm=sleeve["inner_diameter_mm"],
                       height_mm=sleeve["height_mm"])
    if diameter_mm is not None:
        row["diameter_mm"] = float(diameter_mm)
    if height_mm is not None:
        row["height_mm"] = float(height_mm)
    if neck_diameter_mm != "keep":
        row["neck_diameter_mm"] = neck_diameter_mm
    return row


def _judge(rows: list[dict], model, pour_temp_dev_c: float = 0.0) -> pd.DataFrame:
    frame = pd.DataFrame(rows)
    a = assess_frame(frame)
    a["thickness_mm"] = frame["thickness_mm"].astype(float).to_numpy()
    a["pour_temp_dev_c"] = pour_temp_dev_c
    a["rules_ok"] = a["modulus_ok"] & a["feed_ok"] & (a["caine_ok"].fillna(1.0) == 1.0)
    a["predicted_rate"] = model.predict_rate(a) if model is not None else np.nan
    a["sleeve_unit_cost"] = frame["sleeve_unit_cost"].astype(float).fillna(0.0).to_numpy()
    return a


def _comfortable(r) -> bool:
    return (r["modulus_ratio"] >= rules.DEFAULT_MODULUS_FACTOR * COMFORT["modulus_ratio"]
            and (pd.isna(r["caine_margin"]) or r["caine_margin"] >= COMFORT["caine_margin"])
            and r["feed_margin"] >= COMFORT["feed_margin"])


def _round_up(x: float, step: float) -> float:
    return math.ceil(x / step - 1e-9) * step


def _has_neck(base) -> bool:
    n = base.get("neck_diameter_mm")
    return base["placement"] == "side" and n is not None and n == n and n > 0


def _neck_for(base, diameter_mm: float, section_modulus_cm: float):
    """The neck a side riser of ``diameter_mm`` needs: the present one, or
    widened to M_neck = 1.1 · M_section (d = 4.4 · M_section, in 5 mm steps)
    while it stays narrower than the riser."""
    if not _has_neck(base):
        return "keep"
    need = _round_up(4.0 * rules.NECK_FACTOR * section_modulus_cm * 10.0, NECK_STEP_MM)
    now = float(base["neck_diameter_mm"])
    if now >= need:
        return "keep"
    return min(need, diameter_mm - NECK_STEP_MM)


def _candidates(base: pd.Series, sleeves: pd.DataFrame, model, target: float, step_mm: float) -> list[dict]:
    """Candidate rows (dicts for assess_frame) with their action names.

    A side riser's neck is widened with the riser where the present neck
    would freeze before the section."""
    d0, h0 = float(base["diameter_mm"]), float(base["height_mm"])
    hd = min(max(h0 / d0, 0.5), 3.0)
    share = max(float(base.get("risers_on_zone") or 1), 1.0)
    vc, ac = float(base["volume_cm3"]) / share, float(base["cooling_area_cm2"]) / share
    mc = vc / ac
    out: list[dict] = []
    sleeved = isinstance(base.get("sleeve"), str) and base.get("sleeve")
    if not sleeved:
        need = size_riser(vc, ac, base["alloy"], base["placement"], hd, 1.0,
                          efficiency=float(base["bare_efficiency"]), shrinkage=float(base["shrinkage"]))
        d = max(_round_up(need.diameter_mm, step_mm), _round_up(d0 + step_mm * 0.5, step_mm))
        cap = max(d, MAX_GROWTH * d0)
        while d <= cap + 1e-9:
            row = _candidate_row(base, diameter_mm=d, height_mm=round(hd * d, 1),
                                 neck_diameter_mm=_neck_for(base, d, mc))
            row["_action"] = "enlarge"
            out.append(row)
            if model is None:
                break
            pred = _judge([row], model)["predicted_rate"].iat[0]
            if pred <= target:
                break
            d += step_mm
    for s in sleeves.to_dict("records"):
        if base["placement"] == "side" and base.get("neck_diameter_mm") == base.get("neck_diameter_mm") \
                and base.get("neck_diameter_mm") and s["inner_diameter_mm"] <= base["neck_diameter_mm"]:
            continue  # the neck would be as wide as the sleeve
        if sleeved and s["sleeve"] == base["sleeve"]:
            continue
        row = _candidate_row(base, sleeve=s, neck_diameter_mm=_neck_for(base, s["inner_diameter_mm"], mc))
        row["_action"] = "enlarge_and_sleeve" if s["inner_diameter_mm"] > d0 + 0.5 else "sleeve"
        out.append(row)
    return out


def _neck_candidate(base: pd.Series, judged: pd.Series) -> dict | None:
    if not _has_neck(base):
        return None
    mc = judged["section_modulus_cm"]
    d = _round_up(4.0 * rules.NECK_FACTOR * mc * 10.0, NECK_STEP_MM)  # M_neck = d/4 >= 1.1 M_c
    if d / 40.0 >= judged["riser_modulus_cm"] or d >= float(base["diameter_mm"]):
        return None
    row = _candidate_row(base, neck_diameter_mm=d)
    row["_action"] = "neck"
    return row


# --- suggestions ----------------------------------------------------------------

def _window_frames(store: Store, patterns: list[str], start: str, end: str) -> dict:
    """Lots, rejects by lot and zone features of ``patterns`` in the window, fetched
    once for all of them (per pattern, the queries and the riser assessment would
    be repeated for every problem pattern)."""
    lots = store.lots_frame(start, end, patterns)
    rej = store.rejects_by_lot(start, end, patterns)
    return {"lots": lots, "rejects": rej.merge(lots[["lot", "pattern"]], on="lot", how="left"),
            "features": zone_lot_features(store, start, end, patterns)}


def _pattern_window_stats(store: Store, pattern: str, start: str, end: str, current_rev: str,
                          window: dict | None = None):
    if window is None:
        window = _window_frames(store, [pattern], start, end)
    lots = window["lots"][window["lots"]["pattern"] == pattern]
    rej = window["rejects"][window["rejects"]["pattern"] == pattern]
    rej = rej[rej["result"] == "reject"]
    by_defect = rej.groupby("defect")["quantity"].sum().sort_values(ascending=False)
    feats = window["features"]
    feats = feats[(feats["pattern"] == pattern) & (feats["revision"] == current_rev)]
    zones = feats.groupby("zone").agg(castings=("castings", "sum"),
                                      shrinkage_rejects=("shrinkage_rejects", "sum"))
    return lots, by_defect, zones


def suggest(store: Store, pattern: str | None = None, target: float = limits.TARGET_DEFAULT, week: str | None = None,
            weeks: int = limits.WEEKS_DEFAULT, step_mm: float = DEFAULT_STEP_MM, model=None, refit: bool = False,
            riser_metal_charge: float = 1.0) -> list[dict]:
    """Suggestions for each problem pattern (or for ``pattern`` alone).

    target: the target reject rate (``tracker.limits``), fraction (0.02 = 2 %): the
    review flags patterns by it, and a zone's shrinkage rate is brought down to it.
    step_mm: the shop's standard riser diameter step, mm.
    riser_metal_charge: share of the metal cost per kg charged for extra
    riser metal (1.0: full cost; a shop that remelts its returns pays only
    melting and losses, so it may set less).
    Returns one dict per problem zone (or per pattern for no_riser_change).
    """
    target = limits.check_target(target)
    if not step_mm > 0:
        raise BadInput("step_mm", step_mm, "the diameter step must be above 0 mm")
    if not 0 <= riser_metal_charge <= 1:
        raise BadInput("riser_metal_charge", riser_metal_charge,
                       "must be a fraction from 0 to 1 of the metal cost (1 = full cost)")
    week, first, last = review_window(store, week, weeks)
    if pattern is not None:
        store.pattern(pattern)
        patterns = [pattern]
    else:
        from tracker.review import weekly_review

        review = weekly_review(store, week=week, weeks=weeks, target=target)
        patterns = [p["pattern"] for p in review["patterns"] if p.get("problem")]
    if not patterns:
        return []
    if model is None:
        model = get_model(store, refit=refit)
    sleeves = store.table("sleeves")
    out: list[dict] = []
    revisions = store.revisions_frame()
    window = _window_frames(store, patterns, first.isoformat(), last.isoformat())
    for pat in patterns:
        out.extend(_suggest_pattern(store, pat, target, first.isoformat(), last.isoformat(), weeks,
                                    step_mm, model, sleeves, revisions, window, riser_metal_charge))
    return out


def _suggest_pattern(store, pat, target, start, end, weeks, step_mm, model, sleeves, revisions,
                     window=None, riser_metal_charge: float = 1.0) -> list[dict]:
    info = store.pattern(pat)
    current = revision_in_effect(revisions[revisions["pattern"] == pat], end)
    base_out = {"pattern": pat, "alloy": info["alloy"], "caution": SAFETY_CAUTION}
    if current.empty:
        return [{**base_out, **_empty_fields(), "action": "no_riser_change",
                 "reason": f"no riser revision of {pat} is in effect on {end}; import its risers first"}]
    rev = current["revision"].iat[0]
    risers = store.risers_frame(pattern=pat, revision=rev)
    lots, by_defect, zones = _pattern_window_stats(store, pat, start, end, rev, window)
    poured = int(lots["castings"].sum())
    per_year = poured * 52.0 / _weeks_covered(store, start, end, weeks)
    cost_per_scrap = info["casting_weight_kg"] * info["metal_cost_per_kg"] + \
        (info["processing_cost_per_casting"] or 0.0)
    judged_now = _judge(risers.to_dict("records"), model)
    riser_w = judged_now["riser_volume_cm3"] * risers["density_kg_dm3"].to_numpy() / 1000.0
    cw = float(info["casting_weight_kg"])
    total_riser_w = float(riser_w.sum())
    yield_before = cw / (cw + total_riser_w)
    total_rej = int(by_defect.sum())
    shrink_rej = int(by_defect.get("shrinkage", 0))
    results = []
    problem_zones = []
    for zone, z in zones.iterrows():
        rate = z["shrinkage_rejects"] / z["castings"] if z["castings"] else 0.0
        if rate > target and z["shrinkage_rejects"] >= MIN_REJECTS:
            problem_zones.append((zone, rate, z))
    if not problem_zones:
        dominant = by_defect.index[0] if total_rej else None
        if dominant is None:
            reason = f"no rejects in the window ({start} to {end}); nothing to change"
        elif poured and total_rej / poured <= target:
            reason = (f"no riser change: the pattern's rejects ({total_rej} of {poured} castings, "
                      f"{total_rej / poured:.1%}) are within the target {target:.1%}")
        elif dominant != "shrinkage":
            reason = (f"no riser change: {by_defect.iat[0]} of {total_rej} rejects are {dominant}, "
                      f"not shrinkage; {DEFECT_POINTERS.get(dominant, '')}")
        else:
            mix = ", ".join(f"{d} {int(q)}" for d, q in by_defect.items())
            zoned = ", ".join(f"{zn} {r['shrinkage_rejects'] / r['castings']:.1%}"
                              for zn, r in zones.iterrows() if r["castings"])
            reason = (f"no riser change: no zone's shrinkage rate is above the target {target:.1%} "
                      f"(by zone: {zoned or 'no shrinkage reject logged with a zone'}); the rejects are "
                      f"mixed ({mix}). Log the zone on each shrinkage reject so it can be traced to a riser")
        return [{**base_out, **_empty_fields(), "revision": rev,
                 "action": "no_riser_change", "reject_rate": total_rej / poured if poured else None,
                 "dominant_defect": dominant, "yield_before": yield_before, "yield_after": yield_before,
                 "castings_poured": poured, "reason": reason}]
    for zone, rate, z in problem_zones:
        zr = risers[risers["zone"] == zone]
        jr = judged_now[judged_now["zone"] == zone]
        lo, hi = wilson_interval(int(z["shrinkage_rejects"]), int(z["castings"]))
        common = {**base_out, "zone": zone, "revision": rev, "castings_poured": poured,
                  "zone_castings": int(z["castings"]), "shrinkage_rejects": int(z["shrinkage_rejects"]),
                  "reject_rate": rate, "reject_rate_low": lo, "reject_rate_high": hi,
                  "yield_before": yield_before, "dominant_defect": by_defect.index[0]}
        # the weakest riser of the zone is the one to change
        k = int(np.argmin(jr["modulus_ratio"].to_numpy()))
        base = zr.iloc[k]
        now = jr.iloc[k]
        w_old = float(riser_w[zr.index[k]])
        if now["rules_ok"] and _comfortable(now):
            hints = []
            if now["feeding_distance_ok"] == 0.0:
                hints.append(f"the zone's feeding length {now['feeding_length_mm']:.0f} mm is beyond the "
                             f"riser's feeding distance {now['feeding_distance_mm']:.0f} mm: add a riser "
                             "or a chill to shorten it")
            elif pd.isna(now["feeding_distance_ok"]):
                hints.append("feeding distance was not checked (give the zone's thickness and length)")
            if now["neck_ok"] == 0.0:
                hints.append("the neck freezes before the section: widen it")
            hints.append("check pouring temperature and speed, and the riser contact (neck) on the pattern")
            results.append({**_empty_fields(), **common, "riser": base["riser"],
                            "action": "no_riser_change",
                            "current_diameter_mm": float(base["diameter_mm"]),
                            "current_sleeve": base["sleeve"] if isinstance(base["sleeve"], str) else None,
                            "yield_after": yield_before,
                            "reason": (f"riser {base['riser']} already passes every rule with margin "
                                       f"(modulus ratio {now['modulus_ratio']:.2f}, Caine margin "
                                       + ("n/a" if pd.isna(now['caine_margin']) else f"{now['caine_margin']:.2f}")
                                       + f", feed margin {now['feed_margin']:.2f}) yet shrinkage persists at "
                                       f"{rate:.1%}; enlarging it blindly is unlikely to help: "
                                       + "; ".join(hints))})
            continue
        cands = _candidates(base, sleeves, model, 0.0 if model is None else target, step_mm)
        neck = _neck_candidate(base, now)
        if neck is not None and now["neck_ok"] == 0.0:
            cands.append(neck)
        if not cands:
            results.append({**_empty_fields(), **common, "riser": base["riser"],
                            "action": "no_riser_change", "yield_after": yield_before,
                            "reason": "no candidate riser could be formed; size it by hand"})
            continue
        judged = _judge(cands, model)
        judged["action"] = [c["_action"] for c in cands]
        judged["weight_kg"] = judged["riser_volume_cm3"] * float(base["density_kg_dm3"]) / 1000.0
        judged["added_kg_per_casting"] = judged["weight_kg"] - w_old
        old_sleeve_cost = float(base["sleeve_unit_cost"]) if base["sleeve_unit_cost"] == base["sleeve_unit_cost"] \
            and base["sleeve_unit_cost"] is not None else 0.0
        judged["extra_cost_per_year"] = per_year * (
            judged["added_kg_per_casting"] * info["metal_cost_per_kg"] * riser_metal_charge
            + judged["sleeve_unit_cost"] - old_sleeve_cost)
        pred = judged["predicted_rate"].fillna(rate)
        judged["scrap_saved_per_year"] = per_year * np.maximum(rate - pred, 0.0) * cost_per_scrap
        judged["yearly_balance"] = judged["scrap_saved_per_year"] - judged["extra_cost_per_year"]
        judged["meets_target"] = judged["predicted_rate"] <= target
        judged["full_ok"] = judged["rules_ok"] & ((judged["neck_ok"].isna()) | (judged["neck_ok"] == 1.0))
        ok = judged[judged["full_ok"] & judged["meets_target"]]
        note = ""
        if ok.empty:
            ok = judged[judged["full_ok"]]
            note = (" No candidate reaches the target rate by the model; this one comes closest."
                    if model is not None else " (No reject model: the log has no history to fit it.)")
            if ok.empty:
                ok = judged
                note = " No candidate meets every rule; size this riser by hand."
            choice = ok.sort_values(["predicted_rate", "extra_cost_per_year"]).iloc[0] if model is not None \
                else ok.sort_values("extra_cost_per_year").iloc[0]
        else:
            choice = ok.sort_values(["extra_cost_per_year", "predicted_rate"]).iloc[0]
        new_total = total_riser_w - w_old + float(choice["weight_kg"])
        action = choice["action"]
        what = {"enlarge": f"enlarge riser {base['riser']} from {base['diameter_mm']:.0f} to "
                           f"{choice['diameter_mm']:.0f} mm (height {choice['height_mm']:.0f} mm)",
                "sleeve": f"fit sleeve {choice['sleeve']} to riser {base['riser']}",
                "enlarge_and_sleeve": f"change riser {base['riser']} to sleeve {choice['sleeve']} "
                                      f"({choice['diameter_mm']:.0f} mm)",
                "neck": f"widen the neck of riser {base['riser']}"}[action]
        fails = now["failed_rules"] or "none"
        reason = (f"{what}: shrinkage in zone {zone} at {rate:.1%} ({int(z['shrinkage_rejects'])} of "
                  f"{int(z['castings'])} castings); the present riser fails: {fails}. The new one passes "
                  f"modulus (ratio {choice['modulus_ratio']:.2f}), "
                  + ("Caine (margin n/a)" if pd.isna(choice['caine_margin'])
                     else f"Caine (margin {choice['caine_margin']:.2f})")
                  + f" and feed volume (margin {choice['feed_margin']:.2f})."
                  + (f" Widen the neck to {cands[choice.name]['neck_diameter_mm']:.0f} mm with it."
                     if action != "neck" and _has_neck(base)
                     and cands[choice.name].get("neck_diameter_mm") != base["neck_diameter_mm"] else "")
                  + (f" Feeding distance: the zone's feeding length {choice['feeding_length_mm']:.0f} mm is "
                     f"beyond {choice['feeding_distance_mm']:.0f} mm (4.5 T); no riser size fixes that: add a "
                     "riser or a chill." if choice["feeding_distance_ok"] == 0.0 else "")
                  + _siblings_note(jr, k)
                  + note)
        alts = judged.drop(index=choice.name)
        results.append({
            **common, "riser": base["riser"], "action": action,
            "current_diameter_mm": float(base["diameter_mm"]),
            "current_sleeve": base["sleeve"] if isinstance(base["sleeve"], str) else None,
            "suggested_diameter_mm": float(choice["diameter_mm"]),
            "suggested_height_mm": float(choice["height_mm"]),
            "suggested_sleeve": choice["sleeve"] if isinstance(choice["sleeve"], str) else None,
            "suggested_neck_diameter_mm": _nan_none(cands[choice.name].get("neck_diameter_mm")),
            "modulus_ratio_before": float(now["modulus_ratio"]), "modulus_ratio_after": float(choice["modulus_ratio"]),
            "caine_margin_before": _nan_none(now["caine_margin"]), "caine_margin_after": _nan_none(choice["caine_margin"]),
            "feed_margin_before": float(now["feed_margin"]), "feed_margin_after": float(choice["feed_margin"]),
            "passes_after": bool(choice["full_ok"]),
            "predicted_rate_now": _nan_none(now["predicted_rate"]),
            "predicted_rate_after": _nan_none(choice["predicted_rate"]),
            "added_metal_kg_per_mold": float(choice["added_kg_per_casting"]) * int(info["castings_per_mold"]),
            "yield_after": cw / (cw + new_total),
            "castings_per_year": per_year,
            "scrap_saved_per_year": float(choice["scrap_saved_per_year"]),
            "extra_cost_per_year": float(choice["extra_cost_per_year"]),
            "yearly_balance": float(choice["yearly_balance"]),
            "reason": reason,
            "alternatives": [
                {"action": a["action"], "diameter_mm": float(a["diameter_mm"]), "sleeve":
                 a["sleeve"] if isinstance(a["sleeve"], str) else None, "passes": bool(a["full_ok"]),
                 "predicted_rate": _nan_none(a["predicted_rate"]),
                 "added_metal_kg_per_mold": float(a["added_kg_per_casting"]) * int(info["castings_per_mold"]),
                 "yearly_balance": float(a["yearly_balance"])}
                for _, a in alts.sort_values("extra_cost_per_year").head(8).iterrows()],
        })
    return results


def _siblings_note(judged_zone: pd.DataFrame, k: int) -> str:
    """The zone's other risers that fail a rule too."""
    others = [r for i, (_, r) in enumerate(judged_zone.iterrows()) if i != k and not r["passes"]]
    if not others:
        return ""
    names = ", ".join(r["riser"] for r in others)
    return f" Riser(s) {names} on the same zone fail too: give them the same change."


def _weeks_covered(store: Store, start: str, end: str, weeks: int) -> float:
    """Weeks of the window the log covers (a log younger than the window
    would otherwise understate the yearly volume)."""
    first, _ = store.pour_span()
    if first is None or first <= start:
        return float(weeks)
    days = (dt.date.fromisoformat(end) - dt.date.fromisoformat(first)).days + 1
    return min(float(weeks), max(days / 7.0, 1.0))


def _nan_none(v):
    if v is None:
        return None
    try:
        f = float(v)
    except (TypeError, ValueError):
        return v
    return None if not math.isfinite(f) else f


def _empty_fields() -> dict:
    return {"zone": None, "riser": None, "current_diameter_mm": None, "suggested_diameter_mm": None,
            "suggested_sleeve": None, "reject_rate": None, "predicted_rate_after": None,
            "added_metal_kg_per_mold": 0.0, "yield_before": None, "yield_after": None,
            "yearly_balance": 0.0}


def what_if(store: Store, pattern: str, riser: str, diameter_mm: float | None = None,
            height_mm: float | None = None, sleeve: str | None = "keep",
            neck_diameter_mm: float | None | str = "keep", revision: str | None = None,
            model=None) -> dict:
    """Margins, predicted shrinkage rate and yield of a changed riser.

    sleeve: a catalogue code, None (or "none") for a bare riser, "keep" to
    keep the present one. With a sleeve the diameter and height are the
    sleeve's. Without a new height the present H/D is kept.
    """
    revs = store.revisions_frame(pattern)
    if revs.empty:
        store.pattern(pattern)
        raise NotFound("riser revision", pattern, "import the pattern's risers first")
    rev = revision or revision_in_effect(revs, "9999-12-31")["revision"].iat[0]
    risers = store.risers_frame(pattern=pattern, revision=rev)
    if riser not in set(risers["riser"]):
        raise NotFound("riser", riser, f"{pattern} revision {rev} has " + ", ".join(risers["riser"]))
    base = risers[risers["riser"] == riser].iloc[0]
    s = "keep"
    if sleeve is None or (isinstance(sleeve, str) and sleeve.lower() in ("", "none")):
        s = None
    elif sleeve != "keep":
        cat = store.table("sleeves")
        hit = cat[cat["sleeve"] == sleeve]
        if hit.empty:
            raise NotFound("sleeve", sleeve, "known sleeves: " + ", ".join(cat["sleeve"]))
        s = hit.iloc[0].to_dict()
    if diameter_mm is not None and not diameter_mm > 0:
        raise BadInput("diameter_mm", diameter_mm, "must be a number above 0 mm")
    if s is not None and s != "keep" and diameter_mm is not None:
        raise BadInput("diameter_mm", diameter_mm, "a sleeved riser takes the sleeve's diameter; give one or the other")
    hd = float(base["height_mm"]) / float(base["diameter_mm"])
    new_h = height_mm if height_mm is not None else (hd * diameter_mm if diameter_mm is not None else None)
    row = _candidate_row(base, diameter_mm=diameter_mm, height_mm=new_h, sleeve=s,
                         neck_diameter_mm=neck_diameter_mm)
    if s is None:
        row.update(diameter_mm=float(diameter_mm or base["diameter_mm"]), height_mm=float(new_h or base["height_mm"]))
    if model is None:
        model = get_model(store)
    both = _judge([base.to_dict(), row], model)
    now, new = both.iloc[0], both.iloc[1]
    info = store.pattern(pattern)
    all_now = _judge(risers.to_dict("records"), model)
    dens = float(base["density_kg_dm3"])
    total_w = float((all_now["riser_volume_cm3"] * dens / 1000.0).sum())
    w_old, w_new = now["riser_volume_cm3"] * dens / 1000.0, new["riser_volume_cm3"] * dens / 1000.0
    cw = float(info["casting_weight_kg"])
    return {
        "pattern": pattern, "revision": rev, "riser": riser, "zone": base["zone"],
        "diameter_mm": float(new["diameter_mm"]), "height_mm": float(new["height_mm"]),
        "sleeve": new["sleeve"] if isinstance(new["sleeve"], str) else None,
        "modulus_ratio": float(new["modulus_ratio"]), "caine_margin": _nan_none(new["caine_margin"]),
        "feed_margin": float(new["feed_margin"]), "freezing_ratio": float(new["freezing_ratio"]),
        "volume_ratio": float(new["volume_ratio"]), "neck_ok": _nan_none(new["neck_ok"]),
        "passes": bool(new["passes"]), "failed_rules": new["failed_rules"],
        "predicted_rate": _nan_none(new["predicted_rate"]),
        "predicted_rate_now": _nan_none(now["predicted_rate"]),
        "modulus_ratio_now": float(now["modulus_ratio"]), "caine_margin_now": _nan_none(now["caine_margin"]),
        "feed_margin_now": float(now["feed_margin"]),
        "added_metal_kg_per_mold": float(w_new - w_old) * int(info["castings_per_mold"]),
        "yield_before": cw / (cw + total_w), "yield_after": float(cw / (cw + total_w - w_old + w_new)),
        "caution": SAFETY_CAUTION,
    }
