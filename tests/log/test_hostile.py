"""Hostile and unusual inputs beyond the bad-row corpus (tests/log/test_bad_input.py):
whole-file and machine failures, corrections, the log file itself, every
command with a bad --db or a read-only log. Each refused case asserts the exact
message and that the log is unchanged (Store.snapshot()).

Plumbing tests on the invented data in tests/data/good; no trade figures here.
"""

import contextlib
import csv
import errno
import io
import os
import shutil
import sqlite3
import threading
import time

import openpyxl
import pytest

from tests.support import GOOD
from tests.support.hostile import TODAY, snap
from tracker.cli import main
from tracker.csvsafe import csv_bytes, safe_cell
from tracker.errors import BadFile, BadInput, DiskFull, LogReadOnly
from tracker.log.ingest import correct_inspection, import_dir, import_file, log_inspection
from tracker.log.store import Store, restore

INSP = "lot,inspected_on,method,quantity,result,defect,zone,xray_category,severity,serial,inspector,notes\n"


@pytest.fixture
def store(logs):
    """The good data's log on the backend under test (tests/conftest.py)."""
    with Store(logs.new()) as s:
        import_dir(s, GOOD, today=TODAY)
        yield s


@pytest.fixture
def sqlite_store(tmp_path):
    """The good data's log in an SQLite file (for the tests of the file itself)."""
    with Store(tmp_path / "log.db") as s:
        import_dir(s, GOOD, today=TODAY)
        yield s


def write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8", newline="")
    return path


def refuse(store, path, **kwargs):
    before = store.snapshot()
    with pytest.raises(BadFile) as info:
        import_file(store, path.name.split(".")[0] if "kind" not in kwargs else kwargs.pop("kind"), path,
                    today=TODAY, **kwargs)
    assert store.snapshot() == before
    return str(info.value)


# --- every problem of a row, rows in file order, all counted ------------------------------

def test_every_problem_of_a_row_in_one_pass_rows_in_file_order(store, tmp_path):
    path = write(tmp_path, "inspections.csv", INSP
                 + "L3,2026-03-06,laser,0,reject,,,,,,QE-B,\n"
                 + "L9,06/03/2026,visual,1,fine,,,,,,QE-B,\n")
    msg = refuse(store, path)
    assert msg.splitlines() == [
        "inspections.csv: refused, nothing written (2 bad row(s)):",
        "inspections.csv, row 2, column method: got 'laser'; method must be one of visual, xray, ut, mt, pt, "
        "dimensional",
        "inspections.csv, row 2, column quantity: got '0'; quantity must be a whole number above 0 and at most "
        "1,000,000",
        "inspections.csv, row 2, column defect: got ''; a reject row needs the defect found; use one of "
        "shrinkage, gas, sand, slag, misrun, cold_shut, hot_tear, crack, dimensional, other",
        "inspections.csv, row 3, column inspected_on: got '06/03/2026'; inspected_on must be a date written "
        "YYYY-MM-DD",
        "inspections.csv, row 3, column result: got 'fine'; result must be one of accept, reject, rework",
        "inspections.csv, row 3, column lot: got 'L9'; unknown lot; import it in lots.csv first or check the "
        "code",
    ]


def test_every_bad_row_is_counted_and_the_first_ones_listed(store, tmp_path):
    rows = "".join(f"B{i},T-100,2026-04-01,H,0\n" for i in range(1500))
    msg = refuse(store, write(tmp_path, "lots.csv", "lot,pattern,poured_on,heat,molds\n" + rows))
    lines = msg.splitlines()
    assert lines[0] == "lots.csv: refused, nothing written (1,500 bad row(s)):"
    assert lines[1] == ("lots.csv, row 2, column molds: got '0'; molds must be a whole number above 0 and at "
                        "most 100,000")
    assert len(lines) == 22 and lines[-1] == "... and 1,480 more problem(s)"


def test_rows_with_extra_cells_are_all_counted(store, tmp_path):
    rows = "".join(f"B{i},T-100,2026-04-01,H,1,9\n" for i in range(1200))
    msg = refuse(store, write(tmp_path, "lots.csv", "lot,pattern,poured_on,heat,molds\n" + rows))
    assert msg.splitlines()[0] == "lots.csv: refused, nothing written (1,200 bad row(s)):"
    assert msg.splitlines()[-1] == "... and 1,180 more problem(s)"


