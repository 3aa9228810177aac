"""WolaOfdm: windowed overlap-add OFDM against references outside the project.

Sources named beside each check:

* numpy.fft (general-purpose reference library) for the transforms, in a
  loop-per-symbol reference written from the definition in the class
  Notes (cyclic extension, raised-cosine ramps, overlap-add; receive
  fold-back);
* F. J. Harris, "On the use of windows for harmonic analysis with the
  discrete Fourier transform", Proc. IEEE 66(1), 1978: a window whose
  k-th derivative is the first discontinuous one has sidelobes falling as
  1/f^(k+1) -- rectangular pulse 6 dB/octave, raised-cosine ramps (first
  derivative continuous) 18 dB/octave;
* scipy.signal.welch (reference library) for the spectra, through
  tonebank.spectrum.psd.
"""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

import tonebank
from tonebank import CarrierPlan, CpOfdm, WolaOfdm
from tonebank.waveforms.wola import raised_cosine_ramp

TOL = {np.complex128: 1e-12, np.complex64: 2e-5}

PLANS = {
    "wifi-like": CarrierPlan.centered(64, 52, pilot_spacing=13, pilot_offset=6, cp_length=16),
    "patterned-cp": CarrierPlan.centered(128, 72, pilot_spacing=6, cp_length=[10, 9, 9, 9]),
    "numpy-only-size": CarrierPlan.centered(14, 8, cp_length=6),  # 14 = 2*7: no C plan
}


def ramp(t):
    """Raised cosine from its definition (Harris 1978, the Hann/raised-cosine
    window), sampled at half-integer points."""
    return np.array([0.5 - 0.5 * np.cos(np.pi * (i + 0.5) / t) for i in range(t)])


def reference_synthesize(grid, plan, tx, L=1, start=0):
    """Loop per symbol from the definition: extend cyclically, weight, add."""
    n = plan.n_fft * L
    tx *= L
    k = np.round(np.fft.fftfreq(plan.n_fft) * plan.n_fft).astype(int)
    cps = plan.cp_for(grid.shape[-2], start) * L
    out = np.zeros(grid.shape[:-2] + (int(cps.sum()) + n * grid.shape[-2] + tx,), complex)
    up = ramp(tx)
    o = 0
    for s, c in enumerate(cps):
        big = np.zeros(grid.shape[:-2] + (n,), complex)
        big[..., k % n] = grid[..., s, :]
        body = np.fft.ifft(big, axis=-1, norm="ortho")
        i = np.arange(c + n + tx)
        g = np.ones(i.size)
        g[:tx] = up
        g[c + n:] = up[::-1]
        out[..., o:o + i.size] += g * body[..., (i - c) % n]
        o += c + n
    return out


def reference_analyze(x, plan, rx, n_symbols, L=1, start=0):
    n = plan.n_fft * L
    rx *= L
    up = ramp(rx)
    cps = plan.cp_for(n_symbols, start) * L
    grid = np.zeros(x.shape[:-1] + (n_symbols, plan.n_fft), complex)
    k = np.round(np.fft.fftfreq(plan.n_fft) * plan.n_fft).astype(int)
    o = 0
    for s, c in enumerate(cps):
        y = x[..., o + c - rx:o + c + n].astype(complex)
        z = y[..., rx:].copy()
        if rx:
            z[..., n - rx:] = up[::-1] * z[..., n - rx:] + up * y[..., :rx]
        grid[..., s, :] = np.fft.fft(z, axis=-1, norm="ortho")[..., k % n]
        o += c + n
    return grid


def random_grid(rng, plan, shape, dtype):
    data = rng.standard_normal(shape + (plan.n_data,)) + 1j * rng.standard_normal(
        shape + (plan.n_data,))
    return plan.place(data.reshape(shape[:-1] + (-1,)).astype(dtype))


def test_ramp_is_complementary():
    # Raised cosine: r_i + r_{T-1-i} = 1 (cos(pi - a) = -cos a; trigonometric identity).
    for t in (1, 2, 7, 16):
        r = raised_cosine_ramp(t)
        np.testing.assert_allclose(r, ramp(t), rtol=0, atol=1e-15)
        np.testing.assert_allclose(r + r[::-1], 1.0, rtol=0, atol=1e-15)


@pytest.mark.parametrize("name", sorted(PLANS))
@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
@pytest.mark.parametrize("L", [1, 2])
def test_synthesize_and_analyze_match_the_definition(name, dtype, L):
    plan = PLANS[name]
    tx, rx = 3, 2
    wola = WolaOfdm(plan, tx_ramp=tx, rx_ramp=rx, oversampling=L)
    grid = random_grid(np.random.default_rng(3), plan, (2, 6), dtype)
    x = wola.synthesize(grid, start_symbol=1)
    assert x.dtype == dtype and x.shape == (2, wola.n_samples(6, 1) + wola.tail)
    ref = reference_synthesize(grid.astype(complex), plan, tx, L, start=1)   # numpy.fft
    np.testing.assert_allclose(x, ref, rtol=0, atol=TOL[dtype] * np.abs(ref).max())
    # Analysis of noise (not a WOLA signal), so every sample read counts.
    rng = np.random.default_rng(4)
    noise = (rng.standard_normal(x.shape) + 1j * rng.standard_normal(x.shape)).astype(dtype)
    g = wola.analyze(noise, start_symbol=1)
    gref = reference_analyze(noise.astype(complex), plan, rx, 6, L, start=1)
    assert g.dtype == dtype
    np.testing.assert_allclose(g, gref, rtol=0, atol=TOL[dtype] * np.abs(gref).max())


