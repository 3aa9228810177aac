"""tonebank.loading: capacity, water-filling, SNR gap, bit loading, bit tables.

Outside references, each named beside its check:

* Cover & Thomas, Elements of Information Theory (2nd ed., 2006), the
  parallel Gaussian channels section: capacity as a sum over the
  subchannels, the water-filling solution and its worked example
  (noise 1, 2, 4, total power 4 -> level 3.5, powers 2.5, 1.5, 0; the
  numbers are recomputed here by hand as well).
* The Karush-Kuhn-Tucker conditions of that convex problem (any convex
  optimisation text), and scipy.optimize.minimize (SLSQP) as an
  independent numerical optimiser.
* scipy.special.erfcinv for the inverse Q function of the SNR gap; the
  figure "about 9.8 dB at 1e-7" for uncoded QAM is common practice in DMT
  loading (from memory).
* Exhaustive search over every allocation of small instances (brute force,
  no source needed) for the optimality of the discrete loaders; the
  efficiency condition (no single bit moved between two tones lowers the
  energy) as the optimality criterion of J. Campello, "Practical bit
  loading for DMT", ICC 1999 (from memory).
* The bound "the rate loaded with gap Gamma is within one bit (one step)
  per tone of sum log2(1 + E_k g_k / Gamma)": rounding each tone of the
  gap water-filling down is feasible with less energy, and integer bits
  at their energies are a feasible continuous point (argument written
  out in test_rate_within_one_bit_per_tone).
"""

import itertools
import math
import pickle

import numpy as np
import pytest
from hypothesis import given, strategies as st
from scipy import optimize, special

import tonebank
from tonebank import CarrierPlan, loading
from tonebank.loading import BitTable


def q_inverse(p):
    # Q(x) = erfc(x / sqrt 2) / 2, so Q^-1(p) = sqrt(2) erfcinv(2 p) (scipy.special).
    return math.sqrt(2) * special.erfcinv(2 * p)


def channel_gains(rng, n, taps=6, snr_db=35.0):
    """|H|^2 / N of an invented random multipath channel, as a gain-to-noise ratio."""
    h = (rng.standard_normal(taps) + 1j * rng.standard_normal(taps)) * np.exp(-np.arange(taps) / 2)
    response = np.fft.fft(h, n)
    return np.abs(response) ** 2 / np.mean(np.abs(response) ** 2) * 10 ** (snr_db / 10)


# -- capacity ---------------------------------------------------------------------------


def test_capacity_is_the_sum_over_subchannels():
    # Cover & Thomas, parallel Gaussian channels: C = sum 1/2 log(1 + P_i/N_i)
    # per real dimension; per complex tone log2(1 + SNR).
    g = np.array([1.0, 3.0, 0.0, 7.0])
    e = np.array([1.0, 1.0, 5.0, 1.0])
    assert loading.capacity(g, e) == pytest.approx(1 + 2 + 0 + 3)
    assert loading.capacity(g, e, gap_db=10 * math.log10(2)) == pytest.approx(
        math.log2(1.5) + math.log2(2.5) + math.log2(4.5))
    batch = loading.capacity(np.stack([g, 2 * g]), e)
    assert batch.shape == (2,) and batch[0] == pytest.approx(6.0)


def test_capacity_errors():
    with pytest.raises(ValueError, match="energies"):
        loading.capacity([1.0], [-1.0])
    with pytest.raises(ValueError, match="broadcast"):
        loading.capacity([1.0, 2.0], [1.0, 2.0, 3.0])
    with pytest.raises(TypeError, match="gain_to_noise"):
        loading.capacity(["a"], [1.0])
    with pytest.raises(TypeError, match="gap_db"):
        loading.capacity([1.0], [1.0], gap_db="9")


def test_gain_to_noise():
    assert loading.gain_to_noise([2j, 1], [4.0, 0.5]).tolist() == [1.0, 2.0]
    with pytest.raises(ValueError, match="noise_var"):
        loading.gain_to_noise([1, 2], 0.0)
    with pytest.raises(ValueError, match="broadcast"):
        loading.gain_to_noise([1, 2], [1.0, 1.0, 1.0])


