"""The money of a riser change: weights, yield, the cost of a scrapped casting,
and every candidate judged, predicted and priced in one pass.

Money, on one basis (``tracker.advice.calibration``):

- ``predicted_rate_now`` is the zone's calibrated rate: the reject model's
  rate for its present design updated by the zone's own castings and
  shrinkage rejects in the window (empirical-Bayes beta-binomial, see
  ``tracker.advice.pooling``). ``predicted_rate_after`` is that rate shifted
  by the model's change in log-odds between the present and the changed
  design (``RATE_BASIS``). The observed rate (``reject_rate``) is shown
  beside them; where the zone has many castings the calibrated rate is close
  to it, where it has few the model's rate speaks.
- 90 % intervals (``*_low``, ``*_high``) for the rate after and the yearly
  balance, and ``probability_pays_off``, come from joint draws of the zone's
  rate and the model's coefficients (``calibration.change``).
- Scrap saved per year = castings per year x (predicted now - predicted
  after) x cost per scrapped casting.
- Metal that does not ship (a scrapped casting, extra riser metal) goes back
  to the furnace; what is lost is melting, handling and melt loss, charged as
  ``remelt_charge`` x the metal price per kg on both sides. A scrapped casting
  also loses its processing (moulding, cores, fettling, inspection) in full.
  Its metal is the casting and its present risers (the whole metal poured
  for it).
- Extra cost per year = castings per year x (added riser metal per casting x
  metal price x remelt charge + change in sleeve cost per casting).
- Where other risers on the same zone fail the rules too, the change is
  priced on them as well (they feed equal shares of the zone), and the zone's
  predicted rate after is the model's for the zone with all of them changed.

Yield here is casting weight over casting plus riser weight per casting; the
gating system is not in the log and is left out. Every figure is a screening
estimate.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker.advice import calibration
from tracker.advice.candidates import SLEEVE_COLUMNS, has_neck
from tracker.advice.features import weakest_margins
from tracker.advice.zones import judge
from tracker.errors import BadInput
from tracker.numbers import finite

# Share of the metal's price per kg lost on metal that is poured but does not
# ship (scrapped castings, riser metal): melting energy, handling and melt
# loss. Common practice: about 20-40 % of the purchase price of the metal;
# shop practice varies, so it is a setting (--remelt-charge).
DEFAULT_REMELT_CHARGE = 0.3
RATE_BASIS = calibration.RATE_BASIS


def casting_yield(casting_kg, riser_kg):
    """Casting weight over casting plus riser weight per casting (the gating is not in the log)."""
    return np.asarray(casting_kg, dtype=float) / (np.asarray(casting_kg, dtype=float)
                                                  + np.asarray(riser_kg, dtype=float))


def check_remelt_charge(remelt_charge: float | None, riser_metal_charge: float | None) -> float:
    """The remelt charge, with ``riser_metal_charge`` as its old name."""
    if riser_metal_charge is not None:
        if remelt_charge is not None and remelt_charge != riser_metal_charge:
            raise BadInput("riser_metal_charge", riser_metal_charge,
                           f"is the old name of remelt_charge, which is {remelt_charge!r}; give one of them")
        field, value = "riser_metal_charge", riser_metal_charge
    else:
        field, value = "remelt_charge", DEFAULT_REMELT_CHARGE if remelt_charge is None else remelt_charge
    if not 0 <= value <= 1:
        raise BadInput(field, value, "must be a fraction from 0 to 1 of the metal price "
                                     f"(default {DEFAULT_REMELT_CHARGE:g})")
    return float(value)


def pattern_money(patterns: pd.DataFrame, designs: dict, win: dict, charge: float) -> pd.DataFrame:
    """Per pattern: castings per year, metal price, the present riser weight
    per casting and yield, and the cost of one scrapped casting."""
    p = patterns.set_index("pattern")
    riser_kg = designs["judged"].groupby("pattern")["weight_kg"].sum().reindex(p.index).fillna(0.0)
    out = pd.DataFrame(index=p.index)
    out["castings_per_year"] = win["poured"].reindex(p.index).fillna(0).astype(float) * 52.0 / win["weeks_covered"]
    out["casting_weight_kg"] = p["casting_weight_kg"].astype(float)
    out["castings_per_mold"] = p["castings_per_mold"].astype(int)
    out["metal_cost_per_kg"] = p["metal_cost_per_kg"].astype(float)
    out["processing_cost_per_casting"] = p["processing_cost_per_casting"].astype(float).fillna(0.0)
    out["riser_kg_per_casting"] = riser_kg
    out["yield_before"] = casting_yield(out["casting_weight_kg"], riser_kg)
    out["remelt_charge"] = charge
    out["cost_per_scrapped_casting"] = (
        (out["casting_weight_kg"] + riser_kg) * out["metal_cost_per_kg"] * charge
        + out["processing_cost_per_casting"])
    return out


def _changed_rows(cands: pd.DataFrame, zones: pd.DataFrame, designs: dict) -> pd.DataFrame:
    """The riser rows each candidate changes: its primary riser, and the
    zone's other risers that fail a rule, given the same riser (all actions
    but a wider neck). ``_old`` is the stored row's index."""
    risers, judged = designs["risers"], designs["judged"]
    prim = cands.assign(_old=zones.loc[cands["_z"], "primary"].to_numpy())
    key = risers[["pattern", "zone"]].assign(_old=risers.index)
    zone_of = zones[["pattern", "zone", "primary"]].rename_axis("_z").reset_index()
    sib = zone_of.merge(key, on=["pattern", "zone"])
    sib = sib[(sib["_old"] != sib["primary"]) & ~judged.loc[sib["_old"], "full_ok"].to_numpy()]
    resize = cands[cands["action"] != "neck"]
    if sib.empty or resize.empty:
        return prim
    geo = resize[["_cand", "_z", "action", "diameter_mm", "height_mm", "neck_diameter_mm", *SLEEVE_COLUMNS]]
    s = geo.merge(sib[["_z", "_old"]], on="_z")
    own = risers.loc[s["_old"]].reset_index(drop=True)
    for c in ("diameter_mm", "height_mm", *SLEEVE_COLUMNS):
        own[c] = s[c].to_numpy()
    keep_neck = has_neck(own)  # a side sibling with a neck takes the new neck; others keep theirs
    own["neck_diameter_mm"] = np.where(keep_neck, s["neck_diameter_mm"].to_numpy(float),
                                       own["neck_diameter_mm"].astype(float).to_numpy())
    for c in ("_cand", "_z", "action", "_old"):
        own[c] = s[c].to_numpy()
    return pd.concat([prim, own], ignore_index=True)


