"""scikit-learn facade: a feature selector that knows what measurements cost.

:class:`MeasurementSelector` wraps :func:`featuresift.run_search` as a scikit-learn
transformer. ``fit`` prices the columns, builds a :class:`~featuresift.SelectionProblem`
and runs the chosen strategy under the budget; ``transform`` keeps the chosen columns.
It can sit in a :class:`~sklearn.pipeline.Pipeline` and be cloned, pickled and
grid-searched like any scikit-learn estimator.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np
from sklearn.base import BaseEstimator, MetaEstimatorMixin
from sklearn.feature_selection import SelectorMixin
from sklearn.pipeline import Pipeline
from sklearn.utils import get_tags
from sklearn.utils.validation import check_is_fitted, validate_data

from featuresift._compat import warn_renamed
from featuresift.columns import needs_frame, non_numeric_columns
from featuresift.costs import CostModel, make_cost_model
from featuresift.errors import FitFailedError, InputError
from featuresift.guard import DEFAULT_GUARD
from featuresift.problem import SelectionProblem, _is_group_splitter
from featuresift.search import DEFAULT_PICK, run_search

__all__ = ["MeasurementSelector", "BuyNothingWarning", "build_cost_model"]


class BuyNothingWarning(UserWarning):
    """The selector's answer is to buy no measurement: ``transform`` gives 0 columns.

    Emitted by :meth:`MeasurementSelector.fit` with the reason (the noise guard's test,
    the pick rule, the budget) and how to proceed, and again, briefly, by ``transform``.
    """


def _typed_frame(X: Any) -> bool:
    """A DataFrame with a column that is not plain numpy-numeric (category, text, Int64...)."""
    dtypes = getattr(X, "dtypes", None)
    if dtypes is None or not hasattr(X, "columns"):
        return False
    return any(not isinstance(d, np.dtype) or d.kind not in "biuf" for d in dtypes)


def _accepts_nan(estimator: Any) -> bool:
    """Whether ``estimator`` takes NaN input: its tag, or a pipeline's first step's tag.

    scikit-learn's :class:`~sklearn.pipeline.Pipeline` does not pass its first step's
    ``allow_nan`` tag on, yet ``make_pipeline(SimpleImputer(), model)`` handles NaN.
    """
    if isinstance(estimator, Pipeline):
        steps = [s for _, s in estimator.steps if s is not None and s != "passthrough"]
        return bool(steps) and _accepts_nan(steps[0])
    try:
        return bool(get_tags(estimator).input_tags.allow_nan)
    except (AttributeError, TypeError, ValueError):
        return False


def buy_nothing_message(result: Any) -> str:
    """Why a search's answer buys no measurement, and what to do next.

    Examples
    --------
    >>> from types import SimpleNamespace as NS
    >>> res = NS(guard={"decision": "replaced by 'nothing': ...", "p_value": 0.054,
    ...                 "alpha": 0.05, "replaced": ["ph"], "folds": 5},
    ...          pick={}, budget=None, cost_unit="EUR", scoring="accuracy")
    >>> print(buy_nothing_message(res).split(". ")[0])
    No measurement is worth buying here: the noise guard found no evidence that the \
