"""Forward selection answers with the subset where it stopped, not a rejected candidate."""

from featuresift import CostModel, CriterionEvaluator, run_search


def test_tolerance_rejected_candidate_is_not_the_answer():
    # Additive criterion: a=0.5, b=0.3, c=0.001. With tol=0.002 the step that would add
    # c (gain 0.001) is turned down, so the answer must be {a, b} even though {a, b, c}
    # was evaluated and scores higher.
    # d (weight -0.01) keeps the "everything" reference below {a, b}, so the final pick
    # (which also weighs the references) sees the strategy's own answer win.
    weights = {0: 0.5, 1: 0.3, 2: 0.001, 3: -0.01}
    names = ["a", "b", "c", "d"]
    ev = CriterionEvaluator(lambda s: sum(weights[i] for i in s), 4, names)
    res = run_search(ev, "forward", costs=CostModel.uniform(names), tol=0.002)
    assert res.selected == ["a", "b"]
    assert res.path[-1].features == ("a", "b")
    assert ev.lookup([0, 1, 2]) is not None  # the better-scoring candidate was seen
    assert "0.002" in res.stop_reason
    # With tol=0 the small gain counts and c is bought.
    ev0 = CriterionEvaluator(lambda s: sum(weights[i] for i in s), 4, names)
    res0 = run_search(ev0, "forward", costs=CostModel.uniform(names), tol=0.0)
    assert res0.selected == ["a", "b", "c"]


def test_ratio_path_stops_only_when_no_candidate_gains_more_than_tol():
    # Additive criterion with prices: c (price 1) gains 0.3, a (price 0.01) 0.001 and
    # b (price 10) 0.05. After c, a has the best gain per cost (0.1 against 0.005) but
    # gains less than tol, so the ratio path must take b rather than stop: its stop
    # reason, "no candidate improves by more than tol", must be true of every candidate.
    weights = {0: 0.001, 1: 0.05, 2: 0.3}
    names = ["a", "b", "c"]
    cm = CostModel(names, {"a": 0.01, "b": 10.0, "c": 1.0})
    ev = CriterionEvaluator(lambda s: sum(weights[i] for i in s), 3, names)
    res = run_search(ev, "forward", costs=cm, budget=11.005, tol=0.002,
                     cost_rule="ratio", pick="best")
    assert [row.features for row in res.path] == [("c",), ("b", "c")]
    assert res.selected == ["b", "c"]
