"""Objectives: how an evaluated, priced subset is valued by a search.

An objective maps (evaluation, cost) to one number, larger is better. Strategies
compare subsets only through :meth:`SearchSpace.rank_key
<featuresift.strategies.base.SearchSpace.rank_key>`, which uses the objective value
first, then the tie-break (higher mean score, lower cost, fewer features).

Built in (name usable in YAML under ``objective.name``):

``score``
    Maximise the mean CV score subject to cost <= budget (the default).
``penalized``
    Maximise ``score - lambda * cost`` (``lambda`` from the config; default 0).
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from typing import ClassVar

from featuresift.errors import InputError
from featuresift.records import Evaluation

__all__ = ["BaseObjective", "ScoreObjective", "PenalizedObjective", "OBJECTIVES", "make_objective"]


class BaseObjective(ABC):
    """Value of an evaluated subset; larger is better."""

    name: ClassVar[str] = ""

    @abstractmethod
    def value(self, evaluation: Evaluation, cost: float) -> float:
        """Objective value of a subset with this evaluation and acquisition cost."""

    def describe(self) -> dict:
        """Plain-data description for outputs."""
        return {"name": self.name}

    def required_scorer(self):
        """A scorer the CV evaluation must use for this objective, or None.

        Objectives that value subsets by something other than the user's scorer
        (for example an expected misclassification cost) return a scikit-learn
        scorer here; the problem is then built with it.
        """
        return None


class ScoreObjective(BaseObjective):
    """Mean CV score (the budget is a hard constraint, applied by the search).

    Examples
    --------
    >>> ScoreObjective().value(Evaluation((0,), (0.5, 0.7)), cost=3.0)
    0.6
    """

    name = "score"

    def value(self, evaluation: Evaluation, cost: float) -> float:
        return evaluation.mean


class PenalizedObjective(BaseObjective):
    """Mean CV score minus ``lam`` times the acquisition cost.

    Parameters
    ----------
    lam : float
        Score units given up per unit of cost; must be >= 0.

    Examples
    --------
    >>> PenalizedObjective(lam=0.01).value(Evaluation((0,), (0.9,)), cost=10.0)
    0.8
    """

    name = "penalized"

    def __init__(self, lam: float = 0.0) -> None:
        if isinstance(lam, bool) or not isinstance(lam, (int, float)) or not lam >= 0:
            raise InputError(f"objective.lambda must be a number >= 0, got {lam!r}")
        self.lam = float(lam)

    def value(self, evaluation: Evaluation, cost: float) -> float:
        return evaluation.mean - self.lam * cost

    def describe(self) -> dict:
        return {"name": self.name, "lambda": self.lam}


OBJECTIVES: dict[str, type[BaseObjective]] = {
    ScoreObjective.name: ScoreObjective,
    PenalizedObjective.name: PenalizedObjective,
}
"""Registry of objectives by name (extended by :func:`register_objective`)."""


def register_objective(cls: type[BaseObjective]) -> type[BaseObjective]:
    """Class decorator adding an objective to :data:`OBJECTIVES` under ``cls.name``."""
    if not cls.name:
        raise ValueError("an objective class needs a non-empty 'name'")
    OBJECTIVES[cls.name] = cls
    return cls


def make_objective(spec: str | dict | BaseObjective | None) -> BaseObjective:
    """Build an objective from a name, a ``{"name": ..., **options}`` dict or an instance."""
    if spec is None:
        return ScoreObjective()
    if isinstance(spec, BaseObjective):
        return spec
    if isinstance(spec, str):
        spec = {"name": spec}
    opts = dict(spec)
    name = opts.pop("name", "score")
    if name not in OBJECTIVES:
        raise InputError(
            f"unknown objective '{name}'; known: {', '.join(sorted(OBJECTIVES))}"
        )
    if "lambda" in opts:
        opts["lam"] = opts.pop("lambda")
    try:
        return OBJECTIVES[name](**opts)
    except TypeError as exc:
        raise InputError(f"objective '{name}': {exc}") from None
