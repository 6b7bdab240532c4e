"""The ``sweep`` section and :func:`sweep_from_config` (one search per budget)."""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from pathlib import Path
from typing import Any

from featuresift.config.checks import check_sweep_budgets
from featuresift.config.context import _Context, _show
from featuresift.config.run import build_run
from featuresift.config.schema import RunConfig
from featuresift.config.sections import MAX_AMOUNT, Section, register_section
from featuresift.frontier import BUDGET_LEVELS
from featuresift.outputs import RunFolder, open_run_folder

__all__ = ["sweep_budgets", "sweep_from_config", "write_sweep_files"]


def _parse_sweep(value: Any, ctx: _Context) -> dict:
    """The ``sweep`` section: budgets for ``featuresift sweep``.

    ``budgets`` is a list of numbers (``null`` = unlimited); ``n_budgets`` asks for at
    most that many default budgets (see :func:`featuresift.frontier.default_budgets`),
    to which the run's own ``budget`` is added; ``budget_levels`` places them at round
    money values (``round``, 1-2-5 series, the default) or at the distinct cost levels
    of the cost table (``costs``).
    """
    d = ctx.mapping(value, "sweep", ["budgets", "n_budgets", "budget_levels"])
    if "budgets" in d and ("n_budgets" in d or "budget_levels" in d):
        key = "n_budgets" if "n_budgets" in d else "budget_levels"
        raise ctx.error(f"give either budgets or {key}, not both", "sweep")
    levels = d.get("budget_levels", "round")
    if levels not in BUDGET_LEVELS:
        raise ctx.error(f"expected one of {', '.join(BUDGET_LEVELS)}, got {_show(levels)}",
                        "sweep.budget_levels")
    budgets = None
    if d.get("budgets") is not None:
        raw = d["budgets"]
        if not isinstance(raw, list) or not raw:
            raise ctx.error(f"expected a non-empty list of budgets, got {_show(raw)}",
                            "sweep.budgets")
        budgets = [
            ctx.number(b, f"sweep.budgets[{i}]", minimum=0, optional=True,
                       maximum=MAX_AMOUNT)
            for i, b in enumerate(raw)
        ]
    n = ctx.integer(d.get("n_budgets"), "sweep.n_budgets", minimum=2, optional=True,
                    maximum=1000)
    return {"budgets": budgets, "n_budgets": 8 if n is None else n, "budget_levels": levels}


register_section("sweep", Section(_parse_sweep))


def _search_options(kwargs: dict) -> dict:
    """run_search keyword arguments without the budget (set per sweep point)."""
    return {k: v for k, v in kwargs.items() if k not in ("budget",)}


def sweep_budgets(cfg: RunConfig, budgets: list[float | None] | None = None) -> list:
    """The budgets a sweep searches (None = unlimited), checked.

    ``budgets`` (``--budgets``) if given, else the ``sweep`` section's ``budgets``, else
    ``n_budgets`` default budgets (placed as ``budget_levels`` says) plus the run's
    ``budget`` and unlimited.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.config import load_config
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cfg = load_config(write_demo(d, n_lots=60)[1])
    >>> sweep_budgets(cfg, [2.0, None]), 30.0 in sweep_budgets(cfg)
    ([2.0, None], True)
    """
    from featuresift.frontier import default_budgets

    spec = cfg.extra.get("sweep") or {"budgets": None, "n_budgets": 8}
    if budgets is not None:  # the section's budgets were checked by load_config
        check_sweep_budgets(cfg, budgets, key="--budgets")
        return list(budgets)
    if spec["budgets"] is not None:
        return list(spec["budgets"])
    budgets = default_budgets(cfg.cost_model, spec["n_budgets"],
                              spec.get("budget_levels", "round"))
    if cfg.budget is not None and cfg.budget not in budgets:
        budgets = sorted([b for b in budgets if b is not None] + [cfg.budget])
        budgets.append(None)
    return budgets


