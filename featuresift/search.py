"""The search driver: problem or evaluator + strategy + budget → :class:`SearchResult`."""

from __future__ import annotations

import math
import numbers
import time
from collections.abc import Callable, Iterable
from typing import Any

from featuresift._compat import renamed_keywords, warn_renamed
from featuresift.costs import CostModel, make_cost_model
from featuresift.engine.evaluator import BaseEvaluator, CrossValidationEvaluator
from featuresift.engine.progress import Expected, SearchProgress
from featuresift.errors import InputError
from featuresift.guard import (
    DEFAULT_GUARD,
    FALLBACKS,
    fallback_of,
    make_guard,
    run_nested_guard,
    screen_in_search,
)
from featuresift.objectives import BaseObjective, make_objective
from featuresift.problem import SelectionProblem
from featuresift.result import EvaluatedSubset, PathRow, SearchResult
from featuresift.strategies.base import (
    Scored,
    SearchSpace,
    SearchStrategy,
    StopSearch,
    make_strategy,
)

__all__ = ["run_search", "prepare_for_objective", "failure_summary", "PICK_RULES",
           "DEFAULT_PICK", "REFERENCES", "reference_subsets", "check_pick"]

PICK_RULES = ("best", "one-se")
"""Final pick rules.

``best``
    The highest objective value found (the strategy's answer, or a reference that
    beats it). Meant for benchmarking searches: it chases fold noise.
``one-se`` (default)
    The one-standard-error rule (Breiman, Friedman, Olshen & Stone 1984, section 3.4):
    among every allowed subset evaluated (references included), the cheapest whose
    objective value is at least the best value minus the standard error of the best
    subset's fold scores; ties go to the higher value, then fewer measurements.
"""

PICK_ALIASES = {"one_se": "one-se"}
"""Older spellings of pick rules, still accepted."""

DEFAULT_PICK = "one-se"

_PICK_WORDS = {
    "best": "best: the highest objective value found",
    "one-se": "one-se: the cheapest subset within one standard error of the best "
              "(Breiman et al. 1984)",
}

_ONE_SE_FROM_STRATEGY = ("one-se: the cheapest subset within one standard error of the "
                         "strategy's answer (its stopping rule chose it; Breiman et al. 1984)")

REFERENCES = ("nothing", "free only", "everything")
"""Reference subsets evaluated in every run, beside the answer.

``nothing``: no measurement bought (only ``must_include``; with none, a prior-only
model: class frequencies or the mean). ``free only``: ``nothing`` plus every
zero-cost candidate (values on hand). ``everything``: every candidate. The first two
can be the answer; ``everything`` can when it is allowed (budget, size limit).
"""


def check_pick(pick: str) -> str:
    """The canonical name of a pick rule (raises :class:`InputError` naming ``pick``).

    The old spelling ``one_se`` still works, with a DeprecationWarning.

    Examples
    --------
    >>> import warnings
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     check_pick("one_se")
    'one-se'
    >>> str(caught[0].message)
    "pick: 'one_se' is deprecated; use 'one-se'"
    """
    if isinstance(pick, str) and pick in PICK_ALIASES:
        warn_renamed("pick", pick, PICK_ALIASES[pick])
        pick = PICK_ALIASES[pick]
    if pick not in PICK_RULES:
        raise InputError(f"must be one of {', '.join(PICK_RULES)}, got {pick!r}", key="pick")
    return pick


def _resolve_features(items: Iterable[int | str], names: list[str], key: str) -> list[int]:
    index = {n: i for i, n in enumerate(names)}
    out = []
    for it in items:
        if isinstance(it, str):
            if it not in index:
                raise InputError(f"unknown feature '{it}'", key=key)
            out.append(index[it])
        else:
            i = int(it)
            if not 0 <= i < len(names):
                raise InputError(f"column index {i} out of range", key=key)
            out.append(i)
    return out


