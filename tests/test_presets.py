"""Tests of tonebank.presets against the open standards they come from.

Sources named beside each check:

* IEEE Std 802.11a-1999, clause 17 (OFDM PHY for the 5 GHz band):
  17.3.2.4 (timing parameters), 17.3.3 (PLCP preamble, training
  sequences), 17.3.5.4 (data scrambler), 17.3.5.9 (pilot subcarriers and
  polarity), Annex G (worked example, time-domain training samples).
* 3GPP TS 38.211 (NR physical channels and modulation): clause 4.1
  (T_c, kappa), Table 4.2-1 (numerologies), Tables 4.3.2-1 / 4.3.2-2
  (slots and symbols), clause 5.3.1 (OFDM baseband signal generation:
  cyclic prefix lengths, centring of the grid).
* 3GPP TS 36.211 (LTE): clause 4 (T_s, 0.5 ms slot), clause 6.12 and
  Table 6.12-1 (downlink OFDM parameters, DC not used).
* ETSI EN 300 744 (DVB-T): clause 4.4 (OFDM frame structure and its
  parameter tables), 4.5.2 (reference PRBS), 4.5.3 (scattered pilots),
  4.5.4 / Table 7 (continual pilots), 4.5.5 (pilot boost 4/3), 4.6 /
  Table 8 (TPS carriers), 4.3.4.2 (1512 / 6048 data carriers per symbol,
  the block of the symbol interleaver).

Values recalled rather than read from the documents are marked "from
memory"; where possible they are checked against a second, independent
property from the same standard (a generator, a count stated elsewhere,
a timing identity).
"""

from __future__ import annotations

import doctest
from fractions import Fraction

import numpy as np
import pytest

import tonebank
import tonebank.presets as presets_module
from tonebank import presets
from tonebank.plan import CarrierPlan

# =============================================================================
# IEEE Std 802.11a-1999
# =============================================================================


def scrambler_x7_x4_1(n_bits: int, state: int = 0b1111111) -> list[int]:
    """The data scrambler of IEEE 802.11a clause 17.3.5.4 (generator x^7 + x^4 + 1)."""
    reg = [(state >> i) & 1 for i in range(7)]   # reg[0] = x^1 ... reg[6] = x^7
    out = []
    for _ in range(n_bits):
        bit = reg[6] ^ reg[3]                     # x^7 XOR x^4
        out.append(bit)
        reg = [bit] + reg[:6]
    return out


def test_wlan_scrambler_model_matches_standard_first_bits():
    # IEEE 802.11a clause 17.3.5.4 (from memory): started in the all-ones
    # state the scrambler repeats 00001110 11110010 11001001 ... with period 127.
    bits = scrambler_x7_x4_1(254)
    assert "".join(map(str, bits[:24])) == "000011101111001011001001"
    assert bits[:127] == bits[127:]


def test_wlan_pilot_polarity_is_the_scrambler_sequence():
    # IEEE 802.11a clause 17.3.5.9: p_0..p_126 is the scrambler sequence of
    # clause 17.3.5.4 (all-ones start) with 0 -> +1 and 1 -> -1.
    p = presets.IEEE80211A_PILOT_POLARITY
    assert p.shape == (127,) and p.dtype == np.int8
    expected = 1 - 2 * np.array(scrambler_x7_x4_1(127))
    np.testing.assert_array_equal(p, expected)
    # First values as printed in equation 17-25 (from memory).
    assert p[:8].tolist() == [1, 1, 1, 1, -1, -1, -1, 1]
    assert p[-7:].tolist() == [-1] * 7
    assert not p.flags.writeable


def test_wlan_plan_layout():
    # IEEE 802.11a clause 17.3.2.4 / 17.3.5.9: 52 subcarriers -26..26 without
    # DC, 48 data and 4 pilots at -21, -7, 7, 21; 64-point FFT at 20 MHz.
    plan = presets.ieee80211a()
    assert isinstance(plan, CarrierPlan)
    assert plan.n_fft == 64 and plan.sample_rate == 20e6
    assert plan.n_data == 48 and plan.n_pilots == 4 and plan.n_used == 52
    assert plan.pilot_subcarriers.tolist() == [-21, -7, 7, 21]
    used = set(range(-26, 27)) - {0}
    assert set(plan.data_subcarriers.tolist()) == used - {-21, -7, 7, 21}
    # 12 empty bins: DC and the 11 guard bins k = 27..31 and -32..-27.
    assert plan.null_bins.tolist() == [0] + list(range(27, 38))
    # Clause 17.3.2.4: 312.5 kHz spacing, 3.2 us FFT period, 0.8 us guard = 16 samples.
    assert plan.subcarrier_spacing == 312.5e3
    assert plan.cp_lengths == (16,)
    assert plan.symbol_durations[0] == pytest.approx(4e-6, rel=1e-12)
    # Pilot bins in natural order: k = -21 -> 43, -7 -> 57, 7, 21.
    assert plan.pilot_bins.tolist() == [43, 57, 7, 21]


