"""tonebank.metrics: error counts, binomial intervals, EVM and MER.

Outside references:
- scipy.stats.binomtest(...).proportion_ci (a general-purpose reference
  library) with method "wilson" (the Wilson score interval without
  continuity correction; E. B. Wilson, JASA 1927) and "exact" (the
  Clopper-Pearson interval, found there by root-finding on the binomial
  distribution function rather than by beta quantiles; Clopper & Pearson,
  Biometrika 1934).
- Closed forms for zero errors, derived from the same papers: the Wilson
  upper limit z^2 / (n + z^2), and the exact upper limit 1 - (alpha/2)^(1/n)
  (the beta(1, n) quantile).
- RMS EVM normalised to the mean reference power and MER as
  10 log10(sum |s|^2 / sum |e|^2) (ETSI TR 101 290, the MER clause; from
  memory), checked on 16-QAM points with an error of exactly known RMS.
"""

import dataclasses

import numpy as np
import pytest
from scipy import special, stats

from tonebank.metrics import ErrorCount, bit_errors, evm, mer_db, symbol_errors

CASES = [(0, 1), (0, 10), (0, 1000), (1, 10), (3, 7), (5, 5), (1000, 1000), (17, 2000),
         (250, 1000), (999, 1000), (2, 1_000_000)]


# -- intervals ---------------------------------------------------------------------

@pytest.mark.parametrize("confidence", [0.68, 0.95, 0.999])
@pytest.mark.parametrize("k, n", CASES)
def test_intervals_match_scipy(k, n, confidence):
    reference = stats.binomtest(k, n)
    count = ErrorCount(k, n)
    wilson = reference.proportion_ci(confidence, method="wilson")
    np.testing.assert_allclose(count.interval(confidence, "wilson"),
                               (wilson.low, wilson.high), rtol=1e-10, atol=1e-15)
    exact = reference.proportion_ci(confidence, method="exact")
    # scipy finds the exact limits by root-finding (brentq, xtol 2e-12)
    np.testing.assert_allclose(count.interval(confidence, "clopper-pearson"),
                               (exact.low, exact.high), rtol=1e-8, atol=1e-11)


@pytest.mark.parametrize("n", [1, 10, 300, 10_000])
def test_zero_and_all_errors_closed_forms(n):
    z = special.ndtri(0.975)
    low, high = ErrorCount(0, n).interval(0.95)
    assert low == 0.0 and high == pytest.approx(z * z / (n + z * z), rel=1e-12)
    low, high = ErrorCount(0, n).interval(0.95, method="clopper-pearson")
    assert low == 0.0 and high == pytest.approx(1 - 0.025 ** (1 / n), rel=1e-10)
    for method in ("wilson", "clopper-pearson"):
        low, high = ErrorCount(n, n).interval(0.95, method)
        assert high == 1.0
        assert low == pytest.approx(1 - ErrorCount(0, n).interval(0.95, method)[1])


def test_interval_contains_rate_and_narrows_with_trials():
    a = ErrorCount(10, 1000).interval()
    b = ErrorCount(100, 10_000).interval()
    assert a[0] < 0.01 < a[1] and b[0] < 0.01 < b[1]
    assert b[1] - b[0] < a[1] - a[0]
    # Clopper-Pearson is the wider (conservative) of the two
    w, cp = ErrorCount(10, 1000).interval(), ErrorCount(10, 1000).interval(
        method="clopper-pearson")
    assert cp[0] <= w[0] and w[1] <= cp[1]


def test_empty_count():
    count = ErrorCount(0, 0)
    assert np.isnan(count.rate)
    assert count.interval() == (0.0, 1.0)


# -- ErrorCount as a value -----------------------------------------------------------

def test_counts_add_and_sum():
    parts = [ErrorCount(1, 100), ErrorCount(0, 50), ErrorCount(np.int64(4), np.int64(850))]
    total = sum(parts)
    assert total == ErrorCount(5, 1000)
    assert parts[0] + parts[1] == ErrorCount(1, 150)
    assert total.rate == 0.005
    assert type(total.errors) is int and type(parts[2].total) is int


def test_count_is_immutable():
    count = ErrorCount(1, 2)
    with pytest.raises(dataclasses.FrozenInstanceError):
        count.errors = 0


