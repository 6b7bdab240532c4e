"""Checks that a scorer suits the target, before any model is fitted.

:func:`check_scoring_target` is shared by the YAML path (``featuresift validate`` and
``run --dry-run`` report a mismatch with the ``scoring`` key and line) and the Python
side (:class:`~featuresift.problem.SelectionProblem`), so a scorer that cannot score
the target fails at once, not in the middle of a search.
"""

from __future__ import annotations

import math
import warnings
from typing import Any

import numpy as np
from sklearn.dummy import DummyClassifier, DummyRegressor
from sklearn.metrics import get_scorer, get_scorer_names
from sklearn.utils.multiclass import type_of_target

from featuresift.errors import InputError

__all__ = ["check_scoring_target", "scorer_task", "score_range"]

_AVERAGED = ("f1", "precision", "recall", "jaccard")
_BINARY_ONLY = ("positive_likelihood_ratio", "neg_negative_likelihood_ratio")


def scorer_task(name: str) -> str | None:
    """The kind of target a scikit-learn scorer name is made for.

    Returns ``"classification"``, ``"regression"`` or None (clustering scores and
    anything else that compares label assignments).

    Examples
    --------
    >>> scorer_task("roc_auc_ovr"), scorer_task("r2"), scorer_task("adjusted_rand_score")
    ('classification', 'regression', None)
    """
    if name in _BINARY_ONLY:
        return "classification"
    func = getattr(get_scorer(name), "_score_func", None)
    module = getattr(func, "__module__", "") or ""
    if module.endswith("_regression"):
        return "regression"
    if module.endswith(("_classification", "_ranking")):
        return "classification"
    return None


_UNIT_SCORES = ("accuracy", "balanced_accuracy", "top_k_accuracy", "roc_auc",
                "average_precision", "f1", "precision", "recall", "jaccard")


def score_range(scoring: Any, classification: bool) -> tuple[float, float]:
    """The values a scikit-learn score can take, for clipping intervals of its mean.

    ``None`` is the estimator's own score (accuracy for classifiers, R² otherwise).
    Scores not known here, and callables, get ``(-inf, inf)``.

    Examples
    --------
    >>> score_range("roc_auc_ovr", True), score_range(None, False)
    ((0.0, 1.0), (-inf, 1.0))
    >>> score_range("neg_mean_absolute_error", False), score_range("matthews_corrcoef", True)
    ((-inf, 0.0), (-1.0, 1.0))
    """
    if scoring is None:
        scoring = "accuracy" if classification else "r2"
    if not isinstance(scoring, str):
        return -math.inf, math.inf
    if scoring.startswith("neg_"):
        return -math.inf, 0.0
    if scoring in ("r2", "explained_variance") or scoring.startswith("d2_"):
        return -math.inf, 1.0
    if scoring == "matthews_corrcoef":
        return -1.0, 1.0
    if any(scoring == u or scoring.startswith(u + "_") for u in _UNIT_SCORES):
        return 0.0, 1.0
    return -math.inf, math.inf


def _classes(y: np.ndarray) -> str:
    values = np.unique(y)
    shown = ", ".join(repr(v.item() if hasattr(v, "item") else v) for v in values[:6])
    return shown + (f" and {values.size - 6} more" if values.size > 6 else "")


def _advice(name: str, y: np.ndarray, kind: str, detail: str) -> str:
    """A one-line explanation with the scorer to use instead."""
    n_classes = np.unique(y).size
    base = name.split("_")[0]
    if name == "roc_auc" and kind == "multiclass":
        return (f"'roc_auc' scores two classes but the target has {n_classes}; use "
                "'roc_auc_ovr' (one class against the rest; or roc_auc_ovr_weighted, "
                "roc_auc_ovo)")
    if name in _AVERAGED and kind == "multiclass":
        return (f"'{name}' scores two classes but the target has {n_classes}; use "
                f"'{name}_macro' (or {name}_weighted, {name}_micro)")
    if name.endswith("_samples"):
        return (f"'{name}' is for multilabel targets; use '{base}_macro' (or "
                f"{base}_weighted)")
    if name in _BINARY_ONLY:
        return f"'{name}' scores two classes but the target has {n_classes}"
    if "pos_label" in detail:
        alt = f"'{name}_macro'" if name in _AVERAGED else "'roc_auc'"
        return (f"'{name}' treats class 1 as the positive class, but the target's classes "
                f"are {_classes(y)}; recode the target as 0/1 (1 = the class to find), "
                f"or use a scorer that needs no positive class such as {alt}")
    return f"'{name}' cannot score this target: {detail}"


def check_scoring_target(scoring: Any, y: Any, *, classification: bool) -> None:
    """Raise :class:`InputError` when a scorer name cannot score the target ``y``.

    Checks, without fitting the user's model: a regression score for a classifier (or
    the reverse), a two-class score on a multi-class target (``roc_auc`` suggests
    ``roc_auc_ovr``; ``f1`` suggests ``f1_macro``), a positive class the target does
    not have, and any other target scikit-learn's scorer rejects. The last check
    scores a prior-only dummy model (``DummyClassifier(strategy="prior")`` or
    ``DummyRegressor()``) fitted on ``y`` alone, so it follows the installed
    scikit-learn exactly. Callables and None (the estimator's own ``score``) pass.

    Parameters
    ----------
    scoring : str, callable or None
        A name from :func:`sklearn.metrics.get_scorer_names`, or anything else
        (not checked).
    y : array-like of shape (n_samples,)
        The target.
    classification : bool
        Whether the model is a classifier.

    Raises
    ------
    InputError
        With ``key="scoring"`` and a message that names the scorer to use instead.

    Examples
    --------
    >>> check_scoring_target("roc_auc", [0, 1, 2, 0, 1, 2], classification=True)
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: scoring: 'roc_auc' scores two classes but the target \
has 3; use 'roc_auc_ovr' (one class against the rest; or roc_auc_ovr_weighted, roc_auc_ovo)
    >>> check_scoring_target("roc_auc_ovr", [0, 1, 2, 0, 1, 2], classification=True)
    """
    if not isinstance(scoring, str) or scoring not in get_scorer_names():
        return
    y = np.asarray(y)
    task = scorer_task(scoring)
    if task == "regression" and classification:
        raise InputError(
            f"'{scoring}' is a regression score but the model is a classifier; use a "
            "classification score such as accuracy, balanced_accuracy or roc_auc",
            key="scoring",
        )
    if task == "classification" and not classification:
        raise InputError(
            f"'{scoring}' is a classification score but the model is a regressor; use a "
            "regression score such as r2 or neg_mean_absolute_error", key="scoring",
        )
    try:
        kind = type_of_target(y)
    except ValueError:
        return  # the target checks report it
    X = np.zeros((y.shape[0], 1))
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            if classification:
                dummy = DummyClassifier(strategy="prior").fit(X, y)
            else:
                dummy = DummyRegressor().fit(X, y)
            get_scorer(scoring)(dummy, X, y)
    except (ValueError, TypeError) as exc:
        text = str(exc).strip()
        detail = text.splitlines()[0] if text else type(exc).__name__
        raise InputError(_advice(scoring, y, kind, detail), key="scoring") from None
