"""Each pattern against the target: the probability that its reject rate is above it.

A p-chart judges a pattern against its own centre: a pattern that has always
rejected 14 % is "in control" at 14 %, and with a few dozen castings a week
its limits are too wide to signal anyway. The meeting also needs to know
whether the pattern is worse than the *target*.

The figure used here is the posterior probability that the pattern's true
reject rate p is above the target t, given r castings rejected of n
inspected in the review window, under a uniform prior on p (Beta(1, 1)):

    P(p > t | r, n) = P(Beta(r + 1, n - r + 1) > t) = P(Binomial(n + 1, t) <= r)

(the second equality is the beta-binomial identity between the regularised
incomplete beta function and the binomial distribution function). A pattern
*signals against the target* when that probability reaches
``SIGNAL_PROBABILITY`` (95 %). With 14 rejects in 100 castings against a 2 %
target the probability is above 99.99 %; with 1 in 20 it is about 93 % (no
signal yet), and with none in 20 about 65 % (20 castings say little).

Counts are castings; rates and the target are fractions 0..1.
"""

from __future__ import annotations

from scipy import stats as sps

from tracker.numbers import finite

SIGNAL_PROBABILITY = 0.95  # a pattern signals against the target at or above this probability
PRIOR = "uniform, Beta(1, 1)"
METHOD = ("probability that the reject rate of the pattern is above the target, from its castings rejected "
          f"and inspected in the window (Bayesian, {PRIOR} prior); signals at {SIGNAL_PROBABILITY:.0%} or more")


def chance_above_target(rejected: int, inspected: int, target: float) -> float | None:
    """P(reject rate > ``target``) after ``rejected`` of ``inspected`` castings, uniform prior
    (None when nothing was inspected or the counts are missing)."""
    r, n, t = finite(rejected), finite(inspected), finite(target)
    if r is None or n is None or t is None or n <= 0:
        return None
    r, n = int(round(r)), int(round(n))
    if not 0 <= r <= n:
        raise ValueError(f"rejected {r} must lie between 0 and inspected {n}")
    if t <= 0:
        return 1.0
    if t >= 1:
        return 0.0
    # Beta(r + 1, n - r + 1) survival at t, through the binomial distribution function
    return float(sps.binom.cdf(r, n + 1, t))


def against_target(review: dict) -> list[dict]:
    """Each pattern of a weekly review (``tracker.review.weekly.weekly_review``) against its
    target: pattern, inspected, rejected, reject_rate, target, chance_above (0..1 or None)
    and ``signal`` (chance at or above SIGNAL_PROBABILITY), highest chance first."""
    target = float(review["target"])
    out = []
    for p in review.get("patterns") or []:
        chance = chance_above_target(p.get("rejected"), p.get("inspected"), target)
        out.append({"pattern": p["pattern"], "inspected": p.get("inspected"), "rejected": p.get("rejected"),
                    "reject_rate": p.get("reject_rate"), "target": target, "chance_above": chance,
                    "signal": chance is not None and chance >= SIGNAL_PROBABILITY})
    return sorted(out, key=lambda d: (-(d["chance_above"] if d["chance_above"] is not None else -1.0),
                                      d["pattern"]))
