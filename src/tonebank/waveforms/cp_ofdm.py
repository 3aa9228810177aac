"""Cyclic-prefix OFDM: the plain multicarrier waveform.

Each symbol is the inverse DFT of its grid row, preceded by a copy of its
last ``cp`` samples (the cyclic prefix), so that a channel shorter than
the prefix acts on every subcarrier as one complex gain.
"""

from __future__ import annotations

import math
import threading

import numpy as np

from .. import _kernel
from .._checks import integer
from ..plan import CarrierPlan
from .base import Waveform

__all__ = ["CpOfdm"]


_C128 = np.dtype(np.complex128)
_C64 = np.dtype(np.complex64)
#: Entries kept in each per-waveform cache of prefix and pilot layouts
#: (enough for a symbol-by-symbol stream through a 127-symbol pilot
#: sequence without evictions).
_CACHE_SIZE = 256


def _complex_dtype(arr: np.ndarray, name: str) -> np.dtype:
    if arr.dtype is _C128 or arr.dtype == _C128:
        return _C128
    if arr.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric, got dtype {arr.dtype}")
    if arr.dtype in (np.complex64, np.float32, np.float16):
        return np.dtype(np.complex64)
    return np.dtype(np.complex128)


class CpOfdm(Waveform):
    r"""Cyclic-prefix OFDM on a carrier plan.

    Parameters
    ----------
    plan : CarrierPlan
        Subcarriers, prefix pattern and pilots.
    oversampling : int, default 1
        Integer factor L: symbols are synthesized with a zero-padded
        inverse FFT of ``L * n_fft`` points (and prefixes of ``L * cp``
        samples), so the signal is sampled L times faster with the same
        spectrum.  ``L * n_fft`` should be a product of 2, 3 and 5 for the
        C kernel (other sizes run on numpy).
    real : bool, optional
        When true (default false), a real-valued baseband (DMT, as in
        wireline and optical links): the signal is the Hermitian extension
        of the grid, ``x = 2 Re(IDFT)``, so only positive-frequency
        subcarriers may be used (the plan must place nothing on DC, on the
        Nyquist bin or below zero).

    Notes
    -----
    With :math:`N = L\,n_{fft}` and the grid row :math:`X_k` placed at FFT
    position :math:`k \bmod N` (``k`` the signed subcarrier index), the
    body of a symbol is the unitary inverse DFT

    .. math::

        x_j = \frac{1}{\sqrt N} \sum_k X_k\, e^{2\pi i jk/N},
        \qquad j = 0, \dots, N-1,

    and the transmitted symbol is :math:`x_{N-c}, \dots, x_{N-1}, x_0,
    \dots, x_{N-1}` for a prefix of :math:`c` samples.  Analysis skips the
    prefix and applies the unitary DFT, so ``analyze(synthesize(g)) == g``
    and a symbol's window energy equals its grid energy (Parseval).  In
    real mode :math:`x_j` is replaced by :math:`2\,\mathrm{Re}\,x_j`,
    which puts :math:`X_k` on bin :math:`k` and :math:`X_k^*` on
    :math:`-k`.

    In the C kernel each direction is one fused operation per symbol
    (scatter the used bins into the FFT workspace, transform, write body
    and prefix; or read the body in place, transform, gather), and
    :meth:`modulate` / :meth:`demodulate` fuse the plan's data and pilot
    placement as well.  Cost: one FFT of N points per symbol.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
    >>> ofdm = tonebank.CpOfdm(plan)
    >>> rng = np.random.default_rng(1)
    >>> data = np.exp(2j * np.pi * rng.random(10 * plan.n_data))
    >>> x = ofdm.modulate(data)
    >>> x.shape
    (800,)
    >>> rx_data, rx_pilots = ofdm.demodulate(x)
    >>> bool(np.allclose(rx_data, data))
    True
    """

    _transient = ("_runners", "_fast", "_lock")

    def __init__(self, plan: CarrierPlan, *, oversampling: int = 1, real: bool = False):
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        if not isinstance(real, bool):
            raise TypeError(f"real must be True or False, got {real!r}")
        self._plan = plan
        self._os = integer(oversampling, "oversampling", minimum=1)
        self._real = real
        n = plan.n_fft
        size = self._os * n
        if real:
            used = np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers))
            if used.min() < 1 or 2 * used.max() >= n:
                raise ValueError(
                    "plan must use only subcarriers 1 .. n_fft/2 - 1 for real=True (the "
                    "negative frequencies carry the mirror image), but it uses "
                    f"{int(used.min())} .. {int(used.max())}")
        # FFT position of every grid bin (natural order) in the N-point
        # transform: subcarrier k goes to k mod N, so oversampling pads the
        # middle of the spectrum with zeros.
        signed = np.arange(n)
        signed[signed >= n - n // 2] -= n
        self._grid_pos = (signed % size).astype(np.uintp)
        self._data_pos = (plan.data_subcarriers % size).astype(np.uintp)
        self._pilot_pos = (plan.pilot_subcarriers % size).astype(np.uintp)
        self._scale = 1.0 / np.sqrt(size)
        self._runners: dict = {}
        self._lock = threading.Lock()
        # Prefix lengths and default pilots per (n_symbols, phase): single
        # symbols are call-bound, so nothing is recomputed per call.
        self._layouts: dict = {}
        self._pilot_rows: dict = {}
        # Prepared single-signal calls (see _prepared): the whole per-call
        # work of the common case is one dict look-up and one kernel call.
        self._fast: dict = {}
        self._cp_period = len(plan.cp_lengths)
        self._phases = math.lcm(self._cp_period, plan.pilot_values.shape[0])
        self._n_data = plan.n_data
        self._n_pilots = plan.n_pilots

    # ---- description ---------------------------------------------------------

    @property
    def plan(self) -> CarrierPlan:
        """The carrier plan."""
        return self._plan

    @property
    def oversampling(self) -> int:
        """Oversampling factor L."""
        return self._os

    @property
    def real(self) -> bool:
        """Whether the baseband is real-valued (DMT)."""
        return self._real

    @property
    def fft_size(self) -> int:
        """The number of points of each transform, ``oversampling * plan.n_fft``."""
        return self._os * self._plan.n_fft

    @property
    def sample_rate(self) -> float | None:
        """Sample rate of the output in Hz (``oversampling * plan.sample_rate``)."""
        rate = self._plan.sample_rate
        return None if rate is None else rate * self._os

    def n_samples(self, n_symbols: int, start_symbol: int = 0) -> int:
        """Samples taken by ``n_symbols`` symbols from ``start_symbol`` (prefixes included)."""
        return self._os * self._plan.n_samples(n_symbols, start_symbol)

    def _layout(self, n_symbols: int, start: int) -> tuple[np.ndarray, int]:
        """Prefix lengths (uintp, in output samples) and total samples."""
        key = (n_symbols, start % len(self._plan.cp_lengths))
        hit = self._layouts.get(key)
        if hit is None:
            cp = (self._plan.cp_for(n_symbols, start) * self._os).astype(np.uintp)
            hit = (cp, int(cp.sum()) + n_symbols * self.fft_size)
            if len(self._layouts) >= _CACHE_SIZE:
                self._layouts.clear()
            self._layouts[key] = hit
        return hit

    def _default_pilots(self, n_symbols: int, start: int, dtype: np.dtype) -> np.ndarray:
        """The plan's pilots for these symbols, (1, n_symbols, n_pilots), contiguous."""
        key = (n_symbols, start % self._plan.pilot_values.shape[0], dtype.char)
        hit = self._pilot_rows.get(key)
        if hit is None:
            hit = np.ascontiguousarray(self._plan.pilots_for(n_symbols, start)[None],
                                       dtype=dtype)
            hit.flags.writeable = False
            if len(self._pilot_rows) >= _CACHE_SIZE:
                self._pilot_rows.clear()
            self._pilot_rows[key] = hit
        return hit

    def __repr__(self):
        extra = (f", oversampling={self._os}" if self._os != 1 else "") + \
            (", real=True" if self._real else "")
        return f"CpOfdm({self._plan!r}{extra})"

    # ---- kernel plumbing -----------------------------------------------------

    def _runner(self, dtype: np.dtype, compact: bool):
        impl = _kernel.active()
        key = (impl.NAME, dtype.char, compact)
        runner = self._runners.get(key)
        if runner is None:
            with self._lock:
                runner = self._runners.get(key)
                if runner is None:
                    if compact:      # data and pilots from their own tables
                        a, b = self._data_pos, self._pilot_pos
                    else:            # the whole grid as one table
                        a, b = self._grid_pos, np.zeros(0, np.uintp)
                    runner = self._new_runner(impl, dtype, a, b)
                    self._runners[key] = runner
        return runner

    def _new_runner(self, impl, dtype: np.dtype, bins_a: np.ndarray, bins_b: np.ndarray):
        """The kernel runner of this waveform for two bin tables (see :mod:`tonebank._kernel`).

        The one hook a waveform built on CP-OFDM's symbol layout overrides
        to run its own fused kernel operation.
        """
        return impl.ofdm_runner(self.fft_size, dtype, bins_a, bins_b)

    def _prepared(self, kind: str, dtype: np.dtype, count: int, start: int):
        """The kernel call for one signal from symbol ``start``, with
        prefixes and default pilots bound in.

        ``count`` is the number of symbols for the transmit kinds
        ("modulate", "synthesize") and the number of input samples for the
        receive kinds ("demodulate", "analyze"), so that a repeated call
        of the same size costs one look-up.  Returns ``(run, size)``: size
        is the number of output samples (transmit) or of symbols (receive).
        """
        impl = _kernel.active()
        # Only modulate binds pilots; the others repeat with the prefix pattern.
        phase = start % (self._phases if kind == "modulate" else self._cp_period)
        key = (impl.NAME, kind, dtype.char, count, phase)
        hit = self._fast.get(key)
        if hit is None:
            receive = kind in ("demodulate", "analyze")
            n_symbols = self._count_symbols(count, start) if receive else count
            cp, total = self._layout(n_symbols, start)
            if kind == "modulate":
                b = self._default_pilots(n_symbols, start, dtype) if self._n_pilots else None
                run = self._runner(dtype, True).synthesizer(n_symbols, cp, b, self._scale)
            elif kind == "demodulate":
                run = self._runner(dtype, True).analyzer(n_symbols, cp, self._scale)
            elif kind == "synthesize":
                run = self._runner(dtype, False).synthesizer(n_symbols, cp, None, self._scale)
            else:
                run = self._runner(dtype, False).analyzer(n_symbols, cp, self._scale)
            hit = (run, n_symbols if receive else total)
            with self._lock:
                if len(self._fast) >= _CACHE_SIZE:
                    self._fast.clear()
                self._fast[key] = hit
        return hit

    def _count_symbols(self, n: int, start_symbol: int) -> int:
        """Symbols in ``n`` samples: whole symbols and then :attr:`tail` samples."""
        tail = self.tail
        if tail:
            if n < tail:
                raise ValueError(
                    f"samples has {n} samples per signal, fewer than the {tail}-sample tail "
                    "that follows the last symbol (pass n_samples(S) + tail samples; "
                    "nothing is truncated)")
            try:
                return self._count_whole_symbols(n - tail, start_symbol)
            except ValueError as exc:
                raise ValueError(f"{exc}; the {tail}-sample tail of the last symbol was set "
                                 "aside first (pass n_samples(S) + tail samples)") from None
        return self._count_whole_symbols(n, start_symbol)

    def _count_whole_symbols(self, n: int, start_symbol: int) -> int:
        """Symbols in ``n`` samples, which must be whole symbols."""
        cps = self._plan.cp_lengths
        if len(cps) == 1:
            count, rest = divmod(n, self._os * (self._plan.n_fft + cps[0]))
            if not rest:
                return count
        per_period = [self._os * (self._plan.n_fft + c) for c in self._plan.cp_lengths]
        period = len(per_period)
        # Whole periods at once, then symbol by symbol.
        rotated = per_period[start_symbol % period:] + per_period[:start_symbol % period]
        full, rest = divmod(n, sum(rotated))
        count = full * period
        for length in rotated:
            if rest < length:
                break
            rest -= length
            count += 1
        if rest:
            need = rotated[count % period] - rest
            raise ValueError(
                f"samples has {n} samples per signal, which is {count} whole symbols and "
                f"{rest} samples over; symbol {start_symbol + count} needs {need} more "
                "(pass whole symbols; nothing is truncated)")
        return count

    def _start(self, start_symbol) -> int:
        if type(start_symbol) is int and start_symbol >= 0:
            return start_symbol
        return integer(start_symbol, "start_symbol", minimum=0)

    def _finish(self, out: np.ndarray, lead: tuple) -> np.ndarray:
        if self._real:
            out = 2 * out.real
        return out.reshape(lead + (out.shape[-1],))

    def _samples_in(self, samples) -> tuple[np.ndarray, tuple, int]:
        x = np.asarray(samples)
        if x.ndim == 0:
            raise ValueError("samples must have at least one axis (time)")
        if self._real:
            if x.dtype.kind == "c":
                raise TypeError("samples must be real for a real-valued (DMT) waveform, "
                                f"got dtype {x.dtype}")
        dtype = _complex_dtype(x, "samples")
        lead = x.shape[:-1]
        batch = math.prod(lead)
        x = np.ascontiguousarray(x.reshape(batch, x.shape[-1]), dtype=dtype)
        return x, lead, batch

    # ---- one-shot ------------------------------------------------------------

    def synthesize(self, grid, *, start_symbol: int = 0) -> np.ndarray:
        """Frequency grid to samples.

        Parameters
        ----------
        grid : array_like of complex
            Shape ``(..., n_symbols, n_fft)``.
            Bins in natural FFT order (see :mod:`tonebank.plan`); every bin
            is transmitted as given (:meth:`CarrierPlan.place` leaves the
            null subcarriers at zero).
        start_symbol : int, default 0
            Index of the first symbol in the prefix pattern.

        Returns
        -------
        ndarray
            Shape ``(..., n_samples)``.
            complex64 for complex64 (or float32) input, complex128
            otherwise; float64/float32 in real mode.

        Raises
        ------
        ValueError
            The grid's last axis is not ``n_fft`` or it has fewer than two
            axes.
        """
        if (type(grid) is np.ndarray and grid.ndim == 2 and type(start_symbol) is int
                and start_symbol >= 0 and grid.flags.c_contiguous
                and (grid.dtype is _C128 or grid.dtype is _C64)
                and grid.shape[1] == self._plan.n_fft):
            # One signal, ready for the kernel: the call-bound common case.
            run, total = self._prepared("synthesize", grid.dtype, grid.shape[0], start_symbol)
            out = np.empty(total, grid.dtype)
            run(grid, out)
            return 2 * out.real if self._real else out
        start = self._start(start_symbol)
        g = np.asarray(grid)
        n = self._plan.n_fft
        if g.ndim < 2 or g.shape[-1] != n:
            raise ValueError(f"grid must have shape (..., n_symbols, n_fft={n}), got {g.shape}")
        dtype = _complex_dtype(g, "grid")
        lead, n_symbols = g.shape[:-2], g.shape[-2]
        batch = math.prod(lead)
        a = np.ascontiguousarray(g.reshape(batch, n_symbols, n), dtype=dtype)
        cp, total = self._layout(n_symbols, start)
        out = np.empty((batch, total), dtype=dtype)
        self._runner(dtype, False).synthesize(a, None, cp, out, self._scale)
        return self._finish(out, lead)

    def analyze(self, samples, *, start_symbol: int = 0) -> np.ndarray:
        """Samples to the frequency grid (the inverse of :meth:`synthesize`).

        Parameters
        ----------
        samples : array_like
            Shape ``(..., n_samples)``.
            Whole symbols with their prefixes, the first one being symbol
            ``start_symbol`` of the prefix pattern.  Real in real mode.
        start_symbol : int, default 0

        Returns
        -------
        ndarray
            Shape ``(..., n_symbols, n_fft)``.
            complex64 for complex64/float32 input, complex128 otherwise.

        Raises
        ------
        ValueError
            When the samples are not a whole number of symbols (the message
            says how many samples are over and how many the next symbol
            needs).
        """
        if (type(samples) is np.ndarray and samples.ndim == 1 and not self._real
                and type(start_symbol) is int and start_symbol >= 0
                and samples.flags.c_contiguous
                and (samples.dtype is _C128 or samples.dtype is _C64)):
            run, n_symbols = self._prepared("analyze", samples.dtype, samples.shape[0],
                                            start_symbol)
            grid = np.empty((n_symbols, self._plan.n_fft), samples.dtype)
            run(samples, grid, None)
            return grid
        start = self._start(start_symbol)
        x, lead, batch = self._samples_in(samples)
        n_symbols = self._count_symbols(x.shape[-1], start)
        grid = np.empty((batch, n_symbols, self._plan.n_fft), dtype=x.dtype)
        self._runner(x.dtype, False).analyze(x, self._layout(n_symbols, start)[0], grid,
                                             None, self._scale)
        return grid.reshape(lead + grid.shape[1:])

    def modulate(self, data, pilots=None, *, start_symbol: int = 0) -> np.ndarray:
        """Data stream (and pilots) straight to samples.

        The same as ``synthesize(plan.place(data, pilots))`` but fused: the
        grid is never built.

        Parameters
        ----------
        data : array_like of complex
            Shape ``(..., n_symbols * n_data)``.
            Data values in the plan's order (see :mod:`tonebank.plan`).
        pilots : array_like of complex, optional
            Broadcastable to ``(..., n_symbols, n_pilots)``; default: the
            plan's pilot values from ``start_symbol``.
        start_symbol : int, default 0

        Returns
        -------
        ndarray
            Shape ``(..., n_samples)``.

        Raises
        ------
        ValueError
            Data that do not fill whole symbols (the message gives the
            padding needed), pilots that do not broadcast.
        """
        if (pilots is None and type(data) is np.ndarray and data.ndim == 1
                and type(start_symbol) is int and start_symbol >= 0
                and data.flags.c_contiguous and (data.dtype is _C128 or data.dtype is _C64)):
            n_symbols, rest = divmod(data.shape[0], self._n_data)
            if not rest:
                run, total = self._prepared("modulate", data.dtype, n_symbols, start_symbol)
                out = np.empty(total, data.dtype)
                run(data, out)
                return 2 * out.real if self._real else out
        start = self._start(start_symbol)
        plan = self._plan
        d = np.asarray(data)
        if d.ndim == 0:
            raise ValueError("data must have at least one axis (the data stream)")
        dtype = _complex_dtype(d, "data")
        n_symbols = plan.symbols_for(d.shape[-1])
        lead = d.shape[:-1]
        batch = math.prod(lead)
        a = np.ascontiguousarray(d.reshape(batch, n_symbols, plan.n_data), dtype=dtype)
        b = None
        if plan.n_pilots:
            if pilots is None:
                b = self._default_pilots(n_symbols, start, dtype)
            else:
                p = np.asarray(pilots)
                _complex_dtype(p, "pilots")
                want = lead + (n_symbols, plan.n_pilots)
                try:
                    shape = np.broadcast_shapes(p.shape, want)
                except ValueError:
                    raise ValueError(f"pilots of shape {p.shape} do not broadcast to {want} "
                                     "(..., n_symbols, n_pilots)") from None
                if shape != want:
                    raise ValueError(f"pilots of shape {p.shape} would enlarge the batch "
                                     f"shape {lead} of data")
                if p.ndim <= 2:
                    b = np.broadcast_to(p, (n_symbols, plan.n_pilots))[None]
                else:
                    b = np.broadcast_to(p, want).reshape(batch, n_symbols, plan.n_pilots)
                b = np.ascontiguousarray(b, dtype=dtype)
        elif pilots is not None and np.size(pilots):
            raise ValueError("pilots were given but the plan has no pilot subcarriers")
        cp, total = self._layout(n_symbols, start)
        out = np.empty((batch, total), dtype=dtype)
        self._runner(dtype, True).synthesize(a, b, cp, out, self._scale)
        return self._finish(out, lead)

    def demodulate(self, samples, *, start_symbol: int = 0) -> tuple[np.ndarray, np.ndarray]:
        """Samples straight to the data stream and pilots.

        The same as ``plan.take(analyze(samples))`` but fused.

        Parameters
        ----------
        samples : array_like
            Shape ``(..., n_samples)``.
            Whole symbols, as for :meth:`analyze`.
        start_symbol : int, default 0

        Returns
        -------
        data : ndarray
            Shape ``(..., n_symbols * n_data)``.
        pilots : ndarray
            Shape ``(..., n_symbols, n_pilots)``.
        """
        if (type(samples) is np.ndarray and samples.ndim == 1 and not self._real
                and type(start_symbol) is int and start_symbol >= 0
                and samples.flags.c_contiguous
                and (samples.dtype is _C128 or samples.dtype is _C64)):
            run, n_symbols = self._prepared("demodulate", samples.dtype, samples.shape[0],
                                            start_symbol)
            data = np.empty(n_symbols * self._n_data, samples.dtype)
            pilots = np.empty((n_symbols, self._n_pilots), samples.dtype)
            run(samples, data, pilots if self._n_pilots else None)
            return data, pilots
        start = self._start(start_symbol)
        plan = self._plan
        x, lead, batch = self._samples_in(samples)
        n_symbols = self._count_symbols(x.shape[-1], start)
        data = np.empty((batch, n_symbols, plan.n_data), dtype=x.dtype)
        pilots = np.empty((batch, n_symbols, plan.n_pilots), dtype=x.dtype)
        self._runner(x.dtype, True).analyze(x, self._layout(n_symbols, start)[0], data,
                                            pilots if plan.n_pilots else None, self._scale)
        return (data.reshape(lead + (n_symbols * plan.n_data,)),
                pilots.reshape(lead + (n_symbols, plan.n_pilots)))
