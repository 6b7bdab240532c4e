"""Parse context: line numbers of YAML keys, typed readers, error messages."""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from featuresift.errors import InputError


class _Context:
    """Line numbers of YAML keys, the config folder and the command-line overrides."""

    def __init__(self, lines: dict[str, int], base_dir: Path, overridden: Iterable[str],
                 trusted: Iterable[str] = ()):
        self.lines = lines
        self.base_dir = base_dir
        self.overridden = set(overridden)
        self.trusted = tuple(trusted)  # modules trusted from outside the config
        self.notes: list[str] = []  # old spellings that still work: "key (line n): ..."

    def note(self, message: str, key: str) -> None:
        """Record a note (an old spelling, say) at ``key``; the CLI prints it on stderr."""
        self.notes.append(str(self.error(message, key)))

    def line(self, key: str) -> int | None:
        """Line of ``key``, else of its nearest parent present in the file."""
        k = key
        while k:
            if k in self.lines:
                return self.lines[k]
            cut = max(k.rfind("."), k.rfind("["))
            k = k[:cut] if cut > 0 else ""
        return None

    def error(self, message: str, key: str) -> InputError:
        """An InputError at ``key`` (with its line, or marked as a command-line value)."""
        top = key.split(".")[0].split("[")[0]
        if top in self.overridden:
            return InputError(message, key=f"{key} (from the command line)")
        return InputError(message, key=key, line=self.line(key))

    def rekey(self, exc: InputError, key: str) -> InputError:
        """Attach a key and line to an InputError raised without one.

        A message that starts with a dotted key below ``key`` (``"costs.panels.x: ..."``)
        is split into that key and the rest.
        """
        if exc.key is not None:
            return self.error(exc.message, exc.key)
        head, sep, rest = exc.message.partition(": ")
        top = key.split(".")[0]
        if sep and (head == top or head.startswith(top + ".")) and " " not in head:
            return self.error(rest, head)
        return self.error(exc.message, key)

    # Typed readers ---------------------------------------------------------
    def mapping(self, value: Any, key: str, known: Iterable[str] | None = None) -> dict:
        if value is None:
            return {}
        if not isinstance(value, dict):
            raise self.error(f"expected a mapping (key: value lines), got {_show(value)}", key)
        if known is not None:
            known = list(known)
            for k in value:
                if not isinstance(k, str) or k not in known:
                    raise self.error(
                        f"unknown key '{k}'{_suggest(str(k), known)}; known keys: "
                        + ", ".join(known),
                        _join(key, str(k)),
                    )
        return dict(value)

    def section(self, value: Any, key: str, known: list[str], required: dict[str, str]) -> dict:
        """A mapping with only ``known`` keys that has every key of ``required``."""
        if value is None:
            wanted = ", ".join(f"{key}.{k}" for k in required)
            raise self.error(f"this section is required (with {wanted})", key)
        d = self.mapping(value, key, known)
        for name, what in required.items():
            if name not in d:
                raise self.error(f"missing key '{name}' ({what})", key)
        return d

    def string(self, value: Any, key: str, *, optional: bool = False) -> str | None:
        if value is None and optional:
            return None
        if not isinstance(value, str) or not value.strip():
            raise self.error(f"expected a non-empty text value, got {_show(value)}", key)
        return value

    def strings(self, value: Any, key: str) -> list[str]:
        if value is None:
            return []
        if isinstance(value, str):
            value = [value]
        if not isinstance(value, list):
            raise self.error(f"expected a list of names, got {_show(value)}", key)
        out = []
        for i, item in enumerate(value):
            if isinstance(item, (int, float)) and not isinstance(item, bool):
                item = str(item)
            out.append(self.string(item, f"{key}[{i}]"))
            if out[-1] in out[:-1]:
                raise self.error(f"'{out[-1]}' is listed twice", f"{key}[{i}]")
        return out

    def number(
        self, value: Any, key: str, *, minimum: float | None = None,
        optional: bool = False, allow_inf: bool = False, what: str = "a number",
        maximum: float | None = None, positive: bool = False,
    ) -> float | None:
        if value is None and optional:
            return None
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            hint = ""
            if isinstance(value, str):
                hint = " (YAML reads 1e3 as text: write 1000 or 1.0e+3; do not quote numbers)"
            raise self.error(f"expected {what}, got {_show(value)}{hint}", key)
        try:
            x = float(value)
        except OverflowError:
            x = math.inf if value > 0 else -math.inf
            if allow_inf or maximum is not None:
                raise self.error(f"{_show(value)} is too large for a number", key) from None
        if math.isnan(x):
            raise self.error(f"expected {what}, got NaN", key)
        if math.isinf(x) and not allow_inf:
            raise self.error(f"expected a finite number, got {x}", key)
        if minimum is not None and x < minimum:
            raise self.error(f"must be >= {minimum:g}, got {x:g}", key)
        if positive and x <= 0:
            raise self.error(f"must be > 0, got {x:g}", key)
        if maximum is not None and math.isfinite(x) and x > maximum:
            raise self.error(f"must be at most {maximum:g}, got {x:g}", key)
        return x

    def integer(
        self, value: Any, key: str, *, minimum: int | None = None, optional: bool = False,
        maximum: int | None = None,
    ) -> int | None:
        if value is None and optional:
            return None
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.error(f"expected a whole number, got {_show(value)}", key)
        if minimum is not None and value < minimum:
            raise self.error(f"must be >= {minimum}, got {value}", key)
        if maximum is not None and value > maximum:
            shown = f"{value}" if len(str(value)) <= 20 else f"{value:.3g}"
            raise self.error(f"must be at most {maximum}, got {shown}", key)
        return value

    def boolean(self, value: Any, key: str, *, optional: bool = False) -> bool | None:
        if value is None and optional:
            return None
        if not isinstance(value, bool):
            raise self.error(f"expected true or false, got {_show(value)}", key)
        return value


def _join(key: str, sub: str) -> str:
    return f"{key}.{sub}" if key else sub


def _show(value: Any) -> str:
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    if value is None:
        return "nothing (null)"
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _suggest(word: str, options: Iterable[str]) -> str:
    close = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""
