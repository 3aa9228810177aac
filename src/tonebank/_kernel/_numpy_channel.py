"""numpy twin of the channel kernel op (time-varying FIR).

Same signature, preconditions and results (to rounding) as
:func:`tonebank._kernel._c_channel.channel_fir`; the contract is written
here once.
"""

from __future__ import annotations

import numpy as np


def channel_fir(x: np.ndarray, hist: np.ndarray, taps: np.ndarray, interval: int,
                offset: int, out: np.ndarray) -> None:
    """Filter signals through a tapped delay line with time-varying taps.

    ``out[r, i] = sum_m c_m(i) x[r, i - m]`` for ``m = 0 .. L-1``, summed in
    that order, where ``x[r, j]`` for ``j < 0`` is ``hist[r, L - 1 + j]``
    and the taps of row ``r`` come from ``taps[r % S]``:

    * one knot (``K == 1``): ``c_m(i) = taps[s, 0, m]`` (``interval`` and
      ``offset`` unused);
    * ``K >= 2``: with ``k = (offset + i) // interval`` and
      ``t = ((offset + i) % interval) / interval``,
      ``c_m(i) = A_m + t (B_m - A_m)``, ``A = taps[s, k]``,
      ``B = taps[s, k + 1]``; the caller guarantees
      ``K >= (offset + n - 1) // interval + 2``.  Both backends form
      ``sum_m A_m x[i-m] + t * sum_m (B_m - A_m) x[i-m]`` (the same value).

    Parameters (all validated by the caller): ``x`` (R, n), ``hist``
    (R, L - 1), ``taps`` (S, K, L) and ``out`` (R, n), C-contiguous, one
    complex dtype (complex64 or complex128); ``out`` does not overlap the
    inputs.
    """
    rows, n = x.shape
    n_sets, n_knots, n_lags = taps.shape
    if rows == 0 or n == 0:
        return
    real = np.float32 if x.dtype == np.complex64 else np.float64
    row_taps = taps[np.arange(rows) % n_sets]                    # (R, K, L)
    padded = np.concatenate((hist, x), axis=1)                   # (R, L - 1 + n)
    head = n_lags - 1
    if n_knots == 1:
        for m in range(n_lags):
            term = row_taps[:, 0, m:m + 1] * padded[:, head - m:head - m + n]
            if m == 0:
                out[...] = term
            else:
                out += term
        return
    rel = offset + np.arange(n)
    knot = rel // interval
    t = ((rel - knot * interval) / interval).astype(real)        # (n,), as the C kernel
    # c_m(i) = A_m + t_i D_m with D = B - A, so y = sum_m A_m x + t * sum_m D_m x
    # (the same two sums, in the same order, as the C kernel).
    acc_d = np.empty_like(out)
    for m in range(n_lags):
        lag = row_taps[:, :, m]                                  # (R, K)
        start = lag[:, knot]                                     # (R, n)
        shifted = padded[:, head - m:head - m + n]
        if m == 0:
            out[...] = start * shifted
            acc_d[...] = (lag[:, knot + 1] - start) * shifted
        else:
            out += start * shifted
            acc_d += (lag[:, knot + 1] - start) * shifted
    out += t * acc_d
