"""The CP-OFDM chain, both directions: tonebank (C and numpy backends) and references.

For every FFT size n, symbols per call (140: a batch; 1: streaming) and
dtype of ``bench_common``, each implementation is timed on the same
input, one call per test.  The plan and the ``tonebank.CpOfdm`` object
are made once per session (fixture ``ofdm_case``) and every test makes
one untimed call first, so all plans and layout caches are warm: only
the steady-state call is timed.  Each result is checked once, after
timing, against a complex128 reference computed with ``scipy.fft`` from
the definition of CP-OFDM (the unitary inverse DFT of each grid row,
preceded by its last ``cp`` samples; the receiver drops the prefix and
applies the unitary DFT).

The plans (``bench_common.ofdm_plan_args``): a centred allocation of
about 80 % of the bins, DC empty, a pilot every ~12 active bins, cyclic
prefix n/4 (n=64: 48 data + 4 pilots, prefix 16).

Transmit (``kind="ofdm_tx"``), implementations (``extra_info["impl"]``):

``tb_c``         ``ofdm.modulate(data)`` on the C backend: data stream ->
                 data and pilot bins -> unitary IFFT -> cyclic prefix,
                 fused, one pass per symbol;
``tb_c_grid``    ``ofdm.synthesize(grid)`` on the C backend, from a ready
                 (S, n) grid (the placement is not timed);
``tb_numpy``     ``ofdm.modulate(data)`` on the numpy backend (the fallback);
``numpy_chain``  what a user writes in plain numpy: ``np.zeros``, scatter of
                 data and pilots, ``np.fft.ifft(norm="ortho")``,
                 ``np.concatenate`` of prefix and body, ``ravel``;
``fftw_bare``    ``pyfftw.FFTW.execute()`` of the (S, n) inverse transform
                 alone (no placement, no prefix, no scaling), planned once
                 with ``FFTW_MEASURE``, one thread, aligned preallocated
                 arrays: the floor of what any implementation can do.

Receive (``kind="ofdm_rx"``), the same keys: ``ofdm.demodulate(x)`` (C,
fused: prefix strip -> FFT -> data and pilots), ``ofdm.analyze(x)`` (C, to
the full grid), ``ofdm.demodulate(x)`` on the numpy backend, the numpy
chain (``reshape``, slice off the prefixes, ``np.fft.fft(norm="ortho")``,
gather the data and pilot bins) and the bare FFTW forward transform of
the (S, n) bodies.  The receive input is seeded complex Gaussian noise,
not a transmitted signal: its prefixes are not copies of the symbol
ends, so a receiver that read a prefix sample would fail the check.

complex64 runs the three implementations the targets compare (``tb_c``,
``numpy_chain``, ``fftw_bare``) to keep the file's run time near a
minute; complex128 runs all five.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest
import scipy.fft

import tonebank
from bench_common import (OFDM_DTYPES, OFDM_SIZES, OFDM_SYMBOLS, check_close, label_ofdm,
                          ofdm_plan_args)

#: Implementations timed in complex64 as well (see the module notes).
SINGLE_PRECISION_IMPLS = ("tb_c", "numpy_chain", "fftw_bare")


def cases(impl: str) -> list:
    """``(dtype, n, symbols)`` parameters of one implementation's tests."""
    dtypes = [d for d in OFDM_DTYPES
              if d == "complex128" or impl in SINGLE_PRECISION_IMPLS]
    return [pytest.param(dtype, n, symbols, id=f"{dtype}-{n}x{symbols}")
            for dtype in dtypes for n in OFDM_SIZES for symbols in OFDM_SYMBOLS]


PARAMS = ("dtype", "n", "symbols")


# -- inputs --------------------------------------------------------------------


@dataclass(frozen=True)
class OfdmCase:
    """One benchmark input: plan, waveform, read-only arrays and references."""

    plan: tonebank.CarrierPlan
    ofdm: tonebank.CpOfdm
    cp: int
    data: np.ndarray          # (S * n_data,) data stream, the case's dtype
    pilots: np.ndarray        # (S, n_pilots) the plan's pilot values
    grid: np.ndarray          # (S, n) data and pilots placed, natural FFT order
    tx_reference: np.ndarray  # (S * (n + cp),) complex128: the transmitted signal
    samples: np.ndarray       # (S * (n + cp),) receive input (seeded noise)
    rx_reference: np.ndarray  # (S, n) complex128: the DFT of each received body


def reference_tx(grid: np.ndarray, cp: int) -> np.ndarray:
    """CP-OFDM signal of *grid* from the definition, with scipy.fft in complex128."""
    body = scipy.fft.ifft(grid.astype(np.complex128), axis=-1, norm="ortho")
    return np.concatenate((body[:, body.shape[1] - cp:], body), axis=-1).ravel()


