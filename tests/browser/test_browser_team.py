"""The dashboard served to a team, in a real browser: `pourback dashboard --host
127.0.0.2` (a loopback address, but not one of the three that count as "this
computer", so it is served as to the plant network) refuses to start without an
admin account and starts with one; a visitor sees only the sign-in form; wrong
passwords are refused and the fifth locks the user; a reviewer is offered no
save button and a forged write is refused; an inspector's record carries their
user name; no page shows a password or a hash.

Skipped without /usr/bin/chromium or playwright, unless POURBACK_REQUIRE_BROWSER=1.
"""

import datetime as dt
import hashlib
import os
import shutil
import subprocess
import sys
import time
import urllib.request

import pytest

from tests.support.browser import (
    WAIT_MS,
    choose,
    free_port,
    full_screenshot,
    lot_with_room,
    outside_requests,
    running_dashboard,
    settle,
)
from tracker.errors import PermissionDenied
from tracker.log import accounts as auth
from tracker.log.ingest import log_inspection
from tracker.log.store import Store

pytestmark = pytest.mark.browser

HOST = "127.0.0.2"
PASSWORD = "pour floor tablet 9"
USERS = {"boss": "admin", "bench": "inspector", "room": "reviewer", "locky": "reviewer"}


def _dashboard(db, port, log_path):
    env = {k: v for k, v in os.environ.items() if k != "POURBACK_DB"}
    return subprocess.Popen([sys.executable, "-m", "tracker", "dashboard", "--db", str(db), "--host", HOST,
                             "--port", str(port)], stdout=log_path.open("w"), stderr=subprocess.STDOUT,
                            env=env, cwd=db.parent)


def _answers(port: int) -> bool:
    try:
        with urllib.request.urlopen(f"http://{HOST}:{port}/_stcore/health", timeout=2) as r:
            return r.status == 200
    except OSError:
        return False


@pytest.fixture(scope="module")
def plain_log(app_demo_file, tmp_path_factory):
    """A copy of the demo log with no account at all."""
    db = tmp_path_factory.mktemp("team-plain") / "plant.db"
    shutil.copyfile(app_demo_file, db)
    return db


def test_refuses_to_start_beyond_loopback_without_an_admin(plain_log, tmp_path):
    port = free_port(HOST)
    proc = _dashboard(plain_log, port, tmp_path / "server.log")
    try:
        assert proc.wait(timeout=60) == 1
    finally:
        if proc.poll() is None:
            proc.kill()
    out = (tmp_path / "server.log").read_text()
    assert f"Error: refusing to serve the dashboard on {HOST}: beyond this computer" in out
    assert not _answers(port)


@pytest.fixture(scope="module")
def team_server(app_demo_file, tmp_path_factory):
    """The demo log with an admin, an inspector and two reviewers, served on 127.0.0.2."""
    folder = tmp_path_factory.mktemp("team")
    db = folder / "plant.db"
    shutil.copyfile(app_demo_file, db)
    with Store(db) as s:
        for name, role in USERS.items():
            auth.add_user(s, name, role, PASSWORD, by="test")
    with running_dashboard(db, folder, HOST) as base:
        yield {"url": base, "db": db, "log": folder / "server.log", "pages": []}


@pytest.fixture
def page(browser, team_server):
    """A fresh browser tab (a new visitor); its pages' HTML is kept for the secrets check."""
    context = browser.new_context(viewport={"width": 1400, "height": 900})
    pg = context.new_page()
    pg.set_default_timeout(WAIT_MS)
    yield pg
    try:
        team_server["pages"].append(pg.content())
    finally:
        context.close()


def _form(pg):
    return pg.get_by_label("User name"), pg.get_by_label("Password", exact=True)


def sign_in(pg, name: str, password: str) -> None:
    user, pw = _form(pg)
    user.fill(name)
    pw.fill(password)
    pg.get_by_role("button", name="Sign in").click()
    settle(pg)