@pytest.mark.parametrize("start", [0, 1, 5, 126])
def test_wlan_pilot_values_follow_polarity(start):
    # IEEE 802.11a clause 17.3.5.9: pilots of symbol n are p_n * (1, 1, 1, -1);
    # the SIGNAL symbol takes p_0, data symbol i takes p_(i+1).
    plan = presets.ieee80211a(polarity_start=start)
    values = plan.pilot_values
    assert values.shape == (127, 4)
    p = presets.IEEE80211A_PILOT_POLARITY
    for s in (0, 1, 3, 126, 127, 300):
        row = plan.pilots_for(1, s)[0]
        np.testing.assert_array_equal(row, p[(start + s) % 127] * np.array([1, 1, 1, -1]))


def test_wlan_default_starts_at_first_data_symbol():
    # IEEE 802.11a clause 17.3.5.9: the first DATA symbol uses p_1 (p_0 is SIGNAL's).
    assert np.array_equal(presets.ieee80211a().pilot_values[0],
                          presets.ieee80211a(polarity_start=0).pilot_values[1])


def test_wlan_place_puts_pilots_on_their_bins():
    # Round trip through CarrierPlan.place with the plan's own pilots.
    plan = presets.ieee80211a()
    rng = np.random.default_rng(3)
    data = rng.standard_normal(96) + 1j * rng.standard_normal(96)
    grid = plan.place(data)
    np.testing.assert_array_equal(grid[:, [43, 57, 7, 21]], plan.pilot_values[:2])
    assert np.all(grid[:, plan.null_bins] == 0)


def test_wlan_short_training_sequence():
    # IEEE 802.11a clause 17.3.3 (from memory): S_k = sqrt(13/6) (±1 ± j) on
    # k = ±4, ±8, ..., ±24, zero elsewhere.
    s = presets.ieee80211a_short_training()
    assert s.shape == (64,) and s.dtype == np.complex128
    k = np.arange(-26, 27)
    on = k[(k % 4 == 0) & (k != 0)]
    assert np.flatnonzero(s).tolist() == sorted((on % 64).tolist())
    sign = {-24: 1, -20: -1, -16: 1, -12: -1, -8: -1, -4: 1,
            4: -1, 8: -1, 12: 1, 16: 1, 20: 1, 24: 1}
    for kk, sg in sign.items():
        assert s[kk % 64] == pytest.approx(sg * np.sqrt(13 / 6) * (1 + 1j), abs=1e-15)
    # The factor sqrt(13/6) gives the 12 tones the total power of 52 unit tones.
    assert np.sum(np.abs(s) ** 2) == pytest.approx(52.0, rel=1e-14)


def test_wlan_long_training_sequence():
    # IEEE 802.11a clause 17.3.3 (from memory): L_k = ±1 on -26..26 without DC.
    lt = presets.ieee80211a_long_training()
    assert lt.shape == (64,) and lt.dtype == np.complex128
    k = np.arange(-32, 32)
    occupied = (np.abs(k) <= 26) & (k != 0)
    assert np.all(np.abs(lt[k[occupied] % 64]) == 1)
    assert np.all(lt[k[~occupied] % 64] == 0)
    # The first and last few values as printed (from memory).
    assert lt[np.arange(-26, -20) % 64].real.tolist() == [1, 1, -1, -1, 1, 1]
    assert lt[np.arange(1, 7) % 64].real.tolist() == [1, -1, -1, 1, 1, -1]
    assert lt[np.arange(20, 27) % 64].real.tolist() == [-1, 1, -1, 1, 1, 1, 1]


def test_wlan_training_returns_fresh_arrays():
    a = presets.ieee80211a_long_training()
    a[:] = 0
    assert np.any(presets.ieee80211a_long_training() != 0)


