"""Exact fast paths for OLS, ridge and LDA (featuresift/engine/linear.py).

Reference: scikit-learn itself. Every fold score of the fast path is compared with a
fit of the same scikit-learn estimator (cloned, fitted on the fold's training rows of
the subset's columns, scored with the same scikit-learn scorer) on hundreds of random
subsets per eligible pipeline; searches must choose the same subsets with the fast
path on and off.
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.base import clone, is_classifier
from sklearn.datasets import load_breast_cancer, load_diabetes, load_wine
from sklearn.decomposition import PCA
from sklearn.discriminant_analysis import LinearDiscriminantAnalysis as LDA
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LinearRegression, LogisticRegression, Ridge
from sklearn.metrics import make_scorer, mean_squared_error
from sklearn.model_selection import KFold, StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import MinMaxScaler, StandardScaler

from featuresift import CostModel, CrossValidationEvaluator, SelectionProblem, run_search
from featuresift.engine.linear import make_linear_path

pytestmark = pytest.mark.usefixtures("single_blas_thread")


def _data(name):
    if name == "cancer":
        X, y = load_breast_cancer(return_X_y=True)
        return X[:, :20], y
    if name == "wine":
        return load_wine(return_X_y=True)
    X, y = load_diabetes(return_X_y=True)
    # Columns on different scales (as raw lab units would be) and an offset target.
    return X * np.array([1, 10, 100, 1, 0.1, 1, 5, 1, 50, 1]), y + 50.0


# (data, estimator, scoring, random subsets), 2 folds each. Accuracy and the default
# regression score are checked on 200 subsets against the fitted model's predictions; the
# other scorers, whose scikit-learn implementations cost several ms per call, on 60.
CASES = [
    ("cancer", LDA(), None, 200),
    ("cancer", make_pipeline(StandardScaler(), LDA(tol=1e-3)), None, 200),
    ("cancer", LDA(), "roc_auc", 60),
    ("cancer", LDA(), "neg_log_loss", 60),
    ("wine", LDA(), None, 200),
    ("wine", make_pipeline(StandardScaler(), LDA()), "neg_log_loss", 60),
    ("wine", LDA(), "balanced_accuracy", 60),
    ("diabetes", LinearRegression(), None, 200),
    ("diabetes", make_pipeline(StandardScaler(), LinearRegression()), None, 200),
    ("diabetes", Ridge(alpha=0.5), None, 200),
    ("diabetes", make_pipeline(StandardScaler(), Ridge(alpha=3.0)), None, 200),
    ("diabetes", make_pipeline(StandardScaler(with_mean=False), Ridge(fit_intercept=False)),
     None, 200),
    ("diabetes", make_pipeline(MinMaxScaler(), Ridge(alpha=0.1, solver="svd")), None, 200),
    ("diabetes", Ridge(alpha=0.5), "neg_mean_absolute_error", 60),
    ("diabetes", make_pipeline(StandardScaler(), Ridge()), "explained_variance", 60),
]


def _reference(problem, est, Xte, yte):
    """The fitted scikit-learn model's score: its own predictions for the default
    score (accuracy or R^2, written out), the problem's scikit-learn scorer otherwise."""
    if problem.scoring is not None:
        return problem.scorer(est, Xte, yte)
    pred = est.predict(Xte)
    if problem.classification:
        return np.mean(pred == yte)
    return 1 - ((yte - pred) ** 2).sum() / ((yte - yte.mean()) ** 2).sum()


@pytest.mark.parametrize("data,estimator,scoring,n_subsets", CASES,
                         ids=[f"{c[0]}-{i}" for i, c in enumerate(CASES)])