def test_it_starts_with_an_admin_and_a_visitor_sees_only_the_sign_in_form(page, team_server):
    assert "refusing" not in team_server["log"].read_text()
    for path in ("", "review", "pattern?pattern=P-1031", "team"):
        page.goto(f"{team_server['url']}/{path}")
        page.get_by_role("heading", name="Pourback: sign in", level=1).wait_for()
        settle(page)
        user, pw = _form(page)
        user.wait_for()
        pw.wait_for()
        assert user.is_visible() and pw.is_visible() and pw.get_attribute("type") == "password"
        # nothing of the log: no page title, no navigation, no table, no chart, no file path
        for title in ("Log results", "Weekly review", "Pattern file", "Team"):
            assert page.get_by_role("heading", name=title).count() == 0
        assert page.locator('[data-testid="stSidebarNav"], [data-testid="stDataFrame"], '
                            '[data-testid="stVegaLiteChart"]').count() == 0
        assert "P-1031" not in page.inner_text("body") and str(team_server["db"]) not in page.content()
        assert page.locator("input").count() == 2
    shot = full_screenshot(page, "team-sign-in")
    assert shot.stat().st_size > 5_000


def test_wrong_passwords_are_refused_and_the_fifth_locks(page, team_server):
    page.goto(team_server["url"])
    for i in range(1, 5):
        sign_in(page, "locky", f"not the password {i}")
        page.get_by_text("The user name or the password is wrong").wait_for()
        assert page.get_by_role("heading", name="Log results").count() == 0
    sign_in(page, "locky", "not the password 5")
    # issue 15: after 5 failed sign-ins a user is locked for 15 minutes; issue 27: the page
    # says so in the words of every refusal, so that a lock does not tell that the name exists
    page.get_by_text("or the account is locked").wait_for()
    assert "locky" not in page.inner_text("body")
    full_screenshot(page, "team-locked")
    sign_in(page, "locky", PASSWORD)  # the right password, but locked
    page.get_by_text("or the account is locked").wait_for()
    assert page.get_by_role("heading", name="Log results").count() == 0
    # the refusal's words are on the page from the fifth try already: wait for the sixth
    # try's record in the audit rather than for the page
    deadline = time.monotonic() + WAIT_MS / 1000
    while True:
        with Store(team_server["db"]) as s:
            [row] = [u for u in auth.list_users(s) if u["name"] == "locky"]
            events = [r["event"] for r in auth.audit_log(s) if r["subject"] == "locky"]
        if events[-1] == "sign_in_refused" or time.monotonic() > deadline:
            break
        time.sleep(0.2)
    assert row["locked"]
    assert events.count("sign_in_failed") == 5 and "locked" in events and events[-1] == "sign_in_refused"


def test_a_reviewer_is_offered_no_save_and_a_forged_write_is_refused(page, team_server):
    page.goto(team_server["url"])
    sign_in(page, "room", PASSWORD)
    page.get_by_role("heading", name="Log results", level=1).wait_for()
    page.get_by_text("Signed in as room (reviewer)").wait_for()
    settle(page)
    assert page.get_by_role("button", name="Save record").count() == 0
    assert page.get_by_role("button", name="Import file").count() == 0
    page.get_by_text("needs the role inspector or methods").first.wait_for()
    full_screenshot(page, "team-reviewer-log-results")
    page.get_by_role("link", name="Suggestions").click()
    page.get_by_role("heading", name="Suggestions", level=1).wait_for()
    settle(page)
    assert page.get_by_label("Diameter (mm)").count() == 0  # no what-if for a reviewer

    # The page offered nothing; a write made through the library anyway, as this
    # reviewer, is refused and leaves the log as it was.
    lot = lot_with_room(team_server["db"])
    with Store(team_server["db"]) as s:
        before = s.count("inspections")
        s.actor = auth.sign_in(s, "room", PASSWORD)
        with pytest.raises(PermissionDenied, match="room \\(role reviewer\\) may not log"):
            log_inspection(s, {"lot": lot, "inspected_on": dt.date.today().isoformat(), "method": "visual",
                               "quantity": 1, "result": "accept"}, by="bench")
        assert s.count("inspections") == before


