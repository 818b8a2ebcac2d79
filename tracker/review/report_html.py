"""The weekly review as one self-contained HTML page: inline CSS, no scripts, no
external fonts or images; prints on A4 and Letter (``@page`` without a fixed
size, page breaks between table rows, never inside one). Every piece of user
text (pattern codes, descriptions, notes, riser and zone codes) goes through
``html.escape``.

The charts are not drawn here: the review pack (:mod:`tracker.views.pack`)
renders the dashboard's own chart specifications to inline SVG and hands them
in (``charts``), with the pack's extra sections (``sections``). Without them
the page is the review's tables alone."""

from __future__ import annotations

import html

from tracker import units
from tracker.cautions import SAFETY_CAUTION
from tracker.log.settings import DEFAULT_CURRENCY
from tracker.review.report_parts import (
    VERDICT_TEXT,
    change_lines,
    confidence_text,
    cost_head,
    count,
    defect_columns,
    diff_text,
    interval_text,
    money,
    pattern_columns,
    pct,
    plant_columns,
    plants_head,
    pval,
    reason_text,
    track_record_columns,
    track_record_note,
    trend_columns,
    verdict_castings_text,
)


def _e(s) -> str:
    return html.escape(str(s), quote=True)


# --- HTML ---------------------------------------------------------------------------------

