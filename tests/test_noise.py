"""tonebank.channel.noise: noise power, SNR conventions and argument checks.

Outside references:
- scipy.stats.chi2 (a general-purpose reference library): the mean of n
  squared N(0, 1) draws is chi2(n)/n, so a measured noise variance must lie
  within chi2 quantiles of the requested one.  Every Monte-Carlo check uses
  a two-sided 99.9 % chi-square interval and a fixed seed, so it cannot flake.
- Parseval's relation for the unitary DFT (numpy.fft with norm="ortho"):
  the end-to-end OFDM checks build the waveform with plain numpy and
  measure the transmitted energy and the noise in the time and frequency
  domains independently of the module.
- The definitions Es = transmitted energy per symbol and N0 = two-sided
  density of complex noise (one-sided for real noise), and the bit error
  rate of Gray-coded QPSK, Q(sqrt(2 Eb/N0)) (J. G. Proakis and M. Salehi,
  Digital Communications, 5th ed., chapter 4; from memory), checked
  against scipy.special.erfc and scipy.stats.binomtest.
"""

from types import SimpleNamespace

import numpy as np
import pytest
from scipy import special, stats

from tonebank.channel import (
    awgn,
    ebn0_to_snr_db,
    esn0_to_bin_snr_db,
    esn0_to_snr_db,
    snr_to_esn0_db,
    snr_to_noise_var,
)

CONFIDENCE = 0.999


def _plan(n_fft=64, n_used=52, cp_lengths=(16,)):
    """A stand-in for tonebank.CarrierPlan with the attributes awgn reads."""
    return SimpleNamespace(n_fft=n_fft, n_used=n_used, cp_lengths=tuple(cp_lengths),
                           mean_cp_length=float(np.mean(cp_lengths)))


def _chi2_factors(dof):
    """(low, high) such that mean-of-squares / variance lies inside with CONFIDENCE.

    scipy.stats.chi2: the sum of dof squared N(0, 1) draws is chi2(dof).
    """
    alpha = 1.0 - CONFIDENCE
    return (stats.chi2.ppf(alpha / 2, dof) / dof, stats.chi2.ppf(1 - alpha / 2, dof) / dof)


def _assert_variance(samples, variance, *, complex_noise):
    """Check the measured variance of zero-mean Gaussian samples against *variance*.

    Complex circular noise of total variance v has 2n real degrees of
    freedom, each of variance v/2; real noise has n of variance v.
    """
    samples = np.asarray(samples).ravel()
    n = samples.size
    measured = np.sum(np.abs(samples.astype(np.complex128)) ** 2) / n
    low, high = _chi2_factors(2 * n if complex_noise else n)
    assert low * variance <= measured <= high * variance, (
        f"measured variance {measured:.6g} outside the {CONFIDENCE:.1%} chi-square "
        f"interval [{low * variance:.6g}, {high * variance:.6g}]")


def _signal(dtype, shape, seed=3):
    rng = np.random.default_rng(seed)
    if np.dtype(dtype).kind == "c":
        x = rng.standard_normal(shape) + 1j * rng.standard_normal(shape)
    else:
        x = rng.standard_normal(shape)
    return x.astype(dtype)


# -- noise power in each convention -----------------------------------------------

