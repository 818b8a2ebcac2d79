"""Riser suggestions for problem patterns, with their yield and money.

For each problem pattern of the weekly review (or the pattern asked for):

- a zone whose shrinkage reject rate under the current riser revision is
  above the target (and at least ``MIN_REJECTS`` shrinkage rejects, so that a
  lone reject is not acted on) gets candidate actions for the riser feeding
  it: enlarge (bare, in the shop's diameter steps), fit a catalogue sleeve
  (``sleeve``; ``enlarge_and_sleeve`` where the sleeve is wider than the
  riser is now), or enlarge the neck. Every candidate of every problem zone
  is judged by the rules in one ``assess_frame`` and by the reject model in
  one prediction. Among the candidates that meet every rule and reach the
  target rate, the one with the highest yearly balance is chosen; the others
  are kept as alternatives;
- a riser that already passes every rule with margin while shrinkage
  persists gets ``no_riser_change`` pointing at feeding distance, neck or
  pouring practice;
- a pattern whose rejects are not shrinkage gets ``no_riser_change`` naming
  the defect that dominates.

Money, on one basis:

- ``predicted_rate_now`` and ``predicted_rate_after`` are both the reject
  model's prediction for the zone, for the present design and for the changed
  one (``RATE_BASIS``). The observed rate (``reject_rate``) is shown beside
  them but is not mixed in: a pattern is flagged because its observed rate is
  high, so that rate carries the luck that flagged it, and the model's own
  error would otherwise be booked as a riser benefit.
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

import datetime as dt
import math

import numpy as np
import pandas as pd

from tracker import limits, units
from tracker.advice.features import fit_table, weakest_margins, zone_lot_features
from tracker.advice.model import ShrinkageRejectModel
from tracker.cautions import SAFETY_CAUTION
from tracker.design import rules
from tracker.design.assess import assess_frame, revision_in_effect, rule_words
from tracker.design.sizing import neck_needed_mm, size_risers
from tracker.errors import BadInput, NotFound
from tracker.log.store import Store
from tracker.review.stats import week_start, wilson_interval
from tracker.thermal import checks as thermal_checks

ACTIONS = ("enlarge", "sleeve", "enlarge_and_sleeve", "neck", "no_riser_change")
MIN_REJECTS = 3
DEFAULT_STEP_MM = 10.0
NECK_STEP_MM = 5.0
# Share of the metal's price per kg lost on metal that is poured but does not
# ship (scrapped castings, riser metal): melting energy, handling and melt
# loss. Common practice: about 20-40 % of the purchase price of the metal;
# shop practice varies, so it is a setting (--remelt-charge).
DEFAULT_REMELT_CHARGE = 0.3
RATE_BASIS = "model"  # both predicted rates are the model's, for the present and the changed design
# "With margin": the riser clears each rule by this much (common practice: a
# few per cent above the rule before blaming something else).
COMFORT = {"modulus_ratio": 1.05, "caine_margin": 0.05, "feed_margin": 0.10}
MAX_GROWTH = 2.0  # never suggest more than twice the present diameter
MAX_ALTERNATIVES = 8
SLEEVE_COLUMNS = ("sleeve", "sleeve_kind", "sleeve_factor", "sleeve_efficiency", "sleeve_unit_cost")

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

def fit_model(store: Store, *, alpha: float = 10.0, save: bool = True,
              table: pd.DataFrame | None = None) -> ShrinkageRejectModel | None:
    """Fit the shrinkage reject model on the log's whole history (and store it).

    table: the log's ``fit_table`` when the caller has it already (the
    cross-validation reads the same). None when the log has no lot under a
    known riser design.
    """
    feats = fit_table(store) if table is None else table
    if feats.empty or feats["castings"].sum() == 0:
        return None
    model = ShrinkageRejectModel(alpha=alpha).fit(feats)  # sets data_until_
    if save:
        store.save_model(model.to_bytes(), rows=int(model.n_rows_), castings=int(model.n_castings_),
                         data_until=model.data_until_)
    return model


def _stored_model(store: Store) -> ShrinkageRejectModel | None:
    """The stored model if it was fitted on the log as it is now (up to its newest pour), else None."""
    from tracker.errors import IncompatibleModel

    saved = store.latest_model()
    _, last = store.pour_span()
    if saved is None or saved["data_until"] != last:
        return None
    try:
        return ShrinkageRejectModel.from_bytes(saved["blob"])
    except IncompatibleModel:
        return None  # fitted by another version


def get_model(store: Store, refit: bool = False) -> ShrinkageRejectModel | None:
    """The stored model if it was fitted on the log as it is now, else a new fit."""
    model = None if refit else _stored_model(store)
    return model if model is not None else fit_model(store)


def model_is_current(store: Store) -> bool:
    """Whether :func:`get_model` takes the stored model as it is (no fit first): a
    long step at a large shop, worth saying before it starts."""
    return _stored_model(store) is not None


# --- window -------------------------------------------------------------------

def review_window(store: Store, week: str | None, weeks: int) -> tuple[str, dt.date, dt.date]:
    """(ISO week, first day, last day) of a window of ``weeks`` ending with ``week``."""
    from tracker.review.weekly import default_week

    weeks = limits.check_weeks(weeks)
    if week is None:
        week = default_week(store)
    monday = limits.check_review_week(week, week_start(week))
    return week, monday - dt.timedelta(weeks=int(weeks) - 1), monday + dt.timedelta(days=6)


def _weeks_covered(store: Store, start: str, end: str, weeks: int) -> float:
    """Weeks of the window the log covers (a log younger than the window
    would otherwise understate the yearly volume)."""
    first, _ = store.pour_span()
    if first is None or first <= start:
        return float(weeks)
    days = (dt.date.fromisoformat(end) - dt.date.fromisoformat(first)).days + 1
    return min(float(weeks), max(days / 7.0, 1.0))


def _window_statistics(store: Store, patterns: list[str], start: str, end: str, weeks: int,
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
    zones = feats.groupby(["pattern", "revision", "zone"], as_index=False).agg(
        castings=("castings", "sum"), shrinkage_rejects=("shrinkage_rejects", "sum"))
    return {"poured": lots.groupby("pattern")["castings"].sum(), "defects": defects, "zones": zones,
            "weeks_covered": _weeks_covered(store, start, end, weeks)}


# --- riser weight, yield and money ------------------------------------------------

def riser_weight_kg(riser_volume_cm3, density_kg_dm3):
    """Weight of a riser, kg, from its volume (cm³) and the alloy's density (kg/dm³)."""
    return np.asarray(riser_volume_cm3, dtype=float) * np.asarray(density_kg_dm3, dtype=float) / 1000.0


