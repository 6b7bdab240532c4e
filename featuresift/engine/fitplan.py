"""How the evaluator fits and scores one subset on one fold, and what it shares.

A :class:`FitPlan` is worked out once per evaluator from the problem's estimator
and scorer. It saves work that is the same for every subset of a fold, without
changing any score:

**Shared column-wise preprocessing.** When the estimator is a
:class:`~sklearn.pipeline.Pipeline` whose leading steps treat every column on its
own (see :data:`COLUMNWISE_STEPS`: scalers, a per-column imputer, a per-column
power transform), fitting those steps on a subset's columns gives exactly the
columns that fitting them on more columns gives. The evaluator then fits the
leading steps once per fold for all the columns a group of fits uses (the
*head*), and fits only the remaining steps (the *tail*) for each subset. On a
``StandardScaler + LogisticRegression`` pipeline this removes the scaler's fit
and the pipeline's overhead from every fit.

To make "exactly" hold to the last bit, the head always sees a C-ordered array of
at least two columns: NumPy sums a C-ordered array down its rows one row at a
time, so each column's mean and variance do not depend on which other columns are
present (a single-column array would be summed pairwise instead). Scores are
therefore the same whatever columns a group happens to hold — that is, whatever
``n_jobs`` or ``chunk_size`` — and agree with fitting the whole pipeline on the
subset to rounding (about 1e-15; the test suite checks 1e-12 and identical
choices). Sharing is used only with scikit-learn's own scorers, which see the tail
exactly as they would see the pipeline; a custom scoring callable receives the
whole pipeline, so the plan does not share then.

**Direct scores.** For the default score of a classifier or regressor and for
the scorer names ``accuracy``, ``r2``, ``neg_mean_squared_error`` and
``neg_mean_absolute_error``, the score is computed from ``predict`` with NumPy
instead of through the scorer object, whose input checks cost several times the
arithmetic on small test folds. The values are those of :mod:`sklearn.metrics`
(the test suite compares them for equality); a prediction of unexpected shape
falls back to the scorer.

Examples
--------
>>> from sklearn.datasets import load_iris
>>> from sklearn.linear_model import LogisticRegression
>>> from sklearn.pipeline import make_pipeline
>>> from sklearn.preprocessing import StandardScaler
>>> from featuresift.problem import SelectionProblem
>>> X, y = load_iris(return_X_y=True)
>>> p = SelectionProblem(X, y, make_pipeline(StandardScaler(), LogisticRegression()), cv=3)
>>> plan = make_fit_plan(p)
>>> plan.n_shared_steps, type(plan.tail).__name__, plan.direct_score
(1, 'LogisticRegression', 'accuracy')
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from sklearn.base import ClassifierMixin, RegressorMixin, clone
from sklearn.impute import SimpleImputer
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import (
    MaxAbsScaler,
    MinMaxScaler,
    PowerTransformer,
    RobustScaler,
    StandardScaler,
)

__all__ = ["COLUMNWISE_STEPS", "DIRECT_SCORES", "FitPlan", "make_fit_plan"]

COLUMNWISE_STEPS: tuple[type, ...] = (
    StandardScaler, MinMaxScaler, MaxAbsScaler, RobustScaler, PowerTransformer, SimpleImputer,
)
"""Transformers whose fit and output treat each column on its own (exact classes, not
subclasses). ``SimpleImputer`` counts only without ``add_indicator`` and when no
column would be dropped as empty (see :func:`make_fit_plan`)."""

DIRECT_SCORES = ("accuracy", "r2", "neg_mean_squared_error", "neg_mean_absolute_error")
"""Scores computed directly from ``predict``."""


def _direct_accuracy(y_true: np.ndarray, y_pred: np.ndarray) -> float:
    return float(np.mean(y_true == y_pred))


def _direct_r2(y_true: np.ndarray, y_pred: np.ndarray) -> float:
    numerator = ((y_true - y_pred) ** 2).sum(dtype=np.float64)
    denominator = ((y_true - np.average(y_true)) ** 2).sum(dtype=np.float64)
    if denominator == 0:  # scikit-learn's force_finite convention
        return 1.0 if numerator == 0 else 0.0
    return float(1.0 - numerator / denominator)


def _direct_neg_mse(y_true: np.ndarray, y_pred: np.ndarray) -> float:
    return -float(np.average((y_true - y_pred) ** 2))


def _direct_neg_mae(y_true: np.ndarray, y_pred: np.ndarray) -> float:
    return -float(np.average(np.abs(y_pred - y_true)))


_DIRECT = {
    "accuracy": _direct_accuracy,
    "r2": _direct_r2,
    "neg_mean_squared_error": _direct_neg_mse,
    "neg_mean_absolute_error": _direct_neg_mae,
}


@dataclass(frozen=True)
class FitPlan:
    """What one fit does: the estimator parts and how the fold is scored.

    Attributes
    ----------
    head : Pipeline or None
        Leading column-wise steps fitted once per fold and group of fits; None when
        nothing is shared.
    tail : estimator
        What is cloned and fitted for each subset (the whole estimator when
        ``head`` is None).
    scorer : callable
        The problem's scorer, ``scorer(estimator, X, y)``.
    direct_score : str or None
        Name of the score computed directly from ``predict`` (one of
        :data:`DIRECT_SCORES`), or None to call ``scorer``.
    classification : bool
        Whether the estimator is a classifier.
    """

    head: Pipeline | None
    tail: Any
    scorer: Any
    direct_score: str | None
    classification: bool

    @property
    def n_shared_steps(self) -> int:
        """Number of pipeline steps fitted once per fold."""
        return 0 if self.head is None else len(self.head.steps)

    def score(self, estimator: Any, X: np.ndarray, y: np.ndarray) -> float:
        """Score a fitted tail (or whole estimator) on test data.

        Examples
        --------
        >>> from sklearn.datasets import load_iris
        >>> from sklearn.naive_bayes import GaussianNB
        >>> from featuresift.problem import SelectionProblem
        >>> X, y = load_iris(return_X_y=True)
        >>> plan = make_fit_plan(SelectionProblem(X, y, GaussianNB(), cv=3))
        >>> round(plan.score(GaussianNB().fit(X, y), X, y), 2)
        0.96
        """
        if self.direct_score is not None and len(y) > 1:
            y_pred = estimator.predict(X)
            if getattr(y_pred, "shape", None) == y.shape:
                return _DIRECT[self.direct_score](y, y_pred)
        return float(self.scorer(estimator, X, y))

    def transform_fold(
        self, X: np.ndarray, train: np.ndarray, test: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray]:
        """Fit the head on ``X[train]`` and transform train and test rows of every column.

        ``X`` is made C-ordered and, when it has a single column, is given a copy of
        that column so the head always sums as it does for many columns.

        Examples
        --------
        >>> from sklearn.linear_model import LinearRegression
        >>> from sklearn.pipeline import make_pipeline
        >>> from sklearn.preprocessing import StandardScaler
        >>> from featuresift.problem import SelectionProblem
        >>> X = np.arange(12.0).reshape(6, 2); y = X[:, 0]
        >>> plan = make_fit_plan(SelectionProblem(
        ...     X, y, make_pipeline(StandardScaler(), LinearRegression()), cv=2))
        >>> tr, te = plan.transform_fold(X, np.arange(4), np.arange(4, 6))
        >>> tr[:, 0].round(3).tolist()
        [-1.342, -0.447, 0.447, 1.342]
        """
        assert self.head is not None
        single = X.shape[1] == 1
        Xw = np.concatenate([X, X], axis=1) if single else X
        Xtr = np.ascontiguousarray(Xw[train])
        head = clone(self.head).fit(Xtr)
        out_tr = head.transform(Xtr)
        out_te = head.transform(np.ascontiguousarray(Xw[test]))
        if out_tr.shape[1] != Xw.shape[1]:
            raise ValueError("the shared preprocessing changed the number of columns")
        if single:
            out_tr, out_te = out_tr[:, :1], out_te[:, :1]
        return out_tr, out_te


def _columnwise(step: Any, X: np.ndarray, splits: list) -> bool:
    if step is None or (isinstance(step, str) and step == "passthrough"):
        return True
    if type(step) not in COLUMNWISE_STEPS:
        return False
    if type(step) is SimpleImputer:
        if step.add_indicator:
            return False
        if step.keep_empty_features or step.strategy == "constant":
            return True
        # A column missing in every training row would be dropped, shifting the others.
        missing = np.isnan(X)
        return not any(missing[train].all(axis=0).any() for train, _ in splits)
    return True


def _direct_score_name(estimator: Any, scoring: Any, classification: bool) -> str | None:
    if isinstance(scoring, str):
        return scoring if scoring in DIRECT_SCORES else None
    if scoring is not None:
        return None
    final = estimator.steps[-1][1] if isinstance(estimator, Pipeline) else estimator
    score = getattr(type(final), "score", None)
    if classification and score is ClassifierMixin.score:
        return "accuracy"
    if not classification and score is RegressorMixin.score:
        return "r2"
    return None


def _sklearn_scorer(scorer: Any) -> bool:
    # Scorers that, like scikit-learn's, only call the fitted estimator's predictions
    # declare it with a class attribute ``tail_safe = True``.
    return (type(scorer).__module__ == "sklearn.metrics._scorer"
            or getattr(type(scorer), "tail_safe", False) is True)


def make_fit_plan(problem: Any, share_preprocessing: bool = True,
                  direct_scores: bool = True) -> FitPlan:
    """Work out what the evaluator can share and compute directly for a problem.

    Parameters
    ----------
    problem : SelectionProblem
        Estimator, scorer, data and splits.
    share_preprocessing : bool, default=True
        Fit leading column-wise pipeline steps once per fold (see the module notes).
    direct_scores : bool, default=True
        Compute known scores directly from ``predict``.

    Returns
    -------
    FitPlan

    Examples
    --------
    A scaler followed by PCA: only the scaler is column-wise.

    >>> from sklearn.datasets import load_iris
    >>> from sklearn.decomposition import PCA
    >>> from sklearn.linear_model import LogisticRegression
    >>> from sklearn.pipeline import make_pipeline
    >>> from sklearn.preprocessing import StandardScaler
    >>> from featuresift.problem import SelectionProblem
    >>> X, y = load_iris(return_X_y=True)
    >>> est = make_pipeline(StandardScaler(), PCA(1), LogisticRegression())
    >>> plan = make_fit_plan(SelectionProblem(X, y, est, cv=3))
    >>> plan.n_shared_steps, [name for name, _ in plan.tail.steps]
    (1, ['pca', 'logisticregression'])
    """
    estimator = problem.estimator
    classification = bool(problem.classification)
    direct = (_direct_score_name(estimator, problem.scoring, classification)
              if direct_scores else None)
    head, tail = None, estimator
    if (share_preprocessing and isinstance(estimator, Pipeline)
            and getattr(estimator, "memory", None) is None
            and getattr(estimator, "transform_input", None) is None
            and _sklearn_scorer(problem.scorer)):
        n = 0
        for _, step in estimator.steps[:-1]:
            if not _columnwise(step, problem.X, problem.splits):
                break
            n += 1
        real = [s for _, s in estimator.steps[:n]
                if s is not None and not (isinstance(s, str) and s == "passthrough")]
        if real:  # a head of "passthrough" steps only would share nothing
            head = Pipeline(estimator.steps[:n])
            rest = estimator.steps[n:]
            tail = rest[0][1] if len(rest) == 1 else Pipeline(rest)
    return FitPlan(head=head, tail=tail, scorer=problem.scorer, direct_score=direct,
                   classification=classification)
