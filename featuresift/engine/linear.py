"""Exact fast paths for linear-Gaussian models: scores from per-fold sufficient statistics.

For three estimators the cross-validated score of a subset of columns is a function of
a few per-fold matrices that do not depend on the subset: ordinary least squares
(:class:`~sklearn.linear_model.LinearRegression`), ridge regression with a fixed alpha
(:class:`~sklearn.linear_model.Ridge`) and linear discriminant analysis with its default
solver (:class:`~sklearn.discriminant_analysis.LinearDiscriminantAnalysis`). The
evaluator computes, once per fold, the training Gram (regression) or within-class
scatter (LDA) matrix of *all* columns, then scores any subset from the sub-matrix on its
columns: a small symmetric system per subset and fold instead of a model fit. Subsets of
one size are solved together in batched LAPACK calls.

When it applies (:func:`make_linear_path`)
-------------------------------------------
* the estimator is exactly one of the three classes (not a subclass), or a
  :class:`~sklearn.pipeline.Pipeline` of leading column-wise steps (the steps
  :mod:`featuresift.engine.fitplan` shares, e.g. ``StandardScaler``, with any
  ``with_mean`` / ``with_std``) followed by one of them; any other step (PCA, a
  feature selector, a polynomial expansion...) means the generic path;
* parameters: ``LinearRegression(positive=False)`` (``fit_intercept`` either way);
  ``Ridge`` with a scalar ``alpha >= 0``, ``positive=False`` and ``solver`` "auto",
  "cholesky" or "svd" (iterative solvers stop at a tolerance, so they are not
  reproduced); ``LinearDiscriminantAnalysis(solver="svd", priors=None,
  n_components=None, covariance_estimator=None)`` (``shrinkage`` is not accepted by
  that solver; ``tol`` is honoured; ``store_covariance`` does not change predictions);
* the scorer is the estimator's default score or one of :data:`REGRESSION_SCORES` /
  :data:`LDA_SCORES` by name (all computed from the model's predictions, decision
  values or probabilities); a custom callable means the generic path;
* the problem has no groups-dependent scoring and finite data after the shared steps.

What is computed
----------------
Regression (``fit_intercept=True``): with Z the training columns after the shared
steps, centred, the coefficients solve ``(Z'Z + alpha I) w = Z'(y - mean y)`` and the
prediction is ``mean y + (z - mean z)' w`` (``fit_intercept=False``: no centring),
exactly the system scikit-learn's ridge solves; for OLS (alpha 0) it is the full-rank
least-squares solution ``lstsq`` returns. The system is solved after scaling to unit
diagonal, through the inverse of the unit-diagonal matrix M. Its conditioning is
certified from that inverse (the smallest eigenvalue is at least ``1 / trace(M^-1)``,
the largest at most the size k); a subset the bound cannot certify is decided, and
solved, through its eigen-decomposition instead.

Subsets scored together share work (bordered-matrix, or rank-one, updates): all
one-column extensions of a subset (a forward step), or subsets sharing all but their
last column (exhaustive enumeration), get their inverses from the common part's
inverse bordered by one row and column; all one-column removals from a subset (a
backward step) from the whole's inverse, downdated, when the whole is well conditioned.

LDA (``solver="svd"``): scikit-learn whitens the class-centred data by the singular
values of the within-class *correlation* matrix R, keeps directions whose singular value
exceeds ``tol``, then projects on the span of the whitened class means, keeping
directions above ``tol`` times the largest. When R has full rank with margin, the
within-class part is ``Sigma^-1 = n Sw^-1`` (Sw the within-class scatter, n the training
size) and the class-mean projection is computed from the eigen-decomposition of a
K x K matrix (K classes), dropping the directions scikit-learn drops; coefficients and
intercepts follow the same formulas as scikit-learn's, and the binary case is the
difference of the two rows as in scikit-learn.

When it declines (the generic fit is used for that subset and fold)
--------------------------------------------------------------------
The fast path is exact only where both computations are accurate, so it hands a
(subset, fold) back to the generic path when

* the scaled system is ill-conditioned (condition number above :data:`MAX_COND`, or,
  for regression, columns on very different scales): scikit-learn's least squares may
  then truncate small singular values, and two correct computations may differ in
  the last digits the score depends on;
* LDA's within-class correlation matrix has a singular value below ``max(10 tol,
  1e-3)`` (scikit-learn would then drop a direction: a singular or nearly singular
  within-class scatter, e.g. collinear columns or a constant column), or a
  class-mean direction lies within a factor 2 of the ``tol`` cut;
* a prediction is a near-tie: a decision value within :data:`TIE_TOL` (relative) of
  the class boundary, or two test decisions that close for a rank-based score
  (ROC AUC, average precision), where a rounding difference could flip the result;
* the subset is empty (the evaluator's prior-only model scores it), the training fold
  has fewer samples than columns plus one, a class is missing from it, or the score
  computation raises.

The test suite checks fold scores against scikit-learn fits to 1e-9 on hundreds of
random subsets per eligible pipeline, and identical choices with the path on and off.

Examples
--------
>>> from sklearn.datasets import load_iris
>>> from sklearn.discriminant_analysis import LinearDiscriminantAnalysis
>>> from sklearn.model_selection import cross_val_score
>>> from featuresift.problem import SelectionProblem
>>> X, y = load_iris(return_X_y=True)
>>> p = SelectionProblem(X, y, LinearDiscriminantAnalysis(), cv=5)
>>> path = make_linear_path(p)
>>> path.kind
'lda'
>>> fast = [path.score([((0, 2), f)])[0] for f in range(5)]
>>> slow = cross_val_score(LinearDiscriminantAnalysis(), X[:, [0, 2]], y, cv=p.cv)
>>> bool(np.allclose(fast, slow, rtol=0, atol=1e-12))
True
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import chain
from typing import Any

import numpy as np
from scipy.special import expit
from sklearn.base import BaseEstimator, ClassifierMixin, RegressorMixin
from sklearn.discriminant_analysis import LinearDiscriminantAnalysis
from sklearn.linear_model import LinearRegression, Ridge
from sklearn.pipeline import Pipeline
from sklearn.utils.extmath import softmax

from featuresift.engine.fitplan import _DIRECT, make_fit_plan

__all__ = ["LDA_SCORES", "REGRESSION_SCORES", "LinearPath", "make_linear_path"]

REGRESSION_SCORES = ("r2", "neg_mean_squared_error", "neg_root_mean_squared_error",
                     "neg_mean_absolute_error", "neg_median_absolute_error",
                     "explained_variance", "max_error")
"""Scorer names the regression fast path computes (all continuous in the predictions)."""

LDA_SCORES = ("accuracy", "balanced_accuracy", "roc_auc", "average_precision",
              "neg_log_loss", "neg_brier_score")
"""Scorer names the LDA fast path computes (from predict, decision values, probabilities)."""

_RANK_SCORES = ("roc_auc", "average_precision")
_LABEL_SCORES = ("accuracy", "balanced_accuracy")

MAX_COND = 1e8
"""Largest condition number of the unit-diagonal system accepted by the fast path."""

TIE_TOL = 1e-8
"""Relative distance to a decision boundary (or between two test decisions, for
rank-based scores) below which a fold is handed to the generic fit."""

_MAX_COND_DOWNDATE = 1e6
"""Largest bound on the condition number of a subset's unit-diagonal matrix from whose
inverse the removals of one column are computed (above it each is inverted on its own)."""

_DENSE_COLUMNS = 64
"""Up to this many columns, a block's predictions are one product with the whole test
matrix (kept per fold) instead of a gather of each subset's columns."""

