"""The bad-input corpus: broken lab exports, broken or hostile configs, bad arguments.

Every case runs the command line in-process (``featuresift.cli.main``) on a small lab
folder that already holds the results of an earlier run, and checks the clean-error
contract: exit code 2, exactly one line on stderr naming the problem and its place
(YAML key and line, column or setting), no traceback, nothing printed on stdout, and
every file and folder left exactly as it was. A few cases also run as real processes
(``python -m featuresift`` puts the working directory on the import path).

Files that are hard to write inline (an alias bomb, a Python object tag, a module that
writes a MARKER file when imported, a spreadsheet saved as .csv) live in
``tests/bad_inputs/``.
"""

from __future__ import annotations

import hashlib
import importlib.util
import os
import subprocess
import sys
import time
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import get_scorer, get_scorer_names

import featuresift.config.yamlfile as yamlfile
from featuresift.cli import main
from featuresift.config import load_config
from featuresift.errors import InputError
from featuresift.scoring import check_scoring_target

HERE = Path(__file__).with_name("bad_inputs")

# The base config and lab data are shared with test_config.py (loaded by path).
_spec = importlib.util.spec_from_file_location(
    "featuresift_config_cases_bad", Path(__file__).with_name("test_config.py")
)
cases = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(cases)
BASE = cases.BASE_YAML
edit = cases.edit


# ------------------------------------------------------------------ data helpers
def _csv(frame: pd.DataFrame) -> str:
    return frame.to_csv(index=False)


def _semicolon(frame: pd.DataFrame) -> str:
    """The export of a lab in much of Europe: ';' between columns, decimal commas."""
    return frame.to_csv(index=False, sep=";", decimal=",")


def _header(old: str, new: str) -> Callable[[pd.DataFrame], str]:
    def apply(frame):
        head, _, rest = _csv(frame).partition("\n")
        return head.replace(old, new, 1) + "\n" + rest
    return apply


def _cells(fn) -> Callable[[pd.DataFrame], str]:
    def apply(frame):
        frame = frame.copy()
        fn(frame)
        return _csv(frame)
    return apply


def _text(fn) -> Callable[[pd.DataFrame], str]:
    return lambda frame: fn(_csv(frame))


def _three_classes(frame):
    frame["meets_milling_grade"] = np.arange(len(frame)) % 3


def _yes_no(frame):
    frame["meets_milling_grade"] = np.where(frame["meets_milling_grade"] == 1, "yes", "no")


def _one_farm_for_class_1(frame):
    """Farms as groups; every lot of class 1 comes from farm 0."""
    frame["meets_milling_grade"] = (np.arange(len(frame)) % 6 == 0).astype(int)
    frame["farm"] = np.arange(len(frame)) % 6


def _rare_class(n):
    def apply(frame):
        frame["meets_milling_grade"] = (np.arange(len(frame)) < n).astype(int)
    return apply


def _strategy(name, options):
    return edit("  name: forward\n  options: {n_features: 3}",
                f"  name: {name}\n  options: {options}")


def _set(column, row, value):
    def apply(frame):
        frame[column] = frame[column].astype(object)
        frame.loc[row, column] = value
    return apply


REGRESSION = (edit("target: meets_milling_grade", "target: don_ppm\n  features: "
                   "[moisture_pct, fusarium_damaged_kernels, truck_wait_min]"),
              edit("sklearn.linear_model.LogisticRegression", "sklearn.linear_model.Ridge"),
              edit("params: {max_iter: 500}", "params: {alpha: 1.0}"))


def _chain(*edits):
    def apply(text):
        for e in edits:
            text = e(text)
        return text
    return apply


def _static(name: str) -> Callable[[str], str]:
    return lambda _: (HERE / name).read_text(encoding="utf-8")


# ------------------------------------------------------------------ the corpus
@dataclass
class Case:
    id: str
    kind: str  # data | config | code | cli
    parts: list[str]
    key: str | None = None  # YAML key named in the message ...
    marker: str | None = None  # ... with the line of the first line holding this text
    yaml: Any = None  # None: the base config; a callable on the base text; bytes
    data: Any = None  # None: the base lab table; a callable(frame) -> str or bytes
    argv: list[str] = field(default_factory=lambda: ["run", "{cfg}"])
    files: dict[str, Any] = field(default_factory=dict)  # extra files (None: a folder)
    env: dict[str, str] = field(default_factory=dict)
    sys_path_cwd: bool = False  # put the working directory first on sys.path (python -m)


def _engine(mapping: str, n_jobs: int = 2) -> Callable[[str], str]:
    """The base config with an ``engine`` section (flow-style ``mapping``)."""
    return edit("n_jobs: 1\n", f"n_jobs: {n_jobs}\nengine: {mapping}\n")


