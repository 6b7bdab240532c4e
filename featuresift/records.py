"""Evaluation records: what the evaluator knows about one scored subset."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["Evaluation", "COMPLETE", "DROPPED", "FAILED"]

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
