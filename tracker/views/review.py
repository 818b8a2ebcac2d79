"""The Weekly review page's data: the review's headline, tables, Pareto, trend,
control chart, riser revisions in words, what changed, and the plants side by
side (see :mod:`tracker.views.common` for the conventions)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from tracker import numbers
from tracker.errors import BadInput, NotFound
from tracker.log.settings import DEFAULT_CURRENCY
from tracker.review.rates import scope_text
from tracker.review.target import against_target
from tracker.views.common import money_head, pct_column

RULE_WORDS = {"beyond_limit": "point beyond a limit", "run_of_8": "8 or more weeks on one side"}
REASON_WORDS = {"signal:beyond_limit": "chart: point above the upper limit",
                "signal:run_of_8": "chart: 8 or more weeks above the centre",
                "shrinkage_above_target": "shrinkage rate above target",
                "rejects_above_target": "reject rate above target"}


VERDICT_WORDS = {"improved": "improved", "worse": "worse", "no_clear_change": "no clear change",
                 "not_enough_data": "not enough data yet"}


def signal_words(names, high=None) -> str:
    """Signal rule names (``tracker.review.stats.RULES``) in words ("" for none). With ``high``
    (the rules that fired above the centre), a signal below it is marked "(low: fewer rejects)"."""
    if names is None or (isinstance(names, float) and math.isnan(names)):
        return ""
    if isinstance(names, str):
        names = [r for r in names.split(",") if r]
    mark = (lambda r: "") if high is None else (lambda r: "" if r in set(high) else " (low: fewer rejects)")
    return ", ".join(RULE_WORDS.get(r, str(r)) + mark(r) for r in names)


def reason_words(reasons) -> str:
    """Why a pattern is flagged, in words ("" when it is not)."""
    return ", ".join(REASON_WORDS.get(r, str(r)) for r in (reasons or []))


def _num(v) -> float:
    return float("nan") if v is None else float(v)


def rate_scope(review: dict, defect: str | None = None, who: str = "each pattern") -> str:
    """Which figure the review's rates are (:func:`tracker.review.rates.scope_text`):
    "all rejects, each pattern, last 13 weeks (2026-W35 to 2026-W47), % of castings inspected"."""
    w = review["window"]
    return scope_text(defect, weeks=w["weeks"], first_week=w["first_week"], last_week=w["last_week"], who=who)


def review_headline(review: dict) -> dict:
    """Headline figures of a review: the review week and the whole window.

    Counts in castings, rates in %, costs in the log's currency units.
    """
    out: dict = {}
    for part in ("week", "window"):
        t = review["totals"][part]
        out[part] = {"poured": int(t["poured"]), "inspected": int(t["inspected"]),
                     "rejected": int(t["rejected"]), "reworked": int(t.get("reworked") or 0),
                     "reject_rate_pct": 100.0 * _num(t["reject_rate"]),
                     "wilson_low_pct": 100.0 * _num(t.get("wilson_low")),
                     "wilson_high_pct": 100.0 * _num(t.get("wilson_high")),
                     "scrap_cost": _num(t["scrap_cost"])}
    out["currency"] = review.get("currency") or DEFAULT_CURRENCY
    out["problems"] = list(review.get("problems") or [])
    out["patterns"] = len(review.get("patterns") or [])
    out["target_pct"] = 100.0 * _num(review.get("target"))
    return out


PATTERN_TABLE = {
    "pattern": "pattern", "reject_rate_pct": "reject rate (%)", "rejected": "rejected (castings)",
    "scrap_cost": "scrap cost", "flag_text": "flagged because",
    "poured": "poured (castings)", "range_text": "95 % range (%)",
    "shrinkage_rejected": "of which shrinkage (castings)", "signal_text": "chart signals (latest 2 weeks)",
}


# The columns a reader needs first (a narrow screen shows these; the rest behind a toggle).
PATTERN_TABLE_FIRST = 5


def _range(lo, hi) -> str:
    if numbers.missing(lo) or numbers.missing(hi):
        return ""
    return f"{100 * lo:.1f} to {100 * hi:.1f}"


def review_patterns_table(review: dict, full: bool = True) -> pd.DataFrame:
    """The review's pattern rows for display, by scrap cost: rates in %, flags and chart
    signals in words, cost headed with the log's currency. ``full`` False keeps the
    columns that matter first (pattern, rate, rejects, cost, why flagged)."""
    names = {**PATTERN_TABLE, "scrap_cost": money_head("scrap cost", review)}
    keys = list(PATTERN_TABLE)[:None if full else PATTERN_TABLE_FIRST]
    rows = review.get("patterns") or []
    if not rows:
        return pd.DataFrame(columns=[names[k] for k in keys])
    p = pd.DataFrame(rows)
    p["reject_rate_pct"] = pct_column(p["reject_rate"])
    p["range_text"] = [_range(lo, hi) for lo, hi in zip(p["wilson_low"], p["wilson_high"], strict=False)]
    p["flag_text"] = p["problem_reasons"].map(reason_words)
    p["signal_text"] = [signal_words(r, high)
                        for r, high in zip(p["signal_rules"], p["signal_high_rules"], strict=False)]
    p["scrap_cost"] = p["scrap_cost"].astype(float).round(0)  # whole currency units
    return p[keys].rename(columns=names).reset_index(drop=True)


PLANT_TABLE = {
    "plant": "plant", "patterns": "patterns", "inspected": "castings inspected",
    "rejected": "castings rejected", "reject_rate_pct": "reject rate (%)", "low_pct": "95 % range from (%)",
    "high_pct": "95 % range to (%)", "shrinkage_rate_pct": "shrinkage rate (%)",
    "scrap_cost": "scrap cost", "week_rejected": "review week: castings rejected",
    "week_inspected": "review week: castings inspected", "problems_text": "flagged patterns",
}


def plant_comparison_table(comparison: dict) -> pd.DataFrame:
    """A plant comparison (:func:`tracker.review.weekly.compare_plants`) for display: rates in %,
    the scrap cost headed with the log's currency."""
    names = {**PLANT_TABLE, "scrap_cost": money_head("scrap cost", comparison)}
    rows = comparison.get("plants") or []
    if not rows:
        return pd.DataFrame(columns=list(names.values()))
    p = pd.DataFrame(rows)
    p["reject_rate_pct"] = pct_column(p["reject_rate"])
    p["low_pct"] = pct_column(p["wilson_low"])
    p["high_pct"] = pct_column(p["wilson_high"])
    p["shrinkage_rate_pct"] = pct_column(p["shrinkage_rate"])
    p["problems_text"] = p["problems"].map(lambda v: ", ".join(v) or "none")
    return p[list(PLANT_TABLE)].rename(columns=names).reset_index(drop=True)


