"""scikit-learn facade: a feature selector that knows what measurements cost.

:class:`MeasurementSelector` wraps :func:`featuresift.run_search` as a scikit-learn
transformer. ``fit`` prices the columns, builds a :class:`~featuresift.SelectionProblem`
and runs the chosen strategy under the budget; ``transform`` keeps the chosen columns.
It can sit in a :class:`~sklearn.pipeline.Pipeline` and be cloned, pickled and
grid-searched like any scikit-learn estimator.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np
from sklearn.base import BaseEstimator, MetaEstimatorMixin
from sklearn.feature_selection import SelectorMixin
from sklearn.pipeline import Pipeline
from sklearn.utils import get_tags
from sklearn.utils.validation import check_is_fitted, validate_data

from featuresift.costs import CostModel
from featuresift.errors import InputError
from featuresift.problem import SelectionProblem
from featuresift.search import run_search

__all__ = ["MeasurementSelector", "build_cost_model"]


def _panel_spec(name: str, spec: Any) -> tuple[Any, list[str]]:
    """Accept ``{"cost": c, "features": [...]}`` or ``(c, [...])`` for one panel."""
    if isinstance(spec, Mapping):
        unknown = set(spec) - {"cost", "features"}
        if unknown or "cost" not in spec or "features" not in spec:
            raise InputError(
                "a panel is {'cost': price, 'features': [names]}"
                + (f"; unknown key(s): {', '.join(sorted(map(str, unknown)))}" if unknown else ""),
                key=f"panels.{name}",
            )
        price, members = spec["cost"], spec["features"]
    else:
        try:
            price, members = spec
        except (TypeError, ValueError):
            raise InputError(
                f"a panel is (price, [names]) or {{'cost': ..., 'features': [...]}}, got {spec!r}",
                key=f"panels.{name}",
            ) from None
    if isinstance(members, str) or not isinstance(members, Iterable):
        raise InputError(f"panel features must be a list of names, got {members!r}",
                         key=f"panels.{name}.features")
    return price, [str(m) for m in members]


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


def build_cost_model(
    feature_names: list[str],
    costs: Any = None,
    panels: Mapping[str, Any] | None = None,
    unit: str | None = None,
) -> CostModel:
    """Build a :class:`CostModel` from the selector's ``costs`` and ``panels`` arguments.

    Parameters
    ----------
    feature_names : list of str
        Column names, in order.
    costs : None, mapping, array-like or CostModel
        ``None``: every feature outside a panel costs 1. A mapping gives the price of
        each feature outside a panel. An array gives one price per column; entries of
        panel members must be 0 or NaN (they are paid through their panel). A
        :class:`CostModel` is used as is (its features must be the columns).
    panels : mapping, optional
        ``{name: {"cost": price, "features": [names]}}`` or ``{name: (price, [names])}``.
    unit : str, optional
        Cost unit; default "features" when ``costs`` is None, else "cost units".

    Returns
    -------
    CostModel

    Examples
    --------
    >>> cm = build_cost_model(["a", "b", "c"], [2.0, 0.0, 0.0],
    ...                       panels={"kit": {"cost": 5.0, "features": ["b", "c"]}})
    >>> cm.cost(["a", "b", "c"])
    7.0
    """
    names = [str(n) for n in feature_names]
    if isinstance(costs, CostModel):
        if panels:
            raise InputError("give panels inside the CostModel, not also as 'panels'",
                             key="panels")
        if list(costs.feature_names) != names:
            raise InputError("the CostModel's features must be the columns of X, in order",
                             key="costs")
        return costs
    panel_map = {str(k): _panel_spec(str(k), v) for k, v in dict(panels or {}).items()}
    in_panel = {m for _, members in panel_map.values() for m in members}
    if costs is None:
        prices: dict[str, Any] = {n: 1.0 for n in names if n not in in_panel}
        default_unit = "features"
    elif isinstance(costs, Mapping):
        prices = {str(k): v for k, v in costs.items()}
        default_unit = "cost units"
    else:
        values = np.asarray(costs, dtype=object).ravel()
        if values.shape[0] != len(names):
            raise InputError(
                f"{values.shape[0]} costs given for {len(names)} columns of X", key="costs"
            )
        prices = {}
        for n, v in zip(names, values):
            if n in in_panel:
                blank = isinstance(v, (int, float, np.number)) and (
                    math.isnan(float(v)) or float(v) == 0.0
                )
                if not blank:
                    raise InputError(
                        f"'{n}' is paid through its panel; its entry must be 0 or NaN, got {v!r}",
                        key=f"costs[{names.index(n)}]",
                    )
                continue
            prices[n] = v.item() if isinstance(v, np.generic) else v
        default_unit = "cost units"
    return CostModel(names, prices, panels=panel_map, unit=unit or default_unit)


class MeasurementSelector(SelectorMixin, MetaEstimatorMixin, BaseEstimator):
    """Choose the measurements worth paying for, as a scikit-learn transformer.

    Runs a budget- and panel-aware subset search (cross-validating ``estimator`` on
    candidate subsets) and keeps the chosen columns.

    Parameters
    ----------
    estimator : scikit-learn estimator
        Model (or pipeline) cross-validated on each candidate subset.
    costs : None, dict, array-like or CostModel, default=None
        Price per sample of each measurement: a dict ``{name: price}`` (features in a
        panel are omitted), an array aligned with the columns (panel members 0 or NaN),
        or a :class:`~featuresift.CostModel`. None: every feature costs 1.
    panels : dict, optional
        Groups bought together for one price:
        ``{name: {"cost": price, "features": [names]}}``.
    cost_unit : str, optional
        Unit of the costs, carried into the result.
    budget : float, optional
        Largest acquisition cost per sample of the chosen subset (None: unlimited).
    strategy : str, dict or SearchStrategy, default="forward"
        Search strategy (a registered name such as "forward" or "backward").
    strategy_options : dict, optional
        Options for the strategy (for example ``{"n_features": 3}``).
    objective : str, dict or BaseObjective, optional
        How subsets are valued (default "score": mean CV score within the budget).
    cv : int, splitter or iterable, default=5
        Cross-validation for every subset (stratified for classifiers).
    scoring : str or callable, optional
        scikit-learn scorer; default the estimator's ``score``.
    max_features : int, optional
        Largest subset size.
    must_include, never_include : sequence of names or column indices
        Measurements always taken / not available.
    pick : {"best", "one_se"}, default="best"
        Final pick rule (see :func:`featuresift.run_search`).
    random_state : int, optional, default=0
        Seed for stochastic strategies.
    n_jobs : int, optional
        Parallel model fits (joblib).

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
        panels: Mapping[str, Any] | None = None,
        cost_unit: str | None = None,
        budget: float | None = None,
        strategy: Any = "forward",
        strategy_options: Mapping[str, Any] | None = None,
        objective: Any = None,
        cv: Any = 5,
        scoring: Any = None,
        max_features: int | None = None,
        must_include: Iterable[int | str] = (),
        never_include: Iterable[int | str] = (),
        pick: str = "best",
        random_state: int | None = 0,
        n_jobs: int | None = None,
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
        self.must_include = must_include
        self.never_include = never_include
        self.pick = pick
        self.random_state = random_state
        self.n_jobs = n_jobs

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
        cost_model = build_cost_model(names, self.costs, self.panels, self.cost_unit)
        if groups is not None:
            groups = np.asarray(groups)
            if groups.ndim != 1 or groups.shape[0] != X.shape[0]:
                raise InputError(
                    f"groups must have one label per row of X ({X.shape[0]}), "
                    f"got shape {groups.shape}", key="groups")
        problem = SelectionProblem(
            X, y, self.estimator, cost_model=cost_model, cv=self.cv, scoring=self.scoring,
            groups=groups, feature_names=names,
        )
        options = dict(self.strategy_options or {})
        result = run_search(
            problem,
            self.strategy,
            budget=self.budget,
            objective=self.objective,
            max_features=self.max_features,
            must_include=list(self.must_include),
            never_include=list(self.never_include),
            pick=self.pick,
            random_state=self.random_state,
            n_jobs=self.n_jobs,
            **options,
        )
        support = np.zeros(X.shape[1], dtype=bool)
        support[list(result.support)] = True
        self.support_ = support
        self.selected_features_ = list(result.selected)
        self.cost_ = float(result.cost)
        self.score_ = float(result.score_mean)
        self.cost_model_ = cost_model
        self.result_ = result
        return self

    def _get_support_mask(self) -> np.ndarray:
        check_is_fitted(self, "support_")
        return self.support_

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.input_tags.allow_nan = _accepts_nan(self.estimator)
        tags.target_tags.required = True
        return tags