def casting_yield(casting_kg, riser_kg):
    """Casting weight over casting plus riser weight per casting (the gating is not in the log)."""
    return np.asarray(casting_kg, dtype=float) / (np.asarray(casting_kg, dtype=float)
                                                  + np.asarray(riser_kg, dtype=float))


def _remelt_charge(remelt_charge: float | None, riser_metal_charge: float | None) -> float:
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


def _money(patterns: pd.DataFrame, designs: dict, win: dict, charge: float) -> pd.DataFrame:
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


# --- designs --------------------------------------------------------------------

def _judge(risers: pd.DataFrame) -> pd.DataFrame:
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


def _risers_of(store: Store, patterns: list[str]) -> pd.DataFrame:
    """``risers_frame`` of one pattern, or of every pattern when several are asked (one query)."""
    return store.risers_frame(pattern=patterns[0] if len(patterns) == 1 else None)


def _designs(store: Store, patterns: list[str], on: str, revision: str | None = None,
             risers: pd.DataFrame | None = None) -> dict:
    """The risers of each pattern's revision in effect on ``on`` (or of
    ``revision``), as stored (``risers``) and judged (``judged``, same index).
    risers: ``_risers_of(store, patterns)`` when the caller has it already."""
    revs = store.revisions_frame(patterns[0] if len(patterns) == 1 else None)
    revs = revs[revs["pattern"].isin(patterns)]
    current = (revs[revs["revision"] == revision] if revision is not None
               else revision_in_effect(revs, on))[["pattern", "revision"]]
    risers = _risers_of(store, patterns) if risers is None else risers
    risers = risers.merge(current, on=["pattern", "revision"]).reset_index(drop=True)
    return {"current": current.set_index("pattern")["revision"], "risers": risers, "judged": _judge(risers)}


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


def _problem_zones(win: dict, designs: dict, target: float) -> pd.DataFrame:
    """Zones of the current revisions above the target rate, with the zone's
    weakest riser (lowest modulus ratio; the one to change) as ``primary``."""
    cur = designs["current"].rename("revision").reset_index()
    z = win["zones"].merge(cur, on=["pattern", "revision"])
    z["rate"] = np.where(z["castings"] > 0, z["shrinkage_rejects"] / z["castings"].clip(lower=1), 0.0)
    z = z[(z["rate"] > target) & (z["shrinkage_rejects"] >= MIN_REJECTS)]
    j = designs["judged"]
    primary = j.groupby(["pattern", "zone"])["modulus_ratio"].idxmin().rename("primary").reset_index()
    z = z.merge(primary, on=["pattern", "zone"]).reset_index(drop=True)
    z.index.name = "_z"
    z["comfortable"] = _comfortable(j.loc[z["primary"]]).to_numpy()
    return z


# --- candidates -----------------------------------------------------------------

def _round_up(x, step: float):
    return np.ceil(np.asarray(x, dtype=float) / step - 1e-9) * step


def _has_neck(rows: pd.DataFrame) -> np.ndarray:
    n = rows["neck_diameter_mm"].astype(float).to_numpy()
    return (rows["placement"].to_numpy() == "side") & (n > 0)


def _section_modulus_cm(rows: pd.DataFrame) -> np.ndarray:
    share = np.maximum(rows["risers_on_zone"].astype(float).fillna(1.0).to_numpy(), 1.0)
    return (rows["volume_cm3"].astype(float).to_numpy() / share) / (
        rows["cooling_area_cm2"].astype(float).to_numpy() / share)


def _neck_needed_mm(alloys, mc_cm, now_mm=None) -> np.ndarray:
    """The neck each row's rule set asks (``sizing.neck_needed_mm``: M_neck =
    1.1 · M_section, or inside 0.5-0.8 · M_section under pressure control),
    in 5 mm steps; NaN where the present neck ``now_mm`` meets it."""
    now = [None] * len(alloys) if now_mm is None else [None if v != v else float(v) for v in now_mm]
    need = [neck_needed_mm(a, m, n) for a, m, n in zip(alloys, np.asarray(mc_cm, dtype=float), now, strict=False)]
    return _round_up(np.array([np.nan if v is None else v for v in need], dtype=float), NECK_STEP_MM)


def _neck_for(rows: pd.DataFrame, diameter_mm) -> np.ndarray:
    """The neck each side riser of ``diameter_mm`` needs: the present one, or
    the one its rule set asks while it stays narrower than the riser."""
    now = rows["neck_diameter_mm"].astype(float).to_numpy()
    has = _has_neck(rows)
    need = np.full(len(rows), np.nan)
    if has.any():
        need[has] = _neck_needed_mm(rows["alloy"].to_numpy()[has], _section_modulus_cm(rows)[has], now[has])
    widen = has & ~np.isnan(need)
    return np.where(widen, np.minimum(need, np.asarray(diameter_mm, dtype=float) - NECK_STEP_MM), now)


