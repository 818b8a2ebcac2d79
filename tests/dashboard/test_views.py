"""tracker.views: the display tables the dashboard shows.

Counts are checked against hand-counted rows of tests/data/good (T-100: lot
L1 poured 2026-03-02, 10 molds x 2 = 20 castings, 3 shrinkage rejects in zone
flange; lot L2 poured 2026-03-09, 16 castings, 1 sand reject; T-200: lot L3,
20 castings, none rejected) and against the demo log.
"""

import datetime as dt
import math

import numpy as np
import pandas as pd
import pytest

from tests.support import BACKENDS, GOOD, LogFactory
from tests.support import views_kit as views
from tracker.errors import BadFile, NotFound
from tracker.log.ingest import import_dir, import_file, log_inspection
from tracker.log.store import Store


@pytest.fixture(scope="module", params=BACKENDS)
def good_log(request, tmp_path_factory):
    """tests/data/good imported once per backend for this module, and its rows."""
    factory = LogFactory(request.param, tmp_path_factory.mktemp(f"views-good-{request.param}"))
    try:
        with Store(factory.new("good")) as s:
            import_dir(s, GOOD)
            yield s, s.snapshot()
    finally:
        factory.close()


@pytest.fixture
def good_read(good_log):
    """The module's shared good log, for a test that only reads it (or sees an import
    refused), checked to hold exactly what was imported."""
    s, rows = good_log
    assert s.snapshot() == rows, "an earlier test changed the shared good log"
    return s


# --- data version ---------------------------------------------------------------------

def test_db_version_changes_on_write_only(file_store):
    from tests.support import GOOD
    from tracker.log.ingest import import_dir

    path = file_store.path
    first = views.db_version(path)
    assert views.db_version(path) == first
    import_dir(file_store, GOOD)
    assert views.db_version(path) != first


def test_db_version_of_missing_file_is_zeros(tmp_path):
    assert views.db_version(tmp_path / "nothing.db") == (0, 0, 0, 0)


# --- start state ----------------------------------------------------------------------

def test_start_state_empty(mem_store):
    s = views.start_state(mem_store)
    assert s["ready"] is False and s["has_design"] is False
    assert s["missing"] == ["patterns", "zones", "risers", "lots", "inspections"]
    assert set(s["counts"].values()) == {0}


def test_start_state_filled(good_read):
    s = views.start_state(good_read)
    assert s["ready"] and s["has_design"] and s["missing"] == []
    assert s["counts"]["lots"] == 3


# --- pickers --------------------------------------------------------------------------

def test_lot_options_newest_first_with_castings(good_read):
    lots = views.lot_options(good_read)
    assert lots["lot"].tolist() == ["L2", "L3", "L1"]  # poured 03-09, 03-03, 03-02
    assert lots.set_index("lot").loc["L1", "castings"] == 20
    assert lots.set_index("lot").loc["L1", "label"] == "L1 · T-100 · poured 2026-03-02 · 20 castings"


def test_lot_options_empty(mem_store):
    assert views.lot_options(mem_store).empty


def test_zone_options(good_read):
    assert views.zone_options(good_read, "T-100") == ["body", "flange"]
    assert views.zone_options(good_read, None) == []
    assert views.zone_options(good_read, "NOPE") == []


def test_pattern_and_alloy_options(good_read):
    p = views.pattern_options(good_read)
    assert p["label"].tolist() == ["T-100 · test valve body (steel)", "T-200 · test bracket (aluminum)"]
    assert views.alloy_options(good_read) == ["aluminum", "steel"]


def test_sleeve_options_label(demo_store):
    s = views.sleeve_options(demo_store).set_index("sleeve")
    assert s.loc["XS-160", "label"] == "XS-160 · exothermic · 160 x 200 mm · factor 1.42"


