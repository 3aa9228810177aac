"""C wrapper of the channel kernel op (``tb_channel_fir_*``, csrc/tb_channel.c).

The contract is in :func:`tonebank._kernel._numpy_channel.channel_fir`;
arrays arrive validated and C-contiguous.
"""

from __future__ import annotations

import numpy as np

from ._c import _check, ffi, lib

_CALLS = {
    np.dtype(np.complex64): (lib.tb_channel_fir_f32, ffi.typeof("float[]")),
    np.dtype(np.complex128): (lib.tb_channel_fir_f64, ffi.typeof("double[]")),
}


def channel_fir(x: np.ndarray, hist: np.ndarray, taps: np.ndarray, interval: int,
                offset: int, out: np.ndarray) -> None:
    """Time-varying FIR (see :func:`._numpy_channel.channel_fir`)."""
    rows, n = x.shape
    n_sets, n_knots, n_lags = taps.shape
    if rows == 0 or n == 0:
        return
    call, atype = _CALLS[x.dtype]
    buf = ffi.from_buffer
    hist_ptr = buf(atype, hist) if n_lags > 1 else ffi.NULL
    status = call(rows, n, n_lags, buf(atype, x), n, hist_ptr, n_lags - 1,
                  buf(atype, taps), n_sets, n_knots, max(int(interval), 1), int(offset),
                  buf(atype, out), n)
    if status:
        _check(status, "channel FIR")