# --- formats: --sep and --decimal, xlsx formulas -----------------------------------------

def test_semicolons_and_decimal_commas_import_with_sep_and_decimal(store, tmp_path):
    path = write(tmp_path, "lots.csv", "lot;pattern;poured_on;heat;molds;pour_temp_c\nL4;T-100;2026-04-01;H4;5;1600,5\n")
    r = import_file(store, "lots", path, today=TODAY, sep=";", decimal=",")
    assert (r.added, r.refused) == (1, 0)
    assert store.lot("L4")["pour_temp_c"] == 1600.5


def test_tab_separated_file_imports_with_sep_tab(store, tmp_path):
    path = write(tmp_path, "lots.csv", "lot\tpattern\tpoured_on\theat\tmolds\nL4\tT-100\t2026-04-01\tH4\t5\n")
    assert import_file(store, "lots", path, today=TODAY, sep="tab").added == 1


@pytest.mark.parametrize("kwargs, message", [
    ({"sep": "x"}, "sep: got 'x'; the separator is one of , ; | or tab"),
    ({"decimal": ";"}, "decimal: got ';'; the decimal mark is '.' or ','"),
    ({"decimal": ","}, "decimal: got ','; the decimal mark cannot be the separator ',' too"),
])
def test_bad_sep_or_decimal_is_refused(store, tmp_path, kwargs, message):
    path = write(tmp_path, "lots.csv", "lot,pattern,poured_on,heat,molds\nL4,T-100,2026-04-01,H4,5\n")
    before = store.snapshot()
    with pytest.raises(BadInput) as info:
        import_file(store, "lots", path, today=TODAY, **kwargs)
    assert str(info.value) == message
    assert store.snapshot() == before


def test_xlsx_formula_never_calculated_is_named(store, tmp_path):
    # openpyxl writes formulas without a calculated value, as some programs do.
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "lots"
    ws.append(["lot", "pattern", "poured_on", "heat", "molds"])
    ws.append(["L4", "T-100", "2026-04-01", "H4", "=2+3"])
    path = tmp_path / "lots.xlsx"
    wb.save(path)
    msg = refuse(store, path)
    assert msg.splitlines()[1] == (
        "lots.xlsx, row 2, column molds: the cell holds the formula '=2+3' whose value was never calculated; "
        "open the file in a spreadsheet program, save it (that calculates every formula) and import it again")


# --- codes written either way, look-alikes ------------------------------------------------

def test_zone_category_and_alloy_written_either_way_take_the_logs_spelling(store, tmp_path):
    # L3 is pattern T-200, whose zone is "boss"; the alloy key is "aluminum".
    path = write(tmp_path, "inspections.csv", INSP + "L3,2026-03-06,xray,1,reject,shrinkage,BOSS,cc,3,,QE-B,\n")
    assert import_file(store, "inspections", path, today=TODAY).added == 1
    rec = store.current_inspections(lot="L3").iloc[-1]
    assert (rec["zone"], rec["xray_category"]) == ("boss", "CC")
    pat = write(tmp_path, "patterns.csv", "pattern,description,alloy,casting_weight_kg,castings_per_mold,"
                                          "metal_cost_per_kg\nT-300,cover,Aluminium,2,1,3\n")
    assert import_file(store, "patterns", pat, today=TODAY).added == 1
    assert store.pattern("T-300")["alloy"] == "aluminum"
    rid = log_inspection(store, {"lot": "L3", "inspected_on": "2026-03-07", "method": "ut", "quantity": 1,
                                 "result": "reject", "defect": "Gas", "zone": "Boss"}, today=TODAY)
    assert (store.inspection(rid)["zone"], store.inspection(rid)["defect"]) == ("boss", "gas")


def test_new_code_differing_only_by_case_is_written_with_a_warning(store, tmp_path):
    path = write(tmp_path, "lots.csv", "lot,pattern,poured_on,heat,molds\nl1,T-100,2026-04-01,H4,5\n"
                                       "L5,T-100,2026-04-01,H5,5\nl5,T-100,2026-04-01,H5,5\n")
    r = import_file(store, "lots", path, today=TODAY)
    assert r.added == 3
    assert r.warnings == [
        "row 2, column lot: 'l1' is new but differs from the lot 'L1' only by case or character form; check "
        "that it is not the same lot",
        "row 4, column lot: 'l5' is new but differs from the lot 'L5' only by case or character form; check "
        "that it is not the same lot"]
    zones = write(tmp_path, "zones.csv", "pattern,zone,volume_cm3,cooling_area_cm2\nT-100,Flange,500,400\n")
    assert import_file(store, "zones", zones, today=TODAY).warnings == [
        "row 2, column zone: 'Flange' is new but differs from the zone of pattern T-100 'flange' only by case or "
        "character form; check that it is not the same zone"]


