r"""Carrier frequency offset: estimation and correction.

Offsets are in subcarrier spacings, ``cfo_spacings = cfo_hz * n_fft /
sample_rate``: a received signal :math:`x_n e^{2\pi i\,\epsilon n / N}`
has an offset of :math:`\epsilon` spacings.

- :func:`fractional_cfo` turns the correlation of a repetition of
  period :math:`L` (the ``correlation`` of
  :func:`tonebank.sync.timing_metric`) into
  :math:`\hat\epsilon = \angle P \cdot N / (2\pi L)`, unambiguous for
  :math:`|\epsilon| < N / (2L)` (one spacing for two halves of a symbol).
- :func:`integer_cfo` resolves the remaining multiple of :math:`N/L`
  spacings from a second known symbol (Schmidl and Cox 1997, eq. 32-33).
- :func:`repeat_cfo` is the fine estimate from repeated long training
  symbols (a longer period, so a smaller error).
- :func:`correct_cfo` removes an offset.
"""

from __future__ import annotations

import math

import numpy as np

from .._checks import integer
from .timing import _correlate, _signal

__all__ = ["fractional_cfo", "integer_cfo", "repeat_cfo", "correct_cfo"]


def _finite(value, name: str) -> float:
    if isinstance(value, (bool, np.bool_)):
        raise TypeError(f"{name} must be a real number, got {value!r}")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise TypeError(f"{name} must be a real number, got {value!r}") from None
    if not math.isfinite(v):
        raise ValueError(f"{name} must be finite, got {value!r}")
    return v


def fractional_cfo(correlation, period: int, n_fft: int):
    r"""The frequency offset from the correlation of a repetition.

    Parameters
    ----------
    correlation : complex or array_like of complex
        The correlation sum :math:`P` over a repetition of period
        ``period`` (e.g. :attr:`TimingMetric.correlation` at the timing
        point, or :attr:`Detection.correlation`).
    period : int
        The repetition period :math:`L` in samples.
    n_fft : int
        The symbol's transform size :math:`N` (defines the spacing).

    Returns
    -------
    float or ndarray
        The offset in subcarrier spacings, in :math:`(-N/(2L), N/(2L)]`;
        float64, the shape of ``correlation``.

    Raises
    ------
    TypeError, ValueError
        Non-numeric correlation, sizes that are not positive integers.

    Notes
    -----
    A repetition of :math:`L` samples turns by :math:`2\pi\epsilon L/N`,
    so :math:`\hat\epsilon = N\angle P/(2\pi L)` (Schmidl and Cox 1997,
    eq. 8 with :math:`L = N/2`: :math:`\hat\phi/\pi`).  At high SNR the
    phase error has variance :math:`1/(W\,\mathrm{SNR})` for a sum of
    :math:`W` products (same paper, section III).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import sync
    >>> x = np.exp(2j * np.pi * 0.3 * np.arange(128) / 64)   # 0.3 spacings
    >>> p = np.vdot(x[:32], x[32:64])
    >>> round(float(sync.fractional_cfo(p, 32, 64)), 12)
    0.3
    """
    p = np.asarray(correlation)
    if p.dtype.kind not in "biufc":
        raise TypeError(f"correlation must be numeric, got dtype {p.dtype}")
    period = integer(period, "period", minimum=1)
    n_fft = integer(n_fft, "n_fft", minimum=1)
    eps = np.angle(p.astype(np.complex128)) * n_fft / (2 * np.pi * period)
    return float(eps) if eps.ndim == 0 else eps


