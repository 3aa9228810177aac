r"""Closed forms for what receiver impairments do to OFDM symbols.

These are the predictions the impairment models of
:mod:`tonebank.channel.impairments` are tested against, and a quick way
to budget an impairment before simulating it.

Notation: FFT size :math:`N`, subcarrier spacing :math:`\Delta_{sc} =
f_s / N`, FFT window :math:`T = 1/\Delta_{sc}`, symbol period with cyclic
prefix :math:`T_s \ge T`, relative frequency offset :math:`\epsilon =
\Delta f / \Delta_{sc}`, oscillator linewidth (3-dB full width)
:math:`\beta`.  Powers are relative to the power of a subcarrier.
"""

from __future__ import annotations

import math

import numpy as np

from .._checks import integer
from .._checks import real

__all__ = [
    "cfo_ici_power",
    "cfo_snr_loss_db",
    "wiener_cpe_step_variance",
    "wiener_ici_power",
]


def cfo_snr_loss_db(epsilon, esn0_db) -> float:
    r"""SNR loss of an uncorrected carrier frequency offset (small offsets).

    Parameters
    ----------
    epsilon : float
        Frequency offset in subcarrier spacings; the approximation holds
        for :math:`|\epsilon| \ll 1`.
    esn0_db : float
        :math:`E_s/N_0` per subcarrier at the FFT output, dB.

    Returns
    -------
    float
        The loss :math:`D` in dB.

    Raises
    ------
    TypeError
        An argument is not a real number.

    See Also
    --------
    cfo_ici_power : the exact interference power behind it.

    Notes
    -----
    .. math::

        D \approx \frac{10}{3 \ln 10}\,(\pi\epsilon)^2\,\frac{E_s}{N_0}
        \ \mathrm{dB},

    the first-order term of :math:`10 \log_{10}(1 + (\pi\epsilon)^2 E_s /
    (3 N_0))`: the offset turns a share :math:`(\pi\epsilon)^2/3` of each
    subcarrier's power into interference on the others, which adds to
    the noise.  The common phase rotation and the small attenuation of
    the wanted subcarrier are assumed corrected (e.g. by pilots).

    References
    ----------
    T. Pollet, M. Van Bladel, M. Moeneclaey, "BER sensitivity of OFDM
    systems to carrier frequency offset and Wiener phase noise", IEEE
    Trans. Commun. 43(2/3/4), 1995.

    Examples
    --------
    >>> from tonebank.channel import cfo_snr_loss_db
    >>> round(cfo_snr_loss_db(0.02, 20.0), 3)
    0.572
    """
    eps = real(epsilon, "epsilon")
    snr = 10.0 ** (real(esn0_db, "esn0_db") / 10.0)
    return 10.0 / (3.0 * math.log(10.0)) * (math.pi * eps) ** 2 * snr


def cfo_ici_power(epsilon, n_fft) -> float:
    r"""Interference power of a frequency offset on one subcarrier (exact).

    Parameters
    ----------
    epsilon : float
        Frequency offset in subcarrier spacings.
    n_fft : int
        FFT size :math:`N`, >= 1.

    Returns
    -------
    float
        :math:`1 - |S_0|^2` with :math:`S_0 = \frac{\sin \pi\epsilon}{N
        \sin(\pi\epsilon/N)}`, the power leaked to the other subcarriers
        when all :math:`N` carry independent unit-power data
        (:math:`\approx (\pi\epsilon)^2/3` for small :math:`\epsilon`).

    Raises
    ------
    TypeError
        An argument has the wrong type.
    ValueError
        ``n_fft < 1``.

    Notes
    -----
    The rotation multiplies window sample :math:`n` by :math:`e^{j 2\pi
    \epsilon n / N}`; the unitary FFT maps subcarrier :math:`k` to
    :math:`k + l` with weight :math:`S_l = N^{-1} \sum_n e^{j 2\pi
    (\epsilon - l) n / N}`, whose squared magnitudes sum to 1 (Parseval),
    so the interference is :math:`1 - |S_0|^2`.

    Examples
    --------
    >>> from tonebank.channel import cfo_ici_power
    >>> round(cfo_ici_power(0.1, 64) / ((3.14159265 * 0.1) ** 2 / 3), 3)
    0.987
    """
    eps = real(epsilon, "epsilon")
    n = integer(n_fft, "n_fft", minimum=1)
    if eps == math.floor(eps):
        s0 = 1.0 if eps == 0 else 0.0
    else:
        s0 = math.sin(math.pi * eps) / (n * math.sin(math.pi * eps / n))
    return 1.0 - s0 * s0


