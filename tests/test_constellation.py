"""Tests of tonebank.constellation against open standards, brute force and theory.

Sources named beside each check:

* IEEE Std 802.11a-1999, clause 17.3.5.7 (OFDM modulation mapping): the
  normalisation factors K_MOD and the bit-to-level tables of BPSK, QPSK,
  16-QAM and 64-QAM.  The tables below are written from memory, not read
  from the document; the rule behind them (I bits first, each axis
  Gray-coded with the all-zero pattern on the most negative level) is
  checked independently by the Gray-property tests.
* Brute force written here: full search over all M points for hard
  decisions and LLRs (max-log: minimum distance; exact: log-sum-exp with
  scipy.special.logsumexp as the reference).
* tonebank.theory for the Monte-Carlo BER checks, whose intervals come
  from scipy.stats.binom (exact binomial quantiles).
"""

from __future__ import annotations

import math
import pickle

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import special, stats

from tonebank import constellation as constellation_module
from tonebank import theory
from tonebank.constellation import Constellation

ALL_QAM = [4, 16, 64, 256, 1024, 4096]


def all_constellations():
    """One of every kind: the 802.11a set, larger QAM, PSK and user points."""
    custom = Constellation(np.array([1.0, 0.2 + 1.1j, -0.9 + 0.1j, 0.3 - 0.8j,
                                     1.5 + 1.5j, -1.4 - 1.3j, -0.2 + 2j, 2.1 - 0.4j]),
                           name="custom 8")
    return ([Constellation.bpsk(), Constellation.qpsk()]
            + [Constellation.qam(m) for m in ALL_QAM]
            + [Constellation.psk(m) for m in (2, 4, 8, 16, 32)]
            + [Constellation.psk(8, phase_offset=0.3), custom])


CONSTELLATIONS = all_constellations()
IDS = [c.name + ("" if i < 13 else f"-{i}") for i, c in enumerate(CONSTELLATIONS)]


def popcount(x: int) -> int:
    return bin(int(x)).count("1")


# -- IEEE Std 802.11a-1999 clause 17.3.5.7 ------------------------------------------

# K_MOD (the standard's normalisation table for clause 17.3.5.7; from memory).
K_MOD = {"BPSK": 1.0, "QPSK": 1 / math.sqrt(2), "16-QAM": 1 / math.sqrt(10),
         "64-QAM": 1 / math.sqrt(42)}

# Bit patterns -> level, one axis (the standard's encoding tables for
# clause 17.3.5.7, written from memory).  BPSK: b0 -> I (Q = 0).  QPSK:
# b0 -> I, b1 -> Q.  16-QAM: b0 b1 -> I, b2 b3 -> Q.  64-QAM: b0 b1 b2 -> I,
# b3 b4 b5 -> Q; the Q tables equal the I tables.
TABLE_BPSK = {"0": -1, "1": 1}
TABLE_QPSK_AXIS = {"0": -1, "1": 1}
TABLE_16QAM_AXIS = {"00": -3, "01": -1, "11": 1, "10": 3}
TABLE_64QAM_AXIS = {"000": -7, "001": -5, "011": -3, "010": -1,
                    "110": 1, "111": 3, "101": 5, "100": 7}


def test_80211a_bpsk_table():
    # IEEE Std 802.11a-1999 clause 17.3.5.7, BPSK encoding table (from memory).
    c = Constellation.bpsk()
    for bits, level in TABLE_BPSK.items():
        symbol = c.map(np.array([int(bits)]))
        assert symbol[0] == pytest.approx(complex(level, 0) * K_MOD["BPSK"], abs=1e-15)


@pytest.mark.parametrize(("name", "axis_table"), [
    ("QPSK", TABLE_QPSK_AXIS), ("16-QAM", TABLE_16QAM_AXIS), ("64-QAM", TABLE_64QAM_AXIS)])
def test_80211a_square_tables(name, axis_table):
    # IEEE Std 802.11a-1999 clause 17.3.5.7: d = (I + jQ) * K_MOD, I from the
    # first half of the bits, Q from the second half (tables from memory).
    c = Constellation.qpsk() if name == "QPSK" else Constellation.qam(int(name.split("-")[0]))
    assert c.name == name
    for i_bits, i_level in axis_table.items():
        for q_bits, q_level in axis_table.items():
            bits = np.array([int(b) for b in i_bits + q_bits])
            expected = complex(i_level, q_level) * K_MOD[name]
            assert c.map(bits)[0] == pytest.approx(expected, abs=1e-15)
            # The label is the same pattern read as a binary number.
            assert c.points[int(i_bits + q_bits, 2)] == pytest.approx(expected, abs=1e-15)


