"""Reading the YAML file: data plus the line of every key path."""

from __future__ import annotations

import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import yaml

from featuresift.config.context import _join
from featuresift.errors import InputError


def _line_map(node: yaml.Node | None) -> dict[str, int]:
    """Dotted key path -> 1-based line, from a composed YAML tree; rejects duplicate keys."""
    lines: dict[str, int] = {}
    seen: set[int] = set()
    stack: list[tuple[yaml.Node, str]] = [(node, "")] if node is not None else []
    while stack:
        n, path = stack.pop()
        if id(n) in seen:  # aliases: walk each node once
            continue
        seen.add(id(n))
        if isinstance(n, yaml.MappingNode):
            first: dict[str, int] = {}
            for k, v in n.value:
                if not isinstance(k, yaml.ScalarNode) or k.value == "<<":
                    continue
                sub = _join(path, k.value)
                line = k.start_mark.line + 1
                if k.value in first:
                    raise InputError(
                        f"key '{k.value}' appears twice (first at line {first[k.value]})",
                        key=sub, line=line,
                    )
                first[k.value] = line
                lines[sub] = line
                stack.append((v, sub))
        elif isinstance(n, yaml.SequenceNode):
            for i, item in enumerate(n.value):
                sub = f"{path}[{i}]"
                lines[sub] = item.start_mark.line + 1
                stack.append((item, sub))
    return lines


def _read_yaml(path: Path) -> tuple[Any, dict[str, int]]:
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"config file not found: {path}") from None
    except IsADirectoryError:
        raise InputError(f"config path is a folder, not a file: {path}") from None
    except UnicodeDecodeError as exc:
        raise InputError(f"config file {path} is not UTF-8 text: {exc.reason}") from None
    except OSError as exc:
        raise InputError(f"cannot read config file {path}: {exc.strerror}") from None
    try:
        node = yaml.compose(text, Loader=yaml.SafeLoader)
        raw = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        problem = getattr(exc, "problem", None) or str(exc)
        context = getattr(exc, "context", None)
        where = f"line {mark.line + 1}, column {mark.column + 1}" if mark else "unknown place"
        detail = f"{context}: {problem}" if context else problem
        raise InputError(f"YAML syntax error in {path.name} at {where}: {detail}") from None
    return raw, _line_map(node)



def _plain(value: Any) -> Any:
    """JSON-safe copy of YAML-loaded data."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return str(value)
    if value is None or isinstance(value, (bool, int, float, str)):
        return value
    return str(value)
