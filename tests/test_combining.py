"""Tests of tonebank.combining and the diversity section of tonebank.theory.

Sources named beside each check:

* J. G. Proakis, *Digital Communications*, 4th ed., 2001, sec. 14.4
  (section numbers from memory, here and below): the binary diversity
  form P_b = p^L sum_k C(L-1+k, k) (1-p)^k with p = (1 - mu)/2 (BPSK,
  MRC), p = 1/(2 + g) (binary orthogonal FSK, square-law combining) and
  p = 1/(2(1 + g)) (DPSK);
* A. Goldsmith, *Wireless Communications*, 2005, sec. 7.2 (from memory):
  selection-combining outage (1 - exp(-x/g))^L, mean SNR gain
  sum_{k=1}^{L} 1/k, and the MRC SNR as a gamma variable;
* general-purpose references: scipy.special (erfc, betainc, gammainc),
  scipy.stats (gamma, expon), scipy.integrate.quad, numpy.

Monte-Carlo checks: fixed seeds; every trial draws its own channel, so
the error count is binomial and the theory must lie inside the 99.9 %
Wilson interval of the count (tonebank.metrics.ErrorCount.interval).
The trial counts give about 1000 errors or more per point, which makes
the interval about +-10 %: wide enough never to fail on a correct
combiner, narrow enough to catch a wrong weight, a lost branch or a
3 dB slip in the SNR convention (checked below: the wrong theory falls
outside).  The combiners are numpy code, identical on both backends;
the autouse backend fixture runs them twice anyway.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, special, stats

from tonebank import Constellation, combining, metrics, theory
from tonebank.combining import (
    combine_egc,
    combine_mrc,
    combine_noncoherent,
    combine_selection,
    exponential_correlation,
    imperfect_estimate,
    rayleigh_branches,
)
from tonebank.equalization import equalize_zf

CONFIDENCE = 0.999
BRANCHES = (1, 2, 4)


def assert_in_interval(errors: int, total: int, expected: float, what=""):
    count = metrics.ErrorCount(int(errors), int(total))
    low, high = count.interval(CONFIDENCE, method="wilson")
    assert low <= expected <= high, (what, count, expected, (low, high))
    return low, high


def cgauss(rng, shape, var=1.0):
    """Circular complex Gaussian samples of total variance ``var``."""
    return np.sqrt(np.asarray(var) / 2) * (rng.standard_normal(shape)
                                           + 1j * rng.standard_normal(shape))


def bpsk_link(rng, branches, ebn0_db, n, *, correlation=None, error_var=0.0,
              noise_scale=None):
    """One BPSK symbol per trial over L Rayleigh branches (Eb = Es = 1).

    Returns (x, y, h, h_hat, n0) with y of shape (L, n).
    """
    h = rayleigh_branches(branches if correlation is None else correlation, (n,), rng=rng)
    x = 1.0 - 2.0 * rng.integers(0, 2, n)
    n0 = 10 ** (-ebn0_db / 10)
    if noise_scale is not None:
        n0 = n0 * np.asarray(noise_scale, float)
    y = h * x + cgauss(rng, h.shape, np.reshape(n0, (-1, 1)) if np.ndim(n0) else n0)
    h_hat = h if error_var == 0 else imperfect_estimate(h, error_var, rng=rng)
    return x, y, h, h_hat, n0


# -- closed forms against independent computations ---------------------------------------


@pytest.mark.parametrize("branches", [1, 2, 3, 4, 8])
def test_binary_diversity_forms_equal_the_incomplete_beta(branches):
    # Proakis' sum p^L sum_k C(L-1+k, k)(1-p)^k is the regularised incomplete
    # beta function I_p(L, L) (for square-law BFSK: the probability that a
    # Gamma(L) variable scaled by 1+g falls below an unscaled one, whose
    # ratio gives a beta variable; derived here) -- scipy.special.betainc
    # as the independent reference.
    g = 10 ** (np.array([-5.0, 0.0, 5.0, 10.0, 20.0, 35.0]) / 10)
    db = 10 * np.log10(g)
    mu = np.sqrt(g / (1 + g))
    np.testing.assert_allclose(theory.ber_bpsk_mrc(db, branches),
                               special.betainc(branches, branches, (1 - mu) / 2),
                               rtol=1e-9)
    np.testing.assert_allclose(theory.ber_bfsk_square_law(db, branches),
                               special.betainc(branches, branches, 1 / (2 + g)), rtol=1e-11)
    np.testing.assert_allclose(theory.ber_dpsk_combined(db, branches),
                               special.betainc(branches, branches, 1 / (2 * (1 + g))),
                               rtol=1e-11)


@pytest.mark.parametrize("branches", [1, 2, 4])
def test_bpsk_mrc_equals_average_over_gamma_snr(branches):
    # Independent route: E[Q(sqrt(2 gamma))] with gamma ~ Gamma(L, g), the MRC
    # SNR of L i.i.d. Rayleigh branches (Goldsmith sec. 7.2, from memory),
    # integrated with scipy.integrate.quad over scipy.stats.gamma.pdf.
    for ebn0_db in (0.0, 8.0, 15.0):
        g = 10 ** (ebn0_db / 10)
        ref, _ = integrate.quad(
            lambda s: 0.5 * special.erfc(np.sqrt(s)) * stats.gamma.pdf(s, branches, scale=g),
            0, np.inf, epsabs=0, epsrel=1e-10, limit=200)
        assert theory.ber_bpsk_mrc(ebn0_db, branches) == pytest.approx(ref, rel=1e-7)


def test_bpsk_mrc_special_cases():
    g = 10 ** (np.array([0.0, 10.0, 30.0]) / 10)
    # One branch: P_b = (1 - sqrt(g/(1+g)))/2 (Proakis sec. 14.3, flat Rayleigh).
    np.testing.assert_allclose(theory.ber_bpsk_mrc(10 * np.log10(g), 1),
                               0.5 * (1 - np.sqrt(g / (1 + g))), rtol=1e-12)
    # High SNR: P_b ~ C(2L-1, L) (1/(4g))^L (Proakis sec. 14.4, from memory).
    for branches in (1, 2, 4):
        big = 1e5
        assert theory.ber_bpsk_mrc(50.0, branches) == pytest.approx(
            math.comb(2 * branches - 1, branches) / (4 * big) ** branches, rel=1e-3)
    assert theory.ber_bpsk_mrc(-np.inf, 3) == 0.5
    assert theory.ber_bpsk_mrc(np.inf, 3) == 0.0
    assert theory.ber_bpsk_mrc([1.0, 2.0], 2).shape == (2,)


def test_bpsk_mrc_correlated_limits():
    db = np.array([0.0, 7.0, 14.0])
    # The MGF integral with R = I reproduces the closed form (two methods).
    for branches in (1, 2, 4):
        np.testing.assert_allclose(
            theory.ber_bpsk_mrc(db, branches, correlation=np.eye(branches)),
            theory.ber_bpsk_mrc(db, branches), rtol=1e-8)
    # Fully correlated branches (R all ones) are one Rayleigh branch whose
    # SNR is L times larger (derived here: h_l all equal).
    np.testing.assert_allclose(theory.ber_bpsk_mrc(db, 3, correlation=np.ones((3, 3))),
                               theory.ber_bpsk_mrc(db + 10 * np.log10(3), 1), rtol=1e-8)
    # Correlation costs diversity: between the two limits.
    mid = theory.ber_bpsk_mrc(db, 3, correlation=exponential_correlation(3, 0.6))
    assert np.all(mid > theory.ber_bpsk_mrc(db, 3))
    assert np.all(mid < theory.ber_bpsk_mrc(db + 10 * np.log10(3), 1))


def test_bpsk_mrc_estimation_error_limit():
    # Effective SNR (1-eps) g / (1 + eps g) (derived in the docstring): the
    # floor at g -> inf is the perfect-estimate BER at (1-eps)/eps.
    eps = 0.05
    floor = theory.ber_bpsk_mrc(10 * np.log10((1 - eps) / eps), 2)
    assert theory.ber_bpsk_mrc(np.inf, 2, channel_error_var=eps) == pytest.approx(floor)
    assert theory.ber_bpsk_mrc(60.0, 2, channel_error_var=eps) == pytest.approx(floor,
                                                                                rel=1e-4)
    assert theory.ber_bpsk_mrc(5.0, 2, channel_error_var=0.0) == theory.ber_bpsk_mrc(5.0, 2)


@pytest.mark.parametrize("branches", [1, 2, 3, 5])
def test_bpsk_selection_matches_alternating_sum(branches):
    # Expanding the selection pdf L/g e^{-x/g}(1 - e^{-x/g})^{L-1} and
    # averaging the Rayleigh BPSK result over each term (derived here):
    # P_b = sum_{k=1}^{L} (-1)^{k+1} C(L, k) (1 - sqrt(g/(k+g)))/2 -- a second
    # method, fine at small L where the cancellation is harmless.
    for ebn0_db in (-3.0, 5.0, 12.0, 20.0):
        g = 10 ** (ebn0_db / 10)
        ref = sum((-1) ** (k + 1) * math.comb(branches, k) * 0.5 * (1 - math.sqrt(g / (k + g)))
                  for k in range(1, branches + 1))
        assert theory.ber_bpsk_selection(ebn0_db, branches) == pytest.approx(ref, rel=1e-8)
    np.testing.assert_allclose(theory.ber_bpsk_selection([0.0, 9.0], 1),
                               theory.ber_bpsk_mrc([0.0, 9.0], 1), rtol=1e-9)
    assert theory.ber_bpsk_selection(-np.inf, 2) == 0.5
    assert theory.ber_bpsk_selection(np.inf, 2) == 0.0


def test_outage_and_selection_gain_against_scipy():
    x_db = np.array([-10.0, 0.0, 5.0])
    for branches in (1, 2, 4):
        # Goldsmith sec. 7.2 (from memory): selection (1 - e^{-x/g})^L, i.e.
        # the CDF of the largest of L exponentials (scipy.stats.expon).
        np.testing.assert_allclose(
            theory.selection_outage(x_db, 10.0, branches),
            stats.expon.cdf(10 ** (x_db / 10), scale=10.0) ** branches, rtol=1e-12)
        # MRC: the SNR is Gamma(L, g) (scipy.stats.gamma).
        np.testing.assert_allclose(
            theory.mrc_outage(x_db, 10.0, branches),
            stats.gamma.cdf(10 ** (x_db / 10), branches, scale=10.0), rtol=1e-10)
    # Mean SNR gain of selection: the harmonic number (Goldsmith sec. 7.2).
    assert theory.selection_snr_gain(1) == 1.0
    assert theory.selection_snr_gain(4) == pytest.approx(25 / 12, rel=1e-15)
    assert theory.selection_outage([[0.0], [3.0]], [10.0, 20.0], 2).shape == (2, 2)


@pytest.mark.parametrize("call, match", [
    (lambda: theory.ber_bpsk_mrc(5.0, 0), "branches"),
    (lambda: theory.ber_bpsk_mrc(5.0, 2.0), "branches"),
    (lambda: theory.ber_bpsk_mrc(5.0, 2, correlation=np.eye(3)), "correlation"),
    (lambda: theory.ber_bpsk_mrc(5.0, 2, correlation=[[1, 2], [2, 1]]),
     "positive semidefinite"),
    (lambda: theory.ber_bpsk_mrc(5.0, 2, correlation=[[1, 0.5], [0.2, 1]]), "Hermitian"),
    (lambda: theory.ber_bpsk_mrc(5.0, 2, channel_error_var=1.0), "channel_error_var"),
    (lambda: theory.ber_bpsk_mrc(5.0, 2, correlation=np.eye(2), channel_error_var=0.1),
     "channel_error_var"),
    (lambda: theory.ber_bpsk_selection(np.nan, 2), "ebn0_db"),
    (lambda: theory.selection_outage([0.0, 1.0], [1.0, 2.0, 3.0], 2), "broadcast"),
    (lambda: theory.mrc_outage(np.inf, np.inf, 2), "undefined"),
    (lambda: theory.selection_snr_gain(2000), "branches"),
])
def test_theory_errors(call, match):
    with pytest.raises((TypeError, ValueError), match=match):
        call()


# -- Monte-Carlo against the closed forms ------------------------------------------------

#: Eb/N0 per branch for each L: BERs of about 1-2 %.
EBN0 = {1: 13.0, 2: 7.0, 4: 3.0}


@pytest.mark.parametrize("branches", BRANCHES)
def test_mrc_bpsk_monte_carlo(branches):
    # Proakis sec. 14.4: L-branch MRC of BPSK in i.i.d. Rayleigh fading.
    rng = np.random.default_rng(100 + branches)
    n = 80_000
    x, y, h, h_hat, n0 = bpsk_link(rng, branches, EBN0[branches], n)
    out = combine_mrc(y, h_hat, n0)
    errors = np.count_nonzero(np.sign(out.symbols.real) != x)
    expected = theory.ber_bpsk_mrc(EBN0[branches], branches)
    low, high = assert_in_interval(errors, n, expected, "mrc")
    # The test can tell: 3 dB off (a per-dimension / total noise slip) is outside.
    if branches > 1:
        wrong = theory.ber_bpsk_mrc(EBN0[branches] - 3.0, branches)
        assert not low <= wrong <= high


@pytest.mark.parametrize("branches", BRANCHES)
def test_selection_bpsk_monte_carlo(branches):
    # Selection BPSK: theory.ber_bpsk_selection (checked above against a sum
    # derived from Goldsmith's selection-SNR distribution).
    rng = np.random.default_rng(200 + branches)
    n = 80_000
    ebn0_db = EBN0[branches] + 2.0
    x, y, h, h_hat, n0 = bpsk_link(rng, branches, ebn0_db, n)
    out = combine_selection(y, h_hat, n0)
    errors = np.count_nonzero(np.sign(out.symbols.real) != x)
    assert_in_interval(errors, n, theory.ber_bpsk_selection(ebn0_db, branches), "selection")
    # The chosen branch is the strongest one.
    np.testing.assert_array_equal(out.branch, np.argmax(np.abs(h), axis=0))


@pytest.mark.parametrize("branches", BRANCHES)
def test_bfsk_square_law_monte_carlo(branches):
    # Proakis sec. 14.4: binary orthogonal FSK, square-law combining,
    # p = 1/(2 + g).  Matched-filter outputs r[l, m] = h_l sqrt(Eb) [m = sent]
    # + n[l, m], noise N0 per output.
    rng = np.random.default_rng(300 + branches)
    n = 60_000
    ebn0_db = {1: 15.0, 2: 9.0, 4: 5.0}[branches]
    n0 = 10 ** (-ebn0_db / 10)
    sent = rng.integers(0, 2, n)
    h = rayleigh_branches(branches, (n,), rng=rng)
    r = cgauss(rng, (branches, n, 2), n0)
    r[:, np.arange(n), sent] += h
    out = combine_noncoherent(r)
    errors = np.count_nonzero(out.decisions != sent)
    assert_in_interval(errors, n, theory.ber_bfsk_square_law(ebn0_db, branches), "bfsk")
    assert out.metrics.shape == (n, 2) and out.decisions.dtype == np.int64


@pytest.mark.parametrize("branches", BRANCHES)
def test_dpsk_post_detection_monte_carlo(branches):
    # Proakis sec. 14.4: DPSK with p = 1/(2(1 + g)); the fading is constant
    # over the reference and the current symbol; decision Re sum_l y_l[1]
    # conj(y_l[0]) (the combining is written here in numpy: the closed form
    # is the thing under test).
    rng = np.random.default_rng(400 + branches)
    n = 60_000
    ebn0_db = {1: 14.0, 2: 8.0, 4: 4.0}[branches]
    n0 = 10 ** (-ebn0_db / 10)
    bit = rng.integers(0, 2, n)
    h = rayleigh_branches(branches, (n,), rng=rng)
    y0 = h + cgauss(rng, h.shape, n0)
    y1 = h * (1.0 - 2.0 * bit) + cgauss(rng, h.shape, n0)
    decided = (np.sum(y1 * np.conj(y0), axis=0).real < 0).astype(int)
    errors = np.count_nonzero(decided != bit)
    assert_in_interval(errors, n, theory.ber_dpsk_combined(ebn0_db, branches), "dpsk")


@pytest.mark.parametrize("branches, rho", [(2, 0.8), (4, 0.6 + 0.3j)])
def test_mrc_correlated_monte_carlo(branches, rho):
    # Correlated branches: the eigenvalue/MGF integral of ber_bpsk_mrc
    # (Simon and Alouini, ch. 9, from memory), itself checked above against
    # the closed form at R = I and R = ones.
    rng = np.random.default_rng(500 + branches)
    n = 80_000
    corr = exponential_correlation(branches, rho)
    ebn0_db = EBN0[branches] + 1.0
    x, y, h, h_hat, n0 = bpsk_link(rng, branches, ebn0_db, n, correlation=corr)
    out = combine_mrc(y, h_hat, n0)
    errors = np.count_nonzero(np.sign(out.symbols.real) != x)
    expected = theory.ber_bpsk_mrc(ebn0_db, branches, correlation=corr)
    low, high = assert_in_interval(errors, n, expected, "correlated")
    assert not low <= theory.ber_bpsk_mrc(ebn0_db, branches) <= high   # i.i.d. is visibly off


@pytest.mark.parametrize("branches, eps", [(2, 0.1), (4, 0.05)])
def test_mrc_imperfect_estimates_monte_carlo(branches, eps):
    # Effective SNR (1 - eps) g / (1 + eps g) for estimates with orthogonal
    # error (derived in ber_bpsk_mrc's docstring); a QPSK stream checks the
    # returned noise variance too: |z - x|^2 / noise_var has mean 1 (it is
    # exponential given the estimates: mean 1, standard deviation 1, so the
    # sample mean of n values lies within 5/sqrt(n) of 1; Chebyshev-safe
    # margin, common practice, no source).
    rng = np.random.default_rng(600 + branches)
    n = 80_000
    ebn0_db = EBN0[branches] + 3.0
    x, y, h, h_hat, n0 = bpsk_link(rng, branches, ebn0_db, n, error_var=eps)
    out = combine_mrc(y, h_hat, n0, channel_error_var=eps)
    errors = np.count_nonzero(np.sign(out.symbols.real) != x)
    expected = theory.ber_bpsk_mrc(ebn0_db, branches, channel_error_var=eps)
    low, high = assert_in_interval(errors, n, expected, "imperfect")
    assert not low <= theory.ber_bpsk_mrc(ebn0_db, branches) <= high

    qpsk = Constellation.qpsk()
    s = qpsk.map(rng.integers(0, 2, 2 * n))
    yq = h * s + cgauss(rng, h.shape, n0)
    for combine in (combine_mrc, combine_egc, combine_selection):
        res = combine(yq, h_hat, n0, channel_error_var=eps)
        ratio = np.abs(res.symbols - s) ** 2 / res.noise_var
        assert abs(ratio.mean() - 1.0) < 5 / np.sqrt(n), combine.__name__


def test_conditional_error_probability_all_combiners():
    # Given the channel, each combiner's output is x + Gaussian noise of the
    # returned variance, so a BPSK decision errs with Q(sqrt(2 snr))
    # (scipy.special.erfc).  The count is a sum of independent Bernoulli
    # variables: within 5 standard deviations of the sum of their means.
    # Unequal noise on the three branches exercises the per-branch weights.
    rng = np.random.default_rng(700)
    n = 60_000
    x, y, h, h_hat, n0 = bpsk_link(rng, 3, 4.0, n, noise_scale=[0.5, 1.0, 3.0])
    for combine in (combine_mrc, combine_egc, combine_selection):
        out = combine(y, h_hat, n0)
        p = 0.5 * special.erfc(np.sqrt(out.snr))
        errors = np.count_nonzero(np.sign(out.symbols.real) != x)
        assert abs(errors - p.sum()) <= 5 * np.sqrt(np.sum(p * (1 - p))), combine.__name__


def test_mrc_beats_egc_beats_selection():
    # Post-combining SNR: MRC is the largest of any linear combiner
    # (Cauchy-Schwarz; Proakis sec. 14.4), and EGC >= selection does not
    # hold cell by cell, so only MRC >= both is checked per cell.
    rng = np.random.default_rng(710)
    x, y, h, h_hat, n0 = bpsk_link(rng, 4, 5.0, 2000, noise_scale=[1, 2, 0.5, 1])
    mrc = combine_mrc(y, h, n0).snr
    assert np.all(mrc >= combine_egc(y, h, n0).snr * (1 - 1e-12))
    assert np.all(mrc >= combine_selection(y, h, n0).snr * (1 - 1e-12))
    # MRC SNR is the sum of the branch SNRs (same source).
    np.testing.assert_allclose(mrc, np.sum(np.abs(h) ** 2 / np.reshape(n0, (-1, 1)), axis=0),
                               rtol=1e-12)


@pytest.mark.parametrize("branches", BRANCHES)
def test_selection_gain_and_outage_monte_carlo(branches):
    # Goldsmith sec. 7.2 (from memory): mean SNR after selection is
    # g sum 1/k; the largest of L unit exponentials has variance sum 1/k^2
    # (Renyi's representation, from memory), so the sample mean of n values
    # lies within 5 sqrt(sum 1/k^2 / n) of the mean.  Outage fractions of
    # selection and MRC against selection_outage and mrc_outage (Wilson).
    rng = np.random.default_rng(800 + branches)
    n = 50_000
    g_db = 10.0
    x, y, h, h_hat, n0 = bpsk_link(rng, branches, g_db, n)
    sel = combine_selection(y, h, n0).snr / 10.0
    spread = math.sqrt(sum(1 / k ** 2 for k in range(1, branches + 1)) / n)
    assert abs(sel.mean() - theory.selection_snr_gain(branches)) <= 5 * spread
    threshold_db = 3.0
    limit = 10 ** (threshold_db / 10)
    assert_in_interval(np.count_nonzero(sel * 10.0 < limit), n,
                       theory.selection_outage(threshold_db, g_db, branches), "sel outage")
    mrc = combine_mrc(y, h, n0).snr
    assert_in_interval(np.count_nonzero(mrc < limit), n,
                       theory.mrc_outage(threshold_db, g_db, branches), "mrc outage")


def test_noncoherent_mfsk_one_branch_monte_carlo():
    # Non-coherent orthogonal M-ary signalling in AWGN: P_s = sum_{n=1}^{M-1}
    # (-1)^{n+1} C(M-1, n) e^{-n g/(n+1)}/(n+1) (Proakis sec. 5.4, from
    # memory); averaged over a Rayleigh SNR of mean g (derived here):
    # sum (-1)^{n+1} C(M-1, n) / (1 + n + n g).
    rng = np.random.default_rng(900)
    m, n, g_db = 4, 60_000, 15.0
    g = 10 ** (g_db / 10)
    sent = rng.integers(0, m, n)
    r = cgauss(rng, (1, n, m), 1 / g)
    r[0, np.arange(n), sent] += rayleigh_branches(1, (n,), rng=rng)[0]
    expected = sum((-1) ** (k + 1) * math.comb(m - 1, k) / (1 + k + k * g)
                   for k in range(1, m))
    square = combine_noncoherent(r)
    assert_in_interval(np.count_nonzero(square.decisions != sent), n, expected, "4-FSK")
    # One branch: the envelope is the square root of the squared envelope,
    # the decisions are the same.
    env = combine_noncoherent(r, law="envelope")
    np.testing.assert_array_equal(env.decisions, square.decisions)
    np.testing.assert_allclose(env.metrics ** 2, square.metrics, rtol=1e-12)


# -- layout, dtypes and edge cases ----------------------------------------------------------


def grid_case(rng, dtype=np.complex128, branches=3, shape=(5, 16)):
    h = cgauss(rng, (branches,) + shape).astype(dtype)
    y = cgauss(rng, (branches,) + shape).astype(dtype)
    return y, h


@pytest.mark.parametrize("combine", [combine_mrc, combine_egc, combine_selection])
def test_one_branch_equals_zero_forcing(combine):
    # With one branch every coherent combiner is the one-tap ZF equaliser
    # (tonebank.equalization.equalize_zf).
    rng = np.random.default_rng(1)
    y, h = grid_case(rng, branches=1)
    out = combine(y, h, 0.2, channel_error_var=0.05, signal_power=2.0)
    ref = equalize_zf(y[0], h[0], 0.2, channel_error_var=0.05, signal_power=2.0)
    np.testing.assert_allclose(out.symbols, ref.symbols, rtol=1e-12)
    np.testing.assert_allclose(out.noise_var, ref.noise_var, rtol=1e-12)
    np.testing.assert_allclose(out.snr, 2.0 / ref.noise_var, rtol=1e-12)


@pytest.mark.parametrize("combine", [combine_mrc, combine_egc, combine_selection])
def test_axis_broadcast_and_per_branch_noise(combine):
    rng = np.random.default_rng(2)
    y, h = grid_case(rng)
    nv = np.array([0.1, 0.3, 0.2])
    ref = combine(y, h, nv)
    assert ref.symbols.shape == ref.noise_var.shape == (5, 16)
    # The branch axis elsewhere gives the same numbers.
    moved = combine(np.moveaxis(y, 0, 2), np.moveaxis(h, 0, 2), nv, axis=-1)
    np.testing.assert_allclose(moved.symbols, ref.symbols, rtol=1e-12)
    np.testing.assert_allclose(moved.noise_var, ref.noise_var, rtol=1e-12)
    # A full-size noise array equals the per-branch form.
    full = combine(y, h, np.broadcast_to(nv[:, None, None], y.shape))
    np.testing.assert_allclose(full.symbols, ref.symbols, rtol=1e-12)
    # A channel constant over the symbols broadcasts.
    hb = h[:, :1, :]
    a = combine(y, hb, nv)
    b = combine(y, np.broadcast_to(hb, y.shape).copy(), nv)
    np.testing.assert_allclose(a.symbols, b.symbols, rtol=1e-12)
    np.testing.assert_allclose(a.noise_var, b.noise_var, rtol=1e-12)
    # Per-bin noise (shape (n_bins,), not L) broadcasts over branches and symbols.
    per_bin_nv = np.linspace(0.1, 0.5, 16)
    per_bin = combine(y, h, per_bin_nv)
    full = combine(y, h, np.broadcast_to(per_bin_nv, y.shape).copy())
    np.testing.assert_allclose(per_bin.noise_var, full.noise_var, rtol=1e-12)
    np.testing.assert_allclose(per_bin.symbols, full.symbols, rtol=1e-12)
    # Everything at once: branch axis in the middle, broadcast channel,
    # per-cell noise and error variance, against a branch-by-branch loop
    # written here from the formulas in the docstrings.
    yb = np.moveaxis(y, 0, 1)                            # (5, 3, 16)
    hb = np.moveaxis(h, 0, 1)[:1]                        # (1, 3, 16)
    nv_cell = 0.1 + rng.random((5, 3, 16))
    ev = 0.05
    got = combine(yb, hb, nv_cell, axis=1, channel_error_var=ev, signal_power=2.0)
    s2 = nv_cell + ev * 2.0
    hf = np.broadcast_to(hb, yb.shape)
    if combine is combine_mrc:
        gain = np.sum(np.abs(hf) ** 2 / s2, axis=1)
        want_z = np.sum(np.conj(hf) * yb / s2, axis=1) / gain
        want_v = 1 / gain
    elif combine is combine_egc:
        amp = np.sum(np.abs(hf), axis=1)
        want_z = np.sum(np.exp(-1j * np.angle(hf)) * yb, axis=1) / amp
        want_v = np.sum(s2, axis=1) / amp ** 2
    else:
        pick = np.argmax(np.abs(hf) ** 2 / s2, axis=1)[:, None]
        want_z = (np.take_along_axis(yb, pick, 1) / np.take_along_axis(hf, pick, 1))[:, 0]
        want_v = (np.take_along_axis(s2, pick, 1)
                  / np.abs(np.take_along_axis(hf, pick, 1)) ** 2)[:, 0]
        np.testing.assert_array_equal(got.branch, pick[:, 0])
    np.testing.assert_allclose(got.symbols, want_z, rtol=1e-12)
    np.testing.assert_allclose(got.noise_var, want_v, rtol=1e-12)


@pytest.mark.parametrize("combine", [combine_mrc, combine_egc, combine_selection])
def test_complex64_kept(combine):
    rng = np.random.default_rng(3)
    y, h = grid_case(rng, np.complex64)
    out = combine(y, h, 0.1)
    assert out.symbols.dtype == np.complex64 and out.noise_var.dtype == np.float32
    assert out.snr.dtype == np.float32
    ref = combine(y.astype(np.complex128), h.astype(np.complex128), 0.1)
    assert ref.symbols.dtype == np.complex128
    np.testing.assert_allclose(out.symbols, ref.symbols, rtol=2e-5, atol=2e-5)
    # Mixed precision computes in complex128.
    assert combine(y, h.astype(np.complex128), 0.1).symbols.dtype == np.complex128


@pytest.mark.parametrize("combine", [combine_mrc, combine_egc, combine_selection])
def test_zero_channel_cells(combine):
    h = np.array([[0.0, 1.0], [0.0, 0.0]], complex)
    y = np.array([[0.3, 1.0], [0.2j, 5.0]])
    out = combine(y, h, 0.1)
    assert out.symbols[0] == 0 and np.isinf(out.noise_var[0]) and out.snr[0] == 0
    assert out.symbols[1] == pytest.approx(1.0) and out.noise_var[1] == pytest.approx(0.1)


@given(branches=st.integers(1, 6), cells=st.integers(1, 9), seed=st.integers(0, 2**31),
       phase=st.floats(-np.pi, np.pi))
@settings(max_examples=25)
def test_combiners_invariant_to_branch_order_and_phase(branches, cells, seed, phase):
    # Properties of the definitions (no outside source needed): rotating a
    # branch's received values and its channel by the same phase, or
    # reordering the branches, changes nothing (selection: the same values,
    # the branch index permuted).
    rng = np.random.default_rng(seed)
    y = cgauss(rng, (branches, cells))
    h = cgauss(rng, (branches, cells))
    nv = 0.1 + rng.random(branches)
    rot = np.exp(1j * phase * np.arange(branches))[:, None]
    order = rng.permutation(branches)
    for combine in (combine_mrc, combine_egc, combine_selection):
        ref = combine(y, h, nv)
        turned = combine(y * rot, h * rot, nv)
        moved = combine(y[order], h[order], nv[order])
        for other in (turned, moved):
            np.testing.assert_allclose(other.symbols, ref.symbols, rtol=1e-9, atol=1e-12)
            np.testing.assert_allclose(other.noise_var, ref.noise_var, rtol=1e-9)
        if combine is combine_selection:
            np.testing.assert_array_equal(order[moved.branch], ref.branch)


def test_llr_after_mrc_use_the_combined_noise():
    # The returned noise variance is what Constellation.llr takes: the LLRs
    # equal those of a single channel carrying the same symbols at that
    # noise (max-log, tonebank.Constellation).
    rng = np.random.default_rng(4)
    qam = Constellation.qam(16)
    bits = rng.integers(0, 2, 4 * 2 * 64)
    s = qam.map(bits).reshape(2, 64)
    h = rayleigh_branches(2, (2, 64), rng=rng)
    y = h * s + cgauss(rng, h.shape, 0.05)
    out = combine_mrc(y, h, 0.05)
    llr = qam.llr(out.symbols, out.noise_var)
    assert llr.shape == (2, 64 * 4)
    np.testing.assert_array_equal(qam.demap(out.symbols), (llr < 0).astype(bits.dtype))


def test_noncoherent_layout_and_dtype():
    rng = np.random.default_rng(5)
    r = cgauss(rng, (3, 4, 7, 8)).astype(np.complex64)
    out = combine_noncoherent(r, law="envelope")
    assert out.metrics.shape == (4, 7, 8) and out.metrics.dtype == np.float32
    assert out.decisions.shape == (4, 7)
    moved = combine_noncoherent(np.moveaxis(r, 0, 2), law="envelope", axis=2)
    np.testing.assert_array_equal(moved.decisions, out.decisions)
    ref = np.abs(r.astype(np.complex128)).sum(axis=0)
    np.testing.assert_allclose(out.metrics, ref, rtol=1e-5)


# -- simulation helpers ----------------------------------------------------------------------


def test_rayleigh_branches_covariance():
    # Sample covariance against R: each entry's estimate has standard
    # deviation at most sqrt(R_ii R_jj / n); 5 of them is the margin.
    corr = exponential_correlation(3, 0.7 * np.exp(0.4j))
    n = 40_000
    h = rayleigh_branches(corr, (n,), rng=6)
    sample = h @ h.conj().T / n
    assert np.max(np.abs(sample - corr)) < 5 / np.sqrt(n)
    assert np.allclose(corr, corr.conj().T)
    # Same seed, same draws; shapes; complex64.
    np.testing.assert_array_equal(rayleigh_branches(2, (3, 4), rng=9),
                                  rayleigh_branches(2, (3, 4), rng=9))
    assert rayleigh_branches(2, 5, rng=1).shape == (2, 5)
    assert rayleigh_branches(2, rng=1).shape == (2,)
    assert rayleigh_branches(2, (3,), rng=1, dtype=np.complex64).dtype == np.complex64
    # A singular (fully correlated) matrix draws identical branches.
    same = rayleigh_branches(np.ones((3, 3)), (10,), rng=2)
    np.testing.assert_allclose(same[1], same[0], rtol=0, atol=1e-7)


def test_rayleigh_envelope_distribution():
    # |h| of a unit-power branch is Rayleigh with scale 1/sqrt(2)
    # (scipy.stats.rayleigh); a Kolmogorov-Smirnov test at a fixed seed.
    h = rayleigh_branches(1, (20_000,), rng=7)[0]
    assert stats.kstest(np.abs(h), stats.rayleigh(scale=np.sqrt(0.5)).cdf).pvalue > 1e-3


@pytest.mark.parametrize("model", ["orthogonal", "additive"])
def test_imperfect_estimate_moments(model):
    # orthogonal: E|h - h_hat|^2 = eps and E[(h - h_hat) conj(h_hat)] = 0;
    # additive: the same error variance and E[(h_hat - h) conj(h)] = 0.
    # Sample moments of n values, 5-sigma margins (variance of each product
    # at most P^2).
    n, eps, power = 60_000, 0.2, 2.0
    rng = np.random.default_rng(8)
    h = np.sqrt(power) * cgauss(rng, (n,))
    h_hat = imperfect_estimate(h, eps, power=power, model=model, rng=rng)
    e = h - h_hat
    tol = 5 * power / np.sqrt(n)
    assert abs(np.mean(np.abs(e) ** 2) - eps) < tol
    other = h_hat if model == "orthogonal" else h
    assert abs(np.mean(e * np.conj(other))) < tol
    if model == "orthogonal":
        assert abs(np.mean(np.abs(h_hat) ** 2) - (power - eps)) < tol
    assert imperfect_estimate(h.astype(np.complex64), eps, power=power,
                              rng=1).dtype == np.complex64


@pytest.mark.parametrize("call, match", [
    (lambda: combine_mrc(np.ones((2, 3)), np.ones((3, 3)), 0.1), "channel"),
    (lambda: combine_mrc(np.ones((2, 3)), np.ones(3), 0.1), "dimension"),
    (lambda: combine_mrc(np.ones((2, 3)), np.ones((2, 3)), 0.0), "noise_var"),
    (lambda: combine_mrc(np.ones((2, 3)), np.ones((2, 3)), 1j), "noise_var"),
    (lambda: combine_mrc(np.ones((2, 3)), np.ones((2, 3)), np.ones((4, 3))), "noise_var"),
    (lambda: combine_mrc(np.ones((2, 3)), np.ones((2, 3)), np.ones((2, 3, 1))),
     "noise_var"),
    (lambda: combine_mrc(np.ones((2, 3)), np.ones((2, 3)), np.ones(4)), "noise_var"),
    (lambda: combine_egc(np.ones((2, 3)), np.ones((2, 3)), 0.1, channel_error_var=-1),
     "channel_error_var"),
    (lambda: combine_selection(np.ones((2, 3)), np.ones((2, 3)), 0.1, axis=2), "axis"),
    (lambda: combine_selection(np.ones((2, 3)), np.ones((2, 3)), 0.1, axis=1.0), "axis"),
    (lambda: combine_mrc(np.ones((2, 3)), np.ones((2, 3)), 0.1, signal_power=0),
     "signal_power"),
    (lambda: combine_mrc(np.array([[np.nan, 1]]), np.ones((1, 2)), 0.1), "received"),
    (lambda: combine_mrc(np.ones(2), np.array(["a", "b"]), 0.1), "channel"),
    (lambda: combine_mrc(1.0, 1.0, 0.1), "received"),
    (lambda: combine_noncoherent(np.ones((2, 3)), law="cubic"), "law"),
    (lambda: combine_noncoherent(np.ones((2, 3)), axis=-1), "axis"),
    (lambda: combine_noncoherent(np.ones((2, 1))), "candidate"),
    (lambda: combine_noncoherent(np.ones(3)), "outputs"),
    (lambda: exponential_correlation(3, 1.5), "rho"),
    (lambda: exponential_correlation(0, 0.5), "branches"),
    (lambda: rayleigh_branches([[1, 2], [2, 1]]), "positive semidefinite"),
    (lambda: rayleigh_branches([[1, 0.5], [0, 1]]), "Hermitian"),
    (lambda: rayleigh_branches(np.ones((2, 3))), "square"),
    (lambda: rayleigh_branches(2, (-1,)), "shape"),
    (lambda: rayleigh_branches(2, dtype=np.float64), "dtype"),
    (lambda: rayleigh_branches(2, rng="seed"), "rng"),
    (lambda: imperfect_estimate(np.ones(3), 1.0), "error_var"),
    (lambda: imperfect_estimate(np.ones(3), -0.1, model="additive"), "error_var"),
    (lambda: imperfect_estimate(np.ones(3), 0.1, model="biased"), "model"),
    (lambda: imperfect_estimate(np.ones(3), np.ones(4) * 0.1), "error_var"),
    (lambda: imperfect_estimate(np.ones(3), 0.1, power=0.0, model="additive"), "power"),
])
def test_errors_name_the_argument(call, match):
    with pytest.raises((TypeError, ValueError), match=match):
        call()


def test_public_names():
    import tonebank

    assert tonebank.combining is combining
    for name in combining.__all__:
        assert hasattr(combining, name)
    for name in ("ber_bpsk_mrc", "ber_bpsk_selection", "ber_bfsk_square_law",
                 "ber_dpsk_combined", "mrc_outage", "selection_outage",
                 "selection_snr_gain"):
        assert name in theory.__all__
