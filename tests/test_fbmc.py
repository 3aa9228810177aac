"""FbmcOqam: the PHYDYAS prototype, OQAM synthesis/analysis, streaming, bad input.

Outside references, each named beside its check:

- M. Bellanger, "FBMC physical layer: a primer", PHYDYAS project, 2010
  ("the primer" below): the prototype's frequency-sampling coefficients,
  the design constraint ``H_k^2 + H_{K-k}^2 = 1``, the time-domain formula
  and the K = 4 transmultiplexer table -- all from memory, not re-read.
- P. Siohan, C. Siclet, N. Lacaille, "Analysis and design of OFDM/OQAM
  systems based on filterbank theory", IEEE Trans. Signal Processing
  50(5), 2002: the OQAM modulation (staggered real symbols, phase
  j^(k+n)) written out term by term in ``reference_synthesize`` below.
- numpy.fft (a general-purpose reference library) for the prototype's
  frequency samples.
"""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

import tonebank
from tonebank import CarrierPlan, FbmcOqam

TOL = {np.complex128: 1e-12, np.complex64: 2e-5}

# From memory (the primer): the PHYDYAS frequency samples H_0 .. H_{K-1}.
PUBLISHED = {3: (1.0, 0.91143783, 0.41143783),
             4: (1.0, 0.97195983, 1 / np.sqrt(2), 0.23514695)}


def reference_synthesize(grid, h, overlap, start_symbol=0):
    """The OQAM signal model term by term (Siohan et al. 2002, the
    modulation with phase j^(k+n) and the prototype centred at KM/2)."""
    n_symbols, m = grid.shape
    kk = overlap
    x = np.zeros(n_symbols * m + kk * m - m // 2, complex)
    t = np.arange(kk * m)
    k = np.arange(m)[:, None]
    pulses = h * np.exp(2j * np.pi * k * (t - kk * m / 2) / m)   # (m, KM)
    for s in range(n_symbols):
        for half, a in ((0, grid[s].real), (1, grid[s].imag)):
            n = 2 * (start_symbol + s) + half
            theta = 1j ** ((np.arange(m) + n) % 4)
            off = (2 * s + half) * m // 2
            x[off:off + kk * m] += (a * theta) @ pulses
    return x


def reference_analyze(x, h, overlap, n_symbols, start_symbol=0):
    """The matched filter and real part, term by term (same model)."""
    m = len(h) // overlap
    kk = overlap
    t = np.arange(kk * m)
    k = np.arange(m)[:, None]
    pulses = h * np.exp(-2j * np.pi * k * (t - kk * m / 2) / m)
    out = np.zeros((n_symbols, m), complex)
    for s in range(n_symbols):
        for half in (0, 1):
            n = 2 * (start_symbol + s) + half
            off = (2 * s + half) * m // 2
            d = (pulses @ x[off:off + kk * m]) * np.conj(1j ** ((np.arange(m) + n) % 4))
            out[s] += d.real * (1 if half == 0 else 1j)
    return out


def random_grid(rng, shape, dtype=np.complex128):
    return (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)).astype(dtype)


# ---- the prototype ---------------------------------------------------------


@pytest.mark.parametrize("overlap", [3, 4])
def test_phydyas_coefficients_meet_the_design_constraint(overlap):
    coeffs = tonebank.phydyas_coefficients(overlap)
    # The primer (from memory): the tabulated values themselves.
    np.testing.assert_allclose(coeffs, PUBLISHED[overlap], rtol=0, atol=1e-8)
    # The primer's Nyquist constraint H_k^2 + H_{K-k}^2 = 1 (k = 1 .. K-1),
    # met to the 8 decimals the values are given with.
    for k in range(1, overlap):
        assert abs(coeffs[k] ** 2 + coeffs[overlap - k] ** 2 - 1) < 1e-8


