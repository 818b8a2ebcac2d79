"""Every command with a bad --db and with a read-only log: one line, never a
traceback, the log unchanged; and the command-line cases of the hostile corpus
(numbers too large for SQLite, weeks outside the calendar, the dashboard's
server stopped with its command). Plumbing tests on tests/data/good.
"""

import os
import signal
import socket
import sqlite3
import subprocess
import sys
import time
import urllib.request

import pytest

from tests.support import GOOD, REPO
from tests.support.hostile import TODAY, snap
from tracker.cli import cmd_app, main
from tracker.log.ingest import import_dir
from tracker.log.store import Store

LOG_ARGS = ["--lot", "L3", "--method", "ut", "--quantity", "1", "--result", "accept",
            "--inspected-on", "2026-03-06"]
# Each command that takes --db, with the least it needs to reach the log.
COMMANDS = {
    "init": [],
    "import": ["lots", "NEWLOTS"],
    "log": LOG_ARGS,
    "correct": ["1", "--reason", "recount", "--quantity", "19"],
    "history": [],
    "backup": ["BACKUP"],
    "review": ["--week", "2026-W10"],
    "check": [],
    "patterns": [],
    "suggest": ["--week", "2026-W10"],
    "what-if": ["--pattern", "T-100", "--riser", "R1", "--diameter-mm", "150"],
    "fit-model": [],
    "track-record": [],
    "dashboard": [],
    "audit": [],
    "settings": [],
    "thermal": ["--pattern", "T-100", "--zone", "flange"],
    "user": ["list"],
    "action": ["list"],
    "casting": ["T-100", "--stl", "PLATE_STL"],
    "size": ["--pattern", "T-100", "--zone", "flange"],
}


def test_the_walk_covers_every_command_with_a_db_option():
    with_db = {name for name, c in main.commands.items() if any(p.name == "db_path" for p in c.params)}
    with_db |= {name for name, c in main.commands.items()
                if any(any(p.name == "db_path" for p in sub.params) for sub in getattr(c, "commands", {}).values())}
    assert with_db == set(COMMANDS) | {"restore", "demo"}  # those two take --db as the file to write


@pytest.fixture
def launched(monkeypatch):
    calls = []
    monkeypatch.setattr(cmd_app, "_launch", lambda argv, env: calls.append(argv))
    return calls


def _run(runner, name, db, tmp_path):
    lots = tmp_path / "new-lots.csv"
    lots.write_text("lot,pattern,poured_on,heat,molds\nL4,T-100,2026-04-01,H4,5\n", encoding="utf-8")
    subst = {"BACKUP": str(tmp_path / "backup.db"), "NEWLOTS": str(lots),
             "PLATE_STL": str(REPO / "sample_data" / "castings" / "plate.stl")}
    args = [subst.get(a, a) for a in COMMANDS[name]]
    return runner.invoke(main, [name, *args, "--db", str(db)])


def _bad_dbs(tmp_path):
    junk = tmp_path / "junk.db"
    junk.write_text("these are not the rows you are looking for\n" * 40)
    empty = tmp_path / "empty.db"
    empty.write_bytes(b"")
    other = tmp_path / "other.db"
    with sqlite3.connect(other) as c:
        c.execute("CREATE TABLE recipes (name TEXT)")
        c.execute("CREATE TABLE steps (n INTEGER)")
    folder = tmp_path / "folder.db"
    folder.mkdir()
    missing_dir = tmp_path / "no" / "such" / "log.db"
    return {
        "not-sqlite": (junk, f"{junk} is not a pourback log (SQLite says: file is not a database); give the log's "
                             "path with --db, or create a new log with `pourback init --db NEW.db`"),
        "empty-file": (empty, f"{empty} is not a pourback log (the file is empty); give the log's path with --db, "
                              "or create a new log with `pourback init --db NEW.db`"),
        "other-program": (other, f"{other} is not a pourback log (an SQLite database of another program, with the "
                                 "tables recipes, steps); give the log's path with --db, or create a new log with "
                                 "`pourback init --db NEW.db`"),
        "a-folder": (folder, f"cannot open the log {folder}: it is a folder; give the log's file with --db"),
        "missing-folder": (missing_dir, f"no log at {missing_dir}; create one with `pourback init --db "
                                        f"{missing_dir}` (or `pourback demo`), or give the log's path with --db"),
    }


BAD = ["not-sqlite", "empty-file", "other-program", "a-folder", "missing-folder"]


