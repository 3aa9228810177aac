"""TappedDelayLine: fading statistics, filtering and the true frequency response.

Outside references, named beside each check:
- frequency correlation of an exponential profile,
  r(dk) = 1 / (1 + j 2 pi tau_rms dk df): J.-J. van de Beek, O. Edfors,
  M. Sandell, S. K. Wilson, P. O. Borjesson, "On channel estimation in
  OFDM systems", Proc. IEEE VTC 1995; O. Edfors et al., "OFDM channel
  estimation by singular value decomposition", IEEE Trans. Commun.
  46(7), 1998 (the exponential-profile correlation; from memory);
- Clarke's model: tap autocorrelation J0(2 pi f_D tau) (W. C. Jakes,
  Microwave Mobile Communications, Wiley, 1974, chapter 1; R. H. Clarke,
  Bell Syst. Tech. J. 47, 1968), with scipy.special.j0 as the reference;
- Rayleigh and Rice envelopes: scipy.stats.rayleigh / scipy.stats.rice
  with a Kolmogorov-Smirnov test (scipy.stats.kstest) at level 0.01;
- convolution: numpy.convolve and scipy.signal.lfilter;
- fractional delay: an analytic band-limited signal (a sum of complex
  exponentials), delayed in closed form;
- frequency response: numpy.fft (through CpOfdm, whose own tests check
  it against numpy.fft) of received and transmitted CP-OFDM symbols.

Monte-Carlo checks use fixed seeds; their bounds are stated beside them.
"""

import numpy as np
import pytest
import scipy.signal
import scipy.special
import scipy.stats
from hypothesis import given, settings, strategies as st

import tonebank
from tonebank import CarrierPlan, CpOfdm
from tonebank.channel import DelayProfile, TappedDelayLine

TOL = {np.complex128: 1e-12, np.complex64: 2e-5}


def sample_spaced(powers_db, fs=1.0):
    powers_db = np.asarray(powers_db, float)
    return DelayProfile(np.arange(powers_db.size) / fs, powers_db)


# ---- statistics ----------------------------------------------------------------

