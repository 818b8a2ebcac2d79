"""Partial pooling of zone rates (tracker.advice.pooling, tracker.advice.calibration)
checked against scipy and against simulations whose true rates are known."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize, stats

from tracker.advice import calibration, pooling


@pytest.mark.parametrize("r, n, mean, weight", [(0, 10, 0.02, 50.0), (40, 330, 0.026, 226.0),
                                                 (7, 7, 0.5, 3.0), (132, 598, 0.052, 1000.0)])
def test_marginal_likelihood_is_scipys_betabinom(r, n, mean, weight):
    # scipy.stats.betabinom with a = weight·mean, b = weight·(1 − mean)
    want = stats.betabinom.logpmf(r, n, weight * mean, weight * (1 - mean))
    assert pooling.betabinom_logpmf(r, n, mean, weight) == pytest.approx(want, rel=1e-10, abs=1e-10)


def _simulated_zones(seed: int, zones: int, weight: float):
    """Invented zones: model rates spread over 0.5-15 %, true rates drawn from the
    beta around them, castings 20-800 each, rejects binomial."""
    rng = np.random.default_rng(seed)
    mean = np.exp(rng.uniform(np.log(0.005), np.log(0.15), zones))
    true = rng.beta(weight * mean, weight * (1 - mean))
    n = rng.integers(20, 800, zones)
    return mean, true, n, rng.binomial(n, true)


def test_prior_weight_is_the_maximum_of_scipys_likelihood():
    mean, _, n, r = _simulated_zones(1, 300, 150.0)
    w = pooling.fit_weight(r, n, mean)
    # the maximum of the summed scipy.stats.betabinom log-likelihood, found by scipy's own search
    res = optimize.minimize_scalar(lambda lw: -stats.betabinom.logpmf(r, n, np.exp(lw) * mean,
                                                                      np.exp(lw) * (1 - mean)).sum(),
                                   bounds=(0.0, 14.0), method="bounded", options={"xatol": 1e-8})
    assert np.log(w) == pytest.approx(res.x, abs=1e-3)
    assert 75.0 < w < 300.0  # near the weight the zones were drawn with (150)


def test_no_spread_beyond_luck_gives_the_model_alone():
    rng = np.random.default_rng(2)
    mean = np.full(200, 0.04)
    n = rng.integers(50, 500, 200)
    r = rng.binomial(n, mean)  # every zone at the model's rate exactly
    assert pooling.fit_weight(r, n, mean) > 2000.0


@pytest.mark.parametrize("seed, weight", [(3, 60.0), (4, 400.0)])
def test_ninety_percent_intervals_cover_the_true_rates(seed, weight):
    # 400 simulated zones with known rates: the 90 % posterior intervals, with the
    # weight estimated from the zones themselves, cover 85-95 % of the true rates
    mean, true, n, r = _simulated_zones(seed, 400, weight)
    w = pooling.fit_weight(r, n, mean)
    a, b = pooling.posterior(r, n, mean, w)
    lo, hi = pooling.interval(a, b, 0.90)
    coverage = float(np.mean((true >= lo) & (true <= hi)))
    assert 0.85 <= coverage <= 0.95, coverage


def test_posterior_mean_lies_between_the_model_and_the_zone():
    # Casella (1985): the empirical-Bayes estimate is a weighted mean of the prior mean
    # and the zone's own rate, (r + m·p0)/(n + m), the zone's weight n/(n + m)
    r, n, p0, m = 40, 330, 0.026, 226.0
    rate = float(pooling.posterior_mean(r, n, p0, m))
    assert rate == pytest.approx((n / (n + m)) * (r / n) + (m / (n + m)) * p0, rel=1e-12)
    assert p0 < rate < r / n
    assert float(pooling.posterior_mean(0, 0, p0, m)) == pytest.approx(p0)  # no castings: the model speaks
    assert float(pooling.posterior_mean(4000, 33000, p0, m)) == pytest.approx(4000 / 33000, abs=0.001)


def test_change_draws_are_fixed_and_shared():
    u1, z1 = calibration._draws(5)
    u2, z2 = calibration._draws(5)
    assert np.array_equal(u1, u2) and np.array_equal(z1, z2)
    # stratified uniforms: each 1/DRAWS quantile once
    assert np.allclose(np.sort(u1), (np.arange(calibration.DRAWS) + 0.5) / calibration.DRAWS)


def test_demo_zones_with_300_castings_keep_their_own_evidence(demo_store):
    from tracker.advice.fitting import fit_model
    from tracker.review.rates import window
    from tracker.review.stats import wilson_interval

    model = fit_model(demo_store, save=False)
    w = window(demo_store, None, 13)
    z = calibration.window_zone_rates(demo_store, model, w["start"], w["end"])
    big = z[z["castings"] >= 300]
    assert len(big) >= 5
    # the zone's own 99 % interval (Wilson score, as the review states its rates)
    lo, hi = wilson_interval(big["shrinkage_rejects"].to_numpy(), big["castings"].to_numpy(), 0.99)
    rate = big["rate"].to_numpy()
    assert ((rate >= lo) & (rate <= hi)).all(), big[["pattern", "zone", "castings", "shrinkage_rate", "rate"]]
    # and the calibrated rate never sits on the model's side of it where the zone disagrees
    assert (np.abs(rate - big["shrinkage_rate"]) <= np.abs(big["model_rate"] - big["shrinkage_rate"]) + 1e-12).all()
