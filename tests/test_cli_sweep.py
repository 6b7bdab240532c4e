"""`featuresift sweep`, `featuresift screen` and `featuresift run --nested` end to end."""

from __future__ import annotations

import copy
import json

import numpy as np
import pandas as pd
import pytest
import yaml
from scipy import stats
from sklearn.feature_selection import mutual_info_classif

from featuresift.cli import main
from featuresift.costs import CostModel
from featuresift.demo import GRAIN_CONFIG, GRAIN_TARGET, make_grain_lots
from featuresift.outputs import latest_run

pytestmark = pytest.mark.usefixtures("single_blas_thread")

CANDIDATES = ["moisture_pct", "test_weight_kg_hl", "protein_nir_pct", "falling_number_s",
              "don_ppm", "zearalenone_ppb", "fusarium_damaged_kernels"]


@pytest.fixture
def small_config(tmp_path):
    frame = make_grain_lots(n_lots=200, seed=3)
    frame[["lot_id", GRAIN_TARGET, *CANDIDATES]].to_csv(tmp_path / "lots.csv", index=False)
    cfg = copy.deepcopy(GRAIN_CONFIG)
    cfg["data"] = {"path": "lots.csv", "target": GRAIN_TARGET, "exclude": ["lot_id"]}
    costs = cfg["costs"]
    costs["features"] = {k: v for k, v in costs["features"].items() if k in CANDIDATES}
    costs["panels"] = {"mycotoxin_panel": {"cost": costs["panels"]["mycotoxin_panel"]["cost"],
                                           "features": ["don_ppm", "zearalenone_ppb"]}}
    cfg["cv"] = {"folds": 3, "seed": 0}
    cfg["strategy"] = {"name": "forward", "options": {"n_features": 3}}
    cfg["output"] = {"folder": "out"}
    path = tmp_path / "small.yaml"
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    return path, cfg


def _cost_model(cfg):
    c = cfg["costs"]
    return CostModel(
        CANDIDATES, c["features"],
        panels={k: (v["cost"], v["features"]) for k, v in c["panels"].items()},
    )


def test_sweep_writes_frontier_within_each_budget(small_config, capsys):
    path, cfg = small_config
    assert main(["sweep", str(path), "--budgets", "0.5,10,none"]) == 0
    out_dir = latest_run(path.parent / "out", "sweep")
    frame = pd.read_csv(out_dir / "frontier.csv")
    assert len(frame) == 3
    cm = _cost_model(cfg)
    for budget, chosen, cost in zip(frame["budget"], frame["selected"], frame["cost"]):
        names = chosen.split(" + ")
        assert cost == pytest.approx(cm.cost(names))  # independent cost model
        assert pd.isna(budget) or cost <= budget + 1e-9
    data = json.loads((out_dir / "frontier.json").read_text())
    assert data["n_fits"] <= data["n_fits_without_cache"]
    report = (out_dir / "report.md").read_text()
    assert "licensed practice" in report and "Accuracy against cost" in report
    assert "unlimited" in capsys.readouterr().out


def test_sweep_budget_below_cheapest_exits_2_and_writes_nothing(small_config, capsys):
    path, cfg = small_config
    cfg["sweep"] = {"budgets": [-0.0, 5]}
    cfg["costs"]["features"]["moisture_pct"] = 0.25
    cfg["costs"]["features"]["test_weight_kg_hl"] = 0.25
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    assert main(["sweep", str(path)]) == 2
    err = capsys.readouterr().err
    assert "sweep.budgets" in err and "cheapest" in err and "Traceback" not in err
    assert not (path.parent / "out").exists()


def test_sweep_section_typo_is_named(small_config, capsys):
    path, cfg = small_config
    cfg["sweep"] = {"budget": [1, 2]}
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    assert main(["validate", str(path)]) == 2
    err = capsys.readouterr().err
    assert "sweep.budget" in err and "budgets" in err


