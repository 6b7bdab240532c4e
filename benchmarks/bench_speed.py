"""Speed where users feel it: whole-process runs, the linear fast path, certified optima.

Run:  python benchmarks/bench_speed.py [--repeats 3] [--quick] [--parts 1234] [--readme]

Prints a Markdown section on standard output (``benchmarks/run_all.py speed`` puts it
into ``benchmarks/README.md``). With ``--readme`` the script itself replaces, in
``benchmarks/README.md``, only the parts it ran (each part has its own block), so that
``python benchmarks/bench_speed.py --parts 14 --readme`` re-measures the whole-process
parts on a quiet machine and leaves the other figures alone. Every part states its
machine, date and load average. All figures of a part come from one run; repeats are
interleaved (A B C, A B C, ...) so that a change of machine load hits every
configuration alike; times are medians. CPU time is given beside wall time: on a
machine shared with other jobs, wall time measures the machine's load as much as the
code, CPU time much less so.

1. Whole process, breast-cancer forward selection of 10 of 30 (StandardScaler +
   LogisticRegression, 5-fold StratifiedKFold, accuracy): a fresh Python process per run
   (start-up and imports included) for featuresift with ``n_jobs=1`` and ``n_jobs=2``
   (the strategy's own answer: ``pick="best"``, no references, no guard, as
   scikit-learn's selector has none) and for scikit-learn's
   ``SequentialFeatureSelector`` with ``n_jobs=1`` and ``n_jobs=2``; the reference is
   SFS's faster setting. Selected features must be identical. CPU = user + system time
   of the process and the worker processes it waited for.
2. Ridge (alpha=1) forward selection of 15 on ``make_regression(n_samples=2000,
   n_features=100, n_informative=10, random_state=0)``, 5-fold KFold, R^2: the fast path
   against the generic path (``fast_path=False``) with ``n_jobs=1`` and ``n_jobs=2``;
   identical choices required (strategy's own answer, as in part 1).
3. Exhaustive search with LDA on the first 16 breast-cancer measurements (5-fold, 65,535
   subsets), ``n_jobs=2``, the search's own optimum (``pick="best"``, guard off); and on
   the first 12 (4,095 subsets) with and without the fast path: the same optimum (the
   generic run, the slow one, once).
4. The CLI demo (``featuresift demo`` then ``featuresift run``), whole process, with
   ``--n-jobs 1`` and ``--n-jobs 2``; start-up and imports measured as
   ``python -c "import featuresift.cli"`` (and a bare ``python -c pass``).
"""

from __future__ import annotations

import argparse
import json
import os
import re
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from datetime import datetime, timezone
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
README = Path(__file__).resolve().parent / "README.md"
RAW = {"pick": "best", "references": False, "guard": "off"}
"""The strategy's own answer, as a scikit-learn selector gives it (no answer rules)."""

