"""The track record: what the model predicted for each riser change, beside
what was observed since.

One row per riser revision that changed a riser whose zone has shrinkage
records in the log. The prediction is made as a suggestion's is
(``calibration``: the zone's calibrated rate under the previous revision,
shifted by the model's change in log-odds for the new design), from what was
poured before the revision's ``effective_from`` only: the model is fitted on
the lots poured before that day, and the zone's rate is calibrated on the
``weeks`` weeks before it. The same log cut at that date gives the same
figures.

Verdict (``verdict``):

- ``too early`` while the castings poured since the change are fewer than
  the before/after test needs (:func:`castings_to_verdict`: the two-proportion
  test at 5 % two-sided with 80 % power, Cohen's h between the zone's
  observed rate before and the predicted rate after, the castings before as
  they are);
- then ``as predicted`` where the observed rate after lies inside the
  prediction's 90 % interval for what that many castings would show,
  ``worse than predicted`` above it and ``better than predicted`` below it.
  That interval (``observed_low``, ``observed_high``) adds the binomial luck
  of the castings after to the rate's own interval: the 5 % and 95 %
  quantiles of the rejects in ``castings_after`` castings over the rate's
  draws. (0 rejects in 200 castings is what a predicted 0.3 % looks like.)

The summary: the share of judged rows inside their interval (``coverage``),
the mean binomial log loss per casting of the observed counts at the
predicted rate, and a calibration table (predicted against observed, in
bins of the predicted rate).
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pandas as pd
from scipy.stats import binom, norm

from tracker import limits, numbers
from tracker.advice import calibration
from tracker.advice.features import aggregate_for_fit, zone_design, zone_lot_features, zone_shrinkage_rates
from tracker.advice.fitting import fit_model
from tracker.advice.model import weighted_log_loss
from tracker.log.store import Store, absolute_target, data_version

ALPHA = 0.05  # the before/after test: two-sided
POWER = 0.80
CHANGE_FIELDS = ("zone", "placement", "top", "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm")
ROW_KEYS = ("pattern", "revision", "effective_from", "zone", "riser", "predicted_rate_after",
            "predicted_rate_after_low", "predicted_rate_after_high", "observed_rate_after", "castings_after",
            "shrinkage_rejects_after", "verdict")
CALIBRATION_BINS = (0.0, 0.02, 0.05, 0.10, 0.20, 1.0)


def cohens_h(p1: float, p2: float) -> float:
    """Cohen's effect size for two proportions: |2·asin √p1 − 2·asin √p2|."""
    return abs(2.0 * math.asin(math.sqrt(p1)) - 2.0 * math.asin(math.sqrt(p2)))


def castings_to_verdict(rate_before: float | None, rate_after: float | None, castings_before: int,
                        alpha: float = ALPHA, power: float = POWER) -> int | None:
    """Castings after the change the two-proportion test needs to tell
    ``rate_before`` from ``rate_after`` at ``alpha`` (two-sided) with
    ``power``, the castings before being ``castings_before``: the normal
    approximation on Cohen's h, h² ≥ (z₁₋α/₂ + z_power)² · (1/n_before + 1/n_after),
    solved for n_after. None where no number of castings after would do (the
    rates equal, or too few castings before)."""
    if rate_before is None or rate_after is None or castings_before <= 0:
        return None
    h = cohens_h(float(rate_before), float(rate_after))
    need = (h / (norm.ppf(1.0 - alpha / 2.0) + norm.ppf(power))) ** 2 - 1.0 / castings_before
    if not need > 0:
        return None
    return int(math.ceil(1.0 / need - 1e-9))


def _day_before(day: str) -> str:
    return (dt.date.fromisoformat(day) - dt.timedelta(days=1)).isoformat()


