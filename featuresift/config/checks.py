"""Checks across sections and data (target, folds, costs, lists, scorer), before any fit."""

from __future__ import annotations

import warnings
from typing import Any

import numpy as np
import pandas as pd
from sklearn.utils.multiclass import type_of_target

from featuresift.config.context import _Context, _suggest
from featuresift.config.schema import RunConfig
from featuresift.costs import CostModel
from featuresift.errors import InputError
from featuresift.objectives import make_objective
from featuresift.scoring import check_scoring_target


def _check_target(cfg: RunConfig, ctx: _Context) -> None:
    y = cfg.frame[cfg.data.target]
    name, key = cfg.data.target, "data.target"
    if y.isna().any():
        row = int(np.flatnonzero(y.isna().to_numpy())[0])
        raise ctx.error(
            f"target column '{name}' has {int(y.isna().sum())} missing value(s), "
            f"first in data row {row + 1}", key,
        )
    if cfg.classification:
        kind = type_of_target(y.to_numpy())
        if kind.startswith("continuous"):
            raise ctx.error(
                f"target column '{name}' holds continuous numbers but {cfg.model.estimator} "
                "is a classifier; use a regressor, or a column of class labels", key,
            )
        classes = pd.unique(y)
        if len(classes) < 2:
            raise ctx.error(
                f"the classification target '{name}' has a single class ({classes[0]!r}); "
                "at least two are needed", key,
            )
    elif not pd.api.types.is_numeric_dtype(y) or pd.api.types.is_bool_dtype(y):
        raise ctx.error(
            f"target column '{name}' is not numeric but {cfg.model.estimator} is a "
            "regressor; use a classifier, or a numeric target", key,
        )


def _check_folds(cfg: RunConfig, ctx: _Context) -> None:
    """Every stratified test fold can hold each class; groups are complete and enough."""
    cv, frame = cfg.cv, cfg.frame
    if cv.folds > len(frame):
        raise ctx.error(f"cannot make the CV folds: {cv.folds} folds, but the data has only "
                        f"{len(frame)} rows", "cv.folds")
    if cfg.stratified:
        counts = frame[cfg.data.target].value_counts()
        if counts.min() < cv.folds:
            raise ctx.error(
                f"{cv.folds} folds, but class {_label(counts.idxmin())} of the target has only "
                f"{counts.min()} rows; every test fold needs each class", "cv.folds",
            )
    if cv.group_column is not None:
        groups = frame[cv.group_column]
        if groups.isna().any():
            raise ctx.error(f"group column '{cv.group_column}' has missing values",
                            "cv.group_column")
        if groups.nunique() < cv.folds:
            raise ctx.error(
                f"group column '{cv.group_column}' has {groups.nunique()} groups, fewer "
                f"than cv.folds = {cv.folds}", "cv.group_column",
            )
        if cfg.stratified:
            # A group's rows share a fold: a class seen in fewer groups than folds leaves
            # some test fold without it (its ROC AUC, say, is undefined there).
            per_class = groups.groupby(frame[cfg.data.target].to_numpy()).nunique()
            if per_class.min() < cv.folds:
                raise ctx.error(
                    f"class {_label(per_class.idxmin())} of the target occurs in only "
                    f"{per_class.min()} group(s) of '{cv.group_column}', fewer than "
                    f"cv.folds = {cv.folds}: some test fold would hold none of it; use "
                    "fewer folds or a finer group column", "cv.group_column",
                )


def _build_cost_model(cfg: RunConfig, ctx: _Context) -> CostModel:
    spec, frame, cands = cfg.costs, cfg.frame, cfg.candidates
    if not spec.given:
        return CostModel.uniform(cands)
    is_cand = set(cands)
    for name in spec.features:
        if name not in frame.columns:
            raise ctx.error(
                f"cost given for '{name}', which is not a column of "
                f"{cfg.data.path.name}{_suggest(name, frame.columns)}",
                f"costs.features.{name}",
            )
    for pname, (_, members) in spec.panels.items():
        for i, m in enumerate(members):
            if m not in frame.columns:
                raise ctx.error(
                    f"panel '{pname}' lists '{m}', which is not a column of "
                    f"{cfg.data.path.name}{_suggest(m, frame.columns)}",
                    f"costs.panels.{pname}.features[{i}]",
                )
    in_panel = {m for _, members in spec.panels.values() for m in members}
    missing = [c for c in cands if c not in spec.features and c not in in_panel]
    if missing:
        raise ctx.error(
            "no cost for candidate column(s) " + ", ".join(f"'{c}'" for c in missing)
            + "; price each under costs.features, put it in a panel, or list it under "
            "data.exclude", "costs.features" if "costs.features" in ctx.lines else "costs",
        )
    cfg.ignored_costs = sorted(
        {n for n in spec.features if n not in is_cand} | {m for m in in_panel if m not in is_cand}
    )
    panels = {}
    for pname, (price, members) in spec.panels.items():
        kept = [m for m in members if m in is_cand]
        if kept:
            panels[pname] = (price, kept)
    prices = {n: p for n, p in spec.features.items() if n in is_cand}
    try:
        return CostModel(cands, prices, panels=panels, unit=spec.unit)
    except InputError as exc:
        raise ctx.rekey(exc, "costs") from None


