r"""Memoryless power-amplifier models and their operating point.

A transmitter's power amplifier compresses the envelope near saturation
(AM/AM) and may turn the phase with the drive level (AM/PM).  The models
here act on complex baseband samples, one sample at a time (no memory):

* :class:`SoftLimiter` -- linear up to saturation, flat above (an ideal
  envelope limiter, the limit of a perfectly linearised amplifier);
* :class:`RappAmplifier` -- solid-state: a smooth knee of sharpness
  ``p`` (Rapp 1991), no AM/PM;
* :class:`SalehAmplifier` -- travelling-wave tube: AM/AM with a peak and
  fall-off, and AM/PM (Saleh 1981).

:func:`drive` sets the operating point by input or output back-off,
applies a model and reports the distortion: the EVM against the linearly
scaled input and, when a sample rate is given, the ACLR.

All amplitudes are normalised: the input saturation amplitude is the
input level at which the output reaches its saturation (its maximum);
back-offs are mean power relative to that saturation power, in dB.

.. caution::

   The power, EVM and ACLR figures here are engineering estimates from
   simple models, not compliance measurements.  Defer to local radio
   regulations and accredited test practice.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np
import scipy.optimize

from . import spectrum

__all__ = [
    "AmplifierModel",
    "DriveResult",
    "RappAmplifier",
    "SalehAmplifier",
    "SoftLimiter",
    "drive",
]


def _positive(value, name: str) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a real number, got {value!r} "
                        f"({type(value).__name__})")
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise ValueError(f"{name} must be finite and > 0, got {value!r}")
    return value


def _samples(value, name: str = "samples") -> np.ndarray:
    arr = np.asarray(value)
    if arr.dtype.kind not in "biufc":
        raise TypeError(f"{name} must be numeric (complex or real), got dtype {arr.dtype}")
    dtype = np.complex64 if arr.dtype in (np.complex64, np.float32, np.float16) \
        else np.complex128
    arr = arr.astype(dtype, copy=False)
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} holds NaN or infinite values")
    return arr


class AmplifierModel:
    r"""Base of the memoryless amplifier models (AM/AM and AM/PM curves).

    A model maps the input envelope :math:`r = |x|` to an output envelope
    :meth:`am_am` and a phase turn :meth:`am_pm` (radians); calling it on
    samples :math:`x = |x| e^{i\varphi}` gives :math:`y =
    \mathrm{AM}(|x|)\, e^{i(\varphi + \mathrm{PM}(|x|))}`.  Subclasses define the two curves and the
    saturation levels.
    """

    #: Input amplitude at which the output saturates.
    input_saturation: float = 1.0
    #: The largest output amplitude.
    output_saturation: float = 1.0

    def am_am(self, r):
        """Output amplitude for input amplitude(s) ``r`` (float64 array)."""
        raise NotImplementedError

    def am_pm(self, r):
        """Phase turn in radians for input amplitude(s) ``r`` (zeros by default)."""
        return np.zeros(np.shape(r))

    def __call__(self, samples):
        """Apply the model to complex samples (complex64 kept).

        Raises
        ------
        TypeError, ValueError
            Non-numeric samples or NaN/inf.
        """
        x = _samples(samples)
        r = np.abs(x).astype(np.float64)
        gain = np.ones_like(r)
        nz = r > 0
        gain[nz] = self.am_am(r[nz]) / r[nz]
        turn = np.asarray(self.am_pm(r))
        factor = gain * np.exp(1j * turn) if np.any(turn) else gain
        return (x * factor).astype(x.dtype, copy=False)


class SoftLimiter(AmplifierModel):
    r"""Ideal envelope limiter: linear up to saturation, flat above.

    Parameters
    ----------
    saturation : float, optional
        Output (= input) saturation amplitude, > 0 (default 1).

    Raises
    ------
    TypeError, ValueError
        Non-real or non-positive ``saturation``.

    See Also
    --------
    RappAmplifier : the same with a smooth knee.
    tonebank.papr.clip : the same operation set by a clipping ratio.

    Notes
    -----
    :math:`A(r) = \min(r, A_{sat})`, no AM/PM.  It is the limit
    :math:`p \to \infty` of the Rapp model.

    Examples
    --------
    >>> from tonebank.amplifier import SoftLimiter
    >>> SoftLimiter(1.0).am_am([0.5, 2.0])
    array([0.5, 1. ])
    """

    def __init__(self, saturation=1.0):
        self.saturation = _positive(saturation, "saturation")
        self.input_saturation = self.output_saturation = self.saturation

    def am_am(self, r):
        return np.minimum(np.asarray(r, dtype=np.float64), self.saturation)

    def __repr__(self):
        return f"SoftLimiter(saturation={self.saturation!r})"


class RappAmplifier(AmplifierModel):
    r"""Rapp's solid-state amplifier model (AM/AM only).

    Parameters
    ----------
    smoothness : float, optional
        Knee sharpness :math:`p > 0` (default 2; about 2-3 is typical of
        solid-state amplifiers, common practice, no source).
    saturation : float, optional
        Output saturation amplitude :math:`A_0` (default 1).
    gain : float, optional
        Small-signal amplitude gain :math:`g` (default 1).

    Raises
    ------
    TypeError, ValueError
        Non-real or non-positive parameters.

    Notes
    -----
    .. math::

        A(r) = \frac{g r}{\left(1 + (g r / A_0)^{2p}\right)^{1/(2p)}},

    which approaches :math:`A_0` for large :math:`r`; at :math:`g r = A_0`
    the output is :math:`2^{-1/(2p)} A_0`.  The input saturation level
    (where the output would saturate without the knee) is :math:`A_0/g`.

    References
    ----------
    C. Rapp, "Effects of HPA-nonlinearity on a 4-DPSK/OFDM-signal for a
    digital sound broadcasting system", Proc. 2nd European Conference on
    Satellite Communications, Liège, 1991.

    Examples
    --------
    >>> from tonebank.amplifier import RappAmplifier
    >>> a = RappAmplifier(smoothness=2.0)
    >>> round(float(a.am_am(1.0)), 4)          # 2 ** (-1/4)
    0.8409
    """

    def __init__(self, smoothness=2.0, *, saturation=1.0, gain=1.0):
        self.smoothness = _positive(smoothness, "smoothness")
        self.saturation = _positive(saturation, "saturation")
        self.gain = _positive(gain, "gain")
        self.output_saturation = self.saturation
        self.input_saturation = self.saturation / self.gain

    def am_am(self, r):
        v = self.gain * np.asarray(r, dtype=np.float64)
        t = v / self.saturation
        two_p = 2.0 * self.smoothness
        out = np.empty_like(t)
        big = t > 1
        # Above the knee, A0 / (1 + t^-2p)^(1/2p): the same value without
        # overflow at the large drive levels of a back-off search.
        with np.errstate(under="ignore"):
            out[~big] = v[~big] / np.power(1.0 + np.power(t[~big], two_p), 1.0 / two_p)
            out[big] = self.saturation / np.power(1.0 + np.power(t[big], -two_p),
                                                  1.0 / two_p)
        return out

    def __repr__(self):
        return (f"RappAmplifier(smoothness={self.smoothness!r}, "
                f"saturation={self.saturation!r}, gain={self.gain!r})")


class SalehAmplifier(AmplifierModel):
    r"""Saleh's travelling-wave-tube model (AM/AM and AM/PM).

    Parameters
    ----------
    alpha_a, beta_a : float, optional
        AM/AM parameters (defaults 2.1587 and 1.1517).
    alpha_p, beta_p : float, optional
        AM/PM parameters (defaults 4.0033 and 9.1040).

    Raises
    ------
    TypeError, ValueError
        Non-real or non-positive parameters.

    Notes
    -----
    .. math::

        A(r) = \frac{\alpha_a r}{1 + \beta_a r^2}, \qquad
        \Phi(r) = \frac{\alpha_\phi r^2}{1 + \beta_\phi r^2}.

    :math:`A` peaks at :math:`r = 1/\sqrt{\beta_a}` with value
    :math:`\alpha_a / (2\sqrt{\beta_a})` (the saturation) and falls
    beyond it; :math:`\Phi` tends to :math:`\alpha_\phi/\beta_\phi`.
    The defaults are the values Saleh fitted to measured data of a
    travelling-wave tube (from memory).

    References
    ----------
    A. A. M. Saleh, "Frequency-independent and frequency-dependent
    nonlinear models of TWT amplifiers", IEEE Trans. Commun., 29(11),
    1981.

    Examples
    --------
    >>> from tonebank.amplifier import SalehAmplifier
    >>> a = SalehAmplifier()
    >>> round(a.input_saturation, 4), round(a.output_saturation, 4)
    (0.9318, 1.0058)
    """

    def __init__(self, alpha_a=2.1587, beta_a=1.1517, alpha_p=4.0033, beta_p=9.1040):
        self.alpha_a = _positive(alpha_a, "alpha_a")
        self.beta_a = _positive(beta_a, "beta_a")
        self.alpha_p = _positive(alpha_p, "alpha_p")
        self.beta_p = _positive(beta_p, "beta_p")
        self.input_saturation = 1.0 / math.sqrt(self.beta_a)
        self.output_saturation = self.alpha_a / (2.0 * math.sqrt(self.beta_a))

    def am_am(self, r):
        r = np.asarray(r, dtype=np.float64)
        return self.alpha_a * r / (1.0 + self.beta_a * r * r)

    def am_pm(self, r):
        r = np.asarray(r, dtype=np.float64)
        return self.alpha_p * r * r / (1.0 + self.beta_p * r * r)

    def __repr__(self):
        return (f"SalehAmplifier(alpha_a={self.alpha_a!r}, beta_a={self.beta_a!r}, "
                f"alpha_p={self.alpha_p!r}, beta_p={self.beta_p!r})")


@dataclass(frozen=True)
class DriveResult:
    """Outcome of :func:`~tonebank.amplifier.drive`.

    Attributes
    ----------
    samples : numpy.ndarray
        The amplifier output, same shape and dtype as the input.
    input_backoff_db : float
        Mean input power below the input saturation power, dB.
    output_backoff_db : float
        Mean output power below the output saturation power, dB.
    gain : complex
        Least-squares linear gain :math:`g` of output on scaled input.
    evm_percent : float
        RMS EVM of the output against :math:`g` times the scaled input
        (all distortion, in and out of band; filter or demodulate first
        for the in-band figure).
    aclr_db : numpy.ndarray or None
        Adjacent-channel leakage ratio per offset (channel power over
        the power in the offset channel), dB; None unless a sample rate
        was given.  Engineering estimate, not a compliance measurement.
    """

    samples: np.ndarray
    input_backoff_db: float
    output_backoff_db: float
    gain: complex
    evm_percent: float
    aclr_db: np.ndarray | None


def _aclr_db(samples, sample_rate, channel_bandwidth, offsets):
    """ACLR per offset of a signal batch, from :mod:`tonebank.spectrum`.

    Channel powers come from :func:`tonebank.spectrum.band_power` (Welch,
    rectangular channel filters) averaged over the leading axes before the
    ratio is taken, so a batch of bursts reads as one long signal would.
    """
    def power(low, high):
        return float(np.mean(spectrum.band_power(samples, sample_rate, low, high)))

    half = channel_bandwidth / 2.0
    main = power(-half, half)
    out = []
    for off in offsets:
        side = power(off - half, off + half)
        out.append(math.inf if side == 0 else 10.0 * math.log10(main / side))
    return np.asarray(out)


def drive(samples, model, *, input_backoff_db=None, output_backoff_db=None,
          sample_rate=None, channel_bandwidth=None, aclr_offsets=None) -> DriveResult:
    r"""Drive an amplifier model at a back-off and report the distortion.

    Parameters
    ----------
    samples : array_like
        Complex baseband samples, any shape (best oversampled, so that the
        spectral regrowth falls inside the sample rate); their own level
        does not matter, they are rescaled.
    model : AmplifierModel
        :class:`SoftLimiter`, :class:`RappAmplifier`,
        :class:`SalehAmplifier` or a subclass of your own.
    input_backoff_db, output_backoff_db : float, optional
        Give exactly one: the mean input power below the model's input
        saturation power, or the mean output power below its output
        saturation power (found by a root search), in dB.
    sample_rate : float, optional
        Sample rate in Hz; with ``channel_bandwidth``, ACLR is reported.
    channel_bandwidth : float, optional
        Width in Hz of the wanted channel (and of each adjacent one).
    aclr_offsets : array_like of float, optional
        Channel centre offsets in Hz (default: minus and plus one
        ``channel_bandwidth``).

    Returns
    -------
    DriveResult

    Raises
    ------
    TypeError
        Non-numeric samples, a model that is not an
        :class:`AmplifierModel`, non-real back-offs or rates.
    ValueError
        Both or neither back-off given, NaN/inf, zero input power, an
        output back-off the model cannot reach, ``sample_rate`` without
        ``channel_bandwidth`` (or the reverse), offsets outside the
        sample rate.

    See Also
    --------
    tonebank.papr.clip_and_filter : lower the peaks before the amplifier.

    Notes
    -----
    The input is scaled to mean power :math:`P_{sat,in}\,10^{-IBO/10}`
    with :math:`P_{sat,in}` = ``model.input_saturation`` squared.  For an
    output back-off the IBO is found by Brent's method on the measured
    output power (the output power is monotonic in the drive up to
    saturation for these models).  EVM:
    :math:`\sqrt{\overline{|y - g x|^2} / \overline{|g x|^2}}` with the
    least-squares :math:`g`.  ACLR integrates the Welch estimate of
    :func:`tonebank.spectrum.band_power` over rectangular channels of
    ``channel_bandwidth``.  All of these
    are engineering estimates, not compliance measurements.  Cost: a few
    passes per model evaluation; an output back-off takes some tens of
    evaluations.

    Examples
    --------
    >>> import numpy as np
    >>> from tonebank.amplifier import RappAmplifier, drive
    >>> rng = np.random.default_rng(4)
    >>> x = rng.standard_normal(20000) + 1j * rng.standard_normal(20000)
    >>> res = drive(x, RappAmplifier(3.0), input_backoff_db=8.0)
    >>> round(res.input_backoff_db, 6)
    8.0
    >>> bool(res.evm_percent < 10), bool(res.output_backoff_db > 8.0)
    (True, True)
    """
    x = _samples(samples)
    if not isinstance(model, AmplifierModel):
        raise TypeError(f"model must be a tonebank.amplifier.AmplifierModel, got "
                        f"{type(model).__name__}")
    if (input_backoff_db is None) == (output_backoff_db is None):
        raise ValueError("give exactly one of input_backoff_db and output_backoff_db, got "
                         f"input_backoff_db={input_backoff_db!r}, "
                         f"output_backoff_db={output_backoff_db!r}")
    for value, name in ((input_backoff_db, "input_backoff_db"),
                        (output_backoff_db, "output_backoff_db")):
        if value is not None and (isinstance(value, (bool, np.bool_))
                                  or not isinstance(value, numbers.Real)):
            raise TypeError(f"{name} must be a real number in dB, got {value!r}")
        if value is not None and not math.isfinite(float(value)):
            raise ValueError(f"{name} must be finite, got {value!r}")
    if (sample_rate is None) != (channel_bandwidth is None):
        raise ValueError("give sample_rate and channel_bandwidth together for ACLR, got "
                         f"sample_rate={sample_rate!r}, channel_bandwidth={channel_bandwidth!r}")
    p_in = float(np.mean(np.abs(x.astype(np.complex128)) ** 2)) if x.size else 0.0
    if p_in == 0:
        raise ValueError("samples has zero mean power (or no samples); nothing to drive")
    offsets = None
    if sample_rate is not None:
        fs = _positive(sample_rate, "sample_rate")
        bw = _positive(channel_bandwidth, "channel_bandwidth")
        offsets = (-bw, bw) if aclr_offsets is None else aclr_offsets
        offsets = np.asarray(offsets)
        if offsets.dtype.kind not in "iuf" or offsets.ndim != 1 or offsets.size == 0:
            raise TypeError(f"aclr_offsets must be a 1-D sequence of offsets in Hz, got "
                            f"{aclr_offsets!r}")
        if np.any(np.abs(offsets) + bw / 2 > fs / 2) or not np.all(np.isfinite(offsets)):
            raise ValueError(f"aclr_offsets {offsets.tolist()} with channel_bandwidth={bw} "
                             f"reach beyond the sample rate's band +-{fs / 2} Hz; "
                             "oversample the signal more")
    p_sat_in = model.input_saturation ** 2
    p_sat_out = model.output_saturation ** 2
    x128 = x.astype(np.complex128)

    def out_power(ibo):
        y = model(x128 * math.sqrt(p_sat_in * 10 ** (-ibo / 10) / p_in))
        return float(np.mean(np.abs(y) ** 2))

    if input_backoff_db is not None:
        ibo = float(input_backoff_db)
    else:
        target = p_sat_out * 10 ** (-float(output_backoff_db) / 10)
        lo, hi = -3.0, 60.0     # drive range searched, dB of input back-off
        if out_power(hi) > target:
            raise ValueError(f"output_backoff_db={output_backoff_db!r} needs an input "
                             f"back-off above {hi} dB; ask for a smaller back-off")
        if out_power(lo) < target:
            raise ValueError(f"output_backoff_db={output_backoff_db!r} is not reachable: the "
                             f"model's output stays below it at {-lo} dB input overdrive")
        ibo = scipy.optimize.brentq(lambda b: out_power(b) - target, lo, hi, xtol=1e-9)
    xin = x128 * math.sqrt(p_sat_in * 10 ** (-ibo / 10) / p_in)
    y = model(xin)
    p_out = float(np.mean(np.abs(y) ** 2))
    energy = float(np.sum(np.abs(xin) ** 2))
    gain = complex(np.sum(y * np.conj(xin)) / energy)
    err = float(np.sum(np.abs(y - gain * xin) ** 2))
    evm = 100.0 * math.sqrt(err / (abs(gain) ** 2 * energy)) if gain != 0 else math.inf
    aclr = None
    if offsets is not None:
        aclr = _aclr_db(y, fs, bw, offsets)
    obo = math.inf if p_out == 0 else 10 * math.log10(p_sat_out / p_out)
    return DriveResult(y.astype(x.dtype, copy=False), ibo, obo, gain, evm, aclr)