def reference_rx(samples: np.ndarray, n: int, cp: int) -> np.ndarray:
    """Unitary DFT of each received body (prefix dropped), scipy.fft in complex128."""
    bodies = samples.astype(np.complex128).reshape(-1, n + cp)[:, cp:]
    return scipy.fft.fft(bodies, axis=-1, norm="ortho")


_WAVEFORMS: dict = {}
_CASES: dict = {}


@pytest.fixture(scope="session")
def ofdm_case():
    """Return ``make(n, symbols, dtype)``: an :class:`OfdmCase`, made once.

    One ``CarrierPlan`` and one ``CpOfdm`` per size, shared by all its
    cases (prepared once, as a user would); the arrays are seeded and
    read-only.
    """

    def make(n: int, symbols: int, dtype: str) -> OfdmCase:
        key = (n, symbols, dtype)
        if key not in _CASES:
            if n not in _WAVEFORMS:
                plan = tonebank.CarrierPlan.centered(**ofdm_plan_args(n))
                # Alternating +1/-1 pilots: known values, as in any pilot
                # pattern; their content does not change the cost.
                plan = plan.replace(pilot_values=(-1.0) ** np.arange(plan.n_pilots))
                _WAVEFORMS[n] = (plan, tonebank.CpOfdm(plan))
            plan, ofdm = _WAVEFORMS[n]
            cp = plan.cp_lengths[0]
            rng = np.random.default_rng([3, n, symbols, np.dtype(dtype).itemsize])

            def noise(size):
                return ((rng.standard_normal(size) + 1j * rng.standard_normal(size))
                        / np.sqrt(2)).astype(dtype)

            data = noise(symbols * plan.n_data)
            pilots = plan.pilots_for(symbols).astype(dtype)
            grid = np.zeros((symbols, n), dtype)
            grid[:, plan.data_bins] = data.reshape(symbols, plan.n_data)
            grid[:, plan.pilot_bins] = pilots
            samples = noise(symbols * (n + cp))
            arrays = dict(data=data, pilots=pilots, grid=grid,
                          tx_reference=reference_tx(grid, cp), samples=samples,
                          rx_reference=reference_rx(samples, n, cp))
            for a in arrays.values():
                a.flags.writeable = False
            _CASES[key] = OfdmCase(plan=plan, ofdm=ofdm, cp=cp, **arrays)
        return _CASES[key]

    return make


# -- the plain numpy chains -------------------------------------------------------


def numpy_chain_tx(data, pilots, data_bins, pilot_bins, n, cp):
    """Transmit as a user would write it in numpy (one pass per step)."""
    s = pilots.shape[0]
    g = np.zeros((s, n), data.dtype)
    g[:, data_bins] = data.reshape(s, -1)
    g[:, pilot_bins] = pilots
    b = np.fft.ifft(g, axis=-1, norm="ortho")
    return np.concatenate((b[:, n - cp:], b), axis=-1).ravel()


def numpy_chain_rx(x, data_bins, pilot_bins, n, cp):
    """Receive as a user would write it in numpy."""
    y = x.reshape(-1, n + cp)[:, cp:]
    spectrum = np.fft.fft(y, axis=-1, norm="ortho")
    return spectrum[:, data_bins].ravel(), spectrum[:, pilot_bins]


def fftw_bare(pyfftw, shape, dtype, direction):
    """A pre-planned pyfftw.FFTW on aligned arrays ``(plan, input, output)``.

    ``FFTW_MEASURE`` overwrites the arrays while it plans: fill the input
    after this returns.
    """
    a = pyfftw.empty_aligned(shape, dtype=dtype)
    b = pyfftw.empty_aligned(shape, dtype=dtype)
    plan = pyfftw.FFTW(a, b, axes=(-1,), direction=direction, flags=("FFTW_MEASURE",),
                       threads=1)
    return plan, a, b


def check_rx(data, pilots, case: OfdmCase, dtype: str) -> None:
    plan = case.plan
    check_close(data, case.rx_reference[:, plan.data_bins].ravel(), dtype, "data")
    check_close(pilots, case.rx_reference[:, plan.pilot_bins], dtype, "pilots")


# -- transmit ------------------------------------------------------------------------


@pytest.mark.parametrize(PARAMS, cases("tb_c"))
def test_tx_tonebank_c(benchmark, c_backend, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "tb_c", "ofdm_tx", case.plan, symbols, dtype)
    case.ofdm.modulate(case.data)  # plans and layouts made outside the timed calls
    result = benchmark(case.ofdm.modulate, case.data)
    assert result.dtype == np.dtype(dtype)
    check_close(result, case.tx_reference, dtype)


