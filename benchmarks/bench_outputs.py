"""What safe output folders cost: journal checksums and atomic, locked run folders.

Run with ``python benchmarks/run_all.py outputs``. Prints a Markdown block.

* Journal rows: reading a problem's rows with verification (``Journal.read``: writer,
  SHA-256 checksum, fold parse) against the plain read the journal did before
  (``SELECT`` + ``FoldTable.from_json``); storing rows with their checksum against a plain
  ``INSERT`` of the same rows.
* Run files: one ``RunFolder`` (create, lock, stage, write result.json, selected.csv,
  path.csv and report.md each by temporary file + fsync + ``os.replace``, rename the run
  folder, write latest.json, unlock) against ``Path.write_text`` of the same four files.

Times are medians of repeats; ratios are against the reference timed in the same run.
"""

from __future__ import annotations

import math
import os
import sqlite3
import statistics
import sys
import tempfile
import time
from pathlib import Path

from featuresift.engine.journal import Journal
from featuresift.engine.records import FoldTable
from featuresift.outputs import RunFolder

N_ROWS = 5000
N_FOLDS = 5
REPEATS = 7


def _median_time(fn, repeats=REPEATS) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def _tables() -> dict[tuple[int, ...], FoldTable]:
    out = {}
    for i in range(N_ROWS):
        t = FoldTable.empty(N_FOLDS)
        for f in range(N_FOLDS):
            t.set(f, 0.5 + ((i * 7 + f * 13) % 100) / 1000.0, 0.01)
        out[(i % 40, 40 + i // 40)] = t
    return out


def bench_journal(folder: Path) -> list[str]:
    tables = _tables()
    path = folder / "j.sqlite"
    with Journal(path) as j:
        t_store = _median_time(lambda: j.store("fp", tables), repeats=3)
        t_read = _median_time(lambda: j.read("fp"))
        tables_read, rejected = j.read("fp")
        assert len(tables_read) == len(tables) and not rejected

    plain = folder / "plain.sqlite"
    con = sqlite3.connect(plain)
    con.execute("PRAGMA journal_mode=WAL")
    con.execute("CREATE TABLE t (fingerprint TEXT, subset TEXT, n_folds INTEGER, "
                "complete INTEGER, folds TEXT, written REAL, PRIMARY KEY (fingerprint, subset))")
    def plain_store():
        # Same work as Journal.store minus the writer and checksum: encode, then insert.
        rows = [("fp", " ".join(map(str, s)), t.n_folds, int(t.complete), t.to_json(),
                 time.time()) for s, t in tables.items()]
        with con:
            con.executemany("INSERT OR REPLACE INTO t VALUES (?, ?, ?, ?, ?, ?)", rows)

    def plain_read():
        got = con.execute("SELECT subset, folds FROM t WHERE fingerprint = ?",
                          ("fp",)).fetchall()
        return {tuple(int(x) for x in s.split()): FoldTable.from_json(f) for s, f in got}

    r_store = _median_time(plain_store, repeats=3)
    r_read = _median_time(plain_read)
    con.close()
    return [
        f"| read {N_ROWS} rows ({N_FOLDS} folds) | {t_read * 1e3:.1f} ms | "
        f"{r_read * 1e3:.1f} ms | {t_read / r_read:.2f} |",
        f"| store {N_ROWS} rows | {t_store * 1e3:.1f} ms | {r_store * 1e3:.1f} ms | "
        f"{t_store / r_store:.2f} |",
    ]


def bench_run_folder(folder: Path) -> list[str]:
    files = {
        "result.json": "{" + ", ".join(f'"k{i}": {i}' for i in range(400)) + "}\n",
        "selected.csv": "feature,column\n" + "".join(f"f{i},{i}\n" for i in range(10)),
        "path.csv": "step,action\n" + "".join(f"{i},add\n" for i in range(30)),
        "report.md": "# report\n" + "text line\n" * 200,
    }
    root = folder / "runs"

    def safe():
        with RunFolder(root, "run", journal="journal.sqlite") as out:
            out.write_files(files)
            out.commit()

    plain_root = folder / "plain"
    plain_root.mkdir()

    def plain():
        for name, text in files.items():
            (plain_root / name).write_text(text, encoding="utf-8")

    t_safe = _median_time(safe, repeats=15)
    t_plain = _median_time(plain, repeats=15)
    return [f"| write one run's 4 files | {t_safe * 1e3:.2f} ms | {t_plain * 1e3:.2f} ms | "
            f"{t_safe / t_plain:.1f} |"]


def main() -> int:
    with tempfile.TemporaryDirectory() as d:
        rows = bench_journal(Path(d)) + bench_run_folder(Path(d))
    print(f"Python {sys.version.split()[0]}, {os.cpu_count()} CPUs; medians of repeats; "
          "temporary folder on the local disk.")
    print()
    print("| operation | featuresift | reference | ratio |")
    print("|---|---|---|---|")
    for r in rows:
        print(r)
    print()
    print("Reference: plain SQLite read/insert of the same rows without writer and checksum "
          "columns; `Path.write_text` of the same files (no lock, no temporary file, no "
          "fsync, no run folder). The run-folder cost is paid once per command; a search "
          "fits models for seconds to hours.")
    assert all(math.isfinite(float(r.split("|")[-2])) for r in rows)
    return 0


if __name__ == "__main__":
    sys.exit(main())
