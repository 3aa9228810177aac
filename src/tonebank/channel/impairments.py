r"""Receiver impairments on sampled signals, and a chain of stages.

Each impairment is a small object configured once and then run on
signals, in the manner of :class:`tonebank.channel.TappedDelayLine`:

* ``filter(samples, *, start_sample=0)`` passes a whole signal (one
  shot, no state kept; the samples before ``start_sample`` are taken as
  zero);
* ``apply(samples)`` passes the next chunk of a stream: chunks of any
  lengths give, concatenated, exactly the samples (bit for bit) that
  ``filter`` gives for the whole stream; ``reset()`` starts again;
* leading axes of ``samples`` are batch (signals that all see the same
  impairment, e.g. receive branches behind one oscillator); the last axis
  is samples; complex64 (or float32) input gives complex64, anything else
  complex128.

:class:`SignalChain` runs channel models and impairments in order with
the same protocol.

The impairments
---------------
Sample :math:`n` of the stream (counted from the first sample passed to
``apply``, or from ``start_sample``), sample rate :math:`f_s`:

* :class:`FrequencyOffset`, carrier frequency offset :math:`\Delta f`:
  :math:`y[n] = x[n]\, e^{j(2\pi \Delta f n / f_s + \theta_0)}`; in
  subcarrier spacings, :math:`\epsilon = \Delta f / \Delta_{sc}`.
* :class:`PhaseNoise`, oscillator phase noise as a Wiener process
  (free-running oscillator with a Lorentzian spectrum of 3-dB full width
  :math:`\beta`, the *linewidth*):
  :math:`y[n] = x[n]\, e^{j\phi[n]}`, :math:`\phi[0] = 0`,
  :math:`\phi[n+1] = \phi[n] + w_n`, :math:`w_n \sim
  \mathcal{N}(0, 2\pi\beta / f_s)` independent.  The increments are drawn
  in blocks of 4096 samples from seeds derived from ``rng``, so a path
  is a function of the sample index: the same seed gives the same path
  however the stream is cut.  :meth:`tonebank.channel.PhaseNoise.from_psd` makes instead a
  stationary Gaussian phase with the spectrum of a single-sideband
  phase-noise mask :math:`\mathcal{L}(f)` in dBc/Hz.
* :class:`IqImbalance`, the mirror-image model :math:`y = \mu x + \nu
  x^*` of a receiver whose quadrature branch has gain :math:`g` and
  phase error :math:`\varphi` relative to the in-phase branch,
  :math:`y = \Re x + j g (\Im x \cos\varphi - \Re x \sin\varphi)`, i.e.
  :math:`\mu = (1 + g e^{-j\varphi})/2`, :math:`\nu = (1 - g
  e^{j\varphi})/2`.  The image rejection ratio is
  :math:`|\mu|^2/|\nu|^2`.
* :class:`DcOffset`: :math:`y[n] = x[n] + d`.
* :class:`TimingOffset`, a delay of :math:`d \ge 0` samples (whole or
  fractional): :math:`y[n] = x(n - d - D)`, where :math:`D`
  (``latency_samples``) is 0 when :math:`d` is whole or
  :math:`d \ge L/2 - 1` and otherwise the look-ahead the interpolator
  needs to stay causal.
* :class:`SamplingClockOffset`: the receiver's sample clock runs
  :math:`\delta` = ``ppm`` :math:`\cdot 10^{-6}` fast (negative: slow),
  so it samples the transmitted signal at :math:`t_n = n / (1 + \delta)`
  transmit samples: :math:`y[n] = x(n/(1 + \delta) - L/2)`, the fixed
  delay :math:`L/2` (``latency_samples``) keeping the interpolator
  causal.  Output sample :math:`n` is produced with the chunk that holds
  input sample :math:`\lfloor n/(1+\delta) \rfloor`, so a chunk of
  :math:`N` samples gives about :math:`N (1 + \delta)` samples, not
  exactly :math:`N`.

*The interpolator* (:class:`TimingOffset`, :class:`SamplingClockOffset`)
is the Kaiser-windowed sinc of :class:`tonebank.channel.TappedDelayLine`
(same lengths :math:`L` and window parameters, see
:mod:`tonebank.channel.tdl`): :math:`x(u) \approx \sum_m x[m]\,
\mathrm{sinc}(m - u)\, w(m - u)` over the :math:`L` samples nearest to
:math:`u`; for ``interp_length=32`` (the default) its response departs
from the ideal delay by at most -94 dB over :math:`|f| \le 0.4 f_s`.
:class:`TimingOffset` runs through the kernel op ``channel_fir`` (C or
numpy); :class:`SamplingClockOffset` forms a new set of :math:`L` taps
for every output sample in numpy, by linear interpolation in a table of
the interpolator at 4096 fractional phases (within -140 dB of the exact
taps).
"""

from __future__ import annotations

import cmath
import copy
import functools
import math
import numbers

import numpy as np

from .. import _kernel
from .._checks import generator, integer, plan_of, real
from .tdl import _KAISER_BETA, _check_stream_chunk, _signal_dtype

__all__ = [
    "DcOffset",
    "FrequencyOffset",
    "Impairment",
    "IqImbalance",
    "PhaseNoise",
    "SamplingClockOffset",
    "SignalChain",
    "TimingOffset",
]

_PN_BLOCK = 4096
_MAX_PPM = 1e5


def _interp_length(value) -> int:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Integral) \
            or int(value) not in _KAISER_BETA:
        raise ValueError(f"interp_length={value!r} is not allowed; use one of "
                         f"{sorted(_KAISER_BETA)}")
    return int(value)