def _check_lists(cfg: RunConfig, ctx: _Context) -> None:
    cm = cfg.cost_model
    cands = cfg.candidates
    for key in ("must_include", "never_include"):
        for i, name in enumerate(getattr(cfg, key)):
            if name not in cands:
                raise ctx.error(
                    f"'{name}' is not a candidate feature{_suggest(name, cands)}", f"{key}[{i}]"
                )
    both = [n for n in cfg.must_include if n in cfg.never_include]
    if both:
        raise ctx.error(f"also in never_include: {', '.join(both)}", "must_include")
    limit = cfg.limits.max_features
    if limit is not None and len(cfg.must_include) > limit:
        raise ctx.error(
            f"{len(cfg.must_include)} features but limits.max_features is {limit}",
            "must_include",
        )
    allowed = [i for i, c in enumerate(cands) if c not in cfg.never_include]
    if not allowed:
        raise ctx.error("every candidate feature is excluded", "never_include")
    if cfg.budget is None:
        return
    if cfg.must_include:
        smallest = list(cfg.must_include)
        what = "the must_include features"
    else:
        smallest = [min(allowed, key=lambda i: (cm.cost([i]), i))]
        what = "the cheapest possible subset (one feature or panel)"
    cheapest = cm.cost(smallest)
    if not cm.is_feasible(smallest, cfg.budget):
        raise ctx.error(
            f"budget {cfg.budget:g} {cm.unit} is below {what}, which costs "
            f"{cheapest:g} {cm.unit}", "budget",
        )


def _check_missing_values(cfg: RunConfig, ctx: _Context) -> None:
    """Missing candidate values need an imputer unless the estimator accepts NaN."""
    if any(s.startswith("impute_") for s in cfg.model.preprocessing):
        return
    holes = [c for c in cfg.candidates
             if c not in cfg.data.categorical and cfg.frame[c].isna().any()]
    if not holes:
        return
    try:
        from sklearn.utils import get_tags

        allow_nan = bool(get_tags(cfg.model.build()).input_tags.allow_nan)
    except Exception:  # noqa: BLE001 - older scikit-learn or odd estimator: let fit decide
        return
    if not allow_nan:
        shown = ", ".join(holes[:5]) + (f" and {len(holes) - 5} more" if len(holes) > 5 else "")
        raise ctx.error(
            f"candidate column(s) {shown} have missing values and {cfg.model.estimator} "
            "does not accept them; add an imputation step such as impute_median",
            "model.preprocessing",
        )


def _check_scoring(cfg: RunConfig, ctx: _Context) -> Any:
    objective = make_objective(cfg.objective)
    try:
        objective.check_target(cfg.frame[cfg.data.target].to_numpy())
    except InputError as exc:
        raise ctx.rekey(exc, "objective") from None
    required = objective.required_scorer()
    y = cfg.frame[cfg.data.target].to_numpy()
    if required is None:
        try:
            check_scoring_target(cfg.scoring, y, classification=cfg.classification)
        except InputError as exc:
            raise ctx.error(exc.message, "scoring") from None
        _check_scorer_method(cfg, ctx)
        return cfg.scoring
    if cfg.scoring is not None and cfg.scoring != required:
        raise ctx.error(
            f"objective '{cfg.objective['name']}' scores subsets with its own scorer; "
            "remove 'scoring' (or use objective: {name: score})", "scoring",
        )
    return required


class _NeverAsked:
    """The evaluator of a search space that is only checked (validate time): no fits."""

    def __init__(self, n_features: int) -> None:
        self.n_features = n_features


def _check_strategy_on_data(cfg: RunConfig, ctx: _Context) -> None:
    """The strategy's options against this data and cost table (nothing evaluated)."""
    from featuresift.strategies import make_strategy
    from featuresift.strategies.base import SearchSpace

    names = cfg.candidates
    index = {n: i for i, n in enumerate(names)}
    with warnings.catch_warnings():  # old spellings were noted when the section was read
        warnings.simplefilter("ignore", DeprecationWarning)
        strategy = make_strategy({"name": cfg.strategy["name"],
                                  "options": dict(cfg.strategy["options"])})
    try:
        space = SearchSpace(
            _NeverAsked(len(names)), cfg.cost_model, budget=cfg.budget,
            max_features=cfg.limits.max_features,
            must_include=[index[n] for n in cfg.must_include],
            never_include=[index[n] for n in cfg.never_include],
        )
        strategy.check(space)
    except InputError as exc:
        raise ctx.rekey(exc, "strategy.options") from None


