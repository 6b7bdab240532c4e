"""Run orchestration: config -> SelectionProblem and search arguments -> result."""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

from featuresift.config.checks import _check_scoring
from featuresift.config.context import _Context
from featuresift.config.data import _numeric_column, candidate_frame, candidate_matrix
from featuresift.config.load import load_config
from featuresift.config.schema import RunConfig
from featuresift.config.sections import SECTIONS
from featuresift.config.yamlfile import _plain
from featuresift.errors import FitFailedError, InputError
from featuresift.outputs import RunFolder, open_run_folder
from featuresift.problem import SelectionProblem, make_splitter
from featuresift.result import SearchResult
from featuresift.search import run_search

__all__ = ["build_run", "run_from_config", "write_run_files"]


def _splitter(cfg: RunConfig) -> Any:
    cv = cfg.cv
    return make_splitter(cv.folds, classification=cfg.classification,
                         grouped=cv.group_column is not None, repeats=cv.repeats,
                         stratified=cfg.stratified, shuffle=cv.shuffle, seed=cv.seed)


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
        objective, limits, must/never include, pick, seed, n_jobs).

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
    if cfg.data.categorical:  # the model sees category columns (featuresift.columns)
        X = candidate_frame(cfg)
    else:
        # A big CSV's float candidates already share one C-ordered array (read_csv_lean):
        # use it as it is rather than stacking a copy of every column.
        X = candidate_matrix(frame, cfg.candidates)
        if X is None:
            X = np.column_stack([_numeric_column(frame, c, cfg.data.path.name).to_numpy()
                                 for c in cfg.candidates])
    y = frame[cfg.data.target].to_numpy()
    groups = None if cfg.cv.group_column is None else frame[cfg.cv.group_column].to_numpy()
    try:
        problem = SelectionProblem(
            X, y, cfg.model.build(), costs=cfg.cost_model, cv=_splitter(cfg),
            scoring=_check_scoring(cfg, ctx), groups=groups, feature_names=cfg.candidates,
        )
    except InputError as exc:
        if exc.key == "cv":  # the splitter rejects the data (too few rows per class, ...)
            raise ctx.error(exc.message, "cv.folds") from None
        raise ctx.rekey(exc, "data") from None
    except ValueError as exc:
        raise ctx.error(f"cannot make the CV folds: {exc}", "cv.folds") from None
    kwargs: dict[str, Any] = {
        "strategy": {"name": cfg.strategy["name"], "options": dict(cfg.strategy["options"])},
        "budget": cfg.budget,
        "objective": dict(cfg.objective),
        "max_features": cfg.limits.max_features,
        "max_evaluations": cfg.limits.max_evaluations,
        "max_time_s": cfg.limits.max_time_s,
        "must_include": list(cfg.must_include),
        "never_include": list(cfg.never_include),
        "pick": cfg.pick,
        "seed": cfg.seed,
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
            **({} if cfg.data_format is None else {
                "separator": cfg.data_format.separator, "decimal": cfg.data_format.decimal,
                "encoding": cfg.data_format.encoding}),
        },
        "model": {"estimator": cfg.model.estimator, "params": _plain(cfg.model.params),
                  "preprocessing": list(cfg.model.preprocessing)},
        "cv": {"splitter": type(problem.cv).__name__, "n_splits": len(problem.splits),
               "folds": cfg.cv.folds, "repeats": cfg.cv.repeats, "seed": cfg.cv.seed,
               "group_column": cfg.cv.group_column},
        **({"overrides": _plain(cfg.overridden)} if cfg.overridden else {}),
        **_cluster_record(cfg),
    }


def _cluster_record(cfg: RunConfig) -> dict:
    """``engine.cluster`` as run (recorded only when set: answers do not depend on it)."""
    engine = cfg.extra.get("engine") or {}
    if engine.get("cluster") is None:
        return {}
    return {"cluster": {"address": engine["cluster"], "workers": engine.get("workers")}}



def write_run_files(out: RunFolder, cfg: RunConfig, result: SearchResult,
                    nested: Any = None) -> list[Path]:
    """Write the files of one ``run`` into an open :class:`~featuresift.outputs.RunFolder`.

    ``result.json``, ``selected.csv``, ``path.csv``, ``report.md`` and, with a nested
    estimate, ``nested.json`` and (with matplotlib) ``nested.png``. Returns the paths
    written (the caller commits ``out``).
    """

    from featuresift.report import write_report

    written = result.write(out)
    # nested.json (strict JSON: NaN as null) and, with matplotlib, nested.png.
    files = {} if nested is None else nested.output_files()
    written.append(write_report(out, result, nested=nested, source=str(cfg.path),
                                nested_plot="nested.png" if "nested.png" in files else None))
    if files:
        written += out.write_files(files)
    return written


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
        Write ``result.json``, ``selected.csv``, ``path.csv`` and ``report.md`` into a
        new run folder (``NNN-run``) of the output folder, which is locked for the
        whole run (see :mod:`featuresift.outputs`).
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
    if not write:
        return _run(cfg, callback)
    with open_run_folder(cfg, "run") as out:
        result = _run(cfg, callback)
        write_run_files(out, cfg, result)
        out.commit()
    return result


def _run(cfg: RunConfig, callback: Callable | None) -> SearchResult:
    from featuresift.config.engine import cluster_of

    problem, kwargs = build_run(cfg)
    with cluster_of(cfg):  # engine.cluster: the fits run on a dask cluster
        result = run_search(problem, callback=callback, **kwargs)
    result.extras.update(_provenance(cfg, problem))
    if result.failures.get("none_scored"):
        # Every evaluated subset had a failed fold: there is no answer to write.
        raise FitFailedError(result.failures["message"])
    return result
