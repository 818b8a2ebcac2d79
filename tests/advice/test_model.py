"""Tests of the shrinkage reject model on simulated histories with a known law."""

import json
import pickle

import numpy as np
import pandas as pd
import pytest
import sklearn
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import expit, logit
from scipy.stats import spearmanr
from sklearn.base import clone
from sklearn.exceptions import NotFittedError
from sklearn.metrics import log_loss

from tracker.advice.model import (
    BLOB_MAGIC,
    MARGIN_COLUMNS,
    IncompatibleModel,
    MissingColumn,
    ShrinkageRejectModel,
    cross_validate,
    weighted_log_loss,
)
from tracker.errors import BadRow

ALLOYS = ["steel", "aluminum", "gray_iron", "ductile_iron", "cast_iron_brass",
          "aluminum_bronze", "silicon_bronze"]
SLEEVES = ["none", "insulating", "exothermic"]

# The true law of the simulation (invented for the tests): logit-linear in
# the shortfalls, with a small alloy effect the model has to find itself.
TRUE_BASE = 0.02
TRUE_SLOPES = {"modulus": 7.0, "caine": 3.0, "feed": 3.5}
TRUE_ALLOY = {"steel": 0.3, "aluminum": 0.0, "gray_iron": -0.4, "ductile_iron": 0.0,
              "cast_iron_brass": 0.0, "aluminum_bronze": 0.2, "silicon_bronze": 0.0}


def true_logit(df):
    mod = np.maximum(0.0, 1.2 - df["modulus_ratio"].to_numpy())
    caine = np.clip(np.nan_to_num(-df["caine_margin"].to_numpy(), nan=0.0), 0.0, 2.0)
    feed = np.clip(-df["feed_margin"].to_numpy(), 0.0, 1.0)
    return (logit(TRUE_BASE) + TRUE_SLOPES["modulus"] * mod + TRUE_SLOPES["caine"] * caine
            + TRUE_SLOPES["feed"] * feed + df["alloy"].map(TRUE_ALLOY).to_numpy())


def simulate(seed, n_patterns=40, zones=(2, 6), lots=(3, 10), castings=(20, 120)):
    """(lot rows, zone rows): a foundry history drawn from the true law."""
    rng = np.random.default_rng(seed)
    zone_rows = []
    for p in range(n_patterns):
        alloy = ALLOYS[p % len(ALLOYS)]
        for z in range(rng.integers(*zones, endpoint=True)):
            mod = rng.uniform(0.85, 1.6)
            caine = np.nan if alloy == "ductile_iron" else rng.uniform(-0.6, 0.5)
            if alloy != "ductile_iron" and rng.random() < 0.05:
                caine = -np.inf
            feed = rng.uniform(-0.5, 1.5)
            if rng.random() < 0.05:
                feed = np.inf
            zone_rows.append({
                "pattern": f"P{p:03d}", "zone": f"Z{z}", "riser": f"R{z}", "alloy": alloy,
                "modulus_ratio": mod, "freezing_ratio": mod, "caine_margin": caine,
                "feed_margin": feed, "volume_ratio": rng.uniform(0.3, 1.5),
                "sleeve_kind": SLEEVES[rng.integers(3)],
                "thickness_mm": rng.choice([np.nan, rng.uniform(10, 80)]),
                "pour_temp_dev_c": 0.0,
            })
    zones_df = pd.DataFrame(zone_rows)
    zones_df["true_rate"] = expit(true_logit(zones_df))
    lot_rows = []
    day0 = pd.Timestamp("2024-01-01")
    for _, z in zones_df.iterrows():
        for lot in range(rng.integers(*lots, endpoint=True)):
            n = int(rng.integers(*castings, endpoint=True))
            row = z.to_dict()
            row.update(castings=n, shrinkage_rejects=int(rng.binomial(n, z["true_rate"])),
                       pour_temp_dev_c=rng.choice([np.nan, rng.normal(0, 10)]),
                       poured_on=day0 + pd.Timedelta(days=int(rng.integers(0, 300))))
            lot_rows.append(row)
    return pd.DataFrame(lot_rows).drop(columns="true_rate"), zones_df


@pytest.fixture(scope="module")
def history():
    return simulate(seed=20240611)


@pytest.fixture(scope="module")
def fitted(history):
    lots, _ = history
    return ShrinkageRejectModel(alpha=1.0).fit(lots)


