"""The selection problem: data, names, cost model, model, CV splits and scorer.

A :class:`SelectionProblem` is everything an evaluator needs, fixed once: the CV
splits are materialised at construction so that every subset is scored on exactly
the same folds, and a fingerprint identifies the problem for caching and journals.
"""

from __future__ import annotations

import functools
import hashlib
import inspect
import json
import re
import warnings
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np
from sklearn.base import BaseEstimator, clone, is_classifier
from sklearn.metrics import check_scoring, get_scorer_names
from sklearn.model_selection import (
    GroupKFold,
    KFold,
    RepeatedKFold,
    RepeatedStratifiedKFold,
    StratifiedGroupKFold,
    StratifiedKFold,
    check_cv,
)
from sklearn.utils.multiclass import type_of_target

from featuresift._compat import renamed_keywords
from featuresift.columns import ColumnSpec, TypedColumns, encode_frame, needs_frame
from featuresift.costs import CostModel, make_cost_model
from featuresift.errors import InputError
from featuresift.scoring import check_scoring_target

__all__ = ["SelectionProblem", "make_splitter"]


def _as_2d(X: Any) -> tuple[np.ndarray, list[str] | None, list[ColumnSpec] | None]:
    """Numeric array, column names and column specs (None for a plain array).

    A DataFrame's categorical and text columns become codes (see
    :func:`featuresift.columns.encode_frame`); nullable dtypes with ``pd.NA`` become NaN.
    """
    if hasattr(X, "columns") and hasattr(X, "dtypes"):
        names = [str(c) for c in X.columns]
        arr, specs = encode_frame(X)
        return np.ascontiguousarray(arr), names, specs
    arr, names = _as_2d_float(X)
    return arr, names, None


