"""The weekly scrap review: scrap by pattern and defect, trend, control and
riser revisions, for one ISO week and the weeks before it.

Everything is computed from day-level SQL aggregates (``Store.review_days``:
the pours and rejects per day of ``Store.pours_by_day`` and
``Store.rejects_by_day`` and the patterns' costs, in one statement on
PostgreSQL, read column by column, no DataFrame) with numpy,
array-wise over patterns and weeks, so the work grows with the number of
patterns and pour days in the window, never with a Python loop over lots (the
loops left build the output and run over riser revisions of the window, for
the statistical test of each). pandas is left out of the hot path: its fixed
cost per operation was most of a one-week review. The scale benchmark holds
the review against the bare fetch of the rows it reads
(``Store.review_floor``). The riser revisions' before/after figures come from
:mod:`tracker.review.revisions`; the plants side by side from
:mod:`tracker.review.plants`.

Counting rules
--------------
- ``poured``: castings poured (molds × castings per mold) in lots poured in the
  window. Rejects and rework are counted against the week the lot was poured.
- ``inspected``: castings poured in lots that hold at least one current
  inspection record. It is the denominator of every reject rate, so lots not
  inspected yet (typically the newest week's) do not make a rate look better
  than it is; ``awaiting_inspection`` = poured − inspected.
- ``rejected``: castings of current records (not superseded, not void) with
  result "reject"; ``reworked``: result "rework", counted apart and not scrap.
- ``scrap_cost`` = rejected × (casting_weight_kg × metal_cost_per_kg +
  processing_cost_per_casting), in the log's currency (``currency``, an ISO code).
- Rates, shares and limits are fractions 0..1 (the reports show %).

A pattern is a *problem* when any of these holds (``problem_reasons``):
``signal:beyond_limit`` / ``signal:run_of_8`` — its weekly p-chart over the
window (centre = the pattern's pooled rate over the window, NIST/SEMATECH
e-Handbook 6.3.3.2; exact binomial probability limits for each week's castings
inspected; the rules of :func:`tracker.review.stats.p_chart`) signals in the
review week or the week before at a point above the centre (a low-side
signal means fewer rejects: reported in ``signal_rules`` but not a problem);
``shrinkage_above_target`` — the Wilson lower bound of its shrinkage reject
rate over the window lies above ``target``; ``rejects_above_target`` — the same
for all rejects.

Riser revisions: see :mod:`tracker.review.revisions` (every revision that
took effect inside the window, and every earlier one still without a verdict).
"""

from __future__ import annotations

import datetime as dt
import functools
import gc
from typing import cast

import numpy as np
import pandas as pd

from tracker import limits, numbers, units
from tracker.advice import track_record
from tracker.cautions import SAFETY_CAUTION
from tracker.log.settings import currency
from tracker.log.store import Store
from tracker.review import stats
from tracker.review.revisions import (
    iso,
    judge_revisions,
    riser_change_text,
)

SHRINKAGE = "shrinkage"
LATEST_WEEKS = 2          # the review week and the one before
NO_ZONE = "(no zone)"
NO_DEFECT = "(no defect given)"
RATE_MOVES_SHOWN = 5
NOTES_PER_PATTERN = 3
RATE_BASIS = "castings rejected / castings inspected (castings poured in lots with an inspection record)"
UNITS = {
    "poured": "castings", "inspected": "castings", "awaiting_inspection": "castings",
    "rejected": "castings", "reworked": "castings", "reject_rate": "fraction 0..1",
    "wilson_low": "fraction 0..1", "wilson_high": "fraction 0..1", "scrap_cost": "currency units",
    "scrap_weight_kg": "kg", "casting_weight_kg": "kg", "target": "fraction 0..1",
}
PCHART_KEYS = ("label", "week_start", "rejected", "inspected", "p", "centre", "lcl", "ucl", "beyond", "run",
               "signal")
PATTERN_KEYS = [
    "pattern", "description", "alloy", "casting_weight_kg", "lots", "poured", "inspected",
    "awaiting_inspection", "rejected", "reworked", "reject_rate", "wilson_low", "wilson_high",
    "scrap_cost", "scrap_weight_kg", "unit_scrap_cost", "by_defect", "shrinkage_rejected",
    "shrinkage_rate", "shrinkage_wilson_low", "shrinkage_wilson_high", "shrinkage_by_zone",
    "week_poured", "week_inspected", "week_rejected", "week_reject_rate", "week_scrap_cost",
    "signal", "signal_rules", "signal_high_rules", "signal_rules_window", "problem", "problem_reasons",
]


# --- helpers --------------------------------------------------------------------------

