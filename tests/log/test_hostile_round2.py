"""Hostile input of issue 27's second round, on both backends: a line break in a
code, a file cut after a digit, rows found from another file (named, and added
with ``new_records``), a revision that leaves risers out, a pipe, a lock held past
the wait the message names. Each refused
case asserts the exact message and that the log is unchanged (Store.snapshot()).

Plumbing tests on the invented data in tests/data/good; no trade figures here.
"""

import os
import threading
import time

import pytest

from tests.support import GOOD
from tests.support.hostile import TODAY
from tracker.errors import BadFile, LogLocked
from tracker.log import dialect
from tracker.log.ingest import import_dir, import_file, log_inspection
from tracker.log.store import Store

INSP = "lot,inspected_on,method,quantity,result,defect,zone,xray_category,severity,serial,inspector,notes\n"
ROW = "L1,2026-03-06,ut,1,accept,,,,,,QE-A,\n"
RISERS = ("pattern,revision,effective_from,riser,zone,placement,top,diameter_mm,height_mm,sleeve,"
          "neck_diameter_mm")


@pytest.fixture
def store(logs):
    """The good data's log on the backend under test (tests/conftest.py)."""
    with Store(logs.new()) as s:
        import_dir(s, GOOD, today=TODAY)
        yield s


@pytest.fixture(scope="module")
def refusing_store(session_logs):
    """The good data's log, shared by the tests whose imports are all refused (a
    refusal leaves it unchanged, which each of them checks)."""
    with Store(session_logs.new("refusals")) as s:
        import_dir(s, GOOD, today=TODAY)
        yield s


def write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8", newline="")
    return path


def refuse(store, kind, path):
    before = store.snapshot()
    with pytest.raises(BadFile) as info:
        import_file(store, kind, path, today=TODAY)
    assert store.snapshot() == before
    assert store.integrity_check() == "ok"
    return str(info.value)


def imported_at(store, file):
    """The import date of ``file`` as the log holds it, as the result writes it."""
    at = store.conn.execute("SELECT imported_at FROM imports WHERE file = ?", (file,)).fetchone()[0]
    return at[:16].replace("T", " ")


# --- a line break inside a code ------------------------------------------------------------

@pytest.mark.parametrize("kind, text, column, got", [
    ("inspections", INSP + '"LX-\n777",2026-03-06,ut,1,accept,,,,,,QE-A,\n', "lot", "'LX-\\n777'"),
    ("lots", "lot,pattern,poured_on,heat,molds\n\"L\t9\",T-100,2026-03-02,H1,1\n", "lot", "'L\\t9'"),
    ("inspections", INSP + 'L1,2026-03-06,ut,1,accept,,,,,,"QE\r\nA",\n', "inspector", "'QE\\r\\nA'"),
])
def test_a_line_break_in_a_code_is_refused(refusing_store, tmp_path, kind, text, column, got):
    msg = refuse(refusing_store, kind, write(tmp_path, f"{kind}.csv", text))
    assert msg.splitlines() == [
        f"{kind}.csv: refused, nothing written (1 bad row(s)):",
        f"{kind}.csv, row 2, column {column}: got {got}; {column} holds a line break or a tab; a code or a "
        "name is written on one line: remove it"]


def test_a_line_break_in_notes_is_kept(store, tmp_path):
    path = write(tmp_path, "inspections.csv", INSP + 'L1,2026-03-06,ut,1,accept,,,,,,QE-A,"two\nlines"\n')
    assert import_file(store, "inspections", path, today=TODAY).added == 1


# --- a file cut after a digit ----------------------------------------------------------------

def test_a_last_line_cut_after_a_digit_is_refused(store, tmp_path):
    text = "lot,pattern,poured_on,heat,molds\nL8,T-100,2026-03-02,H8,5"  # 50 cut to 5, no line end
    msg = refuse(store, "lots", write(tmp_path, "lots.csv", text))
    assert msg == ("lots.csv, row 2: the last line has no line end and ends in a number (molds '5'); the file "
                   "may have been cut off while being copied or saved, and the number with it (50 cut to 5): "
                   "export it again, or, if the row is whole, end the file with a line end")
    # The same file ended by a line end is taken as it stands.
    assert import_file(store, "lots", write(tmp_path, "lots.csv", text + "\n"), today=TODAY).added == 1


# --- rows found from another file --------------------------------------------------------------

def test_the_same_bytes_under_another_name_name_the_earlier_file(store, tmp_path):
    first = import_file(store, "inspections", write(tmp_path, "day.csv", INSP + ROW), today=TODAY)
    assert (first.added, first.warnings) == (1, [])
    before = store.snapshot()
    again = import_file(store, "inspections", write(tmp_path, "shift2.csv", INSP + ROW), today=TODAY)
    assert (again.added, again.skipped) == (0, 1)
    assert again.warnings == [
        f"row 2 already in the log from day.csv, imported {imported_at(store, 'day.csv')} UTC (the same rows "
        "of the same bytes), not added again; if they are new inspections, import again with --new-records"]
    assert store.snapshot() == before
    # --new-records: the second shift's row is a record of its own (and once only).
    new = import_file(store, "inspections", tmp_path / "shift2.csv", today=TODAY, new_records=True)
    assert (new.added, new.skipped) == (1, 0)
    assert store.counts()["inspections"] == 8  # the good data's 6, day.csv's and shift2.csv's


