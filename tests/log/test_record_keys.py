"""What counts as "already present" when inspection files are imported.

Two castings rejected for the same reason on the same lot on the same day are
two records: a row identical to a stored one is a new record unless it comes
from the same file (same bytes, same row number), from a file that extends an
imported one (its rows up to the old end), or carries a ``record_id`` that is
stored. Plumbing tests on the invented data in tests/data/good.
"""

import datetime as dt
import hashlib
import pathlib
import sqlite3

import pytest
import sqlite_utils

from tests.support import GOOD
from tracker.errors import BadFile
from tracker.log.ingest import COLUMNS, import_dir, import_file
from tracker.log.store import MIGRATIONS, Store

TODAY = dt.date(2026, 6, 1)
HEADER = "lot,inspected_on,method,quantity,result,defect,zone,xray_category,severity,serial,inspector,notes\n"
REJECT = "L3,2026-03-06,ut,1,reject,sand,boss,,,,QE-B,\n"
ACCEPT = "L3,2026-03-06,ut,2,accept,,,,,,QE-B,\n"


@pytest.fixture
def store(logs):
    """The good data's log on the backend under test (tests/conftest.py)."""
    with Store(logs.new()) as s:
        import_dir(s, GOOD, today=TODAY)
        yield s


def write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8", newline="")
    return path


def rejects_of_l3(store):
    cur = store.current_inspections(lot="L3")
    return int(cur.loc[cur["result"] == "reject", "quantity"].sum())


def test_identical_row_in_a_second_file_is_a_new_record(store, tmp_path):
    # The second shift's file holds a row identical to the first shift's.
    first = write(tmp_path, "shift1.csv", HEADER + REJECT)
    second = write(tmp_path, "shift2.csv", HEADER + ACCEPT + REJECT)
    assert import_file(store, "inspections", first, today=TODAY).added == 1
    r = import_file(store, "inspections", second, today=TODAY)
    assert (r.added, r.skipped) == (2, 0)
    assert rejects_of_l3(store) == 2


def test_identical_row_in_a_file_of_the_same_name_is_a_new_record(store, tmp_path):
    # Both shifts export "inspections.csv": the name does not make two files the same.
    a, b = tmp_path / "a", tmp_path / "b"
    a.mkdir()
    b.mkdir()
    import_file(store, "inspections", write(a, "inspections.csv", HEADER + REJECT), today=TODAY)
    r = import_file(store, "inspections", write(b, "inspections.csv", HEADER + ACCEPT + REJECT), today=TODAY)
    assert (r.added, r.skipped) == (2, 0)
    assert rejects_of_l3(store) == 2


def test_reimporting_the_same_file_adds_nothing(store, tmp_path):
    path = write(tmp_path, "shift1.csv", HEADER + REJECT + REJECT)
    assert import_file(store, "inspections", path, today=TODAY).added == 2
    before = store.snapshot()
    r = import_file(store, "inspections", path, today=TODAY)
    assert (r.added, r.skipped) == (0, 2)
    assert store.snapshot() == before


def test_a_file_that_grew_adds_only_its_new_rows(store, tmp_path):
    path = write(tmp_path, "week.csv", HEADER + REJECT)
    import_file(store, "inspections", path, today=TODAY)
    path.write_text(HEADER + REJECT + REJECT + ACCEPT, encoding="utf-8", newline="")
    r = import_file(store, "inspections", path, today=TODAY)
    assert (r.added, r.skipped) == (2, 1)
    # and again, grown once more: the rows of both earlier versions are present
    path.write_text(HEADER + REJECT + REJECT + ACCEPT + REJECT, encoding="utf-8", newline="")
    r = import_file(store, "inspections", path, today=TODAY)
    assert (r.added, r.skipped) == (1, 3)
    assert rejects_of_l3(store) == 3


