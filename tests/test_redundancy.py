"""Redundancy penalties, their incremental updates, mRMR and the redundancy objective."""

import numpy as np
import pytest
from sklearn.metrics import mutual_info_score

from featuresift.engine.records import Evaluation
from featuresift.errors import InputError
from featuresift.filters import (
    AbsCorrelationPenalty,
    MutualInfoPenalty,
    RedundancyPenalizedObjective,
    RunningRedundancy,
    abs_correlation_matrix,
    make_penalty,
    mrmr,
)
from featuresift.objectives import OBJECTIVES, make_objective

# Fixture where the MID and MIQ criteria of Peng, Long & Ding (2005) choose different second
# features (plug-in MI in nats; values computed from the published formulas for this test and
# cross-checked with sklearn.metrics.mutual_info_score).
C7 = np.array([0, 0, 0, 0, 1, 1, 1, 1])
X7 = np.array([
    [0, 1, 1, 1, 1, 0, 1, 1],  # x1
    [0, 0, 0, 1, 0, 1, 0, 1],  # x2
    [0, 0, 0, 0, 0, 1, 0, 0],  # x3
    [1, 1, 0, 0, 1, 1, 1, 1],  # x4
], float).T


RAW = {"references": False, "pick": "best", "guard": "off"}  # the strategy's own answer

def test_mrmr_mid_and_miq_reproduce_published_fixture():
    mid = mrmr(X7, C7, 2, "difference", keep_gains=True)
    miq = mrmr(X7, C7, 2, "quotient", keep_gains=True)
    # Relevances I(x_j; c), computed with mutual_info_score for this test.
    np.testing.assert_allclose(mid.relevance, [0.0, 0.0338221, 0.0956026, 0.2157616],
                               atol=5e-8)
    # First pick x4 in both; MID second x3, MIQ second x2 (Peng, Long & Ding 2005 criteria).
    assert mid.selected == ["x3", "x2"]  # 0-based names: x3 is the fixture's x4
    assert miq.selected == ["x3", "x1"]
    # Second-step criterion values, computed from the published formulas:
    # MID x1 -0.084950, x2 0.022931, x3 0.056753.
    np.testing.assert_allclose(mid.candidate_gains[1][:3], [-0.084950, 0.022931, 0.056753],
                               atol=5e-7)
    # MIQ x1 0.000000, x2 3.105559, x3 2.460860.
    np.testing.assert_allclose(miq.candidate_gains[1][:3], [0.0, 3.105559, 2.460860],
                               atol=5e-6)
    # Redundancies with x4: I(x1;x4)=0.0849495, I(x2;x4)=0.0108908, I(x3;x4)=0.0388493.
    sim = MutualInfoPenalty().prepare(X7).similarity(3)
    np.testing.assert_allclose(sim[:3], [0.0849495, 0.0108908, 0.0388493], atol=5e-8)


def test_mi_penalty_equals_sklearn_mutual_info_score():
    rng = np.random.default_rng(0)
    X = rng.integers(0, 3, size=(60, 5)).astype(float)
    sim = MutualInfoPenalty().prepare(X).similarity(2)
    for j in range(5):
        assert sim[j] == pytest.approx(mutual_info_score(X[:, j], X[:, 2]), rel=1e-10, abs=1e-15)


def test_miq_zero_redundancy_is_infinite_gain_and_zero_relevance_is_zero():
    # x0 most relevant; x1 relevant and independent of x0 (redundancy 0 -> +inf);
    # x2 irrelevant (relevance 0 -> gain 0 whatever its redundancy).
    c = np.array([0, 0, 0, 0, 1, 1, 1, 1])
    X = np.array([
        [0, 0, 0, 1, 1, 1, 1, 1],
        [0, 0, 1, 0, 1, 0, 1, 1],
        [0, 1, 0, 1, 0, 1, 0, 1],
    ], float).T
    sel = mrmr(X, c, 2, "quotient", keep_gains=True)
    gains = sel.candidate_gains[1]
    assert sel.selected[0] == "x0"
    red = MutualInfoPenalty().prepare(X).similarity(0)
    rel = sel.relevance
    assert rel[2] == 0.0 and gains[2] == 0.0
    if red[1] == 0.0:
        assert np.isinf(gains[1])
    else:
        assert gains[1] == pytest.approx(rel[1] / red[1])