_PLAIN = (str, bool, int, list, dict, type(None))


def _column(values) -> list:
    """A column as Python values, NaN as None (fast for numeric columns).

    Lists and dicts in an object column are taken as built here, already plain.
    """
    a = np.asarray(values)
    if a.dtype.kind == "f":
        out = a.astype(object)
        out[~np.isfinite(a)] = None
        return out.tolist()
    if a.dtype.kind in "iub":
        return a.tolist()
    return [v if type(v) in _PLAIN else numbers.jsonable(v, day_only=True) for v in a.tolist()]


def _ints(values) -> np.ndarray:
    """Whole numbers from SQL (None as 0) as an int64 array."""
    return np.nan_to_num(np.array(values, dtype=float)).astype(np.int64)


def _numbers(values, index: dict) -> np.ndarray:
    """Each value's number in ``index`` (-1 where absent), hashing each distinct value once."""
    codes, uniques = pd.factorize(np.asarray(values, dtype=object))
    lookup = np.array([index.get(u, -1) for u in uniques] + [-1], dtype=np.int64)
    return lookup[codes]


def _ordinals(days) -> np.ndarray:
    """ISO dates (text) as proleptic ordinals (whole days), each distinct date parsed once."""
    codes, uniques = pd.factorize(np.asarray(days, dtype=object))
    lookup = np.array([dt.date.fromisoformat(d).toordinal() for d in uniques], dtype=np.int64)
    return lookup[codes]


def _pour_arrays(cols: dict, index: dict) -> dict[str, np.ndarray]:
    """``Store.pours_by_day`` columns as arrays; ``pattern`` as its number in ``index``
    (rows of other patterns are dropped)."""
    pat = _numbers(cols["pattern"], index)
    keep = pat >= 0
    out = {"pattern": pat, "day": _ordinals(cols["poured_on"])}
    for k in ("lots", "castings", "inspected_lots", "inspected_castings"):
        out[k] = _ints(cols[k]) if k in cols else np.zeros(len(pat), dtype=np.int64)
    return {k: v[keep] for k, v in out.items()}


def _reject_arrays(cols: dict, index: dict) -> dict[str, np.ndarray]:
    """``Store.rejects_by_day`` columns as arrays: pattern number, day, ``reject``
    and ``rework`` flags, ``defect`` and ``zone`` (objects, None kept), quantity."""
    pat = _numbers(cols["pattern"], index)
    keep = pat >= 0
    result = np.array(cols["result"], dtype=object)
    out = {"pattern": pat, "day": _ordinals(cols["poured_on"]),
           "reject": result == "reject", "rework": result == "rework",
           "defect": np.array(cols["defect"], dtype=object), "zone": np.array(cols["zone"], dtype=object),
           "quantity": _ints(cols["quantity"])}
    return {k: v[keep] for k, v in out.items()}


