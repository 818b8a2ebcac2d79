"""A defect against its radiograph category: the import and a record typed in refuse
a defect the category contradicts, naming both and the mapping; corrections too,
but a record logged before the check can still be withdrawn."""

import datetime as dt

import pytest

from tests.support import GOOD
from tracker.errors import BadFile, BadRecord
from tracker.log.ingest import XRAY_CATEGORIES, correct_inspection, import_dir, import_file, log_inspection, radiography
from tracker.log.store import Store

TODAY = dt.date(2026, 6, 1)

# ASTM E446/E186/E280 discontinuity categories (from memory, as /work/shared/DOMAIN.md
# "Radiography"): A gas porosity, B sand and slag inclusions, C shrinkage (CA-CD),
# D cracks, E hot tears, F inserts, G mottling; written here apart from the library.
AGREE = [("A", "gas"), ("B", "sand"), ("B", "slag"), ("CA", "shrinkage"), ("CB", "shrinkage"),
         ("CC", "shrinkage"), ("CD", "shrinkage"), ("D", "crack"), ("E", "hot_tear")]
CONTRADICT = [("A", "shrinkage"), ("CD", "gas"), ("B", "crack"), ("D", "slag"), ("E", "shrinkage"),
              ("CA", "misrun")]


@pytest.fixture
def store(tmp_path, logs):
    """The good log plus lot L4 (T-100, 10 molds x 2 = 20 castings)."""
    lots = tmp_path / "lots.csv"
    lots.write_text("lot,pattern,poured_on,heat,molds\nL4,T-100,2026-04-01,H4,10\n", encoding="utf-8")
    with Store(logs.new()) as s:
        import_dir(s, GOOD, today=TODAY)
        import_file(s, "lots", lots, today=TODAY)
        yield s


def _xray(category, defect, result="reject"):
    return {"lot": "L4", "inspected_on": "2026-04-04", "method": "xray", "quantity": 1, "result": result,
            "defect": defect, "zone": "body", "xray_category": category}


def test_the_mapping_covers_every_category_the_log_takes():
    assert set(radiography.CATEGORIES) == set(XRAY_CATEGORIES)
    for cat, defect in AGREE:
        assert radiography.conflict(defect, cat) is None, (cat, defect)
    for cat, defect in CONTRADICT:
        assert radiography.conflict(defect, cat) is not None, (cat, defect)


def test_an_import_refuses_each_contradiction_naming_both_and_the_mapping(store, tmp_path):
    f = tmp_path / "inspections.csv"
    f.write_text("lot,inspected_on,method,quantity,result,defect,zone,xray_category\n"
                 "L4,2026-04-04,xray,1,reject,shrinkage,body,A\n"
                 "L4,2026-04-04,xray,1,reject,gas,body,CD\n"
                 "L4,2026-04-04,xray,1,reject,shrinkage,body,CD\n", encoding="utf-8")
    before = store.snapshot()["inspections"]
    with pytest.raises(BadFile) as exc:
        import_file(store, "inspections", f, today=TODAY)
    assert [(p.row, p.column) for p in exc.value.problems] == [(2, "defect"), (3, "defect")]
    assert str(exc.value.problems[0]) == (
        "inspections.csv, row 2, column defect: got 'shrinkage'; defect shrinkage contradicts radiograph "
        "category A: by the ASTM E446/E186/E280 categories, A (gas porosity) is defect gas, and shrinkage is "
        "category CA, CB, CC or CD; change the defect or the xray_category")
    assert "CD (shrinkage) is defect shrinkage, and gas is category A" in str(exc.value.problems[1])
    assert store.snapshot()["inspections"] == before  # nothing written


@pytest.mark.parametrize("category,defect", AGREE[:3])
def test_a_form_takes_a_defect_its_category_shows(store, category, defect):
    assert log_inspection(store, _xray(category, defect), by="QE", today=TODAY) > 0


def test_a_form_refuses_a_contradiction_in_its_own_words(store):
    with pytest.raises(BadRecord) as exc:
        log_inspection(store, _xray("CD", "gas"), by="QE", today=TODAY)
    assert exc.value.field == "defect"
    assert str(exc.value) == ("Defect: got 'gas'; gas contradicts radiograph category CD: by the ASTM "
                              "E446/E186/E280 categories, CD (shrinkage) is defect shrinkage, and gas is "
                              "category A; change the defect or the xray_category")


def test_a_correction_is_checked_but_an_old_contradiction_can_be_withdrawn(store, monkeypatch):
    ok = log_inspection(store, _xray("CB", "shrinkage"), by="QE", today=TODAY)
    with pytest.raises(BadRecord, match="Defect: got 'gas'; gas contradicts radiograph category CB"):
        correct_inspection(store, ok, {"defect": "gas"}, by="QE", reason="typo", today=TODAY)
    # a record logged before the check existed (the check switched off to store it)
    monkeypatch.setattr(radiography, "CATEGORIES", {**radiography.CATEGORIES, "A": ("any", ("shrinkage",))})
    old = log_inspection(store, _xray("A", "shrinkage"), by="QE", today=TODAY)
    monkeypatch.undo()
    with pytest.raises(BadRecord, match="contradicts"):
        correct_inspection(store, old, {"quantity": 1}, by="QE", reason="recount", today=TODAY)
    gone = correct_inspection(store, old, {"void": True}, by="QE", reason="wrong category", today=TODAY)
    assert store.inspection(gone)["void"] == 1
