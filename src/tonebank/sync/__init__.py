"""Synchronisation: timing, frequency and IQ-imbalance estimation and correction."""

# ---- IQ imbalance ----
from .iq import IqImbalanceEstimate, estimate_iq_imbalance, estimate_iq_imbalance_bins

__all__ = ["IqImbalanceEstimate", "estimate_iq_imbalance", "estimate_iq_imbalance_bins"]
# ---- end IQ imbalance ----
