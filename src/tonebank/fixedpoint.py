r"""Fixed-point FFTs in Q15 and Q31 with rounding, saturation and scaling schedules.

What a firmware port computes, bit for bit: the C kernel and the numpy
integer model (``tonebank._kernel``) return identical integers.

Formats.  A value ``v`` in Q15 is the int16 ``round(v * 2**15)``
(``-1 <= v < 1``); in Q31 the int32 ``round(v * 2**31)``.  Complex arrays
are stored as integer pairs along a last axis of length 2, ``(..., n, 2)``
= (re, im), as a firmware buffer interleaves them.  Products and sums run
in 32 bits for Q15 and 64 bits for Q31.

The transform.  Radix 2, decimation in time (input in bit-reversed order,
output in natural order), ``log2 n`` stages; the module of the integer
model states the butterfly exactly.  Each stage may shift its outputs
right (divide by 2 per bit, with rounding) before they are saturated to
the format; the *schedule* says by how much:

``"halve"``
    one bit at every stage: the output is the DFT divided by ``n``, the
    classical overflow-safe choice for inputs below half scale;
``"none"``
    no shifts: the DFT itself, which overflows (saturates) for large
    inputs;
a sequence of ``log2 n`` shifts (0, 1 or 2 each)
    a schedule of your own, e.g. no shift in the first stages where the
    signal is small;
``"block"``
    block floating point: each stage shifts the whole transform by 0, 1
    or 2 bits, as much as its largest value needs to be safe, so it never
    saturates; the total shift is returned as the exponent.

Every call returns the integers, the exponent (total right shift: the
float value of the result is ``values * 2**exponent / 2**f``, for an input
read the same way) and the number of saturated components.

Rounding: ``"half_up"`` (add half an LSB, then shift; the usual DSP
instruction) or ``"convergent"`` (halves to even: no bias).  Twiddles
are quantised once per plan, by rounding to nearest (ties to even) and
saturating ``+1`` to the largest code.
"""

from __future__ import annotations

import math
import operator
from typing import NamedTuple

import numpy as np

from . import _kernel
from ._checks import integer

__all__ = ["FORMATS", "ROUNDING", "FixedFft", "FixedResult", "dequantize", "quantize",
           "quantized_twiddles"]

#: The formats: name -> (storage dtype, fraction bits).
FORMATS = {"q15": (np.dtype(np.int16), 15), "q31": (np.dtype(np.int32), 31)}
#: The rounding modes of the shifts.
ROUNDING = ("half_up", "convergent")
_SCHEDULES = ("halve", "none", "block")
#: Largest transform size: 2**16.
MAX_SIZE = 1 << 16


def _format(fmt) -> tuple[str, np.dtype, int]:
    if not isinstance(fmt, str) or fmt not in FORMATS:
        raise ValueError(f"fmt={fmt!r} is not a format; use one of {sorted(FORMATS)}")
    dtype, bits = FORMATS[fmt]
    return fmt, dtype, bits


def _scale(scale) -> float:
    if isinstance(scale, (bool, np.bool_)) or not isinstance(scale, (int, float, np.integer,
                                                                     np.floating)):
        raise TypeError(f"scale must be a real number, got {scale!r}")
    value = float(scale)
    if not math.isfinite(value) or value <= 0:
        raise ValueError(f"scale must be finite and > 0, got {scale!r}")
    return value


def _rounding(rounding) -> str:
    if not isinstance(rounding, str) or rounding not in ROUNDING:
        raise ValueError(f"rounding={rounding!r} is not allowed; use one of {ROUNDING}")
    return rounding


class FixedResult(NamedTuple):
    """Outcome of a fixed-point transform."""

    #: The integers, shape ``(..., n, 2)`` = (re, im), int16 (Q15) or int32 (Q31).
    values: np.ndarray
    #: Total right shift per transform, int64, shape ``(...)``.
    exponent: np.ndarray
    #: Saturated components per transform, int64, shape ``(...)``.
    saturations: np.ndarray