# -- water-filling ------------------------------------------------------------------------


def test_water_filling_textbook_example():
    # Cover & Thomas, parallel Gaussian channels: noise levels 1, 2, 4 and
    # total power 4.  By hand: with the third channel off, (nu - 1) + (nu - 2)
    # = 4 gives nu = 3.5 < 4, so powers 2.5, 1.5, 0.
    result = loading.water_filling(1 / np.array([1.0, 2.0, 4.0]), 4.0)
    assert result.level == pytest.approx(3.5, rel=1e-14)
    np.testing.assert_allclose(result.energies, [2.5, 1.5, 0.0], atol=1e-14)
    # capacity by hand: log2(3.5) + log2(1.75)
    assert result.capacity == pytest.approx(math.log2(3.5) + math.log2(1.75))


def check_kkt(g, total, caps, result, gamma=1.0):
    """KKT of max sum log(1 + E g / Gamma) s.t. sum E = P, 0 <= E <= cap.

    Stationarity with the multipliers gives E_k = clip(nu - Gamma/g_k, 0, cap_k):
    E_k > 0 and below its cap -> Gamma/g_k + E_k = nu; E_k = 0 -> Gamma/g_k >= nu;
    E_k = cap_k -> Gamma/g_k + cap_k <= nu.
    """
    e, nu = result.energies, result.level
    noise = np.where(g > 0, gamma / np.where(g > 0, g, 1), np.inf)
    tol = 1e-9 * max(1.0, nu if np.isfinite(nu) else 1.0)
    assert np.all(e >= 0) and np.all(e <= caps + tol)
    if np.isfinite(nu):
        assert e.sum() == pytest.approx(total, rel=1e-10)
    inner = (e > tol) & (e < caps - tol)
    np.testing.assert_allclose(noise[inner] + e[inner], nu, rtol=1e-9)
    assert np.all(noise[e <= tol] >= nu - tol)
    at_cap = (e >= caps - tol) & (caps > 0)
    assert np.all(noise[at_cap] + caps[at_cap] <= nu + tol)


@given(st.integers(0, 10_000), st.booleans(), st.booleans())
def test_water_filling_meets_kkt(seed, with_cap, with_gap):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 40))
    g = rng.exponential(1.0, n) * 10 ** rng.uniform(-2, 2)
    g[rng.random(n) < 0.1] = 0.0
    if not np.any(g > 0):
        g[0] = 1.0
    total = float(rng.uniform(0.1, 5 * n))
    caps = rng.uniform(0.0, 3.0, n) if with_cap else np.full(n, np.inf)
    if with_cap and not np.any(caps[g > 0] > 0):
        caps[g > 0] = 1.0
    gap_db = 6.0 if with_gap else 0.0
    result = loading.water_filling(g, total, cap=caps if with_cap else None, gap_db=gap_db)
    check_kkt(g, total, caps, result, gamma=10 ** (gap_db / 10))
    assert result.capacity == pytest.approx(loading.capacity(g, result.energies, gap_db=gap_db))


def test_water_filling_matches_a_numerical_optimiser():
    # scipy.optimize.minimize (SLSQP) on the same concave problem, as an
    # independent reference: same rate, same energies.
    rng = np.random.default_rng(7)
    g = rng.exponential(1.0, 8) * 4
    caps = np.full(8, 1.5)
    for cap in (None, caps):
        result = loading.water_filling(g, 6.0, cap=cap)
        bounds = [(0.0, None if cap is None else 1.5)] * 8
        ref = optimize.minimize(lambda e: -np.sum(np.log2(1 + e * g)), np.full(8, 0.75),
                                method="SLSQP", bounds=bounds,
                                constraints=[{"type": "eq", "fun": lambda e: e.sum() - 6.0}],
                                options={"ftol": 1e-13, "maxiter": 500})
        assert ref.success
        assert result.capacity == pytest.approx(-ref.fun, rel=1e-7)
        np.testing.assert_allclose(result.energies, ref.x, atol=1e-4)


