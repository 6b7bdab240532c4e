"""The `engine` section and CLI flags: journal by default, resume, racing, clean failure."""

from __future__ import annotations

import copy
import json

import pytest
import yaml

from featuresift.cli import main
from featuresift.demo import GRAIN_CONFIG, GRAIN_TARGET, make_grain_lots
from featuresift.outputs import latest_run

pytestmark = pytest.mark.usefixtures("single_blas_thread")

CANDIDATES = ["moisture_pct", "test_weight_kg_hl", "protein_nir_pct", "falling_number_s",
              "fusarium_damaged_kernels", "colour_index"]


def _write(tmp_path, **changes):
    frame = make_grain_lots(n_lots=150, seed=5)
    frame[[GRAIN_TARGET, *CANDIDATES]].to_csv(tmp_path / "lots.csv", index=False)
    cfg = copy.deepcopy(GRAIN_CONFIG)
    cfg["data"] = {"path": "lots.csv", "target": GRAIN_TARGET}
    cfg["costs"] = {"unit": "EUR", "features": {c: 1.0 for c in CANDIDATES}}
    cfg["budget"] = None
    cfg["cv"] = {"folds": 3, "seed": 0}
    cfg["strategy"] = {"name": "forward", "options": {"n_features": 3}}
    cfg["output"] = {"folder": "out"}
    cfg["guard"] = "off"  # these tests are about the engine; the guard has its own
    cfg.update(changes)
    path = tmp_path / "run.yaml"
    path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    return path


def test_second_run_resumes_from_the_journal_without_fitting(tmp_path):
    path = _write(tmp_path)
    assert main(["run", str(path), "-q"]) == 0
    out = tmp_path / "out"
    assert (out / "journal.sqlite").is_file()
    first = json.loads((latest_run(out) / "result.json").read_text())
    assert first["n_fits"] > 0
    assert main(["run", str(path), "-q"]) == 0
    second = json.loads((latest_run(out) / "result.json").read_text())
    assert second["n_fits"] == 0  # every evaluation came from the journal
    assert second["selected"] == first["selected"]
    assert second["score"] == first["score"]
    assert second["extras"]["engine"]["n_journal_hits"] == first["n_evaluations"]


def test_no_journal_flag_and_changed_config_refit(tmp_path):
    path = _write(tmp_path)
    assert main(["run", str(path), "-q", "--no-journal"]) == 0
    assert not (tmp_path / "out" / "journal.sqlite").exists()
    assert main(["run", str(path), "-q"]) == 0
    # A different seed of the CV folds changes the fingerprint: nothing stale is reused.
    path = _write(tmp_path, cv={"folds": 3, "seed": 1})
    assert main(["run", str(path), "-q"]) == 0
    res = json.loads((latest_run(tmp_path / "out") / "result.json").read_text())
    assert res["n_fits"] == res["n_evaluations"] * 3


def test_racing_flag_records_the_rule(tmp_path):
    path = _write(tmp_path)
    assert main(["run", str(path), "-q", "--racing", "f-race", "--no-journal"]) == 0
    res = json.loads((latest_run(tmp_path / "out") / "result.json").read_text())
    assert res["extras"]["engine"]["racing"]["name"] == "f-race"
    assert res["n_fits"] <= res["n_evaluations"] * 3


@pytest.mark.parametrize(
    ("engine", "key", "word"),
    [
        ({"jounral": True}, "engine.jounral", "journal"),
        ({"journal": "../escape.sqlite"}, "engine.journal", "plain file name"),
        ({"racing": "fast"}, "engine.racing", "f-race"),
        ({"on_fit_error": "ignore"}, "engine.on_fit_error", "record"),
        ({"error_score": "zero"}, "engine.error_score", "number or nan"),
        ({"error_score": float("inf")}, "engine.error_score", "finite"),
        ({"chunk_size": 0}, "engine.chunk_size", ">= 1"),
        ({"share_preprocessing": "yes"}, "engine.share_preprocessing", "true or false"),
        ({"fast_path": "off"}, "engine.fast_path", "true or false"),
        ({"pool": "sometimes"}, "engine.pool", "auto, always, never"),
        ({"warm_start": 1}, "engine.warm_start", "true or false"),
    ],
)
def test_bad_engine_settings_exit_2(tmp_path, capsys, engine, key, word):
    path = _write(tmp_path, engine=engine)
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert key in err and word in err and "line" in err and "Traceback" not in err
    assert not (tmp_path / "out").exists()