@pytest.mark.parametrize("name", ["max_abs_corr", "mean_abs_corr", "mutual_info"])
def test_running_redundancy_equals_recomputation(name):
    rng = np.random.default_rng(1)
    base = rng.normal(size=(80, 3))
    X = np.column_stack([base, base @ rng.normal(size=(3, 5)) + 0.5 * rng.normal(size=(80, 5))])
    pen = make_penalty(name).prepare(X)
    run = RunningRedundancy(pen, X.shape[1])
    chosen = [4, 0, 6, 2]
    for k, j in enumerate(chosen, 1):
        run.add(j)
        sims = np.array([pen.similarity(s) for s in chosen[:k]])  # from scratch
        expected = sims.max(axis=0) if pen.aggregate == "max" else sims.mean(axis=0)
        np.testing.assert_allclose(run.values(), expected, rtol=1e-12)
    if name != "mutual_info":
        C = np.abs(np.corrcoef(X, rowvar=False))  # numpy reference
        np.testing.assert_allclose(pen.similarity(4), C[4], rtol=1e-10)


def test_running_redundancy_reuses_cached_similarity_columns():
    X = np.random.default_rng(2).normal(size=(30, 4))

    class Counting(AbsCorrelationPenalty):
        calls = 0

        def similarity(self, j):
            Counting.calls += 1
            return super().similarity(j)

    pen = Counting("mean").prepare(X)
    cache: dict = {}
    for _ in range(2):
        run = RunningRedundancy(pen, 4, cache)
        run.add(1)
        run.add(3)
    assert Counting.calls == 2


def test_correlation_penalty_with_missing_values_is_finite():
    X = np.random.default_rng(3).normal(size=(40, 3))
    X[[1, 5], 0] = np.nan
    sim = AbsCorrelationPenalty().prepare(X).similarity(0)
    # Documented rule: a missing value is filled with its column mean.
    filled = X.copy()
    filled[[1, 5], 0] = np.nanmean(X[:, 0])
    np.testing.assert_allclose(sim, np.abs(np.corrcoef(filled, rowvar=False))[0], rtol=1e-10)


def test_make_penalty_errors():
    with pytest.raises(InputError, match="unknown redundancy penalty 'cosine'"):
        make_penalty("cosine")
    with pytest.raises(InputError, match="aggregate must be 'max' or 'mean'"):
        AbsCorrelationPenalty("median")


# --------------------------------------------------------------- objective
def test_redundancy_objective_registered_and_values():
    assert OBJECTIVES["redundancy_penalized"] is RedundancyPenalizedObjective
    rng = np.random.default_rng(4)
    X = rng.normal(size=(50, 4))
    X[:, 1] = X[:, 0] + 0.1 * rng.normal(size=50)
    obj = make_objective({"name": "redundancy_penalized", "weight": 0.2})
    with pytest.raises(InputError, match="has no data"):
        obj.value(Evaluation((0, 1), (0.9,)), 2.0)
    obj.bind(X)
    C = np.abs(np.corrcoef(X, rowvar=False))  # numpy reference
    expected = 0.9 - 0.2 * np.mean([C[0, 1], C[0, 3], C[1, 3]])
    assert obj.value(Evaluation((0, 1, 3), (0.9,)), 3.0) == pytest.approx(expected, rel=1e-10)
    assert obj.value(Evaluation((2,), (0.7,)), 1.0) == 0.7
    mx = RedundancyPenalizedObjective(0.2, correlation=abs_correlation_matrix(X), aggregate="max")
    assert mx.value(Evaluation((0, 1, 3), (0.9,)), 3.0) == pytest.approx(0.9 - 0.2 * C[0, 1])
    assert obj.describe() == {"name": "redundancy_penalized", "weight": 0.2, "aggregate": "mean"}


def test_redundancy_objective_steers_a_wrapper_away_from_duplicates():
    from sklearn.linear_model import LinearRegression

    from featuresift import SelectionProblem, run_search

    # Two noisy readings of one quantity (averaging them helps the model a lot) and a
    # weakly informative, unrelated measurement.
    rng = np.random.default_rng(5)
    n = 300
    truth, b = rng.normal(size=n), rng.normal(size=n)
    X = np.column_stack([truth + 0.5 * rng.normal(size=n), truth + 0.5 * rng.normal(size=n), b])
    y = truth + 0.2 * b + 0.1 * rng.normal(size=n)
    prob = SelectionProblem(X, y, LinearRegression(), cv=3, scoring="r2")
    plain = run_search(prob, "forward", **RAW, n_features=2)
    assert sorted(plain.support) == [0, 1]
    obj = RedundancyPenalizedObjective.from_data(X, weight=0.5)
    res = run_search(prob, "forward", **RAW, objective=obj, n_features=2)
    assert sorted(res.support) in ([0, 2], [1, 2])
    assert res.objective["name"] == "redundancy_penalized"
    assert res.objective["value"] == pytest.approx(
        res.score_mean - 0.5 * obj.redundancy(tuple(res.support)))


def test_redundancy_objective_rejects_bad_weight():
    with pytest.raises(InputError, match="objective.weight"):
        RedundancyPenalizedObjective(weight=-1)
