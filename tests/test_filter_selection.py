"""Model-free budgeted greedy selection, the cost-weighted L1 path and the hand-off to wrappers."""

import numpy as np
import pytest

from featuresift import CostModel, SelectionProblem, run_search
from featuresift.errors import InputError
from featuresift.filters import (
    FilterOrderSearch,
    budgeted_greedy,
    cost_weighted_l1_path,
    mrmr,
    relevance_scores,
)

RAW = {"references": False, "pick": "best", "guard": "off"}  # the strategy's own answer

def test_gain_per_cost_trap_returns_the_item_worth_ten():
    # Failure mode of benefit/cost greedy described by Leskovec et al. (2007), "Cost-effective
    # outbreak detection in networks", KDD; fixture computed for this test: budget 10,
    # a = (value 0.2, cost 0.1), b = (value 10, cost 10). Ratio-greedy alone gets 0.2.
    cm = CostModel(["a", "b"], {"a": 0.1, "b": 10.0})
    X = np.zeros((4, 2))
    sel = budgeted_greedy(X, costs=cm, budget=10.0, relevance=[0.2, 10.0])
    assert sel.selected == ["b"] and sel.value == 10.0 and sel.rule == "gain"
    assert sel.runs["ratio"]["order"] == ["a"] and sel.runs["ratio"]["value"] == 0.2
    ratio_only = budgeted_greedy(X, costs=cm, budget=10.0, relevance=[0.2, 10.0],
                                 cost_rule="ratio")
    assert ratio_only.selected == ["a"]


def test_per_cost_run_wins_when_cheap_items_add_up():
    # Budget 10: c alone (9, cost 10) vs a + b (6 + 6, cost 5 + 5).
    cm = CostModel(["a", "b", "c"], {"a": 5.0, "b": 5.0, "c": 10.0})
    sel = budgeted_greedy(np.zeros((4, 3)), costs=cm, budget=10.0,
                          relevance=[6.0, 6.0, 9.0])
    assert sel.rule == "ratio" and sorted(sel.selected) == ["a", "b"] and sel.value == 12.0
    assert sel.runs["gain"]["order"] == ["c"]


def _informative(n=300, seed=0):
    rng = np.random.default_rng(seed)
    y = rng.integers(0, 2, size=n)
    signal = y + 0.6 * rng.normal(size=n)
    other = y + 0.9 * rng.normal(size=n)
    noise = rng.normal(size=(n, 3))
    return np.column_stack([signal, signal.copy(), other, noise]), y


@pytest.mark.parametrize("relevance,redundancy", [
    ("pearson", "max_abs_corr"), ("pearson", "mean_abs_corr"),
    ({"name": "mutual_info", "estimator": "plugin"}, "mutual_info")])
def test_duplicated_informative_column_is_taken_once(relevance, redundancy):
    X, y = _informative()
    sel = budgeted_greedy(X, y, relevance=relevance, redundancy=redundancy, n_features=3)
    assert len({0, 1} & set(sel.order)) == 1
    assert sel.order[:2] in ([0, 2], [1, 2])


def test_mrmr_with_duplicated_column_takes_one_copy():
    X, y = _informative(seed=1)
    sel = mrmr(X, y, 2)
    assert len({0, 1} & set(sel.order)) == 1


def test_xor_inputs_have_zero_relevance_so_greedy_buys_nothing():
    # XOR example (exact, from the definition of mutual information): each input alone is
    # independent of the class, so a
    # relevance-driven filter sees nothing to buy; only a wrapper evaluating the pair can.
    X = np.array([[0, 0], [0, 1], [1, 0], [1, 1]] * 4, float)
    z = X[:, 0].astype(int) ^ X[:, 1].astype(int)
    sel = budgeted_greedy(X, z, relevance="mutual_info")
    assert sel.relevance.tolist() == [0.0, 0.0]
    assert sel.selected == [] and "gain above 0" in sel.stop_reason
    forced = mrmr(X, z, 1, keep_gains=True)
    assert forced.candidate_gains[0].tolist() == [0.0, 0.0]


def test_panel_members_become_free_and_budget_holds():
    names = ["p1", "p2", "p3", "solo", "cheap"]
    cm = CostModel(names, {"solo": 4.0, "cheap": 1.0}, panels={"lab": (5.0, ["p1", "p2", "p3"])})
    rel = np.array([3.0, 2.0, 1.5, 3.5, 0.5])
    X = np.random.default_rng(0).normal(size=(50, 5))
    sel = budgeted_greedy(X, costs=cm, budget=9.0, relevance=rel, weight=0.0)
    assert sel.cost == cm.cost(sel.order) <= 9.0
    assert {"p1", "p2", "p3"} <= set(sel.selected)
    assert [s.marginal_cost for s in sel.steps if s.feature in ("p2", "p3")] == [0.0, 0.0]
    assert sel.steps[-1].total_cost == pytest.approx(sel.cost)


def test_must_and_never_include_and_determinism():
    X, y = _informative(seed=2)
    kw = dict(relevance="anova_f", n_features=3, must_include=["x4"], never_include=[0])
    a = budgeted_greedy(X, y, **kw)
    b = budgeted_greedy(X, y, **kw)
    assert a.order[0] == 4 and 0 not in a.order and a.order == b.order
    assert a.search_options("candidates")["never_include"] == [
        n for n in a.feature_names if n not in a.selected]
    assert a.search_options("start", top=2) == {"must_include": a.selected[:2]}
    with pytest.raises(InputError, match="both in must_include and never_include"):
        budgeted_greedy(X, y, must_include=[0], never_include=[0])


