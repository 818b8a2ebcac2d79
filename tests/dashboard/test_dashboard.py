"""The dashboard's pages, run headless with streamlit's AppTest.

Every page renders without an exception on the demo log and on an empty log
(with the start message), and always shows the safety caution. The logging
form and the file upload go through the library's validation: what they
write is counted by the weekly review, and what they refuse writes nothing.
"""

import json
import re

import pytest
from streamlit.testing.v1 import AppTest

from tests.support import APP
from tests.support.dashboard import (
    chart_data,
    chart_specs,
    layers,
    mark,
    metric,
    open_page,
    snapshot,
    texts,
)
from tests.support.dashboard import lot_with_room as _lot_with_room
from tests.support.dashboard import upload as _upload
from tracker.cautions import SAFETY_CAUTION
from tracker.log.store import Store

PAGES = {
    "log_results.py": "Log results",
    "weekly_review.py": "Weekly review",
    "design_map.py": "Design map",
    "pattern_file.py": "Pattern file",
    "suggestions.py": "Suggestions",
}


# --- every page, demo and empty -------------------------------------------------------------

@pytest.mark.parametrize("page", list(PAGES))
def test_page_renders_on_the_demo(page, app_demo_db, monkeypatch):
    at = open_page(app_demo_db, page, monkeypatch)
    assert texts(at.title) == [PAGES[page]]
    assert not at.error, texts(at.error)
    assert any(SAFETY_CAUTION in w for w in texts(at.warning)), "the safety caution is missing"
    assert not any("The log is empty" in i for i in texts(at.info))
    if page != "log_results.py":
        assert chart_specs(at), "a results page without a chart"
    assert at.dataframe, "a results page without a table"


@pytest.mark.parametrize("page", list(PAGES))
def test_page_on_an_empty_log_shows_how_to_start(page, empty_db, monkeypatch):
    at = open_page(empty_db, page, monkeypatch)
    assert texts(at.title) == [PAGES[page]]
    assert not at.error, texts(at.error)
    start = [i for i in texts(at.info) if "The log is empty" in i]
    assert start and "pourback demo" in start[0]
    assert any(SAFETY_CAUTION in w for w in texts(at.warning))


def test_sidebar_names_the_log_and_its_size(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "log_results.py", monkeypatch)
    assert str(app_demo_db) in texts(at.sidebar.text)
    assert any("1,190 lots" in c for c in texts(at.sidebar.caption))


# --- logging -------------------------------------------------------------------------------------

def _fill_form(at, lot, *, result="reject", defect="sand", name="Test Person", method="visual"):
    at.selectbox(key="lot").set_value(lot).run()
    at.radio(key="method").set_value(method).run()
    at.number_input(key="quantity").set_value(1)
    at.radio(key="result").set_value(result).run()
    at.button_group(key="defect").set_value(defect)
    at.text_input(key="inspector").input("QE-T")
    at.text_area(key="notes").input("logged from the dashboard test")
    at.text_input(key="recorded_by").input(name)
    return at.button(key="save").click().run()


def test_form_writes_a_record_the_review_counts(app_db, monkeypatch):
    from tracker.review.weekly import weekly_review

    lot, pattern = _lot_with_room(app_db)
    with Store(app_db) as s:
        before = weekly_review(s)
    at = _fill_form(open_page(app_db, "log_results.py", monkeypatch), lot)
    assert not at.exception and not at.error, texts(at.error)
    assert any(s.startswith("Saved record") for s in texts(at.success)), texts(at.success)

    latest = at.dataframe[-1].value
    assert "source" not in latest.columns  # the columns that matter first; the rest behind a toggle
    at.toggle(key="history_all_columns").set_value(True).run()
    latest = at.dataframe[-1].value
    first = latest.iloc[0]
    assert (first["lot"], first["result"], first["defect"]) == (lot, "reject", "sand")
    assert first["recorded by"] == "Test Person" and first["source"] == "dashboard"

    with Store(app_db) as s:
        after = weekly_review(s)
    row = lambda r: next(p for p in r["patterns"] if p["pattern"] == pattern)  # noqa: E731 (a one-line local helper)
    assert row(after)["rejected"] == row(before)["rejected"] + 1
    assert after["totals"]["window"]["rejected"] == before["totals"]["window"]["rejected"] + 1

    # ... and the review page shows the new count (its cache follows the file).
    review = at.switch_page("weekly_review.py").run()
    assert not review.exception
    table = next(d.value for d in review.dataframe if "rejected (castings)" in d.value.columns)
    assert table.set_index("pattern").loc[pattern, "rejected (castings)"] == row(after)["rejected"]