@pytest.mark.parametrize("call, error, match", [
    (lambda: ErrorCount(-1, 10), ValueError, "errors must be >= 0, got -1"),
    (lambda: ErrorCount(11, 10), ValueError, "errors=11 exceeds total=10"),
    (lambda: ErrorCount(1, -1), ValueError, "total must be >= 0, got -1"),
    (lambda: ErrorCount(1.0, 10), TypeError, "errors"),
    (lambda: ErrorCount(True, 10), TypeError, "errors"),
    (lambda: ErrorCount(1, "10"), TypeError, "total"),
    (lambda: ErrorCount(1, 10).interval(1.0), ValueError, "confidence=1.0"),
    (lambda: ErrorCount(1, 10).interval(0), ValueError, "confidence=0"),
    (lambda: ErrorCount(1, 10).interval("95%"), TypeError, "confidence"),
    (lambda: ErrorCount(1, 10).interval(0.9, method="exact"), ValueError, "method='exact'"),
    (lambda: ErrorCount(1, 10).interval(0.9, method=None), TypeError, "method"),
    (lambda: ErrorCount(1, 10) + 1, TypeError, "unsupported operand"),
    (lambda: 1 + ErrorCount(1, 10), TypeError, "unsupported operand"),
])
def test_count_bad_input(call, error, match):
    with pytest.raises(error, match=match):
        call()


# -- bit and symbol errors -----------------------------------------------------------

def test_bit_errors_counts_flips():
    rng = np.random.default_rng(1)
    tx = rng.integers(0, 2, (4, 250), dtype=np.uint8)
    flips = np.zeros(tx.shape, bool)
    flips.flat[rng.choice(tx.size, 37, replace=False)] = True
    rx = tx ^ flips
    assert bit_errors(tx, rx) == ErrorCount(37, 1000)
    assert bit_errors(tx.astype(bool), rx.astype(bool)) == ErrorCount(37, 1000)
    assert bit_errors(tx, tx) == ErrorCount(0, 1000)
    assert bit_errors([], []) == ErrorCount(0, 0)


def test_symbol_errors_labels_and_points():
    labels = np.array([[0, 5, 15], [3, 3, 9]])
    decided = np.array([[0, 4, 15], [3, 2, 9]])
    assert symbol_errors(labels, decided) == ErrorCount(2, 6)
    points = np.array([1 + 1j, -1 + 1j, -1 - 1j, 1 - 1j], dtype=np.complex64)
    got = points.copy()
    got[2] = np.nan                                     # a NaN counts as an error
    assert symbol_errors(points, got) == ErrorCount(1, 4)
    assert symbol_errors(points, points.astype(np.complex128)) == ErrorCount(0, 4)


@pytest.mark.parametrize("call, error, match", [
    (lambda: bit_errors([0, 1], [0, 1, 1]), ValueError, r"shape \(2,\).*shape \(3,\)"),
    (lambda: bit_errors([0, 2], [0, 1]), ValueError, "tx_bits holds the value 2"),
    (lambda: bit_errors([0, 1], [-1, 1]), ValueError, "rx_bits holds the value -1"),
    (lambda: bit_errors([0.0, 1.0], [0, 1]), TypeError, "tx_bits has dtype float64"),
    (lambda: bit_errors([0, 1], ["0", "1"]), TypeError, "rx_bits"),
    (lambda: symbol_errors([1, 2], [1.0, 2.0]), TypeError, "labels with labels"),
    (lambda: symbol_errors(np.zeros((2, 3)), np.zeros((3, 2))), ValueError, "shape"),
    (lambda: symbol_errors(["a"], ["a"]), TypeError, "tx has dtype"),
])
def test_counting_bad_input(call, error, match):
    with pytest.raises(error, match=match):
        call()


# -- EVM and MER ---------------------------------------------------------------------

def _qam16(repeats):
    """Every 16-QAM point `repeats` times, unit mean power (levels +-1, +-3 over sqrt(10))."""
    levels = np.array([-3.0, -1.0, 1.0, 3.0])
    points = (levels[:, None] + 1j * levels[None, :]).ravel() / np.sqrt(10)
    return np.tile(points, repeats)


