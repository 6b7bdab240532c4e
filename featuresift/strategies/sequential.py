"""Budget-aware sequential forward and backward selection.

Both searches record every subset they evaluate and, unless ``n_features`` or ``tol``
is given, answer with the **best subset seen** (the driver then applies the pick rule,
see :func:`featuresift.run_search`). Neither stops at the first step that does not
improve: a measurement that pays only together with a later one is still found.

Forward selection
-----------------
Starts from ``must_include`` and, at each step, evaluates every addable feature as one
batch (a feature is addable when its panel-aware marginal cost keeps the subset within
the budget, the size limit holds and it is not in ``never_include``). It keeps adding
while anything affordable remains. Two rules pick the step:

* ``"gain"`` — the best resulting subset (objective, then score, lower cost, fewer
  features, earlier column): plain sequential forward selection;
* ``"ratio"`` — the best **gain per unit of marginal cost**. The gain is measured
  against the current subset (for the first step from an empty start: against the
  empty set when it has been evaluated, otherwise against the weakest single feature).
  Tiers, best first: gains > 0 at zero marginal cost (a paid panel's other members,
  values on hand), by gain; gains > 0 at a positive cost, by gain / cost; then
  gains <= 0, by gain, cheaper first. Ties: the ``"gain"`` order.

``cost_rule="both"`` (default) runs the ``"gain"`` path, then the ``"ratio"`` path from
the same start (subsets already evaluated are free), and keeps the best subset seen on
either. Ratio rules alone can be arbitrarily bad (a tiny cheap gain that makes a large
valuable item unaffordable), score-only rules spend the budget on one expensive strong
item; keeping the better of the two is the budgeted-greedy safeguard of Leskovec et al.
(2007, "Cost-effective outbreak detection in networks", KDD). The ratio path's steps are
recorded, as ``"add-per-cost"``, from the first step where it leaves the gain path.

Backward selection
------------------
1. **Down to the budget.** Starts from every candidate that fits the budget on its own
   (together with ``must_include``). While the subset is over the budget it removes a
   **unit** — a feature outside any panel, or all the subset's members of one panel
   (removing one member of a panel saves nothing while another member stays) — chosen
   by the rule: ``"ratio"`` takes the unit that saves most cost per unit of objective
   lost, where savings count only up to the excess over the budget (saving more than
   needed buys nothing yet) and removals that lose nothing come first (higher
   objective, then more saved); ``"gain"`` takes the unit whose removal leaves the best
   subset. Over the size limit (``max_features``), single features are removed by the
   ``"gain"`` rule.
2. **Refill.** From there, forward additions with the same rule while anything
   affordable remains (the money freed by step 1 is spent again).
3. **Descent.** From the best subset seen (recorded as "best" when the path was
   elsewhere; on ties, where the first rule ended), remove one feature at a time, best
   remaining subset first (ties: the earlier column, as scikit-learn's
   ``SequentialFeatureSelector``), down to one feature (or to ``must_include``).

With ``cost_rule="both"`` steps 1-2 run with the ratio rule, then with the gain rule,
and the descent starts from the best subset either found.

Options
-------
``n_features``
    Target size: forward paths stop at that size, the backward descent stops there; the
    answer is where the search stopped (for two forward paths, the better end point).
``tol``
    Forward: a path stops when its step would not improve the objective by more than
    ``tol``; backward: the descent stops when the best removal lowers the objective by
    more than ``tol``. The answer is then where the search stopped (a candidate turned
    down by the tolerance is not chosen, even with a slightly higher score); for
    forward with ``cost_rule="both"``, the better of the two stopping points.

Tie-break at every step: higher objective, then higher mean score, then lower cost,
then fewer features, then the feature that comes first in column order.
"""

from __future__ import annotations

import math
from collections.abc import Iterable

from featuresift.engine.progress import Expected
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
    "COST_RULES",
    "best_step",
    "best_removal",
    "eliminate_to_allowed",
    "forward_path",
    "removal_units",
]

COST_RULES = ("both", "gain", "ratio")
"""How sequential steps weigh cost: plain gain, gain per cost, or both paths (better kept)."""


