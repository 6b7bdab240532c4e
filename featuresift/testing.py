"""A contract every search strategy must pass, runnable on your own strategies.

The checks run a strategy through :func:`featuresift.run_search` on a model-free,
tabulated criterion (:class:`~featuresift.engine.evaluator.CriterionEvaluator`), so no model
is fitted and a whole contract run takes well under a second for the built-in
strategies. Each check raises :class:`AssertionError` with a message naming the
strategy, the check and what went wrong.

The contract
------------
``budget``
    The chosen subset is within budget (and non-empty) for budgets from the cheapest
    single feature to unlimited, with a panel in the cost table.
``must_never``
    Every evaluated subset contains ``must_include`` and avoids ``never_include``.
``limits``
    ``max_features`` holds for the chosen subset; ``max_evaluations`` is never
    exceeded; ``max_time_s=0`` stops the search cleanly (``success`` is False).
``seeds``
    The same seed gives the same answer, path and number of evaluations.
``history``
    A path is recorded, its subsets were all evaluated, and the counted criterion
    calls equal ``n_evaluations`` (every evaluation went through the evaluator).

Usage with pytest::

    import pytest
    from featuresift.testing import STRATEGY_CHECKS

    @pytest.mark.parametrize("check", STRATEGY_CHECKS, ids=lambda c: c.__name__)
    def test_my_strategy(check):
        check("cheapest-first")   # a registered name, a {"name", "options"} dict or an instance

or all at once: ``check_strategy("cheapest-first")``. A complete custom strategy is in
the docs of :mod:`featuresift.strategies.base`.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from itertools import combinations
from typing import Any

import numpy as np

from featuresift.costs import CostModel
from featuresift.engine.evaluator import CriterionEvaluator
from featuresift.result import SearchResult
from featuresift.search import run_search
from featuresift.strategies.base import SearchStrategy, make_strategy

__all__ = [
    "contract_problem",
    "check_budget",
    "check_must_never",
    "check_limits",
    "check_seeds",
    "check_history",
    "STRATEGY_CHECKS",
    "check_strategy",
]

StrategySpec = str | dict | SearchStrategy


def contract_problem(
    n_features: int = 8, seed: int = 0
) -> tuple[Callable[[tuple[int, ...]], float], CostModel]:
    """A tabulated criterion with interactions and a panelled cost model.

    The criterion is ``sum(weights) + sum(pair bonuses) - 0.05 * size`` with seeded
    random weights in [0, 1) and pair bonuses in [-0.3, 0.6) for a few pairs, so that
    some features pay off only together. Features ``f5``..``f7`` (when present) form a
    panel priced 4; the others cost 1, 2 or 3.

    Returns
    -------
    criterion : callable
        ``criterion(subset) -> float`` for a sorted tuple of column indices.
    cost_model : CostModel

    Examples
    --------
    >>> crit, costs = contract_problem(6)
    >>> costs.cost([0, 5]) == costs.cost([0]) + 4.0
    True
    """
    rng = np.random.default_rng(seed)
    weights = rng.random(n_features)
    pairs = {
        pair: float(rng.uniform(-0.3, 0.6))
        for pair in combinations(range(n_features), 2)
        if rng.random() < 0.3
    }

    def criterion(subset: tuple[int, ...]) -> float:
        s = set(subset)
        bonus = sum(v for (i, j), v in pairs.items() if i in s and j in s)
        return float(weights[list(subset)].sum()) + bonus - 0.05 * len(subset)

    names = [f"f{i}" for i in range(n_features)]
    panel = names[5:8]
    prices = {n: float(1 + i % 3) for i, n in enumerate(names) if n not in panel}
    panels = {"panel": (4.0, panel)} if panel else None
    return criterion, CostModel(names, prices, panels=panels)


def _run(spec: StrategySpec, **kwargs: Any) -> tuple[SearchResult, CriterionEvaluator]:
    criterion, costs = contract_problem(kwargs.pop("n_features", 8))
    calls = {"n": 0}

    def counted(subset: tuple[int, ...]) -> float:
        calls["n"] += 1
        return criterion(subset)

    evaluator = CriterionEvaluator(counted, costs.n_features, list(costs.feature_names))
    evaluator.contract_calls = calls  # type: ignore[attr-defined]
    strategy = make_strategy(spec) if not isinstance(spec, SearchStrategy) else spec
    # The contract is about the strategy itself: its raw answer, without the references,
    # the default pick rule or the noise guard of a full run.
    kwargs = {"references": False, "pick": "best", "guard": "off", **kwargs}
    result = run_search(evaluator, strategy, costs=costs, **kwargs)
    return result, evaluator


def _label(spec: StrategySpec) -> str:
    if isinstance(spec, SearchStrategy):
        return spec.name
    if isinstance(spec, dict):
        return str(spec.get("name"))
    return str(spec)


def check_budget(spec: StrategySpec) -> None:
    """The chosen subset is non-empty and within budget, for cheap to unlimited budgets.

    Examples
    --------
    A strategy that records every column at once never finds a subset within a tight budget:

    >>> check_budget("forward")
    >>> from featuresift.strategies.base import SearchStrategy
    >>> class Everything(SearchStrategy):
    ...     name = "everything-doc-example"
    ...     def run(self, space):
    ...         space.record("add", space.candidates)
    >>> check_budget(Everything())  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    AssertionError: strategy 'everything-doc-example', budget 1.0: nothing selected (...)
    """
    _, costs = contract_problem()
    for budget in (1.0, 3.0, 5.5, 9.0, None):
        result, _ = _run(spec, budget=budget, seed=0)
        where = f"strategy {_label(spec)!r}, budget {budget}"
        assert result.selected, f"{where}: nothing selected ({result.stop_reason})"
        assert math.isclose(result.cost, costs.cost(result.support)), f"{where}: wrong cost"
        assert costs.is_feasible(result.support, budget), (
            f"{where}: chosen subset {result.selected} costs {result.cost:g}"
        )


def check_must_never(spec: StrategySpec) -> None:
    """Every evaluated subset contains must_include and avoids never_include.

    Examples
    --------
    >>> check_must_never("forward")
    >>> from featuresift.strategies.base import SearchStrategy
    >>> class FirstColumn(SearchStrategy):
    ...     name = "first-column-doc-example"
    ...     def run(self, space):
    ...         space.record("add", [0])
    >>> check_must_never(FirstColumn())
    Traceback (most recent call last):
    ...
    AssertionError: strategy 'first-column-doc-example': evaluated (0,) without must_include
    """
    must, never = {1}, {0, 6}
    result, evaluator = _run(
        spec, budget=7.0, must_include=["f1"], never_include=["f0", "f6"], seed=1
    )
    where = f"strategy {_label(spec)!r}"
    # What was evaluated first: a strategy that fits a forbidden subset is wrong even
    # when its final answer happens to be allowed.
    for ev in evaluator.history:
        assert must <= set(ev.subset), f"{where}: evaluated {ev.subset} without must_include"
        assert not (never & set(ev.subset)), f"{where}: evaluated {ev.subset} with never_include"
    assert must <= set(result.support), f"{where}: must_include missing from the answer"


def check_limits(spec: StrategySpec) -> None:
    """max_features, max_evaluations and max_time_s are honoured.

    Examples
    --------
    >>> check_limits("backward")
    >>> from featuresift.strategies.base import SearchStrategy
    >>> class Triple(SearchStrategy):
    ...     name = "triple-doc-example"
    ...     def run(self, space):
    ...         space.record("add", [0, 1, 2])
    >>> check_limits(Triple())
    Traceback (most recent call last):
    ...
    AssertionError: strategy 'triple-doc-example': max_features=2 gave []
    """
    where = f"strategy {_label(spec)!r}"
    result, _ = _run(spec, max_features=2, seed=0)
    assert 0 < len(result.support) <= 2, f"{where}: max_features=2 gave {result.selected}"
    result, evaluator = _run(spec, max_evaluations=5, seed=0)
    assert result.n_evaluations <= 5 and evaluator.n_evaluations <= 5, (
        f"{where}: max_evaluations=5 but {evaluator.n_evaluations} subsets evaluated"
    )
    result, _ = _run(spec, max_time_s=0.0, seed=0)
    assert not result.success, f"{where}: max_time_s=0 did not stop the search"


def check_seeds(spec: StrategySpec) -> None:
    """The same seed reproduces the answer, the path and the evaluation count.

    Examples
    --------
    >>> check_seeds({"name": "annealing", "options": {"n_steps": 10}})
    >>> from featuresift.strategies.base import SearchStrategy
    >>> class Drifting(SearchStrategy):
    ...     name = "drifting-doc-example"
    ...     n_runs = 0
    ...     def run(self, space):
    ...         Drifting.n_runs += 1
    ...         space.record("add", [Drifting.n_runs])
    >>> check_seeds(Drifting())  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    AssertionError: strategy 'drifting-doc-example': same seed, answers ['f1'] vs ...
    """
    where = f"strategy {_label(spec)!r}"
    runs = [_run(spec, budget=6.0, seed=7)[0] for _ in range(2)]
    a, b = runs
    assert a.selected == b.selected, f"{where}: same seed, answers {a.selected} vs {b.selected}"
    assert [r.features for r in a.path] == [r.features for r in b.path], (
        f"{where}: same seed, different paths"
    )
    assert a.n_evaluations == b.n_evaluations, f"{where}: same seed, different counts"


def check_history(spec: StrategySpec) -> None:
    """A path is recorded, its subsets were evaluated, and every evaluation was counted.

    Examples
    --------
    >>> check_history("forward")
    >>> from featuresift.strategies.base import SearchStrategy
    >>> class Silent(SearchStrategy):
    ...     name = "silent-doc-example"
    ...     def run(self, space):
    ...         space.choose(space.best_of(space.evaluate([[1]])).subset)
    >>> check_history(Silent())
    Traceback (most recent call last):
    ...
    AssertionError: strategy 'silent-doc-example': no path recorded
    """
    where = f"strategy {_label(spec)!r}"
    result, evaluator = _run(spec, budget=6.0, seed=0)
    assert result.path, f"{where}: no path recorded"
    names = evaluator.feature_names
    for row in result.path:
        cols = [names.index(n) for n in row.features]
        assert evaluator.lookup(cols) is not None, f"{where}: path step {row.step} not evaluated"
    calls = evaluator.contract_calls["n"]  # type: ignore[attr-defined]
    assert calls == result.n_evaluations == evaluator.n_evaluations, (
        f"{where}: {calls} criterion calls, {result.n_evaluations} evaluations reported"
    )


STRATEGY_CHECKS: tuple[Callable[[StrategySpec], None], ...] = (
    check_budget,
    check_must_never,
    check_limits,
    check_seeds,
    check_history,
)
"""Every contract check; each takes a strategy name, spec dict or instance."""


def check_strategy(spec: StrategySpec) -> None:
    """Run every contract check on a strategy; raises AssertionError on the first failure.

    Examples
    --------
    >>> check_strategy("forward")
    >>> check_strategy({"name": "annealing", "options": {"n_steps": 10}})
    """
    for check in STRATEGY_CHECKS:
        check(spec)
