"""The Pattern design page headless (AppTest): offered only to a role that may change
designs; a pattern's next revision typed from its newest one, every riser not
touched carried over, audited under the signed-in user."""

from streamlit.testing.v1 import AppTest

from tests.support import APP
from tracker.log import accounts as auth
from tracker.log.ingest.next_revision import newest_revision, stored_risers
from tracker.log.store import Store

PASSWORD = "long enough password 1"


def _as(app_db, role, monkeypatch) -> AppTest:
    with Store(app_db) as s:
        auth.add_user(s, "pat", role, PASSWORD)
        session = auth.sign_in(s, "pat", PASSWORD)
    monkeypatch.setenv("POURBACK_SIGN_IN", "1")
    monkeypatch.setenv("POURBACK_DB", str(app_db))
    at = AppTest.from_file(str(APP), default_timeout=60)
    at.session_state["pourback_session"] = session
    at.run()
    at.switch_page("design_form.py").run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def test_a_revision_typed_from_the_newest_one_carries_the_other_risers_over(app_db, monkeypatch):
    with Store(app_db) as s:
        pattern = "P-3014"
        base = newest_revision(s, pattern)["revision"]
        old = {r["riser"]: r for r in stored_risers(s, pattern, base)}
    at = _as(app_db, "methods", monkeypatch)
    at.selectbox(key="design_pattern").set_value(pattern).run()
    code = at.text_input(key="design_revision").value
    assert code and code != base
    # a riser with a code the revision has: that riser changes, the others are carried over
    r2 = old["R2"]
    at.text_input(key="dr_riser").set_value("R2")
    at.selectbox(key="dr_zone").set_value(r2["zone"])
    at.selectbox(key="dr_placement").set_value(r2["placement"])
    at.selectbox(key="dr_top").set_value(r2["top"])
    at.text_input(key="dr_diameter_mm").set_value("100")
    at.text_input(key="dr_height_mm").set_value("100")
    at.button(key="design_add_riser").click().run()
    at.button(key="design_save").click().run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    with Store(app_db) as s:
        new = {r["riser"]: r for r in stored_risers(s, pattern, code)}
        entry = auth.audit_log(s)[-1]
    assert set(new) == set(old)
    assert (new["R2"]["diameter_mm"], new["R2"]["height_mm"]) == (100.0, 100.0)
    assert all(new[r] == old[r] for r in old if r != "R2")
    assert (entry["event"], entry["user"]) == ("design_form", "pat")


def test_a_role_that_may_not_change_designs_is_told_why(app_db, monkeypatch):
    at = _as(app_db, "inspector", monkeypatch)
    assert "design_save" not in [b.key for b in at.button]
    assert any("needs the role methods" in c.value for c in at.caption)


def test_an_untouched_riser_is_carried_over_exactly_in_us_units():
    from tracker.views.design_form import form_row, revision_rows

    stored = [{"riser": "R1", "zone": "hub", "placement": "side", "top": "blind", "diameter_mm": 100.0,
               "height_mm": 130.0, "sleeve": None, "neck_diameter_mm": 70.0},
              {"riser": "R2", "zone": "arm", "placement": "top", "top": "open", "diameter_mm": 80.0,
               "height_mm": 80.0, "sleeve": None, "neck_diameter_mm": None}]
    start = {"stored": stored, "risers": [form_row(r, "us") for r in stored]}
    assert start["risers"][0]["diameter_in"] == "3.93701"  # shown rounded: it must not be read back
    typed = [dict(start["risers"][0]), {**start["risers"][1], "diameter_in": "5", "height_in": "5"}]
    rows = revision_rows(typed, start, "us")
    assert rows[0] == stored[0]
    # 1 in = 25.4 mm exactly (NIST SP 811, appendix B)
    assert (rows[1]["diameter_mm"], rows[1]["height_mm"], rows[1]["zone"]) == (127.0, 127.0, "arm")
