"""The shrinkage reject model: how a riser's rule margins turn into scrap.

``ShrinkageRejectModel`` predicts the probability that one casting is rejected
for shrinkage in one riser zone, from the margins the design engine computes
for that zone (modulus rule, Caine's curve, feed volume, freezing ratio). It is
a penalised binomial logistic regression on *shortfall* features:

======================  =================================================  =========
term                    value per row                                      sign
======================  =================================================  =========
modulus_shortfall       max(0, modulus_target - modulus_ratio)             >= 0
freezing_shortfall      max(0, freezing_target - freezing_ratio)           >= 0
                        (a row's own ``modulus_target`` column, where given,
                        replaces the estimator's: its alloy's rule set)
caine_shortfall         max(0, -caine_margin), 0 where NaN (no constants)  >= 0
feed_shortfall          max(0, -feed_margin)                               >= 0
pour_temp_dev_10c       pour_temp_dev_c / 10, 0 where unknown              free
log2_thickness          log2(thickness_mm / median thickness), 0 unknown   free
alloy=<key>             1 for the row's alloy (an offset)                  free
sleeve=<kind>           1 for the row's sleeve kind (an offset)            free
======================  =================================================  =========

Each shortfall is zero when its rule passes and grows as the design falls
short, and its coefficient is bounded at zero or above during the fit, so a
larger margin can never raise the predicted rate. ``volume_ratio`` acts only
through ``caine_margin`` and ``feed_margin`` (the design engine folds it into
both), so the prediction does not depend on it directly.

The fit maximises the binomial log-likelihood of the lot counts (each row
counts ``shrinkage_rejects`` rejected and ``castings - shrinkage_rejects``
sound castings) minus a ridge penalty toward a rule-based prior, see
``ShrinkageRejectModel``. Predictions are screening estimates from the shop's
own history and the empirical rules; the responsible methods engineer must
confirm them by simulation, trial pours and inspection.
"""

from __future__ import annotations

import io
import json
import math
import pickle
from datetime import UTC, datetime
from numbers import Real

import numpy as np
import pandas as pd
import sklearn
from scipy.optimize import minimize
from scipy.special import expit, logit
from sklearn.base import BaseEstimator, clone
from sklearn.model_selection import GroupKFold
from sklearn.utils.validation import check_array, check_is_fitted, check_scalar

from tracker import __version__ as _POURBACK_VERSION
from tracker.advice.pooling import WEIGHT_BOUNDS, fit_weight
from tracker.design.rules import DEFAULT_MODULUS_FACTOR
from tracker.errors import BadInput, BadRow, IncompatibleModel, MissingColumn, PourbackError  # noqa: F401 (re-exported)

SHORTFALL_TERMS = ("modulus_shortfall", "freezing_shortfall", "caine_shortfall", "feed_shortfall")
NUMERIC_TERMS = ("pour_temp_dev_10c", "log2_thickness")

# Prior slopes, logit per unit shortfall. These are assumptions chosen for this
# tool, not values from a published source: they make a design 0.1 short on the
# modulus ratio about twice as likely to scrap (8 · 0.1 = 0.8 in logit), and a
# riser holding half the feed metal it needs about 7 times as likely
# (4 · 0.5 = 2). Edit them to your shop through ``prior_slopes``.
DEFAULT_PRIOR_SLOPES = {
    "modulus_shortfall": 8.0,
    "freezing_shortfall": 4.0,
    "caine_shortfall": 4.0,
    "feed_shortfall": 4.0,
}

FEATURE_COLUMNS = ("modulus_ratio", "freezing_ratio", "caine_margin", "feed_margin",
                   "pour_temp_dev_c", "thickness_mm", "alloy", "sleeve_kind")
TARGET_COLUMNS = ("castings", "shrinkage_rejects")
MARGIN_COLUMNS = ("modulus_ratio", "caine_margin", "feed_margin", "freezing_ratio", "volume_ratio")

# Shortfalls are clipped so -inf (Caine's curve never reached) counts as very
# undersized rather than infinitely so.
CAINE_SHORTFALL_CLIP = 2.0
FEED_SHORTFALL_CLIP = 1.0  # feed_margin >= -1 by construction: a riser cannot give less than nothing
POUR_TEMP_CLIP_10C = 10.0  # ±100 °C; beyond that the value is more likely a typo than a pour
THICKNESS_CLIP_LOG2 = 4.0  # 16 times thicker or thinner than the median section