def repeat_cfo(samples, period: int, n_fft: int, *, start: int = 0,
               length: int | None = None) -> float:
    r"""The frequency offset from a repeated stretch of a signal (e.g. long training symbols).

    Parameters
    ----------
    samples : array_like of complex
        Shape ``(n,)``.
    period : int
        Repetition period in samples.
    n_fft : int
        Transform size :math:`N` defining the spacing.
    start : int, default 0
        First sample of the repeated stretch.
    length : int, optional
        Products summed (default: all that fit, ``n - start - period``).

    Returns
    -------
    float
        The offset in spacings, in :math:`(-N/(2L), N/(2L)]`.

    Raises
    ------
    TypeError, ValueError
        Bad types; a stretch that does not fit in ``samples``.

    See Also
    --------
    fractional_cfo

    Notes
    -----
    :math:`\hat\epsilon = N\angle\sum_m x^*_{s+m}x_{s+m+L} / (2\pi L)`.  For two
    64-sample long training symbols the error variance at high SNR is
    :math:`1/(4\pi^2 \cdot 64\,\mathrm{SNR})` spacings squared (the
    variance of the phase of a sum of 64 products, as above).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import sync
    >>> rng = np.random.default_rng(0)
    >>> s = np.exp(2j * np.pi * rng.random(64))
    >>> x = np.tile(s, 2) * np.exp(2j * np.pi * 0.07 * np.arange(128) / 64)
    >>> round(sync.repeat_cfo(x, 64, 64), 12)
    0.07
    """
    x = _signal(samples)
    if x.ndim != 1:
        raise ValueError(f"samples must have shape (n,), got {x.shape}")
    period = integer(period, "period", minimum=1)
    n_fft = integer(n_fft, "n_fft", minimum=1)
    start = integer(start, "start", minimum=0)
    room = x.size - start - period
    length = room if length is None else integer(length, "length", minimum=1)
    if length < 1 or length > room:
        raise ValueError(f"a repeated stretch of {length} products from start={start} with "
                         f"period={period} needs {start + period + max(length, 1)} samples, "
                         f"samples has {x.size}")
    seg = x[start:start + period + length]
    p, _ = _correlate(seg, period, length)
    return float(np.angle(complex(p[0])) * n_fft / (2 * np.pi * period))


def integer_cfo(first, second, first_grid, second_grid, *, max_spacings: float,
                step: int = 2) -> int:
    r"""The integer frequency offset from two known symbols (Schmidl and Cox, second symbol).

    Parameters
    ----------
    first, second : array_like of complex
        Shape ``(n_fft,)`` each: the received bodies (prefix removed) of
        the two known symbols, the fractional offset already removed.
    first_grid, second_grid : array_like of complex
        Shape ``(n_fft,)`` each: what was sent on them (natural FFT
        order), e.g. :attr:`Preamble.halves_grid` and
        :attr:`Preamble.training`.
    max_spacings : float
        Largest offset searched, in spacings (>= 0).
    step : int, default 2
        The candidates are multiples of ``step`` spacings (2 for a
        two-halves first symbol, whose fractional estimate is ambiguous
        by two spacings).

    Returns
    -------
    int
        The offset in spacings (a multiple of ``step``).

    Raises
    ------
    TypeError, ValueError
        Mismatched shapes, no bins used by both grids, negative range.

    Notes
    -----
    With :math:`X_{1,k}, X_{2,k}` the unitary DFTs of the two bodies and
    :math:`v_k = c_{2,k}/c_{1,k}` on the bins :math:`\mathcal K` where
    both known grids are non-zero, the offset :math:`g` maximises

    .. math::

        B(g) = \frac{\left|\sum_{k\in\mathcal K} X^*_{1,k+g}\, v^*_k\,
        X_{2,k+g}\right|^2}{\left(\sum_{k\in\mathcal K}|X_{2,k+g}|^2\right)^2},

    a form of Schmidl and Cox 1997, eq. 33 (their normalisation uses the
    energy of the whole symbol; here the energy on the shifted set, which
    keeps :math:`B \le \max_k |v_k|^2`).  The channel cancels in
    :math:`X^*_1 X_2` because it is the same on both symbols.  Cost: one
    FFT per symbol and :math:`O(|\mathcal K|)` per candidate.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank import sync
    >>> plan = tonebank.CarrierPlan.centered(64, 52, cp_length=16)
    >>> p = sync.Preamble.two_halves(plan)
    >>> n = np.arange(p.n_samples)
    >>> rx = p.samples * np.exp(2j * np.pi * 4 * n / 64)       # 4 spacings
    >>> sync.integer_cfo(rx[16:80], rx[96:160], p.halves_grid, p.training, max_spacings=6)
    4
    """
    arrays = []
    for name, value in (("first", first), ("second", second), ("first_grid", first_grid),
                        ("second_grid", second_grid)):
        a = np.asarray(value)
        if a.dtype.kind not in "biufc":
            raise TypeError(f"{name} must be numeric, got dtype {a.dtype}")
        if a.ndim != 1:
            raise ValueError(f"{name} must have shape (n_fft,), got {a.shape}")
        arrays.append(a.astype(np.complex128))
    n = arrays[0].size
    for name, a in zip(("second", "first_grid", "second_grid"), arrays[1:]):
        if a.size != n:
            raise ValueError(f"{name} has {a.size} values, first has {n}: all four must "
                             "have n_fft values")
    step = integer(step, "step", minimum=1)
    max_spacings = _finite(max_spacings, "max_spacings")
    if max_spacings < 0:
        raise ValueError(f"max_spacings must be >= 0, got {max_spacings}")
    x1, x2, c1, c2 = arrays
    bins = np.flatnonzero((c1 != 0) & (c2 != 0))
    if bins.size == 0:
        raise ValueError("first_grid and second_grid share no non-zero bin")
    v = c2[bins] / c1[bins]
    y1 = np.fft.fft(x1, norm="ortho")
    y2 = np.fft.fft(x2, norm="ortho")
    g_max = int(math.floor(max_spacings / step + 1e-9))
    shifts = step * np.arange(-g_max, g_max + 1)
    idx = (bins[None, :] + shifts[:, None]) % n
    num = np.abs(np.sum(np.conj(y1[idx]) * np.conj(v) * y2[idx], axis=1)) ** 2
    den = np.sum(np.abs(y2[idx]) ** 2, axis=1) ** 2
    b = np.divide(num, den, out=np.zeros_like(num), where=den > 0)
    return int(shifts[int(np.argmax(b))])


