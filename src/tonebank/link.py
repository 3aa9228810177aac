r"""A link described by its parts, run frame by frame at an SNR.

:class:`Link` puts the library's own stages in a row and runs random
frames through them:

bits -> constellation -> pilots (a :class:`~tonebank.PilotPattern`, or
the plan's own) -> peak control (:class:`~tonebank.papr.SelectiveMapping`,
:class:`ClipAndFilter` or :class:`Clipping`) -> waveform (synthesize) ->
:class:`Amplifier` -> :class:`Fading` channel (one realisation per frame,
``n_rx`` receive branches) -> AWGN at the requested SNR -> impairments
(receiver front end) -> waveform (analyze) -> channel knowledge (pilot
estimate or the true response) -> equalisation or combining -> peak
control undone (SLM index) -> LLRs -> hard decisions -> counts.

Every stage is one of the library's objects; this module only chains them
and counts.  :meth:`Link.run` returns a :class:`LinkResult` whose
``counts`` add over runs (the trial protocol of :mod:`tonebank.sweep`).

SNR convention.  ``snr_db`` is :math:`E_s/N_0` (``snr="esn0"``, the
default) or :math:`E_b/N_0` (``snr="ebn0"``) per used subcarrier, cyclic
prefix included, as defined in :mod:`tonebank.channel.noise`, taken
against the mean power actually transmitted by the batch of frames
(after peak control and the amplifier) and the plan's nominal symbol
length.  The fading channel keeps the mean power (normalised profiles),
so it is a mean SNR per receive branch.  The noise variance per sample
equals the noise variance per bin after the unitary analysis.

The figures are engineering estimates from a simulation model, not
measurements of any equipment.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import NamedTuple

import numpy as np

from . import papr as _papr
from ._checks import choice, generator, integer, real
from .amplifier import AmplifierModel, drive
from .channel import DelayProfile, TappedDelayLine
from .channel.noise import ebn0_to_snr_db, esn0_to_bin_snr_db, esn0_to_snr_db
from .combining import combine_egc, combine_mrc, combine_selection
from .constellation import Constellation
from .equalization import equalize_mmse, equalize_zf
from .estimation import ChannelEstimator, FrequencyCorrelation
from .pilots import PilotPattern
from .plan import CarrierPlan
from .waveforms import CpOfdm, FbmcOqam, Waveform

__all__ = ["Amplifier", "ClipAndFilter", "Clipping", "Fading", "Link", "LinkResult",
           "Receiver", "add_counts"]

#: Keys every :attr:`LinkResult.counts` holds (integers), in this order.
ERROR_KEYS = ("bit_errors", "bits", "symbol_errors", "symbols", "frame_errors", "frames")

_SNR_CONVENTIONS = ("esn0", "ebn0")


def _set(obj, **values) -> None:
    """Set the fields of a frozen dataclass from its own ``__post_init__``."""
    for key, value in values.items():
        object.__setattr__(obj, key, value)


# ---- transmitter stages -------------------------------------------------------------


@dataclass(frozen=True)
class Clipping:
    """Clip the synthesized samples at a ratio above their RMS (:func:`tonebank.papr.clip`).

    Parameters
    ----------
    clip_ratio_db : float
        Clipping level over the RMS amplitude of each frame, dB.

    Examples
    --------
    >>> from tonebank.link import Clipping
    >>> Clipping(6.0)
    Clipping(clip_ratio_db=6.0)
    """

    clip_ratio_db: float

    def __post_init__(self):
        _set(self, clip_ratio_db=real(self.clip_ratio_db, "clip_ratio_db"))

    def describe(self) -> dict:
        """JSON-ready description."""
        return {"kind": "clipping", **asdict(self)}


@dataclass(frozen=True)
class ClipAndFilter:
    """Iterative clipping and filtering of each symbol (:func:`tonebank.papr.clip_and_filter`).

    Parameters
    ----------
    clip_ratio_db : float
        Clipping level over the RMS amplitude, dB.
    iterations : int, optional
        Clip-and-filter passes (default 4).
    oversampling : int, optional
        Oversampling of the peak search (default 4).

    Examples
    --------
    >>> from tonebank.link import ClipAndFilter
    >>> ClipAndFilter(5.0, iterations=2).iterations
    2
    """

    clip_ratio_db: float
    iterations: int = 4
    oversampling: int = 4

    def __post_init__(self):
        _set(self, clip_ratio_db=real(self.clip_ratio_db, "clip_ratio_db"),
             iterations=integer(self.iterations, "iterations", minimum=1),
             oversampling=integer(self.oversampling, "oversampling", minimum=1))

    def describe(self) -> dict:
        """JSON-ready description."""
        return {"kind": "clip_and_filter", **asdict(self)}


@dataclass(frozen=True)
class Amplifier:
    """A power amplifier model driven at a back-off (:func:`tonebank.amplifier.drive`).

    Parameters
    ----------
    model : tonebank.amplifier.AmplifierModel
        The AM/AM and AM/PM curves.
    input_backoff_db, output_backoff_db : float, optional
        Give exactly one: mean input (or output) power below saturation,
        dB, set over the whole batch of frames.

    Raises
    ------
    TypeError
        ``model`` is not an amplifier model.
    ValueError
        Both or neither back-off given.

    Examples
    --------
    >>> from tonebank.amplifier import RappAmplifier
    >>> from tonebank.link import Amplifier
    >>> Amplifier(RappAmplifier(smoothness=2.0), input_backoff_db=6.0).input_backoff_db
    6.0
    """

    model: AmplifierModel
    input_backoff_db: float | None = None
    output_backoff_db: float | None = None

    def __post_init__(self):
        if not isinstance(self.model, AmplifierModel):
            raise TypeError("model must be a tonebank.amplifier.AmplifierModel, got "
                            f"{type(self.model).__name__}")
        ibo, obo = self.input_backoff_db, self.output_backoff_db
        if (ibo is None) == (obo is None):
            raise ValueError("give exactly one of input_backoff_db and output_backoff_db")
        _set(self, input_backoff_db=None if ibo is None else real(ibo, "input_backoff_db"),
             output_backoff_db=None if obo is None else real(obo, "output_backoff_db"))

    def describe(self) -> dict:
        """JSON-ready description."""
        return {"kind": "amplifier", "model": repr(self.model),
                "input_backoff_db": self.input_backoff_db,
                "output_backoff_db": self.output_backoff_db}


# ---- channel --------------------------------------------------------------------------


@dataclass(frozen=True)
class Fading:
    """A multipath fading channel: one tapped-delay-line realisation per frame.

    Parameters
    ----------
    profile : tonebank.channel.DelayProfile
        Path delays and powers (normalised: the mean power is kept).
    max_doppler_hz : float, optional
        Maximum Doppler shift (default 0: block fading, static within a
        frame).
    k_factor : float, optional
        Rician K-factor of the first path (linear); None (default) for
        Rayleigh.
    n_rx : int, optional
        Receive branches, each its own independent realisation (default 1).
    interpolation : {"sinc", "nearest"}, optional
        How delays between samples are realised (default ``"sinc"``).

    Raises
    ------
    TypeError, ValueError
        Arguments of the wrong type or out of range.

    See Also
    --------
    tonebank.channel.TappedDelayLine : the realisation drawn per frame.

    Examples
    --------
    >>> import tonebank
    >>> from tonebank.link import Fading
    >>> ch = Fading(tonebank.DelayProfile.published("tdl_a", delay_spread_s=1e-7), n_rx=2)
    >>> ch.n_rx
    2
    """

    profile: DelayProfile
    max_doppler_hz: float = 0.0
    k_factor: float | None = None
    n_rx: int = 1
    interpolation: str = "sinc"

    def __post_init__(self):
        if not isinstance(self.profile, DelayProfile):
            raise TypeError("profile must be a tonebank.DelayProfile, got "
                            f"{type(self.profile).__name__}")
        _set(self, max_doppler_hz=real(self.max_doppler_hz, "max_doppler_hz", minimum=0.0),
             k_factor=None if self.k_factor is None
             else real(self.k_factor, "k_factor", minimum=0.0),
             n_rx=integer(self.n_rx, "n_rx", minimum=1),
             interpolation=choice(self.interpolation, "interpolation", ("sinc", "nearest")))

    def realise(self, sample_rate: float, rng) -> TappedDelayLine:
        """One realisation (all ``n_rx`` branches) at ``sample_rate``."""
        return TappedDelayLine(self.profile, sample_rate, max_doppler_hz=self.max_doppler_hz,
                               k_factor=self.k_factor, branches=self.n_rx,
                               interpolation=self.interpolation, rng=rng)

    def describe(self) -> dict:
        """JSON-ready description."""
        p = self.profile
        return {"kind": "fading", "profile": repr(p),
                "delays_s": [float(v) for v in p.delays_s],
                "powers": [float(v) for v in p.powers],
                "max_doppler_hz": self.max_doppler_hz, "k_factor": self.k_factor,
                "n_rx": self.n_rx, "interpolation": self.interpolation}


# ---- receiver -------------------------------------------------------------------------


@dataclass(frozen=True)
class Receiver:
    """What the receiver knows and how it decides.

    Parameters
    ----------
    estimation : {"pilots", "perfect"}, optional
        Estimate the channel from the pilots with a
        :class:`tonebank.estimation.ChannelEstimator` (default), or use
        the true response of the channel (and the transmitter's linear
        gain).
    frequency, time : str, optional
        The estimator's interpolation methods (default ``"linear"``, see
        :class:`~tonebank.estimation.ChannelEstimator`).  For ``"lmmse"``
        the assumed correlation is the link's own delay profile (or a
        single path without fading) and the SNR the point's bin SNR; for
        ``"wiener"`` the Doppler is the channel's.
    n_taps : int, optional
        Channel length for ``frequency="dft"``.
    equalizer : {"mmse", "zf"}, optional
        One-tap equaliser for a single receive branch (default ``"mmse"``).
    combining : {"mrc", "egc", "selection"}, optional
        How several receive branches are combined (default ``"mrc"``).
    exact_llr : bool, optional
        Exact LLRs instead of max-log (default false).
    slm_recovery : {"side", "blind"}, optional
        How the SLM candidate index is found (default ``"side"``; see
        :meth:`tonebank.papr.SelectiveMapping.recover`).

    Examples
    --------
    >>> from tonebank.link import Receiver
    >>> Receiver(frequency="lmmse", time="average").frequency
    'lmmse'
    """

    estimation: str = "pilots"
    frequency: str = "linear"
    time: str = "linear"
    n_taps: int | None = None
    equalizer: str = "mmse"
    combining: str = "mrc"
    exact_llr: bool = False
    slm_recovery: str = "side"

    def __post_init__(self):
        if not isinstance(self.exact_llr, (bool, np.bool_)):
            raise TypeError(f"exact_llr must be True or False, got {self.exact_llr!r}")
        _set(self, estimation=choice(self.estimation, "estimation", ("pilots", "perfect")),
             frequency=choice(self.frequency, "frequency", ("linear", "spline", "dft", "lmmse")),
             time=choice(self.time, "time", ("linear", "average", "wiener")),
             n_taps=None if self.n_taps is None else integer(self.n_taps, "n_taps", minimum=1),
             equalizer=choice(self.equalizer, "equalizer", ("mmse", "zf")),
             combining=choice(self.combining, "combining", ("mrc", "egc", "selection")),
             exact_llr=bool(self.exact_llr),
             slm_recovery=choice(self.slm_recovery, "slm_recovery", ("side", "blind")))

    def describe(self) -> dict:
        """JSON-ready description."""
        return asdict(self)


# ---- results --------------------------------------------------------------------------


class LinkResult(NamedTuple):
    """What :meth:`tonebank.link.Link.run` counted over its frames.

    ``counts`` holds additive tallies: the integers of ``ERROR_KEYS``
    and float sums (``evm_error_energy`` and ``evm_reference_energy`` of
    the equalised data, ``papr_db_sum`` over frames, and where they apply
    ``slm_index_errors`` / ``slm_indices``, ``amplifier_evm2_sum`` (squared
    EVM times frames) and ``estimate_error_energy`` / ``estimate_cells``).  Two results add with
    :func:`add_counts`; the properties below read any such dict.
    """

    #: Additive tallies (see the class notes).
    counts: dict
    #: Bits of one frame.
    bits_per_frame: int
    #: With ``run(..., detail=True)``: arrays for figures and checks --
    #: ``symbols`` and ``sent`` (equalised and sent data cells, shape
    #: ``(n_frames, n_cells)``), ``channel`` (what the receiver used) and
    #: ``channel_true`` (None without fading), shape ``(n_frames, n_rx,
    #: n_symbols, n_fft)``.  None otherwise.
    detail: dict | None = None

    @property
    def ber(self) -> float:
        """Bit error rate."""
        return _rate(self.counts, "bit_errors", "bits")

    @property
    def ser(self) -> float:
        """Symbol (constellation point) error rate."""
        return _rate(self.counts, "symbol_errors", "symbols")

    @property
    def fer(self) -> float:
        """Frame error rate (a frame with any bit in error)."""
        return _rate(self.counts, "frame_errors", "frames")

    @property
    def evm_percent(self) -> float:
        """RMS EVM of the equalised data against the sent points, percent."""
        c = self.counts
        return 100.0 * math.sqrt(c["evm_error_energy"] / c["evm_reference_energy"])

    @property
    def mean_papr_db(self) -> float:
        """Mean PAPR of the transmitted frames, dB."""
        return self.counts["papr_db_sum"] / self.counts["frames"]

    @property
    def amplifier_evm_percent(self) -> float | None:
        """RMS EVM the amplifier adds (all distortion, before the channel), percent."""
        c = self.counts
        if "amplifier_evm2_sum" not in c:
            return None
        return 100.0 * math.sqrt(c["amplifier_evm2_sum"] / c["frames"])

    @property
    def estimate_mse(self) -> float | None:
        """Mean squared error of the channel estimate on the data cells (None if not measured)."""
        c = self.counts
        if not c.get("estimate_cells"):
            return None
        return c["estimate_error_energy"] / c["estimate_cells"]


def _rate(counts: dict, errors: str, total: str) -> float:
    return counts[errors] / counts[total] if counts[total] else float("nan")


def add_counts(a: dict, b: dict) -> dict:
    """Key-by-key sum of two count dicts (the union of two runs)."""
    out = dict(a)
    for k, v in b.items():
        out[k] = out.get(k, 0) + v
    return out


# ---- the link -------------------------------------------------------------------------


class Link:
    r"""A link described by parts, validated when built (immutable).

    Parameters
    ----------
    plan : tonebank.CarrierPlan
        Subcarriers and prefix; needs ``sample_rate`` for a fading
        channel or sampled impairments.
    constellation : tonebank.Constellation
        Mapping of every data cell.
    n_symbols : int, optional
        Symbols per frame (default 14).
    waveform : tonebank.Waveform, optional
        A waveform on ``plan`` (default :class:`tonebank.CpOfdm`).
        :class:`tonebank.FbmcOqam` needs ``Receiver(estimation="perfect")``
        and one receive branch.
    pilots : tonebank.PilotPattern, optional
        Where the pilots are (default: the plan's own pilots).
    peak : tonebank.papr.SelectiveMapping or ClipAndFilter or Clipping, optional
        Peak control before the amplifier.  Selective mapping carries
        the plan's pilots only (no separate ``pilots``).
    amplifier : Amplifier, optional
        The power amplifier and its back-off.
    channel : Fading, optional
        Multipath fading; None for AWGN only (one branch).
    impairments : tuple, optional
        Receiver front-end stages of ``tonebank.channel``
        (``FrequencyOffset``, ``PhaseNoise``, ``IqImbalance``,
        ``DcOffset``, ...), applied after the noise, in order.  A stage
        with a ``with_rng`` method (phase noise) draws a new path per
        frame.  Stages that change the sample count are refused.
    receiver : Receiver, optional
        Default ``Receiver()``: pilot estimation, MMSE, MRC, max-log LLRs.
    snr : {"esn0", "ebn0"}, optional
        Meaning of ``snr_db`` in :meth:`run` (default ``"esn0"``; see the
        module notes).

    Raises
    ------
    TypeError
        A part of the wrong type.
    ValueError
        Parts that do not fit together (a waveform on another plan, pilot
        estimation without pilots, FBMC with estimated channels, a fading
        channel without a sample rate, ...); the message names the part.

    See Also
    --------
    tonebank.sweep.Sweep : error-rate curves over many runs.

    Notes
    -----
    Per frame: ``n_symbols`` symbols of random bits; the whole batch of
    ``n_frames`` goes through each stage at once (the amplifier's back-off
    and the noise level are set over the batch).  Cost: about one
    synthesis and ``n_rx`` analyses per frame, plus the peak control,
    the channel (one FIR per frame and branch) and the estimator.

    Examples
    --------
    >>> import tonebank
    >>> from tonebank.link import Link
    >>> plan = tonebank.CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16)
    >>> link = Link(plan, tonebank.Constellation.qpsk(), n_symbols=4)
    >>> r = link.run(20, 12.0, rng=1)
    >>> r.counts["bits"], r.counts["frames"], bool(r.ber < 0.05)
    (7680, 20, True)
    """

    __slots__ = ("plan", "constellation", "n_symbols", "waveform", "pilots", "peak",
                 "amplifier", "channel", "impairments", "receiver", "snr", "_pattern",
                 "_oversampling", "_estimators", "_done")

    def __init__(self, plan, constellation, *, n_symbols=14, waveform=None, pilots=None,
                 peak=None, amplifier=None, channel=None, impairments=(), receiver=None,
                 snr="esn0"):
        if not isinstance(plan, CarrierPlan):
            raise TypeError(f"plan must be a tonebank.CarrierPlan, got {type(plan).__name__}")
        if not isinstance(constellation, Constellation):
            raise TypeError("constellation must be a tonebank.Constellation, got "
                            f"{type(constellation).__name__}")
        self.plan = plan
        self.constellation = constellation
        self.n_symbols = integer(n_symbols, "n_symbols", minimum=1)
        if waveform is None:
            waveform = CpOfdm(plan)
        elif not isinstance(waveform, Waveform):
            raise TypeError(f"waveform must be a tonebank.Waveform, got {type(waveform).__name__}")
        elif waveform.plan != plan:
            raise ValueError("waveform is built on another plan than the link's plan")
        self.waveform = waveform
        per = waveform.n_samples(self.n_symbols)
        nominal = plan.n_samples(self.n_symbols)
        if per % nominal:
            raise ValueError(f"waveform takes {per} samples for {self.n_symbols} symbols, not a "
                             f"whole multiple of the plan's {nominal}")
        self._oversampling = per // nominal

        receiver = Receiver() if receiver is None else receiver
        if not isinstance(receiver, Receiver):
            raise TypeError(f"receiver must be a tonebank.link.Receiver, got "
                            f"{type(receiver).__name__}")
        self.receiver = receiver

        if peak is not None and not isinstance(peak, (_papr.SelectiveMapping, ClipAndFilter,
                                                      Clipping)):
            raise TypeError("peak must be a tonebank.papr.SelectiveMapping, ClipAndFilter or "
                            f"Clipping, got {type(peak).__name__}")
        if isinstance(peak, _papr.SelectiveMapping):
            if peak.plan != plan:
                raise ValueError("peak (SelectiveMapping) is built on another plan than the "
                                 "link's plan")
            if pilots is not None:
                raise ValueError("peak=SelectiveMapping places the plan's own pilots; "
                                 "leave pilots=None")
            if receiver.slm_recovery == "side" and peak.n_side == 0:
                raise ValueError("receiver.slm_recovery='side' needs a SelectiveMapping "
                                 "with side_subcarriers")
        if isinstance(peak, (Clipping, ClipAndFilter)) and isinstance(waveform, FbmcOqam):
            raise ValueError("peak clipping is defined here for the OFDM waveforms only")
        self.peak = peak

        if pilots is None:
            pattern = plan.pilot_pattern if plan.n_pilots else None
        elif isinstance(pilots, PilotPattern):
            if pilots.plan != plan:
                raise ValueError("pilots is a pattern on another plan than the link's plan")
            pattern = pilots
        else:
            raise TypeError(f"pilots must be a tonebank.PilotPattern, got {type(pilots).__name__}")
        self.pilots = pilots
        self._pattern = pattern

        if amplifier is not None and not isinstance(amplifier, Amplifier):
            raise TypeError(f"amplifier must be a tonebank.link.Amplifier, got "
                            f"{type(amplifier).__name__}")
        self.amplifier = amplifier
        if channel is not None and not isinstance(channel, Fading):
            raise TypeError(f"channel must be a tonebank.link.Fading or None, got "
                            f"{type(channel).__name__}")
        if channel is not None and plan.sample_rate is None:
            raise ValueError("channel needs the plan's sample_rate (the delays are in seconds)")
        self.channel = channel
        stages = tuple(impairments)
        for i, stage in enumerate(stages):
            if not callable(getattr(stage, "filter", None)):
                raise TypeError(f"impairments[{i}] ({type(stage).__name__}) has no filter() "
                                "method")
            if type(stage).__name__ == "SamplingClockOffset":
                raise ValueError(f"impairments[{i}]: a sampling clock offset changes the "
                                 "sample count; run it through a tonebank.SignalChain and "
                                 "tonebank.sync instead")
        self.impairments = stages
        self.snr = choice(snr, "snr", _SNR_CONVENTIONS)

        if isinstance(waveform, FbmcOqam):
            if receiver.estimation != "perfect":
                raise ValueError("waveform FbmcOqam needs receiver=Receiver(estimation="
                                 "'perfect'): pilot estimation is not defined for OQAM here")
            if self.n_rx > 1:
                raise ValueError("waveform FbmcOqam supports one receive branch here")
            if peak is not None:
                raise ValueError("peak control is defined here for the OFDM waveforms only")
        if receiver.estimation == "pilots" and pattern is None:
            raise ValueError("receiver estimation='pilots' needs pilots: give pilots= or a "
                             "plan with pilot subcarriers, or use Receiver(estimation="
                             "'perfect')")
        if receiver.time == "wiener" and (channel is None or channel.max_doppler_hz == 0):
            raise ValueError("receiver time='wiener' needs a channel with max_doppler_hz > 0")
        self._estimators = {}
        if self.bits_per_frame == 0:
            raise ValueError("the frame carries no data cells")
        self._done = True

    # ---- description --------------------------------------------------------------

    @property
    def n_rx(self) -> int:
        """Receive branches."""
        return 1 if self.channel is None else self.channel.n_rx

    @property
    def data_cells_per_frame(self) -> int:
        """Data cells (constellation points) per frame."""
        if isinstance(self.peak, _papr.SelectiveMapping):
            return self.peak.n_payload * self.n_symbols
        if self._pattern is None:
            return self.plan.n_data * self.n_symbols
        return self._pattern.n_data(self.n_symbols)

    @property
    def bits_per_frame(self) -> int:
        """Bits per frame."""
        return self.data_cells_per_frame * self.constellation.bits_per_symbol

    @property
    def samples_per_frame(self) -> int:
        """Samples per frame, the waveform's tail included."""
        return self.waveform.n_samples(self.n_symbols) + self.waveform.tail

    @property
    def sample_rate(self) -> float | None:
        """Sample rate of the transmitted signal (the plan's times any oversampling)."""
        fs = self.plan.sample_rate
        return None if fs is None else fs * self._oversampling

    def __repr__(self):
        return (f"Link({self.plan!r}, {self.constellation!r}, n_symbols={self.n_symbols}, "
                f"waveform={type(self.waveform).__name__}, peak={self.peak!r}, "
                f"amplifier={self.amplifier!r}, channel={self.channel!r}, "
                f"impairments={self.impairments!r}, receiver={self.receiver!r}, "
                f"snr={self.snr!r})")

    def describe(self) -> dict:
        """A JSON-ready description of every part (for result files)."""
        def part(p):
            if p is None:
                return None
            return p.describe() if hasattr(p, "describe") else repr(p)
        return {
            "plan": repr(self.plan), "constellation": repr(self.constellation),
            "n_symbols": self.n_symbols, "waveform": repr(self.waveform),
            "pilots": None if self.pilots is None else repr(self.pilots),
            "peak": part(self.peak), "amplifier": part(self.amplifier),
            "channel": part(self.channel),
            "impairments": [repr(s) for s in self.impairments],
            "receiver": self.receiver.describe(), "snr": self.snr,
        }

    def replace(self, **changes) -> Link:
        """A copy with some parts changed (keyword names as in the constructor)."""
        args = {k: getattr(self, k) for k in ("plan", "constellation", "n_symbols", "waveform",
                                              "pilots", "peak", "amplifier", "channel",
                                              "impairments", "receiver", "snr")}
        if "plan" in changes and "waveform" not in changes:
            args["waveform"] = None
        unknown = set(changes) - set(args)
        if unknown:
            raise TypeError(f"replace() got unknown part(s) {sorted(unknown)}; parts are "
                            f"{sorted(args)}")
        args.update(changes)
        return Link(args.pop("plan"), args.pop("constellation"), **args)

    def __setattr__(self, key, value):
        if getattr(self, "_done", False):
            raise AttributeError("Link is immutable; build a new one (see replace())")
        object.__setattr__(self, key, value)

    def __getstate__(self):
        state = {k: getattr(self, k) for k in self.__slots__}
        state["_estimators"] = {}            # rebuilt on first use
        return state

    def __setstate__(self, state):
        for key, value in state.items():
            object.__setattr__(self, key, value)

    # ---- SNR ------------------------------------------------------------------------

    def sample_snr_db(self, snr_db) -> float:
        """Per-sample SNR (signal power over noise variance) for ``snr_db``, dB."""
        snr_db = real(snr_db, "snr_db")
        if self.snr == "ebn0":
            return float(ebn0_to_snr_db(snr_db, self.plan, self._bits_per_cell(),
                                        oversampling=self._oversampling))
        return float(esn0_to_snr_db(snr_db, self.plan, oversampling=self._oversampling))

    def bin_snr_db(self, snr_db) -> float:
        """SNR per used subcarrier seen after the analysis (prefix removed), dB."""
        snr_db = real(snr_db, "snr_db")
        esn0 = snr_db + 10 * math.log10(self._bits_per_cell()) if self.snr == "ebn0" else snr_db
        return float(esn0_to_bin_snr_db(esn0, self.plan))

    def _bits_per_cell(self) -> float:
        return float(self.constellation.bits_per_symbol)

    # ---- running --------------------------------------------------------------------

    def run(self, n_frames, snr_db, rng=None, *, detail=False) -> LinkResult:
        """Send ``n_frames`` frames of random bits at ``snr_db`` and count what came back.

        Parameters
        ----------
        n_frames : int
            Frames to send, >= 1.
        snr_db : float
            :math:`E_s/N_0` or :math:`E_b/N_0` in dB per the link's ``snr``.
        rng : numpy.random.Generator or int, optional
            Source of the bits, channel realisations, noise and impairment
            paths.  Same seed, same counts, on either kernel backend.
        detail : bool, optional
            Also return the equalised symbols and channels
            (:attr:`LinkResult.detail`).

        Returns
        -------
        LinkResult

        Raises
        ------
        TypeError, ValueError
            ``n_frames`` not a positive integer, ``snr_db`` not finite.
        """
        n_frames = integer(n_frames, "n_frames", minimum=1)
        snr_db = real(snr_db, "snr_db")
        gen = generator(rng)
        bps = self.constellation.bits_per_symbol
        n_cells = self.data_cells_per_frame
        bits = gen.integers(0, 2, (n_frames, n_cells * bps), dtype=np.uint8)
        sent = self.constellation.map(bits).reshape(n_frames, self.n_symbols, -1)
        counts: dict = {}

        grid, slm_index = self._place(sent)
        samples = self._synthesize(grid)
        counts["papr_db_sum"] = float(np.sum(_papr.papr_db(samples, axis=-1)))
        samples, tx_gain = self._amplify(samples, counts)
        power = float(np.mean(np.abs(samples) ** 2))
        noise_var = power * 10.0 ** (-self.sample_snr_db(snr_db) / 10.0)

        rx, truth = self._propagate(samples, gen)          # (F, B, n), (F, B, S, n_fft)
        # (re, im) pairs read as complex: no arithmetic, no BLAS call.
        noise = gen.standard_normal(rx.shape + (2,)).view(np.complex128)[..., 0]
        rx = rx + math.sqrt(noise_var / 2.0) * noise
        rx = self._front_end(rx, gen)

        symbols, cell_var, h_used = self._detect(rx, truth, tx_gain, noise_var, snr_db, counts)
        if slm_index is not None:
            index, symbols = self.peak.recover(
                symbols, method=self.receiver.slm_recovery, constellation=self.constellation)
            cell_var = cell_var[..., self.peak._payload_bins]
            counts["slm_index_errors"] = int(np.count_nonzero(index != slm_index))
            counts["slm_indices"] = int(index.size)
        else:
            symbols, cell_var = self._data_cells(symbols), self._data_cells(cell_var)
        symbols = symbols.reshape(n_frames, -1)
        cell_var = np.minimum(cell_var.reshape(n_frames, -1), 1e300)
        flat_sent = sent.reshape(n_frames, -1)

        llr = self.constellation.llr(symbols, cell_var, exact=self.receiver.exact_llr)
        wrong = (llr < 0) != bits.astype(bool)
        per_frame = np.count_nonzero(wrong, axis=-1)
        decided = self.constellation.decide(symbols)
        want = self.constellation.bits_to_labels(bits)   # the sent labels, no search
        counts.update({
            "bit_errors": int(per_frame.sum()), "bits": int(bits.size),
            "symbol_errors": int(np.count_nonzero(decided != want)),
            "symbols": int(want.size),
            "frame_errors": int(np.count_nonzero(per_frame)), "frames": n_frames,
            "evm_error_energy": float(np.sum(np.abs(symbols - flat_sent) ** 2)),
            "evm_reference_energy": float(np.sum(np.abs(flat_sent) ** 2)),
        })
        ordered = {k: counts[k] for k in ERROR_KEYS}
        ordered.update((k, v) for k, v in counts.items() if k not in ordered)
        extra = None
        if detail:
            extra = {"symbols": symbols, "sent": flat_sent, "channel": h_used,
                     "channel_true": None if truth is None else tx_gain * truth}
        return LinkResult(ordered, self.bits_per_frame, extra)

    # ---- transmitter ----------------------------------------------------------------

    def _place(self, sent: np.ndarray):
        """Data cells to the grid ``(F, S, n_fft)``; the SLM index per symbol or None."""
        if isinstance(self.peak, _papr.SelectiveMapping):
            chosen = self.peak.select(sent)
            return chosen.grid, chosen.index
        if self._pattern is None:
            grid = self.plan.place(sent.reshape(sent.shape[0], -1))
        else:
            grid = self._pattern.place(sent.reshape(sent.shape[0], -1),
                                       n_symbols=self.n_symbols)
        if isinstance(self.peak, ClipAndFilter):
            grid = _papr.clip_and_filter(grid, self.peak.clip_ratio_db,
                                         iterations=self.peak.iterations,
                                         oversampling=self.peak.oversampling,
                                         plan=self.plan).grid
        return grid, None

    def _synthesize(self, grid: np.ndarray) -> np.ndarray:
        samples = self.waveform.synthesize(grid)
        if isinstance(self.peak, Clipping):
            samples = _papr.clip(samples, self.peak.clip_ratio_db)
        return samples

    def _amplify(self, samples: np.ndarray, counts: dict):
        """Amplifier output and the linear gain from the synthesized samples to it."""
        if self.amplifier is None:
            return samples, 1.0
        a = self.amplifier
        out = drive(samples, a.model, input_backoff_db=a.input_backoff_db,
                    output_backoff_db=a.output_backoff_db)
        # drive() rescales its input to the back-off, then fits the gain g of
        # the output on that scaled input: the overall linear gain is both.
        # Weighted by frames, so batches add to the mean over all frames.
        counts["amplifier_evm2_sum"] = (out.evm_percent / 100.0) ** 2 * samples.shape[0]
        p_in = float(np.mean(np.abs(samples) ** 2))
        target = a.model.input_saturation ** 2 * 10.0 ** (-out.input_backoff_db / 10.0)
        return out.samples, out.gain * math.sqrt(target / p_in)

    # ---- channel --------------------------------------------------------------------

    def _propagate(self, samples: np.ndarray, gen: np.random.Generator):
        """Fading per frame: received ``(F, B, n)`` and true response ``(F, B, S, n_fft)``."""
        n_frames = samples.shape[0]
        if self.channel is None:
            return samples[:, None, :], None
        fs = self.sample_rate
        target = self.waveform if hasattr(self.waveform, "fft_size") else self.plan
        rx = np.empty((n_frames, self.n_rx, samples.shape[-1]), dtype=samples.dtype)
        truth = np.empty((n_frames, self.n_rx, self.n_symbols, self.plan.n_fft), complex)
        n = samples.shape[-1]
        size = getattr(self.waveform, "fft_size", self.plan.n_fft)
        k = np.arange(self.plan.n_fft)
        k[k >= self.plan.n_fft - self.plan.n_fft // 2] -= self.plan.n_fft
        tdls = [self.channel.realise(fs, gen) for _ in range(n_frames)]
        # The fractional-delay interpolator delays everything by its latency (a
        # property of the profile and rate, the same for every frame); the
        # receiver's timing takes it out, as an ideal synchroniser would, so the
        # prefix only has to cover the paths.
        lat = tdls[0].latency_samples
        padded = np.pad(samples, ((0, 0), (0, lat)))
        for f, tdl in enumerate(tdls):
            rx[f] = tdl.filter(padded[f])[..., lat:lat + n]
            truth[f] = tdl.frequency_response(target, self.n_symbols)
        truth *= np.exp(2j * np.pi * k * lat / size)
        return rx, truth

    def _front_end(self, rx: np.ndarray, gen: np.random.Generator) -> np.ndarray:
        for stage in self.impairments:
            if hasattr(stage, "with_rng"):
                rx = np.stack([stage.with_rng(gen).filter(frame) for frame in rx])
            else:
                rx = stage.filter(rx)
        return rx

    # ---- receiver -------------------------------------------------------------------

    def _estimator(self, bin_snr_db: float) -> ChannelEstimator:
        r = self.receiver
        needs_snr = r.frequency == "lmmse" or r.time == "wiener"
        key = round(bin_snr_db, 9) if needs_snr else None
        est = self._estimators.get(key)
        if est is None:
            options = {"frequency": r.frequency, "time": r.time}
            if needs_snr:
                options["snr_db"] = bin_snr_db
            if r.frequency == "lmmse":
                options["correlation"] = self._correlation()
            if r.frequency == "dft" and r.n_taps is not None:
                options["n_taps"] = r.n_taps
            if r.time == "wiener":
                options["doppler_hz"] = self.channel.max_doppler_hz
            est = ChannelEstimator(self._pattern, **options)
            if len(self._estimators) > 64:
                self._estimators.clear()
            self._estimators[key] = est
        return est

    def _correlation(self) -> FrequencyCorrelation:
        if self.channel is None:
            return FrequencyCorrelation.from_power_profile([1.0])
        p = self.channel.profile
        return FrequencyCorrelation.from_power_profile(p.powers, p.delays_s * self.sample_rate)

    def _detect(self, rx, truth, tx_gain, noise_var, snr_db, counts):
        """Analyse, know the channel, equalise/combine: ``(F, S, n_fft)`` symbols and variances."""
        n_frames = rx.shape[0]
        r = self.receiver
        if isinstance(self.waveform, FbmcOqam):
            h = np.full((n_frames, 1, self.n_symbols, self.plan.n_fft), tx_gain, complex)
            if truth is not None:
                h = h * truth
            h = h[:, 0]
            grid = np.stack([self.waveform.analyze(rx[f, 0], channel=h[f])
                             for f in range(n_frames)])
            return grid, noise_var / np.abs(h) ** 2, h[:, None]
        grid = self.waveform.analyze(rx)                    # (F, B, S, n_fft)
        if r.estimation == "perfect":
            h = np.full(grid.shape, tx_gain, complex) if truth is None else tx_gain * truth
            h_err = 0.0
        else:
            est = self._estimator(self.bin_snr_db(snr_db) if r.frequency == "lmmse"
                                  or r.time == "wiener" else 0.0)
            h = est.estimate(grid)
            h_err = 0.0
            if truth is not None or self.amplifier is None:
                true_h = (np.full(grid.shape, tx_gain, complex) if truth is None
                          else tx_gain * truth)
                cells = self._data_cells(np.abs(h - true_h) ** 2)
                counts["estimate_error_energy"] = float(np.sum(cells))
                counts["estimate_cells"] = int(cells.size)
        # h carries the transmitter's gain, so the symbols themselves have
        # unit mean energy (the constellation's): signal_power stays 1.
        if self.n_rx == 1:
            eq = equalize_mmse if r.equalizer == "mmse" else equalize_zf
            out = eq(grid[:, 0], h[:, 0], noise_var, channel_error_var=h_err)
        else:
            combine = {"mrc": combine_mrc, "egc": combine_egc,
                       "selection": combine_selection}[r.combining]
            out = combine(grid, h, noise_var, axis=1, channel_error_var=h_err)
        return out.symbols, np.broadcast_to(out.noise_var, out.symbols.shape), h

    def _data_cells(self, grid: np.ndarray) -> np.ndarray:
        """The data cells of ``(F, S, n_fft)`` in placement order: ``(F, n_cells)``."""
        source = self.plan if self._pattern is None else self._pattern
        return source.take(grid)[0]
