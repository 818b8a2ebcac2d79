"""Calibrated zone rates and the uncertainty of a riser change: the one
computation behind every predicted rate that suggest, what-if, the review's
track record, the report and the dashboard show.

- Rate now: the reject model's rate for the zone's present design (the prior
  mean) updated by the zone's own castings and shrinkage rejects in the
  window, with the model's ``zone_weight_`` as the prior weight
  (``tracker.advice.pooling``: empirical-Bayes beta-binomial). Its 90 %
  interval is the posterior beta's.
- Rate after: the rate now shifted by the model's change in log-odds between
  the present and the changed design (an odds ratio), so both rates stay on
  one basis.
- Uncertainty of the change: ``DRAWS`` joint draws of the zone's rate now
  (from its posterior beta) and of the model's coefficients (normal, with the
  Laplace covariance of the fit: ``ShrinkageRejectModel.covariance_``). The
  draws come from one fixed seed and are the same for every zone and
  candidate, so two surfaces asking about the same change get the same
  figures to the last digit, and the run costs one matrix product.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy import stats
from scipy.special import expit, logit

from tracker.advice import pooling
from tracker.advice.features import ZONE_KEYS, zone_design, zone_shrinkage_rates
from tracker.advice.model import SHORTFALL_TERMS
from tracker.log.store import Store

LEVEL = 0.90  # the intervals shown: 5 % and 95 % quantiles
DRAWS = 2000
SEED = 20251205
RATE_BASIS = ("calibrated: the reject model's rate for the zone's design updated by the zone's own castings "
              "and shrinkage rejects in the window (empirical-Bayes beta-binomial); the rate after is that "
              "rate shifted by the model's change in log-odds for the changed design")


def _draws(n_terms: int) -> tuple[np.ndarray, np.ndarray]:
    """The fixed draws: uniforms for the zone's rate (DRAWS) and standard
    normals for the model's coefficients (DRAWS × intercept and terms)."""
    rng = np.random.default_rng(SEED)
    u = (rng.permutation(DRAWS) + 0.5) / DRAWS  # stratified: each 1/DRAWS quantile once
    return u, rng.standard_normal((DRAWS, n_terms + 1))


def zone_rates(model, rows: pd.DataFrame, rejects, castings) -> pd.DataFrame:
    """The calibrated rate now of zones (``rows``: the zones' designs as the
    model sees them, ``features.weakest_margins``; ``rejects``, ``castings``:
    their shrinkage rejects and castings in the window).

    Columns (index of ``rows``): ``model_rate`` (the model's for the design),
    ``rate`` (posterior mean), ``low``, ``high`` (the 90 % interval), ``a``,
    ``b`` (the posterior beta) and ``weight`` (the prior weight, castings).
    All NaN without a model.
    """
    r = np.asarray(rejects, dtype=float)
    n = np.asarray(castings, dtype=float)
    out = pd.DataFrame(index=rows.index)
    if model is None or not len(rows):
        for c in ("model_rate", "rate", "low", "high", "a", "b", "weight"):
            out[c] = np.nan
        return out
    prior = np.asarray(model.predict_rate(rows.assign(pour_temp_dev_c=0.0)), dtype=float)
    weight = float(getattr(model, "zone_weight_", pooling.WEIGHT_BOUNDS[1]))
    a, b = pooling.posterior(r, n, prior, weight)
    lo, hi = pooling.interval(a, b, LEVEL)
    out["model_rate"], out["rate"], out["low"], out["high"] = prior, a / (a + b), lo, hi
    out["a"], out["b"], out["weight"] = a, b, weight
    return out


def window_zone_rates(store: Store, model, start: str | None, end: str | None, patterns=None) -> pd.DataFrame:
    """Every zone poured from ``start`` to ``end`` under each revision: its
    castings, shrinkage rejects and observed rate (``zone_shrinkage_rates``)
    beside its calibrated rate now (:func:`zone_rates`' columns)."""
    counts = zone_shrinkage_rates(store, start, end, patterns)
    rows = counts.merge(zone_design(store, patterns).drop(columns=["effective_from"]), on=ZONE_KEYS)
    return rows.join(zone_rates(model, rows, rows["shrinkage_rejects"], rows["castings"]))


def change(model, now_rows: pd.DataFrame, after_rows: pd.DataFrame, a, b) -> dict:
    """A change of design per row (``now_rows`` and ``after_rows`` aligned: the
    zone now and changed; ``a``, ``b``: the zone's posterior beta).

    Returns arrays: ``rate_after`` (the calibrated rate now, a / (a + b),
    shifted by the model's change in log-odds), ``rate_after_low`` and
    ``rate_after_high`` (90 % interval), and the draws ``now_draws`` and
    ``after_draws`` (rows × DRAWS) for the money's interval.
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    nan = np.full(len(a), np.nan)
    if model is None or not len(a) or np.isnan(a).all():
        empty = np.full((len(a), DRAWS), np.nan)
        return {"rate_after": nan, "rate_after_low": nan, "rate_after_high": nan,
                "now_draws": empty, "after_draws": empty}
    delta_d = model.design_matrix(after_rows.assign(pour_temp_dev_c=0.0)) - model.design_matrix(
        now_rows.assign(pour_temp_dev_c=0.0))
    rate_now = a / (a + b)
    rate_after = expit(logit(rate_now) + delta_d @ model.coef_)
    u, z = _draws(len(model.coef_))
    chol = np.linalg.cholesky(model.covariance_ + 1e-12 * np.eye(len(model.covariance_)))
    coef = model.coef_[None, :] + (z @ chol.T)[:, 1:]  # the intercept cancels in a change
    n_short = len(SHORTFALL_TERMS)
    coef[:, :n_short] = np.maximum(coef[:, :n_short], 0.0)  # as the fit bounds them
    now_draws = np.clip(stats.beta.ppf(u[None, :], a[:, None], b[:, None]), 1e-12, 1 - 1e-12)
    after_draws = expit(logit(now_draws) + delta_d @ coef.T)
    tail = (1.0 - LEVEL) / 2.0
    lo, hi = np.quantile(after_draws, [tail, 1.0 - tail], axis=1)
    return {"rate_after": rate_after, "rate_after_low": lo, "rate_after_high": hi,
            "now_draws": now_draws, "after_draws": after_draws}


def balance_figures(now_draws, after_draws, castings_per_year, cost_per_scrapped, extra_cost) -> dict:
    """The yearly balance's 90 % interval and the probability it is above 0,
    over the draws: castings per year × (now − after) × cost of a scrapped
    casting − extra cost per year (row-wise arrays)."""
    n = np.asarray(castings_per_year, dtype=float)[:, None]
    cost = np.asarray(cost_per_scrapped, dtype=float)[:, None]
    extra = np.asarray(extra_cost, dtype=float)[:, None]
    bal = n * (np.asarray(now_draws) - np.asarray(after_draws)) * cost - extra
    tail = (1.0 - LEVEL) / 2.0
    if not bal.size or np.isnan(bal).all():
        nan = np.full(len(n), np.nan)
        return {"yearly_balance_low": nan, "yearly_balance_high": nan, "probability_pays_off": nan}
    lo, hi = np.quantile(bal, [tail, 1.0 - tail], axis=1)
    return {"yearly_balance_low": lo, "yearly_balance_high": hi, "probability_pays_off": (bal > 0).mean(axis=1)}