def sweep_from_config(
    cfg: RunConfig,
    budgets: list[float | None] | None = None,
    *,
    write: bool = False,
    callback: Callable | None = None,
    nested_folds: int | None = None,
    nested_repeats: int | None = None,
):
    """Run the configured search once per budget on a shared evaluator.

    The headline pick is the configuration's ``pick`` rule applied to the points that
    fit its ``budget`` (:attr:`Frontier.headline`); the highest score at any budget is
    shown apart. With a ``nested`` section (or ``nested_folds``), the search at the
    headline's budget also gets a nested estimate (:attr:`Frontier.nested`).

    Parameters
    ----------
    cfg : RunConfig
        From :func:`load_config`.
    budgets : list of float or None, optional
        Budgets (None = unlimited); default from the ``sweep`` section, else 8 round
        budgets (:func:`~featuresift.frontier.default_budgets`, placed as the section's
        ``budget_levels`` says) plus the run's budget.
    write : bool, default=False
        Write ``frontier.csv``, ``frontier_choices.csv``, ``frontier.json``,
        ``frontier.png`` (with matplotlib) and ``report.md`` into a new run folder
        (``NNN-sweep``) of the output folder, locked for the whole sweep (see
        :mod:`featuresift.outputs`).
    callback : callable, optional
        Called with each finished :class:`~featuresift.result.SearchResult`.
    nested_folds, nested_repeats : int, optional
        K and R of the nested estimate at the headline's budget (over the ``nested``
        section).

    Returns
    -------
    Frontier

    Examples
    --------
    Two cheap budgets of the demo's forward search share one evaluator:

    >>> import tempfile
    >>> from featuresift.config import load_config
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     fr = sweep_from_config(load_config(write_demo(d, n_lots=60)[1]), budgets=[0.5, 1.0])
    >>> fr.budgets, [r.cost <= b for r, b in zip(fr.results, fr.budgets)]
    ([0.5, 1.0], [True, True])
    >>> fr.n_fits < fr.n_fits_without_cache, fr.budget
    (True, 30.0)

    On 60 lots no paid test beats the values on hand on the outer folds, so the noise
    guard turns the headline into the "free only" reference:

    >>> fr.headline_key, fr.guard["decision"].split(":")[0]
    ('free only', "replaced by 'free only'")
    """
    from featuresift.config.nested import nested_from_config, nested_spec
    from featuresift.frontier import budget_sweep

    problem, kwargs = build_run(cfg)
    nested = nested_spec(cfg, nested_folds, nested_repeats)
    budgets = sweep_budgets(cfg, budgets)

    def sweep() -> Any:
        from featuresift.config.engine import cluster_of

        with cluster_of(cfg):  # engine.cluster: the fits run on a dask cluster
            frontier = budget_sweep(problem, list(budgets), budget=cfg.budget,
                                    **_search_options(kwargs))
        if callback is not None:
            for r in frontier.results:
                callback(r)
        head = frontier.headline
        if nested is not None and head is not None:
            frontier.nested = nested_from_config(cfg, nested["folds"], nested["repeats"],
                                                 budget=head.budget)
        return frontier

    if not write:
        return sweep()
    with open_run_folder(cfg, "sweep") as out:
        frontier = sweep()
        write_sweep_files(out, cfg, frontier)
        out.commit()
    return frontier


def write_sweep_files(out: RunFolder, cfg: RunConfig, frontier: Any) -> list[Path]:
    """Write the files of one ``sweep`` into an open :class:`~featuresift.outputs.RunFolder`.

    ``frontier.csv``, ``frontier_choices.csv``, ``frontier.json``, ``frontier.png``
    and, with a nested estimate, ``nested.png`` (plots only when matplotlib is
    installed; the report then says how to get them instead of linking a missing
    image) and ``report.md``. Returns the paths written (the caller
    commits ``out``).
    """
    from featuresift.report import write_report

    head, key = frontier.headline, frontier.headline_key
    shown = head if head is not None else frontier.results[frontier.best_index or 0]
    budget = "unlimited" if shown.budget is None else f"{shown.budget:g}"
    if head is not None and head.budget != frontier.budget and frontier.budget is not None:
        # A search under a larger budget may find the best set that fits the run's budget.
        heading = (f"Headline pick (rule {frontier.pick}, within the budget "
                   f"{frontier.budget:g}; found by the search at budget {budget})")
    elif head is not None:
        heading = f"Headline pick (rule {frontier.pick}, budget {budget})"
    elif isinstance(key, str):
        heading = (f"Headline: the reference '{key}' (see the sweep section); below, "
                   f"the search at budget {budget}")
    else:
        heading = f"No point fits the run's budget; highest-scoring (budget {budget})"
    written = frontier.write(out)
    plotted = any(p.name == "frontier.png" for p in written)
    nested_png = None
    if frontier.nested is not None:  # its numbers are in frontier.json: only the figure
        png = frontier.nested.output_files().get("nested.png")
        if png is not None:
            written += out.write_files({"nested.png": png})
            nested_png = "nested.png"
    if (frontier.guard or {}).get("name", "off") != "off":
        # The sweep's searches run without the guard; the sweep applies it to its headline.
        shown = dataclasses.replace(shown, guard=dict(frontier.guard))
    written.append(write_report(
        out, shown, frontier=frontier, nested=frontier.nested, source=str(cfg.path),
        title="featuresift budget sweep", chosen_heading=heading,
        frontier_plot="frontier.png" if plotted else None, nested_plot=nested_png,
    ))
    return written
