"""Simulated annealing over feature subsets, with budget-respecting moves.

Moves
-----
From the current subset three kinds of neighbour are proposed:

* **add** an addable feature (its panel-aware marginal cost keeps the budget, the size
  limit holds, it is not in ``never_include``);
* **drop** a feature that is not in ``must_include`` (never down to the empty subset);
* **swap** one such feature for one that is addable once it is gone.

A move that would break the budget is never proposed, so every evaluated subset is
allowed. Each step draws ``n_neighbours`` distinct neighbours (move kind uniformly
among the kinds available, then the move uniformly) and evaluates them as **one batch**,
so all cores work. The neighbours are then examined in a random (seeded) order; the
first one accepted by the Metropolis rule becomes the current subset:

* better by :meth:`~featuresift.strategies.base.SearchSpace.rank_key`: accepted;
* otherwise accepted with probability ``exp(delta / T)``, ``delta`` being the drop in
  objective value (<= 0).

Cooling schedule
----------------
Geometric: at step ``i`` of a run of ``n_steps`` steps,
``T_i = T0 * final_temperature_ratio ** (i / (n_steps - 1))``.
Unless ``initial_temperature`` is given, ``T0`` is calibrated once, on the first batch
of neighbours: ``T0 = median(worsening) / ln(1 / start_acceptance)`` so that a typical
worsening move is accepted with probability ``start_acceptance`` at the start. When no
neighbour is worse, the spread (standard deviation) of the neighbour values replaces the
median; when that is 0 too, ``T0 = 1e-9`` (plain hill climbing).

Restarts
--------
The search makes ``1 + n_restarts`` runs, each from a fresh random allowed subset
(:meth:`~featuresift.strategies.base.SearchSpace.sample_allowed` with
``start_density``); with ``restart_from="best"`` the later runs start from the best
subset found so far instead. The answer is the best allowed subset evaluated. Limits on
evaluations and time come from the search space (``max_evaluations``, ``max_time``);
re-visited subsets are cached and cost nothing.
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

__all__ = ["SimulatedAnnealing", "neighbours"]


def neighbours(
    space: SearchSpace, current: tuple[int, ...], k: int
) -> list[tuple[str, int | None, tuple[int, ...]]]:
    """Up to ``k`` distinct allowed neighbours of ``current`` as (move, feature, subset).

    ``feature`` is the feature added (add, swap) or dropped (drop). Draws from
    ``space.rng`` only.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> space = SearchSpace(CriterionEvaluator(len, 4), CostModel.uniform("abcd"), budget=2)
    >>> moves = neighbours(space, (0, 1), 3)
    >>> all(space.is_allowed(s) and len(s) <= 2 for _, _, s in moves)
    True
    """
    rng = space.rng
    base = set(current)
    floor = max(1, len(space.must_include))
    adds = space.addable(current)
    drops = space.removable(current) if len(current) > floor else []
    outs = space.removable(current)
    kinds = [kind for kind, ok in (("add", adds), ("drop", drops), ("swap", outs)) if ok]
    found: dict[tuple[int, ...], tuple[str, int | None, tuple[int, ...]]] = {}
    swap_ins: dict[int, list[int]] = {}
    for _ in range(8 * k):
        if len(found) >= k or not kinds:
            break
        kind = kinds[int(rng.integers(len(kinds)))]
        if kind == "add":
            f = int(adds[int(rng.integers(len(adds)))])
            subset = tuple(sorted(base | {f}))
        elif kind == "drop":
            f = int(drops[int(rng.integers(len(drops)))])
            subset = tuple(sorted(base - {f}))
        else:
            out = int(outs[int(rng.integers(len(outs)))])
            rest = tuple(sorted(base - {out}))
            if out not in swap_ins:
                swap_ins[out] = [g for g in space.addable(rest) if g != out]
            ins = swap_ins[out]
            if not ins:
                continue
            f = int(ins[int(rng.integers(len(ins)))])
            subset = tuple(sorted(set(rest) | {f}))
        if subset not in found:
            found[subset] = (kind, f, subset)
    return list(found.values())


def _value(s: Scored) -> float:
    """Objective value; -inf for NaN and for incomplete (failed or dropped) evaluations."""
    return s.value if s.complete and not math.isnan(s.value) else -math.inf


@register_strategy
class SimulatedAnnealing(SearchStrategy):
    """Simulated annealing with add, drop and swap moves, batched neighbours and restarts.

    Parameters
    ----------
    n_steps : int, default=40
        Steps (batches) per run; the temperature falls geometrically over them.
    n_neighbours : int, default=8
        Neighbours evaluated per step, as one batch.
    n_restarts : int, default=3
        Extra runs after the first.
    initial_temperature : float, optional
        ``T0`` in objective units. Default: calibrated (module notes).
    final_temperature_ratio : float, default=1e-3
        ``T`` at the last step of a run divided by ``T0``.
    start_acceptance : float, default=0.5
        Probability of accepting a typical worsening move at ``T0`` (calibration).
    start_density : float, default=0.5
        Chance of each free feature being in a random starting subset.
    restart_from : {"random", "best"}, default="random"
        Where the restarts start.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: len(set(s) & {1, 4}) - 0.1 * len(s), 6)
    >>> space = SearchSpace(ev, CostModel.uniform("abcdef"), seed=0)
    >>> SimulatedAnnealing(n_steps=20, n_restarts=1).run(space)
    >>> space.best_of(space.visited.values()).subset
    (1, 4)
    """

    name = "annealing"

    def __init__(
        self,
        n_steps: int = 40,
        n_neighbours: int = 8,
        n_restarts: int = 3,
        initial_temperature: float | None = None,
        final_temperature_ratio: float = 1e-3,
        start_acceptance: float = 0.5,
        start_density: float = 0.5,
        restart_from: str = "random",
    ) -> None:
        self.n_steps = check_int(n_steps, "n_steps")
        self.n_neighbours = check_int(n_neighbours, "n_neighbours")
        self.n_restarts = check_int(n_restarts, "n_restarts", minimum=0)
        if initial_temperature is not None and (
            isinstance(initial_temperature, bool)
            or not isinstance(initial_temperature, (int, float))
            or not 0 < initial_temperature < math.inf
        ):
            raise InputError(
                f"initial_temperature must be a finite number > 0, got {initial_temperature!r}"
            )
        self.initial_temperature = initial_temperature
        self.final_temperature_ratio = check_fraction(
            final_temperature_ratio, "final_temperature_ratio")
        self.start_acceptance = check_fraction(start_acceptance, "start_acceptance")
        self.start_density = check_fraction(start_density, "start_density", open_high=False)
        if restart_from not in ("random", "best"):
            raise InputError(f"restart_from must be 'random' or 'best', got {restart_from!r}")
        self.restart_from = restart_from

    def _calibrate(self, current: Scored, batch: list[Scored]) -> float:
        if self.initial_temperature is not None:
            return float(self.initial_temperature)
        values = np.array([_value(s) for s in batch])
        values = values[np.isfinite(values)]
        worse = -(values - _value(current))
        worse = worse[worse > 0]
        if worse.size:
            return float(np.median(worse)) / math.log(1.0 / self.start_acceptance)
        spread = float(values.std()) if values.size > 1 else 0.0
        return spread if spread > 0 else 1e-9

    def run(self, space: SearchSpace) -> None:
        rng = space.rng
        t0: float | None = None
        ratio = self.final_temperature_ratio ** (1.0 / max(1, self.n_steps - 1))
        best: Scored | None = None
        for run_no in range(1 + self.n_restarts):
            if run_no and self.restart_from == "best" and best is not None:
                start = best.subset
            else:
                start = space.sample_allowed(self.start_density)
            if not start:
                space.stop_reason = "no allowed non-empty subset"
                return
            (current,) = space.evaluate([start])
            space.record("start", start)
            best = current if best is None else space.best_of([best, current])
            temperature = t0
            for _ in range(self.n_steps):
                moves = neighbours(space, current.subset, self.n_neighbours)
                if not moves:
                    break
                batch = space.evaluate([m[2] for m in moves])
                if t0 is None:
                    t0 = temperature = self._calibrate(current, batch)
                best = space.best_of([best, *batch])
                for i in rng.permutation(len(moves)):
                    cand = batch[i]
                    if space.rank_key(cand) > space.rank_key(current):
                        accept = True
                    else:
                        delta = _value(cand) - _value(current)
                        accept = math.isfinite(delta) and rng.random() < math.exp(
                            delta / temperature)
                    if accept:
                        current = cand
                        space.record(moves[i][0], cand.subset, moves[i][1])
                        break
                temperature *= ratio
        space.stop_reason = f"{1 + self.n_restarts} annealing run(s) of {self.n_steps} steps done"
