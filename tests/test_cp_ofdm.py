"""CpOfdm: synthesis and analysis against a plain numpy reference.

Outside reference: numpy.fft (a general-purpose reference library) for
the transforms; the reference chain below is the textbook definition of
CP-OFDM -- zero grid, place the bins, unitary inverse DFT, prepend the
last cp samples.  Parseval's theorem for the unitary DFT (any DSP
textbook; common knowledge, no specific source).
"""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

import tonebank
from tonebank import CarrierPlan, CpOfdm

TOL = {np.complex128: 1e-12, np.complex64: 2e-5}


def reference_synthesize(grid, plan, oversampling=1, start_symbol=0):
    """zero grid -> place -> ifft (norm='ortho') -> prefix, in numpy."""
    n = plan.n_fft
    size = oversampling * n
    k = np.round(np.fft.fftfreq(n) * n).astype(int)   # signed index of each bin
    big = np.zeros(grid.shape[:-1] + (size,), complex)
    big[..., k % size] = grid
    body = np.fft.ifft(big, axis=-1, norm="ortho")
    cps = plan.cp_for(grid.shape[-2], start_symbol) * oversampling
    parts = [np.concatenate((body[..., s, size - c:], body[..., s, :]), axis=-1)
             for s, c in enumerate(cps)]
    return np.concatenate(parts, axis=-1) if parts else np.zeros(grid.shape[:-2] + (0,))


def random_grid(rng, plan, shape, dtype):
    data = rng.standard_normal(shape + (plan.n_data,)) + 1j * rng.standard_normal(
        shape + (plan.n_data,))
    return plan.place(data.reshape(shape[:-1] + (-1,)).astype(dtype))


PLANS = {
    "wifi-like": CarrierPlan.centered(64, 52, pilot_spacing=13, pilot_offset=6, cp_length=16),
    "patterned-cp": CarrierPlan.centered(128, 72, pilot_spacing=6, cp_length=[10, 9, 9, 9]),
    "odd-size": CarrierPlan.centered(12, 8, pilot_spacing=4, cp_length=[3, 2]),
    "numpy-only-size": CarrierPlan.centered(14, 8, cp_length=4),  # 14 = 2*7: no C plan
    "no-cp": CarrierPlan.centered(32, 20),
}


@pytest.mark.parametrize("name", sorted(PLANS))
@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
@pytest.mark.parametrize("oversampling", [1, 2])
def test_synthesize_matches_numpy_reference(name, dtype, oversampling):
    plan = PLANS[name]
    ofdm = CpOfdm(plan, oversampling=oversampling)
    rng = np.random.default_rng(7)
    grid = random_grid(rng, plan, (2, 11), dtype)
    x = ofdm.synthesize(grid, start_symbol=1)
    assert x.dtype == dtype and x.shape == (2, ofdm.n_samples(11, 1))
    ref = reference_synthesize(grid.astype(complex), plan, oversampling, start_symbol=1)
    scale = np.abs(ref).max()
    np.testing.assert_allclose(x, ref, rtol=0, atol=TOL[dtype] * scale)
    back = ofdm.analyze(x, start_symbol=1)
    assert back.dtype == dtype
    np.testing.assert_allclose(back, grid, rtol=0, atol=TOL[dtype] * np.abs(grid).max())


@pytest.mark.parametrize("name", sorted(PLANS))
def test_modulate_is_place_then_synthesize(name):
    plan = PLANS[name]
    ofdm = CpOfdm(plan)
    rng = np.random.default_rng(3)
    data = rng.standard_normal(9 * plan.n_data) + 1j * rng.standard_normal(9 * plan.n_data)
    for start in (0, 2):
        x = ofdm.modulate(data, start_symbol=start)
        ref = ofdm.synthesize(plan.place(data, start_symbol=start), start_symbol=start)
        np.testing.assert_allclose(x, ref, rtol=0, atol=1e-13)
        rx_data, rx_pilots = ofdm.demodulate(x, start_symbol=start)
        np.testing.assert_allclose(rx_data, data, rtol=0, atol=1e-12)
        np.testing.assert_allclose(rx_pilots, plan.pilots_for(9, start), rtol=0, atol=1e-12)


def test_batched_modulate_with_own_pilots_and_complex64():
    plan = PLANS["wifi-like"]
    ofdm = CpOfdm(plan)
    rng = np.random.default_rng(5)
    data = (rng.standard_normal((3, 2, 4 * 48)) + 0j).astype(np.complex64)
    pilots = rng.standard_normal((4, 4)) + 1j
    x = ofdm.modulate(data, pilots)
    assert x.dtype == np.complex64 and x.shape == (3, 2, 4 * 80)
    ref = reference_synthesize(plan.place(data.astype(complex), pilots), plan)
    np.testing.assert_allclose(x, ref, rtol=0, atol=2e-5 * np.abs(ref).max())
    per_signal = rng.standard_normal((3, 2, 4, 4)) + 0j
    x2 = ofdm.modulate(data, per_signal)
    d2, p2 = ofdm.demodulate(x2)
    np.testing.assert_allclose(p2, per_signal, rtol=0, atol=1e-5)
    np.testing.assert_allclose(d2, data, rtol=0, atol=1e-5)


