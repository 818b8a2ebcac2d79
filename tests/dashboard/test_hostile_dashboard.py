"""The dashboard under hostile conditions (AppTest): a log file deleted while it
runs is never silently created again, a read-only log refuses an upload in one
message, and the pages' table downloads go through the formula guard.
"""

import shutil

import pytest

from tests.support import APP
from tests.support.dashboard import lot_with_room as _lot_with_room
from tests.support.dashboard import open_page, snapshot, texts
from tests.support.dashboard import upload as _upload
from tracker.log.store import Store


@pytest.mark.parametrize("page", ["log_results.py", "weekly_review.py", "design_map.py", "pattern_file.py",
                                  "suggestions.py"])
def test_a_deleted_log_is_named_and_never_created_again(tmp_path, monkeypatch, page):
    from streamlit.testing.v1 import AppTest

    missing = tmp_path / "gone.db"
    monkeypatch.setenv("POURBACK_DB", str(missing))
    at = AppTest.from_file(str(APP), default_timeout=60)
    at.run()
    if page != "log_results.py":
        at.switch_page(page).run()
    assert not at.exception, [e.value for e in at.exception]
    expected = (f"no log at {missing}; create one with `pourback init \\-\\-db {missing}` (or `pourback demo`), "
                "or give the log's path with \\-\\-db")
    assert texts(at.error)[0].replace("\\", "").replace("`", "") == expected.replace("\\", "").replace("`", "")
    assert not any("log is empty" in i for i in texts(at.info))
    assert not missing.exists()


@pytest.fixture
def app_file(app_demo_file, tmp_path):
    """A private copy of the demo log in an SQLite file (the file is made read-only)."""
    db = tmp_path / "demo.db"
    shutil.copyfile(app_demo_file, db)
    return str(db)


def test_upload_to_a_read_only_log_is_one_message(app_file, monkeypatch, read_only):
    app_db = app_file
    lot, _ = _lot_with_room(app_db)
    read_only(app_db)
    before = snapshot(app_db)
    at = _upload(open_page(app_db, "log_results.py", monkeypatch), "more.csv",
                 "lot,inspected_on,method,quantity,result,defect\n"
                 f"{lot},2026-11-25,visual,1,reject,slag\n")
    assert not at.exception, [e.value for e in at.exception]
    errors = [e.replace("\\", "") for e in texts(at.error)]
    assert errors == [f"the log {app_db} is read-only; nothing was written. Ask for write access to the file and "
                      "its folder, or copy the log to a place you can write"]
    assert snapshot(app_db) == before


def test_latest_records_offer_a_guarded_download(app_db, monkeypatch):
    at = open_page(app_db, "log_results.py", monkeypatch)
    labels = [b.label for b in at.get("download_button")]
    assert "Download these records (CSV)" in labels
    with Store(app_db) as s:
        assert s.count("inspections") > 0