@pytest.mark.parametrize("overlap", [3, 4])
@pytest.mark.parametrize("m", [8, 64, 12])
def test_prototype_is_the_frequency_sampling_design(overlap, m):
    h = tonebank.phydyas_prototype(m, overlap, normalize=False)
    kk = overlap
    # Time-domain formula of the primer, h[l] = 1 + 2 sum (-1)^k H_k
    # cos(2 pi k l / (K M)), is the inverse DFT of K M points whose only
    # non-zero samples are (-1)^k H_k at bins +-k, k < K: numpy.fft
    # recovers exactly those frequency samples.
    spectrum = np.fft.fft(h) / (kk * m)
    expected = np.zeros(kk * m)
    for k in range(kk):
        expected[k] = expected[-k] = (-1) ** k * PUBLISHED[kk][k]
    np.testing.assert_allclose(spectrum, expected, rtol=0, atol=1e-12)
    # Consequences stated in the primer: real, symmetric about KM/2, zero at
    # the ends (h[0] = 1 + 2 sum (-1)^k H_k = 0 by the constraint), energy
    # K M (1 + 2 sum H_k^2) = K^2 M.
    np.testing.assert_allclose(h[1:], h[1:][::-1], rtol=0, atol=1e-12)
    assert abs(h[0]) < 1e-8
    np.testing.assert_allclose(np.sum(h ** 2), kk * kk * m, rtol=1e-8)
    unit = tonebank.phydyas_prototype(m, overlap)
    np.testing.assert_allclose(unit, h / (kk * np.sqrt(m)), rtol=1e-8, atol=0)


# ---- the waveform against the signal model -----------------------------------


PLANS = {
    "m16": CarrierPlan.centered(16, 12),
    "m64": CarrierPlan.centered(64, 48),
    "m12": CarrierPlan.centered(12, 8),      # n_fft % 4 == 2: the general bin phases
    "m14": CarrierPlan.centered(14, 10),     # 14 = 2 * 7: no C FFT plan, numpy twin
}


@pytest.mark.parametrize("name", sorted(PLANS))
@pytest.mark.parametrize("overlap", [3, 4])
@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_synthesize_and_analyze_match_the_signal_model(name, overlap, dtype):
    plan = PLANS[name]
    fbmc = FbmcOqam(plan, overlap=overlap)
    m = plan.n_fft
    rng = np.random.default_rng(11)
    grid = random_grid(rng, (2, 6, m), dtype)
    x = fbmc.synthesize(grid, start_symbol=3)
    assert x.dtype == dtype and x.shape == (2, 6 * m + fbmc.tail)
    for b in range(2):
        ref = reference_synthesize(grid[b].astype(complex), fbmc.prototype, overlap, 3)
        np.testing.assert_allclose(x[b], ref, rtol=0, atol=TOL[dtype] * np.abs(ref).max())
    back = fbmc.analyze(x, start_symbol=3)
    assert back.dtype == dtype and back.shape == grid.shape
    for b in range(2):
        ref = reference_analyze(x[b].astype(complex), fbmc.prototype, overlap, 6, 3)
        np.testing.assert_allclose(back[b], ref, rtol=0, atol=TOL[dtype] * np.abs(ref).max())


def test_backends_agree_to_rounding():
    # C kernel against the numpy twin (float64 ~1e-12, float32 ~1e-5
    # relative: the house tolerances).
    if not tonebank.backend_info()["c_available"]:
        pytest.skip("C kernel unavailable")
    rng = np.random.default_rng(2)
    for m, overlap in ((64, 4), (256, 3), (12, 4)):
        fbmc = FbmcOqam(CarrierPlan.centered(m, m - 4), overlap=overlap)
        for dtype in (np.complex128, np.complex64):
            grid = random_grid(rng, (9, m), dtype)
            results = {}
            for backend in ("numpy", "c"):
                with tonebank.use_backend(backend):
                    x = fbmc.synthesize(grid, start_symbol=1)
                    results[backend] = (x, fbmc.analyze(x, start_symbol=1),
                                        fbmc.analyze(x, start_symbol=1, channel=1 + 1j))
            for a, b in zip(results["numpy"], results["c"]):
                assert a.dtype == b.dtype == dtype
                np.testing.assert_allclose(a, b, rtol=0, atol=TOL[dtype] * np.abs(a).max())