def test_form_without_the_loggers_name_writes_nothing(app_db, monkeypatch):
    lot, _ = _lot_with_room(app_db)
    before = snapshot(app_db)
    at = _fill_form(open_page(app_db, "log_results.py", monkeypatch), lot, name="  ")
    assert any("Name the person logging" in e for e in texts(at.error))
    assert not at.success
    assert snapshot(app_db) == before


def test_form_shows_the_librarys_refusal_and_writes_nothing(app_db, monkeypatch):
    lot, _ = _lot_with_room(app_db)
    before = snapshot(app_db)
    at = _fill_form(open_page(app_db, "log_results.py", monkeypatch), lot, defect=None)
    assert not at.exception
    errors = texts(at.error)
    assert len(errors) == 1 and errors[0].startswith("Defect: pick one for a reject"), errors
    assert snapshot(app_db) == before


def test_form_shows_category_and_severity_for_xray_only(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "log_results.py", monkeypatch)
    keys = lambda: {b.key for b in at.button_group}  # noqa: E731 (a one-line local helper)
    assert at.radio(key="method").value == "visual" and not {"xray_category", "severity"} & keys()
    at.radio(key="method").set_value("xray").run()
    assert {"xray_category", "severity"} <= keys()
    # ASTM E446/E186/E280 categories A-G, severity levels 1 (least) to 5 (from memory)
    assert [str(o) for o in at.button_group(key="severity").options] == ["1", "2", "3", "4", "5"]
    at.radio(key="method").set_value("dimensional").run()
    assert not {"xray_category", "severity"} & keys()


def test_after_a_save_the_result_fields_clear_and_the_session_fields_stay(app_db, monkeypatch):
    lot, _ = _lot_with_room(app_db)
    at = _fill_form(open_page(app_db, "log_results.py", monkeypatch), lot)
    assert any(s.startswith("Saved record") for s in texts(at.success)), texts(at.error)
    assert at.selectbox(key="lot").value == lot
    assert at.text_input(key="inspector").value == "QE-T"
    assert at.text_input(key="recorded_by").value == "Test Person"
    assert at.date_input(key="inspected_on").value is not None
    assert at.radio(key="result").value == "accept"
    assert at.button_group(key="defect").value is None and at.button_group(key="zone").value is None
    assert at.number_input(key="quantity").value == 1
    assert at.text_area(key="notes").value == ""
    # a visual rework after an x-ray reject: nothing of the x-ray record is left to refuse it
    at.radio(key="method").set_value("xray").run()
    at.radio(key="result").set_value("reject").run()
    at.button_group(key="defect").set_value("shrinkage")
    at.button_group(key="xray_category").set_value("CC")
    at.button_group(key="severity").set_value(3)
    at.button(key="save").click().run()
    assert any(s.startswith("Saved record") for s in texts(at.success)), texts(at.error)
    at.radio(key="method").set_value("visual").run()
    at.radio(key="result").set_value("rework").run()
    at.button_group(key="defect").set_value("sand")
    at.button(key="save").click().run()
    assert not at.error, texts(at.error)
    with Store(app_db) as s:
        newest = s.inspections_history(limit=1).iloc[0]
    assert (newest["method"], newest["result"], newest["xray_category"]) == ("visual", "rework", None)


