"""IQ imbalance estimation and correction (tonebank.sync.iq).

Outside references, named beside each check:
- the textbook mirror-image model y = mu x + nu conj(x) (e.g. B. Razavi,
  RF Microelectronics, Prentice Hall, 1998, chapter 5; from memory) and
  its exact inverse (mu* y - nu y*) / (|mu|^2 - |nu|^2), by algebra;
- the preamble: IEEE Std 802.11-2020, clause 17.3.3 (PLCP preamble, the
  short and long training fields), through tonebank.presets, whose own
  tests check it against the standard;
- the least-squares error covariance sigma^2 (R^H R)^-1 of the linear
  model (S. M. Kay, Fundamentals of Statistical Signal Processing:
  Estimation Theory, Prentice Hall, 1993, chapter 4; from memory), with
  scipy.stats.chi2 bounds for the Monte-Carlo mean;
- the OFDM frequency-domain relation Y_k = mu H_k X_k + nu conj(H_-k X_-k)
  checked through numpy.fft.

Monte-Carlo checks use fixed seeds; their bounds are stated beside them.
"""

import math

import numpy as np
import pytest
import scipy.stats

from tonebank import presets
from tonebank.channel import DcOffset, DelayProfile, IqImbalance, SignalChain, TappedDelayLine
from tonebank.sync import IqImbalanceEstimate, estimate_iq_imbalance, estimate_iq_imbalance_bins


def _ratio(iq):
    return iq.nu / np.conj(iq.mu)


@pytest.mark.parametrize("gain_db, phase_deg", [(0.8, 3.0), (-1.5, -7.0), (0.0, 0.0)])
def test_noise_free_round_trip_through_a_flat_channel(gain_db, phase_deg):
    # reference: y = mu h x + nu conj(h x) (+ d); the fit recovers w = nu / conj(mu)
    # whatever the flat gain h, and the correction leaves exactly mu h x
    pre = presets.ieee80211a_preamble(norm="ortho")
    iq = IqImbalance(gain_db=gain_db, phase_deg=phase_deg)
    h = 0.6 * np.exp(1.1j)
    chain = SignalChain(IqImbalance(gain_db=gain_db, phase_deg=phase_deg),
                        DcOffset(0.03 - 0.05j))
    y = chain.filter(h * pre)
    est = estimate_iq_imbalance(y, pre, dc=True)
    assert est.image_ratio == pytest.approx(_ratio(iq), abs=1e-12)
    assert est.dc_offset == pytest.approx(0.03 - 0.05j, abs=1e-12)
    np.testing.assert_allclose(est.correct(y), iq.mu * h * pre, atol=1e-12)
    # the exact inverse of the model, by algebra: (mu* y - nu y*) / (|mu|^2 - |nu|^2)
    z = iq.filter(pre)
    inverse = (np.conj(iq.mu) * z - iq.nu * np.conj(z)) / (abs(iq.mu) ** 2 - abs(iq.nu) ** 2)
    np.testing.assert_allclose(est.correct(z + 0.03 - 0.05j) / iq.mu, inverse, atol=1e-12)


def test_image_rejection_after_correction_at_20_db_snr():
    # Scenario: a receiver with 1 dB / 5 degree imbalance (IRR 22.8 dB) trains on the
    # 320-sample 802.11a preamble (IEEE 802.11-2020, 17.3.3) at an SNR of 20 dB
    # (noise after the imbalance).  The residual image ratio after correction is
    # |w - w_hat|^2 to first order, with mean sigma^2 [(R^H R)^-1]_bb / |mu|^2 (Kay 1993,
    # ch. 4); its mean over 300 trials, times 2 * 300 / mean, is about chi-square with
    # 600 degrees of freedom: bounds at probability 1e-6 on either side.
    pre = presets.ieee80211a_preamble(norm="ortho")
    iq = IqImbalance(gain_db=1.0, phase_deg=5.0)
    clean = iq.filter(pre)
    power = np.mean(np.abs(iq.mu * pre) ** 2)
    sigma2 = power / 10 ** (20.0 / 10)
    design = np.stack((pre, np.conj(pre)), axis=1)
    predicted = sigma2 * np.linalg.inv(design.conj().T @ design)[1, 1].real / abs(iq.mu) ** 2
    rng = np.random.default_rng(606)
    trials = 300
    residual = np.empty(trials)
    for t in range(trials):
        noise = math.sqrt(sigma2 / 2) * (rng.standard_normal(pre.size)
                                         + 1j * rng.standard_normal(pre.size))
        est = estimate_iq_imbalance(clean + noise, pre)
        # residual model after correction: mu' x + nu' conj(x)
        w_hat = est.image_ratio
        mu_r = iq.mu - w_hat * np.conj(iq.nu)
        nu_r = iq.nu - w_hat * np.conj(iq.mu)
        residual[t] = abs(nu_r) ** 2 / abs(mu_r) ** 2
    dof = 2 * trials
    low = scipy.stats.chi2.ppf(1e-6, dof) / dof
    high = scipy.stats.chi2.isf(1e-6, dof) / dof
    assert low < np.mean(residual) / predicted < high
    irr_after_db = -10 * math.log10(np.mean(residual))
    # about 10 log10(n SNR) = 10 log10(320 * 100) = 45 dB, against 22.8 dB before
    g, phi = 10 ** (1.0 / 20), math.radians(5.0)
    irr_before = (1 + g * g + 2 * g * math.cos(phi)) / (1 + g * g - 2 * g * math.cos(phi))
    assert iq.image_rejection_db == pytest.approx(10 * math.log10(irr_before), rel=1e-12)
    assert 42.0 < irr_after_db < 48.0


