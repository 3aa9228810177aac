"""Discrete Fourier transforms on the tonebank kernel.

:func:`fft` is the transform every waveform of the library runs on; it is
public so that users can check and benchmark the kernel itself.
:class:`FftPlan` is the same transform prepared once for one size,
precision, direction and scaling, for streaming use where the cost of each
call matters more than the arithmetic.
"""

from __future__ import annotations

import math
import operator

import numpy as np

from . import _kernel

__all__ = ["FftPlan", "fft"]

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


def _scale(n: int, inverse, norm) -> float:
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
    >>> int(np.argmax(abs(X))), round(float(abs(X[3])), 12)
    (3, 8.0)
    >>> np.allclose(tonebank.fft(X, inverse=True), x)
    True
    """
    if axis == -1 and norm is None and type(x) is np.ndarray and x.ndim:
        # Repeated single-symbol calls: a prepared runner per configuration
        # (see FftPlan) skips the argument normalisation below.
        run = _quick_runners.get((_kernel.active(), x.shape[-1], x.dtype, inverse))
        if run is not None:
            if out is None:
                return run(x)
            # A preallocated result of the right kind, distinct from x or
            # x itself (exact in-place use); anything else takes the full
            # checks below.
            if type(out) is np.ndarray and out.dtype == x.dtype and out.shape == x.shape \
                    and out.flags.writeable and (out is x or not np.may_share_memory(x, out)):
                return run(x, out)
    if type(x) is not np.ndarray:
        x = np.asarray(x)
    dtype = _COMPLEX_OF.get(x.dtype) or _result_dtype(x.dtype)
    ndim = x.ndim
    if ndim == 0:
        raise ValueError("x must have at least one dimension; got a 0-d array")
    try:
        axis = operator.index(axis)
    except TypeError:
        raise TypeError(f"axis must be an integer; got {axis!r}") from None
    if not -ndim <= axis < ndim:
        raise ValueError(f"axis={axis} is out of range for x with {ndim} dimension(s)")
    n = x.shape[axis]
    if n < 1:
        raise ValueError(f"x has length 0 along axis {axis}; the transform needs n >= 1")
    if norm is None:
        scale = 1.0 / n if inverse else 1.0
    else:
        scale = _scale(n, inverse, norm)
    if x.dtype != dtype:
        x = x.astype(dtype)
    if out is None:
        result = np.empty(x.shape, dtype)
    else:
        _check_out(out, x.shape, dtype)
        result = out
    if axis == -1 or axis == ndim - 1:
        xv, rv = x, result
    else:
        xv, rv = np.moveaxis(x, axis, -1), np.moveaxis(result, axis, -1)
    if out is not None and out is not x and np.may_share_memory(xv, rv) \
            and not _same_elements(xv, rv):
        # The kernel allows exact in-place use only; any other overlap
        # would read elements already overwritten, so work on a copy.
        xv = xv.copy()
    impl = _kernel.active()
    impl.fft(xv, rv, bool(inverse), scale)
    if axis == -1 and norm is None and x.dtype is dtype \
            and type(inverse) is bool and len(_quick_runners) < _QUICK_RUNNERS_MAX:
        _quick_runners[impl, n, dtype, inverse] = impl.fft_runner(n, dtype, inverse, scale)
    return result


#: Prepared runners of :func:`fft`'s common case (last axis, default
#: scaling, complex input), by (backend, n, dtype, inverse).
#: Bounded, so that sweeping over many sizes cannot grow it without end.
_quick_runners: dict = {}
_QUICK_RUNNERS_MAX = 64


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


_PLAN_DTYPES = (np.dtype(np.complex128), np.dtype(np.complex64))


class FftPlan:
    """A transform prepared for one size, precision, direction and scaling.

    Calling the plan transforms the last axis of its input exactly as
    :func:`fft` would, with the size look-up, scaling and kernel plan
    resolved once at construction; use it where transforms are called one
    symbol at a time and the per-call overhead matters.  Plans are
    immutable and may be shared between threads.

    Parameters
    ----------
    n : int
        Transform length (the last axis of every input), ``n >= 1``.
    dtype : {numpy.complex128, numpy.complex64}, optional
        Precision of the input and output (default complex128).
    inverse : bool, optional
        Prepare the inverse transform instead of the forward one.
    norm : {None, "backward", "ortho", "forward"}, optional
        Scaling, with the meanings of :func:`fft`.

    Raises
    ------
    TypeError
        If ``n`` is not an integer or ``dtype`` is not complex64 or
        complex128.
    ValueError
        If ``n < 1`` or ``norm`` is unknown.

    See Also
    --------
    fft : the one-shot transform along any axis.

    Notes
    -----
    The plan runs on the kernel backend in force when it was created
    (see :func:`tonebank.use_backend`); :attr:`backend` names it.  Sizes the
    C kernel does not plan run on numpy, as with :func:`fft`.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> to_time = tonebank.FftPlan(64, inverse=True, norm="ortho")
    >>> symbol = np.zeros(64, complex)
    >>> symbol[5] = 1
    >>> samples = to_time(symbol)
    >>> bool(np.allclose(samples, np.exp(2j * np.pi * 5 * np.arange(64) / 64) / 8))
    True
    """

    __slots__ = ("_n", "_dtype", "_inverse", "_norm", "_backend", "_run")

    def __init__(self, n, *, dtype=np.complex128, inverse=False, norm=None):
        try:
            n = operator.index(n)
        except TypeError:
            raise TypeError(f"n must be an integer; got {n!r}") from None
        if n < 1:
            raise ValueError(f"n={n} is not allowed; the transform length must be >= 1")
        try:
            dt = np.dtype(dtype)
        except TypeError:
            dt = None
        if dt not in _PLAN_DTYPES:
            raise TypeError(f"dtype={dtype!r} is not allowed; use numpy.complex128 or "
                            "numpy.complex64")
        inverse = bool(inverse)
        scale = _scale(n, inverse, norm)
        impl = _kernel.active()
        setattr_ = object.__setattr__
        setattr_(self, "_n", n)
        setattr_(self, "_dtype", dt)
        setattr_(self, "_inverse", inverse)
        setattr_(self, "_norm", norm)
        setattr_(self, "_backend", impl.NAME)
        setattr_(self, "_run", impl.fft_runner(n, dt, inverse, scale))

    def __setattr__(self, name, value):
        raise AttributeError(f"FftPlan is immutable; cannot set {name!r}")

    @property
    def n(self) -> int:
        """Transform length."""
        return self._n

    @property
    def dtype(self) -> np.dtype:
        """Input and output dtype."""
        return self._dtype

    @property
    def inverse(self) -> bool:
        """True for the inverse transform."""
        return self._inverse

    @property
    def norm(self):
        """Scaling convention (see :func:`fft`)."""
        return self._norm

    @property
    def backend(self) -> str:
        """Name of the kernel backend the plan runs on."""
        return self._backend

    def __repr__(self):
        return (f"FftPlan({self._n}, dtype={self._dtype.name}, inverse={self._inverse}, "
                f"norm={self._norm!r})  # on the {self._backend!r} backend")

    def __call__(self, x, out=None):
        """Transform the last axis of *x*.

        Parameters
        ----------
        x : numpy.ndarray
            Array of shape ``(..., n)`` and the plan's dtype (real input of
            the same precision is accepted and converted).
        out : numpy.ndarray, optional
            Array of the same shape and the plan's dtype to write into; may
            be ``x`` itself.

        Returns
        -------
        numpy.ndarray
            The transform (``out`` when it was given).

        Raises
        ------
        TypeError
            If ``x`` or ``out`` has the wrong dtype, or ``out`` is not an
            array.
        ValueError
            If the last axis of ``x`` is not ``n`` long, or ``out`` has the
            wrong shape or is read-only.
        """
        dtype = self._dtype
        if type(x) is not np.ndarray or x.dtype is not dtype or not x.shape \
                or x.shape[-1] != self._n:
            x = self._conform(x)
        if out is None:
            # The runner allocates: its shortest path (single symbols).
            return self._run(x)
        _check_out(out, x.shape, dtype)
        if out is not x and np.may_share_memory(x, out) and not _same_elements(x, out):
            x = x.copy()
        return self._run(x, out)

    def _conform(self, x) -> np.ndarray:
        """Checks and conversions of the slow path of :meth:`__call__`."""
        x = np.asarray(x)
        if x.ndim == 0 or x.shape[-1] != self._n:
            raise ValueError(f"x has shape {x.shape}; this plan transforms a last axis of "
                             f"length {self._n}")
        if x.dtype != self._dtype:
            if _COMPLEX_OF.get(x.dtype) != self._dtype:
                raise TypeError(f"x has dtype {x.dtype}; this plan takes {self._dtype} (or "
                                "real input of the same precision)")
            x = x.astype(self._dtype)
        return x
