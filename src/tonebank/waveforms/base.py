"""The protocol every waveform of the library follows.

A waveform turns a frequency grid ``(..., n_symbols, n_fft)`` (bins in
natural FFT order, see :mod:`tonebank.plan`) into time-domain samples
``(..., n_samples)`` and back.  Leading dimensions are batch; complex64
stays complex64, everything else runs in complex128.

Overlap.  A waveform whose symbols ring on past their nominal end
(windowed or filtered symbols) has a :attr:`Waveform.tail` of that many
samples.  ``synthesize`` of ``S`` symbols then returns
``n_samples(S) + tail`` samples: the burst with its ringing, so that
bursts placed ``n_samples(S)`` apart and added give the continuous
signal.  ``analyze`` takes the same ``n_samples(S) + tail`` samples (the
nominal symbols and the ringing of the last one) and returns ``S``
symbols.  For CP-OFDM the tail is 0 and both lengths are ``n_samples(S)``.

Streaming: :meth:`Waveform.stream_synthesizer` and
:meth:`Waveform.stream_analyzer` return objects that accept the same
signal in arbitrary chunks and give exactly the one-shot result, carrying
whatever state a symbol boundary needs between calls: the symbol count
(for prefix patterns and pilots) and the ``tail`` samples of overlap.
"""

from __future__ import annotations

import abc
import threading

import numpy as np

__all__ = ["StreamAnalyzer", "StreamSynthesizer", "Waveform"]


class Waveform(abc.ABC):
    """Interface of the library's multicarrier waveforms.

    Attributes a waveform provides: :attr:`plan`, :attr:`latency` and
    :attr:`tail` (in samples), :meth:`n_samples` (samples taken by a
    number of symbols).
    """

    @property
    @abc.abstractmethod
    def plan(self):
        """The :class:`~tonebank.CarrierPlan` the waveform carries."""

    @property
    def latency(self) -> int:
        """The delay in samples between a symbol's first input and its first output sample."""
        return 0

    @property
    def tail(self) -> int:
        """The number of samples a burst rings on after its last symbol's nominal end."""
        return 0

    @abc.abstractmethod
    def n_samples(self, n_symbols: int, start_symbol: int = 0) -> int:
        """Samples that ``n_symbols`` symbols take, from symbol ``start_symbol`` on."""

    @abc.abstractmethod
    def synthesize(self, grid, *, start_symbol: int = 0) -> np.ndarray:
        """Frequency grid ``(..., n_symbols, n_fft)`` to samples ``(..., n_samples)``."""

    @abc.abstractmethod
    def analyze(self, samples, *, start_symbol: int = 0) -> np.ndarray:
        """Samples ``(..., n_samples)`` to the frequency grid ``(..., n_symbols, n_fft)``."""

    # ---- pickling ----------------------------------------------------------
    #: Attributes that hold prepared kernel runners (C pointers), call caches
    #: or locks: dropped when a waveform is pickled (e.g. sent to a worker
    #: process of a sweep) and rebuilt empty, then refilled on first use.
    _transient: tuple = ()

    def __getstate__(self):
        state = self.__dict__.copy()
        for name in self._transient:
            state.pop(name, None)
        return state

    def __setstate__(self, state):
        self.__dict__.update(state)
        for name in self._transient:
            setattr(self, name, threading.Lock() if name.endswith("lock") else {})

    def stream_synthesizer(self, *, start_symbol: int = 0) -> StreamSynthesizer:
        """A streaming synthesizer (see :class:`StreamSynthesizer`)."""
        return StreamSynthesizer(self, start_symbol=start_symbol)

    def stream_analyzer(self, *, start_symbol: int = 0) -> StreamAnalyzer:
        """A streaming analyzer (see :class:`StreamAnalyzer`)."""
        return StreamAnalyzer(self, start_symbol=start_symbol)


