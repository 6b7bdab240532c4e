"""Evaluators: turn batches of feature subsets into :class:`~featuresift.engine.records.Evaluation`.

A strategy only ever calls :meth:`BaseEvaluator.evaluate` with a batch of subsets;
it never learns how the scores are computed. :class:`CrossValidationEvaluator`
fits clones of a scikit-learn estimator on fixed CV splits; :class:`CriterionEvaluator`
scores subsets with a plain function (useful for tests and for model-free criteria).

How :class:`CrossValidationEvaluator` spends its time
------------------------------------------------------
* **One dispatch per batch.** Every (subset, fold) fit a batch needs goes into one
  joblib call, grouped into a few tasks per worker (``chunk_size``) so that the
  per-task overhead is paid a few times per batch rather than once per fit. A task
  carries the estimator template, the splits, and only the columns its subsets use
  (joblib memory-maps large arrays); each fit clones the template inside the worker.
  After one clean batch, scikit-learn's parameter and finiteness checks are skipped
  (the parameters do not change and the data were checked once).
* **One BLAS thread per fit** (``inner_threads``), in workers and in-process alike:
  small fits are several times faster single-threaded, and two workers on two cores
  must not each start two BLAS threads.
* **A fold-level cache.** What is known about a subset is kept fold by fold, so a
  subset is fitted at most once per fold; the optional journal keeps the same cache
  on disk across runs (:mod:`featuresift.engine.journal`).
* **Optional racing** (:mod:`featuresift.engine.racing`): a batch is scored in rounds of
  folds and candidates statistically behind the leader stop early.

Results never depend on ``n_jobs``, ``chunk_size``, the joblib backend, the cache
or the journal: the fits are the same, results are put back in (subset, fold)
order, and a race's decisions depend only on the fold scores.
"""

from __future__ import annotations

import math
import os
import time
import warnings
from abc import ABC, abstractmethod
from collections.abc import Callable, Iterable, Sequence
from contextlib import nullcontext
from typing import Any

import numpy as np
from joblib import cpu_count, effective_n_jobs
from joblib.parallel import get_active_backend, parallel_config
from sklearn import config_context
from sklearn.base import clone
from sklearn.dummy import DummyClassifier, DummyRegressor
from sklearn.utils.parallel import Parallel, delayed

from featuresift.engine.fitplan import make_fit_plan
from featuresift.engine.journal import Journal, open_journal
from featuresift.engine.linear import make_linear_path
from featuresift.engine.pool import POOL_MODES, PoolPolicy
from featuresift.engine.progress import make_progress
from featuresift.engine.racing import BaseRace, make_race
from featuresift.engine.records import DROPPED, FAILED, Evaluation, FoldTable
from featuresift.engine.warmstart import WarmStarts, warm_result
from featuresift.errors import FitFailedError, InputError
from featuresift.problem import SelectionProblem

__all__ = [
    "BaseEvaluator", "CrossValidationEvaluator", "CriterionEvaluator", "check_error_score",
    "normalise_subset",
]

TASKS_PER_WORKER = 8
"""Default chunking: about this many joblib tasks per worker and batch. Fewer tasks
cost less dispatch; more tasks leave less idle time at the end of a batch."""

ON_FIT_ERROR = ("raise", "record")
"""Failure policies: stop at the first failing fit, or record the fold as failed."""


def check_error_score(value: Any, key: str = "error_score") -> float:
    """Validate an ``error_score``: NaN (failed subsets have no score) or a finite number.

    Examples
    --------
    >>> check_error_score(0.0), check_error_score(float("nan"))
    (0.0, nan)
    """
    if isinstance(value, str) and value.strip().lower() == "nan":
        return math.nan
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise InputError(
            f"error_score must be a number or nan, got {value!r} (to stop at the first "
            "failing fit use on_fit_error='raise')", key=key)
    value = float(value)
    if math.isinf(value):
        raise InputError(f"error_score must be finite or nan, got {value!r}", key=key)
    return value


LOCAL_BACKENDS = ("LokyBackend", "MultiprocessingBackend", "ThreadingBackend",
                  "SequentialBackend")
"""joblib backends whose workers share this machine's CPUs (``n_jobs`` is capped there)."""


