"""Tests of tracker.review.weekly (the weekly scrap review).

Reference figures come from outside the project: statsmodels for the Wilson
interval, the NIST/SEMATECH e-Handbook 6.3.3.2 formula for p-chart limits
(computed here by hand), scipy for Fisher's exact test. Counts are recomputed
from the raw CSV files with pandas, not through the store.
"""

import datetime as dt
import json
import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats as sps
from statsmodels.stats.proportion import proportion_confint

from tests.support import GOOD, REPO
from tests.support.review import TODAY, write_log
from tracker.errors import BadInput
from tracker.log.ingest import correct_inspection, import_dir, log_inspection
from tracker.log.store import Store
from tracker.review import stats
from tracker.review.weekly import PATTERN_KEYS, p_charts, problem_patterns, weekly_review

ROOT = REPO

try:
    from tracker import demo
except ImportError:  # pragma: no cover - the demo module is optional
    demo = None

needs_demo = pytest.mark.skipif(demo is None, reason="tracker.demo is not available")


# --- fixtures and helpers ---------------------------------------------------------------

@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory):
    if demo is None:
        pytest.skip("tracker.demo is not available")
    sample = ROOT / "sample_data"
    if (sample / "inspections.csv").is_file():
        return sample
    out = tmp_path_factory.mktemp("demo")
    demo.generate(out)
    return out


@pytest.fixture(scope="module")
def demo_store(demo_dir):
    s = Store(":memory:")
    import_dir(s, demo_dir, today=TODAY)
    yield s
    s.close()


@pytest.fixture(scope="module")
def demo_review(demo_store):
    return weekly_review(demo_store, "2026-W47")


@pytest.fixture(scope="module")
def demo_csv(demo_dir):
    return {k: pd.read_csv(demo_dir / f"{k}.csv", dtype={"revision": str, "zone": str})
            for k in ("patterns", "lots", "inspections", "risers")}


@pytest.fixture
def good_store():
    s = Store(":memory:")
    import_dir(s, GOOD, today=TODAY)
    yield s
    s.close()