@pytest.mark.parametrize("name", sorted(COMMANDS))
@pytest.mark.parametrize("bad", BAD)
def test_every_command_with_a_bad_db_is_one_line(runner, launched, tmp_path, name, bad):
    path, message = _bad_dbs(tmp_path)[bad]
    before = path.read_bytes() if path.is_file() else None
    res = _run(runner, name, path, tmp_path)
    if name == "init" and bad in ("empty-file", "missing-folder"):
        # init creates a log: in an empty file it may; in a missing folder it says so.
        if bad == "empty-file":
            assert res.exit_code == 0, res.output
            return
        message = (f"cannot open the log {path}: the folder {path.parent} does not exist; check the path given "
                   "with --db (or $POURBACK_DB)")
    if bad == "a-folder":  # refused by the option itself, before the command runs
        assert res.exit_code == 2, res.output
        assert res.output.endswith(f"Error: Invalid value for '--db': File '{path}' is a directory.\n")
    else:
        assert res.exit_code == 1, res.output
        assert res.output == f"Error: {message}\n"
    assert "Traceback" not in res.output and not launched
    if before is not None:
        assert path.read_bytes() == before  # a file that is not a log is never changed
    assert not (path.parent / (path.name + "-wal")).exists() or bad == "other-program"


WRITES = {"import", "log", "correct", "fit-model"}


@pytest.mark.parametrize("name", sorted(COMMANDS))
def test_every_command_on_a_read_only_log(runner, launched, tmp_path, name, read_only):
    db = tmp_path / "log.db"
    with Store(db) as s:
        import_dir(s, GOOD, today=TODAY)
    read_only(db)
    before = snap(db)
    res = _run(runner, name, db, tmp_path)
    assert "Traceback" not in res.output
    if name in WRITES:
        assert res.exit_code == 1, res.output
        assert res.output == (f"Error: the log {db} is read-only; nothing was written. Ask for write access to the "
                              "file and its folder, or copy the log to a place you can write\n")
    else:
        # Reading a read-only log works (suggest may find too few data to suggest: one line too).
        assert res.exit_code in (0, 1), res.output
        assert res.exit_code == 0 or res.output.count("\n") == 1, res.output
    assert snap(db) == before


# --- numbers and weeks ------------------------------------------------------------------

THERMAL = ["thermal", "--alloy", "steel", "--placement", "side"]


@pytest.mark.parametrize("args, message", [
    (["correct", "99999999999999999999", "--reason", "x", "--void"],
     "Error: Invalid value for 'RECORD_ID': 99999999999999999999 is not in the range 1<=x<=9223372036854775807."),
    (["history", "--limit", "99999999999999999999"],
     "Error: Invalid value for '--limit': 99999999999999999999 is not in the range 1<=x<=1000000."),
    (["suggest", "--weeks", "99999999999999999999"],
     "Error: weeks: got 99999999999999999999; weeks must be a whole number from 1 to 520, e.g. 13"),
    (["log", *LOG_ARGS[:4], "--quantity", "99999999999999999999", "--result", "accept"],
     "Error: Quantity: got '99999999999999999999'; must be a whole number above 0 and at most 1,000,000"),
    (["review", "--week", "0001-W01"],
     "Error: week: got '0001-W01'; the log holds dates from 1950 to {last} only; give a week in those years"),
    (["review", "--week", "9999-W52"],
     "Error: week: got '9999-W52'; the log holds dates from 1950 to {last} only; give a week in those years"),
    (["suggest", "--week", "0001-W01"],
     "Error: week: got '0001-W01'; the log holds dates from 1950 to {last} only; give a week in those years"),
    # thermal: every length range-checked before a grid is built (it grew without bound at 1e-300 mm
    # and ended in a traceback at 1e300 mm)
    ([*THERMAL, "--length-mm", "1e-300", "--width-mm", "1e-300", "--thickness-mm", "1e-300",
      "--diameter-mm", "1e-300", "--height-mm", "1e-300"],
     "Error: --length-mm: got 1e-300; must lie between 0.1 mm and 20,000 mm, the range the imports take; check "
     "the figure and its unit"),
    ([*THERMAL, "--length-mm", "300", "--width-mm", "300", "--thickness-mm", "1e300",
      "--diameter-mm", "1e300", "--height-mm", "1e300"],
     "Error: --thickness-mm: got 1e+300; must lie between 0.1 mm and 5,000 mm, the range the imports take; "
     "check the figure and its unit"),
    ([*THERMAL, "--length-mm", "300", "--width-mm", "300", "--thickness-mm", "50",
      "--diameter-mm", "100", "--height-mm", "100", "--neck-diameter-mm", "1e-300"],
     "Error: --neck-diameter-mm: got 1e-300; must lie between 2 mm and 3,000 mm, the range the imports take; "
     "check the figure and its unit"),
    # inside every limit, but a model no grid of bounded size resolves: refused with the figures
    # (it ran past 60 s)
    ([*THERMAL, "--length-mm", "20000", "--width-mm", "20000", "--thickness-mm", "5",
      "--diameter-mm", "3000", "--height-mm", "5000"],
     "Error: --thickness-mm: got 5.0; a model 21,500 mm by 5,000 mm with 3 cells across this section needs about "
     "40,087,842 cells (about 24,053 MB); the limit is 50,000 cells: the section is too thin for the length and "
     "riser given; check the dimensions, or model a shorter part of the section"),
])
def test_numbers_and_weeks_out_of_range_are_one_line(runner, db, args, message):
    import datetime as dt

    from tracker.limits import latest_date

    before = snap(db)
    res = runner.invoke(main, [*args, "--db", str(db)])
    assert res.exit_code in (1, 2)
    assert message.format(last=latest_date(dt.date.today()).year) in res.output
    assert res.output.strip().splitlines()[-1].startswith("Error:")
    assert "Traceback" not in res.output
    assert snap(db) == before


