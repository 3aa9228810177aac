"""Argument checks shared by the modules of the package (internal).

Every public function validates its arguments before any work, and its
errors name the argument, the value given and what is allowed; these
helpers keep those messages the same everywhere.
"""

from __future__ import annotations

import numbers
import operator

import numpy as np


def integer(value, name: str, *, minimum: int | None = None,
            maximum: int | None = None) -> int:
    """``value`` as a Python int, or TypeError/ValueError naming ``name``.

    Accepts Python and numpy integers, never booleans; ``minimum`` and
    ``maximum`` are inclusive bounds.
    """
    if isinstance(value, (bool, np.bool_)):
        raise TypeError(f"{name} must be an integer, got {value!r}")
    try:
        result = int(operator.index(value))
    except TypeError:
        raise TypeError(f"{name} must be an integer, got {value!r} "
                        f"({type(value).__name__})") from None
    if minimum is not None and maximum is not None:
        if not minimum <= result <= maximum:
            raise ValueError(f"{name} must be in {minimum}..{maximum}, got {result}")
    elif minimum is not None and result < minimum:
        raise ValueError(f"{name} must be >= {minimum}, got {result}")
    elif maximum is not None and result > maximum:
        raise ValueError(f"{name} must be <= {maximum}, got {result}")
    return result


def generator(rng, name: str = "rng") -> np.random.Generator:
    """A numpy Generator from ``rng``: a Generator (used as is), a
    non-negative integer seed, or None (fresh entropy)."""
    if isinstance(rng, np.random.Generator):
        return rng
    if rng is None:
        return np.random.default_rng()
    if isinstance(rng, (bool, np.bool_)) or not isinstance(rng, numbers.Integral) or rng < 0:
        raise TypeError(f"{name} must be a numpy.random.Generator, a non-negative integer "
                        f"seed or None; got {rng!r} ({type(rng).__name__})")
    return np.random.default_rng(int(rng))
