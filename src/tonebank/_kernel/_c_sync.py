"""C wrapper of the synchronisation kernel op (``tb_halves_correlation_*``,
csrc/tb_halves.c).

The contract is in :func:`tonebank._kernel._numpy_sync.halves_correlation`.
"""

from __future__ import annotations

import numpy as np

from ._c import _check, ffi, lib
from ._numpy_sync import check_halves_args

_CALLS = {
    np.dtype(np.complex64): (lib.tb_halves_correlation_f32, ffi.typeof("float[]"),
                             np.float32),
    np.dtype(np.complex128): (lib.tb_halves_correlation_f64, ffi.typeof("double[]"),
                              np.float64),
}


def halves_correlation(x, period, window) -> tuple[np.ndarray, np.ndarray]:
    """Sliding correlation (see :func:`._numpy_sync.halves_correlation`)."""
    x, period, window, n_out = check_halves_args(x, period, window)
    call, atype, real = _CALLS[x.dtype]
    n = x.shape[-1]
    lead = x.shape[:-1]
    p = np.empty(lead + (n_out,), x.dtype)
    r = np.empty(lead + (n_out,), real)
    rows = int(np.prod(lead, dtype=np.int64))
    if rows and n_out:
        buf = ffi.from_buffer
        status = call(rows, n, period, window, buf(atype, x), n, buf(atype, p), n_out,
                      buf(atype, r), n_out)
        if status:
            _check(status, "sliding correlation")
    return p, r