def _sinc_taps(frac: np.ndarray, length: int) -> np.ndarray:
    """Kaiser-windowed sinc taps for ``x(k + half - 1 + frac)`` from ``x[k .. k + L - 1]``.

    Row ``i`` weighs samples ``j = 0 .. L-1`` at offsets ``x_j = j - (half -
    1) - frac[i]`` from the instant (``0 <= frac < 1``); the same window
    as tdl.py.  Shape ``(len(frac), L)``, float64.

    Every value is computed element by element with operations that round
    the same way wherever the element sits in the array (``sin(pi x_j) =
    -(-1)^m sin(pi frac)`` from one complex exponential, which numpy
    evaluates without SIMD variants), so a stream cut anywhere gets the
    same taps.
    """
    from scipy.special import i0

    half = length // 2
    beta = _KAISER_BETA[length]
    whole = np.arange(length, dtype=np.float64) - (half - 1)               # m_j
    x = whole[None, :] - frac[:, None]
    # sin(pi frac) = sin(pi (1 - frac)): take the smaller argument (1 - frac is
    # exact for frac >= 1/2) so that the value stays accurate near whole samples
    near = np.where(frac > 0.5, 1.0 - frac, frac)
    sin_frac = np.exp(1j * np.pi * near).imag                              # sin(pi frac)
    sign = np.where(whole % 2 == 0, -1.0, 1.0)                             # -(-1)^m
    numerator = sign[None, :] * sin_frac[:, None]
    with np.errstate(invalid="ignore", divide="ignore"):
        sinc = np.where(x == 0.0, 1.0, numerator / (np.pi * x))
    window = i0(beta * np.sqrt(np.clip(1.0 - (x / half) ** 2, 0.0, None))) / i0(beta)
    return sinc * window


#: Fractional phases per sample of the tabulated interpolator (SamplingClockOffset).
_PHASES = 4096


@functools.lru_cache(maxsize=None)
def _tap_table(length: int) -> np.ndarray:
    """``_sinc_taps`` at fractions ``0, 1/P, ..., 1`` (``P = _PHASES``), read-only.

    Linear interpolation between rows departs from the exact taps by at
    most about ``(pi / P)^2 / 8`` per tap (the kernel's second derivative
    is at most about ``pi^2``): below -140 dB for ``P = 4096``, far under the
    interpolator's own error.
    """
    table = _sinc_taps(np.arange(_PHASES + 1) / _PHASES, length)
    table.flags.writeable = False
    return table


def _table_taps(frac: np.ndarray, length: int) -> np.ndarray:
    """Taps for fractions ``frac`` by linear interpolation in :func:`_tap_table`."""
    table = _tap_table(length)
    scaled = frac * _PHASES
    row = np.minimum(np.floor(scaled).astype(np.int64), _PHASES - 1)
    t = (scaled - row)[:, None]
    low = table[row]
    return low + t * (table[row + 1] - low)


def _cmul(x: np.ndarray, z: np.ndarray) -> np.ndarray:
    """``x * z`` for complex arrays (same dtype) in separate real operations.

    numpy's complex multiply may take SIMD paths with fused multiply-adds
    for some elements and not others, depending on where they sit in the
    array; separate real multiplies and adds round every element the same
    way, so chunks of a stream stay bit-identical to one call.
    """
    out = np.empty(np.broadcast_shapes(x.shape, z.shape), dtype=x.dtype)
    out.real = x.real * z.real - x.imag * z.imag
    out.imag = x.real * z.imag + x.imag * z.real
    return out


def _phasor(phase: np.ndarray, dtype: np.dtype) -> np.ndarray:
    """``exp(j phase)`` in float64, then in the signal's precision."""
    return np.exp(1j * phase).astype(dtype, copy=False)


class Impairment:
    """Base of the impairments: the ``filter`` / ``apply`` / ``reset`` protocol.

    Subclasses implement ``_run(x, start, state) -> (y, state)`` on an
    array of shape ``(..., n)`` already in its output dtype.  Not meant
    to be created directly.

    Examples
    --------
    >>> from tonebank.channel import DcOffset, Impairment
    >>> isinstance(DcOffset(0.1), Impairment)
    True
    """

    def __init__(self):
        self.reset()

    # ---- protocol ------------------------------------------------------------

    @staticmethod
    def _prepare(samples) -> tuple[np.ndarray, tuple, np.dtype]:
        arr = np.asarray(samples)
        dtype = _signal_dtype(arr)
        if arr.ndim == 0:
            raise ValueError("samples must have at least one axis (the samples); got a "
                             "0-d value")
        return arr.astype(dtype, copy=False), arr.shape[:-1], dtype

    def filter(self, samples, *, start_sample=0) -> np.ndarray:
        """Pass a whole signal through the impairment (one shot, no state).

        Parameters
        ----------
        samples : array_like of complex
            Shape ``(..., n)``; leading axes are signals that all see the
            same impairment.  Real input is taken as complex; complex64
            (or float32) gives complex64, anything else complex128.
        start_sample : int, default 0
            Stream instant of ``samples[..., 0]``; earlier samples are
            taken as zero.

        Returns
        -------
        numpy.ndarray
            Shape ``(..., m)`` with ``m = n`` for every impairment except
            :class:`SamplingClockOffset` (see there).

        Raises
        ------
        TypeError
            ``samples`` is not numeric.
        ValueError
            ``samples`` is 0-d or ``start_sample < 0``.

        Examples
        --------
        >>> from tonebank.channel import DcOffset
        >>> DcOffset(1j).filter([1.0, 2.0])
        array([1.+1.j, 2.+1.j])
        """
        start = integer(start_sample, "start_sample", minimum=0)
        x, _, _ = self._prepare(samples)
        return self._run(x, start, None)[0]

    def apply(self, samples) -> np.ndarray:
        """Pass the next chunk of a stream through the impairment.

        Consecutive calls continue the stream: chunks of any lengths give
        exactly the samples :meth:`filter` gives for their concatenation.

        Parameters
        ----------
        samples : array_like of complex
            Shape ``(..., n)``; the leading shape and precision must stay
            the same for the whole stream.

        Returns
        -------
        numpy.ndarray
            Shape ``(..., m)``, as :meth:`filter`.

        Raises
        ------
        TypeError
            ``samples`` is not numeric.
        ValueError
            ``samples`` is 0-d, or its leading shape or precision differs
            from the earlier chunks of the stream.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.channel import FrequencyOffset
        >>> cfo = FrequencyOffset(100.0, 8000.0)
        >>> x = np.ones(10, dtype=complex)
        >>> y = np.concatenate([cfo.apply(x[:3]), cfo.apply(x[3:])])
        >>> bool(np.array_equal(y, cfo.filter(x)))
        True
        """
        x, lead, dtype = self._prepare(samples)
        _check_stream_chunk(self._lead, lead, dtype)
        y, self._state = self._run(x, self._position, self._state)
        self._lead = (lead, dtype)
        self._position += x.shape[-1]
        return y

    def reset(self) -> None:
        """Restart the stream of :meth:`apply` at sample 0 (the configuration is kept)."""
        self._position = 0
        self._state = None
        self._lead = None

    @property
    def position(self) -> int:
        """Input samples consumed by :meth:`apply` since construction or :meth:`reset`."""
        return self._position

    def _output_start(self, start: int) -> int:
        """Output stream index of the first output for input stream index ``start``."""
        return start

    def _run(self, x, start, state):  # pragma: no cover - abstract
        raise NotImplementedError


