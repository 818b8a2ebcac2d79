"""The dashboard in a real browser: `pourback dashboard` serves the demo log on
127.0.0.1 and a headless Chromium (the system's, never a downloaded one)
visits every page, logs one result through the form and finds it in the
latest-records table. A screenshot of each page is saved to test-artifacts/.

Without /usr/bin/chromium or playwright the test is skipped, unless
POURBACK_REQUIRE_BROWSER=1 (CI sets it), when it fails instead.
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

from tracker.cautions import SAFETY_CAUTION

pytestmark = pytest.mark.browser

REPO = pathlib.Path(__file__).resolve().parent.parent
ARTIFACTS = REPO / "test-artifacts"
CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--no-first-run", "--disable-sync"]
# url path, title, screenshot name
PAGES = [
    ("", "Log results", "log-results"),
    ("review", "Weekly review", "weekly-review"),
    ("design-map", "Design map", "design-map"),
    ("pattern?pattern=P-1031", "Pattern file", "pattern-file"),
    ("suggestions", "Suggestions", "suggestions"),
]


def _missing(reason: str):
    if os.environ.get("POURBACK_REQUIRE_BROWSER") == "1":
        pytest.fail(f"browser test required (POURBACK_REQUIRE_BROWSER=1) but {reason}")
    pytest.skip(reason)


@pytest.fixture(scope="module")
def sync_playwright():
    if not pathlib.Path(CHROMIUM).exists():
        _missing(f"{CHROMIUM} is missing (apt-get install chromium)")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        _missing("the playwright package is missing (pip install -e '.[test]')")
    return sync_playwright


def _free_port(host: str = "127.0.0.1") -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((host, 0))
        return s.getsockname()[1]


@contextlib.contextmanager
def running_dashboard(db, folder, host: str = "127.0.0.1", port: int | None = None, extra: tuple = ()):
    """`pourback dashboard` on ``db`` at ``host`` (a free port; ``extra`` options), until
    the block ends; yields its base URL. Fails the test when it exits or does not answer in 90 s."""
    port = port or _free_port(host)
    log = (folder / "server.log").open("w")
    env = {k: v for k, v in os.environ.items() if k != "POURBACK_DB"}
    proc = subprocess.Popen([sys.executable, "-m", "tracker", "dashboard", "--db", str(db),
                             "--port", str(port), "--host", host, *extra],
                            stdout=log, stderr=subprocess.STDOUT, env=env, cwd=folder)
    base = f"http://{host}:{port}"
    try:
        deadline = time.monotonic() + 90
        while True:
            if proc.poll() is not None:
                pytest.fail("the dashboard exited early:\n" + (folder / "server.log").read_text())
            try:
                with urllib.request.urlopen(base + "/_stcore/health", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if time.monotonic() > deadline:
                pytest.fail("the dashboard did not answer within 90 s:\n" + (folder / "server.log").read_text())
            time.sleep(0.3)
        yield base
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=5)
        log.close()


@pytest.fixture(scope="module")
def server(app_demo_file, tmp_path_factory):
    """`pourback dashboard` on a copy of the demo log, on a free port; stopped at the end."""
    folder = tmp_path_factory.mktemp("browser")
    db = folder / "demo.db"
    shutil.copyfile(app_demo_file, db)
    with running_dashboard(db, folder) as base:
        yield {"url": base, "db": db}


@pytest.fixture(scope="module")
def page(sync_playwright, server):
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        pg = browser.new_page(viewport={"width": 1400, "height": 900})
        pg.set_default_timeout(60_000)
        yield pg
        browser.close()


def settle(pg, ms: int = 400) -> None:
    """Wait for Streamlit to finish the current run."""
    pg.wait_for_timeout(ms)
    pg.wait_for_function("() => !document.querySelector('[data-testid=\"stStatusWidget\"]')",
                         timeout=60_000)
    pg.wait_for_timeout(ms)


def open_page(pg, base: str, path: str, title: str) -> None:
    pg.set_viewport_size({"width": 1400, "height": 900})
    pg.goto(f"{base}/{path}")
    pg.get_by_role("heading", name=title, level=1).wait_for()
    pg.get_by_text(SAFETY_CAUTION[:60]).wait_for()
    settle(pg)


def screenshot(pg, name: str) -> pathlib.Path:
    """The whole page: Streamlit scrolls inside its main block, so grow the window to fit it."""
    ARTIFACTS.mkdir(exist_ok=True)
    height = pg.evaluate("() => document.querySelector('[data-testid=\"stMain\"]').scrollHeight")
    pg.set_viewport_size({"width": 1400, "height": min(int(height) + 40, 9000)})
    pg.wait_for_timeout(800)
    path = ARTIFACTS / f"{name}.png"
    pg.screenshot(path=str(path), full_page=True)
    return path


def choose(pg, label: str, option: str) -> None:
    """Pick ``option`` in the selectbox labelled ``label`` (typing to filter, as a user would)."""
    box = pg.locator('[data-testid="stSelectbox"]').filter(has_text=label)
    box.locator("input").click()
    pg.keyboard.type(option)
    pg.get_by_role("option").filter(has_text=option).first.click()


@pytest.mark.parametrize("path,title,name", PAGES)
def test_every_page_renders_with_the_caution(page, server, path, title, name):
    open_page(page, server["url"], path, title)
    assert page.locator('[data-testid="stException"]').count() == 0
    assert page.locator('[data-testid="stAlertContentError"]').count() == 0
    if name != "log-results":
        page.locator('[data-testid="stVegaLiteChart"] canvas, [data-testid="stVegaLiteChart"] svg').first.wait_for()
    shot = screenshot(page, name)
    assert shot.stat().st_size > 20_000  # a page, not a blank window


def _lot_with_room(db):
    from tracker import views
    from tracker.store import Store

    with Store(db) as s:
        lots = views.lot_options(s).head(40)
        totals = s.lot_totals(lots["lot"].tolist())
        for row in lots.itertuples():
            t = totals.get(row.lot, {"rejected": 0, "methods": {}})
            if t["methods"].get("visual", 0) < row.castings and t["rejected"] < row.castings:
                return row.lot
    raise AssertionError("no lot with room in the demo")


def test_log_one_result_through_the_form(page, server):
    from tracker.store import Store

    lot = _lot_with_room(server["db"])
    open_page(page, server["url"], "", "Log results")
    choose(page, "Lot (newest first", lot)
    settle(page)
    page.get_by_role("radiogroup", name="Method").get_by_text("visual", exact=True).click()
    settle(page)
    page.get_by_role("radiogroup", name="Result").get_by_text("reject", exact=True).click()
    settle(page)
    page.get_by_role("radiogroup", name="Defect (reject and rework)").get_by_role("radio", name="sand").click()
    settle(page)
    page.get_by_label("Inspector").fill("QE-BR")
    page.get_by_text("Serial and notes (optional)").click()
    page.get_by_label("Notes").fill("browser test record")
    page.get_by_label("Your name (required; recorded as who logged it)").fill("Browser Test")
    page.get_by_role("button", name="Save record").click()
    page.get_by_text("Saved record").wait_for()
    settle(page)

    with Store(server["db"]) as s:
        newest = s.inspections_history(limit=1).iloc[0]
    assert (newest["lot"], newest["result"], newest["defect"]) == (lot, "reject", "sand")
    assert (newest["recorded_by"], newest["source"]) == ("Browser Test", "dashboard")

    # The latest-records grid keeps an accessible copy of its rows in the DOM.
    table = page.locator('[data-testid="stDataFrame"]').last
    first_row = table.locator("table tbody tr").first
    first_row.wait_for(state="attached")
    cells = [c.strip() for c in first_row.locator("td").all_text_contents()]
    assert str(int(newest["id"])) in cells and lot in cells and "Browser Test" in cells, cells
    screenshot(page, "log-results-after-saving")
