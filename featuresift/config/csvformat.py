"""How a CSV export is written: separator, decimal mark, text encoding, header names.

Lab exports differ by locale: much of Europe writes ``;``-separated files with decimal
commas, often in Windows-1252 (cp1252) or Latin-1 rather than UTF-8. :func:`sniff_csv`
works this out from the start of the file (settings given in YAML as ``data.separator``,
``data.decimal`` and ``data.encoding`` win), and says which setting to add when the
start of the file does not decide it. It also reads the header row itself, so a column
name given twice is reported before the CSV reader renames it (``protein_pct.1``).
"""

from __future__ import annotations

import codecs
import csv
import gzip
import re
from dataclasses import dataclass, field
from pathlib import Path

from featuresift.errors import InputError

SAMPLE_BYTES = 1 << 20
"""Bytes read from the start of the file to decide the format."""

SEPARATORS = (",", ";", "\t", "|")
"""Separators recognised when ``data.separator`` is not given."""

_SHOWN = {",": "','", ";": "';'", "\t": "'\\t' (tab)", "|": "'|'"}
_COMMA_NUMBER = re.compile(r"^[+-]?(\d+|\d{1,3}(\.\d{3})+),\d+$")
_DOT_NUMBER = re.compile(r"^[+-]?\d*\.\d+([eE][+-]?\d+)?$")
_SAMPLE_LINES = 200


@dataclass(frozen=True)
class CsvFormat:
    """Separator, decimal mark and encoding of a CSV file, and its header names."""

    separator: str
    decimal: str
    encoding: str
    header: tuple[str, ...]
    detected: tuple[str, ...] = field(default=())
    """Which of separator / decimal / encoding were worked out (not given)."""

    def describe(self) -> str:
        """``"separator ';', decimal ',', encoding cp1252 (detected)"``."""
        parts = [f"separator {_SHOWN.get(self.separator, repr(self.separator))}",
                 f"decimal '{self.decimal}'", f"encoding {self.encoding}"]
        found = [p for p, k in zip(parts, ("separator", "decimal", "encoding"))
                 if k in self.detected]
        given = [p for p in parts if p not in found]
        text = ", ".join(given)
        if found:
            text += ("; " if text else "") + ", ".join(found) + " (detected)"
        return text


def _head(path: Path) -> tuple[bytes, bool]:
    """The first SAMPLE_BYTES bytes and whether that is the whole file."""
    opener = gzip.open if path.name.lower().endswith(".gz") else open
    with opener(path, "rb") as fh:
        data = fh.read(SAMPLE_BYTES + 1)
    return data[:SAMPLE_BYTES], len(data) <= SAMPLE_BYTES


def _guess_encoding(raw: bytes, complete: bool, name: str) -> str:
    if raw.startswith(codecs.BOM_UTF8):
        return "utf-8-sig"
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return "utf-16"
    if b"\x00" in raw:
        raise InputError(
            f"data file {name} holds binary data (a spreadsheet such as .xlsx or .ods?); "
            "export it as CSV (or Parquet)", key="data.path",
        )
    try:
        codecs.getincrementaldecoder("utf-8")().decode(raw, final=complete)
        return "utf-8"
    except UnicodeDecodeError:
        pass
    try:  # Windows-1252 leaves 5 bytes undefined; Latin-1 decodes any byte
        raw.decode("cp1252")
        return "cp1252"
    except UnicodeDecodeError:
        return "latin-1"


def _split(lines: list[str], sep: str) -> list[list[str]]:
    return [row for row in csv.reader(lines, delimiter=sep) if any(c.strip() for c in row)]


