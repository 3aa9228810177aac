r"""Tapped-delay-line fading channels on sampled signals.

:class:`TappedDelayLine` turns a :class:`~tonebank.channel.DelayProfile`
into one random realisation of a multipath fading channel at a sample
rate.  It filters time-domain samples (one call, or a stream cut into
chunks with its state carried between them) and reports the true
frequency response of the same realisation on the bins of a carrier plan,
so that channel estimates can be scored against the truth.

The model
---------
Path :math:`p` (delay :math:`\tau_p`, power :math:`P_p`, Rician factor
:math:`K_p`, 0 for Rayleigh) has the complex gain

.. math::

    g_p(t) = \sqrt{\frac{P_p K_p}{K_p + 1}}\,
             e^{j(2\pi f_D \cos\theta_0\, t + \phi_{p,0})}
           + \sqrt{\frac{P_p}{(K_p + 1) M}} \sum_{i=1}^{M}
             e^{j(2\pi f_D \cos\alpha_{p,i}\, t + \phi_{p,i})}

with maximum Doppler frequency :math:`f_D`, arrival angles
:math:`\alpha_{p,i}` and phases :math:`\phi_{p,i}`, :math:`\phi_{p,0}`
drawn independently and uniformly on :math:`[0, 2\pi)` once per
realisation, and the line-of-sight arrival angle :math:`\theta_0`
(``los_angle_rad``).  This is Clarke's model of a receiver moving through
a field of scatterers uniform in angle, realised as a sum of sinusoids
with random angles and phases.  Over realisations the diffuse part has
the autocorrelation :math:`E[g(t) g^*(t+\tau)] = J_0(2\pi f_D \tau)`
(R. H. Clarke, "A statistical theory of mobile-radio reception", Bell
Syst. Tech. J. 47, 1968; W. C. Jakes, *Microwave Mobile
Communications*, Wiley, 1974, chapter 1) for any :math:`M`, because
:math:`E[e^{-j 2\pi f_D \cos\alpha\,\tau}] = J_0(2\pi f_D\tau)` for
uniform :math:`\alpha`; by the central limit theorem its value at any
instant is close to complex Gaussian (Rayleigh envelope) for the default
:math:`M = 32` (fourth moment :math:`2 - 1/M` instead of 2).

*Why sinusoids and not filtered Gaussian noise.*  A sum of sinusoids is a
closed-form function of absolute time: it can be evaluated at any
instant (the FFT-window averages of
:meth:`tonebank.channel.TappedDelayLine.frequency_response`,
the start of any chunk of a stream) without running a filter from the
beginning, costs nothing to keep in state, and has the exact Clarke
autocorrelation over realisations with no Doppler-filter design or
resampling at low :math:`f_D / f_s`.  Its price is that one realisation
is only approximately Gaussian and its time-average autocorrelation
scatters around :math:`J_0` by about :math:`1/\sqrt{M}`; average over
realisations (new objects, or ``branches``) for statistics.

With ``max_doppler_hz=0`` the channel is static over the life of the
object (block fading): each gain is drawn once, exactly complex Gaussian
(plus the line-of-sight term) — draw a new object per block.

*Time grid.*  Evaluating the sinusoids at every sample would cost
:math:`M` exponentials per path and sample, so the gains are evaluated at
knots every ``update_interval`` samples (:math:`\Delta`, default
:math:`\lfloor f_s / (64 f_D)\rfloor`, at most 1024) and are *defined*
as the straight line between knots.  The filter and the frequency
response use the same piecewise-linear gains, so the reported response is
exact for the signal that was filtered.  The line departs from the
sinusoids by at most :math:`(2\pi f_D \Delta / f_s)^2 / 8` of a
sinusoid's amplitude, :math:`1.2\cdot 10^{-3}` (-58 dB) at the default
spacing.

*Delays.*  Path :math:`p` lies :math:`d_p = \tau_p f_s` samples late.  A
whole number of samples is one tap.  Otherwise, with
``interpolation="sinc"`` (the default) the path is spread over
``interp_length`` taps by a Kaiser-windowed sinc, :math:`h(m) =
\mathrm{sinc}(m - d_p)\, w(m - d_p)`, :math:`w(x) = I_0(\beta
\sqrt{1 - (2x/L)^2}) / I_0(\beta)` for the taps :math:`m` nearest to
:math:`d_p`; its response departs from the ideal delay
:math:`e^{-j 2\pi f d_p / f_s}` over :math:`|f| \le 0.4 f_s` (signals
occupying up to 80 % of the sample rate) by at most

=================  =======  ====================================
``interp_length``  β        max error, :math:`|f| \le 0.4 f_s`
=================  =======  ====================================
8                  2.0      -23 dB
16                 5.0      -47 dB
32 (default)       10.0     -94 dB
64                 16.0     -150 dB
=================  =======  ====================================

(computed by this project over delays in steps of 1/20 sample; tested in
``tests/test_channel_tdl.py`` against an analytic band-limited signal).
The interpolator looks ahead by up to ``interp_length / 2 - 1`` samples,
so the whole profile is delayed by
:attr:`tonebank.channel.TappedDelayLine.latency_samples`
to make the filter causal (0 when every delay is a whole number of
samples); the reported frequency response includes that delay.
``interpolation="nearest"`` rounds each delay to the nearest sample
instead (common practice, no source).

The filter
----------
All paths fold into ``n_lags`` taps :math:`c_m(n) = \sum_p g_p(n)\,
h_p(m)` and the output is :math:`y[n] = \sum_m c_m(n)\, x[n - m]`: a
time-varying FIR, run by the kernel op ``channel_fir`` (C, or its numpy
twin) with the taps at the knots and the linear interpolation done per
sample inside the kernel.
"""

