"""What if a riser were changed: its margins, predicted shrinkage rate, yield
and money, priced as a suggestion is (``pricing.price_candidates``)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker import limits, units
from tracker.advice.candidates import SLEEVE_COLUMNS
from tracker.advice.fitting import get_model
from tracker.advice.pricing import (
    check_remelt_charge,
    money_fields,
    no_change_money,
    now_interval,
    pattern_money,
    price_candidates,
)
from tracker.advice.zones import designs_in_effect, judge, review_window, risers_of, sleeve_or_none, window_statistics
from tracker.cautions import SAFETY_CAUTION
from tracker.design.assess import revision_in_effect
from tracker.errors import BadInput, NotFound
from tracker.log.store import Store
from tracker.numbers import finite


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
        present = sleeve_or_none(base["sleeve"])
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
        a, b = finite(base[c]), finite(row[c])
        if (a is None) != (b is None) or (a is not None and b is not None and abs(a - b) > 1e-9):
            return True
    return sleeve_or_none(base["sleeve"]) != sleeve_or_none(row["sleeve"])


def _what_if_money(designs: dict, k, row: pd.Series, money: pd.DataFrame, model,
                   counts: tuple[int, int] = (0, 0)) -> tuple[dict, list[str]]:
    """The money of one changed riser (stored row ``k`` changed to ``row``),
    priced by ``price_candidates`` as a suggestion is, on the zone's rate
    calibrated by ``counts`` (shrinkage rejects, castings in the window);
    and the risers it changes (none where ``row`` is the stored riser)."""
    base = designs["risers"].loc[k]
    zone = pd.DataFrame({"pattern": [base["pattern"]], "zone": [base["zone"]], "primary": [k],
                         "shrinkage_rejects": [counts[0]], "castings": [counts[1]]}).rename_axis("_z")
    priced, rate_now = price_candidates(pd.DataFrame([row]).assign(_z=0, _cand=0, action="what_if"), zone, designs,
                              money, model, 1.0)
    m = money.loc[base["pattern"]]
    now = rate_now.loc[0].to_dict()
    if not _differs(base, row):
        return {**no_change_money(m, now), **now_interval(now)}, []
    j = designs["judged"]
    siblings = j[(j["zone"] == base["zone"]) & ~j["full_ok"] & (j.index != k)]["riser"].tolist()
    return {**money_fields(priced.iloc[0], m), **now_interval(now)}, [base["riser"]] + siblings


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
    ``weeks`` ending with ``week``, on the same basis (the zone's calibrated
    rate now, and shifted by the model for the change); risers on the same zone that fail the rules
    get the same change, as in ``suggest`` (``changed_risers``).
    """
    charge = check_remelt_charge(remelt_charge, riser_metal_charge)
    for name, value in (("diameter_mm", diameter_mm), ("height_mm", height_mm)):
        if value is not None and not value > 0:
            raise BadInput(units.column_name(name, system), units.value_in(name, value, system),
                           f"must be a number above 0 {units.symbol(name, system)}")
    info = store.pattern(pattern)
    rev, every, designs, k = _stored_riser(store, pattern, riser, revision)
    base = designs["risers"].loc[k]
    s = _resolve_sleeve(store.table("sleeves"), base, sleeve, diameter_mm, system)
    row = _what_if_row(base, s, diameter_mm, height_mm, neck_diameter_mm)
    if model is None:
        model = get_model(store)
    week, first, last = review_window(store, week, weeks)
    start, end = first.isoformat(), last.isoformat()
    win = window_statistics(store, [pattern], start, end, weeks, every)
    pats = store.table("patterns")
    money = pattern_money(pats[pats["pattern"] == pattern], designs, win, charge)
    wz = win["zones"]
    wz = wz[(wz["pattern"] == pattern) & (wz["revision"] == rev) & (wz["zone"] == base["zone"])]
    castings = int(wz["castings"].sum())
    figures, changed = _what_if_money(designs, k, row, money, model, (int(wz["shrinkage_rejects"].sum()), castings))
    observed = float(wz["shrinkage_rate"].iat[0]) if castings else None  # zone_shrinkage_rates' figure
    return {
        "pattern": pattern, "revision": rev, "riser": riser, "zone": base["zone"], "alloy": info["alloy"],
        **_margins(base, judge(pd.DataFrame([row])).iloc[0], designs["judged"].loc[k]),
        "observed_rate": observed, "zone_castings": castings, "week": week, "weeks": int(weeks),
        "predicted_rate": figures["predicted_rate_after"], **figures, "changed": bool(changed),
        "changed_risers": changed, "neck_diameter_mm": finite(row["neck_diameter_mm"]),
        "yield_before": float(money["yield_before"].to_numpy()[0]),
        "caution": SAFETY_CAUTION,
    }


def _stored_riser(store: Store, pattern: str, riser: str, revision: str | None) -> tuple[str, pd.DataFrame, dict, int]:
    """The revision asked (else the newest in effect), the pattern's
    ``risers_frame``, the revision's designs (``zones.designs_in_effect``) and
    the index of ``riser`` in them."""
    revs = store.revisions_frame(pattern)
    if revs.empty:
        raise NotFound("riser revision", pattern, "import the pattern's risers first")
    rev = revision or str(revision_in_effect(revs, "9999-12-31")["revision"].iat[0])
    every = risers_of(store, [pattern])
    designs = designs_in_effect(store, [pattern], "9999-12-31", revision=rev, risers=every)
    risers = designs["risers"]
    if riser not in set(risers["riser"]):
        raise NotFound("riser", riser, f"{pattern} revision {rev} has " + ", ".join(risers["riser"]))
    return rev, every, designs, risers.index[risers["riser"] == riser][0]


def _margins(base: pd.Series, new: pd.Series, now: pd.Series) -> dict:
    """The what-if's size and rule margins (``new``: the changed riser judged),
    beside the stored riser's (``base`` as stored, ``now`` judged)."""
    return {
        "diameter_mm": float(new["diameter_mm"]), "height_mm": float(new["height_mm"]),
        "sleeve": sleeve_or_none(new["sleeve"]), "current_diameter_mm": float(base["diameter_mm"]),
        "current_sleeve": sleeve_or_none(base["sleeve"]),
        "modulus_ratio": float(new["modulus_ratio"]), "caine_margin": finite(new["caine_margin"]),
        "feed_margin": float(new["feed_margin"]), "freezing_ratio": float(new["freezing_ratio"]),
        "volume_ratio": float(new["volume_ratio"]), "neck_ok": finite(new["neck_ok"]),
        "passes": bool(new["passes"]), "failed_rules": new["failed_rules"], "rule_set": new["rule_set"],
        "modulus_ratio_now": float(now["modulus_ratio"]), "caine_margin_now": finite(now["caine_margin"]),
        "feed_margin_now": float(now["feed_margin"]),
    }