@pytest.mark.parametrize("name", sorted(PLANS))
def test_round_trip_exact_when_ramps_fit_the_prefix(name):
    # Complementary ramps fold a cyclic symbol back exactly (class Notes;
    # Harris 1978 for the raised cosine) -- ideal channel, float64 rounding only.
    plan = PLANS[name]
    shortest = min(plan.cp_lengths)
    rng = np.random.default_rng(5)
    for tx, rx in ((shortest, 0), (0, shortest), (shortest // 2, shortest - shortest // 2)):
        wola = WolaOfdm(plan, tx_ramp=tx, rx_ramp=rx)
        data = rng.standard_normal(9 * plan.n_data) + 1j * rng.standard_normal(9 * plan.n_data)
        got, pilots = wola.demodulate(wola.modulate(data, start_symbol=2), start_symbol=2)
        np.testing.assert_allclose(got, data, rtol=0, atol=1e-12)
        np.testing.assert_allclose(pilots, plan.pilots_for(9, 2), rtol=0, atol=1e-12)


def test_round_trip_through_a_channel_shorter_than_the_free_prefix():
    # A channel of delay spread <= cp - tx - rx acts per subcarrier as its
    # DFT (circular convolution theorem; numpy.fft gives the gains).
    plan = PLANS["wifi-like"]
    wola = WolaOfdm(plan, tx_ramp=6, rx_ramp=4)           # 6 samples of prefix left
    h = np.array([1.0, 0.3 - 0.2j, 0, 0, 0.1j, 0, 0.05])  # delay spread 6
    rng = np.random.default_rng(6)
    grid = random_grid(rng, plan, (8,), np.complex128)
    y = np.convolve(wola.synthesize(grid), h)[:wola.n_samples(8) + wola.tail]
    got = wola.analyze(y)
    gains = np.fft.fft(h, plan.n_fft)
    np.testing.assert_allclose(got[1:], grid[1:] * gains, rtol=0, atol=1e-12)


def test_zero_ramps_are_cp_ofdm_exactly():
    for plan in PLANS.values():
        grid = random_grid(np.random.default_rng(7), plan, (2, 5), np.complex128)
        cp, wola = CpOfdm(plan, oversampling=2), WolaOfdm(plan, oversampling=2)
        x = cp.synthesize(grid)
        np.testing.assert_array_equal(wola.synthesize(grid), x)
        np.testing.assert_array_equal(wola.analyze(x), cp.analyze(x))
        data = grid[..., plan.data_bins].reshape(2, -1)
        np.testing.assert_array_equal(wola.modulate(data[0]), cp.modulate(data[0]))
        assert wola.tail == 0


def _slope_db_per_octave(x, fs, offsets):
    """Least-squares slope of the PSD level against log2(frequency), the
    level at each offset averaged over +-10 % to smooth the sinc ripple."""
    f, p = tonebank.spectrum.psd(x, fs, segment_length=4096)   # scipy.signal.welch
    levels = [10 * np.log10(p[(np.abs(f) >= 0.9 * o) & (np.abs(f) <= 1.1 * o)].mean())
              for o in offsets]
    return np.polyfit(np.log2(offsets), levels, 1)[0]


def test_sidelobe_fall_off_6_and_18_db_per_octave():
    # Harris 1978 (Proc. IEEE 66(1)), sections on sidelobe fall-off: a pulse
    # with a jump falls 6 dB/octave, one with a continuous value and a jump in
    # the first derivative (raised-cosine ramps) 18 dB/octave.
    # Tolerance +-1.5 dB/octave: the laws are asymptotic (far from the band,
    # measured here from 4x to 16x (CP) / 4x to 32x (WOLA) the half-bandwidth
    # away), the sampled pulse's Dirichlet kernel flattens the slope towards
    # Nyquist (kept below fs/4), and Welch averaging over 300 symbols leaves a
    # few tenths of a dB of scatter per level (measured: -6.1 and -18.3).
    L = 16
    plan = CarrierPlan.centered(64, 8, cp_length=16)
    rng = np.random.default_rng(5)
    qpsk = (rng.choice([-1.0, 1.0], 300 * plan.n_data)
            + 1j * rng.choice([-1.0, 1.0], 300 * plan.n_data)) / np.sqrt(2)
    fs = 64.0 * L                     # one Hz per subcarrier spacing
    cp = CpOfdm(plan, oversampling=L).modulate(qpsk)
    wola = WolaOfdm(plan, tx_ramp=12, rx_ramp=4, oversampling=L).modulate(qpsk)
    assert abs(_slope_db_per_octave(cp, fs, [16, 32, 64, 128]) + 6.0) < 1.5
    assert abs(_slope_db_per_octave(wola, fs, [32, 64, 128, 256]) + 18.0) < 1.5


@settings(max_examples=20)
@given(cuts=st.lists(st.integers(0, 900), max_size=5), start=st.integers(0, 5))
def test_streaming_equals_one_shot(cuts, start):
    plan = PLANS["patterned-cp"]
    wola = WolaOfdm(plan, tx_ramp=5, rx_ramp=4)
    grid = random_grid(np.random.default_rng(9), plan, (2, 7), np.complex128)
    whole = wola.synthesize(grid, start_symbol=start)
    synth = wola.stream_synthesizer(start_symbol=start)
    sym_cuts = sorted({min(c // 100, 7) for c in cuts} | {0, 7})
    pieces = [synth.feed(grid[:, a:b]) for a, b in zip(sym_cuts, sym_cuts[1:])]
    pieces.append(synth.flush())
    np.testing.assert_allclose(np.concatenate(pieces, axis=-1), whole, rtol=0, atol=1e-15)
    ana = wola.stream_analyzer(start_symbol=start)
    bounds = sorted({min(c, whole.shape[-1]) for c in cuts} | {0, whole.shape[-1]})
    grids = [ana.feed(whole[:, a:b]) for a, b in zip(bounds, bounds[1:])]
    ana.flush()
    np.testing.assert_array_equal(np.concatenate(grids, axis=-2),
                                  wola.analyze(whole, start_symbol=start))


def test_backends_agree():
    plan = PLANS["patterned-cp"]
    wola = WolaOfdm(plan, tx_ramp=5, rx_ramp=3)
    data = np.random.default_rng(6).standard_normal(5 * plan.n_data) + 0j
    with tonebank.use_backend("numpy"):
        x_np = wola.modulate(data)
        d_np = wola.demodulate(x_np)[0]
    np.testing.assert_allclose(wola.modulate(data), x_np, rtol=0, atol=1e-13)
    np.testing.assert_allclose(wola.demodulate(x_np)[0], d_np, rtol=0, atol=1e-13)


def test_ramps_longer_than_the_prefix_are_refused():
    plan = PLANS["patterned-cp"]           # shortest prefix 9
    with pytest.raises(ValueError, match=r"tx_ramp=6 plus rx_ramp=4 .* tx_ramp \+ rx_ramp <= 9"):
        WolaOfdm(plan, tx_ramp=6, rx_ramp=4)
    with pytest.raises(ValueError, match="tx_ramp must be >= 0"):
        WolaOfdm(plan, tx_ramp=-1)
    with pytest.raises(TypeError, match="rx_ramp must be an integer"):
        WolaOfdm(plan, rx_ramp=1.5)
    with pytest.raises(TypeError, match="plan must be"):
        WolaOfdm("plan")
    wola = WolaOfdm(plan, tx_ramp=4)
    with pytest.raises(ValueError, match="symbol 1 needs"):
        wola.analyze(np.zeros(138 + 4 + 5, complex))
    assert "tx_ramp=4" in repr(wola)


def test_batches_empty_bursts_and_own_pilots():
    plan = PLANS["wifi-like"]
    wola = WolaOfdm(plan, tx_ramp=4, rx_ramp=4)
    rng = np.random.default_rng(11)
    data = rng.standard_normal((3, 4 * plan.n_data)) + 0j
    pilots = rng.standard_normal((3, 4, plan.n_pilots)) + 0j
    x = wola.modulate(data, pilots)
    for q in range(3):   # a batch is its rows, one by one
        np.testing.assert_allclose(x[q], wola.modulate(data[q], pilots[q]), rtol=0,
                                   atol=1e-14)
    got, got_pilots = wola.demodulate(x)
    np.testing.assert_allclose(got, data, rtol=0, atol=1e-12)
    np.testing.assert_allclose(got_pilots, pilots, rtol=0, atol=1e-12)
    empty = wola.synthesize(np.zeros((0, 64), complex))
    assert empty.shape == (4,) and not empty.any()
    assert wola.analyze(empty).shape == (0, 64)


def test_analyze_refuses_input_shorter_than_the_tail():
    # n_samples(S) + tail samples are needed; anything short is an error,
    # never a silently empty result (the stream analyzer passes exactly
    # `tail` samples while no symbol is complete).
    plan = CarrierPlan.centered(64, 52, cp_length=16)
    wola = WolaOfdm(plan, tx_ramp=6, rx_ramp=4)
    assert wola.analyze(np.zeros(wola.tail, complex)).shape == (0, 64)
    with pytest.raises(ValueError, match="tail"):
        wola.analyze(np.zeros(wola.tail - 1, complex))
    with pytest.raises(ValueError, match="tail"):
        wola.analyze(np.zeros(80 + wola.tail - 1, complex))