class FrequencyOffset(Impairment):
    r"""Carrier frequency offset: a rotation at a fixed frequency.

    Parameters
    ----------
    offset_hz : float
        Frequency offset :math:`\Delta f` in Hz, ``|offset_hz| <
        sample_rate / 2``; positive moves the signal up.
    sample_rate : float
        Sample rate in Hz, > 0.
    phase_rad : float, default 0.0
        Phase :math:`\theta_0` of the rotation at stream sample 0.

    Raises
    ------
    TypeError
        An argument is not a real number.
    ValueError
        ``sample_rate <= 0``, or ``|offset_hz| >= sample_rate / 2``.

    See Also
    --------
    tonebank.channel.cfo_snr_loss_db : SNR loss of an uncorrected offset.

    Notes
    -----
    :math:`y[n] = x[n]\, e^{j(2\pi \Delta f n / f_s + \theta_0)}`; the
    phase is formed from :math:`(n \Delta f / f_s) \bmod 1` in float64
    for every sample (one complex exponential per sample), so chunks of
    a stream give bit-identical results.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.channel import FrequencyOffset
    >>> cfo = FrequencyOffset(250.0, 1000.0)
    >>> np.round(cfo.filter(np.ones(4)), 12)
    array([ 1.+0.j,  0.+1.j, -1.+0.j, -0.-1.j])
    """

    def __init__(self, offset_hz, sample_rate, *, phase_rad=0.0):
        fs = real(sample_rate, "sample_rate", minimum=0.0, allow_equal_min=False)
        f = real(offset_hz, "offset_hz")
        if not abs(f) < fs / 2:
            raise ValueError(f"offset_hz={offset_hz!r} is not allowed; need |offset_hz| < "
                             f"sample_rate / 2 = {fs / 2:g} Hz")
        self._f = f
        self._fs = fs
        self._phase0 = real(phase_rad, "phase_rad")
        super().__init__()

    @classmethod
    def in_spacings(cls, epsilon, target, *, phase_rad=0.0) -> "FrequencyOffset":
        r"""An offset of ``epsilon`` subcarrier spacings for a plan or waveform.

        Parameters
        ----------
        epsilon : float
            Offset :math:`\epsilon` in subcarrier spacings (fractional
            and whole parts alike).
        target : tonebank.CarrierPlan or tonebank.Waveform
            A plan with a ``sample_rate`` (spacing ``sample_rate /
            n_fft``, signal at ``sample_rate``), or a waveform with
            ``plan`` and ``fft_size`` (signal at the plan's rate times
            ``fft_size / plan.n_fft``).
        phase_rad : float, default 0.0
            Phase at stream sample 0.

        Returns
        -------
        FrequencyOffset

        Raises
        ------
        TypeError
            ``target`` is neither a plan nor a waveform.
        ValueError
            The plan has no sample rate, or the offset reaches half the
            sample rate.

        Examples
        --------
        >>> import tonebank
        >>> from tonebank.channel import FrequencyOffset
        >>> plan = tonebank.CarrierPlan.centered(64, 52, cp_length=16, sample_rate=20e6)
        >>> FrequencyOffset.in_spacings(0.1, plan).offset_hz
        31250.0
        """
        eps = real(epsilon, "epsilon")
        fs, spacing = _plan_rates(target)
        return cls(eps * spacing, fs, phase_rad=phase_rad)

    @property
    def offset_hz(self) -> float:
        """The frequency offset in Hz."""
        return self._f

    @property
    def sample_rate(self) -> float:
        """Sample rate in Hz."""
        return self._fs

    def __repr__(self):
        return f"FrequencyOffset({self._f:g}, {self._fs:g}, phase_rad={self._phase0:g})"

    def _run(self, x, start, state):
        n = x.shape[-1]
        cycles = np.mod((start + np.arange(n, dtype=np.float64)) * (self._f / self._fs), 1.0)
        return _cmul(x, _phasor(2 * np.pi * cycles + self._phase0, x.dtype)), None


def _plan_rates(target) -> tuple[float, float]:
    """``(signal sample rate, subcarrier spacing)`` of a plan or waveform."""
    plan, oversampling = plan_of(target)
    if plan.sample_rate is None:
        raise ValueError("target's plan has no sample_rate; give the plan a sample_rate or "
                         "use FrequencyOffset(offset_hz, sample_rate)")
    return plan.sample_rate * oversampling, plan.sample_rate / plan.n_fft


