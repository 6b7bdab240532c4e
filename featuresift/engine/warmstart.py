"""Warm starts (opt-in) for logistic regression: start a fit from its parent's coefficients.

In a forward step every candidate is the current subset plus one column, and the
current subset was fitted on the same folds one step earlier. Its coefficients are a
good starting point for the candidate's fit (the new column's coefficient starts at 0),
so the solver needs fewer iterations. With ``warm_start=True`` the evaluator keeps the
fitted coefficients of every (subset, fold) of a
:class:`~sklearn.linear_model.LogisticRegression` (alone or behind shared column-wise
steps), and starts a fit from those of a subset with one column less on the same fold
when there is one (forward selection, floating search; backward steps have no such
parent and start cold).

**Tolerance.** The solver stops when its own criterion (``tol``, default 1e-4, on the
gradient) is met, so a warm-started fit ends at a slightly different point of the
same optimum than a cold one: coefficients agree to about the solver's tolerance, and a
fold score can differ where a test sample lies that close to the decision boundary.
Choices can therefore differ, which is why warm starts are off by default;
``benchmarks/bench_speed.py`` reports the iterations saved and whether the choices
changed on its tasks. Results with warm starts still do not depend on ``n_jobs``: a
fit's starting point is looked up before the batch is dispatched, from fits of earlier
batches only.

Examples
--------
>>> from sklearn.datasets import load_breast_cancer
>>> from sklearn.linear_model import LogisticRegression
>>> from sklearn.pipeline import make_pipeline
>>> from sklearn.preprocessing import StandardScaler
>>> from featuresift import CrossValidationEvaluator, SelectionProblem
>>> X, y = load_breast_cancer(return_X_y=True)
>>> p = SelectionProblem(X[:, :6], y, make_pipeline(StandardScaler(), LogisticRegression()),
...                      cv=3)
>>> ev = CrossValidationEvaluator(p, warm_start=True)
>>> _ = ev.evaluate([[0, 1]]); _ = ev.evaluate([[0, 1, 2], [0, 1, 3]])
>>> ev.stats()["warm_start"]["n_warm"]
6
"""

from __future__ import annotations

from typing import Any

import numpy as np
from sklearn.linear_model import LogisticRegression

__all__ = ["WarmStarts", "warm_result"]

_SOLVERS = ("lbfgs", "newton-cg", "newton-cholesky", "sag", "saga")
"""Solvers that accept a starting point (liblinear does not)."""


def warm_result(estimator: Any) -> tuple:
    """What a warm-started chunk fit returns besides the score: coefficients, intercept
    and iterations (None, None, 0 for a model without them, e.g. the prior-only one)."""
    coef = getattr(estimator, "coef_", None)
    if coef is None:
        return (None, None, 0)
    n_iter = getattr(estimator, "n_iter_", 0)
    return (coef.copy(), estimator.intercept_.copy(), int(np.max(n_iter)))


class WarmStarts:
    """Fitted coefficients by (subset, fold) and the starting points they give.

    Attributes
    ----------
    n_fits, n_warm, iterations : int
        Fits run, fits started from a parent's coefficients, solver iterations in all.
    """

    def __init__(self) -> None:
        self._coefs: dict[tuple[tuple[int, ...], int], tuple[np.ndarray, np.ndarray]] = {}
        self.use_parents = True
        self.n_fits = 0
        self.n_warm = 0
        self.iterations = 0

    @staticmethod
    def eligible(plan: Any) -> bool:
        """Whether the plan's per-subset part is a LogisticRegression that can warm-start."""
        tail = plan.tail
        return type(tail) is LogisticRegression and tail.solver in _SOLVERS

    def init_for(self, cols: tuple[int, ...], fold: int):
        """Starting point for ``cols`` on ``fold`` from a stored subset with one column less."""
        if not self.use_parents or len(cols) < 2:
            return None
        for j in range(len(cols)):
            parent = cols[:j] + cols[j + 1:]
            found = self._coefs.get((parent, fold))
            if found is not None:
                coef, intercept = found
                start = np.insert(coef, j, 0.0, axis=1)
                return start, intercept.copy()
        return None

    def inits(self, chunk) -> list:
        """Starting points of a chunk's items (counted as warm when found)."""
        found = [self.init_for(cols, fold) for cols, fold in chunk]
        self.n_warm += sum(f is not None for f in found)
        return found

    def store(self, items, results) -> list[tuple]:
        """Keep the coefficients of fitted items; return the usual 3-tuples."""
        out = []
        for (cols, fold), result in zip(items, results):
            score, seconds, error = result[:3]
            coef, intercept, n_iter = result[3:] if len(result) > 3 else (None, None, 0)
            if coef is not None:
                self._coefs[(cols, fold)] = (coef, intercept)
            self.n_fits += 1
            self.iterations += n_iter
            out.append((score, seconds, error))
        return out

    def describe(self) -> dict[str, Any]:
        """Counters for ``stats()``."""
        return {"n_fits": self.n_fits, "n_warm": self.n_warm, "iterations": self.iterations}