_MAX_BLOCK = 500_000
"""Largest number of floats in one batched prediction array (test rows x subsets x size)."""

_ROW_VALUES = 1 << 19
"""Values per block of training rows summed into a fold's statistics (4 MB)."""


@dataclass
class _Fold:
    """Per-fold statistics over all columns (after the shared steps)."""

    G: np.ndarray          # p x p: Gram (regression) or within-class scatter (LDA)
    d: np.ndarray          # sqrt of the diagonal of G (+ alpha): the unit-diagonal scaling
    Zte: np.ndarray | None  # test rows, centred as the model centres them (None: below)
    yte: np.ndarray
    r: np.ndarray | None = None        # regression right-hand side Z'(y - offset)
    offset: float = 0.0                # regression: mean of y (or 0)
    A: np.ndarray | None = None        # LDA: class means - overall mean (K x p)
    xbar: np.ndarray | None = None     # LDA: prior-weighted mean (p)
    log_priors: np.ndarray | None = None
    dw: np.ndarray | None = None       # LDA: sqrt(n * prior * 1/(K-1)) per class
    classes: np.ndarray | None = None
    n: int = 0
    ok: bool = True
    test: np.ndarray | None = None     # without shared steps: test row indices into X ...
    center: np.ndarray | None = None   # ... and the centre to subtract (None: uncentred)
    Zdense: np.ndarray | None = None   # few columns: all test rows x all columns ...
    Zdense_abs: np.ndarray | None = None   # ... and their absolute values (near ties)


class _Outputs(BaseEstimator):
    """Stand-in for a fitted model: returns stored predictions to a scikit-learn scorer."""

    def __init__(self, pred=None, decision=None, proba=None, classes=None):
        self.pred = pred
        self.decision = decision
        self.proba = proba
        self.classes = classes

    def __sklearn_is_fitted__(self) -> bool:
        return True

    def predict(self, X):
        return self.pred