@pytest.mark.parametrize("m", ALL_QAM)
def test_kmod_general_rule(m):
    # 802.11a's K_MOD values are 1/sqrt(2(M-1)/3) for M = 4, 16, 64 (from
    # memory, see K_MOD above); the same rule scales the larger orders.
    c = Constellation.qam(m)
    levels = math.isqrt(m)
    kmod = 1 / math.sqrt(2 * (m - 1) / 3)
    if c.name in K_MOD:
        assert kmod == pytest.approx(K_MOD[c.name], rel=1e-15)
    unit = np.sort(np.unique(np.round(c.points.real / kmod, 9)))
    np.testing.assert_allclose(unit, np.arange(-(levels - 1), levels, 2), atol=1e-9)


@pytest.mark.parametrize("c", CONSTELLATIONS[:13], ids=IDS[:13])
def test_unit_average_energy(c):
    # Definition of the normalisation (802.11a-1999 clause 17.3.5.7 applies
    # K_MOD "to achieve the same average power for all mappings").
    assert np.mean(np.abs(c.points) ** 2) == pytest.approx(1.0, rel=1e-13)


@pytest.mark.parametrize("c", CONSTELLATIONS[:13], ids=IDS[:13])
def test_gray_property(c):
    # Gray labelling (definition): nearest neighbours differ in exactly one
    # bit.  Square QAM: the neighbours one level step away on either axis;
    # PSK: the neighbours on the circle (including across the wrap).
    p = c.points
    pairs = []
    if c.name.endswith("PSK") and c.name not in ("BPSK", "QPSK"):
        order = np.argsort(np.angle(p))
        pairs = list(zip(order, np.roll(order, 1)))
    else:
        step = np.min(np.abs(np.diff(np.unique(np.round(p.real, 12)))))
        # odd integer coordinates in units of half a level step
        grid = {(round(2 * z.real / step), round(2 * z.imag / step)): i
                for i, z in enumerate(p)}
        for (x, y), i in grid.items():
            for neighbour in ((x + 2, y), (x, y + 2)):
                if neighbour in grid:
                    pairs.append((i, grid[neighbour]))
        # every point has 2 to 4 neighbours on a full square grid
        assert len(pairs) == (2 * c.order - 2 * math.isqrt(c.order) if c.order > 2 else 1)
    for i, j in pairs:
        assert popcount(i ^ j) == 1, (c.name, i, j)
    # and they are the nearest points: no two points are closer than a pair
    d = np.abs(p[:, None] - p[None, :]) if c.order <= 256 else None
    if d is not None:
        np.fill_diagonal(d, np.inf)
        assert d.min() == pytest.approx(min(abs(p[i] - p[j]) for i, j in pairs), rel=1e-12)


def test_psk_default_matches_bpsk_and_qpsk():
    # Documented choice of the default phase offset (points and labels).
    np.testing.assert_allclose(Constellation.psk(2).points, Constellation.bpsk().points,
                               atol=1e-15)
    np.testing.assert_allclose(Constellation.psk(4).points, Constellation.qpsk().points,
                               atol=1e-15)
    assert Constellation.qam(4) == Constellation.qpsk()


def test_psk_phase_offset_and_labels():
    # Point j at phase offset - 2 pi j / m carries the reflected Gray code of j.
    m, offset = 16, 0.25
    c = Constellation.psk(m, phase_offset=offset)
    for j in range(m):
        assert c.points[j ^ (j >> 1)] == pytest.approx(
            np.exp(1j * (offset - 2 * np.pi * j / m)), abs=1e-15)


# -- mapping, labels and hard decisions -----------------------------------------------


@given(index=st.integers(0, len(CONSTELLATIONS) - 1),
       lead=st.lists(st.integers(1, 3), max_size=2),
       n=st.integers(0, 20), seed=st.integers(0, 2**32 - 1))
