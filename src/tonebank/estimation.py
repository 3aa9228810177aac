r"""Pilot-based channel estimation for multicarrier signals.

After the cyclic prefix has absorbed the channel, each cell of the
received grid is :math:`Y_{s,k} = H_{s,k} X_{s,k} + N_{s,k}`: one complex
gain per symbol ``s`` and subcarrier ``k``, plus noise of variance
:math:`\sigma^2`.  At a pilot cell :math:`X` is known, so the
least-squares (LS) estimate :math:`Y/X` is the channel plus noise of
variance :math:`\sigma^2/|X|^2` (:func:`ls_estimate`).  The channel
between pilots is then filled in:

* **in time** (across symbols, at each subcarrier that carries pilots):
  ``"linear"`` interpolation (holding the first and last estimate), an
  ``"average"`` of all pilot cells of the frame (a static channel; the
  repeated training symbols of a preamble), or a ``"wiener"`` filter
  from a Doppler (Jakes) time correlation;
* **in frequency** (across subcarriers, in each symbol): ``"linear"``
  (extrapolated at the band edges from the outermost pair),
  cubic ``"spline"``, ``"dft"`` (a least-squares fit of a channel of
  ``n_taps`` sample-spaced taps, the DFT-based estimator) or ``"lmmse"``
  (a linear MMSE filter from an assumed frequency correlation and the
  SNR; optionally of low rank).

:class:`ChannelEstimator` prepares every matrix once for a
:class:`~tonebank.PilotPattern`; applying it is a few matrix products.
Scattered patterns are estimated as two 1-D filters (time first, then
frequency: the "2 x 1-D" form of a 2-D Wiener filter).
:func:`estimate_from_training` averages repeated training symbols (a
long training field) in one call; :func:`noise_variance_from_nulls`,
:func:`noise_variance_from_pilots` and the ``noise_var`` of
:func:`estimate_from_training` estimate :math:`\sigma^2`.

SNR convention
--------------
``snr_db`` is :math:`10 \log_{10}(1/\sigma^2)`: the SNR per subcarrier
of a unit-power symbol through a channel of unit mean power
:math:`E|H|^2 = 1` (the ``esn0`` per bin of :mod:`tonebank.channel.noise`,
after :func:`tonebank.channel.esn0_to_bin_snr_db`).  The correlation
models are normalised to :math:`r(0) = 1` accordingly.

Channel grids
-------------
Estimates are grids of shape ``(..., n_symbols, n_fft)`` in natural FFT
order (see :mod:`tonebank.plan`), complex64 for complex64 input and
complex128 otherwise, with the estimate on every used subcarrier of the
plan and zero on the null ones.
"""

from __future__ import annotations

import math
import numbers
from typing import NamedTuple

import numpy as np

from ._checks import choice, integer
from .pilots import PilotPattern, _grid_arg, _signed

__all__ = [
    "ChannelEstimator",
    "FrequencyCorrelation",
    "TrainingEstimate",
    "estimate_from_training",
    "ls_estimate",
    "noise_variance_from_nulls",
    "noise_variance_from_pilots",
]

FREQUENCY_METHODS = ("linear", "spline", "dft", "lmmse")
TIME_METHODS = ("linear", "average", "wiener")


# ---- small argument helpers ------------------------------------------------------


def _real(value, name: str, *, minimum: float | None = None, positive: bool = False) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a real number, got {value!r}")
    v = float(value)
    if not math.isfinite(v):
        raise ValueError(f"{name} must be finite, got {value!r}")
    if positive and not v > 0:
        raise ValueError(f"{name} must be > 0, got {value!r}")
    if minimum is not None and v < minimum:
        raise ValueError(f"{name} must be >= {minimum}, got {value!r}")
    return v


def _out_dtype(a: np.ndarray) -> np.dtype:
    return np.dtype(np.complex64 if a.dtype in (np.complex64, np.float32)
                    else np.complex128)


# ---- correlation models ------------------------------------------------------------


