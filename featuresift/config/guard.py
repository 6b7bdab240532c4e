"""The ``guard`` section: the noise guard of the answer (see :mod:`featuresift.guard`).

.. code-block:: yaml

    guard: nested            # nested (default) | off | {name: nested, folds: 5, alpha: 0.05}
"""

from __future__ import annotations

from typing import Any

from featuresift.config.context import _Context
from featuresift.config.schema import RunConfig
from featuresift.config.sections import Section, register_section
from featuresift.errors import InputError
from featuresift.guard import DEFAULT_GUARD, make_guard
from featuresift.problem import SelectionProblem


def _parse_guard(value: Any, ctx: _Context) -> dict:
    value = DEFAULT_GUARD if value is None else value
    if isinstance(value, dict):
        value = ctx.mapping(value, "guard", ["name", "folds", "alpha"])
    try:
        spec = make_guard(value)
    except InputError as exc:
        raise ctx.rekey(exc, exc.key or "guard") from None
    return {"name": "off"} if spec is None else spec.describe()


def _apply_guard(cfg: RunConfig, value: dict, problem: SelectionProblem, kwargs: dict) -> None:
    kwargs["guard"] = value


register_section("guard", Section(_parse_guard, _apply_guard))
