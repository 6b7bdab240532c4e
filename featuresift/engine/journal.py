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

Every row carries the version of featuresift that wrote it and a SHA-256 checksum of
its content (fingerprint, subset, folds, writer). A row that does not verify — edited by
hand or by another program, corrupted, written by another featuresift version, or left
by a journal of schema version 1 that had no checksums — is never served: the evaluator
fits that subset again (overwriting the row) and counts it (``n_journal_rejected`` and
``n_journal_refitted`` in its stats, shown by the CLI). The checksum detects edits made
without featuresift's code; it is not a signature, so a journal is as trustworthy as the
folder it lives in: keep output folders writable only by the people running featuresift.

An evaluator reads its problem's rows once, when it is created; rows written later by
another process sharing the file are not seen by it (SQLite's locking keeps the file
consistent, and a later run sees everything).
"""

from __future__ import annotations

import hashlib
import os
import sqlite3
import time
from collections.abc import Iterable
from pathlib import Path

from featuresift.engine.records import FoldTable
from featuresift.errors import InputError
from featuresift.outputs import JOURNAL_SUFFIXES, refuse_symlink

__all__ = ["Journal", "open_journal", "reuse_message", "row_checksum", "writer_id"]

_SCHEMA_VERSION = "2"

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
    writer TEXT,
    checksum TEXT,
    PRIMARY KEY (fingerprint, subset)
);
"""


def writer_id() -> str:
    """Who writes rows: featuresift's version and the journal schema.

    Examples
    --------
    >>> writer_id().startswith("featuresift ")
    True
    """
    import featuresift  # the package is fully imported by the time rows are written

    return f"featuresift {featuresift.__version__} journal {_SCHEMA_VERSION}"


