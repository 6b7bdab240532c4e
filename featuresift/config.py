"""Run configuration: a YAML file that describes data, costs, model, CV and search.

The file is read as data only (:func:`yaml.safe_load`; no pickle, no ``eval``). Every
problem found is raised as :class:`~featuresift.errors.InputError` naming the YAML key
and its line (or the data column / feature), before anything is fitted or written.

Public functions
----------------
:func:`load_config`
    Read and check a YAML file and its data file; returns a :class:`RunConfig`.
:func:`build_run`
    Turn a :class:`RunConfig` into a :class:`~featuresift.problem.SelectionProblem`
    and the keyword arguments of :func:`~featuresift.search.run_search` (no fitting).
:func:`run_from_config`
    Both, then the search; returns the :class:`~featuresift.result.SearchResult`.
:func:`describe_plan`
    A readable account of what a run would do (``featuresift run --dry-run``).

Schema
------
Only ``data`` and ``model`` are required; every other key has the default shown.
Relative paths are relative to the folder of the YAML file.

.. code-block:: yaml

    data:
      path: grain_lots.csv          # CSV (.csv, .csv.gz) or Parquet (.parquet/.pq, needs pyarrow)
      target: meets_milling_grade   # target column
      features: null                # list of candidate columns; null = every column except
                                    #   the target, cv.group_column and `exclude`
      exclude: [lot_id]             # columns never used as candidates
    costs:                          # omit the whole section: every feature costs 1
      unit: "EUR per lot (invented)"
      features:                     # price of each candidate that is not in a panel
        moisture_pct: 0.0           #   (0 = value already on hand); >= 0, finite
        protein_nir_pct: 6.0
      panels:                       # tests bought together for one price
        mycotoxin_panel: {cost: 48.0, features: [don_ppm, zearalenone_ppb]}
    budget: 30.0                    # max cost per sample of the chosen set; null = unlimited
    model:
      estimator: sklearn.linear_model.LogisticRegression  # dotted class path
      params: {max_iter: 2000}      # constructor arguments
      preprocessing: [impute_median, scale]  # steps fitted inside every CV fold
      trusted_modules: []           # top-level modules allowed besides sklearn
    cv:
      folds: 5
      repeats: 1                    # > 1: repeated (stratified) k-fold
      stratified: null              # null = stratified for classifiers
      group_column: null            # keep each group's rows in one fold
      shuffle: true
      seed: 0
    scoring: null                   # a name from sklearn.metrics.get_scorer_names();
                                    #   null = the estimator's own score method
    objective: {name: score}        # or {name: penalized, lambda: 0.002}
    strategy:
      name: forward                 # a name registered in featuresift.strategies
      options: {}                   # strategy keyword options, e.g. {n_features: 4}
    limits: {max_features: null, max_evaluations: null, max_time_s: null}
    must_include: []                # measurements always taken
    never_include: []               # measurements not available
    pick: best                      # best | one_se
    seed: 0                         # random seed of stochastic strategies
    n_jobs: 1                       # parallel model fits (joblib)
    output:
      folder: results/<name of the YAML file>   # must stay inside the YAML file's folder

Preprocessing steps (names in ``model.preprocessing``, see :data:`PREPROCESSORS`):
``impute_mean``, ``impute_median``, ``impute_most_frequent`` (at most one imputer),
``impute_indicator`` (median imputation plus a 0/1 column per feature that had missing
values), ``scale`` (standardise), ``minmax`` (to [0, 1]) and ``robust`` (median/IQR).

Costs may name columns that are in the data but are not candidates (the target,
excluded columns); those prices are ignored and listed in the plan. A cost for a column
that is not in the data, or a candidate without a cost, is an error.

Adding a section
----------------
Write a function ``parse(value, ctx) -> parsed`` (``value`` is the raw YAML value or
None when absent; raise ``ctx.error(message, key)`` on bad input) and add it to
:data:`SECTIONS` with :func:`register_section`. The parsed value lands in
``RunConfig.extra[name]``; an optional ``apply(cfg, value, problem, kwargs)`` hook may
then change the search keyword arguments in :func:`build_run`.
"""

from __future__ import annotations

import difflib
import importlib
import inspect
import math
import os
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import yaml
from sklearn.base import is_classifier
from sklearn.impute import SimpleImputer
from sklearn.metrics import get_scorer_names
from sklearn.model_selection import (
    GroupKFold,
    KFold,
    RepeatedKFold,
    RepeatedStratifiedKFold,
    StratifiedGroupKFold,
    StratifiedKFold,
)
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import MinMaxScaler, RobustScaler, StandardScaler
from sklearn.utils.multiclass import type_of_target

import featuresift.filters  # noqa: F401 - registers the filter strategy and objective by name
from featuresift.costs import CostModel
from featuresift.engine.racing import make_race
from featuresift.errors import InputError
from featuresift.objectives import make_objective
from featuresift.problem import SelectionProblem
from featuresift.result import SearchResult
from featuresift.search import PICK_RULES, run_search
from featuresift.strategies import STRATEGIES, make_strategy

__all__ = [
    "RunConfig",
    "DataSpec",
    "CostSpec",
    "ModelSpec",
    "CVSpec",
    "LimitsSpec",
    "Section",
    "SECTIONS",
    "PREPROCESSORS",
    "OVERRIDES",
    "register_section",
    "load_config",
    "build_run",
    "run_from_config",
    "describe_plan",
    "sweep_from_config",
    "nested_from_config",
]

PREPROCESSORS: dict[str, Callable[[], Any]] = {
    "impute_mean": lambda: SimpleImputer(strategy="mean"),
    "impute_median": lambda: SimpleImputer(strategy="median"),
    "impute_most_frequent": lambda: SimpleImputer(strategy="most_frequent"),
    "impute_indicator": lambda: SimpleImputer(strategy="median", add_indicator=True),
    "scale": StandardScaler,
    "minmax": MinMaxScaler,
    "robust": RobustScaler,
}
"""Preprocessing step names accepted in ``model.preprocessing`` and their factories."""

OVERRIDES = ("output", "n_jobs", "budget", "strategy", "seed")
"""Keys :func:`load_config` accepts as command-line overrides."""

_DATA_SUFFIXES = {".csv": "csv", ".gz": "csv", ".parquet": "parquet", ".pq": "parquet"}


# ----------------------------------------------------------------- parsed pieces
@dataclass(frozen=True)
class DataSpec:
    """The ``data`` section: file, target, candidate list, excluded columns."""

    path: Path
    target: str
    features: tuple[str, ...] | None
    exclude: tuple[str, ...]


@dataclass(frozen=True)
class CostSpec:
    """The ``costs`` section as written (not yet matched against the data)."""

    unit: str
    features: dict[str, float]
    panels: dict[str, tuple[float, tuple[str, ...]]]
    given: bool


@dataclass(frozen=True)
class ModelSpec:
    """The ``model`` section: estimator class, parameters and preprocessing steps."""

    estimator: str
    estimator_class: type
    params: dict[str, Any]
    preprocessing: tuple[str, ...]
    trusted_modules: tuple[str, ...]

    def build(self) -> Any:
        """A fresh, unfitted estimator (a Pipeline when there is preprocessing)."""
        model = self.estimator_class(**self.params)
        if not self.preprocessing:
            return model
        steps = [(name, PREPROCESSORS[name]()) for name in self.preprocessing]
        return Pipeline([*steps, ("model", model)])


