"""Channel estimation against published formulas and reference libraries.

Sources named beside each check:

* [vdB95] J.-J. van de Beek, O. Edfors, M. Sandell, S. K. Wilson and
  P. O. Börjesson, "On channel estimation in OFDM systems", Proc. IEEE
  VTC 1995: LS error sigma^2/|X|^2; the LMMSE estimator
  R (R + beta/SNR I)^-1 and its MSE (1/N) sum lambda (beta/SNR) /
  (lambda + beta/SNR); beta = E|X|^2 E|1/X|^2 = 17/9 for 16-QAM; the
  frequency correlation 1/(1 + j 2 pi tau_rms dk df) of an exponential
  profile.
* [Edf98] O. Edfors et al., "OFDM channel estimation by singular value
  decomposition", IEEE Trans. Commun. 46 (7), 1998: the rank-p estimator
  and its MSE (1/N) [sum_{k<=p} lambda_k c/(lambda_k + c) + sum_{k>p}
  lambda_k] (equation from memory); the DFT-based estimator's MSE
  (L/N) sigma^2/|X|^2 for a sample-spaced channel of at most L taps.
* [Pro] J. G. Proakis, Digital Communications: BPSK over flat Rayleigh
  fading with perfect channel knowledge, P = (1 - sqrt(g/(1+g)))/2 (the
  L = 1 case of the diversity formula), and, for a noisy channel
  reference jointly Gaussian with the signal, P = (1 - mu)/2 with mu the
  (real) correlation coefficient of reference and signal (Appendix B,
  from memory; the perfect-knowledge case is the special case
  mu = sqrt(g/(1+g))).
* Clarke's model: a sum of sinusoids with uniform angles of arrival has
  the time correlation J0(2 pi f_D dt) (R. H. Clarke, Bell Syst. Tech. J.
  1968; from memory), with J0 from scipy.special.
* Reference libraries: numpy.fft (the DFT of the taps), numpy.interp and
  scipy.interpolate.CubicSpline (interpolation), scipy.stats (gamma,
  chi-square and normal quantiles for the confidence bounds).

Monte-Carlo checks: fixed seeds; where the statistic is an exact sum of
independent exponential variables the bound is the exact gamma (or
chi-square) quantile at 99.9 %; elsewhere a normal (CLT) bound of 3.9
standard errors (99.99 %) over at least 1000 independent frames.
"""

import numpy as np
import pytest
from scipy import interpolate, special, stats

import tonebank
from tonebank import CarrierPlan, Constellation, PilotPattern, metrics, presets
from tonebank.estimation import (ChannelEstimator, FrequencyCorrelation, estimate_from_training,
                                 ls_estimate, noise_variance_from_nulls,
                                 noise_variance_from_pilots)

Z = 3.9                 # normal quantile of the CLT bounds (two-sided 99.99 %)
CONF = 0.999            # exact gamma / chi-square / Clopper-Pearson bounds


def cn(rng, shape, var=1.0):
    """Circular complex Gaussian samples of variance var."""
    return np.sqrt(var / 2) * (rng.standard_normal(shape) + 1j * rng.standard_normal(shape))


def exp_taps(rng, shape, n_taps, decay):
    """Sample-spaced taps, power ~ exp(-l / decay), total mean power 1."""
    p = np.exp(-np.arange(n_taps) / decay)
    p /= p.sum()
    return cn(rng, shape + (n_taps,)) * np.sqrt(p), p


def gamma_bounds(m):
    """Two-sided CONF bounds of (sum of m Exp(1)) / m."""
    a = (1 - CONF) / 2
    return stats.gamma.ppf(a, m) / m, stats.gamma.ppf(1 - a, m) / m


def used_bins(plan):
    return np.sort(np.concatenate((plan.data_bins, plan.pilot_bins)))


FULL = CarrierPlan(64, data=np.arange(-32, 32), cp_length=16)   # every bin used, no guard


# ---- correlation models --------------------------------------------------------------


def empirical_correlation(h, lags):
    """Per-channel means of H[k+d] H[k]^* over k, for each lag: shape (T, len(lags))."""
    return np.stack([np.mean(h[:, d:] * h[:, :h.shape[1] - d].conj(), axis=1)
                     for d in lags], axis=1)