def row_checksum(writer: str, fingerprint: str, subset: str, n_folds: int, complete: int,
                 folds: str) -> str:
    """SHA-256 of a row's content (hex), as stored in its ``checksum`` column.

    Examples
    --------
    >>> len(row_checksum("w", "fp", "0 3", 2, 1, "[[0.9,0.01],[0.8,0.01]]"))
    64
    """
    text = "\x1f".join([writer, fingerprint, subset, str(int(n_folds)), str(int(complete)),
                        folds])
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


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
        for suffix in JOURNAL_SUFFIXES:  # SQLite follows links: refuse them first
            refuse_symlink(f"{self.path}{suffix}")
        self.writer = writer_id()
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
                elif row[0] == "1":
                    # Schema 1 had no checksums: its rows never verify and are refitted.
                    for column in ("writer", "checksum"):
                        self._conn.execute(
                            f"ALTER TABLE featuresift_evaluations ADD COLUMN {column} TEXT")
                    self._conn.execute("UPDATE featuresift_meta SET value = ? "
                                       "WHERE key = 'schema'", (_SCHEMA_VERSION,))
                elif row[0] != _SCHEMA_VERSION:
                    raise InputError(
                        f"journal {self.path} has schema version {row[0]}, "
                        f"this featuresift writes version {_SCHEMA_VERSION}",
                        key="journal",
                    )
        except sqlite3.DatabaseError as exc:
            raise InputError(f"cannot use {self.path} as a journal: {exc}", key="journal") from None

    # ---------------------------------------------------------------- reading
    def read(
        self, fingerprint: str
    ) -> tuple[dict[tuple[int, ...], FoldTable], list[tuple[int, ...]]]:
        """The verified rows of one problem, and the subsets whose rows do not verify.

        A row verifies when it was written by this version of featuresift, its checksum
        matches its content and its folds parse to the stored number of folds and
        completeness.

        Examples
        --------
        >>> import tempfile, os
        >>> from featuresift.engine.records import FoldTable
        >>> with Journal(os.path.join(tempfile.mkdtemp(), "j.sqlite")) as j:
        ...     t = FoldTable.empty(1); t.set(0, 0.5, 0.01)
        ...     j.store("fp", {(1,): t, (2,): t})
        ...     with j._conn:
        ...         _ = j._conn.execute("UPDATE featuresift_evaluations "
        ...                             "SET folds = '[[0.99,0.01]]' WHERE subset = '2'")
        ...     tables, rejected = j.read("fp")
        >>> sorted(tables), rejected
        ([(1,)], [(2,)])
        """
        rows = self._conn.execute(
            "SELECT subset, n_folds, complete, folds, writer, checksum "
            "FROM featuresift_evaluations WHERE fingerprint = ? ORDER BY subset",
            (fingerprint,),
        ).fetchall()
        tables: dict[tuple[int, ...], FoldTable] = {}
        rejected: list[tuple[int, ...]] = []
        for subset, n_folds, complete, folds, writer, checksum in rows:
            try:
                key = _parse_subset(subset)
            except (TypeError, ValueError, AttributeError):
                continue  # not a subset at all: nothing to refit under that key
            table = None
            ok = (
                writer == self.writer and isinstance(checksum, str)
                and isinstance(folds, str) and isinstance(n_folds, int)
                and isinstance(complete, int)
                and checksum == row_checksum(writer, fingerprint, subset, n_folds, complete,
                                             folds)
            )
            if ok:
                try:
                    table = FoldTable.from_json(folds)
                except (TypeError, ValueError, IndexError, KeyError):
                    table = None
                ok = (table is not None and table.n_folds == n_folds
                      and int(table.complete) == complete)
            if ok and table is not None:
                tables[key] = table
            else:
                rejected.append(key)
        return tables, rejected

    def load(self, fingerprint: str) -> dict[tuple[int, ...], FoldTable]:
        """Every verified stored subset of one problem, complete or partial."""
        return self.read(fingerprint)[0]

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
        rows = []
        for s, t in tables.items():
            subset, folds, complete = _subset_key(s), t.to_json(), int(t.complete)
            checksum = row_checksum(self.writer, fingerprint, subset, t.n_folds, complete,
                                    folds)
            rows.append((fingerprint, subset, t.n_folds, complete, folds, now, self.writer,
                         checksum))
        with self._conn:
            self._conn.executemany(
                "INSERT INTO featuresift_evaluations"
                "(fingerprint, subset, n_folds, complete, folds, written, writer, checksum) "
                "VALUES (?, ?, ?, ?, ?, ?, ?, ?) "
                "ON CONFLICT(fingerprint, subset) DO UPDATE SET "
                "n_folds = excluded.n_folds, complete = excluded.complete, "
                "folds = excluded.folds, written = excluded.written, "
                "writer = excluded.writer, checksum = excluded.checksum",
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


def reuse_message(stats: dict | None) -> str | None:
    """One sentence on what the journal gave a run (None when it gave nothing).

    ``stats`` is an evaluator's :meth:`~featuresift.engine.evaluator.CrossValidationEvaluator.stats`
    (``result.extras["engine"]``).

    Examples
    --------
    >>> reuse_message({"n_journal_hits": 12, "n_journal_rejected": 0})
    '12 evaluations reused from the journal.'
    >>> text = reuse_message({"n_journal_hits": 0, "n_journal_rejected": 2,
    ...                       "n_journal_refitted": 1})
    >>> text.split("; ")[1].split(" (")[0], text.split(": ")[-1]
    ('2 journal rows did not verify', '1 of those subsets fitted again.')
    >>> reuse_message({"n_journal_hits": 0}) is None
    True
    """
    if not stats:
        return None
    hits = int(stats.get("n_journal_hits") or 0)
    rejected = int(stats.get("n_journal_rejected") or 0)
    if not hits and not rejected:
        return None
    text = f"{hits} evaluation{'' if hits == 1 else 's'} reused from the journal"
    if rejected:
        refitted = int(stats.get("n_journal_refitted") or 0)
        text += (f"; {rejected} journal row{' did' if rejected == 1 else 's did'} not verify "
                 "(edited, corrupted or written by another featuresift version) and "
                 f"{'was' if rejected == 1 else 'were'} not used: {refitted} of those "
                 "subsets fitted again")
    return text + "."