def test_wlan_preamble_structure():
    # IEEE 802.11a clause 17.3.3: 10 short symbols of 0.8 us (16 samples),
    # GI2 of 1.6 us (32 samples) and two long symbols of 3.2 us (64 samples).
    x = presets.ieee80211a_preamble()
    assert x.shape == (320,) and x.dtype == np.complex128
    short, gi2, long1, long2 = x[:160], x[160:192], x[192:256], x[256:320]
    np.testing.assert_allclose(short[16:], short[:-16], atol=1e-15)     # period 16
    np.testing.assert_allclose(long1, long2, atol=0)                       # period 64
    np.testing.assert_allclose(gi2, long1[32:], atol=0)                    # GI2 = cyclic prefix
    # Reference: numpy.fft.ifft of the training grids.
    np.testing.assert_allclose(long1, np.fft.ifft(presets.ieee80211a_long_training()),
                               atol=1e-15)
    np.testing.assert_allclose(short[:64], np.fft.ifft(presets.ieee80211a_short_training()),
                               atol=1e-15)
    # Clause 17.3.3: sqrt(13/6) makes both fields equally powerful.
    assert np.mean(np.abs(short) ** 2) == pytest.approx(np.mean(np.abs(long1) ** 2),
                                                        rel=1e-12)
    assert np.mean(np.abs(long1) ** 2) == pytest.approx(52 / 64**2, rel=1e-12)


def test_wlan_preamble_matches_annex_g_samples():
    # IEEE 802.11a Annex G, time-domain short and long training samples at
    # 1/64 scaling (from memory; the standard's table halves the first sample of
    # each field for its window, which the preamble here does not apply).
    x = presets.ieee80211a_preamble()
    short = [0.046 + 0.046j, -0.132 + 0.002j, -0.013 - 0.079j, 0.143 - 0.013j,
             0.092 + 0.000j, 0.143 - 0.013j, -0.013 - 0.079j, -0.132 + 0.002j,
             0.046 + 0.046j, 0.002 - 0.132j, -0.079 - 0.013j, -0.013 + 0.143j,
             0.000 + 0.092j, -0.013 + 0.143j, -0.079 - 0.013j, 0.002 - 0.132j]
    # The table prints three decimals: compare the rounded samples exactly.
    np.testing.assert_allclose(np.round(x[:16], 3), short, atol=1e-12)
    # Long field: GI2 starts at -0.156 (halved to -0.078 in the table), the long
    # symbol at +0.156 (from memory).
    assert np.round(x[160], 3) == -0.156
    assert np.round(x[192], 3) == 0.156


@pytest.mark.parametrize("norm, scale", [("backward", 1 / 64), ("ortho", 1 / 8),
                                         ("forward", 1.0)])
def test_wlan_preamble_norm(norm, scale):
    # numpy.fft.ifft norm convention (general-purpose reference library).
    ref = presets.ieee80211a_preamble(norm="forward")
    np.testing.assert_allclose(presets.ieee80211a_preamble(norm=norm), ref * scale,
                               atol=1e-14)


def test_wlan_errors():
    with pytest.raises(ValueError, match=r"polarity_start must be in 0\.\.126, got 127"):
        presets.ieee80211a(polarity_start=127)
    with pytest.raises(ValueError, match="polarity_start"):
        presets.ieee80211a(polarity_start=-1)
    with pytest.raises(TypeError, match="polarity_start must be an integer"):
        presets.ieee80211a(polarity_start=1.0)
    with pytest.raises(TypeError, match="name must be a string"):
        presets.ieee80211a(name=3)
    with pytest.raises(ValueError, match="norm must be .* got 'unitary'"):
        presets.ieee80211a_preamble(norm="unitary")


# =============================================================================
# 3GPP TS 38.211 (NR)
# =============================================================================

T_C = Fraction(1, 480_000 * 4096)     # TS 38.211 clause 4.1
KAPPA = 64                            # TS 38.211 clause 4.1


def nr_cp_seconds(mu: int, l: int, cp: str = "normal") -> Fraction:
    """N_CP,l in seconds from TS 38.211 clause 5.3.1 (from memory)."""
    if cp == "extended":
        return 512 * KAPPA * Fraction(1, 2**mu) * T_C
    extra = 16 * KAPPA if l in (0, 7 * 2**mu) else 0
    return (144 * KAPPA * Fraction(1, 2**mu) + extra) * T_C


@pytest.mark.parametrize("mu", range(5))
def test_nr_cp_lengths_at_4096(mu):
    # TS 38.211 clause 5.3.1, converted to samples at 4096 * Delta f: the normal
    # prefix is 288 samples for every mu, the long one 288 + 32 * 2**mu
    # (320 at mu = 0, 352 at mu = 1 ...).
    plan = presets.nr(mu, 24, n_fft=4096)
    fs = Fraction(4096 * 15_000 * 2**mu)
    assert plan.cp_lengths[0] == nr_cp_seconds(mu, 0) * fs == 288 + 32 * 2**mu
    assert set(plan.cp_lengths[1:]) == {288} == {nr_cp_seconds(mu, 1) * fs}
    assert len(plan.cp_lengths) == 7 * 2**mu
    # Useful part N_u = 2048 kappa 2**-mu T_c = n_fft samples.
    assert 2048 * KAPPA * Fraction(1, 2**mu) * T_C * fs == 4096


