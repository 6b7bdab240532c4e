"""Racing rules: Hoeffding bound, Friedman statistic, paired t-test, keep/drop guarantees."""

from __future__ import annotations

import copy

import numpy as np
import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from scipy import stats
from sklearn.linear_model import LogisticRegression

from featuresift import CrossValidationEvaluator, SelectionProblem
from featuresift.config import load_config
from featuresift.demo import GRAIN_CONFIG, make_grain_lots
from featuresift.engine.racing import (
    RACES,
    FRace,
    HoeffdingRace,
    TRace,
    friedman_test,
    hoeffding_epsilon,
    make_race,
)
from featuresift.engine.records import COMPLETE, DROPPED
from featuresift.errors import InputError


# Source: Hoeffding's inequality, P(|mean - mu| > eps) <= 2 exp(-2 n eps^2 / B^2), solved
# for eps = sqrt(B^2 ln(2/delta) / (2n)) as in the Hoeffding races of Maron & Moore (1994)
# (how the paper applies the bound is from memory); the tabulated eps values were computed
# from that formula with natural logs for this test.
@pytest.mark.parametrize(
    "B, delta, n, eps",
    [
        (1, 0.05, 100, 0.1358102),
        (1, 0.05, 10, 0.4294694),
        (1, 0.01, 1000, 0.0514700),
        (2, 0.05, 100, 0.2716203),
    ],
)
def test_hoeffding_epsilon_matches_table(B, delta, n, eps):
    assert hoeffding_epsilon(B, delta, n) == pytest.approx(eps, abs=5e-8)


def test_hoeffding_points_needed_for_eps_005():
    # Computed from Hoeffding's bound: eps = 0.05 with delta = 0.05, B = 1 needs
    # n >= ln(40) / (2 * 0.05^2) = 737.8, so 738 points.
    assert hoeffding_epsilon(1, 0.05, 738) <= 0.05 < hoeffding_epsilon(1, 0.05, 737)


@pytest.mark.parametrize("bad", [(0, 0.05, 10), (1, 0.0, 10), (1, 1.0, 10), (1, 0.05, 0)])
def test_hoeffding_epsilon_rejects_bad_input(bad):
    with pytest.raises(InputError):
        hoeffding_epsilon(*bad)


def test_friedman_pulse_data_check_value():
    # Source: Sprent & Smeeton, Applied Nonparametric Statistical
    # Methods, 3rd ed., section 6.3.2 (quoted in the scipy docs):
    # statistic = 10.57142857142857, p = 0.005063414171757498.
    before = [72, 96, 88, 92, 74, 76, 82]
    after = [120, 120, 132, 120, 101, 96, 112]
    later = [76, 95, 104, 96, 84, 72, 76]
    s, p = friedman_test([before, after, later])
    assert s == pytest.approx(10.57142857142857, rel=1e-12)
    assert p == pytest.approx(0.005063414171757498, rel=1e-9)


def test_friedman_agrees_with_scipy_with_ties():
    rng = np.random.default_rng(3)
    scores = rng.integers(0, 4, size=(6, 5)).astype(float)  # many ties per block
    s, p = friedman_test(scores)
    ref = stats.friedmanchisquare(*scores)
    assert s == pytest.approx(ref.statistic, rel=1e-12)
    assert p == pytest.approx(ref.pvalue, rel=1e-9)


def test_frace_drops_clearly_worse_and_keeps_leader():
    rng = np.random.default_rng(0)
    # Candidates of graded quality, consistent over 3 folds, in shuffled row order.
    order = rng.permutation(12)
    scores = 0.5 + 0.02 * order[:, None] + rng.normal(0, 0.003, size=(12, 3))
    keep = FRace().keep(scores, n_total_folds=5)
    assert keep[order == 11].all()  # the clearly best one
    assert not keep[order < 4].any()  # the clearly worst ones are dropped


def test_frace_waits_for_min_folds_and_keeps_ties():
    scores = np.array([[0.9], [0.1], [0.2]])
    assert FRace().keep(scores, 5).all()  # one fold: no test yet
    tied = np.full((5, 4), 0.7)
    assert FRace().keep(tied, 5).all()