# ---- near-perfect reconstruction -----------------------------------------------


def test_transmultiplexer_table_of_the_k4_design():
    fbmc = FbmcOqam(CarrierPlan.centered(256, 200), overlap=4)
    table = fbmc.transmultiplexer_response(1, 3)   # rows dk = -1..1, cols dn = -3..3
    assert table.shape == (3, 7)
    assert table[1, 3] == pytest.approx(1, abs=1e-12)
    # The primer's K = 4 transmultiplexer impulse response (from memory):
    # magnitudes 0.5644 at the neighbouring half-symbols of the same
    # subcarrier; 0.2393, 0.2058, 0.125, 0.0429 on the adjacent subcarrier
    # at time offsets 0, 1, 2, 3 half-symbols; 0.0668 at 3 half-symbols on
    # the same subcarrier.
    mags = np.abs(table)
    for (row, col), value in {(1, 2): 0.5644, (1, 4): 0.5644, (0, 3): 0.2393,
                              (2, 3): 0.2393, (0, 4): 0.2058, (2, 2): 0.2058,
                              (0, 5): 0.125, (2, 1): 0.125, (0, 6): 0.0429,
                              (1, 0): 0.0668}.items():
        assert mags[row, col] == pytest.approx(value, abs=1e-3)
    # Real-field orthogonality: off the centre it is all intrinsic
    # (imaginary) interference, the real parts are at the residual floor.
    off = table.real.copy()
    off[1, 3] = 0
    assert np.abs(off).max() < 1e-3


@pytest.mark.parametrize("overlap, limit_db", [(4, -60.0), (3, -40.0)])
def test_interference_floor_and_evm_of_an_ideal_channel(overlap, limit_db):
    # Floor: K = 4 -- the primer reports the PHYDYAS design as nearly
    # perfect reconstruction with residual interference near -65 dB (from
    # memory); checked at -60 dB.  K = 3 -- no published figure recalled:
    # the -43.4 dB computed here is checked at -40 dB.
    plan = CarrierPlan.centered(64, 64 - 2)
    fbmc = FbmcOqam(plan, overlap=overlap)
    floor = fbmc.interference_floor_db
    assert floor < limit_db
    # EVM of an ideal-channel round trip with every subcarrier loaded with
    # independent QPSK: the error of each real decision is the sum of the
    # residual (real) transmultiplexer terms, so the EVM power equals the
    # floor.  About 25,000 half-symbols per estimate: the estimate's own
    # spread is a few hundredths of a dB, far inside the +-1 dB bound (and
    # the seed is fixed).
    rng = np.random.default_rng(21)
    n_symbols = 200
    grid = (rng.choice([-1.0, 1.0], (n_symbols, 64)) +
            1j * rng.choice([-1.0, 1.0], (n_symbols, 64))) / np.sqrt(2)
    back = fbmc.analyze(fbmc.synthesize(grid))
    inner = slice(2 * overlap, n_symbols - 2 * overlap)   # symbols with all neighbours
    evm_db = tonebank.metrics.evm(back[inner], grid[inner], unit="db")
    assert abs(evm_db - floor) < 1.0


# ---- the one-tap equaliser -------------------------------------------------------


