"""Synchronisation: the timing metric over 10^6 samples and the whole receiver chain.

Cases (``extra_info["kind"]``):

``sync_metric``    ``tonebank.sync.timing_metric(x, 32)`` over ``N_SAMPLES``
                   complex samples (period and window 32, the two-halves
                   preamble of a 64-point plan), both normalisations;
``sync_op``        the kernel op ``halves_correlation`` alone (C), the
                   running sums without the metric's division;
``sync_naive``     what a user writes without the op: ``numpy.convolve``
                   of the lag products and energies with a box of ones
                   (``numpy_convolve``);
``sync_receiver``  ``FrameReceiver.receive`` on a stream of ``N_FRAMES``
                   frames (two-halves preamble, 20 16-QAM symbols each on
                   the 64-point plan, TDL-free, 25 dB, an offset of 0.7
                   spacings): detection, synchronisation, analysis,
                   estimation, equalisation and LLRs.

Implementations (``extra_info["impl"]``): ``tb_c`` (C backend), ``tb_numpy``
(numpy backend), ``kernel_c`` (op alone), ``numpy_convolve``.  Each result is
checked once outside the timed call: the metric against the numpy
backend (float64 to 1e-9 relative, the running sums restart every 4096
outputs), the receiver by its bit errors (none).  Timings on shared
machines are noisy: only ratios within one run count.
"""

from __future__ import annotations

import numpy as np
import pytest

import tonebank
from tonebank import sync

N_SAMPLES = 10 ** 6
PERIOD = 32
N_FRAMES = 20
C_AVAILABLE = tonebank.backend_info()["c_available"]
PLAN = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16, sample_rate=20e6)


@pytest.fixture(scope="module")
def stream() -> np.ndarray:
    rng = np.random.default_rng(12)
    x = rng.standard_normal(N_SAMPLES) + 1j * rng.standard_normal(N_SAMPLES)
    x.flags.writeable = False
    return x


@pytest.fixture(scope="module")
def reference(stream) -> dict:
    out = {}
    with tonebank.use_backend("numpy"):
        for norm in ("second_half", "both_halves"):
            out[norm] = sync.timing_metric(stream, PERIOD, normalization=norm).metric
    return out


@pytest.fixture(scope="module")
def frames() -> tuple:
    rng = np.random.default_rng(13)
    fmt = sync.FrameFormat(PLAN, tonebank.Constellation.qam(16), 20)
    bits = rng.integers(0, 2, (N_FRAMES, fmt.n_bits))
    tx = fmt.transmit(bits)
    gap = np.zeros((N_FRAMES, 300))
    x = np.concatenate((gap, tx), axis=1).reshape(-1)
    x = x * np.exp(2j * np.pi * 0.7 * np.arange(x.size) / 64)
    sigma = np.sqrt(np.mean(np.abs(tx) ** 2) / 10 ** 2.5 / 2)
    x = x + sigma * (rng.standard_normal(x.size) + 1j * rng.standard_normal(x.size))
    return fmt, bits, x


def _label(benchmark, kind: str, impl: str, case: str, n: int) -> None:
    benchmark.group = f"sync {kind} {case}"
    benchmark.extra_info.update(kind=kind, impl=impl, case=case, n=n)


@pytest.mark.parametrize("normalization", ["second_half", "both_halves"])
@pytest.mark.parametrize("backend", ["c", "numpy"])
def test_timing_metric(benchmark, stream, reference, backend, normalization):
    if backend == "c" and not C_AVAILABLE:
        pytest.skip("C kernel unavailable")
    _label(benchmark, "sync_metric", "tb_c" if backend == "c" else "tb_numpy",
           normalization, N_SAMPLES)
    with tonebank.use_backend(backend):
        result = benchmark(sync.timing_metric, stream, PERIOD, normalization=normalization)
    np.testing.assert_allclose(result.metric, reference[normalization], rtol=1e-9, atol=1e-12)


def test_kernel_op_alone(benchmark, stream, reference):
    if not C_AVAILABLE:
        pytest.skip("C kernel unavailable")
    from tonebank._kernel import _c_sync

    _label(benchmark, "sync_op", "kernel_c", "second_half", N_SAMPLES)
    x = np.ascontiguousarray(stream)
    p, r = benchmark(_c_sync.halves_correlation, x, PERIOD, PERIOD)
    np.testing.assert_allclose(np.abs(p) ** 2 / r ** 2, reference["second_half"], rtol=1e-9)


def test_numpy_convolve_reference(benchmark, stream, reference):
    _label(benchmark, "sync_naive", "numpy_convolve", "second_half", N_SAMPLES)
    box = np.ones(PERIOD)

    def naive(x):
        prod = np.conj(x[:-PERIOD]) * x[PERIOD:]
        p = np.convolve(prod, box, mode="valid")
        r = np.convolve(np.abs(x[PERIOD:]) ** 2, box, mode="valid")
        return np.abs(p) ** 2 / r ** 2

    result = benchmark(naive, stream)
    np.testing.assert_allclose(result, reference["second_half"], rtol=1e-9)


@pytest.mark.parametrize("backend", ["c", "numpy"])
def test_receiver_chain(benchmark, frames, backend):
    if backend == "c" and not C_AVAILABLE:
        pytest.skip("C kernel unavailable")
    fmt, bits, x = frames
    _label(benchmark, "sync_receiver", "tb_c" if backend == "c" else "tb_numpy",
           f"{N_FRAMES}x20sym", x.size)
    receiver = sync.FrameReceiver(fmt)
    with tonebank.use_backend(backend):
        reports = benchmark(receiver.receive, x)
    assert len(reports) == N_FRAMES
    assert all(int(np.sum(r.bits != b)) == 0 for r, b in zip(reports, bits))
