"""Sequential floating search: SFFS and SBFS (Pudil, Novovičová & Kittler 1994).

Floating forward search (``"floating-forward"``) alternates

1. **inclusion** — add the best addable feature (one batch over all addable features);
2. **conditional exclusion** — remove the least useful feature if that gives a subset
   strictly better than the best subset recorded so far for the smaller size; repeat
   while it keeps paying (the feature just added is never the first one removed).

Floating backward search (``"floating-backward"``) is the mirror: exclusion of the
least useful feature, then conditional inclusion among the *addable* features while
that beats the record of the larger size. When the full set breaks the budget or the
size limit, it is first brought within them by the budget-aware backward rule (remove
what saves most cost per unit of objective lost, a panel as one unit; see
:func:`~featuresift.strategies.sequential.eliminate_to_allowed`).

Conditional steps run at **every size**: before the first main step, after each main
step and at the end of the path. (A backward search that starts at its bottom size, for
instance one affordable feature under a tight budget, still tries its inclusions; a
forward search tries exclusions down to one feature beyond ``must_include``.)

Bookkeeping and guarantees
--------------------------
* **Best so far per size.** The record of each size only changes to a strictly better
  subset (by :meth:`~featuresift.strategies.base.SearchSpace.rank_key`), so it never
  decreases; every record is the best subset of its size evaluated in the run. Records
  are published in ``space.extras["best_by_size"]`` (size -> feature names, value).
* **Termination and cycle guard.** Each backtrack strictly raises one record, which
  bounds the number of backtracks; in addition a state (current subset + records)
  that comes back stops the search with the reason "cycle guard".
* **Budget.** Inclusions are drawn only from addable features; exclusions never raise
  the cost, so every subset the floating phase visits is allowed.
* **Never worse than the plain search.** Floating search alone can end *below* plain
  sequential search at some size (the published six-feature worked example in the
  tests shows it at size 4). So by default (``sequential_floor=True``) the plain
  budget-aware search (:class:`~featuresift.strategies.sequential.ForwardSelection` or
  :class:`~featuresift.strategies.sequential.BackwardSelection`, default options) runs
  too, after the floating phase, and every size keeps the better record; the answer is
  then at least as good as the plain search's at any budget. ``sequential_floor=False``
  gives the floating search alone, step for step as published.

Stopping
--------
Without ``n_features`` the forward search grows until no feature is addable, the
backward search shrinks down to one feature (or to ``must_include``); the answer is the
best allowed subset seen. With ``n_features = d`` the search runs to ``d +
look_beyond`` (forward) or ``d - look_beyond`` (backward) so that size ``d`` can still
be improved by backtracking, and answers with the record of size ``d``.
"""

from __future__ import annotations

import numpy as np

from featuresift.errors import InputError
from featuresift.strategies._options import check_int
from featuresift.strategies.base import (
    Scored,
    SearchSpace,
    SearchStrategy,
    register_strategy,
)
from featuresift.strategies.sequential import (
    BackwardSelection,
    ForwardSelection,
    best_removal,
    best_step,
    eliminate_to_allowed,
)

__all__ = ["FloatingForwardSearch", "FloatingBackwardSearch"]


class _SizeRecords:
    """Best subset seen per size, published into ``space.extras``."""

    def __init__(self, space: SearchSpace) -> None:
        self.space = space
        self.best: dict[int, Scored] = {}
        self.states: set[tuple] = set()
        space.extras["best_by_size"] = {}

    def offer(self, scored: Scored) -> bool:
        """Keep ``scored`` if it is allowed and beats the record of its size."""
        space = self.space
        k = len(scored.subset)
        old = self.best.get(k)
        if not scored.complete or not space.is_allowed(scored.subset):
            return False
        if old is not None and space.rank_key(scored) <= space.rank_key(old):
            return False
        self.best[k] = scored
        space.extras["best_by_size"][k] = {
            "features": [space.feature_names[i] for i in scored.subset],
            "value": scored.value,
            "score": scored.mean,
            "cost": scored.cost,
        }
        return True

    def beats(self, scored: Scored) -> bool:
        """Whether ``scored`` is strictly better than the record of its size."""
        old = self.best.get(len(scored.subset))
        return old is None or self.space.rank_key(scored) > self.space.rank_key(old)

    def seen_before(self, current: tuple[int, ...]) -> bool:
        """Cycle guard: True if this (subset, records) state occurred before."""
        state = (current, tuple(sorted((k, s.subset) for k, s in self.best.items())))
        if state in self.states:
            self.space.stop_reason = "cycle guard: a search state repeated"
            return True
        self.states.add(state)
        return False

    def absorb_visited(self) -> None:
        """Offer every evaluated allowed subset (used after the sequential floor run)."""
        for s in list(self.space.visited.values()):
            if s.complete and s.subset:
                self.offer(s)

    def finish(self, n_features: int | None) -> None:
        """Answer with the record of size ``n_features`` (None: the best subset seen)."""
        if n_features is not None and n_features in self.best:
            self.space.choose(self.best[n_features].subset)


def _best_addition(space: SearchSpace, current: tuple[int, ...]):
    """Best (feature, scored) among the addable features, one batch; None if none."""
    feats = space.addable(current)
    if not feats:
        return None
    return best_step(space, list(zip(feats, space.evaluate([current + (f,) for f in feats]))))


