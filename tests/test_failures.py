"""Failed folds are never averaged away: excluded (error_score NaN) or scored with the
user's error_score, counted per subset in every output, and never a crash."""

from __future__ import annotations

import csv
import json
import math
import warnings

import numpy as np
import pytest
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import KFold, cross_val_score

from featuresift import SelectionProblem, run_search
from featuresift.engine.evaluator import CriterionEvaluator, CrossValidationEvaluator
from featuresift.engine.records import DROPPED, FAILED
from featuresift.errors import FitFailedError, InputError
from featuresift.frontier import budget_sweep
from featuresift.report import render_report
from featuresift.result import SearchResult
from featuresift.selector import MeasurementSelector

RAW = {"references": False, "pick": "best", "guard": "off"}  # the strategy's own answer

pytestmark = pytest.mark.usefixtures("single_blas_thread")

MARKS = (0.25, 1.25)


class FailsOnMark(ClassifierMixin, BaseEstimator):
    """Logistic regression that raises when a training set holds a value of ``MARKS``."""

    def fit(self, X, y):
        if np.any(np.isin(X, MARKS)):
            raise ValueError("marked value in the training data")
        self.model_ = LogisticRegression().fit(X, y)
        self.classes_ = self.model_.classes_
        return self

    def predict(self, X):
        return self.model_.predict(X)

    def predict_proba(self, X):
        return self.model_.predict_proba(X)


def _four_of_five_fail():
    """Column 3 is the class itself (a perfect score wherever it can be fitted), but rows
    0..19 carry a mark (class + 0.25, still perfectly separated): every fold except fold
    0 (test rows 0..19 of KFold(5)) trains on a marked row, so column 3 fails on 4 of 5
    folds and scores 1.0 on the other."""
    rng = np.random.default_rng(0)
    y = np.tile([0, 1], 50)
    X = rng.normal(size=(100, 4))
    X[:, 0] += 0.8 * y  # a useful, imperfect column
    X[:, 3] = y
    X[:20, 3] += 0.25
    return X, y


def _problem(scoring="accuracy"):
    X, y = _four_of_five_fail()
    return SelectionProblem(X, y, FailsOnMark(), cv=KFold(5), scoring=scoring)


def test_a_subset_with_failed_folds_is_never_chosen_by_default():
    p = _problem()
    res = run_search(p, "forward", **RAW, n_features=1, on_fit_error="record")
    # The mean of the one fold that fitted would be 1.0 (the wrong answer).
    assert res.selected == ["x0"]
    assert res.failed_folds == [] and res.success
    info = res.failures
    assert info["n_failed_fits"] == 4 and info["n_subsets"] == 1 and info["n_unscored"] == 1
    assert info["subsets"][0]["features"] == ["x3"]
    assert info["subsets"][0]["failed_folds"] == [1, 2, 3, 4]
    assert "marked value" in info["subsets"][0]["errors"][0]
    ev = CrossValidationEvaluator(p, on_fit_error="record").evaluate([[3]])[0]
    assert ev.status == FAILED and math.isnan(ev.mean) and ev.fold_scores[0] == 1.0


def test_error_score_counts_failed_folds_like_scikit_learn():
    p = _problem()
    ev = CrossValidationEvaluator(p, on_fit_error="record", error_score=0.0)
    (e,) = ev.evaluate([[3]])
    # Reference: scikit-learn's own handling of error_score for the same folds.
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = cross_val_score(FailsOnMark(), p.X[:, [3]], p.y, cv=KFold(5), error_score=0.0)
    assert list(e.fold_scores) == list(ref) == [1.0, 0.0, 0.0, 0.0, 0.0]
    assert e.mean == pytest.approx(ref.mean()) and e.status == "complete"
    assert e.n_failed_folds == 4 and e.failed_folds == (1, 2, 3, 4)
    # A generous error_score makes the subset win, and the result says so.
    res = run_search(p, "forward", **RAW, n_features=1, on_fit_error="record", error_score=1.0)
    assert res.selected == ["x3"] and res.failed_folds == [1, 2, 3, 4]
    assert res.score_mean == 1.0
    assert "4 of 5 folds FAILED" in res.summary()


def test_raise_policy_names_subset_and_fold():
    with pytest.raises(FitFailedError, match=r"subset \[x3\], fold 1 of 5") as info:
        CrossValidationEvaluator(_problem()).evaluate([[0], [3]])
    assert info.value.fold == 1 and "marked value" in info.value.reason


def _one_class_fold_problem():
    """KFold without shuffling on sorted labels: test fold 0 holds class 0 only, so ROC
    AUC is undefined there (scikit-learn returns NaN with an UndefinedMetricWarning)."""
    rng = np.random.default_rng(1)
    X = rng.normal(size=(50, 2))
    y = np.r_[np.zeros(10, int), (X[10:, 0] > 0).astype(int)]
    return SelectionProblem(X, y, LogisticRegression(), cv=KFold(5), scoring="roc_auc")


