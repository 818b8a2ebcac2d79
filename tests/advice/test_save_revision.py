"""A what-if or a suggestion saved as the next revision: the risers it changes, as
priced (the riser, and the risers on its zone that fail the rules, given the same
change), over every other riser carried over."""

import pytest

from tracker.advice.next_revision import riser_changes, save_suggestion, save_what_if
from tracker.errors import BadInput
from tracker.log.ingest.next_revision import next_code, stored_risers


def test_the_zone_s_failing_risers_take_the_same_change_and_a_side_riser_its_neck(good_store):
    # as pricing._changed_rows changes them: same size and sleeve; a side riser with a neck takes the new neck
    changes = riser_changes(good_store, "T-100", "A", "R2", diameter_mm=150.0, height_mm=150.0, sleeve=None,
                            neck_diameter_mm=None, changed_risers=["R2", "R1"])
    assert changes == {"R2": {"diameter_mm": 150.0, "height_mm": 150.0, "sleeve": None, "neck_diameter_mm": None},
                       "R1": {"diameter_mm": 150.0, "height_mm": 150.0, "sleeve": None, "neck_diameter_mm": None}}
    kept = riser_changes(good_store, "T-100", "A", "R2", diameter_mm=150.0, height_mm=150.0, sleeve=None,
                         neck_diameter_mm=None, changed_risers=["R2"])
    assert set(kept) == {"R2"}


def test_a_suggestion_saved_as_the_next_revision(good_store):
    suggestion = {"pattern": "T-100", "revision": "A", "riser": "R1", "action": "enlarge",
                  "suggested_diameter_mm": 160.0, "suggested_height_mm": 160.0, "suggested_sleeve": None,
                  "suggested_neck_diameter_mm": 100.0, "changed_risers": ["R1"]}
    saved = save_suggestion(good_store, suggestion, "B", "2026-04-01", by="m")
    assert (saved["changed"], saved["carried_over"]) == (["R1"], ["R2"])
    new = {r["riser"]: r for r in stored_risers(good_store, "T-100", "B")}
    old = {r["riser"]: r for r in stored_risers(good_store, "T-100", "A")}
    assert (new["R1"]["diameter_mm"], new["R1"]["neck_diameter_mm"], new["R1"]["zone"]) == (160.0, 100.0, "flange")
    assert new["R2"] == old["R2"]


def test_what_changes_nothing_is_not_saved(good_store):
    with pytest.raises(BadInput, match="the what-if changes no riser of T-100 revision A"):
        save_what_if(good_store, {"pattern": "T-100", "revision": "A", "changed": False}, "B", "2026-04-01")
    with pytest.raises(BadInput, match="the suggestion for T-100 changes no riser"):
        save_suggestion(good_store, {"pattern": "T-100", "action": "no_riser_change"}, "B", "2026-04-01")
    assert good_store.revisions_frame("T-100")["revision"].tolist() == ["A"]


@pytest.mark.parametrize(("code", "proposed"), [("1", "2"), ("09", "10"), ("A", "B"), ("R-07", "R-08"),
                                                ("Z", ""), ("", "")])
def test_the_next_code_proposed(code, proposed):
    assert next_code(code) == proposed
