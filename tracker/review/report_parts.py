"""The wording and the tables every format of the weekly review's report shares
(:mod:`tracker.review.report` renders text, Markdown, CSV and JSON;
:mod:`tracker.review.report_html` the HTML page): rates in %, counts in castings,
costs in the log's currency."""

from __future__ import annotations

import html
import math
import re

from tracker.log.settings import DEFAULT_CURRENCY

# --- wording --------------------------------------------------------------------------

REASON_TEXT = {
    "signal:beyond_limit": "a recent week lies above its control limit",
    "signal:run_of_8": "8 or more weeks in a row above its usual rate",
    "shrinkage_above_target": "shrinkage reject rate above target",
    "rejects_above_target": "reject rate above target",
}
VERDICT_TEXT = {
    "improved": "improved (fewer shrinkage rejects)",
    "worse": "worse (more shrinkage rejects)",
    "no_clear_change": "no clear change",
    "not_enough_data": "too few castings to judge yet",
}
RULE_TEXT = {"beyond_limit": "beyond a limit", "run_of_8": "run of 8"}


def reason_text(reasons) -> str:
    """Plain words for a pattern's ``problem_reasons``."""
    return "; ".join(REASON_TEXT.get(r, r) for r in reasons or [])


def is_number(v) -> bool:
    """A finite int or float (not a bool, not text): what the report shows as a number."""
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def pct(v, digits: int = 1) -> str:
    """A fraction as a percentage without its unit ("-" otherwise). Not numbers.pct_text: that
    one reads numeric text and bools as numbers, where the report shows "-"."""
    return f"{100.0 * v:.{digits}f}" if is_number(v) else "-"


def count(v) -> str:
    """A whole number of castings, thousands separated ("-" where not a number)."""
    return f"{int(v):,}" if is_number(v) else "-"


def money(v) -> str:
    """Whole currency units ("-" for what :func:`is_number` refuses; see :func:`pct` on why local)."""
    return f"{v:,.0f}" if is_number(v) else "-"


def cost_head(review) -> str:
    """"Scrap cost (EUR)": the heading of a money column, naming the log's currency."""
    return f"Scrap cost ({review.get('currency') or DEFAULT_CURRENCY})"


def pval(v) -> str:
    if not is_number(v):
        return "-"
    return f"{v:.2g}" if v < 0.001 else f"{v:.3f}"


def yes(v) -> str:
    return "yes" if v else "no"


def interval_text(lo, hi) -> str:
    return f"{pct(lo)} to {pct(hi)}" if is_number(lo) and is_number(hi) else "-"


def confidence_text(review) -> str:
    return f"{100 * review.get('confidence', 0.95):g} %"


def diff_text(d) -> str:
    if not is_number(d.get("difference")):
        return "-"
    return (f"{100 * d['difference']:+.1f} ({100 * d['diff_low']:+.1f} to {100 * d['diff_high']:+.1f})"
            if is_number(d.get("diff_low")) else f"{100 * d['difference']:+.1f}")


# --- tables shared by the text formats ----------------------------------------------------

def pattern_columns(review):
    c = confidence_text(review)
    return [
        ("Pattern", lambda p: p["pattern"]),
        ("Description", lambda p: p.get("description") or "-"),
        ("Alloy", lambda p: p.get("alloy") or "-"),
        ("Poured (castings)", lambda p: count(p["poured"])),
        ("Inspected (castings)", lambda p: count(p.get("inspected"))),
        ("Rejected (castings)", lambda p: count(p["rejected"])),
        ("Reworked (castings)", lambda p: count(p.get("reworked"))),
        ("Reject rate (%)", lambda p: pct(p["reject_rate"])),
        (f"{c} interval (%)", lambda p: interval_text(p["wilson_low"], p["wilson_high"])),
        ("Shrinkage rejects (castings)", lambda p: count(p["shrinkage_rejected"])),
        (cost_head(review), lambda p: money(p["scrap_cost"])),
        ("Week rate (%)", lambda p: pct(p.get("week_reject_rate"))),
        ("Signal", signal_text),
        ("Problem", lambda p: yes(p["problem"])),
    ]


def signal_text(p) -> str:
    """Rules firing in the latest weeks; "(low)" marks a signal below the centre (fewer rejects)."""
    high = set(p.get("signal_high_rules") or [])
    return ", ".join(RULE_TEXT.get(r, r) + ("" if r in high else " (low)")
                     for r in p["signal_rules"]) or "-"


TERMINAL_HEADS = ("Pattern", "Poured (castings)", "Rejected (castings)", "Reject rate (%)",
                  "interval (%)", "Shrinkage rejects (castings)", "Scrap cost", "Week rate (%)",
                  "Signal", "Problem")