@pytest.mark.parametrize("dtype", [np.complex128, np.complex64, np.float64, np.float32])
@pytest.mark.parametrize("convention", ["sample", "esn0", "ebn0"])
def test_noise_variance_within_chi2_bound(convention, dtype):
    n = 8192
    x = _signal(dtype, (2, n))
    x[1] *= 2.0                     # rows of different power: measured per row
    snr_db = np.array([3.0, 12.0])
    plan = _plan(n_fft=128, n_used=60, cp_lengths=(10, 9, 9, 9))
    oversampling, bits, rate = 2, 4, 0.75
    real = np.dtype(dtype).kind == "f"
    kwargs = {}
    # Requested sigma^2 from the definitions, written out here rather than
    # taken from the module: per-sample SNR P/sigma^2; Es/N0 multiplies it by
    # L (n_fft + mean cp) / K' with K' = n_used (complex) or 2 n_used (real);
    # Eb/N0 = Es/N0 / (bits * rate), so sigma^2 = P F / (bits * rate * Eb/N0).
    power = np.mean(np.abs(x.astype(np.complex128)) ** 2, axis=-1)
    factor = 1.0
    if convention != "sample":
        kwargs = dict(plan=plan, oversampling=oversampling)
        factor = oversampling * (128 + 9.25) / (60 * (2 if real else 1))
    if convention == "ebn0":
        kwargs.update(bits_per_symbol=bits, code_rate=rate)
        factor /= bits * rate
    expected = power * factor / 10 ** (snr_db / 10)

    y, noise_var = awgn(x, snr_db, rng=11, convention=convention, return_noise_var=True,
                        **kwargs)
    assert y.dtype == np.dtype(dtype)
    np.testing.assert_allclose(noise_var, expected, rtol=1e-6 if dtype in (
        np.complex64, np.float32) else 1e-12)
    noise = y.astype(np.complex128) - x.astype(np.complex128)
    for row in range(2):
        _assert_variance(noise[row], expected[row], complex_noise=not real)
        if not real:
            # circular: real and imaginary parts each carry half the variance
            _assert_variance(noise[row].real, expected[row] / 2, complex_noise=False)
            _assert_variance(noise[row].imag, expected[row] / 2, complex_noise=False)
        else:
            assert np.all(noise[row].imag == 0)


def test_snr_per_row_broadcasts_over_leading_axes():
    x = _signal(np.complex128, (3, 4, 4096))
    snr_db = np.array([[0.0], [10.0], [20.0]])          # shape (3, 1) -> per batch row
    y, noise_var = awgn(x, snr_db, rng=5, reference=1.0, return_noise_var=True)
    assert noise_var.shape == (3, 4)
    np.testing.assert_allclose(noise_var, np.broadcast_to(10 ** (-snr_db / 10), (3, 4)))
    for i in range(3):
        _assert_variance((y - x)[i], 10 ** (-snr_db[i, 0] / 10), complex_noise=True)
    _, noise_var = awgn(x, [0.0, 1.0, 2.0, 3.0], rng=5, reference=2.0,
                        return_noise_var=True)      # shape (4,) -> along the second axis
    np.testing.assert_allclose(noise_var[1], 2.0 * 10 ** (-np.arange(4) / 10))


def test_nominal_reference_ignores_the_signal_power():
    x = 5.0 * _signal(np.complex128, 8192)
    y, noise_var = awgn(x, 6.0, rng=2, reference=0.5, return_noise_var=True)
    assert isinstance(noise_var, float)
    assert noise_var == pytest.approx(0.5 * 10 ** -0.6, rel=1e-12)
    _assert_variance(y - x, noise_var, complex_noise=True)


# -- end-to-end Es/N0 with an OFDM signal built from plain numpy -------------------

def _ofdm(rng, n_fft, positive_bins, negative_bins, cp_lengths, n_symbols, oversampling,
          real):
    """Unit-energy QPSK on the given bins, unitary IFFT, cyclic prefix.

    Returns the time signal, the transmitted grid values (n_symbols, K),
    the bin indices in the N-point grid and the start of every FFT window.
    """
    big_n = oversampling * n_fft
    bins = np.array([k for k in positive_bins] + [big_n + k for k in negative_bins])
    values = (rng.choice([-1.0, 1.0], (n_symbols, bins.size))
              + 1j * rng.choice([-1.0, 1.0], (n_symbols, bins.size))) / np.sqrt(2)
    grid = np.zeros((n_symbols, big_n), complex)
    grid[:, bins] = values
    if real:
        grid[:, big_n - bins] = np.conj(values)          # Hermitian image
    body = np.fft.ifft(grid, norm="ortho")
    if real:
        assert np.max(np.abs(body.imag)) < 1e-12
        body = body.real
    pieces, starts, position = [], [], 0
    for s in range(n_symbols):
        cp = oversampling * cp_lengths[s % len(cp_lengths)]
        pieces.append(np.concatenate([body[s, big_n - cp:], body[s]]))
        starts.append(position + cp)
        position += cp + big_n
    return np.concatenate(pieces), values, bins, np.array(starts)


