"""Objectives: how an evaluated, priced subset is valued by a search.

An objective maps (evaluation, cost) to one number, larger is better. Strategies
compare subsets only through :meth:`SearchSpace.rank_key
<featuresift.strategies.base.SearchSpace.rank_key>`, which uses the objective value
first, then the tie-break (higher mean score, lower cost, fewer features).

Built in (name usable in YAML under ``objective.name``):

``score``
    Maximise the mean CV score subject to cost <= budget (the default).
``penalized``
    Maximise ``score - lambda * cost`` (``lambda`` from the config; default 0).
``expected_cost``
    Minimise the expected total cost per sample: acquisition cost plus the expected
    misclassification cost from a cost matrix, estimated on the cross-validation test
    folds. The value is ``-(misclassification cost + acquisition cost)``.

Ties between equal objective values are broken by higher mean score, then lower cost,
then fewer features (see ``rank_key``).
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Sequence
from typing import Any, ClassVar

import numpy as np
from sklearn.metrics import make_scorer

from featuresift.engine.records import Evaluation
from featuresift.errors import InputError

__all__ = [
    "BaseObjective",
    "ScoreObjective",
    "PenalizedObjective",
    "ExpectedCostObjective",
    "OBJECTIVES",
    "register_objective",
    "make_objective",
]


class BaseObjective(ABC):
    """Value of an evaluated subset; larger is better.

    Examples
    --------
    A custom objective only needs ``name`` and :meth:`value`:

    >>> from featuresift.engine.records import Evaluation
    >>> class ScorePerCost(BaseObjective):
    ...     name = "score-per-cost-doc-example"
    ...     def value(self, evaluation, cost):
    ...         return evaluation.mean / (1.0 + cost)
    >>> ScorePerCost().value(Evaluation((0,), (0.8, 0.6)), cost=1.0)
    0.35
    >>> ScorePerCost().describe()
    {'name': 'score-per-cost-doc-example'}
    """

    name: ClassVar[str] = ""

    @abstractmethod
    def value(self, evaluation: Evaluation, cost: float) -> float:
        """Objective value of a subset with this evaluation and acquisition cost."""

    def describe(self) -> dict:
        """Plain-data description for outputs."""
        return {"name": self.name}

    def required_scorer(self):
        """A scorer the CV evaluation must use for this objective, or None.

        Objectives that value subsets by something other than the user's scorer
        (for example an expected misclassification cost) return a scikit-learn
        scorer here; the problem is then built with it.
        """
        return None

    def check_target(self, y: Any) -> None:
        """Raise :class:`InputError` if this objective cannot value predictions of ``y``."""
        return None

    def prepare(self, X: Any, y: Any) -> None:
        """Called once with the problem's data before a search (default: check ``y``).

        Objectives that need the candidate matrix (for example a redundancy term)
        compute what they need here.
        """
        self.check_target(y)


class ScoreObjective(BaseObjective):
    """Mean CV score (the budget is a hard constraint, applied by the search).

    Examples
    --------
    >>> ScoreObjective().value(Evaluation((0,), (0.5, 0.7)), cost=3.0)
    0.6
    """

    name = "score"

    def value(self, evaluation: Evaluation, cost: float) -> float:
        return evaluation.mean


class PenalizedObjective(BaseObjective):
    """Mean CV score minus ``lam`` times the acquisition cost.

    Parameters
    ----------
    lam : float
        Score units given up per unit of cost; must be >= 0.

    Examples
    --------
    >>> PenalizedObjective(lam=0.01).value(Evaluation((0,), (0.9,)), cost=10.0)
    0.8
    """

    name = "penalized"

    def __init__(self, lam: float = 0.0) -> None:
        if isinstance(lam, bool) or not isinstance(lam, (int, float)) or not lam >= 0:
            raise InputError(f"objective.lambda must be a number >= 0, got {lam!r}")
        self.lam = float(lam)

    def value(self, evaluation: Evaluation, cost: float) -> float:
        return evaluation.mean - self.lam * cost

    def describe(self) -> dict:
        return {"name": self.name, "lambda": self.lam}


def _mean_misclassification_cost(y_true, y_pred, *, matrix, index):
    """Mean of ``matrix[true, predicted]`` over the samples (module level: picklable)."""
    try:
        rows = np.array([index[v] for v in np.asarray(y_true).tolist()], dtype=np.intp)
        cols = np.array([index[v] for v in np.asarray(y_pred).tolist()], dtype=np.intp)
    except KeyError as exc:
        raise ValueError(
            f"class {exc.args[0]!r} is not among the cost matrix labels {list(index)}"
        ) from None
    return float(matrix[rows, cols].mean()) if rows.size else 0.0


class ExpectedCostObjective(BaseObjective):
    """Minus the expected total cost per sample: misclassification plus acquisition.

    The cross-validation evaluator scores each fold with :meth:`required_scorer`, the
    negative mean misclassification cost per test sample under ``cost_matrix``; the
    objective value is that score minus the subset's acquisition cost, i.e.
    ``-(expected misclassification cost + acquisition cost)``, larger is better. Both
    costs must be in the same unit, per sample.

    Parameters
    ----------
    cost_matrix : sequence of sequences of float
        ``cost_matrix[i][j]`` is the cost of predicting ``labels[j]`` for a sample whose
        true class is ``labels[i]`` (rows: true class, columns: predicted). Square, finite,
        non-negative.
    labels : sequence, optional
        Class labels in matrix order. Default ``0, 1, ..., k - 1``.

    Examples
    --------
    A wrong 'accept' (true 0, predicted 1) costs 5, a wrong 'reject' 40:

    >>> obj = ExpectedCostObjective([[0, 5], [40, 0]], labels=[0, 1])
    >>> scorer_value = -(1 * 5 + 1 * 40) / 10      # 10 test samples, one error of each kind
    >>> obj.value(Evaluation((0,), (scorer_value,)), cost=0.5)
    -5.0
    """

    name = "expected_cost"

    def __init__(self, cost_matrix: Sequence[Sequence[float]], labels: Sequence | None = None):
        where = "objective.cost_matrix"
        try:
            matrix = np.array(cost_matrix, dtype=float)
        except (TypeError, ValueError):
            raise InputError(f"{where}: must be a square table of numbers") from None
        if matrix.ndim != 2 or matrix.shape[0] != matrix.shape[1] or matrix.shape[0] < 2:
            raise InputError(
                f"{where}: must be a square table with at least 2 classes, got shape "
                f"{matrix.shape}"
            )
        bad = np.argwhere(~np.isfinite(matrix) | (matrix < 0))
        if bad.size:
            i, j = bad[0]
            raise InputError(
                f"{where}: entry row {i + 1}, column {j + 1} must be a finite number >= 0, "
                f"got {matrix[i, j]!r}"
            )
        k = matrix.shape[0]
        labels = list(range(k)) if labels is None else list(labels)
        if len(labels) != k:
            raise InputError(f"objective.labels: {len(labels)} labels for a {k}x{k} cost matrix")
        if len(set(labels)) != k:
            raise InputError(f"objective.labels: labels must be distinct, got {labels}")
        self.cost_matrix = matrix.tolist()
        self.labels = labels
        self._scorer = make_scorer(
            _mean_misclassification_cost, greater_is_better=False,
            matrix=matrix, index={v: i for i, v in enumerate(labels)},
        )

    def value(self, evaluation: Evaluation, cost: float) -> float:
        return evaluation.mean - cost

    def required_scorer(self):
        """Negative mean misclassification cost per sample (one scorer per objective)."""
        return self._scorer

    def check_target(self, y: Any) -> None:
        known = set(self.labels)
        unknown = sorted({v for v in np.asarray(y).tolist() if v not in known}, key=str)
        if unknown:
            raise InputError(
                f"class(es) {', '.join(map(repr, unknown))} of the target are not among the "
                f"cost matrix labels {self.labels}",
                key="objective.labels",
            )

    def describe(self) -> dict:
        return {"name": self.name, "labels": list(self.labels),
                "cost_matrix": [list(r) for r in self.cost_matrix]}


OBJECTIVES: dict[str, type[BaseObjective]] = {
    ScoreObjective.name: ScoreObjective,
    PenalizedObjective.name: PenalizedObjective,
    ExpectedCostObjective.name: ExpectedCostObjective,
}
"""Registry of objectives by name (extended by :func:`register_objective`)."""


def register_objective(cls: type[BaseObjective]) -> type[BaseObjective]:
    """Class decorator adding an objective to :data:`OBJECTIVES` under ``cls.name``.

    Examples
    --------
    >>> from featuresift.engine.records import Evaluation
    >>> @register_objective
    ... class WorstFold(BaseObjective):
    ...     name = "worst-fold-doc-example"
    ...     def value(self, evaluation, cost):
    ...         return min(evaluation.fold_scores)
    >>> make_objective("worst-fold-doc-example").value(Evaluation((0,), (0.9, 0.7)), cost=0.0)
    0.7
    >>> del OBJECTIVES["worst-fold-doc-example"]  # unregister again
    """
    if not cls.name:
        raise ValueError("an objective class needs a non-empty 'name'")
    OBJECTIVES[cls.name] = cls
    return cls


def make_objective(spec: str | dict | BaseObjective | None) -> BaseObjective:
    """Build an objective from a name, a ``{"name": ..., **options}`` dict or an instance.

    Examples
    --------
    >>> make_objective(None).describe()
    {'name': 'score'}
    >>> make_objective({"name": "penalized", "lambda": 0.05}).lam
    0.05
    """
    if spec is None:
        return ScoreObjective()
    if isinstance(spec, BaseObjective):
        return spec
    if isinstance(spec, str):
        spec = {"name": spec}
    opts = dict(spec)
    name = opts.pop("name", "score")
    if name not in OBJECTIVES:
        raise InputError(
            f"unknown objective '{name}'; known: {', '.join(sorted(OBJECTIVES))}"
        )
    if "lambda" in opts:
        opts["lam"] = opts.pop("lambda")
    try:
        return OBJECTIVES[name](**opts)
    except TypeError as exc:
        raise InputError(f"objective '{name}': {exc}") from None