def test_a_last_row_without_line_end_that_grew_is_not_taken_as_present(store, tmp_path):
    # "...,QE-B" then "...,QE-BX": the bytes start alike but the row went on.
    path = write(tmp_path, "week.csv", HEADER + REJECT.rstrip("\n"))
    import_file(store, "inspections", path, today=TODAY)
    path.write_text(HEADER + REJECT.rstrip("\n") + "X\n", encoding="utf-8", newline="")
    r = import_file(store, "inspections", path, today=TODAY)
    assert (r.added, r.skipped) == (1, 0)
    # A complete last row that later got its line end and a new row after it is present.
    path2 = write(tmp_path, "week2.csv", HEADER + ACCEPT.rstrip("\n"))
    import_file(store, "inspections", path2, today=TODAY)
    path2.write_text(HEADER + ACCEPT + REJECT, encoding="utf-8", newline="")
    r = import_file(store, "inspections", path2, today=TODAY)
    assert (r.added, r.skipped) == (1, 1)


def test_two_copies_of_one_file_grown_apart_each_add_their_rows(store, tmp_path):
    # Both shifts start from Monday's file and append their own rows.
    base = HEADER + ACCEPT
    import_file(store, "inspections", write(tmp_path, "mon.csv", base), today=TODAY)
    r1 = import_file(store, "inspections", write(tmp_path, "tue-a.csv", base + REJECT), today=TODAY)
    r2 = import_file(store, "inspections", write(tmp_path, "tue-b.csv", base + REJECT), today=TODAY)
    assert [(r1.added, r1.skipped), (r2.added, r2.skipped)] == [(1, 1), (0, 2)]
    # tue-b's bytes are tue-a's: the same file. A copy grown differently adds its row:
    r3 = import_file(store, "inspections", write(tmp_path, "tue-c.csv", base + REJECT.replace("sand", "gas")),
                     today=TODAY)
    assert (r3.added, r3.skipped) == (1, 1)


def test_record_id_is_the_key_where_given(store, tmp_path):
    head = HEADER.rstrip("\n") + ",record_id\n"
    import_file(store, "inspections", write(tmp_path, "a.csv", head + REJECT.rstrip("\n") + ",QS-17\n"),
                today=TODAY)
    # The same record in another export (another file, another row) is present.
    r = import_file(store, "inspections",
                    write(tmp_path, "b.csv", head + ACCEPT.rstrip("\n") + ",QS-18\n"
                          + REJECT.rstrip("\n") + ",QS-17\n"), today=TODAY)
    assert (r.added, r.skipped) == (1, 1)
    # Identical rows with their own ids are two records.
    r = import_file(store, "inspections",
                    write(tmp_path, "c.csv", head + REJECT.rstrip("\n") + ",QS-19\n"
                          + REJECT.rstrip("\n") + ",QS-20\n"), today=TODAY)
    assert (r.added, r.skipped) == (2, 0)
    assert rejects_of_l3(store) == 3


def test_record_id_stored_with_other_content_is_refused(store, tmp_path):
    head = HEADER.rstrip("\n") + ",record_id\n"
    import_file(store, "inspections", write(tmp_path, "a.csv", head + REJECT.rstrip("\n") + ",QS-17\n"),
                today=TODAY)
    before = store.snapshot()
    path = write(tmp_path, "b.csv", head + REJECT.replace(",1,", ",2,").rstrip("\n") + ",QS-17\n")
    with pytest.raises(BadFile) as info:
        import_file(store, "inspections", path, today=TODAY)
    assert store.snapshot() == before
    assert ("b.csv, row 2, column record_id: got 'QS-17'; record QS-17 is stored already with other quantity; "
            "a record is imported once: correct the stored one with `pourback correct`") in str(info.value)


def test_record_id_repeated_in_a_file(store, tmp_path):
    head = HEADER.rstrip("\n") + ",record_id\n"
    same = write(tmp_path, "same.csv", head + (REJECT.rstrip("\n") + ",QS-30\n") * 2)
    r = import_file(store, "inspections", same, today=TODAY)
    assert (r.added, r.skipped) == (1, 1)
    before = store.snapshot()
    other = write(tmp_path, "other.csv", head + REJECT.rstrip("\n") + ",QS-31\n"
                  + ACCEPT.rstrip("\n") + ",QS-31\n")
    with pytest.raises(BadFile) as info:
        import_file(store, "inspections", other, today=TODAY)
    assert store.snapshot() == before
    assert ("other.csv, row 3, column record_id: got 'QS-31'; record QS-31 is on row 2 of this file with other "
            "quantity, result, defect, zone; a record is imported once: correct the stored one with "
            "`pourback correct`") in str(info.value)