# --- estimator conventions ------------------------------------------------------

def test_params_are_stored_and_clonable():
    m = ShrinkageRejectModel(alpha=3.0, prior_rate=0.05, prior_slopes={"feed_shortfall": 2.0})
    assert m.get_params()["alpha"] == 3.0
    c = clone(m)
    assert c.get_params() == m.get_params()
    with pytest.raises(TypeError):
        ShrinkageRejectModel(3.0)  # keyword-only


def test_fit_returns_self_and_predict_needs_fit(history):
    lots, _ = history
    m = ShrinkageRejectModel()
    with pytest.raises(NotFittedError):
        m.predict_rate(lots)
    assert m.fit(lots) is m
    assert m.converged_


def test_fit_accepts_y(history):
    lots, _ = history
    a = ShrinkageRejectModel().fit(lots)
    b = ShrinkageRejectModel().fit(lots.drop(columns="shrinkage_rejects"),
                                   lots["shrinkage_rejects"].to_numpy())
    np.testing.assert_allclose(a.predict_rate(lots), b.predict_rate(lots), rtol=1e-6)


# --- it learns the law --------------------------------------------------------

def test_ranks_zones_like_the_truth(fitted, history):
    _, zones = history
    rho = spearmanr(fitted.predict_rate(zones), zones["true_rate"]).statistic
    assert rho > 0.8


def test_beats_rate_only_baseline_in_grouped_cv(history):
    lots, _ = history
    cv = cross_validate(lots, n_splits=5, model=ShrinkageRejectModel(alpha=1.0))
    assert cv["n_splits"] == 5 and cv["n_patterns"] == 40
    assert cv["model"]["log_loss"] < cv["baseline"]["log_loss"]
    # held-out calibration: total predicted rejects within 15 % of observed
    assert 0.85 < cv["model"]["calibration_ratio"] < 1.15
    assert sum(b["castings"] for b in cv["model"]["calibration"]) == lots["castings"].sum()
    # the model's bins spread out from low to high rate, the baseline's cannot
    rates = [b["observed_rate"] for b in cv["model"]["calibration"]]
    assert rates[-1] > 3 * rates[0]
    # each pattern is in exactly one test fold
    seen = [p for f in cv["folds"] for p in f["test_patterns"]]
    assert sorted(seen) == sorted(lots["pattern"].unique())
    assert cv["predictions"].groupby("pattern")["fold"].nunique().max() == 1


def test_cv_with_fewer_patterns_than_splits(history):
    lots, _ = history
    few = lots[lots["pattern"].isin(["P000", "P001", "P002"])]
    cv = cross_validate(few, n_splits=5)
    assert cv["n_splits"] == 3
    assert len(cv["folds"]) == 3


def test_cv_baseline_is_training_fold_rate(history):
    lots, _ = history
    cv = cross_validate(lots, n_splits=4)
    pred = cv["predictions"]
    for f in range(1, 5):
        train = lots[pred["fold"] != f]
        expected = (train["shrinkage_rejects"].sum() + 0.5) / (train["castings"].sum() + 1)
        assert np.allclose(pred.loc[pred["fold"] == f, "baseline_rate"], expected)


# --- monotone in every margin ---------------------------------------------------

@pytest.mark.parametrize("column", MARGIN_COLUMNS)
def test_grid_larger_margin_never_raises_rate(fitted, history, column):
    _, zones = history
    rows = zones.sample(25, random_state=7)
    grid = np.linspace(-1.0, 2.5, 60)
    for _, row in rows.iterrows():
        sweep = pd.DataFrame([row] * len(grid))
        sweep[column] = grid
        p = fitted.predict_rate(sweep)
        assert np.all(np.diff(p) <= 1e-15), column


@settings(max_examples=60, deadline=None, derandomize=True)
@given(i=st.integers(0, 150), column=st.sampled_from(MARGIN_COLUMNS),
       start=st.floats(-3, 3), step=st.floats(0.0, 5.0))
def test_property_larger_margin_never_raises_rate(fitted, history, i, column, start, step):
    _, zones = history
    row = zones.iloc[[i % len(zones)]].copy()
    row[column] = start
    lo = fitted.predict_rate(row)[0]
    row[column] = start + step
    assert fitted.predict_rate(row)[0] <= lo + 1e-15