@pytest.mark.parametrize("kind", ["exponential", "uniform", "taps"])
def test_frequency_correlation_matches_generated_channels(kind):
    # [vdB95] r(dk) = 1/(1 + j 2 pi tau_rms dk / N) for exponentially
    # distributed delays; the uniform profile and a discrete profile follow
    # from the same Fourier-transform definition.  Channels here are drawn
    # from the profile directly (random delays, or sample-spaced taps).
    rng = np.random.default_rng(11)
    n, trials, paths, rms = 64, 2000, 16, 3.0
    k = np.arange(n)
    if kind == "taps":
        taps, p = exp_taps(rng, (trials,), 12, 3.0)
        h = np.fft.fft(taps, n)
        model = FrequencyCorrelation.from_power_profile(p)
    else:
        if kind == "exponential":
            delays = rng.exponential(rms, (trials, paths))
            model = FrequencyCorrelation.exponential(rms)
        else:
            delays = rng.uniform(0, np.sqrt(12) * rms, (trials, paths))
            model = FrequencyCorrelation.uniform(rms)
        gains = cn(rng, (trials, paths), 1 / paths)
        h = np.einsum("tp,tpk->tk", gains, np.exp(-2j * np.pi * delays[:, :, None] * k / n))
    lags = np.arange(0, 20, 3)
    per_trial = empirical_correlation(h, lags)
    mean = per_trial.mean(axis=0)
    err = per_trial.std(axis=0, ddof=1) / np.sqrt(trials)
    expected = model(lags, n)
    assert np.all(np.abs(mean.real - expected.real) <= Z * err), (mean, expected)
    assert np.all(np.abs(mean.imag - expected.imag) <= Z * err + 1e-12), (mean, expected)
    assert model(0, n) == pytest.approx(1.0)
    if kind == "taps":
        assert model.rms_delay_samples == pytest.approx(
            np.sqrt(p @ np.arange(12) ** 2 - (p @ np.arange(12)) ** 2))


# ---- interpolators against reference libraries (noiseless, deterministic) ------------


def comb_case(spacing=4):
    plan = CarrierPlan.centered(64, 48, cp_length=16)
    return plan, PilotPattern.comb(plan, spacing)


def test_linear_and_spline_match_numpy_and_scipy():
    plan, pattern = comb_case(4)
    rng = np.random.default_rng(2)
    ls = cn(rng, (3, 64))
    mask = pattern.mask_for(3)
    k = np.round(np.fft.fftfreq(64) * 64).astype(int)
    used = used_bins(plan)
    for method in ("linear", "spline"):
        out = ChannelEstimator(pattern, frequency=method).interpolate(ls * mask)
        for s in range(3):
            pk = k[mask[s]]
            order = np.argsort(pk)
            xp, fp = pk[order], ls[s, mask[s]][order]
            if method == "linear":
                inside = (k[used] >= xp[0]) & (k[used] <= xp[-1])
                ref = np.interp(k[used], xp, fp.real) + 1j * np.interp(k[used], xp, fp.imag)
                np.testing.assert_allclose(out[s, used][inside], ref[inside], atol=1e-12)
                # Outside the pilots: the end segments extended (exact on a line).
            else:
                ref = interpolate.CubicSpline(xp, fp)(k[used])
                np.testing.assert_allclose(out[s, used], ref, atol=1e-12)
        assert not out[:, plan.null_bins].any()
    line = (0.3 + 0.1j) * k + 2
    out = ChannelEstimator(pattern).interpolate(np.broadcast_to(line, (1, 64)) * mask[:1])
    np.testing.assert_allclose(out[0, used], line[used], atol=1e-12)


def test_dft_estimator_is_exact_for_short_channels_through_cp_ofdm():
    # Noiseless: a channel of at most n_taps taps is recovered exactly
    # (numpy.fft of the taps gives the true response).  The channel is a
    # linear convolution in the time domain, which the cyclic prefix turns
    # into one gain per subcarrier.
    plan = CarrierPlan.centered(128, 100, cp_length=16)
    pattern = PilotPattern.comb(plan, 5)
    rng = np.random.default_rng(3)
    taps, _ = exp_taps(rng, (), 10, 4.0)
    ofdm = tonebank.CpOfdm(plan)
    data = cn(rng, pattern.n_data(6))
    x = ofdm.synthesize(pattern.place(data))
    y = np.convolve(x, taps)[:x.size]
    est = ChannelEstimator(pattern, frequency="dft", n_taps=16).estimate(ofdm.analyze(y))
    h = np.fft.fft(taps, 128)
    used = used_bins(plan)
    np.testing.assert_allclose(est[:, used], np.broadcast_to(h[used], (6, used.size)),
                               atol=1e-11)


