"""Pre-screen, Benjamini-Hochberg, the screened estimator (no leakage) and the feature report."""

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from sklearn.base import clone
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold, cross_val_score

from featuresift import CostModel, SelectionProblem
from featuresift.errors import InputError
from featuresift.filters import (
    ScreenedEstimator,
    anova_f,
    benjamini_hochberg,
    feature_report,
    prescreen,
    screened_search,
    write_feature_report,
)


def test_benjamini_hochberg_matches_scipy():
    rng = np.random.default_rng(0)
    p = np.concatenate([rng.uniform(size=40), rng.uniform(0, 0.01, size=10)])
    q = benjamini_hochberg(p)
    np.testing.assert_allclose(q, stats.false_discovery_control(p, method="bh"), rtol=1e-12)
    with_nan = benjamini_hochberg([0.01, np.nan, 0.02])
    assert np.isnan(with_nan[1])
    np.testing.assert_allclose(with_nan[[0, 2]], [0.02, 0.02])


def _wide(n=120, p=40, informative=(0, 1, 2), seed=0):
    rng = np.random.default_rng(seed)
    y = rng.integers(0, 2, size=n)
    X = rng.normal(size=(n, p))
    for j in informative:
        X[:, j] += 1.2 * y
    return X, y


def test_top_per_cost_prefers_cheap_relevance():
    X, y = _wide()
    names = [f"m{j}" for j in range(X.shape[1])]
    costs = {n: 1.0 for n in names}
    costs["m0"] = 100.0  # informative but very expensive
    cm = CostModel(names, costs)
    res = prescreen(X, y, cm, keep=2, rule="top_per_cost")
    assert set(res.kept.tolist()) == {1, 2}
    assert res.kept_names == [names[j] for j in res.kept]
    top = prescreen(X, y, cm, keep=3, rule="top")
    assert set(top.kept.tolist()) == {0, 1, 2}
    t = res.table
    f, p = anova_f(X, y)
    np.testing.assert_allclose(t["relevance"], f)
    np.testing.assert_allclose(t["relevance_per_cost"], f / t["cost"])
    assert t.loc[0, "reason"].startswith("dropped: rank")
    assert t.loc[1, "reason"].startswith("kept: rank")
    assert sorted(res.never_include()) == sorted(n for n in names if n not in res.kept_names)


def test_fdr_rule_keeps_those_passing_bh():
    X, y = _wide(seed=1)
    res = prescreen(X, y, rule="fdr", alpha=0.05)
    q = stats.false_discovery_control(anova_f(X, y)[1], method="bh")
    assert set(res.kept.tolist()) == set(np.where(q <= 0.05)[0].tolist())
    assert {0, 1, 2} <= set(res.kept.tolist())
    assert all(r.startswith("kept: BH q") for r in res.table.loc[res.table.kept, "reason"])
    capped = prescreen(X, y, rule="fdr", alpha=0.05, keep=1)
    assert capped.kept.size == 1
    # No rule and no keep: the FDR rule (prescreen(X, y) used to fail asking for keep);
    # with keep and no rule, relevance per cost as before.
    bare = prescreen(X, y)
    assert bare.rule == "fdr" and bare.kept.tolist() == res.kept.tolist()
    assert prescreen(X, y, keep=2).rule == "top_per_cost"
    with pytest.raises(InputError, match="gives no p-values"):
        prescreen(X, y, rule="fdr", relevance="permutation",
                  relevance_options={"cv": 2, "n_repeats": 1})


def test_prescreen_input_errors():
    X, y = _wide()
    with pytest.raises(InputError, match="needs keep"):
        prescreen(X, y, rule="top")
    with pytest.raises(InputError, match="screen rule must be one of"):
        prescreen(X, y, rule="best", keep=3)


