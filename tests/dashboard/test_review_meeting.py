"""The weekly review meeting in the dashboard: the printable pack's download, each
pattern against the target, and the actions on the review page and the pattern file."""

import json

from tests.support.dashboard import chart_data, chart_specs, open_page, texts
from tracker.log.actions import list_actions
from tracker.log.store import Store


def test_review_page_draws_the_target_chart_and_offers_the_pack(app_demo_db, monkeypatch):
    at = open_page(app_demo_db, "weekly_review.py", monkeypatch)
    titles = json.dumps(chart_specs(at))
    assert "chance the reject rate is above the target (%)" in titles
    # the p-chart carries the target line too
    [pchart] = [el for el in at.get("vega_lite_chart") if "lower limit (%)" in el.proto.spec]
    labels = [chart_data(pchart, layer) for layer in json.loads(pchart.proto.spec)["layer"]
              if layer["encoding"].get("text")]
    assert [t["label"].tolist() for t in labels] == [["target 2 %"]]
    # the pack is prepared on request only (it runs the suggestions and the thermal checks); what it
    # holds is tracker.views.pack.pack_of's, checked in tests/review/test_pack.py
    assert "Download this review as HTML" not in [b.label for b in at.get("download_button")]
    assert at.button(key="prepare_pack").label == "Prepare the printable review pack"


def test_actions_are_added_and_closed_on_the_review_page(app_db, monkeypatch):
    with Store(app_db) as s:
        code = s.table("patterns")["pattern"].iloc[0]
    at = open_page(app_db, "weekly_review.py", monkeypatch)
    assert any("No open action." in c.value for c in at.caption)
    at.selectbox(key="review_action_pattern").set_value(code)
    at.text_input(key="review_action_text").input("check the neck of R1 on the next 5 molds")
    at.text_input(key="review_action_owner").input("M. Lopez")
    at.text_input(key="review_action_by").input("QA lead")
    at.button(key="FormSubmitter:review_add_action-Add the action").click().run()
    assert not at.exception, [e.value for e in at.exception]
    with Store(app_db) as s:
        [row] = list_actions(s)
    assert (row["pattern"], row["owner"], row["created_by"], row["status"]) == (code, "M. Lopez", "QA lead", "open")
    assert any(f"Added action {row['id']} on {code}" in m for m in texts(at.success))
    table = next(d.value for d in at.dataframe if "what" in d.value.columns)
    assert table["what"].tolist() == ["check the neck of R1 on the next 5 molds"]
    at.text_input(key="review_done_note").input("neck enlarged")
    at.text_input(key="review_done_by").input("J. Park")
    at.button(key="FormSubmitter:review_done_action-Mark it done").click().run()
    assert not at.exception, [e.value for e in at.exception]
    with Store(app_db) as s:
        [row] = list_actions(s)
    assert (row["status"], row["done_by"], row["note"]) == ("done", "J. Park", "neck enlarged")
    # the pattern file shows the pattern's actions, done ones included
    at.switch_page("pattern_file.py").run()
    at.selectbox(key="pattern").set_value(code).run()
    table = next(d.value for d in at.dataframe if "what" in d.value.columns)
    assert table["status"].tolist() == ["done"] and table["note"].tolist() == ["neck enlarged"]