# --- corrections of a withdrawn record ----------------------------------------------------

def test_a_withdrawn_record_stays_withdrawn(store):
    rid = log_inspection(store, {"lot": "L3", "inspected_on": "2026-03-06", "method": "ut", "quantity": 2,
                                 "result": "reject", "defect": "gas"}, today=TODAY)
    void = correct_inspection(store, rid, {"void": True}, by="QE-B", reason="entered twice", today=TODAY)
    before = store.snapshot()
    with pytest.raises(BadInput) as info:
        correct_inspection(store, void, {"quantity": 1}, by="QE-B", reason="bring back", today=TODAY)
    assert str(info.value) == (f"record: got {void}; it is the withdrawal of record {rid}; a withdrawn record "
                               "stays withdrawn: log the result again as a new record")
    with pytest.raises(BadInput) as info:
        correct_inspection(store, rid, {"quantity": 1}, by="QE-B", reason="bring back", today=TODAY)
    assert str(info.value) == (f"record: got {rid}; it was withdrawn by record {void}; a withdrawn record stays "
                               "withdrawn: log the result again as a new record")
    assert store.snapshot() == before


# --- the log file: full disk, read-only, locked --------------------------------------------

def _fill_disk(store):
    """SQLite's page limit (PRAGMA max_page_count) stands in for a full disk: the
    write fails with SQLITE_FULL, the error a full disk gives."""
    conn = store.dialect.conn  # the sqlite3 connection under the store
    conn.execute("VACUUM")  # no free pages left to fill
    pages = conn.execute("PRAGMA page_count").fetchone()[0]
    conn.execute(f"PRAGMA max_page_count = {pages + 8}")
    conn.execute("CREATE TABLE filler (b BLOB)")
    level, conn.isolation_level = conn.isolation_level, None  # each insert its own transaction
    for size in (4096, 512, 64, 8, 1):  # up to the last byte of the last page
        with contextlib.suppress(sqlite3.OperationalError):
            while True:
                conn.execute("INSERT INTO filler VALUES (zeroblob(?))", (size,))
    conn.isolation_level = level
    # and the room left in the records' own pages
    for _ in range(20):  # L1 poured 20 castings, none inspected by mt yet
        try:
            log_inspection(store, {"lot": "L1", "inspected_on": "2026-03-06", "method": "mt", "quantity": 1,
                                   "result": "accept", "notes": "f" * 1000}, today=TODAY)
        except DiskFull:
            break


def test_disk_full_during_import_and_log_is_one_message(sqlite_store, tmp_path):
    store = sqlite_store
    rows = "".join(f"L3,2026-03-06,ut,1,accept,,,,,S{i},QE-B,{'n' * 200}\n" for i in range(20))
    path = write(tmp_path, "inspections.csv", INSP + rows)
    _fill_disk(store)
    before = store.snapshot()
    with pytest.raises(DiskFull) as info:
        import_file(store, "inspections", path, today=TODAY)
    assert str(info.value) == (f"the disk holding {store.path} is full; nothing was written. Free some space "
                               "on it and try again")
    with pytest.raises(DiskFull):
        log_inspection(store, {"lot": "L3", "inspected_on": "2026-03-06", "method": "ut", "quantity": 1,
                               "result": "accept", "notes": "n" * 1900}, today=TODAY)
    assert store.snapshot() == before


def test_read_only_log_refuses_import_and_log_in_one_message(db, tmp_path, read_only):
    read_only(db)
    before = snap(db)
    path = write(tmp_path, "inspections.csv", INSP + "L3,2026-03-06,ut,1,accept,,,,,,QE-B,\n")
    with Store(db, create=False) as s:
        with pytest.raises(LogReadOnly) as info:
            import_file(s, "inspections", path, today=TODAY)
        assert str(info.value) == (f"the log {db} is read-only; nothing was written. Ask for write access to the "
                                   "file and its folder, or copy the log to a place you can write")
        with pytest.raises(LogReadOnly):
            log_inspection(s, {"lot": "L3", "inspected_on": "2026-03-06", "method": "ut", "quantity": 1,
                               "result": "accept"}, today=TODAY)
    assert snap(db) == before


