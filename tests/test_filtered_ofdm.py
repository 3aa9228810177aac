"""FilteredOfdm, SubbandGroup, subband_interference.

Sources named beside each check:

* scipy.signal.firwin (general-purpose reference library): the windowed-
  sinc low-pass design (window method, unit gain at DC) that the subband
  filter's prototype must equal;
* numpy.convolve / numpy.fft (reference library): the filtering and the
  transforms of a loop-per-symbol reference written from the definition
  (CP-OFDM symbol, linear convolution with h; matched filter
  g[j] = conj(h[L-1-j]), window delayed by L-1, unitary DFT);
* scipy.signal.welch through tonebank.spectrum for the out-of-band power.

The EVM floors, out-of-band reductions and interference levels asserted
below are this project's own measurements of the stated configurations,
with margins; they are regression bounds, not published values.
"""

import numpy as np
import pytest
import scipy.signal
from hypothesis import given, settings, strategies as st

import tonebank
from tonebank import CarrierPlan, CpOfdm, FilteredOfdm, SubbandGroup, subband_interference

TOL = {np.complex128: 1e-12, np.complex64: 2e-5}

PLANS = {
    "wifi-like": CarrierPlan.centered(64, 52, pilot_spacing=13, pilot_offset=6, cp_length=16),
    "patterned-cp": CarrierPlan.centered(128, 72, pilot_spacing=6, cp_length=[10, 9, 9, 9]),
    "numpy-only-size": CarrierPlan.centered(14, 8, cp_length=4),  # 14 = 2*7: no C plan
}


def reference_taps(plan, filter_len, margin, shift, L=1):
    """scipy.signal.firwin low-pass (window method, scale=True: unit DC gain),
    moved to the band centre."""
    size = plan.n_fft * L
    used = np.concatenate((plan.data_subcarriers, plan.pilot_subcarriers)) + shift
    width = (used.max() - used.min() + 1 + 2 * margin) / size
    centre = (used.max() + used.min()) / (2 * size)
    proto = scipy.signal.firwin(filter_len, width / 2, window="hann", fs=1.0)
    t = np.arange(filter_len) - (filter_len - 1) / 2
    return proto * np.exp(2j * np.pi * centre * t)


def cp_ofdm_reference(grid, plan, shift, L, start):
    n = plan.n_fft * L
    k = np.round(np.fft.fftfreq(plan.n_fft) * plan.n_fft).astype(int)
    out = []
    for s, c in enumerate(plan.cp_for(grid.shape[-2], start) * L):
        big = np.zeros(n, complex)
        big[(k + shift) % n] = grid[s]
        body = np.fft.ifft(big, norm="ortho")
        out.append(np.concatenate((body[n - c:], body)))
    return np.concatenate(out)


def random_grid(rng, plan, shape, dtype):
    data = rng.standard_normal(shape + (plan.n_data,)) + 1j * rng.standard_normal(
        shape + (plan.n_data,))
    return plan.place(data.reshape(shape[:-1] + (-1,)).astype(dtype))


def qpsk(rng, n):
    return (rng.choice([-1.0, 1.0], n) + 1j * rng.choice([-1.0, 1.0], n)) / np.sqrt(2)


def test_taps_are_the_window_method_design():
    plan = PLANS["wifi-like"]
    for filter_len, margin, shift in ((33, 2.5, 0), (20, 1.0, 3), (1, 0.0, 0)):
        sub = FilteredOfdm(plan, filter_len=filter_len, margin=margin, shift=shift)
        np.testing.assert_allclose(sub.taps, reference_taps(plan, filter_len, margin, shift),
                                   rtol=0, atol=1e-14)