def test_parseval_per_symbol():
    # Unitary DFT: window energy equals grid energy (Parseval).
    plan = PLANS["patterned-cp"]
    ofdm = CpOfdm(plan, oversampling=2)
    grid = random_grid(np.random.default_rng(1), plan, (6,), np.complex128)
    x = ofdm.synthesize(grid)
    cps = plan.cp_for(6) * 2
    starts = np.concatenate(([0], np.cumsum(cps + 256)[:-1]))
    for s in range(6):
        window = x[starts[s] + cps[s]: starts[s] + cps[s] + 256]
        assert np.sum(np.abs(window) ** 2) == pytest.approx(np.sum(np.abs(grid[s]) ** 2),
                                                           rel=1e-12)


def test_cyclic_prefix_is_the_tail():
    plan = PLANS["wifi-like"]
    x = CpOfdm(plan).synthesize(random_grid(np.random.default_rng(2), plan, (3,), complex))
    sym = x.reshape(3, 80)
    np.testing.assert_array_equal(sym[:, :16], sym[:, 64:])


def test_real_baseband_is_the_hermitian_extension():
    # Reference: numpy.fft.irfft of the half spectrum is the real inverse
    # DFT of its Hermitian extension (numpy.fft documentation).
    plan = CarrierPlan(32, data=range(2, 14), pilots=[1, 14], cp_length=8)
    ofdm = CpOfdm(plan, real=True)
    grid = random_grid(np.random.default_rng(4), plan, (5,), np.complex128)
    x = ofdm.synthesize(grid)
    assert x.dtype == np.float64
    # irfft(norm="ortho") of the half spectrum is (1/sqrt N) times the sum
    # over each bin and its mirror, i.e. 2 Re(unitary IDFT of the one-sided
    # grid), given the empty DC and Nyquist bins of this plan.
    body = np.fft.irfft(grid[:, :17], n=32, axis=-1, norm="ortho")
    ref = np.concatenate((body[:, -8:], body), axis=-1).ravel()
    np.testing.assert_allclose(x, ref, rtol=0, atol=1e-13)
    spectrum = ofdm.analyze(x)
    used = np.concatenate((plan.data_bins, plan.pilot_bins))
    np.testing.assert_allclose(spectrum[:, used], grid[:, used], rtol=0, atol=1e-12)
    # The mirror bins carry the conjugates (Hermitian symmetry of a real signal).
    np.testing.assert_allclose(spectrum[:, (-used) % 32], np.conj(grid[:, used]),
                               rtol=0, atol=1e-12)
    data, _ = ofdm.demodulate(x)
    np.testing.assert_allclose(data, plan.take(grid)[0], rtol=0, atol=1e-12)
    with pytest.raises(TypeError, match="real"):
        ofdm.analyze(x.astype(complex))
    with pytest.raises(ValueError, match="real=True"):
        CpOfdm(PLANS["wifi-like"], real=True)


