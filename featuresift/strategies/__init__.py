"""Search strategies, pluggable by name (see :mod:`featuresift.strategies.base`).

Registered names: ``forward``, ``backward`` (sequential), ``floating-forward``,
``floating-backward`` (SFFS, SBFS), ``annealing``, ``genetic``, ``exhaustive``,
``filter-order`` (prefixes of an order of measurements) and ``greedy-swap`` (exhaustive
when few subsets are allowed, otherwise budget-aware greedy followed by add / remove /
swap local search).
"""

from featuresift.strategies.annealing import SimulatedAnnealing
from featuresift.strategies.base import (
    STRATEGIES,
    PathStep,
    Scored,
    SearchSpace,
    SearchStrategy,
    StopSearch,
    make_strategy,
    register_strategy,
)
from featuresift.strategies.exhaustive import ExhaustiveSearch
from featuresift.strategies.filter_order import FilterOrderSearch
from featuresift.strategies.floating import FloatingBackwardSearch, FloatingForwardSearch
from featuresift.strategies.genetic import GeneticSearch
from featuresift.strategies.greedy_swap import GreedySwapSearch
from featuresift.strategies.sequential import BackwardSelection, ForwardSelection

__all__ = [
    "STRATEGIES",
    "PathStep",
    "Scored",
    "SearchSpace",
    "SearchStrategy",
    "StopSearch",
    "make_strategy",
    "register_strategy",
    "ForwardSelection",
    "BackwardSelection",
    "FloatingForwardSearch",
    "FloatingBackwardSearch",
    "SimulatedAnnealing",
    "GeneticSearch",
    "ExhaustiveSearch",
    "FilterOrderSearch",
    "GreedySwapSearch",
]
