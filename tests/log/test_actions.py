"""The weekly review's actions in the log (tracker/log/actions.py) and on the command
line: add, list, done; audited, role-checked, on both backends."""

import datetime as dt
import json

import pytest
from argon2 import PasswordHasher

from tracker.cli.group import main
from tracker.errors import BadInput, NotFound, PermissionDenied
from tracker.log import accounts as auth
from tracker.log.actions import add_action, close_action, list_actions

PASSWORD = "bench tablet seven"


def test_add_list_done_and_audit(good_store):
    pattern = good_store.table("patterns")["pattern"].iloc[0]
    first = add_action(good_store, pattern, "check the neck of R1", "M. Lopez", "2026-12-11", by="qa")
    second = add_action(good_store, pattern, "trial pour with sleeve", "J. Park", dt.date(2026, 12, 4), by="qa")
    assert first["status"] in ("open", "overdue") and first["created_by"] == "qa"
    # by due date, then number: the 4th before the 11th
    rows = list_actions(good_store, today=dt.date(2026, 12, 8))
    assert [r["id"] for r in rows] == [second["id"], first["id"]]
    assert [r["status"] for r in rows] == ["overdue", "open"]
    done = close_action(good_store, second["id"], "done, sleeve kept", by="mlopez")
    assert done["status"] == "done" and done["done_by"] == "mlopez" and done["note"] == "done, sleeve kept"
    assert [r["id"] for r in list_actions(good_store, open_only=True)] == [first["id"]]
    with pytest.raises(BadInput, match="already closed .* by mlopez"):
        close_action(good_store, second["id"], by="someone")
    events = [(a["event"], a["user"], a["subject"]) for a in auth.audit_log(good_store)]
    assert ("action_added", "qa", f"action {first['id']}") in events
    assert ("action_done", "mlopez", f"action {second['id']}") in events


def test_bad_actions_are_refused_and_nothing_is_written(good_store):
    pattern = good_store.table("patterns")["pattern"].iloc[0]
    with pytest.raises(NotFound, match="unknown pattern 'NOPE'"):
        add_action(good_store, "NOPE", "x", "y", "2026-12-11")
    with pytest.raises(BadInput, match="due: got '2026-02-30'; give a date as YYYY-MM-DD"):
        add_action(good_store, pattern, "x", "y", "2026-02-30")
    with pytest.raises(BadInput, match="text: .* must not be empty"):
        add_action(good_store, pattern, "  ", "y", "2026-12-11")
    with pytest.raises(BadInput, match="owner: .* must be one line"):
        add_action(good_store, pattern, "x", "a\nb", "2026-12-11")
    with pytest.raises(NotFound, match="unknown action 99"):
        close_action(good_store, 99)
    assert list_actions(good_store) == []


def test_roles(good_store, monkeypatch):
    monkeypatch.setattr(auth, "HASHER", PasswordHasher(time_cost=1, memory_cost=8, parallelism=1))
    monkeypatch.setattr(auth, "_DUMMY_HASH", [])
    pattern = good_store.table("patterns")["pattern"].iloc[0]
    auth.add_user(good_store, "rev", "reviewer", PASSWORD, by="setup")
    auth.add_user(good_store, "ins", "inspector", PASSWORD, by="setup")
    good_store.actor = auth.sign_in(good_store, "rev", PASSWORD)
    with pytest.raises(PermissionDenied):
        add_action(good_store, pattern, "x", "y", "2026-12-11")
    good_store.actor = auth.sign_in(good_store, "ins", PASSWORD)
    row = add_action(good_store, pattern, "x", "y", "2026-12-11", by="ignored when signed in")
    assert row["created_by"] == "ins"
    good_store.actor = auth.sign_in(good_store, "rev", PASSWORD)
    with pytest.raises(PermissionDenied):
        close_action(good_store, row["id"])
    good_store.actor = None
    assert list_actions(good_store, open_only=True)[0]["id"] == row["id"]


def test_cli(runner, logs):
    from tests.support import GOOD
    from tracker.log.ingest import import_dir
    from tracker.log.store import Store

    db = logs.new()
    with Store(db) as s:
        import_dir(s, GOOD)
        pattern = s.table("patterns")["pattern"].iloc[0]
    r = runner.invoke(main, ["action", "add", pattern, "--text", "check R1", "--owner", "M.Lopez",
                             "--due", "2026-12-11", "--by", "qa", "--db", db])
    assert r.exit_code == 0, r.output
    assert r.output.startswith(f"Added action 1 on {pattern} for M.Lopez, due 2026-12-11")
    r = runner.invoke(main, ["action", "done", "1", "--note", "ok", "--db", db])
    assert r.exit_code == 0, r.output
    r = runner.invoke(main, ["action", "list", "--open", "--json", "--db", db])
    assert r.exit_code == 0, r.output
    assert json.loads(r.output) == []
    r = runner.invoke(main, ["action", "list", "--json", "--db", db])
    assert [a["status"] for a in json.loads(r.output)] == ["done"]
    r = runner.invoke(main, ["action", "add", pattern, "--text", "x", "--owner", "y", "--due", "11/12/2026",
                             "--db", db])
    assert r.exit_code == 1
    assert "Error: due: got '11/12/2026'; give a date as YYYY-MM-DD" in r.output