@settings(max_examples=25)
@given(cuts=st.lists(st.integers(0, 700), max_size=5), start=st.integers(0, 5))
def test_streaming_equals_one_shot(cuts, start):
    plan = PLANS["patterned-cp"]
    ofdm = CpOfdm(plan)
    grid = random_grid(np.random.default_rng(9), plan, (2, 7), np.complex128)
    whole = ofdm.synthesize(grid, start_symbol=start)
    synth = ofdm.stream_synthesizer(start_symbol=start)
    sym_cuts = sorted({min(c // 100, 7) for c in cuts} | {0, 7})
    pieces = [synth.feed(grid[:, a:b]) for a, b in zip(sym_cuts, sym_cuts[1:])]
    pieces.append(synth.flush())
    np.testing.assert_array_equal(np.concatenate(pieces, axis=-1), whole)
    ana = ofdm.stream_analyzer(start_symbol=start)
    bounds = sorted({min(c, whole.shape[-1]) for c in cuts} | {0, whole.shape[-1]})
    grids = [ana.feed(whole[:, a:b]) for a, b in zip(bounds, bounds[1:])]
    ana.flush()
    np.testing.assert_allclose(np.concatenate(grids, axis=-2),
                               ofdm.analyze(whole, start_symbol=start), rtol=0, atol=0)


def test_stream_analyzer_refuses_to_drop_samples():
    plan = PLANS["wifi-like"]
    ofdm = CpOfdm(plan)
    ana = ofdm.stream_analyzer()
    assert ana.feed(np.zeros(100, complex)).shape == (1, 64)
    assert ana.pending == 20
    with pytest.raises(ValueError, match="20 samples are held"):
        ana.flush()
    with pytest.raises(ValueError, match="batch shape"):
        ana.feed(np.zeros((2, 10), complex))


def test_empty_and_strided_inputs():
    plan = PLANS["wifi-like"]
    ofdm = CpOfdm(plan)
    assert ofdm.synthesize(np.zeros((0, 64), complex)).shape == (0,)
    assert ofdm.analyze(np.zeros((3, 0), complex)).shape == (3, 0, 64)
    grid = random_grid(np.random.default_rng(8), plan, (4, 6), np.complex128)
    strided = grid[::2, ::-1]
    np.testing.assert_allclose(ofdm.synthesize(strided),
                               reference_synthesize(strided, plan), rtol=0, atol=1e-13)
    x = ofdm.synthesize(grid)
    np.testing.assert_allclose(ofdm.analyze(x[::-1]), grid[::-1], rtol=0, atol=1e-12)


def test_backends_agree():
    plan = PLANS["patterned-cp"]
    ofdm = CpOfdm(plan)
    data = np.random.default_rng(6).standard_normal(5 * plan.n_data) + 0j
    with tonebank.use_backend("numpy"):
        x_np = ofdm.modulate(data)
    x = ofdm.modulate(data)
    np.testing.assert_allclose(x, x_np, rtol=0, atol=1e-13)


@pytest.mark.parametrize("call, match", [
    (lambda o: o.synthesize(np.zeros((2, 32))), "n_fft=64"),
    (lambda o: o.synthesize(np.zeros(64)), "n_symbols"),
    (lambda o: o.analyze(np.zeros(100)), "20 samples over; symbol 1 needs 60 more"),
    (lambda o: o.analyze(np.zeros(())), "at least one axis"),
    (lambda o: o.modulate(np.zeros(50)), "pad with 46 more values"),
    (lambda o: o.modulate(np.zeros(48), pilots=np.zeros((2, 3))), "do not broadcast"),
    (lambda o: o.modulate(np.zeros(48), pilots=np.zeros((3, 1, 4))), "enlarge"),
    (lambda o: o.synthesize(np.zeros((1, 64)), start_symbol=-1), "start_symbol"),
])
def test_bad_input_names_the_argument(call, match):
    with pytest.raises(ValueError, match=match):
        call(CpOfdm(PLANS["wifi-like"]))


def test_bad_construction():
    with pytest.raises(TypeError, match="plan"):
        CpOfdm("64")
    with pytest.raises(ValueError, match="oversampling"):
        CpOfdm(PLANS["wifi-like"], oversampling=0)
    with pytest.raises(TypeError, match="samples must be numeric"):
        CpOfdm(PLANS["wifi-like"]).analyze(np.array(["a"] * 80))
    ofdm = CpOfdm(PLANS["wifi-like"], oversampling=2)
    assert "oversampling=2" in repr(ofdm) and ofdm.fft_size == 128
    assert ofdm.sample_rate is None and ofdm.latency == 0 and ofdm.tail == 0


def test_symbol_by_symbol_modulate_follows_the_pilot_sequence():
    # IEEE 802.11a-1999 clause 17.3.5.9: the pilot polarity repeats every
    # 127 symbols; feeding one symbol at a time with start_symbol must
    # give the one-shot signal across the wrap (and through the call
    # caches, which hold one entry per pilot phase).
    plan = tonebank.presets.ieee80211a()
    ofdm = CpOfdm(plan)
    rng = np.random.default_rng(12)
    data = rng.standard_normal(130 * 48) + 1j * rng.standard_normal(130 * 48)
    whole = ofdm.modulate(data)
    parts = [ofdm.modulate(data[s * 48:(s + 1) * 48], start_symbol=s) for s in range(130)]
    np.testing.assert_allclose(np.concatenate(parts), whole, rtol=0, atol=1e-13)
    back = [ofdm.demodulate(whole[s * 80:(s + 1) * 80], start_symbol=s)[1] for s in range(130)]
    np.testing.assert_allclose(np.concatenate(back), plan.pilots_for(130), atol=1e-12)


def test_nan_propagates_without_warning_on_both_backends():
    # IEEE propagation, and no RuntimeWarning from either backend (pytest
    # turns warnings into errors), so the backends behave alike.
    ofdm = tonebank.CpOfdm(tonebank.CarrierPlan.centered(64, 52, cp_length=16))
    grid = np.ones((2, 64), complex)
    grid[0, 3] = np.nan
    x = ofdm.synthesize(grid)
    assert np.all(np.isnan(x[:80])) and np.all(np.isfinite(x[80:]))
    back = ofdm.analyze(x)
    assert np.all(np.isnan(back[0])) and np.allclose(back[1], 1)
