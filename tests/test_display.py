"""Rich display: short reprs, HTML, plots that keep the backend, JSON round trips, frames."""

from __future__ import annotations

import dataclasses
import math
import re

import numpy as np
import pytest
from sklearn.datasets import load_iris
from sklearn.naive_bayes import GaussianNB

from featuresift import (
    CostModel,
    Frontier,
    SearchResult,
    SelectionProblem,
    budget_sweep,
    nested_evaluation,
    run_search,
)

RAW = {"references": False, "pick": "best", "guard": "off"}  # the strategy's own answer

pytestmark = pytest.mark.usefixtures("single_blas_thread")

NAMES = ["sl", "sw", "pl", "pw"]


@pytest.fixture(scope="module")
def objects():
    X, y = load_iris(return_X_y=True)
    cm = CostModel(NAMES, {"sl": 1.0, "sw": 0.0}, panels={"petal": (3.0, ["pl", "pw"])},
                   unit="EUR")
    groups = np.arange(150) % 6
    problem = SelectionProblem(X, y, GaussianNB(), costs=cm, cv=3, groups=groups)
    result = run_search(problem, "forward", **RAW, budget=4.0)
    frontier = budget_sweep(problem, [1.0, 3.0, None])
    nested = nested_evaluation(X, y, GaussianNB(), costs=cm, outer_cv=3, inner_cv=3,
                               budget=3.0)
    return {"problem": problem, "result": result, "frontier": frontier, "nested": nested,
            "costs": cm}


@pytest.mark.parametrize("name", ["problem", "result", "frontier", "nested", "costs"])
def test_repr_is_one_short_line_without_addresses(objects, name):
    text = repr(objects[name])
    assert "\n" not in text
    assert len(text) < 200, text
    assert not re.search(r"0x[0-9a-f]{6,}", text), text


@pytest.mark.parametrize("name", ["problem", "result", "frontier", "nested", "costs"])
def test_html_is_there_and_escaped(objects, name):
    out = objects[name]._repr_html_()
    assert out.startswith("<div class='featuresift'>") and "<table" in out
    assert out.count("<table") == out.count("</table>")


def test_scores_are_labelled_with_their_kind(objects):
    assert "in-search" in repr(objects["result"])
    assert "in-search" in objects["result"]._repr_html_()
    assert "in-search" in objects["frontier"]._repr_html_()
    html = objects["nested"]._repr_html_()
    assert "nested" in html and "in-search" in html
    assert "nested" in repr(objects["nested"])


def test_result_html_shows_chosen_measurements_and_cost_against_budget(objects):
    res = objects["result"]
    html = res._repr_html_()
    for line in res.cost_breakdown:
        assert line.item in html
    assert "budget 4 EUR" in html
    assert f"{res.score_mean:.4f}" in html


def test_long_lists_are_cut_in_the_repr():
    res = SearchResult(
        selected=[f"measurement_{i}" for i in range(50)], support=list(range(50)), cost=50.0,
        cost_unit="EUR", cost_breakdown=[], budget=None, score_mean=0.9, score_std=0.01,
        fold_scores=[0.9] * 5, scoring="accuracy", objective={}, strategy={"name": "forward"},
        path=[], n_evaluations=1000, n_fits=5000, n_cache_hits=0, wall_time=1.0,
        stop_reason="strategy finished",
    )
    text = repr(res)
    assert "+47 more" in text and len(text) < 200  # three 17-character names fit in 60
    long = [f"somatic_cell_count_per_ml_at_farm_{i}" for i in range(3)]
    text = repr(dataclasses.replace(res, selected=long, support=[0, 1, 2]))
    assert f"[{long[0]!r}, +2 more]" in text and len(text) < 200, text


def test_json_round_trips(objects, tmp_path):
    res = objects["result"]
    again = SearchResult.from_json(res.to_json())
    assert again.to_dict() == res.to_dict()
    assert again.cost_breakdown == res.cost_breakdown and again.path == res.path
    res.write(tmp_path)
    from_file = SearchResult.from_json(tmp_path / "result.json")
    assert from_file.selected == res.selected
    fr = objects["frontier"]
    fr_again = Frontier.from_json(fr.to_json())
    assert fr_again.to_dict() == fr.to_dict()
    fr.write(tmp_path, plot=False)
    assert Frontier.from_json(tmp_path / "frontier.json").budgets == fr.budgets
    with pytest.raises(ValueError, match="unknown key"):
        SearchResult.from_json('{"selected": [], "colour": 1}')


