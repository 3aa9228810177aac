"""PilotPattern: layouts, overhead, placing and taking, bad input.

Outside references: the scattered-pilot layout of DVB-T, ETSI EN 300 744
clause 4.5.3 (scattered pilots on k = K_min + 3 (l mod 4) + 12 p in
symbol l; from memory); the IEEE 802.11a long training sequence as stored
in tonebank.presets (IEEE Std 802.11a-1999 clause 17.3.3, from memory, and
checked in test_presets.py); CarrierPlan.place and CpOfdm for the
agreement with the plan's own pilots and with the waveform.
"""

import numpy as np
import pytest
from hypothesis import given, strategies as st

import tonebank
from tonebank import CarrierPlan, CpOfdm, PilotPattern, presets


def random_data(rng, n, dtype=np.complex128):
    return (rng.standard_normal(n) + 1j * rng.standard_normal(n)).astype(dtype)


def test_from_plan_matches_plan_place_and_take():
    plan = presets.ieee80211a()
    pattern = PilotPattern.from_plan(plan)
    assert plan.pilot_pattern is plan.pilot_pattern          # made once
    assert pattern.period == 127 and pattern.head == 0
    rng = np.random.default_rng(1)
    data = random_data(rng, 9 * plan.n_data)
    for start in (0, 125):
        grid = pattern.place(data, start_symbol=start)
        assert np.array_equal(grid, plan.place(data, start_symbol=start))
        d, p = pattern.take(grid, start_symbol=start)
        d_ref, p_ref = plan.take(grid)
        assert np.array_equal(d, d_ref) and np.array_equal(p, p_ref.reshape(-1))


def test_scattered_follows_the_dvbt_layout():
    # ETSI EN 300 744 clause 4.5.3 (from memory): in symbol l the scattered
    # pilots sit on k = K_min + 3 (l mod 4) + 12 p.
    plan = CarrierPlan(256, data=np.arange(-100, 101))
    pattern = PilotPattern.scattered(plan, 12, 3)
    assert pattern.period == 4
    for l in range(9):
        want = -100 + 3 * (l % 4) + 12 * np.arange(17)
        want = want[want <= 100]
        assert pattern.subcarriers(l).tolist() == want.tolist()
    # Over one period every third subcarrier has carried a pilot.
    union = pattern.mask_for(4).any(axis=0)
    k = np.round(np.fft.fftfreq(256) * 256).astype(int)
    assert sorted(k[union].tolist()) == list(range(-100, 101, 3))


def test_overheads():
    plan = CarrierPlan.centered(64, 48, cp_length=16)
    assert PilotPattern.comb(plan, 4).overhead() == pytest.approx(12 / 48)
    assert PilotPattern.scattered(plan).overhead() == pytest.approx(4 / 48)
    assert PilotPattern.block(plan, 8).overhead() == pytest.approx(1 / 8)
    assert PilotPattern.block(plan, 8, n_training=2).overhead(16) == pytest.approx(4 / 16)
    pre = PilotPattern.preamble(plan, 2)
    assert pre.period == 0 and pre.overhead(10) == pytest.approx(2 / 10)
    # The plan's pilots count unless left out.
    wifi = presets.ieee80211a()
    assert PilotPattern.comb(wifi, 6).overhead() > PilotPattern.comb(
        wifi, 6, include_plan_pilots=False).overhead()
    assert wifi.pilot_pattern.overhead() == pytest.approx(4 / 52)


@pytest.mark.parametrize("kind", ["comb", "scattered", "block", "preamble", "plan"])
@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_place_take_and_cp_ofdm_round_trip(kind, dtype):
    plan = CarrierPlan.centered(128, 96, pilot_spacing=16, pilot_offset=8, cp_length=32)
    pattern = {
        "comb": lambda: PilotPattern.comb(plan, 6, offset=2, values=-1.0),
        "scattered": lambda: PilotPattern.scattered(plan, 12, 3, values=4 / 3),
        "block": lambda: PilotPattern.block(plan, 5, n_training=2, values=1j),
        "preamble": lambda: PilotPattern.preamble(plan, 2),
        "plan": lambda: plan.pilot_pattern,
    }[kind]()
    rng = np.random.default_rng(4)
    n_symbols, start = 11, 3
    n_values = pattern.n_data(n_symbols, start)
    data = random_data(rng, 2 * n_values, dtype).reshape(2, n_values)
    grid = pattern.place(data, n_symbols=n_symbols, start_symbol=start)
    assert grid.shape == (2, n_symbols, 128) and grid.dtype == dtype
    mask = pattern.mask_for(n_symbols, start)
    assert np.array_equal(grid[..., mask], np.broadcast_to(
        pattern.values_for(n_symbols, start)[mask], (2, mask.sum())).astype(dtype))
    assert not grid[..., plan.null_bins].any()
    d, p = pattern.take(grid, start_symbol=start)
    assert np.array_equal(d, data) and p.shape == (2, mask.sum())
    # Through the waveform and back (CpOfdm takes any grid).
    ofdm = CpOfdm(plan)
    back = ofdm.analyze(ofdm.synthesize(grid, start_symbol=start), start_symbol=start)
    tol = 1e-12 if dtype == np.complex128 else 2e-5
    np.testing.assert_allclose(back, grid, atol=tol * np.abs(grid).max())


