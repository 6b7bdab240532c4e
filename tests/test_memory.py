"""Memory-saving paths give the same numbers as the plain ones.

The big-file CSV reader (chunks of rows written into one float64 array) against
``pandas.read_csv`` itself, and the column-block screen scorers against scipy and
scikit-learn on scikit-learn's wine data. Peak-memory figures are in
benchmarks/bench_memory.py, not here.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from sklearn.datasets import load_wine
from sklearn.feature_selection import f_classif

import featuresift.config.data as data_mod
import featuresift.filters.relevance as relevance_mod
from featuresift.config import load_config
from featuresift.config.csvformat import sniff_csv
from featuresift.config.data import candidate_matrix, read_csv_lean
from featuresift.config.run import build_run
from featuresift.filters.redundancy import abs_correlation_matrix
from featuresift.filters.relevance import anova_f, pearson
from featuresift.filters.report import redundancy_partners


def _lots(n=700, seed=0):
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame({
        "lot_id": [f"L{i}" for i in range(n)],
        "grade": rng.integers(0, 2, n),
        "moisture_pct": rng.normal(12.5, 0.8, n).round(3),
        "ash_pct": rng.normal(0.6, 0.05, n).round(4),
        "protein_pct": rng.normal(12.0, 1.0, n).round(2),
    })
    frame.loc[[5, 650], "ash_pct"] = np.nan  # missing values early and in a late chunk
    return frame


@pytest.fixture
def small_chunks(monkeypatch):
    monkeypatch.setattr(data_mod, "_CHUNK_VALUES", 500)  # 100 rows of 5 columns per chunk


def test_chunked_reader_equals_pandas_read_csv(tmp_path, small_chunks):
    path = tmp_path / "lots.csv"
    _lots().to_csv(path, index=False)
    fmt = sniff_csv(path)
    got = read_csv_lean(path, fmt, block=lambda c: c not in ("grade", "lot_id"), min_bytes=0)
    pd.testing.assert_frame_equal(got, pd.read_csv(path))  # pandas is the reference
    names = ["moisture_pct", "ash_pct", "protein_pct"]
    X = candidate_matrix(got, names)
    assert X is not None and X.flags.c_contiguous
    np.testing.assert_array_equal(X, pd.read_csv(path)[names].to_numpy())
    assert candidate_matrix(got, ["ash_pct", "moisture_pct"]) is None  # not the block's order


def test_chunked_reader_falls_back_when_a_late_chunk_is_not_numeric(tmp_path, small_chunks):
    path = tmp_path / "lots.csv"
    frame = _lots().astype({"ash_pct": object})
    frame.loc[690, "ash_pct"] = "n/a?"
    frame.to_csv(path, index=False)
    got = read_csv_lean(path, sniff_csv(path), min_bytes=0)
    pd.testing.assert_frame_equal(got, pd.read_csv(path))  # pandas is the reference


def test_big_file_problem_uses_the_read_array(tmp_path, small_chunks, monkeypatch):
    monkeypatch.setattr(data_mod, "LEAN_MIN_BYTES", 0)
    _lots().to_csv(tmp_path / "lots.csv", index=False)
    (tmp_path / "run.yaml").write_text(
        "data:\n  path: lots.csv\n  target: grade\n  exclude: [lot_id]\n"
        "model:\n  estimator: sklearn.linear_model.LogisticRegression\n"
        "  preprocessing: [impute_median]\ncv:\n  folds: 3\n", encoding="utf-8")
    cfg = load_config(tmp_path / "run.yaml")
    problem, _ = build_run(cfg)
    ref = pd.read_csv(tmp_path / "lots.csv")  # pandas is the reference
    np.testing.assert_array_equal(problem.X, ref[cfg.candidates].to_numpy(dtype=float))
    assert np.shares_memory(problem.X, cfg.frame["ash_pct"].to_numpy())  # no second copy


def test_column_blocks_give_scipy_and_sklearn_scores(monkeypatch):
    monkeypatch.setattr(relevance_mod, "BLOCK_VALUES", 3 * 178)  # 3 columns per block
    X, y = load_wine(return_X_y=True)  # scikit-learn's wine data, 13 columns
    f, p = anova_f(X, y)
    f_sk, p_sk = f_classif(X, y)  # scikit-learn reference
    np.testing.assert_allclose(f, f_sk, rtol=1e-10)
    np.testing.assert_allclose(p, p_sk, rtol=1e-8, atol=1e-300)
    for j in (0, 6, 12):  # one column of the first, a middle and the last block
        ref = stats.f_oneway(*[X[y == k, j] for k in range(3)])  # scipy reference
        assert f[j] == pytest.approx(ref.statistic, rel=1e-10)
    t = (y == 0).astype(float)
    r, _ = pearson(X, t)
    for j in (1, 7, 11):
        assert r[j] == pytest.approx(abs(stats.pearsonr(X[:, j], t).statistic), rel=1e-10)


def test_partners_in_blocks_match_the_full_correlation_matrix():
    X, _ = load_wine(return_X_y=True)  # scikit-learn's wine data
    C = np.abs(np.corrcoef(X, rowvar=False))  # numpy reference
    np.fill_diagonal(C, -1)
    idx, r = redundancy_partners(X, block=4)
    np.testing.assert_array_equal(idx, C.argmax(axis=0))
    np.testing.assert_allclose(r, C.max(axis=0), rtol=1e-10)
    np.testing.assert_allclose(abs_correlation_matrix(X)[idx, np.arange(13)], r, rtol=1e-12)
