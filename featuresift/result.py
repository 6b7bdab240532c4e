"""The outcome of a search: chosen measurements, cost, score, path and bookkeeping."""

from __future__ import annotations

import csv
import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from featuresift.costs import CostLine
from featuresift.outputs import RunFolder, write_files

__all__ = ["SearchResult", "PathRow", "EvaluatedSubset", "SCORE_KINDS", "score_label"]

SCORE_KINDS = {
    "in-search": "in-search estimate (optimistic)",
    "nested": "nested estimate (honest)",
}
"""Kinds of score and the words printed beside them.

``in-search``: the cross-validated score the search computed on the folds it chose
the subset with; the search maximised it, so it is optimistic for new data.
``nested``: a score measured on outer folds the search never saw (the whole search
re-run inside each outer training part); an honest estimate of "search, then fit".
"""


def score_label(kind: str, scoring: str | None = None) -> str:
    """The words printed beside a score to say which estimate it is.

    Every printed score (summary, console, report, plot titles) uses this helper so
    that the same words mean the same thing everywhere.

    Parameters
    ----------
    kind : {"in-search", "nested"}
        See :data:`SCORE_KINDS`.
    scoring : str, optional
        Name of the scorer, put in front.

    Examples
    --------
    >>> score_label("in-search")
    'in-search estimate (optimistic)'
    >>> score_label("nested", "roc_auc")
    'roc_auc, nested estimate (honest)'
    """
    if kind not in SCORE_KINDS:
        raise ValueError(f"score kind must be one of {sorted(SCORE_KINDS)}, got {kind!r}")
    words = SCORE_KINDS[kind]
    return words if not scoring else f"{scoring}, {words}"


@dataclass(frozen=True)
class PathRow:
    """One step of the search path, in names.

    Attributes
    ----------
    step, action, feature, features, n_features, score_mean, score_std, cost, objective,
    n_evaluations
        See :class:`featuresift.strategies.base.PathStep`.
    n_failed_folds : int
        Folds of this step's subset whose fit or score failed (its score is then NaN,
        or counts the ``error_score``).

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> from featuresift import SelectionProblem, run_search
    >>> X, y = load_iris(return_X_y=True)
    >>> res = run_search(SelectionProblem(X, y, GaussianNB(), cv=3), "forward", n_features=2)
    >>> [(row.action, row.feature, row.features) for row in res.path]
    [('add', 'x3', ('x3',)), ('add', 'x0', ('x0', 'x3'))]
    """

    step: int
    action: str
    feature: str | None
    features: tuple[str, ...]
    score_mean: float
    score_std: float
    cost: float
    objective: float
    n_evaluations: int
    n_failed_folds: int = 0


@dataclass(frozen=True)
class EvaluatedSubset:
    """One subset a search evaluated, in names.

    Attributes
    ----------
    features : tuple of str
        The subset's measurements, in column order.
    cost : float
        Its acquisition cost per sample.
    score_mean, score_sem : float
        Mean CV score (in-search) and its standard error over the folds run.
    objective : float
        Objective value (larger is better).
    n_folds : int
        Folds scored (fewer than the CV's when racing dropped it).
    status : str
        ``"complete"``, ``"dropped"`` (racing) or ``"failed"`` (a failed fold and no
        ``error_score``: no score, never chosen).
    n_failed_folds : int
        Folds whose fit or score failed (not the folds racing skipped).

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> from featuresift import SelectionProblem, run_search
    >>> X, y = load_iris(return_X_y=True)
    >>> res = run_search(SelectionProblem(X, y, GaussianNB(), cv=3), n_features=1)
    >>> [e.features for e in res.evaluations]
    [(), ('x0', 'x1', 'x2', 'x3'), ('x0',), ('x1',), ('x2',), ('x3',)]
    """

    features: tuple[str, ...]
    cost: float
    score_mean: float
    score_sem: float
    objective: float
    n_folds: int
    status: str
    n_failed_folds: int = 0


def _num(x: float) -> float | None:
    return None if x is None or (isinstance(x, float) and not math.isfinite(x)) else x


