"""Plants: a pattern belongs to a plant; review, suggest and reports take --plant
and compare the plants side by side for one alloy. Runs on both backends.

The demo files with a plant column added (odd rows NORTH, even rows SOUTH) make
a two-plant log; the figures are checked against pandas sums over the same
CSV files and statsmodels' Wilson interval, outside the project's code.
"""

import json

import pandas as pd
import pytest
from statsmodels.stats.proportion import proportion_confint

from tests.support import GOOD, SAMPLE
from tracker.cli import main
from tracker.errors import BadFile, BadInput, NotFound
from tracker.log.ingest import import_dir, import_file
from tracker.log.store import Store
from tracker.review.plants import compare_plants
from tracker.review.weekly import weekly_review

WEEK, WEEKS = "2026-W47", 13
WINDOW = ("2026-08-24", "2026-11-22")  # ISO weeks 2026-W35 to W47 (ISO 8601 calendar)


@pytest.fixture
def two_plants(tmp_path):
    folder = tmp_path / "files"
    folder.mkdir()
    for f in SAMPLE.glob("*.csv"):
        (folder / f.name).write_bytes(f.read_bytes())
    p = pd.read_csv(folder / "patterns.csv")
    p["plant"] = ["NORTH" if i % 2 else "SOUTH" for i in range(len(p))]
    p.to_csv(folder / "patterns.csv", index=False)
    return folder


@pytest.fixture
def plant_log(logs, two_plants):
    """(the two-plant log's target, the folder of its import files)."""
    target = logs.new()
    with Store(target) as s:
        import_dir(s, two_plants, by="test")
    return target, two_plants


def _expected(folder, plant, alloy):
    """Castings inspected and rejected in the window, from the CSV files with pandas:
    inspected = castings poured in lots holding at least one record."""
    p = pd.read_csv(folder / "patterns.csv")
    lots = pd.read_csv(folder / "lots.csv").merge(p[["pattern", "plant", "alloy", "castings_per_mold"]])
    ins = pd.read_csv(folder / "inspections.csv")
    lots = lots[(lots["poured_on"] >= WINDOW[0]) & (lots["poured_on"] <= WINDOW[1])
                & (lots["plant"] == plant) & (lots["alloy"] == alloy)]
    seen = lots[lots["lot"].isin(ins["lot"])]
    inspected = int((seen["molds"] * seen["castings_per_mold"]).sum())
    rejected = int(ins[(ins["result"] == "reject") & ins["lot"].isin(lots["lot"])]["quantity"].sum())
    return inspected, rejected


def test_compare_plants_matches_pandas_and_statsmodels(plant_log):
    db, folder = plant_log
    with Store(db) as s:
        got = compare_plants(s, "steel", week=WEEK, weeks=WEEKS)
    assert [r["plant"] for r in got["plants"]] == ["NORTH", "SOUTH"]
    for row in got["plants"]:
        inspected, rejected = _expected(folder, row["plant"], "steel")
        # Reference: pandas sums over the import files.
        assert (row["inspected"], row["rejected"]) == (inspected, rejected)
        # Reference: statsmodels proportion_confint, method="wilson".
        lo, hi = proportion_confint(rejected, inspected, alpha=0.05, method="wilson")
        assert row["wilson_low"] == pytest.approx(lo, abs=1e-12)
        assert row["wilson_high"] == pytest.approx(hi, abs=1e-12)


def test_review_of_one_plant_holds_only_its_patterns_and_they_add_up(plant_log):
    db, folder = plant_log
    plants = pd.read_csv(folder / "patterns.csv").set_index("pattern")["plant"]
    with Store(db) as s:
        whole = weekly_review(s, week=WEEK, weeks=WEEKS)
        north = weekly_review(s, week=WEEK, weeks=WEEKS, plant="NORTH")
        south = weekly_review(s, week=WEEK, weeks=WEEKS, plant="SOUTH")
    assert whole["plant"] is None and north["plant"] == "NORTH"
    # Reference: the plant column of the import file.
    assert {p["pattern"] for p in north["patterns"]} == {p["pattern"] for p in whole["patterns"]
                                                         if plants[p["pattern"]] == "NORTH"}
    for key in ("inspected", "rejected", "poured"):
        assert north["totals"]["window"][key] + south["totals"]["window"][key] == whole["totals"]["window"][key]