class FrequencyCorrelation:
    r"""Correlation of the channel across subcarriers, :math:`r(\Delta k)`.

    :math:`r(\Delta k) = E[H_{k+\Delta k} H_k^*] / E|H_k|^2` for a
    wide-sense stationary channel whose paths have the power delay
    profile of the model, with delays in samples at ``n_fft`` samples per
    FFT window (so the subcarrier spacing times the delay is
    ``delay_samples / n_fft``).  Build one with :meth:`exponential`,
    :meth:`uniform` or :meth:`from_power_profile`.

    Notes
    -----
    With a power delay profile :math:`p(\tau)` (unit area) the
    correlation is its Fourier transform at :math:`\Delta k / N`:

    .. math::

        r(\Delta k) = \int p(\tau)\, e^{-2\pi i \Delta k \tau / N}\, d\tau,

    which for an exponential profile of RMS delay spread
    :math:`\tau_{rms}` gives :math:`1 / (1 + 2\pi i\, \tau_{rms} \Delta k / N)`
    and for a uniform one over :math:`[0, T]`,
    :math:`T = \sqrt{12}\,\tau_{rms}`, gives
    :math:`e^{-\pi i \Delta k T/N} \operatorname{sinc}(\Delta k T / N)`.
    A discrete profile gives :math:`\sum_l p_l e^{-2\pi i \Delta k d_l/N} / \sum_l p_l`.

    References
    ----------
    J.-J. van de Beek, O. Edfors, M. Sandell, S. K. Wilson and P. O.
    Börjesson, "On channel estimation in OFDM systems", Proc. IEEE VTC
    1995, pp. 815-819 (the exponential correlation).

    Examples
    --------
    >>> from tonebank.estimation import FrequencyCorrelation
    >>> r = FrequencyCorrelation.exponential(4.0)
    >>> complex(r(0, 64)), round(abs(r(8, 64)), 4)
    ((1+0j), 0.3033)
    """

    __slots__ = ("_kind", "_rms", "_powers", "_delays")

    def __init__(self, kind, rms, powers=None, delays=None):
        # Internal: use the class methods.
        self._kind = kind
        self._rms = rms
        self._powers = powers
        self._delays = delays

    @classmethod
    def exponential(cls, rms_delay_samples: float) -> FrequencyCorrelation:
        """An exponential power delay profile with the given RMS delay spread (in samples, >= 0)."""
        return cls("exponential", _real(rms_delay_samples, "rms_delay_samples", minimum=0.0))

    @classmethod
    def uniform(cls, rms_delay_samples: float) -> FrequencyCorrelation:
        """A uniform power delay profile over ``[0, sqrt(12) * rms_delay_samples]``."""
        return cls("uniform", _real(rms_delay_samples, "rms_delay_samples", minimum=0.0))

    @classmethod
    def from_power_profile(cls, powers, delays_samples=None) -> FrequencyCorrelation:
        """A discrete power delay profile: path powers at delays in samples.

        Parameters
        ----------
        powers : array_like of float
            Mean path powers, >= 0, not all zero; shape ``(n_paths,)``.
        delays_samples : array_like of float, optional
            Path delays in samples (need not be whole); default
            ``0, 1, ..., n_paths - 1`` (sample-spaced taps).

        Returns
        -------
        FrequencyCorrelation
        """
        p = np.asarray(powers, dtype=float) if np.asarray(powers).dtype.kind in "biuf" \
            else None
        if p is None:
            raise TypeError("powers must be real numbers")
        if p.ndim != 1 or p.size == 0:
            raise ValueError(f"powers must be a non-empty 1-D array, got shape {p.shape}")
        if not np.all(np.isfinite(p)) or np.any(p < 0) or not p.sum() > 0:
            raise ValueError("powers must be finite, >= 0 and not all zero")
        if delays_samples is None:
            d = np.arange(p.size, dtype=float)
        else:
            d = np.asarray(delays_samples, dtype=float)
            if d.shape != p.shape or not np.all(np.isfinite(d)):
                raise ValueError(f"delays_samples must be finite with the shape {p.shape} of "
                                 f"powers, got shape {d.shape}")
        p = p / p.sum()
        mean = float(p @ d)
        rms = float(np.sqrt(max(p @ (d - mean) ** 2, 0.0)))
        p.flags.writeable = False
        d.flags.writeable = False
        return cls("profile", rms, p, d)

    @property
    def rms_delay_samples(self) -> float:
        """RMS delay spread of the profile, in samples."""
        return self._rms

    @property
    def kind(self) -> str:
        """``"exponential"``, ``"uniform"`` or ``"profile"``."""
        return self._kind

    def __repr__(self):
        return f"FrequencyCorrelation({self._kind}, rms_delay_samples={self._rms:g})"

    def __call__(self, delta_k, n_fft: int) -> np.ndarray:
        """:math:`r(\\Delta k)` at subcarrier distances ``delta_k`` for an ``n_fft``-point window.

        Parameters
        ----------
        delta_k : array_like of float
            Subcarrier distances (any shape).
        n_fft : int
            FFT size (samples per FFT window).

        Returns
        -------
        ndarray of complex128
            Same shape as ``delta_k``.
        """
        n_fft = integer(n_fft, "n_fft", minimum=1)
        x = np.asarray(delta_k, dtype=float) / n_fft
        if self._kind == "exponential":
            return 1.0 / (1.0 + 2j * np.pi * self._rms * x)
        if self._kind == "uniform":
            span = math.sqrt(12.0) * self._rms
            return np.exp(-1j * np.pi * x * span) * np.sinc(x * span)
        phase = np.exp(-2j * np.pi * x[..., None] * self._delays)
        return phase @ self._powers

    def matrix(self, rows_k, cols_k, n_fft: int) -> np.ndarray:
        """The matrix ``R[i, j] = r(rows_k[i] - cols_k[j])``, complex128."""
        rows_k = np.asarray(rows_k, dtype=float)
        cols_k = np.asarray(cols_k, dtype=float)
        return self(rows_k[:, None] - cols_k[None, :], n_fft)


# ---- frequency and time filters (matrices) ------------------------------------------


def _hold_linear_matrix(src: np.ndarray, dst: np.ndarray) -> np.ndarray:
    """Linear interpolation src -> dst, holding the end values (numpy.interp)."""
    eye = np.eye(src.size)
    return np.stack([np.interp(dst, src, eye[j]) for j in range(src.size)], axis=1)


def _spline_matrix(src: np.ndarray, dst: np.ndarray) -> np.ndarray:
    from scipy.interpolate import CubicSpline

    if src.size == 1:
        return np.ones((dst.size, 1))
    return CubicSpline(src, np.eye(src.size), axis=0, extrapolate=True)(dst)


def _dft_matrix(src: np.ndarray, dst: np.ndarray, n_fft: int, n_taps: int) -> np.ndarray:
    """Least-squares fit of n_taps sample-spaced taps at src, evaluated at dst."""
    taps = np.arange(n_taps)
    f_src = np.exp(-2j * np.pi * np.outer(src, taps) / n_fft)
    f_dst = np.exp(-2j * np.pi * np.outer(dst, taps) / n_fft)
    return f_dst @ np.linalg.pinv(f_src)


def _lmmse_factors(r_dst_src: np.ndarray, r_src: np.ndarray, noise: np.ndarray,
                   rank: int | None):
    r"""``(A, B)`` with ``W = A @ B`` the LMMSE filter R_ds (R_ss + C)^-1.

    Full rank: ``(W, None)`` by a Cholesky solve.  Rank r: with
    C = diag(noise), whitening gives R~ = C^-1/2 R_ss C^-1/2 =
    U diag(lam) U^H and (R_ss + C)^-1 = C^-1/2 U diag(1/(lam+1)) U^H C^-1/2;
    keeping the r largest lam gives A = R_ds C^-1/2 U_r diag(1/(lam_r+1))
    and B = U_r^H C^-1/2 (Edfors et al. 1998 when C is a multiple of I).
    """
    from scipy import linalg

    n = r_src.shape[0]
    if rank is None or rank >= n:
        # W^H = (R_ss + C)^-1 R_ds^H, R_ss + C Hermitian positive definite.
        factor = linalg.cho_factor(r_src + np.diag(noise), lower=True, check_finite=False)
        return linalg.cho_solve(factor, r_dst_src.conj().T, check_finite=False).conj().T, None
    s = 1.0 / np.sqrt(noise)
    lam, u = linalg.eigh(s[:, None] * r_src * s[None, :], subset_by_index=(n - rank, n - 1),
                         check_finite=False)
    left = (r_dst_src * s[None, :]) @ u / (np.maximum(lam, 0.0) + 1.0)[None, :]
    right = u.conj().T * s[None, :]
    return left, right


def _jakes(delta: np.ndarray, doppler_per_symbol: float) -> np.ndarray:
    from scipy.special import j0

    return j0(2 * np.pi * doppler_per_symbol * delta)