def test_scattered_two_dimensional_exact_cases():
    # DVB-T-like grid (ETSI EN 300 744 clause 4.5.3, from memory): time
    # interpolation at every third subcarrier, then a 12-tap fit.
    plan = CarrierPlan.centered(256, 190, cp_length=32)
    pattern = PilotPattern.scattered(plan, 12, 3, values=4 / 3)
    rng = np.random.default_rng(5)
    n_sym = 14
    h0 = np.fft.fft(exp_taps(rng, (), 12, 3.0)[0], 256)
    h1 = np.fft.fft(exp_taps(rng, (), 12, 3.0)[0], 256) * 0.05
    grid = pattern.place(cn(rng, pattern.n_data(n_sym)), n_symbols=n_sym)
    used = used_bins(plan)
    est = ChannelEstimator(pattern, frequency="dft", n_taps=12)
    # Static channel: exact everywhere.
    out = est.estimate(h0 * grid)
    np.testing.assert_allclose(out[:, used], np.broadcast_to(h0[used], (n_sym, used.size)),
                               atol=1e-11)
    # A channel linear in time is exact between the first and last pilot
    # symbol of every subcarrier (symbols 3 .. n_sym - 4).
    h_t = h0 + np.arange(n_sym)[:, None] * h1
    out = est.estimate(h_t * grid)
    np.testing.assert_allclose(out[3:n_sym - 3, used], h_t[3:n_sym - 3, used], atol=1e-11)
    # The same through a batch axis, from a later start, in complex64.
    out64 = est.estimate(np.stack([h0 * grid, 2 * h0 * grid]).astype(np.complex64))
    assert out64.dtype == np.complex64 and out64.shape == (2, n_sym, 256)
    np.testing.assert_allclose(out64[1, :, used].T, 2 * h0[used] * np.ones((n_sym, 1)),
                               atol=2e-5 * np.abs(h0).max() * 10)


# ---- MSE against the published formulas ----------------------------------------------


def test_ls_mse_is_noise_over_pilot_power():
    # [vdB95]: the LS error at a pilot has variance sigma^2 / |X_p|^2.
    # |e|^2 |X|^2 / sigma^2 are independent Exp(1): their mean over m
    # cells lies within the exact gamma bounds.
    plan = CarrierPlan.centered(64, 48)
    amplitudes = np.linspace(0.5, 2.0, 64) * np.exp(1j * np.arange(64))
    pattern = PilotPattern.comb(plan, 3, values=amplitudes)
    rng = np.random.default_rng(7)
    sigma2, n_sym = 0.05, 400
    h = cn(rng, (n_sym, 64))
    grid = pattern.place(cn(rng, pattern.n_data(n_sym)), n_symbols=n_sym)
    rx = h * grid + cn(rng, grid.shape, sigma2)
    ls = ls_estimate(rx, pattern)
    mask = pattern.mask_for(n_sym)
    ratio = np.abs(ls[mask] - h[mask]) ** 2 * np.abs(grid[mask]) ** 2 / sigma2
    low, high = gamma_bounds(ratio.size)
    assert low <= ratio.mean() <= high
    assert not ls[~mask].any()


def block_estimator(method, snr_db, profile, **kw):
    pattern = PilotPattern.block(FULL, 1)          # every symbol a training symbol
    return ChannelEstimator(pattern, frequency=method, snr_db=snr_db,
                            correlation=FrequencyCorrelation.from_power_profile(profile), **kw)


def filter_matrix(est, n=64):
    """W of a block-pattern estimator (out = W @ ls), probed with unit vectors."""
    eye = np.eye(n, dtype=complex)
    return est.interpolate(eye).T        # row s of the output is W[:, s]


def analytic_mse(w, r, c):
    """(1/N) tr[(W - I) R (W - I)^H + c W W^H] for LS noise c I."""
    d = w - np.eye(w.shape[0])
    return float(np.real(np.trace(d @ r @ d.conj().T) + c * np.trace(w @ w.conj().T))) / r.shape[0]