def quantize(values, fmt: str = "q15", *, scale: float = 1.0, rounding: str = "half_up"):
    """Complex values to fixed-point integers, saturating.

    Parameters
    ----------
    values : array_like of complex
        Any shape ``(...)``.
    fmt : {"q15", "q31"}, optional
        The format (default ``"q15"``).
    scale : float, optional
        Multiplier applied before quantising (default 1): choose it so the
        largest component stays below 1.
    rounding : {"half_up", "convergent"}, optional
        How the nearest code is chosen (default ``"half_up"``).

    Returns
    -------
    codes : numpy.ndarray
        Shape ``(..., 2)``, int16 or int32.
    saturations : int
        Components clipped to the format's range.

    Raises
    ------
    ValueError
        Unknown format or rounding, NaN or infinite values, a scale that
        is not finite and positive.
    TypeError
        Non-numeric values.

    Examples
    --------
    >>> from tonebank.fixedpoint import quantize
    >>> codes, clipped = quantize([0.5 - 0.25j, 1.0], "q15")
    >>> codes.tolist(), clipped
    ([[16384, -8192], [32767, 0]], 1)
    """
    _, dtype, bits = _format(fmt)
    rounding = _rounding(rounding)
    arr = np.asarray(values)
    if arr.dtype.kind not in "biufc":
        raise TypeError(f"values must be numeric, got dtype {arr.dtype}")
    scale = _scale(scale)
    with np.errstate(over="ignore", invalid="ignore"):
        arr = arr.astype(np.complex128) * scale
    if not np.all(np.isfinite(arr)):
        raise ValueError("values holds NaN or infinity (after scaling)")
    pair = np.stack((arr.real, arr.imag), axis=-1) * float(1 << bits)
    if rounding == "half_up":
        codes = np.floor(pair + 0.5)
    else:
        codes = np.rint(pair)                      # ties to even
    lo, hi = -(1 << bits), (1 << bits) - 1
    saturations = int(np.count_nonzero((codes < lo) | (codes > hi)))
    return np.clip(codes, lo, hi).astype(dtype), saturations


def dequantize(codes, fmt: str = "q15", *, exponent=0, scale: float = 1.0) -> np.ndarray:
    """Fixed-point integers back to complex values: ``(re + 1j im) 2**exponent / 2**f / scale``.

    Parameters
    ----------
    codes : array_like of int
        Shape ``(..., 2)``.
    fmt : {"q15", "q31"}, optional
        The format (default ``"q15"``).
    exponent : int or array_like of int, optional
        Total right shift of a transform (default 0), broadcast against
        ``codes.shape[:-2]`` (one per transform) or a scalar.
    scale : float, optional
        The scale given to :func:`quantize` (default 1).

    Returns
    -------
    numpy.ndarray
        complex128, shape ``codes.shape[:-1]``.

    Raises
    ------
    ValueError
        Unknown format, a last axis that is not 2, a scale that is not
        finite and positive.
    TypeError
        Codes that are not integers.

    Examples
    --------
    >>> from tonebank.fixedpoint import dequantize
    >>> dequantize([[16384, -8192]], "q15").tolist()
    [(0.5-0.25j)]
    """
    _, _, bits = _format(fmt)
    arr = np.asarray(codes)
    if arr.dtype.kind not in "iu":
        raise TypeError(f"codes must be integers, got dtype {arr.dtype}")
    if arr.ndim < 1 or arr.shape[-1] != 2:
        raise ValueError(f"codes must have a last axis of 2 (re, im), got shape {arr.shape}")
    scale = _scale(scale)
    exp = np.asarray(exponent)
    if exp.dtype.kind not in "iu":
        raise TypeError(f"exponent must be an integer or an array of integers, got {exponent!r}")
    exp = exp.astype(np.float64)
    if exp.ndim and arr.ndim >= 3:
        exp = exp[..., None]                        # one per transform: over its samples
    value = (arr[..., 0].astype(np.float64) + 1j * arr[..., 1].astype(np.float64))
    return value * np.exp2(exp - bits) / scale