class _Frame:
    """Everything an estimator applies to one frame layout (internal)."""

    __slots__ = ("n_symbols", "targets", "bins", "groups", "freq", "freq_first", "pilot_syms",
                 "noise")


class ChannelEstimator:
    r"""A prepared pilot-based channel estimator for one pilot pattern.

    The filters are computed once per frame layout (number of symbols and
    position in the pattern) and cached; :meth:`estimate` is then a
    gather, a few matrix products and a scatter.

    Parameters
    ----------
    pattern : tonebank.PilotPattern or tonebank.CarrierPlan
        Where the pilots are; a plan stands for its own pilots
        (:attr:`tonebank.CarrierPlan.pilot_pattern`).
    frequency : {"linear", "spline", "dft", "lmmse"}, default "linear"
        Interpolation across subcarriers (see the module notes).
    time : {"linear", "average", "wiener"}, default "linear"
        Interpolation across symbols at subcarriers that carry pilots.
        Irrelevant where every symbol has pilots on the same subcarriers
        (a comb) with ``"linear"``.
    snr_db : float, optional
        SNR per subcarrier (see the module notes); required by
        ``"lmmse"`` and ``"wiener"``.
    correlation : FrequencyCorrelation, optional
        Assumed frequency correlation; required by ``"lmmse"``.
    rank : int, optional
        Keep only the ``rank`` strongest eigenmodes of the LMMSE filter
        (low-rank form); default: full rank.
    beta : float, optional
        Use the noise term ``beta / SNR`` for every pilot instead of the
        exact ``sigma^2 / |X|^2`` of each pilot: ``beta = E|X|^2 E|1/X|^2``
        of the pilot alphabet (1 for constant modulus, 17/9 for 16-QAM),
        for training values not known when the filter is made.
    n_taps : int, optional
        Channel length in samples for ``"dft"``; default: the longest
        cyclic prefix of the plan.
    doppler_hz : float, optional
        Maximum Doppler shift in Hz for ``"wiener"`` (needs the plan's
        ``sample_rate``; symbols are taken to be equally spaced by the
        mean symbol duration).

    Raises
    ------
    TypeError
        Wrong argument types.
    ValueError
        Unknown methods, a missing argument a method needs, a pattern
        without pilots, ``n_taps`` larger than the pilots available.

    See Also
    --------
    ls_estimate, estimate_from_training, tonebank.equalization.equalize_mmse

    Notes
    -----
    Every method is linear in the LS estimates, so each stage is a matrix
    built once.  In frequency, from pilot subcarriers :math:`p` to the
    plan's used subcarriers :math:`t`:

    * linear and spline: the interpolation applied to unit vectors;
    * dft: :math:`W = F_t F_p^+` with :math:`F[k, l] = e^{-2\pi i k l/N}`,
      :math:`l < L`: the least-squares fit of an :math:`L`-tap channel.
      With :math:`N` equally spaced pilots over the whole FFT this is the
      IDFT, the truncation to :math:`L` taps and the DFT, whose MSE is
      :math:`(L/N)\,\sigma^2/|X|^2`;
    * lmmse: :math:`W = R_{tp}(R_{pp} + C)^{-1}` with :math:`C` the
      diagonal of LS noise variances :math:`\sigma^2/|X_p|^2` (or
      :math:`\beta/\mathrm{SNR}`); on a block of training symbols its MSE
      is :math:`\frac1N \sum_i \lambda_i \frac{\beta/\mathrm{SNR}}{\lambda_i +
      \beta/\mathrm{SNR}}` over the eigenvalues of :math:`R`.  The rank-r
      form keeps the r strongest modes of the whitened correlation, which
      applies in :math:`O(r(n_p + n_t))` per symbol instead of
      :math:`O(n_p n_t)`.

    In time, per subcarrier, from the pilot symbols to all symbols:
    linear (holding at the ends), average, or Wiener :math:`R_t (R_{pp,t} +
    \bar c I)^{-1}` with :math:`r_t(\Delta n) = J_0(2\pi f_D T_s \Delta n)`.
    When all pilot subcarriers share the same pilot symbols (comb, block,
    preamble) the two stages commute and the frequency stage runs on the
    pilot symbols only; otherwise (scattered) time runs first, and the
    frequency LMMSE uses the noise left after the time filter (its mean
    noise gain).

    Building costs one eigendecomposition (lmmse) or pseudo-inverse (dft)
    of the pilot count per frame layout; applying costs
    :math:`O(n_{sym}\, n_p\, n_t)` (full) or :math:`O(n_{sym}\, r (n_p +
    n_t))` (rank r) plus the time stage.

    References
    ----------
    J.-J. van de Beek, O. Edfors, M. Sandell, S. K. Wilson and P. O.
    Börjesson, "On channel estimation in OFDM systems", Proc. IEEE VTC
    1995, pp. 815-819.

    O. Edfors, M. Sandell, J.-J. van de Beek, S. K. Wilson and P. O.
    Börjesson, "OFDM channel estimation by singular value decomposition",
    IEEE Trans. Commun. 46 (7), pp. 931-939, 1998.

    P. Hoeher, S. Kaiser and P. Robertson, "Two-dimensional
    pilot-symbol-aided channel estimation by Wiener filtering", Proc.
    IEEE ICASSP 1997, pp. 1845-1848 (the separable 2 x 1-D form).

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank.estimation import ChannelEstimator, FrequencyCorrelation
    >>> plan = tonebank.CarrierPlan.centered(64, 48, cp_length=16)
    >>> pattern = tonebank.PilotPattern.comb(plan, 4)
    >>> prior = FrequencyCorrelation.from_power_profile([1, 1, 1, 1])  # 4 equal taps
    >>> est = ChannelEstimator(pattern, frequency="lmmse", snr_db=20.0, correlation=prior)
    >>> rng = np.random.default_rng(5)
    >>> taps = (rng.standard_normal(4) + 1j * rng.standard_normal(4)) / np.sqrt(8)
    >>> h = np.fft.fft(taps, 64)                          # the true channel
    >>> tx = pattern.place(np.ones(10 * pattern.n_data(1)) + 0j)   # 10 symbols
    >>> rx = h * tx + 0.1 * (rng.standard_normal(tx.shape)
    ...                      + 1j * rng.standard_normal(tx.shape)) / np.sqrt(2)
    >>> h_hat = est.estimate(rx)
    >>> used = np.concatenate((plan.data_bins, plan.pilot_bins))
    >>> mse = np.mean(np.abs(h_hat[:, used] - h[used]) ** 2)
    >>> bool(mse < 0.01 / 2)             # well below the LS error 0.01
    True
    """

    def __init__(self, pattern, *, frequency: str = "linear", time: str = "linear",
                 snr_db: float | None = None, correlation: FrequencyCorrelation | None = None,
                 rank: int | None = None, beta: float | None = None, n_taps: int | None = None,
                 doppler_hz: float | None = None):
        from .plan import CarrierPlan

        if isinstance(pattern, CarrierPlan):
            pattern = pattern.pilot_pattern
        if not isinstance(pattern, PilotPattern):
            raise TypeError("pattern must be a tonebank.PilotPattern or CarrierPlan, got "
                            f"{type(pattern).__name__}")
        if not pattern.mask.any():
            raise ValueError("pattern has no pilot cells: nothing to estimate from")
        self._pattern = pattern
        plan = pattern.plan
        self._frequency = choice(frequency, "frequency", FREQUENCY_METHODS)
        self._time = choice(time, "time", TIME_METHODS)
        needs_snr = self._frequency == "lmmse" or self._time == "wiener"
        if snr_db is None:
            if needs_snr:
                raise ValueError(f"snr_db is required for frequency={self._frequency!r}, "
                                 f"time={self._time!r}")
            self._noise_var = None
        else:
            self._noise_var = 10.0 ** (-_real(snr_db, "snr_db") / 10.0)
        self._snr_db = None if snr_db is None else float(snr_db)
        if self._frequency == "lmmse":
            if not isinstance(correlation, FrequencyCorrelation):
                raise TypeError("frequency='lmmse' needs correlation=FrequencyCorrelation..."
                                f" (the assumed channel), got {correlation!r}")
        elif correlation is not None and not isinstance(correlation, FrequencyCorrelation):
            raise TypeError(f"correlation must be a FrequencyCorrelation, got {correlation!r}")
        self._correlation = correlation
        if rank is not None:
            if self._frequency != "lmmse":
                raise ValueError(f"rank applies to frequency='lmmse' only, not "
                                 f"{self._frequency!r}")
            rank = integer(rank, "rank", minimum=1)
        self._rank = rank
        self._beta = None if beta is None else _real(beta, "beta", positive=True)
        if self._frequency == "dft":
            if n_taps is None:
                n_taps = max(plan.cp_lengths)
                if n_taps == 0:
                    raise ValueError("frequency='dft' needs n_taps (the plan has no cyclic "
                                     "prefix to take it from)")
            n_taps = integer(n_taps, "n_taps", minimum=1, maximum=plan.n_fft)
        elif n_taps is not None:
            raise ValueError(f"n_taps applies to frequency='dft' only, not {self._frequency!r}")
        self._n_taps = n_taps
        if self._time == "wiener":
            if doppler_hz is None:
                raise ValueError("time='wiener' needs doppler_hz (the maximum Doppler shift)")
            doppler_hz = _real(doppler_hz, "doppler_hz", minimum=0.0)
            if plan.sample_rate is None:
                raise ValueError("time='wiener' needs the plan's sample_rate to turn "
                                 "doppler_hz into a correlation across symbols")
            t_sym = (plan.n_fft + plan.mean_cp_length) / plan.sample_rate
            self._doppler = doppler_hz * t_sym
        elif doppler_hz is not None:
            raise ValueError(f"doppler_hz applies to time='wiener' only, not {self._time!r}")
        else:
            self._doppler = None
        k = _signed(plan.n_fft)
        used = np.concatenate((plan.data_bins, plan.pilot_bins))
        order = np.argsort(k[used])
        self._t_pos = used[order]
        self._t_k = k[self._t_pos]
        self._k = k
        self._frames: dict = {}
        self._cast: dict = {}

    # ---- description ---------------------------------------------------------

    @property
    def pattern(self) -> PilotPattern:
        """The pilot pattern."""
        return self._pattern

    @property
    def frequency(self) -> str:
        """The frequency method."""
        return self._frequency

    @property
    def time(self) -> str:
        """The time method."""
        return self._time

    def __repr__(self):
        extra = "".join(f", {k}={v!r}" for k, v in (
            ("snr_db", self._snr_db), ("rank", self._rank), ("n_taps", self._n_taps),
            ("beta", self._beta)) if v is not None)
        return (f"ChannelEstimator({self._pattern!r}, frequency={self._frequency!r}, "
                f"time={self._time!r}{extra})")

    # ---- preparation ---------------------------------------------------------

    def _frame_key(self, n_symbols: int, start: int):
        p = self._pattern
        if start >= p.head and p.period:
            start = p.head + (start - p.head) % p.period
        elif start >= p.head:
            start = p.head
        return n_symbols, start

    def _frame(self, n_symbols: int, start: int) -> _Frame:
        key = self._frame_key(n_symbols, start)
        hit = self._frames.get(key)
        if hit is None:
            hit = self._prepare(*key)
            if len(self._frames) >= 64:
                self._frames.clear()
            self._frames[key] = hit
        return hit

    def _prepare(self, n_symbols: int, start: int) -> _Frame:
        p = self._pattern
        mask = p.mask_for(n_symbols, start)
        values = p.values_for(n_symbols, start)
        cols = np.flatnonzero(mask.any(axis=0))
        if cols.size == 0:
            raise ValueError(f"symbols {start}..{start + n_symbols - 1} of the pattern carry "
                             "no pilots: nothing to estimate from")
        cols = cols[np.argsort(self._k[cols])]
        b_k = self._k[cols]
        frame = _Frame()
        frame.n_symbols = n_symbols
        frame.bins = cols
        frame.targets = self._t_pos
        # Group the pilot subcarriers by the symbols that carry their pilots.
        groups: dict = {}
        for j, c in enumerate(cols):
            groups.setdefault(mask[:, c].tobytes(), []).append(j)
        noise = self._noise_var if self._noise_var is not None else 1.0
        freq_noise = np.empty(cols.size)
        frame.groups = []
        for members in groups.values():
            members = np.asarray(members)
            syms = np.flatnonzero(mask[:, cols[members[0]]])
            x = values[np.ix_(syms, cols[members])]
            cell_noise = noise / np.abs(x) ** 2
            if self._beta is not None:
                cell_noise = np.full_like(cell_noise, self._beta * noise
                                          / np.mean(np.abs(values[mask]) ** 2))
            t = self._time_matrix(syms, n_symbols, float(np.mean(cell_noise)))
            gain = 1.0 if t is None else float(np.mean(np.sum(np.abs(t) ** 2, axis=1)))
            freq_noise[members] = gain * np.mean(cell_noise, axis=0)
            inv = 1.0 / x
            frame.groups.append((members, syms, t, inv))
        frame.freq_first = len(frame.groups) == 1
        if frame.freq_first:
            frame.pilot_syms = frame.groups[0][1]
        frame.noise = freq_noise
        frame.freq = self._frequency_factors(b_k, freq_noise)
        return frame

    def _time_matrix(self, syms: np.ndarray, n_symbols: int, noise: float):
        """Matrix from the pilot symbols to all symbols, or None for the identity."""
        everywhere = syms.size == n_symbols
        if self._time == "linear":
            if everywhere:
                return None
            return _hold_linear_matrix(syms.astype(float), np.arange(n_symbols, dtype=float))
        if self._time == "average":
            return np.full((n_symbols, syms.size), 1.0 / syms.size)
        all_syms = np.arange(n_symbols)
        r_ap = _jakes(all_syms[:, None] - syms[None, :], self._doppler)
        r_pp = _jakes(syms[:, None] - syms[None, :], self._doppler)
        return np.linalg.solve(r_pp + noise * np.eye(syms.size), r_ap.T).T

    def _frequency_factors(self, b_k: np.ndarray, noise: np.ndarray):
        """The frequency stage from pilot subcarriers ``b_k`` to the targets.

        One of ``("identity",)``, ``("linear", lo, w_lo, w_hi)`` (two
        neighbours per target), ``("dense", W)`` or ``("low_rank", A, B)``
        with ``W = A @ B``; ``W`` maps sources to targets.
        """
        src = b_k.astype(float)
        dst = self._t_k.astype(float)
        n_fft = self._pattern.plan.n_fft
        same = src.size == dst.size and np.array_equal(src, dst)
        if self._frequency in ("linear", "spline") and same:
            return ("identity",)
        if self._frequency == "linear":
            if src.size == 1:
                return ("linear", np.zeros(dst.size, np.intp), np.ones(dst.size),
                        np.zeros(dst.size))
            lo = np.clip(np.searchsorted(src, dst, side="right") - 1, 0, src.size - 2)
            t = (dst - src[lo]) / (src[lo + 1] - src[lo])
            return ("linear", lo.astype(np.intp), 1.0 - t, t)
        if self._frequency == "spline":
            return ("dense", _spline_matrix(src, dst))
        if self._frequency == "dft":
            if self._n_taps > src.size:
                raise ValueError(f"n_taps={self._n_taps} exceeds the {src.size} pilot "
                                 "subcarriers of the frame: a fit of n_taps taps needs at "
                                 "least as many pilots")
            return ("dense", _dft_matrix(src, dst, n_fft, self._n_taps))
        corr = self._correlation
        a, b = _lmmse_factors(corr.matrix(dst, src, n_fft), corr.matrix(src, src, n_fft),
                              noise, self._rank)
        return ("dense", a) if b is None else ("low_rank", a, b)

    def _cast_frame(self, frame: _Frame, dtype: np.dtype):
        """The frame's frequency stage as a function, and its time matrices, in ``dtype``."""
        key = (id(frame), dtype.char)
        hit = self._cast.get(key)
        if hit is None or hit[0] is not frame:
            op = frame.freq
            real = np.float32 if dtype == np.complex64 else np.float64
            if op[0] == "identity":
                def freq(v):
                    return v
            elif op[0] == "linear":
                lo, hi = op[1], op[1] + 1
                w_lo, w_hi = op[2].astype(real), op[3].astype(real)

                def freq(v):
                    # np.take along the last axis is much faster than v[..., lo].
                    out = np.take(v, lo, axis=-1)
                    out *= w_lo
                    out += np.take(v, hi, axis=-1) * w_hi
                    return out
            elif op[0] == "dense":
                wt = np.ascontiguousarray(op[1].T, dtype=dtype)

                def freq(v):
                    return v @ wt
            else:
                bt = np.ascontiguousarray(op[2].T, dtype=dtype)
                at = np.ascontiguousarray(op[1].T, dtype=dtype)

                def freq(v):
                    return (v @ bt) @ at
            groups = [(m, s, None if t is None else np.asarray(t, dtype=dtype),
                       np.asarray(inv, dtype=dtype)) for m, s, t, inv in frame.groups]
            hit = (frame, freq, groups)
            if len(self._cast) >= 128:
                self._cast.clear()
            self._cast[key] = hit
        return hit[1], hit[2]

    def predicted_mse(self, n_symbols: int = 1, *, start_symbol: int = 0) -> np.ndarray:
        r"""Mean squared error of the frequency stage under the assumed model.

        For the filter :math:`W` from the pilot subcarriers :math:`p` to
        a target :math:`t` (any frequency method), with the assumed
        correlation :math:`R` and the LS noise variances :math:`C` (after
        the time stage's mean noise gain),

        .. math::

            \mathrm{MSE}_t = 1 - 2\,\mathrm{Re}\,(w_t r_{tp}^H)
                             + w_t (R_{pp} + C) w_t^H,

        which for ``"lmmse"`` is the diagonal of its error covariance.
        Pass it as ``channel_error_var`` to the equalisers.  It ignores
        the interpolation error of the time stage (exact for a comb
        pattern, whose time stage is the identity).

        Parameters
        ----------
        n_symbols : int, default 1
            Frame length whose layout to use.
        start_symbol : int, default 0

        Returns
        -------
        ndarray
            float64, shape ``(n_fft,)``: the MSE on each used subcarrier (natural
            FFT order), zero on the null ones.

        Raises
        ------
        ValueError
            When the estimator was made without ``correlation`` and
            ``snr_db``.

        Examples
        --------
        >>> import tonebank
        >>> from tonebank.estimation import ChannelEstimator, FrequencyCorrelation
        >>> plan = tonebank.CarrierPlan.centered(64, 48)
        >>> est = ChannelEstimator(tonebank.PilotPattern.comb(plan, 4), frequency="lmmse",
        ...                        snr_db=20.0,
        ...                        correlation=FrequencyCorrelation.exponential(1.0))
        >>> mse = est.predicted_mse()
        >>> bool(0 < mse[plan.data_bins].max() < 0.02), float(mse[plan.null_bins].max())
        (True, 0.0)
        """
        if self._correlation is None or self._noise_var is None:
            raise ValueError("predicted_mse needs the estimator's correlation and snr_db "
                             "(the assumed channel and noise)")
        n_symbols = integer(n_symbols, "n_symbols", minimum=1)
        start = integer(start_symbol, "start_symbol", minimum=0)
        frame = self._frame(n_symbols, start)
        freq, _ = self._cast_frame(frame, np.dtype(np.complex128))
        w = freq(np.eye(frame.bins.size, dtype=np.complex128)).T      # (targets, sources)
        n_fft = self._pattern.plan.n_fft
        b_k = self._k[frame.bins].astype(float)
        corr = self._correlation
        r_tp = corr.matrix(self._t_k, b_k, n_fft)
        r_pp = corr.matrix(b_k, b_k, n_fft) + np.diag(frame.noise)
        mse = (1.0 - 2.0 * np.real(np.sum(w * r_tp.conj(), axis=1))
               + np.real(np.einsum("ij,jk,ik->i", w, r_pp, w.conj())))
        out = np.zeros(n_fft)
        out[self._t_pos] = np.maximum(mse, 0.0)
        return out

    # ---- application ---------------------------------------------------------

    def estimate(self, grid, *, start_symbol: int = 0) -> np.ndarray:
        """Channel estimate from a received grid.

        Parameters
        ----------
        grid : array_like of complex
            Shape ``(..., n_symbols, n_fft)``: the received frequency
            grid (e.g. :meth:`tonebank.CpOfdm.analyze`), natural FFT order.
        start_symbol : int, default 0
            Index of the grid's first symbol in the pattern.

        Returns
        -------
        ndarray
            Shape ``(..., n_symbols, n_fft)``: the estimate on every used
            subcarrier, zero on the null ones; complex64 for complex64
            input, complex128 otherwise.

        Raises
        ------
        ValueError
            Wrong grid shape, or the frame has no pilots (or too few for
            the method).
        """
        return self._run(grid, start_symbol, divide=True)

    def interpolate(self, ls, *, start_symbol: int = 0) -> np.ndarray:
        """Channel estimate from LS estimates already taken at the pilot cells.

        ``estimate(grid)`` is ``interpolate(ls_estimate(grid, pattern))``.
        Only the pilot cells of ``ls`` are read.

        Parameters
        ----------
        ls : array_like of complex
            Shape ``(..., n_symbols, n_fft)``.
        start_symbol : int, default 0

        Returns
        -------
        ndarray
            As :meth:`estimate`.
        """
        return self._run(ls, start_symbol, divide=False)

    def _run(self, grid, start_symbol, *, divide: bool) -> np.ndarray:
        n_fft = self._pattern.plan.n_fft
        g = _grid_arg(grid, n_fft)
        start = integer(start_symbol, "start_symbol", minimum=0)
        dtype = _out_dtype(g)
        g = g.astype(dtype, copy=False)
        n_symbols = g.shape[-2]
        lead = g.shape[:-2]
        out = np.zeros(lead + (n_symbols, n_fft), dtype=dtype)
        if n_symbols == 0:
            return out
        frame = self._frame(n_symbols, start)
        freq, groups = self._cast_frame(frame, dtype)
        bins = frame.bins
        if frame.freq_first:
            members, syms, t, inv = groups[0]
            if syms.size == n_symbols:          # pilots in every symbol: one gather
                cells = np.take(g, bins, axis=-1)
            else:
                cells = g[..., syms[:, None], bins[None, :]]
            if divide:
                cells = cells * inv
            f = freq(cells)
            if t is not None:
                f = np.matmul(t, f)
        else:
            v = np.empty(lead + (n_symbols, bins.size), dtype=dtype)
            for members, syms, t, inv in groups:
                cells = g[..., syms[:, None], bins[members][None, :]]
                if divide:
                    cells = cells * inv
                v[..., members] = cells if t is None else np.matmul(t, cells)
            f = freq(v)
        out[..., frame.targets] = f
        return out