def trend_columns(review):
    return [
        ("Week", lambda w: w["week"]),
        ("Poured (castings)", lambda w: count(w["poured"])),
        ("Inspected (castings)", lambda w: count(w["inspected"])),
        ("Rejected (castings)", lambda w: count(w["rejected"])),
        ("Reject rate (%)", lambda w: pct(w["reject_rate"])),
        (cost_head(review), lambda w: money(w["scrap_cost"])),
    ]


def defect_columns(review):
    return [
        ("Defect", lambda d: d["defect"]),
        ("Rejected (castings)", lambda d: count(d["rejected"])),
        (cost_head(review), lambda d: money(d["scrap_cost"])),
        ("Share of cost (%)", lambda d: pct(d["share"])),
        ("Cumulative (%)", lambda d: pct(d["cumulative_share"])),
    ]


def revision_columns():
    return [
        ("Pattern", lambda r: r["pattern"]),
        ("Revision", lambda r: f"{r['previous_revision'] or '-'} → {r['revision']}"),
        ("From", lambda r: r["effective_from"]),
        ("Changed risers", lambda r: "; ".join(f"{c['riser']} ({', '.join(c['zones'])}): {c['change']}"
                                               for c in r.get("riser_changes", [])) or "none"),
        ("Inspected before / after (castings)",
         lambda r: f"{count(r['before']['inspected'])} / {count(r['after']['inspected'])}"),
        ("Shrinkage rate before (%)", lambda r: pct(r["rate_before"], 2)),
        ("after (%)", lambda r: pct(r["rate_after"], 2)),
        ("Change (points, interval)", lambda r: diff_text(r)),
        ("p-value", lambda r: pval(r["p_value"])),
        ("Verdict", lambda r: VERDICT_TEXT.get(r["verdict"], r["verdict"])),
        ("Predicted after (%)", lambda r: pct(r.get("predicted_rate_after"), 2)),
        ("More castings to a verdict", lambda r: verdict_castings_text(r)),
        ("All defects before / after (%)",
         lambda r: f"{pct(r['all_defects']['rate_before'], 2)} / {pct(r['all_defects']['rate_after'], 2)}"),
    ]


def cell_rows(items, columns):
    return [[str(f(it)) for _, f in columns] for it in items]


_NUMBER = r"[-+]?[\d,]*\.?\d+"
_NUMERIC_CELL = re.compile(rf"^(-|{_NUMBER}( to {_NUMBER})?|{_NUMBER} / {_NUMBER})$")


def numeric_text(s: str) -> bool:
    return bool(_NUMERIC_CELL.match(s))


def text_table(items, columns) -> str:
    if not items:
        return "  (none)"
    heads = [h for h, _ in columns]
    cells = cell_rows(items, columns)
    widths = [max(len(h), *(len(r[i]) for r in cells)) for i, h in enumerate(heads)]
    right = [i > 0 and all(numeric_text(r[i]) for r in cells) for i in range(len(heads))]

    def line(vals):
        return "  " + "  ".join(v.rjust(w) if r else v.ljust(w)
                                for v, w, r in zip(vals, widths, right, strict=False)).rstrip()
    return "\n".join([line(heads), "  " + "  ".join("-" * w for w in widths)] + [line(r) for r in cells])


def md_cell(s) -> str:
    return html.escape(str(s)).replace("|", "\\|").replace("\n", " ").replace("\r", " ")


def md_table(items, columns) -> str:
    if not items:
        return "_none_"
    out = ["| " + " | ".join(md_cell(h) for h, _ in columns) + " |",
           "|" + "|".join("---" for _ in columns) + "|"]
    out += ["| " + " | ".join(md_cell(c) for c in row) + " |" for row in cell_rows(items, columns)]
    return "\n".join(out)


def headline_lines(review) -> list[str]:
    w = review["window"]
    plant = f", plant {review['plant']}" if review.get("plant") else ""
    return [
        f"Week {review['week']} ({review['week_start']} to {review['week_end']}){plant}",
        f"Window: {w['first_week']} to {w['last_week']} ({w['weeks']} weeks, {w['start']} to {w['end']}); "
        f"target reject rate {pct(review['target'])} %",
        f"Rates: {review.get('rate_basis', 'rejected / inspected')}",
    ]


def totals_rows(review):
    t = review["totals"]
    win, wk = t["window"], t["week"]
    c = confidence_text(review)
    return [
        {"k": "Poured (castings)", "a": count(win["poured"]), "b": count(wk["poured"])},
        {"k": "Inspected (castings)", "a": count(win["inspected"]), "b": count(wk["inspected"])},
        {"k": "Rejected (castings)", "a": count(win["rejected"]), "b": count(wk["rejected"])},
        {"k": "Reworked, not scrap (castings)", "a": count(win["reworked"]), "b": count(wk["reworked"])},
        {"k": "Reject rate (%)", "a": pct(win["reject_rate"], 2), "b": pct(wk["reject_rate"], 2)},
        {"k": f"{c} interval (%)", "a": interval_text(win["wilson_low"], win["wilson_high"]),
         "b": interval_text(wk["wilson_low"], wk["wilson_high"])},
        {"k": cost_head(review), "a": money(win["scrap_cost"]), "b": money(wk["scrap_cost"])},
    ]


