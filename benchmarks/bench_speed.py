"""Speed where users feel it: whole-process runs, the linear fast path, certified optima.

Run:  python benchmarks/bench_speed.py [--repeats 3] [--quick] [--parts 1234]

Prints a Markdown section on standard output (``benchmarks/run_all.py`` puts it into
``benchmarks/README.md``). All figures come from one run; repeats are interleaved
(A B C, A B C, ...) so that a change of machine load hits every configuration alike;
times are medians.

1. Whole process, breast-cancer forward selection of 10 of 30 (StandardScaler +
   LogisticRegression, 5-fold StratifiedKFold, accuracy): a fresh Python process per run
   (start-up and imports included) for featuresift with ``n_jobs=1`` and ``n_jobs=2`` and
   for scikit-learn's ``SequentialFeatureSelector`` with ``n_jobs=1`` and ``n_jobs=2``;
   the reference is SFS's faster setting. Selected features must be identical.
2. Ridge (alpha=1) forward selection of 15 on ``make_regression(n_samples=2000,
   n_features=100, n_informative=10, random_state=0)``, 5-fold KFold, R^2: the fast path
   against the generic path (``fast_path=False``) with ``n_jobs=1`` and ``n_jobs=2``;
   identical choices required.
3. Exhaustive search with LDA on the first 16 breast-cancer measurements (5-fold, 65,535
   subsets), ``n_jobs=2``; and on the first 12 (4,095 subsets) with and without the fast
   path: the same optimum.
4. The CLI demo (``featuresift demo`` then ``featuresift run``), whole process, with
   ``--n-jobs 1`` and ``--n-jobs 2``; start-up and imports measured as
   ``python -c "import featuresift.cli"`` (and a bare ``python -c pass``).
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from sklearn.datasets import load_breast_cancer, make_regression
from sklearn.discriminant_analysis import LinearDiscriminantAnalysis
from sklearn.linear_model import Ridge
from sklearn.model_selection import KFold

from featuresift import CrossValidationEvaluator, SelectionProblem, run_search

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_engine import machine  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent

FS_SCRIPT = """
import json, sys, time
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from featuresift import SelectionProblem, run_search
X, y = load_breast_cancer(return_X_y=True)
p = SelectionProblem(X, y, make_pipeline(StandardScaler(), LogisticRegression()),
                     cv=StratifiedKFold(5))
r = run_search(p, "forward", n_features=10, n_jobs=int(sys.argv[1]))
print(json.dumps({"support": list(r.support), "pool": r.extras["engine"].get("pool")}))
"""

SFS_SCRIPT = """
import json, sys
import numpy as np
from sklearn.datasets import load_breast_cancer
from sklearn.feature_selection import SequentialFeatureSelector
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
X, y = load_breast_cancer(return_X_y=True)
sfs = SequentialFeatureSelector(make_pipeline(StandardScaler(), LogisticRegression()),
                                n_features_to_select=10, cv=StratifiedKFold(5),
                                n_jobs=int(sys.argv[1])).fit(X, y)
