"""SelectionProblem refuses, before any fit, a scorer that cannot score its target."""

import numpy as np
import pytest
from sklearn.linear_model import LogisticRegression

from featuresift import InputError, SelectionProblem


def test_two_class_roc_auc_on_three_classes_names_the_multiclass_scorer():
    # scikit-learn's "roc_auc" scorer needs a binary target; "roc_auc_ovr" is its
    # multi-class form (sklearn.metrics.get_scorer_names()).
    rng = np.random.default_rng(0)
    X = rng.normal(size=(60, 3))
    y = np.repeat([0, 1, 2], 20)
    with pytest.raises(InputError, match="roc_auc_ovr"):
        SelectionProblem(X, y, LogisticRegression(), cv=3, scoring="roc_auc")
    ok = SelectionProblem(X, y, LogisticRegression(), cv=3, scoring="roc_auc_ovr")
    assert ok.scoring == "roc_auc_ovr"