class _ClassifierOutputs(ClassifierMixin, _Outputs):
    @property
    def classes_(self):
        return self.classes

    def decision_function(self, X):
        return self.decision

    def predict_proba(self, X):
        return self.proba


class _RegressorOutputs(RegressorMixin, _Outputs):
    pass


def _final_step(estimator: Any) -> tuple[Any, bool]:
    """The model behind optional column-wise steps; whether any other step is present."""
    if not isinstance(estimator, Pipeline):
        return estimator, False
    return estimator.steps[-1][1], True


def _eligible_params(model: Any) -> str | None:
    """The fast-path kind for an exact class with reproducible parameters, else None."""
    t = type(model)
    if t is LinearRegression:
        return None if model.positive else "ols"
    if t is Ridge:
        alpha = model.alpha
        if (np.ndim(alpha) != 0 or isinstance(alpha, bool) or not np.isfinite(alpha)
                or alpha < 0 or model.positive
                or model.solver not in ("auto", "cholesky", "svd")):
            return None
        return "ridge"
    if t is LinearDiscriminantAnalysis:
        if (model.solver != "svd" or model.priors is not None or model.n_components is not None
                or model.covariance_estimator is not None or model.shrinkage is not None
                or not (isinstance(model.tol, (int, float)) and model.tol >= 0)):
            return None
        return "lda"
    return None


