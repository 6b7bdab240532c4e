"""Budget sweep: budgets respected, cache shared between budgets, efficiency flags."""

from itertools import combinations

import numpy as np
import pytest
from sklearn.datasets import load_wine
from sklearn.naive_bayes import GaussianNB

from featuresift import CostModel, CriterionEvaluator, SelectionProblem
from featuresift.errors import InputError
from featuresift.frontier import (
    Frontier,
    budget_sweep,
    cost_levels,
    default_budgets,
    efficient_points,
)
from featuresift.result import SearchResult


@pytest.fixture(scope="module")
def wine_problem():
    # scikit-learn's wine data (ships with scikit-learn); costs invented for the test.
    X, y = load_wine(return_X_y=True)
    names = [f"m{i}" for i in range(X.shape[1])]
    costs = {n: float(1 + i % 4) for i, n in enumerate(names) if i not in (10, 11, 12)}
    cm = CostModel(names, costs, panels={"panel": (6.0, ["m10", "m11", "m12"])}, unit="EUR")
    return SelectionProblem(X, y, GaussianNB(), costs=cm, cv=3, feature_names=names)


def test_sweep_respects_budgets_and_shares_fits(wine_problem, tmp_path):
    budgets = [2.0, 5.0, 9.0, None]
    fr = budget_sweep(wine_problem, budgets, "forward")
    for b, r in zip(budgets, fr.results):
        assert b is None or r.cost <= b + 1e-12
        assert r.cost == pytest.approx(wine_problem.cost_model.cost(r.support))
    # Each forward run re-visits the single-feature candidates of the previous one:
    # the shared evaluator must fit strictly less than the sum over the runs.
    assert fr.n_fits < fr.n_fits_without_cache
    assert fr.n_fits % len(wine_problem.splits) == 0
    # Larger budgets can only help a forward search that starts from the same first step.
    scores = [r.score_mean for r in fr.results]
    assert scores[-1] >= scores[0]
    files = fr.write(tmp_path / "sweep")
    names = sorted(p.name for p in files)
    assert "frontier.csv" in names and "frontier.json" in names
    frame = fr.to_frame()
    assert len(frame) == 4 and frame["efficient"].any()


def test_efficiency_flags_by_hand():
    costs = [1.0, 2.0, 2.0, 5.0]
    scores = [0.70, 0.80, 0.75, 0.80]
    # (2, 0.75) is dominated by (2, 0.80); (5, 0.80) by the cheaper (2, 0.80).
    assert efficient_points(costs, scores) == [True, True, False, False]


def test_efficiency_flags_with_ties_by_hand():
    # Hand-made frontier (computed by hand from the documented rule): budgets 3, 5, 8 and
    # unlimited all choose the same subset (cost 3, score 0.8): one efficient point, the
    # first; a tie in score at a higher cost is not efficient; a cost equal up to float
    # rounding (0.1 + 0.2) counts as the same cost; NaN (failed) is never efficient.
    costs = [1.0, 3.0, 3.0, 3.0, 3.0, 0.1 + 0.2, 0.3, 6.0, 7.0, 9.0]
    scores = [0.78, 0.8, 0.8, 0.8, 0.8, 0.65, 0.75, 0.8, float("nan"), 0.81]
    assert efficient_points(costs, scores) == [
        True,   # cost 1, 0.78: beats both cost-0.3 points (0.65 and 0.75)
        True,   # cost 3, 0.80: strictly better than every cheaper point
        False, False, False,  # identical repeats of the same point
        False,  # cost 0.3 (float sum), 0.65: beaten by the other cost-0.3 point
        True,   # cost 0.3, 0.75: the best at the lowest cost
        False,  # cost 6, 0.80: a tie with a cheaper point is not an improvement
        False,  # failed evaluation
        True,   # cost 9, 0.81
    ]


def _point(cost, mean, sem, selected, budget):
    folds = [mean - sem * np.sqrt(3), mean, mean + sem * np.sqrt(3)]  # std*sqrt(1/3)==sem
    return SearchResult(selected, list(range(len(selected))), cost, "EUR", [], budget, mean,
                        float(np.std(folds, ddof=1)), folds, "accuracy", {}, {}, [], 1, 3, 0,
                        0.0, "done")


