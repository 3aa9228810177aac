"""Fixed-point FFT: Q15 on the C kernel against the float32 C FFT and the numpy integer model.

Cases (``extra_info["kind"] == "fixed_fft"``, ``extra_info["case"]``):

``q15_c``        ``FixedFft(n, fmt="q15", schedule="halve")`` on the C backend;
``q15_c_block``  the same with block floating point (``schedule="block"``);
``q31_c``        ``FixedFft(n, fmt="q31", schedule="halve")`` on the C backend;
``f32_c``        ``tonebank.FftPlan(n, dtype=complex64)`` on the C backend (the
                 floating-point transform a port would otherwise use);
``q15_numpy``    ``FixedFft(n, fmt="q15", schedule="halve")`` on the numpy
                 backend (the integer model).

n in {64, 256, 1024}, ``BATCH`` transforms per call.  The Q15 result is
checked once outside the timed call against the numpy model (identical
integers); the float32 one against ``numpy.fft.fft`` (1e-5 relative).
Timings on shared machines are noisy: only ratios within one run count.
"""

from __future__ import annotations

import numpy as np
import pytest

import tonebank
from tonebank.fixedpoint import FixedFft

SIZES = (64, 256, 1024)
BATCH = 100
C_AVAILABLE = tonebank.backend_info()["c_available"]
needs_c = pytest.mark.skipif(not C_AVAILABLE, reason="C kernel unavailable")


def _codes(n: int, bits: int, dtype) -> np.ndarray:
    rng = np.random.default_rng(n)
    hi = 1 << (bits - 1)                  # half scale: "halve" never saturates
    return rng.integers(-hi, hi, size=(BATCH, n, 2)).astype(dtype)


def _label(benchmark, case: str, n: int) -> None:
    benchmark.group = f"fixed-point FFT n={n} batch={BATCH}"
    benchmark.extra_info.update(kind="fixed_fft", case=case, n=n, batch=BATCH)


@needs_c
@pytest.mark.parametrize("n", SIZES)
@pytest.mark.parametrize("case, fmt, schedule", [("q15_c", "q15", "halve"),
                                                 ("q15_c_block", "q15", "block"),
                                                 ("q31_c", "q31", "halve")])
def test_fixed_c(benchmark, n, case, fmt, schedule):
    _label(benchmark, case, n)
    fft = FixedFft(n, fmt=fmt, schedule=schedule)
    x = _codes(n, 15 if fmt == "q15" else 31, np.int16 if fmt == "q15" else np.int32)
    with tonebank.use_backend("numpy"):
        expected = fft(x)
    with tonebank.use_backend("c"):
        got = fft(x)
        for a, b in zip(expected, got):
            np.testing.assert_array_equal(b, a)
        benchmark(fft, x)


@needs_c
@pytest.mark.parametrize("n", SIZES)
def test_float32_c(benchmark, n):
    _label(benchmark, "f32_c", n)
    rng = np.random.default_rng(n)
    x = (rng.standard_normal((BATCH, n)) + 1j * rng.standard_normal((BATCH, n))).astype(
        np.complex64)
    with tonebank.use_backend("c"):
        plan = tonebank.FftPlan(n, dtype=np.complex64)
        y = plan(x)
        ref = np.fft.fft(x.astype(np.complex128), axis=-1)
        assert np.max(np.abs(y - ref)) <= 1e-5 * np.max(np.abs(ref))
        benchmark(plan, x)


@pytest.mark.parametrize("n", SIZES)
def test_fixed_numpy(benchmark, n):
    _label(benchmark, "q15_numpy", n)
    fft = FixedFft(n, fmt="q15", schedule="halve")
    x = _codes(n, 15, np.int16)
    with tonebank.use_backend("numpy"):
        benchmark(fft, x)
