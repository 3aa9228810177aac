"""numpy twin of the synchronisation kernel op (sliding correlation).

Same signature, checks and results (to rounding) as
:func:`tonebank._kernel._c_sync.halves_correlation`; the contract is
written here once.
"""

from __future__ import annotations

import operator

import numpy as np

#: Outputs between direct re-summations of the running sums; the same
#: block as the C kernel (``TB_HALVES_BLOCK`` in csrc/tb_halves.c), so both
#: backends bound their rounding error the same way.
BLOCK = 4096


def check_halves_args(x, period, window) -> tuple[np.ndarray, int, int, int]:
    """Validate the arguments of :func:`halves_correlation`.

    Returns ``(x, period, window, n_out)`` with ``x`` C-contiguous.  The
    public callers (:mod:`tonebank.sync`) validate first with their own
    argument names; this check keeps the op itself safe to call.
    """
    if not isinstance(x, np.ndarray) or x.dtype not in (np.complex64, np.complex128):
        raise TypeError("x must be a complex64 or complex128 numpy array, got "
                        f"{getattr(x, 'dtype', type(x).__name__)}")
    if x.ndim == 0:
        raise ValueError("x must have at least one axis (samples last)")
    values = []
    for name, value in (("period", period), ("window", window)):
        try:
            value = operator.index(value)
        except TypeError:
            raise TypeError(f"{name} must be an integer, got {value!r}") from None
        if value < 1:
            raise ValueError(f"{name} must be >= 1, got {value}")
        values.append(value)
    period, window = values
    n = x.shape[-1]
    n_out = n - period - window + 1
    if n_out < 0:
        raise ValueError(f"x has {n} samples along its last axis; period {period} and "
                         f"window {window} need at least {period + window - 1}")
    return np.ascontiguousarray(x), period, window, n_out


def halves_correlation(x, period, window) -> tuple[np.ndarray, np.ndarray]:
    """Sliding correlation of a signal with itself ``period`` samples later.

    For every start ``d = 0 .. n_out - 1``, ``n_out = n - period - window
    + 1``::

        p[..., d] = sum_{m < window} conj(x[..., d+m]) * x[..., d+m+period]
        r[..., d] = sum_{m < window} |x[..., d+m+period]|**2

    ``x`` is complex64 or complex128 with samples on the last axis (any
    leading batch axes); ``p`` has ``x``'s dtype and ``r`` the matching
    real dtype, shapes ``(..., n_out)``.  Both backends compute running
    sums in double precision restarted from a direct sum every
    :data:`BLOCK` outputs, so the error stays that of a few thousand
    additions however long the stream is.

    Raises ``TypeError`` / ``ValueError`` for a non-complex ``x``,
    non-integer or non-positive ``period`` / ``window``, or too few
    samples.
    """
    x, period, window, n_out = check_halves_args(x, period, window)
    lead = x.shape[:-1]
    n = x.shape[-1]
    real = np.float32 if x.dtype == np.complex64 else np.float64
    rows = x.reshape(-1, n).astype(np.complex128, copy=False)
    n_rows = rows.shape[0]
    p = np.empty((n_rows, n_out), np.complex128)
    r = np.empty((n_rows, n_out), np.float64)
    if n_out and n_rows:
        later = rows[:, period:]
        # products of every pair (d, d + period); one zero pad so that the
        # last window's end index stays inside the array
        q = np.zeros((n_rows, n - period + 1), np.complex128)
        e = np.zeros((n_rows, n - period + 1), np.float64)
        q[:, :-1] = rows[:, :n - period].conj() * later
        e[:, :-1] = later.real**2 + later.imag**2
        starts = np.arange(0, n_out, BLOCK)
        bounds = np.stack((starts, starts + window), axis=1).ravel()
        direct_q = np.add.reduceat(q, bounds, axis=1)[:, ::2]    # (R, blocks)
        direct_e = np.add.reduceat(e, bounds, axis=1)[:, ::2]
        # step d -> d + 1 adds pair d + window and drops pair d; the step
        # into a block start is replaced by that block's direct sum
        n_blocks = starts.size
        # one block of n_out when that is all there is: short rows are not
        # padded to a whole block (many short rows would cost BLOCK each)
        width = BLOCK if n_blocks > 1 else n_out
        steps_q = np.zeros((n_rows, n_blocks * width), np.complex128)
        steps_e = np.zeros((n_rows, n_blocks * width), np.float64)
        steps_q[:, 1:n_out] = q[:, window:window + n_out - 1] - q[:, :n_out - 1]
        steps_e[:, 1:n_out] = e[:, window:window + n_out - 1] - e[:, :n_out - 1]
        steps_q[:, starts] = direct_q
        steps_e[:, starts] = direct_e
        shape = (n_rows, n_blocks, width)
        p[...] = np.cumsum(steps_q.reshape(shape), axis=2).reshape(n_rows, -1)[:, :n_out]
        r[...] = np.cumsum(steps_e.reshape(shape), axis=2).reshape(n_rows, -1)[:, :n_out]
    return (p.astype(x.dtype, copy=False).reshape(lead + (n_out,)),
            r.astype(real, copy=False).reshape(lead + (n_out,)))