def test_nr_mu0_values():
    # TS 38.211 clause 5.3.1 at mu = 0 and 4096 points: 288 and 320 samples.
    plan = presets.nr(0, 106, n_fft=4096)
    assert plan.cp_lengths == (320, 288, 288, 288, 288, 288, 288)


@pytest.mark.parametrize("mu", range(5))
@pytest.mark.parametrize("n_fft", [512, 1536, 4096])
def test_nr_half_subframe_is_half_a_millisecond(mu, n_fft):
    # TS 38.211 clauses 4.3.1 / 5.3.1: 7 * 2**mu symbols fill exactly 0.5 ms, and
    # the long prefix recurs at l = 0 and l = 7 * 2**mu of each subframe.
    plan = presets.nr(mu, 10, n_fft=n_fft)
    samples = plan.n_samples(7 * 2**mu)
    assert samples == Fraction(n_fft * 15_000 * 2**mu) * Fraction(1, 2000)
    cps = plan.cp_for(14 * 2**mu)
    fs = Fraction(n_fft * 15_000 * 2**mu)
    for l, cp in enumerate(cps):
        assert cp == nr_cp_seconds(mu, l) * fs


@pytest.mark.parametrize("mu, slots_frame", [(0, 10), (1, 20), (2, 40), (3, 80), (4, 160)])
def test_nr_numerology_table_4_3_2_1(mu, slots_frame):
    # TS 38.211 Table 4.2-1 and Table 4.3.2-1 (normal CP): 14 symbols per slot,
    # 10 * 2**mu slots per frame, 2**mu per subframe (from memory).
    n = presets.nr_numerology(mu)
    assert n.subcarrier_spacing == 15e3 * 2**mu
    assert n.symbols_per_slot == 14
    assert n.slots_per_frame == slots_frame
    assert n.slots_per_subframe == 2**mu
    assert n.symbols_per_subframe == 14 * 2**mu


def test_nr_numerology_table_4_3_2_2_extended():
    # TS 38.211 Table 4.3.2-2 (extended CP, mu = 2): 12 symbols, 40 slots per
    # frame, 4 per subframe (from memory).
    n = presets.nr_numerology(2, "extended")
    assert (n.symbols_per_slot, n.slots_per_frame, n.slots_per_subframe) == (12, 40, 4)


def test_nr_extended_cp():
    # TS 38.211 clause 5.3.1: extended prefix 512 kappa 2**-mu T_c = n_fft / 4
    # samples; 4 slots of 12 symbols fill 1 ms.
    plan = presets.nr(2, 66, n_fft=1024, cp="extended")
    assert plan.cp_lengths == (256,)
    assert plan.cp_lengths[0] == nr_cp_seconds(2, 0, "extended") * 1024 * 60_000
    assert plan.n_samples(48) == 1024 * 60_000 // 1000


def test_nr_spacing_durations_and_centring():
    # Subcarrier spacing = sample_rate / n_fft (common practice, no source) must
    # equal Delta f = 15 kHz * 2**mu (TS 38.211 Table 4.2-1).
    plan = presets.nr(1, 273)
    assert plan.n_fft == 4096 and plan.subcarrier_spacing == 30e3
    # TS 38.211 clause 5.3.1 (from memory): grid subcarrier k at (k - N/2) Delta f,
    # N = 12 n_rb; DC carries data.
    assert plan.data_subcarriers.tolist() == list(range(-1638, 1638))
    assert 0 not in plan.null_bins.tolist()
    assert plan.n_pilots == 0
    # 273 RB at 30 kHz span 98.28 MHz (the 100 MHz channel's transmission
    # bandwidth in TS 38.101-1, from memory).
    assert plan.occupied_bandwidth == pytest.approx(98.28e6, rel=1e-12)
    # Symbol durations: useful 1/Delta f; mu = 0 normal symbol 71.354 us, long
    # 71.875 us (derived from clause 5.3.1).
    p0 = presets.nr(0, 25)
    assert p0.fft_duration == pytest.approx(1 / 15e3, rel=1e-12)
    assert p0.symbol_durations[0] == pytest.approx(float((2048 * KAPPA + nr_cp_seconds(0, 0)
                                                          / T_C) * T_C), rel=1e-12)
    assert p0.symbol_durations[0] == pytest.approx(71.875e-6, rel=1e-12)
    assert p0.symbol_durations[1] == pytest.approx(71.354e-6, rel=1e-5)


