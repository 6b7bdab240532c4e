"""Command-line interface: ``featuresift run|sweep|screen|validate|demo``.

Every subcommand is a thin function over :mod:`featuresift.config` (or
:mod:`featuresift.demo`). Exit codes: 0 success, 2 bad input (one line
``featuresift: error: ...`` on stderr, nothing written), 1 an unexpected internal
error (a short message; the traceback only with ``--debug``), 130 interrupted.

Examples
--------
>>> main(["--version"])  # doctest: +ELLIPSIS
featuresift ...
0
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import traceback
from collections.abc import Sequence
from pathlib import Path
from typing import TextIO

from featuresift import __version__
from featuresift.config import (
    build_run,
    describe_plan,
    load_config,
    nested_from_config,
    run_from_config,
    sweep_from_config,
    write_run_files,
    write_sweep_files,
)
from featuresift.config.engine import cluster_of
from featuresift.config.nested import nested_spec
from featuresift.config.sweep import sweep_budgets
from featuresift.engine.journal import reuse_message
from featuresift.engine.racing import RACES
from featuresift.errors import FitFailedError, InputError
from featuresift.guard import GUARDS
from featuresift.outputs import LATEST_NAME, PLOTS_HINT, RunFolder, open_run_folder
from featuresift.result import score_label
from featuresift.search import PICK_RULES
from featuresift.strategies import STRATEGIES

__all__ = ["main", "build_parser"]

PROG = "featuresift"

_DESCRIPTION = """\
Decide which measurements are worth paying for: search subsets of candidate
measurements by cross-validated model score, under a cost budget, with panels
of tests bought together for one price."""

_RUN_EPILOG = """\
exit codes: 0 done, 2 bad config or data, output folder in use or a symbolic link in
the output folder (nothing written), 1 internal error.
The YAML schema is documented in `python -m pydoc featuresift.config`;
`featuresift demo` writes a complete example."""


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line on stderr (exit code 2)."""

    def error(self, message: str):  # noqa: D401 - argparse's hook
        text = " ".join(message.split())
        self.exit(2, f"{self.prog}: error: {text} (see {self.prog} --help)\n")


class _Quiet:
    """A writable that discards everything (for --quiet)."""

    def write(self, text: str) -> int:
        return len(text)

    def flush(self) -> None:
        pass


def _budget(text: str) -> float:
    if text.strip().lower() in ("none", "null", "unlimited", "inf"):
        return math.inf
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected a number or 'none', got {text!r}"
        ) from None
    if math.isnan(value) or value < 0:
        raise argparse.ArgumentTypeError(f"expected a number >= 0, got {text!r}")
    return value


def _step_printer(stream: TextIO):
    def show(step) -> None:
        sc = step.scored
        what = f"{step.action} {step.feature}" if step.feature else step.action
        stream.write(
            f"  step {step.step}: {what} -> {len(step.subset)} features, "
            f"score {sc.mean:.4f}, cost {sc.cost:g} ({step.n_evaluations} evaluated)\n"
        )
        stream.flush()

    return show


# ------------------------------------------------------------------ subcommands
def _load(args: argparse.Namespace, **overrides):
    """load_config with the modules trusted on the command line; its notes on stderr."""
    cfg = load_config(args.config, trusted_modules=args.trust_module, **overrides)
    if not getattr(args, "quiet", False):
        for note in cfg.notes:  # old spellings that still work, with key and line
            print(f"{PROG}: note: {note}", file=sys.stderr)
    return cfg


def _engine_overrides(cfg, args: argparse.Namespace) -> None:
    engine = cfg.extra["engine"]
    if getattr(args, "no_journal", False):
        engine["journal"] = None
    if getattr(args, "racing", None):
        engine["racing"] = args.racing
    if getattr(args, "quiet", False):
        engine["progress"] = False