def _analyse(y, starts, big_n, bins):
    windows = np.stack([y[s:s + big_n] for s in starts])
    return np.fft.fft(windows, norm="ortho")[:, bins]


@pytest.mark.parametrize("real", [False, True], ids=["complex", "real-dmt"])
@pytest.mark.parametrize("oversampling", [1, 2])
def test_esn0_end_to_end_ofdm(oversampling, real):
    n_fft, cp_lengths, n_symbols = 64, (10, 8, 8, 8), 200
    if real:
        positive, negative = range(3, 27), []            # 24 subcarriers + images
    else:
        positive, negative = range(1, 27), range(-26, 0)  # 52 subcarriers
    rng = np.random.default_rng(20)
    x, values, bins, starts = _ofdm(rng, n_fft, positive, negative, cp_lengths, n_symbols,
                                    oversampling, real)
    n_used = len(values[0])
    plan = _plan(n_fft, n_used, cp_lengths)
    big_n = oversampling * n_fft
    esn0_db = 9.0

    # (1) Es/N0 measured from the definitions, with the measured reference:
    # Es = transmitted energy (prefix included) per subcarrier symbol, N0 =
    # sigma^2 per unit bandwidth (sample period 1), one-sided (2 sigma^2) for
    # real noise.
    y, noise_var = awgn(x, esn0_db, rng=21, convention="esn0", plan=plan,
                        oversampling=oversampling, return_noise_var=True)
    es = np.sum(np.abs(x) ** 2) / (n_symbols * n_used)
    n0 = noise_var * (2 if real else 1)
    assert 10 * np.log10(es / n0) == pytest.approx(esn0_db, abs=1e-9)
    _assert_variance(y - x, noise_var, complex_noise=not real)

    # (2) the per-bin SNR after CP removal and unitary FFT, with the nominal
    # reference P = (K or 2K) * Es_grid / N (Parseval), Es_grid = 1 exactly.
    nominal = n_used * (2 if real else 1) / big_n
    y, noise_var = awgn(x, esn0_db, rng=22, convention="esn0", plan=plan,
                        oversampling=oversampling, reference=nominal,
                        return_noise_var=True)
    received = _analyse(y, starts, big_n, bins)
    np.testing.assert_allclose(_analyse(x, starts, big_n, bins), values, atol=1e-12)
    bin_noise = received - values
    bin_snr_db = esn0_to_bin_snr_db(esn0_db, plan)
    # the prefix loss written out: 10 log10(n_fft / (n_fft + mean cp))
    assert bin_snr_db == pytest.approx(esn0_db + 10 * np.log10(64 / 72.5), abs=1e-12)
    # per-bin noise variance equals sigma^2 (unitary FFT; for real noise the
    # bins 0 < k < N/2 are circular complex of variance sigma^2)
    _assert_variance(bin_noise, noise_var, complex_noise=True)
    _assert_variance(bin_noise, 10 ** (-bin_snr_db / 10), complex_noise=True)


def test_ebn0_qpsk_bit_error_rate_matches_textbook():
    # Gray QPSK: BER = Q(sqrt(2 Eb/N0)) per subcarrier (Proakis & Salehi, from
    # memory), with Eb/N0 at the bins lowered by the prefix loss.
    n_fft, cp_lengths, n_symbols, ebn0_db = 64, (16,), 200, 4.0
    rng = np.random.default_rng(30)
    x, values, bins, starts = _ofdm(rng, n_fft, range(1, 27), range(-26, 0), cp_lengths,
                                    n_symbols, 1, False)
    plan = _plan(n_fft, 52, cp_lengths)
    y = awgn(x, ebn0_db, rng=31, convention="ebn0", plan=plan, bits_per_symbol=2,
             reference=52 / 64)
    received = _analyse(y, starts, 64, bins)
    errors = (np.count_nonzero(np.sign(received.real) != np.sign(values.real))
              + np.count_nonzero(np.sign(received.imag) != np.sign(values.imag)))
    total = 2 * values.size
    ebn0_bin = 10 ** (ebn0_db / 10) * 64 / 80
    theory = 0.5 * special.erfc(np.sqrt(ebn0_bin))        # Q(sqrt(2 x)) = erfc(sqrt(x))/2
    low, high = stats.binomtest(errors, total).proportion_ci(CONFIDENCE, method="exact")
    assert low <= theory <= high, (errors / total, theory, low, high)