CSS = """
:root { --ink: #222; --muted: #5c5c5c; --line: #d0d0d0; --soft: #f3f4f5; --alert: #b3261e; }
* { box-sizing: border-box; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
       color: var(--ink); margin: 0 auto; max-width: 1100px; padding: 24px 28px 40px; line-height: 1.4;
       font-size: 14px; background: #fff; }
h1 { font-size: 24px; margin: 0 0 4px; }
h2 { font-size: 18px; margin: 28px 0 8px; padding-bottom: 4px; border-bottom: 2px solid var(--ink); }
h3 { font-size: 15px; margin: 16px 0 4px; }
p.sub, .muted { color: var(--muted); margin: 2px 0; }
table { border-collapse: collapse; width: 100%; margin: 6px 0 10px; font-size: 12.5px; }
th, td { border-bottom: 1px solid var(--line); padding: 4px 6px; text-align: left; vertical-align: top; }
th { background: var(--soft); font-weight: 600; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
td.n { white-space: nowrap; }
.wide { overflow-x: auto; }
table.before-after { width: auto; min-width: 60%; }
tr.problem td:first-child { border-left: 4px solid var(--alert); font-weight: 600; }
.cards { display: grid; grid-template-columns: repeat(auto-fit, minmax(150px, 1fr)); gap: 10px;
         margin: 12px 0; }
.card { border: 1px solid var(--line); padding: 8px 12px; }
.revision { border-top: 1px solid var(--line); padding-top: 6px; break-inside: avoid;
            page-break-inside: avoid; }
.card .v { font-size: 20px; font-weight: 600; }
.card .k { color: var(--muted); font-size: 12px; }
.flag { color: var(--alert); font-weight: 600; }
.caution { border: 1px solid var(--ink); border-left: 6px solid var(--ink); padding: 8px 12px;
           margin: 10px 0; background: var(--soft); }
.chart { margin: 4px 0 8px; break-inside: avoid; page-break-inside: avoid; }
.chart svg { max-width: 100%; height: auto; display: block; }
.legend { font-size: 12px; color: var(--muted); margin: 0 0 8px; }
.small { font-size: 11px; font-weight: normal; }
.pchart { break-inside: avoid; page-break-inside: avoid; }
ul.changes { margin: 4px 0 8px 18px; padding: 0; }
footer { margin-top: 28px; color: var(--muted); font-size: 12px; border-top: 1px solid var(--line);
         padding-top: 8px; }
@media (max-width: 900px) {  /* a tablet: every table fits the width, no sideways scrolling */
  body { padding: 16px 12px 32px; }
  table { font-size: 11.5px; }
  th, td { padding: 3px 4px; }
  th { hyphens: auto; overflow-wrap: anywhere; }
  td.n { white-space: normal; }
}
@page { margin: 12mm; }  /* the printer's paper: A4 or Letter */
@media print {
  body { padding: 0; max-width: none; font-size: 10.5pt; }
  table { font-size: 8pt; }
  th, td { padding: 2px 3px; overflow-wrap: anywhere; }
  td.n { white-space: normal; }
  .wide { overflow: visible; }
  h2, h3 { break-after: avoid; page-break-after: avoid; }
  thead { display: table-header-group; }  /* a table that runs on repeats its heading */
  tr, .chart, .caution, .card { break-inside: avoid; page-break-inside: avoid; }
  th { background: #eee !important; -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""


class _Markup(str):
    """HTML built here from escaped parts; written as it is."""


def _h(v) -> str:
    return v if isinstance(v, _Markup) else _e(v)


def _html_pattern_columns(review):
    """The pattern table of the page: description and alloy under the code, to fit A4."""
    def code(p):
        sub = " · ".join(_e(x) for x in (p.get("description"), p.get("alloy")) if x)
        return _Markup(f"{_e(p['pattern'])}" + (f'<br><span class="muted small">{sub}</span>' if sub else ""))
    cols = [c for c in pattern_columns(review) if c[0] not in ("Pattern", "Description", "Alloy")]
    return [("Pattern", code), *cols]


def _html_table(items, columns, numeric=(), row_class=None, table_class=None) -> str:
    if not items:
        return '<p class="muted">None.</p>'
    head = "".join(f'<th class="n">{_e(h)}</th>' if h in numeric else f"<th>{_e(h)}</th>"
                   for h, _ in columns)
    body = []
    for it in items:
        cls = f' class="{row_class(it)}"' if row_class and row_class(it) else ""
        tds = "".join(f'<td class="n">{_h(f(it))}</td>' if h in numeric else f"<td>{_h(f(it))}</td>"
                      for h, f in columns)
        body.append(f"<tr{cls}>{tds}</tr>")
    cls = f' class="{table_class}"' if table_class else ""
    return (f'<div class="wide"><table{cls}><thead><tr>{head}</tr></thead>'
            f"<tbody>{''.join(body)}</tbody></table></div>")


def _numeric_heads(columns, skip=("Pattern", "Description", "Alloy", "Signal", "Problem", "Week", "Defect")):
    return {h for h, _ in columns if h not in skip and not h.startswith(("Revision", "From", "Changed",
                                                                          "Verdict"))}


def _html_revision(review: dict, r: dict) -> str:
    changed = "; ".join(f"{c['riser']} ({', '.join(c['zones'])}): {c['change']}"
                        for c in r.get("riser_changes", [])) or "no riser changed"
    zones = ", ".join(r["changed_zones"]) or "all zones"
    every = r["all_defects"]
    rows = [
        {"k": f"Before, revision {r['previous_revision'] or '-'}", "p": r["before"], "rate": r["rate_before"],
         "all": every["rate_before"]},
        {"k": f"After, revision {r['revision']}", "p": r["after"], "rate": r["rate_after"],
         "all": every["rate_after"]},
    ]
    cols = [
        ("", lambda x: x["k"]),
        ("Poured from – to", lambda x: f"{x['p']['start'] or '-'} – {x['p']['end']}"),
        ("Lots", lambda x: count(x["p"]["lots"])),
        ("Inspected (castings)", lambda x: count(x["p"]["inspected"])),
        (f"Shrinkage rejects, {zones} (castings)", lambda x: count(x["p"]["shrinkage_rejected"])),
        ("Shrinkage rate (%)", lambda x: pct(x["rate"], 2)),
        ("All rejects (castings)", lambda x: count(x["p"]["rejected"])),
        ("All-defect rate (%)", lambda x: pct(x["all"], 2)),
    ]
    numeric = {h for h, _ in cols[2:]}
    verdict = VERDICT_TEXT.get(r["verdict"], r["verdict"])
    flag = ' class="flag"' if r["verdict"] == "worse" else ""
    return (f'<div class="revision"><h3>{_e(r["pattern"])}: revision {_e(r["previous_revision"] or "-")} '
            f'→ {_e(r["revision"])}, from {_e(r["effective_from"])} — <span{flag}>{_e(verdict)}</span></h3>'
            f"<p>Changed: {_e(changed)}. Compared: {_e(r.get('zone_basis', ''))}.</p>"
            + _html_table(rows, cols, numeric, table_class="before-after")
            + f"<p>Change in shrinkage rate {_e(diff_text(r))} percentage points "
              f"({confidence_text(review)} interval); "
              f"Fisher's exact test p = {_e(pval(r['p_value']))}; chance these castings would show a "
              f"halving of the rate: {pct(r.get('power_to_halve'), 0)} %.</p>"
            + (f"<p>Predicted after the change: {pct(r.get('predicted_rate_after'), 2)} %; castings still "
               f"needed for a verdict: {_e(verdict_castings_text(r))}.</p>"
               if r.get("more_castings_to_verdict") is not None else "")
            + "</div>")


PCHART_LEGEND = ('<p class="legend">How to read the charts. Line and dots: weekly reject rate (%). Dashed '
                 'grey line: the pattern\'s centre, its rate over the window. Shaded bar of each week: its '
                 'control limits (exact binomial limits for that week\'s castings inspected: an in-control week '
                 'falls outside with at most 0.135 % chance each side). Triangles: weeks that break a rule '
                 '(beyond a limit, or 8 in a row on one side). Dashed orange line: the target.</p>')


def _chart(charts: dict | None, key: str) -> str:
    """The inline SVG of chart ``key`` handed in by the pack ("" without one)."""
    svg = (charts or {}).get(key)
    return f'<div class="chart">{svg}</div>' if svg else ""


def render_html(review: dict, charts: dict | None = None, sections: dict | None = None) -> str:
    """The review as one self-contained HTML page (inline CSS and SVG, no scripts).

    charts: inline SVG by name ("trend", "pareto", "pchart:" + pattern code),
    drawn by :mod:`tracker.views.pack`; sections: more HTML sections by place
    ("after_attention", "before_revisions", "after_revisions"), already escaped.
    """
    extra = sections or {}
    out = _html_head(review) + _html_cards(review) + _html_attention(review, charts)
    out += extra.get("after_attention", [])
    c = confidence_text(review)
    out.append(f"<section><h2>Changes since {_e(review['changes']['previous_week'])}</h2><ul class=\"changes\">"
               + "".join(f"<li>{_e(s)}</li>" for s in change_lines(review)) + "</ul></section>")

    out.append("<section><h2>Weekly trend, all patterns</h2>")
    out.append(_chart(charts, "trend"))
    out.append(f'<p class="legend">Line: reject rate (%) of each week\'s inspected castings; band: its {c} '
               'interval; dashed orange: target.</p>')
    cols = trend_columns(review)
    out.append(_html_table(review["trend"]["overall"], cols, _numeric_heads(cols)) + "</section>")

    out.append("<section><h2>Scrap by pattern</h2>")
    out.append(_chart(charts, "pareto"))
    out.append('<p class="legend">Bars: scrap cost over the window, largest first (faded after the patterns '
               'that make up 80 %). Line: cumulative share (%) of the window\'s scrap cost.</p>')
    cols = _html_pattern_columns(review)
    out.append(_html_table(review["patterns"], cols, _numeric_heads(cols),
                           row_class=lambda p: "problem" if p["problem"] else "") + "</section>")

    cols = defect_columns(review)
    out.append("<section><h2>Scrap by defect</h2>"
               + _html_table(review["defects"], cols, _numeric_heads(cols)) + "</section>")
    out += (extra.get("before_revisions", []) + _html_revisions(review) + _html_track_record(review)
            + extra.get("after_revisions", []))
    out += _html_notes(review)
    out.append(f"<footer>Rates: {_e(review.get('rate_basis', ''))}. Counts in castings; costs in "
               f"{_e(review.get('currency') or DEFAULT_CURRENCY)}; weights in "
               f"{units.symbol('mass_kg', review.get('unit_system', units.METRIC))}. Rework is counted apart and "
               "is not scrap. Rejects count against the week the lot was poured. "
               f"{_e(review.get('run_rule_note', ''))}</footer></body></html>")
    return "\n".join(out) + "\n"


def _html_head(review: dict) -> list[str]:
    """The page's head and its title block: week, window and target."""
    w = review["window"]
    return ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
            '<meta name="viewport" content="width=device-width, initial-scale=1">',
            f"<title>Scrap review {_e(review['week'])}</title><style>{CSS}</style></head><body>",
            f"<header><h1>Scrap review, week {_e(review['week'])}"
            + (f", plant {_e(review['plant'])}" if review.get("plant") else "") + "</h1>",
            f'<p class="sub">{_e(review["week_start"])} to {_e(review["week_end"])} · figures over '
            f'{w["weeks"]} weeks, {_e(w["first_week"])} to {_e(w["last_week"])} ({_e(w["start"])} to '
            f'{_e(w["end"])}) · target reject rate {pct(review["target"])} %</p></header>']


