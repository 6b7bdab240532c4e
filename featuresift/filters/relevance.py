"""Univariate relevance scorers: one score (and, where the test defines one, a p-value) per column.

Every scorer has the signature ``scorer(X, y, **options) -> (scores, pvalues_or_None)``
with ``X`` a float array of shape (n_samples, n_features) and ``y`` of shape
(n_samples,). Larger scores mean more relevant. Scorers are registered by name in
:data:`RELEVANCE_SCORERS` (usable from YAML as ``relevance: anova_f`` or
``relevance: {name: chi2, n_bins: 4}``); any callable with that signature can be
passed wherever a scorer name is accepted.

Built in
--------
``anova_f`` (classification)
    One-way ANOVA F of the column across classes; p-value from F(k-1, n-k). Same
    statistic as :func:`scipy.stats.f_oneway` and :func:`sklearn.feature_selection.f_classif`.
``chi2`` (classification; "contingency" mode)
    Pearson chi-square test of independence on the feature-by-class table. Discrete
    columns (integer values, at most ``max_levels`` = 10 levels) are used as they
    are; other columns are cut into ``n_bins`` = 5 quantile bins (see
    :func:`~featuresift.filters._common.discretize_column`). No Yates continuity
    correction, also for 2x2 tables; dof = (levels - 1)(classes - 1).
    This mode is valid for any data type and is the default.
``chi2_frequency`` (classification; "frequency" mode)
    scikit-learn's ``chi2`` statistic: non-negative values are read as frequencies
    (counts), class-wise sums are compared with what class sizes predict. Use it for
    count data (colony counts, word counts); it needs ``X >= 0``.
``mutual_info`` (classification and regression, seeded)
    Mutual information in nats. Discrete columns with a discrete target use the
    plug-in estimator (empirical joint distribution; exact on the data), other
    cases use scikit-learn's k-nearest-neighbour estimators
    (:func:`~sklearn.feature_selection.mutual_info_classif`,
    :func:`~sklearn.feature_selection.mutual_info_regression`, seeded by
    ``seed``). ``estimator="plugin"`` bins every column (and a
    continuous target) and uses the plug-in estimator throughout. A p-value (the G
    test, G = 2 N I with dof (levels - 1)(classes - 1)) is given for plug-in columns.
``pearson``, ``spearman`` (regression, or two classes coded 0/1)
    Absolute correlation with the target; two-sided p-value from the t distribution
    with n - 2 degrees of freedom, as :func:`scipy.stats.pearsonr` and
    :func:`scipy.stats.spearmanr` (average ranks for ties).
``permutation`` (classification and regression)
    Model-based: mean drop in the held-out score when a column is permuted,
    averaged over CV folds (fit on each training part, permute on its test part).
    No p-value.
``l1_order`` (classification and regression)
    Entry order on the L1 (lasso / L1-logistic) path; see :mod:`featuresift.filters.l1path`.

Missing values
--------------
Statistical scorers use **per-feature pairwise deletion**: the rows where a column
is NaN are dropped for that column only (its test uses the remaining rows, so
``n`` and the degrees of freedom may differ between columns). A NaN in ``y`` is an
error. ``permutation`` imputes medians inside its pipeline when it builds the
default model.

Degenerate columns
------------------
A constant column (or one left with fewer than two classes, or fewer than three
rows for correlations) gets score 0 and p-value 1: it cannot separate anything.
An ANOVA column that is constant within every class but differs between classes
gets F = inf and p = 0.

Limits
------
Univariate scores see one column at a time. Two inputs whose exclusive-or is the
class (the XOR example of Cover & Thomas style information theory texts) each score
zero relevance although together they determine the class; only a multivariate
method - a wrapper search - finds such pairs.
"""

from __future__ import annotations

import inspect
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import special, stats

from featuresift._compat import renamed_keywords
from featuresift.errors import InputError
from featuresift.filters._common import (
    DEFAULT_MAX_LEVELS,
    check_positive_int,
    check_xy,
    discretize_column,
    discretize_matrix,
    encode_labels,
    infer_task,
    is_discrete_column,
    joint_tables,
    numeric_target,
    plugin_mi_tables,
)

__all__ = [
    "RelevanceScorer",
    "Relevance",
    "RELEVANCE_SCORERS",
    "register_relevance",
    "relevance_scores",
    "anova_f",
    "chi_square",
    "mutual_info",
    "plugin_mutual_info",
    "pearson",
    "spearman",
    "permutation_relevance",
]