# ---- one-shot functions -------------------------------------------------------------


def ls_estimate(grid, pattern, *, start_symbol: int = 0) -> np.ndarray:
    r"""Least-squares channel estimate at the pilot cells, :math:`Y/X`.

    Parameters
    ----------
    grid : array_like of complex
        Shape ``(..., n_symbols, n_fft)``, the received grid.
    pattern : tonebank.PilotPattern or tonebank.CarrierPlan
        Pilot cells and values (a plan stands for its own pilots).
    start_symbol : int, default 0
        Index of the grid's first symbol in the pattern.

    Returns
    -------
    ndarray
        Same shape as ``grid``: :math:`Y/X` at the pilot cells, zero
        elsewhere; complex64 for complex64 input, complex128 otherwise.

    Raises
    ------
    TypeError
        ``pattern`` of the wrong type.
    ValueError
        Wrong grid shape.

    Notes
    -----
    With :math:`Y = HX + N`, the error :math:`N/X` has variance
    :math:`\sigma^2/|X|^2`: boosted pilots are estimated better.  Cost:
    one division per pilot cell.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> plan = tonebank.CarrierPlan(8, data=[-2, -1, 2], pilots=[1])
    >>> rx = np.full((1, 8), 2.0 + 0j)
    >>> tonebank.estimation.ls_estimate(rx, plan)[0, 1]
    np.complex128(2+0j)
    """
    from .plan import CarrierPlan

    if isinstance(pattern, CarrierPlan):
        pattern = pattern.pilot_pattern
    if not isinstance(pattern, PilotPattern):
        raise TypeError("pattern must be a tonebank.PilotPattern or CarrierPlan, got "
                        f"{type(pattern).__name__}")
    g = _grid_arg(grid, pattern.plan.n_fft)
    start = integer(start_symbol, "start_symbol", minimum=0)
    dtype = _out_dtype(g)
    mask = pattern.mask_for(g.shape[-2], start)
    values = pattern.values_for(g.shape[-2], start)
    out = np.zeros(g.shape, dtype=dtype)
    out[..., mask] = (g[..., mask] / values[mask]).astype(dtype, copy=False)
    return out


