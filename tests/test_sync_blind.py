"""Blind timing and offset from the cyclic prefix (tonebank.sync.blind).

References
----------
- J.-J. van de Beek, M. Sandell and P. O. Borjesson, "ML estimation of
  time and frequency offset in OFDM systems", IEEE Trans. Signal Process.
  45 (7), 1997 ("vdB"), from memory: the log-likelihood
  |gamma(theta)| - rho Phi(theta) and the offset -angle(gamma)/(2 pi)
  (eq. 10-13), exact noise-free for |offset| < 1/2 spacing; the timing
  error shrinks as the SNR grows (their simulation results).
- The variance of the angle of a correlation sum over c products,
  conditional on the signal: sigma^2 / sum|s|^2 + c sigma^4 / (2 (sum|s|^2)^2)
  (the argument of Schmidl & Cox 1997, section III, applied to the
  prefix; from memory); the offset error is that over (2 pi)^2.
- scipy.stats.chi2 for the confidence interval of the Monte-Carlo MSE.
"""

import numpy as np
import pytest
import scipy.stats

import tonebank
from tonebank import sync

PLAN = tonebank.CarrierPlan.centered(64, 52, cp_length=16)
OFDM = tonebank.CpOfdm(PLAN)
PERIOD = 80


def _symbols(rng, rows, n_symbols):
    data = np.exp(2j * np.pi * rng.random((rows, n_symbols * PLAN.n_data)))
    return OFDM.modulate(data)


def _delay_and_shift(x, theta, eps):
    n = np.arange(x.shape[-1])
    rolled = np.stack([np.roll(row, t) for row, t in zip(x, theta)])
    return rolled * np.exp(2j * np.pi * eps * n / 64)


@pytest.mark.parametrize("eps", [-0.49, -0.2, 0.0, 0.31, 0.49])
def test_noise_free_timing_and_offset_are_exact(eps):
    # vdB: with rho = 1 (noise-free) the likelihood peaks at the true start
    # and the offset is exact for |eps| < 1/2.
    rng = np.random.default_rng([20, int(100 * eps) + 100])
    theta = rng.integers(0, PERIOD, 6)
    x = _delay_and_shift(_symbols(rng, 6, 4), theta, eps)
    est = sync.cp_estimate(x, 64, 16, snr_db=300, n_symbols=2)
    np.testing.assert_array_equal(est.timing, theta)
    np.testing.assert_allclose(est.cfo_spacings, eps, atol=1e-12)
    assert est.likelihood.shape == (6, PERIOD)


def test_timing_error_shrinks_with_snr():
    # vdB: the spread of the timing error falls with SNR; one symbol
    # period per estimate, 300 trials per SNR.  The bounds at 15 and 20 dB
    # (all within +/- 2 samples) are common practice, no source.
    rng = np.random.default_rng(21)
    trials = 300
    mean_abs = []
    for snr_db in (0.0, 5.0, 10.0, 15.0, 20.0):
        theta = rng.integers(0, PERIOD, trials)
        x = _delay_and_shift(_symbols(rng, trials, 3), theta, 0.1)
        power = np.mean(np.abs(x) ** 2)
        sigma = np.sqrt(power / 10 ** (snr_db / 10) / 2)
        x = x + sigma * (rng.standard_normal(x.shape) + 1j * rng.standard_normal(x.shape))
        est = sync.cp_estimate(x, 64, 16, snr_db=snr_db, n_symbols=1)
        err = (est.timing - theta + PERIOD // 2) % PERIOD - PERIOD // 2
        mean_abs.append(np.mean(np.abs(err)))
        if snr_db >= 15:
            assert np.all(np.abs(err) <= 2)
    assert all(a > b for a, b in zip(mean_abs, mean_abs[1:]))


def test_offset_variance_at_the_true_timing():
    # Conditional variance of the angle of gamma (see the module notes),
    # averaged over the trials' own prefix energies; 20 dB, 3000 trials,
    # two-sided 1e-5 chi-square interval over the trials whose timing came
    # out right (at least 90 % of them at this SNR; the choice of start
    # hardly depends on the phase of gamma, so the selection does not bias
    # the offset error).
    rng = np.random.default_rng(22)
    trials, eps, snr_db = 2000, 0.12, 20.0
    x = _symbols(rng, trials, 2)
    power = np.mean(np.abs(x) ** 2)
    sigma2 = power / 10 ** (snr_db / 10)
    rx = _delay_and_shift(x, np.zeros(trials, int), eps)
    rx = rx + np.sqrt(sigma2 / 2) * (rng.standard_normal(x.shape)
                                     + 1j * rng.standard_normal(x.shape))
    est = sync.cp_estimate(rx, 64, 16, snr_db=snr_db, n_symbols=1)
    right = est.timing == 0
    assert np.mean(right) >= 0.9
    energy = np.sum(np.abs(x[right, :16]) ** 2, axis=-1)
    var = np.mean(sigma2 / energy + 16 * sigma2 ** 2 / (2 * energy ** 2)) / (2 * np.pi) ** 2
    mse = np.mean((est.cfo_spacings[right] - eps) ** 2)
    m = int(np.sum(right))
    lo, hi = scipy.stats.chi2.ppf([1e-5, 1 - 1e-5], m) / m
    assert lo * var <= mse <= hi * var


def test_one_stream_gives_scalars():
    rng = np.random.default_rng(23)
    x = _symbols(rng, 1, 5)[0]
    est = sync.cp_estimate(np.roll(x, 7), 64, 16, snr_db=30)
    assert isinstance(est.timing, int) and isinstance(est.cfo_spacings, float)
    assert est.timing == 7


@pytest.mark.parametrize("kwargs, error, match", [
    (dict(samples=np.ones(100), n_fft=64, cp_length=16, snr_db=10), ValueError, "at least"),
    (dict(samples=np.ones(400), n_fft=64, cp_length=0, snr_db=10), ValueError, "cp_length"),
    (dict(samples=np.ones(400), n_fft=64, cp_length=16, snr_db=np.inf), ValueError, "snr_db"),
    (dict(samples=np.ones(400), n_fft=64, cp_length=16, snr_db="x"), TypeError, "snr_db"),
    (dict(samples=np.ones(400), n_fft=64, cp_length=16, snr_db=10, n_symbols=9),
     ValueError, "n_symbols"),
])
def test_errors_name_the_argument(kwargs, error, match):
    with pytest.raises(error, match=match):
        sync.cp_estimate(**kwargs)
