"""The printable review pack: the weekly review with what the meeting decides on.

``build_pack`` gathers, for one weekly review, the riser suggestions with their
money and thermal verdicts (read through ``tracker.advice.suggest.suggest`` and
``tracker.thermal.checks.check_suggestions``), each pattern against the target
(``tracker.review.target``), the open actions (``tracker.log.actions``) and the
review's charts, rendered from the dashboard's own Altair specifications
(:mod:`tracker.views.charts`) to inline SVG with vl-convert, offline.
``render_pack`` writes it as one self-contained HTML page (prints on A4 and
Letter) or as Markdown (the same sections, no charts).

The pack lives here, above the review, advice and the log, because it reads
all three; :mod:`tracker.review.report` renders the review's own sections and
takes the pack's as finished HTML or Markdown.
"""

from __future__ import annotations

import html

import pandas as pd

from tracker import numbers, units
from tracker.cautions import SAFETY_CAUTION
from tracker.errors import BadInput
from tracker.log.actions import list_actions
from tracker.log.settings import DEFAULT_CURRENCY
from tracker.review import report
from tracker.review.report_html import render_html
from tracker.review.report_parts import md_cell, md_table
from tracker.review.target import METHOD, SIGNAL_PROBABILITY
from tracker.views import charts
from tracker.views import review as views
from tracker.views.actions import actions_table
from tracker.views.common import money_head
from tracker.views.suggestions import suggestions_table

PACK_FORMATS = ("html", "md")
PARETO_BARS = 12  # as on the dashboard's review page

# The suggestion columns the pack prints (those the table holds, in this order), then the thermal check.
SUGGESTION_KEYS = ("pattern", "zone", "riser", "action", "now: diameter", "now: sleeve", "suggested: diameter",
                   "suggested: sleeve", "observed now", "predicted after", "balance", "pays off", "probability")


THERMAL_KEYS = ("thermal_verdict", "verdict", "thermal_ok")  # a verdict string first, else pass or fail


def thermal_word(checked: dict | None) -> str:
    """A suggestion's thermal verdict as the thermal check words it: its own verdict string
    when it gives one, else "passes" / "fails" from ``thermal_ok``; "not checked" without one."""
    if not checked:
        return "not checked"
    for key in THERMAL_KEYS[:2]:
        if checked.get(key):
            return str(checked[key]).replace("_", " ")
    ok = checked.get("thermal_ok")
    if ok is None:
        return "not checked"
    last = checked.get("last_to_freeze")
    return ("passes" if ok else "fails") + (f" (last to freeze: {last})" if last else "")


def _thermal(store, suggestions: list[dict]) -> list[str]:
    from tracker.thermal.checks import check_suggestions

    # a suggestion the run checked already carries the check's fields; the others are checked here
    out: list[str | None] = [thermal_word(s) if any(s.get(k) is not None for k in THERMAL_KEYS) else None
                             for s in suggestions]
    todo = [i for i, w in enumerate(out) if w is None]
    if todo:
        checked = check_suggestions(store, [suggestions[i] for i in todo])
        for i, c in zip(todo, checked, strict=True):
            out[i] = thermal_word(c)
    return [w or "not checked" for w in out]


def build_pack(store, review: dict, *, suggestions: list[dict] | None = None, draw: bool = True,
               system: str = units.METRIC) -> dict:
    """Everything the pack prints for ``review`` (``tracker.review.weekly.weekly_review``, in
    ``system`` units). ``suggestions``: the suggestions when already computed, else
    ``suggest`` runs for the review's week, window, target and plant. ``draw`` False leaves
    the charts out (the Markdown pack has none)."""
    from tracker.advice.fitting import get_model
    from tracker.advice.suggest import suggest

    if suggestions is None:  # the review only reads the log: a model fitted here is not stored
        with store.every_plant():  # as suggest takes it: the model learns from every plant's history
            model = get_model(store, save=False)
        suggestions = suggest(store, week=review["week"], weeks=review["window"]["weeks"],
                              target=review["target"], plant=review.get("plant"), system=system, model=model)
    currency = review.get("currency") or DEFAULT_CURRENCY
    table = suggestions_table(suggestions, currency, system)
    if len(table):
        table["thermal check"] = _thermal(store, suggestions)
    return {"review": review, "suggestions": table, "suggestion_records": suggestions, "caution": bool(suggestions),
            "target": views.review_target_table(review), "actions": list_actions(store, open_only=True),
            "charts": draw_charts(review) if draw else {}}


def draw_charts(review: dict) -> dict[str, str]:
    """The review's charts as inline SVG: trend, Pareto of scrap cost by pattern, each
    pattern against the target, and the p-chart of each flagged pattern."""
    target_pct = 100.0 * float(review["target"])
    cost = money_head("scrap cost", review)
    out = {"trend": charts.to_svg(charts.trend(views.review_trend(review), target_pct, cost)),
           "pareto": charts.to_svg(charts.pareto(views.review_pareto(review, "patterns", "cost", top=PARETO_BARS),
                                                 "pattern", cost, "pattern")),
           "target": charts.to_svg(charts.target_chance(views.review_target(review),
                                                        100.0 * SIGNAL_PROBABILITY))}
    for p in review["patterns"]:
        if p["problem"]:
            out["pchart:" + p["pattern"]] = charts.to_svg(charts.p_chart(views.review_pchart(review, p["pattern"]),
                                                                         target_pct), width=640)
    return out


# --- cells ------------------------------------------------------------------------------------

