"""Constants and helpers shared by the benchmark files and report.py.

A plain module rather than conftest.py, so that test files import it by
name without relying on which conftest pytest loaded first.
"""

from __future__ import annotations

import numpy as np

#: Transform sizes, rows per call and dtypes compared by test_01_fft.py.
SIZES = (64, 256, 1024, 4096)
BATCHES = (1, 14, 140)
DTYPES = ("complex64", "complex128")

#: Implementation key -> label used in the report (in report order).
IMPLEMENTATIONS = {
    "c": "tonebank.fft [c]",
    "c_out": "tonebank.fft [c] out=",
    "c_plan": "tonebank.FftPlan [c] call",
    "c_bare": "C kernel execute (bare cffi call)",
    "tb_numpy": "tonebank.fft [numpy]",
    "numpy": "numpy.fft.fft",
    "scipy": "scipy.fft.fft workers=1",
    "fftw": "pyfftw FFTW.execute",
    "fftw_estimate": "pyfftw FFTW(FFTW_ESTIMATE)",
    "fftw_measure": "pyfftw FFTW(FFTW_MEASURE)",
}

#: What a benchmark's ``kind`` means.
KINDS = {
    "execute": "steady-state call, plan already made",
    "plan": "plan creation only",
    "first_call": "first call of a size: plan creation + transform",
}

#: Accepted relative error (max |error| / max |reference|) of the one
#: correctness check per benchmark: a few hundred ulps, far above FFT
#: round-off at these sizes and far below any real defect (common
#: practice, no source).  Same tolerances as the test suite.
TOLERANCE = {"complex64": 1e-5, "complex128": 1e-12}


# -- helpers -----------------------------------------------------------------


def label(benchmark, impl: str, kind: str, n: int, batch: int, dtype: str) -> None:
    """Record what *benchmark* measures (read back by report.py)."""
    if impl not in IMPLEMENTATIONS or kind not in KINDS:
        raise ValueError(f"unknown implementation {impl!r} or kind {kind!r}")
    benchmark.group = f"{kind} {dtype} n={n} batch={batch}"
    benchmark.extra_info.update(impl=impl, kind=kind, n=n, batch=batch, dtype=dtype)


def check_fft(result, x: np.ndarray, dtype: str) -> None:
    """Assert that *result* is the forward DFT of *x* along the last axis.

    The reference is :func:`numpy.fft.fft` computed in complex128.
    """
    result = np.asarray(result)
    assert result.shape == x.shape, (result.shape, x.shape)
    reference = np.fft.fft(x.astype(np.complex128), axis=-1)
    error = float(np.max(np.abs(result - reference)) / np.max(np.abs(reference)))
    assert error <= TOLERANCE[dtype], (
        f"relative error {error:.3g} exceeds {TOLERANCE[dtype]:g} for {dtype}")
