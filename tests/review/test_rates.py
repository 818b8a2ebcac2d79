"""One function per figure. On the demo log the three rates of pattern P-1017
that three pages show (all rejects over 13 weeks; its zone flange-B's shrinkage
over the design map's period and over 13 weeks) come from two library functions
with the window in their arguments: the pattern's from the weekly review, the
zone's from tracker.advice.features.zone_shrinkage_rates, recounted here."""

import datetime as dt

import pytest

from tracker.log.store import Store
from tracker.review import rates
from tracker.review.weekly import default_week, weekly_review


def test_pattern_rate_is_the_reviews(app_demo_db):
    with Store(app_demo_db) as s:
        week = default_week(s)
        row = next(p for p in weekly_review(s, week=week)["patterns"] if p["pattern"] == "P-1017")
        every = rates.pattern_reject_rate(s, "P-1017", week=week)
        shrink = rates.pattern_reject_rate(s, "P-1017", "shrinkage", week=week)
    assert every["rate"] == pytest.approx(row["reject_rate"], abs=1e-12)
    assert shrink["rate"] == pytest.approx(row["shrinkage_rate"], abs=1e-12)
    assert every["scope"].startswith("all rejects, pattern P-1017, last 13 weeks (")
    assert every["scope"].endswith("% of castings inspected")


def test_zone_rate_is_the_design_maps_and_the_suggestions(app_demo_db):
    # One computation (tracker.advice.features.zone_shrinkage_rates) behind both
    # pages, checked here against a recount from the stored records and lots.
    from tracker.advice.features import design_map, zone_shrinkage_rates
    from tracker.advice.suggest import suggest

    with Store(app_demo_db) as s:
        week = default_week(s)
        first, last = s.pour_span()
        start = max(dt.date.fromisoformat(first), dt.date.fromisoformat(last) - dt.timedelta(weeks=52)).isoformat()
        dm = design_map(s, start=start, end=last, alloy="steel")
        mapped = dm[(dm["pattern"] == "P-1017") & (dm["zone"] == "flange-B")]
        year = zone_shrinkage_rates(s, start, last, ["P-1017"])
        win = rates.window(s, week)
        quarter = zone_shrinkage_rates(s, win["start"], win["end"], ["P-1017"])
        found = next(r for r in suggest(s, week=week, thermal=False) if r["pattern"] == "P-1017")
        lots = s.lots_frame(win["start"], win["end"], ["P-1017"])
        rej = s.rejects_by_lot(win["start"], win["end"], ["P-1017"])
    year = year[year["zone"] == "flange-B"]
    quarter = quarter[(quarter["zone"] == "flange-B") & (quarter["revision"] == found["revision"])]
    assert len(mapped) == 1 and len(year) == 1 and len(quarter) == 1
    assert float(year["shrinkage_rate"].iat[0]) == float(mapped["shrinkage_rate"].iat[0])
    assert float(quarter["shrinkage_rate"].iat[0]) == found["reject_rate"]
    # the recount: shrinkage rejects logged on zone flange-B over the castings poured
    hit = (rej["result"] == "reject") & (rej["defect"] == "shrinkage") & (rej["zone"] == "flange-B")
    recount = rej.loc[hit & rej["lot"].isin(lots["lot"]), "quantity"].sum() / lots["castings"].sum()
    assert float(quarter["shrinkage_rate"].iat[0]) == pytest.approx(recount, rel=1e-12)
    assert rates.scope_text("shrinkage", "flange-B", weeks=13, first_week=win["first_week"],
                            last_week=win["last_week"], basis=rates.POURED).startswith(
        "shrinkage rejects, zone flange-B, last 13 weeks (")
