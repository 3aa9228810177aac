"""Pilot patterns: which cells of the time-frequency grid carry known values.

A :class:`tonebank.CarrierPlan` fixes the same pilot subcarriers in every symbol
(only their values may change from symbol to symbol).  Channel estimation
often needs more freedom: whole training symbols (a *block* pattern or a
*preamble*), pilots on every k-th subcarrier (a *comb*), or pilots that
move from symbol to symbol (a *scattered* pattern, such as a pilot every
12 subcarriers shifted by 3 each symbol).  A :class:`tonebank.PilotPattern` places
those pilots on top of a plan.

The pattern as a table
----------------------
A pattern is a boolean table ``mask`` of shape ``(n_rows, n_fft)`` (bins
in the natural FFT order of :mod:`tonebank.plan`) and a table ``values``
of the pilot values, plus a count ``head``:

* symbols ``0 .. head - 1`` of a frame use rows ``0 .. head - 1`` once
  (training symbols of a preamble);
* every later symbol ``s`` uses row ``head + (s - head) % period`` with
  ``period = n_rows - head``; when ``period == 0`` later symbols carry
  no pilots at all.

Pilots may sit only on the plan's used subcarriers (its data or pilot
subcarriers).  Every used cell that is not a pilot carries data, so the
number of data values per symbol can change from symbol to symbol.  Data
and pilots are ordered as in :mod:`tonebank.plan`: symbol by symbol,
ascending subcarrier within a symbol.

A grid made by :meth:`tonebank.PilotPattern.place` has shape ``(...,
n_symbols, n_fft)`` and goes straight into
:meth:`tonebank.CpOfdm.synthesize`; a grid from
:meth:`tonebank.CpOfdm.analyze` goes into :meth:`tonebank.PilotPattern.take`
and into the estimators of :mod:`tonebank.estimation`.  The plan's own
fixed pilots are a comb pattern of their own:
:meth:`tonebank.PilotPattern.from_plan` (or
:attr:`tonebank.CarrierPlan.pilot_pattern`), whose
:meth:`~tonebank.PilotPattern.place` is the same as
:meth:`tonebank.CarrierPlan.place`.
"""

from __future__ import annotations

import math

import numpy as np

from ._checks import integer
from .plan import CarrierPlan

__all__ = ["PilotPattern"]


def _readonly(a: np.ndarray) -> np.ndarray:
    a.flags.writeable = False
    return a


def _signed(n_fft: int) -> np.ndarray:
    """Signed subcarrier index of every bin in natural FFT order."""
    k = np.arange(n_fft)
    k[k >= n_fft - n_fft // 2] -= n_fft
    return k


def _plan_arg(plan) -> CarrierPlan:
    if not isinstance(plan, CarrierPlan):
        raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
    return plan


def _used_subcarriers(plan: CarrierPlan) -> np.ndarray:
    return np.sort(np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers)))


def _values_table(values, shape: tuple, name: str = "values") -> np.ndarray:
    """``values`` broadcast to ``shape`` as complex128 (a new array)."""
    v = np.asarray(values)
    if v.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric, got dtype {v.dtype}")
    try:
        out = np.array(np.broadcast_to(v.astype(np.complex128), shape))
    except ValueError:
        raise ValueError(f"{name} of shape {v.shape} does not broadcast to the pattern's "
                         f"table shape {shape} (n_rows, n_fft)") from None
    if not np.all(np.isfinite(out)):
        raise ValueError(f"{name} must be finite")
    return out