def cmd_run(args: argparse.Namespace, out: TextIO) -> int:
    """``featuresift run CONFIG``: search, print, write the result files."""
    overrides = {
        "output": args.output, "n_jobs": args.n_jobs, "budget": args.budget,
        "strategy": args.strategy, "seed": args.seed, "pick": args.pick,
        "guard": args.guard,
    }
    cfg = _load(args, **overrides)
    _engine_overrides(cfg, args)
    if args.dry_run or args.verbose:
        problem, _ = build_run(cfg)
        nested_spec(cfg, args.nested, args.nested_repeats)  # checks --nested K on the data
        out.write(describe_plan(cfg, problem) + "\n")
        if args.dry_run:
            out.write("Dry run: configuration and data are valid; nothing was fitted "
                      "or written.\n")
            return 0
        out.write("\n")
    callback = _step_printer(sys.stderr) if args.verbose else None
    nested = None
    with open_run_folder(cfg, "run") as folder, cluster_of(cfg):
        if nested_spec(cfg, args.nested, args.nested_repeats) is not None:
            # Run the honest estimate first, so that nothing is written when it fails; it
            # re-runs the whole search in each outer fold.
            nested = nested_from_config(cfg, args.nested, args.nested_repeats)
        result = run_from_config(cfg, callback=callback)
        written = write_run_files(folder, cfg, result, nested=nested)
        final = folder.commit()
    out.write(result.summary() + "\n\n")
    if nested is not None:
        out.write(nested.summary() + "\n\n")
    elif "nested_mean" in result.guard:
        out.write("The in-search score is optimistic for new data (the search chose the subset "
                  "on these folds); the noise guard's nested estimate above is honest (use "
                  "--nested K for repeats and a confidence interval).\n")
    else:
        out.write("The CV score of a searched subset is optimistic for new data: the search "
                  "chose it on these folds (use --nested K for an honest estimate).\n")
    _write_plots_hint(out, written, ["nested.png"] if nested is not None else [])
    _write_footer(out, folder, final, written, result.extras.get("engine"))
    return 0


def _write_plots_hint(out: TextIO, written: list[Path], plots: list[str]) -> None:
    """Name the plots that could not be drawn (no matplotlib) and how to get them."""
    missing = [name for name in plots if not any(p.name == name for p in written)]
    if missing:
        out.write(f"No {' or '.join(missing)}: {PLOTS_HINT}.\n")


def _write_footer(out: TextIO, folder: RunFolder, final: Path, written: list[Path],
                  engine: dict | None) -> None:
    """Journal reuse, the files actually written, where the journal and latest.json are."""
    note = reuse_message(engine)
    if note:
        out.write(note + "\n")
    names = [p.name for p in written]
    out.write(f"Results written to {final} ({', '.join(names)})\n")
    extra = []
    if folder.journal_path is not None:
        extra.append(f"evaluation journal {folder.journal_path}")
    extra.append(f"latest run named in {folder.root / LATEST_NAME}")
    out.write("  " + "; ".join(extra) + "\n")


def _budget_list(text: str) -> list[float | None]:
    out: list[float | None] = []
    for part in text.split(","):
        value = _budget(part)
        out.append(None if math.isinf(value) else value)
    if not out:
        raise argparse.ArgumentTypeError("expected a comma-separated list of budgets")
    return out