def test_greedy_input_errors():
    X, y = _informative()
    with pytest.raises(InputError, match="form must be one of"):
        budgeted_greedy(X, y, form="ratio")
    with pytest.raises(InputError, match="precomputed relevance has shape"):
        budgeted_greedy(X, relevance=[1.0, 2.0])
    with pytest.raises(InputError, match="must_include features cost"):
        budgeted_greedy(X, y, budget=0.5, must_include=[0])


def test_greedy_result_frame_lists_steps():
    X, y = _informative()
    sel = budgeted_greedy(X, y, relevance="anova_f", n_features=2)
    frame = sel.frame()
    assert frame["feature"].tolist() == sel.selected
    rel = relevance_scores(X, y, "anova_f").scores
    assert frame["relevance"].iloc[0] == pytest.approx(rel.max())


# ------------------------------------------------------------------ L1 path
def test_l1_path_uniform_costs_follow_the_lasso_path():
    from sklearn.linear_model import lasso_path

    rng = np.random.default_rng(3)
    X = rng.normal(size=(150, 6))
    y = 3 * X[:, 4] + 2 * X[:, 1] + 1 * X[:, 0] + 0.5 * rng.normal(size=150)
    path = cost_weighted_l1_path(X, y, n_steps=60)
    # scikit-learn reference on standardised columns with the same alpha grid.
    Z = (X - X.mean(0)) / X.std(0)
    _, coefs, _ = lasso_path(Z, y - y.mean(), alphas=path.penalties)
    first = [int(np.argmax(np.abs(coefs[j]) > 1e-12)) for j in range(6)]
    assert path.entry_step.tolist() == first
    assert path.order[:3] == [4, 1, 0]


def test_l1_path_expensive_measurement_needs_more_evidence():
    rng = np.random.default_rng(4)
    X = rng.normal(size=(200, 3))
    y = 2 * X[:, 0] + 1.5 * X[:, 1] + 0.3 * rng.normal(size=200)
    cheap = cost_weighted_l1_path(X, y, CostModel(["a", "b", "c"], {"a": 1, "b": 1, "c": 1}))
    dear = cost_weighted_l1_path(X, y, CostModel(["a", "b", "c"], {"a": 4, "b": 1, "c": 1}))
    assert cheap.order_names[:2] == ["a", "b"]
    assert dear.order_names[:2] == ["b", "a"]
    cm = CostModel(["a", "b", "c"], {"a": 4, "b": 1, "c": 1})
    assert dear.starting_subset(cm, budget=5.0) == [1, 0]
    assert dear.starting_subset(cm, budget=4.5) == [1, 2]  # a no longer fits: skipped


def test_l1_path_classification_one_vs_rest():
    from sklearn.datasets import load_iris

    X, y = load_iris(return_X_y=True)
    path = cost_weighted_l1_path(X, y, n_steps=20)
    assert path.task == "classification"
    assert path.order[0] in (2, 3)
    assert path.entry_strength[path.order[0]] == 1.0


def test_l1_path_rejects_missing_values():
    X = np.array([[1.0, np.nan], [2.0, 1.0], [3.0, 0.0]])
    with pytest.raises(InputError, match="contains NaN"):
        cost_weighted_l1_path(X, [1.0, 2.0, 3.0])


# ------------------------------------------------------- hand-off to wrappers
def test_filter_order_strategy_evaluates_prefixes_in_one_batch():
    from sklearn.linear_model import LogisticRegression

    X, y = _informative(n=200, seed=5)
    sel = mrmr(X, y, 4)
    prob = SelectionProblem(X, y, LogisticRegression(), cv=3)
    res = run_search(prob, "filter-order", **RAW, order=sel.selected)
    assert res.n_evaluations == 4
    assert set(res.selected) <= set(sel.selected)
    assert [r.feature for r in res.path] == sel.selected
    # Budget-aware: a feature that no longer fits is skipped.
    cm = CostModel(prob.feature_names, {n: (5.0 if n == sel.selected[1] else 1.0)
                                        for n in prob.feature_names})
    prob2 = SelectionProblem(X, y, LogisticRegression(), costs=cm, cv=3)
    res2 = run_search(prob2, "filter-order", **RAW, order=sel.selected, budget=3.0)
    assert sel.selected[1] not in [r.feature for r in res2.path]
    assert res2.cost <= 3.0
    with pytest.raises(InputError, match="non-empty list"):
        FilterOrderSearch(order=[])


def test_greedy_candidates_restrict_a_wrapper_search():
    from sklearn.linear_model import LogisticRegression

    X, y = _informative(n=200, seed=6)
    sel = budgeted_greedy(X, y, relevance="anova_f", n_features=3)
    prob = SelectionProblem(X, y, LogisticRegression(), cv=3)
    res = run_search(prob, "forward", **RAW, n_features=2, **sel.search_options())
    assert set(res.selected) <= set(sel.selected)


def test_filter_selection_to_dict_is_json_ready():
    import json

    X, y = _informative()
    sel = budgeted_greedy(X, y, relevance="pearson", n_features=2, must_include=[5])
    d = json.loads(json.dumps(sel.to_dict(), allow_nan=False))
    assert d["selected"] == sel.selected and d["steps"][0]["gain"] is None  # must_include
    assert d["runs"]["gain"]["order"] == sel.runs["gain"]["order"]