def test_one_tap_equaliser_is_applied_before_the_real_part():
    plan = CarrierPlan.centered(64, 48)
    fbmc = FbmcOqam(plan, overlap=4)
    rng = np.random.default_rng(4)
    data = (rng.choice([-1.0, 1.0], (60, 48)) + 1j * rng.choice([-1.0, 1.0], (60, 48)))
    grid = plan.place(data.ravel())
    x = fbmc.synthesize(grid)
    # A flat complex gain is exactly one tap per subcarrier.
    gain = 0.6 * np.exp(0.9j)
    np.testing.assert_allclose(fbmc.analyze(gain * x, channel=np.full(64, gain)),
                               fbmc.analyze(x), rtol=0, atol=1e-12)
    # A two-path channel (delay 1 sample): H_k = 1 + 0.4j exp(-2 pi i k / M)
    # per subcarrier (the DFT of the impulse response, natural bin order).
    y = x.copy()
    y[1:] += 0.4j * x[:-1]
    h_k = 1 + 0.4j * np.exp(-2j * np.pi * np.arange(64) / 64)
    data_bins = plan.data_bins
    good = fbmc.analyze(y, channel=h_k)[:, data_bins]
    # Taking the real part first and dividing afterwards (wrong for OQAM:
    # the intrinsic interference leaks into the decision) for comparison.
    raw = fbmc.analyze(y)[:, data_bins]
    wrong = raw / h_k[data_bins]
    ref = grid[:, data_bins]
    evm_good = tonebank.metrics.evm(good, ref, unit="db")
    evm_wrong = tonebank.metrics.evm(wrong, ref, unit="db")
    # Bounds from this deterministic case with margin (common practice, no
    # source): the residual is the channel's change across one subcarrier.
    assert evm_good < -25
    assert evm_wrong > -10


# ---- streaming -------------------------------------------------------------------


@settings(max_examples=15)
@given(chunks=st.lists(st.integers(0, 4), min_size=1, max_size=6),
       start=st.integers(0, 3))
def test_stream_synthesizer_equals_one_shot(chunks, start):
    fbmc = FbmcOqam(CarrierPlan.centered(16, 12), overlap=4)
    n_symbols = sum(chunks)
    grid = random_grid(np.random.default_rng(n_symbols), (2, n_symbols, 16))
    stream = fbmc.stream_synthesizer(start_symbol=start)
    parts, at = [], 0
    for c in chunks:
        parts.append(stream.feed(grid[:, at:at + c]))
        at += c
    parts.append(stream.flush())
    whole = fbmc.synthesize(grid, start_symbol=start)
    np.testing.assert_allclose(np.concatenate(parts, axis=-1), whole, rtol=0, atol=1e-12)


@settings(max_examples=15)
@given(cuts=st.lists(st.integers(0, 300), max_size=6), start=st.integers(0, 3))
def test_stream_analyzer_equals_one_shot(cuts, start):
    fbmc = FbmcOqam(CarrierPlan.centered(16, 12), overlap=3)
    grid = random_grid(np.random.default_rng(5), (9, 16))
    x = fbmc.synthesize(grid, start_symbol=start)
    bounds = [0, *sorted(cuts), x.shape[-1]]
    stream = fbmc.stream_analyzer(start_symbol=start)
    parts = [stream.feed(x[a:b]) for a, b in zip(bounds[:-1], bounds[1:])]
    assert stream.pending == 0
    stream.flush()
    got = np.concatenate(parts, axis=0)
    np.testing.assert_allclose(got, fbmc.analyze(x, start_symbol=start), rtol=0, atol=1e-12)


def test_stream_analyzer_holds_an_incomplete_symbol():
    fbmc = FbmcOqam(CarrierPlan.centered(16, 12), overlap=4)
    stream = fbmc.stream_analyzer()
    out = stream.feed(np.zeros(30, complex))
    assert out.shape == (0, 16) and stream.pending == 30
    with pytest.raises(ValueError, match="ends inside a symbol"):
        stream.flush()


# ---- shapes, dtypes, protocol ---------------------------------------------------


