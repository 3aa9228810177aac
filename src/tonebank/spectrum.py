r"""Spectrum estimates: PSD, occupied bandwidth, out-of-band power, ACLR, masks.

Every figure this module returns is an **engineering estimate** from a
simulated or captured signal.  It is not a compliance measurement and does
not show that a transmitter meets any emission limit: defer to your local
radio (or wireline) regulations and to accredited test practice, which
prescribe their own detectors, resolution bandwidths and averaging.

Conventions
-----------
* Spectra are **two-sided and centred**: frequencies run from
  ``-sample_rate/2`` to just below ``+sample_rate/2`` in ascending order,
  for complex (baseband) and real signals alike, so the density integrates
  to the total mean power of the signal.
* The estimate is Welch's averaged periodogram, computed by
  :func:`scipy.signal.welch` (Hann window by default, half-overlapping
  segments, no detrending, so a DC component is kept).
* ``scaling="density"`` gives power per Hz (V\ :sup:`2`/Hz for a signal in
  volts): the sum of ``density * bin_width`` over all bins is the mean
  power.  ``scaling="power"`` gives the power a pure tone shows in its
  bin (V\ :sup:`2`): a tone of amplitude ``A`` reads ``|A|**2`` at its
  peak (complex ``A exp(2j pi f t)``).  The two differ by the window's
  equivalent noise bandwidth.
* Band powers integrate the density over ``[low, high)`` with fractional
  weights for the bins cut by the band edges (each bin covers
  ``f - df/2 .. f + df/2``).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field

import numpy as np
import scipy.signal

from ._checks import integer

__all__ = [
    "CAUTION",
    "MaskCheck",
    "aclr",
    "band_power",
    "check_mask",
    "occupied_bandwidth",
    "out_of_band_power",
    "psd",
]

#: The caution every figure of this module carries.
CAUTION = ("engineering estimate from a simulation model, not a compliance measurement; "
           "follow local radio regulations and accredited test practice")

_DEFAULT_SEGMENT = 1024


# ---- argument checks ---------------------------------------------------------

def _positive(value, name: str) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a number in Hz, got {value!r}")
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise ValueError(f"{name} must be positive and finite, got {value}")
    return value


def _finite(value, name: str) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a real number, got {value!r}")
    value = float(value)
    if not math.isfinite(value):
        raise ValueError(f"{name} must be finite, got {value}")
    return value


def _signal(samples) -> np.ndarray:
    x = np.asarray(samples)
    if x.dtype.kind not in "biufc":
        raise TypeError(f"samples must be numeric, got dtype {x.dtype}")
    if x.ndim == 0 or x.shape[-1] < 2:
        raise ValueError(f"samples must have a time axis of at least 2 samples, got shape "
                         f"{x.shape}")
    if not np.all(np.isfinite(x)):
        raise ValueError("samples must be finite (no NaN or infinity)")
    return x


def _offsets(offsets, name: str, sample_rate: float) -> np.ndarray:
    arr = np.atleast_1d(np.asarray(offsets, dtype=float))
    if arr.ndim != 1 or arr.size == 0:
        raise ValueError(f"{name} must be a number or a 1-D sequence of frequencies in Hz, "
                         f"got shape {np.shape(offsets)}")
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite, got {arr.tolist()}")
    bad = arr[np.abs(arr) >= sample_rate / 2]
    if bad.size:
        raise ValueError(f"{name} holds {bad[0]:g} Hz, outside the band "
                         f"(-{sample_rate / 2:g}, {sample_rate / 2:g}) Hz of "
                         f"sample_rate={sample_rate:g}")
    return arr


# ---- the estimate ------------------------------------------------------------

def psd(samples, sample_rate, *, segment_length: int | None = None, window="hann",
        scaling: str = "density") -> tuple[np.ndarray, np.ndarray]:
    r"""Welch estimate of the power spectral density, two-sided and centred.

    Parameters
    ----------
    samples : array_like
        Shape ``(..., n)``.  Real or complex; leading axes are batch (each
        row gets its own spectrum).
    sample_rate : float
        Sample rate in Hz.
    segment_length : int, optional
        Samples per Welch segment (the frequency resolution is
        ``sample_rate / segment_length``); default ``min(n, 1024)``.
    window : str or tuple, optional
        Any window :func:`scipy.signal.get_window` knows; default ``"hann"``.
    scaling : {"density", "power"}
        ``"density"``: power per Hz; ``"power"``: power per bin, so that a
        pure tone reads its power at its peak (see the module notes).

    Returns
    -------
    frequencies : ndarray
        Shape ``(segment_length,)``, ascending, in Hz.
    values : ndarray
        Shape ``(..., segment_length)``.

    Raises
    ------
    ValueError
        A non-positive sample rate, a segment longer than the signal, an
        unknown scaling, non-finite samples.
    TypeError
        Non-numeric samples or sample rate.

    See Also
    --------
    band_power, aclr, check_mask

    Notes
    -----
    This is Welch's method [1]_: :func:`scipy.signal.welch` with
    ``return_onesided=False``, ``detrend=False`` and half-overlapping
    segments, reordered with
    :func:`numpy.fft.fftshift`.  With ``scaling="density"``,
    :math:`\sum_k P_k\,\Delta f` equals the mean power :math:`E|x|^2`
    (Parseval, up to the estimate's variance); a Hann window gives an
    equivalent noise bandwidth of 1.5 bins.  Cost: one FFT of
    ``segment_length`` points per half segment of signal.  The result is
    an engineering estimate, not a compliance measurement.

    References
    ----------
    .. [1] P. D. Welch, "The use of fast Fourier transform for the
       estimation of power spectra", IEEE Trans. Audio Electroacoust.,
       15(2), 1967.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> rng = np.random.default_rng(0)
    >>> noise = rng.standard_normal(1 << 16) + 1j * rng.standard_normal(1 << 16)
    >>> f, p = tonebank.spectrum.psd(noise, 1e6, segment_length=256)
    >>> f.shape, round(float(p.mean() * 1e6), 1)   # 2 W spread over 1 MHz
    ((256,), 2.0)
    """
    x = _signal(samples)
    fs = _positive(sample_rate, "sample_rate")
    n = x.shape[-1]
    if segment_length is None:
        nseg = min(n, _DEFAULT_SEGMENT)
    else:
        nseg = integer(segment_length, "segment_length", minimum=2)
        if nseg > n:
            raise ValueError(f"segment_length={nseg} is longer than the signal ({n} samples)")
    if scaling not in ("density", "power"):
        raise ValueError(f"scaling must be 'density' or 'power', got {scaling!r}")
    f, p = scipy.signal.welch(x, fs=fs, window=window, nperseg=nseg, noverlap=nseg // 2,
                              detrend=False, return_onesided=False,
                              scaling="density" if scaling == "density" else "spectrum",
                              axis=-1)
    return np.fft.fftshift(f), np.fft.fftshift(p, axes=-1)


def _integrate(freqs: np.ndarray, density: np.ndarray, low: float, high: float) -> np.ndarray:
    """Integral of a density over [low, high), bins weighted by their overlap."""
    df = freqs[1] - freqs[0]
    left = freqs - df / 2
    overlap = np.clip(np.minimum(left + df, high) - np.maximum(left, low), 0.0, None)
    return density @ overlap


def band_power(samples, sample_rate, low, high, *, segment_length: int | None = None,
               window="hann") -> np.ndarray:
    """Mean power of the signal between two frequencies.

    Parameters
    ----------
    samples : array_like
        Shape ``(..., n)``.
    sample_rate : float
        Sample rate in Hz.
    low, high : float
        Band edges in Hz, ``-sample_rate/2 <= low < high <= sample_rate/2``.
    segment_length, window
        As for :func:`psd`.

    Returns
    -------
    ndarray
        Shape ``(...)``: power (mean square) in the band, in the units of
        ``|samples|**2``.

    Raises
    ------
    ValueError
        Edges out of order or outside the band.

    See Also
    --------
    psd, aclr

    Notes
    -----
    The integral of the :func:`psd` density over the band, bins cut by an
    edge counted by the fraction of their width inside it.  An
    engineering estimate, not a compliance measurement.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> t = np.arange(8192)
    >>> tone = np.exp(2j * np.pi * 0.125 * t)          # 1 W at fs/8
    >>> p = tonebank.spectrum.band_power(tone, 8.0, 0.5, 1.5)
    >>> round(float(p), 3)
    1.0
    """
    fs = _positive(sample_rate, "sample_rate")
    low, high = _finite(low, "low"), _finite(high, "high")
    if not -fs / 2 <= low < high <= fs / 2:
        raise ValueError(f"band edges low={low:g}, high={high:g} Hz must satisfy "
                         f"-{fs / 2:g} <= low < high <= {fs / 2:g} (sample_rate={fs:g})")
    f, p = psd(samples, fs, segment_length=segment_length, window=window)
    return _integrate(f, p, low, high)


def occupied_bandwidth(samples, sample_rate, *, fraction: float = 0.99,
                       segment_length: int | None = None, window="hann") -> float:
    """The bandwidth holding a given fraction of the power (default 99 %).

    Parameters
    ----------
    samples : array_like
        Shape ``(n,)``: one signal.
    sample_rate : float
        Sample rate in Hz.
    fraction : float, default 0.99
        Share of the total power inside the band, ``0 < fraction < 1``.
        Equal shares ``(1 - fraction) / 2`` are left out below and above.
    segment_length, window
        As for :func:`psd`.

    Returns
    -------
    float
        Bandwidth in Hz.

    Raises
    ------
    ValueError
        ``fraction`` outside (0, 1), a batch of signals, a signal of zero
        power.

    See Also
    --------
    psd

    Notes
    -----
    The cumulative integral of the :func:`psd` density is interpolated
    linearly to find the frequencies below which ``(1 - fraction) / 2``
    and ``(1 + fraction) / 2`` of the power lie; the result is their
    difference.  Its resolution is about one bin, ``sample_rate /
    segment_length``.  An engineering estimate, not a compliance
    measurement.

    Examples
    --------
    >>> import numpy as np, scipy.signal, tonebank
    >>> rng = np.random.default_rng(1)
    >>> white = rng.standard_normal(1 << 16) + 1j * rng.standard_normal(1 << 16)
    >>> band = scipy.signal.lfilter(scipy.signal.firwin(255, 0.25), 1, white)
    >>> round(tonebank.spectrum.occupied_bandwidth(band, 1.0), 2)   # cut-off 0.125 Hz
    0.25
    """
    x = _signal(samples)
    if x.ndim != 1:
        raise ValueError(f"samples must be one signal of shape (n,), got {x.shape}")
    fs = _positive(sample_rate, "sample_rate")
    fraction = _finite(fraction, "fraction")
    if not 0 < fraction < 1:
        raise ValueError(f"fraction must be between 0 and 1 (exclusive), got {fraction}")
    f, p = psd(x, fs, segment_length=segment_length, window=window)
    df = f[1] - f[0]
    cum = np.concatenate(([0.0], np.cumsum(p) * df))
    if cum[-1] <= 0:
        raise ValueError("samples have zero power: no occupied bandwidth")
    edges = np.concatenate((f - df / 2, [f[-1] + df / 2]))
    lo = np.interp((1 - fraction) / 2 * cum[-1], cum, edges)
    hi = np.interp((1 + fraction) / 2 * cum[-1], cum, edges)
    return float(hi - lo)


def out_of_band_power(samples, sample_rate, offsets, measurement_bandwidth, *,
                      segment_length: int | None = None, window="hann") -> np.ndarray:
    """Power in narrow bands at given frequency offsets, relative to the total.

    Parameters
    ----------
    samples : array_like
        Shape ``(..., n)``.
    sample_rate : float
        Sample rate in Hz.
    offsets : float or array_like of float
        Centre frequencies of the measurement bands in Hz (signed, relative
        to the carrier at 0 Hz).
    measurement_bandwidth : float
        Width in Hz of each measurement band.
    segment_length, window
        As for :func:`psd`; the resolution ``sample_rate / segment_length``
        should be well below ``measurement_bandwidth``.

    Returns
    -------
    ndarray
        Shape ``(..., n_offsets)``: ``10 log10(P_band / P_total)`` in dB
        (dBc).  ``-inf`` where the band holds no power.

    Raises
    ------
    ValueError
        A band reaching past ``+-sample_rate/2``, a non-positive
        bandwidth or sample rate.

    See Also
    --------
    aclr, band_power

    Notes
    -----
    Band powers integrate the Welch density (see :func:`band_power`).
    An engineering estimate, not a compliance measurement.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> rng = np.random.default_rng(2)
    >>> x = rng.standard_normal(1 << 15) + 1j * rng.standard_normal(1 << 15)
    >>> dbc = tonebank.spectrum.out_of_band_power(x, 1.0, [0.25], 0.1, segment_length=256)
    >>> round(float(dbc[0]), 1)    # a tenth of a flat spectrum
    -10.0
    """
    x = _signal(samples)
    fs = _positive(sample_rate, "sample_rate")
    bw = _positive(measurement_bandwidth, "measurement_bandwidth")
    off = _offsets(offsets, "offsets", fs)
    for o in off:
        if abs(o) + bw / 2 > fs / 2:
            raise ValueError(f"offsets holds {o:g} Hz: with measurement_bandwidth={bw:g} Hz "
                             f"the band reaches past +-{fs / 2:g} Hz (sample_rate={fs:g})")
    f, p = psd(x, fs, segment_length=segment_length, window=window)
    total = p.sum(axis=-1) * (f[1] - f[0])
    bands = np.stack([_integrate(f, p, o - bw / 2, o + bw / 2) for o in off], axis=-1)
    with np.errstate(divide="ignore"):
        return 10 * np.log10(bands / total[..., None])


def aclr(samples, sample_rate, channel_bandwidth, offsets, *, adjacent_bandwidth=None,
         segment_length: int | None = None, window="hann") -> np.ndarray:
    """Adjacent-channel leakage ratio: main channel power over adjacent channel power.

    Parameters
    ----------
    samples : array_like
        Shape ``(..., n)``: the transmitted signal, its channel centred at
        0 Hz.
    sample_rate : float
        Sample rate in Hz.
    channel_bandwidth : float
        Width in Hz of the main (assigned) channel, centred at 0 Hz.
    offsets : float or array_like of float
        Centre frequencies of the adjacent channels in Hz (signed, e.g.
        ``[-20e6, 20e6]``).
    adjacent_bandwidth : float, optional
        Width in Hz of each adjacent channel; default ``channel_bandwidth``.
    segment_length, window
        As for :func:`psd`.

    Returns
    -------
    ndarray
        Shape ``(..., n_offsets)``: ``10 log10(P_main / P_adjacent)`` in
        dB; larger is cleaner, ``inf`` where an adjacent channel holds no
        power.

    Raises
    ------
    ValueError
        A channel reaching past ``+-sample_rate/2``, non-positive
        bandwidths or sample rate.

    See Also
    --------
    out_of_band_power, band_power, check_mask

    Notes
    -----
    Both powers integrate the Welch density (:func:`band_power`) over
    rectangular channel filters; standards that define ACLR prescribe
    their own measurement filters (for example root-raised-cosine ones),
    which this does not model.  An engineering estimate, not a compliance
    measurement.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> t = np.arange(1 << 14)
    >>> x = np.exp(2j * np.pi * 0.05 * t) + 0.01 * np.exp(2j * np.pi * 0.3 * t)
    >>> r = tonebank.spectrum.aclr(x, 1.0, 0.2, [-0.3, 0.3], segment_length=512)
    >>> bool(r[0] > 100), round(float(r[1]), 1)   # nothing at -0.3 Hz, 1e-4 W at +0.3 Hz
    (True, 40.0)
    """
    x = _signal(samples)
    fs = _positive(sample_rate, "sample_rate")
    bw = _positive(channel_bandwidth, "channel_bandwidth")
    adj = bw if adjacent_bandwidth is None else _positive(adjacent_bandwidth,
                                                          "adjacent_bandwidth")
    if bw > fs:
        raise ValueError(f"channel_bandwidth={bw:g} Hz is wider than sample_rate={fs:g} Hz")
    off = _offsets(offsets, "offsets", fs)
    for o in off:
        if abs(o) + adj / 2 > fs / 2:
            raise ValueError(f"offsets holds {o:g} Hz: with adjacent_bandwidth={adj:g} Hz the "
                             f"adjacent channel reaches past +-{fs / 2:g} Hz "
                             f"(sample_rate={fs:g}); raise the sample rate (oversample)")
    f, p = psd(x, fs, segment_length=segment_length, window=window)
    main = _integrate(f, p, -bw / 2, bw / 2)
    side = np.stack([_integrate(f, p, o - adj / 2, o + adj / 2) for o in off], axis=-1)
    with np.errstate(divide="ignore"):
        return 10 * np.log10(main[..., None] / side)


# ---- masks -------------------------------------------------------------------

@dataclass(frozen=True)
class MaskCheck:
    """The outcome of :func:`tonebank.spectrum.check_mask` (an engineering estimate).

    Attributes
    ----------
    passed : bool
        True when the spectrum stays at or below the mask everywhere the
        mask is defined.
    margin_db : float
        The smallest distance in dB from the spectrum up to the mask
        (negative: the spectrum exceeds the mask by that much).
    worst_frequency : float
        Frequency in Hz (signed) where the margin is smallest.
    violations : list of tuple
        Frequency ranges in Hz, ``(low, high)`` bin centres, where the spectrum
        exceeds the mask; empty when it passes.
    frequencies : ndarray
        Shape ``(m,)``: the checked frequencies in Hz.
    margins_db : ndarray
        Shape ``(m,)``: the margin at each checked frequency.
    note : str
        The caution that this is not a compliance measurement.
    """

    passed: bool
    margin_db: float
    worst_frequency: float
    violations: list = field(repr=False)
    frequencies: np.ndarray = field(repr=False)
    margins_db: np.ndarray = field(repr=False)
    note: str = CAUTION

    def __repr__(self):
        return (f"MaskCheck(passed={self.passed}, margin_db={self.margin_db:.2f}, "
                f"worst_frequency={self.worst_frequency:g}, "
                f"violations={len(self.violations)} range(s); {self.note})")


def _mask_points(mask) -> tuple[np.ndarray, np.ndarray]:
    try:
        pts = np.asarray(mask, dtype=float)
    except (TypeError, ValueError):
        raise TypeError("mask must be a sequence of (frequency offset in Hz, limit in dB) "
                        f"pairs, got {mask!r}") from None
    if pts.ndim != 2 or pts.shape[1] != 2 or pts.shape[0] < 2:
        raise ValueError("mask must hold at least two (frequency offset in Hz, limit in dB) "
                         f"pairs, shape (m, 2); got shape {pts.shape}")
    if not np.all(np.isfinite(pts)):
        raise ValueError(f"mask must be finite, got {pts.tolist()}")
    off, lim = pts[:, 0], pts[:, 1]
    if np.any(off < 0):
        raise ValueError(f"mask offsets must be >= 0 (distance from the carrier), got "
                         f"{off.tolist()}")
    steps = np.diff(off)
    if np.any(steps < 0):
        i = int(np.flatnonzero(steps < 0)[0])
        raise ValueError(f"mask offsets must not decrease: {off[i]:g} Hz is followed by "
                         f"{off[i + 1]:g} Hz; list the points in ascending frequency "
                         "(a repeated offset makes a vertical step)")
    return off, lim


def check_mask(samples, sample_rate, mask, *, reference="peak",
               segment_length: int | None = None, window="hann") -> MaskCheck:
    """Compare a spectrum with a user-supplied spectral mask.

    Parameters
    ----------
    samples : array_like
        Shape ``(n,)``: one signal, its channel centred at 0 Hz.
    sample_rate : float
        Sample rate in Hz.
    mask : array_like of float
        Shape ``(m, 2)``: points ``(offset_hz, limit_db)``, offsets >= 0
        and non-decreasing (a repeated offset makes a vertical step).  The
        limit between points is linear in dB against frequency; the mask
        applies at ``+offset`` and ``-offset`` alike; frequencies below
        the first offset or beyond the last are not checked (start the
        mask at the channel edge to check only the out-of-band part).
    reference : "peak" or float, default "peak"
        What 0 dB of the mask means: ``"peak"``, the highest value of the
        PSD (limits in dBr); or a number, a density in dB (the units of
        ``10 log10(psd)``, e.g. dBW/Hz), for absolute limits.
    segment_length, window
        As for :func:`psd`.

    Returns
    -------
    MaskCheck
        Passed or not, the margin, where it is worst, the violated ranges.

    Raises
    ------
    ValueError
        A mask that is not ``(m, 2)`` with m >= 2, negative or decreasing
        offsets, non-finite values; a bad sample rate; a batch of signals.
    TypeError
        A mask that is not numeric; a reference that is neither "peak" nor
        a number.

    See Also
    --------
    psd, aclr

    Notes
    -----
    The margin at a frequency :math:`f` is :math:`L(|f|) - (10\\log_{10}
    P(f) - R)` with :math:`L` the interpolated mask, :math:`P` the
    :func:`psd` density and :math:`R` the reference.  The resolution
    bandwidth is the PSD bin width times the window's noise bandwidth,
    not the one a regulation prescribes.  An engineering estimate, not a
    compliance measurement.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> rng = np.random.default_rng(3)
    >>> x = rng.standard_normal(1 << 14) + 1j * rng.standard_normal(1 << 14)
    >>> level = 10 * np.log10(2.0)        # 2 W spread over 1 Hz, in dB per Hz
    >>> result = tonebank.spectrum.check_mask(x, 1.0, [(0.0, 3.0), (0.5, 3.0)],
    ...                                       reference=level, segment_length=128)
    >>> result.passed, round(result.margin_db, 1)
    (True, 2.3)
    """
    x = _signal(samples)
    if x.ndim != 1:
        raise ValueError(f"samples must be one signal of shape (n,), got {x.shape}")
    fs = _positive(sample_rate, "sample_rate")
    off, lim = _mask_points(mask)
    f, p = psd(x, fs, segment_length=segment_length, window=window)
    with np.errstate(divide="ignore"):
        level = 10 * np.log10(p)
    if isinstance(reference, str):
        if reference != "peak":
            raise ValueError(f"reference must be 'peak' or a number in dB, got {reference!r}")
        ref = float(level.max())
    else:
        ref = _finite(reference, "reference")
    dist = np.abs(f)
    inside = dist <= off[-1]
    if not np.any(inside & (dist >= off[0])):
        raise ValueError(f"the mask covers offsets {off[0]:g} .. {off[-1]:g} Hz, which "
                         f"hold no frequency bin of this spectrum (bin width "
                         f"{f[1] - f[0]:g} Hz)")
    inside &= dist >= off[0]
    fc = f[inside]
    limit = np.interp(np.abs(fc), off, lim)
    # At a repeated offset (a vertical step) the stricter side applies.
    steps = np.flatnonzero(np.diff(off) == 0)
    for i in steps:
        at = np.abs(fc) == off[i]
        limit[at] = min(lim[i], lim[i + 1])
    margins = limit - (level[inside] - ref)
    worst = int(np.argmin(margins))
    bad = margins < 0
    ranges = []
    if np.any(bad):
        edges = np.flatnonzero(np.diff(np.concatenate(([0], bad.astype(np.int8), [0]))))
        for start, stop in zip(edges[::2], edges[1::2]):
            ranges.append((float(fc[start]), float(fc[stop - 1])))
    return MaskCheck(passed=not ranges, margin_db=float(margins[worst]),
                     worst_frequency=float(fc[worst]), violations=ranges,
                     frequencies=fc, margins_db=margins)
