"""Receiver impairments: exact models, streaming, and their effect on OFDM symbols.

Outside references, named beside each check:
- frequency offset and DC offset: the defining formulas, evaluated with
  numpy (exact to rounding);
- timing offset and sampling clock offset: an analytic band-limited
  signal (a sum of complex exponentials) delayed / resampled in closed
  form; whole delays against numpy slicing;
- IQ imbalance: the image of a tone on a numpy.fft bin against the image
  rejection ratio (1 + g^2 + 2 g cos phi) / (1 + g^2 - 2 g cos phi)
  (textbook mirror-image model; e.g. B. Razavi, RF Microelectronics,
  Prentice Hall, 1998, chapter 5; from memory);
- Wiener phase noise: increments N(0, 2 pi beta / f_s) against
  scipy.stats.chi2 bounds;
- CFO SNR loss: T. Pollet, M. Van Bladel, M. Moeneclaey, "BER
  sensitivity of OFDM systems to carrier frequency offset and Wiener
  phase noise", IEEE Trans. Commun. 43(2/3/4), 1995: D ~ 10/(3 ln 10)
  (pi eps)^2 Es/N0 dB for small eps;
- phase noise on OFDM: the inter-carrier power 1 - E|S0|^2 and its limit
  pi beta / (3 spacing), and the step variance of the common phase error
  2 pi beta (Ts - T/3), derived in tonebank.channel.impairment_theory
  from the Wiener model (the ICI limit as in Pollet et al. 1995 and
  A. G. Armada, IEEE Trans. Broadcast. 47(2), 2001; from memory).

Monte-Carlo checks use fixed seeds; their bounds are stated beside them.
"""

import math

import numpy as np
import pytest
import scipy.stats
from hypothesis import given, settings, strategies as st

import tonebank
from tonebank.channel import (
    DcOffset,
    DelayProfile,
    FrequencyOffset,
    IqImbalance,
    PhaseNoise,
    SamplingClockOffset,
    SignalChain,
    TappedDelayLine,
    TimingOffset,
    cfo_ici_power,
    cfo_snr_loss_db,
    wiener_cpe_step_variance,
    wiener_ici_power,
)

DTYPES = [np.complex128, np.complex64]
TOL = {np.complex128: 1e-12, np.complex64: 2e-6}


def tones(n, freqs, amps, phases, start=0.0):
    """Analytic band-limited signal sum_i a_i exp(j(2 pi f_i t + p_i)) at t = start + n."""
    t = np.asarray(n, dtype=np.float64)[..., None] + start
    return np.sum(amps * np.exp(1j * (2 * np.pi * freqs * t + phases)), axis=-1)


def random_tones(seed, count=6, band=0.4):
    rng = np.random.default_rng(seed)
    return (rng.uniform(-band, band, count), rng.uniform(0.2, 1.0, count),
            rng.uniform(0, 2 * np.pi, count))


def chunks(x, cuts):
    edges = [0] + sorted(cuts) + [x.shape[-1]]
    return [x[..., a:b] for a, b in zip(edges[:-1], edges[1:])]


# ---- exact models ------------------------------------------------------------

@pytest.mark.parametrize("dtype", DTYPES)
def test_frequency_offset_is_the_defining_rotation(dtype):
    # reference: y[n] = x[n] exp(j(2 pi df n / fs + theta0)) evaluated by numpy
    fs, df, theta = 1.0e6, 1234.5, 0.3
    rng = np.random.default_rng(1)
    x = (rng.standard_normal((2, 500)) + 1j * rng.standard_normal((2, 500))).astype(dtype)
    n = 300 + np.arange(500)
    y = FrequencyOffset(df, fs, phase_rad=theta).filter(x, start_sample=300)
    assert y.dtype == dtype
    ref = x.astype(np.complex128) * np.exp(1j * (2 * np.pi * df * n / fs + theta))
    np.testing.assert_allclose(y, ref, rtol=0, atol=TOL[dtype] * 10)