def test_map_demap_round_trip(index, lead, n, seed):
    c = CONSTELLATIONS[index]
    rng = np.random.default_rng(seed)
    bits = rng.integers(0, 2, tuple(lead) + (n * c.bits_per_symbol,), dtype=np.int8)
    symbols = c.map(bits)
    assert symbols.shape == tuple(lead) + (n,)
    assert symbols.dtype == np.complex128
    out = c.demap(symbols)
    assert out.dtype == np.uint8
    np.testing.assert_array_equal(out, bits)
    labels = c.bits_to_labels(bits)
    np.testing.assert_array_equal(c.decide(symbols), labels)
    np.testing.assert_array_equal(symbols, c.points[labels])
    np.testing.assert_array_equal(c.labels_to_bits(labels), bits)
    single = c.map(bits, dtype=np.complex64)
    assert single.dtype == np.complex64
    np.testing.assert_array_equal(single, symbols.astype(np.complex64))
    np.testing.assert_array_equal(c.demap(single), bits)


def test_labels_are_binary_numbers_msb_first():
    # Module convention: label i carries the k-bit binary form of i, MSB first.
    c = Constellation.qam(64)
    labels = np.arange(64)
    bits = c.labels_to_bits(labels).reshape(64, 6)
    expected = np.array([[int(ch) for ch in format(i, "06b")] for i in labels])
    np.testing.assert_array_equal(bits, expected)
    np.testing.assert_array_equal(c.bits_to_labels(bits.reshape(-1)), labels)


@pytest.mark.parametrize("dtype", [bool, np.uint8, np.int16, np.int64, np.uint64])
def test_map_accepts_bool_and_integer_bits(dtype):
    c = Constellation.qam(16)
    bits = np.array([0, 1, 1, 0, 1, 1, 1, 1], dtype=dtype)
    np.testing.assert_array_equal(c.map(bits), c.points[[6, 15]])


@pytest.mark.parametrize("c", CONSTELLATIONS, ids=IDS)
def test_decide_equals_full_search(c):
    # Brute force: argmin over all M points of |y - s|^2.
    rng = np.random.default_rng(11)
    y = 1.3 * (rng.standard_normal(500) + 1j * rng.standard_normal(500))
    expected = np.argmin(np.abs(y[:, None] - c.points[None, :]), axis=1)
    np.testing.assert_array_equal(c.decide(y), expected)
    assert isinstance(c.decide(y[0]), int)
    assert c.decide(y[0]) == expected[0]


def test_real_symbols_accepted():
    c = Constellation.bpsk()
    np.testing.assert_array_equal(c.demap(np.array([-0.5, 0.5, 2.0])), [0, 1, 1])
    np.testing.assert_array_equal(c.demap(np.array([-1, 1], dtype=np.int32)), [0, 1])
    assert c.llr(np.array([0.5], dtype=np.float32), 1.0).dtype == np.float32


# -- LLRs against brute force ----------------------------------------------------------


def brute_force_llr(c, y, noise_var, exact):
    """Full search over all points in float64 (scipy.special.logsumexp for exact)."""
    y = np.asarray(y, dtype=np.complex128)
    k = c.bits_per_symbol
    nv = np.broadcast_to(np.asarray(noise_var, dtype=np.float64), y.shape).reshape(-1, 1)
    d2 = np.abs(y.reshape(-1)[:, None] - c.points[None, :]) ** 2
    labels = np.arange(c.order)
    columns = []
    for b in range(k):
        zero = ((labels >> (k - 1 - b)) & 1) == 0
        if exact:
            columns.append(special.logsumexp(-d2[:, zero] / nv, axis=1)
                           - special.logsumexp(-d2[:, ~zero] / nv, axis=1))
        else:
            columns.append((d2[:, ~zero].min(axis=1) - d2[:, zero].min(axis=1)) / nv[:, 0])
    return np.stack(columns, axis=-1).reshape(y.shape[:-1] + (y.shape[-1] * k,))


def noise_var_cases(shape, rng):
    """Scalar, per symbol, per subcarrier (last axis), per row."""
    return {
        "scalar": 0.2,
        "per_symbol": rng.uniform(0.02, 0.5, shape),
        "per_subcarrier": rng.uniform(0.02, 0.5, shape[-1:]),
        "per_row": rng.uniform(0.02, 0.5, shape[:-1] + (1,)),
    }


