"""Objectives that need the data are bound to the problem by run_search."""

import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer
from sklearn.model_selection import StratifiedKFold
from sklearn.naive_bayes import GaussianNB

import featuresift.filters  # noqa: F401 - registers redundancy_penalized
from featuresift import SelectionProblem, run_search

RAW = {"references": False, "pick": "best", "guard": "off"}  # the strategy's own answer

def test_redundancy_objective_binds_and_avoids_a_duplicate():
    # scikit-learn's breast-cancer data with column 0 duplicated as a new last column.
    X, y = load_breast_cancer(return_X_y=True)
    X = np.column_stack([X[:, :8], X[:, 0]])
    problem = SelectionProblem(X, y, GaussianNB(), cv=StratifiedKFold(3), scoring="accuracy")
    plain = run_search(problem, "forward", **RAW, n_features=3,
                       objective={"name": "redundancy_penalized", "weight": 0.0})
    assert {0, 8} <= set(plain.support)  # without the penalty both copies are bought
    res = run_search(problem, "forward", **RAW, n_features=3,
                     objective={"name": "redundancy_penalized", "weight": 1.0})
    assert not {0, 8} <= set(res.support)
    # The reported objective value is score - weight * mean |corr| over pairs,
    # recomputed here with numpy.corrcoef as the reference.
    C = np.abs(np.corrcoef(X[:, res.support], rowvar=False))
    pairs = C[np.triu_indices(3, 1)]
    assert res.objective["value"] == pytest.approx(res.score_mean - pairs.mean(), rel=1e-9)
