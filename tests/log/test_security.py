"""Exports and escaping: CSV cells never run as formulas, SQL is parameterised,
user text is stored as text and rendered escaped."""

import csv
import datetime as dt
import io
import shutil

import pytest

from tests.support import GOOD
from tracker.cli import main
from tracker.csvsafe import safe_cell
from tracker.errors import NotFound
from tracker.log.ingest import import_dir, log_inspection
from tracker.log.store import Store

TODAY = dt.date(2026, 6, 1)

EVIL_PATTERN = "x'; DROP TABLE lots; --"
EVIL_LOT = "L'1; DELETE FROM lots"
FORMULA_PATTERN = "@SUM(1+1)"
SCRIPT = "<script>alert(1)</script>"
HYPERLINK = '=HYPERLINK("http://example.invalid","click")'


@pytest.mark.parametrize("value, expected", [
    ("=1+1", "'=1+1"),
    ("+cmd", "'+cmd"),
    ("-2+3", "'-2+3"),
    ("@SUM(A1)", "'@SUM(A1)"),
    ("\t=1", "'\t=1"),
    ("\r=1", "'\r=1"),
    ("=cmd|' /C calc'!A0", "'=cmd|' /C calc'!A0"),
    ("-", "'-"),
    ("-3", "-3"),      # a negative number stays a number
    ("+1.5", "+1.5"),
    ("-1e3", "-1e3"),
    ("plain text", "plain text"),
    ("a=b", "a=b"),
    ("", ""),
    (-3, -3),
    (2.5, 2.5),
    (None, None),
])
def test_safe_cell(value, expected):
    assert safe_cell(value) == expected


@pytest.fixture
def hostile(tmp_path):
    """A folder of import files whose codes and text are SQL, formulas and HTML."""
    d = tmp_path / "in"
    d.mkdir()
    for f in GOOD.glob("*.csv"):
        shutil.copy(f, d)
    rows = {
        "patterns": [["pattern", "description", "alloy", "casting_weight_kg", "castings_per_mold",
                      "metal_cost_per_kg"],
                     [EVIL_PATTERN, HYPERLINK, "steel", "3", "2", "1.5"],
                     [FORMULA_PATTERN, "<b>bold</b> & co", "steel", "3", "2", "1.5"]],
        "zones": [["pattern", "zone", "volume_cm3", "cooling_area_cm2"],
                  [EVIL_PATTERN, "z'--", "500", "400"]],
        "lots": [["lot", "pattern", "poured_on", "heat", "molds"],
                 [EVIL_LOT, EVIL_PATTERN, "2026-03-10", "=1+2", "5"],
                 ["L-AT", FORMULA_PATTERN, "2026-03-10", "-2+3", "5"]],
        "inspections": [["lot", "inspected_on", "method", "quantity", "result", "defect", "zone", "inspector",
                         "notes"],
                        [EVIL_LOT, "2026-03-11", "visual", "2", "reject", "shrinkage", "z'--", "=cmd", SCRIPT],
                        [EVIL_LOT, "2026-03-11", "visual", "8", "accept", "", "", "", ""],
                        ["L-AT", "2026-03-11", "visual", "1", "reject", "gas", "", "@me", "a & b"]],
    }
    for kind, table in rows.items():
        old = (d / f"{kind}.csv").read_text(encoding="utf-8").splitlines()
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        header = old[0].split(",")
        w.writerow(header)
        for line in old[1:]:
            w.writerow(line.split(","))
        for r in table[1:]:
            rec = dict(zip(table[0], r, strict=False))
            w.writerow([rec.get(c, "") for c in header])
        (d / f"{kind}.csv").write_text(buf.getvalue(), encoding="utf-8")
    return d


@pytest.fixture
def db(hostile, tmp_path):
    path = tmp_path / "log.db"
    with Store(path) as s:
        import_dir(s, hostile, today=TODAY)
    return path


def _tables(s):
    return sorted(r[0] for r in s.conn.execute("SELECT name FROM sqlite_master WHERE type = 'table'"))


def test_sql_in_codes_is_stored_and_read_back_as_text(db):
    with Store(db) as s:
        assert {"lots", "patterns", "inspections"} <= set(_tables(s))
        assert s.counts()["lots"] == 5
        assert s.pattern(EVIL_PATTERN)["description"] == HYPERLINK
        lot = s.lot(EVIL_LOT)
        assert (lot["pattern"], lot["heat"], lot["castings"]) == (EVIL_PATTERN, "=1+2", 10)
        cur = s.current_inspections(pattern=EVIL_PATTERN)
        assert cur["lot"].tolist() == [EVIL_LOT, EVIL_LOT]
        assert cur["zone"].tolist()[0] == "z'--"
        assert s.lots_frame(pattern=[EVIL_PATTERN, FORMULA_PATTERN])["lot"].tolist() == [EVIL_LOT, "L-AT"]
        assert s.inspections_history(lot=EVIL_LOT)["quantity"].sum() == 10
        by_lot = s.rejects_by_lot(pattern=EVIL_PATTERN)
        assert by_lot[["lot", "quantity"]].values.tolist() == [[EVIL_LOT, 2]]
        assert s.risers_frame(pattern=EVIL_PATTERN).empty
        with pytest.raises(NotFound):
            s.pattern("' OR '1'='1")
        with pytest.raises(NotFound):
            s.count("lots]; DROP TABLE lots; --")
        assert s.integrity_check() == "ok"
        assert s.counts()["lots"] == 5


