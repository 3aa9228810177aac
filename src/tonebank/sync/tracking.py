r"""Pilot-based tracking: common phase error, residual frequency offset, sampling clock offset.

After the channel has been estimated once (from a preamble), what still
changes from symbol to symbol is mostly a rotation: a residual frequency
offset and phase noise turn every subcarrier of a symbol by the same
common phase error (CPE), and a sampling clock offset shifts the FFT
window slowly, which turns subcarrier :math:`k` by a phase proportional to
:math:`k`.  On the pilots, with :math:`z_{s,k} = Y_{s,k}\,(H_k P_{s,k})^*`,

.. math::

    \angle z_{s,k} \approx a_s + b_s k,

and :func:`pilot_phase` fits :math:`a_s` and :math:`b_s` per symbol.
Across symbols, :math:`a_s` grows by :math:`2\pi\epsilon\,(N+c)/N` per
symbol for a residual offset of :math:`\epsilon` spacings, and
:math:`b_s = 2\pi\delta\,n_s/N` for a relative clock offset :math:`\delta`
(symbol :math:`s` starting at sample :math:`n_s`); :func:`phase_drift`
fits both lines.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .._checks import integer

__all__ = ["PilotPhase", "PhaseDrift", "pilot_phase", "phase_drift", "derotate"]


class PilotPhase(NamedTuple):
    """Result of :func:`tonebank.sync.pilot_phase`, each of shape ``(..., n_symbols)`` (float64)."""

    #: Phase :math:`a_s` at subcarrier 0 in radians: the common phase error.
    common: np.ndarray
    #: Phase slope :math:`b_s` in radians per subcarrier.
    slope: np.ndarray


class PhaseDrift(NamedTuple):
    """Result of :func:`tonebank.sync.phase_drift`."""

    #: Residual frequency offset in subcarrier spacings.
    cfo_spacings: float | np.ndarray
    #: Sampling clock offset in parts per million (positive for a fast receiver clock).
    sco_ppm: float | np.ndarray


def _complex(value, name: str) -> np.ndarray:
    a = np.asarray(value)
    if a.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric, got dtype {a.dtype}")
    a = a.astype(np.complex128)
    if not np.all(np.isfinite(a)):
        raise ValueError(f"{name} must be finite")
    return a


def pilot_phase(received, expected, subcarriers, *, channel=None) -> PilotPhase:
    r"""Per-symbol common phase error and phase slope from the pilots.

    Parameters
    ----------
    received : array_like of complex
        Shape ``(..., n_symbols, n_pilots)``: the received pilot cells
        (e.g. the second output of :meth:`tonebank.CpOfdm.demodulate`).
    expected : array_like of complex
        The transmitted pilot values, broadcastable to ``received``
        (e.g. ``plan.pilots_for(n_symbols)``).
    subcarriers : array_like of int
        Shape ``(n_pilots,)``: signed subcarrier index of each pilot.
    channel : array_like of complex, optional
        The channel on the pilots, broadcastable to ``received`` (e.g.
        estimated from the preamble); default 1.

    Returns
    -------
    PilotPhase
        ``(common, slope)``, each float64 of shape ``(..., n_symbols)``.
        With one pilot the slope is 0.

    Raises
    ------
    TypeError, ValueError
        Non-numeric or non-finite input, shapes that do not broadcast, no
        pilot.

    Notes
    -----
    The slope is the least-squares fit of the unwrapped pilot phases about
    their (power-weighted) centre subcarrier, each phase weighted by
    :math:`|z_{s,k}|` (strong pilots count more), after the common phase
    has been removed so that phases stay within :math:`\pm\pi`; then
    :math:`a_s = \angle\sum_k z_{s,k}e^{-i b_s k}`.  Valid while
    :math:`|b_s|` times the pilot spread stays well below :math:`\pi`.
    Cost: :math:`O(\text{pilots})` per symbol.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import sync
    >>> k = np.array([-21, -7, 7, 21])
    >>> rx = np.exp(1j * (0.3 + 0.01 * k))[None, :]      # one symbol
    >>> ph = sync.pilot_phase(rx, 1.0, k)
    >>> round(float(ph.common[0]), 12), round(float(ph.slope[0]), 12)
    (0.3, 0.01)
    """
    y = _complex(received, "received")
    if y.ndim < 2 or y.shape[-1] == 0:
        raise ValueError("received must have shape (..., n_symbols, n_pilots) with at least "
                         f"one pilot, got {y.shape}")
    x = _complex(expected, "expected")
    k = np.asarray(subcarriers)
    if k.dtype.kind not in "iu" or k.shape != (y.shape[-1],):
        raise ValueError(f"subcarriers must be {y.shape[-1]} integers (one per pilot), got "
                         f"{k.dtype} of shape {k.shape}")
    h = 1.0 if channel is None else _complex(channel, "channel")
    try:
        z = y * np.conj(h * x)
    except ValueError:
        raise ValueError(f"expected {np.shape(x)} and channel {np.shape(h)} must broadcast to "
                         f"received {y.shape}") from None
    if z.shape != y.shape:
        raise ValueError(f"expected {np.shape(x)} and channel {np.shape(h)} would enlarge "
                         f"the shape {y.shape} of received")
    k = k.astype(np.float64)
    coarse = np.angle(np.sum(z, axis=-1))
    w = np.abs(z)
    if y.shape[-1] == 1:
        slope = np.zeros(coarse.shape)
    else:
        phase = np.angle(z * np.exp(-1j * coarse)[..., None])
        wsum = np.sum(w, axis=-1, keepdims=True)
        centre = np.sum(w * k, axis=-1, keepdims=True) / np.where(wsum > 0, wsum, 1)
        dk = k - centre
        den = np.sum(w * dk * dk, axis=-1)
        slope = np.divide(np.sum(w * dk * phase, axis=-1), den, out=np.zeros(coarse.shape),
                          where=den > 0)
    common = np.angle(np.sum(z * np.exp(-1j * slope[..., None] * k), axis=-1))
    return PilotPhase(common, slope)


def phase_drift(phase: PilotPhase, *, n_fft: int, symbol_length: int,
                first_sample: int = 0) -> PhaseDrift:
    r"""Residual frequency offset and sampling clock offset from the pilot phases of a frame.

    Parameters
    ----------
    phase : PilotPhase
        From :func:`pilot_phase`, ``n_symbols >= 2``.
    n_fft : int
        Transform size :math:`N`.
    symbol_length : int
        Samples per symbol, :math:`N + c` (one prefix length).
    first_sample : int, default 0
        Sample index :math:`n_0` of the first symbol's body start,
        counted from where the timing was last set (symbol :math:`s`
        starts at :math:`n_s = n_0 + s\,(N + c)`).

    Returns
    -------
    PhaseDrift
        ``(cfo_spacings, sco_ppm)``, of the leading shape of ``phase``.

    Raises
    ------
    TypeError, ValueError
        Bad sizes, fewer than two symbols.

    Notes
    -----
    Least-squares lines through the unwrapped common phase (slope
    :math:`2\pi\epsilon(N+c)/N` per symbol) and through the slopes
    against :math:`n_s` (slope :math:`2\pi\delta/N` per sample, the
    timing drift of a clock offset :math:`\delta`; the intercept is kept
    free, so a constant timing error does not bias :math:`\delta`).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import sync
    >>> s = np.arange(10)
    >>> ph = sync.PilotPhase(2 * np.pi * 0.01 * 80 / 64 * s, 2 * np.pi * 40e-6 * 80 * s / 64)
    >>> d = sync.phase_drift(ph, n_fft=64, symbol_length=80)
    >>> round(float(d.cfo_spacings), 12), round(float(d.sco_ppm), 9)
    (0.01, 40.0)
    """
    if not isinstance(phase, PilotPhase):
        raise TypeError(f"phase must be a PilotPhase (from pilot_phase), got "
                        f"{type(phase).__name__}")
    n_fft = integer(n_fft, "n_fft", minimum=1)
    symbol_length = integer(symbol_length, "symbol_length", minimum=1)
    first_sample = integer(first_sample, "first_sample")
    a = np.asarray(phase.common, np.float64)
    b = np.asarray(phase.slope, np.float64)
    if a.ndim < 1 or a.shape[-1] < 2 or a.shape != b.shape:
        raise ValueError("phase must hold at least two symbols with common and slope of one "
                         f"shape, got {a.shape} and {b.shape}")
    s = np.arange(a.shape[-1], dtype=np.float64)
    sc = s - s.mean()
    a_u = np.unwrap(a, axis=-1)
    per_symbol = np.sum(sc * (a_u - a_u.mean(axis=-1, keepdims=True)), axis=-1) / np.sum(sc * sc)
    cfo = per_symbol * n_fft / (2 * np.pi * symbol_length)
    # b_s against n_s: the same centred regression, per sample.
    per_sample = np.sum(sc * (b - b.mean(axis=-1, keepdims=True)), axis=-1) \
        / np.sum(sc * sc) / symbol_length
    sco = per_sample * n_fft / (2 * np.pi) * 1e6
    if cfo.ndim == 0:
        return PhaseDrift(float(cfo), float(sco))
    return PhaseDrift(cfo, sco)


def derotate(cells, subcarriers, phase: PilotPhase) -> np.ndarray:
    r"""Undo the per-symbol rotation :math:`a_s + b_s k` on received cells.

    Parameters
    ----------
    cells : array_like of complex
        Shape ``(..., n_symbols, n_cells)``.
    subcarriers : array_like of int
        Shape ``(n_cells,)``: signed subcarrier index of each cell.
    phase : PilotPhase
        Shapes ``(..., n_symbols)``.

    Returns
    -------
    ndarray
        ``cells * exp(-1j * (common + slope * k))``, complex128 (complex64
        kept).

    Raises
    ------
    TypeError, ValueError
        Bad types, shapes that do not match.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import sync
    >>> k = np.array([-3, 1, 5])
    >>> ph = sync.PilotPhase(np.array([0.2]), np.array([0.05]))
    >>> cells = np.exp(1j * (0.2 + 0.05 * k))[None]
    >>> bool(np.allclose(sync.derotate(cells, k, ph), 1))
    True
    """
    c = np.asarray(cells)
    if c.dtype.kind not in "biufc":
        raise TypeError(f"cells must be numeric, got dtype {c.dtype}")
    if not isinstance(phase, PilotPhase):
        raise TypeError(f"phase must be a PilotPhase, got {type(phase).__name__}")
    k = np.asarray(subcarriers)
    if c.ndim < 2 or k.dtype.kind not in "iu" or k.shape != (c.shape[-1],):
        raise ValueError(f"cells must have shape (..., n_symbols, n_cells) and subcarriers "
                         f"shape (n_cells,), got {c.shape} and {k.shape}")
    a = np.asarray(phase.common, np.float64)
    b = np.asarray(phase.slope, np.float64)
    if a.shape != c.shape[:-1] or b.shape != a.shape:
        raise ValueError(f"phase has shape {a.shape}, cells need {c.shape[:-1]}")
    dtype = np.complex64 if c.dtype in (np.complex64, np.float32) else np.complex128
    rot = np.exp(-1j * (a[..., None] + b[..., None] * k.astype(np.float64)))
    return (c * rot).astype(dtype)