def test_nan_score_is_a_failure_under_both_policies():
    p = _one_class_fold_problem()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = cross_val_score(p.estimator, p.X[:, [0]], p.y, cv=KFold(5), scoring="roc_auc")
    assert math.isnan(ref[0]) and np.isfinite(ref[1:]).all()  # scikit-learn's verdict
    with pytest.raises(FitFailedError, match=r"subset \[x0\], fold 0 .*score is nan"):
        CrossValidationEvaluator(p).evaluate([[0]])
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no raw warning per fold escapes
        (e,) = CrossValidationEvaluator(p, on_fit_error="record").evaluate([[0]])
    assert e.status == FAILED and e.failed_folds == (0,) and math.isnan(e.mean)
    assert "Only one class" in e.details["errors"][0]
    np.testing.assert_allclose(e.fold_scores[1:], ref[1:], rtol=1e-12)


def test_every_fit_failing_gives_a_clear_answer_and_strict_json(tmp_path):
    res = run_search(_one_class_fold_problem(), "forward", **RAW, on_fit_error="record")
    assert not res.success and res.selected == []
    assert res.stop_reason.startswith("no subset could be scored")
    info = res.failures
    assert info["none_scored"] and info["n_subsets"] == info["n_evaluated"] >= 2
    text = res.to_json()  # allow_nan=False inside: no NaN or infinity literal
    assert "NaN" not in text and "Infinity" not in text
    assert json.loads(text)["failures"]["n_failed_fits"] == info["n_evaluated"]
    res.write(tmp_path)
    X, y = _one_class_fold_problem().X, _one_class_fold_problem().y
    sel = MeasurementSelector(LogisticRegression(), cv=KFold(5), scoring="roc_auc",
                              on_fit_error="record")
    with pytest.raises(FitFailedError, match="no subset could be scored"):
        sel.fit(X, y)


