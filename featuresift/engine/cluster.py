"""Fits on a dask cluster: :func:`use_cluster` and the check of a cluster setting.

Every fit goes through joblib (:mod:`sklearn.utils.parallel`), so a dask cluster runs
them with no change to the search: inside a ``distributed.Client``,
``joblib.parallel_config(backend="dask")`` sends the evaluator's batches to the
cluster's workers. :func:`use_cluster` does exactly that for a scheduler address or
for a cluster of worker processes on this machine (the YAML ``engine.cluster`` and
``engine.workers``), with clear messages when dask's distributed scheduler is missing,
the address is malformed or the scheduler cannot be reached.

The data are sent to the workers once per run, not per batch: under a dask backend
:class:`~featuresift.engine.evaluator.CrossValidationEvaluator` broadcasts the
problem's ``X``, ``y`` and CV splits to every worker the first time it dispatches, and
each task names them; a task carries only its list of (subset, fold) items, the
unfitted model and the scorer. Answers and fold scores are those of a local run (the
same function fits the same items with the same inputs, and results are put back in
order).

Examples
--------
>>> check_cluster("tcp://10.0.0.5:8786")
('tcp://10.0.0.5:8786', None)
>>> check_cluster("10.0.0.5:8786")        # dask's default protocol is tcp
('tcp://10.0.0.5:8786', None)
>>> check_cluster("local", workers=2)
('local', 2)
>>> check_cluster("tcp://10.0.0.5:87x6")
Traceback (most recent call last):
...
featuresift.errors.InputError: cluster: the port '87x6' is not a number from 1 to 65535 \
(expected 'local' or a scheduler address such as tcp://10.0.0.5:8786)
"""

from __future__ import annotations

import logging
import re
import warnings
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from joblib import cpu_count

from featuresift.errors import InputError

__all__ = ["CONNECT_TIMEOUT_S", "LOCAL", "check_cluster", "import_distributed", "use_cluster"]

LOCAL = "local"
"""The ``cluster`` value that starts worker processes on this machine."""

SCHEMES = ("tcp", "tls")
"""Protocols of a scheduler address (dask's default, and TLS with dask's own security
settings)."""

CONNECT_TIMEOUT_S = 30.0
"""How long to try to reach a scheduler, and to wait for its first worker."""

INSTALL_HINT = 'pip install "featuresift[cluster]"'

_EXPECTED = "expected 'local' or a scheduler address such as tcp://10.0.0.5:8786"
_HOST = re.compile(r"^(\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9](?:[A-Za-z0-9.\-_]*[A-Za-z0-9])?)$")

_ACTIVE: list[tuple[str, int | None]] = []
"""Sessions opened by :func:`use_cluster` in this process (innermost last)."""


def check_cluster(cluster: Any, workers: Any = None) -> tuple[str | None, int | None]:
    """Check a cluster setting and return it normalised as ``(cluster, workers)``.

    Parameters
    ----------
    cluster : str or None
        ``"local"`` (worker processes on this machine), a scheduler address
        ``tcp://host:port`` / ``tls://host:port`` (``host:port`` means tcp), or None (no
        cluster).
    workers : int, optional
        Number of worker processes of a ``"local"`` cluster (one thread each); default
        the CPU count. Only for ``"local"``: a remote cluster's workers are started with
        ``dask worker``.

    Returns
    -------
    cluster : str or None
        ``"local"``, the address with its protocol, or None.
    workers : int or None

    Raises
    ------
    InputError
        With ``key`` "cluster" or "workers".

    Examples
    --------
    >>> check_cluster("tls://[::1]:8786")
    ('tls://[::1]:8786', None)
    >>> check_cluster("tcp://scheduler:8786", workers=4)
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: workers: applies only to cluster 'local'; the workers \
of a scheduler at an address are started there with `dask worker tcp://scheduler:8786`
    """
    if cluster is None or cluster is False:
        if workers is not None:
            raise InputError("applies only to cluster 'local' (no cluster is set)",
                             key="workers")
        return None, None
    if not isinstance(cluster, str) or not cluster.strip():
        raise InputError(f"{_EXPECTED}, got {cluster!r}", key="cluster")
    text = cluster.strip()
    if text == LOCAL:
        return LOCAL, _check_workers(workers)
    address = _check_address(text)
    if workers is not None:
        raise InputError(
            "applies only to cluster 'local'; the workers of a scheduler at an address are "
            f"started there with `dask worker {address}`", key="workers")
    return address, None


def _check_workers(workers: Any) -> int:
    if workers is None:
        return cpu_count()
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
        raise InputError(f"expected a positive number of worker processes, got {workers!r}",
                         key="workers")
    return int(workers)


