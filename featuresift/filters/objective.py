"""A wrapper objective with a redundancy term: ``score - weight * redundancy within the subset``.

Registered as ``redundancy_penalized`` (YAML ``objective: {name: redundancy_penalized,
weight: 0.05}``). The redundancy of a subset is the mean (or maximum) absolute Pearson
correlation over its pairs of columns; a subset of 0 or 1 column has redundancy 0.

The objective needs the data. It is built either

* directly, with a precomputed matrix: ``RedundancyPenalizedObjective(weight=0.05,
  correlation=abs_correlation_matrix(X))``, or :meth:`RedundancyPenalizedObjective.from_data`;
* from a configuration (name and weight only), after which the code that holds the
  data calls :meth:`RedundancyPenalizedObjective.bind` with the candidate matrix
  ``X`` before the search. Valuing a subset before that raises a clear
  :class:`~featuresift.errors.InputError`.

Leakage: the correlation matrix uses ``X`` only, never the target, so computing it
on all rows (the CV test folds included) gives the search no information about the
labels of held-out rows; like the acquisition cost, it is a fixed property of each
candidate subset.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from featuresift.engine.records import Evaluation
from featuresift.errors import InputError
from featuresift.filters.redundancy import abs_correlation_matrix
from featuresift.objectives import BaseObjective, register_objective

__all__ = ["RedundancyPenalizedObjective"]


@register_objective
class RedundancyPenalizedObjective(BaseObjective):
    """Mean CV score minus ``weight`` times the subset's within-subset redundancy.

    Parameters
    ----------
    weight : float, default=0.1
        Score units given up per unit of mean |correlation|; >= 0.
    correlation : array-like of shape (n_features, n_features), optional
        Absolute correlation matrix of the candidate columns (see :meth:`bind`).
    aggregate : {"mean", "max"}, default="mean"
        Mean or largest |correlation| over the pairs of the subset.

    Examples
    --------
    >>> C = np.array([[1.0, 0.9, 0.1], [0.9, 1.0, 0.3], [0.1, 0.3, 1.0]])
    >>> obj = RedundancyPenalizedObjective(weight=0.5, correlation=C)
    >>> round(obj.value(Evaluation((0, 1, 2), (0.8,)), cost=3.0), 6)
    0.583333
    >>> obj.value(Evaluation((2,), (0.7,)), cost=1.0)
    0.7
    """

    name = "redundancy_penalized"

    def __init__(self, weight: float = 0.1, correlation: Any = None,
                 aggregate: str = "mean") -> None:
        if isinstance(weight, bool) or not isinstance(weight, (int, float)) or not weight >= 0:
            raise InputError(f"objective.weight must be a number >= 0, got {weight!r}",
                             key="objective.weight")
        if aggregate not in ("mean", "max"):
            raise InputError(f"objective.aggregate must be 'mean' or 'max', got {aggregate!r}",
                             key="objective.aggregate")
        self.weight = float(weight)
        self.aggregate = aggregate
        self.correlation: np.ndarray | None = None
        if correlation is not None:
            self._set_matrix(correlation)

    def _set_matrix(self, correlation: Any) -> None:
        C = np.abs(np.asarray(correlation, dtype=float))
        if C.ndim != 2 or C.shape[0] != C.shape[1]:
            raise InputError(f"the correlation matrix must be square, got shape {C.shape}")
        if np.isnan(C).any():
            raise InputError("the correlation matrix contains NaN")
        self.correlation = C

    @classmethod
    def from_data(cls, X: Any, weight: float = 0.1,
                  aggregate: str = "mean") -> RedundancyPenalizedObjective:
        """Build with the absolute Pearson correlations of the columns of ``X``."""
        return cls(weight=weight, aggregate=aggregate).bind(X)

    def bind(self, X: Any) -> RedundancyPenalizedObjective:
        """Compute the correlation matrix from the candidate matrix ``X``; returns self."""
        arr = np.asarray(X.to_numpy() if hasattr(X, "to_numpy") else X, dtype=float)
        if arr.ndim != 2:
            raise InputError(f"X must be 2-dimensional, got shape {arr.shape}")
        self._set_matrix(abs_correlation_matrix(arr))
        return self

    def prepare(self, X: Any, y: Any) -> None:
        """Bind to the problem's candidate matrix unless a matrix was given."""
        super().prepare(X, y)
        if self.correlation is None:
            self.bind(X)

    def redundancy(self, subset: tuple[int, ...]) -> float:
        """Mean (or max) |correlation| over the pairs of ``subset`` (0 below 2 columns)."""
        if self.correlation is None:
            raise InputError(
                "objective 'redundancy_penalized' has no data: build it with a correlation "
                "matrix or call .bind(X) with the candidate columns before the search",
                key="objective",
            )
        if len(subset) < 2:
            return 0.0
        idx = np.asarray(subset, dtype=np.intp)
        if idx.max() >= self.correlation.shape[0]:
            raise InputError(f"subset column {int(idx.max())} is outside the "
                             f"{self.correlation.shape[0]}-column correlation matrix")
        vals = self.correlation[np.ix_(idx, idx)][np.triu_indices(idx.size, 1)]
        return float(vals.max() if self.aggregate == "max" else vals.mean())

    def value(self, evaluation: Evaluation, cost: float) -> float:
        return evaluation.mean - self.weight * self.redundancy(evaluation.subset)

    def describe(self) -> dict:
        return {"name": self.name, "weight": self.weight, "aggregate": self.aggregate}
