"""Annealing, genetic and exhaustive search; budget, limits and seeds for every strategy."""

from __future__ import annotations

import math
from functools import partial
from itertools import combinations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from joblib import parallel_config
from scipy import stats
from sklearn.datasets import load_iris
from sklearn.naive_bayes import GaussianNB

from featuresift import (
    CostModel,
    CriterionEvaluator,
    InputError,
    SelectionProblem,
    run_search,
)
from featuresift.engine.evaluator import BaseEvaluator
from featuresift.engine.records import Evaluation
from featuresift.strategies import STRATEGIES, SearchSpace, SimulatedAnnealing
from featuresift.strategies.annealing import neighbours
from featuresift.strategies.exhaustive import allowed_subsets
from featuresift.strategies.genetic import marginal_estimates, repair_by_value

# These tests study the strategies' own answers: no references, best pick, no guard.
run_search = partial(run_search, references=False, pick="best", guard="off")

FAST = {
    "annealing": {"n_steps": 10, "n_neighbours": 4, "n_restarts": 1},
    "genetic": {"n_individuals": 8, "n_generations": 6, "patience": 3},
}
ALLOWED_ONLY = ("forward", "floating-forward", "annealing", "genetic", "exhaustive")


def _table_criterion(n: int, seed: int):
    rng = np.random.default_rng(seed)
    values = {s: float(rng.random()) for k in range(n + 1) for s in combinations(range(n), k)}
    return lambda s: values[s]


def _names(n: int) -> list[str]:
    return [f"x{i}" for i in range(n)]


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    prices=st.lists(st.integers(0, 6), min_size=6, max_size=6),
    panel_price=st.integers(1, 8),
    budget_frac=st.floats(0.0, 1.0),
    seed=st.integers(0, 2**16),
)
def test_budget_never_exceeded_by_any_strategy(prices, panel_price, budget_frac, seed):
    names = _names(6)
    costs = CostModel(names, {n: float(p) for n, p in zip(names[:4], prices)},
                      panels={"p": (float(panel_price), names[4:])})
    cheapest = costs.cheapest_feature_cost()
    total = costs.cost(range(6))
    budget = cheapest + budget_frac * (total - cheapest)
    crit = _table_criterion(6, seed)
    for name in sorted(STRATEGIES):
        if name not in ("forward", "backward", "floating-forward", "floating-backward",
                        "annealing", "genetic", "exhaustive"):
            continue
        ev = CriterionEvaluator(crit, 6, names)
        res = run_search(ev, name, costs=costs, budget=budget, seed=seed,
                         **FAST.get(name, {}))
        assert costs.is_feasible(res.support, budget), (name, res.selected, res.cost, budget)
        if name in ALLOWED_ONLY:
            # These never even evaluate a subset over the budget.
            assert all(costs.is_feasible(e.subset, budget) for e in ev.history), name


@pytest.mark.parametrize("name", ["annealing", "genetic"])
def test_stochastic_strategies_reproduce_exactly(name):
    def run(seed):
        ev = CriterionEvaluator(_table_criterion(8, 1), 8, _names(8))
        res = run_search(ev, name, budget=5, seed=seed)
        return res.selected, [(r.action, r.features) for r in res.path], res.n_evaluations

    assert run(4) == run(4)


def test_same_answer_whatever_n_jobs():
    X, y = load_iris(return_X_y=True)
    problem = SelectionProblem(X, y, GaussianNB(), cv=3)
    a = run_search(problem, "annealing", n_jobs=1, seed=2, n_steps=6, n_restarts=0)
    # Threads keep the test fast (no worker start-up); the batches are split the same way.
    with parallel_config(backend="threading"):
        b = run_search(problem, "annealing", n_jobs=2, seed=2, n_steps=6, n_restarts=0)
    assert a.selected == b.selected
    assert [r.features for r in a.path] == [r.features for r in b.path]
    assert a.fold_scores == b.fold_scores


