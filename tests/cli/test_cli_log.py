import json

import pytest

from tests.support import GOOD
from tracker.cli import main
from tracker.log.store import SCHEMA_VERSION, Store


def test_init_import_dir_and_reimport_adds_nothing(tmp_path, runner):
    db = str(tmp_path / "p.db")
    res = runner.invoke(main, ["init", "--db", db])
    assert res.exit_code == 0, res.output
    assert f"schema version {SCHEMA_VERSION}" in res.output
    res = runner.invoke(main, ["import", str(GOOD), "--db", db, "--json"])
    assert res.exit_code == 0, res.output
    first = {r["kind"]: r for r in json.loads(res.output)}
    assert [r for r in first] == ["patterns", "zones", "sleeves", "risers", "lots", "inspections"]
    assert first["inspections"]["added"] == 6
    res = runner.invoke(main, ["import", str(GOOD), "--db", db, "--json"])
    again = json.loads(res.output)
    assert all(r["added"] == 0 and r["skipped"] == r["rows"] for r in again)


def test_import_single_kind_and_env_db(tmp_path, runner, monkeypatch):
    db = tmp_path / "env.db"
    monkeypatch.setenv("POURBACK_DB", str(db))
    assert runner.invoke(main, ["init"]).exit_code == 0
    res = runner.invoke(main, ["import", "patterns", str(GOOD / "patterns.csv")])
    assert res.exit_code == 0, res.output
    with Store(db) as s:
        assert s.count("patterns") == 2


def test_log_refuses_what_import_refuses(tmp_path, runner):
    db = str(tmp_path / "p.db")
    runner.invoke(main, ["init", "--db", db])
    runner.invoke(main, ["import", str(GOOD), "--db", db])
    base = ["log", "--db", db, "--lot", "L2", "--method", "xray", "--inspected-on", "2026-03-11"]
    res = runner.invoke(main, base + ["--quantity", "1", "--result", "reject"])
    assert res.exit_code == 1
    # The form's words, with the allowed values (issue 13)
    assert res.output == ("Error: Defect: pick one for a reject (shrinkage, gas, sand, slag, misrun, cold_shut, "
                          "hot_tear, crack, dimensional, other)\n")
    res = runner.invoke(main, base + ["--quantity", "99", "--result", "reject", "--defect", "gas"])
    assert "lot L2 would have 100 castings rejected but only 16 were poured" in res.output
    res = runner.invoke(main, base + ["--quantity", "1", "--result", "reject", "--defect", "shrinkage",
                                      "--zone", "flange", "--xray-category", "CB", "--severity", "6"])
    assert res.output == "Error: Severity: got '6'; must be a whole number of at least 1 and at most 5\n"
    res = runner.invoke(main, base + ["--quantity", "1", "--result", "reject", "--defect", "shrinkage",
                                      "--zone", "flange", "--xray-category", "CB", "--severity", "4",
                                      "--inspector", "QE-T", "--by", "tester", "--json"])
    assert res.exit_code == 0, res.output
    rec = json.loads(res.output)
    assert rec["recorded_by"] == "tester" and rec["source"] == "cli"
    with Store(db) as s:
        assert s.count("inspections") == 7


def test_correct_and_history(tmp_path, runner):
    db = str(tmp_path / "p.db")
    runner.invoke(main, ["init", "--db", db])
    runner.invoke(main, ["import", str(GOOD), "--db", db])
    res = runner.invoke(main, ["correct", "3", "--quantity", "2", "--reason", "recount", "--by", "QE-Z", "--db", db])
    assert res.exit_code == 0, res.output
    assert "Record 3 superseded by record 7" in res.output
    res = runner.invoke(main, ["history", "--db", db, "--lot", "L1", "--json"])
    rows = {r["id"]: r for r in json.loads(res.output)}
    assert rows[3]["superseded_by"] == 7 and rows[3]["corrected_by"] == "QE-Z"
    assert rows[3]["correction_why"] == "recount" and rows[7]["status"] == "current"
    res = runner.invoke(main, ["correct", "3", "--db", db, "--reason", "x"])
    assert res.exit_code == 2 and "say what to change" in res.output


def test_skip_bad_writes_refused_csv(tmp_path, runner):
    db = str(tmp_path / "p.db")
    runner.invoke(main, ["init", "--db", db])
    runner.invoke(main, ["import", str(GOOD), "--db", db])
    bad = tmp_path / "lots.csv"
    bad.write_text("lot,pattern,poured_on,heat,molds\nN1,T-100,2026-04-01,H7,4\nN2,NOPE,2026-04-01,H7,4\n")
    res = runner.invoke(main, ["import", "lots", str(bad), "--db", db])
    assert res.exit_code == 1
    assert "lots.csv, row 3, column pattern: got 'NOPE'; unknown pattern" in res.output
    res = runner.invoke(main, ["import", "lots", str(bad), "--db", db, "--skip-bad"])
    assert res.exit_code == 0, res.output
    refused = (tmp_path / "lots.refused.csv").read_text()
    assert "NOPE" in refused and "unknown pattern" in refused
    with Store(db) as s:
        assert s.count("lots") == 4


def test_migration_from_version_1(tmp_path):
    import sqlite_utils

    from tracker.log.store import MIGRATIONS

    path = tmp_path / "old.db"
    db = sqlite_utils.Database(path)
    MIGRATIONS[0](db)
    db.execute("PRAGMA user_version = 1")
    db.conn.commit()
    db.close()
    with Store(path) as s:
        assert s.schema_version() == SCHEMA_VERSION
        s.set_meta("k", "v")
        assert s.get_meta("k") == "v"
        assert s.conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert s.conn.execute("PRAGMA foreign_keys").fetchone()[0] == 1


def test_newer_schema_is_refused(tmp_path):
    import sqlite3

    path = tmp_path / "new.db"
    sqlite3.connect(path).execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    with pytest.raises(Exception, match="newer than this program's"):
        Store(path)


def test_patterns_lists_the_current_revision(tmp_path, runner):
    db = str(tmp_path / "p.db")
    runner.invoke(main, ["init", "--db", db])
    runner.invoke(main, ["import", str(GOOD), "--db", db])
    res = runner.invoke(main, ["patterns", "--db", db, "--json"])
    assert res.exit_code == 0, res.output
    rows = {r["pattern"]: r for r in json.loads(res.output)}
    assert rows["T-100"]["revision"] == "A" and rows["T-200"]["alloy"] == "aluminum"


def test_quick_counts_equal_counts_after_imports_corrections_and_a_refused_file(tmp_path):
    from tracker.errors import BadFile
    from tracker.log.ingest import correct_inspection, import_dir, import_file

    with Store(tmp_path / "q.db") as s:
        import_dir(s, GOOD)
        correct_inspection(s, 2, {"quantity": 16}, by="QE", reason="recount")
        bad = tmp_path / "lots.csv"
        bad.write_text("lot,pattern,poured_on,heat,molds\nZ1,T-100,2026-04-01,H,2\nZ2,NOPE,2026-04-01,H,2\n")
        with pytest.raises(BadFile):
            import_file(s, "lots", bad)
        import_file(s, "lots", GOOD / "lots.csv")
        assert s.quick_counts() == s.counts()
