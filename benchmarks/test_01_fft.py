"""Steady-state FFT execution: tonebank (C and numpy backends) and references.

For every size, batch and dtype of ``bench_common`` each implementation
is timed on the same input, one call per test, once its plan (if it has
one) exists: every test makes one untimed call first, so plan caches are
warm.  Planning cost is measured apart, in ``test_02_plan.py``.

Implementations (keys in ``conftest.IMPLEMENTATIONS``):

``c``         ``tonebank.fft(x)`` on the C backend (allocates the result);
``c_out``     ``tonebank.fft(x, out=buffer)`` on the C backend: the same
              call without allocation, so per-call overhead shows;
``c_plan``    calling a prepared ``tonebank.FftPlan(n, dtype=...)`` on the C
              backend (allocates the result): the streaming form;
``c_bare``    the C kernel's execute function (the header's
              ``tb_fft_execute_f32/f64``) called directly through cffi with
              pointers, plan and workspace prepared once: the bare
              transform, comparable with ``fftw``; the difference to
              ``c_out`` is the public wrapper's per-call overhead;
``tb_numpy``  ``tonebank.fft(x)`` on the numpy backend (the fallback);
``numpy``     ``numpy.fft.fft(x)``;
``scipy``     ``scipy.fft.fft(x, workers=1)``;
``fftw``      ``pyfftw.FFTW.execute()`` of an object built once with
              ``FFTW_MEASURE``, one thread, aligned preallocated arrays:
              the bare transform with no Python-side argument handling.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.fft

import tonebank
from bench_common import BATCHES, DTYPES, SIZES, check_fft, label

CASES = [pytest.param(dtype, n, batch, id=f"{dtype}-{n}x{batch}")
         for dtype in DTYPES for n in SIZES for batch in BATCHES]


@pytest.mark.parametrize(("dtype", "n", "batch"), CASES)
def test_tonebank_c(benchmark, c_backend, make_signal, dtype, n, batch):
    x = make_signal(n, batch, dtype)
    label(benchmark, "c", "execute", n, batch, dtype)
    tonebank.fft(x)  # plan this size outside the timed calls
    result = benchmark(tonebank.fft, x)
    assert result.dtype == np.dtype(dtype)
    check_fft(result, x, dtype)


@pytest.mark.parametrize(("dtype", "n", "batch"), CASES)
def test_tonebank_c_out(benchmark, c_backend, make_signal, dtype, n, batch):
    x = make_signal(n, batch, dtype)
    out = np.empty_like(x)
    label(benchmark, "c_out", "execute", n, batch, dtype)
    tonebank.fft(x, out=out)
    result = benchmark(tonebank.fft, x, out=out)
    assert result is out
    check_fft(result, x, dtype)


@pytest.mark.parametrize(("dtype", "n", "batch"), CASES)
def test_tonebank_c_plan(benchmark, c_backend, make_signal, dtype, n, batch):
    x = make_signal(n, batch, dtype)
    label(benchmark, "c_plan", "execute", n, batch, dtype)
    plan = tonebank.FftPlan(n, dtype=dtype)  # planned outside the timed calls
    assert plan.backend == "c"
    result = benchmark(plan, x)
    check_fft(result, x, dtype)


@pytest.mark.parametrize(("dtype", "n", "batch"), CASES)
def test_c_kernel_bare(benchmark, c_kernel, make_signal, dtype, n, batch):
    x = make_signal(n, batch, dtype)
    label(benchmark, "c_bare", "execute", n, batch, dtype)
    plan = c_kernel.plan(n, dtype)
    a = np.array(x)  # writeable, C-contiguous (batch, n)
    b = np.empty_like(a)
    execute, args = c_kernel.execute_args(plan, a, b)
    assert execute(*args) == c_kernel.lib.TB_OK
    status = benchmark(execute, *args)
    assert status == c_kernel.lib.TB_OK
    check_fft(b, x, dtype)


@pytest.mark.parametrize(("dtype", "n", "batch"), CASES)
def test_tonebank_numpy_backend(benchmark, numpy_backend, make_signal, dtype, n, batch):
    x = make_signal(n, batch, dtype)
    label(benchmark, "tb_numpy", "execute", n, batch, dtype)
    tonebank.fft(x)
    result = benchmark(tonebank.fft, x)
    assert result.dtype == np.dtype(dtype)
    check_fft(result, x, dtype)


@pytest.mark.parametrize(("dtype", "n", "batch"), CASES)
def test_numpy_fft(benchmark, make_signal, dtype, n, batch):
    x = make_signal(n, batch, dtype)
    label(benchmark, "numpy", "execute", n, batch, dtype)
    np.fft.fft(x)
    result = benchmark(np.fft.fft, x)
    check_fft(result, x, dtype)


@pytest.mark.parametrize(("dtype", "n", "batch"), CASES)
def test_scipy_fft(benchmark, make_signal, dtype, n, batch):
    x = make_signal(n, batch, dtype)
    label(benchmark, "scipy", "execute", n, batch, dtype)
    scipy.fft.fft(x, workers=1)
    result = benchmark(scipy.fft.fft, x, workers=1)
    check_fft(result, x, dtype)


@pytest.mark.parametrize(("dtype", "n", "batch"), CASES)
def test_fftw_execute(benchmark, pyfftw_module, make_signal, dtype, n, batch):
    pyfftw = pyfftw_module
    x = make_signal(n, batch, dtype)
    label(benchmark, "fftw", "execute", n, batch, dtype)
    a = pyfftw.empty_aligned(x.shape, dtype=dtype)
    b = pyfftw.empty_aligned(x.shape, dtype=dtype)
    # FFTW_MEASURE overwrites the arrays while it plans: fill them after.
    plan = pyfftw.FFTW(a, b, axes=(-1,), direction="FFTW_FORWARD",
                       flags=("FFTW_MEASURE",), threads=1)
    a[...] = x
    plan.execute()
    benchmark(plan.execute)  # returns None; the result is in b
    check_fft(b, x, dtype)
