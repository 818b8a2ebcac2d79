"""What the real-browser tests share: the system's Chromium driven by playwright
(never a downloaded browser), `pourback dashboard` served on a free port, and
the helpers that open a page, wait for Streamlit and take screenshots.

The fixtures (``sync_playwright``, ``browser``, ``server``) are in
tests/browser/conftest.py. Without /usr/bin/chromium or playwright a browser
test is skipped, unless POURBACK_REQUIRE_BROWSER=1 (CI sets it), when it fails.
"""

import contextlib
import os
import pathlib
import shutil
import socket
import subprocess
import sys
import time
import urllib.request

import pytest

from tests.support import REPO
from tracker.cautions import SAFETY_CAUTION

ARTIFACTS = REPO / "test-artifacts"
CHROMIUM = "/usr/bin/chromium"
# How long a browser step may wait for the page (ms): generous, as the test processes share
# the machine's cores under pytest-xdist. A bound on waiting, not a speed any test checks.
WAIT_MS = 120_000
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--no-first-run", "--disable-sync"]


def missing(reason: str):
    if os.environ.get("POURBACK_REQUIRE_BROWSER") == "1":
        pytest.fail(f"browser test required (POURBACK_REQUIRE_BROWSER=1) but {reason}")
    pytest.skip(reason)


def free_port(host: str = "127.0.0.1") -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((host, 0))
        return s.getsockname()[1]


def _start(db, folder, host: str, port: int, extra: tuple):
    """`pourback dashboard` started and answering: (process, log file), or None when it
    exited because another process took the port between free_port and its start
    (test processes run side by side under pytest-xdist). Fails the test when it exits
    otherwise or does not answer in 90 s."""
    log = (folder / "server.log").open("w")
    env = {k: v for k, v in os.environ.items() if k != "POURBACK_DB"}
    proc = subprocess.Popen([sys.executable, "-m", "tracker", "dashboard", "--db", str(db),
                             "--port", str(port), "--host", host, *extra],
                            stdout=log, stderr=subprocess.STDOUT, env=env, cwd=folder)
    deadline = time.monotonic() + 90
    try:
        while True:
            if proc.poll() is not None:
                said = (folder / "server.log").read_text()
                if f"Port {port} is not available" in said:
                    log.close()
                    return None
                pytest.fail("the dashboard exited early:\n" + said)
            try:
                with urllib.request.urlopen(f"http://{host}:{port}/_stcore/health", timeout=2) as r:
                    if r.status == 200:
                        return proc, log
            except OSError:
                pass
            if time.monotonic() > deadline:
                pytest.fail("the dashboard did not answer within 90 s:\n" + (folder / "server.log").read_text())
            time.sleep(0.3)
    except BaseException:
        _stop(proc, log)
        raise


def _stop(proc, log) -> None:
    proc.terminate()
    try:
        proc.wait(timeout=15)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait(timeout=5)
    log.close()


@contextlib.contextmanager
def running_dashboard(db, folder, host: str = "127.0.0.1", port: int | None = None, extra: tuple = ()):
    """`pourback dashboard` on ``db`` at ``host`` (a free port, another one if that was
    taken meanwhile; ``extra`` options), until the block ends; yields its base URL.
    Fails the test when it exits or does not answer in 90 s."""
    for _ in range(3 if port is None else 1):
        chosen = port or free_port(host)
        started = _start(db, folder, host, chosen, extra)
        if started:
            break
    else:
        pytest.fail(f"the dashboard found no free port on {host}:\n" + (folder / "server.log").read_text())
    try:
        yield f"http://{host}:{chosen}"
    finally:
        _stop(*started)


def served_copy(source, folder, name: str = "demo.db", prepare=None):
    """`pourback dashboard` on a copy of the log file ``source`` in ``folder``; ``prepare(db)``
    runs on the copy first. A context manager yielding {"url", "db"}."""
    db = folder / name
    shutil.copyfile(source, db)
    if prepare is not None:
        prepare(db)

    @contextlib.contextmanager
    def serve():
        with running_dashboard(db, folder) as base:
            yield {"url": base, "db": db}

    return serve()


def outside_requests(pg, base: str) -> list[str]:
    """A list that fills with every request ``pg`` makes to a host other than ``base``'s
    (data: and blob: URLs stay in the page)."""
    import urllib.parse

    own = urllib.parse.urlsplit(base).netloc
    seen: list[str] = []

    def note(request) -> None:
        url = urllib.parse.urlsplit(request.url)
        if url.scheme not in ("data", "blob", "about") and url.netloc != own:
            seen.append(request.url)

    pg.on("request", note)
    return seen


def settle(pg, ms: int = 400) -> None:
    """Wait for Streamlit to finish the current run."""
    pg.wait_for_timeout(ms)
    pg.wait_for_function("() => !document.querySelector('[data-testid=\"stStatusWidget\"]')",
                         timeout=WAIT_MS)
    pg.wait_for_timeout(ms)


def visit(browser, base: str, path: str, title: str, width: int, timeout_ms: int = WAIT_MS):
    """A new tab at ``width`` px on ``path``, once its title and the caution are shown."""
    pg = browser.new_page(viewport={"width": width, "height": 900})
    pg.set_default_timeout(timeout_ms)
    pg.goto(f"{base}/{path}")
    pg.get_by_role("heading", name=title, level=1).wait_for()
    pg.get_by_text(SAFETY_CAUTION[:60]).wait_for()
    settle(pg)
    return pg


def full_screenshot(pg, name: str, width: int = 1400) -> pathlib.Path:
    """The whole page as test-artifacts/<name>.png: Streamlit scrolls inside its main
    block, so the window grows to fit it first."""
    ARTIFACTS.mkdir(exist_ok=True)
    settle(pg, 300)
    height = pg.evaluate("() => document.querySelector('[data-testid=\"stMain\"]').scrollHeight")
    pg.set_viewport_size({"width": width, "height": min(int(height) + 40, 12000)})
    pg.wait_for_timeout(900)
    path = ARTIFACTS / f"{name}.png"
    pg.screenshot(path=str(path), full_page=True)
    return path


def choose(pg, label: str, option: str) -> None:
    """Pick ``option`` in the selectbox labelled ``label`` (typing to filter, as a user would)."""
    box = pg.locator('[data-testid="stSelectbox"]').filter(has_text=label)
    box.locator("input").click()
    pg.keyboard.type(option)
    pg.get_by_role("option").filter(has_text=option).first.click()


def lot_with_room(db):
    """A lot of the newest pours whose visual inspections leave room for one more casting."""
    from tracker.log.store import Store
    from tracker.views import log_results as views

    with Store(db) as s:
        lots = views.lot_options(s).head(40)
        totals = s.lot_totals(lots["lot"].tolist())
        for row in lots.itertuples():
            t = totals.get(row.lot, {"rejected": 0, "methods": {}})
            if t["methods"].get("visual", 0) < row.castings and t["rejected"] < row.castings:
                return row.lot
    raise AssertionError("no lot with room in the demo")
