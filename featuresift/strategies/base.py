"""The strategy interface and the search space strategies work in.

A strategy is a small class with one method, :meth:`SearchStrategy.run`, that
receives a :class:`SearchSpace`. Through the space it

* proposes **batches** of subsets (:meth:`SearchSpace.evaluate`) and reads back
  :class:`Scored` records (evaluation, cost, objective value) — it never fits a model,
  so any evaluator drives it: cross-validation, a plain function of the subset
  (:class:`~featuresift.engine.evaluator.CriterionEvaluator`) or a table of stored results;
* asks which features may be added or removed under the budget and the user's limits
  (:meth:`SearchSpace.addable`, :meth:`SearchSpace.removable`, :meth:`SearchSpace.is_allowed`,
  :meth:`SearchSpace.repair`, :meth:`SearchSpace.sample_allowed`);
* compares subsets with :meth:`SearchSpace.rank_key` (objective, then higher score,
  lower cost, fewer features);
* records the steps it takes (:meth:`SearchSpace.record`), and may name its final
  answer (:meth:`SearchSpace.choose`); otherwise the best allowed subset it evaluated wins;
  anything else worth reporting goes into the ``space.extras`` dict, which ends up in
  :attr:`SearchResult.extras <featuresift.result.SearchResult.extras>`;
* draws random numbers only from ``space.rng`` (seeded), so runs reproduce.

The limits (``max_evaluations``, ``max_time_s``, the callback) are enforced by the space:
:meth:`SearchSpace.evaluate` raises :class:`StopSearch`, which the driver catches, so a
strategy needs no code for them. Subsets evaluated earlier in the run are free (cached).

Register a strategy with :func:`register_strategy` to make it available by name in
YAML (``strategy: {name: ..., options: {...}}``) and in :func:`featuresift.run_search`.
Its ``__init__`` keyword arguments are the YAML options; unknown options are rejected
with an error naming them.

A complete custom strategy
--------------------------
Add measurements cheapest first while the objective keeps improving::

    from featuresift import CriterionEvaluator, CostModel, run_search
    from featuresift.strategies import SearchStrategy, register_strategy

    @register_strategy
    class CheapestFirst(SearchStrategy):
        name = "cheapest-first"

        def __init__(self, min_gain: float = 0.0) -> None:
            self.min_gain = min_gain  # stored unchanged: it is the YAML option

        def run(self, space):
            current = tuple(space.must_include)
            now = space.evaluate([current])[0] if current else None
            while True:
                options = space.addable(current)          # budget, size, never_include
                if not options:
                    break
                f = min(options, key=lambda f: (space.cost(current + (f,)), f))
                (new,) = space.evaluate([current + (f,)])  # a batch of one subset
                if now is not None and new.value - now.value <= self.min_gain:
                    break
                current, now = new.subset, new
                space.record("add", current, f)            # the search path
            if current:
                space.choose(current)                      # else the best seen wins

    costs = CostModel(["a", "b", "c"], {"a": 1.0, "b": 2.0, "c": 5.0})
    table = {(0,): 0.6, (0, 1): 0.8, (0, 1, 2): 0.81}
    ev = CriterionEvaluator(lambda s: table.get(s, 0.0), n_features=3)
    result = run_search(ev, "cheapest-first", costs=costs, budget=4, min_gain=0.05)
    print(result.selected)  # ['a', 'b']

In YAML the same strategy is ``strategy: {name: cheapest-first, options: {min_gain: 0.05}}``
(the module defining it must be imported first). :func:`featuresift.testing.check_strategy`
runs the contract every strategy must pass (budget, limits, seeds, path) on such a class.
"""

from __future__ import annotations

import inspect
import math
import time
from abc import ABC, abstractmethod
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from featuresift._compat import renamed_keywords, warn_renamed
from featuresift.costs import AllowedSubsets, CostModel
from featuresift.engine.evaluator import BaseEvaluator, normalise_subset
from featuresift.engine.records import COMPLETE, Evaluation, computed_once
from featuresift.errors import InputError
from featuresift.objectives import BaseObjective, ScoreObjective

__all__ = [
    "Scored",
    "PathStep",
    "SearchSpace",
    "SearchStrategy",
    "StopSearch",
    "STRATEGIES",
    "register_strategy",
    "make_strategy",
    "resolve_strategy_name",
    "STRATEGY_ALIASES",
]


