"""Channel models: what happens to a signal between transmitter and receiver.

Every model takes a signal with samples on the last axis (leading axes are
batch) and an ``rng`` where it is random; see :mod:`tonebank.channel.noise`
for additive white Gaussian noise and its SNR conventions,
:mod:`tonebank.channel.profiles` for power-delay profiles (published
tables among them) and :mod:`tonebank.channel.tdl` for tapped-delay-line
fading channels with their true frequency response.
:mod:`tonebank.channel.impairments` holds receiver impairments (frequency
and timing offsets, sampling clock offset, phase noise, IQ imbalance, DC
offset) and :class:`~tonebank.channel.SignalChain`, which runs stages in
order; :mod:`tonebank.channel.impairment_theory` holds closed forms for
their effect on OFDM symbols.
"""

from .noise import (
    awgn,
    ebn0_to_snr_db,
    esn0_to_bin_snr_db,
    esn0_to_snr_db,
    snr_to_esn0_db,
    snr_to_noise_var,
)
from .profiles import PUBLISHED_PROFILES, DelayProfile
from .tdl import TappedDelayLine

# ---- receiver impairments ----
from .impairment_theory import (
    cfo_ici_power,
    cfo_snr_loss_db,
    wiener_cpe_step_variance,
    wiener_ici_power,
)
from .impairments import (
    DcOffset,
    FrequencyOffset,
    Impairment,
    IqImbalance,
    PhaseNoise,
    SamplingClockOffset,
    SignalChain,
    TimingOffset,
)
# ---- end receiver impairments ----

__all__ = [
    "DelayProfile",
    "PUBLISHED_PROFILES",
    "TappedDelayLine",
    "awgn",
    "ebn0_to_snr_db",
    "esn0_to_bin_snr_db",
    "esn0_to_snr_db",
    "snr_to_esn0_db",
    "snr_to_noise_var",
    # receiver impairments
    "DcOffset",
    "FrequencyOffset",
    "Impairment",
    "IqImbalance",
    "PhaseNoise",
    "SamplingClockOffset",
    "SignalChain",
    "TimingOffset",
    "cfo_ici_power",
    "cfo_snr_loss_db",
    "wiener_cpe_step_variance",
    "wiener_ici_power",
]
