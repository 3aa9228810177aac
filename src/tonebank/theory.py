"""Closed-form error rates in AWGN, to plot beside Monte-Carlo curves.

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
