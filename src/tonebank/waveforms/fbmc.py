"""FBMC with offset-QAM staggering (FBMC/OQAM) on the PHYDYAS prototype.

Each subcarrier is shaped by a prototype filter ``K`` symbols long (the
overlap factor), so that neighbouring symbols overlap in time and the
spectrum of each subcarrier falls off far faster than the sinc of
CP-OFDM.  Orthogonality then holds only in the real field: every complex
value is sent as two real half-symbols staggered by half a symbol, with
a phase pattern that puts all the interference between neighbours on the
imaginary axis, where the receiver discards it.
"""

from __future__ import annotations

import math
import threading

import numpy as np

from .. import _kernel
from .._checks import integer
from ..plan import CarrierPlan
from .base import Waveform

__all__ = ["FbmcOqam", "phydyas_coefficients", "phydyas_prototype"]

_C128 = np.dtype(np.complex128)
_C64 = np.dtype(np.complex64)

#: Frequency samples ``H_0 .. H_{K-1}`` of the PHYDYAS prototype for each
#: supported overlap factor K.  Bellanger, "FBMC physical layer: a primer"
#: (PHYDYAS project, 2010), table of the frequency-sampling coefficients --
#: from memory; each set satisfies ``H_k**2 + H_{K-k}**2 = 1`` to 1e-9
#: (checked in tests/test_fbmc.py).
_PHYDYAS = {
    3: (1.0, 0.91143783, 0.41143783),
    4: (1.0, 0.97195983, math.sqrt(0.5), 0.23514695),
}

#: Overlap factors the waveform accepts.
OVERLAP_FACTORS = tuple(sorted(_PHYDYAS))


def _check_overlap(overlap) -> int:
    if isinstance(overlap, bool) or not isinstance(overlap, (int, np.integer)):
        raise TypeError(f"overlap must be an integer, one of {OVERLAP_FACTORS}, "
                        f"got {overlap!r}")
    if int(overlap) not in _PHYDYAS:
        raise ValueError(f"overlap={overlap!r} is not supported; the PHYDYAS prototype is "
                         f"tabulated here for overlap factors {OVERLAP_FACTORS}")
    return int(overlap)


def phydyas_coefficients(overlap: int = 4) -> tuple[float, ...]:
    r"""Frequency-sampling coefficients of the PHYDYAS prototype filter.

    Parameters
    ----------
    overlap : int, default 4
        Overlap factor K (prototype length in symbols): 3 or 4.

    Returns
    -------
    tuple of float
        :math:`H_0, \dots, H_{K-1}` with :math:`H_0 = 1`.

    Raises
    ------
    TypeError
        ``overlap`` is not an integer.
    ValueError
        ``overlap`` is not a supported factor.

    See Also
    --------
    phydyas_prototype : the filter taps built from them.

    Notes
    -----
    The design samples the prototype's frequency response at multiples of
    :math:`1/(KM)` and chooses the samples so that the squared response
    meets the Nyquist condition: :math:`H_k^2 + H_{K-k}^2 = 1` [1]_.

    References
    ----------
    .. [1] M. Bellanger, "FBMC physical layer: a primer", PHYDYAS project,
       2010 (values recalled, not re-read).

    Examples
    --------
    >>> import tonebank
    >>> [round(h, 4) for h in tonebank.phydyas_coefficients(4)]
    [1.0, 0.972, 0.7071, 0.2351]
    """
    return _PHYDYAS[_check_overlap(overlap)]