def review_pareto(review: dict, of: str = "patterns", by: str = "cost", top: int | None = None) -> pd.DataFrame:
    """Pareto rows of the review (``of`` patterns or defects, ``by`` cost or count), largest first.

    With ``top``, at most ``top`` bars: the largest ``top - 1`` items and one bar
    for all the rest ("the other 12 patterns"), so a chart can label every bar.

    Columns: the item (``pattern`` or ``defect``), ``value`` (scrap cost in
    currency units, or castings rejected), ``share_pct``,
    ``cumulative_pct``, ``vital_few`` and ``rank`` (1 = largest).
    """
    if of not in ("patterns", "defects") or by not in ("cost", "count"):
        raise BadInput("pareto", f"{of}/{by}", "use of = patterns or defects, by = cost or count")
    rows = review.get("pareto", {}).get(f"{of}_by_{by}") or []
    item = "pattern" if of == "patterns" else "defect"
    value = "scrap_cost" if by == "cost" else "rejected"
    cols = [item, "value", "share_pct", "cumulative_pct", "vital_few", "rank"]
    if not rows:
        return pd.DataFrame(columns=cols)
    d = pd.DataFrame(rows)
    d = d[d[value].fillna(0) > 0].reset_index(drop=True)
    d["value"] = d[value].astype(float)
    d["share_pct"] = pct_column(d["share"])
    d["cumulative_pct"] = pct_column(d["cumulative_share"])
    d["rank"] = np.arange(1, len(d) + 1)
    d = d[cols]
    if top is not None and len(d) > top:
        rest = d.iloc[top - 1:]
        d = pd.concat([d.iloc[:top - 1], pd.DataFrame([{
            item: f"the other {len(rest)} {of}", "value": rest["value"].sum(),
            "share_pct": rest["share_pct"].sum(), "cumulative_pct": 100.0,
            "vital_few": False, "rank": top}])], ignore_index=True)
    return d