V = ["validate", "{cfg}"]
D = [
    # ---- lab exports
    Case("duplicate-header", "data", ["'protein_nir_pct' twice", "columns 7 and 11"],
         "data.path", "path: lots.csv", data=_header("truck_wait_min", "protein_nir_pct")),
    Case("duplicate-header-semicolon", "data", ["'don_ppm' twice"], "data.path",
         "path: lots.csv",
         data=lambda f: _semicolon(f.rename(columns={"zearalenone_ppb": "don_ppm"}))),
    Case("mixed-decimal-marks", "data", ["cannot tell the decimal mark", "data.decimal"],
         "data.path", "path: lots.csv",
         data=lambda f: _semicolon(f).replace(";15,3;", ";15.3;", 1).replace(
             ";13,2;", ";13,25;", 1)),
    Case("ambiguous-separator", "data", ["separated by ',' or ';'", "data.separator"],
         "data.path", "path: lots.csv", data=lambda f: "a;b,c\n1;2,3\n4;5,6\n"),
    Case("latin1-declared-utf8", "data", ["not utf-8 text", "cp1252"], "data.encoding",
         "encoding: utf-8", yaml=edit("  exclude: [lot_id]", "  exclude: [lot_id]\n"
                                      "  encoding: utf-8"),
         data=lambda f: _semicolon(f).replace("L03-00001", "L03-00001-Müller").encode(
             "latin-1")),
    Case("spreadsheet-saved-as-csv", "data", ["binary data", "export it as CSV"],
         "data.path", "path: lots.csv", data=lambda f: (HERE / "spreadsheet.csv").read_bytes()),
    Case("utf16-without-bom", "data", ["binary data"], "data.path", "path: lots.csv",
         data=lambda f: _csv(f).encode("utf-16-le")),
    Case("empty-file", "data", ["lots.csv is empty"], "data.path", "path: lots.csv",
         data=lambda f: b""),
    Case("header-only", "data", ["header but no rows"], "data.path", "path: lots.csv",
         data=lambda f: _csv(f).partition("\n")[0] + "\n"),
    Case("ragged-row", "data", ["cannot read lots.csv", "line 6"], "data.path",
         "path: lots.csv", data=_text(lambda t: t.replace("\nL03-00005,", "\nL03-00005,7,", 1))),
    Case("unnamed-column-with-values", "data", ["column 1 of the data file has no name",
                                                "L03-00001"], "data.path", "path: lots.csv",
         data=_header("lot_id", "")),
    Case("text-in-measurement", "data", ["column 'protein_nir_pct'", "data row 5", "n/a?"],
         data=_cells(_set("protein_nir_pct", 4, "n/a?"))),
    Case("decimal-comma-declared-dot", "data", ["column 'moisture_pct'", "'15,3'",
                                                "data.decimal: \",\""],
         yaml=edit("  exclude: [lot_id]", "  exclude: [lot_id]\n  decimal: \".\""),
         data=_semicolon),
    Case("infinite-value", "data", ["column 'don_ppm'", "infinite value in data row 3"],
         data=_cells(_set("don_ppm", 2, "inf"))),
    Case("empty-measurement-column", "data", ["column 'falling_number_s'",
                                              "every value is missing"],
         data=_cells(_set("falling_number_s", slice(None), None))),
    Case("target-with-gaps", "data", ["missing value", "data row 8"], "data.target",
         "target: meets", data=_cells(_set("meets_milling_grade", 7, None))),
    Case("single-class-target", "data", ["single class"], "data.target", "target: meets",
         data=_cells(lambda f: f.__setitem__("meets_milling_grade", 1))),
    Case("semicolon-export-misspelled-target", "data",
         ["'meets_milling_grad'", "did you mean 'meets_milling_grade'"], "data.target",
         "target: meets", yaml=edit("target: meets_milling_grade", "target: meets_milling_grad"),
         data=_semicolon),
    Case("data-path-is-a-folder", "data", ["is a folder"], "data.path", "path: folder",
         yaml=edit("path: lots.csv", "path: folder.csv"), files={"folder.csv": None}),
    Case("corrupt-gzip", "data", ["cannot read lots.csv.gz"], "data.path", "path: lots",
         yaml=edit("path: lots.csv", "path: lots.csv.gz"), files={"lots.csv.gz": b"not gz"}),
    Case("spreadsheet-file-type", "data", ["unsupported file type"], "data.path",
         "path: lots", yaml=edit("path: lots.csv", "path: lots.xlsx")),
    Case("decimal-equals-separator", "data", ["both ','"], "data.decimal", "decimal:",
         yaml=edit("  exclude: [lot_id]", "  exclude: [lot_id]\n  separator: \",\"\n"
                   "  decimal: \",\"")),
    # ---- numbers
    Case("cost-overflow", "config", ["at most 1e+12", "1e+308"], "costs.features.colour_index",
         "colour_index: 1.0e", yaml=edit("colour_index: 1.5", "colour_index: 1.0e+308")),
    Case("panel-cost-overflow", "config", ["at most 1e+12"], "costs.panels.toxins.cost",
         "cost: 1.0e", yaml=edit("cost: 20.0", "cost: 1.0e+308")),
    Case("cost-400-digits", "config", ["too large"], "costs.features.colour_index",
         "colour_index: 1000", yaml=edit("colour_index: 1.5", "colour_index: 1" + "0" * 400)),
    Case("budget-overflow", "config", ["at most 1e+12"], "budget", "budget: 1.0e",
         yaml=edit("budget: 10.0", "budget: 1.0e+308")),
    Case("budget-nan", "config", ["NaN"], "budget", "budget: .nan",
         yaml=edit("budget: 10.0", "budget: .nan")),
    Case("max-time-zero", "config", ["must be > 0"], "limits.max_time_s", "max_time_s: 0",
         yaml=edit("seed: 0\nn_jobs", "limits: {max_time_s: 0}\nseed: 0\nn_jobs")),
    Case("max-time-negative", "config", ["must be > 0"], "limits.max_time_s",
         "max_time_s: -5", yaml=edit("seed: 0\nn_jobs", "limits: {max_time_s: -5}\nseed: 0\n"
                                     "n_jobs")),
    Case("max-time-infinite", "config", ["finite"], "limits.max_time_s", "max_time_s: .inf",
         yaml=edit("seed: 0\nn_jobs", "limits: {max_time_s: .inf}\nseed: 0\nn_jobs")),
    Case("max-features-zero", "config", [">= 1"], "limits.max_features", "max_features: 0",
         yaml=edit("seed: 0\nn_jobs", "limits: {max_features: 0}\nseed: 0\nn_jobs")),
    Case("seed-too-large", "config", ["at most 4294967295"], "seed", "seed: 1099",
         yaml=edit("seed: 0\nn_jobs", "seed: 1099511627776\nn_jobs")),
    Case("cv-seed-negative", "config", [">= 0"], "cv.seed", "  seed: -1",
         yaml=edit("  seed: 0\nscoring", "  seed: -1\nscoring")),
    Case("cv-repeats-huge", "config", ["at most 100"], "cv.repeats", "repeats: 1000000",
         yaml=edit("  folds: 3", "  folds: 3\n  repeats: 1000000")),
    Case("sweep-budget-overflow", "config", ["at most 1e+12"], "sweep.budgets[0]",
         "budgets: [1.0e", yaml=lambda t: t + "sweep: {budgets: [1.0e+308]}\n",
         argv=["sweep", "{cfg}"]),
    Case("sweep-too-many-budgets", "config", ["at most 1000"], "sweep.n_budgets",
         "n_budgets:", yaml=lambda t: t + "sweep: {n_budgets: 100000}\n", argv=["sweep", "{cfg}"]),
    Case("sweep-budget-levels-unknown", "config", ["round, costs", "'cost'"],
         "sweep.budget_levels", "budget_levels:",
         yaml=lambda t: t + "sweep: {budget_levels: cost}\n", argv=["sweep", "{cfg}"]),
    # ---- YAML itself
    Case("yaml-alias-bomb", "config", ["aliases", "expand to more than 100,000"],
         yaml=_static("alias_bomb.yaml")),
    Case("yaml-nested-500", "config", ["nesting deeper than 64 levels", "line 3"],
         yaml=lambda t: t + "notes:\n  x: " + "[" * 500 + "]" * 500 + "\n"),
    Case("yaml-over-2mb", "config", ["MB; a run configuration is at most 2 MB"],
         yaml=lambda t: t + ("# padding " + "x" * 90 + "\n") * 30000),
    Case("yaml-not-utf8", "config", ["not UTF-8 text", "save it as UTF-8"],
         yaml=lambda t: ("# Prüfplan\n" + t).encode("latin-1")),
    Case("yaml-tab-indent", "config", ["YAML syntax error", "line 4"],
         yaml=lambda t: t.replace("  target:", "\ttarget:", 1)),
    Case("yaml-undefined-alias", "config", ["YAML syntax error", "undefined alias"],
         yaml=edit("budget: 10.0", "budget: *price")),
    # ---- data section settings
    Case("separator-two-chars", "config", ["one character"], "data.separator",
         "separator:", yaml=edit("  exclude: [lot_id]", "  exclude: [lot_id]\n"
                                 "  separator: \";;\"")),
    Case("decimal-semicolon", "config", ["expected ',' or '.'"], "data.decimal", "decimal:",
         yaml=edit("  exclude: [lot_id]", "  exclude: [lot_id]\n  decimal: \";\"")),
    Case("encoding-unknown", "config", ["unknown text encoding 'latin-9x'", "cp1252"],
         "data.encoding", "encoding:", yaml=edit("  exclude: [lot_id]", "  exclude: [lot_id]\n"
                                                "  encoding: latin-9x")),
    Case("encoding-not-text", "config", ["not a text encoding"], "data.encoding", "encoding:",
         yaml=edit("  exclude: [lot_id]", "  exclude: [lot_id]\n  encoding: rot13")),
    Case("data-key-misspelled", "config", ["unknown key 'sep'", "separator"],
         "data.sep", "sep:", yaml=edit("  exclude: [lot_id]", "  exclude: [lot_id]\n"
                                       "  sep: \";\"")),
    # ---- scikit-learn parameter constraints, checked before any fit
    Case("param-C-negative", "config", ["'C' parameter of LogisticRegression", "Got -1"],
         "model.params.C", "params: {max_iter: 500, C: -1}",
         yaml=edit("{max_iter: 500}", "{max_iter: 500, C: -1}"), argv=V),
    Case("param-penalty-l3", "config", ["'penalty' parameter", "'l3'"],
         "model.params.penalty", "params:", yaml=edit("{max_iter: 500}",
                                                      "{max_iter: 500, penalty: l3}")),
    Case("param-max-iter-text", "config", ["'max_iter' parameter", "'many'"],
         "model.params.max_iter", "params:", yaml=edit("{max_iter: 500}", "{max_iter: many}"),
         argv=["run", "{cfg}", "--dry-run"]),
    Case("param-class-weight-text", "config", ["'class_weight' parameter"],
         "model.params.class_weight", "params:",
         yaml=edit("{max_iter: 500}", "{class_weight: heavy}")),
    Case("param-tol-mapping", "config", ["'tol' parameter"], "model.params.tol", "params:",
         yaml=edit("{max_iter: 500}", "{tol: {a: 1}}")),
    Case("params-not-mapping", "config", ["expected a mapping"], "model.params", "params:",
         yaml=edit("{max_iter: 500}", "[500]")),
    Case("estimator-not-a-class", "config", ["not an estimator class"], "model.estimator",
         "estimator:", yaml=edit("sklearn.linear_model.LogisticRegression",
                                 "sklearn.utils.Bunch")),
    Case("estimator-method-path", "config", ["cannot import module"], "model.estimator",
         "estimator:", yaml=edit("sklearn.linear_model.LogisticRegression",
                                 "sklearn.linear_model.LogisticRegression.fit")),
    Case("clusterer-as-model", "config", ["KMeans is a clusterer", "classifier or a regressor"],
         "model.estimator", "estimator:", yaml=edit(
             "sklearn.linear_model.LogisticRegression\n  params: {max_iter: 500}",
             "sklearn.cluster.KMeans\n  params: {n_clusters: 2}"), argv=V),
    Case("transformer-as-model", "config", ["StandardScaler is not a model that predicts"],
         "model.estimator", "estimator:", yaml=edit(
             "sklearn.linear_model.LogisticRegression\n  params: {max_iter: 500}",
             "sklearn.preprocessing.StandardScaler")),
    Case("penalized-without-lambda", "config", ["objective 'penalized' needs 'lambda'"],
         "objective", "objective: penalized", yaml=edit("seed: 0\nn_jobs",
                                                        "objective: penalized\nseed: 0\nn_jobs")),
    # ---- scorer against target, before any fit
    Case("roc-auc-three-classes", "config", ["'roc_auc'", "3", "roc_auc_ovr"], "scoring",
         "scoring: roc_auc", data=_cells(_three_classes), argv=V),
    Case("roc-auc-three-classes-dry-run", "config", ["roc_auc_ovr"], "scoring",
         "scoring: roc_auc", data=_cells(_three_classes), argv=["run", "{cfg}", "--dry-run"]),
    Case("f1-three-classes", "config", ["f1_macro"], "scoring", "scoring: f1",
         yaml=edit("scoring: roc_auc", "scoring: f1"), data=_cells(_three_classes)),
    Case("f1-text-labels", "config", ["positive class", "'no', 'yes'"], "scoring",
         "scoring: f1", yaml=edit("scoring: roc_auc", "scoring: f1"), data=_cells(_yes_no)),
    Case("regression-score-for-classifier", "config", ["regression score", "classifier"],
         "scoring", "scoring: r2", yaml=edit("scoring: roc_auc", "scoring: r2")),
    Case("classification-score-for-regressor", "config", ["classification score",
                                                          "regressor"], "scoring",
         "scoring: roc_auc", yaml=_chain(*REGRESSION)),
    Case("poisson-deviance-negative-target", "config", ["non-negative"], "scoring",
         "scoring: neg_mean", data=_cells(lambda f: f.__setitem__("don_ppm", f["don_ppm"] - 5)),
         yaml=_chain(*REGRESSION, edit("scoring: roc_auc",
                                       "scoring: neg_mean_poisson_deviance"))),
    Case("samples-average-single-label", "config", ["multilabel", "precision_macro"],
         "scoring", "scoring: precision_samples",
         yaml=edit("scoring: roc_auc", "scoring: precision_samples")),
    Case("log-loss-without-predict-proba", "config", ["'neg_log_loss'", "predict_proba",
                                                      "RidgeClassifier"], "scoring",
         "scoring: neg_log_loss", yaml=_chain(
             edit("sklearn.linear_model.LogisticRegression",
                  "sklearn.linear_model.RidgeClassifier"),
             edit("{max_iter: 500}", "{}"), edit("scoring: roc_auc", "scoring: neg_log_loss")),
         argv=V),
    # ---- strategy options against the data, before any fit (issue 10)
    Case("n-features-above-candidates", "config", ["n_features=50", "at most 9"],
         "strategy.options.n_features", "options: {n_features: 50}",
         yaml=edit("{n_features: 3}", "{n_features: 50}"), argv=V),
    Case("floating-floor-text", "config", ["sequential_floor must be true or false", "'no'"],
         "strategy.options.sequential_floor", "options:",
         yaml=_strategy("floating-forward", "{sequential_floor: 'no'}")),
    Case("annealing-infinite-temperature", "config", ["finite number > 0", "inf"],
         "strategy.options.initial_temperature", "options:",
         yaml=_strategy("annealing", "{initial_temperature: .inf}"),
         argv=["run", "{cfg}", "--dry-run"]),
    Case("exhaustive-over-max-subsets", "config", ["58 allowed subsets", "max_subsets=2"],
         "strategy.options.max_subsets", "options:",
         yaml=_strategy("exhaustive", "{max_subsets: 2}")),
    Case("filter-order-unknown-feature", "config", ["order[1]: 'protein_nir'",
                                                    "not a candidate"],
         "strategy.options.order", "options:",
         yaml=_strategy("filter-order", "{order: [moisture_pct, protein_nir]}"), argv=V),
    Case("filter-order-position-out-of-range", "config", ["order[0]", "0 ... 8", "99"],
         "strategy.options.order", "options:", yaml=_strategy("filter-order", "{order: [99]}")),
    Case("one-hot-without-categorical", "config", ["one_hot", "data.categorical"],
         "model.preprocessing[2]", "preprocessing:",
         yaml=edit("[impute_median, scale]", "[impute_median, scale, one_hot]"), argv=V),
    Case("sweep-budget-below-cheapest", "config", ["budget 0.1", "cheapest possible subset"],
         "sweep.budgets[0]", "sweep:", yaml=lambda t: t + "sweep: {budgets: [0.1, 5]}\n",
         argv=V),
    Case("class-in-one-group", "config", ["class 1", "only 1 group(s) of 'farm'",
                                          "cv.folds = 3"], "cv.group_column", "group_column:",
         yaml=edit("  folds: 3", "  folds: 3\n  group_column: farm"),
         data=_cells(_one_farm_for_class_1)),
    Case("nested-folds-above-class", "config", ["10 outer folds", "class 1", "only 6 rows"],
         "nested.folds", "nested:", yaml=lambda t: t + "nested: {folds: 10}\n",
         data=_cells(_rare_class(6))),
    Case("nested-folds-above-rows", "config", ["100 outer folds", "only 60 rows"],
         "nested.folds", "nested:", yaml=_chain(
             *REGRESSION, edit("scoring: roc_auc", "scoring: r2"),
             lambda t: t + "nested: {folds: 100}\n")),
    Case("guard-folds-above-rows", "config", ["100 outer folds", "only 60 rows", "guard: off"],
         "guard.folds", "guard:", yaml=_chain(
             *REGRESSION, edit("scoring: roc_auc", "scoring: r2"),
             lambda t: t + "guard: {name: nested, folds: 100}\n")),
    Case("nested-repeats-huge", "config", ["at most 100"], "nested.repeats", "nested:",
         yaml=lambda t: t + "nested: {folds: 3, repeats: 100000000}\n",
         argv=["run", "{cfg}", "--dry-run"]),  # without the check a run would hang
    Case("cli-nested-repeats-huge", "cli", ["--nested-repeats must be 1 ... 100", "1000000"],
         argv=["run", "{cfg}", "--dry-run", "--nested-repeats", "1000000"]),
    Case("guard-default-folds-above-class", "config",
         ["guard: the noise guard's 5 outer folds (its default)", "only 4 rows", "guard: off"],
         data=_cells(_rare_class(4)), argv=["run", "{cfg}", "--dry-run"]),
    Case("cli-nested-folds-above-class", "cli", ["--nested 8", "only 6 rows"],
         data=_cells(_rare_class(6)), argv=["run", "{cfg}", "--dry-run", "--nested", "8"]),
    # ---- the screen section (featuresift screen's relevance scorer)
    Case("screen-relevance-unknown", "config", ["unknown relevance scorer 'anova'",
                                                "did you mean 'anova_f'"],
         "screen.relevance", "screen:", yaml=lambda t: t + "screen: {relevance: anova}\n",
         argv=V),
    Case("screen-relevance-wrong-task", "config", ["'anova_f' does not support regression"],
         "screen.relevance", "screen:", yaml=_chain(
             *REGRESSION, edit("scoring: roc_auc", "scoring: r2"),
             lambda t: t + "screen: {relevance: anova_f}\n")),
    Case("screen-relevance-option-typo", "config", ["no option 'neighbours'", "n_neighbors"],
         "screen.relevance.neighbours", "screen:",
         yaml=lambda t: t + "screen: {relevance: {name: mutual_info, neighbours: 3}}\n",
         argv=["screen", "{cfg}"]),
    Case("cli-relevance-unknown", "cli", ["--relevance", "unknown relevance scorer 'anova'"],
         argv=["screen", "{cfg}", "--relevance", "anova"]),
    # ---- code execution attempts (harmless payloads would write a MARKER file)
    Case("trust-from-the-yaml", "code", ["cannot trust modules itself", "--trust-module"],
         "model.trusted_modules", "trusted_modules:", yaml=_static("trust_in_yaml.yaml"),
         files={"labhook.py": (HERE / "labhook.py").read_bytes()}),
    Case("module-next-to-config", "code", ["cannot import module 'labhook'",
                                           "working directory"], "model.estimator",
         "estimator:", yaml=_static("module_next_to_config.yaml"),
         files={"labhook.py": (HERE / "labhook.py").read_bytes()}, sys_path_cwd=True,
         argv=["validate", "{cfg}", "--trust-module", "labhook"]),
    Case("module-next-to-config-env-trust", "code", ["cannot import module 'labhook'"],
         "model.estimator", "estimator:", yaml=_static("module_next_to_config.yaml"),
         files={"labhook.py": (HERE / "labhook.py").read_bytes()}, sys_path_cwd=True,
         env={"FEATURESIFT_TRUSTED_MODULES": "labhook"}),
    Case("untrusted-module", "code", ["not allowed", "--trust-module labhook"],
         "model.estimator", "estimator:", yaml=_static("module_next_to_config.yaml"),
         files={"labhook.py": (HERE / "labhook.py").read_bytes()}, sys_path_cwd=True),
    Case("stdlib-as-estimator", "code", ["'os.system' is not allowed"], "model.estimator",
         "estimator:", yaml=edit("sklearn.linear_model.LogisticRegression", "os.system")),
    Case("python-object-tag", "code", ["YAML syntax error", "line 6", "python/object"],
         yaml=_static("python_tag.yaml")),
    Case("memory-cache-parameter", "code", ["'memory'", "read or write files"],
         "model.params.memory", "params:", yaml=_static("memory_cache.yaml")),
    Case("pipeline-memory-parameter", "code", ["'memory'"], "model.params.memory",
         "params:", yaml=edit("sklearn.linear_model.LogisticRegression\n  params: "
                              "{max_iter: 500}", "sklearn.cluster.AgglomerativeClustering\n"
                              "  params: {memory: /tmp/featuresift-cache}")),
    # ---- engine.cluster (checked before any worker starts or any address is dialled)
    Case("cluster-port-not-a-number", "config", ["port '87x6'", "tcp://10.0.0.5:8786"],
         "engine.cluster", "engine:", yaml=_engine("{cluster: 'tcp://10.0.0.5:87x6'}")),
    Case("cluster-unknown-protocol", "config", ["unknown protocol 'http://'"],
         "engine.cluster", "engine:", yaml=_engine("{cluster: 'http://10.0.0.5:8786'}")),
    Case("cluster-local-misspelled", "config", ["expected 'local' or a scheduler address",
                                                "'locla'"],
         "engine.cluster", "engine:", yaml=_engine("{cluster: locla}")),
    Case("cluster-workers-with-address", "config", ["only to cluster 'local'", "dask worker"],
         "engine.workers", "engine:",
         yaml=_engine("{cluster: 'tcp://10.0.0.5:8786', workers: 4}")),
    Case("cluster-workers-zero", "config", ["positive number of worker processes"],
         "engine.workers", "engine:", yaml=_engine("{cluster: local, workers: 0}")),
    Case("cluster-with-n-jobs-1", "config", ["n_jobs 1 would keep every fit in this process"],
         "n_jobs", "n_jobs: 1", yaml=_engine("{cluster: local, workers: 2}", n_jobs=1)),
    # ---- command-line arguments
    Case("cli-budget-text", "cli", ["--budget", "'abc'"], argv=["run", "{cfg}", "--budget",
                                                                 "abc"]),
    Case("cli-budget-negative", "cli", ["--budget", ">= 0"], argv=["run", "{cfg}", "--budget",
                                                                    "-1"]),
    Case("cli-budget-overflow", "cli", ["budget (from the command line)", "at most 1e+12"],
         argv=["run", "{cfg}", "--budget", "1e308"]),
    Case("cli-budget-below-cheapest", "cli", ["budget (from the command line)", "cheapest"],
         argv=["run", "{cfg}", "--budget", "0.1"]),
    Case("cli-n-jobs-zero", "cli", ["cannot be 0"], argv=["run", "{cfg}", "--n-jobs", "0"]),
    Case("cli-n-jobs-text", "cli", ["--n-jobs", "'two'"], argv=["run", "{cfg}", "--n-jobs",
                                                                 "two"]),
    Case("cli-seed-negative", "cli", ["seed (from the command line)", ">= 0"],
         argv=["run", "{cfg}", "--seed", "-1"]),
    Case("cli-seed-huge", "cli", ["seed (from the command line)", "at most"],
         argv=["run", "{cfg}", "--seed", "99999999999999"]),
    Case("cli-strategy-unknown", "cli", ["unknown strategy 'fastest'"],
         argv=["run", "{cfg}", "--strategy", "fastest"]),
    Case("cli-racing-unknown", "cli", ["--racing", "invalid choice"],
         argv=["run", "{cfg}", "--racing", "always"]),
    Case("cli-trust-module-not-a-name", "cli", ["'os; rm' is not a module name"],
         argv=["validate", "{cfg}", "--trust-module", "os; rm"]),
    Case("cli-trust-env-not-a-name", "cli", ["FEATURESIFT_TRUSTED_MODULES", "'../evil'"],
         argv=V, env={"FEATURESIFT_TRUSTED_MODULES": "numpy,../evil"}),
    Case("cli-unknown-flag", "cli", ["unrecognized arguments: --fast"],
         argv=["run", "{cfg}", "--fast"]),
    Case("cli-no-command", "cli", ["COMMAND"], argv=[]),
    Case("cli-unknown-command", "cli", ["invalid choice: 'fit'"], argv=["fit", "{cfg}"]),
    Case("cli-config-missing", "cli", ["config file not found"], argv=["run", "{lab}/nope.yaml"]),
    Case("cli-config-is-folder", "cli", ["is a folder"], argv=["validate", "{lab}"]),
    Case("cli-config-not-regular", "cli", ["not a regular file"], argv=["validate", os.devnull]),
    Case("cli-output-is-a-file", "cli", ["--output", "not a folder"],
         argv=["run", "{cfg}", "--output", "{lab}/lots.csv"]),
    Case("cli-budgets-text", "cli", ["--budgets", "'cheap'"],
         argv=["sweep", "{cfg}", "--budgets", "5,cheap"]),
    Case("cli-budgets-overflow", "cli", ["at most 1e+12"],
         argv=["sweep", "{cfg}", "--budgets", "5,1e308"]),
    Case("cli-nested-one-fold", "cli", ["at least 2 outer folds"],
         argv=["run", "{cfg}", "--nested", "1"]),
    Case("cli-demo-too-few-lots", "cli", ["--n-lots"],
         argv=["demo", "--folder", "{lab}/demo", "--n-lots", "3"]),
]
CORPUS = {c.id: c for c in D}
assert len(CORPUS) == len(D)


