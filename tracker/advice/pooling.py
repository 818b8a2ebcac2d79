"""Partial pooling of zone shrinkage rates: empirical-Bayes beta-binomial.

A zone's true shrinkage rate is taken to be drawn from a beta distribution
centred on the reject model's rate for the zone's design, ``mean``, with a
prior weight ``weight`` (castings' worth: Beta(weight·mean, weight·(1 − mean))).
Its castings and shrinkage rejects then update it in closed form: the
posterior is Beta(r + weight·mean, n − r + weight·(1 − mean)), whose mean is
(r + weight·mean) / (n + weight). With few castings the model speaks; with
many, the zone's own rate does.

The weight is the shop's between-zone spread: estimated once per model fit
from every zone of the training history by maximum marginal likelihood (the
beta-binomial likelihood of each zone's counts given its model rate). This is
the empirical-Bayes method of Efron and Morris (1975, "Data analysis using
Stein's estimator and its generalizations", JASA 70) as set out for binomial
counts by Casella (1985, "An introduction to empirical Bayes data analysis",
The American Statistician 39(2)); the hierarchical binomial of Gelman et al.,
*Bayesian Data Analysis*, is the same model with a full prior on the weight.
"""

from __future__ import annotations

import numpy as np
from scipy import optimize, stats
from scipy.special import betaln, gammaln

# Bounds of the prior weight, castings: below 1 the model would count for
# less than one casting; above a million it is the model alone.
WEIGHT_BOUNDS = (1.0, 1.0e6)
RATE_CLIP = 1e-6  # a model rate of exactly 0 or 1 would make the beta degenerate


def beta_parameters(mean, weight) -> tuple[np.ndarray, np.ndarray]:
    """The prior Beta(a, b) of a zone: a = weight·mean, b = weight·(1 − mean)."""
    m = np.clip(np.asarray(mean, dtype=float), RATE_CLIP, 1.0 - RATE_CLIP)
    w = np.asarray(weight, dtype=float)
    return w * m, w * (1.0 - m)


def betabinom_logpmf(rejects, castings, mean, weight) -> np.ndarray:
    """Log probability of ``rejects`` in ``castings`` under the beta-binomial
    with the given prior mean and weight (per zone): the marginal likelihood."""
    r = np.asarray(rejects, dtype=float)
    n = np.asarray(castings, dtype=float)
    a, b = beta_parameters(mean, weight)
    return (gammaln(n + 1.0) - gammaln(r + 1.0) - gammaln(n - r + 1.0)
            + betaln(r + a, n - r + b) - betaln(a, b))


def fit_weight(rejects, castings, mean) -> float:
    """The prior weight (castings) that maximises the zones' marginal
    likelihood, searched on a log scale inside ``WEIGHT_BOUNDS``; the upper
    bound where the zones spread no more than binomial luck says."""
    r = np.asarray(rejects, dtype=float)
    n = np.asarray(castings, dtype=float)
    keep = n > 0
    if keep.sum() < 2:
        return WEIGHT_BOUNDS[1]
    r, n, mu = r[keep], n[keep], np.asarray(mean, dtype=float)[keep]

    def nll(log_w: float) -> float:
        return -float(betabinom_logpmf(r, n, mu, np.exp(log_w)).sum())

    lo, hi = np.log(WEIGHT_BOUNDS[0]), np.log(WEIGHT_BOUNDS[1])
    res = optimize.minimize_scalar(nll, bounds=(lo, hi), method="bounded", options={"xatol": 1e-6})
    best = float(res.x)
    if nll(hi) <= res.fun:  # a flat likelihood out to the bound: no spread beyond luck
        best = hi
    return float(np.exp(best))


def posterior(rejects, castings, mean, weight) -> tuple[np.ndarray, np.ndarray]:
    """The zone's posterior Beta(a, b) after its own counts."""
    a, b = beta_parameters(mean, weight)
    r = np.asarray(rejects, dtype=float)
    n = np.asarray(castings, dtype=float)
    return a + r, b + n - r


def posterior_mean(rejects, castings, mean, weight) -> np.ndarray:
    """(r + weight·mean) / (n + weight): the calibrated rate."""
    a, b = posterior(rejects, castings, mean, weight)
    return a / (a + b)


def interval(a, b, level: float = 0.90) -> tuple[np.ndarray, np.ndarray]:
    """The equal-tailed ``level`` interval of Beta(a, b)."""
    tail = (1.0 - level) / 2.0
    return stats.beta.ppf(tail, a, b), stats.beta.ppf(1.0 - tail, a, b)