def check_outer_folds(cfg: RunConfig, k: int, where: str, *, key: str | None = None,
                      line: int | None = None) -> None:
    """K outer folds (nested estimate, noise guard) leave every fold scorable.

    The same rule as ``cv.folds``: each outer test fold holds every class (stratified
    classification) and, inside each outer training part, ``cv.folds`` inner folds still
    do; with ``cv.group_column`` counted in groups (every class in at least K groups).
    ``where`` starts the message (``"10 outer folds"``, ``"--nested 10"``). Raises
    :class:`InputError` at ``key`` (and ``line``).
    """
    inner = cfg.cv.folds
    frame = cfg.frame
    target = frame[cfg.data.target]
    group = cfg.cv.group_column

    def fail(text: str) -> None:
        raise InputError(f"{where}: {text}", key=key, line=line)

    def left(n: int) -> int:  # the smallest outer training part of n units
        return n - -(-n // k)

    n_rows = len(frame)
    if n_rows < k:
        fail(f"the data has only {n_rows} rows")
    if left(n_rows) < inner:
        fail(f"an outer training part keeps {left(n_rows)} of the {n_rows} rows, fewer than "
             f"cv.folds = {inner}")
    if group is not None:
        n_groups = int(frame[group].nunique())
        if n_groups < k:
            fail(f"group column '{group}' has only {n_groups} groups")
        if left(n_groups) < inner:
            fail(f"an outer training part keeps {left(n_groups)} of the {n_groups} groups, "
                 f"fewer than cv.folds = {inner}")
    if not cfg.stratified:
        return
    if group is not None:
        per_class = frame.groupby(target.to_numpy())[group].nunique()
        unit = "groups"
    else:
        per_class = target.value_counts()
        unit = "rows"
    label, n = per_class.idxmin(), int(per_class.min())
    if n < k:
        fail(f"class {_label(label)} of the target has only {n} {unit}; every outer test "
             "fold needs each class")
    if left(n) < inner:
        fail(f"class {_label(label)} has {n} {unit}, so an outer training part keeps "
             f"{left(n)}, fewer than cv.folds = {inner} (every inner test fold needs each "
             "class)")


def _label(value: Any) -> str:
    """A class label as the user wrote it (no numpy type names)."""
    return repr(value.item() if isinstance(value, np.generic) else value)


def _check_nested_and_guard_folds(cfg: RunConfig, ctx: _Context) -> None:
    """The ``nested`` section's and the noise guard's outer folds fit the data."""
    section = cfg.extra.get("nested")
    if section is not None:
        check_outer_folds(cfg, section["folds"], f"{section['folds']} outer folds",
                          key="nested.folds",
                          line=ctx.line("nested.folds"))
    guard = cfg.extra.get("guard") or {}
    if guard.get("name") == "nested":
        given = "guard.folds" in ctx.lines
        key = "guard.folds" if given else "guard"
        where = (f"{guard['folds']} outer folds" if given
                 else f"the noise guard's {guard['folds']} outer folds (its default)")
        try:
            check_outer_folds(cfg, guard["folds"], where, key=key, line=ctx.line(key))
        except InputError as exc:
            raise InputError(exc.message + "; set guard: {name: nested, folds: N} with a "
                             "smaller N, or guard: off", key=exc.key, line=exc.line) from None


def check_sweep_budgets(cfg: RunConfig, budgets: list, key: str = "sweep.budgets",
                        lines: dict[str, int] | None = None) -> None:
    """Every budget of a sweep is finite, at most ``MAX_AMOUNT`` and buys something.

    ``key`` names where the list came from (``sweep.budgets`` or ``--budgets``); with
    ``lines``, the message gives the line of the entry (``sweep.budgets[1]``).
    """
    from featuresift.config.sections import MAX_AMOUNT

    cm = cfg.cost_model
    cheapest = cm.cheapest_feature_cost()
    for i, b in enumerate(budgets):
        where = f"{key}[{i}]" if lines is not None else key
        line = None if lines is None else lines.get(where, lines.get(key))
        if b is not None and b > MAX_AMOUNT:
            raise InputError(f"budget {b:g} must be at most {MAX_AMOUNT:g} (or unlimited)",
                             key=where, line=line)
        if b is not None and b < cheapest:
            raise InputError(
                f"budget {b:g} {cm.unit} is below the cheapest possible subset "
                f"({cheapest:g} {cm.unit})", key=where, line=line)


def _check_scorer_method(cfg: RunConfig, ctx: _Context) -> None:
    """The model has the method the scorer reads (predict_proba, decision_function)."""
    if cfg.scoring is None:
        return
    from sklearn.metrics import get_scorer

    method = getattr(get_scorer(cfg.scoring), "_response_method", None)
    if method is None:  # older scikit-learn: the first fit tells
        return
    methods = (method,) if isinstance(method, str) else tuple(method)
    model = cfg.model.build()
    if any(hasattr(model, m) for m in methods):
        return
    raise ctx.error(
        f"'{cfg.scoring}' reads the model's {' or '.join(methods)}, which "
        f"{cfg.model.estimator.rpartition('.')[2]} (with these params) does not have; use a "
        "scorer of predicted labels such as accuracy or balanced_accuracy, or a model "
        "with that method", "scoring",
    )