def _changes(store: Store, pattern: str | None) -> list[dict]:
    """Every (revision, riser) whose size, sleeve, neck, placement or zone
    differ from the revision before, with the revision's neighbours' dates."""
    revs = store.revisions_frame(pattern)
    risers = store.risers_frame(pattern=pattern)
    out = []
    for pat, g in revs.groupby("pattern", sort=True):
        g = g.sort_values(["effective_from", "revision"], kind="stable").reset_index(drop=True)
        for i in range(1, len(g)):
            prev, rev, eff = g.at[i - 1, "revision"], g.at[i, "revision"], g.at[i, "effective_from"]
            nxt = g.at[i + 1, "effective_from"] if i + 1 < len(g) else None
            old = risers[(risers["pattern"] == pat) & (risers["revision"] == prev)].set_index("riser")
            new = risers[(risers["pattern"] == pat) & (risers["revision"] == rev)].set_index("riser")
            for riser in sorted(set(new.index)):
                if riser in old.index and all(_same(old.at[riser, f], new.at[riser, f]) for f in CHANGE_FIELDS):
                    continue
                out.append({"pattern": pat, "revision": str(rev), "previous": str(prev), "effective_from": eff,
                            "next_from": nxt, "riser": riser, "zone": new.at[riser, "zone"],
                            "previous_from": g.at[i - 1, "effective_from"]})
    return out


def _same(a, b) -> bool:
    if numbers.missing(a) and numbers.missing(b):
        return True
    return a == b


_KEPT: dict = {}  # (log, its data version, what) -> result: the review and the dashboard ask again and again
_KEPT_MAX = 32


def _kept(store: Store, what: tuple, compute):
    """``compute()``, kept in memory for the log as it is (a file or server log;
    recomputed once the log changes, never kept for an in-memory log)."""
    if store.path == ":memory:":
        return compute()
    target = absolute_target(store.path)
    key = (target, data_version(target), *what)
    if key not in _KEPT:
        if len(_KEPT) >= _KEPT_MAX:
            _KEPT.pop(next(iter(_KEPT)))
        _KEPT[key] = compute()
    return _KEPT[key]


def model_before(store: Store, day: str):
    """The reject model fitted on every plant's lots poured before ``day`` (not
    stored in the log; kept in memory for the log as it is while it does not change)."""
    def fit():
        with store.every_plant():
            table = aggregate_for_fit(zone_lot_features(store, None, _day_before(day)))
            return fit_model(store, save=False, table=table)

    return _kept(store, ("model before", day), fit)


def _prediction(store: Store, ch: dict, model, weeks: int, designs: dict | None = None) -> dict:
    """The prediction for one changed riser's zone, from lots before the change
    (``designs``: zone designs by pattern already read, filled as they are read)."""
    eff = ch["effective_from"]
    start = max(ch["previous_from"], (dt.date.fromisoformat(eff) - dt.timedelta(weeks=weeks)).isoformat())
    before = _rates(store, ch["pattern"], start, _day_before(eff), designs)
    before = before[(before["revision"] == ch["previous"]) & (before["zone"] == ch["zone"])]
    r, n = int(before["shrinkage_rejects"].sum()), int(before["castings"].sum())
    designs = {} if designs is None else designs
    if ch["pattern"] not in designs:
        designs[ch["pattern"]] = zone_design(store, ch["pattern"])
    design = designs[ch["pattern"]]
    now = design[(design["revision"] == ch["previous"]) & (design["zone"] == ch["zone"])]
    after = design[(design["revision"] == ch["revision"]) & (design["zone"] == ch["zone"])]
    out = {"rate_before": r / n if n else None, "castings_before": n, "shrinkage_rejects_before": r,
           "predicted_rate_before": None, "predicted_rate_after": None, "predicted_rate_after_low": None,
           "predicted_rate_after_high": None}
    if model is None or now.empty or after.empty:
        return out
    rates = calibration.zone_rates(model, now.reset_index(drop=True), [r], [n])
    moved = calibration.change(model, now.reset_index(drop=True), after.reset_index(drop=True),
                               rates["a"].to_numpy(), rates["b"].to_numpy())
    out["_draws"] = moved["after_draws"][0]
    out.update(predicted_rate_before=numbers.finite(rates["rate"].iat[0]),
               predicted_rate_after=numbers.finite(moved["rate_after"][0]),
               predicted_rate_after_low=numbers.finite(moved["rate_after_low"][0]),
               predicted_rate_after_high=numbers.finite(moved["rate_after_high"][0]))
    return out


def _rates(store: Store, pattern: str, start: str | None, end: str | None, read: dict | None) -> pd.DataFrame:
    """:func:`zone_shrinkage_rates` of ``pattern`` from ``start`` to ``end`` (ISO days,
    inclusive), from the pattern's lot features read once into ``read`` (the same
    rows a query of the window gives: a lot's design is the one in effect when poured)."""
    if read is None:
        return zone_shrinkage_rates(store, start, end, [pattern])
    key = ("features", pattern)
    if key not in read:
        read[key] = zone_lot_features(store, None, None, [pattern])
    f = read[key]
    day = f["poured_on"].astype(str)
    keep = np.ones(len(f), dtype=bool)
    if start is not None:
        keep &= (day >= start).to_numpy()
    if end is not None:
        keep &= (day <= end).to_numpy()
    return zone_shrinkage_rates(store, features=f[keep])


