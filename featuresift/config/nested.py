""":func:`nested_from_config`: nested CV of the configured search."""

from __future__ import annotations

from sklearn.model_selection import (
    GroupKFold,
    KFold,
    StratifiedKFold,
)

from featuresift.config.run import _splitter, build_run
from featuresift.config.schema import RunConfig
from featuresift.errors import InputError

__all__ = ["nested_from_config"]


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
    >>> from featuresift.config import load_config
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
