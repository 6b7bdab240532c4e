"""Racing rules: Hoeffding bound, Friedman statistic, and the keep/drop guarantees."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from scipy import stats

from featuresift.errors import InputError
from featuresift.racing import (
    FRace,
    HoeffdingRace,
    friedman_test,
    hoeffding_epsilon,
    make_race,
)


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