class PhaseNoise(Impairment):
    r"""Oscillator phase noise as a Wiener process (random walk of the phase).

    Parameters
    ----------
    linewidth_hz : float
        3-dB full width :math:`\beta` of the oscillator's Lorentzian
        spectrum in Hz, >= 0 (0: no phase noise).
    sample_rate : float
        Sample rate in Hz, > 0.
    rng : numpy.random.Generator or int, optional
        Source of the path (a key is drawn once, at construction).

    Raises
    ------
    TypeError
        An argument has the wrong type.
    ValueError
        ``linewidth_hz < 0`` or ``sample_rate <= 0``.

    See Also
    --------
    from_psd : stationary phase noise following a phase-noise mask.
    tonebank.channel.wiener_ici_power, tonebank.channel.wiener_cpe_step_variance :
        what the path does to OFDM symbols.

    Notes
    -----
    :math:`\phi[n+1] = \phi[n] + w_n`, :math:`w_n \sim \mathcal{N}(0,
    2\pi\beta/f_s)`, :math:`\phi[0] = 0`; then
    :math:`E[(\phi[n+k] - \phi[n])^2] = 2\pi\beta k / f_s`, the
    phase diffusion of an oscillator whose spectrum is Lorentzian with
    full width :math:`\beta` at half maximum (the phase-diffusion model
    of a free-running oscillator; e.g. A. G. Armada, "Understanding the
    effects of phase noise in OFDM", IEEE Trans. Broadcast. 47(2), 2001;
    from memory).  Block :math:`b` (samples :math:`4096 b \dots 4096 b +
    4095`) draws its increments from a generator seeded by the key and
    :math:`b`, and the phase at each block start is cached, so any part
    of the path is reproducible without replaying a stream.  Cost: one
    normal draw, one cumulative sum and one complex exponential per
    sample.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.channel import PhaseNoise
    >>> pn = PhaseNoise(100.0, 1e6, rng=4)
    >>> phase = pn.phase(np.arange(5000))
    >>> phase.shape, float(phase[0])
    ((5000,), 0.0)
    >>> y = np.concatenate([pn.apply(np.ones(1000)), pn.apply(np.ones(4000))])
    >>> bool(np.array_equal(y, np.exp(1j * phase)))
    True
    """

    def __init__(self, linewidth_hz, sample_rate, *, rng=None):
        fs = real(sample_rate, "sample_rate", minimum=0.0, allow_equal_min=False)
        self._beta = real(linewidth_hz, "linewidth_hz", minimum=0.0)
        self._fs = fs
        self._sigma = math.sqrt(2 * math.pi * self._beta / fs)
        self._shaping = None             # FIR spectrum of the PSD mode (see from_psd)
        self._mask = None
        gen = generator(rng)
        self._key = [int(v) for v in gen.integers(0, 2**32, size=4)]
        self._starts = [0.0]             # phase at the start of blocks 0, 1, ...
        self._blocks = {}
        super().__init__()

    @classmethod
    def from_psd(cls, offsets_hz, level_dbc_hz, sample_rate, *, n_taps=4096,
                 rng=None) -> "PhaseNoise":
        r"""Stationary phase noise following a single-sideband phase-noise mask.

        Parameters
        ----------
        offsets_hz : array_like of float
            Shape ``(m,)``.  Frequency offsets from the carrier in Hz,
            increasing, > 0 and <= ``sample_rate / 2``.
        level_dbc_hz : array_like of float
            Shape ``(m,)``.  Single-sideband phase noise
            :math:`\mathcal{L}(f)` at those offsets in dBc/Hz.
        sample_rate : float
            Sample rate in Hz, > 0.
        n_taps : int, default 4096
            Length :math:`K` of the shaping filter, a power of two from 64
            to 4096: its frequency resolution :math:`f_s/K` is the lowest
            offset the path reproduces.
        rng : numpy.random.Generator or int, optional
            Source of the path.

        Returns
        -------
        PhaseNoise
            With :attr:`linewidth_hz` None.

        Raises
        ------
        TypeError
            An argument has the wrong type.
        ValueError
            Offsets not increasing, not positive or above half the
            sample rate, levels not finite or of another length, or an
            unsupported ``n_taps``.

        Notes
        -----
        The phase is Gaussian and stationary with the two-sided power
        spectral density :math:`S_\phi(f) = 10^{\mathcal{L}(|f|)/10}`
        rad²/Hz (the small-angle reading of :math:`\mathcal{L}`), the mask
        interpolated linearly in log frequency and dB between the given
        points and held flat beyond them (below the first offset down to
        DC, above the last up to :math:`f_s/2`).  White Gaussian noise of
        unit variance (drawn in seeded blocks of 4096 samples, as for the
        Wiener path) is filtered by the :math:`K`-tap FIR whose DFT is
        :math:`\sqrt{f_s S_\phi(k f_s / K)}` (zero phase, made causal by
        a circular shift of :math:`K/2`), one block at a time by
        overlap-save with a fixed FFT size, so every block is computed the
        same way whatever is asked.  The phase variance is :math:`(f_s/K)
        \sum_k S_\phi(k f_s/K) \approx \int S_\phi(f)\,df`.  Cost: two FFTs
        of 8192 points per 4096 samples, plus a complex exponential per
        sample.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.channel import PhaseNoise
        >>> pn = PhaseNoise.from_psd([1e3, 1e4, 1e5], [-80.0, -90.0, -110.0], 1e6, rng=3)
        >>> pn.phase(np.arange(3)).shape, pn.linewidth_hz
        ((3,), None)
        """
        fs = real(sample_rate, "sample_rate", minimum=0.0, allow_equal_min=False)
        try:
            f = np.asarray(offsets_hz, dtype=np.float64)
            level = np.asarray(level_dbc_hz, dtype=np.float64)
        except (TypeError, ValueError):
            raise TypeError(f"offsets_hz and level_dbc_hz must be sequences of real numbers; "
                            f"got {offsets_hz!r} and {level_dbc_hz!r}") from None
        if f.ndim != 1 or f.size < 1 or level.shape != f.shape:
            raise ValueError(f"offsets_hz and level_dbc_hz must be 1-D of the same length >= 1; "
                             f"got shapes {f.shape} and {level.shape}")
        if not (np.all(np.isfinite(f)) and np.all(np.isfinite(level))):
            raise ValueError("offsets_hz and level_dbc_hz must be finite")
        if f[0] <= 0 or np.any(np.diff(f) <= 0) or f[-1] > fs / 2:
            raise ValueError(f"offsets_hz={offsets_hz!r} is not allowed; need increasing "
                             f"offsets with 0 < offset <= sample_rate / 2 = {fs / 2:g} Hz")
        taps = integer(n_taps, "n_taps", minimum=64, maximum=_PN_BLOCK)
        if taps & (taps - 1):
            raise ValueError(f"n_taps={n_taps!r} is not allowed; use a power of two from 64 "
                             f"to {_PN_BLOCK}")
        self = cls(0.0, fs, rng=rng)
        grid = np.abs(np.fft.fftfreq(taps, d=1.0 / fs))
        grid[0] = f[0]                                        # DC takes the first level
        log_level = np.interp(np.log(np.maximum(grid, f[0])), np.log(f), level)
        spectrum = np.sqrt(fs * 10.0 ** (log_level / 10.0))
        h = np.roll(np.fft.ifft(spectrum).real, taps // 2)
        self._shaping = np.fft.rfft(h, 2 * _PN_BLOCK)
        self._mask = (f.copy(), level.copy())
        self._beta = None
        return self

    @property
    def linewidth_hz(self) -> float | None:
        """The 3-dB full linewidth in Hz (None for a path made by :meth:`from_psd`)."""
        return self._beta

    @property
    def sample_rate(self) -> float:
        """Sample rate in Hz."""
        return self._fs

    def __repr__(self):
        if self._shaping is not None:
            return f"PhaseNoise.from_psd({len(self._mask[0])} points, {self._fs:g})"
        return f"PhaseNoise({self._beta:g}, {self._fs:g})"

    def _noise(self, block: int) -> np.ndarray:
        """Unit-variance white Gaussian noise of one block (block -1 allowed)."""
        seq = np.random.SeedSequence(self._key, spawn_key=(block + 1,))
        return np.random.default_rng(seq).standard_normal(_PN_BLOCK)

    def _increments(self, block: int) -> np.ndarray:
        return self._sigma * self._noise(block)

    def _block_phase(self, block: int) -> np.ndarray:
        """Phase at the samples of one block, float64 ``(4096,)`` (cached)."""
        hit = self._blocks.get(block)
        if hit is not None:
            return hit
        if self._shaping is not None:
            # overlap-save: blocks b-1 and b through the FIR, keep the last 4096
            pair = np.concatenate((self._noise(block - 1), self._noise(block)))
            phase = np.fft.irfft(np.fft.rfft(pair) * self._shaping, 2 * _PN_BLOCK)[_PN_BLOCK:]
        else:
            while len(self._starts) <= block:      # block starts, each once, in order
                b = len(self._starts) - 1
                self._starts.append(self._starts[b] + float(np.sum(self._increments(b))))
            steps = self._increments(block)
            phase = np.empty(_PN_BLOCK)
            phase[0] = 0.0
            np.cumsum(steps[:-1], out=phase[1:])
            phase += self._starts[block]
            if len(self._starts) == block + 1:     # the next start, as the loop would
                self._starts.append(self._starts[block] + float(np.sum(steps)))
        if len(self._blocks) >= 4:
            self._blocks.pop(next(iter(self._blocks)))
        self._blocks[block] = phase
        return phase

    def with_rng(self, rng) -> "PhaseNoise":
        """The same phase-noise process with a new, independent path.

        A link simulation draws one path per frame this way, so that
        frames do not all see the same phase trajectory.

        Parameters
        ----------
        rng : numpy.random.Generator or int
            Source of the new path's key.

        Returns
        -------
        PhaseNoise
            Same linewidth or mask and sample rate; stream position 0.

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.channel import PhaseNoise
        >>> pn = PhaseNoise(100.0, 1e6, rng=4)
        >>> other = pn.with_rng(5)
        >>> bool(np.array_equal(pn.phase(np.arange(99)), other.phase(np.arange(99))))
        False
        """
        gen = generator(rng)
        twin = copy.copy(self)
        twin._key = [int(v) for v in gen.integers(0, 2**32, size=4)]
        twin._starts = [0.0]
        twin._blocks = {}
        twin.reset()
        return twin

    def phase(self, sample_index) -> np.ndarray:
        """The phase path :math:`\\phi[n]` in radians at given stream samples.

        Parameters
        ----------
        sample_index : array_like of int
            Shape ``(n,)``.  Stream samples, >= 0.

        Returns
        -------
        numpy.ndarray
            float64, shape ``(n,)``.

        Raises
        ------
        TypeError
            ``sample_index`` holds non-integers.
        ValueError
            ``sample_index`` is not 1-D or holds negative values.

        Examples
        --------
        >>> from tonebank.channel import PhaseNoise
        >>> PhaseNoise(0.0, 1e6, rng=1).phase([0, 10, 20])
        array([0., 0., 0.])
        """
        n = np.asarray(sample_index)
        if n.ndim != 1 or (n.size and n.dtype.kind not in "iu"):
            raise TypeError(f"sample_index must be a 1-D sequence of integers; got "
                            f"{sample_index!r}")
        if n.size and n.min() < 0:
            raise ValueError(f"sample_index must be >= 0; got a minimum of {n.min()}")
        n = n.astype(np.int64)
        out = np.empty(n.size)
        if n.size == 0:
            return out
        blocks = n // _PN_BLOCK
        order = np.argsort(blocks, kind="stable")          # group the samples by block
        unique, first = np.unique(blocks[order], return_index=True)
        bounds = np.append(first, n.size)
        for i, block in enumerate(unique):
            where = order[bounds[i]:bounds[i + 1]]
            out[where] = self._block_phase(int(block))[n[where] - block * _PN_BLOCK]
        return out

    def _path(self, start: int, count: int) -> np.ndarray:
        """``phase(arange(start, start + count))`` by slicing whole blocks."""
        out = np.empty(count)
        position = start
        while position < start + count:
            block, offset = divmod(position, _PN_BLOCK)
            take = min(_PN_BLOCK - offset, start + count - position)
            out[position - start:position - start + take] = \
                self._block_phase(block)[offset:offset + take]
            position += take
        return out

    def _run(self, x, start, state):
        n = x.shape[-1]
        if (self._shaping is None and self._beta == 0.0) or n == 0:
            return x.copy(), None
        return _cmul(x, _phasor(self._path(start, n), x.dtype)), None


class IqImbalance(Impairment):
    r"""Receiver IQ gain and phase imbalance (the mirror-image model).

    Parameters
    ----------
    gain_db : float, default 0.0
        Gain of the quadrature branch relative to the in-phase branch,
        :math:`20 \log_{10} g` dB.
    phase_deg : float, default 0.0
        Phase error :math:`\varphi` of the quadrature branch in degrees,
        ``|phase_deg| < 90``.

    Raises
    ------
    TypeError
        An argument is not a real number.
    ValueError
        ``|phase_deg| >= 90``.

    See Also
    --------
    tonebank.sync.estimate_iq_imbalance : estimate and correct from a
        preamble.

    Notes
    -----
    :math:`y = \Re x + j g(\Im x \cos\varphi - \Re x \sin\varphi) = \mu x
    + \nu x^*` with :math:`\mu = (1 + g e^{-j\varphi})/2`, :math:`\nu = (1
    - g e^{j\varphi})/2` (substitute :math:`\Re x = (x + x^*)/2`,
    :math:`\Im x = (x - x^*)/2j`).  A tone at :math:`+f` leaves an image at
    :math:`-f` weaker by the image rejection ratio

    .. math::

        \mathrm{IRR} = \frac{|\mu|^2}{|\nu|^2}
        = \frac{1 + g^2 + 2 g\cos\varphi}{1 + g^2 - 2 g\cos\varphi}.

    Cost: two complex multiplies per sample.

    Examples
    --------
    >>> from tonebank.channel import IqImbalance
    >>> iq = IqImbalance(gain_db=0.5, phase_deg=2.0)
    >>> round(iq.image_rejection_db, 2)
    29.46
    """

    def __init__(self, gain_db=0.0, phase_deg=0.0):
        g_db = real(gain_db, "gain_db")
        phi_deg = real(phase_deg, "phase_deg")
        if not abs(phi_deg) < 90.0:
            raise ValueError(f"phase_deg={phase_deg!r} is not allowed; need |phase_deg| < 90")
        g = 10.0 ** (g_db / 20.0)
        phi = math.radians(phi_deg)
        self._gain_db = g_db
        self._phase_deg = phi_deg
        self._mu = (1.0 + g * cmath.exp(-1j * phi)) / 2.0
        self._nu = (1.0 - g * cmath.exp(1j * phi)) / 2.0
        super().__init__()

    @property
    def mu(self) -> complex:
        r"""Coefficient :math:`\mu` of the wanted signal."""
        return self._mu

    @property
    def nu(self) -> complex:
        r"""Coefficient :math:`\nu` of the conjugate (image) signal."""
        return self._nu

    @property
    def image_rejection_db(self) -> float:
        """Image rejection ratio in dB (``inf`` without imbalance)."""
        if self._nu == 0:
            return math.inf
        return 10.0 * math.log10(abs(self._mu) ** 2 / abs(self._nu) ** 2)

    def __repr__(self):
        return f"IqImbalance(gain_db={self._gain_db:g}, phase_deg={self._phase_deg:g})"

    def _run(self, x, start, state):
        # mu x + nu x* in real arithmetic (see _cmul for why):
        # Re y = (mu_r + nu_r) a + (nu_i - mu_i) b, Im y = (mu_i + nu_i) a + (mu_r - nu_r) b
        scalar = x.real.dtype.type          # float32 coefficients for complex64
        mu, nu = self._mu, self._nu
        a, b = x.real, x.imag
        y = np.empty_like(x)
        y.real = scalar(mu.real + nu.real) * a + scalar(nu.imag - mu.imag) * b
        y.imag = scalar(mu.imag + nu.imag) * a + scalar(mu.real - nu.real) * b
        return y, None


class DcOffset(Impairment):
    """A constant added to every sample (DC offset of a receiver).

    Parameters
    ----------
    offset : complex
        The constant :math:`d` (in the units of the signal).

    Raises
    ------
    TypeError
        ``offset`` is not a number.
    ValueError
        ``offset`` is not finite.

    Notes
    -----
    :math:`y[n] = x[n] + d`; one add per sample.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.channel import DcOffset
    >>> DcOffset(0.5 - 0.25j).filter(np.zeros(2, dtype=np.complex64))
    array([0.5-0.25j, 0.5-0.25j], dtype=complex64)
    """

    def __init__(self, offset):
        if isinstance(offset, (bool, np.bool_)) or not isinstance(offset, numbers.Number):
            raise TypeError(f"offset must be a number; got {offset!r} "
                            f"({type(offset).__name__})")
        d = complex(offset)
        if not cmath.isfinite(d):
            raise ValueError(f"offset must be finite; got {offset!r}")
        self._d = d
        super().__init__()

    @property
    def offset(self) -> complex:
        """The constant added."""
        return self._d

    def __repr__(self):
        return f"DcOffset({self._d!r})"

    def _run(self, x, start, state):
        return x + np.asarray(self._d, dtype=x.dtype), None


class TimingOffset(Impairment):
    r"""A fixed delay of whole or fractional samples (symbol timing offset).

    Parameters
    ----------
    delay_samples : float
        Delay :math:`d` in samples, >= 0.
    interp_length : {8, 16, 32, 64}, default 32
        Taps of the windowed-sinc interpolator (fractional delays only).

    Attributes
    ----------
    latency_samples : int
        Extra whole-sample delay :math:`D` that keeps the interpolator
        causal: the output is :math:`x(n - d - D)`.

    Raises
    ------
    TypeError
        An argument has the wrong type.
    ValueError
        ``delay_samples`` is negative or not finite, or
        ``interp_length`` is not one of the allowed lengths.

    Notes
    -----
    A whole delay is one tap (exact).  A fractional delay uses the
    Kaiser-windowed sinc of :mod:`tonebank.channel.tdl` over the
    ``interp_length`` samples nearest to :math:`n - d`; those reach
    :math:`L/2 - 1 - \lfloor d \rfloor` samples ahead of :math:`n`, hence
    :math:`D = \max(0, L/2 - 1 - \lfloor d \rfloor)`.  Errors over
    :math:`|f| \le 0.4 f_s`: -23, -47, -94, -150 dB for :math:`L` = 8, 16,
    32, 64 (the table of :mod:`tonebank.channel.tdl`).  Runs through the
    kernel op ``channel_fir``; cost :math:`L` complex multiply-adds per
    sample.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.channel import TimingOffset
    >>> TimingOffset(3).filter(np.arange(1.0, 6.0))
    array([0.+0.j, 0.+0.j, 0.+0.j, 1.+0.j, 2.+0.j])
    >>> TimingOffset(20.5).latency_samples, TimingOffset(2.5).latency_samples
    (0, 13)
    """

    def __init__(self, delay_samples, *, interp_length=32):
        d = real(delay_samples, "delay_samples", minimum=0.0)
        length = _interp_length(interp_length)
        whole = d == math.floor(d)
        half = length // 2
        if whole:
            taps = np.zeros(int(d) + 1)
            taps[-1] = 1.0
            latency = 0
        else:
            k = math.floor(d)
            first = k - half + 1
            latency = max(0, -first)
            taps = np.zeros(k + half + 1 + latency)
            taps[first + latency:] = _sinc_taps(np.array([d - k]), length)[0]
        self._d = d
        self._length = length
        self._latency = latency
        self._taps = taps
        self._taps.flags.writeable = False
        super().__init__()

    @property
    def delay_samples(self) -> float:
        """The delay :math:`d` in samples."""
        return self._d

    @property
    def latency_samples(self) -> int:
        """Whole samples added to the delay to keep the interpolator causal."""
        return self._latency

    @property
    def taps(self) -> np.ndarray:
        """The FIR realising the delay (read-only float64, tap ``m`` weighs ``x[n - m]``)."""
        return self._taps

    def __repr__(self):
        return f"TimingOffset({self._d:g}, interp_length={self._length})"

    def _run(self, x, start, history):
        lead = x.shape[:-1]
        n = x.shape[-1]
        lags = self._taps.size
        rows = int(np.prod(lead, dtype=np.int64))
        x2 = np.ascontiguousarray(x.reshape(rows, n))
        if history is None:
            history = np.zeros((rows, lags - 1), dtype=x.dtype)
        out = np.empty((rows, n), dtype=x.dtype)
        if n:
            taps = np.ascontiguousarray(self._taps[None, None, :], dtype=x.dtype)
            _kernel.active().channel_fir(x2, history, taps, 1, 0, out)
            if lags > 1:
                keep = max(lags - 1 - n, 0)
                history = np.ascontiguousarray(
                    np.concatenate((history[:, history.shape[1] - keep:],
                                    x2[:, max(n - (lags - 1), 0):]), axis=1))
        return out.reshape(lead + (n,)), history


class SamplingClockOffset(Impairment):
    r"""A receiver sample clock off by parts per million.

    Parameters
    ----------
    ppm : float
        Clock error :math:`\delta \cdot 10^6`; positive: the receiver's
        clock is fast (it takes more samples than were sent),
        ``|ppm| < 1e5``.
    interp_length : {8, 16, 32, 64}, default 32
        Taps of the windowed-sinc interpolator.

    Attributes
    ----------
    latency_samples : int
        The fixed delay :math:`L/2` (in transmit samples) that keeps the
        interpolator causal.

    Raises
    ------
    TypeError
        An argument has the wrong type.
    ValueError
        ``|ppm| >= 1e5`` or ``interp_length`` not allowed.

    Notes
    -----
    Output sample :math:`n` is :math:`x(t_n - L/2)`, :math:`t_n = n/(1 +
    \delta) = n - n c`, :math:`c = \delta/(1+\delta)` (the whole part
    :math:`n + \lfloor -nc \rfloor` and the fraction are formed apart,
    so the instants stay accurate to about :math:`10^{-16} n |c|`
    samples).  It needs the input up to sample :math:`\lfloor t_n
    \rfloor` and is returned with the chunk holding that sample:
    ``filter`` on :math:`N` samples from ``start_sample`` :math:`s`
    returns the outputs :math:`n` with :math:`s \le \lfloor t_n \rfloor <
    s + N` (about :math:`N(1+\delta)` of them; outputs before ``s`` are
    not returned).  Interpolator and errors as :class:`TimingOffset`.
    The taps come from a table of the interpolator at 4096 fractional
    phases per sample, interpolated linearly (within -140 dB of the exact
    taps).  Cost per output sample: :math:`L` table interpolations and
    :math:`L` complex multiply-adds (numpy; a candidate for a C kernel
    op if it becomes a bottleneck).

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.channel import SamplingClockOffset
    >>> sco = SamplingClockOffset(1000.0)
    >>> y = sco.filter(np.ones(10000))
    >>> y.shape
    (10011,)
    >>> bool(np.allclose(y[100:-100], 1.0, atol=1e-4))
    True
    """

    def __init__(self, ppm, *, interp_length=32):
        p = real(ppm, "ppm")
        if not abs(p) < _MAX_PPM:
            raise ValueError(f"ppm={ppm!r} is not allowed; need |ppm| < {_MAX_PPM:g}")
        self._ppm = p
        delta = p * 1e-6
        self._c = delta / (1.0 + delta)
        self._length = _interp_length(interp_length)
        super().__init__()

    @property
    def ppm(self) -> float:
        """The clock error in parts per million."""
        return self._ppm

    @property
    def latency_samples(self) -> int:
        """Fixed delay (transmit samples) of the interpolator."""
        return self._length // 2

    def __repr__(self):
        return f"SamplingClockOffset({self._ppm:g}, interp_length={self._length})"

    def _instants(self, n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Whole part and fraction of :math:`t_n` for output indices ``n`` (int64)."""
        drift = -(n.astype(np.float64) * self._c)
        whole = np.floor(drift)
        return n + whole.astype(np.int64), drift - whole

    def _output_start(self, start: int) -> int:
        """Smallest output index ``n`` with ``floor(t_n) >= start``."""
        guess = max(0, int(math.floor(start / (1.0 - self._c))) - 3)
        candidates = np.arange(guess, guess + 8, dtype=np.int64)
        whole, _ = self._instants(candidates)
        hit = np.nonzero(whole >= start)[0]
        if hit.size == 0:  # pragma: no cover - the guess is within 3 samples
            raise RuntimeError("internal error: no output instant found")
        return int(candidates[hit[0]])

    def _run(self, x, start, history):
        lead = x.shape[:-1]
        n_in = x.shape[-1]
        length = self._length
        half = length // 2
        rows = int(np.prod(lead, dtype=np.int64))
        x2 = x.reshape(rows, n_in)
        if history is None:
            history = np.zeros((rows, length), dtype=x.dtype)
        padded = np.concatenate((history, x2), axis=1)      # padded[:, j] = x[start - L + j]
        first = self._output_start(start)
        stop = self._output_start(start + n_in)
        out = np.empty((rows, stop - first), dtype=x.dtype)
        group = 8192
        offsets = np.arange(length)
        for lo in range(first, stop, group):
            n = np.arange(lo, min(stop, lo + group), dtype=np.int64)
            whole, frac = self._instants(n)
            # x(whole + frac - half) from x[whole - 2 half + 1 .. whole]
            base = whole - 2 * half + 1 - (start - length)
            taps = _table_taps(frac, length).astype(x.real.dtype)          # (M, L)
            index = base[:, None] + offsets                                # (M, L)
            # tap by tap, in real arithmetic: the same rounding for every
            # output wherever the stream is cut (a matrix product might not)
            acc = np.zeros((rows, n.size), dtype=x.dtype)
            for j in range(length):
                column = padded[:, index[:, j]]
                acc.real += column.real * taps[:, j]
                acc.imag += column.imag * taps[:, j]
            out[:, lo - first:lo - first + n.size] = acc
        history = np.ascontiguousarray(padded[:, padded.shape[1] - length:])
        return out.reshape(lead + (stop - first,)), history


class SignalChain:
    """Channel models and impairments run in order, as one stage.

    Parameters
    ----------
    *stages : object
        Objects with ``filter(samples, *, start_sample=0)``, ``apply`` and
        ``reset`` (the impairments of this module,
        :class:`tonebank.channel.TappedDelayLine`, or another
        :class:`SignalChain`), applied first to last.

    Raises
    ------
    TypeError
        A stage lacks ``filter``, ``apply`` or ``reset``.
    ValueError
        No stage is given.

    Notes
    -----
    ``filter`` runs every stage's ``filter`` with the stream index of its
    own input (a :class:`SamplingClockOffset` changes the index for the
    stages after it); ``apply`` runs every stage's ``apply``, so
    streaming through a chain is as exact as through each stage.  Random
    stages keep their own seeds.  A stage with branches (a
    :class:`~tonebank.channel.TappedDelayLine` with ``branches``) adds an
    axis that the later stages treat as batch.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.channel import (DcOffset, FrequencyOffset, PhaseNoise,
    ...                               SignalChain)
    >>> chain = SignalChain(FrequencyOffset(50.0, 1e4), PhaseNoise(1.0, 1e4, rng=2),
    ...                     DcOffset(0.01))
    >>> x = np.exp(2j * np.pi * 0.1 * np.arange(3000))
    >>> y = np.concatenate([chain.apply(x[:1000]), chain.apply(x[1000:])])
    >>> bool(np.array_equal(y, chain.filter(x)))
    True
    """

    def __init__(self, *stages):
        if not stages:
            raise ValueError("SignalChain needs at least one stage; got none")
        for i, stage in enumerate(stages):
            for method in ("filter", "apply", "reset"):
                if not callable(getattr(stage, method, None)):
                    raise TypeError(f"stages[{i}] ({type(stage).__name__}) has no {method}() "
                                    "method; every stage needs filter, apply and reset")
        self._stages = tuple(stages)

    @property
    def stages(self) -> tuple:
        """The stages, first to last."""
        return self._stages

    def __repr__(self):
        return "SignalChain(" + ", ".join(repr(s) for s in self._stages) + ")"

    def _output_start(self, start: int) -> int:
        for stage in self._stages:
            start = _map_start(stage, start)
        return start

    def filter(self, samples, *, start_sample=0) -> np.ndarray:
        """Pass a whole signal through every stage (one shot, no state).

        Parameters
        ----------
        samples : array_like of complex
            Shape ``(..., n)``.
        start_sample : int, default 0
            Stream instant of ``samples[..., 0]`` at the first stage.

        Returns
        -------
        numpy.ndarray
            The output of the last stage.

        Raises
        ------
        TypeError, ValueError
            As the stages raise them.

        Examples
        --------
        >>> from tonebank.channel import DcOffset, SignalChain
        >>> SignalChain(DcOffset(1.0), DcOffset(1j)).filter([0.0])
        array([1.+1.j])
        """
        start = integer(start_sample, "start_sample", minimum=0)
        y = samples
        for stage in self._stages:
            y = stage.filter(y, start_sample=start)
            start = _map_start(stage, start)
        return y

    def apply(self, samples) -> np.ndarray:
        """Pass the next chunk of a stream through every stage.

        Parameters
        ----------
        samples : array_like of complex
            Shape ``(..., n)``.

        Returns
        -------
        numpy.ndarray
            The output of the last stage for this chunk.

        Raises
        ------
        TypeError, ValueError
            As the stages raise them.

        Examples
        --------
        >>> from tonebank.channel import DcOffset, SignalChain
        >>> chain = SignalChain(DcOffset(1.0))
        >>> chain.apply([0.0, 1.0])
        array([1.+0.j, 2.+0.j])
        """
        y = samples
        for stage in self._stages:
            y = stage.apply(y)
        return y

    def reset(self) -> None:
        """Restart the stream of every stage."""
        for stage in self._stages:
            stage.reset()


def _map_start(stage, start: int) -> int:
    mapper = getattr(stage, "_output_start", None)
    return start if mapper is None else mapper(start)