def test_hoeffding_race_needs_many_folds():
    # With 5 folds and scores in [0, 1] the bound is wider than any difference.
    scores = np.array([[1.0] * 5, [0.0] * 5])
    assert HoeffdingRace(score_range=1.0).keep(scores, 5).all()
    many = np.array([[0.9] * 60, [0.1] * 60, [0.85] * 60])
    assert HoeffdingRace(score_range=1.0).keep(many, 60).tolist() == [True, False, True]


@settings(max_examples=60, deadline=None)
@given(
    arrays(np.float64, st.tuples(st.integers(2, 12), st.integers(1, 6)),
           elements=st.floats(0, 1, allow_nan=False)),
    st.sampled_from(["f-race", "hoeffding"]),
)
def test_leader_is_never_dropped(scores, rule):
    keep = make_race({"name": rule, "min_folds": 2}).keep(scores, 6)
    means = scores.mean(axis=1)
    assert keep[means == means.max()].all()


def test_nan_folds_rank_lowest():
    scores = np.array([[0.8, 0.81, 0.79]] + [[np.nan, np.nan, np.nan]] * 9)
    scores[1:] = np.nan
    keep = FRace(alpha=0.05).keep(np.vstack([scores, [[0.5, 0.52, 0.5]] * 3]), 5)
    assert keep[0]


@pytest.mark.parametrize(
    "spec, message",
    [("bogus", "unknown racing rule"), ({"name": "f-race", "alpha": 2}, "alpha"),
     ({"name": "f-race", "min_folds": 1}, "min_folds"), (3.5, "racing must be")],
)
def test_make_race_errors(spec, message):
    with pytest.raises(InputError, match=message):
        make_race(spec)


# ---------------------------------------------------------------- t-race
def _ttest_reference(scores, alpha, indifference):
    """Drop decisions of the t-race computed with scipy's paired t-test (the reference).

    Source: scipy.stats.ttest_rel(c - delta, leader, alternative="less") tests whether the
    mean of c - leader is below delta; c is dropped iff p < alpha. The leader is the first
    candidate with the best mean.
    """
    lead = int(np.argmax(scores.mean(axis=1)))
    drop = np.zeros(len(scores), dtype=bool)
    for i, row in enumerate(scores):
        if i != lead:
            p = stats.ttest_rel(row - indifference, scores[lead], alternative="less").pvalue
            drop[i] = p < alpha
    return drop


@pytest.mark.parametrize("indifference", [0.0, 0.005, 0.02])
@pytest.mark.parametrize("alpha", [0.05, 0.2])
def test_trace_matches_scipy_paired_ttest(alpha, indifference):
    rng = np.random.default_rng(11)
    checked = 0
    for _ in range(40):
        k, n = rng.integers(2, 8), rng.integers(2, 11)
        scores = 0.8 + rng.normal(0, 0.01, size=(k, 1)) + rng.normal(0, 0.01, size=(k, n))
        race = TRace(alpha=alpha, indifference=indifference)
        got = ~race.keep(scores, n_total_folds=10)
        np.testing.assert_array_equal(got, _ttest_reference(scores, alpha, indifference))
        checked += int(got.sum())
    assert checked > 0  # some candidates were dropped, so the comparison had teeth


def test_trace_bound_equals_ttest_1samp_form():
    # Source: scipy.stats.ttest_1samp(d - delta, 0, alternative="less") is the same test:
    # U < delta exactly when its p-value < alpha (one-sided Student t with n - 1 dof).
    rng = np.random.default_rng(5)
    scores = 0.7 + rng.normal(0, 0.02, size=(6, 5))
    lead = int(np.argmax(scores.mean(axis=1)))
    bounds = TRace(alpha=0.1).upper_bounds(scores)
    for i in range(6):
        if i == lead:
            continue
        d = scores[i] - scores[lead]
        p = stats.ttest_1samp(d - 0.01, 0.0, alternative="less").pvalue
        assert (bounds[i] < 0.01) == (p < 0.1)