def review_trend(review: dict) -> pd.DataFrame:
    """Weekly totals of the review window: castings, reject rate and its Wilson bounds in %."""
    rows = review.get("trend", {}).get("overall") or []
    cols = ["week", "week_start", "poured", "inspected", "rejected", "scrap_cost", "reject_rate_pct",
            "wilson_low_pct", "wilson_high_pct"]
    if not rows:
        return pd.DataFrame(columns=cols)
    t = pd.DataFrame(rows)
    t["week_start"] = pd.to_datetime(t["week_start"]).dt.date
    for key in ("reject_rate", "wilson_low", "wilson_high"):
        t[f"{key}_pct"] = pct_column(t[key])
    return t[cols]


def review_pchart(review: dict, pattern: str) -> pd.DataFrame:
    """One pattern's weekly p-chart from the review, rates and limits in %.

    Adds ``status``: "signal" (a rule fired at that week), "in control", or
    "nothing inspected".
    """
    for p in review.get("patterns") or []:
        if p["pattern"] == pattern:
            c = pd.DataFrame(p["pchart"])
            break
    else:
        raise NotFound("pattern", pattern, "it was not poured in the review window")
    c = c.rename(columns={"label": "week"})
    c["week_start"] = pd.to_datetime(c["week_start"]).dt.date
    for key in ("p", "centre", "lcl", "ucl"):
        c[f"{key}_pct"] = pct_column(c[key])
    c["status"] = np.where(c["inspected"] == 0, "nothing inspected",
                           np.where(c["signal"].astype(bool), "signal", "in control"))
    return c


REVISION_TABLE = {
    "pattern": "pattern", "revision": "revision", "effective_from": "effective from",
    "change_text": "what changed", "before_text": "before: shrinkage rejects",
    "after_text": "after: shrinkage rejects", "difference_pct": "change (% points)",
    "p_value": "p-value (Fisher)", "verdict_text": "verdict", "sentence": "verdict in words",
    "details": "statistics", "in_window_text": "took effect in the window",
    "to_verdict_text": "castings to a verdict",
}
TRACK_TABLE = {  # the verdict among the first columns, so it shows at tablet width
    "pattern": "pattern", "zone": "zone", "predicted_pct": "predicted after (%)",
    "observed_pct": "observed after (%)", "verdict": "verdict", "interval_text": "90 % interval (%)",
    "castings_after": "castings after", "revision": "revision", "effective_from": "effective from",
    "riser": "riser",
}


def _chance_words(p) -> str:
    """How likely a before/after difference is to be chance, from Fisher's p-value."""
    if numbers.missing(p):
        return ""
    if p < 0.001:
        return "very unlikely to be chance"
    if p < 0.01:
        return "unlikely to be chance"
    if p < 0.05:
        return "probably not chance"
    return "could well be chance"


def _rate_words(rate) -> str:
    return "-" if numbers.missing(rate) else f"{100 * rate:.1f} %".replace(".0 %", " %")


def verdict_sentence(rev: dict) -> str:
    """A riser revision's verdict in plain words first, e.g. "improved: shrinkage fell from
    12.2 % to 0 %, very unlikely to be chance" (the statistics are in :func:`verdict_details`)."""
    v = rev.get("verdict")
    before, after = _rate_words(rev.get("rate_before")), _rate_words(rev.get("rate_after"))
    chance = _chance_words(rev.get("p_value"))
    n_after = int((rev.get("after") or {}).get("inspected") or 0)
    if v == "improved":
        return f"improved: shrinkage fell from {before} to {after}, {chance}"
    if v == "worse":
        return f"worse: shrinkage rose from {before} to {after}, {chance}"
    if v == "no_clear_change":
        return f"no clear change: shrinkage went from {before} to {after}, which {chance}"
    if n_after == 0:
        return "not enough data yet: no castings poured since the change have been inspected"
    return (f"not enough data yet: shrinkage {before} before, {after} in the {n_after:,} castings "
            "inspected since; too few to tell a halving of the rate from chance")


