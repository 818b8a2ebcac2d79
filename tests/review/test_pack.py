"""The printable review pack (tracker/views/pack.py): what it carries, that its charts
are the dashboard's own specifications, and that user text stays text."""

import html
import re

import pytest

from tracker import numbers
from tracker.cautions import SAFETY_CAUTION
from tracker.views import charts
from tracker.views import review as views
from tracker.views.pack import render_pack, thermal_word

EXTERNAL = re.compile(r"""(src|href)\s*=\s*["']?\s*(https?:)?//""", re.I)
SECTIONS = ("Needs attention", "Against the target", "Riser suggestions", "Riser revisions", "Open actions")


def _section(page: str, head: str) -> str:
    start = page.index(f"<h2>{head}")
    end = page.find("<h2>", start + 4)
    return page[start:end if end > 0 else None]


def test_html_pack_carries_the_meetings_sections(demo_pack):
    page = demo_pack["html"]
    positions = [page.index(f"<h2>{h}") for h in SECTIONS]
    assert positions == sorted(positions)
    # self-contained: no script, no link, nothing fetched from a host
    assert not EXTERNAL.search(page) and "http://" not in page and "https://" not in page
    for banned in ("<script", "<link", "@import", "url(", "<iframe", "<object"):
        assert banned not in page.lower()
    # a trend, a Pareto, the target chart and one p-chart per flagged pattern, all from vl-convert
    review = demo_pack["review"]
    assert page.count("<svg") == 3 + len(review["problems"]) > 3
    # prints on A4 and Letter: the page size is left to the printer, rows are never split
    assert "@page { margin: 12mm; }" in page and "tr, .chart" in page


def test_suggestions_carry_money_in_the_currency_and_thermal_verdicts(demo_pack):
    records = demo_pack["pack"]["suggestion_records"]
    assert records, "the demo review flags patterns with riser suggestions"
    part = _section(demo_pack["html"], "Riser suggestions")
    assert "balance (EUR/year)" in part and "thermal check" in part
    assert html.escape(SAFETY_CAUTION) in part
    for s in records:
        if s["action"] != "no_riser_change":  # the library's figure, as the pack prints it
            assert f"<td class=\"n\">{numbers.money_text(s['yearly_balance'])}</td>" in part
    # each suggestion's verdict, worded from the thermal check's own fields
    verdicts = demo_pack["pack"]["suggestions"]["thermal check"].tolist()
    assert [v for v, s in zip(verdicts, records, strict=True) if s.get("thermal_ok") is not None] == \
        [thermal_word(s) for s in records if s.get("thermal_ok") is not None]
    assert all(html.escape(v) in part for v in verdicts)


def test_open_actions_only_and_user_text_escaped(demo_pack):
    part = _section(demo_pack["html"], "Open actions")
    assert html.escape("trial pour with <b>sleeve</b> on R3 | 5 molds") in part and "<b>sleeve" not in part
    assert "recheck the boss zone" not in part  # closed
    md = demo_pack["md"]
    assert "trial pour with &lt;b&gt;sleeve&lt;/b&gt; on R3 \\| 5 molds" in md
    assert "recheck the boss zone" not in md


def test_markdown_pack_has_the_same_sections_and_no_charts(demo_pack):
    md = demo_pack["md"]
    positions = [md.index(f"## {h}") for h in SECTIONS]
    assert positions == sorted(positions)
    assert "<svg" not in md and "balance (EUR/year)" in md


def test_pack_charts_are_the_dashboards_specifications(demo_pack):
    import dashboard.charts as page_charts

    # the dashboard draws the review's charts with the very functions the pack renders
    for name in ("trend", "pareto", "p_chart", "target_chance"):
        assert getattr(page_charts, name) is getattr(charts, name)
    review = demo_pack["review"]
    trend = charts.to_svg(page_charts.trend(views.review_trend(review), 100.0 * review["target"],
                                            views.money_head("scrap cost", review)))
    assert trend == demo_pack["pack"]["charts"]["trend"]


@pytest.mark.parametrize("fmt", ["pdf", "csv"])
def test_pack_formats(demo_pack, fmt):
    from tracker.errors import BadInput

    with pytest.raises(BadInput, match="the review pack is written as html or md"):
        render_pack(demo_pack["pack"], fmt)
