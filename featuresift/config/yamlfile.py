"""Reading the YAML file: data plus the line of every key path, within size limits.

Before anything is composed, the text is checked against :data:`MAX_YAML_BYTES`,
:data:`MAX_DEPTH` and :data:`MAX_NODES` (the size of the tree with every alias expanded),
so a huge file, a deeply nested one or an alias bomb ("billion laughs") is refused with
its line instead of exhausting memory or the interpreter's stack.
"""

from __future__ import annotations

import math
import stat
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import yaml

from featuresift.config.context import _join
from featuresift.errors import InputError

MAX_YAML_BYTES = 2 * 1024 * 1024
"""Largest config file read (bytes); a run configuration is a few kilobytes."""

MAX_DEPTH = 64
"""Deepest nesting of mappings and lists accepted."""

MAX_NODES = 100_000
"""Most values in the tree with every alias expanded (real configs have a few hundred)."""

_SafeLoader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


def _check_structure(text: str, name: str) -> None:
    """Refuse nesting deeper than MAX_DEPTH and alias expansion beyond MAX_NODES.

    Works on the parser's event stream (no tree is built): every collection's size
    counts its values, an alias counts the whole size of the anchored value.
    """
    anchors: dict[str, int] = {}
    stack: list[list] = []  # [size so far, anchor] of each open collection
    total = 0
    for event in yaml.parse(text, Loader=_SafeLoader):
        size = None
        if isinstance(event, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
            stack.append([1, event.anchor])
            if len(stack) > MAX_DEPTH:
                raise InputError(
                    f"config file {name}, line {event.start_mark.line + 1}: nesting deeper "
                    f"than {MAX_DEPTH} levels; a run configuration is a few levels deep"
                )
            continue
        if isinstance(event, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
            size, anchor = stack.pop()
            if anchor is not None:
                anchors[anchor] = size
        elif isinstance(event, yaml.ScalarEvent):
            size = 1
            if event.anchor is not None:
                anchors[event.anchor] = 1
        elif isinstance(event, yaml.AliasEvent):
            size = anchors.get(event.anchor, 1)
        if size is None:
            continue
        if stack:
            stack[-1][0] += size
            size = stack[-1][0]
        else:
            total += size
            size = total
        if size > MAX_NODES:
            raise InputError(
                f"config file {name}, line {event.start_mark.line + 1}: the aliases (*name) "
                f"expand to more than {MAX_NODES:,} values; refusing to expand them "
                "(write the values out, or use fewer aliases)"
            )


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
        info = path.stat()
        if stat.S_ISDIR(info.st_mode):
            raise IsADirectoryError
        if not stat.S_ISREG(info.st_mode):
            raise InputError(f"config path is not a regular file: {path}")
        if info.st_size > MAX_YAML_BYTES:
            raise InputError(
                f"config file {path.name} is {info.st_size / 2**20:.1f} MB; a run "
                f"configuration is at most {MAX_YAML_BYTES // 2**20} MB (the data belongs "
                "in the file named by data.path)"
            )
        with open(path, "rb") as fh:  # read at most the limit, whatever stat said
            data = fh.read(MAX_YAML_BYTES + 1)
        if len(data) > MAX_YAML_BYTES:
            raise InputError(f"config file {path.name} is larger than "
                             f"{MAX_YAML_BYTES // 2**20} MB")
        text = data.decode("utf-8")
    except FileNotFoundError:
        raise InputError(f"config file not found: {path}") from None
    except IsADirectoryError:
        raise InputError(f"config path is a folder, not a file: {path}") from None
    except UnicodeDecodeError as exc:
        raise InputError(
            f"config file {path.name} is not UTF-8 text ({exc.reason} at byte {exc.start}); "
            "save it as UTF-8"
        ) from None
    except OSError as exc:
        raise InputError(f"cannot read config file {path}: {exc.strerror}") from None
    if text.startswith("\ufeff"):
        text = text[1:]
    try:
        _check_structure(text, path.name)
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