def test_cheap_pair_beats_expensive_test_where_forward_fails():
    # An expensive test E alone scores 1.0; two cheap tests score 1.2 only together.
    names = ["E", "c1", "c2", "n1", "n2"]
    costs = CostModel(names, {"E": 10.0, "c1": 2.0, "c2": 2.0, "n1": 1.0, "n2": 1.0})

    def crit(s):
        s = set(s)
        return 1.0 * (0 in s) + 1.2 * ({1, 2} <= s) + 0.01 * (3 in s) - 0.001 * len(s)

    fwd = run_search(CriterionEvaluator(crit, 5, names), "forward", costs=costs, budget=10)
    assert fwd.selected == ["E"]
    for name in ("annealing", "genetic", "exhaustive", "floating-backward"):
        res = run_search(CriterionEvaluator(crit, 5, names), name, costs=costs,
                         budget=10, seed=0)
        assert set(res.selected) >= {"c1", "c2"} and "E" not in res.selected, name


def test_exhaustive_equals_brute_force():
    names = _names(7)
    costs = CostModel(names, {n: float(1 + i % 3) for i, n in enumerate(names[:4])},
                      panels={"p": (2.5, names[4:])})
    crit = _table_criterion(7, 5)
    ev = CriterionEvaluator(crit, 7, names)
    res = run_search(ev, "exhaustive", costs=costs, budget=6, max_features=4,
                     must_include=["x2"], never_include=["x0"], batch_size=7)
    brute = [
        s for k in range(1, 8) for s in combinations(range(7), k)
        if costs.cost(s) <= 6 and len(s) <= 4 and 2 in s and 0 not in s
    ]
    best = max(brute, key=crit)
    assert tuple(res.support) == best
    assert {e.subset for e in ev.history} == set(brute)
    assert res.n_evaluations == len(brute)


def test_exhaustive_refuses_too_many_subsets():
    ev = CriterionEvaluator(len, 18, _names(18))
    # 2^18 - 1 = 262,143 non-empty subsets (computed), above a limit of 100,000.
    with pytest.raises(InputError, match=r"262,143 allowed subsets.*max_subsets=100,000"):
        run_search(ev, "exhaustive", max_subsets=100_000)
    with pytest.raises(InputError, match=r"18 candidate features.*max_candidates=16"):
        run_search(ev, "exhaustive", max_candidates=16)
    # A budget makes the same 18 candidates affordable: C(18,1) + C(18,2) = 171 subsets.
    res = run_search(ev, "exhaustive", budget=2, max_subsets=200)
    assert res.n_evaluations == 171
    assert res.stop_reason == "optimum over all 171 allowed subsets"
    # never_include narrows the candidates below the limit: allowed.
    space = SearchSpace(ev, CostModel.uniform(_names(18)), never_include=range(4),
                        max_features=1)
    assert len(list(allowed_subsets(space))) == 14


def test_neighbours_are_distinct_allowed_single_moves():
    names = _names(8)
    costs = CostModel(names, {n: 1.0 for n in names[:5]}, panels={"p": (2.0, names[5:])})
    space = SearchSpace(CriterionEvaluator(len, 8, names), costs, budget=4,
                        must_include=[0], never_include=[7], seed=3)
    current = (0, 1, 5)
    for _ in range(20):
        moves = neighbours(space, current, 6)
        subsets = [m[2] for m in moves]
        assert len(set(subsets)) == len(subsets) and current not in subsets
        for kind, feature, s in moves:
            assert space.is_allowed(s) and len(s) >= 1
            diff = set(s) ^ set(current)
            assert {"add": 1, "drop": 1, "swap": 2}[kind] == len(diff)
            assert feature in diff


def test_annealing_temperature_calibration():
    space = SearchSpace(CriterionEvaluator(len, 3), CostModel.uniform("abc"))
    cur, *batch = space.evaluate([[0, 1], [0], [1], [0, 1, 2], [2]])
    # Worsening moves by 1, 1, 0 (better one ignored): median 1, accepted with p = 0.5.
    t0 = SimulatedAnnealing(start_acceptance=0.5)._calibrate(cur, batch)
    assert t0 == pytest.approx(1 / math.log(2))
    assert math.exp(-1 / t0) == pytest.approx(0.5)
    assert SimulatedAnnealing(initial_temperature=3.0)._calibrate(cur, batch) == 3.0