def test_infinite_margins_are_clipped(fitted, history):
    _, zones = history
    row = zones.iloc[[0]].copy()
    row["alloy"] = "steel"
    row["caine_margin"] = -np.inf
    worst = fitted.predict_rate(row)[0]
    row["caine_margin"] = -100.0
    assert np.isfinite(worst) and fitted.predict_rate(row)[0] <= worst
    row["feed_margin"] = np.inf
    assert np.isfinite(fitted.predict_rate(row)[0])


def test_wrong_signed_data_is_clamped_not_followed():
    # data where scrap falls as the feed margin shrinks: against physics, so the
    # feed coefficient must stop at 0 instead of turning negative
    lots, _ = simulate(seed=5, n_patterns=30)
    feed = np.clip(-lots["feed_margin"].to_numpy(), 0.0, 1.0)
    p = expit(logit(0.2) - 4.0 * feed)
    rng = np.random.default_rng(5)
    lots = lots.assign(shrinkage_rejects=rng.binomial(lots["castings"].to_numpy(), p))
    m = ShrinkageRejectModel(alpha=1.0).fit(lots)
    table = m.coefficients_.set_index("term")
    assert table.loc["feed_shortfall", "coefficient"] == 0.0
    assert (table.loc[table["constraint"] == ">= 0", "coefficient"] >= 0).all()
    sweep = lots.iloc[[0] * 40].assign(feed_margin=np.linspace(-1.0, 1.0, 40))
    assert np.all(np.diff(m.predict_rate(sweep)) <= 1e-15)


# --- prior vs data ----------------------------------------------------------------

WRONG_PRIOR = {"modulus_shortfall": 1.0, "caine_shortfall": 0.5, "feed_shortfall": 0.5,
               "freezing_shortfall": 0.0}


def _logit_gap(a, b):
    return float(np.mean(np.abs(logit(a) - logit(b))))


def test_little_history_leans_on_prior_much_follows_truth():
    lots, zones = simulate(seed=11, n_patterns=40)
    truth = zones["true_rate"].to_numpy()
    params = dict(alpha=10.0, prior_rate=0.08, prior_slopes=WRONG_PRIOR)

    tiny_lots, _ = simulate(seed=12, n_patterns=3, zones=(1, 2), lots=(1, 1), castings=(5, 10))
    tiny = ShrinkageRejectModel(**params).fit(tiny_lots)
    big = ShrinkageRejectModel(**params).fit(lots)

    prior = tiny.predict_prior(zones)
    np.testing.assert_allclose(prior, big.predict_prior(zones))
    prior_err = _logit_gap(prior, truth)
    assert prior_err > 1.0  # the prior is far from the truth, so the checks below mean something
    # a few dozen castings move the fit less than half as far from the prior as
    # the full history does, and it stays about as far from the truth as the prior
    big_moved = _logit_gap(big.predict_rate(zones), prior)
    assert _logit_gap(tiny.predict_rate(zones), prior) < 0.5 * big_moved
    assert _logit_gap(tiny.predict_rate(zones), truth) > 0.8 * prior_err
    # the full history (~85,000 castings) follows the truth instead
    assert _logit_gap(big.predict_rate(zones), truth) < 0.2 * prior_err


def test_more_penalty_pulls_toward_prior(history):
    lots, zones = history
    gaps = []
    for alpha in (0.1, 1e3, 1e7):
        m = ShrinkageRejectModel(alpha=alpha, offset_alpha=alpha, prior_rate=0.05, prior_slopes=WRONG_PRIOR).fit(lots)
        gaps.append(_logit_gap(m.predict_rate(zones), m.predict_prior(zones)))
    assert gaps[0] > gaps[1] > gaps[2]
    assert gaps[2] < 0.05


def test_prior_rate_defaults_to_passing_rows(history):
    lots, _ = history
    m = ShrinkageRejectModel().fit(lots)
    passing = ((lots["modulus_ratio"] >= 1.2) & (lots["freezing_ratio"] >= 1.0)
               & ~(lots["caine_margin"] < 0) & (lots["feed_margin"] >= 0))
    sub = lots[passing]
    expected = (sub["shrinkage_rejects"].sum() + 0.5) / (sub["castings"].sum() + 1)
    assert m.prior_rate_ == pytest.approx(expected)


# --- validation --------------------------------------------------------------------