@pytest.mark.parametrize("snr_db", [5.0, 20.0])
def test_lmmse_and_low_rank_mse_formulas(snr_db):
    # [vdB95] full-rank MSE, [Edf98] rank-p MSE, checked on the estimator's
    # own filter (deterministic, to rounding).  beta = 17/9 for 16-QAM.
    beta = 17 / 9
    c = beta * 10 ** (-snr_db / 10)
    _, p = exp_taps(np.random.default_rng(0), (), 16, 4.0)
    k = np.arange(64)
    r = FrequencyCorrelation.from_power_profile(p).matrix(k, k, 64)
    lam = np.sort(np.linalg.eigvalsh(r))[::-1]
    full = block_estimator("lmmse", snr_db, p, beta=beta)
    formula = np.sum(lam * c / (lam + c)) / 64
    assert analytic_mse(filter_matrix(full), r, c) == pytest.approx(formula, rel=1e-9)
    assert full.predicted_mse(64).mean() == pytest.approx(formula, rel=1e-9)
    for rank in (4, 10, 16):
        low = block_estimator("lmmse", snr_db, p, beta=beta, rank=rank)
        formula_r = (np.sum(lam[:rank] * c / (lam[:rank] + c)) + np.sum(lam[rank:])) / 64
        assert analytic_mse(filter_matrix(low), r, c) == pytest.approx(formula_r, rel=1e-9)
        assert low.predicted_mse(64).mean() == pytest.approx(formula_r, rel=1e-9)
        assert formula_r >= formula - 1e-15
    # LMMSE is never worse than LS (whose MSE is beta / SNR = c).
    for snr in np.arange(-10.0, 41.0, 5.0):
        cc = beta * 10 ** (-snr / 10)
        assert np.sum(lam * cc / (lam + cc)) / 64 < cc


def test_lmmse_monte_carlo_with_random_16qam_training():
    # [vdB95]: with random 16-QAM training (a fresh symbol on every bin of
    # every frame) the averaged MSE is (1/N) sum lambda c/(lambda + c),
    # c = (17/9)/SNR.  Per-frame MSEs are independent: CLT bound.
    rng = np.random.default_rng(21)
    qam = Constellation.qam(16)
    snr_db, frames, n = 10.0, 1500, 64
    sigma2 = 10 ** (-snr_db / 10)
    taps, p = exp_taps(rng, (frames,), 16, 4.0)
    h = np.fft.fft(taps, n)
    x = qam.points[rng.integers(0, 16, (frames, n))]
    y = h * x + cn(rng, (frames, n), sigma2)
    est = block_estimator("lmmse", snr_db, p, beta=17 / 9)
    out = est.interpolate(y / x)
    ls_mse = np.mean(np.abs(y / x - h) ** 2, axis=1)
    mse = np.mean(np.abs(out - h) ** 2, axis=1)
    lam = np.linalg.eigvalsh(FrequencyCorrelation.from_power_profile(p).matrix(
        np.arange(n), np.arange(n), n))
    c = 17 / 9 * sigma2
    expected = np.sum(lam * c / (lam + c)) / n
    assert abs(mse.mean() - expected) <= Z * mse.std(ddof=1) / np.sqrt(frames)
    assert abs(ls_mse.mean() - c) <= Z * ls_mse.std(ddof=1) / np.sqrt(frames)
    assert mse.mean() < ls_mse.mean()


def test_dft_mse_is_taps_over_bins():
    # [Edf98]: with N training bins over the whole FFT and a channel of at
    # most L taps, the DFT-based estimate has MSE (L/N) sigma^2/|X|^2.  The
    # error is the projection of white noise on an L-dimensional space:
    # sum |e|^2 / sigma^2 over all frames is Gamma(L * frames) exactly.
    rng = np.random.default_rng(8)
    frames, n, taps_len, sigma2 = 300, 64, 8, 0.1
    pattern = PilotPattern.block(FULL, 1, values=np.where(rng.random(64) < 0.5, 1.0, -1.0))
    taps, _ = exp_taps(rng, (frames,), taps_len, 2.0)
    h = np.fft.fft(taps, n)
    grid = pattern.place(np.zeros(0, complex), n_symbols=frames)
    rx = h * grid + cn(rng, grid.shape, sigma2)
    est = ChannelEstimator(pattern, frequency="dft", n_taps=taps_len).estimate(rx)
    total = np.sum(np.abs(est - h) ** 2) / sigma2
    low, high = gamma_bounds(taps_len * frames)
    assert low <= total / (taps_len * frames) <= high
    # The filter itself: trace(W W^H)/N = L/N.
    w = filter_matrix(ChannelEstimator(PilotPattern.block(FULL, 1), frequency="dft",
                                       n_taps=taps_len))
    assert np.real(np.trace(w @ w.conj().T)) / n == pytest.approx(taps_len / n, rel=1e-12)
    # predicted_mse of the DFT fit under a profile of at most L taps: the
    # same (L/N) sigma^2 on average (no bias for a channel inside the window).
    fit = ChannelEstimator(PilotPattern.block(FULL, 1), frequency="dft", n_taps=taps_len,
                           snr_db=10.0, correlation=FrequencyCorrelation.from_power_profile(
                               np.ones(taps_len)))
    assert fit.predicted_mse().mean() == pytest.approx(taps_len / n * 0.1, rel=1e-9)