def test_evm_of_known_error():
    s = _qam16(64)                                      # mean |s|^2 = 1 exactly
    rng = np.random.default_rng(2)
    rms = 0.037
    # constant magnitude, random phase: the RMS of the error is exactly `rms`
    r = s + rms * np.exp(2j * np.pi * rng.random(s.size))
    assert evm(r, s, unit="ratio") == pytest.approx(rms, rel=1e-12)
    assert evm(r, s) == pytest.approx(100 * rms, rel=1e-12)
    assert evm(r, s, unit="db") == pytest.approx(20 * np.log10(rms), rel=1e-12)
    assert evm(r, s, reference_power=1.0) == pytest.approx(100 * rms, rel=1e-12)
    # normalising to a nominal power of 2 divides the ratio by sqrt(2)
    assert evm(r, s, unit="ratio", reference_power=2.0) == pytest.approx(rms / np.sqrt(2))
    assert mer_db(r, s) == pytest.approx(-20 * np.log10(rms), rel=1e-12)
    assert mer_db(r, s) == pytest.approx(-evm(r, s, unit="db"), rel=1e-12)


def test_evm_scales_with_reference_power():
    s = 3.0 * _qam16(8)
    r = s + 0.3                                         # |e| = 0.3, P_s = 9
    assert evm(r, s, unit="ratio") == pytest.approx(0.1)
    assert mer_db(r, s) == pytest.approx(20.0)


def test_axis_and_broadcasting():
    s = _qam16(4)                                       # shape (64,)
    error_rms = np.array([0.01, 0.1, 0.2])[:, None]
    r = s + error_rms * np.exp(1j * np.linspace(0, 2 * np.pi, 64))   # shape (3, 64)
    per_row = evm(r, s, axis=-1, unit="ratio")
    np.testing.assert_allclose(per_row, error_rms.ravel(), rtol=1e-12)
    np.testing.assert_allclose(mer_db(r, s, axis=1), -20 * np.log10(error_rms.ravel()))
    overall = evm(r, s, axis=(0, 1), unit="ratio")
    assert isinstance(overall, float)
    assert overall == pytest.approx(np.sqrt(np.mean(error_rms ** 2)))
    assert evm(r, s, axis=0).shape == (64,)


def test_nan_propagates_to_its_slice_only():
    s = np.tile(_qam16(1), (2, 1))
    r = s + 0.1
    r[1, 3] = np.nan
    got = evm(r, s, axis=1)
    assert got[0] == pytest.approx(10.0) and np.isnan(got[1])
    assert np.isnan(mer_db(r, s))


def test_perfect_match_without_warnings():
    s = _qam16(1)
    assert evm(s, s) == 0.0
    assert evm(s, s, unit="db") == -np.inf
    assert mer_db(s, s) == np.inf


def test_real_valued_points():
    s = np.array([-3.0, -1.0, 1.0, 3.0])               # 4-PAM, mean power 5
    assert evm(s + 0.5, s, unit="ratio") == pytest.approx(0.5 / np.sqrt(5))


@pytest.mark.parametrize("call, error, match", [
    (lambda: evm([1, 2], [1, 2, 3]), ValueError, "do not broadcast"),
    (lambda: evm([1j], [1j], unit="dB"), ValueError, "unit='dB'"),
    (lambda: evm([1j], [1j], unit=None), TypeError, "unit"),
    (lambda: evm([1j], [1j], reference_power=0), ValueError, "reference_power=0"),
    (lambda: evm([1j], [1j], reference_power="peak"), ValueError, "reference_power='peak'"),
    (lambda: evm([1j], [1j], reference_power=[1.0]), TypeError, "reference_power"),
    (lambda: evm([1j], [0j]), ValueError, "reference has zero power"),
    (lambda: mer_db([1j], [0j]), ValueError, "reference has zero power"),
    (lambda: evm([1j], [1j], axis=1), ValueError, "axis=1"),
    (lambda: evm([1j], [1j], axis=(0, 0)), ValueError, "repeats"),
    (lambda: evm([1j], [1j], axis=0.5), TypeError, "axis"),
    (lambda: evm(np.zeros((2, 0)), np.zeros((2, 0)), axis=1), ValueError, "nothing to average"),
    (lambda: evm(["a"], [1j]), TypeError, "received has dtype"),
    (lambda: mer_db([1j], [True]), TypeError, "reference has dtype"),
])
def test_quality_bad_input(call, error, match):
    with pytest.raises(error, match=match):
        call()
