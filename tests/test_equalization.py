"""One-tap ZF and MMSE equalisation: outputs, noise variances, LLR scaling.

Sources named beside each check:

* The MMSE one-tap coefficient g = h^* / (|h|^2 + sigma^2/E_s) and its
  error E|gy - x|^2 = E_s (sigma^2/E_s) / (|h|^2 + sigma^2/E_s) (J. G.
  Proakis, Digital Communications, section 10.2, MMSE linear
  equalisation reduced to one tap; from memory); the bias-free output
  z / b, b = |h|^2 / (|h|^2 + sigma^2/E_s), with noise sigma^2 / |h|^2.
* The consistency ("symmetry") condition of Gaussian LLRs, variance =
  2 x mean (T. Richardson and R. Urbanke, Modern Coding Theory, 2008;
  from memory): LLRs computed by Constellation.llr with the reported
  noise variance are correctly scaled exactly when it holds.

Monte-Carlo: fixed seeds; where the statistic is a sum of independent
Exp(1) variables, the exact gamma bound at 99.9 % (scipy.stats.gamma);
elsewhere a CLT bound of 3.9 standard errors (99.99 %).
"""

import numpy as np
import pytest
from scipy import stats

from tonebank import Constellation
from tonebank.equalization import Equalized, equalize_mmse, equalize_zf

Z = 3.9
CONF = 0.999
H = np.array([1.0, 0.3 - 0.4j, 2j, 0.1, 1.5 + 0.5j])      # fixed channel per column


def cn(rng, shape, var=1.0):
    return np.sqrt(var / 2) * (rng.standard_normal(shape) + 1j * rng.standard_normal(shape))


def qpsk(rng, shape):
    return (rng.choice([-1.0, 1.0], shape) + 1j * rng.choice([-1.0, 1.0], shape)) / np.sqrt(2)


def gamma_ok(values):
    """Mean of independent Exp(1) values inside its exact CONF bounds."""
    m = values.size
    a = (1 - CONF) / 2
    return stats.gamma.ppf(a, m) / m <= values.mean() <= stats.gamma.ppf(1 - a, m) / m


def test_zero_forcing_by_definition():
    y = np.array([[1 + 1j, 2.0, -1j, 0.5, 3.0]])
    eq = equalize_zf(y, H, 0.1, channel_error_var=0.02, signal_power=2.0)
    assert isinstance(eq, Equalized)
    np.testing.assert_allclose(eq.symbols, y / H, rtol=1e-15)
    np.testing.assert_allclose(eq.noise_var, np.broadcast_to((0.1 + 0.04) / np.abs(H) ** 2,
                                                             (1, 5)), rtol=1e-15)
    assert eq.symbols.dtype == np.complex128 and eq.noise_var.dtype == np.float64


def test_mmse_error_and_unbiased_noise_monte_carlo():
    rng = np.random.default_rng(1)
    n, sigma2 = 20000, 0.2
    x = qpsk(rng, (n, H.size))
    y = H * x + cn(rng, x.shape, sigma2)
    biased = equalize_mmse(y, H, sigma2, unbiased=False)
    s = sigma2                                            # E_s = 1
    # MMSE: E|z - x|^2 = s / (|h|^2 + s) (one-tap MMSE, Proakis 10.2).
    err = np.abs(biased.symbols - x) ** 2
    want = s / (np.abs(H) ** 2 + s)
    np.testing.assert_allclose(biased.noise_var[0], want, rtol=1e-14)
    assert np.all(np.abs(err.mean(axis=0) - want) <= Z * err.std(axis=0, ddof=1) / np.sqrt(n))
    # Bias-free output: z/b - x = n/h exactly, variance sigma^2/|h|^2.
    eq = equalize_mmse(y, H, sigma2)
    np.testing.assert_allclose(eq.symbols, y / H, rtol=1e-12)
    assert gamma_ok(np.abs(eq.symbols - x) ** 2 / eq.noise_var)
    # The MMSE error is never above the ZF one.
    assert np.all(want <= sigma2 / np.abs(H) ** 2)