def test_frequency_offset_in_spacings_of_a_plan_and_a_waveform():
    plan = tonebank.CarrierPlan.centered(64, 52, cp_length=16, sample_rate=20e6)
    assert FrequencyOffset.in_spacings(0.25, plan).offset_hz == pytest.approx(0.25 * 312.5e3)
    wf = tonebank.CpOfdm(plan, oversampling=2)
    cfo = FrequencyOffset.in_spacings(-1.5, wf)
    assert cfo.sample_rate == pytest.approx(40e6)
    assert cfo.offset_hz == pytest.approx(-1.5 * 312.5e3)
    # an offset of one spacing moves every bin of a symbol up by one (numpy.fft)
    grid = np.zeros(64, complex)
    grid[5] = 1
    y = FrequencyOffset.in_spacings(1.0, plan).filter(np.fft.ifft(grid))
    np.testing.assert_allclose(np.abs(np.fft.fft(y)), np.roll(np.abs(grid), 1), atol=1e-12)


@pytest.mark.parametrize("dtype", DTYPES)
def test_dc_offset_adds_the_constant(dtype):
    x = np.arange(6, dtype=dtype).reshape(2, 3)
    y = DcOffset(0.25 - 1j).filter(x)
    assert y.dtype == dtype
    np.testing.assert_array_equal(y, x + np.asarray(0.25 - 1j, dtype))


@pytest.mark.parametrize("gain_db, phase_deg", [(0.5, 2.0), (-1.0, -5.0), (0.0, 3.0)])
def test_iq_imbalance_image_of_a_tone_matches_the_rejection_ratio(gain_db, phase_deg):
    # reference: image power ratio (1 + g^2 + 2 g cos phi) / (1 + g^2 - 2 g cos phi)
    # (mirror-image model, textbook; from memory), measured with numpy.fft
    n = 256
    x = np.exp(2j * np.pi * 10 * np.arange(n) / n)
    iq = IqImbalance(gain_db=gain_db, phase_deg=phase_deg)
    spectrum = np.fft.fft(iq.filter(x))
    g, phi = 10 ** (gain_db / 20), math.radians(phase_deg)
    irr = (1 + g * g + 2 * g * math.cos(phi)) / (1 + g * g - 2 * g * math.cos(phi))
    measured = abs(spectrum[10]) ** 2 / abs(spectrum[-10]) ** 2
    assert measured == pytest.approx(irr, rel=1e-9)
    assert iq.image_rejection_db == pytest.approx(10 * math.log10(irr), rel=1e-12)
    # and the branch description: I kept, Q scaled by g and rotated by phi
    z = np.array([0.3 + 0.7j, -1.1 + 0.2j])
    q = g * (z.imag * math.cos(phi) - z.real * math.sin(phi))
    np.testing.assert_allclose(iq.filter(z), z.real + 1j * q, atol=1e-14)


def test_iq_imbalance_without_error_is_identity():
    x = np.array([1 + 2j, -3j])
    np.testing.assert_allclose(IqImbalance().filter(x), x, atol=1e-15)
    assert IqImbalance().image_rejection_db == math.inf


# ---- delays and resampling ---------------------------------------------------

@pytest.mark.parametrize("dtype", DTYPES)
def test_whole_timing_offset_is_a_shift(dtype):
    x = (np.arange(40) + 1j).astype(dtype).reshape(2, 20)
    y = TimingOffset(7).filter(x)
    assert y.dtype == dtype and y.shape == x.shape
    np.testing.assert_array_equal(y[:, 7:], x[:, :-7])
    np.testing.assert_array_equal(y[:, :7], 0)


@pytest.mark.parametrize("delay", [0.25, 3.5, 17.8])
@pytest.mark.parametrize("length, bound_db", [(16, -45.0), (32, -90.0)])
def test_fractional_timing_offset_against_a_delayed_band_limited_signal(delay, length,
                                                                      bound_db):
    # reference: x(t) = sum of complex exponentials with |f| <= 0.4 f_s, delayed in
    # closed form; bounds from the error table of tonebank.channel.tdl (-47 / -94 dB,
    # with a little margin for the sum of tones)
    freqs, amps, phases = random_tones(3)
    n = np.arange(600)
    stage = TimingOffset(delay, interp_length=length)
    y = stage.filter(tones(n, freqs, amps, phases))
    expected = tones(n - delay - stage.latency_samples, freqs, amps, phases)
    settled = slice(int(delay) + stage.latency_samples + length, None)
    err = np.max(np.abs(y[settled] - expected[settled])) / np.sum(amps)
    assert 20 * math.log10(err) < bound_db


