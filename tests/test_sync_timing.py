"""Timing metric and frame detection (tonebank.sync.timing, tonebank.sync.preamble).

References
----------
- T. M. Schmidl and D. C. Cox, "Robust frequency and timing synchronization
  for OFDM", IEEE Trans. Commun. 45 (12), 1997 ("S&C"): the metric
  M(d) = |P(d)|^2 / R(d)^2 (their eq. 5 with the definitions of P and R
  beside it, from memory); noise-free it is 1 on a plateau as long as the
  cyclic prefix; the timing point is the middle of the 90 % points.
- The noise-only tail P(M > t) ~ exp(-W t): P is a sum of W independent
  products of complex Gaussians, about CN(0, W sigma^4) (central limit
  theorem), and the energy about W sigma^2, so W M is about a unit
  exponential variable (derived here; the module documents it beside
  DEFAULT_THRESHOLD).
- IEEE Std 802.11a-1999, clause 17.3.3 (from memory): the short training
  field repeats every 16 samples for 160 samples.
"""

import numpy as np
import pytest
import scipy.stats

import tonebank
from tonebank import presets, sync

PLAN = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)


def _noise(rng, shape, var=1.0):
    return np.sqrt(var / 2) * (rng.standard_normal(shape) + 1j * rng.standard_normal(shape))


def test_running_sums_match_their_definition():
    # The definition of P and R in the kernel interface (S&C eq. 5 sums),
    # computed directly with numpy, both dtypes.
    rng = np.random.default_rng(0)
    x = _noise(rng, (3, 200))
    for dtype, tol in ((np.complex128, 1e-12), (np.complex64, 1e-5)):
        xd = x.astype(dtype)
        tm = sync.timing_metric(xd, 24, window=40)
        n_out = 200 - 24 - 40 + 1
        p = np.array([[np.sum(np.conj(x[b, d:d + 40]) * x[b, d + 24:d + 64])
                       for d in range(n_out)] for b in range(3)])
        r = np.array([[np.sum(np.abs(x[b, d + 24:d + 64]) ** 2) for d in range(n_out)]
                      for b in range(3)])
        assert tm.correlation.dtype == dtype
        assert tm.energy.dtype == np.dtype(dtype).type(0).real.dtype
        np.testing.assert_allclose(tm.correlation, p, rtol=tol, atol=tol * 40)
        np.testing.assert_allclose(tm.energy, r, rtol=tol)
        np.testing.assert_allclose(tm.metric, np.abs(p) ** 2 / r ** 2, rtol=20 * tol)


@pytest.mark.parametrize("normalization", ["second_half", "both_halves"])
def test_noise_free_metric_is_one_on_a_plateau_as_long_as_the_prefix(normalization):
    # S&C: a two-halves symbol with a cyclic prefix gives M = 1 for every
    # start from the prefix start to the body start, and less elsewhere.
    pre = sync.Preamble.two_halves(PLAN)
    rng = np.random.default_rng(1)
    data = tonebank.CpOfdm(PLAN).modulate(np.exp(2j * np.pi * rng.random(4 * PLAN.n_data)))
    x = np.concatenate((data[:160], pre.samples, data))
    m = sync.timing_metric(x, 32, normalization=normalization).metric
    plateau = np.arange(160, 160 + 17)            # prefix start .. body start
    np.testing.assert_allclose(m[plateau], 1.0, atol=1e-12)
    others = np.setdiff1d(np.arange(m.size), plateau)
    assert m[others].max() < 1 - 1e-6
    # A window wholly off the plateau sees no repetition.
    far = np.setdiff1d(np.arange(m.size), np.arange(160 - 32, 160 + 17 + 32))
    assert m[far].max() < 0.5


def test_ieee80211a_short_field_plateau():
    # 802.11a clause 17.3.3: period 16 over 160 samples, so a 64-product
    # window fits on 160 - 16 - 64 + 1 = 81 starts.
    pre = sync.Preamble.ieee80211a()
    m = sync.timing_metric(pre.samples, pre.period, window=pre.window).metric
    assert pre.plateau == (0, 80)
    np.testing.assert_allclose(m[:81], 1.0, atol=1e-12)
    assert m[81] < 1 - 1e-6


