"""How results look in a notebook and a console: short reprs, HTML tables, plots.

Every public result object (:class:`~featuresift.result.SearchResult`,
:class:`~featuresift.frontier.Frontier`, :class:`~featuresift.nested.NestedEvaluation`,
:class:`~featuresift.problem.SelectionProblem`, :class:`~featuresift.costs.CostModel`)
delegates its ``__repr__`` (one line, no memory address) and ``_repr_html_`` (what
Jupyter shows) to the functions here, so the same facts are shown the same way:
the chosen measurements, their cost against the budget beside the references
(nothing / free only / everything, when the result has them), and every score with
its kind, in-search (optimistic) or nested (honest).

Plot functions draw on a given matplotlib ``Axes`` or a new figure from
``matplotlib.pyplot``; they never choose or switch the backend (a script that needs a
file-only backend selects it before plotting, as the command-line tool does).

Examples
--------
>>> from featuresift.costs import CostModel
>>> cm = CostModel(["a", "b", "c"], {"a": 0.0}, panels={"kit": (5.0, ["b", "c"])}, unit="EUR")
>>> "<table" in cost_model_html(cm)
True
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

__all__ = [
    "score_text",
    "short_list",
    "result_repr",
    "result_html",
    "frontier_repr",
    "frontier_html",
    "nested_repr",
    "nested_html",
    "problem_repr",
    "problem_html",
    "cost_model_repr",
    "cost_model_html",
    "plot_path",
    "plot_nested",
    "plot_selection_frequency",
    "screen_repr",
    "screen_html",
    "filter_selection_repr",
    "filter_selection_html",
]

_MAX_NAMES = 4
"""Names shown in a one-line repr before "+N more"."""


def score_kind_label(kind: str, scoring: str | None = None) -> str:
    """The words beside a score: :func:`featuresift.result.score_label`."""
    from featuresift.result import score_label

    return score_label(kind, scoring)


def _f(x: Any, digits: int = 4) -> str:
    if x is None:
        return "-"
    try:
        v = float(x)
    except (TypeError, ValueError):
        return str(x)
    if not math.isfinite(v):
        return "-"
    return f"{v:.{digits}f}"


def _money(x: Any) -> str:
    if x is None:
        return "unlimited"
    v = float(x)
    return f"{v:g}" if math.isfinite(v) else "unlimited"


def short_list(names: Sequence[str], limit: int = _MAX_NAMES, width: int = 60) -> str:
    """``['a', 'b', +3 more]``: a list of names cut for a one-line repr.

    At most ``limit`` names, and no more than fit in about ``width`` characters (long
    names would push a repr past one line); always at least one.

    Examples
    --------
    >>> short_list(["ph", "ash", "fat", "salt", "iron", "zinc"])
    "['ph', 'ash', 'fat', 'salt', +2 more]"
    >>> short_list(["somatic_cell_count_k_per_ml", "bulk_tank_temperature_c", "ph"])
    "['somatic_cell_count_k_per_ml', 'bulk_tank_temperature_c', +1 more]"
    >>> short_list([])
    '[]'
    """
    names = list(names)
    shown: list[str] = []
    for n in names[:limit]:
        item = repr(str(n))
        if shown and sum(len(x) + 2 for x in shown) + len(item) > width:
            break
        shown.append(item)
    if len(names) > len(shown):
        shown.append(f"+{len(names) - len(shown)} more")
    return "[" + ", ".join(shown) + "]"


def score_text(mean: Any, scoring: str, kind: str, sem: Any = None) -> str:
    """``0.9123 ± 0.0100 (roc_auc, in-search estimate (optimistic))``.

    Examples
    --------
    >>> score_text(0.91234, "roc_auc", "nested")
    '0.9123 (roc_auc, nested estimate (honest))'
    """
    spread = "" if sem is None or not math.isfinite(float(sem)) else f" ± {_f(sem)}"
    return f"{_f(mean)}{spread} ({score_kind_label(kind, scoring)})"


def _table(header: Sequence[str], rows: Iterable[Sequence[Any]], caption: str = "") -> str:
    cap = f"<caption style='text-align:left'>{html.escape(caption)}</caption>" if caption else ""
    head = "".join(f"<th>{html.escape(str(h))}</th>" for h in header)
    body = "".join(
        "<tr>" + "".join(f"<td>{html.escape(str(c))}</td>" for c in row) + "</tr>"
        for row in rows
    )
    return (f"<table class='featuresift'>{cap}<thead><tr>{head}</tr></thead>"
            f"<tbody>{body}</tbody></table>")


def _block(title: str, parts: Iterable[str]) -> str:
    return (f"<div class='featuresift'><strong>{html.escape(title)}</strong>"
            + "".join(parts) + "</div>")


def _p(text: str) -> str:
    return f"<p>{html.escape(text)}</p>"


# ------------------------------------------------------------------ references
def references_of(result: Any) -> list[tuple[str, float | None, float | None, str]]:
    """``(name, cost, score, note)`` of the reference answers stored with a result.

    The references ("nothing", "free only", "everything") are kept in the result
    (attribute ``references`` or ``extras["references"]``) as a mapping of name to a
    record with ``cost`` and ``score_mean`` (or ``score``); an empty list when absent.
    The note says whether the reference is the answer, or not allowed as one.
    """
    refs = getattr(result, "references", None)
    if not refs:
        refs = getattr(result, "extras", {}).get("references")
    if not refs:
        return []
    items = refs.items() if isinstance(refs, Mapping) else (
        (getattr(r, "name", None) or r.get("name"), r) for r in refs)
    out = []
    for name, rec in items:
        get = rec.get if isinstance(rec, Mapping) else (lambda k, r=rec: getattr(r, k, None))
        score = get("score_mean")
        if score is None:
            score = get("score")
            if isinstance(score, Mapping):
                score = score.get("mean")
        note = ("the answer" if get("is_answer") else
                "not allowed (budget or limits)" if get("allowed") is False else "")
        out.append((str(name), get("cost"), score, note))
    return out


# ---------------------------------------------------------------- SearchResult
def result_repr(res: Any) -> str:
    """One line: chosen measurements, cost against budget, in-search score, strategy.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from sklearn.naive_bayes import GaussianNB
    >>> from featuresift import SelectionProblem, run_search
    >>> X, y = load_iris(return_X_y=True)
    >>> res = run_search(SelectionProblem(X, y, GaussianNB(), cv=3), n_features=1)
    >>> print(result_repr(res))
    SearchResult(selected=['x3'], cost=1 / unlimited features, score=0.9533 in-search, strategy='greedy-swap', 6 subsets)
    """  # noqa: E501
    strategy = res.strategy.get("name") if isinstance(res.strategy, Mapping) else res.strategy
    guard = getattr(res, "guard", None) or {}
    guard = guard if isinstance(guard, Mapping) else {}
    if guard.get("replaced"):  # the nested scores are of the answers the guard rejected
        extra = " (noise guard fell back)"
    elif guard.get("nested_mean") is not None:
        extra = f" ({_f(guard['nested_mean'])} nested, noise guard)"
    else:
        extra = ""
    return (
        f"SearchResult(selected={short_list(res.selected)}, "
        f"cost={_money(res.cost)} / {_money(res.budget)} {res.cost_unit}, "
        f"score={_f(res.score_mean)} in-search{extra}, strategy={strategy!r}, "
        f"{res.n_evaluations} subsets)"
    )


def result_html(res: Any) -> str:
    """HTML for Jupyter: chosen measurements and their cost lines, score, references."""
    u = res.cost_unit
    rows = [
        (c.item if c.kind == "feature" else f"{c.item} (panel: {', '.join(c.features)})",
         f"{c.cost:g}")
        for c in res.cost_breakdown
    ]
    rows.append(("TOTAL per sample", f"{res.cost:g}"))
    headline = getattr(res, "headline", None)
    answer = (f"<p><strong>{html.escape('Answer: ' + headline())}</strong></p>"
              if callable(headline) else "")
    parts = [
        answer,
        _p(f"Strategy {res.strategy.get('name')}; budget {_money(res.budget)} {u}; "
           f"{len(res.selected)} measurement(s) chosen."),
        _table(["chosen measurement", f"cost ({u})"], rows),
        _p("Score: " + score_text(res.score_mean, res.scoring, "in-search",
                                  _sem(res.score_std, len(res.fold_scores)))),
    ]
    guard = getattr(res, "guard", None) or {}
    if isinstance(guard, Mapping) and guard.get("name", "off") != "off":
        text = f"Noise guard: {guard.get('decision', '')}"
        if guard.get("p_value") is not None:
            text += f" (one-sided paired t-test p = {guard['p_value']:.3g}, alpha "
            text += f"{guard.get('alpha')})"
        if guard.get("nested_mean") is not None:
            whose = ("the answers it rejected" if guard.get("replaced")
                     else "the search's answers")
            text += f"; on outer folds {whose} scored " + score_text(
                guard["nested_mean"], res.scoring, "nested")
        parts.append(_p(text + "."))
    refs = references_of(res)
    if refs:
        parts.append(_table(
            ["reference", f"cost ({u})", f"score ({score_kind_label('in-search')})", ""],
            [(name, _money(cost) if cost is not None else "-", _f(score), note)
             for name, cost, score, note in refs],
            caption="Beside the references",
        ))
    parts.append(_p(f"{res.n_evaluations} subsets evaluated, {res.n_fits} model fits, "
                    f"{res.wall_time:.2f} s; stopped: {res.stop_reason}."))
    return _block("featuresift search result", parts)


def _sem(std: float, n: int) -> float | None:
    if n < 2 or std is None or not math.isfinite(std):
        return None
    return std / math.sqrt(n)


def plot_path(res: Any, ax: Any = None) -> Any:
    """Score (with one standard error) and cost along a search path; returns the axes.

    The score is drawn on ``ax`` against the step number; the cost of the subset at
    each step on a twin axis (right). Requires matplotlib.
    """
    ax = _new_axes(ax, (7, 4))
    steps = [r.step for r in res.path]
    scores = [r.score_mean for r in res.path]
    n = max(len(res.fold_scores), 1)
    sems = [(r.score_std / math.sqrt(n)) if n > 1 and math.isfinite(r.score_std) else 0.0
            for r in res.path]
    ax.errorbar(steps, scores, yerr=sems, marker="o", color="tab:blue", capsize=3,
                label=f"score ({score_kind_label('in-search', res.scoring)})")
    for r in res.path:
        if r.feature:
            ax.annotate(f"{r.action} {r.feature}", (r.step, r.score_mean), fontsize=7,
                        textcoords="offset points", xytext=(3, 5), rotation=20)
    ax.set_xlabel("search step")
    ax.set_ylabel(f"cross-validated {res.scoring}")
    twin = ax.twinx()
    twin.step(steps, [r.cost for r in res.path], where="mid", color="tab:orange",
              label=f"cost ({res.cost_unit})")
    if res.budget is not None:
        twin.axhline(res.budget, color="tab:orange", linestyle=":", label="budget")
    twin.set_ylabel(f"cost per sample ({res.cost_unit})")
    handles = ax.get_legend_handles_labels()
    more = twin.get_legend_handles_labels()
    ax.legend(handles[0] + more[0], handles[1] + more[1], loc="lower right", fontsize=8)
    ax.set_title(f"Search path ({res.strategy.get('name')})")
    ax.grid(alpha=0.3)
    return ax


# -------------------------------------------------------------------- Frontier
def _efficient_flags(fr: Any) -> list[bool]:
    from featuresift.frontier import efficient_points

    return efficient_points([r.cost for r in fr.results], [r.score_mean for r in fr.results])


def frontier_repr(fr: Any) -> str:
    """One line: budgets, cost and in-search score ranges, efficient points.

    Examples
    --------
    >>> from types import SimpleNamespace as NS
    >>> r = [NS(cost=1.0, score_mean=0.7), NS(cost=3.0, score_mean=0.9)]
    >>> fr = NS(budgets=[1, None], results=r, cost_unit="EUR", scoring="accuracy")
    >>> print(frontier_repr(fr))
    Frontier(2 budgets 1-unlimited, cost 1-3, accuracy 0.7000-0.9000 in-search, 2 efficient, costs in EUR)
    """  # noqa: E501
    costs = [r.cost for r in fr.results]
    scores = [r.score_mean for r in fr.results if math.isfinite(r.score_mean)]
    lo_b = min((b for b in fr.budgets if b is not None), default=None)
    hi_b = None if any(b is None for b in fr.budgets) else max(fr.budgets, default=None)
    span = (f"cost {_span(costs, '{:g}')}, " if costs else "")
    score = (f"{fr.scoring} {_span(scores, '{:.4f}')} in-search, " if scores else "")
    # The unit once, at the end: a long unit ("EUR per lot (...)") no longer triples.
    return (f"Frontier({len(fr.budgets)} budgets {_money(lo_b)}-{_money(hi_b)}, "
            f"{span}{score}{sum(_efficient_flags(fr))} efficient"
            f"{_frontier_headline(fr)}, costs in {fr.cost_unit})")


def _span(values: Sequence[float], fmt: str) -> str:
    lo, hi = fmt.format(min(values)), fmt.format(max(values))
    return lo if lo == hi else f"{lo}-{hi}"


def _frontier_headline(fr: Any) -> str:
    """``, headline ['a', 'b'] at 2 EUR`` (or the reference it is); empty if none."""
    try:
        key = fr.headline_key
    except AttributeError:  # a stand-in without the pick (doctest)
        return ""
    if key is None:
        return ", no point fits the budget"
    if isinstance(key, str):
        return f", headline reference {key!r}"
    r = fr.results[key]
    nested = getattr(fr, "nested", None)
    honest = f" ({_f(nested.outer_mean)} nested)" if nested is not None else ""
    return f", headline {short_list(r.selected, 2)} at {r.cost:g}{honest}"


def frontier_html(fr: Any) -> str:
    """HTML table: one row per budget (chosen measurements, cost, in-search score)."""
    # The words of the console table and report.md (pick, and why a point is not
    # efficient) when the object can give them.
    if hasattr(fr, "efficiency_notes"):
        marks, notes = fr.pick_marks(), fr.efficiency_notes()
    else:
        marks = [""] * len(fr.results)
        notes = ["yes" if e else "no" for e in _efficient_flags(fr)]
    rows = []
    for b, r, mark, note in zip(fr.budgets, fr.results, marks, notes):
        rows.append((_money(b), ", ".join(r.selected) or "(nothing)", f"{r.cost:g}",
                     _f(r.score_mean), _f(_sem(r.score_std, len(r.fold_scores))),
                     mark, note))
    parts = [_table(
        [f"budget ({fr.cost_unit})", "chosen measurements", f"cost ({fr.cost_unit})",
         f"score ({score_kind_label('in-search', fr.scoring)})", "± s.e.", "pick",
         "efficient"],
        rows,
    )]
    if getattr(fr, "nested", None) is not None:
        ne = fr.nested
        parts.append(_p("At the headline's budget: " + score_text(
            ne.outer_mean, ne.scoring, "nested", _sem(ne.outer_std, len(ne.outer_scores)))))
    if hasattr(fr, "_describe"):
        within = "unlimited" if fr.budget is None else f"{fr.budget:g} {fr.cost_unit}"
        parts.insert(0, _p(f"Headline (pick '{fr.pick}' within budget {within}): "
                           + fr._describe(fr.headline_key)))
    refs = references_of(fr.results[-1]) if fr.results else []
    if refs:
        parts.append(_table(["reference", f"cost ({fr.cost_unit})",
                             f"score ({score_kind_label('in-search')})"],
                            [(n, _money(c) if c is not None else "-", _f(s))
                             for n, c, s, _ in refs], caption="Beside the references"))
    parts.append(_p(f"{fr.n_fits} model fits for the sweep "
                    f"({fr.n_fits_without_cache} without sharing between budgets)."))
    return _block("featuresift budget sweep", parts)


# ------------------------------------------------------------ NestedEvaluation
def nested_repr(ne: Any) -> str:
    """One line: outer folds, nested score, in-search score, optimism, mean cost."""
    import numpy as np

    ci = getattr(ne, "ci", None)
    interval = "" if ci is None else (
        f" ({getattr(ne, 'confidence', 0.95):.0%} CI {_f(ci[0], 3)}-{_f(ci[1], 3)})")
    return (
        f"NestedEvaluation({len(ne.outer_scores)} outer folds, "
        f"{ne.scoring} {_f(ne.outer_mean)}{interval} nested, "
        f"{_f(float(np.mean(ne.inner_scores)))} in-search, optimism {ne.optimism:+.4f}, "
        f"mean cost {float(np.mean(ne.costs)):.4g} {ne.cost_unit})"
    )


def nested_html(ne: Any) -> str:
    """HTML: nested and in-search scores, then the choice of each outer fold."""
    import numpy as np

    parts = [
        _p("Score: " + score_text(ne.outer_mean, ne.scoring, "nested",
                                  _sem(ne.outer_std, len(ne.outer_scores)))
           + ("; " + ne._ci_text() if hasattr(ne, "_ci_text") else "")),
        _p("The search's own score: " + score_text(float(np.mean(ne.inner_scores)),
                                                   ne.scoring, "in-search")
           + f"; optimism {ne.optimism:+.4f}."),
        _p("Stability of the choice (Nogueira): "
           + ("undefined" if ne.stability is None else f"{ne.stability:.3f}")
           + f"; every outer search under the budget {_money(getattr(ne, 'budget', None))}"
           + f" {ne.cost_unit}, seed {getattr(ne, 'seed', None)}."),
        _table(
            ["outer fold", "chosen measurements", f"cost ({ne.cost_unit})",
             f"nested {ne.scoring}", f"in-search {ne.scoring}"],
            [(i, ", ".join(s) or "(nothing)", f"{c:g}", _f(o), _f(n))
             for i, (s, c, o, n) in enumerate(zip(ne.selected, ne.costs, ne.outer_scores,
                                                  ne.inner_scores))],
        ),
    ]
    return _block("featuresift nested evaluation", parts)


def _new_axes(ax: Any, size: tuple[float, float]) -> Any:
    """``ax``, or the axes of a new pyplot figure (pyplot never changes the backend)."""
    if ax is None:
        import matplotlib.pyplot as plt

        _, ax = plt.subplots(figsize=size)
    return ax


def plot_nested(ne: Any, ax: Any = None) -> Any:
    """Per outer search, its in-search score beside its nested score; returns the axes.

    Open circles: the in-search estimate (optimistic) the search gave its own choice;
    filled: the nested estimate (honest) on the outer test fold it never saw; a grey
    line joins the two. Horizontal lines: both means; the band: the confidence
    interval of the nested mean. Outer searches are numbered as in the HTML table; up
    to 12 of them are labelled with the cost of their choice. Requires matplotlib.
    """
    import numpy as np

    ax = _new_axes(ax, (7, 4.5))
    inner = np.asarray(ne.inner_scores, dtype=float)
    outer = np.asarray(ne.outer_scores, dtype=float)
    x = np.arange(len(outer))
    u = ne.cost_unit
    ax.vlines(x, np.fmin(inner, outer), np.fmax(inner, outer), color="0.75", lw=1)
    ax.plot(x, inner, "o", mfc="none", color="tab:orange",
            label=f"{score_kind_label('in-search')}: each outer search's own")
    ax.plot(x, outer, "o", color="tab:blue",
            label=f"{score_kind_label('nested')}: its outer test fold")
    if math.isfinite(ne.inner_mean):
        ax.axhline(ne.inner_mean, ls="--", lw=1, color="tab:orange",
                   label=f"mean in-search {ne.inner_mean:.4f}")
    if math.isfinite(ne.outer_mean):
        ax.axhline(ne.outer_mean, lw=1.5, color="tab:blue",
                   label=f"mean nested {ne.outer_mean:.4f}")
    ci = getattr(ne, "ci", None)
    if ci is not None and math.isfinite(ne.outer_mean):
        ax.axhspan(ci[0], ci[1], color="tab:blue", alpha=0.12, lw=0,
                   label=f"{ne.confidence:.0%} CI of the nested mean "
                         f"[{ci[0]:.4f}, {ci[1]:.4f}]")
    reps = list(getattr(ne, "repeats", []) or [])
    for i in range(1, len(reps)):
        if reps[i] != reps[i - 1]:  # a new repeat of the outer folds
            ax.axvline(i - 0.5, ls=":", color="0.6", lw=1)
    ax.set_xticks(x)
    if len(x) <= 12:
        ax.set_xticklabels([f"{i}\n{c:g} {u}" for i, c in zip(x, ne.costs)], fontsize=8)
        ax.set_xlabel(f"outer search (below: acquisition cost of its choice, {u} per sample)")
    else:
        ax.set_xlabel("outer search")
    ax.set_ylabel(ne.scoring)
    ax.set_title(f"Nested CV ({ne.design}): optimism of the in-search estimate "
                 f"{ne.optimism:+.4f}\nmean cost of the choices "
                 f"{float(np.mean(ne.costs)):.4g} {u} per sample", fontsize=9)
    ax.grid(alpha=0.3)
    ax.legend(loc="best", fontsize=7)
    return ax


def plot_selection_frequency(ne: Any, ax: Any = None, max_features: int = 20) -> Any:
    """Share of outer searches that chose each measurement (bars); returns the axes.

    Most often chosen on top, at most ``max_features`` bars (never chosen ones last);
    the title gives the stability of the choice (Nogueira et al. 2018). Requires
    matplotlib.
    """
    ax = _new_axes(ax, (6, 0.6 + 0.3 * min(len(ne.selection_frequency), max_features)))
    ranked = sorted(ne.selection_frequency.items(), key=lambda kv: -kv[1])[:max_features]
    names = [n for n, _ in ranked][::-1]
    shares = [v for _, v in ranked][::-1]
    ax.barh(names, shares, color="tab:blue")
    for i, v in enumerate(shares):
        ax.annotate(f"{v:.2f}", (v, i), textcoords="offset points", xytext=(3, -3),
                    fontsize=7)
    ax.set_xlim(0, 1.08)
    ax.set_xlabel(f"share of the {len(ne.outer_scores)} outer searches choosing it")
    stab = "undefined" if ne.stability is None else f"{ne.stability:.3f}"
    ax.set_title(f"Measurements chosen in nested CV ({ne.design})\nstability of the "
                 f"choice (Nogueira et al. 2018): {stab}", fontsize=9)
    ax.grid(alpha=0.3, axis="x")
    return ax


# ------------------------------------------------------------ SelectionProblem
def _estimator_name(est: Any) -> str:
    if getattr(est, "takes_columns", False):  # the user's model behind typed columns
        est = est.estimator
    steps = getattr(est, "steps", None)
    if steps:
        return "Pipeline(" + " > ".join(type(s).__name__ for _, s in steps) + ")"
    return type(est).__name__


def _grouping(p: Any) -> str:
    if p.groups is None:
        return ""
    return ", grouped" if getattr(p, "grouped", True) else ", groups IGNORED by this cv"


def problem_repr(p: Any) -> str:
    """One line: shape, estimator, CV, scorer and costs (never a memory address)."""
    scoring = p.scoring if isinstance(p.scoring, str) or p.scoring is None else (
        getattr(p.scoring, "__name__", type(p.scoring).__name__))
    cm = p.cost_model
    name = _estimator_name(p.estimator)
    if len(name) > 60:  # a long pipeline: its last step says what model it is
        name = f"Pipeline({name.count(' > ') + 1} steps > {name.rsplit(' > ', 1)[-1]}"
    return (
        f"SelectionProblem(n_samples={p.n_samples}, n_features={p.n_features}, "
        f"estimator={name}, cv={type(p.cv).__name__} "
        f"({len(p.splits)} splits{_grouping(p)}), "
        f"scoring={scoring!r}, costs: {len(cm.panels)} panel(s), unit {cm.unit!r})"
    )


def problem_html(p: Any) -> str:
    """HTML: data, model, CV and the price table."""
    rows = [
        ("samples x candidates", f"{p.n_samples} x {p.n_features}"),
        ("target", "classification" if p.classification else "regression"),
        ("estimator", _estimator_name(p.estimator)),
        ("cross-validation", f"{type(p.cv).__name__}, {len(p.splits)} splits"
         + (f", {len(set(p.groups.tolist()))} groups" if getattr(p, "grouped", False)
            else _grouping(p))),
        ("scoring", str(p.scoring if p.scoring is not None else "estimator score")),
    ]
    return _block("featuresift selection problem",
                  [_table(["", ""], rows), cost_model_html(p.cost_model, title=False)])


# ------------------------------------------------------------------- CostModel
def cost_model_repr(cm: Any) -> str:
    """One line: candidates, panels, how many are on hand, the price of everything.

    Examples
    --------
    >>> from featuresift.costs import CostModel
    >>> print(cost_model_repr(CostModel(["ph", "fat", "ash"], {"ph": 0.0, "fat": 2.5,
    ...                                                        "ash": 4.0}, unit="EUR")))
    CostModel(n_features=3, n_panels=0, unit='EUR', on hand 1, everything 6.5 EUR)
    """
    free = sum(1 for n in cm.feature_names
               if cm.panel_of(n) is None and cm.feature_costs[n] == 0)
    return (f"CostModel(n_features={cm.n_features}, n_panels={len(cm.panels)}, "
            f"unit={cm.unit!r}, on hand {free}, everything "
            f"{cm.cost(list(cm.feature_names)):g} {cm.unit})")


def cost_model_html(cm: Any, title: bool = True) -> str:
    """HTML price table: one row per lone measurement and per panel."""
    rows = []
    for n in cm.feature_names:
        if cm.panel_of(n) is None:
            price = cm.feature_costs[n]
            rows.append((n, "measurement", f"{price:g}", "on hand" if price == 0 else ""))
    for pname, (price, members) in cm.panels.items():
        rows.append((pname, "panel", f"{price:g}", ", ".join(members)))
    table = _table(["item", "kind", f"price ({cm.unit})", "note / panel members"], rows)
    if not title:
        return table
    return _block(f"featuresift costs: {cm.n_features} candidates, {len(cm.panels)} panel(s)",
                  [table])


# ------------------------------------------------------------------- filters
def screen_repr(res: Any) -> str:
    """One line for a :class:`~featuresift.filters.prescreen.ScreenResult`.

    Examples
    --------
    >>> from sklearn.datasets import load_iris
    >>> from featuresift.filters import prescreen
    >>> X, y = load_iris(return_X_y=True)
    >>> print(screen_repr(prescreen(X, y, keep=2, rule="top")))
    ScreenResult(kept 2 of 4: ['x2', 'x3'], rule='top', scorer='anova_f')
    """
    return (f"ScreenResult(kept {len(res.kept)} of {len(res.table)}: "
            f"{short_list(res.kept_names)}, rule={res.rule!r}, scorer={res.scorer!r})")


def screen_html(res: Any) -> str:
    """HTML: the screen's rule and its table, one row per column with the reason."""
    cols = [c for c in ("feature", "relevance", "p_value", "q_value", "cost",
                        "relevance_per_cost", "rank", "kept", "reason") if c in res.table]
    rows = [[_f(v) if isinstance(v, float) else v for v in row]
            for row in res.table[cols].itertuples(index=False)]
    return _block(f"featuresift pre-screen: kept {len(res.kept)} of {len(res.table)} "
                  f"(rule {res.rule}, relevance {res.scorer})", [_table(cols, rows)])


