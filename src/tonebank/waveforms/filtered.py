r"""Filtered OFDM: CP-OFDM subbands, each shaped by its own FIR filter.

A subband is a CP-OFDM signal on its own :class:`~tonebank.CarrierPlan`
(its own FFT size, hence subcarrier spacing, and prefix), filtered at the
transmitter by a soft-truncated sinc filter whose pass band covers its
subcarriers, and filtered again at the receiver by the matched filter.
The filters keep each subband's spectrum to itself, so subbands of
different numerologies can sit side by side on one carrier with small
guard bands, at the price of some self-interference (the filters are
longer than the prefix) and a latency of the filter length.

The filter design
-----------------
For a subband whose used subcarriers (data and pilots, after the shift)
span :math:`k_{lo} \dots k_{hi}` of an :math:`N`-point transform, the
pass band is :math:`B = (k_{hi} - k_{lo} + 1 + 2m)/N` cycles per sample
wide (``m`` the ``margin`` in subcarriers on each side) and centred on
:math:`f_c = (k_{lo} + k_{hi})/(2N)`.  With :math:`L` taps and
:math:`t = j - (L-1)/2`:

.. math::

    h_j = \frac{w_j\, B\, \mathrm{sinc}(B t)}{\sum_j w_j\, B\, \mathrm{sinc}(B t)}
          \; e^{2\pi i f_c t},

:math:`w` a symmetric window (Hann by default): the ideal band-pass
impulse response, truncated softly by the window, unit gain at the band
centre and linear phase with a delay of :math:`(L-1)/2` samples.  The
receiver applies the matched filter :math:`g_j = h^*_{L-1-j}`, so the
pair delays a symbol by :math:`L-1` samples and weights subcarrier
:math:`k` by :math:`|H(k/N)|^2`; analysis divides the used subcarriers by
that known weight.  Defaults: ``filter_len = N // 2 + 1`` (half a symbol,
common practice, no source), ``margin = 2.5`` subcarriers, Hann window.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.signal

from .._checks import generator, integer
from ..plan import CarrierPlan
from .cp_ofdm import CpOfdm

__all__ = ["FilteredOfdm", "Interference", "SubbandGroup", "subband_interference"]


def _smooth_size(n: int) -> int:
    """The smallest 2^a 3^b 5^c >= n (sizes the C FFT plans)."""
    best = 1 << max(0, (n - 1).bit_length())
    p5 = 1
    while p5 < 2 * n:
        p35 = p5
        while p35 < 2 * n:
            size = p35
            while size < n:
                size *= 2
            best = min(best, size)
            p35 *= 3
        p5 *= 5
    return best


class FilteredOfdm(CpOfdm):
    r"""One filtered-OFDM subband: CP-OFDM shaped by a soft-truncated sinc filter.

    Parameters
    ----------
    plan : CarrierPlan
        Subcarriers, prefix pattern and pilots of this subband.
    filter_len : int, optional
        Filter taps in output samples, ``1 <= filter_len <= fft_size``;
        default ``fft_size // 2 + 1``.  ``filter_len=1`` is an all-pass
        filter: the waveform is then :class:`CpOfdm` exactly.
    margin : float, default 2.5
        Extra pass band in subcarriers on each side of the used ones.
    window : str or tuple, default "hann"
        The truncation window, any name :func:`scipy.signal.get_window`
        knows (symmetric form).
    shift : int, default 0
        Move the whole plan by this many of its subcarriers (a frequency
        offset of ``shift * subcarrier_spacing``), to place the subband
        on the shared carrier.  The shifted subcarriers must stay inside
        ``-fft_size/2 .. fft_size/2 - 1``.
    oversampling : int, default 1
        Integer factor L, as for :class:`CpOfdm`.

    Raises
    ------
    ValueError
        A filter length out of range, a negative or non-finite margin, a
        shift that moves subcarriers out of the band, an unknown window.
    TypeError
        A plan that is not a :class:`CarrierPlan`; non-integer sizes.

    See Also
    --------
    SubbandGroup : several subbands side by side.
    subband_interference : what one subband leaks into another.
    WolaOfdm : windowing instead of filtering.

    Notes
    -----
    The filter design is described in :mod:`tonebank.waveforms.filtered`.
    Synthesis convolves each CP-OFDM symbol with ``h`` and overlap-adds
    the results; a burst of ``S`` symbols has ``n_samples(S) + tail``
    samples, ``tail = filter_len - 1``.  Analysis of symbol ``s`` applies
    the matched filter to the ``fft_size + filter_len - 1`` samples from
    the start of its FFT window, takes the window delayed by the filter
    pair (``filter_len - 1`` samples), applies the unitary DFT and divides
    each used subcarrier by :math:`|H|^2` at its frequency (the other bins
    are returned as filtered).  Because the filters are longer than the
    prefix, a little of each symbol spills into its neighbours: this sets
    the in-band EVM floor (see the guide).

    Cost per symbol: synthesis takes one FFT of ``fft_size`` points and
    two of ``m`` points, ``m`` at least ``fft_size + max cp + filter_len -
    1``: the smallest 2^a 3^b 5^c, or the next power of two when that is
    at most 25 % larger (it transforms faster) (:attr:`convolution_size`).
    The C kernel's analysis gets the same numbers (to rounding) from four
    FFTs of ``fft_size`` points while the filter is at most half a symbol
    long (as by default): filtering is a product per bin except at the
    window's edges, whose ``filter_len - 1`` samples it corrects with a
    short correlation (``csrc/tb_fofdm.c`` writes out the identity).  The
    C kernel runs each symbol in one fused pass.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> plan = tonebank.CarrierPlan.centered(64, 36, cp_length=8)
    >>> sub = tonebank.FilteredOfdm(plan)
    >>> sub.filter_len, sub.tail, sub.convolution_size
    (33, 32, 128)
    >>> rng = np.random.default_rng(1)
    >>> data = np.exp(2j * np.pi * rng.random(20 * plan.n_data))
    >>> x = sub.modulate(data)
    >>> x.shape                                  # 20 * (64 + 8) + 32
    (1472,)
    >>> rx, _ = sub.demodulate(x)
    >>> evm = np.sqrt(np.mean(np.abs(rx - data) ** 2))
    >>> bool(evm < 0.05)
    True
    """

    def __init__(self, plan: CarrierPlan, *, filter_len: int | None = None,
                 margin: float = 2.5, window="hann", shift: int = 0,
                 oversampling: int = 1):
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        super().__init__(plan, oversampling=oversampling)
        size = self.fft_size
        self._shift = integer(shift, "shift")
        used = np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers)) + self._shift
        lo, hi = -(size // 2), size - size // 2 - 1
        if used.min() < lo or used.max() > hi:
            raise ValueError(
                f"shift={self._shift} moves the used subcarriers to {int(used.min())} .. "
                f"{int(used.max())}, outside {lo} .. {hi} of fft_size={size}")
        if filter_len is None:
            filter_len = size // 2 + 1
        self._taps_len = integer(filter_len, "filter_len", minimum=1, maximum=size)
        if isinstance(margin, bool) or not isinstance(margin, (int, float, np.floating,
                                                               np.integer)):
            raise TypeError(f"margin must be a number of subcarriers, got {margin!r}")
        margin = float(margin)
        if not (math.isfinite(margin) and margin >= 0):
            raise ValueError(f"margin must be >= 0 and finite (subcarriers), got {margin}")
        self._margin = margin
        self._window = window
        # Bin positions with the shift folded in (a shift by whole
        # subcarriers keeps every symbol cyclic, so it is exact).
        signed = np.arange(plan.n_fft)
        signed[signed >= plan.n_fft - plan.n_fft // 2] -= plan.n_fft
        self._grid_pos = ((signed + self._shift) % size).astype(np.uintp)
        self._data_pos = ((plan.data_subcarriers + self._shift) % size).astype(np.uintp)
        self._pilot_pos = ((plan.pilot_subcarriers + self._shift) % size).astype(np.uintp)
        self._band = (int(used.min()), int(used.max()))

        taps = self._taps_len
        try:
            w = scipy.signal.get_window(window, taps, fftbins=False) if taps > 1 else \
                np.ones(1)
        except (ValueError, TypeError) as exc:
            raise ValueError(f"window={window!r} is not a window scipy.signal.get_window "
                             f"knows ({exc})") from None
        width = (self._band[1] - self._band[0] + 1 + 2 * margin) / size
        centre = (self._band[0] + self._band[1]) / (2 * size)
        t = np.arange(taps) - (taps - 1) / 2
        proto = w * width * np.sinc(width * t)
        h = proto / proto.sum() * np.exp(2j * np.pi * centre * t)
        self._h = h
        self._h.flags.writeable = False
        # |H|^2 at every FFT position; the receiver divides the used ones by it.
        resp = np.abs(np.fft.fft(h, size)) ** 2
        gain = np.ones(size)
        used_pos = np.concatenate((self._data_pos, self._pilot_pos)).astype(np.intp)
        gain[used_pos] = 1.0 / resp[used_pos]
        self._gain = gain
        self._gain.flags.writeable = False
        max_cp = max(plan.cp_lengths) * self._os
        need = size + max_cp + taps - 1
        smooth, power = _smooth_size(need), 1 << max(0, (need - 1).bit_length())
        # The kernel's radix-2/4/8 passes run faster per point than its radix-3
        # and radix-5 ones (measured: m = 2048 takes about half the time of
        # m = 1800), so a power of two within 25 % of the smallest size wins.
        self._m = power if power <= 1.25 * smooth else smooth

    # ---- description ---------------------------------------------------------

    @property
    def filter_len(self) -> int:
        """Number of filter taps (output samples)."""
        return self._taps_len

    @property
    def taps(self) -> np.ndarray:
        """The transmit filter, complex, shape ``(filter_len,)`` (read-only)."""
        return self._h

    @property
    def margin(self) -> float:
        """Extra pass band in subcarriers on each side of the used ones."""
        return self._margin

    @property
    def shift(self) -> int:
        """Frequency shift in subcarriers of the plan."""
        return self._shift

    @property
    def convolution_size(self) -> int:
        """Points of the fast-convolution FFTs (see the Notes)."""
        return self._m

    @property
    def tail(self) -> int:
        """Samples of filter ringing after the last symbol, ``filter_len - 1``."""
        return self._taps_len - 1

    @property
    def latency(self) -> int:
        """Delay in samples of the transmit and receive filter pair, ``filter_len - 1``.

        A receiver can return a symbol only this many samples after the
        symbol's nominal end.
        """
        return self._taps_len - 1

    @property
    def band(self) -> tuple[float, float]:
        """The nominal occupied band in cycles per output sample, (low, high).

        The used subcarriers after the shift, each counted one subcarrier
        spacing wide; multiply by ``sample_rate`` for Hz.
        """
        size = self.fft_size
        return ((self._band[0] - 0.5) / size, (self._band[1] + 0.5) / size)

    def __repr__(self):
        extra = (f", shift={self._shift}" if self._shift else "") + \
            (f", oversampling={self._os}" if self._os != 1 else "")
        return (f"FilteredOfdm({self._plan!r}, filter_len={self._taps_len}, "
                f"margin={self._margin:g}{extra})")

    # ---- what differs from CpOfdm --------------------------------------------

    def _layout(self, n_symbols: int, start: int) -> tuple[np.ndarray, int]:
        cp, total = super()._layout(n_symbols, start)
        return cp, total + self.tail

    def _new_runner(self, impl, dtype: np.dtype, bins_a: np.ndarray, bins_b: np.ndarray):
        return impl.fofdm_runner(self.fft_size, self._m, dtype, bins_a, bins_b, self._h,
                                 self._gain)


def _output_rate(sub: FilteredOfdm):
    return sub.sample_rate


class SubbandGroup:
    """Several filtered-OFDM subbands side by side on one carrier.

    Parameters
    ----------
    subbands : list of FilteredOfdm
        The subbands, each with its own plan (numerology), shift and filter,
        all at the same output sample rate.  Their nominal occupied bands
        (:attr:`FilteredOfdm.band`) must not overlap.

    Raises
    ------
    ValueError
        Fewer than one subband; occupied bands that overlap (the message
        names the two subbands and their bands); different sample rates.
    TypeError
        An entry that is not a :class:`FilteredOfdm`.

    See Also
    --------
    subband_interference

    Notes
    -----
    The composite signal is the sum of the subbands' signals, each
    starting at sample 0; a receiver of one subband is that subband's
    ``analyze`` method applied to the composite.  Equal
    per-subcarrier energies (unit-energy values on the grid) give every
    subband the same power spectral density, whatever its FFT size,
    because the transforms are unitary at the same sample rate.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> wide = tonebank.FilteredOfdm(tonebank.CarrierPlan.centered(64, 24, cp_length=8),
    ...                              filter_len=33, shift=-14)
    >>> narrow = tonebank.FilteredOfdm(tonebank.CarrierPlan.centered(128, 48, cp_length=16),
    ...                                filter_len=65, shift=30)
    >>> group = tonebank.SubbandGroup([wide, narrow])
    >>> rng = np.random.default_rng(0)
    >>> grids = [w.plan.place(np.exp(2j * np.pi * rng.random(s * w.plan.n_data)))
    ...          for w, s in ((wide, 8), (narrow, 4))]
    >>> x = group.synthesize(grids)
    >>> back = group.analyze(x, [8, 4])
    >>> [g.shape for g in back]
    [(8, 64), (4, 128)]
    """

    def __init__(self, subbands):
        subs = list(subbands)
        if not subs:
            raise ValueError("subbands must hold at least one FilteredOfdm")
        for i, sub in enumerate(subs):
            if not isinstance(sub, FilteredOfdm):
                raise TypeError(f"subbands[{i}] must be a tonebank.FilteredOfdm, got "
                                f"{type(sub).__name__}")
        rates = {_output_rate(s) for s in subs}
        if len(rates) > 1:
            raise ValueError(f"subbands must share one output sample rate, got "
                             f"{sorted(rates, key=lambda r: (r is None, r))}")
        order = sorted(range(len(subs)), key=lambda i: subs[i].band[0])
        for i, j in zip(order, order[1:]):
            if subs[j].band[0] < subs[i].band[1] - 1e-12:
                raise ValueError(
                    f"subbands[{i}] occupies {subs[i].band[0]:.6g} .. {subs[i].band[1]:.6g} "
                    f"and subbands[{j}] {subs[j].band[0]:.6g} .. {subs[j].band[1]:.6g} "
                    "cycles/sample: they overlap; shift them apart")
        self._subs = tuple(subs)

    @property
    def subbands(self) -> tuple:
        """The subbands, in the order given."""
        return self._subs

    def __repr__(self):
        return f"SubbandGroup({list(self._subs)!r})"

    def synthesize(self, grids) -> np.ndarray:
        """Sum of the subbands' signals.

        Parameters
        ----------
        grids : list of array_like
            One grid per subband, shape ``(..., n_symbols_i, n_fft_i)``,
            the same batch shape for all.

        Returns
        -------
        ndarray
            Shape ``(..., n)``, n the longest subband burst (with its
            tail); shorter bursts are followed by zeros.

        Raises
        ------
        ValueError
            Not one grid per subband, or batch shapes that differ.
        """
        grids = list(grids)
        if len(grids) != len(self._subs):
            raise ValueError(f"grids must hold one grid per subband ({len(self._subs)}), "
                             f"got {len(grids)}")
        parts = [sub.synthesize(g) for sub, g in zip(self._subs, grids)]
        lead = {p.shape[:-1] for p in parts}
        if len(lead) > 1:
            raise ValueError(f"grids must share one batch shape, got {sorted(lead)}")
        n = max(p.shape[-1] for p in parts)
        dtype = np.result_type(*parts)
        out = np.zeros(parts[0].shape[:-1] + (n,), dtype=dtype)
        for p in parts:
            out[..., :p.shape[-1]] += p
        return out

    def analyze(self, samples, n_symbols) -> list:
        """Each subband's grid from the composite signal.

        Parameters
        ----------
        samples : array_like
            Shape ``(..., n)``: the composite signal from sample 0.
        n_symbols : list of int
            Symbols to return per subband; subband ``i`` reads
            ``n_samples(n_symbols[i]) + tail`` samples.

        Returns
        -------
        list of ndarray
            Shapes ``(..., n_symbols_i, n_fft_i)``.

        Raises
        ------
        ValueError
            Not one count per subband; a signal too short for a count.
        """
        x = np.asarray(samples)
        counts = list(n_symbols)
        if len(counts) != len(self._subs):
            raise ValueError(f"n_symbols must hold one count per subband "
                             f"({len(self._subs)}), got {len(counts)}")
        out = []
        for i, (sub, count) in enumerate(zip(self._subs, counts)):
            count = integer(count, f"n_symbols[{i}]", minimum=0)
            need = sub.n_samples(count) + sub.tail
            if x.ndim == 0 or x.shape[-1] < need:
                raise ValueError(f"samples has {x.shape[-1] if x.ndim else 0} samples but "
                                 f"subband {i} needs {need} for n_symbols[{i}]={count}")
            out.append(sub.analyze(x[..., :need]))
        return out


@dataclass(frozen=True)
class Interference:
    """What :func:`subband_interference` measured (an engineering estimate).

    Attributes
    ----------
    ratio_db : float
        Mean interference power per used victim subcarrier, relative to the
        power of a victim subcarrier (unit energy), in dB.
    worst_db : float
        The same for the worst victim subcarrier.
    per_subcarrier_db : ndarray
        Shape ``(n_used,)``: per victim subcarrier, in ascending frequency
        (data and pilots together).
    symbols : int
        Victim symbols averaged.
    note : str
        The caution that this is a simulation estimate.
    """

    ratio_db: float
    worst_db: float
    per_subcarrier_db: np.ndarray = field(repr=False)
    symbols: int = 0
    note: str = ("engineering estimate from a simulation model, not a compliance "
                 "measurement")


def subband_interference(victim: FilteredOfdm, aggressor: FilteredOfdm, *,
                         n_symbols: int = 40, rng=0) -> Interference:
    """The interference one subband causes in another's receiver.

    The aggressor transmits random unit-energy QPSK on all its used
    subcarriers; the victim's receiver (matched filter, FFT, per-subcarrier
    correction) is applied to that signal alone, and the power that lands
    on the victim's used subcarriers is averaged over the victim symbols
    lying wholly inside the aggressor's burst (its start and end ramps are
    left out).

    Parameters
    ----------
    victim, aggressor : FilteredOfdm
        Two subbands at the same output sample rate (for example two
        entries of a :class:`SubbandGroup`).  A plain :class:`CpOfdm`
        shape is had with ``filter_len=1``.
    n_symbols : int, default 40
        Aggressor symbols transmitted.
    rng : numpy.random.Generator or int, default 0
        Source of the aggressor data.

    Returns
    -------
    Interference

    Raises
    ------
    ValueError
        Too few aggressor symbols to cover one victim symbol in the steady
        state; different sample rates.
    TypeError
        Arguments that are not :class:`FilteredOfdm`.

    See Also
    --------
    SubbandGroup

    Notes
    -----
    With unit-energy values on both grids the two subbands have equal
    power spectral densities (see :class:`SubbandGroup`), so ``ratio_db``
    is the interference-to-signal ratio per subcarrier at equal density.
    An engineering estimate from a simulation model.

    Examples
    --------
    >>> import tonebank
    >>> a = tonebank.FilteredOfdm(tonebank.CarrierPlan.centered(64, 24, cp_length=8),
    ...                           filter_len=33, shift=-14)
    >>> b = tonebank.FilteredOfdm(tonebank.CarrierPlan.centered(128, 48, cp_length=16),
    ...                           filter_len=65, shift=30)
    >>> r = tonebank.subband_interference(a, b, n_symbols=20)
    >>> bool(r.ratio_db < -30)
    True
    """
    for name, sub in (("victim", victim), ("aggressor", aggressor)):
        if not isinstance(sub, FilteredOfdm):
            raise TypeError(f"{name} must be a tonebank.FilteredOfdm, got "
                            f"{type(sub).__name__}")
    if victim.sample_rate != aggressor.sample_rate:
        raise ValueError(f"victim and aggressor must share one sample rate, got "
                         f"{victim.sample_rate} and {aggressor.sample_rate}")
    n_symbols = integer(n_symbols, "n_symbols", minimum=1)
    gen = generator(rng)
    plan = aggressor.plan
    qpsk = (gen.choice([-1.0, 1.0], (n_symbols, plan.n_used))
            + 1j * gen.choice([-1.0, 1.0], (n_symbols, plan.n_used))) / np.sqrt(2)
    grid = np.zeros((n_symbols, plan.n_fft), complex)
    used_bins = np.concatenate((plan.data_bins, plan.pilot_bins))
    grid[:, np.sort(used_bins)] = qpsk
    x = aggressor.synthesize(grid)
    steady_from = aggressor.tail
    steady_to = aggressor.n_samples(n_symbols)
    # victim symbol s reads [o_s, o_s + n + cp + tail): keep the ones inside
    count, kept = 0, []
    while True:
        start = victim.n_samples(count)
        stop = victim.n_samples(count + 1) + victim.tail
        if stop > x.shape[-1]:
            break
        if start >= steady_from and stop <= steady_to:
            kept.append(count)
        count += 1
    if not kept:
        raise ValueError(f"n_symbols={n_symbols} aggressor symbols do not cover one victim "
                         "symbol in the steady state; transmit more")
    y = victim.analyze(x[:victim.n_samples(count) + victim.tail])
    vplan = victim.plan
    vbins = np.concatenate((vplan.data_bins, vplan.pilot_bins))
    vsub = np.concatenate((vplan.data_subcarriers, vplan.pilot_subcarriers))
    vbins = vbins[np.argsort(vsub)]
    power = np.mean(np.abs(y[kept][:, vbins]) ** 2, axis=0)
    with np.errstate(divide="ignore"):
        per = 10 * np.log10(power)
    return Interference(ratio_db=float(10 * np.log10(power.mean())),
                        worst_db=float(per.max()), per_subcarrier_db=per,
                        symbols=len(kept))
