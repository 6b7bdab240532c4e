"""Sequential forward/backward selection: parity with scikit-learn, budget behaviour, ties."""

from __future__ import annotations

import math
from functools import partial

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.datasets import load_breast_cancer, load_wine
from sklearn.feature_selection import SequentialFeatureSelector
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from featuresift.costs import CostModel
from featuresift.engine.evaluator import CriterionEvaluator
from featuresift.problem import SelectionProblem
from featuresift.search import run_search as _run_search

# These tests study the strategies' own answers: no references, best pick, no guard.
run_search = partial(_run_search, references=False, pick="best", guard="off")

pytestmark = pytest.mark.usefixtures("single_blas_thread")


def _scaled_logistic(solver: str = "newton-cholesky"):
    return make_pipeline(StandardScaler(), LogisticRegression(solver=solver))


# ------------------------------------------------------- parity with scikit-learn


# Reference: scikit-learn's SequentialFeatureSelector, same estimator, same
# StratifiedKFold(5) splits, same scorer, on scikit-learn's breast-cancer and wine data.
# Without costs or budget the greedy searches must agree step for step. sklearn's backward
# step removes the feature whose removal scores best, ties going to the lowest column index
# (max() over a dict filled in column order, sklearn/feature_selection/_sequential.py);
# featuresift documents the same tie-break, so backward parity is exact too.
@pytest.mark.parametrize(
    ("loader", "solver", "direction", "scoring", "n_select"),
    [
        (load_breast_cancer, "liblinear", "forward", "roc_auc", 5),  # liblinear: binary only
        (load_wine, "newton-cholesky", "backward", "accuracy", 8),
    ],
)
def test_matches_sklearn_sequential_selector(loader, solver, direction, scoring, n_select):
    X, y = loader(return_X_y=True)
    cv = StratifiedKFold(5)
    reference = SequentialFeatureSelector(
        _scaled_logistic(solver), n_features_to_select=n_select, direction=direction, cv=cv,
        scoring=scoring,
    ).fit(X, y)
    problem = SelectionProblem(X, y, _scaled_logistic(solver), cv=cv, scoring=scoring)
    result = run_search(problem, direction, n_features=n_select)
    assert result.support == list(np.flatnonzero(reference.get_support()))
    assert len(result.support) == n_select


# ------------------------------------------------------------ budget behaviour


def _additive(weights: dict[int, float]):
    return lambda subset: math.fsum(weights.get(i, 0.0) for i in subset)


def test_forward_never_adds_a_feature_whose_marginal_cost_breaks_the_budget():
    # Hand-worked. Prices: a 1, d 3, e 0; panel P (b, c) 5. Budget 6.
    # Additive criterion: b 5, c 4, d 3.5, a 1, e 0.5.
    # Step 1 takes b (cost 5). Step 2: c costs nothing more (its panel is paid), d would
    # bring the total to 8 > 6, so c is taken. Then a (total 6), then e (marginal 0).
    # d, the third-best feature, is never affordable again.
    names = ["a", "b", "c", "d", "e"]
    cm = CostModel(names, {"a": 1.0, "d": 3.0, "e": 0.0}, panels={"P": (5.0, ["b", "c"])})
    ev = CriterionEvaluator(_additive({0: 1.0, 1: 5.0, 2: 4.0, 3: 3.5, 4: 0.5}), 5, names)
    result = run_search(ev, "forward", costs=cm, budget=6.0, cost_rule="gain")
    assert [row.feature for row in result.path] == ["b", "c", "a", "e"]
    assert result.selected == ["a", "b", "c", "e"]
    assert result.cost == 6.0
    assert all(row.cost <= 6.0 for row in result.path)
    # Forward selection never even evaluates a subset it could not afford.
    assert all(cm.is_feasible(e.subset, 6.0) for e in ev.history)
    assert not any(3 in e.subset for e in ev.history[4:])  # d dropped out after step 1