def _snapshot(folder: Path) -> dict[str, str | None]:
    out = {}
    for p in sorted(folder.rglob("*")):
        rel = str(p.relative_to(folder))
        out[rel] = None if p.is_dir() else hashlib.sha256(p.read_bytes()).hexdigest()
    return out


def _lab(tmp_path: Path, case: Case) -> tuple[Path, bytes]:
    lab = tmp_path / "lab"
    lab.mkdir()
    text = BASE if case.yaml is None else case.yaml(BASE)
    raw = text if isinstance(text, bytes) else text.encode("utf-8")
    (lab / "case.yaml").write_bytes(raw)
    frame = cases.small_frame()
    data = _csv(frame) if case.data is None else case.data(frame)
    (lab / "lots.csv").write_bytes(data if isinstance(data, bytes) else data.encode("utf-8"))
    for name, content in case.files.items():
        if content is None:
            (lab / name).mkdir()
        else:
            (lab / name).write_bytes(content)
    # The results of an earlier run: a failing command must leave them as they are.
    previous = lab / "results" / "case"
    previous.mkdir(parents=True)
    (previous / "result.json").write_text('{"from": "an earlier run"}\n')
    return lab, raw


@pytest.mark.parametrize("case", D, ids=[c.id for c in D])
def test_bad_input_exits_2_with_one_line_and_changes_nothing(case, tmp_path, monkeypatch,
                                                             capsys):
    lab, raw = _lab(tmp_path, case)
    start = time.perf_counter()
    for name, value in case.env.items():
        monkeypatch.setenv(name, value)
    monkeypatch.chdir(lab)
    if case.sys_path_cwd:  # what `python -m featuresift` does
        monkeypatch.setattr(sys, "path", [str(lab), *sys.path])
    before = _snapshot(tmp_path)
    argv = [a.format(cfg=lab / "case.yaml", lab=lab) for a in case.argv]
    code = main(argv)
    captured = capsys.readouterr()
    err = captured.err
    assert code == 2, err
    assert err.endswith("\n") and err.count("\n") == 1, err  # exactly one line
    assert err.startswith("featuresift") and ": error: " in err, err
    assert "Traceback" not in err and captured.out == ""
    for part in case.parts:
        assert part in err, (part, err)
    if case.key is not None:
        text = raw.decode("utf-8")
        assert f"{case.key} (line {cases.line_of(text, case.marker)}): " in err, err
    assert _snapshot(tmp_path) == before  # nothing written, moved or removed
    assert not (lab / "MARKER").exists() and "labhook" not in sys.modules
    assert time.perf_counter() - start < 20  # refused up front (an alias bomb too)


