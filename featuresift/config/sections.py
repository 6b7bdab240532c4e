"""Top-level YAML sections: one parser per section, the :data:`SECTIONS` registry."""

from __future__ import annotations

import codecs
import inspect
import math
import os
import re
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sklearn.metrics import get_scorer_names

import featuresift.filters  # noqa: F401 - registers the filter strategy and objective by name
from featuresift.config.context import _Context, _show, _suggest
from featuresift.config.schema import (
    PREPROCESSORS,
    CostSpec,
    CVSpec,
    DataSpec,
    LimitsSpec,
    ModelSpec,
    RunConfig,
)
from featuresift.config.trust import TRUST_ENV, file_parameters, import_trusted, is_trusted
from featuresift.errors import InputError
from featuresift.objectives import OBJECTIVES, make_objective
from featuresift.problem import SelectionProblem
from featuresift.search import DEFAULT_PICK, PICK_RULES, check_pick
from featuresift.strategies import STRATEGIES, make_strategy
from featuresift.strategies.base import resolve_strategy_name

__all__ = ["Section", "SECTIONS", "register_section"]

MAX_AMOUNT = 1e12
"""Largest cost or budget accepted: sums of larger prices lose their cents, then overflow."""

MAX_SEED = 2**32 - 1
"""Largest seed (numpy's random generators take 0 ... 2**32 - 1)."""

MAX_REPEATS = 100
"""Most repeats of k-fold cross-validation (the splits are kept in memory)."""


def _parse_data(value: Any, ctx: _Context) -> DataSpec:
    d = ctx.section(value, "data", ["path", "target", "features", "exclude", "categorical",
                                    "separator", "decimal", "encoding"],
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
        categorical=tuple(ctx.strings(d.get("categorical"), "data.categorical")),
        separator=_parse_separator(d.get("separator"), ctx),
        decimal=_parse_decimal(d.get("decimal"), ctx),
        encoding=_parse_encoding(d.get("encoding"), ctx),
    )


_SEPARATOR_NAMES = {"tab": "\t", "\\t": "\t", "comma": ",", "semicolon": ";", "pipe": "|"}


def _parse_separator(value: Any, ctx: _Context) -> str | None:
    if value is None:
        return None
    if not isinstance(value, str) or not value:
        raise ctx.error(f"expected one character such as ';' or ',' (or tab), got "
                        f"{_show(value)}", "data.separator")
    sep = _SEPARATOR_NAMES.get(value.lower(), value)
    if len(sep) != 1 or sep in "\"\r\n" or sep.isalnum():
        raise ctx.error(f"expected one character such as ';' or ',' (or tab), got "
                        f"{value!r}", "data.separator")
    return sep


def _parse_decimal(value: Any, ctx: _Context) -> str | None:
    if value is None:
        return None
    if value not in (",", "."):
        raise ctx.error(f"expected ',' or '.', got {_show(value)}", "data.decimal")
    return value


def _parse_encoding(value: Any, ctx: _Context) -> str | None:
    name = ctx.string(value, "data.encoding", optional=True)
    if name is None:
        return None
    try:
        codec = codecs.lookup(name)
    except LookupError:
        raise ctx.error(f"unknown text encoding '{name}'; common ones: utf-8, cp1252 "
                        "(Windows, Western Europe), latin-1", "data.encoding") from None
    if not getattr(codec, "_is_text_encoding", True):
        raise ctx.error(f"'{name}' is not a text encoding", "data.encoding")
    return codec.name


def _parse_costs(value: Any, ctx: _Context) -> CostSpec:
    if value is None:
        return CostSpec("features", {}, {}, given=False)
    c = ctx.mapping(value, "costs", ["unit", "features", "panels"])
    unit = ctx.string(c.get("unit", "cost units"), "costs.unit")
    prices = {}
    for name, price in ctx.mapping(c.get("features"), "costs.features").items():
        key = f"costs.features.{name}"
        prices[str(name)] = ctx.number(price, key, minimum=0.0, maximum=MAX_AMOUNT,
                                        what="a cost (a number >= 0)")
    panels: dict[str, tuple[float, tuple[str, ...]]] = {}
    owner: dict[str, str] = {}
    for pname, spec in ctx.mapping(c.get("panels"), "costs.panels").items():
        key = f"costs.panels.{pname}"
        p = ctx.section(spec, key, ["cost", "features"],
                        {"cost": "the panel's price", "features": "its measurements"})
        price = ctx.number(p["cost"], f"{key}.cost", minimum=0.0, maximum=MAX_AMOUNT,
                           what="a cost (a number >= 0)")
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
    budget = ctx.number(value, "budget", minimum=0.0, optional=True, allow_inf=True,
                        maximum=MAX_AMOUNT)
    return None if budget is None or math.isinf(budget) else budget


