"""Planning cost, timed apart from execution (one row of each size).

``plan[c]``
    Creating and releasing the C kernel's plan for one size and precision
    (``tb_fft_plan_create`` + ``tb_fft_plan_destroy`` through cffi):
    factorisation and twiddle tables, what the first call of a new size
    pays once per process.
``first_call[c]``
    ``tonebank.fft(x)`` on the C backend with that size's plan dropped
    from the binding's cache before every round: the latency of the first
    transform of a new size, to compare with the steady-state
    ``execute[c]`` figure of ``test_01_fft.py``.
``plan[fftw_estimate]``, ``plan[fftw_measure]``
    Building a ``pyfftw.FFTW`` object with ``FFTW_ESTIMATE`` or
    ``FFTW_MEASURE`` (one thread) after FFTW's accumulated wisdom has been
    forgotten, so every round plans from scratch.

numpy.fft and scipy.fft keep their plan caches private; their first-call
cost is not separated here.
"""

from __future__ import annotations

import numpy as np
import pytest

import tonebank
from bench_common import DTYPES, SIZES, check_fft, label

PLAN_CASES = [pytest.param(dtype, n, id=f"{dtype}-{n}") for dtype in DTYPES for n in SIZES]

#: Rounds of the benchmarks that need a set-up step before each call
#: (pytest-benchmark's pedantic mode): enough for a stable median of a
#: call that takes microseconds to a few milliseconds.
PLAN_ROUNDS = 200
#: FFTW_MEASURE planning takes tens to hundreds of milliseconds per size.
MEASURE_ROUNDS = 3


@pytest.mark.parametrize(("dtype", "n"), PLAN_CASES)
def test_c_plan_create(benchmark, c_kernel, dtype, n):
    label(benchmark, "c", "plan", n, 1, dtype)
    ffi, lib = c_kernel.ffi, c_kernel.lib
    precision = lib.TB_FLOAT32 if dtype == "complex64" else lib.TB_FLOAT64
    out = ffi.new("tb_fft_plan **")

    def create_and_release():
        status = lib.tb_fft_plan_create(n, precision, out)
        lib.tb_fft_plan_destroy(out[0])
        return status

    assert benchmark(create_and_release) == lib.TB_OK


@pytest.mark.parametrize(("dtype", "n"), PLAN_CASES)
def test_c_first_call(benchmark, c_plan_cache, make_signal, dtype, n):
    x = make_signal(n, 1, dtype)
    key = (n, np.dtype(dtype).char)
    label(benchmark, "c", "first_call", n, 1, dtype)

    def forget_plan():
        # Both caches: the C plans, and the prepared runners that
        # tonebank.fft keeps for repeated calls (each holds its plan).
        c_plan_cache.pop(key, None)
        tonebank.transforms._quick_runners.clear()

    result = benchmark.pedantic(tonebank.fft, args=(x,), setup=forget_plan,
                                rounds=PLAN_ROUNDS, warmup_rounds=1)
    assert key in c_plan_cache
    check_fft(result, x, dtype)


def _fftw_plan(benchmark, pyfftw, dtype, n, flag, rounds):
    a = pyfftw.empty_aligned((1, n), dtype=dtype)
    b = pyfftw.empty_aligned((1, n), dtype=dtype)

    def build():
        return pyfftw.FFTW(a, b, axes=(-1,), direction="FFTW_FORWARD", flags=(flag,),
                           threads=1)

    plan = benchmark.pedantic(build, setup=pyfftw.forget_wisdom, rounds=rounds)
    x = np.random.default_rng(n).standard_normal((1, n)).astype(dtype)
    a[...] = x
    check_fft(plan(), x, dtype)


@pytest.mark.parametrize(("dtype", "n"), PLAN_CASES)
def test_fftw_plan_estimate(benchmark, pyfftw_module, dtype, n):
    label(benchmark, "fftw_estimate", "plan", n, 1, dtype)
    _fftw_plan(benchmark, pyfftw_module, dtype, n, "FFTW_ESTIMATE", PLAN_ROUNDS)


@pytest.mark.parametrize(("dtype", "n"), PLAN_CASES)
def test_fftw_plan_measure(benchmark, pyfftw_module, dtype, n):
    label(benchmark, "fftw_measure", "plan", n, 1, dtype)
    _fftw_plan(benchmark, pyfftw_module, dtype, n, "FFTW_MEASURE", MEASURE_ROUNDS)
