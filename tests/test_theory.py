"""Tests of tonebank.theory against scipy and independent brute-force computations.

Sources named beside each check:

* scipy.special.erfc and scipy.stats.norm (reference implementations of
  the Gaussian tail);
* brute force written here: enumeration of the decision regions of
  Gray-coded PAM with scipy.stats.norm probabilities (independent of the
  Cho-Yoon closed form), and 2-D numerical integration of the complex
  Gaussian density over the M-PSK decision sectors with
  scipy.integrate.dblquad (independent of Craig's and Pawula's integrals);
* textbook closed forms and approximations, named where used.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, special, stats

from tonebank import theory


def gray(j):
    return j ^ (j >> 1)


def popcount(x) -> int:
    return bin(int(x)).count("1")


# -- Q function and BPSK -----------------------------------------------------------------


def test_qfunc_against_scipy():
    x = np.array([-3.0, -0.5, 0.0, 0.5, 1.0, 3.0, 6.0, 10.0, 20.0, 37.0])
    q = theory.qfunc(x)
    # scipy.special.erfc: Q(x) = erfc(x / sqrt 2) / 2 (definition).
    np.testing.assert_allclose(q, 0.5 * special.erfc(x / np.sqrt(2)), rtol=1e-14)
    # scipy.stats.norm.sf: the upper tail of the standard normal, an
    # independent implementation (relative accuracy kept far into the tail).
    np.testing.assert_allclose(q, stats.norm.sf(x), rtol=1e-12)
    # Tabulated values of the standard normal distribution (from memory):
    # Q(1) = 0.15865525393..., Q(3) = 1.3498980316e-3.
    assert float(theory.qfunc(1.0)) == pytest.approx(0.158655253931457, rel=1e-12)
    assert float(theory.qfunc(3.0)) == pytest.approx(1.349898031630095e-3, rel=1e-10)
    assert theory.qfunc(np.inf) == 0.0 and theory.qfunc(-np.inf) == 1.0


def test_ber_bpsk_tabulated_point():
    # P_b = Q(sqrt(2 Eb/N0)) (Proakis & Salehi, Digital Communications, 5th
    # ed., sec. 4.2) evaluated with scipy.stats.norm.sf; the familiar
    # figure "BER 1e-5 near 9.6 dB" is common practice, no source.
    for ebn0_db in (0.0, 4.0, 9.6, 12.0):
        reference = stats.norm.sf(np.sqrt(2 * 10 ** (ebn0_db / 10)))
        assert theory.ber_bpsk(ebn0_db) == pytest.approx(reference, rel=1e-12)
    assert 0.9e-5 < theory.ber_bpsk(9.6) < 1.1e-5
    assert theory.ber_bpsk(-np.inf) == 0.5 and theory.ber_bpsk(np.inf) == 0.0


def test_gray_qpsk_and_4qam_equal_bpsk():
    # Gray QPSK = two BPSK axes at the same Eb/N0 (definition); Cho-Yoon
    # with I = J = 2 reduces to Q(sqrt(2 Eb/N0)).
    snr = np.linspace(-5, 15, 21)
    np.testing.assert_allclose(theory.ber_qpsk(snr), theory.ber_bpsk(snr), rtol=0)
    np.testing.assert_allclose(theory.ber_qam_gray(4, snr), theory.ber_bpsk(snr), rtol=1e-14)
    np.testing.assert_allclose(theory.ber_mpsk_gray(4, snr), theory.ber_bpsk(snr), rtol=1e-14)


# -- Gray square QAM: Cho-Yoon against brute force ----------------------------------------


def pam_by_enumeration(levels: int, sigma: float):
    """Per-bit error probability and symbol error probability of Gray PAM.

    Levels at the odd integers -(L-1)..(L-1), carrying the reflected Gray
    code of their index; decisions at the even integers between them.
    Every (sent level, decided region) pair is enumerated with Gaussian
    probabilities from scipy.stats.norm (sf on the upper side, cdf on the
    lower side, so no probability is a difference of numbers near 1).
    """
    nbits = levels.bit_length() - 1
    values = 2 * np.arange(levels) - (levels - 1)
    edges = np.concatenate([[-np.inf], values[:-1] + 1.0, [np.inf]])
    # prob[j, r]: P(decide region r | level j sent)
    lo = (edges[None, :-1] - values[:, None]) / sigma
    hi = (edges[None, 1:] - values[:, None]) / sigma
    with np.errstate(invalid="ignore"):  # inf - inf in the unused branches
        upper = stats.norm.sf(lo) - stats.norm.sf(hi)
        lower = stats.norm.cdf(hi) - stats.norm.cdf(lo)
        middle = 1.0 - stats.norm.cdf(lo) - stats.norm.sf(hi)
    prob = np.where(lo >= 0, upper, np.where(hi <= 0, lower, middle))
    np.fill_diagonal(prob, 0.0)  # correct decisions carry no error
    codes = gray(np.arange(levels))
    diff = codes[:, None] ^ codes[None, :]
    per_bit = np.array([np.sum(prob * ((diff >> (nbits - 1 - b)) & 1))
                        for b in range(nbits)])
    return per_bit / levels, prob.sum() / levels


@pytest.mark.parametrize("m", [16, 64, 256, 1024])
def test_cho_yoon_equals_enumeration(m):
    # K. Cho and D. Yoon, IEEE Trans. Commun. 50(7), 2002: exact per-bit
    # and average BER of Gray square QAM, against the region enumeration.
    levels = math.isqrt(m)
    k = int(math.log2(m))
    es = 2 * (m - 1) / 3            # mean energy of the unit-free grid
    for ebn0_db in (-2.0, 3.0, 8.0, 14.0, 20.0):
        n0 = es / (k * 10 ** (ebn0_db / 10))
        per_bit, _ = pam_by_enumeration(levels, math.sqrt(n0 / 2))
        expected = np.concatenate([per_bit, per_bit])  # I bits then Q bits
        got = theory.ber_qam_gray(m, ebn0_db, per_bit=True)
        np.testing.assert_allclose(got, expected, rtol=1e-10)
        assert theory.ber_qam_gray(m, ebn0_db) == pytest.approx(expected.mean(), rel=1e-10)


@pytest.mark.parametrize("m", [4, 16, 64, 256, 1024, 4096])
def test_ser_qam_equals_enumeration(m):
    # Square QAM errs unless both PAM axes are right: 1 - (1 - p)^2, with p
    # from the region enumeration.
    levels = math.isqrt(m)
    for esn0_db in (0.0, 10.0, 25.0):
        n0 = (2 * (m - 1) / 3) / 10 ** (esn0_db / 10)
        _, p = pam_by_enumeration(levels, math.sqrt(n0 / 2))
        assert theory.ser_qam(m, esn0_db) == pytest.approx(p * (2 - p), rel=1e-10)


def test_16qam_closed_form_and_approximation():
    # Exact Gray 16-QAM (I = J = 4 in Cho-Yoon, written out):
    # 3/8 erfc(x) + 1/4 erfc(3x) - 1/8 erfc(5x), x = sqrt(0.4 Eb/N0).
    snr_db = np.linspace(-4, 20, 13)
    x = np.sqrt(0.4 * 10 ** (snr_db / 10))
    exact = 3 / 8 * special.erfc(x) + 1 / 4 * special.erfc(3 * x) - 1 / 8 * special.erfc(5 * x)
    np.testing.assert_allclose(theory.ber_qam_gray(16, snr_db), exact, rtol=1e-13)
    # The well-known nearest-neighbour approximation
    # P_b ~ (4/k)(1 - 1/sqrt M) Q(sqrt(3 k Eb/N0 / (M - 1))), i.e. 3/8 erfc(x)
    # for 16-QAM (e.g. Proakis & Salehi, 5th ed., sec. 4.3; from memory):
    # agreement at high SNR, where the erfc(3x) terms are negligible.
    for m in (16, 64, 256, 1024):
        k = math.log2(m)
        for ebn0_db in (24.0, 30.0):
            gamma = 10 ** (ebn0_db / 10)
            approx = 4 / k * (1 - 1 / math.sqrt(m)) * stats.norm.sf(
                math.sqrt(3 * k * gamma / (m - 1)))
            if m == 16:
                assert approx == pytest.approx(3 / 8 * special.erfc(math.sqrt(0.4 * gamma)),
                                               rel=1e-12)
            assert theory.ber_qam_gray(m, ebn0_db) == pytest.approx(approx, rel=1e-6)


def test_qam_limits_and_shapes():
    snr = np.array([[-np.inf, 0.0, 10.0], [20.0, 30.0, np.inf]])
    for m in (4, 64, 4096):
        ber = theory.ber_qam_gray(m, snr)
        assert ber.shape == (2, 3) and ber.dtype == np.float64
        assert ber[0, 0] == pytest.approx(0.5, abs=1e-15)  # guessing
        assert ber[1, 2] == 0.0
        assert np.all(np.diff(ber.reshape(-1)) <= 0)      # monotone in SNR
        assert theory.ber_qam_gray(m, snr, per_bit=True).shape == (2, 3, int(math.log2(m)))
    assert isinstance(theory.ber_qam_gray(16, 5.0), np.float64)
    assert np.ndim(theory.ser_qam(16, 5.0)) == 0


# -- M-PSK -----------------------------------------------------------------------------------


def psk_sector_by_dblquad(m: int, esn0: float, step: int) -> float:
    """P(decide the point `step` sectors away), by 2-D integration.

    Sent point sqrt(Es) at phase 0, N0 = 1; the density of y in polar
    coordinates (r, theta) is r / pi * exp(-|y - sqrt(Es)|^2), integrated
    with scipy.integrate.dblquad over the sector.
    """
    a = math.sqrt(esn0)

    def density(r, theta):
        return r / math.pi * math.exp(-(r * r - 2 * r * a * math.cos(theta) + a * a))

    lo, hi = (2 * step - 1) * math.pi / m, (2 * step + 1) * math.pi / m
    value, _ = integrate.dblquad(density, lo, hi, 0.0, a + 40.0, epsabs=1e-15,
                                 epsrel=1e-11)
    return value


@pytest.mark.parametrize("m", [8, 16])
def test_mpsk_against_2d_integration(m):
    # Craig's (MILCOM 1991) SER integral and the Pawula-Rice-Roberts (1982)
    # phase distribution, as implemented, against brute-force 2-D
    # integration of the Gaussian over the decision sectors.
    k = int(math.log2(m))
    j = np.arange(m)
    for esn0_db in (5.0, 15.0):
        esn0 = 10 ** (esn0_db / 10)
        sectors = np.array([psk_sector_by_dblquad(m, esn0, s) for s in range(m // 2 + 1)])
        sectors = np.concatenate([sectors, sectors[1:m // 2][::-1]])  # symmetry
        assert theory.ser_mpsk(m, esn0_db) == pytest.approx(1 - sectors[0], rel=1e-8)
        # Bits in error between Gray labels `step` apart, averaged over the sent point.
        weights = [np.mean([popcount(gray(i) ^ gray((i + s) % m)) for i in j])
                   for s in range(m)]
        ber = float(np.dot(weights, sectors)) / k
        ebn0_db = esn0_db - 10 * math.log10(k)
        assert theory.ber_mpsk_gray(m, ebn0_db) == pytest.approx(ber, rel=1e-7)


def test_mpsk_small_orders_closed_forms():
    # M = 2: Q(sqrt(2 Es/N0)); M = 4: 2Q(sqrt(Es/N0)) - Q(sqrt(Es/N0))^2
    # (QPSK as two independent BPSK axes); both also by the general integral.
    snr = np.array([-3.0, 4.0, 11.0])
    g = 10 ** (snr / 10)
    np.testing.assert_allclose(theory.ser_mpsk(2, snr), stats.norm.sf(np.sqrt(2 * g)),
                               rtol=1e-12)
    q = stats.norm.sf(np.sqrt(g))
    np.testing.assert_allclose(theory.ser_mpsk(4, snr), 2 * q - q * q, rtol=1e-12)
    np.testing.assert_allclose(theory.ser_mpsk(4, snr), theory.ser_qam(4, snr), rtol=1e-12)
    for gamma, expected in zip(g, 2 * q - q * q):
        assert 2 * theory._phase_tail(math.pi / 4, gamma) == pytest.approx(expected, rel=1e-10)


def test_mpsk_approximations_at_high_snr():
    # Common nearest-neighbour approximations (e.g. Proakis & Salehi, 5th
    # ed., sec. 4.3; from memory): P_s ~ 2 Q(sqrt(2 Es/N0) sin(pi/M)) and,
    # with Gray labels, P_b ~ P_s / log2 M, both tight at high SNR.
    for m in (8, 16, 32):
        k = math.log2(m)
        esn0_db = 10 * math.log10(k) + 22.0
        es = 10 ** (esn0_db / 10)
        approx_ser = 2 * stats.norm.sf(math.sqrt(2 * es) * math.sin(math.pi / m))
        assert theory.ser_mpsk(m, esn0_db) == pytest.approx(approx_ser, rel=1e-3)
        assert theory.ber_mpsk_gray(m, 22.0) == pytest.approx(approx_ser / k, rel=2e-3)
    assert theory.ser_mpsk(8, -np.inf) == pytest.approx(7 / 8, rel=1e-12)
    assert theory.ber_mpsk_gray(8, -np.inf) == pytest.approx(0.5, rel=1e-12)
    assert theory.ser_mpsk(8, np.inf) == 0.0
    assert theory.ser_mpsk(8, np.zeros((2, 2))).shape == (2, 2)


# -- SNR conversions ----------------------------------------------------------------------------


def test_snr_conversions():
    # Es = k R Eb (definition): 16-QAM adds 10 log10(4) = 6.0206 dB.
    assert theory.ebn0_to_esn0_db(10.0, 4) == pytest.approx(10 + 10 * math.log10(4), rel=1e-15)
    assert theory.ebn0_to_esn0_db(10.0, 4, code_rate=0.5) == pytest.approx(
        10 + 10 * math.log10(2), rel=1e-15)
    snr = np.array([[0.0, 3.5], [-2.0, np.inf]])
    back = theory.esn0_to_ebn0_db(theory.ebn0_to_esn0_db(snr, 6, code_rate=3 / 4), 6,
                                  code_rate=3 / 4)
    np.testing.assert_allclose(back, snr, rtol=1e-14)
    assert back.shape == (2, 2)


# -- errors ------------------------------------------------------------------------------------


def test_errors_name_the_argument():
    with pytest.raises(TypeError, match="x must be real"):
        theory.qfunc("1")
    with pytest.raises(TypeError, match="x must be real"):
        theory.qfunc(1j)
    with pytest.raises(ValueError, match="x holds NaN"):
        theory.qfunc([0.0, np.nan])
    with pytest.raises(ValueError, match="ebn0_db holds NaN"):
        theory.ber_bpsk(np.nan)
    with pytest.raises(TypeError, match="ebn0_db"):
        theory.ber_qam_gray(16, "10")
    with pytest.raises(ValueError, match="esn0_db"):
        theory.ser_qam(16, [np.nan])
    with pytest.raises(ValueError, match="esn0_db"):
        theory.ser_mpsk(8, np.nan)
    for bad in (2, 8, 32, 0, 1, 3, 2**22):
        with pytest.raises(ValueError, match="m="):
            theory.ber_qam_gray(bad, 10.0)
        with pytest.raises(ValueError, match="m="):
            theory.ser_qam(bad, 10.0)
    for bad in (0, 1, 3, 12, 2**17):
        with pytest.raises(ValueError, match="m="):
            theory.ser_mpsk(bad, 10.0)
        with pytest.raises(ValueError, match="m="):
            theory.ber_mpsk_gray(bad, 10.0)
    for bad in (16.0, "16", True):
        with pytest.raises(TypeError, match="m must be an integer"):
            theory.ber_qam_gray(bad, 10.0)
        with pytest.raises(TypeError, match="m must be an integer"):
            theory.ser_mpsk(bad, 10.0)
    for bad in (0, -2, np.inf, np.nan):
        with pytest.raises(ValueError, match="bits_per_symbol"):
            theory.ebn0_to_esn0_db(1.0, bad)
    with pytest.raises(TypeError, match="bits_per_symbol"):
        theory.esn0_to_ebn0_db(1.0, "4")
    for bad in (0.0, -0.5, 1.5, np.nan):
        with pytest.raises(ValueError, match="code_rate"):
            theory.ebn0_to_esn0_db(1.0, 4, code_rate=bad)
    with pytest.raises(TypeError, match="code_rate"):
        theory.esn0_to_ebn0_db(1.0, 4, code_rate=None)
    with pytest.raises(ValueError, match="esn0_db"):
        theory.esn0_to_ebn0_db(np.nan, 4)


# -- ber_qam_mrc: the fading average of the Gray QAM error rate ------------------------


@pytest.mark.parametrize("branches", [1, 2, 4])
def test_qam_mrc_reduces_to_bpsk_closed_form_for_qpsk(branches):
    # Gray QPSK is two BPSK bits: its MRC error rate is Proakis' closed form for
    # BPSK with L-branch MRC (Proakis & Salehi, Digital Communications, 5th ed.,
    # the L-branch MRC error probability, from memory; tonebank.theory.ber_bpsk_mrc).
    ebn0 = np.array([0.0, 10.0, 20.0, 30.0])
    got = theory.ber_qam_mrc(4, ebn0, branches)
    assert np.allclose(got, theory.ber_bpsk_mrc(ebn0, branches), rtol=1e-8, atol=0)


def test_qam_mrc_matches_monte_carlo_average_over_rayleigh_draws():
    # Outside reference: the definition itself, averaged over scipy.stats gamma
    # draws of the combined SNR (shape L, mean L * Eb/N0); 200 000 draws give
    # a relative standard error below 1 %, the tolerance is 5 %.
    from scipy import stats
    draws = stats.gamma(a=2, scale=10 ** 1.2).rvs(200_000, random_state=3)
    mc = np.mean(theory.ber_qam_gray(16, 10 * np.log10(draws)))
    assert float(theory.ber_qam_mrc(16, 12.0, 2)) == pytest.approx(mc, rel=0.05)
