"""Online backup and restore: `pourback backup` while another process writes, then
`pourback restore`, gives a sound log holding the records."""

import shutil
import sqlite3
import subprocess
import sys
import time

import pytest

from tests.support import GOOD
from tracker.cli import main
from tracker.log.ingest import import_dir, import_file
from tracker.log.store import Store

WRITER = r"""
import pathlib, sys
from tracker.log.ingest import log_inspection
from tracker.log.store import Store


db, stop, ready = sys.argv[1], pathlib.Path(sys.argv[2]), pathlib.Path(sys.argv[3])
n = 0
with Store(db, create=False) as s:
    while not stop.exists():
        log_inspection(s, {"lot": "BIG", "inspected_on": "2026-03-06", "method": "ut", "quantity": 1,
                           "result": "accept", "serial": f"bg-{n}"}, by="writer")
        n += 1
        if n == 3:
            ready.touch()
print(n)
"""


@pytest.fixture(scope="module")
def template(tmp_path_factory):
    """The good log plus 30,000 records on lot BIG: a log of several MB, so the
    backup copies it in more than one step."""
    tmp_path = tmp_path_factory.mktemp("template")
    path = tmp_path / "log.db"
    lots = tmp_path / "lots.csv"
    lots.write_text("lot,pattern,poured_on,heat,molds\nBIG,T-100,2026-03-01,H9,50000\n", encoding="utf-8")
    insp = tmp_path / "inspections.csv"
    insp.write_text("lot,inspected_on,method,quantity,result,serial\n"
                    + "".join(f"BIG,2026-03-05,visual,1,accept,S{i}\n" for i in range(30_000)),
                    encoding="utf-8")
    with Store(path) as s:
        import_dir(s, GOOD)
        import_file(s, "lots", lots)
        import_file(s, "inspections", insp)
    return path


@pytest.fixture
def db(template, tmp_path):
    path = tmp_path / "log.db"
    shutil.copy(template, path)
    return path


def _rows(path) -> dict[int, tuple]:
    conn = sqlite3.connect(str(path))
    try:
        return {r[0]: r for r in conn.execute("SELECT * FROM inspections")}
    finally:
        conn.close()


def test_backup_while_another_process_writes_then_restore(runner, db, tmp_path):
    stop, ready = tmp_path / "stop", tmp_path / "ready"
    proc = subprocess.Popen([sys.executable, "-c", WRITER, str(db), str(stop), str(ready)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 60
        while not ready.exists() and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.01)
        assert ready.exists(), proc.stderr.read() if proc.poll() is not None else "writer never started"
        with Store(db) as s:
            at_start = s.count("inspections")
        backup = tmp_path / "backup.db"
        result = runner.invoke(main, ["backup", str(backup), "--db", str(db)])
        assert result.exit_code == 0, result.output
        assert result.output == f"Backed up {db} to {backup}\n"
        assert proc.poll() is None, "the writer stopped before the backup ended"
    finally:
        stop.touch()
        out, err = proc.communicate(timeout=60)
    assert proc.returncode == 0, err[-2000:]
    written = int(out)
    assert written >= 3

    restored = tmp_path / "restored.db"
    result = runner.invoke(main, ["restore", str(backup), "--db", str(restored)])
    assert result.exit_code == 0, result.output
    assert result.output == f"Restored {backup} to {restored}\n"
    with Store(restored, create=False) as s:
        assert s.integrity_check() == "ok"
        n = s.count("inspections")
        assert s.counts()["lots"] == 4
    final = _rows(db)
    assert len(final) == 30_006 + written
    # a consistent snapshot: every record there at the start, and a prefix of the writer's
    assert at_start <= n <= len(final)
    got = _rows(restored)
    assert got == {i: final[i] for i in got}
    assert set(got) == set(sorted(final)[:n])


def test_backup_to_an_existing_file_is_refused(runner, db, tmp_path):
    existing = tmp_path / "backup.db"
    existing.write_bytes(b"precious")
    result = runner.invoke(main, ["backup", str(existing), "--db", str(db)])
    assert result.exit_code == 1
    assert result.output == f"Error: backup file {existing} exists already; choose a new name\n"
    assert existing.read_bytes() == b"precious"


def test_restore_refuses_an_existing_target_and_a_bad_backup(runner, db, tmp_path):
    backup = tmp_path / "backup.db"
    assert runner.invoke(main, ["backup", str(backup), "--db", str(db)]).exit_code == 0
    result = runner.invoke(main, ["restore", str(backup), "--db", str(db)])
    assert result.exit_code == 1
    assert result.output == f"Error: {db} exists already; restore into a new file\n"

    junk = tmp_path / "junk.db"
    junk.write_bytes(b"not a database at all " * 200)
    result = runner.invoke(main, ["restore", str(junk), "--db", str(tmp_path / "new.db")])
    assert result.exit_code == 1
    assert result.output == (f"Error: backup {junk} is not a readable SQLite database (file is not a "
                             "database); give a file written by `pourback backup`\n")
    assert not (tmp_path / "new.db").exists()

    other = tmp_path / "other.db"
    conn = sqlite3.connect(str(other))
    conn.execute("CREATE TABLE t (x)")
    conn.commit()
    conn.close()
    result = runner.invoke(main, ["restore", str(other), "--db", str(tmp_path / "new.db")])
    assert result.exit_code == 1
    assert "is an SQLite database but not a pourback log" in result.output
    assert not (tmp_path / "new.db").exists()


def test_restore_refuses_a_damaged_backup(runner, db, tmp_path):
    backup = tmp_path / "backup.db"
    assert runner.invoke(main, ["backup", str(backup), "--db", str(db)]).exit_code == 0
    # Overwrite a stretch in the middle of the file (inside the inspections table's pages).
    data = bytearray(backup.read_bytes())
    mid = len(data) // 2
    data[mid:mid + 8192] = b"\xa5" * 8192
    backup.write_bytes(bytes(data))
    result = runner.invoke(main, ["restore", str(backup), "--db", str(tmp_path / "new.db")])
    assert result.exit_code == 1
    assert result.output.startswith(f"Error: backup {backup} ")
    assert ("fails its integrity check" in result.output
            or "is not a readable SQLite database" in result.output), result.output
    assert "Traceback" not in result.output
    assert not (tmp_path / "new.db").exists()


def test_backup_into_a_missing_folder_is_a_clear_error(runner, db, tmp_path):
    target = tmp_path / "no" / "such" / "backup.db"
    result = runner.invoke(main, ["backup", str(target), "--db", str(db)])
    assert result.exit_code == 1
    assert result.output == (f"Error: could not write the backup {target}: the folder {target.parent} does not "
                             "exist\n")