def reference_subsets(space: SearchSpace) -> dict[str, tuple[int, ...]]:
    """The reference subsets of a search space (see :data:`REFERENCES`), as column tuples.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> cm = CostModel(["moisture", "protein", "ash"], {"moisture": 0, "protein": 6, "ash": 3})
    >>> space = SearchSpace(CriterionEvaluator(len, 3), cm, never_include=[2])
    >>> reference_subsets(space)
    {'nothing': (), 'free only': (0,), 'everything': (0, 1)}
    """
    must = tuple(space.must_include)
    free = tuple(f for f in space.candidates if space.cost_model.cost([f]) == 0)
    return {
        "nothing": must,
        "free only": tuple(sorted(set(must) | set(free))),
        "everything": tuple(sorted(set(must) | set(space.candidates))),
    }


def _expected_total(strat: SearchStrategy, space: SearchSpace,
                    with_references: bool) -> Expected | None:
    """Subsets the search will evaluate, references included, as the strategy knows it
    (``expected_evaluations``: an int is exact), or None."""
    fn = getattr(strat, "expected_evaluations", None)
    exp = fn(space) if callable(fn) else None
    if exp is None:
        return None
    if not isinstance(exp, Expected):
        exp = Expected(int(exp))
    if not with_references:
        return exp
    refs = set(reference_subsets(space).values())
    if exp.subsets is not None:  # exact: references the strategy evaluates count once
        return Expected(len(refs | set(exp.subsets)), exp.kind)
    return Expected(exp.n + len(refs), exp.kind)


def _evaluate_references(space: SearchSpace) -> dict[str, Scored]:
    """Evaluate the references one at a time, so that no race can drop them.

    They count like any evaluated subset (``max_evaluations``, ``max_time_s``); a limit
    reached here raises :class:`StopSearch` and the references not reached are absent.
    """
    out: dict[str, Scored] = {}
    for name, subset in reference_subsets(space).items():
        (out[name],) = space.evaluate([subset])
    return out


def _is_answer(space: SearchSpace, s: Scored) -> bool:
    return s.complete and s.evaluation.has_score and space.is_allowed(s.subset)


def _pick(space: SearchSpace, rule: str, refs: dict[str, Scored]) -> tuple[Scored | None, dict]:
    """Apply the pick rule; returns the answer and a description for the outputs."""
    allowed = [s for s in space.visited.values() if _is_answer(space, s)]
    chosen = space.visited.get(space.chosen) if space.chosen is not None else None
    top = chosen if chosen is not None and _is_answer(space, chosen) else space.best_of(allowed)
    best = space.best_of([top, *(r for r in refs.values() if _is_answer(space, r))]
                         if top is not None else allowed)
    info: dict[str, Any] = {"rule": rule, "description": _PICK_WORDS[rule]}
    if best is None:
        return None, info
    names = space.feature_names
    info["best"] = {"features": [names[i] for i in best.subset], "cost": best.cost,
                    "objective": best.value, "score_mean": best.mean,
                    "score_sem": best.evaluation.sem}
    # The rule's yardstick: the best allowed subset evaluated, or, when the strategy
    # named its own answer (a stopping rule such as ``tol`` or ``n_features``), that one.
    info["basis"] = "best evaluated"
    if best is chosen and space.best_of(allowed).rank_key > chosen.rank_key:
        info["basis"] = "strategy's answer"
        if rule == "one-se":
            info["description"] = _ONE_SE_FROM_STRATEGY
    if rule == "best":
        return best, info
    threshold = best.value - best.evaluation.sem
    close = [s for s in allowed if s.value >= threshold - 1e-12 * max(1.0, abs(threshold))]
    answer = min(close, key=lambda s: (round(s.cost, 12), -s.value, len(s.subset), s.subset))
    info["threshold"] = threshold
    info["n_within"] = len(close)
    return answer, info


def _with_scorer(problem: SelectionProblem, scorer: Any) -> SelectionProblem:
    """The same problem (data, model, costs, splits) scored with ``scorer``."""
    return SelectionProblem(
        problem.X, problem.y, problem.estimator, costs=problem.cost_model,
        cv=problem.splits, scoring=scorer, groups=problem.groups,
        feature_names=problem.feature_names,
    )


