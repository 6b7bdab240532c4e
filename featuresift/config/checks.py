"""Checks across sections and data (target, folds, costs, lists, scorer), before any fit."""

from __future__ import annotations

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
    if cfg.stratified:
        counts = frame[cfg.data.target].value_counts()
        if counts.min() < cv.folds:
            raise ctx.error(
                f"{cv.folds} folds, but class {counts.idxmin()!r} of the target has only "
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
        return cfg.scoring
    if cfg.scoring is not None and cfg.scoring != required:
        raise ctx.error(
            f"objective '{cfg.objective['name']}' scores subsets with its own scorer; "
            "remove 'scoring' (or use objective: {name: score})", "scoring",
        )
    return required
