"""Search strategies, pluggable by name (see :mod:`featuresift.strategies.base`)."""

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
]
