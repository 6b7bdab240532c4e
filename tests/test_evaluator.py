"""CrossValidationEvaluator: parity with scikit-learn, determinism, cache, failures, racing."""

from __future__ import annotations

import math
import sys

import numpy as np
import pytest
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.datasets import load_breast_cancer, make_classification
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import GroupKFold, RepeatedStratifiedKFold, cross_val_score
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from featuresift import CrossValidationEvaluator, SelectionProblem, run_search
from featuresift.engine.progress import make_progress
from featuresift.engine.records import COMPLETE, DROPPED, FAILED
from featuresift.errors import FitFailedError, InputError

pytestmark = pytest.mark.usefixtures("single_blas_thread")


@pytest.fixture(scope="module")
def cancer():
    X, y = load_breast_cancer(return_X_y=True)
    return X[:, :8], y


def _problem(X, y, **kw):
    kw.setdefault("cv", 3)
    return SelectionProblem(X, y, make_pipeline(StandardScaler(), LogisticRegression()), **kw)


BATCH = [[0], [1, 2], [3], [0, 4, 5], [6, 7], [2]]


def test_scores_equal_cross_val_score(cancer):
    # Reference: scikit-learn's cross_val_score on the same splits.
    X, y = cancer
    p = _problem(X, y)
    ev = CrossValidationEvaluator(p)
    (res,) = ev.evaluate([[1, 4]])
    ref = cross_val_score(p.estimator, X[:, [1, 4]], y, cv=p.cv)
    np.testing.assert_array_equal(res.fold_scores, ref)
    assert res.status == COMPLETE and ev.n_fits == 3


@pytest.mark.parametrize("n_jobs, chunk_size", [(1, None), (1, 1), (2, None), (2, 1), (2, 7)])
def test_identical_for_any_n_jobs_and_chunk_size(cancer, n_jobs, chunk_size):
    X, y = cancer
    ref = CrossValidationEvaluator(_problem(X, y)).evaluate(BATCH)
    ev = CrossValidationEvaluator(_problem(X, y), n_jobs=n_jobs, chunk_size=chunk_size)
    got = ev.evaluate(BATCH)
    assert [e.fold_scores for e in got] == [e.fold_scores for e in ref]
    assert ev.n_fits == len(BATCH) * 3


def test_cache_within_run_and_duplicates(cancer):
    X, y = cancer
    ev = CrossValidationEvaluator(_problem(X, y))
    first = ev.evaluate([[0, 1], [1, 0], [2]])
    assert first[0] is first[1]
    assert ev.n_fits == 6 and ev.n_cache_hits == 1
    again = ev.evaluate([[2], [0, 1]])
    assert again[0] is first[2] and ev.n_fits == 6 and ev.n_cache_hits == 3
    assert ev.lookup([1, 0]) is first[0] and ev.lookup([5]) is None


def test_forward_twice_and_backward_after_forward_reuse_fits(cancer):
    X, y = cancer
    p = _problem(X, y)
    ev = CrossValidationEvaluator(p)
    r1 = run_search(ev, "forward", n_features=3, costs=p.cost_model, guard="off")
    fits = ev.n_fits
    r2 = run_search(ev, "forward", n_features=3, costs=p.cost_model, guard="off")
    assert ev.n_fits == fits and r2.support == r1.support
    run_search(ev, "backward", n_features=3, costs=p.cost_model, guard="off")
    assert ev.n_cache_hits > 0


def test_empty_subset_is_prior_baseline(cancer):
    X, y = cancer
    (ev,) = CrossValidationEvaluator(_problem(X, y)).evaluate([[]])
    # Predicting the training majority class everywhere: accuracy = share of class 1.
    assert ev.mean == pytest.approx(np.mean(y == 1), abs=0.01)


def test_repeated_and_grouped_splits(cancer):
    X, y = cancer
    rep = _problem(X, y, cv=RepeatedStratifiedKFold(n_splits=2, n_repeats=3, random_state=0))
    (e,) = CrossValidationEvaluator(rep).evaluate([[0, 1]])
    assert len(e.fold_scores) == 6
    groups = np.arange(len(y)) % 7
    grouped = _problem(X, y, cv=GroupKFold(n_splits=7), groups=groups)
    for tr, te in grouped.splits:
        assert not set(groups[tr]) & set(groups[te])
    (g,) = CrossValidationEvaluator(grouped).evaluate([[2]])
    assert len(g.fold_scores) == 7