def test_a_locked_log_says_within_a_second_that_it_waits(db):
    holder = sqlite3.connect(db, check_same_thread=False)
    holder.execute("BEGIN IMMEDIATE")
    said = []
    start = time.monotonic()

    def release():
        time.sleep(2.5)
        holder.rollback()

    t = threading.Thread(target=release)
    t.start()
    with Store(db, create=False, on_wait=lambda m: said.append((time.monotonic() - start, m))) as s:
        start = time.monotonic()
        rid = log_inspection(s, {"lot": "L3", "inspected_on": "2026-03-06", "method": "ut", "quantity": 1,
                                 "result": "accept"}, today=TODAY)
    t.join()
    holder.close()
    assert rid > 0
    [(after, message)] = said
    assert after < 1.5
    assert message == f"The log {db} is locked by another writer; waiting up to 29 s more ..."


# --- --skip-bad: the refused rows' report first, streamed -----------------------------------

def test_skip_bad_streams_the_report_and_keeps_no_rows_in_memory(store, tmp_path):
    rows = "".join(f"B{i},T-100,2026-04-01,H,{0 if i % 2 else 1}\n" for i in range(3000))
    path = write(tmp_path, "lots.csv", "lot,pattern,poured_on,heat,molds\n" + rows)
    report = tmp_path / "lots.refused.csv"
    r = import_file(store, "lots", path, today=TODAY, skip_bad=True, refused_to=lambda p: report,
                    chunk_rows=500)
    assert (r.added, r.refused, r.refused_rows) == (1500, 1500, [])
    assert r.refused_file == str(report)
    with report.open(encoding="utf-8", newline="") as fh:
        got = list(csv.DictReader(fh))
    assert len(got) == 1500 and got[0]["row"] == "3" and got[-1]["row"] == "3001"
    assert not list(tmp_path.glob(".*.part"))


def _skip_bad_import(db, folder):
    """`pourback import lots --skip-bad` of one good and one bad row: (result, the
    report's temporary file, the snapshot before)."""
    from click.testing import CliRunner

    path = write(folder, "lots.csv", "lot,pattern,poured_on,heat,molds\nL4,T-100,2026-04-01,H,1\n"
                                     "L5,T-100,2026-04-01,H,0\n")
    return path, folder / f".lots.refused.csv.{os.getpid()}.part", snap(db), \
        lambda: CliRunner().invoke(main, ["import", "lots", str(path), "--skip-bad", "--db", str(db)])


def test_skip_bad_into_a_folder_it_cannot_write_commits_nothing(db, tmp_path, read_only):
    folder = tmp_path / "in"
    folder.mkdir()
    _, part, before, run = _skip_bad_import(db, folder)
    read_only(folder)
    res = run()
    assert res.exit_code == 1
    assert res.output == f"Error: no permission to write {part}; choose a place you can write to\n"
    assert snap(db) == before


def test_skip_bad_on_a_full_disk_commits_nothing(db, tmp_path, monkeypatch):
    from tracker.log.ingest.refused import RefusedReport

    def full(self, row, columns):
        raise OSError(errno.ENOSPC, "No space left on device", str(self.tmp))

    monkeypatch.setattr(RefusedReport, "write", full)
    _, part, before, run = _skip_bad_import(db, tmp_path)
    res = run()
    assert res.exit_code == 1
    assert res.output == f"Error: the disk is full: could not write {part}; free some space and try again\n"
    assert snap(db) == before
    assert not (tmp_path / "lots.refused.csv").exists()


# --- backups ---------------------------------------------------------------------------------

def test_a_backup_that_fails_part_way_leaves_no_file(sqlite_store, tmp_path, monkeypatch):
    store = sqlite_store
    real = store.dialect.conn  # the sqlite3 connection under the store

    class Broken:
        def __getattr__(self, name):
            return getattr(real, name)

        def backup(self, target, pages=-1):
            target.execute("CREATE TABLE half (x)")
            raise sqlite3.OperationalError("database or disk is full")

    store.dialect.conn = Broken()
    try:
        with pytest.raises(DiskFull):
            store.backup(tmp_path / "b.db")
    finally:
        store.dialect.conn = real
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(("b.db", ".b.db"))) == []