def test_corpus_size_and_categories():
    kinds = pd.Series([c.kind for c in D]).value_counts().to_dict()
    assert len(D) >= 60 and min(kinds.values()) >= 8, kinds


# ------------------------------------------------------------------ real processes
def _run(args, cwd, env_extra=None):
    env = dict(os.environ)
    root = str(Path(__file__).resolve().parents[1])
    # No trailing empty entry: Python would read it as the working directory.
    env["PYTHONPATH"] = os.pathsep.join(p for p in (root, env.get("PYTHONPATH")) if p)
    env.update(env_extra or {})
    return subprocess.run(args, cwd=cwd, env=env, capture_output=True, text=True, timeout=120)


def test_python_m_does_not_import_a_module_next_to_the_config(tmp_path):
    # `python -m featuresift` puts the working directory first on sys.path.
    lab, _ = _lab(tmp_path, CORPUS["module-next-to-config"])
    proc = _run([sys.executable, "-m", "featuresift", "validate", "case.yaml",
                 "--trust-module", "labhook"], cwd=lab)
    assert proc.returncode == 2, proc.stderr
    assert "cannot import module 'labhook'" in proc.stderr
    assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert not (lab / "MARKER").exists()


def test_an_empty_pythonpath_entry_does_not_let_the_working_directory_in(tmp_path):
    # `PYTHONPATH=/x:$PYTHONPATH` with the variable unset leaves an empty entry, which
    # Python turns into the working directory (Python docs, "PYTHONPATH"; checked here).
    lab, _ = _lab(tmp_path, CORPUS["module-next-to-config"])
    root = str(Path(__file__).resolve().parents[1])
    proc = _run([sys.executable, "-m", "featuresift", "validate", "case.yaml",
                 "--trust-module", "labhook"], cwd=lab,
                env_extra={"PYTHONPATH": root + os.pathsep})
    assert proc.returncode == 2, proc.stderr
    assert "cannot import module 'labhook'" in proc.stderr
    assert not (lab / "MARKER").exists()