def weekly_log(folder, series: dict[str, list[int]], end_week="2026-W20", castings=100):
    """One pattern per key, one lot a week (10 molds x 10 castings), ``k`` rejects in week i."""
    end = stats.week_start(end_week)
    patterns, lots, insp = [], [], []
    for code, rejects in series.items():
        patterns.append({"pattern": code, "description": f"simulated {code}", "alloy": "steel",
                         "casting_weight_kg": 10, "castings_per_mold": 10, "metal_cost_per_kg": 2,
                         "processing_cost_per_casting": 5})
        for i, k in enumerate(rejects):
            day = end - dt.timedelta(weeks=len(rejects) - 1 - i) + dt.timedelta(days=1)
            lot = f"{code}-{i:02d}"
            lots.append({"lot": lot, "pattern": code, "poured_on": day.isoformat(), "heat": "H1",
                         "molds": castings // 10})
            insp.append({"lot": lot, "inspected_on": day.isoformat(), "method": "visual",
                         "quantity": castings - k, "result": "accept"})
            if k:
                insp.append({"lot": lot, "inspected_on": day.isoformat(), "method": "visual",
                             "quantity": k, "result": "reject", "defect": "shrinkage", "zone": ""})
    return write_log(folder, patterns, lots, insp)


def by_code(review):
    return {p["pattern"]: p for p in review["patterns"]}


def window_lots(csvs, review):
    """Lots of the review window with castings and the week they were poured in."""
    lots = csvs["lots"].merge(csvs["patterns"][["pattern", "castings_per_mold"]], on="pattern")
    lots["castings"] = lots["molds"] * lots["castings_per_mold"]
    w = review["window"]
    lots = lots[(lots["poured_on"] >= w["start"]) & (lots["poured_on"] <= w["end"])].copy()
    lots["week"] = stats.iso_week(lots["poured_on"])
    return lots


# --- figures per pattern ------------------------------------------------------------------

@needs_demo
def test_demo_per_pattern_wilson_matches_statsmodels(demo_review, demo_csv):
    lots = window_lots(demo_csv, demo_review)
    insp = demo_csv["inspections"].merge(lots[["lot", "pattern"]], on="lot")
    rejected = insp[insp["result"] == "reject"].groupby("pattern")["quantity"].sum()
    inspected = lots[lots["lot"].isin(insp["lot"])].groupby("pattern")["castings"].sum()
    pats = demo_review["patterns"]
    assert len(pats) == lots["pattern"].nunique() > 20
    for p in pats:
        # counts recomputed from the CSV files with pandas
        assert p["rejected"] == rejected.get(p["pattern"], 0)
        assert p["inspected"] == inspected[p["pattern"]]
        # statsmodels proportion_confint, method="wilson"
        low, high = proportion_confint(p["rejected"], p["inspected"], alpha=0.05, method="wilson")
        assert p["wilson_low"] == pytest.approx(low, abs=1e-12)
        assert p["wilson_high"] == pytest.approx(high, abs=1e-12)
        assert p["reject_rate"] == pytest.approx(p["rejected"] / p["inspected"])
        assert set(PATTERN_KEYS) <= set(p)


@needs_demo
def test_demo_scrap_cost_and_rework(demo_review, demo_csv):
    costs = demo_csv["patterns"].set_index("pattern")
    lots = window_lots(demo_csv, demo_review)
    insp = demo_csv["inspections"].merge(lots[["lot", "pattern"]], on="lot")
    reworked = insp[insp["result"] == "rework"].groupby("pattern")["quantity"].sum()
    for p in demo_review["patterns"]:
        c = costs.loc[p["pattern"]]
        unit = c["casting_weight_kg"] * c["metal_cost_per_kg"] + c["processing_cost_per_casting"]
        assert p["scrap_cost"] == pytest.approx(p["rejected"] * unit)
        assert p["reworked"] == reworked.get(p["pattern"], 0)
        assert sum(p["by_defect"].values()) == p["rejected"]
        assert sum(p["shrinkage_by_zone"].values()) == p["shrinkage_rejected"]
    total = sum(p["scrap_cost"] for p in demo_review["patterns"])
    assert sum(d["scrap_cost"] for d in demo_review["defects"]) == pytest.approx(total)
    assert demo_review["totals"]["window"]["scrap_cost"] == pytest.approx(total)


@needs_demo
def test_demo_pchart_limits_are_binomial_probability_limits(demo_review, demo_csv):
    lots = window_lots(demo_csv, demo_review)
    insp = demo_csv["inspections"].merge(lots[["lot", "week"]], on="lot")
    weeks = [p["label"] for p in demo_review["patterns"][0]["pchart"]]
    assert len(weeks) == 13 and weeks[-1] == "2026-W47"
    for code in ("P-3014", "P-1017", "P-2011"):
        p = by_code(demo_review)[code]
        mine = lots[lots["pattern"] == code]
        n = mine.groupby("week")["castings"].sum().reindex(weeks, fill_value=0).to_numpy(float)
        k = (insp[(insp["lot"].isin(mine["lot"])) & (insp["result"] == "reject")]
             .groupby("week")["quantity"].sum().reindex(weeks, fill_value=0).to_numpy(float))
        # NIST/SEMATECH e-Handbook 6.3.3.2: p-bar = sum k / sum n
        pbar = k.sum() / n.sum()
        for i, pt in enumerate(p["pchart"]):
            assert pt["inspected"] == n[i]
            assert pt["rejected"] == k[i]
            if n[i] == 0:
                assert pt["ucl"] is None and pt["p"] is None and not pt["signal"]
                continue
            assert pt["centre"] == pytest.approx(pbar, rel=1e-12)
            # scipy.stats.binom.ppf: 0.135 % quantiles of Binomial(n_i, p-bar), as rates
            assert pt["ucl"] == pytest.approx(sps.binom.ppf(0.99865, n[i], pbar) / n[i], rel=1e-12)
            assert pt["lcl"] == pytest.approx(sps.binom.ppf(0.00135, n[i], pbar) / n[i], abs=1e-15)


def test_signal_in_review_week_makes_a_problem(tmp_path):
    # S-HIGH: 12 quiet weeks (1 reject per 100 castings), then 30; S-LOW: 12 and 8 by turns, then 0.
    folder = weekly_log(tmp_path / "log", {"S-HIGH": [1] * 12 + [30], "S-LOW": [12, 8] * 6 + [0]})
    with Store(":memory:") as s:
        import_dir(s, folder, today=TODAY)
        r = weekly_review(s, "2026-W20", weeks=13, target=0.5)
    p = by_code(r)
    high, low = p["S-HIGH"], p["S-LOW"]
    # NIST/SEMATECH e-Handbook 6.3.3.2: p-bar = 42 / 1300; scipy.stats.binom: the upper limit is
    # the 99.865 % quantile of Binomial(100, p-bar), and 30 rejects lie far beyond it
    pbar = 42 / 1300
    assert high["pchart"][-1]["ucl"] == pytest.approx(sps.binom.ppf(0.99865, 100, pbar) / 100)
    assert sps.binom.sf(29, 100, pbar) < 0.00135
    assert high["pchart"][-1]["beyond"] and not any(pt["beyond"] for pt in high["pchart"][:-1])
    # the quiet weeks all lie below the pooled centre: a run, but on the good side
    assert all(pt["run"] for pt in high["pchart"][:-1])
    assert high["signal"] and high["signal_rules"] == ["beyond_limit", "run_of_8"]
    assert high["signal_high_rules"] == ["beyond_limit"]
    assert high["problem"] and high["problem_reasons"] == ["signal:beyond_limit"]
    # a drop below the lower limit is a signal, not a problem; scipy.stats.binom:
    # P(X = 0) for Binomial(100, 120 / 1300) is below 0.135 %
    pbar = 120 / 1300
    assert sps.binom.pmf(0, 100, pbar) < 0.00135
    assert low["pchart"][-1]["lcl"] == pytest.approx(sps.binom.ppf(0.00135, 100, pbar) / 100)
    assert low["signal"] and low["signal_rules"] == ["beyond_limit"] and low["signal_high_rules"] == []
    assert not low["problem"] and low["problem_reasons"] == []
    assert r["problems"] == ["S-HIGH"]
    assert [c["pattern"] for c in r["changes"]["new_problems"]] == ["S-HIGH"]
    assert r["changes"]["previous_week"] == "2026-W19"
    assert high["week_rejected"] == 30
    assert high["week_reject_rate"] == pytest.approx(0.30)


def test_target_rules_use_wilson_lower_bound(tmp_path):
    # 4 % rejects, all shrinkage, steady: the Wilson lower bound decides against the target.
    folder = weekly_log(tmp_path / "log", {"S-1": [4] * 13})
    with Store(":memory:") as s:
        import_dir(s, folder, today=TODAY)
        low, _ = proportion_confint(52, 1300, alpha=0.05, method="wilson")  # statsmodels, wilson
        above = weekly_review(s, "2026-W20", target=low - 1e-4)
        below = weekly_review(s, "2026-W20", target=low + 1e-4)
    assert by_code(above)["S-1"]["problem_reasons"] == ["shrinkage_above_target", "rejects_above_target"]
    assert by_code(below)["S-1"]["problem_reasons"] == []


def test_problem_patterns_alone_flag_by_the_same_rules(tmp_path):
    # The problem list without the rest of the review (what suggestions read), on the logs above.
    folder = weekly_log(tmp_path / "signal", {"S-HIGH": [1] * 12 + [30], "S-LOW": [12, 8] * 6 + [0]})
    with Store(":memory:") as s:
        import_dir(s, folder, today=TODAY)
        # scipy.stats.binom: 30 of 100 lies beyond the 99.865 % quantile of Binomial(100, 42 / 1300);
        # P(X = 0) under Binomial(100, 120 / 1300) is below 0.135 %, a low-side signal, not a problem
        assert sps.binom.sf(29, 100, 42 / 1300) < 0.00135 and sps.binom.pmf(0, 100, 120 / 1300) < 0.00135
        assert problem_patterns(s, "2026-W20", weeks=13, target=0.5) == ["S-HIGH"]
    folder = weekly_log(tmp_path / "wilson", {"S-1": [4] * 13})
    with Store(":memory:") as s:
        import_dir(s, folder, today=TODAY)
        # statsmodels, wilson: the lower bound of 52 rejects in 1,300 castings decides against the target
        low, _ = proportion_confint(52, 1300, alpha=0.05, method="wilson")
        assert problem_patterns(s, "2026-W20", target=low - 1e-4) == ["S-1"]
        assert problem_patterns(s, "2026-W20", target=low + 1e-4) == []


@needs_demo
@pytest.mark.parametrize("week,weeks,target", [("2026-W47", 13, 0.02), ("2026-W40", 4, 0.01),
                                               ("2026-W47", 52, 0.05), ("2026-W30", 1, 0.02)])
def test_problem_patterns_are_the_reviews_problems_in_its_order(demo_store, week, weeks, target):
    # the full review is the reference: the same codes, worst (largest scrap cost) first
    want = weekly_review(demo_store, week, weeks=weeks, target=target)["problems"]
    assert problem_patterns(demo_store, week, weeks=weeks, target=target) == want


# --- riser revisions ------------------------------------------------------------------------

@needs_demo
def test_demo_revision_fisher_matches_scipy(demo_review, demo_csv):
    pattern, riser, zone, revision, eff = demo.story()["resized"]
    rev = next(r for r in demo_review["revisions"]
               if r["pattern"] == pattern and r["revision"] == str(revision))
    assert rev["effective_from"] == eff and rev["previous_revision"] == "1"
    assert rev["changed_risers"] == [riser] and rev["changed_zones"] == [zone]
    # counts recomputed from the CSV files
    lots = demo_csv["lots"].merge(demo_csv["patterns"][["pattern", "castings_per_mold"]], on="pattern")
    lots = lots[lots["pattern"] == pattern].assign(castings=lambda d: d["molds"] * d["castings_per_mold"])
    start = (dt.date.fromisoformat(eff) - dt.timedelta(weeks=13)).isoformat()
    before = lots[(lots["poured_on"] >= start) & (lots["poured_on"] < eff)]
    after = lots[(lots["poured_on"] >= eff) & (lots["poured_on"] <= "2026-11-22")]
    insp = demo_csv["inspections"]
    shr = insp[(insp["result"] == "reject") & (insp["defect"] == "shrinkage") & (insp["zone"] == zone)]
    kb = int(shr[shr["lot"].isin(before["lot"])]["quantity"].sum())
    ka = int(shr[shr["lot"].isin(after["lot"])]["quantity"].sum())
    nb, na = int(before["castings"].sum()), int(after["castings"].sum())
    assert (rev["before"]["shrinkage_rejected"], rev["before"]["inspected"]) == (kb, nb)
    assert (rev["after"]["shrinkage_rejected"], rev["after"]["inspected"]) == (ka, na)
    # scipy.stats.fisher_exact, two-sided
    ref = sps.fisher_exact([[kb, nb - kb], [ka, na - ka]], alternative="two-sided").pvalue
    assert rev["p_value"] == pytest.approx(ref, rel=1e-9)
    assert rev["rate_before"] == pytest.approx(kb / nb) and rev["rate_after"] == pytest.approx(ka / na)
    assert rev["verdict"] == "improved"


def test_revision_compares_changed_zone_only(tmp_path):
    pat = [{"pattern": "V-1", "description": "simulated", "alloy": "steel", "casting_weight_kg": 10,
            "castings_per_mold": 10, "metal_cost_per_kg": 2, "processing_cost_per_casting": 5}]
    zones = [{"pattern": "V-1", "zone": z, "volume_cm3": 2000, "cooling_area_cm2": 1100} for z in ("a", "b")]
    riser = {"pattern": "V-1", "riser": "R1", "zone": "a", "placement": "side", "top": "blind",
             "height_mm": 140}
    risers = [dict(riser, revision="1", effective_from="2026-01-05", diameter_mm=120),
              dict(riser, revision="1", effective_from="2026-01-05", riser="R2", zone="b", diameter_mm=140),
              dict(riser, revision="2", effective_from="2026-04-06", diameter_mm=150),
              dict(riser, revision="2", effective_from="2026-04-06", riser="R2", zone="b", diameter_mm=140)]
    lots, insp = [], []
    for i in range(16):  # weekly lots of 100 castings from 2026-01-19
        day = dt.date(2026, 1, 20) + dt.timedelta(weeks=i)
        after = day >= dt.date(2026, 4, 6)
        ka, kb = (1, 5) if after else (12, 5)  # zone a improves, zone b does not
        lots.append({"lot": f"V{i}", "pattern": "V-1", "poured_on": day.isoformat(), "heat": "H", "molds": 10})
        insp += [{"lot": f"V{i}", "inspected_on": day.isoformat(), "method": "xray", "quantity": 100 - ka - kb,
                  "result": "accept"},
                 {"lot": f"V{i}", "inspected_on": day.isoformat(), "method": "xray", "quantity": ka,
                  "result": "reject", "defect": "shrinkage", "zone": "a"},
                 {"lot": f"V{i}", "inspected_on": day.isoformat(), "method": "xray", "quantity": kb,
                  "result": "reject", "defect": "shrinkage", "zone": "b"}]
    folder = write_log(tmp_path / "log", pat, lots, insp, risers, zones)
    with Store(":memory:") as s:
        import_dir(s, folder, today=TODAY)
        r = weekly_review(s, "2026-W18", weeks=13)
        # took effect before a 3-week window and already judged: left to earlier reviews
        assert weekly_review(s, "2026-W18", weeks=3)["revisions"] == []
    (rev,) = r["revisions"]
    assert rev["changed_risers"] == ["R1"] and rev["changed_zones"] == ["a"]
    assert rev["riser_changes"][0]["change"] == "diameter 120 → 150 mm"
    nb = sum(100 for lt in lots if lt["poured_on"] < "2026-04-06")
    na = sum(100 for lt in lots if "2026-04-06" <= lt["poured_on"] <= "2026-05-03")  # to the end of W18
    assert (nb, na) == (1100, 400)
    assert rev["before"]["shrinkage_rejected"] == 12 * (nb // 100)
    assert rev["after"]["shrinkage_rejected"] == 1 * (na // 100)
    # scipy.stats.fisher_exact on zone a only
    kb, ka = 12 * (nb // 100), na // 100
    assert rev["p_value"] == pytest.approx(sps.fisher_exact([[kb, nb - kb], [ka, na - ka]]).pvalue, rel=1e-9)
    assert rev["verdict"] == "improved"
    assert rev["all_defects"]["rate_before"] == pytest.approx(17 / 100)


# --- the demo's story -------------------------------------------------------------------------

@needs_demo
def test_demo_review_finds_the_story(demo_review):
    story = demo.story()
    pats = by_code(demo_review)
    for pattern, riser, zone in story["undersized"]:
        p = pats[pattern]
        assert p["problem"], pattern
        assert "shrinkage_above_target" in p["problem_reasons"], pattern
        # the rejects sit in the undersized riser's zone
        assert max(p["shrinkage_by_zone"], key=p["shrinkage_by_zone"].get) == zone
    gas = pats[story["gas"]]
    assert gas["problem"] and "rejects_above_target" in gas["problem_reasons"]
    assert "shrinkage_above_target" not in gas["problem_reasons"]
    assert max(gas["by_defect"], key=gas["by_defect"].get) == "gas"
    for code in story["sound_examples"]:
        assert not pats[code]["problem"], code
    resized = story["resized"]
    rev = next(r for r in demo_review["revisions"] if r["pattern"] == resized[0])
    assert rev["verdict"] == "improved"
    # the Pareto puts the undersized and gas patterns at the top by cost
    top = [r["pattern"] for r in demo_review["pareto"]["patterns_by_cost"][:3]]
    assert set(top) <= {u[0] for u in story["undersized"]} | {story["gas"]}
    assert demo_review["defects"][0]["defect"] == "shrinkage"


@needs_demo
def test_demo_default_week_is_latest_pour(demo_store, demo_review):
    r = weekly_review(demo_store)
    assert r["week"] == demo.story()["window"][1] == "2026-W47"
    assert r["window"] == {"first_week": "2026-W35", "last_week": "2026-W47", "start": "2026-08-24",
                           "end": "2026-11-22", "weeks": 13}
    json.dumps(r, allow_nan=False)


@needs_demo
def test_demo_trend_adds_up(demo_review):
    overall = demo_review["trend"]["overall"]
    assert [w["week"] for w in overall] == [f"2026-W{n}" for n in range(35, 48)]
    by = pd.DataFrame(demo_review["trend"]["by_pattern"])
    for w in overall:
        part = by[by["week"] == w["week"]]
        assert w["rejected"] == part["rejected"].sum() and w["poured"] == part["poured"].sum()
        assert w["scrap_cost"] == pytest.approx(part["scrap_cost"].sum())
    assert sum(w["rejected"] for w in overall) == demo_review["totals"]["window"]["rejected"]


# --- normal edge cases --------------------------------------------------------------------------

def test_empty_log_gives_empty_review():
    with Store(":memory:") as s:
        r = weekly_review(s, "2026-W47", weeks=5)
        r_default = weekly_review(s)
    assert r["patterns"] == [] and r["defects"] == [] and r["revisions"] == [] and r["problems"] == []
    assert r["pareto"] == {"patterns_by_cost": [], "patterns_by_count": [], "defects_by_cost": [],
                           "defects_by_count": []}
    assert [w["week"] for w in r["trend"]["overall"]] == [f"2026-W{n}" for n in range(43, 48)]
    assert all(w["poured"] == 0 and w["reject_rate"] is None for w in r["trend"]["overall"])
    assert r["totals"]["window"]["rejected"] == 0 and r["totals"]["window"]["reject_rate"] is None
    assert r["changes"]["new_problems"] == [] and r["changes"]["rate_moves"] == []
    # nothing poured: the default is the last week that has ended
    assert r_default["week"] == stats.iso_week(dt.date.today() - dt.timedelta(weeks=1))
    json.dumps(r, allow_nan=False)


def test_week_with_no_pours(good_store):
    # the good log pours in 2026-W10 and W11 only
    later = weekly_review(good_store, "2026-W30", weeks=4)
    assert later["patterns"] == [] and later["totals"]["week"]["poured"] == 0
    r = weekly_review(good_store, "2026-W12", weeks=3)
    p = by_code(r)
    assert set(p) == {"T-100", "T-200"}
    assert p["T-100"]["week_poured"] == 0 and p["T-100"]["week_reject_rate"] is None
    assert r["trend"]["overall"][-1] == {
        "week": "2026-W12", "week_start": "2026-03-16", "poured": 0, "inspected": 0, "rejected": 0,
        "scrap_cost": 0.0, "reworked": 0, "reject_rate": None, "wilson_low": 0.0, "wilson_high": 1.0}
    assert p["T-100"]["pchart"][-1]["p"] is None and not p["T-100"]["pchart"][-1]["signal"]


def test_good_log_figures(good_store):
    r = weekly_review(good_store, "2026-W11", weeks=2)
    p = by_code(r)["T-100"]
    # L1: 20 castings, 3 shrinkage rejects in flange; L2: 16 castings, 1 sand reject
    assert (p["poured"], p["inspected"], p["rejected"], p["shrinkage_rejected"]) == (36, 36, 4, 3)
    assert p["by_defect"] == {"shrinkage": 3, "sand": 1} and p["shrinkage_by_zone"] == {"flange": 3}
    assert p["scrap_cost"] == pytest.approx(4 * (12.5 * 1.8 + 20))
    assert (p["week_poured"], p["week_rejected"]) == (16, 1)
    assert p["description"] == "test valve body" and p["alloy"] == "steel"
    # statsmodels proportion_confint, method="wilson"
    assert p["wilson_low"] == pytest.approx(proportion_confint(4, 36, method="wilson")[0], abs=1e-12)


def test_pattern_with_one_lot(good_store):
    r = weekly_review(good_store, "2026-W11", weeks=2)
    p = by_code(r)["T-200"]  # one lot, 20 castings, no rejects
    assert (p["lots"], p["poured"], p["rejected"], p["reject_rate"]) == (1, 20, 0, 0.0)
    # statsmodels proportion_confint, method="wilson"
    assert p["wilson_low"] == 0.0
    assert p["wilson_high"] == pytest.approx(proportion_confint(0, 20, method="wilson")[1], abs=1e-12)
    assert p["scrap_cost"] == 0.0 and p["by_defect"] == {} and p["shrinkage_by_zone"] == {}
    assert not p["signal"] and not p["problem"]
    seen = [pt for pt in p["pchart"] if pt["inspected"]]
    assert len(seen) == 1 and seen[0]["ucl"] == 0.0 and seen[0]["centre"] == 0.0


def test_superseded_and_void_records_are_not_counted(good_store):
    before = by_code(weekly_review(good_store, "2026-W11", weeks=2))["T-100"]
    assert before["rejected"] == 4
    recs = good_store.current_inspections(lot="L1")
    reject = int(recs.loc[recs["result"] == "reject", "id"].iloc[0])
    correct_inspection(good_store, reject, {"quantity": 1}, by="QE-B", reason="recount", today=TODAY)
    sand = good_store.current_inspections(lot="L2")
    sand_id = int(sand.loc[sand["result"] == "reject", "id"].iloc[0])
    correct_inspection(good_store, sand_id, {"void": True}, by="QE-B", reason="wrong lot", today=TODAY)
    after = by_code(weekly_review(good_store, "2026-W11", weeks=2))["T-100"]
    # the old records stay in the history but no longer count
    assert len(good_store.inspections_history()) == 8
    assert after["rejected"] == 1 and after["shrinkage_rejected"] == 1 and after["by_defect"] == {"shrinkage": 1}
    assert after["inspected"] == 36


def test_lot_without_records_awaits_inspection(good_store):
    log_inspection(good_store, {"lot": "L3", "inspected_on": "2026-03-06", "method": "dimensional",
                                "quantity": 2, "result": "rework", "defect": "dimensional"}, today=TODAY)
    with good_store.write():
        good_store.insert_rows("lots", [("L4", "T-200", "2026-03-11", "H4", 3, 720.0)])
    r = weekly_review(good_store, "2026-W11", weeks=2)
    p = by_code(r)["T-200"]
    assert (p["poured"], p["inspected"], p["awaiting_inspection"]) == (32, 20, 12)
    assert p["reworked"] == 2 and p["rejected"] == 0 and p["scrap_cost"] == 0.0


@pytest.mark.parametrize("kwargs,field", [
    ({"week": "2026-47"}, "week"), ({"week": "W47"}, "week"), ({"week": "2026-W54"}, "week"),
    ({"weeks": 0}, "weeks"), ({"weeks": 2.5}, "weeks"), ({"target": 1.5}, "target"),
    ({"target": -0.1}, "target"),
])
def test_bad_arguments_raise_badinput(good_store, kwargs, field):
    with pytest.raises(BadInput) as exc:
        weekly_review(good_store, **kwargs)
    assert exc.value.field == field


def test_bad_week_message_comes_from_week_start(good_store):
    with pytest.raises(BadInput) as exc:
        weekly_review(good_store, "2026-47")
    assert str(exc.value) == "week: got '2026-47'; write it as 2026-W47"


def test_review_is_plain_json(good_store):
    r = weekly_review(good_store, "2026-W11", weeks=2)
    text = json.dumps(r, allow_nan=False)
    assert json.loads(text) == r
    assert not any(isinstance(v, (np.generic, float)) and not math.isfinite(v)
                   for p in r["patterns"] for v in p.values() if isinstance(v, (float, np.generic)))


def test_p_charts_of_many_patterns_match_stats_p_chart():
    rng = np.random.default_rng(11)
    n = rng.integers(0, 400, size=(60, 26)).astype(float)
    n[rng.random(n.shape) < 0.15] = 0          # weeks with nothing inspected
    n[3] = 0                                    # a pattern never inspected
    p_true = rng.uniform(0, 0.1, size=(60, 1))
    p_true[5] = 0.0                             # a pattern without rejects
    k = rng.binomial(n.astype(int), np.broadcast_to(p_true, n.shape)).astype(float)
    k[7, 10:20] = n[7, 10:20] * 0.3 // 1        # a long high run in one pattern
    got = p_charts(k, n)
    for i in range(60):
        ref = stats.p_chart(k[i], n[i])  # the one-pattern rules of tracker.review.stats (NIST 6.3.3.2)
        for key in ("p", "lcl", "ucl"):
            np.testing.assert_allclose(got[key][i], ref[key].to_numpy(), rtol=1e-12, equal_nan=True)
        for key in ("beyond", "run", "signal"):
            np.testing.assert_array_equal(got[key][i], ref[key].to_numpy())
        assert (math.isnan(got["centre"][i]) and math.isnan(ref["centre"].iat[0])) \
            or got["centre"][i] == pytest.approx(ref["centre"].iat[0], rel=1e-12)
    assert got["run"].any() and got["beyond"].any()


@needs_demo
def test_demo_pcharts_match_stats_p_chart(demo_review):
    for p in demo_review["patterns"]:
        ref = stats.p_chart([pt["rejected"] for pt in p["pchart"]], [pt["inspected"] for pt in p["pchart"]])
        assert [pt["signal"] for pt in p["pchart"]] == ref["signal"].tolist()
        assert p["signal_rules"] == stats.latest_signal(ref, 2)
        assert p["signal_rules_window"] == stats.signal_rules(ref)


def test_review_floor_holds_the_rows_the_review_counts(demo_store, demo_review):
    # Plumbing: the benchmark's floor (Store.review_floor) fetches the rows the review
    # reads; summed by hand they give the review's own totals for the review week.
    floor = demo_store.review_floor("2026-11-09", "2026-11-22")
    week = {lot: castings for lot, _, poured_on, castings in floor["lots"] if poured_on >= "2026-11-16"}
    assert sum(week.values()) == demo_review["totals"]["week"]["poured"]
    inspected = {lot for lot, *_ in floor["records"] if lot in week}
    assert sum(week[lot] for lot in inspected) == demo_review["totals"]["week"]["inspected"]
    assert sum(q for lot, result, _, _, q in floor["records"]
               if lot in week and result == "reject") == demo_review["totals"]["week"]["rejected"]
    # one revision in force per pattern poured before the span, plus those taking effect in it
    poured = {pattern for _, pattern, _, _ in floor["lots"]}
    assert {pattern for pattern, *_ in floor["risers"]} <= poured
    assert all(eff <= "2026-11-22" for _, _, eff, *_ in floor["risers"])


def test_revision_probes_are_the_edges_of_the_judged_spans(demo_store):
    # Plumbing: the running totals the benchmark times beside the floor are those of
    # each judged revision's pattern at its spans' edges (before start, change, the
    # day after the after span), and its changed zones' where it is judged by zone.
    from tracker.review.revisions import revision_probes

    review = weekly_review(demo_store, "2026-W47", weeks=4)
    probes, zone_probes = revision_probes(demo_store, "2026-W47", 4)
    for r in review["revisions"]:
        after = (dt.date.fromisoformat(r["after"]["end"]) + dt.timedelta(days=1)).isoformat()
        edges = {r["before"]["start"] or r["effective_from"], r["effective_from"], after}
        assert {(r["pattern"], d) for d in edges} <= set(probes)
        if r["zone_basis"] == "zones of the changed risers":
            assert {(r["pattern"], z, d) for z in r["changed_zones"] for d in edges} <= set(zone_probes)
