"""Evaluators: turn batches of feature subsets into :class:`~featuresift.records.Evaluation`.

A strategy only ever calls :meth:`BaseEvaluator.evaluate` with a batch of subsets;
it never learns how the scores are computed. :class:`CrossValidationEvaluator`
fits clones of a scikit-learn estimator on fixed CV splits; :class:`CriterionEvaluator`
scores subsets with a plain function (useful for tests and for model-free criteria).

Both memoise by subset: within one evaluator no subset is evaluated twice.
"""

from __future__ import annotations

import time
from abc import ABC, abstractmethod
from collections.abc import Callable, Iterable, Sequence

import numpy as np
from sklearn.dummy import DummyClassifier, DummyRegressor
from sklearn.utils.parallel import Parallel, delayed

from featuresift.errors import FitFailedError, InputError
from featuresift.problem import SelectionProblem
from featuresift.records import COMPLETE, FAILED, Evaluation

__all__ = ["BaseEvaluator", "CrossValidationEvaluator", "CriterionEvaluator", "normalise_subset"]


def normalise_subset(subset: Iterable[int], n_features: int) -> tuple[int, ...]:
    """Sorted tuple of unique column indices, range-checked."""
    out = tuple(sorted({int(i) for i in subset}))
    if out and (out[0] < 0 or out[-1] >= n_features):
        raise InputError(f"subset {out} has a column index outside 0..{n_features - 1}")
    return out


class BaseEvaluator(ABC):
    """Scores batches of subsets and remembers every evaluation.

    Subclasses implement :meth:`_evaluate_new` for subsets not seen before; this
    base class handles normalisation, de-duplication within a batch, memoisation
    and the history.

    Attributes
    ----------
    history : list of Evaluation
        Every distinct evaluation, in the order it was first computed.
    n_fits : int
        Model fits performed (one per subset and fold for CV evaluators).
    n_cache_hits : int
        Requests answered from memory.
    """

    def __init__(self, n_features: int, feature_names: Sequence[str] | None = None) -> None:
        self.n_features = int(n_features)
        self.feature_names = (
            list(feature_names) if feature_names is not None
            else [f"x{i}" for i in range(self.n_features)]
        )
        self.history: list[Evaluation] = []
        self._memo: dict[tuple[int, ...], Evaluation] = {}
        self.n_fits = 0
        self.n_cache_hits = 0

    def evaluate(self, subsets: Sequence[Iterable[int]]) -> list[Evaluation]:
        """Evaluate a batch of subsets; returns one evaluation per input, in order.

        Parameters
        ----------
        subsets : sequence of iterables of int
            Column indices of each subset. Order within a subset does not matter.
        """
        keys = [normalise_subset(s, self.n_features) for s in subsets]
        todo: list[tuple[int, ...]] = []
        seen: set[tuple[int, ...]] = set()
        for k in keys:
            if k in self._memo or k in seen:
                self.n_cache_hits += 1
            else:
                seen.add(k)
                todo.append(k)
        if todo:
            for ev in self._evaluate_new(todo):
                self._memo[ev.subset] = ev
                self.history.append(ev)
        return [self._memo[k] for k in keys]

    def lookup(self, subset: Iterable[int]) -> Evaluation | None:
        """The stored evaluation of a subset, or None (never triggers a fit)."""
        return self._memo.get(normalise_subset(subset, self.n_features))

    @property
    def n_evaluations(self) -> int:
        """Number of distinct subsets evaluated."""
        return len(self.history)

    @abstractmethod
    def _evaluate_new(self, subsets: list[tuple[int, ...]]) -> list[Evaluation]:
        """Evaluate subsets never seen before (sorted, unique tuples)."""


class CriterionEvaluator(BaseEvaluator):
    """Scores each subset with a plain function ``criterion(subset) -> float``.

    The returned value is stored as a single "fold" score. Useful to run strategies
    on tabulated criteria (published worked examples) or model-free objectives.

    Examples
    --------
    >>> ev = CriterionEvaluator(lambda s: float(sum(s)), n_features=4)
    >>> [e.mean for e in ev.evaluate([[1, 3], [0]])]
    [4.0, 0.0]
    """

    def __init__(
        self,
        criterion: Callable[[tuple[int, ...]], float],
        n_features: int,
        feature_names: Sequence[str] | None = None,
    ) -> None:
        super().__init__(n_features, feature_names)
        self.criterion = criterion

    def _evaluate_new(self, subsets: list[tuple[int, ...]]) -> list[Evaluation]:
        out = []
        for s in subsets:
            t0 = time.perf_counter()
            value = float(self.criterion(s))
            self.n_fits += 1
            out.append(Evaluation(s, (value,), time.perf_counter() - t0))
        return out


