"""Statistics for the weekly scrap review.

Pure functions on numpy arrays and pandas tables; nothing here reads the
database or formats output.

- Reject rate p = rejected / inspected with a Wilson score interval.
- p-chart with varying sample size (NIST/SEMATECH e-Handbook of Statistical
  Methods, 6.3.3.2): centre p̄ = Σk / Σn. The limits are exact binomial
  probability limits for each period's own n: the counts with 0.135 % of the
  Binomial(nᵢ, p̄) distribution beyond them on each side
  (``scipy.stats.binom.ppf``), the tail the handbook's 3-sigma limits aim at.
  The normal approximation p̄ ± 3·√(p̄(1 − p̄)/nᵢ) is poor when nᵢ·p̄ is below
  about 5 (the handbook's binomial assumptions): at 30 castings and a 2 %
  rate it signals an in-control week about ten times too often, and its
  lower limit stays at 0, so an improvement never shows as a point.
  Signal rules: a point beyond a limit; a run of 8 or more points on one side
  of the centre (Western Electric / Nelson run rule).
- Before/after comparison of two reject rates: Fisher's exact test and a
  Newcombe (hybrid Wilson score) interval for the change in rate.
- Pareto table with cumulative share and the "vital few".
- ISO week labels ("2026-W47") and their Monday.

Units: counts are castings (whole numbers); rates, shares and limits are
fractions in 0..1, not percentages.
"""

from __future__ import annotations

import datetime as _dt
import functools
import math
import re

import numpy as np
import pandas as pd
from scipy import special as _special
from scipy import stats as _sps

from tracker.errors import BadInput

# Probability in each tail beyond a control limit: the normal distribution's
# share beyond 3 sigma, Φ(−3) = 0.00135 (NIST/SEMATECH e-Handbook 6.3.3.2).
TAIL = 0.00135
RUN_LENGTH = 8
RULES = ("beyond_limit", "run_of_8")
# The run rule's own false-signal rate (measured by a seeded simulation in
# tests/review/test_stats.py, and the exact rate of a run of 8 in 26 fair coin tosses).
RUN_RULE_NOTE = ("The run-of-8 rule signals on about 4-9 % of in-control 26-week charts by chance alone, "
                 "more where n·p̄ is small (a few rejects a week): read a run as a prompt to look, "
                 "not as proof of a change.")
CHART_COLUMNS = ("label", "rejected", "inspected", "p", "centre", "lcl", "ucl",
                 "beyond", "run", "signal")

# compare_rates calls a period "long enough" when the comparison had at least
# this chance of noticing that the reject rate had halved.
MIN_POWER = 0.8
DETECTABLE_RATIO = 0.5
VERDICTS = ("improved", "worse", "no_clear_change", "not_enough_data")

VITAL_FEW_SHARE = 0.8


# --- input checks ---------------------------------------------------------------

def _first(arr, mask):
    arr = np.atleast_1d(arr)
    mask = np.atleast_1d(mask)
    return arr[np.argmax(mask)].item() if mask.any() else arr.flat[0].item()


def _counts(field: str, values) -> np.ndarray:
    """Whole, non-negative counts as a float array (float so NaN maths works)."""
    a = np.asarray(values, dtype=float)
    bad = ~np.isfinite(a) | (a < 0) | (a != np.round(a))
    if np.any(bad):
        raise BadInput(field, _first(a, bad), f"{field} must be a whole number of castings, 0 or more")
    return a


def _check_k_le_n(k: np.ndarray, n: np.ndarray, k_name: str, n_name: str):
    bad = k > n
    if np.any(bad):
        raise BadInput(k_name, _first(k, bad), f"{k_name} cannot exceed {n_name} "
                       f"({_first(n, bad)}); check the two columns are not swapped")