def test_an_inspector_logs_a_result_that_carries_their_name(page, team_server):
    lot = lot_with_room(team_server["db"])
    page.goto(team_server["url"])
    sign_in(page, "bench", PASSWORD)
    page.get_by_role("heading", name="Log results", level=1).wait_for()
    settle(page)
    # no free-text name: the signed-in user, shown and not editable
    recorded = page.get_by_role("textbox", name="Recorded as (signed in)").first
    assert recorded.input_value() == "bench" and recorded.is_disabled()
    assert page.get_by_label("Your name (required; recorded as who logged it)").count() == 0
    choose(page, "Lot (newest first", lot)
    settle(page)
    # the bench form: one click each for method, result and defect; notes behind their expander
    page.get_by_role("radiogroup", name="Method").get_by_text("visual", exact=True).click()
    settle(page)
    page.get_by_role("radiogroup", name="Result").get_by_text("reject", exact=True).click()
    settle(page)
    page.get_by_role("radiogroup", name="Defect (reject and rework)").get_by_role("radio", name="sand").click()
    settle(page)
    page.get_by_text("Serial and notes (optional)").click()
    page.get_by_label("Notes").fill("logged by a signed-in inspector")
    page.get_by_role("button", name="Save record").click()
    page.get_by_text("Saved record").wait_for()
    settle(page)
    full_screenshot(page, "team-inspector-saved")
    with Store(team_server["db"]) as s:
        newest = s.inspections_history(limit=1).iloc[0]
    assert (newest["lot"], newest["notes"], newest["recorded_by"], newest["source"]) == \
        (lot, "logged by a signed-in inspector", "bench", "dashboard")


def test_admin_sees_accounts_the_audit_and_the_tls_warning(page, team_server):
    page.goto(team_server["url"])
    sign_in(page, "boss", PASSWORD)
    page.get_by_role("button", name="Save record").wait_for()  # the admin logs too (issue 28): a longer page
    settle(page)
    page.get_by_role("link", name="Team").click()
    page.get_by_role("heading", name="Team", level=1).wait_for()
    settle(page)
    # served beyond loopback over plain HTTP: admins are warned (issue 15)
    assert page.get_by_text("Served beyond this computer without TLS").count() >= 1
    assert page.get_by_role("button", name="Save record").count() == 0
    full_screenshot(page, "team-admin")


def test_a_reload_keeps_the_session_and_signing_out_revokes_it(page, team_server):
    """Issue 28: a reload no longer signs the user out; the session's token is kept in a
    cookie of this site (never the password) and is worthless once signed out. The
    admin may log at the bench too. No page, the sign-in form included, asks another host."""
    outside = outside_requests(page, team_server["url"])
    page.goto(team_server["url"])
    sign_in(page, "boss", PASSWORD)
    page.get_by_role("button", name="Save record").wait_for()  # the admin logs as well
    settle(page)
    page.wait_for_function("() => document.cookie.includes('pourback_session_')")
    [kept] = [c for c in page.context.cookies() if c["name"].startswith("pourback_session_")]
    assert (kept["sameSite"], kept["expires"]) == ("Strict", -1)  # this site only; gone with the browser
    stored = page.evaluate("() => JSON.stringify(localStorage) + JSON.stringify(sessionStorage) + document.cookie")
    assert PASSWORD not in stored and PASSWORD not in str(page.context.cookies())
    sha = hashlib.sha256(kept["value"].encode()).hexdigest()
    with Store(team_server["db"]) as s:
        assert s.session_row(sha)["user"] == "boss"

    page.reload()
    page.get_by_role("heading", name="Log results", level=1).wait_for()
    page.get_by_text("Signed in as boss (admin)").wait_for()
    assert page.get_by_label("User name").count() == 0
    page.get_by_role("button", name="Save record").wait_for()
    settle(page)

    page.get_by_role("button", name="Sign out").click()
    page.get_by_role("heading", name="Pourback: sign in", level=1).wait_for()
    settle(page)
    assert not [c for c in page.context.cookies() if c["name"] == kept["name"] and c["value"]]
    with Store(team_server["db"]) as s:
        assert s.session_row(sha)["end_reason"] == "signed out"
    # the old token, put back by hand, opens nothing: it was revoked at sign-out
    page.context.add_cookies([kept])
    page.reload()
    page.get_by_text("Your session ended (signed out); sign in again.").wait_for()
    assert page.get_by_role("heading", name="Log results").count() == 0
    assert outside == [], outside


