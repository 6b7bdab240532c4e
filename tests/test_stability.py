"""Stability indices against the published formulas and hand-computed values.

Reference values: Kuncheva (2007) consistency index and Nogueira, Sechidis & Brown
(2018, JMLR 18(174)) estimator; the hand values are computed from the published formulas
with exact rational arithmetic for these tests.
"""

from fractions import Fraction
from itertools import combinations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from featuresift.errors import InputError
from featuresift.stability import kuncheva_index, mean_kuncheva, nogueira_stability


def test_kuncheva_hand_values():
    # Kuncheva (2007) formula, computed with exact rationals: n=10, A={1,2,3}, B={1,2,4} -> 11/21
    assert kuncheva_index({1, 2, 3}, {1, 2, 4}, 10) == pytest.approx(11 / 21, abs=1e-15)
    # Kuncheva (2007) formula: disjoint k=5 of n=10 -> -1; disjoint k=3 -> -9/21
    assert kuncheva_index({0, 1, 2, 3, 4}, {5, 6, 7, 8, 9}, 10) == pytest.approx(-1.0)
    assert kuncheva_index({0, 1, 2}, {3, 4, 5}, 10) == pytest.approx(-9 / 21)
    assert kuncheva_index({2, 5}, {5, 2}, 10) == 1.0


def test_kuncheva_undefined_cases_raise():
    with pytest.raises(InputError, match="undefined"):
        kuncheva_index(set(), set(), 10)
    with pytest.raises(InputError, match="undefined"):
        kuncheva_index(set(range(4)), set(range(4)), 4)
    with pytest.raises(InputError, match="equal sizes"):
        kuncheva_index({1}, {1, 2}, 4)


def test_nogueira_hand_values():
    # Nogueira, Sechidis & Brown (2018) formula; values computed with exact rational
    # arithmetic for this test.
    Z = [[0, 1], [0, 1], [0, 2]]
    assert nogueira_stability(Z, 5) == pytest.approx(4 / 9, abs=1e-12)
    assert mean_kuncheva(Z, 5) == pytest.approx(4 / 9, abs=1e-12)
    varying = np.array([[1, 1, 1, 0, 0, 0], [1, 1, 0, 0, 0, 0], [1, 1, 1, 1, 0, 0]])
    assert nogueira_stability(varying) == pytest.approx(5 / 9, abs=1e-12)
    assert nogueira_stability([[0, 1], [2, 3]], 4) == pytest.approx(-1.0)
    assert nogueira_stability([[3, 1], [1, 3], [3, 1]], 6) == pytest.approx(1.0)


@settings(max_examples=60, deadline=None)
@given(
    d=st.integers(3, 12),
    k_frac=st.floats(0.1, 0.9),
    m=st.integers(2, 6),
    seed=st.integers(0, 10_000),
)
def test_nogueira_equals_mean_kuncheva_for_equal_sizes(d, k_frac, m, seed):
    # Identity computed from the published formulas of Kuncheva (2007) and Nogueira,
    # Sechidis & Brown (2018) with exact rational arithmetic: for equal subset sizes the
    # Nogueira estimator equals the mean pairwise Kuncheva index.
    k = min(d - 1, max(1, round(k_frac * d)))
    rng = np.random.default_rng(seed)
    subsets = [set(rng.choice(d, size=k, replace=False).tolist()) for _ in range(m)]
    exact = sum(
        (Fraction(len(a & b) * d - k * k, k * (d - k)) for a, b in combinations(subsets, 2)),
        Fraction(0),
    ) / Fraction(m * (m - 1), 2)
    assert nogueira_stability(subsets, d) == pytest.approx(float(exact), abs=1e-12)
