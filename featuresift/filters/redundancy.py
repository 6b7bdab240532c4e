"""Redundancy penalties, updated incrementally as features are chosen.

A penalty measures how much a candidate column repeats the columns already chosen.
It is built from a pairwise **similarity** (absolute Pearson correlation, or plug-in
mutual information) and an **aggregate** over the chosen set (maximum or mean).

:class:`RunningRedundancy` keeps, for every candidate, the running sum and the
running maximum of its similarity to the chosen columns. Adding a feature costs one
similarity column (O(n p) arithmetic for n rows, p candidates) and an O(p) update;
nothing is recomputed from scratch.

Built-in penalties (name usable from YAML as ``redundancy: ...``):

``max_abs_corr``
    Largest ``|corr(x_j, x_s)|`` over chosen ``s``.
``mean_abs_corr``
    Mean ``|corr(x_j, x_s)|`` over chosen ``s`` (the FCD / FCQ redundancy of Peng,
    Long & Ding 2005).
``mutual_info``
    Mean plug-in mutual information ``I(x_j; x_s)`` in nats over chosen ``s`` (the
    mRMR redundancy of Peng, Long & Ding 2005). Columns are discretised as in
    :func:`featuresift.filters._common.discretize_column` (integer columns with few
    levels as they are, others in ``n_bins`` quantile bins).

How the penalty combines with relevance (difference "MID" or quotient "MIQ" form)
is decided by :func:`featuresift.filters.greedy.budgeted_greedy`.

Missing values
--------------
Correlation penalties fill a missing value with its column mean after
standardising (the row then adds nothing to that pair's covariance): an
approximation that keeps each update a single matrix-vector product. Mutual
information treats "missing" as one more level of the column.

Reference
---------
H. Peng, F. Long, C. Ding (2005), "Feature selection based on mutual information:
criteria of max-dependency, max-relevance, and min-redundancy", IEEE TPAMI 27(8).
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from typing import Any, ClassVar

import numpy as np

from featuresift.errors import InputError
from featuresift.filters._common import (
    DEFAULT_MAX_LEVELS,
    check_positive_int,
    discretize_matrix,
    joint_tables,
    plugin_mi_tables,
)

__all__ = [
    "BasePenalty",
    "AbsCorrelationPenalty",
    "MutualInfoPenalty",
    "RunningRedundancy",
    "REDUNDANCY_PENALTIES",
    "make_penalty",
    "standardize_columns",
    "abs_correlation_matrix",
]


def standardize_columns(X: np.ndarray) -> np.ndarray:
    """Columns centred and scaled to unit root-mean-square; NaN -> 0; constant -> 0.

    With ``Z`` from this function, ``Z.T @ Z / n`` is the correlation matrix of
    complete data.

    Examples
    --------
    The missing value becomes 0 and the constant middle column is all zeros:

    >>> Z = standardize_columns(np.array([[1.0, 5.0, 2.0], [3.0, 5.0, np.nan], [5.0, 5.0, 4.0]]))
    >>> Z.round(4).tolist()
    [[-1.2247, 0.0, -1.2247], [0.0, 0.0, 0.0], [1.2247, 0.0, 1.2247]]
    """
    X = np.asarray(X, dtype=float)
    with np.errstate(invalid="ignore"):
        mean = np.nanmean(X, axis=0) if np.isnan(X).any() else X.mean(axis=0)
    Z = X - mean
    # Column blocks keep the temporaries (NaN mask, squares) small: only Z is as big as X.
    n, p = Z.shape
    step = max(1, (1 << 20) // max(1, n))
    scale = np.empty(p)
    for lo in range(0, p, step):
        part = Z[:, lo:lo + step]
        part[np.isnan(part)] = 0.0
        scale[lo:lo + step] = np.sqrt((part**2).mean(axis=0))
    ok = scale > 0
    Z /= np.where(ok, scale, 1.0)
    Z[:, ~ok] = 0.0
    return Z


def abs_correlation_matrix(X: np.ndarray) -> np.ndarray:
    """Absolute Pearson correlation matrix of the columns (diagonal 1, constants 0).

    Examples
    --------
    >>> abs_correlation_matrix(np.array([[1., 2.], [2., 4.1], [3., 5.9]])).round(3).tolist()
    [[1.0, 0.999], [0.999, 1.0]]
    """
    Z = standardize_columns(X)
    C = np.abs(Z.T @ Z) / Z.shape[0]
    np.clip(C, 0.0, 1.0, out=C)
    np.fill_diagonal(C, 1.0)
    return C


class BasePenalty(ABC):
    """A pairwise similarity between columns plus an aggregate over the chosen set.

    Subclasses implement :meth:`prepare` (precompute per-column data from ``X``) and
    :meth:`similarity` (similarity of every column to one column).

    Attributes
    ----------
    aggregate : {"max", "mean"}
        How similarities to the chosen columns combine.

    Examples
    --------
    A penalty counting how often two columns share a sign:

    >>> class SameSign(BasePenalty):
    ...     name = "same-sign-doc-example"
    ...     def prepare(self, X):
    ...         self._S = np.sign(X)
    ...         return self
    ...     def similarity(self, j):
    ...         return (self._S == self._S[:, [j]]).mean(axis=0)
    >>> X = np.array([[1.0, -2.0, 3.0], [-1.0, -1.0, 2.0], [2.0, 1.0, 1.0], [1.0, 2.0, -1.0]])
    >>> SameSign("max").prepare(X).similarity(0).tolist()
    [1.0, 0.75, 0.5]
    """

    name: ClassVar[str] = ""

    def __init__(self, aggregate: str = "mean") -> None:
        if aggregate not in ("max", "mean"):
            raise InputError(f"redundancy aggregate must be 'max' or 'mean', got {aggregate!r}")
        self.aggregate = aggregate

    @abstractmethod
    def prepare(self, X: np.ndarray) -> BasePenalty:
        """Precompute from the data (called once); returns self."""

    @abstractmethod
    def similarity(self, j: int) -> np.ndarray:
        """Similarity (>= 0) of every column to column ``j``, shape (n_features,)."""


class AbsCorrelationPenalty(BasePenalty):
    """Absolute Pearson correlation with the chosen columns (max or mean).

    Examples
    --------
    >>> X = np.array([[1., 0., 5.], [2., 1., 3.], [3., 0., 4.], [4., 1., 1.]])
    >>> pen = AbsCorrelationPenalty("max").prepare(X)
    >>> pen.similarity(0).round(3).tolist()
    [1.0, 0.447, 0.832]
    """

    name = "abs_corr"

    def prepare(self, X: np.ndarray) -> AbsCorrelationPenalty:
        self._Z = standardize_columns(X)
        return self

    def similarity(self, j: int) -> np.ndarray:
        Z = self._Z
        s = np.abs(Z.T @ Z[:, j]) / Z.shape[0]
        return np.minimum(s, 1.0)


class MutualInfoPenalty(BasePenalty):
    """Plug-in mutual information (nats) with the chosen columns (mean: mRMR).

    Parameters
    ----------
    aggregate : {"mean", "max"}, default="mean"
    n_bins : int, default=5
        Quantile bins for continuous columns.
    max_levels : int, default=10
        Integer columns with at most this many levels are used as they are.

    Examples
    --------
    >>> X = np.array([[0, 0, 1], [0, 0, 0], [1, 1, 1], [1, 1, 0]], dtype=float)
    >>> MutualInfoPenalty().prepare(X).similarity(0).round(6).tolist()
    [0.693147, 0.693147, 0.0]
    """

    name = "mutual_info"

    def __init__(self, aggregate: str = "mean", n_bins: int = 5,
                 max_levels: int = DEFAULT_MAX_LEVELS) -> None:
        super().__init__(aggregate)
        self.n_bins = check_positive_int(n_bins, "n_bins", 2)
        self.max_levels = check_positive_int(max_levels, "max_levels", 1)

    # Level-indicator matrices larger than this (bytes) fall back to counting with bincount.
    _INDICATOR_LIMIT = 1 << 30

    def prepare(self, X: np.ndarray) -> MutualInfoPenalty:
        codes = discretize_matrix(np.asarray(X, dtype=float), self.n_bins, self.max_levels)
        # "missing" is one more level of its column
        top = codes.max(axis=0, initial=-1)
        codes = np.where(codes < 0, top + 1, codes)
        self._codes = codes
        self._levels = codes.max(axis=0, initial=0) + 1
        n, p = codes.shape
        n_lev = int(self._levels.max(initial=1))
        self._indicators = None
        if n < 2**24 and n * p * n_lev * 4 <= self._INDICATOR_LIMIT:
            # (n, L * p) float32 indicators: a column's tables against every other
            # column are then one matrix product (counts are exact below 2**24 rows).
            ind = np.zeros((n, n_lev, p), dtype=np.float32)
            rows = np.arange(n)[:, None]
            ind[rows, codes, np.arange(p)[None, :]] = 1.0
            self._indicators = ind.reshape(n, n_lev * p)
            self._n_lev = n_lev
        return self

    def similarity(self, j: int) -> np.ndarray:
        target = self._codes[:, j]
        k = int(self._levels[j])
        if self._indicators is None:
            tables = joint_tables(self._codes, target, k)
        else:
            onehot = np.zeros((target.size, k), dtype=np.float32)
            onehot[np.arange(target.size), target] = 1.0
            p = self._codes.shape[1]
            prod = self._indicators.T @ onehot  # (L * p, k)
            tables = prod.reshape(self._n_lev, p, k).transpose(1, 0, 2).astype(float)
        return plugin_mi_tables(tables)


REDUNDANCY_PENALTIES: dict[str, tuple[type[BasePenalty], dict]] = {
    "max_abs_corr": (AbsCorrelationPenalty, {"aggregate": "max"}),
    "mean_abs_corr": (AbsCorrelationPenalty, {"aggregate": "mean"}),
    "mutual_info": (MutualInfoPenalty, {"aggregate": "mean"}),
}
"""Named penalties: name -> (class, default options)."""


def make_penalty(spec: str | dict | BasePenalty) -> BasePenalty:
    """A penalty from a name, a ``{"name": ..., **options}`` mapping or an instance.

    Examples
    --------
    >>> make_penalty("max_abs_corr").aggregate
    'max'
    >>> make_penalty({"name": "mutual_info", "n_bins": 3}).n_bins
    3
    """
    if isinstance(spec, BasePenalty):
        return spec
    opts: dict[str, Any] = {}
    if isinstance(spec, dict):
        opts = dict(spec)
        spec = opts.pop("name", None)
    if spec not in REDUNDANCY_PENALTIES:
        raise InputError(f"unknown redundancy penalty {spec!r}; known: "
                         f"{', '.join(sorted(REDUNDANCY_PENALTIES))}", key="redundancy")
    cls, defaults = REDUNDANCY_PENALTIES[spec]
    try:
        return cls(**{**defaults, **opts})
    except TypeError as exc:
        raise InputError(f"redundancy penalty '{spec}': {exc}", key="redundancy") from None


class RunningRedundancy:
    """Per-candidate redundancy with the chosen set, updated one addition at a time.

    Parameters
    ----------
    penalty : BasePenalty
        A prepared penalty (``penalty.prepare(X)`` already called).
    n_features : int
    cache : dict, optional
        Shared ``{column: similarity vector}`` store, so that several greedy runs on the
        same data compute each similarity column once.

    Examples
    --------
    >>> X = np.array([[1., 1., 0.], [2., 2., 1.], [3., 3.5, 0.], [4., 4., 1.]])
    >>> run = RunningRedundancy(AbsCorrelationPenalty("max").prepare(X), 3)
    >>> run.values().tolist()
    [0.0, 0.0, 0.0]
    >>> run.add(0)
    >>> run.values().round(3).tolist()
    [1.0, 0.984, 0.447]
    """

    def __init__(self, penalty: BasePenalty, n_features: int,
                 cache: dict[int, np.ndarray] | None = None) -> None:
        self.penalty = penalty
        self.total = np.zeros(n_features)
        self.largest = np.zeros(n_features)
        self.count = 0
        self.cache = {} if cache is None else cache

    def add(self, j: int) -> None:
        """Account for column ``j`` joining the chosen set (O(p) update)."""
        s = self.cache.get(j)
        if s is None:
            s = self.penalty.similarity(j)
            self.cache[j] = s
        self.total += s
        np.maximum(self.largest, s, out=self.largest)
        self.count += 1

    def values(self) -> np.ndarray:
        """Current redundancy of every column (0 before anything is chosen)."""
        if self.count == 0:
            return np.zeros_like(self.total)
        if self.penalty.aggregate == "max":
            return self.largest.copy()
        return self.total / self.count