def verdict_details(rev: dict) -> str:
    """The statistics behind a verdict, for a help tooltip."""
    parts = []
    d, lo, hi = rev.get("difference"), rev.get("diff_low"), rev.get("diff_high")
    if d is not None and not numbers.missing(d):
        interval = ""
        if lo is not None and hi is not None and not numbers.missing(lo):
            interval = f" (95 % interval {100 * lo:+.1f} to {100 * hi:+.1f})"
        parts.append(f"change {100 * d:+.1f} % points" + interval)
    p = rev.get("p_value")
    if p is not None and not numbers.missing(p):
        parts.append(f"Fisher's exact test p = {p:.2g} (the chance of a difference this large if the "
                     "revision changed nothing)")
    power = rev.get("power_to_halve")
    if power is not None and not numbers.missing(power):
        parts.append(f"with these numbers of castings a real halving of the rate would show with "
                     f"about {100 * power:.0f} % chance (80 % or more is needed before 'no clear change' "
                     "counts as a finding)")
    b, a = rev.get("before") or {}, rev.get("after") or {}
    parts.append(f"before: {b.get('shrinkage_rejected', 0):,} of {b.get('inspected', 0):,} castings; "
                 f"after: {a.get('shrinkage_rejected', 0):,} of {a.get('inspected', 0):,} castings")
    return "; ".join(parts) + "."


def _share(part: dict, rate) -> str:
    return (f"{part['shrinkage_rejected']:,} of {part['inspected']:,} castings"
            + ("" if rate is None else f" ({100 * rate:.1f} %)"))


def review_revisions_table(review: dict) -> pd.DataFrame:
    """Riser revisions under judgement: what changed, shrinkage rejects before and after
    (in the zones of the changed risers), the change in % points, and the verdict in words."""
    rows = review.get("revisions") or []
    if not rows:
        return pd.DataFrame(columns=list(REVISION_TABLE.values()))
    out = []
    for r in rows:
        changes = r.get("riser_changes") or []
        prev = r.get("previous_revision")
        out.append({
            "pattern": r["pattern"], "effective_from": r["effective_from"], "p_value": r.get("p_value"),
            "revision": f"{r['revision']}" + (f" (was {prev})" if prev else ""),
            "change_text": "; ".join(f"{c['riser']}: {c['change']}" for c in changes) or "no riser changed",
            "before_text": _share(r["before"], r.get("rate_before")),
            "after_text": _share(r["after"], r.get("rate_after")),
            "difference_pct": 100.0 * _num(r.get("difference")),
            "verdict_text": VERDICT_WORDS.get(r.get("verdict"), str(r.get("verdict"))),
            "sentence": verdict_sentence(r), "details": verdict_details(r),
            "in_window_text": "yes" if r.get("took_effect_in_window", True) else "no, still awaiting a verdict",
            "to_verdict_text": _to_verdict_words(r),
        })
    return pd.DataFrame(out)[list(REVISION_TABLE)].rename(columns=REVISION_TABLE)


def review_signals(review: dict) -> pd.DataFrame:
    """Run-rule and limit signals of the patterns' p-charts, in words: one row per
    pattern whose chart signals in the latest two weeks (``when`` "latest weeks") or
    only earlier in the window (``when`` "earlier in the window"). A signal below the
    centre means fewer rejects and is marked so; it does not flag a pattern."""
    cols = ["pattern", "signal", "when", "flagged"]
    out = []
    for p in review.get("patterns") or []:
        latest = list(p.get("signal_rules") or [])
        if latest:
            out.append({"pattern": p["pattern"], "signal": signal_words(latest, p.get("signal_high_rules") or []),
                        "when": "latest 2 weeks", "flagged": "yes" if p.get("problem") else "no"})
        elif p.get("signal_rules_window"):
            out.append({"pattern": p["pattern"], "signal": signal_words(p["signal_rules_window"]),
                        "when": "earlier in the window", "flagged": "yes" if p.get("problem") else "no"})
    return pd.DataFrame(out, columns=cols)