BLOB_MAGIC = b"POURBACK-SHRINKAGE-MODEL\n"
BLOB_FORMAT = 2  # 2: the fit keeps the coefficients' covariance and the zones' prior weight
ZONE_KEYS = ("pattern", "revision", "zone")


# --- validation -----------------------------------------------------------------

def _require_columns(X, columns, table="features"):
    if not isinstance(X, pd.DataFrame):
        raise BadInput(table, type(X).__name__,
                       "must be a pandas DataFrame with one row per lot and zone")
    missing = [c for c in columns if c not in X.columns]
    if missing:
        raise MissingColumn(missing, columns, table)


def _numeric(X, column, *, allow_nan=False, allow_inf=False, table="features"):
    """Column as a float array, checked by sklearn; errors name row and column."""
    try:
        arr = check_array(X[[column]].to_numpy(), dtype=np.float64, ensure_all_finite=False,
                          ensure_min_samples=1, input_name=column)[:, 0]
    except (TypeError, ValueError) as exc:
        bad = pd.to_numeric(X[column], errors="coerce").isna() & X[column].notna()
        row = X.index[bad.to_numpy()][0] if bad.any() else X.index[0]
        raise BadRow(table, row, column, f"got {X[column].loc[row]!r}; must be a number") from exc
    bad = np.zeros(arr.shape, dtype=bool)
    if not allow_nan:
        bad |= np.isnan(arr)
    if not allow_inf:
        bad |= np.isinf(arr)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        allowed = "a finite number" if not allow_nan else "a finite number or empty"
        raise BadRow(table, X.index[i], column, f"got {arr[i]!r}; must be {allowed}")
    return arr


def _labels(X, column, default):
    s = X[column].astype("object").where(X[column].notna(), default)
    return s.map(lambda v: str(v).strip().lower()).to_numpy(dtype=object)


def _targets(X, y=None, table="features"):
    """(rejects, castings) as float arrays, checked as binomial counts."""
    castings = _numeric(X, "castings", table=table)
    bad = (castings <= 0) | (castings != np.round(castings))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise BadRow(table, X.index[i], "castings",
                     f"got {castings[i]!r}; castings must be a whole number above 0")
    if y is None:
        rejects = _numeric(X, "shrinkage_rejects", table=table)
    else:
        rejects = check_array(np.asarray(y, dtype=float).reshape(-1, 1), dtype=np.float64,
                              input_name="y")[:, 0]
        if len(rejects) != len(castings):
            raise BadInput("y", f"{len(rejects)} values",
                           f"must hold one reject count per row of the {len(castings)} rows")
    bad = (rejects < 0) | (rejects > castings) | (rejects != np.round(rejects))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise BadRow(table, X.index[i], "shrinkage_rejects",
                     f"got {rejects[i]!r}; must be a whole number from 0 to castings "
                     f"({castings[i]:g})")
    return rejects, castings


def weighted_log_loss(rejects, castings, rate):
    """Binomial log loss per casting, nats.

    -Σ [r·ln p + (n − r)·ln(1 − p)] / Σ n, which equals scikit-learn's
    ``log_loss`` on the rows expanded to one reject row (weight r) and one
    sound row (weight n − r). ``rate`` is clipped to [1e-15, 1 − 1e-15].
    """
    r = np.asarray(rejects, dtype=float)
    n = np.asarray(castings, dtype=float)
    p = np.clip(np.asarray(rate, dtype=float), 1e-15, 1 - 1e-15)
    return float(-(r * np.log(p) + (n - r) * np.log1p(-p)).sum() / n.sum())


# --- the estimator --------------------------------------------------------------

