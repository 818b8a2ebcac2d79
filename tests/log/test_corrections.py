"""Corrections: a record is never overwritten; the latest version counts.

A correction is a new record that supersedes the old one; the old one stays
readable in the history with who corrected it, when and why. A void withdraws a
record. Reject counts (current_inspections, rejects_by_lot, rejects_by_day,
lot_totals) see only the latest version.
"""

import datetime as dt

import pytest

from tests.support import GOOD
from tracker.cli import main
from tracker.errors import BadInput
from tracker.log.ingest import correct_inspection, import_dir, import_file, log_inspection
from tracker.log.store import Store

TODAY = dt.date(2026, 6, 1)


@pytest.fixture
def store(tmp_path, logs):
    """The good log plus lot L4 (T-100, 10 molds x 2 = 20 castings) with two records:
    15 rejected on visual (sand) and 2 rejected on radiography (shrinkage, body, CB 4)."""
    lots = tmp_path / "lots.csv"
    lots.write_text("lot,pattern,poured_on,heat,molds\nL4,T-100,2026-04-01,H4,10\n", encoding="utf-8")
    with Store(logs.new()) as s:
        import_dir(s, GOOD, today=TODAY)
        import_file(s, "lots", lots, today=TODAY)
        s.visual_id = log_inspection(s, {"lot": "L4", "inspected_on": "2026-04-03", "method": "visual",
                                         "quantity": 15, "result": "reject", "defect": "sand"},
                                     by="QE-A", today=TODAY)
        s.xray_id = log_inspection(s, {"lot": "L4", "inspected_on": "2026-04-04", "method": "xray",
                                       "quantity": 2, "result": "reject", "defect": "shrinkage",
                                       "zone": "body", "xray_category": "CB", "severity": 4},
                                   by="QE-A", today=TODAY)
        yield s


def _rejects(s, lot="L4"):
    by_lot = s.rejects_by_lot()
    return int(by_lot.loc[by_lot["lot"] == lot, "quantity"].sum())


def test_superseded_record_stays_readable_with_who_when_why(store):
    assert _rejects(store) == 17
    new = correct_inspection(store, store.xray_id, {"quantity": 3}, by="QE-B",
                             reason="recount at the bench", today=TODAY)
    hist = store.inspections_history(lot="L4").set_index("id")
    old = hist.loc[store.xray_id]
    assert old["quantity"] == 2  # unchanged
    assert old["superseded_by"] == new
    assert old["corrected_by"] == "QE-B"
    assert old["correction_why"] == "recount at the bench"
    when = dt.datetime.fromisoformat(old["corrected_at"])
    assert abs((dt.datetime.now(dt.UTC) - when).total_seconds()) < 120
    rec = hist.loc[new]
    assert rec["supersedes"] == store.xray_id
    assert rec["quantity"] == 3
    assert rec["recorded_by"] == "QE-B"
    assert rec["correction_reason"] == "recount at the bench"
    # the rest of the record is carried over
    assert (rec["zone"], rec["xray_category"], rec["severity"]) == ("body", "CB", 4)
    assert rec["void"] == 0
    assert len(hist) == 3


def test_counts_see_only_the_latest_version(store):
    new = correct_inspection(store, store.xray_id, {"quantity": 3}, by="QE-B", reason="recount")
    newer = correct_inspection(store, new, {"quantity": 4}, by="QE-C", reason="second recount")
    cur = store.current_inspections(lot="L4")
    assert sorted(cur["id"]) == sorted([store.visual_id, newer])
    assert _rejects(store) == 15 + 4
    by_day = store.rejects_by_day(pattern="T-100")
    assert int(by_day.loc[by_day["poured_on"] == "2026-04-01", "quantity"].sum()) == 19
    assert store.lot_totals(["L4"])["L4"] == {"rejected": 19, "methods": {"visual": 15, "xray": 4}}
    # the whole chain stays in the history
    hist = store.inspections_history(lot="L4").set_index("id")
    assert hist.loc[store.xray_id, "superseded_by"] == new
    assert hist.loc[new, "superseded_by"] == newer
    assert hist.loc[newer, "superseded_by"] != hist.loc[newer, "superseded_by"]  # NaN: current


def test_void_withdraws_the_record(store):
    vid = correct_inspection(store, store.visual_id, {"void": True}, by="QE-B",
                             reason="logged against the wrong lot")
    assert store.visual_id not in set(store.current_inspections()["id"])
    assert vid not in set(store.current_inspections()["id"])
    assert _rejects(store) == 2
    by_day = store.rejects_by_day()
    assert set(by_day.loc[by_day["poured_on"] == "2026-04-01", "defect"]) == {"shrinkage"}
    hist = store.inspections_history(lot="L4").set_index("id")
    assert hist.loc[vid, "void"] == 1
    assert hist.loc[store.visual_id, "superseded_by"] == vid
    assert hist.loc[store.visual_id, "correction_why"] == "logged against the wrong lot"
    # with the 15 withdrawn, the lot has room again
    log_inspection(store, {"lot": "L4", "inspected_on": "2026-04-05", "method": "visual", "quantity": 18,
                           "result": "reject", "defect": "gas"}, by="QE-A", today=TODAY)
    assert _rejects(store) == 20


