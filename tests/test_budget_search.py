"""Budget-aware search: the score-only trap, backward with a panel, the default strategy.

Expected answers are hand-worked from additive criteria (stated beside each case) or
checked against brute-force enumeration of every subset with itertools.
"""

from __future__ import annotations

import math
from itertools import combinations

import numpy as np
import pytest

from featuresift import CostModel, CriterionEvaluator, run_search
from featuresift.strategies.base import SearchSpace
from featuresift.strategies.greedy_swap import neighbourhood


def _additive(weights: dict[int, float]):
    return lambda subset: math.fsum(weights.get(i, 0.0) for i in subset)


def _brute_force(criterion, costs: CostModel, budget):
    """Best non-empty subset within the budget, by enumeration (ties: lower cost)."""
    n = costs.n_features
    subsets = [s for k in range(1, n + 1) for s in combinations(range(n), k)
               if costs.is_feasible(s, budget)]
    return max(subsets, key=lambda s: (criterion(s), -costs.cost(s)))


# Hand-worked budget trap. Budget 4 EUR; a costs 4 and scores 5; b and c cost 1 and
# score 3 each; d costs 2 and scores 2.5 (additive). Score-only greedy takes a (the best
# single) and then nothing fits: 5. The optimum is b + c + d = 8.5 for exactly 4 EUR.
TRAP_NAMES = ["a", "b", "c", "d"]
TRAP_COSTS = CostModel(TRAP_NAMES, {"a": 4.0, "b": 1.0, "c": 1.0, "d": 2.0}, unit="EUR")
TRAP = _additive({0: 5.0, 1: 3.0, 2: 3.0, 3: 2.5})


def _trap_run(strategy, **options):
    ev = CriterionEvaluator(TRAP, 4, TRAP_NAMES)
    return run_search(ev, strategy, costs=TRAP_COSTS, budget=4.0, pick="best", **options)


def test_score_only_greedy_falls_into_the_budget_trap():
    res = _trap_run("forward", cost_rule="gain")
    assert res.selected == ["a"] and res.score_mean == 5.0


@pytest.mark.parametrize(("strategy", "options"), [
    ("forward", {}),                                   # both paths, better kept
    ("forward", {"cost_rule": "ratio"}),
    ("greedy-swap", {}),                               # 8 allowed subsets: enumerated
    ("greedy-swap", {"exhaustive_limit": 0}),          # greedy + local search
    ("backward", {}),
])
def test_budget_aware_search_escapes_the_trap(strategy, options):
    assert _brute_force(TRAP, TRAP_COSTS, 4.0) == (1, 2, 3)
    res = _trap_run(strategy, **options)
    assert res.selected == ["b", "c", "d"] and res.score_mean == 8.5 and res.cost == 4.0


def test_gain_per_cost_path_is_trapped_but_the_best_single_item_is_kept():
    # Leskovec et al. (2007) failure mode, fixture computed in CHECKS (budget 10; item a
    # value 0.2 for 0.1, item b value 10 for 10): the ratio path takes a, then b no longer
    # fits. Every single item was evaluated on the first step, so the answer is b.
    costs = CostModel(["a", "b"], {"a": 0.1, "b": 10.0})
    ev = CriterionEvaluator(_additive({0: 0.2, 1: 10.0}), 2, ["a", "b"])
    res = run_search(ev, "forward", costs=costs, budget=10.0, cost_rule="ratio", pick="best")
    assert [row.features for row in res.path] == [("a",)]
    assert res.selected == ["b"] and res.score_mean == 10.0


def test_backward_under_a_tight_budget_removes_a_panel_as_one_unit_then_refills():
    # Hand-worked. x 1 EUR (score 2), y 2 EUR (3), z 1 EUR (0.5), panel P = {p, q} 3 EUR
    # (1 + 1); additive; everything costs 7, budget 4 (excess 3).
    # Step 1, saving per unit of score lost (savings counted up to the excess):
    #   z 1/0.5 = 2 (best) > P 3/2 = 1.5 > y 2/3 > x 1/2  -> remove z (excess 2)
    #   P min(3, 2)/2 = 1 > y 2/3 > x 1/2                 -> remove the panel (cost 3)
    # Step 2 (refill): z fits again -> {x, y, z}, 4 EUR, 5.5: the brute-force optimum.
    names = ["x", "y", "z", "p", "q"]
    costs = CostModel(names, {"x": 1.0, "y": 2.0, "z": 1.0}, panels={"P": (3.0, ["p", "q"])})
    crit = _additive({0: 2.0, 1: 3.0, 2: 0.5, 3: 1.0, 4: 1.0})
    assert _brute_force(crit, costs, 4.0) == (0, 1, 2)
    res = run_search(CriterionEvaluator(crit, 5, names), "backward", costs=costs, budget=4.0,
                     cost_rule="ratio", pick="best")
    steps = [(row.action, row.feature, row.cost) for row in res.path]
    assert steps[:4] == [("start", None, 7.0), ("remove", "z", 6.0),
                         ("remove-panel", None, 3.0), ("add", "z", 4.0)]
    assert res.selected == ["x", "y", "z"] and res.cost == 4.0 and res.score_mean == 5.5
    # The default (both rules) ends at the same answer and never above the budget.
    res = run_search(CriterionEvaluator(crit, 5, names), "backward", costs=costs, budget=4.0,
                     pick="best")
    assert res.selected == ["x", "y", "z"]


