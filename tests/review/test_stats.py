"""Tests of tracker.review.stats against references outside the project."""

import datetime as dt
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats as sps
from statsmodels.stats.proportion import (
    confint_proportions_2indep,
    power_proportions_2indep,
    proportion_confint,
)

from tracker.errors import BadInput
from tracker.review import stats

# --- Wilson interval ------------------------------------------------------------

PAIRS = [(0, 1), (1, 1), (0, 5), (5, 5), (2, 7), (0, 100), (100, 100), (1, 100),
         (37, 250), (499, 1000), (3, 12000), (11999, 12000)]


@pytest.mark.parametrize("k,n", PAIRS)
@pytest.mark.parametrize("confidence", [0.80, 0.95, 0.99])
def test_wilson_matches_statsmodels(k, n, confidence):
    low, high = stats.wilson_interval(k, n, confidence)
    # statsmodels proportion_confint, method="wilson"
    ref_low, ref_high = proportion_confint(k, n, alpha=1 - confidence, method="wilson")
    assert low == pytest.approx(ref_low, abs=1e-12)
    assert high == pytest.approx(ref_high, abs=1e-12)


def test_wilson_vectorised_matches_statsmodels():
    rng = np.random.default_rng(7)
    n = rng.integers(1, 5000, size=500)
    k = rng.binomial(n, rng.uniform(0, 1, size=500))
    k[:20] = 0
    k[20:40] = n[20:40]
    low, high = stats.wilson_interval(k, n)
    # statsmodels proportion_confint, method="wilson" (vectorised)
    ref_low, ref_high = proportion_confint(k, n, alpha=0.05, method="wilson")
    np.testing.assert_allclose(low, ref_low, atol=1e-12)
    np.testing.assert_allclose(high, ref_high, atol=1e-12)
    assert isinstance(low, np.ndarray) and low.shape == (500,)


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 10**6).flatmap(lambda n: st.tuples(st.integers(0, n), st.just(n))))
def test_wilson_property_statsmodels(kn):
    k, n = kn
    low, high = stats.wilson_interval(k, n)
    # statsmodels proportion_confint, method="wilson"
    ref = proportion_confint(k, n, alpha=0.05, method="wilson")
    assert low == pytest.approx(ref[0], abs=1e-10)
    assert high == pytest.approx(ref[1], abs=1e-10)
    assert 0.0 <= low <= k / n <= high <= 1.0


def test_wilson_empty_sample_is_whole_range():
    assert stats.wilson_interval(0, 0) == (0.0, 1.0)
    low, high = stats.wilson_interval([0, 1], [0, 4])
    assert (low[0], high[0]) == (0.0, 1.0)


@pytest.mark.parametrize("k,n,field", [(-1, 10, "k"), (3, 2, "k"), (1, -5, "n"), (np.nan, 3, "k")])
def test_wilson_refuses_bad_counts(k, n, field):
    with pytest.raises(BadInput) as info:
        stats.wilson_interval(k, n)
    assert info.value.field == field


def test_wilson_refuses_bad_confidence():
    with pytest.raises(BadInput, match="strictly between 0 and 1"):
        stats.wilson_interval(1, 10, confidence=95)


# --- p-chart limits ------------------------------------------------------------------

# An invented worked set: weekly rejects and inspected castings.
WORKED_K = [12, 15, 8, 10, 4, 7, 16, 9, 14, 10, 5, 6, 17, 12, 22]
WORKED_N = [300, 350, 200, 320, 150, 240, 400, 260, 330, 280, 120, 180, 380, 300, 420]


def _exact_limits(n, p):
    """Probability limits by their definition, searched count by count with scipy.stats.binom.

    High: the smallest count with P(X > high) ≤ 0.135 %; low: the smallest
    count with P(X ≤ low) ≥ 0.135 % (Φ(−3) = 0.00135, NIST/SEMATECH 6.3.3.2).
    """
    counts = np.arange(n + 1)
    high = counts[np.argmax(sps.binom.sf(counts, n, p) <= 0.00135)]
    low = counts[np.argmax(sps.binom.cdf(counts, n, p) >= 0.00135)]
    return low, high