def test_backward_removes_until_feasible_then_stops_when_the_score_drops():
    # Hand-worked. p, q, t are interchangeable copies of one test (price 4 each), r and s
    # are cheap (1 each): total 14, budget 10. Criterion: 3 if any copy is present,
    # + 2 for r, + 1 for s.
    # Phase one: removing p loses nothing (ties broken towards the first column) -> cost 10,
    # feasible. Phase two: removing q still loses nothing -> cost 6. Every further removal
    # lowers the score, so the search stops at {t, r, s}.
    names = ["p", "q", "t", "r", "s"]
    cm = CostModel(names, {"p": 4.0, "q": 4.0, "t": 4.0, "r": 1.0, "s": 1.0})

    def criterion(subset):
        return 3.0 * bool({0, 1, 2} & set(subset)) + 2.0 * (3 in subset) + 1.0 * (4 in subset)

    ev = CriterionEvaluator(criterion, 5, names)
    result = run_search(ev, "backward", costs=cm, budget=10.0, tol=0.0)
    assert [(row.action, row.feature, row.cost) for row in result.path] == [
        ("start", None, 14.0),
        ("remove", "p", 10.0),
        ("remove", "q", 6.0),
    ]
    assert result.selected == ["t", "r", "s"]
    assert result.stop_reason.startswith("every removal lowers the objective")


def test_forward_tie_goes_to_the_cheaper_feature_then_to_the_first_column():
    # Documented tie-break: objective, then mean score, then lower cost, then fewer
    # features, then column order. All three single features score the same here.
    names = ["a", "b", "c"]
    flat = CriterionEvaluator(lambda s: float(len(s)), 3, names)
    cheaper_last = CostModel(names, {"a": 2.0, "b": 2.0, "c": 1.0})
    res = run_search(flat, "forward", costs=cheaper_last, n_features=1)
    assert res.selected == ["c"]  # equal score: the cheaper one wins over column order
    equal = CostModel.uniform(names)
    res = run_search(CriterionEvaluator(lambda s: float(len(s)), 3, names), "forward",
                     costs=equal, n_features=1)
    assert res.selected == ["a"]  # equal score and cost: the first column


def test_backward_tie_removes_the_first_column():
    # Same rule as scikit-learn's backward step (see the wine parity test above).
    names = ["a", "b", "c", "d"]
    ev = CriterionEvaluator(lambda s: 1.0 if 3 in s else 0.0, 4, names)
    res = run_search(ev, "backward", n_features=2)
    assert [row.feature for row in res.path[1:]] == ["a", "b"]
    assert res.selected == ["c", "d"]


# ------------------------------------------------- property: budget never exceeded


@st.composite
def _budget_problems(draw):
    n = draw(st.integers(2, 7))
    prices = draw(st.lists(
        st.one_of(st.just(0.0), st.floats(0.01, 20.0, allow_nan=False)), min_size=n, max_size=n,
    ))
    # Disjoint panels: each feature gets a panel label (or -1 for none).
    labels = draw(st.lists(st.integers(-1, 2), min_size=n, max_size=n))
    panel_prices = draw(st.lists(st.floats(0.0, 30.0, allow_nan=False), min_size=3, max_size=3))
    weights = draw(st.lists(st.floats(-5.0, 5.0, allow_nan=False), min_size=n, max_size=n))
    names = [f"f{i}" for i in range(n)]
    lone = {names[i]: prices[i] for i in range(n) if labels[i] < 0}
    panels = {
        f"P{k}": (panel_prices[k], [names[i] for i in range(n) if labels[i] == k])
        for k in range(3) if k in labels
    }
    cm = CostModel(names, lone, panels=panels)
    cheapest = cm.cheapest_feature_cost()
    total = cm.cost(names)
    budget = draw(st.floats(cheapest, max(cheapest, total), allow_nan=False))
    return names, cm, weights, budget


@settings(max_examples=60, deadline=None)
@given(problem=_budget_problems(), strategy=st.sampled_from(["forward", "backward"]))
def test_returned_subset_never_exceeds_the_budget(problem, strategy):
    names, cm, weights, budget = problem
    ev = CriterionEvaluator(_additive(dict(enumerate(weights))), len(names), names)
    result = run_search(ev, strategy, costs=cm, budget=budget)
    assert result.success
    assert cm.is_feasible(result.selected, budget)
    assert result.cost <= budget + 1e-9
    assert result.cost == cm.cost(result.selected)
    if strategy == "forward":
        assert all(cm.is_feasible(row.features, budget) for row in result.path)
