"""Evaluation records: what the evaluator knows about one scored subset."""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["Evaluation", "FoldTable", "COMPLETE", "DROPPED", "FAILED", "computed_once"]


class computed_once:  # noqa: N801 - used like ``functools.cached_property``
    """A property computed on first access and then stored on the instance.

    Like :func:`functools.cached_property` without its lock (Python 3.11 takes one on
    every access, which an exhaustive search over tens of thousands of subsets
    notices), for values of immutable records that never go stale. Works on frozen
    dataclasses (it writes the instance ``__dict__`` directly).

    Examples
    --------
    >>> class Box:
    ...     @computed_once
    ...     def value(self):
    ...         print("computing")
    ...         return 42
    >>> b = Box(); b.value
    computing
    42
    >>> b.value
    42
    """

    def __init__(self, func):
        self.func = func
        self.name = func.__name__
        self.__doc__ = func.__doc__

    def __set_name__(self, owner, name):
        self.name = name

    def __get__(self, obj, cls=None):
        if obj is None:
            return self
        value = obj.__dict__[self.name] = self.func(obj)
        return value

COMPLETE = "complete"
"""Every fold has a score: fitted and scored, or failed and given the user's ``error_score``."""
DROPPED = "dropped"
"""Racing stopped the subset early; its fold scores are partial and never cached as full.
Not a failure: the folds it ran were scored."""
_SUM = np.add.reduce

FAILED = "failed"
"""At least one fold failed (fit error, scorer error, NaN or infinite score) and no
``error_score`` stands in for it, so the subset has no score and is never chosen. The
mean of the remaining folds is never used in its place."""


@dataclass(frozen=True)
class Evaluation:
    """Cross-validated evaluation of one feature subset.

    Attributes
    ----------
    subset : tuple of int
        Sorted column indices of the subset.
    fold_scores : tuple of float
        Score on each CV split, in split order (NaN where a fold failed or was not run).
    fit_time : float
        Seconds spent fitting and scoring, summed over folds.
    status : {"complete", "dropped", "failed"}
        See the module constants.
    n_failed_folds : int
        Folds whose fit or scoring failed (``on_fit_error="record"``): the fit or the
        scorer raised, or the score was NaN or infinite (an undefined metric).
    n_folds_run : int, optional
        Folds fitted and scored (failed ones included); None means all of them.
        Less than the number of folds only for evaluations dropped by racing.
    details : dict
        Extra per-evaluation data (for example ``"errors"``: the failure messages).
    failed_folds : tuple of int
        Indices of the failed folds (``n_failed_folds`` of them). Their entries in
        ``fold_scores`` hold the ``error_score`` used, NaN by default.

    Notes
    -----
    ``mean`` is the mean over every fold run: one NaN fold (a failure with the default
    ``error_score``) makes it NaN. A failure is never averaged away by the other folds.
    ``std`` is the sample standard deviation of the fold scores (``ddof=1``) and ``sem``
    is ``std / sqrt(k)`` over the ``k`` folds run. CV folds share training data, so
    ``sem`` understates the true uncertainty; it is used only as a yardstick (for the
    one-standard-error pick rule and for racing reports).

    Examples
    --------
    >>> ev = Evaluation((0, 2), (0.8, 0.9, 1.0), 0.01)
    >>> round(ev.mean, 6), round(ev.std, 6)
    (0.9, 0.1)
    >>> Evaluation((0,), (0.8, float("nan"), 1.0), status="failed", n_failed_folds=1,
    ...            failed_folds=(1,)).mean
    nan
    """

    subset: tuple[int, ...]
    fold_scores: tuple[float, ...]
    fit_time: float = 0.0
    status: str = COMPLETE
    n_failed_folds: int = 0
    details: dict[str, Any] = field(default_factory=dict, compare=False)
    n_folds_run: int | None = None
    failed_folds: tuple[int, ...] = ()

    # The statistics below are computed once per evaluation (an exhaustive search asks
    # for them several times for each of its tens of thousands of subsets); the
    # dataclass is frozen, so the cached values can never go stale.
    @computed_once
    def scored_folds(self) -> np.ndarray:
        """Scores of the folds run (the first ``n_folds_run``); NaN where a fold failed."""
        arr = np.asarray(self.fold_scores, dtype=float)
        arr = arr if self.n_folds_run is None else arr[: self.n_folds_run]
        arr.flags.writeable = False
        return arr

    @computed_once
    def has_score(self) -> bool:
        """True when every fold run has a finite score (failed folds count only through
        an ``error_score``)."""
        n = len(self.fold_scores) if self.n_folds_run is None else self.n_folds_run
        return n > 0 and all(map(math.isfinite, self.fold_scores[:n]))

    @computed_once
    def mean(self) -> float:
        """Mean score over the folds run; NaN when any of them has no score."""
        if not self.has_score:
            return math.nan
        # Same arithmetic as ``cross_val_score(...).mean()`` (numpy's sum, then one
        # division): exact ties agree. ``ndarray.mean`` itself costs several times more.
        arr = self.scored_folds
        return float(_SUM(arr)) / arr.size

    @computed_once
    def std(self) -> float:
        """Sample standard deviation (ddof=1) of the folds run (0 for one fold; NaN
        without a score)."""
        if not self.has_score:
            return math.nan
        arr = self.scored_folds
        if arr.size < 2:
            return 0.0
        # numpy's ``std(ddof=1)``, step by step: the same operations in the same order.
        dev = arr - _SUM(arr) / arr.size
        return math.sqrt(float(_SUM(dev * dev)) / (arr.size - 1))

    @computed_once
    def sem(self) -> float:
        """Standard error of the mean fold score (NaN without a score)."""
        k = self.scored_folds.size
        return self.std / math.sqrt(k) if k > 1 else (0.0 if self.has_score else math.nan)

    @property
    def size(self) -> int:
        """Number of features in the subset."""
        return len(self.subset)