def test_riser_options_take_the_newest_revision(demo_store):
    r = views.riser_options(demo_store)
    # P-1031 revision 2 (2026-08-24) fitted R1 with the XS-160 sleeve.
    row = r[(r["pattern"] == "P-1031") & (r["riser"] == "R1")].iloc[0]
    assert row["revision"] == "2" and row["sleeve"] == "XS-160"
    assert row["label"] == "P-1031 · R1 on volute · 160 mm, sleeve XS-160"
    assert not r.duplicated(["pattern", "riser"]).any()
    on_old = views.riser_options(demo_store, on="2026-08-23")
    assert on_old.set_index(["pattern", "riser"]).loc[("P-1031", "R1"), "revision"] == "1"


# --- logging --------------------------------------------------------------------------

def test_form_record_blanks_and_none_choice_become_none():
    rec = views.form_record({"lot": " L1 ", "inspected_on": dt.date(2026, 3, 5), "method": "visual",
                             "quantity": 2, "result": "reject", "defect": "sand", "zone": views.NONE,
                             "xray_category": views.NONE, "severity": views.NONE, "serial": "",
                             "inspector": "  ", "notes": "rough", "recorded_by": "QE", "junk": 1})
    assert rec["lot"] == "L1"
    assert rec["inspected_on"] == "2026-03-05"
    assert rec["zone"] is None and rec["xray_category"] is None and rec["severity"] is None
    assert rec["serial"] is None and rec["inspector"] is None
    assert rec["quantity"] == 2 and rec["notes"] == "rough"
    assert "junk" not in rec and "recorded_by" not in rec


def test_form_record_is_accepted_by_log_inspection(good_store):
    rec = views.form_record({"lot": "L3", "inspected_on": dt.date(2026, 3, 6), "method": "dimensional",
                             "quantity": 1, "result": "reject", "defect": "misrun", "zone": views.NONE,
                             "xray_category": views.NONE, "severity": views.NONE})
    rid = log_inspection(good_store, rec, by="tester", source="dashboard", today=dt.date(2026, 3, 7))
    latest = views.latest_records(good_store, limit=1)
    assert latest["record"].iat[0] == rid
    assert latest["recorded by"].iat[0] == "tester"
    assert latest["source"].iat[0] == "dashboard"
    assert latest["status"].iat[0] == "current"


def test_latest_records_units_order_and_status(good_store):
    from tracker.log.ingest import correct_inspection

    first = views.latest_records(good_store, limit=50)
    assert "quantity (castings)" in first.columns and "severity (1-5)" in first.columns
    assert first["record"].tolist() == sorted(first["record"], reverse=True)
    assert len(views.latest_records(good_store, limit=2)) == 2
    old = int(first["record"].iat[-1])
    new = correct_inspection(good_store, old, {"quantity": 19}, by="QE", reason="recount",
                             today=dt.date(2026, 3, 8))
    again = views.latest_records(good_store).set_index("record")
    assert again.loc[old, "status"] == f"superseded by {new}"
    assert again.loc[new, "status"] == "current"


def test_latest_records_empty(mem_store):
    t = views.latest_records(mem_store)
    assert t.empty and "status" in t.columns


def test_problems_frame_lists_every_refused_row(good_read, tmp_path):
    bad = tmp_path / "inspections.csv"
    bad.write_text("lot,inspected_on,method,quantity,result\n"
                   "L3,2026-03-05,dimensional,1,accept\n"
                   "NOPE,2026-03-05,visual,1,accept\n"
                   "L1,2026-03-05,visual,-3,accept\n", encoding="utf-8")
    with pytest.raises(BadFile) as err:
        import_file(good_read, "inspections", bad, today=dt.date(2026, 3, 10))
    table = views.problems_frame(err.value.problems)
    assert table.columns.tolist() == ["row", "column", "reason"]
    assert table["row"].tolist() == [3, 4]
    assert table["column"].tolist() == ["lot", "quantity"]


# --- weeks and pattern history ----------------------------------------------------------

