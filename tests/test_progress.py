"""Progress a person can follow: one bar per search, step lines when piped, off at 0."""

from __future__ import annotations

import io

import pytest
from sklearn.datasets import load_iris
from sklearn.naive_bayes import GaussianNB

from featuresift import SelectionProblem, run_search
from featuresift.engine import progress
from featuresift.selector import MeasurementSelector


@pytest.fixture(scope="module")
def problem():
    X, y = load_iris(return_X_y=True)
    return SelectionProblem(X, y, GaussianNB(), cv=3)


def test_piped_output_gets_one_line_per_step(problem, capsys, monkeypatch):
    monkeypatch.setattr(progress, "interactive", lambda: False)
    res = run_search(problem, "forward", n_features=3, verbose=1)
    lines = capsys.readouterr().err.strip().splitlines()
    assert len(lines) == len(res.path) == 3
    last = lines[-1]
    assert last.startswith("forward step 2: add ")
    assert f"{res.n_evaluations} subsets evaluated" in last
    best = max(r.score_mean for r in res.path)
    assert f"best {best:.4f} in-search" in last and "s left" in last
    run_search(problem, "forward", n_features=3, verbose=0)
    assert capsys.readouterr().err == ""


def test_one_bar_for_the_whole_search(problem, capsys, monkeypatch):
    monkeypatch.setattr(progress, "interactive", lambda: True)
    res = run_search(problem, "forward", n_features=3, verbose=1)
    err = capsys.readouterr().err
    # One bar (tqdm redraws it in place with \\r), ending at the number of subsets.
    assert err.count("\\n") <= 1
    final = err.split("\\r")[-1]
    assert f"{res.n_evaluations}/" in final and "subset" in final
    assert "best" in final and "in-search" in final


def test_selector_verbose(problem, monkeypatch):
    monkeypatch.setattr(progress, "interactive", lambda: False)
    out = io.StringIO()
    monkeypatch.setattr("sys.stderr", out)
    MeasurementSelector(GaussianNB(), cv=3, verbose=1,
                        strategy={"name": "forward", "options": {"n_features": 2}}
                        ).fit(problem.X, problem.y)
    assert out.getvalue().count("forward step") == 2


def test_best_so_far_counts_only_affordable_subsets(problem, capsys, monkeypatch):
    # The 'everything' reference (4 measurements) is evaluated but not allowed at
    # budget 1; the progress line once showed its score as 'best'.
    monkeypatch.setattr(progress, "interactive", lambda: False)
    res = run_search(problem, "forward", budget=1, verbose=1)
    last = capsys.readouterr().err.strip().splitlines()[-1]
    frame = res.evaluations_frame()
    affordable = frame[(frame["n"] <= 1) & (frame["status"] == "complete")]
    assert f"best {affordable['mean'].max():.4f} in-search" in last
    assert frame["mean"].max() > affordable["mean"].max()  # the case this guards


def test_noise_guard_and_nested_cv_show_one_line_per_outer_search(capsys, monkeypatch):
    # Pure noise: the in-search screen cannot accept, so the guard runs its 5 outer
    # searches; it used to do so in silence after the search's last step line.
    import numpy as np

    from featuresift.nested import nested_evaluation

    monkeypatch.setattr(progress, "interactive", lambda: False)
    rng = np.random.default_rng(0)
    X, y = rng.normal(size=(60, 4)), np.repeat([0, 1], 30)
    res = run_search(SelectionProblem(X, y, GaussianNB(), cv=3), "forward", verbose=1)
    assert res.guard["stage"] == "nested"
    lines = [ln for ln in capsys.readouterr().err.splitlines() if ln.startswith("noise guard")]
    assert [ln.split(" done")[0] for ln in lines] == [
        f"noise guard: outer search {k} of 5" for k in range(1, 6)]
    ne = nested_evaluation(X, y, GaussianNB(), outer_cv=3, inner_cv=3, strategy="forward",
                           n_features=1, verbose=1)
    err = capsys.readouterr().err.splitlines()
    # Only the outer lines: the searches inside run without their own display.
    assert len(err) == 3 and err[-1].startswith("nested CV: outer search 3 of 3 done")
    assert f"outer score {ne.outer_scores[-1]:.4f} (nested)" in err[-1]
    nested_evaluation(X, y, GaussianNB(), outer_cv=3, inner_cv=3, strategy="forward",
                      n_features=1)
    assert capsys.readouterr().err == ""