def _check_confidence(confidence: float, field: str = "confidence") -> float:
    c = float(confidence)
    if not (0.0 < c < 1.0):
        raise BadInput(field, confidence, f"{field} must lie strictly between 0 and 1, e.g. 0.95")
    return c


# --- Wilson interval --------------------------------------------------------------

def _wilson(k: np.ndarray, n: np.ndarray, z: float):
    """Wilson bounds for already-checked float arrays; n = 0 gives (0, 1)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        phat = k / n
        z2n = z * z / n
        centre = (phat + z2n / 2.0) / (1.0 + z2n)
        half = z / (1.0 + z2n) * np.sqrt(phat * (1.0 - phat) / n + z2n / (4.0 * n))
        low = centre - half
        high = centre + half
    empty = n == 0
    low = np.where(empty, 0.0, low)
    high = np.where(empty, 1.0, high)
    # At k = 0 or k = n the bound is 0 or 1 exactly; rounding can leave 1e-17.
    low = np.where(k == 0, 0.0, np.clip(low, 0.0, 1.0))
    high = np.where(k == n, 1.0, np.clip(high, 0.0, 1.0))
    return low, high


def wilson_interval(k, n, confidence: float = 0.95):
    """Wilson score interval for a reject rate k / n.

    Parameters
    ----------
    k : int or array-like
        Rejected castings (0 ≤ k ≤ n).
    n : int or array-like
        Inspected castings (0 or more); broadcast against ``k``.
    confidence : float
        Two-sided coverage, a fraction (default 0.95).

    Returns
    -------
    (low, high)
        Bounds of the rate as fractions in 0..1: floats for scalar input,
        numpy arrays otherwise. Where n = 0 nothing is known and the interval
        is the whole range (0.0, 1.0) rather than NaN, so tables and charts
        stay drawable. k = 0 gives low = 0; k = n gives high = 1.
    """
    c = _check_confidence(confidence)
    scalar = np.ndim(k) == 0 and np.ndim(n) == 0
    ka = np.asarray(k, dtype=float)
    na = np.asarray(n, dtype=float)
    bad_k = ~np.isfinite(ka) | (ka < 0)
    if np.any(bad_k):
        raise BadInput("k", _first(ka, bad_k), "rejected count must be a number, 0 or more")
    bad_n = ~np.isfinite(na) | (na < 0)
    if np.any(bad_n):
        raise BadInput("n", _first(na, bad_n), "inspected count must be a number, 0 or more")
    ka, na = np.broadcast_arrays(ka, na)
    _check_k_le_n(ka, na, "k", "n")
    z = _normal_quantile(0.5 + c / 2.0)
    low, high = _wilson(ka, na, z)
    if scalar:
        return float(low), float(high)
    return low, high


# --- p-chart ----------------------------------------------------------------------

def _run_member(side: np.ndarray, length: int = RUN_LENGTH) -> np.ndarray:
    """True where a point lies in a run of ``length`` or more equal non-zero sides."""
    if side.size == 0:
        return np.zeros(0, dtype=bool)
    # A point on the centre (side 0) starts its own group, so it breaks a run.
    start = np.ones(side.size, dtype=bool)
    start[1:] = (side[1:] != side[:-1]) | (side[1:] == 0)
    group = np.cumsum(start) - 1
    sizes = np.bincount(group)
    return (sizes[group] >= length) & (side != 0)


def probability_limits(inspected, centre) -> tuple[np.ndarray, np.ndarray]:
    """Exact binomial probability limits, as counts, of a p-chart point.

    For each period with n = ``inspected`` castings judged against the reject
    rate ``centre`` (fractions 0..1; the two broadcast), returns
    ``(low, high)``: ``high`` is the smallest count with at most ``TAIL``
    (0.135 %) of Binomial(n, centre) above it, ``low`` the smallest count
    with at least 0.135 % at or below it, both from
    ``scipy.stats.binom.ppf``. A point signals when its rejected count lies
    above ``high`` or below ``low``; ``low`` = 0 cannot be breached. The
    limits as rates are ``low / n`` and ``high / n``. n = 0 or an unknown
    centre gives NaN.
    """
    n, c = np.broadcast_arrays(np.asarray(inspected, dtype=float), np.asarray(centre, dtype=float))
    low = np.full(n.shape, np.nan)
    high = np.full(n.shape, np.nan)
    ok = (n > 0) & np.isfinite(c)
    if ok.any():
        # Charts repeat (n, centre) pairs (a pattern's weeks share its centre): each
        # distinct pair is computed once, found by sorting whole numbers.
        rates, rate_i = np.unique(c[ok], return_inverse=True)
        counts = n[ok].astype(np.int64)
        base = int(counts.max()) + 1
        pairs, inverse = np.unique(rate_i.ravel() * base + counts, return_inverse=True)
        pn, pc = pairs % base, rates[pairs // base]
        # both tails in one call (scipy's fixed cost per call is most of a short chart's)
        both = _sps.binom.ppf(np.array([[TAIL], [1.0 - TAIL]]), pn, pc)[:, inverse.ravel()]
        low[ok], high[ok] = both[0], both[1]
    return low, high


def _p_chart_input(rejected, inspected, labels, centre: float | None) -> tuple[np.ndarray, np.ndarray, list, float]:
    """:func:`p_chart`'s counts, labels and centre (fraction; NaN where nothing was
    inspected), checked: BadInput names the argument that breaks a rule."""
    k = _counts("rejected", rejected).ravel()
    n = _counts("inspected", inspected).ravel()
    if k.size != n.size:
        raise BadInput("inspected", f"{n.size} values", f"need one per rejected value ({k.size})")
    _check_k_le_n(k, n, "rejected", "inspected")
    labels = list(np.arange(k.size) if labels is None else labels)
    if len(labels) != k.size:
        raise BadInput("labels", f"{len(labels)} values", f"need one per period ({k.size})")
    if centre is None:
        total = n.sum()
        return k, n, labels, k.sum() / total if total > 0 else math.nan
    pbar = float(centre)
    if not (0.0 <= pbar <= 1.0):
        raise BadInput("centre", centre, "the baseline reject rate must be a fraction between 0 and 1")
    return k, n, labels, pbar


def p_chart(rejected, inspected, labels=None, *, centre: float | None = None) -> pd.DataFrame:
    """p-chart of reject rate with a sample size that varies point to point.

    Centre p̄ = Σ rejected / Σ inspected (NIST/SEMATECH e-Handbook 6.3.3.2);
    limits are exact binomial probability limits for each period's own n
    (:func:`probability_limits`: 0.135 % of Binomial(nᵢ, p̄) beyond each).

    Parameters
    ----------
    rejected, inspected : array-like of whole numbers
        Castings rejected and inspected in each period (e.g. each week).
    labels : array-like, optional
        One label per period (week strings, dates); default 0, 1, 2, ...
    centre : float, optional
        A known or baseline reject rate (fraction 0..1), e.g. from earlier
        weeks, to judge these periods against instead of their own p̄.

    Returns
    -------
    pandas.DataFrame
        One row per period, in input order, with columns ``label``,
        ``rejected``, ``inspected`` (int), ``p`` (rejected / inspected),
        ``centre``, ``lcl``, ``ucl`` (fractions: the limit counts over
        inspected), and booleans ``beyond`` (rejected above the upper limit
        count or below the lower one; a zero lower limit cannot be
        breached), ``run`` (the point is one of 8 or more consecutive points
        on the same side of the centre; a point exactly on the centre breaks
        a run) and ``signal`` (beyond or run).

        Periods with inspected = 0 are kept with p, lcl and ucl NaN and never
        signal; they are skipped by the run rule (neither extending nor
        breaking a run), as an unplotted week carries no evidence either way.
        If nothing at all was inspected and no ``centre`` is given, the centre
        is NaN and no point signals.
    """
    k, n, labels, pbar = _p_chart_input(rejected, inspected, labels, centre)
    seen = n > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        p = np.where(seen, k / n, np.nan)
    low, high = probability_limits(n, pbar)
    with np.errstate(invalid="ignore", divide="ignore"):
        lcl, ucl = low / n, high / n

    judged = seen & np.isfinite(pbar)
    # Judged on the counts; NaN comparisons are False, so unseen periods never count.
    beyond = judged & ((k > high) | (k < low))

    side = np.sign(p - pbar)
    # k/n and Σk/Σn are each one correctly rounded division, so equal
    # fractions give equal floats; the tolerance only covers a typed baseline.
    side[np.isclose(p, pbar, rtol=1e-12, atol=0.0)] = 0.0
    run = np.zeros(k.size, dtype=bool)
    run[judged] = _run_member(side[judged])

    return pd.DataFrame({
        "label": labels,
        "rejected": k.astype(np.int64),
        "inspected": n.astype(np.int64),
        "p": p,
        "centre": np.full(k.size, pbar),
        "lcl": lcl,
        "ucl": ucl,
        "beyond": beyond,
        "run": run,
        "signal": beyond | run,
    }, columns=list(CHART_COLUMNS))


def _rules_in(rows: pd.DataFrame) -> list[str]:
    missing = [c for c in ("beyond", "run") if c not in rows.columns]
    if missing:
        raise BadInput("chart", ", ".join(missing), "missing column(s); pass the table p_chart returns")
    fired = {"beyond_limit": bool(rows["beyond"].any()), "run_of_8": bool(rows["run"].any())}
    return [rule for rule in RULES if fired[rule]]


def signal_rules(chart_df: pd.DataFrame) -> list[str]:
    """Names of the rules that fired at any point of a p-chart.

    Returns a list drawn from ``RULES`` in that order: "beyond_limit" (a point
    outside a control limit) and "run_of_8" (8 or more points in a row on one
    side of the centre). An empty list means the chart shows no signal.
    """
    return _rules_in(chart_df)


def latest_signal(chart_df: pd.DataFrame, last: int = 1) -> list[str]:
    """Names of the rules firing at the last ``last`` rows of a p-chart.

    A weekly review asks first whether the newest week(s) signal; older
    signals have usually been discussed already. A run counts when a latest
    point belongs to it. Same names and order as :func:`signal_rules`.
    """
    if isinstance(last, bool) or not isinstance(last, (int, np.integer)) or last < 1:
        raise BadInput("last", last, "last must be a whole number of periods, 1 or more")
    return _rules_in(chart_df.tail(int(last)))


# --- before / after ----------------------------------------------------------------

@functools.lru_cache(maxsize=64)
def _normal_quantile(q: float) -> float:
    """The standard normal quantile Φ⁻¹(q) (``scipy.stats.norm.ppf``), once per q."""
    return _sps.norm.ppf(q)


def _power_to_detect(p1, n1, n2, alpha: float, ratio: float = DETECTABLE_RATIO) -> np.ndarray:
    """Approximate power of a two-sided two-proportion test of p1 against ratio·p1
    (arrays: one power per element).

    Normal approximation with the pooled null variance (Fleiss, Statistical
    Methods for Rates and Proportions). Fisher's exact test is a little more
    conservative, so this slightly flatters it; it is used only to say whether
    a "no change" could have meant anything. 0 where n1 or n2 is 0, p1 is 0 or
    p1 = ratio·p1.
    """
    p1, n1, n2 = (np.asarray(x, dtype=float) for x in (p1, n1, n2))
    p2 = ratio * p1
    ok = (n1 > 0) & (n2 > 0) & (p1 > 0) & (p1 != p2)
    z = _normal_quantile(1.0 - alpha / 2.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        pooled = (n1 * p1 + n2 * p2) / (n1 + n2)
        se0 = np.sqrt(pooled * (1.0 - pooled) * (1.0 / n1 + 1.0 / n2))
        se1 = np.sqrt(p1 * (1.0 - p1) / n1 + p2 * (1.0 - p2) / n2)
        # scipy.stats.norm.cdf is scipy.special.ndtr for the standard normal
        power = _special.ndtr((np.abs(p1 - p2) - z * se0) / se1)
    return np.where(ok, power, 0.0)


def _fisher_two_sided(k1, n1, k2, n2) -> np.ndarray:
    """Two-sided p-values of Fisher's exact test of the 2×2 tables [[k1, n1 − k1],
    [k2, n2 − k2]], many at once.

    The algorithm of ``scipy.stats.fisher_exact`` for a 2×2 table (the tables
    as likely as the one seen or less, found by a binary search on each side of
    the hypergeometric mode, with its 1 + 1e-14 tolerance), run on arrays: the
    same p-values, with a few dozen calls of the hypergeometric distribution
    instead of a few dozen per table.
    """
    a = np.asarray(k1, dtype=np.int64)
    b = np.asarray(n1, dtype=np.int64) - a
    c = np.asarray(k2, dtype=np.int64)
    d = np.asarray(n2, dtype=np.int64) - c
    hg = _sps.hypergeom
    out = np.ones(a.shape)
    # a row or column of zeros: p = 1
    todo = ~((a + c == 0) | (b + d == 0) | (a + b == 0) | (c + d == 0))
    r1, r2, col = a + b, c + d, a + c
    total = r1 + r2
    mode = ((col + 1) * (r1 + 1) / (total + 2)).astype(np.int64)
    pexact = hg.pmf(a, total, r1, col)
    pmode = hg.pmf(mode, total, r1, col)
    epsilon = 1e-14
    gamma = 1 + epsilon
    with np.errstate(invalid="ignore", divide="ignore"):
        todo &= ~(np.abs(pexact - pmode) / np.maximum(pexact, pmode) <= epsilon)
    low = todo & (a < mode)
    high = todo & ~(a < mode)

    # a below the mode: the lower tail, plus the upper tail from where the pmf falls to pexact
    i = np.flatnonzero(low)
    if i.size:
        plower = hg.cdf(a[i], total[i], r1[i], col[i])
        edge = hg.pmf(col[i], total[i], r1[i], col[i]) > pexact[i] * gamma
        out[i[edge]] = plower[edge]
        j, keep = i[~edge], ~edge
        if j.size:
            guess = _binary_search(lambda x, m: -hg.pmf(x, total[j][m], r1[j][m], col[j][m]),
                                   -pexact[j] * gamma, mode[j], col[j])
            out[j] = plower[keep] + hg.sf(guess, total[j], r1[j], col[j])
    # a at or above the mode: the upper tail, plus the lower tail
    i = np.flatnonzero(high)
    if i.size:
        pupper = hg.sf(a[i] - 1, total[i], r1[i], col[i])
        edge = hg.pmf(0, total[i], r1[i], col[i]) > pexact[i] * gamma
        out[i[edge]] = pupper[edge]
        j, keep = i[~edge], ~edge
        if j.size:
            guess = _binary_search(lambda x, m: hg.pmf(x, total[j][m], r1[j][m], col[j][m]),
                                   pexact[j] * gamma, np.zeros(j.size, dtype=np.int64), mode[j])
            out[j] = pupper[keep] + hg.cdf(guess, total[j], r1[j], col[j])
    return np.minimum(out, 1.0)


def _binary_search(f, target: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Per element, the i from lo to hi with f(i) <= target < f(i + 1), for f ascending
    on lo..hi (scipy.stats' binary search for two-sided exact tests, on arrays).
    ``f(x, mask)`` evaluates the elements ``mask`` at ``x``."""
    lo, hi = lo.copy(), hi.copy()
    found = np.full(lo.shape, -1, dtype=np.int64)
    active = lo < hi
    while active.any():
        m = np.flatnonzero(active)
        mid = lo[m] + (hi[m] - lo[m]) // 2
        val = f(mid, active)
        below, above = val < target[m], val > target[m]
        lo[m[below]] = mid[below] + 1
        hi[m[above]] = mid[above] - 1
        equal = ~below & ~above
        found[m[equal]] = mid[equal]
        active[m[equal]] = False
        active &= lo < hi
    rest = found < 0
    if rest.any():
        at_lo = f(lo[rest], rest) <= target[rest]
        found[rest] = np.where(at_lo, lo[rest], lo[rest] - 1)
    return found


