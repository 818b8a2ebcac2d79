"""`pourback dashboard` and `pourback demo`: the command line that serves the
dashboard, and the demo log they build (the server itself is started in
tests/browser/test_browser.py)."""

import sys

import pytest

from tests.support.hostile import tls_pair
from tracker.cli import cmd_app, main
from tracker.log.store import Store


@pytest.fixture
def launched(monkeypatch):
    """Catch the hand-over to Streamlit instead of replacing the test process."""
    calls = []
    monkeypatch.setattr(cmd_app, "_launch", lambda argv, env: calls.append((argv, env)))
    return calls


def _log(path):
    Store(path).close()
    return path


def test_dashboard_command_line(runner, launched, tmp_path):
    db = _log(tmp_path / "plant.db")
    res = runner.invoke(main, ["dashboard", "--db", str(db), "--port", "8765"])
    assert res.exit_code == 0, res.output
    [(argv, env)] = launched
    assert argv == [sys.executable, "-m", "streamlit", "run", str(cmd_app.app_path()),
                    "--server.address", "127.0.0.1", "--server.port", "8765",
                    "--server.headless", "true", "--browser.gatherUsageStats", "false",
                    "--server.fileWatcherType", "none", "--client.toolbarMode", "minimal",
                    "--server.enableXsrfProtection", "true", "--server.maxUploadSize", "10",
                    "--client.disableDataExport", "true"]
    assert cmd_app.app_path().name == "app.py" and cmd_app.app_path().parent.name == "dashboard"
    assert env["POURBACK_DB"] == str(db.resolve())
    assert f"Dashboard on {db.resolve()}: http://127.0.0.1:8765" in res.output
    assert "no login" not in res.output


def test_dashboard_never_creates_a_missing_log(runner, launched, tmp_path):
    missing = tmp_path / "typo.db"
    res = runner.invoke(main, ["dashboard", "--db", str(missing)])
    assert res.exit_code == 1
    assert res.output == (f"Error: no log at {missing.resolve()}; create one with `pourback init --db "
                          f"{missing.resolve()}` (or `pourback demo`), or give the log's path with --db\n")
    assert not missing.exists() and not launched


def test_dashboard_refuses_an_empty_host(runner, launched, tmp_path):
    res = runner.invoke(main, ["dashboard", "--db", str(_log(tmp_path / "x.db")), "--host", ""])
    assert res.exit_code == 2
    assert ("Invalid value for '--host': got ''; give an address such as 127.0.0.1 (this computer only) or "
            "0.0.0.0 (every network interface)") in res.output
    assert not launched


def test_dashboard_uses_pourback_db(runner, launched, tmp_path, monkeypatch):
    db = _log(tmp_path / "from-env.db")
    monkeypatch.setenv("POURBACK_DB", str(db))
    res = runner.invoke(main, ["dashboard"])
    assert res.exit_code == 0, res.output
    assert launched[0][1]["POURBACK_DB"] == str(db.resolve())
    assert "--server.port" in launched[0][0] and launched[0][0][launched[0][0].index("--server.port") + 1] == "8501"


def test_dashboard_other_host_refuses_without_an_admin(runner, launched, tmp_path):
    res = runner.invoke(main, ["dashboard", "--db", str(_log(tmp_path / "x.db")), "--host", "0.0.0.0"])
    assert res.exit_code == 1
    assert "Error: refusing to serve the dashboard on 0.0.0.0: beyond this computer" in res.output
    assert "pourback user add NAME --role admin" in res.output
    assert not launched


def test_dashboard_refuses_a_bad_port(runner, launched, tmp_path):
    res = runner.invoke(main, ["dashboard", "--db", str(tmp_path / "x.db"), "--port", "70000"])
    assert res.exit_code == 2
    assert "70000 is not in the range 1<=x<=65535" in res.output
    assert not launched


def test_demo_builds_reports_and_opens(runner, launched, tmp_path):
    db = tmp_path / "demo.db"
    res = runner.invoke(main, ["demo", "--db", str(db), "--port", "8600"])
    assert res.exit_code == 0, res.output
    assert f"Built the demo log {db.resolve()} (an invented foundry)" in res.output
    assert "30 patterns, 57 zones, 8 sleeves, 61 risers in 31 revisions" in res.output
    assert "1,190 lots, 2,024 inspection records" in res.output
    assert f"Dashboard on {db.resolve()}: http://127.0.0.1:8600" in res.output
    [(argv, env)] = launched
    assert env["POURBACK_DB"] == str(db.resolve())
    assert argv[argv.index("--server.port") + 1] == "8600"
    with Store(db, create=False) as s:
        assert s.get_meta("demo") == "1"
        assert s.latest_model() is not None  # fitted up front for the Suggestions page