class LinearPath:
    """Scores (subset, fold) pairs of an eligible problem from per-fold statistics.

    Built by :func:`make_linear_path`; :meth:`score` returns a score or None (hand the
    pair to the generic fit) per pair.

    Attributes
    ----------
    kind : {"ols", "ridge", "lda"}
    n_scored, n_declined : int
        Pairs scored here / handed back.
    """

    def __init__(self, problem: Any, kind: str, model: Any, head: Any, score_name: str):
        self.problem = problem
        self.kind = kind
        self.model = model
        self.head = head
        self.score_name = score_name
        self.alpha = float(model.alpha) if kind == "ridge" else 0.0
        self.fit_intercept = bool(getattr(model, "fit_intercept", True))
        self.tol = float(getattr(model, "tol", 0.0))
        self._plan = make_fit_plan(problem) if head is not None else None
        self._folds: dict[int, _Fold] = {}
        self.n_scored = 0
        self.n_declined = 0
        self.n_updated = 0

    def describe(self) -> dict[str, Any]:
        """What the path computes (for ``stats()`` and reports)."""
        return {"kind": self.kind, "score": self.score_name,
                "shared_steps": 0 if self.head is None else len(self.head.steps),
                "n_scored": self.n_scored, "n_declined": self.n_declined,
                "n_updated": self.n_updated}

    # ------------------------------------------------------------ fold statistics
    def _fold(self, f: int) -> _Fold:
        fold = self._folds.get(f)
        if fold is None:
            fold = self._folds[f] = self._make_fold(f)
        return fold

    def _make_fold(self, f: int) -> _Fold:
        p = self.problem
        train, test = p.splits[f]
        try:
            if self._plan is not None:
                Ztr, Zte = self._plan.transform_fold(p.X, train, test)
            else:
                Ztr, Zte = None, None
        except Exception:  # noqa: BLE001 - the generic path reports the failure
            return _Fold(np.zeros((0, 0)), np.zeros(0), np.zeros((0, 0)), p.y[test], ok=False)
        ytr, yte = p.y[train], p.y[test]
        bad = _Fold(np.zeros((0, 0)), np.zeros(0), np.zeros((0, 0)), yte, ok=False)
        # The statistics are sums over blocks of training rows. Without shared steps the
        # rows come from X block by block and the test rows are not copied at all (each
        # block of subsets takes its test columns from X): no fold holds a copy of its
        # rows, which over the folds would add up to a copy of X, or more.
        step = max(64, _ROW_VALUES // max(1, p.n_features))

        def blocks(index=train, Z=Ztr):
            for a in range(0, len(index), step):
                rows = index[a:a + step] if Z is None else slice(a, a + step)
                yield slice(a, a + step), (p.X[rows] if Z is None else Z[rows])

        if not all(np.isfinite(Z).all() for _, Z in chain(blocks(), blocks(test, Zte))):
            return bad
        rows_te = test if Zte is None else None
        if self.kind == "lda":
            fold = self._lda_fold(blocks, ytr, Zte, yte)
            fold.test = rows_te
            return fold
        ytr = ytr.astype(float)
        m = p.n_features
        center = np.zeros(m)
        offset = 0.0
        if self.fit_intercept:
            for _, Z in blocks():
                center += Z.sum(axis=0)
            center /= len(ytr)
            offset = float(ytr.mean())
        G = np.zeros((m, m))
        r = np.zeros(m)
        for sl, Z in blocks():
            Z = Z - center
            G += Z.T @ Z
            r += Z.T @ (ytr[sl] - offset)
        d = np.sqrt(np.diag(G) + self.alpha)
        return _Fold(G, d, None if Zte is None else Zte - center, yte, r=r, offset=offset,
                     n=len(ytr), test=rows_te, center=None if Zte is not None else center)

    def _lda_fold(self, blocks, ytr, Zte, yte) -> _Fold:
        classes, inv, counts = np.unique(ytr, return_inverse=True, return_counts=True)
        n, K = len(ytr), len(classes)
        bad = _Fold(np.zeros((0, 0)), np.zeros(0), np.zeros((0, 0)), yte, ok=False)
        if K < 2 or n <= K or not np.isin(yte, classes).all():
            return bad
        m = self.problem.n_features
        means = np.zeros((K, m))
        for sl, Z in blocks():
            part = inv[sl]
            for k in range(K):
                means[k] += Z[part == k].sum(axis=0)
        means /= counts[:, None]
        G = np.zeros((m, m))
        for sl, Z in blocks():
            Z = Z - means[inv[sl]]
            G += Z.T @ Z
        priors = counts / float(n)
        xbar = priors @ means
        return _Fold(G, np.sqrt(np.diag(G)), Zte, yte, A=means - xbar, xbar=xbar,
                     log_priors=np.log(priors), dw=np.sqrt(n * priors / (K - 1)),
                     classes=classes, n=n)

    def _predict(self, fold: _Fold, idx: np.ndarray, coef: np.ndarray,
                 absolute: bool = False) -> np.ndarray:
        """``Z[:, S_b] @ coef[b].T`` on the test rows for every row b of ``idx``, shape
        (B, n_test, C); with ``absolute``, ``|Z|`` instead of ``Z``.

        With few columns in all (at most :data:`_DENSE_COLUMNS`), the coefficients are
        scattered into full-width rows and the block is one matrix product (BLAS) with
        the fold's test matrix, kept for the next blocks; otherwise the subsets' columns
        are gathered.
        """
        B, C, k = coef.shape
        p = len(fold.d)
        if p > _DENSE_COLUMNS:
            # Blocks of test rows of at most _MAX_BLOCK values: a subset of a thousand
            # columns does not gather all its test values at once (rows are independent,
            # the sum over k runs in the same order: the same bits).
            n_test = len(fold.yte)
            out = np.empty((B, n_test, C))
            rows = max(1, _MAX_BLOCK // max(1, B * k))
            for r0 in range(0, n_test, rows):
                Zs = self._test_columns(fold, idx, slice(r0, r0 + rows))  # fresh array
                if absolute:
                    np.abs(Zs, out=Zs)
                out[:, r0:r0 + rows] = np.einsum("nbk,bck->bnc", Zs, coef)
            return out
        if fold.Zdense is None:
            full = np.arange(p)[None, :]
            fold.Zdense = np.ascontiguousarray(self._test_columns(fold, full)[:, 0, :])
        if absolute and fold.Zdense_abs is None:
            fold.Zdense_abs = np.abs(fold.Zdense)
        Z = fold.Zdense_abs if absolute else fold.Zdense
        W = np.zeros((B, C, p))
        W[np.arange(B)[:, None, None], np.arange(C)[None, :, None], idx[:, None, :]] = coef
        out = Z @ W.reshape(B * C, p).T                         # (n_test, B * C)
        return out.reshape(len(Z), B, C).transpose(1, 0, 2)

    def _test_columns(self, fold: _Fold, idx: np.ndarray,
                      rows: slice = slice(None)) -> np.ndarray:
        """The test rows (or a slice of them) of the columns ``idx`` (B x k), shape
        (n_rows, B, k): always a new array."""
        if fold.Zte is not None:
            return fold.Zte[rows][:, idx]
        Zs = self.problem.X[fold.test[rows][:, None, None], idx[None]]   # a fresh array
        if fold.center is not None:
            Zs -= fold.center[idx]      # in place: no second (n_test, B, k) temporary
        return Zs

    # --------------------------------------------------------------------- scoring
    def score(self, work: list[tuple[tuple[int, ...], int]]) -> list[float | None]:
        """Score each (subset, fold) pair; None where the generic fit must decide.

        Parameters
        ----------
        work : list of (tuple of int, int)
            Sorted column tuples and fold numbers.

        Returns
        -------
        list of float or None, in ``work`` order.
        """
        out: list[float | None] = [None] * len(work)
        groups: dict[tuple[int, int], list[int]] = {}
        for i, (cols, f) in enumerate(work):
            if cols:
                groups.setdefault((f, len(cols)), []).append(i)
        for (f, k), items in sorted(groups.items()):
            fold = self._fold(f)
            if not fold.ok or k + 1 >= fold.n or k > len(fold.d):
                continue
            step = max(1, _MAX_BLOCK // max(1, len(fold.yte) * k))
            for start in range(0, len(items), step):
                part = items[start:start + step]
                idx = np.array([work[i][0] for i in part], dtype=np.intp)
                for i, s in zip(part, self._score_block(fold, idx)):
                    out[i] = s
        done = sum(s is not None for s in out)
        self.n_scored += done
        self.n_declined += len(work) - done
        return out

    def _unit(self, fold: _Fold, cols: np.ndarray, alpha: float) -> np.ndarray:
        """The unit-diagonal matrices ``D^-1 (G_S + alpha I) D^-1`` of rows of ``cols``."""
        G = fold.G[cols[:, :, None], cols[:, None, :]]            # a fresh array
        if alpha:
            G += alpha * np.eye(cols.shape[1])
        d = fold.d[cols]
        d = np.where(d > 0, d, 1.0)
        G /= d[:, :, None] * d[:, None, :]      # in place, the same bits as G / (d d')
        return G

    def _inverses(self, fold: _Fold, idx: np.ndarray, alpha: float):
        """Inverses of the unit-diagonal matrices of a block of subsets (same size).

        Where the block's subsets share structure, the inverses come from one smaller
        inverse by a bordered-matrix (rank-one) update instead of one inversion each:

        * all one-column extensions of a common subset (a forward step), or groups of
          subsets that share all but their last column (exhaustive enumeration): the
          common part's inverse ``B^-1`` is bordered by the new column ``b``, with
          Schur complement ``s = 1 - b' B^-1 b``;
        * all one-column removals from a common subset (a backward step): the inverse
          of the whole is downdated (``P^-1 - P^-1 e e' P^-1 / (P^-1)_jj`` restricted to
          the kept columns), only when the whole is well conditioned.

        Returns ``(idx, inv)``: ``idx`` holds the same column sets, possibly in another
        order within a row (the order ``inv`` uses); ``inv`` is None when a matrix was
        singular to working precision (the caller then decomposes each one).
        """
        B, k = idx.shape
        if k >= 2 and B >= 2:
            p = len(fold.d)
            counts = np.bincount(idx.ravel(), minlength=p)
            common = counts == B
            n_common = int(common.sum())
            if n_common == k - 1:                               # all extensions of one set
                extra_mask = ~common[idx]
                extra = idx[extra_mask]
                base = np.flatnonzero(common)
                order = np.concatenate([np.broadcast_to(base, (B, k - 1)), extra[:, None]],
                                       axis=1)
                inv = self._bordered(fold, base[None, :], np.zeros(B, dtype=np.intp),
                                     extra, alpha)
                if inv is not None:
                    self.n_updated += B
                    return order, inv
            union = np.flatnonzero(counts)
            if len(union) == k + 1:                             # removals from one set
                inv = self._downdated(fold, union, idx, alpha)
                if inv is not None:
                    self.n_updated += B
                    return idx, inv
            prefixes, group = np.unique(idx[:, :-1], axis=0, return_inverse=True)
            if 2 * len(prefixes) <= B:                          # shared prefixes
                inv = self._bordered(fold, prefixes, group.ravel(), idx[:, -1], alpha)
                if inv is not None:
                    self.n_updated += B
                    return idx, inv
        try:
            return idx, np.linalg.inv(self._unit(fold, idx, alpha))
        except np.linalg.LinAlgError:
            return idx, None

    def _bordered(self, fold, bases, group, extra, alpha):
        """Inverses of ``[bases[group], extra]`` (base columns first) by bordering."""
        try:
            Binv = np.linalg.inv(self._unit(fold, bases, alpha))[group]   # (B, m, m)
        except np.linalg.LinAlgError:
            return None
        cols = bases[group]                                                 # (B, m)
        d = np.where(fold.d > 0, fold.d, 1.0)
        b = fold.G[cols, extra[:, None]] / (d[cols] * d[extra][:, None])    # (B, m)
        c = (fold.G[extra, extra] + alpha) / d[extra] ** 2
        u = np.einsum("bij,bj->bi", Binv, b)
        s = c - np.einsum("bi,bi->b", b, u)
        s = np.where(s > 0, s, np.nan)        # not positive definite: NaN, then declined
        B, m = u.shape
        inv = np.empty((B, m + 1, m + 1))
        inv[:, :m, :m] = Binv + u[:, :, None] * u[:, None, :] / s[:, None, None]
        inv[:, :m, m] = inv[:, m, :m] = -u / s[:, None]
        inv[:, m, m] = 1.0 / s
        return inv

    def _downdated(self, fold, union, idx, alpha):
        """Inverses of ``union`` minus one column each (rows of ``idx``), by downdating."""
        try:
            Pinv = np.linalg.inv(self._unit(fold, union[None, :], alpha))[0]
        except np.linalg.LinAlgError:
            return None
        q = len(union)
        tr = np.trace(Pinv)
        if not (np.isfinite(tr) and tr > 0 and q * tr <= _MAX_COND_DOWNDATE):
            return None  # cancellation would cost digits: invert each subset instead
        pos = np.searchsorted(union, idx)                                   # (B, k)
        drop = np.ones((len(idx), q), dtype=bool)
        np.put_along_axis(drop, pos, False, axis=1)
        j = np.argmax(drop, axis=1)                                         # dropped column
        e = Pinv[j][np.arange(len(idx))[:, None], pos]                      # (B, k): P^-1[j, kept]
        sub = Pinv[pos[:, :, None], pos[:, None, :]]
        return sub - e[:, :, None] * e[:, None, :] / Pinv[j, j][:, None, None]

    def _solve(self, fold: _Fold, idx: np.ndarray, rhs_of, alpha: float,
               max_cond: np.ndarray | float = MAX_COND, floor: float = 0.0):
        """Solve the unit-diagonal systems of a block of subsets; ok mask for acceptance.

        ``rhs_of(idx)`` gives the right-hand sides, shape (B, k, m), for an ``idx``
        (the columns may come back reordered within a row, see :meth:`_inverses`). A row
        is accepted when its unit-diagonal matrix has smallest eigenvalue ``lo >=
        floor`` (and > 0) and largest ``hi <= max_cond * lo``. These are decided from
        the inverse when it proves them (``1/trace(M^-1) <= lo`` and ``hi <= k``);
        otherwise from an eigen-decomposition of that row's matrix, which also solves
        it. Returns ``(solutions, ok, idx)``.
        """
        B, k = idx.shape
        max_cond = np.broadcast_to(np.asarray(max_cond, dtype=float), (B,))
        ok = (fold.d[idx] > 0).all(axis=1)
        idx, inv = self._inverses(fold, idx, alpha)
        d = np.where(fold.d[idx] > 0, fold.d[idx], 1.0)
        rhs = rhs_of(idx) / d[:, :, None]
        if inv is None:
            sure = np.zeros(B, dtype=bool)
            x = np.zeros_like(rhs)
        else:
            with np.errstate(all="ignore"):
                tr = np.einsum("bii->b", inv)
                sure = (np.isfinite(tr) & (tr > 0) & (k * tr <= max_cond)
                        & (np.einsum("bii->bi", inv) > 0).all(axis=1) & (tr * floor <= 1.0))
                x = (inv @ rhs) / d[:, :, None]
        inv = None  # freed before any eigen-decomposition (large subsets: k x k each)
        doubt = np.flatnonzero(ok & ~sure)
        if doubt.size:
            sel = idx[doubt]
            lam, Q = np.linalg.eigh(self._unit(fold, sel, alpha))
            lo, hi = lam[:, 0], lam[:, -1]
            ok[doubt] = ((lo > 0) & (hi <= max_cond[doubt] * np.where(lo > 0, lo, np.inf))
                         & (lo >= floor))
            lam = np.where(lam > 0, lam, 1.0)
            y = np.einsum("bji,bjm->bim", Q, rhs[doubt])
            x[doubt] = np.einsum("bij,bjm->bim", Q, y / lam[:, :, None]) / d[doubt][:, :, None]
        return x, ok, idx

    def _score_block(self, fold: _Fold, idx: np.ndarray) -> list[float | None]:
        if self.kind == "lda":
            return self._lda_block(fold, idx)
        # Columns on very different scales: scikit-learn's solvers work on the unscaled
        # system, whose accuracy (and lstsq's cut-off) then differs from ours; the
        # condition number allowed shrinks with the spread (sqrt(cond) * spread <= MAX_COND).
        d = fold.d[idx]
        with np.errstate(divide="ignore", invalid="ignore"):
            spread = d.max(axis=1) / d.min(axis=1)
        limit = np.minimum(MAX_COND, (MAX_COND / spread) ** 2)
        x, ok, idx = self._solve(fold, idx, lambda c: fold.r[c][:, :, None], self.alpha,
                                 max_cond=limit)
        w = x[:, :, 0]
        pred = self._predict(fold, idx, w[:, None, :])[:, :, 0] + fold.offset
        y = fold.yte
        name = self.score_name
        if name in _DIRECT and len(y) > 1:
            values = _direct_rows(name, y, pred)
            return [float(v) if good else None for v, good in zip(values, ok)]
        return [self._regression_score(y, pred[b]) if ok[b] else None
                for b in range(len(idx))]

    def _regression_score(self, y: np.ndarray, pred: np.ndarray) -> float | None:
        name = self.score_name
        if name in _DIRECT and len(y) > 1:
            return _DIRECT[name](y, pred)
        try:
            return float(self.problem.scorer(_RegressorOutputs(pred=pred), None, y))
        except Exception:  # noqa: BLE001 - the generic path reproduces and reports it
            return None

    def _lda_block(self, fold: _Fold, idx: np.ndarray) -> list[float | None]:
        B, k = idx.shape
        K = len(fold.classes)
        # C' = Sigma^-1 A' with Sigma = Sw / n (A: class means - mean, (B, k, K))
        floor = max(10.0 * self.tol, 1e-3) ** 2
        Ct, ok, idx = self._solve(fold, idx, lambda c: fold.A[:, c].transpose(1, 2, 0), 0.0,
                                  floor=floor)
        A = fold.A[:, idx].transpose(1, 2, 0)
        Ct = Ct * fold.n
        H = np.einsum("bkc,bke->bce", A, Ct)                    # A Sigma^-1 A' (B, K, K)
        dw = fold.dw
        Gm = H * dw[None, :, None] * dw[None, None, :]
        if K == 2:
            # Rank one: the largest eigenvalue is the trace, the other is zero.
            s2 = np.zeros((B, 2))
            s2[:, 0] = np.sqrt(np.clip(np.einsum("bcc->b", Gm), 0.0, None))
            U = None
        else:
            lg, U = np.linalg.eigh(Gm)                          # ascending
            s2 = np.sqrt(np.clip(lg, 0.0, None))[:, ::-1]       # singular values, desc.
            U = U[:, :, ::-1]
        top = s2[:, :1]
        ok &= top[:, 0] > 0
        ratio = s2 / np.where(top > 0, top, 1.0)
        near = (ratio > 0.5 * self.tol) & (ratio < 2.0 * self.tol)
        ok &= ~near.any(axis=1)
        keep = ratio > self.tol                                 # directions LDA keeps
        C = Ct.transpose(0, 2, 1)                               # (B, K, k)
        if K > 2:
            Ur = U * keep[:, None, :]
            proj = np.einsum("bcj,bej->bce", Ur, Ur)            # U_r U_r'
            coef = np.einsum("c,bce,e,bek->bck", 1.0 / dw, proj, dw, C)
            norms = np.einsum("bcj,bj->bc", Ur ** 2, s2 ** 2) / dw ** 2
        else:
            ok &= keep[:, 0]
            coef = C
            norms = np.einsum("bcc->bc", H)
        xbar = fold.xbar[idx]                                   # (B, k)
        intercept = (-0.5 * norms + fold.log_priors
                     - np.einsum("bk,bck->bc", xbar, coef))
        if K == 2:
            coef = coef[:, 1:, :] - coef[:, :1, :]
            intercept = intercept[:, 1:] - intercept[:, :1]
        dec = self._predict(fold, idx, coef) + intercept[:, None, :]
        name = self.score_name
        if name in _LABEL_SCORES or name in _RANK_SCORES:
            size = (self._predict(fold, idx, np.abs(coef), absolute=True)
                    + np.abs(intercept)[:, None, :])
            ok &= ~self._near_ties(dec, size)
        if name == "accuracy" and len(fold.yte) > 1:
            if dec.shape[2] == 1:
                pred = fold.classes[(dec[:, :, 0] > 0).astype(int)]
            else:
                pred = fold.classes[np.argmax(dec, axis=2)]
            acc = np.mean(pred == fold.yte[None, :], axis=1)
            return [float(a) if good else None for a, good in zip(acc, ok)]
        return [self._lda_score(fold, dec[b]) if ok[b] else None for b in range(B)]

    def _near_ties(self, dec: np.ndarray, size: np.ndarray) -> np.ndarray:
        """Subsets of a block with a test decision a rounding error could flip."""
        if self.score_name in _LABEL_SCORES:
            if dec.shape[2] == 1:
                return (np.abs(dec[:, :, 0]) <= TIE_TOL * size[:, :, 0]).any(axis=1)
            two = np.sort(dec, axis=2)[:, :, -2:]
            return (two[:, :, 1] - two[:, :, 0] <= TIE_TOL * size.max(axis=2)).any(axis=1)
        if dec.shape[2] != 1:
            return np.ones(dec.shape[0], dtype=bool)
        d, scale = dec[:, :, 0], size[:, :, 0]
        order = np.argsort(d, axis=1, kind="stable")
        ds = np.take_along_axis(d, order, axis=1)
        ss = np.take_along_axis(scale, order, axis=1)
        gaps = np.diff(ds, axis=1)
        near = (gaps > 0) & (gaps <= TIE_TOL * np.maximum(ss[:, 1:], ss[:, :-1]))
        return near.any(axis=1)

    def _lda_score(self, fold: _Fold, dec: np.ndarray) -> float | None:
        classes, y = fold.classes, fold.yte
        name = self.score_name
        proba = None
        if dec.shape[1] == 1:
            decision = dec[:, 0]
            pred = classes[(decision > 0).astype(int)]
            if name in ("neg_log_loss", "neg_brier_score"):
                p1 = expit(decision)
                proba = np.stack([1 - p1, p1], axis=1)
        else:
            decision = dec
            pred = classes[np.argmax(dec, axis=1)]
            if name in ("neg_log_loss", "neg_brier_score"):
                proba = softmax(dec)
        if name == "accuracy" and len(y) > 1:
            return _DIRECT["accuracy"](y, pred)
        present = np.isin(classes, y).all()
        if name == "roc_auc" and dec.shape[1] == 1 and present:
            return _roc_auc(y == classes[1], decision)
        if name == "neg_log_loss" and present and proba is not None:
            p_true = proba[np.arange(len(y)), np.searchsorted(classes, y)]
            eps = np.finfo(float).eps
            return -float(np.mean(-np.log(np.clip(p_true, eps, 1 - eps))))
        try:
            stand_in = _ClassifierOutputs(pred=pred, decision=decision, proba=proba,
                                          classes=classes)
            return float(self.problem.scorer(stand_in, None, y))
        except Exception:  # noqa: BLE001 - the generic path reproduces and reports it
            return None


def _direct_rows(name: str, y: np.ndarray, pred: np.ndarray) -> np.ndarray:
    """The direct regression scores of :mod:`featuresift.engine.fitplan`, one per row."""
    if name == "r2":
        num = ((y - pred) ** 2).sum(axis=1, dtype=np.float64)
        den = ((y - np.average(y)) ** 2).sum(dtype=np.float64)
        if den == 0:  # scikit-learn's force_finite convention
            return np.where(num == 0, 1.0, 0.0)
        return 1.0 - num / den
    if name == "neg_mean_squared_error":
        return -np.mean((y - pred) ** 2, axis=1)
    return -np.mean(np.abs(pred - y), axis=1)


def _roc_auc(positive: np.ndarray, score: np.ndarray) -> float:
    """Binary ROC AUC by the rank-sum formula with average ranks for ties (equal to the
    area under the ROC curve with ties as diagonal segments, as scikit-learn computes it)."""
    from scipy.stats import rankdata

    ranks = rankdata(score)
    n1 = int(positive.sum())
    n0 = len(positive) - n1
    return float((ranks[positive].sum() - n1 * (n1 + 1) / 2.0) / (n1 * n0))


def make_linear_path(problem: Any) -> LinearPath | None:
    """The fast path for a problem, or None when its model or scorer is not eligible.

    Parameters
    ----------
    problem : SelectionProblem

    Returns
    -------
    LinearPath or None

    Examples
    --------
    >>> from sklearn.linear_model import Ridge
    >>> from sklearn.pipeline import make_pipeline
    >>> from sklearn.preprocessing import StandardScaler
    >>> from featuresift.problem import SelectionProblem
    >>> X = np.random.default_rng(0).normal(size=(40, 3)); y = X[:, 0]
    >>> make_linear_path(SelectionProblem(X, y, make_pipeline(StandardScaler(), Ridge()))).kind
    'ridge'
    >>> make_linear_path(SelectionProblem(X, y, Ridge(solver="sag"))) is None
    True
    """
    estimator = problem.estimator
    model, piped = _final_step(estimator)
    kind = _eligible_params(model)
    if kind is None:
        return None
    if problem.classification != (kind == "lda"):
        return None
    scoring = problem.scoring
    if scoring is None:
        score_name = "accuracy" if kind == "lda" else "r2"
    elif isinstance(scoring, str):
        score_name = scoring
    else:
        return None
    if score_name not in (LDA_SCORES if kind == "lda" else REGRESSION_SCORES):
        return None
    if kind != "lda" and problem.y.dtype.kind not in "fiub":
        return None
    head = None
    if piped:
        plan = make_fit_plan(problem)
        n_real = sum(1 for _, s in estimator.steps[:-1]
                     if s is not None and not (isinstance(s, str) and s == "passthrough"))
        shared = 0 if plan.head is None else len(plan.head.steps)
        if plan.head is None and n_real:
            return None
        if plan.head is not None:
            if shared != len(estimator.steps) - 1:
                return None  # a step that is not column-wise: generic path
            head = plan.head
    return LinearPath(problem, kind, model, head, score_name)