@pytest.mark.parametrize("window, threshold", [(32, 0.05), (32, 0.1), (64, 0.05)])
def test_noise_only_tail_is_below_the_exponential_model(window, threshold):
    # Model: P(M > t) <= ~exp(-W t) for the both-halves metric on white
    # noise.  20000 independent windows; the bound allows 4 binomial
    # standard errors above the model (false failure < 1e-4).
    rng = np.random.default_rng([2, window])
    trials = 20000
    # One long stream; metric values 32 + window apart use disjoint samples.
    x = _noise(rng, trials * (32 + window))
    m = sync.timing_metric(x, 32, window=window,
                           normalization="both_halves").metric[::32 + window]
    model = np.exp(-window * threshold)
    rate = np.mean(m > threshold)
    assert rate <= model + 4 * np.sqrt(model * (1 - model) / trials)
    # ... and the model is not loose by more than a factor of two.
    assert rate >= 0.5 * model - 4 * np.sqrt(model / trials)


def test_no_false_alarm_on_noise_at_the_default_threshold():
    # Expected false detections under the model: 4e5 samples x exp(-16)
    # = 0.05 (W = 32); the outcome is fixed by the seed.
    rng = np.random.default_rng(3)
    for _ in range(2):
        x = _noise(rng, 200_000)
        assert sync.detect_frames(x, 32, min_length=4) == []


def _frames_stream(rng, snr_db, n_frames, pre):
    """Noise with ``n_frames`` preambles at known places; per-sample SNR ``snr_db``."""
    power = np.mean(np.abs(pre.samples) ** 2)
    spacing = 1000
    x = _noise(rng, n_frames * spacing + 500, power / 10 ** (snr_db / 10))
    starts = 300 + spacing * np.arange(n_frames) + rng.integers(0, 200, n_frames)
    for s in starts:
        x[s:s + pre.n_samples] += pre.samples
    return x, starts


@pytest.mark.parametrize("snr_db, max_misses", [(10.0, 0), (15.0, 0)])
def test_no_misses_at_moderate_snr(snr_db, max_misses):
    # Plateau mean (rho / (1 + rho))^2 = 0.83 at 10 dB against the 0.5
    # threshold (DEFAULT_THRESHOLD); 40 frames, every one found within 8
    # samples of its plateau middle and no extra detection.
    pre = sync.Preamble.two_halves(PLAN)
    rng = np.random.default_rng([4, int(snr_db)])
    x, starts = _frames_stream(rng, snr_db, 40, pre)
    found = sync.detect_frames(x, pre.period, window=pre.window, min_length=4, min_gap=8)
    assert len(found) == 40 - max_misses
    index = np.array([d.index for d in found])
    assert np.all(np.abs(index - (starts + 8)) <= 8)


def test_mostly_missed_at_zero_db():
    # At 0 dB the plateau mean is 0.25, half the threshold: the documented
    # behaviour is to miss most frames (fewer than a quarter found).
    pre = sync.Preamble.two_halves(PLAN)
    rng = np.random.default_rng(5)
    x, _ = _frames_stream(rng, 0.0, 40, pre)
    assert len(sync.detect_frames(x, pre.period, min_length=4, min_gap=8)) < 10


def test_plateau_middle_is_the_timing_point():
    # S&C: the average of the 90 % points; noise-free it is the middle of
    # the prefix, whatever the peak.
    pre = sync.Preamble.two_halves(PLAN)
    x = np.concatenate((np.zeros(50), pre.samples, np.zeros(50)))
    [d] = sync.detect_frames(x, 32)
    assert abs(d.index - (50 + 8)) <= 1
    assert d.first <= 50 and d.last >= 50 + 16
    assert d.peak == pytest.approx(1.0, abs=1e-12)