def _observed(store: Store, ch: dict, until: str | None, read: dict | None = None) -> tuple[int, int]:
    """(shrinkage rejects, castings) of the zone under the revision since it took effect."""
    end = _day_before(ch["next_from"]) if ch["next_from"] is not None else until
    if end is not None and end < ch["effective_from"]:
        return 0, 0
    after = _rates(store, ch["pattern"], ch["effective_from"], end, read)
    after = after[(after["revision"] == ch["revision"]) & (after["zone"] == ch["zone"])]
    return int(after["shrinkage_rejects"].sum()), int(after["castings"].sum())


def observed_interval(draws, castings: int) -> tuple[float | None, float | None]:
    """The 90 % interval of the rate ``castings`` castings would show: the
    5 % and 95 % quantiles of the rejects under the mixture of binomials
    over the predicted rate's ``draws``, over ``castings``."""
    if draws is None or castings <= 0 or np.isnan(draws).all():
        return None, None
    tail = (1.0 - calibration.LEVEL) / 2.0
    p = np.asarray(draws, dtype=float)
    p = p[~np.isnan(p)]
    # The mixture's quantiles lie where some draw's binomial has mass: below the lowest
    # draw's 1e-9 quantile the mixture's cdf is under 1e-9, above the highest draw's
    # 1 - 1e-9 quantile over 1 - 1e-9; the cdf is exact on the counts between (same result
    # as over every count 0..castings, at a fraction of the work for thousands of castings).
    first = int(max(binom.ppf(1e-9, castings, p.min()) - 1, 0))
    last = int(min(binom.ppf(1.0 - 1e-9, castings, p.max()) + 1, castings))
    k = np.arange(first, last + 1)
    cdf = binom.cdf(k[:, None], castings, p[None, :]).mean(axis=1)
    low = first + int(np.searchsorted(cdf, tail - 1e-12))
    high = first + int(np.searchsorted(cdf, 1.0 - tail - 1e-12))
    return low / castings, high / castings


def verdict(observed: float | None, low: float | None, high: float | None, castings_after: int,
            needed: int | None) -> str:
    """The verdict of one row (see the module docstring); ``low``, ``high``: the
    interval of :func:`observed_interval`."""
    if observed is None or low is None or high is None or needed is None or castings_after < needed:
        return "too early"
    if observed > high:
        return "worse than predicted"
    if observed < low:
        return "better than predicted"
    return "as predicted"


def predictions(store: Store, pattern: str | None = None, weeks: int = limits.WEEKS_DEFAULT,
                until: str | None = None, only: set | None = None) -> list[dict]:
    """The rows of the track record (``ROW_KEYS`` and the before-side figures),
    oldest change first; ``until``: the last day of pours looked at after a
    change (default: the whole log); ``only``: (pattern, revision) pairs to
    keep (default: every revision)."""
    changes = [ch for ch in _changes(store, pattern) if only is None or (ch["pattern"], ch["revision"]) in only]
    if not changes:
        return []
    zoned = _zones_with_shrinkage(store, sorted({ch["pattern"] for ch in changes}))
    rows: list[dict] = []
    models: dict = {}
    designs: dict = {}  # what is read once per record: zone designs and lot features by pattern
    for ch in changes:
        if (ch["pattern"], ch["zone"]) not in zoned:
            continue
        day = ch["effective_from"]
        if day not in models:
            models[day] = model_before(store, day)
        pred = _prediction(store, ch, models[day], weeks, designs)
        r, n = _observed(store, ch, until, designs)
        obs = r / n if n else None
        low, high = observed_interval(pred.pop("_draws", None), n)
        needed = castings_to_verdict(pred["rate_before"], pred["predicted_rate_after"], pred["castings_before"])
        rows.append({"pattern": ch["pattern"], "revision": ch["revision"], "previous_revision": ch["previous"],
                     "effective_from": day, "zone": ch["zone"], "riser": ch["riser"], **pred,
                     "observed_rate_after": obs, "castings_after": n, "shrinkage_rejects_after": r,
                     "observed_low": low, "observed_high": high,
                     "castings_to_verdict": needed,
                     "more_castings_to_verdict": None if needed is None else max(0, needed - n),
                     "verdict": verdict(obs, low, high, n, needed)})
    return rows