def test_infinite_cap_means_no_cap():
    g = np.array([4.0, 1.0, 0.5, 2.0])
    caps = np.array([np.inf, 0.3, np.inf, np.inf])
    result = loading.water_filling(g, 3.0, cap=caps)
    check_kkt(g, 3.0, caps, result)
    plain = loading.levin_campello(g * 100, gap_db=3.0, total_energy=3.0, cap=np.inf)
    assert plain == loading.levin_campello(g * 100, gap_db=3.0, total_energy=3.0)
    with pytest.raises(ValueError, match="cap"):
        loading.water_filling(g, 3.0, cap=[np.nan, 1, 1, 1])


def test_water_filling_caps_that_hold_less_than_the_budget():
    result = loading.water_filling([1.0, 2.0, 0.0], 10.0, cap=[1.0, 2.0, 5.0])
    assert result.level == math.inf
    assert result.energies.tolist() == [1.0, 2.0, 0.0]


def test_water_filling_errors():
    with pytest.raises(ValueError, match="total_energy"):
        loading.water_filling([1.0], 0.0)
    with pytest.raises(ValueError, match="gain_to_noise"):
        loading.water_filling([[1.0]], 1.0)
    with pytest.raises(ValueError, match="gain_to_noise"):
        loading.water_filling([1.0, -1.0], 1.0)
    with pytest.raises(ValueError, match="no tone"):
        loading.water_filling([0.0, 0.0], 1.0)
    with pytest.raises(ValueError, match="cap"):
        loading.water_filling([1.0, 1.0], 1.0, cap=[1.0, 1.0, 1.0])
    with pytest.raises(TypeError, match="total_energy"):
        loading.water_filling([1.0], "1")


# -- the SNR gap -----------------------------------------------------------------------------


def test_gap_at_1e7_is_about_9_8_db():
    # ~9.8 dB for uncoded QAM at 1e-7: common practice in DMT loading (from
    # memory).  Our approximation: Gamma = Q^-1(P / N_e)**2 / 3 with N_e = 2
    # (per real dimension), inverse Q from scipy.special.erfcinv.
    gap = loading.snr_gap_db(1e-7)
    assert gap == pytest.approx(10 * math.log10(q_inverse(1e-7 / 2) ** 2 / 3), abs=1e-9)
    assert abs(gap - 9.8) < 0.05
    per_symbol = loading.snr_gap_db(1e-7, neighbors=4)
    assert per_symbol == pytest.approx(10 * math.log10(q_inverse(1e-7 / 4) ** 2 / 3), abs=1e-9)
    # coding gain lowers it, margin raises it, in dB
    assert loading.snr_gap_db(1e-7, coding_gain_db=4.2, margin_db=6.0) == pytest.approx(
        gap + 1.8)


def test_gap_matches_the_qam_error_rate_it_stands_for():
    # Square M-QAM at SNR Gamma (M - 1) has per-axis error probability
    # 2 (1 - 1/sqrt M) Q(sqrt(3 Gamma)) (Proakis & Salehi, Digital
    # Communications, 5th ed., sec. 4.3, from memory); for large M that is
    # 2 Q(sqrt(3 Gamma)) = P with N_e = 2, by construction of the gap.
    for p in (1e-3, 1e-5, 1e-7):
        gamma = 10 ** (loading.snr_gap_db(p) / 10)
        per_axis = 2 * (1 - 1 / 64) * 0.5 * special.erfc(math.sqrt(3 * gamma / 2))
        assert per_axis == pytest.approx(p * (1 - 1 / 64), rel=1e-9)


def test_gap_errors():
    with pytest.raises(ValueError, match="symbol_error_rate"):
        loading.snr_gap_db(0.0)
    with pytest.raises(ValueError, match="symbol_error_rate"):
        loading.snr_gap_db(1.5)
    with pytest.raises(ValueError, match="neighbors"):
        loading.snr_gap_db(1e-3, neighbors=0)
    with pytest.raises(TypeError, match="margin_db"):
        loading.snr_gap_db(1e-3, margin_db=None)


# -- discrete loading ------------------------------------------------------------------------