def test_week_options(good_store, file_store):
    assert views.week_options(good_store) == ["2026-W11", "2026-W10"]
    assert views.week_options(file_store) == []


def test_pattern_weekly_hand_counted(good_read):
    w = views.pattern_weekly(good_read, "T-100").set_index("week")
    assert w.index.tolist() == ["2026-W10", "2026-W11"]
    assert w.loc["2026-W10", ["poured", "inspected", "rejected", "shrinkage_rejected"]].tolist() == [20, 20, 3, 3]
    assert w.loc["2026-W11", ["poured", "inspected", "rejected", "shrinkage_rejected"]].tolist() == [16, 16, 1, 0]
    assert w.loc["2026-W10", "reject_rate_pct"] == pytest.approx(15.0)
    assert w.loc["2026-W11", "reject_rate_pct"] == pytest.approx(100 / 16)
    assert w.loc["2026-W10", "week_start"] == dt.date(2026, 3, 2)


def test_pattern_weekly_fills_gap_weeks(good_store, tmp_path):
    # A lot two weeks after L2, not inspected yet: the week between is kept, empty.
    f = tmp_path / "lots.csv"
    f.write_text("lot,pattern,poured_on,heat,molds\nL9,T-100,2026-03-23,H9,4\n", encoding="utf-8")
    import_file(good_store, "lots", f, today=dt.date(2026, 3, 30))
    w = views.pattern_weekly(good_store, "T-100").set_index("week")
    assert w.index.tolist() == ["2026-W10", "2026-W11", "2026-W12", "2026-W13"]
    assert w.loc["2026-W12", "poured"] == 0 and math.isnan(w.loc["2026-W12", "reject_rate_pct"])
    # poured but not inspected: no rate (it would flatter the pattern)
    assert w.loc["2026-W13", "poured"] == 8 and w.loc["2026-W13", "inspected"] == 0
    assert math.isnan(w.loc["2026-W13", "reject_rate_pct"])


def test_pattern_weekly_unknown_pattern(good_read):
    with pytest.raises(NotFound, match="unknown pattern 'NOPE'"):
        views.pattern_weekly(good_read, "NOPE")


def test_pattern_weekly_matches_the_review(demo_store):
    from tracker.review.weekly import weekly_review

    r = weekly_review(demo_store, week="2026-W47", weeks=13)
    row = next(p for p in r["patterns"] if p["pattern"] == "P-1017")
    w = views.pattern_weekly(demo_store, "P-1017", r["window"]["start"], r["window"]["end"])
    assert int(w["poured"].sum()) == row["poured"]
    assert int(w["rejected"].sum()) == row["rejected"]
    assert int(w["shrinkage_rejected"].sum()) == row["shrinkage_rejected"]


def test_pattern_summary(good_read):
    s = views.pattern_summary(good_read, "T-100")
    assert (s["lots"], s["poured"], s["inspected"], s["rejected"]) == (2, 36, 36, 4)
    assert s["reject_rate_pct"] == pytest.approx(400 / 36)
    assert s["first_pour"] == "2026-03-02" and s["last_pour"] == "2026-03-09"
    assert [r["revision"] for r in s["revisions"]] == ["A"]


def test_risers_by_revision_demo_story(demo_store):
    t = views.risers_by_revision(demo_store, "P-1031")
    assert {"diameter (mm)", "riser weight (kg)", "modulus ratio", "Caine margin"} <= set(t.columns)
    assert set(views.DESIGN_PART) <= set(t.columns) and set(views.MARGIN_PART) <= set(t.columns)
    r1 = t[t["riser"] == "R1"].set_index("revision")
    # Revision 1: a bare 140 mm top riser failing all three rules; revision 2 (XS-160) passes.
    assert r1.loc["1", "diameter (mm)"] == 140 and r1.loc["1", "sleeve"] == "none"
    assert not r1.loc["1", "passes all rules"]
    assert set(r1.loc["1", "failed rules"].split(", ")) >= {"modulus", "Caine", "feed volume"}
    assert r1.loc["2", "passes all rules"] and r1.loc["2", "failed rules"] == "none"
    assert r1.loc["2", "sleeve"] == "XS-160"


