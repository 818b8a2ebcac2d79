"""The next riser revision made from a few changed risers (a what-if, a suggestion):
the unchanged risers carried over, the refusals, the audit, the role; and the
rows of a form checked by the import's own validators. Both backends."""

import pytest

from tracker.errors import BadFile, BadInput, NotFound, PermissionDenied
from tracker.log import accounts as auth
from tracker.log.ingest.form_rows import write_form_rows
from tracker.log.ingest.next_revision import RISER_FIELDS, carry_over, save_next_revision, stored_risers
from tracker.log.store import Store

PASSWORD = "correct horse battery"


def _state(store) -> tuple:
    """Everything a refused save must leave as it was."""
    frames = (store.revisions_frame(), store.risers_frame(), store.table("zones"), store.table("patterns"))
    return (len(auth.audit_log(store)), *(f.astype(object).where(f.notna(), None).to_dict("records") for f in frames))


def test_carry_over_keeps_every_unchanged_riser_as_it_is():
    current = [{"riser": "R1", "zone": "flange", "placement": "side", "top": "blind", "diameter_mm": 140.0,
                "height_mm": 140.0, "sleeve": None, "neck_diameter_mm": 90.0},
               {"riser": "R2", "zone": "body", "placement": "top", "top": "open", "diameter_mm": 100.0,
                "height_mm": 100.0, "sleeve": "INS-100", "neck_diameter_mm": None},
               {"riser": "R3", "zone": "body", "placement": "top", "top": "open", "diameter_mm": 80.0,
                "height_mm": 80.0, "sleeve": None, "neck_diameter_mm": None}]
    rows = carry_over(current, {"R2": {"diameter_mm": 120.0, "height_mm": 120.0, "sleeve": None}}, removed=["R3"])
    assert rows[0] == current[0]
    assert rows[1] == {**current[1], "diameter_mm": 120.0, "height_mm": 120.0, "sleeve": None}
    assert [r["riser"] for r in rows] == ["R1", "R2"]
    assert current[1]["sleeve"] == "INS-100"  # the input is not changed


def test_the_next_revision_carries_the_unchanged_risers_over_and_is_audited(good_store):
    before = stored_risers(good_store, "T-100", "A")
    saved = save_next_revision(good_store, "T-100", "B", "2026-04-01",
                               {"R2": {"diameter_mm": 120.0, "height_mm": 120.0, "sleeve": None}},
                               base="A", by="methods-eng", origin="what-if")
    assert saved["changed"] == ["R2"] and saved["carried_over"] == ["R1"]
    after = {r["riser"]: r for r in stored_risers(good_store, "T-100", "B")}
    old = {r["riser"]: r for r in before}
    assert after["R1"] == old["R1"]  # zone, placement, size and neck as they were
    assert after["R2"] == {**old["R2"], "diameter_mm": 120.0, "height_mm": 120.0, "sleeve": None}
    assert set(after) == set(old)
    revs = good_store.revisions_frame("T-100")
    assert revs[revs["revision"] == "B"]["effective_from"].tolist() == ["2026-04-01"]
    entry = auth.audit_log(good_store)[-1]
    assert (entry["event"], entry["user"], entry["subject"], entry["via"]) == (
        "revision_saved", "methods-eng", "T-100 revision B", "cli")
    assert "R2 100 x 100 mm INS-100 -> 120 x 120 mm bare" in entry["detail"]
    assert "carried over R1" in entry["detail"]
    # the other pattern's revision is untouched
    assert good_store.revisions_frame("T-200")["revision"].tolist() == ["1"]


BIG = {"R2": {"diameter_mm": 120.0, "height_mm": 120.0, "sleeve": None}}


# (revision, effective_from, changes, base revision, error, message)
REFUSALS = [
    ("A", "2026-04-01", BIG, "A", BadInput,
     "revision: got 'A'; T-100 has a revision A already (in effect from 2026-01-05); give the new revision a "
     "new code"),
    ("B", "2026-01-05", BIG, "A", BadInput,
     "effective_from: got '2026-01-05'; the new revision must take effect after revision A of T-100, in "
     "effect from 2026-01-05"),
    ("B", "2026-4-1", BIG, "A", BadInput, "effective_from: got '2026-4-1'; must be a date written YYYY-MM-DD"),
    ("", "2026-04-01", BIG, "A", BadInput, "revision: got ''; give the new revision a code"),
    ("B", "2026-04-01", BIG, "Z", BadInput,
     "revision: got 'B'; the change was made on revision Z of T-100, but its newest revision is A; make the "
     "change on A again"),
    ("B", "2026-04-01", {"R2": {"diameter_mm": 100.0}}, "A", BadInput,
     "revision: got 'B'; it would repeat revision A of T-100 riser for riser; change a riser first"),
    # the risers import's own rules: a sleeve fixes the diameter; a neck narrower than the riser
    ("B", "2026-04-01", {"R2": {"diameter_mm": 120.0, "height_mm": 120.0}}, "A", BadFile,
     "risers what-if, row 2, column diameter_mm: got 120; sleeve INS-100 has an inner diameter of 100 mm; "
     "the riser diameter is the sleeve's"),
    ("B", "2026-04-01", {"R1": {"neck_diameter_mm": 150.0}}, "A", BadFile,
     "risers what-if, row 1, column neck_diameter_mm: got '150'; the neck must be narrower than the riser"),
    ("B", "2026-04-01", {"R9": {"zone": "nowhere", "placement": "top", "top": "open", "diameter_mm": 50.0,
                                "height_mm": 50.0}}, "A", BadFile,
     "risers what-if, row 3, column zone: got 'nowhere'; pattern T-100 has no such zone"),
]