def test_time_wiener_matches_its_mse_on_a_clarke_channel():
    # Training every 4th symbol; between them a Wiener filter from
    # r_t(dn) = J0(2 pi f_D T_s dn) (Clarke's model, scipy.special.j0).
    # Second-order statistics only, so the sum-of-sinusoids channel (random
    # angles and phases) gives the predicted MSE on average; CLT bound.
    plan = CarrierPlan(64, data=np.arange(-32, 32), cp_length=16, sample_rate=1e6)
    t_sym = 80 / 1e6
    fd = 0.04 / t_sym                                    # f_D T_s = 0.04
    snr_db, n_sym, frames, paths = 15.0, 13, 1200, 32
    sigma2 = 10 ** (-snr_db / 10)
    pattern = PilotPattern.block(plan, 4)
    est = ChannelEstimator(pattern, frequency="linear", time="wiener", doppler_hz=fd,
                           snr_db=snr_db)
    lin = ChannelEstimator(pattern, frequency="linear", time="linear")
    rng = np.random.default_rng(9)
    theta = rng.uniform(0, 2 * np.pi, (frames, paths))
    phi = rng.uniform(0, 2 * np.pi, (frames, paths))
    s = np.arange(n_sym)
    h_t = np.exp(1j * (2 * np.pi * fd * t_sym * np.cos(theta)[:, None, :] * s[None, :, None]
                       + phi[:, None, :])).sum(axis=2) / np.sqrt(paths)   # (frames, n_sym)
    h = np.broadcast_to(h_t[:, :, None], (frames, n_sym, 64))   # flat in frequency
    grid = pattern.place(np.ones((frames, pattern.n_data(n_sym))) + 0j, n_symbols=n_sym)
    rx = h * grid + cn(rng, grid.shape, sigma2)
    err_w = np.abs(est.estimate(rx) - h) ** 2
    err_l = np.abs(lin.estimate(rx) - h) ** 2
    # Predicted MSE per symbol from the Wiener equations.
    pil = np.arange(0, n_sym, 4)
    r_pp = special.j0(2 * np.pi * 0.04 * (pil[:, None] - pil[None, :]))
    r_sp = special.j0(2 * np.pi * 0.04 * (s[:, None] - pil[None, :]))
    w = np.linalg.solve(r_pp + sigma2 * np.eye(pil.size), r_sp.T).T
    pred = 1 - 2 * np.sum(w * r_sp, axis=1) + np.einsum("ij,jk,ik->i", w,
                                                        r_pp + sigma2 * np.eye(pil.size), w)
    per_frame = err_w.mean(axis=2)                       # (frames, n_sym); bins share h
    mean, se = per_frame.mean(axis=0), per_frame.std(axis=0, ddof=1) / np.sqrt(frames)
    assert np.all(np.abs(mean - pred) <= Z * se + 1e-12), (mean, pred)
    assert err_w.mean() < err_l.mean()