def prepare_for_objective(
    problem: SelectionProblem, objective: str | dict | BaseObjective | None
) -> tuple[SelectionProblem, BaseObjective]:
    """Bind an objective to the problem's data, and use the objective's own scorer if any.

    Returns the (possibly re-scored) problem and the prepared objective.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_iris(return_X_y=True)
    >>> p = SelectionProblem(X, y, GaussianNB(), cv=3, scoring="accuracy")
    >>> q, obj = prepare_for_objective(p, "score")
    >>> q is p, obj.name
    (True, 'score')
    """
    objective = make_objective(objective)
    objective.prepare(problem.X, problem.y)
    required = objective.required_scorer()
    if required is not None and repr(problem.scorer) != repr(required):
        problem = _with_scorer(problem, required)
    return problem, objective


@renamed_keywords(cost_model="costs", random_state="seed", max_time="max_time_s")
def run_search(
    problem: SelectionProblem | BaseEvaluator,
    strategy: str | dict | SearchStrategy = "greedy-swap",
    *,
    costs: Any = None,
    budget: float | None = None,
    objective: str | dict | BaseObjective | None = None,
    max_features: int | None = None,
    max_evaluations: int | None = None,
    max_time_s: float | None = None,
    must_include: Iterable[int | str] = (),
    never_include: Iterable[int | str] = (),
    pick: str = DEFAULT_PICK,
    guard: str | dict | bool | None = DEFAULT_GUARD,
    references: bool = True,
    seed: int | None = 0,
    n_jobs: int | None = None,
    callback: Callable | None = None,
    racing: Any = None,
    journal: Any = None,
    chunk_size: int | None = None,
    verbose: int = 0,
    on_fit_error: str = "raise",
    share_preprocessing: bool = True,
    fast_path: bool = True,
    pool: str = "auto",
    warm_start: bool = False,
    error_score: float = math.nan,
    **strategy_options: Any,
) -> SearchResult:
    """Search feature subsets and return the chosen measurements.

    Parameters
    ----------
    problem : SelectionProblem or BaseEvaluator
        What to evaluate. A problem gets a :class:`CrossValidationEvaluator`; an
        evaluator is used as given (its cache carries over between calls).
    strategy : str, dict or SearchStrategy, default="greedy-swap"
        Registered name ("greedy-swap", "forward", "backward", ...), ``{"name": ..., **options}``
        or an instance. Extra keyword arguments are passed as strategy options.
    costs : CostModel or mapping, optional
        Only when ``problem`` is an evaluator: a problem carries its own costs, and
        giving other costs here with a problem is an error;
        a :class:`CostModel` or YAML's ``{"features":..., "panels":..., "unit":...}``;
        default every feature costs 1.
    budget : float, optional
        Maximum acquisition cost per sample (None: unlimited).
    objective : str, dict or BaseObjective, optional
        Default "score" (maximise the mean CV score within the budget). An objective
        with its own scorer (``expected_cost``) replaces the problem's scorer.
    max_features, max_evaluations, max_time_s : optional
        User limits (size, distinct subsets evaluated, seconds).
    must_include, never_include : iterables of names or column indices
        Measurements always taken / not available.
    pick : {"one-se", "best"}, default="one-se"
        Final pick rule (see :data:`PICK_RULES`): the cheapest allowed subset evaluated
        whose objective is within one standard error of the best (Breiman et al.
        1984), or the best itself. The references "nothing" and "free only" (and
        "everything" when allowed) are evaluated in every run and compete. The old
        spelling "one_se" is accepted.
    references : bool, default=True
        Evaluate the references (:data:`REFERENCES`) and let them compete for the answer.
        False gives a strategy's raw answer (for studying strategies: benchmarks and the
        strategy contract); the guard then has no fallback and is skipped.
    guard : {"nested", "off"} or dict, default="nested"
        Noise guard (:mod:`featuresift.guard`): re-run the search inside K outer folds
        and keep an answer that buys measurements only if it beats the better of
        "nothing" and "free only" on the outer folds (one-sided paired t-test);
        ``{"name": "nested", "folds": 5, "alpha": 0.05}``; "off" (or None/False)
        switches it off. Needs a problem (or a CV evaluator); skipped for other
        evaluators. It costs about ``folds`` times the search's fits, and none when
        the answer already is "nothing" or "free only".
    seed : int, optional, default=0
        Seed of stochastic strategies (and of the guard's outer folds); recorded in
        the result (``result.seed``).
    n_jobs : int, optional
        Parallel fits (when an evaluator is built here).
    cost_model, random_state, max_time : deprecated
        Old names of ``costs``, ``seed`` and ``max_time_s`` (DeprecationWarning).
    callback : callable, optional
        ``callback(step)`` after each path step; returning True stops.
    verbose : int, default=0
        Progress: 0 off; 1 one bar for the search (subsets evaluated, current step, best
        score so far, time left) in a notebook or on a terminal, one line per step when
        output is piped; 2 always the bar.
    racing, journal, chunk_size, on_fit_error, share_preprocessing, fast_path, pool, \
warm_start : optional
        Passed to the :class:`CrossValidationEvaluator` built here (racing rule,
        SQLite journal path for resumable runs, fits per parallel task,
        failure policy "raise" or "record", column-wise pipeline steps fitted once per
        fold, exact scores of OLS/ridge/LDA from per-fold statistics, where fits run:
        "auto" / "always" / "never" in the worker pool, logistic-regression fits
        started from the parent subset's coefficients). Ignored when ``problem`` is an
        evaluator.
    error_score : float, default=nan
        Under ``on_fit_error="record"``, what a failed fold scores (scikit-learn's
        convention). NaN: a subset with any failed fold (fit error, scorer error, NaN
        score) has no score and is never chosen; a number: failed folds count as that
        score. The failures are counted per subset in ``result.failures``.

    Returns
    -------
    SearchResult

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.tree import DecisionTreeClassifier
    >>> X, y = load_iris(return_X_y=True)
    >>> p = SelectionProblem(X, y, DecisionTreeClassifier(random_state=0), cv=3)
    >>> res = run_search(p, "forward", n_features=2)
    >>> res.selected, res.pick["best"]["features"]   # one-se: cheapest as good as the best
    (['x3'], ['x2', 'x3'])
    >>> sorted(res.references), res.guard["stage"]
    (['everything', 'free only', 'nothing'], 'in-search screen')
    """
    pick = check_pick(pick)
    guard_spec = make_guard(guard)
    # verbose=True is 1, as in scikit-learn; a count of features is never a bool.
    for key, value, low in (("verbose", verbose, 0), ("max_features", max_features, 1)):
        if value is not None and ((isinstance(value, bool) and key != "verbose")
                                  or not isinstance(value, numbers.Integral) or value < low):
            raise InputError(f"{key} must be an integer >= {low}, got {value!r}", key=key)
    t0 = time.perf_counter()
    objective = make_objective(objective)
    if isinstance(problem, SelectionProblem):
        if costs is not None and costs is not problem.cost_model:
            # Never silently ignored: the problem's own costs are the ones used.
            raise InputError(
                "costs: a SelectionProblem carries its own costs; give them to "
                "SelectionProblem(..., costs=...) (run_search's costs= is for evaluators)",
                key="costs")
        problem, objective = prepare_for_objective(problem, objective)
        required = objective.required_scorer()
        evaluator: BaseEvaluator | None = None  # built below, after the input checks
        cost_model = problem.cost_model
        scoring = problem.scoring if isinstance(problem.scoring, str) else (
            "estimator score" if problem.scoring is None else getattr(
                problem.scoring, "__name__", "custom scorer"))
        if required is not None:
            scoring = f"{objective.name} scorer"
    else:
        evaluator = problem
        cost_model = costs if isinstance(costs, CostModel) else make_cost_model(
            evaluator.feature_names, costs)
        scoring = "criterion"
    if budget is not None:
        if isinstance(budget, bool) or not isinstance(budget, (int, float)) or budget != budget:
            raise InputError(f"budget must be a number, got {budget!r}", key="budget")
        cheapest = cost_model.cheapest_feature_cost()
        if budget < cheapest:
            raise InputError(
                f"budget {budget:g} {cost_model.unit} is below the cheapest possible subset "
                f"({cheapest:g} {cost_model.unit})",
                key="budget",
            )
    strat = make_strategy(strategy, **strategy_options)
    owned = evaluator is None
    if evaluator is None:
        evaluator = CrossValidationEvaluator(
            problem, n_jobs=n_jobs, racing=racing, journal=journal, chunk_size=chunk_size,
            verbose=0, on_fit_error=on_fit_error, share_preprocessing=share_preprocessing,
            fast_path=fast_path,  # progress: one bar for the whole search (below)
            pool=pool, warm_start=warm_start, error_score=error_score,
        )
    names = list(cost_model.feature_names)
    try:
        return _search(evaluator, strat, cost_model, names, budget, objective, max_features,
                       max_evaluations, max_time_s, must_include, never_include,
                       seed, callback, pick, scoring, t0, verbose, guard_spec,
                       bool(references))
    finally:
        if owned:
            evaluator.close()  # closes a journal this call opened


