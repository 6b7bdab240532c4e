"""An on-disk record of evaluations, so that a killed search resumes where it stopped.

The journal is one SQLite file (standard library :mod:`sqlite3`, write-ahead-log
mode). Every row is keyed by ``(fingerprint, subset)``: the fingerprint of the
:class:`~featuresift.problem.SelectionProblem` (data, estimator and parameters, CV
splits, scorer) and the sorted column indices. A row stores what is known fold by
fold (score, seconds, or the error of a failed fit) and whether every fold was run.

The evaluator writes all rows of a finished batch in one transaction, so after a
kill the file holds whole batches only. A search started again with the same
configuration reads the rows of its fingerprint and fits only what is missing; a
changed configuration has a different fingerprint and never sees old scores.
Evaluations stopped early by racing are stored with their partial folds and
``complete = 0``; they are never served as complete.

An evaluator reads its problem's rows once, when it is created; rows written later by
another process sharing the file are not seen by it (SQLite's locking keeps the file
consistent, and a later run sees everything).
"""

from __future__ import annotations

import os
import sqlite3
import time
from collections.abc import Iterable
from pathlib import Path

from featuresift.engine.records import FoldTable
from featuresift.errors import InputError

__all__ = ["Journal", "open_journal"]

_SCHEMA_VERSION = "1"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS featuresift_meta (
    key TEXT PRIMARY KEY,
    value TEXT NOT NULL
);
CREATE TABLE IF NOT EXISTS featuresift_evaluations (
    fingerprint TEXT NOT NULL,
    subset TEXT NOT NULL,
    n_folds INTEGER NOT NULL,
    complete INTEGER NOT NULL,
    folds TEXT NOT NULL,
    written REAL NOT NULL,
    PRIMARY KEY (fingerprint, subset)
);
"""


def _subset_key(subset: Iterable[int]) -> str:
    return " ".join(str(int(i)) for i in subset)


def _parse_subset(text: str) -> tuple[int, ...]:
    return tuple(int(t) for t in text.split())


class Journal:
    """SQLite journal of fold-level evaluations, keyed by (problem fingerprint, subset).

    Parameters
    ----------
    path : str or path-like
        The SQLite file; created (with its folder) if missing.
    timeout : float, default=30
        Seconds to wait for a lock held by another process.

    Examples
    --------
    >>> import tempfile, os
    >>> from featuresift.engine.records import FoldTable
    >>> folder = tempfile.mkdtemp()
    >>> with Journal(os.path.join(folder, "runs.sqlite")) as j:
    ...     t = FoldTable.empty(2); t.set(0, 0.9, 0.01); t.set(1, 0.8, 0.01)
    ...     j.store("abc", {(0, 3): t})
    ...     j.load("abc")[(0, 3)].scores
    [0.9, 0.8]
    """

    def __init__(self, path: str | os.PathLike, timeout: float = 30.0) -> None:
        self.path = Path(path)
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            self._conn = sqlite3.connect(str(self.path), timeout=timeout)
            self._conn.execute("PRAGMA journal_mode=WAL")
            self._conn.execute("PRAGMA synchronous=NORMAL")
            with self._conn:
                self._conn.executescript(_SCHEMA)
                row = self._conn.execute(
                    "SELECT value FROM featuresift_meta WHERE key='schema'"
                ).fetchone()
                if row is None:
                    self._conn.execute(
                        "INSERT INTO featuresift_meta(key, value) VALUES ('schema', ?)",
                        (_SCHEMA_VERSION,),
                    )
                elif row[0] != _SCHEMA_VERSION:
                    raise InputError(
                        f"journal {self.path} has schema version {row[0]}, "
                        f"this featuresift writes version {_SCHEMA_VERSION}",
                        key="journal",
                    )
        except sqlite3.DatabaseError as exc:
            raise InputError(f"cannot use {self.path} as a journal: {exc}", key="journal") from None

    # ---------------------------------------------------------------- reading
    def load(self, fingerprint: str) -> dict[tuple[int, ...], FoldTable]:
        """Every stored subset of one problem, complete or partial."""
        rows = self._conn.execute(
            "SELECT subset, folds FROM featuresift_evaluations WHERE fingerprint = ?",
            (fingerprint,),
        ).fetchall()
        return {_parse_subset(s): FoldTable.from_json(f) for s, f in rows}

    def count(self, fingerprint: str | None = None, complete: bool | None = None) -> int:
        """Number of rows, optionally of one problem and of one completeness."""
        sql = "SELECT COUNT(*) FROM featuresift_evaluations WHERE 1=1"
        args: list = []
        if fingerprint is not None:
            sql += " AND fingerprint = ?"
            args.append(fingerprint)
        if complete is not None:
            sql += " AND complete = ?"
            args.append(int(complete))
        return int(self._conn.execute(sql, args).fetchone()[0])

    def fingerprints(self) -> list[str]:
        """Fingerprints of the problems stored in this journal."""
        rows = self._conn.execute(
            "SELECT DISTINCT fingerprint FROM featuresift_evaluations ORDER BY fingerprint"
        ).fetchall()
        return [r[0] for r in rows]

    # ---------------------------------------------------------------- writing
    def store(self, fingerprint: str, tables: dict[tuple[int, ...], FoldTable]) -> None:
        """Insert or replace the rows of one finished batch, in one transaction."""
        if not tables:
            return
        now = time.time()
        rows = [
            (fingerprint, _subset_key(s), t.n_folds, int(t.complete), t.to_json(), now)
            for s, t in tables.items()
        ]
        with self._conn:
            self._conn.executemany(
                "INSERT INTO featuresift_evaluations"
                "(fingerprint, subset, n_folds, complete, folds, written) "
                "VALUES (?, ?, ?, ?, ?, ?) "
                "ON CONFLICT(fingerprint, subset) DO UPDATE SET "
                "n_folds = excluded.n_folds, complete = excluded.complete, "
                "folds = excluded.folds, written = excluded.written",
                rows,
            )

    def close(self) -> None:
        """Close the connection (further use raises)."""
        self._conn.close()

    def __enter__(self) -> Journal:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"Journal({str(self.path)!r})"


def open_journal(spec: str | os.PathLike | Journal | None) -> Journal | None:
    """A :class:`Journal` from a path, an existing journal, or None (no journal).

    Examples
    --------
    >>> import os, tempfile
    >>> open_journal(None) is None
    True
    >>> with tempfile.TemporaryDirectory() as d:
    ...     j = open_journal(os.path.join(d, "runs.sqlite"))
    ...     print(type(j).__name__, open_journal(j) is j, j.count())
    ...     j.close()
    Journal True 0
    """
    if spec is None or isinstance(spec, Journal):
        return spec
    if isinstance(spec, (str, os.PathLike)):
        return Journal(spec)
    raise InputError(f"journal must be a file path or a Journal, got {spec!r}", key="journal")