def correct_cfo(samples, cfo_spacings, n_fft: int, *, start_sample: int = 0) -> np.ndarray:
    r"""Remove a frequency offset: multiply by :math:`e^{-2\pi i\,\epsilon (n + n_0)/N}`.

    Parameters
    ----------
    samples : array_like of complex
        Shape ``(..., n)``.
    cfo_spacings : float or array_like of float
        The offset :math:`\epsilon` in spacings; broadcast against the
        leading shape of ``samples`` (one value per row).
    n_fft : int
        :math:`N`.
    start_sample : int, default 0
        Index :math:`n_0` of the first sample (keeps the phase continuous
        when a stream is corrected in pieces).

    Returns
    -------
    ndarray
        The shape and complex dtype of ``samples`` (complex64 kept).

    Raises
    ------
    TypeError, ValueError
        Non-numeric input, non-finite offsets, offsets that do not
        broadcast.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import sync
    >>> x = np.exp(2j * np.pi * 0.25 * np.arange(8) / 8)
    >>> bool(np.allclose(sync.correct_cfo(x, 0.25, 8), 1))
    True
    """
    x = _signal(samples)
    n_fft = integer(n_fft, "n_fft", minimum=1)
    start_sample = integer(start_sample, "start_sample")
    eps = np.asarray(cfo_spacings)
    if eps.dtype.kind not in "biuf":
        raise TypeError(f"cfo_spacings must be real, got dtype {eps.dtype}")
    eps = eps.astype(np.float64)
    if not np.all(np.isfinite(eps)):
        raise ValueError("cfo_spacings must be finite")
    try:
        eps = np.broadcast_to(eps[..., None], x.shape[:-1] + (1,))
    except ValueError:
        raise ValueError(f"cfo_spacings of shape {eps.shape} does not broadcast to the "
                         f"leading shape {x.shape[:-1]} of samples") from None
    n = np.arange(x.shape[-1], dtype=np.float64) + start_sample
    # The phase reduced modulo one turn before the exponential keeps
    # float64 accuracy on long streams.
    turns = np.mod(eps * n / n_fft, 1.0)
    return (x * np.exp(-2j * np.pi * turns)).astype(x.dtype)