def test_risers_by_revision_blank_caine_without_constants(demo_store):
    iron = demo_store.table("patterns").query("alloy == 'ductile_iron'")["pattern"].iat[0]
    t = views.risers_by_revision(demo_store, iron)
    assert t["Caine margin"].isna().all()
    assert t["modulus ratio"].notna().all()


def test_revision_marks(demo_store):
    m = views.revision_marks(demo_store, "P-1031")
    assert m["revision"].tolist() == ["1", "2"]
    assert m["effective_from"].iat[1] == dt.date(2026, 8, 24)
    assert m["week"].iat[1] == "2026-W35"
    assert m["label"].iat[1] == "revision 2"


# --- design map ---------------------------------------------------------------------------

def test_caine_curve_lies_on_the_curve(demo_store):
    c = views.caine_curve(demo_store, "steel", y_max=1.5, x_max=3.0)
    # Caine's constants for steel, textbook table (from memory): a 0.10, b 0.03, c 1.00.
    expected = 0.10 / (c["volume_ratio"] - 0.03) + 1.00
    np.testing.assert_allclose(c["freezing_ratio"], expected)
    assert c["freezing_ratio"].max() <= 3.0
    assert c["volume_ratio"].max() == pytest.approx(1.5)


def test_caine_curve_none_for_ductile_iron(demo_store):
    assert views.caine_curve(demo_store, "ductile_iron") is None


def test_caine_curve_unknown_alloy(demo_store):
    with pytest.raises(NotFound, match="unknown alloy 'unobtainium'"):
        views.caine_curve(demo_store, "unobtainium")


def _map_frame():
    return pd.DataFrame({
        "pattern": ["A", "A", "B", "C"], "revision": ["1", "1", "1", "1"], "zone": ["z1", "z2", "z1", "z1"],
        "riser": ["R1", "R2", "R1", "R1"], "alloy": ["steel", "steel", "steel", "aluminum"],
        "volume_ratio": [0.5, 0.8, np.nan, 0.6], "freezing_ratio": [1.1, 1.3, 1.2, 1.4],
        "passes": [False, True, True, True], "castings": [100, 200, 50, 80],
        "shrinkage_rejects": [10, 1, 0, 0], "shrinkage_rate": [0.10, 0.005, 0.0, 0.0],
        "wilson_low": [0.05, 0.001, 0.0, 0.0], "wilson_high": [0.17, 0.03, 0.07, 0.05]})


def test_filter_design_map():
    f = views.filter_design_map(_map_frame(), "steel")
    assert f["pattern"].tolist() == ["A", "A"]  # B has no volume ratio: nothing to place
    assert f["shrinkage_rate_pct"].tolist() == pytest.approx([10.0, 0.5])
    assert f["rules_text"].tolist() == ["fails a rule", "passes every rule"]
    assert views.filter_design_map(_map_frame(), "steel", ["B"]).empty
    assert len(views.filter_design_map(_map_frame())) == 3


def test_design_map_summary_and_table():
    f = views.filter_design_map(_map_frame(), "steel")
    assert views.design_map_summary(f) == {"zones": 2, "castings": 300, "shrinkage_rejects": 11,
                                           "failing": 1, "superseded": 0, "flagged_patterns": 0,
                                           "rate_pct": pytest.approx(11 / 3), "max_rate_pct": 10.0}
    # a later revision of A: its zones are superseded, shown apart and not counted as failing
    old = views.filter_design_map(_map_frame(), "steel", current={"A": "2"}, flagged=["A"])
    assert old["design"].tolist() == [views.SUPERSEDED] * 2
    assert views.design_map_summary(old)["failing"] == 0 and views.design_map_summary(old)["superseded"] == 2
    now = views.filter_design_map(_map_frame(), "steel", current={"A": "1"}, flagged=["A"])
    assert now["design"].tolist() == [views.IN_USE_FLAGGED] * 2 and views.design_map_summary(now)["failing"] == 1
    t = views.design_map_table(f)
    assert t["zone"].tolist() == ["z1", "z2"]  # worst rate first
    assert "shrinkage rate (%)" in t.columns and "castings poured" in t.columns
    assert views.design_map_summary(f.iloc[0:0])["zones"] == 0