def test_sql_through_the_cli_and_the_log_form(runner, db):
    with Store(db) as s:
        tables = _tables(s)
        rid = log_inspection(s, {"lot": EVIL_LOT, "inspected_on": "2026-03-12", "method": "xray",
                                 "quantity": 1, "result": "accept", "notes": "'); DROP TABLE inspections; --",
                                 "inspector": "QE-X'); --"}, by="x'); --", today=TODAY)
        rec = s.inspection(rid)
        assert rec["notes"] == "'); DROP TABLE inspections; --"
        assert rec["recorded_by"] == "x'); --"
    result = runner.invoke(main, ["history", "--lot", EVIL_LOT, "--db", str(db), "--json"])
    assert result.exit_code == 0, result.output
    assert EVIL_LOT in result.output
    result = runner.invoke(main, ["history", "--lot", "' OR 1=1 --", "--db", str(db)])
    assert result.exit_code == 0, result.output
    assert result.output.strip() == "(none)"
    with Store(db) as s:
        assert _tables(s) == tables
        assert s.count("inspections") == 6 + 3 + 1


def test_script_in_a_note_is_stored_as_text(db):
    with Store(db) as s:
        cur = s.current_inspections(lot=EVIL_LOT)
        assert SCRIPT in cur["notes"].tolist()
        rid = log_inspection(s, {"lot": "L-AT", "inspected_on": "2026-03-12", "method": "visual",
                                 "quantity": 1, "result": "accept", "notes": SCRIPT}, today=TODAY)
        assert s.inspection(rid)["notes"] == SCRIPT


def test_refused_rows_csv_is_formula_safe(runner, db, tmp_path):
    bad = tmp_path / "lots.csv"
    bad.write_text("lot,pattern,poured_on,heat,molds\n"
                   "L9,T-100,2026-04-01,H9,3\n"
                   "=HYPERLINK(\"x\"),T-100,2026-04-01,=cmd|' /C calc'!A0,-3\n"
                   "@L10,T-100,2026-04-01,+H,x\n", encoding="utf-8")
    result = runner.invoke(main, ["import", "lots", str(bad), "--skip-bad", "--db", str(db)])
    assert result.exit_code == 0, result.output
    text = (tmp_path / "lots.refused.csv").read_text(encoding="utf-8")
    rows = list(csv.DictReader(io.StringIO(text)))
    assert [r["row"] for r in rows] == ["3", "4"]
    assert rows[0]["lot"] == "'=HYPERLINK(\"x\")"
    assert rows[0]["heat"] == "'=cmd|' /C calc'!A0"
    assert rows[0]["molds"] == "-3"  # a number, left as it is
    assert rows[1]["lot"] == "'@L10"
    assert rows[1]["heat"] == "'+H"
    for r in rows:
        for v in r.values():
            assert not v.startswith(("=", "+", "@", "\t", "\r")), v
    assert rows[0]["reason"] == ("lots.csv, row 3, column molds: got '-3'; molds must be a whole number "
                                 "above 0 and at most 100,000")


def test_review_csv_is_formula_safe(runner, db):
    result = runner.invoke(main, ["review", "--format", "csv", "--db", str(db)])
    assert result.exit_code == 0, result.output
    rows = {r["pattern"]: r for r in csv.DictReader(io.StringIO(result.output))}
    assert rows[EVIL_PATTERN]["description"] == "'" + HYPERLINK
    assert "'" + FORMULA_PATTERN in rows
    assert rows["'" + FORMULA_PATTERN]["description"] == "<b>bold</b> & co"
    assert rows[EVIL_PATTERN]["rejected_castings"] == "2"
    for r in rows.values():
        for v in r.values():
            assert not v.startswith(("=", "+", "@", "\t", "\r")), v
            assert not (v.startswith("-") and not v.lstrip("-").replace(".", "").isdigit()), v


def test_review_html_and_md_escape_user_text(runner, db, tmp_path):
    out = tmp_path / "review.html"
    result = runner.invoke(main, ["review", "--format", "html", "--out", str(out), "--db", str(db)])
    assert result.exit_code == 0, result.output
    html = out.read_text(encoding="utf-8")
    assert "<script" not in html.lower()
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "<b>bold" not in html
    assert "&lt;b&gt;bold&lt;/b&gt; &amp; co" in html
    assert "x&#x27;; DROP TABLE lots; --" in html
    assert EVIL_PATTERN not in html  # never unescaped, in text or attributes
    assert "=HYPERLINK(&quot;http://example.invalid&quot;,&quot;click&quot;)" in html

    result = runner.invoke(main, ["review", "--format", "md", "--db", str(db)])
    assert result.exit_code == 0, result.output
    assert "<b>bold" not in result.output
    assert "x&#x27;; DROP TABLE lots; --" in result.output