@pytest.mark.parametrize("exact", [False, True], ids=["maxlog", "exact"])
@pytest.mark.parametrize("c", CONSTELLATIONS, ids=IDS)
def test_llr_equals_brute_force(c, exact):
    rng = np.random.default_rng(c.order)
    shape = (3, 24) if c.order <= 256 else (2, 8)  # the reference is O(M) per symbol
    labels = rng.integers(0, c.order, shape)
    y = c.points[labels] + 0.4 * (rng.standard_normal(shape) + 1j * rng.standard_normal(shape))
    y[0, :4] = [5 + 5j, -7 - 0.1j, 0.0, 40j]  # far outside and at the centre
    for case, noise_var in noise_var_cases(shape, rng).items():
        got = c.llr(y, noise_var, exact=exact)
        ref = brute_force_llr(c, y, noise_var, exact)
        assert got.dtype == np.float64 and got.shape == ref.shape, case
        # Both sides work with exponents |y - s|^2 / N0, whose rounding
        # (a few ulps of the largest) bounds the agreement of small LLRs.
        exponent = np.max(np.abs(y[..., None] - c.points) ** 2, axis=-1) / noise_var
        exponent = np.repeat(exponent, c.bits_per_symbol, axis=-1)
        bound = 1e-11 * np.maximum(np.abs(ref), 1.0) + 1e-15 * exponent
        np.testing.assert_array_less(np.abs(got - ref), bound, err_msg=case)
        # complex64 in -> float32 out, to single-precision accuracy.
        got32 = c.llr(y.astype(np.complex64), noise_var, exact=exact)
        assert got32.dtype == np.float32
        ref32 = brute_force_llr(c, y.astype(np.complex64), noise_var, exact)
        np.testing.assert_array_less(np.abs(got32 - ref32) / np.maximum(np.abs(ref32), 1.0),
                                     1e-5, err_msg=case)


@pytest.mark.parametrize("m", [16, 1024])
def test_exact_llr_at_very_high_snr(m):
    # Exercises the log-domain fallback where a bit value's sum underflows;
    # the reference is scipy.special.logsumexp over all points.
    c = Constellation.qam(m)
    rng = np.random.default_rng(5)
    y = c.points[rng.integers(0, m, 300)] + 0.01 * (rng.standard_normal(300)
                                                   + 1j * rng.standard_normal(300))
    for noise_var in (1e-5, 1e-3):
        got = c.llr(y, noise_var, exact=True)
        ref = brute_force_llr(c, y, noise_var, exact=True)
        np.testing.assert_array_less(np.abs(got - ref) / np.maximum(np.abs(ref), 1), 1e-11)


def test_llr_in_blocks(monkeypatch):
    # Tiny blocks: the block boundaries must not change any value.
    monkeypatch.setattr(constellation_module, "_BLOCK_SYMBOLS", 7)
    monkeypatch.setattr(constellation_module, "_FULL_SEARCH_ELEMENTS", 40)
    rng = np.random.default_rng(8)
    y = rng.standard_normal((5, 31)) + 1j * rng.standard_normal((5, 31))
    nv = rng.uniform(0.1, 1.0, (5, 31))
    for c in (Constellation.qam(64), Constellation.psk(16), CONSTELLATIONS[-1]):
        for exact in (False, True):
            np.testing.assert_allclose(c.llr(y, nv, exact=exact),
                                       brute_force_llr(c, y, nv, exact), rtol=1e-11,
                                       atol=1e-11)
        expected = np.argmin(np.abs(y[..., None] - c.points), axis=-1)
        np.testing.assert_array_equal(c.decide(y), expected)


@pytest.mark.parametrize("c", CONSTELLATIONS, ids=IDS)
def test_maxlog_sign_agrees_with_hard_decision(c):
    # Max-log LLR = (d1 - d0) / N0, and the nearest point lies in one of the
    # two sets, so the sign is the hard decision (exact LLRs can differ).
    rng = np.random.default_rng(21)
    y = 1.2 * (rng.standard_normal(2000) + 1j * rng.standard_normal(2000))
    llr = c.llr(y, 0.3)
    bits = c.demap(y)
    decided = np.abs(llr) > 1e-9  # ties (LLR = 0) may go either way
    np.testing.assert_array_equal((llr < 0)[decided], (bits == 1)[decided])


