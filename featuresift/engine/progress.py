"""Progress bars for long evaluations (tqdm, notebook-aware), silent by default.

``verbose=0`` never shows a bar. ``verbose=1`` shows one only in an interactive
session — a terminal on standard error, or a Jupyter kernel — so logs of batch jobs
stay free of bar updates. ``verbose>=2`` forces the bar on. Bars appear only for
batches that take longer than half a second and disappear when the batch ends.
"""

from __future__ import annotations

import sys
from typing import Any

__all__ = ["make_progress", "interactive"]


def interactive() -> bool:
    """True inside a Jupyter kernel or when standard error is a terminal."""
    if "ipykernel" in sys.modules:
        return True
    stream = sys.stderr
    try:
        return bool(stream is not None and stream.isatty())
    except (AttributeError, ValueError):
        return False


class _Silent:
    """Stand-in with the few tqdm methods the evaluator uses; does nothing."""

    def update(self, n: int = 1) -> None:
        pass

    def set_postfix_str(self, s: str = "", refresh: bool = True) -> None:
        pass

    def close(self) -> None:
        pass

    def __enter__(self) -> _Silent:
        return self

    def __exit__(self, *exc: Any) -> None:
        pass


def make_progress(total: int, verbose: int, desc: str) -> Any:
    """A progress bar for ``total`` steps, or a silent stand-in.

    Parameters
    ----------
    total : int
        Number of steps (fits) expected.
    verbose : int
        0: never; 1: only when :func:`interactive`; 2 or more: always.
    desc : str
        Label shown before the bar.

    Examples
    --------
    >>> bar = make_progress(10, verbose=0, desc="fits")
    >>> bar.update(3); bar.close()
    """
    if verbose <= 0 or (verbose == 1 and not interactive()):
        return _Silent()
    from tqdm.auto import tqdm

    return tqdm(total=total, desc=desc, unit="fit", leave=False, delay=0.5, dynamic_ncols=True)
