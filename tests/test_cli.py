"""Tests of the featuresift command line: exit codes, messages, files, help texts."""

from __future__ import annotations

import csv
import importlib.util
import io
import json
import math
import runpy
import sys
from contextlib import redirect_stdout
from pathlib import Path

import numpy as np
import pytest
import yaml

import featuresift.config
from featuresift.cli import build_parser, main
from featuresift.costs import CostModel
from featuresift.outputs import latest_run

# The bad-input table and case writers live in test_config.py (loaded by path, so this
# works whatever the import mode of the test run).
_spec = importlib.util.spec_from_file_location(
    "featuresift_config_cases", Path(__file__).with_name("test_config.py")
)
cases = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(cases)


# Many tiny model fits: one BLAS thread is several times faster on a busy 2-core box.
pytestmark = pytest.mark.usefixtures("single_blas_thread")


def snapshot(folder: Path) -> list[Path]:
    return sorted(p.relative_to(folder) for p in folder.rglob("*"))


# `validate` shares the checks with `run`; a sample of cases confirms its exit code.
_VALIDATE_SAMPLE = {"candidate-without-cost", "single-class-target", "missing-data-file",
                    "unknown-strategy", "yaml-syntax", "output-escapes-with-dotdot"}
_COMMAND_CASES = [("run", c) for c in cases.BAD_CASES] + [
    ("validate", c) for c in cases.BAD_CASES if c[0] in _VALIDATE_SAMPLE
]


@pytest.mark.parametrize(("command", "case"), _COMMAND_CASES,
                         ids=[f"{cmd}-{c[0]}" for cmd, c in _COMMAND_CASES])
def test_bad_input_exits_2_with_one_message_and_writes_nothing(tmp_path, capsys, case, command):
    _, _, _, parts, key, marker = case
    path, text = cases.make_bad_case(tmp_path / "case", case)
    before = snapshot(tmp_path)
    code = main([command, str(path)])
    captured = capsys.readouterr()
    assert code == 2
    err = captured.err
    assert err.startswith("featuresift: error: ")
    assert err.count("\n") == 1, err  # one line
    assert "Traceback" not in err and captured.out == ""
    for part in parts:
        assert part in err, (part, err)
    if key is not None:
        assert f"{key} (line {cases.line_of(text, marker)}): " in err
    assert snapshot(tmp_path) == before
    assert not (tmp_path / "case" / "results").exists()


def test_bad_override_on_the_command_line(tmp_path, capsys):
    path = cases.write_case(tmp_path / "c")
    assert main(["run", str(path), "--budget", "0.1"]) == 2
    err = capsys.readouterr().err
    assert "budget (from the command line): " in err and "cheapest" in err
    assert main(["run", str(path), "--strategy", "forwad"]) == 2
    assert "did you mean 'forward'" in capsys.readouterr().err
    assert main(["run", str(path), "--budget", "lots"]) == 2  # argparse usage error
    assert "expected a number or 'none'" in capsys.readouterr().err
    assert not (tmp_path / "c" / "results").exists()


