"""Peak memory and wall time of whole CLI runs on a 20,000 x 1,000 CSV.

Run:  python benchmarks/bench_memory.py [--rows N] [--cols P] [--repeats R] [--keep DIR]
      (or ``python benchmarks/run_all.py memory``, which refreshes benchmarks/README.md)

An invented grain-receiving-lab table (980 NIR absorbance bands and 20 lab tests per
lot, a pass/fail milling grade from a few of the lab tests) is written as CSV into a
temporary folder. Each measurement is a fresh process, started from a small wrapper
that reports ``resource.getrusage(RUSAGE_CHILDREN).ru_maxrss`` after the child ends,
so the figure is the peak resident set of the whole process (interpreter, imports,
reading, search, outputs), not of one function. Wall time is the median of
``--repeats`` runs; peak memory is the largest of them.

Measured:

* ``baseline``: ``python -c "import featuresift, sklearn, pandas"``, the fixed part;
* ``pandas.read_csv``: a process that only reads the file with ``pandas.read_csv``
  (the reference for time, and what a plain read costs in memory);
* ``screen``: ``featuresift screen`` (ANOVA F per measurement, Benjamini-Hochberg
  q-values, each measurement's most correlated partner);
* ``forward``: ``featuresift run`` with forward selection of 3 measurements
  (``strategy.options.n_features: 3``) with ``LinearDiscriminantAnalysis`` (the
  engine's exact LDA fast path), 5-fold CV accuracy, ``n_jobs: 1``, the default noise
  guard (nested, 5 outer folds) and references; and the same with ``guard: off``.

The ratio is peak resident memory over the size of the data as float64
(rows x columns x 8 bytes), with and without the baseline.
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

LAB_TESTS = [
    "moisture_pct", "test_weight_kg_hl", "protein_pct", "falling_number_s",
    "wet_gluten_pct", "gluten_index", "ash_pct", "zeleny_ml", "skcs_hardness",
    "broken_kernels_pct", "foreign_material_pct", "sprouted_pct", "don_ppm",
    "colour_index", "grain_temp_c", "kernel_weight_g", "starch_damage_ucd",
    "amylase_activity", "lipid_pct", "fibre_pct",
]

_WRAPPER = (
    "import resource, subprocess, sys, time\n"
    "t0 = time.perf_counter()\n"
    "r = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)\n"
    "dt = time.perf_counter() - t0\n"
    "if r.returncode:\n"
    "    sys.stderr.write(r.stderr.decode(errors='replace')[-3000:]); sys.exit(r.returncode)\n"
    "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, dt)\n"
)


def write_lots(path: Path, n: int, p: int, seed: int = 0) -> list[str]:
    """Write the invented table; returns the candidate column names."""
    rng = np.random.default_rng(seed)
    n_lab = min(len(LAB_TESTS), p)
    n_nir = p - n_lab
    names = [f"nir_abs_{1100 + 2 * i}nm" for i in range(n_nir)] + LAB_TESTS[:n_lab]
    lab = rng.normal(size=(n, n_lab))
    grade = (lab[:, :6] @ np.linspace(1.0, 0.3, min(6, n_lab))[:6]
             + rng.logistic(size=n) > 0).astype(int)
    # Absorbance spectra: a few smooth components plus noise, around 0.2-0.8.
    waves = np.linspace(0, 1, max(n_nir, 1))
    basis = np.stack([np.sin((k + 1) * np.pi * waves) for k in range(5)])
    lot_id = np.char.add("L", np.arange(1, n + 1).astype(str))
    with open(path, "w", encoding="utf-8", newline="") as fh:
        fh.write(",".join(["lot_id", "meets_milling_grade", *names]) + "\n")
        for lo in range(0, n, 2000):
            hi = min(lo + 2000, n)
            nir = (0.5 + 0.1 * rng.normal(size=(hi - lo, 5)) @ basis
                   + 0.01 * rng.normal(size=(hi - lo, n_nir)))
            block = np.hstack([nir, lab[lo:hi] * [1.5, 2.0, 1.2, 40, 3, 8, 0.05, 6, 9, 1,
                                                  0.3, 0.5, 0.4, 2, 3, 4, 5, 6, 0.4, 0.7]
                               [:n_lab] + 10])
            text = np.char.mod("%.6g", block)
            lines = [",".join((lot_id[lo + i], str(grade[lo + i]), *row))
                     for i, row in enumerate(text)]
            fh.write("\n".join(lines) + "\n")
    return names


_COMMON = """data:
  path: {csv}
  target: meets_milling_grade
  exclude: [lot_id]
model:
  estimator: sklearn.discriminant_analysis.LinearDiscriminantAnalysis
cv:
  folds: 5
