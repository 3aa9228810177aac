"""PAPR: fused selective mapping (C kernel vs numpy twin) and CCDF throughput.

Selective mapping (``kind="papr_slm"``): ``SelectiveMapping.select`` of S
symbols with U candidates, oversampling L, on an all-tones plan of N bins
(the issue's target size: U = 16, N = 1024, L = 4, S = 1000; and a small
streaming-like size, U = 4, N = 64, L = 4, S = 1000).  Implementations
(``extra_info["impl"]``):

``tb_c``      the C backend: one fused pass per symbol, candidate after
              candidate (L polyphase branches of N-point FFTs, a loser
              dropped as soon as a branch reaches the best peak), two rows
              of M = L N samples held;
``tb_numpy``  the numpy twin: the candidates of a block of symbols
              materialised, transformed with numpy.fft, compared.

The big case takes about a second per call on numpy, so it runs a fixed
three rounds (``benchmark.pedantic``).  The object and its plans are made
once per session, and one untimed call warms them.  Each result is checked
once after timing: indices equal between the backends and samples equal to
rounding (the reference is the numpy twin, itself tested against a
numpy.fft reference in tests/test_papr.py).

CCDF (``kind="papr_ccdf"``): ``symbol_papr_db`` of 10^5 QPSK symbols of
64 tones at L = 4, then ``papr_ccdf`` at 12 thresholds, on each backend
(the transforms go through ``tonebank.fft``).

Figures from a shared, noisy machine: only ratios within one run count.
"""

from __future__ import annotations

import numpy as np
import pytest

import tonebank
from conftest import C_AVAILABLE
from tonebank import CarrierPlan
from tonebank.papr import SelectiveMapping, papr_ccdf, symbol_papr_db

SLM_CASES = {"U16-N1024-L4-S1000": (16, 1024, 4, 1000), "U4-N64-L4-S1000": (4, 64, 4, 1000)}
BIG = "U16-N1024-L4-S1000"
IMPLS = {"tb_c": "c", "tb_numpy": "numpy"}
_cache: dict = {}


def slm_case(name):
    if name not in _cache:
        u, n, factor, s = SLM_CASES[name]
        k = np.arange(-(n // 2), n - n // 2)
        slm = SelectiveMapping(CarrierPlan(n, data=k), n_candidates=u, oversampling=factor,
                               rng=1)
        rng = np.random.default_rng(9)
        payload = np.exp(0.5j * np.pi * rng.integers(0, 4, (s, n)))
        payload.flags.writeable = False
        _cache[name] = (slm, payload, {})
    return _cache[name]


def check_against_numpy(name, impl, result):
    slm, payload, results = slm_case(name)
    results[impl] = result
    if "tb_numpy" not in results:
        with tonebank.use_backend("numpy"):
            results["tb_numpy"] = slm.select(payload)
    ref = results["tb_numpy"]
    np.testing.assert_array_equal(result.index, ref.index)
    np.testing.assert_allclose(result.samples, ref.samples, rtol=0,
                               atol=1e-12 * np.abs(ref.samples).max())


@pytest.mark.parametrize("impl", sorted(IMPLS))
@pytest.mark.parametrize("name", sorted(SLM_CASES))
def test_slm_select(benchmark, name, impl):
    if IMPLS[impl] == "c" and not C_AVAILABLE:
        pytest.skip("C kernel unavailable")
    u, n, factor, s = SLM_CASES[name]
    slm, payload, _ = slm_case(name)
    benchmark.group = f"papr_slm {name}"
    benchmark.extra_info.update(kind="papr_slm", impl=impl, case=name, u=u, n=n,
                                oversampling=factor, symbols=s)
    with tonebank.use_backend(IMPLS[impl]):
        slm.select(payload[:2])                         # warm plans and caches
        if name == BIG:
            result = benchmark.pedantic(slm.select, args=(payload,), rounds=3,
                                        iterations=1, warmup_rounds=0)
        else:
            result = benchmark(slm.select, payload)
    check_against_numpy(name, impl, result)


CCDF_SYMBOLS, CCDF_N, CCDF_L = 100_000, 64, 4


@pytest.fixture(scope="module")
def ccdf_grid():
    rng = np.random.default_rng(10)
    grid = np.exp(0.5j * np.pi * rng.integers(0, 4, (CCDF_SYMBOLS, CCDF_N)))
    grid.flags.writeable = False
    return grid


@pytest.mark.parametrize("impl", sorted(IMPLS))
def test_ccdf(benchmark, ccdf_grid, impl):
    if IMPLS[impl] == "c" and not C_AVAILABLE:
        pytest.skip("C kernel unavailable")
    thresholds = np.arange(4.0, 16.0)
    benchmark.group = "papr_ccdf"
    benchmark.extra_info.update(kind="papr_ccdf", impl=impl, case="S100000-N64-L4",
                                symbols=CCDF_SYMBOLS, n=CCDF_N, oversampling=CCDF_L)

    def run():
        return papr_ccdf(symbol_papr_db(ccdf_grid, oversampling=CCDF_L), thresholds)

    with tonebank.use_backend(IMPLS[impl]):
        result = benchmark.pedantic(run, rounds=3, iterations=1, warmup_rounds=1)
    # one check: a CCDF falls from 1 towards 0 (van Nee & Prasad 2000 shape)
    assert result[0] == 1.0 and np.all(np.diff(result) <= 0) and result[-1] < 1e-3
