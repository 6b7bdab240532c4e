"""Tests of featuresift.config: YAML schema, bad-input messages with key and line, build."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

from featuresift.config import (
    PREPROCESSORS,
    SECTIONS,
    Section,
    build_run,
    describe_plan,
    load_config,
    register_section,
    run_from_config,
)
from featuresift.costs import CostModel
from featuresift.demo import GRAIN_CONFIG, make_grain_lots
from featuresift.errors import InputError
from featuresift.outputs import latest_run

# Many tiny model fits: one BLAS thread is several times faster on a busy 2-core box.
pytestmark = pytest.mark.usefixtures("single_blas_thread")


EXAMPLES = Path(__file__).resolve().parents[1] / "examples"

COLUMNS = [
    "lot_id", "meets_milling_grade", "moisture_pct", "test_weight_kg_hl", "colour_index",
    "fusarium_damaged_kernels", "protein_nir_pct", "falling_number_s", "don_ppm",
    "zearalenone_ppb", "truck_wait_min",
]

# The base config. Every feature has a positive price, so a small budget is infeasible.
BASE_YAML = """\
# small grain-lab case
data:
  path: lots.csv
  target: meets_milling_grade
  exclude: [lot_id]
costs:
  unit: EUR (invented)
  features:
    moisture_pct: 0.5
    test_weight_kg_hl: 1.0
    colour_index: 1.5
    fusarium_damaged_kernels: 2.0
    protein_nir_pct: 6.0
    falling_number_s: 12.0
    truck_wait_min: 0.5
  panels:
    toxins:
      cost: 20.0
      features: [don_ppm, zearalenone_ppb]
budget: 10.0
model:
  estimator: sklearn.linear_model.LogisticRegression
  params: {max_iter: 500}
  preprocessing: [impute_median, scale]
cv:
  folds: 3
  seed: 0
scoring: roc_auc
strategy:
  name: forward
  options: {n_features: 3}
seed: 0
n_jobs: 1
output:
  folder: results/case
