"""Honest performance estimates for a whole selection procedure (nested cross-validation).

The CV score a search reports for its chosen subset is the very number the search
maximised, so it is optimistically biased (Kohavi & John 1997; Ambroise & McLachlan
2002). :func:`nested_evaluation` re-runs the *whole* search inside each outer
training fold — inner CV, budget and all — then fits the model on the chosen
measurements and scores it on the outer test fold, which the search never saw.

It also reports how stable the choice is across outer folds (selection frequency
per measurement and the Nogueira stability index).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from sklearn.base import clone, is_classifier
from sklearn.metrics import check_scoring
from sklearn.model_selection import check_cv

from featuresift.costs import CostModel
from featuresift.errors import InputError
from featuresift.problem import SelectionProblem
from featuresift.result import SearchResult
from featuresift.search import run_search
from featuresift.stability import nogueira_stability

__all__ = ["NestedEvaluation", "nested_evaluation"]


@dataclass
class NestedEvaluation:
    """Outer-fold results of a nested evaluation.

    Attributes
    ----------
    outer_scores : list of float
        Score of the refitted model on each outer test fold.
    inner_scores : list of float
        The inner CV score the search reported for its choice in each outer fold
        (optimistic; shown for comparison).
    selected : list of list of str
        The measurements chosen in each outer fold.
    costs : list of float
        Their acquisition costs.
    selection_frequency : dict of str to float
        Share of outer folds that chose each measurement.
    stability : float or None
        Nogueira et al. (2018) stability of the choices (None when undefined,
        e.g. every fold chose every feature).
    cost_unit, scoring : str
    results : list of SearchResult
        Full search result of each outer fold.

    Examples
    --------
    Each outer fold searches under a budget of 2 EUR on its own training part:

    >>> from sklearn.datasets import load_wine
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_wine(return_X_y=True)
    >>> prices = {"alcohol": 1, "malic": 1, "ash": 2}
    >>> costs = CostModel(["alcohol", "malic", "ash"], prices, unit="EUR")
    >>> ne = nested_evaluation(X[:, :3], y, GaussianNB(), cost_model=costs,
    ...                        outer_cv=3, inner_cv=3, budget=2)
    >>> ne.selected, ne.costs, ne.cost_unit
    ([['alcohol', 'malic'], ['alcohol', 'malic'], ['alcohol', 'malic']], [2.0, 2.0, 2.0], 'EUR')
    >>> [round(s, 3) for s in ne.outer_scores], round(ne.optimism, 3)
    ([0.75, 0.78, 0.712], 0.019)
    """

    outer_scores: list[float]
    inner_scores: list[float]
    selected: list[list[str]]
    costs: list[float]
    selection_frequency: dict[str, float]
    stability: float | None
    cost_unit: str
    scoring: str
    results: list[SearchResult] = field(repr=False, default_factory=list)

    @property
    def outer_mean(self) -> float:
        """Mean outer-fold score: the estimate of the procedure's performance."""
        return float(np.mean(self.outer_scores))

    @property
    def outer_std(self) -> float:
        """Sample standard deviation of the outer-fold scores."""
        return float(np.std(self.outer_scores, ddof=1)) if len(self.outer_scores) > 1 else 0.0

    @property
    def optimism(self) -> float:
        """Mean inner score minus mean outer score (the selection bias seen here)."""
        return float(np.mean(self.inner_scores) - self.outer_mean)

    def summary(self) -> str:
        """Readable report."""
        lines = [
            f"Nested CV ({len(self.outer_scores)} outer folds), {self.scoring}:",
            f"  outer (honest) {self.outer_mean:.4f} ± {self.outer_std:.4f}",
            f"  inner (as reported by the search) {np.mean(self.inner_scores):.4f}"
            f"  -> optimism {self.optimism:+.4f}",
            f"  mean cost {np.mean(self.costs):.2f} {self.cost_unit}",
            "  stability (Nogueira): "
            + ("undefined" if self.stability is None else f"{self.stability:.3f}"),
            "  selection frequency:",
        ]
        for name, freq in sorted(self.selection_frequency.items(), key=lambda kv: -kv[1]):
            if freq > 0:
                lines.append(f"    {name:<28} {freq:.2f}")
        return "\n".join(lines)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready description."""
        return {
            "outer_scores": self.outer_scores,
            "outer_mean": self.outer_mean,
            "outer_std": self.outer_std,
            "inner_scores": self.inner_scores,
            "selected": self.selected,
            "costs": self.costs,
            "cost_unit": self.cost_unit,
            "selection_frequency": self.selection_frequency,
            "stability": self.stability,
            "scoring": self.scoring,
        }


def nested_evaluation(
    X: Any,
    y: Any,
    estimator: Any,
    *,
    cost_model: CostModel | None = None,
    outer_cv: Any = 5,
    inner_cv: Any = 5,
    scoring: Any = None,
    groups: Any = None,
    feature_names: list[str] | None = None,
    strategy: str | dict = "forward",
    n_jobs: int | None = None,
    **search_options: Any,
) -> NestedEvaluation:
    """Estimate the performance of "search, then fit" without selection bias.

    Parameters
    ----------
    X, y, estimator, cost_model, scoring, groups, feature_names
        As for :class:`~featuresift.SelectionProblem`.
    outer_cv : int or splitter, default=5
        Outer splits; the search never sees the outer test fold.
    inner_cv : int or splitter, default=5
        CV used by the search inside each outer training fold.
    strategy : str or dict, default="forward"
    n_jobs : int, optional
    **search_options
        Passed to :func:`featuresift.run_search` (budget, objective, limits, ...).

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_iris(return_X_y=True)
    >>> ne = nested_evaluation(X, y, GaussianNB(), outer_cv=3, inner_cv=3, n_features=2)
    >>> len(ne.outer_scores), all(len(s) == 2 for s in ne.selected)
    (3, True)
    """
    full = SelectionProblem(
        X, y, estimator, cost_model=cost_model, cv=2, scoring=scoring, groups=groups,
        feature_names=feature_names,
    )
    Xa, ya, names = full.X, full.y, full.feature_names
    g = full.groups
    outer = check_cv(outer_cv, ya, classifier=is_classifier(estimator))
    scorer = check_scoring(estimator, scoring=scoring)
    outer_scores, inner_scores, selected, costs, results = [], [], [], [], []
    for train, test in outer.split(Xa, ya, g):
        inner = SelectionProblem(
            Xa[train], ya[train], estimator, cost_model=full.cost_model, cv=inner_cv,
            scoring=scoring, groups=None if g is None else g[train], feature_names=names,
        )
        res = run_search(inner, strategy, n_jobs=n_jobs, **search_options)
        if not res.support:
            raise InputError("the search chose no measurement in an outer fold")
        model = clone(estimator).fit(Xa[train][:, res.support], ya[train])
        outer_scores.append(float(scorer(model, Xa[test][:, res.support], ya[test])))
        inner_scores.append(res.score_mean)
        selected.append(res.selected)
        costs.append(res.cost)
        results.append(res)
    freq = {n: sum(n in s for s in selected) / len(selected) for n in names}
    try:
        stab = nogueira_stability([res.support for res in results], len(names))
    except InputError:
        stab = None
    if stab is not None and not math.isfinite(stab):
        stab = None
    return NestedEvaluation(
        outer_scores=outer_scores,
        inner_scores=inner_scores,
        selected=selected,
        costs=costs,
        selection_frequency=freq,
        stability=stab,
        cost_unit=full.cost_model.unit,
        scoring=scoring if isinstance(scoring, str) else "score",
        results=results,
    )
