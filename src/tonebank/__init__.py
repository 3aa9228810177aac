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
# FBMC/OQAM (waveforms/fbmc.py)
from .waveforms import FbmcOqam, phydyas_coefficients, phydyas_prototype

# ---- channel estimation and equalisation (pilot patterns, estimators) ----
from . import equalization, estimation
from .pilots import PilotPattern
# ---- end channel estimation and equalisation ----

# -- peak reduction and amplifier models (papr branch) --
from . import amplifier, papr

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
    # -- papr branch --
    "amplifier",
    "papr",
    # channel estimation and equalisation
    "PilotPattern",
    "equalization",
    "estimation",
    # FBMC/OQAM
    "FbmcOqam",
    "phydyas_coefficients",
    "phydyas_prototype",
]

# ---- channel models (tapped delay lines, delay profiles) ----------------------
from .channel import DelayProfile, TappedDelayLine  # noqa: E402

__all__ += ["DelayProfile", "TappedDelayLine"]