def _check_common(n_features: int | None, tol: float | None, cost_rule: str) -> None:
    if n_features is not None and (
        isinstance(n_features, bool) or not isinstance(n_features, int) or n_features < 1
    ):
        raise InputError(f"n_features must be a positive integer, got {n_features!r}")
    if tol is not None and (isinstance(tol, bool) or not isinstance(tol, (int, float))
                            or math.isnan(tol)):
        raise InputError(f"tol must be a number, got {tol!r}")
    if cost_rule not in COST_RULES:
        raise InputError(f"cost_rule must be one of {', '.join(COST_RULES)}, got {cost_rule!r}")


def best_step(space: SearchSpace, moves: list[tuple[int, Scored]]) -> tuple[int, Scored]:
    """The best (feature, scored) move; ties go to the earlier feature in column order."""
    best_f, best_s = moves[0]
    best_key = space.rank_key(best_s)[:5]
    for f, s in moves[1:]:
        key = space.rank_key(s)[:5]
        if key > best_key:
            best_f, best_s, best_key = f, s, key
    return best_f, best_s


def _value(s: Scored) -> float:
    return s.value if s.complete and not math.isnan(s.value) else -math.inf


def _ratio_key(space: SearchSpace, base: float, s: Scored, extra_cost: float) -> tuple:
    """Sort key of the ``"ratio"`` rule (larger is better); see the module notes."""
    gain = _value(s) - base
    if gain > 0 and extra_cost <= 0:
        head: tuple = (2, gain)
    elif gain > 0:
        head = (1, gain / extra_cost)
    else:
        head = (0, gain if math.isfinite(gain) else -math.inf, -extra_cost)
    return (head, space.rank_key(s)[:5])


def best_ratio_step(space: SearchSpace, current: tuple[int, ...], base: float,
                    moves: list[tuple[int, Scored]]) -> tuple[int, Scored]:
    """The (feature, scored) addition with the best gain per marginal cost.

    Ties go to the better subset, then the earlier feature in column order.
    """
    cm = space.cost_model
    best_f, best_s = moves[0]
    best_key = _ratio_key(space, base, best_s, cm.marginal_cost(current, best_f))
    for f, s in moves[1:]:
        key = _ratio_key(space, base, s, cm.marginal_cost(current, f))
        if key > best_key:
            best_f, best_s, best_key = f, s, key
    return best_f, best_s


def forward_path(
    space: SearchSpace,
    start: tuple[int, ...],
    rule: str,
    target: int | None = None,
    tol: float | None = None,
    follow: list[tuple[int, ...]] | None = None,
    action: str = "add",
) -> tuple[Scored | None, list[tuple[int, ...]], str]:
    """Grow ``start`` one feature at a time by ``rule`` ("gain" or "ratio").

    Stops when nothing is addable, at size ``target``, or (with ``tol``) when the step
    would not improve the objective by more than ``tol``. Steps are recorded as
    ``action``, except those that repeat ``follow`` (an earlier path) step for step from the start.

    Returns the last subset reached (None if nothing was evaluated), the subsets of the
    path, and the stop reason.
    """
    current = tuple(start)
    now = space.visited.get(current) if current else None
    if current and now is None:
        (now,) = space.evaluate([current])
    path: list[tuple[int, ...]] = []
    shadowing = follow is not None
    while True:
        if target is not None and len(current) >= target:
            return now, path, f"target size {target} reached"
        feats = space.addable(current)
        if not feats:
            return now, path, "no affordable feature left to add"
        moves = list(zip(feats, space.evaluate([current + (f,) for f in feats])))
        if tol is not None and now is not None:
            # Only steps that improve by more than tol may be taken. The ratio rule must
            # choose among those: a free feature gaining 0.001 would otherwise win on
            # gain per cost and end the path although a dearer one gains 0.02.
            moves = [(f, s) for f, s in moves if _value(s) - _value(now) > tol]
            if not moves:
                return now, path, f"no candidate improves the objective by more than {tol:g}"
        extra = {space.cost_model.marginal_cost(current, f) for f, _ in moves}
        if rule == "gain" or len(extra) == 1:
            # With one marginal cost for all, gain per cost ranks exactly as gain does.
            f, best = best_step(space, moves)
        else:
            if now is None:  # gains of the first step are measured against nothing bought
                (now_empty,) = space.evaluate([()])
                base = _value(now_empty)
            else:
                base = _value(now)
            f, best = best_ratio_step(space, current, base, moves)
        current, now = best.subset, best
        path.append(current)
        if shadowing and follow is not None and len(path) <= len(follow) \
                and follow[len(path) - 1] == current:
            continue
        shadowing = False
        space.record(action, current, f)