def capped_n_jobs(n_jobs: int | None) -> tuple[int | None, str | None]:
    """``n_jobs`` by joblib's convention, capped at the CPU count for a local backend.

    Negative values count back from the CPUs (-1: all of them, -2: all but one; at least
    one). Under a backend that runs elsewhere (a dask cluster) ``n_jobs`` is left as it
    is. Returns the value to use and, when it was capped, a note saying so.

    Examples
    --------
    >>> from joblib import cpu_count
    >>> capped_n_jobs(-1)[0] == cpu_count(), capped_n_jobs(None)
    (True, (None, None))
    >>> capped_n_jobs(10_000)[1].startswith("n_jobs=10000 is more than")
    True
    """
    if n_jobs is None:
        return None, None
    if isinstance(n_jobs, bool) or not isinstance(n_jobs, (int, np.integer)) or n_jobs == 0:
        raise InputError(f"n_jobs must be a non-zero integer or None, got {n_jobs!r}",
                         key="n_jobs")
    backend, _ = get_active_backend()
    if type(backend).__name__ not in LOCAL_BACKENDS:
        return int(n_jobs), None
    cpus = cpu_count()
    wanted = int(n_jobs) if n_jobs > 0 else max(cpus + 1 + int(n_jobs), 1)
    if wanted <= cpus:
        return wanted, None
    return cpus, (f"n_jobs={int(n_jobs)} is more than the {cpus} CPUs of this machine; "
                  f"using n_jobs={cpus} (more workers than CPUs only add memory and "
                  "switching)")


def normalise_subset(subset: Iterable[int], n_features: int) -> tuple[int, ...]:
    """Sorted tuple of unique column indices, range-checked.

    Examples
    --------
    >>> normalise_subset([3, 1, 3], n_features=5)
    (1, 3)
    """
    out = tuple(sorted({int(i) for i in subset}))
    if out and (out[0] < 0 or out[-1] >= n_features):
        raise InputError(f"subset {out} has a column index outside 0..{n_features - 1}")
    return out


class BaseEvaluator(ABC):
    """Scores batches of subsets and remembers every evaluation.

    Subclasses implement :meth:`_evaluate_new` for subsets not seen before; this
    base class handles normalisation, de-duplication within a batch, memoisation
    and the history. Evaluations with status ``"dropped"`` (racing) are kept for
    :meth:`lookup` but never served as cached answers.

    Attributes
    ----------
    history : list of Evaluation
        Every evaluation produced, in order (a subset dropped by racing and
        completed later appears twice).
    n_fits : int
        Model fits performed (one per subset and fold for CV evaluators).
    n_cache_hits : int
        Requests answered without any fit.

    Examples
    --------
    A subclass only scores subsets it has not seen; repeats are served from memory:

    >>> from featuresift.engine.records import Evaluation
    >>> class SizeEvaluator(BaseEvaluator):
    ...     def _evaluate_new(self, subsets):
    ...         return [Evaluation(s, (float(len(s)),)) for s in subsets]
    >>> ev = SizeEvaluator(n_features=3)
    >>> [e.mean for e in ev.evaluate([[0, 1], [2], [1, 0]])]
    [2.0, 1.0, 2.0]
    >>> len(ev.history), ev.n_cache_hits
    (2, 1)
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

        Returns
        -------
        list of Evaluation
            Repeated subsets get the same object.
        """
        keys = [normalise_subset(s, self.n_features) for s in subsets]
        unique = list(dict.fromkeys(keys))
        self.n_cache_hits += len(keys) - len(unique)
        found = self._evaluate_unique(unique)
        return [found[k] for k in keys]

    def _evaluate_unique(
        self, keys: list[tuple[int, ...]]
    ) -> dict[tuple[int, ...], Evaluation]:
        todo = [k for k in keys if not self._is_cached(k)]
        self.n_cache_hits += len(keys) - len(todo)
        if todo:
            for ev in self._evaluate_new(todo):
                self._remember(ev)
        return {k: self._memo[k] for k in keys}

    def _is_cached(self, key: tuple[int, ...]) -> bool:
        ev = self._memo.get(key)
        return ev is not None and ev.status != DROPPED

    def _remember(self, ev: Evaluation) -> Evaluation:
        """Store ``ev`` (or keep an equal stored one); returns the object to hand out.

        A dropped evaluation never replaces a complete one (a race may drop a subset
        whose every fold is known from earlier; the batch still reports it dropped).
        """
        old = self._memo.get(ev.subset)
        if old is not None and old == ev and old.n_folds_run == ev.n_folds_run:
            return old
        if old is not None and ev.status == DROPPED and old.status != DROPPED:
            return ev
        self._memo[ev.subset] = ev
        self.history.append(ev)
        return ev

    def lookup(self, subset: Iterable[int]) -> Evaluation | None:
        """The latest evaluation of a subset (possibly ``"dropped"``), or None.

        Never triggers a fit.
        """
        return self._memo.get(normalise_subset(subset, self.n_features))

    @property
    def n_evaluations(self) -> int:
        """Number of evaluations produced (see ``history``)."""
        return len(self.history)

    @abstractmethod
    def _evaluate_new(self, subsets: list[tuple[int, ...]]) -> list[Evaluation]:
        """Evaluate subsets that have no usable stored evaluation (sorted, unique tuples)."""


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
            seconds = time.perf_counter() - t0
            if math.isfinite(value):
                out.append(Evaluation(s, (value,), seconds))
            else:  # no score: counted as failed, never chosen
                out.append(Evaluation(
                    s, (math.nan,), seconds, FAILED, 1,
                    {"errors": [f"the criterion returned {value!r}"]}, None, (0,)))
        return out