def test_trace_ties_and_exact_ties():
    leader = [0.9, 0.92, 0.91, 0.93]
    scores = np.array([leader, leader, [0.91, 0.92, 0.90, 0.93], [0.5, 0.5, 0.5, 0.5]])
    # Indifference 0: candidates tied with the leader stay (t-race and hoeffding).
    assert TRace().keep(scores, 4).tolist() == [True, True, True, False]
    assert HoeffdingRace(score_range=1.0).keep(scores, 4)[:3].all()
    # An exact tie has s = 0, so U = m = 0: dropped as soon as the zone is not empty.
    assert TRace(indifference=0.005).keep(scores, 4).tolist() == [True, False, True, False]
    assert TRace(indifference=1e-9).keep(scores, 4)[1] == np.False_
    # The earliest of tied leaders is the leader: the later exact copy is dropped.
    assert TRace(indifference=0.005).keep(scores[[1, 0]], 4).tolist() == [True, False]


def test_hoeffding_indifference():
    many = np.array([[0.9] * 60, [0.1] * 60, [0.85] * 60, [0.9] * 60])
    base = HoeffdingRace(score_range=1.0)
    assert HoeffdingRace(score_range=1.0, indifference=0.0).keep(many, 60).tolist() == \
        base.keep(many, 60).tolist() == [True, False, True, True]
    # eps(60 folds, delta' = 0.05 / (4 * 60)) = sqrt(ln(9600) / 120) = 0.27643 (computed
    # from Hoeffding's bound): a candidate is dropped when mean + eps < 0.9 - eps + zone,
    # so the exact tie at 0.9 goes once the zone exceeds 2 eps, and 0.85 once it exceeds
    # 2 eps - 0.05.
    eps = hoeffding_epsilon(1.0, 0.05 / 240, 60)
    assert eps == pytest.approx(0.27643, abs=1e-5)
    below = HoeffdingRace(score_range=1.0, indifference=2 * eps - 0.001)
    assert below.keep(many, 60).tolist() == [True, False, False, True]
    above = HoeffdingRace(score_range=1.0, indifference=2 * eps + 0.001)
    assert above.keep(many, 60).tolist() == [True, False, False, False]
    assert above.describe()["indifference"] == pytest.approx(2 * eps + 0.001)


def test_trace_failed_folds():
    ok = [0.8, 0.82, 0.81]
    # A failed fold (NaN) is the worst score: dropped whenever the leader is finite.
    scores = np.array([ok, [0.9, np.nan, 0.95], [0.79, 0.83, 0.8]])
    bounds = TRace().upper_bounds(scores)
    assert bounds[1] == -np.inf and np.isfinite(bounds[[0, 2]]).all()
    assert TRace().keep(scores, 5).tolist() == [True, False, True]
    # Every candidate failed somewhere: no finite difference, nothing is dropped.
    all_failed = np.array([[0.8, np.nan, 0.8], [np.nan, 0.5, 0.5], [np.nan] * 3])
    assert TRace(indifference=0.1).keep(all_failed, 5).all()
    assert np.isnan(TRace().upper_bounds(all_failed)).all()


@settings(max_examples=80, deadline=None)
@given(
    arrays(np.float64, st.tuples(st.integers(2, 10), st.integers(2, 6)),
           elements=st.one_of(st.floats(0, 1, allow_nan=False), st.just(np.nan))),
    st.sampled_from(["f-race", "hoeffding", "t-race"]),
    st.sampled_from([0.0, 0.01, 0.5]),
    st.sampled_from([0.05, 0.5]),
)
def test_the_leader_is_never_dropped_any_rule(scores, rule, indifference, level):
    opts = {"delta": level} if rule == "hoeffding" else {"alpha": level}
    if rule != "f-race":
        opts["indifference"] = indifference
    keep = make_race({"name": rule, **opts}).keep(scores, 6)
    means = np.where(np.isnan(scores), -np.inf, scores).mean(axis=1)
    assert keep[int(np.argmax(means))]  # the leader: first best mean
    if rule == "f-race" or indifference == 0:
        assert keep[means == means.max()].all()


