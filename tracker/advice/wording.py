"""The words of a suggestion: why this change, why no change, how it was chosen.

Rates are written ``12.3%`` (Python's ``:.1%``), not ``numbers.pct_text``'s
``12.3 %``: the reasons have always read that way and tests compare them.
"""

from __future__ import annotations

import pandas as pd

from tracker import units
from tracker.design.assess import rule_words
from tracker.numbers import finite, money_text

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


def _neck_verb(old_mm, new_mm) -> str:
    """"narrow" where the new neck is narrower (a pressure-control neck), "widen"
    where wider, "change" where the old one is not known."""
    old, new = finite(old_mm), finite(new_mm)
    if old is None or new is None:
        return "change"
    return "narrow" if new < old else "widen"


def _mm(value, system: str) -> str:
    """A length given in mm, as the texts word it in ``system``: "130 mm", "5.12 in"."""
    return units.say("diameter_mm", float(value), system)


def change_text(action: str, riser: str, d0: float, c, neck0=None, system: str = units.METRIC) -> str:
    d_from = f"{d0:.0f}" if system != units.US else units.number("diameter_mm", d0, system)
    return {"enlarge": f"enlarge riser {riser} from {d_from} to {_mm(c['diameter_mm'], system)} "
                       f"(height {_mm(c['height_mm'], system)})",
            "sleeve": f"fit sleeve {c['sleeve']} to riser {riser}",
            "enlarge_and_sleeve": f"change riser {riser} to sleeve {c['sleeve']} ({_mm(c['diameter_mm'], system)})",
            "neck": f"{_neck_verb(neck0, c['neck_diameter_mm'])} the neck of riser {riser} "
                    f"to {_mm(c['neck_diameter_mm'], system)}"}[action]


def pays_off_text(choice: dict, zone_priced: list[dict], riser: str, d0: float,
                   system: str = units.METRIC) -> str:
    """Where the choice does not pay off: say so, say whether any change that
    passes the rules pays off, and name the cheapest that passes."""
    if pd.isna(choice["predicted_rate_now"]):
        return " Without a reject model the scrap saved is not estimated: the yearly balance is the extra cost alone."
    if choice["yearly_balance"] > 0:
        return ""
    text = (f" At these prices the change costs more each year than the scrap it saves "
            f"(balance {money_text(choice['yearly_balance'])} a year).")
    passing = [c for c in zone_priced if c["full_ok"]]
    if passing and not any(c["yearly_balance"] > 0 for c in passing):
        text += " No change that passes the rules pays off."
    cheaper = [c for c in passing if c["_cand"] != choice["_cand"]
               and c["extra_cost_per_year"] < choice["extra_cost_per_year"]]
    if not cheaper:
        return text + (" This is the cheapest change that passes the rules." if choice["full_ok"]
                       else " No cheaper change passes the rules.")
    c = min(cheaper, key=lambda c: (c["extra_cost_per_year"], c["predicted_rate_after"]))
    rate = "" if pd.isna(c["predicted_rate_after"]) else f", predicted {c['predicted_rate_after']:.1%}"
    change = change_text(c["action"], riser, d0, c, system=system)
    return (text + f" The cheapest change that passes the rules: {change}"
                   f" (extra cost {money_text(c['extra_cost_per_year'])} a year{rate}, balance "
                   f"{money_text(c['yearly_balance'])} a year).")


def how_chosen(choice: dict, zone_priced: list[dict]) -> str:
    """How the choice was made (``_choose``'s tier), in words."""
    if choice["tier"] == 0:
        reach = ("; it reaches the target" if choice.get("meets_target") else
                 "; it does not reach the target (shown, not required)")
        return (" Of the changes that pass every rule, this one has the highest expected yearly balance"
                + reach + ".")
    if choice["tier"] == 2:
        return " No candidate meets every rule; size this riser by hand."
    if pd.isna(choice["predicted_rate_after"]):
        return (" (No reject model: the log has no history to fit it; this is the cheapest change that passes "
                "every rule.)")
    lowest = min(c["predicted_rate_after"] for c in zone_priced if c["full_ok"])
    return (f" No change that passes every rule pays off by the model (the lowest predicted rate after is "
            f"{lowest:.1%}); this one is the cheapest that passes every rule.")