def compare_rates(k_before, n_before, k_after, n_after, confidence: float = 0.95,
                  *, alpha: float = 0.05) -> dict:
    """Did the reject rate change between two periods (e.g. a riser revision)?

    Parameters
    ----------
    k_before, n_before : int
        Castings rejected and inspected before the change.
    k_after, n_after : int
        Castings rejected and inspected after it.
    confidence : float
        Coverage of the interval for the change in rate (default 0.95).
    alpha : float
        Significance level of Fisher's exact test (default 0.05).

    Returns
    -------
    dict with keys
        ``k_before``, ``n_before``, ``k_after``, ``n_after`` (int);
        ``rate_before``, ``rate_after`` (fractions; NaN where n = 0);
        ``difference`` (rate_after − rate_before, negative = fewer rejects);
        ``diff_low``, ``diff_high`` (Newcombe hybrid Wilson score interval
        for the difference at ``confidence``); ``confidence``;
        ``p_value`` (Fisher's exact test, two-sided; NaN where either n = 0);
        ``alpha``; ``power_to_halve`` (approximate chance, 0..1, that these
        sample sizes reveal a halving of the before rate at ``alpha``);
        ``verdict``, one of ``VERDICTS``.

    Verdict rule
    ------------
    "improved" when rate_after < rate_before and p_value < alpha; "worse" when
    rate_after > rate_before and p_value < alpha. Otherwise the periods are
    only called "no_clear_change" when the comparison was able to notice a
    real improvement: power_to_halve ≥ 0.8 (80 % chance of detecting a halving
    of the before rate). Below that, or with no rejects before (nothing to
    halve), or an empty period, the verdict is "not_enough_data" — absence
    of evidence is not reported as evidence of no effect. For a 4 % rate and
    equal periods this asks for roughly 1,150 castings on each side.
    """
    for name, v in (("k_before", k_before), ("n_before", n_before), ("k_after", k_after), ("n_after", n_after)):
        if np.ndim(v) != 0:
            raise BadInput(name, v, f"{name} must be a single whole number of castings")
    return compare_rates_many([k_before], [n_before], [k_after], [n_after], confidence, alpha=alpha)[0]


