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


# -- the OFDM chain (test_03_ofdm.py) ----------------------------------------

#: FFT sizes, symbols per call and dtypes of the OFDM benchmarks: a
#: subframe-sized batch (140 symbols) and one symbol (streaming, call-bound).
OFDM_SIZES = (64, 256, 1024, 4096)
OFDM_SYMBOLS = (140, 1)
OFDM_DTYPES = ("complex128", "complex64")

#: Implementation key -> (transmit label, receive label), in report order.
OFDM_IMPLEMENTATIONS = {
    "tb_c": ("CpOfdm.modulate [c] (fused)", "CpOfdm.demodulate [c] (fused)"),
    "tb_c_grid": ("CpOfdm.synthesize(grid) [c]", "CpOfdm.analyze [c]"),
    "tb_numpy": ("CpOfdm.modulate [numpy]", "CpOfdm.demodulate [numpy]"),
    "numpy_chain": ("numpy: zeros, scatter, ifft, concatenate",
                    "numpy: reshape, slice, fft, gather"),
    "fftw_bare": ("pyfftw FFTW.execute, inverse (S, n) only",
                  "pyfftw FFTW.execute, forward (S, n) only"),
}

#: Direction of an OFDM benchmark (its ``kind``).
OFDM_KINDS = {
    "ofdm_tx": "transmit: data (and pilots) to samples with cyclic prefixes",
    "ofdm_rx": "receive: samples to data and pilots",
}

#: Pilots on every OFDM_PILOT_SPACING-th active subcarrier.  n=64 takes the
#: counts of the IEEE 802.11 OFDM PHY instead (IEEE Std 802.11, clause 17:
#: 52 used subcarriers of 64, 48 data + 4 pilots, a 16-sample guard
#: interval -- from memory); the pilot positions differ slightly, which
#: does not change the cost.
OFDM_PILOT_SPACING = 12


def ofdm_plan_args(n: int) -> dict:
    """Arguments of ``CarrierPlan.centered`` for the OFDM benchmark of size *n*.

    About 80 % of the bins active (an even count, centred, DC empty),
    pilots every ~12 active bins, cyclic prefix n/4.  At n=64 this is
    52 active bins with a pilot every 13th (48 data + 4 pilots) and a
    16-sample prefix, the 802.11a-like layout.
    """
    if n == 64:
        return dict(n_fft=64, n_active=52, pilot_spacing=13, pilot_offset=6, cp_length=16)
    return dict(n_fft=n, n_active=2 * round(0.4 * n), pilot_spacing=OFDM_PILOT_SPACING,
                pilot_offset=OFDM_PILOT_SPACING // 2, cp_length=n // 4)


def label_ofdm(benchmark, impl: str, kind: str, plan, symbols: int, dtype: str) -> None:
    """Record what an OFDM *benchmark* measures (read back by report.py).

    Besides the keys of :func:`label` (``batch`` is the number of symbols)
    it stores ``symbols``, the plan's ``cp``, ``n_data`` and ``n_pilots``
    and ``samples``: the time-domain samples one call produces or consumes
    (prefixes included), the numerator of the throughput figure.
    """
    if impl not in OFDM_IMPLEMENTATIONS or kind not in OFDM_KINDS:
        raise ValueError(f"unknown OFDM implementation {impl!r} or kind {kind!r}")
    n, cp = plan.n_fft, plan.cp_lengths[0]
    benchmark.group = f"{kind} {dtype} n={n} symbols={symbols}"
    benchmark.extra_info.update(
        impl=impl, kind=kind, n=n, batch=symbols, symbols=symbols, dtype=dtype, cp=cp,
        n_data=plan.n_data, n_pilots=plan.n_pilots, samples=symbols * (n + cp))


def check_close(result, reference: np.ndarray, dtype: str, what: str = "result") -> None:
    """Assert ``max |result - reference| / max |reference| <= TOLERANCE[dtype]``.

    The reference is computed in complex128 by the caller.
    """
    result = np.asarray(result)
    assert result.shape == reference.shape, (what, result.shape, reference.shape)
    error = float(np.max(np.abs(result - reference)) / np.max(np.abs(reference)))
    assert error <= TOLERANCE[dtype], (
        f"{what}: relative error {error:.3g} exceeds {TOLERANCE[dtype]:g} for {dtype}")
