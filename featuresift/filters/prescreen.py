"""Pre-screening wide data before a wrapper search, and a screened model for honest CV.

:func:`prescreen` keeps the candidates worth a wrapper's time, by one of three rules:

``"top_per_cost"``
    the ``keep`` columns with the highest relevance per unit cost (free columns
    with positive relevance first);
``"top"``
    the ``keep`` most relevant columns, whatever they cost;
``"fdr"``
    the columns whose Benjamini-Hochberg adjusted p-value (q-value) is at most
    ``alpha`` (optionally capped at ``keep``, best q first). Needs a scorer with
    p-values.

It returns the kept column indices and a table that says why each column was kept
or dropped.

Where the screen is computed
----------------------------
The screen uses ``y``. Computed on all rows and followed by a cross-validated
wrapper search, it makes the wrapper's CV scores optimistic (the held-out folds
helped choose the candidates; Ambroise & McLachlan 2002). Two honest set-ups:

* build the :class:`~featuresift.SelectionProblem` given to :func:`screened_search`
  on the training rows of an outer split only, and assess the chosen subset on the
  held-out rows (repeat over outer folds for nested CV);
* wrap the model in :class:`ScreenedEstimator`: it runs the screen inside ``fit``,
  so under ``cross_val_score`` (or inside a wrapper's CV) each fold screens on its
  own training part only.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from sklearn.base import BaseEstimator, MetaEstimatorMixin, clone
from sklearn.utils.metaestimators import available_if
from sklearn.utils.validation import check_is_fitted

from featuresift._compat import renamed_keywords, warn_renamed
from featuresift.costs import CostModel
from featuresift.errors import InputError
from featuresift.filters._common import (
    check_positive_int,
    check_xy,
    per_cost,
    resolve_cost_model,
    unit_costs,
)
from featuresift.filters.relevance import categorical_columns, relevance_scores

__all__ = ["ScreenResult", "prescreen", "benjamini_hochberg", "ScreenedEstimator",
           "screened_search", "SCREEN_RULES"]

SCREEN_RULES = ("top_per_cost", "top", "fdr")


def benjamini_hochberg(pvalues: Any) -> np.ndarray:
    """Benjamini-Hochberg adjusted p-values (q-values); NaN stays NaN.

    ``q_(i) = min_{k >= i} min(1, m p_(k) / k)`` over the ``m`` non-NaN p-values
    sorted increasingly. Rejecting every hypothesis with ``q <= alpha`` controls
    the false discovery rate at ``alpha`` for independent (or positively dependent)
    tests (Benjamini & Hochberg 1995, JRSS B 57(1)).

    Examples
    --------
    >>> benjamini_hochberg([0.01, 0.04, 0.03, 0.5]).round(4).tolist()
    [0.04, 0.0533, 0.0533, 0.5]
    """
    p = np.asarray(pvalues, dtype=float)
    q = np.full(p.shape, np.nan)
    ok = ~np.isnan(p)
    pv = p[ok]
    m = pv.size
    if m == 0:
        return q
    if (pv < 0).any() or (pv > 1).any():
        raise InputError("p-values must lie in [0, 1]")
    order = np.argsort(pv, kind="stable")
    scaled = pv[order] * m / np.arange(1, m + 1)
    adj = np.minimum.accumulate(scaled[::-1])[::-1]
    out = np.empty(m)
    out[order] = np.minimum(adj, 1.0)
    q[ok] = out
    return q


@dataclass
class ScreenResult:
    """Outcome of :func:`prescreen`.

    Attributes
    ----------
    kept : ndarray of int
        Kept column indices, best first.
    table : pandas.DataFrame
        One row per column (column order): ``feature``, ``column``, ``relevance``,
        ``p_value``, ``q_value``, ``cost``, ``relevance_per_cost``, ``rank`` (1 = best
        under the rule), ``kept`` and ``reason``.
    rule : str
    scorer : str

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> X, y = load_iris(return_X_y=True)
    >>> res = prescreen(X, y, keep=2, rule="top")
    >>> res.kept.tolist(), res.kept_names, res.never_include(), res.rule, res.scorer
    ([2, 3], ['x2', 'x3'], ['x0', 'x1'], 'top', 'anova_f')
    >>> res.table[["feature", "rank", "kept"]].values.tolist()
    [['x0', 3, False], ['x1', 4, False], ['x2', 1, True], ['x3', 2, True]]
    """

    kept: np.ndarray
    table: Any
    rule: str
    scorer: str

    @property
    def kept_names(self) -> list[str]:
        """Names of the kept columns, best first."""
        names = self.table["feature"].tolist()
        return [names[j] for j in self.kept]

    def never_include(self) -> list[str]:
        """Names of the dropped columns (for ``run_search(never_include=...)``)."""
        return self.table.loc[~self.table["kept"], "feature"].tolist()

    def __repr__(self) -> str:
        from featuresift.display import screen_repr

        return screen_repr(self)

    def _repr_html_(self) -> str:
        from featuresift.display import screen_html

        return screen_html(self)


def _rank(values: np.ndarray) -> np.ndarray:
    """Order of columns by decreasing value; ties by column order."""
    return np.lexsort((np.arange(values.size), -values))


@renamed_keywords(cost_model="costs")
def prescreen(
    X: Any,
    y: Any,
    costs: Any = None,
    *,
    relevance: Any = "anova_f",
    relevance_options: dict | None = None,
    rule: str | None = None,
    keep: int | None = None,
    alpha: float = 0.05,
    cost_basis: str = "standalone",
    task: str | None = None,
) -> ScreenResult:
    """Keep the candidates worth a wrapper search; say why for each column.

    Parameters
    ----------
    X : array-like or DataFrame of shape (n_samples, n_features)
    y : array-like of shape (n_samples,)
    costs : CostModel or mapping, optional
        Default: every feature costs 1.
    relevance : str, dict or callable, default="anova_f"
        Relevance scorer (see :mod:`featuresift.filters.relevance`).
    relevance_options : dict, optional
    rule : {"top_per_cost", "top", "fdr"}, optional
        Default: "top_per_cost" when ``keep`` is given, else "fdr" (the columns whose
        q-value is at most ``alpha``), so ``prescreen(X, y)`` needs no other argument.
    keep : int, optional
        Columns kept by the "top" rules (required there); an optional cap for "fdr".
    alpha : float, default=0.05
        FDR level of the "fdr" rule.
    cost_basis : {"standalone", "shared"}, default="standalone"
        A panel member costs its whole panel ("standalone") or its share of it.
    task : {"classification", "regression"}, optional

    Returns
    -------
    ScreenResult

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> X, y = load_iris(return_X_y=True)
    >>> res = prescreen(X, y, keep=2, rule="top")
    >>> res.kept.tolist(), res.table["reason"][0]
    ([2, 3], 'dropped: rank 3 > keep 2 by relevance')
    """
    Xa, ya, names = check_xy(X, y)
    cm = resolve_cost_model(costs, names)
    names = list(cm.feature_names)
    if rule is None:
        rule = "fdr" if keep is None else "top_per_cost"
    if rule not in SCREEN_RULES:
        raise InputError(f"screen rule must be one of {SCREEN_RULES}, got {rule!r}")
    if keep is not None:
        keep = check_positive_int(keep, "keep")
    elif rule != "fdr":
        raise InputError(f"screen rule '{rule}' needs keep (the number of columns to keep)")
    if rule == "fdr" and not (isinstance(alpha, (int, float)) and 0 < alpha < 1):
        raise InputError(f"alpha must be in (0, 1), got {alpha!r}")
    rel = relevance_scores(Xa, ya, relevance, task=task, categorical=categorical_columns(X),
                           **(relevance_options or {}))
    costs = unit_costs(cm, cost_basis)
    ratio = per_cost(rel.scores, costs)
    p = Xa.shape[1]
    pvals = rel.pvalues if rel.pvalues is not None else np.full(p, np.nan)
    qvals = benjamini_hochberg(pvals)
    if rule == "fdr":
        if rel.pvalues is None or np.isnan(pvals).all():
            raise InputError(f"relevance scorer '{rel.scorer}' gives no p-values; the fdr "
                             "rule needs them (use anova_f, chi2, pearson, spearman)")
        key = np.where(np.isnan(qvals), np.inf, qvals)
        order = np.lexsort((np.arange(p), -rel.scores, key))
        passing = [j for j in order if qvals[j] <= alpha]
        kept = passing if keep is None else passing[:keep]
    else:
        order = _rank(ratio if rule == "top_per_cost" else rel.scores)
        kept = list(order[:keep])
    rank = np.empty(p, dtype=int)
    rank[order] = np.arange(1, p + 1)
    kept_set = set(int(j) for j in kept)
    by = "relevance per cost" if rule == "top_per_cost" else "relevance"
    reasons = []
    for j in range(p):
        if rule == "fdr":
            q = qvals[j]
            if np.isnan(q):
                why = "dropped: no p-value"
            elif q > alpha:
                why = f"dropped: BH q = {q:.3g} > alpha {alpha:g}"
            elif j in kept_set:
                why = f"kept: BH q = {q:.3g} <= alpha {alpha:g}"
            else:
                why = f"dropped: BH q = {q:.3g} passes but rank {rank[j]} > keep {keep}"
        elif j in kept_set:
            why = f"kept: rank {rank[j]} <= keep {keep} by {by}"
        else:
            why = f"dropped: rank {rank[j]} > keep {keep} by {by}"
        reasons.append(why)
    import pandas as pd

    table = pd.DataFrame({
        "feature": names, "column": np.arange(p), "relevance": rel.scores, "p_value": pvals,
        "q_value": qvals, "cost": costs, "relevance_per_cost": ratio, "rank": rank,
        "kept": [j in kept_set for j in range(p)], "reason": reasons,
    })
    return ScreenResult(np.asarray(kept, dtype=np.intp), table, rule, rel.scorer)


class ScreenedEstimator(MetaEstimatorMixin, BaseEstimator):
    """A model that pre-screens its input columns inside ``fit``.

    Because the screen runs in ``fit``, cross-validating this estimator (or using it
    as the model of a wrapper search) screens on each training part only: the
    held-out rows never influence which columns the model may use. At prediction
    time only the kept columns are read, so dropped columns may hold anything,
    missing values included.

    Parameters
    ----------
    estimator : scikit-learn estimator
        Fitted on the kept columns.
    relevance, relevance_options, rule, keep, alpha, cost_basis, task
        As in :func:`prescreen`.
    costs : CostModel or mapping, optional
        As in :func:`prescreen`.
    cost_model : deprecated
        Old name of ``costs``.

    Attributes
    ----------
    kept_columns_ : ndarray of int
        Columns kept by the screen of the last ``fit``, best first.
    screen_ : ScreenResult
    estimator_ : fitted estimator
    n_features_in_ : int
    classes_ : ndarray
        For classifiers.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.linear_model import LogisticRegression
    >>> from sklearn.model_selection import cross_val_score
    >>> X, y = load_iris(return_X_y=True)
    >>> model = ScreenedEstimator(LogisticRegression(max_iter=500), keep=2, rule="top")
    >>> bool(cross_val_score(model, X, y, cv=3).mean() > 0.9)
    True
    """

    def __init__(self, estimator: Any, *, relevance: Any = "anova_f",
                 relevance_options: dict | None = None, rule: str | None = None,
                 keep: int | None = None, alpha: float = 0.05,
                 costs: Any = None, cost_basis: str = "standalone",
                 task: str | None = None, cost_model: CostModel | None = None) -> None:
        self.estimator = estimator
        self.relevance = relevance
        self.relevance_options = relevance_options
        self.rule = rule
        self.keep = keep
        self.alpha = alpha
        self.costs = costs
        self.cost_model = cost_model
        self.cost_basis = cost_basis
        self.task = task

    @property
    def _estimator_type(self):
        return getattr(self.estimator, "_estimator_type", None)

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        inner = self.estimator.__sklearn_tags__()
        tags.estimator_type = inner.estimator_type
        tags.classifier_tags = inner.classifier_tags
        tags.regressor_tags = inner.regressor_tags
        return tags

    def fit(self, X: Any, y: Any, **fit_params: Any) -> ScreenedEstimator:
        """Screen on ``(X, y)``, then fit a clone of the estimator on the kept columns."""
        from sklearn.base import is_classifier
        from sklearn.utils.multiclass import check_classification_targets
        from sklearn.utils.validation import validate_data

        Xa, ya = validate_data(self, X, y, ensure_all_finite="allow-nan")
        task = self.task
        if task is None:
            task = "classification" if is_classifier(self.estimator) else "regression"
        if task == "classification":
            check_classification_targets(ya)
        costs = self.costs
        if self.cost_model is not None:
            warn_renamed("ScreenedEstimator", "cost_model", "costs")
            costs = self.cost_model
        self.screen_ = prescreen(
            Xa, ya, costs, relevance=self.relevance,
            relevance_options=self.relevance_options, rule=self.rule, keep=self.keep,
            alpha=self.alpha, cost_basis=self.cost_basis, task=task,
        )
        self.kept_columns_ = np.sort(self.screen_.kept)
        if self.kept_columns_.size == 0:
            raise InputError("the screen kept no column; loosen alpha or raise keep")
        self.estimator_ = clone(self.estimator).fit(Xa[:, self.kept_columns_], ya,
                                                    **fit_params)
        if hasattr(self.estimator_, "classes_"):
            self.classes_ = self.estimator_.classes_
        return self

    def _cut(self, X: Any) -> np.ndarray:
        from sklearn.utils.validation import validate_data

        check_is_fitted(self, "estimator_")
        Xa = validate_data(self, X, reset=False, ensure_all_finite="allow-nan")
        return Xa[:, self.kept_columns_]

    def predict(self, X: Any) -> np.ndarray:
        """Predict with the model fitted on the kept columns."""
        Xs = self._cut(X)
        return self.estimator_.predict(Xs)

    @available_if(lambda self: hasattr(self.estimator, "predict_proba"))
    def predict_proba(self, X: Any) -> np.ndarray:
        """Class probabilities (when the estimator has ``predict_proba``)."""
        Xs = self._cut(X)
        return self.estimator_.predict_proba(Xs)

    @available_if(lambda self: hasattr(self.estimator, "decision_function"))
    def decision_function(self, X: Any) -> np.ndarray:
        """Decision function (when the estimator has one)."""
        Xs = self._cut(X)
        return self.estimator_.decision_function(Xs)

    def score(self, X: Any, y: Any) -> float:
        """The estimator's default score on the kept columns."""
        Xs = self._cut(X)
        return self.estimator_.score(Xs, y)