def test_p_chart_limits_are_exact_binomial_probability_limits():
    chart = stats.p_chart(WORKED_K, WORKED_N)
    # NIST/SEMATECH e-Handbook 6.3.3.2: p̄ = Σ defectives / Σ inspected
    pbar = sum(WORKED_K) / sum(WORKED_N)
    for i, (k, n) in enumerate(zip(WORKED_K, WORKED_N, strict=False)):
        low, high = _exact_limits(n, pbar)
        assert chart["centre"][i] == pytest.approx(pbar, rel=1e-12)
        assert chart["p"][i] == pytest.approx(k / n, rel=1e-12)
        # scipy.stats.binom: the 0.135 % quantiles of Binomial(n_i, p̄), as rates
        assert chart["ucl"][i] == pytest.approx(high / n, rel=1e-12)
        assert chart["lcl"][i] == pytest.approx(low / n, abs=1e-15)
        assert chart["ucl"][i] == pytest.approx(sps.binom.ppf(0.99865, n, pbar) / n, rel=1e-12)
        assert chart["lcl"][i] == pytest.approx(sps.binom.ppf(0.00135, n, pbar) / n, abs=1e-15)
    assert list(chart.columns) == ["label", "rejected", "inspected", "p", "centre", "lcl",
                                   "ucl", "beyond", "run", "signal"]
    assert chart["rejected"].tolist() == WORKED_K
    assert chart["label"].tolist() == list(range(len(WORKED_K)))


def test_probability_limits_close_to_handbook_three_sigma_at_large_n():
    # With n·p̄ large the binomial is near normal (NIST/SEMATECH e-Handbook
    # 6.3.3.2): the exact limits lie near n·p̄ ± 3·sqrt(n·p̄(1 − p̄)), moved up by
    # the skewness term of the Cornish-Fisher expansion, (3² − 1)/6 · (1 − 2p̄)
    # counts (from memory), and within one count of that.
    n, pbar = np.array([2000, 5000, 20000]), 0.05
    low, high = stats.probability_limits(n, pbar)
    half = 3 * np.sqrt(n * pbar * (1 - pbar))
    skew = (3 ** 2 - 1) / 6 * (1 - 2 * pbar)
    assert np.all(np.abs(high - (n * pbar + half + skew)) <= 1.0)
    assert np.all(np.abs(low - (n * pbar - half + skew)) <= 1.0)


def test_p_chart_baseline_centre_and_labels():
    weeks = [f"2026-W{w:02d}" for w in range(1, 16)]
    chart = stats.p_chart(WORKED_K, WORKED_N, labels=weeks, centre=0.02)
    # scipy.stats.binom quantiles at the known (baseline) rate, each week's own n
    expected_ucl = [_exact_limits(n, 0.02)[1] / n for n in WORKED_N]
    np.testing.assert_allclose(chart["ucl"], expected_ucl, rtol=1e-12)
    assert (chart["centre"] == 0.02).all()
    assert chart["label"].tolist() == weeks


def test_p_chart_lower_limit_breach_counts_only_when_positive():
    chart = stats.p_chart([100, 60, 100], [1000, 1000, 1000], centre=0.10)
    # scipy.stats.binom: P(X < 60) for Binomial(1000, 0.10) is far below 0.135 %
    assert sps.binom.cdf(59, 1000, 0.10) < 0.00135
    assert chart["beyond"].tolist() == [False, True, False]
    # Small samples: P(X = 0) for Binomial(50, 0.02) is 36 %, so the lower
    # limit is 0 and a week with no rejects is no signal.
    assert sps.binom.pmf(0, 50, 0.02) > 0.00135
    chart = stats.p_chart([0, 2, 1], [50, 50, 50], centre=0.02)
    assert (chart["lcl"] == 0).all()
    assert not chart["beyond"].any()


def test_improvement_shows_below_exact_lower_limit():
    # 100 castings at a 10 % baseline: scipy.stats.binom gives P(X ≤ 1) = 0.03 %,
    # so a week with 1 reject is below the lower limit, which 3-sigma
    # (0.1 − 3·0.03 = 0.01, a count of 1) could not show.
    assert sps.binom.cdf(1, 100, 0.10) < 0.00135
    chart = stats.p_chart([1, 10], [100, 100], centre=0.10)
    assert chart["beyond"].tolist() == [True, False]
    assert chart["lcl"][0] == pytest.approx(_exact_limits(100, 0.10)[0] / 100)