# -- conversions -------------------------------------------------------------------

def test_conversions_closed_form():
    plan = _plan(64, 52, (16,))
    # Es/N0 = SNR * L (n_fft + cp) / K  (module notes; the numbers written out)
    assert snr_to_esn0_db(10.0, plan) == pytest.approx(10 + 10 * np.log10(80 / 52))
    real_plan = _plan(64, 24, (16,))      # 24 positive-frequency subcarriers, 48 bins
    assert snr_to_esn0_db(10.0, real_plan, oversampling=4, real=True) == pytest.approx(
        10 + 10 * np.log10(4 * 80 / 48))
    assert esn0_to_snr_db(10.0, plan, oversampling=2) == pytest.approx(
        10 - 10 * np.log10(160 / 52))
    # Eb/N0 = Es/N0 / (b R): 64-QAM rate 3/4 carries 4.5 information bits
    assert ebn0_to_snr_db(5.0, plan, 6, code_rate=0.75) == pytest.approx(
        5 + 10 * np.log10(4.5) - 10 * np.log10(80 / 52))
    assert esn0_to_bin_snr_db(10.0, plan) == pytest.approx(10 + 10 * np.log10(0.8))
    assert snr_to_noise_var(20.0, 3.0) == pytest.approx(0.03)
    # vectorised, round trips exact to rounding
    grid = np.linspace(-10, 30, 9)
    back = snr_to_esn0_db(esn0_to_snr_db(grid, real_plan, oversampling=3, real=True),
                          real_plan, oversampling=3, real=True)
    np.testing.assert_allclose(back, grid, atol=1e-12)
    assert isinstance(esn0_to_snr_db(1, plan), float)
    assert esn0_to_snr_db(grid, plan).shape == (9,)
    np.testing.assert_allclose(snr_to_noise_var([0.0, 10.0], [[1.0], [2.0]]),
                               [[1.0, 0.1], [2.0, 0.2]])


def test_awgn_agrees_with_the_conversions():
    plan = _plan(256, 200, (18, 16))
    x = _signal(np.complex64, 1024)
    _, a = awgn(x, 7.0, convention="esn0", plan=plan, oversampling=2, rng=0,
                reference=1.0, return_noise_var=True)
    b = snr_to_noise_var(esn0_to_snr_db(7.0, plan, oversampling=2), 1.0)
    assert a == pytest.approx(b, rel=1e-12)
    real_plan = _plan(256, 100, (18, 16))
    _, a = awgn(x.real, 7.0, convention="ebn0", plan=real_plan, bits_per_symbol=3,
                code_rate=0.5, rng=0, reference=1.0, return_noise_var=True)
    b = snr_to_noise_var(ebn0_to_snr_db(7.0, real_plan, 3, code_rate=0.5, real=True), 1.0)
    assert a == pytest.approx(b, rel=1e-12)


# -- dtypes and randomness -----------------------------------------------------------

@pytest.mark.parametrize("given, expected", [
    (np.complex128, np.complex128), (np.complex64, np.complex64),
    (np.float64, np.float64), (np.float32, np.float32), (np.float16, np.float32),
    (np.int16, np.float64),
])
def test_dtype_kept(given, expected):
    x = (_signal(np.complex128 if np.dtype(given).kind == "c" else np.float64, (2, 64))
         * 10).astype(given)
    y, noise_var = awgn(x, 10.0, rng=1, return_noise_var=True)
    assert y.dtype == np.dtype(expected)
    assert y.shape == x.shape
    assert noise_var.dtype == np.float64 and noise_var.shape == (2,)