def _check_address(text: str) -> str:
    scheme, sep, rest = text.partition("://")
    if not sep:
        scheme, rest = "tcp", text
    elif scheme.lower() not in SCHEMES:
        raise InputError(f"unknown protocol '{scheme}://' in {text!r}: a dask scheduler "
                         "address starts with tcp:// (or tls://)", key="cluster")
    host, colon, port = rest.rpartition(":")
    if not colon or not host:
        raise InputError(f"{_EXPECTED} (host and port), got {text!r}", key="cluster")
    if not (port.isascii() and port.isdigit() and 1 <= int(port) <= 65535):
        raise InputError(f"the port '{port}' is not a number from 1 to 65535 ({_EXPECTED})",
                         key="cluster")
    if not _HOST.match(host):
        raise InputError(f"'{host}' is not a host name or IP address ({_EXPECTED})",
                         key="cluster")
    return f"{scheme.lower()}://{host}:{int(port)}"


def import_distributed() -> Any:
    try:
        import distributed
    except ImportError:
        raise InputError("needs dask's distributed scheduler, which is not installed: "
                         f"{INSTALL_HINT}", key="cluster") from None
    return distributed


@contextmanager
def use_cluster(cluster: str | None, workers: int | None = None) -> Iterator[Any]:
    """Run the fits of every search inside the ``with`` block on a dask cluster.

    The same as ``with distributed.Client(address), joblib.parallel_config(backend=
    "dask"):`` (the YAML ``engine.cluster`` and ``engine.workers``), with the address
    checked first and clear errors. ``"local"`` starts ``workers`` worker processes on
    this machine (one thread each) and stops them at the end of the block. Nested calls
    with the same setting reuse the open cluster. Answers and fold scores are those of
    a local run; ``n_jobs`` of the search limits the concurrent tasks (None: every
    worker thread of the cluster).

    Parameters
    ----------
    cluster : str or None
        ``"local"`` or a scheduler address ``tcp://host:port`` (see
        :func:`check_cluster`); None runs as usual.
    workers : int, optional
        Worker processes of a ``"local"`` cluster (default: the CPU count).

    Yields
    ------
    distributed.Client or None

    Raises
    ------
    InputError
        The setting is malformed, dask's distributed scheduler is not installed
        (``pip install "featuresift[cluster]"``), the scheduler cannot be reached or has
        no worker within :data:`CONNECT_TIMEOUT_S` seconds.

    Examples
    --------
    >>> with use_cluster(None) as client:  # no cluster: fits run as usual
    ...     print(client)
    None
    >>> with use_cluster("tcp://10.0.0.5"):
    ...     pass
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: cluster: expected 'local' or a scheduler address such \
as tcp://10.0.0.5:8786 (host and port), got 'tcp://10.0.0.5'
    """
    cluster, workers = check_cluster(cluster, workers)
    if cluster is None or (_ACTIVE and _ACTIVE[-1] == (cluster, workers)):
        yield None
        return
    distributed = import_distributed()
    from joblib import parallel_config

    local = None
    try:
        if cluster == LOCAL:
            if workers > cpu_count():
                warnings.warn(f"workers={workers} is more than the {cpu_count()} CPUs of this "
                              "machine (more worker processes only add memory and switching)",
                              UserWarning, stacklevel=3)
            local = distributed.LocalCluster(
                n_workers=workers, threads_per_worker=1, processes=True,
                dashboard_address=":0", scheduler_kwargs={"dashboard": False},
                silence_logs=logging.ERROR)
            client = distributed.Client(local)
        else:
            client = _connect(distributed, cluster)
    except BaseException:
        if local is not None:
            local.close()
        raise
    _ACTIVE.append((cluster, workers))
    try:
        with client, parallel_config(backend="dask"):
            yield client
    finally:
        _ACTIVE.pop()
        if local is not None:
            local.close()


def _connect(distributed: Any, address: str) -> Any:
    where = (f"start it with `dask scheduler` and workers with `dask worker {address}`")
    try:
        client = distributed.Client(address, timeout=CONNECT_TIMEOUT_S)
    except (OSError, TimeoutError) as exc:
        raise InputError(f"cannot reach the dask scheduler at {address} within "
                         f"{CONNECT_TIMEOUT_S:g} s ({type(exc).__name__}: {exc}); {where}",
                         key="cluster") from None
    if not client.ncores():
        try:
            client.wait_for_workers(1, timeout=CONNECT_TIMEOUT_S)
        except (OSError, TimeoutError):
            client.close()
            raise InputError(f"the dask scheduler at {address} has no worker after "
                             f"{CONNECT_TIMEOUT_S:g} s; start them with "
                             f"`dask worker {address}`", key="cluster") from None
    return client
