r"""Additive white Gaussian noise with explicit SNR conventions.

:func:`tonebank.channel.awgn` adds white Gaussian noise to a sampled signal at a requested
signal-to-noise ratio.  The ratio can be stated in one of three
conventions, and the conversion functions of this module move between
them:

``"sample"``
    per-sample SNR, :math:`P/\sigma^2`, with :math:`P` the mean of
    :math:`|x|^2` and :math:`\sigma^2` the noise variance per sample;
``"esn0"``
    :math:`E_s/N_0` per used subcarrier, with :math:`E_s` the energy
    *transmitted* per subcarrier symbol, its share of the cyclic prefix
    included;
``"ebn0"``
    :math:`E_b/N_0 = (E_s/N_0) / (b R)` for ``b`` coded bits per
    subcarrier symbol at code rate ``R``.

The conversions take the subcarrier plan (a ``tonebank.CarrierPlan``)
for its FFT size, number of used subcarriers and cyclic prefix.

Notes
-----
The waveforms of tonebank use unitary transforms.  With oversampling
factor :math:`L` the transform size is :math:`N = L\,n_\mathrm{fft}`, a
symbol is synthesised as :math:`x = N^{-1/2}\,\mathrm{IFFT}_N(X)` and
analysed by the unitary FFT, and a cyclic prefix of
:math:`L c` samples is copied in front (:math:`c` counted at the base
rate; :math:`\bar c` is the mean over the plan's prefix pattern).  A
symbol therefore lasts :math:`M = L (n_\mathrm{fft} + \bar c)` samples
on average.  Let :math:`K` be the number of used subcarriers, each
carrying symbols of mean energy :math:`E_g = \mathrm{E}|X_k|^2` on the
grid, and let the sample period be :math:`T = 1/f_s`.

*Complex baseband.*  By Parseval's relation the FFT window of a symbol
holds the grid energy :math:`K E_g`, so the mean power per sample is
:math:`P = K E_g / N` (the prefix copies samples of the same mean power).
The energy transmitted per subcarrier symbol, prefix included, is
:math:`E_s = P M T / K`.  Complex white noise of variance
:math:`\sigma^2` per sample has the two-sided spectral density
:math:`N_0 = \sigma^2 T`.  Hence

.. math::

    \frac{E_s}{N_0} = \frac{P}{\sigma^2}\,
    \frac{L (n_\mathrm{fft} + \bar c)}{K}.

After the prefix is removed the unitary FFT leaves the grid value (mean
energy :math:`E_g`) plus noise of variance :math:`\sigma^2` in every bin,
so the SNR per bin seen by the receiver is

.. math::

    \mathrm{SNR}_\mathrm{bin} = \frac{E_g}{\sigma^2}
    = \frac{P}{\sigma^2}\,\frac{N}{K}
    = \frac{E_s}{N_0}\,\frac{n_\mathrm{fft}}{n_\mathrm{fft} + \bar c},

smaller than :math:`E_s/N_0` by the prefix loss
:math:`10\log_{10}((n_\mathrm{fft} + \bar c)/n_\mathrm{fft})` dB and
independent of :math:`L`.

*Real baseband (DMT).*  The grid is Hermitian,
:math:`X_{N-k} = X_k^*`, and :math:`K` counts the positive-frequency
subcarriers (strictly between DC and Nyquist); each also occupies its
image bin :math:`N-k`, so :math:`P = 2 K E_g / N`.  The noise is real
with variance :math:`\sigma^2` per sample.  For a real signal
:math:`N_0` is the *one-sided* density, :math:`N_0 = 2\sigma^2 T`, the
usual convention for real (passband) noise of two-sided density
:math:`N_0/2`.  Then

.. math::

    \frac{E_s}{N_0} = \frac{P}{\sigma^2}\,
    \frac{L (n_\mathrm{fft} + \bar c)}{2K}.

The unitary FFT of real white noise of variance :math:`\sigma^2` gives
in each bin :math:`0 < k < N/2` a circular complex value of variance
:math:`\sigma^2`, so :math:`\mathrm{SNR}_\mathrm{bin} = E_g/\sigma^2 =
(P/\sigma^2)\,N/(2K)`, and the relation to :math:`E_s/N_0` (the prefix
loss above) is the same as for complex baseband.  This is what the
one-sided :math:`N_0` buys: a given :math:`E_s/N_0` gives the same error
rate on a DMT subcarrier as on a complex one.

*Bits.*  :math:`E_b/N_0 = (E_s/N_0)/(b R)`.  The energy of pilots is
not charged to the bits when pilots are among the :math:`K` used
subcarriers; to charge it, pass
``bits_per_symbol = b * n_data / n_used``.

In every convention the noise variance returned by :func:`tonebank.channel.awgn`,
:math:`\sigma^2`, is both the per-sample variance of the noise (the
total over real and imaginary parts for complex noise) and the noise
variance per bin after unitary analysis, which is what an LLR demapper
needs.

References
----------
J. G. Proakis and M. Salehi, *Digital Communications*, 5th ed.,
McGraw-Hill, 2008: the bandpass noise model with two-sided density
:math:`N_0/2` and the definitions of :math:`E_s/N_0` and
:math:`E_b/N_0` (chapter 2, from memory).
"""