def test_preamble_with_the_80211a_long_training_sequence():
    plan = presets.ieee80211a()
    ltf = presets.ieee80211a_long_training()
    pattern = PilotPattern.preamble(plan, 2, values=ltf)
    assert pattern.head == 2 and [pattern.n_data(1, s) for s in range(3)] == [0, 0, 48]
    rng = np.random.default_rng(0)
    data = random_data(rng, 5 * plan.n_data)
    grid = pattern.place(data)
    assert grid.shape == (7, 64)
    assert np.array_equal(grid[0], ltf) and np.array_equal(grid[1], ltf)
    # After the preamble, the plan's own symbols 0, 1, ... follow.
    assert np.array_equal(grid[2:], plan.place(data))


def test_symbols_for_and_data_order():
    plan = CarrierPlan(8, data=[-3, -2, -1, 1, 2, 3])
    pattern = PilotPattern.scattered(plan, spacing=4, shift=2)
    assert pattern.symbols_for(8) == 2 and pattern.symbols_for(0) == 0
    with pytest.raises(ValueError, match="pad with 2"):
        pattern.symbols_for(10)
    with pytest.raises(ValueError, match="hold 8"):
        pattern.place(np.zeros(6, complex), n_symbols=2)
    block = PilotPattern.block(plan, 1)          # every symbol all pilots
    with pytest.raises(ValueError, match="no data cells"):
        block.symbols_for(3)
    assert block.place(np.zeros(0, complex), n_symbols=3).shape == (3, 8)


@given(spacing=st.integers(2, 9), shift=st.integers(0, 8), offset=st.integers(0, 8),
       start=st.integers(0, 20), n_symbols=st.integers(0, 7))
def test_place_take_inverse_property(spacing, shift, offset, start, n_symbols):
    plan = CarrierPlan.centered(32, 22, pilot_spacing=7)
    shift, offset = shift % spacing, offset % spacing
    pattern = (PilotPattern.scattered(plan, spacing, shift, offset=offset) if shift
               else PilotPattern.comb(plan, spacing, offset=offset))
    n_values = pattern.n_data(n_symbols, start)
    data = np.arange(n_values) + 1j
    grid = pattern.place(data, n_symbols=n_symbols, start_symbol=start)
    d, p = pattern.take(grid, start_symbol=start)
    assert np.array_equal(d, data)
    assert p.size == pattern.mask_for(n_symbols, start).sum()
    # Every used cell is data or pilot, never both.
    used = np.zeros(32, bool)
    used[plan.data_bins] = used[plan.pilot_bins] = True
    both = pattern.mask_for(n_symbols, start) | pattern.data_mask_for(n_symbols, start)
    assert np.array_equal(both, np.broadcast_to(used, both.shape))


def test_bad_input():
    plan = CarrierPlan.centered(32, 20)
    with pytest.raises(TypeError, match="plan"):
        PilotPattern.comb("plan", 4)
    with pytest.raises(ValueError, match="spacing=21"):
        PilotPattern.comb(plan, 21)
    with pytest.raises(ValueError, match="spacing"):
        PilotPattern.comb(plan, 1)
    with pytest.raises(ValueError, match="offset"):
        PilotPattern.comb(plan, 4, offset=4)
    with pytest.raises(ValueError, match="shift=5"):
        PilotPattern.scattered(plan, 4, 5)
    with pytest.raises(TypeError, match="include_plan_pilots"):
        PilotPattern.comb(plan, 4, include_plan_pilots="yes")
    with pytest.raises(ValueError, match="broadcast"):
        PilotPattern.comb(plan, 4, values=np.ones(5))
    with pytest.raises(ValueError, match="non-zero"):
        PilotPattern.comb(plan, 4, values=0.0)
    with pytest.raises(ValueError, match="finite"):
        PilotPattern.comb(plan, 4, values=np.nan)
    with pytest.raises(TypeError, match="mask"):
        PilotPattern(plan, np.zeros((1, 32)))
    with pytest.raises(ValueError, match="shape"):
        PilotPattern(plan, np.zeros((1, 16), bool))
    null_mask = np.zeros((1, 32), bool)
    null_mask[0, plan.null_bins[0]] = True
    with pytest.raises(ValueError, match="does not use"):
        PilotPattern(plan, null_mask)
    with pytest.raises(ValueError, match="head"):
        PilotPattern(plan, np.zeros((2, 32), bool), head=3)
    with pytest.raises(ValueError, match="period"):
        PilotPattern.block(plan, 1, n_training=2)
    pattern = PilotPattern.comb(plan, 4)
    with pytest.raises(ValueError, match="n_fft=32"):
        pattern.take(np.zeros((3, 16), complex))
    with pytest.raises(ValueError, match="n_fft=32"):
        pattern.take(np.zeros(32, complex))
    with pytest.raises(TypeError, match="numeric"):
        pattern.place(np.array(["a"]))
    with pytest.raises(ValueError, match="start_symbol"):
        pattern.place(np.zeros(15, complex), start_symbol=-1)
    assert "comb every 4" in repr(pattern)
    assert tonebank.PilotPattern is PilotPattern
