"""Racing: stop evaluating candidate subsets that are statistically behind the leader.

A batch of candidates (for example every feature a forward step could add) is scored
fold by fold in *rounds*. After each round a race rule looks at the fold scores seen
so far — the same folds for every candidate, so comparisons are paired (blocked) —
and drops the candidates that are clearly worse than the leader. Survivors are scored
on every fold; dropped candidates keep the fold scores they got.

Three published rules are available:

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
    below the leader's lower bound (plus ``indifference``, default 0). ``delta'``
    is the overall ``delta`` divided by (candidates x folds), Bonferroni style, so
    that all intervals hold at once (our design choice; the paper's exact split is
    MEMORY). With few folds the bound is wide: a 5-fold race with scores in [0, 1]
    drops only candidates behind by more than about 1.5, i.e. never. It is useful
    with many folds (repeated CV) or narrow score ranges.
``"t-race"`` (:class:`TRace`)
    The racing method of Birattari, Stützle, Paquete & Varrentrapp (2002, "A racing
    algorithm for configuring metaheuristics", GECCO) with the paired t-test (Student
    1908) in place of the Friedman test as the elimination rule (from memory). Each
    candidate's fold-by-fold differences to the leader give a one-sided Student t
    upper confidence bound of the mean difference; the candidate is dropped when
    the bound is below ``indifference`` (default 0: significantly behind). Works on
    the score's own scale, so ``indifference`` is in score units (0.005 accuracy is
    half a percentage point).

Guarantees common to the three rules (see :meth:`BaseRace.keep`):

* the leader — the best mean over the folds seen so far, ties to the earlier
  candidate — is never dropped;
* with ``indifference`` 0 (always for F-race) no candidate whose mean equals the
  leader's is dropped either; with ``indifference > 0`` such ties may be dropped,
  which is the point of an indifference zone (see :class:`TRace`);
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
    "TRace",
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


def _means(scores: np.ndarray) -> np.ndarray:
    """Mean fold score of each candidate (row); a NaN fold (failed fit) makes it ``-inf``."""
    return np.where(np.isnan(scores), -np.inf, scores).mean(axis=1)


def _check_level(value: Any, option: str) -> float:
    """A probability option in (0, 1), as a float; InputError naming ``option`` otherwise."""
    if isinstance(value, bool) or not (isinstance(value, (int, float)) and 0 < value < 1):
        raise InputError(f"racing {option} must be in (0, 1), got {value!r}")
    return float(value)


def _check_indifference(value: Any) -> float:
    """The indifference zone: a finite number >= 0 in the score's units."""
    if isinstance(value, bool) or not (
        isinstance(value, (int, float)) and math.isfinite(value) and value >= 0
    ):
        raise InputError(f"racing indifference must be a finite number >= 0, got {value!r}")
    return float(value)


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
    the leader; :meth:`keep` adds the guarantees (minimum folds, the leader always
    kept, and its ties too unless :meth:`_protects_ties` says otherwise).

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
        means = _means(scores)
        keep[int(np.argmax(means))] = True  # the leader: first best mean
        if self._protects_ties():
            keep |= means == means.max()
        return keep

    @abstractmethod
    def _behind(self, scores: np.ndarray, n_total_folds: int) -> np.ndarray:
        """Mask of candidates statistically behind the leader."""

    def _protects_ties(self) -> bool:
        """Whether every candidate whose mean equals the leader's is kept (True here).

        A rule with an indifference zone returns False when the zone is not empty: a
        tie with the leader is then exactly what it may drop.
        """
        return True

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
        self.alpha = _check_level(alpha, "alpha")
        if min_folds < 2:
            raise InputError("f-race needs min_folds >= 2 (the Friedman test needs two folds)")

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
    upper bound is below the leader's lower bound plus ``indifference`` is dropped.

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
    indifference : float, default=0.0
        Indifference zone in score units (>= 0). 0: drop only candidates surely
        behind. ``d > 0``: also drop candidates surely not better than the leader by
        more than ``d``, ties included; the survivors' best is then only known to be
        within ``d`` of the best candidate (see :class:`TRace`).

    Examples
    --------
    >>> import numpy as np
    >>> scores = np.array([[0.9] * 50, [0.1] * 50, [0.9] * 50])
    >>> HoeffdingRace(score_range=1.0).keep(scores, n_total_folds=50).tolist()
    [True, False, True]
    >>> HoeffdingRace(score_range=1.0, indifference=0.9).keep(scores, 50).tolist()
    [True, False, False]
    """

    name = "hoeffding"

    def __init__(
        self,
        delta: float = 0.05,
        score_range: float | None = None,
        min_folds: int = 2,
        indifference: float = 0.0,
    ) -> None:
        super().__init__(min_folds)
        self.delta = _check_level(delta, "delta")
        if score_range is not None and not (
            isinstance(score_range, (int, float)) and score_range > 0
        ):
            raise InputError(f"racing score_range must be > 0, got {score_range!r}")
        self.score_range = None if score_range is None else float(score_range)
        self.indifference = _check_indifference(indifference)

    def _behind(self, scores: np.ndarray, n_total_folds: int) -> np.ndarray:
        k, n = scores.shape
        finite = scores[np.isfinite(scores)]
        width = self.score_range
        if width is None:
            width = float(finite.max() - finite.min()) if finite.size else 0.0
        if not width > 0:
            return np.zeros(k, dtype=bool)
        eps = hoeffding_epsilon(width, self.delta / (k * max(n_total_folds, 1)), n)
        means = _means(scores)
        return means + eps < means.max() - eps + self.indifference

    def _protects_ties(self) -> bool:
        return self.indifference == 0

    def describe(self) -> dict[str, Any]:
        return {**super().describe(), "delta": self.delta, "score_range": self.score_range,
                "indifference": self.indifference}


class TRace(BaseRace):
    """Paired t-test race: drop what is confidently not ``indifference`` better than the leader.

    After each round the leader ``L`` is the candidate with the best mean fold score
    (ties: the earlier one). For every other candidate ``c`` the paired differences
    ``d_j = score_cj - score_Lj`` over the ``n`` folds seen give their mean ``m``,
    sample standard deviation ``s`` (ddof=1) and the one-sided upper confidence bound

    ``U = m + t_{1-alpha, n-1} * s / sqrt(n)``  (Student t quantile).

    ``c`` is dropped when ``U < indifference``.

    * ``indifference = 0`` (default): ``c`` is dropped only when it is significantly
      behind the leader by a one-sided paired t-test at level ``alpha`` — the race of
      Birattari et al. (2002) with the paired t-test as its elimination test (no
      correction for multiple comparisons is applied here).
    * ``indifference = delta > 0``: ``c`` is dropped when we are confident it is not
      better than the leader by more than ``delta`` — indifference-zone selection
      (Bechhofer 1954, Annals of Mathematical Statistics 25, "A single-sample
      multiple decision procedure for ranking means of normal populations with
      known variances"; the epsilon-best elimination of Even-Dar, Mannor & Mansour
      2006, JMLR 7, "Action elimination and stopping conditions for the multi-armed
      bandit and reinforcement learning problems"; MEMORY for their exact
      statements). What it buys: candidates tied with the leader, or behind by less
      than the noise can resolve, are dropped once the folds show they cannot be
      ``delta`` better — so fewer fits. What it costs: a candidate may be dropped
      even when it is tied with (or very slightly better than) the leader; the
      subset finally chosen is only guaranteed (at level ``alpha`` per comparison,
      per batch, under the t model) to be within ``delta`` of the best candidate
      of the batch, not to be the best. Choose ``delta`` as the smallest score
      difference worth paying fits to resolve, e.g. 0.005 accuracy = half a
      percentage point.

    Caveats of the t model: each look at the folds is a separate test at level
    ``alpha``, not corrected for the number of candidates or for testing after
    every fold; and cross-validation folds share training data, so the fold
    differences are not independent and ``s`` understates the variance (Nadeau &
    Bengio 2003, "Inference for the generalization error", Machine Learning 52 —
    MEMORY). The level is therefore nominal; a smaller ``alpha`` is more cautious.

    Special cases: when the differences have ``s = 0`` (for example identical fold
    scores) ``U = m``, so an exact tie is kept at ``indifference = 0`` and dropped at
    ``indifference > 0``. A failed fit (NaN fold) counts as the worst possible
    score, as in the other rules (its mean there is ``-inf``): a candidate with a
    failed fold gets ``U = -inf`` and is dropped when the leader's folds are finite.
    If the leader itself has a failed fold (then every candidate has one), nothing
    is dropped: there is no finite difference to test.

    Parameters
    ----------
    alpha : float, default=0.05
        Level of the one-sided test, in (0, 1).
    indifference : float, default=0.0
        Indifference zone ``delta`` in score units (>= 0).
    min_folds : int, default=2
        Folds scored before the first test (>= 2: ``s`` needs two differences).

    Examples
    --------
    >>> import numpy as np
    >>> scores = np.array([[0.90, 0.92, 0.91, 0.93],    # the leader
    ...                    [0.80, 0.83, 0.80, 0.82],    # consistently behind
    ...                    [0.90, 0.92, 0.91, 0.93],    # an exact tie
    ...                    [0.91, 0.90, 0.92, 0.91]])   # tied on average, noisy
    >>> TRace().keep(scores, n_total_folds=5).tolist()
    [True, False, True, True]
    >>> TRace(indifference=0.005).keep(scores, n_total_folds=5).tolist()
    [True, False, False, True]
    >>> TRace(alpha=0.2, indifference=0.005).describe()["indifference"]
    0.005
    """

    name = "t-race"

    def __init__(
        self, alpha: float = 0.05, indifference: float = 0.0, min_folds: int = 2
    ) -> None:
        super().__init__(min_folds)
        self.alpha = _check_level(alpha, "alpha")
        self.indifference = _check_indifference(indifference)
        if min_folds < 2:
            raise InputError("t-race needs min_folds >= 2 (the t-test needs two folds)")

    def upper_bounds(self, scores: Any) -> np.ndarray:
        """One-sided upper confidence bound ``U`` of each candidate's mean difference.

        Parameters
        ----------
        scores : array-like of shape (n_candidates, n_folds), n_folds >= 2
            Fold scores, NaN for a failed fit.

        Returns
        -------
        ndarray of shape (n_candidates,)
            ``U`` against the leader (0 for the leader itself; ``-inf`` for a
            candidate with a failed fold; all NaN when the leader has a failed fold).

        Examples
        --------
        >>> TRace(alpha=0.05).upper_bounds([[1.0, 2.0, 3.0], [0.0, 2.0, 2.0]]).round(4)
        array([0.    , 0.3067])
        """
        scores = np.asarray(scores, dtype=float)
        k, n = scores.shape
        if n < 2:
            raise InputError(f"t-race needs at least two folds, got {n}")
        filled = np.where(np.isnan(scores), -np.inf, scores)
        lead = int(np.argmax(_means(scores)))
        out = np.full(k, np.nan)
        if not np.isfinite(filled[lead]).all():
            return out
        diffs = filled - filled[lead]  # the leader's row is finite: no inf - inf
        failed = np.isneginf(diffs).any(axis=1)
        usable = np.isfinite(diffs).all(axis=1)
        d = diffs[usable]
        t = float(stats.t.ppf(1.0 - self.alpha, n - 1))
        out[usable] = d.mean(axis=1) + t * d.std(axis=1, ddof=1) / math.sqrt(n)
        out[failed] = -np.inf
        out[lead] = 0.0
        return out

    def _behind(self, scores: np.ndarray, n_total_folds: int) -> np.ndarray:
        behind = self.upper_bounds(scores) < self.indifference  # NaN compares False
        behind[int(np.argmax(_means(scores)))] = False
        return behind

    def _protects_ties(self) -> bool:
        return self.indifference == 0

    def describe(self) -> dict[str, Any]:
        return {**super().describe(), "alpha": self.alpha, "indifference": self.indifference}


RACES: dict[str, type[BaseRace]] = {
    FRace.name: FRace, HoeffdingRace.name: HoeffdingRace, TRace.name: TRace,
}
"""Racing rules by name."""


def make_race(spec: Any) -> BaseRace | None:
    """Resolve a racing option: None/False (off), True (F-race), a name, a dict or a rule.

    Examples
    --------
    >>> make_race(True).name, make_race(None)
    ('f-race', None)
    >>> make_race({"name": "hoeffding", "delta": 0.1}).delta
    0.1
    >>> make_race({"name": "t-race", "alpha": 0.2, "indifference": 0.005}).describe()
    {'name': 't-race', 'min_folds': 2, 'alpha': 0.2, 'indifference': 0.005}
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