def test_evaluations_frame_lists_every_evaluated_subset(objects):
    res = objects["result"]
    frame = res.evaluations_frame()
    assert list(frame.columns[:5]) == ["features", "n", "cost", "mean", "se"]
    assert len(frame) == res.n_evaluations
    assert all(isinstance(f, tuple) for f in frame["features"])
    assert frame["features"].map(len).tolist() == frame["n"].tolist()
    # Every cost is the cost model's; every mean a scored subset's.
    cm = objects["costs"]
    assert [cm.cost(list(f)) for f in frame["features"]] == frame["cost"].tolist()
    best = frame.iloc[0]
    assert best["features"] == tuple(res.selected)
    assert math.isclose(best["mean"], res.score_mean)
    # SE = sample std / sqrt(k) (hand-worked from the fold scores).
    assert math.isclose(best["se"], np.std(res.fold_scores, ddof=1) / math.sqrt(3))
    path = res.path_frame()
    assert all(isinstance(f, tuple) for f in path["features"])


def test_plots_return_axes_and_keep_the_backend(objects, tmp_path):
    matplotlib = pytest.importorskip("matplotlib")
    pytest.importorskip("matplotlib_inline")
    import matplotlib.pyplot as plt

    before = matplotlib.get_backend()
    try:
        # The notebook backend: a plot must not switch it (Agg would hide every figure).
        matplotlib.use("module://matplotlib_inline.backend_inline")
        inline = matplotlib.get_backend()
        ax = objects["result"].plot()
        assert ax.get_xlabel() == "search step" and len(ax.figure.axes) == 2
        ax2 = objects["frontier"].plot()
        assert "in-search" in ax2.get_ylabel()
        objects["frontier"].write(tmp_path)
        assert (tmp_path / "frontier.png").stat().st_size > 1000
        assert matplotlib.get_backend() == inline
        plt.close("all")
    finally:
        matplotlib.use(before)


def test_html_shows_the_references_beside_the_answer(objects):
    import copy

    res = copy.copy(objects["result"])
    refs = {"nothing": {"cost": 0.0, "score_mean": 0.3333},
            "free only": {"cost": 0.0, "score_mean": 0.5467},
            "everything": {"cost": 4.0, "score_mean": 0.9533}}
    if hasattr(res, "references"):
        res.references = refs
    else:
        res.extras = {**res.extras, "references": refs}
    html = res._repr_html_()
    assert "Beside the references" in html
    for name, ref in refs.items():
        assert f"<td>{name}</td>" in html and f"{ref['score_mean']:.4f}" in html


def test_reprs_say_the_nested_score_the_headline_and_the_interval(objects):
    import dataclasses

    from scipy import stats

    guarded = dataclasses.replace(objects["result"], guard={
        "name": "nested", "nested_scores": [0.9, 0.94, 0.92], "nested_mean": 0.92})
    # Reference: numpy's mean of the guard's outer-fold scores, labelled nested.
    assert f"{np.mean([0.9, 0.94, 0.92]):.4f} nested" in repr(guarded)
    fr = objects["frontier"]
    head = fr.results[fr.headline_index]
    assert f"headline {head.selected[:2]!r}"[:-1] in repr(fr)
    assert f"at {head.cost:g}, costs in EUR)" in repr(fr) and "Headline (pick" in fr._repr_html_()
    ne = objects["nested"]
    # With a nested estimate at the headline, the sweep's repr gives it, labelled nested.
    assert f"({ne.outer_mean:.4f} nested)" in repr(dataclasses.replace(fr, nested=ne))
    k, s = len(ne.outer_scores), np.std(ne.outer_scores, ddof=1)
    # Reference: the corrected resampled t interval (Nadeau & Bengio 2003) from scipy's t.
    half = stats.t.ppf(0.975, k - 1) * math.sqrt((1 / k + ne.test_train_ratio) * s**2)
    assert (f"95% CI {np.mean(ne.outer_scores) - half:.3f}-"
            f"{np.mean(ne.outer_scores) + half:.3f}") in repr(ne)
    again = type(ne).from_json(ne.to_json())
    assert repr(again) == repr(ne) and again._repr_html_() == ne._repr_html_()
    assert (again.seed, again.budget) == (0, 3.0) and "budget 3 EUR, seed 0" in ne._repr_html_()


def test_problem_repr_stays_short_with_a_long_pipeline():
    from sklearn.impute import SimpleImputer
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import MinMaxScaler, StandardScaler

    X, y = load_iris(return_X_y=True)
    model = make_pipeline(SimpleImputer(), StandardScaler(), MinMaxScaler(), GaussianNB())
    text = repr(SelectionProblem(X, y, model, cv=3, groups=np.arange(150) % 5))
    assert len(text) < 200 and "GaussianNB" in text and "grouped" in text, text