def test_nr_odd_rb_count_centring():
    # TS 38.211 clause 5.3.1: with 12 n_rb even, one more subcarrier below DC.
    plan = presets.nr(0, 25)
    assert plan.data_subcarriers[0] == -150 and plan.data_subcarriers[-1] == 149


@pytest.mark.parametrize("n_rb, mu, n_fft", [(25, 0, 512), (52, 0, 1024), (106, 0, 2048),
                                             (270, 0, 4096), (273, 1, 4096), (1, 0, 128)])
def test_nr_default_fft(n_rb, mu, n_fft):
    # Common practice, no source: smallest power of two >= 128 with <= 85 % occupancy.
    plan = presets.nr(mu, n_rb)
    assert plan.n_fft == n_fft
    assert plan.sample_rate == n_fft * 15e3 * 2**mu


def test_nr_errors():
    with pytest.raises(ValueError, match=r"mu must be in 0\.\.4, got 5"):
        presets.nr(5, 10)
    with pytest.raises(ValueError, match="mu must be in"):
        presets.nr(-1, 10)
    with pytest.raises(TypeError, match="mu must be an integer"):
        presets.nr(1.0, 10)
    with pytest.raises(ValueError, match=r"n_rb must be in 1\.\.275, got 276"):
        presets.nr(0, 276)
    with pytest.raises(ValueError, match="n_rb must be in"):
        presets.nr(0, 0)
    with pytest.raises(ValueError, match=r"n_rb=106 needs 1272 subcarriers, more than "
                                         r"n_fft=1024"):
        presets.nr(0, 106, n_fft=1024)
    with pytest.raises(ValueError, match=r"n_fft=1000 .* not a whole number; use a "
                                         r"multiple of 128"):
        presets.nr(0, 10, n_fft=1000)
    with pytest.raises(ValueError, match="multiple of 4"):
        presets.nr(2, 10, n_fft=1002, cp="extended")
    with pytest.raises(TypeError, match="n_fft must be an integer"):
        presets.nr(0, 10, n_fft=2048.0)
    for mu in (0, 1, 3, 4):
        with pytest.raises(ValueError, match=f"extended' exists only for mu=2.*mu={mu}"):
            presets.nr(mu, 10, cp="extended")
    with pytest.raises(ValueError, match="cp must be 'normal' or 'extended', got 'long'"):
        presets.nr(0, 10, cp="long")
    with pytest.raises(ValueError, match="extended"):
        presets.nr_numerology(1, "extended")
    with pytest.raises(TypeError, match="name must be a string"):
        presets.nr(0, 10, name=b"x")


# =============================================================================
# 3GPP TS 36.211 (LTE downlink)
# =============================================================================


def test_lte_cp_and_slot():
    # TS 36.211 Table 6.12-1: normal CP 160 for l = 0, 144 for l = 1..6 at 2048
    # points; clause 4: a slot is 15360 T_s = 0.5 ms, T_s = 1/30.72 MHz (from memory).
    plan = presets.lte(100)
    assert plan.cp_lengths == (160,) + (144,) * 6
    assert plan.n_fft == 2048 and plan.sample_rate == 30.72e6
    assert plan.n_samples(7) == 15360
    assert 15360 / plan.sample_rate == pytest.approx(0.5e-3, rel=1e-15)
    assert plan.subcarrier_spacing == 15e3
    # Extended CP: 512 for l = 0..5, 6 symbols per slot.
    ext = presets.lte(100, cp="extended")
    assert ext.cp_lengths == (512,) and ext.n_samples(6) == 15360


