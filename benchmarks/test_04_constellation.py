"""Soft and hard decisions of 1024-QAM: tonebank's per-axis tables against full search.

One timed call per test, on seeded inputs made once per session (fixture
``received``): 1024-QAM symbols plus complex AWGN at Es/N0 = 30 dB, as
complex128 and complex64.  Each result is checked once, after timing,
against a full-search reference on its first symbols.

Implementations (``extra_info["impl"]``):

``table``   ``Constellation.qam(1024).llr(y, noise_var)``: max-log LLRs
            from the per-axis cell tables, ``O(k)`` per symbol;
``table_exact``  ``llr(..., exact=True)``: exact log-sum-exp per axis,
            ``O(k sqrt(M))`` per symbol;
``naive``   the textbook max-log computation in numpy: squared distances
            to all ``M`` points, then a minimum over the points with each
            bit value, ``O(k M)`` per symbol, in blocks of 2048 symbols
            so memory stays bounded;
``decide``  ``Constellation.demap(y)``: hard-decision bits (per-axis
            rounding);
``naive_decide``  ``argmin`` over all ``M`` squared distances.

The speed goal is max-log LLRs of 10**6 1024-QAM symbols "well under a
second" on one core (``table`` at ``n=1000000``); ``naive`` runs on the
smaller input only (it would take tens of seconds on the large one), and
the ratio ``naive / table`` at ``n=16384`` is the figure to read.  As
with every benchmark here, only ratios within one run count.
"""

from __future__ import annotations

import numpy as np
import pytest

from tonebank.constellation import Constellation

ORDER = 1024
ESN0_DB = 30.0
NOISE_VAR = 10 ** (-ESN0_DB / 10)  # unit-energy points
SMALL, LARGE = 2**14, 10**6
DTYPES = ("complex128", "complex64")
TOLERANCE = {"complex128": 1e-9, "complex64": 1e-4}  # relative, as in the test suite
CHECKED = 2000  # symbols compared with the full-search reference

_INPUTS: dict = {}


@pytest.fixture(scope="session")
def qam():
    return Constellation.qam(ORDER)


@pytest.fixture(scope="session")
def received(qam):
    """Return ``make(n, dtype)``: read-only noisy 1024-QAM symbols, seeded."""

    def make(n: int, dtype: str) -> np.ndarray:
        key = (n, dtype)
        if key not in _INPUTS:
            rng = np.random.default_rng([ORDER, n])
            labels = rng.integers(0, ORDER, n)
            noise = np.sqrt(NOISE_VAR / 2) * (rng.standard_normal(n)
                                              + 1j * rng.standard_normal(n))
            y = (qam.points[labels] + noise).astype(dtype)
            y.flags.writeable = False
            _INPUTS[key] = y
        return _INPUTS[key]

    return make


def naive_maxlog(points: np.ndarray, y: np.ndarray, noise_var: float) -> np.ndarray:
    """Max-log LLRs by full search over all points (float64), in blocks."""
    m = points.size
    k = m.bit_length() - 1
    labels = np.arange(m)
    zero = [((labels >> (k - 1 - b)) & 1) == 0 for b in range(k)]
    out = np.empty((y.size, k))
    for start in range(0, y.size, 2048):
        part = y[start:start + 2048].astype(np.complex128)
        d2 = np.abs(part[:, None] - points[None, :]) ** 2
        for b in range(k):
            out[start:start + 2048, b] = (np.min(d2[:, ~zero[b]], axis=1)
                                          - np.min(d2[:, zero[b]], axis=1))
    out /= noise_var
    return out.reshape(-1)


def naive_decide(points: np.ndarray, y: np.ndarray) -> np.ndarray:
    labels = np.empty(y.size, dtype=np.intp)
    for start in range(0, y.size, 2048):
        part = y[start:start + 2048]
        labels[start:start + 2048] = np.argmin(np.abs(part[:, None] - points[None, :]),
                                               axis=1)
    return labels


def record(benchmark, impl: str, kind: str, n: int, dtype: str) -> None:
    benchmark.group = f"{kind} {ORDER}-QAM {dtype} n={n}"
    benchmark.extra_info.update(impl=impl, kind=kind, n=n, batch=1, dtype=dtype,
                                constellation=f"{ORDER}-QAM")


def throughput(benchmark, n: int) -> None:
    """Store symbols per second of the median call (when timing was on)."""
    stats = getattr(benchmark, "stats", None)
    if stats is not None:
        benchmark.extra_info["symbols_per_s"] = n / stats.stats.median


def check_llr(result, y, dtype, qam) -> None:
    ref = naive_maxlog(qam.points, y[:CHECKED], NOISE_VAR)
    got = np.asarray(result).reshape(-1)[:ref.size]
    error = np.max(np.abs(got - ref) / np.maximum(np.abs(ref), 1.0))
    assert error <= TOLERANCE[dtype], f"relative error {error:.3g} for {dtype}"


@pytest.mark.parametrize("n", [SMALL, LARGE])
@pytest.mark.parametrize("dtype", DTYPES)
def test_llr_maxlog_table(benchmark, qam, received, dtype, n):
    y = received(n, dtype)
    record(benchmark, "table", "llr_maxlog", n, dtype)
    result = benchmark(qam.llr, y, NOISE_VAR)
    throughput(benchmark, n)
    assert result.dtype == (np.float32 if dtype == "complex64" else np.float64)
    check_llr(result, y, dtype, qam)


@pytest.mark.parametrize("dtype", DTYPES)
def test_llr_maxlog_naive(benchmark, qam, received, dtype):
    y = received(SMALL, dtype)
    record(benchmark, "naive", "llr_maxlog", SMALL, dtype)
    result = benchmark(naive_maxlog, qam.points, y, NOISE_VAR)
    throughput(benchmark, SMALL)
    check_llr(result, y, "complex128", qam)


@pytest.mark.parametrize("dtype", DTYPES)
def test_llr_exact_table(benchmark, qam, received, dtype):
    y = received(SMALL, dtype)
    record(benchmark, "table_exact", "llr_exact", SMALL, dtype)
    result = benchmark(qam.llr, y, NOISE_VAR, exact=True)
    throughput(benchmark, SMALL)
    # Exact and max-log differ by at most ln(M/2) per bit (the log of the
    # number of terms in a sum); checked against the full-search max-log.
    ref = naive_maxlog(qam.points, y[:CHECKED], NOISE_VAR)
    got = result.reshape(-1)[:ref.size]
    assert np.all(np.abs(got - ref) <= np.log(ORDER / 2) * (1 + 1e-6) + 1e-3)
    assert np.array_equal(np.sign(got[np.abs(ref) > 10]), np.sign(ref[np.abs(ref) > 10]))


@pytest.mark.parametrize("n", [SMALL, LARGE])
def test_demap(benchmark, qam, received, n):
    y = received(n, "complex128")
    record(benchmark, "decide", "demap", n, "complex128")
    result = benchmark(qam.demap, y)
    throughput(benchmark, n)
    labels = naive_decide(qam.points, y[:CHECKED])
    assert np.array_equal(result[:CHECKED * 10], qam.labels_to_bits(labels))


def test_demap_naive(benchmark, qam, received):
    y = received(SMALL, "complex128")
    record(benchmark, "naive_decide", "demap", SMALL, "complex128")
    result = benchmark(naive_decide, qam.points, y)
    throughput(benchmark, SMALL)
    assert np.array_equal(qam.labels_to_bits(result), qam.demap(y))