def test_screen_table_matches_scipy_anova(small_config):
    path, _ = small_config
    assert main(["screen", str(path), "-q"]) == 0
    table = pd.read_csv(latest_run(path.parent / "out") / "features.csv").set_index("feature")
    frame = pd.read_csv(path.parent / "lots.csv")
    # Reference: scipy.stats.f_oneway on the complete cases of one column.
    col = frame[["protein_nir_pct", GRAIN_TARGET]].dropna()
    groups = [g["protein_nir_pct"].to_numpy() for _, g in col.groupby(GRAIN_TARGET)]
    ref = stats.f_oneway(*groups)
    assert table.loc["protein_nir_pct", "relevance"] == pytest.approx(ref.statistic, rel=1e-9)
    assert table.loc["protein_nir_pct", "p_value"] == pytest.approx(ref.pvalue, rel=1e-6)
    # Reference: scipy.stats.false_discovery_control (Benjamini-Hochberg) over every p-value.
    q_ref = stats.false_discovery_control(table["p_value"].to_numpy(), method="bh")
    np.testing.assert_allclose(table["q_value"].to_numpy(), q_ref, rtol=1e-9)
    assert (table["q_value"] >= table["p_value"]).all()
    assert table.loc["don_ppm", "panel"] == "mycotoxin_panel"
    folder = latest_run(path.parent / "out")
    assert sorted(p.name for p in folder.iterdir()) == ["features.csv", "screen.json"]
    settings = json.loads((folder / "screen.json").read_text())
    assert settings["relevance"] == "anova_f" and settings["seed"] == 0
    assert not settings["seed_used"]  # the F test draws nothing at random


def test_screen_mutual_info_uses_the_config_seed(small_config, capsys):
    path, cfg = small_config
    columns = ["moisture_pct", "protein_nir_pct", "falling_number_s"]  # continuous, complete
    cfg["data"]["features"] = columns
    cfg["seed"] = 11
    cfg["screen"] = {"relevance": {"name": "mutual_info", "n_neighbors": 5}}
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    assert main(["screen", str(path)]) == 0
    out = capsys.readouterr().out
    assert "Seed 11" in out and "features.csv, screen.json" in out
    folder = latest_run(path.parent / "out", "screen")
    table = pd.read_csv(folder / "features.csv").set_index("feature")
    frame = pd.read_csv(path.parent / "lots.csv")
    # Reference: scikit-learn's kNN estimate with the same seed (its noise depends on it).
    ref = mutual_info_classif(frame[columns].to_numpy(), frame[GRAIN_TARGET].to_numpy(),
                              discrete_features=False, n_neighbors=5, random_state=11)
    np.testing.assert_allclose(table.loc[columns, "relevance"].to_numpy(), ref, rtol=1e-12)
    settings = json.loads((folder / "screen.json").read_text())
    assert settings["seed_used"] is True and settings["options"] == {"n_neighbors": 5}
    # --relevance replaces the section's scorer and its options.
    assert main(["screen", str(path), "--relevance", "anova_f", "-q"]) == 0
    folder = latest_run(path.parent / "out", "screen")
    assert json.loads((folder / "screen.json").read_text())["relevance"] == "anova_f"


