"""numpy twins of the windowed and filtered OFDM kernel operations.

Same contracts, preconditions and results (to rounding) as
:mod:`tonebank._kernel._c_filterbank`; see the interface list in
:mod:`tonebank._kernel`.  Layout and argument conventions are those of
:class:`tonebank._kernel._numpy._OfdmRunner` (arrays C-contiguous with the
runner's dtype; ``a`` (B, S, n_a), ``b`` None or (1 or B, S, n_b), ``cp``
(S,) ``numpy.uintp``).
"""

from __future__ import annotations

import numpy as np


def _offsets(n: int, cp: np.ndarray) -> np.ndarray:
    """Start of every symbol in its signal."""
    cp = cp.astype(np.intp)
    return np.concatenate(([0], np.cumsum(n + cp)[:-1])).astype(np.intp)


def _grid(dtype, n, bins_a, bins_b, a, b) -> np.ndarray:
    batch, n_symbols, _ = a.shape
    grid = np.zeros((batch, n_symbols, n), dtype=dtype)
    grid[..., bins_a] = a
    if b is not None and len(bins_b):
        grid[..., bins_b] = b
    return grid


class _Single:
    """The prepared single-signal calls shared by the runners below."""

    def synthesizer(self, n_symbols, cp, b, scale):
        """``run(a, out)``: :meth:`synthesize` for one signal, the rest fixed."""
        def run(a, out):
            if n_symbols == 0:
                out[...] = 0
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


class _WolaRunner(_Single):
    """Windowed-overlap-add OFDM (numpy); contract of ``tb_wola_*`` in
    ``csrc/tonebank.h``: ``synthesize(a, b, cp, out, scale)`` with ``out``
    (B, sum(n + cp) + tx); ``analyze(x, cp, a, b, scale)`` with ``x`` of the
    same length."""

    def __init__(self, n, dtype, bins_a, bins_b, tx_up, rx_up):
        self._n = n
        self._dtype = np.dtype(dtype)
        self._bins_a = np.asarray(bins_a, dtype=np.intp)
        self._bins_b = np.asarray(bins_b, dtype=np.intp)
        self._tx = np.asarray(tx_up, dtype=np.float64)
        self._rx = np.asarray(rx_up, dtype=np.float64)

    def synthesize(self, a, b, cp, out, scale):
        batch, n_symbols, _ = a.shape
        n, tx = self._n, self._tx.size
        if batch * n_symbols == 0:
            out[...] = 0
            return
        grid = _grid(self._dtype, n, self._bins_a, self._bins_b, a, b)
        body = np.fft.ifft(grid, axis=-1, norm="forward")
        body *= scale
        starts = _offsets(n, cp)
        c = cp.astype(np.intp)
        # CP-OFDM layout first: sample i of symbol s is body[(i - cp) mod n]
        lengths = n + c
        sym = np.repeat(np.arange(n_symbols), lengths)
        pos = np.arange(int(lengths.sum())) - np.repeat(starts, lengths)
        gather = sym * n + (pos - np.repeat(c, lengths)) % n
        out[:, :gather.size] = body.reshape(batch, -1)[:, gather]
        if tx:
            out[:, gather.size:] = 0
            up = self._tx.astype(self._dtype.type(0).real.dtype)
            ramp = starts[:, None] + np.arange(tx)        # (S, tx) ramp-up samples
            out[:, ramp] *= up
            # the suffix continues the body cyclically: body[0 .. tx)
            suffix = body[:, :, :tx] * up[::-1]
            out[:, (starts + c + n)[:, None] + np.arange(tx)] += suffix

    def analyze(self, x, cp, a, b, scale):
        batch, n_symbols, _ = a.shape
        n, rx = self._n, self._rx.size
        if batch * n_symbols == 0:
            return
        starts = _offsets(n, cp) + cp.astype(np.intp)       # FFT window starts
        rows = x[:, starts[:, None] + np.arange(n)]          # (B, S, n)
        if rx:
            up = self._rx.astype(self._dtype.type(0).real.dtype)
            early = x[:, starts[:, None] - rx + np.arange(rx)]
            rows[..., n - rx:] = up[::-1] * rows[..., n - rx:] + up * early
        spec = np.fft.fft(rows, axis=-1)
        np.multiply(spec[..., self._bins_a], scale, out=a, casting="same_kind")
        if b is not None and len(self._bins_b):
            np.multiply(spec[..., self._bins_b], scale, out=b, casting="same_kind")


