"""featuresift: decide which measurements are worth paying for.

Budget-aware, panel-aware feature-subset search around a cross-validation evaluator.
"""

from featuresift.costs import CostLine, CostModel
from featuresift.errors import InputError
from featuresift.evaluator import BaseEvaluator, CriterionEvaluator, CrossValidationEvaluator
from featuresift.objectives import BaseObjective, make_objective
from featuresift.problem import SelectionProblem
from featuresift.records import Evaluation
from featuresift.result import SearchResult
from featuresift.search import run_search
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
    "SelectionProblem",
    "Evaluation",
    "SearchResult",
    "run_search",
    "STRATEGIES",
    "SearchSpace",
    "SearchStrategy",
    "make_strategy",
    "register_strategy",
    "__version__",
]