def test_fold_scores_equal_scikit_learn_fits(data, estimator, scoring, n_subsets):
    X, y = _data(data)
    cv = StratifiedKFold(2) if data != "diabetes" else KFold(2)
    problem = SelectionProblem(X, y, estimator, cv=cv, scoring=scoring)
    path = make_linear_path(problem)
    assert path is not None
    rng = np.random.default_rng(0)
    p = X.shape[1]
    subsets: set[tuple[int, ...]] = set()
    while len(subsets) < n_subsets:
        size = rng.integers(1, min(p, 10) + 1)
        subsets.add(tuple(sorted(rng.choice(p, size=size, replace=False).tolist())))
    work = [(s, f) for s in sorted(subsets) for f in range(2)]
    fast = path.score(work)
    declined = sum(v is None for v in fast)
    assert declined <= 0.05 * len(work)
    for (s, f), value in zip(work, fast):
        if value is None:
            continue
        train, test = problem.splits[f]
        est = clone(estimator).fit(X[train][:, list(s)], y[train])
        ref = _reference(problem, est, X[test][:, list(s)], y[test])
        assert abs(value - ref) <= 1e-9, (s, f, value, ref)


@pytest.mark.parametrize("data,estimator", [
    ("cancer", LDA()),
    ("wine", make_pipeline(StandardScaler(), LDA())),
    ("diabetes", Ridge(alpha=0.5)),
    ("diabetes", LinearRegression()),
])
def test_bordered_updates_equal_scikit_learn_fits(data, estimator):
    # Batches shaped like a forward step (all one-column extensions of a subset), a
    # backward step (all one-column removals) and exhaustive enumeration (subsets
    # sharing all but their last column): the path scores them from one smaller
    # inverse by bordered / rank-one updates. Reference: scikit-learn fits, 1e-9.
    X, y = _data(data)
    X = X[:, :10]
    cv = StratifiedKFold(2) if data != "diabetes" else KFold(2)
    problem = SelectionProblem(X, y, estimator, cv=cv)
    path = make_linear_path(problem)
    p = X.shape[1]
    base, whole = (1, 4, 6), (0, 2, 3, 5, 7, 9)
    batches = [
        [tuple(sorted(base + (j,))) for j in range(p) if j not in base],
        [tuple(c for c in whole if c != j) for j in whole],
        [(a, b, c) for a in range(6) for b in range(a + 1, 6) for c in range(b + 1, 6)],
    ]
    n_pairs = 0
    for batch in batches:
        work = [(s, f) for s in batch for f in range(2)]
        n_pairs += len(work)
        for (s, f), value in zip(work, path.score(work)):
            assert value is not None
            train, test = problem.splits[f]
            est = clone(estimator).fit(X[train][:, list(s)], y[train])
            ref = _reference(problem, est, X[test][:, list(s)], y[test])
            assert abs(value - ref) <= 1e-9, (s, f, value, ref)
    assert path.n_updated == n_pairs   # every pair came from an update, none inverted alone


def test_singular_within_class_scatter_and_collinear_columns_are_declined():
    X, y = load_breast_cancer(return_X_y=True)
    X = np.column_stack([X[:, :4], X[:, 0] * 2.0 + X[:, 1], np.ones(len(y))])
    for est in (LDA(), LinearRegression()):
        target = y if est.__class__ is LDA else X[:, 2] + np.sin(X[:, 3])
        problem = SelectionProblem(X, target, est, cv=3)
        path = make_linear_path(problem)
        scores = path.score([((0, 1, 4), f) for f in range(3)] + [((0, 5), 0), ((0, 1), 0)])
        assert scores[:4] == [None] * 4   # collinear, or a constant column
        assert scores[4] is not None
        # The evaluator hands declined pairs to the generic fit: same result as without.
        fast = CrossValidationEvaluator(problem).evaluate([(0, 1, 4), (0, 1)])
        slow = CrossValidationEvaluator(problem, fast_path=False).evaluate([(0, 1, 4), (0, 1)])
        for a, b in zip(fast, slow):
            np.testing.assert_allclose(a.fold_scores, b.fold_scores, rtol=0, atol=1e-9)


class MyRidge(Ridge):
    pass