def test_callable_scorer(cancer):
    X, y = cancer

    def balanced(est, X_, y_):
        pred = est.predict(X_)
        return float(np.mean([np.mean(pred[y_ == c] == c) for c in (0, 1)]))

    p = _problem(X, y, scoring=balanced)
    (e,) = CrossValidationEvaluator(p).evaluate([[0, 3]])
    ref = cross_val_score(p.estimator, X[:, [0, 3]], y, cv=p.cv, scoring="balanced_accuracy")
    np.testing.assert_allclose(e.fold_scores, ref, rtol=1e-12)


class FailsOnColumn(ClassifierMixin, BaseEstimator):
    """Logistic regression that raises when trained on a marked column (value 1e6 added),
    or on a training set of a given size."""

    def __init__(self, bad_size=-1):
        self.bad_size = bad_size

    def fit(self, X, y):
        if np.any(X[:, 0] > 1e5) or len(X) == self.bad_size:
            raise ValueError("cannot fit this")
        self.model_ = LogisticRegression().fit(X, y)
        self.classes_ = self.model_.classes_
        return self

    def predict(self, X):
        return self.model_.predict(X)


def _failing_problem():
    X, y = make_classification(n_samples=60, n_features=4, random_state=0)
    X[:, 3] += 1e6  # any subset whose first column is column 3 fails on every fold
    return X, y


def test_failure_policy_raise():
    X, y = _failing_problem()
    p = SelectionProblem(X, y, FailsOnColumn(), cv=3)
    ev = CrossValidationEvaluator(p, on_fit_error="raise")
    with pytest.raises(FitFailedError, match=r"subset \[x3\], fold 0 of 3") as info:
        ev.evaluate([[0], [3]])
    assert info.value.subset == (3,) and info.value.fold == 0


@pytest.mark.parametrize("n_jobs", [1, 2])
def test_failure_policy_record_counts(n_jobs):
    X, y = _failing_problem()
    # 3 folds of 60 samples: training sets of 40; the fold policy fails one size only.
    p = SelectionProblem(X, y, FailsOnColumn(bad_size=41), cv=[
        (np.arange(19, 60), np.arange(19)),  # train size 41: fails
        (np.r_[0:20, 40:60], np.arange(20, 40)),
        (np.arange(40), np.arange(40, 60)),
    ])
    ev = CrossValidationEvaluator(p, on_fit_error="record", n_jobs=n_jobs)
    ok, bad, one = ev.evaluate([[0, 1], [3], [2]])
    assert bad.status == FAILED and bad.n_failed_folds == 3 and math.isnan(bad.mean)
    # One failed fold of three: no score at all, never the mean of the other two.
    assert one.status == FAILED and one.n_failed_folds == 1 and one.failed_folds == (0,)
    assert math.isnan(one.fold_scores[0]) and not math.isnan(one.fold_scores[1])
    assert math.isnan(one.mean) and not one.has_score
    assert "ValueError: cannot fit this" in bad.details["errors"]
    assert ev.n_failed_fits == 3 + 1 + 1 and ev.stats()["n_failed_fits"] == 5
    assert ok.n_failed_folds == 1


def test_bad_options(cancer):
    X, y = cancer
    p = _problem(X, y)
    with pytest.raises(InputError, match="on_fit_error"):
        CrossValidationEvaluator(p, on_fit_error="ignore")
    with pytest.raises(InputError, match="chunk_size"):
        CrossValidationEvaluator(p, chunk_size=0)
    with pytest.raises(InputError, match="inner_threads"):
        CrossValidationEvaluator(p, inner_threads=0)


WINNER = 5


@pytest.fixture(scope="module")
def one_clear_winner():
    """Column 5 separates the classes well; the others carry graded, weaker signal."""
    rng = np.random.default_rng(1)
    y = np.repeat([0, 1], 100)
    X = rng.normal(size=(200, 12))
    X += np.outer(y, np.linspace(0.0, 1.2, 12))
    X[:, WINNER] = rng.normal(size=200) + 3.0 * y
    return X, y


