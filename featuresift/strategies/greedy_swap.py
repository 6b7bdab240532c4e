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
   measurement included), over the allowed neighbours of the current subset:

   * **add** one addable feature, or every not-yet-chosen member of one panel;
   * **remove** one feature, or every chosen member of one panel (never down to the empty
     subset, never a ``must_include`` feature);
   * **swap** one chosen feature for one not chosen.

   Each round evaluates the add and remove moves as one batch and moves to the best of
   them when it is strictly better by
   :meth:`~featuresift.strategies.base.SearchSpace.rank_key` (objective, then score,
   lower cost, fewer features, earlier columns); only when none is, the swaps are
   evaluated (one batch) and the search moves to the best improving one.
4. **Paired moves at a local optimum.** When no add, remove or swap improves, the
   changes of the ``pair_moves`` (default 4) best neighbours of that round are combined
   two by two (e.g. two swaps at once, inside a panel or across panels; only compatible,
   allowed combinations); the search moves to the best combination if it improves and
   goes on with step 3, else stops: a local optimum for adds, removes, swaps and these
   paired moves. Subsets already evaluated are free.

The answer is the best allowed subset seen; the driver's pick rule then applies (so a
cheaper subset statistically as good can still be preferred). No random numbers are
drawn: the same problem gives the same answer, whatever the seed.