def test_trust_from_the_yaml_runs_nothing_through_the_console_script(tmp_path):
    lab, _ = _lab(tmp_path, CORPUS["trust-from-the-yaml"])
    script = Path(sys.executable).with_name("featuresift")
    cmd = [str(script)] if script.exists() else [sys.executable, "-m", "featuresift"]
    proc = _run([*cmd, "run", "case.yaml"], cwd=lab)
    assert proc.returncode == 2 and proc.stderr.count("\n") == 1, proc.stderr
    assert "cannot trust modules itself" in proc.stderr
    assert not (lab / "MARKER").exists() and not (lab / "results" / "case" / "journal.sqlite") \
        .exists()


# ------------------------------------------------------------------ what is accepted
def test_semicolon_decimal_comma_cp1252_export_reads_like_the_original(tmp_path):
    frame = cases.small_frame()
    text = _semicolon(frame.rename(columns={"lot_id": "Probe-Nr."}))
    text = text.replace("L03-00001", "L03-00001-Körner")
    path = cases.write_case(tmp_path, BASE.replace("exclude: [lot_id]",
                                                   "exclude: [Probe-Nr.]"))
    (tmp_path / "lots.csv").write_bytes(text.encode("cp1252"))
    cfg = load_config(path)
    assert cfg.data_format.separator == ";" and cfg.data_format.decimal == ","
    assert cfg.data_format.encoding == "cp1252"
    assert set(cfg.data_format.detected) == {"separator", "decimal", "encoding"}
    assert cfg.frame["Probe-Nr."].iloc[0] == "L03-00001-Körner"
    # Same numbers as the comma-separated UTF-8 original, read by pandas directly.
    pd.testing.assert_frame_equal(cfg.frame.drop(columns="Probe-Nr."),
                                  frame.drop(columns="lot_id"), check_dtype=False)