def wiener_ici_power(linewidth_hz, subcarrier_spacing_hz, n_fft=None) -> float:
    r"""Interference power of Wiener phase noise on one subcarrier.

    Parameters
    ----------
    linewidth_hz : float
        Oscillator 3-dB full linewidth :math:`\beta` in Hz, >= 0.
    subcarrier_spacing_hz : float
        Subcarrier spacing :math:`\Delta_{sc}` in Hz, > 0.
    n_fft : int, optional
        FFT size :math:`N` (the phase sampled at :math:`N` points of the
        window): the exact finite-:math:`N` value.  None (default): the
        small-linewidth limit :math:`\pi\beta/(3\Delta_{sc})`.

    Returns
    -------
    float
        Power leaked to the other subcarriers, relative to a subcarrier's
        power, when all carry independent unit-power data; this is the
        error power left after the common phase error is removed.

    Raises
    ------
    TypeError
        An argument has the wrong type.
    ValueError
        A negative linewidth, a non-positive spacing or ``n_fft < 1``.

    See Also
    --------
    wiener_cpe_step_variance : the common part, removed by pilots.

    Notes
    -----
    The wanted subcarrier is scaled by :math:`S_0 = N^{-1}\sum_n
    e^{j\phi[n]}` (the common phase error, in amplitude and phase) and
    the rest of its power, :math:`1 - |S_0|^2`, spreads to the others.
    For the Wiener process, :math:`E[e^{j(\phi[n]-\phi[m])}] =
    e^{-\sigma^2 |n-m|/2}` with :math:`\sigma^2 = 2\pi\beta/f_s`, so

    .. math::

        P_{ICI} = 1 - \frac{1}{N^2}\Big(N + 2\sum_{d=1}^{N-1}(N-d)
        e^{-\sigma^2 d/2}\Big) \approx \frac{\pi\beta}{3\Delta_{sc}},

    the limit being the mean square of the phase about its window mean,
    :math:`2\pi\beta T/6`.  (Derived by this project; the same result
    appears in the papers below, from memory.)

    References
    ----------
    T. Pollet, M. Van Bladel, M. Moeneclaey, "BER sensitivity of OFDM
    systems to carrier frequency offset and Wiener phase noise", IEEE
    Trans. Commun. 43(2/3/4), 1995; A. G. Armada, "Understanding the
    effects of phase noise in orthogonal frequency division
    multiplexing (OFDM)", IEEE Trans. Broadcast. 47(2), 2001.

    Examples
    --------
    >>> from tonebank.channel import wiener_ici_power
    >>> round(wiener_ici_power(100.0, 15e3), 6)
    0.006981
    >>> round(wiener_ici_power(100.0, 15e3, 64), 6)
    0.006943
    """
    beta = real(linewidth_hz, "linewidth_hz", minimum=0.0)
    spacing = real(subcarrier_spacing_hz, "subcarrier_spacing_hz", minimum=0.0,
                    allow_equal_min=False)
    if n_fft is None:
        return math.pi * beta / (3.0 * spacing)
    n = integer(n_fft, "n_fft", minimum=1)
    sigma2 = 2.0 * math.pi * beta / (spacing * n)
    d = np.arange(1, n, dtype=np.float64)
    mean_s0 = (n + 2.0 * np.sum((n - d) * np.exp(-sigma2 * d / 2.0))) / (n * n)
    return float(1.0 - mean_s0)


def wiener_cpe_step_variance(linewidth_hz, subcarrier_spacing_hz, *,
                             symbol_duration_s=None) -> float:
    r"""Variance of the change of common phase error from one symbol to the next.

    Parameters
    ----------
    linewidth_hz : float
        Oscillator 3-dB full linewidth :math:`\beta` in Hz, >= 0.
    subcarrier_spacing_hz : float
        Subcarrier spacing in Hz, > 0 (FFT window :math:`T =
        1/\Delta_{sc}`).
    symbol_duration_s : float, optional
        Symbol period :math:`T_s` with its cyclic prefix, :math:`\ge T`;
        default :math:`T` (no prefix).

    Returns
    -------
    float
        :math:`\mathrm{Var}(\bar\phi_{s+1} - \bar\phi_s)` in rad², where
        :math:`\bar\phi_s` is the mean phase over the FFT window of
        symbol :math:`s`.

    Raises
    ------
    TypeError
        An argument is not a real number.
    ValueError
        A negative linewidth, a non-positive spacing, or :math:`T_s <
        T`.

    Notes
    -----
    For small phase noise the common phase error of symbol :math:`s` is
    :math:`\mathrm{arg}\, S_0 \approx \bar\phi_s`.  With a Wiener phase of
    diffusion rate :math:`c = 2\pi\beta` (rad²/s) and windows
    :math:`[sT_s, sT_s + T]`,

    .. math::

        \mathrm{Var}(\bar\phi_{s+1} - \bar\phi_s)
        = \frac{c}{T^2}\int_0^T\!\!\int_0^T (T_s - |t - u|)\,dt\,du
        = 2\pi\beta\,\Big(T_s - \frac{T}{3}\Big),

    since the increments over :math:`[t, t + T_s]` and :math:`[u, u +
    T_s]` share :math:`T_s - |t-u|` seconds of independent diffusion.
    (Derived by this project from the Wiener model; compare the CPE
    analysis of the papers cited in :func:`wiener_ici_power`.)
    Consecutive steps are correlated (coefficient :math:`(T/6)/(T_s -
    T/3)`), as they share a window.

    Examples
    --------
    >>> from tonebank.channel import wiener_cpe_step_variance
    >>> round(wiener_cpe_step_variance(100.0, 15e3), 7)
    0.0279253
    """
    beta = real(linewidth_hz, "linewidth_hz", minimum=0.0)
    spacing = real(subcarrier_spacing_hz, "subcarrier_spacing_hz", minimum=0.0,
                    allow_equal_min=False)
    window = 1.0 / spacing
    if symbol_duration_s is None:
        period = window
    else:
        period = real(symbol_duration_s, "symbol_duration_s")
        if period < window * (1 - 1e-12):
            raise ValueError(f"symbol_duration_s={symbol_duration_s!r} is not allowed; need "
                             f"symbol_duration_s >= 1 / subcarrier_spacing_hz = {window:g} s")
    return 2.0 * math.pi * beta * (period - window / 3.0)
