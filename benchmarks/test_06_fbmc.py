"""FBMC/OQAM synthesis and analysis: the fused C kernel, its numpy twin and CP-OFDM.

For n in {256, 1024, 4096} subcarriers, 140 symbols per call (a batch)
and 1 (streaming, call-bound), complex128, one timed call per test:

Transmit (``kind="fbmc_tx"``), implementations (``extra_info["impl"]``):

``fbmc_c``       ``FbmcOqam(plan, overlap=4).synthesize(grid)`` on the C
                 backend: per symbol one inverse FFT for both OQAM
                 half-symbols, the polyphase network gathered per output
                 half period from a chunk of half-symbol rows
                 (``csrc/tb_fbmc.c``);
``fbmc_numpy``   the same call on the numpy backend (the fallback);
``ofdm_c``       ``CpOfdm(plan).synthesize(grid)`` on the C backend, the SAME
                 plan (same carriers, no prefix): the brief's "CP-OFDM of
                 the same plan";
``ofdm_cp_c``    the same with a cyclic prefix of n/4 (the CP-OFDM plans of
                 test_03_ofdm.py), for scale.

Receive (``kind="fbmc_rx"``): ``analyze`` of the same four, FBMC from its
``S n + tail`` samples, CP-OFDM from its symbols.

The plan: a centred allocation of about 80 % of the bins, DC empty
(``CarrierPlan.centered(n, 2 round(0.4 n))``), no pilots.  The waveform
objects are made once per session and every test makes one untimed call
first.  Each FBMC result is checked once, after timing, against a
straightforward complex128 implementation of the signal model with
``scipy.fft`` (two transforms per symbol, no shared-FFT symmetry, the
prototype applied to each half-symbol separately); CP-OFDM results
against the unitary DFT definition.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest
import scipy.fft

import tonebank
from bench_common import check_close

#: Sizes, symbols per call and overlap factor of this file.
FBMC_SIZES = (256, 1024, 4096)
FBMC_SYMBOLS = (140, 1)
FBMC_OVERLAP = 4
DTYPE = "complex128"

#: Implementation key -> label (report order); read by report.py.
FBMC_IMPLEMENTATIONS = {
    "fbmc_c": "FbmcOqam [c] (fused)",
    "fbmc_numpy": "FbmcOqam [numpy]",
    "ofdm_c": "CpOfdm [c], same plan (no prefix)",
    "ofdm_cp_c": "CpOfdm [c], prefix n/4",
}
FBMC_KINDS = {"fbmc_tx": "synthesize", "fbmc_rx": "analyze"}


def label_fbmc(benchmark, impl: str, kind: str, n: int, symbols: int) -> None:
    """Record what an FBMC *benchmark* measures (read back by report.py)."""
    if impl not in FBMC_IMPLEMENTATIONS or kind not in FBMC_KINDS:
        raise ValueError(f"unknown FBMC implementation {impl!r} or kind {kind!r}")
    benchmark.group = f"{kind} {DTYPE} n={n} symbols={symbols}"
    benchmark.extra_info.update(impl=impl, kind=kind, n=n, batch=symbols, symbols=symbols,
                                dtype=DTYPE)


CASES = [pytest.param(n, s, id=f"{n}x{s}") for n in FBMC_SIZES for s in FBMC_SYMBOLS]


# -- reference implementation of the signal model ---------------------------------


def reference_tx(grid: np.ndarray, h: np.ndarray, overlap: int) -> np.ndarray:
    """OQAM synthesis from the definition (see FbmcOqam's Notes), scipy.fft."""
    s_count, m = grid.shape
    kk = overlap
    k = np.arange(m)
    out = np.zeros(s_count * m + kk * m - m // 2, complex)
    centre = np.exp(-1j * np.pi * k * kk)          # exp(-2 pi i k (KM/2) / M)
    for s in range(s_count):
        for half, a in ((0, grid[s].real), (1, grid[s].imag)):
            n = 2 * s + half
            spectrum = a * 1j ** ((k + n) % 4) * centre
            period = scipy.fft.ifft(spectrum, norm="forward")
            off = n * m // 2
            out[off:off + kk * m] += h * np.tile(period, kk)
    return out


def reference_rx(x: np.ndarray, h: np.ndarray, overlap: int, s_count: int) -> np.ndarray:
    """Matched filter, phase and real part per half-symbol, scipy.fft."""
    m = len(h) // overlap
    k = np.arange(m)
    centre = np.exp(1j * np.pi * k * overlap)
    out = np.zeros((s_count, m), complex)
    for s in range(s_count):
        for half in (0, 1):
            n = 2 * s + half
            off = n * m // 2
            folded = (x[off:off + overlap * m] * h).reshape(overlap, m).sum(axis=0)
            d = scipy.fft.fft(folded) * centre * np.conj(1j ** ((k + n) % 4))
            out[s] += d.real * (1j if half else 1)
    return out


# -- inputs ----------------------------------------------------------------------


@dataclass(frozen=True)
class FbmcCase:
    plan: tonebank.CarrierPlan
    fbmc: tonebank.FbmcOqam
    ofdm: tonebank.CpOfdm
    ofdm_cp: tonebank.CpOfdm
    grid: np.ndarray          # (S, n) QPSK on the used bins
    samples: np.ndarray       # FBMC burst of the grid, S n + tail
    ofdm_samples: np.ndarray  # CP-OFDM symbols of the grid, no prefix
    ofdm_cp_samples: np.ndarray


_CASES: dict = {}
_WAVEFORMS: dict = {}


@pytest.fixture(scope="session")
def fbmc_case():
    """Return ``make(n, symbols)``: an :class:`FbmcCase`, made once."""

    def make(n: int, symbols: int) -> FbmcCase:
        key = (n, symbols)
        if key not in _CASES:
            if n not in _WAVEFORMS:
                plan = tonebank.CarrierPlan.centered(n, 2 * round(0.4 * n))
                _WAVEFORMS[n] = (plan, tonebank.FbmcOqam(plan, overlap=FBMC_OVERLAP),
                                 tonebank.CpOfdm(plan),
                                 tonebank.CpOfdm(plan.replace(cp_length=n // 4)))
            plan, fbmc, ofdm, ofdm_cp = _WAVEFORMS[n]
            rng = np.random.default_rng([6, n, symbols])
            qpsk = (rng.choice([-1.0, 1.0], (symbols, plan.n_data))
                    + 1j * rng.choice([-1.0, 1.0], (symbols, plan.n_data))) / np.sqrt(2)
            grid = plan.place(qpsk.ravel())
            with tonebank.use_backend("numpy"):
                arrays = dict(grid=grid, samples=fbmc.synthesize(grid),
                              ofdm_samples=ofdm.synthesize(grid),
                              ofdm_cp_samples=ofdm_cp.synthesize(grid))
            for a in arrays.values():
                a.flags.writeable = False
            _CASES[key] = FbmcCase(plan=plan, fbmc=fbmc, ofdm=ofdm, ofdm_cp=ofdm_cp,
                                   **arrays)
        return _CASES[key]

    return make


def check_fbmc(result, reference: np.ndarray, n: int, what: str) -> None:
    """``max |result - reference| / max |reference|`` within the house
    complex128 tolerance (1e-12) widened by sqrt(K n) / 4: each value is a
    sum of K n filter terms whose rounding errors add up like a random
    walk (common practice, no source)."""
    result = np.asarray(result)
    assert result.shape == reference.shape, (what, result.shape, reference.shape)
    error = float(np.max(np.abs(result - reference)) / np.max(np.abs(reference)))
    limit = 1e-12 * max(1.0, np.sqrt(FBMC_OVERLAP * n) / 4)
    assert error <= limit, f"{what}: relative error {error:.3g} exceeds {limit:.3g}"


def check_tx(result, case: FbmcCase) -> None:
    ref = reference_tx(case.grid, case.fbmc.prototype, FBMC_OVERLAP)
    check_fbmc(result, ref, case.plan.n_fft, "FBMC synthesis")


def check_rx(result, case: FbmcCase) -> None:
    ref = reference_rx(case.samples, case.fbmc.prototype, FBMC_OVERLAP, case.grid.shape[0])
    check_fbmc(result, ref, case.plan.n_fft, "FBMC analysis")


def ofdm_body(case: FbmcCase, cp: int) -> np.ndarray:
    body = scipy.fft.ifft(case.grid, axis=-1, norm="ortho")
    return np.concatenate((body[:, body.shape[1] - cp:], body), axis=-1).ravel()


# -- transmit --------------------------------------------------------------------


@pytest.mark.parametrize(("n", "symbols"), CASES)
def test_tx_fbmc_c(benchmark, c_backend, fbmc_case, n, symbols):
    case = fbmc_case(n, symbols)
    label_fbmc(benchmark, "fbmc_c", "fbmc_tx", n, symbols)
    case.fbmc.synthesize(case.grid)
    result = benchmark(case.fbmc.synthesize, case.grid)
    check_tx(result, case)


@pytest.mark.parametrize(("n", "symbols"), CASES)
def test_tx_fbmc_numpy(benchmark, numpy_backend, fbmc_case, n, symbols):
    case = fbmc_case(n, symbols)
    label_fbmc(benchmark, "fbmc_numpy", "fbmc_tx", n, symbols)
    case.fbmc.synthesize(case.grid)
    result = benchmark(case.fbmc.synthesize, case.grid)
    check_tx(result, case)


@pytest.mark.parametrize(("n", "symbols"), CASES)
def test_tx_ofdm_c(benchmark, c_backend, fbmc_case, n, symbols):
    case = fbmc_case(n, symbols)
    label_fbmc(benchmark, "ofdm_c", "fbmc_tx", n, symbols)
    case.ofdm.synthesize(case.grid)
    result = benchmark(case.ofdm.synthesize, case.grid)
    check_close(result, ofdm_body(case, 0), DTYPE)


@pytest.mark.parametrize(("n", "symbols"), CASES)
def test_tx_ofdm_cp_c(benchmark, c_backend, fbmc_case, n, symbols):
    case = fbmc_case(n, symbols)
    label_fbmc(benchmark, "ofdm_cp_c", "fbmc_tx", n, symbols)
    case.ofdm_cp.synthesize(case.grid)
    result = benchmark(case.ofdm_cp.synthesize, case.grid)
    check_close(result, ofdm_body(case, n // 4), DTYPE)


# -- receive ---------------------------------------------------------------------


@pytest.mark.parametrize(("n", "symbols"), CASES)
def test_rx_fbmc_c(benchmark, c_backend, fbmc_case, n, symbols):
    case = fbmc_case(n, symbols)
    label_fbmc(benchmark, "fbmc_c", "fbmc_rx", n, symbols)
    case.fbmc.analyze(case.samples)
    result = benchmark(case.fbmc.analyze, case.samples)
    check_rx(result, case)


@pytest.mark.parametrize(("n", "symbols"), CASES)
def test_rx_fbmc_numpy(benchmark, numpy_backend, fbmc_case, n, symbols):
    case = fbmc_case(n, symbols)
    label_fbmc(benchmark, "fbmc_numpy", "fbmc_rx", n, symbols)
    case.fbmc.analyze(case.samples)
    result = benchmark(case.fbmc.analyze, case.samples)
    check_rx(result, case)


@pytest.mark.parametrize(("n", "symbols"), CASES)
def test_rx_ofdm_c(benchmark, c_backend, fbmc_case, n, symbols):
    case = fbmc_case(n, symbols)
    label_fbmc(benchmark, "ofdm_c", "fbmc_rx", n, symbols)
    case.ofdm.analyze(case.ofdm_samples)
    result = benchmark(case.ofdm.analyze, case.ofdm_samples)
    check_close(result, case.grid, DTYPE)


@pytest.mark.parametrize(("n", "symbols"), CASES)
def test_rx_ofdm_cp_c(benchmark, c_backend, fbmc_case, n, symbols):
    case = fbmc_case(n, symbols)
    label_fbmc(benchmark, "ofdm_cp_c", "fbmc_rx", n, symbols)
    case.ofdm_cp.analyze(case.ofdm_cp_samples)
    result = benchmark(case.ofdm_cp.analyze, case.ofdm_cp_samples)
    check_close(result, case.grid, DTYPE)



