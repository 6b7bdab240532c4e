"""The default answer: pure noise, the grain demo and scikit-learn data sets.

Every run uses the library's defaults (default strategy, ``pick="one-se"``, noise guard
``nested``: 5 outer folds, one-sided paired t-test at alpha 0.05) and reports

* the answer, the best subset found (``pick="best"``) and the one-se pick before the
  guard, with their in-search scores (the search's own, optimistic, CV estimate);
* the guard's p-value, its decision, the nested (honest) score of the search's answers
  on the outer folds, and what the guard cost in model fits against the search's own.

Cases:

* **pure noise**: 200 rows, 30 standard-normal measurements (1 EUR each), a fair coin
  as target, logistic regression, ROC AUC, 5 seeds. Target: the answer is "nothing"
  or "free only" in at least 4 of 5 seeds.
* **grain demo**: the shipped example (``examples/grain_lab.yaml``: 1,500 invented lots,
  26 candidates, budget 30 EUR per lot) with its own strategy settings; the answer
  must still buy the informative tests.
* **breast cancer, wine, diabetes** (shipped with scikit-learn; 1 EUR per measurement,
  no budget): clear signal must not be thrown away.

Run::

    python benchmarks/bench_answer.py             # all cases
    python benchmarks/bench_answer.py --quick     # noise only
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
from sklearn.datasets import load_breast_cancer, load_diabetes, load_wine
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from threadpoolctl import threadpool_limits

from featuresift import SelectionProblem, run_search
from featuresift.config import build_run, load_config

HERE = Path(__file__).resolve().parent


def _row(case, res, seconds):
    g = res.guard
    best = res.pick.get("best", {})
    before = g.get("replaced", res.selected)
    nested = g.get("nested_mean")
    p = g.get("p_value")
    return (
        f"| {case} | {len(res.selected)} ({res.headline().split(' (')[0]}) "
        f"| {len(before)} | {len(best.get('features', []))} "
        f"| {best.get('score_mean', float('nan')):.3f} | {res.score_mean:.3f} "
        f"| {'—' if nested is None else f'{nested:.3f}'} "
        f"| {'—' if p is None else f'{p:.3g}'} "
        f"| {res.n_fits} | {g.get('n_fits', 0)} | {seconds:.0f} |"
    )


HEADER = (
    "| case | answer: n | one-se pick before guard: n | best found: n | best in-search "
    "| answer in-search | nested (guard) | guard p | search fits | guard fits | s |\n"
    "|---|---|---|---|---|---|---|---|---|---|---|"
)


def _lr():
    return make_pipeline(StandardScaler(), LogisticRegression(max_iter=2000))


def noise_case(seed: int):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(200, 30))
    y = rng.integers(0, 2, size=200)
    problem = SelectionProblem(X, y, _lr(), cv=5, scoring="roc_auc")
    return problem, {}


def dataset_case(name: str):
    if name == "diabetes":
        X, y = load_diabetes(return_X_y=True)
        return SelectionProblem(X, y, make_pipeline(StandardScaler(), Ridge()), cv=5,
                                scoring="r2"), {}
    loader, scoring = {"breast cancer": (load_breast_cancer, "roc_auc"),
                       "wine": (load_wine, "accuracy")}[name]
    X, y = loader(return_X_y=True)
    return SelectionProblem(X, y, _lr(), cv=5, scoring=scoring), {}


def demo_case():
    cfg = load_config(HERE.parent / "examples" / "grain_lab.yaml")
    problem, kwargs = build_run(cfg)
    kwargs.pop("n_jobs", None)
    return problem, kwargs


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="pure noise only")
    args = ap.parse_args(argv)
    print("Defaults: strategy, pick `one-se`, guard `nested` (5 outer folds, alpha 0.05). "
          "n = number of measurements; scores are ROC AUC (noise, breast cancer), "
          "accuracy (wine), R² (diabetes).\n")
    print(HEADER)
    empty = 0
    with threadpool_limits(1):
        for seed in range(5):
            problem, kw = noise_case(seed)
            t0 = time.perf_counter()
            res = run_search(problem, **kw)
            empty += res.cost == 0
            print(_row(f"pure noise, seed {seed}", res, time.perf_counter() - t0), flush=True)
        cases = [] if args.quick else [
            ("grain demo", demo_case), ("breast cancer", lambda: dataset_case("breast cancer")),
            ("wine", lambda: dataset_case("wine")), ("diabetes", lambda: dataset_case("diabetes")),
        ]
        demo = None
        for name, make in cases:
            problem, kw = make()
            t0 = time.perf_counter()
            res = run_search(problem, **kw)
            print(_row(name, res, time.perf_counter() - t0), flush=True)
            if name == "grain demo":
                demo = res
    print(f"\nPure noise: the answer is nothing or free only in {empty} of 5 seeds "
          "(target >= 4).")
    if demo is not None:
        nested = demo.guard.get("nested_mean", float("nan"))
        print(f"\nGrain demo answer: {', '.join(demo.selected)} ({demo.cost:g} "
              f"{demo.cost_unit}); nested estimate {nested:.3f}, in-search "
              f"{demo.score_mean:.3f}.")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