def brute_force(g, gamma, *, budget=None, target=None, max_bits=4, step=1, cap=np.inf):
    """Every allocation of a small instance: most bits within the budget
    (least energy among them), or least energy for the target."""
    best = None
    unit = np.where(g > 0, gamma / np.where(g > 0, g, 1), np.inf)
    choices = range(0, max_bits + 1, step)
    for bits in itertools.product(choices, repeat=g.size):
        b = np.array(bits)
        if np.any((b > 0) & (g == 0)):
            continue
        with np.errstate(invalid="ignore"):    # inf * 0 on dead tones, masked out
            e = np.where(b > 0, unit * (2.0 ** b - 1), 0.0)
        if np.any(e > cap * (1 + 1e-12)):
            continue
        energy, total = float(e.sum()), int(b.sum())
        if budget is not None:
            if energy > budget * (1 + 1e-12):
                continue
            key = (-total, energy)
        else:
            if total != target:
                continue
            key = (energy,)
        if best is None or key < best[0]:
            best = (key, total, energy)
    return best[1], best[2]


def is_efficient(table, g, gamma, step=1, top=None):
    """No single step moved from one tone to another lowers the energy."""
    b = table.bits
    unit = np.where(g > 0, gamma / np.where(g > 0, g, 1), np.inf)
    top = np.full(b.size, 15) if top is None else top
    up = np.where(b + step <= top, unit * 2.0 ** b * (2 ** step - 1), np.inf)
    down = np.where(b > 0, unit * 2.0 ** (b - step) * (2 ** step - 1), -np.inf)
    return down.max() <= up.min() * (1 + 1e-12)


LOADERS = {"levin_campello": loading.levin_campello, "hughes_hartogs": loading.hughes_hartogs}


@pytest.mark.parametrize("name", sorted(LOADERS))
@given(seed=st.integers(0, 10_000))
def test_loaders_match_exhaustive_search(name, seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 5))
    g = rng.exponential(1.0, n) * 10 ** rng.uniform(0.5, 2)
    g[rng.random(n) < 0.15] = 0.0
    gamma = 10 ** 0.5
    step = int(rng.integers(1, 3))
    cap = float(rng.uniform(1, 20)) if rng.random() < 0.4 else None
    budget = float(rng.uniform(0.5, 10.0 * n))
    loader = LOADERS[name]
    kwargs = dict(gap_db=5.0, max_bits=5, granularity=step, cap=cap)
    if name == "levin_campello" and rng.random() < 0.5:
        kwargs["start"] = np.zeros(n, dtype=int)     # the algorithm's steps from scratch
    table = loader(g, total_energy=budget, **kwargs)
    bits, energy = brute_force(g, gamma, budget=budget, max_bits=5 - 5 % step, step=step,
                               cap=np.inf if cap is None else cap)
    assert table.bits_per_symbol == bits
    assert table.total_energy == pytest.approx(energy, rel=1e-9)
    assert table.total_energy <= budget * (1 + 1e-12)
    # margin-adaptive: the least energy for a target
    target = bits // 2 - (bits // 2) % step
    table = loader(g, target_bits=target, **kwargs)
    _, energy = brute_force(g, gamma, target=target, max_bits=5 - 5 % step, step=step,
                            cap=np.inf if cap is None else cap)
    assert table.bits_per_symbol == target
    assert table.total_energy == pytest.approx(energy, rel=1e-9)


@pytest.mark.parametrize("start", ["default", "zeros", "random"])
def test_levin_campello_from_any_start_is_efficient_and_equals_greedy(start):
    rng = np.random.default_rng(11)
    g = channel_gains(rng, 96)
    gap = loading.snr_gap_db(1e-7)
    first = {"default": None, "zeros": np.zeros(96, dtype=int),
             "random": rng.integers(0, 16, 96)}[start]
    for kwargs in (dict(total_energy=96.0), dict(target_bits=500)):
        lc = loading.levin_campello(g, gap_db=gap, start=first, **kwargs)
        hh = loading.hughes_hartogs(g, gap_db=gap, **kwargs)
        assert lc.bits_per_symbol == hh.bits_per_symbol
        assert lc.total_energy == pytest.approx(hh.total_energy, rel=1e-12)
        assert is_efficient(lc, g, 10 ** (gap / 10))
    assert loading.levin_campello(g, gap_db=gap, target_bits=500).bits_per_symbol == 500


