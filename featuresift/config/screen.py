"""The ``screen`` section: the relevance scorer of ``featuresift screen``.

.. code-block:: yaml

    screen:                     # only for `featuresift screen`
      relevance: anova_f        # or {name: chi2, n_bins: 4}; default anova_f for
                                #   classifiers, pearson for regressors

``--relevance NAME`` on the command line replaces the scorer (and drops the section's
options). The Python twin is :func:`featuresift.filters.feature_report` (``relevance=``,
``relevance_options=``).
"""

from __future__ import annotations

import inspect
from typing import Any

from featuresift.config.context import _Context, _show, _suggest
from featuresift.config.schema import RunConfig
from featuresift.config.sections import Section, register_section
from featuresift.errors import InputError

__all__ = ["screen_relevance"]


def _parse_screen(value: Any, ctx: _Context) -> dict:
    from featuresift.filters.relevance import RELEVANCE_SCORERS

    d = ctx.mapping(value, "screen", ["relevance"])
    rel = d.get("relevance")
    if rel is None:
        return {"relevance": None, "options": {}}
    if isinstance(rel, dict):
        opts = dict(rel)
        name = ctx.string(opts.pop("name", None), "screen.relevance.name")
    elif isinstance(rel, str):
        name, opts = rel, {}
    else:
        raise ctx.error(f"expected a scorer name or {{name: ..., options}}, got {_show(rel)}",
                        "screen.relevance")
    if name not in RELEVANCE_SCORERS:
        raise ctx.error(f"unknown relevance scorer '{name}'{_suggest(name, RELEVANCE_SCORERS)}"
                        f"; known: {', '.join(sorted(RELEVANCE_SCORERS))}", "screen.relevance")
    params = inspect.signature(RELEVANCE_SCORERS[name].func).parameters
    known = [p for p in params if p not in ("X", "y", "task")]
    for k in opts:
        if k not in known:
            raise ctx.error(f"relevance scorer '{name}' has no option '{k}'"
                            f"{_suggest(str(k), known)}; options: {', '.join(known)}",
                            f"screen.relevance.{k}")
    return {"relevance": name, "options": opts}


register_section("screen", Section(_parse_screen))


def screen_relevance(cfg: RunConfig, name: str | None = None) -> tuple[str, dict, bool]:
    """The relevance scorer of a screen: its name, its options and whether it is seeded.

    ``name`` (``--relevance``) replaces the ``screen`` section's scorer and options; the
    default is ``anova_f`` for classifiers and ``pearson`` for regressors. A scorer that
    takes a ``seed`` gets the configuration's ``seed``.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.config import load_config
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cfg = load_config(write_demo(d, n_lots=60)[1], seed=4)
    >>> screen_relevance(cfg), screen_relevance(cfg, "mutual_info")
    (('anova_f', {}, False), ('mutual_info', {'seed': 4}, True))
    """
    from featuresift.filters.relevance import RELEVANCE_SCORERS

    section = cfg.extra.get("screen") or {"relevance": None, "options": {}}
    from_command_line = name is not None
    if from_command_line:
        options: dict = {}
    else:
        name, options = section["relevance"], dict(section["options"])
    if name is None:
        name = "anova_f" if cfg.classification else "pearson"
    key = "--relevance" if from_command_line else "screen.relevance"
    line = None if from_command_line else cfg.lines.get("screen.relevance")
    entry = RELEVANCE_SCORERS.get(name)
    if entry is None:
        raise InputError(f"unknown relevance scorer '{name}'{_suggest(name, RELEVANCE_SCORERS)}"
                         f"; known: {', '.join(sorted(RELEVANCE_SCORERS))}", key=key)
    task = "classification" if cfg.classification else "regression"
    if task not in entry.tasks:
        raise InputError(f"relevance scorer '{name}' does not support {task} (supports: "
                         f"{', '.join(entry.tasks)})", key=key, line=line)
    seeded = "seed" in inspect.signature(entry.func).parameters
    if seeded and "seed" not in options:
        options["seed"] = cfg.seed
    return name, options, seeded