def _reference_record(space: SearchSpace, sc: Scored) -> dict[str, Any]:
    ev = sc.evaluation
    return {
        "features": [space.feature_names[i] for i in sc.subset],
        "support": list(sc.subset),
        "cost": sc.cost,
        "score_mean": ev.mean if math.isfinite(ev.mean) else None,
        "score_std": ev.std,
        "score_sem": ev.sem,
        "objective": sc.value if math.isfinite(sc.value) else None,
        "allowed": _is_answer(space, sc),
        "fold_scores": [float(x) for x in ev.fold_scores],
    }


def _guard(spec, evaluator, strat, space, pick, seed, answer, refs, references, verbose=0):
    """Run the noise guard; returns (the answer, the guard's record)."""
    if spec is None:
        return answer, {"name": "off", "decision": "off", "n_fits": 0}
    record: dict[str, Any] = {**spec.describe(), "n_fits": 0}
    fallback_subsets = {refs[n].subset for n in FALLBACKS
                        if n in refs and references[n]["allowed"]}
    if not fallback_subsets:
        record["decision"] = "skipped: no reference to fall back to (references off)"
        return answer, record
    if answer.subset in fallback_subsets:
        record["decision"] = "not needed: the answer buys no measurement"
        return answer, record
    if not isinstance(evaluator, CrossValidationEvaluator):
        record["decision"] = "skipped: needs a problem with data (the evaluator has none)"
        return answer, record
    name = fallback_of(references)
    record.update(screen_in_search(answer, refs[name], space.objective,
                                   evaluator.problem.splits, space.n_evaluations))
    if record["screen_p_value"] <= spec.alpha:
        record["stage"] = "in-search screen"
        record["passed"] = True
        record["decision"] = ("kept: the answer beats the fallback on the search's folds "
                              "even after a Bonferroni correction for every subset evaluated")
        return answer, record
    record["stage"] = "nested"
    options = {
        "budget": space.budget, "max_features": space.max_features,
        "max_evaluations": space.max_evaluations, "max_time_s": space.max_time_s,
        "must_include": list(space.must_include), "never_include": sorted(space.never_include),
        "pick": pick, "racing": evaluator.race, "journal": evaluator.journal,
        "chunk_size": evaluator.chunk_size, "on_fit_error": evaluator.on_fit_error,
        "share_preprocessing": evaluator.plan.head is not None,
        "fast_path": evaluator.fast_path is not None,
        "pool": evaluator.pool.mode, "warm_start": evaluator.warm is not None,
    }
    record.update(run_nested_guard(spec, evaluator.problem, strat, space.objective,
                                   seed=seed, n_jobs=evaluator.n_jobs,
                                   search_options=options, verbose=verbose))
    if record["passed"]:
        record["decision"] = "kept: the answer beats the fallback on the outer folds"
        return answer, record
    record["decision"] = f"replaced by '{name}': no evidence that buying measurements pays"
    record["replaced"] = [space.feature_names[i] for i in answer.subset]
    return refs[name], record