def test_p_chart_upper_limit_at_most_one():
    chart = stats.p_chart([1, 1], [2, 2], centre=0.5)
    # scipy.stats.binom: Binomial(2, 0.5) puts 25 % on 0 and on 2, so no
    # count lies beyond 0.135 % on either side: limits 0 and n
    assert sps.binom.pmf(2, 2, 0.5) > 0.00135
    assert (chart["ucl"] == 1.0).all() and (chart["lcl"] == 0.0).all()
    assert not chart["beyond"].any()


def test_p_chart_keeps_empty_weeks_without_signal():
    k = [0, 30, 0, 2]
    n = [0, 100, 0, 500]
    chart = stats.p_chart(k, n, centre=0.01)
    assert len(chart) == 4
    assert chart["p"].isna().tolist() == [True, False, True, False]
    assert chart["signal"].tolist() == [False, True, False, False]
    # Nothing inspected at all and no baseline: no centre, nothing signals.
    chart = stats.p_chart([0, 0], [0, 0])
    assert chart["centre"].isna().all() and not chart["signal"].any()


# --- run rule ----------------------------------------------------------------------------

def test_run_of_eight_flags_every_member():
    # centre 0.05 on 100 castings; 8 weeks at 6 % (above) then one at 4 %.
    k = [4, 6, 6, 6, 6, 6, 6, 6, 6, 4]
    chart = stats.p_chart(k, [100] * 10, centre=0.05)
    assert chart["run"].tolist() == [False] + [True] * 8 + [False]
    assert not chart["beyond"].any()
    assert stats.signal_rules(chart) == ["run_of_8"]


def test_run_of_seven_is_not_a_signal():
    chart = stats.p_chart([6] * 7 + [4], [100] * 8, centre=0.05)
    assert not chart["run"].any()
    assert stats.signal_rules(chart) == []


def test_point_on_centre_breaks_a_run():
    k = [6, 6, 6, 6, 5, 6, 6, 6, 6]
    chart = stats.p_chart(k, [100] * 9, centre=0.05)
    assert not chart["run"].any()


def test_empty_week_neither_breaks_nor_extends_a_run():
    k = [6, 6, 6, 6, 0, 6, 6, 6, 6]
    n = [100, 100, 100, 100, 0, 100, 100, 100, 100]
    chart = stats.p_chart(k, n, centre=0.05)
    assert chart["run"].tolist() == [True] * 4 + [False] + [True] * 4


def test_latest_signal_looks_only_at_the_last_points():
    k = [6] * 8 + [4, 5, 30]
    chart = stats.p_chart(k, [100] * 11, centre=0.05)
    assert stats.signal_rules(chart) == ["beyond_limit", "run_of_8"]
    assert stats.latest_signal(chart) == ["beyond_limit"]
    assert stats.latest_signal(chart, last=2) == ["beyond_limit"]
    assert stats.latest_signal(chart, last=3) == ["beyond_limit"]
    assert stats.latest_signal(chart, last=4) == ["beyond_limit", "run_of_8"]
    with pytest.raises(BadInput, match="1 or more"):
        stats.latest_signal(chart, last=0)


# --- planted shift, stable series, false-alarm rates -----------------------------------

@pytest.mark.parametrize("seed", range(5))
def test_planted_shift_is_flagged(seed):
    rng = np.random.default_rng(seed)
    n = rng.integers(300, 600, size=30)
    p = np.r_[np.full(26, 0.02), np.full(4, 0.08)]
    k = rng.binomial(n, p)
    # Judged against the baseline of the first 26 weeks every shifted week stands out.
    baseline = k[:26].sum() / n[:26].sum()
    chart = stats.p_chart(k, n, centre=baseline)
    assert chart["beyond"].iloc[-4:].all()
    assert "beyond_limit" in stats.latest_signal(chart)
    # Against its own p̄ the shift drags the centre up, so a shifted week can
    # slip under the limit; the chart as a whole must still signal.
    chart = stats.p_chart(k, n)
    assert chart["beyond"].iloc[-4:].sum() >= 2
    assert "beyond_limit" in stats.signal_rules(chart)