def test_channel_error_variance_enters_the_noise():
    # h = h_hat + e, e ~ CN(0, eps) independent of h_hat (as for an LMMSE
    # estimate): with QPSK (|x| = 1), e x + n ~ CN(0, eps + sigma^2), so the
    # bias-free output has noise (sigma^2 + eps E_s)/|h_hat|^2, Gaussian:
    # normalised squared errors are Exp(1).
    rng = np.random.default_rng(2)
    n, sigma2, eps = 20000, 0.05, 0.03
    x = qpsk(rng, (n, H.size))
    h = H + cn(rng, x.shape, eps)
    y = h * x + cn(rng, x.shape, sigma2)
    for fn in (equalize_zf, equalize_mmse):
        eq = fn(y, H, sigma2, channel_error_var=eps)
        np.testing.assert_allclose(eq.noise_var[0], (sigma2 + eps) / np.abs(H) ** 2,
                                   rtol=1e-14)
        assert gamma_ok(np.abs(eq.symbols - x) ** 2 / eq.noise_var)
        # Without the error term the noise would be underestimated.
        naive = fn(y, H, sigma2)
        assert not gamma_ok(np.abs(naive.symbols - x) ** 2 / naive.noise_var)


def test_llr_scaling_is_consistent():
    # BPSK (bit 0 -> -1 in tonebank's Gray map) through each subcarrier of
    # H: LLRs from Constellation.llr with the equaliser's noise variance
    # are N(mu, 2 mu) given the bit (the consistency condition), with
    # mu = 4 / noise_var.  CLT bounds on the mean and on the variance.
    rng = np.random.default_rng(3)
    bpsk = Constellation.bpsk()
    n, sigma2 = 20000, 0.5
    bits = np.zeros((n, H.size), dtype=np.uint8)
    y = H * bpsk.map(bits.reshape(-1)).reshape(n, H.size) + cn(rng, (n, H.size), sigma2)
    eq = equalize_mmse(y, H, sigma2)
    llr = bpsk.llr(eq.symbols, eq.noise_var[0])           # one variance per subcarrier
    mu = 4 / eq.noise_var[0]
    mean, var = llr.mean(axis=0), llr.var(axis=0, ddof=1)
    assert np.all(np.abs(mean - mu) <= Z * np.sqrt(2 * mu / n))
    # Var of the sample variance of a Gaussian: 2 var^2 / (n - 1).
    assert np.all(np.abs(var - 2 * mu) <= Z * 2 * mu * np.sqrt(2 / (n - 1)))
    # ZF gives the same LLRs (one tap: the bias-free MMSE output is ZF's).
    zf = equalize_zf(y, H, sigma2)
    np.testing.assert_allclose(bpsk.llr(zf.symbols, zf.noise_var), llr, rtol=1e-9,
                               atol=1e-9)


def test_zero_channel_dtype_and_broadcasting():
    h = np.array([0.0, 1.0, 2.0], dtype=np.complex64)
    y = np.ones((4, 3), dtype=np.complex64)
    for fn in (equalize_zf, equalize_mmse):
        eq = fn(y, h, np.full((4, 1), 0.1))
        assert eq.symbols.dtype == np.complex64 and eq.noise_var.dtype == np.float32
        assert eq.symbols.shape == eq.noise_var.shape == (4, 3)
        assert np.all(eq.symbols[:, 0] == 0) and np.all(np.isinf(eq.noise_var[:, 0]))
        assert np.all(np.isfinite(eq.noise_var[:, 1:]))
    biased = equalize_mmse(y, h, 0.1, unbiased=False, signal_power=2.0)
    assert np.all(biased.symbols[:, 0] == 0)
    np.testing.assert_allclose(biased.noise_var[:, 0], 2.0)     # error E_s at h = 0


def test_bad_input():
    with pytest.raises(ValueError, match="broadcast"):
        equalize_zf(np.ones(3), np.ones(4), 0.1)
    with pytest.raises(ValueError, match="noise_var of shape"):
        equalize_zf(np.ones(3), np.ones(3), np.ones((2, 3)))
    with pytest.raises(ValueError, match="noise_var must be > 0"):
        equalize_mmse(np.ones(3), np.ones(3), 0.0)
    with pytest.raises(ValueError, match="noise_var must be finite"):
        equalize_mmse(np.ones(3), np.ones(3), np.nan)
    with pytest.raises(TypeError, match="noise_var must be real"):
        equalize_mmse(np.ones(3), np.ones(3), 0.1j)
    with pytest.raises(ValueError, match="channel_error_var"):
        equalize_mmse(np.ones(3), np.ones(3), 0.1, channel_error_var=-1.0)
    with pytest.raises(ValueError, match="finite"):
        equalize_zf(np.array([np.inf]), np.ones(1), 0.1)
    with pytest.raises(TypeError, match="received"):
        equalize_zf(np.array(["a"]), np.ones(1), 0.1)
    with pytest.raises(ValueError, match="signal_power"):
        equalize_mmse(np.ones(3), np.ones(3), 0.1, signal_power=0.0)
    with pytest.raises(TypeError, match="unbiased"):
        equalize_mmse(np.ones(3), np.ones(3), 0.1, unbiased="no")