def _import_estimator(path: str, ctx: _Context) -> type:
    key = "model.estimator"
    module_name, _, attr = path.rpartition(".")
    if not module_name or not attr or not all(p.isidentifier() for p in path.split(".")):
        raise ctx.error("expected a dotted class path like "
                        f"sklearn.linear_model.LogisticRegression, got '{path}'", key)
    if not is_trusted(path, ctx.trusted):
        raise ctx.error(
            f"'{path}' is not allowed: the estimator must come from sklearn or from a "
            f"module trusted on the command line (--trust-module {path.split('.')[0]}) "
            f"or in the environment ({TRUST_ENV})", key,
        )
    try:
        module = import_trusted(module_name, ctx.base_dir)
    except ImportError as exc:
        raise ctx.error(
            f"cannot import module '{module_name}': {exc} (modules are not looked up in the "
            "working directory or the config's folder: install the module, or put its "
            "folder on PYTHONPATH)", key,
        ) from None
    cls = getattr(module, attr, None)
    if cls is None:
        public = [n for n in dir(module) if not n.startswith("_")]
        raise ctx.error(
            f"module '{module_name}' has no '{attr}'{_suggest(attr, public)}", key
        )
    if not inspect.isclass(cls) or not callable(getattr(cls, "fit", None)):
        raise ctx.error(f"'{path}' is not an estimator class with a fit method", key)
    return cls


def _refuse_file_parameters(params: dict, key_of: Callable[[str], str]) -> None:
    """Estimator parameters that make it read or write files (pickled caches) are refused."""
    for name, value in file_parameters(params):
        raise InputError(
            f"parameter '{name}' = {_show(value)} would make the model read or write files "
            "(a cache of pickles, which can run code when loaded); configs may not set it",
            key=key_of(name),
        )


def _validate_estimator(cls: type, params: dict, ctx: _Context) -> Any:
    """Build the estimator and run scikit-learn's parameter checks, fitting nothing."""
    def key_of(name: str) -> str:
        top = name.split("__")[0]
        return f"model.params.{top}" if top in params else "model.estimator"

    try:
        _refuse_file_parameters(dict(params), key_of)
    except InputError as exc:
        raise ctx.error(exc.message, exc.key) from None
    try:
        estimator = cls(**params)
    except Exception as exc:  # noqa: BLE001 - any constructor failure is a config problem
        raise ctx.error(f"{cls.__name__}(**params) failed: {_first_line(exc)}",
                        "model.params") from None
    try:
        deep = estimator.get_params(deep=True)
    except Exception:  # noqa: BLE001 - not a scikit-learn estimator: nothing more to read
        deep = {}
    try:
        _refuse_file_parameters(deep, key_of)
    except InputError as exc:
        raise ctx.error(exc.message, exc.key) from None
    validate = getattr(estimator, "_validate_params", None)  # scikit-learn >= 1.2
    if callable(validate) and getattr(estimator, "_parameter_constraints", None) is not None:
        try:
            validate()
        except (ValueError, TypeError) as exc:
            text = _first_line(exc)
            match = re.match(r"The '([^']+)' parameter", text)
            name = match.group(1) if match else None
            raise ctx.error(text, f"model.params.{name}" if name in params else "model.params")\
                from None
    return estimator


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip()
    return text.splitlines()[0] if text else type(exc).__name__


def _parse_model(value: Any, ctx: _Context) -> ModelSpec:
    m = ctx.section(value, "model", ["estimator", "params", "preprocessing", "trusted_modules"],
                    {"estimator": "a dotted class path"})
    if m.get("trusted_modules"):
        raise ctx.error(
            "a config cannot trust modules itself; name them on the command line "
            "(--trust-module NAME) or in the environment "
            f"({TRUST_ENV}=NAME), and remove this key", "model.trusted_modules",
        )
    path = ctx.string(m["estimator"], "model.estimator")
    cls = _import_estimator(path, ctx)
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
    _validate_estimator(cls, params, ctx)
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
    return ModelSpec(path, cls, params, tuple(steps), tuple(ctx.trusted))