FS_SCRIPT = """
import json, sys
from sklearn.datasets import load_breast_cancer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from featuresift import SelectionProblem, run_search
X, y = load_breast_cancer(return_X_y=True)
p = SelectionProblem(X, y, make_pipeline(StandardScaler(), LogisticRegression()),
                     cv=StratifiedKFold(5))
r = run_search(p, "forward", n_features=10, n_jobs=int(sys.argv[1]),
               pick="best", references=False, guard="off")
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


def _children_cpu() -> float:
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def _run(cmd, cwd=None) -> tuple[float, float, str]:
    """Wall time, CPU time (the process and the children it waited for), stdout."""
    c0, t0 = _children_cpu(), time.perf_counter()
    out = subprocess.run(cmd, capture_output=True, text=True, check=True, env=_env(), cwd=cwd)
    return time.perf_counter() - t0, _children_cpu() - c0, out.stdout


def _load() -> str:
    return " ".join(f"{x:.1f}" for x in os.getloadavg())


def _header(title: str, load0: str, repeats: int) -> list[str]:
    when = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    return ["", f"### {title}", "", f"Measured {when}, medians of {repeats}; load average "
            f"at start {load0}, at end {_load()} (1, 5, 15 min).", "", *machine()[:3], ""]


# ----------------------------------------------------------------------------- part 1
def whole_process(repeats, tmp):
    fs = Path(tmp, "fs.py")
    fs.write_text(FS_SCRIPT)
    sk = Path(tmp, "sfs.py")
    sk.write_text(SFS_SCRIPT)
    configs = {"featuresift n_jobs=1": (fs, 1), "featuresift n_jobs=2": (fs, 2),
               "SFS n_jobs=1": (sk, 1), "SFS n_jobs=2": (sk, 2)}
    times = {k: [] for k in configs}
    cpus = {k: [] for k in configs}
    picks = {}
    for _ in range(repeats):
        for k, (script, nj) in configs.items():
            t, c, out = _run([sys.executable, str(script), str(nj)])
            times[k].append(t)
            cpus[k].append(c)
            picks[k] = json.loads(out.strip().splitlines()[-1])
        print("[whole process] repeat done", file=sys.stderr)
    return times, cpus, picks


def part1(times, cpus, picks, repeats, load0):
    ref_key = min(("SFS n_jobs=1", "SFS n_jobs=2"), key=lambda k: _med(times[k]))
    ref = _med(times[ref_key])
    same = len({tuple(v["support"]) for v in picks.values()}) == 1
    lines = _header("1. Whole process: breast-cancer forward selection of 10 of 30",
                    load0, repeats)
    lines += ["Each run a fresh Python process (start-up and imports included). Reference: "
              f"SFS's faster setting here ({ref_key}). Target: featuresift <= 0.4 x "
              "reference, identical features; n_jobs=2 not slower than n_jobs=1.", "",
              "| run | wall time | ratio to reference | CPU time (with workers) | "
              "fits in-process / in pool |", "|---|---|---|---|---|"]
    for k, ts in times.items():
        pool = picks[k].get("pool")
        where = f"{pool['fits_in_process']} / {pool['fits_in_pool']}" if pool else "-"
        lines.append(f"| {k} | {_med(ts):.2f} s | **{_med(ts) / ref:.3f}** | "
                     f"{_med(cpus[k]):.2f} s | {where} |")
    fs1, fs2 = _med(times["featuresift n_jobs=1"]), _med(times["featuresift n_jobs=2"])
    lines.append(f"\nIdentical features in all four: {'yes' if same else 'NO'} "
                 f"({picks['featuresift n_jobs=2']['support']}). featuresift n_jobs=2 / "
                 f"n_jobs=1: {fs2 / fs1:.3f} (wall).")
    return lines


# ----------------------------------------------------------------------------- part 2
def ridge(repeats):
    X, y = make_regression(n_samples=2000, n_features=100, n_informative=10, random_state=0)
    configs = {"fast path": (True, 1), "generic n_jobs=1": (False, 1),
               "generic n_jobs=2": (False, 2)}
    times = {k: [] for k in configs}
    cpus = {k: [] for k in configs}
    results = {}
    for _ in range(repeats):
        for k, (fast, nj) in configs.items():
            p = SelectionProblem(X, y, Ridge(alpha=1.0), cv=KFold(5))
            t0, c0 = time.perf_counter(), time.process_time()
            results[k] = run_search(p, "forward", n_features=15, fast_path=fast, n_jobs=nj,
                                    **RAW)
            times[k].append(time.perf_counter() - t0)
            cpus[k].append(time.process_time() - c0)
        print("[ridge] repeat done", file=sys.stderr)
    return times, cpus, results


def part2(times, cpus, res, repeats, load0):
    ref_key = min(("generic n_jobs=1", "generic n_jobs=2"), key=lambda k: _med(times[k]))
    same = len({tuple(r.support) for r in res.values()}) == 1
    fp = res["fast path"].extras["engine"]["fast_path"]
    lines = _header("2. Ridge forward selection of 15, make_regression 2000 x 100, 5-fold",
                    load0, repeats)
    lines += ["In-process times (the problem is built before timing). Target: fast path "
              ">= 10 x faster than the generic path (its faster setting), identical "
              "choices. CPU time is this process's (the n_jobs=2 workers' CPU is not "
              "in it).", "",
              "| run | wall time | CPU time | speed-up of the fast path (wall) |",
              "|---|---|---|---|"]
    fast_t = _med(times["fast path"])
    for k, ts in times.items():
        gain = "-" if k == "fast path" else f"{_med(ts) / fast_t:.1f} x"
        lines.append(f"| {k} | {_med(ts):.2f} s | {_med(cpus[k]):.2f} s | {gain} |")
    lines.append(f"\nSpeed-up against the faster generic setting ({ref_key}): "
                 f"**{_med(times[ref_key]) / fast_t:.1f} x**; identical choices: "
                 f"{'yes' if same else 'NO'} ({res['fast path'].support}). Fast path: "
                 f"{fp['n_scored']:,} (subset, fold) pairs scored, {fp['n_updated']:,} of "
                 f"them by bordered updates, {fp['n_declined']:,} handed to a fit.")
    return lines


# ----------------------------------------------------------------------------- part 3
def exhaustive(repeats, quick):
    X, y = load_breast_cancer(return_X_y=True)
    n_big = 12 if quick else 16
    out = {}
    keys = ("fast, 16", "fast, 12", "generic, 12")
    times = {k: [] for k in keys}
    cpus = {k: [] for k in keys}
    for r in range(repeats):
        for k in keys:
            if k == "generic, 12" and r > 0:
                continue  # the slow reference once: it checks the optimum
            n = n_big if k == "fast, 16" else 12
            p = SelectionProblem(X[:, :n], y, LinearDiscriminantAnalysis(), cv=5)
            ev = CrossValidationEvaluator(p, n_jobs=2, fast_path=k.startswith("fast"))
            t0, c0 = time.perf_counter(), time.process_time()
            out[k] = run_search(ev, "exhaustive", costs=p.cost_model, **RAW)
            times[k].append(time.perf_counter() - t0)
            cpus[k].append(time.process_time() - c0)
            out[k + " stats"] = ev.stats()
        print("[exhaustive] repeat done", file=sys.stderr)
    return times, cpus, out, n_big


def part3(times, cpus, out, n_big, repeats, load0):
    lines = _header(f"3. Exhaustive search with LDA, first {n_big} breast-cancer "
                    "measurements, 5-fold", load0, repeats)
    lines += ["`run_search(..., \"exhaustive\", pick=\"best\", guard=\"off\")`, n_jobs=2 "
              "(the fast path scores in this process; nothing goes to the pool). Target: 16 "
              "measurements (65,535 subsets) in under 60 s on 2 cores; the same optimum "
              "as the generic path on 12 (generic: one run).", "",
              "| run | subsets | wall time | CPU time of this process | pairs scored by "
              "the fast path / by bordered updates / declined | optimum | CV accuracy |",
              "|---|---|---|---|---|---|---|"]
    for k in ("fast, 16", "fast, 12", "generic, 12"):
        r = out[k]
        fp = out[k + " stats"]["fast_path"]
        label = k.replace("16", str(n_big))
        pairs = ("-" if fp is None else
                 f"{fp['n_scored']:,} / {fp['n_updated']:,} / {fp['n_declined']:,}")
        lines.append(f"| {label} | {r.extras.get('allowed_subsets', 0):,} | "
                     f"{_med(times[k]):.1f} s | {_med(cpus[k]):.1f} s | {pairs} | "
                     f"{r.support} | {r.score_mean:.4f} |")
    same = out["fast, 12"].support == out["generic, 12"].support
    lines.append(f"\nStop reason ({n_big}): \"{out['fast, 16'].stop_reason}\". Same optimum "
                 f"on 12, fast and generic: {'yes' if same else 'NO'}; speed-up on 12: "
                 f"{_med(times['generic, 12']) / _med(times['fast, 12']):.1f} x (wall).")
    return lines


# ----------------------------------------------------------------------------- part 4
def cli_demo(repeats, tmp):
    demo = Path(tmp, "demo")
    _run([sys.executable, "-m", "featuresift", "demo", "--folder", str(demo)])
    config = next(demo.glob("*.yaml"))
    runs = {"--n-jobs 1": 1, "--n-jobs 2": 2}
    keys = [*runs, "import featuresift.cli", "python -c pass"]
    times = {k: [] for k in keys}
    cpus = {k: [] for k in keys}
    for r in range(repeats):
        for k, nj in runs.items():
            t, c, _ = _run([sys.executable, "-m", "featuresift", "run", str(config), "-q",
                            "--output", str(Path(tmp, f"out{nj}_{r}")), "--n-jobs", str(nj)],
                           cwd=demo)
            times[k].append(t)
            cpus[k].append(c)
        for k, code in (("import featuresift.cli", "import featuresift.cli"),
                        ("python -c pass", "pass")):
            t, c, _ = _run([sys.executable, "-c", code])
            times[k].append(t)
            cpus[k].append(c)
        print("[cli demo] repeat done", file=sys.stderr)
    return times, cpus


def part4(times, cpus, repeats, load0):
    imp = _med(times["import featuresift.cli"])
    bare = _med(times["python -c pass"])
    lines = _header("4. The CLI demo run, whole process", load0, repeats)
    lines += ["`featuresift demo --folder DIR` once, then `featuresift run "
              "DIR/grain_lab.yaml -q --n-jobs N` (the demo's defaults: its logistic "
              "regression, forward search, one-se pick and noise guard).", "",
              "| run | wall time | CPU time (with workers) | start-up + imports | share |",
              "|---|---|---|---|---|"]
    for k in ("--n-jobs 1", "--n-jobs 2"):
        t = _med(times[k])
        lines.append(f"| featuresift run {k} | {t:.2f} s | {_med(cpus[k]):.2f} s | "
                     f"{imp:.2f} s | {imp / t:.0%} |")
    lines.append(f"\nStart-up + imports = `python -c \"import featuresift.cli\"` "
                 f"({imp:.2f} s wall, {_med(cpus['import featuresift.cli']):.2f} s CPU; of "
                 f"which a bare `python -c pass` takes {bare:.2f} s).")
    return lines


# ----------------------------------------------------------------------------- output
def _block(part: str, lines: list[str]) -> str:
    return (f"<!-- BEGIN bench_speed.py part {part} -->\n" + "\n".join(lines).strip("\n")
            + f"\n<!-- END bench_speed.py part {part} -->")


def update_readme(blocks: dict[str, str]) -> None:
    """Replace the named part blocks in README.md (inside the bench_speed.py block)."""
    text = README.read_text(encoding="utf-8")
    for part, block in blocks.items():
        pattern = re.compile(re.escape(f"<!-- BEGIN bench_speed.py part {part} -->") + ".*?"
                             + re.escape(f"<!-- END bench_speed.py part {part} -->"),
                             re.DOTALL)
        if pattern.search(text):
            text = pattern.sub(lambda _, b=block: b, text, count=1)
        else:
            end = "<!-- END bench_speed.py -->"
            if end not in text:
                text = text.rstrip("\n") + "\n\n<!-- BEGIN bench_speed.py -->\n" + end + "\n"
            text = text.replace(end, block + "\n\n" + end, 1)
    README.write_text(text, encoding="utf-8")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--quick", action="store_true", help="one repeat, 12 columns in part 3")
    ap.add_argument("--parts", default="1234", help="which parts to run, e.g. 14")
    ap.add_argument("--readme", action="store_true",
                    help="replace the blocks of the parts run in benchmarks/README.md")
    args = ap.parse_args(argv)
    repeats = 1 if args.quick else args.repeats
    blocks: dict[str, str] = {}

    def done(part, lines):
        blocks[part] = _block(part, lines)
        print(blocks[part], file=sys.stderr)  # kept if a later part fails

    with tempfile.TemporaryDirectory() as tmp:
        if "1" in args.parts:
            load0 = _load()
            done("1", part1(*whole_process(repeats, tmp), repeats, load0))
        if "4" in args.parts:
            load0 = _load()
            done("4", part4(*cli_demo(repeats, tmp), repeats, load0))
    if "2" in args.parts:
        load0 = _load()
        done("2", part2(*ridge(repeats), repeats, load0))
    if "3" in args.parts:
        load0 = _load()
        done("3", part3(*exhaustive(repeats, args.quick), repeats, load0))
    order = sorted(blocks)
    print("\n\n".join(blocks[p] for p in order))
    if args.readme:
        update_readme(blocks)
    return 0


if __name__ == "__main__":
    np.seterr(all="ignore")
    sys.exit(main())