def test_form_shows_what_each_method_accounted_for(app_db, monkeypatch):
    from tracker.views import log_results as views

    lot, _ = _lot_with_room(app_db)
    at = open_page(app_db, "log_results.py", monkeypatch)
    at.selectbox(key="lot").set_value(lot).run()
    with Store(app_db) as s:
        a = views.lot_accounting(s, lot)
        totals = s.lot_totals([lot]).get(lot, {"methods": {}})
    visual = int(totals["methods"].get("visual", 0))
    line = next(c for c in texts(at.caption) if c.startswith(f"Lot {lot}: "))
    assert f"**visual** {visual:,} of {a['castings']:,}, {a['castings'] - visual:,} left" in line
    # ... and it follows a save
    _fill_form(at, lot)
    line = next(c for c in texts(at.caption) if c.startswith(f"Lot {lot}: "))
    assert f"**visual** {visual + 1:,} of {a['castings']:,}, {a['castings'] - visual - 1:,} left" in line


def test_bad_upload_lists_its_rows_and_writes_nothing(app_db, monkeypatch):
    lot, _ = _lot_with_room(app_db)
    content = ("lot,inspected_on,method,quantity,result,defect\n"
               f"{lot},2026-11-25,visual,1,reject,sand\n"       # row 2: good
               "NO-SUCH-LOT,2026-11-25,visual,1,accept,\n"      # row 3: unknown lot
               f"{lot},2026-11-25,visual,-2,accept,\n"          # row 4: negative quantity
               f"{lot},2026-11-25,visual,1,reject,\n")          # row 5: reject without a defect
    before = snapshot(app_db)
    at = _upload(open_page(app_db, "log_results.py", monkeypatch), "bad inspections.csv", content)
    assert not at.exception
    errors = texts(at.error)
    assert errors and "refused, nothing written (3 bad row(s))" in errors[0]
    assert "bad inspections" in errors[0]
    problems = next(d.value for d in at.dataframe if list(d.value.columns) == ["row", "column", "reason"])
    assert problems["row"].tolist() == [3, 4, 5]
    assert problems["column"].tolist() == ["lot", "quantity", "defect"]
    assert snapshot(app_db) == before


def test_good_upload_is_imported(app_db, monkeypatch):
    lot, _ = _lot_with_room(app_db)
    with Store(app_db) as s:
        n = s.count("inspections")
    content = f"lot,inspected_on,method,quantity,result,defect\n{lot},2026-11-25,visual,1,reject,slag\n"
    at = _upload(open_page(app_db, "log_results.py", monkeypatch), "more.csv", content)
    assert not at.error, texts(at.error)
    assert any("1 added" in s for s in texts(at.success)), texts(at.success)
    with Store(app_db) as s:
        assert s.count("inspections") == n + 1
        assert s.inspections_history(limit=1)["recorded_by"].iat[0] == "Test Person"
    # The same bytes under another name: nothing added, and the page names the earlier file (issue 27).
    again = _upload(open_page(app_db, "log_results.py", monkeypatch), "again.csv", content)
    assert any("0 added, 1 already present" in s for s in texts(again.success)), texts(again.success)
    assert any(w.startswith("row 2 already in the log from more.csv, imported ") for w in texts(again.warning)), \
        texts(again.warning)


# --- weekly review ------------------------------------------------------------------------------

def test_review_headline_charts_and_report(app_demo_db, monkeypatch):
    from tracker.review.weekly import weekly_review

    at = open_page(app_demo_db, "weekly_review.py", monkeypatch)
    with Store(app_demo_db) as s:
        r = weekly_review(s, week="2026-W47", weeks=13, target=0.02)
    assert at.selectbox(key="week").value == "2026-W47"
    assert metric(at, "Castings rejected, window") == f"{r['totals']['window']['rejected']:,}"
    assert metric(at, "Reject rate, week") == f"{100 * r['totals']['week']['reject_rate']:.2f} %"
    specs = chart_specs(at)
    titles = json.dumps(specs)
    assert "cumulative share (%)" in titles and "ISO week of pour" in titles
    # The p-chart opens on the first flagged pattern.
    assert at.selectbox(key="chart_pattern").value == r["problems"][0]
    # the printable pack is prepared on request (tests/dashboard/test_review_meeting.py downloads it)
    assert at.button(key="prepare_pack").label == "Prepare the printable review pack"
    assert [b.label for b in at.get("download_button")] == ["Download the patterns table (CSV)"]
    # The planted revision of P-1031 is judged an improvement.
    assert any("P-1031 revision 2" in m for m in texts(at.markdown))
    # the verdict in plain words first (the statistics are in its help tooltip)
    verdict = next(m for m in at.markdown if m.value.startswith("**Verdict:**"))
    assert texts([verdict])[0].startswith("**Verdict:** improved: shrinkage fell from ")
    assert "Fisher's exact test p =" in re.sub(r"\\(.)", r"\1", verdict.help)