@dataclass(frozen=True)
class CVSpec:
    """The ``cv`` section."""

    folds: int
    repeats: int
    stratified: bool | None
    group_column: str | None
    shuffle: bool
    seed: int | None


@dataclass(frozen=True)
class LimitsSpec:
    """The ``limits`` section."""

    max_features: int | None
    max_evaluations: int | None
    max_time_s: float | None


@dataclass
class RunConfig:
    """A checked run configuration together with its data.

    Attributes
    ----------
    path : pathlib.Path
        The YAML file.
    data, costs, model, cv, limits : parsed sections
        See :class:`DataSpec`, :class:`CostSpec`, :class:`ModelSpec`, :class:`CVSpec`,
        :class:`LimitsSpec`.
    budget : float or None
    scoring : str or None
    objective : dict
    strategy : dict
        ``{"name": ..., "options": {...}}``.
    must_include, never_include : list of str
    pick : str
    seed : int or None
    n_jobs : int or None
    output : pathlib.Path
        Absolute output folder.
    frame : pandas.DataFrame
        The data as read.
    candidates : list of str
        Candidate feature columns, in data order.
    cost_model : CostModel
        Costs of the candidates.
    classification : bool
        Whether the estimator is a classifier.
    ignored_costs : list of str
        Priced columns that are not candidates (their prices are unused).
    overridden : dict
        Keys set from the command line and their values.
    lines : dict
        Line of each YAML key path (``"costs.features.moisture_pct"``).
    extra : dict
        Parsed values of sections added with :func:`register_section`.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cfg = load_config(write_demo(d, n_lots=60)[1], seed=3)
    >>> cfg.path.name, cfg.data.target, cfg.classification, cfg.seed, cfg.overridden
    ('grain_lab.yaml', 'meets_milling_grade', True, 3, {'seed': 3})
    >>> len(cfg.frame), len(cfg.candidates), cfg.lines["budget"]
    (60, 26, 39)
    """

    path: Path
    data: DataSpec
    costs: CostSpec
    budget: float | None
    model: ModelSpec
    cv: CVSpec
    scoring: str | None
    objective: dict
    strategy: dict
    limits: LimitsSpec
    must_include: list[str]
    never_include: list[str]
    pick: str
    seed: int | None
    n_jobs: int | None
    output: Path
    frame: pd.DataFrame = field(repr=False)
    candidates: list[str] = field(default_factory=list)
    cost_model: CostModel | None = None
    classification: bool = True
    ignored_costs: list[str] = field(default_factory=list)
    overridden: dict[str, Any] = field(default_factory=dict)
    extra: dict[str, Any] = field(default_factory=dict)
    lines: dict[str, int] = field(default_factory=dict, repr=False)

    @property
    def stratified(self) -> bool:
        """Whether the CV folds are stratified (``cv.stratified``, default: classifiers)."""
        return self.classification if self.cv.stratified is None else self.cv.stratified

    @property
    def base_dir(self) -> Path:
        """Folder of the YAML file (relative paths start here)."""
        return self.path.parent


# ----------------------------------------------------------------- parse context
class _Context:
    """Line numbers of YAML keys, the config folder and the command-line overrides."""

    def __init__(self, lines: dict[str, int], base_dir: Path, overridden: Iterable[str]):
        self.lines = lines
        self.base_dir = base_dir
        self.overridden = set(overridden)

    def line(self, key: str) -> int | None:
        """Line of ``key``, else of its nearest parent present in the file."""
        k = key
        while k:
            if k in self.lines:
                return self.lines[k]
            cut = max(k.rfind("."), k.rfind("["))
            k = k[:cut] if cut > 0 else ""
        return None

    def error(self, message: str, key: str) -> InputError:
        """An InputError at ``key`` (with its line, or marked as a command-line value)."""
        top = key.split(".")[0].split("[")[0]
        if top in self.overridden:
            return InputError(message, key=f"{key} (from the command line)")
        return InputError(message, key=key, line=self.line(key))

    def rekey(self, exc: InputError, key: str) -> InputError:
        """Attach a key and line to an InputError raised without one.

        A message that starts with a dotted key below ``key`` (``"costs.panels.x: ..."``)
        is split into that key and the rest.
        """
        if exc.key is not None:
            return self.error(exc.message, exc.key)
        head, sep, rest = exc.message.partition(": ")
        top = key.split(".")[0]
        if sep and (head == top or head.startswith(top + ".")) and " " not in head:
            return self.error(rest, head)
        return self.error(exc.message, key)

    # Typed readers ---------------------------------------------------------
    def mapping(self, value: Any, key: str, known: Iterable[str] | None = None) -> dict:
        if value is None:
            return {}
        if not isinstance(value, dict):
            raise self.error(f"expected a mapping (key: value lines), got {_show(value)}", key)
        if known is not None:
            known = list(known)
            for k in value:
                if not isinstance(k, str) or k not in known:
                    raise self.error(
                        f"unknown key '{k}'{_suggest(str(k), known)}; known keys: "
                        + ", ".join(known),
                        _join(key, str(k)),
                    )
        return dict(value)

    def section(self, value: Any, key: str, known: list[str], required: dict[str, str]) -> dict:
        """A mapping with only ``known`` keys that has every key of ``required``."""
        if value is None:
            wanted = ", ".join(f"{key}.{k}" for k in required)
            raise self.error(f"this section is required (with {wanted})", key)
        d = self.mapping(value, key, known)
        for name, what in required.items():
            if name not in d:
                raise self.error(f"missing key '{name}' ({what})", key)
        return d

    def string(self, value: Any, key: str, *, optional: bool = False) -> str | None:
        if value is None and optional:
            return None
        if not isinstance(value, str) or not value.strip():
            raise self.error(f"expected a non-empty text value, got {_show(value)}", key)
        return value

    def strings(self, value: Any, key: str) -> list[str]:
        if value is None:
            return []
        if isinstance(value, str):
            value = [value]
        if not isinstance(value, list):
            raise self.error(f"expected a list of names, got {_show(value)}", key)
        out = []
        for i, item in enumerate(value):
            if isinstance(item, (int, float)) and not isinstance(item, bool):
                item = str(item)
            out.append(self.string(item, f"{key}[{i}]"))
            if out[-1] in out[:-1]:
                raise self.error(f"'{out[-1]}' is listed twice", f"{key}[{i}]")
        return out

    def number(
        self, value: Any, key: str, *, minimum: float | None = None,
        optional: bool = False, allow_inf: bool = False, what: str = "a number",
    ) -> float | None:
        if value is None and optional:
            return None
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            hint = ""
            if isinstance(value, str):
                hint = " (YAML reads 1e3 as text: write 1000 or 1.0e+3; do not quote numbers)"
            raise self.error(f"expected {what}, got {_show(value)}{hint}", key)
        x = float(value)
        if math.isnan(x):
            raise self.error(f"expected {what}, got NaN", key)
        if math.isinf(x) and not allow_inf:
            raise self.error(f"expected a finite number, got {x}", key)
        if minimum is not None and x < minimum:
            raise self.error(f"must be >= {minimum:g}, got {x:g}", key)
        return x

    def integer(
        self, value: Any, key: str, *, minimum: int | None = None, optional: bool = False
    ) -> int | None:
        if value is None and optional:
            return None
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.error(f"expected a whole number, got {_show(value)}", key)
        if minimum is not None and value < minimum:
            raise self.error(f"must be >= {minimum}, got {value}", key)
        return value

    def boolean(self, value: Any, key: str, *, optional: bool = False) -> bool | None:
        if value is None and optional:
            return None
        if not isinstance(value, bool):
            raise self.error(f"expected true or false, got {_show(value)}", key)
        return value


