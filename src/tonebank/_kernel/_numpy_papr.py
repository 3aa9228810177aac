"""numpy twin of the fused selective-mapping search (see :mod:`._c_papr`).

The numpy version materialises the candidates, a block of symbols at a
time (at most about ``_BLOCK_ELEMENTS`` complex values), and applies the
same selection rule as the C kernel, candidate after candidate, so both
backends pick the same winner.
"""

from __future__ import annotations

import numpy as np

#: Complex values held at once per block of candidates (32 MiB in complex128).
_BLOCK_ELEMENTS = 1 << 21


class _SlmRunner:
    """Selective mapping for grids of ``n`` bins on an ``m``-point transform.

    ``select(grid, phases, out, index, peak, scale, tie_margin)``:
    ``grid`` (S, n) and ``phases`` (U, n) C-contiguous of the runner's
    dtype, natural FFT order; ``out`` (S, m) of that dtype receives the
    winning candidate ``scale * IDFT_m`` (bin k < n - n//2 at position k,
    the others at k + m - n), ``index`` (S,) ``numpy.uintp`` its number and
    ``peak`` (S,) float64 its peak power.  Candidate u replaces the best so
    far when its peak is below ``best * (1 - tie_margin)`` (in float64),
    so ties go to the lowest index.
    """

    def __init__(self, n: int, m: int, dtype):
        self._n, self._m = n, m
        self._dtype = np.dtype(dtype)
        h = n - n // 2
        self._pos = np.concatenate((np.arange(h), np.arange(h, n) + (m - n)))

    def select(self, grid, phases, out, index, peak, scale, tie_margin):
        n_symbols = grid.shape[0]
        n_cand = phases.shape[0]
        m = self._m
        block = max(1, _BLOCK_ELEMENTS // max(1, n_cand * m))
        real = np.float32 if self._dtype == np.complex64 else np.float64
        for start in range(0, n_symbols, block):
            stop = min(n_symbols, start + block)
            spec = np.zeros((stop - start, n_cand, m), dtype=self._dtype)
            spec[..., self._pos] = grid[start:stop, None, :] * phases[None, :, :]
            cand = np.fft.ifft(spec, axis=-1, norm="forward").astype(self._dtype, copy=False)
            cand *= self._dtype.type(scale)
            power = np.square(cand.real, dtype=real) + np.square(cand.imag, dtype=real)
            peaks = power.max(axis=-1).astype(np.float64)
            best = peaks[:, 0].copy()
            win = np.zeros(stop - start, dtype=np.intp)
            factor = 1.0 - tie_margin
            for u in range(1, n_cand):
                better = peaks[:, u] < best * factor
                best[better] = peaks[better, u]
                win[better] = u
            rows = np.arange(stop - start)
            out[start:stop] = cand[rows, win]
            index[start:stop] = win
            peak[start:stop] = best


def slm_runner(n: int, m: int, dtype):
    """Prepared selective-mapping search (see :class:`_SlmRunner`)."""
    return _SlmRunner(n, m, dtype)