def test_filter_design_map_on_the_demo(demo_store):
    from tracker.advice.features import design_map

    f = views.filter_design_map(design_map(demo_store), "steel", ["P-1017"])
    zone = f.set_index("zone")
    # The planted story: flange-B (undersized R3) scraps far more than its twin flange-A.
    assert zone.loc["flange-B", "shrinkage_rate_pct"] > 5 * zone.loc["flange-A", "shrinkage_rate_pct"]
    assert zone.loc["flange-B", "rules_text"] == "fails a rule (modulus sequence)"
    # Ductile iron is judged by pressure control, and the map says so.
    di = views.filter_design_map(design_map(demo_store), "ductile_iron")
    assert di["rules_text"].str.endswith("(pressure control)").all()


# --- suggestions ---------------------------------------------------------------------------

def test_suggestions_table_percentages_and_order():
    rows = [{"pattern": "P", "zone": "z", "riser": "R1", "action": "enlarge_and_sleeve",
             "current_diameter_mm": 90.0, "current_sleeve": None, "suggested_diameter_mm": 120.0,
             "suggested_sleeve": "XS-120", "reject_rate": 0.12, "predicted_rate_now": 0.033,
             "predicted_rate_after": 0.005, "added_metal_kg_per_mold": 3.5, "yield_before": 0.65,
             "yield_after": 0.6, "scrap_saved_per_year": 1500.0, "extra_cost_per_year": 500.0,
             "yearly_balance": 1000.0, "pays_off": True, "reason": "why not", "extra": 1}]
    t = views.suggestions_table(rows)
    assert t.columns.tolist() == list(views.SUGGESTION_COLUMNS.values())
    r = t.iloc[0]
    assert r["action"] == "enlarge and sleeve"
    assert r["observed now (%)"] == pytest.approx(12.0)
    assert r["predicted now (%)"] == pytest.approx(3.3)
    assert r["predicted after (%)"] == pytest.approx(0.5)
    assert r["pays off"] == "yes" and r["balance (currency units/year)"] == 1000.0
    assert r["yield after (%)"] == pytest.approx(60.0)
    assert r["now: sleeve"] == "none"
    assert set(views.CHANGE_PART) <= set(t.columns) and set(views.BALANCE_PART) <= set(t.columns)


def test_suggestions_table_blank_sleeve_without_a_riser():
    rows = [{"pattern": "P", "zone": None, "riser": None, "action": "no_riser_change",
             "current_sleeve": None, "suggested_sleeve": None, "reject_rate": 0.05},
            {"pattern": "Q", "zone": "z", "riser": "R1", "action": "enlarge",
             "current_sleeve": None, "suggested_sleeve": None, "reject_rate": 0.05}]
    t = views.suggestions_table(rows)
    assert t["now: sleeve"].tolist() == [None, "none"]
    assert t["suggested: sleeve"].tolist() == [None, "none"]


def test_suggestions_table_no_change_shows_no_money():
    rows = [{"pattern": "P", "zone": None, "riser": None, "action": "no_riser_change", "reject_rate": 0.05,
             "predicted_rate_now": None, "predicted_rate_after": None, "yearly_balance": 0.0,
             "scrap_saved_per_year": 0.0, "extra_cost_per_year": 0.0, "pays_off": False}]
    r = views.suggestions_table(rows).iloc[0]
    assert r["pays off"] is None and np.isnan(r["balance (currency units/year)"])