def _join(key: str, sub: str) -> str:
    return f"{key}.{sub}" if key else sub


def _show(value: Any) -> str:
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    if value is None:
        return "nothing (null)"
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _suggest(word: str, options: Iterable[str]) -> str:
    close = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""


# ------------------------------------------------------------------- YAML reading
def _line_map(node: yaml.Node | None) -> dict[str, int]:
    """Dotted key path -> 1-based line, from a composed YAML tree; rejects duplicate keys."""
    lines: dict[str, int] = {}
    seen: set[int] = set()
    stack: list[tuple[yaml.Node, str]] = [(node, "")] if node is not None else []
    while stack:
        n, path = stack.pop()
        if id(n) in seen:  # aliases: walk each node once
            continue
        seen.add(id(n))
        if isinstance(n, yaml.MappingNode):
            first: dict[str, int] = {}
            for k, v in n.value:
                if not isinstance(k, yaml.ScalarNode) or k.value == "<<":
                    continue
                sub = _join(path, k.value)
                line = k.start_mark.line + 1
                if k.value in first:
                    raise InputError(
                        f"key '{k.value}' appears twice (first at line {first[k.value]})",
                        key=sub, line=line,
                    )
                first[k.value] = line
                lines[sub] = line
                stack.append((v, sub))
        elif isinstance(n, yaml.SequenceNode):
            for i, item in enumerate(n.value):
                sub = f"{path}[{i}]"
                lines[sub] = item.start_mark.line + 1
                stack.append((item, sub))
    return lines


def _read_yaml(path: Path) -> tuple[Any, dict[str, int]]:
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"config file not found: {path}") from None
    except IsADirectoryError:
        raise InputError(f"config path is a folder, not a file: {path}") from None
    except UnicodeDecodeError as exc:
        raise InputError(f"config file {path} is not UTF-8 text: {exc.reason}") from None
    except OSError as exc:
        raise InputError(f"cannot read config file {path}: {exc.strerror}") from None
    try:
        node = yaml.compose(text, Loader=yaml.SafeLoader)
        raw = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        problem = getattr(exc, "problem", None) or str(exc)
        context = getattr(exc, "context", None)
        where = f"line {mark.line + 1}, column {mark.column + 1}" if mark else "unknown place"
        detail = f"{context}: {problem}" if context else problem
        raise InputError(f"YAML syntax error in {path.name} at {where}: {detail}") from None
    return raw, _line_map(node)


# ---------------------------------------------------------------- section parsers
def _parse_data(value: Any, ctx: _Context) -> DataSpec:
    d = ctx.section(value, "data", ["path", "target", "features", "exclude"],
                    {"path": "the CSV or Parquet file", "target": "the column to predict"})
    path = Path(os.path.expanduser(ctx.string(d["path"], "data.path")))
    if not path.is_absolute():
        path = ctx.base_dir / path
    features = None
    if d.get("features") is not None:
        features = tuple(ctx.strings(d["features"], "data.features"))
        if not features:
            raise ctx.error("the list is empty; omit it to use every column", "data.features")
    return DataSpec(
        path=path,
        target=ctx.string(d["target"], "data.target"),
        features=features,
        exclude=tuple(ctx.strings(d.get("exclude"), "data.exclude")),
    )


def _parse_costs(value: Any, ctx: _Context) -> CostSpec:
    if value is None:
        return CostSpec("features", {}, {}, given=False)
    c = ctx.mapping(value, "costs", ["unit", "features", "panels"])
    unit = ctx.string(c.get("unit", "cost units"), "costs.unit")
    prices = {}
    for name, price in ctx.mapping(c.get("features"), "costs.features").items():
        key = f"costs.features.{name}"
        prices[str(name)] = ctx.number(price, key, minimum=0.0, what="a cost (a number >= 0)")
    panels: dict[str, tuple[float, tuple[str, ...]]] = {}
    owner: dict[str, str] = {}
    for pname, spec in ctx.mapping(c.get("panels"), "costs.panels").items():
        key = f"costs.panels.{pname}"
        p = ctx.section(spec, key, ["cost", "features"],
                        {"cost": "the panel's price", "features": "its measurements"})
        price = ctx.number(p["cost"], f"{key}.cost", minimum=0.0, what="a cost (a number >= 0)")
        members = ctx.strings(p["features"], f"{key}.features")
        if not members:
            raise ctx.error("a panel needs at least one feature", f"{key}.features")
        for i, m in enumerate(members):
            mkey = f"{key}.features[{i}]"
            if m in owner:
                raise ctx.error(
                    f"feature '{m}' is already in panel '{owner[m]}' "
                    "(a feature can belong to one panel only)", mkey,
                )
            if m in prices:
                raise ctx.error(
                    f"feature '{m}' also has its own price under costs.features; "
                    "give it one or the other", mkey,
                )
            owner[m] = str(pname)
        panels[str(pname)] = (price, tuple(members))
    return CostSpec(unit, prices, panels, given=True)


def _parse_budget(value: Any, ctx: _Context) -> float | None:
    budget = ctx.number(value, "budget", minimum=0.0, optional=True, allow_inf=True)
    return None if budget is None or math.isinf(budget) else budget


def _import_estimator(path: str, trusted: tuple[str, ...], ctx: _Context) -> type:
    key = "model.estimator"
    module_name, _, attr = path.rpartition(".")
    if not module_name or not attr or not all(p.isidentifier() for p in path.split(".")):
        raise ctx.error("expected a dotted class path like "
                        f"sklearn.linear_model.LogisticRegression, got '{path}'", key)
    top = path.split(".")[0]
    if top != "sklearn" and top not in trusted:
        raise ctx.error(
            f"'{path}' is not allowed: the estimator must come from sklearn or from a "
            "module listed in model.trusted_modules", key,
        )
    try:
        module = importlib.import_module(module_name)
    except ImportError as exc:
        raise ctx.error(f"cannot import module '{module_name}': {exc}", key) from None
    cls = getattr(module, attr, None)
    if cls is None:
        public = [n for n in dir(module) if not n.startswith("_")]
        raise ctx.error(
            f"module '{module_name}' has no '{attr}'{_suggest(attr, public)}", key
        )
    if not inspect.isclass(cls) or not callable(getattr(cls, "fit", None)):
        raise ctx.error(f"'{path}' is not an estimator class with a fit method", key)
    return cls


