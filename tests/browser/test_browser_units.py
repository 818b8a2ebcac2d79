"""Every page in US customary units in a real browser: `pourback dashboard` serves
a copy of the demo log whose unit system is `us`, a headless Chromium opens each
page (the thermal views solved, every expander opened) and reads what a person
sees: the page's text, the tables' column headings and the charts' axis and
legend titles. No metric unit (mm, cm, cm², cm³, kg, °C, per kg) may be left;
inches, pounds and °F must be there. Screenshots at 1400 and 800 px land in
test-artifacts/units-<page>-<width>.png.

Skipped without /usr/bin/chromium or playwright, unless POURBACK_REQUIRE_BROWSER=1.
"""

import contextlib
import json
import re

import pytest

from tests.support.browser import WAIT_MS, full_screenshot, served_copy, settle, visit
from tracker.log import settings
from tracker.log.store import Store

pytestmark = pytest.mark.browser

# A metric unit written as a unit: not part of a word or a column name such as diameter_mm.
METRIC_UNIT = re.compile(r"(?<![A-Za-z0-9_])(mm|cm|cm²|cm³|kg|°C)(?![A-Za-z0-9_²³])|\bper kg\b")
US_UNIT = re.compile(r"\((in|in²|in³|lb)\b|\bin\)|°F|per lb")
PUBLISHED_FORM = "source, in its published units:"  # dashboard.common.PUBLISHED_FORM

# url path, title, screenshot name, toggles to switch on (labels), what the page must show in US units
PAGES = [
    ("log", "Log results", "log-results", [], None),
    ("review", "Weekly review", "weekly-review", [], None),
    ("design-map", "Design map", "design-map", [], None),
    ("pattern?pattern=P-1004", "Pattern file", "pattern-file", ["Solve the current revision's risers"],
     ["diameter (in)", "riser weight (lb)", "volume (in³)", "Casting weight (lb)", "z (in), height", "°F"]),
    ("suggestions", "Suggestions", "suggestions", ["Solve the changed riser and its zone"],
     ["now: diameter (in)", "suggested: diameter (in)", "Diameter (in)", "z (in), height"]),
]

READ = """() => {
  const main = document.querySelector('[data-testid="stMain"]');
  const side = document.querySelector('[data-testid="stSidebar"]');
  const heads = Array.from(document.querySelectorAll('[data-testid="stDataFrame"] table thead th'))
                     .map(e => e.innerText);
  const charts = Array.from(document.querySelectorAll('[data-testid="stVegaLiteChart"] svg text'))
                      .map(e => e.textContent);
  return {page: main.innerText, sidebar: side ? side.innerText : '', heads: heads, charts: charts};
}"""


@pytest.fixture(scope="module")
def us_server(app_demo_file, tmp_path_factory):
    """`pourback dashboard` on a copy of the demo log set to US customary units."""
    def to_us(db):
        with Store(db) as s:
            settings.set_units(s, "us")

    with served_copy(app_demo_file, tmp_path_factory.mktemp("browser-units"), "demo-us.db", to_us) as s:
        yield s["url"]


def _switch_on(pg, label: str) -> None:
    charts = pg.locator('[data-testid="stVegaLiteChart"]').count()
    pg.get_by_text(label).click()
    settle(pg)
    pg.wait_for_function(f"() => document.querySelectorAll('[data-testid=\"stVegaLiteChart\"]').length > {charts}",
                         timeout=120_000)
    settle(pg, 800)


def _open_expanders(pg) -> None:
    closed = pg.locator('[data-testid="stExpander"] details:not([open]) summary')
    for _ in range(closed.count()):
        closed.first.click()
        pg.wait_for_timeout(150)


def _wait_for_texts(pg, wanted: list[str]) -> None:
    """Give the charts the solve added time to draw their axes (a new chart's element comes
    before its SVG text); the test checks the texts afterwards either way."""
    from playwright.sync_api import TimeoutError as PlaywrightTimeout

    with contextlib.suppress(PlaywrightTimeout):
        pg.wait_for_function(f"""() => {{
            const seen = ({READ})();
            const texts = [seen.page, seen.sidebar, ...seen.heads, ...seen.charts];
            return {json.dumps(wanted)}.every(w => texts.some(t => t.includes(w)));
        }}""", timeout=WAIT_MS)


@pytest.mark.parametrize("path,title,name,toggles,wanted", PAGES)
def test_every_page_in_us_shows_no_metric_unit(browser, us_server, path, title, name, toggles, wanted):
    pg = visit(browser, us_server, path, title, 1400, 120_000)
    for label in toggles:
        _switch_on(pg, label)
    _open_expanders(pg)
    _wait_for_texts(pg, wanted or [])
    seen = pg.evaluate(READ)
    assert pg.locator('[data-testid="stException"]').count() == 0
    texts = [seen["page"], seen["sidebar"], *seen["heads"], *seen["charts"]]
    left = [m.group(0) + " in: " + t[max(0, m.start() - 60):m.end() + 20]
            for t in texts for m in METRIC_UNIT.finditer(t.split(PUBLISHED_FORM)[0])]
    assert left == [], left
    # the switch is there and on US customary
    assert pg.get_by_role("radio", name="US customary").is_checked()
    for want in wanted or []:
        assert any(want in t for t in texts), want
    if name == "pattern-file":
        assert any(US_UNIT.search(h) for h in seen["heads"])
    full_screenshot(pg, f"units-{name}-1400", 1400)
    pg.close()
    narrow = visit(browser, us_server, path, title, 800, 120_000)
    for label in toggles:
        _switch_on(narrow, label)
    full_screenshot(narrow, f"units-{name}-800", 800)
    narrow.close()