def test_lengths_latency_and_batch_shapes():
    plan = CarrierPlan.centered(32, 24)
    fbmc = FbmcOqam(plan, overlap=3)
    assert fbmc.tail == fbmc.latency == 3 * 32 - 16
    assert fbmc.n_samples(5) == 160 and fbmc.plan is plan and fbmc.overlap == 3
    assert fbmc.prototype.shape == (96,) and not fbmc.prototype.flags.writeable
    grid = random_grid(np.random.default_rng(0), (2, 3, 4, 32))
    x = fbmc.synthesize(grid)
    assert x.shape == (2, 3, 4 * 32 + fbmc.tail)
    np.testing.assert_allclose(x[1, 2], fbmc.synthesize(grid[1, 2]), rtol=0, atol=1e-14)
    assert fbmc.analyze(x).shape == grid.shape
    empty = fbmc.synthesize(np.zeros((0, 32), complex))
    assert empty.shape == (fbmc.tail,) and not empty.any()
    assert fbmc.analyze(empty).shape == (0, 32)
    assert "overlap=3" in repr(fbmc)


# ---- bad input -----------------------------------------------------------------


def test_bad_constructor_arguments():
    plan = CarrierPlan.centered(16, 12)
    for overlap in (2, 5, 0):
        with pytest.raises(ValueError, match=f"overlap={overlap}.*3, 4"):
            FbmcOqam(plan, overlap=overlap)
    for overlap in ("4", 4.0, True):
        with pytest.raises(TypeError, match="overlap must be an integer"):
            FbmcOqam(plan, overlap=overlap)
    with pytest.raises(ValueError, match=r"cyclic prefix lengths \(4,\).*cp_length=0"):
        FbmcOqam(plan.replace(cp_length=4))
    with pytest.raises(ValueError, match="n_fft must be even.*15"):
        FbmcOqam(CarrierPlan.centered(15, 10))
    with pytest.raises(TypeError, match="plan must be a tonebank.CarrierPlan"):
        FbmcOqam(16)
    with pytest.raises(ValueError, match="overlap=6"):
        tonebank.phydyas_prototype(16, 6)
    with pytest.raises(ValueError, match="n_subcarriers"):
        tonebank.phydyas_prototype(1, 4)


def test_bad_call_arguments():
    fbmc = FbmcOqam(CarrierPlan.centered(16, 12), overlap=4)
    with pytest.raises(ValueError, match=r"n_fft=16.*\(3, 15\)"):
        fbmc.synthesize(np.zeros((3, 15), complex))
    with pytest.raises(ValueError, match="grid must have shape"):
        fbmc.synthesize(np.zeros(16, complex))
    with pytest.raises(TypeError, match="grid must be numeric"):
        fbmc.synthesize(np.full((1, 16), "a"))
    with pytest.raises(ValueError, match="start_symbol"):
        fbmc.synthesize(np.zeros((1, 16), complex), start_symbol=-1)
    x = fbmc.synthesize(np.ones((2, 16), complex))
    with pytest.raises(ValueError, match=r"has 87 samples.*72 \(1 symbols\) and 88 \(2 symbols\)"):
        fbmc.analyze(x[:-1])
    with pytest.raises(ValueError, match=r"has 10 samples.*56 \(0 symbols\)"):
        fbmc.analyze(x[:10])
    with pytest.raises(ValueError, match="at least one axis"):
        fbmc.analyze(np.complex128(1))
    with pytest.raises(ValueError, match="finite, non-zero"):
        fbmc.analyze(x, channel=np.zeros(16))
    with pytest.raises(ValueError, match=r"channel of shape \(15,\) does not broadcast"):
        fbmc.analyze(x, channel=np.ones(15))
    with pytest.raises(ValueError, match="would enlarge"):
        fbmc.analyze(x, channel=np.ones((3, 2, 16)))
    with pytest.raises(ValueError, match="subcarriers must be below"):
        fbmc.transmultiplexer_response(8)
    with pytest.raises(ValueError, match="half_symbols"):
        fbmc.transmultiplexer_response(1, -1)