# --- the migration of a log written before files were keyed by digest -----------------

def _old_key(row: list[str], occurrence: int) -> str:
    # How version 3 keyed a row: SHA-1 (FIPS 180-4, via hashlib) of its twelve cells
    # joined by the unit separator, then how many identical rows came before it.
    return hashlib.sha1("\x1f".join(row).encode("utf-8")).hexdigest() + f":{occurrence}"


def _version_3_log(path: pathlib.Path, rows: list[list[str]], source: str) -> None:
    conn = sqlite3.connect(path)
    db = sqlite_utils.Database(conn)
    for m in MIGRATIONS[:3]:
        m(db)
    conn.execute("PRAGMA user_version = 3")
    conn.execute("INSERT INTO patterns VALUES ('T-200', 'bracket', 'aluminum', 2.0, 4, 3.1, NULL)")
    conn.execute("INSERT INTO zones VALUES ('T-200', 'boss', 300, 260, NULL, NULL, NULL)")
    conn.execute("INSERT INTO lots VALUES ('L3', 'T-200', '2026-03-03', 'H3', 5, 720)")
    seen: dict = {}
    for row in rows:
        n = seen.get(tuple(row), 0)
        seen[tuple(row)] = n + 1
        vals = [v or None for v in row]
        conn.execute("INSERT INTO inspections (lot, inspected_on, method, quantity, result, defect, zone, "
                     "xray_category, severity, serial, inspector, notes, record_key, recorded_at, source) "
                     "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, '2026-03-07T00:00:00+00:00', ?)",
                     (*vals[:3], int(vals[3]), *vals[4:], _old_key(row, n), source))
    conn.commit()
    conn.close()


def test_migration_keeps_every_record_and_old_files_stay_present(tmp_path):
    rows = [r.rstrip("\n").split(",") for r in (REJECT, REJECT, ACCEPT)]
    db = tmp_path / "old.db"
    _version_3_log(db, rows, "shift1.csv")
    with Store(db) as s:
        assert s.schema_version() == len(MIGRATIONS)
        assert s.count("inspections") == 3
        assert s.get_meta("legacy_keys") == "1"
        before = s.snapshot()
        # The file imported before the upgrade, imported again: nothing new.
        old = write(tmp_path, "shift1.csv", HEADER + REJECT + REJECT + ACCEPT)
        r = import_file(s, "inspections", old, today=TODAY)
        assert (r.added, r.skipped) == (0, 3)
        assert s.snapshot() == before
        # Another file with an identical row: a new record.
        r = import_file(s, "inspections", write(tmp_path, "shift2.csv", HEADER + REJECT), today=TODAY)
        assert (r.added, r.skipped) == (1, 0)
        assert rejects_of_l3(s) == 3


def test_record_id_is_an_optional_inspection_column():
    assert "record_id" in COLUMNS["inspections"][1]


def test_fixed_refused_rows_report_imports_the_fixed_rows_only(store, tmp_path):
    # --skip-bad, then the refused rows fixed in the report and the report imported:
    # the good rows are not imported a second time.
    from tracker.log.ingest import write_refused

    path = write(tmp_path, "shift.csv", HEADER + ACCEPT + REJECT.replace(",1,", ",x,"))
    r = import_file(store, "inspections", path, today=TODAY, skip_bad=True)
    assert (r.added, r.refused) == (1, 1)
    report = write_refused(r, tmp_path / "shift.refused.csv")
    report.write_text(report.read_text(encoding="utf-8").replace(",x,", ",1,"), encoding="utf-8")
    r = import_file(store, "inspections", report, today=TODAY)
    assert (r.added, r.skipped, r.refused) == (1, 0, 0)
    assert rejects_of_l3(store) == 1