seed: 0
n_jobs: 1
"""


def configs(folder: Path, csv: Path) -> dict[str, Path]:
    common = _COMMON.format(csv=csv.name)
    texts = {
        "screen": common + "output:\n  folder: out_screen\n",
        "forward": common + ("scoring: accuracy\nstrategy:\n  name: forward\n  options:\n"
                             "    n_features: 3\noutput:\n  folder: out_forward\n"),
    }
    texts["forward_noguard"] = texts["forward"].replace(
        "out_forward", "out_forward_noguard") + "guard: off\n"
    out = {}
    for name, text in texts.items():
        out[name] = folder / f"{name}.yaml"
        out[name].write_text(text, encoding="utf-8")
    return out


def measure(cmd: list[str], cwd: Path, env: dict) -> tuple[float, float]:
    """(peak RSS in MiB, wall seconds) of one fresh process running ``cmd``."""
    proc = subprocess.run([sys.executable, "-c", _WRAPPER, *cmd], cwd=cwd, env=env,
                          capture_output=True, text=True)
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd)} failed:\n{proc.stderr}")
    kib, seconds = proc.stdout.split()
    return int(kib) / 1024, float(seconds)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=20_000)
    ap.add_argument("--cols", type=int, default=1_000)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--keep", metavar="DIR", help="write the data here and keep it")
    ap.add_argument("--source", metavar="DIR",
                    help="measure the featuresift checkout in DIR (e.g. an older commit)")
    args = ap.parse_args(argv)
    env = dict(os.environ)
    here = Path(args.source).resolve() if args.source else Path(__file__).resolve().parent.parent
    env["PYTHONPATH"] = str(here) + (os.pathsep + env["PYTHONPATH"]
                                     if env.get("PYTHONPATH") else "")
    fs = [sys.executable, "-m", "featuresift"]
    tmp = None
    if args.keep:
        folder = Path(args.keep).resolve()
        folder.mkdir(parents=True, exist_ok=True)
    else:
        tmp = tempfile.TemporaryDirectory(prefix="fs-bench-memory-")
        folder = Path(tmp.name)
    try:
        csv = folder / "grain_lots_wide.csv"
        t0 = time.perf_counter()
        if not csv.exists():
            write_lots(csv, args.rows, args.cols)
        t_write = time.perf_counter() - t0
        cfg = configs(folder, csv)
        data_mib = args.rows * args.cols * 8 / 2**20
        runs = {
            "baseline: import featuresift, sklearn, pandas":
                [sys.executable, "-c", "import featuresift, sklearn, pandas"],
            "pandas.read_csv of the file (reference)":
                [sys.executable, "-c", f"import pandas; pandas.read_csv({str(csv)!r})"],
            "featuresift screen": [*fs, "screen", str(cfg["screen"])],
            "featuresift run, forward (guard on)": [*fs, "run", str(cfg["forward"])],
            "featuresift run, forward, guard off": [*fs, "run", str(cfg["forward_noguard"])],
        }
        results = {}
        for label, cmd in runs.items():
            peaks, times = [], []
            for _ in range(args.repeats):
                for sub in folder.glob("out_*"):
                    subprocess.run(["rm", "-rf", str(sub)], check=True)
                peak, secs = measure(cmd, folder, env)
                peaks.append(peak)
                times.append(secs)
                print(f"  {label}: {peak:.0f} MiB, {secs:.1f} s", file=sys.stderr, flush=True)
            results[label] = (max(peaks), statistics.median(times), peaks)
        report(results, args, data_mib, csv.stat().st_size / 2**20, t_write)
    finally:
        if tmp is not None:
            tmp.cleanup()
    return 0


def report(results, args, data_mib, csv_mib, t_write) -> None:
    base = results["baseline: import featuresift, sklearn, pandas"][0]
    ref_t = results["pandas.read_csv of the file (reference)"][1]
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    import numpy
    import pandas
    import sklearn
    print(f"{args.rows:,} rows x {args.cols:,} candidate columns: {data_mib:.1f} MiB as "
          f"float64 ({args.rows * args.cols * 8 / 1e6:.0f} MB); CSV file {csv_mib:.0f} MiB "
          f"(written in {t_write:.0f} s). Python {platform.python_version()}, numpy "
          f"{numpy.__version__}, pandas {pandas.__version__}, scikit-learn "
          f"{sklearn.__version__}; load average {load:.1f} at the end of the run. "
          f"Peak = largest of {args.repeats} runs, time = median of {args.repeats}.\n")
    print("| process | peak RSS | peak / data | (peak - baseline) / data | wall time "
          "| time / `read_csv` |")
    print("|---|---|---|---|---|---|")
    for label, (peak, secs, _) in results.items():
        extra = "-" if label.startswith("baseline") else f"{(peak - base) / data_mib:.2f} x"
        print(f"| {label} | {peak:.0f} MiB | {peak / data_mib:.2f} x | {extra} | "
              f"{secs:.1f} s | {secs / ref_t:.2f} |")


if __name__ == "__main__":
    sys.exit(main())