class TrainingEstimate(NamedTuple):
    """Result of :func:`tonebank.estimation.estimate_from_training`."""

    #: The channel, shape ``(..., n_fft)``, zero off the training subcarriers.
    channel: np.ndarray
    #: Noise variance per subcarrier cell, shape ``(...)`` (None for one symbol).
    noise_var: np.ndarray | float | None


def estimate_from_training(received, training, *, frequency: str | None = None,
                           n_taps: int | None = None,
                           correlation: FrequencyCorrelation | None = None,
                           snr_db: float | None = None) -> TrainingEstimate:
    r"""Channel and noise variance from repeated training symbols (a long training field).

    Parameters
    ----------
    received : array_like of complex
        Shape ``(..., n_repeats, n_fft)``: the received grids of the
        repeated training symbol, natural FFT order.
    training : array_like of complex
        Shape ``(n_fft,)``: the transmitted training symbol; its non-zero
        bins are the training subcarriers (e.g.
        :func:`tonebank.presets.ieee80211a_long_training`).
    frequency : {None, "dft", "lmmse"}, optional
        Smoothing across the training subcarriers after averaging: none
        (default), a fit of ``n_taps`` taps, or LMMSE with
        ``correlation`` and ``snr_db`` (the SNR of one repeat).
    n_taps : int, optional
        For ``"dft"``.
    correlation : FrequencyCorrelation, optional
        For ``"lmmse"``.
    snr_db : float, optional
        For ``"lmmse"``; see the module notes.

    Returns
    -------
    TrainingEstimate
        ``(channel, noise_var)``: the channel of shape ``(..., n_fft)``
        (complex64 for complex64 input) and the noise variance per cell
        of shape ``(...)`` from the spread of the repeats (None for one
        repeat).

    Raises
    ------
    TypeError, ValueError
        Wrong shapes or types, a zero-length training, missing smoothing
        arguments.

    Notes
    -----
    The average of :math:`R` repeats divided by the training values has
    error variance :math:`\sigma^2/(R|X|^2)`.  The noise estimate is the
    pooled sample variance of the repeats,
    :math:`\hat\sigma^2 = \sum_{r,k} |Y_{r,k} - \bar Y_k|^2 / ((R-1)K)`
    over the :math:`K` training subcarriers, unbiased for a channel that
    does not change between repeats.  Cost: :math:`O(R\,n_{fft})` plus
    one matrix product for smoothing.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank import presets
    >>> from tonebank.estimation import estimate_from_training
    >>> ltf = presets.ieee80211a_long_training()
    >>> rng = np.random.default_rng(2)
    >>> h = np.fft.fft([0.8, 0.3 - 0.2j, 0.1j], 64)
    >>> noise = 0.05 * (rng.standard_normal((2, 64)) + 1j * rng.standard_normal((2, 64)))
    >>> rx = h * ltf + noise                       # the two long training symbols
    >>> est = estimate_from_training(rx, ltf, frequency="dft", n_taps=16)
    >>> used = ltf != 0
    >>> bool(np.max(np.abs(est.channel[used] - h[used])) < 0.1), round(est.noise_var, 4)
    (True, 0.0039)
    """
    y = np.asarray(received)
    if y.dtype.kind not in "biufc":
        raise TypeError(f"received must be numeric, got dtype {y.dtype}")
    x = np.asarray(training)
    if x.dtype.kind not in "biufc":
        raise TypeError(f"training must be numeric, got dtype {x.dtype}")
    if x.ndim != 1 or x.size == 0:
        raise ValueError(f"training must have shape (n_fft,), got {x.shape}")
    n_fft = x.size
    if y.ndim < 2 or y.shape[-1] != n_fft:
        raise ValueError(f"received must have shape (..., n_repeats, n_fft={n_fft}), "
                         f"got {y.shape}")
    if y.shape[-2] == 0:
        raise ValueError("received holds no training symbol (n_repeats = 0)")
    if not np.all(np.isfinite(x)):
        raise ValueError("training must be finite")
    bins = np.flatnonzero(x)
    if bins.size == 0:
        raise ValueError("training is zero everywhere: no training subcarriers")
    dtype = _out_dtype(y)
    repeats = y.shape[-2]
    cells = y[..., bins].astype(np.complex128)
    mean = cells.mean(axis=-2)
    noise_var = None
    if repeats > 1:
        spread = np.sum(np.abs(cells - mean[..., None, :]) ** 2, axis=(-2, -1))
        noise_var = spread / ((repeats - 1) * bins.size)
        if noise_var.ndim == 0:
            noise_var = float(noise_var)
    h = mean / x[bins]
    k = _signed(n_fft)[bins]
    order = np.argsort(k)
    if frequency is not None:
        choice(frequency, "frequency", ("dft", "lmmse"))
        src = k[order].astype(float)
        if frequency == "dft":
            if n_taps is None:
                raise ValueError("frequency='dft' needs n_taps (the channel length in samples)")
            n_taps = integer(n_taps, "n_taps", minimum=1, maximum=bins.size)
            w = _dft_matrix(src, src, n_fft, n_taps)
        else:
            if not isinstance(correlation, FrequencyCorrelation):
                raise TypeError("frequency='lmmse' needs correlation=FrequencyCorrelation..., "
                                f"got {correlation!r}")
            if snr_db is None:
                raise ValueError("frequency='lmmse' needs snr_db")
            sigma2 = 10.0 ** (-_real(snr_db, "snr_db") / 10.0)
            noise = sigma2 / (repeats * np.abs(x[bins][order]) ** 2)
            r = correlation.matrix(src, src, n_fft)
            w, _ = _lmmse_factors(r, r, noise, None)
        h_sorted = h[..., order] @ w.T
        h = np.empty_like(h_sorted)
        h[..., order] = h_sorted
    elif n_taps is not None or correlation is not None or snr_db is not None:
        raise ValueError("n_taps, correlation and snr_db apply only with frequency='dft' "
                         "or 'lmmse'")
    channel = np.zeros(y.shape[:-2] + (n_fft,), dtype=dtype)
    channel[..., bins] = h
    return TrainingEstimate(channel, noise_var)