def cmd_sweep(args: argparse.Namespace, out: TextIO) -> int:
    """``featuresift sweep CONFIG``: one search per budget, the cost/score frontier."""
    overrides = {"output": args.output, "n_jobs": args.n_jobs, "seed": args.seed,
                 "strategy": args.strategy, "budget": args.budget, "pick": args.pick,
                 "guard": args.guard}
    cfg = _load(args, **overrides)
    _engine_overrides(cfg, args)
    if args.dry_run:
        problem, _ = build_run(cfg)
        nested_spec(cfg, args.nested, args.nested_repeats)  # checks --nested K on the data
        budgets = sweep_budgets(cfg, args.budgets)
        shown = ", ".join("unlimited" if b is None else f"{b:g}" for b in budgets)
        out.write(describe_plan(cfg, problem) + "\n")
        out.write(f"Sweep:  {len(budgets)} budgets ({cfg.cost_model.unit}): {shown}; the "
                  "headline applies the pick rule within the budget above\n")
        out.write("Dry run: configuration and data are valid; nothing was fitted or "
                  "written.\n")
        return 0

    def show(res) -> None:
        budget = "unlimited" if res.budget is None else f"{res.budget:g}"
        out.write(f"  budget {budget:>10}: {len(res.selected):>2} measurements, cost "
                  f"{res.cost:g}, {score_label('in-search', res.scoring)} "
                  f"{res.score_mean:.4f}\n")

    with open_run_folder(cfg, "sweep") as folder, cluster_of(cfg):
        frontier = sweep_from_config(cfg, args.budgets, callback=show,
                                     nested_folds=args.nested,
                                     nested_repeats=args.nested_repeats)
        written = write_sweep_files(folder, cfg, frontier)
        final = folder.commit()
    out.write(f"\nScores: {score_label('in-search', frontier.scoring)} — each search's own "
              "CV of its choice.\n")
    out.write(_frontier_table(frontier) + "\n\n")
    for line in frontier.answer_lines():
        out.write(line + "\n")
    choices = frontier.choice_frequency()
    if len(choices):
        out.write("\nMeasurements chosen across the budgets:\n")
        out.write(choices.drop(columns=["in_headline"]).to_string(
            index=False, na_rep="unlimited", float_format=lambda v: f"{v:.3g}") + "\n")
    out.write(f"\n{frontier.n_fits} model fits for the sweep "
              f"({frontier.n_fits_without_cache} without sharing evaluations between "
              "budgets).\n")
    _write_plots_hint(out, written, ["frontier.png"]
                      + (["nested.png"] if frontier.nested is not None else []))
    engine = frontier.results[-1].extras.get("engine") if frontier.results else None
    _write_footer(out, folder, final, written, engine)
    return 0


def _frontier_table(frontier) -> str:
    """The sweep's points as text, in the words of report.md's frontier table."""
    frame = frontier.to_frame()

    def num(v: float, fmt: str) -> str:
        return format(v, fmt) if math.isfinite(v) else "—"

    columns = [  # (header, cells, right-aligned)
        ("budget", ["unlimited" if math.isnan(b) else f"{b:g}" for b in frame["budget"]],
         True),
        ("measurements", [str(n) for n in frame["n_selected"]], True),
        ("cost", [num(c, "g") for c in frame["cost"]], True),
        (f"{frontier.scoring} (in-search)", [num(v, ".4f") for v in frame["score_mean"]],
         True),
        ("± s.e.", [num(v, ".4f") for v in frame["score_sem"]], True),
        ("pick", frontier.pick_marks(), False),
        ("efficient", frontier.efficiency_notes(), False),
    ]
    rows = []
    for i in range(-1, len(frame)):
        cells = []
        for head, values, right in columns:
            width = max([len(head), *map(len, values)])
            text = head if i < 0 else values[i]
            cells.append(text.rjust(width) if right else text.ljust(width))
        rows.append("  ".join(cells).rstrip())
    return "\n".join(rows) + f"\n(costs in {frontier.cost_unit})"


def cmd_screen(args: argparse.Namespace, out: TextIO) -> int:
    """``featuresift screen CONFIG``: per-measurement relevance, cost and redundancy table."""
    from featuresift.config.screen import screen_relevance
    from featuresift.filters import feature_report, write_feature_report

    cfg = _load(args, output=args.output)
    problem, _ = build_run(cfg)
    relevance, options, seeded = screen_relevance(cfg, args.relevance)
    task = "classification" if cfg.classification else "regression"
    # The problem's array itself (names come with the cost model): no copy of the data.
    table = feature_report(
        problem.X, problem.y, problem.cost_model, relevance=relevance, task=task,
        relevance_options=options,
    )
    settings = {
        "command": "screen", "config": str(cfg.path), "relevance": relevance,
        "options": {k: v for k, v in options.items() if k != "seed"}, "task": task,
        "seed": cfg.seed, "seed_used": seeded, "cost_unit": problem.cost_model.unit,
        "n_candidates": problem.n_features, "n_rows": problem.n_samples,
    }
    with open_run_folder(cfg, "screen") as folder:
        written = [write_feature_report(table, folder)]
        written += folder.write_files({"screen.json": json.dumps(settings, indent=2) + "\n"})
        final = folder.commit()
    shown = table.drop(columns=["cost_unit"], errors="ignore")
    out.write(f"Cost in {problem.cost_model.unit}.\n")
    out.write(shown.to_string(index=False, float_format=lambda v: f"{v:.4g}") + "\n\n")
    out.write(f"Relevance: {relevance}. p_value: each measurement's own test; q_value: "
              "Benjamini-Hochberg adjusted over all candidates (flag q <= 0.05 to keep "
              "false discoveries near 5 %). Univariate scores miss measurements that only "
              "help together; use `featuresift run` for a model-based search.\n")
    if seeded:
        out.write(f"Seed {cfg.seed} (the config's seed) for the {relevance} estimate.\n")
    _write_footer(out, folder, final, written, None)
    return 0