def reason_text(zone, base, now, choice: dict, zone_priced: list[dict], siblings: list[str],
                 system: str = units.METRIC) -> str:
    """Why this change: the zone's rates, the rules before and after, the
    neck, feeding distance, the zone's other risers, the money and how the
    choice was made; lengths worded in ``system``."""
    d0 = float(base["diameter_mm"])
    predicted = ("" if pd.isna(choice["predicted_rate_now"]) else
                 f"; predicted {choice['predicted_rate_now']:.1%} now (calibrated on the zone's own castings), "
                 f"{choice['predicted_rate_after']:.1%} after")
    caine = ("Caine (margin n/a)" if pd.isna(choice["caine_margin"])
             else f"Caine (margin {choice['caine_margin']:.2f})")
    change = change_text(choice["action"], base["riser"], d0, choice, base["neck_diameter_mm"], system)
    text = (f"{change}: shrinkage in zone {zone['zone']} "
            f"observed {zone['rate']:.1%} ({int(zone['shrinkage_rejects'])} of {int(zone['castings'])} "
            f"castings){predicted}; the present riser fails: {rule_words(now['failed_rules']) or 'none'}. ")
    text += (f"The new one passes modulus (ratio {choice['modulus_ratio']:.2f}), {caine} and feed volume "
             f"(margin {choice['feed_margin']:.2f})." if choice["full_ok"] else
             f"The new one: modulus ratio {choice['modulus_ratio']:.2f}, {caine}, feed margin "
             f"{choice['feed_margin']:.2f}.")
    neck_now = finite(base["neck_diameter_mm"])
    if choice["action"] != "neck" and neck_now is not None and choice["neck_diameter_mm"] != neck_now:
        text += (f" {_neck_verb(neck_now, choice['neck_diameter_mm']).capitalize()} the neck to "
                 f"{_mm(choice['neck_diameter_mm'], system)} with it.")
    if choice["feeding_distance_ok"] == 0.0:
        text += (f" Feeding distance: the zone's feeding length {_mm(choice['feeding_length_mm'], system)} is "
                 f"beyond {_mm(choice['feeding_distance_mm'], system)}; no riser size fixes that: add a "
                 "riser or a chill.")
    if siblings:
        text += (f" Riser(s) {', '.join(siblings)} on the same zone fail too: "
                 + ("give them the same change (priced with it)." if choice["action"] != "neck" else
                    "widen their necks as well (not priced here)."))
    text += how_chosen(choice, zone_priced)
    return text + pays_off_text(choice, zone_priced, base["riser"], d0, system)


def comfortable_text(base, now, rate: float, system: str = units.METRIC) -> str:
    hints = []
    if now["feeding_distance_ok"] == 0.0:
        hints.append(f"the zone's feeding length {_mm(now['feeding_length_mm'], system)} is beyond the "
                     f"riser's feeding distance {_mm(now['feeding_distance_mm'], system)}: add a riser "
                     "or a chill to shorten it")
    elif pd.isna(now["feeding_distance_ok"]):
        hints.append("feeding distance was not judged (give the zone's thickness, width and length)")
    hints.append("check pouring temperature and speed, and the riser contact (neck) on the pattern")
    caine = "n/a" if pd.isna(now["caine_margin"]) else f"{now['caine_margin']:.2f}"
    return (f"riser {base['riser']} already passes every rule with margin (modulus ratio "
            f"{now['modulus_ratio']:.2f}, Caine margin {caine}, feed margin {now['feed_margin']:.2f}) yet "
            f"shrinkage persists at {rate:.1%} observed; enlarging it blindly is unlikely to help: "
            + "; ".join(hints))


def pattern_text(pat: str, defects: pd.DataFrame, zones: pd.DataFrame, poured: int, target: float,
                  start: str, end: str) -> str:
    """Why a pattern with no problem zone gets no riser change."""
    total = int(defects["quantity"].sum())
    if not total:
        return f"no rejects in the window ({start} to {end}); nothing to change"
    dominant, top = defects["defect"].to_numpy()[0], int(defects["quantity"].to_numpy()[0])
    if poured and total / poured <= target:
        return (f"no riser change: the pattern's rejects ({total} of {poured} castings, "
                f"{total / poured:.1%}) are within the target {target:.1%}")
    if dominant != "shrinkage":
        return (f"no riser change: {top} of {total} rejects are {dominant}, not shrinkage; "
                f"{DEFECT_POINTERS.get(dominant, '')}")
    mix = ", ".join(f"{d} {int(q)}" for d, q in zip(defects["defect"], defects["quantity"], strict=False))
    zoned = ", ".join(f"{zn} {r / c:.1%}" for zn, r, c in
                      zip(zones["zone"], zones["shrinkage_rejects"], zones["castings"], strict=False) if c)
    return (f"no riser change: no zone's shrinkage rate is above the target {target:.1%} "
            f"(by zone: {zoned or 'no shrinkage reject logged with a zone'}); the rejects are "
            f"mixed ({mix}). Log the zone on each shrinkage reject so it can be traced to a riser")
