"""numpy twin of the FBMC/OQAM kernel operation (see :mod:`tonebank._kernel`).

The algorithm is the one of ``csrc/tb_fbmc.c`` written with whole-array
numpy steps, so that both backends give the same numbers to rounding.

Conventions (shared with the C kernel)
--------------------------------------
``m`` subcarriers (even), overlap ``K``, prototype ``h`` of ``K m`` real
taps (unit energy).  A complex grid value ``q[k]`` of symbol ``s`` is sent
as two real half-symbols, ``Re q`` at half-symbol ``2 s`` and ``Im q`` at
``2 s + 1``; half-symbol ``n`` starts ``n m / 2`` samples into the burst.
The per-bin phase is ``c[k] = j**k * (-1)**(k K)`` (``k`` the natural FFT
position) and the per-half-symbol phase ``j**n`` with ``n`` counted from
symbol 0 of the stream, so only the parity of the start symbol matters.

Synthesis of one symbol uses ONE inverse FFT for both half-symbols: with
``z = IDFT(q * c)`` (unscaled) the two real-input transforms are

    x_re[l] = (z[l] + conj(z[(m/2 - l) mod m])) / 2
    x_im[l] = (z[l] - conj(z[(m/2 - l) mod m])) / (2 j)

because ``conj(c[k]) = (-1)**k c[k]`` makes each of them satisfy
``conj(x[-l]) = x[l + m/2]``.  Then ``h`` (periodically extended ``x``)
is added into the output: the polyphase network as an overlap-add.

Analysis folds each half-symbol's ``K m`` samples into ``m`` with the
prototype (``v[p] = sum_i h[p + i m] y[p + i m]``) and, for the real
decisions, needs ONE forward FFT per symbol by the same symmetry:

    t[p] = (v0[p] + conj(v0[(m/2 - p) mod m]) + v1[p] - conj(v1[(m/2 - p) mod m])) / 2
    q_hat[k] = sigma * conj(c[k]) * DFT(t)[k] = a_re + j a_im

with ``sigma = (-1)**symbol``.  The "separate" mode returns instead the
complex matched-filter outputs of both half-symbols (two FFTs), for a
receiver that equalises before taking the real part.
"""

from __future__ import annotations

import numpy as np


def bin_phases(m: int, overlap: int) -> np.ndarray:
    """``c[k] = j**k (-1)**(k K)``, k = 0 .. m-1 (complex128, exact)."""
    k = np.arange(m)
    quarter = np.array([1, 1j, -1, -1j])
    return quarter[k % 4] * np.where((k * overlap) % 2, -1.0, 1.0)


class _FbmcRunner:
    """FBMC/OQAM synthesis and analysis for one (m, K, dtype) (numpy).

    The contract, shared with the C twin (:mod:`._c_fbmc`):

    ``synthesize(grid, start_symbol, out)``
        ``grid``: (B, S, m) complex values, C-contiguous; ``out``: (B, S m
        + tail) with ``tail = (K - 1/2) m``, every sample written.
    ``analyze(x, start_symbol, out, separate)``
        ``x``: (B, S m + tail); ``out``: (B, S, m) real decisions packed as
        ``a_re + j a_im`` when ``separate`` is false, else (B, S, 2, m)
        complex matched-filter outputs of the two half-symbols (their real
        parts are the decisions).

    All arrays have the runner's dtype (complex64 or complex128).
    """

    def __init__(self, m: int, overlap: int, dtype, prototype: np.ndarray):
        self._m = m
        self._k = overlap
        self._dtype = np.dtype(dtype)
        self._h = np.asarray(prototype, dtype=np.float64)
        self._c = bin_phases(m, overlap)
        self._mirror = (m // 2 - np.arange(m)) % m
        # The prototype cut into 2K hops of m/2 samples: hop i of every
        # half-symbol is weighted by h_hops[i].
        self._h_hops = self._h.reshape(2 * overlap, m // 2)
        self._h_folds = self._h.reshape(overlap, m)

    @property
    def tail(self) -> int:
        return self._k * self._m - self._m // 2

    def synthesize(self, grid, start_symbol, out):
        m, kk, half = self._m, self._k, self._m // 2
        batch, n_symbols, _ = grid.shape
        out[...] = 0
        if n_symbols == 0 or batch == 0:
            return
        sigma = np.where((start_symbol + np.arange(n_symbols)) % 2, -0.5, 0.5)[:, None]
        z = np.fft.ifft(grid * self._c, axis=-1, norm="forward")
        w = np.conj(z[..., self._mirror])
        # (B, 2S, m): the time signals of the half-symbols in stream order.
        halves = np.empty((batch, 2 * n_symbols, m), np.complex128)
        halves[:, 0::2] = sigma * (z + w)
        halves[:, 1::2] = sigma * (z - w)
        n_hops = 2 * n_symbols + 2 * kk - 1
        acc = np.zeros((batch, n_hops, half), np.complex128)
        # Half-symbol n covers hops n .. n + 2K - 1; its hop i reads x at
        # (i mod 2) * m/2 .. (periodic extension of the m samples).
        for i in range(2 * kk):
            part = halves[:, :, (i % 2) * half:(i % 2 + 1) * half]
            acc[:, i:i + 2 * n_symbols] += self._h_hops[i] * part
        out[...] = acc.reshape(batch, n_hops * half)

    def _folds(self, x, n_symbols):
        """(B, 2S, m): each half-symbol's samples folded with the prototype."""
        m, kk, half = self._m, self._k, self._m // 2
        batch = x.shape[0]
        hops = x.reshape(batch, -1, half)      # (B, 2S + 2K - 1, m/2)
        v = np.zeros((batch, 2 * n_symbols, m), np.complex128)
        for i in range(2 * kk):
            seg = hops[:, i:i + 2 * n_symbols] * self._h_hops[i]
            v[:, :, (i % 2) * half:(i % 2 + 1) * half] += seg
        return v

    def analyze(self, x, start_symbol, out, separate):
        batch, n_symbols = out.shape[0], out.shape[1]
        if n_symbols == 0 or batch == 0:
            return
        sigma = np.where((start_symbol + np.arange(n_symbols)) % 2, -1.0, 1.0)[:, None]
        v = self._folds(x, n_symbols)
        v0, v1 = v[:, 0::2], v[:, 1::2]
        cc = np.conj(self._c)
        if separate:
            spec0 = np.fft.fft(v0, axis=-1)
            spec1 = np.fft.fft(v1, axis=-1)
            out[:, :, 0] = sigma * cc * spec0
            out[:, :, 1] = (-1j * sigma) * cc * spec1
            return
        mir = self._mirror
        t = 0.5 * (v0 + np.conj(v0[..., mir]) + v1 - np.conj(v1[..., mir]))
        out[...] = sigma * cc * np.fft.fft(t, axis=-1)


def fbmc_runner(m: int, overlap: int, dtype, prototype: np.ndarray):
    """Prepared FBMC/OQAM operations (see :class:`_FbmcRunner`)."""
    return _FbmcRunner(m, overlap, dtype, prototype)