class ShrinkageRejectModel(BaseEstimator):
    """Probability of a shrinkage reject per casting and riser zone.

    Parameters (keyword-only)
    ----------
    alpha : float, default 10.0
        Strength of the ridge penalty toward the prior, in units of castings:
        the fit maximises  Σ_rows [r·ln p + (n − r)·ln(1 − p)]
        − alpha/2 · Σ_terms (θ − θ_prior)².  A shop with a few dozen castings
        gets close to the prior; with thousands the data decides.
    offset_alpha : float, default 5000.0
        Penalty of the alloy and sleeve-kind offsets, in castings. Much
        heavier than ``alpha``: a shop has few patterns per category, so an
        offset would mostly learn one pattern's trouble (an undersized
        exothermic sleeve would make every exothermic sleeve look bad). The
        sleeve's real effect already enters through the margins (its modulus
        factor and feeding efficiency).
    prior_rate : float in (0, 1) or None, default None
        Shrinkage reject rate of a zone whose riser passes every rule. None
        takes the shop's own rate on the training rows that pass every rule
        ((rejects + 0.5) / (castings + 1)), or on all rows when none pass.
    prior_slopes : dict or None, default None
        Prior coefficient of each shortfall term, logit per unit shortfall
        (keys from ``SHORTFALL_TERMS``; missing keys take
        ``DEFAULT_PRIOR_SLOPES``, which are assumptions, not published values).
    modulus_target : float, default 1.2
        Modulus ratio the rule asks for (Wlodawer, 1966; common practice).
    freezing_target : float, default 1.0
        Freezing ratio below which the riser freezes before its section.
    tol : float, default 1e-9
        Gradient tolerance of the L-BFGS-B solver.

    The prior
    ---------
    logit p_prior = logit(prior_rate) + Σ_s prior_slope_s · shortfall_s:
    the shop's base rate when all rules pass, rising with each shortfall at the
    prior slope, with no alloy, sleeve, pour temperature or thickness effect.
    Every coefficient is shrunk toward this prior (offsets toward 0); shortfall
    coefficients are also bounded at 0 or above, so the fitted rate never rises
    with a margin. Categories unseen in fit get no offset (the prior's 0).

    Attributes
    ----------
    terms_ : list of str, the design matrix columns (see the module docstring)
    coef_, intercept_ : fitted coefficients (logit scale) and intercept
    prior_coef_, prior_intercept_, prior_rate_ : the prior used in this fit
    coefficients_ : DataFrame, one row per term with coefficient, prior,
        odds ratio, constraint and unit; the table to show users
    alloys_, sleeve_kinds_ : categories seen in fit
    thickness_ref_mm_ : median section thickness of the training rows, mm
    fitted_on_ : ISO datetime (UTC) of the fit
    n_rows_, n_castings_, n_rejects_ : size of the training data
    data_until_ : ISO date of the last ``poured_on`` in the data, or None
    sklearn_version_, pourback_version_ : versions at fit time
    converged_ : whether the solver reported success
    covariance_ : covariance of (intercept_, coef_), Laplace approximation
        (the inverse Hessian of the penalised objective at the fit)
    zone_weight_ : the prior weight of a zone, castings: how many castings
        the model's rate for a design counts for against the zone's own
        (``tracker.advice.pooling``; from the rows' pattern, revision and zone)
    """

    def __init__(self, *, alpha=10.0, offset_alpha=5000.0, prior_rate=None, prior_slopes=None,
                 modulus_target=DEFAULT_MODULUS_FACTOR, freezing_target=1.0, tol=1e-9):
        self.alpha = alpha
        self.offset_alpha = offset_alpha
        self.prior_rate = prior_rate
        self.prior_slopes = prior_slopes
        self.modulus_target = modulus_target
        self.freezing_target = freezing_target
        self.tol = tol

    # -- parameters and features ---------------------------------------------

    def _check_params(self):
        check_scalar(self.alpha, "alpha", Real, min_val=0.0, include_boundaries="left")
        check_scalar(self.offset_alpha, "offset_alpha", Real, min_val=0.0, include_boundaries="left")
        check_scalar(self.modulus_target, "modulus_target", Real, min_val=0.0,
                     include_boundaries="neither")
        check_scalar(self.freezing_target, "freezing_target", Real, min_val=0.0,
                     include_boundaries="neither")
        check_scalar(self.tol, "tol", Real, min_val=0.0, include_boundaries="neither")
        if self.prior_rate is not None:
            check_scalar(self.prior_rate, "prior_rate", Real, min_val=0.0, max_val=1.0,
                         include_boundaries="neither")
        slopes = dict(DEFAULT_PRIOR_SLOPES)
        given = self.prior_slopes or {}
        unknown = sorted(set(given) - set(SHORTFALL_TERMS))
        if unknown:
            raise BadInput("prior_slopes", unknown[0],
                           "known terms are " + ", ".join(SHORTFALL_TERMS))
        slopes.update(given)
        for k, v in slopes.items():
            if not (isinstance(v, Real) and math.isfinite(v) and v >= 0):
                raise BadInput(f"prior_slopes[{k}]", v,
                               "must be a number at or above 0: a shortfall never lowers scrap")
        return np.array([float(slopes[t]) for t in SHORTFALL_TERMS])

    def _shortfalls(self, X):
        """Shortfall matrix (rows × SHORTFALL_TERMS), every entry >= 0."""
        mod = _numeric(X, "modulus_ratio", allow_inf=True)
        frz = _numeric(X, "freezing_ratio", allow_inf=True)
        caine = _numeric(X, "caine_margin", allow_nan=True, allow_inf=True)
        feed = _numeric(X, "feed_margin", allow_inf=True)
        # A row's own rule set may ask another modulus ratio (``modulus_target``, as
        # ``tracker.design.assess``'s modulus_required_ratio: 0.96 under ductile iron's pressure
        # control, 0 where no riser is needed); the freezing target scales with it.
        mod_t = np.full(len(mod), float(self.modulus_target))
        for name in ("modulus_target", "modulus_required_ratio"):
            if name in X:
                row_t = _numeric(X, name, allow_nan=True)
                mod_t = np.where(np.isnan(row_t), mod_t, row_t)
                break
        frz_t = self.freezing_target * mod_t / self.modulus_target
        s = np.column_stack([
            np.clip(mod_t - mod, 0.0, mod_t),
            np.clip(frz_t - frz, 0.0, frz_t),
            np.clip(np.nan_to_num(-caine, nan=0.0), 0.0, CAINE_SHORTFALL_CLIP),
            np.clip(-feed, 0.0, FEED_SHORTFALL_CLIP),
        ])
        return s

    def _design(self, X):
        """Design matrix with the columns of ``terms_``."""
        s = self._shortfalls(X)
        temp = _numeric(X, "pour_temp_dev_c", allow_nan=True)
        temp = np.clip(np.nan_to_num(temp / 10.0, nan=0.0), -POUR_TEMP_CLIP_10C, POUR_TEMP_CLIP_10C)
        thick = _numeric(X, "thickness_mm", allow_nan=True)
        if np.any(thick[~np.isnan(thick)] <= 0):
            i = int(np.flatnonzero(thick <= 0)[0])
            raise BadRow("features", X.index[i], "thickness_mm",
                         f"got {thick[i]!r}; a wall thickness must be above 0 mm or empty")
        with np.errstate(divide="ignore", invalid="ignore"):
            lt = np.log2(thick / self.thickness_ref_mm_)
        lt = np.clip(np.nan_to_num(lt, nan=0.0), -THICKNESS_CLIP_LOG2, THICKNESS_CLIP_LOG2)
        alloy = _labels(X, "alloy", "unknown")
        sleeve = _labels(X, "sleeve_kind", "none")
        a = (alloy[:, None] == np.array(self.alloys_, dtype=object)[None, :]).astype(float)
        k = (sleeve[:, None] == np.array(self.sleeve_kinds_, dtype=object)[None, :]).astype(float)
        return np.column_stack([s, temp, lt, a, k])

    # -- fit and predict -----------------------------------------------------

    def fit(self, X, y=None):
        """Fit on a feature table with one row per (lot, zone).

        X must hold the columns of ``FEATURE_COLUMNS`` plus ``castings`` and,
        unless ``y`` is given, ``shrinkage_rejects``. ``y`` (optional): the
        shrinkage reject count per row. A ``poured_on`` column, if present,
        sets ``data_until_``. Returns self.
        """
        prior_slopes = self._check_params()
        needed = FEATURE_COLUMNS + (("castings",) if y is not None else TARGET_COLUMNS)
        _require_columns(X, needed)
        rejects, castings = _targets(X, y)

        thick = _numeric(X, "thickness_mm", allow_nan=True)
        known = thick[~np.isnan(thick) & (thick > 0)]
        self.thickness_ref_mm_ = float(np.median(known)) if known.size else 1.0
        self.alloys_ = sorted(set(_labels(X, "alloy", "unknown")))
        self.sleeve_kinds_ = sorted(set(_labels(X, "sleeve_kind", "none")))
        self.terms_ = (list(SHORTFALL_TERMS) + list(NUMERIC_TERMS)
                       + [f"alloy={a}" for a in self.alloys_]
                       + [f"sleeve={k}" for k in self.sleeve_kinds_])
        D = self._design(X)
        self._set_prior(D, rejects, castings, prior_slopes)
        res = self._minimise(D, rejects, castings)
        n_short = len(SHORTFALL_TERMS)
        self.intercept_ = float(res.x[0])
        self.coef_ = np.asarray(res.x[1:], dtype=float)
        self.coef_[:n_short] = np.maximum(self.coef_[:n_short], 0.0)
        self.converged_ = bool(res.success)
        self.n_iter_ = int(res.nit)
        self._record_data(X, castings.sum(), rejects)
        self.coefficients_ = self._coefficient_table()
        self.covariance_ = _laplace_covariance(D, castings, self.intercept_, self.coef_, self._alphas(len(res.x)))
        self.zone_weight_ = _zone_weight(X, rejects, castings, self.predict_rate(X))
        return self

    def _set_prior(self, D, rejects, castings, prior_slopes):
        """``prior_rate_``, ``prior_intercept_`` and ``prior_coef_``: the given
        prior rate, else the shop's own on the rows that pass every rule."""
        n_short = len(SHORTFALL_TERMS)
        if self.prior_rate is None:
            passing = ~(D[:, :n_short] > 0).any(axis=1)
            rows = passing if passing.any() else np.ones(len(D), dtype=bool)
            self.prior_rate_ = float((rejects[rows].sum() + 0.5) / (castings[rows].sum() + 1.0))
        else:
            self.prior_rate_ = float(self.prior_rate)
        self.prior_intercept_ = float(logit(self.prior_rate_))
        self.prior_coef_ = np.concatenate([prior_slopes, np.zeros(D.shape[1] - n_short)])

    def _alphas(self, size):
        """The ridge penalty of each coefficient, intercept first (offsets take ``offset_alpha``)."""
        alpha = np.full(size, float(self.alpha))
        alpha[size - len(self.alloys_) - len(self.sleeve_kinds_):] = float(self.offset_alpha)
        return alpha

    def _minimise(self, D, rejects, castings):
        """The penalised binomial fit by L-BFGS-B from the prior (scipy's result)."""
        n_short = len(SHORTFALL_TERMS)
        theta0 = np.concatenate([[self.prior_intercept_], self.prior_coef_])
        A = np.column_stack([np.ones(len(D)), D])
        total = castings.sum()
        alpha = self._alphas(len(theta0))

        # Objective divided by the total castings so the solver sees numbers
        # near 1 whatever the size of the history; the optimum is unchanged.
        def objective(theta):
            eta = A @ theta
            nll = (castings * np.logaddexp(0.0, eta) - rejects * eta).sum()
            diff = theta - theta0
            grad = A.T @ (castings * expit(eta) - rejects) + alpha * diff
            return (nll + 0.5 * (alpha * diff) @ diff) / total, grad / total

        bounds = [(None, None)] + [(0.0, None)] * n_short + [(None, None)] * (D.shape[1] - n_short)
        return minimize(objective, theta0, jac=True, method="L-BFGS-B", bounds=bounds,
                        options={"gtol": self.tol, "ftol": 1e-15, "maxiter": 2000})

    def _record_data(self, X, total, rejects):
        """The size of the training data, its last pour date, the fit time and versions."""
        self.n_rows_ = int(len(X))
        self.n_castings_ = int(total)
        self.n_rejects_ = int(rejects.sum())
        self.fitted_on_ = datetime.now(UTC).isoformat(timespec="seconds")
        self.data_until_ = None
        if "poured_on" in X.columns:
            dates = pd.to_datetime(X["poured_on"], errors="coerce")
            if dates.notna().any():
                self.data_until_ = dates.max().date().isoformat()
        self.sklearn_version_ = sklearn.__version__
        self.pourback_version_ = _POURBACK_VERSION
        self.n_features_in_ = len(FEATURE_COLUMNS)
        self.feature_names_in_ = np.array(FEATURE_COLUMNS, dtype=object)

    def _checked_design(self, X):
        check_is_fitted(self)
        _require_columns(X, FEATURE_COLUMNS)
        return self._design(X)

    def design_matrix(self, X):
        """The rows' values of ``terms_`` (no intercept column): logit = intercept_ + design · coef_."""
        return self._checked_design(X)

    def decision_function(self, X):
        """Logit of the predicted shrinkage reject rate per row."""
        D = self._checked_design(X)
        return self.intercept_ + D @ self.coef_

    def predict_rate(self, X):
        """Predicted shrinkage reject probability per casting, one per row (0..1)."""
        return expit(self.decision_function(X))

    def predict_proba(self, X):
        """Columns [P(sound), P(shrinkage reject)] per row, as scikit-learn classifiers."""
        p = self.predict_rate(X)
        return np.column_stack([1.0 - p, p])

    def predict_rejects(self, X):
        """Expected shrinkage rejects per row: castings · predicted rate."""
        p = self.predict_rate(X)
        _require_columns(X, ("castings",))
        return _numeric(X, "castings") * p

    def predict_prior(self, X):
        """The rule-based prior rate per row (what the model says with no history)."""
        D = self._checked_design(X)
        return expit(self.prior_intercept_ + D @ self.prior_coef_)

    def score(self, X, y=None):
        """Minus the binomial log loss per casting (higher is better)."""
        _require_columns(X, ("castings",) if y is not None else TARGET_COLUMNS)
        rejects, castings = _targets(X, y)
        return -weighted_log_loss(rejects, castings, self.predict_rate(X))

    # -- explanation ---------------------------------------------------------

    _UNITS = {
        "modulus_shortfall": "modulus ratio below the target",
        "freezing_shortfall": "freezing ratio below the target",
        "caine_shortfall": "freezing ratio below Caine's curve",
        "feed_shortfall": "share of the needed feed metal missing",
        "pour_temp_dev_10c": "10 °C above the usual pour temperature",
        "log2_thickness": "doubling of the wall thickness",
    }

    def _coefficient_table(self):
        n_short = len(SHORTFALL_TERMS)
        rows = [{"term": "intercept", "coefficient": self.intercept_,
                 "prior": self.prior_intercept_, "odds_ratio": np.nan,
                 "constraint": "none", "unit": "logit of the rate when every rule passes"}]
        for i, t in enumerate(self.terms_):
            rows.append({
                "term": t, "coefficient": float(self.coef_[i]), "prior": float(self.prior_coef_[i]),
                "odds_ratio": float(np.exp(self.coef_[i])),
                "constraint": ">= 0" if i < n_short else "none",
                "unit": self._UNITS.get(t, "offset for this category"),
            })
        return pd.DataFrame(rows)

    def explain(self, row):
        """What drives the prediction for one row.

        ``row``: a one-row DataFrame, a Series or a dict with the feature
        columns. Returns a DataFrame (term, value, coefficient,
        contribution_logit), largest contribution first; the contributions add
        up to the logit of ``predict_rate``. Terms contributing 0 are left out
        except the intercept.
        """
        check_is_fitted(self)
        if isinstance(row, pd.Series):
            row = row.to_frame().T
        elif isinstance(row, dict):
            row = pd.DataFrame([row])
        if not isinstance(row, pd.DataFrame) or len(row) != 1:
            raise BadInput("row", getattr(row, "shape", type(row).__name__),
                           "explain takes exactly one row (a Series, a dict or a one-row DataFrame)")
        d = self._checked_design(row)[0]
        out = pd.DataFrame({"term": ["intercept"] + self.terms_,
                            "value": np.concatenate([[1.0], d]),
                            "coefficient": np.concatenate([[self.intercept_], self.coef_])})
        out["contribution_logit"] = out["value"] * out["coefficient"]
        keep = (out["term"] == "intercept") | (out["contribution_logit"] != 0)
        out = out[keep]
        order = out["contribution_logit"].abs().sort_values(ascending=False, kind="stable").index
        return out.loc[order].reset_index(drop=True)

    # -- persistence ---------------------------------------------------------

    def metadata(self):
        """The fit's metadata as a dict (also stored in the blob header)."""
        check_is_fitted(self)
        return {"fitted_on": self.fitted_on_, "n_rows": self.n_rows_,
                "n_castings": self.n_castings_, "n_rejects": self.n_rejects_,
                "data_until": self.data_until_, "sklearn_version": self.sklearn_version_,
                "pourback_version": self.pourback_version_, "params": self.get_params()}

    def to_bytes(self) -> bytes:
        """The fitted model as bytes: a JSON header (format, versions, metadata) and a pickle."""
        header = {"format": BLOB_FORMAT, **self.metadata()}
        head = json.dumps(header, default=str).encode("utf-8")
        buf = io.BytesIO()
        buf.write(BLOB_MAGIC)
        buf.write(len(head).to_bytes(4, "big"))
        buf.write(head)
        pickle.dump(self, buf, protocol=pickle.HIGHEST_PROTOCOL)
        return buf.getvalue()

    @staticmethod
    def read_header(blob: bytes) -> dict:
        """The JSON header of a blob from ``to_bytes``, without unpickling it."""
        if not isinstance(blob, (bytes, bytearray)) or not bytes(blob).startswith(BLOB_MAGIC):
            raise IncompatibleModel("not a Pourback shrinkage model: the data does not start "
                                    "with the model header; save models with to_bytes()")
        start = len(BLOB_MAGIC)
        size = int.from_bytes(blob[start:start + 4], "big")
        try:
            return json.loads(bytes(blob[start + 4:start + 4 + size]).decode("utf-8"))
        except (UnicodeDecodeError, json.JSONDecodeError) as exc:
            raise IncompatibleModel("damaged Pourback shrinkage model: its header cannot be "
                                    "read; refit the model from the inspection log") from exc

    @classmethod
    def from_bytes(cls, blob: bytes) -> ShrinkageRejectModel:
        """Load a model saved by ``to_bytes``.

        Refuses (IncompatibleModel) a blob of another model format or saved
        under another scikit-learn major.minor version. Unpickles: load only
        blobs your own install wrote.
        """
        header = cls.read_header(blob)
        saved = str(header.get("sklearn_version", "?"))
        if header.get("format") != BLOB_FORMAT or _minor(saved) != _minor(sklearn.__version__):
            raise IncompatibleModel(
                f"model saved with scikit-learn {saved} (model format {header.get('format')}) "
                f"cannot be loaded with scikit-learn {sklearn.__version__} (model format "
                f"{BLOB_FORMAT}); refit the model from the inspection log")
        start = len(BLOB_MAGIC) + 4 + int.from_bytes(blob[len(BLOB_MAGIC):len(BLOB_MAGIC) + 4], "big")
        try:
            model = pickle.loads(bytes(blob[start:]))
        except Exception as exc:  # any unpickling failure means the same thing to a user
            raise IncompatibleModel("damaged Pourback shrinkage model: it cannot be read; "
                                    "refit the model from the inspection log") from exc
        if not isinstance(model, cls):
            raise IncompatibleModel(f"the blob holds a {type(model).__name__}, not a {cls.__name__}")
        return model


