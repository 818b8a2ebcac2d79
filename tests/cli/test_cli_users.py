"""`pourback user ...` and `pourback audit`: accounts at the command line."""

import getpass
import json

import pytest
from argon2 import PasswordHasher

from tracker.cli import main
from tracker.log import accounts as auth
from tracker.log.store import Store

PASSWORD = "shift two at the bench"


@pytest.fixture(autouse=True)
def fast_hash(monkeypatch):
    monkeypatch.setattr(auth, "HASHER", PasswordHasher(time_cost=1, memory_cost=8, parallelism=1))


@pytest.fixture
def db(tmp_path):
    return tmp_path / "plant.db"


def add(runner, db, name, role, *extra):
    return runner.invoke(main, ["user", "add", name, "--role", role, "--password-stdin", "--db", str(db), *extra],
                         input=PASSWORD + "\n")


def test_add_list_disable_enable(runner, db, monkeypatch):
    monkeypatch.delenv("POURBACK_USER", raising=False)
    res = add(runner, db, "mlopez", "inspector")
    assert res.exit_code == 0, res.output
    assert res.output == f"Added user mlopez (role inspector) to {db}\n"
    assert add(runner, db, "qa-lead", "admin", "--by", "it-desk").exit_code == 0
    res = runner.invoke(main, ["user", "list", "--json", "--db", str(db)])
    rows = json.loads(res.output)
    assert [(r["name"], r["role"], r["enabled"], r["locked"], r["created_by"]) for r in rows] == [
        ("mlopez", "inspector", True, False, getpass.getuser()), ("qa-lead", "admin", True, False, "it-desk")]
    assert all("password_hash" not in r for r in rows)

    res = runner.invoke(main, ["user", "disable", "qa-lead", "--db", str(db)])
    assert res.exit_code == 0, res.output
    assert "Disabled user qa-lead" in res.output
    assert "the log has no enabled admin account now" in res.output
    res = runner.invoke(main, ["user", "enable", "qa-lead", "--db", str(db)])
    assert res.output == "Enabled user qa-lead\n"
    events = [(r["event"], r["subject"]) for r in json.loads(
        runner.invoke(main, ["audit", "--json", "--db", str(db)]).output)]
    assert events == [("user_added", "mlopez"), ("user_added", "qa-lead"), ("user_disabled", "qa-lead"),
                      ("user_enabled", "qa-lead")]


def test_the_prompt_asks_twice(runner, db):
    res = runner.invoke(main, ["user", "add", "room", "--role", "reviewer", "--db", str(db)],
                        input=f"{PASSWORD}\nsomething else entirely\n{PASSWORD}\n{PASSWORD}\n")
    assert res.exit_code == 0, res.output
    assert "Error: The two entered values do not match." in res.output
    with Store(db) as s:
        assert auth.verify_password(s.user_account("room")["password_hash"], PASSWORD)


@pytest.mark.parametrize("args, message", [
    (["user", "add", "x", "--role", "boss"],
     "Error: role: got 'boss'; must be one of inspector, methods, reviewer, admin (see `pourback user roles`)"),
    (["user", "passwd", "nobody"], "Error: unknown user 'nobody'; see `pourback user list`"),
    (["user", "disable", "nobody"], "Error: unknown user 'nobody'; see `pourback user list`"),
    (["audit", "--since", "last week"],
     "Error: since: got 'last week'; give a date YYYY-MM-DD or a time YYYY-MM-DDTHH:MM (UTC)"),
])
def test_refusals_are_one_line(runner, db, args, message):
    Store(db).close()
    res = runner.invoke(main, [*args, "--db", str(db)], input="\n")
    assert res.exit_code == 1
    assert res.output.strip().splitlines()[-1] == message


def test_passwd_lifts_a_lock(runner, db):
    assert add(runner, db, "bench1", "inspector").exit_code == 0
    with Store(db) as s:
        for _ in range(auth.LOCK_AFTER_FAILURES):
            with pytest.raises(auth.SignInRefused):
                auth.sign_in(s, "bench1", "not the right one")
        assert [u["locked"] for u in auth.list_users(s)] == [True]
    res = runner.invoke(main, ["user", "passwd", "bench1", "--password-stdin", "--db", str(db)],
                        input="a new long passphrase\n")
    assert res.output == "New password set for bench1; its open sessions are ended\n"
    with Store(db) as s:
        assert auth.sign_in(s, "bench1", "a new long passphrase").user == "bench1"


def test_roles_json_is_the_role_table(runner):
    res = runner.invoke(main, ["user", "roles", "--json"])
    # issue 15's four roles, in its order
    assert [r["role"] for r in json.loads(res.output)] == ["inspector", "methods", "reviewer", "admin"]
    assert json.loads(res.output)[2] == {"role": "reviewer", "may": "reads every page and report, writes nothing",
                                         "actions": []}


def test_audit_since_keeps_later_entries(runner, db):
    import datetime as dt

    assert add(runner, db, "early", "reviewer").exit_code == 0
    with Store(db) as s:
        auth.sign_in(s, "early", PASSWORD, now=dt.datetime(2030, 1, 2, 7, 0, tzinfo=dt.UTC))
    res = runner.invoke(main, ["audit", "--since", "2030-01-01", "--db", str(db)])
    assert res.exit_code == 0, res.output
    lines = res.output.splitlines()
    assert len(lines) == 3 and lines[2].startswith("2030-01-02T07:00:00+00:00  sign_in")