def test_frequency_correlation_of_exponential_profile():
    # van de Beek et al. (VTC 1995) / Edfors et al. (IEEE Trans. Commun. 1998):
    # r(dk) = E[H[k + dk] H*[k]] = 1 / (1 + j 2 pi tau_rms dk df)
    # for an exponential power-delay profile (from memory).
    n_fft, tau = 512, 32.0                               # samples; df = 1/n_fft
    prof = DelayProfile.exponential(tau, 1.0, floor_db=-40.0)
    plan = CarrierPlan(n_fft, data=np.arange(-n_fft // 2, n_fft // 2))
    ch = TappedDelayLine(prof, 1.0, branches=500, rng=2024)
    h = ch.frequency_response(plan, 1)[:, 0, :]          # (branches, n_fft)
    power = (np.abs(h) ** 2).mean()
    for dk in range(0, 9):
        per_branch = (np.roll(h, -dk, axis=-1) * h.conj()).mean(axis=-1) / power
        estimate = per_branch.mean()
        # bound: 5 standard errors over the 500 independent branches
        # (normal approximation), plus the gap between this sampled,
        # truncated profile and the continuous exponential the formula is
        # for (its exact correlation sum_m P_m e^{-j 2 pi dk m / N}).
        se = per_branch.std(ddof=1) / np.sqrt(per_branch.size)
        paper = 1.0 / (1.0 + 2j * np.pi * tau * dk / n_fft)
        sampled = (prof.powers * np.exp(-2j * np.pi * dk * np.arange(prof.n_paths)
                                        / n_fft)).sum()
        assert abs(sampled - paper) < 0.02              # the allowance stays small
        assert abs(estimate - paper) <= 5 * se + abs(sampled - paper)


def test_clarke_autocorrelation_follows_j0():
    # Jakes (1974) ch. 1 / Clarke (1968): E[g(t) g*(t + tau)] = J0(2 pi f_D tau)
    # for unit-power Rayleigh fading; scipy.special.j0 as the reference.
    fs, fd = 2000.0, 50.0
    ch = TappedDelayLine(DelayProfile([0.0], [0.0]), fs, max_doppler_hz=fd,
                         branches=400, rng=77)
    n = np.arange(0, 400)                                # 10 Doppler periods
    g = ch.path_gains(n)[:, :, 0]                        # (branches, n)
    lags = np.arange(0, 121, 8)                          # up to 3 Doppler periods
    for lag in lags:
        prod = g[:, lag:] * g[:, :g.shape[1] - lag].conj()
        per_branch = prod.mean(axis=-1)
        estimate = per_branch.mean()
        se = per_branch.std(ddof=1) / np.sqrt(per_branch.size)
        theory = scipy.special.j0(2 * np.pi * fd * lag / fs)
        # bound: 5 standard errors over 400 independent branches (normal
        # approximation); knots fall on every sample here (f_s / (64 f_D) < 2),
        # so the gains are the sinusoids themselves, with no interpolation.
        assert abs(estimate - theory) <= 5 * se, (lag, estimate, theory)
    assert ch.update_interval == 1


@pytest.mark.parametrize("doppler", [0.0, 30.0])
def test_envelope_is_rayleigh(doppler):
    # scipy.stats.rayleigh with scale sqrt(P/2) (unit power, complex Gaussian
    # gain); Kolmogorov-Smirnov test at level 0.01 over 3000 independent
    # branches at one instant (fixed seed).
    ch = TappedDelayLine(DelayProfile([0.0], [0.0]), 1000.0, max_doppler_hz=doppler,
                         branches=3000, rng=5)
    env = np.abs(ch.path_gains([123.0])[:, 0, 0])
    result = scipy.stats.kstest(env, scipy.stats.rayleigh(scale=np.sqrt(0.5)).cdf)
    assert result.pvalue > 0.01


@pytest.mark.parametrize("k_factor", [1.0, 6.0])
@pytest.mark.parametrize("doppler", [0.0, 30.0])
def test_rician_k_factor_is_reproduced(k_factor, doppler):
    # Rician gain of unit power: line of sight nu^2 = K/(K+1), diffuse
    # 2 sigma^2 = 1/(K+1); the envelope is Rice(b = nu / sigma, scale = sigma)
    # (scipy.stats.rice); KS test at level 0.01 over 3000 branches.
    ch = TappedDelayLine(DelayProfile([0.0, 1e-3], [0.0, -6.0]), 1000.0,
                         max_doppler_hz=doppler, k_factor=k_factor, branches=3000, rng=9)
    g = ch.path_gains([321.0])[:, 0, :]                  # (branches, paths)
    share = ch.profile.powers[0]
    sigma = np.sqrt(share / (2 * (k_factor + 1)))
    nu = np.sqrt(share * k_factor / (k_factor + 1))
    result = scipy.stats.kstest(np.abs(g[:, 0]), scipy.stats.rice(nu / sigma, scale=sigma).cdf)
    assert result.pvalue > 0.01
    # moment estimate of K (the Rice fourth moment E|g|^4 = nu^4 + 4 nu^2
    # sigma_c^2 + 2 sigma_c^4 with sigma_c^2 = 2 sigma^2, solved for nu^2):
    # within 5 standard errors estimated from 10 batches of 300 branches.
    def k_hat(v):
        m2, m4 = (np.abs(v) ** 2).mean(), (np.abs(v) ** 4).mean()
        los = np.sqrt(max(2 * m2 * m2 - m4, 0.0))
        return los / (m2 - los)
    batches = np.array([k_hat(b) for b in g[:, 0].reshape(10, 300)])
    assert abs(k_hat(g[:, 0]) - k_factor) <= 5 * batches.std(ddof=1) / np.sqrt(10)
    # the second path stays Rayleigh
    second = scipy.stats.rayleigh(scale=np.sqrt(ch.profile.powers[1] / 2)).cdf
    assert scipy.stats.kstest(np.abs(g[:, 1]), second).pvalue > 0.01


# ---- filtering -----------------------------------------------------------------

@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_static_filter_matches_numpy_convolve_and_lfilter(dtype):
    # numpy.convolve (full convolution, first n samples) and
    # scipy.signal.lfilter (FIR with b = taps, a = [1]).
    prof = sample_spaced(-0.7 * np.arange(24), fs=5e6)
    ch = TappedDelayLine(prof, 5e6, branches=2, rng=3)
    rng = np.random.default_rng(1)
    x = (rng.standard_normal((3, 2000)) + 1j * rng.standard_normal((3, 2000))).astype(dtype)
    y = ch.filter(x)
    assert y.dtype == dtype and y.shape == (3, 2, 2000)
    taps = ch.impulse_response([0])[:, 0, :]               # (branches, 24)
    for b in range(2):
        for row in range(3):
            ref = np.convolve(x[row].astype(complex), taps[b])[:2000]
            ref2 = scipy.signal.lfilter(taps[b], [1.0], x[row].astype(complex))
            scale = np.abs(ref).max()
            assert np.abs(y[row, b] - ref).max() <= TOL[dtype] * scale * 10
            assert np.abs(y[row, b] - ref2).max() <= TOL[dtype] * scale * 10


def test_time_varying_filter_matches_direct_sum():
    # definition: y[n] = sum_m c_m(n) x[n - m], with c_m(n) from impulse_response
    prof = DelayProfile([0.0, 3e-6, 7.5e-6], [0.0, -2.0, -5.0])
    ch = TappedDelayLine(prof, 1e6, max_doppler_hz=400.0, update_interval=7, rng=4)
    rng = np.random.default_rng(2)
    x = rng.standard_normal(300) + 1j * rng.standard_normal(300)
    start = 1234
    y = ch.filter(x, start_sample=start)
    c = ch.impulse_response(start + np.arange(300))        # (n, lags)
    ref = np.array([sum(c[n, m] * x[n - m] for m in range(ch.n_lags) if n >= m)
                    for n in range(300)])
    assert np.abs(y - ref).max() <= 1e-12 * np.abs(ref).max()


def test_backends_agree():
    prof = DelayProfile.published("tdl_a", delay_spread_s=100e-9)
    rng = np.random.default_rng(8)
    x = rng.standard_normal(5000) + 1j * rng.standard_normal(5000)
    out = {}
    for name in ("numpy", "c") if tonebank.backend_info()["c_available"] else ("numpy",):
        with tonebank.use_backend(name):
            ch = TappedDelayLine(prof, 30.72e6, max_doppler_hz=2000.0, branches=2, rng=6)
            out[name] = ch.filter(x), ch.filter(x.astype(np.complex64))
    for name in out:
        assert np.abs(out[name][0] - out["numpy"][0]).max() <= 1e-12 * np.abs(x).max()
        assert np.abs(out[name][1] - out["numpy"][1]).max() <= 1e-5 * np.abs(x).max()


@settings(max_examples=25)
@given(cuts=st.lists(st.integers(min_value=0, max_value=700), min_size=1, max_size=6),
       doppler=st.sampled_from([0.0, 150.0]),
       branches=st.sampled_from([None, 3]),
       dtype=st.sampled_from([np.complex128, np.complex64]))
def test_streaming_equals_one_shot(cuts, doppler, branches, dtype):
    prof = DelayProfile([0.0, 2.3e-6, 9e-6], [0.0, -3.0, -8.0])
    ch = TappedDelayLine(prof, 1e6, max_doppler_hz=doppler, branches=branches,
                         update_interval=37, rng=12)
    rng = np.random.default_rng(3)
    x = (rng.standard_normal((2, 1500)) + 1j * rng.standard_normal((2, 1500))).astype(dtype)
    edges = sorted(set(min(c, 1500) for c in cuts) | {0, 1500})
    parts = [ch.apply(x[:, a:b]) for a, b in zip(edges[:-1], edges[1:])]
    assert ch.position == 1500
    assert np.array_equal(np.concatenate(parts, axis=-1), ch.filter(x))
    ch.reset()
    assert np.array_equal(ch.apply(x), ch.filter(x))


@pytest.mark.parametrize("length, error_db", [(8, -23), (16, -47), (32, -94), (64, -150)])
def test_fractional_delay_of_a_band_limited_signal(length, error_db):
    # Analytic band-limited signal: s(t) = sum_i a_i exp(j 2 pi f_i t) with
    # |f_i| <= 0.4 f_s; a path at delay d samples must give g s(n - d - latency)
    # within the interpolator error stated in the module notes (max over
    # |f| <= 0.4 f_s), times sum |a_i|, plus rounding.
    fs = 1.0
    rng = np.random.default_rng(length)
    freqs = rng.uniform(-0.4, 0.4, 12)
    amps = rng.standard_normal(12) + 1j * rng.standard_normal(12)
    n = np.arange(600)

    def signal(t):
        return (amps * np.exp(2j * np.pi * np.outer(t, freqs))).sum(axis=-1)

    for delay in (0.37, 5.5, 12.81):
        prof = DelayProfile([delay / fs], [0.0])
        ch = TappedDelayLine(prof, fs, interp_length=length, rng=1)
        gain = ch.path_gains([0.0])[0, 0]
        y = ch.filter(signal(n))
        ref = gain * signal(n - delay - ch.latency_samples)
        settled = n >= ch.n_lags                        # the filter has a full history
        bound = 10 ** (error_db / 20) * np.abs(amps).sum() * abs(gain) + 1e-11
        assert np.abs(y[settled] - ref[settled]).max() <= bound


# ---- the true frequency response ------------------------------------------------

PLAN = CarrierPlan.centered(64, 52, pilot_spacing=13, pilot_offset=6, cp_length=16,
                            sample_rate=20e6)


@pytest.mark.parametrize("oversampling", [1, 2])
@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_static_response_equals_received_over_transmitted(oversampling, dtype):
    # FFT of the received CP-OFDM symbol over the transmitted one (numpy.fft
    # inside CpOfdm) equals H when the channel memory fits in the prefix.
    prof = DelayProfile([0.0, 90e-9, 310e-9], [0.0, -3.0, -9.0])   # fractional delays
    fs = 20e6 * oversampling
    ch = TappedDelayLine(prof, fs, interp_length=8, rng=21)
    ofdm = CpOfdm(PLAN, oversampling=oversampling)
    assert ch.n_lags - 1 <= 16 * oversampling
    rng = np.random.default_rng(4)
    grid = PLAN.place((rng.standard_normal(5 * 48) + 1j * rng.standard_normal(5 * 48)))
    grid = grid.astype(dtype)
    x = ofdm.synthesize(grid)
    y = ch.filter(x)
    assert y.dtype == dtype
    ratio = ofdm.analyze(y)[:, PLAN.data_bins] / grid[:, PLAN.data_bins]
    h = ch.frequency_response(ofdm, 5)
    assert h.shape == (5, 64) and h.dtype == np.complex128
    assert np.abs(ratio - h[:, PLAN.data_bins]).max() <= TOL[dtype] * 100
    assert np.allclose(h, h[0])                         # static: every symbol alike


@pytest.mark.parametrize("at", ["window_mean", "window_centre"])
def test_time_varying_response_is_the_window_mean(at):
    # One subcarrier at a time (no inter-carrier interference): the FFT of
    # the received window over the transmitted value is the window mean of
    # the taps (numpy.fft, the definition of the DFT); the window centre is
    # close to it (second order in the change over a window).
    prof = DelayProfile([0.0, 250e-9], [0.0, -4.0])
    ch = TappedDelayLine(prof, 20e6, max_doppler_hz=20e3, update_interval=5, rng=31,
                         branches=2)
    ofdm = CpOfdm(PLAN)
    h = ch.frequency_response(ofdm, 3, start_sample=40, at=at)
    for pos in (PLAN.data_bins[0], PLAN.pilot_bins[1], PLAN.data_bins[-1]):
        grid = np.zeros((3, 64), complex)
        grid[:, pos] = [1.0, 1j, -1.0]
        x = np.concatenate((np.zeros(40), ofdm.synthesize(grid)))
        y = ch.filter(x)[..., 40:]
        measured = ofdm.analyze(y)[..., pos] / grid[:, pos]
        if at == "window_mean":
            assert np.abs(measured - h[..., pos]).max() <= 1e-12
        else:
            # Mean of a smooth g over a window of length T minus its centre
            # value is at most max|g''| T^2 / 24 (Taylor expansion about the
            # centre); a sum of M sinusoids of amplitude sqrt(P/M) at Doppler
            # <= f_D has |g''| <= (2 pi f_D)^2 sqrt(P M).  The knots (every 5
            # samples) add at most twice the stated line error,
            # (2 pi f_D Delta / f_s)^2 / 8 times the same amplitude.  Both
            # paths sit on whole samples, so |dH| <= sum_p |dg_p|.
            amplitude = np.sqrt(ch.profile.powers * 32).sum()
            f_t = 20e3 * 64 / 20e6                            # f_D * window
            line = (2 * np.pi * 20e3 * 5 / 20e6) ** 2 / 8
            gap = amplitude * ((2 * np.pi * f_t) ** 2 / 24 + 2 * line)
            difference = np.abs(measured - h[..., pos]).max()
            assert 1e-6 < difference <= gap                  # close, but not equal


def test_response_of_stream_position_and_prefix_pattern():
    plan = CarrierPlan.centered(32, 24, cp_length=[6, 4, 4], sample_rate=1e6)
    ch = TappedDelayLine(DelayProfile([0.0, 3e-6], [0.0, -1.0]), 1e6, max_doppler_hz=300.0,
                         rng=2)
    whole = ch.frequency_response(plan, 6, start_sample=10)
    tail = ch.frequency_response(plan, 4, start_sample=10 + plan.n_samples(2),
                                 start_symbol=2)
    assert np.allclose(whole[2:], tail, rtol=0, atol=1e-14)
    assert not np.allclose(whole[0], whole[-1])          # it does change


# ---- bad input -----------------------------------------------------------------

PROFILE = DelayProfile([0.0, 1e-6], [0.0, -3.0])


@pytest.mark.parametrize("kwargs, error, words", [
    (dict(k_factor=-1.0), ValueError, "k_factor"),
    (dict(k_factor=[1.0, 2.0, 3.0]), ValueError, "k_factor"),
    (dict(k_factor="big"), TypeError, "k_factor"),
    (dict(max_doppler_hz=-5.0), ValueError, "max_doppler_hz"),
    (dict(max_doppler_hz=6e5), ValueError, "max_doppler_hz"),
    (dict(max_doppler_hz=np.inf), ValueError, "max_doppler_hz"),
    (dict(branches=0), ValueError, "branches"),
    (dict(branches=2.5), TypeError, "branches"),
    (dict(interpolation="cubic"), ValueError, "interpolation"),
    (dict(interp_length=12), ValueError, "interp_length"),
    (dict(interp_length=[16]), ValueError, "interp_length"),
    (dict(n_sinusoids=0), ValueError, "n_sinusoids"),
    (dict(update_interval=0, max_doppler_hz=10.0), ValueError, "update_interval"),
    (dict(rng="seed"), TypeError, "rng"),
])
def test_bad_channel_arguments(kwargs, error, words):
    with pytest.raises(error, match=words):
        TappedDelayLine(PROFILE, 1e6, **kwargs)


def test_bad_profile_rate_and_signals():
    with pytest.raises(TypeError, match="profile"):
        TappedDelayLine([0.0, 1e-6], 1e6)
    with pytest.raises(ValueError, match="sample_rate"):
        TappedDelayLine(PROFILE, 0.0)
    with pytest.raises(ValueError, match="lags"):
        TappedDelayLine(DelayProfile([0.0, 1.0], [0.0, 0.0]), 1e9)   # 1 s of echo
    ch = TappedDelayLine(PROFILE, 1e6, rng=1)
    with pytest.raises(TypeError, match="samples"):
        ch.filter(np.array(["a", "b"]))
    with pytest.raises(ValueError, match="samples"):
        ch.filter(np.complex128(1.0))
    with pytest.raises(ValueError, match="start_sample"):
        ch.filter(np.zeros(4), start_sample=-1)
    ch.apply(np.zeros((2, 8)))
    with pytest.raises(ValueError, match="leading shape"):
        ch.apply(np.zeros(8))
    with pytest.raises(ValueError, match="sample_index"):
        ch.path_gains([-1.0])
    with pytest.raises(ValueError, match="sample_rate"):
        ch.frequency_response(PLAN, 2)                    # plan at 20 MHz, channel at 1 MHz
    with pytest.raises(TypeError, match="target"):
        ch.frequency_response("plan", 2)
    with pytest.raises(ValueError, match="at="):
        TappedDelayLine(PROFILE, 20e6, rng=1).frequency_response(PLAN, 2, at="start")
    with pytest.raises(ValueError, match="n_symbols"):
        TappedDelayLine(PROFILE, 20e6, rng=1).frequency_response(PLAN, -1)


def test_gains_at_far_apart_instants_match_the_stream():
    # only the knots needed are evaluated; values agree with a dense query
    ch = TappedDelayLine(PROFILE, 1e6, max_doppler_hz=100.0, rng=8)
    far = ch.path_gains([5.0, 3e9 + 0.5])
    near = ch.path_gains(np.array([5.0]))
    assert far.shape == (2, 2) and np.array_equal(far[0], near[0])
    assert np.all(np.isfinite(far))


def test_seed_gives_the_same_channel_and_power_is_kept():
    a = TappedDelayLine(PROFILE, 1e6, max_doppler_hz=10.0, rng=42)
    b = TappedDelayLine(PROFILE, 1e6, max_doppler_hz=10.0, rng=42)
    assert np.array_equal(a.impulse_response([0, 500]), b.impulse_response([0, 500]))
    many = TappedDelayLine(PROFILE, 1e6, branches=4000, rng=0)
    # unit total power on average: mean of sum_p |g_p|^2 over 4000 branches,
    # within 5 standard errors (chi-square, normal approximation)
    power = (np.abs(many.path_gains([0.0])[:, 0, :]) ** 2).sum(axis=-1)
    assert abs(power.mean() - 1.0) <= 5 * power.std() / np.sqrt(power.size)