def test_second_half_normalization_overshoots_at_a_burst_end():
    # Why detect_frames uses both halves by default: with R the energy of
    # the later half only, the falling edge of a burst followed by weak
    # noise gives M >> 1.
    rng = np.random.default_rng(6)
    x = np.concatenate((_noise(rng, 300), 1e-3 * _noise(rng, 300)))
    m1 = sync.timing_metric(x, 32).metric
    m2 = sync.timing_metric(x, 32, normalization="both_halves").metric
    assert m1.max() > 10
    assert m2.max() <= 1 + 1e-12


def test_complex64_is_kept():
    x = np.ones(100, np.complex64)
    tm = sync.timing_metric(x, 10)
    assert tm.metric.dtype == np.float32 and tm.correlation.dtype == np.complex64


@pytest.mark.parametrize("kwargs, error, match", [
    (dict(samples=np.ones(10), period=8), ValueError, "fewer than period"),
    (dict(samples=np.ones(50), period=0), ValueError, "period"),
    (dict(samples=np.ones(50), period=2.5), TypeError, "period"),
    (dict(samples=np.ones(50), period=4, window=0), ValueError, "window"),
    (dict(samples=np.array(["a"] * 50), period=4), TypeError, "samples"),
    (dict(samples=np.full(50, np.nan), period=4), ValueError, "finite"),
    (dict(samples=np.ones(50), period=4, normalization="peak"), ValueError, "normalization"),
])
def test_timing_metric_errors_name_the_argument(kwargs, error, match):
    with pytest.raises(error, match=match):
        sync.timing_metric(**kwargs)


@pytest.mark.parametrize("kwargs, error, match", [
    (dict(threshold=0.0), ValueError, "threshold"),
    (dict(threshold=1.5), ValueError, "threshold"),
    (dict(threshold="high"), TypeError, "threshold"),
    (dict(plateau_fraction=0), ValueError, "plateau_fraction"),
    (dict(min_length=0), ValueError, "min_length"),
    (dict(min_gap=-1), ValueError, "min_gap"),
])
def test_detect_frames_errors_name_the_argument(kwargs, error, match):
    with pytest.raises(error, match=match):
        sync.detect_frames(np.ones(100), 8, **kwargs)
    with pytest.raises(ValueError, match="one stream"):
        sync.detect_frames(np.ones((2, 100)), 8)


def test_preamble_builders():
    pre = sync.Preamble.two_halves(PLAN)
    assert pre.samples.flags.writeable is False
    body = pre.samples[16:80]
    np.testing.assert_allclose(body[:32], body[32:], atol=1e-12)
    # Bodies with the energy of a data symbol on the same plan (52 unit
    # values on 64 bins, unitary DFT): 26 even subcarriers at power 2.
    assert np.sum(np.abs(body) ** 2) == pytest.approx(52, rel=1e-12)
    assert np.sum(np.abs(pre.samples[96:]) ** 2) == pytest.approx(52, rel=1e-12)
    wifi = sync.Preamble.ieee80211a()
    np.testing.assert_allclose(wifi.samples, presets.ieee80211a_preamble(norm="ortho"))
    assert wifi.coarse_range_spacings == 2.0 and pre.coarse_range_spacings == 1.0
    with pytest.raises(ValueError, match="n_fft must be even"):
        sync.Preamble.two_halves(tonebank.CarrierPlan(15, data=[1, 2, 3], cp_length=2))
    with pytest.raises(TypeError, match="plan"):
        sync.Preamble.two_halves("plan")
    with pytest.raises(ValueError, match="window"):
        sync.Preamble.ieee80211a(window=200)
    assert scipy.stats is not None


def test_metric_is_zero_on_exact_silence_after_a_burst():
    # Running sums over exact zeros keep rounding residue; the metric must
    # not turn that into values near 1 (nor any detection).
    rng = np.random.default_rng(7)
    x = np.concatenate((_noise(rng, 5000, 1e3), np.zeros(3000)))
    for norm in ("second_half", "both_halves"):
        m = sync.timing_metric(x, 32, normalization=norm).metric
        assert np.all(m[5000:] == 0)
    assert sync.detect_frames(x, 32) == []
