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