def test_predicted_mse_calibrates_the_equaliser_noise():
    # LMMSE with the true profile (Gaussian taps): the error e = h - h_hat
    # is Gaussian with the predicted variance eps and independent of h_hat
    # (orthogonality principle, [vdB95]), so with |x| = 1 the ZF output
    # error (e x + n)/h_hat has variance (sigma^2 + eps)/|h_hat|^2: the
    # normalised errors average 1 (CLT over independent symbols).  Without
    # eps they average well above 1.
    rng = np.random.default_rng(31)
    plan = CarrierPlan.centered(64, 48, cp_length=16)
    pattern = PilotPattern.comb(plan, 4, offset=1)
    snr_db, n_sym = 15.0, 3000
    sigma2 = 10 ** (-snr_db / 10)
    taps, p = exp_taps(rng, (n_sym,), 8, 2.0)
    h = np.fft.fft(taps, 64)
    x = np.exp(2j * np.pi * rng.random(pattern.n_data(n_sym)))
    grid = pattern.place(x, n_symbols=n_sym)
    rx = h * grid + cn(rng, grid.shape, sigma2)
    est = ChannelEstimator(pattern, frequency="lmmse", snr_db=snr_db,
                           correlation=FrequencyCorrelation.from_power_profile(p))
    eps = est.predicted_mse()
    (y, h_hat, e_var) = (pattern.take(a)[0].reshape(n_sym, -1)
                         for a in (rx, est.estimate(rx), np.broadcast_to(eps, rx.shape)))
    for error_var, target in ((e_var, 1.0), (0.0, None)):
        eq = tonebank.equalization.equalize_zf(y, h_hat, sigma2, channel_error_var=error_var)
        per_symbol = np.mean(np.abs(eq.symbols - x.reshape(n_sym, -1)) ** 2 / eq.noise_var,
                             axis=1)
        se = per_symbol.std(ddof=1) / np.sqrt(n_sym)
        if target is not None:
            assert abs(per_symbol.mean() - target) <= Z * se
        else:
            assert per_symbol.mean() > 1 + 10 * se


# ---- preambles, training and noise variance -----------------------------------------


def test_training_average_and_noise_from_repeats():
    # Averaging R repeats: error sigma^2 / (R |X|^2) (each cell's error is
    # CN(0, that), so the scaled sum is Gamma exactly); the pooled sample
    # variance of the repeats is sigma^2 chi2(2 K) / (2 K).
    ltf = presets.ieee80211a_long_training()
    bins = np.flatnonzero(ltf)
    rng = np.random.default_rng(12)
    frames, repeats, sigma2 = 400, 2, 0.2
    h = np.fft.fft(exp_taps(rng, (frames,), 8, 2.0)[0], 64)
    rx = (h * ltf)[:, None, :] + cn(rng, (frames, repeats, 64), sigma2)
    est = estimate_from_training(rx, ltf)
    assert est.channel.shape == (frames, 64) and est.noise_var.shape == (frames,)
    ratio = np.abs(est.channel[:, bins] - h[:, bins]) ** 2 * repeats / sigma2
    low, high = gamma_bounds(ratio.size)
    assert low <= ratio.mean() <= high
    dof = 2 * (repeats - 1) * bins.size * frames
    pooled = est.noise_var.mean() / sigma2
    a = (1 - CONF) / 2
    assert stats.chi2.ppf(a, dof) / dof <= pooled <= stats.chi2.ppf(1 - a, dof) / dof
    # The same average through a preamble pattern (time="average").
    plan = presets.ieee80211a()
    pattern = PilotPattern.preamble(plan, 2, values=ltf, include_plan_pilots=False)
    grid = np.concatenate((rx[:3], np.zeros((3, 4, 64))), axis=1)   # 2 LTF + 4 symbols
    out = ChannelEstimator(pattern, time="average").estimate(grid)
    np.testing.assert_allclose(out, np.broadcast_to(est.channel[:3, None, :], out.shape),
                               atol=1e-12)
    # Smoothing by a 16-tap fit leaves the exact channel of 8 taps alone.
    smooth = estimate_from_training(h[:2, None, :] * ltf, ltf, frequency="dft", n_taps=16)
    np.testing.assert_allclose(smooth.channel[:, bins], h[:2, bins], atol=1e-12)
    one = estimate_from_training(rx[0, :1], ltf, frequency="lmmse", snr_db=7.0,
                                 correlation=FrequencyCorrelation.exponential(2.0))
    assert one.noise_var is None and one.channel.shape == (64,)


def test_noise_variance_from_nulls_and_pilots():
    # 2 M sigma_hat^2 / sigma^2 is chi-square with 2 M degrees of freedom
    # (M complex cells), and 2 sum(n_p - L) for the pilot residuals
    # (projection on the complement of the L-tap fit).
    rng = np.random.default_rng(13)
    plan = CarrierPlan.centered(64, 40, cp_length=16)
    pattern = PilotPattern.comb(plan, 2)
    sigma2, n_sym, taps_len = 0.3, 60, 6
    h = np.fft.fft(exp_taps(rng, (), taps_len, 2.0)[0], 64)
    grid = pattern.place(cn(rng, pattern.n_data(n_sym)), n_symbols=n_sym)
    rx = h * grid + cn(rng, grid.shape, sigma2)
    a = (1 - CONF) / 2

    def within(value, dof):
        return stats.chi2.ppf(a, dof) / dof <= value / sigma2 <= stats.chi2.ppf(1 - a, dof) / dof

    assert within(noise_variance_from_nulls(rx, plan), 2 * n_sym * plan.null_bins.size)
    n_p = pattern.mask.sum()
    assert within(noise_variance_from_pilots(rx, pattern, n_taps=taps_len),
                  2 * n_sym * (n_p - taps_len))
    both = noise_variance_from_nulls(np.stack([rx, 2 * rx]), plan)
    assert both.shape == (2,) and both[1] == pytest.approx(4 * both[0])