def test_review_follows_the_week_picker(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "weekly_review.py", monkeypatch)
    at.selectbox(key="week").set_value("2026-W40").run()
    assert not at.exception
    assert any(m.startswith("**Week 2026-W40**") for m in texts(at.markdown))
    at.radio(key="pareto_of").set_value("defects").run()
    spec = json.dumps(chart_specs(at)[0])
    assert '"defect"' in spec


# --- design map -----------------------------------------------------------------------------------

def test_design_map_has_the_caine_curve_and_volume_ratio_across(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "design_map.py", monkeypatch)
    assert at.selectbox(key="alloy").value == "steel"
    el = at.get("vega_lite_chart")[0]
    spec = json.loads(el.proto.spec)
    ls = layers(spec)
    curve = [l for l in ls if mark(l) == "line"]
    dots = [l for l in ls if mark(l) == "circle"]
    assert len(curve) == 1 and len(dots) == 1
    assert curve[0]["encoding"]["x"]["field"] == "volume_ratio"
    assert curve[0]["encoding"]["y"]["field"] == "freezing_ratio"
    enc = dots[0]["encoding"]
    assert enc["x"]["field"] == "volume_ratio" and "volume ratio" in enc["x"]["title"]
    assert enc["y"]["field"] == "freezing_ratio" and "freezing ratio" in enc["y"]["title"]
    assert enc["size"]["field"] == "castings"
    tips = {t["field"] for t in enc["tooltip"]}
    assert {"pattern", "zone", "riser", "shrinkage_rate_pct"} <= tips
    rows = chart_data(el, curve[0])
    assert set(rows["series"]) == {"Caine curve (sound above it)"}
    # Caine's constants for steel, textbook table (from memory): X = 0.10 / (Y - 0.03) + 1.00
    assert rows["freezing_ratio"].to_numpy() == pytest.approx(0.10 / (rows["volume_ratio"].to_numpy() - 0.03) + 1.0)
    points = chart_data(el, dots[0])
    assert rows["volume_ratio"].max() >= points["volume_ratio"].max()  # the curve spans every point


def test_design_map_ductile_iron_has_no_curve_and_says_so(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "design_map.py", monkeypatch)
    at.selectbox(key="alloy").set_value("ductile_iron").run()
    assert not at.exception
    assert not [l for l in layers(chart_specs(at)[0]) if mark(l) == "line"]
    assert any("No Caine curve" in i and "ductile iron" in i for i in texts(at.info))


def test_design_map_pattern_filter(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "design_map.py", monkeypatch)
    at.multiselect(key="patterns").set_value(["P-1017"]).run()
    table = next(d.value for d in at.dataframe if "shrinkage rate (%)" in d.value.columns)
    assert set(table["pattern"]) == {"P-1017"}
    assert table["zone"].iat[0] == "flange-B"  # the undersized riser's zone scraps most
    assert metric(at, "Riser zones shown") == str(len(table))


# --- pattern file ---------------------------------------------------------------------------------

def test_pattern_file_shows_revisions_and_marks_them(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "pattern_file.py", monkeypatch)
    at.selectbox(key="pattern").set_value("P-1031").run()
    assert not at.exception
    design = next(d.value for d in at.dataframe if "diameter (mm)" in d.value.columns)
    assert sorted(set(design["revision"])) == ["1", "2"]
    margins = next(d.value for d in at.dataframe if "modulus ratio" in d.value.columns)
    r1 = margins[margins["riser"] == "R1"].set_index("revision")
    assert not r1.loc["1", "passes all rules"] and r1.loc["2", "passes all rules"]
    ls = layers(chart_specs(at)[0])
    assert any(mark(l) == "rule" for l in ls), "revision dates are not marked"
    assert any(mark(l) == "bar" for l in ls)
    assert metric(at, "Casting weight (kg)") == "88"


