"""Budget sweeps: the trade-off of accuracy against acquisition cost.

:func:`budget_sweep` runs one search per budget on a **shared evaluator**, so a subset
scored for one budget is never fitted again for another. The resulting
:class:`Frontier` lists, for each budget, the chosen measurements, their cost and their
**in-search** CV score (the search's own estimate, optimistic), marks the cost-efficient
points, and answers the question a sweep is run for:

* the **headline pick**: the pick rule (the run's ``pick``) applied to the sweep's
  points that fit the run's own budget — with ``one_se``, the cheapest point whose score
  is within one standard error of the best affordable point;
* the **unconstrained best**: the highest in-search score at any budget, shown apart;
* how often each measurement was chosen across budgets (:meth:`Frontier.choice_frequency`);
* optionally, the **nested** (honest) estimate of the search at the headline's budget.

Efficiency, exactly
    A point is *efficient* when its score is finite, it is strictly better than every
    point of strictly lower cost, and at least as good as every point of the same cost;
    among points of the same cost and the same score only the first in budget order is
    marked (several budgets that choose the same subset count once). Costs are equal
    when they differ by at most 1e-9 (panel sums in floating point); scores are compared
    exactly.

Default budgets (``budget_levels``)
    ``"round"`` (default): round money values of the 1-2-5 series (1, 2, 5, 10, 20,
    50 ... in the cost unit) from the cheapest priced measurement or panel up to, not
    including, the price of everything, thinned evenly to at most ``n - 1`` values,
    then unlimited. ``"costs"``: the distinct cost levels instead — the costs at which
    the set of affordable measurements changes (sums of prices of lone measurements
    and panels, :func:`cost_levels`), so no two budgets allow the same subsets; thinned
    to at most ``n - 1`` levels spread evenly on a log scale, then unlimited.
"""

from __future__ import annotations

import inspect
import json
import math
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any

import numpy as np

from featuresift.costs import CostModel
from featuresift.engine.evaluator import BaseEvaluator, CrossValidationEvaluator
from featuresift.engine.journal import reuse_message
from featuresift.errors import InputError
from featuresift.outputs import PLOTS_HINT, RunFolder, figure_png, write_files
from featuresift.problem import SelectionProblem
from featuresift.result import SearchResult, load_json, score_label
from featuresift.search import prepare_for_objective, run_search

__all__ = ["Frontier", "budget_sweep", "default_budgets", "round_budgets", "cost_levels",
           "efficient_points", "BUDGET_LEVELS"]

BUDGET_LEVELS = ("round", "costs")
"""How default budgets are placed: 1-2-5 round money values, or distinct cost levels."""

_ENGINE_OPTIONS = ("racing", "journal", "chunk_size", "verbose", "on_fit_error",
                   "share_preprocessing", "fast_path", "pool", "warm_start", "error_score")
_COST_TOL = 1e-9
SCORE_KIND = "in-search"
"""What the sweep's scores are: the search's own CV estimates (optimistic)."""


def round_budgets(low: float, high: float) -> list[float]:
    """Values of the 1-2-5 series with ``low <= v < high``.

    Examples
    --------
    >>> round_budgets(0.8, 60)
    [1.0, 2.0, 5.0, 10.0, 20.0, 50.0]
    """
    if not (math.isfinite(low) and math.isfinite(high)) or low <= 0 or high <= low:
        return []
    out = []
    for d in range(math.floor(math.log10(low)), math.ceil(math.log10(high)) + 1):
        for m in (1, 2, 5):
            v = float(f"{m}e{d}")
            if low * (1 - 1e-12) <= v < high:
                out.append(v)
    return out


