"""Cost arithmetic of CostModel on hand-worked examples.

The cost of a subset S is C(S) = sum of the prices of the lone features in S plus, for
each panel that S touches, the panel price paid once (the grouped/shared test-cost model
of Turney 1995, JAIR 2, and Paclik et al. 2002, SSPR/SPR, LNCS 2396; the latter cited from
memory).
Every expected number below is worked out by hand from that formula.
"""

from __future__ import annotations

import itertools
import math
import random

import pytest

from featuresift.costs import CostLine, CostModel
from featuresift.errors import InputError

NAMES = ["moisture", "protein", "don", "zea", "falling", "temp"]


@pytest.fixture
def lab() -> CostModel:
    return CostModel(
        NAMES,
        {"moisture": 0.0, "protein": 6.0, "falling": 12.0, "temp": 0.0},
        panels={"myco": (48.0, ["don", "zea"])},
        unit="EUR",
    )


@pytest.mark.parametrize(
    ("subset", "expected"),
    [
        ([], 0.0),  # hand-worked: nothing bought
        (["moisture"], 0.0),  # zero-cost feature already on hand
        (["moisture", "temp"], 0.0),  # 0 + 0
        (["protein"], 6.0),
        (["don"], 48.0),  # one panel member: the whole panel is paid
        (["don", "zea"], 48.0),  # both members: the panel is paid once, not twice
        (["protein", "don", "zea", "falling"], 66.0),  # 6 + 48 + 12
        (["moisture", "protein", "zea", "temp"], 54.0),  # 0 + 6 + 48 + 0
        (["don", "don"], 48.0),  # a repeated feature counts once
    ],
)
def test_subset_cost_hand_worked(lab, subset, expected):
    assert lab.cost(subset) == expected


def test_indices_and_names_agree(lab):
    # hand-worked: columns 1, 2, 4 are protein, don, falling: 6 + 48 + 12 = 66
    assert lab.cost([1, 2, 4]) == lab.cost(["protein", "don", "falling"]) == 66.0


@pytest.mark.parametrize(
    ("base", "feature", "expected"),
    [
        (["don"], "zea", 0.0),  # the panel is already paid
        ([], "zea", 48.0),  # first panel member pays the panel
        (["protein"], "falling", 12.0),
        (["falling"], "falling", 0.0),  # already in the subset
        (["protein", "zea"], "moisture", 0.0),  # zero-cost feature
        (["moisture"], "don", 48.0),
    ],
)
def test_marginal_cost(lab, base, feature, expected):
    assert lab.marginal_cost(base, feature) == expected


def test_breakdown_lines_in_column_order(lab):
    lines = lab.breakdown(["falling", "zea", "moisture", "don"])
    # hand-worked: moisture (col 0), the panel (first member don, col 2), falling (col 4)
    assert lines == [
        CostLine("moisture", "feature", ("moisture",), 0.0),
        CostLine("myco", "panel", ("don", "zea"), 48.0),
        CostLine("falling", "feature", ("falling",), 12.0),
    ]
    assert math.fsum(line.cost for line in lines) == lab.cost(["falling", "zea", "moisture", "don"])


def test_breakdown_of_one_panel_member_names_only_that_member(lab):
    assert lab.breakdown(["zea"]) == [CostLine("myco", "panel", ("zea",), 48.0)]


def test_feasibility_absorbs_float_rounding():
    cm = CostModel(["a", "b", "c"], {"a": 0.1, "b": 0.2, "c": 0.3})
    # IEEE 754 doubles: 0.1 + 0.2 == 0.30000000000000004 > 0.3 (Python float semantics)
    assert 0.1 + 0.2 > 0.3
    assert cm.cost(["a", "b"]) == math.fsum([0.1, 0.2])  # reference: math.fsum (stdlib)
    assert cm.is_feasible(["a", "b"], 0.3)
    assert cm.is_feasible(["c"], 0.3)
    assert not cm.is_feasible(["a", "b"], 0.29)
    assert not cm.is_feasible(["a", "c"], 0.3)  # 0.4 is a real excess, not rounding
    assert cm.is_feasible(["a", "b", "c"], None)  # no budget: everything is feasible


def test_cost_does_not_depend_on_order():
    # Naive left-to-right sums of these prices depend on the order; math.fsum (stdlib,
    # Shewchuk's exactly rounded summation) does not, and is the reference here.
    prices = [1e16, 1.0, 1.0, 0.1, 0.7, 3.3, 1e-3, 2.5, 1.0, 1.0]
    names = [f"f{i}" for i in range(len(prices))]
    cm = CostModel(names, dict(zip(names, prices)))
    orders = [list(range(len(prices))), list(reversed(range(len(prices))))]
    rng = random.Random(0)
    for _ in range(20):
        order = list(range(len(prices)))
        rng.shuffle(order)
        orders.append(order)
    naive = {sum(prices[i] for i in order) for order in orders}
    assert len(naive) > 1  # the example really is order-sensitive for naive sums
    costs = {cm.cost(order) for order in orders}
    costs |= {cm.cost([names[i] for i in order]) for order in orders}
    assert costs == {math.fsum(prices)}


def test_cheapest_feature_cost_counts_a_panel_as_one_purchase():
    cm = CostModel(["a", "b", "c"], {"a": 7.0}, panels={"p": (5.0, ["b", "c"])})
    assert cm.cheapest_feature_cost() == 5.0  # hand-worked: min(7, panel 5)


def test_uniform_costs_count_features():
    cm = CostModel.uniform(["x", "y", "z"])
    assert cm.cost(["x", "z"]) == 2.0
    assert cm.unit == "features"