def test_pattern_file_opens_on_the_query_parameter(app_demo_db, monkeypatch):
    monkeypatch.setenv("POURBACK_DB", str(app_demo_db))
    at = AppTest.from_file(str(APP), default_timeout=60)
    at.run()
    at.switch_page("pattern_file.py")
    at.query_params["pattern"] = "P-1036"
    at.run()
    assert at.selectbox(key="pattern").value == "P-1036"


# --- suggestions ------------------------------------------------------------------------------------

def test_suggestions_and_what_if(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "suggestions.py", monkeypatch)
    change = next(d.value for d in at.dataframe if "suggested: sleeve" in d.value.columns)
    hit = change[(change["pattern"] == "P-1017") & (change["riser"] == "R3")]
    assert len(hit) == 1 and hit["action"].iat[0] != "no riser change"
    balance = next(d.value for d in at.dataframe if "yield after (%)" in d.value.columns)
    from tracker.log.settings import DEFAULT_CURRENCY
    assert {"added metal (kg per mold)", f"balance ({DEFAULT_CURRENCY}/year)", "pays off"} <= set(balance.columns)
    # observed and predicted rates side by side, labelled
    cols = balance.columns.tolist()
    assert cols.index("observed now (%)") + 1 == cols.index("predicted now (%)")
    # The what-if opens on the first suggested riser: P-1017 R3, a bare 100 mm riser failing rules.
    assert at.selectbox(key="whatif_riser").value == ("P-1017", "R3")
    # modulus, Caine, neck, and feed volume once the liquid contraction (1.6 % per 100 K, steel) is fed
    assert metric(at, "Rules") == "4 failed"
    before = float(metric(at, "Modulus ratio (rule: 1.2 or more)"))
    at.number_input(key="whatif_dia_P-1017_R3").set_value(130.0).run()
    assert not at.exception and not at.error
    after = float(metric(at, "Modulus ratio (rule: 1.2 or more)"))
    # The modulus of a cylinder with H/D kept grows with D: 130/100 times larger.
    assert after == pytest.approx(before * 1.3, abs=0.01)
    assert metric(at, "Rules") == "all pass"
    assert [m for m in at.metric if m.label == "Yield changed"][0].delta.startswith("-")


def test_suggestions_page_shows_the_riser_pourback_suggest_shows(app_demo_db, monkeypatch):
    # The page runs the library call of `pourback suggest` with its defaults (thermal filter
    # included): on the demo, P-1017's R3 goes to 120 mm with sleeve XS-120 once the filter has
    # run (130 mm bare without it), on the page and in the library alike.
    from tracker.advice.suggest import suggest

    at = open_page(app_demo_db, "suggestions.py", monkeypatch)
    change = next(d.value for d in at.dataframe if "suggested: sleeve" in d.value.columns)
    page = change[(change["pattern"] == "P-1017") & (change["riser"] == "R3")].iloc[0]
    with Store(app_demo_db) as s:
        want = next(r for r in suggest(s, week=at.selectbox(key="week").value)
                    if r["pattern"] == "P-1017" and r.get("riser") == "R3")
    assert (want["suggested_diameter_mm"], want["suggested_sleeve"]) == (120.0, "XS-120")
    assert page["suggested: diameter (mm)"] == want["suggested_diameter_mm"]
    assert page["suggested: sleeve"] == (want["suggested_sleeve"] or "none")
    assert any("Thermal filter" in c for c in texts(at.caption))


def test_what_if_with_a_catalogue_sleeve(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "suggestions.py", monkeypatch)
    box = at.selectbox(key="whatif_sleeve_P-1017_R3")
    # the catalogue sorted by inner diameter, after "keep" and "none"
    with Store(app_demo_db) as s:
        cat = s.table("sleeves")
    codes = [o.split(" · ")[0] for o in box.options[2:]]  # the labels start with the sleeve code
    order = cat.set_index("sleeve").loc[codes, "inner_diameter_mm"].tolist()
    assert box.options[0].startswith("keep") and box.options[1].startswith("no sleeve")
    assert order == sorted(order) and len(order) == len(cat)
    box.set_value("IS-130").run()
    assert not at.exception and not at.error
    # choosing a sleeve shows its diameter
    assert at.number_input(key="whatif_dia_P-1017_R3").value == 130.0
    assert any("sleeve IS-130" in m for m in texts(at.markdown))