@pytest.mark.parametrize("settings", [
    "  separator: \";\"\n  decimal: \",\"\n  encoding: latin-1\n",
    "  separator: semicolon\n  decimal: \",\"\n",
])
def test_format_settings_in_yaml(tmp_path, settings):
    frame = cases.small_frame()
    path = cases.write_case(tmp_path, BASE.replace("  exclude: [lot_id]\n",
                                                   "  exclude: [lot_id]\n" + settings))
    (tmp_path / "lots.csv").write_bytes(_semicolon(frame).replace(
        "L03-00002", "L03-00002-é").encode("latin-1"))
    cfg = load_config(path)
    assert cfg.data_format.detected in ((), ("encoding",))
    np.testing.assert_array_equal(cfg.frame["moisture_pct"], frame["moisture_pct"])


def test_utf8_bom_tab_separated_and_trailing_separator(tmp_path):
    frame = cases.small_frame()
    text = frame.to_csv(index=False, sep="\t")
    text = "\n".join(line + "\t" for line in text.splitlines()) + "\n"  # trailing tab
    path = cases.write_case(tmp_path)
    (tmp_path / "lots.csv").write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    cfg = load_config(path)
    assert list(cfg.frame.columns) == list(frame.columns)  # the empty last column dropped
    assert cfg.data_format.separator == "\t"


