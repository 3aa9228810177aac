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
from . import (
    amplifier,
    channel,
    combining,
    equalization,
    estimation,
    fixed_analysis,
    fixed_ofdm,
    fixedpoint,
    link,
    loading,
    metrics,
    papr,
    presets,
    spectrum,
    sweep,
    sweep_results,
    sync,
    target_bench,
    theory,
    vectors,
)
from .channel import (
    DcOffset,
    DelayProfile,
    FrequencyOffset,
    IqImbalance,
    PhaseNoise,
    SamplingClockOffset,
    SignalChain,
    TappedDelayLine,
    TimingOffset,
)
from .constellation import Constellation
from .pilots import PilotPattern
from .plan import CarrierPlan
from .transforms import FftPlan, fft
from .waveforms import (
    CpOfdm,
    FbmcOqam,
    FilteredOfdm,
    Interference,
    StreamAnalyzer,
    StreamSynthesizer,
    SubbandGroup,
    Waveform,
    WolaOfdm,
    phydyas_coefficients,
    phydyas_prototype,
    subband_interference,
)

__version__ = "0.1.0"

__all__ = [
    # kernel backends
    "BackendInfo",
    "BackendUnavailableError",
    "backend_info",
    "set_backend",
    "use_backend",
    # plans, constellations, transforms
    "CarrierPlan",
    "Constellation",
    "FftPlan",
    "PilotPattern",
    "fft",
    # waveforms
    "CpOfdm",
    "FbmcOqam",
    "FilteredOfdm",
    "Interference",
    "StreamAnalyzer",
    "StreamSynthesizer",
    "SubbandGroup",
    "Waveform",
    "WolaOfdm",
    "phydyas_coefficients",
    "phydyas_prototype",
    "subband_interference",
    # channels and receiver impairments
    "DcOffset",
    "DelayProfile",
    "FrequencyOffset",
    "IqImbalance",
    "PhaseNoise",
    "SamplingClockOffset",
    "SignalChain",
    "TappedDelayLine",
    "TimingOffset",
    # modules
    "amplifier",
    "channel",
    "combining",
    "equalization",
    "estimation",
    "fixed_analysis",
    "fixed_ofdm",
    "fixedpoint",
    "link",
    "loading",
    "metrics",
    "papr",
    "presets",
    "spectrum",
    "sweep",
    "sweep_results",
    "sync",
    "target_bench",
    "theory",
    "vectors",
    "__version__",
]
