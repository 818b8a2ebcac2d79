"""Every page at a tablet's 800 px and at 1400 px in a real browser: each page has
its own address, the sidebar is collapsed at 800 px, and no metric's label or
value is cut off (an element whose content is wider than its box, scrollWidth
above clientWidth, is cut). Screenshots of every page at both widths land in
test-artifacts/ (<page>-1400.png, <page>-800.png).

One reject typed from a fresh form takes at most 8 fields and 12 clicks,
Save included, counted as a user would make them.
"""

import re
import urllib.parse

import pytest

from tests.support.browser import ARTIFACTS, lot_with_room, settle, visit
from tests.support.browser import full_screenshot as _full_screenshot

pytestmark = pytest.mark.browser

NARROW, WIDE = 800, 1400
# url path, title, screenshot name
PAGES = [
    ("log", "Log results", "log-results"),
    ("review", "Weekly review", "weekly-review"),
    ("design-map", "Design map", "design-map"),
    ("pattern", "Pattern file", "pattern-file"),
    ("suggestions", "Suggestions", "suggestions"),
]

# Elements whose text must fit their box: metric labels and values (and every element inside them).
CUT_OFF = """() => {
  const out = [];
  for (const sel of ['[data-testid="stMetricLabel"]', '[data-testid="stMetricValue"]']) {
    for (const box of document.querySelectorAll(sel)) {
      for (const el of [box, ...box.querySelectorAll('*')]) {
        if (el.clientWidth > 0 && el.scrollWidth > el.clientWidth + 1) {
          out.push(sel + ': ' + (box.innerText || '').trim() + ' (' + el.scrollWidth + ' > ' + el.clientWidth + ')');
        }
      }
    }
  }
  return out;
}"""


def full_screenshot(pg, name: str, width: int) -> None:
    _full_screenshot(pg, f"{name}-{width}", width)


def sidebar_open(pg) -> bool:
    return pg.locator('[data-testid="stSidebarCollapseButton"]').count() > 0 and pg.evaluate(
        "() => document.querySelector('[data-testid=\"stSidebar\"]').getBoundingClientRect().right > 50")


@pytest.mark.parametrize("width", [WIDE, NARROW])
@pytest.mark.parametrize("path,title,name", PAGES)
def test_page_at_its_own_address_with_nothing_cut_off(browser, server, path, title, name, width):
    pg = visit(browser, server["url"], path, title, width)
    try:
        # its own address, not the app's main page under another name
        assert urllib.parse.urlparse(pg.url).path == "/" + path, pg.url
        assert pg.get_by_text("Page not found").count() == 0
        assert pg.locator('[data-testid="stException"]').count() == 0
        if name != "log-results":
            pg.locator('[data-testid="stVegaLiteChart"] canvas, '
                       '[data-testid="stVegaLiteChart"] svg').first.wait_for()
        assert pg.locator('[data-testid="stMetric"]').count() > 0 or name == "log-results"
        # the sidebar gives way to the page below 1000 px, and stays at 1400 px
        assert sidebar_open(pg) is (width == WIDE)
        cut = pg.evaluate(CUT_OFF)
        assert cut == [], f"{name} at {width} px cuts off: {cut}"
        full_screenshot(pg, name, width)
    finally:
        pg.close()


