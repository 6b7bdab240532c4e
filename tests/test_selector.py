"""MeasurementSelector: scikit-learn API compliance and behaviour."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy.stats import sem, ttest_rel
from sklearn.base import clone
from sklearn.datasets import load_iris, make_classification
from sklearn.ensemble import HistGradientBoostingClassifier
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression
from sklearn.naive_bayes import GaussianNB
from sklearn.pipeline import make_pipeline
from sklearn.utils.estimator_checks import parametrize_with_checks

from featuresift.errors import InputError
from featuresift.problem import SelectionProblem
from featuresift.search import run_search
from featuresift.selector import BuyNothingWarning, MeasurementSelector, build_cost_model

pytestmark = pytest.mark.usefixtures("single_blas_thread")


# Reference: scikit-learn's own estimator API checks. Every check applies and passes, so
# no expected-failure dict is needed. GaussianNB and 2 folds keep the run short.
@parametrize_with_checks([MeasurementSelector(GaussianNB(), cv=2)])
def test_sklearn_estimator_checks(estimator, check):
    check(estimator)


@pytest.fixture(scope="module")
def iris_frame():
    X, y = load_iris(return_X_y=True, as_frame=True)
    return X, y


IRIS_PRICES = {
    "sepal length (cm)": 1.0, "sepal width (cm)": 1.0,
    "petal length (cm)": 4.0, "petal width (cm)": 4.0,
}


def test_dataframe_in_feature_names_out(iris_frame):
    X, y = iris_frame
    sel = MeasurementSelector(GaussianNB(), costs=IRIS_PRICES, budget=5.0, cv=3).fit(X, y)
    assert list(sel.feature_names_in_) == list(X.columns)
    assert list(sel.get_feature_names_out()) == sel.selected_features_
    assert sel.selected_features_ == [X.columns[i] for i in np.flatnonzero(sel.support_)]
    out = sel.set_output(transform="pandas").transform(X)
    assert isinstance(out, pd.DataFrame)
    assert list(out.columns) == sel.selected_features_
    assert sel.cost_ <= 5.0
    assert sel.cost_ == sel.cost_model_.cost(sel.selected_features_)


def test_selector_matches_run_search_on_the_same_problem(iris_frame):
    # The facade must add nothing: the same problem through run_search picks the same.
    X, y = iris_frame
    sel = MeasurementSelector(GaussianNB(), costs=IRIS_PRICES, budget=6.0, cv=3).fit(X, y)
    problem = SelectionProblem(X, y, GaussianNB(), costs=sel.cost_model_, cv=3)
    direct = run_search(problem, budget=6.0)  # the default strategy on both sides
    assert sel.selected_features_ == direct.selected
    assert sel.score_ == direct.score_mean
    assert sel.result_.to_dict()["path"] == direct.to_dict()["path"]


def test_array_input_with_array_costs_and_a_panel():
    X, y = make_classification(
        n_samples=120, n_features=6, n_informative=3, n_redundant=0, random_state=0
    )
    # x2 and x3 come from one panel (price 3); their own entries must be 0 or NaN.
    costs = [1.0, 2.0, 0.0, np.nan, 0.5, 1.5]
    sel = MeasurementSelector(
        GaussianNB(), costs={"features": costs, "unit": "EUR",
                             "panels": {"kit": {"cost": 3.0, "features": ["x2", "x3"]}}},
        budget=4.0, cv=3,
    ).fit(X, y)
    assert sel.n_features_in_ == 6
    assert not hasattr(sel, "feature_names_in_")
    assert sel.cost_ <= 4.0
    assert sel.result_.cost_unit == "EUR"
    assert sel.transform(X).shape == (120, int(sel.support_.sum()))
    assert sel.cost_model_.cost(["x2", "x3"]) == 3.0  # hand-worked: the panel, once


def test_no_costs_means_one_per_feature(iris_frame):
    X, y = iris_frame
    sel = MeasurementSelector(GaussianNB(), budget=2, cv=3).fit(X, y)
    assert sel.cost_ == len(sel.selected_features_) <= 2
    assert sel.result_.cost_unit == "features"


def test_strategy_options_and_must_never_include(iris_frame):
    X, y = iris_frame
    sel = MeasurementSelector(
        GaussianNB(), strategy={"name": "forward", "options": {"n_features": 3}}, cv=3,
        must_include=["sepal width (cm)"], never_include=["petal length (cm)"], pick="best",
    ).fit(X, y)
    assert len(sel.selected_features_) == 3
    assert "sepal width (cm)" in sel.selected_features_
    assert "petal length (cm)" not in sel.selected_features_


def test_backward_strategy_by_name(iris_frame):
    X, y = iris_frame
    sel = MeasurementSelector(GaussianNB(), strategy="backward", costs=IRIS_PRICES,
                              budget=5.0, cv=3).fit(X, y)
    assert sel.result_.strategy["name"] == "backward"
    assert sel.cost_ <= 5.0


def test_in_a_pipeline_and_cloned(iris_frame):
    X, y = iris_frame
    pipe = make_pipeline(
        MeasurementSelector(GaussianNB(), costs=IRIS_PRICES, budget=5.0, cv=3),
        LogisticRegression(max_iter=500),
    )
    pipe.fit(X, y)
    assert pipe.predict(X).shape == (150,)
    sel = pipe[0]
    copy = clone(sel)
    assert copy.get_params()["costs"] is not None
    assert not hasattr(copy, "support_")


def test_missing_values_follow_the_estimator():
    X, y = make_classification(n_samples=80, n_features=4, random_state=1)
    X[::7, 1] = np.nan
    with pytest.raises(ValueError, match="NaN"):
        MeasurementSelector(GaussianNB(), cv=2).fit(X, y)
    imputing = make_pipeline(SimpleImputer(), GaussianNB())
    sel = MeasurementSelector(imputing, cv=2).fit(X, y)
    assert sel.support_.any()


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"budget": 0.5}, r"budget: budget 0.5 features is below the cheapest"),
        ({"costs": [1.0, 2.0]}, r"costs: 2 costs given for 4 columns"),
        ({"costs": {"x0": -1.0, "x1": 1, "x2": 1, "x3": 1}}, r"costs\.features\.x0"),
        ({"costs": {"panels": {"kit": {"cost": 2.0}}}}, r"panels\.kit: a panel is"),
        ({"costs": {"panels": {"kit": (2.0, "x1")}}}, r"panels\.kit\.features"),
        ({"costs": {"features": [1.0, 1.0, 1.0, 1.0], "panels": {"kit": (2.0, ["x3"])}}},
         r"costs\[3\]: 'x3' is paid through its panel"),
        ({"costs": {"features": {}, "colour": "red"}}, r"costs: unknown key\(s\) colour"),
        ({"must_include": ["nope"]}, r"must_include: unknown feature 'nope'"),
        ({"strategy": "no-such-strategy"}, r"unknown strategy 'no-such-strategy'"),
    ],
)
def test_bad_arguments_raise_input_error(kwargs, match):
    X, y = make_classification(n_samples=40, n_features=4, random_state=0)
    with pytest.raises(InputError, match=match):
        MeasurementSelector(GaussianNB(), cv=2, **kwargs).fit(X, y)


def test_cost_model_instance_must_match_the_columns():
    cm = build_cost_model(["a", "b"])
    X, y = make_classification(n_samples=40, n_features=4, random_state=0)
    with pytest.raises(InputError, match="features must be the columns"):
        MeasurementSelector(GaussianNB(), costs=cm, cv=2).fit(X, y)


def test_old_argument_names_still_work_with_a_deprecation_warning(iris_frame):
    X, y = iris_frame
    new = MeasurementSelector(
        GaussianNB(), costs={"features": IRIS_PRICES, "unit": "EUR"}, budget=5.0, cv=3,
        strategy={"name": "forward", "options": {"n_features": 1}}, seed=0,
    ).fit(X, y)
    with pytest.warns(DeprecationWarning, match="'cost_unit' is deprecated"):
        old = MeasurementSelector(
            GaussianNB(), costs=IRIS_PRICES, cost_unit="EUR", budget=5.0, cv=3,
            strategy="forward", strategy_options={"n_features": 1}, random_state=0,
        ).fit(X, y)
    assert old.selected_features_ == new.selected_features_
    assert old.result_.to_dict()["path"] == new.result_.to_dict()["path"]
    assert new.result_.seed == 0 and new.result_.cost_unit == "EUR"


def test_buy_nothing_warns_at_fit_with_the_reason_and_a_way_on():
    rng = np.random.default_rng(0)
    X, y = rng.normal(size=(80, 4)), rng.integers(0, 2, 80)  # pure noise
    sel = MeasurementSelector(LogisticRegression(), cv=3)
    with pytest.warns(BuyNothingWarning) as record:
        sel.fit(X, y)
    guard = sel.result_.guard
    # Reference: scipy's one-sided paired t-test on the guard's outer-fold values.
    p = ttest_rel(guard["outer_objective_answer"], guard["outer_objective_fallback"],
                  alternative="greater").pvalue
    assert guard["p_value"] == pytest.approx(p, rel=1e-12) and p > 0.05
    text = str(record[0].message)
    assert f"p = {p:.3g}" in text and "guard='off'" in text and "0 columns" in text
    with pytest.warns(BuyNothingWarning):  # our words, not scikit-learn's generic ones
        assert sel.transform(X).shape == (80, 0)


def test_buy_nothing_by_the_one_se_pick_says_so_and_pick_best_goes_on():
    rng = np.random.default_rng(1)
    X, y = rng.normal(size=(80, 4)), rng.integers(0, 2, 80)  # pure noise
    sel = MeasurementSelector(LogisticRegression(), cv=3, guard="off")
    with pytest.warns(BuyNothingWarning, match="within one standard error") as record:
        sel.fit(X, y)
    best, nothing = sel.result_.pick["best"], sel.result_.references["nothing"]
    # Reference: scipy's standard error of the prior-only model's fold scores.
    assert nothing["score_sem"] == pytest.approx(sem(nothing["fold_scores"]), rel=1e-12)
    assert best["features"] and nothing["score_mean"] >= best["score_mean"] - best["score_sem"]
    assert "pick='best'" in str(record[0].message)
    advised = clone(sel).set_params(pick="best").fit(X, y)  # the advice works
    assert advised.selected_features_ == best["features"]


def test_transform_keeps_a_categorical_frame_in_default_output():
    rng = np.random.default_rng(2)
    breed = rng.choice(["holstein", "jersey"], 90)
    X = pd.DataFrame({"breed": pd.Categorical(breed), "fat": rng.normal(size=90),
                      "noise": rng.normal(size=90)})
    y = (breed == "jersey").astype(int)
    model = HistGradientBoostingClassifier(categorical_features="from_dtype", max_iter=5)
    sel = MeasurementSelector(model, cv=3, max_features=1, guard="off").fit(X, y)
    out = sel.transform(X)  # scikit-learn's default path cannot cast category to float
    # Reference: pandas' own column selection keeps the user's dtypes.
    pd.testing.assert_frame_equal(out, X[["breed"]])
    with pytest.raises(ValueError, match="feature names"):
        sel.transform(X[["fat", "breed", "noise"]])


@pytest.mark.parametrize("kwargs, key", [({"verbose": "yes"}, "verbose"),
                                         ({"max_features": 0}, "max_features")])
def test_verbose_and_max_features_are_checked(iris_frame, kwargs, key):
    X, y = iris_frame  # before: int('yes') ValueError; max_features=0 silently bought nothing
    with pytest.raises(InputError, match=f"{key} must be an integer"):
        MeasurementSelector(GaussianNB(), cv=3, **kwargs).fit(X, y)


def test_selector_takes_the_search_limits(iris_frame):
    X, y = iris_frame
    sel = MeasurementSelector(GaussianNB(), cv=3, guard="off", strategy="exhaustive",
                              max_evaluations=5).fit(X, y)
    # The same limit as run_search's (the YAML limits.max_evaluations twin).
    direct = run_search(SelectionProblem(X, y, GaussianNB(), cv=3), "exhaustive",
                        guard="off", max_evaluations=5)
    assert sel.result_.n_evaluations == direct.n_evaluations <= 5
    assert sel.selected_features_ == direct.selected
