"""The default strategy, ``"greedy-swap"``: enumerate small spaces, otherwise greedy + local search.

Rules, in order
---------------
1. **Few allowed subsets: enumerate.** The allowed non-empty subsets (containing
   ``must_include``, avoiding ``never_include``, within ``max_features`` and the budget,
   panels as units) are counted exactly, without listing them
   (:meth:`~featuresift.strategies.base.SearchSpace.allowed_subsets`; counting stops
   past the limit). When there are at most ``exhaustive_limit`` of them, every one is
   evaluated (by size, then column order, in batches of 256) and the search is exact.
2. **Otherwise: budget-aware greedy.** Forward selection by gain per unit of marginal
   cost (panels priced once, values on hand free), growing while anything is affordable
   (:class:`~featuresift.strategies.sequential.ForwardSelection` with ``cost_rule``,
   default ``"ratio"``). Its first step evaluates every affordable single measurement,
   so the best single item is always among the starting points (the safeguard against
   ratio rules spending the budget on small cheap gains).
3. **Then local search** from the best subset seen (greedy path and every single
   measurement included). Each round evaluates, as one batch,
   every allowed neighbour of the current subset:

   * **add** one addable feature, or every not-yet-chosen member of one panel;
   * **remove** one feature, or every chosen member of one panel (never down to the empty
     subset, never a ``must_include`` feature);
   * **swap** one chosen feature for one not chosen.

   The search moves to the best neighbour when it is strictly better by
   :meth:`~featuresift.strategies.base.SearchSpace.rank_key` (objective, then score,
   lower cost, fewer features, earlier columns) and stops when no neighbour is better:
   a local optimum for all three kinds of move. Subsets already evaluated are free.

The answer is the best allowed subset seen; the driver's pick rule then applies (so a
cheaper subset statistically as good can still be preferred). No random numbers are
drawn: the same problem gives the same answer, whatever the seed.

Why this default
----------------
Measured on the exhaustive reference suite (``benchmarks/bench_reference.py``: four
scikit-learn data sets, invented costs with panels and values on hand, six budgets each,
24 cases; figures in ``benchmarks/README.md``). Greedy alone misses cases that a swap
repairs; local search from the gain-per-cost path found the same optima as from both
paths (plain gain and gain per cost) with about a fifth fewer fits, hence the default
``cost_rule="ratio"`` (``"both"`` stays available). Enumeration below 128 allowed
subsets costs about what the greedy search would and is exact.
"""

from __future__ import annotations

from featuresift.strategies._options import check_int
from featuresift.strategies.base import Scored, SearchSpace, SearchStrategy, register_strategy
from featuresift.strategies.sequential import ForwardSelection, best_allowed

__all__ = ["GreedySwapSearch", "neighbourhood", "local_search"]

_BATCH = 256


def neighbourhood(space: SearchSpace, subset: tuple[int, ...],
                  size: int | None = None) -> list[tuple[int, ...]]:
    """Allowed add / remove / swap neighbours of ``subset``, panels also as whole units.

    With ``size``, only neighbours of at most that size that do not shrink the subset
    (additions below the size, swaps) are returned.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> space = SearchSpace(CriterionEvaluator(len, 3), CostModel.uniform("abc"), budget=2)
    >>> neighbourhood(space, (0,))
    [(0, 1), (0, 2), (1,), (2,)]
    """
    current = set(subset)
    must = set(space.must_include)
    names = space.feature_names
    cm = space.cost_model
    out: dict[tuple[int, ...], None] = {}

    def offer(candidate: set[int]) -> None:
        key = tuple(sorted(candidate))
        if size is not None and not len(subset) <= len(key) <= size:
            return
        if key and key != subset and space.is_allowed(key):
            out.setdefault(key, None)

    for f in space.addable(subset):
        offer(current | {f})
    panels: dict[str, list[int]] = {}
    for f in space.candidates:
        p = cm.panel_of(names[f])
        if p is not None:
            panels.setdefault(p, []).append(f)
    for members in panels.values():
        inside = current & set(members)
        if len(members) > 1 and len(inside) < len(members):
            offer(current | set(members))
        removable = inside - must
        if len(removable) > 1:
            offer(current - removable)
    outside = [g for g in space.candidates if g not in current]
    for f in sorted(current - must):
        rest = current - {f}
        offer(rest)
        for g in outside:
            offer(rest | {g})
    return list(out)