def test_correcting_a_superseded_record_is_refused(store):
    new = correct_inspection(store, store.xray_id, {"quantity": 3}, by="QE-B", reason="recount")
    before = store.snapshot()
    with pytest.raises(BadInput) as info:
        correct_inspection(store, store.xray_id, {"quantity": 1}, by="QE-C", reason="other recount")
    assert str(info.value) == (f"record: got {store.xray_id}; it was already corrected by record {new}; "
                               "correct that one")
    with pytest.raises(BadInput):
        correct_inspection(store, store.xray_id, {"void": True}, by="QE-C", reason="withdraw")
    assert store.snapshot() == before


def test_correction_above_castings_poured_is_refused(store):
    before = store.snapshot()
    # 15 + 6 = 21 rejected of 20 poured (the old 2 no longer count, the xray total 6 fits)
    with pytest.raises(BadInput) as info:
        correct_inspection(store, store.xray_id, {"quantity": 6}, by="QE-B", reason="recount")
    assert str(info.value) == ("Quantity: got 6; lot L4 would have 21 castings rejected but only 20 "
                               "were poured")
    assert store.snapshot() == before
    # 5 is fine: the record it replaces is left out of the lot's totals
    correct_inspection(store, store.xray_id, {"quantity": 5}, by="QE-B", reason="recount")
    assert _rejects(store) == 20


@pytest.mark.parametrize("changes, message", [
    ({"result": "accept", "defect": None},
     "Result: got 'accept'; severity 4 is above zone body's required level 3: write reject or rework"),
    ({"severity": 9}, "Severity: got '9'; must be a whole number of at least 1 and at most 5"),
    ({"zone": "web"}, "Zone: got 'web'; pattern T-100 has no such zone; its zones are body, flange"),
])
def test_a_correction_is_validated_like_a_new_record(store, changes, message):
    before = store.snapshot()
    with pytest.raises(BadInput) as info:
        correct_inspection(store, store.xray_id, changes, by="QE-B", reason="fix")
    assert str(info.value) == message
    assert store.snapshot() == before


@pytest.mark.parametrize("by, reason, message", [
    ("", "recount", "by: got ''; name who makes the correction"),
    ("QE-B", "  ", "reason: got '  '; say why the record is corrected"),
])
def test_who_and_why_are_required(store, by, reason, message):
    with pytest.raises(BadInput) as info:
        correct_inspection(store, store.xray_id, {"quantity": 3}, by=by, reason=reason)
    assert str(info.value) == message


def test_unknown_record(store):
    with pytest.raises(Exception) as info:
        correct_inspection(store, 9999, {"quantity": 3}, by="QE-B", reason="recount")
    assert str(info.value) == "unknown inspection record 9999; see `pourback history` for record ids"


def test_a_logged_record_like_an_imported_row_is_still_checked_against_the_lot(store):
    # L1's 20 castings all passed visual (an imported row). Logging the same row again
    # is a new record, and the lot has no castings left for it.
    before = store.snapshot()
    with pytest.raises(BadInput) as info:
        log_inspection(store, {"lot": "L1", "inspected_on": "2026-03-04", "method": "visual",
                               "quantity": 20, "result": "accept", "inspector": "QE-A"},
                       by="QE-A", today=TODAY)
    assert str(info.value) == ("Quantity: got 20; lot L1 would have 40 castings inspected by visual but "
                               "only 20 were poured")
    assert store.snapshot() == before


def test_cli_correct_and_history(runner, store):
    db = store.path
    result = runner.invoke(main, ["correct", str(store.xray_id), "--quantity", "3", "--reason",
                                  "recount at the bench", "--by", "QE-B", "--db", db])
    assert result.exit_code == 0, result.output
    new = store.superseded_by(store.xray_id)
    assert result.output == f"Record {store.xray_id} superseded by record {new}\n"
    result = runner.invoke(main, ["history", "--lot", "L4", "--db", db])
    assert result.exit_code == 0, result.output
    line = next(x for x in result.output.splitlines() if x.split()[0] == str(store.xray_id))
    assert f"superseded by {new}" in line
    assert "QE-B" in line and "recount at the bench" in line
    result = runner.invoke(main, ["correct", str(store.xray_id), "--quantity", "1", "--reason", "again",
                                  "--by", "QE-C", "--db", db])
    assert result.exit_code == 1
    assert (f"Error: record: got {store.xray_id}; it was already corrected by record {new}; "
            "correct that one") in result.output