def rate(k, n) -> np.ndarray:
    """k / n element-wise (castings rejected / castings inspected), NaN where n is 0."""
    k = np.asarray(k, dtype=float)
    n = np.asarray(n, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(n > 0, k / n, np.nan)


def _rows(cols: dict) -> list[dict]:
    """Rows of a dict of equal-length columns as JSON-ready dicts, built column-wise.

    Numpy columns go through :func:`_column`; list columns are taken as built
    (already plain Python values).
    """
    names = list(cols)
    values = [c if isinstance(c, list) else _column(c) for c in cols.values()]
    return [dict(zip(names, vals, strict=False)) for vals in zip(*values, strict=False)]


def _pareto_rows(keys, values, key: str, value: str, extra: dict | None = None) -> list[dict]:
    """Pareto rows (``key``, ``value``, share, cumulative_share, vital_few and the
    ``extra`` columns) of one value per key, keys in ascending order."""
    if not len(keys):
        return []
    sh = stats.pareto_shares(values)
    o = sh["order"]
    cols = {key: np.asarray(keys, dtype=object)[o], value: np.asarray(values)[o],
            "share": sh["share"], "cumulative_share": sh["cumulative_share"], "vital_few": sh["vital_few"]}
    for name, col in (extra or {}).items():
        cols[name] = np.asarray(col)[o]
    return _rows(cols)


def _nested(pattern: np.ndarray, key: np.ndarray, quantity: np.ndarray, n_patterns: int) -> list[dict]:
    """Per pattern number, {key: summed quantity}, largest first (ties by key)."""
    out: list[dict] = [{} for _ in range(n_patterns)]
    if not len(pattern):
        return out
    names = sorted(set(key.tolist()))
    code = {k: i for i, k in enumerate(names)}
    kc = np.fromiter(map(code.__getitem__, key.tolist()), dtype=np.int64, count=len(key))
    sums = np.bincount(pattern * len(names) + kc, weights=quantity, minlength=n_patterns * len(names))
    cells = np.flatnonzero(sums)
    p, k, v = cells // len(names), cells % len(names), sums[cells]
    order = np.lexsort((k, -v, p))
    for pi, ki, vi in zip(p[order].tolist(), k[order].tolist(), v[order].tolist(), strict=False):
        out[pi][str(names[ki])] = int(vi)
    return out


# --- p-charts of many patterns at once -------------------------------------------------------

def p_charts(rejected: np.ndarray, inspected: np.ndarray) -> dict[str, np.ndarray]:
    """Weekly p-charts of many patterns at once: one row per pattern, one column per week.

    The same rules as :func:`tracker.review.stats.p_chart`, array-wise: centre
    p̄ = Σk / Σn of the row (NIST/SEMATECH e-Handbook 6.3.3.2), exact binomial
    probability limits for each week's own n (0.135 % of Binomial(nᵢ, p̄)
    beyond each, :func:`tracker.review.stats.probability_limits`); "beyond" a count
    above the upper limit or below the lower; "run" a point in 8 or more
    consecutive points on one side of the centre (a point on the centre breaks
    a run, a week with nothing inspected is skipped). Returns arrays ``p``,
    ``centre`` (one per row), ``lcl``, ``ucl``, ``beyond``, ``run``,
    ``signal``.
    """
    k = np.asarray(rejected, dtype=float)
    n = np.asarray(inspected, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        total = n.sum(axis=1)
        pbar = np.where(total > 0, k.sum(axis=1) / total, np.nan)
        seen = n > 0
        p = np.where(seen, k / n, np.nan)
    low, high = stats.probability_limits(n, pbar[:, None])
    with np.errstate(invalid="ignore", divide="ignore"):
        lcl, ucl = low / n, high / n
    judged = seen & np.isfinite(pbar)[:, None]
    with np.errstate(invalid="ignore"):
        beyond = judged & ((k > high) | (k < low))
        side = np.sign(p - pbar[:, None])
    side[np.isclose(p, pbar[:, None], rtol=1e-12, atol=0.0)] = 0.0
    run = np.zeros(k.shape, dtype=bool)
    rows, _ = np.nonzero(judged)  # row-major: each pattern's judged weeks in order
    s = side[judged]
    if s.size:
        start = np.ones(s.size, dtype=bool)
        start[1:] = (s[1:] != s[:-1]) | (s[1:] == 0) | (rows[1:] != rows[:-1])
        group = np.cumsum(start) - 1
        run[judged] = (np.bincount(group)[group] >= stats.RUN_LENGTH) & (s != 0)
    return {"p": p, "centre": pbar, "lcl": lcl, "ucl": ucl, "beyond": beyond, "run": run,
            "signal": beyond | run}


def _rules(beyond: np.ndarray, run: np.ndarray) -> list[list[str]]:
    """Per row, the names of the rules (``stats.RULES`` order) that fire anywhere in it."""
    names = {(b, r): [n for n, on in zip(stats.RULES, (b, r), strict=False) if on]
             for b in (False, True) for r in (False, True)}
    any_beyond = cast(list, beyond.any(axis=1).tolist())
    any_run = cast(list, run.any(axis=1).tolist())
    return [list(names[(bool(b), bool(r))]) for b, r in zip(any_beyond, any_run, strict=False)]


# --- one window --------------------------------------------------------------------------

def _matrices(codes: list[str], pours: dict, rejects: dict, first_monday: dt.date, n_weeks: int,
              info: dict[str, tuple]) -> dict:
    """Pattern × week tables (numpy, one row per pattern of ``codes``, one column per
    week from ``first_monday``), and each pattern's unit scrap cost and weight."""
    n = len(codes)
    origin = first_monday.toordinal()

    def pivot(rows: dict, value: str, mask=None) -> np.ndarray:
        pat, col, val = rows["pattern"], (rows["day"] - origin) // 7, rows[value]
        if mask is not None:
            pat, col, val = pat[mask], col[mask], val[mask]
        inside = (col >= 0) & (col < n_weeks)
        cell = pat[inside] * n_weeks + col[inside]
        return np.bincount(cell, weights=val[inside], minlength=n * n_weeks).reshape(n, n_weeks)

    rej = rejects["reject"]
    at = {c: i for i, c in enumerate(info["pattern"])}
    rows = [at[c] for c in codes]
    weight = np.array([info["casting_weight_kg"][i] for i in rows], dtype=float)
    metal = np.array([info["metal_cost_per_kg"][i] for i in rows], dtype=float)
    processing = np.nan_to_num(np.array([info["processing_cost_per_casting"][i] for i in rows], dtype=float))
    return {"codes": np.array(codes, dtype=object), "origin": origin,
            "lots": pivot(pours, "lots"), "poured": pivot(pours, "castings"),
            "inspected_lots": pivot(pours, "inspected_lots"),
            "inspected": pivot(pours, "inspected_castings"), "rejected": pivot(rejects, "quantity", rej),
            "reworked": pivot(rejects, "quantity", rejects["rework"]),
            "shrinkage_rejected": pivot(rejects, "quantity", rej & (rejects["defect"] == SHRINKAGE)),
            "unit_cost": weight * metal + processing, "weight": weight,
            "description": [info["description"][i] for i in rows], "alloy": [info["alloy"][i] for i in rows]}


COUNTS = ("lots", "poured", "inspected_lots", "inspected", "rejected", "reworked", "shrinkage_rejected")


def _window(mx: dict, rejects: dict, mondays: list[dt.date], columns: slice, target: float,
            confidence: float, full: bool = True) -> dict:
    """Per-pattern figures, charts, defects and trend for the weeks ``mondays``
    (the ``columns`` of the tables ``mx``).

    With ``full`` False only what the comparison with the week before needs
    (problem flags and the review week's rates).
    """
    labels = [stats.iso_week(m) for m in mondays]
    keep = mx["lots"][:, columns].sum(axis=1) > 0
    rows = np.flatnonzero(keep)
    w = {k: mx[k][keep][:, columns] for k in COUNTS}
    codes = mx["codes"][keep]
    unit = mx["unit_cost"][keep]
    t = _counts_table(codes, w, unit, mx["weight"][keep], confidence)
    # weekly p-charts, all patterns at once (weeks without inspected castings stay empty)
    ch = p_charts(w["rejected"], w["inspected"])
    _flag(t, ch, min(LATEST_WEEKS, len(mondays)), target)
    if not full:
        return {"table": t, "labels": labels}

    starts = [iso(m) for m in mondays]
    t["pchart"] = _chart_rows(ch, w["rejected"], w["inspected"], labels, starts)
    pat, qty, defect = _defects_by_pattern(t, mx, rejects, columns, rows)
    t["description"] = [mx["description"][i] for i in rows.tolist()]
    t["alloy"] = [mx["alloy"][i] for i in rows.tolist()]
    t["casting_weight_kg"] = mx["weight"][keep]

    # largest scrap cost first, then most rejects, then pattern code (codes are in order)
    order = np.lexsort((np.arange(len(codes)), -t["rejected"], -t["scrap_cost"]))
    t = {k: (v[order] if isinstance(v, np.ndarray) else [v[i] for i in order.tolist()]) for k, v in t.items()}

    # defects: count and cost, summed over patterns
    names = sorted(set(defect.tolist()))
    code = {k: i for i, k in enumerate(names)}
    dc = np.fromiter(map(code.__getitem__, defect.tolist()), dtype=np.int64, count=len(defect))
    d = {"defect": names, "rejected": np.bincount(dc, weights=qty, minlength=len(names)).astype(np.int64),
         "scrap_cost": np.bincount(dc, weights=qty * unit[pat], minlength=len(names))}
    overall, per = _trend(w, codes, unit, labels, starts, confidence)
    return {"table": t, "defects": d, "overall": overall, "per_pattern": per, "labels": labels}


def _counts_table(codes: np.ndarray, w: dict, unit: np.ndarray, weight: np.ndarray, confidence: float) -> dict:
    """The window's counts, rates (fractions, Wilson intervals at ``confidence``) and
    scrap per pattern, from the pattern × week tables ``w``; ``unit`` the scrap cost
    of one casting (currency units), ``weight`` its weight (kg)."""
    t = {"pattern": codes, **{k: w[k].sum(axis=1).astype(np.int64) for k in COUNTS}}
    for k in ("poured", "inspected", "rejected"):
        t["week_" + k] = w[k][:, -1].astype(np.int64)
    t["awaiting_inspection"] = t["poured"] - t["inspected"]
    t["reject_rate"] = rate(t["rejected"], t["inspected"])
    t["wilson_low"], t["wilson_high"] = stats.wilson_interval(t["rejected"], t["inspected"], confidence)
    t["shrinkage_rate"] = rate(t["shrinkage_rejected"], t["inspected"])
    t["shrinkage_wilson_low"], t["shrinkage_wilson_high"] = stats.wilson_interval(
        t["shrinkage_rejected"], t["inspected"], confidence)
    t["week_reject_rate"] = rate(t["week_rejected"], t["week_inspected"])
    t["unit_scrap_cost"] = unit
    t["scrap_cost"] = t["rejected"] * unit
    t["scrap_weight_kg"] = t["rejected"] * weight
    t["week_scrap_cost"] = t["week_rejected"] * unit
    return t


def _flag(t: dict, ch: dict, last: int, target: float) -> None:
    """Add the chart signals of the ``last`` weeks and the problem flags to the table ``t``."""
    with np.errstate(invalid="ignore"):
        high = ch["p"][:, -last:] > ch["centre"][:, None]
    t["signal_rules"] = _rules(ch["beyond"][:, -last:], ch["run"][:, -last:])
    t["signal"] = [bool(x) for x in t["signal_rules"]]
    t["signal_rules_window"] = _rules(ch["beyond"], ch["run"])
    t["signal_high_rules"] = _rules(ch["beyond"][:, -last:] & high, ch["run"][:, -last:] & high)
    reasons = []
    for hr, slo, lo_ in zip(t["signal_high_rules"], t["shrinkage_wilson_low"].tolist(), t["wilson_low"].tolist(),
                            strict=False):
        why = [f"signal:{rule}" for rule in hr]
        if slo > target:
            why.append("shrinkage_above_target")
        if lo_ > target:
            why.append("rejects_above_target")
        reasons.append(why)
    t["problem_reasons"] = reasons
    t["problem"] = [bool(x) for x in reasons]


def _chart_rows(ch: dict, k_w: np.ndarray, n_w: np.ndarray, labels: list[str], starts: list[str]) -> list[list]:
    """The charts as plain rows, one list per pattern (keys as in PCHART_KEYS). Where
    nothing was inspected p and the limits are undefined (None) and no rule fires,
    so only the weeks with castings inspected are read from the chart arrays."""
    rejected, inspected = k_w.astype(np.int64).tolist(), n_w.astype(np.int64).tolist()
    seen = n_w > 0
    judged = iter(zip(*(ch[x][seen].tolist() for x in ("p", "lcl", "ucl", "beyond", "run", "signal")),
                      strict=False))
    charts = []
    for c, ks, ns in zip(_column(ch["centre"]), rejected, inspected, strict=False):
        chart = []
        for a, b, k, n in zip(labels, starts, ks, ns, strict=False):
            if n:
                p_, lo_, hi_, be, ru, si = next(judged)
                chart.append({"label": a, "week_start": b, "rejected": k, "inspected": n, "p": p_, "centre": c,
                              "lcl": lo_, "ucl": hi_, "beyond": be, "run": ru, "signal": si})
            else:
                chart.append({"label": a, "week_start": b, "rejected": k, "inspected": n, "p": None, "centre": c,
                              "lcl": None, "ucl": None, "beyond": False, "run": False, "signal": False})
        charts.append(chart)
    return charts


def _defects_by_pattern(t: dict, mx: dict, rejects: dict, columns: slice,
                        rows: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Add scrap by defect and shrinkage by zone per pattern to ``t`` (rejects of the
    window's weeks); returns the rejects' table row, quantity and defect."""
    col = (rejects["day"] - mx["origin"]) // 7
    lo_col, hi_col, _ = columns.indices(mx["lots"].shape[1])
    sel = rejects["reject"] & (col >= lo_col) & (col < hi_col)
    where = np.full(len(mx["codes"]), -1, dtype=np.int64)
    where[rows] = np.arange(len(rows))
    pat, qty = where[rejects["pattern"][sel]], rejects["quantity"][sel]
    defect = rejects["defect"][sel]
    defect = np.where(pd.isna(defect), NO_DEFECT, defect)
    zone = rejects["zone"][sel]
    zone = np.where(pd.isna(zone), NO_ZONE, zone)
    shr = defect == SHRINKAGE
    t["by_defect"] = _nested(pat, defect, qty, len(rows))
    t["shrinkage_by_zone"] = _nested(pat[shr], zone[shr], qty[shr], len(rows))
    return pat, qty, defect


def _trend(w: dict, codes: np.ndarray, unit: np.ndarray, labels: list[str], starts: list[str],
           confidence: float) -> tuple[dict, dict]:
    """The weekly trend, overall and per pattern (the pattern's weeks with pours)."""
    cost_w = w["rejected"] * unit[:, None]
    overall = {"week": labels, "week_start": starts,
               **{k: w[k].sum(axis=0).astype(np.int64) for k in ("poured", "inspected", "rejected", "reworked")},
               "scrap_cost": cost_w.sum(axis=0)}
    overall["reject_rate"] = rate(overall["rejected"], overall["inspected"])
    overall["wilson_low"], overall["wilson_high"] = stats.wilson_interval(overall["rejected"],
                                                                          overall["inspected"], confidence)
    i, j = np.nonzero(w["lots"] > 0)
    o = np.lexsort((i, j))
    i, j = i[o], j[o]
    per = {"week": np.asarray(labels, dtype=object)[j], "pattern": codes[i],
           **{k: w[k][i, j].astype(np.int64) for k in ("poured", "inspected", "rejected")},
           "scrap_cost": cost_w[i, j]}
    per["reject_rate"] = rate(per["rejected"], per["inspected"])
    return overall, per


# --- units ---------------------------------------------------------------------------------

def in_system(review: dict, system: str) -> dict:
    """The review (as ``weekly_review`` gives it) with every figure that has a unit
    in ``system`` (tracker.units): keys renamed and values converted
    (``casting_weight_lb``), riser change texts reworded, ``units`` naming the new
    units, and ``unit_system`` saying which; in metric the review as it is."""
    if system != units.US:
        return review
    out = units.convert_record(review, system)
    for rev_out, rev_in in zip(out.get("revisions", []), review.get("revisions", []), strict=False):
        for ch_out, ch_in in zip(rev_out.get("riser_changes", []), rev_in.get("riser_changes", []), strict=False):
            ch_out["change"] = riser_change_text(ch_in["before"], ch_in["after"], system)
    out["units"] = {units.column_name(k, system): units.symbol(k, system) if units.kind_of(k) else v
                    for k, v in review.get("units", {}).items()}
    out["unit_system"] = system
    return out


# --- the review ---------------------------------------------------------------------------

def _without_gc_pauses(fn):
    """Run ``fn`` with Python's cyclic garbage collector paused.

    A long review builds a few hundred thousand small dicts and lists (a
    52-week chart per pattern); each batch of new containers would set off a
    collection that walks every object alive, a third of the run at full
    scale. Nothing the review builds forms a reference cycle, so nothing is
    left for the collector; it resumes on return (if it was running).
    """
    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        was_on = gc.isenabled()
        gc.disable()
        try:
            return fn(*args, **kwargs)
        finally:
            if was_on:
                gc.enable()
    return wrapper


def default_week(store: Store, today: dt.date | str | None = None) -> str:
    """The week a review opens on: the last complete ISO week with pours.

    That is the ISO week of the newest pour dated before the Monday of
    ``today``'s week (default: the computer's date), so a week that has only
    started, and a lot poured today, never move it. A log with no pour before
    this week gives the week of its newest pour; an empty log, last week.
    """
    today = dt.date.fromisoformat(today) if isinstance(today, str) else (today or dt.date.today())
    this_monday = today - dt.timedelta(days=today.weekday())
    last = store.last_pour_before(iso(this_monday))
    if last is None:
        _, last = store.pour_span()
    return stats.iso_week(last if last else this_monday - dt.timedelta(weeks=1))


def _checked(store: Store, week: str | None, weeks: int, target: float) -> tuple[int, float, str, dt.date]:
    """weeks, target, the ISO week (default :func:`default_week`) and its Monday, checked."""
    weeks = limits.check_weeks(weeks)
    target = limits.check_target(target)
    if week is None:
        week = default_week(store)
    monday = limits.check_review_week(week, stats.week_start(week))
    return weeks, target, stats.iso_week(monday), monday


def _fetched(store: Store, monday: dt.date, weeks: int) -> tuple:
    """What a review reads of the window of ``weeks`` ending with ``monday``'s week
    and the week before it: (window Mondays, the Mondays a week earlier, the
    first day fetched, pattern codes, pour and reject arrays, pattern × week tables)."""
    mondays = [monday - dt.timedelta(weeks=weeks - 1 - i) for i in range(weeks)]
    previous = [m - dt.timedelta(weeks=1) for m in mondays]
    fetch_from = previous[0]
    span = (iso(fetch_from), iso(monday + dt.timedelta(days=6)))
    pour_cols, reject_cols, costs = store.review_days(*span)
    codes = sorted(set(pour_cols["pattern"]))
    index = {c: i for i, c in enumerate(codes)}
    pours = _pour_arrays(pour_cols, index)
    rejects = _reject_arrays(reject_cols, index)
    mx = _matrices(codes, pours, rejects, fetch_from, weeks + 1, costs)
    return mondays, previous, fetch_from, codes, pours, rejects, mx


@_without_gc_pauses
def problem_patterns(store: Store, week: str | None = None, weeks: int = limits.WEEKS_DEFAULT,
                     target: float = limits.TARGET_DEFAULT, *, confidence: float = 0.95) -> list[str]:
    """The problem patterns of :func:`weekly_review` (its ``problems``, in its
    order: largest scrap cost first), without the rest of the review: no riser
    revisions' before and after, no comparison with the week before, no notes.
    What suggestions need; the same arguments, checked the same way."""
    weeks, target, _, monday = _checked(store, week, weeks, target)
    mondays, _, _, _, _, rejects, mx = _fetched(store, monday, weeks)
    t = _window(mx, rejects, mondays, slice(1, None), target, confidence)["table"]
    return [c for c, problem in zip(t["pattern"].tolist(), t["problem"], strict=False) if problem]


@_without_gc_pauses
def weekly_review(store: Store, week: str | None = None, weeks: int = limits.WEEKS_DEFAULT,
                  target: float = limits.TARGET_DEFAULT,
                  *, confidence: float = 0.95, plant: str | None = None) -> dict:
    """The scrap review of ISO week ``week`` and the weeks before it, of one
    ``plant``'s patterns (default: every plant), with ``plant`` in the result.
    See :func:`_weekly_review` for the parameters and the result."""
    with store.plant_scope(plant):
        out = _weekly_review(store, week, weeks, target, confidence=confidence)
    return {"plant": plant, **out}


def _weekly_review(store: Store, week: str | None = None, weeks: int = limits.WEEKS_DEFAULT,
                   target: float = limits.TARGET_DEFAULT,
                   *, confidence: float = 0.95) -> dict:
    """The scrap review of ISO week ``week`` and the weeks before it.

    Parameters
    ----------
    store : Store
        The open log.
    week : str, optional
        ISO week "YYYY-Www", e.g. "2026-W47"; default the last complete week
        with pours (:func:`default_week`). Anything else raises ``BadInput``.
    weeks : int
        Weeks in the window, the review week included (default 13).
    target : float
        Reject rate (fraction, default 0.02 = 2 %) a pattern is held to: a
        pattern whose Wilson lower bound lies above it is a problem.
    confidence : float
        Coverage of the Wilson intervals and of the before/after intervals.

    Returns
    -------
    dict, JSON-ready (plain Python types; undefined figures are None)
        ``week``, ``week_start``, ``week_end``, ``window`` (first_week,
        last_week, start, end, weeks), ``target``, ``confidence``, ``currency``,
        ``rate_basis``, ``units``, ``totals`` (window and review week),
        ``patterns`` (one dict per pattern poured in the window, keys
        ``PATTERN_KEYS`` plus ``pchart`` (one dict per week, keys
        ``PCHART_KEYS``), window figures unless named ``week_*``),
        ``problems`` (codes), ``pareto`` (patterns and defects, by cost and
        by count, with cumulative share), ``defects`` (scrap by defect, by
        cost), ``trend`` (``overall`` and ``by_pattern`` weekly rows),
        ``revisions`` (before/after of riser revisions, with the model's
        prediction and the castings still needed for a verdict),
        ``track_record`` (``tracker.advice.track_record.review_section``:
        prediction beside observation for the changed risers of those
        revisions, and the summary), ``changes`` (since
        the previous week's review), ``notes`` (newest inspectors' notes on
        rejects of problem patterns in the review week) and ``caution``.
    """
    weeks, target, week, monday = _checked(store, week, weeks, target)
    mondays, previous, _, _, _, rejects, mx = _fetched(store, monday, weeks)
    week_end = monday + dt.timedelta(days=6)
    now = _window(mx, rejects, mondays, slice(1, None), target, confidence)
    before = _window(mx, rejects, previous, slice(0, -1), target, confidence, full=False)
    revisions = judge_revisions(store, mondays, weeks, confidence)
    record = track_record.review_section(store, revisions, iso(monday + dt.timedelta(days=6)), weeks)

    t = now["table"]
    patterns = _rows({k: t[k] for k in PATTERN_KEYS + ["pchart"]})
    problems = [p["pattern"] for p in patterns if p["problem"]]

    pareto = _pareto(now)
    overall = now["overall"]
    totals = _totals(t, overall, confidence)

    money = currency(store)
    notes = (store.reject_notes(iso(monday), iso(week_end), problems, NOTES_PER_PATTERN, rows=True)
             if problems else [])

    head = numbers.jsonable(day_only=True, obj={
        "week": week, "week_start": iso(monday), "week_end": iso(week_end),
        "window": {"first_week": now["labels"][0], "last_week": week, "start": iso(mondays[0]),
                   "end": iso(week_end), "weeks": weeks},
        "target": target, "confidence": confidence, "rate_basis": RATE_BASIS,
        "run_rule_note": stats.RUN_RULE_NOTE,
        "currency": money, "units": {**UNITS, "scrap_cost": money},
        "totals": totals,
    })
    return {
        **head, "patterns": patterns, "problems": problems, "pareto": pareto,
        "defects": pareto["defects_by_cost"],
        "trend": {"overall": _rows(overall), "by_pattern": _rows(now["per_pattern"])},
        "revisions": revisions,
        "track_record": record,
        "changes": _changes(now, before, revisions, monday, week_end),
        "notes": notes,
        "caution": SAFETY_CAUTION,
    }


def _pareto(now: dict) -> dict:
    """The window's Pareto tables: patterns and defects, by scrap cost and by castings rejected."""
    t, d = now["table"], now["defects"]

    def defect_table(value: str) -> list[dict]:
        other = "scrap_cost" if value == "rejected" else "rejected"
        return _pareto_rows(d["defect"], d[value], "defect", value, {other: d[other]})

    return {
        "patterns_by_cost": _pareto_rows(*_by_code(t, "scrap_cost"), "pattern", "scrap_cost"),
        "patterns_by_count": _pareto_rows(*_by_code(t, "rejected"), "pattern", "rejected"),
        "defects_by_cost": defect_table("scrap_cost"),
        "defects_by_count": defect_table("rejected"),
    }


def _totals(t: dict, overall: dict, confidence: float) -> dict:
    """Totals of the window (summed over the pattern table ``t``) and of the review
    week (the last row of the trend ``overall``): castings, rates (fractions), cost."""
    win: dict = {c: int(t[c].sum()) for c in ("lots", "poured", "inspected", "rejected", "reworked",
                                               "shrinkage_rejected")}
    win["scrap_cost"] = float(t["scrap_cost"].sum())
    win["scrap_weight_kg"] = float(t["scrap_weight_kg"].sum())
    win["reject_rate"] = float(rate(win["rejected"], win["inspected"]))
    win["wilson_low"], win["wilson_high"] = stats.wilson_interval(win["rejected"], win["inspected"], confidence)
    return {"window": win, "week": {
        "poured": int(overall["poured"][-1]), "inspected": int(overall["inspected"][-1]),
        "rejected": int(overall["rejected"][-1]), "reworked": int(overall["reworked"][-1]),
        "reject_rate": overall["reject_rate"][-1], "wilson_low": overall["wilson_low"][-1],
        "wilson_high": overall["wilson_high"][-1], "scrap_cost": float(overall["scrap_cost"][-1])}}



def _by_code(t: dict, value: str) -> tuple[list, np.ndarray]:
    """A window table's patterns in code order and their ``value``."""
    order = np.argsort(t["pattern"].astype(str), kind="stable")
    return t["pattern"][order].tolist(), t[value][order]


def _changes(now: dict, before: dict, revisions: list[dict], monday: dt.date, week_end: dt.date) -> dict:
    """What moved since the review of the week before."""
    a, b = now["table"], before["table"]
    was = {c for c, pr in zip(b["pattern"].tolist(), b["problem"], strict=False) if pr}
    is_ = {c for c, pr in zip(a["pattern"].tolist(), a["problem"], strict=False) if pr}
    reasons = dict(zip(a["pattern"].tolist(), a["problem_reasons"], strict=False))
    prev = {c: (n, r) for c, n, r in zip(b["pattern"].tolist(), b["week_inspected"].tolist(),
                                         b["week_reject_rate"].tolist(), strict=False)}
    moves = []
    for c, n, r in zip(a["pattern"].tolist(), a["week_inspected"].tolist(), a["week_reject_rate"].tolist(),
                       strict=False):
        if c in prev and n > 0 and prev[c][0] > 0:
            moves.append({"pattern": c, "previous_week_reject_rate": prev[c][1], "week_reject_rate": r,
                          "change": r - prev[c][1], "previous_week_inspected": prev[c][0], "week_inspected": n})
    moves.sort(key=lambda m: -abs(m["change"]))
    took = [{"pattern": r["pattern"], "revision": r["revision"], "effective_from": r["effective_from"],
             "changed_risers": r["changed_risers"]}
            for r in revisions if iso(monday) <= r["effective_from"] <= iso(week_end)]
    return {
        "previous_week": before["labels"][-1],
        "new_problems": [{"pattern": c, "problem_reasons": list(reasons.get(c, []))} for c in sorted(is_ - was)],
        "no_longer_problems": sorted(was - is_),
        "still_problems": sorted(is_ & was),
        "revisions_took_effect": took,
        "rate_moves": moves[:RATE_MOVES_SHOWN],
    }
