"""Output of a weekly review: plain text, Markdown, HTML, CSV and JSON, with
user text made safe.

``render(review, fmt)`` takes the dict of :func:`tracker.review.weekly_review`.
The HTML report is one self-contained file (inline CSS, no scripts, no
external fonts or images) that prints on A4 and Letter; its charts and the
pack's sections (suggestions, actions, the target) are handed in by the review
pack, :mod:`tracker.views.pack`, which ``pourback review --format html|md`` and
the dashboard's download use; every
piece of user text (pattern codes, descriptions, notes, riser and zone codes)
goes through ``html.escape``. The CSV is the per-pattern table, every cell
through :func:`safe_cell` so a spreadsheet never runs one as a formula.

Rates are shown in % (the review holds fractions 0..1); counts are castings;
costs are in the log's currency, named by its code (``review["currency"]``).
"""

from __future__ import annotations

import csv
import io
import json

from tracker import numbers, units
from tracker.cautions import SAFETY_CAUTION, SAFETY_CAUTION_SHORT
from tracker.csvsafe import safe_cell
from tracker.errors import BadInput
from tracker.review.report_html import render_html, render_plants_html
from tracker.review.report_parts import (
    TERMINAL_HEADS,
    TOTAL_COLUMNS,
    VERDICT_TEXT,
    change_lines,
    confidence_text,
    count,
    defect_columns,
    diff_text,
    headline_lines,
    is_number,
    md_cell,
    md_table,
    pattern_columns,
    pct,
    plant_columns,
    plants_head,
    pval,
    reason_text,
    revision_columns,
    text_table,
    totals_rows,
    track_record_columns,
    track_record_note,
    trend_columns,
    verdict_castings_text,
)

FORMATS = ("table", "md", "html", "csv", "json")


# --- plain text ---------------------------------------------------------------------------

def render_table(review: dict) -> str:
    """The review as plain text for a terminal."""
    out = ["SCRAP REVIEW", *headline_lines(review), "", "Totals", text_table(totals_rows(review), TOTAL_COLUMNS), ""]
    probs = [p for p in review["patterns"] if p["problem"]]
    out.append(f"Needs attention ({len(probs)})")
    out += [f"  {p['pattern']}: {reason_text(p['problem_reasons'])}" for p in probs] or ["  (none)"]
    out += ["", f"Changes since {review['changes']['previous_week']}"]
    out += ["  " + s for s in change_lines(review)]
    cols = [c for c in pattern_columns(review) if c[0].startswith(TERMINAL_HEADS)
            or c[0].endswith(TERMINAL_HEADS)]
    out += ["", "Patterns, whole window, by scrap cost", text_table(review["patterns"], cols)]
    if review.get("run_rule_note"):
        out += ["Note: " + review["run_rule_note"]]
    out += ["", "Scrap by defect, whole window", text_table(review["defects"], defect_columns(review))]
    out += ["", "Weekly trend, all patterns", text_table(review["trend"]["overall"], trend_columns(review))]
    out += ["", "Riser revisions (shrinkage rejects in the changed risers' zones)"]
    out += _revision_lines(review) or ["  (none)"]
    if review.get("track_record"):
        out += ["", "Track record (the model's prediction beside what followed)",
                "  " + track_record_note(review["track_record"])]
        if review["track_record"]["revisions"]:
            out.append(text_table(review["track_record"]["revisions"], track_record_columns()))
    if review["revisions"]:
        out += ["", SAFETY_CAUTION_SHORT]
    return "\n".join(out) + "\n"


def _revision_lines(review) -> list[str]:
    out = []
    for r in review["revisions"]:
        b, a, every = r["before"], r["after"], r["all_defects"]
        zones = ", ".join(r["changed_zones"]) or "all zones"
        out += [f"  {r['pattern']} revision {r['previous_revision'] or '-'} → {r['revision']}, "
                f"from {r['effective_from']}",
                "    changed: " + ("; ".join(f"{c['riser']} ({', '.join(c['zones'])}): {c['change']}"
                                             for c in r.get("riser_changes", [])) or "no riser"),
                f"    shrinkage rejects ({zones}): before {count(b['shrinkage_rejected'])} of "
                f"{count(b['inspected'])} castings ({pct(r['rate_before'], 2)} %), after "
                f"{count(a['shrinkage_rejected'])} of {count(a['inspected'])} ({pct(r['rate_after'], 2)} %)",
                f"    change {diff_text(r)} points ({confidence_text(review)} interval), "
                f"Fisher p = {pval(r['p_value'])}: "
                f"{VERDICT_TEXT.get(r['verdict'], r['verdict'])}",
                f"    all defects: {pct(every['rate_before'], 2)} % before, {pct(every['rate_after'], 2)} % after"]
        if r.get("more_castings_to_verdict") is not None:
            out.append(f"    predicted after {pct(r['predicted_rate_after'], 2)} %; castings still needed for a "
                       f"verdict: {verdict_castings_text(r)}")
    return out


# --- Markdown -----------------------------------------------------------------------------