@pytest.mark.parametrize(
    "spec, message",
    [({"name": "t-race", "alpha": 0}, "alpha"), ({"name": "t-race", "alpha": True}, "alpha"),
     ({"name": "t-race", "indifference": -1}, "indifference"),
     ({"name": "t-race", "indifference": float("inf")}, "indifference"),
     ({"name": "t-race", "indifference": "0.1"}, "indifference"),
     ({"name": "t-race", "min_folds": 1}, "min_folds"),
     ({"name": "hoeffding", "indifference": -0.5}, "indifference"),
     ({"name": "t-race", "delta": 0.1}, "delta")],
)
def test_trace_option_errors(spec, message):
    with pytest.raises(InputError, match=message):
        make_race(spec)


def test_make_trace_from_spec():
    race = make_race({"name": "t-race", "alpha": 0.2, "indifference": 0.005})
    assert isinstance(race, TRace)
    assert race.describe() == {"name": "t-race", "min_folds": 2, "alpha": 0.2,
                               "indifference": 0.005}
    assert make_race("t-race").describe()["indifference"] == 0.0
    assert "t-race" in RACES


# ------------------------------------------------------ t-race in the evaluator
WINNER, TWIN = 3, 7


@pytest.fixture(scope="module")
def clear_winner_problem():
    """Column 3 separates the classes well; column 7 is an exact copy of it; the other
    columns carry graded, weaker signal."""
    rng = np.random.default_rng(1)
    y = np.repeat([0, 1], 80)
    X = rng.normal(size=(160, 8)) + np.outer(y, np.linspace(0.0, 0.9, 8))
    X[:, WINNER] = rng.normal(size=160) + 3.0 * y
    X[:, TWIN] = X[:, WINNER]
    return SelectionProblem(X, y, LogisticRegression(), cv=5)


def _race_outcome(problem, racing, n_jobs=1):
    ev = CrossValidationEvaluator(problem, racing=racing, n_jobs=n_jobs)
    res = ev.evaluate([[f] for f in range(8)])
    return ev, res


@pytest.mark.usefixtures("single_blas_thread")
@pytest.mark.parametrize("indifference", [0.0, 0.005])
def test_trace_in_the_evaluator(clear_winner_problem, indifference):
    spec = {"name": "t-race", "alpha": 0.05, "indifference": indifference}
    exact = CrossValidationEvaluator(clear_winner_problem).evaluate([[f] for f in range(8)])
    assert max(exact, key=lambda e: e.mean) is exact[WINNER]  # the true leader
    assert exact[WINNER].fold_scores == exact[TWIN].fold_scores
    ev, res = _race_outcome(clear_winner_problem, spec)
    assert res[WINNER].status == COMPLETE
    assert res[WINNER].fold_scores == exact[WINNER].fold_scores
    dropped = [e for e in res if e.status == DROPPED]
    assert dropped and ev.n_dropped == len(dropped) and ev.n_fits < 8 * 5
    for e in dropped:
        k = e.n_folds_run
        assert k < 5 and e.fold_scores[:k] == exact[e.subset[0]].fold_scores[:k]
    # The exact twin of the leader: kept with no indifference zone, dropped with one.
    assert res[TWIN].status == (COMPLETE if indifference == 0 else DROPPED)
    _, parallel = _race_outcome(clear_winner_problem, spec, n_jobs=2)
    assert [(e.status, e.n_folds_run, e.fold_scores) for e in parallel] == \
        [(e.status, e.n_folds_run, e.fold_scores) for e in res]


# ------------------------------------------------------------ t-race in the config
def _engine_config(tmp_path, engine):
    cfg = copy.deepcopy(GRAIN_CONFIG)
    make_grain_lots(n_lots=60, seed=3).to_csv(tmp_path / "lots.csv", index=False)
    cfg["data"] = {**cfg["data"], "path": "lots.csv"}
    cfg["engine"] = engine
    path = tmp_path / "run.yaml"
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    return path


def test_config_engine_racing_t_race(tmp_path):
    spec = {"name": "t-race", "alpha": 0.2, "indifference": 0.005}
    cfg = load_config(_engine_config(tmp_path, {"racing": spec}))
    assert cfg.extra["engine"]["racing"] == spec
    with pytest.raises(InputError, match=r"engine\.racing.*indifference|indifference.*engine"):
        load_config(_engine_config(tmp_path, {"racing": {**spec, "indifference": -1}}))
