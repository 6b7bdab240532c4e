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

The pure-noise seeds and the grain demo (with its nested estimate) are part of the
reference benchmark's output (``python benchmarks/run_all.py reference``, which calls
:func:`answer_section`); this script on its own reports the scikit-learn data sets.

Run::

    python benchmarks/bench_answer.py             # scikit-learn data sets
    python benchmarks/bench_answer.py --all       # also pure noise and the demo
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


def demo_config():
    """The shipped grain demo's configuration (``examples/grain_lab.yaml``)."""
    return load_config(HERE.parent / "examples" / "grain_lab.yaml")


def demo_case():
    problem, kwargs = build_run(demo_config())
    kwargs.pop("n_jobs", None)
    return problem, kwargs


DATASETS = ("breast cancer", "wine", "diabetes")


def answer_section(noise: bool = True, demo: bool = True, datasets=DATASETS,
                   demo_nested_folds: int = 5) -> list[str]:
    """The default-answer table and its target lines (printed as they come).

    ``noise``: the five pure-noise seeds (target: nothing or free only in >= 4 of 5);
    ``demo``: the grain demo, with the nested estimate of its default search
    (``demo_nested_folds`` outer folds, the guard off inside, as nested runs do);
    ``datasets``: scikit-learn data sets whose clear signal must be kept.
    """
    lines = ["Defaults: strategy, pick `one-se`, guard `nested` (5 outer folds, alpha 0.05). "
             "n = number of measurements; scores are ROC AUC (noise, breast cancer), "
             "accuracy (wine), R² (diabetes).", "", HEADER]
    print("\n".join(lines), flush=True)

    def row(text):
        lines.append(text)
        print(text, flush=True)

    empty = 0
    demo_res = nested = None
    with threadpool_limits(1):
        for seed in range(5) if noise else []:
            problem, kw = noise_case(seed)
            t0 = time.perf_counter()
            res = run_search(problem, **kw)
            empty += res.cost == 0
            row(_row(f"pure noise, seed {seed}", res, time.perf_counter() - t0))
        cases = ([("grain demo", demo_case)] if demo else []) + [
            (name, lambda name=name: dataset_case(name)) for name in datasets]
        for name, make in cases:
            problem, kw = make()
            t0 = time.perf_counter()
            res = run_search(problem, **kw)
            row(_row(name, res, time.perf_counter() - t0))
            if name == "grain demo":
                demo_res = res
        if demo_res is not None and demo_nested_folds:
            from featuresift.config.nested import nested_from_config

            t0 = time.perf_counter()
            nested = nested_from_config(demo_config(), demo_nested_folds)
            nested_s = time.perf_counter() - t0
    tail = []
    if noise:
        tail.append(f"Pure noise: the answer is nothing or free only in {empty} of 5 seeds "
                    "(target >= 4).")
    if demo_res is not None:
        text = (f"Grain demo answer: {', '.join(demo_res.selected)} ({demo_res.cost:g} "
                f"{demo_res.cost_unit}); in-search {demo_res.score_mean:.3f}")
        if nested is not None:
            lo, hi = nested.ci if nested.ci is not None else (float("nan"),) * 2
            text += (f"; nested estimate of the default search ({nested.design}, guard off "
                     f"inside, {nested_s:.0f} s): {nested.outer_mean:.3f} "
                     f"(95% CI {lo:.3f} to {hi:.3f}); answers of the outer searches: "
                     + "; ".join(f"{k} ({v:.0%})"
                                 for k, v in nested.answer_frequency.items()))
        tail.append(text + ".")
    for t in tail:
        print("\n" + t, flush=True)
    return lines + tail


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--all", action="store_true",
                    help="also the pure-noise seeds and the grain demo (which "
                         "bench_reference.py reports)")
    args = ap.parse_args(argv)
    answer_section(noise=args.all, demo=args.all)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