def test_every_thermal_solve_stops_at_its_time_bound():
    from tracker.errors import SolveTooLong
    from tracker.thermal import ThermalCase, run

    case = ThermalCase("steel", "top", 50.0, 300.0, 300.0, 155.0, 155.0)
    with pytest.raises(SolveTooLong) as err:
        run(case, time_limit_s=0.0)
    assert str(err.value).startswith("thermal solve stopped at its time limit of 0 s after 1 of about ")
    assert str(err.value).endswith("check the dimensions, or ask for a coarser grid (--cells-across)")


def test_a_riser_far_too_big_for_its_section_is_refused_before_a_step_is_taken():
    from tracker.errors import BadInput
    from tracker.thermal import ThermalCase, run

    # 10,000 time steps would be needed to resolve both: refused with the figures, never a long solve
    with pytest.raises(BadInput, match=r"the riser freezes about [\d,]+ times later than the section .* the "
                                       r"limit is 3,000: check the dimensions"):
        run(ThermalCase("steel", "side", 10.0, 100.0, 100.0, 400.0, 400.0))


def test_a_locked_log_is_announced_on_stderr(db, tmp_path):
    holder = sqlite3.connect(db)
    holder.execute("BEGIN IMMEDIATE")
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    proc = subprocess.Popen([sys.executable, "-m", "tracker", "log", *LOG_ARGS, "--db", str(db)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    # the interpreter starts and waits a second for the lock, then says so: its first
    # line on stderr comes while the lock is still held (stderr is line-buffered)
    said = proc.stderr.readline()
    holder.rollback()
    holder.close()
    out, err = proc.communicate(timeout=60)
    assert proc.returncode == 0, said + err
    assert said + err == f"The log {db} is locked by another writer; waiting up to 29 s more ...\n"
    assert out.startswith("Logged record ")


# --- the dashboard's server stops with its command ------------------------------------------

def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_stopping_pourback_dashboard_stops_the_server(db, tmp_path):
    port = _free_port()
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    env.pop("POURBACK_DB", None)
    log = (tmp_path / "server.log").open("w")
    proc = subprocess.Popen([sys.executable, "-m", "tracker", "dashboard", "--db", str(db), "--port", str(port)],
                            stdout=log, stderr=subprocess.STDOUT, env=env)
    try:
        deadline = time.monotonic() + 120
        while True:
            assert proc.poll() is None, (tmp_path / "server.log").read_text()
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/_stcore/health", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            assert time.monotonic() < deadline, "the dashboard did not answer"
            time.sleep(0.3)
        proc.send_signal(signal.SIGTERM)  # by its process id, as a service manager stops it
        proc.wait(timeout=30)
        # The port is free again: no server left behind.
        with socket.socket() as s:
            s.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
            s.bind(("127.0.0.1", port))
    finally:
        if proc.poll() is None:
            proc.kill()
        log.close()