def phydyas_prototype(n_subcarriers: int, overlap: int = 4, *,
                      normalize: bool = True) -> np.ndarray:
    r"""Taps of the PHYDYAS prototype filter for ``n_subcarriers`` subcarriers.

    Parameters
    ----------
    n_subcarriers : int
        M, the number of subcarriers (the FFT size), at least 2.
    overlap : int, default 4
        Overlap factor K: 3 or 4.
    normalize : bool, optional
        Scale the taps to unit energy (the default, what :class:`FbmcOqam`
        uses); when false, the formula's own scale (:math:`h(KM/2) = 1 + 2\sum_k H_k`).

    Returns
    -------
    ndarray
        Shape ``(K * M,)``, float64.  Real and symmetric, ``h[l] = h[K M - l]``;
        ``h[0]`` is zero (to rounding of the tabulated coefficients).

    Raises
    ------
    TypeError, ValueError
        Bad ``n_subcarriers`` or ``overlap``.

    See Also
    --------
    phydyas_coefficients, FbmcOqam

    Notes
    -----
    .. math::

        h[l] = 1 + 2 \sum_{k=1}^{K-1} (-1)^k H_k \cos\frac{2\pi k l}{K M},
        \qquad l = 0, \dots, K M - 1,

    the frequency-sampling design of [1]_.  Its energy is
    :math:`K M (1 + 2\sum_k H_k^2) = K^2 M` by the design's
    constraint, so the unit-energy taps are :math:`h / (K\sqrt M)`.

    References
    ----------
    .. [1] M. Bellanger, "FBMC physical layer: a primer", PHYDYAS project,
       2010.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> h = tonebank.phydyas_prototype(8, 4)
    >>> h.shape, round(float(np.sum(h ** 2)), 12)
    ((32,), 1.0)
    """
    m = integer(n_subcarriers, "n_subcarriers", minimum=2)
    coeffs = phydyas_coefficients(overlap)
    kk = len(coeffs)
    if not isinstance(normalize, bool):
        raise TypeError(f"normalize must be True or False, got {normalize!r}")
    l = np.arange(kk * m)
    h = np.full(kk * m, coeffs[0])
    for k in range(1, kk):
        h += 2 * (-1) ** k * coeffs[k] * np.cos(2 * np.pi * k * l / (kk * m))
    if normalize:
        h /= np.sqrt(np.sum(h * h))
    return h


def _complex_dtype(arr: np.ndarray, name: str) -> np.dtype:
    if arr.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric, got dtype {arr.dtype}")
    if arr.dtype in (np.complex64, np.float32, np.float16):
        return _C64
    return _C128


