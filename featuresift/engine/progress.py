"""Progress a person can follow: one bar per search (tqdm, notebook-aware).

:class:`SearchProgress` is what :func:`featuresift.run_search` shows: **one bar for the
whole search** with the subsets evaluated, the current step, the best score so far and
the time left (when the search has a known size: an evaluation limit, or a strategy
that says how many subsets it will evaluate, exactly, at most or about (:class:`Expected`;
"up to 12 s left", "about 12 s left", and no number once an estimate is passed); with a
time limit, the time left of it).

* ``verbose=0``: nothing.
* ``verbose=1``: in a Jupyter kernel or on a terminal (standard error), the bar
  (``tqdm.auto``: a widget in a notebook with ipywidgets, else the text bar); when
  standard error is piped to a file or a log, one quiet line per search step instead.
* ``verbose>=2``: the bar, always.

:func:`make_progress` is the per-batch bar of the evaluator used on its own.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

__all__ = ["make_progress", "interactive", "SearchProgress", "OuterProgress", "Expected"]

_KINDS = ("exact", "at most", "about")


@dataclass(frozen=True)
class Expected:
    """How many subsets a search will evaluate, and how sure that number is.

    A strategy's ``expected_evaluations(space)`` returns one (a bare int means exact);
    the progress display words the time left accordingly.

    Parameters
    ----------
    n : int
        The number of distinct subsets.
    kind : {"exact", "at most", "about"}, default="exact"
        ``"exact"``: the search evaluates exactly ``n``; ``"at most"``: an upper bound;
        ``"about"``: an estimate that can be wrong either way.
    subsets : frozenset of tuple of int, optional
        The subsets themselves when known (an enumeration): the driver then counts the
        reference subsets not among them exactly.

    Examples
    --------
    >>> Expected(40, "about")
    Expected(n=40, kind='about', subsets=None)
    """

    n: int
    kind: str = "exact"
    subsets: frozenset | None = field(default=None, repr=True)

    def __post_init__(self) -> None:
        if self.kind not in _KINDS:
            raise ValueError(f"kind must be one of {_KINDS}, got {self.kind!r}")


def interactive() -> bool:
    """True inside a Jupyter kernel or when standard error is a terminal."""
    if "ipykernel" in sys.modules:  # imported is not enough: a kernel must be running
        try:
            from IPython import get_ipython

            if getattr(get_ipython(), "kernel", None) is not None:
                return True
        except Exception:  # noqa: BLE001 - no usable IPython: judge by the terminal
            pass
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


def _tqdm() -> Any:
    """tqdm's notebook widget when ipywidgets can draw it, else its text bar.

    ``tqdm.auto`` in a notebook without ipywidgets warns "IProgress not found" before it
    falls back to the text bar; the text bar is chosen here without the warning.
    """
    import importlib.util

    if importlib.util.find_spec("ipywidgets") is None:
        from tqdm.std import tqdm
    else:
        from tqdm.auto import tqdm
    return tqdm


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
    return _tqdm()(total=total, desc=desc, unit="fit", leave=False, delay=0.5,
                   dynamic_ncols=True)


def _open_display(verbose: int, interactive_session: bool | None, total: int | None,
                  desc: str, unit: str) -> tuple[str, Any]:
    """The display mode ("off", "bar" or "lines") and the tqdm bar of the "bar" mode."""
    live = interactive() if interactive_session is None else interactive_session
    mode = "off" if verbose <= 0 else "bar" if verbose >= 2 or live else "lines"
    if mode != "bar":
        return mode, None
    return mode, _tqdm()(total=total, desc=desc, unit=unit, dynamic_ncols=True, leave=True)


class SearchProgress:
    """One progress display for a whole search.

    Parameters
    ----------
    verbose : int
        0: off; 1: a bar when interactive, else one line per step; 2 or more: a bar.
    total : int or Expected, optional
        Subsets the search will evaluate, when known (gives the time left): an int is
        exact; an :class:`Expected` says whether it is exact, an upper bound ("up to
        N s left") or an estimate ("about N s left"; past it, the time left is unknown).
    max_time_s : float, optional
        The search's time limit (gives the time left when ``total`` is unknown).
    desc : str
        Label (the strategy's name).
    stream : file-like, optional
        Where the step lines go (default standard error).

    Examples
    --------
    >>> import io
    >>> out = io.StringIO()
    >>> bar = SearchProgress(1, desc="forward", stream=out, interactive_session=False)
    >>> bar.evaluated(6, 0.91)
    >>> bar.step(0, "add", "ph", 6)
    >>> bar.close()
    >>> print(out.getvalue().split(" — ")[0])
    forward step 0: add ph
    """

    def __init__(self, verbose: int, total: int | None = None,
                 max_time_s: float | None = None, desc: str = "search",
                 stream: Any = None, interactive_session: bool | None = None) -> None:
        import time

        self.verbose = int(verbose)
        if isinstance(total, Expected):
            self.total, self.kind = total.n, total.kind
        else:
            self.total, self.kind = total, "exact"
        self.max_time_s = max_time_s
        self.desc = desc
        self.stream = stream if stream is not None else sys.stderr
        self.n = 0
        self.best: float | None = None
        self.last = ""
        self._t0 = time.perf_counter()
        self.mode, self._bar = _open_display(self.verbose, interactive_session, self.total,
                                             desc, "subset")

    def _elapsed(self) -> float:
        import time

        return time.perf_counter() - self._t0

    def expect(self, n: int, kind: str = "about") -> None:
        """Replace the expected number of subsets (a strategy's new estimate)."""
        Expected(n, kind)  # checks the kind
        self.total, self.kind = int(n), kind
        if self._bar is not None:
            self._bar.total = max(self.total, self.n)
            self._bar.refresh()

    def _left(self) -> str:
        elapsed = self._elapsed()
        if self.total and self.n and self.kind != "exact" and self.n >= self.total:
            # Past an estimate or a bound: any number would be a guess known to be wrong.
            what = "estimate" if self.kind == "about" else "bound"
            return f"time left unknown (past the {what} of {self.total} subsets)"
        if self.total and self.n:
            left = f"{elapsed / self.n * max(self.total - self.n, 0):.0f} s left"
            return {"exact": left, "at most": "up to " + left, "about": "about " + left}[
                self.kind]
        if self.max_time_s is not None:
            return f"at most {max(self.max_time_s - elapsed, 0):.0f} s left"
        return "time left unknown"

    def _postfix(self) -> str:
        best = "-" if self.best is None else f"{self.best:.4f}"
        size = "" if self.kind == "exact" or not self.total else \
            f", {self.kind} {self.total} subsets in all"
        return f"{self.last} best {best} in-search{size}"

    def evaluated(self, n_evaluations: int, best: float | None) -> None:
        """Record the subsets evaluated so far and the best score so far."""
        if self.mode == "off":
            return
        grew = n_evaluations - self.n
        self.n = n_evaluations
        if best is not None and (self.best is None or best > self.best):
            self.best = best
        if self._bar is not None and grew > 0:
            if self.kind != "exact" and self._bar.total is not None \
                    and self.n > self._bar.total:
                self._bar.total = self.n  # past an estimate: the bar shows the count
            self._bar.update(grew)
            self._bar.set_postfix_str(self._postfix(), refresh=False)

    def step(self, step: int, action: str, feature: str | None, n_features: int) -> None:
        """Record a search step (a line of the quiet log when output is piped)."""
        if self.mode == "off":
            return
        self.last = f"step {step}: {action}{' ' + feature if feature else ''} ({n_features})"
        if self._bar is not None:
            self._bar.set_postfix_str(self._postfix())
        elif self.mode == "lines":
            best = "-" if self.best is None else f"{self.best:.4f}"
            print(f"{self.desc} step {step}: {action}{' ' + feature if feature else ''} — "
                  f"{n_features} measurement(s), {self.n} subsets evaluated, best {best} "
                  f"in-search, {self._elapsed():.1f} s, {self._left()}",
                  file=self.stream, flush=True)

    def close(self) -> None:
        """Finish the display (an estimated total becomes the count done)."""
        if self._bar is not None:
            if self.kind != "exact" and self.n:  # done: the count is now exact
                self.total, self.kind = self.n, "exact"
                self._bar.total = self.n
                self._bar.set_postfix_str(self._postfix(), refresh=False)
            self._bar.close()
            self._bar = None


class OuterProgress:
    """Progress of work done one outer search at a time (nested CV, the noise guard).

    One bar in a terminal or notebook; when standard error is piped, one quiet line per
    outer search done; nothing at ``verbose=0``. The outer searches themselves run
    without their own display.

    Parameters
    ----------
    verbose : int
        0: off; 1: a bar when interactive, else lines; 2: always a bar.
    total : int
        Number of outer searches.
    desc : str, default="nested CV"
        What the work is, shown first ("noise guard" for the guard).
    stream : file-like, optional
        Where lines go (default: standard error).
    interactive_session : bool, optional
        Force the bar (True) or lines (False) instead of detecting the session.

    Examples
    --------
    >>> import io
    >>> out = io.StringIO()
    >>> bar = OuterProgress(1, total=5, desc="noise guard", stream=out,
    ...                     interactive_session=False)
    >>> bar.done(["protein", "moisture"], 0.8731)
    >>> bar.close()
    >>> print(out.getvalue().split(", ")[0])
    noise guard: outer search 1 of 5 done — 2 measurement(s)
    """

    def __init__(self, verbose: int, total: int, desc: str = "nested CV",
                 stream: Any = None, interactive_session: bool | None = None) -> None:
        import time

        self.verbose = int(verbose)
        self.total = int(total)
        self.desc = desc
        self.stream = stream if stream is not None else sys.stderr
        self.n = 0
        self._t0 = time.perf_counter()
        self.mode, self._bar = _open_display(self.verbose, interactive_session, self.total,
                                             desc, "outer search")

    def done(self, selected: Sequence[str], outer_score: float) -> None:
        """Record one finished outer search: its answer and its outer-fold score."""
        import time

        if self.mode == "off":
            return
        self.n += 1
        elapsed = time.perf_counter() - self._t0
        left = elapsed / self.n * max(self.total - self.n, 0)
        text = (f"{len(selected)} measurement(s), outer score {outer_score:.4f} "
                "(nested)")
        if self._bar is not None:
            self._bar.update(1)
            self._bar.set_postfix_str(text)
        else:
            print(f"{self.desc}: outer search {self.n} of {self.total} done — {text}, "
                  f"{elapsed:.1f} s, {left:.0f} s left", file=self.stream, flush=True)

    def close(self) -> None:
        """Finish the display."""
        if self._bar is not None:
            self._bar.close()
            self._bar = None
