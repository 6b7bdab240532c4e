"""What a configuration may make the program do: which code it may load, which files.

A config is data. It names an estimator class by dotted path; the class must come from
scikit-learn or from a module trusted from *outside* the config: the command-line flag
``--trust-module NAME`` (repeatable), the ``trusted_modules`` argument of
:func:`~featuresift.config.load_config`, or the environment variable
:data:`TRUST_ENV` (comma-separated names). The YAML key ``model.trusted_modules`` is
refused: a file cannot vouch for itself.

Modules are imported without the working directory or the config's folder on the
import path (``python -m featuresift`` puts the working directory first on
``sys.path``; that entry is set aside while importing), so a ``.py`` file dropped next to
a config is never imported. Estimator parameters that make scikit-learn (or a trusted
package) read or write files, such as ``memory`` (a joblib cache of pickles, on
``Pipeline``, ``FeatureAgglomeration``, ``AgglomerativeClustering``...), are refused at
any depth of the estimator.
"""

from __future__ import annotations

import contextlib
import importlib
import os
import re
import sys
from collections.abc import Iterable, Iterator
from pathlib import Path
from typing import Any

from featuresift.errors import InputError

__all__ = ["TRUST_ENV", "trusted_module_names", "import_trusted", "file_parameters"]

TRUST_ENV = "FEATURESIFT_TRUSTED_MODULES"
"""Environment variable naming trusted modules (comma-separated)."""

_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*(\.[A-Za-z_][A-Za-z0-9_]*)*$")

# Parameter names that point estimators at files or folders: joblib's ``memory`` cache
# (pickles written, then loaded back) and the usual spellings of caches, folders and
# files in scikit-learn-compatible packages.
_FILE_PARAM = re.compile(
    r"^(memory|.*cache.*|.*_dir|.*_path|.*_file|.*folder.*|.*filename.*|location)$"
)


def trusted_module_names(given: Iterable[str] | None = None) -> tuple[str, ...]:
    """Trusted module names from the caller (command line, Python) and :data:`TRUST_ENV`.

    Examples
    --------
    >>> import os
    >>> os.environ[TRUST_ENV] = "labmodels, xgboost"
    >>> trusted_module_names(["mylab"])
    ('mylab', 'labmodels', 'xgboost')
    >>> del os.environ[TRUST_ENV]
    """
    names: list[str] = []
    sources = [("--trust-module", list(given or ()))]
    sources.append((TRUST_ENV, [p for p in os.environ.get(TRUST_ENV, "").split(",")]))
    for where, items in sources:
        for item in items:
            name = str(item).strip()
            if not name and where == TRUST_ENV:
                continue
            if not _NAME.match(name):
                raise InputError(f"{where}: '{name}' is not a module name (e.g. mylab.models)")
            if name not in names:
                names.append(name)
    return tuple(names)


def is_trusted(dotted: str, trusted: Iterable[str]) -> bool:
    """Whether ``dotted`` is inside scikit-learn or inside one of the trusted modules."""
    return any(dotted == t or dotted.startswith(t + ".") for t in ("sklearn", *trusted))


@contextlib.contextmanager
def _without_implicit_paths() -> Iterator[None]:
    """Set aside the import-path entries Python adds for the working directory.

    ``python -m`` and ``python -c`` put the working directory (or ``''``) first on
    ``sys.path``; folders the user put on ``PYTHONPATH`` or installed packages stay.
    """
    saved = list(sys.path)
    cwd = os.path.realpath(os.getcwd())
    # An empty or "." entry in PYTHONPATH (``PYTHONPATH=/x:$PYTHONPATH`` with the
    # variable unset) is turned into the working directory at start-up: an accident,
    # not a choice, so it is set aside too. Explicit absolute folders stay.
    env_entries = os.environ.get("PYTHONPATH", "").split(os.pathsep)
    relative_in_env = "PYTHONPATH" in os.environ and any(e in ("", ".") for e in env_entries)
    explicit = {os.path.realpath(e) for e in env_entries if e not in ("", ".")}

    def implicit(i: int, entry: str) -> bool:
        if entry in ("", "."):
            return True
        if os.path.realpath(entry) != cwd:
            return False
        return i == 0 or (relative_in_env and cwd not in explicit)

    sys.path[:] = [e for i, e in enumerate(saved) if not implicit(i, e)]
    try:
        yield
    finally:
        sys.path[:] = saved


def import_trusted(module_name: str, config_dir: Path | None = None) -> Any:
    """Import ``module_name`` with the working directory off the import path.

    A module that would come from the config's folder is refused as well.

    Raises
    ------
    ImportError
        When the module cannot be found that way (or lives in ``config_dir``).
    """
    with _without_implicit_paths():
        module = importlib.import_module(module_name)
    origin = getattr(module, "__file__", None)
    if config_dir is not None and origin is not None:
        folder = Path(origin).resolve().parent
        if folder == Path(config_dir).resolve():
            raise ImportError(f"'{module_name}' lives in the config's own folder")
    return module


def file_parameters(params: dict[str, Any]) -> list[tuple[str, Any]]:
    """The parameters (``get_params(deep=True)`` names) that point at files or caches.

    Numbers, booleans and None are harmless (``cache_size=200`` is memory in MB).

    Examples
    --------
    >>> from sklearn.pipeline import make_pipeline
    >>> from sklearn.preprocessing import StandardScaler
    >>> pipe = make_pipeline(StandardScaler(), memory="/tmp/cache")
    >>> file_parameters(pipe.get_params(deep=True))
    [('memory', '/tmp/cache')]
    """
    found = []
    for name, value in params.items():
        last = name.rsplit("__", 1)[-1]
        if not _FILE_PARAM.match(last):
            continue
        if value is None or isinstance(value, (bool, int, float)):
            continue
        found.append((name, value))
    return found