@pytest.mark.parametrize("n_rb", [6, 15, 25, 50, 75, 100])
def test_lte_resource_blocks(n_rb):
    # TS 36.211 clause 6.12: k = -N/2..-1 and 1..N/2, N = 12 n_rb, DC unused.
    plan = presets.lte(n_rb)
    n = 12 * n_rb
    assert plan.n_data == n and plan.n_pilots == 0
    expected = list(range(-n // 2, 0)) + list(range(1, n // 2 + 1))
    assert plan.data_subcarriers.tolist() == expected
    assert 0 in plan.null_bins.tolist()


@pytest.mark.parametrize("n_rb, n_fft, cps", [(6, 128, (10, 9)), (15, 256, (20, 18)),
                                              (25, 512, (40, 36)), (50, 1024, (80, 72)),
                                              (75, 1536, (120, 108))])
def test_lte_smaller_fft_scales(n_rb, n_fft, cps):
    # TS 36.211 Table 6.12-1 scaled by n_fft / 2048; the pairings of n_rb with
    # n_fft are common practice, no source.  The slot stays 0.5 ms.
    plan = presets.lte(n_rb, n_fft=n_fft)
    assert plan.cp_lengths[:2] == cps
    assert plan.sample_rate == n_fft * 15e3
    assert plan.n_samples(7) / plan.sample_rate == pytest.approx(0.5e-3, rel=1e-15)


def test_lte_errors():
    with pytest.raises(ValueError, match=r"n_rb must be in 6\.\.110, got 5"):
        presets.lte(5)
    with pytest.raises(ValueError, match=r"n_rb must be in 6\.\.110, got 111"):
        presets.lte(111)
    with pytest.raises(ValueError, match="n_fft must be a positive multiple of 128.*got 1000"):
        presets.lte(6, n_fft=1000)
    with pytest.raises(ValueError, match="n_fft must be a positive multiple of 128"):
        presets.lte(6, n_fft=0)
    with pytest.raises(ValueError, match=r"n_rb=100 needs 1200 subcarriers.*n_fft=1024"):
        presets.lte(100, n_fft=1024)
    with pytest.raises(ValueError, match="cp must be"):
        presets.lte(6, cp="Normal")
    with pytest.raises(TypeError, match="n_rb must be an integer"):
        presets.lte("25")


# =============================================================================
# ETSI EN 300 744 (DVB-T)
# =============================================================================

MODES = {"2k": (2048, 1704, 45, 17, 1512), "8k": (8192, 6816, 177, 68, 6048)}


@pytest.mark.parametrize("mode", ["2k", "8k"])
def test_dvbt_table_sizes(mode):
    # EN 300 744 clause 4.5.4 / Table 7: 45 and 177 continual pilots; clause 4.6
    # / Table 8: 17 and 68 TPS carriers (from memory).
    n_fft, k_max, n_cont, n_tps, _ = MODES[mode]
    cont = getattr(presets, f"DVBT_CONTINUAL_PILOTS_{mode.upper()}")
    tps = getattr(presets, f"DVBT_TPS_CARRIERS_{mode.upper()}")
    assert cont.size == n_cont and tps.size == n_tps
    assert np.all(np.diff(cont) > 0) and np.all(np.diff(tps) > 0)
    assert cont[0] == 0 and cont[-1] == k_max           # both band edges are pilots
    assert np.all(cont % 3 == 0)                          # on the scattered-pilot grid
    assert np.intersect1d(cont, tps).size == 0
    assert not cont.flags.writeable and not tps.flags.writeable


def test_dvbt_8k_tables_repeat_2k():
    # EN 300 744 Tables 7 and 8 (from memory): the 8K sets are the 2K sets
    # repeated every 1704 carriers.
    cont = np.unique(np.concatenate([presets.DVBT_CONTINUAL_PILOTS_2K + o
                                     for o in (0, 1704, 3408, 5112)]))
    np.testing.assert_array_equal(cont, presets.DVBT_CONTINUAL_PILOTS_8K)
    tps = np.concatenate([presets.DVBT_TPS_CARRIERS_2K + o for o in (0, 1704, 3408, 5112)])
    np.testing.assert_array_equal(tps, presets.DVBT_TPS_CARRIERS_8K)


@pytest.mark.parametrize("mode", ["2k", "8k"])
@pytest.mark.parametrize("phase", range(4))
def test_dvbt_data_carriers_per_symbol(mode, phase):
    # EN 300 744 clause 4.3.4.2: 1512 (2K) / 6048 (8K) data carriers in every
    # symbol; clause 4.4: 1705 / 6817 carriers K = 0..K_max; clause 4.5.3:
    # scattered pilots on K = 3 (l mod 4) + 12 p.  The data count is a strong
    # check of Tables 7 and 8: any wrong entry changes it.
    n_fft, k_max, n_cont, n_tps, n_data = MODES[mode]
    plan = presets.dvbt(mode, symbol_phase=phase)
    assert plan.n_fft == n_fft
    assert plan.n_used == k_max + 1
    assert plan.n_data == n_data
    pilots_k = plan.pilot_subcarriers + k_max // 2
    scattered = np.arange(3 * phase, k_max + 1, 12)
    cont = getattr(presets, f"DVBT_CONTINUAL_PILOTS_{mode.upper()}")
    tps = getattr(presets, f"DVBT_TPS_CARRIERS_{mode.upper()}")
    np.testing.assert_array_equal(pilots_k, np.union1d(np.union1d(scattered, cont), tps))
    # Clause 4.4: k' = K - K_max / 2, the band centred on DC.
    used = np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers))
    assert used.min() == -(k_max // 2) and used.max() == k_max // 2


@pytest.mark.parametrize("mode", ["2k", "8k"])
def test_dvbt_pilot_values(mode):
    # EN 300 744 clauses 4.5.2 / 4.5.5: pilots 4/3 * 2 (1/2 - w_K), real; TPS
    # carriers (clause 4.6) start the DBPSK at 2 (1/2 - w_K), unboosted (the
    # documented placeholder).
    _, k_max, _, _, _ = MODES[mode]
    plan = presets.dvbt(mode, symbol_phase=2)
    w = presets.dvbt_reference_prbs(k_max + 1).astype(int)
    pilots_k = plan.pilot_subcarriers + k_max // 2
    values = plan.pilot_values[0]
    tps = np.isin(pilots_k, getattr(presets, f"DVBT_TPS_CARRIERS_{mode.upper()}"))
    np.testing.assert_array_equal(values[~tps], 4 / 3 * (1 - 2 * w[pilots_k[~tps]]))
    np.testing.assert_array_equal(values[tps], 1 - 2 * w[pilots_k[tps]])
    assert plan.pilot_values.shape == (1, plan.n_pilots)
    # Carrier K = 0 is a continual pilot and w_0 = 1: value -4/3.
    assert values[0] == -4 / 3


def test_dvbt_prbs():
    # EN 300 744 clause 4.5.2 (from memory): x^11 + x^2 + 1, all-ones start, so
    # the first 11 bits are ones; the sequence then reads 000000000 11 0 ...
    w = presets.dvbt_reference_prbs(4094)
    assert w.dtype == np.uint8
    assert "".join(map(str, w[:23])) == "11111111111" + "000000000" + "110"
    # A maximum-length sequence of degree 11 (x^11 + x^2 + 1 is primitive):
    # period 2047 and 1024 ones per period (balance property of m-sequences).
    assert np.array_equal(w[:2047], w[2047:])
    assert int(w[:2047].sum()) == 1024
    assert all(not np.array_equal(w[:100], w[s:s + 100]) for s in range(1, 2047, 89))
    assert presets.dvbt_reference_prbs(0).shape == (0,)


@pytest.mark.parametrize("mode, guard, samples", [
    ("2k", "1/4", 512), ("2k", "1/8", 256), ("2k", "1/16", 128), ("2k", "1/32", 64),
    ("8k", "1/4", 2048), ("8k", "1/8", 1024), ("8k", "1/16", 512), ("8k", "1/32", 256)])
def test_dvbt_guard_lengths(mode, guard, samples):
    # EN 300 744 clause 4.4, table "duration of symbol part for the allowed guard
    # intervals for 8 MHz channels": Delta = 512, 256, 128, 64 T (2K) and 2048,
    # 1024, 512, 256 T (8K) (from memory).
    plan = presets.dvbt(mode, guard)
    assert plan.cp_lengths == (samples,)
    assert presets.dvbt_parameters(mode, guard).guard_samples == samples


def test_dvbt_timing_8mhz():
    # EN 300 744 clause 4.4, table "numerical values for the OFDM parameters for
    # the 8K and 2K modes for 8 MHz channels" (from memory): T = 7/64 us,
    # T_U = 224 us (2K) / 896 us (8K), spacing 4464 Hz / 1116 Hz, K_min..K_max
    # spans 7.61 MHz; guard 1/4 of 2K: 56 us.
    for mode, t_u, spacing in (("2k", 224e-6, 4464), ("8k", 896e-6, 1116)):
        plan = presets.dvbt(mode)
        params = presets.dvbt_parameters(mode)
        assert plan.sample_rate == pytest.approx(64e6 / 7, rel=1e-15)
        assert plan.fft_duration == pytest.approx(t_u, rel=1e-12)
        assert params.useful_duration_s == pytest.approx(t_u, rel=1e-12)
        assert params.elementary_period_s == pytest.approx(7e-6 / 64, rel=1e-15)
        assert round(plan.subcarrier_spacing) == spacing
        assert params.k_max * plan.subcarrier_spacing == pytest.approx(7.61e6, abs=5e3)
        assert params.n_carriers == plan.n_used and params.symbols_per_frame == 68
    assert presets.dvbt_parameters("2k", "1/4").guard_duration_s == pytest.approx(56e-6)
    assert presets.dvbt_parameters("8k", "1/32").guard_duration_s == pytest.approx(28e-6)


@pytest.mark.parametrize("mhz, period_us", [(7, 1 / 8), (6, 7 / 48), (5, 7 / 40)])
def test_dvbt_other_channels(mhz, period_us):
    # EN 300 744, annexes for 7, 6 and 5 MHz channels (from memory): T = 1/8 us,
    # 7/48 us, 7/40 us; layout unchanged.
    plan = presets.dvbt("2k", channel_mhz=mhz)
    assert 1 / plan.sample_rate == pytest.approx(period_us * 1e-6, rel=1e-12)
    assert plan.n_data == 1512 and plan.cp_lengths == (512,)


def test_dvbt_guard_forms():
    assert presets.dvbt_parameters("8k", Fraction(1, 8)).guard_samples == 1024
    assert presets.dvbt_parameters("8k", Fraction(1, 8)).guard == "1/8"
    assert presets.dvbt_parameters("8K", 0.0625).guard_samples == 512


def test_dvbt_errors():
    with pytest.raises(ValueError, match="mode must be '2k' or '8k', got '4k'"):
        presets.dvbt("4k")
    with pytest.raises(ValueError, match="mode must be"):
        presets.dvbt(2048)
    with pytest.raises(ValueError, match="guard must be one of .* got '1/5'"):
        presets.dvbt("2k", "1/5")
    with pytest.raises(ValueError, match="guard must be one of .* got 0.3"):
        presets.dvbt("2k", 0.3)
    with pytest.raises(ValueError, match="guard must be one of"):
        presets.dvbt("2k", True)
    with pytest.raises(ValueError, match=r"channel_mhz must be one of \(5, 6, 7, 8\), got 9"):
        presets.dvbt("2k", channel_mhz=9)
    with pytest.raises(TypeError, match="channel_mhz must be an integer"):
        presets.dvbt("2k", channel_mhz=8.0)
    with pytest.raises(ValueError, match=r"symbol_phase must be in 0\.\.3, got 4"):
        presets.dvbt("2k", symbol_phase=4)
    with pytest.raises(TypeError, match="symbol_phase must be an integer"):
        presets.dvbt("2k", symbol_phase=True)
    with pytest.raises(ValueError, match="n must be >= 0, got -1"):
        presets.dvbt_reference_prbs(-1)
    with pytest.raises(TypeError, match="n must be an integer"):
        presets.dvbt_reference_prbs(2.0)


# =============================================================================
# Module
# =============================================================================


def test_records_are_immutable():
    n = presets.nr_numerology(0)
    with pytest.raises(AttributeError):
        n.mu = 1
    p = presets.dvbt_parameters("2k")
    with pytest.raises(AttributeError):
        p.n_fft = 1


def test_all_names_exist():
    for name in presets_module.__all__:
        assert hasattr(presets_module, name)


def test_docstring_examples_run():
    # The Examples sections are doctests (Sphinx runs them too).
    result = doctest.testmod(presets_module, optionflags=doctest.ELLIPSIS
                             | doctest.NORMALIZE_WHITESPACE)
    assert result.attempted > 10 and result.failed == 0


def test_wlan_long_training_through_the_plan_and_waveform():
    # IEEE 802.11a-1999 clause 17.3.3: the long training field is a 32-sample
    # guard interval (GI2) followed by two 64-sample long symbols.  Built
    # here through a CarrierPlan over the 52 training subcarriers and
    # CpOfdm with a prefix pattern (32, 0): the GI2 must be the tail of the
    # long symbol, the two symbols identical, and the whole equal to the
    # preset's preamble (which uses numpy.fft.ifft, scale 1/64, against
    # CpOfdm's unitary 1/8).
    long_grid = presets.ieee80211a_long_training()
    bins = np.flatnonzero(long_grid)
    signed = np.where(bins >= 32, bins - 64, bins)
    plan = tonebank.CarrierPlan(64, data=signed, cp_length=[32, 0], sample_rate=20e6)
    ofdm = tonebank.CpOfdm(plan)
    field = ofdm.synthesize(np.stack([long_grid, long_grid]))
    assert field.shape == (160,)
    np.testing.assert_array_equal(field[:32], field[64:96])        # GI2 = tail
    np.testing.assert_allclose(field[32:96], field[96:160], atol=0)  # 64-sample period
    np.testing.assert_allclose(field / 8, presets.ieee80211a_preamble()[160:], atol=1e-15)
    data, _ = plan.take(ofdm.analyze(field))
    np.testing.assert_allclose(data.reshape(2, -1), long_grid[plan.data_bins][None].repeat(2, 0),
                               atol=1e-14)
