"""A scikit-learn regressor over mettle: ``fit``, ``predict(X, return_std=True)``,
``score``, ``get_params``/``set_params``, clonable, so that ``cross_val_score``,
pipelines and grid searches work.

    from mettle.sklearn import MettleRegressor
    from sklearn.model_selection import cross_val_score
    cross_val_score(MettleRegressor(hidden="1..4", restarts=2), X, y, cv=5)

X is validated by scikit-learn (numeric, finite, 2-D) and named by its
columns when it is a DataFrame (``x0, x1, ...`` otherwise); y is one target.
The parameters are those of :meth:`mettle.Model.train` (the CLI's ``train``),
with the same defaults; progress is off by default.

Limits (see python/tests/test_sklearn.py for the checks this affects):
training needs at least max(20, 2 x inputs + 10) rows and five held-out rows,
and an input with a single value is set aside, so fits on fewer rows fail with
mettle.DataError (a ValueError).
"""

from __future__ import annotations

import numpy as np
from sklearn.base import BaseEstimator, RegressorMixin
from sklearn.utils.validation import check_is_fitted, validate_data

from . import Model


class MettleRegressor(RegressorMixin, BaseEstimator):
    """A committee of Bayesian-regularised networks (one target) as a
    scikit-learn regressor. ``predict(X, return_std=True)`` also returns the
    predictive sd (noise + model); :meth:`predict_frame` gives the whole
    estimate with intervals and the domain verdict."""

    def __init__(
        self,
        hidden="1..10",
        restarts=4,
        seed=0,
        holdout=0.2,
        max_members=16,
        noise="auto",
        kriging="auto",
        gross_errors=True,
        heavy_tails=True,
        reweight_mean=False,
        widen=True,
        early_stop=True,
        partitions=1,
        partition_variance="within",
        ard=True,
        log_inputs=True,
        progress=False,
    ):
        self.hidden = hidden
        self.restarts = restarts
        self.seed = seed
        self.holdout = holdout
        self.max_members = max_members
        self.noise = noise
        self.kriging = kriging
        self.gross_errors = gross_errors
        self.heavy_tails = heavy_tails
        self.reweight_mean = reweight_mean
        self.widen = widen
        self.early_stop = early_stop
        self.partitions = partitions
        self.partition_variance = partition_variance
        self.ard = ard
        self.log_inputs = log_inputs
        self.progress = progress

    def _names(self, n: int) -> list[str]:
        if hasattr(self, "feature_names_in_"):
            return [str(c) for c in self.feature_names_in_]
        return [f"x{j}" for j in range(n)]

    def fit(self, X, y):
        """Train on X (rows x inputs) and y (one target)."""
        X, y = validate_data(self, X, y, y_numeric=True, ensure_min_samples=2, dtype=np.float64)
        names = self._names(X.shape[1])
        target = "y"
        while target in names:
            target = "_" + target
        table = np.column_stack([X, y.astype(np.float64)])
        self.model_ = Model.train(
            table,
            targets=[target],
            inputs=names,
            columns=names + [target],
            source="X",
            hidden=self.hidden,
            restarts=self.restarts,
            seed=self.seed,
            holdout=self.holdout,
            max_members=self.max_members,
            noise=self.noise,
            kriging=self.kriging,
            gross_errors=self.gross_errors,
            heavy_tails=self.heavy_tails,
            reweight_mean=self.reweight_mean,
            widen=self.widen,
            early_stop=self.early_stop,
            partitions=self.partitions,
            partition_variance=self.partition_variance,
            ard=self.ard,
            log_inputs=self.log_inputs,
            progress=self.progress,
        )
        self.target_name_ = target
        self.input_names_ = names
        return self

    def predict_frame(self, X):
        """The whole estimate (mean, median, sd, intervals, noise and model
        parts, domain verdict and notes) as a pandas DataFrame."""
        check_is_fitted(self, "model_")
        X = validate_data(self, X, reset=False, dtype=np.float64)
        return self.model_.predict(X, columns=self.input_names_, source="X", frame="pandas")

    def predict(self, X, return_std: bool = False):
        """Predictive means; with ``return_std`` also the predictive sds."""
        check_is_fitted(self, "model_")
        X = validate_data(self, X, reset=False, dtype=np.float64)
        out = self.model_.predict(X, columns=self.input_names_, source="X", frame="dict")
        mean = np.array(out[f"{self.target_name_}_mean"], dtype=np.float64)
        if return_std:
            return mean, np.array(out[f"{self.target_name_}_sd"], dtype=np.float64)
        return mean