def noise_variance_from_nulls(grid, plan, *, bins=None):
    r"""Noise variance from the received power on subcarriers that carry nothing.

    Parameters
    ----------
    grid : array_like of complex
        Shape ``(..., n_symbols, n_fft)``, the received grid.
    plan : tonebank.CarrierPlan
        Its ``null_bins`` are used unless ``bins`` is given.
    bins : array_like of int, optional
        Grid positions (natural FFT order) to use instead, e.g. the guard
        bands without DC and without the edge bins next to the signal.

    Returns
    -------
    float or ndarray
        :math:`\hat\sigma^2 = \mathrm{mean}\,|Y|^2` over the symbols and
        bins, one value per leading index (a float for a 2-D grid).

    Raises
    ------
    ValueError
        Wrong grid shape, no bins, bins out of range or on used
        subcarriers.

    Notes
    -----
    Unbiased when the null subcarriers hold only the noise; in a real
    receiver, leakage from adjacent channels, filter roll-off or a DC
    offset adds to it (choose ``bins`` accordingly).  :math:`2M\hat\sigma^2
    /\sigma^2` is chi-square with :math:`2M` degrees of freedom for
    :math:`M` cells.  Cost: one pass over the cells.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> plan = tonebank.CarrierPlan.centered(64, 40)
    >>> rng = np.random.default_rng(0)
    >>> noise = 0.1 * (rng.standard_normal((50, 64)) + 1j * rng.standard_normal((50, 64)))
    >>> round(tonebank.estimation.noise_variance_from_nulls(noise, plan), 3)   # true: 0.02
    0.019
    """
    from .plan import CarrierPlan

    if not isinstance(plan, CarrierPlan):
        raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
    g = _grid_arg(grid, plan.n_fft)
    if bins is None:
        b = plan.null_bins
        if b.size == 0:
            raise ValueError("the plan has no null subcarriers; pass bins=")
    else:
        b = np.asarray(bins)
        if b.dtype.kind not in "iu" or b.ndim != 1 or b.size == 0:
            raise ValueError(f"bins must be a non-empty 1-D array of integer grid positions, "
                             f"got {bins!r}")
        if b.min() < 0 or b.max() >= plan.n_fft:
            raise ValueError(f"bins must be in 0..{plan.n_fft - 1}, got {b.min()}..{b.max()}")
        on_used = np.intersect1d(b, np.concatenate((plan.data_bins, plan.pilot_bins)))
        if on_used.size:
            raise ValueError(f"bins holds grid position {int(on_used[0])}, a used subcarrier "
                             "of the plan; noise must be measured where nothing is sent")
    if g.shape[-2] == 0:
        raise ValueError("grid holds no symbols")
    power = np.abs(g[..., b].astype(np.complex128)) ** 2
    out = power.mean(axis=(-2, -1))
    return float(out) if out.ndim == 0 else out


