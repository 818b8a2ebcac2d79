"""The scale benchmark runs end to end at a tiny size (the real run is
``python -m benchmarks.scale``; it is never part of the test suite)."""

import json

import pytest

from benchmarks import scale as bench

MEASURES = ["import", "review_week", "review_13w", "review_52w", "sizing", "fit_model", "suggestions",
            "thermal_solve", "thermal_suggestions", "dashboard_review", "dashboard_design_map",
            "dashboard_suggestions"]
KEYS = {"name", "ours_s", "baseline_s", "ratio", "target", "met", "peak_rss_mb"}


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    out = tmp_path_factory.mktemp("bench")
    return bench.run(400, keep=out, sizing_risers=200, repeats=1)


def test_every_measure_ran(report):
    assert [m["name"] for m in report["measures"]] == MEASURES
    for m in report["measures"]:
        assert set(m) >= KEYS, m["name"]
        if m["name"].startswith("dashboard") and m.get("not_measured"):
            assert m["not_measured"] == "no dashboard pages"
            continue
        assert m["ours_s"] is not None and m["ours_s"] > 0, m["name"]
        assert m["peak_rss_mb"] > 0, m["name"]
        assert not m.get("errors"), m["errors"]


def test_measures_with_a_baseline_have_a_ratio(report):
    by = {m["name"]: m for m in report["measures"]}
    for name in ("import", "review_week", "review_52w", "sizing"):
        assert by[name]["baseline_s"] > 0 and by[name]["ratio"] > 0
        assert isinstance(by[name]["met"], bool)
    # the reviews are held against the fetch of the rows they read; the old single
    # aggregate stays in the report for information
    for name in ("review_week", "review_13w", "review_52w"):
        assert by[name]["baseline"] == "Store.review_floor"
        assert by[name]["floor_rows"]["lots"] > 0 and by[name]["floor_rows"]["records"] > 0
    assert by["review_week"]["aggregate_s"] > 0
    assert by["review_week"]["baseline_with_totals_s"] > 0 and by["review_week"]["totals_rows"] > 0
    assert by["review_week"]["target"] == by["review_52w"]["target"] == "ours/baseline <= 2.5"
    assert by["sizing"]["ratio_kind"] == "baseline/ours"
    assert by["import"]["ratio_kind"] == "ours/baseline"


def test_the_synthetic_history_imports_whole_and_agrees(report):
    by = {m["name"]: m for m in report["measures"]}
    rows = report["data"]["rows"]
    assert rows["lots"] == 400
    assert by["import"]["refused"] == 0
    assert by["import"]["added"] == by["import"]["rows"] == rows["inspections"]
    # about three records per lot, as at full scale
    assert 2.5 <= rows["inspections"] / rows["lots"] <= 3.5
    assert by["review_week"]["agrees_with_baseline"] is True
    assert by["sizing"]["max_abs_diff_mm"] <= bench.SIZING_TOLERANCE_MM


def test_report_is_json_with_machine_and_plans(report):
    again = json.loads(json.dumps(report))
    assert {"cores", "ram_gb", "cpu", "python", "sqlite"} <= set(again["machine"])
    queries = {q["query"] for q in again["query_plans"]}
    assert {"pours_by_day", "rejects_by_day"} <= queries
    assert all(q["plan"] for q in again["query_plans"])
    assert "review_week" in bench.format_report(report)


def test_cli_refuses_a_tiny_history(capsys):
    with pytest.raises(SystemExit):
        bench.main(["--lots", "5"])
    assert "give at least 100 lots" in capsys.readouterr().err