def _json_safe(value: Any) -> Any:
    """``value`` with every NaN or infinite float replaced by None (strict JSON)."""
    if isinstance(value, float):
        return _num(value)
    if isinstance(value, dict):
        return {k: _json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_json_safe(v) for v in value]
    if type(value).__module__ == "numpy" and hasattr(value, "item"):
        return _json_safe(value.item())
    return value


@dataclass
class SearchResult:
    """What a search found.

    Attributes
    ----------
    selected : list of str
        Chosen feature names, in column order.
    support : list of int
        Their column indices.
    cost : float
        Acquisition cost per sample of the chosen subset.
    cost_unit : str
        Unit of all costs.
    cost_breakdown : list of CostLine
        Which panel or feature costs what.
    budget : float or None
        The budget searched under.
    score_mean, score_std : float
        Mean and sample standard deviation (ddof=1) of the CV scores of the subset.
    fold_scores : list of float
        Score on each CV split (a failed fold holds the ``error_score`` it was given).
    scoring : str
        Name of the scorer.
    objective : dict
        The objective used and the chosen subset's value.
    strategy : dict
        Strategy name and options.
    path : list of PathRow
        Steps of the search, in order.
    n_evaluations : int
        Distinct subsets evaluated by this search.
    n_fits : int
        Model fits performed by the evaluator.
    n_cache_hits : int
        Requests answered without fitting.
    wall_time : float
        Seconds.
    stop_reason : str
        Why the search stopped.
    success : bool
        False when no allowed subset was found or a limit stopped the search.
    seed : int or None
        The seed of the search (stochastic strategies; recorded in ``result.json``).
    evaluations : list of EvaluatedSubset
        Every subset the search evaluated, in the order first asked for (see
        :meth:`evaluations_frame`).
    failed_folds : list of int
        Folds of the chosen subset whose fit or score failed (only possible with a
        numeric ``error_score``, which they were given).
    failures : dict
        Empty when no fit failed; else the counts and the subsets with failed folds
        (see :func:`featuresift.search.failure_summary`).
    extras : dict
        Strategy and engine extras.
    references : dict of str to dict
        The references "nothing", "free only" and "everything"
        (:data:`featuresift.search.REFERENCES`): features, support, cost, score
        (in-search), objective value, whether each is ``allowed`` as an answer and
        whether it ``is_answer``.
    pick : dict
        The pick rule (``rule``, ``description``), the best subset found and, for
        ``one-se``, the threshold.
    guard : dict
        The noise guard: name, settings, ``decision``, ``n_fits`` and, when it ran,
        the p-value and the nested (honest) scores of the search's answers on the
        outer folds (``nested_mean``, ``nested_scores``).

    Notes
    -----
    The CV score of the chosen subset is the score the search maximised, so it is
    optimistically biased as an estimate of performance on new data
    (:func:`score_label` ``"in-search"``). The noise guard's nested scores, and
    :func:`featuresift.nested_evaluation`, are honest (``"nested"``).

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> from featuresift import SelectionProblem, run_search
    >>> from featuresift.costs import CostModel
    >>> X, y = load_iris(return_X_y=True)
    >>> cm = CostModel(["sl", "sw", "pl", "pw"], {"sl": 1, "sw": 1, "pl": 2, "pw": 2})
    >>> p = SelectionProblem(X, y, GaussianNB(), costs=cm, cv=3)
    >>> res = run_search(p, "forward", budget=2)
    >>> res.selected, res.cost, res.success
    (['pw'], 2.0, True)
    >>> round(res.score_mean, 3), len(res.fold_scores)
    (0.953, 3)
    """

    selected: list[str]
    support: list[int]
    cost: float
    cost_unit: str
    cost_breakdown: list[CostLine]
    budget: float | None
    score_mean: float
    score_std: float
    fold_scores: list[float]
    scoring: str
    objective: dict
    strategy: dict
    path: list[PathRow]
    n_evaluations: int
    n_fits: int
    n_cache_hits: int
    wall_time: float
    stop_reason: str
    success: bool = True
    extras: dict[str, Any] = field(default_factory=dict)
    evaluations: list[EvaluatedSubset] = field(default_factory=list, repr=False)
    seed: int | None = 0
    failed_folds: list[int] = field(default_factory=list)
    failures: dict[str, Any] = field(default_factory=dict)
    references: dict[str, dict] = field(default_factory=dict)
    pick: dict[str, Any] = field(default_factory=dict)
    guard: dict[str, Any] = field(default_factory=dict)

    # ------------------------------------------------------------- conversion
    def to_dict(self) -> dict:
        """JSON-ready dictionary of the whole result."""
        return {
            "selected": list(self.selected),
            "support": list(self.support),
            "cost": self.cost,
            "cost_unit": self.cost_unit,
            "cost_breakdown": [
                {"item": c.item, "kind": c.kind, "features": list(c.features), "cost": c.cost}
                for c in self.cost_breakdown
            ],
            "budget": self.budget,
            "score": {
                "scoring": self.scoring,
                "kind": "in-search",
                "mean": _num(self.score_mean),
                "std": _num(self.score_std),
                "folds": [_num(s) for s in self.fold_scores],
                "failed_folds": list(self.failed_folds),
            },
            "objective": _json_safe(self.objective),
            "strategy": _json_safe(self.strategy),
            "path": [
                {
                    "step": r.step, "action": r.action, "feature": r.feature,
                    "features": list(r.features), "score_mean": _num(r.score_mean),
                    "score_std": _num(r.score_std), "cost": r.cost,
                    "objective": _num(r.objective), "n_evaluations": r.n_evaluations,
                    "n_failed_folds": r.n_failed_folds,
                }
                for r in self.path
            ],
            "pick": _clean(self.pick),
            "guard": _clean(self.guard),
            "references": _clean(self.references),
            "n_evaluations": self.n_evaluations,
            "n_fits": self.n_fits,
            "n_cache_hits": self.n_cache_hits,
            "wall_time_s": self.wall_time,
            "stop_reason": self.stop_reason,
            "success": self.success,
            "seed": self.seed,
            "failures": _json_safe(self.failures) if self.failures else {"n_failed_fits": 0},
            **({"extras": _json_safe(self.extras)} if self.extras else {}),
            "evaluations": [
                {"features": list(e.features), "cost": e.cost,
                 "score_mean": _num(e.score_mean), "score_sem": _num(e.score_sem),
                 "objective": _num(e.objective), "n_folds": e.n_folds, "status": e.status,
                 "n_failed_folds": e.n_failed_folds}
                for e in self.evaluations
            ],
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> SearchResult:
        """Rebuild a result from :meth:`to_dict` output (or a loaded ``result.json``).

        Examples
        --------
        >>> from sklearn.datasets import load_iris
        >>> from sklearn.naive_bayes import GaussianNB
        >>> from featuresift import SelectionProblem, run_search
        >>> X, y = load_iris(return_X_y=True)
        >>> res = run_search(SelectionProblem(X, y, GaussianNB(), cv=3), n_features=2)
        >>> SearchResult.from_json(res.to_json()).to_dict() == res.to_dict()
        True
        """
        d = dict(data)
        score = d.get("score") or {}
        known = {
            "selected", "support", "cost", "cost_unit", "cost_breakdown", "budget", "score",
            "objective", "strategy", "path", "n_evaluations", "n_fits", "n_cache_hits",
            "wall_time_s", "stop_reason", "success", "extras", "evaluations", "seed",
            "failures",
            "pick", "guard", "references",
        }
        unknown = sorted(set(d) - known)
        if unknown:
            raise ValueError(f"not a featuresift result: unknown key(s) {', '.join(unknown)}")
        return cls(
            selected=list(d["selected"]),
            support=[int(i) for i in d["support"]],
            cost=float(d["cost"]),
            cost_unit=str(d["cost_unit"]),
            cost_breakdown=[
                CostLine(c["item"], c["kind"], tuple(c["features"]), float(c["cost"]))
                for c in d.get("cost_breakdown", [])
            ],
            budget=d.get("budget"),
            score_mean=_nan(score.get("mean")),
            score_std=_nan(score.get("std")),
            fold_scores=[_nan(v) for v in score.get("folds", [])],
            failed_folds=[int(f) for f in score.get("failed_folds", [])],
            failures=({} if not (d.get("failures") or {}).get("n_failed_fits")
                      else dict(d["failures"])),
            scoring=score.get("scoring", ""),
            objective=d.get("objective", {}),
            strategy=d.get("strategy", {}),
            path=[
                PathRow(r["step"], r["action"], r["feature"], tuple(r["features"]),
                        _nan(r["score_mean"]), _nan(r["score_std"]), r["cost"],
                        _nan(r["objective"]), r["n_evaluations"], r.get("n_failed_folds", 0))
                for r in d.get("path", [])
            ],
            n_evaluations=int(d.get("n_evaluations", 0)),
            n_fits=int(d.get("n_fits", 0)),
            n_cache_hits=int(d.get("n_cache_hits", 0)),
            wall_time=float(d.get("wall_time_s", 0.0)),
            stop_reason=str(d.get("stop_reason", "")),
            success=bool(d.get("success", True)),
            extras=dict(d.get("extras") or {}),
            seed=d.get("seed"),
            references=dict(d.get("references") or {}),
            pick=dict(d.get("pick") or {}),
            guard=dict(d.get("guard") or {}),
            evaluations=[
                EvaluatedSubset(tuple(e["features"]), e["cost"], _nan(e["score_mean"]),
                                _nan(e["score_sem"]), _nan(e["objective"]), e["n_folds"],
                                e["status"], e.get("n_failed_folds", 0))
                for e in d.get("evaluations", [])
            ],
        )

    @classmethod
    def from_json(cls, text: str | os.PathLike) -> SearchResult:
        """Load a result from a JSON string or a ``result.json`` file (see :meth:`to_json`).

        Examples
        --------
        >>> res = SearchResult.from_json(
        ...     '{"selected": ["ph"], "support": [0], "cost": 2.0, "cost_unit": "EUR",'
        ...     ' "score": {"scoring": "accuracy", "mean": 0.8, "std": 0.1, "folds": [0.7, 0.9]}}')
        >>> res.selected, res.score_mean, res.fold_scores
        (['ph'], 0.8, [0.7, 0.9])
        """
        return cls.from_dict(load_json(text))

    def to_json(self, indent: int = 2) -> str:
        """The result as a JSON string."""
        return json.dumps(self.to_dict(), indent=indent, allow_nan=False)

    def path_frame(self):
        """The path as a pandas DataFrame (one row per step; ``features`` as tuples)."""
        import pandas as pd

        rows = self.to_dict()["path"]
        for r in rows:
            r["features"] = tuple(r["features"])
            r["n_features"] = len(r["features"])
        cols = ["step", "action", "feature", "n_features", "features", "score_mean",
                "score_std", "cost", "objective", "n_evaluations", "n_failed_folds"]
        return pd.DataFrame(rows, columns=cols)

    def evaluations_frame(self):
        """Every evaluated subset as a DataFrame, best objective first.

        Columns: ``features`` (tuple of names), ``n``, ``cost``, ``mean``, ``se``
        (standard error over the folds), ``objective``, ``n_folds``, ``status``,
        ``n_failed_folds``. The scores are in-search estimates (optimistic for the best
        rows); a ``"failed"`` row has no score.

        Examples
        --------
        >>> from sklearn.datasets import load_iris
        >>> from sklearn.naive_bayes import GaussianNB
        >>> from featuresift import SelectionProblem, run_search
        >>> X, y = load_iris(return_X_y=True)
        >>> res = run_search(SelectionProblem(X, y, GaussianNB(), cv=3), n_features=1)
        >>> res.evaluations_frame()[["features", "n", "cost"]].head(2)
                   features  n  cost
        0  (x0, x1, x2, x3)  4   4.0
        1             (x3,)  1   1.0
        """
        import pandas as pd

        rows = [
            {"features": e.features, "n": len(e.features), "cost": e.cost,
             "mean": e.score_mean, "se": e.score_sem, "objective": e.objective,
             "n_folds": e.n_folds, "status": e.status, "n_failed_folds": e.n_failed_folds}
            for e in self.evaluations
        ]
        cols = ["features", "n", "cost", "mean", "se", "objective", "n_folds", "status",
                "n_failed_folds"]
        frame = pd.DataFrame(rows, columns=cols)
        if len(frame):
            frame = frame.sort_values(["objective", "cost", "n"],
                                      ascending=[False, True, True], kind="stable")
        return frame.reset_index(drop=True)

    def plot(self, ax=None):
        """Score (with one standard error) and cost along the search path.

        Draws on ``ax`` (a new figure from ``matplotlib.pyplot`` when None) and returns
        the axes; the matplotlib backend is left as it is. Requires matplotlib.
        """
        from featuresift.display import plot_path

        return plot_path(self, ax)

    def __repr__(self) -> str:
        from featuresift.display import result_repr

        return result_repr(self)

    def _repr_html_(self) -> str:
        from featuresift.display import result_html

        return result_html(self)

    def output_files(self) -> dict[str, str]:
        """The content of ``result.json``, ``selected.csv`` and ``path.csv`` by file name."""
        files: dict[str, str] = {"result.json": self.to_json() + "\n"}
        files["selected.csv"] = _csv(
            ["feature", "column", "paid_by", "line_cost", "cost_unit"],
            [
                [name, col, *self._paid_by(name), self.cost_unit]
                for name, col in zip(self.selected, self.support)
            ],
        )
        files["path.csv"] = _csv(
            ["step", "action", "feature", "n_features", "features", "score_mean",
             "score_std", "cost", "objective", "n_evaluations", "n_failed_folds"],
            [
                [r.step, r.action, r.feature or "", len(r.features), " + ".join(r.features),
                 _fmt(r.score_mean), _fmt(r.score_std), _fmt(r.cost), _fmt(r.objective),
                 r.n_evaluations, r.n_failed_folds]
                for r in self.path
            ],
        )
        return files

    def write(self, folder: str | os.PathLike | RunFolder) -> list[Path]:
        """Write ``result.json``, ``selected.csv`` and ``path.csv`` into ``folder``.

        Each file is written under a temporary name and renamed over the final one
        (:func:`featuresift.outputs.write_files`), so a failure never leaves half a
        result, and a symbolic link in place of the folder or a file is refused
        (:class:`~featuresift.errors.InputError`). Returns the paths written.
        """
        return write_files(folder, self.output_files())

    def _paid_by(self, name: str) -> tuple[str, str]:
        for line in self.cost_breakdown:
            if name in line.features:
                return (line.item, _fmt(line.cost))
        return ("", "")

    def headline(self) -> str:
        """The answer in words: buy nothing, only what is on hand, or what to buy.

        Examples
        --------
        >>> r = SearchResult([], [], 0.0, "EUR", [], 10.0, 0.5, 0.0, [0.5], "roc_auc",
        ...                  {}, {"name": "forward"}, [], 1, 5, 0, 0.1, "done")
        >>> r.headline()
        'buy nothing (no measurement pays for itself here)'
        """
        if not self.success and not self.fold_scores:
            return "no answer (no allowed subset was evaluated)"
        ref = next((n for n, r in self.references.items() if r.get("is_answer")), None)
        n = len(self.selected)
        if n == 0:
            return "buy nothing (no measurement pays for itself here)"
        if ref == "free only" or (self.cost == 0 and ref != "everything"):
            return f"use only what is on hand ({n} zero-cost measurement{'s' * (n != 1)})"
        what = f"buy {n} measurement{'s' * (n != 1)} for {self.cost:g} {self.cost_unit}"
        return what + (" (every candidate)" if ref == "everything" else "")

    def _reference_lines(self) -> list[str]:
        u = self.cost_unit
        show_obj = self.objective.get("name", "score") != "score"
        head = f"  {'':<12} {'n':>3} {'cost':>10}  {'score':>8} {'± s.e.':>8}"
        lines = [f"References ({score_label('in-search', self.scoring)}, same folds):",
                 head + (f" {'objective':>10}" if show_obj else "")]
        rows = list(self.references.items())
        best = self.pick.get("best")
        if best is not None and self.pick.get("rule") != "best":
            label = ("strategy's" if self.pick.get("basis") == "strategy's answer"
                     else "best found")
            rows.append((label, {
                "features": best["features"], "cost": best["cost"],
                "score_mean": best["score_mean"], "score_sem": best["score_sem"],
                "objective": best["objective"], "allowed": True}))
        for name, r in rows:
            mean = r.get("score_mean")
            obj = r.get("objective")
            note = []
            if r.get("is_answer"):
                note.append("<- the answer")
            if not r.get("allowed", True):
                note.append("not allowed (budget or limits): reference only")
            line = (f"  {name:<12} {len(r['features']):>3} {r['cost']:>10.2f}  "
                    f"{_fmt_num(mean):>8} {_fmt_num(r.get('score_sem')):>8}")
            if show_obj:
                line += f" {_fmt_num(obj):>10}"
            lines.append(line + ("  " + "; ".join(note) if note else ""))
        lines.append(f"  (costs in {u})")
        return lines

    def _guard_lines(self) -> list[str]:
        g = self.guard or {}
        name = g.get("name", "off")
        if name == "off":
            return ["Noise guard: off (the pick rule's answer stands)"]
        lines = [f"Noise guard: {name} ({g.get('folds')} outer folds, one-sided paired t-test "
                 f"at alpha {g.get('alpha')}): {g.get('decision')}"]
        if "screen_p_value" in g:
            lines.append(f"  stage 1, in-search screen: p = {g['screen_p_value']:.4g} "
                         f"(Bonferroni over {g['screen_n_subsets']} subsets)")
        if "p_value" in g:
            lines.append(f"  stage 2, nested: p = {g['p_value']:.4g}; the guard cost "
                         f"{g['n_fits']} model fits")
            if g.get("replaced"):
                lines.append(f"  the search's answer was: {', '.join(g['replaced'])}")
            scores = g.get("nested_scores") or []
            lines.append(
                f"  {score_label('nested', self.scoring)} of the search's answers: "
                f"{_fmt_num(g.get('nested_mean'))} ± {_fmt_num(g.get('nested_std'))} "
                f"(sample std over {len(scores)} outer folds)")
        return lines

    def summary(self) -> str:
        """A readable multi-line report (what the CLI prints)."""
        u = self.cost_unit
        lines = []
        budget = "unlimited" if self.budget is None else f"{self.budget:g} {u}"
        lines.append(f"Strategy: {self.strategy.get('name')}   budget: {budget}   "
                     f"scoring: {self.scoring}")
        if self.pick:
            lines.append(f"Pick rule: {self.pick.get('description', self.pick.get('rule'))}")
        if self.guard:
            lines += self._guard_lines()
        lines.append("")
        lines.append(f"Answer: {self.headline()}")
        lines.append(f"Chosen measurements ({len(self.selected)}):")
        items = [
            c.item if c.kind == "feature" else f"{c.item} [panel: {', '.join(c.features)}]"
            for c in self.cost_breakdown
        ]
        width = max([len(w) for w in items] + [16])
        for what, c in zip(items, self.cost_breakdown):
            lines.append(f"  {what:<{width}}  {c.cost:>10.2f} {u}")
        lines.append(f"  {'TOTAL per sample':<{width}}  {self.cost:>10.2f} {u}")
        lines.append("")
        folds = ", ".join(f"{s:.4f}" for s in self.fold_scores)
        if self.fold_scores:
            lines.append(f"CV {score_label('in-search', self.scoring)}: "
                         f"{self.score_mean:.4f} ± {self.score_std:.4f} (sample std over "
                         f"{len(self.fold_scores)} folds)")
            lines.append(f"  per fold: {folds}")
        else:
            lines.append(f"CV {self.scoring}: no score (no subset was chosen)")
        if self.failed_folds:
            lines.append(
                f"  {len(self.failed_folds)} of {len(self.fold_scores)} folds FAILED "
                f"(fold {', '.join(str(f) for f in self.failed_folds)}, 0-based) and count "
                f"as error_score={self.failures.get('error_score')}")
        if self.objective.get("name", "score") != "score" and self.objective.get("value") \
                is not None:
            lines.append(f"  objective {self.objective['name']}: {self.objective['value']:.4f}")
        if self.references:
            lines.append("")
            lines += self._reference_lines()
        lines.append("")
        lines.append("Path:")
        show_failed = any(r.n_failed_folds for r in self.path)
        wa = max([8, *(len(r.action) for r in self.path)])
        wf = max([24, *(len(r.feature or "-") for r in self.path)])
        lines.append(f"  {'step':>4}  {'action':<{wa}} {'feature':<{wf}} {'n':>3} "
                     f"{'score':>8} {'cost':>9}" + ("  failed folds" if show_failed else ""))
        for r in self.path:
            lines.append(
                f"  {r.step:>4}  {r.action:<{wa}} {(r.feature or '-'):<{wf}} "
                f"{len(r.features):>3} "
                f"{r.score_mean:>8.4f} {r.cost:>9.2f}"
                + (f"  {r.n_failed_folds:>12}" if show_failed else "")
            )
        lines.append("")
        guard_fits = int((self.guard or {}).get("n_fits", 0))
        fits = f"{self.n_fits} model fits" + (
            f" (+ {guard_fits} for the noise guard)" if guard_fits else "")
        lines.append(
            f"{self.n_evaluations} subsets evaluated, {fits}, "
            f"{self.wall_time:.2f} s; stopped: {self.stop_reason}"
        )
        lines += self.failure_lines()
        return "\n".join(lines)

    def failure_lines(self, limit: int = 5) -> list[str]:
        """Readable lines on the fits that failed: how many, in which subsets and folds.

        Empty when nothing failed.

        Examples
        --------
        >>> r = SearchResult([], [], 0.0, "EUR", [], None, float("nan"), float("nan"), [],
        ...                  "accuracy", {}, {}, [], 1, 5, 0, 0.1, "done", False,
        ...                  failures={"n_failed_fits": 2, "message": "2 fits failed",
        ...                            "n_subsets": 1, "subsets": [{"features": ["ph"],
        ...                            "failed_folds": [0, 3], "n_folds": 5,
        ...                            "errors": ["ValueError: boom"], "scored": False}]})
        >>> print("\\n".join(r.failure_lines()))
        <BLANKLINE>
        Failed fits: 2 fits failed
          ph: fold 0, 3 of 5 failed (no score): ValueError: boom
        """
        info = self.failures
        if not info or not info.get("n_failed_fits"):
            return []
        lines = ["", f"Failed fits: {info.get('message', '')}"]
        for item in info.get("subsets", [])[:limit]:
            errors = item.get("errors") or ["failed"]
            folds = ", ".join(str(f) for f in item["failed_folds"])
            how = "scored with error_score" if item["scored"] else "no score"
            extra = f" (+{len(errors) - 1} other errors)" if len(errors) > 1 else ""
            lines.append(
                f"  {' + '.join(item['features']) or '(nothing)'}: fold {folds} of "
                f"{item['n_folds']} failed ({how}): {' '.join(errors[0].split())[:200]}{extra}"
            )
        more = info.get("n_subsets", 0) - min(limit, len(info.get("subsets", [])))
        if more > 0:
            lines.append(f"  ... and {more} more subsets (result.json lists up to "
                         f"{len(info.get('subsets', []))})")
        return lines

    def __str__(self) -> str:
        return self.summary()


def load_json(text: str | os.PathLike) -> Any:
    """The data of a JSON string, or of the JSON file at a path (``from_json`` of results).

    Examples
    --------
    >>> load_json('{"selected": ["ph"]}')
    {'selected': ['ph']}
    """
    if isinstance(text, os.PathLike) or (
        isinstance(text, str) and not text.lstrip().startswith("{")
    ):
        text = Path(text).read_text(encoding="utf-8")
    return json.loads(text)


def _nan(x: float | None) -> float:
    return math.nan if x is None else float(x)
def _fmt_num(x: Any, digits: int = 4) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    return f"{x:.{digits}f}"


def _clean(obj: Any) -> Any:
    """JSON-ready copy: non-finite floats become None."""
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if isinstance(obj, float):
        return _num(obj)
    return obj


def _fmt(x: float | None) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return ""
    return repr(float(x))


def _csv(header: list[str], rows: list[list[Any]]) -> str:
    import io

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue()
