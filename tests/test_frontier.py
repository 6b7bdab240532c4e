"""Budget sweep: budgets respected, cache shared between budgets, efficiency flags."""

import numpy as np
import pytest
from sklearn.datasets import load_wine
from sklearn.naive_bayes import GaussianNB

from featuresift import CostModel, CriterionEvaluator, SelectionProblem
from featuresift.frontier import _efficient, budget_sweep, default_budgets


@pytest.fixture(scope="module")
def wine_problem():
    # scikit-learn's wine data (ships with scikit-learn); costs invented for the test.
    X, y = load_wine(return_X_y=True)
    names = [f"m{i}" for i in range(X.shape[1])]
    costs = {n: float(1 + i % 4) for i, n in enumerate(names) if i not in (10, 11, 12)}
    cm = CostModel(names, costs, panels={"panel": (6.0, ["m10", "m11", "m12"])}, unit="EUR")
    return SelectionProblem(X, y, GaussianNB(), cost_model=cm, cv=3, feature_names=names)


def test_sweep_respects_budgets_and_shares_fits(wine_problem, tmp_path):
    budgets = [2.0, 5.0, 9.0, None]
    fr = budget_sweep(wine_problem, budgets, "forward")
    for b, r in zip(budgets, fr.results):
        assert b is None or r.cost <= b + 1e-12
        assert r.cost == pytest.approx(wine_problem.cost_model.cost(r.support))
    # Each forward run re-visits the single-feature candidates of the previous one:
    # the shared evaluator must fit strictly less than the sum over the runs.
    assert fr.n_fits < fr.n_fits_without_cache
    assert fr.n_fits % len(wine_problem.splits) == 0
    # Larger budgets can only help a forward search that starts from the same first step.
    scores = [r.score_mean for r in fr.results]
    assert scores[-1] >= scores[0]
    files = fr.write(tmp_path / "sweep")
    names = sorted(p.name for p in files)
    assert "frontier.csv" in names and "frontier.json" in names
    frame = fr.to_frame()
    assert len(frame) == 4 and frame["efficient"].any()


def test_efficiency_flags_by_hand():
    costs = [1.0, 2.0, 2.0, 5.0]
    scores = [0.70, 0.80, 0.75, 0.80]
    # (2, 0.75) is dominated by (2, 0.80); (5, 0.80) by the cheaper (2, 0.80).
    assert _efficient(costs, scores) == [True, True, False, False]


def test_default_budgets_cover_range():
    cm = CostModel(["a", "b", "c"], {"a": 0.5}, panels={"p": (10.0, ["b", "c"])})
    b = default_budgets(cm, n=5)
    assert b[0] == 0.5 and b[-1] is None
    assert all(x < y for x, y in zip(b[:-2], b[1:-1]))
    assert max(x for x in b if x is not None) < cm.cost([0, 1, 2])


def test_sweep_on_criterion_evaluator_is_exact():
    # Additive criterion: with a budget the forward search picks the best affordable set.
    w = np.array([5.0, 4.0, 3.0, 1.0])
    ev = CriterionEvaluator(lambda s: float(w[list(s)].sum()), 4, ["a", "b", "c", "d"])
    cm = CostModel(["a", "b", "c", "d"], {"a": 3, "b": 1, "c": 1, "d": 1})
    from featuresift.search import run_search

    r = run_search(ev, "forward", cost_model=cm, budget=2.0)
    assert r.selected == ["b", "c"]
