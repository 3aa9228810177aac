"""Waveforms of the OFDM family, one module per family, one shared protocol.

Every waveform is a prepared, immutable object built on a
:class:`~tonebank.CarrierPlan` with the methods of :class:`Waveform`:
``synthesize(grid) -> samples`` and ``analyze(samples) -> grid``, and the
streaming forms that process arbitrary chunks.
"""

from .base import StreamAnalyzer, StreamSynthesizer, Waveform
from .cp_ofdm import CpOfdm

__all__ = ["CpOfdm", "StreamAnalyzer", "StreamSynthesizer", "Waveform"]

# ---- filterbank branch: windowed and filtered OFDM -----------------------------
from .filtered import FilteredOfdm, Interference, SubbandGroup, subband_interference  # noqa: E402
from .wola import WolaOfdm  # noqa: E402

__all__ += ["FilteredOfdm", "Interference", "SubbandGroup", "WolaOfdm",
            "subband_interference"]