ScorerFn = Callable[..., tuple[np.ndarray, np.ndarray | None]]


# ---------------------------------------------------------------- helpers
def _columns_by_nan(X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Indices of columns without NaN and with NaN."""
    has = np.isnan(X).any(axis=0)
    return np.where(~has)[0], np.where(has)[0]


BLOCK_VALUES = 1 << 20
"""Values per block of columns that the column-wise scorers work on (8 MB of float64)."""


def _per_column(X: np.ndarray, block: Callable, *targets: np.ndarray):
    """Run ``block(X_sub, *targets_sub)`` on blocks of the clean columns and on each NaN
    column with its NaN rows deleted. Returns (scores, pvalues).

    Every scorer passed here treats each column on its own, so blocks of columns give
    the scores of one call on all of them (up to the last bits of a matrix product),
    while the scorer's temporaries stay at the size of a block (:data:`BLOCK_VALUES`
    values) rather than several copies of ``X``.
    """
    p = X.shape[1]
    scores = np.zeros(p)
    pvals = np.ones(p)
    clean, dirty = _columns_by_nan(X)
    step = max(1, BLOCK_VALUES // max(1, X.shape[0]))
    for lo in range(0, clean.size, step):
        cols = clean[lo:lo + step]
        scores[cols], pvals[cols] = block(X[:, cols], *targets)
    for j in dirty:
        ok = ~np.isnan(X[:, j])
        scores[j], pvals[j] = (v[0] for v in block(X[ok, j:j + 1], *(t[ok] for t in targets)))
    return scores, pvals


# --------------------------------------------------------------------- ANOVA
def _anova_block(X: np.ndarray, codes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    p = X.shape[1]
    present, codes = np.unique(codes, return_inverse=True)
    k = present.size
    n = X.shape[0]
    if k < 2 or n <= k:
        return np.zeros(p), np.ones(p)
    # Two-pass sums on centred data (stable for data with many constant leading digits).
    Xc = X - X.mean(axis=0)
    counts = np.bincount(codes, minlength=k).astype(float)
    onehot = np.zeros((n, k))
    onehot[np.arange(n), codes] = 1.0
    means = (onehot.T @ Xc) / counts[:, None]
    grand = Xc.mean(axis=0)
    ss_between = (counts[:, None] * (means - grand) ** 2).sum(axis=0)
    ss_within = ((Xc - means[codes]) ** 2).sum(axis=0)
    df_b, df_w = k - 1, n - k
    with np.errstate(divide="ignore", invalid="ignore"):
        f = (ss_between / df_b) / (ss_within / df_w)
    pv = special.fdtrc(df_b, df_w, f)
    constant = np.ptp(X, axis=0) == 0
    f[constant], pv[constant] = 0.0, 1.0
    inf = ~constant & (ss_within == 0)
    f[inf], pv[inf] = np.inf, 0.0
    return f, pv


def anova_f(X: Any, y: Any) -> tuple[np.ndarray, np.ndarray]:
    """One-way ANOVA F statistic of each column across the classes of ``y``.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    y : array-like of shape (n_samples,)
        Class labels.

    Returns
    -------
    scores : ndarray of shape (n_features,)
        F = (SS_between / (k - 1)) / (SS_within / (n - k)).
    pvalues : ndarray of shape (n_features,)
        Upper tail of F(k - 1, n - k).

    Examples
    --------
    >>> f, p = anova_f([[1.0], [2.0], [3.0], [5.0]], [0, 0, 1, 1])
    >>> round(float(f[0]), 4)
    5.0
    """
    X, y, _ = check_xy(X, y)
    codes, _ = encode_labels(y)
    return _per_column(X, _anova_block, codes)


# ----------------------------------------------------------------- chi-square
def _chi2_frequency_block(X: np.ndarray, codes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    present, codes = np.unique(codes, return_inverse=True)
    k = present.size
    n, p = X.shape
    onehot = np.zeros((n, k))
    onehot[np.arange(n), codes] = 1.0
    observed = onehot.T @ X
    expected = np.outer(onehot.mean(axis=0), X.sum(axis=0))
    with np.errstate(divide="ignore", invalid="ignore"):
        stat = ((observed - expected) ** 2 / expected).sum(axis=0)
    zero = X.sum(axis=0) == 0
    stat[zero] = 0.0
    if k < 2:
        return np.zeros(p), np.ones(p)
    return stat, stats.chi2.sf(stat, k - 1)


def pearson_chi_square_table(table: np.ndarray) -> tuple[float, float, int]:
    """Pearson X^2 of a contingency table (no continuity correction), p-value and dof.

    Rows or columns that are all zero are dropped first. A table with one row or
    one column left gives (0, 1, 0).

    Examples
    --------
    >>> stat, p, dof = pearson_chi_square_table([[10, 10, 20], [20, 20, 20]])
    >>> round(stat, 6), dof
    (2.777778, 2)
    """
    t = np.asarray(table, dtype=float)
    t = t[t.sum(axis=1) > 0][:, t.sum(axis=0) > 0]
    if t.shape[0] < 2 or t.shape[1] < 2:
        return 0.0, 1.0, 0
    expected = np.outer(t.sum(axis=1), t.sum(axis=0)) / t.sum()
    stat = float(((t - expected) ** 2 / expected).sum())
    dof = (t.shape[0] - 1) * (t.shape[1] - 1)
    return stat, float(stats.chi2.sf(stat, dof)), dof


def chi_square(
    X: Any,
    y: Any,
    mode: str = "contingency",
    n_bins: int = 5,
    max_levels: int = DEFAULT_MAX_LEVELS,
) -> tuple[np.ndarray, np.ndarray]:
    """Chi-square relevance of each column to the classes of ``y``.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    y : array-like of shape (n_samples,)
        Class labels.
    mode : {"contingency", "frequency"}, default="contingency"
        ``"contingency"``: Pearson test of independence on the (binned) feature-by-class
        table, no Yates correction. ``"frequency"``: scikit-learn's ``chi2`` statistic,
        which treats non-negative values as frequencies (needs ``X >= 0``).
    n_bins : int, default=5
        Quantile bins for continuous columns (contingency mode).
    max_levels : int, default=10
        Integer columns with at most this many levels are used as they are.

    Returns
    -------
    scores, pvalues : ndarray of shape (n_features,)

    Examples
    --------
    >>> X = [[0], [0], [1], [1], [1], [0]]
    >>> s, p = chi_square(X, [0, 0, 1, 1, 1, 1])
    >>> round(float(s[0]), 4)
    3.0
    """
    X, y, names = check_xy(X, y)
    codes, k = encode_labels(y)
    if mode == "frequency":
        neg = np.nanmin(X, axis=0) < 0 if X.size else np.zeros(0, bool)
        if np.any(neg):
            col = names[int(np.where(neg)[0][0])]
            raise InputError(
                f"column '{col}' has negative values; chi2 frequency mode needs counts >= 0 "
                "(use mode='contingency')"
            )
        return _per_column(X, _chi2_frequency_block, codes)
    if mode != "contingency":
        raise InputError(f"chi2 mode must be 'contingency' or 'frequency', got {mode!r}")
    n_bins = check_positive_int(n_bins, "n_bins", 2)
    tables = joint_tables(discretize_matrix(X, n_bins, max_levels), codes, k)
    return _chi2_of_tables(tables)


def _chi2_of_tables(tables: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Pearson X^2 and p-value of each table of a (p, L, k) stack (empty rows/columns
    dropped; a table left with one row or column gives 0 and 1)."""
    n = tables.sum(axis=(1, 2))
    a = tables.sum(axis=2, keepdims=True)
    b = tables.sum(axis=1, keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        expected = a * b / n[:, None, None]
        cells = np.where(expected > 0, (tables - expected) ** 2 / expected, 0.0)
    stat = cells.sum(axis=(1, 2))
    dof = ((a[:, :, 0] > 0).sum(axis=1) - 1) * ((b[:, 0, :] > 0).sum(axis=1) - 1)
    ok = dof > 0
    pvals = np.ones(stat.size)
    pvals[ok] = stats.chi2.sf(stat[ok], dof[ok])
    stat[~ok] = 0.0
    return stat, pvals


# ---------------------------------------------------------- mutual information
def plugin_mutual_info(a: np.ndarray, b: np.ndarray) -> float:
    """Plug-in mutual information (nats) of two integer-coded vectors.

    The estimate is the mutual information of the empirical joint distribution,
    ``sum p(a,b) log(p(a,b) / (p(a) p(b)))``; it is exact for data that realise a
    distribution.

    Examples
    --------
    >>> round(plugin_mutual_info(np.array([0, 0, 1, 1]), np.array([0, 0, 1, 1])), 6)
    0.693147
    """
    a = np.asarray(a, dtype=np.intp)
    b = np.asarray(b, dtype=np.intp)
    n = a.size
    if n == 0:
        return 0.0
    _, a = np.unique(a, return_inverse=True)
    _, b = np.unique(b, return_inverse=True)
    kb = int(b.max()) + 1
    joint = np.bincount(a * kb + b)
    nz = np.nonzero(joint)[0]
    c = joint[nz].astype(float)
    pa = np.bincount(a).astype(float)
    pb = np.bincount(b).astype(float)
    terms = c * (np.log(c) + np.log(n) - np.log(pa[nz // kb]) - np.log(pb[nz % kb]))
    return max(float(terms.sum() / n), 0.0)


@renamed_keywords(random_state="seed")
def mutual_info(
    X: Any,
    y: Any,
    task: str | None = None,
    estimator: str = "auto",
    n_bins: int = 5,
    max_levels: int = DEFAULT_MAX_LEVELS,
    n_neighbors: int = 3,
    seed: int | None = 0,
) -> tuple[np.ndarray, np.ndarray | None]:
    """Mutual information (nats) between each column and the target.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    y : array-like of shape (n_samples,)
    task : {"classification", "regression"}, optional
        Inferred from ``y`` when not given.
    estimator : {"auto", "plugin", "knn"}, default="auto"
        ``"auto"``: plug-in for discrete columns with a class target, kNN otherwise.
        ``"plugin"``: bin every column (and a regression target) and use the plug-in
        estimator. ``"knn"``: scikit-learn's kNN estimators for every column.
    n_bins, max_levels : int
        Discretisation for the plug-in estimator (see :func:`chi_square`).
    n_neighbors : int, default=3
        Neighbours of the kNN estimators.
    seed : int, optional
        Seed of the small noise scikit-learn adds to continuous columns.

    Returns
    -------
    scores : ndarray
        Estimated mutual information, >= 0.
    pvalues : ndarray or None
        G-test p-values for plug-in columns (NaN for kNN columns); None when no
        column used the plug-in estimator.

    Examples
    --------
    >>> s, p = mutual_info([[0], [0], [1], [1]], [0, 0, 1, 1])
    >>> round(float(s[0]), 6)
    0.693147
    """
    from sklearn.feature_selection import mutual_info_classif, mutual_info_regression

    X, y, _ = check_xy(X, y)
    task = infer_task(y, task)
    if estimator not in ("auto", "plugin", "knn"):
        raise InputError(f"mutual_info estimator must be 'auto', 'plugin' or 'knn', "
                         f"got {estimator!r}")
    n, p = X.shape
    if task == "classification":
        ycodes, _ = encode_labels(y)
        ydisc = True
    else:
        yf = numeric_target(y)
        ydisc = estimator == "plugin" or is_discrete_column(yf, max_levels)
        ycodes = discretize_column(yf, n_bins, max_levels) if ydisc else None
    if estimator == "plugin":
        discrete = np.ones(p, bool)  # unused: every column is binned
    else:
        discrete = np.array([is_discrete_column(X[:, j], max_levels) for j in range(p)], bool)
    if estimator == "plugin":
        use_plugin = np.ones(p, bool)
    elif estimator == "knn":
        use_plugin = np.zeros(p, bool)
    else:
        use_plugin = discrete & ydisc
    scores = np.zeros(p)
    pvals = np.full(p, np.nan)
    plug = np.where(use_plugin)[0]
    if plug.size:
        codes = discretize_matrix(X[:, plug], n_bins, max_levels)
        tables = joint_tables(codes, ycodes, int(ycodes.max()) + 1)
        mi = plugin_mi_tables(tables)
        scores[plug] = mi
        a = (tables.sum(axis=2) > 0).sum(axis=1)
        b = (tables.sum(axis=1) > 0).sum(axis=1)
        dof = (a - 1) * (b - 1)
        g = 2 * tables.sum(axis=(1, 2)) * mi
        pvals[plug] = np.where(dof > 0, stats.chi2.sf(g, np.maximum(dof, 1)), 1.0)
    knn_cols = np.where(~use_plugin)[0]
    func = mutual_info_classif if task == "classification" else mutual_info_regression
    target = y if task == "classification" else numeric_target(y)
    clean = [j for j in knn_cols if not np.isnan(X[:, j]).any()]
    dirty = [j for j in knn_cols if np.isnan(X[:, j]).any()]
    if clean:
        cols = np.asarray(clean)
        scores[cols] = func(X[:, cols], target, discrete_features=discrete[cols],
                            n_neighbors=n_neighbors, random_state=seed)
    for j in dirty:
        ok = ~np.isnan(X[:, j])
        if ok.sum() <= n_neighbors:
            continue
        scores[j] = func(X[ok, j:j + 1], target[ok], discrete_features=discrete[j:j + 1],
                         n_neighbors=n_neighbors, random_state=seed)[0]
    return scores, (pvals if use_plugin.any() else None)


# ---------------------------------------------------------------- correlation
def _corr_block(X: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    n, p = X.shape
    if n < 3:
        return np.zeros(p), np.ones(p)
    Xc = X - X.mean(axis=0)
    tc = t - t.mean()
    sx = np.sqrt((Xc**2).sum(axis=0))
    st = np.sqrt((tc**2).sum())
    with np.errstate(divide="ignore", invalid="ignore"):
        r = (Xc.T @ tc) / (sx * st)
    bad = (sx == 0) | (st == 0) | (np.ptp(X, axis=0) == 0)
    r = np.clip(np.where(bad, 0.0, r), -1.0, 1.0)
    df = n - 2
    with np.errstate(divide="ignore"):
        tstat = np.abs(r) * np.sqrt(df / np.maximum(1.0 - r**2, 0.0))
    pv = 2.0 * special.stdtr(df, -tstat)
    pv[bad] = 1.0
    return np.abs(r), pv


def _two_class_or_numeric(y: np.ndarray, task: str | None, scorer: str) -> np.ndarray:
    if task == "classification" or (task is None and y.dtype.kind not in "biuf"):
        codes, k = encode_labels(y)
        if k != 2:
            raise InputError(f"{scorer} needs a regression target or exactly two classes "
                             f"(got {k} classes); use anova_f or mutual_info")
        return codes.astype(float)
    return numeric_target(y)


def pearson(X: Any, y: Any, task: str | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Absolute Pearson correlation of each column with the target, and its p-value.

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
    y : array-like of shape (n_samples,)
        Numeric target (or two classes, coded 0/1: point-biserial correlation).
    task : {"classification", "regression"}, optional

    Returns
    -------
    scores : ndarray
        ``|r|``.
    pvalues : ndarray
        Two-sided, t distribution with n - 2 degrees of freedom.

    Examples
    --------
    >>> s, p = pearson([[1.0], [2.0], [3.0], [4.0]], [2.0, 4.0, 6.0, 8.5])
    >>> bool(s[0] > 0.99)
    True
    """
    X, y, _ = check_xy(X, y)
    t = _two_class_or_numeric(y, task, "pearson")
    return _per_column(X, _corr_block, t)


def _rank_block(X: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    return _corr_block(stats.rankdata(X, axis=0), stats.rankdata(t))


def spearman(X: Any, y: Any, task: str | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Absolute Spearman rank correlation of each column with the target, and its p-value.

    Ranks are average ranks (ties share their mean rank), computed on the rows
    kept for each column. The p-value is the two-sided t approximation used by
    :func:`scipy.stats.spearmanr`.

    Examples
    --------
    >>> s, p = spearman([[1.0], [2.0], [3.0], [4.0]], [1.0, 8.0, 27.0, 64.0])
    >>> round(float(s[0]), 12)
    1.0
    """
    X, y, _ = check_xy(X, y)
    t = _two_class_or_numeric(y, task, "spearman")
    return _per_column(X, _rank_block, t)


# ------------------------------------------------------ permutation importance
def _default_model(task: str):
    from sklearn.impute import SimpleImputer
    from sklearn.linear_model import LogisticRegression, RidgeCV
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    last = LogisticRegression(max_iter=1000) if task == "classification" else RidgeCV()
    return make_pipeline(SimpleImputer(strategy="median"), StandardScaler(), last)


@renamed_keywords(random_state="seed")
def permutation_relevance(
    X: Any,
    y: Any,
    task: str | None = None,
    estimator: Any = None,
    cv: Any = 5,
    n_repeats: int = 5,
    scoring: Any = None,
    seed: int | None = 0,
) -> tuple[np.ndarray, None]:
    """Permutation importance averaged over CV folds (model-based relevance).

    On each split the model is fitted on the training part; each column of the test
    part is permuted ``n_repeats`` times and the mean drop of the score is recorded.
    The relevance is the mean over folds. Because the drop is measured on rows the
    model did not see, the score reflects what the model uses to generalise.

    Parameters
    ----------
    X, y : array-like
    task : {"classification", "regression"}, optional
    estimator : scikit-learn estimator, optional
        Default: median imputation, standardisation and logistic regression
        (classification) or ``RidgeCV`` (regression).
    cv : int or CV splitter, default=5
    n_repeats : int, default=5
    scoring : str or callable, optional
    seed : int, optional
        Seed of the permutations (and of a shuffled splitter when ``cv`` is an int: it
        is not shuffled).

    Returns
    -------
    scores : ndarray
        Mean score drop; may be slightly negative for useless columns.
    pvalues : None

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> X, y = load_iris(return_X_y=True)
    >>> s, _ = permutation_relevance(X, y, cv=3, n_repeats=2)
    >>> int(np.argmax(s)) in (2, 3)
    True
    """
    from sklearn.base import clone
    from sklearn.inspection import permutation_importance
    from sklearn.model_selection import check_cv

    X, y, _ = check_xy(X, y)
    task = infer_task(y, task)
    n_repeats = check_positive_int(n_repeats, "n_repeats")
    model = _default_model(task) if estimator is None else estimator
    splitter = check_cv(cv, y, classifier=task == "classification")
    total = np.zeros(X.shape[1])
    n_folds = 0
    for k, (tr, te) in enumerate(splitter.split(X, y)):
        fitted = clone(model).fit(X[tr], y[tr])
        fold_seed = None if seed is None else int(seed) + k
        res = permutation_importance(fitted, X[te], y[te], scoring=scoring,
                                     n_repeats=n_repeats, random_state=fold_seed)
        total += res.importances_mean
        n_folds += 1
    return total / n_folds, None


# ------------------------------------------------------------------- registry
@dataclass(frozen=True)
class RelevanceScorer:
    """A registered relevance scorer.

    Attributes
    ----------
    name : str
    func : callable
        ``func(X, y, **options) -> (scores, pvalues_or_None)``.
    tasks : tuple of str
        Tasks the scorer supports.
    defaults : dict
        Options passed before the user's (e.g. ``{"mode": "frequency"}``).

    Examples
    --------
    >>> entry = RELEVANCE_SCORERS["chi2_frequency"]
    >>> entry.name, entry.tasks, entry.defaults
    ('chi2_frequency', ('classification',), {'mode': 'frequency'})
    """

    name: str
    func: ScorerFn
    tasks: tuple[str, ...]
    defaults: dict


RELEVANCE_SCORERS: dict[str, RelevanceScorer] = {}
"""Registered relevance scorers by name (YAML ``relevance`` looks here)."""


def register_relevance(
    name: str, func: ScorerFn, tasks: tuple[str, ...] = ("classification", "regression"),
    **defaults: Any,
) -> RelevanceScorer:
    """Register ``func`` under ``name`` (replacing an earlier one) and return the entry.

    Examples
    --------
    >>> def variance(X, y):
    ...     return np.nanvar(np.asarray(X, float), axis=0), None
    >>> register_relevance("variance-doc-example", variance).name
    'variance-doc-example'
    """
    entry = RelevanceScorer(name, func, tuple(tasks), dict(defaults))
    RELEVANCE_SCORERS[name] = entry
    return entry


register_relevance("anova_f", anova_f, ("classification",))
register_relevance("chi2", chi_square, ("classification",), mode="contingency")
register_relevance("chi2_frequency", chi_square, ("classification",), mode="frequency")
register_relevance("mutual_info", mutual_info)
register_relevance("pearson", pearson)
register_relevance("spearman", spearman)
register_relevance("permutation", permutation_relevance)


@dataclass(frozen=True)
class Relevance:
    """Relevance of every column.

    Attributes
    ----------
    scores : ndarray of shape (n_features,)
        Larger is more relevant.
    pvalues : ndarray or None
        P-values where the scorer's test defines them (NaN where a column has none).
    scorer : str
        Name of the scorer (``"callable:<name>"`` for a plain callable).
    task : str

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> X, y = load_iris(return_X_y=True)
    >>> rel = relevance_scores(X, y, "anova_f")
    >>> rel.scorer, rel.task, rel.scores.round(1).tolist()
    ('anova_f', 'classification', [119.3, 49.2, 1180.2, 960.0])
    >>> bool((rel.pvalues < 1e-10).all())
    True
    """

    scores: np.ndarray
    pvalues: np.ndarray | None
    scorer: str
    task: str


def _split_spec(spec: Any) -> tuple[Any, dict]:
    if isinstance(spec, dict):
        opts = dict(spec)
        if "name" not in opts:
            raise InputError("a relevance scorer given as a mapping needs a 'name'",
                             key="relevance")
        return opts.pop("name"), opts
    return spec, {}


def relevance_scores(
    X: Any, y: Any, scorer: str | dict | ScorerFn = "anova_f", task: str | None = None,
    *, categorical: Sequence[int] | None = None, **options: Any,
) -> Relevance:
    """Score every column with a registered scorer (name or mapping) or a callable.

    Parameters
    ----------
    X : array-like or DataFrame of shape (n_samples, n_features)
    y : array-like of shape (n_samples,)
    scorer : str, dict or callable, default="anova_f"
        A name from :data:`RELEVANCE_SCORERS`, ``{"name": ..., **options}``, or
        ``scorer(X, y, **options) -> (scores, pvalues_or_None)``.
    task : {"classification", "regression"}, optional
        Inferred from ``y`` when not given; passed on to scorers that accept it.
    categorical : sequence of int, optional
        Positions of categorical (or text) columns when ``X`` holds their codes as
        numbers; default: a DataFrame's category and text columns.
    **options
        Passed to the scorer.

    Returns
    -------
    Relevance

    Notes
    -----
    Categories have no order or scale, so a categorical column is judged by its
    category-by-class table (category-by-quantile-bin of ``y`` for a numeric target):
    the p-value is the Pearson chi-square test's, and the score is put on the scorer's
    own scale so that columns still rank together: the chi-square statistic for
    ``chi2`` / ``chi2_frequency``, the table's plug-in mutual information (nats) for
    ``mutual_info``, and for ``anova_f``, ``pearson`` and ``spearman`` the statistic
    (F, or ``|r|``) whose p-value equals the table test's. Other scorers score the codes
    as they are.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> X, y = load_iris(return_X_y=True)
    >>> rel = relevance_scores(X, y, "anova_f")
    >>> int(np.argmax(rel.scores))
    2
    """
    Xa, ya, _ = check_xy(X, y)
    categorical = categorical_columns(X) if categorical is None else list(categorical)
    name, spec_opts = _split_spec(scorer)
    opts = {**spec_opts, **options}
    task = infer_task(ya, task)
    if callable(name):
        func, label, defaults = name, f"callable:{getattr(name, '__name__', 'scorer')}", {}
    else:
        if name not in RELEVANCE_SCORERS:
            raise InputError(f"unknown relevance scorer '{name}'; known: "
                             f"{', '.join(sorted(RELEVANCE_SCORERS))}", key="relevance")
        entry = RELEVANCE_SCORERS[name]
        if task not in entry.tasks:
            raise InputError(f"relevance scorer '{name}' does not support {task} "
                             f"(supports: {', '.join(entry.tasks)})", key="relevance")
        func, label, defaults = entry.func, name, entry.defaults
    kwargs = {**defaults, **opts}
    try:
        params = inspect.signature(func).parameters
    except (TypeError, ValueError):
        params = {}
    if "task" in params and "task" not in kwargs:
        kwargs["task"] = task
    try:
        out = func(Xa, ya, **kwargs)
    except TypeError as exc:
        raise InputError(f"relevance scorer '{label}': {exc}", key="relevance") from None
    if not (isinstance(out, tuple) and len(out) == 2):
        raise InputError(f"relevance scorer '{label}' must return (scores, pvalues_or_None)")
    scores = np.asarray(out[0], dtype=float).reshape(-1)
    pvalues = None if out[1] is None else np.asarray(out[1], dtype=float).reshape(-1)
    p = Xa.shape[1]
    if scores.shape != (p,) or (pvalues is not None and pvalues.shape != (p,)):
        raise InputError(f"relevance scorer '{label}' returned {scores.shape[0]} scores for "
                         f"{p} columns")
    if label in _TABLE_SCALES:
        for j in categorical:  # categories have no order or scale: a contingency table
            scores[j], pj = _TABLE_SCALES[label](Xa[:, j], ya, task)
            if pvalues is not None:
                pvalues[j] = pj
    return Relevance(scores, pvalues, label, task)


def _table_target(codes: np.ndarray, y: np.ndarray, task: str,
                  n_bins: int = 5) -> tuple[np.ndarray, np.ndarray]:
    """Integer levels of a categorical column and of ``y`` (``n_bins`` quantile bins if
    numeric), rows with a missing category left out."""
    ok = ~np.isnan(codes)
    target = y[ok]
    if task == "regression":
        target = discretize_matrix(np.asarray(target, dtype=float)[:, None], n_bins,
                                   DEFAULT_MAX_LEVELS)[:, 0]
    return codes[ok].astype(int), np.unique(target, return_inverse=True)[1]


def _table_as_f(codes: np.ndarray, y: np.ndarray, task: str) -> tuple[float, float]:
    """The F(k - 1, n - k) statistic with the table test's p-value (``anova_f``)."""
    stat, p = categorical_chi_square(codes, y, task)
    n = int((~np.isnan(codes)).sum())
    k = np.unique(y[~np.isnan(codes)]).size
    if k < 2 or n <= k:
        return 0.0, p
    if p <= 0.0:  # beyond double precision: as ANOVA's F of a separating column
        return math.inf, p
    # F's upper quantile through the incomplete beta function: scipy's f.isf loses it
    # below p ~ 1e-16 (inf), the beta inverse does not.
    z = float(special.betaincinv((n - k) / 2, (k - 1) / 2, p))
    return (n - k) * (1.0 - z) / ((k - 1) * z), p


def _table_as_r(codes: np.ndarray, y: np.ndarray, task: str) -> tuple[float, float]:
    """The ``|r|`` whose two-sided t(n - 2) p-value is the table test's (correlations)."""
    stat, p = categorical_chi_square(codes, y, task)
    df = int((~np.isnan(codes)).sum()) - 2
    if df < 1:
        return 0.0, p
    if p <= 0.0:
        return 1.0, p
    t = float(stats.t.isf(p / 2, df))
    return t / math.sqrt(df + t * t), p


def _table_as_mi(codes: np.ndarray, y: np.ndarray, task: str) -> tuple[float, float]:
    """The table's plug-in mutual information (nats) and its chi-square p-value."""
    _, p = categorical_chi_square(codes, y, task)
    levels, target = _table_target(codes, y, task)
    return plugin_mutual_info(levels, target), p


_TABLE_SCALES: dict[str, Callable] = {
    "chi2": lambda c, y, task: categorical_chi_square(c, y, task),
    "chi2_frequency": lambda c, y, task: categorical_chi_square(c, y, task),
    "anova_f": _table_as_f, "pearson": _table_as_r, "spearman": _table_as_r,
    "mutual_info": _table_as_mi,
}
"""How a categorical column's table test is put on each scorer's scale (by name)."""


def categorical_columns(X: Any) -> list[int]:
    """Positions of a DataFrame's category and text columns (none for arrays)."""
    from featuresift.columns import non_numeric_columns

    return non_numeric_columns(X)


def categorical_chi_square(codes: np.ndarray, y: np.ndarray, task: str,
                           n_bins: int = 5) -> tuple[float, float]:
    """Pearson chi-square of a categorical column (codes, NaN missing) against ``y``.

    The table is category x class (for a numeric target, category x quantile bin of
    ``y``, ``n_bins`` bins); rows with a missing category are left out, no continuity
    correction. Returns the statistic and its p-value.

    Examples
    --------
    >>> codes, labels = np.array([0, 0, 1, 1, 1, 0.]), np.array([0, 0, 1, 1, 1, 1])
    >>> stat, p = categorical_chi_square(codes, labels, "classification")
    >>> round(stat, 4)
    3.0
    """
    levels, tcodes = _table_target(codes, y, task, n_bins)
    table = np.zeros((int(levels.max()) + 1 if levels.size else 1,
                      int(tcodes.max()) + 1 if tcodes.size else 0))
    np.add.at(table, (levels, tcodes), 1.0)
    stat, p, _ = pearson_chi_square_table(table)
    return stat, p
