"""The link of parts (tonebank.link) against closed forms, and its contract.

Error rates: BPSK in AWGN against Q(sqrt(2 Eb/N0)) (J. G. Proakis and M.
Salehi, Digital Communications, 5th ed., the BPSK error probability;
tonebank.theory.ber_bpsk, itself checked against scipy.special in
test_theory.py); Gray 16-QAM symbol error rate against the square-QAM
formula (Proakis & Salehi, the M-QAM symbol error probability;
tonebank.theory.ser_qam); BPSK with two-branch maximal-ratio combining in
flat Rayleigh fading against the closed form of Proakis & Salehi (the
L-branch MRC error probability, chapter 13 in the 5th edition, from
memory; tonebank.theory.ber_bpsk_mrc, checked in test_theory.py against
numerical integration).

Confidence: each AWGN point is accepted when the theory lies in the
99.9 % Clopper-Pearson interval of the count (bits of one QAM symbol are
not independent; 99.9 % leaves margin).  In block fading every bit of a
frame shares one fade, so the fading check uses the conservative normal
bound z * sqrt(b p (1 - p) / N) with b the bits per frame (the largest
possible design effect) and z = 3.29 (99.9 %).  Seeds are fixed.
"""

import math
import pickle

import numpy as np
import pytest

import tonebank
from tonebank import Constellation, DelayProfile, PilotPattern, metrics, theory
from tonebank.amplifier import RappAmplifier, SoftLimiter
from tonebank.channel import FrequencyOffset, PhaseNoise
from tonebank.link import (ERROR_KEYS, Amplifier, ClipAndFilter, Clipping, Fading, Link,
                           LinkResult, Receiver, add_counts)
from tonebank.papr import SelectiveMapping


def _plan(cp=16, **kw):
    return tonebank.CarrierPlan.centered(64, 48, cp_length=cp, sample_rate=1e6, **kw)


def _within(count, expected, confidence=0.999):
    low, high = count.interval(confidence, method="clopper-pearson")
    return low <= expected <= high


@pytest.mark.parametrize("ebn0_db", [2.0, 6.0])
def test_bpsk_awgn_matches_q_function(ebn0_db):
    # No prefix: the bin SNR is Eb/N0 itself.
    link = Link(_plan(cp=0), Constellation.bpsk(), n_symbols=20,
                receiver=Receiver(estimation="perfect"), snr="ebn0")
    assert link.bin_snr_db(ebn0_db) == pytest.approx(ebn0_db)
    r = link.run(40, ebn0_db, rng=11)
    count = metrics.ErrorCount(r.counts["bit_errors"], r.counts["bits"])
    assert _within(count, float(theory.ber_bpsk(ebn0_db))), (count, ebn0_db)


def test_qam16_symbol_errors_match_theory_with_prefix_loss():
    link = Link(_plan(), Constellation.qam(16), n_symbols=20,
                receiver=Receiver(estimation="perfect"))
    esn0_db = 14.0
    r = link.run(30, esn0_db, rng=12)
    count = metrics.ErrorCount(r.counts["symbol_errors"], r.counts["symbols"])
    # The prefix carries energy the FFT window discards (channel.noise notes).
    expected = float(theory.ser_qam(16, link.bin_snr_db(esn0_db)))
    assert link.bin_snr_db(esn0_db) == pytest.approx(esn0_db - 10 * math.log10(80 / 64))
    assert _within(count, expected), (count, expected)
    # EVM of the equalised symbols: sqrt(N0 / Es) at the bin SNR (definition of EVM
    # for unit-energy constellations; common practice, no source).
    assert r.evm_percent == pytest.approx(100 * 10 ** (-link.bin_snr_db(esn0_db) / 20), rel=0.03)


def test_two_branch_mrc_in_flat_rayleigh_fading():
    plan = tonebank.CarrierPlan.centered(16, 8, cp_length=2, sample_rate=1e6)
    flat = DelayProfile([0.0], [0.0])
    link = Link(plan, Constellation.bpsk(), n_symbols=1, snr="ebn0",
                channel=Fading(flat, n_rx=2, interpolation="nearest"),
                receiver=Receiver(estimation="perfect", combining="mrc"))
    ebn0_db = 4.0
    r = link.run(3000, ebn0_db, rng=13)
    p = float(theory.ber_bpsk_mrc(link.bin_snr_db(ebn0_db), 2))
    n = r.counts["bits"]
    bound = 3.29 * math.sqrt(link.bits_per_frame * p * (1 - p) / n)
    assert abs(r.ber - p) <= bound, (r.ber, p, bound)