def review_changes(review: dict) -> dict:
    """What moved since the previous week's review, as lists of short lines."""
    c = review.get("changes") or {}
    moves = [f"{m['pattern']}: {100 * _num(m['previous_week_reject_rate']):.1f} % → "
             f"{100 * _num(m['week_reject_rate']):.1f} % of castings inspected"
             for m in c.get("rate_moves") or []]
    return {
        "previous_week": c.get("previous_week"),
        "new_problems": [f"{x['pattern']} ({reason_words(x.get('problem_reasons'))})"
                         for x in c.get("new_problems") or []],
        "no_longer_problems": list(c.get("no_longer_problems") or []),
        "still_problems": list(c.get("still_problems") or []),
        "revisions_took_effect": [f"{x['pattern']} revision {x['revision']} from {x['effective_from']}"
                                  for x in c.get("revisions_took_effect") or []],
        "rate_moves": moves,
    }


TARGET_TABLE = {"pattern": "pattern", "inspected": "inspected (castings)", "rejected": "rejected (castings)",
                "reject_rate_pct": "reject rate (%)", "target_pct": "target (%)",
                "chance_pct": "chance above target (%)", "verdict": "against the target"}


def review_target(review: dict) -> pd.DataFrame:
    """Each pattern against the review's target (:func:`tracker.review.target.against_target`),
    highest chance first, for the chart: the keys of TARGET_TABLE (counts in castings; rates,
    target and chance in %; ``verdict`` "above the target (signal)" or "not shown above it").
    Patterns with nothing inspected are left out. :func:`review_target_table` labels it."""
    rows = [r for r in against_target(review) if r["chance_above"] is not None]
    if not rows:
        return pd.DataFrame(columns=list(TARGET_TABLE))
    t = pd.DataFrame(rows)
    t["reject_rate_pct"] = pct_column(t["reject_rate"])
    t["target_pct"] = 100.0 * t["target"].astype(float)
    t["chance_pct"] = 100.0 * t["chance_above"].astype(float)
    t["verdict"] = np.where(t["signal"], "above the target (signal)", "not shown above it")
    return t[list(TARGET_TABLE)].reset_index(drop=True)


def review_target_table(review: dict) -> pd.DataFrame:
    """:func:`review_target` with the display labels of TARGET_TABLE."""
    return review_target(review).rename(columns=TARGET_TABLE)


def _to_verdict_words(r: dict) -> str:
    """The castings a revision still needs for a verdict, in words ("-" where judged or unknown)."""
    more = r.get("more_castings_to_verdict")
    if more is None:
        return "-"
    return (f"{more:,} more castings (the before/after test needs {r['castings_to_verdict']:,} after the change "
            f"to tell the rate before from the predicted {100 * _num(r.get('predicted_rate_after')):.2f} %, "
            f"with {r['verdict_power']:.0%} power)")


def track_record_table(record: dict | None) -> pd.DataFrame:
    """The track record's rows (``tracker.advice.track_record``) for display: rates in %."""
    rows = (record or {}).get("revisions") or []
    if not rows:
        return pd.DataFrame(columns=list(TRACK_TABLE.values()))

    def pct(v) -> float:
        return 100.0 * _num(v)

    out = [{**t, "predicted_pct": pct(t["predicted_rate_after"]), "observed_pct": pct(t["observed_rate_after"]),
            "interval_text": f"{pct(t['predicted_rate_after_low']):.2f} to {pct(t['predicted_rate_after_high']):.2f}"}
           for t in rows]
    return pd.DataFrame(out)[list(TRACK_TABLE)].rename(columns=TRACK_TABLE)


def track_record_summary(record: dict | None) -> str:
    """The track record's summary in one sentence."""
    s = (record or {}).get("summary")
    if not s or not s.get("revisions"):
        return "No riser change to judge yet: no revision changed a riser whose zone has shrinkage records."
    cover = "-" if s["coverage"] is None else f"{100 * s['coverage']:.0f} %"
    loss = "-" if s["log_loss"] is None else f"{s['log_loss']:.4f}"
    return (f"Judged {s['judged']} of {s['revisions']} changes; inside their 90 % interval: {cover}; "
            f"mean log loss per casting: {loss}.")
