"""Cost-weighted L1 path: an order in which measurements earn their price.

Each column is standardised (mean 0, standard deviation 1) and then divided by its
cost, ``z_j / c_j``. A coefficient ``b_j`` on the scaled column equals ``c_j * beta_j``
on the standardised one, so the L1 penalty ``lambda * sum |b_j|`` charges
``lambda * c_j * |beta_j|``: an expensive measurement needs proportionally more
evidence before the path lets it in. Walking the penalty from "everything zero" down
to ``eps`` times that value gives the order in which columns enter.

* Regression: the lasso path (:func:`sklearn.linear_model.lasso_path`) of the
  centred target.
* Classification: L1-penalised logistic regression, one-vs-rest for more than two
  classes (``liblinear``), on a grid ``C = C_min * (1/eps) ** (k / (n_steps - 1))``
  starting at :func:`sklearn.svm.l1_min_c`; a column enters when any class's
  coefficient leaves zero.

Costs: a free column (cost 0) is given a cost floor of 1e-3 times the smallest
positive cost, so it enters first but the arithmetic stays finite. With equal costs
the path is the ordinary L1 path (used by the ``l1_order`` relevance scorer).
Missing values are not allowed here (impute first).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from featuresift._compat import renamed_keywords
from featuresift.costs import CostModel
from featuresift.errors import InputError
from featuresift.filters._common import (
    check_positive_int,
    check_xy,
    encode_labels,
    infer_task,
    numeric_target,
    resolve_cost_model,
    unit_costs,
)
from featuresift.filters.redundancy import standardize_columns
from featuresift.filters.relevance import register_relevance

__all__ = ["L1Path", "cost_weighted_l1_path", "l1_order"]


@dataclass
class L1Path:
    """Entry order of the columns along a (cost-weighted) L1 path.

    Attributes
    ----------
    order : list of int
        Columns that entered, earliest first (ties: larger coefficient, then column).
    entry_step : ndarray of int
        Step at which each column entered (-1: never).
    entry_strength : ndarray of float
        Penalty at entry divided by the penalty at which the first column entered:
        1 for the first column(s) to enter, towards 0 for late ones, 0 for never.
    penalties : ndarray
        Penalty of each step, decreasing (lasso ``alpha``; ``1/C`` for logistic).
    coefs : ndarray of shape (n_steps, n_features)
        Largest absolute coefficient of each column (over classes), on the
        standardised cost-scaled columns.
    feature_names : list of str
    costs : ndarray
        Cost used for each column.
    task : str

    Examples
    --------
    The cheap column ``b`` enters first; the irrelevant ``c`` enters last and weakly:

    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(200, 3))
    >>> y = X[:, 0] + X[:, 1] + 0.1 * rng.normal(size=200)
    >>> cm = CostModel(["a", "b", "c"], {"a": 3.0, "b": 1.0, "c": 1.0})
    >>> path = cost_weighted_l1_path(X, y, cm)
    >>> path.order, path.entry_step.tolist(), path.entry_strength.round(3).tolist()
    ([1, 0, 2], [8, 1, 40], [0.373, 1.0, 0.004])
    >>> path.task, path.coefs.shape
    ('regression', (50, 3))
    """

    order: list[int]
    entry_step: np.ndarray
    entry_strength: np.ndarray
    penalties: np.ndarray
    coefs: np.ndarray
    feature_names: list[str]
    costs: np.ndarray
    task: str

    @property
    def order_names(self) -> list[str]:
        """Names of the entered columns, earliest first."""
        return [self.feature_names[j] for j in self.order]

    def starting_subset(self, cost_model: CostModel, budget: float | None = None,
                        max_features: int | None = None) -> list[int]:
        """Columns taken in path order while they fit the budget (panel-aware).

        A column whose addition would exceed the budget is skipped and later ones are
        still tried. Returns column indices in path order.

        Examples
        --------
        See :func:`cost_weighted_l1_path`.
        """
        chosen: list[int] = []
        for j in self.order:
            if max_features is not None and len(chosen) >= max_features:
                break
            if cost_model.is_feasible(chosen + [j], budget):
                chosen.append(j)
        return chosen


def _entry(coefs: np.ndarray, penalties: np.ndarray) -> tuple[list[int], np.ndarray, np.ndarray]:
    nz = coefs > 1e-12
    p = coefs.shape[1]
    entered = nz.any(axis=0)
    step = np.where(entered, nz.argmax(axis=0), -1)
    at_entry = np.where(entered, coefs[np.maximum(step, 0), np.arange(p)], 0.0)
    cols = np.where(entered)[0]
    order = sorted(cols.tolist(), key=lambda j: (step[j], -at_entry[j], j))
    first = penalties[step[entered].min()] if entered.any() else 1.0
    strength = np.where(entered, penalties[np.maximum(step, 0)] / first, 0.0)
    return order, step, strength


@renamed_keywords(cost_model="costs")
def cost_weighted_l1_path(
    X: Any,
    y: Any,
    costs: Any = None,
    *,
    task: str | None = None,
    n_steps: int = 50,
    eps: float = 1e-3,
    cost_basis: str = "standalone",
) -> L1Path:
    """Order columns by when they enter a cost-weighted L1 path.

    Parameters
    ----------
    X : array-like or DataFrame of shape (n_samples, n_features)
        No missing values.
    y : array-like of shape (n_samples,)
    costs : CostModel or mapping, optional
        Default: equal costs (the ordinary L1 path).
    task : {"classification", "regression"}, optional
    n_steps : int, default=50
        Penalty values on the path (log-spaced).
    eps : float, default=1e-3
        Smallest penalty as a fraction of the largest.
    cost_basis : {"standalone", "shared"}, default="standalone"
        A panel member costs its panel's price, or its share of it.

    Returns
    -------
    L1Path

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> X = rng.normal(size=(200, 3))
    >>> y = X[:, 0] + X[:, 1] + 0.1 * rng.normal(size=200)
    >>> cm = CostModel(["a", "b", "c"], {"a": 3.0, "b": 1.0, "c": 1.0})
    >>> path = cost_weighted_l1_path(X, y, cm)
    >>> path.order_names[:2]
    ['b', 'a']
    >>> path.starting_subset(cm, budget=4.0)
    [1, 0]
    """
    Xa, ya, names = check_xy(X, y, allow_nan=False)
    cm = resolve_cost_model(costs, names)
    task = infer_task(ya, task)
    n_steps = check_positive_int(n_steps, "n_steps", 2)
    if not (isinstance(eps, (int, float)) and 0 < eps < 1):
        raise InputError(f"eps must be in (0, 1), got {eps!r}")
    costs = unit_costs(cm, cost_basis)
    positive = costs[costs > 0]
    floor = 1e-3 * positive.min() if positive.size else 1.0
    scale = np.maximum(costs, floor)
    Z = standardize_columns(Xa) / scale
    n, p = Z.shape
    if task == "regression":
        from sklearn.linear_model import lasso_path

        t = numeric_target(ya)
        t = t - t.mean()
        alpha_max = float(np.abs(Z.T @ t).max()) / n
        if alpha_max <= 0:
            raise InputError("the target is constant or unrelated to every column")
        penalties = alpha_max * np.logspace(0, np.log10(eps), n_steps)
        _, coefs, _ = lasso_path(Z, t, alphas=penalties)
        coefs = np.abs(coefs).T  # (n_steps, p)
    else:
        from sklearn.linear_model import LogisticRegression
        from sklearn.svm import l1_min_c

        codes, k = encode_labels(ya)
        problems = [codes == 1] if k == 2 else [codes == c for c in range(k)]
        coefs = np.zeros((n_steps, p))
        c_min = min(l1_min_c(Z, t, loss="log") for t in problems)
        Cs = c_min * np.logspace(0, -np.log10(eps), n_steps)
        for s, C in enumerate(Cs):
            for t in problems:
                model = LogisticRegression(C=C, l1_ratio=1.0, solver="liblinear",
                                           max_iter=1000)
                model.fit(Z, t)
                coefs[s] = np.maximum(coefs[s], np.abs(model.coef_[0]))
        penalties = 1.0 / Cs
    order, step, strength = _entry(coefs, penalties)
    return L1Path(order, step, strength, penalties, coefs, list(cm.feature_names), costs, task)


def l1_order(X: Any, y: Any, task: str | None = None, n_steps: int = 50,
             eps: float = 1e-3) -> tuple[np.ndarray, None]:
    """Relevance from the ordinary L1 path: the entry strength of each column.

    Returns the penalty at which each column enters divided by the penalty at which
    the first column entered (1 = first to enter, 0 = never), and no p-value.

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> X = rng.normal(size=(100, 3))
    >>> s, _ = l1_order(X, 3 * X[:, 2] + X[:, 0])
    >>> int(np.argmax(s))
    2
    """
    path = cost_weighted_l1_path(X, y, None, task=task, n_steps=n_steps, eps=eps)
    return path.entry_strength, None


register_relevance("l1_order", l1_order)