def screened_search(
    problem: Any,
    strategy: Any = "greedy-swap",
    *,
    relevance: Any = "anova_f",
    relevance_options: dict | None = None,
    rule: str | None = None,
    keep: int | None = None,
    alpha: float = 0.05,
    cost_basis: str = "standalone",
    **search_options: Any,
) -> tuple[ScreenResult, Any]:
    """Pre-screen a :class:`~featuresift.SelectionProblem`, then run a wrapper search.

    The screen is computed on all rows of the problem's data and its dropped columns
    become ``never_include`` of :func:`featuresift.run_search`. The wrapper's CV
    scores are therefore optimistic: for an honest estimate build ``problem`` on the
    training part of an outer split and score the result on the rest (module notes).

    Parameters
    ----------
    problem : SelectionProblem
    strategy : str, dict or SearchStrategy, default="greedy-swap"
    relevance, relevance_options, rule, keep, alpha, cost_basis
        As in :func:`prescreen`.
    **search_options
        Passed to :func:`featuresift.run_search` (budget, n_features, ...).

    Returns
    -------
    (ScreenResult, SearchResult)

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.tree import DecisionTreeClassifier
    >>> from featuresift import SelectionProblem
    >>> X, y = load_iris(return_X_y=True)
    >>> prob = SelectionProblem(X, y, DecisionTreeClassifier(random_state=0), cv=3)
    >>> screen, res = screened_search(prob, "forward", keep=2, rule="top", n_features=1)
    >>> set(res.support) <= set(screen.kept.tolist())
    True
    """
    from featuresift.search import run_search

    X, y = problem.X, problem.y
    task = "classification" if problem.classification else "regression"
    screen = prescreen(X, y, problem.cost_model, relevance=relevance,
                       relevance_options=relevance_options, rule=rule, keep=keep, alpha=alpha,
                       cost_basis=cost_basis, task=task)
    never = list(search_options.pop("never_include", ()))
    result = run_search(problem, strategy, never_include=never + screen.never_include(),
                        **search_options)
    return screen, result
