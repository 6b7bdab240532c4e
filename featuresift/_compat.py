"""Old keyword names kept as deprecated aliases of the shared vocabulary.

One concept has one name in Python and YAML (``seed``, ``costs``, ``max_time_s``...).
Earlier spellings still work for a while: :func:`renamed_keywords` moves them to their
new name with a :class:`DeprecationWarning` naming both.
"""

from __future__ import annotations

import functools
import warnings
from collections.abc import Callable
from typing import Any, TypeVar

__all__ = ["renamed_keywords", "warn_renamed"]

F = TypeVar("F", bound=Callable[..., Any])


def warn_renamed(where: str, old: str, new: str, stacklevel: int = 3) -> None:
    """The one deprecation message for an old spelling."""
    warnings.warn(f"{where}: '{old}' is deprecated; use '{new}'", DeprecationWarning,
                  stacklevel=stacklevel)


def renamed_keywords(**old_to_new: str) -> Callable[[F], F]:
    """Decorator: accept old keyword names, passing their values under the new names.

    Giving both the old and the new name is an error naming both.

    Examples
    --------
    >>> import warnings
    >>> @renamed_keywords(random_state="seed")
    ... def draw(n, seed=0):
    ...     return n, seed
    >>> with warnings.catch_warnings(record=True) as w:
    ...     warnings.simplefilter("always")
    ...     draw(2, random_state=7)
    (2, 7)
    >>> str(w[0].message)
    "draw: 'random_state' is deprecated; use 'seed'"
    """
    def decorate(func: F) -> F:
        where = func.__qualname__.replace(".__init__", "")

        @functools.wraps(func)
        def wrapper(*args: Any, **kwargs: Any) -> Any:
            for old, new in old_to_new.items():
                if old in kwargs:
                    if new in kwargs:
                        from featuresift.errors import InputError

                        raise InputError(f"give '{new}' only (its old name '{old}' was "
                                         "given too)", key=new)
                    warn_renamed(where, old, new)
                    kwargs[new] = kwargs.pop(old)
            return func(*args, **kwargs)

        return wrapper  # type: ignore[return-value]

    return decorate
