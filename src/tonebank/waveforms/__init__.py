"""Waveforms of the OFDM family, one module per family, one shared protocol.

Every waveform is a prepared, immutable object built on a
:class:`~tonebank.CarrierPlan` with the methods of :class:`Waveform`:
``synthesize(grid) -> samples`` and ``analyze(samples) -> grid``, and the
streaming forms that process arbitrary chunks.
"""

from .base import StreamAnalyzer, StreamSynthesizer, Waveform
from .cp_ofdm import CpOfdm
from .fbmc import FbmcOqam, phydyas_coefficients, phydyas_prototype

__all__ = ["CpOfdm", "FbmcOqam", "StreamAnalyzer", "StreamSynthesizer", "Waveform",
           "phydyas_coefficients", "phydyas_prototype"]