"""


def small_frame(n_lots: int = 60) -> pd.DataFrame:
    return make_grain_lots(n_lots=n_lots, seed=3)[COLUMNS]


def write_case(folder: Path, text: str = BASE_YAML, frame: pd.DataFrame | None = None) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (small_frame() if frame is None else frame).to_csv(folder / "lots.csv", index=False)
    path = folder / "case.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def line_of(text: str, marker: str) -> int:
    """1-based line of the first line containing ``marker`` (independent of the loader)."""
    hits = [i for i, ln in enumerate(text.splitlines(), 1) if marker in ln]
    assert hits, marker
    return hits[0]


def edit(old: str, new: str):
    def apply(text: str) -> str:
        assert old in text, old
        return text.replace(old, new, 1)

    return apply


def frame_edit(fn):
    def apply(frame: pd.DataFrame) -> pd.DataFrame:
        frame = frame.copy()
        fn(frame)
        return frame

    return apply


def _text_cell(f):
    f["protein_nir_pct"] = f["protein_nir_pct"].astype(object)
    f.loc[4, "protein_nir_pct"] = "n/a?"


# (id, yaml edit, frame edit, substrings of the message, key, marker of the expected line)
BAD_CASES = [
    ("cost-for-unknown-column", edit("    truck_wait_min: 0.5", "    truck_wait_min: 0.5\n"
                                     "    protein_nir: 3.0"), None,
     ["'protein_nir'", "not a column", "did you mean 'protein_nir_pct'"],
     "costs.features.protein_nir", "protein_nir: 3.0"),
    ("candidate-without-cost", edit("    falling_number_s: 12.0\n", ""), None,
     ["no cost", "'falling_number_s'"], "costs.features", "  features:"),
    ("negative-cost", edit("colour_index: 1.5", "colour_index: -1.5"), None,
     [">= 0", "-1.5"], "costs.features.colour_index", "colour_index: -1.5"),
    ("nan-cost", edit("colour_index: 1.5", "colour_index: .nan"), None,
     ["NaN"], "costs.features.colour_index", "colour_index: .nan"),
    ("text-cost", edit("colour_index: 1.5", "colour_index: cheap"), None,
     ["expected a cost", "'cheap'"], "costs.features.colour_index", "colour_index: cheap"),
    ("infinite-cost", edit("colour_index: 1.5", "colour_index: .inf"), None,
     ["finite"], "costs.features.colour_index", "colour_index: .inf"),
    ("panel-unknown-feature", edit("[don_ppm, zearalenone_ppb]",
                                   "[don_ppm, zearalenone_ppb, t2_toxin_ppb]"), None,
     ["'t2_toxin_ppb'", "not a column"], "costs.panels.toxins.features[2]", "t2_toxin_ppb"),
    ("feature-in-two-panels", edit("      features: [don_ppm, zearalenone_ppb]\n",
                                   "      features: [don_ppm, zearalenone_ppb]\n"
                                   "    elisa:\n      cost: 5.0\n      features: [don_ppm]\n"),
     None, ["'don_ppm'", "already in panel 'toxins'"], "costs.panels.elisa.features[0]",
     "features: [don_ppm]"),
    ("priced-and-in-panel", edit("    truck_wait_min: 0.5", "    truck_wait_min: 0.5\n"
                                 "    don_ppm: 3.0"), None,
     ["'don_ppm'", "own price"], "costs.panels.toxins.features[0]", "[don_ppm, zear"),
    ("budget-below-cheapest", edit("budget: 10.0", "budget: 0.25"), None,
     ["0.25", "below the cheapest possible subset", "0.5"], "budget", "budget: 0.25"),
    ("budget-negative", edit("budget: 10.0", "budget: -3"), None,
     [">= 0"], "budget", "budget: -3"),
    ("budget-below-must-include",
     edit("budget: 10.0", "budget: 5.0\nmust_include: [protein_nir_pct]"), None,
     ["must_include", "6"], "budget", "budget: 5.0"),
    ("single-class-target", None,
     frame_edit(lambda f: f.__setitem__("meets_milling_grade", 1)),
     ["single class", "meets_milling_grade"], "data.target", "target: meets"),
    ("continuous-target-classifier", edit("target: meets_milling_grade", "target: don_ppm\n"
                                          "  features: [moisture_pct, protein_nir_pct]"), None,
     ["continuous", "classifier"], "data.target", "target: don_ppm"),
    ("missing-target-values", None,
     frame_edit(lambda f: f.__setitem__("meets_milling_grade",
                                        f["meets_milling_grade"].astype(float).mask(
                                            f.index == 7))),
     ["missing value", "data row 8"], "data.target", "target: meets"),
    ("missing-data-file", edit("path: lots.csv", "path: no_such_lots.csv"), None,
     ["not found", "no_such_lots.csv"], "data.path", "path: no_such_lots.csv"),
    ("data-file-type", edit("path: lots.csv", "path: lots.xlsx"), None,
     ["unsupported file type"], "data.path", "path: lots.xlsx"),
    ("unknown-strategy", edit("name: forward", "name: forwards"), None,
     ["unknown strategy 'forwards'", "did you mean 'forward'", "backward"],
     "strategy.name", "name: forwards"),
    ("unknown-strategy-option", edit("{n_features: 3}", "{n_feature: 3}"), None,
     ["no option 'n_feature'", "n_features"], "strategy.options.n_feature", "n_feature: 3"),
    ("bad-strategy-option", edit("{n_features: 3}", "{n_features: 0}"), None,
     ["n_features", "0"], "strategy.options.n_features", "n_features: 0"),
    ("unknown-scorer", edit("scoring: roc_auc", "scoring: roc_acu"), None,
     ["unknown scorer 'roc_acu'", "did you mean 'roc_auc'", "get_scorer_names"],
     "scoring", "scoring: roc_acu"),
    ("unknown-top-level-key", edit("budget: 10.0", "buget: 10.0"), None,
     ["unknown key 'buget'", "did you mean 'budget'"], "buget", "buget: 10.0"),
    ("unknown-section-key", edit("  folds: 3", "  fold: 3"), None,
     ["unknown key 'fold'", "did you mean 'folds'"], "cv.fold", "fold: 3"),
    ("unknown-panel-key", edit("      cost: 20.0", "      price: 20.0"), None,
     ["unknown key 'price'", "cost"], "costs.panels.toxins.price", "price: 20.0"),
    ("duplicate-key", edit("seed: 0\nn_jobs: 1", "seed: 0\nn_jobs: 1\nseed: 1"), None,
     ["appears twice", "first at line"], "seed", "seed: 1"),
    ("wrong-type-folds", edit("  folds: 3", "  folds: three"), None,
     ["whole number", "'three'"], "cv.folds", "folds: three"),
    ("wrong-type-folds-too-small", edit("  folds: 3", "  folds: 1"), None,
     [">= 2"], "cv.folds", "folds: 1"),
    ("wrong-type-section", edit("cv:\n  folds: 3\n  seed: 0", "cv: 3"), None,
     ["expected a mapping"], "cv", "cv: 3"),
    ("wrong-type-exclude", edit("exclude: [lot_id]", "exclude: {lot_id: 1}"), None,
     ["expected a list"], "data.exclude", "exclude: {lot_id"),
    ("wrong-type-pick", edit("seed: 0\nn_jobs", "pick: median\nseed: 0\nn_jobs"), None,
     ["best", "one-se", "'median'"], "pick", "pick: median"),
    ("non-numeric-column", None, frame_edit(_text_cell),
     ["column 'protein_nir_pct'", "not numeric", "data row 5", "n/a?"], None, None),
    ("all-missing-column", None,
     frame_edit(lambda f: f.__setitem__("falling_number_s", np.nan)),
     ["column 'falling_number_s'", "every value is missing"], None, None),
    ("infinite-value", None,
     frame_edit(lambda f: f.__setitem__("don_ppm", f["don_ppm"].mask(f.index == 2, np.inf))),
     ["column 'don_ppm'", "infinite value in data row 3"], None, None),
    ("target-column-missing", edit("target: meets_milling_grade", "target: milling_grade"),
     None, ["'milling_grade'", "not a column", "did you mean 'meets_milling_grade'"],
     "data.target", "target: milling_grade"),
    ("excluded-column-missing", edit("exclude: [lot_id]", "exclude: [lot_id, lotid2]"), None,
     ["'lotid2'", "not a column"], "data.exclude[1]", "exclude: [lot_id"),
    ("feature-not-in-data", edit("  exclude: [lot_id]", "  exclude: [lot_id]\n"
                                 "  features: [moisture_pct, proteinx]"), None,
     ["'proteinx'", "not a column"], "data.features[1]", "features: [moisture_pct, prot"),
    ("empty-data", None, lambda f: f.iloc[:0], ["no rows"], "data.path", "path: lots.csv"),
    ("yaml-syntax", edit("  options: {n_features: 3}", "  options: {n_features: 3"), None,
     ["YAML syntax error", "line"], None, None),
    ("estimator-not-allowed", edit("sklearn.linear_model.LogisticRegression",
                                   "subprocess.Popen"), None,
     ["not allowed", "--trust-module"], "model.estimator", "subprocess.Popen"),
    ("estimator-not-found", edit("LogisticRegression", "LogisticRegresion"), None,
     ["no 'LogisticRegresion'", "did you mean 'LogisticRegression'"], "model.estimator",
     "LogisticRegresion"),
    ("estimator-module-not-found", edit("sklearn.linear_model.", "sklearn.linear_modell."),
     None, ["cannot import module 'sklearn.linear_modell'"], "model.estimator",
     "linear_modell"),
    ("estimator-not-a-class", edit("sklearn.linear_model.LogisticRegression",
                                   "sklearn.metrics.roc_auc_score"), None,
     ["not an estimator class"], "model.estimator", "roc_auc_score"),
    ("estimator-unknown-param", edit("{max_iter: 500}", "{max_iters: 500}"), None,
     ["no parameter 'max_iters'", "did you mean 'max_iter'"], "model.params.max_iters",
     "max_iters: 500"),
    ("unknown-preprocessing", edit("[impute_median, scale]", "[impute_median, scaled]"), None,
     ["unknown preprocessing step 'scaled'", "did you mean 'scale'"],
     "model.preprocessing[1]", "[impute_median, scaled]"),
    ("two-imputers", edit("[impute_median, scale]", "[impute_median, impute_mean]"), None,
     ["at most one imputation"], "model.preprocessing", "[impute_median, impute_mean]"),
    ("missing-values-without-imputer", edit("[impute_median, scale]", "[scale]"), None,
     ["colour_index", "missing values", "impute_median"], "model.preprocessing", "[scale]"),
    ("output-escapes-with-dotdot", edit("folder: results/case", "folder: ../../escaped"),
     None, ["outside the config file's folder", "--output"], "output.folder",
     "folder: ../../escaped"),
    ("output-absolute-outside", edit("folder: results/case", "folder: /tmp/fs-abs-out"), None,
     ["outside the config file's folder"], "output.folder", "folder: /tmp/fs-abs-out"),
    ("must-include-unknown", edit("seed: 0\nn_jobs", "must_include: [protein]\nseed: 0\nn_jobs"),
     None, ["'protein'", "not a candidate", "did you mean 'protein_nir_pct'"],
     "must_include[0]", "must_include: [protein]"),
    ("must-and-never", edit("seed: 0\nn_jobs", "must_include: [moisture_pct]\n"
                            "never_include: [moisture_pct]\nseed: 0\nn_jobs"), None,
     ["never_include", "moisture_pct"], "must_include", "must_include: [moisture_pct]"),
    ("group-column-missing", edit("  seed: 0\nscoring", "  group_column: farm\n  seed: 0\n"
                                  "scoring"), None,
     ["group column 'farm'", "not a column"], "cv.group_column", "group_column: farm"),
    ("repeats-with-groups", edit("  seed: 0\nscoring", "  group_column: lot_id\n  repeats: 2\n"
                                 "  seed: 0\nscoring"), None,
     ["repeated grouped"], "cv.repeats", "repeats: 2"),
    ("too-many-folds", edit("  folds: 3", "  folds: 40"), None,
     ["40 folds", "only 18 rows"], "cv.folds", "folds: 40"),
    ("more-folds-than-rows", edit("  folds: 3", "  folds: 70\n  stratified: false"), None,
     ["cannot make the CV folds"], "cv.folds", "folds: 70"),
    ("objective-unknown", edit("seed: 0\nn_jobs", "objective: {name: cheapest}\nseed: 0\nn_jobs"),
     None, ["unknown objective 'cheapest'"], "objective", "objective: {name: cheapest}"),
    ("scoring-conflicts-objective", edit(
        "seed: 0\nn_jobs",
        "objective:\n  name: expected_cost\n  cost_matrix: [[0, 5], [40, 0]]\nseed: 0\nn_jobs"),
     None, ["expected_cost", "remove 'scoring'"], "scoring", "scoring: roc_auc"),
    ("objective-bad-matrix", edit(
        "seed: 0\nn_jobs",
        "objective:\n  name: expected_cost\n  cost_matrix: [[0, 5], [-1, 0]]\nseed: 0\nn_jobs"),
     None, ["row 2, column 1", ">= 0"], "objective.cost_matrix", "cost_matrix:"),
    ("n-jobs-zero", edit("n_jobs: 1", "n_jobs: 0"), None, ["cannot be 0"], "n_jobs",
     "n_jobs: 0"),
    ("top-level-not-mapping", lambda text: "- just\n- a list\n", None,
     ["top level must be a mapping"], None, None),
]


def make_bad_case(folder: Path, case) -> tuple[Path, str]:
    _, yaml_edit, data_edit, *_ = case
    text = BASE_YAML if yaml_edit is None else yaml_edit(BASE_YAML)
    frame = small_frame() if data_edit is None else data_edit(small_frame())
    return write_case(folder, text, frame), text


@pytest.mark.parametrize("case", BAD_CASES, ids=[c[0] for c in BAD_CASES])
def test_bad_input_names_key_and_line(tmp_path, case):
    _, _, _, parts, key, marker = case
    path, text = make_bad_case(tmp_path / "case", case)
    before = sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*"))
    with pytest.raises(InputError) as info:
        build_run(load_config(path))
    exc = info.value
    message = str(exc)
    for part in parts:
        assert part in message, (part, message)
    if key is not None:
        assert exc.key == key, message
        assert exc.line == line_of(text, marker), message
        assert message.startswith(f"{key} (line {exc.line}): ")
    # Nothing written, not even the output folder.
    assert sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*")) == before


def test_yaml_syntax_error_reports_the_line(tmp_path):
    text = BASE_YAML.replace("  options: {n_features: 3}", "  options: {n_features: 3")
    path = write_case(tmp_path, text)
    with pytest.raises(InputError, match=r"YAML syntax error in case.yaml at line (\d+)") as info:
        load_config(path)
    # PyYAML reports the unclosed flow mapping where the next token appears.
    reported = int(str(info.value).split("at line ")[1].split(",")[0])
    assert reported >= line_of(text, "options: {n_features: 3")


def test_good_config_is_parsed(tmp_path):
    cfg = load_config(write_case(tmp_path))
    assert cfg.candidates == COLUMNS[2:]  # data order, lot_id and target left out
    assert cfg.budget == 10.0 and cfg.pick == "one-se" and cfg.n_jobs == 1
    assert cfg.strategy == {"name": "forward", "options": {"n_features": 3}}
    assert cfg.output == (tmp_path / "results" / "case").resolve()
    assert cfg.cost_model.cost(["don_ppm", "zearalenone_ppb", "moisture_pct"]) == 20.5
    assert cfg.lines["costs.panels.toxins.cost"] == line_of(BASE_YAML, "cost: 20.0")
    problem, kwargs = build_run(cfg)
    assert problem.feature_names == cfg.candidates
    assert len(problem.splits) == 3 and problem.scoring == "roc_auc"
    assert kwargs["budget"] == 10.0 and kwargs["seed"] == 0
    assert kwargs["strategy"] == {"name": "forward", "options": {"n_features": 3}}
    names = [n for n, _ in problem.estimator.steps]
    assert names == ["impute_median", "scale", "model"]
    assert not (tmp_path / "results").exists()


def test_overrides_replace_file_values(tmp_path):
    path = write_case(tmp_path)
    cfg = load_config(path, budget=3.0, n_jobs=2, seed=7, strategy="backward",
                      output=str(tmp_path.parent / "elsewhere"))
    assert cfg.budget == 3.0 and cfg.n_jobs == 2 and cfg.seed == 7
    # Another strategy drops the file's options; the same name keeps them.
    assert cfg.strategy == {"name": "backward", "options": {}}
    assert load_config(path, strategy="forward").strategy["options"] == {"n_features": 3}
    assert load_config(path, budget=math.inf).budget is None
    assert cfg.output == (tmp_path.parent / "elsewhere").resolve()  # outside is fine here
    with pytest.raises(InputError, match=r"budget \(from the command line\): .*cheapest"):
        load_config(path, budget=0.1)
    with pytest.raises(InputError, match="unknown strategy 'nope'"):
        load_config(path, strategy="nope")
    with pytest.raises(InputError, match="unknown override"):
        load_config(path, colour="red")


def test_default_output_folder_and_defaults(tmp_path):
    text = BASE_YAML.replace("output:\n  folder: results/case\n", "")
    text = text.replace("cv:\n  folds: 3\n  seed: 0\n", "cv: {folds: 3}\n")
    cfg = load_config(write_case(tmp_path, text))
    assert cfg.output == (tmp_path / "results" / "case").resolve()  # results/<yaml stem>
    assert cfg.cv.repeats == 1 and cfg.cv.shuffle and cfg.cv.stratified is None
    assert cfg.limits.max_features is None and cfg.must_include == []


def test_no_costs_section_means_unit_costs(tmp_path):
    start = BASE_YAML.index("costs:")
    text = BASE_YAML[:start] + BASE_YAML[BASE_YAML.index("budget:"):]
    text = text.replace("budget: 10.0", "budget: 2")
    cfg = load_config(write_case(tmp_path, text))
    assert cfg.cost_model.cost(cfg.candidates[:2]) == 2.0
    assert cfg.cost_model.unit == "features"


def test_costs_for_non_candidates_are_ignored(tmp_path):
    # lot_id is in the data but excluded: its price is listed, not an error.
    text = BASE_YAML.replace("    truck_wait_min: 0.5", "    truck_wait_min: 0.5\n    lot_id: 9")
    cfg = load_config(write_case(tmp_path, text))
    assert cfg.ignored_costs == ["lot_id"]
    assert "Prices ignored (not candidates): lot_id" in describe_plan(cfg)


@pytest.mark.parametrize(
    ("cv_text", "splitter", "n_splits"),
    [
        ("cv: {folds: 3, repeats: 2}", "RepeatedStratifiedKFold", 6),
        ("cv: {folds: 4, stratified: false}", "KFold", 4),
        ("cv: {folds: 3, group_column: farm}", "StratifiedGroupKFold", 3),
        ("cv: {folds: 3, group_column: farm, stratified: false}", "GroupKFold", 3),
    ],
)
def test_cv_section_builds_the_splitter(tmp_path, cv_text, splitter, n_splits):
    frame = small_frame()
    if "group_column" in cv_text:
        frame.insert(1, "farm", [f"F{i % 9}" for i in range(len(frame))])
    text = BASE_YAML.replace("cv:\n  folds: 3\n  seed: 0\n", cv_text + "\n")
    cfg = load_config(write_case(tmp_path, text, frame))
    assert "farm" not in cfg.candidates
    problem, _ = build_run(cfg)
    assert type(problem.cv).__name__ == splitter
    assert len(problem.splits) == n_splits
    if "group_column" in cv_text:  # no farm is split between train and test
        farms = frame["farm"].to_numpy()
        for train, test in problem.splits:
            assert not set(farms[train]) & set(farms[test])


def test_regression_config(tmp_path):
    text = BASE_YAML.replace("target: meets_milling_grade", "target: don_ppm\n"
                             "  features: [moisture_pct, fusarium_damaged_kernels, "
                             "truck_wait_min]")
    text = text.replace("sklearn.linear_model.LogisticRegression", "sklearn.linear_model.Ridge")
    text = text.replace("params: {max_iter: 500}", "params: {alpha: 1.0}")
    text = text.replace("scoring: roc_auc", "scoring: r2")
    cfg = load_config(write_case(tmp_path, text))
    assert not cfg.classification
    assert cfg.candidates == ["moisture_pct", "fusarium_damaged_kernels", "truck_wait_min"]
    problem, _ = build_run(cfg)
    assert type(problem.cv).__name__ == "KFold"
    strat = text.replace("  seed: 0\nscoring", "  stratified: true\n  seed: 0\nscoring")
    with pytest.raises(InputError, match="stratified folds need a classifier") as info:
        load_config(write_case(tmp_path / "s", strat))
    assert info.value.line == line_of(strat, "stratified: true")


def test_parquet_data(tmp_path):
    pytest.importorskip("pyarrow")
    folder = tmp_path / "pq"
    write_case(folder)
    small_frame().to_parquet(folder / "lots.parquet", index=False)
    text = BASE_YAML.replace("path: lots.csv", "path: lots.parquet")
    (folder / "case.yaml").write_text(text, encoding="utf-8")
    cfg = load_config(folder / "case.yaml")
    assert cfg.candidates == COLUMNS[2:]


@pytest.mark.parametrize("name", sorted(PREPROCESSORS))
def test_every_preprocessing_step_builds(tmp_path, name):
    steps = f"[{name}]" if name.startswith("impute") else f"[impute_mean, {name}]"
    text = BASE_YAML.replace("[impute_median, scale]", steps)
    if name == "one_hot":  # encodes data.categorical columns (test_columns.py runs it)
        with pytest.raises(InputError, match=r"model\.preprocessing\[1\] \(line 24\): one_hot "
                           "encodes the columns listed under data.categorical"):
            load_config(write_case(tmp_path, text))
        return
    estimator = load_config(write_case(tmp_path, text)).model.build()
    X = small_frame()[COLUMNS[2:]].astype(float).to_numpy()
    out = estimator[:-1].fit_transform(X)
    assert not np.isnan(out).any()
    extra = 1 if name == "impute_indicator" else 0  # colour_index has a missing value
    assert out.shape == (X.shape[0], X.shape[1] + extra)


def test_registered_section_reaches_build_run(tmp_path):
    def parse(value, ctx):
        return ctx.integer(value, "cap", minimum=1, optional=True)

    def apply(cfg, value, problem, kwargs):
        if value is not None:
            kwargs["max_evaluations"] = value

    register_section("cap", Section(parse, apply))
    try:
        cfg = load_config(write_case(tmp_path, BASE_YAML + "cap: 4\n"))
        assert cfg.extra["cap"] == 4
        assert build_run(cfg)[1]["max_evaluations"] == 4
        bad = BASE_YAML + "cap: zero\n"
        with pytest.raises(InputError, match="whole number") as info:
            load_config(write_case(tmp_path / "b", bad))
        assert (info.value.key, info.value.line) == ("cap", line_of(bad, "cap: zero"))
    finally:
        del SECTIONS["cap"]
    with pytest.raises(ValueError):
        register_section("budget", Section(parse))


def test_run_matches_plain_sklearn_cross_validation(tmp_path):
    """The chosen subset's fold scores equal cross_val_score with the same pipeline."""
    path = write_case(tmp_path)
    result = run_from_config(path, write=True)
    root = tmp_path / "results" / "case"
    # journal.sqlite: the evaluation journal, kept by default so that a run can resume; the
    # run's own files in a new run folder.
    assert sorted(p.name for p in root.iterdir()) == ["001-run", "journal.sqlite",
                                                      "latest.json"]
    out = latest_run(root)
    assert sorted(p.name for p in out.iterdir()) == ["path.csv", "report.md", "result.json",
                                                     "selected.csv"]
    assert 0 < result.cost <= 10.0 and len(result.selected) <= 3
    frame = small_frame()
    model = Pipeline([("i", SimpleImputer(strategy="median")), ("s", StandardScaler()),
                      ("m", LogisticRegression(max_iter=500))])
    # Reference: scikit-learn's own cross-validation on the same columns and folds.
    ref = cross_val_score(model, frame[result.selected], frame["meets_milling_grade"],
                          cv=StratifiedKFold(3, shuffle=True, random_state=0),
                          scoring="roc_auc")
    np.testing.assert_allclose(result.fold_scores, ref, rtol=1e-12)
    saved = json.loads((out / "result.json").read_text())
    assert saved["selected"] == result.selected
    assert saved["extras"]["data"]["n_rows"] == 60
    assert saved["extras"]["cv"]["splitter"] == "StratifiedKFold"


def test_example_config_matches_demo_and_validates():
    path = EXAMPLES / "grain_lab.yaml"
    raw = yaml.safe_load(path.read_text(encoding="utf-8"))
    assert raw == GRAIN_CONFIG  # the commented example and `featuresift demo` agree
    cfg = load_config(path)
    problem, kwargs = build_run(cfg)
    assert problem.n_samples == 1500 and problem.n_features == 26
    assert kwargs["budget"] == 30.0 and problem.scoring == "roc_auc"
    assert cfg.output == (EXAMPLES / "results" / "grain_lab").resolve()
    # The budget rules out the 48 EUR mycotoxin panel.
    assert not cfg.cost_model.is_feasible(["don_ppm"], cfg.budget)
    reference = CostModel(cfg.candidates, {k: v for k, v in GRAIN_CONFIG["costs"]["features"]
                                           .items()},
                          panels={"mycotoxin_panel": (48.0, GRAIN_CONFIG["costs"]["panels"]
                                                      ["mycotoxin_panel"]["features"])})
    assert cfg.cost_model.to_dict()["panels"] == reference.to_dict()["panels"]
