"""Pilot-based channel estimation on a 1024-bin plan, 140 symbols per call.

The plan is the 1024-bin plan of the OFDM benchmarks
(``bench_common.ofdm_plan_args(1024)``: 820 used subcarriers, DC empty,
the plan's own pilot every 12 used subcarriers, prefix 256).  Patterns
(``extra_info["pattern"]``):

``comb4``      a pilot on every 4th used subcarrier of every symbol (plus
               the plan's own pilots): 274 pilot subcarriers to 820;
``scattered``  every 12th subcarrier shifted by 3 each symbol (DVB-T-like,
               plus the plan's pilots; 128 pilots per symbol); time
               interpolation first, then frequency from the subcarriers
               that carried pilots in the frame;
``block``      every symbol a training symbol (820 pilots to 820
               subcarriers: the smoothing setting of the LMMSE papers).

Implementations (``extra_info["impl"]``), each one ``estimate(grid)`` of a
prepared :class:`tonebank.estimation.ChannelEstimator` (filters made
before timing) unless said otherwise:

``lmmse_full``   LMMSE, exponential profile of RMS delay 16 samples, 20 dB;
``lmmse_rank``   the same, rank 64 (two thin matrix products);
``ls_linear``    LS and linear interpolation (two neighbours per target);
``ls_spline``    LS and cubic-spline interpolation (a dense matrix);
``dft``          least-squares fit of 256 taps (a dense matrix);
``numpy_solve``  what a user writes without a prepared object: the LS
                 estimates, then ``numpy.linalg.solve(R_pp + c I, ...)`` and
                 ``R_tp @`` in every call (comb4 only);
``prepare``      (kind ``estimation_prepare``) building the estimator and
                 its filters for the frame: ``ChannelEstimator(...)`` plus
                 its first ``estimate`` call, for ``lmmse_full`` and
                 ``lmmse_rank``.

Everything here is numpy/BLAS: the estimators do not call the C kernel,
so the backend does not matter.  BLAS threading changes these figures a
lot on a loaded machine (OpenBLAS threads spin while the other core is
busy); run with ``OPENBLAS_NUM_THREADS=1`` to compare like with like.
The result of each steady-state case is checked once against an
independent reference: ``numpy.linalg.solve`` for the full LMMSE, the
truncated eigendecomposition of ``numpy.linalg.eigh`` for the rank-64
form (O. Edfors et al., IEEE Trans. Commun. 46 (7), 1998), ``numpy.interp``
for linear interpolation.
"""

from __future__ import annotations

import time

import numpy as np
import pytest

import tonebank
from bench_common import ofdm_plan_args
from tonebank import PilotPattern
from tonebank.estimation import ChannelEstimator, FrequencyCorrelation

N, SYMBOLS = 1024, 140
SNR_DB = 20.0
RMS_DELAY = 16.0
RANK = 64
TOLERANCE = {"complex128": 1e-9, "complex64": 1e-4}   # relative, max-norm

_CASES: dict = {}


def make_plan():
    plan = tonebank.CarrierPlan.centered(**ofdm_plan_args(N))
    return plan.replace(pilot_values=(-1.0) ** np.arange(plan.n_pilots))


def make_pattern(plan, name):
    return {"comb4": lambda: PilotPattern.comb(plan, 4),
            "scattered": lambda: PilotPattern.scattered(plan, 12, 3),
            "block": lambda: PilotPattern.block(plan, 1)}[name]()


