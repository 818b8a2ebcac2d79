"""Candidate risers for the riser to change on each problem zone.

Each kind of candidate has its own function returning ``risers_frame`` rows
with an ``action`` column, indexed by the zone ``_z``:

- ``_enlarge_candidates``: bare risers in the shop's diameter steps (``enlarge``);
- ``_sleeve_candidates``: every catalogue sleeve (``sleeve``, or
  ``enlarge_and_sleeve`` where the sleeve is wider than the riser is now);
- ``_neck_candidates``: the neck the rule set asks (``neck``).

:func:`zone_candidates` joins them into one frame; a new kind of candidate is
one more function here, added to its list (and its action to
``suggest.ACTIONS`` and to ``wording.change_text``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker.design import rules
from tracker.design.sizing import neck_needed_mm, size_risers
from tracker.numbers import missing

DEFAULT_STEP_MM = 10.0
NECK_STEP_MM = 5.0
MAX_GROWTH = 2.0  # never suggest more than twice the present diameter
SLEEVE_COLUMNS = ("sleeve", "sleeve_kind", "sleeve_factor", "sleeve_efficiency", "sleeve_unit_cost")


def _round_up(x, step: float):
    """``x`` rounded up to a multiple of ``step`` (a hair of tolerance keeps exact multiples)."""
    return np.ceil(np.asarray(x, dtype=float) / step - 1e-9) * step


def has_neck(rows: pd.DataFrame) -> np.ndarray:
    """Side risers with a neck of a known width (a top riser has none)."""
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
    now = [None] * len(alloys) if now_mm is None else [None if missing(v) else float(v) for v in now_mm]
    need = [neck_needed_mm(a, m, n) for a, m, n in zip(alloys, np.asarray(mc_cm, dtype=float), now, strict=False)]
    return _round_up(np.array([np.nan if v is None else v for v in need], dtype=float), NECK_STEP_MM)


def _neck_for(rows: pd.DataFrame, diameter_mm) -> np.ndarray:
    """The neck each side riser of ``diameter_mm`` needs: the present one, or
    the one its rule set asks while it stays narrower than the riser."""
    now = rows["neck_diameter_mm"].astype(float).to_numpy()
    has = has_neck(rows)
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
    narrow = has_neck(out) & (out["diameter_mm"].to_numpy() <= neck)
    out = out[~same & ~narrow].copy()
    out["neck_diameter_mm"] = _neck_for(out, out["diameter_mm"].to_numpy())
    out["action"] = np.where(out["diameter_mm"] > out["_d0"] + 0.5, "enlarge_and_sleeve", "sleeve")
    return out.drop(columns=["_d0", "_h0"])


def _neck_candidates(bases: pd.DataFrame, judged: pd.DataFrame) -> pd.DataFrame:
    """The neck the rule set asks (M_neck = 1.1 · M_section, or 0.5-0.8 ·
    M_section under pressure control) where the present one fails and the
    new one stays below the riser."""
    need = _neck_needed_mm(bases["alloy"].to_numpy(), judged["section_modulus_cm"].to_numpy(float))
    ok = (has_neck(bases) & (judged["neck_ok"].to_numpy() == 0.0)
          & (need / 40.0 < judged["riser_modulus_cm"].to_numpy(float))
          & (need < bases["diameter_mm"].to_numpy(float)))
    out = bases[ok].copy()
    out["neck_diameter_mm"] = need[ok]
    out["action"] = "neck"
    return out


def zone_candidates(zones: pd.DataFrame, designs: dict, sleeves: pd.DataFrame, step_mm: float,
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