NOT_RUN = 0
SCORED = 1
FIT_FAILED = 2


@dataclass
class FoldTable:
    """What is known about one subset, fold by fold (the evaluator's cache entry).

    Attributes
    ----------
    scores : list of float
        Score per fold (NaN when not run or failed).
    state : list of int
        Per fold: 0 not run, 1 scored, 2 fit or scoring failed.
    times : list of float
        Seconds spent on each fold (0 when not run).
    errors : dict of int to str
        Error message per failed fold.

    Examples
    --------
    >>> t = FoldTable.empty(3)
    >>> t.set(1, 0.5, 0.01)
    >>> t.missing([0, 1]), t.complete
    ([0], False)
    """

    scores: list[float]
    state: list[int]
    times: list[float]
    errors: dict[int, str] = field(default_factory=dict)

    @classmethod
    def empty(cls, n_folds: int) -> FoldTable:
        """A table with no fold run yet."""
        return cls([math.nan] * n_folds, [NOT_RUN] * n_folds, [0.0] * n_folds)

    @property
    def n_folds(self) -> int:
        """Number of CV folds."""
        return len(self.state)

    @property
    def complete(self) -> bool:
        """True when every fold was run (scored or failed)."""
        return all(s != NOT_RUN for s in self.state)

    def set(self, fold: int, score: float, seconds: float, error: str | None = None) -> None:
        """Record the outcome of one fold (a NaN or infinite score counts as failed)."""
        self.times[fold] = float(seconds)
        if error is None and not math.isfinite(score):
            # An undefined metric is a failure too, never a fold to leave out of the mean.
            error = f"the score is {score!r} (undefined for this fold)"
        if error is None:
            self.scores[fold] = float(score)
            self.state[fold] = SCORED
            self.errors.pop(fold, None)
        else:
            self.scores[fold] = math.nan
            self.state[fold] = FIT_FAILED
            self.errors[fold] = error

    def missing(self, folds: list[int] | range, retry_failed: bool = False) -> list[int]:
        """Folds among ``folds`` that still need a fit."""
        redo = (NOT_RUN, FIT_FAILED) if retry_failed else (NOT_RUN,)
        return [f for f in folds if self.state[f] in redo]

    def evaluation(
        self, subset: tuple[int, ...], n_seen: int | None = None,
        error_score: float = math.nan,
    ) -> Evaluation:
        """The :class:`Evaluation` of the first ``n_seen`` folds (all by default).

        Failed folds get ``error_score`` (scikit-learn's convention). With the default
        NaN, any failed fold makes the evaluation :data:`FAILED` (no score). Otherwise,
        with ``n_seen`` below the number of folds the evaluation is :data:`DROPPED`
        and folds from ``n_seen`` on are NaN, whatever else is known.

        Examples
        --------
        >>> t = FoldTable.empty(3)
        >>> t.set(0, 0.9, 0.1); t.set(1, 0.0, 0.1, "ValueError: boom"); t.set(2, 0.8, 0.1)
        >>> ev = t.evaluation((0,))
        >>> ev.status, ev.failed_folds, ev.mean
        ('failed', (1,), nan)
        >>> ev = t.evaluation((0,), error_score=0.0)
        >>> ev.status, ev.fold_scores, round(ev.mean, 6)
        ('complete', (0.9, 0.0, 0.8), 0.566667)
        """
        n = self.n_folds if n_seen is None else int(n_seen)
        if n == self.n_folds and NOT_RUN not in self.state and FIT_FAILED not in self.state:
            # The common case (every fold scored), without the general bookkeeping.
            return Evaluation(subset, tuple(self.scores), float(sum(self.times)))
        failed_folds = tuple(f for f in range(n) if self.state[f] == FIT_FAILED)
        substitute = float(error_score)
        scores = tuple(
            substitute if f in failed_folds else self.scores[f] for f in range(n)
        ) + (math.nan,) * (self.n_folds - n)
        details: dict[str, Any] = {}
        errors = sorted({self.errors[f] for f in failed_folds if f in self.errors})
        if errors:
            details["errors"] = errors
        if failed_folds and math.isnan(substitute):
            status = FAILED
        elif n < self.n_folds:
            status = DROPPED
        else:
            status = COMPLETE
        return Evaluation(
            subset, scores, float(sum(self.times[:n])), status, len(failed_folds), details,
            None if n == self.n_folds else n, failed_folds,
        )

    def to_json(self) -> str:
        """Compact JSON text (the journal's storage format)."""
        folds = []
        for f in range(self.n_folds):
            if self.state[f] == NOT_RUN:
                folds.append(None)
            elif self.state[f] == SCORED:
                folds.append([self.scores[f], self.times[f]])
            else:
                folds.append([None, self.times[f], self.errors.get(f, "")])
        return json.dumps(folds, separators=(",", ":"))

    @classmethod
    def from_json(cls, text: str) -> FoldTable:
        """Inverse of :meth:`to_json`."""
        folds = json.loads(text)
        table = cls.empty(len(folds))
        for f, item in enumerate(folds):
            if item is None:
                continue
            if item[0] is None and len(item) > 2:
                table.set(f, math.nan, item[1], str(item[2]))
            else:
                table.set(f, math.nan if item[0] is None else item[0], item[1])
        return table
