"""End to end: an adaptive-modulation CP-OFDM link meets the error rate its loading promised.

An invented scenario: a 256-point CP-OFDM link with 200 data subcarriers
over a fixed six-path channel (a deep notch across part of the band) and
AWGN, the receiver knowing the channel.  The subcarriers are loaded by
Levin-Campello (margin-adaptive) for a target symbol error rate of 1e-2
per QAM symbol, i.e. the gap with N_e = 4 neighbours: once with square
QAM only (granularity 2, where the gap approximation bounds every order)
and once with every order from BPSK up (granularity 1) and a 1.1 dB
margin for the rectangular orders.

bits -> CarrierPlan.place_bits -> CpOfdm.synthesize -> multipath -> AWGN
-> CpOfdm.analyze -> zero-forcing per subcarrier -> CarrierPlan.llr.

Checks:

* the exact symbol error rate of each subcarrier's QAM at its SNR (two
  independent PAM axes, see qam_ser; for square M-QAM P_s = 1 - (1 - p)^2
  with p = 2 (1 - 1/sqrt M) Q(sqrt(3 SNR / (M - 1))), Proakis & Salehi,
  Digital Communications, 5th ed., sec. 4.3; formula from memory,
  evaluated here with scipy.special.erfc), averaged over the loaded
  cells, lies at or below the target the loading promised (the gap is
  the nearest-neighbour bound of that formula);
* the simulated symbol error rate agrees with that prediction: the
  prediction lies in the 99.9 % Clopper-Pearson interval of the count
  (scipy.stats.beta), and the whole interval lies below the target, i.e.
  the link meets the promise with 99.9 % confidence.  Symbol errors of different
  cells are independent (independent noise and data), so the binomial
  interval is exact here.  Seeds are fixed, so the test cannot flake.
"""

import numpy as np
import pytest
from scipy import special, stats

from tonebank import CarrierPlan, CpOfdm, loading

TARGET_SER = 1e-2          # per QAM symbol
N_SYMBOLS = 300            # OFDM symbols: ~58 000 loaded cells, 200-400 errors expected
NOISE_VAR = 2e-2           # per time-domain sample (= per subcarrier: unitary transforms)
#: An invented six-path impulse response (sample-spaced, shorter than the prefix).
TAPS = np.array([1.0, 0.0, 0.55 - 0.3j, 0.0, -0.35j, 0.2])


def clopper_pearson(errors, total, confidence):
    # Clopper & Pearson (1934) exact binomial interval via beta quantiles (scipy.stats).
    alpha = 1 - confidence
    low = 0.0 if errors == 0 else stats.beta.ppf(alpha / 2, errors, total - errors + 1)
    high = 1.0 if errors == total else stats.beta.ppf(1 - alpha / 2, errors + 1, total - errors)
    return low, high


def qam_ser(bits, snr):
    """Exact symbol error rate of Gray QAM as two independent PAM axes.

    An L-level PAM axis with spacing 2s in noise of variance 1/(2 SNR) per
    real dimension errs with probability 2 (1 - 1/L) Q(s sqrt(2 SNR)), and
    QAM is right when both axes are (Proakis & Salehi, Digital
    Communications, 5th ed., sec. 4.3; from memory).  Unit mean energy
    gives s**2 = 3 / ((L_i**2 - 1) + (L_q**2 - 1)); square M-QAM reduces to
    p = 2 (1 - 1/sqrt M) Q(sqrt(3 SNR / (M - 1))) and BPSK to Q(sqrt(2 SNR)).
    The axes are those of tonebank.loading.tone_constellation: L_i =
    2**ceil(b/2), L_q = 2**floor(b/2).
    """
    levels_i, levels_q = 2.0 ** ((bits + 1) // 2), 2.0 ** (bits // 2)
    s = np.sqrt(3 / ((levels_i**2 - 1) + (levels_q**2 - 1)))
    arg = s * np.sqrt(2 * snr)
    p_i = 2 * (1 - 1 / levels_i) * 0.5 * special.erfc(arg / np.sqrt(2))
    p_q = 2 * (1 - 1 / levels_q) * 0.5 * special.erfc(arg / np.sqrt(2))
    return 1 - (1 - p_i) * (1 - p_q)


#: (granularity, margin in dB): square QAM only at the plain gap; every
#: order from BPSK up, with 1.1 dB of margin for the rectangular orders
#: (which need about 1 dB more than the gap formula; loading module notes).
ORDERS = {"square": (2, 0.0), "all": (1, 1.1)}


@pytest.mark.parametrize("orders", sorted(ORDERS))
@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_adaptive_link_meets_its_target(dtype, orders):
    granularity, margin_db = ORDERS[orders]
    base = CarrierPlan.centered(256, 200, cp_length=16)
    response = np.fft.fft(TAPS, base.n_fft)[base.data_bins]
    g = loading.gain_to_noise(response, NOISE_VAR)
    gap_db = loading.snr_gap_db(TARGET_SER, neighbors=4, margin_db=margin_db)
    # The rate a unit-energy-per-subcarrier budget supports, then the least
    # energy for it: every loaded tone sits exactly at the gap.
    rate = loading.levin_campello(g, gap_db=gap_db, total_energy=float(base.n_data),
                                  granularity=granularity, max_bits=10).bits_per_symbol
    table = loading.levin_campello(g, gap_db=gap_db, target_bits=rate,
                                   granularity=granularity, max_bits=10)
    if orders == "all":
        assert any(b % 2 for b in table.histogram())     # odd orders really in use
    assert len(table.histogram()) >= 4          # really adaptive: several orders in use
    plan = base.replace(loading=table)
    ofdm = CpOfdm(plan)

    rng = np.random.default_rng(1234)
    bits = rng.integers(0, 2, N_SYMBOLS * table.bits_per_symbol)
    tx = ofdm.synthesize(plan.place_bits(bits, dtype=dtype))
    rx = np.convolve(tx, TAPS.astype(dtype))[:tx.size]
    noise = np.sqrt(NOISE_VAR / 2) * (rng.standard_normal(tx.size)
                                      + 1j * rng.standard_normal(tx.size))
    rx = (rx + noise).astype(dtype)
    data, _ = plan.take(ofdm.analyze(rx))
    equalised = (data.reshape(N_SYMBOLS, -1) / response.astype(dtype)).reshape(-1)
    llr = plan.llr(equalised, NOISE_VAR / np.abs(response) ** 2)
    assert llr.dtype == (np.float32 if dtype == np.complex64 else np.float64)

    # symbol errors: a cell is wrong when any of its bits is
    wrong_bits = ((llr < 0) != (bits == 1)).reshape(N_SYMBOLS, table.bits_per_symbol)
    cell_of_bit = np.repeat(np.arange(plan.n_data), table.bits)
    wrong_cells = np.zeros((N_SYMBOLS, plan.n_data), dtype=int)
    np.add.at(wrong_cells, (slice(None), cell_of_bit), wrong_bits)
    loaded = table.bits > 0
    errors = int(np.count_nonzero(wrong_cells[:, loaded]))
    total = N_SYMBOLS * int(np.count_nonzero(loaded))

    snr = table.energies[loaded] * g[loaded]
    predicted = float(np.mean(qam_ser(table.bits[loaded], snr)))
    assert predicted <= TARGET_SER
    low, high = clopper_pearson(errors, total, 0.999)
    assert low <= predicted <= high, (errors, total, predicted)
    assert high <= TARGET_SER, (errors, total)     # measured below the promise