# Hand-worked double swap. Four tests at 1 EUR, budget 2 EUR (two tests). Values:
# a, b alone 3; a + b 10; c + d 11 (the optimum); b + c and a + d 9; every other
# subset 1 or less. Greedy takes a, then b (10). From a + b no single add (none
# affordable), remove (3) or swap (9 at most) improves: a local optimum for single
# moves. Its two best neighbours, b + c (a -> c) and a + d (b -> d), done at once give
# c + d.
PAIR_VALUES = {(0,): 3.0, (1,): 3.0, (2,): 1.0, (3,): 1.0, (0, 1): 10.0, (2, 3): 11.0,
               (1, 2): 9.0, (0, 3): 9.0, (0, 2): 1.0, (1, 3): 1.0}


@pytest.mark.parametrize(("pair_moves", "expected"), [(0, ["a", "b"]), (4, ["c", "d"])])
def test_paired_moves_reach_an_optimum_two_swaps_away(pair_moves, expected):
    def crit(s):
        return PAIR_VALUES.get(s, 0.0)

    costs = CostModel(list("abcd"), dict.fromkeys("abcd", 1.0), unit="EUR")
    assert _brute_force(crit, costs, 2.0) == (2, 3)
    ev = CriterionEvaluator(crit, 4, list("abcd"))
    res = run_search(ev, "greedy-swap", costs=costs, budget=2.0, pick="best",
                     exhaustive_limit=0, pair_moves=pair_moves)
    assert res.selected == expected
    assert "paired move" in res.stop_reason
    # Restricting swaps to the 2 most promising removals and additions still finds it.
    ev = CriterionEvaluator(crit, 4, list("abcd"))
    res = run_search(ev, "greedy-swap", costs=costs, budget=2.0, pick="best",
                     exhaustive_limit=0, swap_candidates=2)
    assert res.selected == ["c", "d"]


def _random_problem(seed: int, n: int = 8):
    rng = np.random.default_rng(seed)
    names = [f"m{i}" for i in range(n)]
    w = rng.normal(0.5, 0.5, n)
    pairs = {p: rng.normal(0, 0.6) for p in combinations(range(n), 2) if rng.random() < 0.25}

    def crit(s):
        return float(w[list(s)].sum() + sum(v for (i, j), v in pairs.items()
                                             if i in s and j in s) - 0.1 * len(s))

    prices = {nm: float(p) for nm, p in zip(names[:5], rng.choice([0.0, 1.0, 2.0, 5.0], 5))}
    costs = CostModel(names, prices, panels={"panel": (4.0, names[5:])})
    return crit, costs, names


@pytest.mark.parametrize("seed", range(4))
def test_default_strategy_is_exact_when_enumerated_else_a_local_optimum(seed):
    crit, costs, names = _random_problem(seed)
    for budget in (2.0, 5.0, 9.0, None):
        ev = CriterionEvaluator(crit, len(names), names)
        res = run_search(ev, costs=costs, budget=budget, pick="best")   # default strategy
        assert res.strategy["name"] == "greedy-swap"
        assert costs.is_feasible(res.support, budget)
        space = SearchSpace(CriterionEvaluator(crit, len(names), names), costs, budget=budget)
        n_allowed = space.allowed_subsets().count()
        if n_allowed <= 64:  # the default exhaustive_limit
            # Enumerated: the brute-force optimum.
            assert res.score_mean == pytest.approx(crit(_brute_force(crit, costs, budget)))
            assert "optimum over all" in res.stop_reason
        else:
            # No add / remove / swap (or whole-panel) neighbour is better.
            for other in neighbourhood(space, tuple(res.support)):
                assert crit(other) <= res.score_mean + 1e-12
    # Deterministic: no random numbers, so another seed gives the same answer.
    answers = {tuple(run_search(CriterionEvaluator(crit, len(names), names), costs=costs,
                                budget=None, seed=s, pick="best").support) for s in (0, 7)}
    assert len(answers) == 1


@pytest.mark.parametrize("seed", range(5))
def test_floating_is_never_worse_than_its_plain_search(seed):
    crit, costs, names = _random_problem(100 + seed, n=9)
    for budget in (2.0, 4.0, 7.0, 11.0, None):
        got = {}
        for name in ("forward", "floating-forward", "backward", "floating-backward"):
            res = run_search(CriterionEvaluator(crit, len(names), names), name, costs=costs,
                             budget=budget, pick="best")
            got[name] = res.score_mean
        assert got["floating-forward"] >= got["forward"] - 1e-12, budget
        assert got["floating-backward"] >= got["backward"] - 1e-12, budget