def test_what_if_bigger_riser_and_sleeve_with_money(app_demo_db, monkeypatch):
    from tracker.advice.what_if import what_if

    at = open_page(app_demo_db, "suggestions.py", monkeypatch)
    at.selectbox(key="whatif_riser").set_value(("P-1036", "R2")).run()  # exothermic XS-90 in the demo
    at.number_input(key="whatif_dia_P-1036_R2").set_value(120.0).run()
    assert not at.exception and not at.error
    assert at.selectbox(key="whatif_sleeve_P-1036_R2").value == "XS-120"
    assert any("120 x 150 mm, sleeve XS-120" in m for m in texts(at.markdown))
    with Store(app_demo_db) as s:
        want = what_if(s, "P-1036", "R2", sleeve="XS-120", week=at.selectbox(key="week").value)
    for label, key in (("Extra riser metal (EUR/year)", "extra_metal_cost_per_year"),
                       ("Sleeves (EUR/year)", "sleeve_cost_per_year"),
                       ("Scrap saved (EUR/year)", "scrap_saved_per_year"),
                       ("Yearly balance (EUR/year)", "yearly_balance")):
        assert metric(at, label) == f"{want[key]:,.0f}"
    assert metric(at, "Predicted rate now (calibrated)") == f"{100 * want['predicted_rate_now']:.2f} %"
    # a size the catalogue does not have in that kind: one message, no traceback
    at.number_input(key="whatif_dia_P-1036_R2").set_value(130.0).run()
    assert not at.exception
    assert any("no exothermic sleeve of that inner diameter" in e for e in texts(at.error))


# --- errors and user text ---------------------------------------------------------------------------

def test_a_library_error_is_one_message_not_a_traceback(app_db, monkeypatch):
    from tracker.errors import PourbackError
    from tracker.review import weekly as review

    def broken(*args, **kwargs):
        raise PourbackError("the log is locked by another writer; try again in a moment")

    monkeypatch.setattr(review, "weekly_review", broken)
    at = open_page(app_db, "weekly_review.py", monkeypatch)
    assert not at.exception
    assert texts(at.error) == ["the log is locked by another writer; try again in a moment"]
    assert any(SAFETY_CAUTION in w for w in texts(at.warning))


def test_user_text_in_messages_is_inert_markdown(app_db, monkeypatch):
    at = _upload(open_page(app_db, "log_results.py", monkeypatch), "[click](x.example) **b** <i>.csv",
                 "lot,inspected_on,method,quantity,result\nNO-SUCH-LOT,2026-11-25,visual,1,accept\n")
    raw = at.error[0].value
    assert raw.startswith(r"\[click\]\(x\.example\)")  # no live link
    assert r"\*\*b\*\*" in raw and r"\<i\>" in raw  # no bold, no tag
    assert texts(at.error)[0].startswith("[click](x.example) **b** <i>.csv: refused")


# --- design map: designs in use, flagged patterns, links to the pattern file ----------------------