def test_stable_series_is_not_flagged():
    # Alternating 9 and 11 rejects on 500 castings: p̄ = 2 %, every point
    # within one sigma and no two consecutive points on the same side.
    k = [9, 11] * 13
    chart = stats.p_chart(k, [500] * 26)
    assert stats.signal_rules(chart) == []
    assert not chart["signal"].any()


def _binomial_tail(n, p, low, high):
    """P(X > high) + P(X < low) for X ~ Binomial(n, p), by scipy."""
    return sps.binom.sf(high, n, p) + sps.binom.cdf(low - 1, n, p)


@pytest.mark.parametrize("n", [10, 30, 100])
@pytest.mark.parametrize("p0", [0.01, 0.03, 0.1])
def test_beyond_limit_false_alarm_rate_known_centre(n, p0):
    rng = np.random.default_rng(int(n * 1000 + p0 * 100))
    weeks = 400_000
    k = rng.binomial(n, p0, size=weeks)
    observed = int(stats.p_chart(k, np.full(weeks, n), centre=p0)["beyond"].sum())
    low, high = _exact_limits(n, p0)
    # scipy.stats.binom: each tail beyond the limits holds at most 0.135 %
    assert sps.binom.sf(high, n, p0) <= 0.00135
    assert sps.binom.cdf(low - 1, n, p0) <= 0.00135
    prob = _binomial_tail(n, p0, low, high)
    expected = weeks * prob
    sd = math.sqrt(weeks * prob * (1 - prob))
    assert abs(observed - expected) < 4 * sd + 1, (observed, expected, sd)
    assert observed / weeks < 2 * 0.00135 + 4 * sd / weeks


def test_three_sigma_limits_would_alarm_too_often_at_small_np():
    # The reason for exact limits, checked with scipy.stats.binom: at n = 30 and
    # p = 1 % the NIST 6.3.3.2 normal-approximation upper limit
    # 0.01 + 3·sqrt(0.01·0.99/30) = 6.4 % sits below 2 rejects (6.7 %), so an
    # in-control week signals with P(X ≥ 2), over ten times the nominal 0.135 %.
    ucl = 0.01 + 3 * math.sqrt(0.01 * 0.99 / 30)
    assert sps.binom.sf(math.floor(30 * ucl), 30, 0.01) > 10 * 0.00135
    low, high = stats.probability_limits(30, 0.01)
    assert sps.binom.sf(high, 30, 0.01) <= 0.00135


def test_beyond_limit_false_alarm_rate_estimated_centre():
    rng = np.random.default_rng(47)
    series, weeks, p0 = 4000, 52, 0.03
    n = rng.integers(10, 101, size=(series, weeks))
    k = rng.binomial(n, p0)
    observed = sum(int(stats.p_chart(k[s], n[s])["beyond"].sum()) for s in range(series))
    pbar = (k.sum(axis=1) / n.sum(axis=1))[:, None]
    # scipy.stats.binom.ppf: each series' own limits from its p̄; the chance of
    # a point beyond them at the true rate, by scipy.stats.binom
    low, high = sps.binom.ppf(0.00135, n, pbar), sps.binom.ppf(0.99865, n, pbar)
    prob = _binomial_tail(n, p0, low, high)
    expected = prob.sum()
    sd = math.sqrt((prob * (1 - prob)).sum())
    # The limits move with the data; the count still follows their tails.
    assert abs(observed - expected) < 4 * sd, (observed, expected, sd)


