"""Objectives: how an evaluated, priced subset is valued by a search.

An objective maps (evaluation, cost) to one number, larger is better. Strategies
compare subsets only through :meth:`SearchSpace.rank_key
<featuresift.strategies.base.SearchSpace.rank_key>`, which uses the objective value
first, then the tie-break (higher mean score, lower cost, fewer features).

Built in (name usable in YAML under ``objective.name``):

``score``
    Maximise the mean CV score subject to cost <= budget (the default).
``penalized``
    Maximise ``score - lambda * cost`` (``lambda`` is required: score units given up per
    unit of cost).
``expected_cost``
    Minimise the expected total cost per sample: acquisition cost plus the expected
    misclassification cost from a cost matrix, estimated on the cross-validation test
    folds. The value is ``-(misclassification cost + acquisition cost)``. Each test
    sample gets the class with the least expected cost under the model's predicted
    class probabilities (the Bayes decision), so the empty subset, whose prior-only
    model predicts the class frequencies of the training fold, is valued at the best
    decision without any test.

Ties between equal objective values are broken by higher mean score, then lower cost,
then fewer features (see ``rank_key``).
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Sequence
from typing import Any, ClassVar

import numpy as np

from featuresift.engine.records import Evaluation
from featuresift.errors import InputError

__all__ = [
    "BaseObjective",
    "ScoreObjective",
    "PenalizedObjective",
    "ExpectedCostObjective",
    "ExpectedCostScorer",
    "bayes_decisions",
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
        Score units given up per unit of cost; must be >= 0 (``lambda`` in YAML and in
        :func:`make_objective`). Required: there is no neutral default price.

    Examples
    --------
    >>> PenalizedObjective(lam=0.01).value(Evaluation((0,), (0.9,)), cost=10.0)
    0.8
    """

    name = "penalized"

    def __init__(self, lam: float) -> None:
        if isinstance(lam, bool) or not isinstance(lam, (int, float)) or not lam >= 0:
            raise InputError(f"objective.lambda must be a number >= 0, got {lam!r}")
        self.lam = float(lam)

    def value(self, evaluation: Evaluation, cost: float) -> float:
        return evaluation.mean - self.lam * cost

    def describe(self) -> dict:
        return {"name": self.name, "lambda": self.lam}


DECISIONS = ("bayes", "predict")
"""How :class:`ExpectedCostObjective` turns a fitted model into a decision per sample."""


def _misclassification_costs(y_true, y_pred, matrix, index) -> np.ndarray:
    """``matrix[true, predicted]`` per sample."""
    try:
        rows = np.array([index[v] for v in np.asarray(y_true).tolist()], dtype=np.intp)
        cols = np.array([index[v] for v in np.asarray(y_pred).tolist()], dtype=np.intp)
    except KeyError as exc:
        raise ValueError(
            f"class {exc.args[0]!r} is not among the cost matrix labels {list(index)}"
        ) from None
    return matrix[rows, cols]


def bayes_decisions(proba: np.ndarray, classes: Sequence, matrix: np.ndarray,
                    labels: Sequence) -> np.ndarray:
    """The least-expected-cost label for each row of class probabilities.

    Parameters
    ----------
    proba : ndarray of shape (n_samples, n_classes)
        Predicted probabilities, columns in the order of ``classes``.
    classes : sequence
        The model's classes (``estimator.classes_``), each among ``labels``.
    matrix : ndarray of shape (k, k)
        Cost matrix, rows true class, columns decision, in ``labels`` order.
    labels : sequence
        Labels of the cost matrix.

    Returns
    -------
    ndarray of labels
        For each sample, ``argmin_j sum_i p(i) * matrix[i, j]`` over every label ``j``
        (ties: the first label). A label the model never saw may still be the cheapest
        decision.

    Examples
    --------
    Calling a lot bad wrongly costs 5, accepting a bad lot 40: with a 20% risk of a
    bad lot, rejecting (expected cost 0.8 * 5 = 4) beats accepting (0.2 * 40 = 8).

    >>> m = np.array([[0.0, 40.0], [5.0, 0.0]])   # labels: 0 = bad, 1 = good
    >>> bayes_decisions(np.array([[0.2, 0.8], [0.05, 0.95]]), [0, 1], m, [0, 1]).tolist()
    [0, 1]
    """
    index = {v: i for i, v in enumerate(labels)}
    try:
        rows = [index[c] for c in np.asarray(classes).tolist()]
    except KeyError as exc:
        raise ValueError(
            f"class {exc.args[0]!r} is not among the cost matrix labels {list(labels)}"
        ) from None
    expected = np.asarray(proba, dtype=float) @ matrix[rows, :]
    return np.asarray(labels, dtype=object)[np.argmin(expected, axis=1)]


