"""Concurrent writers: eight processes logging at once lose and double nothing.

Each worker is a separate Python process with its own connection, started
together (they wait for a "go" file), logging through
tracker.log.ingest.log_inspection. On SQLite, WAL mode, the busy timeout and BEGIN
IMMEDIATE must make them take turns instead of failing with "database is
locked"; on PostgreSQL, the writers' advisory lock (and retried serialization
failures) must do the same. Runs on both backends.
"""

import json
import os
import subprocess
import sys
import time

import pytest

from tests.support import GOOD
from tracker.log.ingest import import_dir, import_file
from tracker.log.store import Store

pytestmark = pytest.mark.slow


WORKER = r"""
import datetime as dt, json, pathlib, sys, time
from tracker.errors import BadInput
from tracker.log.ingest import log_inspection
from tracker.log.store import Store


db, who, lot, n, result, go = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4]), sys.argv[5], sys.argv[6]
ids, refused = [], []
with Store(db, create=False) as s:
    while not pathlib.Path(go).exists():
        time.sleep(0.002)
    for i in range(n):
        rec = {"lot": lot, "inspected_on": "2026-03-06", "method": "ut", "quantity": 1, "result": result,
               "defect": "shrinkage" if result == "reject" else None, "serial": f"{who}-{i}"}
        try:
            ids.append(log_inspection(s, rec, by=who, today=dt.date(2026, 6, 1)))
        except BadInput as exc:
            refused.append(str(exc))
print(json.dumps({"ids": ids, "refused": refused}))
"""


@pytest.fixture
def db(tmp_path, logs):
    path = logs.new()
    lots = tmp_path / "lots.csv"
    # BIG: 10,000 molds x 2 castings; TIGHT: 75 molds x 2 = 150 castings.
    lots.write_text("lot,pattern,poured_on,heat,molds\nBIG,T-100,2026-03-01,H9,10000\n"
                    "TIGHT,T-100,2026-03-01,H9,75\n", encoding="utf-8")
    with Store(path) as s:
        import_dir(s, GOOD)
        import_file(s, "lots", lots)
    return path


def _run_workers(db, tmp_path, lot, n, result, workers=8):
    go = tmp_path / "go"
    env = {k: v for k, v in os.environ.items() if k != "POURBACK_DB"}
    procs = [subprocess.Popen([sys.executable, "-c", WORKER, str(db), f"w{i}", lot, str(n), result, str(go)],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
             for i in range(workers)]
    time.sleep(0.5)  # let every worker import and open the log, then start them together
    go.touch()
    out = {}
    for i, p in enumerate(procs):
        stdout, stderr = p.communicate(timeout=600)
        assert p.returncode == 0, stderr[-3000:]
        out[f"w{i}"] = json.loads(stdout)
    return out


def test_eight_writers_60_records_each(db, tmp_path):
    with Store(db) as s:
        before = s.count("inspections")
    out = _run_workers(db, tmp_path, "BIG", 60, "accept")
    with Store(db) as s:
        frame = s.table("inspections")
        assert s.integrity_check() == "ok"
    new = frame[frame["lot"] == "BIG"]
    assert len(frame) == before + 480
    assert len(new) == 480
    assert new["id"].is_unique
    assert new["record_key"].is_unique
    assert new["serial"].is_unique
    assert new.groupby("recorded_by").size().to_dict() == {f"w{i}": 60 for i in range(8)}
    for who, got in out.items():
        assert got["refused"] == []
        assert len(got["ids"]) == 60
        # each worker's returned ids are its own records
        assert sorted(got["ids"]) == sorted(new.loc[new["recorded_by"] == who, "id"])


def test_concurrent_rejects_never_exceed_castings_poured(db, tmp_path):
    # 8 x 25 attempts on a lot of 150 castings: exactly 150 get in, whatever the interleaving.
    out = _run_workers(db, tmp_path, "TIGHT", 25, "reject")
    logged = sum(len(o["ids"]) for o in out.values())
    refused = [m for o in out.values() for m in o["refused"]]
    assert logged == 150
    assert len(refused) == 50
    assert all(m.startswith("Quantity: got 1; lot TIGHT would have 151 castings rejected but only 150 "
                            "were poured") for m in refused), refused[:3]
    with Store(db) as s:
        by_lot = s.rejects_by_lot().groupby("lot")["quantity"].sum()
        assert by_lot["TIGHT"] == 150
        assert s.lot_totals(["TIGHT"])["TIGHT"]["rejected"] == 150
