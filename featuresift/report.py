"""A readable Markdown report of a run, for whoever pays for the measurements.

:func:`write_report` assembles what a run produced — the chosen measurements and
their cost breakdown, the CV score, the search path, and optionally a budget sweep,
a nested (honest) estimate and a per-feature filter table — into ``report.md``.
Every report carries the caution that the ranking is statistical.
"""

from __future__ import annotations

import math
import os
from pathlib import Path
from typing import Any

from featuresift.engine.journal import reuse_message
from featuresift.outputs import RunFolder, write_files
from featuresift.result import SearchResult, score_label

__all__ = ["CAUTION", "render_report", "write_report"]

CAUTION = (
    "**Caution.** featuresift ranks measurements statistically, on the data it was given. "
    "The cross-validated score of the chosen subset is the number the search maximised, so "
    "it is optimistic; confirm the choice on new data before relying on it. Where a "
    "measurement protects people or the environment (clinical, food-safety or environmental "
    "testing), local regulations and licensed practice decide which tests are required, "
    "whatever this ranking says."
)


def _f(x: Any, digits: int = 4) -> str:
    if x is None:
        return "—"
    if isinstance(x, float):
        return "—" if not math.isfinite(x) else f"{x:.{digits}f}"
    return str(x)


def _table(header: list[str], rows: list[list[Any]]) -> list[str]:
    out = ["| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    out += ["| " + " | ".join(str(c) for c in r) + " |" for r in rows]
    return out


def _failure_section(result: SearchResult, limit: int = 20) -> list[str]:
    """The "Failed fits" section: counts, and which subsets and folds failed."""
    info = result.failures
    if not info or not info.get("n_failed_fits"):
        return []
    lines = ["## Failed fits", "", f"{info['message']}.", ""]
    if result.failed_folds:
        lines += [f"The chosen subset failed on folds "
                  f"{', '.join(str(f) for f in result.failed_folds)} (0-based); they count "
                  f"as error_score = {info.get('error_score')}.", ""]
    listed = info.get("subsets", [])[:limit]
    lines += _table(
        ["measurements", "failed folds", "score", "first error"],
        [[" + ".join(item["features"]) or "(nothing)",
          f"{', '.join(str(f) for f in item['failed_folds'])} of {item['n_folds']}",
          "error_score" if item["scored"] else "none (not chosen)",
          " ".join((item.get("errors") or ["—"])[0].split()).replace("|", "/")[:200]]
         for item in listed],
    )
    if info.get("n_subsets", 0) > len(listed):
        lines += ["", f"... and {info['n_subsets'] - len(listed)} more subsets with failed "
                  "folds (see result.json)."]
    return lines + [""]


def _answer_lines(result: SearchResult) -> list[str]:
    """How the answer was picked: pick rule, noise guard, and the three references."""
    out: list[str] = []
    if result.pick:
        out += [f"Pick rule: {result.pick.get('description', result.pick.get('rule'))}.", ""]
    g = result.guard or {}
    if g.get("name", "off") == "off":
        out += ["Noise guard: off (the pick rule's answer stands).", ""]
    else:
        out += [f"Noise guard: {g['name']} ({g.get('folds')} outer folds, one-sided paired "
                f"t-test at alpha {g.get('alpha')}): {g.get('decision')}."]
        if "screen_p_value" in g:
            out += [f"Stage 1, in-search screen: p = {g['screen_p_value']:.4g} (Bonferroni "
                    f"over {g['screen_n_subsets']} subsets evaluated)."]
        if "p_value" in g:
            out += [f"Stage 2, nested: p = {g['p_value']:.4g}; the guard cost {g['n_fits']} "
                    f"model fits (the search itself {result.n_fits})."]
            if g.get("replaced"):
                out += [f"The search's own answer was: {', '.join(g['replaced'])}."]
            out += ["", f"{score_label('nested', result.scoring)} of the search's answers on "
                    f"the outer folds: **{_f(g.get('nested_mean'))} ± {_f(g.get('nested_std'))}**"
                    f" (sample standard deviation over {len(g.get('nested_scores', []))} "
                    "outer folds)."]
        out += [""]
    if result.references:
        u = result.cost_unit
        show_obj = result.objective.get("name", "score") != "score"
        rows = []
        for name, r in result.references.items():
            note = "the answer" if r.get("is_answer") else (
                "" if r.get("allowed", True) else "reference only (budget or limits)")
            row = [name, len(r["features"]), _f(r["cost"], 2), _f(r.get("score_mean")),
                   _f(r.get("score_sem"))]
            rows.append(row + ([_f(r.get("objective"))] if show_obj else []) + [note])
        out += [f"References ({score_label('in-search', result.scoring)}, on the same folds):",
                ""]
        out += _table(["reference", "measurements", f"cost ({u})", "score", "± s.e."]
                      + (["objective"] if show_obj else []) + ["note"], rows)
        out += [""]
    return out


def render_report(
    result: SearchResult,
    *,
    title: str = "featuresift report",
    frontier: Any = None,
    nested: Any = None,
    feature_table: Any = None,
    source: str | None = None,
    chosen_heading: str = "Chosen measurements",
    frontier_plot: str | None = "frontier.png",
    nested_plot: str | None = None,
) -> str:
    """Markdown text of the report.

    Parameters
    ----------
    result : SearchResult
        The search to report.
    title : str
        First heading.
    frontier : Frontier, optional
        A budget sweep to include (table, and the plot if ``frontier.png`` is written
        beside the report).
    nested : NestedEvaluation, optional
        An honest estimate to include.
    feature_table : pandas.DataFrame, optional
        A per-feature table (relevance, cost, ...) to include.
    source : str, optional
        Where the run came from (config path), shown under the title.
    chosen_heading : str
        Heading of the section describing ``result``.
    frontier_plot : str or None, default="frontier.png"
        File name of the sweep's plot beside the report; None when no plot was drawn
        (the report then says how to get one instead of linking a missing image).
    nested_plot : str or None, default=None
        File name of the nested estimate's figure beside the report (``nested.png``,
        :meth:`NestedEvaluation.output_files <featuresift.nested.NestedEvaluation.output_files>`);
        None links none (and, without matplotlib, says how to get plots).

    Examples
    --------
    >>> from featuresift.result import SearchResult
    >>> r = SearchResult(["a"], [0], 1.0, "EUR", [], None, 0.9, 0.01, [0.9], "accuracy",
    ...                  {}, {"name": "forward"}, [], 1, 5, 0, 0.1, "done")
    >>> "Caution" in render_report(r)
    True
    """
    u = result.cost_unit
    lines = [f"# {title}", ""]
    # The one seed (strategy, noise guard, nested estimate), as result.json records it.
    seed = "none (not reproducible)" if result.seed is None else str(result.seed)
    lines += [f"Run from `{source}`, seed {seed}." if source else f"Seed {seed}.", ""]
    lines += [CAUTION, ""]
    budget = "unlimited" if result.budget is None else f"{result.budget:g} {u}"
    lines += [
        f"## {chosen_heading}",
        "",
        f"Strategy **{result.strategy.get('name')}**, budget {budget}, "
        f"scoring `{result.scoring}`.",
        "",
    ]
    lines += _table(
        ["paid item", "kind", "measurements", f"cost ({u})"],
        [[c.item, c.kind, ", ".join(c.features), _f(c.cost, 2)] for c in result.cost_breakdown]
        + [["**total per sample**", "", f"{len(result.selected)} measurements",
            f"**{_f(result.cost, 2)}**"]],
    )
    folds = ", ".join(_f(s) for s in result.fold_scores)
    lines += [
        "",
        f"**Answer: {result.headline()}.**",
        "",
        f"Cross-validated {score_label('in-search', result.scoring)}: "
        f"**{_f(result.score_mean)} ± "
        f"{_f(result.score_std)}** (sample standard deviation over "
        f"{len(result.fold_scores)} folds: {folds}).",
        "",
        *_answer_lines(result),
        f"{result.n_evaluations} subsets evaluated with {result.n_fits} model fits in "
        f"{result.wall_time:.1f} s. Stopped: {result.stop_reason}.",
        # A sweep's journal note covers the whole sweep: it goes with the sweep's table.
        *(["", reused] if frontier is None
          and (reused := reuse_message(result.extras.get("engine"))) else []),
        "",
    ]
    lines += _failure_section(result)
    lines += ["## Search path", ""]
    show_failed = any(r.n_failed_folds for r in result.path)
    lines += _table(
        ["step", "action", "measurement", "size", "score (in-search)", f"cost ({u})"]
        + (["failed folds"] if show_failed else []),
        [[r.step, r.action, r.feature or "—", len(r.features), _f(r.score_mean), _f(r.cost, 2)]
         + ([r.n_failed_folds] if show_failed else [])
         for r in result.path],
    )
    if nested is not None:
        lines += ["", *nested.to_markdown(plot=nested_plot)]
    if frontier is not None:
        lines += ["", *frontier.to_markdown(plot=frontier_plot)]
    if feature_table is not None:
        lines += ["", "## Per-measurement screening table", ""]
        cols = [str(c) for c in feature_table.columns]
        rows = [
            [_f(v) if isinstance(v, float) else str(v) for v in row]
            for row in feature_table.itertuples(index=False)
        ]
        lines += _table(cols, rows)
    return "\n".join(lines) + "\n"


def write_report(folder: str | os.PathLike | RunFolder, result: SearchResult,
                 **kwargs: Any) -> Path:
    """Write ``report.md`` into ``folder`` (see :func:`render_report` for options).

    Written atomically, never through a symbolic link
    (:func:`featuresift.outputs.write_files`).

    Examples
    --------
    >>> import tempfile
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> from featuresift import SelectionProblem, run_search
    >>> X, y = load_iris(return_X_y=True)
    >>> res = run_search(SelectionProblem(X, y, GaussianNB(), cv=3), "forward", n_features=1)
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = write_report(d, res, title="Iris check")
    ...     first_line = path.read_text().splitlines()[0]
    >>> path.name, first_line
    ('report.md', '# Iris check')
    """
    return write_files(folder, {"report.md": render_report(result, **kwargs)})[0]