class StopSearch(Exception):
    """Raised inside a search when a user limit (evaluations, time) is reached.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import AllowedSubsets, CostModel
    >>> ev = CriterionEvaluator(len, n_features=3)
    >>> space = SearchSpace(ev, CostModel.uniform("abc"), max_evaluations=1)
    >>> _ = space.evaluate([[0]])
    >>> try:
    ...     space.evaluate([[1]])
    ... except StopSearch as stop:
    ...     print("stopped:", stop)
    stopped: evaluation limit of 1 reached
    """


@dataclass(frozen=True)
class Scored:
    """An evaluated subset with its cost and objective value.

    Attributes
    ----------
    evaluation : Evaluation
    cost : float
        Acquisition cost from the cost model.
    value : float
        Objective value (larger is better).

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import AllowedSubsets, CostModel
    >>> ev = CriterionEvaluator(lambda s: float(sum(s)), n_features=3)
    >>> space = SearchSpace(ev, CostModel.uniform("abc"))
    >>> sc = space.evaluate([[0, 2]])[0]
    >>> sc.subset, sc.cost, sc.value
    ((0, 2), 2.0, 2.0)
    """

    evaluation: Evaluation
    cost: float
    value: float

    @property
    def subset(self) -> tuple[int, ...]:
        """Sorted column indices."""
        return self.evaluation.subset

    @computed_once
    def mean(self) -> float:
        """Mean CV score."""
        return self.evaluation.mean

    @property
    def complete(self) -> bool:
        """True when every fold has a score: not dropped by racing, and not failed (a
        failed fold without an ``error_score`` leaves the subset without a score)."""
        return self.evaluation.status == COMPLETE

    @computed_once
    def rank_key(self) -> tuple:
        """Sort key, larger is better (see :meth:`SearchSpace.rank_key`); computed once."""
        value = self.value if not math.isnan(self.value) else -math.inf
        mean = self.mean if not math.isnan(self.mean) else -math.inf
        return (
            self.complete,
            value,
            mean,
            -round(self.cost, 12),
            -len(self.subset),
            tuple(-i for i in self.subset),
        )


@dataclass(frozen=True)
class PathStep:
    """One step of a search path.

    Attributes
    ----------
    step : int
        0-based step number.
    action : str
        What the strategy did ("start", "add", "remove", "exclude", "accept", ...).
    feature : str or None
        The feature added or removed, when the action concerns one feature.
    subset : tuple of int
        The subset after the step.
    scored : Scored
        Its evaluation, cost and objective value.
    n_evaluations : int
        Distinct subsets evaluated so far in this search.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import AllowedSubsets, CostModel
    >>> cm = CostModel(["ph", "ash"], {"ph": 1.0, "ash": 3.0})
    >>> space = SearchSpace(CriterionEvaluator(len, 2), cm)
    >>> step = space.record("add", [0, 1], feature=1)
    >>> step.action, step.feature, step.subset, step.scored.cost, step.n_evaluations
    ('add', 'ash', (0, 1), 4.0, 1)
    """

    step: int
    action: str
    feature: str | None
    subset: tuple[int, ...]
    scored: Scored
    n_evaluations: int


