"""The weekly review as one self-contained HTML page: inline CSS, charts drawn
here as inline SVG, no scripts, no external fonts or images; prints on A4. Every
piece of user text (pattern codes, descriptions, notes, riser and zone codes)
goes through ``html.escape``."""

from __future__ import annotations

import html
import math

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
    is_number,
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

# --- SVG charts ---------------------------------------------------------------------------

INK = "#2b2b2b"
GRID = "#d9d9d9"
BAR = "#7f98ad"
LINE = "#2f4b66"
ALERT = "#b3261e"
LIMIT = "#8a6d3b"


def _e(s) -> str:
    return html.escape(str(s), quote=True)


def _nice_scale(v: float, most: int = 5) -> tuple[float, float]:
    """(top, step) of an axis from 0 that holds ``v`` in at most ``most`` round steps."""
    if not is_number(v) or v <= 0:
        return 1.0, 0.25
    exp = 10.0 ** math.floor(math.log10(v / most))
    for m in (1, 2, 2.5, 5, 10, 20):
        step = m * exp
        if math.ceil(v / step - 1e-9) <= most:
            return step * math.ceil(v / step - 1e-9), step
    return v, v  # not reached


def _fmt_tick(v: float, step: float) -> str:
    decimals = 0 if step >= 1 and float(step).is_integer() else max(1, -math.floor(math.log10(step)) + (
        0 if (step / 10.0 ** math.floor(math.log10(step))).is_integer() else 1))
    return f"{v:,.{decimals}f}"


class _Frame:
    """A plotting area: x by index of equally spaced slots, y linear from 0."""

    def __init__(self, n: int, ymax: float, width=720, height=260, left=58, right=20, top=18,
                 bottom=46, y2=False):
        self.n = max(n, 1)
        self.ymax, self.step = _nice_scale(ymax)
        self.w, self.h = width, height
        self.l, self.r, self.t, self.b = left, (62 if y2 else right), top, bottom
        self.pw = self.w - self.l - self.r
        self.ph = self.h - self.t - self.b

    def slot(self) -> float:
        return self.pw / self.n

    def x(self, i: float) -> float:
        return self.l + (i + 0.5) * self.slot()

    def y(self, v: float) -> float:
        return self.t + self.ph * (1 - min(max(v / self.ymax, 0.0), 1.0))

    def axes(self, ylabel: str, xlabels: list[str], every: int = 1, rotate: bool = False) -> list[str]:
        out = []
        ticks = [self.step * i for i in range(int(round(self.ymax / self.step)) + 1)]
        for v in ticks:
            y = self.y(v)
            out.append(f'<line x1="{self.l}" y1="{y:.1f}" x2="{self.w - self.r}" y2="{y:.1f}" '
                       f'stroke="{GRID}" stroke-width="1"/>')
            out.append(f'<text x="{self.l - 6}" y="{y + 4:.1f}" text-anchor="end" class="tick">'
                       f'{_fmt_tick(v, self.step)}</text>')
        out.append(f'<line x1="{self.l}" y1="{self.t + self.ph}" x2="{self.w - self.r}" '
                   f'y2="{self.t + self.ph}" stroke="{INK}" stroke-width="1"/>')
        out.append(f'<text x="14" y="{self.t + self.ph / 2:.1f}" text-anchor="middle" class="axis" '
                   f'transform="rotate(-90 14 {self.t + self.ph / 2:.1f})">{_e(ylabel)}</text>')
        base = self.t + self.ph + 14
        for i, lab in enumerate(xlabels):
            if i % every and i != len(xlabels) - 1:
                continue
            x = self.x(i)
            if rotate:
                out.append(f'<text x="{x:.1f}" y="{base:.1f}" text-anchor="end" class="tick" '
                           f'transform="rotate(-40 {x:.1f} {base:.1f})">{_e(lab)}</text>')
            else:
                out.append(f'<text x="{x:.1f}" y="{base:.1f}" text-anchor="middle" class="tick">{_e(lab)}</text>')
        return out

    def svg(self, body: list[str], title: str) -> str:
        return (f'<svg viewBox="0 0 {self.w} {self.h}" '
                f'width="100%" role="img" aria-label="{_e(title)}" class="chart">'
                f'<title>{_e(title)}</title>' + "".join(body) + "</svg>")