def test_no_page_shows_a_password_or_a_hash(page, team_server):
    # every page kept by the tests above it in this module is searched
    page.goto(team_server["url"])
    team_server["pages"].append(page.content())
    with Store(team_server["db"]) as s:
        hashes = [s.user_account(u)["password_hash"] for u in USERS]
    secrets = [PASSWORD, *hashes, *[p for h in hashes for p in h.split("$")[4:6]],
               *[f"not the password {i}" for i in range(1, 6)]]
    assert len(team_server["pages"]) >= 6
    for html in team_server["pages"]:
        for secret in secrets:
            assert secret not in html
    server_log = team_server["log"].read_text()
    for secret in secrets:
        assert secret not in server_log


def test_require_login_on_loopback_and_an_idle_session_ends(browser, app_demo_file, tmp_path):
    db = tmp_path / "desk.db"
    shutil.copyfile(app_demo_file, db)
    with Store(db) as s:
        auth.add_user(s, "bench", "inspector", PASSWORD, by="test")
    # 0.002 hours = 7.2 s without activity ends the session
    with running_dashboard(db, tmp_path, "127.0.0.1", extra=("--require-login", "--idle-hours", "0.002")) as base:
        context = browser.new_context(viewport={"width": 1400, "height": 900})
        pg = context.new_page()
        pg.set_default_timeout(WAIT_MS)
        try:
            pg.goto(base)
            sign_in(pg, "bench", PASSWORD)
            pg.get_by_role("heading", name="Log results", level=1).wait_for()
            pg.wait_for_timeout(9_000)
            pg.get_by_role("link", name="Weekly review").click()
            pg.get_by_text("Your session ended after 0.002 hours without activity; sign in again.").wait_for()
            assert pg.get_by_role("heading", name="Weekly review").count() == 0
            _form(pg)[0].wait_for()
        finally:
            context.close()
    with Store(db) as s:
        assert [r["event"] for r in auth.audit_log(s)][-1] == "session_expired"


def test_tls_serves_https(app_demo_file, tmp_path):
    import ssl

    if not shutil.which("openssl"):
        pytest.skip("openssl is missing (apt-get install openssl)")
    cert, key = tmp_path / "cert.pem", tmp_path / "key.pem"
    subprocess.run(["openssl", "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-keyout", str(key), "-out",
                    str(cert), "-days", "1", "-subj", f"/CN={HOST}", "-addext", f"subjectAltName=IP:{HOST}"],
                   check=True, capture_output=True)
    db = tmp_path / "plant.db"
    shutil.copyfile(app_demo_file, db)
    with Store(db) as s:
        auth.add_user(s, "boss", "admin", PASSWORD, by="test")
    port = free_port(HOST)
    env = {k: v for k, v in os.environ.items() if k != "POURBACK_DB"}
    proc = subprocess.Popen([sys.executable, "-m", "tracker", "dashboard", "--db", str(db), "--host", HOST,
                             "--port", str(port), "--tls-cert", str(cert), "--tls-key", str(key)],
                            stdout=subprocess.PIPE, stderr=subprocess.STDOUT, env=env, cwd=tmp_path, text=True)
    trust = ssl.create_default_context(cafile=str(cert))  # the self-signed certificate, checked
    try:
        for _ in range(300):
            try:
                with urllib.request.urlopen(f"https://{HOST}:{port}/_stcore/health", timeout=2,
                                            context=trust) as r:
                    assert r.status == 200
                    break
            except OSError:
                assert proc.poll() is None, proc.stdout.read()
                time.sleep(0.3)
        else:
            pytest.fail("no HTTPS answer")
        # plain HTTP on the same port gets no page
        assert not _answers(port)
    finally:
        proc.terminate()
        proc.wait(timeout=15)
    out = proc.stdout.read()
    assert f"https://{HOST}:{port}" in out and "without TLS" not in out
