"""Evaluation engine: featuresift forward selection against scikit-learn's SFS.

(SFS = ``sklearn.feature_selection.SequentialFeatureSelector``.)

Run:  python benchmarks/bench_engine.py [--repeats 3] [--quick]

Prints a Markdown section (machine, then one table per measurement) on standard output;
``benchmarks/run_all.py`` puts it into ``benchmarks/README.md``.

Tasks (StandardScaler + LogisticRegression, 5-fold StratifiedKFold, accuracy, select 10):

* ``breast-cancer``: scikit-learn's breast-cancer data, 569 x 30;
* ``make_classification``: ``make_classification(n_samples=2000, n_features=100,
  n_informative=10, n_redundant=10, random_state=0)``.

Measurements, all in the same run, repeats interleaved (A B C, A B C, ...) so that a
change of machine load hits every configuration alike; times are medians:

1-2. featuresift ``run_search(problem, "forward", n_features=10, n_jobs=2)`` (exact mode)
     against SequentialFeatureSelector with n_jobs=1 and n_jobs=2 (scikit-learn's
     default BLAS threads), and with n_jobs=1 under ``threadpool_limits(1)``; the
     reference is the fastest of the three. The selected features must be identical.
     Also featuresift with ``share_preprocessing=False`` (the whole pipeline fitted per
     subset and fold), to show what sharing the scaler's fit buys.
3.   The same with racing on (F-race and t-race at alpha 0.2; t-race also with an
     indifference zone of 0.005): fits relative to exact mode, time relative to the
     reference, and whether the chosen subset's CV score is within one standard error
     (of the exact choice's fold scores) of the exact choice's.
4.   Parallel efficiency of the exact run on the larger task: the sum of the single-fit
     times measured inside the workers, divided by (wall time x 2 workers).
5.   Cache: forward twice on one evaluator, backward after forward, a forward run
     started again on a journal file, floating forward search (which comes back to
     subsets it has seen) and a budget sweep on one shared evaluator.
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import sys
import tempfile
import time
from pathlib import Path

import joblib
import numpy as np
import sklearn
from sklearn.datasets import load_breast_cancer, make_classification
from sklearn.feature_selection import SequentialFeatureSelector
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.utils.parallel import Parallel, delayed
from threadpoolctl import threadpool_info, threadpool_limits

from featuresift import CostModel, CrossValidationEvaluator, SelectionProblem, run_search
from featuresift.frontier import budget_sweep

N_SELECT = 10


def _estimator():
    return make_pipeline(StandardScaler(), LogisticRegression())


def tasks(quick: bool):
    X1, y1 = load_breast_cancer(return_X_y=True)
    X2, y2 = make_classification(n_samples=2000, n_features=100, n_informative=10,
                                 n_redundant=10, random_state=0)
    if quick:
        X2 = X2[:, :40]
    return {"breast-cancer (569 x 30)": (X1, y1),
            f"make_classification (2000 x {X2.shape[1]})": (X2, y2)}


def machine() -> list[str]:
    cpu = platform.processor() or "unknown"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    blas = [f"{i['internal_api']} {i.get('version') or ''} ({i['num_threads']} threads)"
            for i in threadpool_info() if i["user_api"] == "blas"]
    return [
        f"- CPU: {cpu}, {os.cpu_count()} logical cores; {platform.system()} "
        f"{platform.release()}",
        f"- Python {platform.python_version()}, numpy {np.__version__}, scikit-learn "
        f"{sklearn.__version__}, joblib {joblib.__version__}",
        f"- BLAS: {'; '.join(sorted(set(blas))) or 'none found'} by default; featuresift "
        "limits each fit to one BLAS thread",
        f"- load average at start: {' '.join(f'{x:.1f}' for x in os.getloadavg())}",
    ]


def run_sklearn(X, y, n_jobs, one_thread):
    sfs = SequentialFeatureSelector(_estimator(), n_features_to_select=N_SELECT,
                                    cv=StratifiedKFold(5), n_jobs=n_jobs)
    t0 = time.perf_counter()
    if one_thread:
        with threadpool_limits(1):
            sfs.fit(X, y)
    else:
        sfs.fit(X, y)
    return time.perf_counter() - t0, tuple(int(i) for i in np.flatnonzero(sfs.get_support()))


def run_featuresift(X, y, racing=None, n_jobs=2, share=True):
    problem = SelectionProblem(X, y, _estimator(), cv=StratifiedKFold(5))
    t0 = time.perf_counter()
    res = run_search(problem, "forward", n_features=N_SELECT, n_jobs=n_jobs, racing=racing,
                     share_preprocessing=share)
    wall = time.perf_counter() - t0
    return wall, res


RACES = {
    "F-race a=0.2": {"name": "f-race", "alpha": 0.2},
    "t-race a=0.2": {"name": "t-race", "alpha": 0.2},
    "t-race a=0.2, indifference 0.005": {"name": "t-race", "alpha": 0.2, "indifference": 0.005},
}


def _med(xs):
    return statistics.median(xs)


def bench_speed(task_data, repeats):
    """Tables 1-4."""
    sk_configs = {"SFS n_jobs=1": (1, False), "SFS n_jobs=2": (2, False),
                  "SFS n_jobs=1, 1 BLAS thread": (1, True)}
    races = {"exact": None, "no sharing": None,
             **RACES}
    out = {}
    for name, (X, y) in task_data.items():
        times = {k: [] for k in [*sk_configs, *races]}
        picks, results = {}, {}
        for _ in range(repeats):
            for k, (nj, one) in sk_configs.items():
                t, sel = run_sklearn(X, y, nj, one)
                times[k].append(t)
                picks[k] = sel
            for k, spec in races.items():
                t, res = run_featuresift(X, y, racing=spec, share=k != "no sharing")
                times[k].append(t)
                results[k] = res
        out[name] = (times, picks, results)
        print(f"[{name}] done", file=sys.stderr)
    return out


def efficiency(X, y, repeats):
    """Table 4: sum of single-fit times / (wall x workers), n_jobs=2 and 1."""
    rows = []
    for n_jobs in (2, 1):
        effs, walls = [], []
        for _ in range(repeats):
            problem = SelectionProblem(X, y, _estimator(), cv=StratifiedKFold(5))
            ev = CrossValidationEvaluator(problem, n_jobs=n_jobs)
            t0 = time.perf_counter()
            run_search(ev, "forward", n_features=N_SELECT, costs=problem.cost_model)
            wall = time.perf_counter() - t0
            fit_sum = sum(e.fit_time for e in ev.history)
            effs.append(fit_sum / (wall * n_jobs))
            walls.append(wall)
        rows.append((n_jobs, _med(walls), fit_sum, ev.n_fits, _med(effs)))
    return rows


def cache_table(X, y):
    problem = SelectionProblem(X, y, _estimator(), cv=StratifiedKFold(5))
    cm = problem.cost_model
    rows = []
    ev = CrossValidationEvaluator(problem, n_jobs=2)
    r1 = run_search(ev, "forward", n_features=N_SELECT, costs=cm)
    rows.append(("forward (fresh evaluator)", r1.n_fits, r1.n_cache_hits, r1.wall_time))
    r2 = run_search(ev, "forward", n_features=N_SELECT, costs=cm)
    rows.append(("forward again, same evaluator", r2.n_fits, r2.n_cache_hits, r2.wall_time))
    r3 = run_search(ev, "backward", n_features=N_SELECT, costs=cm)
    rows.append(("backward after forward, same evaluator", r3.n_fits, r3.n_cache_hits,
                 r3.wall_time))
    fresh = CrossValidationEvaluator(problem, n_jobs=2)
    r4 = run_search(fresh, "backward", n_features=N_SELECT, costs=cm)
    rows.append(("backward (fresh evaluator)", r4.n_fits, r4.n_cache_hits, r4.wall_time))
    fl = run_search(CrossValidationEvaluator(problem, n_jobs=2), "floating-forward",
                    n_features=N_SELECT, costs=cm)
    rows.append((f"floating forward to {N_SELECT} (fresh evaluator; {fl.n_evaluations} "
                 "distinct subsets)", fl.n_fits, fl.n_cache_hits, fl.wall_time))
    # A sweep over budgets with invented prices 1-4 per measurement (cycled).
    prices = CostModel(problem.feature_names,
                       {n: 1 + i % 4 for i, n in enumerate(problem.feature_names)})
    priced = SelectionProblem(X, y, _estimator(), costs=prices, cv=StratifiedKFold(5))
    t0 = time.perf_counter()
    fr = budget_sweep(priced, [5, 10, 15, 20], "forward", n_jobs=2, max_features=N_SELECT)
    rows.append((f"budget sweep, 4 budgets (5-20, prices 1-4 per measurement), one shared "
                 f"evaluator; without sharing: {fr.n_fits_without_cache} fits", fr.n_fits,
                 sum(r.n_cache_hits for r in fr.results), time.perf_counter() - t0))
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "journal.sqlite")
        first = CrossValidationEvaluator(problem, n_jobs=2, journal=path)
        r5 = run_search(first, "forward", n_features=N_SELECT, costs=cm)
        first.close()
        rows.append(("forward with a new journal", r5.n_fits, r5.n_cache_hits, r5.wall_time))
        again = CrossValidationEvaluator(problem, n_jobs=2, journal=path)
        r6 = run_search(again, "forward", n_features=N_SELECT, costs=cm)
        again.close()
        rows.append(("forward started again on that journal", r6.n_fits, r6.n_cache_hits,
                     r6.wall_time))
        assert r6.support == r5.support == r1.support
    assert r2.support == r1.support and r4.support == r3.support
    return rows


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--quick", action="store_true",
                    help="one repeat, 40 columns for the second task (smoke run)")
    args = ap.parse_args(argv)
    repeats = 1 if args.quick else args.repeats
    data = tasks(args.quick)
    lines = ["Machine and run:", ""] + machine()
    # joblib keeps its worker processes for the whole session; start them before timing
    # and report what that costs once.
    t0 = time.perf_counter()
    Parallel(n_jobs=2)(delayed(abs)(-i) for i in range(4))
    lines += [f"- starting the 2 joblib workers (once per session, not in the timings): "
              f"{time.perf_counter() - t0:.2f} s", ""]
    speed = bench_speed(data, repeats)

    lines += [f"### 1-2. Forward selection of {N_SELECT}: featuresift (exact, n_jobs=2) vs "
              "SequentialFeatureSelector", "",
              f"Median wall time of {repeats} interleaved repeats. Reference = the fastest "
              "SFS configuration. Target: ratio <= 0.5 and identical features. The last "
              "two columns: featuresift with `share_preprocessing=False` (the whole "
              "pipeline fitted for every subset and fold), and its ratio.", "",
              "| task | SFS n_jobs=1 | SFS n_jobs=2 | SFS n_jobs=1, 1 BLAS thread | "
              "featuresift | ratio to reference | fits | same features | "
              "featuresift, no sharing | ratio |",
              "|---|---|---|---|---|---|---|---|---|---|"]
    for name, (times, picks, results) in speed.items():
        ref = min(_med(times[k]) for k in picks)
        exact = results["exact"]
        same = all(tuple(exact.support) == sel for sel in picks.values())
        lines.append(
            f"| {name} | {_med(times['SFS n_jobs=1']):.2f} s | {_med(times['SFS n_jobs=2']):.2f} s"
            f" | {_med(times['SFS n_jobs=1, 1 BLAS thread']):.2f} s | "
            f"{_med(times['exact']):.2f} s | **{_med(times['exact']) / ref:.3f}** | "
            f"{exact.n_fits} | {'yes' if same else 'NO: ' + str(exact.support)} | "
            f"{_med(times['no sharing']):.2f} s | {_med(times['no sharing']) / ref:.3f} |")

    lines += ["", "### 3. Racing (same tasks, n_jobs=2)", "",
              "Fits relative to exact mode (target <= 0.5), time relative to the SFS "
              "reference (target <= 0.3), and the chosen subset's mean CV accuracy against "
              "the exact choice's (target: within one standard error = sample std of the "
              "exact choice's 5 fold scores / sqrt 5).", "",
              "| task | rule | fits | fits / exact | dropped | time | time / reference | "
              "CV accuracy (exact) | within 1 SE | same features |",
              "|---|---|---|---|---|---|---|---|---|---|"]
    for name, (times, picks, results) in speed.items():
        ref = min(_med(times[k]) for k in picks)
        exact = results["exact"]
        se = float(np.std(exact.fold_scores, ddof=1) / np.sqrt(len(exact.fold_scores)))
        for rule in RACES:
            r = results[rule]
            ok = r.score_mean >= exact.score_mean - se
            lines.append(
                f"| {name} | {rule} | {r.n_fits} | **{r.n_fits / exact.n_fits:.3f}** | "
                f"{r.extras['engine']['n_dropped']} | {_med(times[rule]):.2f} s | "
                f"**{_med(times[rule]) / ref:.3f}** | {r.score_mean:.4f} "
                f"({exact.score_mean:.4f} ± {se:.4f}) | {'yes' if ok else 'NO'} | "
                f"{'yes' if r.support == exact.support else 'no'} |")

    big_name = list(data)[1]
    eff = efficiency(*data[big_name], repeats)
    lines += ["", f"### 4. Parallel efficiency, exact forward selection on {big_name}", "",
              "Efficiency = (sum of single-fit times measured inside the workers) / "
              "(wall time x n_jobs); target >= 0.8 with n_jobs=2. Medians of "
              f"{repeats} runs.", "",
              "| n_jobs | wall time | sum of fit times | fits | efficiency |",
              "|---|---|---|---|---|"]
    for n_jobs, wall, fit_sum, n_fits, e in eff:
        lines.append(f"| {n_jobs} | {wall:.2f} s | {fit_sum:.2f} s | {n_fits} | **{e:.3f}** |")

    first_name = list(data)[0]
    rows = cache_table(*data[first_name])
    lines += ["", f"### 5. Cache and journal ({first_name}, n_jobs=2)", "",
              "| run | fits | requests served without fitting | time |", "|---|---|---|---|"]
    for label, fits, hits, wall in rows:
        lines.append(f"| {label} | {fits} | {hits} | {wall:.2f} s |")
    lines += ["", f"- load average at end: {' '.join(f'{x:.1f}' for x in os.getloadavg())}"]
    print("\n".join(lines))
    return 0


if __name__ == "__main__":
    sys.exit(main())