class SearchSpace:
    """What a strategy sees: evaluation of batches, costs, budget and limits.

    Parameters
    ----------
    evaluator : BaseEvaluator
        Scores batches of subsets.
    costs : CostModel
        Acquisition costs (panel-aware); every budget check asks it (attribute
        ``cost_model``).
    budget : float, optional
        Maximum cost per sample of a chosen subset (None: unlimited).
    objective : BaseObjective, optional
        How subsets are valued (default: mean score).
    max_features : int, optional
        Largest subset size allowed.
    max_evaluations : int, optional
        Largest number of distinct subsets this search may evaluate.
    max_time_s : float, optional
        Seconds after which the search stops (checked between batches).
    must_include, never_include : iterables of int
        Columns always in every subset / never in any.
    seed : int, optional, default=0
        Seed of ``rng``.
    callback : callable, optional
        Called as ``callback(step)`` after each recorded :class:`PathStep`; returning
        True stops the search.

    Examples
    --------
    Column ``c`` alone is over budget and ``a`` is excluded, so only ``b`` can start:

    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import AllowedSubsets, CostModel
    >>> cm = CostModel(["a", "b", "c"], {"a": 1.0, "b": 2.0, "c": 4.0})
    >>> space = SearchSpace(CriterionEvaluator(len, 3), cm, budget=3.0, never_include=[0])
    >>> space.addable([]), space.within_budget([1, 2])
    ([1], False)
    >>> [s.value for s in space.evaluate([[1], [1, 2]])]
    [1.0, 2.0]
    """

    @renamed_keywords(cost_model="costs", max_time="max_time_s", random_state="seed")
    def __init__(
        self,
        evaluator: BaseEvaluator,
        costs: CostModel | None = None,
        budget: float | None = None,
        objective: BaseObjective | None = None,
        max_features: int | None = None,
        max_evaluations: int | None = None,
        max_time_s: float | None = None,
        must_include: Iterable[int] = (),
        never_include: Iterable[int] = (),
        seed: int | None = 0,
        callback: Callable[[PathStep], Any] | None = None,
    ) -> None:
        if costs is None:
            raise TypeError("SearchSpace needs costs (a CostModel)")
        cost_model = costs
        self.evaluator = evaluator
        self.cost_model = cost_model
        self.n_features = evaluator.n_features
        self.feature_names = list(cost_model.feature_names)
        self.budget = None if budget is None else float(budget)
        self.objective = objective or ScoreObjective()
        self.max_features = self.n_features if max_features is None else int(max_features)
        self.max_evaluations = max_evaluations
        self.max_time_s = max_time_s
        self.must_include = normalise_subset(must_include, self.n_features)
        self.never_include = frozenset(normalise_subset(never_include, self.n_features))
        clash = set(self.must_include) & self.never_include
        if clash:
            names = ", ".join(self.feature_names[i] for i in sorted(clash))
            raise InputError(f"feature(s) both in must_include and never_include: {names}")
        if len(self.must_include) > self.max_features:
            raise InputError(
                f"must_include has {len(self.must_include)} features but max_features is "
                f"{self.max_features}"
            )
        if not cost_model.is_feasible(self.must_include, self.budget):
            raise InputError(
                f"the must_include features cost {cost_model.cost(self.must_include):g} "
                f"{cost_model.unit}, above the budget {self.budget:g}"
            )
        self.rng = np.random.default_rng(seed)
        self.seed = seed
        self.callback = callback
        self.progress: Any = None  # a featuresift.engine.progress.SearchProgress, if shown
        self.path: list[PathStep] = []
        self.visited: dict[tuple[int, ...], Scored] = {}
        self.chosen: tuple[int, ...] | None = None
        self.extras: dict[str, Any] = {}
        self.stop_reason: str = ""
        self.n_evaluations = 0
        self._start = time.perf_counter()

    # ------------------------------------------------------------- constraints
    @property
    def candidates(self) -> tuple[int, ...]:
        """Columns a strategy may choose from (all but ``never_include``)."""
        return tuple(i for i in range(self.n_features) if i not in self.never_include)

    @property
    def free_candidates(self) -> tuple[int, ...]:
        """Columns a strategy may switch on or off (candidates not in ``must_include``)."""
        must = set(self.must_include)
        return tuple(i for i in self.candidates if i not in must)

    def cost(self, subset: Iterable[int]) -> float:
        """Acquisition cost of a subset."""
        return self.cost_model.cost(subset)

    def within_budget(self, subset: Iterable[int]) -> bool:
        """Whether the subset's cost is within the budget."""
        return self.cost_model.is_feasible(subset, self.budget)

    def is_allowed(self, subset: Iterable[int]) -> bool:
        """Within budget and max_features, contains must_include, avoids never_include."""
        s = set(subset)
        return (
            len(s) <= self.max_features
            and set(self.must_include) <= s
            and not (s & self.never_include)
            and self.within_budget(s)
        )

    def allowed_subsets(self, include_empty: bool = False) -> AllowedSubsets:
        """Every allowed subset, counted exactly or listed (see :meth:`CostModel.allowed`).

        ``.count(limit=None)`` gives their number without listing them; iterating lists
        them by size, then column order. The empty subset is left out unless
        ``include_empty`` (it is the "nothing" reference, not a choice of measurements).

        Examples
        --------
        >>> from featuresift.engine.evaluator import CriterionEvaluator
        >>> cm = CostModel(["a", "b", "c"], {"a": 1.0, "b": 2.0, "c": 4.0})
        >>> space = SearchSpace(CriterionEvaluator(len, 3), cm, budget=3.0)
        >>> space.allowed_subsets().count(), list(space.allowed_subsets())
        (3, [(0,), (1,), (0, 1)])
        """
        return self.cost_model.allowed(
            self.budget, must_include=self.must_include, never_include=self.never_include,
            max_features=self.max_features, include_empty=include_empty)

    def addable(self, subset: Iterable[int]) -> list[int]:
        """Features that can be added to ``subset`` keeping it allowed, in column order.

        A feature is addable when it is not yet in the subset, not excluded, the
        size limit holds, and its marginal (panel-aware) cost keeps the budget.
        """
        s = list(subset)
        if len(s) + 1 > self.max_features:
            return []
        inside = set(s)
        return [
            f for f in self.candidates
            if f not in inside and self.within_budget(s + [f])
        ]

    def removable(self, subset: Iterable[int]) -> list[int]:
        """Features of ``subset`` that may be removed (not in must_include), in column order."""
        must = set(self.must_include)
        return [f for f in sorted(set(subset)) if f not in must]

    def repair(self, subset: Iterable[int]) -> tuple[int, ...]:
        """Make a subset allowed without evaluating anything.

        Adds must_include, drops never_include, then while over the budget or the
        size limit drops the feature whose removal saves the most cost (ties: the
        later column). Deterministic.
        """
        s = (set(subset) | set(self.must_include)) - self.never_include
        must = set(self.must_include)
        while len(s) > self.max_features or not self.within_budget(s):
            options = [f for f in s if f not in must]
            if not options:
                break
            base = self.cost(s)
            f = max(options, key=lambda f: (base - self.cost(s - {f}), f))
            s.discard(f)
        return tuple(sorted(s))

    def sample_allowed(self, density: float = 0.5) -> tuple[int, ...]:
        """A random allowed, non-empty subset drawn from ``rng`` (nothing is evaluated).

        Starts from ``must_include`` and visits the free candidates in random order,
        adding each with probability ``density`` when it keeps the subset allowed. If
        that leaves the subset empty, one random affordable feature is added.

        Examples
        --------
        >>> from featuresift.engine.evaluator import CriterionEvaluator
        >>> from featuresift.costs import AllowedSubsets, CostModel
        >>> space = SearchSpace(CriterionEvaluator(len, 4), CostModel.uniform("abcd"),
        ...                     budget=2, seed=1)
        >>> s = space.sample_allowed(0.9)
        >>> 1 <= len(s) <= 2 and space.is_allowed(s)
        True
        """
        chosen = list(self.must_include)
        for f in self.rng.permutation(self.free_candidates):
            if len(chosen) >= self.max_features:
                break
            if self.rng.random() < density and self.within_budget(chosen + [int(f)]):
                chosen.append(int(f))
        if not chosen:
            options = self.addable(())
            if options:
                chosen.append(int(options[int(self.rng.integers(len(options)))]))
        return tuple(sorted(chosen))

    # -------------------------------------------------------------- evaluation
    def _check_time(self) -> None:
        if self.max_time_s is not None and time.perf_counter() - self._start > self.max_time_s:
            self.stop_reason = f"time limit of {self.max_time_s:g} s reached"
            raise StopSearch(self.stop_reason)

    def evaluate(self, subsets: Sequence[Iterable[int]]) -> list[Scored]:
        """Evaluate a batch; returns :class:`Scored` records in input order.

        Subsets evaluated earlier in the run are answered from the cache. Raises
        :class:`StopSearch` when the evaluation or time limit is reached; subsets
        evaluated before the limit are still recorded.
        """
        self._check_time()
        keys = [normalise_subset(s, self.n_features) for s in subsets]
        if self.max_evaluations is not None:
            allowance = self.max_evaluations - self.n_evaluations
            fresh: list[tuple[int, ...]] = []
            for k in keys:
                if k not in self.visited and k not in fresh:
                    fresh.append(k)
            if len(fresh) > allowance:
                if allowance > 0:
                    self._score(fresh[:allowance])
                self.stop_reason = f"evaluation limit of {self.max_evaluations} reached"
                raise StopSearch(self.stop_reason)
        return self._score(keys)

    def _score(self, keys: list[tuple[int, ...]]) -> list[Scored]:
        evals = self.evaluator.evaluate(keys)
        out = []
        for k, ev in zip(keys, evals):
            sc = self.visited.get(k)
            if sc is None or sc.evaluation is not ev:
                cost = self.cost(k)
                sc = Scored(ev, cost, self.objective.value(ev, cost))
                if k not in self.visited:
                    self.n_evaluations += 1
                self.visited[k] = sc
            out.append(sc)
        if self.progress is not None:
            # The best an answer can be: complete and allowed (budget and limits); the
            # 'everything' reference and over-budget neighbours are not candidates.
            done = [s.mean for k, s in zip(keys, out) if s.complete and self.is_allowed(k)]
            self.progress.evaluated(self.n_evaluations, max(done) if done else None)
        return out

    def rank_key(self, scored: Scored) -> tuple:
        """Sort key, larger is better: objective, score, -cost, -size, column order.

        Incomplete evaluations (dropped by racing or failed) rank below complete ones.
        """
        return scored.rank_key

    def best_of(self, scored: Iterable[Scored]) -> Scored | None:
        """The best of some scored subsets by :meth:`rank_key` (None if empty)."""
        best = None
        for s in scored:
            if best is None or s.rank_key > best.rank_key:
                best = s
        return best

    def expect(self, n_more: int, kind: str = "about") -> None:
        """Tell the progress display that about ``n_more`` more subsets lie ahead.

        ``kind`` is ``"about"`` (an estimate), ``"at most"`` or ``"exact"``
        (:class:`~featuresift.engine.progress.Expected`). Subsets already evaluated
        count as done; an evaluation limit caps the total ("at most"); nothing happens
        when no progress is shown.
        """
        if self.progress is None:
            return
        total = self.n_evaluations + int(n_more)
        if self.max_evaluations is not None and total > self.max_evaluations:
            total, kind = self.max_evaluations, "at most"  # the limit stops it there
        self.progress.expect(total, kind)

    # ------------------------------------------------------------------ record
    def record(self, action: str, subset: Iterable[int], feature: int | None = None) -> PathStep:
        """Append a step to the path (the subset must have been evaluated)."""
        key = normalise_subset(subset, self.n_features)
        scored = self.visited.get(key)
        if scored is None:
            (scored,) = self._score([key])
        step = PathStep(
            len(self.path), action,
            None if feature is None else self.feature_names[feature],
            key, scored, self.n_evaluations,
        )
        self.path.append(step)
        if self.progress is not None:
            self.progress.step(step.step, action, step.feature, len(key))
        if self.callback is not None and self.callback(step) is True:
            self.stop_reason = "stopped by callback"
            raise StopSearch(self.stop_reason)
        return step

    def choose(self, subset: Iterable[int]) -> None:
        """Name the strategy's final answer (otherwise the best allowed subset wins)."""
        self.chosen = normalise_subset(subset, self.n_features)

    def elapsed(self) -> float:
        """Seconds since the search started."""
        return time.perf_counter() - self._start