def test_bins_estimator_behind_a_frequency_selective_channel():
    # reference: Y_k = mu H_k X_k + nu conj(H_-k) conj(X_-k) (numpy.fft of the model);
    # a static multipath channel within the cyclic prefix, two random-QPSK symbols;
    # noise-free the estimate is exact
    n_fft, cp = 64, 16
    rng = np.random.default_rng(3)
    grid = np.exp(0.5j * np.pi * rng.integers(0, 4, (2, n_fft))) * (1 + 0j)
    grid[:, 0] = 0                                                     # DC unused
    grid[:, 27:38] = 0                                                 # guard band
    body = np.fft.ifft(grid, norm="ortho")
    x = np.concatenate((body[:, -cp:], body), axis=1).ravel()
    channel = TappedDelayLine(DelayProfile([0.0, 2e-6, 5e-6], [0.0, -4.0, -9.0]), 1e6, rng=8)
    iq = IqImbalance(gain_db=-0.7, phase_deg=6.0)
    y = SignalChain(channel, iq).filter(x).reshape(2, n_fft + cp)[:, cp:]
    est = estimate_iq_imbalance_bins(np.fft.fft(y, norm="ortho"), grid)
    assert est.image_ratio == pytest.approx(_ratio(iq), abs=1e-10)
    # the time-domain fit, which assumes a flat channel, is biased here
    assert abs(estimate_iq_imbalance(iq.filter(channel.filter(x)), x).image_ratio
               - _ratio(iq)) > 1e-3


def test_correct_keeps_complex64_and_the_estimate_reports_its_irr():
    est = IqImbalanceEstimate(0.1j)
    assert est.image_rejection_db == pytest.approx(20.0)
    y = est.correct(np.ones(4, dtype=np.complex64))
    assert y.dtype == np.complex64
    np.testing.assert_allclose(y, (1 - 0.1j) / 0.99, rtol=1e-6)
    assert IqImbalanceEstimate(0).image_rejection_db == math.inf


@pytest.mark.parametrize("call, match", [
    (lambda: estimate_iq_imbalance(np.ones(10), np.ones(10)), "reference"),
    (lambda: estimate_iq_imbalance(np.ones(10), np.ones(9) + 1j), "broadcast"),
    (lambda: estimate_iq_imbalance([1j], [1j]), "at least 2"),
    (lambda: estimate_iq_imbalance(np.ones(10), np.ones(10), dc="yes"), "dc"),
    (lambda: estimate_iq_imbalance(np.array(["a"]), [1j]), "received"),
    (lambda: estimate_iq_imbalance([np.nan, 1j], [1j, 1]), "received"),
    (lambda: estimate_iq_imbalance_bins(np.ones((1, 8)), np.ones((1, 8))), "2"),
    (lambda: estimate_iq_imbalance_bins(np.ones((2, 8)), np.ones((2, 4))), "shape"),
    (lambda: estimate_iq_imbalance_bins(np.ones((2, 8)), np.ones((2, 8))), "pair"),
    (lambda: IqImbalanceEstimate(1.0), "image_ratio"),
])
def test_bad_arguments_are_named(call, match):
    with pytest.raises((TypeError, ValueError), match=match):
        call()