def _per_candidate(cands: pd.DataFrame, new: pd.DataFrame, judged_now: pd.DataFrame) -> pd.DataFrame:
    """Per candidate: the primary riser's size and margins, whether every
    riser it changes passes, and the added metal and sleeve cost per casting
    summed over them."""
    old = judged_now.loc[new["_old"]]
    new = new.assign(added_kg=new["weight_kg"].to_numpy() - old["weight_kg"].to_numpy(),
                     sleeve_change=new["sleeve_unit_cost"].to_numpy() - old["sleeve_unit_cost"].to_numpy())
    per = new.groupby("_cand").agg(added_kg_per_casting=("added_kg", "sum"),
                                   sleeve_change_per_casting=("sleeve_change", "sum"), full_ok=("full_ok", "all"))
    prim = new.drop_duplicates("_cand").set_index("_cand")  # the primary riser comes first
    out = cands.set_index("_cand")[["_z", "action", "neck_diameter_mm"]].join(per)
    for c in ("diameter_mm", "height_mm", "sleeve", "modulus_ratio", "caine_margin", "feed_margin",
              "feeding_distance_ok", "feeding_distance_mm", "feeding_length_mm", "weight_kg"):
        out[c] = prim[c]
    out["full_ok"] = out["full_ok"].astype(bool)
    return out


