"""One set of input checks: each returns the checked value or raises a one-line InputError.

A leaf module.  Every message names the key and what would be valid (the project's rule for
bad input); ``error`` chooses the subclass (:class:`~relbasis.errors.ConfigError` for config
keys).  A bool is never accepted as a number (``True`` is an int in Python).
"""

from __future__ import annotations

import difflib
import math
import numbers

from .errors import InputError


def suggest(word, options, cutoff: float = 0.5) -> str:
    """`` (did you mean 'x'?)`` for the closest of ``options`` to ``word`` (difflib's ratio >=
    ``cutoff``), or ''."""
    close = difflib.get_close_matches(str(word), [str(o) for o in options], n=1, cutoff=cutoff)
    return f" (did you mean {close[0]!r}?)" if close else ""


def is_real(value) -> bool:
    """True for an int or float (numpy scalars included), not for a bool."""
    return not isinstance(value, bool) and isinstance(value, numbers.Real)


def real(key: str, value, *, positive: bool = True, error=InputError) -> float:
    """A finite float (> 0 when ``positive``)."""
    if not is_real(value):
        raise error(f"{key} = {value!r}: must be a number")
    value = float(value)
    if not math.isfinite(value) or (positive and value <= 0):
        raise error(f"{key} = {value!r}: must be a finite number{' > 0' if positive else ''}")
    return value


def within(key: str, value: float, lo: float, hi: float, unit: str = "", why: str = "", *,
           lo_open: bool = False, hi_open: bool = False, error=InputError) -> float:
    """value if lo <= value <= hi (strict where open), else a one-line error with the range."""
    low_ok = value > lo if lo_open else value >= lo
    high_ok = value < hi if hi_open else value <= hi
    if not (low_ok and high_ok):
        name = key.rpartition(".")[2].rstrip("[]")
        rng = f"{lo:g} {'<' if lo_open else '<='} {name} {'<' if hi_open else '<='} {hi:g}{' ' + unit if unit else ''}"
        raise error(f"{key} = {value:g}: valid {rng}{' (' + why + ')' if why else ''}")
    return value


def integer(key: str, value, minimum: int, *, error=InputError) -> int:
    """An int >= minimum (a float with an integer value is accepted)."""
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        else:
            raise error(f"{key} = {value!r}: must be an integer >= {minimum}")
    if value < minimum:
        raise error(f"{key} = {value!r}: must be an integer >= {minimum}")
    return int(value)


def items(key: str, value, *, error=InputError) -> tuple:
    """A tuple of the items of ``value``: one string counts as one item, a non-iterable is refused."""
    if isinstance(value, str):
        return (value,)
    try:
        return tuple(value)
    except TypeError:
        raise error(f"{key} = {value!r}: give a list or tuple") from None


def choice(key: str, value, options, *, error=InputError) -> str:
    """One of the strings ``options``, with a "did you mean" for a near miss."""
    if not isinstance(value, str) or value not in options:
        raise error(f"{key} = {value!r}: valid are {', '.join(repr(o) for o in options)}{suggest(value, options)}")
    return value