def test_screened_estimator_keeps_the_screen_inside_cv():
    # Pure noise: screening on all rows then cross-validating looks far better than
    # chance (selection bias, Ambroise & McLachlan 2002); screening inside fit does not.
    rng = np.random.default_rng(2)
    n, p = 40, 1000
    X = rng.normal(size=(n, p))
    y = np.repeat([0, 1], n // 2)
    cv = StratifiedKFold(5, shuffle=True, random_state=0)
    leaky_cols = prescreen(X, y, keep=10, rule="top").kept
    leaky = cross_val_score(LogisticRegression(), X[:, leaky_cols], y, cv=cv).mean()
    model = ScreenedEstimator(LogisticRegression(), keep=10, rule="top")
    honest = cross_val_score(model, X, y, cv=cv).mean()
    assert leaky > 0.8
    assert honest < 0.7
    assert leaky - honest > 0.2


def test_screened_estimator_is_a_proper_sklearn_estimator():
    X, y = _wide(seed=3)
    model = ScreenedEstimator(LogisticRegression(), keep=3, rule="top")
    twin = clone(model)
    assert twin.get_params()["keep"] == 3
    fitted = model.fit(X, y)
    assert sorted(fitted.kept_columns_.tolist()) == [0, 1, 2]
    assert fitted.predict_proba(X).shape == (X.shape[0], 2)
    assert fitted.classes_.tolist() == [0, 1]
    with pytest.raises(ValueError, match="X has 3 features"):
        fitted.predict(X[:, :3])


def test_screened_search_restricts_the_wrapper():
    X, y = _wide(n=150, p=20, seed=4)
    prob = SelectionProblem(X, y, LogisticRegression(), cv=3)
    screen, res = screened_search(prob, "forward", keep=4, rule="top", n_features=2)
    assert set(res.support) <= set(screen.kept.tolist())
    assert set(res.support) <= {0, 1, 2}


# ------------------------------------------------------------------- report
def test_feature_report_columns_values_and_csv(tmp_path):
    X, y = _wide(n=100, p=6, seed=5)
    X[:, 5] = X[:, 0] * 2 + 0.01 * np.random.default_rng(0).normal(size=100)
    frame = pd.DataFrame(X, columns=list("abcdef"))
    cm = CostModel(list("abcdef"), {"a": 2.0, "b": 1.0, "c": 1.0, "d": 0.0},
                   panels={"lab": (6.0, ["e", "f"])}, unit="EUR")
    rep = feature_report(frame, y, cm, sort=False)
    assert list(rep.columns) == ["feature", "panel", "relevance", "p_value", "q_value", "cost",
                                 "cost_unit", "relevance_per_cost", "rank", "partner",
                                 "partner_abs_corr"]
    f, p = anova_f(X, y)
    np.testing.assert_allclose(rep["relevance"], f)
    np.testing.assert_allclose(rep["p_value"], p)
    # Reference: scipy.stats.false_discovery_control(method="bh") (Benjamini-Hochberg).
    np.testing.assert_allclose(rep["q_value"], stats.false_discovery_control(p, method="bh"),
                               rtol=1e-12)
    assert rep["cost"].tolist() == [2.0, 1.0, 1.0, 0.0, 6.0, 6.0]
    assert rep.loc[3, "relevance_per_cost"] == np.inf  # free feature
    assert rep.loc[0, "partner"] == "f" and rep.loc[5, "partner"] == "a"
    corr = abs(np.corrcoef(X[:, 0], X[:, 5])[0, 1])  # numpy reference
    assert rep.loc[0, "partner_abs_corr"] == pytest.approx(corr, rel=1e-10)
    assert rep.loc[4, "panel"] == "lab" and rep["cost_unit"].iloc[0] == "EUR"
    shared = feature_report(frame, y, cm, cost_basis="shared", sort=False)
    assert shared["cost"].tolist()[4:] == [3.0, 3.0]
    out = write_feature_report(feature_report(frame, y, cm), tmp_path / "sub" / "features.csv")
    back = pd.read_csv(out)
    assert back["rank"].tolist() == list(range(1, 7))
    assert back["relevance"].iloc[0] == pytest.approx(f.max(), rel=1e-15)


def test_feature_report_regression_scorer_and_errors(tmp_path):
    rng = np.random.default_rng(6)
    X = rng.normal(size=(60, 3))
    t = 2 * X[:, 1] + rng.normal(size=60)
    rep = feature_report(X, t, relevance="spearman")
    assert rep["feature"].iloc[0] == "x1" and rep.attrs["task"] == "regression"
    with pytest.raises(InputError, match="does not support regression"):
        feature_report(X, t)  # anova_f needs classes
    with pytest.raises(InputError, match="not a feature report"):
        write_feature_report(pd.DataFrame({"a": [1]}), tmp_path / "x.csv")


@pytest.mark.filterwarnings("ignore::sklearn.exceptions.SkipTestWarning")
@pytest.mark.filterwarnings("ignore:divide by zero:RuntimeWarning")  # GaussianNB, zero prior
def test_screened_estimator_passes_sklearn_estimator_checks():
    from sklearn.utils.estimator_checks import check_estimator

    # Only the kept columns are read at prediction time, so a NaN in a dropped column
    # is (by design) not an error: that one check is expected to fail.
    expected = {"check_estimators_nan_inf": "dropped columns are never read in predict"}
    from sklearn.naive_bayes import GaussianNB

    check_estimator(ScreenedEstimator(GaussianNB(), keep=2, rule="top"),
                    expected_failed_checks=expected)
