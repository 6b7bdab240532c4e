"""Sequential floating search (SFFS, SBFS).

Reference: Pudil, Novovičová & Kittler (1994), "Floating search methods in feature
selection", Pattern Recognition Letters 15(11); algorithm steps from memory plus a secondary
tutorial. The six-feature example is hand-traced and computed for these tests.
"""

from __future__ import annotations

from itertools import combinations

import numpy as np
import pytest

from featuresift import CostModel, CriterionEvaluator, run_search
from featuresift.strategies import (
    FloatingBackwardSearch,
    FloatingForwardSearch,
    ForwardSelection,
    SearchSpace,
)

# Pudil, Novovičová & Kittler (1994), hand-traced six-feature example computed for this test:
# J per subset; subsets not listed have J = 0 and are never queried.
_TABLE = """
a 40  b 29  c 6  d 3  e 41  f 32
ac 10 ae 8 af 39 be 4 ce 7 cf 21 de 5 ef 15
abc 16 abd 36 abf 14 acd 9 acf 37 adf 19 aef 20 bcd 34 bef 1 cdf 12 cef 18 def 17
abcd 35 abcf 11 abdf 22 abef 23 acdf 30 acef 24 adef 38 bcdf 33
abcde 26 abcdf 31 abcef 25 abdef 2 acdef 27 bcdef 13   abcdef 28
"""
_NAMES = list("abcdef")


RAW = {"references": False, "pick": "best", "guard": "off"}  # the strategy's own answer

def _six_feature_space(**kwargs) -> SearchSpace:
    tokens = _TABLE.split()
    table = {
        tuple(_NAMES.index(ch) for ch in key): float(value)
        for key, value in zip(tokens[::2], tokens[1::2])
    }
    ev = CriterionEvaluator(lambda s: table.get(s, 0.0), 6, _NAMES)
    return SearchSpace(ev, CostModel.uniform(_NAMES), **kwargs)


def _letters(subset) -> str:
    return "".join(_NAMES[i] for i in subset)


def test_sffs_reproduces_published_path_size_by_size():
    space = _six_feature_space()
    FloatingForwardSearch(sequential_floor=False).run(space)
    steps = [(st.action, _letters(st.subset), st.scored.value) for st in space.path]
    # Hand-traced SFFS steps 1-6 (Pudil, Novovičová & Kittler 1994 algorithm).
    assert steps == [
        ("add", "e", 41), ("add", "ef", 15), ("add", "aef", 20),
        ("exclude", "af", 39),
        ("add", "acf", 37),
        ("add", "acdf", 30),
        ("add", "abcdf", 31), ("exclude", "abcd", 35),
        ("add", "abcdf", 31), ("add", "abcdef", 28),
    ]
    records = space.extras["best_by_size"]
    # Hand-traced SFFS records: {2: af 39, 3: acf 37, 4: abcd 35, 5: abcdf 31}.
    assert {k: ("".join(v["features"]), v["value"]) for k, v in records.items() if 2 <= k <= 5} \
        == {2: ("af", 39), 3: ("acf", 37), 4: ("abcd", 35), 5: ("abcdf", 31)}


def test_sfs_path_and_floating_not_above_it_everywhere():
    space = _six_feature_space()
    ForwardSelection(n_features=6).run(space)
    # Hand-traced SFS: e(41) -> ef(15) -> aef(20) -> adef(38) -> acdef(27) -> abcdef(28).
    assert [(_letters(st.subset), st.scored.value) for st in space.path] == [
        ("e", 41), ("ef", 15), ("aef", 20), ("adef", 38), ("acdef", 27), ("abcdef", 28)
    ]
    sffs = _six_feature_space()
    FloatingForwardSearch(sequential_floor=False).run(sffs)
    # Not a theorem: SFFS is worse than SFS at size 4 on this criterion (35 < 38).
    assert sffs.extras["best_by_size"][4]["value"] == 35 < 38


def test_sequential_floor_keeps_the_better_record_per_size():
    space = _six_feature_space()
    FloatingForwardSearch(sequential_floor=True).run(space)
    got = {k: ("".join(v["features"]), v["value"])
           for k, v in space.extras["best_by_size"].items()}
    # max(SFS, SFFS) per size, values from the hand-traced six-feature example.
    assert got[4] == ("adef", 38)
    assert got[2] == ("af", 39) and got[3] == ("acf", 37) and got[5] == ("abcdf", 31)


