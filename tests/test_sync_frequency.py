"""Carrier frequency offset estimation and correction (tonebank.sync.frequency).

References
----------
- T. M. Schmidl and D. C. Cox, "Robust frequency and timing synchronization
  for OFDM", IEEE Trans. Commun. 45 (12), 1997 ("S&C"), from memory:
  the offset estimate phi/pi from the angle of P at the timing point
  (eq. 8 with L = N/2), unambiguous within +/- one spacing; the integer
  (even) part from the second training symbol by maximising B(g)
  (eq. 33); the variance of the phase estimate var(phi) = 1/(L SNR) at
  high SNR (section III), SNR per sample.
- The second-order term 1/(2 L SNR^2) of that variance (the noise-times-
  noise products) is written out here from the same derivation; it is
  below 2 % of the first term at the SNRs tested.
- scipy.stats.chi2: the confidence interval of a Monte-Carlo mean squared
  error (M * MSE / var ~ chi-square with M degrees of freedom for
  Gaussian errors).
"""

import numpy as np
import pytest
import scipy.stats

import tonebank
from tonebank import sync

PLAN = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
PRE = sync.Preamble.two_halves(PLAN)


def _shift(x, eps, n_fft=64, start=0):
    """Apply an offset of ``eps`` spacings with a plain numpy line."""
    n = np.arange(x.shape[-1]) + start
    return x * np.exp(2j * np.pi * eps * n / n_fft)


@pytest.mark.parametrize("eps", [-0.999, -0.73, -0.2, 0.0, 0.05, 0.5, 0.999])
def test_fractional_offset_is_exact_without_noise(eps):
    # S&C eq. 8: phi / pi over the two halves, exact within +/- 1 spacing.
    rx = _shift(PRE.samples, eps)
    tm = sync.timing_metric(rx, PRE.period)
    p = tm.correlation[PRE.halves_start]
    assert sync.fractional_cfo(p, PRE.period, 64) == pytest.approx(eps, abs=1e-12)
    # And at every point of the plateau (the prefix is part of the repetition).
    est = sync.fractional_cfo(tm.correlation[:17], PRE.period, 64)
    np.testing.assert_allclose(est, eps, atol=1e-12)


@pytest.mark.parametrize("eps", [-3.7, -2.2, -1.0, 1.3, 2.0, 3.9])
def test_integer_offset_from_the_second_symbol(eps):
    # S&C eq. 33: after the fractional correction the even remainder is
    # found from the differential sequence between the two symbols; here
    # through a three-path channel (the channel cancels in X1* X2).
    h = np.array([0.9, 0.0, 0.35 - 0.2j, 0.1j])
    rx = _shift(np.convolve(PRE.samples, h)[:PRE.n_samples], eps)
    p = sync.timing_metric(rx, 32).correlation[PRE.halves_start]
    frac = sync.fractional_cfo(p, 32, 64)
    fixed = sync.correct_cfo(rx, frac, 64)
    g = sync.integer_cfo(fixed[16:80], fixed[96:160], PRE.halves_grid, PRE.training,
                         max_spacings=6)
    assert g % 2 == 0
    assert frac + g == pytest.approx(eps, abs=1e-9)


@pytest.mark.parametrize("snr_db", [15.0, 20.0, 25.0])
def test_offset_estimator_variance_follows_schmidl_cox(snr_db):
    # S&C section III: var(phi) = 1/(L SNR) (+ 1/(2 L SNR^2)), so the error
    # of phi/pi in spacings has variance that over pi^2.  4000 trials; the
    # MSE must fall in the two-sided 1e-5 chi-square interval.
    rng = np.random.default_rng([11, int(snr_db)])
    trials, eps = 4000, 0.37
    body = PRE.samples[16:80]
    power = np.mean(np.abs(body) ** 2)
    snr = 10 ** (snr_db / 10)
    sigma2 = power / snr
    noise = np.sqrt(sigma2 / 2) * (rng.standard_normal((trials, 64))
                                   + 1j * rng.standard_normal((trials, 64)))
    rx = _shift(body, eps) + noise
    # One long stream of the trials back to back; the metric at each body start.
    p = sync.timing_metric(rx.reshape(-1), 32).correlation[::64][:trials]
    err = sync.fractional_cfo(p, 32, 64) - eps
    L = 32
    var = (1 / (L * snr) + 1 / (2 * L * snr ** 2)) / np.pi ** 2
    mse = np.mean(err ** 2)
    lo, hi = scipy.stats.chi2.ppf([1e-5, 1 - 1e-5], trials) / trials
    assert lo * var <= mse <= hi * var
    assert abs(np.mean(err)) <= 5 * np.sqrt(var / trials)


def test_repeat_offset_on_the_80211a_long_training():
    # The long symbols repeat with period 64: fine offset exact within
    # +/- 1/2 spacing.
    pre = sync.Preamble.ieee80211a()
    for eps in (-0.49, -0.1, 0.23, 0.49):
        rx = _shift(pre.samples, eps)
        r = pre.repeated
        got = sync.repeat_cfo(rx, r.period, 64, start=r.start, length=r.length)
        assert got == pytest.approx(eps, abs=1e-12)
    # The short field gives +/- 2 spacings (period 16).
    rx = _shift(pre.samples, 1.9)
    p = sync.timing_metric(rx, 16, window=64).correlation[40]
    assert sync.fractional_cfo(p, 16, 64) == pytest.approx(1.9, abs=1e-12)


def test_correct_cfo_undoes_the_offset_and_keeps_dtype():
    rng = np.random.default_rng(12)
    x = rng.standard_normal(500) + 1j * rng.standard_normal(500)
    y = _shift(x, 0.31, start=1000)
    np.testing.assert_allclose(sync.correct_cfo(y, 0.31, 64, start_sample=1000), x,
                               atol=1e-12)
    # Per-row offsets; complex64 kept.
    rows = np.stack((_shift(x, 0.2), _shift(x, -1.4))).astype(np.complex64)
    out = sync.correct_cfo(rows, [0.2, -1.4], 64)
    assert out.dtype == np.complex64
    np.testing.assert_allclose(out, np.stack((x, x)), atol=1e-4)


@pytest.mark.parametrize("call, error, match", [
    (lambda: sync.fractional_cfo("a", 32, 64), TypeError, "correlation"),
    (lambda: sync.fractional_cfo(1j, 0, 64), ValueError, "period"),
    (lambda: sync.repeat_cfo(np.ones(100), 64, 64, start=50), ValueError, "needs"),
    (lambda: sync.repeat_cfo(np.ones((2, 100)), 10, 64), ValueError, "shape"),
    (lambda: sync.integer_cfo(np.ones(64), np.ones(32), PRE.halves_grid, PRE.training,
                              max_spacings=4), ValueError, "second"),
    (lambda: sync.integer_cfo(np.ones(64), np.ones(64), PRE.halves_grid, PRE.training,
                              max_spacings=-1), ValueError, "max_spacings"),
    (lambda: sync.integer_cfo(np.ones(64), np.ones(64), np.zeros(64), PRE.training,
                              max_spacings=4), ValueError, "share no"),
    (lambda: sync.correct_cfo(np.ones(10), np.nan, 64), ValueError, "cfo_spacings"),
    (lambda: sync.correct_cfo(np.ones((2, 10)), [1, 2, 3], 64), ValueError, "broadcast"),
    (lambda: sync.correct_cfo(np.ones(10), 1j, 64), TypeError, "cfo_spacings"),
])
def test_errors_name_the_argument(call, error, match):
    with pytest.raises(error, match=match):
        call()