def _short_week(label: str) -> str:
    return label.split("-")[-1] if isinstance(label, str) else str(label)


def _polyline(points, color, width=2, dash=None) -> list[str]:
    """Polylines through (x, y) pairs, broken where a y is None."""
    out: list[str] = []
    run: list = []
    for x, y in points + [(None, None)]:
        if y is None:
            if len(run) > 1:
                d = " ".join(f"{a:.1f},{b:.1f}" for a, b in run)
                extra = f' stroke-dasharray="{dash}"' if dash else ""
                out.append(f'<polyline points="{d}" fill="none" stroke="{color}" '
                           f'stroke-width="{width}"{extra}/>')
            run = []
        else:
            run.append((x, y))
    return out


def svg_trend(review: dict) -> str:
    """Weekly reject rate of all patterns (%) with its interval band and the target."""
    rows = review["trend"]["overall"]
    rates = [r["reject_rate"] for r in rows]
    his = [r["wilson_high"] for r in rows if is_number(r["reject_rate"])]
    top = (100 * max([*(v for v in rates if is_number(v)), *his, review["target"]]))  # never empty: the target is in it
    f = _Frame(len(rows), top, right=96)
    body = f.axes("Reject rate (%)", [_short_week(r["week"]) for r in rows], every=max(1, len(rows) // 13))
    band_top = [(f.x(i), f.y(100 * r["wilson_high"])) for i, r in enumerate(rows) if is_number(r["reject_rate"])]
    band_low = [(f.x(i), f.y(100 * r["wilson_low"])) for i, r in enumerate(rows) if is_number(r["reject_rate"])]
    if len(band_top) > 1:
        pts = " ".join(f"{x:.1f},{y:.1f}" for x, y in band_top + band_low[::-1])
        body.append(f'<polygon points="{pts}" fill="{BAR}" fill-opacity="0.25" stroke="none"/>')
    ty = f.y(100 * review["target"])
    body.append(f'<line x1="{f.l}" y1="{ty:.1f}" x2="{f.w - f.r}" y2="{ty:.1f}" stroke="{ALERT}" '
                f'stroke-width="1.5" stroke-dasharray="6 4"/>')
    body.append(f'<text x="{f.w - f.r + 6}" y="{ty + 4:.1f}" class="note">'
                f'target {pct(review["target"])} %</text>')
    dots = [(f.x(i), f.y(100 * v) if is_number(v) else None) for i, v in enumerate(rates)]
    body += _polyline(dots, LINE)
    for x, y in dots:
        if y is not None:
            body.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3.5" fill="{LINE}"/>')
    return f.svg(body, "Weekly reject rate, all patterns")


PARETO_BARS = 15


def svg_pareto(review: dict) -> str:
    """Scrap cost by pattern, largest first, with the cumulative share (%) on the right."""
    rows = [r for r in review["pareto"]["patterns_by_cost"] if is_number(r["scrap_cost"])]
    if len(rows) > PARETO_BARS:
        rest = rows[PARETO_BARS - 1:]
        rows = rows[:PARETO_BARS - 1] + [{"pattern": f"{len(rest)} others",
                                          "scrap_cost": sum(r["scrap_cost"] for r in rest),
                                          "cumulative_share": 1.0}]
    top = (max([r["scrap_cost"] for r in rows] or [1.0]))
    f = _Frame(len(rows), top, height=300, bottom=78, y2=True)
    body = f.axes(cost_head(review), [r["pattern"] for r in rows], rotate=True)
    bw = f.slot() * 0.7
    for i, r in enumerate(rows):
        y = f.y(r["scrap_cost"])
        body.append(f'<rect x="{f.x(i) - bw / 2:.1f}" y="{y:.1f}" width="{bw:.1f}" '
                    f'height="{f.t + f.ph - y:.1f}" fill="{BAR}"><title>{_e(r["pattern"])}: '
                    f'{money(r["scrap_cost"])}</title></rect>')
    # right axis: cumulative share 0..100 %
    xr = f.w - f.r
    for v in (0, 25, 50, 75, 100):
        y = f.t + f.ph * (1 - v / 100)
        body.append(f'<text x="{xr + 6}" y="{y + 4:.1f}" class="tick">{v}</text>')
    body.append(f'<text x="{f.w - 16}" y="{f.t + f.ph / 2:.1f}" text-anchor="middle" class="axis" '
                f'transform="rotate(90 {f.w - 16} {f.t + f.ph / 2:.1f})">Cumulative share (%)</text>')
    y80 = f.t + f.ph * 0.2
    body.append(f'<line x1="{f.l}" y1="{y80:.1f}" x2="{xr}" y2="{y80:.1f}" stroke="{GRID}" '
                f'stroke-dasharray="3 3"/>')
    pts = [(f.x(i), f.t + f.ph * (1 - (r.get("cumulative_share") or 0))) for i, r in enumerate(rows)]
    body += _polyline(pts, LINE)
    for x, y in pts:
        body.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3" fill="#fff" stroke="{LINE}" stroke-width="1.5"/>')
    return f.svg(body, "Scrap cost by pattern with cumulative share")


def svg_pchart(pattern: dict) -> str:
    """Weekly p-chart of one pattern: rate (%), centre, limits, signalled points marked."""
    pts = pattern.get("pchart") or []
    vals = [p["p"] for p in pts if is_number(p["p"])] + [p["ucl"] for p in pts if is_number(p["ucl"])]
    top = (100 * max(vals or [0.01]))
    f = _Frame(len(pts), top, height=220, right=104)
    body = f.axes("Reject rate (%)", [_short_week(p["label"]) for p in pts], every=max(1, len(pts) // 13))
    half = f.slot() / 2
    for key, color, dash in (("ucl", LIMIT, "5 3"), ("lcl", LIMIT, "5 3")):
        for i, p in enumerate(pts):
            if is_number(p[key]) and (key == "ucl" or p[key] > 0):
                ly = f.y(100 * p[key])
                body.append(f'<line x1="{f.x(i) - half:.1f}" y1="{ly:.1f}" x2="{f.x(i) + half:.1f}" '
                            f'y2="{ly:.1f}" stroke="{color}" stroke-width="1.5" stroke-dasharray="{dash}"/>')
    centre = next((p["centre"] for p in pts if is_number(p["centre"])), None)
    if centre is not None:
        cy = f.y(100 * centre)
        body.append(f'<line x1="{f.l}" y1="{cy:.1f}" x2="{f.w - f.r}" y2="{cy:.1f}" stroke="{INK}" '
                    f'stroke-width="1"/>')
        body.append(f'<text x="{f.w - f.r + 6}" y="{cy + 4:.1f}" class="note">'
                    f'centre {pct(centre, 2)} %</text>')
    line = [(f.x(i), f.y(100 * p["p"]) if is_number(p["p"]) else None) for i, p in enumerate(pts)]
    body += _polyline(line, LINE, width=1.5)
    for (x, y), p in zip(line, pts, strict=False):
        if y is None:
            continue
        tip = (f'{_e(p["label"])}: {pct(p["p"], 2)} % of {count(p["inspected"])} castings'
               + (" (signal)" if p["signal"] else ""))
        if p["signal"]:
            # filled: more rejects than usual; hollow: fewer (a signal on the good side)
            high = is_number(p["centre"]) and p["p"] > p["centre"]
            fill = ALERT if high else "#fff"
            body.append(f'<path d="M{x:.1f},{y - 7:.1f} L{x + 7:.1f},{y:.1f} L{x:.1f},{y + 7:.1f} '
                        f'L{x - 7:.1f},{y:.1f} Z" fill="{fill}" stroke="{INK}" stroke-width="1.2">'
                        f'<title>{tip}</title></path>')
        else:
            body.append(f'<circle cx="{x:.1f}" cy="{y:.1f}" r="3.5" fill="{LINE}"><title>{tip}</title></circle>')
    return f.svg(body, f"Weekly p-chart of {pattern['pattern']}")


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
.chart { max-width: 100%; height: auto; display: block; margin: 4px 0 8px; }
.chart .tick { font-size: 11px; fill: #444; }
.chart .axis { font-size: 12px; fill: #222; }
.chart .note { font-size: 11px; fill: #444; }
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
@page { size: A4; margin: 12mm; }
@media print {
  body { padding: 0; max-width: none; font-size: 10.5pt; }
  table { font-size: 8pt; }
  th, td { padding: 2px 3px; }
  .wide { overflow: visible; }
  h2 { break-after: avoid; page-break-after: avoid; }
  table, .chart, .caution, .card { break-inside: avoid; page-break-inside: avoid; }
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


PCHART_LEGEND = ('<p class="legend">How to read the charts. Dots: weekly reject rate (%). Solid line: the '
                 'pattern\'s rate over the window. Dashed: control limits (exact binomial limits for each week\'s '
                 'castings inspected: an in-control week falls beyond either with at most 0.135 % chance). '
                 'Diamonds: weeks that break a rule (beyond a limit, or 8 in a row on one side); '
                 'filled red above the centre (more rejects), hollow below it (fewer).</p>')


def render_html(review: dict) -> str:
    """The review as one self-contained HTML page (inline CSS and SVG, no scripts)."""
    out = _html_head(review) + _html_cards(review) + _html_attention(review)
    c = confidence_text(review)
    out.append(f"<section><h2>Changes since {_e(review['changes']['previous_week'])}</h2><ul class=\"changes\">"
               + "".join(f"<li>{_e(s)}</li>" for s in change_lines(review)) + "</ul></section>")

    out.append("<section><h2>Weekly trend, all patterns</h2>")
    out.append(svg_trend(review))
    out.append(f'<p class="legend">Line: reject rate (%) of each week\'s inspected castings; band: its {c} '
               'interval; dashed red: target.</p>')
    cols = trend_columns(review)
    out.append(_html_table(review["trend"]["overall"], cols, _numeric_heads(cols)) + "</section>")

    out.append("<section><h2>Scrap by pattern</h2>")
    out.append(svg_pareto(review))
    out.append('<p class="legend">Bars: scrap cost over the window, largest first. Line: cumulative share '
               '(%) of the window\'s scrap cost; dotted: 80 %.</p>')
    cols = _html_pattern_columns(review)
    out.append(_html_table(review["patterns"], cols, _numeric_heads(cols),
                           row_class=lambda p: "problem" if p["problem"] else "") + "</section>")

    cols = defect_columns(review)
    out.append("<section><h2>Scrap by defect</h2>"
               + _html_table(review["defects"], cols, _numeric_heads(cols)) + "</section>")
    out += _html_revisions(review) + _html_track_record(review) + _html_notes(review)
    out.append(f"<footer>Rates: {_e(review.get('rate_basis', ''))}. Counts in castings; costs in "
               f"{_e(review.get('currency') or DEFAULT_CURRENCY)}; weights in "
               f"{units.symbol('mass_kg', review.get('unit_system', units.METRIC))}. Rework is counted apart and "
               "is not scrap. Rejects count against the week the lot was poured.</footer></body></html>")
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


def _html_cards(review: dict) -> list[str]:
    """The headline figures as cards: the review week's and the window's."""
    t = review["totals"]
    wk, win = t["week"], t["window"]
    cards = [
        ("Review week: rejected (castings)", count(wk["rejected"])),
        ("Review week: reject rate (%)", pct(wk["reject_rate"], 2)),
        (f"Review week: {cost_head(review).lower()}", money(wk["scrap_cost"])),
        ("Window: reject rate (%)", pct(win["reject_rate"], 2)),
        (f"Window: {cost_head(review).lower()}", money(win["scrap_cost"])),
        ("Patterns needing attention", str(sum(1 for p in review["patterns"] if p["problem"]))),
    ]
    return ['<div class="cards">' + "".join(
        f'<div class="card"><div class="v">{_e(v)}</div><div class="k">{_e(k)}</div></div>' for k, v in cards)
        + "</div>"]


def _html_attention(review: dict) -> list[str]:
    """The problem patterns, each with its figures and its control chart."""
    probs = [p for p in review["patterns"] if p["problem"]]
    c = confidence_text(review)
    out = [f"<section><h2>Needs attention ({len(probs)})</h2>"]
    if not probs:
        out.append('<p class="muted">No pattern is above target or signalling in the latest two weeks.</p>')
    else:
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
        out.append(svg_pchart(p) + "</div>")
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
    cols = plant_columns()
    head = plants_head(d)
    return "\n".join(["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
                      f"<title>{_e(head[0])}</title><style>{CSS}</style></head><body>",
                      f"<header><h1>{_e(head[0])}</h1>",
                      *(f'<p class="sub">{_e(h)}</p>' for h in head[1:]), "</header>",
                      _html_table(d["plants"], cols, {h for h, _ in cols[1:-1]}),
                      "</body></html>", ""])
