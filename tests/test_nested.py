"""Nested evaluation removes the selection bias of the search's own CV score."""

import inspect

import numpy as np
import pytest
from sklearn.base import clone
from sklearn.model_selection import StratifiedKFold
from sklearn.naive_bayes import GaussianNB

from featuresift.nested import nested_evaluation
from featuresift.problem import SelectionProblem
from featuresift.search import run_search

# nested_evaluation runs its outer searches without the driver's noise guard: so do the
# hand computations here (the keyword exists once the guard does).
NO_GUARD = {"guard": "off"} if "guard" in inspect.signature(run_search).parameters else {}


def test_nested_shows_optimism_on_pure_noise():
    # Ambroise & McLachlan (2002, PNAS 99(10)): selecting on all samples and reporting
    # the CV score of the choice gives an optimistic estimate; on pure noise the honest
    # (outer) estimate must sit near chance while the search's own score does not.
    rng = np.random.default_rng(0)
    X = rng.normal(size=(60, 30))
    y = np.repeat([0, 1], 30)
    ne = nested_evaluation(
        X, y, GaussianNB(), outer_cv=3, inner_cv=3, scoring="accuracy", n_features=3,
        pick="best", references=False,  # a fixed-size choice, not the default answer
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
        X, y, GaussianNB(), outer_cv=outer, inner_cv=StratifiedKFold(3), scoring="accuracy",
        n_features=2,
        pick="best", references=False,
    )
    # Recompute fold 0 by hand with scikit-learn alone.
    train, test = next(outer.split(X, y))
    inner = SelectionProblem(X[train], y[train], GaussianNB(), cv=StratifiedKFold(3),
                             scoring="accuracy")
    res = run_search(inner, "forward", n_features=2, pick="best", guard="off",
                     references=False)
    model = clone(GaussianNB()).fit(X[train][:, res.support], y[train])
    expected = float((model.predict(X[test][:, res.support]) == y[test]).mean())
    assert ne.outer_scores[0] == pytest.approx(expected)
    assert ne.selected[0] == res.selected
    assert "x0" in ne.selected[0]
    assert ne.stability is not None and ne.stability > 0.5


def test_nested_repeats_give_r_times_k_outer_scores_and_a_corrected_t_interval():
    from scipy import stats
    from sklearn.model_selection import StratifiedKFold

    rng = np.random.default_rng(2)
    X = rng.normal(size=(60, 4))
    y = (X[:, 0] + rng.normal(scale=0.7, size=60) > 0).astype(int)
    ne = nested_evaluation(X, y, GaussianNB(), outer_cv=3, n_repeats=2, inner_cv=3,
                           scoring="accuracy", n_features=1, seed=5, pick="best")
    assert len(ne.outer_scores) == 6 and len(ne.inner_scores) == 6 and len(ne.selected) == 6
    assert ne.repeats == [0, 0, 0, 1, 1, 1] and (ne.n_repeats, ne.n_splits) == (2, 3)
    # Repeat r uses the shuffled stratified splitter seeded with seed + r.
    for r in (0, 1):
        folds = list(StratifiedKFold(3, shuffle=True, random_state=5 + r).split(X, y))
        tr, te = folds[0]
        inner = SelectionProblem(X[tr], y[tr], GaussianNB(), cv=3, scoring="accuracy")
        sup = run_search(inner, "forward", n_features=1, pick="best", **NO_GUARD).support
        model = clone(GaussianNB()).fit(X[tr][:, sup], y[tr])
        assert ne.outer_scores[3 * r] == pytest.approx(
            float((model.predict(X[te][:, sup]) == y[te]).mean()))
    lo, hi = ne.ci
    assert lo < ne.outer_mean < hi
    # Corrected resampled t (Nadeau & Bengio 2003, Machine Learning 52; the repeated
    # k-fold form of Bouckaert & Frank 2004): variance (1/n + n_test/n_train) * s^2 with
    # n - 1 degrees of freedom; reference quantiles from scipy.stats.t.interval.
    s = np.asarray(ne.outer_scores)
    scale = np.sqrt((1 / 6 + ne.test_train_ratio) * s.var(ddof=1))
    ref = stats.t.interval(0.95, 5, loc=s.mean(), scale=scale)
    assert (lo, hi) == pytest.approx(ref, rel=1e-12)
    assert ne.test_train_ratio == pytest.approx(20 / 40)
    # Wider than the naive t interval over 6 dependent scores.
    naive = stats.t.interval(0.95, 5, loc=s.mean(), scale=s.std(ddof=1) / np.sqrt(6))
    assert hi - lo > naive[1] - naive[0]
    assert ne.optimism == pytest.approx(np.mean(ne.inner_scores) - s.mean())
    assert sum(ne.answer_frequency.values()) == pytest.approx(1.0)
    d = ne.to_dict()
    assert d["score_kind"] == "nested" and d["ci"] == [lo, hi] and d["n_repeats"] == 2


def test_nested_repeats_need_a_reseedable_splitter():
    from featuresift.errors import InputError

    X = np.random.default_rng(0).normal(size=(30, 2))
    y = np.repeat([0, 1], 15)
    with pytest.raises(InputError, match="n_repeats=2 needs an outer splitter that shuffles"):
        nested_evaluation(X, y, GaussianNB(), outer_cv=StratifiedKFold(3), n_repeats=2,
                          inner_cv=3, n_features=1)


def test_an_empty_answer_is_scored_by_the_prior_only_model():
    from sklearn.dummy import DummyClassifier
    from sklearn.metrics import get_scorer

    from featuresift.nested import _fit_score

    rng = np.random.default_rng(3)
    X = rng.normal(size=(40, 3))
    y = (np.arange(40) % 3 == 0).astype(int)
    tr, te = np.arange(30), np.arange(30, 40)
    scorer = get_scorer("neg_log_loss")
    got = _fit_score(GaussianNB(), scorer, X[tr], y[tr], X[te], y[te], [], True)
    # Reference: scikit-learn's DummyClassifier(strategy="prior") on the same rows.
    ref = DummyClassifier(strategy="prior").fit(X[tr], y[tr])
    assert got == pytest.approx(scorer(ref, X[te], y[te]), rel=1e-12)


def test_interval_is_cut_to_the_values_the_score_can_take():
    # Wine with GaussianNB: outer accuracies 0.94-1.0, so the corrected-t interval
    # (Nadeau & Bengio 2003) reaches past 1; accuracy cannot, so the upper end is 1.
    from scipy import stats
    from sklearn.datasets import load_wine

    X, y = load_wine(return_X_y=True)
    ne = nested_evaluation(X, y, GaussianNB(), outer_cv=5, inner_cv=3, strategy="forward",
                           n_features=3, pick="best")
    s = np.asarray(ne.outer_scores)
    half = stats.t.ppf(0.975, s.size - 1) * np.sqrt(
        (1 / s.size + ne.test_train_ratio) * s.var(ddof=1))
    assert s.mean() + half > 1  # the case this guards
    assert ne.ci == pytest.approx((s.mean() - half, 1.0), abs=1e-12)