def cmd_validate(args: argparse.Namespace, out: TextIO) -> int:
    """``featuresift validate CONFIG``: check config and data, fit nothing."""
    cfg = _load(args)
    problem, _ = build_run(cfg)
    budget = "unlimited" if cfg.budget is None else f"{cfg.budget:g}"
    out.write(
        f"OK: {args.config}: {problem.n_samples} rows, {problem.n_features} candidate "
        f"features, {len(problem.splits)} CV splits, budget {budget} "
        f"{cfg.cost_model.unit}\n"
    )
    return 0


def cmd_demo(args: argparse.Namespace, out: TextIO) -> int:
    """``featuresift demo``: write the invented grain-lab data set and its YAML."""
    from featuresift.demo import write_demo

    if args.n_lots < 10:
        raise InputError(f"--n-lots must be at least 10, got {args.n_lots}")
    paths = write_demo(args.folder, n_lots=args.n_lots, seed=args.seed)
    for p in paths:
        out.write(f"wrote {p}\n")
    yml = next((p for p in paths if str(p).endswith((".yaml", ".yml"))), None)
    if yml is not None:
        out.write(f"next: featuresift run {yml}\n")
    return 0


# --------------------------------------------------------------------- parser
def build_parser() -> argparse.ArgumentParser:
    """The argument parser (subcommands run, validate, demo).

    Examples
    --------
    >>> parser = build_parser()
    >>> args = parser.parse_args(["sweep", "lab.yaml", "--budgets", "2,5", "--n-jobs", "2"])
    >>> args.command, args.config, args.budgets, args.n_jobs
    ('sweep', 'lab.yaml', [2.0, 5.0], 2)
    """
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--debug", action="store_true",
                        help="show the full traceback of an unexpected error")
    # Trust for code comes from the person running the command, never from the config.
    trust = argparse.ArgumentParser(add_help=False)
    trust.add_argument("--trust-module", action="append", default=[], metavar="NAME",
                       help="allow estimator classes from module NAME besides scikit-learn "
                            "(repeatable; also FEATURESIFT_TRUSTED_MODULES=NAME,...); the "
                            "module is imported from installed packages or PYTHONPATH, "
                            "never from the working directory or the config's folder")

    parser = _Parser(prog=PROG, description=_DESCRIPTION,
                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"{PROG} {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    run = sub.add_parser(
        "run", parents=[common, trust], help="run the search described by a YAML config",
        description="Load the data, search measurement subsets under the budget, print the\n"
        "chosen measurements, their cost and CV score, and write result.json,\n"
        "selected.csv, path.csv and report.md into a new run folder (NNN-run) of the\n"
        "output folder; latest.json there names it. The output folder is locked while\n"
        "the run lasts: a second run into it exits 2 (use --output DIR).",
        epilog=_RUN_EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    run.add_argument("config", metavar="CONFIG", help="YAML run configuration")
    run.add_argument("--output", metavar="DIR",
                     help="write results here instead of output.folder (relative to the "
                          "current directory; may be anywhere)")
    run.add_argument("--n-jobs", type=int, metavar="N",
                     help="parallel model fits, overriding n_jobs (-1: all cores)")
    run.add_argument("--budget", type=_budget, metavar="X",
                     help="cost budget per sample, overriding budget ('none' = unlimited)")
    run.add_argument("--strategy", metavar="NAME",
                     help="search strategy, overriding strategy.name (the file's strategy "
                          "options are kept only if NAME is the same strategy); one of: "
                          + ", ".join(sorted(STRATEGIES)))
    run.add_argument("--seed", type=int, metavar="S",
                     help="random seed of the strategy, overriding seed (the CV folds "
                          "keep cv.seed)")
    run.add_argument("--pick", choices=PICK_RULES,
                     help="final pick rule, overriding pick: one-se (cheapest subset within "
                          "one standard error of the best, the default) or best")
    run.add_argument("--guard", choices=GUARDS,
                     help="noise guard, overriding guard: nested (re-run the search in 5 "
                          "outer folds; buy only if it beats nothing / free only there; "
                          "about 5x the fits) or off")
    noise = run.add_mutually_exclusive_group()
    noise.add_argument("-q", "--quiet", action="store_true",
                       help="print nothing except errors (files are still written)")
    noise.add_argument("--verbose", action="store_true",
                       help="print the plan first and each search step as it happens")
    run.add_argument("--dry-run", action="store_true",
                     help="check config and data and print the plan; fit and write nothing")
    run.add_argument("--no-journal", action="store_true",
                     help="do not keep the evaluation journal (by default every evaluation "
                          "is recorded in the output folder, so an interrupted run resumes)")
    run.add_argument("--racing", choices=sorted(RACES),
                     help="evaluate folds in rounds and drop candidates statistically "
                          "behind the leader (fewer fits; overrides engine.racing)")
    run.add_argument("--nested", type=int, metavar="K",
                     help="also estimate performance honestly: re-run the whole search in "
                          "each of K outer folds and score on data it never saw (K times "
                          "the work); writes nested.json and a report section (overrides "
                          "nested.folds)")
    run.add_argument("--nested-repeats", type=int, metavar="R",
                     help="repeat the K outer folds R times with new shuffles (R x K "
                          "searches; steadier estimate and choice frequencies; overrides "
                          "nested.repeats)")
    run.set_defaults(func=cmd_run)

    sweep = sub.add_parser(
        "sweep", parents=[common, trust], help="search once per budget: accuracy against cost",
        description="Run the configured search for each budget (sharing every evaluation\n"
        "between budgets) and write frontier.csv, frontier_choices.csv, frontier.json,\n"
        "frontier.png (with matplotlib) and report.md into a new run folder (NNN-sweep)\n"
        "of the output folder. Budgets come from --budgets, else the\n"
        "`sweep` section (budgets: [..] or n_budgets: N), else up to 8 round budgets\n"
        "(1-2-5 series) plus the config's budget. Scores are in-search estimates; the\n"
        "headline applies the pick rule within the config's budget.",
        epilog=_RUN_EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    sweep.add_argument("config", metavar="CONFIG", help="YAML run configuration")
    sweep.add_argument("--budgets", type=_budget_list, metavar="LIST",
                       help="comma-separated budgets, 'none' for unlimited (e.g. 5,10,20,none)")
    sweep.add_argument("--budget", type=_budget, metavar="X",
                       help="the run's budget, overriding budget: the headline is the pick "
                            "within it ('none' = unlimited)")
    sweep.add_argument("--output", metavar="DIR",
                       help="write results here instead of output.folder")
    sweep.add_argument("--n-jobs", type=int, metavar="N",
                       help="parallel model fits, overriding n_jobs (-1: all cores)")
    sweep.add_argument("--strategy", metavar="NAME",
                       help="search strategy, overriding strategy.name")
    sweep.add_argument("--seed", type=int, metavar="S",
                       help="random seed of the strategy, overriding seed")
    sweep.add_argument("--no-journal", action="store_true",
                       help="do not keep the evaluation journal in the output folder")
    sweep.add_argument("--racing", choices=sorted(RACES),
                       help="drop candidates statistically behind the leader (fewer fits)")
    sweep.add_argument("--nested", type=int, metavar="K",
                       help="also compute the nested (honest) estimate of the search at the "
                            "headline's budget, with K outer folds")
    sweep.add_argument("--nested-repeats", type=int, metavar="R",
                       help="repeat the K outer folds of --nested R times")
    sweep.add_argument("--pick", choices=PICK_RULES,
                       help="pick rule of the headline, overriding pick")
    sweep.add_argument("--guard", choices=GUARDS,
                       help="noise guard on the headline, overriding guard")
    sweep.add_argument("--dry-run", action="store_true",
                       help="check config and data, print the plan and the budgets; fit and "
                            "write nothing")
    sweep.add_argument("-q", "--quiet", action="store_true",
                       help="print nothing except errors (files are still written)")
    sweep.set_defaults(func=cmd_sweep)

    screen = sub.add_parser(
        "screen", parents=[common, trust],
        help="per-measurement table: relevance, p- and q-value, cost, most redundant partner",
        description="Score every candidate on its own (no model fits): relevance to the\n"
        "target, its p-value and Benjamini-Hochberg q-value, cost, relevance per cost,\n"
        "and the other candidate it correlates with most. Writes features.csv and\n"
        "screen.json (scorer, task, seed) into a new run folder (NNN-screen) of the\n"
        "output folder.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    screen.add_argument("config", metavar="CONFIG", help="YAML run configuration")
    screen.add_argument("--relevance", metavar="NAME",
                        help="relevance scorer, overriding screen.relevance (default: "
                             "anova_f for classification, pearson for regression)")
    screen.add_argument("--output", metavar="DIR",
                        help="write the run folder here instead of output.folder")
    screen.add_argument("-q", "--quiet", action="store_true",
                        help="print nothing except errors (files are still written)")
    screen.set_defaults(func=cmd_screen)

    val = sub.add_parser(
        "validate", parents=[common, trust], help="check a YAML config and its data, fit nothing",
        description="Check the config and its data file (columns, costs, panels, budget, "
        "model, CV folds, scorer, strategy). Exit 0 when valid, 2 otherwise.",
    )
    val.add_argument("config", metavar="CONFIG", help="YAML run configuration")
    val.set_defaults(func=cmd_validate)

    demo = sub.add_parser(
        "demo", parents=[common],
        help="write an invented grain-receiving-lab data set and its YAML config",
        description="Write grain_lots.csv (a seeded, invented data set of wheat lots) and "
        "grain_lab.yaml (a ready run configuration with invented costs) into a folder.",
    )
    demo.add_argument("--folder", default="featuresift-demo", metavar="DIR",
                      help="folder to write into (default: %(default)s)")
    demo.add_argument("--n-lots", type=int, default=1500, metavar="N",
                      help="number of lots (rows) to generate (default: %(default)s)")
    demo.add_argument("--seed", type=int, default=0, metavar="S",
                      help="random seed of the generator (default: %(default)s)")
    demo.set_defaults(func=cmd_demo)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments without the program name (default: ``sys.argv[1:]``).

    Examples
    --------
    >>> import contextlib, io, tempfile
    >>> with tempfile.TemporaryDirectory() as d, contextlib.redirect_stdout(io.StringIO()) as out:
    ...     codes = (main(["demo", "--folder", d, "--n-lots", "60"]),
    ...              main(["validate", f"{d}/grain_lab.yaml"]))
    >>> codes
    (0, 0)
    >>> out.getvalue().splitlines()[-1].split(": ")[-1]
    '60 rows, 26 candidate features, 5 CV splits, budget 30 EUR per lot (invented for the demo)'
    >>> main(["run", "no-such-config.yaml"])  # the error goes to stderr
    2
    """
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version, usage errors
        return int(exc.code or 0) if not isinstance(exc.code, str) else 2
    out: TextIO = _Quiet() if getattr(args, "quiet", False) else sys.stdout
    try:
        return args.func(args, out)
    except InputError as exc:
        print(f"{PROG}: error: {exc}", file=sys.stderr)
        return 2
    except FitFailedError as exc:
        print(f"{PROG}: error: the model could not be fitted ({exc}); check model.params, "
              "model.preprocessing and the data", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"{PROG}: interrupted; finished evaluations are kept in the journal of the "
              "output folder: run the same command again to resume", file=sys.stderr)
        return 130
    except Exception as exc:  # noqa: BLE001 - last line of defence of the CLI
        if args.debug:
            traceback.print_exc()
        detail = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
        print(f"{PROG}: internal error: {type(exc).__name__}"
              + (f": {detail}" if detail else "")
              + ("" if args.debug else " (run again with --debug for the traceback)"),
              file=sys.stderr)
        return 1