def compare_rates_many(k_before, n_before, k_after, n_after, confidence: float = 0.95,
                       *, alpha: float = 0.05) -> list[dict]:
    """:func:`compare_rates` of many pairs of periods at once (equal-length
    sequences of counts): one dict per pair, the same figures as one call each."""
    c = _check_confidence(confidence)
    a = _check_confidence(alpha, "alpha")
    kb, nb = _counts("k_before", k_before), _counts("n_before", n_before)
    ka, na = _counts("k_after", k_after), _counts("n_after", n_after)
    kb, nb, ka, na = np.broadcast_arrays(kb, nb, ka, na)
    _check_k_le_n(kb, nb, "k_before", "n_before")
    _check_k_le_n(ka, na, "k_after", "n_after")
    judged = (nb > 0) & (na > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        p1, p2 = kb / nb, ka / na
    z = _normal_quantile(0.5 + c / 2.0)
    l1, u1 = _wilson(kb, nb, z)
    l2, u2 = _wilson(ka, na, z)
    d = p2 - p1
    # Newcombe (1998), method 10: combine each rate's Wilson distances.
    low = d - np.sqrt((p2 - l2) ** 2 + (u1 - p1) ** 2)
    high = d + np.sqrt((u2 - p2) ** 2 + (p1 - l1) ** 2)
    p_value = np.full(kb.shape, math.nan)
    power = np.zeros(kb.shape)
    i = np.flatnonzero(judged)
    if i.size:
        p_value[i] = _fisher_two_sided(kb[i], nb[i], ka[i], na[i])
        power[i] = _power_to_detect(p1[i], nb[i], na[i], a)
    out = []
    columns: list = [x.tolist() for x in (kb, nb, ka, na, p1, p2, d, low, high, p_value, power, judged)]
    for k1, n1, k2, n2, r1, r2, dj, lo, hi, pv, pw, ok in zip(*columns, strict=False):
        row = {"k_before": int(k1), "n_before": int(n1), "k_after": int(k2), "n_after": int(n2),
               "rate_before": r1 if n1 > 0 else math.nan, "rate_after": r2 if n2 > 0 else math.nan,
               "difference": math.nan, "diff_low": math.nan, "diff_high": math.nan,
               "confidence": c, "p_value": math.nan, "alpha": a, "power_to_halve": 0.0,
               "verdict": "not_enough_data"}
        if ok:
            row.update(difference=dj, diff_low=lo, diff_high=hi, p_value=pv, power_to_halve=pw)
            if pv < a and r2 < r1:
                row["verdict"] = "improved"
            elif pv < a and r2 > r1:
                row["verdict"] = "worse"
            elif pw >= MIN_POWER:
                row["verdict"] = "no_clear_change"
        out.append(row)
    return out


# --- Pareto -------------------------------------------------------------------------

def pareto(df: pd.DataFrame, by: str, value: str) -> pd.DataFrame:
    """Pareto table: ``value`` summed per ``by``, largest first.

    Parameters
    ----------
    df : pandas.DataFrame
        One row per record (e.g. per scrapped lot).
    by : str
        Column to group on (e.g. "pattern" or "defect").
    value : str
        Column to sum (e.g. scrap cost in currency units, or castings).
        Missing values count as 0; negative values are refused.

    Returns
    -------
    pandas.DataFrame
        Columns ``<by>``, ``<value>`` (the sum), ``share`` (fraction of the
        total, 0..1), ``cumulative_share`` (0..1) and ``vital_few`` (True for
        the rows up to and including the first whose cumulative share reaches
        80 %). Ties keep ``by`` in ascending order so the table is stable.
        When the total is 0 every share is 0 and no row is vital.
    """
    for col in (by, value):
        if col not in df.columns:
            raise BadInput("column", col, "not in the table; columns are " + ", ".join(map(str, df.columns)))
    values = pd.to_numeric(df[value], errors="coerce")
    bad = values < 0
    if bad.any():
        raise BadInput(value, values[bad].iloc[0], f"{value} cannot be negative")
    grouped = (values.groupby(df[by], sort=True, dropna=False).sum(min_count=0)
               .rename(value).reset_index())
    shares = pareto_shares(grouped[value].to_numpy())
    grouped = grouped.take(shares["order"]).reset_index(drop=True)
    for col in ("share", "cumulative_share", "vital_few"):
        grouped[col] = shares[col]
    return grouped


def pareto_shares(values) -> dict[str, np.ndarray]:
    """The Pareto order and shares of one value per key, keys already in ascending order.

    Returns ``order`` (indexes of ``values``, largest first; ties keep the
    given order) and, in that order, ``share`` and ``cumulative_share``
    (fractions 0..1) and ``vital_few`` (up to and including the first row
    whose cumulative share reaches 80 %). A zero total gives zero shares and
    no vital row. :func:`pareto` is this after summing per key.
    """
    v = np.asarray(values, dtype=float)
    order = np.argsort(-v, kind="stable")
    v = v[order]
    total = float(v.sum())
    if total > 0:
        share = v / total
        cumulative = np.cumsum(share)
        # Floating sums can stop at 0.79999999 where the exact share is 0.8.
        reached = cumulative >= VITAL_FEW_SHARE - 1e-12
        first = int(np.argmax(reached)) if reached.any() else len(v) - 1
        vital = np.arange(len(v)) <= first
    else:
        share = np.zeros(len(v))
        cumulative = np.zeros(len(v))
        vital = np.zeros(len(v), dtype=bool)
    return {"order": order, "share": share, "cumulative_share": np.clip(cumulative, 0.0, 1.0),
            "vital_few": vital}


# --- ISO weeks ----------------------------------------------------------------------

_WEEK_RE = re.compile(r"^(\d{4})-[Ww](\d{2})$")
_LOOSE_WEEK_RE = re.compile(r"^\s*(\d{4})\s*[-/ ]?\s*[Ww]?\s*(\d{1,2})\s*$")


def _as_date(value) -> _dt.date:
    if isinstance(value, _dt.datetime):
        return value.date()
    if isinstance(value, _dt.date):
        return value
    if isinstance(value, str):
        try:
            return _dt.date.fromisoformat(value.strip()[:10])
        except ValueError:
            pass
    raise BadInput("date", value, "write the date as YYYY-MM-DD, e.g. 2026-11-16")


def iso_week(date):
    """ISO 8601 week label of a date, e.g. ``"2026-W47"``.

    Accepts a ``datetime.date``, a ``datetime``/``pandas.Timestamp`` or an
    ISO date string (YYYY-MM-DD). A pandas Series (or other list-like) gives a
    Series of labels. The year is the ISO week-year, so 2027-01-01 (a Friday)
    belongs to "2026-W53".
    """
    if isinstance(date, (pd.Series, pd.Index, np.ndarray, list, tuple)):
        stamps = pd.to_datetime(pd.Series(date), errors="coerce")
        if stamps.isna().any():
            bad = pd.Series(date)[stamps.isna().to_numpy()].iloc[0]
            raise BadInput("date", bad, "write the date as YYYY-MM-DD, e.g. 2026-11-16")
        cal = stamps.dt.isocalendar()
        labels = (cal["year"].astype(str) + "-W" + cal["week"].astype(str).str.zfill(2))
        if isinstance(date, pd.Series):
            labels.index = date.index
        return labels.rename("week")
    year, week, _ = _as_date(date).isocalendar()
    return f"{year:04d}-W{week:02d}"


def week_start(week: str) -> _dt.date:
    """The Monday (a ``datetime.date``) that starts ISO week ``"YYYY-Www"``.

    Raises ``BadInput`` (a ValueError) for anything else, with the corrected
    spelling where one can be guessed, e.g.
    "week: got '2026-47'; write it as 2026-W47".
    """
    text = week.strip() if isinstance(week, str) else week
    m = _WEEK_RE.match(text) if isinstance(text, str) else None
    if m is None:
        loose = _LOOSE_WEEK_RE.match(week) if isinstance(week, str) else None
        if loose and 1 <= int(loose.group(2)) <= 53:
            hint = f"write it as {loose.group(1)}-W{int(loose.group(2)):02d}"
        else:
            hint = "write it as YYYY-Www, e.g. 2026-W47"
        raise BadInput("week", week, hint)
    year, num = int(m.group(1)), int(m.group(2))
    # 28 December always falls in the last ISO week of its year.
    weeks_in_year = _dt.date(year, 12, 28).isocalendar()[1]
    if not 1 <= num <= weeks_in_year:
        raise BadInput("week", week, f"{year} has weeks W01 to W{weeks_in_year:02d}")
    return _dt.date.fromisocalendar(year, num, 1)