def removal_units(space: SearchSpace, subset: Iterable[int]) -> list[tuple[int, ...]]:
    """What can be removed from ``subset`` to save money, in column order of the first member.

    A feature outside any panel is one unit; the subset's members of one panel form one
    unit (all of them must go for the panel's price to be saved). Units containing a
    ``must_include`` feature, and units whose removal saves nothing, are left out.
    """
    s = tuple(sorted(set(subset)))
    must = set(space.must_include)
    names = space.feature_names
    groups: dict[object, list[int]] = {}
    for f in s:
        panel = space.cost_model.panel_of(names[f])
        groups.setdefault(("feature", f) if panel is None else panel, []).append(f)
    units = [tuple(members) for members in groups.values()]
    base = space.cost(s)
    out = []
    for u in units:
        if must & set(u):
            continue
        rest = [f for f in s if f not in u]
        if base - space.cost(rest) > 0:
            out.append(u)
    return out


def _reduce_once(space: SearchSpace, current: Scored, rule: str) -> tuple[Scored, tuple] | None:
    """One removal step towards an allowed subset (see the module notes); None if stuck."""
    sub = current.subset
    if not space.within_budget(sub):
        units = removal_units(space, sub)
        by_budget = True
    else:
        units = [(f,) for f in space.removable(sub)]
        by_budget = False
    units = [u for u in units if len(u) < len(sub)]
    if not units:
        return None
    scored = space.evaluate([tuple(f for f in sub if f not in u) for u in units])
    moves = list(zip(units, scored))
    if rule == "gain" or not by_budget:
        best = moves[0]
        for m in moves[1:]:
            if space.rank_key(m[1])[:5] > space.rank_key(best[1])[:5]:
                best = m
        return best[1], best[0]
    cur_cost = current.cost
    excess = cur_cost - (space.budget if space.budget is not None else cur_cost)
    cur_value = _value(current)

    def key(m: tuple[tuple[int, ...], Scored]) -> tuple:
        unit, s = m
        saved = min(cur_cost - s.cost, excess)
        loss = cur_value - _value(s)
        head = (1, -loss, saved) if loss <= 0 else (0, saved / loss, 0.0)
        return (head, space.rank_key(s)[:5])

    best = moves[0]
    best_key = key(best)
    for m in moves[1:]:
        k = key(m)
        if k > best_key:
            best, best_key = m, k
    return best[1], best[0]


def reduce_to_allowed(space: SearchSpace, rule: str,
                      follow: list[tuple[int, ...]] | None = None
                      ) -> tuple[Scored | None, list[tuple[int, ...]]]:
    """Backward step 1: from every affordable candidate, remove units until allowed.

    Records "start" and each "remove" (a whole panel: action "remove-panel"), except steps
    that repeat ``follow`` from the start. Returns the allowed subset reached (None when
    none exists) and the path.
    """
    must = tuple(space.must_include)
    full = tuple(sorted(set(must) | set(space.addable(must))))
    (now,) = space.evaluate([full])
    if follow is None:
        space.record("start", full)
    path = [full]
    shadowing = follow is not None
    while not space.is_allowed(now.subset):
        step = _reduce_once(space, now, rule)
        if step is None:
            space.stop_reason = "no affordable subset"
            return None, path
        now, unit = step
        path.append(now.subset)
        if shadowing and follow is not None and len(path) <= len(follow) \
                and follow[len(path) - 1] == now.subset:
            continue
        shadowing = False
        if len(unit) == 1:
            space.record("remove", now.subset, unit[0])
        else:
            space.record("remove-panel", now.subset)
    return now, path


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