class SearchStrategy(ABC):
    """Base class of search strategies.

    Subclasses set a class attribute ``name``, take their options as keyword
    arguments in ``__init__`` (stored unchanged) and implement :meth:`run`.

    Examples
    --------
    A complete strategy that tries every single feature and keeps the best:

    >>> class BestSingle(SearchStrategy):
    ...     name = "best-single"
    ...     def run(self, space):
    ...         batch = [[f] for f in space.addable(space.must_include)]
    ...         best = space.best_of(space.evaluate(batch))
    ...         space.record("add", best.subset)
    """

    name: ClassVar[str] = ""
    renamed_options: ClassVar[dict[str, str]] = {}
    """Old option name -> new name; the old one still works, with a DeprecationWarning."""

    @abstractmethod
    def run(self, space: SearchSpace) -> None:
        """Search the space; record steps; optionally :meth:`SearchSpace.choose`."""

    def check(self, space: SearchSpace) -> None:
        """Check the options against the problem before anything is evaluated.

        :func:`~featuresift.run_search` calls it before the first evaluation and
        ``featuresift validate`` with a space whose evaluator is never asked, so an option
        that cannot work on this data (a subset size above the candidates, an unknown
        feature in an order) fails before any model is fitted. Raises
        :class:`~featuresift.errors.InputError` keyed ``strategy.options.<option>``.
        The default checks a fixed subset size ``n_features``; subclasses extend it.

        Examples
        --------
        >>> from featuresift.costs import CostModel
        >>> from featuresift.engine.evaluator import CriterionEvaluator
        >>> space = SearchSpace(CriterionEvaluator(len, 3), CostModel.uniform("abc"))
        >>> make_strategy("forward", n_features=5).check(space)  # doctest: +ELLIPSIS
        Traceback (most recent call last):
        ...
        featuresift.errors.InputError: strategy.options.n_features: n_features=5, but ...
        """
        n = getattr(self, "n_features", None)
        if n is None:
            return
        most = min(len(space.candidates), space.max_features)
        if n > most:
            why = ("limits.max_features" if space.max_features < len(space.candidates)
                   else "candidate features (never_include left out)")
            raise InputError(f"n_features={n}, but there are at most {most} {why}",
                             key="strategy.options.n_features")

    def get_options(self) -> dict[str, Any]:
        """The constructor options of this strategy, as given."""
        sig = inspect.signature(type(self).__init__)
        return {
            k: getattr(self, k) for k in sig.parameters
            if k != "self" and hasattr(self, k)
        }