def test_run_of_eight_false_alarm_rate():
    rng = np.random.default_rng(8)
    series, weeks, n, p0 = 2000, 52, 1000, 0.0205
    # n·p0 = 20.5 is never hit exactly, so no point sits on the centre.
    k = rng.binomial(n, p0, size=(series, weeks))
    ends = 0
    eligible = 0
    for s in range(series):
        chart = stats.p_chart(k[s], [n] * weeks, centre=p0)
        run = chart["run"].to_numpy()
        side = np.sign(chart["p"].to_numpy() - p0)
        # Independent re-derivation of the rule: window of 8 on one side.
        window = np.array([abs(side[i - 7:i + 1].sum()) == 8 for i in range(7, weeks)])
        member = np.zeros(weeks, dtype=bool)
        for i in np.flatnonzero(window) + 7:
            member[i - 7:i + 1] = True
        assert (run == member).all()
        ends += int(window.sum())
        eligible += weeks - 7
    # scipy.stats.binom: q = P(X > 20.5); a point ends a run of 8 with
    # probability q^8 + (1 − q)^8 (about 2·0.5^8 as q is near 0.5).
    q = sps.binom.sf(20, n, p0)
    theory = q ** 8 + (1 - q) ** 8
    rate = ends / eligible
    assert 0.8 * theory < rate < 1.2 * theory, (rate, theory)
    assert 0.6 * 2 * 0.5 ** 8 < rate < 1.6 * 2 * 0.5 ** 8


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 50), st.integers(0, 50)), min_size=1, max_size=40))
def test_p_chart_invariants(rows):
    k = [min(a, b) for a, b in rows]
    n = [max(a, b) for a, b in rows]
    chart = stats.p_chart(k, n)
    assert (chart["signal"] == (chart["beyond"] | chart["run"])).all()
    empty = chart["inspected"] == 0
    assert not chart.loc[empty, "signal"].any()
    seen = chart.loc[~empty]
    assert (seen["lcl"] <= seen["centre"] + 1e-15).all()
    assert (seen["centre"] <= seen["ucl"] + 1e-15).all()
    assert ((seen["lcl"] >= 0) & (seen["ucl"] <= 1)).all()


@pytest.mark.parametrize("k,n,field", [([1, 2], [10], "inspected"), ([1.5], [10], "rejected"),
                                       ([11], [10], "rejected"), ([1], [-3], "inspected")])
def test_p_chart_refuses_bad_input(k, n, field):
    with pytest.raises(BadInput) as info:
        stats.p_chart(k, n)
    assert info.value.field == field


def test_p_chart_refuses_bad_centre():
    with pytest.raises(BadInput, match="fraction between 0 and 1"):
        stats.p_chart([1], [10], centre=2.0)


# --- compare_rates -----------------------------------------------------------------------

TABLES = [(40, 1000, 15, 1000), (15, 1000, 40, 1000), (4, 100, 2, 100), (100, 5000, 95, 5000),
          (0, 300, 5, 300), (12, 12, 3, 40), (7, 2500, 0, 800), (1, 1, 0, 1)]


@pytest.mark.parametrize("kb,nb,ka,na", TABLES)
def test_compare_rates_matches_scipy_and_statsmodels(kb, nb, ka, na):
    out = stats.compare_rates(kb, nb, ka, na)
    # scipy.stats.fisher_exact, two-sided, on [[rejected, passed] before, after]
    ref = sps.fisher_exact([[kb, nb - kb], [ka, na - ka]], alternative="two-sided")
    assert out["p_value"] == pytest.approx(ref.pvalue, rel=1e-12)
    # statsmodels confint_proportions_2indep(method="newcomb", compare="diff")
    # gives an interval for prop1 − prop2, so "after" goes first.
    low, high = confint_proportions_2indep(ka, na, kb, nb, method="newcomb", compare="diff",
                                           alpha=0.05)
    assert out["diff_low"] == pytest.approx(low, abs=1e-12)
    assert out["diff_high"] == pytest.approx(high, abs=1e-12)
    assert out["difference"] == pytest.approx(ka / na - kb / nb, abs=1e-15)
    assert out["diff_low"] <= out["difference"] <= out["diff_high"]
    assert (out["rate_before"], out["rate_after"]) == (kb / nb, ka / na)