class PilotPattern:
    """Pilot cells and values on the time-frequency grid of a plan (immutable).

    Most users build a pattern with one of the class methods
    (:meth:`from_plan`, :meth:`comb`, :meth:`scattered`, :meth:`block`,
    :meth:`preamble`); the constructor takes the table directly (see the
    module notes for how rows map to symbols).

    Parameters
    ----------
    plan : CarrierPlan
        The plan whose used subcarriers the pattern shares between pilots
        and data.
    mask : array_like of bool
        Shape ``(n_rows, n_fft)``, natural FFT order: true where a cell
        is a pilot.  Only the plan's used subcarriers may be pilots.
    values : array_like of complex, optional
        Pilot values, broadcastable to ``(n_rows, n_fft)``; only the
        values at pilot cells are kept (they must be non-zero and
        finite).  Default: 1 on every pilot.
    head : int, default 0
        Number of leading rows applied once (``0 <= head <= n_rows``);
        the remaining rows repeat.
    name : str, optional
        A label for printing.

    Attributes
    ----------
    plan : CarrierPlan
    mask, values : ndarray
        The tables, shape ``(n_rows, n_fft)`` (read-only); ``values`` is
        zero off the pilot cells.
    head, period, n_rows : int
        ``period = n_rows - head`` (0: no pilots after the head).

    Raises
    ------
    TypeError
        ``plan`` not a CarrierPlan, ``mask`` not boolean, non-numeric
        values.
    ValueError
        Wrong table shapes, a pilot off the plan's used subcarriers, a
        zero or non-finite pilot value, ``head`` out of range.

    See Also
    --------
    tonebank.estimation.ChannelEstimator : estimates the channel from a pattern.

    Notes
    -----
    :meth:`place` and :meth:`take` cost one boolean scatter or gather
    over the grid; the per-frame masks are built from the table by row
    indexing, ``O(n_symbols * n_fft)``.

    Examples
    --------
    >>> import tonebank
    >>> plan = tonebank.CarrierPlan.centered(64, 48, cp_length=16)
    >>> pattern = tonebank.PilotPattern.scattered(plan, spacing=12, shift=3)
    >>> pattern.period, round(pattern.overhead(), 4)
    (4, 0.0833)
    >>> pattern.subcarriers(1).tolist()      # pilots of symbol 1
    [-21, -9, 3, 15]
    """

    __slots__ = ("_plan", "_mask", "_values", "_head", "_name", "_mask_ext", "_values_ext",
                 "_data_ext", "_counts_ext", "_perm")

    def __init__(self, plan, mask, values=None, *, head: int = 0, name: str | None = None):
        plan = _plan_arg(plan)
        n = plan.n_fft
        m = np.asarray(mask)
        if m.dtype != bool:
            raise TypeError(f"mask must be a boolean array, got dtype {m.dtype}")
        if m.ndim != 2 or m.shape[1] != n or m.shape[0] < 1:
            raise ValueError(f"mask must have shape (n_rows >= 1, n_fft={n}), got {m.shape}")
        m = m.copy()
        used = np.zeros(n, dtype=bool)
        used[plan.data_bins] = True
        used[plan.pilot_bins] = True
        stray = m & ~used
        if stray.any():
            row, col = np.argwhere(stray)[0]
            raise ValueError(f"mask row {int(row)} puts a pilot on subcarrier "
                             f"{int(_signed(n)[col])}, which the plan does not use; pilots "
                             "must sit on the plan's data or pilot subcarriers")
        head = integer(head, "head", minimum=0, maximum=m.shape[0])
        if name is not None and not isinstance(name, str):
            raise TypeError(f"name must be a string, got {name!r}")
        table = _values_table(1.0 if values is None else values, m.shape)
        table[~m] = 0
        if np.any(table[m] == 0):
            row, col = np.argwhere(m & (table == 0))[0]
            raise ValueError(f"values is zero at pilot cell (row {int(row)}, subcarrier "
                             f"{int(_signed(n)[col])}); a pilot must be non-zero")
        self._plan = plan
        self._mask = _readonly(m)
        self._values = _readonly(table)
        self._head = head
        self._name = name
        # The tables with one extra all-empty row (index n_rows) for the
        # symbols after the head of a pattern without a repeating part.
        self._mask_ext = _readonly(np.vstack((m, np.zeros((1, n), bool))))
        self._values_ext = _readonly(np.vstack((table, np.zeros((1, n)))))
        data = np.zeros(n, dtype=bool)
        data[plan.data_bins] = True
        self._data_ext = _readonly(data[None, :] & ~self._mask_ext)
        self._counts_ext = _readonly(self._data_ext.sum(axis=1))
        # Natural FFT positions in ascending subcarrier order.
        self._perm = np.argsort(_signed(n), kind="stable")

    # ---- builders ------------------------------------------------------------

    @classmethod
    def from_plan(cls, plan) -> PilotPattern:
        """The plan's own fixed pilots as a pattern.

        Parameters
        ----------
        plan : CarrierPlan

        Returns
        -------
        PilotPattern
            ``period`` is the period of the plan's pilot values; a plan
            without pilots gives a pattern without pilots.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, pilot_offset=6)
        >>> pattern = tonebank.PilotPattern.from_plan(plan)
        >>> data = np.arange(3 * plan.n_data) + 0j
        >>> bool(np.array_equal(pattern.place(data), plan.place(data)))
        True
        """
        plan = _plan_arg(plan)
        rows = plan.pilot_values.shape[0]
        mask = np.zeros((rows, plan.n_fft), dtype=bool)
        values = np.zeros((rows, plan.n_fft), dtype=np.complex128)
        mask[:, plan.pilot_bins] = True
        values[:, plan.pilot_bins] = plan.pilot_values
        return cls(plan, mask, values, name="plan pilots")

    @classmethod
    def _with_plan_pilots(cls, plan, mask, values, head, include, name):
        """Overlay the plan's fixed pilots on the repeating rows of a table."""
        include = _bool_arg(include, "include_plan_pilots")
        if include and plan.n_pilots:
            own = mask.shape[0] - head
            plan_period = plan.pilot_values.shape[0]
            period = math.lcm(max(own, 1), plan_period)
            body = np.arange(period)
            if own:
                rows_m = mask[head:][body % own]
                rows_v = values[head:][body % own]
            else:
                rows_m = np.zeros((period, plan.n_fft), bool)
                rows_v = np.zeros((period, plan.n_fft), np.complex128)
            rows_m[:, plan.pilot_bins] = True
            rows_v[:, plan.pilot_bins] = plan.pilot_values[body % plan_period]
            mask = np.vstack((mask[:head], rows_m))
            values = np.vstack((values[:head], rows_v))
        return cls(plan, mask, values, head=head, name=name)

    @classmethod
    def comb(cls, plan, spacing: int, *, offset: int = 0, values=1.0,
             include_plan_pilots: bool = True) -> PilotPattern:
        """Pilots on every ``spacing``-th used subcarrier of every symbol.

        Parameters
        ----------
        plan : CarrierPlan
        spacing : int
            Distance between pilots in subcarriers, counted from the
            lowest used subcarrier ``k_min``: subcarrier ``k`` is a pilot
            when ``(k - k_min) % spacing == offset`` and the plan uses
            ``k``.  ``2 <= spacing <= n_used``.
        offset : int, default 0
            ``0 <= offset < spacing``.
        values : complex or array_like, default 1.0
            Pilot values, broadcastable to ``(1, n_fft)`` (one value, or
            one per bin in natural FFT order).
        include_plan_pilots : bool, optional
            Also count the plan's own pilots, with the plan's values, as
            pilots (default true).

        Returns
        -------
        PilotPattern

        Raises
        ------
        ValueError
            Spacing or offset out of range.

        Examples
        --------
        >>> import tonebank
        >>> plan = tonebank.CarrierPlan.centered(32, 24)
        >>> tonebank.PilotPattern.comb(plan, 4).subcarriers(0).tolist()
        [-12, -8, -4, 4, 8, 12]
        """
        return cls._staggered(plan, spacing, 0, offset, values, include_plan_pilots,
                              f"comb every {spacing}")

    @classmethod
    def scattered(cls, plan, spacing: int = 12, shift: int = 3, *, offset: int = 0,
                  values=1.0, include_plan_pilots: bool = True) -> PilotPattern:
        """Pilots every ``spacing`` subcarriers, moved by ``shift`` each symbol.

        Symbol ``s`` has a pilot on used subcarrier ``k`` when
        ``(k - k_min) % spacing == (offset + shift * s) % spacing``; the
        pattern repeats after ``spacing / gcd(spacing, shift)`` symbols.
        The default (12, 3) is the layout of the scattered pilots of
        DVB-T (ETSI EN 300 744, clause 4.5.3: ``k = K_min + 3 (l mod 4) +
        12 p``; from memory): over four symbols every third subcarrier
        has carried a pilot.

        Parameters
        ----------
        plan : CarrierPlan
        spacing : int, default 12
            ``2 <= spacing <= n_used``.
        shift : int, default 3
            ``1 <= shift < spacing``.
        offset : int, default 0
            ``0 <= offset < spacing``.
        values : complex or array_like, default 1.0
            Pilot values, broadcastable to ``(period, n_fft)``.  DVB-T
            uses boosted pilots of amplitude 4/3 (with a sign from its
            reference sequence, :func:`tonebank.presets.dvbt_reference_prbs`).
        include_plan_pilots : bool, optional
            Also count the plan's own pilots as pilots (default true).

        Returns
        -------
        PilotPattern

        Raises
        ------
        ValueError
            Spacing, shift or offset out of range.

        Examples
        --------
        >>> import tonebank
        >>> plan = tonebank.CarrierPlan.centered(64, 48)
        >>> p = tonebank.PilotPattern.scattered(plan)
        >>> [p.subcarriers(s).tolist()[:2] for s in range(5)]
        [[-24, -12], [-21, -9], [-18, -6], [-15, -3], [-24, -12]]
        """
        shift = integer(shift, "shift", minimum=1)
        return cls._staggered(plan, spacing, shift, offset, values, include_plan_pilots,
                              f"scattered every {spacing} shift {shift}")

    @classmethod
    def _staggered(cls, plan, spacing, shift, offset, values, include, name):
        plan = _plan_arg(plan)
        used = _used_subcarriers(plan)
        spacing = integer(spacing, "spacing", minimum=2)
        if spacing > used.size:
            raise ValueError(f"spacing={spacing} is larger than the plan's {used.size} used "
                             "subcarriers: no symbol would hold a pilot")
        offset = integer(offset, "offset", minimum=0, maximum=spacing - 1)
        if shift >= spacing:
            raise ValueError(f"shift={shift} must be below spacing={spacing}")
        period = spacing // math.gcd(spacing, shift) if shift else 1
        pos = used - used[0]
        n = plan.n_fft
        mask = np.zeros((period, n), dtype=bool)
        for row in range(period):
            chosen = used[pos % spacing == (offset + shift * row) % spacing]
            mask[row, chosen % n] = True
        table = _values_table(values, (period, n))
        return cls._with_plan_pilots(plan, mask, table, 0, include, name)

    @classmethod
    def block(cls, plan, period: int, *, n_training: int = 1, values=1.0,
              include_plan_pilots: bool = True) -> PilotPattern:
        """Whole training symbols, repeated: the first ``n_training`` of every ``period`` symbols.

        In a training symbol every used subcarrier is a pilot.

        Parameters
        ----------
        plan : CarrierPlan
        period : int
            Symbols per repetition, ``>= n_training``.
        n_training : int, default 1
            Training symbols at the start of each repetition, >= 1.
        values : complex or array_like, default 1.0
            Training values, broadcastable to ``(n_training, n_fft)``
            (for example one row of known symbols in natural FFT order).
        include_plan_pilots : bool, optional
            Also count the plan's pilots in the other symbols (default
            true).

        Returns
        -------
        PilotPattern

        Examples
        --------
        >>> import tonebank
        >>> plan = tonebank.CarrierPlan.centered(64, 48)
        >>> round(tonebank.PilotPattern.block(plan, 8).overhead(), 3)
        0.125
        """
        plan = _plan_arg(plan)
        n_training = integer(n_training, "n_training", minimum=1)
        period = integer(period, "period", minimum=n_training)
        mask, table = cls._training_rows(plan, n_training, values)
        mask = np.vstack((mask, np.zeros((period - n_training, plan.n_fft), bool)))
        table = np.vstack((table, np.zeros((period - n_training, plan.n_fft))))
        include_plan_pilots = _bool_arg(include_plan_pilots, "include_plan_pilots")
        if include_plan_pilots and plan.n_pilots and period > n_training:
            # Plan pilots on the non-training rows only: lay the training
            # rows out again over the common period.
            plan_period = plan.pilot_values.shape[0]
            full = math.lcm(period, plan_period)
            s = np.arange(full)
            mask, table = mask[s % period], table[s % period]
            rest = (s % period) >= n_training
            cells = np.ix_(rest, plan.pilot_bins)
            mask[cells] = True
            table[cells] = plan.pilot_values[s[rest] % plan_period]
        return cls(plan, mask, table, name=f"block {n_training} of {period}")

    @classmethod
    def _training_rows(cls, plan, n_training, values):
        used = np.zeros(plan.n_fft, dtype=bool)
        used[plan.data_bins] = True
        used[plan.pilot_bins] = True
        mask = np.broadcast_to(used, (n_training, plan.n_fft)).copy()
        table = _values_table(values, mask.shape)
        table[~mask] = 0
        return mask, table

    @classmethod
    def preamble(cls, plan, n_symbols: int = 1, *, values=1.0,
                 include_plan_pilots: bool = True) -> PilotPattern:
        """Training symbols at the start of a frame, then the plan's pilots (or none).

        Symbols ``0 .. n_symbols - 1`` of a frame are training symbols
        (every used subcarrier a pilot); symbol ``n_symbols + s`` carries
        the pilots of the plan's symbol ``s`` when ``include_plan_pilots``.

        Parameters
        ----------
        plan : CarrierPlan
        n_symbols : int, default 1
            Training symbols, >= 1 (two repeated symbols for a long
            training field as in IEEE 802.11a).
        values : complex or array_like, default 1.0
            Training values, broadcastable to ``(n_symbols, n_fft)``,
            e.g. :func:`tonebank.presets.ieee80211a_long_training`.
        include_plan_pilots : bool, optional
            Default true.

        Returns
        -------
        PilotPattern

        Raises
        ------
        ValueError
            A training value is zero on a used subcarrier.

        Examples
        --------
        >>> from tonebank import PilotPattern, presets
        >>> plan = presets.ieee80211a()
        >>> p = PilotPattern.preamble(plan, 2, values=presets.ieee80211a_long_training())
        >>> p.head, p.period, [p.n_data(1, s) for s in (0, 1, 2)]
        (2, 127, [0, 0, 48])
        """
        plan = _plan_arg(plan)
        n_symbols = integer(n_symbols, "n_symbols", minimum=1)
        mask, table = cls._training_rows(plan, n_symbols, values)
        return cls._with_plan_pilots(plan, mask, table, n_symbols, include_plan_pilots,
                                     f"preamble of {n_symbols}")

    # ---- description ---------------------------------------------------------

    @property
    def plan(self) -> CarrierPlan:
        """The carrier plan."""
        return self._plan

    @property
    def mask(self) -> np.ndarray:
        """The pilot table, shape ``(n_rows, n_fft)`` (read-only)."""
        return self._mask

    @property
    def values(self) -> np.ndarray:
        """The pilot values, shape ``(n_rows, n_fft)``, zero off the pilots (read-only)."""
        return self._values

    @property
    def head(self) -> int:
        """Number of leading rows used once."""
        return self._head

    @property
    def n_rows(self) -> int:
        """Number of rows of the table."""
        return int(self._mask.shape[0])

    @property
    def period(self) -> int:
        """Number of repeating rows; zero when no pilots follow the head."""
        return self.n_rows - self._head

    @property
    def name(self) -> str | None:
        """The pattern's label, if any."""
        return self._name

    def __repr__(self):
        label = f"{self._name!r}, " if self._name else ""
        return (f"PilotPattern({label}n_fft={self._plan.n_fft}, head={self._head}, "
                f"period={self.period}, overhead={self.overhead():.4f})")

    # ---- per-frame tables ----------------------------------------------------

    def rows(self, n_symbols: int, start_symbol: int = 0) -> np.ndarray:
        """Table row of each symbol ``start_symbol .. start_symbol + n_symbols - 1``.

        Returns
        -------
        ndarray of int
            Shape ``(n_symbols,)``; ``n_rows`` stands for a symbol without
            pilots (after the head of a pattern with ``period == 0``).
        """
        n_symbols = integer(n_symbols, "n_symbols", minimum=0)
        start_symbol = integer(start_symbol, "start_symbol", minimum=0)
        s = start_symbol + np.arange(n_symbols)
        if self.period:
            later = self._head + (s - self._head) % self.period
        else:
            later = np.full(n_symbols, self.n_rows)
        return np.where(s < self._head, s, later).astype(np.intp)

    def mask_for(self, n_symbols: int, start_symbol: int = 0) -> np.ndarray:
        """Pilot cells of a frame, bool, shape ``(n_symbols, n_fft)``."""
        return self._mask_ext[self.rows(n_symbols, start_symbol)]

    def values_for(self, n_symbols: int, start_symbol: int = 0) -> np.ndarray:
        """Pilot values of a frame, complex128, shape ``(n_symbols, n_fft)``, zero off pilots."""
        return self._values_ext[self.rows(n_symbols, start_symbol)]

    def data_mask_for(self, n_symbols: int, start_symbol: int = 0) -> np.ndarray:
        """Data cells of a frame, bool, shape ``(n_symbols, n_fft)``."""
        return self._data_ext[self.rows(n_symbols, start_symbol)]

    def subcarriers(self, symbol: int) -> np.ndarray:
        """Signed subcarrier indices of the pilots of one symbol, ascending."""
        row = self.rows(1, symbol)[0]
        k = _signed(self._plan.n_fft)
        return np.sort(k[self._mask_ext[row]])

    def n_data(self, n_symbols: int, start_symbol: int = 0) -> int:
        """Number of data values that ``n_symbols`` symbols from ``start_symbol`` carry."""
        return int(self._counts_ext[self.rows(n_symbols, start_symbol)].sum())

    def overhead(self, n_symbols: int | None = None, start_symbol: int = 0) -> float:
        """Fraction of the plan's used cells that carry pilots.

        Parameters
        ----------
        n_symbols : int, optional
            Frame length; default: the table (head plus one period).
        start_symbol : int, default 0

        Returns
        -------
        float
            Pilot cells / used cells, in [0, 1].
        """
        if n_symbols is None:
            n_symbols, start_symbol = self.n_rows, 0
        n_symbols = integer(n_symbols, "n_symbols", minimum=1)
        pilots = int(self.mask_for(n_symbols, start_symbol).sum())
        return pilots / (n_symbols * self._plan.n_used)

    def symbols_for(self, n_values: int, start_symbol: int = 0) -> int:
        """Fewest symbols from ``start_symbol`` whose data cells ``n_values`` values fill exactly.

        Raises
        ------
        ValueError
            When no number of whole symbols holds exactly ``n_values``
            (the message says how many values would complete the last
            symbol) or the pattern leaves no data cells.
        """
        n_values = integer(n_values, "n_values", minimum=0)
        start_symbol = integer(start_symbol, "start_symbol", minimum=0)
        if n_values == 0:
            return 0
        per_period = int(self._counts_ext[self._head:self.n_rows].sum()) if self.period \
            else self._plan.n_data
        if per_period == 0:
            raise ValueError("the pattern leaves no data cells after its first symbols: "
                             "pass n_symbols explicitly")
        period = max(self.period, 1)
        # Enough symbols for the head plus the values at the slowest fill.
        guess = self._head + period * (n_values // per_period + 2)
        counts = self._counts_ext[self.rows(guess, start_symbol)]
        total = np.cumsum(counts)
        hit = np.flatnonzero(total == n_values)
        if hit.size:
            return int(hit[0]) + 1
        over = int(np.searchsorted(total, n_values))
        full = int(total[over - 1]) if over else 0
        raise ValueError(f"data has {n_values} values per signal: {over} whole symbols hold "
                         f"{full} and symbol {start_symbol + over} holds {int(counts[over])} "
                         f"more; pad with {int(total[over]) - n_values} values (nothing is "
                         "truncated)")

    # ---- placing and taking --------------------------------------------------

    def place(self, data, *, n_symbols: int | None = None, start_symbol: int = 0) -> np.ndarray:
        """Build the frequency grid from a data stream and the pattern's pilots.

        Parameters
        ----------
        data : array_like of complex
            Shape ``(..., n_values)``: data values, symbol by symbol,
            ascending subcarrier within a symbol.  Leading axes are batch.
        n_symbols : int, optional
            Frame length; default: the fewest symbols that the data fill
            (:meth:`symbols_for`).
        start_symbol : int, default 0
            Index of the first symbol in the frame (selects the rows).

        Returns
        -------
        ndarray
            Shape ``(..., n_symbols, n_fft)``; complex64 when ``data`` is
            complex64 (or float32), complex128 otherwise; null cells zero.

        Raises
        ------
        ValueError
            The data do not fill the symbols' data cells exactly.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> plan = tonebank.CarrierPlan(8, data=[-3, -2, -1, 1, 2, 3])
        >>> p = tonebank.PilotPattern.scattered(plan, spacing=4, shift=2)
        >>> [p.subcarriers(s).tolist() for s in (0, 1)]
        [[-3, 1], [-1, 3]]
        >>> grid = p.place(np.arange(1, 9) + 0j)
        >>> grid.real.tolist()
        [[0.0, 1.0, 3.0, 4.0, 0.0, 1.0, 1.0, 2.0], [0.0, 7.0, 8.0, 1.0, 0.0, 5.0, 6.0, 1.0]]
        """
        d = np.asarray(data)
        if d.ndim == 0:
            raise ValueError("data must have at least one axis (the data stream)")
        if d.dtype.kind not in "biufc":
            raise TypeError(f"data must be numeric, got dtype {d.dtype}")
        dtype = np.complex64 if d.dtype in (np.complex64, np.float32) else np.complex128
        start_symbol = integer(start_symbol, "start_symbol", minimum=0)
        if n_symbols is None:
            n_symbols = self.symbols_for(d.shape[-1], start_symbol)
        else:
            n_symbols = integer(n_symbols, "n_symbols", minimum=0)
            want = self.n_data(n_symbols, start_symbol)
            if d.shape[-1] != want:
                raise ValueError(f"data has {d.shape[-1]} values per signal but "
                                 f"n_symbols={n_symbols} from start_symbol={start_symbol} "
                                 f"hold {want}")
        rows = self.rows(n_symbols, start_symbol)
        lead = d.shape[:-1]
        perm = self._perm
        ordered = np.zeros(lead + (n_symbols, self._plan.n_fft), dtype=dtype)
        ordered[..., self._data_ext[rows][:, perm]] = d
        grid = np.empty_like(ordered)
        grid[..., perm] = ordered
        pil = self._mask_ext[rows]
        grid[..., pil] = self._values_ext[rows][pil]
        return grid

    def take(self, grid, *, start_symbol: int = 0) -> tuple[np.ndarray, np.ndarray]:
        """Split a frequency grid into its data stream and pilot stream.

        The inverse of :meth:`place`.

        Parameters
        ----------
        grid : array_like of complex
            Shape ``(..., n_symbols, n_fft)``.
        start_symbol : int, default 0

        Returns
        -------
        data : ndarray
            Shape ``(..., n_values)``, symbol by symbol, ascending
            subcarrier.
        pilots : ndarray
            Shape ``(..., n_pilot_cells)``, the received pilot cells in the
            same order.

        Raises
        ------
        ValueError
            When the last axis is not ``n_fft`` long or the grid has fewer
            than two axes.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> plan = tonebank.CarrierPlan(8, data=[-3, -2, -1, 1, 2, 3])
        >>> p = tonebank.PilotPattern.scattered(plan, spacing=4, shift=2)
        >>> data, pilots = p.take(p.place(np.arange(1, 9) + 0j))
        >>> data.real.tolist(), pilots.real.tolist()
        ([1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0], [1.0, 1.0, 1.0, 1.0])
        """
        g = _grid_arg(grid, self._plan.n_fft)
        start_symbol = integer(start_symbol, "start_symbol", minimum=0)
        rows = self.rows(g.shape[-2], start_symbol)
        ordered = g[..., self._perm]
        return (ordered[..., self._data_ext[rows][:, self._perm]],
                ordered[..., self._mask_ext[rows][:, self._perm]])


def _grid_arg(grid, n_fft: int, name: str = "grid") -> np.ndarray:
    g = np.asarray(grid)
    if g.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric, got dtype {g.dtype}")
    if g.ndim < 2 or g.shape[-1] != n_fft:
        raise ValueError(f"{name} must have shape (..., n_symbols, n_fft={n_fft}), "
                         f"got {g.shape}")
    return g


def _bool_arg(value, name: str) -> bool:
    if not isinstance(value, (bool, np.bool_)):
        raise TypeError(f"{name} must be True or False, got {value!r}")
    return bool(value)

