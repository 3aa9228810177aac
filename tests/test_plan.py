"""CarrierPlan: layout, placement, validation.

Outside references: numpy.fft.fftfreq for the natural FFT bin order (a
general-purpose reference library); subcarrier spacing = sample_rate /
n_fft and symbol time = (n_fft + cp) / sample_rate (common practice, no
source).
"""

import numpy as np
import pytest
from hypothesis import given, strategies as st

import tonebank
from tonebank import CarrierPlan


def test_bins_follow_numpy_fft_order():
    # numpy.fft.fftfreq(n) * n is the signed subcarrier index of each bin
    # in natural FFT order (numpy documentation of fftfreq).
    for n in (8, 9, 64):
        k_of_bin = np.round(np.fft.fftfreq(n) * n).astype(int)
        plan = CarrierPlan(n, data=k_of_bin[k_of_bin != 0])
        assert np.array_equal(k_of_bin[plan.data_bins], plan.data_subcarriers)
        assert plan.null_bins.tolist() == [0]


def test_sizes_and_sorted_subcarriers():
    plan = CarrierPlan(16, data=[3, -3, 2, -2], pilots=[1, -1], cp_length=4)
    assert (plan.n_fft, plan.n_data, plan.n_pilots, plan.n_used) == (16, 4, 2, 6)
    assert plan.data_subcarriers.tolist() == [-3, -2, 2, 3]
    assert plan.pilot_bins.tolist() == [15, 1]
    assert len(plan.null_bins) == 10
    assert plan.cp_lengths == (4,) and plan.mean_cp_length == 4.0
    with pytest.raises(ValueError):
        plan.data_bins[0] = 1  # read-only tables


def test_time_and_frequency():
    # common practice, no source: spacing = fs / N, symbol = (N + cp) / fs
    plan = CarrierPlan(64, data=range(-26, 27), cp_length=[20, 16], sample_rate=20e6)
    assert plan.subcarrier_spacing == pytest.approx(312.5e3)
    assert plan.fft_duration == pytest.approx(3.2e-6)
    assert plan.symbol_durations == pytest.approx((4.2e-6, 4.0e-6))
    assert plan.occupied_bandwidth == pytest.approx(53 * 312.5e3)
    with pytest.raises(ValueError, match="sample_rate"):
        CarrierPlan(8, data=[1]).subcarrier_spacing


def test_centered_builder():
    plan = CarrierPlan.centered(64, 52, pilot_spacing=13, pilot_offset=6, cp_length=16)
    active = np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers))
    assert sorted(active.tolist()) == list(range(-26, 0)) + list(range(1, 27))
    assert plan.pilot_subcarriers.tolist() == [-20, -7, 7, 20]
    odd = CarrierPlan.centered(16, 5, dc_null=False)
    assert odd.data_subcarriers.tolist() == [-2, -1, 0, 1, 2]
    with pytest.raises(ValueError, match="n_active"):
        CarrierPlan.centered(16, 16)
    with pytest.raises(ValueError, match="pilot_offset"):
        CarrierPlan.centered(16, 8, pilot_spacing=2, pilot_offset=2)
    with pytest.raises(ValueError, match="pilot_spacing"):
        CarrierPlan.centered(16, 8, pilot_spacing=1)


def test_place_and_take_round_trip_with_periodic_pilots():
    pv = np.array([[1, -1], [1j, -1j], [-1, 1]])
    plan = CarrierPlan(16, data=[-3, -2, 2, 3], pilots=[-1, 1], pilot_values=pv)
    data = np.arange(2 * 5 * 4).reshape(2, 20) * (1 + 1j)
    grid = plan.place(data, start_symbol=1)
    assert grid.shape == (2, 5, 16) and grid.dtype == np.complex128
    assert np.all(grid[..., plan.null_bins] == 0)
    back, pilots = plan.take(grid)
    assert np.array_equal(back, data)
    assert np.array_equal(pilots[0], pv[[1, 2, 0, 1, 2]])
    own = plan.place(data[0], pilots=np.full((5, 2), 7.0))
    assert np.all(plan.take(own)[1] == 7)
    assert plan.place(data.astype(np.complex64)).dtype == np.complex64