STRATEGIES: dict[str, type[SearchStrategy]] = {}
"""Registry of strategies by name; YAML's ``strategy.name`` looks here."""

STRATEGY_ALIASES: dict[str, str] = {}
"""Old spellings of strategy names (``filter_order``) -> the name; deprecated."""


def resolve_strategy_name(name: Any) -> Any:
    """The registered name for ``name``: itself, or the name an old spelling stands for.

    Names use hyphens; an underscore spelling of a registered name (``filter_order``,
    ``floating_forward``) still works, with a DeprecationWarning.

    Examples
    --------
    >>> import warnings
    >>> with warnings.catch_warnings():
    ...     warnings.simplefilter("ignore")
    ...     resolve_strategy_name("floating_forward")
    'floating-forward'
    """
    if not isinstance(name, str) or name in STRATEGIES:
        return name
    new = STRATEGY_ALIASES.get(name, name.replace("_", "-"))
    if new in STRATEGIES:
        warn_renamed("strategy", name, new, stacklevel=4)
        return new
    return name


def register_strategy(cls: type[SearchStrategy]) -> type[SearchStrategy]:
    """Class decorator: make a strategy available by its ``name``.

    Examples
    --------
    >>> @register_strategy
    ... class Nothing(SearchStrategy):
    ...     name = "nothing-doc-example"
    ...     def run(self, space):
    ...         pass
    >>> "nothing-doc-example" in STRATEGIES
    True
    """
    if not cls.name:
        raise ValueError("a strategy class needs a non-empty 'name'")
    STRATEGIES[cls.name] = cls
    return cls


