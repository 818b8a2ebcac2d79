"""Crash safety: an import killed part-way (SIGKILL, no clean-up) leaves a sound
log holding all of the file or none of it.

The import runs in a subprocess (`python -m tracker import ...`); the test waits
until the process is inside its write transaction, seen by the write-ahead log
growing past a threshold (uncommitted pages spill into the -wal file), then
kills it.
"""

import os
import pathlib
import shutil
import signal
import sqlite3
import subprocess
import sys
import time

import numpy as np
import pytest

from tracker.log.ingest import import_file, log_inspection
from tracker.log.store import Store

pytestmark = pytest.mark.slow

ROWS = 200_000
LOTS = 20
HEADER = "lot,inspected_on,method,quantity,result,defect,zone,xray_category,severity,serial,inspector,notes"


@pytest.fixture(scope="module")
def big(tmp_path_factory):
    """A log with one pattern and 20 lots (100,000 castings each) and a
    200,000-row inspections file for it."""
    d = tmp_path_factory.mktemp("big")
    (d / "patterns.csv").write_text(
        "pattern,description,alloy,casting_weight_kg,castings_per_mold,metal_cost_per_kg\n"
        "BIG,big run,steel,1.0,100,1.5\n", encoding="utf-8")
    (d / "lots.csv").write_text("lot,pattern,poured_on,heat,molds\n"
                                + "".join(f"B{i:02d},BIG,2026-01-05,H{i},1000\n" for i in range(LOTS)),
                                encoding="utf-8")
    rng = np.random.default_rng(20261201)
    lots = rng.integers(0, LOTS, ROWS)
    reject = rng.random(ROWS) < 0.05
    lines = [HEADER]
    for i, (lot, rej) in enumerate(zip(lots, reject, strict=False)):
        if rej:
            lines.append(f"B{lot:02d},2026-01-12,visual,1,reject,sand,,,,S{i},QE-{i % 7},")
        else:
            lines.append(f"B{lot:02d},2026-01-12,visual,1,accept,,,,,S{i},QE-{i % 7},")
    (d / "inspections.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    base = d / "base.db"
    with Store(base) as s:
        import_file(s, "patterns", d / "patterns.csv")
        import_file(s, "lots", d / "lots.csv")
    return d


def _start_import(db: pathlib.Path, csv: pathlib.Path) -> subprocess.Popen:
    env = {k: v for k, v in os.environ.items() if k != "POURBACK_DB"}
    return subprocess.Popen([sys.executable, "-m", "tracker", "import", "inspections", str(csv),
                             "--db", str(db)], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                            env=env)


def _check(db: pathlib.Path) -> tuple[str, int, int]:
    """integrity_check, inspections and lots held, read with a plain connection."""
    conn = sqlite3.connect(str(db))
    try:
        ok = conn.execute("PRAGMA integrity_check").fetchone()[0]
        n = conn.execute("SELECT COUNT(*) FROM inspections").fetchone()[0]
        lots = conn.execute("SELECT COUNT(*) FROM lots").fetchone()[0]
        return ok, n, lots
    finally:
        conn.close()


# WAL bytes written before the kill: early in the first chunk's inserts, and
# well into the second chunk (the full import writes about 45 MB of WAL).
@pytest.mark.parametrize("wal_bytes", [2_000_000, 25_000_000], ids=["early", "late"])
def test_import_killed_part_way_leaves_all_or_nothing(big, tmp_path, wal_bytes):
    db = tmp_path / "log.db"
    shutil.copy(big / "base.db", db)
    wal = pathlib.Path(str(db) + "-wal")
    proc = _start_import(db, big / "inspections.csv")
    deadline = time.monotonic() + 120
    try:
        while proc.poll() is None and time.monotonic() < deadline:
            if wal.exists() and wal.stat().st_size >= wal_bytes:
                break
            time.sleep(0.01)
        assert proc.poll() is None, ("the import ended before it could be killed: "
                                     + proc.stderr.read().decode()[-500:])
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert proc.returncode == -signal.SIGKILL
    ok, n, lots = _check(db)
    assert ok == "ok"
    assert n in (0, ROWS), f"{n} of {ROWS} rows: a partial import survived the crash"
    assert lots == LOTS
    # Killed inside the transaction, long before its commit: nothing of it is kept.
    assert n == 0
    # The next writer recovers the log (the -wal's uncommitted frames are ignored).
    with Store(db, create=False) as s:
        rid = log_inspection(s, {"lot": "B00", "inspected_on": "2026-01-12", "method": "visual",
                                 "quantity": 2, "result": "reject", "defect": "sand"}, by="QE-1")
        assert s.count("inspections") == 1
        assert s.rejects_by_lot()["quantity"].tolist() == [2]
        assert s.inspection(rid)["recorded_by"] == "QE-1"
        assert s.integrity_check() == "ok"