def _search(evaluator, strat, cost_model, names, budget, objective, max_features,
            max_evaluations, max_time_s, must_include, never_include, seed, callback,
            pick, scoring, t0, verbose=0, guard_spec=None,
            with_references=True) -> SearchResult:
    space = SearchSpace(
        evaluator,
        cost_model,
        budget=budget,
        objective=objective,
        max_features=max_features,
        max_evaluations=max_evaluations,
        max_time_s=max_time_s,
        must_include=_resolve_features(must_include, names, "must_include"),
        never_include=_resolve_features(never_include, names, "never_include"),
        seed=seed,
        callback=callback,
    )
    strat.check(space)  # options against this problem, before any evaluation
    fits_before = evaluator.n_fits
    hits_before = evaluator.n_cache_hits
    limited = False
    total = _expected_total(strat, space, with_references)
    if max_evaluations is not None and (total is None or total.n > max_evaluations):
        total = Expected(max_evaluations, "at most")
    space.progress = SearchProgress(
        verbose, total=total, max_time_s=max_time_s,
        desc=strat.name + ("" if budget is None else f" (budget {budget:g})"))
    refs: dict[str, Scored] = {}
    try:
        # References first: the strategy then gets them from the cache, and the limits
        # count every subset evaluated.
        if with_references:
            refs.update(_evaluate_references(space))
        strat.run(space)
    except StopSearch:
        limited = True
    finally:
        space.progress.close()
    if with_references and len(refs) < len(REFERENCES):  # a limit stopped the references themselves
        for name, subset in reference_subsets(space).items():
            if name not in refs and subset in space.visited:
                refs[name] = space.visited[subset]
    references = {n: _reference_record(space, sc) for n, sc in refs.items()}
    best, pick_info = _pick(space, pick, refs)
    search_fits = evaluator.n_fits - fits_before
    guard_info: dict[str, Any] = {"name": "off", "decision": "off", "n_fits": 0}
    if best is not None:
        best, guard_info = _guard(guard_spec, evaluator, strat, space, pick, seed,
                                  best, refs, references, verbose)
    for n, sc in refs.items():
        references[n]["is_answer"] = best is not None and sc.subset == best.subset
    path = [
        PathRow(
            st.step, st.action, st.feature, tuple(names[i] for i in st.subset),
            st.scored.mean, st.scored.evaluation.std, st.scored.cost, st.scored.value,
            st.n_evaluations, st.scored.evaluation.n_failed_folds,
        )
        for st in space.path
    ]
    failures = failure_summary(space, evaluator)
    strategy_desc = {"name": strat.name, "options": strat.get_options()}
    evaluations = [
        EvaluatedSubset(tuple(names[i] for i in key), sc.cost, sc.mean, sc.evaluation.sem,
                        sc.value, sc.evaluation.n_folds_run or len(sc.evaluation.fold_scores),
                        sc.evaluation.status, sc.evaluation.n_failed_folds)
        for key, sc in space.visited.items()
    ]
    extras = dict(space.extras)
    if isinstance(evaluator, CrossValidationEvaluator):
        extras["engine"] = evaluator.stats()
    common = dict(
        cost_unit=cost_model.unit, budget=budget, scoring=scoring, strategy=strategy_desc,
        path=path, n_evaluations=space.n_evaluations, n_fits=search_fits,
        n_cache_hits=evaluator.n_cache_hits - hits_before, extras=extras,
        references=references, pick=pick_info, guard=guard_info,
        evaluations=evaluations, seed=seed,
    )
    if best is None:
        reason = space.stop_reason or "no allowed subset was evaluated"
        if failures.get("none_scored"):
            reason = failures["message"]
        return SearchResult(
            selected=[], support=[], cost=0.0, cost_breakdown=[],
            score_mean=float("nan"), score_std=float("nan"), fold_scores=[],
            objective={**space.objective.describe(), "value": None},
            wall_time=time.perf_counter() - t0,
            stop_reason=reason, success=False, failures=failures,
            **common,
        )
    ev = best.evaluation
    return SearchResult(
        selected=[names[i] for i in best.subset],
        support=list(best.subset),
        cost=best.cost,
        cost_breakdown=cost_model.breakdown(best.subset),
        score_mean=ev.mean,
        score_std=ev.std,
        fold_scores=[float(s) for s in ev.fold_scores],
        objective={**space.objective.describe(), "value": best.value, "pick": pick},
        wall_time=time.perf_counter() - t0,
        stop_reason=space.stop_reason or "strategy finished",
        success=not limited,
        failed_folds=list(ev.failed_folds),
        failures=failures,
        **common,
    )


