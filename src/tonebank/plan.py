"""Carrier plans: which subcarriers carry data, pilots or nothing.

A :class:`CarrierPlan` is the frequency-domain layout of a multicarrier
signal: the FFT size, the cyclic prefix of each symbol, the subcarriers
that carry data, those that carry pilots (and the pilot values), and,
implicitly, the null ones (DC, guard bands).  Waveforms take a plan;
:mod:`tonebank.presets` builds plans from open standards.

Subcarrier numbering and bin order
----------------------------------
This is the one place the convention is written down; every part of the
library uses it.

* A **subcarrier index** ``k`` is signed and counts subcarrier spacings
  from the carrier frequency: ``-n_fft // 2 <= k < n_fft - n_fft // 2``
  (for ``n_fft = 64``: -32 ... 31).  Plans are built from these.
* A **frequency grid** has shape ``(..., n_symbols, n_fft)`` and its last
  axis is in **natural FFT order**: position ``p`` holds subcarrier
  ``k = p`` for ``p < n_fft - n_fft // 2`` and ``k = p - n_fft`` above,
  i.e. DC first, then the positive frequencies, then the negative ones
  (the order of :func:`numpy.fft.fft`; :func:`numpy.fft.fftshift` gives
  the centred view for plotting).  ``bin = k mod n_fft``.
* **Data order**: the data values of a symbol fill the data subcarriers
  in ascending frequency (most negative ``k`` first), and symbols follow
  each other: a data stream ``d`` of length ``n_symbols * n_data`` puts
  ``d[s * n_data + i]`` on the ``i``-th lowest data subcarrier of symbol
  ``s``.  Pilots are ordered the same way.
* **Bit order of a loaded plan** (``loading=``, a
  :class:`~tonebank.loading.BitTable` with one entry per data
  subcarrier): a bit stream fills symbol after symbol, inside a symbol
  data subcarrier after data subcarrier in the data order above, each
  taking its table's bit count (most significant label bit first; empty
  subcarriers take none).  :meth:`~tonebank.CarrierPlan.place_bits` and
  :meth:`~tonebank.CarrierPlan.llr` use this order.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Sequence

import numpy as np

from ._checks import integer
from .loading import BitTable

__all__ = ["CarrierPlan"]


def _readonly(a: np.ndarray) -> np.ndarray:
    a.flags.writeable = False
    return a


def _subcarrier_set(values, name: str, n_fft: int) -> np.ndarray:
    """Validate a set of signed subcarrier indices; return them sorted."""
    arr = np.asarray(values)
    if arr.size == 0:
        return _readonly(np.zeros(0, dtype=np.int64))
    if arr.ndim != 1:
        raise ValueError(f"{name} must be a 1-D sequence of subcarrier indices, "
                         f"got an array of shape {arr.shape}")
    if arr.dtype.kind not in "iu":
        if arr.dtype.kind == "f" and np.all(np.isfinite(arr)) and np.all(arr == np.round(arr)):
            arr = arr.astype(np.int64)
        else:
            raise TypeError(f"{name} must hold integers (signed subcarrier indices), "
                            f"got dtype {arr.dtype}")
    arr = arr.astype(np.int64)
    lo, hi = -(n_fft // 2), n_fft - n_fft // 2 - 1
    bad = arr[(arr < lo) | (arr > hi)]
    if bad.size:
        raise ValueError(f"{name} holds subcarrier {int(bad[0])}, outside the range "
                         f"[{lo}, {hi}] of n_fft={n_fft}")
    uniq, counts = np.unique(arr, return_counts=True)
    if np.any(counts > 1):
        raise ValueError(f"{name} lists subcarrier {int(uniq[counts > 1][0])} more than once")
    return _readonly(uniq)


class CarrierPlan:
    """The subcarrier layout of a multicarrier signal (immutable).

    Parameters
    ----------
    n_fft : int
        FFT size (number of subcarrier positions), >= 1.
    data : array_like of int
        Signed subcarrier indices that carry data (see the module notes for
        the numbering); order does not matter, duplicates are an error.
    pilots : array_like of int, optional
        Signed subcarrier indices that carry pilots.  Must not overlap
        ``data``.
    pilot_values : array_like of complex, optional
        The pilot values: shape ``(n_pilots,)`` (the same every symbol) or
        ``(period, n_pilots)`` (symbol ``s`` uses row ``s % period``), in
        ascending subcarrier order.  Default: all ones.
    cp_length : int or array_like of int, default 0
        Cyclic prefix length in samples: one value for every symbol, or a
        repeating pattern (symbol ``s`` uses ``cp_length[s % len]``), e.g.
        a longer first symbol every half subframe.  Each ``0 <= cp <=
        n_fft``.
    sample_rate : float, optional
        Sample rate in Hz at ``n_fft`` samples per FFT window; gives the
        subcarrier spacing and durations.
    name : str, optional
        A label for printing.
    loading : tonebank.loading.BitTable, optional
        Adaptive modulation: bits and energy per data subcarrier (its
        ``n_tones`` must equal ``n_data``), from the loaders of
        :mod:`tonebank.loading`.  It drives :meth:`place_bits` and
        :meth:`llr`; :meth:`place` and :meth:`take` are unchanged.

    Attributes
    ----------
    n_fft, n_data, n_pilots, n_used : int
        Sizes; ``n_used = n_data + n_pilots``.
    data_subcarriers, pilot_subcarriers : ndarray of int64
        Signed indices, ascending (read-only).
    data_bins, pilot_bins, null_bins : ndarray of int
        Grid positions (natural FFT order) of the data, pilot and null
        subcarriers, data and pilots in ascending subcarrier order.
    pilot_values : ndarray of complex
        Shape ``(period, n_pilots)``.
    cp_lengths : tuple of int
        The prefix pattern.
    mean_cp_length : float
        Its average over one period.
    pilot_pattern : tonebank.PilotPattern
        The fixed pilots as a pilot pattern (for the channel estimators).
    loading : tonebank.loading.BitTable or None
        The per-subcarrier bit table, if any.

    Raises
    ------
    ValueError
        Subcarriers out of range, repeated or overlapping; prefix longer
        than ``n_fft``; pilot values of the wrong shape or not finite;
        non-positive sample rate.
    TypeError
        Non-integer sizes or indices; ``loading`` not a ``BitTable``.

    See Also
    --------
    CarrierPlan.centered : a centred allocation with evenly spaced pilots.
    tonebank.presets : plans from open standards.

    Examples
    --------
    >>> import tonebank
    >>> plan = tonebank.CarrierPlan(16, data=[-3, -2, 2, 3], pilots=[-1, 1],
    ...                             cp_length=4, sample_rate=1.6e6)
    >>> plan.n_used, plan.subcarrier_spacing
    (6, 100000.0)
    >>> plan.data_bins.tolist()
    [13, 14, 2, 3]
    """

    __slots__ = ("_n_fft", "_data", "_pilots", "_pilot_values", "_cp", "_sample_rate",
                 "_name", "_data_bins", "_pilot_bins", "_null_bins", "_pattern",
                 "_loading")

    def __init__(self, n_fft: int, *, data, pilots=(), pilot_values=None,
                 cp_length: int | Sequence[int] = 0, sample_rate: float | None = None,
                 name: str | None = None, loading=None):
        n_fft = integer(n_fft, "n_fft", minimum=1)
        data = _subcarrier_set(data, "data", n_fft)
        pilots = _subcarrier_set(pilots, "pilots", n_fft)
        both = np.intersect1d(data, pilots)
        if both.size:
            raise ValueError(f"subcarrier {int(both[0])} is in both data and pilots; "
                             "a subcarrier carries one or the other")
        if data.size == 0:
            raise ValueError("data must list at least one subcarrier")

        if pilot_values is None:
            values = np.ones((1, pilots.size), dtype=np.complex128)
        else:
            values = np.array(pilot_values, dtype=np.complex128)
            if values.ndim == 1:
                values = values[None, :]
            if values.ndim != 2 or values.shape[1] != pilots.size or values.shape[0] < 1:
                raise ValueError(
                    f"pilot_values must have shape (n_pilots,) or (period, n_pilots) with "
                    f"n_pilots={pilots.size}, got shape {np.shape(pilot_values)}")
            if not np.all(np.isfinite(values)):
                raise ValueError("pilot_values must be finite")

        if isinstance(cp_length, numbers.Integral) and not isinstance(cp_length, bool):
            pattern = (int(cp_length),)
        else:
            try:
                pattern = tuple(cp_length)
            except TypeError:
                raise TypeError(f"cp_length must be an integer or a sequence of integers, "
                                f"got {cp_length!r}") from None
            if not pattern:
                raise ValueError("cp_length must not be an empty sequence")
            for v in pattern:
                if isinstance(v, bool) or not isinstance(v, numbers.Integral):
                    raise TypeError(f"cp_length must hold integers, got {v!r}")
            pattern = tuple(int(v) for v in pattern)
        for v in pattern:
            if not 0 <= v <= n_fft:
                raise ValueError(f"cp_length {v} is outside [0, n_fft={n_fft}]: a cyclic "
                                 "prefix cannot be longer than the FFT window")

        if sample_rate is not None:
            if isinstance(sample_rate, bool) or not isinstance(sample_rate, numbers.Real):
                raise TypeError(f"sample_rate must be a number in Hz, got {sample_rate!r}")
            sample_rate = float(sample_rate)
            if not (math.isfinite(sample_rate) and sample_rate > 0):
                raise ValueError(f"sample_rate must be positive and finite, got {sample_rate}")
        if name is not None and not isinstance(name, str):
            raise TypeError(f"name must be a string, got {name!r}")
        if loading is not None:
            if not isinstance(loading, BitTable):
                raise TypeError(f"loading must be a tonebank.loading.BitTable or None, "
                                f"got {type(loading).__name__}")
            if loading.n_tones != data.size:
                raise ValueError(f"loading has {loading.n_tones} tones but the plan has "
                                 f"n_data={data.size} data subcarriers; they must match")

        self._n_fft = n_fft
        self._data = data
        self._pilots = pilots
        self._pilot_values = _readonly(values)
        self._cp = pattern
        self._sample_rate = sample_rate
        self._name = name
        self._data_bins = _readonly((data % n_fft).astype(np.intp))
        self._pilot_bins = _readonly((pilots % n_fft).astype(np.intp))
        used = np.zeros(n_fft, dtype=bool)
        used[self._data_bins] = True
        used[self._pilot_bins] = True
        self._null_bins = _readonly(np.flatnonzero(~used).astype(np.intp))
        self._pattern = None
        self._loading = loading

    # ---- alternative constructors -------------------------------------------

    @classmethod
    def centered(cls, n_fft: int, n_active: int, *, pilot_spacing: int | None = None,
                 pilot_offset: int = 0, dc_null: bool = True, pilot_values=None,
                 cp_length: int | Sequence[int] = 0, sample_rate: float | None = None,
                 name: str | None = None) -> CarrierPlan:
        """A centred allocation of ``n_active`` subcarriers around DC.

        The active subcarriers are the ``n_active`` closest to DC, half
        below and half above (one more above when odd), skipping DC itself
        when ``dc_null``; the rest are guard bands.  With ``pilot_spacing``
        every ``pilot_spacing``-th active subcarrier, counted in ascending
        order from ``pilot_offset``, is a pilot.

        Parameters
        ----------
        n_fft : int
            FFT size.
        n_active : int
            Number of data plus pilot subcarriers, ``1 <= n_active <
            n_fft`` (``<= n_fft`` without ``dc_null``).
        pilot_spacing : int, optional
            Distance between pilots in active subcarriers (>= 2); no pilots
            when omitted.
        pilot_offset : int, default 0
            Active position of the first pilot, ``0 <= pilot_offset <
            pilot_spacing``.
        dc_null : bool, optional
            Leave the DC subcarrier empty when true (the default).
        pilot_values, cp_length, sample_rate, name
            As for :class:`CarrierPlan`.

        Returns
        -------
        CarrierPlan

        Raises
        ------
        ValueError
            ``n_active`` does not fit, or the pilot spacing/offset is out of
            range.

        Examples
        --------
        >>> import tonebank
        >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, pilot_offset=6)
        >>> plan.n_data, plan.pilot_subcarriers.tolist()
        (48, [-20, -7, 7, 20])
        """
        n_fft = integer(n_fft, "n_fft", minimum=1)
        n_active = integer(n_active, "n_active", minimum=1)
        room = n_fft - 1 if dc_null else n_fft
        if n_active > room:
            raise ValueError(f"n_active={n_active} does not fit in n_fft={n_fft}"
                             f"{' with DC left empty' if dc_null else ''} (at most {room})")
        below = n_active // 2
        above = n_active - below
        if dc_null:
            active = np.concatenate((np.arange(-below, 0), np.arange(1, above + 1)))
        else:
            active = np.arange(-below, above)
        lo, hi = -(n_fft // 2), n_fft - n_fft // 2 - 1
        if active[0] < lo or active[-1] > hi:
            raise ValueError(f"n_active={n_active} does not fit in n_fft={n_fft} around DC")
        if pilot_spacing is None:
            pilot_mask = np.zeros(n_active, dtype=bool)
        else:
            pilot_spacing = integer(pilot_spacing, "pilot_spacing", minimum=2)
            pilot_offset = integer(pilot_offset, "pilot_offset", minimum=0)
            if pilot_offset >= pilot_spacing:
                raise ValueError(f"pilot_offset={pilot_offset} must be below "
                                 f"pilot_spacing={pilot_spacing}")
            pilot_mask = (np.arange(n_active) % pilot_spacing) == pilot_offset
        return cls(n_fft, data=active[~pilot_mask], pilots=active[pilot_mask],
                   pilot_values=pilot_values, cp_length=cp_length, sample_rate=sample_rate,
                   name=name)

    def replace(self, **changes) -> CarrierPlan:
        """A copy with some constructor arguments changed.

        Parameters
        ----------
        **changes
            Any keyword of :class:`CarrierPlan` (``n_fft``, ``data``,
            ``pilots``, ``pilot_values``, ``cp_length``, ``sample_rate``,
            ``name``, ``loading``).  A plan's loading is kept unless
            changed (or unless ``data`` changes: then it is dropped).

        Returns
        -------
        CarrierPlan

        Examples
        --------
        >>> import tonebank
        >>> plan = tonebank.CarrierPlan.centered(64, 52, cp_length=16)
        >>> plan.replace(cp_length=32).cp_lengths
        (32,)
        """
        args = dict(n_fft=self._n_fft, data=self._data, pilots=self._pilots,
                    pilot_values=self._pilot_values, cp_length=self._cp,
                    sample_rate=self._sample_rate, name=self._name,
                    loading=self._loading)
        unknown = set(changes) - set(args)
        if unknown:
            raise TypeError(f"replace() got unknown argument(s) {sorted(unknown)}; "
                            f"allowed: {sorted(args)}")
        if "pilots" in changes and "pilot_values" not in changes:
            args["pilot_values"] = None
        if "data" in changes and "loading" not in changes:
            args["loading"] = None
        args.update(changes)
        n_fft = args.pop("n_fft")
        return CarrierPlan(n_fft, **args)

    # ---- sizes and tables ----------------------------------------------------

    @property
    def n_fft(self) -> int:
        """FFT size."""
        return self._n_fft

    @property
    def n_data(self) -> int:
        """Data subcarriers per symbol."""
        return int(self._data.size)

    @property
    def n_pilots(self) -> int:
        """Pilot subcarriers per symbol."""
        return int(self._pilots.size)

    @property
    def n_used(self) -> int:
        """Data plus pilot subcarriers per symbol."""
        return int(self._data.size + self._pilots.size)

    @property
    def data_subcarriers(self) -> np.ndarray:
        """Signed indices of the data subcarriers, ascending (read-only)."""
        return self._data

    @property
    def pilot_subcarriers(self) -> np.ndarray:
        """Signed indices of the pilot subcarriers, ascending (read-only)."""
        return self._pilots

    @property
    def data_bins(self) -> np.ndarray:
        """Grid positions of the data subcarriers (natural FFT order)."""
        return self._data_bins

    @property
    def pilot_bins(self) -> np.ndarray:
        """Grid positions of the pilot subcarriers (natural FFT order)."""
        return self._pilot_bins

    @property
    def null_bins(self) -> np.ndarray:
        """Grid positions that carry nothing (DC, guards), ascending."""
        return self._null_bins

    @property
    def pilot_values(self) -> np.ndarray:
        """The pilot values, shape ``(period, n_pilots)``; symbol ``s`` uses row ``s % period``."""
        return self._pilot_values

    @property
    def pilot_pattern(self):
        """The plan's fixed pilots as a :class:`~tonebank.PilotPattern` (a comb pattern).

        The same as ``PilotPattern.from_plan(plan)``, made once per plan.
        Its :meth:`~tonebank.PilotPattern.place` gives the same grid as
        :meth:`place`, and the estimators of :mod:`tonebank.estimation`
        take it to estimate the channel from the plan's pilots.
        """
        if self._pattern is None:
            # Imported here: pilots.py builds on this module.
            from .pilots import PilotPattern

            self._pattern = PilotPattern.from_plan(self)
        return self._pattern

    @property
    def cp_lengths(self) -> tuple[int, ...]:
        """The cyclic prefix pattern in samples; symbol ``s`` uses entry ``s % len``."""
        return self._cp

    @property
    def mean_cp_length(self) -> float:
        """Average cyclic prefix length over one period of the pattern."""
        return sum(self._cp) / len(self._cp)

    @property
    def name(self) -> str | None:
        """The plan's label, if any."""
        return self._name

    @property
    def loading(self):
        """The per-data-subcarrier :class:`~tonebank.loading.BitTable`, or None."""
        return self._loading

    # ---- time and frequency --------------------------------------------------

    @property
    def sample_rate(self) -> float | None:
        """Sample rate in Hz (None when not given)."""
        return self._sample_rate

    def _rate(self, what: str) -> float:
        if self._sample_rate is None:
            raise ValueError(f"{what} needs the plan's sample_rate, which was not given")
        return self._sample_rate

    @property
    def subcarrier_spacing(self) -> float:
        """The subcarrier spacing in Hz, ``sample_rate / n_fft``."""
        return self._rate("subcarrier_spacing") / self._n_fft

    @property
    def fft_duration(self) -> float:
        """The duration in s of the FFT window, the useful part of a symbol (``n_fft / sample_rate``)."""
        return self._n_fft / self._rate("fft_duration")

    @property
    def symbol_durations(self) -> tuple[float, ...]:
        """The duration in s of each symbol of the prefix pattern, ``(n_fft + cp) / sample_rate``."""
        rate = self._rate("symbol_durations")
        return tuple((self._n_fft + cp) / rate for cp in self._cp)

    @property
    def occupied_bandwidth(self) -> float:
        """The span of the used subcarriers in Hz, each counted one spacing wide.

        ``(k_max - k_min + 1) * subcarrier_spacing`` over the data and
        pilot subcarriers: the nominal occupied band, an engineering
        figure, not a regulatory occupied-bandwidth measurement.
        """
        used = np.concatenate((self._data, self._pilots))
        return float(used.max() - used.min() + 1) * self.subcarrier_spacing

    # ---- symbols and samples -------------------------------------------------

    def cp_for(self, n_symbols: int, start_symbol: int = 0) -> np.ndarray:
        """Prefix lengths of ``n_symbols`` consecutive symbols from ``start_symbol``.

        Parameters
        ----------
        n_symbols : int
            Number of symbols, >= 0.
        start_symbol : int, default 0
            Index of the first symbol in the prefix pattern's count.

        Returns
        -------
        ndarray of int
            Shape ``(n_symbols,)``.
        """
        n_symbols = integer(n_symbols, "n_symbols", minimum=0)
        start_symbol = integer(start_symbol, "start_symbol", minimum=0)
        pattern = np.asarray(self._cp, dtype=np.intp)
        return pattern[(start_symbol + np.arange(n_symbols)) % pattern.size]

    def n_samples(self, n_symbols: int, start_symbol: int = 0) -> int:
        """Samples (at ``n_fft`` per window) taken by ``n_symbols`` symbols with their prefixes."""
        return int(n_symbols * self._n_fft + self.cp_for(n_symbols, start_symbol).sum())

    def pilots_for(self, n_symbols: int, start_symbol: int = 0) -> np.ndarray:
        """The plan's pilot values for ``n_symbols`` symbols, shape ``(n_symbols, n_pilots)``."""
        n_symbols = integer(n_symbols, "n_symbols", minimum=0)
        start_symbol = integer(start_symbol, "start_symbol", minimum=0)
        period = self._pilot_values.shape[0]
        return self._pilot_values[(start_symbol + np.arange(n_symbols)) % period]

    def symbols_for(self, n_values: int) -> int:
        """Number of symbols that ``n_values`` data values fill exactly.

        Raises
        ------
        ValueError
            When ``n_values`` is not a multiple of ``n_data``; the message
            says how many values of padding would complete the last symbol.
        """
        n_values = integer(n_values, "n_values", minimum=0)
        full, rest = divmod(n_values, self.n_data)
        if rest:
            raise ValueError(
                f"data has {n_values} values per signal, which does not fill whole symbols "
                f"of n_data={self.n_data}: {full} full symbols and {rest} values over; "
                f"pad with {self.n_data - rest} more values (nothing is truncated)")
        return full

    def place(self, data, pilots=None, *, start_symbol: int = 0) -> np.ndarray:
        """Build the frequency grid from a data stream and pilots.

        Parameters
        ----------
        data : array_like of complex
            Shape ``(..., n_symbols * n_data)``.
            Data values, time-major along the last axis (see the module
            notes for the order).  Leading dimensions are batch.
        pilots : array_like of complex, optional
            Pilot values broadcastable to ``(..., n_symbols, n_pilots)``;
            default: the plan's ``pilot_values`` from ``start_symbol``.
        start_symbol : int, default 0
            Index of the first symbol (selects the pilot row).

        Returns
        -------
        ndarray
            Shape ``(..., n_symbols, n_fft)``.
            complex64 when ``data`` is complex64 (or float32), complex128
            otherwise; null subcarriers are zero.

        Raises
        ------
        ValueError
            The data do not fill whole symbols (the message gives the
            padding needed) or the pilots do not broadcast.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> plan = tonebank.CarrierPlan(8, data=[-2, -1, 1, 2], pilots=[3])
        >>> grid = plan.place(np.arange(8) + 0j)
        >>> grid.shape
        (2, 8)
        >>> grid[1].real.tolist()
        [0.0, 6.0, 7.0, 1.0, 0.0, 0.0, 4.0, 5.0]
        """
        data = np.asarray(data)
        if data.ndim == 0:
            raise ValueError("data must have at least one axis (the data stream)")
        if data.dtype.kind not in "biufc":
            raise TypeError(f"data must be numeric, got dtype {data.dtype}")
        dtype = np.complex64 if data.dtype in (np.complex64, np.float32) else np.complex128
        n_symbols = self.symbols_for(data.shape[-1])
        lead = data.shape[:-1]
        grid = np.zeros(lead + (n_symbols, self._n_fft), dtype=dtype)
        grid[..., self._data_bins] = data.reshape(lead + (n_symbols, self.n_data))
        if self.n_pilots:
            if pilots is None:
                pilots = self.pilots_for(n_symbols, start_symbol)
            else:
                pilots = np.asarray(pilots)
                if pilots.dtype.kind not in "biufc":
                    raise TypeError(f"pilots must be numeric, got dtype {pilots.dtype}")
                try:
                    np.broadcast_shapes(pilots.shape, lead + (n_symbols, self.n_pilots))
                except ValueError:
                    raise ValueError(
                        f"pilots of shape {pilots.shape} do not broadcast to "
                        f"{lead + (n_symbols, self.n_pilots)} (..., n_symbols, n_pilots)") from None
            grid[..., self._pilot_bins] = pilots
        elif pilots is not None and np.size(pilots):
            raise ValueError("pilots were given but the plan has no pilot subcarriers")
        return grid

    def take(self, grid) -> tuple[np.ndarray, np.ndarray]:
        """Split a frequency grid into its data stream and pilots.

        The inverse of :meth:`place`.

        Parameters
        ----------
        grid : array_like of complex
            Shape ``(..., n_symbols, n_fft)``.

        Returns
        -------
        data : ndarray
            Shape ``(..., n_symbols * n_data)``.
        pilots : ndarray
            Shape ``(..., n_symbols, n_pilots)``.

        Raises
        ------
        ValueError
            When the last axis is not ``n_fft`` long or the grid has fewer
            than two axes.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> plan = tonebank.CarrierPlan(8, data=[-2, -1, 1, 2], pilots=[3])
        >>> data, pilots = plan.take(plan.place(np.arange(8) + 0j))
        >>> data.real.tolist(), pilots.shape
        ([0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0], (2, 1))
        """
        grid = np.asarray(grid)
        if grid.ndim < 2 or grid.shape[-1] != self._n_fft:
            raise ValueError(f"grid must have shape (..., n_symbols, n_fft={self._n_fft}), "
                             f"got {grid.shape}")
        lead = grid.shape[:-2]
        data = grid[..., self._data_bins].reshape(lead + (-1,))
        return data, grid[..., self._pilot_bins]

    # ---- adaptive modulation (a loaded plan) ------------------------------------

    def _table(self, what: str):
        if self._loading is None:
            raise ValueError(f"{what} needs a loaded plan; make it with "
                             "loading=<tonebank.loading.BitTable> (see plan.replace)")
        return self._loading

    def place_bits(self, bits, pilots=None, *, start_symbol: int = 0,
                   dtype=np.complex128) -> np.ndarray:
        """Build the frequency grid from a bit stream, by the plan's loading.

        Each data subcarrier carries its table's bit count on its
        constellation, scaled by its gain; empty ones are zero.  The same as
        ``place(loading.map(bits), pilots, start_symbol=...)``.

        Parameters
        ----------
        bits : array_like of int or bool
            Shape ``(..., n_symbols * loading.bits_per_symbol)``, values
            0/1, in the bit order of the module notes.
        pilots : array_like of complex, optional
            As for :meth:`place`.
        start_symbol : int, default 0
            As for :meth:`place`.
        dtype : {numpy.complex128, numpy.complex64}, optional
            Grid dtype.

        Returns
        -------
        ndarray
            Shape ``(..., n_symbols, n_fft)``.

        Raises
        ------
        ValueError
            The plan has no loading; the bits do not fill whole symbols (the
            message gives the padding) or hold values other than 0/1.
        TypeError
            Bits not of a boolean or integer dtype.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> from tonebank.loading import BitTable
        >>> plan = tonebank.CarrierPlan(8, data=[-2, -1, 1, 2],
        ...                             loading=BitTable([2, 0, 1, 4]))
        >>> grid = plan.place_bits(np.ones(2 * 7, dtype=int))
        >>> grid.shape, complex(grid[0, 7])      # subcarrier -1 is empty
        ((2, 8), 0j)
        """
        table = self._table("place_bits")
        return self.place(table.map(bits, dtype=dtype), pilots, start_symbol=start_symbol)

    def llr(self, data, noise_var, *, exact: bool = False) -> np.ndarray:
        """Per-bit LLRs of equalised data cells, by the plan's loading.

        Parameters
        ----------
        data : array_like of complex
            Equalised data cells, shape ``(..., n_symbols * n_data)`` (as
            :meth:`take` returns them after equalisation).
        noise_var : float or array_like of float
            Noise variance of each equalised cell: a scalar, shape
            ``(n_data,)`` (per subcarrier) or broadcastable to ``data``.
        exact : bool, optional
            Exact log-sum-exp instead of max-log.

        Returns
        -------
        ndarray
            Shape ``(..., n_symbols * loading.bits_per_symbol)`` in
            :meth:`place_bits`'s bit order; float32 for complex64 data,
            float64 otherwise.  Positive values favour 0.

        Raises
        ------
        ValueError, TypeError
            No loading; bad data or noise variances.

        See Also
        --------
        tonebank.loading.BitTable.llr : the same on a table alone.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> from tonebank.loading import BitTable
        >>> plan = tonebank.CarrierPlan(8, data=[-2, -1, 1, 2],
        ...                             loading=BitTable([2, 0, 1, 4]))
        >>> bits = np.random.default_rng(5).integers(0, 2, 3 * 7)
        >>> data, _ = plan.take(plan.place_bits(bits))
        >>> bool(np.array_equal(plan.llr(data, 0.01) < 0, bits == 1))
        True
        """
        return self._table("llr").llr(data, noise_var, exact=exact)

    # ---- printing and comparison ---------------------------------------------

    def _key(self):
        return (self._n_fft, self._data.tobytes(), self._pilots.tobytes(),
                self._pilot_values.shape, self._pilot_values.tobytes(), self._cp,
                self._sample_rate, self._name, self._loading)

    def __eq__(self, other):
        if not isinstance(other, CarrierPlan):
            return NotImplemented
        return self._key() == other._key()

    def __hash__(self):
        return hash(self._key())

    def __repr__(self):
        label = f"{self._name!r}, " if self._name else ""
        rate = f", sample_rate={self._sample_rate:g}" if self._sample_rate else ""
        cp = self._cp[0] if len(self._cp) == 1 else list(self._cp)
        loaded = ("" if self._loading is None else
                  f", loading={self._loading.bits_per_symbol} bits/symbol")
        return (f"CarrierPlan({label}n_fft={self._n_fft}, n_data={self.n_data}, "
                f"n_pilots={self.n_pilots}, cp_length={cp}{rate}{loaded})")