def test_shared_preprocessing_is_on_by_default_and_changes_no_choice(tmp_path):
    # The demo pipeline starts with median imputation and scaling: both are column-wise.
    path = _write(tmp_path, engine={"journal": False})
    assert main(["run", str(path), "-q"]) == 0
    shared = json.loads((latest_run(tmp_path / "out") / "result.json").read_text())
    assert shared["extras"]["engine"]["shared_preprocessing_steps"] == 2
    path = _write(tmp_path, engine={"journal": False, "share_preprocessing": False})
    assert main(["run", str(path), "-q"]) == 0
    plain = json.loads((latest_run(tmp_path / "out") / "result.json").read_text())
    assert plain["extras"]["engine"]["shared_preprocessing_steps"] == 0
    assert plain["selected"] == shared["selected"]
    assert plain["score"]["folds"] == pytest.approx(shared["score"]["folds"], abs=1e-12)


def test_fit_failure_leaves_no_output_folder(tmp_path, capsys):
    path = _write(tmp_path, model={"estimator": "sklearn.linear_model.LogisticRegression",
                                   "params": {"l1_ratio": 1.0},  # lbfgs: l2 only
                                   "preprocessing": ["impute_median", "scale"]})
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert "could not be fitted" in err and "Traceback" not in err
    assert not (tmp_path / "out").exists()  # not even the journal


def test_cli_every_fit_failing_under_record_exits_2(tmp_path, capsys):
    # Scaled columns are negative in places: MultinomialNB refuses every fit.
    path = _write(tmp_path, engine={"on_fit_error": "record"},
                   model={"estimator": "sklearn.naive_bayes.MultinomialNB",
                          "preprocessing": ["impute_median", "scale"]})
    assert main(["run", str(path)]) == 2
    err = capsys.readouterr().err
    assert "no subset could be scored" in err and "Negative values" in err
    assert "internal error" not in err and "Traceback" not in err
    assert not (tmp_path / "out").exists()


def test_error_score_from_yaml_scores_failed_folds(tmp_path):
    path = _write(tmp_path, engine={"on_fit_error": "record", "error_score": 0.25,
                                    "journal": False},
                  model={"estimator": "sklearn.naive_bayes.MultinomialNB",
                         "preprocessing": ["impute_median", "scale"]})
    assert main(["run", str(path), "-q"]) == 0
    res = json.loads((latest_run(tmp_path / "out") / "result.json").read_text())
    # Every fold of every measurement set failed and counts as 0.25 (scikit-learn's
    # error_score convention): below the prior-only model's ROC AUC of 0.5, so the answer
    # is to buy nothing, and the result says how many fits failed.
    assert res["selected"] == [] and res["score"]["folds"] == [0.5] * 3
    assert res["failures"]["error_score"] == 0.25
    assert res["failures"]["n_failed_fits"] > 0 and res["failures"]["n_failed_fits"] % 3 == 0



@pytest.mark.parametrize("model,engine", [
    # LDA behind the demo's imputer and scaler: eligible for the fast path.
    ({"estimator": "sklearn.discriminant_analysis.LinearDiscriminantAnalysis",
      "preprocessing": ["impute_median", "scale"]}, {"fast_path": False, "pool": "always"}),
    # The demo's logistic regression: warm starts apply to it.
    (None, {"warm_start": True, "pool": "never"}),
])
def test_fast_path_pool_warm_start_keys_act_as_the_python_arguments(tmp_path, model, engine):
    from featuresift import run_search
    from featuresift.config import build_run, load_config

    changes = {"engine": {"journal": False, "progress": False, **engine}, "guard": "off",
               "n_jobs": 1}
    if model is not None:
        changes["model"] = model
    problem, kwargs = build_run(load_config(_write(tmp_path, **changes)))
    assert {k: kwargs[k] for k in engine} == engine
    from_yaml = run_search(problem, **kwargs)
    plain = {k: v for k, v in kwargs.items() if k not in engine}
    from_python = run_search(problem, **plain, **engine)
    stats, ref = from_yaml.extras["engine"], from_python.extras["engine"]
    assert from_yaml.selected == from_python.selected
    assert from_yaml.fold_scores == from_python.fold_scores
    assert stats["pool"]["mode"] == engine["pool"] == ref["pool"]["mode"]
    if "fast_path" in engine:
        assert stats["fast_path"] is None and ref["fast_path"] is None
        assert stats["pool"]["fits_in_process"] == 0   # "always": every fit through joblib
        default = run_search(problem, **plain).extras["engine"]   # keys left out
        assert default["fast_path"]["n_scored"] > 0 and default["pool"]["mode"] == "auto"
    else:
        assert stats["warm_start"]["n_warm"] == ref["warm_start"]["n_warm"] > 0
        assert stats["pool"]["fits_in_pool"] == 0
