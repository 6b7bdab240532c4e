"""Run every benchmark script in this folder and refresh benchmarks/README.md.

Usage::

    python benchmarks/run_all.py            # every bench_*.py
    python benchmarks/run_all.py engine     # only bench_engine.py
    python benchmarks/run_all.py --dry-run  # list what would run

Each ``bench_<name>.py`` is run, one after the other (never two at once: they would
share the cores and distort each other's timings), with this interpreter. What it
prints on standard output replaces the README block between the two lines

    <!-- BEGIN bench_<name>.py -->
    <!-- END bench_<name>.py -->

A script whose block is missing from the README gets a new section at the end
(heading ``## bench_<name>.py (latest output)``), so nothing written by hand is
overwritten. A script that fails leaves its block unchanged; the exit status is then 1.
"""

from __future__ import annotations

import argparse
import re
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
README = HERE / "README.md"


def _markers(script: str) -> tuple[str, str]:
    return f"<!-- BEGIN {script} -->", f"<!-- END {script} -->"


def replace_block(text: str, script: str, body: str) -> str:
    """Put ``body`` between the script's markers in ``text`` (append a section if absent).

    Examples
    --------
    >>> doc = "# B\\n<!-- BEGIN bench_x.py -->\\nold\\n<!-- END bench_x.py -->\\nend\\n"
    >>> replace_block(doc, "bench_x.py", "new")
    '# B\\n<!-- BEGIN bench_x.py -->\\nnew\\n<!-- END bench_x.py -->\\nend\\n'
    """
    begin, end = _markers(script)
    block = f"{begin}\n{body.strip()}\n{end}"
    pattern = re.compile(re.escape(begin) + r".*?" + re.escape(end), re.DOTALL)
    if pattern.search(text):
        return pattern.sub(lambda _: block, text, count=1)
    return text.rstrip("\n") + f"\n\n## {script} (latest output)\n\n{block}\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("names", nargs="*", help="benchmark names (bench_<name>.py); default all")
    ap.add_argument("--dry-run", action="store_true")
    args = ap.parse_args(argv)
    scripts = sorted(HERE.glob("bench_*.py"))
    if args.names:
        wanted = {f"bench_{n.removeprefix('bench_').removesuffix('.py')}.py" for n in args.names}
        unknown = wanted - {s.name for s in scripts}
        if unknown:
            print(f"no such benchmark: {', '.join(sorted(unknown))}", file=sys.stderr)
            return 2
        scripts = [s for s in scripts if s.name in wanted]
    status = 0
    for script in scripts:
        if args.dry_run:
            print(script.name)
            continue
        print(f"running {script.name} ...", file=sys.stderr, flush=True)
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, str(script)], cwd=HERE.parent,
                              capture_output=True, text=True)
        took = time.perf_counter() - t0
        if proc.returncode != 0:
            print(f"{script.name} failed (exit {proc.returncode}) after {took:.0f} s:\n"
                  f"{proc.stderr[-2000:]}", file=sys.stderr)
            status = 1
            continue
        text = README.read_text(encoding="utf-8") if README.exists() else "# Benchmarks\n"
        README.write_text(replace_block(text, script.name, proc.stdout), encoding="utf-8")
        print(f"{script.name}: {took:.0f} s, README updated", file=sys.stderr)
    return status


if __name__ == "__main__":
    sys.exit(main())