@pytest.mark.parametrize("ppm", [150.0, -2000.0, 40000.0])
@pytest.mark.parametrize("dtype", DTYPES)
def test_sampling_clock_offset_against_an_analytic_tone(ppm, dtype):
    # reference: receiver samples at t_n = n / (1 + ppm 1e-6) of a sum of tones with
    # |f| <= 0.4 f_s (closed form), minus the stated latency; bound: -90 dB for L = 32
    # (tdl.py table: -94 dB) in float64, float32 rounding in complex64
    freqs, amps, phases = random_tones(5)
    n_in = 3000
    x = tones(np.arange(n_in), freqs, amps, phases).astype(dtype)
    sco = SamplingClockOffset(ppm)
    y = sco.filter(x)
    assert y.dtype == dtype
    delta = ppm * 1e-6
    m = np.arange(y.size)
    t = m / (1 + delta) - sco.latency_samples
    # outputs are those whose instant falls in the input (up to rounding at a boundary)
    assert np.all(m / (1 + delta) < n_in + 1e-9)
    assert abs(y.size - n_in * (1 + delta)) <= 1
    expected = tones(t, freqs, amps, phases)
    settled = slice(64, None)
    err = np.max(np.abs(y[settled] - expected[settled])) / np.sum(amps)
    bound = -90.0 if dtype == np.complex128 else -60.0
    assert 20 * math.log10(err) < bound


# ---- streaming -----------------------------------------------------------------

def _stages():
    profile = DelayProfile([0.0, 0.7e-6, 2.1e-6], [0.0, -3.0, -8.0])
    return [
        FrequencyOffset(313.0, 1e6, phase_rad=1.0),
        PhaseNoise(50.0, 1e6, rng=11),
        IqImbalance(gain_db=0.3, phase_deg=-2.0),
        DcOffset(0.01 + 0.02j),
        TimingOffset(2.5),
        TimingOffset(4),
        SamplingClockOffset(-700.0),
        SamplingClockOffset(20000.0, interp_length=8),
        SignalChain(TappedDelayLine(profile, 1e6, max_doppler_hz=100.0, rng=3),
                    SamplingClockOffset(300.0), PhaseNoise(20.0, 1e6, rng=5),
                    TimingOffset(1.25)),
        PhaseNoise.from_psd([1e3, 1e5], [-70.0, -100.0], 1e6, n_taps=256, rng=4),
    ]


@pytest.mark.parametrize("index", range(10))
@settings(max_examples=8)
@given(cuts=st.lists(st.integers(0, 5000), max_size=4))
def test_streaming_in_chunks_is_bit_identical_to_one_call(index, cuts):
    # (5000 samples: the phase-noise blocks of 4096 are crossed)
    stage = _stages()[index]
    rng = np.random.default_rng(index)
    x = rng.standard_normal((2, 5000)) + 1j * rng.standard_normal((2, 5000))
    whole = stage.filter(x)
    parts = [stage.apply(c) for c in chunks(x, cuts)]
    np.testing.assert_array_equal(np.concatenate(parts, axis=-1), whole)
    stage.reset()
    np.testing.assert_array_equal(stage.apply(x), whole)


def test_phase_noise_path_is_a_function_of_the_seed_and_the_sample():
    a = PhaseNoise(200.0, 1e6, rng=9)
    b = PhaseNoise(200.0, 1e6, rng=9)
    late = a.phase(np.arange(20000, 20100))               # asked for first, out of order
    np.testing.assert_array_equal(b.phase(np.arange(20100))[20000:], late)
    x = np.ones((3, 100), dtype=np.complex64)
    y = a.filter(x, start_sample=20000)
    assert y.dtype == np.complex64
    np.testing.assert_allclose(y, np.broadcast_to(np.exp(1j * late), (3, 100)), atol=2e-6)
    assert not np.array_equal(PhaseNoise(200.0, 1e6, rng=10).phase([5000]), a.phase([5000]))


def test_sampling_clock_offset_start_sample_continues_the_stream():
    # filter(x[s:], start_sample=s) gives the outputs of the whole stream whose input
    # windows lie after s (the samples before s are taken as zero)
    sco = SamplingClockOffset(5000.0)
    x = np.exp(2j * np.pi * 0.05 * np.arange(4000))
    whole = sco.filter(x)
    first = sco._output_start(1000)
    tail = sco.filter(x[1000:], start_sample=1000)
    np.testing.assert_allclose(tail[40:], whole[first + 40:], atol=1e-13)