# ---- error rate: flat Rayleigh BPSK ---------------------------------------------------


@pytest.mark.parametrize("method", ["perfect", "ls", "lmmse"])
def test_bpsk_ber_over_flat_rayleigh(method):
    # [Pro]: perfect knowledge P = (1 - sqrt(g/(1+g)))/2; with an estimate
    # h_hat = sum_i w_i (h + e_i) built from pilots at the same SNR,
    # P = (1 - mu)/2 with mu = S / sqrt((S^2 + sigma^2 sum w_i^2)(1 + sigma^2)),
    # S = sum w_i (real here).  One counted bit per symbol, each symbol with
    # its own fade, so the trials are independent: Clopper-Pearson 99.9 %.
    plan = CarrierPlan.centered(16, 12)
    pattern = PilotPattern.comb(plan, 3, offset=1)      # pilots at -5, -2, 2, 5
    snr_db, n_sym = 10.0, 30000
    sigma2 = 10 ** (-snr_db / 10)
    bpsk = Constellation.bpsk()
    rng = np.random.default_rng({"perfect": 1, "ls": 2, "lmmse": 3}[method])
    bits = rng.integers(0, 2, pattern.n_data(n_sym))
    grid = pattern.place(bpsk.map(bits), n_symbols=n_sym)
    h = cn(rng, (n_sym, 1))
    rx = h * grid + cn(rng, grid.shape, sigma2)
    if method == "perfect":
        h_hat = np.broadcast_to(h, rx.shape)
    elif method == "ls":
        h_hat = ChannelEstimator(pattern, frequency="linear").estimate(rx)
    else:
        h_hat = ChannelEstimator(pattern, frequency="lmmse", snr_db=snr_db,
                                 correlation=FrequencyCorrelation.exponential(0.0)).estimate(rx)
    eq = tonebank.equalization.equalize_zf(rx, h_hat, sigma2)
    data, _ = pattern.take(eq.symbols)
    cell = 1                                           # the data bin at subcarrier -4
    rx_bits = bpsk.demap(data.reshape(n_sym, -1)[:, cell])
    tx_bits = bits.reshape(n_sym, -1)[:, cell]
    count = metrics.bit_errors(tx_bits, rx_bits)
    g = 1 / sigma2
    if method == "perfect":
        mu = np.sqrt(g / (1 + g))
    else:
        est = ChannelEstimator(pattern, frequency="linear") if method == "ls" else \
            ChannelEstimator(pattern, frequency="lmmse", snr_db=snr_db,
                             correlation=FrequencyCorrelation.exponential(0.0))
        position = int(pattern.take(np.arange(16.0)[None, :])[0][cell].real)
        mask = pattern.mask_for(1)[0]
        w = np.array([est.interpolate(np.eye(16)[[b]])[0, position]
                      for b in np.flatnonzero(mask)])
        s, s2 = np.sum(w).real, np.sum(np.abs(w) ** 2)
        assert abs(np.sum(w).imag) < 1e-12
        mu = s / np.sqrt((s * s + sigma2 * s2) * (1 + sigma2))
    expected = (1 - mu) / 2
    low, high = count.interval(CONF, method="clopper-pearson")
    assert low <= expected <= high, (method, count, expected)


# ---- bad input ---------------------------------------------------------------------------