def test_efficiency_notes_name_the_point_that_makes_a_point_not_efficient():
    from featuresift.cli import _frontier_table

    # Hand-made frontier; the expected words are worked out by hand from the documented
    # rule (module docstring of featuresift.frontier), point by point.
    rows = [  # budget, cost, score, chosen, expected
        (1.0, 1.0, 0.78, ["a"], "yes"),
        (3.0, 3.0, 0.80, ["a", "b"], "yes"),
        (5.0, 3.0, 0.80, ["b", "a"], "no: same choice as at budget 3"),
        (6.0, 0.1 + 0.2, 0.65, ["c"],  # 0.30000000000000004 is the cost 0.3 below
         "no: below the choice at budget 7: same cost, higher in-search score"),
        (7.0, 0.3, 0.75, ["d"], "yes"),
        (8.0, 6.0, 0.80, ["a", "e"],  # budgets 3 and 5 both beat it; 3 is efficient
         "no: below the choice at budget 3: cheaper, same in-search score"),
        (9.0, 7.0, float("nan"), ["f"], "no: in-search score undefined (failed fits)"),
        (10.0, 9.0, 0.81, ["a", "b", "c"], "yes"),
        (11.0, 1.0, 0.78, ["g"],
         "no: ties the choice at budget 1 (same cost and in-search score), listed first"),
        (None, 9.5, 0.79, ["a", "b", "d"],  # budgets 3 and 10 beat it: the cheaper named
         "no: below the choice at budget 3: cheaper, higher in-search score"),
    ]
    pts = [_point(c, m, 0.01, sel, b) for b, c, m, sel, _ in rows]
    fr = Frontier([r[0] for r in rows], pts, "EUR", "accuracy", 0, 0, pick="best")
    notes = fr.efficiency_notes()
    assert notes == [r[4] for r in rows]
    # The words agree with the flags of frontier.csv, which stay True/False.
    assert [n == "yes" for n in notes] == fr.to_frame()["efficient"].tolist() == \
        efficient_points([r[1] for r in rows], [r[2] for r in rows])
    assert set(fr.csv_frame()["efficient"]) == {True, False}
    # The same words in report.md's table and in the console table.
    report = "\n".join(fr.to_markdown(plot=None))
    assert "| pick | efficient |" in report and "|  | no: same choice as at budget 3 |" in report
    console = _frontier_table(fr).splitlines()
    assert console[0].split() == ["budget", "measurements", "cost", "accuracy", "(in-search)",
                                  "±", "s.e.", "pick", "efficient"]
    assert console[3].split()[:5] == ["5", "2", "3", "0.8000", "0.0100"]
    assert console[3].endswith("no: same choice as at budget 3")
    assert console[-2].split()[:2] == ["unlimited", "3"] and console[-2].endswith(rows[-1][4])
    assert "headline" in console[8] and console[-1] == "(costs in EUR)"
    # And in the notebook's HTML table.
    html = fr._repr_html_()
    assert all(n in html for n in notes if n != "yes") and "± s.e." in html


def test_headline_follows_pick_rule_within_run_budget():
    pts = [_point(1.0, 0.70, 0.01, ["a"], 1.0), _point(4.0, 0.79, 0.01, ["a", "b"], 5.0),
           _point(9.0, 0.80, 0.01, ["a", "b", "c"], 10.0),
           _point(20.0, 0.90, 0.01, ["a", "b", "c", "d"], None)]
    fr = Frontier([1.0, 5.0, 10.0, None], pts, "EUR", "accuracy", 0, 0, budget=10.0,
                  pick="one_se")
    # Best within 10 EUR: 0.80 (s.e. 0.01); one-standard-error rule (Breiman et al. 1984):
    # cheapest within 0.79 -> the 4 EUR point. The 20 EUR point is better but over budget.
    assert fr.headline_index == 1 and fr.headline.cost <= fr.budget
    assert fr.best_index == 3
    frame = fr.to_frame()
    assert frame["headline"].tolist() == [False, True, False, False]
    assert frame["best"].tolist() == [False, False, False, True]
    assert set(frame["score_kind"]) == {"in-search"}
    fr.pick = "best"
    assert fr.headline_index == 2
    fr.budget = 0.5  # nothing fits
    assert fr.headline_index is None
    fr.budget = None
    assert fr.headline_index == fr.best_index == 3
    choices = fr.choice_frequency().set_index("feature")
    assert choices.loc["a", "n_budgets"] == 4 and choices.loc["a", "share"] == 1.0
    assert choices.loc["d", "share"] == 0.25 and np.isnan(choices.loc["d", "first_budget"])
    assert choices.loc["c", "first_budget"] == 10.0
    text = "\n".join(fr.to_markdown())
    assert "in-search" in text and "How often each measurement" in text


