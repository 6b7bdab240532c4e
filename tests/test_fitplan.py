"""The evaluator's fit plan: shared column-wise preprocessing and direct scores.

The reference for every check is scikit-learn itself: its scorers
(``sklearn.metrics.get_scorer``) for the direct scores, and fitting the whole
pipeline on each subset's own columns for the shared preprocessing.
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer, load_diabetes, load_iris, load_wine
from sklearn.decomposition import PCA
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.metrics import get_scorer
from sklearn.model_selection import KFold, StratifiedKFold
from sklearn.naive_bayes import GaussianNB
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import (
    MaxAbsScaler,
    MinMaxScaler,
    PowerTransformer,
    RobustScaler,
    StandardScaler,
)

from featuresift import CrossValidationEvaluator, SelectionProblem
from featuresift.engine.fitplan import _DIRECT, make_fit_plan

SUBSETS = [(0,), (3,), (0, 1), (2, 5, 7), (1, 4, 6, 8, 11), tuple(range(13))]


def _wine_scores(estimator, share, **kwargs):
    X, y = load_wine(return_X_y=True)
    p = SelectionProblem(X, y, estimator, cv=StratifiedKFold(4, shuffle=True, random_state=1))
    ev = CrossValidationEvaluator(p, share_preprocessing=share, **kwargs)
    return np.array([e.fold_scores for e in ev.evaluate(SUBSETS)]), ev


@pytest.mark.parametrize("head", [
    [StandardScaler()], [MinMaxScaler()], [MaxAbsScaler()], [RobustScaler()],
    [PowerTransformer()], [SimpleImputer(), StandardScaler()],
])
def test_shared_head_matches_fitting_the_whole_pipeline_per_subset(head):
    est = make_pipeline(*head, LogisticRegression(max_iter=500))
    shared, ev = _wine_scores(est, True)
    assert ev.plan.n_shared_steps == len(head)
    plain, ev0 = _wine_scores(est, False)
    assert ev0.plan.n_shared_steps == 0
    # Reference: the pipeline fitted on the subset's columns (scikit-learn), to rounding.
    np.testing.assert_allclose(shared, plain, rtol=0, atol=1e-12)


@pytest.mark.parametrize("kwargs", [{"chunk_size": 1}, {"chunk_size": 7}, {"n_jobs": 2}])
def test_shared_head_scores_do_not_depend_on_grouping(kwargs):
    # chunk_size=1 makes every group hold one subset (a one-column head for (0,) and (3,)),
    # the default groups hold several: the scores must agree to the last bit.
    est = make_pipeline(StandardScaler(), PowerTransformer(), LogisticRegression(max_iter=500))
    base, _ = _wine_scores(est, True)
    other, _ = _wine_scores(est, True, **kwargs)
    assert np.array_equal(base, other)


def test_only_leading_columnwise_steps_are_shared():
    X, y = load_iris(return_X_y=True)
    est = make_pipeline(StandardScaler(), PCA(1), MinMaxScaler(), LogisticRegression())
    plan = make_fit_plan(SelectionProblem(X, y, est, cv=3))
    assert plan.n_shared_steps == 1
    assert [n for n, _ in plan.tail.steps] == ["pca", "minmaxscaler", "logisticregression"]
    # "passthrough" counts as column-wise but alone shares nothing.
    from sklearn.pipeline import Pipeline

    through = Pipeline([("skip", "passthrough"), ("scale", StandardScaler()),
                        ("model", LogisticRegression())])
    assert make_fit_plan(SelectionProblem(X, y, through, cv=3)).n_shared_steps == 2
    only = Pipeline([("skip", "passthrough"), ("model", LogisticRegression())])
    assert make_fit_plan(SelectionProblem(X, y, only, cv=3)).n_shared_steps == 0


def test_no_sharing_with_a_custom_scoring_callable():
    # A callable may inspect the pipeline it is given, so it must get the whole pipeline.
    X, y = load_iris(return_X_y=True)

    def n_steps_scorer(estimator, X, y):
        return float(len(estimator.steps))

    est = make_pipeline(StandardScaler(), LogisticRegression())
    p = SelectionProblem(X, y, est, cv=3, scoring=n_steps_scorer)
    ev = CrossValidationEvaluator(p)
    assert ev.plan.n_shared_steps == 0 and ev.plan.direct_score is None
    assert ev.evaluate([[0, 1]])[0].fold_scores == (2.0, 2.0, 2.0)


def test_imputer_that_would_drop_an_empty_column_is_not_shared():
    # Column 1 is missing in every row of the first fold's training part: SimpleImputer
    # drops it there, which would shift the other columns if the imputer were shared.
    X, y = load_iris(return_X_y=True)
    X = X.copy()
    splits = list(KFold(3).split(X))
    X[splits[0][0], 1] = np.nan
    est = make_pipeline(SimpleImputer(), GaussianNB())
    p = SelectionProblem(X, y, est, cv=splits)
    assert make_fit_plan(p).n_shared_steps == 0
    kept = make_pipeline(SimpleImputer(keep_empty_features=True), GaussianNB())
    assert make_fit_plan(SelectionProblem(X, y, kept, cv=splits)).n_shared_steps == 1
    assert make_fit_plan(SelectionProblem(
        X, y, make_pipeline(SimpleImputer(add_indicator=True), GaussianNB()), cv=splits
    )).n_shared_steps == 0


def test_a_failing_shared_step_fails_only_the_subsets_it_fails_on():
    # Box-Cox needs positive values: column 0 is shifted negative. The plain pipeline
    # fails exactly on subsets holding column 0; sharing must not spread the failure
    # to the other subsets of a group.
    X, y = load_wine(return_X_y=True)
    X = X.copy()
    X[:, 0] -= 100.0
    est = make_pipeline(PowerTransformer(method="box-cox"), LogisticRegression(max_iter=500))
    p = SelectionProblem(X, y, est, cv=StratifiedKFold(3))
    subsets = [(0,), (1,), (0, 2), (2, 3), (4,)]
    got = {}
    for share in (True, False):
        ev = CrossValidationEvaluator(p, on_fit_error="record", share_preprocessing=share)
        got[share] = [e.fold_scores for e in ev.evaluate(subsets)]
    for s, a, b in zip(subsets, got[True], got[False]):
        assert np.isnan(a).all() == (0 in s) == np.isnan(b).all()
        if 0 not in s:
            np.testing.assert_allclose(a, b, rtol=0, atol=1e-12)


def test_forward_selection_choice_unchanged_by_sharing():
    # Same path, same fold scores (to rounding) as fitting the pipeline per subset.
    from featuresift import run_search

    X, y = load_breast_cancer(return_X_y=True)
    X = X[:, :12]
    runs = {}
    for share in (True, False):
        p = SelectionProblem(X, y, make_pipeline(StandardScaler(), LogisticRegression()),
                             cv=StratifiedKFold(3))
        ev = CrossValidationEvaluator(p, share_preprocessing=share)
        runs[share] = run_search(ev, "forward", n_features=4)
    assert runs[True].support == runs[False].support
    np.testing.assert_allclose(runs[True].fold_scores, runs[False].fold_scores, atol=1e-12)


# ------------------------------------------------------------------ direct scores
def test_direct_regression_scores_equal_sklearn_scorers():
    # Reference: sklearn.metrics scorers on the same fitted model (exact equality).
    X, y = load_diabetes(return_X_y=True)
    rng = np.random.default_rng(0)
    for _ in range(40):
        idx = rng.permutation(len(y))
        train, test = idx[:300], idx[300:300 + int(rng.integers(2, 140))]
        cols = rng.choice(10, size=int(rng.integers(1, 10)), replace=False)
        model = Ridge(alpha=float(rng.uniform(0.01, 10))).fit(X[train][:, cols], y[train])
        y_int = np.rint(y[test]).astype(int)  # integer targets are converted alike
        for name in ("r2", "neg_mean_squared_error", "neg_mean_absolute_error"):
            for target in (y[test], y_int):
                ref = get_scorer(name)(model, X[test][:, cols], target)
                assert _DIRECT[name](target, model.predict(X[test][:, cols])) == ref


def test_direct_r2_of_a_constant_target_follows_sklearn():
    # scikit-learn's r2_score convention for a constant y_true (force_finite=True).
    from sklearn.metrics import r2_score

    y = np.full(5, 3.0)
    assert _DIRECT["r2"](y, y) == r2_score(y, y) == 1.0
    assert _DIRECT["r2"](y, y + 1) == r2_score(y, y + 1) == 0.0


@pytest.mark.parametrize("labels", ["int", "str"])
def test_direct_accuracy_equals_default_score(labels):
    X, y = load_iris(return_X_y=True)
    if labels == "str":
        y = np.array(["setosa", "versicolor", "virginica"])[y]
    est = make_pipeline(StandardScaler(), LogisticRegression())
    p = SelectionProblem(X, y, est, cv=StratifiedKFold(3))
    ev = CrossValidationEvaluator(p)
    assert ev.plan.direct_score == "accuracy"
    got = ev.evaluate([[0, 2]])[0].fold_scores
    # Reference: the pipeline's own score method (scikit-learn's accuracy_score).
    ref = [est.fit(X[tr][:, [0, 2]], y[tr]).score(X[te][:, [0, 2]], y[te])
           for tr, te in p.splits]
    assert list(got) == ref


def test_direct_score_names():
    X, y = load_iris(return_X_y=True)
    lr = LogisticRegression()
    assert make_fit_plan(SelectionProblem(X, y, lr, scoring="accuracy")).direct_score == \
        "accuracy"
    assert make_fit_plan(SelectionProblem(X, y, lr, scoring="f1_macro")).direct_score is None
    Xd, yd = load_diabetes(return_X_y=True)
    assert make_fit_plan(SelectionProblem(Xd, yd, Ridge())).direct_score == "r2"
    plan = make_fit_plan(SelectionProblem(X, y, lr), direct_scores=False)
    assert plan.direct_score is None
