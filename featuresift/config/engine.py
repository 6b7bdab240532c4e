"""The ``engine`` section: journal, racing, chunking, failure policy, progress."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from featuresift.config.context import _Context, _show
from featuresift.config.schema import RunConfig
from featuresift.config.sections import Section, register_section
from featuresift.engine.evaluator import check_error_score
from featuresift.engine.racing import make_race
from featuresift.errors import InputError
from featuresift.problem import SelectionProblem


def _parse_engine(value: Any, ctx: _Context) -> dict:
    """The ``engine`` section: journal, racing, chunking, failure policy, progress.

    .. code-block:: yaml

        engine:
          journal: true         # true: <output folder>/journal.sqlite; false: off; or a
                                #   file name inside the output folder
          racing: false         # false | f-race | hoeffding | t-race | {name: f-race, alpha: 0.1}
          chunk_size: null      # model fits per parallel task (null: automatic)
          on_fit_error: raise   # raise | record (a failed fold is recorded and counted)
          error_score: .nan     # under record: a failed fold's score; .nan (default): a
                                #   subset with a failed fold has no score, never chosen
          progress: true        # a progress bar on an interactive terminal
          share_preprocessing: true  # fit leading scalers/imputers once per fold
    """
    d = ctx.mapping(value, "engine", ["journal", "racing", "chunk_size", "on_fit_error",
                                      "error_score", "progress", "share_preprocessing"])
    journal = d.get("journal", True)
    if journal is None or isinstance(journal, bool):
        journal_name = "journal.sqlite" if journal else None
    else:
        name = ctx.string(journal, "engine.journal")
        if Path(name).name != name or name in (".", ".."):
            raise ctx.error(
                f"'{name}' must be a plain file name: the journal is kept in the output folder",
                "engine.journal",
            )
        journal_name = name
    racing = d.get("racing", False)
    if racing is not None and not isinstance(racing, (bool, str, dict)):
        raise ctx.error(f"expected false, a rule name or a mapping, got {_show(racing)}",
                        "engine.racing")
    try:
        make_race(racing)  # the racing module names the rules and checks their options
    except InputError as exc:
        raise ctx.error(exc.message, "engine.racing") from None
    racing = None if racing in (None, False) else racing
    policy = d.get("on_fit_error", "raise")
    if policy not in ("raise", "record"):
        raise ctx.error(f"expected raise or record, got {_show(policy)}", "engine.on_fit_error")
    try:
        error_score = check_error_score(d.get("error_score", float("nan")))
    except InputError as exc:
        raise ctx.error(exc.message, "engine.error_score") from None
    progress = d.get("progress", True)
    return {
        "journal": journal_name,
        "racing": racing,
        "chunk_size": ctx.integer(d.get("chunk_size"), "engine.chunk_size", minimum=1,
                                  optional=True),
        "on_fit_error": policy,
        "error_score": error_score,
        "progress": ctx.boolean(progress, "engine.progress"),
        "share_preprocessing": ctx.boolean(d.get("share_preprocessing", True),
                                           "engine.share_preprocessing"),
    }


def _apply_engine(cfg: RunConfig, value: dict, problem: SelectionProblem, kwargs: dict) -> None:
    kwargs["journal"] = None if value["journal"] is None else cfg.output / value["journal"]
    kwargs["racing"] = value["racing"]
    kwargs["chunk_size"] = value["chunk_size"]
    kwargs["on_fit_error"] = value["on_fit_error"]
    kwargs["error_score"] = value["error_score"]
    kwargs["verbose"] = 1 if value["progress"] else 0
    kwargs["share_preprocessing"] = value["share_preprocessing"]


register_section("engine", Section(_parse_engine, _apply_engine))