def _parse_model(value: Any, ctx: _Context) -> ModelSpec:
    m = ctx.section(value, "model", ["estimator", "params", "preprocessing", "trusted_modules"],
                    {"estimator": "a dotted class path"})
    trusted = tuple(ctx.strings(m.get("trusted_modules"), "model.trusted_modules"))
    path = ctx.string(m["estimator"], "model.estimator")
    cls = _import_estimator(path, trusted, ctx)
    params = ctx.mapping(m.get("params"), "model.params")
    try:
        known = sorted(cls().get_params(deep=False))
    except Exception:  # noqa: BLE001 - a class that cannot be built bare: check on build
        known = None
    for k in params:
        if known is not None and k not in known:
            raise ctx.error(
                f"{cls.__name__} has no parameter '{k}'{_suggest(str(k), known)}",
                f"model.params.{k}",
            )
    try:
        cls(**params)
    except Exception as exc:  # noqa: BLE001 - any constructor failure is a config problem
        raise ctx.error(f"{cls.__name__}(**params) failed: {exc}", "model.params") from None
    steps = ctx.strings(m.get("preprocessing"), "model.preprocessing")
    for i, s in enumerate(steps):
        if s not in PREPROCESSORS:
            raise ctx.error(
                f"unknown preprocessing step '{s}'{_suggest(s, PREPROCESSORS)}; known: "
                + ", ".join(PREPROCESSORS),
                f"model.preprocessing[{i}]",
            )
    imputers = [s for s in steps if s.startswith("impute_")]
    if len(imputers) > 1:
        raise ctx.error(
            f"use at most one imputation step, got {', '.join(imputers)} "
            "(impute_indicator already imputes the median)", "model.preprocessing",
        )
    return ModelSpec(path, cls, params, tuple(steps), trusted)


def _parse_cv(value: Any, ctx: _Context) -> CVSpec:
    c = ctx.mapping(
        value, "cv", ["folds", "repeats", "stratified", "group_column", "shuffle", "seed"]
    )
    spec = CVSpec(
        folds=ctx.integer(c.get("folds", 5), "cv.folds", minimum=2),
        repeats=ctx.integer(c.get("repeats", 1), "cv.repeats", minimum=1),
        stratified=ctx.boolean(c.get("stratified"), "cv.stratified", optional=True),
        group_column=ctx.string(c.get("group_column"), "cv.group_column", optional=True),
        shuffle=ctx.boolean(c.get("shuffle", True), "cv.shuffle"),
        seed=ctx.integer(c.get("seed", 0), "cv.seed", minimum=0, optional=True),
    )
    if spec.repeats > 1 and spec.group_column is not None:
        raise ctx.error("repeated grouped cross-validation is not supported; "
                        "use repeats: 1 with group_column", "cv.repeats")
    if spec.repeats > 1 and not spec.shuffle:
        raise ctx.error("repeats > 1 needs shuffle: true (repeats would be identical)",
                        "cv.repeats")
    return spec


def _parse_scoring(value: Any, ctx: _Context) -> str | None:
    name = ctx.string(value, "scoring", optional=True)
    if name is not None and name not in get_scorer_names():
        raise ctx.error(
            f"unknown scorer '{name}'{_suggest(name, get_scorer_names())}; use a name from "
            "sklearn.metrics.get_scorer_names()", "scoring",
        )
    return name


def _parse_objective(value: Any, ctx: _Context) -> dict:
    spec = {"name": value} if isinstance(value, str) else ctx.mapping(value, "objective")
    spec["name"] = ctx.string(spec.get("name", "score"), "objective.name")
    try:
        make_objective(spec)
    except InputError as exc:
        raise ctx.rekey(exc, "objective") from None
    return spec


def _parse_strategy(value: Any, ctx: _Context) -> dict:
    s = {"name": value} if isinstance(value, str) else ctx.mapping(
        value, "strategy", ["name", "options"]
    )
    name = ctx.string(s.get("name", "forward"), "strategy.name")
    if name not in STRATEGIES:
        raise ctx.error(
            f"unknown strategy '{name}'{_suggest(name, STRATEGIES)}; known: "
            + ", ".join(sorted(STRATEGIES)), "strategy.name",
        )
    options = ctx.mapping(s.get("options"), "strategy.options")
    try:
        make_strategy({"name": name, "options": options})
    except InputError as exc:
        where = "strategy.options"
        for opt in options:  # option validators name the option first
            if exc.key is None and str(exc.message).startswith(f"{opt} "):
                where = f"strategy.options.{opt}"
        raise ctx.rekey(exc, where) from None
    return {"name": name, "options": options}


def _parse_limits(value: Any, ctx: _Context) -> LimitsSpec:
    lim = ctx.mapping(value, "limits", ["max_features", "max_evaluations", "max_time_s"])
    return LimitsSpec(
        ctx.integer(lim.get("max_features"), "limits.max_features", minimum=1, optional=True),
        ctx.integer(lim.get("max_evaluations"), "limits.max_evaluations", minimum=1,
                    optional=True),
        ctx.number(lim.get("max_time_s"), "limits.max_time_s", minimum=0.0, optional=True),
    )


def _parse_pick(value: Any, ctx: _Context) -> str:
    pick = ctx.string("best" if value is None else value, "pick")
    if pick not in PICK_RULES:
        raise ctx.error(f"expected one of {', '.join(PICK_RULES)}, got '{pick}'", "pick")
    return pick


def _parse_n_jobs(value: Any, ctx: _Context) -> int | None:
    n = ctx.integer(1 if value is None else value, "n_jobs")
    if n == 0:
        raise ctx.error("n_jobs cannot be 0 (use 1, a positive count, or -1 for all cores)",
                        "n_jobs")
    return n


def _parse_output(value: Any, ctx: _Context) -> Path | None:
    """The output folder from YAML (None: default); must stay inside the YAML's folder."""
    if isinstance(value, str):
        value = {"folder": value}
    o = ctx.mapping(value, "output", ["folder"])
    folder = ctx.string(o.get("folder"), "output.folder", optional=True)
    if folder is None:
        return None
    base = ctx.base_dir.resolve()
    target = (base / os.path.expanduser(folder)).resolve()
    if target != base and base not in target.parents:
        raise ctx.error(
            f"'{folder}' resolves to {target}, outside the config file's folder {base}; "
            "use a folder below it, or pass --output DIR on the command line",
            "output.folder",
        )
    return target


@dataclass(frozen=True)
class Section:
    """A top-level YAML section: its parser and an optional hook into :func:`build_run`.

    Attributes
    ----------
    parse : callable
        ``parse(value, ctx)`` with the raw value (None when absent); returns the parsed
        value or raises ``ctx.error(message, key)``.
    apply : callable, optional
        ``apply(cfg, value, problem, kwargs)`` called by :func:`build_run` for sections
        stored in ``RunConfig.extra``; may change ``kwargs`` in place.

    Examples
    --------
    A section that caps the number of evaluated subsets through its ``apply`` hook:

    >>> import tempfile
    >>> from featuresift.demo import write_demo
    >>> def parse(value, ctx):
    ...     return ctx.integer(value, "eval_cap", minimum=1, optional=True)
    >>> def apply(cfg, value, problem, kwargs):
    ...     if value is not None:
    ...         kwargs["max_evaluations"] = value
    >>> register_section("eval_cap", Section(parse, apply))
    >>> with tempfile.TemporaryDirectory() as d:
    ...     yml = write_demo(d, n_lots=60)[1]
    ...     with open(yml, "a") as f:
    ...         _ = f.write("eval_cap: 40\\n")
    ...     kwargs = build_run(load_config(yml))[1]
    >>> kwargs["max_evaluations"]
    40
    >>> del SECTIONS["eval_cap"]  # unregister again
    """

    parse: Callable[[Any, _Context], Any]
    apply: Callable[[RunConfig, Any, SelectionProblem, dict], None] | None = None


