"""Tests of ``pourback review``."""

import datetime as dt
import json
import pathlib

import pytest

from tests.support import REPO
from tracker.cli import main
from tracker.log.ingest import import_dir
from tracker.log.store import Store

ROOT = REPO
GOOD = ROOT / "tests" / "data" / "good"
TODAY = dt.date(2027, 1, 31)

TOP_KEYS = {"week", "window", "patterns", "defects", "revisions", "trend", "changes", "pareto", "totals",
            "caution"}
PATTERN_KEYS = {"pattern", "poured", "rejected", "reject_rate", "wilson_low", "wilson_high", "scrap_cost",
                "shrinkage_rejected", "signal", "signal_rules", "problem"}
REVISION_KEYS = {"pattern", "revision", "rate_before", "rate_after", "p_value", "verdict"}


def _db(folder: pathlib.Path, source: pathlib.Path) -> str:
    path = folder / "log.db"
    with Store(path) as s:
        import_dir(s, source, today=TODAY)
    return str(path)


@pytest.fixture(scope="module")
def demo_db(tmp_path_factory):
    try:
        from tracker import demo
    except ImportError:  # pragma: no cover
        pytest.skip("tracker.demo is not available")
    source = ROOT / "sample_data"
    if not (source / "inspections.csv").is_file():  # pragma: no cover
        source = tmp_path_factory.mktemp("demo_csv")
        demo.generate(source)
    return _db(tmp_path_factory.mktemp("demo_db"), source)


@pytest.fixture(scope="module")
def good_db(tmp_path_factory):
    return _db(tmp_path_factory.mktemp("good_db"), GOOD)


def test_review_json_keys(runner, demo_db):
    result = runner.invoke(main, ["review", "--db", demo_db, "--week", "2026-W47", "--json"])
    assert result.exit_code == 0, result.output
    d = json.loads(result.output)
    assert set(d) >= TOP_KEYS
    assert d["week"] == "2026-W47"
    assert d["window"]["first_week"] == "2026-W35" and d["window"]["weeks"] == 13
    assert d["patterns"] and all(set(p) >= PATTERN_KEYS for p in d["patterns"])
    assert d["revisions"] and all(set(r) >= REVISION_KEYS for r in d["revisions"])
    assert {"defect", "rejected", "scrap_cost"} <= set(d["defects"][0])


def test_format_json_equals_json_flag(runner, good_db):
    a = runner.invoke(main, ["review", "--db", good_db, "--week", "2026-W11", "--format", "json"])
    b = runner.invoke(main, ["review", "--db", good_db, "--week", "2026-W11", "--json"])
    assert a.exit_code == 0, a.output
    assert b.exit_code == 0, b.output
    assert json.loads(a.output) == json.loads(b.output)


def test_default_week_is_latest_pour(runner, good_db):
    result = runner.invoke(main, ["review", "--db", good_db, "--weeks", "2", "--target", "0.05", "--json"])
    assert result.exit_code == 0, result.output
    d = json.loads(result.output)
    assert d["week"] == "2026-W11" and d["target"] == 0.05 and d["window"]["first_week"] == "2026-W10"


def test_out_writes_a_file(runner, demo_db, tmp_path):
    out = tmp_path / "review.html"
    result = runner.invoke(main, ["review", "--db", demo_db, "--week", "2026-W47", "--format", "html",
                                  "--out", str(out)])
    assert result.exit_code == 0, result.output
    assert result.output == f"Wrote the html review of 2026-W47 to {out}\n"
    page = out.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and "<svg" in page
    for head in ("Against the target", "Riser suggestions", "Riser revisions", "Open actions"):
        assert f"<h2>{head}" in page  # the review pack (tests/review/test_pack.py)


def test_html_without_out_goes_to_stdout(runner, good_db):
    result = runner.invoke(main, ["review", "--db", good_db, "--week", "2026-W11", "--format", "html"])
    assert result.exit_code == 0, result.output
    assert result.output.startswith("<!DOCTYPE html>") and result.output.rstrip().endswith("</html>")


@pytest.mark.parametrize("fmt", ["table", "md", "csv"])
def test_text_formats(runner, good_db, fmt):
    result = runner.invoke(main, ["review", "--db", good_db, "--week", "2026-W11", "--format", fmt])
    assert result.exit_code == 0, result.output
    assert "T-100" in result.output


def test_bad_week_is_one_line_error(runner, good_db):
    result = runner.invoke(main, ["review", "--db", good_db, "--week", "2026-47"])
    assert result.exit_code == 1
    assert result.output == "Error: week: got '2026-47'; write it as 2026-W47\n"
    assert "Traceback" not in result.output
    assert not isinstance(result.exception, Exception) or isinstance(result.exception, SystemExit)


def test_missing_database_is_one_line_error(runner, tmp_path):
    missing = tmp_path / "nothing.db"
    result = runner.invoke(main, ["review", "--db", str(missing)])
    assert result.exit_code == 1
    assert result.output == (f"Error: no log at {missing}; create one with `pourback init --db {missing}` (or "
                             "`pourback demo`), or give the log's path with --db\n")
    assert not missing.exists()


def test_json_flag_clashes_with_other_format(runner, good_db):
    result = runner.invoke(main, ["review", "--db", good_db, "--json", "--format", "csv"])
    assert result.exit_code == 2
    assert "--json asks for JSON but --format asks for csv; give only one" in result.output


def test_help_has_example(runner):
    result = runner.invoke(main, ["review", "--help"])
    assert result.exit_code == 0, result.output
    assert "Example:" in result.output and "pourback review --week 2026-W47" in result.output
