"""Feature tables: each lot's riser zones with the design that was in the mould.

A lot is judged against the riser revision in effect on its pour date. Each
riser of that revision is assessed by the rules (``tracker.design.assess``); a zone
fed by several risers takes the weakest riser's margins. Shrinkage rejects
are counted per lot and zone (result ``reject``, defect ``shrinkage``);
shrinkage rejects logged without a zone cannot be tied to a riser and are
left out of the zone tables (they still count in the review).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from tracker.design.assess import assess_frame
from tracker.log.store import Store
from tracker.review.stats import wilson_interval

MARGIN_COLS = ["modulus_ratio", "caine_margin", "feed_margin", "volume_ratio", "freezing_ratio"]
FEATURE_COLUMNS = [
    "lot", "pattern", "revision", "zone", "riser", "poured_on", "alloy", "castings", "shrinkage_rejects",
    "modulus_ratio", "caine_margin", "feed_margin", "volume_ratio", "freezing_ratio", "sleeve_kind",
    "pour_temp_dev_c", "thickness_mm", "passes", "rule_set", "modulus_target",
]


def weakest_margins(assessed: pd.DataFrame, keys) -> pd.DataFrame:
    """Per group of ``keys``: each margin's minimum over the group's risers
    (MARGIN_COLS), the alloy, thickness and rule set, the sleeve kind of the
    riser lowest on Caine's margin, then on the modulus ratio, and the
    largest modulus ratio the zone's rule set asks (``modulus_target``).

    ``assessed`` is from ``assess_frame`` with a ``thickness_mm`` column. This
    is how the model sees a zone fed by several risers, in its training table
    and in every prediction made for suggestions.
    """
    keys = list(keys)
    a = assessed.assign(_caine_sort=assessed["caine_margin"].astype(float).fillna(np.inf))
    a = a.sort_values(keys + ["_caine_sort", "modulus_ratio"], kind="stable")
    g = a.groupby(keys, sort=False)
    out = g[MARGIN_COLS].min()
    first = g[[c for c in ("alloy", "sleeve_kind", "thickness_mm", "rule_set") if c in a]].first()
    out = out.join(first)
    if "modulus_required_ratio" in a:  # the zone's rule set asks the largest of its risers' ratios
        out["modulus_target"] = g["modulus_required_ratio"].max()
    return out.reset_index()


def zone_design(store: Store, pattern=None, risers: pd.DataFrame | None = None) -> pd.DataFrame:
    """Per pattern, revision and zone: the weakest riser's assessed margins.

    risers: ``store.risers_frame()`` (of every pattern, or of ``pattern``)
    when the caller has it already; else it is fetched here.
    """
    if pattern is not None and not isinstance(pattern, str) and len(pattern) == 1:
        pattern = list(pattern)[0]  # one pattern's risers fetched, not every pattern's (what-if)
    if risers is None:
        risers = store.risers_frame(pattern=pattern if isinstance(pattern, str) else None)
    if pattern is not None:
        risers = risers[risers["pattern"].isin([pattern] if isinstance(pattern, str) else list(pattern))]
        risers = risers.reset_index(drop=True)
    if risers.empty:
        return pd.DataFrame(columns=["pattern", "revision", "effective_from", "zone", "riser", "alloy",
                                     "sleeve_kind", "thickness_mm", "passes", "rule_set",
                                     "modulus_target"] + MARGIN_COLS)
    a = assess_frame(risers)
    a["thickness_mm"] = risers["thickness_mm"].astype(float).to_numpy()
    keys = ["pattern", "revision", "zone"]
    g = a.groupby(keys, sort=False)
    rest = g.agg(effective_from=("effective_from", "first"), riser=("riser", lambda s: "+".join(sorted(s))),
                 passes=("passes", "all")).reset_index()
    return weakest_margins(a, keys).merge(rest, on=keys)


def _lots_with_revision(store: Store, lots: pd.DataFrame) -> pd.DataFrame:
    revs = store.revisions_frame()
    if lots.empty or revs.empty:
        return lots.assign(revision=pd.Series(dtype=object))
    lots = lots.assign(_d=pd.to_datetime(lots["poured_on"]))
    revs = revs.assign(_d=pd.to_datetime(revs["effective_from"]))
    merged = pd.merge_asof(lots.sort_values("_d"), revs.sort_values("_d")[["pattern", "revision", "_d"]],
                           on="_d", by="pattern", direction="backward")
    return merged.drop(columns="_d")


def zone_lot_features(store: Store, start: str | None = None, end: str | None = None,
                      pattern=None, *, lots: pd.DataFrame | None = None, rejects: pd.DataFrame | None = None,
                      risers: pd.DataFrame | None = None) -> pd.DataFrame:
    """One row per lot and riser zone, the model's feature table (FEATURE_COLUMNS).

    Lots poured before the pattern's first riser revision are left out (no
    design known). pour_temp_dev_c is the lot's pour temperature less the
    pattern's median, °C. lots, rejects, risers: ``store.lots_frame(start,
    end, pattern)``, ``store.rejects_by_lot(start, end, pattern)`` and
    ``store.risers_frame()`` when the caller has them already (each is
    fetched here otherwise).
    """
    if lots is None:
        lots = store.lots_frame(start, end, pattern)
    lots = _lots_with_revision(store, lots)
    lots = lots[lots["revision"].notna()] if "revision" in lots else lots.iloc[0:0]
    design = zone_design(store, pattern, risers)  # one pattern's risers only, when one is asked for
    if lots.empty or design.empty:
        return pd.DataFrame(columns=FEATURE_COLUMNS)
    temp = lots["pour_temp_c"].astype(float)
    lots = lots.assign(pour_temp_dev_c=temp - temp.groupby(lots["pattern"]).transform("median"))
    rows = lots[["lot", "pattern", "revision", "poured_on", "castings", "pour_temp_dev_c"]].merge(
        design.drop(columns=["effective_from"]), on=["pattern", "revision"])
    rej = store.rejects_by_lot(start, end, pattern) if rejects is None else rejects
    rej = rej[(rej["result"] == "reject") & (rej["defect"] == "shrinkage") & rej["zone"].notna()]
    rej = rej.groupby(["lot", "zone"], as_index=False).agg(shrinkage_rejects=("quantity", "sum"))
    rows = rows.merge(rej, on=["lot", "zone"], how="left")
    rows["shrinkage_rejects"] = rows["shrinkage_rejects"].fillna(0).astype(np.int64)
    rows["castings"] = rows["castings"].astype(np.int64)
    return rows[FEATURE_COLUMNS].reset_index(drop=True)


def aggregate_for_fit(features: pd.DataFrame, temp_bin_c: float = 5.0) -> pd.DataFrame:
    """Fewer, heavier rows for fitting: lots of one pattern, revision and zone
    with pour temperatures in the same bin share every feature, so their
    castings and rejects can be summed without changing the likelihood's
    information about the design terms."""
    if features.empty:
        return features
    f = features.copy()
    f["_tbin"] = np.round(f["pour_temp_dev_c"].fillna(0.0) / temp_bin_c) * temp_bin_c
    keys = ["pattern", "revision", "zone", "_tbin"]
    first = {c: "first" for c in ["riser", "alloy", "sleeve_kind", "thickness_mm", "passes", "rule_set",
                                  "modulus_target"] + MARGIN_COLS}
    out = f.groupby(keys, as_index=False).agg(castings=("castings", "sum"),
                                              shrinkage_rejects=("shrinkage_rejects", "sum"),
                                              poured_on=("poured_on", "max"), **{
                                                  k: (k, v) for k, v in first.items()})
    return out.rename(columns={"_tbin": "pour_temp_dev_c"})


def _lot_arrays(store: Store, patterns: list[str]) -> dict[str, np.ndarray]:
    """Every lot as compact columns (``Store.lot_batches``, never the whole table
    as Python rows): ``lot`` (codes, object), ``pattern`` (index into
    ``patterns``, -1 for another), ``day`` (datetime64[D] of the pour),
    ``castings`` and ``pour_temp_c`` (NaN where unknown)."""
    parts: dict[str, list] = {k: [] for k in ("lot", "pattern", "day", "castings", "pour_temp_c")}
    for batch in store.lot_batches():
        lot, pattern, day, castings, temp = zip(*batch, strict=False)
        del batch
        parts["lot"].append(np.array(lot, dtype=object))
        parts["pattern"].append(pd.Categorical(pattern, categories=patterns).codes.astype(np.int64))
        parts["day"].append(np.array(day, dtype="datetime64[D]"))
        parts["castings"].append(np.array(castings, dtype=np.int64))
        parts["pour_temp_c"].append(np.array(temp, dtype=float))  # None -> NaN
    empty: dict[str, Any] = {"lot": object, "pattern": np.int64, "day": "datetime64[D]", "castings": np.int64,
                             "pour_temp_c": float}
    return {k: np.concatenate(v) if v else np.array([], dtype=empty[k]) for k, v in parts.items()}


def fit_table(store: Store, temp_bin_c: float = 5.0) -> pd.DataFrame:
    """The model's training table for the whole log: the rows, columns and order of
    ``aggregate_for_fit(zone_lot_features(store), temp_bin_c)``, built without
    the table of one row per lot and zone (millions of rows at a large shop).

    Each lot is reduced to its pattern, revision in effect, pour temperature bin,
    castings and pour date; lots are summed per (revision, bin) before the
    zones of their revision are joined, and zoned shrinkage rejects per
    (revision, bin, zone). Lots are read in batches.
    """
    design = zone_design(store)
    revs = store.revisions_frame()
    if design.empty or revs.empty:
        return aggregate_for_fit(pd.DataFrame(columns=FEATURE_COLUMNS))
    codes = sorted(set(revs["pattern"]))  # a lot of any other pattern has no design
    lots = _lot_arrays(store, codes)
    groups, group_of_lot = _lot_groups(lots, _revision_of_lots(revs, codes, lots), temp_bin_c)
    rej = _zoned_rejects(store, lots, group_of_lot)
    del lots, group_of_lot

    out = pd.DataFrame({
        "_g": np.arange(len(groups)), "pattern": revs["pattern"].to_numpy()[groups["rev"]],
        "revision": revs["revision"].to_numpy()[groups["rev"]], "pour_temp_dev_c": groups["_tbin"].to_numpy(),
        "castings": groups["castings"].to_numpy(np.int64),
        "poured_on": np.datetime_as_string(groups["day"].to_numpy("datetime64[D]"), unit="D")})
    out = out.merge(design.drop(columns=["effective_from"]), on=["pattern", "revision"])
    out = out.merge(rej, on=["_g", "zone"], how="left")
    out["shrinkage_rejects"] = out["shrinkage_rejects"].fillna(0).astype(np.int64)
    columns = ["pattern", "revision", "zone", "pour_temp_dev_c", "castings", "shrinkage_rejects", "poured_on",
               "riser", "alloy", "sleeve_kind", "thickness_mm", "passes", "rule_set", "modulus_target"] + MARGIN_COLS
    out = out.sort_values(["pattern", "revision", "zone", "pour_temp_dev_c"], kind="stable")
    return out[columns].reset_index(drop=True)


def _revision_of_lots(revs: pd.DataFrame, codes: list, lots: dict) -> np.ndarray:
    """The row of ``revs`` in effect on each lot's pour date (the last of its
    pattern's from that day or before), -1 where none is."""
    r_pat = pd.Categorical(revs["pattern"], categories=codes).codes.astype(np.int64)
    r_day = np.array(revs["effective_from"].tolist(), dtype="datetime64[D]").astype(np.int64)
    key = lambda p, d: (p << 32) + (d + (1 << 31))  # noqa: E731 (pattern, day) in one sortable number
    order = np.argsort(key(r_pat, r_day), kind="stable")
    r_key = key(r_pat, r_day)[order]
    l_pat = lots["pattern"]
    at = np.searchsorted(r_key, key(l_pat, lots["day"].astype(np.int64)), side="right") - 1
    found = at >= 0
    found[found] = r_pat[order][at[found]] == l_pat[found]
    return np.where(found, order[np.maximum(at, 0)], -1)


