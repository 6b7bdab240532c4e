"""Exhaustive search: every allowed subset, in batches, for a certified optimum.

Only allowed subsets are enumerated (:meth:`SearchSpace.allowed_subsets
<featuresift.strategies.base.SearchSpace.allowed_subsets>`): each contains
``must_include``, avoids ``never_include``, has at most ``max_features`` features, fits
the budget (panels as units: a panel is paid once) and is not empty. Subsets come by
size, then in column order, and are evaluated ``batch_size`` at a time. The answer is the
best allowed subset (ties: higher score, lower cost, fewer features, earlier columns).

Before anything is evaluated the allowed subsets are counted exactly; more than
``max_subsets`` (default 2^20 = 1,048,576, about 20 free measurements without a budget)
stops the search with an :class:`~featuresift.errors.InputError` that gives the number.
When every allowed subset was evaluated on every fold, the stop reason says
"optimum over all N allowed subsets" and ``extras["allowed_subsets"]`` holds N.
"""

from __future__ import annotations

from collections.abc import Iterator
from itertools import islice

from featuresift.errors import InputError
from featuresift.strategies._options import check_int
from featuresift.strategies.base import SearchSpace, SearchStrategy, register_strategy

__all__ = ["ExhaustiveSearch", "allowed_subsets"]

MAX_SUBSETS = 2 ** 20
"""Default limit on the number of allowed subsets an exhaustive search evaluates."""


def allowed_subsets(space: SearchSpace) -> Iterator[tuple[int, ...]]:
    """Every allowed non-empty subset of the space, by size then column order.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> space = SearchSpace(CriterionEvaluator(len, 3), CostModel.uniform("abc"), budget=2)
    >>> list(allowed_subsets(space))
    [(0,), (1,), (2,), (0, 1), (0, 2), (1, 2)]
    """
    return iter(space.allowed_subsets())


@register_strategy
class ExhaustiveSearch(SearchStrategy):
    """Evaluate every allowed subset; the answer is the optimum over all of them.

    Parameters
    ----------
    max_subsets : int, default=1048576
        Largest number of allowed subsets accepted (counted exactly, under the budget
        and limits, before any evaluation).
    batch_size : int, default=256
        Subsets per evaluation batch.
    max_candidates : int, optional
        Also refuse more than this many free candidate features (no limit by default).

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: len(set(s) & {0, 2}) - 0.1 * len(s), 4)
    >>> space = SearchSpace(ev, CostModel.uniform("abcd"))
    >>> ExhaustiveSearch().run(space)
    >>> space.chosen, space.n_evaluations, space.stop_reason
    ((0, 2), 15, 'optimum over all 15 allowed subsets')
    """

    name = "exhaustive"

    def __init__(self, max_subsets: int = MAX_SUBSETS, batch_size: int = 256,
                 max_candidates: int | None = None) -> None:
        self.max_subsets = check_int(max_subsets, "max_subsets")
        self.batch_size = check_int(batch_size, "batch_size")
        self.max_candidates = (None if max_candidates is None
                               else check_int(max_candidates, "max_candidates"))

    def check(self, space: SearchSpace) -> None:
        """The candidates and allowed subsets are within ``max_candidates`` / ``max_subsets``
        (counted from the cost table, nothing evaluated)."""
        super().check(space)
        self._count(space)

    def _count(self, space: SearchSpace) -> int:
        n_free = len(space.free_candidates)
        if self.max_candidates is not None and n_free > self.max_candidates:
            raise InputError(
                f"exhaustive search over {n_free} candidate features; the limit is "
                f"max_candidates={self.max_candidates}. Narrow the candidates "
                "(never_include, must_include) or use another strategy",
                key="strategy.options.max_candidates",
            )
        allowed = space.allowed_subsets()
        n_allowed = allowed.count(limit=self.max_subsets)
        if n_allowed > self.max_subsets:
            exact = allowed.count(limit=max(self.max_subsets, 10 ** 9))
            many = f"{exact:,}" if exact <= 10 ** 9 else "more than 1,000,000,000"
            raise InputError(
                f"exhaustive search would evaluate {many} allowed subsets "
                f"({n_free} free candidate features); the limit is max_subsets="
                f"{self.max_subsets:,}. Lower the budget or max_features, narrow the "
                "candidates (never_include, must_include) or use another strategy",
                key="strategy.options.max_subsets",
            )
        return n_allowed

    def run(self, space: SearchSpace) -> None:
        n_allowed = self._count(space)
        allowed = space.allowed_subsets()
        space.extras["allowed_subsets"] = n_allowed
        best = None
        incomplete = 0
        subsets = iter(allowed)
        while batch := list(islice(subsets, self.batch_size)):
            scored = space.evaluate(batch)
            incomplete += sum(not s.complete for s in scored)
            candidate = space.best_of([*([best] if best else []), *scored])
            if best is None or candidate is not best:
                best = candidate
                space.record("best", best.subset)
        if best is None:
            space.stop_reason = "no allowed subset"
            return
        if incomplete:
            space.stop_reason = (f"best of all {n_allowed:,} allowed subsets; {incomplete:,} "
                                 "not evaluated on every fold (racing or failed fits)")
        else:
            space.stop_reason = f"optimum over all {n_allowed:,} allowed subsets"
        space.choose(best.subset)