def _as_2d_float(X: Any) -> tuple[np.ndarray, list[str] | None]:
    names = None
    if hasattr(X, "columns"):
        names = [str(c) for c in X.columns]
        if hasattr(X, "dtypes"):
            return np.ascontiguousarray(encode_frame(X)[0]), names
        X = X.to_numpy()
    try:
        arr = np.asarray(X, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(f"X must be numeric: {exc}") from None
    if arr.ndim != 2:
        raise InputError(f"X must be 2-dimensional, got shape {arr.shape}")
    return np.ascontiguousarray(arr), names


def make_splitter(
    folds: int,
    *,
    classification: bool,
    grouped: bool = False,
    repeats: int = 1,
    stratified: bool | None = None,
    shuffle: bool = True,
    seed: int | None = 0,
) -> Any:
    """The CV splitter for a number of folds: one rule for Python and YAML.

    Grouped folds (each group's rows in one fold) are :class:`StratifiedGroupKFold`
    for a classification task and :class:`GroupKFold` otherwise; without groups,
    :class:`StratifiedKFold` / :class:`KFold`, repeated when ``repeats > 1``.
    ``seed`` shuffles the assignment when ``shuffle`` is true. This is what the YAML
    ``cv`` section builds, and what :class:`SelectionProblem` builds for an integer
    ``cv`` (with or without ``groups``; seed 0).

    Parameters
    ----------
    folds : int
        Number of folds (at least 2).
    classification : bool
        Whether the target is a class label (stratify by default).
    grouped : bool, default=False
        Keep each group's rows in one fold.
    repeats : int, default=1
        Repetitions of k-fold with different shuffles (not with groups).
    stratified : bool, optional
        Override stratification (default: stratify for classification).
    shuffle : bool, default=True
        Shuffle before splitting (with ``seed``).
    seed : int, optional, default=0
        Seed of the shuffle.

    Examples
    --------
    >>> make_splitter(4, classification=True, grouped=True)
    StratifiedGroupKFold(n_splits=4, random_state=0, shuffle=True)
    >>> make_splitter(3, classification=False, grouped=True, seed=2)
    GroupKFold(n_splits=3, random_state=2, shuffle=True)
    """
    if isinstance(folds, bool) or not isinstance(folds, (int, np.integer)) or folds < 2:
        raise InputError(f"cv must be at least 2 folds, got {folds!r}", key="cv")
    strat = classification if stratified is None else bool(stratified)
    rs = seed if shuffle else None
    if grouped:
        if repeats > 1:
            raise InputError("repeated grouped cross-validation is not supported",
                             key="cv.repeats")
        cls = StratifiedGroupKFold if strat else GroupKFold
        return cls(int(folds), shuffle=shuffle, random_state=rs)
    if repeats > 1:
        cls = RepeatedStratifiedKFold if strat else RepeatedKFold
        return cls(n_splits=int(folds), n_repeats=int(repeats), random_state=seed)
    cls = StratifiedKFold if strat else KFold
    return cls(int(folds), shuffle=shuffle, random_state=rs)


def _is_group_splitter(cv: Any) -> bool:
    """Whether a splitter needs ``groups`` (GroupKFold, LeaveOneGroupOut, ...)."""
    if isinstance(cv, (int, np.integer)) or not hasattr(cv, "split"):
        return False
    try:
        return "groups" in cv._get_default_requests().split.requests  # scikit-learn >= 1.4
    except AttributeError:
        return "Group" in type(cv).__name__


def _refuse_missing(values: np.ndarray, name: str, what: str, remedy: str) -> None:
    """An :class:`InputError` naming ``name`` and the rows when a value is missing.

    Missing: NaN, None, ``pd.NA`` or ``NaT`` (``pandas.isna``), as in a nullable column.

    Examples
    --------
    >>> _refuse_missing(np.array([1.0, float("nan")]), "y", "a target value", "fill it")
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: y: y has 1 missing value (row 1): every row needs a \
target value; fill it
    """
    import pandas as pd

    if values.dtype.kind in "biuUS":  # these dtypes cannot hold a missing value
        return
    rows = np.flatnonzero(pd.isna(values))
    if rows.size:
        shown = ", ".join(str(r) for r in rows[:5]) + (", ..." if rows.size > 5 else "")
        raise InputError(
            f"{name} has {rows.size} missing value{'s' * (rows.size != 1)} "
            f"(row{'s' * (rows.size != 1)} {shown}): every row needs {what}; {remedy}",
            key=name)


def groups_ignored(cv: Any, groups: Any, where: str = "cv") -> bool:
    """Warn, and return True, when ``groups`` are given to a splitter that ignores them.

    A splitter such as ``StratifiedKFold`` puts rows of one group (farm, supplier) on both
    sides of a split, so scores are optimistic for new groups; scikit-learn only warns
    "The groups parameter is ignored". An integer, a list of splits or a grouped
    splitter (``GroupKFold``, ``StratifiedGroupKFold``, ``LeaveOneGroupOut`` ...) is fine.
    """
    if groups is None or isinstance(cv, (int, np.integer)) or not hasattr(cv, "split") \
            or _is_group_splitter(cv) or getattr(cv, "cv", None) is not None:
        return False
    warnings.warn(
        f"groups are given but {where}={type(cv).__name__} does not use them: rows of one "
        "group fall on both sides of a split, so scores are optimistic for new groups. "
        f"Pass {where}=K (grouped folds, as the YAML cv.group_column) or a grouped splitter "
        "such as StratifiedGroupKFold / GroupKFold", UserWarning, stacklevel=4)
    return True


def split_quietly(splitter: Any, X: Any, y: Any, groups: Any) -> list:
    """``list(splitter.split(X, y, groups))`` without scikit-learn's "groups ignored"
    warning (:func:`groups_ignored` has said it in our words)."""
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="The groups parameter is ignored")
        return list(splitter.split(X, y, groups))


def _refuse_empty(X: np.ndarray, names: Sequence[str], block: int = 64) -> None:
    """An :class:`InputError` for an X without rows or columns, or a column with no value.

    Columns are checked in blocks, so no boolean copy of the whole of X is made.
    """
    if X.shape[0] == 0 or X.shape[1] == 0:
        raise InputError(f"X has no {'rows' if X.shape[0] == 0 else 'columns'} "
                         f"(shape {X.shape})", key="X")
    empty: list[str] = []
    for j in range(0, X.shape[1], block):
        cols = np.flatnonzero(np.isnan(X[:, j:j + block]).all(axis=0))
        empty += [str(names[j + c]) for c in cols]
    if empty:
        raise InputError(f"column(s) {', '.join(empty[:10])}{' ...' if len(empty) > 10 else ''}"
                         " have no value (every row missing): drop them", key="X")


_ADDRESS = re.compile(r" at 0x[0-9a-fA-F]+")


def _stable_repr(obj: Any) -> str:
    """A text form of ``obj`` that is the same in every process.

    Plain ``repr`` of a function or of many objects contains a memory address, which
    would give a problem a new fingerprint in every run (and so defeat the journal).
    Functions are named by module, qualified name and a digest of their code.
    """
    if isinstance(obj, functools.partial):
        args = ", ".join(_stable_repr(a) for a in obj.args)
        kwargs = ", ".join(f"{k}={_stable_repr(v)}" for k, v in sorted(obj.keywords.items()))
        return f"partial({_stable_repr(obj.func)}, {args}, {kwargs})"
    if inspect.isfunction(obj) or inspect.ismethod(obj):
        fn = obj.__func__ if inspect.ismethod(obj) else obj
        code = fn.__code__
        digest = hashlib.sha256(
            code.co_code + _ADDRESS.sub("", repr(code.co_consts)).encode()
        ).hexdigest()[:16]
        return f"{fn.__module__}.{fn.__qualname__}#{digest}"
    if inspect.isclass(obj) or inspect.isbuiltin(obj):
        return f"{getattr(obj, '__module__', '')}.{getattr(obj, '__qualname__', repr(obj))}"
    return _ADDRESS.sub("", repr(obj))


