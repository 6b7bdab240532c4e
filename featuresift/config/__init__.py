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
      categorical: []               # candidate columns holding categories (need one_hot
                                    #   or a model that takes categories)
      separator: null               # CSV only; null = detected (',' ';' tab '|')
      decimal: null                 # '.' or ','; null = detected (';' files often use ',')
      encoding: null                # e.g. utf-8, cp1252, latin-1; null = detected
    costs:                          # omit the whole section: every feature costs 1
      unit: "EUR per lot (invented)"
      features:                     # price of each candidate that is not in a panel
        moisture_pct: 0.0           #   (0 = value already on hand); >= 0, finite
        protein_nir_pct: 6.0
      panels:                       # tests bought together for one price
        mycotoxin_panel: {cost: 48.0, features: [don_ppm, zearalenone_ppb]}
    budget: 30.0                    # max cost per sample (at most 1e12); null = unlimited
    model:
      estimator: sklearn.linear_model.LogisticRegression  # dotted class path: sklearn, or a
                                #   module trusted with --trust-module NAME
      params: {max_iter: 2000}      # constructor arguments
      preprocessing: [impute_median, scale]  # steps fitted inside every CV fold
    cv:
      folds: 5
      repeats: 1                    # > 1: repeated (stratified) k-fold
      stratified: null              # null = stratified for classifiers
      group_column: null            # keep each group's rows in one fold
      shuffle: true
      seed: 0                       # Python: SelectionProblem(cv=K) splits the same way
    scoring: null                   # a name from sklearn.metrics.get_scorer_names();
                                    #   null = the estimator's own score method
    objective: {name: score}        # or {name: penalized, lambda: 0.002}
    strategy:
      name: greedy-swap             # a name registered in featuresift.strategies
      options: {}                   # strategy keyword options, e.g. {n_features: 4}
    limits: {max_features: null, max_evaluations: null, max_time_s: null}
    must_include: []                # measurements always taken
    never_include: []               # measurements not available
    pick: one-se                    # one-se: cheapest subset within one standard error of
                                    #   the best (Breiman et al. 1984) | best
    guard: nested                   # noise guard: nested | off | {name: nested, folds: 5,
                                    #   alpha: 0.05}; see featuresift.guard
    seed: 0                         # the one seed (strategies, noise guard, nested
                                    #   estimate, mutual_info screening); recorded in
                                    #   result.json, frontier.json, nested.json, screen.json
    n_jobs: 1                       # parallel model fits (joblib); under engine.cluster:
                                    #   concurrent tasks (omit: every worker thread)
    output:
      folder: results/<name of the YAML file>   # must stay inside the YAML file's folder

The ``engine`` section (journal, racing, failure policy, progress, and ``cluster``:
``local`` or a dask scheduler address such as ``tcp://10.0.0.5:8786``, with ``workers``
for ``local``) is documented in :mod:`featuresift.config.engine`; ``sweep`` (budgets of
``featuresift sweep``) in :mod:`featuresift.config.sweep`, ``nested`` (the honest
estimate) in :mod:`featuresift.config.nested`, ``screen`` (the relevance scorer of
``featuresift screen``) in :mod:`featuresift.config.screen`, ``guard`` in
:mod:`featuresift.config.guard`. README.md has the table of every key and its Python
twin (:data:`featuresift.config.twins.PYTHON_TWINS`).

Old spellings (``greedy_swap``, ``filter_order``, ``one_se``, the genetic options
``generation_limit`` and ``stall_limit``) still work; :attr:`RunConfig.notes` names each
with its key and line, and the command line prints them as ``featuresift: note:`` lines.

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

Modules
-------
One module per concept (all public names are re-exported here):
``yamlfile`` (YAML text -> data and key lines), ``context`` (typed readers, messages with
key and line), ``schema`` (section dataclasses, :class:`RunConfig`), ``sections`` (one
parser per top-level section, :data:`SECTIONS`), ``data`` (data file, candidate columns),
``checks`` (checks across sections and data), ``load`` (:func:`load_config`), ``run``
(:func:`build_run`, :func:`run_from_config`), ``plan`` (:func:`describe_plan`), ``sweep``,
``nested``, ``screen``, ``guard`` and ``engine`` (those sections and studies), ``twins``
(each YAML key's Python twin).
"""

from __future__ import annotations

# The sweep and engine modules register their sections, in this order.
# isort: off
from featuresift.config.schema import (
    OVERRIDES,
    PREPROCESSORS,
    CostSpec,
    CVSpec,
    DataSpec,
    LimitsSpec,
    ModelSpec,
    RunConfig,
)
from featuresift.config.sections import SECTIONS, Section, register_section
from featuresift.config.load import load_config
from featuresift.config.run import build_run, run_from_config, write_run_files
from featuresift.config.plan import describe_plan
from featuresift.config.sweep import sweep_from_config, write_sweep_files
from featuresift.config.nested import nested_from_config
from featuresift.config import engine as _engine  # noqa: F401
from featuresift.config import guard as _guard  # noqa: F401
from featuresift.config import screen as _screen  # noqa: F401
# isort: on

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
    "write_run_files",
    "write_sweep_files",
]