def test_pilot_estimation_approaches_perfect_knowledge():
    plan = _plan()
    comb = PilotPattern.comb(plan, 3)
    profile = DelayProfile.published("tdl_a", delay_spread_s=2e-6)
    common = dict(n_symbols=8, pilots=comb, channel=Fading(profile))
    perfect = Link(plan, Constellation.qpsk(), receiver=Receiver(estimation="perfect"), **common)
    lmmse = Link(plan, Constellation.qpsk(), receiver=Receiver(frequency="lmmse", time="average"),
                 **common)
    a, b = perfect.run(20, 18.0, rng=3), lmmse.run(20, 18.0, rng=3)
    # Averaging 8 symbols of comb pilots leaves an estimate error far below the
    # bin noise variance (the LMMSE error bound of van de Beek et al., VTC 1995).
    noise_var = 10 ** (-lmmse.bin_snr_db(18.0) / 10)
    assert b.estimate_mse < noise_var / 4
    assert a.estimate_mse is None
    assert b.evm_percent < 1.15 * a.evm_percent


def test_counts_are_reproducible_additive_and_picklable():
    plan = _plan(pilot_spacing=6)
    link = Link(plan, Constellation.qpsk(), n_symbols=3,
                channel=Fading(DelayProfile.published("tdl_a", delay_spread_s=1e-6), n_rx=2),
                impairments=(PhaseNoise(50.0, 1e6, rng=1), FrequencyOffset(20.0, 1e6)))
    first = link.run(4, 10.0, rng=5)
    assert first == link.run(4, 10.0, rng=5)
    assert list(first.counts)[:6] == list(ERROR_KEYS)
    assert pickle.loads(pickle.dumps(link)).run(4, 10.0, rng=5).counts == first.counts
    total = add_counts(first.counts, link.run(4, 10.0, rng=6).counts)
    assert total["frames"] == 8 and total["bits"] == 2 * first.counts["bits"]
    assert isinstance(first, LinkResult) and first.bits_per_frame * 4 == first.counts["bits"]


def test_peak_control_stages():
    plan = _plan()
    qam = Constellation.qam(16)
    side = plan.data_subcarriers[:4]
    slm = SelectiveMapping(plan, n_candidates=8, side_subcarriers=side)
    plain = Link(plan, qam, n_symbols=6, receiver=Receiver(estimation="perfect"))
    with_slm = Link(plan, qam, n_symbols=6, peak=slm, receiver=Receiver(estimation="perfect"))
    a, b = plain.run(30, 30.0, rng=2), with_slm.run(30, 30.0, rng=2)
    assert b.counts["slm_index_errors"] == 0 and b.counts["slm_indices"] == 180
    assert b.mean_papr_db < a.mean_papr_db - 1.0
    assert with_slm.bits_per_frame == 6 * slm.n_payload * 4
    clipped = Link(plan, qam, n_symbols=6, peak=Clipping(3.0), pilots=PilotPattern.comb(plan, 4))
    cf = Link(plan, qam, n_symbols=6, peak=ClipAndFilter(3.0, iterations=2),
              pilots=PilotPattern.comb(plan, 4))
    for link in (clipped, cf):
        r = link.run(10, 40.0, rng=4)
        assert r.mean_papr_db < a.mean_papr_db
        assert r.evm_percent > 3 * a.evm_percent       # the clipping noise shows


def test_amplifier_backoff_trades_distortion():
    plan = _plan()
    qam = Constellation.qam(16)
    pilots = PilotPattern.comb(plan, 4)
    evm = []
    for ibo in (2.0, 12.0):
        link = Link(plan, qam, n_symbols=6, pilots=pilots,
                    amplifier=Amplifier(RappAmplifier(smoothness=2.0), input_backoff_db=ibo))
        evm.append(link.run(10, 45.0, rng=1).evm_percent)
        # With the amplifier's linear gain known and little noise, what the
        # receiver sees is the distortion falling on the used subcarriers: a
        # share of drive()'s figure, which counts all distortion (Bussgang: the
        # distortion is uncorrelated with the input; its spread over the band
        # is not white, hence the wide bounds -- common practice, no source).
        known = link.replace(receiver=Receiver(estimation="perfect")).run(10, 45.0, rng=1)
        share = known.evm_percent / known.amplifier_evm_percent
        assert 0.6 < share < 1.05, (ibo, share)
    assert evm[0] > 2 * evm[1]
    # Far from saturation a soft limiter is linear: the link is the plain one.
    lin = Link(plan, qam, n_symbols=6, pilots=pilots, receiver=Receiver(estimation="perfect"),
               amplifier=Amplifier(SoftLimiter(), input_backoff_db=40.0))
    ref = Link(plan, qam, n_symbols=6, pilots=pilots, receiver=Receiver(estimation="perfect"))
    assert lin.run(5, 20.0, rng=9).evm_percent == pytest.approx(
        ref.run(5, 20.0, rng=9).evm_percent, rel=1e-6)


