"""The ``engine`` section: journal, racing, chunking, failure policy, progress."""

from __future__ import annotations

from contextlib import contextmanager
from pathlib import Path
from typing import Any

from featuresift.config.context import _Context, _show
from featuresift.config.schema import RunConfig
from featuresift.config.sections import Section, register_section
from featuresift.engine.cluster import check_cluster, import_distributed, use_cluster
from featuresift.engine.evaluator import check_error_score
from featuresift.engine.pool import POOL_MODES
from featuresift.engine.racing import make_race
from featuresift.errors import InputError
from featuresift.problem import SelectionProblem


def _parse_engine(value: Any, ctx: _Context) -> dict:
    """The ``engine`` section: journal, racing, chunking, failure policy, progress.

    .. code-block:: yaml

        engine:
          journal: true         # true: <output folder>/journal.sqlite; false: off; or a
                                #   file name inside the output folder
          racing: false         # false | f-race | hoeffding | t-race | {name: f-race, alpha: 0.1}
          chunk_size: null      # model fits per parallel task (null: automatic)
          on_fit_error: raise   # raise | record (a failed fold is recorded and counted)
          error_score: .nan     # under record: a failed fold's score; .nan (default): a
                                #   subset with a failed fold has no score, never chosen
          progress: true        # a progress bar on an interactive terminal
          share_preprocessing: true  # fit leading scalers/imputers once per fold
          cluster: null         # null: fits on this machine (n_jobs); local: a dask cluster
                                #   of worker processes here; or a dask scheduler address
                                #   such as tcp://10.0.0.5:8786 (featuresift[cluster])
          workers: null         # with cluster: local, worker processes (default: CPUs)
          fast_path: true       # exact OLS/ridge/LDA scores from per-fold statistics
          pool: auto            # auto | always | never: fits in worker processes
          warm_start: false     # logistic regression starts from the parent's coefficients

    Under ``cluster`` the fits run on the dask cluster (``n_jobs``, when given, limits
    the concurrent tasks; default every worker thread); answers are those of a local
    run. See :func:`featuresift.engine.cluster.use_cluster`.
    """
    d = ctx.mapping(value, "engine", ["journal", "racing", "chunk_size", "on_fit_error",
                                      "error_score", "progress", "share_preprocessing",
                                      "cluster", "workers", "fast_path", "pool", "warm_start"])
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
    try:
        error_score = check_error_score(d.get("error_score", float("nan")))
    except InputError as exc:
        raise ctx.error(exc.message, "engine.error_score") from None
    progress = d.get("progress", True)
    try:
        cluster, workers = check_cluster(d.get("cluster"), d.get("workers"))
        if cluster is not None:
            import_distributed()
    except InputError as exc:
        raise ctx.error(exc.message, f"engine.{exc.key}") from None
    pool = d.get("pool", "auto")
    if pool not in POOL_MODES:
        raise ctx.error(f"expected {', '.join(POOL_MODES)}, got {_show(pool)}", "engine.pool")
    return {
        "journal": journal_name,
        "racing": racing,
        "chunk_size": ctx.integer(d.get("chunk_size"), "engine.chunk_size", minimum=1,
                                  optional=True),
        "on_fit_error": policy,
        "error_score": error_score,
        "progress": ctx.boolean(progress, "engine.progress"),
        "share_preprocessing": ctx.boolean(d.get("share_preprocessing", True),
                                           "engine.share_preprocessing"),
        "cluster": cluster,
        "workers": workers,
        "fast_path": ctx.boolean(d.get("fast_path", True), "engine.fast_path"),
        "pool": pool,
        "warm_start": ctx.boolean(d.get("warm_start", False), "engine.warm_start"),
    }


def _apply_engine(cfg: RunConfig, value: dict, problem: SelectionProblem, kwargs: dict) -> None:
    kwargs["journal"] = None if value["journal"] is None else cfg.output / value["journal"]
    kwargs["racing"] = value["racing"]
    kwargs["chunk_size"] = value["chunk_size"]
    kwargs["on_fit_error"] = value["on_fit_error"]
    kwargs["error_score"] = value["error_score"]
    kwargs["verbose"] = 1 if value["progress"] else 0
    kwargs["share_preprocessing"] = value["share_preprocessing"]
    for key in ("fast_path", "pool", "warm_start"):
        kwargs[key] = value[key]
    if value["cluster"] is not None:
        _check_n_jobs(cfg)
        if "n_jobs" not in cfg.lines and "n_jobs" not in cfg.overridden:
            kwargs["n_jobs"] = None  # every worker thread of the cluster


def _check_n_jobs(cfg: RunConfig) -> None:
    if cfg.n_jobs == 1 and ("n_jobs" in cfg.lines or "n_jobs" in cfg.overridden):
        ctx = _Context(cfg.lines, cfg.base_dir, cfg.overridden)
        raise ctx.error("n_jobs 1 would keep every fit in this process although "
                        "engine.cluster is set; remove n_jobs (every worker thread of the "
                        "cluster is used) or give the number of concurrent tasks", "n_jobs")


def cluster_of(cfg: RunConfig):
    """``use_cluster`` for the config's ``engine.cluster`` (a no-op without one); an
    unreachable scheduler is reported at that key and line."""
    engine = cfg.extra.get("engine") or {}
    if engine.get("cluster") is not None:
        _check_n_jobs(cfg)  # before any worker is started
    return _located(cfg, use_cluster(engine.get("cluster"), engine.get("workers")))


@contextmanager
def _located(cfg: RunConfig, session):
    try:
        with session as client:
            yield client
    except InputError as exc:
        if exc.key not in ("cluster", "workers"):
            raise
        ctx = _Context(cfg.lines, cfg.base_dir, cfg.overridden)
        raise ctx.error(exc.message, f"engine.{exc.key}") from None


register_section("engine", Section(_parse_engine, _apply_engine))