def _enlarge_candidates(bases: pd.DataFrame, step_mm: float, with_model: bool) -> pd.DataFrame:
    """Bare risers in the shop's diameter steps, from the smallest size the
    rules need (and at least one step up) to twice the present diameter
    (only the first size without a model to rank them)."""
    b = bases[~bases["sleeve"].map(lambda s: isinstance(s, str) and bool(s))]
    if b.empty:
        return b.iloc[0:0]
    d0, h0 = b["diameter_mm"].astype(float).to_numpy(), b["height_mm"].astype(float).to_numpy()
    hd = np.clip(h0 / d0, 0.5, 3.0)
    share = np.maximum(b["risers_on_zone"].astype(float).fillna(1.0).to_numpy(), 1.0)
    need = np.empty(len(b))
    mould = b["mould"].map(rules.check_mould) if "mould" in b else pd.Series(rules.check_mould(None), b.index)
    # one call per alloy, mould and shrinkage: the feed rule takes one shrinkage per call
    shrink = b["shrinkage"].astype(float)
    for alloy, mo, beta in set(zip(b["alloy"], mould, shrink, strict=False)):
        m = ((b["alloy"] == alloy) & (mould == mo) & (shrink == beta)).to_numpy()
        need[m] = size_risers(b["volume_cm3"].to_numpy(float)[m] / share[m],
                              b["cooling_area_cm2"].to_numpy(float)[m] / share[m], alloy,
                              b["placement"].to_numpy()[m], hd[m], 1.0,
                              efficiency=b["bare_efficiency"].to_numpy(float)[m],
                              shrinkage=float(beta), mould=mo)["diameter_mm"]
    first = np.maximum(_round_up(need, step_mm), _round_up(d0 + step_mm * 0.5, step_mm))
    cap = np.maximum(first, MAX_GROWTH * d0)
    steps = np.floor((cap - first) / step_mm + 1e-9).astype(int) + 1 if with_model else np.ones(len(b), int)
    out = b.loc[b.index.repeat(steps)].copy()
    k = np.concatenate([np.arange(n) for n in steps])
    d = np.repeat(first, steps) + k * step_mm
    out["diameter_mm"] = d
    out["height_mm"] = np.round(np.repeat(hd, steps) * d, 1)
    out["neck_diameter_mm"] = _neck_for(out, d)
    out["action"] = "enlarge"
    return out


def _sleeve_candidates(bases: pd.DataFrame, sleeves: pd.DataFrame) -> pd.DataFrame:
    """Every catalogue sleeve on every riser, except the one fitted now and
    those no wider than a side riser's neck."""
    if sleeves.empty or bases.empty:
        return bases.iloc[0:0]
    cat = sleeves.rename(columns={"kind": "sleeve_kind", "modulus_factor": "sleeve_factor",
                                  "feeding_efficiency": "sleeve_efficiency", "unit_cost": "sleeve_unit_cost",
                                  "inner_diameter_mm": "diameter_mm"})
    cat = cat[list(SLEEVE_COLUMNS) + ["diameter_mm", "height_mm"]]
    b = bases.drop(columns=list(SLEEVE_COLUMNS)).rename(columns={"diameter_mm": "_d0", "height_mm": "_h0"})
    out = b.reset_index().merge(cat, how="cross").set_index("_z")
    same = out["sleeve"].to_numpy() == bases.loc[out.index, "sleeve"].to_numpy()
    neck = out["neck_diameter_mm"].astype(float).to_numpy()
    narrow = _has_neck(out) & (out["diameter_mm"].to_numpy() <= neck)
    out = out[~same & ~narrow].copy()
    out["neck_diameter_mm"] = _neck_for(out, out["diameter_mm"].to_numpy())
    out["action"] = np.where(out["diameter_mm"] > out["_d0"] + 0.5, "enlarge_and_sleeve", "sleeve")
    return out.drop(columns=["_d0", "_h0"])


def _neck_candidates(bases: pd.DataFrame, judged: pd.DataFrame) -> pd.DataFrame:
    """The neck the rule set asks (M_neck = 1.1 · M_section, or 0.5-0.8 ·
    M_section under pressure control) where the present one fails and the
    new one stays below the riser."""
    need = _neck_needed_mm(bases["alloy"].to_numpy(), judged["section_modulus_cm"].to_numpy(float))
    ok = (_has_neck(bases) & (judged["neck_ok"].to_numpy() == 0.0)
          & (need / 40.0 < judged["riser_modulus_cm"].to_numpy(float))
          & (need < bases["diameter_mm"].to_numpy(float)))
    out = bases[ok].copy()
    out["neck_diameter_mm"] = need[ok]
    out["action"] = "neck"
    return out


def _candidates(zones: pd.DataFrame, designs: dict, sleeves: pd.DataFrame, step_mm: float,
                with_model: bool) -> pd.DataFrame:
    """Candidate risers for the primary riser of every zone to change, one
    frame (``risers_frame`` columns, ``action``, index ``_z`` = the zone)."""
    bases = designs["risers"].loc[zones["primary"]].set_axis(zones.index)
    judged = designs["judged"].loc[zones["primary"]].set_axis(zones.index)
    parts = [_enlarge_candidates(bases, step_mm, with_model), _sleeve_candidates(bases, sleeves),
             _neck_candidates(bases, judged)]
    parts = [p for p in parts if not p.empty]
    out = pd.concat(parts) if parts else bases.iloc[0:0].assign(action=pd.Series(dtype=object))
    out.index.name = "_z"
    return out.reset_index().rename_axis("_cand").reset_index()


