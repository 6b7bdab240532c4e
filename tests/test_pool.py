"""Where fits run (featuresift/engine/pool.py): in-process or in the worker pool.

The decision must never change a result: fold scores are compared for exact equality
between all-in-process, all-in-pool and the automatic split (computed expectation: the
same function fits the same items; nothing else may differ).
"""

from __future__ import annotations

import time

import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from featuresift import CrossValidationEvaluator, SelectionProblem, run_search
from featuresift.engine import pool as pool_module
from featuresift.errors import InputError

pytestmark = pytest.mark.usefixtures("single_blas_thread")


def _problem():
    X, y = load_breast_cancer(return_X_y=True)
    return SelectionProblem(X[:, :8], y, make_pipeline(StandardScaler(), LogisticRegression()),
                            cv=StratifiedKFold(3))


def test_in_process_or_pool_gives_identical_scores(monkeypatch):
    batch = [(0,), (1, 2), (0, 3, 5), (2, 4, 6, 7), (1, 5), (3,), (0, 1, 2, 3), (6, 7)]
    scores = {}
    for mode in ("never", "always", "auto"):
        if mode == "auto":
            # Make every part after the first worth a parallel call, on joblib directly.
            monkeypatch.setattr(pool_module, "MIN_POOL_SECONDS", 0.0)
            monkeypatch.setattr(pool_module, "_default_backend", lambda: False)
        ev = CrossValidationEvaluator(_problem(), n_jobs=2, pool=mode)
        scores[mode] = [e.fold_scores for e in ev.evaluate(batch)]
        stats = ev.stats()["pool"]
        if mode == "never":
            assert stats["fits_in_process"] == 24 and stats["fits_in_pool"] == 0
        if mode == "always":
            assert stats["fits_in_pool"] == 24 and stats["fits_in_process"] == 0
        if mode == "auto":  # the first part in-process, the rest in the pool
            assert stats["fits_in_process"] > 0 and stats["fits_in_pool"] > 0
    assert scores["never"] == scores["always"] == scores["auto"]


def test_search_with_two_jobs_equals_one_job():
    problem = _problem()
    res = run_search(CrossValidationEvaluator(problem, n_jobs=2), "forward", n_features=2,
                     costs=problem.cost_model)
    ref = run_search(CrossValidationEvaluator(problem, n_jobs=1), "forward", n_features=2,
                     costs=problem.cost_model)
    assert res.support == ref.support
    np.testing.assert_array_equal(res.fold_scores, ref.fold_scores)


def test_decision_from_measured_fit_times(monkeypatch):
    monkeypatch.setattr(pool_module, "_default_backend", lambda: False)
    policy = pool_module.PoolPolicy()
    policy.observe(10, 0.01)                   # 1 ms per fit in-process
    assert not policy.use_pool(100, 2)         # 0.1 s of work: not worth a parallel call
    assert policy.use_pool(1000, 2)            # 1 s of work
    assert not policy.use_pool(1000, 2, first=True)   # a batch starts in-process
    assert not policy.use_pool(1000, 1)        # one worker
    policy.observe_pool(100, 0.2)              # the pool: 2 ms per fit, slower than here
    tries = [policy.use_pool(1000, 2) for _ in range(16)]
    assert sum(tries) == 2                     # retried one time in eight


def test_workers_start_only_for_a_batch_worth_their_start_up(monkeypatch):
    # Fake start-up: records the call and marks the pool as running, no processes.
    started = []

    def fake_start(n_workers, warm_with):
        started.append(n_workers)
        pool_module._WARM[n_workers].set()

    monkeypatch.setattr(pool_module, "_WARM", {})
    monkeypatch.setattr(pool_module, "_start_pool", fake_start)
    monkeypatch.setattr(pool_module, "_default_backend", lambda: True)
    idle = [False]
    monkeypatch.setattr(pool_module, "_idle_core", lambda: idle[0])
    policy = pool_module.PoolPolicy()
    policy.observe(10, 0.4, 0.1)               # 10 ms CPU per fit (40 ms wall: a busy machine)
    assert not policy.use_pool(150, 2)         # 1.5 s CPU left: below MIN_START_SECONDS
    assert not policy.use_pool(300, 2)         # 3 s, but no idle core
    assert started == []
    idle[0] = True
    policy.use_pool(300, 2)                    # 3 s left: the workers are started
    for _ in range(100):
        if pool_module._WARM[2].is_set():
            break
        time.sleep(0.01)
    assert started == [2]
    assert policy.use_pool(150, 2)             # running: 1.5 s is worth a parallel call


def test_unknown_pool_mode_is_refused():
    with pytest.raises(InputError, match="pool must be one of auto, always, never"):
        CrossValidationEvaluator(_problem(), pool="sometimes")


def test_warm_starts_save_iterations_and_do_not_depend_on_where_fits_run():
    # Computed expectation: a forward step's candidates start from the current subset's
    # coefficients, so the lbfgs solver needs fewer iterations than from zero.
    problem = _problem()
    runs = {}
    for name, mode, parents in (("cold", "never", False), ("warm", "never", True),
                                ("warm pool", "always", True)):
        ev = CrossValidationEvaluator(problem, n_jobs=2, pool=mode, warm_start=True)
        ev.warm.use_parents = parents
        res = run_search(ev, "forward", n_features=4, costs=problem.cost_model)
        runs[name] = (res, ev.stats()["warm_start"])
    cold, warm = runs["cold"][1], runs["warm"][1]
    assert cold["n_warm"] == 0 and warm["n_warm"] > 0
    assert warm["iterations"] < cold["iterations"]
    assert runs["warm"][0].fold_scores == runs["warm pool"][0].fold_scores
    assert runs["warm"][1] == runs["warm pool"][1]
    # Other models ignore the option.
    X, y = load_breast_cancer(return_X_y=True)
    p = SelectionProblem(X[:, :4], y, make_pipeline(StandardScaler(), LogisticRegression(
        solver="liblinear")), cv=3)
    assert CrossValidationEvaluator(p, warm_start=True).stats()["warm_start"] is None


def test_rest_of_a_batch_stays_in_process_unless_workers_are_starting(monkeypatch):
    # A batch is fitted as one in-process part once nothing can move it to the pool;
    # only workers still starting in the background (PoolPolicy starts joblib's reusable
    # executor in a thread) can. Merging the parts too early would keep a batch off a
    # pool that comes up mid-batch; never merging splits n_jobs=2 work into more parts.
    import threading

    monkeypatch.setattr(pool_module, "_WARM", {})
    policy = pool_module.PoolPolicy()
    assert not policy.may_switch(1) and not policy.may_switch(2)   # no pool starting
    pool_module._WARM[2] = event = threading.Event()
    assert policy.may_switch(2)                                     # starting: may switch
    event.set()
    assert not policy.may_switch(2)                                 # running: decided
    assert pool_module.PoolPolicy("always").may_switch(2)
    assert not pool_module.PoolPolicy("never").may_switch(2)