def estimator_args(impl):
    corr = FrequencyCorrelation.exponential(RMS_DELAY)
    return {"lmmse_full": dict(frequency="lmmse", snr_db=SNR_DB, correlation=corr),
            "lmmse_rank": dict(frequency="lmmse", snr_db=SNR_DB, correlation=corr, rank=RANK),
            "ls_linear": dict(frequency="linear"),
            "ls_spline": dict(frequency="spline"),
            "dft": dict(frequency="dft", n_taps=N // 4)}[impl]


@pytest.fixture(scope="session")
def grid_case():
    """``make(pattern, dtype)``: (plan, pattern, received grid), seeded, read-only."""

    def make(name, dtype):
        key = (name, dtype)
        if key not in _CASES:
            plan = make_plan()
            pattern = make_pattern(plan, name)
            rng = np.random.default_rng([8, N, np.dtype(dtype).itemsize])
            taps = rng.standard_normal(64) + 1j * rng.standard_normal(64)
            taps *= np.exp(-np.arange(64) / (2 * RMS_DELAY)) / 8
            h = np.fft.fft(taps, N)
            n_values = pattern.n_data(SYMBOLS)
            data = (rng.standard_normal(n_values) + 1j * rng.standard_normal(n_values))
            tx = pattern.place(data / np.sqrt(2), n_symbols=SYMBOLS)
            noise = rng.standard_normal(tx.shape) + 1j * rng.standard_normal(tx.shape)
            grid = (h * tx + 0.07 * noise).astype(dtype)
            grid.flags.writeable = False
            _CASES[key] = (plan, pattern, grid)
        return _CASES[key]

    return make


def record(benchmark, impl, kind, pattern_name, dtype, pattern):
    benchmark.group = f"{kind} {pattern_name} {dtype} n={N} symbols={SYMBOLS}"
    benchmark.extra_info.update(impl=impl, kind=kind, pattern=pattern_name, n=N,
                                symbols=SYMBOLS, dtype=dtype,
                                used=pattern.plan.n_used,
                                pilot_cells=int(pattern.mask_for(SYMBOLS).sum()))


def check(result, reference, dtype, what):
    error = float(np.max(np.abs(result - reference)) / np.max(np.abs(reference)))
    assert error <= TOLERANCE[dtype], f"{what}: relative error {error:.3g}"


# -- independent references (comb4, one frequency filter for all symbols) -------------


def comb_reference(plan, pattern, grid, impl):
    k = np.round(np.fft.fftfreq(N) * N).astype(int)
    mask = pattern.mask[0]
    p_bins = np.flatnonzero(mask)
    p_bins = p_bins[np.argsort(k[p_bins])]
    t_bins = np.sort(np.concatenate((plan.data_bins, plan.pilot_bins)))
    t_bins = t_bins[np.argsort(k[t_bins])]
    ls = grid[:, p_bins].astype(np.complex128) / pattern.values[0, p_bins]
    out = np.zeros((SYMBOLS, N), complex)
    if impl == "ls_linear":
        xp, xt = k[p_bins], k[t_bins]
        inside = (xt >= xp[0]) & (xt <= xp[-1])
        for s in range(SYMBOLS):
            out[s, t_bins[inside]] = (np.interp(xt[inside], xp, ls[s].real)
                                      + 1j * np.interp(xt[inside], xp, ls[s].imag))
        return out, t_bins[inside]
    corr = FrequencyCorrelation.exponential(RMS_DELAY)
    r_pp = corr.matrix(k[p_bins], k[p_bins], N)
    r_tp = corr.matrix(k[t_bins], k[p_bins], N)
    c = 10 ** (-SNR_DB / 10)
    if impl == "lmmse_full":
        w = np.linalg.solve(r_pp + c * np.eye(p_bins.size), r_tp.conj().T).conj().T
    else:
        lam, u = np.linalg.eigh(r_pp)
        u, lam = u[:, -RANK:], lam[-RANK:]
        w = (r_tp @ u / (lam + c)) @ u.conj().T
    out[:, t_bins] = ls @ w.T
    return out, t_bins


def naive_solve(grid, p_bins, values, r_pp, r_tp, c, t_bins):
    ls = grid[:, p_bins] / values
    h = r_tp @ np.linalg.solve(r_pp + c * np.eye(p_bins.size), ls.T)
    out = np.zeros(grid.shape, complex)
    out[:, t_bins] = h.T
    return out


# -- steady state -----------------------------------------------------------------------

STEADY = [("comb4", "lmmse_full", "complex128"), ("comb4", "lmmse_rank", "complex128"),
          ("comb4", "ls_linear", "complex128"), ("comb4", "ls_spline", "complex128"),
          ("comb4", "dft", "complex128"),
          ("comb4", "lmmse_full", "complex64"), ("comb4", "lmmse_rank", "complex64"),
          ("scattered", "lmmse_full", "complex128"), ("scattered", "lmmse_rank", "complex128"),
          ("scattered", "ls_linear", "complex128"),
          ("block", "lmmse_full", "complex128"), ("block", "lmmse_rank", "complex128"),
          ("block", "dft", "complex128")]


@pytest.mark.parametrize("pattern_name,impl,dtype", STEADY,
                         ids=[f"{p}-{i}-{d}" for p, i, d in STEADY])
def test_estimate(benchmark, grid_case, pattern_name, impl, dtype):
    plan, pattern, grid = grid_case(pattern_name, dtype)
    est = ChannelEstimator(pattern, **estimator_args(impl))
    est.estimate(grid)                           # filters made outside the timed calls
    record(benchmark, impl, "estimation", pattern_name, dtype, pattern)
    result = benchmark(est.estimate, grid)
    assert result.dtype == np.dtype(dtype) and result.shape == (SYMBOLS, N)
    if pattern_name == "comb4" and impl in ("lmmse_full", "lmmse_rank", "ls_linear"):
        reference, cols = comb_reference(plan, pattern, grid, impl)
        check(result[:, cols], reference[:, cols], dtype, impl)


def test_numpy_solve(benchmark, grid_case):
    plan, pattern, grid = grid_case("comb4", "complex128")
    k = np.round(np.fft.fftfreq(N) * N).astype(int)
    p_bins = np.flatnonzero(pattern.mask[0])
    t_bins = np.concatenate((plan.data_bins, plan.pilot_bins))
    corr = FrequencyCorrelation.exponential(RMS_DELAY)
    r_pp = corr.matrix(k[p_bins], k[p_bins], N)
    r_tp = corr.matrix(k[t_bins], k[p_bins], N)
    args = (grid, p_bins, pattern.values[0, p_bins], r_pp, r_tp, 10 ** (-SNR_DB / 10), t_bins)
    record(benchmark, "numpy_solve", "estimation", "comb4", "complex128", pattern)
    result = benchmark(naive_solve, *args)
    reference, cols = comb_reference(plan, pattern, grid, "lmmse_full")
    check(result[:, cols], reference[:, cols], "complex128", "numpy_solve")


# -- preparation ------------------------------------------------------------------------

PREPARE = [(p, i) for p in ("comb4", "scattered", "block") for i in ("lmmse_full", "lmmse_rank")]


@pytest.mark.parametrize("pattern_name,impl", PREPARE, ids=[f"{p}-{i}" for p, i in PREPARE])
def test_prepare(benchmark, grid_case, pattern_name, impl):
    plan, pattern, grid = grid_case(pattern_name, "complex128")
    args = estimator_args(impl)

    def prepare():
        est = ChannelEstimator(pattern, **args)
        return est.estimate(grid)

    record(benchmark, impl, "estimation_prepare", pattern_name, "complex128", pattern)
    start = time.perf_counter()
    prepare()
    # Slow cases (an 820-point eigendecomposition) get fewer rounds.
    rounds = 3 if time.perf_counter() - start > 0.2 else 10
    result = benchmark.pedantic(prepare, rounds=rounds, iterations=1)
    assert result.shape == (SYMBOLS, N)