def test_default_budgets_are_round_values():
    cm = CostModel(["a", "b", "c"], {"a": 0.5}, panels={"p": (10.0, ["b", "c"])})
    assert default_budgets(cm, n=6) == [0.5, 1.0, 2.0, 5.0, 10.0, None]
    # Five round values for four places: thinned evenly, smallest and largest kept.
    assert default_budgets(cm, n=5) == [0.5, 1.0, 5.0, 10.0, None]
    # Seven measurements costing 1..7 (total 28): n=8 used to give 1 + k * 27/7 =
    # 4.857, ... ; now only 1-2-5 values remain.
    cm = CostModel([f"m{i}" for i in range(7)], {f"m{i}": float(i + 1) for i in range(7)})
    b = default_budgets(cm, n=8)
    assert b == [1.0, 2.0, 5.0, 10.0, 20.0, None]
    many = CostModel([f"m{i}" for i in range(4)], {"m0": 0.0, "m1": 0.3, "m2": 400.0,
                                                   "m3": 900.0})
    b = default_budgets(many, n=4)  # 0.5 ... 1000 (11 values) thinned to 3, ends kept
    assert b == [0.5, 20.0, 1000.0, None]
    for x in b[:-1]:
        mantissa = x / 10 ** np.floor(np.log10(x))
        assert round(mantissa, 9) in (1.0, 2.0, 5.0)


def test_cost_levels_are_where_the_affordable_set_changes():
    # Hand-made cost table: lone tests at 1.5, 2 and 3.5, one on hand (0), a panel of
    # two at 2 (bought once). Reference: brute force over every subset of the columns,
    # each panel priced once (common practice for panel pricing).
    names = ["a", "b", "h", "d", "e", "f"]
    cm = CostModel(names, {"a": 1.5, "b": 2.0, "h": 0.0, "f": 3.5},
                   panels={"p": (2.0, ["d", "e"])})
    price = {"a": 1.5, "b": 2.0, "h": 0.0, "f": 3.5}

    def brute_cost(subset):
        return sum(price.get(n, 0.0) for n in subset) + (2.0 if {"d", "e"} & set(subset) else 0)

    subsets = [s for k in range(7) for s in combinations(names, k)]
    costs = sorted({brute_cost(s) for s in subsets} - {0.0})
    assert cost_levels(cm) == costs == [1.5, 2.0, 3.5, 4.0, 5.0, 5.5, 7.0, 7.5, 9.0]
    # Each level admits more subsets than the one below it: no two budgets are alike.
    counts = [sum(brute_cost(s) <= b for s in subsets) for b in costs]
    assert counts == sorted(set(counts))
    # Default budgets at cost levels: exact levels below the full price, ends kept.
    b = default_budgets(cm, n=5, budget_levels="costs")
    assert b[-1] is None and b[0] == 1.5 and b[-2] == 7.5 and len(b) == 5
    assert set(b[:-1]) <= set(costs) and b[:-1] == sorted(b[:-1])
    assert default_budgets(cm, n=20, budget_levels="costs") == [*costs[:-1], None]
    with pytest.raises(InputError, match="budget_levels must be one of round, costs"):
        default_budgets(cm, budget_levels="levels")


def test_sweep_on_criterion_evaluator_is_exact():
    # Additive criterion: with a budget the forward search picks the best affordable set.
    w = np.array([5.0, 4.0, 3.0, 1.0])
    ev = CriterionEvaluator(lambda s: float(w[list(s)].sum()), 4, ["a", "b", "c", "d"])
    cm = CostModel(["a", "b", "c", "d"], {"a": 3, "b": 1, "c": 1, "d": 1})
    from featuresift.search import run_search

    r = run_search(ev, "forward", costs=cm, budget=2.0)
    assert r.selected == ["b", "c"]


