r"""Windowed OFDM (WOLA): raised-cosine ramps and overlap-add.

A CP-OFDM symbol starts and stops abruptly, so its spectrum falls off
only as :math:`1/f` (6 dB per octave) away from the occupied band.
Windowed overlap-add (WOLA) smooths both ends of every symbol with a
raised-cosine ramp over a cyclic extension and overlaps the ramps of
neighbouring symbols, which makes the fall-off :math:`1/f^3` (18 dB per
octave); the receiver windows the same way and folds the extension back
into the FFT window, which lowers the leakage it picks up from signals
next to its band.  The cost is prefix: the ramps use up samples of the
cyclic prefix that would otherwise absorb channel delay spread.
"""

from __future__ import annotations

import numpy as np

from .._checks import integer
from ..plan import CarrierPlan
from .cp_ofdm import CpOfdm

__all__ = ["WolaOfdm", "raised_cosine_ramp"]


def raised_cosine_ramp(length: int) -> np.ndarray:
    r"""The rising half of a raised-cosine window, sampled between the grid points.

    Parameters
    ----------
    length : int
        Number of samples, >= 0.

    Returns
    -------
    ndarray
        Shape ``(length,)``, float64:
        :math:`r_i = \tfrac12\bigl(1 - \cos(\pi (i + \tfrac12)/T)\bigr)`,
        :math:`i = 0, \dots, T-1`.

    Notes
    -----
    The ramp is complementary, :math:`r_i + r_{T-1-i} = 1`, which is what
    makes overlapping ramps add to a flat weight and the receive fold-back
    exact.  Sampling at half-integer points keeps the ramp symmetric and
    never exactly 0 or 1.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.waveforms.wola import raised_cosine_ramp
    >>> r = raised_cosine_ramp(4)
    >>> bool(np.allclose(r + r[::-1], 1.0))
    True
    """
    length = integer(length, "length", minimum=0)
    return 0.5 * (1.0 - np.cos(np.pi * (np.arange(length) + 0.5) / max(length, 1)))