# --- pricing ----------------------------------------------------------------------

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
    keep_neck = _has_neck(own)  # a side sibling with a neck takes the new neck; others keep theirs
    own["neck_diameter_mm"] = np.where(keep_neck, s["neck_diameter_mm"].to_numpy(float),
                                       own["neck_diameter_mm"].astype(float).to_numpy())
    for c in ("_cand", "_z", "action", "_old"):
        own[c] = s[c].to_numpy()
    return pd.concat([prim, own], ignore_index=True)


def _predict(model, frames: list[pd.DataFrame]) -> list[np.ndarray]:
    """The model's rate for each row of each frame, in one prediction (NaN without a model)."""
    both = pd.concat([f.assign(pour_temp_dev_c=0.0) for f in frames], ignore_index=True)
    rates = model.predict_rate(both) if model is not None and len(both) else np.full(len(both), np.nan)
    return np.split(np.asarray(rates, dtype=float), np.cumsum([len(f) for f in frames])[:-1])


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


def _price(cands: pd.DataFrame, zones: pd.DataFrame, designs: dict, money: pd.DataFrame, model,
           target: float) -> tuple[pd.DataFrame, pd.Series]:
    """Every candidate judged, predicted and priced in one pass.

    Returns (priced candidates indexed by ``_cand``, the predicted rate now
    per zone ``_z``). The rates are the model's for the zone: each margin's
    minimum over the zone's risers, as the model was fitted.
    """
    judged_now = designs["judged"]
    zone_risers = zones[["pattern", "zone"]].rename_axis("_z").reset_index().merge(
        judged_now.assign(_old=judged_now.index), on=["pattern", "zone"])
    now = weakest_margins(zone_risers, ["_z"])
    if cands.empty:
        return cands.set_index("_cand"), pd.Series(_predict(model, [now])[0], index=now["_z"].to_numpy())
    rows = _changed_rows(cands, zones, designs).reset_index(drop=True)
    new = _judge(rows).assign(_cand=rows["_cand"].to_numpy(), _old=rows["_old"].to_numpy())
    # the zone after: the changed risers and the zone's others as they are
    others = cands[["_cand", "_z"]].merge(zone_risers, on="_z")
    others = others[~others.set_index(["_cand", "_old"]).index.isin(new.set_index(["_cand", "_old"]).index)]
    after = weakest_margins(pd.concat([new, others.drop(columns="_z")], ignore_index=True), ["_cand"])
    rate_now, rate_after = _predict(model, [now, after])
    rate_now = pd.Series(rate_now, index=now["_z"].to_numpy())

    out = _per_candidate(cands, new, judged_now)
    m = money.loc[zones.loc[out["_z"], "pattern"].to_numpy()]
    n = m["castings_per_year"].to_numpy()
    out["predicted_rate_now"] = rate_now.loc[out["_z"]].to_numpy()
    out["predicted_rate_after"] = pd.Series(rate_after, index=after["_cand"].to_numpy()).loc[out.index].to_numpy()
    out["extra_metal_cost_per_year"] = (n * out["added_kg_per_casting"].to_numpy()
                                        * m["metal_cost_per_kg"].to_numpy() * m["remelt_charge"].to_numpy())
    out["sleeve_cost_per_year"] = n * out["sleeve_change_per_casting"].to_numpy()
    out["extra_cost_per_year"] = out["extra_metal_cost_per_year"] + out["sleeve_cost_per_year"]
    out["scrap_saved_per_year"] = (n * (out["predicted_rate_now"] - out["predicted_rate_after"])
                                   * m["cost_per_scrapped_casting"].to_numpy())
    out["yearly_balance"] = out["scrap_saved_per_year"] - out["extra_cost_per_year"]
    out["meets_target"] = out["predicted_rate_after"] <= target
    return out, rate_now


# --- the choice -------------------------------------------------------------------

def _choose(priced: pd.DataFrame) -> pd.DataFrame:
    """One candidate per zone (``_z``), with ``tier`` saying how it was chosen.

    0: passes every rule (``full_ok``) and reaches the target: the highest
       yearly balance;
    1: passes every rule, none reaches the target: the highest yearly
       balance too (the lowest predicted rate would buy the last hundredth of
       a point at any price); the cheapest where there is no model;
    2: none passes every rule: the cheapest, to be sized by hand.
    A further filter (a thermal check) narrows ``full_ok`` before this step.
    """
    p = priced.assign(tier=np.where(priced["full_ok"] & priced["meets_target"], 0,
                                    np.where(priced["full_ok"], 1, 2)))
    balance = -p["yearly_balance"].fillna(0.0)  # no model: no balance, so the cheapest
    p["_k1"] = np.where(p["tier"] < 2, balance, 0.0)
    p = p.sort_values(["_z", "tier", "_k1", "extra_cost_per_year"], kind="stable")
    return p.groupby("_z").head(1).drop(columns="_k1").rename_axis("_cand").reset_index().set_index("_z")


# --- the reason text ----------------------------------------------------------------

def _money_text(v: float) -> str:
    return f"{v:,.0f}"


def _neck_verb(old_mm, new_mm) -> str:
    """"narrow" where the new neck is narrower (a pressure-control neck), "widen"
    where wider, "change" where the old one is not known."""
    old, new = _nan_none(old_mm), _nan_none(new_mm)
    if old is None or new is None:
        return "change"
    return "narrow" if new < old else "widen"


def _mm(value, system: str) -> str:
    """A length given in mm, as the texts word it in ``system``: "130 mm", "5.12 in"."""
    return units.say("diameter_mm", float(value), system)


