"""One vocabulary: every YAML key has its Python twin; old names are deprecated aliases."""

from __future__ import annotations

import importlib
import importlib.util
import inspect
import re
import warnings
from pathlib import Path

import numpy as np
import pytest
import yaml
from sklearn.datasets import load_iris
from sklearn.naive_bayes import GaussianNB

from featuresift import CostModel, SelectionProblem, run_search
from featuresift.config import load_config
from featuresift.config.context import _Context
from featuresift.config.twins import PYTHON_TWINS
from featuresift.demo import write_demo
from featuresift.engine.evaluator import CriterionEvaluator
from featuresift.errors import InputError
from featuresift.strategies import STRATEGIES, make_strategy

README = Path(__file__).resolve().parents[1] / "README.md"


def _resolve(path: str):
    """The object at a dotted path such as ``featuresift.SearchResult.write``."""
    parts = path.split(".")
    for cut in range(len(parts), 0, -1):
        try:
            obj = importlib.import_module(".".join(parts[:cut]))
        except ImportError:
            continue
        for attr in parts[cut:]:
            obj = getattr(obj, attr)
        return obj
    raise ImportError(path)


@pytest.fixture(scope="module")
def schema_keys(tmp_path_factory):
    """Every key the YAML parser knows, collected while it reads a config with every
    section (the parser lists the keys each mapping may hold)."""
    folder = tmp_path_factory.mktemp("schema")
    _, cfg_path = write_demo(folder, n_lots=60)
    cfg = yaml.safe_load(cfg_path.read_text(encoding="utf-8"))
    cfg.update({
        "engine": {"journal": False}, "sweep": {"n_budgets": 3, "budget_levels": "costs"},
        "nested": {"folds": 3}, "screen": {"relevance": "anova_f"},
        "limits": {"max_features": 3}, "output": {"folder": "out"},
    })
    cfg_path.write_text(yaml.safe_dump(cfg), encoding="utf-8")
    seen: set[str] = set()
    original = _Context.mapping

    def recording(self, value, key, known=None):
        if known is not None:
            key = re.sub(r"^costs\.panels\.[^.]+", "costs.panels.*", key)  # any panel name
            for k in known:
                seen.add(f"{key}.{k}" if key else str(k))
        return original(self, value, key, known)

    _Context.mapping = recording
    try:
        load_config(cfg_path)
    finally:
        _Context.mapping = original
    return seen


def test_the_walk_finds_the_schema(schema_keys):
    # A few keys from every level, so that a broken walk cannot pass vacuously.
    for key in ("data", "data.target", "costs.panels", "cv.group_column", "limits.max_time_s",
                "seed", "engine.racing", "sweep.n_budgets", "nested.repeats",
                "screen.relevance"):
        assert key in schema_keys, key


def test_every_yaml_key_has_a_python_twin(schema_keys):
    missing = sorted(schema_keys - set(PYTHON_TWINS))
    assert not missing, f"YAML keys without a Python twin in config/twins.py: {missing}"
    for key, (func_path, arg) in PYTHON_TWINS.items():
        func = _resolve(func_path)
        params = inspect.signature(func).parameters
        assert arg in params, f"{key}: {func_path} has no argument '{arg}'"


def test_the_readme_table_lists_every_key(schema_keys):
    text = README.read_text(encoding="utf-8")
    rows = dict(re.findall(r"^\| `([a-z_.*]+)` \| `([^`]+)` \|", text, flags=re.M))
    for key in sorted(schema_keys):
        assert key in rows, f"README's YAML-to-Python table has no row for {key}"
        func_path, arg = PYTHON_TWINS[key]
        assert f"{arg}=" in rows[key], (key, rows[key])


def test_same_names_in_python_and_yaml():
    # The shared vocabulary (seed, costs, max_time_s) is spelt the same in both.
    run = inspect.signature(run_search).parameters
    for name in ("seed", "max_time_s", "costs", "budget", "pick", "n_jobs"):
        assert name in run
    for old in ("random_state", "max_time", "cost_model"):
        assert old not in run


def test_old_names_warn_and_give_the_same_answer():
    X, y = load_iris(return_X_y=True)
    cm = CostModel(["a", "b", "c", "d"], {"a": 1, "b": 1, "c": 2, "d": 2})
    new = run_search(SelectionProblem(X, y, GaussianNB(), costs=cm, cv=3), "annealing",
                     seed=4, max_time_s=60, n_steps=5, n_restarts=0)
    with pytest.warns(DeprecationWarning, match="'cost_model' is deprecated; use 'costs'"):
        problem = SelectionProblem(X, y, GaussianNB(), cost_model=cm, cv=3)
    with pytest.warns(DeprecationWarning, match="'random_state' is deprecated; use 'seed'"):
        old = run_search(problem, "annealing", random_state=4, max_time=60, n_steps=5,
                         n_restarts=0)
    assert old.selected == new.selected and old.seed == new.seed == 4
    assert new.to_dict()["seed"] == 4
    with pytest.raises(InputError, match="give 'seed' only"):
        run_search(problem, "forward", seed=1, random_state=2)


