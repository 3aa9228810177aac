"""Synchronisation: frame detection, timing, frequency offsets, pilot tracking, IQ imbalance.

The receiver's first steps, before analysis and channel estimation:

- ``preamble.py``: what a frame starts with
  (:class:`Preamble`: two identical halves for any plan, or the 802.11a
  short/long training);
- ``timing.py``: the Schmidl & Cox timing metric and frame
  detection with plateau handling;
- ``frequency.py``: fractional, integer and fine carrier
  frequency offset, and its correction;
- ``blind.py``: timing and offset from the cyclic prefix
  alone (maximum likelihood, van de Beek et al.);
- ``tracking.py``: per-symbol common phase error, residual
  offset and sampling clock offset from the pilots;
- ``iq.py``: IQ gain/phase imbalance (and DC) from a known preamble, and
  its correction;
- ``receiver.py``: a frame format and the whole receiver
  chain on a continuous stream.

Offsets are in subcarrier spacings (``..._spacings``) unless a name says
Hz; sample positions are indices into the stream given.
"""

from .blind import CpEstimate, cp_estimate
from .frequency import correct_cfo, fractional_cfo, integer_cfo, repeat_cfo
from .iq import IqImbalanceEstimate, estimate_iq_imbalance, estimate_iq_imbalance_bins
from .preamble import Preamble, RepeatedRegion
from .receiver import FrameFormat, FrameReceiver, FrameReport
from .timing import DEFAULT_THRESHOLD, Detection, TimingMetric, detect_frames, timing_metric
from .tracking import PhaseDrift, PilotPhase, derotate, phase_drift, pilot_phase

__all__ = [
    "CpEstimate",
    "DEFAULT_THRESHOLD",
    "Detection",
    "FrameFormat",
    "FrameReceiver",
    "FrameReport",
    "IqImbalanceEstimate",
    "PhaseDrift",
    "PilotPhase",
    "Preamble",
    "RepeatedRegion",
    "TimingMetric",
    "correct_cfo",
    "cp_estimate",
    "derotate",
    "detect_frames",
    "estimate_iq_imbalance",
    "estimate_iq_imbalance_bins",
    "fractional_cfo",
    "integer_cfo",
    "phase_drift",
    "pilot_phase",
    "repeat_cfo",
    "timing_metric",
]