def test_lists_are_complex128_or_float64():
    assert awgn([1 + 1j, 1 - 1j], 10, rng=0).dtype == np.complex128
    assert awgn([1.0, -1.0], 10, rng=0).dtype == np.float64


def test_seed_gives_same_noise():
    x = _signal(np.complex128, (3, 500))
    a = awgn(x, 5.0, rng=123)
    np.testing.assert_array_equal(a, awgn(x, 5.0, rng=123))
    np.testing.assert_array_equal(a, awgn(x, 5.0, rng=np.random.default_rng(123)))
    assert not np.array_equal(a, awgn(x, 5.0, rng=124))
    assert not np.array_equal(awgn(x, 5.0), awgn(x, 5.0))     # fresh entropy
    gen = np.random.default_rng(9)
    assert not np.array_equal(awgn(x, 5.0, rng=gen), awgn(x, 5.0, rng=gen))  # advances


def test_complex64_noise_is_rounded_complex128_noise():
    x = _signal(np.complex128, 2000)
    n128 = awgn(x, 0.0, rng=7, reference=1.0) - x
    y64 = awgn(x.astype(np.complex64), 0.0, rng=7, reference=1.0)
    np.testing.assert_array_equal(y64, x.astype(np.complex64) + n128.astype(np.complex64))


def test_same_draws_scaled_across_a_sweep():
    x = _signal(np.float64, 1000)
    y1, v1 = awgn(x, 0.0, rng=4, return_noise_var=True)
    y2, v2 = awgn(x, 20.0, rng=4, return_noise_var=True)
    np.testing.assert_allclose((y1 - x) / np.sqrt(v1), (y2 - x) / np.sqrt(v2), atol=1e-9)


def test_nonfinite_samples_propagate_with_nominal_reference():
    x = np.ones(8, complex)
    x[3] = np.nan
    y = awgn(x, 10.0, rng=0, reference=1.0)
    assert np.isnan(y[3]) and np.all(np.isfinite(np.delete(y, 3)))


def test_empty_batch_is_allowed():
    y, noise_var = awgn(np.zeros((0, 16), complex), 3.0, rng=0, return_noise_var=True)
    assert y.shape == (0, 16) and noise_var.shape == (0,)


# -- bad input ---------------------------------------------------------------------

X = np.ones(16, complex)
PLAN = _plan()