def test_a_fallen_back_answer_shows_the_headline_and_whose_nested_score_it_is(objects):
    import dataclasses

    res = objects["result"]
    refs = {"nothing": {"features": [], "cost": 0.0, "score_mean": 0.3333,
                        "is_answer": True, "allowed": True},
            "everything": {"features": NAMES, "cost": 4.0, "score_mean": 0.95,
                           "allowed": False}}
    guard = {"name": "nested", "alpha": 0.05, "p_value": 0.0544, "nested_mean": 0.5625,
             "decision": "replaced by 'nothing': no evidence that buying measurements pays",
             "replaced": ["pw"]}
    empty = dataclasses.replace(res, selected=[], support=[], cost=0.0, cost_breakdown=[],
                                references=refs, guard=guard)
    text, html = repr(empty), empty._repr_html_()
    # The guard's nested score belongs to the rejected answer, not to 'buy nothing'.
    assert "fell back" in text and "0.5625" not in text
    assert "Answer: buy nothing" in html and "the answers it rejected scored 0.5625" in html
    assert "p = 0.0544" in html
    assert "<td>the answer</td>" in html and "<td>not allowed (budget or limits)</td>" in html


def test_filter_results_have_a_short_repr_and_html():
    from featuresift.filters import budgeted_greedy, prescreen

    X, y = load_iris(return_X_y=True)
    cm = CostModel(NAMES, {"sl": 1.0, "sw": 1.0, "pl": 2.0, "pw": 2.0}, unit="EUR")
    screen = prescreen(X, y, cm, keep=2, rule="top")
    sel = budgeted_greedy(X, y, costs=cm, budget=3.0)
    for obj in (screen, sel):  # before: dataclass reprs with whole arrays and tables
        text = repr(obj)
        assert "\n" not in text and len(text) < 200, text
        assert obj._repr_html_().startswith("<div class='featuresift'>")
    # Reference: scikit-learn's f_classif ranks the petal columns first on iris.
    from sklearn.feature_selection import f_classif

    top = [NAMES[j] for j in np.argsort(-f_classif(X, y)[0])[:2]]
    assert f"kept 2 of 4: {top!r}" in repr(screen)
    assert all(f"<td>{name}</td>" in sel._repr_html_() for name in sel.selected)
    assert f"{sel.cost:g} / 3 EUR" in repr(sel)


def test_cost_model_repr_counts_what_is_on_hand_and_prices_everything(objects):
    text = repr(objects["costs"])
    # By hand from the fixture: sl 1 + sw 0 + the petal panel 3 (pl and pw) = 4 EUR.
    assert "on hand 1, everything 4 EUR" in text and len(text) < 200


def test_nested_plots_show_both_scores_and_keep_the_backend(objects):
    from collections import Counter

    matplotlib = pytest.importorskip("matplotlib")
    pytest.importorskip("matplotlib_inline")
    import matplotlib.pyplot as plt
    from matplotlib.axes import Axes

    ne = objects["nested"]
    before = matplotlib.get_backend()
    try:
        matplotlib.use("module://matplotlib_inline.backend_inline")
        inline = matplotlib.get_backend()
        ax = ne.plot()
        assert isinstance(ax, Axes)
        assert matplotlib.get_backend() == inline  # matplotlib's own report of it
        labels = ax.get_legend_handles_labels()[1]
        inner, outer = ax.lines[0], ax.lines[1]
        assert "in-search" in labels[0] and "nested" in labels[1]
        np.testing.assert_allclose(inner.get_ydata(), ne.inner_scores)
        np.testing.assert_allclose(outer.get_ydata(), ne.outer_scores)
        # The mean lines: numpy's mean of the plotted scores.
        means = {lab.split()[1]: line.get_ydata()[0]
                 for line, lab in zip(ax.lines[2:4], labels[2:4])}
        assert means == {"in-search": pytest.approx(np.mean(ne.inner_scores)),
                         "nested": pytest.approx(np.mean(ne.outer_scores))}
        band = ax.patches[-1].get_path().get_extents(ax.patches[-1].get_transform())
        lo, hi = ax.transData.inverted().transform([[0, band.y0], [0, band.y1]])[:, 1]
        assert (lo, hi) == pytest.approx(ne.ci, abs=1e-9) and "CI" in labels[-1]
        assert "EUR" in ax.get_xlabel()
        # Bars: the share counted here from each outer search's choice.
        bars = ne.plot_selection()
        counts = Counter(f for s in ne.selected for f in s)
        shares = {t.get_text(): p.get_width()
                  for t, p in zip(bars.get_yticklabels(), bars.patches)}
        assert shares == {n: pytest.approx(counts[n] / len(ne.selected)) for n in NAMES}
        assert matplotlib.get_backend() == inline
        plt.close("all")
    finally:
        matplotlib.use(before)
