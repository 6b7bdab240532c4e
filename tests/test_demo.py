"""The invented grain-lab demo: generator, price list, shipped files, a small search."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from scipy.stats import spearmanr
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from featuresift.costs import CostModel
from featuresift.demo import (
    GRAIN_CONFIG,
    GRAIN_COSTS,
    GRAIN_TARGET,
    MYCOTOXIN_PANEL,
    NOISE_COLUMNS,
    make_grain_lots,
    write_demo,
)
from featuresift.problem import SelectionProblem
from featuresift.search import run_search

pytestmark = pytest.mark.usefixtures("single_blas_thread")

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
MISSING = ("colour_index", "broken_kernels_pct", "skcs_hardness_index", "gluten_index")


def _measurements(frame: pd.DataFrame) -> list[str]:
    return [c for c in frame.columns if c not in ("lot_id", GRAIN_TARGET)]


def _cost_model(columns: list[str]) -> CostModel:
    panels = {p: (v["cost"], v["features"]) for p, v in GRAIN_COSTS["panels"].items()}
    return CostModel(columns, GRAIN_COSTS["features"], panels=panels, unit=GRAIN_COSTS["unit"])


def test_same_seed_same_table_other_seed_other_table():
    a = make_grain_lots(n_lots=120, seed=3)
    pd.testing.assert_frame_equal(a, make_grain_lots(n_lots=120, seed=3))
    b = make_grain_lots(n_lots=120, seed=4)
    assert not a.drop(columns="lot_id").equals(b.drop(columns="lot_id"))


def test_columns_prices_and_panel(grain_small):
    cols = list(grain_small.columns)
    assert cols[:2] == ["lot_id", GRAIN_TARGET]
    assert grain_small["lot_id"].is_unique
    measured = _measurements(grain_small)
    assert 20 <= len(measured) <= 30
    # Every measurement is priced exactly once: alone or through the mycotoxin panel.
    panel = GRAIN_COSTS["panels"]["mycotoxin_panel"]
    assert panel["features"] == list(MYCOTOXIN_PANEL)
    assert set(GRAIN_COSTS["features"]).isdisjoint(panel["features"])
    assert len(GRAIN_COSTS["features"]) + len(panel["features"]) == len(measured)
    assert set(GRAIN_COSTS["features"]) | set(panel["features"]) == set(measured)
    assert set(NOISE_COLUMNS) <= set(measured)
    cm = _cost_model(measured)
    assert cm.cost(["moisture_pct", "test_weight_kg_hl", "grain_temp_c"]) == 0.0
    assert cm.cost(list(MYCOTOXIN_PANEL)) == panel["cost"] == cm.cost(["don_ppm"])
    assert "invented" in GRAIN_COSTS["unit"]


def test_missing_values_where_documented():
    lots = make_grain_lots()  # the shipped size, 1500 lots
    rates = lots.isna().mean()
    assert set(rates[rates > 0].index) == set(MISSING)
    assert all(0.005 < rates[c] < 0.08 for c in MISSING)
    # Missing at random: the single-kernel hardness reading fails more often on wet lots.
    wet = lots["moisture_pct"] > 14.5
    hard = lots["skcs_hardness_index"].isna()
    assert hard[wet].mean() > 3 * hard[~wet].mean()


def test_proxies_and_noise_behave_as_documented():
    lots = make_grain_lots()
    # Reference for the rank correlations: scipy.stats.spearmanr.
    assert spearmanr(lots["fusarium_damaged_kernels"], lots["don_ppm"])[0] > 0.6
    assert spearmanr(lots["wet_gluten_pct"], lots["protein_nir_pct"])[0] > 0.8
    assert spearmanr(lots["sprouted_kernels_pct"], lots["falling_number_s"])[0] < -0.5
    assert spearmanr(lots["zearalenone_ppb"], lots["don_ppm"])[0] > 0.5
    y = lots[GRAIN_TARGET]
    assert 0.5 < y.mean() < 0.85
    for col in NOISE_COLUMNS:
        assert abs(spearmanr(lots[col], y)[0]) < 0.08
    for col in ("protein_nir_pct", "falling_number_s", "test_weight_kg_hl"):
        assert spearmanr(lots[col], y)[0] > 0.15
    assert spearmanr(lots["don_ppm"], y)[0] < -0.15


def test_module_command_remakes_the_shipped_files(tmp_path):
    done = subprocess.run(
        [sys.executable, "-m", "featuresift.demo", str(tmp_path)],
        capture_output=True, text=True, check=True, timeout=120,
    )
    assert "grain_lots.csv" in done.stdout
    shipped = EXAMPLES / "grain_lots.csv"
    assert (tmp_path / "grain_lots.csv").read_bytes() == shipped.read_bytes()
    assert len(pd.read_csv(shipped)) == 1500
    written = yaml.safe_load((tmp_path / "grain_lab.yaml").read_text(encoding="utf-8"))
    assert written == GRAIN_CONFIG
    assert yaml.safe_load((EXAMPLES / "grain_lab.yaml").read_text(encoding="utf-8")) == written


def test_write_demo_keeps_a_commented_config_with_the_same_content(tmp_path):
    commented = (EXAMPLES / "grain_lab.yaml").read_text(encoding="utf-8")
    (tmp_path / "grain_lab.yaml").write_text(commented, encoding="utf-8")
    write_demo(tmp_path, n_lots=20)
    assert (tmp_path / "grain_lab.yaml").read_text(encoding="utf-8") == commented
    (tmp_path / "grain_lab.yaml").write_text("budget: 1.0\n", encoding="utf-8")
    write_demo(tmp_path, n_lots=20)
    assert yaml.safe_load((tmp_path / "grain_lab.yaml").read_text()) == GRAIN_CONFIG


def test_small_search_stays_within_budget(grain_small):
    measured = _measurements(grain_small)
    model = make_pipeline(
        SimpleImputer(strategy="median"), StandardScaler(), LogisticRegression(max_iter=500)
    )
    problem = SelectionProblem(
        grain_small[measured], grain_small[GRAIN_TARGET], model,
        costs=_cost_model(measured),
        cv=StratifiedKFold(3, shuffle=True, random_state=0), scoring="roc_auc",
    )
    result = run_search(problem, "forward", budget=8.0, max_features=3, guard="off")
    assert result.success
    assert 0 < len(result.selected) <= 3
    assert result.cost <= 8.0
    assert not set(result.selected) & set(MYCOTOXIN_PANEL)  # the panel costs 48
    assert result.score_mean > 0.65
    assert np.isfinite(result.fold_scores).all()