def eliminate_to_allowed(space: SearchSpace, rule: str = "ratio") -> Scored | None:
    """Start from every affordable candidate and remove units until the subset is allowed.

    The backward search's step 1 with one rule (see the module notes); should nothing
    allowed be reachable, the best affordable single feature is taken ("restart").
    Returns the allowed subset reached, or None when no allowed subset exists.
    """
    now, _ = reduce_to_allowed(space, rule)
    if now is not None:
        return now
    must = tuple(space.must_include)
    feats = space.addable(must)
    if not feats:
        return None
    f, scored = best_step(space, list(zip(feats, space.evaluate([must + (g,) for g in feats]))))
    space.record("restart", scored.subset, f)
    return scored


def best_allowed(space: SearchSpace, size: int | None = None) -> Scored | None:
    """Best complete allowed subset evaluated so far (of ``size`` features, if given)."""
    return space.best_of(
        s for s in space.visited.values()
        if s.subset and s.complete and (size is None or len(s.subset) == size)
        and space.is_allowed(s.subset)
    )


def _rules(cost_rule: str) -> tuple[str, ...]:
    return ("gain", "ratio") if cost_rule == "both" else (cost_rule,)


@register_strategy
class ForwardSelection(SearchStrategy):
    """Budget-aware sequential forward selection (see the module notes).

    Parameters
    ----------
    n_features : int, optional
        Target subset size (including ``must_include``); the answer is the better end
        point of the paths. None: grow while anything is affordable, answer the best seen.
    tol : float, optional
        Stop a path when a step would not improve the objective by more than ``tol``;
        the answer is then where the search stopped. None: no such stop.
    cost_rule : {"both", "gain", "ratio"}, default="both"
        Step rule: best subset, best gain per unit of marginal cost, or both paths with
        the better result kept.

    Examples
    --------
    ``b`` is strong but costs the whole budget; ``a`` and ``c`` together are better:

    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> value = {(0,): 3, (1,): 5, (2,): 3, (0, 2): 7}
    >>> ev = CriterionEvaluator(lambda s: value.get(s, 0), 3, ["a", "b", "c"])
    >>> cm = CostModel(["a", "b", "c"], {"a": 1.0, "b": 4.0, "c": 1.0})
    >>> space = SearchSpace(ev, cm, budget=4)
    >>> ForwardSelection(cost_rule="gain").run(space)
    >>> space.best_of(space.visited.values()).subset
    (1,)
    >>> space = SearchSpace(CriterionEvaluator(lambda s: value.get(s, 0), 3), cm, budget=4)
    >>> ForwardSelection().run(space)
    >>> space.best_of(space.visited.values()).subset
    (0, 2)
    """

    name = "forward"

    def __init__(self, n_features: int | None = None, tol: float | None = None,
                 cost_rule: str = "both") -> None:
        _check_common(n_features, tol, cost_rule)
        self.n_features = n_features
        self.tol = tol
        self.cost_rule = cost_rule

    def expected_evaluations(self, space: SearchSpace) -> Expected:
        """An upper bound of the subsets evaluated (for progress: the time left)."""
        return Expected(_at_most(space, self.n_features, self.cost_rule), "at most")

    def run(self, space: SearchSpace) -> None:
        start = tuple(space.must_include)
        if start:
            space.evaluate([start])
            space.record("start", start)
        ends: list[Scored] = []
        first: list[tuple[int, ...]] | None = None
        reasons = []
        for rule in _rules(self.cost_rule):
            # The ratio path's steps say so: the path table shows both runs in turn.
            end, path, reason = forward_path(space, start, rule, self.n_features, self.tol,
                                             follow=first,
                                             action="add" if rule == "gain" else "add-per-cost")
            first = path if first is None else first
            reasons.append(reason)
            if end is not None:
                ends.append(end)
        space.stop_reason = "; ".join(dict.fromkeys(reasons))
        _answer(space, self.n_features, self.tol, ends)


def _at_most(space: SearchSpace, n_features: int | None, cost_rule: str) -> int:
    """Subsets a sequential search evaluates at most: one step per size, every path."""
    m = len(space.free_candidates)
    k = min(m, space.max_features - len(space.must_include))
    if n_features is not None:
        k = min(k, max(abs(n_features - len(space.must_include)), 1))
    n_paths = 2 if cost_rule == "both" else 1
    return n_paths * sum(m - i for i in range(max(k, 0))) + 1


