"""A dask cluster gives the same answer and fold scores as one local process.

The cluster tests share one ``LocalCluster(n_workers=2, threads_per_worker=1)`` of worker
*processes* (module fixture). The workers are forked from the test process, so they start
with scikit-learn already imported (about half a second instead of ten or more for two
fresh interpreters on a busy two-core machine); they are still separate processes, so
tasks, the fit plan and the scattered data travel pickled over TCP, as on a real cluster.
"""

from __future__ import annotations

import logging
import socket
import sys

import numpy as np
import pytest
import yaml
from joblib import parallel_config
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from featuresift import SelectionProblem, run_search, use_cluster
from featuresift.cli import main
from featuresift.demo import write_demo
from featuresift.engine import cluster as cluster_module
from featuresift.engine.evaluator import CrossValidationEvaluator
from featuresift.errors import InputError


@pytest.fixture(scope="module")
def client():
    distributed = pytest.importorskip(
        "distributed", reason="dask.distributed is not installed (featuresift[cluster])")
    import dask

    with (dask.config.set({"distributed.worker.multiprocessing-method": "fork"}),
          distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                   dashboard_address=":0", scheduler_kwargs={"dashboard": False},
                                   silence_logs=logging.ERROR)
          as cluster,
          distributed.Client(cluster) as client):
        yield client


def _problem():
    X, y = load_breast_cancer(return_X_y=True)  # data shipped with scikit-learn
    model = make_pipeline(StandardScaler(), LogisticRegression(max_iter=500))
    return SelectionProblem(X[::3, :5], y[::3], model, cv=3)


def test_local_dask_cluster_matches_one_process_and_sends_the_data_once(client, monkeypatch):
    problem = _problem()
    # The search's own answer (no noise guard: its outer-fold searches are runs of their
    # own, on other rows, each scattering its own data once).
    opts = {"n_features": 2, "guard": "off", "pick": "best"}
    local = run_search(CrossValidationEvaluator(problem, n_jobs=1), "forward", **opts)
    scatters = []
    real_scatter = client.scatter

    def counting_scatter(data, *args, **kwargs):
        scatters.append((data, kwargs))
        return real_scatter(data, *args, **kwargs)

    monkeypatch.setattr(client, "scatter", counting_scatter)
    with parallel_config(backend="dask"):
        ev = CrossValidationEvaluator(problem, pool="always", fast_path=False)
        remote = run_search(ev, "forward", **opts)
    # Every fit ran on the workers (separate processes), in several batches (one per
    # forward step at least) ...
    assert ev.pool.n_in_pool == ev.n_fits > 2 * len(problem.splits)
    assert set(client.run(lambda: __import__("os").getpid()).values()).isdisjoint(
        {__import__("os").getpid()})
    # ... and the data went out once for the whole run: one broadcast of X, y, splits
    # and the fit plan, never X again with a batch.
    with_x = [(d, k) for d, k in scatters
              if any(part is problem.X for part in (d if isinstance(d, list) else [d]))]
    assert len(with_x) == 1 and with_x[0][1].get("broadcast") is True, scatters
    assert len(scatters) == 1, scatters
    assert remote.selected == local.selected
    assert remote.fold_scores == local.fold_scores
    np.testing.assert_array_equal(
        [e.score_mean for e in remote.evaluations], [e.score_mean for e in local.evaluations])


def _demo_config(folder, engine: dict | None) -> str:
    """The invented demo lab, small: six candidates, three folds, forward to two
    measurements, the search's own answer (no noise guard)."""
    _, path = write_demo(folder, n_lots=60)
    cfg = yaml.safe_load(path.read_text(encoding="utf-8"))
    cfg.pop("n_jobs", None)
    cfg["data"]["features"] = ["moisture_pct", "odour_flag", "colour_index",
                               "fusarium_damaged_kernels", "protein_nir_pct", "falling_number_s"]
    cfg["cv"]["folds"] = 3
    cfg["strategy"] = {"name": "forward", "options": {"n_features": 2}}
    cfg["guard"] = "off"
    cfg["pick"] = "best"
    cfg["limits"] = {"max_features": 2}
    cfg["engine"] = {"journal": False, "progress": False, **(engine or {})}
    path.write_text(yaml.safe_dump(cfg, sort_keys=False), encoding="utf-8")
    return str(path)


