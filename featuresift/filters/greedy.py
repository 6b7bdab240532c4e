"""Model-free budgeted greedy selection: relevance minus redundancy, optionally per unit cost.

No model is fitted: every step scores all remaining candidates with

* difference form (mRMR "MID"):  ``gain_j = rel_j - weight * red_j(S)``
* quotient form (mRMR "MIQ"):    ``gain_j = rel_j / red_j(S)``

where ``red_j(S)`` is a redundancy penalty of :mod:`featuresift.filters.redundancy`
updated incrementally. The first pick (empty ``S``) is the most relevant affordable
column in both forms.

MIQ when the redundancy is 0
----------------------------
A candidate with ``red_j = 0`` and ``rel_j > 0`` gets ``gain = +inf`` (it adds
relevance without repeating anything); among several such candidates the more
relevant wins. ``rel_j = 0`` gives ``gain = 0`` whatever the redundancy (0/0 is 0).

Budgets and the gain-per-cost trap
----------------------------------
Costs are panel-aware: a candidate's marginal cost is its own price, its panel's
price if the panel is not yet paid, or 0 once the panel is paid (the arithmetic
follows :class:`featuresift.costs.CostModel`; the final total is checked with it).
Ranking by gain per unit cost alone can be arbitrarily bad: with budget 10, item a
(value 0.2, cost 0.1) and item b (value 10, cost 10), ratio-greedy takes a and then
cannot afford b. Following Leskovec et al. (2007, "Cost-effective outbreak detection
in networks", KDD), ``cost_rule="both"`` (the default) runs the plain-gain greedy and
the gain-per-cost greedy and keeps the selection of higher value. The plain-gain run
begins with the best single affordable item, so the kept selection is never worth
less than that item (the safeguard of Khuller, Moss & Naor 1999, Information
Processing Letters 70). For submodular values the better of the two runs is within
a constant factor of the optimum (Leskovec et al.); relevance minus redundancy is not
guaranteed submodular, so here it is a heuristic safeguard, not a bound.

Value of a selection
--------------------
The value used to compare the two runs is the sum of the difference-form gains
credited to each feature when it was chosen, ``sum_k rel_{s_k} - weight *
red_{s_k}(S_{k-1})`` (with weight 1 for the quotient form, where a sum of ratios
would be unbounded). Free candidates (marginal cost 0, e.g. a paid panel's other
members) with positive gain rank first in the per-cost run.

Stopping
--------
The search stops when no candidate is affordable, when ``n_features`` are chosen,
or when the best gain is not above ``min_gain`` (default: 0 when ``n_features`` is
not given, so features that add nothing are not bought; no threshold when a target
size is given, as in the fixed-size mRMR procedure).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from featuresift._compat import renamed_keywords
from featuresift.costs import CostModel  # noqa: F401 - the docstring examples use it
from featuresift.errors import InputError
from featuresift.filters._common import check_xy, cost_arrays, resolve_cost_model
from featuresift.filters.redundancy import BasePenalty, RunningRedundancy, make_penalty
from featuresift.filters.relevance import categorical_columns, relevance_scores
from featuresift.search import _resolve_features

__all__ = ["FilterStep", "FilterSelection", "budgeted_greedy", "mrmr", "FORMS", "COST_RULES"]

FORMS = ("difference", "quotient")
COST_RULES = ("both", "gain", "ratio")


@dataclass(frozen=True)
class FilterStep:
    """One pick of the greedy filter.

    Attributes
    ----------
    feature : str
    column : int
    relevance : float
    redundancy : float
        Penalty with the features chosen before it.
    gain : float
        Criterion value it was chosen with (difference or quotient form).
    value : float
        Difference-form gain credited to the selection's value.
    marginal_cost : float
    total_cost : float
        Cost of the selection after this pick.

    Examples
    --------
    >>> cm = CostModel(["a", "b"], {"a": 0.1, "b": 10.0})
    >>> sel = budgeted_greedy(np.zeros((3, 2)), costs=cm, budget=10.0,
    ...                       relevance=np.array([0.2, 10.0]))
    >>> step = sel.steps[0]
    >>> step.feature, step.column, step.relevance, step.marginal_cost, step.total_cost
    ('b', 1, 10.0, 10.0, 10.0)
    """

    feature: str
    column: int
    relevance: float
    redundancy: float
    gain: float
    value: float
    marginal_cost: float
    total_cost: float


@dataclass
class FilterSelection:
    """Result of a model-free greedy selection.

    Attributes
    ----------
    order : list of int
        Chosen columns in the order picked (``must_include`` first).
    selected : list of str
        Their names, same order.
    steps : list of FilterStep
    value : float
        Sum of the credited difference-form gains.
    cost : float
        Acquisition cost of the selection (from the cost model).
    cost_unit : str
    budget : float or None
    rule : str
        Which run was kept: ``"gain"`` or ``"ratio"``.
    runs : dict
        Every run made: rule -> {"order", "value", "cost"}.
    relevance : ndarray
        Relevance of every column.
    relevance_scorer : str
    form, redundancy : str
    feature_names : list of str
    candidate_gains : list of ndarray or None
        With ``keep_gains=True``: the gains of all columns at each step of the kept run
        (NaN for columns not available at that step).
    stop_reason : str

    Examples
    --------
    See :func:`budgeted_greedy`.
    """

    order: list[int]
    selected: list[str]
    steps: list[FilterStep]
    value: float
    cost: float
    cost_unit: str
    budget: float | None
    rule: str
    runs: dict[str, dict]
    relevance: np.ndarray
    relevance_scorer: str
    form: str
    redundancy: str
    feature_names: list[str]
    stop_reason: str
    candidate_gains: list[np.ndarray] | None = field(default=None, repr=False)

    @property
    def support(self) -> list[int]:
        """Chosen columns in column order."""
        return sorted(self.order)

    def frame(self):
        """The steps as a pandas DataFrame, one row per pick."""
        import pandas as pd

        return pd.DataFrame([s.__dict__ for s in self.steps])

    def to_dict(self) -> dict:
        """JSON-ready description (selection, steps, both runs; no per-column arrays)."""

        def num(x: float) -> float | None:
            return float(x) if np.isfinite(x) else None

        return {
            "selected": list(self.selected), "order": list(self.order), "value": self.value,
            "cost": self.cost, "cost_unit": self.cost_unit, "budget": self.budget,
            "rule": self.rule, "runs": self.runs, "relevance": self.relevance_scorer,
            "form": self.form, "redundancy": self.redundancy, "stop_reason": self.stop_reason,
            "steps": [{k: (num(v) if isinstance(v, float) else v) for k, v in s.__dict__.items()}
                      for s in self.steps],
        }

    def search_options(self, how: str = "candidates", top: int | None = None) -> dict:
        """Keyword arguments handing the filter's order to a wrapper search.

        Parameters
        ----------
        how : {"candidates", "start"}
            ``"candidates"``: the wrapper may only use the first ``top`` picks
            (``never_include`` the rest). ``"start"``: the wrapper must keep the first
            ``top`` picks (``must_include``) and may add others.
        top : int, optional
            Number of picks (default: all).

        Returns
        -------
        dict
            For :func:`featuresift.run_search`, e.g. ``run_search(problem, "forward",
            **sel.search_options())``. For the order itself use the ``"filter-order"``
            strategy (:class:`featuresift.filters.strategy.FilterOrderSearch`).
        """
        chosen = self.selected if top is None else self.selected[:top]
        if how == "candidates":
            keep = set(chosen)
            return {"never_include": [n for n in self.feature_names if n not in keep]}
        if how == "start":
            return {"must_include": list(chosen)}
        raise InputError(f"how must be 'candidates' or 'start', got {how!r}")

    def __repr__(self) -> str:
        from featuresift.display import filter_selection_repr

        return filter_selection_repr(self)

    def _repr_html_(self) -> str:
        from featuresift.display import filter_selection_html

        return filter_selection_html(self)


def _check_weight(weight: Any) -> float:
    if isinstance(weight, bool) or not isinstance(weight, (int, float)) or not weight >= 0:
        raise InputError(f"redundancy weight must be a number >= 0, got {weight!r}")
    return float(weight)


def _resolve_relevance(relevance: Any, X, y, task, options, p,
                       categorical=None) -> tuple[np.ndarray, str]:
    if isinstance(relevance, np.ndarray) or isinstance(relevance, (list, tuple)):
        scores = np.asarray(relevance, dtype=float)
        if scores.shape != (p,):
            raise InputError(f"precomputed relevance has shape {scores.shape}, expected ({p},)")
        return scores, "precomputed"
    if y is None:
        raise InputError("y is needed to compute relevance (or pass precomputed scores)")
    rel = relevance_scores(X, y, relevance, task=task, categorical=categorical,
                           **(options or {}))
    return rel.scores, rel.scorer


def _gains(rel: np.ndarray, red: np.ndarray, form: str, weight: float, first: bool):
    if first:
        return rel.copy()
    if form == "difference":
        return rel - weight * red
    out = np.zeros_like(rel)
    pos = rel > 0
    with np.errstate(divide="ignore"):
        out[pos] = rel[pos] / red[pos]
    return out


def _run(
    rule: str, rel: np.ndarray, penalty: BasePenalty, cache: dict, form: str, weight: float,
    budget: float | None, cost_info: tuple, start: Sequence[int], banned: np.ndarray,
    n_target: int | None, min_gain: float | None, keep_gains: bool,
) -> tuple[list[int], list[tuple], str, list[np.ndarray]]:
    panel, own, pprice = cost_info
    p = rel.size
    tracker = RunningRedundancy(penalty, p, cache)
    paid = np.zeros(pprice.size, bool)
    available = ~banned
    order: list[int] = []
    records: list[tuple] = []
    gains_log: list[np.ndarray] = []
    total = 0.0
    tol_budget = None if budget is None else budget * (1 + 1e-12) + 1e-12
    vweight = weight if form == "difference" else 1.0

    def marginal() -> np.ndarray:
        mc = own.copy()
        inpanel = panel >= 0
        mc[inpanel] = np.where(paid[panel[inpanel]], 0.0, pprice[panel[inpanel]])
        return mc

    def take(j: int, gain: float, mc: float) -> None:
        nonlocal total
        red = tracker.values()[j] if order else 0.0
        value = rel[j] - vweight * red if order else rel[j]
        total += mc
        records.append((j, rel[j], red, gain, value, mc, total))
        order.append(j)
        available[j] = False
        if panel[j] >= 0:
            paid[panel[j]] = True
        tracker.add(j)

    for j in start:
        take(int(j), float("nan"), float(marginal()[j]))
    stop = ""
    while True:
        if n_target is not None and len(order) >= n_target:
            stop = f"target size {n_target} reached"
            break
        mc = marginal()
        ok = available.copy()
        if tol_budget is not None:
            ok &= total + mc <= tol_budget
        if not ok.any():
            stop = "no affordable candidate left" if available.any() else "no candidate left"
            break
        g = _gains(rel, tracker.values(), form, weight, not order)
        if keep_gains:
            gains_log.append(np.where(ok, g, np.nan))
        cand = np.where(ok)[0]
        gc = g[cand]
        if min_gain is not None and gc.max() <= min_gain:
            stop = f"no candidate has a gain above {min_gain:g}"
            break
        if rule == "ratio" and (gc > 0).any():
            pos = gc > 0
            cpos, gpos, cost = cand[pos], gc[pos], mc[cand[pos]]
            free = cost <= 0
            if free.any():
                # Free improvements first, most valuable first.
                k = int(np.argmax(np.where(free, gpos, -np.inf)))
            else:
                k = int(np.argmax(gpos / cost))
            j = int(cpos[k])
        else:
            # Ties: first maximum in column order (np.argmax).
            j = int(cand[int(np.argmax(gc))])
        take(j, float(g[j]), float(mc[j]))
    return order, records, stop, gains_log


@renamed_keywords(cost_model="costs")
def budgeted_greedy(
    X: Any,
    y: Any = None,
    costs: Any = None,
    budget: float | None = None,
    *,
    relevance: Any = "mutual_info",
    relevance_options: dict | None = None,
    redundancy: str | dict | BasePenalty = "max_abs_corr",
    form: str = "difference",
    weight: float = 1.0,
    cost_rule: str = "both",
    n_features: int | None = None,
    min_gain: float | None = None,
    must_include: Iterable[int | str] = (),
    never_include: Iterable[int | str] = (),
    task: str | None = None,
    keep_gains: bool = False,
) -> FilterSelection:
    """Choose measurements by relevance minus redundancy within a budget, without models.

    Parameters
    ----------
    X : array-like or DataFrame of shape (n_samples, n_features)
    y : array-like of shape (n_samples,), optional
        Target; not needed when ``relevance`` is an array of precomputed scores.
    costs : CostModel or mapping, optional
        Panel-aware prices (default: every feature costs 1).
    budget : float, optional
        Largest total cost (None: unlimited).
    relevance : str, dict, callable or array, default="mutual_info"
        A relevance scorer (see :mod:`featuresift.filters.relevance`) or precomputed
        scores, one per column.
    relevance_options : dict, optional
        Options for the scorer.
    redundancy : str, dict or BasePenalty, default="max_abs_corr"
        Penalty (see :mod:`featuresift.filters.redundancy`).
    form : {"difference", "quotient"}, default="difference"
        mRMR MID or MIQ combination (see module notes).
    weight : float, default=1.0
        Weight of the redundancy in the difference form.
    cost_rule : {"both", "gain", "ratio"}, default="both"
        Plain gain, gain per marginal cost, or both with the better kept. ``"ratio"``
        alone is exposed for comparison; it can fall into the gain-per-cost trap.
    n_features : int, optional
        Target number of features (including ``must_include``).
    min_gain : float, optional
        Stop when no candidate's gain exceeds it (see module notes for the default).
    must_include, never_include : iterables of names or column indices
    task : {"classification", "regression"}, optional
    keep_gains : bool, default=False
        Record every candidate's gain at every step of the kept run.

    Returns
    -------
    FilterSelection

    Examples
    --------
    The gain-per-cost trap (budget 10; a: value 0.2, cost 0.1; b: value 10, cost 10):

    >>> cm = CostModel(["a", "b"], {"a": 0.1, "b": 10.0})
    >>> sel = budgeted_greedy(np.zeros((3, 2)), costs=cm, budget=10.0,
    ...                       relevance=np.array([0.2, 10.0]))
    >>> sel.selected, sel.rule, sel.runs["ratio"]["value"]
    (['b'], 'gain', 0.2)
    """
    Xa, ya, names = check_xy(X, np.zeros(np.shape(X)[0]) if y is None else y)
    y_used = None if y is None else ya
    cm = resolve_cost_model(costs, names)
    names = list(cm.feature_names)
    p = Xa.shape[1]
    if form not in FORMS:
        raise InputError(f"form must be one of {FORMS}, got {form!r}")
    if cost_rule not in COST_RULES:
        raise InputError(f"cost_rule must be one of {COST_RULES}, got {cost_rule!r}")
    weight = _check_weight(weight)
    if n_features is not None and (isinstance(n_features, bool) or int(n_features) < 1):
        raise InputError(f"n_features must be a positive integer, got {n_features!r}")
    if budget is not None and (isinstance(budget, bool) or not isinstance(budget, (int, float))
                               or not budget >= 0):
        raise InputError(f"budget must be a number >= 0, got {budget!r}", key="budget")
    if min_gain is None and n_features is None:
        min_gain = 0.0
    start = list(dict.fromkeys(_resolve_features(must_include, names, "must_include")))
    banned = np.zeros(p, bool)
    banned[_resolve_features(never_include, names, "never_include")] = True
    if banned[start].any():
        raise InputError("a feature is both in must_include and never_include")
    if budget is not None and not cm.is_feasible(start, budget):
        raise InputError(f"the must_include features cost {cm.cost(start):g} {cm.unit}, above "
                         f"the budget {budget:g}", key="must_include")
    rel, rel_name = _resolve_relevance(relevance, Xa, y_used, task, relevance_options, p,
                                       categorical_columns(X))
    if np.isnan(rel).any():
        raise InputError(f"relevance scores contain NaN (column "
                         f"'{names[int(np.where(np.isnan(rel))[0][0])]}')")
    # An infinite score (e.g. ANOVA F of a perfectly separating column) stays largest.
    rel = np.where(np.isposinf(rel), np.finfo(float).max / 4, rel)
    penalty = make_penalty(redundancy).prepare(Xa)
    cache: dict[int, np.ndarray] = {}
    cost_info = cost_arrays(cm)
    n_target = None if n_features is None else int(n_features)
    rules = ("gain", "ratio") if cost_rule == "both" else (cost_rule,)
    runs = {}
    for rule in rules:
        runs[rule] = _run(rule, rel, penalty, cache, form, weight, budget, cost_info, start,
                          banned.copy(), n_target, min_gain, keep_gains)
    summary = {}
    for rule, (order, records, _, _) in runs.items():
        value = float(sum(r[4] for r in records))
        summary[rule] = {"order": [names[j] for j in order], "value": value,
                         "cost": cm.cost(order)}
    # Higher value wins; ties go to the cheaper selection, then to plain gain.
    best = max(rules, key=lambda r: (round(summary[r]["value"], 12), -summary[r]["cost"],
                                     r == "gain"))
    order, records, stop, gains_log = runs[best]
    total = cm.cost(order)
    if budget is not None and not cm.is_feasible(order, budget):  # pragma: no cover - guard
        raise RuntimeError("internal error: greedy selection exceeds the budget")
    steps = [FilterStep(names[j], j, float(r), float(red), float(g), float(v), float(mc),
                        float(t)) for (j, r, red, g, v, mc, t) in records]
    return FilterSelection(
        order=list(order), selected=[names[j] for j in order], steps=steps,
        value=summary[best]["value"], cost=total, cost_unit=cm.unit, budget=budget,
        rule=best, runs=summary, relevance=rel, relevance_scorer=rel_name, form=form,
        redundancy=getattr(redundancy, "name", str(redundancy)), feature_names=names,
        stop_reason=stop, candidate_gains=gains_log if keep_gains else None,
    )


def mrmr(
    X: Any, y: Any, n_features: int, form: str = "difference", *,
    relevance: Any = "mutual_info", relevance_options: dict | None = None,
    redundancy: str | dict | BasePenalty = "mutual_info", task: str | None = None,
    keep_gains: bool = False,
) -> FilterSelection:
    """Minimum-redundancy maximum-relevance selection (Peng, Long & Ding 2005).

    Picks ``n_features`` columns one at a time, maximising ``I(x_j; c) - mean_s
    I(x_j; x_s)`` (``form="difference"``, MID) or their quotient (MIQ), ignoring costs.
    With ``relevance="anova_f"`` and ``redundancy="mean_abs_corr"`` this is the FCD /
    FCQ variant for continuous data.

    Examples
    --------
    >>> c = [0, 0, 0, 0, 1, 1, 1, 1]
    >>> X = np.array([[0, 0, 0, 1], [1, 0, 0, 1], [1, 0, 0, 0], [1, 1, 0, 0],
    ...               [1, 0, 0, 1], [0, 1, 1, 1], [1, 0, 0, 1], [1, 1, 0, 1]], float)
    >>> mrmr(X, c, 2, "difference").selected, mrmr(X, c, 2, "quotient").selected
    (['x3', 'x2'], ['x3', 'x1'])
    """
    opts = dict(relevance_options or {})
    if relevance == "mutual_info":
        opts.setdefault("estimator", "plugin")
    return budgeted_greedy(
        X, y, relevance=relevance, relevance_options=opts, redundancy=redundancy, form=form,
        n_features=n_features, cost_rule="gain", task=task, keep_gains=keep_gains,
    )