def test_one_reject_from_a_fresh_form_in_8_fields_and_12_clicks(browser, server):
    from tracker.log.store import Store

    lot = lot_with_room(server["db"])
    pg = visit(browser, server["url"], "log", "Log results", NARROW)
    clicks, fields = 0, set()

    def click(locator, field=None):
        nonlocal clicks
        locator.click()
        clicks += 1
        if field:
            fields.add(field)
        settle(pg, 250)

    try:
        box = pg.locator('[data-testid="stSelectbox"]').filter(has_text="Lot")
        click(box.locator("input"), "lot")
        pg.keyboard.type(lot)
        click(pg.get_by_role("option").filter(has_text=lot).first)
        click(pg.get_by_role("radiogroup", name="Result").get_by_text("reject", exact=True), "result")
        click(pg.get_by_role("radiogroup", name="Defect (reject and rework)")
              .get_by_role("radio", name="shrinkage"), "defect")
        click(pg.get_by_role("radiogroup", name=re.compile("^Zone of the casting")).get_by_role("radio").first,
              "zone")
        click(pg.get_by_label("Inspector"), "inspector")
        pg.keyboard.type("QE-T8")
        click(pg.get_by_label("Your name", exact=False).first, "name")
        pg.keyboard.type("Bench Test")
        click(pg.get_by_role("button", name="Save record"))
        pg.get_by_text("Saved record").wait_for()
        assert len(fields) <= 8 and clicks <= 12, (fields, clicks)
        with Store(server["db"]) as s:
            newest = s.inspections_history(limit=1).iloc[0]
        assert (newest["lot"], newest["result"], newest["defect"]) == (lot, "reject", "shrinkage")
        assert newest["zone"] and newest["recorded_by"] == "Bench Test"
        settle(pg)
        # after the save: the result-specific fields are cleared, lot, inspector and name are kept
        assert pg.get_by_role("radiogroup", name="Result").get_by_role("radio", name="accept").is_checked()
        assert pg.get_by_role("radiogroup", name="Defect (reject and rework)").locator(
            '[aria-checked="true"]').count() == 0
        assert pg.get_by_label("Inspector").input_value() == "QE-T8"
        assert pg.get_by_label("Your name", exact=False).first.input_value() == "Bench Test"
        assert pg.get_by_text(f"Lot {lot}: ").count() == 1  # the lot's accounting line: still that lot
        full_screenshot(pg, "log-results-after-saving", NARROW)
    finally:
        pg.close()


def test_html_report_tables_fit_a_tablet(browser, app_demo_file, tmp_path):
    from tracker.log.store import Store
    from tracker.review.report import render
    from tracker.review.weekly import weekly_review

    with Store(app_demo_file) as s:
        page = tmp_path / "review.html"
        page.write_text(render(weekly_review(s), "html"), encoding="utf-8")
    pg = browser.new_page(viewport={"width": NARROW, "height": 900})
    try:
        pg.goto(page.as_uri())
        widths = pg.evaluate("""() => Array.from(document.querySelectorAll('table')).map(
            t => [t.closest('section') ? t.closest('section').querySelector('h2').innerText : '',
                  t.scrollWidth, t.parentElement.clientWidth])""")
        assert len(widths) >= 4
        wide = [w for w in widths if w[1] > w[2] + 1]
        assert wide == [], f"tables wider than the page at {NARROW} px: {wide}"
        assert pg.evaluate("() => document.documentElement.scrollWidth") <= NARROW
        pg.screenshot(path=str(ARTIFACTS / f"review-report-{NARROW}.png"), full_page=True)
    finally:
        pg.close()


def test_clicking_a_point_on_the_design_map_opens_that_patterns_file(browser, server):
    pg = visit(browser, server["url"], "design-map", "Design map", WIDE)
    try:
        # Vega draws each zone as an SVG mark labelled with its tooltip (pattern, zone, ...)
        point = pg.locator('[data-testid="stVegaLiteChart"] [role="graphics-symbol"][aria-label*="pattern: P-1036;"]')
        point.first.wait_for()
        point.first.click(force=True)
        pg.get_by_role("heading", name="Pattern file", level=1).wait_for()
        settle(pg)
        assert urllib.parse.urlparse(pg.url).path == "/pattern"
        assert urllib.parse.parse_qs(urllib.parse.urlparse(pg.url).query)["pattern"] == ["P-1036"]
        picker = pg.locator('[data-testid="stSelectbox"]').first
        assert "P-1036" in picker.evaluate("e => e.innerText + ' ' + Array.from(e.querySelectorAll('input'))"
                                           ".map(i => i.value).join(' ')")  # the picker shows it
    finally:
        pg.close()
