r"""Peak-to-average power ratio (PAPR): measurement and peak reduction.

An OFDM symbol is a sum of many independently modulated subcarriers, so
its samples are nearly complex Gaussian and its envelope now and then
rises far above the mean.  This module measures that (per symbol, with an
oversampled transform so that peaks between Nyquist samples are seen),
gives the theoretical distribution to compare with, and offers three
ways of lowering the peaks:

* :func:`clip` -- limit the envelope (phase kept), with the gain and
  distortion it implies from :func:`clipping_theory`;
* :func:`clip_and_filter` -- clip and remove the out-of-band products
  again, several times over;
* :class:`SelectiveMapping` -- send, per symbol, the lowest-peak of
  several phase-rotated versions, and tell (or let) the receiver find
  which one;
* :func:`tone_reservation` -- add a peak-cancelling signal on tones kept
  free of data;
* :func:`active_constellation_extension` -- move the outer constellation
  points further out, where that lowers the peaks and cannot cause a
  wrong decision.

Conventions
-----------
Frequency grids are in natural FFT order (see :mod:`tonebank.plan`), with
shape ``(..., n_symbols, n_fft)``.  Oversampling by ``L`` zero-pads the
middle of the spectrum to ``M = L * n_fft`` points: bin ``k`` (natural
order) goes to position ``k`` when ``k < n_fft - n_fft // 2`` and to
``k + M - n_fft`` otherwise, the placement :class:`tonebank.CpOfdm` uses.
Time samples are the unitary inverse DFT of ``M`` points, so a symbol's
energy is the same in both domains.  PAPR is

.. math::

    \mathrm{PAPR} = \frac{\max_j |x_j|^2}{\frac{1}{M}\sum_j |x_j|^2},

measured per symbol (the mean over that symbol's own samples), in dB.

Power figures here are engineering estimates from simulation models, not
compliance measurements; defer to local radio regulations and accredited
test practice.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np
import scipy.special

from . import _kernel
from ._checks import generator, integer, real_array
from .constellation import Constellation
from .metrics import ErrorCount, symbol_errors
from .plan import CarrierPlan
from .transforms import fft

__all__ = [
    "ClipFilterResult",
    "ClippingTheory",
    "PeakReductionResult",
    "SelectiveMapping",
    "SlmSymbols",
    "active_constellation_extension",
    "ccdf_theory",
    "clip",
    "clip_and_filter",
    "clipping_theory",
    "oversample",
    "papr_ccdf",
    "papr_db",
    "symbol_papr_db",
    "tone_reservation",
]

_C128 = np.dtype(np.complex128)
_C64 = np.dtype(np.complex64)
#: Complex values oversampled at once by symbol_papr_db (32 MiB in complex128).
_PAPR_BLOCK_ELEMENTS = 1 << 21


# -- argument checks -------------------------------------------------------------


def _complex_array(value, name: str, *, min_ndim: int = 1) -> np.ndarray:
    """``value`` as complex64/complex128 (complex64 kept), finite, ndim checked."""
    arr = np.asarray(value)
    if arr.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric (complex or real), got dtype {arr.dtype}")
    if arr.ndim < min_ndim:
        raise ValueError(f"{name} must have at least {min_ndim} dimension(s), got shape "
                         f"{arr.shape}")
    dtype = _C64 if arr.dtype in (np.complex64, np.float32, np.float16) else _C128
    arr = arr.astype(dtype, copy=False)
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} holds NaN or infinite values; PAPR and peak reduction "
                         "need finite samples")
    return arr


def _real(value, name: str) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a real number, got {value!r} "
                        f"({type(value).__name__})")
    value = float(value)
    if not math.isfinite(value):
        raise ValueError(f"{name} must be finite, got {value!r}")
    return value


def _finish(arr: np.ndarray):
    return float(arr) if arr.ndim == 0 else arr


def _positions(n: int, m: int) -> np.ndarray:
    """Position in the m-point transform of each of the n natural-order bins."""
    h = n - n // 2
    return np.concatenate((np.arange(h), np.arange(h, n) + (m - n)))


# -- measurement -------------------------------------------------------------------


def papr_db(samples, *, axis=-1):
    r"""PAPR in dB of time samples, along one axis.

    Parameters
    ----------
    samples : array_like
        Complex (or real) time samples of any shape; every slice along
        ``axis`` (e.g. one oversampled symbol) gets its own figure.
    axis : int, optional
        The time axis (default: the last).

    Returns
    -------
    float or numpy.ndarray
        float64, the shape of ``samples`` without ``axis``; a Python float
        for 1-D input.

    Raises
    ------
    TypeError
        If ``samples`` is not numeric or ``axis`` is not an integer.
    ValueError
        If ``samples`` holds NaN/inf, is 0-d, ``axis`` is out of range, a
        slice is empty or has zero power.

    See Also
    --------
    symbol_papr_db : PAPR of frequency grids, oversampled.

    Notes
    -----
    :math:`10\log_{10}(\max|x|^2 / \overline{|x|^2})`.  Sampled at the
    Nyquist rate the peak between samples is missed; oversample (e.g.
    with :func:`oversample`) by 4 for a figure within a few tenths of a dB
    (Tellambura 2001).  Cost: two passes over the samples.

    Examples
    --------
    >>> from tonebank.papr import papr_db
    >>> round(papr_db([1, 1j, -1, -1j]), 6)
    0.0
    >>> round(papr_db([2, 0, 0, 0]), 3)
    6.021
    """
    x = _complex_array(samples, "samples")
    axis = integer(axis, "axis")
    if not -x.ndim <= axis < x.ndim:
        raise ValueError(f"axis={axis} is out of range for samples with {x.ndim} "
                         "dimension(s)")
    if x.shape[axis] == 0:
        raise ValueError("samples has length 0 along the time axis; PAPR needs samples")
    power = x.real.astype(np.float64) ** 2 + x.imag.astype(np.float64) ** 2
    mean = power.mean(axis=axis)
    if np.any(mean == 0):
        raise ValueError("samples has a slice of zero power; its PAPR is undefined")
    return _finish(10.0 * np.log10(power.max(axis=axis) / mean))


def _check_grid(grid, name="grid") -> np.ndarray:
    return _complex_array(grid, name)


def oversample(grid, *, oversampling=4):
    r"""Oversampled time samples of frequency-grid rows (zero-padded IFFT).

    Parameters
    ----------
    grid : array_like
        Shape ``(..., n_fft)``, complex; rows in natural FFT order.
    oversampling : int, optional
        Factor ``L >= 1`` (default 4); the transform has ``L * n_fft``
        points, best a product of 2, 3 and 5 for the C kernel.

    Returns
    -------
    numpy.ndarray
        Shape ``(..., L * n_fft)``; complex64 for complex64 input,
        complex128 otherwise.

    Raises
    ------
    TypeError
        Non-numeric grid or non-integer ``oversampling``.
    ValueError
        ``oversampling < 1``, NaN/inf in the grid, or a 0-d grid.

    See Also
    --------
    symbol_papr_db

    Notes
    -----
    :math:`x_j = M^{-1/2} \sum_k X_k e^{2\pi i j\,p(k)/M}` with
    :math:`p(k)` the padded position of bin ``k`` (module notes).  Cost:
    one ``M``-point FFT per row.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.papr import oversample
    >>> x = oversample(np.ones(4), oversampling=2)
    >>> x.shape
    (8,)
    >>> round(float(np.sum(np.abs(x) ** 2)), 12)       # energy kept
    4.0
    """
    x = _check_grid(grid)
    factor = integer(oversampling, "oversampling", minimum=1)
    n = x.shape[-1]
    if n == 0:
        raise ValueError("grid has 0 bins along its last axis; need n_fft >= 1")
    m = factor * n
    padded = np.zeros(x.shape[:-1] + (m,), dtype=x.dtype)
    padded[..., _positions(n, m)] = x
    return fft(padded, inverse=True, norm="ortho")


def symbol_papr_db(grid, *, oversampling=4):
    r"""PAPR in dB of each OFDM symbol of a frequency grid.

    Parameters
    ----------
    grid : array_like
        Shape ``(..., n_fft)``: one symbol per row, natural FFT order (for
        example the grid a :class:`tonebank.CarrierPlan` places).
    oversampling : int, optional
        Oversampling factor of the zero-padded inverse transform (default
        4, enough for a figure within about 0.1-0.2 dB of the continuous
        peak at the probabilities of interest, Tellambura 2001).

    Returns
    -------
    float or numpy.ndarray
        float64, shape ``grid.shape[:-1]`` (a Python float for one row).

    Raises
    ------
    TypeError, ValueError
        As :func:`oversample`; also a row of zero power.

    See Also
    --------
    papr_ccdf, ccdf_theory

    Notes
    -----
    The cyclic prefix repeats samples of the body, so it does not change
    the peak or the mean: the figure is that of the transmitted symbol.
    Cost: one ``L * n_fft``-point FFT per symbol, in blocks of rows so
    that memory stays bounded (about 2^21 complex values at a time).

    References
    ----------
    C. Tellambura, "Computation of the continuous-time PAR of an OFDM
    signal with BPSK subcarriers", IEEE Commun. Lett., 5(5), 2001.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.papr import symbol_papr_db
    >>> grid = np.zeros((2, 64), complex)
    >>> grid[0, 1] = 1                  # a single tone: constant envelope
    >>> grid[1, :] = 1                  # all tones in phase: one big pulse
    >>> np.round(symbol_papr_db(grid), 3)
    array([ 0.   , 18.062])
    """
    x = _check_grid(grid)
    factor = integer(oversampling, "oversampling", minimum=1)
    n = x.shape[-1]
    if n == 0 or x.ndim == 1:
        return papr_db(oversample(x, oversampling=factor))
    # Blocks of rows bound the memory of the oversampled copy (a CCDF over
    # 10^5 symbols would otherwise hold them all at once).
    rows = x.reshape(-1, n)
    block = max(1, _PAPR_BLOCK_ELEMENTS // (factor * n))
    out = np.empty(rows.shape[0])
    for start in range(0, rows.shape[0], block):
        out[start:start + block] = papr_db(
            oversample(rows[start:start + block], oversampling=factor))
    return out.reshape(x.shape[:-1])


def papr_ccdf(papr_values_db, thresholds_db):
    r"""Empirical CCDF of PAPR: the fraction of symbols above each threshold.

    Parameters
    ----------
    papr_values_db : array_like
        PAPR of many symbols in dB, any shape (flattened), e.g. from
        :func:`symbol_papr_db`.
    thresholds_db : array_like
        Thresholds :math:`z_0` in dB, any shape.

    Returns
    -------
    float or numpy.ndarray
        :math:`\Pr(\mathrm{PAPR} > z_0)`, float64 of the shape of
        ``thresholds_db``.

    Raises
    ------
    TypeError
        Non-real input.
    ValueError
        Empty ``papr_values_db`` or NaN/inf anywhere.

    See Also
    --------
    ccdf_theory : the curves to compare with.

    Notes
    -----
    A Monte-Carlo estimate of a probability :math:`p` from :math:`S`
    symbols has standard deviation :math:`\sqrt{p(1-p)/S}`; read the
    curve only down to about :math:`10/S`.  Cost: a sort of the values
    and a binary search per threshold.

    Examples
    --------
    >>> from tonebank.papr import papr_ccdf
    >>> papr_ccdf([5.0, 7.0, 9.0, 11.0], [6.0, 10.0])
    array([0.75, 0.25])
    """
    values = real_array(papr_values_db, "papr_values_db").ravel()
    if values.size == 0:
        raise ValueError("papr_values_db is empty; the CCDF needs at least one symbol")
    z = real_array(thresholds_db, "thresholds_db")
    ordered = np.sort(values)
    above = values.size - np.searchsorted(ordered, z, side="right")
    return _finish(above / values.size)


def ccdf_theory(thresholds_db, n_subcarriers, *, alpha=1.0, n_candidates=1):
    r"""Theoretical PAPR CCDF of OFDM symbols with independent random data.

    Parameters
    ----------
    thresholds_db : array_like
        Thresholds :math:`z_0` in dB, any shape.
    n_subcarriers : int
        Number :math:`N` of modulated subcarriers, >= 1.
    alpha : float, optional
        Factor on :math:`N`: 1 (default) for Nyquist-rate samples (van Nee
        & Prasad 2000); about 2.8 approximates the continuous (oversampled)
        envelope (van Nee & de Wild 1998, from memory).
    n_candidates : int, optional
        :math:`U` independent candidates of which the lowest-peak one is
        sent (selective mapping, Bäuml, Fischer & Huber 1996); default 1.

    Returns
    -------
    float or numpy.ndarray
        :math:`\Pr(\mathrm{PAPR} > z_0)`, float64, shape of
        ``thresholds_db``.

    Raises
    ------
    TypeError
        Non-integer ``n_subcarriers`` / ``n_candidates``, non-real
        ``alpha`` or thresholds.
    ValueError
        ``n_subcarriers < 1``, ``n_candidates < 1``, ``alpha <= 0``,
        NaN/inf thresholds.

    See Also
    --------
    papr_ccdf : the measured curve.

    Notes
    -----
    With :math:`z = 10^{z_0/10}` and the samples taken as independent
    with exponentially distributed power of unit mean,

    .. math::

        \Pr(\mathrm{PAPR} > z) = \left[1 - (1 - e^{-z})^{\alpha N}\right]^U.

    For :math:`\alpha = 1` this holds for Nyquist-rate samples of many
    random-data subcarriers; the oversampled envelope has more peaks than
    Nyquist samples show, which :math:`\alpha \approx 2.8` accounts for
    empirically (for :math:`N` of about 64 and above).  The exponent is
    evaluated with ``log1p``/``expm1``, accurate far into the tail.

    References
    ----------
    R. van Nee, R. Prasad, *OFDM for Wireless Multimedia Communications*,
    Artech House, 2000 (chapter on PAPR).  R. van Nee, A. de Wild,
    "Reducing the peak-to-average power ratio of OFDM", IEEE VTC 1998.
    R. W. Bäuml, R. F. H. Fischer, J. B. Huber, "Reducing the
    peak-to-average power ratio of multicarrier modulation by selected
    mapping", Electron. Lett., 32(22), 1996.

    Examples
    --------
    >>> from tonebank.papr import ccdf_theory
    >>> round(ccdf_theory(10.0, 64), 6)
    0.002901
    >>> round(ccdf_theory(10.0, 64, n_candidates=2), 9)
    8.418e-06
    """
    z0 = real_array(thresholds_db, "thresholds_db")
    n = integer(n_subcarriers, "n_subcarriers", minimum=1)
    u = integer(n_candidates, "n_candidates", minimum=1)
    a = _real(alpha, "alpha")
    if a <= 0:
        raise ValueError(f"alpha must be > 0, got {alpha!r}")
    z = 10.0 ** (z0 / 10.0)
    # 1 - (1 - e^-z)^(aN) = -expm1(aN log1p(-e^-z)), accurate for small e^-z
    single = -np.expm1(a * n * np.log1p(-np.exp(-z)))
    return _finish(single ** u)


# -- clipping ----------------------------------------------------------------------


@dataclass(frozen=True)
class ClippingTheory:
    r"""What envelope clipping of a complex Gaussian signal does, in theory.

    Attributes
    ----------
    clip_ratio_db : float
        The clipping ratio :math:`20\log_{10}\gamma`: limit amplitude over
        the input RMS amplitude.
    gain : float
        Bussgang gain :math:`\alpha`: the clipped signal is
        :math:`\alpha x + d` with :math:`d` uncorrelated with :math:`x`.
    output_power : float
        Mean power of the clipped signal.
    noise_power : float
        Power of the distortion :math:`d`.
    sdr_db : float
        Signal-to-distortion ratio :math:`10\log_{10}(\alpha^2 P_{in} /
        P_d)`.
    """

    clip_ratio_db: float
    gain: float
    output_power: float
    noise_power: float
    sdr_db: float


def clipping_theory(clip_ratio_db, *, input_power=1.0) -> ClippingTheory:
    r"""Bussgang gain, output power and clipping noise of envelope clipping.

    Parameters
    ----------
    clip_ratio_db : float
        Clipping ratio in dB: :math:`20\log_{10}(A / \sqrt{P_{in}})` with
        :math:`A` the limit amplitude.
    input_power : float, optional
        Mean input power :math:`P_{in}` (default 1).

    Returns
    -------
    ClippingTheory

    Raises
    ------
    TypeError
        Non-real arguments.
    ValueError
        NaN/inf, or ``input_power <= 0``.

    See Also
    --------
    clip

    Notes
    -----
    For a circularly symmetric complex Gaussian input (a good model of an
    OFDM signal with many subcarriers) and :math:`\gamma = A/\sqrt{P_{in}}`,

    .. math::

        \alpha &= 1 - e^{-\gamma^2} + \tfrac{\sqrt{\pi}\,\gamma}{2}
                  \operatorname{erfc}(\gamma), \\
        P_{out} &= (1 - e^{-\gamma^2})\,P_{in}, \qquad
        P_d = P_{out} - \alpha^2 P_{in}
            = (1 - e^{-\gamma^2} - \alpha^2)\,P_{in}.

    References
    ----------
    H. Ochiai, H. Imai, "Performance analysis of deliberately clipped
    OFDM signals", IEEE Trans. Commun., 50(1), 2002.

    Examples
    --------
    >>> from tonebank.papr import clipping_theory
    >>> t = clipping_theory(3.0)
    >>> round(t.gain, 4), round(t.output_power, 4), round(t.sdr_db, 2)
    (0.9213, 0.864, 17.46)
    """
    ratio = _real(clip_ratio_db, "clip_ratio_db")
    p_in = _real(input_power, "input_power")
    if p_in <= 0:
        raise ValueError(f"input_power must be > 0, got {input_power!r}")
    g = 10.0 ** (ratio / 20.0)
    kept = -math.expm1(-g * g)
    gain = kept + 0.5 * math.sqrt(math.pi) * g * float(scipy.special.erfc(g))
    noise = max(kept - gain * gain, 0.0) * p_in
    sdr = math.inf if noise == 0 else 10.0 * math.log10(gain * gain * p_in / noise)
    return ClippingTheory(ratio, gain, kept * p_in, noise, sdr)


def _limit(x: np.ndarray, amplitude: np.ndarray) -> np.ndarray:
    """Envelope limit at ``amplitude`` (broadcast), phase kept."""
    mag = np.abs(x)
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = np.where(mag > amplitude, amplitude / np.where(mag > 0, mag, 1), 1)
    return (x * factor.astype(mag.dtype)).astype(x.dtype, copy=False)


def clip(samples, clip_ratio_db, *, reference_power="all", axis=-1):
    r"""Clip the envelope of complex samples; the phase is kept.

    Parameters
    ----------
    samples : array_like
        Complex time samples, any shape (oversampled, for a realistic
        spectrum of the distortion).
    clip_ratio_db : float
        Limit amplitude relative to the RMS amplitude, in dB (0 dB clips
        at the RMS level).
    reference_power : {"all", "symbol"} or float, optional
        The power the ratio refers to: ``"all"`` (default) the mean power
        of all the samples, as a fixed hardware clipper would see;
        ``"symbol"`` each slice along ``axis`` on its own; or a given
        positive power.
    axis : int, optional
        The time axis, used with ``"symbol"`` (default: the last).

    Returns
    -------
    numpy.ndarray
        Clipped samples, same shape; complex64 kept, complex128 otherwise.

    Raises
    ------
    TypeError
        Non-numeric samples, non-real ratio, wrong ``reference_power``
        type.
    ValueError
        NaN/inf, an unknown ``reference_power`` name or a non-positive
        power, zero measured power, ``axis`` out of range.

    See Also
    --------
    clipping_theory : gain and distortion to expect.
    clip_and_filter : clip, then remove the out-of-band products.

    Notes
    -----
    :math:`y = x` where :math:`|x| \le A` and :math:`y = A\,x/|x|`
    elsewhere, :math:`A = 10^{\mathrm{CR}/20}\sqrt{P}`.  Cost: a few
    passes over the samples.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.papr import clip
    >>> y = clip(np.array([0.5, 2j, -3.0]), 0.0, reference_power=1.0)
    >>> y
    array([ 0.5+0.j,  0. +1.j, -1. +0.j])
    """
    x = _complex_array(samples, "samples")
    ratio = _real(clip_ratio_db, "clip_ratio_db")
    axis = integer(axis, "axis")
    if not -x.ndim <= axis < x.ndim:
        raise ValueError(f"axis={axis} is out of range for samples with {x.ndim} "
                         "dimension(s)")
    power_all = np.abs(x) ** 2
    if isinstance(reference_power, str):
        if reference_power == "all":
            power = np.float64(power_all.mean()) if x.size else np.float64(0)
        elif reference_power == "symbol":
            power = power_all.mean(axis=axis, keepdims=True).astype(np.float64)
        else:
            raise ValueError(f"reference_power={reference_power!r} is unknown; allowed: "
                             "'all', 'symbol' or a positive float")
        if x.size and np.any(power == 0):
            raise ValueError("samples has zero mean power where the clipping level is "
                             "measured; pass reference_power=<power>")
    else:
        power = _real(reference_power, "reference_power")
        if power <= 0:
            raise ValueError(f"reference_power must be > 0, got {reference_power!r}")
    if x.size == 0:
        return x.copy()
    amplitude = 10.0 ** (ratio / 20.0) * np.sqrt(power)
    return _limit(x, amplitude)


# -- clip and filter ----------------------------------------------------------------


@dataclass(frozen=True)
class ClipFilterResult:
    """Outcome of :func:`~tonebank.papr.clip_and_filter`.

    Attributes
    ----------
    grid : numpy.ndarray
        Shape ``(..., n_symbols, n_fft)``: the in-band spectrum after the
        last filter stage (natural FFT order), what a receiver sees.
    samples : numpy.ndarray
        Shape ``(..., n_symbols, L * n_fft)``: the oversampled time
        samples after the last stage (no cyclic prefix).
    papr_db : numpy.ndarray
        Shape ``(iterations + 1, ..., n_symbols)``, float64: PAPR of each
        symbol before the first clip (row 0) and after each clip + filter
        stage.
    evm_percent : numpy.ndarray
        Shape ``(iterations,)``, float64: in-band EVM (RMS, percent) of
        the used bins after each stage, with the common complex gain
        removed as an equaliser would.
    """

    grid: np.ndarray
    samples: np.ndarray
    papr_db: np.ndarray
    evm_percent: np.ndarray


def _used_bins(plan, n: int) -> np.ndarray:
    if plan is None:
        return np.arange(n)
    if not isinstance(plan, CarrierPlan):
        raise TypeError(f"plan must be a tonebank.CarrierPlan or None, got "
                        f"{type(plan).__name__}")
    if plan.n_fft != n:
        raise ValueError(f"plan has n_fft={plan.n_fft} but grid has {n} bins per symbol")
    return np.sort(np.concatenate((plan.data_bins, plan.pilot_bins)).astype(np.intp))


def clip_and_filter(grid, clip_ratio_db, *, iterations=4, oversampling=4, plan=None):
    r"""Iterative clipping and frequency-domain filtering of OFDM symbols.

    Parameters
    ----------
    grid : array_like
        Shape ``(..., n_symbols, n_fft)``, complex, natural FFT order.
    clip_ratio_db : float
        Clipping level relative to each symbol's original RMS amplitude
        (measured on its oversampled samples), in dB; the same level is
        used in every iteration.
    iterations : int, optional
        Clip + filter stages, >= 1 (default 4).
    oversampling : int, optional
        Factor ``L`` of the zero-padded transform (default 4).
    plan : tonebank.CarrierPlan, optional
        When given, only its data and pilot bins are in band: every other
        bin (guards, DC) is zeroed by the filter too.  Default: all
        ``n_fft`` bins are in band and only the padded bins are removed.

    Returns
    -------
    ClipFilterResult
        The final grid and samples, the PAPR after each stage and the
        in-band EVM after each stage.

    Raises
    ------
    TypeError
        Non-numeric grid, non-integer counts, wrong ``plan`` type.
    ValueError
        Grid with fewer than 2 dimensions, NaN/inf, ``iterations < 1``,
        ``oversampling < 1``, plan size mismatch, a symbol of zero power.

    See Also
    --------
    clip, clipping_theory

    Notes
    -----
    Each stage clips the oversampled symbol at
    :math:`A = 10^{\mathrm{CR}/20}\,\sigma_x` (:math:`\sigma_x` the RMS of
    the original symbol), transforms it back, keeps the in-band bins and
    zeroes the rest, and transforms again.  The filter removes the
    out-of-band products of clipping exactly but lets some peaks grow
    back, which the next stage clips again; the PAPR falls stage by stage
    while the in-band distortion (EVM) rises slightly.  EVM over the used
    bins: :math:`\sqrt{\sum|Y - gX|^2 / \sum|gX|^2}` with the least-squares
    gain :math:`g = \sum Y X^* / \sum |X|^2`.  Cost: two
    ``L * n_fft``-point FFTs per symbol and stage.

    References
    ----------
    J. Armstrong, "Peak-to-average power reduction for OFDM by repeated
    clipping and frequency domain filtering", Electron. Lett., 38(5),
    2002.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.papr import clip_and_filter
    >>> rng = np.random.default_rng(3)
    >>> grid = np.exp(2j * np.pi * rng.integers(0, 4, (200, 64)) / 4)
    >>> res = clip_and_filter(grid, 3.0, iterations=3)
    >>> res.papr_db.shape, res.evm_percent.shape
    ((4, 200), (3,))
    >>> bool(res.papr_db[-1].mean() < res.papr_db[0].mean() - 2)
    True
    """
    x = _check_grid(grid)
    if x.ndim < 2:
        raise ValueError(f"grid must have shape (..., n_symbols, n_fft), got {x.shape}")
    ratio = _real(clip_ratio_db, "clip_ratio_db")
    stages = integer(iterations, "iterations", minimum=1)
    factor = integer(oversampling, "oversampling", minimum=1)
    n = x.shape[-1]
    if n == 0:
        raise ValueError("grid has 0 bins along its last axis; need n_fft >= 1")
    used = _used_bins(plan, n)
    m = factor * n
    pos = _positions(n, m)
    keep = pos[used]
    samples = oversample(x, oversampling=factor)
    power = np.mean(np.abs(samples) ** 2, axis=-1, keepdims=True)
    if np.any(power == 0):
        raise ValueError("grid holds a symbol of zero power; its clipping level is undefined")
    amplitude = 10.0 ** (ratio / 20.0) * np.sqrt(power)
    reference = x[..., used]
    ref_energy = float(np.sum(np.abs(reference) ** 2))
    paprs = [papr_db(samples)]
    evms = []
    spec = np.zeros(x.shape[:-1] + (m,), dtype=x.dtype)
    for _ in range(stages):
        clipped = _limit(samples, amplitude)
        full = fft(clipped, norm="ortho")
        spec[...] = 0
        spec[..., keep] = full[..., keep]
        samples = fft(spec, inverse=True, norm="ortho")
        paprs.append(papr_db(samples))
        inband = spec[..., keep]
        if ref_energy > 0:
            gain = np.sum(inband * np.conj(reference)) / ref_energy
            err = float(np.sum(np.abs(inband - gain * reference) ** 2))
            evms.append(100.0 * math.sqrt(err / (abs(gain) ** 2 * ref_energy)))
        else:
            evms.append(0.0)
    out_grid = np.zeros(x.shape, dtype=x.dtype)
    out_grid[..., used] = spec[..., keep]
    return ClipFilterResult(out_grid, samples, np.stack([np.asarray(p) for p in paprs]),
                            np.asarray(evms, dtype=np.float64))


# -- selective mapping ----------------------------------------------------------------


@dataclass(frozen=True)
class SlmSymbols:
    """Symbols chosen by :meth:`~tonebank.papr.SelectiveMapping.select`.

    Attributes
    ----------
    grid : numpy.ndarray
        Shape ``(..., n_symbols, n_fft)``: the chosen candidates in the
        frequency domain (natural order), ready for a waveform such as
        :class:`tonebank.CpOfdm` with the same oversampling.
    samples : numpy.ndarray
        Shape ``(..., n_symbols, L * n_fft)``: their oversampled time
        samples (unitary inverse DFT, no cyclic prefix).
    index : numpy.ndarray
        Shape ``(..., n_symbols)``, int64: the chosen candidate per symbol.
    papr_db : numpy.ndarray
        Shape ``(..., n_symbols)``, float64: the chosen candidate's PAPR.
    """

    grid: np.ndarray
    samples: np.ndarray
    index: np.ndarray
    papr_db: np.ndarray


_PHASE_KINDS = {"qpsk": 4, "binary": 2, "psk8": 8}


class SelectiveMapping:
    r"""Selective mapping (SLM) of OFDM symbols, with side information.

    Each symbol's payload bins are multiplied by ``n_candidates`` phase
    sequences; the candidate with the lowest oversampled peak is sent.
    Its index travels as side information on reserved data subcarriers
    (BPSK, each index bit repeated over the reserved tones), or the
    receiver finds it blindly.

    Parameters
    ----------
    plan : tonebank.CarrierPlan
        The subcarrier layout; pilots and null bins are never rotated.
    n_candidates : int, optional
        Number of candidates ``U`` (default 16).  Candidate 0 is the
        unrotated symbol.
    oversampling : int, optional
        Factor ``L`` of the peak search (default 4).
    side_subcarriers : array_like of int, optional
        Signed indices of data subcarriers reserved for the side
        information: at least :math:`\lceil\log_2 U\rceil` of them (more
        give repetition protection).  Default: none (blind recovery only).
    phases : {"qpsk", "binary", "psk8"} or array_like, optional
        The phase family: ``"qpsk"`` (default) draws every entry of
        candidates 1 .. U-1 independently from {1, j, -1, -j};
        ``"binary"`` from {1, -1}; ``"psk8"`` from the eight 8th roots of
        unity; or an array of shape ``(U, n_payload)`` of unit-magnitude
        values (payload bins in ascending subcarrier order) for a
        structured family of your own.  For blind recovery of QPSK or
        square QAM use ``"psk8"``: rotations by multiples of 90 degrees
        map those constellations onto themselves, so ``"qpsk"`` and
        ``"binary"`` candidates cannot be told apart without side
        information, while an odd multiple of 45 degrees never can be
        undone by a symmetry of the constellation.
    rng : numpy.random.Generator or int or None, optional
        Source of the random phases (default seed 0, so a transmitter and
        its receiver built alike agree).

    Attributes
    ----------
    plan : tonebank.CarrierPlan
    n_candidates, oversampling, n_payload, n_side, side_bits : int
        ``n_payload`` data bins carry payload, ``n_side`` carry the
        ``side_bits`` index bits.
    phases : numpy.ndarray
        Shape ``(U, n_fft)``, complex128, read-only: the full multiplier of
        each candidate (1 on pilots and nulls, the side-information BPSK
        values on the reserved tones).

    Raises
    ------
    TypeError
        Wrong types of ``plan``, counts, ``phases`` or ``rng``.
    ValueError
        ``n_candidates < 1``, ``oversampling < 1``, side subcarriers not
        among the data subcarriers, repeated or too few, phases of the
        wrong shape or not of unit magnitude, an unknown phase family.

    See Also
    --------
    ccdf_theory : the CCDF with ``n_candidates``.

    Notes
    -----
    With random independent phases and random data the candidates are
    independent, so the PAPR CCDF becomes the single-symbol CCDF to the
    power ``U`` (Bäuml, Fischer & Huber 1996).  The search, on the C
    kernel, is one fused pass per symbol that builds each candidate,
    transforms it (as ``L`` polyphase branches of ``n_fft`` points) and
    keeps only the best two rows in memory, dropping a candidate as soon
    as one branch reaches the best peak so far; cost at most ``U`` FFTs
    of ``L * n_fft`` points per symbol, typically about half that.  Ties (and differences within
    rounding: a relative 1e-9 in complex128, 1e-5 in complex64) go to the
    lowest index, so both backends choose alike.

    Side information: index bit ``b`` (most significant first) is sent as
    :math:`1 - 2b` on reserved tones ``b, b + B, b + 2B, ...`` (``B`` the
    number of bits); these tones are not otherwise rotated.  The receiver
    correlates the reserved tones with each of the ``U`` valid patterns
    and takes the best (maximum likelihood for equal-energy codewords in
    AWGN).  Blind recovery instead minimises, over the candidates, the
    distance of the de-rotated payload to the constellation: joint
    maximum likelihood of index and data in AWGN.

    References
    ----------
    R. W. Bäuml, R. F. H. Fischer, J. B. Huber, "Reducing the
    peak-to-average power ratio of multicarrier modulation by selected
    mapping", Electron. Lett., 32(22), 1996.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank.papr import SelectiveMapping
    >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
    >>> slm = SelectiveMapping(plan, n_candidates=8, side_subcarriers=[-25, -24, -23, 24, 25, 26])
    >>> slm.n_payload, slm.side_bits
    (42, 3)
    >>> qpsk = tonebank.Constellation.qpsk()
    >>> rng = np.random.default_rng(2)
    >>> payload = qpsk.map(rng.integers(0, 2, 100 * slm.n_payload * 2)).reshape(100, -1)
    >>> sent = slm.select(payload)
    >>> index, data = slm.recover(sent.grid)
    >>> bool(np.all(index == sent.index)), bool(np.allclose(data, payload))
    (True, True)
    """

    def __init__(self, plan, *, n_candidates=16, oversampling=4, side_subcarriers=None,
                 phases="qpsk", rng=0):
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        u = integer(n_candidates, "n_candidates", minimum=1)
        factor = integer(oversampling, "oversampling", minimum=1)
        n = plan.n_fft
        data_sc = np.asarray(plan.data_subcarriers)
        side = None if side_subcarriers is None else np.asarray(side_subcarriers)
        if side is None or (side.ndim == 1 and side.size == 0):
            side_sc = np.zeros(0, dtype=np.int64)
        else:
            if side.dtype.kind not in "iu" or side.ndim != 1:
                raise TypeError("side_subcarriers must be a 1-D sequence of integer "
                                f"subcarrier indices, got {side_subcarriers!r}")
            missing = np.setdiff1d(side, data_sc)
            if missing.size:
                raise ValueError(f"side_subcarriers holds {int(missing[0])}, which is not a "
                                 "data subcarrier of the plan; reserve data subcarriers")
            if np.unique(side).size != side.size:
                raise ValueError(f"side_subcarriers lists a subcarrier twice: "
                                 f"{side.tolist()}")
            side_sc = np.sort(side.astype(np.int64))
        bits = (u - 1).bit_length()
        if side_sc.size and side_sc.size < bits:
            raise ValueError(f"side_subcarriers has {side_sc.size} tone(s) but "
                             f"n_candidates={u} needs at least {bits} (one per index bit)")
        if side_sc.size and bits == 0:
            raise ValueError("side_subcarriers were given but n_candidates=1 has no index "
                             "to send; pass side_subcarriers=None")
        payload_sc = np.setdiff1d(data_sc, side_sc)
        payload_bins = (payload_sc % n).astype(np.intp)
        side_bins = (side_sc % n).astype(np.intp)

        if isinstance(phases, str):
            if phases not in _PHASE_KINDS:
                raise ValueError(f"phases={phases!r} is unknown; allowed: 'qpsk', 'binary' "
                                 "or an array of shape (n_candidates, n_payload)")
            gen = generator(rng)
            q = _PHASE_KINDS[phases]
            draw = gen.integers(0, q, (u, payload_bins.size))
            draw[0] = 0
            rot = np.exp(2j * np.pi * draw / q)
            rot.real[np.abs(rot.real) < 1e-12] = 0.0      # exact 0, +-1, +-j
            rot.imag[np.abs(rot.imag) < 1e-12] = 0.0
        else:
            arr = np.asarray(phases)
            if arr.dtype.kind not in "biufc":
                raise TypeError(f"phases must be 'qpsk', 'binary' or a numeric array, got "
                                f"dtype {arr.dtype}")
            if arr.shape != (u, payload_bins.size):
                raise ValueError(f"phases has shape {arr.shape}; need (n_candidates, "
                                 f"n_payload) = ({u}, {payload_bins.size})")
            rot = arr.astype(np.complex128)
            if not np.all(np.isfinite(rot)) or np.max(np.abs(np.abs(rot) - 1)) > 1e-9:
                raise ValueError("phases must hold finite values of magnitude 1")

        full = np.ones((u, n), dtype=np.complex128)
        full[:, payload_bins] = rot
        self._codes = np.ones((u, side_bins.size))
        if side_bins.size:
            index_bits = (np.arange(u)[:, None] >> np.arange(bits - 1, -1, -1)) & 1
            tone_bit = np.arange(side_bins.size) % bits
            self._codes = 1.0 - 2.0 * index_bits[:, tone_bit]
            full[:, side_bins] = self._codes
        full.flags.writeable = False
        self._plan = plan
        self._u = u
        self._factor = factor
        self._bits = bits if side_bins.size else 0
        self._payload_bins = payload_bins
        self._side_bins = side_bins
        self._phases = full
        self._phases64 = full.astype(np.complex64)
        self._runners = {}

    # Prepared kernel runners hold C pointers: dropped when pickled (e.g. for a
    # worker process of a sweep) and rebuilt on first use.
    def __getstate__(self):
        state = self.__dict__.copy()
        state["_runners"] = {}
        return state

    # -- properties

    @property
    def plan(self) -> CarrierPlan:
        """The carrier plan."""
        return self._plan

    @property
    def n_candidates(self) -> int:
        """Number of candidates per symbol."""
        return self._u

    @property
    def oversampling(self) -> int:
        """Oversampling factor of the peak search."""
        return self._factor

    @property
    def n_payload(self) -> int:
        """Data subcarriers that carry payload (not side information)."""
        return int(self._payload_bins.size)

    @property
    def n_side(self) -> int:
        """Data subcarriers reserved for the side information."""
        return int(self._side_bins.size)

    @property
    def side_bits(self) -> int:
        """Index bits sent per symbol (0 without side information)."""
        return self._bits

    @property
    def phases(self) -> np.ndarray:
        """Shape ``(U, n_fft)`` multipliers of the candidates (read-only)."""
        return self._phases

    def __repr__(self):
        return (f"SelectiveMapping(n_fft={self._plan.n_fft}, n_candidates={self._u}, "
                f"oversampling={self._factor}, n_side={self.n_side})")

    # -- transmitter

    def _runner(self, dtype):
        key = (dtype.char, _kernel.active().NAME)
        runner = self._runners.get(key)
        if runner is None:
            n = self._plan.n_fft
            runner = _kernel.active().slm_runner(n, self._factor * n, dtype)
            self._runners[key] = runner
        return runner

    def select(self, payload) -> SlmSymbols:
        r"""Place the payload, search the candidates, keep the lowest peak.

        Parameters
        ----------
        payload : array_like
            Shape ``(..., n_symbols, n_payload)``: constellation points for
            the payload subcarriers (ascending subcarrier order), complex.
            complex64 is kept.

        Returns
        -------
        SlmSymbols
            The chosen grid, its oversampled samples, the indices and the
            PAPR per symbol.

        Raises
        ------
        TypeError
            Non-numeric payload.
        ValueError
            Wrong last dimension, fewer than 2 dimensions, NaN/inf, a
            symbol of zero power.

        Notes
        -----
        Pilots come from the plan (``pilots_for``, symbol 0 onwards); the
        reserved tones carry each candidate's index pattern.  On the C
        kernel the search is fused (see the class notes).  Cost: ``U``
        FFTs of ``L * n_fft`` points per symbol.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> from tonebank.papr import SelectiveMapping
        >>> plan = tonebank.CarrierPlan.centered(64, 56)
        >>> slm = SelectiveMapping(plan, n_candidates=4)
        >>> rng = np.random.default_rng(0)
        >>> qpsk = np.exp(1j * np.pi / 2 * rng.integers(0, 4, (3, 56)))
        >>> out = slm.select(qpsk)
        >>> out.samples.shape, out.index.dtype
        ((3, 256), dtype('int64'))
        """
        data = _complex_array(payload, "payload", min_ndim=2)
        if data.shape[-1] != self.n_payload:
            raise ValueError(f"payload has {data.shape[-1]} values per symbol; this "
                             f"selective mapping carries n_payload={self.n_payload}")
        lead = data.shape[:-2]
        n_sym = data.shape[-2]
        n = self._plan.n_fft
        m = self._factor * n
        grid = np.zeros(data.shape[:-1] + (n,), dtype=data.dtype)
        grid[..., self._payload_bins] = data
        if self._plan.n_pilots:
            grid[..., self._plan.pilot_bins] = self._plan.pilots_for(n_sym)
        if self.n_side:
            grid[..., self._side_bins] = 1
        flat = np.ascontiguousarray(grid.reshape(-1, n))
        if flat.size and np.any(np.all(flat == 0, axis=-1)):
            raise ValueError("payload holds a symbol of zero power (and the plan adds no "
                             "pilots); its PAPR is undefined")
        phases = self._phases64 if data.dtype == _C64 else self._phases
        samples = np.empty((flat.shape[0], m), dtype=data.dtype)
        index = np.empty(flat.shape[0], dtype=np.uintp)
        peak = np.empty(flat.shape[0], dtype=np.float64)
        margin = 1e-5 if data.dtype == _C64 else 1e-9
        self._runner(data.dtype).select(flat, phases, samples, index, peak,
                                        1.0 / math.sqrt(m), margin)
        index = index.astype(np.int64)
        chosen = flat * phases[index]
        energy = np.sum(np.abs(flat.astype(np.complex128)) ** 2, axis=-1)  # |phase| = 1
        paprs = 10.0 * np.log10(peak * m / energy)
        shape = lead + (n_sym,)
        return SlmSymbols(chosen.reshape(grid.shape), samples.reshape(shape + (m,)),
                          index.reshape(shape), paprs.reshape(shape))

    # -- receiver

    def recover(self, grid, *, method="side", constellation=None):
        r"""Find each symbol's candidate index and undo its rotation.

        Parameters
        ----------
        grid : array_like
            Shape ``(..., n_symbols, n_fft)``: received, equalised grid
            (natural order).
        method : {"side", "blind"}, optional
            ``"side"`` (default) decodes the reserved tones; ``"blind"``
            tries every candidate against ``constellation`` (needs a
            phase family that is not a symmetry of it, see the class
            notes on ``phases``).
        constellation : tonebank.Constellation, optional
            The payload's constellation; required for ``"blind"``.

        Returns
        -------
        index : numpy.ndarray
            Shape ``(..., n_symbols)``, int64.
        payload : numpy.ndarray
            Shape ``(..., n_symbols, n_payload)``: the de-rotated payload
            bins (soft values, ready for hard or soft demapping).

        Raises
        ------
        TypeError
            Non-numeric grid, wrong ``constellation`` type.
        ValueError
            Wrong grid size, NaN/inf, unknown method, ``"side"`` without
            reserved tones, ``"blind"`` without a constellation.

        Notes
        -----
        ``"side"``: :math:`\hat u` maximises :math:`\mathrm{Re}\sum_t
        c_{u,t} Y_t` over the reserved tones :math:`t` (the patterns are
        real), cost ``U * n_side`` per symbol.  ``"blind"``: :math:`\hat u`
        minimises :math:`\sum_k \min_{s} |Y_k P^*_{u,k} - s|^2` over the
        payload bins, cost ``U`` hard decisions per payload bin.  Ties go to the
        lowest index.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> from tonebank.papr import SelectiveMapping
        >>> plan = tonebank.CarrierPlan.centered(64, 56)
        >>> slm = SelectiveMapping(plan, n_candidates=4, phases="psk8")
        >>> qpsk = tonebank.Constellation.qpsk()
        >>> pts = qpsk.points[np.random.default_rng(1).integers(0, 4, (20, 56))]
        >>> sent = slm.select(pts)
        >>> idx, data = slm.recover(sent.grid, method="blind", constellation=qpsk)
        >>> bool(np.all(idx == sent.index))
        True
        """
        y = _complex_array(grid, "grid", min_ndim=2)
        n = self._plan.n_fft
        if y.shape[-1] != n:
            raise ValueError(f"grid has {y.shape[-1]} bins per symbol; the plan has "
                             f"n_fft={n}")
        if not isinstance(method, str) or method not in ("side", "blind"):
            raise ValueError(f"method={method!r} is unknown; allowed: 'side' or 'blind'")
        payload_y = y[..., self._payload_bins]
        if method == "side":
            if self.n_side == 0:
                raise ValueError("method='side' needs reserved tones, but this selective "
                                 "mapping has side_subcarriers=None; use method='blind'")
            side = y[..., self._side_bins].real.astype(np.float64)
            score = side @ self._codes.T                     # (..., S, U)
            index = np.argmax(score, axis=-1)
        else:
            if not isinstance(constellation, Constellation):
                raise ValueError("method='blind' needs constellation=<tonebank.Constellation> "
                                 f"of the payload, got {constellation!r}")
            rot = self._phases[:, self._payload_bins]
            points = constellation.points
            flat = payload_y.reshape(-1, self.n_payload).astype(np.complex128)
            metric = np.empty((flat.shape[0], self._u))
            for u in range(self._u):
                derot = flat * np.conj(rot[u])
                nearest = points[constellation.decide(derot)]
                metric[:, u] = np.sum(np.abs(derot - nearest) ** 2, axis=-1)
            index = np.argmin(metric, axis=-1).reshape(payload_y.shape[:-1])
        index = index.astype(np.int64)
        rot = self._phases[:, self._payload_bins]
        derot = payload_y * np.conj(rot[index]).astype(y.dtype)
        return index, derot

    def index_errors(self, sent, recovered) -> ErrorCount:
        """Side-information (index) errors: wrong indices out of all symbols.

        Parameters
        ----------
        sent, recovered : array_like of int
            Candidate indices, the same shape.

        Returns
        -------
        tonebank.metrics.ErrorCount
            With a confidence interval
            (:meth:`tonebank.metrics.ErrorCount.interval`).

        Raises
        ------
        TypeError, ValueError
            As :func:`tonebank.metrics.symbol_errors`; also indices out of
            ``0 .. n_candidates - 1``.

        Examples
        --------
        >>> import tonebank
        >>> from tonebank.papr import SelectiveMapping
        >>> slm = SelectiveMapping(tonebank.CarrierPlan.centered(16, 12), n_candidates=4)
        >>> slm.index_errors([0, 3, 1], [0, 2, 1])
        ErrorCount(errors=1, total=3)
        """
        for value, name in ((sent, "sent"), (recovered, "recovered")):
            arr = np.asarray(value)
            if arr.dtype.kind not in "iu":
                raise TypeError(f"{name} must hold integer indices, got dtype {arr.dtype}")
            if arr.size and (arr.min() < 0 or arr.max() >= self._u):
                raise ValueError(f"{name} holds an index outside 0..{self._u - 1}")
        return symbol_errors(sent, recovered)


# -- tone reservation and active constellation extension -------------------------------


@dataclass(frozen=True)
class PeakReductionResult:
    """Outcome of :func:`~tonebank.papr.tone_reservation` and
    :func:`~tonebank.papr.active_constellation_extension`.

    Attributes
    ----------
    grid : numpy.ndarray
        Shape ``(..., n_symbols, n_fft)``: the modified spectrum (natural
        order).
    samples : numpy.ndarray
        Shape ``(..., n_symbols, L * n_fft)``: its oversampled samples.
    papr_db : numpy.ndarray
        Shape ``(iterations + 1, ..., n_symbols)``, float64: PAPR before
        the first iteration (row 0) and after each one.
    power_increase_db : float
        Mean power of the result over that of the input, dB (the price
        paid in transmit power for the lower peaks).
    """

    grid: np.ndarray
    samples: np.ndarray
    papr_db: np.ndarray
    power_increase_db: float


def _grid_and_levels(grid, clip_ratio_db, iterations, oversampling):
    x = _check_grid(grid)
    if x.ndim < 2:
        raise ValueError(f"grid must have shape (..., n_symbols, n_fft), got {x.shape}")
    ratio = _real(clip_ratio_db, "clip_ratio_db")
    stages = integer(iterations, "iterations", minimum=1)
    factor = integer(oversampling, "oversampling", minimum=1)
    if x.shape[-1] == 0:
        raise ValueError("grid has 0 bins along its last axis; need n_fft >= 1")
    samples = oversample(x, oversampling=factor)
    power = np.mean(np.abs(samples) ** 2, axis=-1, keepdims=True)
    if np.any(power == 0):
        raise ValueError("grid holds a symbol of zero power; its clipping level is undefined")
    return x, stages, factor, samples, 10.0 ** (ratio / 20.0) * np.sqrt(power)


def _power_increase_db(before: np.ndarray, after: np.ndarray) -> float:
    p0 = float(np.sum(np.abs(before.astype(np.complex128)) ** 2))
    p1 = float(np.sum(np.abs(after.astype(np.complex128)) ** 2))
    return 10.0 * math.log10(p1 / p0)


def tone_reservation(grid, reserved_subcarriers, clip_ratio_db, *, iterations=16,
                     oversampling=4):
    r"""Tone reservation: a peak-cancelling signal on tones kept free of data.

    Parameters
    ----------
    grid : array_like
        Shape ``(..., n_symbols, n_fft)``, complex, natural FFT order; the
        reserved tones must be zero (they carry nothing yet).
    reserved_subcarriers : array_like of int
        Signed indices of the reserved tones (see :mod:`tonebank.plan`),
        distinct, at least one.  Spread them irregularly: evenly spaced
        tones give a periodic kernel that cannot cancel one peak without
        raising others.
    clip_ratio_db : float
        Target level relative to each symbol's original RMS amplitude, dB.
    iterations : int, optional
        Peak cancellations per symbol, >= 1 (default 16).
    oversampling : int, optional
        Factor ``L`` (default 4).

    Returns
    -------
    PeakReductionResult

    Raises
    ------
    TypeError
        Non-numeric grid, non-integer counts or subcarriers.
    ValueError
        Fewer than 2 dimensions, NaN/inf, counts < 1, subcarriers out of
        range or repeated, a reserved tone that is not zero, a symbol of
        zero power.

    See Also
    --------
    clip_and_filter : distorts the data tones instead.

    Notes
    -----
    The kernel :math:`p_n = \frac{1}{|R|}\sum_{k \in R} e^{2\pi i\,
    \mathrm{pos}(k)\, n / M}` lives on the reserved tones only and peaks
    at :math:`p_0 = 1`.  Each iteration finds the largest sample
    :math:`x_j` of each symbol and, if it exceeds the target :math:`A`,
    subtracts :math:`(|x_j| - A)\, (x_j / |x_j|)\, p_{n-j}` (the kernel
    shifted circularly to the peak), which brings that sample exactly to
    :math:`A`.  The data tones are never touched, so the receiver needs
    nothing and the data see no distortion; the price is the reserved
    bandwidth and the power of the cancelling signal.  This is the simple
    kernel (gradient) variant; the optimal cancelling signal solves a
    quadratically constrained program, not solved here.  Cost: ``O(M)``
    per symbol and iteration, plus one FFT per symbol at the end.

    References
    ----------
    J. Tellado, *Multicarrier Modulation with Low PAR: Applications to DSL
    and Wireless*, Kluwer, 2000 (from memory).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.papr import tone_reservation
    >>> rng = np.random.default_rng(5)
    >>> grid = np.exp(0.5j * np.pi * rng.integers(0, 4, (100, 64)))
    >>> reserved = rng.choice(np.arange(-32, 32), 8, replace=False)
    >>> grid[:, reserved % 64] = 0
    >>> res = tone_reservation(grid, reserved, 4.0)
    >>> bool(res.papr_db[-1].mean() < res.papr_db[0].mean() - 1.0)
    True
    >>> bool(np.allclose(np.delete(res.grid, reserved % 64, axis=-1),
    ...                  np.delete(grid, reserved % 64, axis=-1)))
    True
    """
    x, stages, factor, samples, level = _grid_and_levels(grid, clip_ratio_db, iterations,
                                                          oversampling)
    n = x.shape[-1]
    arr = np.asarray(reserved_subcarriers)
    if arr.size == 0:
        raise ValueError("reserved_subcarriers is empty; reserve at least one tone")
    if arr.dtype.kind not in "iu" or arr.ndim != 1:
        raise TypeError("reserved_subcarriers must be a 1-D sequence of integer subcarrier "
                        f"indices, got {reserved_subcarriers!r}")
    lo, hi = -(n // 2), n - n // 2 - 1
    if arr.size == 0 or np.any((arr < lo) | (arr > hi)) or np.unique(arr).size != arr.size:
        raise ValueError(f"reserved_subcarriers must be distinct subcarriers in [{lo}, {hi}] "
                         f"(at least one); got {arr.tolist()}")
    bins = (arr % n).astype(np.intp)
    if np.any(x[..., bins] != 0):
        raise ValueError("grid is not zero on the reserved subcarriers; keep them free of "
                         "data (the cancelling signal goes there)")
    m = factor * n
    keep = _positions(n, m)[bins]
    spectrum = np.zeros(m, dtype=np.complex128)
    spectrum[keep] = 1.0 / bins.size
    kernel = np.fft.ifft(spectrum, norm="forward")          # kernel[0] = 1
    rows = samples.reshape(-1, m).astype(np.complex128)
    limit = level.reshape(-1)
    paprs = [papr_db(samples)]
    offsets = np.arange(m)
    which = np.arange(rows.shape[0])
    for _ in range(stages):
        mag = np.abs(rows)
        j = np.argmax(mag, axis=-1)
        peak = mag[which, j]
        excess = np.maximum(peak - limit, 0.0)
        alpha = excess * rows[which, j] / np.where(peak > 0, peak, 1.0)
        rows -= alpha[:, None] * kernel[(offsets[None, :] - j[:, None]) % m]
        paprs.append(papr_db(rows).reshape(samples.shape[:-1]))
    samples = rows.astype(x.dtype, copy=False).reshape(samples.shape)
    out = x.copy()
    out[..., bins] = fft(samples, norm="ortho")[..., keep]
    return PeakReductionResult(out, samples, np.stack([np.asarray(p) for p in paprs]),
                               _power_increase_db(x, out))


def _lattice_levels(constellation) -> tuple[np.ndarray, np.ndarray]:
    """Outer levels of a lattice (square or rectangular QAM, BPSK) constellation."""
    if not isinstance(constellation, Constellation):
        raise TypeError("constellation must be a tonebank.Constellation, got "
                        f"{type(constellation).__name__}")
    pts = constellation.points
    re = np.unique(np.round(pts.real, 9))
    im = np.unique(np.round(pts.imag, 9))
    if re.size * im.size != pts.size:
        raise ValueError(f"constellation {constellation.name!r} is not a lattice (square or "
                         "rectangular QAM, BPSK); active constellation extension needs one")
    return re, im


def active_constellation_extension(grid, constellation, clip_ratio_db, *, iterations=4,
                                   oversampling=4, plan=None):
    r"""Active constellation extension (ACE) for lattice constellations.

    Parameters
    ----------
    grid : array_like
        Shape ``(..., n_symbols, n_fft)``, complex, natural FFT order: the
        data bins hold points of ``constellation``.
    constellation : tonebank.Constellation
        A lattice constellation (BPSK, QPSK, square or rectangular QAM).
    clip_ratio_db : float
        Clipping level relative to each symbol's original RMS amplitude, dB.
    iterations : int, optional
        Iterations, >= 1 (default 4).
    oversampling : int, optional
        Factor ``L`` (default 4).
    plan : tonebank.CarrierPlan, optional
        Which bins are data (extended) and pilots (kept); default: every
        bin is a data bin.

    Returns
    -------
    PeakReductionResult

    Raises
    ------
    TypeError
        Non-numeric grid, wrong ``constellation`` or ``plan`` type.
    ValueError
        Fewer than 2 dimensions, NaN/inf, counts < 1, a constellation that
        is not a lattice, plan size mismatch, a symbol of zero power.

    See Also
    --------
    tone_reservation, clip_and_filter

    Notes
    -----
    Each iteration clips the oversampled symbol, transforms it back, and
    accepts the change of each data point only where it moves the point
    away from every decision boundary: along an axis, only for points on
    an outer level and only outwards; inner points and pilots stay, and
    every other bin is zeroed.  Decisions of a noiseless receiver are
    unchanged and the distance to the nearest wrong decision never
    shrinks; the cost is the added power of the extended points.  Cost:
    two ``L * n_fft``-point FFTs per symbol and iteration.

    References
    ----------
    B. S. Krongold, D. L. Jones, "PAR reduction in OFDM via active
    constellation extension", IEEE Trans. Broadcast., 49(3), 2003 (from
    memory).

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank.papr import active_constellation_extension
    >>> qpsk = tonebank.Constellation.qpsk()
    >>> rng = np.random.default_rng(6)
    >>> grid = qpsk.points[rng.integers(0, 4, (100, 64))]
    >>> res = active_constellation_extension(grid, qpsk, 3.0)
    >>> bool(res.papr_db[-1].mean() < res.papr_db[0].mean() - 1.0)
    True
    >>> bool(np.all(qpsk.decide(res.grid) == qpsk.decide(grid)))
    True
    """
    x, stages, factor, samples, level = _grid_and_levels(grid, clip_ratio_db, iterations,
                                                          oversampling)
    re_levels, im_levels = _lattice_levels(constellation)
    n = x.shape[-1]
    if plan is None:
        data_bins = np.arange(n)
        pilot_bins = np.zeros(0, dtype=np.intp)
    else:
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan or None, got "
                            f"{type(plan).__name__}")
        if plan.n_fft != n:
            raise ValueError(f"plan has n_fft={plan.n_fft} but grid has {n} bins per symbol")
        data_bins = np.asarray(plan.data_bins, dtype=np.intp)
        pilot_bins = np.asarray(plan.pilot_bins, dtype=np.intp)
    m = factor * n
    pos = _positions(n, m)
    data = x[..., data_bins].astype(np.complex128)
    # +1 / -1 where a point sits on the outer level of an axis (may move
    # outwards along it), 0 where it may not move along that axis.
    tol = 1e-6 * max(float(np.max(np.abs(re_levels))), float(np.max(np.abs(im_levels))),
                     1e-300)
    def outward(values, levels):
        if levels.size < 2:
            return np.zeros(values.shape)
        return (np.where(values >= levels[-1] - tol, 1.0, 0.0)
                - np.where(values <= levels[0] + tol, 1.0, 0.0))
    dir_re = outward(data.real, re_levels)
    dir_im = outward(data.imag, im_levels)
    current = data.copy()
    paprs = [papr_db(samples)]
    spec = np.zeros(x.shape[:-1] + (m,), dtype=x.dtype)
    if pilot_bins.size:
        spec[..., pos[pilot_bins]] = x[..., pilot_bins]
    for _ in range(stages):
        clipped = fft(_limit(samples, level), norm="ortho")[..., pos[data_bins]]
        step = clipped.astype(np.complex128) - current
        d_re = np.where(step.real * dir_re > 0, step.real, 0.0)
        d_im = np.where(step.imag * dir_im > 0, step.imag, 0.0)
        current = current + d_re + 1j * d_im
        spec[..., pos[data_bins]] = current
        samples = fft(spec, inverse=True, norm="ortho")
        paprs.append(papr_db(samples))
    out = np.zeros(x.shape, dtype=x.dtype)
    out[..., data_bins] = current
    if pilot_bins.size:
        out[..., pilot_bins] = x[..., pilot_bins]
    return PeakReductionResult(out, samples, np.stack([np.asarray(p) for p in paprs]),
                               _power_increase_db(x, out))