def noise_variance_from_pilots(grid, pattern, *, n_taps: int, start_symbol: int = 0):
    r"""Noise variance from the pilot residuals of a short-channel fit.

    In each symbol, the pilots are fitted by a channel of ``n_taps``
    sample-spaced taps (weighted least squares, :math:`Y_p \approx
    \mathrm{diag}(X_p) F_p g`); the residual energy, divided by its
    degrees of freedom, estimates :math:`\sigma^2`.

    Parameters
    ----------
    grid : array_like of complex
        Shape ``(..., n_symbols, n_fft)``, the received grid.
    pattern : tonebank.PilotPattern or tonebank.CarrierPlan
    n_taps : int
        Channel length in samples (at most the cyclic prefix, usually);
        each symbol used needs more than ``n_taps`` pilots.
    start_symbol : int, default 0

    Returns
    -------
    float or ndarray
        One value per leading index (a float for a 2-D grid).

    Raises
    ------
    ValueError
        No symbol has more than ``n_taps`` pilots; wrong grid shape.

    Notes
    -----
    With :math:`A = \mathrm{diag}(X_p) F_p` (:math:`n_p \times L`) the
    residual :math:`(I - A A^+) Y_p = (I - A A^+) N_p` lies in an
    :math:`(n_p - L)`-dimensional space, so
    :math:`E\|r\|^2 = (n_p - L)\sigma^2` exactly when the channel has at
    most :math:`L` taps, and :math:`\hat\sigma^2 = \sum \|r\|^2 / \sum (n_p - L)`
    over the symbols is unbiased (a chi-square variable with
    :math:`2\sum(n_p - L)` degrees of freedom, scaled).  Symbols with
    :math:`n_p \le L` pilots are skipped.  Cost: one projection per
    symbol, :math:`O(n_p^2)`.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> plan = tonebank.CarrierPlan.centered(64, 48)
    >>> pattern = tonebank.PilotPattern.comb(plan, 3)
    >>> rng = np.random.default_rng(4)
    >>> h = np.fft.fft([1.0, 0.5j, -0.2], 64)
    >>> tx = pattern.place(np.ones(40 * pattern.n_data(1)) + 0j)
    >>> rx = h * tx + 0.1 * (rng.standard_normal(tx.shape) + 1j * rng.standard_normal(tx.shape))
    >>> round(tonebank.estimation.noise_variance_from_pilots(rx, pattern, n_taps=4), 3)  # 0.02
    0.019
    """
    from .plan import CarrierPlan

    if isinstance(pattern, CarrierPlan):
        pattern = pattern.pilot_pattern
    if not isinstance(pattern, PilotPattern):
        raise TypeError("pattern must be a tonebank.PilotPattern or CarrierPlan, got "
                        f"{type(pattern).__name__}")
    n_fft = pattern.plan.n_fft
    g = _grid_arg(grid, n_fft)
    n_taps = integer(n_taps, "n_taps", minimum=1, maximum=n_fft)
    start = integer(start_symbol, "start_symbol", minimum=0)
    rows = pattern.rows(g.shape[-2], start)
    k = _signed(n_fft)
    taps = np.arange(n_taps)
    energy = np.zeros(g.shape[:-2])
    dof = 0
    for row in np.unique(rows):
        if row == pattern.n_rows:
            continue
        pos = np.flatnonzero(pattern.mask[row])
        if pos.size <= n_taps:
            continue
        a = pattern.values[row, pos][:, None] * np.exp(-2j * np.pi * np.outer(k[pos], taps)
                                                       / n_fft)
        q, _ = np.linalg.qr(a)
        syms = np.flatnonzero(rows == row)
        y = g[..., syms[:, None], pos[None, :]].astype(np.complex128)
        resid = y - (y @ q.conj()) @ q.T
        energy = energy + np.sum(np.abs(resid) ** 2, axis=(-2, -1))
        dof += syms.size * (pos.size - n_taps)
    if dof == 0:
        raise ValueError(f"no symbol of the frame has more than n_taps={n_taps} pilots; "
                         "use fewer taps or a pattern with more pilots")
    out = energy / dof
    return float(out) if np.ndim(out) == 0 else out
