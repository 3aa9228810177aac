"""Closed-form error rates in AWGN, and diversity results in Rayleigh fading.

The functions are meant to be plotted beside Monte-Carlo curves.  The
last section of the module (:func:`ber_bpsk_mrc` onwards) holds the
results for ``L`` diversity branches in Rayleigh fading (maximal-ratio,
selection and non-coherent combining, outage and mean SNR); its own
SNR convention is stated below.

.. rubric:: SNR convention (every function here)

Complex baseband AWGN: each received symbol is ``y = s + n`` with ``n``
circular complex Gaussian of total variance ``N0`` (``N0 / 2`` per real
dimension), the mean symbol energy being ``Es`` and ``Eb = Es / k`` for
``k`` bits per symbol (``Eb = Es / (k R)`` with a code of rate ``R``).
Arguments named ``esn0_db`` are ``10 log10(Es / N0)``, those named
``ebn0_db`` are ``10 log10(Eb / N0)``.  This is the model the
:class:`tonebank.Constellation` soft decisions assume, with
``noise_var = N0`` for unit-energy constellations.

All functions take the SNR as a scalar or an array of any shape and
return float64 of the same shape (a numpy scalar for scalar input);
``+inf`` dB gives 0 and ``-inf`` dB the rate of guessing.  The
constellations meant are those of :class:`tonebank.Constellation` (Gray
labels, minimum-distance decisions).  Figures are model values for the
ideal AWGN channel, useful as engineering references, not predictions of
a particular radio's performance.

.. rubric:: SNR convention of the diversity section

Each of the ``L`` branches sees ``y_l = h_l s + n_l`` with ``h_l``
circular complex Gaussian (Rayleigh envelope) of unit mean power
``E|h_l|^2 = 1`` unless a correlation matrix says otherwise, and noise of
variance ``N0`` on every branch.  ``ebn0_db`` (or ``mean_snr_db``) is the
**mean SNR per branch**, ``10 log10(E|h_l|^2 Eb / N0)``: the combiner
collects ``L`` times that energy in total.  Fading is taken as constant
over a symbol and independent from symbol to symbol (ideal
interleaving).
"""

from __future__ import annotations

import math
import numbers
import operator

import numpy as np
from scipy import integrate, special

__all__ = [
    "qfunc",
    "ber_bpsk",
    "ber_qpsk",
    "ser_mpsk",
    "ber_mpsk_gray",
    "ser_qam",
    "ber_qam_gray",
    "ebn0_to_esn0_db",
    "esn0_to_ebn0_db",
    # diversity in Rayleigh fading (last section)
    "ber_bpsk_mrc",
    "ber_qam_mrc",
    "ber_bpsk_selection",
    "ber_bfsk_square_law",
    "ber_dpsk_combined",
    "mrc_outage",
    "selection_outage",
    "selection_snr_gain",
]

_MAX_PSK_ORDER = 2**16
_MAX_QAM_ORDER = 2**20


# -- argument handling --------------------------------------------------------


def _as_real_array(value, argument: str) -> np.ndarray:
    arr = np.asarray(value)
    if arr.dtype.kind not in "biuf":
        raise TypeError(f"{argument} must be real (a float or an array of floats); "
                        f"got dtype {arr.dtype}")
    arr = arr.astype(np.float64)
    if np.isnan(arr).any():
        raise ValueError(f"{argument} holds NaN; only real numbers and +-inf are allowed")
    return arr


def _db(value, argument: str) -> np.ndarray:
    """Linear power ratio of a dB array (NaN rejected, +-inf allowed)."""
    arr = _as_real_array(value, argument)
    return np.power(10.0, arr / 10.0)


def _finish(result: np.ndarray):
    """A float64 array, or a numpy float64 scalar for 0-d results."""
    return result[()] if result.ndim == 0 else result


def _order(m, argument: str = "m") -> int:
    if isinstance(m, (bool, np.bool_)):
        raise TypeError(f"{argument} must be an integer; got {m!r}")
    try:
        return operator.index(m)
    except TypeError:
        raise TypeError(f"{argument} must be an integer; got {m!r}") from None


def _psk_order(m) -> int:
    m = _order(m)
    if m < 2 or m > _MAX_PSK_ORDER or m & (m - 1):
        raise ValueError(f"m={m} is not allowed; M-PSK needs a power of two from 2 "
                         f"to {_MAX_PSK_ORDER}")
    return m


def _qam_levels(m) -> int:
    """Levels per axis of square M-QAM (M = 4, 16, 64, ...)."""
    m = _order(m)
    k = m.bit_length() - 1
    if m < 4 or m > _MAX_QAM_ORDER or m & (m - 1) or k % 2:
        raise ValueError(f"m={m} is not a square QAM order; allowed are even powers "
                         f"of two from 4 to {_MAX_QAM_ORDER} (4, 16, 64, 256, ...)")
    return math.isqrt(m)


# -- Gaussian tail and the binary cases ---------------------------------------------


def qfunc(x):
    """Gaussian tail probability ``Q(x) = P(Z > x)`` for standard normal ``Z``.

    Parameters
    ----------
    x : float or array_like of float
        Argument(s); ``+-inf`` allowed.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        ``Q(x)`` (float64), of the shape of ``x``.

    Raises
    ------
    TypeError
        If ``x`` is not real.
    ValueError
        If ``x`` holds NaN.

    See Also
    --------
    scipy.special.erfc, scipy.stats.norm

    Notes
    -----
    :math:`Q(x) = \\tfrac12 \\operatorname{erfc}(x / \\sqrt 2)`, evaluated
    with :func:`scipy.special.erfc`, which keeps full relative accuracy in
    the upper tail (no ``1 - Phi(x)`` cancellation).

    Examples
    --------
    >>> from tonebank.theory import qfunc
    >>> float(qfunc(0.0))
    0.5
    >>> print(f"{qfunc(3.0):.6e}")
    1.349898e-03
    """
    arr = _as_real_array(x, "x")
    return _finish(0.5 * special.erfc(arr / math.sqrt(2.0)))


