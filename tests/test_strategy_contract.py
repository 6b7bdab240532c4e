"""Every registered strategy passes the shipped contract; a custom one runs from YAML."""

from __future__ import annotations

import textwrap

import pandas as pd
import pytest
import yaml
from sklearn.datasets import load_iris

import featuresift.strategies.base as base_module
from featuresift.config import run_from_config
from featuresift.strategies import STRATEGIES, SearchStrategy
from featuresift.testing import STRATEGY_CHECKS, check_strategy

BUILT_IN = ["forward", "backward", "floating-forward", "floating-backward", "annealing",
            "genetic", "exhaustive", "filter-order"]


# filter-order with its default options (singles ranked by their own score) is in
# BUILT_IN; here with an explicit order too.
SPECS = {
    "filter-order-given": {"name": "filter-order",
                           "options": {"order": ["f3", "f1", "f0", "f5", "f2", "f7", "f4",
                                                 "f6"]}},
}


@pytest.mark.parametrize("check", STRATEGY_CHECKS, ids=lambda c: c.__name__)
@pytest.mark.parametrize("name", sorted(set(BUILT_IN) | set(STRATEGIES) | set(SPECS)))
def test_registered_strategy_passes_contract(name, check):
    check(SPECS.get(name, name))


def test_contract_catches_a_strategy_that_breaks_the_budget():
    class Greedy(SearchStrategy):
        name = "ignores-budget"

        def run(self, space):
            everything = space.candidates
            space.evaluate([everything])
            space.record("add", everything)
            space.choose(everything)

    with pytest.raises(AssertionError, match="'ignores-budget', budget 1.0"):
        check_strategy(Greedy())


def _docs_example() -> str:
    doc = base_module.__doc__
    start = doc.index("improving::") + len("improving::")
    return textwrap.dedent(doc[start:doc.index("In YAML the same")])


@pytest.fixture
def custom_strategy():
    yield
    STRATEGIES.pop("cheapest-first", None)


def test_documented_custom_strategy_runs_from_yaml(tmp_path, capsys, custom_strategy):
    # The module docstring's example, run as written: it registers "cheapest-first".
    exec(compile(_docs_example(), "strategies/base.py docs", "exec"), {})
    assert capsys.readouterr().out.strip() == "['a', 'b']"
    assert "cheapest-first" in STRATEGIES
    check_strategy("cheapest-first")

    iris = load_iris(as_frame=True)
    frame = iris.frame.rename(columns=lambda c: c.replace(" (cm)", "").replace(" ", "_"))
    frame.to_csv(tmp_path / "flowers.csv", index=False)
    prices = {"sepal_length": 1.0, "sepal_width": 0.5, "petal_length": 4.0, "petal_width": 3.0}
    config = {
        "data": {"path": "flowers.csv", "target": "target"},
        "costs": {"unit": "EUR", "features": prices},
        "budget": 5.0,
        "model": {"estimator": "sklearn.naive_bayes.GaussianNB"},
        "cv": {"folds": 3},
        "strategy": {"name": "cheapest-first", "options": {"min_gain": 0.0}},
    }
    path = tmp_path / "run.yaml"
    path.write_text(yaml.safe_dump(config))
    result = run_from_config(path)
    assert result.strategy == {"name": "cheapest-first", "options": {"min_gain": 0.0}}
    assert result.cost <= 5.0
    added = [r.feature for r in result.path]
    assert added and added == sorted(added, key=prices.get)  # cheapest first
    assert all(r.action == "add" for r in result.path)
    assert isinstance(pd.DataFrame(result.path_frame()), pd.DataFrame)