class ExpectedCostScorer:
    """Scorer: minus the mean misclassification cost per test sample (larger is better).

    With ``decision="bayes"`` a model with ``predict_proba`` is asked for class
    probabilities and each sample gets the least-expected-cost label
    (:func:`bayes_decisions`); a model without ``predict_proba`` uses ``predict``.
    With ``decision="predict"`` the model's own ``predict`` is always used. It calls
    only ``predict_proba``/``predict`` and ``classes_`` of the estimator it is given,
    as scikit-learn's own scorers do.

    Examples
    --------
    >>> from sklearn.dummy import DummyClassifier
    >>> X, y = np.zeros((10, 1)), np.array([0] * 2 + [1] * 8)
    >>> prior = DummyClassifier(strategy="prior").fit(X, y)
    >>> m = np.array([[0.0, 40.0], [5.0, 0.0]])   # accepting a bad lot (0) costs 40
    >>> ExpectedCostScorer(m, [0, 1])(prior, X, y)    # reject all: 8 lots x 5 / 10
    -4.0
    >>> ExpectedCostScorer(m, [0, 1], "predict")(prior, X, y)  # accept all: 2 x 40 / 10
    -8.0
    """

    tail_safe = True  # uses only the fitted estimator's predictions (see engine.fitplan)

    def __init__(self, matrix: np.ndarray, labels: Sequence, decision: str = "bayes") -> None:
        self.matrix = np.asarray(matrix, dtype=float)
        self.labels = list(labels)
        self.decision = decision
        self._index = {v: i for i, v in enumerate(self.labels)}

    def __call__(self, estimator: Any, X: Any, y: Any) -> float:
        if self.decision == "bayes" and hasattr(estimator, "predict_proba"):
            pred = bayes_decisions(estimator.predict_proba(X), estimator.classes_,
                                   self.matrix, self.labels)
        else:
            pred = estimator.predict(X)
        costs = _misclassification_costs(y, pred, self.matrix, self._index)
        return -float(costs.mean()) if costs.size else 0.0

    def __repr__(self) -> str:
        return (f"ExpectedCostScorer(matrix={self.matrix.tolist()}, labels={self.labels}, "
                f"decision={self.decision!r})")


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
    decision : {"bayes", "predict"}, default="bayes"
        How each test sample is called: ``"bayes"`` takes the label with the least
        expected cost under the model's predicted probabilities (models without
        ``predict_proba`` fall back to ``predict``); ``"predict"`` takes the model's
        own prediction.

    Examples
    --------
    A wrong 'accept' (true 0, predicted 1) costs 5, a wrong 'reject' 40:

    >>> obj = ExpectedCostObjective([[0, 5], [40, 0]], labels=[0, 1])
    >>> scorer_value = -(1 * 5 + 1 * 40) / 10      # 10 test samples, one error of each kind
    >>> obj.value(Evaluation((0,), (scorer_value,)), cost=0.5)
    -5.0
    """

    name = "expected_cost"

    def __init__(self, cost_matrix: Sequence[Sequence[float]], labels: Sequence | None = None,
                 decision: str = "bayes"):
        where = "objective.cost_matrix"
        if decision not in DECISIONS:
            raise InputError(f"must be one of {', '.join(DECISIONS)}, got {decision!r}",
                             key="objective.decision")
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
        self.decision = decision
        self._scorer = ExpectedCostScorer(matrix, labels, decision)

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
                "cost_matrix": [list(r) for r in self.cost_matrix], "decision": self.decision}


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
    if name == PenalizedObjective.name and "lam" not in opts:
        raise InputError(
            "the penalized objective needs 'lambda' (score units given up per unit of cost, "
            "e.g. lambda: 0.002)", key="objective.lambda",
        )
    try:
        return OBJECTIVES[name](**opts)
    except TypeError as exc:
        raise InputError(f"objective '{name}': {exc}") from None