class WolaOfdm(CpOfdm):
    r"""OFDM with windowed overlap-add at the transmitter and the receiver.

    Parameters
    ----------
    plan : CarrierPlan
        Subcarriers, prefix pattern and pilots.
    tx_ramp : int, default 0
        Length in samples (at the plan's rate, ``n_fft`` per window) of the
        transmit raised-cosine ramps.  Each symbol is extended by this many
        samples of cyclic suffix, ramped down, and its start (inside the
        prefix) ramped up; the suffix overlaps the next symbol's ramp-up.
    rx_ramp : int, default 0
        Length in samples of the receive ramps (the receive window spans
        ``n_fft + rx_ramp`` samples ending with the FFT window).
    oversampling : int, default 1
        Integer factor L, as for :class:`CpOfdm`; ramps scale with it.

    Raises
    ------
    ValueError
        ``tx_ramp + rx_ramp`` longer than the shortest cyclic prefix of the
        plan (the message names both arguments, the values and the limit);
        negative ramps.
    TypeError
        A plan that is not a :class:`CarrierPlan`; non-integer ramps.

    See Also
    --------
    CpOfdm : the same waveform without windows (``tx_ramp = rx_ramp = 0``).
    FilteredOfdm : subband filtering instead of windowing.

    Notes
    -----
    With :math:`N = L\,n_{fft}`, prefix :math:`c`, ramps :math:`T` and
    :math:`R` (in output samples) and the rising ramp
    :math:`r_i = \tfrac12(1 - \cos(\pi(i+\tfrac12)/T))`, symbol ``s``
    transmits, from its start :math:`o_s`,

    .. math::

        y_{o_s + i} \mathrel{+}= g_i\, x_{(i - c) \bmod N},
        \qquad 0 \le i < c + N + T,

    with :math:`g_i = r_i` for :math:`i < T`, 1 up to :math:`c + N`, and
    :math:`r_{T-1-(i-c-N)}` over the suffix; :math:`x` is the unitary
    inverse DFT of the grid row (as in :class:`CpOfdm`).  Symbols are still
    :math:`N + c` apart, so a burst of ``S`` symbols has
    ``n_samples(S) + tail`` samples, ``tail = T``.

    The receiver takes the :math:`N + R` samples ending with the FFT
    window, weights the first and last :math:`R` of them with the rising
    and falling receive ramps and adds the first :math:`R` onto the last
    :math:`R` (fold-back) before the DFT.  The ramps are complementary, so
    for a cyclic symbol the fold returns the body exactly: the round trip
    through an ideal channel is exact whenever :math:`T + R \le c`, and a
    channel whose delay spread is at most :math:`c - T - R` samples still
    acts on each subcarrier as one complex gain.  With both ramps 0 the
    waveform is :class:`CpOfdm`, sample for sample.

    Spectrum: the rectangular pulse of CP-OFDM gives sidelobes falling as
    :math:`1/f` (6 dB per octave); a raised-cosine ramp has a continuous
    first derivative and its sidelobes fall as :math:`1/f^3` (18 dB per
    octave) [1]_.  Any spectrum computed from this waveform is an
    engineering estimate, not a compliance measurement.

    Cost: one FFT of N points per symbol plus :math:`2T` (transmit) or
    :math:`2R` (receive) complex multiplications; in the C kernel each
    direction is one fused pass per symbol.

    References
    ----------
    .. [1] F. J. Harris, "On the use of windows for harmonic analysis with
       the discrete Fourier transform", Proc. IEEE, 66(1), 1978.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
    >>> wola = tonebank.WolaOfdm(plan, tx_ramp=8, rx_ramp=4)
    >>> rng = np.random.default_rng(1)
    >>> data = np.exp(2j * np.pi * rng.random(10 * plan.n_data))
    >>> x = wola.modulate(data)
    >>> x.shape, wola.tail                      # 10 * (64 + 16) + 8
    ((808,), 8)
    >>> rx_data, rx_pilots = wola.demodulate(x)
    >>> bool(np.allclose(rx_data, data))
    True
    """

    def __init__(self, plan: CarrierPlan, *, tx_ramp: int = 0, rx_ramp: int = 0,
                 oversampling: int = 1):
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        tx = integer(tx_ramp, "tx_ramp", minimum=0)
        rx = integer(rx_ramp, "rx_ramp", minimum=0)
        shortest = min(plan.cp_lengths)
        if tx + rx > shortest:
            raise ValueError(
                f"tx_ramp={tx} plus rx_ramp={rx} is {tx + rx} samples, longer than the "
                f"shortest cyclic prefix of the plan ({shortest} samples): the ramps must "
                f"fit the prefix, tx_ramp + rx_ramp <= {shortest}")
        super().__init__(plan, oversampling=oversampling)
        self._tx_ramp, self._rx_ramp = tx, rx
        self._tx_up = raised_cosine_ramp(tx * self._os)
        self._rx_up = raised_cosine_ramp(rx * self._os)
        self._tx_up.flags.writeable = False
        self._rx_up.flags.writeable = False

    # ---- description ---------------------------------------------------------

    @property
    def tx_ramp(self) -> int:
        """Transmit ramp length in samples at the plan's rate."""
        return self._tx_ramp

    @property
    def rx_ramp(self) -> int:
        """Receive ramp length in samples at the plan's rate."""
        return self._rx_ramp

    @property
    def tail(self) -> int:
        """Samples of cyclic suffix after the last symbol (``oversampling * tx_ramp``)."""
        return self._tx_up.size

    @property
    def tx_window(self) -> np.ndarray:
        """The rising transmit ramp in output samples (read-only; the falling one is its reverse)."""
        return self._tx_up

    @property
    def rx_window(self) -> np.ndarray:
        """The rising receive ramp in output samples (read-only)."""
        return self._rx_up

    def __repr__(self):
        extra = f", oversampling={self._os}" if self._os != 1 else ""
        return (f"WolaOfdm({self._plan!r}, tx_ramp={self._tx_ramp}, "
                f"rx_ramp={self._rx_ramp}{extra})")

    # ---- what differs from CpOfdm --------------------------------------------

    def _layout(self, n_symbols: int, start: int) -> tuple[np.ndarray, int]:
        # The output of a burst carries the last symbol's suffix.
        cp, total = super()._layout(n_symbols, start)
        return cp, total + self.tail

    def _new_runner(self, impl, dtype: np.dtype, bins_a: np.ndarray, bins_b: np.ndarray):
        return impl.wola_runner(self.fft_size, dtype, bins_a, bins_b, self._tx_up,
                                self._rx_up)
