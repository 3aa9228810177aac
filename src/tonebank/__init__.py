"""tonebank: prototype multicarrier (OFDM-family) modems in Python.

The library covers the physical layer of a multicarrier modem, from
subcarrier plans to error-rate sweeps, on a small portable C kernel
(with a numpy fallback giving the same numbers).  See the documentation
for the guide and the API reference.
"""

from ._kernel import (
    BackendInfo,
    BackendUnavailableError,
    backend_info,
    set_backend,
    use_backend,
)
from . import channel, metrics, presets, theory
from .constellation import Constellation
from .plan import CarrierPlan
from .transforms import FftPlan, fft
from .waveforms import CpOfdm, StreamAnalyzer, StreamSynthesizer, Waveform

# ---- filterbank branch: windowed and filtered OFDM, spectrum estimates ---------
from . import spectrum  # noqa: E402
from .waveforms import (FilteredOfdm, Interference, SubbandGroup,  # noqa: E402
                        WolaOfdm, subband_interference)

__version__ = "0.1.0"

__all__ = [
    "BackendInfo",
    "BackendUnavailableError",
    "CarrierPlan",
    "Constellation",
    "CpOfdm",
    "FftPlan",
    "StreamAnalyzer",
    "StreamSynthesizer",
    "Waveform",
    "__version__",
    "backend_info",
    "channel",
    "metrics",
    "presets",
    "theory",
    "fft",
    "set_backend",
    "use_backend",
    # filterbank branch
    "FilteredOfdm",
    "Interference",
    "SubbandGroup",
    "WolaOfdm",
    "spectrum",
    "subband_interference",
]
