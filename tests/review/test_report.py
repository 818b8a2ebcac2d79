"""Tests of tracker.review.report: every format renders, the HTML stands alone and
escapes user text, the CSV cannot run formulas in a spreadsheet."""

import csv
import datetime as dt
import html
import io
import json
import pathlib
import re

import pytest

from tests.support import REPO
from tracker.cautions import SAFETY_CAUTION, SAFETY_CAUTION_SHORT
from tracker.csvsafe import safe_cell
from tracker.errors import BadInput
from tracker.log.ingest import import_dir
from tracker.log.store import Store
from tracker.review import stats
from tracker.review.report import FORMATS, render
from tracker.review.weekly import weekly_review

ROOT = REPO
TODAY = dt.date(2027, 1, 31)
SCRIPT = "<script>alert(1)</script>"
NOTE = "<script>alert('note')</script> & <img src=x onerror=alert(2)>"
HOSTILE = {  # pattern code: description
    SCRIPT: "<b>bold</b> & co",
    "=SUM(A1:A9)": "+cmd|' /C calc'!A0",
    "@risk": "-2+3",
}


def _write(folder: pathlib.Path, name: str, rows: list[dict]) -> None:
    cols = list(dict.fromkeys(k for r in rows for k in r))
    with open(folder / f"{name}.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=cols)
        w.writeheader()
        w.writerows(rows)


@pytest.fixture(scope="module")
def hostile_review(tmp_path_factory):
    """Patterns and notes full of markup and formulas; each pattern spikes in the review week."""
    folder = tmp_path_factory.mktemp("hostile")
    end = stats.week_start("2026-W20")
    patterns, lots, insp = [], [], []
    for j, (code, desc) in enumerate(HOSTILE.items()):
        patterns.append({"pattern": code, "description": desc, "alloy": "steel", "casting_weight_kg": 10,
                         "castings_per_mold": 10, "metal_cost_per_kg": 2, "processing_cost_per_casting": 5})
        for i in range(13):
            day = (end - dt.timedelta(weeks=12 - i) + dt.timedelta(days=1)).isoformat()
            k = 40 if i == 12 else 1 + (i % 2)
            lot = f"H{j}-{i:02d}"
            lots.append({"lot": lot, "pattern": code, "poured_on": day, "heat": "H1", "molds": 10})
            insp += [{"lot": lot, "inspected_on": day, "method": "visual", "quantity": 100 - k,
                      "result": "accept", "notes": ""},
                     {"lot": lot, "inspected_on": day, "method": "visual", "quantity": k, "result": "reject",
                      "defect": "shrinkage", "notes": NOTE if i == 12 else "=HYPERLINK(\"http://x\")"}]
    _write(folder, "patterns", patterns)
    _write(folder, "lots", lots)
    _write(folder, "inspections", insp)
    with Store(":memory:") as s:
        import_dir(s, folder, today=TODAY)
        return weekly_review(s, "2026-W20", weeks=13)


@pytest.fixture(scope="module")
def demo_review(tmp_path_factory):
    try:
        from tracker import demo
    except ImportError:  # pragma: no cover
        pytest.skip("tracker.demo is not available")
    folder = ROOT / "sample_data"
    if not (folder / "inspections.csv").is_file():  # pragma: no cover
        folder = tmp_path_factory.mktemp("demo")
        demo.generate(folder)
    with Store(":memory:") as s:
        import_dir(s, folder, today=TODAY)
        return weekly_review(s, "2026-W47")


@pytest.fixture(scope="module")
def empty_review():
    with Store(":memory:") as s:
        return weekly_review(s, "2026-W47")


@pytest.fixture(params=["hostile_review", "demo_review", "empty_review"])
def any_review(request):
    return request.getfixturevalue(request.param)


# --- every format ------------------------------------------------------------------------

@pytest.mark.parametrize("fmt", FORMATS)
def test_each_format_renders(any_review, fmt):
    text = render(any_review, fmt)
    assert isinstance(text, str) and text.endswith("\n")
    if fmt == "json":
        assert json.loads(text) == any_review
    elif fmt == "csv":
        rows = list(csv.reader(io.StringIO(text)))
        assert rows[0][:3] == ["pattern", "description", "alloy"]
        assert len(rows) == 1 + len(any_review["patterns"])
        assert "reject_rate_pct" in rows[0] and "poured_castings" in rows[0] and "scrap_weight_kg" in rows[0]
    else:
        assert any_review["week"] in text


def test_unknown_format_is_refused(empty_review):
    with pytest.raises(BadInput) as exc:
        render(empty_review, "pdf")
    assert str(exc.value) == "format: got 'pdf'; use one of table, md, html, csv, json"


def test_text_table_states_units(demo_review):
    text = render(demo_review, "table")
    for head in ("Poured (castings)", "Rejected (castings)", "Reject rate (%)", "95 % interval (%)",
                 "Scrap cost (EUR)", "Shrinkage rejects (castings)"):
        assert head in text
    # the terminal gets the caution once, in its two-line form naming where the full text is
    assert text.count("CAUTION") == 1 and SAFETY_CAUTION_SHORT in text
    assert len(SAFETY_CAUTION_SHORT.splitlines()) == 2 and "README.md" in SAFETY_CAUTION_SHORT


# --- HTML ---------------------------------------------------------------------------------

EXTERNAL = re.compile(r"""(src|href)\s*=\s*["']?\s*(https?:)?//""", re.I)


def test_html_is_self_contained(demo_review, hostile_review):
    for review in (demo_review, hostile_review):
        page = render(review, "html")
        assert page.startswith("<!DOCTYPE html>")
        assert not EXTERNAL.search(page)
        assert "http://" not in page and "https://" not in page
        for banned in ("<script", "<link", "@import", "url(", "<iframe", "<object"):
            assert banned not in page.lower()
        # the charts come from the review pack (tests/review/test_pack.py); the review alone has none
        assert "<svg" not in page
        assert "@media print" in page


def test_html_escapes_user_text(hostile_review):
    page = render(hostile_review, "html")
    assert html.escape(SCRIPT) in page
    assert html.escape("<b>bold</b> & co") in page
    assert "<b>bold</b>" not in page
    assert html.escape(NOTE) in page  # the inspectors' notes of the review week
    assert "<img" not in page
    assert sorted(hostile_review["problems"]) == sorted(HOSTILE)


def test_markdown_escapes_user_text(hostile_review):
    text = render(hostile_review, "md")
    assert "<script" not in text and html.escape(SCRIPT) in text
    assert "\\|" in text  # the pipe in a description cannot break the table


def test_html_pchart_marks_signalled_weeks(hostile_review):
    from tracker.views.pack import draw_charts

    drawn = draw_charts(hostile_review)
    flagged = [p for p in hostile_review["patterns"] if p["problem"]]
    assert sorted(k for k in drawn if k.startswith("pchart:")) == sorted("pchart:" + p["pattern"] for p in flagged)
    for p in flagged:
        svg = drawn["pchart:" + p["pattern"]]
        signalled = sum(bool(pt["signal"]) and pt["inspected"] > 0 for pt in p["pchart"])
        assert signalled > 0
        # Vega labels each point mark with its tooltip fields, the week's status among them
        assert len(re.findall(r'aria-label="[^"]*week: signal[^"]*"[^>]*aria-roledescription="point"', svg)) \
            == signalled


def test_html_shows_caution_with_revisions(demo_review, empty_review):
    assert demo_review["revisions"]
    page = render(demo_review, "html")
    assert html.escape(SAFETY_CAUTION) in page
    assert "improved (fewer shrinkage rejects)" in page
    assert html.escape(SAFETY_CAUTION) in render(demo_review, "md").replace("**Caution.** ", "")
    assert SAFETY_CAUTION not in render(empty_review, "html")  # no revision, no riser figures


# --- CSV ----------------------------------------------------------------------------------

def test_csv_neutralises_formula_cells(hostile_review):
    rows = list(csv.reader(io.StringIO(render(hostile_review, "csv"))))
    cells = [c for r in rows[1:] for c in r]
    assert "'=SUM(A1:A9)" in cells and "'+cmd|' /C calc'!A0" in cells
    assert "'@risk" in cells and "'-2+3" in cells
    assert SCRIPT in cells  # plain text is kept as it is
    for c in cells:
        if c.startswith(("=", "+", "-", "@", "\t", "\r")):
            float(c)  # only numbers may start so


def test_safe_cell_keeps_numbers():
    assert safe_cell("-3") == "-3" and safe_cell(-3) == -3 and safe_cell("=1+1") == "'=1+1"
    assert safe_cell("+41 22") == "'+41 22" and safe_cell("plain") == "plain"


def test_csv_rates_are_percent(demo_review):
    rows = list(csv.DictReader(io.StringIO(render(demo_review, "csv"))))
    first = demo_review["patterns"][0]
    assert rows[0]["pattern"] == first["pattern"]
    assert float(rows[0]["reject_rate_pct"]) == pytest.approx(100 * first["reject_rate"], abs=1e-4)
    assert int(rows[0]["rejected_castings"]) == first["rejected"]
    assert rows[0]["problem"] in ("true", "false")
