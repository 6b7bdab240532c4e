"""Data sent to a dask cluster per run, and the cluster's wall time against one process.

A forward search (three steps, GaussianNB, 3-fold CV) on invented data of 5,000 rows x 40
columns runs on a two-worker ``LocalCluster`` (worker processes, one thread each):

* as featuresift does it: X, y, splits and the fit plan broadcast once per run;
* as joblib's dask backend would do it by itself: each batch's tasks carry their own
  column slices of X, which the backend scatters with every batch;

counting the scatters and their bytes (``dask.sizeof``, times the workers for a
broadcast). Then the wall time of the same search on the cluster against ``n_jobs=1`` in
this process (median of 3 repeats each, in the same run). Answers are compared too.

Run with ``python benchmarks/run_all.py cluster``; prints a Markdown block.
"""

from __future__ import annotations

import logging
import statistics
import time

import numpy as np

N_ROWS, N_COLS, REPEATS = 5000, 40, 3


def main() -> None:
    import dask
    import distributed
    from dask.sizeof import sizeof
    from joblib import parallel_config
    from sklearn.naive_bayes import GaussianNB

    from featuresift import SelectionProblem, run_search
    from featuresift.engine.evaluator import CrossValidationEvaluator

    rng = np.random.default_rng(0)
    X = rng.normal(size=(N_ROWS, N_COLS))
    y = (X[:, 0] + X[:, 1] + 0.5 * rng.normal(size=N_ROWS) > 0).astype(int)
    problem = SelectionProblem(X, y, GaussianNB(), cv=3)
    opts = {"n_features": 3, "guard": "off", "pick": "best"}

    def search(evaluator):
        return run_search(evaluator, "forward", **opts)

    local_times, local = [], None
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        local = search(CrossValidationEvaluator(problem, n_jobs=1, fast_path=False))
        local_times.append(time.perf_counter() - t0)

    rows, cluster_times, same = [], [], True
    with (dask.config.set({"distributed.worker.multiprocessing-method": "fork"}),
          distributed.LocalCluster(n_workers=2, threads_per_worker=1, dashboard_address=":0",
                                   scheduler_kwargs={"dashboard": False},
                                   silence_logs=logging.ERROR) as cluster,
          distributed.Client(cluster) as client, parallel_config(backend="dask")):
        real = client.scatter
        for mode in ("once per run (featuresift)", "with every batch (joblib alone)"):
            sent: list[int] = []

            def spy(data, *args, _sent=sent, **kwargs):
                copies = len(client.ncores()) if kwargs.get("broadcast") else 1
                _sent.append(sizeof(data) * copies)
                return real(data, *args, **kwargs)

            client.scatter = spy
            ev = CrossValidationEvaluator(problem, pool="always", fast_path=False)
            if mode.startswith("with every"):
                ev._on_cluster = lambda: None  # tasks carry their own columns
            res = search(ev)
            client.scatter = real
            same &= res.selected == local.selected and res.fold_scores == local.fold_scores
            rows.append((mode, len(sent), sum(sent) / 1e6, ev.n_fits))
        for _ in range(REPEATS):
            t0 = time.perf_counter()
            res = search(CrossValidationEvaluator(problem, pool="always", fast_path=False))
            cluster_times.append(time.perf_counter() - t0)
            same &= res.selected == local.selected and res.fold_scores == local.fold_scores

    print(f"Forward search, 3 steps, GaussianNB, 3-fold CV, {N_ROWS:,} x {N_COLS} "
          f"({X.nbytes / 1e6:.1f} MB of float64), two-worker LocalCluster.\n")
    print("| data sent | scatters | MB sent | fits |")
    print("|---|---:|---:|---:|")
    for mode, n, mb, fits in rows:
        print(f"| {mode} | {n} | {mb:.1f} | {fits} |")
    t_local, t_cluster = statistics.median(local_times), statistics.median(cluster_times)
    print(f"\nWall time, median of {REPEATS}: n_jobs=1 in this process {t_local:.2f} s, "
          f"cluster {t_cluster:.2f} s (ratio cluster / local {t_cluster / t_local:.2f}; "
          "on one two-core machine the cluster only adds task and transfer overhead, it "
          "pays with more machines or slower fits).")
    print(f"Same answer and fold scores as n_jobs=1 in every cluster run: {same}.")


if __name__ == "__main__":
    main()
