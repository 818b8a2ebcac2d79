"""The weekly scrap review: scrap by pattern and defect, trend, control and
riser revisions, for one ISO week and the weeks before it.

Everything is computed from day-level SQL aggregates (``Store.pours_by_day``,
``Store.rejects_by_day``) with pandas and numpy, array-wise over patterns and
weeks, so the work grows with the number of patterns and pour days in the
window, never with a Python loop over lots (the loops left run over riser
revisions of the window, for the statistical test of each).

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
inspected; the rules of :func:`tracker.stats.p_chart`) signals in the
review week or the week before at a point above the centre (a low-side
signal means fewer rejects: reported in ``signal_rules`` but not a problem);
``shrinkage_above_target`` — the Wilson lower bound of its shrinkage reject
rate over the window lies above ``target``; ``rejects_above_target`` — the same
for all rejects.

Riser revisions: every revision that took effect inside the window, and every
revision in effect at the window's start that is still ``not_enough_data`` as
of the review week's end, however long ago it took effect: a change stays
under judgement until it has a verdict. Lots
poured under the previous revision (at most ``weeks`` weeks before the change)
are compared with lots poured from the change to the review week's end (or to
the next revision) by :func:`tracker.stats.compare_rates` (Fisher's exact
test) on shrinkage rejects in the zones of the risers that changed.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pandas as pd

from tracker import limits, stats
from tracker.cautions import SAFETY_CAUTION
from tracker.settings import currency
from tracker.store import Store

SHRINKAGE = "shrinkage"
LATEST_WEEKS = 2          # the review week and the one before
NO_ZONE = "(no zone)"
NO_DEFECT = "(no defect given)"
RATE_MOVES_SHOWN = 5
EARLIEST_DAY = "0001-01-01"  # "from the start of the log" for date filters
NOTES_PER_PATTERN = 3
RISER_FIELDS = ("zone", "placement", "top", "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm")
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

def jsonable(obj):
    """JSON-ready copy: numpy scalars to Python, NaN/inf to None, dates to ISO text."""
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        f = float(obj)
        return f if math.isfinite(f) else None
    if isinstance(obj, (dt.date, pd.Timestamp)):
        return obj.isoformat()[:10]
    if obj is None or obj is pd.NA or obj is pd.NaT:
        return None
    return obj


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
    return [v if type(v) in _PLAIN else jsonable(v) for v in a.tolist()]


def _records(df: pd.DataFrame) -> list[dict]:
    """Rows of ``df`` as JSON-ready dicts, built column-wise."""
    if df.empty:
        return []
    cols = [str(c) for c in df.columns]
    return [dict(zip(cols, vals)) for vals in zip(*(_column(df[c].to_numpy()) for c in df.columns))]


def _iso(d: dt.date) -> str:
    return d.isoformat()


def _day_before(iso: str) -> str:
    return _iso(dt.date.fromisoformat(iso) - dt.timedelta(days=1))


def _with_monday(df: pd.DataFrame) -> pd.DataFrame:
    """Add the Monday (a date) of each row's pour date."""
    df = df.copy()
    days = pd.to_datetime(df["poured_on"], format="%Y-%m-%d")
    df["monday"] = (days - pd.to_timedelta(days.dt.day_of_week, unit="D")).dt.date
    return df


def _numeric(df: pd.DataFrame, cols) -> pd.DataFrame:
    for c in cols:
        df[c] = pd.to_numeric(df[c], errors="coerce").fillna(0).astype(np.int64)
    return df


