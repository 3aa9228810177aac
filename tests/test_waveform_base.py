"""The generic streaming classes with an overlapping (tail > 0) waveform.

The reference is the one-shot call itself: the protocol in
:mod:`tonebank.waveforms.base` promises that chunked synthesis, once the
held tails are added, and chunked analysis give exactly what a single
call gives.  The waveform below is a minimal one of our own with real
overlap: each symbol is its grid row repeated, times a ramp longer than
the symbol spacing, so neighbouring symbols add.
"""

import numpy as np
import pytest
from hypothesis import given, strategies as st

from tonebank.waveforms.base import StreamAnalyzer, StreamSynthesizer, Waveform

SPACING, LENGTH = 6, 10        # samples between symbol starts, samples per symbol
TAIL = LENGTH - SPACING


class _Overlapping(Waveform):
    """Symbol s: ``grid[s, :]`` tiled to LENGTH samples, times a ramp, at s*SPACING."""

    ramp = np.linspace(0.5, 1.5, LENGTH)

    @property
    def plan(self):
        return None

    @property
    def tail(self):
        return TAIL

    def n_samples(self, n_symbols, start_symbol=0):
        return n_symbols * SPACING

    def synthesize(self, grid, *, start_symbol=0):
        grid = np.asarray(grid, complex)
        n = grid.shape[-2]
        out = np.zeros(grid.shape[:-2] + (n * SPACING + TAIL,), complex)
        for s in range(n):
            body = np.resize(grid[..., s, :], grid.shape[:-2] + (LENGTH,))
            out[..., s * SPACING:s * SPACING + LENGTH] += body * self.ramp * (1 + start_symbol + s)
        return out

    def analyze(self, samples, *, start_symbol=0):
        samples = np.asarray(samples)
        n = (samples.shape[-1] - TAIL) // SPACING
        assert samples.shape[-1] == n * SPACING + TAIL   # the protocol's length
        rows = [samples[..., s * SPACING:s * SPACING + 3] * (1 + start_symbol + s)
                for s in range(n)]
        return np.stack(rows, axis=-2) if rows else np.zeros(samples.shape[:-1] + (0, 3))


def _cuts(total, fractions):
    points = sorted({int(f * total) for f in fractions})
    return [0] + [p for p in points if 0 < p < total] + [total]


@given(st.lists(st.floats(0, 1), max_size=4), st.integers(0, 5))
def test_chunked_synthesis_equals_one_shot(fractions, start):
    wf = _Overlapping()
    grid = np.arange(2 * 7 * 3).reshape(2, 7, 3) + 1j
    whole = wf.synthesize(grid, start_symbol=start)
    stream = wf.stream_synthesizer(start_symbol=start)
    cuts = _cuts(7, fractions)
    parts = [stream.feed(grid[:, a:b]) for a, b in zip(cuts, cuts[1:])]
    parts.append(stream.flush())
    np.testing.assert_allclose(np.concatenate(parts, axis=-1), whole, rtol=0, atol=1e-12)


@given(st.lists(st.floats(0, 1), max_size=5), st.integers(0, 5))
def test_chunked_analysis_equals_one_shot(fractions, start):
    wf = _Overlapping()
    x = wf.synthesize(np.ones((7, 3)) * np.arange(1, 8)[:, None], start_symbol=start)
    whole = wf.analyze(x, start_symbol=start)
    stream = wf.stream_analyzer(start_symbol=start)
    cuts = _cuts(x.shape[-1], fractions)
    parts = [stream.feed(x[a:b]) for a, b in zip(cuts, cuts[1:])]
    stream.flush()                       # only the last tail is held: no error
    np.testing.assert_array_equal(np.concatenate(parts, axis=-2), whole)


def test_analyzer_counts_a_short_start_as_pending():
    stream = StreamAnalyzer(_Overlapping())
    stream.feed(np.ones(TAIL - 1))       # not even one tail: all of it is pending
    assert stream.pending == TAIL - 1
    with pytest.raises(ValueError, match="ends inside a symbol"):
        stream.flush()


def test_synthesizer_refuses_a_changed_batch_shape():
    stream = StreamSynthesizer(_Overlapping())
    stream.feed(np.ones((2, 1, 3)))
    with pytest.raises(ValueError, match="batch shape"):
        stream.feed(np.ones((3, 1, 3)))