def ber_bpsk(ebn0_db):
    """Bit error rate of BPSK in AWGN, ``Q(sqrt(2 Eb/N0))``.

    Parameters
    ----------
    ebn0_db : float or array_like of float
        ``Eb/N0`` in dB (module convention: complex AWGN).

    Returns
    -------
    numpy.float64 or numpy.ndarray
        BER, of the shape of ``ebn0_db``.

    Raises
    ------
    TypeError
        If ``ebn0_db`` is not real.
    ValueError
        If ``ebn0_db`` holds NaN.

    See Also
    --------
    ber_qpsk, ber_qam_gray

    Notes
    -----
    The decision statistic of BPSK is real: the noise that matters has
    variance ``N0 / 2``, so :math:`P_b = Q(\\sqrt{2 E_b / N_0})` [1]_.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, 5th ed.,
       McGraw-Hill, 2008, sec. 4.2 (binary antipodal signalling).

    Examples
    --------
    >>> from tonebank.theory import ber_bpsk
    >>> print(f"{ber_bpsk(9.6):.3e}")
    9.736e-06
    """
    gamma = _db(ebn0_db, "ebn0_db")
    return _finish(0.5 * special.erfc(np.sqrt(gamma)))


def ber_qpsk(ebn0_db):
    """Bit error rate of Gray QPSK in AWGN: the same as BPSK per bit.

    Parameters
    ----------
    ebn0_db : float or array_like of float
        ``Eb/N0`` in dB (module convention).

    Returns
    -------
    numpy.float64 or numpy.ndarray
        BER, of the shape of ``ebn0_db``.

    Raises
    ------
    TypeError
        If ``ebn0_db`` is not real.
    ValueError
        If ``ebn0_db`` holds NaN.

    See Also
    --------
    ber_bpsk, ber_qam_gray

    Notes
    -----
    Gray QPSK is two BPSK signals on the in-phase and quadrature axes,
    each with half the symbol energy, so per bit
    :math:`P_b = Q(\\sqrt{2 E_b / N_0})`.

    Examples
    --------
    >>> from tonebank.theory import ber_bpsk, ber_qpsk
    >>> bool(ber_qpsk(6.0) == ber_bpsk(6.0))
    True
    """
    return ber_bpsk(ebn0_db)


# -- M-PSK ------------------------------------------------------------------------


def _phase_tail(phi: float, gamma: float) -> float:
    """``P(arg(y) > phi)`` for ``y = sqrt(gamma) + n``, ``0 <= phi <= pi``.

    ``n`` circular complex Gaussian of unit variance, so ``gamma`` is the
    SNR ``Es/N0``.  The integral form (see :func:`ser_mpsk`) has a
    bounded, smooth integrand; it is evaluated with adaptive quadrature
    to a relative tolerance of 1e-12.
    """
    if phi <= 0.0:
        return 0.5
    if phi >= math.pi or math.isinf(gamma) and gamma > 0:
        return 0.0
    s2 = math.sin(phi) ** 2
    if gamma == 0.0:
        return (math.pi - phi) / (2 * math.pi)

    def integrand(t):
        st = math.sin(t)
        return math.exp(-gamma * s2 / (st * st)) if st > 0.0 else 0.0

    value, _ = integrate.quad(integrand, 0.0, math.pi - phi, epsabs=0.0,
                              epsrel=1e-12, limit=200, points=[math.pi / 2]
                              if math.pi / 2 < math.pi - phi else None)
    return value / (2 * math.pi)


