"""Validation of strategy options (errors name the option and what it got)."""

from __future__ import annotations

from featuresift.errors import InputError

__all__ = ["check_int", "check_fraction"]


def check_int(value: object, name: str, minimum: int = 1) -> int:
    """``value`` if it is an int >= ``minimum``, else :class:`InputError`."""
    if isinstance(value, bool) or not isinstance(value, int) or value < minimum:
        raise InputError(f"{name} must be an integer >= {minimum}, got {value!r}")
    return value


def check_fraction(value: object, name: str, *, open_low: bool = True,
                   open_high: bool = True) -> float:
    """``value`` as a float in the unit interval (ends open or closed as asked)."""
    ok = isinstance(value, (int, float)) and not isinstance(value, bool)
    if ok:
        ok = (value > 0 if open_low else value >= 0) and (value < 1 if open_high else value <= 1)
    if not ok:
        interval = ("(" if open_low else "[") + "0, 1" + (")" if open_high else "]")
        raise InputError(f"{name} must be a number in {interval}, got {value!r}")
    return float(value)
