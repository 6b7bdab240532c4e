"""Every YAML key and its Python twin: the same concept under the same name.

:data:`PYTHON_TWINS` maps each key of the run configuration (dotted, as in error
messages) to the Python callable and argument that take the same value, so that a
study moves between a YAML file and a notebook without renaming anything. The test
suite walks the YAML parser's schema and checks that every key has an entry here, that
each named argument exists, and that the README table lists every key.

Examples
--------
>>> PYTHON_TWINS["limits.max_time_s"]
('featuresift.run_search', 'max_time_s')
>>> python_twin("seed")
'run_search(seed=...)'
"""

from __future__ import annotations

__all__ = ["PYTHON_TWINS", "python_twin"]

_RUN = "featuresift.run_search"
_PROBLEM = "featuresift.SelectionProblem"
_SPLIT = "featuresift.problem.make_splitter"
_COSTS = "featuresift.CostModel"

PYTHON_TWINS: dict[str, tuple[str, str]] = {
    "data": (_PROBLEM, "X"),
    "data.path": (_PROBLEM, "X"),
    "data.target": (_PROBLEM, "y"),
    "data.features": (_PROBLEM, "feature_names"),
    "data.exclude": (_PROBLEM, "X"),
    "data.categorical": (_PROBLEM, "X"),
    "data.separator": (_PROBLEM, "X"),
    "data.decimal": (_PROBLEM, "X"),
    "data.encoding": (_PROBLEM, "X"),
    "costs": (_PROBLEM, "costs"),
    "costs.unit": (_COSTS, "unit"),
    "costs.features": (_COSTS, "feature_costs"),
    "costs.panels": (_COSTS, "panels"),
    "costs.panels.*.cost": (_COSTS, "panels"),
    "costs.panels.*.features": (_COSTS, "panels"),
    "budget": (_RUN, "budget"),
    "model": (_PROBLEM, "estimator"),
    "model.estimator": (_PROBLEM, "estimator"),
    "model.params": (_PROBLEM, "estimator"),
    "model.preprocessing": (_PROBLEM, "estimator"),
    "model.trusted_modules": ("featuresift.config.load_config", "trusted_modules"),
    "cv": (_PROBLEM, "cv"),
    "cv.folds": (_SPLIT, "folds"),
    "cv.repeats": (_SPLIT, "repeats"),
    "cv.stratified": (_SPLIT, "stratified"),
    "cv.group_column": (_PROBLEM, "groups"),
    "cv.shuffle": (_SPLIT, "shuffle"),
    "cv.seed": (_SPLIT, "seed"),
    "scoring": (_PROBLEM, "scoring"),
    "objective": (_RUN, "objective"),
    "strategy": (_RUN, "strategy"),
    "strategy.name": (_RUN, "strategy"),
    "strategy.options": (_RUN, "strategy"),
    "limits": (_RUN, "max_features"),
    "limits.max_features": (_RUN, "max_features"),
    "limits.max_evaluations": (_RUN, "max_evaluations"),
    "limits.max_time_s": (_RUN, "max_time_s"),
    "must_include": (_RUN, "must_include"),
    "never_include": (_RUN, "never_include"),
    "pick": (_RUN, "pick"),
    "guard": (_RUN, "guard"),
    "guard.name": (_RUN, "guard"),
    "guard.folds": (_RUN, "guard"),
    "guard.alpha": (_RUN, "guard"),
    "seed": (_RUN, "seed"),
    "n_jobs": (_RUN, "n_jobs"),
    "output": ("featuresift.SearchResult.write", "folder"),
    "output.folder": ("featuresift.SearchResult.write", "folder"),
    "engine": (_RUN, "journal"),
    "engine.journal": (_RUN, "journal"),
    "engine.racing": (_RUN, "racing"),
    "engine.chunk_size": (_RUN, "chunk_size"),
    "engine.on_fit_error": (_RUN, "on_fit_error"),
    "engine.error_score": (_RUN, "error_score"),
    "engine.progress": (_RUN, "verbose"),
    "engine.share_preprocessing": (_RUN, "share_preprocessing"),
    "engine.cluster": ("featuresift.use_cluster", "cluster"),
    "engine.workers": ("featuresift.use_cluster", "workers"),
    "engine.fast_path": (_RUN, "fast_path"),
    "engine.pool": (_RUN, "pool"),
    "engine.warm_start": (_RUN, "warm_start"),
    "sweep": ("featuresift.budget_sweep", "budgets"),
    "sweep.budgets": ("featuresift.budget_sweep", "budgets"),
    "sweep.n_budgets": ("featuresift.budget_sweep", "budgets"),
    "sweep.budget_levels": ("featuresift.budget_sweep", "budget_levels"),
    "screen": ("featuresift.filters.feature_report", "relevance"),
    "screen.relevance": ("featuresift.filters.feature_report", "relevance"),
    "nested": ("featuresift.nested_evaluation", "outer_cv"),
    "nested.folds": ("featuresift.nested_evaluation", "outer_cv"),
    "nested.repeats": ("featuresift.nested_evaluation", "n_repeats"),
    "nested.confidence": ("featuresift.nested_evaluation", "confidence"),
}
"""YAML key -> (dotted path of the Python callable, argument name)."""


def python_twin(key: str) -> str:
    """``function(argument=...)``: the Python twin of a YAML key, as the README shows it."""
    func, arg = PYTHON_TWINS[key]
    return f"{func.rsplit('.', 1)[-1]}({arg}=...)" if "." in func else f"{func}({arg}=...)"