def test_demo_no_dashboard_and_json(runner, launched, tmp_path):
    import json

    res = runner.invoke(main, ["demo", "--db", str(tmp_path / "d.db"), "--no-dashboard", "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert (d["lots"], d["inspections"], d["opening"]) == (1190, 2024, False)
    assert d["url"] == "http://127.0.0.1:8501"
    assert not launched
    text = runner.invoke(main, ["demo", "--db", str(tmp_path / "d.db"), "--no-dashboard", "--port", "8700"])
    assert text.exit_code == 0, text.output
    assert text.output.endswith(f"Open it with: pourback dashboard --db {(tmp_path / 'd.db').resolve()} --port 8700  ->  "
                                "http://127.0.0.1:8700\n")


def test_demo_replaces_only_its_own_log(runner, launched, tmp_path):
    db = tmp_path / "demo.db"
    assert runner.invoke(main, ["demo", "--db", str(db), "--no-dashboard"]).exit_code == 0
    with Store(db) as s:  # a leftover write-ahead log must not leak into the new file
        s.set_meta("marker", "old")
    res = runner.invoke(main, ["demo", "--db", str(db), "--no-dashboard"])
    assert res.exit_code == 0, res.output
    with Store(db, create=False) as s:
        assert s.count("inspections") == 2024  # rebuilt, not imported twice
        assert s.get_meta("marker") is None
    assert not list(tmp_path.glob("*.building*"))


def test_demo_refuses_a_log_it_did_not_make(runner, launched, tmp_path):
    db = tmp_path / "plant.db"
    with Store(db) as s:
        s.set_meta("site", "plant")
    before = db.read_bytes()
    res = runner.invoke(main, ["demo", "--db", str(db), "--no-dashboard"])
    assert res.exit_code == 1
    assert res.output == (f"Error: {db.resolve()} exists and was not made by `pourback demo`; it is left "
                          "alone. Pass another file with --db, or move that one away\n")
    assert db.read_bytes() == before
    assert not launched


def test_demo_refuses_a_file_that_is_no_log(runner, launched, tmp_path):
    f = tmp_path / "notes.txt"
    f.write_text("not a database\n")
    res = runner.invoke(main, ["demo", "--db", str(f), "--no-dashboard"])
    assert res.exit_code == 1 and "was not made by `pourback demo`" in res.output
    assert f.read_text() == "not a database\n"


def test_demo_generates_the_files_when_sample_data_is_missing(runner, launched, tmp_path, monkeypatch):
    monkeypatch.setattr(cmd_app, "sample_dir", lambda: tmp_path / "no-sample-data")
    res = runner.invoke(main, ["demo", "--db", str(tmp_path / "gen.db"), "--no-dashboard"])
    assert res.exit_code == 0, res.output
    assert "(an invented foundry) from generated" in res.output
    # the committed files are the generator's default output, so the counts agree
    assert "1,190 lots, 2,024 inspection records" in res.output


def test_sample_dir_is_next_to_the_package():
    import tracker

    assert cmd_app.sample_dir() == cmd_app.pathlib.Path(tracker.__file__).resolve().parent.parent / "sample_data"


# --- serving to a team ------------------------------------------------------------------

def _admin(db, role="admin"):
    from argon2 import PasswordHasher

    from tracker.log import accounts as auth

    with Store(db) as s:
        auth.HASHER, old = PasswordHasher(time_cost=1, memory_cost=8, parallelism=1), auth.HASHER
        try:
            auth.add_user(s, "boss", role, "a long enough passphrase", by="test")
        finally:
            auth.HASHER = old


def test_beyond_loopback_with_an_admin_asks_for_sign_in_and_warns_without_tls(runner, launched, tmp_path):
    db = tmp_path / "team.db"
    _admin(db)
    res = runner.invoke(main, ["dashboard", "--db", str(db), "--host", "0.0.0.0", "--idle-hours", "10"])
    assert res.exit_code == 0, res.output
    [(argv, env)] = launched
    assert (env["POURBACK_SIGN_IN"], env["POURBACK_IDLE_HOURS"], env["POURBACK_TLS"]) == ("1", "10", "0")
    assert "Every visitor signs in; a session ends after 10 hours without activity." in res.output
    assert "Warning: served beyond this computer without TLS" in res.output
    # XSRF protection stays on; uploads are capped
    assert argv[argv.index("--server.enableXsrfProtection") + 1] == "true"
    assert argv[argv.index("--server.maxUploadSize") + 1] == "10"


def test_tls_options_go_to_streamlit(runner, launched, tmp_path):
    db = tmp_path / "team.db"
    _admin(db)
    cert, key = tls_pair(tmp_path)  # a real pair: files that are not one are refused (issue 27)
    res = runner.invoke(main, ["dashboard", "--db", str(db), "--host", "0.0.0.0", "--port", "8443",
                               "--tls-cert", str(cert), "--tls-key", str(key)])
    assert res.exit_code == 0, res.output
    [(argv, env)] = launched
    assert argv[-4:] == ["--server.sslCertFile", str(cert), "--server.sslKeyFile", str(key)]
    assert env["POURBACK_TLS"] == "1" and "https://0.0.0.0:8443" in res.output
    assert "without TLS" not in res.output
    res = runner.invoke(main, ["dashboard", "--db", str(db), "--tls-cert", str(cert)])
    assert res.exit_code == 2 and "give --tls-cert and --tls-key together" in res.output


def test_require_login_on_loopback(runner, launched, tmp_path):
    db = _log(tmp_path / "desk.db")
    res = runner.invoke(main, ["dashboard", "--db", str(db), "--require-login"])
    assert res.exit_code == 1 and "no enabled account to sign in with" in res.output
    _admin(db, role="inspector")
    res = runner.invoke(main, ["dashboard", "--db", str(db), "--require-login"])
    assert res.exit_code == 0, res.output
    assert launched[-1][1]["POURBACK_SIGN_IN"] == "1"
    assert "without TLS" not in res.output  # on loopback the traffic stays on this computer
    res = runner.invoke(main, ["dashboard", "--db", str(db)])
    assert launched[-1][1]["POURBACK_SIGN_IN"] == "0"


def test_demo_is_served_on_loopback_only(runner, launched, tmp_path):
    res = runner.invoke(main, ["demo", "--db", str(tmp_path / "d.db"), "--host", "0.0.0.0"])
    assert res.exit_code == 2 and "the demo log has no accounts" in res.output
    assert not launched and not (tmp_path / "d.db").exists()