def test_unknown_plant_is_one_clear_error(plant_log, runner):
    db, _ = plant_log
    with Store(db) as s, pytest.raises(NotFound, match="the plants in the log are: NORTH, SOUTH"):
        weekly_review(s, plant="EAST")
    res = runner.invoke(main, ["review", "--plant", "EAST", "--db", db])
    assert res.exit_code == 1 and "unknown plant 'EAST'" in res.output


def test_cli_plant_options(plant_log, runner):
    db, folder = plant_log
    res = runner.invoke(main, ["review", "--compare-plants", "--alloy", "steel", "--week", WEEK, "--json",
                               "--db", db])
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    assert data["alloy"] == "steel" and len(data["plants"]) == 2
    res = runner.invoke(main, ["review", "--compare-plants", "--alloy", "steel", "--db", db])
    assert res.exit_code == 0 and "Plants side by side, alloy steel" in res.output
    res = runner.invoke(main, ["review", "--compare-plants", "--db", db])
    assert res.exit_code == 2 and "give --alloy too" in res.output
    res = runner.invoke(main, ["review", "--plant", "NORTH", "--week", WEEK, "--format", "md", "--db", db])
    assert res.exit_code == 0 and "plant NORTH" in res.output
    res = runner.invoke(main, ["suggest", "--plant", "SOUTH", "--json", "--db", db])
    assert res.exit_code == 0, res.output
    plants = pd.read_csv(folder / "patterns.csv").set_index("pattern")["plant"]
    # Reference: the plant column of the import file.
    assert {r["pattern"] for r in json.loads(res.output)} <= set(plants[plants == "SOUTH"].index)


def test_init_plant_is_the_default_for_patterns_without_one(logs, runner, tmp_path):
    db = logs.new("init")
    res = runner.invoke(main, ["init", "--plant", "WEST-2", "--db", db])
    assert res.exit_code == 0 and "default plant WEST-2" in res.output
    with Store(db) as s:
        import_dir(s, GOOD)
        assert s.plants() == ["WEST-2"]
        assert set(s.table("patterns")["plant"]) == {"WEST-2"}
        bad = tmp_path / "patterns.csv"
        bad.write_text("pattern,description,alloy,casting_weight_kg,castings_per_mold,metal_cost_per_kg,plant\n"
                       "Z-1,x,steel,10,1,2,north plant\n", encoding="utf-8")
        with pytest.raises(BadFile, match="row 2, column plant: got 'north plant'; a plant code is"):
            import_file(s, "patterns", bad)
    res = runner.invoke(main, ["init", "--plant", "no spaces", "--db", db])
    assert res.exit_code == 1 and "plant: got 'no spaces'" in res.output


# --- dashboard ------------------------------------------------------------------------------

def test_dashboard_plant_picker_and_plants_side_by_side(plant_log, monkeypatch):
    from tests.support.dashboard import metric, open_page

    db, folder = plant_log
    at = open_page(db, "weekly_review.py", monkeypatch)
    picker = at.sidebar.selectbox(key="plant")
    assert picker.options == ["All plants", "NORTH", "SOUTH"] and picker.value == "All plants"
    # Plants side by side: one row per plant, the same figures as the library's comparison.
    table = next(d.value for d in at.dataframe if "plant" in d.value.columns)
    assert list(table["plant"]) == ["NORTH", "SOUTH"]
    alloy = at.selectbox(key="compare_alloy").value
    week = at.selectbox(key="week").value
    for plant, inspected in zip(table["plant"], table["castings inspected"], strict=False):
        # Reference: pandas sums over the import files (the window is the 13 weeks up to the picked week).
        if week == WEEK:
            assert inspected == _expected(folder, plant, alloy)[0]
    picker.set_value("NORTH").run()
    assert not at.exception
    with Store(db) as s:
        north = weekly_review(s, week=at.selectbox(key="week").value, weeks=13, plant="NORTH")
    assert metric(at, "Castings inspected, window") == f"{north['totals']['window']['inspected']:,}"


def test_compare_plants_on_a_log_without_plants_says_how_to_name_them(logs):
    # a log whose patterns name no plant: one BadInput with the fix, not a NameError
    target = logs.new()
    with Store(target) as s:
        import_dir(s, SAMPLE, by="test")
        with pytest.raises(BadInput) as err:
            compare_plants(s, "steel", week=WEEK, weeks=WEEKS)
    assert str(err.value) == ("plant: got None; the log names no plants: give patterns a plant column, or set "
                              "`pourback init --plant CODE` before importing them")
