"""Objectives: score, penalized, expected total cost; tie-breaks."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import confusion_matrix
from sklearn.model_selection import StratifiedKFold, cross_val_predict
from sklearn.tree import DecisionTreeClassifier

from featuresift import CostModel, CriterionEvaluator, InputError, SelectionProblem, run_search
from featuresift.engine.records import Evaluation
from featuresift.objectives import (
    OBJECTIVES,
    ExpectedCostObjective,
    PenalizedObjective,
    ScoreObjective,
    make_objective,
)
from featuresift.strategies import SearchSpace


def test_registry_builds_objectives_from_yaml_style_specs():
    assert {"score", "penalized", "expected_cost"} <= set(OBJECTIVES)
    assert isinstance(make_objective(None), ScoreObjective)
    pen = make_objective({"name": "penalized", "lambda": 0.25})
    assert isinstance(pen, PenalizedObjective) and pen.lam == 0.25
    exp = make_objective({"name": "expected_cost", "labels": ["ok", "bad"],
                          "cost_matrix": [[0, 5], [40, 0]]})
    assert isinstance(exp, ExpectedCostObjective)
    assert exp.describe() == {"name": "expected_cost", "labels": ["ok", "bad"],
                              "cost_matrix": [[0.0, 5.0], [40.0, 0.0]], "decision": "bayes"}
    with pytest.raises(InputError, match="unknown objective 'cheap'"):
        make_objective("cheap")


@pytest.mark.parametrize(
    "spec, match",
    [
        ({"cost_matrix": [[0, 1, 2], [1, 0, 2]]}, "square"),
        ({"cost_matrix": [[0, -1], [1, 0]]}, r"row 1, column 2 .* >= 0"),
        ({"cost_matrix": [[0, 1], [float("nan"), 0]]}, "row 2, column 1"),
        ({"cost_matrix": [[0, 1], [1, 0]], "labels": [0, 1, 2]}, "3 labels for a 2x2"),
        ({"cost_matrix": [[0, 1], [1, 0]], "labels": [1, 1]}, "distinct"),
        ({"cost_matrix": "cheap"}, "square"),
    ],
)
def test_expected_cost_rejects_bad_tables(spec, match):
    with pytest.raises(InputError, match=match):
        make_objective({"name": "expected_cost", **spec})


def test_scorer_is_minus_mean_cost_of_the_confusion_matrix():
    rng = np.random.default_rng(0)
    X = rng.normal(size=(120, 3))
    y = (X[:, 0] + 0.8 * rng.normal(size=120) > 0).astype(int)
    model = LogisticRegression().fit(X, y)
    cost = np.array([[0.0, 5.0], [40.0, 0.0]])
    obj = ExpectedCostObjective(cost, labels=[0, 1], decision="predict")
    # Reference: sklearn's confusion matrix (rows true, columns predicted) weighted by cost.
    cm = confusion_matrix(y, model.predict(X), labels=[0, 1])
    assert cm[0, 1] > 0 and cm[1, 0] > 0
    assert obj.required_scorer()(model, X, y) == pytest.approx(-(cm * cost).sum() / len(y))
    # Bayes decision (default): call 1 only when p1 * 40 > p0 * 5, i.e. p1 > 5 / 45
    # (hand-derived from the matrix); same confusion-matrix reference.
    bayes = ExpectedCostObjective(cost, labels=[0, 1])
    decided = (model.predict_proba(X)[:, 1] > 5 / 45).astype(int)
    cm_b = confusion_matrix(y, decided, labels=[0, 1])
    assert bayes.required_scorer()(model, X, y) == pytest.approx(-(cm_b * cost).sum() / len(y))
    assert -(cm_b * cost).sum() > -(cm * cost).sum()  # the Bayes decision costs less here
    assert obj.value(Evaluation((0,), (-2.0, -3.0)), cost=1.5) == -4.0


def test_expected_cost_rejects_unknown_classes():
    obj = ExpectedCostObjective([[0, 1], [1, 0]], labels=["a", "b"])
    with pytest.raises(InputError, match="'c'.*not among the cost matrix labels"):
        obj.check_target(np.array(["a", "b", "c"]))


def _two_tests_problem():
    """A cheap test wrong on 10% of samples, an expensive one wrong on 8%."""
    n = 200
    y = np.repeat([0, 1], n // 2)
    cheap = y.copy()
    expensive = y.copy()
    cheap[np.r_[0:10, 100:110]] ^= 1  # 20 errors: 10 per class
    expensive[np.r_[0:8, 100:108]] ^= 1  # 16 errors: 8 per class
    X = np.column_stack([cheap, expensive]).astype(float)
    costs = CostModel(["cheap", "expensive"], {"cheap": 0.01, "expensive": 1.0})
    cv = StratifiedKFold(5)
    return SelectionProblem(X, y, DecisionTreeClassifier(max_depth=1, random_state=0),
                            costs=costs, cv=cv, feature_names=["cheap", "expensive"]), cv


def test_expected_total_cost_picks_the_cheap_test():
    problem, cv = _two_tests_problem()
    by_score = run_search(problem, "exhaustive", pick="best", guard="off")
    assert by_score.selected == ["expensive"]  # the more accurate test

    def reference_total(col, matrix):
        # Reference: sklearn cross-validated predictions on the same (equal-sized) folds.
        pred = cross_val_predict(DecisionTreeClassifier(max_depth=1, random_state=0),
                                 problem.X[:, [col]], problem.y, cv=cv)
        cm = confusion_matrix(problem.y, pred)
        return (cm * np.array(matrix)).sum() / len(pred) + problem.cost_model.cost([col])

    # Errors cost little: the expensive test's 2% fewer errors are not worth 0.99.
    cheap_errors = [[0, 1], [1, 0]]
    res = run_search(problem, "exhaustive", pick="best", guard="off", objective={
        "name": "expected_cost", "labels": [0, 1], "cost_matrix": cheap_errors})
    assert res.selected == ["cheap"] and res.scoring == "expected_cost scorer"
    assert reference_total(0, cheap_errors) == pytest.approx(0.10 + 0.01)
    assert reference_total(1, cheap_errors) == pytest.approx(0.08 + 1.0)
    assert -res.objective["value"] == pytest.approx(reference_total(0, cheap_errors))
    # When a wrong call costs 100, the better test pays for itself (8 + 1 < 10 + 0.01).
    dear_errors = [[0, 100], [100, 0]]
    res = run_search(problem, "exhaustive", pick="best", guard="off",
                     objective={"name": "expected_cost", "cost_matrix": dear_errors})
    assert res.selected == ["expensive"]
    assert -res.objective["value"] == pytest.approx(reference_total(1, dear_errors))
    assert reference_total(0, dear_errors) > reference_total(1, dear_errors)


def test_ties_higher_score_then_lower_cost_then_fewer_features():
    folds = {(0,): 0.75, (1,): 0.5, (2,): 0.5, (1, 2): 0.5, (3,): 0.25}
    costs = CostModel(list("abcd"), {"a": 1.0, "b": 0.0, "c": 0.0, "d": 0.0})
    ev = CriterionEvaluator(lambda s: folds[s], 4, list("abcd"))
    space = SearchSpace(ev, costs, objective=PenalizedObjective(lam=0.25))
    a, b, c, bc, d = space.evaluate([[0], [1], [2], [1, 2], [3]])
    assert a.value == b.value == 0.5
    assert space.best_of([b, a]) is a  # equal value: higher score wins
    assert space.best_of([bc, b]) is b  # equal value, score and cost: fewer features
    costs2 = CostModel(list("abcd"), {"a": 1.0, "b": 0.5, "c": 0.0, "d": 0.0})
    space2 = SearchSpace(ev, costs2)
    b2, c2 = space2.evaluate([[1], [2]])
    assert space2.best_of([b2, c2]) is c2  # equal value and score: lower cost