def test_empty_inputs():
    c = Constellation.qam(16)
    assert c.map(np.zeros((2, 0), dtype=np.uint8)).shape == (2, 0)
    assert c.demap(np.zeros((2, 0), dtype=complex)).shape == (2, 0)
    assert c.llr(np.zeros((2, 0), dtype=np.complex64), 1.0).shape == (2, 0)


# -- Monte-Carlo BER against tonebank.theory ---------------------------------------------

# Each count below is compared with its exact binomial interval
# (scipy.stats.binom.interval) at confidence 1 - 1e-4: with about 60
# checks in the module, a correct implementation passes all of them with
# probability >= 99.4% (Bonferroni); the seed is fixed, so the outcome
# cannot change between runs.
CONFIDENCE = 1 - 1e-4
N_SYMBOLS = 20_000


def awgn(symbols, noise_var, rng):
    """Circular complex Gaussian noise of variance noise_var per symbol."""
    n = np.sqrt(noise_var / 2) * (rng.standard_normal(symbols.shape)
                                  + 1j * rng.standard_normal(symbols.shape))
    return symbols + n


@pytest.mark.parametrize(("c", "ebn0_db"), [
    (Constellation.bpsk(), [2.0, 5.0, 7.0]),
    (Constellation.qpsk(), [2.0, 5.0, 7.0]),
    (Constellation.qam(16), [4.0, 8.0, 10.0]),
    (Constellation.qam(64), [8.0, 12.0]),
    (Constellation.qam(256), [12.0, 16.0]),
], ids=["BPSK", "QPSK", "16-QAM", "64-QAM", "256-QAM"])
def test_monte_carlo_ber_matches_theory(c, ebn0_db):
    # Theory: tonebank.theory.ber_bpsk (Q(sqrt(2 Eb/N0))) for BPSK and the
    # exact Gray square-QAM expression of Cho and Yoon (2002) per bit
    # position for QPSK and QAM.  Unit-energy points: N0 = 1 / (k Eb/N0).
    rng = np.random.default_rng(20240601 + c.order)
    k = c.bits_per_symbol
    for snr in ebn0_db:
        noise_var = 1.0 / (k * 10 ** (snr / 10))
        bits = rng.integers(0, 2, (N_SYMBOLS, k), dtype=np.uint8)
        received = awgn(c.map(bits.reshape(-1)), noise_var, rng)
        errors = (c.demap(received).reshape(N_SYMBOLS, k) != bits).sum(axis=0)
        if c.name == "BPSK":
            per_bit = np.atleast_1d(theory.ber_bpsk(snr))
        else:
            per_bit = theory.ber_qam_gray(c.order, snr, per_bit=True)
        for b in range(k):
            lo, hi = stats.binom.interval(CONFIDENCE, N_SYMBOLS, per_bit[b])
            assert lo <= errors[b] <= hi, (c.name, snr, b, errors[b], lo, hi)
        # The same data through the max-log LLR signs: identical decisions.
        llr = c.llr(received, noise_var)
        np.testing.assert_array_equal((llr < 0).astype(np.uint8), c.demap(received))


def test_monte_carlo_8psk_matches_theory():
    # Symbol errors: exact binomial interval around tonebank.theory.ser_mpsk.
    # Bit errors per symbol are dependent within a symbol but independent
    # between symbols, so their mean is compared with ber_mpsk_gray by the
    # central limit theorem with the sample's own variance (z for 1 - 1e-4).
    c = Constellation.psk(8)
    rng = np.random.default_rng(99)
    k = 3
    z = stats.norm.isf((1 - CONFIDENCE) / 2)
    for ebn0_db in (4.0, 8.0):
        noise_var = 1.0 / (k * 10 ** (ebn0_db / 10))
        labels = rng.integers(0, 8, N_SYMBOLS)
        received = awgn(c.points[labels], noise_var, rng)
        symbol_errors = np.count_nonzero(c.decide(received) != labels)
        lo, hi = stats.binom.interval(CONFIDENCE, N_SYMBOLS,
                                      theory.ser_mpsk(8, ebn0_db + 10 * np.log10(k)))
        assert lo <= symbol_errors <= hi
        per_symbol = (c.demap(received).reshape(-1, k)
                      != c.labels_to_bits(labels).reshape(-1, k)).sum(axis=1) / k
        half_width = z * per_symbol.std(ddof=1) / np.sqrt(N_SYMBOLS)
        assert abs(per_symbol.mean() - theory.ber_mpsk_gray(8, ebn0_db)) <= half_width


