"""Waveforms of the OFDM family, one module per family, one shared protocol.

Every waveform is a prepared, immutable object built on a
:class:`~tonebank.CarrierPlan` with the methods of :class:`Waveform`:
``synthesize(grid) -> samples`` and ``analyze(samples) -> grid``, and the
streaming forms that process arbitrary chunks.

``cp_ofdm``   CpOfdm: cyclic-prefix OFDM (and real-valued DMT)
``wola``      WolaOfdm: raised-cosine ramps, overlap-add, receive fold-back
``filtered``  FilteredOfdm, SubbandGroup: subband-filtered OFDM
``fbmc``      FbmcOqam: FBMC with offset QAM and the PHYDYAS prototype
"""

from .base import StreamAnalyzer, StreamSynthesizer, Waveform
from .cp_ofdm import CpOfdm
from .fbmc import FbmcOqam, phydyas_coefficients, phydyas_prototype
from .filtered import FilteredOfdm, Interference, SubbandGroup, subband_interference
from .wola import WolaOfdm

__all__ = ["CpOfdm", "FbmcOqam", "FilteredOfdm", "Interference", "StreamAnalyzer",
           "StreamSynthesizer", "SubbandGroup", "Waveform", "WolaOfdm",
           "phydyas_coefficients", "phydyas_prototype", "subband_interference"]