def test_outputs_show_the_counts(tmp_path):
    res = run_search(_problem(), "forward", **RAW, n_features=2, on_fit_error="record")
    res.write(tmp_path)
    data = json.loads((tmp_path / "result.json").read_text())
    assert data["failures"]["n_failed_fits"] == 8  # x3 and x0 + x3, 4 folds each
    assert data["score"]["failed_folds"] == []
    assert data["extras"]["engine"]["n_failed_subsets"] == 2
    with open(tmp_path / "path.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert all(r["n_failed_folds"] == "0" for r in rows)  # the path avoided them
    summary = res.summary()
    assert "Failed fits: 8 fits failed in 2 of" in summary
    assert "x3: fold 1, 2, 3, 4 of 5 failed (no score)" in summary
    report = render_report(res)
    assert "## Failed fits" in report and "none (not chosen)" in report
    table = {r.features: r for r in res.evaluations_frame().itertuples()}
    assert table[("x3",)].n_failed_folds == 4 and table[("x3",)].status == FAILED
    assert table[("x0",)].n_failed_folds == 0
    assert SearchResult.from_json(res.to_json()).to_dict() == res.to_dict()
    # With an error score that makes the failing column win, the path shows the count.
    res = run_search(_problem(), "forward", **RAW, n_features=1, on_fit_error="record",
                     error_score=1.0)
    assert res.path[-1].n_failed_folds == 4
    assert "| 4 |" in render_report(res)


def test_racing_keeps_failures_and_drops_apart():
    X, y = _four_of_five_fail()
    rng = np.random.default_rng(3)
    X = np.c_[X, rng.normal(size=(100, 4))]  # weak columns for the race to drop
    p = SelectionProblem(X, y, FailsOnMark(), cv=KFold(5))
    ev = CrossValidationEvaluator(p, on_fit_error="record", racing={"name": "t-race",
                                                                   "alpha": 0.3})
    out = ev.evaluate([[f] for f in range(8)])
    # Column 3 leaves the race as a failure at its first failed fold, not as "dropped".
    assert out[3].status == FAILED and out[3].failed_folds == (1,)
    assert ev.stats()["n_failed_fits"] == 1 and math.isnan(out[3].mean)
    dropped = [e for e in out if e.status == DROPPED]
    assert dropped and all(e.n_failed_folds == 0 and e.has_score for e in dropped)


def test_criterion_nan_is_a_failure():
    ev = CriterionEvaluator(lambda s: float("nan") if 1 in s else 0.5, n_features=2)
    bad, good = ev.evaluate([[1], [0]])
    assert bad.status == FAILED and bad.n_failed_folds == 1 and good.mean == 0.5


def test_error_score_is_checked_and_reaches_the_sweep():
    p = _problem()
    for bad in ("raise", True, math.inf):
        with pytest.raises(InputError, match="error_score"):
            CrossValidationEvaluator(p, error_score=bad)
    fr = budget_sweep(p, [1.0], strategy="forward", on_fit_error="record", error_score=0.0,
                      references=False)
    assert fr.results[0].failures["error_score"] == 0.0
    assert fr.to_frame()["n_failed_fits"].tolist() == [4]


def test_n_jobs_is_capped_at_the_cpu_count():
    from joblib import cpu_count

    from featuresift.engine.evaluator import capped_n_jobs

    cpus = cpu_count()
    # joblib's convention for negative values: -1 all CPUs, -2 all but one (at least 1).
    assert capped_n_jobs(-1) == (cpus, None)
    assert capped_n_jobs(-2)[0] == max(cpus - 1, 1) and capped_n_jobs(-10_000)[0] == 1
    p = _problem()
    ev = CrossValidationEvaluator(p, n_jobs=cpus + 14)
    with pytest.warns(UserWarning, match=f"using n_jobs={cpus}"):
        fast = ev.evaluate([[0], [1], [0, 1]])
    assert ev.stats()["n_jobs"] == cpus
    ref = CrossValidationEvaluator(p, n_jobs=1).evaluate([[0], [1], [0, 1]])
    assert [e.fold_scores for e in fast] == [e.fold_scores for e in ref]
    with pytest.raises(InputError, match="n_jobs"):
        CrossValidationEvaluator(p, n_jobs=0)


# ------------------------------------------------------------------ nested CV
def _inner_folds_failing(train: np.ndarray) -> int:
    """Inner KFold(5) folds of the outer training rows ``train`` whose own training rows
    hold a marked row (original rows 0..19): exactly where column 3 cannot be fitted."""
    return sum(bool(np.any(train[tr] < 20)) for tr, _ in KFold(5).split(train))


def _outer_splits(X, y):
    # nested_evaluation's outer folds for an int (its documented rule): scikit-learn's
    # StratifiedKFold, shuffled with the seed.
    from sklearn.model_selection import StratifiedKFold

    return list(StratifiedKFold(3, shuffle=True, random_state=0).split(X, y))


def test_nested_counts_inner_failures_and_never_chooses_by_the_surviving_folds():
    from featuresift import nested_evaluation

    X, y = _four_of_five_fail()
    ne = nested_evaluation(X, y, FailsOnMark(), outer_cv=3, inner_cv=KFold(5),
                           scoring="accuracy", strategy="forward", n_features=1,
                           on_fit_error="record", **RAW)
    splits = _outer_splits(X, y)
    # Column 3 would score 1.0 on its surviving folds; without a score it is never chosen.
    assert ne.selected == [["x0"]] * 3
    expected = [_inner_folds_failing(tr) for tr, _ in splits]
    assert min(expected) > 0 and ne.inner_failed_fits == expected
    assert ne.n_failed_inner_fits == sum(expected)
    # The nested scores are the plain refit-and-score of scikit-learn on each outer fold.
    for (tr, te), got in zip(splits, ne.outer_scores):
        ref = LogisticRegression().fit(X[tr][:, [0]], y[tr]).score(X[te][:, [0]], y[te])
        assert got == pytest.approx(ref, abs=1e-12)
    assert f"inner searches: {sum(expected)} fits failed, in 3 of 3 outer searches" \
        in ne.summary()
    assert ne.to_dict()["n_failed_inner_fits"] == sum(expected)
    assert any("Failed fits in the nested estimate" in line for line in ne.to_markdown())


def test_nested_outer_refit_failures_are_scored_with_error_score_or_raise():
    from featuresift import nested_evaluation

    X, y = _four_of_five_fail()
    opts = dict(outer_cv=3, inner_cv=KFold(5), scoring="accuracy", strategy="forward",
                n_features=1, must_include=["x3"], **RAW)
    # Every outer training part holds marked rows: the refit on x3 fails in each fold and
    # counts as error_score 0 there -- not left out of the mean.
    ne = nested_evaluation(X, y, FailsOnMark(), on_fit_error="record", error_score=0.0,
                           **opts)
    assert ne.outer_scores == [0.0, 0.0, 0.0] and ne.outer_mean == 0.0
    assert [f["outer_fold"] for f in ne.outer_failures] == [0, 1, 2]
    assert all("marked value" in f["error"] and f["scored_as"] == 0.0
               for f in ne.outer_failures)
    # Inside each search x3 scores 1.0 where it fits and error_score 0 where it fails.
    for (tr, _), inner in zip(_outer_splits(X, y), ne.inner_scores):
        assert inner == pytest.approx((5 - _inner_folds_failing(tr)) / 5)
    assert "outer fold 0 (repeat 0), refit on x3" in ne.summary()
    with pytest.raises(FitFailedError, match=r"outer fold 0 \(0-based\), inner search: fit "
                       r"failed on subset \[x3\], fold 1 of 5"):
        nested_evaluation(X, y, FailsOnMark(), on_fit_error="raise", **opts)
    # Under record with error_score NaN no subset of an outer search has a score: a
    # failure, said as such (not 'no allowed subset').
    with pytest.raises(FitFailedError, match="no subset could be scored"):
        nested_evaluation(X, y, FailsOnMark(), on_fit_error="record", **opts)
