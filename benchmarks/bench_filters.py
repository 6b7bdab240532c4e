"""Benchmarks of the filters: wide model-free selection, and pre-screen + floating search.

Run:  python benchmarks/bench_filters.py [--quick] [--strategy NAME]

Part 1  Model-free budgeted greedy on 5,000 x 2,000 synthetic data (panel costs).
        Wall time is the median of repeats; speed is also given as a ratio to two
        references timed in the same run on the same data: scikit-learn's
        ``f_classif`` (one univariate pass) and ``numpy.corrcoef`` (the full
        2,000 x 2,000 correlation matrix the greedy never builds). Peak memory is
        measured with tracemalloc in a separate run (numpy reports its buffers to it).
Part 2  Pre-screen + floating forward search on 2,000 x 500 synthetic data with 15
        informative features under a budget. The screen and the search see only the
        training rows (1,500); the chosen subset is then scored on the 500 held-out
        rows, so the reported accuracy is honest.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import sys
import time
import tracemalloc

import numpy as np


def _timed(fn, repeats):
    times = []
    out = None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return out, statistics.median(times), times


def _peak_mib(fn):
    tracemalloc.start()
    try:
        fn()
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    return peak / 2**20


def wide_data(n=5000, p=2000, n_informative=20, n_copies=30, seed=0):
    """Binary target from 20 informative columns; 30 noisy copies of them; the rest noise.

    Costs: 1-10 per feature at random; columns 100-299 form 10 panels of 20 (price 15).
    """
    from featuresift import CostModel

    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p))
    w = rng.uniform(0.5, 1.5, size=n_informative) * rng.choice([-1, 1], size=n_informative)
    logit = X[:, :n_informative] @ w
    y = (logit + rng.logistic(size=n) > 0).astype(int)
    src = rng.integers(0, n_informative, size=n_copies)
    X[:, n_informative:n_informative + n_copies] = X[:, src] + 0.3 * rng.normal(
        size=(n, n_copies))
    names = [f"m{j:04d}" for j in range(p)]
    prices = rng.uniform(1, 10, size=p).round(2)
    panels = {f"panel{k}": (15.0, names[100 + 20 * k:120 + 20 * k]) for k in range(10)}
    in_panel = {m for _, (_, ms) in panels.items() for m in ms}
    cm = CostModel(names, {m: float(c) for m, c in zip(names, prices) if m not in in_panel},
                   panels=panels, unit="EUR")
    return X, y, cm, n_informative, n_copies, src


def part1(quick: bool) -> dict:
    from sklearn.feature_selection import f_classif

    from featuresift.filters import budgeted_greedy

    n, p = (1000, 400) if quick else (5000, 2000)
    X, y, cm, k_inf, n_cop, src = wide_data(n, p)
    budget = 60.0
    repeats = 3
    print(f"\n== Part 1: model-free budgeted greedy, {n} x {p}, budget {budget:g} {cm.unit} ==")
    _, t_f, _ = _timed(lambda: f_classif(X, y), repeats)
    _, t_corr, _ = _timed(lambda: np.corrcoef(X, rowvar=False), repeats)
    configs = {
        "pearson + max_abs_corr (MID)": dict(relevance="pearson", redundancy="max_abs_corr"),
        "mutual_info plug-in + MI (mRMR MID)": dict(
            relevance={"name": "mutual_info", "estimator": "plugin"},
            redundancy="mutual_info"),
    }
    rows = {}
    for label, kw in configs.items():
        def run(kw=kw):
            return budgeted_greedy(X, y, cm, budget, **kw)

        sel, t_med, times = _timed(run, repeats)
        peak = _peak_mib(run)
        informative = {j for j in sel.order if j < k_inf}
        copies = [j for j in sel.order if k_inf <= j < k_inf + n_cop]
        copy_of_chosen = [j for j in copies if src[j - k_inf] in informative]
        rows[label] = {
            "seconds_median": t_med, "seconds_all": times, "peak_tracemalloc_mib": peak,
            "n_selected": len(sel.order), "cost": sel.cost, "rule_kept": sel.rule,
            "informative_selected": len(informative),
            "copies_of_selected_informative": len(copy_of_chosen),
            "ratio_to_f_classif": t_med / t_f, "ratio_to_corrcoef": t_med / t_corr,
            "runs": {r: (len(v["order"]), round(v["value"], 4), v["cost"])
                     for r, v in sel.runs.items()},
        }
        print(f"{label}:")
        print(f"  median {t_med:.2f} s over {repeats} runs ({', '.join(f'{t:.2f}' for t in times)})"
              f"; peak traced memory {peak:.0f} MiB")
        print(f"  = {t_med / t_f:.1f} x f_classif ({t_f:.3f} s), "
              f"{t_med / t_corr:.2f} x numpy.corrcoef ({t_corr:.2f} s)")
        print(f"  chose {len(sel.order)} features, cost {sel.cost:.2f} {cm.unit} "
              f"(<= {budget:g}), kept the '{sel.rule}' run; runs (n, value, cost): "
              f"{rows[label]['runs']}")
        print(f"  informative chosen: {len(informative)} of {k_inf}; noisy copies of chosen "
              f"informative columns: {len(copy_of_chosen)}")
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"process peak RSS so far: {rss:.0f} MiB (data itself: {X.nbytes / 2**20:.0f} MiB)")
    return {"n": n, "p": p, "f_classif_s": t_f, "corrcoef_s": t_corr, "configs": rows,
            "peak_rss_mib": rss}


def screened_data(n=2000, p=500, k=15, seed=1):
    from featuresift import CostModel

    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, p))
    w = np.linspace(0.6, 1.2, k) * rng.choice([-1, 1], size=k)
    y = (X[:, :k] @ w + rng.logistic(size=n) > 0).astype(int)
    perm = rng.permutation(p)  # informative columns at random positions
    X = X[:, perm]
    informative = set(np.where(perm < k)[0].tolist())
    names = [f"f{j:03d}" for j in range(p)]
    prices = rng.uniform(1, 5, size=p).round(2)
    cm = CostModel(names, {m: float(c) for m, c in zip(names, prices)}, unit="EUR")
    return X, y, cm, informative


def part2(quick: bool, strategy: str) -> dict:
    from sklearn.linear_model import LogisticRegression
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    from featuresift import CostModel, SelectionProblem
    from featuresift.filters import screened_search
    from featuresift.strategies import STRATEGIES

    n, p = (800, 200) if quick else (2000, 500)
    X, y, cm, informative = screened_data(n, p)
    inf_cost = cm.cost(sorted(informative))
    budget = round(1.25 * inf_cost, 2)
    keep = 40
    if strategy not in STRATEGIES:
        print(f"strategy '{strategy}' not registered; falling back to 'forward'")
        strategy = "forward"
    rng = np.random.default_rng(0)
    test = np.zeros(n, bool)
    test[rng.choice(n, size=n // 4, replace=False)] = True
    tr = ~test
    names = list(cm.feature_names)
    cm_tr = CostModel(names, cm.feature_costs, unit=cm.unit)
    model = make_pipeline(StandardScaler(), LogisticRegression(max_iter=500))
    prob = SelectionProblem(X[tr], y[tr], model, costs=cm_tr, cv=3, scoring="accuracy",
                            feature_names=names)
    print(f"\n== Part 2: pre-screen (top {keep} by ANOVA F per cost) + {strategy}, "
          f"{n} x {p}, 15 informative ==")
    print(f"budget {budget:g} {cm.unit} (1.25 x the {inf_cost:.2f} the 15 informative cost)")
    t0 = time.perf_counter()
    screen, res = screened_search(prob, strategy, keep=keep, rule="top_per_cost",
                                  budget=budget)
    secs = time.perf_counter() - t0
    kept_inf = len(informative & set(screen.kept.tolist()))
    found = informative & set(res.support)
    fitted = model.fit(X[tr][:, res.support], y[tr])
    holdout = float((fitted.predict(X[test][:, res.support]) == y[test]).mean())
    oracle_cols = sorted(informative)
    oracle = float((model.fit(X[tr][:, oracle_cols], y[tr]).predict(X[test][:, oracle_cols])
                    == y[test]).mean())
    print(f"screen kept {screen.kept.size} columns, {kept_inf} of 15 informative")
    print(f"search chose {len(res.support)} features, cost {res.cost:.2f} {cm.unit} "
          f"(budget {budget:g}); informative recovered: {len(found)} of 15")
    print(f"CV accuracy (training rows, optimistic) {res.score_mean:.4f}; held-out accuracy "
          f"{holdout:.4f}; held-out accuracy of the 15 informative {oracle:.4f}")
    print(f"{res.n_evaluations} subsets evaluated, {res.n_fits} fits, {secs:.1f} s "
          f"(strategy '{res.strategy['name']}', stop: {res.stop_reason})")
    return {"strategy": res.strategy["name"], "recovered": len(found), "kept_informative":
            kept_inf, "n_selected": len(res.support), "cost": res.cost, "budget": budget,
            "cv": res.score_mean, "holdout": holdout, "oracle_holdout": oracle,
            "seconds": secs, "n_evaluations": res.n_evaluations}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="small sizes (smoke run)")
    ap.add_argument("--strategy", default="floating-forward",
                    help="wrapper strategy of part 2 (default floating-forward)")
    ap.add_argument("--part", choices=["1", "2", "all"], default="all")
    args = ap.parse_args(argv)
    print(f"python {sys.version.split()[0]}, numpy {np.__version__}, cores {os.cpu_count()}")
    if args.part in ("1", "all"):
        part1(args.quick)
    if args.part in ("2", "all"):
        part2(args.quick, args.strategy)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