from __future__ import annotations

import numbers
import operator

import numpy as np

from .._checks import generator, integer

__all__ = [
    "awgn",
    "ebn0_to_snr_db",
    "esn0_to_bin_snr_db",
    "esn0_to_snr_db",
    "snr_to_esn0_db",
    "snr_to_noise_var",
]

_CONVENTIONS = ("sample", "esn0", "ebn0")

# Input dtype -> dtype of the noisy output.  Integers become float64 as
# in numpy arithmetic; float16 is widened to float32 (noise below the
# float16 resolution would be lost).
_RESULT_DTYPE = {
    np.dtype(np.complex128): np.dtype(np.complex128),
    np.dtype(np.complex64): np.dtype(np.complex64),
    np.dtype(np.float64): np.dtype(np.float64),
    np.dtype(np.float32): np.dtype(np.float32),
    np.dtype(np.float16): np.dtype(np.float32),
}


# -- argument checks -----------------------------------------------------------

def _check_signal(x) -> np.ndarray:
    """Return *x* as an array of its result dtype, or raise naming ``x``."""
    if type(x) is not np.ndarray:
        try:
            x = np.asarray(x)
        except (TypeError, ValueError) as exc:
            raise TypeError(f"x must be an array of numbers; got {type(x).__name__} "
                            f"({exc})") from None
    dtype = _RESULT_DTYPE.get(x.dtype)
    if dtype is None:
        if x.dtype.kind in "iu":
            dtype = np.dtype(np.float64)
        else:
            raise TypeError(
                f"x has dtype {x.dtype}, which awgn does not take; allowed: complex64, "
                "complex128 (complex noise), float16, float32, float64 or integers (real "
                "noise); convert other data explicitly, e.g. x.astype(np.complex128)")
    if x.ndim == 0:
        raise ValueError("x must have at least one dimension (the last axis holds the "
                         "samples); got a 0-d array")
    if x.shape[-1] == 0:
        raise ValueError(f"x has shape {x.shape}, with no samples on the last axis; "
                         "at least one sample is needed")
    return x.astype(dtype, copy=False)


def _db_values(value, name: str) -> np.ndarray:
    """A float64 array of finite decibel values, or raise naming *name*."""
    try:
        arr = np.asarray(value)
    except (TypeError, ValueError):
        arr = np.asarray(value, dtype=object)
    if arr.dtype.kind not in "iuf":
        raise TypeError(f"{name} must be a real number or an array of real numbers in "
                        f"dB; got {value!r} (dtype {arr.dtype})")
    arr = arr.astype(np.float64)
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite; got {value!r}")
    return arr


def _positive_values(value, name: str) -> np.ndarray:
    """A float64 array of finite positive values, or raise naming *name*."""
    try:
        arr = np.asarray(value)
    except (TypeError, ValueError):
        arr = np.asarray(value, dtype=object)
    if arr.dtype.kind not in "iuf":
        raise TypeError(f"{name} must be a positive real number or an array of them; "
                        f"got {value!r}")
    arr = arr.astype(np.float64)
    if not np.all(np.isfinite(arr) & (arr > 0)):
        raise ValueError(f"{name} must be finite and > 0; got {value!r}")
    return arr


