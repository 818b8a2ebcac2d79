"""The review's defaults and limits, the same for `review`, `suggest` and the
dashboard: the week a review opens on, the target reject rate and the weeks
of the window (one check each), and riser revisions kept under judgement until
they have a verdict.

ISO weeks are checked against Python's ``date.isocalendar()`` (ISO 8601).
"""

import datetime as dt
import json

import pytest
from scipy import stats as sps

from tests.support.review import TODAY, write_log
from tracker import limits
from tracker.advice.zones import review_window
from tracker.cli import main
from tracker.errors import BadInput
from tracker.log.ingest import import_dir
from tracker.log.store import Store
from tracker.review.weekly import default_week, weekly_review


def iso(d: dt.date) -> str:
    # ISO 8601 week of a date, by the standard library
    y, w, _ = d.isocalendar()
    return f"{y}-W{w:02d}"


def _log(tmp_path, days):
    pat = [{"pattern": "D-1", "description": "simulated", "alloy": "steel", "casting_weight_kg": 10,
            "castings_per_mold": 10, "metal_cost_per_kg": 2, "processing_cost_per_casting": 5}]
    lots = [{"lot": f"D{i}", "pattern": "D-1", "poured_on": d.isoformat(), "heat": "H", "molds": 1}
            for i, d in enumerate(days)]
    insp = [{"lot": f"D{i}", "inspected_on": d.isoformat(), "method": "visual", "quantity": 10,
             "result": "accept"} for i, d in enumerate(days)]
    return write_log(tmp_path / "log", pat, lots, insp)


def test_default_week_is_the_last_complete_week_with_pours(tmp_path):
    thursday = dt.date(2026, 11, 19)
    folder = _log(tmp_path, [dt.date(2026, 11, 2), thursday])
    with Store(":memory:") as s:
        import_dir(s, folder, today=TODAY)
        # while the week of the newest pour runs, the review opens on the week before it with pours
        assert default_week(s, today=thursday + dt.timedelta(days=2)) == iso(dt.date(2026, 11, 2))
        # from the Monday after, that week has ended
        monday = thursday + dt.timedelta(days=4)
        assert monday.weekday() == 0
        assert default_week(s, today=monday) == iso(thursday)
        # weeks without pours are skipped: three weeks later it still opens on the same week
        assert default_week(s, today=monday + dt.timedelta(weeks=3)) == iso(thursday)


