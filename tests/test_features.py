import numpy as np
import pytest

from tracker.features import aggregate_for_fit, design_map, zone_lot_features


def test_features_tie_rejects_to_zone_and_design(demo_store):
    f = zone_lot_features(demo_store)
    rej = demo_store.rejects_by_lot()
    shrink = rej[(rej.result == "reject") & (rej.defect == "shrinkage") & rej.zone.notna()]
    # every zoned shrinkage reject lands on exactly one feature row
    assert f["shrinkage_rejects"].sum() == shrink["quantity"].sum()
    assert (f["shrinkage_rejects"] <= f["castings"]).all()
    # one row per lot and zone
    assert not f.duplicated(["lot", "zone"]).any()
    # each lot is judged by the revision in effect on its pour date
    revs = demo_store.revisions_frame()
    multi = revs.groupby("pattern").filter(lambda g: len(g) > 1)
    assert not multi.empty
    for pattern, g in multi.groupby("pattern"):
        second = g.sort_values("effective_from").iloc[1]
        rows = f[f["pattern"] == pattern]
        after = rows["poured_on"] >= second["effective_from"]
        assert (rows.loc[after, "revision"] == second["revision"]).all()
        assert (rows.loc[~after, "revision"] != second["revision"]).all()


def test_aggregation_keeps_totals(demo_store):
    f = zone_lot_features(demo_store)
    a = aggregate_for_fit(f)
    assert len(a) < len(f)
    assert a["castings"].sum() == f["castings"].sum()
    assert a["shrinkage_rejects"].sum() == f["shrinkage_rejects"].sum()


def test_design_map_rates_and_wilson(demo_store):
    from statsmodels.stats.proportion import proportion_confint

    d = design_map(demo_store)
    assert {"volume_ratio", "freezing_ratio", "castings", "shrinkage_rate"} <= set(d.columns)
    row = d.sort_values("shrinkage_rate").iloc[-1]
    # Wilson interval: statsmodels proportion_confint(method="wilson")
    lo, hi = proportion_confint(row["shrinkage_rejects"], row["castings"], method="wilson")
    assert (row["wilson_low"], row["wilson_high"]) == pytest.approx((lo, hi))
    assert design_map(demo_store, alloy="ductile_iron")["alloy"].eq("ductile_iron").all()


def test_empty_log_gives_empty_tables(mem_store):
    assert zone_lot_features(mem_store).empty
    assert design_map(mem_store).empty
