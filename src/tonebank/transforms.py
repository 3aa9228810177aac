"""Discrete Fourier transforms on the tonebank kernel.

:func:`fft` is the transform every waveform of the library runs on; it is
public so that users can check and benchmark the kernel itself.
"""

from __future__ import annotations

import math

import numpy as np

from . import _kernel

__all__ = ["fft"]

# Input dtype kind/char -> result dtype.  Integers and booleans become
# complex128 as numpy.fft does; float16/float32 keep single precision.
_COMPLEX_OF = {
    np.dtype(np.complex128): np.dtype(np.complex128),
    np.dtype(np.complex64): np.dtype(np.complex64),
    np.dtype(np.float64): np.dtype(np.complex128),
    np.dtype(np.float32): np.dtype(np.complex64),
    np.dtype(np.float16): np.dtype(np.complex64),
}
_NORMS = (None, "backward", "ortho", "forward")


def _result_dtype(dtype: np.dtype) -> np.dtype:
    try:
        return _COMPLEX_OF[dtype]
    except KeyError:
        pass
    if dtype.kind in "biu":
        return np.dtype(np.complex128)
    raise TypeError(
        f"x has dtype {dtype}, which fft does not take; allowed: complex64, complex128, "
        "float16, float32, float64, integers and bool (convert extended precision "
        "explicitly, e.g. x.astype(np.complex128))")


def _scale(n: int, inverse: bool, norm) -> float:
    if norm is None or norm == "backward":
        return 1.0 / n if inverse else 1.0
    if norm == "ortho":
        return 1.0 / math.sqrt(n)
    if norm == "forward":
        return 1.0 if inverse else 1.0 / n
    raise ValueError(f"norm={norm!r} is not allowed; use None, 'backward', 'ortho' or 'forward'")


def fft(x, axis=-1, *, inverse=False, norm=None, out=None):
    """Complex discrete Fourier transform along one axis.

    Runs on the C kernel when it is available and the size is supported
    (``n = 2^a 3^b 5^c``, see :func:`tonebank.backend_info`), on numpy
    otherwise; both give the same numbers to rounding.

    Parameters
    ----------
    x : array_like
        Input of any shape with at least one dimension.  complex128 and
        complex64 are kept; float64, integer and bool input is transformed
        as complex128, float32 and float16 input as complex64.
    axis : int, optional
        Axis to transform (default: the last).  Its length ``n`` must be
        at least 1.
    inverse : bool, optional
        Compute the inverse transform instead of the forward one.
    norm : {None, "backward", "ortho", "forward"}, optional
        Scaling, with the meanings of :func:`numpy.fft.fft`: ``"backward"``
        (the default, also ``None``) leaves the forward transform unscaled
        and scales the inverse by ``1/n``; ``"ortho"`` scales both by
        ``1/sqrt(n)``; ``"forward"`` scales the forward by ``1/n`` and
        leaves the inverse unscaled.
    out : numpy.ndarray, optional
        Array to write the result into, of the result's shape and dtype
        (complex64 or complex128 as above).  It may be ``x`` itself for an
        in-place transform.

    Returns
    -------
    numpy.ndarray
        The transform, of the shape of ``x`` and the result dtype; ``out``
        when it was given.

    Raises
    ------
    TypeError
        If ``x`` or ``out`` has a dtype that is not allowed, or ``out`` is
        not a numpy array.
    ValueError
        If ``x`` is zero-dimensional or has length 0 along ``axis``, if
        ``axis`` is out of range, if ``norm`` is unknown, or if ``out`` has
        the wrong shape or is read-only.

    See Also
    --------
    numpy.fft.fft, numpy.fft.ifft : the same transforms in numpy.
    tonebank.backend_info : which backend runs.

    Notes
    -----
    The forward transform of ``x[0..n-1]`` is
    :math:`X_k = s \\sum_{j=0}^{n-1} x_j e^{-2\\pi i jk/n}` and the inverse
    uses :math:`e^{+2\\pi i jk/n}`, with the scale :math:`s` given by
    ``norm``.  The C kernel uses mixed-radix passes (radix 4, 2, 3 and 5)
    with cost :math:`O(n \\log n)` per transform; leading axes are batched
    in one call without copying when their strides allow it.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> x = np.exp(2j * np.pi * 3 * np.arange(8) / 8)   # a tone on bin 3
    >>> X = tonebank.fft(x)
    >>> int(np.argmax(abs(X))), round(abs(X[3]), 12)
    (3, 8.0)
    >>> np.allclose(tonebank.fft(X, inverse=True), x)
    True
    """
    if type(x) is not np.ndarray:
        x = np.asarray(x)
    dtype = _result_dtype(x.dtype)
    ndim = x.ndim
    if ndim == 0:
        raise ValueError("x must have at least one dimension; got a 0-d array")
    if not isinstance(axis, (int, np.integer)) or isinstance(axis, bool):
        raise TypeError(f"axis must be an integer; got {axis!r}")
    if not -ndim <= axis < ndim:
        raise ValueError(f"axis={axis} is out of range for x with {ndim} dimension(s)")
    n = x.shape[axis]
    if n < 1:
        raise ValueError(f"x has length 0 along axis {axis}; the transform needs n >= 1")
    scale = _scale(n, bool(inverse), norm)
    if x.dtype != dtype:
        x = x.astype(dtype)
    last = axis in (-1, ndim - 1)
    if out is None:
        result = np.empty(x.shape, dtype)
    else:
        _check_out(out, x.shape, dtype)
        result = out
    xv = x if last else np.moveaxis(x, axis, -1)
    rv = result if last else np.moveaxis(result, axis, -1)
    if out is not None and out is not x and np.may_share_memory(xv, rv) \
            and not _same_elements(xv, rv):
        # The kernel allows exact in-place use only; any other overlap
        # would read elements already overwritten, so work on a copy.
        xv = xv.copy()
    _kernel.active().fft(xv, rv, bool(inverse), scale)
    return result


def _same_elements(a: np.ndarray, b: np.ndarray) -> bool:
    """True if *a* and *b* address exactly the same elements in the same order."""
    return (a.__array_interface__["data"][0] == b.__array_interface__["data"][0]
            and a.strides == b.strides)


def _check_out(out, shape, dtype) -> None:
    if not isinstance(out, np.ndarray):
        raise TypeError(f"out must be a numpy.ndarray; got {type(out).__name__}")
    if out.dtype != dtype:
        raise TypeError(f"out has dtype {out.dtype}; this transform produces {dtype}")
    if out.shape != shape:
        raise ValueError(f"out has shape {out.shape}; the result has shape {shape}")
    if not out.flags.writeable:
        raise ValueError("out is read-only")