# --------------------------------------------------------------------------- workers
_CONTROLLER: Any = None


def _limit_threads(inner_threads: int | None):
    """Context limiting BLAS threads in this process (a no-op for None)."""
    global _CONTROLLER
    if inner_threads is None:
        return nullcontext()
    if _CONTROLLER is None:
        from threadpoolctl import ThreadpoolController

        _CONTROLLER = ThreadpoolController()
    return _CONTROLLER.limit(limits=inner_threads, user_api="blas")


def _baseline_estimator(classification: bool):
    return DummyClassifier(strategy="prior") if classification else DummyRegressor()


def _fit_chunk(plan, X, columns, y, splits, items, on_error, inner_threads, checked,
               inits=None):
    """Fit and score a list of ``(columns, fold)`` items. Module-level so joblib can pickle it.

    ``X`` holds only the problem's columns listed in ``columns`` (sorted), which are
    all the chunk needs; None means all columns. ``plan`` is the evaluator's
    :class:`~featuresift.engine.fitplan.FitPlan`: when it has a shared head, the items are
    run fold by fold and the head is fitted once per fold on all of the chunk's
    columns (its time is counted with the fold's first fit).

    ``checked`` says the estimator's parameters were validated by an earlier fit and
    the data are finite, so scikit-learn may skip both checks in every fit (they cost
    about a tenth of a small fit and cannot change its result).

    ``inits`` (warm starts, :mod:`featuresift.engine.warmstart`): None, or one starting
    point ``(coef, intercept)`` or None per item; each result then also carries the
    fitted ``coef_``, ``intercept_`` and the solver's iteration count.

    Returns one ``(score, seconds, error_message_or_None)`` per item, in order.
    """
    out: list[tuple | None] = [None] * len(items)
    share = plan.head is not None
    order = sorted(range(len(items)), key=lambda i: items[i][1]) if share else range(len(items))
    cols_seen: tuple[int, ...] | None = None
    Xs = X
    shared_fold, shared = -1, None
    fast = config_context(skip_parameter_validation=True, assume_finite=True)
    with _limit_threads(inner_threads), fast if checked else nullcontext():
        for i in order:
            cols, fold = items[i]
            t0 = time.perf_counter()
            local = list(cols) if columns is None else np.searchsorted(columns, cols)
            train, test = splits[fold]
            if share and cols and fold != shared_fold:
                shared_fold = fold
                try:
                    shared = plan.transform_fold(X, train, test)
                except Exception:  # noqa: BLE001 - then each subset's own columns are used
                    shared = None
            try:
                if not cols:
                    # The empty subset is scored by a prior-only baseline on a constant column.
                    est = _baseline_estimator(plan.classification)
                    Xs = np.zeros((X.shape[0], 1))
                    cols_seen = cols
                    Xtr, Xte = Xs[train], Xs[test]
                elif share:
                    # The same columns as from the chunk-wide transform, to the last bit.
                    Xtr, Xte = ((shared[0][:, local], shared[1][:, local]) if shared is not None
                                else plan.transform_fold(X[:, local], train, test))
                    est = clone(plan.tail)
                else:
                    if cols != cols_seen:
                        Xs = X[:, local]
                        cols_seen = cols
                    Xtr, Xte = Xs[train], Xs[test]
                    est = clone(plan.tail)
                if cols and getattr(est, "takes_columns", False):
                    est.set_params(columns=tuple(cols))  # featuresift.columns.TypedColumns
                if inits is not None and inits[i] is not None:
                    est.set_params(warm_start=True)
                    est.coef_, est.intercept_ = inits[i]
                est.fit(Xtr, y[train])
                score, message = _score_fold(plan, est, Xte, y[test])
            except Exception as exc:  # noqa: BLE001 - the failure policy decides
                score, message = math.nan, f"{type(exc).__name__}: {exc}"
                cause: BaseException | None = exc
            else:
                cause = None
            if message is not None:
                if on_error == "raise":
                    raise FitFailedError(
                        f"fit failed on subset {list(cols)}, fold {fold}: {message}",
                        tuple(cols), fold, message,
                    ) from cause
                out[i] = (math.nan, time.perf_counter() - t0, message)
                continue
            out[i] = (score, time.perf_counter() - t0, None)
            if inits is not None:
                out[i] += warm_result(est)
    return out