def make_strategy(spec: str | dict | SearchStrategy, **options: Any) -> SearchStrategy:
    """Build a strategy from a registered name (plus options), a dict or an instance.

    Unknown names and unknown or invalid options raise :class:`InputError` naming them.

    Examples
    --------
    >>> make_strategy("forward").name
    'forward'
    >>> make_strategy({"name": "annealing", "options": {"n_steps": 10}}).get_options()["n_steps"]
    10
    >>> make_strategy("sideways")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: strategy.name: unknown strategy 'sideways'; known: ...
    """
    if isinstance(spec, SearchStrategy):
        if options:
            raise InputError("options cannot be given with a strategy instance")
        return spec
    if isinstance(spec, dict):
        opts = dict(spec)
        name = opts.pop("name", None)
        opts.update(opts.pop("options", None) or {})
        opts.update(options)
    else:
        name, opts = spec, dict(options)
    name = resolve_strategy_name(name)
    if name not in STRATEGIES:
        raise InputError(
            f"unknown strategy '{name}'; known: {', '.join(sorted(STRATEGIES))}",
            key="strategy.name",
        )
    cls = STRATEGIES[name]
    for old, new in cls.renamed_options.items():
        if old in opts:
            if new in opts:
                raise InputError(f"give '{new}' only (its old name '{old}' was given too)",
                                 key=f"strategy.options.{new}")
            warn_renamed(f"strategy '{name}'", old, new, stacklevel=3)
            opts[new] = opts.pop(old)
    params = inspect.signature(cls.__init__).parameters
    accepts_any = any(p.kind is inspect.Parameter.VAR_KEYWORD for p in params.values())
    if not accepts_any:
        allowed = [k for k in params if k != "self"]
        for k in opts:
            if k not in allowed:
                raise InputError(
                    f"strategy '{name}' has no option '{k}'; options: "
                    + (", ".join(allowed) or "none"),
                    key=f"strategy.options.{k}",
                )
    try:
        return cls(**opts)
    except InputError:
        raise
    except (TypeError, ValueError) as exc:
        raise InputError(f"strategy '{name}': {exc}", key="strategy.options") from None
