"""Budget-aware sequential forward and backward selection.

Stopping rules
--------------
Forward selection starts from ``must_include`` and, at each step, evaluates every
addable feature as one batch (a feature is addable when its panel-aware marginal
cost keeps the subset within budget, and the size limit holds). It stops when

1. the subset has ``n_features`` features (the target size), or
2. no feature is addable (budget exhausted, size limit, or nothing left), or
3. ``tol`` is set and the best candidate does not improve the objective by more than
   ``tol`` over the current subset.

Backward selection starts from all candidates (plus ``must_include``, minus
``never_include``). Phase one removes features, best objective first (removals that
reach the budget and size limit first), until the subset is allowed; should it end on a
single feature still over the budget, it restarts from the best affordable single
feature (added to ``must_include``). Phase two keeps removing while the best
removal does not lower the objective by more than ``tol`` (default 0: "does not
drop"), or — when ``n_features`` is given — until the target size is reached; it
never removes the last feature (the empty subset is not evaluated).

The answer of both is the subset where the search stopped (a candidate turned down by
the tolerance rule is not chosen, even when its score is slightly higher).

Tie-break at every step: higher objective, then higher mean score, then lower cost,
then fewer features, then the feature that comes first in column order.

When ``tol`` is None (default) it becomes 0.0 if ``n_features`` is None and is
disabled otherwise, so a target size is always reached when the budget allows.
"""

from __future__ import annotations

from featuresift.errors import InputError
from featuresift.strategies.base import (
    Scored,
    SearchSpace,
    SearchStrategy,
    register_strategy,
)

__all__ = [
    "ForwardSelection",
    "BackwardSelection",
    "best_step",
    "best_removal",
    "eliminate_to_allowed",
]


def _check_common(n_features: int | None, tol: float | None) -> None:
    if n_features is not None and (isinstance(n_features, bool) or int(n_features) < 1):
        raise InputError(f"n_features must be a positive integer, got {n_features!r}")
    if tol is not None and (isinstance(tol, bool) or not isinstance(tol, (int, float))):
        raise InputError(f"tol must be a number, got {tol!r}")


def best_step(space: SearchSpace, moves: list[tuple[int, Scored]]) -> tuple[int, Scored]:
    """The best (feature, scored) move; ties go to the earlier feature in column order."""
    best_f, best_s = moves[0]
    best_key = space.rank_key(best_s)[:5]
    for f, s in moves[1:]:
        key = space.rank_key(s)[:5]
        if key > best_key:
            best_f, best_s, best_key = f, s, key
    return best_f, best_s


def best_removal(
    space: SearchSpace, current: tuple[int, ...], prefer_allowed: bool = False
) -> tuple[int, Scored] | None:
    """Best (feature, scored) removal from ``current`` (one batch); None if none is removable.

    With ``prefer_allowed``, removals that leave an allowed subset win over those that
    do not (used while the subset is still over the budget or the size limit).
    """
    feats = space.removable(current)
    if not feats:
        return None
    moves = list(zip(feats, space.evaluate([tuple(x for x in current if x != f) for f in feats])))
    if prefer_allowed:
        moves = [m for m in moves if space.is_allowed(m[1].subset)] or moves
    return best_step(space, moves)


def eliminate_to_allowed(space: SearchSpace) -> Scored | None:
    """Start from every candidate and remove features until the subset is allowed.

    Each step removes the feature whose removal is best by ``rank_key``, preferring
    removals that reach the budget and size limit. Should that end on a single
    feature still over the budget (say, one expensive panel member), it restarts from
    the best affordable single feature added to ``must_include``. Steps are recorded
    ("start", "remove", "restart"). Returns the allowed subset reached, or None when
    no allowed subset exists.
    """
    must = tuple(space.must_include)
    current = tuple(sorted(set(space.candidates) | set(must)))
    (scored,) = space.evaluate([current])
    space.record("start", current)
    while not space.is_allowed(current) and len(current) > max(len(must), 1):
        move = best_removal(space, current, prefer_allowed=True)
        if move is None:
            break
        f, scored = move
        current = scored.subset
        space.record("remove", current, f)
    if space.is_allowed(current):
        return scored
    feats = space.addable(must)
    if not feats:
        space.stop_reason = "no affordable subset"
        return None
    f, scored = best_step(space, list(zip(feats, space.evaluate([must + (g,) for g in feats]))))
    space.record("restart", scored.subset, f)
    return scored