from __future__ import annotations

import functools
import math
import numbers

import numpy as np

from .. import _kernel
from .._checks import generator, integer, plan_of, real
from .profiles import DelayProfile

__all__ = ["TappedDelayLine"]

#: interp_length -> Kaiser beta (see the module notes for the errors).
_KAISER_BETA = {8: 2.0, 16: 5.0, 32: 10.0, 64: 16.0}
_MAX_LAGS = 1 << 20
_MAX_INTERVAL = 1024
_C128 = np.dtype(np.complex128)
_C64 = np.dtype(np.complex64)


def _check_stream_chunk(started, lead: tuple, dtype: np.dtype) -> None:
    """The ValueError of a streaming ``apply`` whose chunk changes the
    leading shape or precision the stream ``started`` with (None: first chunk)."""
    if started is not None and (lead, dtype) != started:
        raise ValueError(f"samples have leading shape {lead} and dtype {dtype}, but this "
                         f"stream started with {started[0]} and {started[1]}; keep "
                         "them fixed, or call reset() first")


def _signal_dtype(arr: np.ndarray) -> np.dtype:
    if arr.dtype.kind not in "biufc":
        raise TypeError(f"samples must be numeric; got dtype {arr.dtype}")
    if arr.dtype in (np.complex64, np.float32, np.float16):
        return _C64
    return _C128


@functools.lru_cache(maxsize=64)
def _mix_table(delays: tuple, interpolation: str, length: int) -> tuple[np.ndarray, int]:
    """Map path gains to FIR taps: ``(n_paths, n_lags)`` weights (read-only) and the latency.

    Cached: a link simulation draws a new realisation of the same profile
    for every frame, and the windowed-sinc table depends on the delays only.
    """
    delays = np.asarray(delays, dtype=np.float64)
    rounded = np.round(delays)
    whole = np.abs(delays - rounded) <= 1e-9 * np.maximum(1.0, np.abs(delays))
    if interpolation == "nearest" or np.all(whole):
        lags = rounded.astype(np.int64)
        mix = np.zeros((delays.size, int(lags.max()) + 1))
        mix[np.arange(delays.size), lags] = 1.0
        mix.flags.writeable = False
        return mix, 0
    from scipy.special import i0

    half = length // 2
    beta = _KAISER_BETA[length]
    first = np.where(whole, rounded, np.floor(delays) - half + 1).astype(np.int64)
    latency = int(max(0, -first.min()))
    last = np.where(whole, rounded, np.floor(delays) + half).astype(np.int64)
    mix = np.zeros((delays.size, int(last.max()) + latency + 1))
    for p, d in enumerate(delays):
        if whole[p]:
            mix[p, int(rounded[p]) + latency] = 1.0
            continue
        m = np.arange(first[p], last[p] + 1)
        x = m - d
        window = i0(beta * np.sqrt(np.clip(1.0 - (x / half) ** 2, 0.0, None))) / i0(beta)
        mix[p, m + latency] = np.sinc(x) * window
    mix.flags.writeable = False
    return mix, latency