def test_design_map_counts_failing_designs_in_use_only(app_demo_db, monkeypatch):
    from tracker.advice.features import design_map
    from tracker.review.weekly import default_week, weekly_review
    from tracker.views import design_map as views

    at = open_page(app_demo_db, "design_map.py", monkeypatch)
    with Store(app_demo_db) as s:
        current = views.current_revisions(s)
        problems = weekly_review(s, default_week(s))["problems"]
        start, end = at.date_input(key="period").value
        frame = design_map(s, start=start.isoformat(), end=end.isoformat(), alloy="steel")
    frame = frame.dropna(subset=["volume_ratio", "freezing_ratio"])
    in_use = frame[[current.get(p) == str(r) for p, r in zip(frame["pattern"], frame["revision"], strict=False)]]
    # the resized riser's old revision (P-1031 revision 1) fails a rule but is superseded
    old = frame[(frame["pattern"] == "P-1031") & (frame["revision"].astype(str) == "1")]
    assert len(old) and not old["passes"].astype(bool).all()
    assert metric(at, "Zones in use whose riser fails a rule") == f"{int((~in_use['passes'].astype(bool)).sum()):,}"
    el = at.get("vega_lite_chart")[0]
    dots = next(l for l in layers(json.loads(el.proto.spec)) if mark(l) == "circle")
    points = chart_data(el, dots)
    designs = dict(zip(zip(points["pattern"], points["revision"].astype(str), strict=False), points["design"], strict=False))
    assert designs[("P-1031", "1")] == "superseded by a later revision"
    for code in set(points["pattern"]) & set(problems):
        assert designs[next(k for k in designs if k[0] == code and current.get(code) == k[1])] == \
            "in use, pattern flagged"
    # the colour scale covers the highest rate on the map
    scale = dots["encoding"]["color"]["scale"]
    assert scale["domain"][0] == 0 and scale["domain"][1] == pytest.approx(points["shrinkage_rate_pct"].max())
    # a click selects the point's pattern
    assert json.loads(el.proto.spec)["params"][0]["select"]["fields"] == ["pattern"]


def test_choosing_a_pattern_on_the_design_map_opens_its_file(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "design_map.py", monkeypatch)
    at.selectbox(key="open_pattern").set_value("P-1036").run()
    assert not at.exception
    assert texts(at.title) == ["Pattern file"]
    assert at.selectbox(key="pattern").value == "P-1036"


def test_pattern_file_opens_on_the_first_flagged_pattern(app_demo_db, monkeypatch):
    from tracker.review.weekly import default_week, weekly_review

    with Store(app_demo_db) as s:
        first = weekly_review(s, default_week(s))["problems"][0]
    at = open_page(app_demo_db, "pattern_file.py", monkeypatch)
    assert at.selectbox(key="pattern").value == first
    alloy = metric(at, "Alloy")
    assert alloy == "Carbon and low-alloy steel"  # the alloy's name, whole


# --- weekly review: labelled Pareto, signals, verdicts in words ----------------------------------------

def test_pareto_labels_every_bar_it_shows(app_demo_db, monkeypatch):
    from tracker.review.weekly import default_week, weekly_review

    at = open_page(app_demo_db, "weekly_review.py", monkeypatch)
    with Store(app_demo_db) as s:
        r = weekly_review(s, default_week(s))
    el = next(e for e in at.get("vega_lite_chart") if "cumulative share (%)" in e.proto.spec)
    spec = json.loads(el.proto.spec)
    bars = next(l for l in layers(spec) if mark(l) == "bar")
    data = chart_data(el, bars if "data" in bars else spec)
    costly = [p for p in r["pareto"]["patterns_by_cost"] if p["scrap_cost"]]
    assert len(costly) > 12 and len(data) == 12
    assert data["pattern"].tolist()[:11] == [p["pattern"] for p in costly[:11]]
    assert data["pattern"].iat[-1] == f"the other {len(costly) - 11} patterns"
    assert data["value"].sum() == pytest.approx(sum(p["scrap_cost"] for p in costly))
    axis = bars["encoding"]["x"]["axis"]
    assert axis["labelOverlap"] is False  # no label dropped to make room


def test_review_page_shows_the_chart_signals(app_demo_db, monkeypatch):
    from tracker.review.weekly import default_week, weekly_review

    at = open_page(app_demo_db, "weekly_review.py", monkeypatch)
    with Store(app_demo_db) as s:
        r = weekly_review(s, default_week(s))
    signalled = {p["pattern"] for p in r["patterns"] if p["signal_rules"] or p["signal_rules_window"]}
    assert signalled, "the demo has run-rule and limit signals"
    table = next(d.value for d in at.dataframe if list(d.value.columns) == ["pattern", "signal", "when", "flagged"])
    assert set(table["pattern"]) == signalled
    runs = [p["pattern"] for p in r["patterns"] if "run_of_8" in (p["signal_rules"] or p["signal_rules_window"])]
    for code in runs:
        assert "8 or more weeks on one side" in table.set_index("pattern").loc[code, "signal"]