@register_strategy
class ForwardSelection(SearchStrategy):
    """Sequential forward selection under a budget.

    Parameters
    ----------
    n_features : int, optional
        Target subset size (including ``must_include``). None: grow while the
        objective improves by more than ``tol``.
    tol : float, optional
        Smallest improvement worth a step (see module notes for the default).

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: len(set(s) & {1, 2}) - 0.01 * len(s), 4)
    >>> space = SearchSpace(ev, CostModel.uniform(["a", "b", "c", "d"]))
    >>> ForwardSelection().run(space)
    >>> space.path[-1].subset
    (1, 2)
    """

    name = "forward"

    def __init__(self, n_features: int | None = None, tol: float | None = None) -> None:
        _check_common(n_features, tol)
        self.n_features = n_features
        self.tol = tol

    def run(self, space: SearchSpace) -> None:
        tol = self.tol if self.tol is not None else (0.0 if self.n_features is None else None)
        target = self.n_features
        current = tuple(space.must_include)
        current_scored = None
        if current:
            (current_scored,) = space.evaluate([current])
            space.record("start", current)
        while target is None or len(current) < target:
            feats = space.addable(current)
            if not feats:
                space.stop_reason = space.stop_reason or "no affordable feature left to add"
                break
            scored = space.evaluate([current + (f,) for f in feats])
            f, best = best_step(space, list(zip(feats, scored)))
            if (
                tol is not None
                and current_scored is not None
                and best.value - current_scored.value <= tol
            ):
                space.stop_reason = f"no candidate improves the objective by more than {tol:g}"
                break
            current = best.subset
            current_scored = best
            space.record("add", current, f)
        else:
            space.stop_reason = f"target size {target} reached"
        if current:
            # The answer is where the search stopped: a candidate that the tolerance
            # rule turned down is not bought, even if its score is a little higher.
            space.choose(current)


@register_strategy
class BackwardSelection(SearchStrategy):
    """Sequential backward selection under a budget.

    Parameters
    ----------
    n_features : int, optional
        Target subset size. None: remove while the objective does not drop by
        more than ``tol``.
    tol : float, optional
        Largest drop in the objective accepted for a removal (default 0).

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: len(set(s) & {1, 2}) - 0.01 * len(s), 4)
    >>> space = SearchSpace(ev, CostModel.uniform(["a", "b", "c", "d"]))
    >>> BackwardSelection().run(space)
    >>> space.path[-1].subset
    (1, 2)
    """

    name = "backward"

    def __init__(self, n_features: int | None = None, tol: float | None = None) -> None:
        _check_common(n_features, tol)
        self.n_features = n_features
        self.tol = tol

    def run(self, space: SearchSpace) -> None:
        tol = self.tol if self.tol is not None else (0.0 if self.n_features is None else None)
        current_scored = eliminate_to_allowed(space)
        if current_scored is None:
            return
        current = current_scored.subset
        # Phase two: keep removing while it does not hurt (or down to the target size).
        target = self.n_features
        while len(current) > 1 and (target is None or len(current) > target):
            move = best_removal(space, current)
            if move is None:
                space.stop_reason = "only must_include features left"
                break
            f, best = move
            if target is None and best.value < current_scored.value - tol:
                space.stop_reason = f"every removal lowers the objective by more than {tol:g}"
                break
            current, current_scored = best.subset, best
            space.record("remove", current, f)
        else:
            space.stop_reason = (
                f"target size {target} reached" if target is not None else "one feature left"
            )
        if space.is_allowed(current):
            space.choose(current)