search's answer (ph) beats buying nothing on 5 outer folds the search never saw \
(one-sided paired t-test p = 0.054 > alpha 0.05)
    """
    guard = getattr(result, "guard", None) or {}
    pick = getattr(result, "pick", None) or {}
    best = pick.get("best") or {}
    if guard.get("replaced") is not None and "p_value" in guard:
        why = ("the noise guard found no evidence that the search's answer "
               f"({', '.join(guard['replaced'])}) beats buying nothing on "
               f"{guard.get('folds')} outer folds the search never saw (one-sided paired "
               f"t-test p = {guard['p_value']:.3g} > alpha {guard.get('alpha')})")
        how = ("more rows (or groups) may show an effect; guard='off' keeps the search's "
               "answer, whose in-search score is optimistic")
    elif best.get("features") and pick.get("rule") == "one-se":
        nothing = (getattr(result, "references", None) or {}).get("nothing") or {}
        against = (f" against {nothing['score_mean']:.4f} for nothing"
                   if nothing.get("score_mean") is not None else "")
        why = (f"the best set found ({', '.join(best['features'])}, in-search "
               f"{result.scoring} {best['score_mean']:.4f} ± {best['score_sem']:.4f} s.e."
               f"{against}) is within one standard error of buying nothing, and the "
               "one-SE pick takes the cheapest such set")
        how = "pick='best' takes the best set found instead"
    elif result.budget is not None and not best.get("features"):
        why = (f"no measurement set affordable within the budget of {result.budget:g} "
               f"{result.cost_unit} scored better than buying nothing")
        how = "a larger budget or other candidates may change that"
    else:
        why = "no measurement set scored better than buying nothing"
        how = "other candidates, more rows or another model may change that"
    return (f"No measurement is worth buying here: {why}. transform() will return 0 "
            f"columns, on which no model can be fitted. To go on: {how}; or model without "
            "these measurements (the answer 'buy nothing' is the result).")


def build_cost_model(
    feature_names: list[str],
    costs: Any = None,
    panels: Mapping[str, Any] | None = None,
    unit: str | None = None,
) -> CostModel:
    """Build a :class:`CostModel` from the selector's ``costs`` (see :func:`make_cost_model`).

    Examples
    --------
    >>> cm = build_cost_model(["a", "b", "c"], {"features": {"a": 2.0},
    ...                       "panels": {"kit": {"cost": 5.0, "features": ["b", "c"]}}})
    >>> cm.cost(["a", "b", "c"])
    7.0
    """
    return make_cost_model(feature_names, costs, panels, unit)


class MeasurementSelector(SelectorMixin, MetaEstimatorMixin, BaseEstimator):
    """Choose the measurements worth paying for, as a scikit-learn transformer.

    Runs a budget- and panel-aware subset search (cross-validating ``estimator`` on
    candidate subsets) and keeps the chosen columns.

    Parameters
    ----------
    estimator : scikit-learn estimator
        Model (or pipeline) cross-validated on each candidate subset.
    costs : None, dict, array-like or CostModel, default=None
        Price per sample of each measurement, as YAML's ``costs`` section:
        ``{"features": {name: price}, "panels": {name: {"cost": price, "features":
        [names]}}, "unit": "EUR"}``. Also accepted: a flat dict ``{name: price}``
        (features in a panel omitted), an array aligned with the columns (panel
        members 0 or NaN), or a :class:`~featuresift.CostModel`. None: every feature
        costs 1.
    budget : float, optional
        Largest acquisition cost per sample of the chosen subset (None: unlimited).
    strategy : str, dict or SearchStrategy, default="greedy-swap"
        Search strategy: a registered name such as "greedy-swap" or "forward", or as in YAML
        ``{"name": "forward", "options": {"n_features": 3}}``.
    objective : str, dict or BaseObjective, optional
        How subsets are valued (default "score": mean CV score within the budget).
    cv : int, splitter or iterable, default=5
        Cross-validation for every subset. An integer K splits as the YAML ``cv:
        {folds: K}`` does: shuffled with seed 0, stratified for classifiers (see
        :class:`~featuresift.SelectionProblem`).
    scoring : str or callable, optional
        scikit-learn scorer; default the estimator's ``score``.
    max_features : int, optional
        Largest subset size.
    max_evaluations : int, optional
        Stop the search after this many subsets (YAML ``limits.max_evaluations``).
    max_time_s : float, optional
        Stop the search after this many seconds (YAML ``limits.max_time_s``); the answer
        is the best found by then, so it can differ between machines.
    must_include, never_include : sequence of names or column indices
        Measurements always taken / not available.
    pick : {"one-se", "best"}, default="one-se"
        Final pick rule (see :func:`featuresift.run_search`): the cheapest subset within
        one standard error of the best, or the best.
    guard : {"nested", "off"} or dict, default="nested"
        Noise guard (see :mod:`featuresift.guard`): keep measurements only if they beat
        buying nothing on outer folds the search never saw (about 5x the fits of the
        search; "off" to skip, e.g. inside a grid search). When the answer is to buy
        nothing, ``fit`` warns (:class:`BuyNothingWarning`, saying why and how to go
        on) and ``transform`` returns zero columns.
    seed : int, optional, default=0
        Seed of stochastic strategies (recorded in ``result_.seed``).
    n_jobs : int, optional
        Parallel model fits (joblib).
    verbose : int, default=0
        0: silent; 1: a progress bar in a notebook or on a terminal, a one-line-per-step
        log when output is piped; 2: always a bar.
    on_fit_error : {"raise", "record"}, default="raise"
        Stop at the first failing fit or NaN score, or record the fold as failed and go
        on (see :class:`~featuresift.engine.evaluator.CrossValidationEvaluator`).
    error_score : float, default=nan
        Under ``"record"``, the score of a failed fold (scikit-learn's convention). NaN:
        a subset with a failed fold is never chosen. ``fit`` raises
        :class:`~featuresift.errors.FitFailedError` when no subset could be scored.
    panels, cost_unit, strategy_options, random_state : deprecated
        Old spellings: give panels and unit inside ``costs``, options inside
        ``strategy``, and ``seed``. They still work, with a DeprecationWarning.

    Attributes
    ----------
    support_ : ndarray of bool, shape (n_features_in_,)
        Mask of the chosen columns.
    selected_features_ : list of str
        Names of the chosen columns.
    cost_ : float
        Acquisition cost per sample of the chosen subset.
    score_ : float
        Mean CV score of the chosen subset. It is optimistically biased, because the
        subset was chosen on the same folds; use nested CV for an honest estimate.
    cost_model_ : CostModel
        The prices used.
    result_ : SearchResult
        The full search outcome (path, breakdown, counts).
    n_features_in_ : int
        Number of columns seen in ``fit``.
    feature_names_in_ : ndarray of str
        Column names seen in ``fit`` (DataFrames with string column names only).

    Notes
    -----
    Missing values (NaN) are accepted when the estimator accepts them, or when it is a
    pipeline whose first step does (for example an imputer).

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.tree import DecisionTreeClassifier
    >>> X, y = load_iris(return_X_y=True, as_frame=True)
    >>> prices = {"sepal length (cm)": 1.0, "sepal width (cm)": 1.0,
    ...           "petal length (cm)": 4.0, "petal width (cm)": 4.0}
    >>> sel = MeasurementSelector(DecisionTreeClassifier(random_state=0), costs=prices,
    ...                           budget=5.0, cv=3).fit(X, y)
    >>> sel.cost_ <= 5.0
    True
    >>> sel.transform(X).shape[1] == len(sel.selected_features_)
    True
    """

    def __init__(
        self,
        estimator: Any,
        *,
        costs: Any = None,
        budget: float | None = None,
        strategy: Any = "greedy-swap",
        objective: Any = None,
        cv: Any = 5,
        scoring: Any = None,
        max_features: int | None = None,
        max_evaluations: int | None = None,
        max_time_s: float | None = None,
        must_include: Iterable[int | str] = (),
        never_include: Iterable[int | str] = (),
        pick: str = DEFAULT_PICK,
        guard: Any = DEFAULT_GUARD,
        seed: int | None = 0,
        n_jobs: int | None = None,
        verbose: int = 0,
        on_fit_error: str = "raise",
        error_score: float = np.nan,
        panels: Mapping[str, Any] | None = None,
        cost_unit: str | None = None,
        strategy_options: Mapping[str, Any] | None = None,
        random_state: int | None = None,
    ) -> None:
        self.estimator = estimator
        self.costs = costs
        self.panels = panels
        self.cost_unit = cost_unit
        self.budget = budget
        self.strategy = strategy
        self.strategy_options = strategy_options
        self.objective = objective
        self.cv = cv
        self.scoring = scoring
        self.max_features = max_features
        self.max_evaluations = max_evaluations
        self.max_time_s = max_time_s
        self.must_include = must_include
        self.never_include = never_include
        self.pick = pick
        self.guard = guard
        self.seed = seed
        self.n_jobs = n_jobs
        self.verbose = verbose
        self.random_state = random_state
        self.on_fit_error = on_fit_error
        self.error_score = error_score

    def fit(self, X: Any, y: Any, groups: Any = None) -> MeasurementSelector:
        """Search for the best affordable subset of the columns of ``X``.

        Parameters
        ----------
        X : array-like or DataFrame of shape (n_samples, n_features)
            Candidate measurements.
        y : array-like of shape (n_samples,)
            Target.
        groups : array-like of shape (n_samples,), optional
            Group labels (farm, supplier, batch...): the search's CV keeps each group's
            rows in one fold. With an integer ``cv`` they give grouped folds (stratified
            for classifiers); a grouped splitter such as ``GroupKFold`` requires them.
            Inside a scikit-learn meta-estimator, request them with
            ``set_fit_request(groups=True)`` (metadata routing).

        Returns
        -------
        self : MeasurementSelector
        """
        allow_nan = self.__sklearn_tags__().input_tags.allow_nan
        frame = X if _typed_frame(X) or (
            hasattr(X, "columns") and needs_frame(self.estimator, None)) else None
        if frame is not None:
            # Categorical, text or nullable columns: the DataFrame goes to the problem as
            # it is (its types reach the model); only names and shape are recorded here.
            validate_data(self, X, skip_check_array=True)
            y = np.asarray(y)
        else:
            X, y = validate_data(self, X, y, ensure_all_finite=not allow_nan, dtype="numeric")
        if X.shape[0] < 2:
            raise InputError(
                f"cross-validation needs at least 2 samples, got n_samples={X.shape[0]}"
            )
        names = (
            [str(n) for n in self.feature_names_in_]
            if hasattr(self, "feature_names_in_")
            else [f"x{i}" for i in range(X.shape[1])]
        )
        for old, new in (("panels", "costs['panels']"), ("cost_unit", "costs['unit']"),
                         ("strategy_options", "strategy={'name': ..., 'options': {...}}")):
            if getattr(self, old) is not None:
                warnings.warn(f"MeasurementSelector: '{old}' is deprecated; use {new}",
                              DeprecationWarning, stacklevel=2)
        seed = self.seed
        if self.random_state is not None:
            warn_renamed("MeasurementSelector", "random_state", "seed", stacklevel=2)
            seed = self.random_state
        cost_model = make_cost_model(names, self.costs, self.panels, self.cost_unit)
        if groups is None and _is_group_splitter(self.cv):
            raise InputError(
                f"{type(self.cv).__name__} needs group labels: fit(X, y, groups=g). Inside a "
                "Pipeline, GridSearchCV or cross_validate: sklearn.set_config("
                "enable_metadata_routing=True), selector.set_fit_request(groups=True), then "
                "pass the groups to the outer call (cross_validate(..., params={'groups': "
                "g}), GridSearchCV.fit(X, y, groups=g))", key="groups")
        if groups is not None:
            groups = np.asarray(groups)
            if groups.ndim != 1 or groups.shape[0] != X.shape[0]:
                raise InputError(
                    f"groups must have one label per row of X ({X.shape[0]}), "
                    f"got shape {groups.shape}", key="groups")
        problem = SelectionProblem(
            X if frame is None else frame, y, self.estimator, costs=cost_model, cv=self.cv,
            scoring=self.scoring, groups=groups, feature_names=names,
        )
        options = dict(self.strategy_options or {})
        result = run_search(
            problem,
            self.strategy,
            budget=self.budget,
            objective=self.objective,
            max_features=self.max_features,
            max_evaluations=self.max_evaluations,
            max_time_s=self.max_time_s,
            must_include=list(self.must_include),
            never_include=list(self.never_include),
            pick=self.pick,
            guard=self.guard,
            seed=seed,
            n_jobs=self.n_jobs,
            verbose=self.verbose,
            on_fit_error=self.on_fit_error,
            error_score=self.error_score,
            **options,
        )
        if result.failures.get("none_scored"):
            raise FitFailedError(result.failures["message"])
        support = np.zeros(X.shape[1], dtype=bool)
        support[list(result.support)] = True
        self.support_ = support
        self.selected_features_ = list(result.selected)
        self.cost_ = float(result.cost)
        self.score_ = float(result.score_mean)
        self.cost_model_ = cost_model
        self.result_ = result
        if not support.any():
            warnings.warn(f"MeasurementSelector: {buy_nothing_message(result)}",
                          BuyNothingWarning, stacklevel=2)
        return self

    def transform(self, X: Any) -> Any:
        """Keep the chosen columns of ``X``.

        A DataFrame with categorical or text columns comes back as a DataFrame of the
        chosen columns with their dtypes (no numeric array could hold them); other input
        as scikit-learn's selectors return it (see ``set_output``). When the answer is to
        buy nothing, 0 columns, with a :class:`BuyNothingWarning`.
        """
        if non_numeric_columns(X):
            validate_data(self, X, skip_check_array=True, reset=False)
            return self._transform(X)
        return super().transform(X)

    def _transform(self, X: Any) -> Any:
        mask = self.get_support()
        if not mask.any():  # said here in our words instead of scikit-learn's generic ones
            warnings.warn("MeasurementSelector chose no measurement (buy nothing, see "
                          "result_.headline()): transform returns 0 columns",
                          BuyNothingWarning, stacklevel=3)
            return X.iloc[:, :0] if hasattr(X, "iloc") else np.empty(
                (X.shape[0], 0), dtype=getattr(X, "dtype", float))
        return super()._transform(X)

    def _get_support_mask(self) -> np.ndarray:
        check_is_fitted(self, "support_")
        return self.support_

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.input_tags.allow_nan = _accepts_nan(self.estimator)
        tags.target_tags.required = True
        return tags