def _answer(space: SearchSpace, n_features: int | None, tol: float | None,
            ends: list[Scored]) -> None:
    """Name the answer: with ``tol`` or ``n_features``, where the search stopped (the
    better end point of the paths, the first path on ties); otherwise nothing, and the
    driver takes the best allowed subset seen."""
    if tol is None and n_features is None:
        return
    best = None
    for s in ends:
        if s.subset and space.is_allowed(s.subset) and (
                best is None or space.rank_key(s)[:5] > space.rank_key(best)[:5]):
            best = s
    if best is not None:
        space.choose(best.subset)


@register_strategy
class BackwardSelection(SearchStrategy):
    """Budget-aware sequential backward selection (see the module notes).

    Parameters
    ----------
    n_features : int, optional
        Target size: the descent stops there and that is the answer. None: descend to
        one feature, answer the best seen.
    tol : float, optional
        Largest drop in the objective accepted for a removal in the descent; the answer
        is then where it stopped. None: no such stop.
    cost_rule : {"both", "gain", "ratio"}, default="both"
        Rule of the steps down to the budget and of the refill.

    Examples
    --------
    Everything costs 6, the budget is 4: dropping the panel (``c``, ``d``) saves 3 (2
    count, the excess) for a loss of 2, better per unit lost than dropping ``a`` or ``b``:

    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> value = {(0, 1): 7, (0, 1, 2, 3): 9, (0, 2, 3): 6, (1, 2, 3): 6}
    >>> ev = CriterionEvaluator(lambda s: value.get(s, len(s)), 4, ["a", "b", "c", "d"])
    >>> cm = CostModel(["a", "b", "c", "d"], {"a": 1.0, "b": 2.0},
    ...                panels={"lab": (3.0, ["c", "d"])})
    >>> space = SearchSpace(ev, cm, budget=4)
    >>> BackwardSelection().run(space)
    >>> space.path[1].action, space.path[1].subset
    ('remove-panel', (0, 1))
    """

    name = "backward"

    def __init__(self, n_features: int | None = None, tol: float | None = None,
                 cost_rule: str = "both") -> None:
        _check_common(n_features, tol, cost_rule)
        self.n_features = n_features
        self.tol = tol
        self.cost_rule = cost_rule

    def expected_evaluations(self, space: SearchSpace) -> Expected:
        """An upper bound of the subsets evaluated (for progress: the time left)."""
        return Expected(_at_most(space, self.n_features, self.cost_rule), "at most")

    def run(self, space: SearchSpace) -> None:
        first: list[tuple[int, ...]] | None = None
        target = self.n_features
        ends: list[Scored] = []
        for rule in ("ratio", "gain") if self.cost_rule == "both" else (self.cost_rule,):
            now, path = reduce_to_allowed(space, rule, follow=first)
            if now is None:
                return
            first = path if first is None else first
            end, _, _ = forward_path(space, now.subset, rule, target)
            ends.append(end or now)
        # The descent starts where the first rule ended, unless something strictly
        # better (ignoring column order) was seen.
        start = ends[0]
        for s in [*ends[1:], best_allowed(space)]:
            if s is not None and space.rank_key(s)[:5] > space.rank_key(start)[:5]:
                start = s
        if space.path and space.path[-1].subset != start.subset:
            space.record("best", start.subset)
        end = descend(space, start, target, self.tol)
        _answer(space, target, self.tol, [end])


def descend(space: SearchSpace, start: Scored, target: int | None,
            tol: float | None) -> Scored:
    """Backward step 3: remove the best single feature at a time (records "remove")."""
    current = start
    floor = max(len(space.must_include), 1, target or 1)
    space.stop_reason = (f"target size {target} reached" if target is not None
                         else "one feature left")
    while len(current.subset) > floor:
        move = best_removal(space, current.subset)
        if move is None:
            space.stop_reason = "only must_include features left"
            break
        f, best = move
        if tol is not None and _value(best) < _value(current) - tol:
            space.stop_reason = f"every removal lowers the objective by more than {tol:g}"
            break
        current = best
        space.record("remove", current.subset, f)
    return current