# -- immutability and value semantics ---------------------------------------------------


def test_immutable():
    c = Constellation.qam(16)
    with pytest.raises(AttributeError):
        c.name = "other"
    with pytest.raises(AttributeError):
        del c.name
    with pytest.raises(ValueError):
        c.points[0] = 0
    original = np.array([1.0, -1.0])
    user = Constellation(original)
    original[0] = 5.0  # the constellation keeps its own copy
    assert user.points[0] == 1.0


def test_equality_hash_pickle_repr():
    for c in CONSTELLATIONS:
        clone = pickle.loads(pickle.dumps(c))
        assert clone == c and hash(clone) == hash(c) and clone.name == c.name
        np.testing.assert_array_equal(clone.llr(c.points, 0.1), c.llr(c.points, 0.1))
    assert Constellation.qam(16) != Constellation.qam(64)
    assert Constellation.qam(16) != "16-QAM"
    assert "16-QAM" in repr(Constellation.qam(16))
    assert Constellation([1, -1]).name == "2-point"


# -- every ValueError / TypeError path --------------------------------------------------


@pytest.mark.parametrize(("points", "error", "match"), [
    (np.ones((2, 2)), ValueError, "points"),
    ([1, 2, 3], ValueError, "points"),
    ([1], ValueError, "points"),
    ([], ValueError, "points"),
    ([1, np.nan], ValueError, "points"),
    ([1, np.inf], ValueError, "points"),
    ([1, 1, 2, 3], ValueError, "points"),
    (["a", "b"], TypeError, "points"),
])
def test_constructor_errors(points, error, match):
    with pytest.raises(error, match=match):
        Constellation(points)


def test_classmethod_errors():
    with pytest.raises(TypeError, match="name"):
        Constellation([1, -1], name=5)
    for bad in (8, 2, 32, 0, -4, 8192):
        with pytest.raises(ValueError, match="m="):
            Constellation.qam(bad)
    for bad in (16.0, "16", True, None):
        with pytest.raises(TypeError, match="m must be an integer"):
            Constellation.qam(bad)
    for bad in (0, 1, 3, 12, 2**17):
        with pytest.raises(ValueError, match="m="):
            Constellation.psk(bad)
    with pytest.raises(TypeError, match="m must be an integer"):
        Constellation.psk(8.0)
    with pytest.raises(ValueError, match="phase_offset"):
        Constellation.psk(8, phase_offset=np.nan)
    with pytest.raises(ValueError, match="phase_offset"):
        Constellation.psk(8, phase_offset=np.inf)
    with pytest.raises(TypeError, match="phase_offset"):
        Constellation.psk(8, phase_offset="0.1")
    with pytest.raises(TypeError, match="phase_offset"):
        Constellation.psk(8, phase_offset=1j)


def test_map_errors():
    c = Constellation.qam(16)
    with pytest.raises(ValueError, match="append 3 padding bit"):
        c.map(np.zeros(5, dtype=np.uint8))
    with pytest.raises(ValueError, match="append 1 padding bit"):
        c.map(np.zeros((2, 7), dtype=np.uint8))
    with pytest.raises(ValueError, match="bits holds the value 2"):
        c.map(np.array([0, 1, 2, 0]))
    with pytest.raises(ValueError, match="bits holds the value -1"):
        c.map(np.array([0, 1, -1, 0]))
    with pytest.raises(TypeError, match="bits"):
        c.map(np.array([0.0, 1.0, 1.0, 0.0]))
    with pytest.raises(ValueError, match="bits"):
        c.map(np.uint8(1))
    with pytest.raises(TypeError, match="dtype"):
        c.map(np.zeros(4, dtype=np.uint8), dtype=np.float64)
    with pytest.raises(TypeError, match="dtype"):
        c.map(np.zeros(4, dtype=np.uint8), dtype="not a dtype")
    with pytest.raises(ValueError, match="padding"):
        c.bits_to_labels(np.zeros(6, dtype=np.uint8))


def test_label_errors():
    c = Constellation.qam(16)
    with pytest.raises(ValueError, match="labels holds 16"):
        c.labels_to_bits(np.array([0, 16]))
    with pytest.raises(ValueError, match="labels holds -1"):
        c.labels_to_bits(np.array([-1, 3]))
    with pytest.raises(TypeError, match="labels"):
        c.labels_to_bits(np.array([0.0, 1.0]))
    with pytest.raises(ValueError, match="labels"):
        c.labels_to_bits(np.int64(3))