def _baseline_estimator(classification: bool):
    return DummyClassifier(strategy="prior") if classification else DummyRegressor()


def _fit_and_score(estimator, X, y, cols, train, test, scorer, classification, on_error):
    """Fit one clone on one fold and score it. Module-level so joblib can pickle it.

    Returns ``(score, seconds, error_message_or_None)``.
    """
    t0 = time.perf_counter()
    if len(cols) == 0:
        # The empty subset: a prior-only baseline fitted on a constant column.
        Xs = np.zeros((X.shape[0], 1))
        estimator = _baseline_estimator(classification)
    else:
        Xs = X[:, cols]
    try:
        estimator.fit(Xs[train], y[train])
        score = float(scorer(estimator, Xs[test], y[test]))
    except Exception as exc:  # noqa: BLE001 - the policy decides
        if on_error == "raise":
            raise FitFailedError(
                f"fit failed on subset {list(cols)}: {type(exc).__name__}: {exc}"
            ) from exc
        return float("nan"), time.perf_counter() - t0, f"{type(exc).__name__}: {exc}"
    return score, time.perf_counter() - t0, None


class CrossValidationEvaluator(BaseEvaluator):
    """Fits clones of the problem's estimator on its fixed CV splits.

    Every (subset, fold) fit of a batch is dispatched in one joblib call, so the
    user's :func:`joblib.parallel_config` (backend, including dask) applies.

    Parameters
    ----------
    problem : SelectionProblem
        Data, model, splits and scorer.
    n_jobs : int, optional
        Parallel workers for the fits (joblib semantics; None means 1 unless a
        ``parallel_config`` says otherwise).
    on_fit_error : {"raise", "record"}, default="raise"
        ``"raise"`` stops the search at the first failing fit; ``"record"`` stores the
        fold as NaN, counts it, and goes on.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.tree import DecisionTreeClassifier
    >>> X, y = load_iris(return_X_y=True)
    >>> p = SelectionProblem(X, y, DecisionTreeClassifier(random_state=0), cv=3)
    >>> ev = CrossValidationEvaluator(p)
    >>> len(ev.evaluate([[2, 3], [0]])[0].fold_scores), ev.n_fits
    (3, 6)
    """

    def __init__(
        self,
        problem: SelectionProblem,
        n_jobs: int | None = None,
        on_fit_error: str = "raise",
    ) -> None:
        super().__init__(problem.n_features, problem.feature_names)
        if on_fit_error not in ("raise", "record"):
            raise InputError(f"on_fit_error must be 'raise' or 'record', got {on_fit_error!r}")
        self.problem = problem
        self.n_jobs = n_jobs
        self.on_fit_error = on_fit_error
        self.n_failed_fits = 0

    def _evaluate_new(self, subsets: list[tuple[int, ...]]) -> list[Evaluation]:
        p = self.problem
        n_folds = len(p.splits)
        tasks = [
            delayed(_fit_and_score)(
                p.new_estimator(), p.X, p.y, np.asarray(s, dtype=np.intp), tr, te,
                p.scorer, p.classification, self.on_fit_error,
            )
            for s in subsets
            for tr, te in p.splits
        ]
        results = Parallel(n_jobs=self.n_jobs)(tasks)
        self.n_fits += len(tasks)
        out = []
        for i, s in enumerate(subsets):
            chunk = results[i * n_folds:(i + 1) * n_folds]
            scores = tuple(r[0] for r in chunk)
            n_failed = sum(r[2] is not None for r in chunk)
            self.n_failed_fits += n_failed
            details = {}
            if n_failed:
                details["errors"] = sorted({r[2] for r in chunk if r[2] is not None})
            out.append(
                Evaluation(
                    s, scores, float(sum(r[1] for r in chunk)),
                    FAILED if n_failed == n_folds else COMPLETE, n_failed, details,
                )
            )
        return out
