"""Budget sweeps: the trade-off of accuracy against acquisition cost.

:func:`budget_sweep` runs one search per budget on a **shared evaluator**, so a subset
scored for one budget is never fitted again for another. The resulting
:class:`Frontier` lists, for each budget, the chosen measurements, their cost and CV
score, and marks the cost-efficient points (no other point is at most as expensive
and strictly better, or cheaper and at least as good).
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from featuresift.costs import CostModel
from featuresift.engine.evaluator import BaseEvaluator, CrossValidationEvaluator
from featuresift.errors import InputError
from featuresift.problem import SelectionProblem
from featuresift.result import SearchResult
from featuresift.search import prepare_for_objective, run_search

__all__ = ["Frontier", "budget_sweep", "default_budgets"]

_ENGINE_OPTIONS = ("racing", "journal", "chunk_size", "verbose", "on_fit_error",
                   "share_preprocessing")


def default_budgets(cost_model: CostModel, n: int = 8) -> list[float | None]:
    """Evenly spaced budgets from the cheapest single measurement to the full cost.

    The last entry is None (unlimited). Duplicates are removed.

    Examples
    --------
    >>> cm = CostModel(["a", "b", "c"], {"a": 1.0, "b": 2.0, "c": 7.0})
    >>> default_budgets(cm, n=4)
    [1.0, 4.0, 7.0, None]
    """
    if n < 2:
        raise InputError("a sweep needs at least 2 budgets")
    lo = cost_model.cheapest_feature_cost()
    hi = cost_model.cost(range(cost_model.n_features))
    values = sorted({round(float(v), 10) for v in np.linspace(lo, hi, n)[:-1]})
    return [*values, None]


def _efficient(costs: Sequence[float], scores: Sequence[float]) -> list[bool]:
    out = []
    for i, (c, s) in enumerate(zip(costs, scores)):
        dominated = any(
            (c2 <= c and s2 > s) or (c2 < c and s2 >= s)
            for j, (c2, s2) in enumerate(zip(costs, scores))
            if j != i
        )
        out.append(not dominated and math.isfinite(s))
    return out


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

    Examples
    --------
    >>> from sklearn.datasets import load_wine
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_wine(return_X_y=True)
    >>> costs = CostModel.uniform(["alcohol", "malic", "ash", "alkalinity"], unit="EUR")
    >>> problem = SelectionProblem(X[:, :4], y, GaussianNB(), cost_model=costs, cv=3)
    >>> fr = budget_sweep(problem, [1, 2], "forward")
    >>> fr.budgets, [r.selected for r in fr.results], fr.cost_unit
    ([1, 2], [['alcohol'], ['alcohol', 'alkalinity']], 'EUR')
    >>> fr.n_fits, fr.n_fits_without_cache  # the second search reuses the first one's fits
    (21, 33)
    >>> fr.to_frame()["cost"].tolist()
    [1.0, 2.0]
    """

    budgets: list[float | None]
    results: list[SearchResult]
    cost_unit: str
    scoring: str
    n_fits: int
    n_fits_without_cache: int

    def to_frame(self):
        """One row per budget: budget, chosen features, cost, score, efficiency flag."""
        import pandas as pd

        costs = [r.cost for r in self.results]
        scores = [r.score_mean for r in self.results]
        eff = _efficient(costs, scores)
        rows = []
        for b, r, e in zip(self.budgets, self.results, eff):
            n_folds = len(r.fold_scores)
            rows.append({
                "budget": np.nan if b is None else b,
                "n_selected": len(r.selected),
                "selected": " + ".join(r.selected),
                "cost": r.cost,
                "score_mean": r.score_mean,
                "score_std": r.score_std,
                "score_sem": r.score_std / math.sqrt(n_folds) if n_folds > 1 else 0.0,
                "efficient": e,
                "n_evaluations": r.n_evaluations,
            })
        return pd.DataFrame(rows)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready description of the sweep."""
        frame = self.to_frame()
        return {
            "cost_unit": self.cost_unit,
            "scoring": self.scoring,
            "n_fits": self.n_fits,
            "n_fits_without_cache": self.n_fits_without_cache,
            "points": [
                {
                    "budget": b,
                    "selected": r.selected,
                    "cost": r.cost,
                    "score_mean": r.score_mean,
                    "score_std": r.score_std,
                    "efficient": bool(e),
                }
                for b, r, e in zip(self.budgets, self.results, frame["efficient"])
            ],
        }

    def plot(self, ax=None):
        """Draw score against cost (error bars: one standard error); returns the axes.

        Requires matplotlib.
        """
        import matplotlib

        if ax is None:
            matplotlib.use("Agg", force=False)
            import matplotlib.pyplot as plt

            _, ax = plt.subplots(figsize=(7, 4.5))
        frame = self.to_frame()
        eff = frame[frame["efficient"]].sort_values("cost")
        ax.errorbar(
            frame["cost"], frame["score_mean"], yerr=frame["score_sem"], fmt="o",
            color="0.55", ecolor="0.75", capsize=3, label="chosen subset per budget",
        )
        ax.step(eff["cost"], eff["score_mean"], where="post", color="tab:green",
                label="cost-efficient choices")
        ax.plot(eff["cost"], eff["score_mean"], "o", color="tab:green", zorder=4)
        for _, row in eff.iterrows():
            ax.annotate(f"{int(row['n_selected'])}", (row["cost"], row["score_mean"]),
                        textcoords="offset points", xytext=(4, -12), fontsize=8)
        ax.set_xlabel(f"acquisition cost per sample ({self.cost_unit})")
        ax.set_ylabel(f"cross-validated {self.scoring}")
        ax.set_title("Accuracy against measurement cost (numbers: measurements chosen)")
        ax.grid(alpha=0.3)
        ax.legend(loc="lower right", fontsize=8)
        return ax

    def write(self, folder: str | os.PathLike, plot: bool = True) -> list[Path]:
        """Write ``frontier.csv``, ``frontier.json`` and (if matplotlib) ``frontier.png``."""
        out = Path(folder)
        out.mkdir(parents=True, exist_ok=True)
        written = []
        csv_path = out / "frontier.csv"
        self.to_frame().to_csv(csv_path, index=False)
        written.append(csv_path)
        json_path = out / "frontier.json"
        json_path.write_text(json.dumps(self.to_dict(), indent=2) + "\n", encoding="utf-8")
        written.append(json_path)
        if plot:
            try:
                import matplotlib.pyplot as plt
            except ImportError:
                return written
            ax = self.plot()
            png = out / "frontier.png"
            ax.figure.tight_layout()
            ax.figure.savefig(png, dpi=120)
            plt.close(ax.figure)
            written.append(png)
        return written


def budget_sweep(
    problem: SelectionProblem,
    budgets: Sequence[float | None] | int = 8,
    strategy: str | dict = "forward",
    *,
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
        Budgets to search (None: unlimited), or a number of evenly spaced budgets
        (see :func:`default_budgets`).
    strategy : str or dict, default="forward"
        Strategy name or spec, as for :func:`featuresift.run_search`.
    n_jobs : int, optional
        Parallel fits.
    evaluator : BaseEvaluator, optional
        An evaluator to share; default a new :class:`CrossValidationEvaluator` built
        with the engine options found in ``search_options`` (``racing``, ``journal``,
        ``chunk_size``, ``verbose``, ``on_fit_error``, ``share_preprocessing``).
    **search_options
        Passed to :func:`featuresift.run_search` (objective, limits, strategy options...).

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> X, y = load_iris(return_X_y=True)
    >>> cm = CostModel(["a", "b", "c", "d"], {"a": 1, "b": 1, "c": 5, "d": 5})
    >>> p = SelectionProblem(X, y, GaussianNB(), cost_model=cm, cv=3)
    >>> fr = budget_sweep(p, [1, 6, None])
    >>> [r.cost <= 6 for r in fr.results[:2]]
    [True, True]
    """
    if isinstance(budgets, int) and not isinstance(budgets, bool):
        budgets = default_budgets(problem.cost_model, budgets)
    budgets = list(budgets)
    if not budgets:
        raise InputError("a sweep needs at least one budget")
    engine = {k: search_options.pop(k) for k in _ENGINE_OPTIONS if k in search_options}
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
    for b in budgets:
        res = run_search(
            shared, strategy, cost_model=problem.cost_model, budget=b, **search_options
        )
        without_cache += res.n_evaluations * n_folds
        results.append(res)
    scoring = problem.scoring if isinstance(problem.scoring, str) else "score"
    for r in results:
        r.scoring = scoring
    return Frontier(
        budgets=budgets,
        results=results,
        cost_unit=problem.cost_model.unit,
        scoring=scoring,
        n_fits=shared.n_fits - fits_before,
        n_fits_without_cache=without_cache,
    )