def _change_text(action: str, riser: str, d0: float, c, neck0=None, system: str = units.METRIC) -> str:
    d_from = f"{d0:.0f}" if system != units.US else units.number("diameter_mm", d0, system)
    return {"enlarge": f"enlarge riser {riser} from {d_from} to {_mm(c['diameter_mm'], system)} "
                       f"(height {_mm(c['height_mm'], system)})",
            "sleeve": f"fit sleeve {c['sleeve']} to riser {riser}",
            "enlarge_and_sleeve": f"change riser {riser} to sleeve {c['sleeve']} ({_mm(c['diameter_mm'], system)})",
            "neck": f"{_neck_verb(neck0, c['neck_diameter_mm'])} the neck of riser {riser} "
                    f"to {_mm(c['neck_diameter_mm'], system)}"}[action]


def _pays_off_text(choice: dict, zone_priced: list[dict], riser: str, d0: float,
                   system: str = units.METRIC) -> str:
    """Where the choice does not pay off: say so, and name the cheapest
    change that passes the rules."""
    if pd.isna(choice["predicted_rate_now"]):
        return " Without a reject model the scrap saved is not estimated: the yearly balance is the extra cost alone."
    if choice["yearly_balance"] > 0:
        return ""
    text = (f" At these prices the change costs more each year than the scrap it saves "
            f"(balance {_money_text(choice['yearly_balance'])} a year).")
    cheaper = [c for c in zone_priced if c["full_ok"] and c["_cand"] != choice["_cand"]
               and c["extra_cost_per_year"] < choice["extra_cost_per_year"]]
    if not cheaper:
        return text + " No cheaper change passes the rules."
    c = min(cheaper, key=lambda c: (c["extra_cost_per_year"], c["predicted_rate_after"]))
    rate = "" if pd.isna(c["predicted_rate_after"]) else f", predicted {c['predicted_rate_after']:.1%}"
    return (text + f" The cheapest change that passes the rules: {_change_text(c['action'], riser, d0, c, system=system)}"
                   f" (extra cost {_money_text(c['extra_cost_per_year'])} a year{rate}, balance "
                   f"{_money_text(c['yearly_balance'])} a year).")


def _how_chosen(choice: dict, zone_priced: list[dict]) -> str:
    """How the choice was made (``_choose``'s tier), in words."""
    if choice["tier"] == 0:
        return " Of the changes that pass every rule and reach the target, this one has the highest yearly balance."
    if choice["tier"] == 2:
        return " No candidate meets every rule; size this riser by hand."
    if pd.isna(choice["predicted_rate_after"]):
        return (" (No reject model: the log has no history to fit it; this is the cheapest change that passes "
                "every rule.)")
    lowest = min(c["predicted_rate_after"] for c in zone_priced if c["full_ok"])
    return (f" No candidate reaches the target rate by the model (the lowest predicted is {lowest:.1%}); of "
            "those that pass every rule, this one has the highest yearly balance.")


def _reason_text(zone, base, now, choice: dict, zone_priced: list[dict], siblings: list[str],
                 system: str = units.METRIC) -> str:
    """Why this change: the zone's rates, the rules before and after, the
    neck, feeding distance, the zone's other risers, the money and how the
    choice was made; lengths worded in ``system``."""
    d0 = float(base["diameter_mm"])
    predicted = ("" if pd.isna(choice["predicted_rate_now"]) else
                 f"; predicted by the model {choice['predicted_rate_now']:.1%} now, "
                 f"{choice['predicted_rate_after']:.1%} after")
    caine = ("Caine (margin n/a)" if pd.isna(choice["caine_margin"])
             else f"Caine (margin {choice['caine_margin']:.2f})")
    text = (f"{_change_text(choice['action'], base['riser'], d0, choice, base['neck_diameter_mm'], system)}: shrinkage in zone {zone['zone']} "
            f"observed {zone['rate']:.1%} ({int(zone['shrinkage_rejects'])} of {int(zone['castings'])} "
            f"castings){predicted}; the present riser fails: {rule_words(now['failed_rules']) or 'none'}. ")
    text += (f"The new one passes modulus (ratio {choice['modulus_ratio']:.2f}), {caine} and feed volume "
             f"(margin {choice['feed_margin']:.2f})." if choice["full_ok"] else
             f"The new one: modulus ratio {choice['modulus_ratio']:.2f}, {caine}, feed margin "
             f"{choice['feed_margin']:.2f}.")
    neck_now = _nan_none(base["neck_diameter_mm"])
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
    text += _how_chosen(choice, zone_priced)
    return text + _pays_off_text(choice, zone_priced, base["riser"], d0, system)


def _comfortable_text(base, now, rate: float, system: str = units.METRIC) -> str:
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


def _pattern_text(pat: str, defects: pd.DataFrame, zones: pd.DataFrame, poured: int, target: float,
                  start: str, end: str) -> str:
    """Why a pattern with no problem zone gets no riser change."""
    total = int(defects["quantity"].sum())
    if not total:
        return f"no rejects in the window ({start} to {end}); nothing to change"
    dominant, top = defects["defect"].iat[0], int(defects["quantity"].iat[0])
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


# --- suggestions ----------------------------------------------------------------

def _nan_none(v):
    if v is None:
        return None
    try:
        f = float(v)
    except (TypeError, ValueError):
        return v
    return None if not math.isfinite(f) else f


def _sleeve_or_none(v):
    return v if isinstance(v, str) and v else None