def test_output_override_that_is_a_file(tmp_path, capsys):
    path = cases.write_case(tmp_path / "c")
    blocker = tmp_path / "taken.txt"
    blocker.write_text("not a folder")
    assert main(["run", str(path), "--output", str(blocker)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"featuresift: error: --output {blocker}: exists and is not a folder")
    assert blocker.read_text() == "not a folder"


def test_missing_config_file(tmp_path, capsys):
    assert main(["validate", str(tmp_path / "nope.yaml")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("featuresift: error: config file not found") and "Traceback" not in err


def test_run_end_to_end_writes_three_consistent_files(tmp_path, capsys):
    path = cases.write_case(tmp_path / "lab")
    assert main(["run", str(path)]) == 0
    out = capsys.readouterr().out
    root = tmp_path / "lab" / "results" / "case"
    # journal.sqlite: the evaluation journal kept by default so that a run can resume; the
    # files of the run in their own run folder, named by latest.json.
    assert sorted(p.name for p in root.iterdir()) == ["001-run", "journal.sqlite",
                                                      "latest.json"]
    folder = latest_run(root)
    assert sorted(p.name for p in folder.iterdir()) == ["path.csv", "report.md",
                                                        "result.json", "selected.csv"]
    result = json.loads((folder / "result.json").read_text())
    costs = yaml.safe_load(cases.BASE_YAML)["costs"]
    # Recompute the cost from the YAML price list with an independent CostModel.
    reference = CostModel(
        cases.COLUMNS[2:], costs["features"],
        panels={p: (v["cost"], v["features"]) for p, v in costs["panels"].items()},
    )
    selected = result["selected"]
    assert 1 <= len(selected) <= 3
    assert result["cost"] == reference.cost(selected) <= 10.0
    assert sum(line["cost"] for line in result["cost_breakdown"]) == pytest.approx(
        result["cost"], abs=1e-12)
    folds = result["score"]["folds"]
    assert len(folds) == 3
    assert result["score"]["mean"] == pytest.approx(np.mean(folds), abs=1e-12)
    assert result["score"]["std"] == pytest.approx(np.std(folds, ddof=1), abs=1e-12)
    with open(folder / "selected.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["feature"] for r in rows] == selected
    with open(folder / "path.csv", newline="") as fh:
        steps = list(csv.DictReader(fh))
    assert len(steps) == len(result["path"]) >= 1
    # forward with n_features: 3 answers with the better end point of its two paths
    # (plain gain and gain per cost), a step of the recorded path.
    answer = [s for s in steps if s["features"].split(" + ") == selected]
    assert answer and len(selected) == 3
    assert math.isclose(float(answer[-1]["cost"]), result["cost"])
    # What was printed: measurements, total with breakdown, mean ± std, folds, path.
    for name in selected:
        assert name in out
    assert "TOTAL" in out and "±" in out and "per fold:" in out and "Path:" in out
    assert f"{result['score']['mean']:.4f}" in out
    assert str(folder) in out


def test_quiet_verbose_and_output_override(tmp_path, capsys):
    path = cases.write_case(tmp_path / "lab")
    text = cases.BASE_YAML.replace("{n_features: 3}", "{n_features: 1}")
    path.write_text(text, encoding="utf-8")
    elsewhere = tmp_path / "elsewhere" / "run1"  # outside the config folder: allowed here
    assert main(["run", str(path), "-q", "--output", str(elsewhere), "--n-jobs", "1"]) == 0
    captured = capsys.readouterr()
    assert captured.out == "" and captured.err == ""
    assert (latest_run(elsewhere) / "result.json").is_file()
    assert not (tmp_path / "lab" / "results").exists()
    assert main(["run", str(path), "--verbose", "--output", str(elsewhere)]) == 0
    captured = capsys.readouterr()
    assert captured.out.startswith("Config: ")  # the plan first
    assert "step 0: add " in captured.err  # then each step as it happens
    result = json.loads((latest_run(elsewhere) / "result.json").read_text())
    assert result["extras"]["overrides"] == {"output": str(elsewhere)}


def test_budget_and_seed_overrides_reach_the_result(tmp_path, capsys):
    path = cases.write_case(tmp_path / "lab")
    assert main(["run", str(path), "-q", "--budget", "2.5", "--seed", "3"]) == 0
    result = json.loads((latest_run(tmp_path / "lab" / "results" / "case") / "result.json")
                        .read_text())
    assert result["budget"] == 2.5 and result["cost"] <= 2.5
    assert result["extras"]["overrides"] == {"budget": 2.5, "seed": 3}


def test_dry_run_prints_the_plan_and_writes_nothing(tmp_path, capsys, monkeypatch):
    path = cases.write_case(tmp_path / "lab")

    def no_search(*args, **kwargs):
        raise AssertionError("a dry run must not search")

    monkeypatch.setattr(featuresift.config.run, "run_search", no_search)
    before = snapshot(tmp_path)
    assert main(["run", str(path), "--dry-run"]) == 0
    out = capsys.readouterr().out
    for text in ("lots.csv (60 rows", "Candidates (9)", "toxins", "Budget: 10",
                 "impute_median -> scale -> sklearn.linear_model.LogisticRegression",
                 "StratifiedKFold, 3 splits", "roc_auc", "forward", "nothing was fitted",
                 # the noise guard can multiply the fits: the plan says so
                 "Guard:  nested, 5 outer folds, alpha 0.05", "about 5x the fits"):
        assert text in out, text
    assert snapshot(tmp_path) == before


def test_validate_ok(tmp_path, capsys):
    path = cases.write_case(tmp_path / "lab")
    assert main(["validate", str(path)]) == 0
    out = capsys.readouterr().out
    assert out.startswith("OK: ") and "60 rows, 9 candidate features, 3 CV splits" in out
    assert not (tmp_path / "lab" / "results").exists()


def test_internal_error_exit_1_traceback_only_with_debug(tmp_path, capsys, monkeypatch):
    path = cases.write_case(tmp_path / "lab")

    def broken(*args, **kwargs):
        raise RuntimeError("evaluator exploded")

    monkeypatch.setattr(featuresift.config.run, "run_search", broken)
    assert main(["run", str(path)]) == 1
    err = capsys.readouterr().err
    assert "internal error: RuntimeError: evaluator exploded" in err
    assert "--debug" in err and "Traceback" not in err
    assert main(["run", str(path), "--debug"]) == 1
    assert "Traceback" in capsys.readouterr().err
    assert not (tmp_path / "lab" / "results").exists()


def test_fit_failure_is_reported_as_bad_input(tmp_path, capsys):
    # Valid parameters one by one (validate passes), a combination the solver rejects.
    text = cases.BASE_YAML.replace("{max_iter: 500}", "{max_iter: 500, l1_ratio: 1.0}")
    path = cases.write_case(tmp_path / "lab", text)
    assert main(["validate", str(path)]) == 0
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert "featuresift: error: the model could not be fitted" in err
    assert "l1 penalty" in err and "Traceback" not in err
    assert not (tmp_path / "lab" / "results").exists()


def test_demo_writes_a_config_that_validates(tmp_path, capsys):
    folder = tmp_path / "demo"
    assert main(["demo", "--folder", str(folder), "--n-lots", "40", "--seed", "2"]) == 0
    assert sorted(p.name for p in folder.iterdir()) == ["grain_lab.yaml", "grain_lots.csv"]
    assert "featuresift run" in capsys.readouterr().out
    assert main(["validate", str(folder / "grain_lab.yaml")]) == 0
    assert "40 rows, 26 candidate features" in capsys.readouterr().out
    assert main(["demo", "--folder", str(tmp_path / "d2"), "--n-lots", "3"]) == 2
    assert "--n-lots" in capsys.readouterr().err
    assert not (tmp_path / "d2").exists()


def _help(argv: list[str]) -> str:
    buf = io.StringIO()
    with redirect_stdout(buf):
        assert main(argv) == 0
    return buf.getvalue()


@pytest.mark.parametrize("command", ["run", "validate", "demo"])
def test_help_mentions_every_option(command):
    text = _help([command, "--help"])
    sub = next(a for a in build_parser()._actions if a.dest == "command").choices[command]
    for action in sub._actions:
        assert action.help, action.dest  # every option is explained
        for flag in action.option_strings:
            assert flag in text, flag
        if not action.option_strings:
            assert action.metavar in text
    top = _help(["--help"])
    assert command in top


def test_python_dash_m_entry_point(tmp_path, monkeypatch, capsys):
    # In-process equivalent of `python -m featuresift validate MISSING.yaml`.
    monkeypatch.setattr(sys, "argv", ["featuresift", "validate", str(tmp_path / "no.yaml")])
    with pytest.raises(SystemExit) as info:
        runpy.run_module("featuresift", run_name="__main__")
    assert info.value.code == 2
    err = capsys.readouterr().err
    assert err.startswith("featuresift: error: config file not found") and "Traceback" not in err


def _leaf_paths(node, path=()):
    if path:
        yield path
    items = node.items() if isinstance(node, dict) else (
        enumerate(node) if isinstance(node, list) else ())
    for k, v in items:
        yield from _leaf_paths(v, path + (k,))


def test_no_value_anywhere_crashes_validate(tmp_path, capsys):
    """Any wrong value at any key gives exit 0 or 2 with one message, never a crash."""
    base = yaml.safe_load(cases.BASE_YAML)
    paths = list(_leaf_paths(base))
    values = [None, True, "text", -1, 1.5, [1, "a"], {"x": 1}, float("nan"), "moisture_pct"]
    rng = np.random.default_rng(0)
    picks = [(paths[i], values[j]) for i, j in zip(rng.integers(0, len(paths), 40),
                                                   rng.integers(0, len(values), 40))]
    folder = tmp_path / "fz"
    path = cases.write_case(folder)
    for key_path, value in picks:
        cfg = yaml.safe_load(cases.BASE_YAML)
        node = cfg
        for k in key_path[:-1]:
            node = node[k]
        node[key_path[-1]] = value
        path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
        code = main(["validate", str(path)])
        err = capsys.readouterr().err
        assert code in (0, 2), (key_path, value, err)
        assert "Traceback" not in err and err.count("\n") == (code == 2), (key_path, value)
