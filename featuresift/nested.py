"""Honest performance estimates for a whole selection procedure (nested cross-validation).

The CV score a search reports for its chosen subset is the very number the search
maximised, so it is optimistically biased (Kohavi & John 1997; Ambroise & McLachlan
2002): it is the **in-search** estimate. :func:`nested_evaluation` re-runs the *whole*
search inside each outer training fold — inner CV, budget and all — then fits the model
on the chosen measurements and scores it on the outer test fold, which the search never
saw: the **nested** estimate.

Outer folds can be repeated (``n_repeats`` R times ``outer_cv`` K folds, each repeat
with its own shuffle), which steadies the estimate and the choice frequencies. The
nested score comes with a confidence interval, the corrected resampled t interval of
Nadeau & Bengio (2003), in the repeated k-fold form of Bouckaert & Frank (2004)::

    mean ± t(1 - (1 - confidence) / 2, n - 1) * sqrt((1 / n + n_test / n_train) * s²)

over the ``n = R * K`` outer scores with sample variance ``s²``. Outer scores are not
independent (training sets overlap, and every repeat reuses the same rows), so the plain
t interval ``s / sqrt(n)`` is far too narrow and shrinks with R for no new data; the
``n_test / n_train`` term widens it for that overlap. It remains an approximation: no
unbiased estimator of the variance of k-fold CV exists (Bengio & Grandvalet 2004), and
it does not cover the variation from drawing a new data set of the same size.

It also reports how often each measurement was chosen across the outer searches and how
stable the choice is (Nogueira, Sechidis & Brown 2018).
"""

from __future__ import annotations

import copy
import inspect
import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from scipy import stats
from sklearn.base import clone, is_classifier
from sklearn.dummy import DummyClassifier, DummyRegressor
from sklearn.metrics import check_scoring
from sklearn.model_selection import GroupKFold, KFold, StratifiedKFold, check_cv

from featuresift._compat import renamed_keywords
from featuresift.costs import CostModel  # noqa: F401 - the docstring examples use it
from featuresift.engine.evaluator import check_error_score
from featuresift.engine.progress import OuterProgress
from featuresift.errors import FitFailedError, InputError
from featuresift.outputs import PLOTS_HINT, RunFolder, figure_png, plots_available, write_files
from featuresift.problem import SelectionProblem, groups_ignored, split_quietly
from featuresift.result import SearchResult, _json_safe, load_json, score_label
from featuresift.scoring import score_range
from featuresift.search import run_search
from featuresift.stability import nogueira_stability

__all__ = ["NestedEvaluation", "nested_evaluation", "corrected_t_interval", "outer_splitter",
           "NOTHING_LABEL"]

NOTHING_LABEL = "(nothing)"
"""How an outer search that answered with no measurement is shown in answer counts."""


CI_METHOD = "corrected resampled t (Nadeau & Bengio 2003)"


def _clipped(ci: tuple[float, float] | None,
             bounds: tuple[float, float]) -> tuple[float, float] | None:
    """An interval cut to the values the score can take (accuracy never exceeds 1)."""
    if ci is None:
        return None
    return max(ci[0], bounds[0]), min(ci[1], bounds[1])


def corrected_t_interval(
    scores: Any, test_train_ratio: float, confidence: float = 0.95
) -> tuple[float, float] | None:
    """Corrected resampled t interval for the mean of (repeated) cross-validation scores.

    ``mean ± t(1 - (1 - confidence) / 2, n - 1) * sqrt((1/n + test_train_ratio) * s²)``
    (Nadeau & Bengio 2003; Bouckaert & Frank 2004 for repeated k-fold), where ``s²`` is
    the sample variance of the ``n`` scores and ``test_train_ratio`` the mean ratio of
    test to training rows of the splits. The extra term accounts, approximately, for the
    dependence between scores whose training sets overlap.

    Parameters
    ----------
    scores : array-like of float
        One score per outer split (all repeats).
    test_train_ratio : float
        Mean ``n_test / n_train`` of those splits (``1 / (K - 1)`` for K-fold).
    confidence : float, default=0.95

    Returns
    -------
    (low, high) or None
        None with fewer than two finite scores.

    Examples
    --------
    >>> lo, hi = corrected_t_interval([0.80, 0.84, 0.78, 0.82, 0.81], 1 / 4)
    >>> round(lo, 4), round(hi, 4)
    (0.7684, 0.8516)
    """
    if not 0 < confidence < 1:
        raise InputError(f"confidence must lie strictly between 0 and 1, got {confidence!r}")
    s = np.asarray(scores, dtype=float)
    s = s[np.isfinite(s)]
    n = s.size
    if n < 2:
        return None
    mean = float(s.mean())
    se = math.sqrt((1.0 / n + float(test_train_ratio)) * float(s.var(ddof=1)))
    half = float(stats.t.ppf(0.5 + confidence / 2, n - 1)) * se
    return mean - half, mean + half