def test_both_panel_forms_everywhere_and_a_clear_message_otherwise():
    names = ["a", "b", "c"]
    tuple_form = CostModel(names, {"a": 1.0}, panels={"kit": (5.0, ["b", "c"])})
    dict_form = CostModel(names, {"a": 1.0}, panels={"kit": {"cost": 5.0, "features": ["b", "c"]}})
    assert tuple_form.to_dict() == dict_form.to_dict()
    X = np.random.default_rng(0).normal(size=(30, 3))
    y = np.arange(30) % 2
    yaml_style = {"features": {"a": 1.0}, "panels": {"kit": {"cost": 5.0, "features": ["b", "c"]}},
                  "unit": "EUR"}
    p = SelectionProblem(X, y, GaussianNB(), costs=yaml_style, cv=3, feature_names=names)
    assert p.cost_model.to_dict() == {**dict_form.to_dict(), "unit": "EUR"}
    with pytest.raises(InputError, match=r"costs\.panels\.kit: a panel is"):
        CostModel(names, {"a": 1.0}, panels={"kit": {"price": 5.0, "features": ["b", "c"]}})
    with pytest.raises(InputError, match=r"costs\.panels\.kit: a panel is"):
        CostModel(names, {"a": 1.0}, panels={"kit": 5.0})


def test_strategy_names_use_hyphens_old_spellings_warn():
    assert all("_" not in name for name in STRATEGIES), sorted(STRATEGIES)
    with pytest.warns(DeprecationWarning, match="'filter_order' is deprecated"):
        assert make_strategy("filter_order").name == "filter-order"
    with pytest.warns(DeprecationWarning, match="'stall_limit' is deprecated; use 'patience'"):
        g = make_strategy({"name": "genetic", "options": {"stall_limit": 3}})
    assert g.patience == 3


def test_filter_order_is_registered_without_the_filters_package_and_runs_by_default():
    import subprocess
    import sys

    code = ("import featuresift.strategies as s; import sys; "
            "print('filter-order' in s.STRATEGIES, 'featuresift.filters' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.split()
    assert out == ["True", "False"]
    # Default options: singles ranked by their own value, then the prefixes of that order.
    crit = {(0,): 0.2, (1,): 0.9, (2,): 0.5, (1, 2): 0.95, (0, 1, 2): 0.94}
    ev = CriterionEvaluator(lambda s: crit.get(s, 0.0), 3, ["a", "b", "c"])
    with warnings.catch_warnings():
        warnings.simplefilter("error", DeprecationWarning)
        res = run_search(ev, "filter-order", costs=CostModel.uniform(["a", "b", "c"]))
    assert res.selected == ["b", "c"]
    assert [r.features for r in res.path] == [("b",), ("b", "c"), ("a", "b", "c")]


def _lab_config(tmp_path, edit_text):
    """The small grain-lab case of test_config.py with an edited YAML text."""
    spec = importlib.util.spec_from_file_location(
        "featuresift_config_cases_vocab", Path(__file__).with_name("test_config.py"))
    cases = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(cases)
    text = edit_text(cases.BASE_YAML)
    return cases.write_case(tmp_path, text), text


@pytest.mark.parametrize("old, new, key, extra", [
    ("name: greedy_swap\n  options: {n_features: 3}", "'greedy_swap' is an old spelling; use "
     "'greedy-swap'", "strategy.name", ""),
    ("name: genetic\n  options: {stall_limit: 3}", "'stall_limit' is an old name; use "
     "'patience'", "strategy.options.stall_limit", ""),
    ("name: forward\n  options: {n_features: 3}", "'one_se' is an old spelling; use 'one-se'",
     "pick", "pick: one_se\n"),
])
def test_old_spellings_in_yaml_are_noted_with_key_and_line(tmp_path, capsys, old, new, key,
                                                           extra):
    from featuresift.cli import main

    path, text = _lab_config(tmp_path, lambda t: t.replace(
        "name: forward\n  options: {n_features: 3}", old) + extra)
    marker = {"strategy.name": "  name:", "strategy.options.stall_limit": "  options:",
              "pick": "pick:"}[key]
    line = [i for i, ln in enumerate(text.splitlines(), 1) if ln.startswith(marker)][0]
    with warnings.catch_warnings():
        warnings.simplefilter("error", DeprecationWarning)  # noted, not warned
        assert main(["validate", str(path)]) == 0
    err = capsys.readouterr().err
    assert err == f"featuresift: note: {key} (line {line}): {new}\n"