def _lot_groups(lots: dict, rev: np.ndarray, temp_bin_c: float) -> tuple[pd.DataFrame, np.ndarray]:
    """Lots under a known design summed per (revision row, pour temperature
    bin): castings and last pour day per group, and each lot's group (-1
    where it has no design). The bin is the pour temperature less the
    pattern's median, to ``temp_bin_c``."""
    keep = np.flatnonzero(rev >= 0)
    temp = pd.Series(lots["pour_temp_c"][keep])
    dev = (temp - temp.groupby(lots["pattern"][keep]).transform("median")).to_numpy()
    tbin = np.round(np.nan_to_num(dev, nan=0.0) / temp_bin_c) * temp_bin_c
    kept = pd.DataFrame({"rev": rev[keep], "_tbin": tbin, "castings": lots["castings"][keep],
                         "day": lots["day"][keep]})
    grouped = kept.groupby(["rev", "_tbin"], sort=False)
    group_of_lot = np.full(len(rev), -1, dtype=np.int64)
    group_of_lot[keep] = grouped.ngroup().to_numpy()
    return grouped.agg(castings=("castings", "sum"), day=("day", "max")).reset_index(), group_of_lot


def _zoned_rejects(store: Store, lots: dict, group_of_lot: np.ndarray) -> pd.DataFrame:
    """Zoned shrinkage rejects per lot group (``_g``) and zone."""
    rej = store.rejects_by_lot()
    rej = rej[(rej["result"] == "reject") & (rej["defect"] == "shrinkage") & rej["zone"].notna()]
    where = pd.Index(lots["lot"]).get_indexer(rej["lot"])
    g = np.where(where >= 0, group_of_lot[np.maximum(where, 0)], -1)
    rej = pd.DataFrame({"_g": g, "zone": rej["zone"].to_numpy(), "shrinkage_rejects": rej["quantity"].to_numpy()})
    return rej[rej["_g"] >= 0].groupby(["_g", "zone"], as_index=False).agg(
        shrinkage_rejects=("shrinkage_rejects", "sum"))