def _rate(k, n):
    k = np.asarray(k, dtype=float)
    n = np.asarray(n, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(n > 0, k / n, np.nan)


def _pareto_rows(df: pd.DataFrame, by: str, value: str) -> list[dict]:
    if df.empty:
        return []
    return _records(stats.pareto(df[[by, value]], by, value))


def _nested(s: pd.Series) -> dict:
    """{pattern: {key: count}} of a (pattern, key) series, largest counts first."""
    out: dict[str, dict] = {}
    for (code, key), v in s.sort_values(ascending=False, kind="stable").items():
        out.setdefault(code, {})[str(key)] = int(v)
    return out


# --- p-charts of many patterns at once -------------------------------------------------------

def p_charts(rejected: np.ndarray, inspected: np.ndarray) -> dict[str, np.ndarray]:
    """Weekly p-charts of many patterns at once: one row per pattern, one column per week.

    The same rules as :func:`tracker.stats.p_chart`, array-wise: centre
    p̄ = Σk / Σn of the row (NIST/SEMATECH e-Handbook 6.3.3.2), exact binomial
    probability limits for each week's own n (0.135 % of Binomial(nᵢ, p̄)
    beyond each, :func:`tracker.stats.probability_limits`); "beyond" a count
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
    names = {(b, r): [n for n, on in zip(stats.RULES, (b, r)) if on] for b in (False, True) for r in (False, True)}
    return [list(names[pair]) for pair in zip(beyond.any(axis=1).tolist(), run.any(axis=1).tolist())]


# --- one window --------------------------------------------------------------------------

def _unit_costs(info: pd.DataFrame) -> tuple[pd.Series, pd.Series]:
    weight = pd.Series(info["casting_weight_kg"].astype(float).to_numpy(), index=info["pattern"])
    cost = weight * info["metal_cost_per_kg"].astype(float).to_numpy() \
        + info["processing_cost_per_casting"].astype(float).fillna(0.0).to_numpy()
    return cost, weight


def _matrices(pours: pd.DataFrame, rejects: pd.DataFrame, mondays: list[dt.date]) -> dict:
    """Pattern × week tables (numpy, one row per pattern poured, one column per Monday)."""
    codes = np.array(sorted(pours["pattern"].unique()), dtype=object)
    rows, cols = pd.Index(codes), pd.Index(mondays)

    def pivot(df: pd.DataFrame, value: str) -> np.ndarray:
        if df.empty or not len(codes):
            return np.zeros((len(codes), len(mondays)))
        s = df.groupby(["pattern", "monday"])[value].sum()
        return s.unstack(fill_value=0).reindex(index=rows, columns=cols, fill_value=0).to_numpy(float)

    rej = rejects[rejects["result"] == "reject"]
    return {"codes": codes, "lots": pivot(pours, "lots"), "poured": pivot(pours, "castings"),
            "inspected_lots": pivot(pours, "inspected_lots"),
            "inspected": pivot(pours, "inspected_castings"), "rejected": pivot(rej, "quantity"),
            "reworked": pivot(rejects[rejects["result"] == "rework"], "quantity"),
            "shrinkage_rejected": pivot(rej[rej["defect"] == SHRINKAGE], "quantity")}


COUNTS = ("lots", "poured", "inspected_lots", "inspected", "rejected", "reworked", "shrinkage_rejected")


def _window(mx: dict, rejects: pd.DataFrame, info: pd.DataFrame, mondays: list[dt.date],
            columns: slice, target: float, confidence: float, full: bool = True) -> dict:
    """Per-pattern figures, charts, defects and trend for the weeks ``mondays``
    (the ``columns`` of the tables ``mx``).

    With ``full`` False only what the comparison with the week before needs
    (problem flags and the review week's rates).
    """
    labels = [stats.iso_week(m) for m in mondays]
    keep = mx["lots"][:, columns].sum(axis=1) > 0
    w = {k: mx[k][keep][:, columns] for k in COUNTS}
    codes = mx["codes"][keep]
    unit_cost, weight = _unit_costs(info)
    t = pd.DataFrame({"pattern": codes, **{k: w[k].sum(axis=1).astype(np.int64) for k in COUNTS}})
    for k in ("poured", "inspected", "rejected"):
        t["week_" + k] = w[k][:, -1].astype(np.int64) if len(mondays) else 0
    t["awaiting_inspection"] = t["poured"] - t["inspected"]
    t["reject_rate"] = _rate(t["rejected"], t["inspected"])
    lo, hi = stats.wilson_interval(t["rejected"].to_numpy(), t["inspected"].to_numpy(), confidence)
    t["wilson_low"], t["wilson_high"] = lo, hi
    t["shrinkage_rate"] = _rate(t["shrinkage_rejected"], t["inspected"])
    lo, hi = stats.wilson_interval(t["shrinkage_rejected"].to_numpy(), t["inspected"].to_numpy(),
                                   confidence)
    t["shrinkage_wilson_low"], t["shrinkage_wilson_high"] = lo, hi
    t["week_reject_rate"] = _rate(t["week_rejected"], t["week_inspected"])
    unit = t["pattern"].map(unit_cost).astype(float).to_numpy()
    t["unit_scrap_cost"] = unit
    t["scrap_cost"] = t["rejected"] * unit
    t["scrap_weight_kg"] = t["rejected"] * t["pattern"].map(weight).astype(float)
    t["week_scrap_cost"] = t["week_rejected"] * unit

    # weekly p-charts, all patterns at once (weeks without inspected castings stay empty)
    k_w, n_w = w["rejected"], w["inspected"]
    ch = p_charts(k_w, n_w)
    last = min(LATEST_WEEKS, len(mondays))
    with np.errstate(invalid="ignore"):
        high = ch["p"][:, -last:] > ch["centre"][:, None]
    t["signal_rules"] = _rules(ch["beyond"][:, -last:], ch["run"][:, -last:])
    t["signal"] = [bool(x) for x in t["signal_rules"]]
    t["signal_rules_window"] = _rules(ch["beyond"], ch["run"])
    t["signal_high_rules"] = _rules(ch["beyond"][:, -last:] & high, ch["run"][:, -last:] & high)
    reasons = []
    for hr, slo, lo_ in zip(t["signal_high_rules"], t["shrinkage_wilson_low"], t["wilson_low"]):
        why = [f"signal:{rule}" for rule in hr]
        if slo > target:
            why.append("shrinkage_above_target")
        if lo_ > target:
            why.append("rejects_above_target")
        reasons.append(why)
    t["problem_reasons"] = reasons
    t["problem"] = [bool(x) for x in reasons]
    if not full:
        return {"table": t, "labels": labels}

    # the charts as plain rows, one list per pattern
    starts = [_iso(m) for m in mondays]
    centre = np.repeat(ch["centre"][:, None], len(mondays), axis=1)
    cols = [_column(a) for a in (k_w.astype(np.int64), n_w.astype(np.int64), ch["p"], centre, ch["lcl"],
                                 ch["ucl"], ch["beyond"], ch["run"], ch["signal"])]
    # a dict display is about twice as fast as dict(zip(...)); keys as in PCHART_KEYS
    t["pchart"] = [[{"label": a, "week_start": b, "rejected": k, "inspected": n, "p": p_, "centre": c,
                     "lcl": lo_, "ucl": hi_, "beyond": be, "run": ru, "signal": si}
                    for a, b, k, n, p_, c, lo_, hi_, be, ru, si in zip(labels, starts, *(col[i] for col in cols))]
                   for i in range(len(t))]

    # scrap by defect and shrinkage by zone, per pattern
    rej = rejects[rejects["monday"].isin(mondays) & (rejects["result"] == "reject")]
    rej = rej.assign(defect=rej["defect"].fillna(NO_DEFECT), zone=rej["zone"].fillna(NO_ZONE))
    by_defect = rej.groupby(["pattern", "defect"])["quantity"].sum()
    by_zone = rej[rej["defect"] == SHRINKAGE].groupby(["pattern", "zone"])["quantity"].sum()
    nd, nz = _nested(by_defect), _nested(by_zone)
    t["by_defect"] = [nd.get(c, {}) for c in t["pattern"]]
    t["shrinkage_by_zone"] = [nz.get(c, {}) for c in t["pattern"]]

    meta = info.set_index("pattern")[["description", "alloy", "casting_weight_kg"]]
    t = t.join(meta, on="pattern")
    t = t.sort_values(["scrap_cost", "rejected", "pattern"], ascending=[False, False, True],
                      kind="stable").reset_index(drop=True)

    # defects: count and cost
    d = by_defect.reset_index()
    d["scrap_cost"] = d["quantity"] * d["pattern"].map(unit_cost).astype(float)
    d = d.rename(columns={"quantity": "rejected"})

    # trend, overall and per pattern (the pattern's weeks with pours)
    cost_w = w["rejected"] * unit[:, None]
    overall = pd.DataFrame({"week": labels, "week_start": starts,
                            **{k: w[k].sum(axis=0).astype(np.int64)
                               for k in ("poured", "inspected", "rejected", "reworked")},
                            "scrap_cost": cost_w.sum(axis=0)})
    overall["reject_rate"] = _rate(overall["rejected"], overall["inspected"])
    lo, hi = stats.wilson_interval(overall["rejected"].to_numpy(), overall["inspected"].to_numpy(),
                                   confidence)
    overall["wilson_low"], overall["wilson_high"] = lo, hi
    i, j = np.nonzero(w["lots"] > 0)
    order = np.lexsort((codes[i].astype(str), j))
    i, j = i[order], j[order]
    per = pd.DataFrame({"week": np.asarray(labels, dtype=object)[j], "pattern": codes[i],
                        **{k: w[k][i, j].astype(np.int64) for k in ("poured", "inspected", "rejected")},
                        "scrap_cost": cost_w[i, j]})
    per["reject_rate"] = _rate(per["rejected"], per["inspected"])
    return {"table": t, "defects": d, "overall": overall, "per_pattern": per, "labels": labels}


# --- riser revisions ----------------------------------------------------------------------

def _fmt(v) -> str:
    if v is None:
        return "none"
    if isinstance(v, float):
        return f"{v:g}"
    return str(v)


def _riser_changes(old: dict, new: dict) -> list[dict]:
    """Risers whose zone, geometry or sleeve differ between two revisions ({riser: fields})."""
    out = []
    empty = dict.fromkeys(RISER_FIELDS)
    for riser in sorted(set(old) | set(new)):
        before, after = old.get(riser, empty), new.get(riser, empty)
        if before == after:
            continue
        zones = sorted({z for z in (before["zone"], after["zone"]) if z})
        if before["zone"] is None:
            text = "added"
        elif after["zone"] is None:
            text = "removed"
        else:
            text = ", ".join(f"{f.removesuffix('_mm')} {_fmt(before[f])} → {_fmt(after[f])}{unit}"
                             for f, unit in (("diameter_mm", " mm"), ("height_mm", " mm"),
                                             ("neck_diameter_mm", " mm"), ("sleeve", ""), ("placement", ""),
                                             ("top", ""), ("zone", ""))
                             if before[f] != after[f])
        out.append({"riser": riser, "zones": zones, "before": before, "after": after, "change": text})
    return out


def _period_sums(frame: pd.DataFrame, cand: pd.DataFrame, value_cols: list[str], start: str,
                 end: str) -> pd.DataFrame:
    """Per candidate revision, ``value_cols`` summed over its rows dated ``start``..``end`` (columns)."""
    m = frame.merge(cand[["cid", "pattern", start, end]], on="pattern")
    m = m[(m["poured_on"] >= m[start]) & (m["poured_on"] <= m[end])]
    return m.groupby("cid")[value_cols].sum().reindex(cand["cid"]).fillna(0).astype(np.int64)


def _revisions(store: Store, mondays: list[dt.date], weeks: int, fetched_from: dt.date,
               pours: pd.DataFrame, rejects: pd.DataFrame, confidence: float) -> list[dict]:
    first, review_end = _iso(mondays[0]), _iso(mondays[-1] + dt.timedelta(days=6))
    # every revision up to the review week: one still without a verdict stays under
    # judgement however long ago it took effect (the revisions table is small)
    revs = store.revision_steps(EARLIEST_DAY, review_end)
    if revs.empty:
        return []
    inside = (revs["effective_from"] >= first) & (revs["effective_from"] <= review_end)
    pending = ((revs["effective_from"] < first)
               & revs["previous"].notna() & (revs["next_from"].isna() | (revs["next_from"] > first)))
    cand = revs[inside | pending].reset_index(drop=True)
    if cand.empty:
        return []
    cand["cid"] = np.arange(len(cand))
    cand["previous"] = cand["previous"].astype(object).where(cand["previous"].notna(), None)
    cand["in_window"] = cand["effective_from"] >= first
    back = (pd.to_datetime(cand["effective_from"]) - pd.Timedelta(weeks=weeks)).dt.strftime("%Y-%m-%d")
    # no previous revision: an empty before-period (start after end)
    cand["before_start"] = [eff if prev is None else max(prev_from, b)
                            for eff, prev, prev_from, b in zip(cand["effective_from"], cand["previous"],
                                                               cand["previous_from"], back)]
    cand["before_end"] = [_day_before(e) for e in cand["effective_from"]]
    cand["after_end"] = [review_end if not isinstance(nf, str) else min(review_end, _day_before(nf))
                         for nf in cand["next_from"]]

    codes = sorted(cand["pattern"].unique())
    p = pours[pours["pattern"].isin(codes)]
    r = rejects[rejects["pattern"].isin(codes)]
    earliest = min(cand["before_start"])
    if earliest < _iso(fetched_from):
        upto = _iso(fetched_from - dt.timedelta(days=1))
        p = pd.concat([store.pours_by_day(earliest, upto, codes), p], ignore_index=True)
        r = pd.concat([store.rejects_by_day(earliest, upto, codes), r], ignore_index=True)
    p = _numeric(p[["pattern", "poured_on", "lots", "castings", "inspected_castings"]].copy(),
                 ["lots", "castings", "inspected_castings"])
    r = _numeric(r[r["result"] == "reject"][["pattern", "poured_on", "defect", "zone", "quantity"]].copy(),
                 ["quantity"])

    # riser changes, from the risers of the candidates' patterns (a handful of rows each)
    risers = store.riser_designs(codes)
    designs: dict[tuple, dict] = {}
    for row in _records(risers[["pattern", "revision", "riser", *RISER_FIELDS]]):
        designs.setdefault((row["pattern"], row["revision"]), {})[row["riser"]] = {
            f: row[f] for f in RISER_FIELDS}
    changes = [_riser_changes(designs.get((c, prev), {}), designs.get((c, rv), {})) if prev else []
               for c, rv, prev in zip(cand["pattern"], cand["revision"], cand["previous"])]
    cand["zones"] = [sorted({z for ch in chs for z in ch["zones"]}) for chs in changes]

    # shrinkage rejects in the changed zones; all zones when no riser changed or no zone was recorded
    shr = r[r["defect"] == SHRINKAGE]
    spans = shr.merge(cand[["cid", "pattern", "before_start", "after_end"]], on="pattern")
    spans = spans[(spans["poured_on"] >= spans["before_start"]) & (spans["poured_on"] <= spans["after_end"])]
    # vectorised (no Python call per revision); a boolean Series also reindexes when spans is empty
    zoned = spans["zone"].notna().groupby(spans["cid"]).any().reindex(cand["cid"], fill_value=False)
    use_zones = np.array([bool(z) for z in cand["zones"]]) & zoned.to_numpy(bool)
    cand["basis"] = np.where(~np.array([bool(z) for z in cand["zones"]]), "all zones (no riser changed)",
                             np.where(use_zones, "zones of the changed risers",
                                      "all zones (no zone recorded on the shrinkage rejects)"))
    pairs = pd.DataFrame([(cid, z) for cid, zs in zip(cand["cid"], cand["zones"]) for z in zs],
                         columns=["cid", "zone"])
    counted = shr.merge(cand[["cid", "pattern"]], on="pattern").merge(
        pairs.assign(in_zone=True), on=["cid", "zone"], how="left")
    counted = counted[counted["in_zone"].fillna(False).astype(bool).to_numpy()
                      | ~use_zones[counted["cid"].to_numpy()]]
    counted = counted.rename(columns={"quantity": "shrinkage_rejected"})

    periods = {"before": ("before_start", "before_end"), "after": ("effective_from", "after_end")}
    sums = {side: (_period_sums(p, cand, ["lots", "castings", "inspected_castings"], a, b),
                   _period_sums(r, cand, ["quantity"], a, b), _cid_sums(counted, cand, a, b))
            for side, (a, b) in periods.items()}

    out = []
    for i, rev in enumerate(cand.to_dict(orient="records")):
        part = {}
        for side, (sp, sr, ss) in sums.items():
            a, b = periods[side]
            part[side] = {
                "start": rev[a] if side == "after" or rev["previous"] is not None else None,
                "end": rev[b],
                "lots": int(sp["lots"].iat[i]), "poured": int(sp["castings"].iat[i]),
                "inspected": int(sp["inspected_castings"].iat[i]), "rejected": int(sr["quantity"].iat[i]),
                "shrinkage_rejected": int(ss.iat[i])}
        b, a = part["before"], part["after"]
        c = stats.compare_rates(b["shrinkage_rejected"], b["inspected"], a["shrinkage_rejected"],
                                a["inspected"], confidence)
        if not rev["in_window"] and c["verdict"] != "not_enough_data":
            continue
        rb, ra = _rate(b["rejected"], b["inspected"]), _rate(a["rejected"], a["inspected"])
        out.append({
            "pattern": rev["pattern"], "revision": rev["revision"], "previous_revision": rev["previous"],
            "effective_from": rev["effective_from"], "took_effect_in_window": bool(rev["in_window"]),
            "changed_risers": [ch["riser"] for ch in changes[i]], "changed_zones": rev["zones"],
            "riser_changes": changes[i], "zone_basis": str(rev["basis"]),
            "before": b, "after": a,
            "rate_before": c["rate_before"], "rate_after": c["rate_after"],
            "difference": c["difference"], "diff_low": c["diff_low"], "diff_high": c["diff_high"],
            "p_value": c["p_value"], "power_to_halve": c["power_to_halve"], "verdict": c["verdict"],
            "all_defects": {"rate_before": float(rb), "rate_after": float(ra), "difference": float(ra - rb)},
        })
    out.sort(key=lambda d: (d["effective_from"], d["pattern"], d["revision"]), reverse=True)
    return jsonable(out)


def _cid_sums(counted: pd.DataFrame, cand: pd.DataFrame, start: str, end: str) -> pd.Series:
    """Per candidate, shrinkage rejects counted for it dated ``start``..``end``."""
    m = counted.merge(cand[["cid", start, end]], on="cid")
    m = m[(m["poured_on"] >= m[start]) & (m["poured_on"] <= m[end])]
    return m.groupby("cid")["shrinkage_rejected"].sum().reindex(cand["cid"]).fillna(0).astype(np.int64)


# --- the review ---------------------------------------------------------------------------

def default_week(store: Store, today: dt.date | str | None = None) -> str:
    """The week a review opens on: the last complete ISO week with pours.

    That is the ISO week of the newest pour dated before the Monday of
    ``today``'s week (default: the computer's date), so a week that has only
    started, and a lot poured today, never move it. A log with no pour before
    this week gives the week of its newest pour; an empty log, last week.
    """
    today = dt.date.fromisoformat(today) if isinstance(today, str) else (today or dt.date.today())
    this_monday = today - dt.timedelta(days=today.weekday())
    last = store.last_pour_before(_iso(this_monday))
    if last is None:
        _, last = store.pour_span()
    return stats.iso_week(last if last else this_monday - dt.timedelta(weeks=1))


def weekly_review(store: Store, week: str | None = None, weeks: int = limits.WEEKS_DEFAULT,
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
        ``revisions`` (before/after of riser revisions), ``changes`` (since
        the previous week's review), ``notes`` (newest inspectors' notes on
        rejects of problem patterns in the review week) and ``caution``.
    """
    weeks = limits.check_weeks(weeks)
    target = limits.check_target(target)
    if week is None:
        week = default_week(store)
    monday = limits.check_review_week(week, stats.week_start(week))
    week = stats.iso_week(monday)
    mondays = [monday - dt.timedelta(weeks=weeks - 1 - i) for i in range(weeks)]
    previous = [m - dt.timedelta(weeks=1) for m in mondays]
    week_end = monday + dt.timedelta(days=6)

    fetch_from = previous[0]
    pours = _numeric(_with_monday(store.pours_by_day(_iso(fetch_from), _iso(week_end))),
                     ["lots", "castings", "inspected_lots", "inspected_castings"])
    rejects = _numeric(_with_monday(store.rejects_by_day(_iso(fetch_from), _iso(week_end))),
                       ["quantity"])
    info = store.poured_patterns(_iso(fetch_from), _iso(week_end))

    mx = _matrices(pours, rejects, [previous[0], *mondays])
    now = _window(mx, rejects, info, mondays, slice(1, None), target, confidence)
    before = _window(mx, rejects, info, previous, slice(0, -1), target, confidence, full=False)
    revisions = _revisions(store, mondays, weeks, fetch_from, pours, rejects, confidence)

    t = now["table"]
    patterns = _records(t[PATTERN_KEYS + ["pchart"]])
    problems = [p["pattern"] for p in patterns if p["problem"]]

    def defect_table(value: str) -> list[dict]:
        d = now["defects"]
        if d.empty:
            return []
        rows = stats.pareto(d[["defect", value]], "defect", value)
        other = "scrap_cost" if value == "rejected" else "rejected"
        rows[other] = rows["defect"].map(d.groupby("defect")[other].sum())
        return _records(rows)

    pareto = {
        "patterns_by_cost": _pareto_rows(t, "pattern", "scrap_cost"),
        "patterns_by_count": _pareto_rows(t, "pattern", "rejected"),
        "defects_by_cost": defect_table("scrap_cost"),
        "defects_by_count": defect_table("rejected"),
    }

    overall = now["overall"]
    win = {c: int(t[c].sum()) for c in ("lots", "poured", "inspected", "rejected", "reworked",
                                         "shrinkage_rejected")}
    win["scrap_cost"] = float(t["scrap_cost"].sum())
    win["scrap_weight_kg"] = float(t["scrap_weight_kg"].sum())
    win["reject_rate"] = float(_rate(win["rejected"], win["inspected"]))
    win["wilson_low"], win["wilson_high"] = stats.wilson_interval(win["rejected"], win["inspected"],
                                                                  confidence)
    last = overall.iloc[-1]
    totals = {"window": win, "week": {
        "poured": int(last["poured"]), "inspected": int(last["inspected"]),
        "rejected": int(last["rejected"]), "reworked": int(last["reworked"]),
        "reject_rate": last["reject_rate"], "wilson_low": last["wilson_low"],
        "wilson_high": last["wilson_high"], "scrap_cost": float(last["scrap_cost"])}}

    money = currency(store)
    notes = []
    if problems:
        notes = _records(store.reject_notes(_iso(monday), _iso(week_end), problems, NOTES_PER_PATTERN))

    head = jsonable({
        "week": week, "week_start": _iso(monday), "week_end": _iso(week_end),
        "window": {"first_week": now["labels"][0], "last_week": week, "start": _iso(mondays[0]),
                   "end": _iso(week_end), "weeks": weeks},
        "target": target, "confidence": confidence, "rate_basis": RATE_BASIS,
        "currency": money, "units": {**UNITS, "scrap_cost": money},
        "totals": totals,
    })
    return {
        **head, "patterns": patterns, "problems": problems, "pareto": pareto,
        "defects": pareto["defects_by_cost"],
        "trend": {"overall": _records(overall), "by_pattern": _records(now["per_pattern"])},
        "revisions": revisions,
        "changes": _changes(now, before, revisions, monday, week_end),
        "notes": notes,
        "caution": SAFETY_CAUTION,
    }


def _changes(now: dict, before: dict, revisions: list[dict], monday: dt.date, week_end: dt.date) -> dict:
    """What moved since the review of the week before."""
    a, b = now["table"], before["table"]
    was = set(b.loc[b["problem"], "pattern"]) if len(b) else set()
    is_ = set(a.loc[a["problem"], "pattern"]) if len(a) else set()
    reasons = dict(zip(a["pattern"], a["problem_reasons"]))
    moves = a[["pattern", "week_inspected", "week_reject_rate"]].merge(
        b[["pattern", "week_inspected", "week_reject_rate"]].rename(
            columns={"week_inspected": "previous_week_inspected",
                     "week_reject_rate": "previous_week_reject_rate"}), on="pattern")
    moves = moves[(moves["week_inspected"] > 0) & (moves["previous_week_inspected"] > 0)].copy()
    moves["change"] = moves["week_reject_rate"] - moves["previous_week_reject_rate"]
    moves = moves.reindex(moves["change"].abs().sort_values(ascending=False, kind="stable").index)
    took = [{"pattern": r["pattern"], "revision": r["revision"], "effective_from": r["effective_from"],
             "changed_risers": r["changed_risers"]}
            for r in revisions if _iso(monday) <= r["effective_from"] <= _iso(week_end)]
    return {
        "previous_week": before["labels"][-1],
        "new_problems": [{"pattern": c, "problem_reasons": list(reasons.get(c, []))} for c in sorted(is_ - was)],
        "no_longer_problems": sorted(was - is_),
        "still_problems": sorted(is_ & was),
        "revisions_took_effect": took,
        "rate_moves": _records(moves.head(RATE_MOVES_SHOWN)[
            ["pattern", "previous_week_reject_rate", "week_reject_rate", "change",
             "previous_week_inspected", "week_inspected"]]),
    }