def outer_splitter(
    n_splits: int, *, stratified: bool, grouped: bool = False, seed: int | None = 0
) -> Any:
    """The shuffled outer K-fold splitter used for an integer ``outer_cv``.

    Grouped data get :class:`~sklearn.model_selection.GroupKFold` (shuffled groups),
    classification :class:`~sklearn.model_selection.StratifiedKFold`, otherwise
    :class:`~sklearn.model_selection.KFold`; all shuffled with ``seed``. Repeat r of a
    repeated nested evaluation uses ``seed + r``.

    Examples
    --------
    >>> outer_splitter(5, stratified=True, seed=3)
    StratifiedKFold(n_splits=5, random_state=3, shuffle=True)
    """
    if isinstance(n_splits, bool) or not isinstance(n_splits, (int, np.integer)) \
            or n_splits < 2:
        raise InputError(f"nested evaluation needs at least 2 outer folds, got {n_splits!r}")
    if grouped:
        return GroupKFold(int(n_splits), shuffle=True, random_state=seed)
    if stratified:
        return StratifiedKFold(int(n_splits), shuffle=True, random_state=seed)
    return KFold(int(n_splits), shuffle=True, random_state=seed)


def _repeat_splitters(outer: Any, n_repeats: int) -> list[Any]:
    """One splitter per repeat: the same splitter with seed + r."""
    if n_repeats == 1:
        return [outer]
    rs = getattr(outer, "random_state", None)
    if not getattr(outer, "shuffle", False) or not isinstance(rs, (int, np.integer)):
        raise InputError(
            f"n_repeats={n_repeats} needs an outer splitter that shuffles with an integer "
            f"random_state (got {outer!r}); pass outer_cv as a number of folds instead"
        )
    out = []
    for r in range(n_repeats):
        s = copy.deepcopy(outer)
        s.random_state = int(rs) + r
        out.append(s)
    return out


def _finite_or_none(value: float) -> float | None:
    """JSON has no NaN: an undefined number is written as null."""
    return value if math.isfinite(value) else None


def _fit_score(estimator, scorer, X_train, y_train, X_test, y_test, support, classification):
    """Score on the test rows the model refitted on the training rows of ``support``.

    No measurement: the prior-only model (class frequencies, or the mean).
    """
    if not support:
        model = (DummyClassifier(strategy="prior") if classification
                 else DummyRegressor(strategy="mean"))
        fitted = model.fit(np.zeros((len(y_train), 1)), y_train)
        return float(scorer(fitted, np.zeros((len(y_test), 1)), y_test))
    model = clone(estimator)
    if getattr(model, "takes_columns", False):  # typed columns (featuresift.columns)
        model.set_params(columns=tuple(support))
    model.fit(X_train[:, support], y_train)
    return float(scorer(model, X_test[:, support], y_test))