def test_headline_can_be_a_reference_and_follows_the_guard():
    pts = [_point(1.0, 0.52, 0.05, ["a"], 1.0), _point(4.0, 0.55, 0.05, ["a", "b"], 5.0),
           _point(20.0, 0.56, 0.05, ["a", "b", "c"], None)]
    refs = {
        "nothing": {"features": [], "cost": 0.0, "score_mean": 0.50, "score_sem": 0.05,
                    "objective": 0.50, "allowed": True},
        "free only": {"features": ["m"], "cost": 0.0, "score_mean": 0.515, "score_sem": 0.05,
                      "objective": 0.515, "allowed": True},
        "everything": {"features": ["a", "b", "c", "d", "m"], "cost": 30.0,
                       "score_mean": 0.55, "score_sem": 0.05, "objective": 0.55,
                       "allowed": False},
    }
    for r in pts:
        r.references = refs
    fr = Frontier([1.0, 5.0, None], pts, "EUR", "roc_auc", 0, 0, budget=None, pick="one-se")
    # One-standard-error rule by hand: best 0.56 - s.e. 0.05 = 0.51; the cheapest at or above
    # it is "free only" (cost 0, 0.515); "nothing" (0.50) is below, no point equals it.
    assert fr.headline_key == "free only" and fr.headline_index is None
    assert fr.headline_reference == "free only" and fr.headline is None
    assert fr.best_index == 2
    refs_frame = fr.reference_frame().set_index("reference")
    assert refs_frame.loc["free only", "headline"] and not refs_frame.loc["everything", "allowed"]
    assert any("reference 'free only'" in line for line in fr.answer_lines())
    # A point that buys exactly the free-only set is the headline point itself.
    pts[0] = _point(0.0, 0.515, 0.05, ["m"], 1.0)
    pts[0].references = refs
    assert fr.headline_index == 0 and fr.headline_reference == "free only"
    # The noise guard replaced the headline by "nothing".
    fr.guard = {"name": "nested", "decision": "replaced by 'nothing'", "fallback": "nothing"}
    assert fr.headline_key == "nothing" and fr.headline_index is None
    assert fr.to_dict()["headline_reference"] == "nothing"
    assert "Noise guard (nested) on the headline: replaced by 'nothing'" in fr.answer_lines()


def test_to_frame_selected_holds_tuples_and_csv_text_is_unchanged():
    import io
    import json

    import pandas as pd

    pts = [_point(0.0, 0.5, 0.01, [], 0.5), _point(1.0, 0.70, 0.01, ["a"], 1.0),
           _point(4.0, 0.79, 0.01, ["a", "b"], 5.0)]
    fr = Frontier([0.5, 1.0, None], pts, "EUR", "accuracy", 0, 0, budget=10.0, pick="best")
    # In Python: tuples of names, as SearchResult.evaluations_frame() gives them.
    assert fr.to_frame()["selected"].tolist() == [(), ("a",), ("a", "b")]
    assert all(isinstance(s, tuple) for s in fr.reference_frame()["selected"])
    # frontier.csv: the exact text written before the column held tuples (captured from
    # the previous release's output for these points): names joined with " + ".
    csv = fr.output_files(plot=False)["frontier.csv"]
    sem = "0.017320508075688745,0.009999999999999985"
    assert csv == (
        "budget,n_selected,selected,cost,score_kind,score_mean,score_std,score_sem,"
        "efficient,headline,best,n_evaluations,n_failed_fits\n"
        f"0.5,0,,0.0,in-search,0.5,{sem},True,False,False,1,0\n"
        f"1.0,1,a,1.0,in-search,0.7,{sem},True,False,False,1,0\n"
        f",2,a + b,4.0,in-search,0.79,{sem},True,True,True,1,0\n")
    # pandas.read_csv of the file gives back the same names (pandas' own CSV reader).
    back = pd.read_csv(io.StringIO(csv), keep_default_na=False)["selected"]
    assert [tuple(s.split(" + ")) if s else () for s in back] == \
        fr.to_frame()["selected"].tolist()
    # The JSON round trip keeps the frame, tuples and all.
    again = Frontier.from_json(json.dumps(fr.to_dict()))
    pd.testing.assert_frame_equal(again.to_frame(), fr.to_frame())
    text = "\n".join(fr.to_markdown())
    assert "| 0.5 | (nothing) | 0.00 |" in text and "| unlimited | a + b | 4.00 |" in text