def _positive_scalar(value, name: str, *, upper: float | None = None) -> float:
    """A finite real scalar in (0, upper], or raise naming *name*."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a real number; got {value!r} "
                        f"({type(value).__name__})")
    result = float(value)
    if not (np.isfinite(result) and result > 0 and (upper is None or result <= upper)):
        allowed = f"0 < {name} <= {upper:g}" if upper is not None else f"{name} > 0, finite"
        raise ValueError(f"{name}={value!r} is not allowed; need {allowed}")
    return result


def _check_real_flag(real) -> bool:
    if not isinstance(real, (bool, np.bool_)):
        raise TypeError(f"real must be True or False; got {real!r}")
    return bool(real)


def _plan_dims(plan, real: bool) -> tuple[int, int, float]:
    """``(n_fft, n_used, mean_cp_length)`` of a plan, checked."""
    if plan is None:
        raise TypeError("plan is required for this conversion; pass a tonebank.CarrierPlan "
                        "(an object with n_fft, n_used and mean_cp_length)")
    values = []
    for attr in ("n_fft", "n_used", "mean_cp_length"):
        if not hasattr(plan, attr):
            raise TypeError(f"plan must be a tonebank.CarrierPlan (an object with n_fft, "
                            f"n_used and mean_cp_length); got {type(plan).__name__} "
                            f"without {attr!r}")
        values.append(getattr(plan, attr))
    try:
        n_fft, n_used = operator.index(values[0]), operator.index(values[1])
        mean_cp = float(values[2])
    except (TypeError, ValueError):
        raise TypeError(f"plan has n_fft={values[0]!r}, n_used={values[1]!r}, "
                        f"mean_cp_length={values[2]!r}; need two integers and a "
                        "real number") from None
    limit = n_fft // 2 if real else n_fft
    if n_fft < 1 or not 1 <= n_used <= limit or not (np.isfinite(mean_cp) and mean_cp >= 0):
        where = "n_fft // 2 (real signal: positive-frequency subcarriers)" if real else "n_fft"
        raise ValueError(f"plan has n_fft={n_fft}, n_used={n_used}, mean_cp_length="
                         f"{mean_cp}; need n_fft >= 1, 1 <= n_used <= {where} and a "
                         "finite mean_cp_length >= 0")
    return n_fft, n_used, mean_cp


def _esn0_per_sample_snr(plan, oversampling: int, real: bool) -> float:
    """Linear ratio (Es/N0) / (P/sigma^2) = L (n_fft + mean_cp) / (K or 2K)."""
    n_fft, n_used, mean_cp = _plan_dims(plan, real)
    return oversampling * (n_fft + mean_cp) / (n_used * (2 if real else 1))


def _as_result(arr: np.ndarray):
    """A Python float for a 0-d result, the float64 array otherwise."""
    return float(arr) if arr.ndim == 0 else arr


# -- conversions ---------------------------------------------------------------

def snr_to_noise_var(snr_db, signal_power):
    r"""Noise variance that gives a per-sample SNR at a signal power.

    Parameters
    ----------
    snr_db : array_like of float
        Per-sample SNR :math:`P/\sigma^2` in dB, finite.
    signal_power : array_like of float
        Mean signal power per sample :math:`P` (mean of :math:`|x|^2`),
        finite and > 0; broadcast against ``snr_db``.

    Returns
    -------
    float or numpy.ndarray
        :math:`\sigma^2 = P \cdot 10^{-\mathrm{SNR}/10}`, float64 of the
        broadcast shape (a Python float when both inputs are scalars).

    Raises
    ------
    TypeError
        If an input is not real-valued.
    ValueError
        If ``snr_db`` is not finite, ``signal_power`` is not finite and
        positive, or the shapes do not broadcast.

    See Also
    --------
    awgn : adds noise of this variance.

    Notes
    -----
    For complex noise :math:`\sigma^2` is the total over the real and
    imaginary parts (each carries :math:`\sigma^2/2`).

    Examples
    --------
    >>> from tonebank.channel import snr_to_noise_var
    >>> snr_to_noise_var(10.0, 2.0)
    0.2
    """
    snr = _db_values(snr_db, "snr_db")
    power = _positive_values(signal_power, "signal_power")
    try:
        result = power * 10.0 ** (-snr / 10.0)
    except ValueError:
        raise ValueError(f"snr_db (shape {snr.shape}) and signal_power (shape {power.shape}) "
                         "do not broadcast together") from None
    return _as_result(result)


def snr_to_esn0_db(snr_db, plan, *, oversampling=1, real=False):
    r"""Convert a per-sample SNR to :math:`E_s/N_0` per used subcarrier.

    Parameters
    ----------
    snr_db : array_like of float
        Per-sample SNR :math:`P/\sigma^2` in dB, finite.
    plan : object
        The subcarrier plan, a ``tonebank.CarrierPlan``; any object with
        the integer attributes ``n_fft`` and ``n_used`` and the real
        attribute ``mean_cp_length`` (base-rate samples) will do.
    oversampling : int, optional
        Oversampling factor :math:`L` of the signal (default 1): the
        signal runs at ``L`` times the base rate of the plan.
    real : bool, optional
        True for a real-valued (DMT, Hermitian-symmetric) signal, whose
        ``n_used`` positive-frequency subcarriers each occupy two bins.

    Returns
    -------
    float or numpy.ndarray
        :math:`E_s/N_0` in dB, float64 of the shape of ``snr_db`` (a
        Python float for a scalar).

    Raises
    ------
    TypeError
        If ``snr_db`` is not real-valued, ``plan`` lacks an attribute,
        ``oversampling`` is not an integer or ``real`` is not a bool.
    ValueError
        If ``snr_db`` is not finite, ``oversampling < 1`` or the plan's
        sizes are inconsistent.

    See Also
    --------
    esn0_to_snr_db : the inverse.

    Notes
    -----
    :math:`E_s/N_0 = (P/\sigma^2)\,L(n_\mathrm{fft} + \bar c)/K'` with
    :math:`K' = n_\mathrm{used}` for complex and :math:`2 n_\mathrm{used}`
    for real signals; the derivation is in the notes of
    :mod:`tonebank.channel.noise`.  Cost: one pass over ``snr_db``.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from tonebank.channel import snr_to_esn0_db
    >>> plan = SimpleNamespace(n_fft=64, n_used=52, mean_cp_length=16.0)
    >>> round(snr_to_esn0_db(10.0, plan), 4)     # + 10 log10(80 / 52)
    11.8709
    """
    snr = _db_values(snr_db, "snr_db")
    factor = _esn0_per_sample_snr(plan, integer(oversampling, "oversampling", minimum=1),
                                  _check_real_flag(real))
    return _as_result(snr + 10.0 * np.log10(factor))


def esn0_to_snr_db(esn0_db, plan, *, oversampling=1, real=False):
    r"""Convert :math:`E_s/N_0` per used subcarrier to a per-sample SNR.

    Parameters
    ----------
    esn0_db : array_like of float
        :math:`E_s/N_0` in dB, with :math:`E_s` the transmitted energy
        per subcarrier symbol including its share of the cyclic prefix;
        finite.
    plan : object
        The subcarrier plan, a ``tonebank.CarrierPlan``; any object with
        the integer attributes ``n_fft`` and ``n_used`` and the real
        attribute ``mean_cp_length`` (base-rate samples) will do.
    oversampling : int, optional
        Oversampling factor :math:`L` of the signal (default 1).
    real : bool, optional
        True for a real-valued (DMT) signal; :math:`N_0` is then the
        one-sided noise density (see the notes of
        :mod:`tonebank.channel.noise`).

    Returns
    -------
    float or numpy.ndarray
        Per-sample SNR :math:`P/\sigma^2` in dB, float64 of the shape of
        ``esn0_db`` (a Python float for a scalar).

    Raises
    ------
    TypeError
        If ``esn0_db`` is not real-valued, ``plan`` lacks an attribute,
        ``oversampling`` is not an integer or ``real`` is not a bool.
    ValueError
        If ``esn0_db`` is not finite, ``oversampling < 1`` or the plan's
        sizes are inconsistent.

    See Also
    --------
    snr_to_esn0_db : the inverse.
    ebn0_to_snr_db : the same from :math:`E_b/N_0`.
    esn0_to_bin_snr_db : the SNR per bin after analysis.

    Notes
    -----
    :math:`P/\sigma^2 = (E_s/N_0)\,K'/(L(n_\mathrm{fft} + \bar c))` with
    :math:`K' = n_\mathrm{used}` (complex) or :math:`2 n_\mathrm{used}`
    (real).  Cost: one pass over ``esn0_db``.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from tonebank.channel import esn0_to_snr_db
    >>> plan = SimpleNamespace(n_fft=64, n_used=52, mean_cp_length=16.0)
    >>> round(esn0_to_snr_db(10.0, plan, oversampling=2), 4)
    5.1188
    """
    esn0 = _db_values(esn0_db, "esn0_db")
    factor = _esn0_per_sample_snr(plan, integer(oversampling, "oversampling", minimum=1),
                                  _check_real_flag(real))
    return _as_result(esn0 - 10.0 * np.log10(factor))


def ebn0_to_snr_db(ebn0_db, plan, bits_per_symbol, *, code_rate=1.0, oversampling=1,
                   real=False):
    r"""Convert :math:`E_b/N_0` to a per-sample SNR.

    Parameters
    ----------
    ebn0_db : array_like of float
        :math:`E_b/N_0` in dB, finite.
    plan : object
        The subcarrier plan, a ``tonebank.CarrierPlan``; any object with
        the integer attributes ``n_fft`` and ``n_used`` and the real
        attribute ``mean_cp_length`` (base-rate samples) will do.
    bits_per_symbol : float
        Coded bits per subcarrier symbol (2 for QPSK, 4 for 16-QAM; a
        mean for bit-loaded subcarriers), > 0.
    code_rate : float, optional
        Code rate :math:`R`, ``0 < code_rate <= 1`` (default 1: uncoded).
    oversampling : int, optional
        Oversampling factor :math:`L` of the signal (default 1).
    real : bool, optional
        True for a real-valued (DMT) signal.

    Returns
    -------
    float or numpy.ndarray
        Per-sample SNR in dB, float64 of the shape of ``ebn0_db`` (a
        Python float for a scalar).

    Raises
    ------
    TypeError
        If an argument has the wrong type (as for
        :func:`esn0_to_snr_db`, and ``bits_per_symbol`` or ``code_rate``
        not real numbers).
    ValueError
        If ``ebn0_db`` is not finite, ``bits_per_symbol <= 0``,
        ``code_rate`` is outside (0, 1], ``oversampling < 1`` or the
        plan's sizes are inconsistent.

    See Also
    --------
    esn0_to_snr_db

    Notes
    -----
    :math:`E_s/N_0 = (E_b/N_0)\, b R`, then as :func:`esn0_to_snr_db`.
    Pilot energy is not charged to the bits (see the notes of
    :mod:`tonebank.channel.noise`).  Cost: one pass over ``ebn0_db``.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from tonebank.channel import ebn0_to_snr_db, esn0_to_snr_db
    >>> plan = SimpleNamespace(n_fft=64, n_used=52, mean_cp_length=16.0)
    >>> # 16-QAM at rate 1/2 carries 2 information bits: Es/N0 = Eb/N0 + 3.01 dB
    >>> a = ebn0_to_snr_db(6.0, plan, 4, code_rate=0.5)
    >>> b = esn0_to_snr_db(6.0 + 10 * np.log10(2.0), plan)
    >>> bool(np.isclose(a, b))
    True
    """
    ebn0 = _db_values(ebn0_db, "ebn0_db")
    bits = _positive_scalar(bits_per_symbol, "bits_per_symbol")
    rate = _positive_scalar(code_rate, "code_rate", upper=1.0)
    factor = _esn0_per_sample_snr(plan, integer(oversampling, "oversampling", minimum=1),
                                  _check_real_flag(real))
    return _as_result(ebn0 + 10.0 * np.log10(bits * rate) - 10.0 * np.log10(factor))


def esn0_to_bin_snr_db(esn0_db, plan):
    r"""SNR per bin after analysis, from :math:`E_s/N_0` (the prefix loss).

    Parameters
    ----------
    esn0_db : array_like of float
        :math:`E_s/N_0` in dB (transmitted energy, prefix included),
        finite.
    plan : object
        The subcarrier plan, a ``tonebank.CarrierPlan``; any object with
        the integer attributes ``n_fft`` and ``n_used`` and the real
        attribute ``mean_cp_length`` (base-rate samples) will do.

    Returns
    -------
    float or numpy.ndarray
        :math:`E_g/\sigma^2` in dB: the mean grid energy of a subcarrier
        over the per-bin noise variance after the prefix is removed and
        the symbol analysed by the unitary FFT.  float64 of the shape of
        ``esn0_db`` (a Python float for a scalar).

    Raises
    ------
    TypeError
        If ``esn0_db`` is not real-valued or ``plan`` lacks an attribute.
    ValueError
        If ``esn0_db`` is not finite or the plan's sizes are inconsistent.

    See Also
    --------
    esn0_to_snr_db

    Notes
    -----
    :math:`\mathrm{SNR}_\mathrm{bin} = (E_s/N_0)\,n_\mathrm{fft} /
    (n_\mathrm{fft} + \bar c)`, for complex and real (DMT) signals alike
    and for any oversampling factor; the derivation is in the notes of
    :mod:`tonebank.channel.noise`.  Cost: one pass over ``esn0_db``.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from tonebank.channel import esn0_to_bin_snr_db
    >>> plan = SimpleNamespace(n_fft=64, n_used=52, mean_cp_length=16.0)
    >>> round(esn0_to_bin_snr_db(10.0, plan), 4)   # 10 log10(64 / 80) = -0.9691
    9.0309
    """
    esn0 = _db_values(esn0_db, "esn0_db")
    n_fft, _, mean_cp = _plan_dims(plan, False)
    return _as_result(esn0 + 10.0 * np.log10(n_fft / (n_fft + mean_cp)))


# -- the channel ---------------------------------------------------------------

def _mean_power(x: np.ndarray) -> np.ndarray:
    """Mean of ``|x|^2`` over the last axis, accumulated in float64."""
    parts = (x.real, x.imag) if x.dtype.kind == "c" else (x,)
    total = sum(np.einsum("...i,...i->...", p, p, dtype=np.float64) for p in parts)
    return np.asarray(total / x.shape[-1], dtype=np.float64)


def _check_extras(convention, plan, oversampling, bits_per_symbol, code_rate) -> None:
    """Refuse arguments the chosen convention would ignore (they signal a mix-up)."""
    if convention == "sample":
        if plan is not None:
            raise ValueError("plan is used only with convention='esn0' or 'ebn0'; with "
                             "convention='sample' snr_db is the per-sample SNR. Pass "
                             "convention='esn0' (or 'ebn0'), or drop plan")
        if oversampling != 1:
            raise ValueError(f"oversampling={oversampling} is used only with convention="
                             "'esn0' or 'ebn0'; with convention='sample' it must stay 1")
    if convention != "ebn0":
        if bits_per_symbol is not None:
            raise ValueError(f"bits_per_symbol={bits_per_symbol!r} is used only with "
                             f"convention='ebn0'; got convention={convention!r}")
        if code_rate != 1.0:
            raise ValueError(f"code_rate={code_rate!r} is used only with convention='ebn0'; "
                             f"got convention={convention!r}")


def awgn(x, snr_db, *, rng=None, convention="sample", plan=None, oversampling=1,
         bits_per_symbol=None, code_rate=1.0, reference="measured",
         return_noise_var=False):
    r"""Add white Gaussian noise at a stated SNR.

    Parameters
    ----------
    x : array_like
        Signal of shape ``(..., n_samples)``: the last axis holds samples
        and leading axes are batch.
        complex128 and complex64 get circular complex noise and keep
        their dtype; float64 and float32 get real noise and keep their
        dtype (float16 becomes float32, integers float64).
    snr_db : float or array_like of float
        The SNR in dB in the chosen ``convention``, finite.  A scalar, or
        an array that broadcasts to the leading shape ``x.shape[:-1]``
        without enlarging it (one SNR per row of samples): for ``x`` of
        shape ``(B, S, n)`` shapes ``()``, ``(S,)``, ``(B, 1)`` and
        ``(B, S)`` are allowed.
    rng : numpy.random.Generator or int or None, optional
        Source of randomness: a Generator (advanced by the call), a
        non-negative integer seed, or None for fresh entropy.
    convention : {"sample", "esn0", "ebn0"}, optional
        ``"sample"`` (default): ``snr_db`` is the per-sample SNR
        :math:`P/\sigma^2`.  ``"esn0"``: :math:`E_s/N_0` per used
        subcarrier, prefix energy included (needs ``plan``).
        ``"ebn0"``: :math:`E_b/N_0` (needs ``plan`` and
        ``bits_per_symbol``).  Real ``x`` uses the real (DMT) form of the
        conversion (one-sided :math:`N_0`).
    plan : object, optional
        The subcarrier plan of ``x`` (a ``tonebank.CarrierPlan``; any
        object with ``n_fft``, ``n_used`` and ``mean_cp_length`` will do),
        for ``"esn0"`` and ``"ebn0"`` only.
    oversampling : int, optional
        Oversampling factor of ``x`` relative to the plan's base rate
        (default 1), for ``"esn0"`` and ``"ebn0"`` only.
    bits_per_symbol : float, optional
        Coded bits per subcarrier symbol, for ``"ebn0"`` only.
    code_rate : float, optional
        Code rate in (0, 1] (default 1), for ``"ebn0"`` only.
    reference : "measured" or float, optional
        Signal power :math:`P` the SNR refers to.  ``"measured"``
        (default): the mean of :math:`|x|^2` over the last axis, one
        value per row, so each row of a batch gets its own SNR.  Measure
        over the whole transmission (not single symbols, whose power
        varies with the data); for one power over the whole array pass
        ``reference=float(np.mean(abs(x)**2))``.  A positive float: the
        nominal power, used for every row.
    return_noise_var : bool, optional
        Also return the noise variance.

    Returns
    -------
    y : numpy.ndarray
        ``x`` plus noise, of the shape of ``x`` and the result dtype
        described under ``x``.
    noise_var : float or numpy.ndarray
        Only with ``return_noise_var=True``: float64 of shape
        ``x.shape[:-1]`` holding :math:`\sigma^2`, the noise
        variance per sample (for complex noise the total over real and
        imaginary parts), which is also the per-bin noise variance after
        unitary analysis.  A Python float for 1-D ``x``.

    Raises
    ------
    TypeError
        If ``x`` is not numeric (or is boolean, object, extended
        precision ...), ``snr_db`` is not real-valued, ``rng``,
        ``reference``, ``oversampling``, ``bits_per_symbol`` or
        ``code_rate`` has the wrong type, ``convention`` is not a string,
        or ``plan`` lacks an attribute.
    ValueError
        If ``x`` is 0-d or has no samples; ``snr_db`` is not finite or
        does not broadcast to ``x.shape[:-1]``; ``convention`` or
        ``reference`` is unknown; ``reference`` is not > 0; ``plan`` is
        missing for ``"esn0"`` or ``"ebn0"``; a row of
        ``x`` has zero or non-finite power with ``reference="measured"``;
        ``oversampling < 1``; ``bits_per_symbol`` is missing for
        ``"ebn0"`` or not > 0; ``code_rate`` is outside (0, 1]; or an
        argument is given that the convention does not use (``plan`` or
        ``oversampling`` with ``"sample"``, ``bits_per_symbol`` or
        ``code_rate`` without ``"ebn0"``) -- a sign of a mixed-up SNR.

    See Also
    --------
    snr_to_noise_var, esn0_to_snr_db, ebn0_to_snr_db, esn0_to_bin_snr_db

    Notes
    -----
    The noise variance is

    .. math::

        \sigma^2 = \frac{P}{\gamma}\, F, \qquad
        F = \begin{cases}
        1 & \text{sample}\\
        L (n_\mathrm{fft} + \bar c) / K' & \text{esn0}\\
        L (n_\mathrm{fft} + \bar c) / (K' b R) & \text{ebn0}
        \end{cases}

    with :math:`\gamma = 10^{s/10}` for ``snr_db`` :math:`= s`, :math:`K' =
    n_\mathrm{used}` for complex and :math:`2 n_\mathrm{used}` for real
    ``x``; the module notes of :mod:`tonebank.channel.noise` derive it.
    :math:`E_s` is the mean over all used subcarriers (pilots
    included) and the prefix pattern; a signal that holds silence
    (gaps, guard intervals) lowers the measured power, so pass the
    nominal ``reference`` there: ``n_used * Es_grid / (oversampling *
    n_fft)`` for a complex signal whose used bins carry mean energy
    ``Es_grid``, twice that for a real (DMT) one.

    Noise is drawn in float64 with ``rng.standard_normal`` in C order of
    ``x`` (real then imaginary part of each complex sample), scaled, then
    rounded to the precision of ``x`` and added: a complex64 signal gets
    the complex128 noise of the same seed, rounded.  The draws depend
    only on the shape of ``x``, so one seed gives the same noise
    realisation, scaled, at every SNR of a sweep.  Samples that are NaN
    or infinite stay so (with a nominal ``reference``).  Cost: one
    Gaussian draw per real degree of freedom and a few passes over ``x``;
    the float64 noise takes twice the memory of a complex64 ``x``.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.channel import awgn
    >>> x = np.exp(2j * np.pi * 0.1 * np.arange(10_000))      # unit power
    >>> y, noise_var = awgn(x, 10.0, rng=1, return_noise_var=True)
    >>> y.dtype, round(noise_var, 12)
    (dtype('complex128'), 0.1)
    >>> round(float(np.mean(abs(y - x) ** 2)), 2)
    0.1

    :math:`E_s/N_0` on an OFDM signal of a 64-bin plan with 52 used bins
    and a 16-sample prefix (a stand-in object for the plan):

    >>> from types import SimpleNamespace
    >>> plan = SimpleNamespace(n_fft=64, n_used=52, mean_cp_length=16.0)
    >>> _, noise_var = awgn(x, 10.0, convention="esn0", plan=plan,
    ...                     reference=1.0, rng=1, return_noise_var=True)
    >>> round(noise_var, 6)              # 1.0 * (80 / 52) / 10
    0.153846
    """
    x = _check_signal(x)
    real = x.dtype.kind == "f"
    lead = x.shape[:-1]

    snr = _db_values(snr_db, "snr_db")
    try:
        fits = np.broadcast_shapes(snr.shape, lead) == lead
    except ValueError:
        fits = False
    if not fits:
        raise ValueError(f"snr_db has shape {snr.shape}, which does not broadcast to the "
                         f"leading shape {lead} of x (x.shape={x.shape}); pass a scalar or "
                         "one SNR per row of samples")

    if not isinstance(convention, str):
        raise TypeError(f"convention must be a string, one of {_CONVENTIONS}; "
                        f"got {convention!r}")
    if convention not in _CONVENTIONS:
        raise ValueError(f"convention={convention!r} is unknown; allowed: "
                         + ", ".join(repr(c) for c in _CONVENTIONS))
    oversampling = integer(oversampling, "oversampling", minimum=1)
    rate = _positive_scalar(code_rate, "code_rate", upper=1.0)
    _check_extras(convention, plan, oversampling, bits_per_symbol, rate)

    factor = 1.0
    if convention != "sample":
        if plan is None:
            raise ValueError(f"convention={convention!r} needs plan (a tonebank.CarrierPlan) "
                             "to relate the SNR to the per-sample noise")
        factor = _esn0_per_sample_snr(plan, oversampling, real)
        if convention == "ebn0":
            if bits_per_symbol is None:
                raise ValueError("convention='ebn0' needs bits_per_symbol (coded bits per "
                                 "subcarrier symbol, e.g. 2 for QPSK)")
            factor /= _positive_scalar(bits_per_symbol, "bits_per_symbol") * rate

    if isinstance(reference, str):
        if reference != "measured":
            raise ValueError(f"reference={reference!r} is unknown; allowed: 'measured' or "
                             "a positive float (the nominal signal power)")
        power = _mean_power(x)
        bad = ~(np.isfinite(power) & (power > 0))
        if np.any(bad):
            row = tuple(int(i) for i in np.argwhere(bad)[0])
            where = f" in row {row}" if row else ""
            raise ValueError(
                f"x has zero or non-finite power{where} (mean |x|^2 = {float(power[row])!r}); "
                "reference='measured' needs every row to carry a finite, non-zero signal. "
                "Pass a nominal reference=<signal power> instead")
    else:
        power = np.float64(_positive_scalar(reference, "reference"))

    noise_var = np.broadcast_to(power * factor / 10.0 ** (snr / 10.0), lead).astype(np.float64)

    gen = generator(rng)
    if real:
        noise = gen.standard_normal(x.shape)
        noise *= np.sqrt(noise_var)[..., np.newaxis]
    else:
        # (..., n, 2) float64 viewed as (..., n) complex128: the real and
        # imaginary parts of a sample are consecutive draws.
        noise = gen.standard_normal(x.shape + (2,)).view(np.complex128)[..., 0]
        noise *= np.sqrt(noise_var / 2.0)[..., np.newaxis]
    y = x + noise.astype(x.dtype, copy=False)
    if return_noise_var:
        return y, _as_result(noise_var)
    return y