def test_chain_of_a_fading_channel_and_impairments_with_branches():
    profile = DelayProfile([0.0, 1e-6], [0.0, -3.0])
    chain = SignalChain(TappedDelayLine(profile, 2e6, branches=3, rng=1),
                        FrequencyOffset(1e3, 2e6), DcOffset(0.5))
    x = np.ones(100, dtype=np.complex64)
    y = chain.filter(x)
    assert y.shape == (3, 100) and y.dtype == np.complex64
    assert len(chain.stages) == 3 and "SignalChain(" in repr(chain)


# ---- Wiener phase noise statistics -------------------------------------------

def test_phase_noise_increments_have_the_wiener_variance():
    # reference: increments N(0, 2 pi beta / fs); the sum of squares of k of them
    # over sigma^2 is chi-square with k degrees of freedom (scipy.stats.chi2), bound
    # at probability 1e-9 on either side
    beta, fs = 300.0, 1e5
    phase = PhaseNoise(beta, fs, rng=21).phase(np.arange(40001))
    steps = np.diff(phase)
    sigma2 = 2 * np.pi * beta / fs
    k = steps.size
    stat = np.sum(steps ** 2) / sigma2
    assert scipy.stats.chi2.ppf(1e-9, k) < stat < scipy.stats.chi2.isf(1e-9, k)
    # independent increments: lag-1 correlation within 6 / sqrt(k) of 0
    assert abs(np.corrcoef(steps[:-1], steps[1:])[0, 1]) < 6 / math.sqrt(k)


def test_phase_noise_from_a_mask_has_its_spectrum_and_variance():
    # reference: scipy.signal.welch of the phase path (one-sided, so S = Pxx / 2)
    # against the mask interpolated in log frequency; 2**17 samples in segments of
    # 1024 (about 255 averaged segments, about 0.3 dB standard deviation per bin),
    # compared as band means over 9 bins: +-1 dB is more than 6 standard deviations
    # plus the filter's ripple between its 4096 frequency samples
    import scipy.signal

    fs = 1e6
    offsets, levels = [2e3, 2e4, 2e5], [-70.0, -85.0, -110.0]
    pn = PhaseNoise.from_psd(offsets, levels, fs, rng=12)
    phase = pn.phase(np.arange(1 << 17))
    freqs, pxx = scipy.signal.welch(phase, fs=fs, nperseg=1024)
    for centre in (5e3, 1e4, 5e4, 1e5, 3e5):
        band = np.argsort(np.abs(freqs - centre))[:9]
        measured = 10 * np.log10(np.mean(pxx[band] / 2))
        wanted = 10 * np.log10(np.mean(10 ** (np.interp(
            np.log(np.clip(freqs[band], offsets[0], None)), np.log(offsets), levels) / 10)))
        assert measured == pytest.approx(wanted, abs=1.0), centre
    # variance: the integral of the two-sided spectrum (K-point Riemann sum); the
    # sample variance of 2**17 correlated samples is within +-15 % (the path holds
    # about 2**17 * 2e3 / 1e6 = 260 correlation times of the lowest offset)
    grid = np.abs(np.fft.fftfreq(4096, 1 / fs))
    grid[0] = offsets[0]
    s_phi = 10 ** (np.interp(np.log(np.maximum(grid, offsets[0])), np.log(offsets),
                             levels) / 10)
    assert np.var(phase) == pytest.approx(fs / 4096 * np.sum(s_phi), rel=0.15)


# ---- effects on OFDM symbols -------------------------------------------------

def _qpsk(rng, shape):
    return (rng.choice([-1.0, 1.0], shape) + 1j * rng.choice([-1.0, 1.0], shape)) / math.sqrt(2)