SECTIONS: dict[str, Section] = {
    "data": Section(_parse_data),
    "costs": Section(_parse_costs),
    "budget": Section(_parse_budget),
    "model": Section(_parse_model),
    "cv": Section(_parse_cv),
    "scoring": Section(_parse_scoring),
    "objective": Section(_parse_objective),
    "strategy": Section(_parse_strategy),
    "limits": Section(_parse_limits),
    "must_include": Section(lambda v, ctx: ctx.strings(v, "must_include")),
    "never_include": Section(lambda v, ctx: ctx.strings(v, "never_include")),
    "pick": Section(_parse_pick),
    "seed": Section(lambda v, ctx: ctx.integer(v, "seed", minimum=0, optional=True)),
    "n_jobs": Section(_parse_n_jobs),
    "output": Section(_parse_output),
}
"""Known top-level sections, parsed in this order. Other keys are rejected."""

_CORE_FIELDS = frozenset(SECTIONS)


def register_section(name: str, section: Section) -> None:
    """Add a top-level section; its parsed value goes to ``RunConfig.extra[name]``.

    Examples
    --------
    A section named ``reviewer`` whose text lands in ``RunConfig.extra``:

    >>> import tempfile
    >>> from featuresift.demo import write_demo
    >>> register_section("reviewer", Section(lambda v, ctx: None if v is None else str(v)))
    >>> with tempfile.TemporaryDirectory() as d:
    ...     yml = write_demo(d, n_lots=60)[1]
    ...     with open(yml, "a") as f:
    ...         _ = f.write("reviewer: QA desk\\n")
    ...     cfg = load_config(yml)
    >>> cfg.extra["reviewer"]
    'QA desk'
    >>> del SECTIONS["reviewer"]  # unregister again
    """
    if name in _CORE_FIELDS:
        raise ValueError(f"section '{name}' is built in")
    SECTIONS[name] = section


# --------------------------------------------------------------------- data phase
def _read_frame(spec: DataSpec, ctx: _Context) -> pd.DataFrame:
    path = spec.path
    suffix = path.suffix.lower()
    kind = _DATA_SUFFIXES.get(suffix)
    if kind is None or (suffix == ".gz" and not path.name.lower().endswith(".csv.gz")):
        raise ctx.error(
            f"unsupported file type '{path.name}'; use .csv, .csv.gz, .parquet or .pq",
            "data.path",
        )
    if not path.is_file():
        what = "is a folder" if path.is_dir() else "not found"
        raise ctx.error(f"data file {what}: {path}", "data.path")
    try:
        if kind == "parquet":
            try:
                import pyarrow  # noqa: F401
            except ImportError:
                raise ctx.error(
                    "reading Parquet needs pyarrow (pip install 'featuresift[parquet]')",
                    "data.path",
                ) from None
            frame = pd.read_parquet(path)
        else:
            frame = pd.read_csv(path)
    except InputError:
        raise
    except pd.errors.EmptyDataError:
        raise ctx.error(f"data file {path.name} is empty", "data.path") from None
    except (pd.errors.ParserError, UnicodeDecodeError, ValueError, OSError) as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise ctx.error(f"cannot read {path.name}: {first}", "data.path") from None
    frame.columns = [str(c) for c in frame.columns]
    if frame.columns.duplicated().any():
        dup = sorted(set(frame.columns[frame.columns.duplicated()]))
        raise ctx.error(f"{path.name} has repeated column names: {', '.join(dup)}", "data.path")
    if len(frame) == 0:
        raise ctx.error(f"data file {path.name} has a header but no rows", "data.path")
    return frame


def _column_error(frame: pd.DataFrame, name: str, key: str, ctx: _Context, role: str):
    return ctx.error(
        f"{role} '{name}' is not a column of the data{_suggest(name, frame.columns)}", key
    )


def _numeric_column(frame: pd.DataFrame, name: str, file_name: str) -> pd.Series:
    col = frame[name]
    if pd.api.types.is_bool_dtype(col):
        return col.astype(float)
    if not pd.api.types.is_numeric_dtype(col):
        converted = pd.to_numeric(col, errors="coerce")
        bad = col.notna() & converted.isna()
        if bad.any():
            row = int(np.flatnonzero(bad.to_numpy())[0])
            raise InputError(
                f"data file {file_name}, column '{name}': not numeric (data row {row + 1} "
                f"holds {col.iloc[row]!r}); candidate measurements must be numbers "
                "(empty cells count as missing), or list the column under data.exclude"
            )
        col = converted
    values = col.astype(float)
    if values.isna().all():
        raise InputError(
            f"data file {file_name}, column '{name}': every value is missing; "
            "list the column under data.exclude"
        )
    if np.isinf(values.to_numpy()).any():
        row = int(np.flatnonzero(np.isinf(values.to_numpy()))[0])
        raise InputError(
            f"data file {file_name}, column '{name}': infinite value in data row {row + 1}"
        )
    return values


def _select_candidates(cfg: RunConfig, ctx: _Context) -> list[str]:
    frame, spec = cfg.frame, cfg.data
    if spec.target not in frame.columns:
        raise _column_error(frame, spec.target, "data.target", ctx, "target")
    group = cfg.cv.group_column
    if group is not None:
        if group not in frame.columns:
            raise _column_error(frame, group, "cv.group_column", ctx, "group column")
        if group == spec.target:
            raise ctx.error("the group column cannot be the target", "cv.group_column")
    for i, name in enumerate(spec.exclude):
        if name not in frame.columns:
            raise _column_error(frame, name, f"data.exclude[{i}]", ctx, "excluded column")
    reserved = {spec.target, group}
    if spec.features is None:
        candidates = [c for c in frame.columns if c not in reserved and c not in spec.exclude]
    else:
        candidates = list(spec.features)
        for i, name in enumerate(candidates):
            key = f"data.features[{i}]"
            if name not in frame.columns:
                raise _column_error(frame, name, key, ctx, "feature")
            if name == spec.target:
                raise ctx.error(f"'{name}' is the target; it cannot be a feature", key)
            if name == group:
                raise ctx.error(f"'{name}' is the CV group column; it cannot be a feature", key)
            if name in spec.exclude:
                raise ctx.error(f"'{name}' is also listed under data.exclude", key)
        order = {c: i for i, c in enumerate(frame.columns)}
        candidates.sort(key=order.__getitem__)
    if not candidates:
        raise ctx.error("no candidate feature columns are left", "data")
    return candidates


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
    holes = [c for c in cfg.candidates if cfg.frame[c].isna().any()]
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
    if required is None:
        return cfg.scoring
    if cfg.scoring is not None and cfg.scoring != required:
        raise ctx.error(
            f"objective '{cfg.objective['name']}' scores subsets with its own scorer; "
            "remove 'scoring' (or use objective: {name: score})", "scoring",
        )
    return required