def price_candidates(cands: pd.DataFrame, zones: pd.DataFrame, designs: dict, money: pd.DataFrame, model,
           target: float) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Every candidate judged, predicted and priced in one pass.

    Returns (priced candidates indexed by ``_cand``, the zone's calibrated
    rate now per zone ``_z``: ``calibration.zone_rates``' columns). The
    model sees a zone as each margin's minimum over its risers, as it was
    fitted; ``zones``' ``shrinkage_rejects`` and ``castings`` (the window's,
    0 where absent) calibrate its rate.
    """
    judged_now = designs["judged"]
    zone_risers = zones[["pattern", "zone"]].rename_axis("_z").reset_index().merge(
        judged_now.assign(_old=judged_now.index), on=["pattern", "zone"])
    now = weakest_margins(zone_risers, ["_z"]).set_index("_z", drop=False)
    counts = zones.reindex(columns=["shrinkage_rejects", "castings"]).fillna(0).loc[now.index]
    rate_now = calibration.zone_rates(model, now, counts["shrinkage_rejects"], counts["castings"])
    if cands.empty:
        return cands.set_index("_cand"), rate_now
    rows = _changed_rows(cands, zones, designs).reset_index(drop=True)
    new = judge(rows).assign(_cand=rows["_cand"].to_numpy(), _old=rows["_old"].to_numpy())
    # the zone after: the changed risers and the zone's others as they are
    others = cands[["_cand", "_z"]].merge(zone_risers, on="_z")
    others = others[~others.set_index(["_cand", "_old"]).index.isin(new.set_index(["_cand", "_old"]).index)]
    after = weakest_margins(pd.concat([new, others.drop(columns="_z")], ignore_index=True), ["_cand"])

    out = _per_candidate(cands, new, judged_now)
    after = after.set_index("_cand", drop=False).loc[out.index]
    z = out["_z"].to_numpy()
    post = rate_now.loc[z]
    moved = calibration.change(model, now.loc[z], after, post["a"].to_numpy(), post["b"].to_numpy())
    m = money.loc[zones.loc[z, "pattern"].to_numpy()]
    n = m["castings_per_year"].to_numpy()
    out["model_rate_now"] = post["model_rate"].to_numpy()
    out["predicted_rate_now"] = post["rate"].to_numpy()
    out["predicted_rate_after"] = moved["rate_after"]
    out["predicted_rate_after_low"], out["predicted_rate_after_high"] = moved["rate_after_low"], moved[
        "rate_after_high"]
    out["extra_metal_cost_per_year"] = (n * out["added_kg_per_casting"].to_numpy()
                                        * m["metal_cost_per_kg"].to_numpy() * m["remelt_charge"].to_numpy())
    out["sleeve_cost_per_year"] = n * out["sleeve_change_per_casting"].to_numpy()
    out["extra_cost_per_year"] = out["extra_metal_cost_per_year"] + out["sleeve_cost_per_year"]
    out["scrap_saved_per_year"] = (n * (out["predicted_rate_now"] - out["predicted_rate_after"])
                                   * m["cost_per_scrapped_casting"].to_numpy())
    out["yearly_balance"] = out["scrap_saved_per_year"] - out["extra_cost_per_year"]
    spread = calibration.balance_figures(moved["now_draws"], moved["after_draws"], n,
                                         m["cost_per_scrapped_casting"].to_numpy(),
                                         out["extra_cost_per_year"].to_numpy())
    for k, v in spread.items():
        out[k] = v
    out["meets_target"] = out["predicted_rate_after"] <= target
    return out, rate_now


def _now_figures(now) -> dict:
    """The rate now of a zone as ``no_change_money`` takes it: None, a rate,
    or a row of ``calibration.zone_rates`` (a dict)."""
    if isinstance(now, dict):
        return {"rate": finite(now.get("rate")), "low": finite(now.get("low")), "high": finite(now.get("high")),
                "model_rate": finite(now.get("model_rate"))}
    return {"rate": finite(now), "low": None, "high": None, "model_rate": None}


def now_interval(rate_now) -> dict:
    """The 90 % interval of a zone's calibrated rate now, and the model's own rate for its design."""
    f = _now_figures(rate_now)
    return {"model_rate_now": f["model_rate"], "predicted_rate_now_low": f["low"],
            "predicted_rate_now_high": f["high"]}


def no_change_money(m, rate_now) -> dict:
    """The money fields of a suggestion that changes nothing (``rate_now``:
    None, a rate, or the zone's row of ``calibration.zone_rates``)."""
    f = _now_figures(rate_now)
    known = f["rate"] is not None
    return {"pays_off": False, "predicted_rate_now": f["rate"], "model_rate_now": f["model_rate"],
            "predicted_rate_now_low": f["low"], "predicted_rate_now_high": f["high"],
            "predicted_rate_after": f["rate"], "predicted_rate_after_low": f["low"],
            "predicted_rate_after_high": f["high"], "castings_per_year": float(m["castings_per_year"]),
            "cost_per_scrapped_casting": float(m["cost_per_scrapped_casting"]),
            "remelt_charge": float(m["remelt_charge"]), "rate_basis": RATE_BASIS,
            "scrap_saved_per_year": 0.0, "extra_metal_cost_per_year": 0.0, "sleeve_cost_per_year": 0.0,
            "extra_cost_per_year": 0.0, "yearly_balance": 0.0, "yearly_balance_low": 0.0 if known else None,
            "yearly_balance_high": 0.0 if known else None, "probability_pays_off": 0.0 if known else None,
            "added_metal_kg_per_casting": 0.0, "added_metal_kg_per_mold": 0.0,
            "yield_after": float(m["yield_before"])}


def money_fields(c, m) -> dict:
    """The money of a priced candidate, each figure from the ones before it,
    so the identities hold exactly on the JSON: scrap_saved_per_year =
    castings_per_year x (predicted_rate_now - predicted_rate_after) x
    cost_per_scrapped_casting, yearly_balance = scrap_saved_per_year -
    extra_cost_per_year."""
    n, cost = float(m["castings_per_year"]), float(m["cost_per_scrapped_casting"])
    now, after = finite(c["predicted_rate_now"]), finite(c["predicted_rate_after"])
    saved = n * (now - after) * cost if now is not None and after is not None else 0.0
    metal = n * float(c["added_kg_per_casting"]) * float(m["metal_cost_per_kg"]) * float(m["remelt_charge"])
    sleeve = n * float(c["sleeve_change_per_casting"])
    extra = metal + sleeve
    balance = saved - extra
    return {"pays_off": balance > 0, "predicted_rate_now": now, "model_rate_now": finite(c.get("model_rate_now")),
            "predicted_rate_after": after, "predicted_rate_after_low": finite(c.get("predicted_rate_after_low")),
            "predicted_rate_after_high": finite(c.get("predicted_rate_after_high")),
            "yearly_balance_low": finite(c.get("yearly_balance_low")),
            "yearly_balance_high": finite(c.get("yearly_balance_high")),
            "probability_pays_off": finite(c.get("probability_pays_off")), "castings_per_year": n,
            "cost_per_scrapped_casting": cost,
            "remelt_charge": float(m["remelt_charge"]), "rate_basis": RATE_BASIS,
            "scrap_saved_per_year": saved, "extra_metal_cost_per_year": metal, "sleeve_cost_per_year": sleeve,
            "extra_cost_per_year": extra, "yearly_balance": balance,
            "added_metal_kg_per_casting": float(c["added_kg_per_casting"]),
            "added_metal_kg_per_mold": float(c["added_kg_per_casting"]) * int(m["castings_per_mold"]),
            "yield_after": float(casting_yield(m["casting_weight_kg"],
                                               m["riser_kg_per_casting"] + c["added_kg_per_casting"]))}