TOTAL_COLUMNS = [("", lambda r: r["k"]), ("Window", lambda r: r["a"]), ("Review week", lambda r: r["b"])]


def change_lines(review) -> list[str]:
    ch = review["changes"]
    out = []
    for p in ch["new_problems"]:
        out.append(f"New problem: {p['pattern']} ({reason_text(p['problem_reasons'])})")
    for code in ch["no_longer_problems"]:
        out.append(f"No longer a problem: {code}")
    for r in ch["revisions_took_effect"]:
        out.append(f"Riser revision {r['revision']} of {r['pattern']} took effect on {r['effective_from']}"
                   + (f" (changed {', '.join(r['changed_risers'])})" if r["changed_risers"] else ""))
    for m in ch["rate_moves"]:
        out.append(f"Rate move: {m['pattern']} {pct(m['previous_week_reject_rate'])} % → "
                   f"{pct(m['week_reject_rate'])} % ({100 * m['change']:+.1f} points; "
                   f"{count(m['previous_week_inspected'])} → {count(m['week_inspected'])} castings inspected)")
    return out or ["Nothing new since the week before."]


# --- plants side by side ---------------------------------------------------------------------

def plant_columns(currency: str | None = None):
    return [
        ("Plant", lambda r: r["plant"]),
        ("Patterns", lambda r: count(r["patterns"])),
        ("Inspected (castings)", lambda r: count(r["inspected"])),
        ("Rejected (castings)", lambda r: count(r["rejected"])),
        ("Reject rate (%)", lambda r: pct(r["reject_rate"], 2)),
        ("Wilson interval (%)", lambda r: interval_text(r["wilson_low"], r["wilson_high"])),
        ("Shrinkage rate (%)", lambda r: pct(r["shrinkage_rate"], 2)),
        (cost_head({"currency": currency}), lambda r: money(r["scrap_cost"])),
        ("Week rejected / inspected", lambda r: f"{count(r['week_rejected'])} / {count(r['week_inspected'])}"),
        ("Week reject rate (%)", lambda r: pct(r["week_reject_rate"], 2)),
        ("Problem patterns", lambda r: ", ".join(r["problems"]) or "none"),
    ]


def plants_head(d: dict) -> list[str]:
    w = d["window"]
    return [f"Plants side by side, alloy {d['alloy']}, week {d['week']}",
            f"Window: {w['first_week']} to {w['last_week']} ({w['weeks']} weeks, {w['start']} to {w['end']}); "
            f"target reject rate {pct(d['target'])} %; intervals {confidence_text(d)}",
            f"Rates: {d['rate_basis']}"]


def verdict_castings_text(r: dict) -> str:
    """How many more castings the before/after test needs (a revision still
    without a verdict), at the observed rate before and the predicted rate
    after, with the test's power; "-" where it is judged or cannot be told."""
    more = r.get("more_castings_to_verdict")
    if more is None:
        return "-"
    return (f"{count(more)} (of {count(r['castings_to_verdict'])} after the change; "
            f"{r['verdict_power']:.0%} power, {r['verdict_alpha']:.0%} two-sided)")


TRACK_VERDICTS = ("too early", "as predicted", "worse than predicted", "better than predicted")


def track_record_columns():
    """The track record's columns (``review["track_record"]["revisions"]``), in every format."""
    return [
        ("Pattern", lambda t: t["pattern"]),
        ("Revision", lambda t: t["revision"]),
        ("From", lambda t: t["effective_from"]),
        ("Zone", lambda t: t["zone"]),
        ("Riser", lambda t: t["riser"]),
        ("Predicted after (%)", lambda t: pct(t["predicted_rate_after"], 2)),
        ("90 % interval (%)", lambda t: f"{pct(t['predicted_rate_after_low'], 2)} – "
                                        f"{pct(t['predicted_rate_after_high'], 2)}"),
        ("Observed after (%)", lambda t: pct(t["observed_rate_after"], 2)),
        ("Castings after", lambda t: count(t["castings_after"])),
        ("Shrinkage rejects after", lambda t: count(t["shrinkage_rejects_after"])),
        ("Verdict", lambda t: t["verdict"]),
    ]


def track_record_note(record: dict) -> str:
    """One line on the track record: how it is made, and the summary."""
    s = record["summary"]
    cover = "-" if s["coverage"] is None else f"{100 * s['coverage']:.0f} %"
    loss = "-" if s["log_loss"] is None else f"{s['log_loss']:.4f}"
    return ("What the model predicted for each changed riser's zone, from pours before the change only, "
            f"beside what was observed since. Judged {s['judged']} of {s['revisions']}; inside the 90 % "
            f"interval: {cover}; mean log loss per casting: {loss}.")