def _laplace_covariance(D, castings, intercept, coef, alpha):
    """Covariance of (intercept, coef) by the Laplace approximation: the inverse
    of the penalised negative log-likelihood's Hessian at the fit,
    Aᵀ·diag(n·p·(1 − p))·A + diag(alpha)."""
    A = np.column_stack([np.ones(len(D)), D])
    p = expit(intercept + D @ coef)
    H = A.T @ (A * (castings * p * (1.0 - p))[:, None]) + np.diag(alpha)
    return np.linalg.pinv(H, hermitian=True)


def _zone_weight(X, rejects, castings, rate):
    """The prior weight of a zone's own rate against the model's
    (``pooling.fit_weight``) from the training rows summed per pattern,
    revision and zone; the largest weight (the model alone) where the rows
    name no zones."""
    if not all(k in X for k in ZONE_KEYS):
        return WEIGHT_BOUNDS[1]
    keys = pd.MultiIndex.from_frame(X[list(ZONE_KEYS)].astype(str))
    g = pd.DataFrame({"r": rejects, "n": castings, "e": castings * rate}, index=keys).groupby(level=[0, 1, 2]).sum()
    g = g[g["n"] > 0]
    return fit_weight(g["r"].to_numpy(), g["n"].to_numpy(), (g["e"] / g["n"]).to_numpy())