def test_n_features_answers_with_the_record_of_that_size():
    costs = CostModel.uniform(_NAMES)
    res = run_search(_six_feature_space().evaluator, "floating-forward", **RAW, n_features=4,
                     costs=costs, sequential_floor=False)
    # Stops at size 4: acdf(30) is the record then (hand-traced SFFS, step 4).
    assert "".join(res.selected) == "acdf"
    assert res.extras["best_by_size"].keys() == {1, 2, 3, 4}
    # Looking one size beyond lets the backtrack from abcdf improve size 4 (step 5).
    res = run_search(_six_feature_space().evaluator, "floating-forward", **RAW, n_features=4,
                     look_beyond=1, costs=costs, sequential_floor=False)
    assert "".join(res.selected) == "abcd" and res.score_mean == 35


def _random_criterion(d: int, seed: int):
    rng = np.random.default_rng(seed)
    values = {s: float(rng.random()) for k in range(d + 1) for s in combinations(range(d), k)}
    return lambda s: values[s]


@pytest.mark.parametrize("cls", [FloatingForwardSearch, FloatingBackwardSearch])
@pytest.mark.parametrize("seed", range(6))
def test_records_never_decrease_and_search_terminates(cls, seed):
    names = [f"x{i}" for i in range(8)]
    ev = CriterionEvaluator(_random_criterion(8, seed), 8, names)
    snapshots = []
    space = SearchSpace(ev, CostModel.uniform(names),
                        callback=lambda step: snapshots.append(
                            {k: v["value"] for k, v in space.extras["best_by_size"].items()}))
    cls().run(space)
    assert snapshots
    for before, after in zip(snapshots, snapshots[1:]):
        for size, value in before.items():
            assert after[size] >= value
    # Each record is the best evaluated allowed subset of its size.
    for size, rec in space.extras["best_by_size"].items():
        best = max(s.value for s in space.visited.values() if len(s.subset) == size)
        assert rec["value"] == best


def test_additive_criterion_floating_equals_sequential():
    # Follows from the Pudil et al. (1994) steps: with an additive J no backtrack succeeds,
    # so SFFS = SFS.
    rng = np.random.default_rng(3)
    w = rng.random(7)
    names = [f"x{i}" for i in range(7)]

    def run(strategy):
        space = SearchSpace(CriterionEvaluator(lambda s: float(w[list(s)].sum()), 7, names),
                            CostModel.uniform(names))
        strategy.run(space)
        return space

    fl = run(FloatingForwardSearch(sequential_floor=False))
    sq = run(ForwardSelection(n_features=7))
    assert [st.subset for st in fl.path] == [st.subset for st in sq.path]
    assert all(st.action == "add" for st in fl.path)


@pytest.mark.parametrize("seed", range(4))
def test_backward_is_the_mirror_of_forward_on_complements(seed):
    # SBFS on J equals SFFS on J'(T) = J(all - T): records match size d <-> n - d.
    n = 7
    crit = _random_criterion(n, 100 + seed)
    full = set(range(n))
    names = [f"x{i}" for i in range(n)]
    back = SearchSpace(CriterionEvaluator(crit, n, names), CostModel.uniform(names))
    FloatingBackwardSearch(sequential_floor=False).run(back)
    mirrored = SearchSpace(
        CriterionEvaluator(lambda t: crit(tuple(sorted(full - set(t)))), n, names),
        CostModel.uniform(names))
    FloatingForwardSearch(n_features=n - 1, sequential_floor=False).run(mirrored)
    for size, rec in back.extras["best_by_size"].items():
        if 1 <= size < n:
            assert rec["value"] == mirrored.extras["best_by_size"][n - size]["value"]


def test_floating_stays_within_budget_and_limits():
    names = [f"x{i}" for i in range(8)]
    costs = CostModel(names, {n: 1.0 + i % 3 for i, n in enumerate(names[:5])},
                      panels={"lab": (3.0, names[5:])})
    ev = CriterionEvaluator(_random_criterion(8, 11), 8, names)
    space = SearchSpace(ev, costs, budget=6.0, must_include=[1], never_include=[4],
                        max_features=4)
    FloatingForwardSearch().run(space)
    assert space.visited and all(space.is_allowed(s) for s in space.visited)
    res = run_search(CriterionEvaluator(_random_criterion(8, 11), 8, names),
                     "floating-backward", **RAW, costs=costs, budget=6.0,
                     must_include=["x1"], never_include=["x4"], max_features=4,
                     sequential_floor=False)
    assert costs.cost(res.support) <= 6.0 and "x1" in res.selected and len(res.selected) <= 4
    # Every step after the plain exclusions phase is allowed.
    first_allowed = next(i for i, r in enumerate(res.path) if r.cost <= 6.0
                         and len(r.features) <= 4)
    assert all(r.cost <= 6.0 for r in res.path[first_allowed:])


def test_cycle_guard_reports_repeated_state():
    from featuresift.strategies.floating import _SizeRecords

    space = _six_feature_space()
    records = _SizeRecords(space)
    assert not records.seen_before((0, 1))
    assert records.seen_before((0, 1))
    assert "cycle guard" in space.stop_reason