def test_sleeve_options_smallest_first(demo_store):
    s = views.sleeve_options(demo_store)
    assert s["inner_diameter_mm"].is_monotonic_increasing and len(s) == len(demo_store.table("sleeves"))


def test_suggestions_table_empty():
    assert views.suggestions_table([]).columns.tolist() == list(views.SUGGESTION_COLUMNS.values())


def test_what_if_margins():
    res = {"modulus_ratio": 1.5, "modulus_ratio_now": 0.9, "caine_margin": 0.2, "caine_margin_now": -0.3,
           "feed_margin": 1.0, "feed_margin_now": 0.1}
    m = views.what_if_margins(res).set_index(["rule", "design"])["margin"]
    # the modulus rule asks 1.2 (Wlodawer; common practice)
    assert m[("modulus rule", "now")] == pytest.approx(-0.3)
    assert m[("modulus rule", "changed")] == pytest.approx(0.3)
    assert m[("Caine's curve", "now")] == pytest.approx(-0.3)
    assert m[("feed volume", "changed")] == pytest.approx(1.0)
    no_caine = views.what_if_margins({**res, "caine_margin": None, "caine_margin_now": None})
    assert "Caine's curve" not in set(no_caine["rule"])


# --- weekly review -----------------------------------------------------------------------------

@pytest.fixture(scope="module")
def review(demo_db):
    from tracker.log.store import Store
    from tracker.review.weekly import weekly_review

    with Store(demo_db) as s:
        return weekly_review(s, week="2026-W47", weeks=13, target=0.02)


def test_review_headline(review):
    h = views.review_headline(review)
    t = review["totals"]["window"]
    assert h["window"]["rejected"] == t["rejected"]
    assert h["window"]["reject_rate_pct"] == pytest.approx(100 * t["reject_rate"])
    assert h["problems"] == review["problems"] and h["target_pct"] == pytest.approx(2.0)


def test_review_patterns_table(review):
    t = views.review_patterns_table(review)
    assert t["pattern"].tolist() == [p["pattern"] for p in review["patterns"]]
    first = review["patterns"][0]
    assert t["reject rate (%)"].iat[0] == pytest.approx(100 * first["reject_rate"])
    assert t["95 % range (%)"].iat[0] == f"{100 * first['wilson_low']:.1f} to {100 * first['wilson_high']:.1f}"
    flagged = t.set_index("pattern")["flagged because"]
    assert "shrinkage rate above target" in flagged["P-1017"]
    assert flagged[t["pattern"][~t["pattern"].isin(review["problems"])].iat[0]] == ""


@pytest.mark.parametrize("of,by,item,total", [
    ("patterns", "cost", "pattern", "scrap_cost"), ("patterns", "count", "pattern", "rejected"),
    ("defects", "cost", "defect", "scrap_cost"), ("defects", "count", "defect", "rejected")])
def test_review_pareto_adds_up(review, of, by, item, total):
    d = views.review_pareto(review, of, by)
    assert d.columns.tolist() == [item, "value", "share_pct", "cumulative_pct", "vital_few", "rank"]
    assert d["value"].sum() == pytest.approx(review["totals"]["window"][total])
    assert d["cumulative_pct"].iat[-1] == pytest.approx(100.0)
    assert d["value"].is_monotonic_decreasing and (d["value"] > 0).all()


def test_review_pareto_refuses_unknown(review):
    from tracker.errors import BadInput

    with pytest.raises(BadInput):
        views.review_pareto(review, "heats", "cost")


def test_review_trend(review):
    t = views.review_trend(review)
    assert len(t) == 13 and t["week"].iat[-1] == "2026-W47"
    assert t["week_start"].iat[-1] == dt.date(2026, 11, 16)
    assert (t["wilson_low_pct"] <= t["reject_rate_pct"]).all()
    assert (t["reject_rate_pct"] <= t["wilson_high_pct"]).all()


