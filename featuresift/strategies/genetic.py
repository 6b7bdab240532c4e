"""Genetic search over bit strings (one bit per candidate feature) with budget repair.

One generation
--------------
1. **Elitism**: the ``n_kept`` best individuals pass on unchanged.
2. **Tournament selection**: each parent is the best of ``contestants`` individuals
   drawn at random (with replacement) from the current population.
3. **Uniform crossover** (with probability ``crossover_chance``): each bit comes from
   either parent with probability 1/2; otherwise the child copies the first parent.
4. **Mutation**: every free bit (not ``must_include``/``never_include``) flips with
   probability ``flip_chance`` (default ``1 / number of free features``).
5. **Repair** (:func:`repair_by_value`): the child is made allowed by dropping, while it
   breaks the size limit, the feature of lowest estimated value, and, while it breaks the
   budget, the unit (a lone feature, or the subset's members of one panel) of lowest
   estimated value per unit of cost saved. An empty child gets one random affordable
   feature.
6. A child already evaluated in the run (or already bred in this generation) is bred
   again, up to 5 attempts, so that each generation explores new subsets.
7. The children are evaluated as **one batch** (subsets seen before are free).

Per-feature value estimate
--------------------------
The **marginal contribution seen so far**: the mean objective value of the evaluated
subsets that contain the feature minus the mean over those that do not (0 when either
group is empty). It costs no evaluation; it is recomputed once per generation from
every complete evaluation of the run.

Stopping: after ``n_generations`` generations, or when the best subset has not
improved for ``patience`` generations, or at the space's evaluation or time limit.
The answer is the best allowed subset evaluated.
"""

from __future__ import annotations

import math

import numpy as np

from featuresift.errors import InputError
from featuresift.strategies._options import check_fraction, check_int
from featuresift.strategies.base import (
    Scored,
    SearchSpace,
    SearchStrategy,
    register_strategy,
)

__all__ = ["GeneticSearch", "marginal_estimates", "repair_by_value"]

_NOVELTY_TRIES = 5
"""Attempts at breeding a child not evaluated before (the last attempt is kept anyway)."""


def marginal_estimates(space: SearchSpace) -> np.ndarray:
    """Per-feature value estimate from the evaluations of the run so far.

    ``estimate[f] = mean value of evaluated subsets with f - mean value of those without``
    (complete evaluations with finite value only; 0 where either group is empty).

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: 2.0 * (0 in s), 2)
    >>> space = SearchSpace(ev, CostModel.uniform("ab"))
    >>> _ = space.evaluate([[0], [1], [0, 1]])
    >>> marginal_estimates(space).tolist()
    [2.0, -1.0]
    """
    rows = [s for s in space.visited.values() if s.complete and math.isfinite(s.value)]
    est = np.zeros(space.n_features)
    if not rows:
        return est
    member = np.zeros((len(rows), space.n_features), dtype=bool)
    for r, s in enumerate(rows):
        member[r, list(s.subset)] = True
    values = np.array([s.value for s in rows])
    n_in = member.sum(axis=0)
    n_out = len(rows) - n_in
    sum_in = values @ member
    sum_out = values.sum() - sum_in
    ok = (n_in > 0) & (n_out > 0)
    est[ok] = sum_in[ok] / n_in[ok] - sum_out[ok] / n_out[ok]
    return est


def repair_by_value(
    space: SearchSpace, subset: set[int], estimate: np.ndarray
) -> tuple[int, ...]:
    """Make ``subset`` allowed by dropping the lowest value-per-cost features.

    Adds ``must_include`` and drops ``never_include``; then, while the size limit is
    broken, drops the free feature of lowest ``estimate``; while the budget is broken,
    drops the removal unit (a lone feature, or the subset's free members of one panel)
    with the lowest ``sum(estimate) / cost saved``. Ties go to the later column.
    Nothing is evaluated.
    """
    must = set(space.must_include)
    s = (set(subset) | must) - space.never_include
    while len(s) > space.max_features:
        free = [f for f in s if f not in must]
        s.discard(max(free, key=lambda f: (-estimate[f], f)))
    cm = space.cost_model
    while not space.within_budget(s):
        units: dict[object, list[int]] = {}
        for f in sorted(s - must):
            panel = cm.panel_of(cm.feature_names[f])
            units.setdefault(f if panel is None else panel, []).append(f)
        base = space.cost(s)
        best_key, best_unit = None, None
        for unit in units.values():
            saved = base - space.cost(s.difference(unit))
            if saved <= 0:
                continue
            key = (-float(estimate[unit].sum()) / saved, unit[-1])
            if best_key is None or key > best_key:
                best_key, best_unit = key, unit
        if best_unit is None:
            break
        s.difference_update(best_unit)
    return tuple(sorted(s))