def render_md(review: dict, sections: dict | None = None) -> str:
    """The review as Markdown (user text HTML-escaped, pipes escaped).

    sections: more Markdown lines by place ("after_attention", "before_revisions",
    "after_revisions"), already escaped: the review pack's (:mod:`tracker.views.pack`).
    """
    extra = sections or {}
    head = headline_lines(review)
    plant = f", plant {md_cell(review['plant'])}" if review.get("plant") else ""
    out = [f"# Scrap review, {review['week']}{plant}", "", *(f"{md_cell(h)}  " for h in head[1:]), "",
           "## Totals", "", md_table(totals_rows(review), TOTAL_COLUMNS), ""]
    probs = [p for p in review["patterns"] if p["problem"]]
    out += [f"## Needs attention ({len(probs)})", ""]
    out += [f"- **{md_cell(p['pattern'])}**: {md_cell(reason_text(p['problem_reasons']))}" for p in probs] \
        or ["_none_"]
    out += ["", *extra.get("after_attention", [])]
    out += [f"## Changes since {review['changes']['previous_week']}", ""]
    out += [f"- {md_cell(s)}" for s in change_lines(review)]
    out += ["", "## Patterns, whole window, by scrap cost", "",
            md_table(review["patterns"], pattern_columns(review)), "",
            *([f"_{md_cell(review['run_rule_note'])}_", ""] if review.get("run_rule_note") else []),
            "## Scrap by defect", "", md_table(review["defects"], defect_columns(review)), "",
            "## Weekly trend", "", md_table(review["trend"]["overall"], trend_columns(review)), "",
            *extra.get("before_revisions", []),
            "## Riser revisions", "", md_table(review["revisions"], revision_columns()), ""]
    if review.get("track_record"):
        out += ["## Track record", "", md_cell(track_record_note(review["track_record"])), ""]
        if review["track_record"]["revisions"]:
            out += [md_table(review["track_record"]["revisions"], track_record_columns()), ""]
    if review["revisions"]:
        out += [f"> **Caution.** {md_cell(SAFETY_CAUTION)}", ""]
    out += extra.get("after_revisions", [])
    return "\n".join(out)


# --- CSV ----------------------------------------------------------------------------------

CSV_COLUMNS = [
    ("pattern", "pattern"), ("description", "description"), ("alloy", "alloy"),
    ("casting_weight_kg", "casting_weight_kg"), ("lots", "lots"), ("poured_castings", "poured"),
    ("inspected_castings", "inspected"), ("awaiting_inspection_castings", "awaiting_inspection"),
    ("rejected_castings", "rejected"), ("reworked_castings", "reworked"),
    ("reject_rate_pct", "reject_rate"), ("wilson_low_pct", "wilson_low"), ("wilson_high_pct", "wilson_high"),
    ("scrap_cost", "scrap_cost"), ("scrap_weight_kg", "scrap_weight_kg"),
    ("shrinkage_rejected_castings", "shrinkage_rejected"), ("shrinkage_rate_pct", "shrinkage_rate"),
    ("shrinkage_wilson_low_pct", "shrinkage_wilson_low"),
    ("week_poured_castings", "week_poured"), ("week_inspected_castings", "week_inspected"),
    ("week_rejected_castings", "week_rejected"), ("week_reject_rate_pct", "week_reject_rate"),
    ("signal", "signal"), ("signal_rules", "signal_rules"), ("problem", "problem"),
    ("problem_reasons", "problem_reasons"),
]


def _csv_value(head: str, v):
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, list):
        return ";".join(map(str, v))
    if head.endswith("_pct") and is_number(v):
        return round(100.0 * v, 4)
    if isinstance(v, float):
        return round(v, 4)
    return v


def render_csv(review: dict) -> str:
    """The per-pattern table of the window as CSV, every cell made formula-safe."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    system = review.get("unit_system", units.METRIC)  # set by tracker.review.weekly.in_system
    columns = [(units.column_name(h, system), units.column_name(k, system)) for h, k in CSV_COLUMNS]
    w.writerow([h for h, _ in columns])
    for p in review["patterns"]:
        w.writerow([safe_cell(_csv_value(h, p.get(k))) for h, k in columns])
    return buf.getvalue()


def render_json(review: dict) -> str:
    """The review as JSON (NaN and infinity as null, dates as ISO days)."""
    return json.dumps(numbers.jsonable(review, day_only=True), indent=2, ensure_ascii=False,
                      allow_nan=False) + "\n"


RENDERERS = {"table": render_table, "md": render_md, "html": render_html, "csv": render_csv,
             "json": render_json}


def render(review: dict, fmt: str = "table") -> str:
    """The review as text in one of ``FORMATS``."""
    if fmt not in RENDERERS:
        raise BadInput("format", fmt, "use one of " + ", ".join(FORMATS))
    return RENDERERS[fmt](review)


def render_plants(d: dict, fmt: str = "table") -> str:
    """A plant comparison (:func:`tracker.review.plants.compare_plants`) in one of ``FORMATS``."""
    cols = plant_columns(d.get("currency"))
    if fmt == "json":
        return render_json(d)
    if fmt == "csv":
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        keys = list(d["plants"][0]) if d["plants"] else []
        w.writerow(keys)
        for r in d["plants"]:
            w.writerow([safe_cell(", ".join(r[k]) if isinstance(r[k], list) else r[k]) for k in keys])
        return buf.getvalue()
    if fmt == "md":
        head = plants_head(d)
        return "\n".join([f"# {md_cell(head[0])}", "", *(f"{md_cell(h)}  " for h in head[1:]), "",
                          md_table(d["plants"], cols), ""])
    if fmt == "html":
        return render_plants_html(d)
    if fmt == "table":
        return "\n".join([*plants_head(d), "", text_table(d["plants"], cols)]) + "\n"
    raise BadInput("format", fmt, "use one of " + ", ".join(FORMATS))
