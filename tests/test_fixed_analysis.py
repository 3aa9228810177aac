"""Fixed-point FFT noise, saturation and block floating point, and the fixed CP-OFDM chain.

Quantisation noise growth: with a 1/2 scaling at every radix-2 stage the
output noise-to-signal ratio grows about 3 dB (half a bit) per doubling of
N (A. V. Oppenheim and R. W. Schafer, Discrete-Time Signal Processing,
finite-register-length effects in FFT algorithms; from memory), measured
over N = 64 ... 4096.  The level is checked against the noise model
derived in tonebank.fixed_analysis (its module notes), the reference being
numpy.fft.fft of the same input codes in float64.  Seeds are fixed; 16
transforms of N Gaussian values give an SQNR estimate whose standard error
is below 0.1 dB at N = 64 (2048 complex noise samples), so the stated
tolerances (0.3 dB on the slope, 1 dB on the level) cannot be reached by
chance.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import tonebank
from tonebank.fixed_analysis import (evm_floor_db, fft_sqnr_db, predicted_sqnr_db,
                                     recommend_schedule)
from tonebank.fixed_ofdm import FixedCpOfdm
from tonebank.fixedpoint import FixedFft, dequantize, quantize

SIZES = [64, 128, 256, 512, 1024, 2048, 4096]


@pytest.mark.parametrize("rounding, tolerance", [("convergent", 0.3), ("half_up", 0.5)])
def test_noise_grows_half_a_bit_per_doubling_with_halving(rounding, tolerance):
    sqnr = [fft_sqnr_db(n, rounding=rounding).sqnr_db for n in SIZES]
    slope = np.polyfit(np.log2(SIZES), sqnr, 1)[0]
    assert slope == pytest.approx(-10 * math.log10(2), abs=tolerance), sqnr


def test_measured_sqnr_meets_the_noise_model():
    for n in SIZES:
        measured = fft_sqnr_db(n, rounding="convergent").sqnr_db
        assert measured == pytest.approx(predicted_sqnr_db(n), abs=1.0), n
        # Half-up rounding adds its bias on top (a few dB, never less noise).
        assert fft_sqnr_db(n, rounding="half_up").sqnr_db < measured
    # Q31: sixteen more bits, 96 dB more (6.02 dB per bit).
    q31 = fft_sqnr_db(256, fmt="q31", rounding="convergent").sqnr_db
    assert q31 == pytest.approx(predicted_sqnr_db(256, fmt="q31"), abs=1.0)
    assert predicted_sqnr_db(256, fmt="q31") - predicted_sqnr_db(256) == pytest.approx(
        16 * 20 * math.log10(2))


def test_sqnr_of_samples_of_your_own():
    # A unit-energy 64-QAM OFDM symbol block scaled to the level a port would see:
    # the time samples of tonebank.CpOfdm (outside reference for their statistics:
    # they are the unitary inverse DFT of the grid, numpy.fft in the CpOfdm tests).
    plan = tonebank.CarrierPlan.centered(256, 192)
    qam = tonebank.Constellation.qam(64)
    rng = np.random.default_rng(2)
    grid = plan.place(qam.map(rng.integers(0, 2, 8 * 192 * 6)))
    x = 0.25 * tonebank.CpOfdm(plan).synthesize(grid).reshape(8, 256)
    own = fft_sqnr_db(256, schedule="block", samples=x)
    assert own.saturations == 0 and own.sqnr_db > 50
    with pytest.raises(ValueError, match="samples"):
        fft_sqnr_db(256, samples=x[:, :100])


def test_no_scaling_overflows_a_full_scale_input_and_counts_it():
    rng = np.random.default_rng(3)
    codes = np.where(rng.integers(0, 2, (4, 256, 2)) == 1, 32767, -32768).astype(np.int16)
    r = FixedFft(256, schedule="none")(codes)
    assert np.all(r.saturations > 0) and np.all(r.exponent == 0)
    # The same input with block floating point: no saturation, a large exponent.
    b = FixedFft(256, schedule="block")(codes)
    assert np.all(b.saturations == 0) and np.all(b.exponent >= 8)


@settings(max_examples=40, deadline=None)
@given(log2n=st.integers(1, 11), seed=st.integers(0, 2**32 - 1),
       fmt=st.sampled_from(["q15", "q31"]), rounding=st.sampled_from(["half_up", "convergent"]),
       level=st.sampled_from([1.0, 0.5, 1e-3]))
def test_block_floating_point_never_saturates_and_its_exponent_scales_right(
        log2n, seed, fmt, rounding, level):
    n = 1 << log2n
    rng = np.random.default_rng(seed)
    x = level * (rng.uniform(-1, 1, (3, n)) + 1j * rng.uniform(-1, 1, (3, n)))
    codes, _ = quantize(x, fmt, rounding=rounding)
    r = FixedFft(n, fmt=fmt, schedule="block", rounding=rounding)(codes)
    assert np.all(r.saturations == 0)
    # values * 2**exponent is the DFT of the input codes (numpy.fft in float64)
    # up to the rounding noise: an exponent off by one would be a factor of 2.
    got = dequantize(r.values, fmt, exponent=r.exponent)
    ref = np.fft.fft(dequantize(codes, fmt), axis=-1)
    err = np.sqrt(np.sum(np.abs(got - ref) ** 2, axis=-1) / np.sum(np.abs(ref) ** 2, axis=-1))
    assert np.all(err < (3e-2 if fmt == "q15" else 1e-6)), err


def test_float_equivalent_approaches_the_float64_fft_within_the_predicted_sqnr():
    rng = np.random.default_rng(8)
    n = 1024
    x = 10 ** (-12 / 20) * (rng.standard_normal((16, n)) + 1j * rng.standard_normal((16, n))) \
        / math.sqrt(2)
    codes, _ = quantize(x, rounding="convergent")
    r = FixedFft(n, rounding="convergent")(codes)
    got = dequantize(r.values, exponent=r.exponent)
    ref = np.fft.fft(dequantize(codes))
    sqnr = 10 * math.log10(np.sum(np.abs(ref) ** 2) / np.sum(np.abs(got - ref) ** 2))
    assert sqnr >= predicted_sqnr_db(n) - 1.0


def test_fixed_chain_evm_floor_by_format_and_schedule():
    plan = tonebank.CarrierPlan.centered(256, 200, cp_length=32)
    qam = tonebank.Constellation.qam(256)
    q15, sat = evm_floor_db(plan, qam)
    assert sat == 0 and -60 < q15 < -40
    q31, _ = evm_floor_db(plan, qam, fmt="q31")
    # Sixteen more bits: about 96 dB lower (6.02 dB per bit), give or take the schedules.
    assert q31 < q15 - 80
    # Halving in both transforms of a 4096-point plan leaves little of the signal.
    big = tonebank.CarrierPlan.centered(4096, 3200, cp_length=256)
    halved, _ = evm_floor_db(big, qam, ifft_schedule="halve", n_symbols=2)
    assert halved > -20
    none, clipped = evm_floor_db(plan, qam, ifft_schedule="none", n_symbols=2)
    assert clipped > 0 and none > -10


def test_chain_intermediates_are_consistent():
    plan = tonebank.CarrierPlan.centered(64, 48, cp_length=[16, 8])
    qam = tonebank.Constellation.qam(16)
    rng = np.random.default_rng(1)
    grid = plan.place(qam.map(rng.integers(0, 2, 3 * 48 * 4)))
    ofdm = FixedCpOfdm(plan)
    chain = ofdm.chain(grid)
    assert chain.samples.shape == (plan.n_samples(3), 2)
    # The prefix is a copy of the end of its symbol's body.
    assert np.array_equal(chain.samples[:16], chain.time_codes[0, -16:])
    assert np.array_equal(chain.samples[16:80], chain.time_codes[0])
    assert np.array_equal(chain.samples[80:88], chain.time_codes[1, -8:])
    # Each stage is the fixed-point FFT of the one before.
    inv = ofdm.ifft(chain.grid_codes)
    assert np.array_equal(inv.values, chain.time_codes)
    assert np.array_equal(inv.exponent, chain.time_exponent)
    assert np.array_equal(ofdm.fft(chain.time_codes).values, chain.rx_codes)


def test_recommendation_meets_its_target():
    plan = tonebank.CarrierPlan.centered(1024, 800, cp_length=64)
    advice = recommend_schedule(plan, tonebank.Constellation.qam(256), target_evm_db=-35.0,
                                n_symbols=2)
    assert advice.best is not None
    first = advice.rows[0]
    assert first[4] and first[2] <= -35.0 and first[3] == 0
    assert all(not row[4] for row in advice.rows if row[2] > -35.0 or row[3] > 0)
    impossible = recommend_schedule(plan, tonebank.Constellation.qam(256),
                                    target_evm_db=-120.0, n_symbols=2)
    assert impossible.best is None


@pytest.mark.parametrize("call, error, match", [
    (lambda: FixedFft(100), ValueError, "power of two"),
    (lambda: FixedFft(64, fmt="q7"), ValueError, "fmt"),
    (lambda: FixedFft(64, schedule="quarter"), ValueError, "schedule"),
    (lambda: FixedFft(64, schedule=[1] * 5), ValueError, "6 shifts"),
    (lambda: FixedFft(64, schedule=[3] * 6), ValueError, "0, 1 or 2"),
    (lambda: FixedFft(64, rounding="down"), ValueError, "rounding"),
    (lambda: FixedFft(8)(np.zeros((8, 2))), TypeError, "codes"),
    (lambda: FixedFft(8)(np.zeros((4, 2), np.int16)), ValueError, "shape"),
    (lambda: FixedFft(8)(np.full((8, 2), 40000)), ValueError, "range"),
    (lambda: quantize([np.nan]), ValueError, "NaN"),
    (lambda: quantize([1.0], scale=0.0), ValueError, "scale"),
    (lambda: dequantize([1, 2, 3]), ValueError, "last axis"),
    (lambda: fft_sqnr_db(64, backoff_db=-3), ValueError, "backoff_db"),
    (lambda: recommend_schedule("plan", None, target_evm_db=-30), TypeError, "plan"),
    (lambda: FixedCpOfdm(tonebank.CarrierPlan.centered(48, 40)), ValueError, "power of two"),
])
def test_bad_arguments_are_named(call, error, match):
    with pytest.raises(error, match=match):
        call()


def test_exported_chain_checks_clean_and_a_corrupted_port_file_is_located(tmp_path):
    # The checker is tonebank.vectors (its own tests compare the files with numpy's
    # little-endian dtypes and zlib.crc32); here: a fixed chain's vectors read back
    # equal to the chain, a copy checks clean, and one changed value is reported
    # at its index.
    from tonebank.vectors import check_vectors, read_vectors
    plan = tonebank.CarrierPlan.centered(64, 48, cp_length=16)
    qam = tonebank.Constellation.qam(64)
    rng = np.random.default_rng(4)
    grid = plan.place(qam.map(rng.integers(0, 2, 3 * 48 * 6)))
    ofdm = FixedCpOfdm(plan, fft_schedule="block")
    ref = tmp_path / "ref"
    manifest = ofdm.export(ref, grid)
    back = read_vectors(ref)
    chain = ofdm.chain(grid)
    assert np.array_equal(back["samples"], chain.samples)
    assert np.array_equal(back["rx_codes"], chain.rx_codes)
    assert [n for n in manifest.names if n.startswith("ifft_stage_")] == [
        f"ifft_stage_{k}" for k in range(1, 7)]
    assert np.array_equal(back["ifft_stage_6"], chain.time_codes)
    port = tmp_path / "port"
    port.mkdir()
    for name in ("samples", "rx_codes"):
        (port / f"{name}.bin").write_bytes((ref / f"{name}.bin").read_bytes())
    assert check_vectors(ref, port, names=["samples", "rx_codes"]).ok
    bad = back["rx_codes"].copy()
    bad[2, 17, 1] += 1                                  # symbol 2, bin 17, imaginary part
    (port / "rx_codes.bin").write_bytes(bad.astype("<i2").tobytes())
    result = check_vectors(ref, port, names=["samples", "rx_codes"])
    assert not result.ok
    first = result["rx_codes"].first
    assert first.index[:2] == (2, 17) and first.part == "im"
    assert int(first.got) == int(first.expected) + 1


def test_quantize_refuses_overflowing_scaled_values_and_bad_scales_by_name():
    with pytest.raises(ValueError, match="infinity"):
        quantize([1e308], scale=1e10)
    with pytest.raises(TypeError, match="scale"):
        quantize([0.5], scale="big")
    with pytest.raises(TypeError, match="exponent"):
        dequantize(np.zeros((4, 2), np.int16), exponent="two")