def _zones_with_shrinkage(store: Store, patterns: list[str]) -> set:
    """(pattern, zone) pairs of ``patterns`` with at least one shrinkage reject logged with that zone."""
    z = zone_shrinkage_rates(store, patterns=patterns[0] if len(patterns) == 1 else patterns)
    z = z[z["shrinkage_rejects"] > 0]
    return set(zip(z["pattern"], z["zone"], strict=False))


def summary(rows: list[dict]) -> dict:
    """The model's record over the judged rows: coverage of the 90 % intervals
    (the share ``as predicted``),
    mean log loss per casting, and the calibration table."""
    judged = [r for r in rows if r["verdict"] != "too early"]
    out: dict = {"revisions": len(rows), "judged": len(judged), "interval": calibration.LEVEL,
                 "coverage": None, "log_loss": None, "calibration": []}
    if not judged:
        return out
    inside = [r["verdict"] == "as predicted" for r in judged]
    out["coverage"] = float(np.mean(inside))
    rej = np.array([r["shrinkage_rejects_after"] for r in judged], dtype=float)
    cast = np.array([r["castings_after"] for r in judged], dtype=float)
    pred = np.array([r["predicted_rate_after"] for r in judged], dtype=float)
    out["log_loss"] = weighted_log_loss(rej, cast, pred)
    bins = np.digitize(pred, CALIBRATION_BINS[1:-1])
    for b in sorted(set(bins.tolist())):
        m = bins == b
        out["calibration"].append({"bin_low": CALIBRATION_BINS[b], "bin_high": CALIBRATION_BINS[b + 1],
                                   "rows": int(m.sum()), "castings": int(cast[m].sum()),
                                   "predicted_rate": float((pred[m] * cast[m]).sum() / cast[m].sum()),
                                   "observed_rate": float(rej[m].sum() / cast[m].sum())})
    return out


def track_record(store: Store, pattern: str | None = None, weeks: int = limits.WEEKS_DEFAULT) -> dict:
    """The track record, JSON-ready: ``{"revisions": [...], "summary": {...}}``
    (one row per changed riser whose zone has shrinkage records; ``pattern``:
    that pattern's alone, checked against the log)."""
    if pattern is not None:
        store.pattern(pattern)
    rows = predictions(store, pattern, weeks)
    return numbers.jsonable({"revisions": rows, "summary": summary(rows)})


def review_section(store: Store, revisions: list[dict], until: str, weeks: int = limits.WEEKS_DEFAULT) -> dict:
    """The weekly review's track record and pours to a verdict, for the
    revisions the review judges (``revisions``: ``judge_revisions``' rows,
    changed in place): each gets ``track_record`` (its rows), the
    ``predicted_rate_after`` of its changed zones (the sum of theirs: every
    casting has every zone) and, while still ``not_enough_data``,
    ``castings_to_verdict`` and ``more_castings_to_verdict``: the castings
    after the change the before/after test needs (:func:`castings_to_verdict`,
    at the observed rate before and the predicted rate after; power
    ``verdict_power``). Returns ``{"revisions": rows, "summary": ...}``."""
    only = {(r["pattern"], r["revision"]) for r in revisions if r["changed_zones"]}
    rows = _kept(store, ("review rows", frozenset(only), until, weeks),
                 lambda: predictions(store, weeks=weeks, until=until, only=only)) if only else []
    for r in revisions:
        mine = [t for t in rows if (t["pattern"], t["revision"]) == (r["pattern"], r["revision"])]
        preds = [t["predicted_rate_after"] for t in mine]
        after = float(sum(preds)) if preds and None not in preds else None
        b, a = r["before"], r["after"]
        needed = None
        if r["verdict"] == "not_enough_data" and after is not None and b["inspected"]:
            needed = castings_to_verdict(b["shrinkage_rejected"] / b["inspected"], after, b["inspected"])
        r.update(track_record=numbers.jsonable(mine), predicted_rate_after=numbers.finite(after),
                 castings_to_verdict=needed, verdict_power=POWER, verdict_alpha=ALPHA,
                 more_castings_to_verdict=None if needed is None else max(0, needed - a["inspected"]))
    return numbers.jsonable({"revisions": rows, "summary": summary(rows)})
