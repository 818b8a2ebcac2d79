"""The dashboard in a real browser: `pourback dashboard` serves the demo log on
127.0.0.1 and a headless Chromium (the system's, never a downloaded one)
visits every page, logs one result through the form and finds it in the
latest-records table. A screenshot of each page is saved to test-artifacts/.

Without /usr/bin/chromium or playwright the test is skipped, unless
POURBACK_REQUIRE_BROWSER=1 (CI sets it), when it fails instead.
"""

import pytest

from tests.support.browser import WAIT_MS, choose, full_screenshot, lot_with_room, outside_requests, settle
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
    pg.outside = outside_requests(pg, server["url"])  # every request to another host, page after page
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
    # issue 28: a plant may run without the internet, and a page must not tell another host it was opened
    assert page.outside == [], f"{name} asked another host: {page.outside}"


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


def _click_and_settle(page, locator) -> None:
    locator.click()
    settle(page)


def _type(page, locator, text: str) -> None:
    """Type into a field and commit it (Enter) before the next field: a field typed
    while the run its neighbour started is still going can lose its text."""
    locator.fill(text)
    locator.press("Enter")
    settle(page)


def test_at_the_bench_a_new_lot_a_refused_reject_a_correction_and_a_withdrawal(page, server):
    """Issue 28: a lot logged whole as accepted, then a reject found on it, is put right
    at the bench: the reject is refused, the accept record corrected, the reject saved;
    a lot entered by form, a record withdrawn (the defect against its radiograph category
    in the form: tests/log/test_radiography.py)."""
    from tracker.log.store import Store

    with Store(server["db"]) as s:
        row = s.table("patterns").sort_values("castings_per_mold").iloc[0]
    pattern, n = row["pattern"], 2 * int(row["castings_per_mold"])  # castings poured = molds x castings a mold
    open_page(page, server["url"], "", "Log results")
    box = page.locator('[data-testid="stExpander"]').filter(has_text="Enter a new lot")
    _click_and_settle(page, box.get_by_text("Enter a new lot"))
    box.get_by_label("Lot", exact=True).fill("BENCH-1")  # a form: sent with its button
    choose(page, "Pattern", pattern)
    box.get_by_label("Heat").fill("H-BENCH")
    box.get_by_label("Your name (required; recorded as who entered it)").fill("Bench Test")
    box.get_by_label("Molds").fill("2")
    _click_and_settle(page, box.get_by_role("button", name="Save lot"))
    page.get_by_text(f"Saved lot BENCH-1 of pattern {pattern}").wait_for()
    page.get_by_text(f"Lot BENCH-1: {n} castings poured").wait_for()  # picked in the record form

    # every casting accepted ...
    _type(page, page.get_by_label("Quantity (castings)", exact=True), str(n))
    page.get_by_label("Your name (required; recorded as who logged it)").fill("Bench Test")
    _click_and_settle(page, page.get_by_role("button", name="Save record"))
    page.get_by_text("Saved record").wait_for()
    # ... then a reject found on the same lot: refused, with the way out
    _click_and_settle(page, page.get_by_role("radiogroup", name="Result", exact=True).get_by_text("reject", exact=True))
    _click_and_settle(page, page.get_by_role("radiogroup", name="Defect (reject and rework)")
                      .get_by_role("radio", name="shrinkage"))
    _click_and_settle(page, page.get_by_role("button", name="Save record"))
    page.get_by_text(f"would have {n + 1} castings inspected by visual but only {n} were poured").wait_for()
    page.get_by_text("correct its quantity or withdraw it under").wait_for()
    page.get_by_label("Castings (corrected quantity)").fill(str(n - 1))
    page.get_by_label("Reason (required; kept with the record)").fill("a reject found on the same lot")
    page.get_by_label("Your name (required; recorded as who corrected it)").fill("Bench Test")
    _click_and_settle(page, page.get_by_role("button", name="Save correction"))
    page.get_by_text("stands in its place").wait_for()
    _click_and_settle(page, page.get_by_role("button", name="Save record"))  # the reject, as it was typed
    page.get_by_text("Saved record").wait_for()

    with Store(server["db"]) as s:
        hist = s.inspections_history(lot="BENCH-1").sort_values("id")
    accept, corrected, reject = (hist.iloc[i] for i in range(3))
    assert (accept["quantity"], accept["superseded_by"], accept["correction_why"]) == (
        n, corrected["id"], "a reject found on the same lot")
    assert (corrected["quantity"], corrected["result"], corrected["recorded_by"]) == (n - 1, "accept", "Bench Test")
    assert (reject["quantity"], reject["result"], reject["defect"]) == (1, "reject", "shrinkage")

    # withdrawn, with a reason
    choose(page, "Record (newest first)", f"{int(reject['id'])} ·")
    _click_and_settle(page, page.get_by_role("radiogroup", name="What to do").get_by_text("withdraw it"))
    page.get_by_label("Reason (required; kept with the record)").fill("logged on the wrong lot")
    _click_and_settle(page, page.get_by_role("button", name="Withdraw record"))
    page.get_by_text(f"Record {int(reject['id'])} withdrawn").wait_for()
    with Store(server["db"]) as s:
        assert s.lot_totals(["BENCH-1"])["BENCH-1"] == {"rejected": 0, "methods": {"visual": n - 1}}

    # the same page at a tablet's 800 px: every action in view, nothing wider than the window
    page.set_viewport_size({"width": 800, "height": 900})
    settle(page)
    for name in ("Save record", "Save lot", "Withdraw record"):
        box_ = page.get_by_role("button", name=name).bounding_box()
        assert box_ is not None and box_["x"] + box_["width"] <= 800, name
    main = page.locator('[data-testid="stMain"]')
    assert main.evaluate("e => e.scrollWidth <= e.clientWidth")
    full_screenshot(page, "log-results-bench-800", width=800)