def test_restore_names_a_partial_backup_and_its_journal(sqlite_store, tmp_path):
    store = sqlite_store
    partial = tmp_path / f".b.db.{os.getpid()}.partial"
    shutil.copyfile(store.path, partial)
    with pytest.raises(Exception) as info:
        restore(partial, tmp_path / "new.db")
    assert str(info.value) == (f"backup {partial} is a partial backup, left by a backup that was stopped "
                               "part-way; it is not complete: use another backup (and delete this file)")
    cut = tmp_path / "cut.db"
    shutil.copyfile(store.path, cut)
    (tmp_path / "cut.db-journal").write_bytes(b"\0" * 512)
    with pytest.raises(Exception) as info:
        restore(cut, tmp_path / "new.db")
    assert str(info.value) == (f"backup {cut} is incomplete: {cut}-journal lies beside it, left by a copy that "
                               "was stopped part-way; use another backup (a file written by `pourback backup` "
                               "has no such file beside it)")
    assert not (tmp_path / "new.db").exists()


def test_restore_names_a_foreign_sqlite_file(tmp_path):
    other = tmp_path / "other.db"
    with sqlite3.connect(other) as c:
        c.execute("CREATE TABLE recipes (x)")
    with pytest.raises(Exception) as info:
        restore(other, tmp_path / "new.db")
    assert str(info.value) == (f"backup {other} is an SQLite database but not a pourback log; give a file "
                               "written by `pourback backup`")


# --- exports: one formula guard ---------------------------------------------------------------

@pytest.mark.parametrize("cell, out", [
    # OWASP "CSV Injection": cells starting with = + - @ tab or CR are run as formulas.
    ("=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"),
    ("+1+1", "'+1+1"),
    ("-inf", "'-inf"),
    ("-nan", "'-nan"),
    ("+1_000", "'+1_000"),
    ("@SUM(A1)", "'@SUM(A1)"),
    ("\tx", "'\tx"),
    ("-3", "-3"),
    ("+1.5e3", "+1.5e3"),
    ("plain", "plain"),
    (-3.5, -3.5),
])
def test_the_formula_guard(cell, out):
    assert safe_cell(cell) == out


def test_dashboard_downloads_go_through_the_guard():
    import pandas as pd

    frame = pd.DataFrame({"lot": ["=cmd|' /C calc'!A0", "L1"], "quantity": [1, -2], "=col": ["-inf", "ok"]})
    text = csv_bytes(frame).decode("utf-8-sig")
    assert list(csv.reader(io.StringIO(text))) == [
        ["lot", "quantity", "'=col"], ["'=cmd|' /C calc'!A0", "1", "'-inf"], ["L1", "-2", "ok"]]


def test_lot_totals_hold_across_many_chunks_and_lots(store, tmp_path):
    """Rejects of one lot spread over chunks far apart, with thousands of lots between
    (the importer's per-lot totals grow as lots come): the record that takes the lot
    past its castings poured is refused, naming the lot; the ones before it pass."""
    lots = "".join(f"M{i},T-100,2026-04-01,H,1\n" for i in range(3000))  # 1 mold x 2 castings each
    import_file(store, "lots", write(tmp_path, "lots.csv", "lot,pattern,poured_on,heat,molds\n" + lots),
                today=TODAY)
    rows = ["M0,2026-04-02,visual,1,reject,sand,,,,,,"]
    rows += [f"M{i},2026-04-02,visual,2,accept,,,,,,," for i in range(1, 3000)]
    rows += ["M0,2026-04-03,visual,1,reject,sand,,,,,,", "M0,2026-04-04,visual,1,reject,sand,,,,,,"]
    before = store.snapshot()
    path = write(tmp_path, "insp.csv", INSP + "\n".join(rows) + "\n")
    with pytest.raises(BadFile) as info:
        import_file(store, "inspections", path, today=TODAY, chunk_rows=500)
    [problem] = info.value.problems
    assert (problem.row, problem.column) == (len(rows) + 1, "quantity")
    assert "lot M0 would have 3 castings rejected but only 2 were poured" in str(problem)
    assert store.snapshot() == before
    r = import_file(store, "inspections", write(tmp_path, "ok.csv", INSP + "\n".join(rows[:-1]) + "\n"),
                    today=TODAY, chunk_rows=500)
    assert r.added == len(rows) - 1