def test_repair_drops_lowest_value_per_cost():
    names = _names(5)
    costs = CostModel(names, {"x0": 1.0, "x1": 4.0, "x2": 4.0},
                      panels={"p": (3.0, ["x3", "x4"])})
    space = SearchSpace(CriterionEvaluator(len, 5, names), costs, budget=5)
    est = np.array([0.1, 2.0, 0.8, 0.5, 0.5])
    # ratios: x0 0.1/1, x2 0.8/4 = 0.2, panel (0.5 + 0.5)/3, x1 0.5: x0, then x2, go.
    assert repair_by_value(space, {0, 1, 2}, est) == (1,)
    # The panel is one unit: both members go together when it is the worst value per cost.
    est = np.array([5.0, 5.0, 5.0, 0.1, 0.1])
    assert repair_by_value(space, {0, 1, 3, 4}, est) == (0, 1)


def test_marginal_estimates_match_group_means():
    names = _names(4)
    space = SearchSpace(CriterionEvaluator(_table_criterion(4, 2), 4, names),
                        CostModel.uniform(names))
    scored = space.evaluate([[0], [1, 2], [0, 3], [2, 3], [0, 1, 2]])
    values = np.array([s.value for s in scored])
    member = np.array([[f in s.subset for f in range(4)] for s in scored])
    est = marginal_estimates(space)
    for f in range(4):
        assert est[f] == pytest.approx(values[member[:, f]].mean() - values[~member[:, f]].mean())


def test_genetic_stops_on_stagnation_or_evaluation_limit():
    ev = CriterionEvaluator(_table_criterion(8, 9), 8, _names(8))
    res = run_search(ev, "genetic", patience=2, n_generations=50, seed=1)
    assert res.stop_reason == "no improvement in 2 generations" and res.success
    generations = [r for r in res.path if r.action == "generation"]
    assert 2 <= len(generations) < 50
    res = run_search(CriterionEvaluator(_table_criterion(8, 9), 8, _names(8)), "genetic",
                     max_evaluations=30)
    assert res.n_evaluations == 30 and not res.success and "evaluation limit" in res.stop_reason


class _FoldTable(BaseEvaluator):
    """Evaluator returning tabulated fold scores (no model)."""

    def __init__(self, folds):
        super().__init__(3)
        self.folds = folds

    def _evaluate_new(self, subsets):
        self.n_fits += len(subsets) * 5
        return [Evaluation(s, tuple(self.folds.get(s, (0.0,) * 5))) for s in subsets]


def test_one_standard_error_pick():
    folds = {
        (0,): (0.80, 0.82, 0.78, 0.81, 0.79),
        (1,): (0.70, 0.72, 0.69, 0.71, 0.70),
        (0, 1): (0.84, 0.80, 0.86, 0.78, 0.82),
        (0, 2): (0.88, 0.86, 0.87, 0.85, 0.89),
        (1, 2): (0.60, 0.61, 0.59, 0.60, 0.60),
        (2,): (0.86, 0.87, 0.865, 0.86, 0.87),
        (0, 1, 2): (0.86, 0.85, 0.88, 0.87, 0.84),
    }
    costs = CostModel(["a", "b", "c"], {"a": 5.0, "b": 1.0, "c": 2.0})
    best = run_search(_FoldTable(folds), "exhaustive", costs=costs)
    assert best.selected == ["a", "c"]
    picked = run_search(_FoldTable(folds), "exhaustive", costs=costs, pick="one-se")
    # Threshold: mean - standard error of the best (scipy.stats.sem, ddof=1).
    threshold = np.mean(folds[(0, 2)]) - stats.sem(folds[(0, 2)])
    close = [s for s, f in folds.items() if np.mean(f) >= threshold]
    assert tuple(picked.support) == min(close, key=costs.cost) == (2,)


@pytest.mark.parametrize("name", ["annealing", "genetic", "floating-forward", "exhaustive"])
def test_time_limit_stops_between_batches(name):
    def slow(s):
        import time

        time.sleep(0.002)
        return float(len(s))

    res = run_search(CriterionEvaluator(slow, 12, _names(12)), name, max_time_s=0.05,
                     seed=0)
    assert not res.success and "time limit" in res.stop_reason
    assert res.wall_time < 2.0