@pytest.mark.parametrize("call, error, match", [
    (lambda: awgn(X, 3, convention="snr"), ValueError, "convention='snr'"),
    (lambda: awgn(X, 3, convention=1), TypeError, "convention"),
    (lambda: awgn(X, 3, convention="esn0"), ValueError, "needs plan"),
    (lambda: awgn(X, 3, convention="ebn0", plan=PLAN), ValueError, "bits_per_symbol"),
    (lambda: awgn(X, 3, plan=PLAN), ValueError, "plan is used only"),
    (lambda: awgn(X, 3, oversampling=2), ValueError, "oversampling=2"),
    (lambda: awgn(X, 3, convention="esn0", plan=PLAN, bits_per_symbol=2), ValueError,
     "bits_per_symbol=2"),
    (lambda: awgn(X, 3, code_rate=0.5), ValueError, "code_rate=0.5"),
    (lambda: awgn(X, 3, convention="ebn0", plan=PLAN, bits_per_symbol=0), ValueError,
     "bits_per_symbol=0"),
    (lambda: awgn(X, 3, convention="ebn0", plan=PLAN, bits_per_symbol="2"), TypeError,
     "bits_per_symbol"),
    (lambda: awgn(X, 3, convention="ebn0", plan=PLAN, bits_per_symbol=2, code_rate=1.5),
     ValueError, "code_rate=1.5"),
    (lambda: awgn(X, np.nan), ValueError, "snr_db must be finite"),
    (lambda: awgn(X, np.inf), ValueError, "snr_db must be finite"),
    (lambda: awgn(X, "10"), TypeError, "snr_db"),
    (lambda: awgn(X, 1j), TypeError, "snr_db"),
    (lambda: awgn(X, [1.0, 2.0]), ValueError, "snr_db has shape"),
    (lambda: awgn(np.ones((2, 16)), np.ones((2, 16))), ValueError, "snr_db has shape"),
    (lambda: awgn(X, 3, reference=0.0), ValueError, "reference=0.0"),
    (lambda: awgn(X, 3, reference=-1), ValueError, "reference=-1"),
    (lambda: awgn(X, 3, reference=np.inf), ValueError, "reference=inf"),
    (lambda: awgn(X, 3, reference="peak"), ValueError, "reference='peak'"),
    (lambda: awgn(X, 3, reference=True), TypeError, "reference"),
    (lambda: awgn(X, 3, reference=[1.0]), TypeError, "reference"),
    (lambda: awgn(np.zeros(16), 3), ValueError, "zero or non-finite power"),
    (lambda: awgn(np.array([[1.0, 1.0], [0.0, 0.0]]), 3), ValueError, r"row \(1,\)"),
    (lambda: awgn(np.array([1.0, np.inf]), 3), ValueError, "non-finite power"),
    (lambda: awgn(["a", "b"], 3), TypeError, "x has dtype"),
    (lambda: awgn(np.array([True, False]), 3), TypeError, "x has dtype"),
    (lambda: awgn(np.array([1, 2], dtype=object), 3), TypeError, "x has dtype"),
    (lambda: awgn(1.0, 3), ValueError, "x must have at least one dimension"),
    (lambda: awgn(np.ones((3, 0)), 3), ValueError, "no samples"),
    (lambda: awgn(X, 3, convention="esn0", plan=PLAN, oversampling=0), ValueError,
     "oversampling must be >= 1, got 0"),
    (lambda: awgn(X, 3, convention="esn0", plan=PLAN, oversampling=1.5), TypeError,
     "oversampling"),
    (lambda: awgn(X, 3, convention="esn0", plan=object()), TypeError, "plan must be"),
    (lambda: awgn(X, 3, convention="esn0", plan=_plan(64, 65)), ValueError, "n_used=65"),
    (lambda: awgn(np.ones(16), 3, convention="esn0", plan=_plan(64, 40)), ValueError,
     "n_used=40"),
    (lambda: awgn(X, 3, rng=1.5), TypeError, "rng"),
    (lambda: awgn(X, 3, rng=-1), TypeError, "rng"),
    (lambda: awgn(X, 3, rng=np.random.RandomState(0)), TypeError, "rng"),
    (lambda: esn0_to_snr_db(3, None), TypeError, "plan"),
    (lambda: esn0_to_snr_db(3, PLAN, real="no"), TypeError, "real"),
    (lambda: esn0_to_snr_db(3, SimpleNamespace(n_fft=64.5, n_used=1, mean_cp_length=0)),
     TypeError, "n_fft=64.5"),
    (lambda: esn0_to_snr_db(3, _plan(cp_lengths=(-1,))), ValueError, "mean_cp_length"),
    (lambda: ebn0_to_snr_db([1, np.nan], PLAN, 2), ValueError, "ebn0_db"),
    (lambda: ebn0_to_snr_db(1, PLAN, -2), ValueError, "bits_per_symbol"),
    (lambda: esn0_to_bin_snr_db("x", PLAN), TypeError, "esn0_db"),
    (lambda: snr_to_esn0_db(None, PLAN), TypeError, "snr_db"),
    (lambda: snr_to_noise_var(3, 0), ValueError, "signal_power"),
    (lambda: snr_to_noise_var([1, 2, 3], [1, 2]), ValueError, "broadcast"),
])
def test_bad_input_names_the_argument(call, error, match):
    with pytest.raises(error, match=match):
        call()
