"""A dask cluster gives the same answer and fold scores as one local process."""

from __future__ import annotations

import numpy as np
import pytest
from joblib import parallel_config
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from featuresift import SelectionProblem, run_search
from featuresift.engine.evaluator import CrossValidationEvaluator


def test_local_dask_cluster_matches_one_process():
    distributed = pytest.importorskip(
        "distributed", reason="dask.distributed is not installed (featuresift[cluster])")
    X, y = load_breast_cancer(return_X_y=True)  # data shipped with scikit-learn
    X = X[:, :5]
    model = make_pipeline(StandardScaler(), LogisticRegression(max_iter=500))
    problem = SelectionProblem(X, y, model, cv=3)
    local = run_search(CrossValidationEvaluator(problem, n_jobs=1), "forward", n_features=2)
    with (distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                   dashboard_address=None) as cluster,
          distributed.Client(cluster) as client, parallel_config(backend="dask")):
        ev = CrossValidationEvaluator(problem, pool="always", fast_path=False)
        remote = run_search(ev, "forward", n_features=2)
        assert ev._cluster_backend is not None  # X, y, splits scattered once for the run
        scattered = {f.key for f in ev._cluster_backend.data_futures.values()}
        assert len(scattered) == 3 and scattered <= set(client.who_has())
    assert remote.selected == local.selected
    assert remote.fold_scores == local.fold_scores
    np.testing.assert_array_equal(
        [e.score_mean for e in remote.evaluations], [e.score_mean for e in local.evaluations])