def _mpsk_sector_probabilities(m: int, gamma: float) -> np.ndarray:
    """``P[j]``: probability of deciding the point ``j`` steps from the sent one.

    ``j = 0 .. m-1``; sector ``j`` spans phases ``(2j-1) pi/m`` to
    ``(2j+1) pi/m``.  Symmetric: ``P[j] = P[m-j]``.
    """
    edges = [(2 * j - 1) * math.pi / m for j in range(1, m // 2 + 1)]
    tail = np.array([_phase_tail(phi, gamma) for phi in edges])  # P(arg > edge)
    probs = np.zeros(m)
    for j in range(1, m // 2):
        probs[j] = tail[j - 1] - tail[j]
        probs[m - j] = probs[j]
    probs[m // 2] = 2 * tail[m // 2 - 1]  # the sector around pi, both sides
    probs[0] = 1.0 - 2 * tail[0]
    return probs


def ser_mpsk(m, esn0_db):
    """Symbol error rate of M-PSK in AWGN (exact, by one integral).

    Parameters
    ----------
    m : int
        Number of points, a power of two from 2 to 65536.
    esn0_db : float or array_like of float
        ``Es/N0`` in dB (module convention).

    Returns
    -------
    numpy.float64 or numpy.ndarray
        SER, of the shape of ``esn0_db``.

    Raises
    ------
    TypeError
        If ``m`` is not an integer or ``esn0_db`` not real.
    ValueError
        If ``m`` is not an allowed power of two or ``esn0_db`` holds NaN.

    See Also
    --------
    ber_mpsk_gray, tonebank.Constellation.psk

    Notes
    -----
    Exact, from the single finite integral of [1]_ (written here from
    memory)

    .. math::

       P_s = \\frac{1}{\\pi} \\int_0^{(M-1)\\pi/M}
             \\exp\\!\\left(-\\frac{E_s}{N_0}
             \\frac{\\sin^2(\\pi/M)}{\\sin^2\\theta}\\right) d\\theta ,

    evaluated with adaptive quadrature (:func:`scipy.integrate.quad`,
    relative tolerance 1e-12) for :math:`M \\ge 8`; for :math:`M = 2` and
    :math:`M = 4` the closed forms :math:`Q(\\sqrt{2E_s/N_0})` and
    :math:`2Q(\\sqrt{E_s/N_0}) - Q(\\sqrt{E_s/N_0})^2` are used.  Cost: one
    quadrature per SNR value.

    References
    ----------
    .. [1] J. W. Craig, "A new, simple and exact result for calculating the
       probability of error for two-dimensional signal constellations,"
       Proc. IEEE MILCOM 1991, pp. 571-575.

    Examples
    --------
    >>> from tonebank.theory import ser_mpsk
    >>> print(f"{ser_mpsk(8, 15.0):.4e}")
    2.3395e-03
    """
    m = _psk_order(m)
    gamma = _db(esn0_db, "esn0_db")
    if m == 2:
        return _finish(0.5 * special.erfc(np.sqrt(gamma)))
    if m == 4:
        q = 0.5 * special.erfc(np.sqrt(gamma / 2))
        return _finish(q * (2.0 - q))
    phi = math.pi / m
    out = np.array([2.0 * _phase_tail(phi, float(g)) for g in gamma.reshape(-1)])
    return _finish(out.reshape(gamma.shape))


def _gray_step_weights(m: int) -> np.ndarray:
    """Mean number of differing bits between Gray labels ``j`` steps apart."""
    j = np.arange(m)
    gray = j ^ (j >> 1)
    weights = np.empty(m)
    for step in range(m):
        diff = gray ^ gray[(j + step) % m]
        weights[step] = np.mean([bin(int(d)).count("1") for d in diff])
    return weights


def ber_mpsk_gray(m, ebn0_db):
    """Bit error rate of Gray-coded M-PSK in AWGN (exact, numerically).

    Parameters
    ----------
    m : int
        Number of points, a power of two from 2 to 65536.
    ebn0_db : float or array_like of float
        ``Eb/N0`` in dB (module convention), ``Es/N0 = log2(m) Eb/N0``.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        BER averaged over the bits and over equally likely symbols, of the
        shape of ``ebn0_db``.

    Raises
    ------
    TypeError
        If ``m`` is not an integer or ``ebn0_db`` not real.
    ValueError
        If ``m`` is not an allowed power of two or ``ebn0_db`` holds NaN.

    See Also
    --------
    ser_mpsk, tonebank.Constellation.psk

    Notes
    -----
    Not the common approximation ``P_s / log2 M``: the received phase
    falls in the decision sector ``j`` steps away from the sent point with
    probability :math:`P_j = F((2j-1)\\pi/M) - F((2j+1)\\pi/M)`, where

    .. math::

       F(\\phi) = P(\\operatorname{arg} y > \\phi) = \\frac{1}{2\\pi}
       \\int_0^{\\pi-\\phi} \\exp\\!\\left(-\\frac{E_s}{N_0}
       \\frac{\\sin^2\\phi}{\\sin^2\\theta}\\right) d\\theta,
       \\quad 0 \\le \\phi \\le \\pi,

    is the phase distribution of [1]_ (written from memory; with
    :math:`\\phi = \\pi/M` it gives :func:`ser_mpsk`).  Then
    :math:`P_b = \\frac{1}{\\log_2 M} \\sum_j w_j P_j`, with :math:`w_j` the
    number of label bits in which points ``j`` steps apart differ,
    averaged over the sent point (the reflected Gray code of
    :meth:`tonebank.Constellation.psk`).  The integrals are evaluated with
    adaptive quadrature (relative tolerance 1e-12), ``M/2`` of them per SNR
    value; ``M = 2`` and ``M = 4`` use the closed form of :func:`ber_bpsk`.

    References
    ----------
    .. [1] R. F. Pawula, S. O. Rice and J. H. Roberts, "Distribution of the
       phase angle between two vectors perturbed by Gaussian noise," IEEE
       Trans. Commun., vol. 30, no. 8, pp. 1828-1841, 1982.

    Examples
    --------
    >>> from tonebank.theory import ber_mpsk_gray
    >>> print(f"{ber_mpsk_gray(8, 10.0):.4e}")
    1.0114e-03
    """
    m = _psk_order(m)
    gamma_b = _db(ebn0_db, "ebn0_db")
    if m <= 4:
        return _finish(0.5 * special.erfc(np.sqrt(gamma_b)))
    k = m.bit_length() - 1
    weights = _gray_step_weights(m)
    out = np.array([float(weights @ _mpsk_sector_probabilities(m, k * float(g))) / k
                    for g in gamma_b.reshape(-1)])
    return _finish(out.reshape(gamma_b.shape))


# -- square QAM -------------------------------------------------------------------


def ser_qam(m, esn0_db):
    """Symbol error rate of square M-QAM in AWGN (exact).

    Parameters
    ----------
    m : int
        Number of points: 4, 16, 64, ... (an even power of two, up to 2**20).
    esn0_db : float or array_like of float
        ``Es/N0`` in dB (module convention).

    Returns
    -------
    numpy.float64 or numpy.ndarray
        SER, of the shape of ``esn0_db``.

    Raises
    ------
    TypeError
        If ``m`` is not an integer or ``esn0_db`` not real.
    ValueError
        If ``m`` is not a square QAM order or ``esn0_db`` holds NaN.

    See Also
    --------
    ber_qam_gray, tonebank.Constellation.qam

    Notes
    -----
    Square QAM is two independent :math:`\\sqrt M`-PAM decisions, each
    wrong with probability
    :math:`p = 2 (1 - 1/\\sqrt M)\\, Q\\big(\\sqrt{3 (E_s/N_0) / (M-1)}\\big)`,
    so :math:`P_s = 1 - (1 - p)^2` [1]_, evaluated as :math:`p (2 - p)` to
    keep its accuracy at high SNR.

    References
    ----------
    .. [1] J. G. Proakis and M. Salehi, *Digital Communications*, 5th ed.,
       McGraw-Hill, 2008, sec. 4.3 (QAM error probability).

    Examples
    --------
    >>> from tonebank.theory import ser_qam
    >>> print(f"{ser_qam(16, 20.0):.4e}")
    1.1616e-05
    """
    levels = _qam_levels(m)
    m = levels * levels
    gamma = _db(esn0_db, "esn0_db")
    p = 2.0 * (1.0 - 1.0 / levels) * 0.5 * special.erfc(np.sqrt(1.5 * gamma / (m - 1)))
    return _finish(p * (2.0 - p))


def _cho_yoon_coefficients(levels: int) -> np.ndarray:
    """``c[k-1, i]``: the weight of ``erfc((2i+1) x)`` in ``P(k)``.

    From the per-bit expression of Cho and Yoon (2002) for Gray-coded
    ``I``-PAM (``I = levels``, bit ``k = 1`` the most significant)::

        P(k) = 1/I * sum_{i=0}^{(1 - 2^-k) I - 1}
               (-1)^floor(i 2^(k-1) / I)
               * (2^(k-1) - floor(i 2^(k-1) / I + 1/2))
               * erfc((2i+1) x)
    """
    nbits = levels.bit_length() - 1
    coeffs = np.zeros((nbits, levels))
    for k in range(1, nbits + 1):
        p = 2 ** (k - 1)
        for i in range((levels - levels // 2**k)):
            q = i * p  # floor(i p / I) and floor(i p / I + 1/2) in integers
            sign = -1.0 if (q // levels) % 2 else 1.0
            coeffs[k - 1, i] = sign * (p - (2 * q + levels) // (2 * levels)) / levels
    return coeffs


def ber_qam_gray(m, ebn0_db, *, per_bit=False):
    """Bit error rate of Gray square M-QAM in AWGN (exact, Cho and Yoon).

    Parameters
    ----------
    m : int
        Number of points: 4, 16, 64, ... (an even power of two, up to 2**20).
    ebn0_db : float or array_like of float
        ``Eb/N0`` in dB (module convention), ``Es/N0 = log2(m) Eb/N0``.
    per_bit : bool, optional
        Return the error rate of each bit position instead of the mean.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        With ``per_bit=False``, the BER (mean over the ``log2 m`` bits and
        equally likely symbols), of the shape of ``ebn0_db``.  With
        ``per_bit=True``, shape ``ebn0_db.shape + (log2 m,)``: the error
        rate of bits ``b0 .. b(k-1)`` in the order of
        :class:`tonebank.Constellation` (in-phase bits, most significant
        first, then quadrature bits).

    Raises
    ------
    TypeError
        If ``m`` is not an integer or ``ebn0_db`` not real.
    ValueError
        If ``m`` is not a square QAM order or ``ebn0_db`` holds NaN.

    See Also
    --------
    ser_qam, ber_bpsk, tonebank.Constellation.qam

    Notes
    -----
    Exact for the Gray labelling of :meth:`tonebank.Constellation.qam`
    (binary-reflected Gray code on each axis) and minimum-distance
    decisions.  Each axis is an :math:`I`-PAM, :math:`I = \\sqrt M`; the
    :math:`k`-th bit of an axis (:math:`k = 1` the most significant) is in
    error with probability [1]_

    .. math::

       P_I(k) = \\frac{1}{I} \\sum_{i=0}^{(1-2^{-k}) I - 1}
       (-1)^{\\left\\lfloor i 2^{k-1} / I \\right\\rfloor}
       \\left(2^{k-1} - \\left\\lfloor \\frac{i\\, 2^{k-1}}{I}
             + \\frac12 \\right\\rfloor\\right)
       \\operatorname{erfc}\\!\\left((2i+1)
       \\sqrt{\\frac{3 \\log_2(M)\\, E_b/N_0}{2 (M-1)}}\\right)

    (the paper's :math:`I \\times J` form with :math:`J = I`, where the
    square root reads :math:`\\sqrt{3 \\log_2(IJ) E_b / N_0 / (I^2 + J^2 - 2)}`),
    and the BER is the average over the bits of both axes,
    :math:`P_b = \\frac{2}{\\log_2 M} \\sum_{k=1}^{\\log_2 I} P_I(k)`.  The
    expressions are those of Section III of [1]_, written from memory
    (equation numbers not checked) and verified in the test suite against
    a direct enumeration of the PAM decision regions.  Cost:
    :math:`O(\\sqrt M \\log M)` per SNR value.

    References
    ----------
    .. [1] K. Cho and D. Yoon, "On the general BER expression of one- and
       two-dimensional amplitude modulations," IEEE Trans. Commun.,
       vol. 50, no. 7, pp. 1074-1080, 2002.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.theory import ber_qam_gray
    >>> print(f"{ber_qam_gray(16, 10.0):.4e}")
    1.7542e-03
    >>> ber_qam_gray(16, 10.0, per_bit=True).round(6)      # b0, b1 on I; b2, b3 on Q
    array([0.001169, 0.002339, 0.001169, 0.002339])
    """
    levels = _qam_levels(m)
    m = levels * levels
    k = m.bit_length() - 1
    gamma_b = _db(ebn0_db, "ebn0_db")
    x = np.sqrt(1.5 * k * gamma_b / (m - 1))
    terms = special.erfc(x[..., None] * (2 * np.arange(levels) + 1))
    axis_bits = terms @ _cho_yoon_coefficients(levels).T   # (..., log2 I)
    if per_bit:
        return np.concatenate([axis_bits, axis_bits], axis=-1)
    return _finish(axis_bits.mean(axis=-1))


# -- SNR conversions --------------------------------------------------------------


def _bits_and_rate(bits_per_symbol, code_rate) -> float:
    if isinstance(bits_per_symbol, (bool, np.bool_)) or not isinstance(
            bits_per_symbol, numbers.Real):
        raise TypeError(f"bits_per_symbol must be a positive number; got "
                        f"{bits_per_symbol!r}")
    if isinstance(code_rate, (bool, np.bool_)) or not isinstance(code_rate, numbers.Real):
        raise TypeError(f"code_rate must be a number in (0, 1]; got {code_rate!r}")
    bits, rate = float(bits_per_symbol), float(code_rate)
    if not (math.isfinite(bits) and bits > 0):
        raise ValueError(f"bits_per_symbol={bits_per_symbol!r} is not allowed; it must "
                         "be finite and > 0")
    if not (0 < rate <= 1):
        raise ValueError(f"code_rate={code_rate!r} is not allowed; it must be in (0, 1]")
    return bits * rate


def ebn0_to_esn0_db(ebn0_db, bits_per_symbol, *, code_rate=1.0):
    """Convert ``Eb/N0`` to ``Es/N0`` (both in dB).

    Parameters
    ----------
    ebn0_db : float or array_like of float
        ``Eb/N0`` in dB, ``Eb`` being the energy per information bit.
    bits_per_symbol : float
        Coded bits per symbol ``k`` (> 0; e.g. 4 for 16-QAM).
    code_rate : float, optional
        Code rate ``R`` in (0, 1] (default 1, uncoded).

    Returns
    -------
    numpy.float64 or numpy.ndarray
        ``Es/N0 = Eb/N0 + 10 log10(k R)`` dB, of the shape of ``ebn0_db``.

    Raises
    ------
    TypeError
        If an argument is not a real number (array).
    ValueError
        If ``ebn0_db`` holds NaN, ``bits_per_symbol <= 0`` or ``code_rate``
        is outside (0, 1].

    See Also
    --------
    esn0_to_ebn0_db

    Notes
    -----
    ``Es = k R Eb`` with the same ``N0`` (module convention).  Any cyclic
    prefix or pilot overhead is not included; account for it separately.

    Examples
    --------
    >>> from tonebank.theory import ebn0_to_esn0_db
    >>> print(f"{ebn0_to_esn0_db(10.0, 4, code_rate=0.5):.4f}")
    13.0103
    """
    factor = _bits_and_rate(bits_per_symbol, code_rate)
    return _finish(_as_real_array(ebn0_db, "ebn0_db") + 10.0 * math.log10(factor))


def esn0_to_ebn0_db(esn0_db, bits_per_symbol, *, code_rate=1.0):
    """Convert ``Es/N0`` to ``Eb/N0`` (both in dB); inverse of :func:`~tonebank.theory.ebn0_to_esn0_db`.

    Parameters
    ----------
    esn0_db : float or array_like of float
        ``Es/N0`` in dB.
    bits_per_symbol : float
        Coded bits per symbol ``k`` (> 0).
    code_rate : float, optional
        Code rate ``R`` in (0, 1] (default 1).

    Returns
    -------
    numpy.float64 or numpy.ndarray
        ``Eb/N0 = Es/N0 - 10 log10(k R)`` dB, of the shape of ``esn0_db``.

    Raises
    ------
    TypeError
        If an argument is not a real number (array).
    ValueError
        If ``esn0_db`` holds NaN, ``bits_per_symbol <= 0`` or ``code_rate``
        is outside (0, 1].

    See Also
    --------
    ebn0_to_esn0_db

    Examples
    --------
    >>> from tonebank.theory import esn0_to_ebn0_db
    >>> print(f"{esn0_to_ebn0_db(20.0, 6):.4f}")
    12.2185
    """
    factor = _bits_and_rate(bits_per_symbol, code_rate)
    return _finish(_as_real_array(esn0_db, "esn0_db") - 10.0 * math.log10(factor))


# =================================================================================
# -- Diversity combining in Rayleigh fading ---------------------------------------
# =================================================================================
#
# Convention: see "SNR convention of the diversity section" in the module
# docstring (mean SNR per branch, unit-power Rayleigh branches, the fading
# constant over a symbol and independent between symbols).

_MAX_BRANCHES = 1024


def _branch_count(branches, argument: str = "branches") -> int:
    count = _order(branches, argument)
    if not 1 <= count <= _MAX_BRANCHES:
        raise ValueError(f"{argument}={count} is not allowed; it must be an integer from 1 "
                         f"to {_MAX_BRANCHES}")
    return count


def _diversity_binary(p: np.ndarray, branches: int) -> np.ndarray:
    """``p^L sum_{k=0}^{L-1} C(L-1+k, k) (1-p)^k``: Proakis' binary diversity form.

    ``p`` is the per-branch "error" probability parameter (``(1-mu)/2``
    for coherent BPSK); evaluated term by term in float64 (all terms are
    positive, so there is no cancellation).
    """
    q = 1.0 - p
    total = np.zeros_like(p)
    term = np.ones_like(p)   # C(L-1+k, k) q^k, built up k by k
    for k in range(branches):
        if k:
            term = term * q * ((branches - 1 + k) / k)
        total = total + term
    return p ** branches * total


def _correlation_eigenvalues(correlation, branches: int) -> np.ndarray:
    r = np.asarray(correlation)
    if r.dtype.kind not in "biufc":
        raise TypeError(f"correlation must be a numeric (L, L) matrix; got dtype {r.dtype}")
    if r.shape != (branches, branches):
        raise ValueError(f"correlation has shape {r.shape}; it must be ({branches}, "
                         f"{branches}) for branches={branches}")
    r = r.astype(np.complex128)
    if not np.all(np.isfinite(r)):
        raise ValueError("correlation must be finite")
    scale = float(np.max(np.abs(r))) if r.size else 0.0
    if not np.allclose(r, r.conj().T, rtol=0.0, atol=1e-12 * max(scale, 1.0)):
        raise ValueError("correlation must be Hermitian (equal to its conjugate "
                         "transpose)")
    lam = np.linalg.eigvalsh(r)
    if lam[0] < -1e-10 * max(scale, 1.0):
        raise ValueError(f"correlation must be positive semidefinite; its smallest "
                         f"eigenvalue is {lam[0]:.3g}")
    return np.clip(lam, 0.0, None)


def _mrc_mgf_integral(lam: np.ndarray, gamma: float) -> float:
    """``(1/pi) int_0^{pi/2} prod_i (1 + lam_i gamma / sin^2 t)^-1 dt``."""
    if gamma == 0.0 or not np.any(lam > 0):
        return 0.5
    if math.isinf(gamma):
        return 0.0
    scaled = lam[lam > 0] * gamma

    def integrand(t):
        s2 = math.sin(t) ** 2
        return float(np.prod(s2 / (s2 + scaled)))

    value, _ = integrate.quad(integrand, 0.0, math.pi / 2, epsabs=0.0, epsrel=1e-11,
                              limit=200)
    return value / math.pi


def ber_bpsk_mrc(ebn0_db, branches, *, correlation=None, channel_error_var=0.0):
    """Bit error rate of BPSK with maximal-ratio combining in Rayleigh fading.

    Parameters
    ----------
    ebn0_db : float or array_like of float
        Mean ``Eb/N0`` per branch in dB (diversity convention, module
        docstring).
    branches : int
        Number of branches ``L``, 1 to 1024.
    correlation : array_like, optional
        Branch correlation matrix ``R = E[h h^H]``, shape ``(L, L)``,
        Hermitian positive semidefinite; its diagonal holds the mean power
        of each branch (1 for the convention).  Default: independent
        unit-power branches.
    channel_error_var : float, optional
        Variance ``eps`` of the channel estimates' error, ``0 <= eps < 1``
        (default 0: perfect estimates), in the orthogonal-error model of
        :func:`tonebank.combining.imperfect_estimate` (``h = h_hat + e``,
        ``e`` independent of ``h_hat``); only with independent branches.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        BER, of the shape of ``ebn0_db``.

    Raises
    ------
    TypeError
        If an argument has the wrong type.
    ValueError
        If ``ebn0_db`` holds NaN, ``branches`` is out of range,
        ``correlation`` is not an ``(L, L)`` Hermitian positive
        semidefinite matrix, ``channel_error_var`` is outside [0, 1), or
        both ``correlation`` and ``channel_error_var > 0`` are given.

    See Also
    --------
    tonebank.combining.combine_mrc, ber_bpsk_selection, mrc_outage

    Notes
    -----
    Independent branches, perfect estimates [1]_:

    .. math::

       P_b = \\left(\\frac{1-\\mu}{2}\\right)^L \\sum_{k=0}^{L-1}
             \\binom{L-1+k}{k} \\left(\\frac{1+\\mu}{2}\\right)^k,
       \\qquad \\mu = \\sqrt{\\frac{\\bar\\gamma}{1+\\bar\\gamma}},

    with :math:`\\bar\\gamma` the mean ``Eb/N0`` per branch;
    :math:`1-\\mu` is evaluated as :math:`1/((1+\\bar\\gamma)(1+\\mu))` to
    keep its accuracy at high SNR.

    Estimation error: the combiner weights :math:`\\hat h_l^*/(N_0 +
    \\epsilon E_b)` see :math:`y_l = \\hat h_l s + (e_l s + n_l)` with the
    bracket Gaussian and independent of :math:`\\hat h_l`, whose power is
    :math:`1-\\epsilon`; the decision is then that of perfect estimates at
    the mean SNR per branch (derived here)

    .. math::

       \\bar\\gamma_{\\mathrm{eff}} = \\frac{(1-\\epsilon)\\,\\bar\\gamma}
                                         {1 + \\epsilon\\,\\bar\\gamma},

    which tends to :math:`(1-\\epsilon)/\\epsilon` at high SNR: an error
    floor.

    Correlated branches: the combined SNR is a sum of independent
    exponential variables with the means :math:`\\lambda_i \\bar\\gamma`
    (:math:`\\lambda_i` the eigenvalues of ``R``), and with Craig's form
    of the Q function the BER is one finite integral of the product of
    their moment generating functions [2]_

    .. math::

       P_b = \\frac{1}{\\pi} \\int_0^{\\pi/2} \\prod_{i=1}^{L}
             \\left(1 + \\frac{\\lambda_i \\bar\\gamma}{\\sin^2\\theta}\\right)^{-1}
             d\\theta,

    evaluated by adaptive quadrature (relative tolerance 1e-11; valid for
    repeated and zero eigenvalues alike).  Cost: ``O(L)`` per SNR value
    for the closed form, one quadrature per value with ``correlation``.

    References
    ----------
    .. [1] J. G. Proakis, *Digital Communications*, 4th ed., McGraw-Hill,
       2001, sec. 14.4 (diversity techniques for fading multipath channels;
       section number from memory).
    .. [2] M. K. Simon and M.-S. Alouini, *Digital Communication over
       Fading Channels*, 2nd ed., Wiley, 2005, ch. 9 (the MGF-based
       approach; from memory).

    Examples
    --------
    >>> from tonebank.theory import ber_bpsk_mrc
    >>> print(f"{ber_bpsk_mrc(10.0, 1):.4e}  {ber_bpsk_mrc(10.0, 2):.4e}")
    2.3269e-02  1.5991e-03
    >>> print(f"{ber_bpsk_mrc(10.0, 2, correlation=[[1, 0.7], [0.7, 1]]):.4e}")
    2.7516e-03
    """
    count = _branch_count(branches)
    gamma = _db(ebn0_db, "ebn0_db")
    if isinstance(channel_error_var, (bool, np.bool_)) or not isinstance(
            channel_error_var, numbers.Real):
        raise TypeError(f"channel_error_var must be a real number in [0, 1); got "
                        f"{channel_error_var!r}")
    eps = float(channel_error_var)
    if not 0.0 <= eps < 1.0:
        raise ValueError(f"channel_error_var={channel_error_var!r} is not allowed; it "
                         "must be in [0, 1) (a fraction of the unit branch power)")
    if correlation is not None:
        if eps > 0.0:
            raise ValueError("correlation and channel_error_var > 0 together have no "
                             "closed form here; give one of them (or simulate)")
        lam = _correlation_eigenvalues(correlation, count)
        out = np.array([_mrc_mgf_integral(lam, float(g)) for g in gamma.reshape(-1)])
        return _finish(out.reshape(gamma.shape))
    if eps > 0.0:
        with np.errstate(invalid="ignore"):
            gamma = np.where(np.isinf(gamma), (1.0 - eps) / eps,
                             (1.0 - eps) * gamma / (1.0 + eps * gamma))
    with np.errstate(divide="ignore", invalid="ignore"):
        mu = np.sqrt(gamma / (1.0 + gamma))
        p = 1.0 / ((1.0 + gamma) * (1.0 + mu)) / 2.0     # (1 - mu) / 2
    p = np.where(np.isinf(gamma), 0.0, p)
    return _finish(_diversity_binary(p, count))


def ber_bpsk_selection(ebn0_db, branches):
    """Bit error rate of BPSK with selection combining in Rayleigh fading.

    Parameters
    ----------
    ebn0_db : float or array_like of float
        Mean ``Eb/N0`` per branch in dB (diversity convention).
    branches : int
        Number of independent unit-power branches ``L``, 1 to 1024.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        BER, of the shape of ``ebn0_db``.

    Raises
    ------
    TypeError
        If an argument has the wrong type.
    ValueError
        If ``ebn0_db`` holds NaN or ``branches`` is out of range.

    See Also
    --------
    tonebank.combining.combine_selection, selection_outage, ber_bpsk_mrc

    Notes
    -----
    The branch with the largest SNR is used alone; its SNR has the
    distribution :math:`F(x) = (1 - e^{-x/\\bar\\gamma})^L` [1]_.
    Averaging :math:`Q(\\sqrt{2x})` over it and integrating by parts
    (derived here; with :math:`x = t^2`):

    .. math::

       P_b = \\frac{1}{\\sqrt\\pi} \\int_0^\\infty
             \\left(1 - e^{-t^2/\\bar\\gamma}\\right)^L e^{-t^2}\\, dt,

    a positive integrand with no cancellation, evaluated by adaptive
    quadrature (relative tolerance 1e-11).  For ``L = 1`` it is
    :math:`\\tfrac12 (1 - \\sqrt{\\bar\\gamma/(1+\\bar\\gamma)})`, as for
    maximal-ratio combining.  Cost: one quadrature per SNR value.

    References
    ----------
    .. [1] A. Goldsmith, *Wireless Communications*, Cambridge University
       Press, 2005, sec. 7.2 (selection combining; from memory).

    Examples
    --------
    >>> from tonebank.theory import ber_bpsk_selection
    >>> print(f"{ber_bpsk_selection(10.0, 2):.4e}")
    2.9729e-03
    """
    count = _branch_count(branches)
    gamma = _db(ebn0_db, "ebn0_db")

    def one(g: float) -> float:
        if g == 0.0:
            return 0.5
        if math.isinf(g):
            return 0.0

        def integrand(t):
            return (-math.expm1(-t * t / g)) ** count * math.exp(-t * t)

        # The mass of e^{-t^2} lies below t = 9; the power term only shifts it.
        value, _ = integrate.quad(integrand, 0.0, 9.0, epsabs=0.0, epsrel=1e-11,
                                  limit=200)
        return value / math.sqrt(math.pi)

    out = np.array([one(float(g)) for g in gamma.reshape(-1)])
    return _finish(out.reshape(gamma.shape))


def ber_bfsk_square_law(ebn0_db, branches):
    """Bit error rate of binary orthogonal FSK with square-law combining.

    Parameters
    ----------
    ebn0_db : float or array_like of float
        Mean ``Eb/N0`` per branch in dB (diversity convention).
    branches : int
        Number of independent unit-power Rayleigh branches ``L``, 1 to 1024.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        BER, of the shape of ``ebn0_db``.

    Raises
    ------
    TypeError
        If an argument has the wrong type.
    ValueError
        If ``ebn0_db`` holds NaN or ``branches`` is out of range.

    See Also
    --------
    tonebank.combining.combine_noncoherent, ber_dpsk_combined

    Notes
    -----
    Non-coherent detection: the receiver adds the squared envelopes of
    each tone's matched-filter output over the branches and picks the
    larger sum.  Same form as :func:`ber_bpsk_mrc` [1]_,

    .. math::

       P_b = p^L \\sum_{k=0}^{L-1} \\binom{L-1+k}{k} (1-p)^k,
       \\qquad p = \\frac{1}{2 + \\bar\\gamma}.

    Cost: ``O(L)`` per SNR value.

    References
    ----------
    .. [1] J. G. Proakis, *Digital Communications*, 4th ed., McGraw-Hill,
       2001, sec. 14.4 (section number from memory).

    Examples
    --------
    >>> from tonebank.theory import ber_bfsk_square_law
    >>> print(f"{ber_bfsk_square_law(10.0, 1):.6f}")     # 1 / (2 + 10)
    0.083333
    """
    count = _branch_count(branches)
    gamma = _db(ebn0_db, "ebn0_db")
    p = np.where(np.isinf(gamma), 0.0, 1.0 / (2.0 + np.where(np.isinf(gamma), 0.0, gamma)))
    return _finish(_diversity_binary(p, count))


def ber_dpsk_combined(ebn0_db, branches):
    """Bit error rate of binary DPSK with post-detection combining over branches.

    Parameters
    ----------
    ebn0_db : float or array_like of float
        Mean ``Eb/N0`` per branch in dB (diversity convention).
    branches : int
        Number of independent unit-power Rayleigh branches ``L``, 1 to 1024.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        BER, of the shape of ``ebn0_db``.

    Raises
    ------
    TypeError
        If an argument has the wrong type.
    ValueError
        If ``ebn0_db`` holds NaN or ``branches`` is out of range.

    See Also
    --------
    ber_bfsk_square_law, ber_bpsk_mrc

    Notes
    -----
    The decision variable is :math:`\\operatorname{Re}\\sum_l y_l[n]
    y_l^*[n-1]` (the fading constant over the two symbols).  Same form as
    :func:`ber_bpsk_mrc` [1]_ with :math:`p = 1/(2(1+\\bar\\gamma))`.
    Cost: ``O(L)`` per SNR value.

    References
    ----------
    .. [1] J. G. Proakis, *Digital Communications*, 4th ed., McGraw-Hill,
       2001, sec. 14.4 (section number from memory).

    Examples
    --------
    >>> from tonebank.theory import ber_dpsk_combined
    >>> print(f"{ber_dpsk_combined(10.0, 1):.6f}")       # 1 / (2 (1 + 10))
    0.045455
    """
    count = _branch_count(branches)
    gamma = _db(ebn0_db, "ebn0_db")
    p = np.where(np.isinf(gamma), 0.0,
                 0.5 / (1.0 + np.where(np.isinf(gamma), 0.0, gamma)))
    return _finish(_diversity_binary(p, count))


def _outage_args(threshold_db, mean_snr_db, branches):
    count = _branch_count(branches)
    x = _db(threshold_db, "threshold_db")
    g = _db(mean_snr_db, "mean_snr_db")
    try:
        x, g = np.broadcast_arrays(x, g)
    except ValueError:
        raise ValueError(f"threshold_db of shape {np.shape(threshold_db)} and "
                         f"mean_snr_db of shape {np.shape(mean_snr_db)} do not "
                         "broadcast together") from None
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = x / g
    # 0/0 and inf/inf have no limit; the combiner's SNR is then undefined.
    if np.isnan(ratio).any():
        raise ValueError("threshold_db and mean_snr_db are both -inf or both +inf "
                         "somewhere; the outage probability is undefined there")
    return ratio, count


def selection_outage(threshold_db, mean_snr_db, branches):
    """Probability that the SNR after selection combining is below a threshold.

    Parameters
    ----------
    threshold_db : float or array_like of float
        SNR threshold in dB.
    mean_snr_db : float or array_like of float
        Mean SNR per branch in dB (independent unit-power Rayleigh
        branches); broadcast with ``threshold_db``.
    branches : int
        Number of branches ``L``, 1 to 1024.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        :math:`P(\\gamma_\\Sigma < x)`, of the broadcast shape.

    Raises
    ------
    TypeError
        If an argument has the wrong type.
    ValueError
        If an SNR holds NaN, the shapes do not broadcast, both SNRs are
        infinite of the same sign somewhere, or ``branches`` is out of
        range.

    See Also
    --------
    mrc_outage, selection_snr_gain, tonebank.combining.combine_selection

    Notes
    -----
    :math:`P_{out} = (1 - e^{-x/\\bar\\gamma})^L` [1]_, evaluated with
    ``expm1``.  Cost: a few operations per value.

    References
    ----------
    .. [1] A. Goldsmith, *Wireless Communications*, Cambridge University
       Press, 2005, sec. 7.2 (selection combining; from memory).

    Examples
    --------
    >>> from tonebank.theory import selection_outage
    >>> print(f"{selection_outage(0.0, 10.0, 1):.5f}  {selection_outage(0.0, 10.0, 4):.3e}")
    0.09516  8.201e-05
    """
    ratio, count = _outage_args(threshold_db, mean_snr_db, branches)
    return _finish((-np.expm1(-ratio)) ** count)


def mrc_outage(threshold_db, mean_snr_db, branches):
    """Probability that the SNR after maximal-ratio combining is below a threshold.

    Parameters
    ----------
    threshold_db : float or array_like of float
        SNR threshold in dB.
    mean_snr_db : float or array_like of float
        Mean SNR per branch in dB (independent unit-power Rayleigh
        branches, perfect estimates); broadcast with ``threshold_db``.
    branches : int
        Number of branches ``L``, 1 to 1024.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        :math:`P(\\gamma_\\Sigma < x)`, of the broadcast shape.

    Raises
    ------
    TypeError
        If an argument has the wrong type.
    ValueError
        As for :func:`selection_outage`.

    See Also
    --------
    selection_outage, ber_bpsk_mrc, tonebank.combining.combine_mrc

    Notes
    -----
    The combined SNR is the sum of ``L`` independent exponential SNRs of
    mean :math:`\\bar\\gamma`, a gamma variable of shape ``L``, so
    :math:`P_{out} = P(L, x/\\bar\\gamma)`, the regularised lower
    incomplete gamma function [1]_ (:func:`scipy.special.gammainc`).
    Cost: one special-function call per value.

    References
    ----------
    .. [1] A. Goldsmith, *Wireless Communications*, Cambridge University
       Press, 2005, sec. 7.2 (maximal-ratio combining; from memory).

    Examples
    --------
    >>> from tonebank.theory import mrc_outage
    >>> print(f"{mrc_outage(0.0, 10.0, 2):.3e}")
    4.679e-03
    """
    ratio, count = _outage_args(threshold_db, mean_snr_db, branches)
    return _finish(special.gammainc(count, ratio))


def selection_snr_gain(branches):
    """Mean SNR after selection combining, relative to one branch.

    Parameters
    ----------
    branches : int
        Number of independent, equally strong Rayleigh branches ``L``,
        1 to 1024.

    Returns
    -------
    float
        :math:`\\sum_{k=1}^{L} 1/k` (linear; maximal-ratio combining gains
        ``L``).

    Raises
    ------
    TypeError
        If ``branches`` is not an integer.
    ValueError
        If ``branches`` is out of range.

    See Also
    --------
    selection_outage

    Notes
    -----
    :math:`E[\\gamma_\\Sigma] = \\bar\\gamma \\sum_{k=1}^{L} 1/k` [1]_: each
    added branch helps less than the one before.

    References
    ----------
    .. [1] A. Goldsmith, *Wireless Communications*, Cambridge University
       Press, 2005, sec. 7.2 (from memory).

    Examples
    --------
    >>> from tonebank.theory import selection_snr_gain
    >>> selection_snr_gain(4)                  # 1 + 1/2 + 1/3 + 1/4
    2.0833333333333335
    """
    count = _branch_count(branches)
    return float(math.fsum(1.0 / k for k in range(1, count + 1)))


def ber_qam_mrc(m, ebn0_db, branches):
    r"""Bit error rate of Gray square M-QAM with MRC in independent Rayleigh fading.

    The AWGN error rate :func:`ber_qam_gray` averaged over the combined
    SNR of ``L`` independent, equal-power Rayleigh branches with perfect
    channel knowledge.

    Parameters
    ----------
    m : int
        Number of points: 4, 16, 64, ... (as :func:`ber_qam_gray`).
    ebn0_db : float or array_like of float
        Mean ``Eb/N0`` per branch in dB (diversity convention, module
        docstring).
    branches : int
        Number of branches ``L``, 1 to 1024.

    Returns
    -------
    numpy.float64 or numpy.ndarray
        Same shape as ``ebn0_db``.

    Raises
    ------
    TypeError
        Non-integer ``m`` or ``branches``, non-real ``ebn0_db``.
    ValueError
        ``m`` not a square QAM order, ``branches`` out of range.

    See Also
    --------
    ber_bpsk_mrc : the closed form for BPSK (and Gray QPSK per bit).

    Notes
    -----
    The combined SNR per bit :math:`\gamma` is Gamma distributed with
    shape :math:`L` and mean :math:`L\bar\gamma`, so

    .. math::

        P_b = \int_0^\infty P_{b,\mathrm{AWGN}}(\gamma)\,
        \frac{\gamma^{L-1} e^{-\gamma/\bar\gamma}}{(L-1)!\,\bar\gamma^L}\,d\gamma,

    the averaging over the fading distribution of M. K. Simon and M.-S.
    Alouini, *Digital Communication over Fading Channels*, 2nd ed., Wiley,
    2005, ch. 9 (from memory).  The integral is computed by adaptive
    quadrature (scipy.integrate.quad) in :math:`x = \gamma/\bar\gamma`;
    relative accuracy about 1e-8.  In OFDM every subcarrier's gain is
    Rayleigh even when the channel is frequency selective, so this is also
    the mean over the subcarriers of a multipath channel.

    Examples
    --------
    >>> from tonebank.theory import ber_bpsk_mrc, ber_qam_mrc
    >>> print(f"{float(ber_qam_mrc(4, 10.0, 2)):.6e}")    # Gray QPSK = BPSK per bit
    1.599101e-03
    >>> print(f"{float(ber_bpsk_mrc(10.0, 2)):.6e}")
    1.599101e-03
    """
    _qam_levels(m)
    count = _branch_count(branches)
    ebn0 = _as_real_array(ebn0_db, "ebn0_db")
    log_norm = -math.lgamma(count)

    def point(mean_db: float) -> float:
        mean = 10.0 ** (mean_db / 10.0)

        def integrand(x):
            awgn = float(ber_qam_gray(m, 10.0 * math.log10(mean * x))) if x > 0 else 0.5
            return awgn * math.exp((count - 1) * math.log(x) - x + log_norm) if x > 0 \
                else (awgn if count == 1 else 0.0)
        # The density's mass lies within a few tens of its mean; split there
        # so quad sees the small-x region where high-SNR errors come from.
        edges = [0.0, 1e-3 * count, 0.1 * count, count, 4.0 * count + 20.0, np.inf]
        return math.fsum(integrate.quad(integrand, a, b, epsabs=0.0, epsrel=1e-10,
                                        limit=200)[0] for a, b in zip(edges, edges[1:]))

    return _finish(np.vectorize(point, otypes=[float])(ebn0))