def test_a_file_holding_an_imported_row_twice(store, tmp_path):
    import_file(store, "inspections", write(tmp_path, "day.csv", INSP + ROW), today=TODAY)
    twice = write(tmp_path, "night.csv", INSP + ROW + ROW)
    result = import_file(store, "inspections", twice, today=TODAY)
    # Row 2 is day.csv's row (the file starts with its bytes); row 3 is a record of its own.
    assert (result.added, result.skipped) == (1, 1)
    assert result.warnings[0].startswith("row 2 already in the log from day.csv, imported ")
    other = write(tmp_path, "night2.csv", INSP + ROW + ROW)
    both = import_file(store, "inspections", other, today=TODAY, new_records=True)
    assert (both.added, both.skipped, both.warnings) == (2, 0, [])
    # Identical rows within one file stay separate records.
    assert store.counts()["inspections"] == 6 + 1 + 1 + 2


# --- a revision that leaves risers out ---------------------------------------------------------

def test_a_revision_listing_only_the_changed_riser_is_refused(store, tmp_path):
    three = write(tmp_path, "risers.csv", RISERS + "\n"
                  "T-100,C,2026-02-01,R1,flange,side,blind,140,140,,90\n"
                  "T-100,C,2026-02-01,R2,body,top,open,100,100,INS-100,\n"
                  "T-100,C,2026-02-01,R3,body,top,open,90,90,,\n")
    assert import_file(store, "risers", three, today=TODAY).added == 3
    only_r2 = write(tmp_path, "risers-d.csv", RISERS + "\nT-100,D,2026-04-01,R2,body,top,open,110,110,,\n")
    assert refuse(store, "risers", only_r2).splitlines() == [
        "risers-d.csv: refused, nothing written (1 bad row(s)):",
        "risers-d.csv, row 2, column revision: revision D of T-100 lists risers R2 but leaves out R1, R3 of "
        "revision C before it; a revision lists every riser the pattern keeps (unchanged ones too): add their "
        "rows, or name the risers it removes in the column removed_risers"]
    wrong = write(tmp_path, "risers-d.csv", RISERS + ",removed_risers\n"
                  "T-100,D,2026-04-01,R2,body,top,open,110,110,,,R1 R3 R9\n")
    assert refuse(store, "risers", wrong).splitlines()[1] == (
        "risers-d.csv, row 2, column revision: revision D of T-100 removes R9 in removed_risers, but revision "
        "C before it has no such riser (it has R1, R2, R3)")
    said = write(tmp_path, "risers-d.csv", RISERS + ",removed_risers\n"
                 "T-100,D,2026-04-01,R2,body,top,open,110,110,,,R1; R3\n")
    assert import_file(store, "risers", said, today=TODAY).added == 1
    assert sorted(store.risers_frame(pattern="T-100", revision="D")["riser"]) == ["R2"]


# --- a pipe ------------------------------------------------------------------------------------

def test_a_pipe_is_read(store, tmp_path):
    fifo = tmp_path / "stdin"
    os.mkfifo(fifo)
    writer = threading.Thread(target=lambda: fifo.write_text(INSP + ROW, encoding="utf-8"))
    writer.start()
    try:
        result = import_file(store, "inspections", fifo, today=TODAY)
    finally:
        writer.join(timeout=10)
    assert (result.file, result.added) == ("stdin", 1)


# --- a lock held past the wait the message names -----------------------------------------------

def test_a_writer_gives_up_when_the_wait_it_named_is_over(store, monkeypatch):
    # The wait is cut to 1.5 s (1 s before the message, 0.5 s after) to keep the test short.
    monkeypatch.setattr(dialect, "BUSY_TIMEOUT_MS", 1500)
    monkeypatch.setattr(dialect, "PG_LOCK_TIMEOUT_MS", 1500)
    before = store.snapshot()
    holding, done = threading.Event(), threading.Event()

    def hold():
        with Store(store.path, create=False) as other, other.write():
            holding.set()
            done.wait(timeout=30)

    holder = threading.Thread(target=hold)
    holder.start()
    said = []
    try:
        assert holding.wait(timeout=30)
        with Store(store.path, create=False, on_wait=said.append) as s:
            start = time.monotonic()
            with pytest.raises(LogLocked) as exc:
                log_inspection(s, {"lot": "L3", "inspected_on": "2026-03-06", "method": "ut", "quantity": 1,
                                   "result": "accept"}, today=TODAY)
            waited = time.monotonic() - start
    finally:
        done.set()
        holder.join(timeout=30)
    assert said == [f"The log {store.name} is locked by another writer; waiting up to 0.5 s more ..."]
    assert str(exc.value) == (f"the log {store.name} stayed locked by another writer for 1.5 s; nothing was "
                              "written; try again when the other import or backup has finished")
    # It gave up when the wait it named was over (it waited 8 times as long before).
    assert 1.4 < waited < 3.0
    assert store.snapshot() == before