def test_module_trusted_from_outside_is_used(tmp_path, monkeypatch):
    models = tmp_path / "site"
    models.mkdir()
    (models / "labmodels_ok.py").write_text(
        "from sklearn.linear_model import LogisticRegression\n\n\n"
        "class LabLogit(LogisticRegression):\n    pass\n")
    monkeypatch.syspath_prepend(str(models))
    text = BASE.replace("sklearn.linear_model.LogisticRegression", "labmodels_ok.LabLogit")
    path = cases.write_case(tmp_path / "lab", text)
    with pytest.raises(InputError, match="--trust-module labmodels_ok"):
        load_config(path)
    assert load_config(path, trusted_modules=["labmodels_ok"]).model.estimator_class \
        .__name__ == "LabLogit"
    monkeypatch.setenv("FEATURESIFT_TRUSTED_MODULES", "labmodels_ok")
    assert load_config(path).model.trusted_modules == ("labmodels_ok",)


def test_memory_deep_inside_a_trusted_estimator_is_refused(tmp_path, monkeypatch):
    models = tmp_path / "site"
    models.mkdir()
    (models / "labmodels_cached.py").write_text(
        "from sklearn.base import BaseEstimator, ClassifierMixin\n"
        "from sklearn.linear_model import LogisticRegression\n"
        "from sklearn.pipeline import make_pipeline\n"
        "from sklearn.preprocessing import StandardScaler\n\n"
        "_INNER = make_pipeline(StandardScaler(), LogisticRegression(), memory='lab_cache')\n\n\n"
        "class Cached(ClassifierMixin, BaseEstimator):\n"
        "    def __init__(self, inner=_INNER):\n        self.inner = inner\n\n"
        "    def fit(self, X, y):\n        self.inner.fit(X, y)\n        return self\n")
    monkeypatch.syspath_prepend(str(models))
    text = BASE.replace("sklearn.linear_model.LogisticRegression\n  params: {max_iter: 500}",
                        "labmodels_cached.Cached")
    path = cases.write_case(tmp_path / "lab", text)
    with pytest.raises(InputError, match="'inner__memory'") as info:
        load_config(path, trusted_modules=["labmodels_cached"])
    assert info.value.key == "model.estimator"
    assert not (tmp_path / "lab" / "lab_cache").exists()


