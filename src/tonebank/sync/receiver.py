"""A frame format and the receiver chain that finds and decodes its frames in a stream.

:class:`FrameFormat` describes a frame (preamble, ``n_symbols`` CP-OFDM
data symbols on a plan with its pilots, one constellation) and builds
it from bits.  :class:`FrameReceiver` runs the chain on a continuous
stream that holds frames at unknown positions:

detect (:func:`~tonebank.sync.detect_frames`) -> coarse timing and
fractional offset -> integer offset (:func:`~tonebank.sync.integer_cfo`,
two-halves preambles) -> fine timing on the training symbol -> fine
offset from the repeated region (:func:`~tonebank.sync.repeat_cfo`) ->
analysis (:meth:`tonebank.CpOfdm.demodulate`) -> pilot phase tracking
(:func:`~tonebank.sync.pilot_phase`) -> channel estimation from the
training symbols (:func:`tonebank.estimation.estimate_from_training`) ->
MMSE equalisation (:func:`tonebank.equalization.equalize_mmse`) -> LLRs
(:meth:`tonebank.Constellation.llr`)

and returns one :class:`FrameReport` per frame: where it starts, the
offset and SNR it measured, the equalised symbols, LLRs and hard bits.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from .._checks import integer
from ..constellation import Constellation
from ..equalization import equalize_mmse
from ..estimation import estimate_from_training
from ..plan import CarrierPlan
from ..waveforms import CpOfdm
from .frequency import _finite, correct_cfo, integer_cfo, repeat_cfo
from .preamble import Preamble
from .timing import DEFAULT_THRESHOLD, _fraction, _regions, _signal, timing_metric
from .tracking import PilotPhase, derotate, pilot_phase

__all__ = ["FrameFormat", "FrameReceiver", "FrameReport"]


class FrameFormat:
    """A frame of a preamble and ``n_symbols`` CP-OFDM data symbols (immutable).

    Parameters
    ----------
    plan : tonebank.CarrierPlan
        Data and pilot subcarriers and the prefix (one prefix length).
    constellation : tonebank.Constellation
        Mapping of the data subcarriers.
    n_symbols : int
        Data symbols per frame (>= 1).
    preamble : Preamble, optional
        Default: :meth:`Preamble.two_halves` of ``plan``.

    Raises
    ------
    TypeError
        Arguments of the wrong type.
    ValueError
        A prefix pattern with more than one length, a preamble for another
        ``n_fft``, ``n_symbols < 1``.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank import sync
    >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
    >>> fmt = sync.FrameFormat(plan, tonebank.Constellation.qam(16), 10)
    >>> fmt.n_bits, fmt.n_samples
    (1920, 960)
    >>> x = fmt.transmit(np.random.default_rng(0).integers(0, 2, fmt.n_bits))
    >>> x.shape
    (960,)
    """

    __slots__ = ("_plan", "_constellation", "_n_symbols", "_preamble", "_ofdm", "_frozen")

    def __init__(self, plan: CarrierPlan, constellation: Constellation, n_symbols: int, *,
                 preamble: Preamble | None = None):
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        if not isinstance(constellation, Constellation):
            raise TypeError("constellation must be a tonebank.Constellation, got "
                            f"{type(constellation).__name__}")
        if len(plan.cp_lengths) != 1:
            raise ValueError(f"plan must have one prefix length, got {plan.cp_lengths}")
        self._n_symbols = integer(n_symbols, "n_symbols", minimum=1)
        if preamble is None:
            preamble = Preamble.two_halves(plan)
        elif not isinstance(preamble, Preamble):
            raise TypeError(f"preamble must be a tonebank.sync.Preamble, got "
                            f"{type(preamble).__name__}")
        if preamble.n_fft != plan.n_fft:
            raise ValueError(f"preamble is for n_fft={preamble.n_fft}, plan has "
                             f"n_fft={plan.n_fft}")
        self._plan = plan
        self._constellation = constellation
        self._preamble = preamble
        self._ofdm = CpOfdm(plan)
        self._frozen = True

    def __setattr__(self, key, value):
        if hasattr(self, "_frozen"):
            raise AttributeError(f"{type(self).__name__} is immutable; build a new one")
        object.__setattr__(self, key, value)

    @property
    def plan(self) -> CarrierPlan:
        """The carrier plan."""
        return self._plan

    @property
    def constellation(self) -> Constellation:
        """The data constellation."""
        return self._constellation

    @property
    def n_symbols(self) -> int:
        """Data symbols per frame."""
        return self._n_symbols

    @property
    def preamble(self) -> Preamble:
        """The preamble."""
        return self._preamble

    @property
    def waveform(self) -> CpOfdm:
        """The CP-OFDM waveform of the data symbols."""
        return self._ofdm

    @property
    def n_bits(self) -> int:
        """Bits carried by one frame."""
        return self._n_symbols * self._plan.n_data * self._constellation.bits_per_symbol

    @property
    def n_samples(self) -> int:
        """Samples in one frame (preamble included)."""
        return self._preamble.n_samples + self._ofdm.n_samples(self._n_symbols)

    def transmit(self, bits) -> np.ndarray:
        """Bits to frame samples.

        Parameters
        ----------
        bits : array_like of int
            Shape ``(..., n_bits)``, values 0 or 1.

        Returns
        -------
        ndarray
            complex128, shape ``(..., n_samples)``: the preamble, then the
            data symbols with the plan's pilots.

        Raises
        ------
        ValueError
            A last axis other than ``n_bits``, values other than 0 and 1.
        """
        b = np.asarray(bits)
        if b.ndim == 0 or b.shape[-1] != self.n_bits:
            raise ValueError(f"bits must have shape (..., n_bits={self.n_bits}), got "
                             f"{b.shape}")
        data = self._constellation.map(b)
        body = self._ofdm.modulate(data)
        pre = np.broadcast_to(self._preamble.samples, b.shape[:-1] + (self._preamble.n_samples,))
        return np.concatenate((pre, body), axis=-1)

    def __repr__(self):
        return (f"FrameFormat({self._plan!r}, {self._constellation!r}, "
                f"{self._n_symbols}, preamble={self._preamble!r})")


class FrameReport(NamedTuple):
    """What :meth:`tonebank.sync.FrameReceiver.receive` found about one frame."""

    #: Index in the stream of the frame's first preamble sample.
    start: int
    #: Estimated carrier frequency offset in subcarrier spacings.
    cfo_spacings: float
    #: The same in Hz (None when the plan has no sample rate).
    cfo_hz: float | None
    #: Estimated per-sample SNR in dB, from the repeated preamble region.
    snr_db: float
    #: Peak of the detection metric.
    metric_peak: float
    #: Equalised data symbols, shape ``(n_symbols, n_data)`` (None if incomplete).
    symbols: np.ndarray | None
    #: Noise variance of each equalised symbol, same shape (None if incomplete).
    noise_var: np.ndarray | None
    #: LLRs, shape ``(n_bits,)``, positive favours 0 (None if incomplete).
    llr: np.ndarray | None
    #: Hard decisions from the LLRs, uint8, shape ``(n_bits,)`` (None if incomplete).
    bits: np.ndarray | None
    #: Per-symbol pilot phases used for tracking (None without pilots or if incomplete).
    pilot_phase: PilotPhase | None
    #: False when the stream ends before the frame does (nothing decoded).
    complete: bool


class FrameReceiver:
    """The synchronising receiver of a :class:`tonebank.sync.FrameFormat` (immutable).

    Parameters
    ----------
    frame_format : FrameFormat
        What to look for.
    threshold : float, optional
        Detection threshold on the timing metric, in (0, 1]; default
        :data:`tonebank.sync.DEFAULT_THRESHOLD` (0.5).
    max_cfo_spacings : float, optional
        Largest offset searched, in spacings.  Default: the preamble's
        coarse range for preambles without an integer search (2 for
        802.11a), 4 for two-halves preambles.
    tracking : bool, optional
        Remove each symbol's pilot phase (common phase and slope) before
        equalisation (default true).
    n_taps : int, optional
        Taps of the DFT-smoothed channel estimate; default ``cp + 1``
        (capped at the number of training subcarriers).

    Raises
    ------
    TypeError, ValueError
        Arguments of the wrong type or out of range.

    See Also
    --------
    FrameFormat, FrameReport

    Notes
    -----
    Detection uses the metric normalised by the energy of both halves
    (see :func:`timing_metric`), which stays below 1 at the end of a burst
    where the second-half normalisation of Schmidl and Cox blows up.

    Fine timing: the stream is cross-correlated with the training symbols
    (and the prefix before them) over lags around the coarse timing; lags
    within 10 dB of the strongest and within one prefix length of it are
    taken as paths.  The FFT windows
    are placed in the middle of the range of starts that keep every path
    within the prefix (no inter-symbol interference), and the frame start
    reported is the earliest path.  The channel estimate absorbs the
    resulting delay.

    SNR: with the repeated region :math:`x_m, x_{m+L}` (equal but for
    noise after the offset is removed), the noise variance per sample is
    :math:`\\hat\\sigma^2 = \\overline{|x_{m+L} - x_m|^2}/2` and the SNR
    :math:`(\\overline{|x|^2} - \\hat\\sigma^2)/\\hat\\sigma^2`.  With the
    unitary DFT of :class:`tonebank.CpOfdm` the noise variance per
    subcarrier equals :math:`\\hat\\sigma^2`; it feeds the equaliser and
    the LLRs.

    Cost per stream of :math:`n` samples: the metric, :math:`O(n)`, plus
    per frame a few FFTs, a cross-correlation of ``n_fft`` by about
    ``3 cp`` lags and the analysis of its symbols.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank import sync
    >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
    >>> fmt = sync.FrameFormat(plan, tonebank.Constellation.qpsk(), 6)
    >>> rng = np.random.default_rng(1)
    >>> bits = rng.integers(0, 2, fmt.n_bits)
    >>> stream = np.concatenate((np.zeros(300), fmt.transmit(bits), np.zeros(200)))
    >>> n = np.arange(stream.size)
    >>> stream = stream * np.exp(2j * np.pi * 1.3 * n / 64)            # 1.3 spacings
    >>> stream = stream + 0.01 * (rng.standard_normal(n.size) + 1j * rng.standard_normal(n.size))
    >>> [report] = sync.FrameReceiver(fmt).receive(stream)
    >>> report.start, round(report.cfo_spacings, 2), int(np.sum(report.bits != bits))
    (300, 1.3, 0)
    """

    __slots__ = ("_format", "_threshold", "_max_cfo", "_tracking", "_n_taps", "_template",
                 "_template_offset", "_frozen")

    def __init__(self, frame_format: FrameFormat, *, threshold: float = DEFAULT_THRESHOLD,
                 max_cfo_spacings: float | None = None, tracking: bool = True,
                 n_taps: int | None = None):
        if not isinstance(frame_format, FrameFormat):
            raise TypeError("frame_format must be a tonebank.sync.FrameFormat, got "
                            f"{type(frame_format).__name__}")
        self._format = frame_format
        self._threshold = _fraction(threshold, "threshold")
        pre = frame_format.preamble
        if max_cfo_spacings is None:
            max_cfo_spacings = 4.0 if pre.halves_grid is not None else pre.coarse_range_spacings
        self._max_cfo = _finite(max_cfo_spacings, "max_cfo_spacings")
        if self._max_cfo < 0:
            raise ValueError(f"max_cfo_spacings must be >= 0, got {max_cfo_spacings}")
        if pre.halves_grid is None and self._max_cfo > pre.coarse_range_spacings:
            raise ValueError(f"max_cfo_spacings={max_cfo_spacings} exceeds the "
                             f"{pre.coarse_range_spacings:g} spacings this preamble resolves "
                             "(it has no integer-offset search)")
        if not isinstance(tracking, bool):
            raise TypeError(f"tracking must be True or False, got {tracking!r}")
        self._tracking = tracking
        n_train = int(np.count_nonzero(pre.training))
        cp = frame_format.plan.cp_lengths[0]
        self._n_taps = (min(cp + 1, n_train) if n_taps is None
                        else integer(n_taps, "n_taps", minimum=1, maximum=n_train))
        # Fine-timing template: the training symbols with the prefix
        # before the first one, as transmitted.
        lead = min(cp, pre.training_starts[0])
        t = pre.samples[pre.training_starts[0] - lead:pre.training_starts[-1] + pre.n_fft]
        self._template = np.array(t)
        self._template.flags.writeable = False
        self._template_offset = pre.training_starts[0] - lead
        self._frozen = True

    def __setattr__(self, key, value):
        if hasattr(self, "_frozen"):
            raise AttributeError(f"{type(self).__name__} is immutable; build a new one")
        object.__setattr__(self, key, value)

    @property
    def frame_format(self) -> FrameFormat:
        """The frame format."""
        return self._format

    @property
    def threshold(self) -> float:
        """The detection threshold."""
        return self._threshold

    def __repr__(self):
        return (f"FrameReceiver({self._format!r}, threshold={self._threshold}, "
                f"max_cfo_spacings={self._max_cfo}, tracking={self._tracking})")

    def receive(self, samples) -> list[FrameReport]:
        """Find and decode every frame in a stream.

        Parameters
        ----------
        samples : array_like of complex
            Shape ``(n,)``: the received stream (one sample per plan
            sample).

        Returns
        -------
        list of FrameReport
            In stream order; frames cut off by the end of the stream come
            with ``complete=False``.

        Raises
        ------
        TypeError, ValueError
            Non-numeric, non-finite or multi-axis samples.
        """
        x = _signal(samples).astype(np.complex128)
        if x.ndim != 1:
            raise ValueError(f"samples must be one stream of shape (n,), got {x.shape}")
        fmt = self._format
        pre = fmt.preamble
        if x.size < pre.period + pre.window:
            return []
        tm = timing_metric(x, pre.period, window=pre.window, normalization="both_halves")
        # A real plateau is at least a few samples wide; a dent of up to a
        # quarter window (a fade, a noise dip) does not split a frame.
        found = _regions(tm, self._threshold, 0.9, max(2, pre.window // 8),
                         max(1, pre.window // 4))
        reports = []
        next_free = 0
        for det in found:
            if det.index < next_free:
                continue
            report = self._frame(x, det)
            if report is None:
                continue
            reports.append(report)
            next_free = report.start + fmt.n_samples - pre.plateau[1]
        return reports

    # ---- one frame -------------------------------------------------------------

    def _frame(self, x: np.ndarray, det) -> FrameReport | None:
        fmt = self._format
        pre = fmt.preamble
        plan = fmt.plan
        n = plan.n_fft
        cp = plan.cp_lengths[0]
        # Coarse start: the plateau's middle is the detection index.
        coarse = det.index - (pre.plateau[0] + pre.plateau[1]) // 2
        search = cp + (pre.plateau[1] - pre.plateau[0]) // 2 + 2
        lo = max(0, coarse - search - cp)
        hi = min(x.size, coarse + fmt.n_samples + search + cp)
        seg = x[lo:hi]
        eps = float(np.angle(det.correlation) * n / (2 * math.pi * pre.period))
        seg = correct_cfo(seg, eps, n)
        rel = coarse - lo                      # coarse start within seg
        # Integer offset from the two known symbols (two-halves preambles).
        if pre.halves_grid is not None and self._max_cfo >= 2:
            a = rel + pre.halves_start
            b = rel + pre.training_starts[0]
            if a >= 0 and b + n <= seg.size:
                step = int(round(n / pre.period))
                g = integer_cfo(seg[a:a + n], seg[b:b + n], pre.halves_grid, pre.training,
                                max_spacings=self._max_cfo, step=step)
                if g:
                    seg = correct_cfo(seg, g, n)
                    eps += g
        # Fine timing on the first training symbol.
        timing = self._fine_timing(seg, rel, search)
        if timing is None:
            return None
        start, first_path = timing
        # Fine offset and noise from the repeated region.
        r = pre.repeated
        a = start + r.start
        if a < 0 or a + r.period + r.length > seg.size:
            return None
        fine = repeat_cfo(seg, r.period, n, start=a, length=r.length)
        if pre.halves_grid is None or fine != 0.0:
            seg = correct_cfo(seg, fine, n)
            eps += fine
        first = seg[a:a + r.length]
        second = seg[a + r.period:a + r.period + r.length]
        noise_var = max(float(np.mean(np.abs(second - first) ** 2)) / 2, 1e-30)
        power = float(np.mean(np.abs(np.concatenate((first, second))) ** 2))
        snr_db = 10 * math.log10(max(power - noise_var, 1e-30) / noise_var)
        frame_start = lo + first_path
        cfo_hz = None if plan.sample_rate is None else eps * plan.subcarrier_spacing
        data_start = start + pre.n_samples
        data_len = fmt.waveform.n_samples(fmt.n_symbols)
        if data_start + data_len > seg.size or lo + data_start + data_len > x.size:
            return FrameReport(frame_start, eps, cfo_hz, snr_db, det.peak, None, None, None,
                               None, None, False)
        # Channel from the training symbols.
        bodies = np.stack([seg[start + s:start + s + n] for s in pre.training_starts])
        grids = np.fft.fft(bodies, norm="ortho")
        est = estimate_from_training(grids, pre.training, frequency="dft",
                                     n_taps=self._n_taps)
        h = est.channel
        data, pilots = fmt.waveform.demodulate(seg[data_start:data_start + data_len])
        data = data.reshape(fmt.n_symbols, plan.n_data)
        phase = None
        if self._tracking and plan.n_pilots:
            phase = pilot_phase(pilots, plan.pilots_for(fmt.n_symbols),
                                plan.pilot_subcarriers, channel=h[plan.pilot_bins])
            data = derotate(data, plan.data_subcarriers, phase)
        # The estimate's own error: a fit of n_taps taps to K bins of R
        # averaged repeats leaves about n_taps / (K R) of the noise.
        k_train = int(np.count_nonzero(pre.training))
        h_err = noise_var * self._n_taps / (k_train * len(pre.training_starts))
        eq = equalize_mmse(data, h[plan.data_bins], noise_var, channel_error_var=h_err)
        llr = fmt.constellation.llr(eq.symbols, eq.noise_var).reshape(-1)
        bits = (llr < 0).astype(np.uint8)
        return FrameReport(frame_start, eps, cfo_hz, snr_db, det.peak, eq.symbols,
                           eq.noise_var, llr, bits, phase, True)

    def _fine_timing(self, seg: np.ndarray, rel: int, search: int):
        """``(window, first)``: preamble start for the FFT windows and of the
        first path within ``seg``, from the training symbols; None if out of range."""
        t = self._template
        offset = self._template_offset     # template start within the preamble
        first = max(0, rel + offset - search)
        last = min(seg.size - t.size, rel + offset + search)
        if last < first:
            return None
        lags = np.arange(first, last + 1)
        # numpy.correlate conjugates its second argument: c = |sum conj(t) y|^2
        # (a direct sum; no BLAS threads for a product this small).
        c = np.abs(np.correlate(seg[first:last + t.size], t, mode="valid")) ** 2
        # Paths: lags within 10 dB of the strongest (the sidelobes of a
        # pseudo-random template of T samples sit near 1/T of the peak) and
        # within one prefix of it (a repeated training symbol gives a
        # sidelobe one symbol away, which is no path).
        cp = self._format.plan.cp_lengths[0]
        peak = int(np.argmax(c))
        near = np.abs(np.arange(c.size) - peak) <= cp
        paths = lags[near & (c >= 0.1 * c[peak])] - offset
        earliest, latest = int(paths.min()), int(paths.max())
        # Every start in [latest - cp, earliest] keeps all paths within the
        # prefix; take the middle of that range.
        return (latest - cp + earliest) // 2, earliest
