"""tonebank.spectrum: PSD, band powers, occupied bandwidth, ACLR, masks.

Sources named beside each check:

* scipy.signal.welch (general-purpose reference library): the estimate
  itself, compared directly;
* the PSD of white noise of variance s2 sampled at fs is s2 / fs, flat
  over (-fs/2, fs/2) (two-sided; any DSP textbook, from memory);
* F. J. Harris, "On the use of windows for harmonic analysis with the
  discrete Fourier transform", Proc. IEEE 66(1), 1978, Table 1 (from
  memory): the Hann window's equivalent noise bandwidth is 1.50 bins (it
  also follows exactly from N sum w^2 / (sum w)^2 for the periodic window) and its first
  neighbouring bin of a bin-centred tone is 6.02 dB down (scalloping 0,
  from the window's DFT, -0.5 at +-1 bin);
* for ACLR and masks, synthetic signals whose band powers are known by
  construction (tones of chosen power, noise shaped exactly in the DFT
  domain).

Monte-Carlo bounds: 2^16 complex Gaussian samples estimate their power
with a relative standard deviation 1/sqrt(2^16) = 0.4 %; the 2 % bound
below is 5 standard deviations (no flake at a fixed seed either way).
"""

import numpy as np
import pytest
import scipy.signal

from tonebank import spectrum


def white(rng, n, var=1.0):
    return np.sqrt(var / 2) * (rng.standard_normal(n) + 1j * rng.standard_normal(n))


def shaped_noise(rng, n, density_of):
    """Complex noise whose periodogram follows density_of(f) (f in cycles/sample)."""
    spec = white(rng, n) * np.sqrt(density_of(np.fft.fftfreq(n)))
    return np.fft.ifft(spec) * np.sqrt(n)


def test_psd_is_scipy_welch_two_sided_and_centred():
    # scipy.signal.welch is the reference: same numbers, fftshift order.
    x = white(np.random.default_rng(1), 5000)
    f, p = spectrum.psd(x, 2e6, segment_length=256)
    f_ref, p_ref = scipy.signal.welch(x, fs=2e6, window="hann", nperseg=256, noverlap=128,
                                      detrend=False, return_onesided=False)
    np.testing.assert_allclose(f, np.fft.fftshift(f_ref))
    np.testing.assert_allclose(p, np.fft.fftshift(p_ref), rtol=1e-12)
    assert np.all(np.diff(f) > 0) and f[0] == -1e6


@pytest.mark.parametrize("real", [False, True])
def test_white_noise_gives_the_flat_level(real):
    # White noise of variance s2: two-sided density s2 / fs (from memory,
    # any DSP textbook); Monte-Carlo bound 2 % (5 sigma, module notes).
    rng = np.random.default_rng(2)
    var, fs = 3.0, 1e6
    x = np.sqrt(var) * rng.standard_normal(1 << 16) if real else white(rng, 1 << 16, var)
    f, p = spectrum.psd(x, fs, segment_length=128)
    assert abs(p.mean() / (var / fs) - 1) < 0.02
    # no bin strays: 1 000 segments per bin average to within ~10 %
    assert np.all(np.abs(p / (var / fs) - 1) < 0.25)
    assert abs(spectrum.band_power(x, fs, -fs / 2, fs / 2) / var - 1) < 0.02


def test_a_tone_lands_in_its_bin_with_its_power():
    # Bin-centred tone of power A^2: scaling="power" reads A^2 at its bin;
    # the density peak is A^2 / (1.5 bins) (Hann ENBW, Harris 1978 Table 1);
    # the next bins sit 6.02 dB down (Hann DFT: -0.5 at +-1 bin).
    fs, nseg, amp = 1e6, 512, 0.7
    k = 77
    t = np.arange(8192)
    x = amp * np.exp(2j * np.pi * k / nseg * t)
    f, p = spectrum.psd(x, fs, segment_length=nseg, scaling="power")
    peak = int(np.argmax(p))
    assert f[peak] == pytest.approx(k * fs / nseg)
    assert p[peak] == pytest.approx(amp ** 2, rel=1e-12)
    assert 10 * np.log10(p[peak] / p[peak + 1]) == pytest.approx(6.02, abs=0.01)
    _, d = spectrum.psd(x, fs, segment_length=nseg)
    assert d[peak] == pytest.approx(amp ** 2 / (1.5 * fs / nseg), rel=1e-12)
    assert spectrum.band_power(x, fs, f[peak] - 5e3, f[peak] + 5e3) == pytest.approx(
        amp ** 2, rel=1e-9)


def test_occupied_bandwidth_of_flat_band_noise():
    # Flat spectrum over |f| < 0.125 fs: 99 % of the power in 0.99 of the band
    # (by construction), within one bin (fs / 1024) of estimation leakage.
    x = shaped_noise(np.random.default_rng(3), 1 << 16, lambda f: (np.abs(f) < 0.125) * 1.0)
    obw = spectrum.occupied_bandwidth(x, 1.0, fraction=0.99, segment_length=1024)
    assert obw == pytest.approx(0.99 * 0.25, abs=1 / 1024)
    assert spectrum.occupied_bandwidth(x, 1.0, fraction=0.5) == pytest.approx(0.125, abs=2e-3)