def test_review_pchart(review):
    c = views.review_pchart(review, "P-1017")
    assert len(c) == 13
    empty = c["inspected"] == 0
    assert (c.loc[empty, "status"] == "nothing inspected").all()
    assert set(c.loc[~empty, "status"]) <= {"in control", "signal"}
    assert c["p_pct"].dropna().tolist() == pytest.approx((100 * c["p"]).dropna().tolist())
    with pytest.raises(NotFound):
        views.review_pchart(review, "NOT-POURED")


def test_review_revisions_table_demo_story(review):
    t = views.review_revisions_table(review).set_index("pattern")
    row = t.loc["P-1031"]
    assert row["revision"] == "2 (was 1)"
    assert row["verdict"] == "improved"
    assert "sleeve none → XS-160" in row["what changed"]
    r = next(x for x in review["revisions"] if x["pattern"] == "P-1031")
    assert row["before: shrinkage rejects"].startswith(
        f"{r['before']['shrinkage_rejected']} of {r['before']['inspected']} castings")


def test_review_changes(review):
    ch = views.review_changes(review)
    assert ch["previous_week"] == "2026-W46"
    raw = review["changes"]
    assert len(ch["rate_moves"]) == len(raw["rate_moves"])
    assert ch["still_problems"] == raw["still_problems"]
    assert all(" % → " in line for line in ch["rate_moves"])


def test_signal_and_reason_words():
    assert views.signal_words(["beyond_limit", "run_of_8"]) == \
        "point beyond a limit, 8 or more weeks on one side"
    assert views.signal_words([]) == "" and views.signal_words(None) == ""
    assert views.reason_words(["signal:run_of_8", "rejects_above_target"]) == \
        "chart: 8 or more weeks above the centre, reject rate above target"


def test_verdict_in_plain_words_first_with_the_statistics_apart(app_demo_db):
    from scipy import stats as sps

    from tracker.log.store import Store
    from tracker.review.weekly import weekly_review

    with Store(app_demo_db) as s:
        rev = next(r for r in weekly_review(s, "2026-W47")["revisions"] if r["pattern"] == "P-1031")
    b, a = rev["before"], rev["after"]
    # scipy.stats.fisher_exact on the shrinkage rejects before and after
    p = sps.fisher_exact([[b["shrinkage_rejected"], b["inspected"] - b["shrinkage_rejected"]],
                          [a["shrinkage_rejected"], a["inspected"] - a["shrinkage_rejected"]]]).pvalue
    assert p < 0.001
    before = f"{100 * b['shrinkage_rejected'] / b['inspected']:.1f} %"
    after = "0 %" if a["shrinkage_rejected"] == 0 else f"{100 * a['shrinkage_rejected'] / a['inspected']:.1f} %"
    assert views.verdict_sentence(rev) == f"improved: shrinkage fell from {before} to {after}, very unlikely to be chance"
    details = views.verdict_details(rev)
    assert f"p = {p:.2g}" in details and "%" in details and "halving" in details


@pytest.mark.parametrize("verdict,p,start", [
    ("worse", 0.004, "worse: shrinkage rose from 2 % to 6 %, unlikely to be chance"),
    ("no_clear_change", 0.4, "no clear change: shrinkage went from 2 % to 6 %, which could well be chance"),
    ("not_enough_data", 0.4, "not enough data yet: shrinkage 2 % before, 6 % in the 50 castings inspected since"),
])
def test_verdict_words_for_each_verdict(verdict, p, start):
    rev = {"verdict": verdict, "p_value": p, "rate_before": 0.02, "rate_after": 0.06,
           "before": {"inspected": 500, "shrinkage_rejected": 10}, "after": {"inspected": 50, "shrinkage_rejected": 3}}
    assert views.verdict_sentence(rev).startswith(start)