def test_bad_input():
    plan, pattern = comb_case(4)
    corr = FrequencyCorrelation.exponential(2.0)
    with pytest.raises(TypeError, match="pattern"):
        ChannelEstimator("comb")
    with pytest.raises(ValueError, match="frequency='cubic'"):
        ChannelEstimator(pattern, frequency="cubic")
    with pytest.raises(ValueError, match="time='hold'"):
        ChannelEstimator(pattern, time="hold")
    with pytest.raises(ValueError, match="snr_db"):
        ChannelEstimator(pattern, frequency="lmmse", correlation=corr)
    with pytest.raises(TypeError, match="correlation"):
        ChannelEstimator(pattern, frequency="lmmse", snr_db=10.0)
    with pytest.raises(ValueError, match="snr_db must be finite"):
        ChannelEstimator(pattern, frequency="lmmse", snr_db=np.inf, correlation=corr)
    with pytest.raises(TypeError, match="snr_db"):
        ChannelEstimator(pattern, frequency="lmmse", snr_db="10", correlation=corr)
    with pytest.raises(ValueError, match="rank"):
        ChannelEstimator(pattern, frequency="lmmse", snr_db=10.0, correlation=corr, rank=0)
    with pytest.raises(ValueError, match="rank applies"):
        ChannelEstimator(pattern, rank=3)
    with pytest.raises(ValueError, match="beta"):
        ChannelEstimator(pattern, frequency="lmmse", snr_db=10.0, correlation=corr, beta=-1.0)
    with pytest.raises(ValueError, match="n_taps=13 exceeds the 12 pilot"):
        ChannelEstimator(pattern, frequency="dft", n_taps=13).estimate(np.zeros((1, 64)))
    with pytest.raises(ValueError, match="n_taps"):
        ChannelEstimator(CarrierPlan.centered(64, 48, pilot_spacing=4), frequency="dft")
    with pytest.raises(ValueError, match="n_taps applies"):
        ChannelEstimator(pattern, n_taps=4)
    with pytest.raises(ValueError, match="doppler_hz"):
        ChannelEstimator(pattern, time="wiener", snr_db=10.0)
    with pytest.raises(ValueError, match="sample_rate"):
        ChannelEstimator(pattern, time="wiener", snr_db=10.0, doppler_hz=5.0)
    with pytest.raises(ValueError, match="no pilot"):
        ChannelEstimator(CarrierPlan.centered(64, 48))
    with pytest.raises(ValueError, match="predicted_mse needs"):
        ChannelEstimator(pattern).predicted_mse()
    est = ChannelEstimator(pattern)
    with pytest.raises(ValueError, match="n_fft=64"):
        est.estimate(np.zeros((2, 32)))
    with pytest.raises(ValueError, match="n_fft=64"):
        est.estimate(np.zeros(64))
    with pytest.raises(TypeError, match="grid"):
        est.estimate(np.array([["x"] * 64]))
    with pytest.raises(ValueError, match="start_symbol"):
        est.estimate(np.zeros((2, 64)), start_symbol=-2)
    pre = ChannelEstimator(PilotPattern.preamble(plan, 1, include_plan_pilots=False))
    with pytest.raises(ValueError, match="no pilots"):
        pre.estimate(np.zeros((3, 64)), start_symbol=1)
    with pytest.raises(ValueError, match="rms_delay_samples"):
        FrequencyCorrelation.exponential(-1.0)
    with pytest.raises(ValueError, match="powers"):
        FrequencyCorrelation.from_power_profile([0.0, 0.0])
    with pytest.raises(ValueError, match="delays_samples"):
        FrequencyCorrelation.from_power_profile([1.0, 1.0], [0.0])
    ltf = presets.ieee80211a_long_training()
    with pytest.raises(ValueError, match="n_repeats"):
        estimate_from_training(np.zeros((2, 32)), ltf)
    with pytest.raises(ValueError, match="training"):
        estimate_from_training(np.zeros((2, 64)), np.zeros(64))
    with pytest.raises(ValueError, match="n_taps"):
        estimate_from_training(np.zeros((2, 64)), ltf, frequency="dft")
    with pytest.raises(ValueError, match="apply only"):
        estimate_from_training(np.zeros((2, 64)), ltf, n_taps=3)
    with pytest.raises(ValueError, match="used subcarrier"):
        noise_variance_from_nulls(np.zeros((2, 64)), plan, bins=plan.data_bins[:2])
    with pytest.raises(ValueError, match="no null"):
        noise_variance_from_nulls(np.zeros((2, 64)), FULL)
    with pytest.raises(ValueError, match="more than n_taps=40"):
        noise_variance_from_pilots(np.zeros((2, 64)), pattern, n_taps=40)
    assert "lmmse" in repr(ChannelEstimator(pattern, frequency="lmmse", snr_db=3.0,
                                            correlation=corr))