def test_granularity_max_bits_and_cap_are_respected():
    rng = np.random.default_rng(3)
    g = channel_gains(rng, 64, snr_db=45.0)
    cap = rng.uniform(0.2, 2.0, 64)
    for step in (1, 2, 3):
        table = loading.levin_campello(g, gap_db=9.8, total_energy=64.0, max_bits=10,
                                       granularity=step, cap=cap)
        assert np.all(table.bits % step == 0) and table.bits.max() <= 10
        assert np.all(table.energies <= cap * (1 + 1e-12))
        hh = loading.hughes_hartogs(g, gap_db=9.8, total_energy=64.0, max_bits=10,
                                    granularity=step, cap=cap)
        assert hh.bits_per_symbol == table.bits_per_symbol


@pytest.mark.parametrize("step", [1, 2])
def test_rate_within_one_bit_per_tone(step):
    # With E_k the gap water-filling and C = sum log2(1 + E_k g_k / Gamma):
    # (a) the optimal integer loading's energies are a feasible continuous
    #     point, so its bits B <= C;
    # (b) rounding each log2(1 + E_k g_k / Gamma) down to the step is
    #     feasible with at most E_k, so B >= C - step * n_tones (strictly
    #     greater unless every tone rounds from just below a step).
    rng = np.random.default_rng(5 + step)
    for n in (16, 256):
        g = channel_gains(rng, n)
        gap = loading.snr_gap_db(1e-7)
        continuous = loading.water_filling(g, float(n), gap_db=gap).capacity
        table = loading.levin_campello(g, gap_db=gap, total_energy=float(n), granularity=step)
        assert continuous - step * n < table.bits_per_symbol <= continuous + 1e-9


