"""A lot typed in (the dashboard's lot form) is checked by the lots import's own
validator: each bad lot is refused on the same fields for the same reasons as the
same row in a lots file, named in the form's words; nothing is half-written."""

import datetime as dt

import pytest
from argon2 import PasswordHasher

from tests.support import GOOD
from tracker.errors import BadFile, BadRecord, PermissionDenied
from tracker.log import accounts as auth
from tracker.log.ingest import import_dir, import_file, log_lot
from tracker.log.store import Store

TODAY = dt.date(2026, 6, 1)
COLS = ["lot", "pattern", "poured_on", "heat", "molds", "pour_temp_c"]

BAD = [  # one lot each, as typed
    {"lot": "L9", "pattern": "NOPE", "poured_on": "2026-05-02", "heat": "H9", "molds": "4"},
    {"lot": "L9", "pattern": "T-100", "poured_on": "2027-05-02", "heat": "H9", "molds": "4"},
    {"lot": "L9", "pattern": "T-100", "poured_on": "2026-05-02", "heat": "", "molds": "-1"},
    {"lot": "", "pattern": "T-100", "poured_on": "2026-05-02", "heat": "H9", "molds": "2.5",
     "pour_temp_c": "3000"},
]


@pytest.fixture
def store(logs):
    with Store(logs.new()) as s:
        import_dir(s, GOOD, today=TODAY)
        yield s


def _as_file(tmp_path, lot: dict):
    f = tmp_path / "lots.csv"
    f.write_text(",".join(COLS) + "\n" + ",".join(str(lot.get(c, "")) for c in COLS) + "\n", encoding="utf-8")
    return f


@pytest.mark.parametrize("lot", BAD)
def test_a_bad_lot_is_refused_as_the_same_row_in_a_file(store, tmp_path, lot):
    before = store.snapshot()["lots"]
    with pytest.raises(BadFile) as file_exc:
        import_file(store, "lots", _as_file(tmp_path, lot), today=TODAY)
    with pytest.raises(BadRecord) as form_exc:
        log_lot(store, lot, by="QE", today=TODAY)
    file_fields = [p.column for p in file_exc.value.problems]
    assert [f for f, _ in form_exc.value.problems] == file_fields
    for (_, text), p in zip(form_exc.value.problems, file_exc.value.problems, strict=True):
        assert text.split(": ", 1)[0] in {"Lot", "Pattern", "Poured on", "Heat", "Molds", "Pour temperature (°C)"}
        # the rule is the file's, worded for a form
        assert p.reason.split("; ")[-1].removeprefix(p.column + " ") in text
    assert store.snapshot()["lots"] == before


def test_a_good_lot_is_stored_and_a_repeat_refused(store):
    res = log_lot(store, {"lot": "L9", "pattern": "T-100", "poured_on": "2026-05-02", "heat": "H9",
                          "molds": 4, "pour_temp_c": 1590}, by="QE", today=TODAY)
    assert res.rows == 1 and res.warnings == []
    # castings poured = molds x castings_per_mold (T-100 casts 2 a mold in tests/data/good/patterns.csv)
    assert store.lots_info(["L9"])["L9"] == {"pattern": "T-100", "poured_on": "2026-05-02", "castings": 8}
    with pytest.raises(BadRecord) as exc:
        log_lot(store, {"lot": "L9", "pattern": "T-100", "poured_on": "2026-05-02", "heat": "H9", "molds": 4,
                        "pour_temp_c": 1590}, by="QE", today=TODAY)
    assert str(exc.value) == "Lot: this lot is in the log already; pick it in the inspection form"
    with pytest.raises(BadRecord, match="Lot: got 'L1'; L1 is stored already with other"):
        log_lot(store, {"lot": "L1", "pattern": "T-100", "poured_on": "2026-05-02", "heat": "H9", "molds": 4},
                by="QE", today=TODAY)


def test_a_lot_in_us_units_is_stored_in_metric_and_warned_when_it_looks_like_another(store):
    res = log_lot(store, {"lot": "l1", "pattern": "T-100", "poured_on": "2026-05-02", "heat": "H9", "molds": 1,
                          "pour_temp_f": 2912}, by="QE", today=TODAY)
    # 2912 °F = (2912 - 32) x 5/9 = 1600 °C (the definition of the Fahrenheit scale)
    stored = store.lots_frame().set_index("lot").loc["l1", "pour_temp_c"]
    assert stored == pytest.approx(1600.0)
    assert "differs from the lot 'L1' only by case" in res.warnings[0]


def test_a_reviewer_may_not_add_a_lot_and_an_inspector_is_audited(store, monkeypatch):
    # a cheap Argon2id: hashing itself is tested in tests/log/test_auth.py
    monkeypatch.setattr(auth, "HASHER", PasswordHasher(time_cost=1, memory_cost=8, parallelism=1))
    monkeypatch.setattr(auth, "_DUMMY_HASH", [])
    for name, role in (("rev", "reviewer"), ("ins", "inspector")):
        auth.add_user(store, name, role, "pour floor tablet 9", by="t")
    store.actor = auth.sign_in(store, "rev", "pour floor tablet 9")
    with pytest.raises(PermissionDenied):
        log_lot(store, {"lot": "L9", "pattern": "T-100", "poured_on": "2026-05-02", "heat": "H9", "molds": 1},
                today=TODAY)
    store.actor = auth.sign_in(store, "ins", "pour floor tablet 9")
    log_lot(store, {"lot": "L9", "pattern": "T-100", "poured_on": "2026-05-02", "heat": "H9", "molds": 1},
            by="forged", today=TODAY)
    last = auth.audit_log(store)[-1]
    assert (last["event"], last["user"], last["detail"]) == ("lot_added", "ins", "lot L9 of pattern T-100 (form)")