def local_search(space: SearchSpace, start: Scored, size: int | None = None) -> Scored:
    """Best-improvement local search over :func:`neighbourhood`; records "move" steps."""
    current = start
    while True:
        batch = neighbourhood(space, current.subset, size)
        if not batch:
            break
        best = space.best_of(space.evaluate(batch))
        if best is None or space.rank_key(best) <= space.rank_key(current):
            break
        current = best
        space.record("move", current.subset)
    return current


@register_strategy
class GreedySwapSearch(SearchStrategy):
    """Exhaustive when few subsets are allowed, else budget-aware greedy + local search.

    Parameters
    ----------
    exhaustive_limit : int, default=128
        Enumerate every allowed subset when there are at most this many.
    cost_rule : {"ratio", "both", "gain"}, default="ratio"
        Step rule of the greedy phase (see
        :class:`~featuresift.strategies.sequential.ForwardSelection`).
    n_features : int, optional
        Answer with a subset of exactly this many features (including
        ``must_include``) when one is allowed: only subsets of that size are enumerated,
        the greedy phase stops there and the local search then only swaps.

    Examples
    --------
    Four subsets fit the budget of 4 (``b`` alone takes all of it), so all are tried:

    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: {(1,): 5, (0, 2): 7}.get(s, 3), 3, list("abc"))
    >>> cm = CostModel(list("abc"), {"a": 1.0, "b": 4.0, "c": 1.0})
    >>> space = SearchSpace(ev, cm, budget=4)
    >>> GreedySwapSearch().run(space)
    >>> space.best_of(space.visited.values()).subset, space.stop_reason
    ((0, 2), 'optimum over all 4 allowed subsets')
    """

    name = "greedy-swap"

    def __init__(self, exhaustive_limit: int = 128, cost_rule: str = "ratio",
                 n_features: int | None = None) -> None:
        self.exhaustive_limit = check_int(exhaustive_limit, "exhaustive_limit", minimum=0)
        ForwardSelection(cost_rule=cost_rule, n_features=n_features)  # validates both
        self.cost_rule = cost_rule
        self.n_features = n_features

    def run(self, space: SearchSpace) -> None:
        size = self.n_features
        allowed = space.allowed_subsets()
        if size is not None:
            allowed = space.cost_model.allowed(
                space.budget, must_include=space.must_include,
                never_include=space.never_include,
                max_features=min(size, space.max_features))
        n_allowed = allowed.count(limit=self.exhaustive_limit)
        if n_allowed == 0:
            space.stop_reason = "no allowed subset"
            return
        if n_allowed <= self.exhaustive_limit:
            subsets = [s for s in allowed if size is None or len(s) == size] or list(allowed)
            best = None
            for i in range(0, len(subsets), _BATCH):
                best = space.best_of([*([best] if best else []),
                                      *space.evaluate(subsets[i:i + _BATCH])])
            assert best is not None
            space.record("best", best.subset)
            space.extras["allowed_subsets"] = len(subsets)
            space.stop_reason = f"optimum over all {len(subsets)} allowed subsets" + (
                f" of {size} features" if size is not None else "")
            if size is not None:
                space.choose(best.subset)
            return
        ForwardSelection(cost_rule=self.cost_rule, n_features=size).run(space)
        start = (best_allowed(space, size) if size is not None else None) or best_allowed(space)
        if start is None:
            space.stop_reason = "no allowed subset"
            return
        if not space.path or space.path[-1].subset != start.subset:
            space.record("best", start.subset)
        end = local_search(space, start, size)
        space.stop_reason = ("local optimum: no add, remove or swap improves on "
                             + ", ".join(space.feature_names[i] for i in end.subset))
        if size is not None:
            space.stop_reason = "local optimum of the swaps at size " + str(len(end.subset))
            space.choose(end.subset)