@dataclass
class NestedEvaluation:
    """Outer-fold results of a nested evaluation.

    Attributes
    ----------
    outer_scores : list of float
        Nested score: the refitted model on each outer test fold (all repeats, repeat
        by repeat).
    inner_scores : list of float
        The in-search score (the search's own CV estimate of its choice) in each outer
        fold; optimistic, shown for comparison.
    selected : list of list of str
        The measurements chosen in each outer fold (empty: buy nothing).
    costs : list of float
        Their acquisition costs.
    selection_frequency : dict of str to float
        Share of outer searches that chose each measurement.
    stability : float or None
        Nogueira et al. (2018) stability of the choices (None when undefined,
        e.g. every search chose nothing or every feature).
    cost_unit, scoring : str
    results : list of SearchResult
        Full search result of each outer fold.
    repeats : list of int
        Repeat index of each outer score (0 .. n_repeats - 1).
    n_repeats, n_splits : int
        R and K of the R x K outer splits.
    confidence : float
        Level of :attr:`ci`.
    ci : tuple of float or None
        Confidence interval of the nested score (:func:`corrected_t_interval`).
    test_train_ratio : float
        Mean ``n_test / n_train`` of the outer splits (used by the interval).
    seed : int or None
        The seed of the outer shuffles and of the searches (recorded in ``nested.json``).
    budget : float or None
        The budget every outer search ran under (None: unlimited).

    Examples
    --------
    Each outer search runs under a budget of 2 EUR on its own training part; 2 repeats of
    3 outer folds give 6 outer scores:

    >>> from sklearn.datasets import load_wine
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_wine(return_X_y=True)
    >>> prices = {"alcohol": 1, "malic": 1, "ash": 2}
    >>> costs = CostModel(["alcohol", "malic", "ash"], prices, unit="EUR")
    >>> ne = nested_evaluation(X[:, :3], y, GaussianNB(), costs=costs,
    ...                        outer_cv=3, n_repeats=2, inner_cv=3, budget=2)
    >>> len(ne.outer_scores), ne.repeats, ne.selection_frequency["malic"]
    (6, [0, 0, 0, 1, 1, 1], 0.8333333333333334)
    >>> lo, hi = ne.ci
    >>> lo < ne.outer_mean < hi
    True
    """

    outer_scores: list[float]
    inner_scores: list[float]
    selected: list[list[str]]
    costs: list[float]
    selection_frequency: dict[str, float]
    stability: float | None
    cost_unit: str
    scoring: str
    results: list[SearchResult] = field(repr=False, default_factory=list)
    repeats: list[int] = field(default_factory=list)
    n_repeats: int = 1
    n_splits: int = 0
    confidence: float = 0.95
    ci: tuple[float, float] | None = None
    test_train_ratio: float = float("nan")
    inner_failed_fits: list[int] = field(default_factory=list)
    outer_failures: list[dict[str, Any]] = field(default_factory=list)
    seed: int | None = 0
    budget: float | None = None

    @property
    def outer_mean(self) -> float:
        """Mean outer-fold score: the nested estimate of the procedure's performance.

        NaN when an outer fold has no score (its refit or score failed and
        ``error_score`` is NaN): the remaining folds are never averaged on their own.
        """
        return float(np.mean(self.outer_scores))

    @property
    def n_failed_inner_fits(self) -> int:
        """Failed fits (and undefined scores) inside the outer searches, all together."""
        return int(sum(self.inner_failed_fits))

    def failure_lines(self) -> list[str]:
        """Readable lines on what failed (empty when nothing did).

        Examples
        --------
        >>> ne = NestedEvaluation([0.8, float("nan")], [0.9, 0.9], [["a"], ["a"]],
        ...                       [1.0, 1.0], {"a": 1.0}, None, "EUR", "accuracy",
        ...                       inner_failed_fits=[0, 3], outer_failures=[
        ...                           {"outer_fold": 1, "repeat": 0, "features": ["a"],
        ...                            "error": "ValueError: boom", "scored_as": None}])
        >>> print("\\n".join(ne.failure_lines()))
        Failed fits in the nested estimate:
          inner searches: 3 fits failed, in 1 of 2 outer searches
          outer fold 1 (repeat 0), refit on a: ValueError: boom -> no score
          1 of 2 outer folds have no score: no nested estimate
        """
        lines = []
        n_inner = self.n_failed_inner_fits
        if n_inner:
            hit = sum(1 for n in self.inner_failed_fits if n)
            lines.append(f"  inner searches: {n_inner} fits failed, in {hit} of "
                         f"{len(self.inner_failed_fits)} outer searches")
        for f in self.outer_failures:
            scored = ("no score" if f["scored_as"] is None
                      else f"scored as error_score={f['scored_as']:g}")
            lines.append(f"  outer fold {f['outer_fold']} (repeat {f['repeat']}), refit on "
                         f"{' + '.join(f['features']) or '(nothing)'}: {f['error']} -> {scored}")
        unscored = sum(1 for f in self.outer_failures if f["scored_as"] is None)
        if unscored:
            lines.append(f"  {unscored} of {len(self.outer_scores)} outer folds have no score: "
                         "no nested estimate")
        return ["Failed fits in the nested estimate:", *lines] if lines else []

    @property
    def outer_std(self) -> float:
        """Sample standard deviation of the outer-fold scores."""
        return float(np.std(self.outer_scores, ddof=1)) if len(self.outer_scores) > 1 else 0.0

    @property
    def inner_mean(self) -> float:
        """Mean in-search score over the outer searches."""
        return float(np.mean(self.inner_scores))

    @property
    def optimism(self) -> float:
        """In-search minus nested mean score (the selection bias seen here)."""
        return float(self.inner_mean - self.outer_mean)

    @property
    def repeat_means(self) -> list[float]:
        """Mean nested score of each repeat."""
        reps = np.asarray(self.repeats or [0] * len(self.outer_scores))
        scores = np.asarray(self.outer_scores, dtype=float)
        return [float(scores[reps == r].mean()) for r in range(int(reps.max()) + 1)]

    @property
    def answer_frequency(self) -> dict[str, float]:
        """Share of outer searches giving each distinct answer (most frequent first)."""
        keys = [" + ".join(s) if s else NOTHING_LABEL for s in self.selected]
        counts: dict[str, int] = {}
        for k in keys:
            counts[k] = counts.get(k, 0) + 1
        ordered = sorted(counts.items(), key=lambda kv: (-kv[1], keys.index(kv[0])))
        return {k: v / len(keys) for k, v in ordered}

    @property
    def design(self) -> str:
        """``"R x K outer folds"`` in words."""
        k = self.n_splits or len(self.outer_scores)
        if self.n_repeats > 1:
            return f"{self.n_repeats} repeats x {k} outer folds"
        return f"{k} outer folds"

    def _ci_text(self) -> str:
        if not all(math.isfinite(v) for v in self.outer_scores):
            return "no interval (an outer fold has no score)"
        if self.ci is None:
            return "no interval (fewer than two outer scores)"
        return (f"{self.confidence:.0%} CI [{self.ci[0]:.4f}, {self.ci[1]:.4f}], "
                f"{CI_METHOD}")

    def summary(self) -> str:
        """Readable report: nested score with its interval, in-search score, optimism,
        choice frequencies and stability."""
        lines = [
            f"Nested CV ({self.design}, {len(self.outer_scores)} outer searches), "
            f"{self.scoring}:",
            f"  {score_label('nested', self.scoring)}: {self.outer_mean:.4f}, "
            f"{self._ci_text()}",
            f"  {score_label('in-search', self.scoring)}: {self.inner_mean:.4f} (mean over "
            "the outer searches)",
            f"  optimism (in-search - nested): {self.optimism:+.4f}",
            f"  mean cost {np.mean(self.costs):.2f} {self.cost_unit}",
            "  stability (Nogueira et al. 2018): "
            + ("undefined" if self.stability is None else f"{self.stability:.3f}"),
            "  answers of the outer searches:",
        ]
        for key, share in list(self.answer_frequency.items())[:5]:
            lines.append(f"    {share:5.2f}  {key}")
        lines.append("  each measurement chosen in share of outer searches:")
        for name, freq in sorted(self.selection_frequency.items(), key=lambda kv: -kv[1]):
            if freq > 0:
                lines.append(f"    {name:<28} {freq:.2f}")
        lines += self.failure_lines()
        return "\n".join(lines)

    def to_markdown(self, plot: str | None = None) -> list[str]:
        """Lines of the report section on the nested estimate.

        ``plot`` is the file name of the figure beside the report (``nested.png``, see
        :meth:`output_files`), linked at the end of the section. With None and no
        matplotlib, the section ends with how to get plots instead of an image link.
        """
        lines = [
            "## Honest estimate (nested cross-validation)",
            "",
            f"The whole search was re-run inside each outer training fold ({self.design}) "
            "and the chosen measurements were scored on the outer test fold, which the "
            "search never saw.",
            "",
            f"- {score_label('nested', self.scoring)}: **{self.outer_mean:.4f}**, "
            f"{self._ci_text()}; the "
            "interval widens the plain t interval for overlapping training sets and is "
            "approximate",
            f"- {score_label('in-search', self.scoring)} (the search's own, mean over the "
            f"outer searches): {self.inner_mean:.4f} — optimism {self.optimism:+.4f}",
            "- stability of the choice (Nogueira et al. 2018): "
            + ("undefined" if self.stability is None else f"{self.stability:.3f}"),
            "",
            "| answer of the outer search | share |",
            "|---|---|",
        ]
        lines += [f"| {k} | {v:.2f} |" for k, v in self.answer_frequency.items()]
        lines += ["", "| measurement | chosen in share of outer searches |", "|---|---|"]
        lines += [f"| {n} | {v:.2f} |" for n, v in sorted(
            self.selection_frequency.items(), key=lambda kv: -kv[1]) if v > 0]
        failed = self.failure_lines()
        if failed:
            lines += ["", f"**{failed[0]}**", "", *(f"- {t.strip()}" for t in failed[1:])]
        if plot:
            lines += ["", f"![in-search and nested scores per outer search, and the "
                      f"measurements chosen]({plot})"]
        elif not plots_available():
            lines += ["", f"No plot was drawn: {PLOTS_HINT}."]
        return lines

    def output_files(self, plot: bool = True) -> dict[str, str | bytes]:
        """Content of ``nested.json`` and ``nested.png`` by file name.

        ``nested.png`` is one figure of two panels: :meth:`plot` (per outer search, the
        in-search estimate beside the nested score) and :meth:`plot_selection` (the
        share of outer searches choosing each measurement). It is left out when ``plot``
        is False or matplotlib is not installed; it is drawn on a bare matplotlib
        Figure, so the backend is never changed.

        Examples
        --------
        >>> ne = NestedEvaluation([0.9, 0.8], [0.9, 0.9], [["a"], ["a", "b"]], [1.0, 3.0],
        ...                       {"a": 1.0, "b": 0.5}, 0.4, "EUR", "accuracy")
        >>> sorted(ne.output_files(plot=False))
        ['nested.json']
        """
        files: dict[str, str | bytes] = {"nested.json": self.to_json() + "\n"}
        png = figure_png(self._draw_figure, (11, 4.5)) if plot else None
        if png is not None:
            files["nested.png"] = png
        return files

    def _draw_figure(self, fig: Any) -> None:
        left, right = fig.subplots(1, 2, gridspec_kw={"width_ratios": [3, 2]})
        self.plot(ax=left)
        self.plot_selection(ax=right)

    def write(self, folder: str | os.PathLike | RunFolder, plot: bool = True) -> list[Path]:
        """Write ``nested.json`` (strict JSON: NaN as null) and, with matplotlib,
        ``nested.png`` (see :meth:`output_files`).

        Files are written atomically, never through a symbolic link
        (:func:`featuresift.outputs.write_files`). Returns only the paths written.
        """
        return write_files(folder, self.output_files(plot=plot))

    def plot(self, ax=None):
        """Draw, per outer search, the in-search score beside the nested score.

        The in-search estimate (optimistic: the score the search gave its own choice)
        is an open circle, the nested estimate (honest: the refitted choice on the outer
        test fold the search never saw) a filled one; lines mark both means and a band
        the confidence interval :attr:`ci` of the nested mean. Up to 12 outer searches
        are labelled with the acquisition cost of their choice (in :attr:`cost_unit`).

        Parameters
        ----------
        ax : matplotlib Axes, optional
            Where to draw; None: a new figure from ``matplotlib.pyplot``. The matplotlib
            backend is left as it is.

        Returns
        -------
        matplotlib Axes

        See Also
        --------
        plot_selection : how often each measurement was chosen.

        Examples
        --------
        >>> from matplotlib.figure import Figure
        >>> ne = NestedEvaluation([0.90, 0.85, 0.88], [0.95, 0.93, 0.94], [["a"], ["a", "b"],
        ...                       ["a"]], [1.0, 3.0, 1.0], {"a": 1.0, "b": 1 / 3}, None,
        ...                       "EUR", "accuracy", ci=(0.80, 0.95))
        >>> ax = ne.plot(ax=Figure().subplots())
        >>> [line.get_ydata().tolist() for line in ax.lines[:2]]  # in-search, nested
        [[0.95, 0.93, 0.94], [0.9, 0.85, 0.88]]
        """
        from featuresift.display import plot_nested

        return plot_nested(self, ax)

    def plot_selection(self, ax=None, max_features: int = 20):
        """Bars: the share of outer searches that chose each measurement.

        Parameters
        ----------
        ax : matplotlib Axes, optional
            Where to draw; None: a new figure from ``matplotlib.pyplot`` (the backend
            is left as it is).
        max_features : int, default=20
            The most often chosen measurements shown.

        Returns
        -------
        matplotlib Axes

        Examples
        --------
        >>> from matplotlib.figure import Figure
        >>> ne = NestedEvaluation([0.9, 0.8], [0.9, 0.9], [["a"], ["a", "b"]], [1.0, 3.0],
        ...                       {"a": 1.0, "b": 0.5, "c": 0.0}, 0.4, "EUR", "accuracy")
        >>> ax = ne.plot_selection(ax=Figure().subplots())
        >>> [float(p.get_width()) for p in ax.patches]  # bottom to top
        [0.0, 0.5, 1.0]
        """
        from featuresift.display import plot_selection_frequency

        return plot_selection_frequency(self, ax, max_features)

    def __repr__(self) -> str:
        from featuresift.display import nested_repr

        return nested_repr(self)

    def _repr_html_(self) -> str:
        from featuresift.display import nested_html

        return nested_html(self)

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> NestedEvaluation:
        """Rebuild from :meth:`to_dict` output (the per-fold search results are not kept).

        Examples
        --------
        >>> ne = NestedEvaluation([0.8, 0.9], [0.85, 0.95], [["a"], ["a"]], [1.0, 1.0],
        ...                       {"a": 1.0}, None, "EUR", "accuracy")
        >>> NestedEvaluation.from_dict(ne.to_dict()).to_dict() == ne.to_dict()
        True
        """
        ci = data.get("ci")
        return cls(
            outer_scores=[math.nan if v is None else float(v) for v in data["outer_scores"]],
            inner_scores=[math.nan if v is None else float(v) for v in data["inner_scores"]],
            selected=[list(s) for s in data["selected"]], costs=list(data["costs"]),
            selection_frequency=dict(data["selection_frequency"]),
            stability=data.get("stability"), cost_unit=data["cost_unit"],
            scoring=data["scoring"], repeats=list(data.get("repeats", [])),
            n_repeats=int(data.get("n_repeats", 1)), n_splits=int(data.get("n_splits", 0)),
            confidence=float(data.get("confidence", 0.95)),
            ci=None if ci is None else (float(ci[0]), float(ci[1])),
            test_train_ratio=float(data.get("test_train_ratio") or math.nan),
            inner_failed_fits=[int(n) for n in data.get("inner_failed_fits", [])],
            outer_failures=[dict(f) for f in data.get("outer_failures", [])],
            seed=data.get("seed"),
            budget=data.get("budget"),
        )

    def to_json(self, indent: int = 2) -> str:
        """The evaluation as a JSON string (what ``nested.json`` holds; strict JSON)."""
        return json.dumps(_json_safe(self.to_dict()), indent=indent, allow_nan=False)

    @classmethod
    def from_json(cls, text: str | os.PathLike) -> NestedEvaluation:
        """Load an evaluation from a JSON string or a ``nested.json`` file.

        Examples
        --------
        >>> ne = NestedEvaluation([0.8, 0.9], [0.85, 0.95], [["a"], ["a"]], [1.0, 1.0],
        ...                       {"a": 1.0}, None, "EUR", "accuracy")
        >>> NestedEvaluation.from_json(ne.to_json()).to_json() == ne.to_json()
        True
        """
        return cls.from_dict(load_json(text))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready description."""
        return {
            "score_kind": "nested",
            "outer_scores": [v if math.isfinite(v) else None for v in self.outer_scores],
            "repeats": self.repeats,
            "n_repeats": self.n_repeats,
            "n_splits": self.n_splits,
            "outer_mean": _finite_or_none(self.outer_mean),
            "outer_std": _finite_or_none(self.outer_std),
            "ci": None if self.ci is None else list(self.ci),
            "confidence": self.confidence,
            "ci_method": CI_METHOD,
            "test_train_ratio": self.test_train_ratio,
            "inner_scores": self.inner_scores,
            "inner_mean": _finite_or_none(self.inner_mean),
            "optimism": _finite_or_none(self.optimism),
            "selected": self.selected,
            "costs": self.costs,
            "cost_unit": self.cost_unit,
            "selection_frequency": self.selection_frequency,
            "answer_frequency": self.answer_frequency,
            "stability": self.stability,
            "scoring": self.scoring,
            "inner_failed_fits": self.inner_failed_fits,
            "n_failed_inner_fits": self.n_failed_inner_fits,
            "outer_failures": self.outer_failures,
            "seed": self.seed,
            "budget": self.budget,
        }


@renamed_keywords(cost_model="costs", random_state="seed")
def nested_evaluation(
    X: Any,
    y: Any,
    estimator: Any,
    *,
    costs: Any = None,
    outer_cv: Any = 5,
    n_repeats: int = 1,
    inner_cv: Any = 5,
    scoring: Any = None,
    groups: Any = None,
    feature_names: list[str] | None = None,
    strategy: str | dict = "greedy-swap",
    confidence: float = 0.95,
    seed: int | None = 0,
    n_jobs: int | None = None,
    verbose: int = 0,
    **search_options: Any,
) -> NestedEvaluation:
    """Estimate the performance of "search, then fit" without selection bias.

    Parameters
    ----------
    X, y, estimator, costs, scoring, groups, feature_names
        As for :class:`~featuresift.SelectionProblem` (``cost_model``: deprecated name
        of ``costs``; ``random_state``: of ``seed``).
    outer_cv : int or splitter, default=5
        Outer splits; the search never sees the outer test fold. An int K gives
        :func:`outer_splitter` (shuffled; stratified for classifiers, grouped when
        ``groups`` is given) seeded with ``seed``.
    n_repeats : int, default=1
        R: repeat the K outer folds R times, repeat r shuffled with seed + r (a splitter
        given as ``outer_cv`` must shuffle and have an integer ``random_state``). R x K
        searches are run.
    inner_cv : int or splitter, default=5
        CV used by the search inside each outer training fold.
    strategy : str or dict, default="greedy-swap"
    confidence : float, default=0.95
        Level of the interval of the nested score (:func:`corrected_t_interval`).
    seed : int, default=0
        Seed of the outer shuffles (repeat r: seed + r) and of the searches.
    n_jobs : int, optional
    verbose : int, default=0
        Progress of the outer searches: 1 shows a bar in a terminal or notebook, or one
        line per outer search when standard error is piped; 0 is silent. The searches
        inside run without their own display.
    **search_options
        Passed to :func:`featuresift.run_search` (budget, objective, pick, limits, ...).

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_iris(return_X_y=True)
    >>> ne = nested_evaluation(X, y, GaussianNB(), outer_cv=3, inner_cv=3, n_features=2,
    ...                        pick="best")
    >>> len(ne.outer_scores), all(len(s) == 2 for s in ne.selected)
    (3, True)
    """
    if isinstance(n_repeats, bool) or not isinstance(n_repeats, (int, np.integer)) \
            or n_repeats < 1:
        raise InputError(f"n_repeats must be an integer >= 1, got {n_repeats!r}")
    if not 0 < confidence < 1:
        raise InputError(f"confidence must lie strictly between 0 and 1, got {confidence!r}")
    full = SelectionProblem(
        X, y, estimator, costs=costs, cv=2, scoring=scoring, groups=groups,
        feature_names=feature_names,
    )
    Xa, ya, names = full.X, full.y, full.feature_names
    g = full.groups
    classification = is_classifier(estimator)
    search_options["seed"] = seed
    if "guard" in inspect.signature(run_search).parameters:
        search_options["guard"] = "off"  # a guard would nest outer folds inside each fold
    if isinstance(outer_cv, (int, np.integer)) and not isinstance(outer_cv, bool):
        outer = outer_splitter(int(outer_cv), stratified=classification,
                               grouped=g is not None, seed=0 if seed is None else seed)
    else:
        groups_ignored(outer_cv, g, "outer_cv")
        outer = check_cv(outer_cv, ya, classifier=classification)
    splits: list[tuple[np.ndarray, np.ndarray, int]] = []
    for r, splitter in enumerate(_repeat_splitters(outer, int(n_repeats))):
        splits += [(tr, te, r) for tr, te in split_quietly(splitter, Xa, ya, g)]
    n_splits = len(splits) // int(n_repeats)
    inner_repeats = getattr(outer, "n_repeats", None)
    if n_repeats == 1 and isinstance(inner_repeats, int) and inner_repeats > 1:
        # A repeated splitter given as outer_cv: repeats come one after another.
        n_splits = len(splits) // inner_repeats
        splits = [(tr, te, i // n_splits) for i, (tr, te, _) in enumerate(splits)]
    estimator = full.estimator  # the user's columns rebuilt, for typed DataFrame columns
    scorer = check_scoring(estimator, scoring=scoring)
    policy = search_options.get("on_fit_error", "raise")
    error_score = check_error_score(search_options.get("error_score", math.nan))
    outer_scores, inner_scores, selected, costs, results = [], [], [], [], []
    outer_failures: list[dict[str, Any]] = []
    search_options["verbose"] = 0  # one display for the outer searches (below)
    progress = OuterProgress(verbose, total=len(splits),
                             desc=search_options.pop("_progress_desc", "nested CV"))
    try:
        for i, (train, test, rep) in enumerate(splits):
            inner = SelectionProblem(
                Xa[train], ya[train], estimator, costs=full.cost_model, cv=inner_cv,
                scoring=scoring, groups=None if g is None else g[train], feature_names=names,
            )
            try:
                res = run_search(inner, strategy, n_jobs=n_jobs, **search_options)
            except FitFailedError as exc:  # say in which outer search
                raise FitFailedError(f"outer fold {i} (0-based), inner search: {exc}",
                                     exc.subset, exc.fold, exc.reason) from None
            if res.failures.get("none_scored"):
                raise FitFailedError(f"outer fold {i} (0-based): {res.failures['message']}")
            if not res.support and not res.fold_scores:
                raise InputError("the search found no allowed subset in an outer fold "
                                 f"({res.stop_reason})")
            try:
                score = _fit_score(estimator, scorer, Xa[train], ya[train], Xa[test], ya[test],
                                   list(res.support), classification)
                if not math.isfinite(score):
                    raise ValueError(f"the score is {score} (undefined on this test fold)")
            except Exception as exc:  # noqa: BLE001 - counted and reported, or raised
                reason = f"{type(exc).__name__}: {exc}"
                where = f"outer fold {i} (0-based), refit on [{', '.join(res.selected)}]"
                if policy == "raise":
                    raise FitFailedError(f"{where} failed: {reason}", tuple(res.support), i,
                                         reason) from None
                score = error_score
                outer_failures.append({
                    "outer_fold": i, "repeat": int(rep), "features": list(res.selected),
                    "error": " ".join(reason.split())[:300],
                    "scored_as": None if math.isnan(error_score) else error_score})
            outer_scores.append(float(score))
            progress.done(res.selected, float(score))
            inner_scores.append(res.score_mean)
            selected.append(res.selected)
            costs.append(res.cost)
            results.append(res)
    finally:
        progress.close()
    freq = {n: sum(n in s for s in selected) / len(selected) for n in names}
    try:
        stab = nogueira_stability([res.support for res in results], len(names))
    except InputError:
        stab = None
    if stab is not None and not math.isfinite(stab):
        stab = None
    ratio = float(np.mean([len(te) / len(tr) for tr, te, _ in splits]))
    return NestedEvaluation(
        outer_scores=outer_scores,
        inner_scores=inner_scores,
        selected=selected,
        costs=costs,
        selection_frequency=freq,
        stability=stab,
        cost_unit=full.cost_model.unit,
        scoring=scoring if isinstance(scoring, str) else "score",
        results=results,
        repeats=[r for _, _, r in splits],
        n_repeats=max(r for _, _, r in splits) + 1,
        n_splits=n_splits,
        confidence=confidence,
        ci=(None if not all(math.isfinite(s) for s in outer_scores)
            else _clipped(corrected_t_interval(outer_scores, ratio, confidence),
                          score_range(scoring, classification))),
        test_train_ratio=ratio,
        inner_failed_fits=[int(r.failures.get("n_failed_fits", 0)) for r in results],
        outer_failures=outer_failures,
        seed=seed,
        budget=search_options.get("budget"),
    )