def filter_selection_repr(sel: Any) -> str:
    """One line for a :class:`~featuresift.filters.greedy.FilterSelection`.

    Examples
    --------
    >>> from featuresift.filters import mrmr
    >>> from sklearn.datasets import load_iris
    >>> X, y = load_iris(return_X_y=True)
    >>> print(filter_selection_repr(mrmr(X, y, n_features=2)))
    FilterSelection(selected=['x2', 'x1'], cost=2 / unlimited features, relevance 'mutual_info', form 'difference', redundancy 'mutual_info', rule 'gain')
    """  # noqa: E501
    return (f"FilterSelection(selected={short_list(sel.selected)}, cost={_money(sel.cost)} / "
            f"{_money(sel.budget)} {sel.cost_unit}, relevance {sel.relevance_scorer!r}, "
            f"form {sel.form!r}, redundancy {sel.redundancy!r}, rule {sel.rule!r})")


def filter_selection_html(sel: Any) -> str:
    """HTML: each pick with its relevance, redundancy, gain and the running cost."""
    rows = [(st.feature, _f(st.relevance), _f(st.redundancy), _f(st.gain),
             f"{st.marginal_cost:g}", f"{st.total_cost:g}") for st in sel.steps]
    u = sel.cost_unit
    return _block(
        f"featuresift filter selection ({sel.relevance_scorer} relevance, {sel.form} form, "
        f"{sel.redundancy} redundancy)",
        [_table(["pick", "relevance", "redundancy", "gain", f"cost ({u})",
                 f"running cost ({u})"], rows),
         _p(f"Cost {sel.cost:g} {u} against budget {_money(sel.budget)}; model-free "
            f"scores, no cross-validated estimate; stopped: {sel.stop_reason}.")])