def test_a_lot_poured_today_does_not_move_the_default(app_db, runner):
    today = dt.date.today()
    with Store(app_db) as s:
        before = default_week(s)
        s.conn.execute("INSERT INTO lots (lot, pattern, poured_on, heat, molds) "
                       "SELECT 'TODAY-1', pattern, ?, 'H-T', 1 FROM patterns LIMIT 1", (today.isoformat(),))
        s.conn.commit()
        assert s.pour_span()[1] == today.isoformat()
        assert default_week(s) == before != iso(today)
        # the same default for the review, the suggestions' window and the dashboard
        assert weekly_review(s)["week"] == before
        assert review_window(s, None, limits.WEEKS_DEFAULT)[0] == before
    res = runner.invoke(main, ["review", "--db", str(app_db), "--json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["week"] == before


def test_review_page_opens_on_the_default_week(app_db, monkeypatch):
    from tests.support.dashboard import open_page

    with Store(app_db) as s:
        week = default_week(s)
    for page in ("weekly_review.py", "suggestions.py"):
        at = open_page(app_db, page, monkeypatch)
        assert at.selectbox(key="week").value == week
        assert at.number_input(key="weeks").value == limits.WEEKS_DEFAULT
        assert at.number_input(key="target").value == pytest.approx(100 * limits.TARGET_DEFAULT)


@pytest.mark.parametrize("target", [0.0, 0.02, 0.5])
def test_review_and_suggest_accept_the_same_targets(good_store, target):
    from tracker.advice.suggest import suggest

    assert weekly_review(good_store, target=target)["target"] == target
    suggest(good_store, target=target)  # no BadInput


def _refusals(store, **kwargs) -> set[str]:
    """The messages of the review and of the suggestions refusing the same arguments."""
    from tracker.advice.suggest import suggest

    messages = set()
    for call in (weekly_review, suggest):
        with pytest.raises(BadInput) as exc:
            call(store, **kwargs)
        messages.add(str(exc.value))
    return messages


@pytest.mark.parametrize("target", [-0.01, 0.51, 2, "x", None, True])
def test_review_and_suggest_refuse_the_same_targets_with_one_message(good_store, target):
    (message,) = _refusals(good_store, target=target)
    assert "target reject rate is a fraction from 0 to 0.5" in message


@pytest.mark.parametrize("weeks", [0, 521, 2.5])
def test_weeks_are_checked_in_one_place(good_store, weeks):
    (message,) = _refusals(good_store, weeks=weeks)
    assert "from 1 to 520" in message


def test_exception_classes_live_in_errors():
    import inspect
    import pkgutil

    import tracker
    from tracker import errors

    names = [m.name for m in pkgutil.walk_packages(tracker.__path__, "tracker.") if m.name != "tracker.errors"]
    for name in names:
        module = __import__(name, fromlist=["x"])
        own = [n for n, c in vars(module).items() if inspect.isclass(c) and issubclass(c, Exception)
               and c.__module__ == module.__name__]
        assert own == [], f"{name} defines {own}; they belong in tracker/errors.py"
    assert tracker.errors is errors


# --- riser revisions stay under judgement until they have a verdict ----------------------------------

def _revision_log(tmp_path, after_lots: int, after_molds: int = 10):
    pat = [{"pattern": "V-1", "description": "simulated", "alloy": "steel", "casting_weight_kg": 10,
            "castings_per_mold": 10, "metal_cost_per_kg": 2, "processing_cost_per_casting": 5}]
    zones = [{"pattern": "V-1", "zone": "a", "volume_cm3": 2000, "cooling_area_cm2": 1100}]
    riser = {"pattern": "V-1", "riser": "R1", "zone": "a", "placement": "side", "top": "blind",
             "height_mm": 140}
    risers = [dict(riser, revision="1", effective_from="2026-01-05", diameter_mm=120),
              dict(riser, revision="2", effective_from="2026-04-06", diameter_mm=150)]
    lots, insp = [], []
    days = [dt.date(2026, 1, 20) + dt.timedelta(weeks=i) for i in range(11)]        # before the change
    days += [dt.date(2026, 4, 7) + dt.timedelta(weeks=i) for i in range(after_lots)]  # after it
    for i, day in enumerate(days):
        k = 12 if day < dt.date(2026, 4, 6) else 0
        n = 100 if k else 10 * after_molds
        lots.append({"lot": f"V{i}", "pattern": "V-1", "poured_on": day.isoformat(), "heat": "H",
                     "molds": n // 10})
        insp += [{"lot": f"V{i}", "inspected_on": day.isoformat(), "method": "xray", "quantity": n - k,
                  "result": "accept"}]
        if k:
            insp.append({"lot": f"V{i}", "inspected_on": day.isoformat(), "method": "xray", "quantity": k,
                         "result": "reject", "defect": "shrinkage", "zone": "a"})
    return write_log(tmp_path / "log", pat, lots, insp, risers, zones)


def test_revision_without_a_verdict_stays_after_leaving_the_window(tmp_path):
    # one small lot since the change: too few castings to tell a halving from chance
    with Store(":memory:") as s:
        import_dir(s, _revision_log(tmp_path / "one", after_lots=1, after_molds=1), today=TODAY)
        r = weekly_review(s, "2026-W40", weeks=3)  # the change took effect 25 weeks before this window
    (rev,) = r["revisions"]
    assert (rev["pattern"], rev["revision"], rev["verdict"]) == ("V-1", "2", "not_enough_data")
    assert rev["took_effect_in_window"] is False
    # the before-period reaches back as many weeks as the window holds (3 weekly lots of 100)
    assert rev["after"]["inspected"] == 10 and rev["before"]["inspected"] == 300
    # scipy.stats.fisher_exact: 36 of 300 before against 0 of 10 after is no evidence either way
    assert rev["p_value"] == pytest.approx(sps.fisher_exact([[36, 264], [0, 10]]).pvalue, rel=1e-9)


def test_revision_with_a_verdict_leaves_once_outside_the_window(tmp_path):
    with Store(":memory:") as s:
        import_dir(s, _revision_log(tmp_path / "many", after_lots=8), today=TODAY)
        inside = weekly_review(s, "2026-W22", weeks=13)
        later = weekly_review(s, "2026-W40", weeks=3)
    (rev,) = inside["revisions"]
    # scipy.stats.fisher_exact: 132 of 1100 before against 0 of 800 after
    assert rev["p_value"] == pytest.approx(sps.fisher_exact([[132, 968], [0, 800]]).pvalue, rel=1e-9)
    assert rev["verdict"] == "improved"
    assert later["revisions"] == []


def test_review_page_keeps_a_revision_awaiting_its_verdict(tmp_path, monkeypatch):
    import csv

    from tests.support.dashboard import open_page, texts

    folder = _revision_log(tmp_path / "log", after_lots=1, after_molds=1)
    with open(folder / "lots.csv", "a", newline="", encoding="utf-8") as fh:  # one small lot much later
        csv.writer(fh).writerow(["V-late", "V-1", "2026-10-01", "H", 1])
    with open(folder / "inspections.csv", encoding="utf-8") as fh:
        head = next(csv.reader(fh))
    row = {"lot": "V-late", "inspected_on": "2026-10-01", "method": "xray", "quantity": 10, "result": "accept"}
    with open(folder / "inspections.csv", "a", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerow([row.get(k, "") for k in head])
    db = tmp_path / "log.db"
    with Store(db) as s:
        import_dir(s, folder, today=TODAY)
        week = default_week(s)
    assert week == iso(dt.date(2026, 10, 1))
    at = open_page(db, "weekly_review.py", monkeypatch)
    at.number_input(key="weeks").set_value(3).run()
    assert not at.exception
    lines = texts(at.markdown)
    head = next(m for m in lines if m.startswith("V-1 revision 2"))
    assert "took effect before this window; still awaiting a verdict" in head
    assert any(m.startswith("**Verdict:** not enough data yet") for m in lines)