class StreamSynthesizer:
    """Synthesize a long signal from grid chunks of any number of symbols.

    Feeding the symbols of a grid in chunks returns, concatenated, exactly
    what ``waveform.synthesize(grid)`` returns in one call: the symbol
    count (for prefix patterns and pilot sequences) carries over between
    calls, and the last :attr:`Waveform.tail` samples of each chunk are
    held back and added to the start of the next.  Each :meth:`feed`
    returns the ``n_samples`` of its symbols that are final;
    :meth:`flush` returns the held tail.  For waveforms whose symbols do
    not overlap (CP-OFDM) each chunk's samples are final at once.

    Parameters
    ----------
    waveform : Waveform
    start_symbol : int, default 0
        Index of the first symbol fed.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> ofdm = tonebank.CpOfdm(tonebank.CarrierPlan.centered(16, 12, cp_length=[5, 4]))
    >>> grid = np.ones((5, 16), complex)
    >>> stream = ofdm.stream_synthesizer()
    >>> parts = [stream.feed(grid[:2]), stream.feed(grid[2:])]
    >>> np.allclose(np.concatenate(parts, axis=-1), ofdm.synthesize(grid))
    True
    """

    def __init__(self, waveform: Waveform, *, start_symbol: int = 0):
        self._waveform = waveform
        self._next = int(start_symbol)
        self._last = None
        self._held = None   # the overlap carried into the next chunk

    @property
    def next_symbol(self) -> int:
        """Index of the next symbol to be fed."""
        return self._next

    def feed(self, grid) -> np.ndarray:
        """Synthesize the next symbols; returns their samples ``(..., n)``."""
        grid = np.asarray(grid)
        out = self._waveform.synthesize(grid, start_symbol=self._next)
        self._next += grid.shape[-2]
        tail = self._waveform.tail
        if tail:
            if self._held is not None:
                if self._held.shape[:-1] != out.shape[:-1]:
                    raise ValueError(
                        f"grid has batch shape {out.shape[:-1]}, but the stream started "
                        f"with {self._held.shape[:-1]}; every chunk must have the same "
                        "batch shape")
                out[..., :tail] += self._held
            self._held = out[..., out.shape[-1] - tail:].copy()
            out = out[..., :out.shape[-1] - tail]
        self._last = out
        return out

    def flush(self) -> np.ndarray:
        """End the stream; returns the samples still held back.

        That is the :attr:`Waveform.tail` of the last symbol (the ringing
        past its nominal end).  Symbols that do not overlap (CP-OFDM) hold
        nothing back: the result is empty, with the batch shape and dtype
        of the fed chunks.
        """
        if self._held is not None:
            held, self._held = self._held, None
            return held
        if self._last is None:
            return np.zeros(0, dtype=np.complex128)
        return np.zeros(self._last.shape[:-1] + (0,), dtype=self._last.dtype)


class StreamAnalyzer:
    """Analyze a long signal arriving in sample chunks of any length.

    Each :meth:`feed` returns the grid of the symbols completed so far
    (possibly none) and keeps the samples of an incomplete symbol for the
    next call, so the concatenated results equal one call of
    ``waveform.analyze`` on the whole signal.  A symbol is complete once
    its samples and the :attr:`Waveform.tail` after them have arrived;
    the tail stays held, since it also belongs to the next symbol.  Every
    chunk must have the same leading (batch) shape.

    Parameters
    ----------
    waveform : Waveform
    start_symbol : int, default 0
        Index of the first symbol in the stream.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> ofdm = tonebank.CpOfdm(tonebank.CarrierPlan.centered(16, 12, cp_length=4))
    >>> x = ofdm.synthesize(np.ones((3, 16), complex))
    >>> stream = ofdm.stream_analyzer()
    >>> [stream.feed(x[:30]).shape, stream.feed(x[30:]).shape]
    [(1, 16), (2, 16)]
    >>> stream.pending
    0
    """

    def __init__(self, waveform: Waveform, *, start_symbol: int = 0):
        self._waveform = waveform
        self._next = int(start_symbol)
        self._first = self._next
        self._held = None

    @property
    def next_symbol(self) -> int:
        """Index of the next symbol to be completed."""
        return self._next

    @property
    def pending(self) -> int:
        """The number of samples held back (the start of a symbol not yet complete).

        The :attr:`Waveform.tail` of the last complete symbol is held as
        well but not counted: a stream may end right after it.
        """
        held = 0 if self._held is None else self._held.shape[-1]
        if self._next == self._first:   # no symbol yet: everything held is pending
            return held
        return max(0, held - self._waveform.tail)

    def feed(self, samples) -> np.ndarray:
        """Add samples ``(..., m)``; returns the grid of the symbols now complete."""
        samples = np.asarray(samples)
        if samples.ndim == 0:
            raise ValueError("samples must have at least one axis (time)")
        if self._held is not None:
            if self._held.shape[:-1] != samples.shape[:-1]:
                raise ValueError(
                    f"samples has leading shape {samples.shape[:-1]}, but the stream "
                    f"started with {self._held.shape[:-1]}; every chunk must have the same "
                    "batch shape")
            samples = np.concatenate((self._held, samples), axis=-1)
        wf = self._waveform
        tail = wf.tail
        # Whole symbols in what we have (prefix patterns make lengths vary),
        # each with the overlap that follows it.
        count, used = 0, 0
        while True:
            step = wf.n_samples(1, self._next + count)
            if used + step + tail > samples.shape[-1]:
                break
            used += step
            count += 1
        if count:
            grid = wf.analyze(samples[..., :used + tail], start_symbol=self._next)
        else:
            # No symbol complete: an empty grid of the right shape, from the
            # length the protocol gives zero symbols (tail samples).
            empty = np.zeros(samples.shape[:-1] + (tail,), dtype=samples.dtype)
            grid = wf.analyze(empty, start_symbol=self._next)
        self._held = samples[..., used:].copy()
        self._next += count
        return grid

    def flush(self) -> None:
        """End the stream.

        Raises
        ------
        ValueError
            When samples of an incomplete symbol are still held (see
            :attr:`pending`): nothing is dropped silently.
        """
        if self.pending:
            raise ValueError(
                f"the stream ends inside a symbol: {self.pending} samples are held and "
                f"symbol {self._next} needs {self._waveform.n_samples(1, self._next)}")