def _guess_separator(lines: list[str], name: str) -> str:
    widths = {}
    for sep in SEPARATORS:
        rows = _split(lines, sep)
        if not rows or len(rows[0]) < 2:
            continue
        consistent = all(len(r) == len(rows[0]) for r in rows[1:])
        widths[sep] = (consistent, len(rows[0]))
    steady = [s for s, (ok, _) in widths.items() if ok]
    pool = steady or list(widths)
    if len(pool) == 1:
        return pool[0]
    if not pool:
        return ","  # one column: the column checks name what is missing
    shown = " or ".join(_SHOWN[s] for s in pool)
    raise InputError(
        f"cannot tell whether the columns of {name} are separated by {shown}; add "
        f"data.separator: \"{pool[0]}\" (or one of the others) to the config",
        key="data.path",
    )


def _guess_decimal(rows: list[list[str]], name: str) -> str:
    comma = dot = None
    for row in rows[1:]:
        for cell in row:
            cell = cell.strip()
            if comma is None and _COMMA_NUMBER.match(cell):
                comma = cell
            elif dot is None and _DOT_NUMBER.match(cell):
                dot = cell
    if comma is None:
        return "."
    if dot is None:
        return ","
    raise InputError(
        f"cannot tell the decimal mark of {name}: it holds both {comma!r} and {dot!r}; add "
        "data.decimal: \",\" (or \".\") to the config", key="data.path",
    )


def sniff_csv(
    path: Path,
    *,
    separator: str | None = None,
    decimal: str | None = None,
    encoding: str | None = None,
) -> CsvFormat:
    """Work out how ``path`` is written, from its first :data:`SAMPLE_BYTES` bytes.

    Raises
    ------
    InputError
        With ``key="data.path"`` (or the setting's key) when the file is binary, when
        its header repeats a column name, or when the start of the file does not
        decide the separator or the decimal mark (naming the setting to add).

    Examples
    --------
    >>> import pathlib, tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = pathlib.Path(d, "lots.csv")
    ...     _ = p.write_bytes("lot;Feuchte %;Kornhärte\\n1;12,5;11,0\\n".encode("cp1252"))
    ...     fmt = sniff_csv(p)
    >>> fmt.separator, fmt.decimal, fmt.encoding, fmt.header
    (';', ',', 'cp1252', ('lot', 'Feuchte %', 'Kornhärte'))
    """
    name = path.name
    raw, complete = _head(path)
    detected = []
    if encoding is None:
        encoding = _guess_encoding(raw, complete, name)
        if encoding not in ("utf-8", "utf-8-sig"):
            detected.append("encoding")
    try:
        text = codecs.getincrementaldecoder(encoding)(errors="strict").decode(
            raw, final=complete)
    except UnicodeDecodeError as exc:
        raise InputError(
            f"data file {name} is not {encoding} text (byte {raw[exc.start]:#04x} at "
            f"position {exc.start}); set data.encoding to the file's encoding "
            "(cp1252 for most Windows exports in Western Europe, latin-1, utf-8)",
            key="data.encoding",
        ) from None
    text = text.lstrip("\ufeff")
    lines = text.splitlines()
    if not complete and lines:
        lines = lines[:-1]  # the last line may be cut in the middle
    lines = lines[:_SAMPLE_LINES]
    if separator is None:
        separator = _guess_separator(lines, name)
        if separator != ",":
            detected.append("separator")
    rows = _split(lines, separator)
    if decimal is None and separator == ",":
        decimal = "."  # a decimal comma in a comma-separated file only appears quoted
    if decimal is None:
        decimal = _guess_decimal(rows, name)
        if decimal != ".":
            detected.append("decimal")
    if decimal == separator:
        raise InputError(f"the decimal mark and the separator of {name} are both "
                         f"'{separator}'; set data.separator or data.decimal",
                         key="data.decimal")
    header = tuple(rows[0]) if rows else ()
    seen: dict[str, int] = {}
    for i, col in enumerate(header, 1):
        if col in seen and col.strip():
            raise InputError(
                f"data file {name} has the column name '{col}' twice (columns {seen[col]} "
                f"and {i} of the header); rename one, or drop the repeated column",
                key="data.path",
            )
        seen.setdefault(col, i)
    return CsvFormat(separator, decimal, encoding, header, tuple(detected))
