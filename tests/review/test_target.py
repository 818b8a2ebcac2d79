"""Each pattern against the target (tracker/review/target.py): the posterior probability
that its reject rate is above the target, checked against scipy.stats.beta and a seeded
simulation, and shown to signal where the p-chart cannot."""

import numpy as np
import pytest
from scipy import stats as sps

from tracker.review import stats
from tracker.review.target import SIGNAL_PROBABILITY, against_target, chance_above_target


@pytest.mark.parametrize(("rejected", "inspected", "target"),
                         [(0, 1, 0.02), (0, 20, 0.02), (1, 20, 0.02), (14, 100, 0.02), (3, 40, 0.05),
                          (33, 233, 0.02), (5, 500, 0.02), (250, 500, 0.5), (7, 7, 0.9)])
def test_chance_matches_the_beta_posterior(rejected, inspected, target):
    # Reference: scipy.stats.beta, survival function of the Beta(r + 1, n - r + 1) posterior
    # (uniform prior; Gelman et al., Bayesian Data Analysis, ch. 2, the binomial model; from memory)
    expected = sps.beta.sf(target, rejected + 1, inspected - rejected + 1)
    assert chance_above_target(rejected, inspected, target) == pytest.approx(expected, rel=1e-9, abs=1e-12)


def test_chance_matches_a_seeded_simulation():
    # Reference independent of the formula: draw rates from the posterior with numpy's Beta
    # sampler and count how often they exceed the target (seeded; 200,000 draws, 4 sigma)
    rng = np.random.default_rng(20261205)
    for r, n, t in ((2, 30, 0.05), (6, 120, 0.04)):
        draws = rng.beta(r + 1, n - r + 1, size=200_000)
        p = float(np.mean(draws > t))
        assert chance_above_target(r, n, t) == pytest.approx(p, abs=4 * np.sqrt(p * (1 - p) / draws.size))


def test_edges():
    assert chance_above_target(0, 0, 0.02) is None
    assert chance_above_target(None, 10, 0.02) is None
    assert chance_above_target(0, 10, 0.0) == 1.0 and chance_above_target(10, 10, 1.0) == 0.0
    with pytest.raises(ValueError):
        chance_above_target(11, 10, 0.02)


def test_a_pattern_steady_at_14_percent_signals_against_a_2_percent_target():
    # The case: a few dozen castings a week, 14 % rejected week after week. The p-chart
    # (exact binomial limits around the pattern's own centre) has nothing to flag...
    inspected = np.array([30, 35, 28, 40, 32, 36, 30, 34, 29, 38, 31, 33, 35])
    rejected = np.round(0.14 * inspected).astype(int)
    chart = stats.p_chart(rejected, inspected)
    assert not chart["signal"].any()
    assert (chart["ucl"] - chart["lcl"]).min() > 0.2  # limits 20 points apart or more
    # ...while the chance that its rate is above a 2 % target is beyond doubt
    review = {"target": 0.02, "patterns": [{"pattern": "X", "inspected": int(inspected.sum()),
                                           "rejected": int(rejected.sum()), "reject_rate": 0.14}]}
    [row] = against_target(review)
    assert row["signal"] and row["chance_above"] > SIGNAL_PROBABILITY
    # and one reject in 20 castings is not yet enough to say so
    assert not against_target({"target": 0.02, "patterns": [{"pattern": "Y", "inspected": 20, "rejected": 1,
                                                             "reject_rate": 0.05}]})[0]["signal"]
