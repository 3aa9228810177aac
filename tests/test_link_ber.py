"""End-to-end AWGN bit error rate of the CP-OFDM chain vs closed forms.

bits -> Constellation.map -> CpOfdm.modulate -> channel.awgn (Es/N0 per
used subcarrier) -> CpOfdm.demodulate -> Constellation.demap, for BPSK,
QPSK and Gray 16/64/256-QAM, both precisions, both backends.

Theory: BPSK/QPSK Q(sqrt(2 Eb/N0)) and the exact Gray square-QAM BER of
K. Cho and D. Yoon, IEEE Trans. Commun. 50(7), 2002 (citation from
memory), as implemented in tonebank.theory and checked there against
numerical integration (test_theory.py), taken at the SNR each subcarrier
sees after the cyclic-prefix loss.

Confidence: each point is accepted when the theoretical BER lies in the
99.9 % Clopper-Pearson interval of the simulated count.  Bits of one QAM
symbol are not independent, so the binomial interval is somewhat
optimistic; 99.9 % leaves the margin for that.  Seeds are fixed, so the
test cannot flake.
"""

import numpy as np
import pytest

from tonebank import Constellation, CpOfdm, channel, metrics, presets, theory

#: (constellation, Es/N0 points in dB chosen for BERs of about 1e-1 .. 1e-3)
CASES = {
    "bpsk": (Constellation.bpsk(), (0.0, 4.0, 7.0)),
    "qpsk": (Constellation.qpsk(), (3.0, 7.0, 10.0)),
    "16qam": (Constellation.qam(16), (8.0, 12.0, 16.0)),
    "64qam": (Constellation.qam(64), (14.0, 18.0, 21.0)),
    "256qam": (Constellation.qam(256), (20.0, 24.0, 27.0)),
}
N_SYMBOLS = 120   # OFDM symbols per point: 5760 subcarrier symbols


@pytest.mark.parametrize("name", sorted(CASES))
@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_ber_matches_theory(name, dtype):
    qam, esn0_points = CASES[name]
    plan = presets.ieee80211a()
    ofdm = CpOfdm(plan)
    rng = np.random.default_rng(sum(map(ord, name)))
    k = qam.bits_per_symbol
    for esn0_db in esn0_points:
        bits = rng.integers(0, 2, N_SYMBOLS * plan.n_data * k)
        tx = ofdm.modulate(qam.map(bits, dtype=dtype))
        assert tx.dtype == dtype
        rx = channel.awgn(tx, esn0_db, rng=rng, convention="esn0", plan=plan)
        rx_data, _ = ofdm.demodulate(rx)
        count = metrics.bit_errors(bits, qam.demap(rx_data))
        low, high = count.interval(0.999, method="clopper-pearson")
        ebn0_bin = theory.esn0_to_ebn0_db(channel.esn0_to_bin_snr_db(esn0_db, plan), k)
        expected = (theory.ber_bpsk(ebn0_bin) if k == 1
                    else theory.ber_qam_gray(2 ** k, ebn0_bin))
        assert low <= expected <= high, (name, esn0_db, count, expected)