ZONE_KEYS = ["pattern", "revision", "zone"]


def zone_shrinkage_rates(store: Store, start: str | None = None, end: str | None = None, patterns=None, *,
                         features: pd.DataFrame | None = None) -> pd.DataFrame:
    """A zone's shrinkage reject rate over the castings poured from ``start`` to
    ``end`` (ISO days, inclusive; None: no bound), per pattern, revision and zone:
    the one computation of the figure the design map and the suggestions show.
    Columns ``pattern``, ``revision``, ``zone``, ``lots``, ``castings`` (poured),
    ``shrinkage_rejects`` and ``shrinkage_rate`` (a fraction; NaN where nothing
    was poured). ``features``: the window's :func:`zone_lot_features` when the
    caller has them already (then ``start``, ``end`` and ``patterns`` are not read)."""
    f = zone_lot_features(store, start, end, patterns) if features is None else features
    g = f.groupby(ZONE_KEYS, as_index=False).agg(lots=("lot", "count"), castings=("castings", "sum"),
                                                 shrinkage_rejects=("shrinkage_rejects", "sum"))
    castings = g["castings"].to_numpy(np.float64)
    g["shrinkage_rate"] = np.divide(g["shrinkage_rejects"].to_numpy(np.float64), castings,
                                    out=np.full(len(g), np.nan), where=castings > 0)
    return g