def _minor(version: str) -> tuple:
    return tuple(version.split(".")[:2])


# --- grouped cross-validation ---------------------------------------------------

def _calibration(rejects, castings, rate, n_bins):
    """Predicted vs observed rejects in castings-weighted bins of the predicted rate."""
    order = np.argsort(rate, kind="stable")
    share = (np.cumsum(castings[order]) - castings[order] / 2.0) / castings.sum()
    bins = np.empty(len(rate), dtype=int)
    bins[order] = np.minimum((share * n_bins).astype(int), n_bins - 1)
    out = []
    for b in range(n_bins):
        m = bins == b
        if not m.any():
            continue
        n, r, e = castings[m].sum(), rejects[m].sum(), (castings[m] * rate[m]).sum()
        out.append({"bin": b + 1, "rows": int(m.sum()), "castings": int(n),
                    "observed_rejects": int(r), "predicted_rejects": float(e),
                    "observed_rate": float(r / n), "predicted_rate": float(e / n)})
    return out


def _summary(rejects, castings, rate, n_bins):
    obs, pred = float(rejects.sum()), float((castings * rate).sum())
    ratio = pred / obs if obs > 0 else (math.inf if pred > 0 else math.nan)
    return {"log_loss": weighted_log_loss(rejects, castings, rate),
            "observed_rejects": int(obs), "predicted_rejects": pred,
            "calibration_ratio": ratio, "calibration": _calibration(rejects, castings, rate, n_bins)}