def _float(space: SearchSpace, records: _SizeRecords, current: tuple[int, ...],
           forward: bool, limit: int) -> None:
    """The floating loop: conditional steps back while they pay, then a main step.

    Forward: conditional exclusions (never below ``must_include`` plus one feature, never
    the empty subset), then add (main) until size ``limit``. Backward: conditional
    inclusions among the addable features, then remove until size ``limit``. The
    conditional steps run at every size: before the first main step, after each one and
    at the end of the path (a backward search that starts at its bottom size, say one
    affordable feature under a tight budget, still tries to include).
    """
    main, undo = (_best_addition, best_removal) if forward else (best_removal, _best_addition)
    main_action, undo_action = ("add", "exclude") if forward else ("remove", "include")
    lowest = len(space.must_include) + 1
    space.stop_reason = f"size {limit} reached"
    last: int | None = None
    while True:
        while not forward or len(current) - 1 >= lowest:
            back = undo(space, current)
            if back is None:
                break
            g, scored = back
            if g == last or not records.beats(scored):
                break
            current = scored.subset
            records.offer(scored)
            space.record(undo_action, current, g)
            last = None
        if (len(current) >= limit) if forward else (len(current) <= limit):
            return
        if records.seen_before(current):
            return
        move = main(space, current)
        if move is None:
            space.stop_reason = ("no affordable feature left to add" if forward
                                 else "only must_include features left")
            return
        f, scored = move
        current = scored.subset
        records.offer(scored)
        space.record(main_action, current, f)
        last = f


class _FloatingSearch(SearchStrategy):
    """Options shared by both floating searches (see the subclasses)."""

    def __init__(
        self,
        n_features: int | None = None,
        look_beyond: int = 0,
        sequential_floor: bool = True,
    ) -> None:
        if n_features is not None:
            check_int(n_features, "n_features")
        self.n_features = n_features
        self.look_beyond = check_int(look_beyond, "look_beyond", minimum=0)
        if not isinstance(sequential_floor, (bool, np.bool_)):
            raise InputError(f"sequential_floor must be true or false, got {sequential_floor!r}")
        self.sequential_floor = bool(sequential_floor)

    def _wrap_up(self, space: SearchSpace, records: _SizeRecords,
                 plain: SearchStrategy) -> None:
        """Optional sequential floor, then the answer (record of ``n_features`` or best seen)."""
        if self.sequential_floor:
            reason = space.stop_reason
            plain.run(space)
            space.stop_reason = f"{reason}; plain {plain.name} search run as a floor"
            records.absorb_visited()
        space.chosen = None
        records.finish(self.n_features)


@register_strategy
class FloatingForwardSearch(_FloatingSearch):
    """Sequential floating forward search (SFFS) under a budget.

    Parameters
    ----------
    n_features : int, optional
        Subset size to answer with (the record of that size). None: the best allowed
        subset seen, growing until no feature is addable.
    look_beyond : int, default=0
        With ``n_features``, grow this many sizes further so that backtracking can
        still improve size ``n_features``.
    sequential_floor : bool, default=True
        Also run plain (budget-aware) forward selection (its steps join the path) and
        keep, per size, the better record: never worse than ``"forward"``.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> table = {(0,): 5, (1,): 4, (2,): 1, (0, 1): 5, (0, 2): 6, (1, 2): 9, (0, 1, 2): 8}
    >>> ev = CriterionEvaluator(lambda s: table.get(s, 0), 3)
    >>> space = SearchSpace(ev, CostModel.uniform(["a", "b", "c"]))
    >>> FloatingForwardSearch().run(space)
    >>> space.extras["best_by_size"][2]["features"]
    ['b', 'c']
    """

    name = "floating-forward"

    def run(self, space: SearchSpace) -> None:
        records = _SizeRecords(space)
        current = tuple(space.must_include)
        target = space.max_features
        if self.n_features is not None:
            target = min(target, self.n_features + self.look_beyond)
        if current:
            records.offer(space.evaluate([current])[0])
            space.record("start", current)
        _float(space, records, current, forward=True, limit=target)
        self._wrap_up(space, records, ForwardSelection())


@register_strategy
class FloatingBackwardSearch(_FloatingSearch):
    """Sequential floating backward search (SBFS) under a budget.

    Parameters
    ----------
    n_features : int, optional
        Subset size to answer with (the record of that size). None: the best allowed
        subset seen, shrinking down to one feature (or to ``must_include``).
    look_beyond : int, default=0
        With ``n_features``, shrink this many sizes further so that backtracking can
        still improve size ``n_features``.
    sequential_floor : bool, default=True
        Also run plain (budget-aware) backward selection (its steps join the path) and
        keep, per size, the better record: never worse than ``"backward"``.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: len(set(s) & {0, 2}) - 0.1 * len(s), 4)
    >>> space = SearchSpace(ev, CostModel.uniform(["a", "b", "c", "d"]))
    >>> FloatingBackwardSearch().run(space)
    >>> space.extras["best_by_size"][2]["features"]
    ['a', 'c']
    """

    name = "floating-backward"

    def run(self, space: SearchSpace) -> None:
        records = _SizeRecords(space)
        must = tuple(space.must_include)
        bottom = max(len(must), 1)
        if self.n_features is not None:
            bottom = max(bottom, self.n_features - self.look_beyond)
        start = eliminate_to_allowed(space)
        if start is None:
            return
        records.offer(start)
        _float(space, records, start.subset, forward=False, limit=bottom)
        self._wrap_up(space, records, BackwardSelection())