def _score_fold(plan, est, X_test, y_test) -> tuple[float, str | None]:
    """Score one fitted fold: ``(score, None)``, or ``(nan, reason)`` when the score is
    NaN or infinite (an undefined metric: a failure, never a fold left out of the mean).

    Warnings raised while scoring are kept: a failed fold's reason quotes them (for
    example scikit-learn's "Only one class is present in y_true"); for a finite score
    they are issued again as usual.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        score = float(plan.score(est, X_test, y_test))
    if math.isfinite(score):
        for w in caught:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        return score, None
    said = "; ".join(dict.fromkeys(f"{w.category.__name__}: {w.message}" for w in caught))
    reason = f"the score is {score!r}" + (f" ({said})" if said else " (undefined for this fold)")
    return math.nan, reason


class CrossValidationEvaluator(BaseEvaluator):
    """Fits clones of the problem's estimator on its fixed CV splits.

    Every (subset, fold) fit of a batch is dispatched in one joblib call
    (:mod:`sklearn.utils.parallel`), so the user's :func:`joblib.parallel_config`
    (backend, including dask) applies; no backend is named here.

    Parameters
    ----------
    problem : SelectionProblem
        Data, model, splits and scorer.
    n_jobs : int, optional
        Parallel workers for the fits (joblib semantics; None means 1 unless a
        ``parallel_config`` says otherwise; -1 all CPUs, -2 all but one). With a local
        backend it is capped at the CPU count (``joblib.cpu_count()``) with a
        ``UserWarning`` saying so; under a dask cluster it is left as given.
    on_fit_error : {"raise", "record"}, default="raise"
        ``"raise"`` stops at the first failing fit with
        :class:`~featuresift.errors.FitFailedError` naming the subset and fold;
        ``"record"`` records the fold as failed, counts it in ``n_failed_fits`` and goes
        on. A fold fails when the fit or the scorer raises, or when the score is NaN or
        infinite (an undefined metric such as ROC AUC on a test fold with one class).
    error_score : float, default=nan
        What a failed fold scores under ``"record"`` (scikit-learn's convention). NaN:
        a subset with any failed fold has status ``"failed"``, no score, and is never
        chosen. A number: failed folds count as that score in the mean. The mean of
        the remaining folds is never used.
    racing : bool, str, dict or BaseRace, optional
        Off by default. True or ``"f-race"``: F-race; ``"t-race"``: paired t-test race
        (optionally with an indifference zone); ``"hoeffding"``: Hoeffding race; a dict
        adds options (``{"name": "t-race", "alpha": 0.2, "indifference": 0.005}``). See
        :mod:`featuresift.engine.racing`. Dropped candidates get status ``"dropped"``.
    journal : str, path-like or Journal, optional
        SQLite file recording every evaluation; a run started again with the same
        problem reuses what it holds (see :mod:`featuresift.engine.journal`).
    chunk_size : int, optional
        Fits per joblib task. None: about eight tasks per worker and batch.
    inner_threads : int or None, default=1
        BLAS threads per fit (threadpoolctl); None leaves the libraries alone.
    fast_path : bool, default=True
        Score OLS, ridge and LDA models (optionally behind column-wise scalers) from
        per-fold sufficient statistics instead of refitting, where that is exact
        (:mod:`featuresift.engine.linear`); other models are unaffected.
    pool : {"auto", "always", "never"}, default="auto"
        Where fits run when ``n_jobs`` allows several workers: ``"auto"`` fits small
        work in this process and starts the worker pool (in the background) only
        when a batch is worth it (:mod:`featuresift.engine.pool`); ``"always"`` sends
        every batch to joblib; ``"never"`` fits everything here. Results do not
        depend on it.
    warm_start : bool, default=False
        Start each logistic-regression fit from the coefficients of the same subset
        minus one column on the same fold, when fitted earlier (fewer solver
        iterations; scores agree to the solver's tolerance, so choices can differ:
        see :mod:`featuresift.engine.warmstart`). Other models ignore it.
    share_preprocessing : bool, default=True
        Fit the leading column-wise steps of a pipeline (scalers, per-column
        imputation) once per fold for a whole group of fits instead of once per
        subset; the scores are unchanged (see :mod:`featuresift.engine.fitplan`).
    verbose : int, default=0
        0: silent; 1: a progress bar in interactive sessions; 2: always a bar.

    Attributes
    ----------
    fingerprint : str
        The problem's fingerprint (cache and journal key).
    n_failed_fits : int
        Fold fits that failed under ``on_fit_error="record"``.
    n_dropped : int
        Candidates dropped by racing (counted once per batch they were dropped in).
    n_journal_hits : int
        Subsets served from the journal without any fit.
    n_journal_rejected : int
        Journal rows of this problem that did not verify (edited, corrupted or written by
        another version); they are never served.
    n_journal_refitted : int
        Of those, the subsets this evaluator was asked for and fitted again.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.tree import DecisionTreeClassifier
    >>> X, y = load_iris(return_X_y=True)
    >>> p = SelectionProblem(X, y, DecisionTreeClassifier(random_state=0), cv=3)
    >>> ev = CrossValidationEvaluator(p)
    >>> len(ev.evaluate([[2, 3], [0]])[0].fold_scores), ev.n_fits
    (3, 6)
    >>> _ = ev.evaluate([[3, 2]]); ev.n_fits, ev.n_cache_hits
    (6, 1)
    """

    def __init__(
        self,
        problem: SelectionProblem,
        n_jobs: int | None = None,
        on_fit_error: str = "raise",
        *,
        racing: Any = None,
        journal: str | os.PathLike | Journal | None = None,
        chunk_size: int | None = None,
        inner_threads: int | None = 1,
        share_preprocessing: bool = True,
        fast_path: bool = True,
        pool: str = "auto",
        warm_start: bool = False,
        verbose: int = 0,
        error_score: float = math.nan,
    ) -> None:
        super().__init__(problem.n_features, problem.feature_names)
        if on_fit_error not in ON_FIT_ERROR:
            raise InputError(
                f"on_fit_error must be 'raise' or 'record', got {on_fit_error!r}",
                key="on_fit_error",
            )
        if chunk_size is not None and (
            isinstance(chunk_size, bool) or not isinstance(chunk_size, int) or chunk_size < 1
        ):
            raise InputError(f"chunk_size must be a positive integer, got {chunk_size!r}",
                             key="chunk_size")
        if inner_threads is not None and (
            isinstance(inner_threads, bool) or not isinstance(inner_threads, int)
            or inner_threads < 1
        ):
            raise InputError(
                f"inner_threads must be a positive integer or None, got {inner_threads!r}",
                key="inner_threads",
            )
        self.problem = problem
        self.n_jobs = n_jobs
        capped_n_jobs(n_jobs)  # a bad value fails here, before any fit
        self._capped_noted = False
        self._cluster_backend: Any = None
        self.on_fit_error = on_fit_error
        self.error_score = check_error_score(error_score)
        self.race: BaseRace | None = make_race(racing)
        self.chunk_size = chunk_size
        self.inner_threads = inner_threads
        self.plan = make_fit_plan(problem, share_preprocessing=bool(share_preprocessing))
        self.fast_path = make_linear_path(problem) if fast_path else None
        if pool not in POOL_MODES:
            raise InputError(f"pool must be one of {', '.join(POOL_MODES)}, got {pool!r}",
                             key="pool")
        self.pool = PoolPolicy(pool, warm_with=(problem.estimator,))
        self.warm = WarmStarts() if warm_start and WarmStarts.eligible(self.plan) else None
        self.verbose = int(verbose)
        self.n_failed_fits = 0
        self.n_dropped = 0
        self.n_journal_hits = 0
        self.n_folds = len(problem.splits)
        self.fingerprint = problem.fingerprint()
        self._owns_journal = not isinstance(journal, Journal)
        self.journal = open_journal(journal)
        self._tables: dict[tuple[int, ...], FoldTable] = {}
        # Parameter and finiteness checks run until one batch has fitted cleanly.
        y = problem.y
        self._finite = bool(np.isfinite(problem.X).all()) and (
            y.dtype.kind not in "fc" or bool(np.isfinite(y).all())
        )
        self._checked = False
        self._from_journal: set[tuple[int, ...]] = set()
        self._rejected: set[tuple[int, ...]] = set()
        self._refitted: set[tuple[int, ...]] = set()
        if self.journal is not None:
            tables, rejected = self.journal.read(self.fingerprint)
            self._rejected.update(rejected)
            for key, table in tables.items():
                if table.n_folds == self.n_folds:
                    self._tables[key] = table
                    self._from_journal.add(key)

    @property
    def n_journal_rejected(self) -> int:
        """Journal rows of this problem that did not verify (never served)."""
        return len(self._rejected)

    @property
    def n_journal_refitted(self) -> int:
        """Subsets whose journal row did not verify and that were fitted again."""
        return len(self._refitted)

    # ----------------------------------------------------------------- public
    def stats(self) -> dict[str, Any]:
        """Counters of this evaluator's work (for reports).

        Examples
        --------
        >>> from sklearn.linear_model import LinearRegression
        >>> X = np.arange(20.0).reshape(10, 2)
        >>> p = SelectionProblem(X, 2 * X[:, 0], LinearRegression(), cv=2)
        >>> ev = CrossValidationEvaluator(p)
        >>> _ = ev.evaluate([[0], [0, 1]]); ev.stats()["n_fits"]
        4
        """
        return {
            "n_fits": self.n_fits,
            "n_cache_hits": self.n_cache_hits,
            "n_jobs": capped_n_jobs(self.n_jobs)[0],
            "n_failed_fits": self.n_failed_fits,
            "n_failed_subsets": sum(1 for t in self._tables.values() if t.errors),
            "on_fit_error": self.on_fit_error,
            "error_score": None if math.isnan(self.error_score) else self.error_score,
            "n_dropped": self.n_dropped,
            "n_journal_hits": self.n_journal_hits,
            "n_journal_rejected": self.n_journal_rejected,
            "n_journal_refitted": self.n_journal_refitted,
            "racing": None if self.race is None else self.race.describe(),
            "shared_preprocessing_steps": self.plan.n_shared_steps,
            "fast_path": None if self.fast_path is None else self.fast_path.describe(),
            "pool": self.pool.describe(),
            "warm_start": None if self.warm is None else self.warm.describe(),
            "journal": None if self.journal is None else str(self.journal.path),
        }

    def close(self) -> None:
        """Close the journal if this evaluator opened it."""
        if self.journal is not None and self._owns_journal:
            self.journal.close()
            self.journal = None

    # ------------------------------------------------------------ evaluation
    def _evaluate_new(self, subsets: list[tuple[int, ...]]) -> list[Evaluation]:
        found = self._evaluate_unique(subsets)
        return [found[k] for k in subsets]

    def _evaluate_unique(
        self, keys: list[tuple[int, ...]]
    ) -> dict[tuple[int, ...], Evaluation]:
        touched: set[tuple[int, ...]] = set()
        fitted: set[tuple[int, ...]] = set()
        all_folds = range(self.n_folds)
        if self.race is None or len(keys) < 2:
            self._fit_missing(keys, all_folds, touched, fitted)
            seen = {k: self.n_folds for k in keys}
        else:
            seen = self._race(keys, touched, fitted)
        if self.journal is not None and touched:
            self.journal.store(self.fingerprint, {k: self._tables[k] for k in touched})
        out = {}
        for k in keys:
            if k not in fitted:
                self.n_cache_hits += 1
                if k in self._from_journal and not self._is_cached(k):
                    self.n_journal_hits += 1
            n = seen[k]
            if n == self.n_folds and self._is_cached(k):
                out[k] = self._memo[k]
                continue
            ev = self._tables[k].evaluation(
                k, None if n == self.n_folds else n, self.error_score)
            out[k] = self._remember(ev)
        return out

    def _race(self, keys, touched, fitted) -> dict[tuple[int, ...], int]:
        """Score ``keys`` in rounds of folds; returns the folds seen by each candidate."""
        assert self.race is not None
        alive = list(keys)
        seen: dict[tuple[int, ...], int] = {}
        n = min(self.race.min_folds, self.n_folds)
        while True:
            self._fit_missing(alive, range(n), touched, fitted)
            if math.isnan(self.error_score):
                # A failed fold leaves the race as a failure (no score), not as dropped.
                for k in alive:
                    if any(f < n for f in self._tables[k].errors):
                        seen[k] = n
                alive = [k for k in alive if k not in seen]
                if not alive:
                    break
            matrix = np.array([self._tables[k].evaluation(k, n, self.error_score)
                               .fold_scores[:n] for k in alive], dtype=float)
            keep = self.race.keep(matrix, self.n_folds)
            for k, kept in zip(alive, keep):
                if not kept:
                    seen[k] = n
            self.n_dropped += int((~keep).sum())
            alive = [k for k, kept in zip(alive, keep) if kept]
            if n == self.n_folds or not alive:
                break
            # A lone survivor has nothing to race against: finish it in one round.
            n = self.n_folds if len(alive) == 1 else n + 1
        for k in alive:
            seen[k] = self.n_folds
        return seen

    def _fit_missing(self, keys, folds, touched, fitted) -> None:
        """Fit every (subset, fold) among ``keys`` x ``folds`` not known yet."""
        retry = self.on_fit_error == "raise"
        work: list[tuple[tuple[int, ...], int]] = []
        for k in keys:
            table = self._tables.get(k)
            if table is None:
                table = self._tables[k] = FoldTable.empty(self.n_folds)
            work.extend((k, f) for f in table.missing(folds, retry_failed=retry))
        if not work:
            return
        results = self._fast_then_dispatch(work)
        for (k, f), (score, seconds, error) in zip(work, results):
            self._tables[k].set(f, score, seconds, error)
            touched.add(k)
            fitted.add(k)
            if k in self._rejected:
                self._refitted.add(k)
            if error is not None:
                self.n_failed_fits += 1
        self.n_fits += len(work)

    def _fast_then_dispatch(self, work: list[tuple[tuple[int, ...], int]]) -> list[tuple]:
        """Score what the linear fast path can; fit the rest (results in ``work`` order)."""
        if self.fast_path is None:
            return self._dispatch(work)
        t0 = time.perf_counter()
        # Small batched solves: one BLAS thread, as for a fit (extra threads only cost
        # switching, and more so on a machine whose cores are busy).
        with _limit_threads(self.inner_threads):
            scored = self.fast_path.score(work)
        # A non-finite fast score goes to the real fit, whose failure policy then applies.
        scores = [s if s is None or math.isfinite(s) else None for s in scored]
        seconds = (time.perf_counter() - t0) / len(work)
        rest = [w for w, s in zip(work, scores) if s is None]
        fitted = iter(self._dispatch(rest) if rest else ())
        return [(s, seconds, None) if s is not None else next(fitted) for s in scores]

    def _jobs(self) -> int | None:
        """The ``n_jobs`` of this dispatch, capped at the CPU count (noted once)."""
        n, note = capped_n_jobs(self.n_jobs)
        if note is not None and not self._capped_noted:
            self._capped_noted = True
            warnings.warn(note, UserWarning, stacklevel=4)
        return n

    def _chunks(self, work: list, n_jobs: int | None) -> list[list]:
        if self.chunk_size is not None:
            size = self.chunk_size
        else:
            workers = max(1, effective_n_jobs(n_jobs))
            size = max(1, math.ceil(len(work) / (TASKS_PER_WORKER * workers)))
        return [work[i:i + size] for i in range(0, len(work), size)]

    def _columns(self, chunk: list) -> tuple[np.ndarray, np.ndarray | None]:
        """The data a chunk needs: X restricted to the union of its subsets' columns."""
        X = self.problem.X
        used = np.unique(np.fromiter((c for cols, _ in chunk for c in cols), dtype=np.intp))
        if used.size == X.shape[1]:
            return X, None
        return np.ascontiguousarray(X[:, used]), used

    def _on_cluster(self):
        """Under a dask backend: a backend that holds the problem's X, y, splits and fit
        plan on every worker, scattered once per evaluator (that is, once per run), or
        None. Tasks name these by identity (joblib's dask backend swaps them for the
        scattered copies), so a batch ships only its (subset, fold) items."""
        backend, _ = get_active_backend()
        if type(backend).__name__ != "DaskDistributedBackend":
            return None
        if backend is self._cluster_backend:
            return backend
        if self._cluster_backend is None or self._cluster_backend.client is not backend.client:
            from joblib._dask import DaskDistributedBackend

            p = self.problem
            self._cluster_backend = DaskDistributedBackend(
                client=backend.client, scatter=[p.X, p.y, p.splits, self.plan])
        return self._cluster_backend

    def _dispatch(self, work: list[tuple[tuple[int, ...], int]]) -> list[tuple]:
        """Fit ``work`` in-process or in one joblib call (see :mod:`featuresift.engine.pool`);
        results in ``work`` order."""
        p = self.problem
        n_jobs = self._jobs()
        chunks = self._chunks(work, n_jobs)
        bar = make_progress(len(work), self.verbose, "featuresift fits")
        results: list[tuple] = []

        cluster = self._on_cluster()
        warm = self.warm
        fit = _fit_chunk

        def args(chunk):
            # On a cluster every task names the scattered X instead of shipping columns.
            data = (p.X, None) if cluster is not None else self._columns(chunk)
            inits = () if warm is None else (warm.inits(chunk),)
            return (self.plan, *data, p.y, p.splits, chunk,
                    self.on_fit_error, self.inner_threads, self._checked, *inits)

        try:
            for i, chunk in enumerate(chunks):
                if self.pool.use_pool(len(work) - len(results), n_jobs, first=i == 0):
                    t0, n0 = time.perf_counter(), len(results)
                    tasks = (delayed(fit)(*args(c)) for c in chunks[i:])
                    with (nullcontext() if cluster is None
                          else parallel_config(backend=cluster)):
                        for part in Parallel(n_jobs=n_jobs, return_as="generator")(tasks):
                            results.extend(part)
                            bar.update(len(part))
                    self.pool.observe_pool(len(results) - n0, time.perf_counter() - t0)
                    break
                if i > 0 and not self.pool.may_switch(n_jobs):
                    # Nothing can move the rest of this batch to the pool: fit it as one
                    # in-process part (fewer parts, fewer shared-preprocessing refits).
                    chunk = [item for c in chunks[i:] for item in c]
                t0, c0 = time.perf_counter(), time.process_time()
                part = fit(*args(chunk))
                self.pool.observe(len(part), time.perf_counter() - t0,
                                  time.process_time() - c0)
                results.extend(part)
                bar.update(len(part))
                if len(results) == len(work):
                    break
        except FitFailedError as exc:
            if exc.subset is None:
                raise
            raise FitFailedError(
                f"fit failed on subset [{', '.join(self.feature_names[c] for c in exc.subset)}]"
                f", fold {exc.fold} of {self.n_folds} (0-based): {exc.reason}",
                exc.subset, exc.fold, exc.reason,
            ) from None
        finally:
            bar.close()
        if warm is not None:
            results = warm.store(work, results)
        if self._finite and all(r[2] is None for r in results):
            self._checked = True
        return results