def cross_validate(features, n_splits=5, *, model=None, n_bins=10):
    """Grouped cross-validation by pattern of the model against a rate-only baseline.

    Every pattern's rows stay together in one test fold (GroupKFold), so the
    score says how well the model predicts a pattern it has not seen. With
    fewer patterns than ``n_splits`` there is one fold per pattern.

    features: the feature table (with ``pattern``, ``castings`` and
    ``shrinkage_rejects``). model: an unfitted ShrinkageRejectModel to clone
    (default parameters if None). n_bins: calibration bins, castings-weighted
    quantiles of the predicted rate (10 = deciles).

    Returns a dict: n_splits, n_patterns, n_rows, n_castings; "model" and
    "baseline", each with log_loss (nats per casting), observed_rejects,
    predicted_rejects, calibration_ratio (Σ predicted / Σ observed) and
    calibration (one dict per bin); "folds" (per fold: test patterns and both
    log losses); "predictions" (a DataFrame of out-of-fold rates per row).
    The baseline is one overall rate, (rejects + 0.5) / (castings + 1) on the
    training folds.
    """
    model = ShrinkageRejectModel() if model is None else model
    check_scalar(n_splits, "n_splits", int, min_val=2)
    check_scalar(n_bins, "n_bins", int, min_val=1)
    _require_columns(features, ("pattern",) + FEATURE_COLUMNS + TARGET_COLUMNS)
    rejects, castings = _targets(features)
    groups = features["pattern"].astype(str).to_numpy()
    n_patterns = len(np.unique(groups))
    if n_patterns < 2:
        raise BadInput("pattern", f"{n_patterns} pattern(s)",
                       "cross-validation by pattern needs at least 2 patterns in the history")
    k = min(n_splits, n_patterns)

    model_rate = np.empty(len(features))
    base_rate = np.empty(len(features))
    fold_of = np.empty(len(features), dtype=int)
    folds = []
    for f, (train, test) in enumerate(GroupKFold(n_splits=k).split(features, groups=groups)):
        m = clone(model).fit(features.iloc[train])
        model_rate[test] = m.predict_rate(features.iloc[test])
        base_rate[test] = (rejects[train].sum() + 0.5) / (castings[train].sum() + 1.0)
        fold_of[test] = f
        folds.append({
            "fold": f + 1, "test_patterns": sorted(set(groups[test])),
            "castings": int(castings[test].sum()),
            "model_log_loss": weighted_log_loss(rejects[test], castings[test], model_rate[test]),
            "baseline_log_loss": weighted_log_loss(rejects[test], castings[test], base_rate[test]),
        })

    predictions = pd.DataFrame({
        "pattern": groups, "fold": fold_of + 1, "castings": castings.astype(int),
        "shrinkage_rejects": rejects.astype(int), "model_rate": model_rate,
        "baseline_rate": base_rate}, index=features.index)
    if "zone" in features.columns:
        predictions.insert(1, "zone", features["zone"].to_numpy())
    return {
        "n_splits": k, "n_patterns": n_patterns, "n_rows": int(len(features)),
        "n_castings": int(castings.sum()),
        "model": _summary(rejects, castings, model_rate, n_bins),
        "baseline": _summary(rejects, castings, base_rate, n_bins),
        "folds": folds, "predictions": predictions,
    }
