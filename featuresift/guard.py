"""The noise guard: does the answer beat buying nothing on data the search never saw?

A search that looks at many subsets always finds one that scores above the
prior-only model on its own folds, even when the measurements are pure noise: its
in-search score is the maximum of many noisy estimates. The guard asks the question
again on held-out data.

``nested`` (the default)
    **Stage 1, in-search screen (no fits).** The answer's fold scores are compared with
    the better fallback's (``nothing`` or ``free only``) on the search's own folds:
    a one-sided corrected resampled t-test (Nadeau & Bengio 2003: the variance of the
    fold differences is inflated by ``1/k + n_test/n_train`` for the overlap of the
    training sets), its p-value multiplied by the number of subsets the search
    evaluated (Bonferroni), so that picking the best of many does not pass by chance.
    When that corrected p-value is at most ``alpha`` the answer is kept without
    further fits: the signal is clear. The union bound is over the subsets evaluated;
    an adaptive search chose which ones, so this stage only accepts, never rejects.

    **Stage 2, nested re-run** (only when stage 1 does not accept). The whole search
    (same strategy, budget, objective, limits and pick rule) is
    re-run inside each of K outer training parts (:func:`featuresift.nested_evaluation`,
    K = ``folds``, shuffled with the run's seed; stratified for classifiers, grouped
    when the problem has groups). In each outer fold the inner answer and the inner
    fallback (the better of ``nothing`` and ``free only`` on the inner folds) are
    refitted on the outer training part and valued by the objective on the outer test
    part, which neither search saw. A one-sided paired t-test on the K differences
    (answer minus fallback) asks whether buying measurements pays; when its p-value
    exceeds ``alpha`` the run answers with the fallback (``nothing`` or
    ``free only``) instead. Answers that already are a fallback need no guard (no fits).

    The outer scores of the inner answers are a nested (honest) estimate of "search,
    then fit", reported beside the in-search score. Cost: about K times the search's
    fits on (K-1)/K of the rows, plus two refits per outer fold. The paired t-test on
    outer folds treats them as independent; they share training rows, so it is
    somewhat liberal (Nadeau & Bengio 2003); ``alpha`` is kept at 0.05.

``off``
    No guard: the pick rule's answer stands.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import stats

from featuresift.engine.records import Evaluation
from featuresift.errors import InputError

__all__ = ["GUARDS", "DEFAULT_GUARD", "GuardSpec", "make_guard", "run_nested_guard"]

GUARDS = ("nested", "off")
"""Names of the noise guards."""

DEFAULT_GUARD = "nested"

FALLBACKS = ("nothing", "free only")
"""References the guard may fall back to."""


@dataclass(frozen=True)
class GuardSpec:
    """A noise guard and its settings.

    Attributes
    ----------
    name : str
        ``"nested"`` (the only guard that fits models; ``"off"`` is represented by None).
    folds : int
        Outer folds K (>= 3).
    alpha : float
        Level of the one-sided paired t-test (0 < alpha < 1).

    Examples
    --------
    >>> make_guard({"name": "nested", "folds": 4})
    GuardSpec(name='nested', folds=4, alpha=0.05)
    """

    name: str = DEFAULT_GUARD
    folds: int = 5
    alpha: float = 0.05

    def describe(self) -> dict[str, Any]:
        """Plain data for outputs."""
        return {"name": self.name, "folds": self.folds, "alpha": self.alpha}


def make_guard(spec: Any) -> GuardSpec | None:
    """A :class:`GuardSpec` from a name, True/False/None, a dict or a spec; None means off.

    Examples
    --------
    >>> make_guard("nested")
    GuardSpec(name='nested', folds=5, alpha=0.05)
    >>> make_guard("off") is None and make_guard(False) is None and make_guard(None) is None
    True
    >>> make_guard({"name": "nested", "alpha": 2})
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: guard.alpha: must lie strictly between 0 and 1, got 2
    """
    if spec is None or spec is False or spec == "off":
        return None
    if isinstance(spec, GuardSpec):
        return spec
    if spec is True:
        return GuardSpec()
    if isinstance(spec, str):
        spec = {"name": spec}
    if not isinstance(spec, dict):
        raise InputError(f"expected one of {', '.join(GUARDS)} or a mapping, got {spec!r}",
                         key="guard")
    opts = dict(spec)
    name = opts.pop("name", DEFAULT_GUARD)
    if name == "off":
        return None
    if name not in GUARDS:
        raise InputError(f"unknown guard {name!r}; known: {', '.join(GUARDS)}", key="guard.name")
    folds = opts.pop("folds", 5)
    alpha = opts.pop("alpha", 0.05)
    if opts:
        raise InputError(f"unknown option(s) {', '.join(map(str, opts))}; options: folds, alpha",
                         key="guard")
    if isinstance(folds, bool) or not isinstance(folds, (int, np.integer)) or folds < 3:
        raise InputError(f"must be an integer >= 3, got {folds!r}", key="guard.folds")
    if isinstance(alpha, bool) or not isinstance(alpha, (int, float)) or not 0 < alpha < 1:
        raise InputError(f"must lie strictly between 0 and 1, got {alpha!r}", key="guard.alpha")
    return GuardSpec(name, int(folds), float(alpha))


def fallback_of(references: dict[str, dict]) -> str:
    """Name of the better allowed fallback among a result's references.

    Ranked as the search ranks subsets: objective, then score, then lower cost,
    then fewer measurements; ``nothing`` wins exact ties.
    """
    ok = [n for n in FALLBACKS if n in references and references[n]["allowed"]]

    def key(n):
        r = references[n]
        value = r["objective"] if r["objective"] is not None else -math.inf
        mean = r["score_mean"] if r["score_mean"] is not None else -math.inf
        return (value, mean, -r["cost"], -len(r["features"]), -FALLBACKS.index(n))

    return max(ok, key=key)


def paired_p_value(differences: list[float]) -> float:
    """One-sided paired t-test p-value for "mean difference > 0".

    All differences zero: 1 (no evidence). Zero spread with a positive (negative)
    mean: 0 (1).

    Examples
    --------
    >>> round(paired_p_value([0.1, 0.2, 0.15, 0.12, 0.18]), 6)   # scipy.stats.ttest_1samp
    0.000621
    """
    d = np.asarray(differences, dtype=float)
    if d.size == 0 or not np.isfinite(d).all():
        return 1.0
    if np.all(d == d[0]):
        return 0.0 if d[0] > 0 else 1.0
    return float(stats.ttest_1samp(d, 0.0, alternative="greater").pvalue)


def screen_in_search(answer: Any, fallback: Any, objective: Any, splits: list,
                     n_evaluated: int) -> dict[str, Any]:
    """Stage 1 of the guard: the Bonferroni-corrected resampled t-test on the search's folds.

    Returns ``{"screen_p_value": ..., "screen_n_subsets": ..., "screen_accepts": bool}``
    (``screen_accepts`` is decided by the caller against ``alpha``).
    """
    a = [objective.value(Evaluation(answer.subset, (s,)), answer.cost)
         for s in answer.evaluation.fold_scores]
    b = [objective.value(Evaluation(fallback.subset, (s,)), fallback.cost)
         for s in fallback.evaluation.fold_scores]
    d = np.subtract(a, b, dtype=float)
    k = d.size
    ratio = float(np.mean([len(te) / len(tr) for tr, te in splits]))
    if k < 2 or not np.isfinite(d).all():
        p = 1.0
    elif np.all(d == d[0]):
        p = 0.0 if d[0] > 0 else 1.0
    else:
        se = math.sqrt((1.0 / k + ratio) * float(np.var(d, ddof=1)))
        p = float(stats.t.sf(float(np.mean(d)) / se, df=k - 1))
    return {"screen_p_value": min(1.0, p * max(1, n_evaluated)),
            "screen_n_subsets": int(n_evaluated), "screen_test_train_ratio": ratio}


def run_nested_guard(
    spec: GuardSpec,
    problem: Any,
    strategy: Any,
    objective: Any,
    *,
    seed: int | None,
    n_jobs: int | None,
    search_options: dict[str, Any],
    verbose: int = 0,
) -> dict[str, Any]:
    """Run the nested guard for a problem; returns the guard's record (see module notes).

    ``search_options`` are the run's :func:`~featuresift.run_search` options (budget,
    limits, pick, engine settings); the guard itself is switched off inside.
    """
    from featuresift.nested import _fit_score, nested_evaluation, outer_splitter

    fixed = getattr(problem.cv, "cv", None) is not None  # sklearn's wrapper of a list
    inner_cv = len(problem.splits) if fixed else problem.cv
    options = {**search_options, "guard": "off", "objective": copy.deepcopy(objective)}
    ne = nested_evaluation(
        problem.X, problem.y, problem.estimator, costs=problem.cost_model,
        outer_cv=spec.folds, inner_cv=inner_cv, scoring=problem.scoring,
        groups=problem.groups, feature_names=problem.feature_names, strategy=strategy,
        seed=seed, n_jobs=n_jobs, verbose=verbose, _progress_desc="noise guard", **options,
    )
    X, y, cm = problem.X, problem.y, problem.cost_model
    # The same outer folds as nested_evaluation's (same splitter, same seed).
    splitter = outer_splitter(spec.folds, stratified=problem.classification,
                              grouped=problem.groups is not None,
                              seed=0 if seed is None else seed)
    outer = list(splitter.split(X, y, problem.groups))
    fallbacks, v_answer, v_fallback, diffs = [], [], [], []
    n_fits = sum(r.n_fits for r in ne.results) + len(ne.results)
    for (train, test), res, score in zip(outer, ne.results, ne.outer_scores):
        name = fallback_of(res.references)
        fb = res.references[name]
        if list(fb["support"]) == list(res.support):
            fb_score = score
        else:
            fb_score = _fit_score(problem.estimator, problem.scorer, X[train], y[train],
                                  X[test], y[test], list(fb["support"]),
                                  problem.classification)
            n_fits += 1
        a = objective.value(Evaluation(tuple(res.support), (score,)), cm.cost(res.support))
        b = objective.value(Evaluation(tuple(fb["support"]), (fb_score,)),
                            cm.cost(fb["support"]))
        fallbacks.append(name)
        v_answer.append(float(a))
        v_fallback.append(float(b))
        diffs.append(float(a - b))
    p = paired_p_value(diffs)
    return {
        **spec.describe(),
        "test": "one-sided paired t-test on outer-fold objective values, "
                "answer minus fallback",
        "p_value": p,
        "passed": bool(p <= spec.alpha),
        "outer_answers": [list(s) for s in ne.selected],
        "outer_fallbacks": fallbacks,
        "outer_objective_answer": v_answer,
        "outer_objective_fallback": v_fallback,
        "nested_scores": [float(s) for s in ne.outer_scores],
        "nested_mean": float(np.mean(ne.outer_scores)),
        "nested_std": float(np.std(ne.outer_scores, ddof=1)) if len(ne.outer_scores) > 1
        else 0.0,
        "n_fits": int(n_fits),
    }