def test_a_sweep_shows_each_budgets_search_not_per_batch_bars(problem, capsys, monkeypatch):
    from featuresift import budget_sweep

    monkeypatch.setattr(progress, "interactive", lambda: False)
    fr = budget_sweep(problem, [1, 2], "forward", guard="off", verbose=1)
    lines = capsys.readouterr().err.strip().splitlines()  # before: nothing at all
    assert len(lines) == sum(len(r.path) for r in fr.results)
    assert lines[0].startswith("forward (budget 1) step 0: add ")
    assert lines[-1].startswith("forward (budget 2) step ")


def test_greedy_swap_time_left_exact_when_it_enumerates(problem, capsys, monkeypatch):
    import math

    monkeypatch.setattr(progress, "interactive", lambda: False)
    totals = []
    init = progress.SearchProgress.__init__

    def spy(self, *args, **kwargs):
        init(self, *args, **kwargs)
        totals.append((self.total, self.kind))

    monkeypatch.setattr(progress.SearchProgress, "__init__", spy)
    res = run_search(problem, "greedy-swap", verbose=1, guard="off")
    lines = capsys.readouterr().err.strip().splitlines()
    # iris has 4 measurements: 2**4 - 1 non-empty subsets (math.comb sum) plus the empty
    # 'nothing' reference, all known before the first fit.
    n = sum(math.comb(4, k) for k in range(1, 5)) + 1
    assert totals == [(n, "exact")] and res.n_evaluations == n
    assert lines and all("s left" in line and "about" not in line
                         and "unknown" not in line for line in lines)


def test_greedy_swap_time_left_is_an_estimate_past_64_subsets(capsys, monkeypatch):
    from sklearn.datasets import load_wine

    from featuresift import CostModel

    monkeypatch.setattr(progress, "interactive", lambda: False)
    # scikit-learn's wine data, 13 measurements; invented prices; 69 affordable subsets.
    X, y = load_wine(return_X_y=True)
    names = [f"m{i}" for i in range(13)]
    cm = CostModel(names, {n: float(1 + i % 4) for i, n in enumerate(names)})
    p = SelectionProblem(X, y, GaussianNB(), costs=cm, cv=3, feature_names=names)
    assert cm.allowed(4.0).count(limit=64) > 64  # so greedy-swap does not enumerate
    res = run_search(p, "greedy-swap", budget=4, verbose=1, guard="off")
    lines = capsys.readouterr().err.strip().splitlines()
    assert len(lines) == len(res.path) >= 2
    for line in lines:  # an estimate says so; past it, no number is given
        assert ("about" in line and "s left" in line) or "past the estimate" in line
        assert "time left unknown" not in line or "past the estimate" in line


def test_time_left_wording_of_bounds_and_estimates():
    out = io.StringIO()
    bar = progress.SearchProgress(1, total=progress.Expected(10, "about"), stream=out,
                                  interactive_session=False)
    bar.evaluated(5, 0.9)
    bar.step(0, "add", "ph", 1)
    bar.evaluated(12, 0.9)  # past the estimate
    bar.step(1, "add", "ash", 2)
    bar.expect(20)  # the strategy's new estimate
    bar.step(2, "move", None, 2)
    first, second, third = out.getvalue().splitlines()
    assert first.endswith(" s left") and "about " in first
    assert second.endswith("time left unknown (past the estimate of 10 subsets)")
    assert "about " in third and third.endswith(" s left")
    out = io.StringIO()
    bar = progress.SearchProgress(1, total=progress.Expected(10, "at most"), stream=out,
                                  interactive_session=False)
    bar.evaluated(4, None)
    bar.step(0, "add", "ph", 1)
    assert "up to " in out.getvalue()


def test_greedy_swap_estimate_never_passes_the_evaluation_limit(capsys, monkeypatch):
    from sklearn.datasets import load_wine

    monkeypatch.setattr(progress, "interactive", lambda: False)
    totals = []
    expect = progress.SearchProgress.expect

    def spy(self, n, kind="about"):
        expect(self, n, kind)
        totals.append((self.total, self.kind))

    monkeypatch.setattr(progress.SearchProgress, "expect", spy)
    X, y = load_wine(return_X_y=True)  # scikit-learn's wine data: 8191 subsets
    p = SelectionProblem(X, y, GaussianNB(), cv=3)
    res = run_search(p, "greedy-swap", max_evaluations=110, verbose=1, guard="off")
    assert res.n_evaluations == 110 and totals  # the local search re-estimated
    assert all(n <= 110 for n, _ in totals) and ("at most" in {k for _, k in totals})
    assert "time left unknown" not in capsys.readouterr().err