@pytest.mark.parametrize("n_jobs", [1, 2])
def test_racing_keeps_the_clear_leader_and_drops_others(one_clear_winner, n_jobs):
    X, y = one_clear_winner
    p = _problem(X, y, cv=5)
    ev = CrossValidationEvaluator(p, racing=True, n_jobs=n_jobs)
    batch = [[f] for f in range(12)]
    res = ev.evaluate(batch)
    exact = CrossValidationEvaluator(p).evaluate(batch)
    assert res[WINNER].status == COMPLETE
    assert res[WINNER].fold_scores == exact[WINNER].fold_scores
    assert max(exact, key=lambda e: e.mean) is exact[WINNER]
    dropped = [e for e in res if e.status == DROPPED]
    assert dropped and ev.n_dropped == len(dropped) and ev.n_fits < 12 * 5
    for e in dropped:
        assert e.n_folds_run < 5 and math.isnan(e.fold_scores[-1])
        k = e.n_folds_run
        assert e.fold_scores[:k] == exact[e.subset[0]].fold_scores[:k]


def test_dropped_subset_is_completed_not_served(one_clear_winner):
    X, y = one_clear_winner
    ev = CrossValidationEvaluator(_problem(X, y, cv=5), racing=True)
    res = ev.evaluate([[f] for f in range(12)])
    victim = next(e for e in res if e.status == DROPPED)
    fits = ev.n_fits
    (again,) = ev.evaluate([victim.subset])  # alone: nothing to race against
    assert again.status == COMPLETE
    assert ev.n_fits - fits == 5 - victim.n_folds_run  # only the missing folds
    assert again.fold_scores[: victim.n_folds_run] == victim.fold_scores[: victim.n_folds_run]


def test_racing_same_for_chunk_sizes(one_clear_winner):
    X, y = one_clear_winner
    batch = [[f, g] for f in range(4) for g in range(4, 8)]
    runs = [
        CrossValidationEvaluator(_problem(X, y, cv=5), racing=True, chunk_size=c).evaluate(batch)
        for c in (None, 1, 5)
    ]
    for other in runs[1:]:
        assert [(e.status, e.n_folds_run) for e in other] == \
            [(e.status, e.n_folds_run) for e in runs[0]]


def test_progress_bar_modes(capsys, monkeypatch):
    # An earlier test may have imported ipykernel (the notebook test): not a kernel here.
    monkeypatch.delitem(sys.modules, "ipykernel", raising=False)
    assert type(make_progress(5, 0, "x")).__name__ == "_Silent"
    assert type(make_progress(5, 1, "x")).__name__ == "_Silent"  # stderr is not a terminal
    bar = make_progress(5, 2, "x")
    assert hasattr(bar, "n")
    bar.close()


def test_race_decision_ignores_what_the_cache_knows(one_clear_winner):
    # A subset known complete before the batch is still reported as the race decides,
    # so a resumed or cached run returns exactly what a fresh run returns.
    X, y = one_clear_winner
    p = _problem(X, y, cv=5)
    batch = [[f] for f in range(12)]
    fresh = CrossValidationEvaluator(p, racing=True).evaluate(batch)
    weakest = next(e.subset for e in fresh if e.status == DROPPED)
    ev = CrossValidationEvaluator(p, racing=True)
    (known,) = ev.evaluate([weakest])
    assert known.status == COMPLETE
    res = ev.evaluate(batch)
    assert [(e.status, e.n_folds_run) for e in res] == \
        [(e.status, e.n_folds_run) for e in fresh]
    assert ev.lookup(weakest) is known


def test_user_backend_choice_gives_same_scores(cancer):
    # The backend is the user's (joblib.parallel_config); the scores must not change.
    from joblib import parallel_config

    X, y = cancer
    ref = CrossValidationEvaluator(_problem(X, y)).evaluate(BATCH)
    with parallel_config(backend="threading", n_jobs=2):
        got = CrossValidationEvaluator(_problem(X, y), chunk_size=2).evaluate(BATCH)
    assert [e.fold_scores for e in got] == [e.fold_scores for e in ref]


def test_fingerprint_has_no_memory_addresses(cancer):
    from sklearn.preprocessing import FunctionTransformer

    from featuresift.problem import _stable_repr

    X, y = cancer

    def shift(a):
        return a + 1.0

    def scale(a):
        return a * 2.0

    assert " at 0x" not in _stable_repr(shift) and _stable_repr(shift) != _stable_repr(scale)

    def make(func):
        est = make_pipeline(FunctionTransformer(func), LogisticRegression())
        return SelectionProblem(X, y, est, cv=3).fingerprint()

    assert make(shift) == make(shift) != make(scale)