def test_yaml_limits_leave_ordinary_anchors_alone(tmp_path):
    text = BASE.replace("budget: 10.0", "budget: &b 10.0\nsweep: {budgets: [*b, 5.0]}")
    cfg = load_config(cases.write_case(tmp_path, text))
    assert cfg.extra["sweep"]["budgets"] == [10.0, 5.0]
    assert yamlfile.MAX_DEPTH >= 16 and yamlfile.MAX_NODES >= 10_000


# ------------------------------------------------------------------ scorer vs target
@pytest.mark.parametrize("target", ["multiclass", "text-binary"])
def test_scorer_check_agrees_with_scikit_learn(target):
    """Reference: scikit-learn's own scorers on a fitted LogisticRegression.

    For every classification scorer name, the check refuses exactly the scorers that
    scikit-learn cannot compute on this target.
    """
    rng = np.random.default_rng(0)
    X = rng.normal(size=(60, 3))
    y = np.arange(60) % 3 if target == "multiclass" else np.where(X[:, 0] > 0, "yes", "no")
    model = LogisticRegression().fit(X, y)
    for name in get_scorer_names():
        try:
            check_scoring_target(name, y, classification=True)
            refused = False
        except InputError:
            refused = True
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                get_scorer(name)(model, X, y)
            fails = False
        except (ValueError, TypeError):
            fails = True
        regression = get_scorer(name)._score_func.__module__.endswith("_regression")
        assert refused == (fails or regression), name


def test_quoted_comma_text_in_a_comma_file_is_not_a_decimal_comma(tmp_path):
    frame = cases.small_frame()
    frame["lot_id"] = [f"grades {i},{i + 1}" for i in range(len(frame))]  # quoted on write
    path = cases.write_case(tmp_path, frame=frame)
    cfg = load_config(path)
    assert (cfg.data_format.separator, cfg.data_format.decimal) == (",", ".")
    np.testing.assert_array_equal(cfg.frame["protein_nir_pct"], frame["protein_nir_pct"])


@pytest.mark.parametrize("strategy, options, key", [
    ("forward", {"n_features": 5}, "strategy.options.n_features"),
    ("greedy-swap", {"n_features": 5}, "strategy.options.n_features"),
    ("filter-order", {"order": ["a", "z"]}, "strategy.options.order"),
    ("exhaustive", {"max_subsets": 3}, "strategy.options.max_subsets"),
])
def test_python_run_search_checks_strategy_options_before_any_evaluation(strategy, options,
                                                                         key):
    from featuresift import CostModel, run_search
    from featuresift.engine.evaluator import CriterionEvaluator

    asked = []
    ev = CriterionEvaluator(lambda s: asked.append(s) or len(s), 4, list("abcd"))
    with pytest.raises(InputError) as info:
        run_search(ev, strategy, costs=CostModel.uniform(list("abcd")), **options)
    assert info.value.key == key and asked == []  # refused before the references too
