"""``describe_plan``: what a run would do, as text (``featuresift run --dry-run``)."""

from __future__ import annotations

from featuresift.config.run import _splitter
from featuresift.config.schema import RunConfig
from featuresift.config.yamlfile import _plain
from featuresift.objectives import make_objective
from featuresift.problem import SelectionProblem

__all__ = ["describe_plan"]


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
    >>> from featuresift.config import load_config
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
    fmt = f"; {cfg.data_format.describe()}" if cfg.data_format is not None else ""
    lines.append(f"Data:   {cfg.data.path} ({len(cfg.frame)} rows, "
                 f"{len(cfg.frame.columns)} columns{fmt})")
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
    guard = cfg.extra.get("guard") or {"name": "off"}
    if guard.get("name", "off") == "off":
        lines.append("Guard:  off (the pick rule's answer stands)")
    else:
        lines.append(f"Guard:  {guard['name']}, {guard['folds']} outer folds, alpha "
                     f"{guard['alpha']:g} (when the in-search screen does not decide, the "
                     f"search is re-run in each outer fold: about {guard['folds']}x the fits)")
    cluster = (cfg.extra.get("engine") or {}).get("cluster")
    jobs = cfg.n_jobs
    if cluster is not None and "n_jobs" not in cfg.lines and "n_jobs" not in cfg.overridden:
        jobs = "every worker thread"  # as engine's apply hook sets it
    lines.append(f"Search: {cfg.strategy['name']} {_plain(cfg.strategy['options'])}, "
                 f"seed {cfg.seed}, n_jobs {jobs}")
    if cluster is not None:
        workers = cfg.extra["engine"].get("workers")
        lines.append("Fits:   on a dask cluster, " + (
            f"{workers} local worker processes" if cluster == "local" else cluster))
    lim = cfg.limits
    lines.append(f"Limits: max_features {lim.max_features}, max_evaluations "
                 f"{lim.max_evaluations}, max_time_s {lim.max_time_s}")
    if cfg.must_include or cfg.never_include:
        lines.append(f"Always: {', '.join(cfg.must_include) or '-'}; never: "
                     f"{', '.join(cfg.never_include) or '-'}")
    lines.append(f"Output: {cfg.output}")
    return "\n".join(lines)