@pytest.mark.parametrize("method", ["decide", "demap", "llr"])
def test_symbol_errors(method):
    c = Constellation.qam(16)
    call = (lambda y: c.llr(y, 1.0)) if method == "llr" else getattr(c, method)
    with pytest.raises(ValueError, match="symbols"):
        call(np.array([1.0, np.nan]))
    with pytest.raises(ValueError, match="symbols"):
        call(np.array([1.0, np.inf * 1j]))
    with pytest.raises(TypeError, match="symbols"):
        call(np.array(["a"]))
    with pytest.raises(TypeError, match="symbols"):
        call(np.array([1 + 1j], dtype=np.clongdouble))
    if method != "decide":
        with pytest.raises(ValueError, match="symbols must have at least one dimension"):
            call(np.complex128(1))


def test_noise_var_errors():
    c = Constellation.qam(16)
    y = np.zeros((3, 4), dtype=complex)
    for bad in (0.0, -1.0, np.nan, np.inf, [1.0, 1.0, 0.0, 1.0]):
        with pytest.raises(ValueError, match="noise_var"):
            c.llr(y, bad)
    with pytest.raises(TypeError, match="noise_var"):
        c.llr(y, 1.0 + 0j)
    with pytest.raises(TypeError, match="noise_var"):
        c.llr(y, "1")
    with pytest.raises(ValueError, match="noise_var has shape"):
        c.llr(y, np.ones(3))                 # does not broadcast
    with pytest.raises(ValueError, match="noise_var has shape"):
        c.llr(y, np.ones((2, 3, 4)))         # would enlarge the result


# -- rectangular QAM -------------------------------------------------------------


@pytest.mark.parametrize("levels_i, levels_q", [(4, 2), (8, 4), (16, 8), (2, 4), (128, 128)])
def test_rectangular_qam_gray_grid(levels_i, levels_q):
    """Unit energy (the mean of a PAM grid's squared levels is (L^2 - 1) / 3 per
    axis, common practice, no source), Gray labels (neighbours on either axis
    differ in one bit), and pickling by level counts."""
    import pickle

    qam = Constellation.rectangular_qam(levels_i, levels_q)
    m = levels_i * levels_q
    assert qam.order == m and qam.bits_per_symbol == int(np.log2(m))
    np.testing.assert_allclose(np.mean(np.abs(qam.points) ** 2), 1.0, rtol=1e-12)
    step = 2.0 / np.sqrt((levels_i**2 - 1) / 3 + (levels_q**2 - 1) / 3)
    labels = np.arange(m)
    pts = qam.points
    for a in labels[:512]:      # enough cells to reach every row and column pattern
        near = np.flatnonzero(np.isclose(np.abs(pts - pts[a]), step, rtol=1e-9))
        assert near.size >= 2
        assert all(bin(int(a) ^ int(b)).count("1") == 1 for b in near)
    again = pickle.loads(pickle.dumps(qam))
    assert again == qam and again.name == qam.name
    # the per-axis LLRs agree with the exhaustive max-log search
    rng = np.random.default_rng(2)
    y = qam.map(rng.integers(0, 2, 40 * qam.bits_per_symbol)) + 0.1 * (
        rng.standard_normal(40) + 1j * rng.standard_normal(40))
    generic = Constellation(qam.points)
    np.testing.assert_allclose(qam.llr(y, 0.05), generic.llr(y, 0.05), rtol=1e-9, atol=1e-9)


def test_rectangular_qam_equal_axes_is_square_qam():
    assert Constellation.rectangular_qam(8, 8) == Constellation.qam(64)
    assert Constellation.rectangular_qam(8, 8).name == "64-QAM"


@pytest.mark.parametrize("args, error, words", [
    ((3, 2), ValueError, "levels_i=3 must be a power of two"),
    ((2, 2048), ValueError, "levels_q=2048"),
    ((1, 2), ValueError, "levels_i=1"),
    ((2.0, 2), TypeError, "levels_i"),
])
def test_rectangular_qam_bad_levels(args, error, words):
    with pytest.raises(error, match=words):
        Constellation.rectangular_qam(*args)