def test_other_waveforms_run():
    plan = _plan(pilot_spacing=6)
    for waveform in (tonebank.WolaOfdm(plan, tx_ramp=8, rx_ramp=8), tonebank.FilteredOfdm(plan)):
        link = Link(plan, Constellation.qpsk(), n_symbols=4, waveform=waveform)
        assert link.run(3, 25.0, rng=1).ber < 0.01
    fbmc_plan = plan.replace(cp_length=0)
    link = Link(fbmc_plan, Constellation.qpsk(), n_symbols=8,
                waveform=tonebank.FbmcOqam(fbmc_plan), receiver=Receiver(estimation="perfect"))
    assert link.run(3, 25.0, rng=1).ber < 0.01


def test_replace_and_describe():
    link = Link(_plan(pilot_spacing=6), Constellation.qpsk())
    other = link.replace(constellation=Constellation.qam(16))
    assert other.bits_per_frame == 2 * link.bits_per_frame
    d = other.describe()
    assert d["n_symbols"] == 14 and "16" in d["constellation"]
    with pytest.raises(TypeError, match="unknown part"):
        link.replace(colour="blue")
    with pytest.raises(AttributeError, match="immutable"):
        link.n_symbols = 3


@pytest.mark.parametrize("kwargs, error, match", [
    (dict(plan="plan"), TypeError, "plan"),
    (dict(constellation=4), TypeError, "constellation"),
    (dict(n_symbols=0), ValueError, "n_symbols"),
    (dict(waveform="cp"), TypeError, "waveform"),
    (dict(peak=3.0), TypeError, "peak"),
    (dict(amplifier=SoftLimiter()), TypeError, "amplifier"),
    (dict(channel="tdl"), TypeError, "channel"),
    (dict(receiver="mmse"), TypeError, "receiver"),
    (dict(snr="sinr"), ValueError, "snr"),
    (dict(impairments=[3]), TypeError, "impairments"),
])
def test_bad_parts_are_named(kwargs, error, match):
    args = dict(plan=_plan(pilot_spacing=6), constellation=Constellation.qpsk())
    args.update(kwargs)
    with pytest.raises(error, match=match):
        Link(args.pop("plan"), args.pop("constellation"), **args)


def test_parts_that_do_not_fit_are_refused():
    plan = _plan()                                   # no pilots
    with pytest.raises(ValueError, match="pilots"):
        Link(plan, Constellation.qpsk())
    with pytest.raises(ValueError, match="another plan"):
        Link(_plan(pilot_spacing=6), Constellation.qpsk(), waveform=tonebank.CpOfdm(plan))
    with pytest.raises(ValueError, match="sample_rate"):
        Link(tonebank.CarrierPlan.centered(64, 48, cp_length=16, pilot_spacing=6),
             Constellation.qpsk(), channel=Fading(DelayProfile([0.0], [0.0])))
    with pytest.raises(ValueError, match="FbmcOqam"):
        p0 = plan.replace(cp_length=0)
        Link(p0, Constellation.qpsk(), waveform=tonebank.FbmcOqam(p0),
             pilots=PilotPattern.comb(p0, 4))
    with pytest.raises(ValueError, match="wiener"):
        Link(plan, Constellation.qpsk(), pilots=PilotPattern.comb(plan, 4),
             receiver=Receiver(time="wiener"))
    with pytest.raises(ValueError, match="exactly one"):
        Amplifier(SoftLimiter())
    with pytest.raises(ValueError, match="combining"):
        Receiver(combining="best")
    link = Link(plan, Constellation.qpsk(), receiver=Receiver(estimation="perfect"))
    with pytest.raises(ValueError, match="n_frames"):
        link.run(0, 10.0)
    with pytest.raises(ValueError, match="snr_db"):
        link.run(1, float("nan"))


def test_waveforms_and_selective_mapping_pickle_without_their_kernel_state():
    # Sweeps send links to worker processes: the prepared C runners are dropped
    # and rebuilt there; the numbers are the same.
    plan = _plan(pilot_spacing=6)
    grid = plan.place(np.ones((2, plan.n_data)) + 0j)
    for w in (tonebank.CpOfdm(plan), tonebank.WolaOfdm(plan, tx_ramp=4),
              tonebank.FilteredOfdm(plan), tonebank.FbmcOqam(plan.replace(cp_length=0))):
        x = w.synthesize(grid)
        twin = pickle.loads(pickle.dumps(w))
        assert np.array_equal(twin.synthesize(grid), x)
        assert np.array_equal(twin.analyze(x), w.analyze(x))
    slm = SelectiveMapping(plan, n_candidates=4)
    payload = np.ones((3, slm.n_payload)) + 0j
    assert np.array_equal(pickle.loads(pickle.dumps(slm)).select(payload).grid,
                          slm.select(payload).grid)