def _parse_cv(value: Any, ctx: _Context) -> CVSpec:
    c = ctx.mapping(
        value, "cv", ["folds", "repeats", "stratified", "group_column", "shuffle", "seed"]
    )
    spec = CVSpec(
        folds=ctx.integer(c.get("folds", 5), "cv.folds", minimum=2),
        repeats=ctx.integer(c.get("repeats", 1), "cv.repeats", minimum=1, maximum=MAX_REPEATS),
        stratified=ctx.boolean(c.get("stratified"), "cv.stratified", optional=True),
        group_column=ctx.string(c.get("group_column"), "cv.group_column", optional=True),
        shuffle=ctx.boolean(c.get("shuffle", True), "cv.shuffle"),
        seed=ctx.integer(c.get("seed", 0), "cv.seed", minimum=0, optional=True,
                         maximum=MAX_SEED),
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
    _require_objective_options(spec, ctx)
    try:
        make_objective(spec)
    except InputError as exc:
        raise ctx.rekey(exc, "objective") from None
    return spec


def _require_objective_options(spec: dict, ctx: _Context) -> None:
    """Name every option the objective's class requires (no default) that is missing."""
    cls = OBJECTIVES.get(spec["name"])
    if cls is None:
        return
    try:
        params = inspect.signature(cls.__init__).parameters
    except (TypeError, ValueError):
        return
    yaml_name = {"lam": "lambda"}  # Python keyword -> YAML key
    for pname, param in list(params.items())[1:]:
        if param.kind in (param.VAR_POSITIONAL, param.VAR_KEYWORD):
            continue
        key = yaml_name.get(pname, pname)
        if param.default is param.empty and key not in spec and pname not in spec:
            raise ctx.error(f"objective '{spec['name']}' needs '{key}' (it has no default)",
                            "objective")


def _parse_strategy(value: Any, ctx: _Context) -> dict:
    s = {"name": value} if isinstance(value, str) else ctx.mapping(
        value, "strategy", ["name", "options"]
    )
    given = ctx.string(s.get("name", "greedy-swap"), "strategy.name")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)
        name = resolve_strategy_name(given)
    if name not in STRATEGIES:
        raise ctx.error(
            f"unknown strategy '{name}'{_suggest(name, STRATEGIES)}; known: "
            + ", ".join(sorted(STRATEGIES)), "strategy.name",
        )
    if name != given:
        ctx.note(f"'{given}' is an old spelling; use '{name}'", "strategy.name")
    options = ctx.mapping(s.get("options"), "strategy.options")
    for old, new in STRATEGIES[name].renamed_options.items():
        if old in options and new not in options:
            ctx.note(f"'{old}' is an old name; use '{new}'", f"strategy.options.{old}")
    try:
        with warnings.catch_warnings():  # noted above, with key and line
            warnings.simplefilter("ignore", DeprecationWarning)
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
        ctx.number(lim.get("max_time_s"), "limits.max_time_s", positive=True, optional=True,
                   what="a time in seconds"),
    )


def _parse_pick(value: Any, ctx: _Context) -> str:
    pick = ctx.string(DEFAULT_PICK if value is None else value, "pick")
    try:
        with warnings.catch_warnings():  # noted below, with key and line
            warnings.simplefilter("ignore", DeprecationWarning)
            rule = check_pick(pick)
    except InputError:
        raise ctx.error(f"expected one of {', '.join(PICK_RULES)}, got '{pick}'",
                        "pick") from None
    if rule != pick:
        ctx.note(f"'{pick}' is an old spelling; use '{rule}'", "pick")
    return rule


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
    lexical = Path(os.path.normpath(base / os.path.expanduser(folder)))
    if lexical != target:  # a symbolic link on the way below the config's folder
        raise ctx.error(
            f"'{folder}' goes through a symbolic link ({lexical} leads to {target}); "
            "featuresift never writes through links: use a real folder",
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
    >>> from featuresift.config import build_run, load_config
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
    # The one seed, default 0 (also when written as null), recorded in result.json.
    "seed": Section(lambda v, ctx: 0 if v is None else ctx.integer(v, "seed", minimum=0,
                                                                   maximum=MAX_SEED)),
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
    >>> from featuresift.config import build_run, load_config
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