# ------------------------------------------------------------------- public API
def load_config(path: str | os.PathLike, **overrides: Any) -> RunConfig:
    """Read, check and resolve a YAML run configuration and its data file.

    Nothing is fitted or written.

    Parameters
    ----------
    path : path-like
        The YAML file.
    **overrides
        Values that replace the file's: ``output`` (a folder, relative to the current
        directory and not restricted to the config's folder), ``n_jobs``, ``budget``
        (``float('inf')`` for unlimited), ``strategy`` (a name; the file's strategy
        options are dropped unless the name is unchanged) and ``seed``. None means
        "not given".

    Returns
    -------
    RunConfig

    Raises
    ------
    InputError
        On any problem, naming the YAML key and line, or the column or feature.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _, yml = write_demo(d, n_lots=60)
    ...     cfg = load_config(yml, budget=5.0)
    >>> cfg.budget, cfg.strategy["name"], len(cfg.candidates)
    (5.0, 'forward', 26)
    """
    path = Path(path).expanduser().absolute()
    unknown = [k for k in overrides if k not in OVERRIDES]
    if unknown:
        raise InputError(f"unknown override(s): {', '.join(unknown)}; known: "
                         + ", ".join(OVERRIDES))
    given = {k: v for k, v in overrides.items() if v is not None}
    raw, lines = _read_yaml(path)
    if raw is None:
        raise InputError(f"config file {path.name} is empty")
    if not isinstance(raw, dict):
        raise InputError(f"config file {path.name}: the top level must be a mapping of "
                         f"sections (data:, model:, ...), got {_show(raw)}", line=1)
    ctx = _Context(lines, path.parent, (k for k in given if k != "output"))
    ctx.mapping(raw, "", SECTIONS)
    raw = dict(raw)
    for k in ("budget", "n_jobs", "seed"):
        if k in given:
            raw[k] = given[k]
    if "strategy" in given:
        old = raw.get("strategy")
        same = isinstance(old, dict) and old.get("name", "forward") == given["strategy"]
        raw["strategy"] = dict(old) if same else {"name": given["strategy"]}
    parsed = {name: sec.parse(raw.get(name), ctx) for name, sec in SECTIONS.items()}
    output = parsed.pop("output")
    if "output" in given:
        output = Path(os.path.expanduser(str(given["output"]))).absolute().resolve()
    elif output is None:
        output = (path.parent / "results" / path.stem).resolve()
    if output.exists() and not output.is_dir():
        if "output" in given:
            raise InputError(f"--output {output}: exists and is not a folder")
        raise ctx.error(f"{output} exists and is not a folder", "output.folder")
    core = {k: v for k, v in parsed.items() if k in _CORE_FIELDS}
    extra = {k: v for k, v in parsed.items() if k not in _CORE_FIELDS}
    frame = _read_frame(core["data"], ctx)
    cfg = RunConfig(path=path, output=output, frame=frame, extra=extra, **core)
    cfg.overridden = given
    cfg.lines = lines
    cfg.classification = bool(is_classifier(cfg.model.build()))
    if cfg.cv.stratified and not cfg.classification:
        raise ctx.error("stratified folds need a classifier; set stratified: false",
                        "cv.stratified")
    cfg.candidates = _select_candidates(cfg, ctx)
    for name in cfg.candidates:
        _numeric_column(frame, name, cfg.data.path.name)
    _check_target(cfg, ctx)
    _check_folds(cfg, ctx)
    cfg.cost_model = _build_cost_model(cfg, ctx)
    _check_lists(cfg, ctx)
    _check_missing_values(cfg, ctx)
    _check_scoring(cfg, ctx)
    return cfg


def _splitter(cfg: RunConfig) -> Any:
    cv = cfg.cv
    stratified = cfg.stratified
    seed = cv.seed if cv.shuffle else None
    if cv.group_column is not None:
        if stratified:
            return StratifiedGroupKFold(cv.folds, shuffle=cv.shuffle, random_state=seed)
        return GroupKFold(cv.folds, shuffle=cv.shuffle, random_state=seed)
    if cv.repeats > 1:
        cls = RepeatedStratifiedKFold if stratified else RepeatedKFold
        return cls(n_splits=cv.folds, n_repeats=cv.repeats, random_state=cv.seed)
    cls = StratifiedKFold if stratified else KFold
    return cls(cv.folds, shuffle=cv.shuffle, random_state=seed)


def build_run(cfg: RunConfig) -> tuple[SelectionProblem, dict[str, Any]]:
    """Build the selection problem and the :func:`run_search` keyword arguments.

    The CV splits are computed here (no model is fitted).

    Parameters
    ----------
    cfg : RunConfig
        From :func:`load_config`.

    Returns
    -------
    problem : SelectionProblem
    kwargs : dict
        Keyword arguments for :func:`featuresift.run_search` (strategy, budget,
        objective, limits, must/never include, pick, random_state, n_jobs).

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     problem, kwargs = build_run(load_config(write_demo(d, n_lots=60)[1]))
    >>> len(problem.splits), kwargs["budget"], kwargs["strategy"]["name"]
    (5, 30.0, 'forward')
    """
    ctx = _Context(cfg.lines, cfg.base_dir, (k for k in cfg.overridden if k != "output"))
    frame = cfg.frame
    X = np.column_stack(
        [_numeric_column(frame, c, cfg.data.path.name).to_numpy() for c in cfg.candidates]
    )
    y = frame[cfg.data.target].to_numpy()
    groups = None if cfg.cv.group_column is None else frame[cfg.cv.group_column].to_numpy()
    try:
        problem = SelectionProblem(
            X, y, cfg.model.build(), cost_model=cfg.cost_model, cv=_splitter(cfg),
            scoring=_check_scoring(cfg, ctx), groups=groups, feature_names=cfg.candidates,
        )
    except InputError as exc:
        raise ctx.rekey(exc, "data") from None
    except ValueError as exc:  # the splitter rejects the data (too few rows per class, ...)
        raise ctx.error(f"cannot make the CV folds: {exc}", "cv.folds") from None
    kwargs: dict[str, Any] = {
        "strategy": {"name": cfg.strategy["name"], "options": dict(cfg.strategy["options"])},
        "budget": cfg.budget,
        "objective": dict(cfg.objective),
        "max_features": cfg.limits.max_features,
        "max_evaluations": cfg.limits.max_evaluations,
        "max_time": cfg.limits.max_time_s,
        "must_include": list(cfg.must_include),
        "never_include": list(cfg.never_include),
        "pick": cfg.pick,
        "random_state": cfg.seed,
        "n_jobs": cfg.n_jobs,
    }
    for name, value in cfg.extra.items():
        section = SECTIONS.get(name)
        if section is not None and section.apply is not None:
            section.apply(cfg, value, problem, kwargs)
    return problem, kwargs