class SelectionProblem:
    """Data, costs, model, CV splits and scorer for a subset search.

    Parameters
    ----------
    X : array-like or DataFrame of shape (n_samples, n_features)
        Candidate measurements. Missing values (NaN, ``pd.NA``) are allowed if the
        estimator (or its preprocessing) handles them. A DataFrame keeps its column
        types: categorical and text columns reach the model as such (for a pipeline that
        one-hot encodes them, or a model with native categories), see
        :mod:`featuresift.columns`.
    y : array-like of shape (n_samples,)
        Target.
    estimator : scikit-learn estimator
        Model (or pipeline) fitted on each subset; it is cloned for every fit.
    costs : CostModel or mapping, optional
        Acquisition costs: a :class:`CostModel`, or as YAML's ``costs`` section
        ``{"features": {name: price}, "panels": {...}, "unit": "EUR"}`` (or any form
        :func:`~featuresift.costs.make_cost_model` takes). Default: every feature costs 1
        (unit "features"). Kept as the attribute ``cost_model`` (a CostModel).
    cv : int, CV splitter or iterable of (train, test), default=5
        Cross-validation. An integer K gives the folds the YAML ``cv`` section gives for
        ``folds: K`` (:func:`make_splitter`, shuffled with seed 0): ``StratifiedKFold`` for
        classifiers and ``KFold`` otherwise, or with ``groups`` ``StratifiedGroupKFold`` /
        ``GroupKFold``. So Python and the command line split the same data alike. For
        another shuffle pass ``make_splitter(K, classification=..., seed=s)``; for
        unshuffled folds ``StratifiedKFold(K)``. The splits are computed once.
    scoring : str or callable, optional
        A scikit-learn scorer name, or a callable ``scorer(estimator, X, y)``.
        Default: the estimator's ``score`` method.
    groups : array-like, optional
        Group labels (e.g. farm, supplier, batch): rows of a group never fall on both
        sides of a split. Required by grouped splitters such as ``GroupKFold``.
    feature_names : sequence of str, optional
        Column names (taken from a DataFrame, else from a ``CostModel``, when not given).
    cost_model : CostModel, deprecated
        Old name of ``costs``.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.tree import DecisionTreeClassifier
    >>> X, y = load_iris(return_X_y=True)
    >>> p = SelectionProblem(X, y, DecisionTreeClassifier(random_state=0), cv=3)
    >>> p.n_features, len(p.splits)
    (4, 3)
    """

    @renamed_keywords(cost_model="costs")
    def __init__(
        self,
        X: Any,
        y: Any,
        estimator: BaseEstimator,
        costs: Any = None,
        cv: Any = 5,
        scoring: str | Callable | None = None,
        groups: Any = None,
        feature_names: Sequence[str] | None = None,
    ) -> None:
        X_arr, df_names, specs = _as_2d(X)
        names = list(feature_names) if feature_names is not None else df_names
        if names is None and isinstance(costs, CostModel):
            # A plain array with a cost model: its columns are the cost model's features.
            names = list(costs.feature_names)
        if names is None:
            names = [f"x{i}" for i in range(X_arr.shape[1])]
        if len(names) != X_arr.shape[1]:
            raise InputError(
                f"{len(names)} feature names given for {X_arr.shape[1]} columns of X"
            )
        _refuse_empty(X_arr, names)
        y_arr = np.asarray(y)
        if y_arr.ndim != 1 or y_arr.shape[0] != X_arr.shape[0]:
            raise InputError(
                f"y must be 1-dimensional with {X_arr.shape[0]} values, got shape {y_arr.shape}"
            )
        _refuse_missing(y_arr, "y", "a target value", "drop those rows or fill the target")
        if not hasattr(estimator, "fit"):
            raise InputError(f"estimator must have a fit method, got {estimator!r}")
        self.classification = bool(is_classifier(estimator))
        if self.classification and np.unique(y_arr).size < 2:
            raise InputError(
                "the classification target has a single class "
                f"({np.unique(y_arr)[0]!r}); at least two are needed"
            )
        self.X = X_arr
        self.y = y_arr
        self.groups = None if groups is None else np.asarray(groups)
        self.feature_names = [str(n) for n in names]
        self.user_estimator = estimator
        self.column_specs = specs
        if specs is not None and needs_frame(estimator, specs):
            # The model sees the user's columns (names, dtypes) rebuilt for each subset.
            estimator = TypedColumns(estimator, tuple(self.feature_names), tuple(specs))
        self.estimator = estimator
        self.cost_model = make_cost_model(self.feature_names, costs)
        if isinstance(scoring, str) and scoring not in get_scorer_names():
            raise InputError(
                f"unknown scorer '{scoring}'; use a scikit-learn scorer name "
                "(sklearn.metrics.get_scorer_names())"
            )
        # The scorer must be able to score this target (roc_auc on three classes, ...):
        # said here, before any fit, with the scorer to use instead.
        check_scoring_target(scoring, y_arr, classification=self.classification)
        self.scoring = scoring
        self.scorer = check_scoring(estimator, scoring=scoring)
        if self.groups is not None and self.groups.shape[0] != X_arr.shape[0]:
            raise InputError(
                f"groups has {self.groups.shape[0]} values for {X_arr.shape[0]} rows of X",
                key="groups",
            )
        if self.groups is not None:
            _refuse_missing(self.groups, "groups", "a group label",
                            "give those rows a label (their own group if unknown)")
        if self.groups is None and _is_group_splitter(cv):
            raise InputError(
                f"{type(cv).__name__} needs group labels: pass groups=...", key="groups"
            )
        if isinstance(cv, (int, np.integer)) and not isinstance(cv, bool):
            # One rule with the YAML `cv` section (cv.shuffle: true, cv.seed: 0): the same
            # data give the same folds, hence the same answer, in Python and on the CLI.
            if self.groups is not None and np.unique(self.groups).size < cv:
                raise InputError(f"groups has {np.unique(self.groups).size} distinct values, "
                                 f"fewer than cv = {cv} folds", key="groups")
            # Stratified for class labels, as scikit-learn's check_cv (a target of another
            # type is reported by the estimator itself, not by the splitter).
            splitter = make_splitter(
                int(cv), classification=self.classification, grouped=self.groups is not None,
                stratified=self.classification
                and type_of_target(y_arr) in ("binary", "multiclass"))
        else:
            splitter = check_cv(cv, y_arr, classifier=self.classification)
        self.cv = splitter
        # Whether the folds keep each group together (the display says "grouped").
        self.grouped = self.groups is not None and not groups_ignored(cv, self.groups)
        try:
            self.splits: list[tuple[np.ndarray, np.ndarray]] = [
                (np.asarray(tr), np.asarray(te))
                for tr, te in split_quietly(splitter, X_arr, y_arr, self.groups)
            ]
        except ValueError as exc:  # too few rows per class or group, ...
            raise InputError(f"cannot make the CV folds: {exc}", key="cv") from None
        if not self.splits:
            raise InputError("the cross-validation produced no splits")
        self._fingerprint: str | None = None

    def __repr__(self) -> str:
        from featuresift.display import problem_repr

        return problem_repr(self)

    def _repr_html_(self) -> str:
        from featuresift.display import problem_html

        return problem_html(self)

    @property
    def n_features(self) -> int:
        """Number of candidate features."""
        return self.X.shape[1]

    @property
    def n_samples(self) -> int:
        """Number of samples."""
        return self.X.shape[0]

    def new_estimator(self) -> BaseEstimator:
        """An unfitted clone of the estimator."""
        return clone(self.estimator)

    def fingerprint(self) -> str:
        """Hex digest identifying data, estimator and parameters, splits and scorer.

        Two problems with the same fingerprint score every subset identically, so
        cached or journaled evaluations may be shared between them.
        """
        if self._fingerprint is None:
            h = hashlib.sha256()
            h.update(b"featuresift-problem-v2")
            h.update(str(self.X.shape).encode())
            # The buffer itself, not a bytes copy: the same digest without a copy of X.
            h.update(memoryview(np.ascontiguousarray(self.X)).cast("B"))
            h.update(np.asarray(self.y).astype(str).astype("U").tobytes())
            h.update(repr(type(self.estimator)).encode())
            params = self.estimator.get_params(deep=True)
            h.update(
                json.dumps({k: _stable_repr(v) for k, v in sorted(params.items())}).encode()
            )
            for tr, te in self.splits:
                h.update(np.asarray(tr, dtype=np.int64).tobytes())
                h.update(b"|")
                h.update(np.asarray(te, dtype=np.int64).tobytes())
                h.update(b"#")
            h.update(_stable_repr(
                self.scoring if isinstance(self.scoring, str) else self.scorer).encode())
            self._fingerprint = h.hexdigest()
        return self._fingerprint
