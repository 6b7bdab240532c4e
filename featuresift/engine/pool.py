"""When to use worker processes: small work runs in-process, the pool starts when it pays.

Starting joblib's worker processes costs a second or two on a small machine (each
worker starts Python and imports NumPy, SciPy and scikit-learn), and every parallel
call costs some milliseconds more. A forward selection on a few hundred samples does
a few seconds of fitting in all, so paying that start-up can make ``n_jobs=2`` slower
than ``n_jobs=1``. :class:`PoolPolicy` decides, before each part of a batch, whether to
fit in this process (one BLAS thread, no joblib call) or in the pool:

* with one effective worker, always in-process;
* the first part of every batch (one joblib task's worth) runs in-process, which
  measures the current in-process time per fit;
* the pool is used for the rest of a batch when that work (fits left x measured fit
  time) is at least :data:`MIN_POOL_SECONDS`, the pool is running, and the pool's own
  measured wall time per fit is lower than in-process (on a machine whose cores are
  busy with other jobs it may not be; the pool is tried again now and then);
* with joblib's default process backend (loky), a pool that is not running yet is
  started **in the background** the first time a batch is worth its start-up (at least
  :data:`MIN_START_SECONDS` of estimated CPU time of fits left in the batch) and the
  machine has an idle core for it (1-minute load average below the CPU count minus
  one half: on a busy machine workers only take CPU from the fits), while this process
  goes on fitting: the workers' start-up then overlaps with useful work instead of
  adding to it, and a batch switches to the pool as soon as it is up. The pool is
  joblib's reusable executor: it lives on for the next batches, searches and
  evaluators of the session;
* with another backend chosen by the user (``joblib.parallel_config``: threads, dask...)
  work worth :data:`MIN_POOL_SECONDS` goes to that backend, the rest stays in-process.

The decision never changes a result: the same function fits the same (subset, fold)
items with the same inputs wherever it runs, and results are put back in order.
``mode="always"`` sends every batch to joblib (the behaviour before this policy);
``mode="never"`` keeps everything in-process.

Examples
--------
>>> policy = PoolPolicy("auto")
>>> policy.use_pool(n_items=100, n_jobs=1)       # one worker: in-process
False
>>> policy.use_pool(n_items=100, n_jobs=2)       # no fit time measured yet: in-process
False
>>> PoolPolicy("always").use_pool(n_items=1, n_jobs=2)
True
"""

from __future__ import annotations

import os
import threading
from typing import Any

from joblib import cpu_count, effective_n_jobs

__all__ = ["MIN_POOL_SECONDS", "MIN_START_SECONDS", "POOL_MODES", "PoolPolicy"]

POOL_MODES = ("auto", "always", "never")

MIN_POOL_SECONDS = 0.25
"""Smallest estimated in-process work (seconds) worth a parallel call on a running pool."""

MIN_START_SECONDS = 2.0
"""Smallest estimated in-process work (seconds) left in a batch worth starting worker
processes for. Starting two workers costs each of them a second or two of CPU (Python,
NumPy, SciPy, scikit-learn imports): on a machine whose cores are busy that CPU is taken
from the fits, and a search of small batches (breast-cancer forward selection: under a
second of fitting per batch) was measured slower with ``n_jobs=2`` than with ``n_jobs=1``
(55 s against 43 s wall at load average 6). Measured in CPU time: wall time per fit
grows with the machine's load, CPU time hardly."""


def _idle_core() -> bool:
    """Whether the machine seems to have a core free for a worker (load average below
    the CPU count minus one half; True where the load average is not available)."""
    try:
        load = os.getloadavg()[0]
    except (AttributeError, OSError):
        return True
    return load < cpu_count() - 0.5

_LOCK = threading.Lock()
_WARM: dict[int, threading.Event] = {}
"""Background start-ups of loky pools in this process, by number of workers."""


def _touch(*_: Any) -> None:
    """Task run by each worker at start-up: importing this module's package warms the
    worker (the arguments' classes are unpickled, which imports their modules)."""
    import featuresift.engine.evaluator  # noqa: F401


def _start_pool(n_workers: int, warm_with: tuple) -> None:
    from sklearn.utils.parallel import Parallel, delayed

    try:
        Parallel(n_jobs=n_workers, backend="loky")(
            delayed(_touch)(*warm_with) for _ in range(2 * n_workers))
    except Exception:  # noqa: BLE001 - the main thread's own call will report problems
        pass
    finally:
        _WARM[n_workers].set()