def test_compare_rates_many_gives_scipys_fisher_p_values_exactly():
    # Many tables at once (as the review judges its riser revisions): small and large,
    # either side of the mode, ties, empty columns, a side with everything rejected.
    rng = np.random.default_rng(7)
    nb = rng.integers(1, 20000, 400)
    na = rng.integers(1, 20000, 400)
    kb = rng.binomial(nb, rng.choice([0.0, 0.001, 0.02, 0.2], 400))
    ka = rng.binomial(na, rng.choice([0.0, 0.001, 0.02, 0.2], 400))
    extra = np.array(TABLES + [(5, 10, 5, 10), (0, 50, 0, 70), (9, 9, 9, 9), (3, 7, 6, 14), (2, 2000, 1, 1000)])
    kb, nb, ka, na = (np.concatenate([x, extra[:, j]]) for j, x in enumerate((kb, nb, ka, na)))
    many = stats.compare_rates_many(kb, nb, ka, na)
    for row, *t in zip(many, kb.tolist(), nb.tolist(), ka.tolist(), na.tolist(), strict=False):
        k1, n1, k2, n2 = t
        # scipy.stats.fisher_exact, two-sided: the same number, not merely close
        assert row["p_value"] == sps.fisher_exact([[k1, n1 - k1], [k2, n2 - k2]]).pvalue, t
        assert row == stats.compare_rates(k1, n1, k2, n2)


@pytest.mark.parametrize("confidence", [0.90, 0.99])
def test_newcombe_other_confidence(confidence):
    out = stats.compare_rates(30, 900, 18, 1100, confidence=confidence)
    # statsmodels confint_proportions_2indep(method="newcomb", compare="diff")
    low, high = confint_proportions_2indep(18, 1100, 30, 900, method="newcomb", compare="diff",
                                           alpha=1 - confidence)
    assert (out["diff_low"], out["diff_high"]) == pytest.approx((low, high), abs=1e-12)


@pytest.mark.parametrize("kb,nb,ka,na", [(40, 1150, 20, 1150), (200, 5000, 12, 300),
                                         (20, 100, 30, 150), (200, 20000, 8, 800)])
def test_power_to_halve_matches_statsmodels(kb, nb, ka, na):
    out = stats.compare_rates(kb, nb, ka, na)
    p1 = kb / nb
    # statsmodels power_proportions_2indep: prop1 = prop2 + diff (after, halved), prop2 = before
    ref = power_proportions_2indep(-p1 / 2, p1, na, ratio=nb / na, alpha=0.05).power
    assert out["power_to_halve"] == pytest.approx(ref, abs=1e-3)


def test_verdicts():
    # scipy.stats.fisher_exact: 40/1000 against 15/1000 is significant at 5 %.
    assert sps.fisher_exact([[40, 960], [15, 985]]).pvalue < 0.05
    assert stats.compare_rates(40, 1000, 15, 1000)["verdict"] == "improved"
    assert stats.compare_rates(15, 1000, 40, 1000)["verdict"] == "worse"

    # scipy.stats.fisher_exact: 100/5000 against 95/5000 is not significant, and
    # statsmodels power_proportions_2indep: those sizes would catch a halving.
    assert sps.fisher_exact([[100, 4900], [95, 4905]]).pvalue > 0.05
    assert power_proportions_2indep(-0.01, 0.02, 5000, ratio=1).power > 0.8
    assert stats.compare_rates(100, 5000, 95, 5000)["verdict"] == "no_clear_change"

    # statsmodels power_proportions_2indep: 100 castings a side cannot catch 4 % → 2 %.
    assert power_proportions_2indep(-0.02, 0.04, 100, ratio=1).power < 0.8
    assert stats.compare_rates(4, 100, 2, 100)["verdict"] == "not_enough_data"
    # statsmodels power_proportions_2indep: 1000 a side at 4 % gives well under 80 %
    # power against a halving (but over 50 %), so "no change" would claim too much.
    power = power_proportions_2indep(-0.02, 0.04, 1000, ratio=1).power
    assert 0.5 < power < 0.8
    assert sps.fisher_exact([[40, 960], [38, 962]]).pvalue > 0.05
    assert stats.compare_rates(40, 1000, 38, 1000)["verdict"] == "not_enough_data"
    # Nothing rejected before: there is no rate to halve.
    assert stats.compare_rates(0, 10000, 0, 10000)["verdict"] == "not_enough_data"


