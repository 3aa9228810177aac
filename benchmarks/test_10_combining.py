"""Diversity combining of 4 branches x 140 symbols x 1024 bins per call.

Cases (``extra_info["method"]``): ``mrc``, ``egc``, ``selection`` (the
coherent combiners of :mod:`tonebank.combining`, one noise variance for
all branches), ``mrc_branch_noise`` (MRC with one noise variance per
branch: the weighted path) and ``square_law`` (non-coherent square-law
combining of 4 branches x 140 x 256 cells x 4 tones: the same number of
values).  Implementations (``extra_info["impl"]``):

``tb``          the public function (argument checks included);
``numpy_expr``  what a user writes without the library: one numpy
                expression over the whole array, no checks and no noise
                variance out (mrc, egc, selection, square_law);
``read_floor``  ``received.sum(axis=0)`` and ``channel.sum(axis=0)``: one
                read of both inputs, a floor for any implementation that
                reads them once (mrc only; it is the same for every case).

Combining is numpy code (no kernel op), so the backend does not matter.
Each tb result is checked once against the numpy expression.  The
machines are shared and noisy: only ratios within one run mean anything.
"""

from __future__ import annotations

import numpy as np
import pytest

from tonebank.combining import (
    combine_egc,
    combine_mrc,
    combine_noncoherent,
    combine_selection,
)

L, SYMBOLS, N = 4, 140, 1024
NOISE_VAR = 0.1
TOLERANCE = {"complex128": 1e-12, "complex64": 1e-5}
_CASES: dict = {}


def case(dtype: str, tones: bool = False):
    """(received, channel) for coherent combining, or tone outputs; seeded, read-only."""
    key = (dtype, tones)
    if key not in _CASES:
        rng = np.random.default_rng([10, N, np.dtype(dtype).itemsize, int(tones)])
        shape = (L, SYMBOLS, N // 4, 4) if tones else (L, SYMBOLS, N)
        arrays = []
        for _ in range(1 if tones else 2):
            a = (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)).astype(dtype)
            a.flags.writeable = False
            arrays.append(a)
        _CASES[key] = arrays
    return _CASES[key]


def numpy_mrc(y, h):
    return (np.conj(h) * y).sum(axis=0) / (np.abs(h) ** 2).sum(axis=0)


def numpy_egc(y, h):
    return (np.exp(-1j * np.angle(h)) * y).sum(axis=0) / np.abs(h).sum(axis=0)


def numpy_selection(y, h):
    best = np.argmax(np.abs(h), axis=0)[None]
    return (np.take_along_axis(y, best, 0) / np.take_along_axis(h, best, 0))[0]


def numpy_square_law(r):
    return np.argmax((np.abs(r) ** 2).sum(axis=0), axis=-1)


def read_floor(y, h):
    return y.sum(axis=0), h.sum(axis=0)


TB = {
    "mrc": lambda y, h: combine_mrc(y, h, NOISE_VAR),
    "mrc_branch_noise": lambda y, h: combine_mrc(y, h, np.array([0.1, 0.2, 0.15, 0.3])),
    "egc": lambda y, h: combine_egc(y, h, NOISE_VAR),
    "selection": lambda y, h: combine_selection(y, h, NOISE_VAR),
}
EXPR = {"mrc": numpy_mrc, "egc": numpy_egc, "selection": numpy_selection}


def record(benchmark, impl, method, dtype):
    benchmark.group = f"combining {method} {dtype} L={L} symbols={SYMBOLS} n={N}"
    benchmark.extra_info.update(kind="combining", impl=impl, method=method, dtype=dtype,
                                branches=L, symbols=SYMBOLS, n=N, cells=SYMBOLS * N)


def check(result, reference, dtype, what):
    result = np.asarray(result).astype(np.complex128)
    reference = np.asarray(reference).astype(np.complex128)
    error = float(np.max(np.abs(result - reference)) / np.max(np.abs(reference)))
    assert error <= TOLERANCE[dtype], f"{what}: relative error {error:.3g}"


COHERENT = [(m, d) for d in ("complex128", "complex64")
            for m in ("mrc", "mrc_branch_noise", "egc", "selection")]


@pytest.mark.parametrize("method,dtype", COHERENT, ids=[f"{m}-{d}" for m, d in COHERENT])
def test_tb_coherent(benchmark, method, dtype):
    y, h = case(dtype)
    record(benchmark, "tb", method, dtype)
    out = benchmark(TB[method], y, h)
    assert out.symbols.dtype == np.dtype(dtype) and out.symbols.shape == (SYMBOLS, N)
    if method in EXPR:
        check(out.symbols, EXPR[method](y.astype(np.complex128), h.astype(np.complex128)),
              dtype, method)


EXPRESSIONS = [(m, d) for d in ("complex128", "complex64")
               for m in ("mrc", "egc", "selection")]


@pytest.mark.parametrize("method,dtype", EXPRESSIONS,
                         ids=[f"{m}-{d}" for m, d in EXPRESSIONS])
def test_numpy_expression(benchmark, method, dtype):
    y, h = case(dtype)
    record(benchmark, "numpy_expr", method, dtype)
    result = benchmark(EXPR[method], y, h)
    assert result.shape == (SYMBOLS, N)


@pytest.mark.parametrize("dtype", ["complex128", "complex64"])
def test_read_floor(benchmark, dtype):
    y, h = case(dtype)
    record(benchmark, "read_floor", "mrc", dtype)
    benchmark(read_floor, y, h)


@pytest.mark.parametrize("dtype", ["complex128", "complex64"])
def test_square_law(benchmark, dtype):
    (r,) = case(dtype, tones=True)
    record(benchmark, "tb", "square_law", dtype)
    out = benchmark(combine_noncoherent, r)
    np.testing.assert_array_equal(out.decisions, numpy_square_law(r.astype(np.complex128)))


@pytest.mark.parametrize("dtype", ["complex128", "complex64"])
def test_square_law_expression(benchmark, dtype):
    (r,) = case(dtype, tones=True)
    record(benchmark, "numpy_expr", "square_law", dtype)
    benchmark(numpy_square_law, r)
