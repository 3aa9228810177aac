"""FBMC/OQAM synthesis on the C kernel across its chunks (and the numpy twin).

The C kernel (``csrc/tb_fbmc.c``) takes the symbols of a burst in chunks
of 4 to 32 (as many as keep about 256 KiB of half-symbol rows: 32 for 64
subcarriers, 4 in float64 and 12 in float32 for 1024, 4 for 4096) and
gathers every output half period from the rows of the chunk and of the
2K - 1 half-symbols before it.  The symbol counts below straddle those
chunk sizes, with batches of two signals, both start-symbol parities,
overlap factors 1 to 5 and both precisions.  Like every test, each runs
once per backend (conftest.py), so the numpy twin is held to the same
model.

Outside reference: the OQAM signal model (P. Siohan, C. Siclet,
N. Lacaille, "Analysis and design of OFDM/OQAM systems based on filterbank
theory", IEEE Trans. Signal Processing 50(5), 2002, from memory, not
re-read: staggered real half-symbols with phase j^(k+n), the prototype
centred at K M / 2), each
half-symbol's period from ``scipy.fft.ifft`` (a general-purpose reference
library), periodically extended and weighted by the prototype: two
transforms per symbol and none of the kernel's shared-FFT symmetry,
chunking or tap ordering.
"""

import numpy as np
import pytest
import scipy.fft

import tonebank
from tonebank import CarrierPlan, FbmcOqam

# The house tolerances relative to the largest sample (float64 ~1e-12,
# float32 ~1e-5, as in test_fbmc.py), widened by sqrt(K m) / 4 as in
# benchmarks/test_06_fbmc.py: each sample is a sum of K m filter terms
# whose rounding errors add up like a random walk (common practice, no
# source).
TOL = {np.complex128: 1e-12, np.complex64: 2e-5}


def reference_synthesize(grid, h, overlap, start_symbol):
    """The OQAM signal model (Siohan et al. 2002), one scipy.fft per half-symbol."""
    n_symbols, m = grid.shape
    k = np.arange(m)
    centre = np.exp(-1j * np.pi * k * overlap)   # exp(-2 pi i k (K m / 2) / m)
    out = np.zeros(n_symbols * m + overlap * m - m // 2, complex)
    for s in range(n_symbols):
        for half, a in ((0, grid[s].real), (1, grid[s].imag)):
            n = 2 * (start_symbol + s) + half
            period = scipy.fft.ifft(a * 1j ** ((k + n) % 4) * centre, norm="forward")
            off = (2 * s + half) * m // 2
            out[off:off + overlap * m] += h * np.tile(period, overlap)
    return out


def sine_taps(m, overlap):
    """Any real taps will do for the network (unit energy sine window)."""
    h = np.sin(np.pi * (np.arange(overlap * m) + 0.5) / (overlap * m))
    return h / np.linalg.norm(h)


def random_grid(rng, shape, dtype):
    return (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)).astype(dtype)


def check_against_model(x, grid, h, overlap, start, dtype):
    assert x.dtype == dtype
    m = grid.shape[-1]
    widen = max(1.0, np.sqrt(overlap * m) / 4)
    for b in range(grid.shape[0]):
        ref = reference_synthesize(grid[b].astype(complex), h, overlap, start)
        np.testing.assert_allclose(x[b], ref, rtol=0,
                                   atol=TOL[dtype] * widen * np.abs(ref).max())


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
@pytest.mark.parametrize("m, n_symbols", [
    (64, 1), (64, 31), (64, 32), (64, 33), (64, 65),          # chunks of 32
    (1024, 3), (1024, 4), (1024, 5), (1024, 9),                # chunks of 4 (float64)
    (1024, 12), (1024, 13), (1024, 25),                        # and of 12 (float32)
    (12, 40),                                                  # m % 4 == 2, partial blocks
])
@pytest.mark.parametrize("start", [0, 1])
def test_fbmc_oqam_bursts_across_chunks(m, n_symbols, start, dtype):
    plan = CarrierPlan.centered(m, m - 4)
    fbmc = FbmcOqam(plan, overlap=4)
    grid = random_grid(np.random.default_rng([m, n_symbols, start]), (2, n_symbols, m), dtype)
    x = fbmc.synthesize(grid, start_symbol=start)   # per backend (conftest.py)
    assert x.shape == (2, n_symbols * m + fbmc.tail)
    check_against_model(x, grid, fbmc.prototype, 4, start, dtype)


def test_fbmc_oqam_4096_subcarriers_across_chunks():
    fbmc = FbmcOqam(CarrierPlan.centered(4096, 3276), overlap=4)
    grid = random_grid(np.random.default_rng(7), (1, 9, 4096), np.complex128)
    x = fbmc.synthesize(grid, start_symbol=3)
    check_against_model(x, grid, fbmc.prototype, 4, 3, np.complex128)


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
@pytest.mark.parametrize("overlap", [1, 2, 3, 4, 5])
@pytest.mark.parametrize("m, n_symbols", [(16, 70), (1024, 9)])
def test_kernel_overlap_factors_across_chunks(m, n_symbols, overlap, dtype, backend):
    # FbmcOqam tabulates its prototype for K = 3 and 4 only; the kernel
    # itself takes any K and any real taps (the kernel operation, as the
    # waveform calls it: grid (B, S, m), out (B, S m + tail)).
    if backend != "c":
        pytest.skip("the C kernel operation itself")
    from tonebank._kernel import _c

    h = sine_taps(m, overlap)
    runner = _c.fbmc_runner(m, overlap, dtype, h)
    grid = random_grid(np.random.default_rng([m, overlap]), (2, n_symbols, m), dtype)
    out = np.full((2, n_symbols * m + overlap * m - m // 2), np.nan, dtype)
    runner.synthesize(grid, 1, out)
    check_against_model(out, grid, h, overlap, 1, dtype)