def _lower_first(text: str) -> str:
    """"Scrap cost (EUR)" -> "scrap cost (EUR)": the currency code keeps its capitals."""
    return text[:1].lower() + text[1:]


def _html_cards(review: dict) -> list[str]:
    """The headline figures as cards: the review week's and the window's."""
    t = review["totals"]
    wk, win = t["week"], t["window"]
    cards = [
        ("Review week: rejected (castings)", count(wk["rejected"])),
        ("Review week: reject rate (%)", pct(wk["reject_rate"], 2)),
        (f"Review week: {_lower_first(cost_head(review))}", money(wk["scrap_cost"])),
        ("Window: reject rate (%)", pct(win["reject_rate"], 2)),
        (f"Window: {_lower_first(cost_head(review))}", money(win["scrap_cost"])),
        ("Patterns needing attention", str(sum(1 for p in review["patterns"] if p["problem"]))),
    ]
    return ['<div class="cards">' + "".join(
        f'<div class="card"><div class="v">{_e(v)}</div><div class="k">{_e(k)}</div></div>' for k, v in cards)
        + "</div>"]


def _html_attention(review: dict, charts: dict | None = None) -> list[str]:
    """The problem patterns, each with its figures and its control chart."""
    probs = [p for p in review["patterns"] if p["problem"]]
    c = confidence_text(review)
    out = [f"<section><h2>Needs attention ({len(probs)})</h2>"]
    if not probs:
        out.append('<p class="muted">No pattern is above target or signalling in the latest two weeks.</p>')
    elif charts:
        out.append(PCHART_LEGEND)
    for p in probs:
        desc = f" — {_e(p['description'])}" if p.get("description") else ""
        zones = ", ".join(f"{_e(z)} {count(n)}" for z, n in (p.get("shrinkage_by_zone") or {}).items())
        defects = ", ".join(f"{_e(d)} {count(n)}" for d, n in (p.get("by_defect") or {}).items())
        out.append(f'<div class="pchart"><h3>{_e(p["pattern"])}{desc}</h3>'
                   f'<p><span class="flag">{_e(reason_text(p["problem_reasons"]))}</span>. '
                   f'Window: {count(p["rejected"])} of {count(p["inspected"])} castings rejected '
                   f'({pct(p["reject_rate"])} %, {c} interval {interval_text(p["wilson_low"], p["wilson_high"])} %), '
                   f'scrap cost {money(p["scrap_cost"])}. Rejects by defect: {defects or "none"}. '
                   f'Shrinkage rejects by zone: {zones or "none"}.</p>')
        out.append(_chart(charts, "pchart:" + p["pattern"]) + "</div>")
    out.append("</section>")
    return out


