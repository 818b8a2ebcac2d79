"""tracker.review.rates: one function per figure. On the demo log the three rates
of pattern P-1017 that three pages show (all rejects over 13 weeks, its zone
flange-B's shrinkage over the design map's period and over 13 weeks) come from
the library's functions and equal what each page's source computes."""

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
    from tracker.advice.features import design_map
    from tracker.advice.suggest import suggest

    with Store(app_demo_db) as s:
        week = default_week(s)
        first, last = s.pour_span()
        start = max(dt.date.fromisoformat(first), dt.date.fromisoformat(last) - dt.timedelta(weeks=52)).isoformat()
        dm = design_map(s, start=start, end=last, alloy="steel")
        mapped = dm[(dm["pattern"] == "P-1017") & (dm["zone"] == "flange-B")]
        year = rates.zone_shrinkage_rate(s, "P-1017", "flange-B", weeks=None, start=start, end=last)
        quarter = rates.zone_shrinkage_rate(s, "P-1017", "flange-B", week=week)
        found = next(r for r in suggest(s, week=week, thermal=False) if r["pattern"] == "P-1017")
    assert len(mapped) == 1
    assert year["rate"] == pytest.approx(float(mapped["shrinkage_rate"].iat[0]), abs=1e-12)
    assert quarter["rate"] == pytest.approx(found["reject_rate"], abs=1e-12)
    assert quarter["scope"].startswith("shrinkage rejects, zone flange-B, last 13 weeks (")
    assert year["scope"] == f"shrinkage rejects, zone flange-B, poured {start} to {last}, % of castings poured"
