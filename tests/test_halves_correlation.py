"""The sliding-correlation kernel op behind the synchronisation metrics.

Reference: the definition, p[d] = sum_m conj(x[d+m]) x[d+m+L] and r[d] =
sum_m |x[d+m+L]|^2, evaluated directly with numpy over
``numpy.lib.stride_tricks.sliding_window_view`` windows (a general-purpose
reference; numpy's pairwise summation).  Both backends run every test
(conftest.py).
"""

import numpy as np
import pytest

from tonebank import _kernel


def _reference(x, period, window):
    x = x.astype(np.complex128)
    n_out = x.shape[-1] - period - window + 1
    early = np.lib.stride_tricks.sliding_window_view(x, window, axis=-1)
    later = np.lib.stride_tricks.sliding_window_view(x[..., period:], window, axis=-1)
    early, later = early[..., :n_out, :], later[..., :n_out, :]
    return (np.sum(early.conj() * later, axis=-1),
            np.sum(later.real**2 + later.imag**2, axis=-1))


def _signal(rng, shape, dtype):
    return (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)).astype(dtype)


@pytest.mark.parametrize("dtype, tol", [(np.complex128, 1e-12), (np.complex64, 2e-6)])
@pytest.mark.parametrize("shape, period, window", [
    ((50,), 1, 1), ((3, 200), 16, 16), ((2, 2, 300), 64, 16), ((41,), 8, 33)])
def test_matches_the_definition(dtype, tol, shape, period, window):
    rng = np.random.default_rng(7)
    x = _signal(rng, shape, dtype)
    p, r = _kernel.active().halves_correlation(x, period, window)
    want_p, want_r = _reference(x, period, window)
    real = np.float32 if dtype == np.complex64 else np.float64
    assert p.dtype == dtype and r.dtype == real
    assert p.shape == r.shape == shape[:-1] + (shape[-1] - period - window + 1,)
    # relative to the window energy, the natural scale of both sums
    scale = 2.0 * window
    np.testing.assert_allclose(p, want_p, rtol=0, atol=tol * scale)
    np.testing.assert_allclose(r, want_r, rtol=0, atol=tol * scale)


def test_long_stream_error_does_not_grow():
    """Across many restart blocks (4096 outputs each) the error stays at the
    level of a short sum: compare a stream's outputs near its end with the
    direct sums there."""
    rng = np.random.default_rng(3)
    x = _signal(rng, 200_000, np.complex128)
    p, r = _kernel.active().halves_correlation(x, 64, 64)
    tail = x[-2000:]
    want_p, want_r = _reference(tail, 64, 64)
    np.testing.assert_allclose(p[-want_p.size:], want_p, rtol=0, atol=1e-12 * 128)
    np.testing.assert_allclose(r[-want_r.size:], want_r, rtol=0, atol=1e-12 * 128)


def test_repeated_halves_give_a_plateau():
    """A symbol whose second half repeats its first (the structure of a
    two-halves preamble) gives |p| = r exactly at its start (Cauchy-Schwarz
    with equality)."""
    rng = np.random.default_rng(5)
    half = _signal(rng, 32, np.complex128)
    x = np.concatenate((_signal(rng, 50, np.complex128), half, half,
                        _signal(rng, 50, np.complex128)))
    p, r = _kernel.active().halves_correlation(x, 32, 32)
    assert abs(abs(p[50]) - r[50]) < 1e-12 * r[50]
    # elsewhere |p| stays within the Cauchy-Schwarz bound sqrt(early energy * r)
    early = np.lib.stride_tricks.sliding_window_view(np.abs(x)**2, 32)[:p.size].sum(axis=1)
    assert np.all(np.abs(p) <= np.sqrt(early * r) * (1 + 1e-12))


def test_zero_outputs_and_empty_batch():
    kern = _kernel.active()
    p, r = kern.halves_correlation(np.zeros(7, np.complex128), 4, 4)
    assert p.shape == r.shape == (0,)
    p, r = kern.halves_correlation(np.zeros((0, 20), np.complex64), 4, 4)
    assert p.shape == r.shape == (0, 13) and p.dtype == np.complex64


@pytest.mark.parametrize("args, error, words", [
    ((np.zeros(10), 2, 2), TypeError, "x must be a complex64 or complex128"),
    ((np.zeros(10, complex), 0, 2), ValueError, "period must be >= 1"),
    ((np.zeros(10, complex), 2, 0), ValueError, "window must be >= 1"),
    ((np.zeros(10, complex), 2.5, 2), TypeError, "period must be an integer"),
    ((np.zeros(5, complex), 4, 3), ValueError, "need at least 6"),
    ((np.zeros((), complex), 1, 1), ValueError, "at least one axis"),
])
def test_bad_arguments(args, error, words):
    with pytest.raises(error, match=words):
        _kernel.active().halves_correlation(*args)


def test_backends_agree():
    rng = np.random.default_rng(11)
    x = _signal(rng, (2, 10_000), np.complex128)
    from tonebank._kernel import _numpy
    p, r = _kernel.active().halves_correlation(x, 80, 16)
    p0, r0 = _numpy.halves_correlation(x, 80, 16)
    np.testing.assert_allclose(p, p0, rtol=0, atol=1e-12 * 32)
    np.testing.assert_allclose(r, r0, rtol=0, atol=1e-12 * 32)
