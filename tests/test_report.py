"""The Markdown report carries the result, the caution, and optional sections."""

from sklearn.datasets import load_iris
from sklearn.naive_bayes import GaussianNB

from featuresift import CostModel, SelectionProblem, run_search
from featuresift.frontier import budget_sweep
from featuresift.report import CAUTION, write_report


def test_report_contains_result_sweep_and_caution(tmp_path):
    X, y = load_iris(return_X_y=True)  # ships with scikit-learn
    names = ["sepal_l", "sepal_w", "petal_l", "petal_w"]
    cm = CostModel(names, {"sepal_l": 1, "sepal_w": 0}, panels={"petal": (4.0, names[2:])},
                   unit="EUR")
    p = SelectionProblem(X, y, GaussianNB(), costs=cm, cv=3, feature_names=names)
    res = run_search(p, "forward", budget=4.0)
    fr = budget_sweep(p, [1.0, None])
    path = write_report(tmp_path, res, frontier=fr, source="x.yaml")
    text = path.read_text()
    assert CAUTION in text
    assert "licensed practice" in text
    # The breakdown line of the panel shows the panel price once.
    assert "| petal | panel |" in text and "4.00" in text
    assert f"{res.score_mean:.4f}" in text
    assert "Accuracy against cost" in text and "unlimited" in text
    assert not list(tmp_path.glob(".*.tmp"))