def _no_change_money(m, rate_now) -> dict:
    """The money fields of a suggestion that changes nothing."""
    return {"pays_off": False, "predicted_rate_now": _nan_none(rate_now),
            "predicted_rate_after": _nan_none(rate_now), "castings_per_year": float(m["castings_per_year"]),
            "cost_per_scrapped_casting": float(m["cost_per_scrapped_casting"]),
            "remelt_charge": float(m["remelt_charge"]), "rate_basis": RATE_BASIS,
            "scrap_saved_per_year": 0.0, "extra_metal_cost_per_year": 0.0, "sleeve_cost_per_year": 0.0,
            "extra_cost_per_year": 0.0, "yearly_balance": 0.0, "added_metal_kg_per_casting": 0.0,
            "added_metal_kg_per_mold": 0.0, "yield_after": float(m["yield_before"])}


def _money_fields(c, m) -> dict:
    """The money of a priced candidate, each figure from the ones before it,
    so the identities hold exactly on the JSON: scrap_saved_per_year =
    castings_per_year x (predicted_rate_now - predicted_rate_after) x
    cost_per_scrapped_casting, yearly_balance = scrap_saved_per_year -
    extra_cost_per_year."""
    n, cost = float(m["castings_per_year"]), float(m["cost_per_scrapped_casting"])
    now, after = _nan_none(c["predicted_rate_now"]), _nan_none(c["predicted_rate_after"])
    saved = n * (now - after) * cost if now is not None and after is not None else 0.0
    metal = n * float(c["added_kg_per_casting"]) * float(m["metal_cost_per_kg"]) * float(m["remelt_charge"])
    sleeve = n * float(c["sleeve_change_per_casting"])
    extra = metal + sleeve
    balance = saved - extra
    return {"pays_off": balance > 0, "predicted_rate_now": now, "predicted_rate_after": after,
            "castings_per_year": n, "cost_per_scrapped_casting": cost,
            "remelt_charge": float(m["remelt_charge"]), "rate_basis": RATE_BASIS,
            "scrap_saved_per_year": saved, "extra_metal_cost_per_year": metal, "sleeve_cost_per_year": sleeve,
            "extra_cost_per_year": extra, "yearly_balance": balance,
            "added_metal_kg_per_casting": float(c["added_kg_per_casting"]),
            "added_metal_kg_per_mold": float(c["added_kg_per_casting"]) * int(m["castings_per_mold"]),
            "yield_after": float(casting_yield(m["casting_weight_kg"],
                                               m["riser_kg_per_casting"] + c["added_kg_per_casting"]))}


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
        f = _money_fields(a, m)
        out.append({"action": a["action"], "diameter_mm": float(a["diameter_mm"]),
                    "sleeve": _sleeve_or_none(a["sleeve"]), "passes": bool(a["full_ok"]),
                    "meets_target": bool(a["meets_target"]), "predicted_rate": f["predicted_rate_after"],
                    **{k: f[k] for k in ("added_metal_kg_per_mold", "extra_cost_per_year",
                                         "scrap_saved_per_year", "yearly_balance", "pays_off")}})
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
    The predicted rates are the model's for the present and the changed
    design (RATE_BASIS); see the module docstring for the money.
    """
    target = limits.check_target(target)
    if not step_mm > 0:
        raise BadInput(units.column_name("step_mm", system), units.value_in("step_mm", step_mm, system),
                       f"the diameter step must be above 0 {units.symbol('step_mm', system)}")
    charge = _remelt_charge(remelt_charge, riser_metal_charge)
    with store.plant_scope(plant):
        return _suggest(store, pattern, target, week, weeks, step_mm, model, refit, charge, thermal, system)


def _suggest(store, pattern, target, week, weeks, step_mm, model, refit, charge, thermal, system) -> list[dict]:
    week, first, last = review_window(store, week, weeks)
    start, end = first.isoformat(), last.isoformat()
    if pattern is not None:
        store.pattern(pattern)
        patterns = [pattern]
    else:
        from tracker.review.weekly import problem_patterns

        patterns = problem_patterns(store, week=week, weeks=weeks, target=target)  # the review's, alone
    if not patterns:
        return []
    if model is None:
        with store.every_plant():  # the model learns from every plant's history
            model = get_model(store, refit=refit)
    pats = store.table("patterns")
    pats = pats[pats["pattern"].isin(patterns)]
    risers = _risers_of(store, patterns)
    win = _window_statistics(store, patterns, start, end, weeks, risers)
    designs = _designs(store, patterns, end, risers=risers)
    money = _money(pats, designs, win, charge)
    zones = _problem_zones(win, designs, target)
    to_change = zones[~zones["comfortable"]]
    cands = _candidates(to_change, designs, store.table("sleeves"), step_mm, model is not None)
    priced, rate_now = _price(cands, zones, designs, money, model, target)
    priced, thermal_notes = thermal_checks.suggest_filter(store, priced, cands, len(to_change), thermal, _choose,
                                                          system=system)
    chosen = _choose(priced) if len(priced) else priced.assign(_cand=[], tier=[])
    ctx = {"win": win, "designs": designs, "money": money.to_dict("index"), "target": target, "start": start,
           "end": end, "alloy": dict(zip(pats["pattern"], pats["alloy"], strict=False)), "rate_now": rate_now.to_dict(),
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
        return [{**base_out, **_empty_fields(), **_no_change_money(m, None), "action": "no_riser_change",
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
        return [{**_empty_fields(), **base_out, **_no_change_money(m, None), "action": "no_riser_change",
                 "reject_rate": total / poured if poured else None,
                 "reason": _pattern_text(pat, defects, wz, poured, ctx["target"],
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
              "current_diameter_mm": float(base["diameter_mm"]), "current_sleeve": _sleeve_or_none(base["sleeve"])}
    r_now = ctx["rate_now"].get(z_id, np.nan)
    if z["comfortable"]:
        return {**common, **_no_change_money(m, r_now), "action": "no_riser_change",
                "reason": _comfortable_text(base, now, float(z["rate"]), ctx["system"])}
    if z_id not in ctx["chosen"]:
        return {**common, **_no_change_money(m, r_now), "action": "no_riser_change",
                "reason": "no candidate riser could be formed; size it by hand"}
    c_id = ctx["chosen"][z_id]["_cand"]
    zone_priced = ctx["priced"][z_id]
    choice = {**next(c for c in zone_priced if c["_cand"] == c_id), "tier": ctx["chosen"][z_id]["tier"]}
    return {
        **common, **_money_fields(choice, m), "action": choice["action"],
        "suggested_diameter_mm": float(choice["diameter_mm"]), "suggested_height_mm": float(choice["height_mm"]),
        "suggested_sleeve": _sleeve_or_none(choice["sleeve"]),
        "suggested_neck_diameter_mm": _nan_none(choice["neck_diameter_mm"]),
        "changed_risers": [base["riser"]] + (siblings if choice["action"] != "neck" else []),
        "modulus_ratio_before": float(now["modulus_ratio"]), "modulus_ratio_after": float(choice["modulus_ratio"]),
        "caine_margin_before": _nan_none(now["caine_margin"]), "caine_margin_after": _nan_none(choice["caine_margin"]),
        "feed_margin_before": float(now["feed_margin"]), "feed_margin_after": float(choice["feed_margin"]),
        "passes_after": bool(choice["full_ok"]), "meets_target": bool(choice["meets_target"]),
        "reason": (_reason_text(z, base, now, choice, zone_priced, siblings, ctx["system"])
                   + ctx["thermal_notes"].get(z_id, "")),
        "thermal_ok": choice.get("thermal_ok"), "last_to_freeze": choice.get("last_to_freeze"),
        "alternatives": _alternatives(zone_priced, c_id, m),
    }


# --- what-if ----------------------------------------------------------------------

def same_kind_sleeve(catalogue: pd.DataFrame, kind: str, diameter_mm: float) -> dict | None:
    """The catalogue's sleeve of ``kind`` with an inner diameter of
    ``diameter_mm`` (to 0.5 mm), as a dict; None where there is none."""
    hit = catalogue[(catalogue["kind"] == kind) & ((catalogue["inner_diameter_mm"] - diameter_mm).abs() < 0.5)]
    return None if hit.empty else hit.iloc[0].to_dict()


def _resolve_sleeve(cat: pd.DataFrame, base: pd.Series, sleeve, diameter_mm, system: str = units.METRIC):
    """The sleeve row a what-if asks for: "keep", None (bare) or a catalogue
    row. A diameter with a sleeve (given, or kept) takes the catalogue's
    sleeve of the same kind and that inner diameter, where there is one."""
    if sleeve is None or (isinstance(sleeve, str) and sleeve.lower() in ("", "none")):
        return None
    if sleeve == "keep":
        present = _sleeve_or_none(base["sleeve"])
        if present is None or diameter_mm is None or abs(diameter_mm - float(base["diameter_mm"])) < 0.5:
            return "keep"
        sleeve = present
    hit = cat[cat["sleeve"] == sleeve]
    if hit.empty:
        raise NotFound("sleeve", sleeve, "known sleeves: " + ", ".join(cat["sleeve"]))
    s = hit.iloc[0].to_dict()
    if diameter_mm is None or abs(diameter_mm - float(s["inner_diameter_mm"])) < 0.5:
        return s
    same = same_kind_sleeve(cat, s["kind"], diameter_mm)
    if same is None:
        sizes = ", ".join(f"{units.value_in('diameter_mm', d, system):g}"
                          for d in sorted(cat.loc[cat["kind"] == s["kind"], "inner_diameter_mm"]))
        raise BadInput(units.column_name("diameter_mm", system), units.value_in("diameter_mm", diameter_mm, system),
                       f"the catalogue has no {s['kind']} sleeve of that inner diameter ({s['kind']} sleeves: "
                       f"{sizes} {units.symbol('diameter_mm', system)}); pick one of those sizes, or a bare "
                       "riser (sleeve none)")
    return same


def _what_if_row(base: pd.Series, sleeve, diameter_mm, height_mm, neck_diameter_mm) -> pd.Series:
    """The changed riser as a ``risers_frame`` row. Without a new height the
    present H/D is kept; a sleeved riser takes the sleeve's size."""
    row = base.copy()
    hd = float(base["height_mm"]) / float(base["diameter_mm"])
    if sleeve is None:
        row[list(SLEEVE_COLUMNS)] = [None, None, np.nan, np.nan, np.nan]
    elif sleeve != "keep":
        row[list(SLEEVE_COLUMNS)] = [sleeve["sleeve"], sleeve["kind"], sleeve["modulus_factor"],
                                     sleeve["feeding_efficiency"], sleeve["unit_cost"]]
        row["diameter_mm"], row["height_mm"] = float(sleeve["inner_diameter_mm"]), float(sleeve["height_mm"])
    if diameter_mm is not None and not isinstance(sleeve, dict):
        row["diameter_mm"] = float(diameter_mm)
        row["height_mm"] = hd * float(diameter_mm)
    if height_mm is not None and not isinstance(sleeve, dict):
        row["height_mm"] = float(height_mm)
    if neck_diameter_mm != "keep":
        row["neck_diameter_mm"] = np.nan if neck_diameter_mm is None else float(neck_diameter_mm)
    return row


