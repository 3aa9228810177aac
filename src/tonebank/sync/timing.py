r"""Frame detection and timing from a preamble with two identical halves.

A symbol whose time-domain body is two identical halves of ``L`` samples
(or any signal periodic with period ``L``) keeps that repetition through
a channel shorter than the cyclic prefix and through a carrier frequency
offset, which only turns the second half by a constant phase.  The
delay-and-correlate sums

.. math::

    P(d) = \sum_{m=0}^{W-1} x^*_{d+m}\, x_{d+m+L}, \qquad
    R(d) = \sum_{m=0}^{W-1} |x_{d+m+L}|^2

give the timing metric of Schmidl and Cox, :math:`M(d) = |P(d)|^2 /
R(d)^2`, which is near 1 where the window sits on the repetition and
near :math:`1/W` on noise.  The angle of :math:`P` measures the offset
(see :mod:`tonebank.sync.frequency`).

Both sums are running sums (one kernel operation, ``halves_correlation``,
in C or numpy), so the metric over a stream of :math:`n` samples costs
:math:`O(n)` whatever the window.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from .. import _kernel
from .._checks import integer

__all__ = ["TimingMetric", "Detection", "timing_metric", "detect_frames",
           "DEFAULT_THRESHOLD"]

#: The detection threshold on the timing metric used by default.
#: On white Gaussian noise the metric of a ``W``-product window is close
#: to an exponential variable of mean ``1/W`` (central limit theorem on
#: ``P``), so one value exceeds a threshold ``t`` with probability about
#: ``exp(-W t)`` (the tests check that the both-halves metric stays below
#: this): for 0.5, 1e-7 at ``W = 32`` and 1e-14 at ``W = 64``.  On the
#: plateau of a frame received at per-sample SNR ``rho`` the metric is
#: about ``(rho / (1 + rho))**2``, which crosses 0.5 at 3.8 dB: frames are
#: found reliably from about 8 dB and mostly missed below 0 dB.
DEFAULT_THRESHOLD = 0.5

#: Energies below this fraction of the largest in a row give metric 0.
_ENERGY_FLOOR = 1e-10


def _correlate(x: np.ndarray, period: int, window: int):
    """The running sums (P, R) through the kernel seam (arguments already checked)."""
    return _kernel.active().halves_correlation(x, period, window)


def _signal(samples, name: str = "samples") -> np.ndarray:
    """``samples`` as a C-contiguous complex64/complex128 array with a time axis."""
    x = np.asarray(samples)
    if x.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric, got dtype {x.dtype}")
    if x.ndim == 0:
        raise ValueError(f"{name} must have at least one axis (time), got a scalar")
    dtype = np.complex64 if x.dtype in (np.complex64, np.float32, np.float16) else np.complex128
    x = np.ascontiguousarray(x, dtype=dtype)
    if not np.all(np.isfinite(x)):
        raise ValueError(f"{name} must be finite (no NaN or infinity)")
    return x


class TimingMetric(NamedTuple):
    """Result of :func:`tonebank.sync.timing_metric`; all arrays of shape ``(..., n - period - window + 1)``."""

    #: The normalised metric (real, 0..1 for ``normalization="both_halves"``).
    metric: np.ndarray
    #: The correlation sum P(d) (complex); its angle is the phase turned in one period.
    correlation: np.ndarray
    #: The energy sum used to normalise (real), R(d) or the mean energy of both halves.
    energy: np.ndarray


def timing_metric(samples, period: int, *, window: int | None = None,
                  normalization: str = "second_half") -> TimingMetric:
    r"""The delay-and-correlate timing metric of a repeated-halves preamble.

    Parameters
    ----------
    samples : array_like of complex
        Shape ``(..., n)``: received samples, time on the last axis.
        complex64 is kept; other types are computed in complex128.
    period : int
        Distance ``L`` in samples between the repeated parts (half the
        body of a two-halves symbol, 16 for the 802.11a short training).
    window : int, optional
        Number ``W`` of products summed; default ``period``.
    normalization : {"second_half", "both_halves"}, default "second_half"
        ``"second_half"``: :math:`M = |P|^2 / R^2` with :math:`R` the
        energy of the later part, as Schmidl and Cox define it (may exceed
        1 on noise, and becomes large at the end of a burst, where the
        later part is noise and the earlier part is signal).
        ``"both_halves"``: :math:`M = |P|^2 / E^2` with
        :math:`E` the mean of the energies of both parts; by the
        Cauchy-Schwarz inequality :math:`0 \le M \le 1`, with 1 exactly
        where the two parts are equal up to a phase, which makes the
        plateau flatter and the noise floor lower.

    Returns
    -------
    TimingMetric
        ``(metric, correlation, energy)``, each of shape
        ``(..., n - period - window + 1)``: value ``d`` uses samples
        ``d .. d + period + window - 1``.  float64/complex128 (float32 /
        complex64 for complex64 input).  Where the energy is zero (below
        1e-10 of the row's largest) the metric is 0.

    Raises
    ------
    TypeError
        Non-numeric samples, non-integer period or window.
    ValueError
        ``period`` or ``window`` below 1, fewer than ``period + window``
        samples, non-finite samples, unknown ``normalization``.

    See Also
    --------
    detect_frames : thresholding with plateau handling.
    tonebank.sync.fractional_cfo : the offset from the angle of ``correlation``.

    Notes
    -----
    The metric of Schmidl and Cox (eq. 5 with their :math:`R(d)`) with a
    window of ``W`` products.  Noise-free and without a channel, a
    symbol whose body is two identical halves preceded by a cyclic prefix
    of ``c`` samples gives ``M = 1`` on a plateau of ``c + 1`` positions
    (every start from the prefix start to the body start), which is why
    :func:`detect_frames` locates a frame by the middle of the plateau
    rather than by the peak.  Cost: :math:`O(n)` (running sums).

    References
    ----------
    T. M. Schmidl and D. C. Cox, "Robust frequency and timing
    synchronization for OFDM", IEEE Trans. Commun. 45 (12), 1997.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import sync
    >>> rng = np.random.default_rng(3)
    >>> half = rng.standard_normal(32) + 1j * rng.standard_normal(32)
    >>> x = np.concatenate((np.zeros(40), half, half, np.zeros(40)))
    >>> m = sync.timing_metric(x, 32, normalization="both_halves").metric
    >>> int(np.argmax(m)), round(float(m.max()), 12)
    (40, 1.0)
    """
    x = _signal(samples)
    period = integer(period, "period", minimum=1)
    window = period if window is None else integer(window, "window", minimum=1)
    if not isinstance(normalization, str) or normalization not in ("second_half", "both_halves"):
        raise ValueError("normalization must be 'second_half' or 'both_halves', "
                         f"got {normalization!r}")
    n = x.shape[-1]
    if n < period + window:
        raise ValueError(f"samples has {n} samples on its last axis, fewer than period + "
                         f"window = {period + window} needed for one metric value")
    p, r = _correlate(x, period, window)
    real = r.dtype
    r64 = r.astype(np.float64, copy=False)
    if normalization == "both_halves":
        # The earlier part's energy at d is the later part's at d - period
        # (the kernel's r); only the first `period` starts need their own sum.
        n_out = p.shape[-1]
        first = np.empty_like(r64)
        head = min(period, n_out)
        power = np.abs(x[..., :head + window - 1].astype(np.complex128)) ** 2
        cum = np.concatenate((np.zeros(x.shape[:-1] + (1,)), np.cumsum(power, axis=-1)),
                             axis=-1)
        first[..., :head] = cum[..., window:window + head] - cum[..., :head]
        first[..., head:] = r64[..., :n_out - head]
        e64 = 0.5 * (first + r64)
        energy = e64.astype(real, copy=False)
    else:
        e64, energy = r64, r
    e2 = np.square(e64)
    num = np.abs(p.astype(np.complex128, copy=False))
    num *= num
    # Running sums over exact zeros (silence in a test stream) leave
    # rounding residue in both P and R, whose ratio means nothing: energies
    # below 1e-10 of the largest count as zero, and the metric is 0 there.
    floor = (_ENERGY_FLOOR * np.max(e64, axis=-1, keepdims=True, initial=0.0)) ** 2
    live = e2 > floor
    metric = np.divide(num, e2, out=num, where=live)
    metric[~live] = 0.0
    metric = metric.astype(real, copy=False)
    return TimingMetric(metric, p, energy)


class Detection(NamedTuple):
    """One frame found by :func:`tonebank.sync.detect_frames`."""

    #: The metric index taken as the frame's timing point (the plateau's middle).
    index: int
    #: First and last metric index of the region above the threshold.
    first: int
    last: int
    #: Highest metric value in the region.
    peak: float
    #: The correlation sum at ``index`` (its angle gives the fractional offset).
    correlation: complex


def detect_frames(samples, period: int, *, window: int | None = None,
                  threshold: float = DEFAULT_THRESHOLD, plateau_fraction: float = 0.9,
                  min_length: int = 1, min_gap: int = 0,
                  normalization: str = "both_halves") -> list[Detection]:
    r"""Find repeated-halves preambles in a stream by thresholding the timing metric.

    Parameters
    ----------
    samples : array_like of complex
        Shape ``(n,)``: one stream of received samples.
    period, window
        As for :func:`timing_metric`.
    normalization : {"both_halves", "second_half"}, default "both_halves"
        As for :func:`timing_metric`.  The default keeps the metric at or
        below 1 at the end of a burst, where the energy of the later half
        falls to the noise floor while the earlier half still holds signal
        and the Schmidl & Cox form :math:`|P|^2/R^2` becomes large.
    threshold : float, optional
        A frame starts where the metric rises above this value; must be
        in (0, 1]; default :data:`DEFAULT_THRESHOLD` (0.5).  See :data:`DEFAULT_THRESHOLD` for the false-alarm and
        miss behaviour.
    plateau_fraction : float, default 0.9
        Within a region above the threshold, the timing point is the
        middle of the first and last positions where the metric is at
        least this fraction of the region's peak (the plateau rule of
        Schmidl and Cox); in (0, 1].
    min_length : int, default 1
        Regions shorter than this many metric values are ignored (noise
        spikes are a few samples wide, a real plateau is about the
        prefix length plus the window).
    min_gap : int, default 0
        Regions separated by at most this many values below the threshold
        are merged (a plateau dented by a fade is one frame); also, after a
        detection no new region may start within ``min_gap`` of its end.

    Returns
    -------
    list of Detection
        In stream order.

    Raises
    ------
    TypeError, ValueError
        As for :func:`timing_metric`; a ``samples`` array that is not 1-D,
        a threshold or fraction outside (0, 1], negative lengths.

    See Also
    --------
    timing_metric

    Notes
    -----
    The metric's plateau (see :func:`timing_metric`) makes its peak a
    poor timing point: noise moves the peak anywhere along the plateau.
    Schmidl and Cox average the two points at 90 % of the peak on either
    side; this function does the same within each above-threshold region.
    Cost: :math:`O(n)`.

    References
    ----------
    T. M. Schmidl and D. C. Cox, IEEE Trans. Commun. 45 (12), 1997.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import sync
    >>> rng = np.random.default_rng(5)
    >>> half = np.exp(2j * np.pi * rng.random(32))
    >>> cp = half[-8:]
    >>> x = np.concatenate((np.zeros(100), cp, half, half, np.zeros(100)))
    >>> x = x + 0.05 * (rng.standard_normal(x.size) + 1j * rng.standard_normal(x.size))
    >>> found = sync.detect_frames(x, 32, min_length=4)
    >>> [d.index for d in found]        # the plateau runs from 100 (prefix) to 108 (body)
    [103]
    """
    x = _signal(samples)
    if x.ndim != 1:
        raise ValueError(f"samples must be one stream of shape (n,), got shape {x.shape}")
    threshold = _fraction(threshold, "threshold")
    plateau_fraction = _fraction(plateau_fraction, "plateau_fraction")
    min_length = integer(min_length, "min_length", minimum=1)
    min_gap = integer(min_gap, "min_gap", minimum=0)
    tm = timing_metric(x, period, window=window, normalization=normalization)
    return _regions(tm, threshold, plateau_fraction, min_length, min_gap)


def _fraction(value, name: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise TypeError(f"{name} must be a real number, got {value!r}") from None
    if isinstance(value, (bool, np.bool_)) or not (0.0 < v <= 1.0) or math.isnan(v):
        raise ValueError(f"{name} must be in (0, 1], got {value!r}")
    return v


def _regions(tm: TimingMetric, threshold: float, plateau_fraction: float,
             min_length: int, min_gap: int) -> list[Detection]:
    m = tm.metric
    above = np.flatnonzero(m > threshold)
    if above.size == 0:
        return []
    # Runs of consecutive indices above the threshold, merged across gaps
    # of at most min_gap values.
    breaks = np.flatnonzero(np.diff(above) > min_gap + 1)
    starts = np.concatenate(([above[0]], above[breaks + 1]))
    ends = np.concatenate((above[breaks], [above[-1]]))
    found: list[Detection] = []
    last_end = -(10 ** 18)
    for a, b in zip(starts.tolist(), ends.tolist()):
        if b - a + 1 < min_length or a <= last_end + min_gap:
            continue
        seg = m[a:b + 1].astype(np.float64)
        peak = float(seg.max())
        high = np.flatnonzero(seg >= plateau_fraction * peak)
        index = a + (int(high[0]) + int(high[-1])) // 2
        found.append(Detection(index, a, b, peak, complex(tm.correlation[index])))
        last_end = b
    return found