def quantized_twiddles(n: int, fmt: str = "q15", *, inverse: bool = False) -> np.ndarray:
    """The plan's twiddle table ``W[i] = exp(-+2 pi i j / n)`` for ``i < n/2``, quantised.

    Parameters
    ----------
    n : int
        Transform size, a power of two from 2 to 65536.
    fmt : {"q15", "q31"}, optional
        The format (default ``"q15"``).
    inverse : bool, optional
        ``exp(+...)`` instead of ``exp(-...)`` (default false).

    Returns
    -------
    numpy.ndarray
        Shape ``(n // 2, 2)``, int16 or int32, read-only.

    Raises
    ------
    ValueError
        ``n`` not a power of two in range, unknown format.

    Notes
    -----
    Each value is rounded to the nearest code (ties to even) and +1 is
    saturated to the largest code, ``2**f - 1``.  The C kernel receives
    this table with its plan, so both backends use the same codes.

    Examples
    --------
    >>> from tonebank.fixedpoint import quantized_twiddles
    >>> quantized_twiddles(4, "q15").tolist()
    [[32767, 0], [0, -32768]]
    """
    n = _size(n)
    _, dtype, bits = _format(fmt)
    angle = 2.0 * np.pi * np.arange(n // 2) / n
    c, s = np.cos(angle), np.sin(angle)
    sign = 1.0 if inverse else -1.0
    full = float(1 << bits)
    table = np.stack((np.rint(c * full), np.rint(sign * s * full)), axis=-1)
    table = np.clip(table, -full, full - 1).astype(dtype)
    table.flags.writeable = False
    return table


def _size(n) -> int:
    n = integer(n, "n", minimum=2, maximum=MAX_SIZE)
    if n & (n - 1):
        raise ValueError(f"n={n} is not a power of two; the fixed-point FFT is radix 2 "
                         f"(sizes 2, 4, ..., {MAX_SIZE})")
    return n


def _schedule(schedule, m: int):
    """Shifts per stage, or None for block floating point."""
    if isinstance(schedule, str):
        if schedule not in _SCHEDULES:
            raise ValueError(f"schedule={schedule!r} is unknown; use one of {_SCHEDULES} or a "
                             f"sequence of {m} shifts (0, 1 or 2)")
        return None if schedule == "block" else (1 if schedule == "halve" else 0,) * m
    try:
        shifts = [_shift(v) for v in schedule]
    except TypeError:
        raise TypeError(f"schedule must be one of {_SCHEDULES} or a sequence of integer "
                        f"shifts, got {schedule!r}") from None
    if len(shifts) != m or any(s < 0 or s > 2 for s in shifts):
        raise ValueError(f"schedule must hold {m} shifts (one per radix-2 stage), each 0, 1 "
                         f"or 2; got {list(schedule)!r}")
    return tuple(shifts)


def _shift(v) -> int:
    if isinstance(v, (bool, np.bool_)):
        raise TypeError("a shift must be an integer, not a boolean")
    return operator.index(v)


class FixedFft:
    """A prepared fixed-point FFT of one size, format, schedule and rounding (immutable).

    Parameters
    ----------
    n : int
        Size, a power of two from 2 to 65536.
    fmt : {"q15", "q31"}, optional
        The format (default ``"q15"``).
    schedule : {"halve", "none", "block"} or tuple of int, optional
        Scaling per stage (see the module notes; default ``"halve"``).
    rounding : {"half_up", "convergent"}, optional
        Rounding of every shift (default ``"half_up"``).
    inverse : bool, optional
        The inverse transform (conjugate twiddles; no ``1/n`` beyond what
        the schedule does; default false).

    Raises
    ------
    ValueError, TypeError
        A size, format, schedule or rounding that is not allowed.

    See Also
    --------
    quantize, dequantize

    Notes
    -----
    Cost: ``(n/2) log2 n`` butterflies of 4 multiplies and 6 adds in
    integers, plus the shifts and saturations.  The C kernel and the numpy
    model give identical integers, exponents and saturation counts.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.fixedpoint import FixedFft, quantize, dequantize
    >>> x = 0.5 * np.exp(2j * np.pi * 3 * np.arange(16) / 16)   # a tone on bin 3
    >>> codes, _ = quantize(x, "q15")
    >>> r = FixedFft(16, schedule="halve")(codes)
    >>> int(r.exponent), int(r.saturations)
    (4, 0)
    >>> X = dequantize(r.values, exponent=r.exponent)
    >>> int(np.argmax(np.abs(X))), round(float(abs(X[3])), 3)
    (3, 8.0)
    """

    __slots__ = ("_n", "_fmt", "_schedule", "_shifts", "_rounding", "_inverse", "_twiddles",
                 "_runners")

    def __init__(self, n: int, *, fmt: str = "q15", schedule="halve", rounding: str = "half_up",
                 inverse: bool = False):
        self._n = _size(n)
        self._fmt, _, _ = _format(fmt)
        self._rounding = _rounding(rounding)
        if not isinstance(inverse, (bool, np.bool_)):
            raise TypeError(f"inverse must be True or False, got {inverse!r}")
        self._inverse = bool(inverse)
        m = self._n.bit_length() - 1
        self._shifts = _schedule(schedule, m)
        self._schedule = schedule if isinstance(schedule, str) else tuple(self._shifts)
        self._twiddles = quantized_twiddles(self._n, self._fmt, inverse=self._inverse)
        self._runners = {}

    @property
    def n(self) -> int:
        """Transform size."""
        return self._n

    @property
    def fmt(self) -> str:
        """Format name."""
        return self._fmt

    @property
    def schedule(self):
        """The schedule as given (a name or a tuple of shifts)."""
        return self._schedule

    @property
    def shifts(self) -> tuple | None:
        """Shift per stage (None for block floating point)."""
        return self._shifts

    @property
    def rounding(self) -> str:
        """Rounding mode."""
        return self._rounding

    @property
    def inverse(self) -> bool:
        """True for the inverse transform."""
        return self._inverse

    @property
    def twiddles(self) -> np.ndarray:
        """The quantised twiddle table, ``(n // 2, 2)``, read-only."""
        return self._twiddles

    def __repr__(self):
        return (f"FixedFft({self._n}, fmt={self._fmt!r}, schedule={self._schedule!r}, "
                f"rounding={self._rounding!r}, inverse={self._inverse})")

    def __getstate__(self):
        return {k: getattr(self, k) for k in self.__slots__ if k != "_runners"}

    def __setstate__(self, state):
        for k, v in state.items():
            object.__setattr__(self, k, v)
        self._runners = {}

    def _codes(self, x) -> tuple[np.ndarray, tuple]:
        dtype = FORMATS[self._fmt][0]
        arr = np.asarray(x)
        if arr.dtype != dtype:
            if arr.dtype.kind not in "iu":
                raise TypeError(f"x must hold {self._fmt} codes ({dtype}), got dtype {arr.dtype};"
                                " use tonebank.fixedpoint.quantize")
            info = np.iinfo(dtype)
            if arr.size and (arr.min() < info.min or arr.max() > info.max):
                raise ValueError(f"x holds values outside the {self._fmt} range "
                                 f"[{info.min}, {info.max}]")
            arr = arr.astype(dtype)
        if arr.ndim < 2 or arr.shape[-2:] != (self._n, 2):
            raise ValueError(f"x must have shape (..., {self._n}, 2), got {arr.shape}")
        lead = arr.shape[:-2]
        return np.ascontiguousarray(arr.reshape((-1, self._n, 2))), lead

    def _runner(self):
        impl = _kernel.active()
        runner = self._runners.get(impl.__name__)
        if runner is None:
            runner = impl.fixed_fft_runner(self._n, self._fmt, self._twiddles, self._shifts,
                                           self._rounding == "convergent")
            self._runners[impl.__name__] = runner
        return runner

    def __call__(self, x) -> FixedResult:
        """Transform codes ``(..., n, 2)`` (int16 for Q15, int32 for Q31; other integer
        arrays are taken if every value fits).

        Returns
        -------
        FixedResult
            The output codes, the exponent and the saturation count per transform.

        Raises
        ------
        TypeError
            Non-integer input.
        ValueError
            A wrong shape, or values outside the format's range.
        """
        codes, lead = self._codes(x)
        out, exponent, saturations = self._runner().run(codes)
        return FixedResult(out.reshape(lead + (self._n, 2)), exponent.reshape(lead),
                           saturations.reshape(lead))

    def stages(self, x) -> list:
        """Every stage's output codes for ``x`` (for test vectors), from the integer model.

        Returns
        -------
        list of numpy.ndarray
            ``log2 n`` arrays of shape ``(..., n, 2)``.
        """
        from ._kernel import _numpy_fixed

        codes, lead = self._codes(x)
        runner = _numpy_fixed.fixed_fft_runner(self._n, self._fmt, self._twiddles,
                                               self._shifts, self._rounding == "convergent")
        return [s.reshape(lead + (self._n, 2)) for s in runner.trace(codes)]