Why this default
----------------
Measured on the exhaustive reference suite (``benchmarks/bench_reference.py``: four
scikit-learn data sets, invented costs with panels and values on hand, six budgets each,
24 cases; figures and the designs tried in ``benchmarks/README.md``). Greedy alone
misses cases that a swap repairs; local search from the gain-per-cost path found the
same optima as from both paths (plain gain and gain per cost) with about a fifth fewer
fits, hence the default ``cost_rule="ratio"`` (``"both"`` stays available). Trying adds
and removes before swaps saves the swap batch whenever a cheaper move already improves;
paired moves reach the optima that need two simultaneous swaps for a few extra subsets;
enumerating only up to 64 allowed subsets (the greedy search with local search finds
the optimum of every smaller case of the suite with fewer fits). ``swap_candidates``
trades the swap guarantee for fewer fits (see the README's table).
"""

from __future__ import annotations

import math

from featuresift.engine.progress import Expected
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


def _is_swap(subset: tuple[int, ...], other: tuple[int, ...]) -> bool:
    return len(other) == len(subset) and len(set(other) ^ set(subset)) == 2


def _top_swaps(space: SearchSpace, subset: tuple[int, ...], swaps: list[tuple[int, ...]],
               k: int) -> list[tuple[int, ...]]:
    """The swaps among the ``k`` most promising removals and the ``k`` most promising
    additions: removals ranked by the subset left without the feature, additions by the
    subset with it when evaluated, else by the feature alone (ties: column order)."""
    base = set(subset)
    seen = space.visited
    worst: tuple = (False,)

    def out_key(f: int) -> tuple:
        s = seen.get(tuple(sorted(base - {f})))
        return (s.rank_key if s else worst, -f)

    def in_key(g: int) -> tuple:
        s = seen.get(tuple(sorted(base | {g})))
        if s is not None:
            return (1, s.rank_key, -g)
        one = seen.get((g,))
        return (0, one.rank_key if one else worst, -g)

    outs = sorted({f for n in swaps for f in base - set(n)}, key=out_key, reverse=True)[:k]
    ins = sorted({g for n in swaps for g in set(n) - base}, key=in_key, reverse=True)[:k]
    return [n for n in swaps if base - set(n) <= set(outs) and set(n) - base <= set(ins)]


def _paired(space: SearchSpace, subset: tuple[int, ...], scored: list[Scored], m: int,
            size: int | None) -> list[tuple[int, ...]]:
    """Allowed unions of the changes of two of the ``m`` best neighbours (best first)."""
    ranked = sorted(scored, key=lambda x: x.rank_key, reverse=True)[:m]
    base = set(subset)
    out: dict[tuple[int, ...], None] = {}
    for i, a in enumerate(ranked):
        for b in ranked[i + 1:]:
            sa, sb = set(a.subset), set(b.subset)
            add = (sa - base) | (sb - base)
            drop = (base - sa) | (base - sb)
            if add & drop:
                continue
            key = tuple(sorted((base - drop) | add))
            if key and (size is None or len(subset) <= len(key) <= size) \
                    and space.is_allowed(key):
                out.setdefault(key, None)
    return list(out)


def local_search(space: SearchSpace, start: Scored, size: int | None = None,
                 pair_moves: int = 4, swap_candidates: int | None = None) -> Scored:
    """Local search over :func:`neighbourhood` plus paired moves; records "move" steps.

    Each round evaluates the add and remove moves (single features and whole panels)
    first and moves to the best of them if it improves; only otherwise the swaps (all,
    or those of :func:`_top_swaps` with ``swap_candidates``) are evaluated. When no
    neighbour improves, the ``pair_moves`` best neighbours of the round are combined
    two by two (both changes at once, when compatible and allowed); the search moves to
    the best combination if it improves and goes on, else stops.
    """
    current = start
    paired = False
    while True:
        sub = current.subset
        batch = neighbourhood(space, sub, size)
        swaps = [n for n in batch if _is_swap(sub, n)]
        # The round ahead when nothing improves (then it is the last one): for progress.
        fresh = sum(1 for n in batch if n not in space.visited)
        fresh_swaps = sum(1 for n in swaps if n not in space.visited)
        if swap_candidates is not None:
            fresh = fresh - fresh_swaps + min(fresh_swaps, swap_candidates ** 2)
        space.expect(fresh + (0 if paired or pair_moves < 2 else math.comb(pair_moves, 2)))
        scored = space.evaluate([n for n in batch if not _is_swap(sub, n)])
        best = space.best_of(scored)
        if (best is None or best.rank_key <= current.rank_key) and swaps:
            if swap_candidates is not None:
                swaps = _top_swaps(space, sub, swaps, swap_candidates)
            scored += space.evaluate(swaps)
            best = space.best_of(scored)
        if (best is None or best.rank_key <= current.rank_key) and pair_moves > 1 \
                and not paired:
            paired = True
            combos = _paired(space, sub, scored, pair_moves, size)
            best = space.best_of(space.evaluate(combos)) if combos else None
        if best is None or best.rank_key <= current.rank_key:
            break
        current = best
        paired = False
        space.record("move", current.subset)
    return current


@register_strategy
class GreedySwapSearch(SearchStrategy):
    """Exhaustive when few subsets are allowed, else budget-aware greedy + local search.

    Parameters
    ----------
    exhaustive_limit : int, default=64
        Enumerate every allowed subset when there are at most this many.
    cost_rule : {"ratio", "both", "gain"}, default="ratio"
        Step rule of the greedy phase (see
        :class:`~featuresift.strategies.sequential.ForwardSelection`).
    n_features : int, optional
        Answer with a subset of exactly this many features (including
        ``must_include``) when one is allowed: only subsets of that size are enumerated,
        the greedy phase stops there and the local search then only swaps.
    pair_moves : int, default=4
        At a local optimum, combine the changes of the ``pair_moves`` best neighbours two
        by two (0 or 1: no paired moves).
    swap_candidates : int, optional
        Evaluate only the swaps among this many most promising removals and additions
        (see :func:`local_search`); fewer fits, but the answer is then a local optimum
        of the add and remove moves and of those swaps only. None: every swap.

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

    def __init__(self, exhaustive_limit: int = 64, cost_rule: str = "ratio",
                 n_features: int | None = None, pair_moves: int = 4,
                 swap_candidates: int | None = None) -> None:
        self.exhaustive_limit = check_int(exhaustive_limit, "exhaustive_limit", minimum=0)
        self.pair_moves = check_int(pair_moves, "pair_moves", minimum=0)
        self.swap_candidates = (None if swap_candidates is None
                                else check_int(swap_candidates, "swap_candidates"))
        ForwardSelection(cost_rule=cost_rule, n_features=n_features)  # validates both
        self.cost_rule = cost_rule
        self.n_features = n_features

    def _enumeration(self, space: SearchSpace) -> list[tuple[int, ...]] | None:
        """The subsets rule 1 evaluates (empty: none is allowed), or None when there are
        too many to enumerate."""
        size = self.n_features
        allowed = space.allowed_subsets()
        if size is not None:
            allowed = space.cost_model.allowed(
                space.budget, must_include=space.must_include,
                never_include=space.never_include,
                max_features=min(size, space.max_features))
        n_allowed = allowed.count(limit=self.exhaustive_limit)
        if n_allowed == 0:
            return []
        if n_allowed > self.exhaustive_limit:
            return None
        return [s for s in allowed if size is None or len(s) == size] or list(allowed)

    def expected_evaluations(self, space: SearchSpace) -> Expected:
        """Subsets the search will evaluate (for progress: the time left).

        Exact when the allowed subsets are enumerated (rule 1). Otherwise an estimate
        (``"about"``): the greedy phase and one round of moves as if the search bought
        the cheapest affordable measurements, as many as the budget holds, counting at
        each step the measurements still affordable. How many rounds the local search
        makes is not known in advance; each round tells the progress display what it is
        about to evaluate
        (:meth:`~featuresift.strategies.base.SearchSpace.expect`).

        Examples
        --------
        >>> from featuresift.engine.evaluator import CriterionEvaluator
        >>> from featuresift.costs import CostModel
        >>> cm = CostModel(list("abc"), {"a": 1.0, "b": 4.0, "c": 1.0})
        >>> space = SearchSpace(CriterionEvaluator(len, 3), cm, budget=4)
        >>> GreedySwapSearch().expected_evaluations(space).n
        4
        """
        subsets = self._enumeration(space)
        if subsets is not None:
            return Expected(len(subsets), "exact", frozenset(subsets))
        must = tuple(space.must_include)
        base = space.cost(must)
        singles = sorted(space.cost(must + (f,)) - base for f in space.free_candidates
                         if space.is_allowed(must + (f,)))
        m = len(singles)
        room = math.inf if space.budget is None else space.budget - base
        rooms = [room]  # budget left after buying the i cheapest
        for c in singles:
            if c > rooms[-1] + 1e-12:
                break
            rooms.append(rooms[-1] - c)
        k = len(rooms) - 1
        k = min(k, space.max_features - len(must))
        if self.n_features is not None:
            k = min(k, max(self.n_features - len(must), 1))
        k = max(min(k, m), 1)
        left = rooms[min(k, len(rooms) - 1)]

        def fitting(extra: float, start: int) -> int:
            return sum(1 for c in singles[start:] if c <= extra + 1e-12)

        n_paths = 2 if self.cost_rule == "both" else 1
        greedy = n_paths * sum(fitting(rooms[i], i) for i in range(min(k, len(rooms))))
        one_round = (k + fitting(left, k) + sum(fitting(singles[i] + left, k)
                                                 for i in range(min(k, m)))
                     + math.comb(self.pair_moves, 2))
        greedy += 1 if must else 0
        return Expected(greedy + one_round, "about")

    def run(self, space: SearchSpace) -> None:
        size = self.n_features
        subsets = self._enumeration(space)
        if subsets == []:
            space.stop_reason = "no allowed subset"
            return
        if subsets is not None:
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
        end = local_search(space, start, size, self.pair_moves, self.swap_candidates)
        space.stop_reason = ("local optimum: no add, remove, swap or paired move improves on "
                             + ", ".join(space.feature_names[i] for i in end.subset))
        if size is not None:
            space.stop_reason = "local optimum of the swaps at size " + str(len(end.subset))
            space.choose(end.subset)