@functools.lru_cache(maxsize=32)
def _steering(n_lags: int, n_fft: int, size: int) -> np.ndarray:
    """``exp(-2 pi i m k / size)`` for lags ``m`` and the grid's signed bins ``k`` (read-only)."""
    positions = np.arange(n_fft)
    k = np.where(positions < n_fft - n_fft // 2, positions, positions - n_fft)
    steering = np.exp(-2j * np.pi * np.outer(np.arange(n_lags), k % size) / size)
    steering.flags.writeable = False
    return steering


class TappedDelayLine:
    r"""One realisation of a multipath fading channel at a sample rate.

    Parameters
    ----------
    profile : DelayProfile
        The paths: delays and mean powers (normalised to a total of 1,
        so the channel keeps the mean signal power).
    sample_rate : float
        Sample rate of the signals in Hz, > 0.
    max_doppler_hz : float, default 0.0
        Maximum Doppler frequency :math:`f_D` in Hz, ``0 <= f_D <
        sample_rate / 2``; 0 gives a static channel (block fading).
    k_factor : float or array_like of float, optional
        Rician K-factor (linear power ratio, line of sight over diffuse,
        >= 0): one value for the first path of the profile, or one per
        path; None (default) or 0 makes every path Rayleigh.
    branches : int, optional
        Number of independent realisations (receive branches) fed by
        the same input; outputs gain an axis of this length before the
        samples.  None (default): one realisation, no extra axis.
    interpolation : {"sinc", "nearest"}, default "sinc"
        How delays that are not whole samples are realised (see the
        module notes).
    interp_length : {8, 16, 32, 64}, default 32
        Taps of the windowed-sinc interpolator.
    n_sinusoids : int, default 32
        Sinusoids per path, :math:`M` (time-varying channels only).
    update_interval : int, optional
        Knot spacing :math:`\Delta` in samples (time-varying channels
        only); default :math:`\min(1024, \max(1, \lfloor f_s / (64
        f_D)\rfloor))`.
    los_angle_rad : float, default 0.0
        Arrival angle :math:`\theta_0` of the line-of-sight component; its
        Doppler shift is :math:`f_D \cos\theta_0`.
    rng : numpy.random.Generator or int, optional
        Source of the realisation (drawn once, at construction).

    Attributes
    ----------
    n_lags : int
        Taps of the FIR that realises the channel.
    latency_samples : int
        Delay added to every path to make the interpolator causal.

    Raises
    ------
    TypeError
        An argument has the wrong type (e.g. ``profile`` is not a
        :class:`DelayProfile`).
    ValueError
        A value is out of range: negative or too large Doppler, ``K <
        0``, a K-factor list of the wrong length, an unknown
        interpolation, a non-positive sample rate or update interval.

    See Also
    --------
    DelayProfile : the paths.
    tonebank.channel.awgn : add noise after the channel.

    Notes
    -----
    The model, the choice of a sum of sinusoids, the time grid and the
    delay interpolator are described in the module notes of
    :mod:`tonebank.channel.tdl`.  Filtering costs about ``n_lags``
    complex multiply-adds per output sample and branch, plus
    ``n_paths * n_sinusoids`` complex exponentials per knot.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.channel import DelayProfile, TappedDelayLine
    >>> profile = DelayProfile([0.0, 1e-6], [0.0, -3.0])
    >>> ch = TappedDelayLine(profile, 4e6, rng=7)
    >>> ch.n_lags, ch.latency_samples
    (5, 0)
    >>> y = ch.filter(np.ones(8, dtype=complex))
    >>> bool(np.allclose(y[4:], ch.impulse_response([4])[0].sum()))
    True
    """

    def __init__(self, profile, sample_rate, *, max_doppler_hz=0.0, k_factor=None,
                 branches=None, interpolation="sinc", interp_length=32, n_sinusoids=32,
                 update_interval=None, los_angle_rad=0.0, rng=None):
        if not isinstance(profile, DelayProfile):
            raise TypeError(f"profile must be a tonebank.channel.DelayProfile; got "
                            f"{type(profile).__name__}")
        fs = real(sample_rate, "sample_rate", minimum=0.0, allow_equal_min=False)
        fd = real(max_doppler_hz, "max_doppler_hz", minimum=0.0)
        if not fd < fs / 2:
            raise ValueError(f"max_doppler_hz={max_doppler_hz!r} is not allowed; need "
                             f"0 <= max_doppler_hz < sample_rate / 2 = {fs / 2:g} Hz")
        n_paths = profile.n_paths
        if k_factor is None:
            k = np.zeros(n_paths)
        else:
            try:
                k_arr = np.asarray(k_factor)
            except (TypeError, ValueError):
                k_arr = np.asarray(k_factor, dtype=object)
            if k_arr.dtype.kind not in "iuf" or k_arr.ndim > 1:
                raise TypeError(f"k_factor must be a real number or a 1-D sequence of "
                                f"them; got {k_factor!r}")
            k_arr = k_arr.astype(np.float64)
            if not np.all(np.isfinite(k_arr)) or np.any(k_arr < 0):
                raise ValueError(f"k_factor={k_factor!r} is not allowed; every K must be "
                                 "finite and >= 0 (linear power ratio)")
            if k_arr.ndim == 0:
                k = np.zeros(n_paths)
                k[0] = float(k_arr)
            elif k_arr.size != n_paths:
                raise ValueError(f"k_factor has {k_arr.size} values but the profile has "
                                 f"{n_paths} paths; give one value, or one per path")
            else:
                k = k_arr
        if branches is not None:
            branches = integer(branches, "branches", minimum=1)
        if interpolation not in ("sinc", "nearest"):
            raise ValueError(f"interpolation={interpolation!r} is not allowed; use "
                             "'sinc' or 'nearest'")
        if isinstance(interp_length, (bool, np.bool_)) \
                or not isinstance(interp_length, numbers.Integral) \
                or int(interp_length) not in _KAISER_BETA:
            raise ValueError(f"interp_length={interp_length!r} is not allowed; use one of "
                             f"{sorted(_KAISER_BETA)}")
        n_sin = integer(n_sinusoids, "n_sinusoids", minimum=1)
        if update_interval is None:
            interval = 1 if fd == 0 else int(min(_MAX_INTERVAL, max(1, fs // (64 * fd))))
        else:
            interval = integer(update_interval, "update_interval", minimum=1)
        los_angle = real(los_angle_rad, "los_angle_rad")
        gen = generator(rng)

        self._profile = profile
        self._fs = fs
        self._fd = fd
        self._k = k
        self._k.flags.writeable = False
        self._branches = branches
        self._nb = branches or 1
        self._interval = interval
        self._interpolation = interpolation
        self._interp_length = int(interp_length)
        span = profile.max_delay_s * fs + self._interp_length
        if span > _MAX_LAGS:
            raise ValueError(f"the profile spans {profile.max_delay_s:g} s, {span:.0f} "
                             f"samples at sample_rate={fs:g}; at most {_MAX_LAGS} lags "
                             "are supported")
        self._mix, self._latency = _mix_table(tuple(profile.delays_s * fs),
                                              self._interpolation, self._interp_length)

        # The realisation: drawn once, in a fixed order, so a seed gives the
        # same channel on either backend.
        power = profile.powers
        self._los_amp = np.sqrt(power * k / (k + 1.0))               # (P,)
        self._diffuse_amp = np.sqrt(power / (k + 1.0))               # (P,)
        shape = (self._nb, n_paths)
        self._los_phase = gen.uniform(0.0, 2 * np.pi, size=shape)
        self._los_doppler = fd * math.cos(los_angle)
        if fd == 0:
            diffuse = (gen.standard_normal(shape) + 1j * gen.standard_normal(shape)) / math.sqrt(2)
            gains = self._diffuse_amp * diffuse + self._los_amp * np.exp(1j * self._los_phase)
            self._static_taps = (gains @ self._mix)[:, None, :]      # (B, 1, L)
            self._static_gains = gains[:, None, :]                   # (B, 1, P)
            self._doppler = self._phase = None
        else:
            angles = gen.uniform(0.0, 2 * np.pi, size=shape + (n_sin,))
            self._phase = gen.uniform(0.0, 2 * np.pi, size=shape + (n_sin,))
            self._doppler = fd * np.cos(angles)                       # (B, P, M) Hz
            self._static_taps = self._static_gains = None
        self._n_sin = n_sin
        self._table = None
        self._blocks = {}
        self.reset()

    # ---- set-up helpers ------------------------------------------------------

    # ---- properties ----------------------------------------------------------

    @property
    def profile(self) -> DelayProfile:
        """The delay profile."""
        return self._profile

    @property
    def sample_rate(self) -> float:
        """Sample rate in Hz."""
        return self._fs

    @property
    def max_doppler_hz(self) -> float:
        """The maximum Doppler frequency in Hz; 0 for a static channel."""
        return self._fd

    @property
    def k_factors(self) -> np.ndarray:
        """Rician K-factor of every path (linear, 0 = Rayleigh), shape ``(n_paths,)``."""
        return self._k

    @property
    def branches(self) -> int | None:
        """Number of independent branches, or None for a single realisation."""
        return self._branches

    @property
    def update_interval(self) -> int:
        """Knot spacing of the gains in samples (1 for a static channel)."""
        return self._interval

    @property
    def n_lags(self) -> int:
        """Taps of the FIR that realises the channel."""
        return int(self._mix.shape[1])

    @property
    def latency_samples(self) -> int:
        """Samples added to every delay to make the interpolator causal."""
        return self._latency

    @property
    def position(self) -> int:
        """Samples consumed by :meth:`apply` since construction or :meth:`reset`."""
        return self._position

    def reset(self) -> None:
        """Restart the stream of :meth:`apply` at sample 0 with an empty history.

        The realisation is kept: the same samples give the same output.
        """
        self._position = 0
        self._history = None
        self._lead = None

    def __repr__(self):
        b = f", branches={self._branches}" if self._branches else ""
        return (f"TappedDelayLine({self._profile!r}, sample_rate={self._fs:g}, "
                f"max_doppler_hz={self._fd:g}{b}, n_lags={self.n_lags})")

    # ---- gains on the time grid ----------------------------------------------

    def _knot_gains(self, knots: np.ndarray) -> np.ndarray:
        """Path gains at knots (absolute knot numbers), shape ``(B, n_knots, P)``.

        The knots are evaluated in whole blocks of ``T`` aligned to
        absolute knot numbers (block ``b`` holds knots ``b T .. b T + T -
        1``): each sinusoid is ``exp(j(2 pi f_i b T Delta / f_s + phi_i))``
        times a per-object table of ``exp(j 2 pi f_i j Delta / f_s)``,
        ``j < T``, a multiply instead of an exponential per knot.  A knot's
        value is computed the same way whichever knots are asked for with
        it, so chunked streams stay bit-identical; the last blocks are
        kept for the next call of a stream.
        """
        knots = np.asarray(knots, dtype=np.int64)
        n_paths = self._profile.n_paths
        if self._doppler is None:
            return np.broadcast_to(self._static_gains, (self._nb, knots.size, n_paths))
        out = np.empty((self._nb, knots.size, n_paths), dtype=np.complex128)
        if knots.size == 0:
            return out
        size = self._rotation_table()[0]
        blocks = knots // size
        for block in np.unique(blocks):
            where = np.nonzero(blocks == block)[0]
            out[:, where] = self._block_gains(int(block))[:, knots[where] - block * size]
        return out

    def _block_gains(self, block: int) -> np.ndarray:
        """Gains at the ``T`` knots of one block, shape ``(B, T, P)`` (cached)."""
        hit = self._blocks.get(block)
        if hit is not None:
            return hit
        size, table = self._rotation_table()
        step = 2 * np.pi * self._interval / self._fs                    # rad per Hz per knot
        first = float(block * size)
        base = np.exp(1j * (self._doppler * (step * first) + self._phase))   # (B, P, M)
        # (B, P, M) x (B, P, M, T) -> (B, T, P)
        gains = np.einsum("bpm,bpmt->btp", base, table)
        gains *= self._diffuse_amp / math.sqrt(self._n_sin)
        t = (first + np.arange(size)) * (self._interval / self._fs)
        gains += self._los_amp * np.exp(1j * (2 * np.pi * self._los_doppler * t[None, :, None]
                                              + self._los_phase[:, None, :]))
        if len(self._blocks) >= 4:
            self._blocks.pop(next(iter(self._blocks)))
        self._blocks[block] = gains
        return gains

    def _rotation_table(self):
        """``(T, table)``: ``table[b, p, i, j] = exp(j 2 pi f_i j Delta / f_s)``, made once."""
        if self._table is None:
            per_knot = self._doppler.size
            size = int(min(256, max(1, (1 << 19) // per_knot)))
            j = np.arange(size, dtype=np.float64)
            step = 2 * np.pi * self._interval / self._fs
            self._table = (size, np.exp(1j * step * self._doppler[..., None] * j))
        return self._table

    def _knot_taps(self, knots: np.ndarray) -> np.ndarray:
        """FIR taps at knots, shape ``(B, n_knots, n_lags)``."""
        if self._doppler is None:
            return np.broadcast_to(self._static_taps, (self._nb, np.size(knots), self.n_lags))
        gains = self._knot_gains(knots)
        # An explicit sum over the paths, in order (not a matrix product,
        # whose blocking may depend on the number of knots), so every knot
        # gets the same taps however the knots are grouped.
        taps = np.zeros((self._nb, gains.shape[1], self.n_lags), dtype=np.complex128)
        for p in range(self._profile.n_paths):
            lags = np.nonzero(self._mix[p])[0]
            taps[:, :, lags] += gains[:, :, p, None] * self._mix[p, lags]
        return taps

    def _on_grid(self, sample_index, at_knots) -> np.ndarray:
        """Piecewise-linear values at (possibly fractional) sample instants."""
        n = np.asarray(sample_index, dtype=np.float64)
        if n.ndim != 1 or not np.all(np.isfinite(n)) or np.any(n < 0):
            raise ValueError(f"sample_index must be a 1-D sequence of finite instants >= 0 "
                             f"(samples from the start of the stream); got {sample_index!r}")
        if self._doppler is None:
            return at_knots(np.zeros(n.size, dtype=np.int64))
        knot = np.floor(n / self._interval).astype(np.int64)
        t = (n - knot * self._interval) / self._interval
        # only the knots needed (the instants may be far apart)
        needed, index = np.unique(np.concatenate((knot, knot + 1)), return_inverse=True)
        values = at_knots(needed)
        a = values[:, index[:knot.size]]
        b = values[:, index[knot.size:]]
        return a + t[:, None] * (b - a)

    def path_gains(self, sample_index) -> np.ndarray:
        """Complex gain of every path at given instants.

        Parameters
        ----------
        sample_index : array_like of float
            Shape ``(n,)``.  Instants in samples from the start of the
            stream (sample 0 of :meth:`apply`), >= 0; fractions allowed.

        Returns
        -------
        numpy.ndarray
            complex128, shape ``(n, n_paths)``, or ``(branches, n,
            n_paths)`` with branches.  Linear between knots (see the
            module notes); the sum of sinusoids exactly at the knots.

        Raises
        ------
        ValueError
            An instant is negative or not finite.

        Examples
        --------
        >>> from tonebank.channel import DelayProfile, TappedDelayLine
        >>> ch = TappedDelayLine(DelayProfile([0.0], [0.0]), 1e6, max_doppler_hz=50.0, rng=1)
        >>> ch.path_gains([0, 1000, 2000]).shape
        (3, 1)
        """
        return self._squeeze(np.array(self._on_grid(sample_index, self._knot_gains)))

    def impulse_response(self, sample_index) -> np.ndarray:
        """FIR taps of the channel at given instants.

        Parameters
        ----------
        sample_index : array_like of float
            Shape ``(n,)``.  Instants in samples from the start of the
            stream, >= 0.

        Returns
        -------
        numpy.ndarray
            complex128, shape ``(n, n_lags)`` (or ``(branches, n,
            n_lags)``): tap ``m`` multiplies the input ``m`` samples back.

        Raises
        ------
        ValueError
            An instant is negative or not finite.

        Examples
        --------
        >>> from tonebank.channel import DelayProfile, TappedDelayLine
        >>> ch = TappedDelayLine(DelayProfile([0.0, 2e-6], [0.0, 0.0]), 1e6, rng=3)
        >>> ch.impulse_response([0]).shape
        (1, 3)
        """
        return self._squeeze(np.array(self._on_grid(sample_index, self._knot_taps)))

    def _squeeze(self, arr: np.ndarray) -> np.ndarray:
        return arr if self._branches else arr[0]

    # ---- filtering -----------------------------------------------------------

    def _prepare(self, samples) -> tuple[np.ndarray, tuple, np.dtype]:
        arr = np.asarray(samples)
        dtype = _signal_dtype(arr)
        if arr.ndim == 0:
            raise ValueError("samples must have at least one axis (the samples); got a "
                             "0-d value")
        return arr.astype(dtype, copy=False), arr.shape[:-1], dtype

    def _run(self, x: np.ndarray, lead: tuple, dtype: np.dtype, start: int,
             history: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
        """Filter ``x`` (lead + (n,)) from stream sample ``start``; return
        ``(y, new history)``, rows ordered (lead..., branch)."""
        n = x.shape[-1]
        nb = self._nb
        lags = self.n_lags
        rows_in = int(np.prod(lead, dtype=np.int64))
        x2 = np.ascontiguousarray(x.reshape(rows_in, n))
        if nb > 1:
            x2 = np.repeat(x2, nb, axis=0)
        rows = rows_in * nb
        if history is None:
            history = np.zeros((rows, lags - 1), dtype=dtype)
        out = np.empty((rows, n), dtype=dtype)
        if n:
            if self._doppler is None:
                taps = self._static_taps
                offset = 0
            else:
                k0 = start // self._interval
                k1 = (start + n - 1) // self._interval + 1
                taps = self._knot_taps(np.arange(k0, k1 + 1))
                offset = start - k0 * self._interval
            taps = np.ascontiguousarray(taps, dtype=dtype)
            _kernel.active().channel_fir(x2, history, taps, self._interval, offset, out)
            if lags > 1:
                # the last lags - 1 samples of (history, x), without copying x
                keep = max(lags - 1 - n, 0)
                history = np.ascontiguousarray(
                    np.concatenate((history[:, history.shape[1] - keep:],
                                    x2[:, max(n - (lags - 1), 0):]), axis=1))
        shape = lead + ((nb,) if self._branches else ()) + (n,)
        return out.reshape(shape), history

    def filter(self, samples, *, start_sample=0) -> np.ndarray:
        """Pass a whole signal through the channel (one shot, no state).

        Parameters
        ----------
        samples : array_like of complex
            Shape ``(..., n)``; leading axes are signals that all see
            this realisation.  Real input is taken as complex.  complex64 (or float32) input gives
            complex64, anything else complex128.
        start_sample : int, default 0
            Stream instant of ``samples[..., 0]`` (the channel at that
            time is used); the samples before it are taken as zero.

        Returns
        -------
        numpy.ndarray
            Shape ``(..., n)``, or ``(..., branches, n)`` with branches:
            the first ``n`` output samples (no tail; pad the input with
            ``n_lags - 1`` zeros to keep the tail).

        Raises
        ------
        TypeError
            ``samples`` is not numeric.
        ValueError
            ``samples`` is 0-d or ``start_sample < 0``.

        See Also
        --------
        apply : the same as a stream.

        Notes
        -----
        :math:`y[n] = \\sum_m c_m(n) x[n - m]` with the taps of the module
        notes.  Cost: about ``n_lags`` complex multiply-adds per output
        sample (C kernel op ``channel_fir``).

        Examples
        --------
        >>> import numpy as np
        >>> from tonebank.channel import DelayProfile, TappedDelayLine
        >>> ch = TappedDelayLine(DelayProfile([0.0, 1e-6], [0.0, 0.0]), 2e6, rng=0)
        >>> x = np.zeros(4, dtype=complex); x[0] = 1
        >>> bool(np.allclose(ch.filter(x)[:3], ch.impulse_response([0])[0]))
        True
        """
        start = integer(start_sample, "start_sample", minimum=0)
        x, lead, dtype = self._prepare(samples)
        return self._run(x, lead, dtype, start, None)[0]

    def apply(self, samples) -> np.ndarray:
        """Pass the next chunk of a stream through the channel.

        Consecutive calls continue the same stream: the filter history and
        the time of the fading carry over, so chunks of any lengths give
        exactly the samples :meth:`filter` gives for their concatenation.
        :meth:`reset` starts again.

        Parameters
        ----------
        samples : array_like of complex
            Shape ``(..., n)``; the leading shape must stay the same for
            the whole stream.  Real input is taken as complex.

        Returns
        -------
        numpy.ndarray
            Shape ``(..., n)`` or ``(..., branches, n)``.

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
        >>> from tonebank.channel import DelayProfile, TappedDelayLine
        >>> ch = TappedDelayLine(DelayProfile.published("itu_pedestrian_a"), 3.84e6,
        ...                      max_doppler_hz=10.0, rng=5)
        >>> x = np.exp(2j * np.pi * 0.01 * np.arange(1000))
        >>> y = np.concatenate([ch.apply(x[:300]), ch.apply(x[300:])])
        >>> bool(np.array_equal(y, ch.filter(x)))
        True
        """
        x, lead, dtype = self._prepare(samples)
        _check_stream_chunk(self._lead, lead, dtype)
        y, self._history = self._run(x, lead, dtype, self._position, self._history)
        self._lead = (lead, dtype)
        self._position += x.shape[-1]
        return y

    # ---- the true frequency response -----------------------------------------

    def frequency_response(self, target, n_symbols, *, start_sample=0, start_symbol=0,
                           at="window_mean") -> np.ndarray:
        r"""The channel on every bin of a plan, symbol by symbol.

        Parameters
        ----------
        target : tonebank.CarrierPlan or tonebank.Waveform
            A ``tonebank.CarrierPlan`` (FFT size and prefixes at this
            channel's sample rate), or a waveform with ``plan`` and
            ``fft_size`` (e.g. ``tonebank.CpOfdm`` with oversampling
            ``L = fft_size / plan.n_fft``: windows of ``fft_size``
            samples, prefixes ``L`` times the plan's).
        n_symbols : int
            Number of symbols, >= 0.
        start_sample : int, default 0
            Stream sample at which the first symbol (its prefix) starts.
        start_symbol : int, default 0
            Index of the first symbol in the plan's prefix pattern.
        at : {"window_mean", "window_centre"}, default "window_mean"
            Which instant of a time-varying channel each symbol sees:
            the mean of the taps over the symbol's FFT window (default),
            or the taps at the window's centre.

        Returns
        -------
        numpy.ndarray
            complex128, shape ``(n_symbols, n_fft)`` (or ``(branches,
            n_symbols, n_fft)``), in the natural FFT order of the plan's
            grid (position ``p`` holds subcarrier ``k = p`` or ``p -
            n_fft``, see :mod:`tonebank.plan`); every position is filled,
            used or not.

        Raises
        ------
        TypeError
            ``target`` is neither a plan nor a waveform.
        ValueError
            The plan's sample rate (times the oversampling) differs from
            the channel's, ``at`` is unknown, or a count is negative.

        Notes
        -----
        With window :math:`w_s, \dots, w_s + N - 1` of symbol :math:`s`
        (after its prefix) and :math:`\bar c_m = N^{-1} \sum_{n} c_m(n)`
        over that window,

        .. math::

            H[s, k] = \sum_m \bar c_m\, e^{-j 2\pi k m / N}.

        When the prefix covers the ``n_lags - 1`` samples of channel
        memory, the unitary FFT of the received window is
        :math:`Y_k = H[s, k] X_k + I_k`, where :math:`I_k` is the
        inter-carrier interference of the change over the window (zero
        for a static channel): the window mean is the gain each
        subcarrier actually sees, the quantity a channel estimator aims
        at.  The centre value differs from it by second-order terms of
        the change over a window.  The response includes
        :attr:`latency_samples`.  Cost: ``n_symbols * N`` for the
        weights plus ``n_symbols * n_fft * n_lags``.

        Examples
        --------
        >>> import tonebank
        >>> from tonebank.channel import DelayProfile, TappedDelayLine
        >>> plan = tonebank.CarrierPlan.centered(64, 52, cp_length=16, sample_rate=20e6)
        >>> ch = TappedDelayLine(DelayProfile([0.0, 100e-9], [0.0, -3.0]), 20e6, rng=2)
        >>> ch.frequency_response(plan, 3).shape
        (3, 64)
        """
        plan, oversampling = self._resolve_target(target)
        n_symbols = integer(n_symbols, "n_symbols", minimum=0)
        start = integer(start_sample, "start_sample", minimum=0)
        first = integer(start_symbol, "start_symbol", minimum=0)
        if at not in ("window_mean", "window_centre"):
            raise ValueError(f"at={at!r} is not allowed; use 'window_mean' or "
                             "'window_centre'")
        n_fft = plan.n_fft
        size = oversampling * n_fft
        cp = oversampling * plan.cp_for(n_symbols, first).astype(np.int64)
        ends = np.cumsum(size + cp)
        windows = start + ends - size                                 # first body sample
        taps = self._window_taps(windows, size, at)                   # (B, S, L)
        steering = _steering(self.n_lags, n_fft, size)
        # one 2-D product (BLAS) rather than a batched one over a broadcast view
        flat = np.ascontiguousarray(taps, dtype=np.complex128).reshape(-1, self.n_lags)
        response = (flat @ steering).reshape(taps.shape[:2] + (n_fft,))
        return self._squeeze(response)

    def _resolve_target(self, target):
        plan, oversampling = plan_of(target)
        if plan.sample_rate is not None:
            rate = plan.sample_rate * oversampling
            if not math.isclose(rate, self._fs, rel_tol=1e-9):
                raise ValueError(f"target runs at {rate:g} Hz (plan sample_rate "
                                 f"{plan.sample_rate:g} x oversampling {oversampling}) but "
                                 f"the channel's sample_rate is {self._fs:g} Hz")
        return plan, oversampling

    def _window_taps(self, windows: np.ndarray, size: int, at: str) -> np.ndarray:
        """Taps seen by each window: ``(B, n_windows, n_lags)``."""
        count = windows.size
        if self._doppler is None or count == 0:
            return np.broadcast_to(self._static_taps, (self._nb, count, self.n_lags))
        if at == "window_centre":
            return np.array(self._on_grid(windows + (size - 1) / 2.0, self._knot_taps))
        out = np.empty((self._nb, count, self.n_lags), dtype=np.complex128)
        group = max(1, (1 << 20) // size)          # windows per pass: bounded temporaries
        for first in range(0, count, group):
            out[:, first:first + group] = self._mean_taps(windows[first:first + group], size)
        return out

    def _mean_taps(self, windows: np.ndarray, size: int) -> np.ndarray:
        """Mean of the piecewise-linear taps over each window: ``(B, n, n_lags)``.

        Each sample contributes ``1 - t`` to the knot before it and ``t`` to
        the one after, so the mean is a weighted sum of knot taps.
        """
        step = self._interval
        count = windows.size
        n = windows[:, None] + np.arange(size)                         # (S, N)
        knot = n // step
        t = (n - knot * step) / step
        lo = int(knot.min())
        span = int(knot.max()) - lo + 2
        row = np.arange(count)[:, None] * span
        weights = np.bincount((row + knot - lo).ravel(), (1.0 - t).ravel(),
                              minlength=count * span)
        weights += np.bincount((row + knot - lo + 1).ravel(), t.ravel(),
                               minlength=count * span)
        weights = weights.reshape(count, span) / size
        knots = self._knot_taps(np.arange(lo, lo + span))              # (B, span, L)
        return np.einsum("sk,bkl->bsl", weights, knots)
