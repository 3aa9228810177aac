"""tonebank.amplifier: amplifier models, operating point, EVM and ACLR.

Outside references, named beside each check:

* Rapp 1991 (Proc. 2nd European Conf. on Satellite Communications): the
  solid-state AM/AM curve g r / (1 + (g r / A0)^(2p))^(1/(2p));
* Saleh, IEEE Trans. Commun. 29(11), 1981: AM/AM alpha_a r / (1 + beta_a
  r^2), AM/PM alpha_p r^2 / (1 + beta_p r^2), with the paper's fitted TWT
  parameters 2.1587, 1.1517, 4.0033, 9.1040 (from memory);
* Ochiai & Imai, IEEE Trans. Commun. 50(1), 2002: the signal-to-distortion
  ratio of a clipped Gaussian signal (a soft limiter at input back-off b
  is a clipper at ratio b dB);
* the flat power spectral density of white noise (definition), and
  scipy.signal.welch as the spectral estimator.

ACLR and power figures are engineering estimates, not compliance
measurements.
"""

import math

import numpy as np
import pytest

from tonebank.amplifier import RappAmplifier, SalehAmplifier, SoftLimiter, drive
from tonebank.papr import clip, clipping_theory, oversample


def ofdm_samples(rng, n_symbols=200, n_fft=256, used=200, oversampling=4):
    grid = np.zeros((n_symbols, n_fft), complex)
    k = np.arange(-used // 2, used // 2 + 1)
    k = k[k != 0]
    grid[:, k % n_fft] = np.exp(0.5j * np.pi * rng.integers(0, 4, (n_symbols, k.size)))
    return oversample(grid, oversampling=oversampling).reshape(-1)


@pytest.mark.parametrize("p, expected", [(1.0, 2 ** -0.5), (2.0, 2 ** -0.25),
                                          (3.0, 2 ** (-1 / 6)), (10.0, 2 ** -0.05)])
def test_rapp_curve_points(p, expected):
    # Rapp 1991: at g r = A0 the output is 2^(-1/(2p)) A0; linear for small r,
    # A0 for large r; p -> infinity gives the limiter.
    amp = RappAmplifier(p, saturation=2.0, gain=4.0)
    assert float(amp.am_am(0.5)) == pytest.approx(2.0 * expected, rel=1e-12)
    assert float(amp.am_am(1e-6)) == pytest.approx(4e-6, rel=1e-9)
    assert float(amp.am_am(1e6)) == pytest.approx(2.0, rel=1e-6)
    r = np.linspace(0, 3, 31)
    ref = 4 * r / (1 + (4 * r / 2) ** (2 * p)) ** (1 / (2 * p))
    np.testing.assert_allclose(amp.am_am(r), ref, rtol=1e-12)
    np.testing.assert_allclose(amp.am_pm(r), 0)
    big = RappAmplifier(200.0)
    np.testing.assert_allclose(big.am_am([0.5, 0.9, 2.0]), SoftLimiter().am_am([0.5, 0.9, 2.0]),
                               rtol=1e-2)


def test_saleh_curve_points():
    # Saleh 1981 with its fitted TWT parameters (from memory): AM/AM peaks at
    # r = 1/sqrt(beta_a) = 0.9318 with output alpha_a / (2 sqrt(beta_a)) =
    # 1.0058; AM/PM at r = 1 is 4.0033 / 10.104 rad (22.7 degrees) and tends
    # to alpha_p / beta_p = 0.4397 rad (25.2 degrees).
    amp = SalehAmplifier()
    assert amp.input_saturation == pytest.approx(0.9318, abs=1e-4)
    assert amp.output_saturation == pytest.approx(1.0058, abs=1e-4)
    r = np.linspace(0.01, 2, 200)
    assert abs(r[np.argmax(amp.am_am(r))] - 0.9318) < 0.011
    assert math.degrees(float(amp.am_pm(1.0))) == pytest.approx(22.70, abs=0.01)
    assert float(amp.am_pm(1e3)) == pytest.approx(4.0033 / 9.1040, rel=1e-6)
    np.testing.assert_allclose(amp.am_am(r), 2.1587 * r / (1 + 1.1517 * r * r), rtol=1e-12)
    # applied to samples: the phase turns by AM/PM, the envelope follows AM/AM
    x = 0.7 * np.exp(1j * np.array([0.0, 1.0]))
    y = amp(x)
    np.testing.assert_allclose(np.abs(y), amp.am_am(0.7), rtol=1e-12)
    np.testing.assert_allclose(np.angle(y) - np.angle(x), amp.am_pm(0.7), rtol=1e-12)


def test_soft_limiter_is_clipping_at_the_input_backoff():
    # A limiter at input back-off b dB clips at b dB above the RMS level, so its
    # EVM is the distortion of Ochiai & Imai 2002: 10^(-SDR/20) (within 2 %),
    # and the output equals papr.clip of the scaled input.
    rng = np.random.default_rng(3)
    x = oversample(np.exp(0.5j * np.pi * rng.integers(0, 4, (300, 1024))), oversampling=1)
    x = x.reshape(-1)
    for b in (0.0, 3.0):
        res = drive(x, SoftLimiter(), input_backoff_db=b)
        theory = clipping_theory(b)
        assert res.evm_percent == pytest.approx(100 * 10 ** (-theory.sdr_db / 20), rel=0.02)
        scale = 10 ** (-b / 20) / np.sqrt(np.mean(np.abs(x) ** 2))
        # the scaled input has power 10^(-b/10); b dB above it is amplitude 1
        np.testing.assert_allclose(res.samples,
                                   clip(x * scale, b, reference_power=10 ** (-b / 10)),
                                   atol=1e-12)


def test_output_backoff_reached_and_trade_off_monotonic():
    rng = np.random.default_rng(4)
    x = ofdm_samples(rng, n_symbols=60)
    amp = RappAmplifier(2.0)
    evms, aclrs = [], []
    for obo in (3.0, 6.0, 9.0):
        res = drive(x, amp, output_backoff_db=obo, sample_rate=4.0e6,
                    channel_bandwidth=0.8e6)
        assert res.output_backoff_db == pytest.approx(obo, abs=1e-6)
        assert res.input_backoff_db > obo - 3.0
        evms.append(res.evm_percent)
        aclrs.append(res.aclr_db.min())
    # more back-off: less distortion, less spectral regrowth
    assert evms[0] > evms[1] > evms[2]
    assert aclrs[0] < aclrs[1] < aclrs[2]
    assert res.samples.dtype == np.complex128


def test_saleh_output_backoff_and_complex64():
    rng = np.random.default_rng(5)
    x = ofdm_samples(rng, n_symbols=20).astype(np.complex64)
    res = drive(x, SalehAmplifier(), output_backoff_db=6.0)
    assert res.samples.dtype == np.complex64
    assert res.output_backoff_db == pytest.approx(6.0, abs=1e-4)
    assert abs(np.angle(res.gain)) > 0.05       # AM/PM turns the mean phase


def test_aclr_of_white_noise_is_zero_db():
    # White noise has a flat PSD (definition): equal bandwidths hold equal
    # power, so ACLR ~ 0 dB (Welch estimate, 1024-point segments, within
    # 0.3 dB at this length).  Engineering estimate only.
    rng = np.random.default_rng(6)
    x = rng.standard_normal(200_000) + 1j * rng.standard_normal(200_000)
    res = drive(x, SoftLimiter(), input_backoff_db=40.0, sample_rate=1.0e6,
                channel_bandwidth=0.2e6, aclr_offsets=[-0.3e6, 0.3e6])
    np.testing.assert_allclose(res.aclr_db, 0.0, atol=0.3)
    assert res.evm_percent < 1e-9


@pytest.mark.parametrize("call, error, match", [
    (lambda: RappAmplifier(0.0), ValueError, "smoothness"),
    (lambda: RappAmplifier(2.0, saturation="1"), TypeError, "saturation"),
    (lambda: SalehAmplifier(beta_a=-1), ValueError, "beta_a"),
    (lambda: SoftLimiter(float("nan")), ValueError, "saturation"),
    (lambda: drive([1, 2], "rapp", input_backoff_db=3), TypeError, "model"),
    (lambda: drive([1, 2], SoftLimiter()), ValueError, "exactly one"),
    (lambda: drive([1, 2], SoftLimiter(), input_backoff_db=1, output_backoff_db=1),
     ValueError, "exactly one"),
    (lambda: drive([1, 2], SoftLimiter(), input_backoff_db="3"), TypeError,
     "input_backoff_db"),
    (lambda: drive([0, 0], SoftLimiter(), input_backoff_db=3), ValueError, "zero mean power"),
    (lambda: drive([1, np.inf], SoftLimiter(), input_backoff_db=3), ValueError, "NaN"),
    (lambda: drive([1, 2], SoftLimiter(), output_backoff_db=-1.0), ValueError,
     "not reachable"),
    (lambda: drive([1, 2], SoftLimiter(), input_backoff_db=3, sample_rate=1e6), ValueError,
     "channel_bandwidth"),
    (lambda: drive([1, 2], SoftLimiter(), input_backoff_db=3, sample_rate=1e6,
                   channel_bandwidth=0.5e6), ValueError, "aclr_offsets"),
    (lambda: drive(["a"], SoftLimiter(), input_backoff_db=3), TypeError, "samples"),
])
def test_bad_input(call, error, match):
    with pytest.raises(error, match=match):
        call()