@pytest.mark.parametrize("column", ["caine_margin", "alloy", "castings", "shrinkage_rejects"])
def test_missing_column_is_named_in_fit(history, column):
    lots, _ = history
    with pytest.raises(MissingColumn) as exc:
        ShrinkageRejectModel().fit(lots.drop(columns=column))
    assert f"missing column(s) {column!r}" in str(exc.value)


def test_missing_column_is_named_in_predict(fitted, history):
    _, zones = history
    with pytest.raises(MissingColumn, match="'modulus_ratio'"):
        fitted.predict_rate(zones.drop(columns="modulus_ratio"))


def test_bad_counts_name_row_and_column(history):
    lots, _ = history
    bad = lots.copy()
    bad.loc[bad.index[3], "shrinkage_rejects"] = bad.loc[bad.index[3], "castings"] + 1
    with pytest.raises(BadRow) as exc:
        ShrinkageRejectModel().fit(bad)
    assert exc.value.row == bad.index[3] and exc.value.column == "shrinkage_rejects"
    bad = lots.astype({"modulus_ratio": object})
    bad.loc[bad.index[0], "modulus_ratio"] = "big"
    with pytest.raises(BadRow, match="column modulus_ratio: got 'big'; must be a number"):
        ShrinkageRejectModel().fit(bad)


# --- persistence and explanation ------------------------------------------------------

def test_round_trip_bytes(fitted, history):
    lots, zones = history
    blob = fitted.to_bytes()
    back = ShrinkageRejectModel.from_bytes(blob)
    assert np.array_equal(back.predict_rate(zones), fitted.predict_rate(zones))
    assert back.n_rows_ == len(lots)
    assert back.n_castings_ == lots["castings"].sum()
    assert back.data_until_ == lots["poured_on"].max().date().isoformat()
    assert back.sklearn_version_ == sklearn.__version__
    assert pd.Timestamp(back.fitted_on_).tzinfo is not None
    assert ShrinkageRejectModel.read_header(blob)["n_castings"] == back.n_castings_


def test_from_bytes_refuses_other_sklearn_version(fitted):
    header = fitted.metadata()
    header.update(format=1, sklearn_version="0.24.2")
    head = json.dumps(header).encode()
    blob = BLOB_MAGIC + len(head).to_bytes(4, "big") + head + pickle.dumps(fitted)
    with pytest.raises(IncompatibleModel, match="scikit-learn 0.24.2"):
        ShrinkageRejectModel.from_bytes(blob)
    with pytest.raises(IncompatibleModel, match="not a Pourback shrinkage model"):
        ShrinkageRejectModel.from_bytes(pickle.dumps(fitted))


def test_explain_adds_up_to_prediction(fitted, history):
    _, zones = history
    for i in (0, 5, 17):
        row = zones.iloc[i]
        table = fitted.explain(row)
        assert table["term"].iloc[0] == table.loc[table["contribution_logit"].abs().idxmax(), "term"]
        assert expit(table["contribution_logit"].sum()) == pytest.approx(
            fitted.predict_rate(zones.iloc[[i]])[0], rel=1e-9)
    coef = fitted.coefficients_
    assert {"term", "coefficient", "prior", "odds_ratio", "constraint"} <= set(coef.columns)
    assert len(coef) == len(fitted.terms_) + 1


def test_learned_slopes_near_truth(fitted):
    # the true law's slopes, invented for the simulation above
    c = fitted.coefficients_.set_index("term")["coefficient"]
    assert c["modulus_shortfall"] == pytest.approx(TRUE_SLOPES["modulus"], rel=0.25)
    assert c["caine_shortfall"] == pytest.approx(TRUE_SLOPES["caine"], rel=0.25)
    assert c["feed_shortfall"] == pytest.approx(TRUE_SLOPES["feed"], rel=0.25)


# --- the loss ------------------------------------------------------------------------

def test_weighted_log_loss_matches_sklearn():
    rng = np.random.default_rng(3)
    n = rng.integers(1, 200, size=50)
    r = rng.binomial(n, 0.1)
    p = rng.uniform(0.01, 0.99, size=50)
    # expand each row into a reject row (weight r) and a sound row (weight n - r)
    y = np.concatenate([np.ones(50), np.zeros(50)])
    w = np.concatenate([r, n - r])
    proba = np.concatenate([p, p])
    expected = log_loss(y, proba, sample_weight=w, labels=[0, 1])
    assert weighted_log_loss(r, n, p) == pytest.approx(expected, rel=1e-12)