def test_run_nested_writes_honest_estimate(small_config, capsys):
    path, cfg = small_config
    cfg["nested"] = {"folds": 3, "repeats": 2}  # the command line overrides the folds
    cfg["pick"] = "best"  # the strategy's 3 measurements, not a cheaper one-se pick
    cfg["seed"] = 5
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    assert main(["run", str(path), "--nested", "2"]) == 0
    out_dir = latest_run(path.parent / "out")
    nested = json.loads((out_dir / "nested.json").read_text())
    # The one seed is recorded in every file of the run folder.
    assert nested["seed"] == 5 == json.loads((out_dir / "result.json").read_text())["seed"]
    assert f"Run from `{path}`, seed 5." in (out_dir / "report.md").read_text()
    assert len(nested["outer_scores"]) == 4 and nested["repeats"] == [0, 0, 1, 1]
    assert all(len(s) == 3 for s in nested["selected"])
    assert 0.0 <= nested["outer_mean"] <= 1.0
    lo, hi = nested["ci"]
    assert lo < nested["outer_mean"] < hi and nested["score_kind"] == "nested"
    report = (out_dir / "report.md").read_text()
    assert "nested cross-validation" in report and "95% CI" in report
    out = capsys.readouterr().out
    assert "roc_auc, nested estimate (honest)" in out and "2 repeats x 2" in out
    assert "roc_auc, in-search estimate (optimistic)" in out


def test_nested_section_is_checked(small_config, capsys):
    path, cfg = small_config
    cfg["nested"] = {"folds": 5, "repeat": 2}
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    assert main(["validate", str(path)]) == 2
    err = capsys.readouterr().err
    assert "nested.repeat" in err and "repeats" in err


def test_sweep_headline_within_config_budget_and_nested_at_pick(small_config, capsys):
    path, cfg = small_config
    cfg["budget"] = 10.0
    cfg["pick"] = "best"
    cfg["seed"] = 7
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    assert main(["sweep", str(path), "--budgets", "6,10,none", "--nested", "2"]) == 0
    out_dir = latest_run(path.parent / "out", "sweep")
    data = json.loads((out_dir / "frontier.json").read_text())
    # The one seed: the sweep, each of its searches, its nested estimate and its report.
    assert data["seed"] == data["nested"]["seed"] == 7
    assert {r["seed"] for r in data["results"]} == {7}
    report = (out_dir / "report.md").read_text()
    assert f"Run from `{path}`, seed 7." in report
    # The headline section states the guard the sweep applied to it (its search ran
    # without one), as the sweep section does: never "off" beside "kept".
    assert data["guard"]["name"] == "nested" and "Noise guard: off" not in report
    assert f"Noise guard: nested ({data['guard']['folds']} outer folds" in report
    head, best = data["points"][data["headline"]], data["points"][data["best"]]
    assert data["budget"] == 10.0 and head["cost"] <= 10.0
    # "best" rule: the highest in-search score among the points within 10.
    within = [p["score_mean"] for p in data["points"] if p["cost"] <= 10.0]
    assert head["score_mean"] == max(within)
    assert best["score_mean"] == max(p["score_mean"] for p in data["points"])
    assert data["nested"]["budget"] == head["budget"] and len(data["nested"]["outer_scores"]) == 2
    choices = pd.read_csv(out_dir / "frontier_choices.csv")
    assert choices["n_budgets"].max() <= 3 and set(choices["feature"]) <= set(CANDIDATES)
    out = capsys.readouterr().out
    assert "roc_auc (in-search)" in out and "Headline" in out
    assert "roc_auc, nested estimate (honest)" in out


def test_sweep_dry_run_shows_budgets_and_overrides_and_writes_nothing(small_config, capsys):
    path, cfg = small_config
    cfg["sweep"] = {"budgets": [0.5, 6, None]}
    cfg["costs"]["features"].update(moisture_pct=0.25, test_weight_kg_hl=0.25)  # none free
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    assert main(["sweep", str(path), "--dry-run", "--budget", "6", "--pick", "best",
                 "--guard", "off"]) == 0
    out = capsys.readouterr().out
    for text in ("Budget: 6 ", "pick best", "Guard:  off", "Sweep:  3 budgets",
                 ": 0.5, 6, unlimited;", "nothing was fitted or written"):
        assert text in out, text
    assert not (path.parent / "out").exists()
    # The same budgets from the command line are checked like the section's.
    assert main(["sweep", str(path), "--dry-run", "--budgets", "0.1,6"]) == 2
    assert "--budgets: budget 0.1" in capsys.readouterr().err