@pytest.mark.parametrize("estimator,scoring", [
    (Ridge(solver="sag"), None),
    (Ridge(alpha=[1.0]), None),
    (Ridge(positive=True), None),
    (MyRidge(), None),
    (make_pipeline(StandardScaler(), PCA(2), Ridge()), None),
    (make_pipeline(StandardScaler(), LogisticRegression()), None),
    (Ridge(), make_scorer(mean_squared_error, greater_is_better=False)),
    (Ridge(), "neg_mean_squared_log_error"),
    (LDA(solver="lsqr"), None),
    (LDA(priors=[0.5, 0.5]), None),
    (LDA(n_components=1), None),
    (LDA(), "f1"),
])
def test_ineligible_models_and_scorers_take_the_generic_path(estimator, scoring):
    X, y = load_breast_cancer(return_X_y=True)
    # Classifiers get the classes; regressors a continuous target.
    problem = SelectionProblem(X[:, :5], y if is_classifier(estimator) else X[:, 5] + 20,
                               estimator, cv=3, scoring=scoring)
    assert make_linear_path(problem) is None
    ev = CrossValidationEvaluator(problem)
    assert ev.stats()["fast_path"] is None


def test_empty_subset_is_left_to_the_prior_only_model():
    X, y = load_breast_cancer(return_X_y=True)
    problem = SelectionProblem(X[:, :5], y, LDA(), cv=3)
    fast = CrossValidationEvaluator(problem).evaluate([(), (0, 1)])
    slow = CrossValidationEvaluator(problem, fast_path=False).evaluate([(), (0, 1)])
    assert fast[0].fold_scores == slow[0].fold_scores
    np.testing.assert_allclose(fast[1].fold_scores, slow[1].fold_scores, rtol=0, atol=1e-12)


def test_same_choices_with_and_without_fast_path(grain_small):
    # The invented grain-lab demo: missing values imputed, scaled, LDA; panel prices.
    from featuresift.demo import GRAIN_COSTS

    X = grain_small.drop(columns=["lot_id", "meets_milling_grade"])
    y = grain_small["meets_milling_grade"].to_numpy()
    costs = CostModel(list(X.columns), GRAIN_COSTS["features"],
                      panels={k: (v["cost"], v["features"])
                              for k, v in GRAIN_COSTS["panels"].items()})
    est = make_pipeline(SimpleImputer(), StandardScaler(), LDA())
    runs = []
    for fast in (True, False):
        problem = SelectionProblem(X, y, est, costs=costs, cv=StratifiedKFold(3),
                                   scoring="roc_auc")
        runs.append(run_search(problem, "forward", budget=60, max_features=4,
                               fast_path=fast, guard="off"))
    assert runs[0].support == runs[1].support
    assert [r.features for r in runs[0].path] == [r.features for r in runs[1].path]
    assert runs[0].extras["engine"]["fast_path"]["n_scored"] > 0
    assert runs[1].extras["engine"]["fast_path"] is None
    # Ridge, exhaustive on 6 columns: the same optimum.
    Xr, yr = _data("diabetes")
    problem = SelectionProblem(Xr[:, :6], yr, make_pipeline(StandardScaler(), Ridge(2.0)),
                               cv=KFold(3))
    a = run_search(problem, "exhaustive", fast_path=True)
    b = run_search(problem, "exhaustive", fast_path=False)
    assert a.support == b.support and a.stop_reason == "optimum over all 63 allowed subsets"


def test_wide_subsets_scored_in_row_blocks_give_the_same_bits_and_match_sklearn(monkeypatch):
    # More than 64 columns (gathered test columns) and a tiny block size, so every
    # subset's test rows are gathered a few rows at a time: the scores must not change,
    # and they equal scikit-learn's LDA fits (reference implementation).
    import featuresift.engine.linear as linear

    rng = np.random.default_rng(3)
    X = rng.normal(size=(120, 70))
    y = (X[:, 0] + X[:, 1] + rng.normal(size=120) > 0).astype(int)
    est = make_pipeline(StandardScaler(), LDA())
    work = [((0, 1, 2), f) for f in range(3)] + [(tuple(range(60)), f) for f in range(3)]

    def scores():
        problem = SelectionProblem(X, y, est, cv=StratifiedKFold(3), scoring="accuracy")
        return make_linear_path(problem).score(work), problem

    whole, problem = scores()
    monkeypatch.setattr(linear, "_MAX_BLOCK", 50)
    blocked, _ = scores()
    assert whole == blocked and None not in whole
    for (cols, f), got in zip(work, whole):
        train, test = problem.splits[f]
        model = clone(est).fit(X[train][:, cols], y[train])
        assert got == pytest.approx(model.score(X[test][:, cols], y[test]), abs=1e-9)