def test_chow_cioffi_bingham_within_a_small_loss():
    # CCB hits the target rate exactly, spends the budget with equal margin on
    # every tone, and its margin is at most the optimum (Levin-Campello at the
    # same rate) and within 0.5 dB of it (tolerance: common practice, no source).
    rng = np.random.default_rng(21)
    gap = loading.snr_gap_db(1e-7)
    for trial in range(6):
        n = (32, 256)[trial % 2]
        g = channel_gains(rng, n, taps=3 + trial, snr_db=30.0 + 3 * trial)
        for step in (1, 2):
            best = loading.levin_campello(g, gap_db=gap, total_energy=float(n),
                                          granularity=step)
            target = best.bits_per_symbol - step * (n // 8)
            ccb = loading.chow_cioffi_bingham(g, gap_db=gap, total_energy=float(n),
                                              target_bits=target, granularity=step)
            assert ccb.bits_per_symbol == target and np.all(ccb.bits % step == 0)
            assert ccb.total_energy == pytest.approx(n, rel=1e-12)
            margins = ccb.tone_margins_db(g, gap_db=gap)
            loaded = ccb.bits > 0
            np.testing.assert_allclose(margins[loaded], margins[loaded][0], atol=1e-9)
            optimum = loading.levin_campello(g, gap_db=gap, target_bits=target,
                                             granularity=step)
            best_margin = 10 * math.log10(n / optimum.total_energy)
            assert margins[loaded][0] <= best_margin + 1e-9
            assert margins[loaded][0] > best_margin - 0.5


def test_loading_errors():
    g = [10.0, 20.0]
    with pytest.raises(ValueError, match="exactly one"):
        loading.levin_campello(g, gap_db=0.0)
    with pytest.raises(ValueError, match="exactly one"):
        loading.hughes_hartogs(g, gap_db=0.0, total_energy=1.0, target_bits=2)
    with pytest.raises(ValueError, match="target_bits"):
        loading.levin_campello(g, gap_db=0.0, target_bits=31, max_bits=15)
    with pytest.raises(ValueError, match="granularity"):
        loading.levin_campello(g, gap_db=0.0, target_bits=3, granularity=2)
    with pytest.raises(ValueError, match="max_bits"):
        loading.levin_campello(g, gap_db=0.0, total_energy=1.0, max_bits=16)
    with pytest.raises(ValueError, match="max_bits"):
        loading.levin_campello(g, gap_db=0.0, total_energy=1.0, max_bits=1, granularity=2)
    with pytest.raises(ValueError, match="start"):
        loading.levin_campello(g, gap_db=0.0, total_energy=1.0, start=[1, 2, 3])
    with pytest.raises(TypeError, match="gap_db"):
        loading.levin_campello(g, gap_db=None, total_energy=1.0)
    with pytest.raises(ValueError, match="target_bits"):
        loading.chow_cioffi_bingham(g, gap_db=0.0, total_energy=1.0, target_bits=40)


# -- bit tables --------------------------------------------------------------------------------


def test_tone_constellations():
    # BPSK / square Gray QAM of IEEE Std 802.11a-1999 clause 17.3.5.7 for
    # 1, 2, 4, 6 bits (the library's own constellations), rectangular above.
    assert loading.tone_constellation(1) == tonebank.Constellation.bpsk()
    assert loading.tone_constellation(6) == tonebank.Constellation.qam(64)
    for b in range(1, 16):
        c = loading.tone_constellation(b)
        assert c.bits_per_symbol == b
        assert np.mean(np.abs(c.points) ** 2) == pytest.approx(1.0)
    rect = loading.tone_constellation(5).points
    assert np.unique(rect.real.round(9)).size == 8 and np.unique(rect.imag.round(9)).size == 4
    with pytest.raises(ValueError, match="bits"):
        loading.tone_constellation(16)
    # the orders beyond Constellation.qam pickle by bit count
    for b in (3, 5, 14, 15):
        c = loading.tone_constellation(b)
        assert pickle.loads(pickle.dumps(c)) == c


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_table_maps_and_demaps_in_the_documented_order(dtype):
    table = BitTable([2, 0, 3, 1, 2], [1.0, 0.0, 4.0, 0.25, 1.0])
    rng = np.random.default_rng(2)
    bits = rng.integers(0, 2, (3, 4 * table.bits_per_symbol))     # batch 3, 4 symbols
    cells = table.map(bits, dtype=dtype)
    assert cells.shape == (3, 20) and cells.dtype == dtype
    # the order by hand: symbol 1 of row 0, tone 2 takes bits 2..4 of that symbol
    per = table.bits_per_symbol
    expected = 2.0 * loading.tone_constellation(3).map(bits[0, per + 2:per + 5])[0]
    assert complex(cells[0, 5 + 2]) == pytest.approx(expected, rel=1e-6)
    assert np.all(cells.reshape(3, 4, 5)[..., 1] == 0)
    assert np.array_equal(table.demap(cells), bits)
    llr = table.llr(cells, 1e-3)
    assert llr.dtype == (np.float32 if dtype == np.complex64 else np.float64)
    assert np.array_equal(llr < 0, bits == 1)


def test_table_llr_divides_out_gains():
    # An LLR of a scaled tone equals that of the unit constellation with the
    # noise variance scaled the same way (Constellation.llr as reference).
    table = BitTable([4, 4], [9.0, 1.0])
    rng = np.random.default_rng(4)
    y = rng.standard_normal(6) + 1j * rng.standard_normal(6)
    nv = np.array([0.5, 0.2])
    llr = table.llr(y, nv).reshape(3, 2, 4)
    qam = tonebank.Constellation.qam(16)
    ref0 = qam.llr(y[0::2] / 3.0, 0.5 / 9.0)
    np.testing.assert_allclose(llr[:, 0].ravel(), ref0, rtol=1e-12)
    per_cell = np.tile(nv, 3)
    np.testing.assert_allclose(table.llr(y, per_cell), table.llr(y, nv), rtol=1e-12)
    with pytest.raises(ValueError, match="noise_var"):
        table.llr(y, [1.0, 2.0, 3.0])
    with pytest.raises(ValueError, match="noise_var"):
        table.llr(y, 0.0)


def test_table_value_object_and_printing():
    table = BitTable([2, 0, 4])
    assert table.energies.tolist() == [1.0, 0.0, 1.0]
    assert table == BitTable([2, 0, 4], [1, 0, 1]) and hash(table) == hash(BitTable([2, 0, 4]))
    assert pickle.loads(pickle.dumps(BitTable([3, 5], [1.0, 2.0]))) == BitTable([3, 5], [1, 2])
    assert "bits_per_symbol=6" in repr(table)
    assert table.histogram() == {0: 1, 2: 1, 4: 1}
    assert "3 tones, 6 bits per symbol" in table.summary()
    with pytest.raises(ValueError):
        table.bits[0] = 1


def test_table_with_total_energy_adds_equal_margin():
    rng = np.random.default_rng(12)
    g = channel_gains(rng, 64)
    table = loading.levin_campello(g, gap_db=9.0, total_energy=64.0)
    full = table.with_total_energy(64.0)
    assert full.total_energy == pytest.approx(64.0) and np.array_equal(full.bits, table.bits)
    extra = full.tone_margins_db(g, gap_db=9.0)[table.bits > 0]
    np.testing.assert_allclose(extra, 10 * np.log10(64.0 / table.total_energy), atol=1e-9)
    with pytest.raises(ValueError, match="no bits"):
        BitTable([0, 0]).with_total_energy(1.0)


def test_table_errors():
    with pytest.raises(TypeError, match="bits"):
        BitTable([1.5])
    with pytest.raises(ValueError, match="bits"):
        BitTable([[1]])
    with pytest.raises(ValueError, match=r"bits\[1\]"):
        BitTable([1, 16])
    with pytest.raises(ValueError, match="shape"):
        BitTable([1, 2], [1.0])
    with pytest.raises(ValueError, match=r"energies\[0\]"):
        BitTable([1, 2], [0.0, 1.0])
    with pytest.raises(ValueError, match=r"energies\[1\]"):
        BitTable([1, 0], [1.0, 1.0])
    table = BitTable([2, 1])
    with pytest.raises(ValueError, match="pad with 1"):
        table.map([0, 1, 1, 0, 1])
    with pytest.raises(ValueError, match="only 0 and 1|0 and 1"):
        table.map([0, 1, 2])
    with pytest.raises(TypeError, match="dtype"):
        table.map([0, 1, 1], dtype=np.float64)
    with pytest.raises(TypeError, match="dtype"):
        table.map([0, 1, 1], dtype="no such type")
    with pytest.raises(ValueError, match="no bits"):
        BitTable([0, 0]).map([1])
    with pytest.raises(ValueError, match="cells"):
        table.demap(np.zeros(3))


# -- the loaded carrier plan ----------------------------------------------------------------------


def test_plan_carries_a_table():
    base = CarrierPlan(16, data=[-3, -2, 2, 3], pilots=[-1, 1], cp_length=4)
    table = BitTable([1, 2, 0, 4], [1.0, 2.0, 0.0, 0.5])
    plan = base.replace(loading=table)
    assert plan.loading is table and base.loading is None
    assert plan != base and plan == base.replace(loading=BitTable([1, 2, 0, 4], [1, 2, 0, 0.5]))
    assert "loading=7 bits/symbol" in repr(plan)
    assert plan.replace(cp_length=8).loading is table
    assert plan.replace(data=[-3, 3]).loading is None
    rng = np.random.default_rng(8)
    bits = rng.integers(0, 2, 5 * 7)
    grid = plan.place_bits(bits)
    assert np.array_equal(grid, plan.place(table.map(bits)))
    assert np.all(grid[:, plan.pilot_bins] == 1)
    data, _ = plan.take(grid)
    assert np.array_equal(plan.llr(data, 1e-2) < 0, bits == 1)
    # the complex path is unchanged
    values = np.arange(8) + 1j
    assert np.array_equal(plan.place(values), base.place(values))
    assert pickle.loads(pickle.dumps(plan)) == plan


def test_plan_loading_errors():
    base = CarrierPlan(16, data=[-3, -2, 2, 3])
    with pytest.raises(ValueError, match="n_data=4"):
        base.replace(loading=BitTable([1, 2]))
    with pytest.raises(TypeError, match="loading"):
        base.replace(loading=[1, 2, 3, 4])
    with pytest.raises(ValueError, match="loaded plan"):
        base.place_bits([0, 1])
    with pytest.raises(ValueError, match="loaded plan"):
        base.llr(np.zeros(4), 1.0)
