"""No password and no password hash in any output, export or error message.

A log with accounts goes through every command that prints, exports or
refuses; each password tried (right and wrong) and every stored hash (whole,
and its salt and tag apart) is searched for in all of it. The pages are
searched in tests/browser/test_browser_team.py.
"""

import pathlib

import pytest

from tracker.cli import main
from tracker.log import accounts as auth
from tracker.log.store import Store

RIGHT = "foundry night shift 42"
NEW = "a fresh passphrase 2026"
WRONG = ["foundry night shift 43", "wrong but long enough", RIGHT.upper()]
SHORT = "tiny pw 1"


def secrets_of(db: pathlib.Path) -> list[str]:
    """Every password tried and every stored hash, whole and in its parts."""
    with Store(db) as s:
        hashes = [s.user_account(u["name"])["password_hash"] for u in auth.list_users(s)]
    parts = [p for h in hashes for p in h.split("$")[4:6]]  # salt and tag (base64)
    return [RIGHT, NEW, SHORT, *WRONG, *hashes, *parts]


def assert_clean(text: str, secrets: list[str], where: str) -> None:
    for secret in secrets:
        assert secret not in text, f"{where} holds a password or a hash"


@pytest.fixture
def team_log(app_demo_db, session_logs):
    """A private copy of the demo log, on each backend."""
    return session_logs.copy(app_demo_db, "team")


def test_no_command_prints_or_exports_a_secret(runner, team_log, tmp_path):
    db = ["--db", str(team_log)]
    outputs = []

    def run(args, stdin=None, code=0):
        res = runner.invoke(main, args, input=stdin)
        assert res.exit_code == code, res.output
        outputs.append((" ".join(args), res.output))
        return res

    run(["user", "add", "qa-lead", "--role", "admin", "--password-stdin", *db], RIGHT + "\n")
    run(["user", "add", "bench1", "--role", "inspector", "--password-stdin", "--by", "qa-lead", *db],
        RIGHT + "\n")
    # the prompt, typed twice and hidden
    run(["user", "add", "room", "--role", "reviewer", *db], f"{RIGHT}\n{RIGHT}\n")
    run(["user", "add", "short", "--role", "reviewer", "--password-stdin", *db], SHORT + "\n", code=1)
    run(["user", "add", "bench1", "--role", "reviewer", "--password-stdin", *db], RIGHT + "\n", code=1)
    run(["user", "passwd", "room", "--password-stdin", *db], NEW + "\n")
    run(["user", "passwd", "room", "--password-stdin", *db], SHORT + "\n", code=1)
    with Store(team_log) as s:
        for w in WRONG:
            with pytest.raises(auth.SignInRefused) as exc:
                auth.sign_in(s, "bench1", w)
            outputs.append(("sign_in error", str(exc.value)))
        with pytest.raises(auth.SignInRefused) as exc:
            auth.sign_in(s, RIGHT, RIGHT)  # a password typed into the name field
        outputs.append(("sign_in error", str(exc.value)))
        session = auth.sign_in(s, "bench1", RIGHT)
        outputs.append(("session repr", repr(session)))
    run(["user", "disable", "room", *db])
    run(["user", "list", *db])
    run(["user", "list", "--json", *db])
    run(["user", "roles", "--json"])
    run(["audit", *db])
    run(["audit", "--json", *db])
    run(["history", "--json", "--limit", "5", *db])
    exports = []
    for fmt in ("csv", "html", "json", "md"):
        out = tmp_path / f"review.{fmt}"
        run(["review", "--format", fmt, "--out", str(out), *db])
        exports.append(out)

    secrets = secrets_of(team_log)
    assert len(secrets) == 6 + 3 * 3  # three accounts: hash, salt, tag
    for where, text in outputs:
        assert_clean(text, secrets, where)
    for path in exports:
        assert_clean(path.read_text(encoding="utf-8"), secrets, path.name)
    # the audit names the events, not what was typed
    with Store(team_log) as s:
        events = [r["event"] for r in auth.audit_log(s)]
    assert events.count("sign_in_failed") == 4 and "password_changed" in events