def _cli_result(config: str, tmp_path, name: str, capsys) -> dict:
    import json

    out = tmp_path / name
    assert main(["run", config, "--output", str(out), "--quiet"]) == 0, capsys.readouterr().err
    return json.loads(next(out.glob("*-run/result.json")).read_text(encoding="utf-8"))


def test_yaml_engine_cluster_local_and_address_match_a_local_run(client, tmp_path, capsys):
    import dask

    plain = _cli_result(_demo_config(tmp_path / "plain", None), tmp_path, "plain", capsys)
    address = client.scheduler.address  # the shared cluster, reached by its address
    # pool: always -- every batch goes to the cluster, however quick the fits of this
    # small case are (the default policy may keep them all in this process).
    by_address = _cli_result(_demo_config(tmp_path / "addr", {"cluster": address,
                                                               "pool": "always"}),
                             tmp_path, "addr", capsys)
    with dask.config.set({"distributed.worker.multiprocessing-method": "fork"}):
        local = _cli_result(_demo_config(tmp_path / "local", {"cluster": "local",
                                                                 "workers": 2,
                                                                 "pool": "always"}),
                            tmp_path, "local", capsys)
    for res in (by_address, local):
        assert res["selected"] == plain["selected"]
        assert res["score"]["folds"] == plain["score"]["folds"]
        assert [e["score_mean"] for e in res["evaluations"]] == \
            [e["score_mean"] for e in plain["evaluations"]]
        pool = res["extras"]["engine"]["pool"]
        assert pool["fits_in_process"] == 0 and pool["fits_in_pool"] > 0  # all on the cluster
    assert by_address["extras"]["cluster"] == {"address": address, "workers": None}
    assert main(["run", _demo_config(tmp_path / "dry", {"cluster": address}), "--dry-run"]) == 0
    plan = capsys.readouterr().out
    assert "n_jobs every worker thread" in plan and f"on a dask cluster, {address}" in plan
    assert local["extras"]["cluster"] == {"address": "local", "workers": 2}


# ------------------------------------------------------------------ clean errors
def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_unreachable_scheduler_exits_2_naming_the_key_and_line(tmp_path, monkeypatch, capsys):
    pytest.importorskip("distributed", reason="dask.distributed is not installed")
    monkeypatch.setattr(cluster_module, "CONNECT_TIMEOUT_S", 1.0)
    config = _demo_config(tmp_path, {"cluster": f"tcp://127.0.0.1:{_free_port()}"})
    line = next(i for i, t in enumerate(open(config), 1) if t.strip().startswith("cluster:"))
    assert main(["run", config, "--quiet"]) == 2
    err = capsys.readouterr().err
    assert f"engine.cluster (line {line}): cannot reach the dask scheduler" in err
    assert err.count("\n") == 1 and "dask worker tcp://127.0.0.1:" in err
    assert not (tmp_path / "results").exists() or not any((tmp_path / "results").rglob("*.json"))


def test_missing_distributed_is_named_with_the_extra_to_install(tmp_path, monkeypatch, capsys):
    monkeypatch.setitem(sys.modules, "distributed", None)  # `import distributed` fails
    config = _demo_config(tmp_path, {"cluster": "local"})
    line = next(i for i, t in enumerate(open(config), 1) if t.strip().startswith("cluster:"))
    assert main(["validate", config]) == 2
    err = capsys.readouterr().err
    assert f"engine.cluster (line {line}): needs dask's distributed scheduler" in err
    assert 'pip install "featuresift[cluster]"' in err
    with pytest.raises(InputError, match=r"featuresift\[cluster\]"), use_cluster("local"):
        pass


@pytest.mark.parametrize("value, message", [
    ("tcp://10.0.0.5:87x6", "the port '87x6' is not a number"),
    ("tcp://10.0.0.5:70000", "the port '70000' is not a number from 1 to 65535"),
    ("http://10.0.0.5:8786", "unknown protocol 'http://'"),
    ("locla", "expected 'local' or a scheduler address"),
    ("tcp://bad host:8786", "'bad host' is not a host name"),
    (8786, "expected 'local' or a scheduler address"),
])
def test_malformed_cluster_settings_are_refused(value, message):
    with pytest.raises(InputError, match=message) as info:
        cluster_module.check_cluster(value)
    assert info.value.key == "cluster"