def _cell(column: str, v) -> str:
    if v is None or (isinstance(v, float) and numbers.missing(v)):
        return "-"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        if column.startswith("chance") and v >= 99.95:
            return "> 99.9"  # never "100.0": certainty is not what the figure says
        if "/year" in column or "cost" in column or "balance" in column:
            return numbers.money_text(v)
        if "(castings)" in column or column == "no.":
            return f"{int(v):,}"
        return f"{float(v):,.1f}" if "(%)" in column or "(mm)" in column or "(in)" in column else f"{v:,.4g}"
    return str(v)


def _rows(frame: pd.DataFrame) -> list[list[str]]:
    return [[_cell(c, v) for c, v in zip(frame.columns, row, strict=True)]
            for row in frame.astype(object).itertuples(index=False)]


def _pick(frame: pd.DataFrame, keys) -> pd.DataFrame:
    cols = [c for k in keys for c in frame.columns if c.startswith(k)]
    return frame[list(dict.fromkeys(cols + (["thermal check"] if "thermal check" in frame else [])))]


NUMERIC_HEADS = ("(%)", "(castings)", "/year)", "(mm)", "(in)")


def _html_table(frame: pd.DataFrame) -> str:
    if frame.empty:
        return '<p class="muted">None.</p>'
    numeric = [c.endswith(NUMERIC_HEADS) or c == "no." for c in frame.columns]
    e = html.escape
    head = "".join(f'<th class="n">{e(c)}</th>' if n else f"<th>{e(c)}</th>"
                   for c, n in zip(frame.columns, numeric, strict=True))
    body = "".join("<tr>" + "".join(f'<td class="n">{e(v)}</td>' if n else f"<td>{e(v)}</td>"
                                    for v, n in zip(row, numeric, strict=True)) + "</tr>"
                   for row in _rows(frame))
    return f'<div class="wide"><table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table></div>'


def _md_table(frame: pd.DataFrame) -> str:
    cells = _rows(frame)
    return md_table(list(range(len(cells))), [(c, lambda i, j=j: cells[i][j]) for j, c in enumerate(frame.columns)])


# --- the sections -----------------------------------------------------------------------------

def _texts(pack: dict) -> dict:
    review = pack["review"]
    flagged = int(pack["target"]["against the target"].eq("above the target (signal)").sum()) \
        if len(pack["target"]) else 0
    return {
        "target_head": "Against the target",
        "target_lead": (f"Each pattern against the target of {100 * float(review['target']):g} % as well as "
                        f"against its own centre: the {METHOD}. {flagged} pattern(s) signal above the target."),
        "suggestions_head": "Riser suggestions",
        "suggestions_lead": ("Riser changes for the flagged patterns, with the rate the reject model predicts "
                             "after the change, the yearly money balance in the currency of the log and the "
                             "thermal check of the suggested riser."),
        "actions_head": "Open actions",
        "actions_lead": "Actions decided at earlier reviews and not done yet, by due date (`pourback action list`).",
    }


def pack_sections_html(pack: dict) -> dict:
    """The pack's sections as HTML, by their place in the review page."""
    t = _texts(pack)
    e = html.escape
    chart = pack["charts"].get("target")
    target = [f"<section><h2>{t['target_head']}</h2><p class=\"muted\">{e(t['target_lead'])}</p>"
              + (f'<div class="chart">{chart}</div>' if chart else "")
              + _html_table(pack["target"]) + "</section>"]
    sug = [f"<section><h2>{t['suggestions_head']}</h2><p class=\"muted\">{e(t['suggestions_lead'])}</p>"
           + _html_table(_pick(pack["suggestions"], SUGGESTION_KEYS))
           + (f'<div class="caution"><strong>Caution.</strong> {e(SAFETY_CAUTION)}</div>' if pack["caution"] else "")
           + "</section>"]
    actions = [f"<section><h2>{t['actions_head']}</h2><p class=\"muted\">{e(t['actions_lead'])}</p>"
               + _html_table(actions_table(pack["actions"], done=False)) + "</section>"]
    return {"after_attention": target, "before_revisions": sug, "after_revisions": actions}


def pack_sections_md(pack: dict) -> dict:
    """The pack's sections as Markdown lines, by their place in the review."""
    t = _texts(pack)
    return {
        "after_attention": [f"## {t['target_head']}", "", t["target_lead"], "",
                            _md_table(pack["target"]) if len(pack["target"]) else "_none_", ""],
        "before_revisions": [f"## {t['suggestions_head']}", "", t["suggestions_lead"], "",
                             _md_table(_pick(pack["suggestions"], SUGGESTION_KEYS))
                             if len(pack["suggestions"]) else "_none_", ""]
        + ([f"> **Caution.** {md_cell(SAFETY_CAUTION)}", ""] if pack["caution"] else []),
        "after_revisions": [f"## {t['actions_head']}", "", t["actions_lead"], "",
                            _md_table(actions_table(pack["actions"], done=False)) if pack["actions"] else "_none_", ""],
    }


def render_pack(pack: dict, fmt: str = "html") -> str:
    """The pack as one self-contained HTML page or as Markdown."""
    if fmt == "html":
        return render_html(pack["review"], pack["charts"], pack_sections_html(pack))
    if fmt == "md":
        return report.render_md(pack["review"], pack_sections_md(pack))
    raise BadInput("format", fmt, "the review pack is written as " + " or ".join(PACK_FORMATS))


def pack_of(store, fmt: str = "html", system: str = units.METRIC, **review_args) -> str:
    """The pack of the review ``weekly_review(store, **review_args)``, in ``system`` units, as ``fmt``
    (what the dashboard's download gives; ``pourback review --format html|md`` builds the same)."""
    from tracker.review.weekly import in_system, weekly_review

    data = in_system(weekly_review(store, **review_args), system)
    return render_pack(build_pack(store, data, draw=fmt == "html", system=system), fmt)