class FbmcOqam(Waveform):
    r"""FBMC/OQAM: filter-bank multicarrier with offset-QAM staggering.

    Parameters
    ----------
    plan : CarrierPlan
        Subcarriers; its FFT size M must be even and its cyclic prefix 0
        (FBMC has no prefix: the prototype's overlap does that job).
    overlap : int, default 4
        Overlap factor K of the PHYDYAS prototype: 3 or 4.

    Raises
    ------
    TypeError
        ``plan`` is not a :class:`~tonebank.CarrierPlan`, ``overlap`` not
        an integer.
    ValueError
        Unsupported overlap factor, odd FFT size, or a plan with a cyclic
        prefix.

    See Also
    --------
    CpOfdm : the plain waveform with the same grid convention.
    phydyas_prototype : the prototype's taps.

    Notes
    -----
    **Grid semantics.**  OQAM as analysed in [2]_, on the prototype of
    [1]_.  :meth:`synthesize` takes the same complex grid
    ``(..., n_symbols, M)`` as :class:`CpOfdm` (bins in natural FFT order)
    and sends each value :math:`q_{k,s}` as two real half-symbols,
    :math:`a_{k,2s} = \mathrm{Re}\,q_{k,s}` and :math:`a_{k,2s+1} =
    \mathrm{Im}\,q_{k,s}`, the second one ``M/2`` samples later.
    :meth:`analyze` returns the complex grid again, so one complex symbol
    takes M samples, like CP-OFDM without a prefix.  With :math:`h` the
    unit-energy prototype (``K M`` taps, :func:`phydyas_prototype`), the
    signal is

    .. math::

        x[t] = \sum_{n} \sum_{k=0}^{M-1} a_{k,n}\,\theta_{k,n}\,
               h[t - nM/2]\, e^{2\pi i k (t - nM/2 - KM/2)/M},
        \qquad \theta_{k,n} = j^{\,k+n},

    with :math:`n` the half-symbol index counted from symbol 0 of the
    stream (``start_symbol`` carries it on).  The receiver's decision is

    .. math::

        \hat a_{k,n} = \mathrm{Re}\Big(\theta_{k,n}^*\sum_t x[t]\,
        h[t - nM/2]\, e^{-2\pi i k (t - nM/2 - KM/2)/M}\Big).

    The basis pulses are orthogonal in the real field only: the complex
    inner product of two of them is (nearly) a pure imaginary number, the
    *intrinsic interference* (:meth:`transmultiplexer_response`).  The
    PHYDYAS design is near-perfect: the real parts leave a residual floor,
    :attr:`interference_floor_db` (about -66 dB for K = 4, -43 dB for K
    = 3).  Average power equals that of unitary OFDM without a prefix:
    :math:`\sum_k E|q_k|^2 / M` per sample.

    **Overlap and latency.**  Half-symbol pulses are K M samples long, so
    :attr:`tail` is :math:`(K - 1/2) M`: :meth:`synthesize` of S symbols
    returns :math:`S M + (K - 1/2) M` samples and :meth:`analyze` takes
    that many.  The generic streaming objects therefore stream exactly;
    a receiver can decide symbol ``s`` only :attr:`latency` = :math:`(K -
    1/2) M` samples after the end of its nominal slot ``[s M, (s+1) M)``.

    **Channel.**  A channel that is flat over each subcarrier and slow over
    :math:`K` symbols multiplies the complex matched-filter output by its
    gain :math:`H_k`, intrinsic interference included; the one-tap
    equaliser must therefore divide *before* the real part is taken:
    ``analyze(x, channel=H)`` does that.  Pilots of the plan get no special
    treatment (an FBMC pilot needs its neighbours' interference cancelled
    or known): :meth:`synthesize` sends the grid as given.

    **Cost.**  Per complex symbol and per direction: one M-point FFT
    (both half-symbols share it through the symmetry
    :math:`c_k^* = (-1)^k c_k` of the bin phases, see
    ``_kernel/_numpy_fbmc.py``) and :math:`2 K M` real-by-complex
    multiply-adds of the polyphase network; the equalised receive path
    takes two FFTs.  The C kernel does the filtering inside each symbol's
    transform pass and adds straight into the output.

    References
    ----------
    .. [1] M. Bellanger, "FBMC physical layer: a primer", PHYDYAS project,
       2010.
    .. [2] P. Siohan, C. Siclet, N. Lacaille, "Analysis and design of
       OFDM/OQAM systems based on filterbank theory", IEEE Trans. Signal
       Processing 50(5), 2002.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> plan = tonebank.CarrierPlan.centered(64, 48)
    >>> fbmc = tonebank.FbmcOqam(plan, overlap=4)
    >>> rng = np.random.default_rng(5)
    >>> qpsk = (rng.choice([-1, 1], (10, 48)) + 1j * rng.choice([-1, 1], (10, 48))) / np.sqrt(2)
    >>> grid = plan.place(qpsk.ravel())
    >>> x = fbmc.synthesize(grid)
    >>> x.shape, fbmc.n_samples(10) + fbmc.tail
    ((864,), 864)
    >>> rx_data, _ = plan.take(fbmc.analyze(x))
    >>> bool(tonebank.metrics.evm(rx_data, qpsk.ravel(), unit="db") < -60)
    True
    """

    _transient = ("_runners", "_fast", "_lock")

    def __init__(self, plan: CarrierPlan, *, overlap: int = 4):
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        self._overlap = _check_overlap(overlap)
        m = plan.n_fft
        if m % 2 or m < 2:
            raise ValueError(f"plan.n_fft must be even for FBMC/OQAM (half-symbols are "
                             f"n_fft/2 samples apart), got {m}")
        if any(plan.cp_lengths):
            raise ValueError(
                f"plan has cyclic prefix lengths {plan.cp_lengths}, but FBMC/OQAM uses no "
                "prefix; pass plan.replace(cp_length=0)")
        self._plan = plan
        self._m = m
        self._tail = self._overlap * m - m // 2
        proto = phydyas_prototype(m, self._overlap)
        proto.flags.writeable = False
        self._prototype = proto
        self._runners: dict = {}
        self._lock = threading.Lock()
        self._response = None

    # ---- properties ----------------------------------------------------------

    @property
    def plan(self) -> CarrierPlan:
        """The :class:`~tonebank.CarrierPlan` the waveform carries."""
        return self._plan

    @property
    def overlap(self) -> int:
        """The overlap factor K (prototype length in symbols)."""
        return self._overlap

    @property
    def prototype(self) -> np.ndarray:
        """The unit-energy prototype taps, shape ``(K * n_fft,)``, read-only."""
        return self._prototype

    @property
    def tail(self) -> int:
        """The ringing of a burst past its last symbol's slot, ``(K - 1/2) n_fft`` samples."""
        return self._tail

    @property
    def latency(self) -> int:
        """The wait after a symbol's slot until it can be decided, ``(K - 1/2) n_fft`` samples."""
        return self._tail

    def n_samples(self, n_symbols: int, start_symbol: int = 0) -> int:
        """Samples that ``n_symbols`` symbols take (``n_symbols * n_fft``), tail not counted."""
        n_symbols = integer(n_symbols, "n_symbols", minimum=0)
        integer(start_symbol, "start_symbol", minimum=0)
        return n_symbols * self._m

    def __repr__(self):
        return f"FbmcOqam({self._plan!r}, overlap={self._overlap})"

    # ---- the transmultiplexer ------------------------------------------------

    def transmultiplexer_response(self, subcarriers: int = 1,
                                  half_symbols: int | None = None) -> np.ndarray:
        r"""The interference a symbol sees from its time-frequency neighbours.

        Entry ``[dk + subcarriers, dn + half_symbols]`` is the complex
        matched-filter output at subcarrier 0, half-symbol 0 (after the
        phase :math:`\theta^*`, before the real part) when the only thing
        sent is a real 1 at subcarrier ``dk``, half-symbol ``dn``.  The
        centre is 1; the real parts elsewhere are the residual interference
        (the near-perfect reconstruction floor), the imaginary parts the
        intrinsic interference that taking the real part removes.  At other
        positions the magnitudes are the same and only signs change.

        Parameters
        ----------
        subcarriers : int, default 1
            Neighbours on each side in frequency.
        half_symbols : int, optional
            Neighbours on each side in time, in half-symbols (M/2 samples);
            default ``2 K - 1``, all that overlap.

        Returns
        -------
        ndarray
            Shape ``(2 * subcarriers + 1, 2 * half_symbols + 1)``,
            complex128; rows are
            frequency offsets -subcarriers .. +subcarriers, columns time
            offsets.

        Raises
        ------
        TypeError, ValueError
            Negative or non-integer counts, or ``subcarriers >= n_fft / 2``.

        Notes
        -----
        Computed from the definition (inner products of the basis pulses in
        the class Notes), independently of the kernel; cost
        :math:`O(K M)` per entry.

        Examples
        --------
        >>> import numpy as np, tonebank
        >>> fbmc = tonebank.FbmcOqam(tonebank.CarrierPlan.centered(32, 24), overlap=4)
        >>> table = fbmc.transmultiplexer_response(1, 2)
        >>> np.round(np.abs(table), 3)
        array([[0.125, 0.206, 0.239, 0.206, 0.125],
               [0.   , 0.564, 1.   , 0.564, 0.   ],
               [0.125, 0.206, 0.239, 0.206, 0.125]])
        """
        m, kk = self._m, self._overlap
        nk = integer(subcarriers, "subcarriers", minimum=0)
        if nk >= m // 2:
            raise ValueError(f"subcarriers must be below n_fft/2 = {m // 2}, got {nk}")
        nn = 2 * kk - 1 if half_symbols is None else integer(half_symbols, "half_symbols",
                                                             minimum=0)
        h = self._prototype
        t = np.arange(kk * m)
        table = np.zeros((2 * nk + 1, 2 * nn + 1), np.complex128)
        # Receiver pulse at k = 0, n = 0 (theta = 1): h[t] * exp(2 pi i 0 ...).
        for row, dk in enumerate(range(-nk, nk + 1)):
            for col, dn in enumerate(range(-nn, nn + 1)):
                shift = dn * (m // 2)
                lo, hi = max(0, shift), min(kk * m, kk * m + shift)
                if lo >= hi:
                    continue
                tt = t[lo:hi]
                pulse = (h[tt - shift] * np.exp(2j * np.pi * dk * (tt - shift - kk * m / 2) / m)
                         * 1j ** ((dk + dn) % 4))
                table[row, col] = np.sum(h[tt] * pulse)
        return table

    @property
    def interference_floor_db(self) -> float:
        r"""Power of the residual (real-part) interference, in dB relative to the symbol.

        :math:`10\log_{10}\sum_{(\Delta k, \Delta n) \ne 0}
        (\mathrm{Re}\,T_{\Delta k, \Delta n})^2` over the full time overlap
        and :math:`\pm 2` subcarriers (beyond, the prototype's spectrum no
        longer overlaps), with :math:`T` the
        :meth:`transmultiplexer_response`: the error power per real
        half-symbol of unit power when every position carries independent
        data, i.e. the EVM floor of an ideal channel.
        """
        if self._response is None:
            table = self.transmultiplexer_response(min(2, self._m // 2 - 1))
            centre = (table.shape[0] // 2, table.shape[1] // 2)
            power = np.sum(table.real ** 2) - table.real[centre] ** 2
            self._response = float(10 * np.log10(power))
        return self._response

    # ---- kernel plumbing -----------------------------------------------------

    def _runner(self, dtype: np.dtype):
        impl = _kernel.active()
        key = (impl.NAME, dtype.char)
        runner = self._runners.get(key)
        if runner is None:
            with self._lock:
                runner = self._runners.get(key)
                if runner is None:
                    runner = impl.fbmc_runner(self._m, self._overlap, dtype, self._prototype)
                    self._runners[key] = runner
        return runner

    def _start(self, start_symbol) -> int:
        if type(start_symbol) is int and start_symbol >= 0:
            return start_symbol
        return integer(start_symbol, "start_symbol", minimum=0)

    def _count_symbols(self, n: int) -> int:
        m, tail = self._m, self._tail
        if n < tail or (n - tail) % m:
            whole = max(0, (n - tail) // m)
            raise ValueError(
                f"samples has {n} samples per signal, but FBMC/OQAM analysis takes "
                f"n_symbols * n_fft + tail = n_symbols * {m} + {tail} samples (the tail is "
                f"the ringing of the last symbol); the nearest valid counts are "
                f"{whole * m + tail} ({whole} symbols) and {(whole + 1) * m + tail} "
                f"({whole + 1} symbols); nothing is truncated")
        return (n - tail) // m

    # ---- one-shot ------------------------------------------------------------

    def synthesize(self, grid, *, start_symbol: int = 0) -> np.ndarray:
        """Complex grid to samples (each value as two staggered real half-symbols).

        Parameters
        ----------
        grid : array_like of complex
            Shape ``(..., n_symbols, n_fft)``.  Bins in natural FFT order;
            every bin is sent as given.
        start_symbol : int, default 0
            Index of the first symbol in the stream: its parity sets the
            half-symbol phase pattern :math:`j^n`.

        Returns
        -------
        ndarray
            Shape ``(..., n_symbols * n_fft + tail)``.  complex64 for
            complex64 (or float32) input, complex128 otherwise.

        Raises
        ------
        ValueError
            The grid has fewer than two axes or its last axis is not
            ``n_fft``.
        TypeError
            A non-numeric grid.
        """
        start = self._start(start_symbol)
        g = np.asarray(grid)
        m = self._m
        if g.ndim < 2 or g.shape[-1] != m:
            raise ValueError(f"grid must have shape (..., n_symbols, n_fft={m}), "
                             f"got {g.shape}")
        dtype = _complex_dtype(g, "grid")
        lead, n_symbols = g.shape[:-2], g.shape[-2]
        batch = math.prod(lead)
        a = np.ascontiguousarray(g.reshape(batch, n_symbols, m), dtype=dtype)
        out = np.empty((batch, n_symbols * m + self._tail), dtype=dtype)
        self._runner(dtype).synthesize(a, start, out)
        return out.reshape(lead + (out.shape[-1],))

    def analyze(self, samples, *, start_symbol: int = 0, channel=None) -> np.ndarray:
        r"""Samples to the complex grid (the inverse of :meth:`synthesize`).

        Parameters
        ----------
        samples : array_like of complex
            Shape ``(..., n_symbols * n_fft + tail)``.  The burst with the
            ringing of its last symbol.
        start_symbol : int, default 0
            Index of the first symbol in the stream (its parity matters).
        channel : array_like of complex, optional
            Per-subcarrier channel gains for the one-tap equaliser,
            broadcastable to ``(..., n_symbols, n_fft)`` (typically shape
            ``(n_fft,)``), all finite and non-zero (put 1 on unused bins).
            Each half-symbol's complex matched-filter output is divided by
            the gain *before* the real part is taken, as OQAM requires.

        Returns
        -------
        ndarray
            Shape ``(..., n_symbols, n_fft)``.  ``Re`` holds the first
            half-symbol's decisions, ``Im`` the second's.  complex64 for
            complex64 (or float32) input, complex128 otherwise.

        Raises
        ------
        ValueError
            A sample count that is not ``n_symbols * n_fft + tail`` (the
            message gives the nearest valid counts), a channel that does
            not broadcast or has zero or non-finite gains.
        TypeError
            Non-numeric input.

        Notes
        -----
        Without ``channel`` one FFT per symbol (both real decisions come
        out of it packed as real and imaginary part); with it, two, since
        both complex outputs are needed:
        :math:`\hat a = \mathrm{Re}(d / H_k)`.
        """
        start = self._start(start_symbol)
        x = np.asarray(samples)
        if x.ndim == 0:
            raise ValueError("samples must have at least one axis (time)")
        dtype = _complex_dtype(x, "samples")
        lead = x.shape[:-1]
        batch = math.prod(lead)
        n_symbols = self._count_symbols(x.shape[-1])
        x = np.ascontiguousarray(x.reshape(batch, x.shape[-1]), dtype=dtype)
        m = self._m
        if channel is None:
            grid = np.empty((batch, n_symbols, m), dtype=dtype)
            self._runner(dtype).analyze(x, start, grid, False)
            return grid.reshape(lead + (n_symbols, m))
        gains = np.asarray(channel)
        _complex_dtype(gains, "channel")
        want = lead + (n_symbols, m)
        try:
            shape = np.broadcast_shapes(gains.shape, want)
        except ValueError:
            raise ValueError(f"channel of shape {gains.shape} does not broadcast to {want} "
                             "(..., n_symbols, n_fft)") from None
        if shape != want:
            raise ValueError(f"channel of shape {gains.shape} would enlarge the batch shape "
                             f"{lead} of samples")
        if not np.all(np.isfinite(gains)) or np.any(gains == 0):
            raise ValueError("channel must hold finite, non-zero gains (put 1 on unused "
                             "subcarriers); got zero or non-finite values")
        raw = np.empty((batch, n_symbols, 2, m), dtype=dtype)
        self._runner(dtype).analyze(x, start, raw, True)
        raw = raw.reshape(want[:-1] + (2, m))
        inverse = (1 / np.broadcast_to(gains, want).astype(np.complex128))[..., None, :]
        eq = (raw * inverse).real
        grid = np.empty(want, dtype=dtype)
        grid.real = eq[..., 0, :]
        grid.imag = eq[..., 1, :]
        return grid