def test_cfo_snr_loss_follows_pollet():
    # reference: Pollet, Van Bladel, Moeneclaey 1995: D ~ 10/(3 ln 10) (pi eps)^2 Es/N0
    # dB for small eps, the common rotation and attenuation of the wanted bin being
    # corrected (here by its exact value).  eps = 0.015, Es/N0 = 20 dB: D = 0.3215 dB;
    # the exact 10 log10((1 - |S0|^2 + N0) / (|S0|^2 N0)) = 0.313 dB.  Monte Carlo:
    # 64 x 1000 bins, the same noise with and without the offset; the ratio's standard
    # deviation is about 0.007 dB, so +-0.04 dB holds the approximation gap (0.009 dB)
    # and more than 4 standard deviations.
    n_fft, n_sym, eps, esn0_db = 64, 1000, 0.015, 20.0
    rng = np.random.default_rng(2024)
    grid = _qpsk(rng, (n_sym, n_fft))
    x = np.fft.ifft(grid, norm="ortho").ravel()                     # no prefix
    sigma2 = 10 ** (-esn0_db / 10)
    noise = math.sqrt(sigma2 / 2) * (rng.standard_normal(x.size)
                                     + 1j * rng.standard_normal(x.size))
    rotated = FrequencyOffset(eps / n_fft, 1.0).filter(x)           # eps spacings
    y_ref = np.fft.fft((x + noise).reshape(n_sym, n_fft), norm="ortho")
    y = np.fft.fft((rotated + noise).reshape(n_sym, n_fft), norm="ortho")
    # the wanted-bin gain of symbol s: exp(j 2 pi eps s) S0 exp(j pi eps (N-1)/N)
    s0 = math.sin(math.pi * eps) / (n_fft * math.sin(math.pi * eps / n_fft))
    gain = s0 * np.exp(1j * np.pi * eps * (n_fft - 1) / n_fft) \
        * np.exp(2j * np.pi * eps * np.arange(n_sym))[:, None]
    loss_db = 10 * math.log10(np.mean(np.abs(y / gain - grid) ** 2)
                              / np.mean(np.abs(y_ref - grid) ** 2))
    assert loss_db == pytest.approx(cfo_snr_loss_db(eps, esn0_db), abs=0.04)
    assert cfo_snr_loss_db(eps, esn0_db) == pytest.approx(
        10 / (3 * math.log(10)) * (math.pi * eps) ** 2 * 100, rel=1e-12)
    # the interference share behind it, 1 - |S0|^2 ~ (pi eps)^2 / 3 (Pollet 1995)
    assert cfo_ici_power(eps, n_fft) == pytest.approx((math.pi * eps) ** 2 / 3, rel=0.01)


def test_phase_noise_cpe_removed_by_pilots_leaves_the_intercarrier_part():
    # Theory (tonebank.channel.impairment_theory, from the Wiener model; the ICI limit
    # pi beta / (3 spacing) as in Pollet et al. 1995 and Armada 2001, from memory):
    # - every subcarrier is scaled by the common factor S0 = mean(exp(j phi)) over the
    #   window (the common phase error, CPE), the rest 1 - E|S0|^2 of its power leaks
    #   to the others (ICI);
    # - the CPE of consecutive symbols differs by a variance 2 pi beta (Ts - T/3).
    # The CPE is estimated per symbol from 16 pilots by least squares (plain numpy);
    # after dividing it out, the error power on the data bins is the ICI plus the
    # pilot estimate's share, ICI (1 + 1/16) to first order.
    n_fft, cp, n_sym, fs = 64, 16, 600, 1e6
    spacing = fs / n_fft
    beta = 0.002 * spacing
    rng = np.random.default_rng(77)
    grid = _qpsk(rng, (n_sym, n_fft))
    pilots = np.arange(0, n_fft, 4)
    data = np.setdiff1d(np.arange(n_fft), pilots)
    body = np.fft.ifft(grid, norm="ortho")
    x = np.concatenate((body[:, -cp:], body), axis=1).ravel()
    y = PhaseNoise(beta, fs, rng=5).filter(x).reshape(n_sym, n_fft + cp)[:, cp:]
    bins = np.fft.fft(y, norm="ortho")
    cpe = np.sum(bins[:, pilots] * np.conj(grid[:, pilots]), axis=1) \
        / np.sum(np.abs(grid[:, pilots]) ** 2, axis=1)              # one LS line per symbol
    evm2_raw = np.mean(np.abs(bins[:, data] - grid[:, data]) ** 2)
    evm2 = np.mean(np.abs(bins[:, data] / cpe[:, None] - grid[:, data]) ** 2)
    ici = wiener_ici_power(beta, spacing, n_fft)
    assert ici == pytest.approx(wiener_ici_power(beta, spacing), rel=0.02)
    # Monte Carlo: 600 symbols x 48 data bins; the per-symbol ICI power scatters with a
    # coefficient of variation below 1, so the mean is within about 4 % (1 sigma) of
    # its expectation; +-20 % around ICI (1 + 1/16) holds 4 sigma plus the
    # first-order pilot term
    assert evm2 == pytest.approx(ici * (1 + 1 / pilots.size), rel=0.2)
    assert evm2_raw > 50 * evm2                 # uncorrected, the phase has wandered off
    # the CPE track: steps between symbols against 2 pi beta (Ts - T/3); the sample
    # variance of 599 steps (lag-1 correlation 0.27) has a relative standard deviation
    # of about 6.5 %, so +-30 % is more than 4.5 sigma
    steps = np.angle(cpe[1:] * np.conj(cpe[:-1]))
    expected = wiener_cpe_step_variance(beta, spacing, symbol_duration_s=(n_fft + cp) / fs)
    assert np.mean(steps ** 2) == pytest.approx(expected, rel=0.3)