def _html_revisions(review: dict) -> list[str]:
    """The riser revisions under judgement, each with its before and after."""
    out = ["<section><h2>Riser revisions</h2>",
           '<p class="muted">Revisions that took effect in the window, or are still being judged. '
           'Shrinkage rejects in the zones of the changed risers, lots under the previous revision '
           'against lots since the change (Fisher\'s exact test); rates in %, change in percentage '
           'points with its interval.</p>']
    if not review["revisions"]:
        out.append('<p class="muted">None.</p>')
    for r in review["revisions"]:
        out.append(_html_revision(review, r))
    if review["revisions"]:
        out.append(f'<div class="caution"><strong>Caution.</strong> {_e(SAFETY_CAUTION)}</div>')
    out.append("</section>")
    return out


def _html_track_record(review: dict) -> list[str]:
    """The model's track record on the revisions under judgement (nothing where the review has none)."""
    record = review.get("track_record")
    if not record:
        return []
    out = ["<section><h2>Track record</h2>", f'<p class="muted">{_e(track_record_note(record))}</p>']
    if record["revisions"]:
        cols = track_record_columns()
        out.append(_html_table(record["revisions"], cols, {h for h, _ in cols[5:10]}))
    return out + ["</section>"]


def _html_notes(review: dict) -> list[str]:
    """The inspectors' notes of the review week (nothing without notes)."""
    if not review.get("notes"):
        return []
    cols = [("Pattern", lambda n: n["pattern"]), ("Lot", lambda n: n["lot"]),
            ("Poured", lambda n: n["poured_on"]), ("Result", lambda n: n["result"]),
            ("Defect", lambda n: n.get("defect") or "-"), ("Zone", lambda n: n.get("zone") or "-"),
            ("Castings", lambda n: count(n["quantity"])), ("Note", lambda n: n["notes"])]
    return ["<section><h2>Inspectors' notes, review week</h2>"
            + _html_table(review["notes"], cols, {"Castings"}) + "</section>"]


def render_plants_html(d: dict) -> str:
    """A plant comparison (:func:`tracker.review.plants.compare_plants`) as one HTML page."""
    cols = plant_columns(d.get("currency"))
    head = plants_head(d)
    return "\n".join(["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
                      f"<title>{_e(head[0])}</title><style>{CSS}</style></head><body>",
                      f"<header><h1>{_e(head[0])}</h1>",
                      *(f'<p class="sub">{_e(h)}</p>' for h in head[1:]), "</header>",
                      _html_table(d["plants"], cols, {h for h, _ in cols[1:-1]}),
                      "</body></html>", ""])