@pytest.mark.parametrize(PARAMS, cases("tb_c_grid"))
def test_tx_tonebank_c_grid(benchmark, c_backend, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "tb_c_grid", "ofdm_tx", case.plan, symbols, dtype)
    case.ofdm.synthesize(case.grid)
    result = benchmark(case.ofdm.synthesize, case.grid)
    assert result.dtype == np.dtype(dtype)
    check_close(result, case.tx_reference, dtype)


@pytest.mark.parametrize(PARAMS, cases("tb_numpy"))
def test_tx_tonebank_numpy(benchmark, numpy_backend, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "tb_numpy", "ofdm_tx", case.plan, symbols, dtype)
    case.ofdm.modulate(case.data)
    result = benchmark(case.ofdm.modulate, case.data)
    assert result.dtype == np.dtype(dtype)
    check_close(result, case.tx_reference, dtype)


@pytest.mark.parametrize(PARAMS, cases("numpy_chain"))
def test_tx_numpy_chain(benchmark, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "numpy_chain", "ofdm_tx", case.plan, symbols, dtype)
    args = (case.data, case.pilots, case.plan.data_bins, case.plan.pilot_bins, n, case.cp)
    numpy_chain_tx(*args)
    result = benchmark(numpy_chain_tx, *args)
    assert result.dtype == np.dtype(dtype)
    check_close(result, case.tx_reference, dtype)


@pytest.mark.parametrize(PARAMS, cases("fftw_bare"))
def test_tx_fftw_bare(benchmark, pyfftw_module, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "fftw_bare", "ofdm_tx", case.plan, symbols, dtype)
    plan, a, b = fftw_bare(pyfftw_module, case.grid.shape, dtype, "FFTW_BACKWARD")
    a[...] = case.grid
    plan.execute()
    benchmark(plan.execute)  # returns None; the result is in b
    # FFTW's backward transform is unscaled: sqrt(n) times the unitary one.
    body = case.tx_reference.reshape(symbols, n + case.cp)[:, case.cp:]
    check_close(b / np.sqrt(n), body, dtype)


# -- receive -------------------------------------------------------------------------


@pytest.mark.parametrize(PARAMS, cases("tb_c"))
def test_rx_tonebank_c(benchmark, c_backend, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "tb_c", "ofdm_rx", case.plan, symbols, dtype)
    case.ofdm.demodulate(case.samples)
    data, pilots = benchmark(case.ofdm.demodulate, case.samples)
    assert data.dtype == pilots.dtype == np.dtype(dtype)
    check_rx(data, pilots, case, dtype)


@pytest.mark.parametrize(PARAMS, cases("tb_c_grid"))
def test_rx_tonebank_c_grid(benchmark, c_backend, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "tb_c_grid", "ofdm_rx", case.plan, symbols, dtype)
    case.ofdm.analyze(case.samples)
    grid = benchmark(case.ofdm.analyze, case.samples)
    assert grid.dtype == np.dtype(dtype)
    check_close(grid, case.rx_reference, dtype)


@pytest.mark.parametrize(PARAMS, cases("tb_numpy"))
def test_rx_tonebank_numpy(benchmark, numpy_backend, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "tb_numpy", "ofdm_rx", case.plan, symbols, dtype)
    case.ofdm.demodulate(case.samples)
    data, pilots = benchmark(case.ofdm.demodulate, case.samples)
    assert data.dtype == pilots.dtype == np.dtype(dtype)
    check_rx(data, pilots, case, dtype)


@pytest.mark.parametrize(PARAMS, cases("numpy_chain"))
def test_rx_numpy_chain(benchmark, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "numpy_chain", "ofdm_rx", case.plan, symbols, dtype)
    args = (case.samples, case.plan.data_bins, case.plan.pilot_bins, n, case.cp)
    numpy_chain_rx(*args)
    data, pilots = benchmark(numpy_chain_rx, *args)
    assert data.dtype == pilots.dtype == np.dtype(dtype)
    check_rx(data, pilots, case, dtype)


@pytest.mark.parametrize(PARAMS, cases("fftw_bare"))
def test_rx_fftw_bare(benchmark, pyfftw_module, ofdm_case, dtype, n, symbols):
    case = ofdm_case(n, symbols, dtype)
    label_ofdm(benchmark, "fftw_bare", "ofdm_rx", case.plan, symbols, dtype)
    plan, a, b = fftw_bare(pyfftw_module, (symbols, n), dtype, "FFTW_FORWARD")
    a[...] = case.samples.reshape(symbols, n + case.cp)[:, case.cp:]
    plan.execute()
    benchmark(plan.execute)
    # Unscaled forward transform: sqrt(n) times the unitary one.
    check_close(b / np.sqrt(n), case.rx_reference, dtype)
