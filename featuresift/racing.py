"""Racing: stop evaluating candidate subsets that are statistically behind the leader.

A batch of candidates (for example every feature a forward step could add) is scored
fold by fold in *rounds*. After each round a race rule looks at the fold scores seen
so far — the same folds for every candidate, so comparisons are paired (blocked) —
and drops the candidates that are clearly worse than the leader. Survivors are scored
on every fold; dropped candidates keep the fold scores they got.

Two published rules are available:

``"f-race"`` (:class:`FRace`, the default)
    Birattari, Stützle, Paquete & Varrentrapp (2002), "A racing algorithm for
    configuring metaheuristics", GECCO. Folds are blocks, candidates are
    treatments. The Friedman two-way analysis of variance by ranks tests whether
    any candidate differs; when it rejects, a candidate is dropped if its rank sum
    is significantly below the leader's by the Conover (1999) pairwise comparison
    that follows the Friedman test (the post-test named by Birattari et al.;
    MEMORY, secondary sources). Ranks make the rule free of the score's scale.
``"hoeffding"`` (:class:`HoeffdingRace`)
    Maron & Moore (1994), "Hoeffding Races: Accelerating Model Selection Search
    for Classification and Function Approximation", NIPS 6. Each candidate's mean
    fold score lies, with probability at least ``1 - delta'``, within
    ``eps(n) = sqrt(B^2 ln(2/delta') / (2n))`` of its expectation, where ``B`` is
    the width of the score range; a candidate is dropped when its upper bound is
    below the leader's lower bound. ``delta'`` is the overall ``delta`` divided by
    (candidates x folds), Bonferroni style, so that all intervals hold at once
    (our design choice; the paper's exact split is MEMORY). With few folds the
    bound is wide: a 5-fold race with scores in [0, 1] drops only candidates
    behind by more than about 1.5, i.e. never. It is useful with many folds
    (repeated CV) or narrow score ranges.

Guarantees common to both rules (see :meth:`BaseRace.keep`):

* the leader — the best mean over the folds seen so far, ties to the earlier
  candidate — is never dropped, and neither is any candidate whose mean equals it;
* a candidate is judged only after ``min_folds`` folds;
* the decision depends only on the fold scores, so it is the same whatever the
  order of fitting, the number of jobs or which scores came from a cache.
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from typing import Any, ClassVar

import numpy as np
from scipy import stats

from featuresift.errors import InputError

__all__ = [
    "BaseRace",
    "FRace",
    "HoeffdingRace",
    "RACES",
    "make_race",
    "hoeffding_epsilon",
    "friedman_test",
]


def hoeffding_epsilon(score_range: float, delta: float, n: int) -> float:
    """Half-width of the Hoeffding confidence interval of a mean of ``n`` bounded values.

    ``eps = sqrt(B^2 ln(2/delta) / (2 n))``: with probability at least ``1 - delta``
    the mean of ``n`` independent values in a range of width ``B`` is within ``eps``
    of its expectation (Hoeffding 1963, two-sided; as used by Maron & Moore 1994).

    Parameters
    ----------
    score_range : float
        Width ``B`` of the range of one value.
    delta : float
        Allowed probability that the interval does not hold, in (0, 1).
    n : int
        Number of values averaged.

    Examples
    --------
    >>> round(hoeffding_epsilon(1.0, 0.05, 100), 7)
    0.1358102
    """
    if not score_range > 0:
        raise InputError(f"the score range must be > 0, got {score_range!r}")
    if not 0 < delta < 1:
        raise InputError(f"delta must be in (0, 1), got {delta!r}")
    if n < 1:
        raise InputError(f"n must be >= 1, got {n!r}")
    return math.sqrt(score_range**2 * math.log(2.0 / delta) / (2.0 * n))


def _block_ranks(scores: np.ndarray) -> np.ndarray:
    """Ranks of the candidates within each fold (column); 1 = lowest score, ties averaged.

    ``scores`` has shape (n_candidates, n_folds); NaN scores (failed fits) rank lowest.
    """
    filled = np.where(np.isnan(scores), -np.inf, scores)
    return np.column_stack([stats.rankdata(filled[:, j]) for j in range(filled.shape[1])])


def friedman_test(scores: Any) -> tuple[float, float]:
    """Friedman rank test of ``k`` treatments over ``n`` blocks, corrected for ties.

    Parameters
    ----------
    scores : array-like of shape (k, n)
        One row per treatment (candidate), one column per block (fold).

    Returns
    -------
    statistic, pvalue : float
        The chi-square form of the statistic and its upper-tail p-value with
        ``k - 1`` degrees of freedom (equal to :func:`scipy.stats.friedmanchisquare`).

    Examples
    --------
    Sprent & Smeeton's pulse data (three treatments, seven subjects):

    >>> s, p = friedman_test([[72, 96, 88, 92, 74, 76, 82],
    ...                       [120, 120, 132, 120, 101, 96, 112],
    ...                       [76, 95, 104, 96, 84, 72, 76]])
    >>> round(s, 6), round(p, 6)
    (10.571429, 0.005063)
    """
    arr = np.asarray(scores, dtype=float)
    k, n = arr.shape
    ranks = _block_ranks(arr)
    rank_sums = ranks.sum(axis=1)
    a1 = float((ranks**2).sum())
    c1 = n * k * (k + 1) ** 2 / 4.0
    denom = a1 - c1
    if denom <= 0:  # every block a complete tie
        return 0.0, 1.0
    statistic = (k - 1) * (float((rank_sums**2).sum()) - n * c1) / denom
    return statistic, float(stats.chi2.sf(statistic, k - 1))


class BaseRace(ABC):
    """A racing rule: which candidates to keep after some folds.

    Subclasses implement :meth:`_behind`, which marks candidates statistically behind
    the leader; :meth:`keep` adds the guarantees (minimum folds, the leader and its
    ties always kept).

    Parameters
    ----------
    min_folds : int, default=2
        Folds every candidate is scored on before the first test.

    Examples
    --------
    A rule that drops candidates more than 0.2 behind the leader's mean:

    >>> class GapRace(BaseRace):
    ...     name = "gap-doc-example"
    ...     def _behind(self, scores, n_total_folds):
    ...         means = scores.mean(axis=1)
    ...         return means < means.max() - 0.2
    >>> scores = np.array([[0.9, 0.8], [0.85, 0.9], [0.3, 0.4]])
    >>> GapRace().keep(scores, n_total_folds=5).tolist()
    [True, True, False]
    >>> GapRace(min_folds=3).keep(scores, n_total_folds=5).tolist()  # too early to drop
    [True, True, True]
    """

    name: ClassVar[str] = ""

    def __init__(self, min_folds: int = 2) -> None:
        if isinstance(min_folds, bool) or not isinstance(min_folds, int) or min_folds < 1:
            raise InputError(f"racing min_folds must be an integer >= 1, got {min_folds!r}")
        self.min_folds = min_folds

    def keep(self, scores: np.ndarray, n_total_folds: int) -> np.ndarray:
        """Boolean mask of candidates that stay in the race.

        Parameters
        ----------
        scores : ndarray of shape (n_candidates, n_folds_seen)
            Fold scores (greater is better; NaN for a failed fit) of the candidates
            still racing, on the same folds.
        n_total_folds : int
            Folds a survivor will be scored on in the end.
        """
        scores = np.asarray(scores, dtype=float)
        k, n = scores.shape
        keep = np.ones(k, dtype=bool)
        if k < 2 or n < self.min_folds:
            return keep
        keep &= ~self._behind(scores, n_total_folds)
        means = np.where(np.isnan(scores), -np.inf, scores).mean(axis=1)
        keep |= means == means.max()
        return keep

    @abstractmethod
    def _behind(self, scores: np.ndarray, n_total_folds: int) -> np.ndarray:
        """Mask of candidates statistically behind the leader."""

    def describe(self) -> dict[str, Any]:
        """Plain-data description (name and options)."""
        return {"name": self.name, "min_folds": self.min_folds}


class FRace(BaseRace):
    """F-race: Friedman test over folds, then Conover pairwise comparisons with the leader.

    Birattari, Stützle, Paquete & Varrentrapp (2002), GECCO. After each round the
    Friedman test (folds as blocks) is run on the candidates still racing; if it
    rejects at level ``alpha``, every candidate whose rank sum is below the best
    rank sum by more than the Conover critical difference

    ``t_{1-alpha/2, (n-1)(k-1)} * sqrt(2 (n A - sum_j R_j^2) / ((n-1)(k-1)))``

    (``n`` folds, ``k`` candidates, ``A`` the sum of squared ranks, ``R_j`` rank
    sums; Conover, *Practical Nonparametric Statistics*, 3rd ed., 1999, section 5.8,
    MEMORY) is dropped. With one fold the test is undefined, so ``min_folds`` must be
    at least 2.

    Parameters
    ----------
    alpha : float, default=0.05
        Level of the Friedman test and of the pairwise comparisons.
    min_folds : int, default=2
        Folds scored before the first test (>= 2).

    Examples
    --------
    >>> import numpy as np
    >>> scores = np.array([[0.9, 0.91, 0.92], [0.5, 0.52, 0.49], [0.51, 0.5, 0.53],
    ...                    [0.52, 0.49, 0.5], [0.5, 0.51, 0.5]])
    >>> FRace(alpha=0.05).keep(scores, n_total_folds=5).tolist()
    [True, True, True, True, True]
    >>> FRace(alpha=0.2).keep(scores, n_total_folds=5)[0]
    np.True_
    """

    name = "f-race"

    def __init__(self, alpha: float = 0.05, min_folds: int = 2) -> None:
        super().__init__(min_folds)
        if not (isinstance(alpha, (int, float)) and 0 < alpha < 1):
            raise InputError(f"racing alpha must be in (0, 1), got {alpha!r}")
        if min_folds < 2:
            raise InputError("f-race needs min_folds >= 2 (the Friedman test needs two folds)")
        self.alpha = float(alpha)

    def _behind(self, scores: np.ndarray, n_total_folds: int) -> np.ndarray:
        k, n = scores.shape
        _, p = friedman_test(scores)
        if not p < self.alpha:
            return np.zeros(k, dtype=bool)
        ranks = _block_ranks(scores)
        rank_sums = ranks.sum(axis=1)
        a1 = float((ranks**2).sum())
        dof = (n - 1) * (k - 1)
        spread = 2.0 * (n * a1 - float((rank_sums**2).sum())) / dof
        critical = stats.t.ppf(1.0 - self.alpha / 2.0, dof) * math.sqrt(max(spread, 0.0))
        return rank_sums.max() - rank_sums > critical

    def describe(self) -> dict[str, Any]:
        return {**super().describe(), "alpha": self.alpha}


class HoeffdingRace(BaseRace):
    """Hoeffding race (Maron & Moore 1994) on mean fold scores.

    With ``n`` folds seen and ``k`` candidates, every candidate gets the interval
    ``mean ± hoeffding_epsilon(B, delta / (k * n_total_folds), n)``; a candidate whose
    upper bound is below the leader's lower bound is dropped.

    Parameters
    ----------
    delta : float, default=0.05
        Overall probability that some interval fails (split Bonferroni style).
    score_range : float, optional
        Width ``B`` of the possible fold scores. None: the observed range of all
        fold scores in the race so far (an estimate, as Maron & Moore suggest for
        unbounded losses — MEMORY); give it (1 for accuracy, AUC, F1) when known.
    min_folds : int, default=2
        Folds scored before the first test.

    Examples
    --------
    >>> import numpy as np
    >>> scores = np.array([[0.9] * 50, [0.1] * 50])
    >>> HoeffdingRace(score_range=1.0).keep(scores, n_total_folds=50).tolist()
    [True, False]
    """

    name = "hoeffding"

    def __init__(
        self, delta: float = 0.05, score_range: float | None = None, min_folds: int = 2
    ) -> None:
        super().__init__(min_folds)
        if not (isinstance(delta, (int, float)) and 0 < delta < 1):
            raise InputError(f"racing delta must be in (0, 1), got {delta!r}")
        if score_range is not None and not (
            isinstance(score_range, (int, float)) and score_range > 0
        ):
            raise InputError(f"racing score_range must be > 0, got {score_range!r}")
        self.delta = float(delta)
        self.score_range = None if score_range is None else float(score_range)

    def _behind(self, scores: np.ndarray, n_total_folds: int) -> np.ndarray:
        k, n = scores.shape
        finite = scores[np.isfinite(scores)]
        width = self.score_range
        if width is None:
            width = float(finite.max() - finite.min()) if finite.size else 0.0
        if not width > 0:
            return np.zeros(k, dtype=bool)
        eps = hoeffding_epsilon(width, self.delta / (k * max(n_total_folds, 1)), n)
        means = np.where(np.isnan(scores), -np.inf, scores).mean(axis=1)
        return means + eps < means.max() - eps

    def describe(self) -> dict[str, Any]:
        return {**super().describe(), "delta": self.delta, "score_range": self.score_range}


RACES: dict[str, type[BaseRace]] = {FRace.name: FRace, HoeffdingRace.name: HoeffdingRace}
"""Racing rules by name."""


def make_race(spec: Any) -> BaseRace | None:
    """Resolve a racing option: None/False (off), True (F-race), a name, a dict or a rule.

    Examples
    --------
    >>> make_race(True).name, make_race(None)
    ('f-race', None)
    >>> make_race({"name": "hoeffding", "delta": 0.1}).delta
    0.1
    """
    if spec is None or spec is False:
        return None
    if spec is True:
        return FRace()
    if isinstance(spec, BaseRace):
        return spec
    if isinstance(spec, str):
        spec = {"name": spec}
    if not isinstance(spec, dict):
        raise InputError(f"racing must be a bool, a rule name or a dict, got {spec!r}",
                         key="racing")
    opts = dict(spec)
    name = opts.pop("name", FRace.name)
    if name not in RACES:
        raise InputError(f"unknown racing rule '{name}'; known: {', '.join(sorted(RACES))}",
                         key="racing.name")
    try:
        return RACES[name](**opts)
    except TypeError as exc:
        raise InputError(f"racing rule '{name}': {exc}", key="racing") from None