def test_to_dict_rebuilds_the_same_model(lab):
    d = lab.to_dict()
    again = CostModel(
        NAMES, d["features"],
        panels={p: (v["cost"], v["features"]) for p, v in d["panels"].items()},
        unit=d["unit"],
    )
    for subset in (["don"], ["protein", "zea", "falling"], NAMES):
        assert again.cost(subset) == lab.cost(subset)
    assert d["unit"] == "EUR"


# ------------------------------------------------------------------ bad input


@pytest.mark.parametrize(
    ("costs", "panels", "match"),
    [
        ({"a": -1.0, "b": 1.0}, None, r"costs\.features\.a: cost must be >= 0"),
        ({"a": float("nan"), "b": 1.0}, None, r"costs\.features\.a: cost is NaN"),
        ({"a": float("inf"), "b": 1.0}, None, r"costs\.features\.a: cost is infinite"),
        ({"a": "3 EUR", "b": 1.0}, None, r"costs\.features\.a: cost must be a number"),
        ({"a": True, "b": 1.0}, None, r"costs\.features\.a: cost must be a number"),
        ({"a": None, "b": 1.0}, None, r"costs\.features\.a: cost must be a number"),
        ({"a": 1.0}, None, r"no cost given for candidate feature\(s\): b"),
        ({"a": 1.0, "b": 1.0, "zz": 2.0}, None, r"costs\.features\.zz: 'zz' is not a candidate"),
        ({"a": 1.0}, {"p": (2.0, ["b", "nope"])}, r"costs\.panels\.p: feature 'nope' is not"),
        ({}, {"p": (2.0, ["a"]), "q": (3.0, ["a", "b"])}, r"costs\.panels\.q: feature 'a' is "
         r"already in panel 'p'"),
        ({"a": 1.0, "b": 1.0}, {"p": (2.0, ["b"])}, r"costs\.panels\.p: feature 'b' has its "
         r"own cost"),
        ({"a": 1.0, "b": 1.0}, {"p": (2.0, [])}, r"costs\.panels\.p: a panel needs at least"),
        ({"a": 1.0}, {"p": (-2.0, ["b"])}, r"costs\.panels\.p\.cost: cost must be >= 0"),
        ({"a": 1.0}, {"p": ("cheap", ["b"])}, r"costs\.panels\.p\.cost: cost must be a number"),
        ({"a": 1.0}, {"p": (float("nan"), ["b"])}, r"costs\.panels\.p\.cost: cost is NaN"),
    ],
)
def test_bad_costs_raise_input_error_naming_the_place(costs, panels, match):
    with pytest.raises(InputError, match=match):
        CostModel(["a", "b"], costs, panels=panels)


def test_repeated_feature_names_are_rejected():
    with pytest.raises(InputError, match="repeated: a"):
        CostModel(["a", "b", "a"], {"a": 1.0, "b": 1.0})


@pytest.mark.parametrize("subset", [["nope"], [7], [-1]])
def test_unknown_feature_in_a_subset_is_rejected(lab, subset):
    with pytest.raises(InputError, match="unknown feature 'nope'|out of range"):
        lab.cost(subset)


def _random_cost_model(rng, n):
    names = [f"f{i}" for i in range(n)]
    cols = list(range(n))
    rng.shuffle(cols)
    prices = [0.0, 0.1, 0.2, 0.3, 1.0, 2.5]
    panels, singles, i = {}, {}, 0
    while i < n:
        if rng.random() < 0.3 and i + 1 < n:
            m = rng.randint(2, min(3, n - i))
            panels[f"p{i}"] = (rng.choice(prices + [rng.random()]),
                               [names[c] for c in cols[i:i + m]])
            i += m
        else:
            singles[names[cols[i]]] = rng.choice(prices + [3 * rng.random()])
            i += 1
    return CostModel(names, singles, panels=panels)


def test_allowed_subsets_match_brute_force_with_panels_and_limits():
    # Reference: every subset tested one by one with is_feasible (the budget check the
    # searches use); prices such as 0.1 + 0.2 against 0.3 probe the float tolerance.
    rng = random.Random(0)
    for _ in range(150):
        n = rng.randint(1, 8)
        cm = _random_cost_model(rng, n)
        must = rng.sample(range(n), rng.choice([0, 0, 1, 2]) if n > 2 else 0)
        never = [c for c in rng.sample(range(n), rng.choice([0, 1, 2]) if n > 3 else 0)
                 if c not in must]
        max_features = rng.choice([None, 1, 2, 3])
        budget = rng.choice([None, 0.3, 0.6, 1.0, 3.0, 5 * rng.random(),
                             cm.cost(rng.sample(range(n), min(n, 3)))])
        empty = rng.random() < 0.3
        brute = [
            s for k in range(n + 1) for s in itertools.combinations(range(n), k)
            if set(must) <= set(s) and not set(never) & set(s)
            and (max_features is None or len(s) <= max_features)
            and cm.is_feasible(s, budget) and (s or empty)
        ]
        allowed = cm.allowed(budget, must_include=must, never_include=never,
                             max_features=max_features, include_empty=empty)
        assert list(allowed) == brute
        assert allowed.count() == len(brute)
        assert allowed.count(limit=2) == min(len(brute), 3)


def test_allowed_subsets_counts_large_problems_without_listing():
    cm = CostModel.uniform([f"x{i}" for i in range(40)])
    # sum_{k=1..10} C(40, k) (computed with math.comb)
    assert cm.allowed(10).count() == sum(math.comb(40, k) for k in range(1, 11))
    assert cm.allowed(None).count(limit=1000) == 1001