def _default_backend() -> bool:
    """Whether joblib would use its default process backend (loky) here."""
    try:
        from joblib.parallel import get_active_backend

        backend, _ = get_active_backend()
    except Exception:  # noqa: BLE001
        return False
    return type(backend).__name__ == "LokyBackend"


class PoolPolicy:
    """Per-evaluator decision between in-process fits and the worker pool.

    Parameters
    ----------
    mode : {"auto", "always", "never"}, default="auto"
    warm_with : tuple, optional
        Objects sent to each worker when a pool is started in the background (their
        classes' modules are imported there), e.g. the estimator.

    Attributes
    ----------
    fit_seconds, fit_cpu : float or None
        Running estimates of the wall and CPU time of one fit in this process.
    pool_seconds : float or None
        Running estimate of the pool's wall time per fit.
    n_in_process, n_in_pool : int
        Fits run in each place so far.
    """

    def __init__(self, mode: str = "auto", warm_with: tuple = ()) -> None:
        if mode not in POOL_MODES:
            raise ValueError(f"pool must be one of {POOL_MODES}, got {mode!r}")
        self.mode = mode
        self.warm_with = warm_with
        self.fit_seconds: float | None = None
        self.fit_cpu: float | None = None
        self.pool_seconds: float | None = None
        self._declined = 0
        self.n_in_process = 0
        self.n_in_pool = 0

    def observe(self, n_items: int, seconds: float, cpu_seconds: float | None = None) -> None:
        """Record ``n_items`` fits that took ``seconds`` (wall) and ``cpu_seconds`` (CPU
        time; the wall time when not given) in this process."""
        if n_items <= 0:
            return
        per = seconds / n_items
        self.fit_seconds = per if self.fit_seconds is None else 0.5 * (self.fit_seconds + per)
        cpu = per if cpu_seconds is None else cpu_seconds / n_items
        self.fit_cpu = cpu if self.fit_cpu is None else 0.5 * (self.fit_cpu + cpu)
        self.n_in_process += n_items

    def observe_pool(self, n_items: int, seconds: float) -> None:
        """Record ``n_items`` fits that took ``seconds`` of wall time in the pool."""
        if n_items <= 0:
            return
        per = seconds / n_items
        self.pool_seconds = per if self.pool_seconds is None else 0.5 * (self.pool_seconds + per)
        self.n_in_pool += n_items

    def use_pool(self, n_items: int, n_jobs: int | None, first: bool = False) -> bool:
        """Whether the next ``n_items`` fits should go to joblib.

        ``first`` marks the first part of a batch, which runs in-process in "auto" mode.
        """
        if self.mode != "auto":
            return self.mode == "always"
        workers = effective_n_jobs(n_jobs)
        if first or workers <= 1 or self.fit_seconds is None:
            return False
        if n_items * self.fit_seconds < MIN_POOL_SECONDS:
            return False
        if self.pool_seconds is not None and self.pool_seconds >= 0.95 * self.fit_seconds:
            self._declined += 1
            if self._declined % 8:
                return False  # the pool has not been faster; try it again now and then
        if not _default_backend():
            return True
        with _LOCK:
            event = _WARM.get(workers)
            if event is None:
                if n_items * self.fit_cpu < MIN_START_SECONDS or not _idle_core():
                    return False  # not worth the workers' start-up, or no core for them
                event = _WARM[workers] = threading.Event()
                threading.Thread(target=_start_pool, args=(workers, self.warm_with),
                                 name="featuresift-pool-start", daemon=True).start()
        return event.is_set()

    def may_switch(self, n_jobs: int | None) -> bool:
        """Whether a later part of the current batch could still go to the pool: only
        while workers are starting in the background (the remaining work only shrinks,
        so the other reasons to stay in-process hold for the rest of the batch)."""
        workers = effective_n_jobs(n_jobs)
        if self.mode != "auto" or workers <= 1:
            return self.mode == "always"
        event = _WARM.get(workers)
        return event is not None and not event.is_set()

    def describe(self) -> dict[str, Any]:
        """Counters for ``stats()``."""
        return {"mode": self.mode, "fits_in_process": self.n_in_process,
                "fits_in_pool": self.n_in_pool}
