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
    # The C kernel propagates NaN and inf silently, as IEEE arithmetic does;
    # numpy's transform would also warn, so the backends would differ.
    with np.errstate(invalid="ignore", over="ignore"):
        if inverse:
            # norm="forward" leaves the inverse transform unscaled.
            y = np.fft.ifft(x, axis=-1, norm="forward")
        else:
            y = np.fft.fft(x, axis=-1, norm="backward")
        # numpy < 2 computes in complex128 only; the cast keeps the caller's
        # precision, which is the interface's promise.
        np.multiply(y, scale, out=out, casting="same_kind")


def fft_runner(n: int, dtype: np.dtype, inverse: bool, scale: float):
    """Return ``run(x, out=None) -> out`` doing :func:`fft` for one configuration.

    With ``out=None`` the runner allocates the output.
    """
    def run(x, out=None):
        if out is None:
            out = np.empty(x.shape, dtype)
        fft(x, out, inverse, scale)
        return out
    return run


class _OfdmRunner:
    """Fused OFDM synthesis and analysis for one configuration (numpy).

    The contract, shared with the C twin (:mod:`._c`):

    ``synthesize(a, b, cp, out, scale)``
        ``a``: (B, S, n_a) values for bins ``bins_a``; ``b``: None when
        there is no second table, else (1 or B, S, n_b) values for
        ``bins_b`` (one row shared by every signal when its first axis is
        1); ``cp``: (S,) ``numpy.uintp`` prefix lengths, each <= n;
        ``out``: (B, sum(n + cp)) receives, symbol after symbol, the last
        ``cp[s]`` samples of the body followed by the body
        ``scale * IDFT_n(X)``, with X zero outside the two tables.
    ``analyze(x, cp, a, b, scale)``
        The reverse: for each symbol skip ``cp[s]`` samples, take
        ``scale * DFT_n`` of the next n and write the bins of the tables to
        ``a`` (B, S, n_a) and, unless None, ``b`` (B, S, n_b).

    All arrays are C-contiguous with the runner's dtype.
    """

    def __init__(self, n, dtype, bins_a, bins_b):
        self._n = n
        self._dtype = np.dtype(dtype)
        self._bins_a = np.asarray(bins_a, dtype=np.intp)
        self._bins_b = np.asarray(bins_b, dtype=np.intp)
        self._layouts = {}

    def _layout(self, cp):
        """Index of every output sample in the flattened (S * n) bodies,
        and the start of every body in the output (cached per pattern)."""
        key = cp.tobytes()
        hit = self._layouts.get(key)
        if hit is None:
            n = self._n
            cp = cp.astype(np.intp)
            starts = np.concatenate(([0], np.cumsum(n + cp)[:-1])).astype(np.intp)
            lengths = n + cp
            sym = np.repeat(np.arange(len(cp)), lengths)
            pos = np.arange(int(lengths.sum())) - np.repeat(starts, lengths)
            # position within the symbol -> body index (the prefix wraps)
            body = (pos - np.repeat(cp, lengths)) % n
            gather = sym * n + body
            bodies = (starts + cp)[:, None] + np.arange(n)
            hit = (gather, bodies.ravel())
            if len(self._layouts) < 16:
                self._layouts[key] = hit
        return hit

    def synthesize(self, a, b, cp, out, scale):
        batch, n_symbols, _ = a.shape
        if batch * n_symbols == 0:
            return
        grid = np.zeros((batch, n_symbols, self._n), dtype=self._dtype)
        grid[..., self._bins_a] = a
        if b is not None and len(self._bins_b):
            grid[..., self._bins_b] = b
        with np.errstate(invalid="ignore", over="ignore"):   # as in fft()
            body = np.fft.ifft(grid, axis=-1, norm="forward")
            body *= scale
        gather, _ = self._layout(cp)
        out[...] = body.reshape(batch, -1)[:, gather]

    def analyze(self, x, cp, a, b, scale):
        batch, n_symbols, _ = a.shape
        if batch * n_symbols == 0:
            return
        _, bodies = self._layout(cp)
        with np.errstate(invalid="ignore", over="ignore"):   # as in fft()
            spec = np.fft.fft(x[:, bodies].reshape(batch, n_symbols, self._n), axis=-1)
            np.multiply(spec[..., self._bins_a], scale, out=a, casting="same_kind")
            if b is not None and len(self._bins_b):
                np.multiply(spec[..., self._bins_b], scale, out=b, casting="same_kind")

    def synthesizer(self, n_symbols, cp, b, scale):
        """``run(a, out)``: :meth:`synthesize` for one signal of ``n_symbols``
        symbols with ``cp``, ``b`` and ``scale`` fixed; ``a`` and ``out`` are
        C-contiguous arrays of the right sizes, any shape."""
        def run(a, out):
            if n_symbols == 0:
                return
            self.synthesize(a.reshape(1, n_symbols, -1), b, cp, out.reshape(1, -1), scale)
        return run

    def analyzer(self, n_symbols, cp, scale):
        """``run(x, a, b)``: :meth:`analyze` for one signal, ``b`` may be None."""
        def run(x, a, b):
            if n_symbols == 0:
                return
            self.analyze(x.reshape(1, -1), cp, a.reshape(1, n_symbols, -1),
                         None if b is None else b.reshape(1, n_symbols, -1), scale)
        return run


def ofdm_runner(n: int, dtype: np.dtype, bins_a: np.ndarray, bins_b: np.ndarray):
    """Prepared fused OFDM operations for FFT size *n* and complex *dtype*.

    *bins_a* and *bins_b* are distinct FFT positions (natural order) of the
    two value tables.  See :class:`_OfdmRunner` for the contract.
    """
    return _OfdmRunner(n, dtype, bins_a, bins_b)


def info() -> dict:
    """Facts about this backend for :func:`tonebank.backend_info`."""
    return {"numpy_version": np.__version__}


# The kernel operations of the other modem stages: numpy twins, one module per
# family (each states its contract), re-exported here as the interface.
from ._numpy_channel import channel_fir  # noqa: E402,F401
from ._numpy_fbmc import fbmc_runner  # noqa: E402,F401
from ._numpy_filterbank import fofdm_runner, wola_runner  # noqa: E402,F401
from ._numpy_papr import slm_runner  # noqa: E402,F401
from ._numpy_sync import halves_correlation  # noqa: E402,F401
from ._numpy_fixed import fixed_fft_runner  # noqa: E402,F401