@pytest.mark.parametrize("kb,nb,ka,na", [(0, 0, 3, 100), (3, 100, 0, 0), (0, 0, 0, 0)])
def test_compare_rates_empty_side(kb, nb, ka, na):
    out = stats.compare_rates(kb, nb, ka, na)
    assert out["verdict"] == "not_enough_data"
    assert math.isnan(out["p_value"]) and math.isnan(out["difference"])
    assert math.isnan(out["diff_low"]) and math.isnan(out["diff_high"])


def test_compare_rates_refuses_bad_counts():
    with pytest.raises(BadInput, match="k_after cannot exceed n_after"):
        stats.compare_rates(1, 10, 12, 10)
    with pytest.raises(BadInput, match="single whole number"):
        stats.compare_rates([1, 2], 10, 1, 10)


@settings(max_examples=60, deadline=None)
@given(st.integers(1, 400), st.integers(1, 400), st.data())
def test_compare_rates_property_scipy(nb, na, data):
    kb = data.draw(st.integers(0, nb))
    ka = data.draw(st.integers(0, na))
    out = stats.compare_rates(kb, nb, ka, na)
    # scipy.stats.fisher_exact, two-sided
    ref = sps.fisher_exact([[kb, nb - kb], [ka, na - ka]]).pvalue
    assert out["p_value"] == pytest.approx(ref, rel=1e-12)
    assert out["verdict"] in stats.VERDICTS
    if out["verdict"] == "improved":
        assert ka / na < kb / nb and ref < 0.05


# --- Pareto --------------------------------------------------------------------------------

def test_pareto_cumulative_share_and_vital_few():
    df = pd.DataFrame({
        "pattern": ["P-3", "P-1", "P-2", "P-1", "P-4", "P-3", "P-5"],
        "cost": [100.0, 250.0, 120.0, 150.0, 60.0, 200.0, 120.0],
    })
    table = stats.pareto(df, "pattern", "cost")
    # Arithmetic by hand: totals P-1 400, P-3 300, P-2 120, P-5 120, P-4 60; sum 1000.
    assert table["pattern"].tolist() == ["P-1", "P-3", "P-2", "P-5", "P-4"]
    assert table["cost"].tolist() == [400.0, 300.0, 120.0, 120.0, 60.0]
    np.testing.assert_allclose(table["share"], [0.4, 0.3, 0.12, 0.12, 0.06])
    np.testing.assert_allclose(table["cumulative_share"], [0.4, 0.7, 0.82, 0.94, 1.0])
    # 0.70 is short of 80 %, 0.82 crosses it: the first three are the vital few.
    assert table["vital_few"].tolist() == [True, True, True, False, False]
    assert list(table.columns) == ["pattern", "cost", "share", "cumulative_share", "vital_few"]


def test_pareto_exactly_eighty_percent_closes_the_vital_few():
    df = pd.DataFrame({"defect": ["shrink", "gas", "sand", "cold shut"], "count": [7, 1, 1, 1]})
    table = stats.pareto(df, "defect", "count")
    # By hand: shares 0.7, 0.1, 0.1, 0.1 → cumulative 0.7, 0.8, 0.9, 1.0.
    assert table["vital_few"].tolist() == [True, True, False, False]
    df = pd.DataFrame({"defect": ["shrink", "gas", "sand", "cold shut"], "count": [50, 28, 12, 10]})
    # By hand: cumulative 0.50, 0.78, 0.90, 1.00; 0.78 is still short of 80 %.
    assert stats.pareto(df, "defect", "count")["vital_few"].tolist() == [True, True, True, False]
    df = pd.DataFrame({"defect": ["shrink", "gas"], "count": [9, 1]})
    assert stats.pareto(df, "defect", "count")["vital_few"].tolist() == [True, False]


def test_pareto_zero_totals():
    df = pd.DataFrame({"pattern": ["A", "B", "A"], "cost": [0.0, 0.0, 0.0]})
    table = stats.pareto(df, "pattern", "cost")
    assert table["share"].tolist() == [0.0, 0.0]
    assert table["cumulative_share"].tolist() == [0.0, 0.0]
    assert not table["vital_few"].any()
    empty = stats.pareto(df.iloc[:0], "pattern", "cost")
    assert len(empty) == 0


