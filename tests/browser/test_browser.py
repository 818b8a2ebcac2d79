"""The dashboard in a real browser: `pourback dashboard` serves the demo log on
127.0.0.1 and a headless Chromium (the system's, never a downloaded one)
visits every page, logs one result through the form and finds it in the
latest-records table. A screenshot of each page is saved to test-artifacts/.

Without /usr/bin/chromium or playwright the test is skipped, unless
POURBACK_REQUIRE_BROWSER=1 (CI sets it), when it fails instead.
"""

import pytest

from tests.support.browser import WAIT_MS, choose, full_screenshot, lot_with_room, settle
from tracker.cautions import SAFETY_CAUTION

pytestmark = pytest.mark.browser

# url path, title, screenshot name
PAGES = [
    ("", "Log results", "log-results"),
    ("review", "Weekly review", "weekly-review"),
    ("design-map", "Design map", "design-map"),
    ("pattern?pattern=P-1031", "Pattern file", "pattern-file"),
    ("suggestions", "Suggestions", "suggestions"),
]


@pytest.fixture(scope="module")
def page(browser, server):
    pg = browser.new_page(viewport={"width": 1400, "height": 900})
    pg.set_default_timeout(WAIT_MS)
    yield pg
    pg.close()


def open_page(pg, base: str, path: str, title: str) -> None:
    pg.set_viewport_size({"width": 1400, "height": 900})
    pg.goto(f"{base}/{path}")
    pg.get_by_role("heading", name=title, level=1).wait_for()
    pg.get_by_text(SAFETY_CAUTION[:60]).wait_for()
    settle(pg)


@pytest.mark.parametrize("path,title,name", PAGES)
def test_every_page_renders_with_the_caution(page, server, path, title, name):
    open_page(page, server["url"], path, title)
    assert page.locator('[data-testid="stException"]').count() == 0
    assert page.locator('[data-testid="stAlertContentError"]').count() == 0
    if name != "log-results":
        page.locator('[data-testid="stVegaLiteChart"] canvas, [data-testid="stVegaLiteChart"] svg').first.wait_for()
    shot = full_screenshot(page, name)
    assert shot.stat().st_size > 20_000  # a page, not a blank window


def test_log_one_result_through_the_form(page, server):
    from tracker.log.store import Store

    lot = lot_with_room(server["db"])
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
    full_screenshot(page, "log-results-after-saving")
