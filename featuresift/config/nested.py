"""The ``nested`` section and :func:`nested_from_config`: nested CV of the configured search.

.. code-block:: yaml

    nested:              # the honest (nested) estimate; present = `run` computes it, and
                         #   `sweep` computes it for its headline pick
      folds: 5           # K outer folds
      repeats: 1         # R: repeat the K outer folds R times (R x K outer searches)
      confidence: 0.95   # level of the interval of the nested score

``featuresift run --nested K --nested-repeats R`` (and the same options of ``sweep``)
override the section or ask for the estimate without it.
"""

from __future__ import annotations

from typing import Any

from featuresift.config.checks import check_outer_folds
from featuresift.config.context import _Context
from featuresift.config.run import _splitter, build_run
from featuresift.config.schema import RunConfig
from featuresift.config.sections import MAX_REPEATS, Section, register_section
from featuresift.errors import InputError

__all__ = ["nested_from_config", "nested_spec"]

_DEFAULT = {"folds": 5, "repeats": 1, "confidence": 0.95}


def _parse_nested(value: Any, ctx: _Context) -> dict | None:
    """The ``nested`` section (None when absent)."""
    if value is None:
        return None
    d = ctx.mapping(value, "nested", ["folds", "repeats", "confidence"])
    folds = ctx.integer(d.get("folds", 5), "nested.folds", minimum=2)
    repeats = ctx.integer(d.get("repeats", 1), "nested.repeats", minimum=1,
                          maximum=MAX_REPEATS)
    conf = ctx.number(d.get("confidence", 0.95), "nested.confidence", minimum=0.0)
    if not 0 < conf < 1:
        raise ctx.error(f"must lie strictly between 0 and 1, got {conf:g}", "nested.confidence")
    return {"folds": folds, "repeats": repeats, "confidence": conf}


register_section("nested", Section(_parse_nested))


def nested_spec(cfg: RunConfig, folds: int | None = None,
                repeats: int | None = None) -> dict | None:
    """The nested estimate asked for: command-line values over the ``nested`` section.

    None when neither asks for one.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.config import load_config
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cfg = load_config(write_demo(d, n_lots=60)[1])
    >>> nested_spec(cfg) is None, nested_spec(cfg, folds=3)
    (True, {'folds': 3, 'repeats': 1, 'confidence': 0.95})
    """
    section = cfg.extra.get("nested")
    if section is None and folds is None and repeats is None:
        return None
    spec = dict(section or _DEFAULT)
    if folds is not None:
        if folds < 2:
            raise InputError(f"--nested needs at least 2 outer folds, got {folds}")
        spec["folds"] = folds
        check_outer_folds(cfg, folds, f"--nested {folds}")
    if repeats is not None:
        if not 1 <= repeats <= MAX_REPEATS:
            raise InputError(f"--nested-repeats must be 1 ... {MAX_REPEATS}, got {repeats}")
        spec["repeats"] = repeats
    return spec


def nested_from_config(cfg: RunConfig, outer_folds: int | None = None,
                       n_repeats: int | None = None, budget: Any = "config"):
    """Nested CV of the configured search (the whole search re-run per outer fold).

    The outer folds follow ``cv`` (stratified for classifiers, grouped when
    ``cv.group_column`` is set, shuffled with ``cv.seed``; repeat r with ``cv.seed + r``);
    the inner CV is ``cv`` itself. Folds, repeats and confidence come from the arguments,
    else the ``nested`` section, else 5 x 1 at 95 %.

    Parameters
    ----------
    cfg : RunConfig
    outer_folds, n_repeats : int, optional
        K and R of the R x K outer searches.
    budget : float or None, optional
        Search under this budget instead of the configuration's (a sweep's headline).

    Returns
    -------
    NestedEvaluation

    Examples
    --------
    Running it repeats the whole search per outer fold (seconds even on the demo), so
    only the argument check is shown here:

    >>> import tempfile
    >>> from featuresift.config import load_config
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cfg = load_config(write_demo(d, n_lots=60)[1])
    >>> nested_from_config(cfg, outer_folds=1)
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: --nested needs at least 2 outer folds, got 1
    """
    from featuresift.config.engine import cluster_of
    from featuresift.nested import nested_evaluation, outer_splitter

    spec = nested_spec(cfg, outer_folds, n_repeats) or dict(_DEFAULT)
    problem, kwargs = build_run(cfg)
    cv = cfg.cv
    outer = outer_splitter(spec["folds"], stratified=cfg.stratified,
                           grouped=cv.group_column is not None, seed=cv.seed)
    opts = dict(kwargs)
    strategy = opts.pop("strategy")
    if budget != "config":
        opts["budget"] = budget
    with cluster_of(cfg):  # engine.cluster: the fits run on a dask cluster
        return nested_evaluation(
            problem.X, problem.y, problem.estimator, costs=problem.cost_model,
            outer_cv=outer, n_repeats=spec["repeats"], confidence=spec["confidence"],
            inner_cv=_splitter(cfg), scoring=problem.scoring, groups=problem.groups,
            feature_names=problem.feature_names, strategy=strategy, **opts,
        )