FAILURES_LISTED = 50
"""At most this many subsets with failed folds are listed one by one in a result."""


def failure_summary(space: SearchSpace, evaluator: BaseEvaluator) -> dict[str, Any]:
    """Which evaluated subsets had failed folds, and what the failures did.

    Returns an empty dict when nothing failed. Otherwise: ``n_failed_fits`` (failed
    folds over the subsets this search evaluated), ``n_subsets`` (subsets with at least
    one failed fold), ``n_unscored`` (those left without a score, never chosen),
    ``n_evaluated``, ``error_score`` (None for NaN), ``none_scored`` (True when no
    evaluated subset has a score), ``message`` (one readable line) and ``subsets``:
    up to :data:`FAILURES_LISTED` entries ``{"features", "failed_folds", "n_folds",
    "errors", "scored"}``, most failed folds first. Racing-dropped evaluations are not
    failures.

    Examples
    --------
    >>> from featuresift.engine.evaluator import CriterionEvaluator
    >>> from featuresift.costs import CostModel
    >>> ev = CriterionEvaluator(lambda s: float("nan") if 2 in s else 1.0, n_features=3)
    >>> space = SearchSpace(ev, CostModel.uniform("abc"))
    >>> _ = space.evaluate([[0], [2]])
    >>> info = failure_summary(space, ev)
    >>> info["n_subsets"], info["subsets"][0]["features"], info["none_scored"]
    (1, ['c'], False)
    """
    names = space.feature_names
    failed = [sc.evaluation for sc in space.visited.values() if sc.evaluation.n_failed_folds]
    if not failed:
        return {}
    error_score = getattr(evaluator, "error_score", math.nan)
    unscored = [e for e in failed if not e.has_score]
    # The empty set is scored by a prior-only model, not by the user's: when the model
    # itself never produced a score on any measurement set, nothing could be scored.
    none_scored = not any(
        sc.complete and sc.evaluation.has_score and sc.subset
        for sc in space.visited.values())
    failed.sort(key=lambda e: (-e.n_failed_folds, e.subset))
    first = failed[0]
    n_folds = len(first.fold_scores)
    n_fits = sum(e.n_failed_folds for e in failed)
    what = (f"{n_fits} fits failed in {len(failed)} of {len(space.visited)} evaluated "
            f"subsets")
    if none_scored:
        errors = first.details.get("errors", [])
        message = (
            f"no subset could be scored: {what}, and no evaluated subset has a score on "
            f"every fold (e.g. [{', '.join(names[i] for i in first.subset)}]: "
            f"{errors[0] if errors else 'failed'})"
        )
    elif math.isnan(error_score):
        message = f"{what}; those {len(unscored)} subsets have no score and were not chosen"
    else:
        message = f"{what}; their failed folds were scored error_score={error_score:g}"
    return {
        "n_failed_fits": n_fits,
        "n_subsets": len(failed),
        "n_unscored": len(unscored),
        "n_evaluated": len(space.visited),
        "error_score": None if math.isnan(error_score) else error_score,
        "none_scored": none_scored,
        "message": message,
        "subsets": [
            {
                "features": [names[i] for i in e.subset],
                "failed_folds": list(e.failed_folds),
                "n_folds": n_folds,
                "errors": list(e.details.get("errors", [])),
                "scored": e.has_score,
            }
            for e in failed[:FAILURES_LISTED]
        ],
    }