def _provenance(cfg: RunConfig, problem: SelectionProblem) -> dict:
    return {
        "config": str(cfg.path),
        "data": {
            "path": str(cfg.data.path),
            "n_rows": int(problem.n_samples),
            "target": cfg.data.target,
            "n_candidates": len(cfg.candidates),
        },
        "model": {"estimator": cfg.model.estimator, "params": _plain(cfg.model.params),
                  "preprocessing": list(cfg.model.preprocessing)},
        "cv": {"splitter": type(problem.cv).__name__, "n_splits": len(problem.splits),
               "folds": cfg.cv.folds, "repeats": cfg.cv.repeats, "seed": cfg.cv.seed,
               "group_column": cfg.cv.group_column},
        **({"overrides": _plain(cfg.overridden)} if cfg.overridden else {}),
    }


def _plain(value: Any) -> Any:
    """JSON-safe copy of YAML-loaded data."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return str(value)
    if value is None or isinstance(value, (bool, int, float, str)):
        return value
    return str(value)


def run_from_config(
    config: str | os.PathLike | RunConfig,
    *,
    write: bool = False,
    callback: Callable | None = None,
    **overrides: Any,
) -> SearchResult:
    """Load a configuration, run the search, optionally write the result files.

    Parameters
    ----------
    config : path-like or RunConfig
        A YAML file, or a configuration from :func:`load_config`.
    write : bool, default=False
        Write ``result.json``, ``selected.csv`` and ``path.csv`` into the output folder.
    callback : callable, optional
        Passed to :func:`run_search` (called after each search step).
    **overrides
        As in :func:`load_config` (only with a path).

    Returns
    -------
    SearchResult
        ``result.extras`` records the config, data, model and CV used.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     res = run_from_config(write_demo(d, n_lots=80)[1], budget=0.5)
    >>> res.cost <= 0.5
    True
    """
    if isinstance(config, RunConfig):
        if overrides:
            raise InputError("overrides apply only when a config path is given")
        cfg = config
    else:
        cfg = load_config(config, **overrides)
    problem, kwargs = build_run(cfg)
    result = run_search(problem, callback=callback, **kwargs)
    result.extras.update(_provenance(cfg, problem))
    if write:
        try:
            result.write(cfg.output)
        except OSError as exc:
            raise InputError(
                f"cannot write the results to {cfg.output}: {exc.strerror or exc}",
                key="output.folder", line=cfg.lines.get("output.folder"),
            ) from None
    return result


def describe_plan(cfg: RunConfig, problem: SelectionProblem | None = None) -> str:
    """What a run of ``cfg`` would do, as readable text (nothing is fitted).

    Parameters
    ----------
    cfg : RunConfig
    problem : SelectionProblem, optional
        When given, the number of CV splits actually made is reported.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     plan = describe_plan(load_config(write_demo(d, n_lots=60)[1]))
    >>> print(plan.splitlines()[-3])
    Search: forward {'tol': 0.002}, seed 0, n_jobs 1
    """
    cm = cfg.cost_model
    unit = cm.unit
    y = cfg.frame[cfg.data.target]
    lines = [f"Config: {cfg.path}"]
    lines.append(f"Data:   {cfg.data.path} ({len(cfg.frame)} rows, "
                 f"{len(cfg.frame.columns)} columns)")
    if cfg.classification:
        counts = ", ".join(f"{k!r}: {v}" for k, v in y.value_counts().sort_index().items())
        lines.append(f"Target: {cfg.data.target} (classes {counts})")
    else:
        lines.append(f"Target: {cfg.data.target} (numeric, mean {float(y.mean()):.4g})")
    lines.append(f"Candidates ({len(cfg.candidates)}), cost in {unit}:")
    width = max(len(c) for c in cfg.candidates)
    for c in cfg.candidates:
        panel = cm.panel_of(c)
        price = (f"panel {panel} ({cm.panels[panel][0]:g} for the panel)" if panel
                 else f"{cm.feature_costs[c]:g}")
        missing = int(cfg.frame[c].isna().sum())
        note = f"   [{missing} missing]" if missing else ""
        lines.append(f"  {c:<{width}}  {price}{note}")
    if cfg.ignored_costs:
        lines.append("Prices ignored (not candidates): " + ", ".join(cfg.ignored_costs))
    budget = "unlimited" if cfg.budget is None else f"{cfg.budget:g} {unit}"
    lines.append(f"Budget: {budget}; all candidates cost {cm.cost(cfg.candidates):g} {unit}")
    steps = " -> ".join([*cfg.model.preprocessing, cfg.model.estimator])
    params = f" {_plain(cfg.model.params)}" if cfg.model.params else ""
    lines.append(f"Model:  {steps}{params}")
    cv = cfg.cv
    desc = type(_splitter(cfg)).__name__
    n_splits = len(problem.splits) if problem is not None else cv.folds * cv.repeats
    group = f", groups from '{cv.group_column}'" if cv.group_column else ""
    lines.append(f"CV:     {desc}, {n_splits} splits{group}, seed {cv.seed}")
    own = make_objective(cfg.objective).required_scorer() is not None
    scorer = "the objective's own scorer" if own else (cfg.scoring or "estimator score method")
    lines.append(f"Score:  {scorer}; objective "
                 f"{_plain(cfg.objective)}; pick {cfg.pick}")
    lines.append(f"Search: {cfg.strategy['name']} {_plain(cfg.strategy['options'])}, "
                 f"seed {cfg.seed}, n_jobs {cfg.n_jobs}")
    lim = cfg.limits
    lines.append(f"Limits: max_features {lim.max_features}, max_evaluations "
                 f"{lim.max_evaluations}, max_time_s {lim.max_time_s}")
    if cfg.must_include or cfg.never_include:
        lines.append(f"Always: {', '.join(cfg.must_include) or '-'}; never: "
                     f"{', '.join(cfg.never_include) or '-'}")
    lines.append(f"Output: {cfg.output}")
    return "\n".join(lines)


# ------------------------------------------------------------------ budget sweep
def _parse_sweep(value: Any, ctx: _Context) -> dict:
    """The ``sweep`` section: budgets for ``featuresift sweep``.

    ``budgets`` is a list of numbers (``null`` = unlimited); ``n_budgets`` asks for that
    many evenly spaced budgets from the cheapest measurement to all of them.
    """
    d = ctx.mapping(value, "sweep", ["budgets", "n_budgets"])
    if "budgets" in d and "n_budgets" in d:
        raise ctx.error("give either budgets or n_budgets, not both", "sweep")
    budgets = None
    if d.get("budgets") is not None:
        raw = d["budgets"]
        if not isinstance(raw, list) or not raw:
            raise ctx.error(f"expected a non-empty list of budgets, got {_show(raw)}",
                            "sweep.budgets")
        budgets = [
            ctx.number(b, f"sweep.budgets[{i}]", minimum=0, optional=True)
            for i, b in enumerate(raw)
        ]
    n = ctx.integer(d.get("n_budgets"), "sweep.n_budgets", minimum=2, optional=True)
    return {"budgets": budgets, "n_budgets": 8 if n is None else n}


register_section("sweep", Section(_parse_sweep))


def _search_options(kwargs: dict) -> dict:
    """run_search keyword arguments without the budget (set per sweep point)."""
    return {k: v for k, v in kwargs.items() if k not in ("budget",)}


def sweep_from_config(
    cfg: RunConfig,
    budgets: list[float | None] | None = None,
    *,
    write: bool = False,
    callback: Callable | None = None,
):
    """Run the configured search once per budget on a shared evaluator.

    Parameters
    ----------
    cfg : RunConfig
        From :func:`load_config`.
    budgets : list of float or None, optional
        Budgets (None = unlimited); default from the ``sweep`` section, else 8 evenly
        spaced budgets.
    write : bool, default=False
        Write ``frontier.csv``, ``frontier.json``, ``frontier.png`` and ``report.md``
        into the output folder.
    callback : callable, optional
        Called with each finished :class:`~featuresift.result.SearchResult`.

    Returns
    -------
    Frontier

    Examples
    --------
    Two cheap budgets of the demo's forward search share one evaluator:

    >>> import tempfile
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     fr = sweep_from_config(load_config(write_demo(d, n_lots=60)[1]), budgets=[0.5, 1.0])
    >>> fr.budgets, [r.cost <= b for r, b in zip(fr.results, fr.budgets)]
    ([0.5, 1.0], [True, True])
    >>> fr.n_fits < fr.n_fits_without_cache
    True
    """
    from featuresift.frontier import budget_sweep, default_budgets
    from featuresift.report import write_report

    problem, kwargs = build_run(cfg)
    spec = cfg.extra.get("sweep") or {"budgets": None, "n_budgets": 8}
    if budgets is None:
        budgets = spec["budgets"] or default_budgets(cfg.cost_model, spec["n_budgets"])
    cheapest = cfg.cost_model.cheapest_feature_cost()
    for b in budgets:
        if b is not None and b < cheapest:
            raise InputError(
                f"budget {b:g} {cfg.cost_model.unit} is below the cheapest possible subset "
                f"({cheapest:g} {cfg.cost_model.unit})",
                key="sweep.budgets", line=cfg.lines.get("sweep.budgets"),
            )
    frontier = budget_sweep(problem, list(budgets), **_search_options(kwargs))
    if callback is not None:
        for r in frontier.results:
            callback(r)
    if write:
        best = max(frontier.results, key=lambda r: r.score_mean)
        try:
            frontier.write(cfg.output)
            budget = "unlimited" if best.budget is None else f"{best.budget:g}"
            write_report(cfg.output, best, frontier=frontier, source=str(cfg.path),
                         title="featuresift budget sweep",
                         chosen_heading=f"Highest-scoring choice (budget {budget})")
        except OSError as exc:
            raise InputError(
                f"cannot write the results to {cfg.output}: {exc.strerror or exc}",
                key="output.folder", line=cfg.lines.get("output.folder"),
            ) from None
    return frontier


def nested_from_config(cfg: RunConfig, outer_folds: int = 5):
    """Nested CV of the configured search (the whole search re-run per outer fold).

    The outer folds follow ``cv`` (stratified for classifiers, grouped when
    ``cv.group_column`` is set, shuffled with ``cv.seed``); the inner CV is ``cv``
    itself.

    Returns
    -------
    NestedEvaluation

    Examples
    --------
    Running it repeats the whole search per outer fold (seconds even on the demo), so
    only the argument check is shown here:

    >>> import tempfile
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cfg = load_config(write_demo(d, n_lots=60)[1])
    >>> nested_from_config(cfg, outer_folds=1)
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: --nested needs at least 2 outer folds, got 1
    """
    from featuresift.nested import nested_evaluation

    if outer_folds < 2:
        raise InputError(f"--nested needs at least 2 outer folds, got {outer_folds}")
    problem, kwargs = build_run(cfg)
    cv = cfg.cv
    if cv.group_column is not None:
        outer = GroupKFold(n_splits=outer_folds)
    elif cfg.stratified:
        outer = StratifiedKFold(outer_folds, shuffle=True, random_state=cv.seed)
    else:
        outer = KFold(outer_folds, shuffle=True, random_state=cv.seed)
    opts = dict(kwargs)
    strategy = opts.pop("strategy")
    return nested_evaluation(
        problem.X, problem.y, problem.estimator, cost_model=problem.cost_model,
        outer_cv=outer, inner_cv=_splitter(cfg), scoring=problem.scoring,
        groups=problem.groups, feature_names=problem.feature_names, strategy=strategy,
        **opts,
    )


# ------------------------------------------------------------------ evaluation engine
def _parse_engine(value: Any, ctx: _Context) -> dict:
    """The ``engine`` section: journal, racing, chunking, failure policy, progress.

    .. code-block:: yaml

        engine:
          journal: true         # true: <output folder>/journal.sqlite; false: off; or a
                                #   file name inside the output folder
          racing: false         # false | f-race | hoeffding | t-race | {name: f-race, alpha: 0.1}
          chunk_size: null      # model fits per parallel task (null: automatic)
          on_fit_error: raise   # raise | record (a failed fold is recorded and counted)
          progress: true        # a progress bar on an interactive terminal
          share_preprocessing: true  # fit leading scalers/imputers once per fold
    """
    d = ctx.mapping(value, "engine", ["journal", "racing", "chunk_size", "on_fit_error",
                                      "progress", "share_preprocessing"])
    journal = d.get("journal", True)
    if journal is None or isinstance(journal, bool):
        journal_name = "journal.sqlite" if journal else None
    else:
        name = ctx.string(journal, "engine.journal")
        if Path(name).name != name or name in (".", ".."):
            raise ctx.error(
                f"'{name}' must be a plain file name: the journal is kept in the output folder",
                "engine.journal",
            )
        journal_name = name
    racing = d.get("racing", False)
    if racing is not None and not isinstance(racing, (bool, str, dict)):
        raise ctx.error(f"expected false, a rule name or a mapping, got {_show(racing)}",
                        "engine.racing")
    try:
        make_race(racing)  # the racing module names the rules and checks their options
    except InputError as exc:
        raise ctx.error(exc.message, "engine.racing") from None
    racing = None if racing in (None, False) else racing
    policy = d.get("on_fit_error", "raise")
    if policy not in ("raise", "record"):
        raise ctx.error(f"expected raise or record, got {_show(policy)}", "engine.on_fit_error")
    progress = d.get("progress", True)
    return {
        "journal": journal_name,
        "racing": racing,
        "chunk_size": ctx.integer(d.get("chunk_size"), "engine.chunk_size", minimum=1,
                                  optional=True),
        "on_fit_error": policy,
        "progress": ctx.boolean(progress, "engine.progress"),
        "share_preprocessing": ctx.boolean(d.get("share_preprocessing", True),
                                           "engine.share_preprocessing"),
    }


def _apply_engine(cfg: RunConfig, value: dict, problem: SelectionProblem, kwargs: dict) -> None:
    kwargs["journal"] = None if value["journal"] is None else cfg.output / value["journal"]
    kwargs["racing"] = value["racing"]
    kwargs["chunk_size"] = value["chunk_size"]
    kwargs["on_fit_error"] = value["on_fit_error"]
    kwargs["verbose"] = 1 if value["progress"] else 0
    kwargs["share_preprocessing"] = value["share_preprocessing"]


register_section("engine", Section(_parse_engine, _apply_engine))

