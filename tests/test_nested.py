"""Nested evaluation removes the selection bias of the search's own CV score."""

import numpy as np
import pytest
from sklearn.base import clone
from sklearn.model_selection import StratifiedKFold
from sklearn.naive_bayes import GaussianNB

from featuresift.nested import nested_evaluation
from featuresift.problem import SelectionProblem
from featuresift.search import run_search


def test_nested_shows_optimism_on_pure_noise():
    # Ambroise & McLachlan (2002, PNAS 99(10)): selecting on all samples and reporting
    # the CV score of the choice gives an optimistic estimate; on pure noise the honest
    # (outer) estimate must sit near chance while the search's own score does not.
    rng = np.random.default_rng(0)
    X = rng.normal(size=(60, 30))
    y = np.repeat([0, 1], 30)
    ne = nested_evaluation(
        X, y, GaussianNB(), outer_cv=3, inner_cv=3, scoring="accuracy", n_features=3
    )
    assert np.mean(ne.inner_scores) > 0.7
    assert abs(ne.outer_mean - 0.5) < 0.15
    assert ne.optimism > 0.1
    assert set(ne.selection_frequency) == {f"x{i}" for i in range(30)}
    assert sum(ne.selection_frequency.values()) == pytest.approx(3.0)


def test_nested_outer_score_is_refit_on_outer_train_only():
    rng = np.random.default_rng(1)
    X = rng.normal(size=(90, 6))
    y = (X[:, 0] + 0.5 * X[:, 3] + rng.normal(scale=0.5, size=90) > 0).astype(int)
    outer = StratifiedKFold(3)
    ne = nested_evaluation(
        X, y, GaussianNB(), outer_cv=outer, inner_cv=3, scoring="accuracy", n_features=2
    )
    # Recompute fold 0 by hand with scikit-learn alone.
    train, test = next(outer.split(X, y))
    inner = SelectionProblem(X[train], y[train], GaussianNB(), cv=3, scoring="accuracy")
    res = run_search(inner, "forward", n_features=2)
    model = clone(GaussianNB()).fit(X[train][:, res.support], y[train])
    expected = float((model.predict(X[test][:, res.support]) == y[test]).mean())
    assert ne.outer_scores[0] == pytest.approx(expected)
    assert ne.selected[0] == res.selected
    assert "x0" in ne.selected[0]
    assert ne.stability is not None and ne.stability > 0.5
