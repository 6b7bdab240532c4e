"""Groups everywhere: SelectionProblem, MeasurementSelector (metadata routing) and the CLI."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import sklearn
import yaml
from sklearn.datasets import make_classification
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LinearRegression, LogisticRegression
from sklearn.model_selection import (
    GridSearchCV,
    GroupKFold,
    KFold,
    StratifiedGroupKFold,
    StratifiedKFold,
    cross_validate,
)
from sklearn.naive_bayes import GaussianNB
from sklearn.pipeline import Pipeline, make_pipeline
from sklearn.preprocessing import StandardScaler

from featuresift import SelectionProblem, nested_evaluation, run_search
from featuresift.cli import main
from featuresift.errors import InputError
from featuresift.selector import MeasurementSelector

pytestmark = pytest.mark.usefixtures("single_blas_thread")


@pytest.fixture(scope="module")
def grouped():
    X, y = make_classification(n_samples=180, n_features=6, n_informative=3, n_redundant=1,
                               random_state=3)
    groups = np.repeat(np.arange(12), 15)  # 12 farms of 15 samples each
    return X, y, groups


def _no_group_straddles(splits, groups):
    return all(not set(groups[tr]) & set(groups[te]) for tr, te in splits)


def test_integer_cv_with_groups_gives_grouped_stratified_folds(grouped):
    X, y, g = grouped
    p = SelectionProblem(X, y, GaussianNB(), cv=4, groups=g)
    assert isinstance(p.cv, StratifiedGroupKFold)
    assert _no_group_straddles(p.splits, g)
    # Reference: scikit-learn's StratifiedGroupKFold with the same arguments.
    ref = StratifiedGroupKFold(4, shuffle=True, random_state=0).split(X, y, g)
    assert all(np.array_equal(a[1], b[1]) for a, b in zip(p.splits, ref))
    # A regressor gets GroupKFold.
    r = SelectionProblem(X, y.astype(float), LinearRegression(), cv=3, groups=g)
    assert isinstance(r.cv, GroupKFold)
    assert _no_group_straddles(r.splits, g)


def test_grouped_splitter_without_groups_and_too_few_groups(grouped):
    X, y, g = grouped
    with pytest.raises(InputError, match="needs group labels"):
        SelectionProblem(X, y, GaussianNB(), cv=GroupKFold(3))
    with pytest.raises(InputError, match="fewer than cv = 5"):
        SelectionProblem(X, y, GaussianNB(), cv=5, groups=np.arange(180) % 3)
    # In a pipeline without metadata routing the selector gets no groups: say how to route.
    pipe = make_pipeline(MeasurementSelector(GaussianNB(), cv=GroupKFold(3)), GaussianNB())
    with pytest.raises(InputError, match=r"set_fit_request\(groups=True\)"):
        pipe.fit(X, y)


def test_selector_takes_groups_in_fit_and_with_group_kfold(grouped):
    X, y, g = grouped
    sel = MeasurementSelector(GaussianNB(), cv=GroupKFold(3), budget=2).fit(X, y, groups=g)
    direct = run_search(SelectionProblem(X, y, GaussianNB(), cv=GroupKFold(3), groups=g),
                        budget=2)
    assert sel.selected_features_ == direct.selected
    assert sel.score_ == direct.score_mean
    # An integer cv with groups in fit gives the same answer as the problem with groups.
    sel4 = MeasurementSelector(GaussianNB(), cv=4, budget=3).fit(X, y, groups=g)
    ref4 = run_search(SelectionProblem(X, y, GaussianNB(), cv=4, groups=g), budget=3)
    assert sel4.result_.fold_scores == ref4.fold_scores


def test_selector_routes_groups_in_cross_validate_and_grid_search(grouped):
    X, y, g = grouped
    with sklearn.config_context(enable_metadata_routing=True):
        # The selector's own CV is GroupKFold: it fails unless groups reach its fit.
        # Noise guard off inside a grid search, as the README advises (5x the fits).
        sel = MeasurementSelector(GaussianNB(), cv=GroupKFold(3), budget=2, guard="off")
        pipe = make_pipeline(sel.set_fit_request(groups=True), GaussianNB())
        out = cross_validate(pipe, X, y, cv=GroupKFold(3), params={"groups": g},
                             return_estimator=True)
        assert len(out["test_score"]) == 3
        assert all(est[0].cost_ <= 2 for est in out["estimator"])
        gs = GridSearchCV(pipe, {"measurementselector__budget": [1, 3]}, cv=GroupKFold(3))
        gs.fit(X, y, groups=g)
        assert gs.best_params_["measurementselector__budget"] in (1, 3)
    # Without a request, routing refuses to pass groups silently past the selector.
    with sklearn.config_context(enable_metadata_routing=True):
        plain = make_pipeline(MeasurementSelector(GaussianNB(), cv=GroupKFold(3)), GaussianNB())
        with pytest.raises(Exception, match="groups"):
            cross_validate(plain, X, y, cv=GroupKFold(3), params={"groups": g})


@pytest.mark.parametrize("with_groups", [True, False], ids=["grouped", "ungrouped"])
def test_python_and_cli_give_identical_answers_for_a_config(tmp_path, grouped, with_groups):
    # Ungrouped too: an integer cv is the YAML cv section's rule (shuffled, seed 0) in
    # Python, not scikit-learn's unshuffled default.
    X, y, g = grouped
    X = X.copy()
    X[::7, 2] = np.nan  # the imputer has work to do
    names = [f"m{i}" for i in range(X.shape[1])]
    frame = pd.DataFrame(X, columns=names)
    frame["farm"] = [f"farm{k:02d}" for k in g]
    frame["grade"] = y
    frame.to_csv(tmp_path / "lots.csv", index=False)
    prices = {"m0": 0.0, "m1": 1.0, "m2": 2.0, "m3": 2.0, "m4": 3.0, "m5": 5.0}
    config = {
        "data": {"path": "lots.csv", "target": "grade",
                 **({} if with_groups else {"exclude": ["farm"]})},
        "costs": {"unit": "EUR", "features": prices},
        "budget": 6.0,
        "model": {"estimator": "sklearn.linear_model.LogisticRegression",
                  "params": {"max_iter": 500}, "preprocessing": ["impute_median", "scale"]},
        "cv": {"folds": 4, **({"group_column": "farm"} if with_groups else {})},
        "scoring": "roc_auc",
        "strategy": {"name": "forward"},
        "output": {"folder": "out"},
        "engine": {"journal": False, "progress": False},
    }
    (tmp_path / "cfg.yaml").write_text(yaml.safe_dump(config), encoding="utf-8")
    assert main(["run", str(tmp_path / "cfg.yaml"), "--quiet"]) == 0
    written = sorted((tmp_path / "out").rglob("result.json"))
    cli = json.loads(written[-1].read_text(encoding="utf-8"))

    from featuresift import CostModel

    model = Pipeline([("impute_median", SimpleImputer(strategy="median")),
                      ("scale", StandardScaler()),
                      ("model", LogisticRegression(max_iter=500))])
    problem = SelectionProblem(frame[names], frame["grade"], model,
                               costs=CostModel(names, prices, unit="EUR"), cv=4,
                               scoring="roc_auc",
                               groups=frame["farm"] if with_groups else None)
    if not with_groups:  # Reference: scikit-learn's StratifiedKFold, shuffled with seed 0.
        ref = StratifiedKFold(4, shuffle=True, random_state=0).split(X, y)
        assert all(np.array_equal(a[1], b[1]) for a, b in zip(problem.splits, ref))
    py = run_search(problem, "forward", budget=6.0)
    assert cli["selected"] == py.selected
    assert cli["score"]["folds"] == py.fold_scores
    assert cli["cost"] == py.cost


def test_groups_with_a_splitter_that_ignores_them_are_not_silently_lost(grouped):
    X, y, g = grouped
    cv = StratifiedKFold(3, shuffle=True, random_state=0)
    with pytest.warns(UserWarning, match="does not use them") as record:
        problem = SelectionProblem(X, y, GaussianNB(), cv=cv, groups=g)
    # Our words only: scikit-learn's own "groups parameter is ignored" is not repeated.
    assert not [w for w in record if "groups parameter is ignored" in str(w.message)]
    # Reference: scikit-learn's StratifiedKFold folds put a farm on both sides of a split.
    assert not _no_group_straddles(problem.splits, g)
    assert "groups IGNORED" in repr(problem) and "grouped" not in repr(problem)
    with pytest.warns(UserWarning, match="outer_cv=KFold does not use them"):
        nested_evaluation(X, y, GaussianNB(), outer_cv=KFold(3), inner_cv=3, groups=g,
                          n_features=1, guard="off")