def wola_runner(n, dtype, bins_a, bins_b, tx_up, rx_up):
    """Prepared WOLA OFDM operations: FFT size *n*, complex *dtype*, bin
    tables *bins_a* / *bins_b* (``numpy.uintp``), rising ramps *tx_up* and
    *rx_up* (float64).  See :class:`_WolaRunner`."""
    return _WolaRunner(n, dtype, bins_a, bins_b, tx_up, rx_up)


class _FofdmRunner(_Single):
    """Filtered OFDM by per-symbol fast convolution (numpy); contract of
    ``tb_fofdm_*`` in ``csrc/tonebank.h``: ``out``/``x`` hold
    sum(n + cp) + taps - 1 samples per signal."""

    def __init__(self, n, m, dtype, bins_a, bins_b, taps, gain):
        self._n, self._m = n, m
        self._dtype = np.dtype(dtype)
        self._bins_a = np.asarray(bins_a, dtype=np.intp)
        self._bins_b = np.asarray(bins_b, dtype=np.intp)
        h = np.asarray(taps, dtype=np.complex128)
        self._taps = h.size
        self._H = np.fft.fft(h, m)
        self._G = np.fft.fft(np.conj(h[::-1]), m)
        self._gain = np.asarray(gain, dtype=np.float64)
        if self._dtype == np.complex64:
            self._H = self._H.astype(np.complex64)
            self._G = self._G.astype(np.complex64)

    def synthesize(self, a, b, cp, out, scale):
        batch, n_symbols, _ = a.shape
        n, m, taps = self._n, self._m, self._taps
        out[...] = 0
        if batch * n_symbols == 0:
            return
        grid = _grid(self._dtype, n, self._bins_a, self._bins_b, a, b)
        body = np.fft.ifft(grid, axis=-1, norm="forward")
        body *= scale
        c = cp.astype(np.intp)
        i = np.arange(m)
        valid = i[None, :] < (n + c)[:, None]                       # (S, m)
        index = np.where(valid, (i[None, :] - c[:, None]) % n, 0)
        frames = np.where(valid, np.take_along_axis(
            body, np.broadcast_to(index, (batch,) + index.shape), axis=-1), 0)
        y = np.fft.ifft(np.fft.fft(frames, axis=-1) * self._H, axis=-1)
        starts = _offsets(n, cp)
        for s in range(n_symbols):
            length = n + int(c[s]) + taps - 1
            out[:, starts[s]:starts[s] + length] += y[:, s, :length]

    def analyze(self, x, cp, a, b, scale):
        batch, n_symbols, _ = a.shape
        n, m, taps = self._n, self._m, self._taps
        if batch * n_symbols == 0:
            return
        starts = _offsets(n, cp) + cp.astype(np.intp)
        seg = x[:, starts[:, None] + np.arange(n + taps - 1)]
        y = np.fft.ifft(np.fft.fft(seg, m, axis=-1) * self._G, axis=-1)
        spec = np.fft.fft(y[..., taps - 1:taps - 1 + n], axis=-1)
        gain = self._gain * scale
        np.multiply(spec[..., self._bins_a], gain[self._bins_a], out=a, casting="same_kind")
        if b is not None and len(self._bins_b):
            np.multiply(spec[..., self._bins_b], gain[self._bins_b], out=b,
                        casting="same_kind")


def fofdm_runner(n, m, dtype, bins_a, bins_b, taps, gain):
    """Prepared filtered-OFDM operations: FFT size *n*, convolution size
    *m*, complex *dtype*, bin tables, filter *taps* (complex128) and receive
    *gain* per FFT position (float64, n values).  See :class:`_FofdmRunner`."""
    return _FofdmRunner(n, m, dtype, bins_a, bins_b, taps, gain)
