"""Argument checks shared by the modules of the package (internal).

Every public function validates its arguments before any work, and its
errors name the argument, the value given and what is allowed; these
helpers keep those messages the same everywhere.
"""

from __future__ import annotations

import math
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


def real(value, name: str, *, minimum=None, below=None, allow_equal_min=True) -> float:
    """``value`` as a finite Python float, or TypeError/ValueError naming ``name``.

    Accepts Python and numpy reals, never booleans; ``minimum`` is an
    inclusive bound (exclusive with ``allow_equal_min=False``) and
    ``below`` an exclusive upper bound.
    """
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a real number; got {value!r} "
                        f"({type(value).__name__})")
    result = float(value)
    if not math.isfinite(result):
        raise ValueError(f"{name} must be finite; got {value!r}")
    if minimum is not None and (result < minimum or (result == minimum and not allow_equal_min)):
        relation = ">=" if allow_equal_min else ">"
        raise ValueError(f"{name}={value!r} is not allowed; need {name} {relation} {minimum:g}")
    if below is not None and not result < below:
        raise ValueError(f"{name}={value!r} is not allowed; need {name} < {below:g}")
    return result


def plan_of(target, name: str = "target"):
    """``(plan, oversampling)`` of a CarrierPlan (oversampling 1) or of a
    waveform with ``plan`` and ``fft_size`` attributes (its FFT size over
    the plan's), or TypeError/ValueError naming ``name``."""
    from .plan import CarrierPlan    # plan.py imports this module

    if isinstance(target, CarrierPlan):
        return target, 1
    if hasattr(target, "plan") and hasattr(target, "fft_size") \
            and isinstance(target.plan, CarrierPlan):
        plan = target.plan
        size = integer(target.fft_size, f"{name}.fft_size", minimum=1)
        oversampling, rest = divmod(size, plan.n_fft)
        if rest or oversampling < 1:
            raise ValueError(f"{name}.fft_size={size} is not a multiple of the plan's "
                             f"n_fft={plan.n_fft}")
        return plan, oversampling
    raise TypeError(f"{name} must be a tonebank.CarrierPlan or a waveform with plan and "
                    f"fft_size; got {type(target).__name__}")


def real_array(value, name: str) -> np.ndarray:
    """``value`` as a float64 array of finite reals, or TypeError/ValueError naming ``name``."""
    arr = np.asarray(value)
    if arr.dtype.kind not in "biuf":
        raise TypeError(f"{name} must hold real numbers, got dtype {arr.dtype}")
    arr = arr.astype(np.float64)
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite everywhere (no NaN or infinity)")
    return arr


def choice(value, name: str, allowed: tuple) -> str:
    """``value`` if it is one of the strings ``allowed``, else ValueError naming ``name``."""
    if not isinstance(value, str) or value not in allowed:
        raise ValueError(f"{name}={value!r} is not allowed; use one of {allowed}")
    return value