# ---- argument errors ---------------------------------------------------------

@pytest.mark.parametrize("make, match", [
    (lambda: FrequencyOffset(600.0, 1000.0), "offset_hz"),
    (lambda: FrequencyOffset(1.0, 0.0), "sample_rate"),
    (lambda: FrequencyOffset("1", 10.0), "offset_hz"),
    (lambda: FrequencyOffset.in_spacings(0.1, "plan"), "target"),
    (lambda: FrequencyOffset.in_spacings(0.1, tonebank.CarrierPlan.centered(64, 52)),
     "sample_rate"),
    (lambda: PhaseNoise(-1.0, 1e6), "linewidth_hz"),
    (lambda: PhaseNoise(1.0, 1e6, rng=-3), "rng"),
    (lambda: PhaseNoise.from_psd([1e3, 1e2], [-80, -90], 1e6), "offsets_hz"),
    (lambda: PhaseNoise.from_psd([1e3, 6e5], [-80, -90], 1e6), "offsets_hz"),
    (lambda: PhaseNoise.from_psd([1e3], [-80, -90], 1e6), "level_dbc_hz"),
    (lambda: PhaseNoise.from_psd([1e3], [-80], 1e6, n_taps=1000), "n_taps"),
    (lambda: PhaseNoise.from_psd([1e3], [-80], 1e6, n_taps=8192), "n_taps"),
    (lambda: IqImbalance(phase_deg=90.0), "phase_deg"),
    (lambda: DcOffset("a"), "offset"),
    (lambda: DcOffset(complex("nan")), "offset"),
    (lambda: TimingOffset(-0.5), "delay_samples"),
    (lambda: TimingOffset(1.5, interp_length=12), "interp_length"),
    (lambda: SamplingClockOffset(2e5), "ppm"),
    (lambda: SignalChain(), "stage"),
    (lambda: SignalChain(DcOffset(1), "x"), r"stages\[1\]"),
    (lambda: DcOffset(1).filter(np.ones(3), start_sample=-1), "start_sample"),
    (lambda: DcOffset(1).filter(1.0), "samples"),
    (lambda: DcOffset(1).filter(np.array(["a"])), "samples"),
    (lambda: PhaseNoise(1.0, 1e6).phase([-1]), "sample_index"),
    (lambda: PhaseNoise(1.0, 1e6).phase([0.5]), "sample_index"),
    (lambda: wiener_cpe_step_variance(1.0, 1e3, symbol_duration_s=1e-4), "symbol_duration_s"),
    (lambda: wiener_ici_power(1.0, 0.0), "subcarrier_spacing_hz"),
    (lambda: cfo_ici_power(0.1, 0), "n_fft"),
])
def test_bad_arguments_are_named(make, match):
    with pytest.raises((TypeError, ValueError), match=match):
        make()


def test_stream_shape_change_is_refused():
    stage = TimingOffset(1.5)
    stage.apply(np.ones((2, 10)))
    with pytest.raises(ValueError, match="leading shape"):
        stage.apply(np.ones(10))
    stage.reset()
    assert stage.position == 0
    stage.apply(np.ones(10))