def test_aclr_of_two_tones_and_of_shaped_noise():
    # Two tones: 1 W in the channel, 1e-4 W and 1e-6 W in the adjacent ones:
    # ACLR 40 dB and 60 dB by construction.
    t = np.arange(1 << 15)
    x = (np.exp(2j * np.pi * 0.02 * t) + 1e-2 * np.exp(2j * np.pi * 0.3 * t)
         + 1e-3 * np.exp(-2j * np.pi * 0.3 * t))
    r = spectrum.aclr(x, 1.0, 0.2, [-0.3, 0.3], segment_length=1024)
    np.testing.assert_allclose(r, [60.0, 40.0], atol=0.01)
    # Noise: density 1 over |f| < 0.1 (0.2 W), 10^-3 over 0.2 < |f| < 0.3
    # (1e-4 W per side) -> 10 log10(2000) = 33.01 dB both sides; +-0.1 dB for
    # the estimate's scatter and the leakage across the shaped edges.
    x = shaped_noise(np.random.default_rng(4), 1 << 17,
                     lambda f: np.where(np.abs(f) < 0.1, 1.0, 0.0)
                     + np.where((np.abs(f) > 0.2) & (np.abs(f) < 0.3), 1e-3, 0.0))
    r = spectrum.aclr(x, 1.0, 0.2, [-0.25, 0.25], adjacent_bandwidth=0.1,
                      segment_length=2048)
    np.testing.assert_allclose(r, 10 * np.log10(2000), atol=0.1)
    oob = spectrum.out_of_band_power(x, 1.0, [0.25], 0.1, segment_length=2048)
    # total power 0.2 + 2 * 1e-4 -> the band holds 1e-4 / 0.2002
    assert oob[0] == pytest.approx(10 * np.log10(1e-4 / 0.2002), abs=0.1)


def test_mask_check_with_known_margin():
    # Two bin-centred tones 30 dB apart; the mask falls linearly from -20 dBr
    # at 0.1 to -60 dBr at 0.5, so at the second tone (0.3) it allows -40:
    # margin -10 dB there, by construction (same window, same ENBW).
    nseg = 1000
    t = np.arange(1 << 15)
    x = np.exp(2j * np.pi * 0.0 * t) + 10 ** (-30 / 20) * np.exp(2j * np.pi * 0.3 * t)
    mask = [(0.0, 0.0), (0.1, 0.0), (0.1, -20.0), (0.5, -60.0)]
    res = spectrum.check_mask(x, 1.0, mask, segment_length=nseg)
    assert not res.passed
    assert res.margin_db == pytest.approx(-10.0, abs=1e-6)
    assert res.worst_frequency == pytest.approx(0.3)
    lo, hi = res.violations[0]
    assert lo <= 0.3 <= hi and hi - lo < 0.01
    assert "not a compliance measurement" in repr(res)
    relaxed = [(0.0, 12.0), (0.1, 12.0), (0.1, -20.0), (0.5, -20.0)]
    ok = spectrum.check_mask(x, 1.0, relaxed, segment_length=nseg)
    assert ok.passed and ok.violations == [] and ok.margin_db == pytest.approx(10.0, abs=1e-6)


def test_absolute_mask_reference():
    # White noise of known density s2/fs against a flat limit 3 dB above it.
    x = white(np.random.default_rng(5), 1 << 16)
    ref = 10 * np.log10(1.0 / 1e6)
    res = spectrum.check_mask(x, 1e6, [(0, 3.0), (5e5, 3.0)], reference=ref,
                              segment_length=64)
    assert res.passed and 2.0 < res.margin_db < 3.0


@pytest.mark.parametrize("call, exc, match", [
    (lambda x: spectrum.psd(x, 0.0), ValueError, "sample_rate must be positive"),
    (lambda x: spectrum.psd(x, float("nan")), ValueError, "sample_rate must be positive"),
    (lambda x: spectrum.psd(x, "1e6"), TypeError, "sample_rate must be a number"),
    (lambda x: spectrum.psd(x, True), TypeError, "sample_rate must be a number"),
    (lambda x: spectrum.psd(x, 1.0, segment_length=5000), ValueError, "longer than"),
    (lambda x: spectrum.psd(x, 1.0, scaling="dB"), ValueError, "scaling must be"),
    (lambda x: spectrum.psd(x[:1], 1.0), ValueError, "at least 2 samples"),
    (lambda x: spectrum.check_mask(x, 1.0, [(0.0, 0), (0.3, -10), (0.2, -20)]),
     ValueError, "must not decrease: 0.3 Hz is followed by 0.2 Hz"),
    (lambda x: spectrum.check_mask(x, 1.0, [(-0.1, 0), (0.2, -10)]), ValueError, ">= 0"),
    (lambda x: spectrum.check_mask(x, 1.0, [(0.1, 0)]), ValueError, "at least two"),
    (lambda x: spectrum.check_mask(x, 1.0, [(0, 0), (0.2, float("inf"))]), ValueError,
     "finite"),
    (lambda x: spectrum.check_mask(x, 1.0, [(0, 0), (0.2, 0)], reference="mean"),
     ValueError, "reference must be"),
    (lambda x: spectrum.aclr(x, 1.0, 0.2, [0.45]), ValueError, "offsets holds 0.45 Hz"),
    (lambda x: spectrum.aclr(x, 1.0, 2.0, [0.1]), ValueError, "wider than sample_rate"),
    (lambda x: spectrum.aclr(x, 1.0, -0.2, [0.3]), ValueError, "channel_bandwidth must"),
    (lambda x: spectrum.occupied_bandwidth(x, 1.0, fraction=1.0), ValueError, "fraction"),
    (lambda x: spectrum.band_power(x, 1.0, 0.2, 0.1), ValueError, "low < high"),
    (lambda x: spectrum.out_of_band_power(x, 1.0, [0.6], 0.1), ValueError, "outside"),
])
def test_bad_input(call, exc, match):
    x = white(np.random.default_rng(6), 4096)
    with pytest.raises(exc, match=match):
        call(x)
