r"""What fixed-point arithmetic costs a design: SQNR of a transform, EVM floor of a chain, advice.

:func:`fft_sqnr_db` measures the signal-to-quantisation-noise ratio of a
:class:`~tonebank.fixedpoint.FixedFft` against the float64 FFT of the same
input codes; :func:`predicted_sqnr_db` gives the value the noise model
below predicts for the ``"halve"`` schedule.  :func:`evm_floor_db` runs a
:class:`~tonebank.fixed_ofdm.FixedCpOfdm` chain without noise and reports
the EVM it adds to a plan and constellation; :func:`recommend_schedule`
tries several schedule pairs and says which keep that floor below a
target.

Noise model of the ``"halve"`` schedule (our derivation, following the
finite-register-length analysis of FFTs in A. V. Oppenheim and R. W.
Schafer, *Discrete-Time Signal Processing*, the section on
finite-register-length effects in FFT algorithms, from memory).  Work in
units of one LSB, :math:`q = 2^{-f}`.  In every butterfly each component
of :math:`t = b w` is rounded once (error variance :math:`q^2/12`), and
each output is shifted right by one bit with rounding (an odd value loses
half an LSB: error variance :math:`q^2/8`).  Halving divides the earlier
error by 4 in variance, and a butterfly adds two inputs, so noise injected
at a stage loses half its variance at every later stage; a stage adds
:math:`q^2/48 + q^2/8 = 7q^2/48` per component, and the output carries
:math:`\frac{7}{48} q^2 (2 - 2^{1-m}) \approx \frac{7}{24} q^2` per
component, :math:`\frac{7}{12} q^2` per complex value, whatever ``n``.
The signal, :math:`X/n`, has variance :math:`\sigma_x^2/n`.  Hence

.. math::

    \mathrm{SQNR} \approx \frac{\sigma_x^2}{n\,\frac{7}{12}\,q^2},

which falls by 3 dB (half a bit) for every doubling of ``n`` -- the
classical result.  Convergent rounding has zero-mean errors and follows
this closely; half-up rounding adds a bias of a quarter LSB per shift that
accumulates in the low bins (about 2.7 dB more noise here, measured).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from ._checks import generator, integer
from .constellation import Constellation
from .fixed_ofdm import FixedCpOfdm
from .fixedpoint import FORMATS, FixedFft, quantize
from .plan import CarrierPlan

__all__ = ["ScheduleAdvice", "SqnrResult", "evm_floor_db", "fft_sqnr_db", "predicted_sqnr_db",
           "recommend_schedule"]


class SqnrResult(NamedTuple):
    """Outcome of :func:`tonebank.fixed_analysis.fft_sqnr_db`."""

    #: Signal over quantisation noise of the output, dB.
    sqnr_db: float
    #: Saturated components over all transforms.
    saturations: int
    #: Exponent of the first transform (total right shift).
    exponent: int


def _backoff(backoff_db) -> float:
    value = float(backoff_db)
    if not math.isfinite(value) or value < 0:
        raise ValueError(f"backoff_db must be finite and >= 0, got {backoff_db!r}")
    return value


def fft_sqnr_db(n: int, *, fmt: str = "q15", schedule="halve", rounding: str = "half_up",
                backoff_db: float = 12.0, n_transforms: int = 16, rng=0,
                samples=None) -> SqnrResult:
    r"""Measured SQNR of a fixed-point FFT on complex Gaussian input.

    Parameters
    ----------
    n : int
        Transform size (power of two).
    fmt, schedule, rounding
        As for :class:`~tonebank.fixedpoint.FixedFft`.
    backoff_db : float, optional
        RMS of the complex input below full scale (1), dB (default 12:
        components of RMS 0.18, peaks rarely clipped).
    n_transforms : int, optional
        Transforms averaged (default 16).
    rng : numpy.random.Generator or int, optional
        Source of the input (default seed 0).
    samples : array_like of complex, optional
        Shape ``(n_transforms, n)``: input of your own statistics (e.g.
        time samples of your waveform, scaled to the level the port will
        see, components below 1) instead of the Gaussian one; then
        ``backoff_db``, ``n_transforms`` and ``rng`` are not used.

    Returns
    -------
    SqnrResult

    Raises
    ------
    TypeError, ValueError
        Bad sizes, formats, schedules, a negative back-off.

    Notes
    -----
    The reference is the float64 FFT of the same input codes, so only
    the transform's own noise is measured (not the input quantisation).

    Examples
    --------
    >>> from tonebank.fixed_analysis import fft_sqnr_db
    >>> r = fft_sqnr_db(256, schedule="block")
    >>> bool(r.sqnr_db > 60), r.saturations
    (True, 0)
    """
    fft = FixedFft(n, fmt=fmt, schedule=schedule, rounding=rounding)
    if samples is None:
        count = integer(n_transforms, "n_transforms", minimum=1)
        sigma = 10.0 ** (-_backoff(backoff_db) / 20.0)
        gen = generator(rng)
        x = sigma * (gen.standard_normal((count, n)) + 1j * gen.standard_normal((count, n))) \
            / math.sqrt(2.0)
    else:
        x = np.asarray(samples)
        if x.ndim != 2 or x.shape[1] != fft.n or x.shape[0] == 0:
            raise ValueError(f"samples must have shape (n_transforms, n={fft.n}), got {x.shape}")
    codes, _ = quantize(x, fmt, rounding=rounding)
    out = fft(codes)
    got = (out.values[..., 0] + 1j * out.values[..., 1]) * np.exp2(out.exponent)[:, None]
    ref = np.fft.fft(codes[..., 0].astype(np.float64) + 1j * codes[..., 1].astype(np.float64))
    noise = float(np.sum(np.abs(got - ref) ** 2))
    signal = float(np.sum(np.abs(ref) ** 2))
    sqnr = math.inf if noise == 0 else 10.0 * math.log10(signal / noise)
    return SqnrResult(sqnr, int(out.saturations.sum()), int(out.exponent[0]))


def predicted_sqnr_db(n: int, *, fmt: str = "q15", backoff_db: float = 12.0) -> float:
    r"""SQNR of the ``"halve"`` schedule predicted by the noise model of the module notes.

    Parameters
    ----------
    n : int
        Transform size.
    fmt : {"q15", "q31"}, optional
        The format (default ``"q15"``).
    backoff_db : float, optional
        RMS of the complex input below full scale, dB (default 12).

    Returns
    -------
    float
        :math:`10 \log_{10} (\sigma_x^2 / (n \frac{7}{12} q^2))`, dB.

    Raises
    ------
    ValueError
        Unknown format, a negative back-off, a bad size.

    Examples
    --------
    >>> from tonebank.fixed_analysis import predicted_sqnr_db
    >>> round(predicted_sqnr_db(1024) - predicted_sqnr_db(2048), 2)   # half a bit per doubling
    3.01
    """
    FixedFft(n, fmt=fmt)                            # checks n and fmt
    bits = FORMATS[fmt][1]
    sigma2 = 10.0 ** (-_backoff(backoff_db) / 10.0)
    m = n.bit_length() - 1
    noise = 7.0 / 24.0 * (2.0 - 2.0 ** (1 - m)) * 2.0 ** (-2 * bits)   # per complex value
    return 10.0 * math.log10(sigma2 / (n * noise))


def evm_floor_db(plan, constellation, *, fmt: str = "q15", ifft_schedule="block",
                 fft_schedule="halve", rounding: str = "half_up", grid_scale: float = 0.5,
                 n_symbols: int = 20, rng=0) -> tuple[float, int]:
    """EVM that a fixed-point CP-OFDM chain adds to a plan and constellation, without noise.

    Parameters
    ----------
    plan : tonebank.CarrierPlan
        The plan (``n_fft`` a power of two).
    constellation : tonebank.Constellation
        Mapping of the data cells.
    fmt, ifft_schedule, fft_schedule, rounding, grid_scale
        As for :class:`~tonebank.fixed_ofdm.FixedCpOfdm`.
    n_symbols : int, optional
        Symbols of random data (default 20).
    rng : numpy.random.Generator or int, optional
        Source of the data (default seed 0).

    Returns
    -------
    evm_db : float
        RMS error of the data cells over their mean energy, dB
        (``-inf`` for an exact chain).
    saturations : int
        Saturated components in the chain.

    Raises
    ------
    TypeError, ValueError
        As the chain raises them.

    Examples
    --------
    >>> import tonebank
    >>> from tonebank.fixed_analysis import evm_floor_db
    >>> plan = tonebank.CarrierPlan.centered(256, 200, cp_length=32)
    >>> evm, clipped = evm_floor_db(plan, tonebank.Constellation.qam(256))
    >>> bool(evm < -40), clipped
    (True, 0)
    """
    if not isinstance(plan, CarrierPlan):
        raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
    if not isinstance(constellation, Constellation):
        raise TypeError("constellation must be a tonebank.Constellation, got "
                        f"{type(constellation).__name__}")
    chain_of = FixedCpOfdm(plan, fmt=fmt, ifft_schedule=ifft_schedule,
                           fft_schedule=fft_schedule, rounding=rounding, grid_scale=grid_scale)
    count = integer(n_symbols, "n_symbols", minimum=1)
    gen = generator(rng)
    bits = gen.integers(0, 2, count * plan.n_data * constellation.bits_per_symbol)
    sent = constellation.map(bits)
    grid = plan.place(sent)
    chain = chain_of.chain(grid)
    got = plan.take(chain.grid)[0]
    err = float(np.mean(np.abs(got - sent) ** 2))
    ref = float(np.mean(np.abs(sent) ** 2))
    evm = -math.inf if err == 0 else 10.0 * math.log10(err / ref)
    return evm, int(sum(chain.saturations))


class ScheduleAdvice(NamedTuple):
    """Outcome of :func:`tonebank.fixed_analysis.recommend_schedule`."""

    #: The recommended ``(ifft_schedule, fft_schedule)``, or None if none meets the target.
    best: tuple | None
    #: One ``(ifft_schedule, fft_schedule, evm_db, saturations, meets)`` per candidate, best first.
    rows: tuple


def _split(m: int) -> tuple:
    """No shift in the first half of the stages, one bit in the rest."""
    return (0,) * (m // 2) + (1,) * (m - m // 2)


def recommend_schedule(plan, constellation, *, target_evm_db: float, fmt: str = "q15",
                       rounding: str = "half_up", grid_scale: float = 0.5, candidates=None,
                       n_symbols: int = 20, rng=0) -> ScheduleAdvice:
    """Try schedule pairs on a plan and constellation; say which keep the EVM floor below a target.

    Parameters
    ----------
    plan : tonebank.CarrierPlan
        The plan (``n_fft`` a power of two).
    constellation : tonebank.Constellation
        Mapping of the data cells.
    target_evm_db : float
        Largest acceptable EVM floor, dB (e.g. -40 for a comfortable
        margin under 256-QAM's usual requirement; common practice, no
        source).
    fmt, rounding, grid_scale
        As for :class:`~tonebank.fixed_ofdm.FixedCpOfdm`.
    candidates : list of tuple, optional
        ``(ifft_schedule, fft_schedule)`` pairs.  Default: each of ``"halve"``, ``"none"``, a split schedule (no
        shift in the first half of the stages, one bit after) and
        ``"block"`` for the inverse transform, with ``"halve"``, the
        split and ``"block"`` for the forward one.
    n_symbols, rng
        As for :func:`evm_floor_db`.

    Returns
    -------
    ScheduleAdvice
        Rows ordered: meeting the target without saturation first; among
        those, fixed schedules before block floating point (no search for
        the largest value on the target), then by EVM.

    Raises
    ------
    TypeError, ValueError
        As :func:`evm_floor_db`, or a target that is not finite.

    Examples
    --------
    >>> import tonebank
    >>> from tonebank.fixed_analysis import recommend_schedule
    >>> plan = tonebank.CarrierPlan.centered(1024, 800, cp_length=64)
    >>> advice = recommend_schedule(plan, tonebank.Constellation.qam(256), target_evm_db=-35.0,
    ...                             n_symbols=4)
    >>> advice.best                 # fixed shifts: halve, then none in the first five stages
    ('halve', (0, 0, 0, 0, 0, 1, 1, 1, 1, 1))
    >>> [round(row[2]) for row in advice.rows[:2]]      # its EVM floor, the runner-up's
    [-51, -56]
    """
    target = float(target_evm_db)
    if not math.isfinite(target):
        raise ValueError(f"target_evm_db must be finite, got {target_evm_db!r}")
    if not isinstance(plan, CarrierPlan):
        raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
    m = plan.n_fft.bit_length() - 1
    if candidates is None:
        split = _split(m)
        candidates = [(i, f) for i in ("halve", "none", split, "block")
                      for f in ("halve", split, "block")]
    rows = []
    for ifft_schedule, fft_schedule in candidates:
        evm, sat = evm_floor_db(plan, constellation, fmt=fmt, ifft_schedule=ifft_schedule,
                                fft_schedule=fft_schedule, rounding=rounding,
                                grid_scale=grid_scale, n_symbols=n_symbols, rng=rng)
        rows.append((ifft_schedule, fft_schedule, evm, sat, evm <= target and sat == 0))

    def rank(row):
        blocks = (row[0] == "block") + (row[1] == "block")
        return (not row[4], blocks, row[2])

    rows.sort(key=rank)
    best = (rows[0][0], rows[0][1]) if rows and rows[0][4] else None
    return ScheduleAdvice(best, tuple(rows))