def design_map(store: Store, start: str | None = None, end: str | None = None, alloy=None,
               pattern=None) -> pd.DataFrame:
    """Per pattern, revision and zone: design point (volume ratio, freezing
    ratio), castings poured and shrinkage reject rate with its Wilson interval."""
    f = zone_lot_features(store, start, end, pattern)
    cols = ["pattern", "revision", "zone", "riser", "alloy", "volume_ratio", "freezing_ratio",
            "modulus_ratio", "caine_margin", "feed_margin", "passes", "sleeve_kind", "lots", "castings",
            "shrinkage_rejects", "shrinkage_rate", "wilson_low", "wilson_high", "rule_set", "modulus_target"]
    if f.empty:
        return pd.DataFrame(columns=cols)
    if alloy:
        f = f[f["alloy"].isin([alloy] if isinstance(alloy, str) else list(alloy))]
    design = f.groupby(ZONE_KEYS, as_index=False).agg(
        riser=("riser", "first"), alloy=("alloy", "first"), volume_ratio=("volume_ratio", "first"),
        freezing_ratio=("freezing_ratio", "first"), modulus_ratio=("modulus_ratio", "first"),
        caine_margin=("caine_margin", "first"), feed_margin=("feed_margin", "first"),
        passes=("passes", "first"), sleeve_kind=("sleeve_kind", "first"),
        rule_set=("rule_set", "first"), modulus_target=("modulus_target", "first"))
    g = design.merge(zone_shrinkage_rates(store, features=f), on=ZONE_KEYS)
    lo, hi = wilson_interval(g["shrinkage_rejects"].to_numpy(), g["castings"].to_numpy())
    g["wilson_low"], g["wilson_high"] = lo, hi
    return g[cols]
