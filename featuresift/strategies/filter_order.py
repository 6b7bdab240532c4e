"""The ``filter-order`` strategy: evaluate the prefixes of an order of measurements.

A filter (greedy mRMR, the cost-weighted L1 path, a pre-screen ranking) produces an
order of candidates without fitting a model. :class:`FilterOrderSearch` turns that
order into a cheap wrapper search: it walks the order, adds each feature that still
fits the budget and size limit (panel-aware, through the search space), and
evaluates all the resulting prefixes in **one batch** - as many model evaluations as
prefixes, instead of the p^2/2 of forward selection. The best prefix by the
objective is chosen.

Without an ``order`` the candidates are ranked by their own score: every affordable
single measurement is evaluated (one batch), and the order is best objective value
first (ties: cheaper first, then column order). That is 2p evaluations in two batches.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from featuresift.errors import InputError
from featuresift.strategies.base import SearchSpace, SearchStrategy, register_strategy

__all__ = ["FilterOrderSearch"]


@register_strategy
class FilterOrderSearch(SearchStrategy):
    """Evaluate the prefixes of a feature order and keep the best.

    Parameters
    ----------
    order : sequence of str or int, optional
        Feature names (or column indices), most promising first; e.g.
        ``FilterSelection.selected`` or ``L1Path.order_names``. Default: the
        candidates ranked by the objective value of each one alone.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: len(set(s) & {1, 2}) - 0.01 * len(s), 4)
    >>> space = SearchSpace(ev, CostModel.uniform(["a", "b", "c", "d"]))
    >>> FilterOrderSearch(order=["b", "c", "a"]).run(space)
    >>> space.chosen
    (1, 2)
    >>> space = SearchSpace(ev, CostModel.uniform(["a", "b", "c", "d"]))
    >>> FilterOrderSearch().run(space)  # order from the single measurements
    >>> space.chosen
    (1, 2)
    """

    name = "filter-order"

    def __init__(self, order: Sequence[str | int] | None = None) -> None:
        if order is not None and (isinstance(order, (str, bytes)) or not len(order)):
            raise InputError("'order' must be a non-empty list of features (or omitted: "
                             "singles ranked by their own score)",
                             key="strategy.options.order")
        self.order = None if order is None else list(order)

    def _columns(self, space: SearchSpace) -> list[int]:
        if self.order is None:
            singles = [f for f in space.addable(space.must_include)]
            scored = space.evaluate([tuple(space.must_include) + (f,) for f in singles])
            ranked = sorted(zip(singles, scored), key=lambda p: p[1].rank_key, reverse=True)
            return [f for f, _ in ranked]
        return self._order(space)

    def check(self, space: SearchSpace) -> None:
        """Every entry of ``order`` names a candidate (or is a column position in range)."""
        super().check(space)
        if self.order is not None:
            self._order(space)

    def _order(self, space: SearchSpace) -> list[int]:
        names = space.feature_names
        index = {n: i for i, n in enumerate(names)}
        out: list[int] = []
        for pos, item in enumerate(self.order or ()):
            if isinstance(item, str):
                if item not in index:
                    raise InputError(f"order[{pos}]: '{item}' is not a candidate feature",
                                     key="strategy.options.order")
                out.append(index[item])
            elif (isinstance(item, (int, np.integer)) and not isinstance(item, bool)
                  and 0 <= item < len(names)):
                out.append(int(item))
            else:
                raise InputError(f"order[{pos}]: expected a feature name or a column position "
                                 f"0 ... {len(names) - 1}, got {item!r}",
                                 key="strategy.options.order")
        return list(dict.fromkeys(out))

    def run(self, space: SearchSpace) -> None:
        current = list(space.must_include)
        prefixes: list[tuple[tuple[int, ...], int]] = []
        if current:
            prefixes.append((tuple(current), -1))
        for f in self._columns(space):
            if f in current or f not in space.addable(current):
                continue
            current = current + [f]
            prefixes.append((tuple(current), f))
        if not prefixes:
            space.stop_reason = "no feature of the order fits the budget"
            return
        scored = space.evaluate([p for p, _ in prefixes])
        for (subset, f), _ in zip(prefixes, scored):
            space.record("start" if f < 0 else "add", subset, None if f < 0 else f)
        best = space.best_of(scored)
        space.choose(best.subset)
        space.stop_reason = f"{len(prefixes)} prefixes of the filter order evaluated"
