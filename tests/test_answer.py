"""The answer side: baselines (empty set), score labels, pick rules, noise guard."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer, load_diabetes
from sklearn.dummy import DummyClassifier, DummyRegressor
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.model_selection import cross_val_score
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from featuresift import SelectionProblem
from featuresift.engine.evaluator import CrossValidationEvaluator
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
    (empty,) = CrossValidationEvaluator(problem, n_jobs=2).evaluate([()])
    # Reference: DummyRegressor (the training-fold mean) on the same folds.
    ref = cross_val_score(DummyRegressor(), X, y, cv=problem.splits, scoring=scoring)
    np.testing.assert_allclose(empty.fold_scores, ref, rtol=0, atol=1e-9)
