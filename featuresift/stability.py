"""Stability of a feature choice across resamples.

When a search is re-run on resampled data (outer CV folds, bootstraps), the chosen
subsets differ. Two published indices summarise how much:

* :func:`kuncheva_index` — Kuncheva (2007), for subsets of equal size, corrected for
  the overlap expected by chance;
* :func:`nogueira_stability` — Nogueira, Sechidis & Brown (2018), defined for subsets
  of different sizes; equals the mean pairwise Kuncheva index when all sizes agree.

Both are 1 for identical choices and about 0 for choices no better than chance.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from itertools import combinations

import numpy as np

from featuresift.errors import InputError

__all__ = ["kuncheva_index", "mean_kuncheva", "nogueira_stability", "selection_matrix"]


def kuncheva_index(a: Iterable[int], b: Iterable[int], n_features: int) -> float:
    """Kuncheva consistency index of two subsets of equal size.

    ``I = (r n - k^2) / (k (n - k))`` with ``r = |a ∩ b|``, ``k = |a| = |b|``.

    Parameters
    ----------
    a, b : iterables of int
        Column indices of the two subsets.
    n_features : int
        Number of candidate features ``n``.

    Raises
    ------
    InputError
        If the sizes differ, or ``k`` is 0 or ``n`` (the index is undefined there).

    Examples
    --------
    >>> round(kuncheva_index({1, 2, 3}, {1, 2, 4}, 10), 6)
    0.52381
    """
    sa, sb = set(a), set(b)
    k = len(sa)
    if len(sb) != k:
        raise InputError(f"the Kuncheva index needs equal sizes, got {len(sa)} and {len(sb)}")
    n = int(n_features)
    if k == 0 or k >= n:
        raise InputError(f"the Kuncheva index is undefined for subset size {k} of {n} features")
    r = len(sa & sb)
    return (r * n - k * k) / (k * (n - k))


def mean_kuncheva(subsets: Sequence[Iterable[int]], n_features: int) -> float:
    """Mean Kuncheva index over all pairs of equal-size subsets.

    Examples
    --------
    >>> round(mean_kuncheva([{0, 1}, {0, 1}, {0, 2}], 5), 6)
    0.444444
    """
    sets = [set(s) for s in subsets]
    if len(sets) < 2:
        raise InputError("at least two subsets are needed")
    pairs = [kuncheva_index(a, b, n_features) for a, b in combinations(sets, 2)]
    return float(np.mean(pairs))


def selection_matrix(subsets: Sequence[Iterable[int]], n_features: int) -> np.ndarray:
    """Binary matrix ``Z`` (runs × features) with ``Z[i, f] = 1`` if run i chose f.

    Examples
    --------
    >>> selection_matrix([[0, 2], [2], []], n_features=3)
    array([[1., 0., 1.],
           [0., 0., 1.],
           [0., 0., 0.]])
    """
    Z = np.zeros((len(subsets), int(n_features)), dtype=float)
    for i, s in enumerate(subsets):
        for f in s:
            if not 0 <= int(f) < n_features:
                raise InputError(f"column index {f} out of range 0..{n_features - 1}")
            Z[i, int(f)] = 1.0
    return Z


def nogueira_stability(
    subsets: Sequence[Iterable[int]] | np.ndarray, n_features: int | None = None
) -> float:
    """Stability estimator of Nogueira, Sechidis & Brown (2018).

    ``Φ = 1 - mean_f(s_f^2) / ((k̄/d)(1 - k̄/d))`` where ``s_f^2`` is the unbiased
    variance of column f of the selection matrix and ``k̄`` the mean subset size.

    Parameters
    ----------
    subsets : sequence of iterables of int, or binary array of shape (M, d)
        The subsets chosen in M runs.
    n_features : int, optional
        ``d``; required unless a matrix is given.

    Examples
    --------
    >>> round(nogueira_stability([[0, 1], [0, 1], [0, 2]], 5), 6)
    0.444444
    """
    if isinstance(subsets, np.ndarray) and subsets.ndim == 2:
        Z = subsets.astype(float)
    else:
        if n_features is None:
            raise InputError("n_features is required when subsets are given as index lists")
        Z = selection_matrix(list(subsets), n_features)
    M, d = Z.shape
    if M < 2:
        raise InputError("at least two runs are needed to measure stability")
    kbar = Z.sum(axis=1).mean()
    if kbar == 0 or kbar == d:
        raise InputError("stability is undefined when every run selects none or all features")
    p = Z.mean(axis=0)
    s2 = M / (M - 1) * p * (1 - p)
    return float(1 - s2.mean() / ((kbar / d) * (1 - kbar / d)))