def test_a_refused_revision_names_the_field_and_writes_nothing(good_store):
    before = _state(good_store)
    for revision, day, changes, base, error, message in REFUSALS:  # one log: each refusal leaves it as it was
        with pytest.raises(error) as caught:
            save_next_revision(good_store, "T-100", revision, day, changes, base=base, by="m", origin="what-if")
        assert str(caught.value).splitlines()[-1].startswith(message), (message, str(caught.value))
        assert _state(good_store) == before


def test_a_pattern_without_a_revision_is_refused(good_store):
    with pytest.raises(NotFound, match="import the pattern's first revision"):
        save_next_revision(good_store, "NO-SUCH", "B", "2026-04-01", BIG)


def test_only_a_role_that_may_change_designs_saves_a_revision(good_store):
    for name, role in (("bench", "inspector"), ("methods1", "methods")):
        auth.add_user(good_store, name, role, PASSWORD, by="setup")
    inspector = auth.sign_in(good_store, "bench", PASSWORD)
    before = _state(good_store)
    with Store(good_store.path, actor=inspector) as as_inspector, \
            pytest.raises(PermissionDenied, match="import or change patterns, zones, sleeves and riser revisions"):
        save_next_revision(as_inspector, "T-100", "B", "2026-04-01", BIG, base="A", by="someone else")
    assert _state(good_store) == before
    with Store(good_store.path, actor=auth.sign_in(good_store, "methods1", PASSWORD)) as as_methods:
        save_next_revision(as_methods, "T-100", "B", "2026-04-01", BIG, base="A", by="someone else")
    entry = auth.audit_log(good_store)[-1]
    assert (entry["event"], entry["user"], entry["via"]) == ("revision_saved", "methods1", "dashboard")


def test_a_form_writes_a_new_pattern_its_zones_and_risers_through_the_import_checks(good_store):
    pattern = {"pattern": "N-1", "description": "new bracket", "alloy": "steel", "casting_weight_kg": 4.0,
               "castings_per_mold": 2, "metal_cost_per_kg": 1.5}
    zones = [{"pattern": "N-1", "zone": "hub", "volume_cm3": 500.0, "cooling_area_cm2": 400.0},
             {"pattern": "N-1", "zone": "arm", "volume_cm3": 200, "cooling_area_cm2": 300,
              "thickness_mm": 20}]
    risers = [{"pattern": "N-1", "revision": "1", "effective_from": "2026-02-01", "riser": "R1", "zone": "hub",
               "placement": "top", "top": "open", "diameter_mm": 90.0, "height_mm": 90.0}]
    results = write_form_rows(good_store, [("patterns", [pattern]), ("zones", zones), ("risers", risers)], by="m")
    assert [r.added for r in results] == [1, 2, 1]
    assert good_store.zones_frame("N-1")["zone"].tolist() == ["arm", "hub"]
    assert [r["riser"] for r in stored_risers(good_store, "N-1", "1")] == ["R1"]
    assert set(stored_risers(good_store, "N-1", "1")[0]) == set(RISER_FIELDS)


def test_a_refused_form_names_row_field_and_reason_and_writes_nothing(good_store):
    before = _state(good_store)
    pattern = {"pattern": "N-2", "description": "x", "alloy": "steel", "casting_weight_kg": 4.0,
               "castings_per_mold": 2, "metal_cost_per_kg": 1.5}
    zones = [{"pattern": "N-2", "zone": "hub", "volume_cm3": 500.0, "cooling_area_cm2": 400.0},
             {"pattern": "N-2", "zone": "arm", "volume_cm3": "-3", "cooling_area_cm2": 300}]
    with pytest.raises(BadFile) as caught:
        write_form_rows(good_store, [("patterns", [pattern]), ("zones", zones)], by="m")
    problem = caught.value.problems[0]
    assert (problem.file, problem.row, problem.column) == ("zones form", 2, "volume_cm3")
    assert problem.reason.startswith("got '-3'; ")
    assert _state(good_store) == before


def test_a_riser_taken_out_in_the_form_is_named_as_removed_and_the_rest_carried_over(good_store):
    # The risers import refuses a revision that leaves a riser out unless removed_risers names it
    # (docs/logging-and-importing.md); the design form's rows say so for a riser taken out.
    from tracker.log.ingest.form_rows import save_design
    from tracker.views.design_form import design_start, revision_rows

    start = design_start(good_store, "T-100")
    kept, gone = start["risers"][:-1], start["risers"][-1]["riser"]
    rows = revision_rows(kept, start)
    assert rows[0]["removed_risers"] == gone
    save_design(good_store, risers=[{"pattern": "T-100", "revision": "B", "effective_from": "2026-04-01", **r}
                                    for r in rows], by="m")
    after = {r["riser"]: r for r in stored_risers(good_store, "T-100", "B")}
    before = {r["riser"]: r for r in stored_risers(good_store, "T-100", "A")}
    assert set(after) == set(before) - {gone}
    assert all(after[k] == before[k] for k in after)
