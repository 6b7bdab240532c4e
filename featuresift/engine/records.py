"""Evaluation records: what the evaluator knows about one scored subset."""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["Evaluation", "FoldTable", "COMPLETE", "DROPPED", "FAILED"]

COMPLETE = "complete"
"""Every fold was fitted and scored (some may have failed under the ``record`` policy)."""
DROPPED = "dropped"
"""Racing stopped the subset early; its fold scores are partial and never cached as full."""
FAILED = "failed"
"""Every fold failed to fit or score."""


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
        Folds whose fit or scoring raised (``on_fit_error="record"``).
    n_folds_run : int, optional
        Folds fitted and scored (failed ones included); None means all of them.
        Less than the number of folds only for evaluations dropped by racing.
    details : dict
        Extra per-evaluation data (for example ``"cached": True``).

    Notes
    -----
    ``std`` is the sample standard deviation of the fold scores (``ddof=1``) and ``sem``
    is ``std / sqrt(k)`` over the ``k`` scored folds. CV folds share training data, so
    ``sem`` understates the true uncertainty; it is used only as a yardstick (for the
    one-standard-error pick rule and for racing reports).

    Examples
    --------
    >>> ev = Evaluation((0, 2), (0.8, 0.9, 1.0), 0.01)
    >>> round(ev.mean, 6), round(ev.std, 6)
    (0.9, 0.1)
    """

    subset: tuple[int, ...]
    fold_scores: tuple[float, ...]
    fit_time: float = 0.0
    status: str = COMPLETE
    n_failed_folds: int = 0
    details: dict[str, Any] = field(default_factory=dict, compare=False)
    n_folds_run: int | None = None

    @property
    def scored_folds(self) -> np.ndarray:
        """Fold scores that are not NaN."""
        arr = np.asarray(self.fold_scores, dtype=float)
        return arr[~np.isnan(arr)]

    @property
    def mean(self) -> float:
        """Mean score over scored folds (``-inf`` when none was scored)."""
        arr = np.asarray(self.fold_scores, dtype=float)
        if self.n_failed_folds == 0 and not np.isnan(arr).any():
            # Same arithmetic as ``cross_val_score(...).mean()``: exact ties agree.
            return float(arr.mean()) if arr.size else -math.inf
        ok = arr[~np.isnan(arr)]
        return float(ok.mean()) if ok.size else -math.inf

    @property
    def std(self) -> float:
        """Sample standard deviation (ddof=1) of the scored folds (0 for one fold)."""
        ok = self.scored_folds
        return float(ok.std(ddof=1)) if ok.size > 1 else 0.0

    @property
    def sem(self) -> float:
        """Standard error of the mean fold score."""
        ok = self.scored_folds
        return self.std / math.sqrt(ok.size) if ok.size > 1 else 0.0

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
        """Record the outcome of one fold."""
        self.times[fold] = float(seconds)
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

    def evaluation(self, subset: tuple[int, ...], n_seen: int | None = None) -> Evaluation:
        """The :class:`Evaluation` of the first ``n_seen`` folds (all by default).

        With ``n_seen`` below the number of folds the evaluation is :data:`DROPPED`
        and folds from ``n_seen`` on are NaN, whatever else is known.
        """
        n = self.n_folds if n_seen is None else int(n_seen)
        scores = tuple(self.scores[:n]) + (math.nan,) * (self.n_folds - n)
        failed = sum(1 for s in self.state[:n] if s == FIT_FAILED)
        details: dict[str, Any] = {}
        errors = sorted({self.errors[f] for f in range(n) if f in self.errors})
        if errors:
            details["errors"] = errors
        if n < self.n_folds:
            status = DROPPED
        elif failed == self.n_folds:
            status = FAILED
        else:
            status = COMPLETE
        return Evaluation(
            subset, scores, float(sum(self.times[:n])), status, failed, details,
            None if n == self.n_folds else n,
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