def test_pareto_refuses_negative_and_missing_column():
    df = pd.DataFrame({"pattern": ["A"], "cost": [-5.0]})
    with pytest.raises(BadInput, match="cost cannot be negative"):
        stats.pareto(df, "pattern", "cost")
    with pytest.raises(BadInput, match="not in the table"):
        stats.pareto(df, "defect", "cost")


# --- ISO weeks -----------------------------------------------------------------------------

@settings(max_examples=300, deadline=None)
@given(st.dates(min_value=dt.date(1990, 1, 1), max_value=dt.date(2100, 12, 31)))
def test_iso_week_round_trip(day):
    label = stats.iso_week(day)
    # ISO 8601 week date, as Python's datetime.date.isocalendar computes it
    year, week, weekday = day.isocalendar()
    assert label == f"{year}-W{week:02d}"
    monday = stats.week_start(label)
    assert monday == day - dt.timedelta(days=weekday - 1)
    assert stats.iso_week(monday) == label


def test_iso_week_known_dates():
    # ISO 8601: 2027-01-01 is a Friday in week 53 of 2026; 2026-11-16 is a Monday.
    assert stats.iso_week(dt.date(2027, 1, 1)) == "2026-W53"
    assert stats.iso_week("2026-11-16") == "2026-W47"
    assert stats.iso_week(pd.Timestamp("2026-11-22 17:30")) == "2026-W47"
    assert stats.week_start("2026-W47") == dt.date(2026, 11, 16)
    series = stats.iso_week(pd.Series(pd.to_datetime(["2026-11-16", "2027-01-04"])))
    assert series.tolist() == ["2026-W47", "2027-W01"]


@pytest.mark.parametrize("text,message", [
    ("2026-47", "week: got '2026-47'; write it as 2026-W47"),
    ("2026W5", "week: got '2026W5'; write it as 2026-W05"),
    ("week 47", "week: got 'week 47'; write it as YYYY-Www, e.g. 2026-W47"),
    ("2025-W53", "week: got '2025-W53'; 2025 has weeks W01 to W52"),
    ("2026-W00", "week: got '2026-W00'; 2026 has weeks W01 to W53"),
])
def test_week_start_parse_errors(text, message):
    with pytest.raises(ValueError) as info:
        stats.week_start(text)
    assert str(info.value) == message


def test_iso_week_refuses_bad_date():
    with pytest.raises(BadInput, match="write the date as YYYY-MM-DD"):
        stats.iso_week("16/11/2026")


def _run_of_8_exact(points: int = 26, run: int = 8) -> float:
    """P(a run of ``run`` or more on one side somewhere in ``points`` fair tosses), by
    dynamic programming over the length of the current run (the textbook longest-run
    recursion, e.g. Feller, An Introduction to Probability Theory, vol. 1, XIII.7)."""
    state = np.zeros(run - 1)       # state[j]: no run of ``run`` yet, the current one j + 1 long
    state[0] = 1.0
    for _ in range(points - 1):
        new = np.zeros(run - 1)
        new[0] = 0.5 * state.sum()              # the side changes
        new[1:] = 0.5 * state[:-1]              # the run grows (state[-1] grows into a signal: gone)
        state = new
    return 1.0 - float(state.sum())


def test_the_run_of_8_rule_signals_on_4_to_9_percent_of_in_control_26_week_charts():
    from tracker.review.stats import RUN_RULE_NOTE

    # Independent reference: 26 points each above or below the centre with probability 1/2.
    exact = _run_of_8_exact()
    assert 0.04 <= exact <= 0.09
    # Seeded simulation of in-control charts (binomial weeks, centre from the chart itself).
    rng = np.random.default_rng(26)
    reps = 300
    for n, p in ((200, 0.1), (30, 0.03)):
        hits = sum(bool(stats.p_chart(rng.binomial(n, p, 26), np.full(26, n))["run"].any()) for _ in range(reps))
        rate = hits / reps
        se = (exact * (1 - exact) / reps) ** 0.5
        if n * p >= 5:
            assert abs(rate - exact) <= 3 * se, rate         # near the coin-toss rate
        else:
            assert rate >= exact - 3 * se, rate               # small n·p: not fewer, often more
    assert "4-9 %" in RUN_RULE_NOTE
