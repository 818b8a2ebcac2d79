"""The bench forms' data shaping: what a correction changes, and a lot typed in US units."""

import datetime as dt

import pytest

from tracker.views import log_results as views

OLD = {"inspected_on": "2026-04-04", "quantity": 14, "result": "accept", "defect": None, "zone": None,
       "xray_category": None, "severity": float("nan"), "notes": None, "method": "visual"}


def test_only_the_fields_that_differ_are_changes():
    same = {"inspected_on": dt.date(2026, 4, 4), "quantity": 14, "result": "accept", "defect": None,
            "zone": None, "notes": ""}
    assert views.correction_changes(OLD, same) == {}
    assert views.correction_changes(OLD, {**same, "quantity": 13}) == {"quantity": 13}
    # a severity stored as 4.0 (a column with blanks) is the form's 4
    assert views.correction_changes({**OLD, "severity": 4.0}, {"severity": 4}) == {}
    # a field cleared in the form is a change to None
    assert views.correction_changes({**OLD, "defect": "sand"}, {"defect": None, "result": "accept"}) == {
        "defect": None}


@pytest.mark.parametrize("system,column", [("metric", "pour_temp_c"), ("us", "pour_temp_f")])
def test_a_lot_record_names_the_temperature_in_the_forms_units(system, column):
    rec = views.lot_form_record({"lot": " L9 ", "pattern": "T-100", "poured_on": dt.date(2026, 5, 2),
                                 "heat": "", "molds": 4, "pour_temp_c": 2912.0}, system)
    assert rec == {"lot": "L9", "pattern": "T-100", "poured_on": "2026-05-02", "heat": None, "molds": 4,
                   column: 2912.0}