def _differs(base: pd.Series, row: pd.Series) -> bool:
    """Whether a what-if row changes the stored riser (size, sleeve or neck)."""
    for c in ("diameter_mm", "height_mm", "neck_diameter_mm"):
        a, b = _nan_none(base[c]), _nan_none(row[c])
        if (a is None) != (b is None) or (a is not None and abs(a - b) > 1e-9):
            return True
    return _sleeve_or_none(base["sleeve"]) != _sleeve_or_none(row["sleeve"])


def _what_if_money(designs: dict, k, row: pd.Series, money: pd.DataFrame, model) -> tuple[dict, list[str]]:
    """The money of one changed riser (stored row ``k`` changed to ``row``),
    priced by ``_price`` as a suggestion is; and the risers it changes (none
    where ``row`` is the stored riser)."""
    base = designs["risers"].loc[k]
    zone = pd.DataFrame({"pattern": [base["pattern"]], "zone": [base["zone"]], "primary": [k]}).rename_axis("_z")
    priced, rate_now = _price(pd.DataFrame([row]).assign(_z=0, _cand=0, action="what_if"), zone, designs,
                              money, model, 1.0)
    m = money.loc[base["pattern"]]
    if not _differs(base, row):
        return _no_change_money(m, rate_now.get(0)), []
    j = designs["judged"]
    siblings = j[(j["zone"] == base["zone"]) & ~j["full_ok"] & (j.index != k)]["riser"].tolist()
    return _money_fields(priced.iloc[0], m), [base["riser"]] + siblings