@pytest.mark.parametrize("name", sorted(PLANS))
@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
@pytest.mark.parametrize("L, shift", [(1, 0), (2, 5)])
def test_synthesize_and_analyze_match_the_definition(name, dtype, L, shift):
    plan = PLANS[name]
    sub = FilteredOfdm(plan, filter_len=plan.n_fft // 4 * L + 1, shift=shift, oversampling=L)
    grid = random_grid(np.random.default_rng(3), plan, (2, 5), dtype)
    x = sub.synthesize(grid, start_symbol=1)
    assert x.dtype == dtype and x.shape == (2, sub.n_samples(5, 1) + sub.tail)
    h = sub.taps
    for q in range(2):
        ref = np.convolve(cp_ofdm_reference(grid[q].astype(complex), plan, shift, L, 1), h)
        np.testing.assert_allclose(x[q], ref, rtol=0, atol=TOL[dtype] * np.abs(ref).max())
    # analysis of noise against the definition
    rng = np.random.default_rng(4)
    noise = (rng.standard_normal(x.shape) + 1j * rng.standard_normal(x.shape)).astype(dtype)
    got = sub.analyze(noise, start_symbol=1)
    assert got.dtype == dtype and got.shape == (2, 5, plan.n_fft)
    n, taps = plan.n_fft * L, h.size
    k = np.round(np.fft.fftfreq(plan.n_fft) * plan.n_fft).astype(int)
    pos = (k + shift) % n
    gain = np.ones(n)
    used = np.zeros(plan.n_fft, bool)
    used[plan.data_bins] = used[plan.pilot_bins] = True
    gain[pos[used]] = 1 / np.abs(np.fft.fft(h, n)[pos[used]]) ** 2
    for q in range(2):
        y = np.convolve(noise[q].astype(complex), np.conj(h[::-1]))
        o = 0
        for s, c in enumerate(plan.cp_for(5, 1) * L):
            win = y[o + c + taps - 1:o + c + taps - 1 + n]
            ref = (np.fft.fft(win, norm="ortho") * gain)[pos]
            np.testing.assert_allclose(got[q, s], ref, rtol=0,
                                       atol=TOL[dtype] * np.abs(ref).max())
            o += c + n


def test_one_tap_is_cp_ofdm():
    plan = PLANS["patterned-cp"]
    grid = random_grid(np.random.default_rng(5), plan, (6,), np.complex128)
    x = CpOfdm(plan).synthesize(grid)
    sub = FilteredOfdm(plan, filter_len=1)
    np.testing.assert_allclose(sub.synthesize(grid), x, rtol=0, atol=1e-14)
    np.testing.assert_allclose(sub.analyze(x), grid, rtol=0, atol=1e-13)


def test_evm_floor_and_out_of_band_reduction():
    # Stated filter: n_fft 256, 180 used subcarriers, prefix 18, Hann-windowed
    # sinc of 129 taps (half a symbol), margin 2.5 subcarriers.  Measured
    # here: in-band EVM floor -36.7 dB (ideal channel, QPSK, no noise); power
    # in 4-subcarrier bands about 20 and 30 subcarriers beyond the band edge
    # (oversampled x4, 513 taps): CP-OFDM -45.3 / -47.1 dBc, filtered
    # -127.5 / -139.2 dBc.  Bounds below leave a few dB of margin.
    plan = CarrierPlan.centered(256, 180, cp_length=18)
    rng = np.random.default_rng(5)
    data = qpsk(rng, 40 * plan.n_data)
    sub = FilteredOfdm(plan)
    assert sub.filter_len == 129
    rx, _ = sub.demodulate(sub.modulate(data))
    evm_db = 10 * np.log10(np.mean(np.abs(rx - data) ** 2))
    assert -40 < evm_db < -33
    L, fs = 4, 1024.0                        # one Hz per subcarrier spacing
    offsets = [110.0, 120.0]                 # band edge at 90.5
    cp_oob = tonebank.spectrum.out_of_band_power(
        CpOfdm(plan, oversampling=L).modulate(data), fs, offsets, 4.0, segment_length=4096)
    f_oob = tonebank.spectrum.out_of_band_power(
        FilteredOfdm(plan, oversampling=L, filter_len=4 * 128 + 1).modulate(data), fs,
        offsets, 4.0, segment_length=4096)
    assert np.all(cp_oob > -50)
    assert np.all(cp_oob - f_oob > 60)


def two_subbands(filter_lens=(None, None)):
    wide = FilteredOfdm(CarrierPlan.centered(64, 24, pilot_spacing=6, cp_length=8),
                        shift=-14, filter_len=filter_lens[0])
    narrow = FilteredOfdm(CarrierPlan.centered(128, 48, cp_length=16), shift=30,
                          filter_len=filter_lens[1])
    return wide, narrow


def test_mutual_interference_of_two_numerologies():
    # Subband A: 64-point FFT (spacing fs/64), 24 subcarriers; subband B:
    # 128-point FFT (spacing fs/128), 48 subcarriers; guard between the
    # occupied bands 0.066 fs (4.2 spacings of A).  Measured: filtered
    # (default filters) -54.3 dB into A and -53.9 dB into B; the same
    # layout unfiltered (filter_len=1, i.e. CP-OFDM) -23.8 and -22.6 dB.
    a, b = two_subbands()
    into_a, into_b = subband_interference(a, b), subband_interference(b, a)
    assert into_a.ratio_db < -48 and into_b.ratio_db < -48
    a0, b0 = two_subbands((1, 1))
    raw_a, raw_b = subband_interference(a0, b0), subband_interference(b0, a0)
    assert -28 < raw_a.ratio_db < -19 and -28 < raw_b.ratio_db < -19
    assert into_a.per_subcarrier_db.shape == (24,)
    assert "not a compliance measurement" in into_a.note


def test_group_carries_both_subbands():
    # Each subband recovered from the sum within its own EVM floor (measured:
    # -29.1 dB for A (33 taps over a 72-sample symbol), -35.3 dB for B); the
    # neighbour adds about -54 dB (test above), far below.
    a, b = two_subbands()
    group = SubbandGroup([a, b])
    rng = np.random.default_rng(8)
    da, db = qpsk(rng, 12 * a.plan.n_data), qpsk(rng, 6 * b.plan.n_data)
    x = group.synthesize([a.plan.place(da), b.plan.place(db)])
    ga, gb = group.analyze(x, [12, 6])
    for sub, grid, data in ((a, ga, da), (b, gb, db)):
        got = sub.plan.take(grid)[0]
        assert 10 * np.log10(np.mean(np.abs(got - data) ** 2)) < -27


@settings(max_examples=20)
@given(cuts=st.lists(st.integers(0, 900), max_size=5), start=st.integers(0, 5))
def test_streaming_equals_one_shot(cuts, start):
    plan = PLANS["patterned-cp"]
    sub = FilteredOfdm(plan, filter_len=40)
    grid = random_grid(np.random.default_rng(9), plan, (2, 7), np.complex128)
    whole = sub.synthesize(grid, start_symbol=start)
    synth = sub.stream_synthesizer(start_symbol=start)
    sym_cuts = sorted({min(c // 100, 7) for c in cuts} | {0, 7})
    pieces = [synth.feed(grid[:, a:b]) for a, b in zip(sym_cuts, sym_cuts[1:])]
    pieces.append(synth.flush())
    np.testing.assert_allclose(np.concatenate(pieces, axis=-1), whole, rtol=0, atol=1e-14)
    ana = sub.stream_analyzer(start_symbol=start)
    bounds = sorted({min(c, whole.shape[-1]) for c in cuts} | {0, whole.shape[-1]})
    grids = [ana.feed(whole[:, a:b]) for a, b in zip(bounds, bounds[1:])]
    ana.flush()
    np.testing.assert_array_equal(np.concatenate(grids, axis=-2),
                                  sub.analyze(whole, start_symbol=start))


def test_backends_agree():
    plan = PLANS["wifi-like"]
    sub = FilteredOfdm(plan, shift=2)
    data = np.random.default_rng(6).standard_normal(5 * plan.n_data) + 0j
    with tonebank.use_backend("numpy"):
        x_np = sub.modulate(data)
        d_np = sub.demodulate(x_np)[0]
    np.testing.assert_allclose(sub.modulate(data), x_np, rtol=0, atol=1e-13)
    np.testing.assert_allclose(sub.demodulate(x_np)[0], d_np, rtol=0, atol=1e-12)


def test_bad_input():
    plan = PLANS["wifi-like"]
    with pytest.raises(ValueError, match="filter_len must be in 1..64"):
        FilteredOfdm(plan, filter_len=65)
    with pytest.raises(ValueError, match="shift=10 moves the used subcarriers"):
        FilteredOfdm(plan, shift=10)
    with pytest.raises(ValueError, match="margin must be >= 0"):
        FilteredOfdm(plan, margin=-1)
    with pytest.raises(ValueError, match="window='no-such-window'"):
        FilteredOfdm(plan, window="no-such-window")
    a, b = two_subbands()
    overlapping = FilteredOfdm(CarrierPlan.centered(128, 48, cp_length=16), shift=20)
    with pytest.raises(ValueError, match=r"subbands\[0\] occupies .* overlap"):
        SubbandGroup([a, overlapping])
    with pytest.raises(TypeError, match=r"subbands\[1\] must be"):
        SubbandGroup([a, CpOfdm(plan)])
    rated = FilteredOfdm(CarrierPlan.centered(64, 8, cp_length=8, sample_rate=1e6), shift=20)
    with pytest.raises(ValueError, match="one output sample rate"):
        SubbandGroup([a, rated])
    group = SubbandGroup([a, b])
    with pytest.raises(ValueError, match="one grid per subband"):
        group.synthesize([np.zeros((1, 64))])
    with pytest.raises(ValueError, match="subband 1 needs"):
        group.analyze(np.zeros(500, complex), [2, 9])
    with pytest.raises(ValueError, match="do not cover one victim symbol"):
        subband_interference(a, b, n_symbols=1)


def test_batches_and_empty_bursts():
    plan = PLANS["wifi-like"]
    sub = FilteredOfdm(plan, filter_len=17)
    rng = np.random.default_rng(11)
    data = rng.standard_normal((3, 4 * plan.n_data)) + 0j
    x = sub.modulate(data)
    for q in range(3):
        np.testing.assert_allclose(x[q], sub.modulate(data[q]), rtol=0, atol=1e-14)
    empty = sub.synthesize(np.zeros((0, 64), complex))
    assert empty.shape == (16,) and not empty.any()
    assert sub.analyze(empty).shape == (0, 64)
    with pytest.raises(ValueError, match="16-sample tail"):
        sub.analyze(np.zeros(80 + 16 + 5, complex))