print(json.dumps({"support": np.flatnonzero(sfs.get_support()).tolist()}))
"""


def _med(xs):
    return statistics.median(xs)


def _env():
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def _run(cmd, cwd=None) -> tuple[float, str]:
    t0 = time.perf_counter()
    out = subprocess.run(cmd, capture_output=True, text=True, check=True, env=_env(), cwd=cwd)
    return time.perf_counter() - t0, out.stdout


def whole_process(repeats, tmp):
    fs = Path(tmp, "fs.py")
    fs.write_text(FS_SCRIPT)
    sk = Path(tmp, "sfs.py")
    sk.write_text(SFS_SCRIPT)
    configs = {"featuresift n_jobs=1": (fs, 1), "featuresift n_jobs=2": (fs, 2),
               "SFS n_jobs=1": (sk, 1), "SFS n_jobs=2": (sk, 2)}
    times = {k: [] for k in configs}
    picks = {}
    for _ in range(repeats):
        for k, (script, nj) in configs.items():
            t, out = _run([sys.executable, str(script), str(nj)])
            times[k].append(t)
            picks[k] = json.loads(out.strip().splitlines()[-1])
        print("[whole process] repeat done", file=sys.stderr)
    return times, picks


def ridge(repeats):
    X, y = make_regression(n_samples=2000, n_features=100, n_informative=10, random_state=0)
    configs = {"fast path": (True, 1), "generic n_jobs=1": (False, 1),
               "generic n_jobs=2": (False, 2)}
    times = {k: [] for k in configs}
    results = {}
    for _ in range(repeats):
        for k, (fast, nj) in configs.items():
            p = SelectionProblem(X, y, Ridge(alpha=1.0), cv=KFold(5))
            t0 = time.perf_counter()
            results[k] = run_search(p, "forward", n_features=15, fast_path=fast, n_jobs=nj)
            times[k].append(time.perf_counter() - t0)
        print("[ridge] repeat done", file=sys.stderr)
    return times, results


def exhaustive(repeats, quick):
    X, y = load_breast_cancer(return_X_y=True)
    n_big = 12 if quick else 16
    out = {}
    times = {"fast, 16": [], "fast, 12": [], "generic, 12": []}
    for _ in range(repeats):
        for k in times:
            n = n_big if k == "fast, 16" else 12
            p = SelectionProblem(X[:, :n], y, LinearDiscriminantAnalysis(), cv=5)
            ev = CrossValidationEvaluator(p, n_jobs=2, fast_path=k.startswith("fast"))
            t0, c0 = time.perf_counter(), time.process_time()
            out[k] = run_search(ev, "exhaustive", costs=p.cost_model)
            times[k].append(time.perf_counter() - t0)
            out[k + " cpu"] = time.process_time() - c0
            out[k + " stats"] = ev.stats()
        print("[exhaustive] repeat done", file=sys.stderr)
    return times, out, n_big


def cli_demo(repeats, tmp):
    demo = Path(tmp, "demo")
    _run([sys.executable, "-m", "featuresift", "demo", "--folder", str(demo)])
    config = next(demo.glob("*.yaml"))
    configs = {"--n-jobs 1": 1, "--n-jobs 2": 2}
    times = {k: [] for k in [*configs, "import featuresift.cli", "python -c pass"]}
    for r in range(repeats):
        for k, nj in configs.items():
            t, _ = _run([sys.executable, "-m", "featuresift", "run", str(config), "-q",
                         "--output", str(Path(tmp, f"out{nj}_{r}")), "--n-jobs", str(nj)],
                        cwd=demo)
            times[k].append(t)
        t, _ = _run([sys.executable, "-c", "import featuresift.cli"])
        times["import featuresift.cli"].append(t)
        t, _ = _run([sys.executable, "-c", "pass"])
        times["python -c pass"].append(t)
        print("[cli demo] repeat done", file=sys.stderr)
    return times


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--quick", action="store_true", help="one repeat, 12 columns in part 3")
    ap.add_argument("--parts", default="1234", help="which parts to run, e.g. 23")
    args = ap.parse_args(argv)
    repeats = 1 if args.quick else args.repeats
    lines = ["Machine and run:", ""] + machine()
    with tempfile.TemporaryDirectory() as tmp:
        if "1" in args.parts:
            lines += part1(*whole_process(repeats, tmp), repeats)
            print("\n".join(lines), file=sys.stderr)  # kept if a later part fails
        if "4" in args.parts:
            lines += part4(cli_demo(repeats, tmp), repeats)
    if "2" in args.parts:
        lines += part2(*ridge(repeats), repeats)
        print("\n".join(lines), file=sys.stderr)
    if "3" in args.parts:
        lines += part3(*exhaustive(repeats, args.quick), repeats)
    lines += ["", f"- load average at end: {' '.join(f'{x:.1f}' for x in os.getloadavg())}"]
    print("\n".join(lines))
    return 0


def part1(wp_times, wp_picks, repeats):
    lines = []

    ref = min(_med(wp_times["SFS n_jobs=1"]), _med(wp_times["SFS n_jobs=2"]))
    same = len({tuple(v["support"]) for v in wp_picks.values()}) == 1
    lines += ["", "### 1. Whole process: breast-cancer forward selection of 10 of 30", "",
              f"Median wall time of {repeats} interleaved runs, each a fresh Python process "
              "(start-up and imports included). Reference: SFS's faster setting. Target: "
              "featuresift <= 0.4 x reference, identical features; n_jobs=2 not slower "
              "than n_jobs=1.", "",
              "| run | wall time | ratio to reference | fits in-process / in pool |",
              "|---|---|---|---|"]
    for k, ts in wp_times.items():
        pool = wp_picks[k].get("pool")
        where = f"{pool['fits_in_process']} / {pool['fits_in_pool']}" if pool else "-"
        lines.append(f"| {k} | {_med(ts):.2f} s | **{_med(ts) / ref:.3f}** | {where} |")
    lines.append(f"\nIdentical features in all four: {'yes' if same else 'NO'} "
                 f"({wp_picks['featuresift n_jobs=2']['support']}).")
    return lines


def part4(cli_times, repeats):
    lines = []

    imp = _med(cli_times["import featuresift.cli"])
    bare = _med(cli_times["python -c pass"])
    lines += ["", "### 4. The CLI demo run, whole process", "",
              "`featuresift demo DIR` then `featuresift run DIR/grain_lab.yaml -q` (26 "
              "measurements, 1,500 lots, the demo's logistic regression and forward search); "
              f"median of {repeats}.", "",
              "| run | wall time | start-up + imports | share |", "|---|---|---|---|"]
    for k in ("--n-jobs 1", "--n-jobs 2"):
        t = _med(cli_times[k])
        lines.append(f"| featuresift run {k} | {t:.2f} s | {imp:.2f} s | {imp / t:.0%} |")
    lines.append(f"\nStart-up + imports = `python -c \"import featuresift.cli\"` "
                 f"({imp:.2f} s, of which {bare:.2f} s is a bare `python -c pass`).")
    return lines


def part2(r_times, r_res, repeats):
    lines = []

    ref_r = min(_med(r_times["generic n_jobs=1"]), _med(r_times["generic n_jobs=2"]))
    same_r = len({tuple(r.support) for r in r_res.values()}) == 1
    lines += ["", "### 2. Ridge forward selection of 15, make_regression 2000 x 100, 5-fold", "",
              "In-process times (the problem is built before timing), medians of "
              f"{repeats}. Target: fast path >= 10 x faster than the generic path (its faster "
              "setting), identical choices.", "",
              "| run | wall time | speed-up of the fast path |", "|---|---|---|"]
    fast_t = _med(r_times["fast path"])
    for k, ts in r_times.items():
        gain = "-" if k == "fast path" else f"{_med(ts) / fast_t:.1f} x"
        lines.append(f"| {k} | {_med(ts):.2f} s | {gain} |")
    lines.append(f"\nSpeed-up against the faster generic setting: "
                 f"**{ref_r / _med(r_times['fast path']):.1f} x**; identical choices: "
                 f"{'yes' if same_r else 'NO'} ({r_res['fast path'].support}).")
    return lines


def part3(ex_times, ex_out, n_big, repeats):
    lines = []

    big = ex_out["fast, 16"]
    lines += ["", f"### 3. Exhaustive search with LDA, first {n_big} breast-cancer "
              "measurements, 5-fold", "",
              f"`run_search(..., \"exhaustive\")`, n_jobs=2, medians of {repeats}. Target: "
              "16 measurements (65,535 subsets) in under 60 s; the same optimum as the "
              "generic path on 12.", "",
              "| run | subsets | wall time | CPU time of this process | pairs scored by the "
              "fast path / declined | optimum | CV accuracy |", "|---|---|---|---|---|---|---|"]
    for k in ("fast, 16", "fast, 12", "generic, 12"):
        r = ex_out[k]
        fp = ex_out[k + " stats"]["fast_path"]
        label = k.replace("16", str(n_big))
        pairs = "-" if fp is None else f"{fp['n_scored']:,} / {fp['n_declined']:,}"
        lines.append(f"| {label} | {r.n_evaluations:,} | {_med(ex_times[k]):.1f} s | "
                     f"{ex_out[k + ' cpu']:.1f} s | {pairs} | {r.support} | "
                     f"{r.score_mean:.4f} |")
    same_ex = ex_out["fast, 12"].support == ex_out["generic, 12"].support
    lines.append(f"\nStop reason ({n_big}): \"{big.stop_reason}\". Same optimum on 12, fast "
                 f"and generic: {'yes' if same_ex else 'NO'}; speed-up on 12: "
                 f"{_med(ex_times['generic, 12']) / _med(ex_times['fast, 12']):.1f} x.")
    return lines


if __name__ == "__main__":
    np.seterr(all="ignore")
    sys.exit(main())