def cost_levels(cost_model: CostModel, limit: int = 2000) -> list[float]:
    """Distinct positive costs of the purchasable subsets, cheapest first.

    A subset's cost is a sum of unit prices (a measurement outside any panel, or a
    panel bought once), so these sums are exactly the budgets at which the set of
    affordable subsets changes: any budget between two neighbouring levels allows the
    same subsets as the lower one. Sums are exact (as :meth:`CostModel.cost` gives
    them). When there are more than ``limit`` levels, the cheapest level of each of
    ``limit`` equal-width cost bins is kept (each value is still an exact level).

    Examples
    --------
    Two lone tests at 1 and 2 EUR and a panel at 2 EUR: sums 1, 2, 3, 4 and 5.

    >>> cm = CostModel(["a", "b", "c", "d"], {"a": 1.0, "b": 2.0},
    ...                panels={"p": (2.0, ["c", "d"])})
    >>> cost_levels(cm)
    [1.0, 2.0, 3.0, 4.0, 5.0]
    """
    prices = [Fraction(p) for p in cost_model.feature_costs.values() if p > 0]
    prices += [Fraction(p) for p, _ in cost_model.panels.values() if p > 0]
    if not prices:
        return []
    den = math.lcm(*(p.denominator for p in prices))  # exact integer arithmetic below
    units = sorted(p.numerator * (den // p.denominator) for p in prices)
    width = max(sum(units) // limit, 1)
    levels = {0}
    for price in units:
        levels |= {v + price for v in levels}
        if len(levels) > limit:  # keep the cheapest level of each bin (still exact sums)
            binned: dict[int, int] = {}
            for v in sorted(levels):
                binned.setdefault(v // width, v)
            levels = set(binned.values())
    return [float(Fraction(v, den)) for v in sorted(levels) if v > 0]


def default_budgets(cost_model: CostModel, n: int = 8,
                    budget_levels: str = "round") -> list[float | None]:
    """Default budgets of a sweep: round values or distinct cost levels, then unlimited.

    With ``budget_levels="round"``, at most ``n - 1`` round values (1-2-5 series, from
    :func:`round_budgets`) between the cheapest positive price of a measurement or panel
    and the price of every candidate (thinned evenly, keeping the smallest and the
    largest). With ``"costs"``, at most ``n - 1`` of the :func:`cost_levels` below the
    price of everything: all of them when few, else the levels nearest below ``n - 1``
    targets spread evenly on a log scale from the cheapest level to the dearest (both
    kept). The list ends with None (unlimited).

    Examples
    --------
    >>> cm = CostModel(["a", "b", "c"], {"a": 1.0, "b": 2.0, "c": 7.0})
    >>> default_budgets(cm, n=4)
    [1.0, 2.0, 5.0, None]
    >>> default_budgets(cm, n=4, budget_levels="costs")
    [1.0, 3.0, 9.0, None]
    >>> grain = CostModel(["m", "p", "d"], {"m": 0.0, "p": 6.0, "d": 12.5})
    >>> default_budgets(grain)
    [10.0, None]
    """
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 2:
        raise InputError(f"a sweep needs at least 2 budgets, got {n!r}")
    if budget_levels not in BUDGET_LEVELS:
        raise InputError(f"budget_levels must be one of {', '.join(BUDGET_LEVELS)}, "
                         f"got {budget_levels!r}")
    items = [cost_model.cost([c]) for c in range(cost_model.n_features)]
    priced = [c for c in items if c > 0]
    if not priced:
        return [None]
    full = cost_model.cost(range(cost_model.n_features))
    if budget_levels == "costs":
        values = [v for v in cost_levels(cost_model) if v < full * (1 - 1e-12)]
        if len(values) > n - 1:
            targets = np.geomspace(values[0], values[-1], n - 1)
            picked = {values[0], values[-1]}
            for t in targets[1:-1]:
                i = int(np.searchsorted(values, t * (1 + 1e-12), side="right")) - 1
                picked.add(values[max(i, 0)])
            values = sorted(picked)
        return [*values, None]
    values = round_budgets(min(priced), full)
    if len(values) > n - 1:
        keep = sorted({int(i) for i in np.round(np.linspace(0, len(values) - 1, n - 1))})
        values = [values[i] for i in keep]
    return [*values, None]


def efficient_points(costs: Sequence[float], scores: Sequence[float]) -> list[bool]:
    """Flag the non-dominated points (see the module docstring for the exact rule).

    Examples
    --------
    Four budgets choosing the same subset are one efficient point:

    >>> efficient_points([1.0, 3.0, 3.0, 3.0, 3.0], [0.7, 0.8, 0.8, 0.8, 0.8])
    [True, True, False, False, False]
    """
    return [math.isfinite(s) and not d for s, d in zip(scores, _dominators(costs, scores))]


def _dominators(costs: Sequence[float], scores: Sequence[float]) -> list[list[int]]:
    """For each point, the points that make it not efficient (module docstring's rule):
    a strictly cheaper one scoring at least as well, one of the same cost scoring
    higher, or an earlier one of the same cost and score. Empty for a non-finite score
    (never efficient, dominated by nothing)."""
    out: list[list[int]] = []
    for i, (c, s) in enumerate(zip(costs, scores)):
        found: list[int] = []
        for j, (c2, s2) in enumerate(zip(costs, scores)):
            if not math.isfinite(s) or j == i or not math.isfinite(s2):
                continue
            same = abs(c2 - c) <= _COST_TOL * max(1.0, abs(c))
            if (c2 < c and not same and s2 >= s) or (same and (s2 > s or (s2 == s and j < i))):
                found.append(j)
        out.append(found)
    return out


_efficient = efficient_points  # older private name


def _sem(r: SearchResult) -> float:
    n = len(r.fold_scores)
    return r.score_std / math.sqrt(n) if n > 1 and math.isfinite(r.score_std) else 0.0


def _default_pick() -> str:
    return inspect.signature(run_search).parameters["pick"].default


def _guard_on(guard: Any) -> bool:
    if guard is None or guard is False or guard == "off":
        return False
    return not (isinstance(guard, dict) and guard.get("name") == "off")


def _without_guard(options: dict[str, Any]) -> dict[str, Any]:
    """Search options with the driver's noise guard off (it would re-run each search in
    outer folds: a sweep point or an outer fold of a nested estimate must not)."""
    if "guard" in inspect.signature(run_search).parameters:
        return {**options, "guard": "off"}
    return dict(options)


def _value(r: SearchResult) -> float:
    """The objective value of a point (its mean score under the plain score objective)."""
    v = (r.objective or {}).get("value")
    return float(v) if isinstance(v, (int, float)) and math.isfinite(v) else r.score_mean


def _pick_key(cands: list[tuple[Any, float, float, float, int]], rule: str) -> Any:
    """Key chosen by ``rule`` among (key, cost, value, sem, size) candidates.

    Ties go to the earlier candidate (points in budget order come before references).
    """
    ok = [(pos, c) for pos, c in enumerate(cands) if math.isfinite(c[2])]
    if not ok:
        return None
    best = max(ok, key=lambda pc: (pc[1][2], -pc[1][1], -pc[1][4], -pc[0]))[1]
    if rule == "best":
        return best[0]
    # one-se (Breiman et al. 1984): cheapest candidate within one SE of the best.
    threshold = best[2] - best[3]
    close = [(pos, c) for pos, c in ok if c[2] >= threshold - 1e-12 * max(1.0, abs(threshold))]
    return min(close, key=lambda pc: (round(pc[1][1], 9), -pc[1][2], pc[1][4], pc[0]))[1][0]


@dataclass
class Frontier:
    """Results of a budget sweep.

    Attributes
    ----------
    budgets : list of float or None
        Budgets searched (None: unlimited).
    results : list of SearchResult
        One search result per budget.
    cost_unit : str
    scoring : str
    n_fits : int
        Model fits for the whole sweep (shared cache).
    n_fits_without_cache : int
        Fits the same searches would have needed with no sharing between budgets.
    budget : float or None
        The run's own budget: the headline pick must fit it (None: unlimited).
    pick : str
        Pick rule of the headline: "best" (highest in-search score), otherwise the
        one-standard-error rule ("one-se", alias "one_se": the cheapest point whose score
        is within one standard error of the best affordable point). The references
        (nothing, free only, everything) compete when the searches report them.
    nested : NestedEvaluation or None
        Nested estimate of the search at the headline's budget, when asked for.
    guard : dict
        The noise guard's record for the headline (empty when no guard ran): what
        :func:`featuresift.run_search` reports, plus ``fallback`` (the reference the
        headline became) when the guard replaced it.

    Examples
    --------
    >>> from sklearn.datasets import load_wine
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_wine(return_X_y=True)
    >>> costs = CostModel.uniform(["alcohol", "malic", "ash", "alkalinity"], unit="EUR")
    >>> problem = SelectionProblem(X[:, :4], y, GaussianNB(), costs=costs, cv=3)
    >>> fr = budget_sweep(problem, [1, 2], "forward", pick="best")
    >>> fr.budgets, [r.selected for r in fr.results], fr.cost_unit
    ([1, 2], [['alcohol'], ['alcohol', 'malic']], 'EUR')
    >>> fr.n_fits, fr.n_fits_without_cache  # the second search reuses the first one's fits
    (27, 45)
    >>> fr.to_frame()["cost"].tolist(), fr.headline_index, fr.best_index
    ([1.0, 2.0], 1, 1)
    """

    budgets: list[float | None]
    results: list[SearchResult]
    cost_unit: str
    scoring: str
    n_fits: int
    n_fits_without_cache: int
    budget: float | None = None
    pick: str = "best"
    nested: Any = field(default=None, repr=False)
    guard: dict[str, Any] = field(default_factory=dict)

    # -------------------------------------------------------------- the answer
    @property
    def references(self) -> dict[str, dict[str, Any]]:
        """The references ("nothing", "free only", "everything") evaluated by the searches.

        Name -> ``features``, ``cost``, ``score_mean``, ``score_sem``, ``objective`` (the
        same in every search of the sweep: same folds), and ``allowed``: whether some
        search of the sweep could answer with it. Empty when the searches report none.
        """
        out: dict[str, dict[str, Any]] = {}
        for r in self.results:
            for name, ref in (getattr(r, "references", None) or {}).items():
                if name not in out:
                    out[name] = {**ref, "allowed": bool(ref.get("allowed", True))}
                elif ref.get("allowed", True):
                    out[name]["allowed"] = True
        return out

    def _fits(self, cost: float) -> bool:
        cap = self.budget
        return cap is None or cost <= cap + _COST_TOL * max(1.0, cap)

    def _candidates(self, within_budget: bool) -> list[tuple[Any, float, float, float, int]]:
        cands: list[tuple[Any, float, float, float, int]] = [
            (i, r.cost, _value(r), _sem(r), len(r.selected))
            for i, r in enumerate(self.results) if not within_budget or self._fits(r.cost)
        ]
        for name, ref in self.references.items():
            value = ref.get("objective", ref.get("score_mean"))
            if value is None or not ref["allowed"] or (within_budget
                                                       and not self._fits(ref["cost"])):
                continue
            cands.append((name, float(ref["cost"]), float(value),
                          float(ref.get("score_sem") or 0.0), len(ref["features"])))
        return cands

    def _point_of(self, key: Any) -> int | None:
        if key is None or isinstance(key, int):
            return key
        features = set(self.references[key]["features"])
        return next((i for i, r in enumerate(self.results) if set(r.selected) == features),
                    None)

    @property
    def headline_key(self) -> int | str | None:
        """The headline: a point index, or a reference name when a reference that no
        point equals is the pick (or the noise guard fell back to it)."""
        fallback = (self.guard or {}).get("fallback")
        if fallback:
            return fallback if self._point_of(fallback) is None else self._point_of(fallback)
        key = _pick_key(self._candidates(True), self.pick)
        point = self._point_of(key)
        return key if point is None else point

    @property
    def headline_index(self) -> int | None:
        """Index of the headline point: the pick rule within :attr:`budget` (None when
        the headline is a reference no point equals, or nothing fits the budget)."""
        key = self.headline_key
        return key if isinstance(key, int) else None

    @property
    def headline_reference(self) -> str | None:
        """Name of the reference the headline is (its measurements), if any."""
        key = self.headline_key
        if isinstance(key, str):
            return key
        if key is None:
            return None
        chosen = set(self.results[key].selected)
        return next((n for n, ref in self.references.items()
                     if set(ref["features"]) == chosen), None)

    @property
    def best_index(self) -> int | None:
        """Index of the highest in-search score at any budget (ties: cheaper)."""
        cands = [c for c in self._candidates(False) if isinstance(c[0], int)]
        return _pick_key(cands, "best")

    @property
    def headline(self) -> SearchResult | None:
        """The headline :class:`SearchResult` (None when it is a reference no point
        equals, or no point fits the budget)."""
        i = self.headline_index
        return None if i is None else self.results[i]

    def choice_frequency(self):
        """How often each measurement was chosen across the sweep's budgets.

        Returns
        -------
        pandas.DataFrame
            One row per measurement chosen at least once: ``feature``, ``n_budgets``
            (points that chose it), ``share`` (of all points), ``first_budget`` (the
            smallest budget that chose it; NaN = unlimited), ``in_headline``. Sorted by
            share, then first budget.
        """
        import pandas as pd

        head = self.headline
        rows: dict[str, dict[str, Any]] = {}
        order = sorted(range(len(self.budgets)),
                       key=lambda i: math.inf if self.budgets[i] is None else self.budgets[i])
        for i in order:
            for name in self.results[i].selected:
                row = rows.setdefault(name, {
                    "feature": name, "n_budgets": 0,
                    "first_budget": np.nan if self.budgets[i] is None else self.budgets[i],
                    "in_headline": head is not None and name in head.selected,
                })
                row["n_budgets"] += 1
        frame = pd.DataFrame(list(rows.values()),
                             columns=["feature", "n_budgets", "first_budget", "in_headline"])
        frame.insert(2, "share", frame["n_budgets"] / max(len(self.results), 1))
        return frame.sort_values(["share", "first_budget"], ascending=[False, True],
                                 na_position="last", kind="stable").reset_index(drop=True)

    # -------------------------------------------------------------- tables
    def reference_frame(self):
        """One row per reference: ``reference``, ``n_selected``, ``selected``, ``cost``,
        ``score_kind``, ``score_mean``, ``score_sem``, ``allowed`` (some search of the
        sweep could answer with it), ``headline``. ``selected`` holds tuples of names."""
        import pandas as pd

        head = self.headline_reference
        rows = [{
            "reference": name, "n_selected": len(ref["features"]),
            "selected": tuple(ref["features"]), "cost": float(ref["cost"]),
            "score_kind": SCORE_KIND,
            "score_mean": np.nan if ref.get("score_mean") is None else ref["score_mean"],
            "score_sem": np.nan if ref.get("score_sem") is None else ref["score_sem"],
            "allowed": ref["allowed"], "headline": name == head,
        } for name, ref in self.references.items()]
        return pd.DataFrame(rows, columns=["reference", "n_selected", "selected", "cost",
                                           "score_kind", "score_mean", "score_sem",
                                           "allowed", "headline"])

    def to_frame(self):
        """One row per budget: budget, chosen features, cost, in-search score, flags.

        ``selected`` holds tuples of names (as in :meth:`SearchResult.evaluations_frame`;
        ``frontier.csv`` joins them with " + "). ``efficient`` follows
        :func:`efficient_points`; ``headline`` marks the pick within the run's budget and
        ``best`` the highest score at any budget.
        """
        import pandas as pd

        costs = [r.cost for r in self.results]
        scores = [r.score_mean for r in self.results]
        eff = efficient_points(costs, scores)
        head, best = self.headline_index, self.best_index
        rows = []
        for i, (b, r, e) in enumerate(zip(self.budgets, self.results, eff)):
            rows.append({
                "budget": np.nan if b is None else b,
                "n_selected": len(r.selected),
                "selected": tuple(r.selected),
                "cost": r.cost,
                "score_kind": SCORE_KIND,
                "score_mean": r.score_mean,
                "score_std": r.score_std,
                "score_sem": _sem(r),
                "efficient": e,
                "headline": i == head,
                "best": i == best,
                "n_evaluations": r.n_evaluations,
                "n_failed_fits": int(r.failures.get("n_failed_fits", 0)),
            })
        return pd.DataFrame(rows)

    def pick_marks(self) -> list[str]:
        """Per point, "headline", "best at any budget" or "" (the ``pick`` column of the
        console table and report.md)."""
        head, best = self.headline_index, self.best_index
        return ["headline" if i == head else ("best at any budget" if i == best else "")
                for i in range(len(self.results))]

    def efficiency_notes(self) -> list[str]:
        """Per point, "yes" when it is efficient, else "no: " and which point makes it so.

        The words of the ``efficient`` column of the console table and of report.md
        (``frontier.csv`` keeps its True/False column). The point named is one of those
        the rule of :func:`efficient_points` finds against it: a budget that chose the
        same measurements first, else the cheapest efficient one, else the first.

        Examples
        --------
        Budget 1 twice (each measurement costs 1 by default), then 2:

        >>> from sklearn.datasets import load_iris
        >>> from sklearn.naive_bayes import GaussianNB
        >>> data = load_iris()
        >>> fr = budget_sweep(SelectionProblem(data.data, data.target, GaussianNB(), cv=3),
        ...                   [1, 1, 2], "forward")
        >>> fr.efficiency_notes()
        ['yes', 'no: same choice as at budget 1', 'yes']
        """
        costs = [r.cost for r in self.results]
        scores = [r.score_mean for r in self.results]
        eff = efficient_points(costs, scores)
        notes = []
        for i, (r, found) in enumerate(zip(self.results, _dominators(costs, scores))):
            if eff[i]:
                notes.append("yes")
                continue
            if not found:
                notes.append("no: in-search score undefined (failed fits)")
                continue
            same_set = [j for j in found if set(self.results[j].selected) == set(r.selected)]
            on_front = sorted((j for j in found if eff[j]), key=lambda j: (costs[j], j))
            j = (same_set or on_front or found)[0]
            b = "unlimited" if self.budgets[j] is None else f"{self.budgets[j]:g}"
            if j in same_set:
                notes.append(f"no: same choice as at budget {b}")
                continue
            same_cost = abs(costs[j] - costs[i]) <= _COST_TOL * max(1.0, abs(costs[i]))
            if same_cost and scores[j] == scores[i]:
                notes.append(f"no: ties the choice at budget {b} (same cost and in-search "
                             "score), listed first")
                continue
            cost = "same cost" if same_cost else "cheaper"
            score = "higher" if scores[j] > scores[i] else "same"
            notes.append(f"no: below the choice at budget {b}: {cost}, {score} in-search "
                         "score")
        return notes

    def csv_frame(self):
        """:meth:`to_frame` as ``frontier.csv`` holds it: ``selected`` joined with " + "
        (empty when the search bought nothing).

        Examples
        --------
        >>> from sklearn.datasets import load_iris
        >>> from sklearn.naive_bayes import GaussianNB
        >>> X, y = load_iris(return_X_y=True)
        >>> fr = budget_sweep(SelectionProblem(X, y, GaussianNB(), cv=3), [1, 2])
        >>> fr.to_frame()["selected"][1], fr.csv_frame()["selected"][1]
        (('x0', 'x3'), 'x0 + x3')
        """
        frame = self.to_frame()
        return frame.assign(selected=[" + ".join(s) for s in frame["selected"]])

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready description of the sweep (``results``: each search in full)."""
        frame = self.to_frame()
        head, best = self.headline_index, self.best_index
        choices = self.choice_frequency()
        return {
            "cost_unit": self.cost_unit,
            "scoring": self.scoring,
            "score_kind": SCORE_KIND,
            "budget": self.budget,
            "pick": self.pick,
            "headline": head,
            "headline_reference": self.headline_reference,
            "best": best,
            "references": self.references,
            "guard": self.guard,
            "n_fits": self.n_fits,
            "n_fits_without_cache": self.n_fits_without_cache,
            # The one seed of every search of the sweep (each result records it too).
            "seed": self.results[0].seed if self.results else None,
            "points": [
                {
                    "budget": b,
                    "selected": r.selected,
                    "cost": r.cost,
                    "score_mean": r.score_mean,
                    "score_std": r.score_std,
                    "score_sem": _sem(r),
                    "efficient": bool(e),
                }
                for b, r, e in zip(self.budgets, self.results, frame["efficient"])
            ],
            "choice_frequency": [
                {"feature": row.feature, "n_budgets": int(row.n_budgets),
                 "share": float(row.share),
                 "first_budget": None if math.isnan(row.first_budget)
                 else float(row.first_budget),
                 "in_headline": bool(row.in_headline)}
                for row in choices.itertuples()
            ],
            "nested": None if self.nested is None else {
                "budget": self.nested_budget,
                **self.nested.to_dict(),
            },
            "results": [r.to_dict() for r in self.results],
        }

    def to_json(self, indent: int = 2) -> str:
        """The sweep as a JSON string (what ``frontier.json`` holds)."""
        return json.dumps(self.to_dict(), indent=indent)

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Frontier:
        """Rebuild a sweep from :meth:`to_dict` output (or a loaded ``frontier.json``)."""
        from featuresift.nested import NestedEvaluation

        if "results" not in data or "points" not in data:
            raise ValueError("not a featuresift frontier: 'points' and 'results' are needed")
        nested = data.get("nested")
        return cls(
            budgets=[p["budget"] for p in data["points"]],
            results=[SearchResult.from_dict(r) for r in data["results"]],
            cost_unit=data["cost_unit"],
            scoring=data["scoring"],
            n_fits=int(data["n_fits"]),
            n_fits_without_cache=int(data["n_fits_without_cache"]),
            budget=data.get("budget"),
            pick=data.get("pick", "best"),
            nested=None if nested is None else NestedEvaluation.from_dict(nested),
            guard=dict(data.get("guard") or {}),
        )

    @classmethod
    def from_json(cls, text: str | os.PathLike) -> Frontier:
        """Load a sweep from a JSON string or a ``frontier.json`` file.

        Examples
        --------
        >>> from sklearn.datasets import load_iris
        >>> from sklearn.naive_bayes import GaussianNB
        >>> X, y = load_iris(return_X_y=True)
        >>> p = SelectionProblem(X, y, GaussianNB(), cv=3)
        >>> fr = budget_sweep(p, [1, 2])
        >>> Frontier.from_json(fr.to_json()).to_dict() == fr.to_dict()
        True
        """
        return cls.from_dict(load_json(text))

    def __repr__(self) -> str:
        from featuresift.display import frontier_repr

        return frontier_repr(self)

    def _repr_html_(self) -> str:
        from featuresift.display import frontier_html

        return frontier_html(self)

    @property
    def nested_budget(self) -> float | None:
        """The budget of the search whose nested estimate :attr:`nested` holds."""
        head = self.headline_index
        return None if head is None else self.budgets[head]

    def _describe(self, key: int | str | None) -> str:
        label = score_label(SCORE_KIND, self.scoring)
        if key is None:
            return "no point fits the budget"
        if isinstance(key, str):
            ref = self.references[key]
            feats = ref["features"]
            what = (" + ".join(feats) if 0 < len(feats) <= 6
                    else f"{len(feats)} measurements" if feats else "no measurement")
            mean, sem = ref.get("score_mean"), ref.get("score_sem") or 0.0
            score = "—" if mean is None else f"{mean:.4f} ± {sem:.4f} (s.e.)"
            return (f"reference '{key}': {what} — cost {float(ref['cost']):g} "
                    f"{self.cost_unit}, {label} {score}")
        r = self.results[key]
        b = "unlimited" if self.budgets[key] is None else f"{self.budgets[key]:g}"
        what = " + ".join(r.selected) if r.selected else "no measurement"
        ref = self.headline_reference if key == self.headline_key else None
        return (f"budget {b}: {what}{f' (reference {ref!r})' if ref else ''} — cost "
                f"{r.cost:g} {self.cost_unit}, {label} {r.score_mean:.4f} ± "
                f"{_sem(r):.4f} (s.e.)")

    def answer_lines(self) -> list[str]:
        """Plain-text lines: the headline pick, the unconstrained best, the references,
        the noise guard's verdict and the nested score."""
        cap = "unlimited" if self.budget is None else f"{self.budget:g} {self.cost_unit}"
        head = self.headline_key
        lines = [f"Headline (pick rule {self.pick}, within the budget {cap}): "
                 + self._describe(head)]
        if self.best_index is not None and self.best_index != head:
            lines.append("Highest in-search score at any budget (unconstrained, not the "
                         "answer): " + self._describe(self.best_index))
        for name in self.references:
            if name != head:
                text = self._describe(name)
                lines.append(text[0].upper() + text[1:])
        if self.guard:
            g = self.guard
            detail = f", p = {g['p_value']:.3g}" if isinstance(g.get("p_value"), float) else ""
            fits = f", {g['n_fits']} model fits" if g.get("n_fits") else ""
            lines.append(f"Noise guard ({g.get('name')}) on the headline: "
                         f"{g.get('decision')}{detail}{fits}")
        if self.nested is not None:
            ne = self.nested
            ci = "" if ne.ci is None else (
                f", {ne.confidence:.0%} CI [{ne.ci[0]:.4f}, {ne.ci[1]:.4f}]")
            lines.append(f"The search at the headline's budget, {ne.design}: "
                         f"{score_label('nested', self.scoring)} {ne.outer_mean:.4f}{ci}; "
                         f"optimism of the in-search estimate {ne.optimism:+.4f}")
        return lines

    def to_markdown(self, plot: str | None = "frontier.png") -> list[str]:
        """Lines of the report section on the sweep.

        ``plot`` is the file name of the plot beside the report, or None when none was
        drawn (the section then says how to get plots instead of linking a missing image).
        """
        u = self.cost_unit
        frame = self.to_frame()

        def cell(v: float, digits: int) -> str:
            return "—" if not math.isfinite(v) else f"{v:.{digits}f}"

        lines = [
            "## Accuracy against cost across budgets",
            "",
            f"Scores: **{score_label(SCORE_KIND, self.scoring)}** — each search's own "
            "cross-validation of its choice, optimistic since the search chose the subset "
            "on those folds.",
            "",
            *[f"- {s}" for s in self.answer_lines()],
            "",
            f"| budget | measurements | cost ({u}) | {self.scoring} ({SCORE_KIND}) | ± s.e. "
            "| pick | efficient |",
            "|---|---|---|---|---|---|---|",
        ]
        for r, mark, note in zip(frame.itertuples(), self.pick_marks(),
                                 self.efficiency_notes()):
            lines.append(
                f"| {'unlimited' if math.isnan(r.budget) else f'{r.budget:g}'} | "
                f"{_joined(r.selected)} | {cell(r.cost, 2)} | {cell(r.score_mean, 4)} | "
                f"{cell(r.score_sem, 4)} | {mark} | {note} |"
            )
        for r in self.reference_frame().itertuples():
            lines.append(
                f"| reference: {r.reference} | {_joined(r.selected)} | "
                f"{cell(r.cost, 2)} | {cell(r.score_mean, 4)} | {cell(r.score_sem, 4)} | "
                f"{'headline' if r.headline else ''} | |"
            )
        choices = self.choice_frequency()
        lines += ["", "How often each measurement was chosen across the budgets:", "",
                  "| measurement | budgets choosing it | share | first chosen at budget |",
                  "|---|---|---|---|"]
        for r in choices.itertuples():
            first = "unlimited" if math.isnan(r.first_budget) else f"{r.first_budget:g}"
            lines.append(f"| {r.feature} | {r.n_budgets} | {r.share:.2f} | {first} |")
        lines += [
            "",
            f"The sweep used {self.n_fits} model fits; without sharing evaluations between "
            f"budgets it would have needed {self.n_fits_without_cache}."
            + (f" {reused}" if self.results and (reused := reuse_message(
                self.results[-1].extras.get("engine"))) else ""),
            "",
            f"![accuracy against cost]({plot})" if plot else f"No plot was drawn: {PLOTS_HINT}.",
        ]
        return lines

    # -------------------------------------------------------------- plot and files
    def plot(self, ax=None):
        """Draw in-search score against cost (error bars: one standard error).

        The headline pick and, if different, the unconstrained best are marked; the run's
        budget is a dotted vertical line; the references "nothing" and "free only" are
        horizontal lines with a ± 1 s.e. band (any budget reaches them), "everything" a
        diamond; the noise guard's verdict on the headline is in the title. Requires
        matplotlib. Returns the axes. Draws on ``ax`` (a new figure from
        ``matplotlib.pyplot`` when None); the matplotlib backend is left as it is.
        """
        if ax is None:
            import matplotlib.pyplot as plt

            _, ax = plt.subplots(figsize=(7, 4.5))
        frame = self.to_frame()
        eff = frame[frame["efficient"]].sort_values("cost")
        ax.errorbar(
            frame["cost"], frame["score_mean"], yerr=frame["score_sem"], fmt="o",
            color="0.55", ecolor="0.75", capsize=3,
            label="chosen subset per budget (± 1 s.e.)",
        )
        ax.step(eff["cost"], eff["score_mean"], where="post", color="tab:green",
                label="efficient choices")
        ax.plot(eff["cost"], eff["score_mean"], "o", color="tab:green", zorder=4)
        for _, row in eff.iterrows():
            ax.annotate(f"{int(row['n_selected'])}", (row["cost"], row["score_mean"]),
                        textcoords="offset points", xytext=(4, -12), fontsize=8)
        refs = self.reference_frame()
        styles = {"nothing": ("--", "tab:purple"), "free only": ("-.", "tab:orange")}
        for r in refs.itertuples():
            if not math.isfinite(r.score_mean):
                continue
            if r.reference in styles:  # a level any budget can reach: a line with its band
                ls, color = styles[r.reference]
                ax.axhline(r.score_mean, ls=ls, color=color, lw=1,
                           label=f"reference: {r.reference} (± 1 s.e.)")
                if math.isfinite(r.score_sem) and r.score_sem > 0:
                    ax.axhspan(r.score_mean - r.score_sem, r.score_mean + r.score_sem,
                               color=color, alpha=0.12, lw=0)
            else:
                ax.errorbar([r.cost], [r.score_mean], yerr=[r.score_sem], fmt="D",
                            color="tab:brown", capsize=3, label=f"reference: {r.reference}")
        head, best = self.headline_key, self.best_index
        if head is not None:
            if isinstance(head, str):
                ref = refs.set_index("reference").loc[head]
                x, y = ref["cost"], ref["score_mean"]
            else:
                x, y = frame.iloc[head]["cost"], frame.iloc[head]["score_mean"]
            ax.plot([x], [y], "*", ms=14, color="tab:blue", zorder=5,
                    label=f"headline pick ({self.pick})")
        if best is not None and best != head:
            r = frame.iloc[best]
            ax.plot([r["cost"]], [r["score_mean"]], "s", ms=9, mfc="none", color="tab:red",
                    zorder=5, label="best at any budget")
        if self.budget is not None:
            ax.axvline(self.budget, ls=":", color="0.4", label="budget of the run")
        ax.set_xlabel(f"acquisition cost per sample ({self.cost_unit})")
        ax.set_ylabel(score_label(SCORE_KIND, self.scoring))
        verdict = ""
        if self.guard.get("decision"):
            verdict = f"\nnoise guard on the headline: {self.guard['decision']}"
        ax.set_title(f"Accuracy against measurement cost: {score_label(SCORE_KIND)}\n"
                     f"(numbers: measurements chosen){verdict}", fontsize=9)
        ax.grid(alpha=0.3)
        ax.legend(loc="lower right", fontsize=7)
        return ax

    def output_files(self, plot: bool = True) -> dict[str, str | bytes]:
        """Content of ``frontier.csv``, ``frontier_choices.csv``, ``frontier.json`` and
        ``frontier.png`` by file name.

        The plot is left out when ``plot`` is False or matplotlib is not installed
        (:func:`featuresift.outputs.plots_available`).
        """
        files: dict[str, str | bytes] = {
            "frontier.csv": self.csv_frame().to_csv(index=False),
            "frontier_choices.csv": self.choice_frequency().to_csv(index=False),
            "frontier.json": json.dumps(self.to_dict(), indent=2) + "\n",
        }
        png = figure_png(lambda fig: self.plot(ax=fig.subplots()), (7, 4.5)) if plot else None
        if png is not None:
            files["frontier.png"] = png
        return files

    def write(self, folder: str | os.PathLike | RunFolder, plot: bool = True) -> list[Path]:
        """Write ``frontier.csv``, ``frontier_choices.csv``, ``frontier.json`` and (if
        matplotlib) ``frontier.png``.

        Files are written atomically, never through a symbolic link
        (:func:`featuresift.outputs.write_files`). Returns only the paths written: without
        matplotlib there is no ``frontier.png`` (``pip install "featuresift[plots]"``).
        """
        return write_files(folder, self.output_files(plot=plot))


def _joined(selected: tuple[str, ...]) -> str:
    """A ``selected`` cell of :meth:`Frontier.to_frame` in a table of text."""
    return " + ".join(selected) or "(nothing)"


def budget_sweep(
    problem: SelectionProblem,
    budgets: Sequence[float | None] | int = 8,
    strategy: str | dict = "greedy-swap",
    *,
    budget_levels: str = "round",
    budget: float | None = None,
    nested: int | None = None,
    n_repeats: int = 1,
    n_jobs: int | None = None,
    evaluator: BaseEvaluator | None = None,
    **search_options: Any,
) -> Frontier:
    """Run one search per budget on a shared evaluator.

    Parameters
    ----------
    problem : SelectionProblem
        Data, model, costs, CV splits and scorer.
    budgets : sequence of float or None, or int, default=8
        Budgets to search (None: unlimited), or at most that many default budgets
        (see :func:`default_budgets`).
    strategy : str or dict, default="greedy-swap"
        Strategy name or spec, as for :func:`featuresift.run_search`.
    budget_levels : {"round", "costs"}, default="round"
        Where default budgets go when ``budgets`` is a number: round money values
        (1-2-5 series) or the distinct cost levels of the cost table
        (:func:`cost_levels`).
    budget : float, optional
        The run's own budget: the headline pick is chosen among the points that fit it
        (default: unlimited).
    nested : int, optional
        K: also compute the nested estimate of the search at the headline's budget
        (:func:`featuresift.nested.nested_evaluation` with K outer folds, the problem's
        number of CV folds inside). Its caveat: the choice of that budget from the sweep
        is not itself nested.
    n_repeats : int, default=1
        R repeats of the K outer folds of ``nested``.
    n_jobs : int, optional
        Parallel fits.
    evaluator : BaseEvaluator, optional
        An evaluator to share; default a new :class:`CrossValidationEvaluator` built
        with the engine options found in ``search_options`` (``racing``, ``journal``,
        ``chunk_size``, ``on_fit_error``, ``share_preprocessing``, ``fast_path``,
        ``pool``, ``warm_start``, ``error_score``). ``verbose`` shows each budget's
        search (one bar, or one line per step when output is piped; see
        :class:`~featuresift.engine.progress.SearchProgress`).
    **search_options
        Passed to :func:`featuresift.run_search` (objective, pick, limits, strategy
        options...). The noise guard (``guard``) is not run per budget: it is applied
        once, to the headline (the search at the headline's budget re-run with the
        guard); when it falls back, the headline becomes that reference
        (:attr:`Frontier.guard`).

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_iris(return_X_y=True)
    >>> cm = CostModel(["a", "b", "c", "d"], {"a": 1, "b": 1, "c": 5, "d": 5})
    >>> p = SelectionProblem(X, y, GaussianNB(), costs=cm, cv=3)
    >>> fr = budget_sweep(p, [1, 6, None], budget=6)
    >>> [r.cost <= 6 for r in fr.results[:2]], fr.headline.cost <= 6
    ([True, True], True)
    """
    if isinstance(budgets, int) and not isinstance(budgets, bool):
        budgets = default_budgets(problem.cost_model, budgets, budget_levels)
    budgets = list(budgets)
    if not budgets:
        raise InputError("a sweep needs at least one budget")
    if nested is not None and (isinstance(nested, bool) or not isinstance(nested, int)
                               or nested < 2):
        raise InputError(f"nested needs at least 2 outer folds, got {nested!r}")
    engine = {k: search_options.pop(k) for k in _ENGINE_OPTIONS if k in search_options}
    # Progress is shown per search (one bar or one line per step, naming the budget),
    # not per batch of the shared evaluator.
    verbose = engine.pop("verbose", 0)
    original, objective_spec = problem, search_options.get("objective")
    owned = evaluator is None
    if evaluator is None:
        # An objective with its own scorer (expected cost) must score the sweep too.
        problem, search_options["objective"] = prepare_for_objective(
            problem, search_options.get("objective"))
        evaluator = CrossValidationEvaluator(problem, n_jobs=n_jobs, **engine)
    shared = evaluator
    n_folds = len(problem.splits)
    fits_before = shared.n_fits
    results = []
    without_cache = 0
    has_guard = "guard" in inspect.signature(run_search).parameters
    guard = search_options.pop(
        "guard", inspect.signature(run_search).parameters["guard"].default if has_guard else None)
    point_options = _without_guard(search_options)
    try:
        for b in budgets:
            res = run_search(shared, strategy, costs=problem.cost_model, budget=b,
                             verbose=verbose, **point_options)
            without_cache += res.n_evaluations * n_folds
            results.append(res)
    finally:
        if owned and isinstance(shared, CrossValidationEvaluator):
            shared.close()  # closes a journal opened here
    scoring = problem.scoring if isinstance(problem.scoring, str) else "score"
    for r in results:
        r.scoring = scoring
    frontier = Frontier(
        budgets=budgets,
        results=results,
        cost_unit=problem.cost_model.unit,
        scoring=scoring,
        n_fits=shared.n_fits - fits_before,
        n_fits_without_cache=without_cache,
        budget=budget,
        pick=search_options.get("pick", _default_pick()),
    )
    head = frontier.headline_index
    if has_guard and _guard_on(guard) and frontier.headline_key is not None:
        if frontier.headline_reference in ("nothing", "free only"):
            frontier.guard = {"name": "nested", "n_fits": 0,
                              "decision": "not needed: the answer buys no measurement"}
        elif head is not None:
            # The search at the headline's budget again (its fits are cached), now with
            # the guard: is buying measurements better than the fallback on outer folds?
            res = run_search(shared, strategy, costs=problem.cost_model,
                             budget=budgets[head], guard=guard, verbose=verbose,
                             **search_options)
            frontier.guard = dict(res.guard)
            if res.guard.get("replaced"):
                frontier.guard["fallback"] = next(
                    n for n, ref in res.references.items() if ref.get("is_answer"))
            head = frontier.headline_index
    if nested is not None and head is not None:
        from featuresift.nested import nested_evaluation

        opts = {**search_options, "objective": objective_spec}
        # The inner CV of each outer search: the problem's splitter, re-split on the
        # outer training rows (fixed index lists cannot be, so they become K-fold).
        fixed = getattr(original.cv, "cv", None) is not None  # sklearn's wrapper of a list
        inner = len(original.splits) if fixed else original.cv
        frontier.nested = nested_evaluation(
            original.X, original.y, original.estimator, costs=original.cost_model,
            outer_cv=nested, n_repeats=n_repeats, inner_cv=inner,
            scoring=original.scoring, groups=original.groups,
            feature_names=original.feature_names, strategy=strategy, n_jobs=n_jobs,
            budget=budgets[head], **opts,
        )
    return frontier
