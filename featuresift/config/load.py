"""``load_config``: read the YAML, parse every section, read the data, run every check."""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from sklearn.base import is_classifier, is_regressor

from featuresift.config.checks import (
    _build_cost_model,
    _check_folds,
    _check_lists,
    _check_missing_values,
    _check_nested_and_guard_folds,
    _check_scoring,
    _check_strategy_on_data,
    _check_target,
    check_sweep_budgets,
)
from featuresift.config.context import _Context, _show
from featuresift.config.data import (
    _check_categorical_model,
    _numeric_column,
    _read_frame,
    _select_candidates,
)
from featuresift.config.schema import OVERRIDES, RunConfig
from featuresift.config.sections import _CORE_FIELDS, SECTIONS
from featuresift.config.trust import trusted_module_names
from featuresift.config.yamlfile import _read_yaml
from featuresift.errors import InputError

__all__ = ["load_config"]


def load_config(
    path: str | os.PathLike, *, trusted_modules: Iterable[str] | None = None, **overrides: Any
) -> RunConfig:
    """Read, check and resolve a YAML run configuration and its data file.

    Nothing is fitted or written.

    Parameters
    ----------
    path : path-like
        The YAML file.
    trusted_modules : iterable of str, optional
        Modules (besides scikit-learn) whose estimator classes the config may name,
        added to those in the environment variable ``FEATURESIFT_TRUSTED_MODULES``.
        Trust never comes from the config file itself.
    **overrides
        Values that replace the file's: ``output`` (a folder, relative to the current
        directory and not restricted to the config's folder), ``n_jobs``, ``budget``
        (``float('inf')`` for unlimited), ``strategy`` (a name; the file's strategy
        options are dropped unless the name is unchanged), ``seed``, ``pick`` and
        ``guard``. None means
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
    trusted = trusted_module_names(trusted_modules)
    raw, lines = _read_yaml(path)
    if raw is None:
        raise InputError(f"config file {path.name} is empty")
    if not isinstance(raw, dict):
        raise InputError(f"config file {path.name}: the top level must be a mapping of "
                         f"sections (data:, model:, ...), got {_show(raw)}", line=1)
    ctx = _Context(lines, path.parent, (k for k in given if k != "output"), trusted)
    ctx.mapping(raw, "", SECTIONS)
    raw = dict(raw)
    for k in ("budget", "n_jobs", "seed", "pick", "guard"):
        if k in given:
            raw[k] = given[k]
    if "strategy" in given:
        old = raw.get("strategy")
        same = isinstance(old, dict) and old.get("name", "greedy-swap") == given["strategy"]
        raw["strategy"] = dict(old) if same else {"name": given["strategy"]}
    parsed = {name: sec.parse(raw.get(name), ctx) for name, sec in SECTIONS.items()}
    output = parsed.pop("output")
    # Made absolute without resolving links: a link in place of the output folder is
    # refused when writing (featuresift.outputs), never silently followed.
    if "output" in given:
        output = Path(os.path.abspath(os.path.expanduser(str(given["output"]))))
    elif output is None:
        output = Path(os.path.abspath(path.parent.resolve() / "results" / path.stem))
        if output.resolve() != output:
            raise ctx.error(f"the default output folder {output} goes through a symbolic "
                            f"link (it leads to {output.resolve()}); featuresift never writes "
                            "through links: set output.folder or pass --output DIR",
                            "output.folder")
    if output.exists() and not output.is_dir():
        if "output" in given:
            raise InputError(f"--output {output}: exists and is not a folder")
        raise ctx.error(f"{output} exists and is not a folder", "output.folder")
    core = {k: v for k, v in parsed.items() if k in _CORE_FIELDS}
    extra = {k: v for k, v in parsed.items() if k not in _CORE_FIELDS}
    frame, data_format = _read_frame(core["data"], ctx)
    cfg = RunConfig(path=path, output=output, frame=frame, extra=extra, **core)
    cfg.data_format = data_format
    cfg.overridden = given
    cfg.notes = ctx.notes
    cfg.lines = lines
    model = cfg.model.build()
    cfg.classification = bool(is_classifier(model))
    _check_supervised(model, cfg, ctx)
    if cfg.cv.stratified and not cfg.classification:
        raise ctx.error("stratified folds need a classifier; set stratified: false",
                        "cv.stratified")
    cfg.candidates = _select_candidates(cfg, ctx)
    for i, name in enumerate(cfg.data.categorical):
        if name not in cfg.candidates:
            raise ctx.error(f"'{name}' is not a candidate column", f"data.categorical[{i}]")
    _check_categorical_model(cfg, ctx)
    for name in cfg.candidates:
        if name not in cfg.data.categorical:
            _numeric_column(frame, name, cfg.data.path.name)
    _check_target(cfg, ctx)
    _check_folds(cfg, ctx)
    cfg.cost_model = _build_cost_model(cfg, ctx)
    _check_lists(cfg, ctx)
    _check_missing_values(cfg, ctx)
    _check_scoring(cfg, ctx)
    _check_strategy_on_data(cfg, ctx)
    _check_nested_and_guard_folds(cfg, ctx)
    if (cfg.extra.get("screen") or {}).get("relevance") is not None:
        from featuresift.config.screen import screen_relevance

        screen_relevance(cfg)  # the scorer supports this task
    sweep = cfg.extra.get("sweep") or {}
    if sweep.get("budgets") is not None:
        check_sweep_budgets(cfg, sweep["budgets"], lines=cfg.lines)
    return cfg


def _check_supervised(model: object, cfg: RunConfig, ctx: _Context) -> None:
    """The estimator predicts the target: not a clusterer, a transformer or an outlier
    detector (their 'score' is not a prediction score of the target)."""
    if is_classifier(model) or is_regressor(model):
        return
    try:
        from sklearn.utils import get_tags

        kind = get_tags(model).estimator_type
    except Exception:  # noqa: BLE001 - not a scikit-learn estimator: let the fit decide
        kind = None
    if kind is None and callable(getattr(model, "predict", None)):
        return  # a trusted estimator without scikit-learn tags that predicts
    name = cfg.model.estimator.rpartition(".")[2]
    what = f"a {kind}" if kind else "not a model that predicts (it has no predict method)"
    raise ctx.error(f"{name} is {what}; featuresift scores models that predict the "
                    "target: use a classifier or a regressor", "model.estimator")
