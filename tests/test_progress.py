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
