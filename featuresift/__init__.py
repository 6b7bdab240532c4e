"""featuresift: decide which measurements are worth paying for.

Budget-aware, panel-aware feature-subset search around a cross-validation evaluator.
"""

from featuresift.costs import CostLine, CostModel
from featuresift.engine.cluster import use_cluster
from featuresift.engine.evaluator import BaseEvaluator, CriterionEvaluator, CrossValidationEvaluator
from featuresift.engine.records import Evaluation
from featuresift.errors import InputError
from featuresift.frontier import Frontier, budget_sweep, default_budgets
from featuresift.nested import NestedEvaluation, nested_evaluation
from featuresift.objectives import BaseObjective, make_objective, register_objective
from featuresift.problem import SelectionProblem
from featuresift.result import SearchResult
from featuresift.search import run_search
from featuresift.selector import BuyNothingWarning, MeasurementSelector
from featuresift.stability import kuncheva_index, nogueira_stability
from featuresift.strategies import (
    STRATEGIES,
    SearchSpace,
    SearchStrategy,
    make_strategy,
    register_strategy,
)

__version__ = "0.1.0"

__all__ = [
    "CostLine",
    "CostModel",
    "InputError",
    "BaseEvaluator",
    "CriterionEvaluator",
    "CrossValidationEvaluator",
    "BaseObjective",
    "make_objective",
    "register_objective",
    "Frontier",
    "budget_sweep",
    "default_budgets",
    "NestedEvaluation",
    "nested_evaluation",
    "MeasurementSelector",
    "BuyNothingWarning",
    "kuncheva_index",
    "nogueira_stability",
    "SelectionProblem",
    "Evaluation",
    "SearchResult",
    "run_search",
    "use_cluster",
    "STRATEGIES",
    "SearchSpace",
    "SearchStrategy",
    "make_strategy",
    "register_strategy",
    "__version__",
]