@given(n_fft=st.sampled_from([8, 12, 64]), n_sym=st.integers(0, 4), seed=st.integers(0, 99))
def test_place_take_property(n_fft, n_sym, seed):
    rng = np.random.default_rng(seed)
    plan = CarrierPlan.centered(n_fft, n_fft // 2, pilot_spacing=3)
    data = rng.standard_normal((3, n_sym * plan.n_data)) + 0j
    back, _ = plan.take(plan.place(data))
    assert np.array_equal(back, data)


def test_padding_message_never_truncates():
    plan = CarrierPlan(16, data=[-3, -2, 2, 3])
    with pytest.raises(ValueError, match=r"pad with 1 more values"):
        plan.place(np.ones(7))
    with pytest.raises(ValueError, match="3 values over"):
        plan.symbols_for(11)


@pytest.mark.parametrize("kwargs, match", [
    (dict(data=[1, 2], pilots=[2]), "both data and pilots"),
    (dict(data=[8]), "outside the range"),
    (dict(data=[-9]), "outside the range"),
    (dict(data=[1, 1]), "more than once"),
    (dict(data=[]), "at least one"),
    (dict(data=[[1, 2]]), "1-D"),
    (dict(data=[1], cp_length=17), "cp_length 17"),
    (dict(data=[1], cp_length=[4, -1]), "cp_length -1"),
    (dict(data=[1], cp_length=[]), "empty"),
    (dict(data=[1], pilots=[2, 3], pilot_values=[1, 2, 3]), "pilot_values"),
    (dict(data=[1], pilots=[2], pilot_values=[np.nan]), "finite"),
    (dict(data=[1], sample_rate=-1.0), "sample_rate"),
])
def test_bad_arguments_name_themselves(kwargs, match):
    with pytest.raises(ValueError, match=match):
        CarrierPlan(16, **kwargs)


@pytest.mark.parametrize("kwargs", [
    dict(data=[1.5]), dict(data=["a"]), dict(data=[1], cp_length=2.0),
    dict(data=[1], sample_rate="fast"), dict(data=[1], name=3),
])
def test_bad_types(kwargs):
    with pytest.raises(TypeError):
        CarrierPlan(16, **kwargs)


def test_bad_n_fft_and_grid():
    with pytest.raises(ValueError, match="n_fft"):
        CarrierPlan(0, data=[0])
    with pytest.raises(TypeError, match="n_fft"):
        CarrierPlan(16.0, data=[1])
    plan = CarrierPlan(16, data=[1], pilots=[2])
    with pytest.raises(ValueError, match="grid must have shape"):
        plan.take(np.zeros((3, 8)))
    with pytest.raises(ValueError, match="do not broadcast"):
        plan.place(np.ones(3), pilots=np.ones((2, 2)))
    with pytest.raises(TypeError, match="data must be numeric"):
        plan.place(np.array(["x"]))
    with pytest.raises(ValueError, match="no pilot subcarriers"):
        CarrierPlan(16, data=[1]).place(np.ones(2), pilots=np.ones((2, 1)))


def test_replace_equality_and_repr():
    plan = CarrierPlan.centered(64, 52, pilot_spacing=13, cp_length=16, name="lab link")
    assert plan.replace(cp_length=16) == plan
    assert hash(plan.replace()) == hash(plan)
    other = plan.replace(cp_length=[20, 16])
    assert other != plan and other.cp_lengths == (20, 16)
    assert "lab link" in repr(plan) and "n_fft=64" in repr(plan)
    with pytest.raises(TypeError, match="unknown"):
        plan.replace(fft=3)
    assert plan.cp_for(5, start_symbol=1).tolist() == [16] * 5
    assert other.cp_for(3, start_symbol=1).tolist() == [16, 20, 16]
    assert other.n_samples(3) == 3 * 64 + 56
    assert tonebank.CarrierPlan is CarrierPlan
