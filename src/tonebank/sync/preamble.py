"""Synchronisation preambles: what the receiver knows about the start of a frame.

A :class:`Preamble` holds the time-domain samples that open every frame
and the facts the synchronisation steps need about them: the period of
the repeated part used for detection and coarse frequency offset, where
the metric's plateau lies, the known training symbols (for fine timing,
integer frequency offset and channel estimation) and the repeated region
used for the fine frequency offset and the noise estimate.

Two kinds are built here:

- :meth:`Preamble.two_halves`: for any carrier plan, a symbol whose body
  is two identical halves (a pseudo-random sequence on the even
  subcarriers only) followed by a second symbol with a pseudo-random
  sequence on every used subcarrier, each with the plan's prefix, the
  structure proposed by Schmidl and Cox (1997).
- :meth:`Preamble.ieee80211a`: the short/long training preamble of IEEE
  802.11a (built by :func:`tonebank.presets.ieee80211a_preamble`).

All samples use the unitary DFT scaling of :class:`tonebank.CpOfdm`, so a
preamble and data symbols on the same plan have about the same power.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .. import presets
from .._checks import generator
from ..plan import CarrierPlan

__all__ = ["Preamble", "RepeatedRegion"]


def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.array(a)
    a.flags.writeable = False
    return a


class RepeatedRegion(NamedTuple):
    """A stretch of the preamble that repeats: ``x[start + m] == x[start + period + m]``.

    Offsets are samples from the first sample of the preamble;
    ``0 <= m < length``.
    """

    start: int
    period: int
    length: int


class Preamble:
    """The known start of every frame, and where its parts lie (immutable).

    Build one with :meth:`two_halves` or :meth:`ieee80211a`.

    Attributes
    ----------
    samples : ndarray
        complex128, shape ``(n_samples,)``, read-only.
    n_fft : int
        Transform size of the symbols that follow.
    period, window : int
        Distance ``L`` between the repeated parts used for detection, and
        the number ``W`` of products in the detection metric.
    plateau : tuple of int
        ``(first, last)``: the metric positions (sample offsets of the
        window's first sample from the preamble start) where the
        noise-free metric is exactly 1.
    repeated : RepeatedRegion
        The region used for the fine frequency offset and the noise
        estimate.
    training : ndarray
        complex128, shape ``(n_fft,)``, natural FFT order, read-only: the
        grid of the known training symbol(s) used for fine timing and
        channel estimation.
    training_starts : tuple of int
        Sample offsets of the body (after the prefix) of each transmitted
        copy of ``training``.
    halves_grid : ndarray or None
        complex128, shape ``(n_fft,)``: the grid of the two-halves symbol
        when the preamble supports the integer frequency-offset search
        (:meth:`two_halves`), else None.
    halves_start : int or None
        Sample offset of that symbol's body.

    Examples
    --------
    >>> from tonebank import presets, sync
    >>> p = sync.Preamble.ieee80211a()
    >>> p.n_samples, p.period, p.window, p.plateau, p.training_starts
    (320, 16, 64, (0, 80), (192, 256))
    """

    __slots__ = ("_samples", "_n_fft", "_period", "_window", "_plateau", "_repeated",
                 "_training", "_training_starts", "_halves_grid", "_halves_start",
                 "_name", "_frozen")

    def __init__(self, *, samples, n_fft, period, window, plateau, repeated, training,
                 training_starts, halves_grid=None, halves_start=None, name=None):
        # Internal: the classmethods compute consistent values.
        self._samples = _readonly(np.asarray(samples, np.complex128))
        self._n_fft = int(n_fft)
        self._period = int(period)
        self._window = int(window)
        self._plateau = (int(plateau[0]), int(plateau[1]))
        self._repeated = RepeatedRegion(*(int(v) for v in repeated))
        self._training = _readonly(np.asarray(training, np.complex128))
        self._training_starts = tuple(int(s) for s in training_starts)
        self._halves_grid = None if halves_grid is None else _readonly(
            np.asarray(halves_grid, np.complex128))
        self._halves_start = None if halves_start is None else int(halves_start)
        self._name = name
        self._frozen = True

    def __setattr__(self, key, value):
        if hasattr(self, "_frozen"):
            raise AttributeError(f"{type(self).__name__} is immutable; build a new one")
        object.__setattr__(self, key, value)

    @classmethod
    def two_halves(cls, plan: CarrierPlan, *, rng=2024) -> Preamble:
        r"""A two-symbol preamble for any plan: two identical halves, then a full training symbol.

        Parameters
        ----------
        plan : tonebank.CarrierPlan
            The plan of the frame: ``n_fft`` must be even and the plan
            must use at least two even subcarriers; the preamble symbols
            take its first prefix length.
        rng : numpy.random.Generator or int, default 2024
            Source of the pseudo-random QPSK values (a fixed seed by
            default, so transmitter and receiver agree).

        Returns
        -------
        Preamble
            ``2 (n_fft + cp)`` samples: prefix, the two-halves symbol,
            prefix, the training symbol.  ``period = window = n_fft / 2``,
            ``plateau = (0, cp)``.

        Raises
        ------
        TypeError
            ``plan`` not a CarrierPlan, bad ``rng``.
        ValueError
            Odd ``n_fft``, fewer than two used even subcarriers.

        Notes
        -----
        The first symbol carries :math:`\sqrt 2\,c_k` on the used even
        subcarriers and zero on the odd ones, so its body is periodic with
        period :math:`N/2` (two identical halves) and has the power of a
        symbol using every subcarrier; the second carries :math:`c'_k` on
        every used subcarrier.  The ratio :math:`c'_k / c_k` on the even
        subcarriers is the differential sequence that the integer
        frequency-offset search correlates against (Schmidl and Cox 1997,
        section III).  Values :math:`(\pm 1 \pm j)/\sqrt 2`.

        References
        ----------
        T. M. Schmidl and D. C. Cox, "Robust frequency and timing
        synchronization for OFDM", IEEE Trans. Commun. 45 (12), 1997.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> from tonebank import sync
        >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
        >>> p = sync.Preamble.two_halves(plan)
        >>> p.n_samples, p.period, p.plateau
        (160, 32, (0, 16))
        >>> body = p.samples[16:80]
        >>> bool(np.allclose(body[:32], body[32:]))
        True
        """
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        n = plan.n_fft
        if n % 2:
            raise ValueError(f"plan.n_fft must be even for a two-halves symbol, got {n}")
        gen = generator(rng)
        used = np.sort(np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers)))
        even = used[used % 2 == 0]
        if even.size < 2:
            raise ValueError("plan must use at least two even subcarriers for a two-halves "
                             f"symbol, it uses {even.size}")
        cp = int(plan.cp_lengths[0])

        def qpsk(count):
            return (gen.choice([-1.0, 1.0], count) + 1j * gen.choice([-1.0, 1.0], count)) \
                / np.sqrt(2)

        first = np.zeros(n, np.complex128)
        first[even % n] = np.sqrt(2) * qpsk(even.size)
        second = np.zeros(n, np.complex128)
        second[used % n] = qpsk(used.size)
        bodies = [np.fft.ifft(g, norm="ortho") for g in (first, second)]
        samples = np.concatenate([np.concatenate((b[n - cp:], b)) for b in bodies])
        return cls(samples=samples, n_fft=n, period=n // 2, window=n // 2, plateau=(0, cp),
                   repeated=(cp, n // 2, n // 2), training=second,
                   training_starts=(2 * cp + n,), halves_grid=first, halves_start=cp,
                   name="two halves")

    @classmethod
    def ieee80211a(cls, *, window: int = 64) -> Preamble:
        """The IEEE 802.11a preamble: ten short training symbols, then two long ones.

        Parameters
        ----------
        window : int, default 64
            Products in the detection metric over the 16-sample period of
            the short training field, 16..144.  The default keeps the
            noise floor of the metric low (see
            :data:`tonebank.sync.DEFAULT_THRESHOLD`) and leaves a plateau
            of 81 positions.

        Returns
        -------
        Preamble
            320 samples (:func:`tonebank.presets.ieee80211a_preamble` with
            ``norm="ortho"``): ``period = 16``, ``plateau = (0, 144 -
            window)``, training the long training sequence at 192 and 256,
            the repeated region 176..303 (period 64, inside the guard
            interval GI2 and the two long symbols).

        Raises
        ------
        ValueError
            ``window`` outside 16..144.

        Notes
        -----
        The short field's period of 16 samples (a quarter symbol) lets the
        coarse estimate cover +/- 2 subcarrier spacings, so no integer
        search is needed; the long symbols (period 64) refine it (IEEE
        Std 802.11a-1999, clause 17.3.3, from memory, describes the
        fields; how a receiver uses them is not specified there).
        """
        from .._checks import integer
        window = integer(window, "window", minimum=16, maximum=144)
        samples = presets.ieee80211a_preamble(norm="ortho")
        return cls(samples=samples, n_fft=64, period=16, window=window,
                   plateau=(0, 160 - 16 - window), repeated=(176, 64, 64),
                   training=presets.ieee80211a_long_training(), training_starts=(192, 256),
                   name="IEEE 802.11a")

    # ---- description ---------------------------------------------------------

    @property
    def samples(self) -> np.ndarray:
        """The preamble's samples (complex128, read-only)."""
        return self._samples

    @property
    def n_samples(self) -> int:
        """Number of samples."""
        return self._samples.size

    @property
    def n_fft(self) -> int:
        """Transform size of the training symbols."""
        return self._n_fft

    @property
    def period(self) -> int:
        """Distance in samples between the repeated parts used for detection."""
        return self._period

    @property
    def window(self) -> int:
        """Products summed by the detection metric."""
        return self._window

    @property
    def plateau(self) -> tuple[int, int]:
        """The first and last metric position where the noise-free metric is 1."""
        return self._plateau

    @property
    def coarse_range_spacings(self) -> float:
        """The largest offset in subcarrier spacings that the detection period resolves, ``n_fft / (2 period)``."""
        return self._n_fft / (2 * self._period)

    @property
    def repeated(self) -> RepeatedRegion:
        """The region for the fine frequency offset and the noise estimate."""
        return self._repeated

    @property
    def training(self) -> np.ndarray:
        """The training grid (natural FFT order, read-only)."""
        return self._training

    @property
    def training_starts(self) -> tuple[int, ...]:
        """Sample offsets of the training symbol bodies."""
        return self._training_starts

    @property
    def halves_grid(self) -> np.ndarray | None:
        """The two-halves symbol's grid (None where there is no integer search)."""
        return self._halves_grid

    @property
    def halves_start(self) -> int | None:
        """Sample offset of the two-halves symbol's body (or None)."""
        return self._halves_start

    def __repr__(self):
        return (f"Preamble({self._name!r}, n_samples={self.n_samples}, n_fft={self._n_fft}, "
                f"period={self._period})")
