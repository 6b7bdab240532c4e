"""Any column type: categorical, text and nullable columns reach the model as the user's."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.compose import ColumnTransformer
from sklearn.ensemble import HistGradientBoostingClassifier
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import OneHotEncoder, StandardScaler

from featuresift import SelectionProblem, nested_evaluation, run_search
from featuresift.engine.evaluator import CrossValidationEvaluator
from featuresift.errors import InputError
from featuresift.selector import MeasurementSelector

pytestmark = pytest.mark.usefixtures("single_blas_thread")


@pytest.fixture(scope="module")
def lab():
    rng = np.random.default_rng(1)
    n = 240
    grade = rng.choice(["A", "B", "C"], n)
    ph = rng.normal(size=n)
    count = pd.array(rng.integers(0, 6, n), dtype="Int64")
    count[::7] = pd.NA
    y = ((grade == "A") | (ph > 0.8)).astype(int)
    frame = pd.DataFrame({
        "ph": ph, "grade": pd.Categorical(grade), "site": rng.choice(["north", "south"], n),
        "count": count, "noise": rng.normal(size=n),
    })
    return frame, y


def _scores(problem, subset):
    return list(CrossValidationEvaluator(problem).evaluate([subset])[0].fold_scores)


def test_native_categories_score_as_scikit_learn_on_the_users_frame(lab):
    frame, y = lab
    X = frame[["ph", "grade", "noise"]]
    model = HistGradientBoostingClassifier(categorical_features="from_dtype", max_iter=15,
                                           random_state=0)
    cv = StratifiedKFold(3, shuffle=True, random_state=0)
    problem = SelectionProblem(X, y, model, cv=cv)
    # Reference: scikit-learn's cross_val_score on the user's own columns and dtypes.
    ref = cross_val_score(model, X[["ph", "grade"]], y, cv=cv)
    assert _scores(problem, (0, 1)) == pytest.approx(list(ref), abs=0)
    ref_grade = cross_val_score(model, X[["grade"]], y, cv=cv)
    assert _scores(problem, (1,)) == pytest.approx(list(ref_grade), abs=0)


def test_named_column_transformer_is_narrowed_to_each_subset(lab):
    frame, y = lab
    model = make_pipeline(
        ColumnTransformer([
            ("one_hot", OneHotEncoder(handle_unknown="ignore"), ["grade", "site"]),
            ("numeric", make_pipeline(SimpleImputer(), StandardScaler()),
             ["ph", "count", "noise"]),
        ]),
        LogisticRegression(max_iter=500),
    )
    problem = SelectionProblem(frame, y, model, cv=3)
    # Reference: the same pipeline written for the two columns only.
    small = make_pipeline(
        ColumnTransformer([("one_hot", OneHotEncoder(handle_unknown="ignore"), ["site"]),
                           ("numeric", make_pipeline(SimpleImputer(), StandardScaler()),
                            ["count"])]),
        LogisticRegression(max_iter=500),
    )
    ref = cross_val_score(small, frame[["site", "count"]], y, cv=problem.cv)
    assert _scores(problem, (2, 3)) == pytest.approx(list(ref), abs=1e-12)
    res = run_search(problem, "forward", n_features=2)
    assert set(res.selected) == {"grade", "ph"}  # the two that decide y, by construction


def test_nullable_dtypes_and_pd_na_work_in_run_search(lab):
    frame, y = lab
    model = make_pipeline(SimpleImputer(), LogisticRegression())
    typed = SelectionProblem(frame[["ph", "count"]], y, model, cv=3)
    plain = frame[["ph", "count"]].astype({"count": "float64"})  # pd.NA -> NaN by hand
    assert np.isnan(typed.X[::7, 1]).all()
    a = run_search(typed, "forward")
    b = run_search(SelectionProblem(plain, y, model, cv=3), "forward")
    assert a.selected == b.selected and a.fold_scores == b.fold_scores


def test_selector_keeps_types_and_nested_refits_on_them(lab):
    frame, y = lab
    model = HistGradientBoostingClassifier(categorical_features="from_dtype", max_iter=10)
    sel = MeasurementSelector(model, cv=3, budget=2).set_output(transform="pandas")
    out = sel.fit(frame.drop(columns="site"), y).transform(frame.drop(columns="site"))
    assert "grade" in sel.selected_features_
    assert isinstance(out["grade"].dtype, pd.CategoricalDtype)
    ne = nested_evaluation(frame[["ph", "grade"]], y, model, outer_cv=3, inner_cv=3,
                           n_features=1)
    assert len(ne.outer_scores) == 3 and all(s > 0.5 for s in ne.outer_scores)


def test_yaml_categorical_columns_with_one_hot_match_python(tmp_path, lab):
    import json

    import yaml

    from featuresift.cli import main

    frame, y = lab
    table = frame.drop(columns="count").assign(outcome=y)
    table.to_csv(tmp_path / "lab.csv", index=False)
    config = {
        "data": {"path": "lab.csv", "target": "outcome", "categorical": ["grade", "site"]},
        "model": {"estimator": "sklearn.linear_model.LogisticRegression",
                  "preprocessing": ["one_hot", "scale"]},
        "cv": {"folds": 3},
        "strategy": {"name": "forward", "options": {"n_features": 2}},
        "output": {"folder": "out"},
        "engine": {"journal": False, "progress": False},
    }
    (tmp_path / "lab.yaml").write_text(yaml.safe_dump(config), encoding="utf-8")
    assert main(["run", str(tmp_path / "lab.yaml"), "--quiet"]) == 0
    cli = json.loads(sorted((tmp_path / "out").rglob("result.json"))[-1].read_text("utf-8"))
    assert set(cli["selected"]) == {"grade", "ph"}
    # The same model written in Python (reference: scikit-learn's encoder on the columns).
    X = table.drop(columns="outcome").astype({"grade": "category", "site": "category"})
    model = make_pipeline(
        ColumnTransformer([("numeric", StandardScaler(), ["ph"]),
                           ("one_hot", OneHotEncoder(handle_unknown="ignore",
                                                     sparse_output=False), ["grade"])]),
        LogisticRegression())
    cv = StratifiedKFold(3, shuffle=True, random_state=0)
    ref = cross_val_score(model, X[["ph", "grade"]], y, cv=cv)
    assert cli["score"]["folds"] == pytest.approx(list(ref), abs=1e-12)
    # Without one_hot (and a model without native categories) validate says what to do.
    config["model"]["preprocessing"] = ["scale"]
    (tmp_path / "bad.yaml").write_text(yaml.safe_dump(config), encoding="utf-8")
    assert main(["validate", str(tmp_path / "bad.yaml")]) == 2


def test_relevance_scores_categorical_columns_by_contingency_table(lab):
    from scipy.stats import chi2_contingency
    from scipy.stats import f as f_dist
    from sklearn.metrics import mutual_info_score

    from featuresift.filters import relevance_scores

    frame, y = lab
    X = frame[["ph", "grade", "site"]].copy()
    X.loc[X.index[::11], "grade"] = np.nan  # a missing category is left out of the table
    rel = relevance_scores(X, y, "anova_f")
    chi2 = relevance_scores(X, y, "chi2")
    mi = relevance_scores(X, y, "mutual_info")
    for j, col in ((1, "grade"), (2, "site")):
        keep = X[col].notna().to_numpy()
        table = pd.crosstab(X[col][keep].astype(str), y[keep]).to_numpy()
        # Reference: scipy's test of independence, without the continuity correction.
        stat, p, _, _ = chi2_contingency(table, correction=False)
        assert chi2.scores[j] == pytest.approx(stat, rel=1e-12)
        assert rel.pvalues[j] == pytest.approx(p, rel=1e-9)
        # On ANOVA's scale: the F(k - 1, n - k) with that p-value (scipy's F law), so it
        # ranks beside the numeric columns' F (it was the chi-square statistic).
        k, n = 2, int(keep.sum())
        assert f_dist.sf(rel.scores[j], k - 1, n - k) == pytest.approx(p, rel=1e-6)
        # On mutual information's scale: scikit-learn's plug-in MI of the table, in nats.
        assert mi.scores[j] == pytest.approx(
            mutual_info_score(X[col][keep].astype(str), y[keep]), rel=1e-10)
    # The numeric column keeps the scorer's own statistic (ANOVA F, scikit-learn's f_classif).
    from sklearn.feature_selection import f_classif

    assert rel.scores[0] == pytest.approx(f_classif(X[["ph"]], y)[0][0], rel=1e-10)
    assert rel.pvalues[1] < 1e-6 < rel.pvalues[2]  # grade decides y, site does not


def test_missing_target_or_group_is_named_with_its_rows(lab):
    frame, y = lab
    model = make_pipeline(SimpleImputer(), LogisticRegression())
    target = pd.Series(y, dtype="Int64")
    target[[4, 9]] = pd.NA
    # Reference: the rows pandas.isna finds (before: scikit-learn's "Input contains NaN").
    rows = np.flatnonzero(pd.isna(target)).tolist()
    with pytest.raises(InputError, match=rf"y has 2 missing values \(rows {rows[0]}, "
                                         rf"{rows[1]}\)"):
        SelectionProblem(frame[["ph"]], target, model, cv=3)
    farms = pd.Series(np.arange(len(y)) % 6, dtype="Int64").astype("string")
    farms[7] = pd.NA  # before: "TypeError: boolean value of NA is ambiguous"
    with pytest.raises(InputError, match=r"groups has 1 missing value \(row 7\)"):
        MeasurementSelector(model, cv=3).fit(frame[["ph"]], y, groups=farms)


def test_screen_and_report_score_categories_by_table_whatever_their_order(lab):
    from featuresift.filters import feature_report, prescreen, relevance_scores

    frame, y = lab
    X = frame[["ph", "grade", "noise"]]
    other = X.assign(grade=X["grade"].cat.reorder_categories(["C", "A", "B"]))
    rel = relevance_scores(X, y, "anova_f").scores[1]
    for data in (X, other):  # before: ANOVA F of the codes, which move with the order
        assert prescreen(data, y, keep=2).table["relevance"][1] == pytest.approx(rel)
        report = feature_report(data, y).set_index("feature")
        assert report.loc["grade", "relevance"] == pytest.approx(rel)


def test_a_model_that_refuses_categories_says_how_to_encode_them(lab):
    from featuresift.errors import FitFailedError

    frame, y = lab
    X = frame[["ph", "grade"]]
    with pytest.raises(FitFailedError) as info:
        run_search(SelectionProblem(X, y, LogisticRegression(), cv=3), "forward",
                   guard="off")
    text = str(info.value)
    # scikit-learn's own words stay; the hint names the column and the encoder to use.
    assert "could not convert string to float" in text
    assert "grade hold categories" in text and "OneHotEncoder" in text
    advised = make_pipeline(ColumnTransformer(
        [("onehot", OneHotEncoder(handle_unknown="ignore"), ["grade"])],
        remainder="passthrough"), LogisticRegression())
    problem = SelectionProblem(X, y, advised, cv=3)
    # Reference: scikit-learn's cross_val_score of the advised pipeline on the same folds.
    assert _scores(problem, (0, 1)) == pytest.approx(
        list(cross_val_score(advised, X, y, cv=problem.cv)), abs=1e-12)


def test_budgeted_greedy_scores_categories_by_table_whatever_their_order(lab):
    from featuresift.filters import budgeted_greedy, relevance_scores

    frame, y = lab
    X = frame[["ph", "grade", "noise"]]
    other = X.assign(grade=X["grade"].cat.reorder_categories(["C", "A", "B"]))
    # Reference: relevance_scores on the frame (the table test on ANOVA's scale, checked
    # against scipy above); before, the greedy took ANOVA F of the category codes.
    rel = relevance_scores(X, y, "anova_f").scores[1]
    for data in (X, other):
        sel = budgeted_greedy(data, y, relevance="anova_f", n_features=3)
        step = next(s for s in sel.steps if s.feature == "grade")
        assert step.relevance == pytest.approx(rel)


def test_duplicate_column_names_are_named():
    rng = np.random.default_rng(0)
    X = pd.DataFrame(rng.normal(size=(30, 3)), columns=["ph", "ph", "fat"])
    # Before: "AttributeError: 'DataFrame' object has no attribute 'dtype'".
    with pytest.raises(InputError, match="duplicate column names: ph"):
        SelectionProblem(X, np.arange(30) % 2, LogisticRegression(), cv=3)


def test_empty_x_or_a_column_without_values_is_named():
    y = np.arange(30) % 2
    with pytest.raises(InputError, match="X has no columns"):  # was a memoryview TypeError
        SelectionProblem(pd.DataFrame(index=range(30)), y, LogisticRegression(), cv=3)
    X = pd.DataFrame({"ph": np.arange(30.0), "fat": pd.array([pd.NA] * 30, dtype="Float64")})
    # Before: every subset with 'fat' failed in the imputer-less model, far from the cause.
    with pytest.raises(InputError, match=r"column\(s\) fat have no value"):
        SelectionProblem(X, y, LogisticRegression(), cv=3)