@register_strategy
class GeneticSearch(SearchStrategy):
    """Genetic search with tournament selection, uniform crossover, elitism and repair.

    Parameters
    ----------
    n_individuals : int, default=24
        Individuals per generation.
    n_generations : int, default=40
        Generations after the initial population.
    patience : int, default=8
        Stop after this many generations without a better best subset.
    contestants : int, default=3
        Individuals compared to pick each parent.
    crossover_chance : float, default=0.9
        Probability that a child is a uniform crossover of two parents.
    flip_chance : float, optional
        Per-bit flip probability. Default ``1 / number of free features``.
    n_kept : int, default=2
        Best individuals copied unchanged into the next generation.
    start_density : float, default=0.3
        Chance of each free feature being on in an initial individual.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: len(set(s) & {1, 4}) - 0.1 * len(s), 6)
    >>> space = SearchSpace(ev, CostModel.uniform("abcdef"), seed=0)
    >>> GeneticSearch(n_individuals=10).run(space)
    >>> space.best_of(space.visited.values()).subset
    (1, 4)
    """

    name = "genetic"
    renamed_options = {"generation_limit": "n_generations", "stall_limit": "patience"}

    def __init__(
        self,
        n_individuals: int = 24,
        n_generations: int = 40,
        patience: int = 8,
        contestants: int = 3,
        crossover_chance: float = 0.9,
        flip_chance: float | None = None,
        n_kept: int = 2,
        start_density: float = 0.3,
    ) -> None:
        self.n_individuals = check_int(n_individuals, "n_individuals", minimum=2)
        self.n_generations = check_int(n_generations, "n_generations")
        self.patience = check_int(patience, "patience")
        self.contestants = check_int(contestants, "contestants")
        self.crossover_chance = check_fraction(
            crossover_chance, "crossover_chance", open_low=False, open_high=False)
        if flip_chance is not None:
            check_fraction(flip_chance, "flip_chance", open_high=False)
        self.flip_chance = flip_chance
        self.n_kept = check_int(n_kept, "n_kept", minimum=0)
        if n_kept >= n_individuals:
            raise InputError(
                f"n_kept must be smaller than n_individuals ({n_individuals}), got {n_kept}"
            )
        self.start_density = check_fraction(start_density, "start_density", open_high=False)

    def _parent(self, space: SearchSpace, pop: list[Scored]) -> Scored:
        picks = space.rng.integers(len(pop), size=self.contestants)
        return space.best_of(pop[int(i)] for i in picks)

    def _child(self, space: SearchSpace, pop: list[Scored], free: np.ndarray,
               rate: float, estimate: np.ndarray) -> tuple[int, ...]:
        rng = space.rng
        a = set(self._parent(space, pop).subset)
        b = set(self._parent(space, pop).subset)
        if rng.random() < self.crossover_chance:
            take_a = rng.random(free.size) < 0.5
            child = {int(f) for f, ta in zip(free, take_a) if (f in a if ta else f in b)}
        else:
            child = {int(f) for f in free if f in a}
        flips = free[rng.random(free.size) < rate]
        child.symmetric_difference_update(int(f) for f in flips)
        child = set(repair_by_value(space, child, estimate))
        if not child:
            options = space.addable(())
            if options:
                child.add(int(options[int(rng.integers(len(options)))]))
        return tuple(sorted(child))

    def run(self, space: SearchSpace) -> None:
        free = np.array(space.free_candidates, dtype=int)
        rate = self.flip_chance
        if rate is None:
            rate = 1.0 / max(1, free.size)
        starts = [space.sample_allowed(self.start_density) for _ in range(self.n_individuals)]
        pop = space.evaluate(starts)
        best = space.best_of(pop)
        space.record("start", best.subset)
        stale = 0
        for _ in range(self.n_generations):
            estimate = marginal_estimates(space)
            ranked = sorted(pop, key=space.rank_key, reverse=True)
            elite = [s.subset for s in ranked[: self.n_kept]]
            children: list[tuple[int, ...]] = []
            while len(children) < self.n_individuals - self.n_kept:
                for _ in range(_NOVELTY_TRIES):
                    child = self._child(space, pop, free, rate, estimate)
                    if child not in space.visited and child not in children:
                        break
                children.append(child)
            pop = space.evaluate(elite + children)
            new_best = space.best_of(pop)
            if space.rank_key(new_best) > space.rank_key(best):
                best, stale = new_best, 0
            else:
                stale += 1
            space.record("generation", best.subset)
            if stale >= self.patience:
                space.stop_reason = f"no improvement in {self.patience} generations"
                return
        space.stop_reason = f"{self.n_generations} generations done"
