"""The methods engineer's day in a real browser: a what-if saved as the next riser
revision (the Suggestions page), and a new pattern typed into the Pattern design
form instead of a CSV. One flow per test; each page is also looked at, and
screenshot, at the other width (1400 and 800 px)."""

import datetime as dt

import pytest

from tests.support.browser import ARTIFACTS, choose, settle, visit
from tracker.log.ingest.next_revision import stored_risers
from tracker.log.store import Store

pytestmark = pytest.mark.browser


def _shot(pg, name: str, width: int) -> None:
    """The viewport at ``width`` px to test-artifacts/<name>-<width>.png; nothing runs off to the side."""
    pg.set_viewport_size({"width": width, "height": 1000})
    settle(pg, 300)
    ARTIFACTS.mkdir(exist_ok=True)
    pg.screenshot(path=str(ARTIFACTS / f"{name}-{width}.png"))
    main = '[data-testid="stMain"]'
    assert pg.evaluate(f"() => document.querySelector('{main}').scrollWidth <= window.innerWidth + 1")


def _type(pg, label: str, value: str, within=None) -> None:
    box = (within or pg).get_by_label(label, exact=True)
    box.fill(value)
    box.press("Enter")
    settle(pg, 200)


def test_a_what_if_saved_as_the_next_revision(browser, server):
    pg = visit(browser, server["url"], "suggestions", "Suggestions", 1400, timeout_ms=180_000)
    pg.get_by_role("heading", name="What if").wait_for()
    _type(pg, "Diameter (mm)", "130")
    box = pg.locator('[class*="st-key-saverev_w_"]').first
    box.get_by_role("button", name="Save as the next revision").wait_for()
    key = next(c for c in box.get_attribute("class").split() if c.startswith("st-key-saverev_w_"))
    pattern, riser = key.removeprefix("st-key-saverev_w_").removesuffix("_box").rsplit("_", 1)
    box.scroll_into_view_if_needed()
    _shot(pg, "what-if-save", 800)
    _shot(pg, "what-if-save", 1400)
    with Store(server["db"]) as s:
        revs = s.revisions_frame(pattern)
        before = revs.sort_values("effective_from").iloc[-1]
        old = {r["riser"]: r for r in stored_risers(s, pattern, before["revision"])}
    code = box.get_by_label("New revision code").input_value()
    assert code and code != before["revision"]
    _type(pg, "Your name (required; recorded in the audit)", "Browser Test", within=box)
    box.get_by_role("button", name="Save as the next revision").click()
    # the toast says so at once (the page then prices the suggestions again on the changed log)
    pg.get_by_text(f"Saved revision {code} of {pattern}").first.wait_for()
    with Store(server["db"]) as s:
        new = {r["riser"]: r for r in stored_risers(s, pattern, code)}
        day = s.revisions_frame(pattern).set_index("revision").at[code, "effective_from"]
    assert day == dt.date.today().isoformat()
    assert set(new) == set(old)
    assert new[riser]["diameter_mm"] == 130.0
    # every riser on another zone (which the what-if does not change) is carried over as it was
    assert all(new[r] == old[r] for r in old if old[r]["zone"] != old[riser]["zone"])


def test_a_new_pattern_typed_into_the_design_form(browser, server):
    pg = visit(browser, server["url"], "design", "Pattern design", 800)
    for label, value in (("Pattern code", "N-900"), ("Description", "browser bracket"),
                         ("Castings per mould", "2"), ("Casting weight (kg)", "4"), ("Metal cost (EUR per kg)", "1.5"),
                         ("Zone code", "hub"), ("Volume (cm³)", "-5"), ("Cooling area (cm²)", "400")):
        _type(pg, label, value)
    choose(pg, "Alloy", "steel")
    pg.get_by_role("button", name="Add zone").click()
    settle(pg)
    for label, value in (("Riser code", "R1"), ("Diameter (mm)", "90"), ("Height (mm)", "90")):
        _type(pg, label, value)
    pg.get_by_role("button", name="Add or change riser").click()
    settle(pg)
    _type(pg, "Your name (required; recorded with the change)", "Browser Test")
    pg.get_by_role("button", name="Save pattern design").click()
    # refused: the form, its row, the field and the reason; nothing stored
    pg.get_by_text("zones form, row 1, column volume_cm3: got '-5'").wait_for()
    with Store(server["db"]) as s:
        assert "N-900" not in s.patterns_info()
    _shot(pg, "design-form-refused", 800)
    for attempt in range(3):  # a busy machine can drop a click made while the page reruns: type it again
        for label, value in (("Zone code", "hub"), ("Volume (cm³)", "500"), ("Cooling area (cm²)", "400")):
            _type(pg, label, value)
        pg.get_by_role("button", name="Add zone").click()  # the same code: the row is replaced
        settle(pg)
        pg.get_by_role("button", name="Save pattern design").click()
        try:
            pg.get_by_text("Saved N-900: 1 pattern, 1 zone, 1 riser.").wait_for(timeout=40_000)
            break
        except Exception:  # any wait error: the page still shows the refusal
            if attempt == 2:
                raise
            settle(pg)
    _shot(pg, "design-form-saved", 1400)
    with Store(server["db"]) as s:
        assert s.patterns_info(["N-900"])["N-900"]["alloy"] == "steel"
        assert s.zones_frame("N-900")[["zone", "volume_cm3"]].values.tolist() == [["hub", 500.0]]
        assert [(r["riser"], r["zone"], r["diameter_mm"]) for r in stored_risers(s, "N-900", "1")] == [
            ("R1", "hub", 90.0)]
