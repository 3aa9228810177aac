"""numpy implementation of the kernel interface (the fallback backend).

Every function here has the same signature, the same preconditions and
the same results (to rounding) as its twin in :mod:`tonebank._kernel._c`;
see :mod:`tonebank._kernel` for the interface.
"""

from __future__ import annotations

import numpy as np

NAME = "numpy"


def fft(x: np.ndarray, out: np.ndarray, inverse: bool, scale: float) -> None:
    """``out[...] = scale * DFT(x)`` along the last axis (see the interface)."""
    if inverse:
        # norm="forward" leaves the inverse transform unscaled.
        y = np.fft.ifft(x, axis=-1, norm="forward")
    else:
        y = np.fft.fft(x, axis=-1, norm="backward")
    # numpy < 2 computes in complex128 only; the cast keeps the caller's
    # precision, which is the interface's promise.
    np.multiply(y, scale, out=out, casting="same_kind")


def fft_runner(n: int, dtype: np.dtype, inverse: bool, scale: float):
    """Return ``run(x, out)`` doing :func:`fft` for one prepared configuration."""
    def run(x, out):
        fft(x, out, inverse, scale)
    return run


def info() -> dict:
    """Facts about this backend for :func:`tonebank.backend_info`."""
    return {"numpy_version": np.__version__}
