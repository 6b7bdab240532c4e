"""The answer side: baselines (empty set), score labels, pick rules, noise guard."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats
from sklearn.datasets import load_breast_cancer, load_diabetes
from sklearn.dummy import DummyClassifier, DummyRegressor
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.naive_bayes import GaussianNB
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.tree import DecisionTreeClassifier

from featuresift import CostModel, InputError, SelectionProblem, run_search
from featuresift.engine.evaluator import BaseEvaluator, CrossValidationEvaluator
from featuresift.engine.records import Evaluation
from featuresift.result import score_label
from featuresift.strategies import SearchSpace

pytestmark = pytest.mark.usefixtures("single_blas_thread")


def test_score_labels_name_the_kind():
    assert score_label("in-search") == "in-search estimate (optimistic)"
    assert score_label("nested", "r2") == "r2, nested estimate (honest)"
    with pytest.raises(ValueError, match="score kind"):
        score_label("honest")


@pytest.mark.parametrize("scoring", ["roc_auc", "accuracy", "neg_log_loss", None])
def test_empty_set_is_the_prior_only_classifier(scoring):
    X, y = load_breast_cancer(return_X_y=True)  # shipped with scikit-learn
    model = make_pipeline(StandardScaler(), LogisticRegression())
    problem = SelectionProblem(X[:, :4], y, model, cv=5, scoring=scoring)
    space = SearchSpace(CrossValidationEvaluator(problem), problem.cost_model)
    (empty,) = space.evaluate([()])
    # Reference: scikit-learn's DummyClassifier(strategy="prior") on the same folds.
    ref = cross_val_score(DummyClassifier(strategy="prior"), X[:, :4], y,
                          cv=problem.splits, scoring=scoring or "accuracy")
    np.testing.assert_allclose(empty.evaluation.fold_scores, ref, rtol=0, atol=1e-12)
    assert empty.cost == 0.0 and empty.subset == ()


@pytest.mark.parametrize("scoring", ["r2", "neg_mean_absolute_error"])
def test_empty_set_is_the_mean_for_regressors(scoring):
    X, y = load_diabetes(return_X_y=True)  # shipped with scikit-learn
    problem = SelectionProblem(X, y, Ridge(), cv=4, scoring=scoring)
    (empty,) = CrossValidationEvaluator(problem).evaluate([()])
    # Reference: DummyRegressor (the training-fold mean) on the same folds.
    ref = cross_val_score(DummyRegressor(), X, y, cv=problem.splits, scoring=scoring)
    np.testing.assert_allclose(empty.fold_scores, ref, rtol=0, atol=1e-9)


# --------------------------------------------------------------------------- helpers
class _FoldScores(BaseEvaluator):
    """Hand-made fold scores per subset (every subset gets the same number of folds)."""

    def __init__(self, table, n_features):
        super().__init__(n_features)
        self.table = table

    def _evaluate_new(self, subsets):
        self.n_fits += len(subsets)
        return [Evaluation(s, tuple(self.table[s])) for s in subsets]


def test_pick_rules_on_hand_made_fold_scores():
    table = {
        (): [0.50] * 5,
        (0,): [0.80, 0.81, 0.79, 0.80, 0.80],
        (1,): [0.86, 0.80, 0.84, 0.87, 0.83],  # the best mean, 0.84
        (2,): [0.83, 0.84, 0.82, 0.83, 0.83],  # 0.83: within one SE of the best
        (0, 1): [0.84, 0.83, 0.83, 0.84, 0.83],
        (0, 2): [0.82, 0.83, 0.82, 0.83, 0.82],
        (1, 2): [0.80] * 5,
        (0, 1, 2): [0.83, 0.84, 0.82, 0.85, 0.83],
    }
    costs = CostModel(["a", "b", "c"], {"a": 1.0, "b": 5.0, "c": 2.0})
    ev = _FoldScores(table, 3)
    # Reference: scipy.stats.sem (ddof=1) of the best subset's fold scores.
    sem = stats.sem(table[(1,)])
    assert np.mean(table[(2,)]) >= 0.84 - sem > np.mean(table[(0,)])  # the hand-made layout
    best = run_search(ev, "exhaustive", costs=costs, budget=6, pick="best")
    assert best.selected == ["b"] and best.pick["rule"] == "best"
    one_se = run_search(ev, "exhaustive", costs=costs, budget=6)  # the default rule
    assert one_se.selected == ["c"] and one_se.pick["rule"] == "one-se"
    assert one_se.pick["threshold"] == pytest.approx(0.84 - sem, abs=1e-12)
    assert one_se.pick["best"]["features"] == ["b"]
    assert one_se.pick["basis"] == "best evaluated" and "best found" in one_se.summary()
    # A stopping rule (n_features) names the strategy's own answer: the rule measures
    # from it, and the outputs say so rather than calling it the best found.
    stopped = run_search(ev, "forward", costs=costs, budget=6, n_features=2)
    assert stopped.pick["basis"] == "strategy's answer"
    assert "strategy's answer" in stopped.pick["description"]
    assert "strategy's" in stopped.summary() and "best found" not in stopped.summary()
    with pytest.warns(DeprecationWarning, match="pick: 'one_se' is deprecated"):
        older = run_search(ev, "exhaustive", costs=costs, budget=6, pick="one_se")
    assert older.selected == ["c"]  # the older spelling still works
    refs = one_se.references
    assert refs["nothing"]["features"] == [] and refs["free only"]["features"] == []
    assert refs["everything"]["allowed"] is False  # 8 > 6: a reference, never the answer
    assert one_se.to_dict()["score"]["kind"] == "in-search"
    with pytest.raises(InputError, match="pick: must be one of best, one-se"):
        run_search(ev, "exhaustive", costs=costs, pick="median")


def _lots(n=200, seed=0):
    """A bad-lot flag with prior 0.2 and a test that reads it with 10% errors."""
    rng = np.random.default_rng(seed)
    y = (rng.random(n) < 0.2).astype(int)
    test = np.where(rng.random(n) < 0.1, 1 - y, y).astype(float)
    noise = rng.normal(size=n)
    return np.column_stack([test, noise]), y


def test_expected_cost_buys_nothing_when_tests_cost_more_than_the_errors():
    X, y = _lots()
    costs = CostModel(["flag_test", "other_test"], {"flag_test": 25.0, "other_test": 25.0})
    cv = StratifiedKFold(5, shuffle=True, random_state=0)
    problem = SelectionProblem(X, y, DecisionTreeClassifier(max_depth=1, random_state=0),
                               costs=costs, cv=cv)
    matrix = [[0, 5], [5, 0]]  # errors cost 5 EUR each way, a test 25 EUR
    res = run_search(problem, "exhaustive", objective={
        "name": "expected_cost", "labels": [0, 1], "cost_matrix": matrix})
    assert res.selected == [] and res.headline().startswith("buy nothing")
    assert res.guard["decision"].startswith("not needed") and res.guard["n_fits"] == 0
    # Hand-worked reference: with no test the Bayes decision under the training-fold
    # class frequencies calls every lot the majority class; its cost is 5 x the share of
    # the other class in the test fold.
    expected = []
    for train, test in problem.splits:
        p1 = y[train].mean()
        call = int(p1 * 5 > (1 - p1) * 5)
        expected.append(-5.0 * np.mean(y[test] != call))
    np.testing.assert_allclose(res.fold_scores, expected)
    assert res.objective["value"] == pytest.approx(np.mean(expected))
    # The informative test would prevent most errors, but costs far more than they do.
    test_only = res.to_dict()["references"]["everything"]
    assert test_only["objective"] < res.objective["value"] - 20


def test_penalized_chooses_nothing_below_the_no_test_baseline():
    X, y = _lots()
    costs = CostModel(["flag_test", "other_test"], {"flag_test": 1.0, "other_test": 1.0})
    problem = SelectionProblem(X, y, DecisionTreeClassifier(max_depth=1, random_state=0),
                               costs=costs, cv=5, scoring="accuracy")
    cheap = run_search(problem, "exhaustive", objective={"name": "penalized", "lambda": 0.01},
                       guard="off")
    assert cheap.selected == ["flag_test"]  # 0.9 - 0.01 beats the prior's 0.8
    dear = run_search(problem, "exhaustive", objective={"name": "penalized", "lambda": 0.2},
                      guard="off")
    assert dear.selected == []  # 0.9 - 0.2 < 0.8: nothing
    assert dear.objective["value"] == pytest.approx(dear.score_mean)  # the prior's accuracy
    with pytest.raises(InputError, match=r"objective.lambda: the penalized objective needs"):
        run_search(problem, "exhaustive", objective="penalized")


def test_noise_guard_on_pure_noise_and_on_signal():
    rng = np.random.default_rng(2)
    X = rng.normal(size=(120, 6))
    y = rng.integers(0, 2, 120)  # a fair coin: no measurement can help
    problem = SelectionProblem(X, y, GaussianNB(), cv=3, scoring="accuracy")
    off = run_search(problem, "forward", pick="best", guard="off")
    assert off.selected and off.score_mean > 0.6  # the search alone buys noise
    res = run_search(problem, "forward", pick="best", guard={"name": "nested", "folds": 3})
    g = res.guard
    assert res.selected == [] and g["decision"].startswith("replaced by 'nothing'")
    assert g["stage"] == "nested" and g["screen_p_value"] > g["alpha"]
    assert g["p_value"] > g["alpha"] and g["replaced"] == off.selected
    assert g["n_fits"] > res.n_fits  # 3 searches on 2/3 of the rows, plus refits
    # Reference for the test: scipy's one-sided paired t-test on the outer values.
    assert g["p_value"] == pytest.approx(
        stats.ttest_rel(g["outer_objective_answer"], g["outer_objective_fallback"],
                        alternative="greater").pvalue)
    # Signal: the first column decides the class; the guard keeps it.
    y2 = (X[:, 0] + 0.3 * rng.normal(size=120) > 0).astype(int)
    signal = SelectionProblem(X, y2, GaussianNB(), cv=3, scoring="accuracy")
    kept = run_search(signal, "forward", guard={"name": "nested", "folds": 3})
    assert "x0" in kept.selected and kept.guard["passed"]
    # With 3 folds (2 degrees of freedom) stage 1 cannot accept after the Bonferroni
    # correction, so the nested stage decides, and its honest score is high.
    assert kept.guard["stage"] == "nested" and kept.guard["nested_mean"] > 0.8


def test_run_search_refuses_costs_beside_a_problem_that_has_its_own():
    # Regression: costs= given to run_search with a SelectionProblem were ignored and
    # every measurement cost 1, so a budget of 6 bought what costs 10 here.
    from sklearn.datasets import load_iris
    from sklearn.naive_bayes import GaussianNB

    from featuresift import SelectionProblem

    X, y = load_iris(return_X_y=True)  # scikit-learn's iris data
    prices = {"features": {"x0": 1, "x1": 2, "x2": 3, "x3": 4}}
    with pytest.raises(InputError, match="costs: a SelectionProblem carries its own costs"):
        run_search(SelectionProblem(X, y, GaussianNB(), cv=3), "forward", costs=prices,
                   budget=6)
    res = run_search(SelectionProblem(X, y, GaussianNB(), cv=3, costs=prices), "forward",
                     budget=6, guard="off")
    assert res.cost <= 6 and res.cost == sum(prices["features"][f] for f in res.selected)
