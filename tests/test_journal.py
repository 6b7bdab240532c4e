"""Journal: resume after a kill, invalidation by fingerprint, racing rows never complete."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import time

import numpy as np
import pytest
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import KFold, StratifiedKFold

from featuresift import CrossValidationEvaluator, SelectionProblem
from featuresift.engine.journal import Journal, open_journal
from featuresift.engine.records import DROPPED, FoldTable
from featuresift.errors import InputError

pytestmark = pytest.mark.usefixtures("single_blas_thread")

# A helper module shared by the killed subprocess and this test: the estimator stalls
# inside fit (so the kill lands in the middle of a batch) only when an environment
# variable asks for it, so the restarted run has the same configuration.
HELPER = textwrap.dedent(
    '''
    import os, time
    import numpy as np
    from sklearn.base import BaseEstimator, ClassifierMixin
    from sklearn.datasets import make_classification
    from sklearn.linear_model import LogisticRegression
    from sklearn.model_selection import StratifiedKFold
    from featuresift import CrossValidationEvaluator, SelectionProblem, run_search

    class StallingLR(ClassifierMixin, BaseEstimator):
        def __init__(self, C=1.0):
            self.C = C

        def fit(self, X, y):
            if X.shape[1] == int(os.environ.get("STALL_AT_WIDTH", "0")):
                time.sleep(600)
            self.model_ = LogisticRegression(C=self.C).fit(X, y)
            self.classes_ = self.model_.classes_
            return self

        def predict(self, X):
            return self.model_.predict(X)

    def problem():
        X, y = make_classification(n_samples=120, n_features=10, n_informative=4,
                                   random_state=3)
        return SelectionProblem(X, y, StallingLR(), cv=StratifiedKFold(3))

    def search(journal, racing=None):
        ev = CrossValidationEvaluator(problem(), journal=journal, racing=racing)
        res = run_search(ev, "forward", n_features=4, costs=ev.problem.cost_model)
        return res, ev
    '''
)


@pytest.fixture
def helper(tmp_path, monkeypatch):
    (tmp_path / "fs_resume_helper.py").write_text(HELPER)
    monkeypatch.syspath_prepend(str(tmp_path))
    import importlib

    import fs_resume_helper

    return importlib.reload(fs_resume_helper)


def _rows(path):
    if not os.path.exists(path):
        return 0
    try:
        with sqlite3.connect(path, timeout=1) as c:
            return c.execute("SELECT COUNT(*) FROM featuresift_evaluations").fetchone()[0]
    except sqlite3.OperationalError:
        return 0


def _kill_mid_run(tmp_path, journal, stall_width, min_rows, racing="None"):
    env = dict(os.environ, STALL_AT_WIDTH=str(stall_width), PYTHONPATH=os.pathsep.join(
        p for p in (str(tmp_path), os.environ.get("PYTHONPATH")) if p))
    code = f"import fs_resume_helper as h; h.search({str(journal)!r}, racing={racing})"
    proc = subprocess.Popen([sys.executable, "-c", code], env=env, cwd=tmp_path)
    try:
        deadline = time.monotonic() + 60
        while _rows(journal) < min_rows:
            assert proc.poll() is None, "the search ended before it could be killed"
            assert time.monotonic() < deadline, "the journal was never written"
            time.sleep(0.05)
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait()
    assert proc.returncode == -signal.SIGKILL


@pytest.mark.parametrize("racing", [None, True])
def test_resume_after_kill_gives_same_result_without_refitting(tmp_path, helper, racing):
    journal = tmp_path / "run.sqlite"
    # The references ("nothing" and "everything"; "free only" is "nothing" here) come
    # first, one row each; then forward batches of 10, 9, 8, 7 candidates; the kill lands
    # inside batch 3.
    _kill_mid_run(tmp_path, journal, stall_width=3, min_rows=21, racing=racing)
    with Journal(journal) as j:
        stored = j.load(helper.problem().fingerprint())
    assert len(stored) == 21  # references, batches 1 and 2, nothing of unfinished batch 3
    folds_done = sum(t.n_folds - len(t.missing(range(t.n_folds))) for t in stored.values())

    resumed, ev = helper.search(journal, racing=racing)
    reference, ref_ev = helper.search(None, racing=racing)
    assert resumed.support == reference.support
    assert resumed.fold_scores == reference.fold_scores
    assert [r.features for r in resumed.path] == [r.features for r in reference.path]
    # No journaled fold was fitted again: the resumed run fits exactly the rest.
    assert ev.n_fits == ref_ev.n_fits - folds_done
    assert ev.n_journal_hits == 21
    ev.close()
    # A third run refits nothing at all.
    again, ev3 = helper.search(journal, racing=racing)
    assert ev3.n_fits == 0 and again.support == reference.support
    ev3.close()


def test_changed_config_invalidates(tmp_path, helper):
    journal = tmp_path / "j.sqlite"
    base = helper.problem()
    ev = CrossValidationEvaluator(base, journal=journal)
    ev.evaluate([[0], [1, 2]])
    ev.close()
    X, y = base.X, base.y
    changed = [
        SelectionProblem(X, y, helper.StallingLR(C=0.5), cv=StratifiedKFold(3)),
        SelectionProblem(X, y, helper.StallingLR(), cv=StratifiedKFold(4)),
        SelectionProblem(X, y, helper.StallingLR(), cv=StratifiedKFold(3), scoring="f1"),
        SelectionProblem(X[::-1], y[::-1], helper.StallingLR(), cv=StratifiedKFold(3)),
    ]
    prints = {base.fingerprint()} | {p.fingerprint() for p in changed}
    assert len(prints) == 5
    for p in changed:
        ev2 = CrossValidationEvaluator(p, journal=journal)
        ev2.evaluate([[0], [1, 2]])
        assert ev2.n_fits == 2 * len(p.splits) and ev2.n_journal_hits == 0
        ev2.close()
    same = CrossValidationEvaluator(helper.problem(), journal=journal)
    same.evaluate([[0], [1, 2]])
    assert same.n_fits == 0 and same.n_journal_hits == 2
    same.close()


def test_journal_on_or_off_same_result(tmp_path, helper):
    with_j, ev = helper.search(tmp_path / "a.sqlite")
    without, _ = helper.search(None)
    assert with_j.support == without.support and with_j.fold_scores == without.fold_scores
    ev.close()


def test_dropped_rows_are_stored_partial_and_completed_later(tmp_path):
    rng = np.random.default_rng(0)
    y = np.repeat([0, 1], 60)
    X = rng.normal(size=(120, 10)) + np.outer(y, np.linspace(0, 1.5, 10))
    p = SelectionProblem(X, y, LogisticRegression(), cv=KFold(5, shuffle=True, random_state=0))
    journal = tmp_path / "race.sqlite"
    ev = CrossValidationEvaluator(p, racing=True, journal=journal)
    res = ev.evaluate([[f] for f in range(10)])
    dropped = [e for e in res if e.status == DROPPED]
    assert dropped
    ev.close()
    with Journal(journal) as j:
        assert j.count(p.fingerprint(), complete=False) == len(dropped)
        assert j.count(p.fingerprint(), complete=True) == 10 - len(dropped)
    # A new run asking for a dropped subset alone completes it; it is not served as complete.
    ev2 = CrossValidationEvaluator(p, journal=journal)
    victim = dropped[0]
    (full,) = ev2.evaluate([victim.subset])
    assert full.status != DROPPED and ev2.n_fits == 5 - victim.n_folds_run
    ev2.close()


def test_fold_table_json_round_trip():
    t = FoldTable.empty(4)
    t.set(0, 0.75, 0.1)
    t.set(2, float("nan"), 0.2, "ValueError: boom")
    back = FoldTable.from_json(t.to_json())
    assert back.state == t.state and back.errors == {2: "ValueError: boom"}
    assert back.scores[0] == 0.75 and np.isnan(back.scores[2]) and np.isnan(back.scores[1])


def test_not_a_journal_file(tmp_path):
    bad = tmp_path / "bad.sqlite"
    bad.write_bytes(b"this is not a database" * 100)
    with pytest.raises(InputError, match="journal"):
        Journal(bad)
    with pytest.raises(InputError, match="journal must be"):
        open_journal(42)