def what_if(store: Store, pattern: str, riser: str, diameter_mm: float | None = None,
            height_mm: float | None = None, sleeve: str | None = "keep",
            neck_diameter_mm: float | None | str = "keep", revision: str | None = None,
            model=None, week: str | None = None, weeks: int = limits.WEEKS_DEFAULT,
            remelt_charge: float | None = None, riser_metal_charge: float | None = None,
            system: str = units.METRIC) -> dict:
    """Margins, predicted shrinkage rate, yield and money of a changed riser.

    Sizes are metric (mm); ``system`` is the unit system refusals name theirs in.

    sleeve: a catalogue code, None (or "none") for a bare riser, "keep" to
    keep the present one. A sleeved riser takes the sleeve's diameter and
    height; a diameter given with a sleeve (or with the present sleeve kept)
    takes the catalogue's sleeve of the same kind and that diameter, and is
    refused where the catalogue has none. Without a new height the present
    H/D is kept. The money is priced as in ``suggest`` over the window of
    ``weeks`` ending with ``week``, on the same basis (the model's rate for
    the zone now and changed); risers on the same zone that fail the rules
    get the same change, as in ``suggest`` (``changed_risers``).
    """
    charge = _remelt_charge(remelt_charge, riser_metal_charge)
    for name, value in (("diameter_mm", diameter_mm), ("height_mm", height_mm)):
        if value is not None and not value > 0:
            raise BadInput(units.column_name(name, system), units.value_in(name, value, system),
                           f"must be a number above 0 {units.symbol(name, system)}")
    info = store.pattern(pattern)
    revs = store.revisions_frame(pattern)
    if revs.empty:
        raise NotFound("riser revision", pattern, "import the pattern's risers first")
    rev = revision or revision_in_effect(revs, "9999-12-31")["revision"].iat[0]
    every = _risers_of(store, [pattern])
    designs = _designs(store, [pattern], "9999-12-31", revision=rev, risers=every)
    risers = designs["risers"]
    if riser not in set(risers["riser"]):
        raise NotFound("riser", riser, f"{pattern} revision {rev} has " + ", ".join(risers["riser"]))
    k = risers.index[risers["riser"] == riser][0]
    base = risers.loc[k]
    s = _resolve_sleeve(store.table("sleeves"), base, sleeve, diameter_mm, system)
    row = _what_if_row(base, s, diameter_mm, height_mm, neck_diameter_mm)
    if model is None:
        model = get_model(store)
    week, first, last = review_window(store, week, weeks)
    start, end = first.isoformat(), last.isoformat()
    win = _window_statistics(store, [pattern], start, end, weeks, every)
    pats = store.table("patterns")
    money = _money(pats[pats["pattern"] == pattern], designs, win, charge)
    wz = win["zones"]
    wz = wz[(wz["pattern"] == pattern) & (wz["revision"] == rev) & (wz["zone"] == base["zone"])]
    figures, changed = _what_if_money(designs, k, row, money, model)
    new = _judge(pd.DataFrame([row]))
    now, new = designs["judged"].loc[k], new.iloc[0]
    castings = int(wz["castings"].sum())
    observed = float(wz["shrinkage_rejects"].sum()) / castings if castings else None
    return {
        "pattern": pattern, "revision": rev, "riser": riser, "zone": base["zone"], "alloy": info["alloy"],
        "diameter_mm": float(new["diameter_mm"]), "height_mm": float(new["height_mm"]),
        "sleeve": _sleeve_or_none(new["sleeve"]), "current_diameter_mm": float(base["diameter_mm"]),
        "current_sleeve": _sleeve_or_none(base["sleeve"]),
        "modulus_ratio": float(new["modulus_ratio"]), "caine_margin": _nan_none(new["caine_margin"]),
        "feed_margin": float(new["feed_margin"]), "freezing_ratio": float(new["freezing_ratio"]),
        "volume_ratio": float(new["volume_ratio"]), "neck_ok": _nan_none(new["neck_ok"]),
        "passes": bool(new["passes"]), "failed_rules": new["failed_rules"], "rule_set": new["rule_set"],
        "modulus_ratio_now": float(now["modulus_ratio"]), "caine_margin_now": _nan_none(now["caine_margin"]),
        "feed_margin_now": float(now["feed_margin"]),
        "observed_rate": observed, "zone_castings": castings, "week": week, "weeks": int(weeks),
        "predicted_rate": figures["predicted_rate_after"], **figures, "changed": bool(changed),
        "changed_risers": changed, "yield_before": float(money.loc[pattern, "yield_before"]),
        "caution": SAFETY_CAUTION,
    }
