"""Tests of tonebank.fixedpoint: the C kernel against the numpy integer model, bit for bit,
and the quantiser and argument checks.

Sources.  The specification of the fixed-point FFT is the integer model
``tonebank._kernel._numpy_fixed`` (its docstring states every operation);
the C kernel (``csrc/tb_fixed.c``) must reproduce its integers, exponents
and saturation counts exactly, so the comparison is equality, not a
tolerance.  (The C kernel is also checked against a long-double DFT in
``csrc/tests/test_fixed.c``.)  Rounding to the nearest code: IEEE 754-2008
clause 4.3.1 (roundTiesToEven) for ``"convergent"``, as ``numpy.rint``
implements it; ``"half_up"`` is ``floor(x + 1/2)`` (the module's own
definition).  The quantisation-noise and saturation/block-floating-point
behaviour are tested elsewhere.

The autouse ``backend`` fixture runs every test on both backends; the
bit-exact tests compare the two backends themselves with
``tonebank.use_backend``, so they run once (under the ``"c"`` parameter,
which the fixture skips where the C kernel is absent).
"""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

import tonebank
from tonebank.fixedpoint import FixedFft, dequantize, quantize, quantized_twiddles

BITS = {"q15": 15, "q31": 31}
DTYPE = {"q15": np.int16, "q31": np.int32}


def _both(fft: FixedFft, x: np.ndarray):
    with tonebank.use_backend("numpy"):
        model = fft(x)
    with tonebank.use_backend("c"):
        kernel = fft(x)
    return model, kernel


def _assert_identical(model, kernel):
    for name, a, b in zip(("values", "exponent", "saturations"), model, kernel):
        assert a.dtype == b.dtype and a.shape == b.shape, name
        np.testing.assert_array_equal(b, a, err_msg=name)


def _codes(rng, fmt, shape, level):
    """Random codes over the whole range shifted down by `level` bits (0: full scale)."""
    f = BITS[fmt]
    hi = 1 << (f - level)
    return rng.integers(-hi, hi, size=shape, endpoint=False).astype(DTYPE[fmt])


def _only_once(backend):
    if backend != "c":
        pytest.skip("compares the two backends itself; runs under the 'c' parameter only")


@settings(max_examples=300)
@given(m=st.integers(1, 12), fmt=st.sampled_from(["q15", "q31"]),
       kind=st.sampled_from(["halve", "none", "block", "shifts"]),
       rounding=st.sampled_from(["half_up", "convergent"]), inverse=st.booleans(),
       batch=st.integers(1, 3), level=st.integers(0, 12), seed=st.integers(0, 2**32 - 1))
def test_c_kernel_equals_integer_model_bit_for_bit(backend, m, fmt, kind, rounding, inverse,
                                                    batch, level, seed):
    _only_once(backend)
    rng = np.random.default_rng(seed)
    n = 1 << m
    schedule = tuple(int(s) for s in rng.integers(0, 3, m)) if kind == "shifts" else kind
    fft = FixedFft(n, fmt=fmt, schedule=schedule, rounding=rounding, inverse=inverse)
    x = _codes(rng, fmt, (batch, n, 2), level)
    _assert_identical(*_both(fft, x))


@pytest.mark.parametrize("fmt", ["q15", "q31"])
@pytest.mark.parametrize("schedule, rounding", [("halve", "half_up"), ("block", "convergent"),
                                                ("none", "convergent")])
def test_c_kernel_equals_integer_model_at_65536(backend, fmt, schedule, rounding):
    _only_once(backend)
    rng = np.random.default_rng(65536)
    fft = FixedFft(65536, fmt=fmt, schedule=schedule, rounding=rounding)
    x = _codes(rng, fmt, (1, 65536, 2), 2)
    model, kernel = _both(fft, x)
    _assert_identical(model, kernel)
    if schedule == "none":
        assert model.saturations[0] > 0        # the overflow path is exercised


@pytest.mark.parametrize("fmt", ["q15", "q31"])
@pytest.mark.parametrize("schedule", ["halve", "none", "block", "shifts"])
@pytest.mark.parametrize("rounding", ["half_up", "convergent"])
def test_c_kernel_equals_integer_model_on_extreme_inputs(backend, fmt, schedule, rounding):
    _only_once(backend)
    n, f = 256, BITS[fmt]
    if schedule == "shifts":
        schedule = (2, 0, 1, 0, 2, 1, 0, 1)
    fft = FixedFft(n, fmt=fmt, schedule=schedule, rounding=rounding)
    x = np.zeros((5, n, 2), dtype=DTYPE[fmt])
    x[0] = -(1 << f)                        # the most negative code everywhere
    x[1] = (1 << f) - 1                     # the largest code everywhere
    x[2, 0, 0] = -(1 << f)                  # an impulse
    x[3, :, 0] = np.where(np.arange(n) % 2, (1 << f) - 1, -(1 << f))   # alternating: bin n/2
    x[4, :, 1] = 1                          # one LSB: rounding of tiny values
    _assert_identical(*_both(fft, x))


def test_c_kernel_keeps_leading_shape_and_empty_batches(backend):
    _only_once(backend)
    fft = FixedFft(32, fmt="q31", schedule="block")
    x = _codes(np.random.default_rng(3), "q31", (2, 3, 32, 2), 0)
    model, kernel = _both(fft, x)
    _assert_identical(model, kernel)
    assert kernel.values.shape == (2, 3, 32, 2) and kernel.exponent.shape == (2, 3)
    model, kernel = _both(fft, x[:0])
    _assert_identical(model, kernel)
    assert kernel.values.shape == (0, 3, 32, 2)
    assert [s.shape for s in fft.stages(x[:0])] == [(0, 3, 32, 2)] * 5


def test_c_kernel_accepts_wider_integer_codes_that_fit(backend):
    # int64 codes inside the Q15 range are taken as they are
    fft = FixedFft(8)
    x = np.arange(16, dtype=np.int64).reshape(8, 2) * 1000
    r = fft(x)
    np.testing.assert_array_equal(r.values, fft(x.astype(np.int16)).values)


# ---- quantize / dequantize ---------------------------------------------------------------

@pytest.mark.parametrize("fmt", ["q15", "q31"])
@pytest.mark.parametrize("rounding", ["half_up", "convergent"])
def test_codes_survive_dequantize_then_quantize(fmt, rounding):
    f = BITS[fmt]
    rng = np.random.default_rng(7)
    codes = rng.integers(-(1 << f), 1 << f, size=(64, 2)).astype(DTYPE[fmt])
    codes[0] = [-(1 << f), (1 << f) - 1]
    back, clipped = quantize(dequantize(codes, fmt), fmt, rounding=rounding)
    assert back.dtype == DTYPE[fmt] and clipped == 0
    np.testing.assert_array_equal(back, codes)


@pytest.mark.parametrize("fmt", ["q15", "q31"])
def test_quantize_is_within_half_an_lsb(fmt):
    # Rounding to nearest: error <= 2**-(f+1) per component (IEEE 754-2008, 4.3.1).
    f = BITS[fmt]
    rng = np.random.default_rng(11)
    v = (rng.uniform(-0.99, 0.99, 500) + 1j * rng.uniform(-0.99, 0.99, 500)) * 0.5
    codes, clipped = quantize(v, fmt, scale=2.0)
    err = dequantize(codes, fmt, scale=2.0) - v
    assert clipped == 0
    assert np.max(np.abs(err.real)) <= 2.0 ** -(f + 1) / 2.0 * (1 + 1e-9)
    assert np.max(np.abs(err.imag)) <= 2.0 ** -(f + 1) / 2.0 * (1 + 1e-9)


def test_quantize_ties_and_saturation():
    lsb = 2.0 ** -15
    ties = np.array([0.5, 1.5, 2.5, -0.5, -1.5]) * lsb
    # ties to even (IEEE 754-2008 roundTiesToEven, as numpy.rint)
    conv, _ = quantize(ties, "q15", rounding="convergent")
    assert conv[:, 0].tolist() == [0, 2, 2, 0, -2]
    # half up: floor(x + 1/2)
    up, _ = quantize(ties, "q15", rounding="half_up")
    assert up[:, 0].tolist() == [1, 2, 3, 0, -1]
    codes, clipped = quantize([1.0 + 1.0j, -1.0 - 1.0j, 2.0], "q15")
    assert codes.tolist() == [[32767, 32767], [-32768, -32768], [32767, 0]]
    assert clipped == 3


def test_dequantize_applies_the_exponent_per_transform():
    codes = np.full((2, 4, 2), 16384, dtype=np.int16)
    v = dequantize(codes, "q15", exponent=np.array([0, 3]))
    np.testing.assert_array_equal(v[0], np.full(4, 0.5 + 0.5j))
    np.testing.assert_array_equal(v[1], np.full(4, 4.0 + 4.0j))


def test_quantized_twiddles_are_the_rounded_unit_circle():
    # exp(-2 pi i k / n) rounded to nearest, +1 saturated to 2**15 - 1 (module docstring)
    w = quantized_twiddles(8, "q15")
    assert w.tolist() == [[32767, 0], [23170, -23170], [0, -32768], [-23170, -23170]]
    assert not w.flags.writeable
    wi = quantized_twiddles(8, "q31", inverse=True)
    assert wi[1].tolist() == [1518500250, 1518500250]   # round(2**31 / sqrt 2)


# ---- argument checks ----------------------------------------------------------------------

@pytest.mark.parametrize("n, exc, words", [
    (0, ValueError, ["n", "2..65536", "0"]),
    (3, ValueError, ["n=3", "power of two"]),
    (131072, ValueError, ["n", "65536"]),
    (8.0, TypeError, ["n", "integer"]),
    (True, TypeError, ["n", "integer"]),
])
def test_fixed_fft_rejects_bad_sizes(n, exc, words):
    with pytest.raises(exc) as info:
        FixedFft(n)
    for word in words:
        assert word in str(info.value)
    with pytest.raises(exc):
        quantized_twiddles(n)


@pytest.mark.parametrize("kwargs, exc, words", [
    ({"fmt": "q7"}, ValueError, ["fmt='q7'", "q15", "q31"]),
    ({"fmt": None}, ValueError, ["fmt=None"]),
    ({"schedule": "halves"}, ValueError, ["schedule='halves'", "halve", "block"]),
    ({"schedule": (1, 1)}, ValueError, ["schedule", "3 shifts", "[1, 1]"]),
    ({"schedule": (1, 3, 1)}, ValueError, ["schedule", "0, 1 or 2", "[1, 3, 1]"]),
    ({"schedule": (1, 1.5, 1)}, TypeError, ["schedule", "integer"]),
    ({"schedule": (1, True, 1)}, TypeError, ["schedule", "integer"]),
    ({"schedule": 4}, TypeError, ["schedule", "4"]),
    ({"rounding": "nearest"}, ValueError, ["rounding='nearest'", "half_up", "convergent"]),
    ({"inverse": "yes"}, TypeError, ["inverse", "'yes'"]),
])
def test_fixed_fft_rejects_bad_configurations(kwargs, exc, words):
    with pytest.raises(exc) as info:
        FixedFft(8, **kwargs)
    for word in words:
        assert word in str(info.value)


def test_fixed_fft_rejects_bad_inputs():
    fft = FixedFft(8, fmt="q15")
    with pytest.raises(TypeError, match=r"x must hold q15 codes .*float64.*quantize"):
        fft(np.zeros((8, 2)))
    with pytest.raises(ValueError, match=r"x must have shape \(\.\.\., 8, 2\), got \(4, 2\)"):
        fft(np.zeros((4, 2), dtype=np.int16))
    with pytest.raises(ValueError, match=r"x must have shape .*got \(8,\)"):
        fft(np.zeros(8, dtype=np.int16))
    with pytest.raises(ValueError, match=r"outside the q15 range \[-32768, 32767\]"):
        fft(np.full((8, 2), 40000, dtype=np.int32))
    with pytest.raises(ValueError, match=r"outside the q31 range"):
        FixedFft(8, fmt="q31")(np.full((8, 2), -(2**31) - 1, dtype=np.int64))


def test_quantize_and_dequantize_reject_bad_arguments():
    with pytest.raises(ValueError, match="fmt='q16'"):
        quantize([0.1], "q16")
    with pytest.raises(ValueError, match="rounding='up'"):
        quantize([0.1], rounding="up")
    with pytest.raises(ValueError, match="NaN or infinity"):
        quantize([np.nan])
    for scale in (0.0, -1.0, np.inf, np.nan):
        with pytest.raises(ValueError, match="scale must be finite and > 0"):
            quantize([0.1], scale=scale)
        with pytest.raises(ValueError, match="scale must be finite and > 0"):
            dequantize([[1, 2]], scale=scale)
    with pytest.raises(TypeError, match="values must be numeric, got dtype <U"):
        quantize(["a"])
    with pytest.raises(TypeError, match="codes must be integers, got dtype float64"):
        dequantize([[0.5, 0.5]])
    with pytest.raises(ValueError, match=r"last axis of 2 \(re, im\), got shape \(2, 3\)"):
        dequantize(np.zeros((2, 3), dtype=np.int16))
    with pytest.raises(ValueError, match="fmt='Q15'"):
        dequantize([[1, 2]], "Q15")
    with pytest.raises(ValueError, match="fmt='q8'"):
        quantized_twiddles(8, "q8")


@pytest.mark.parametrize("m", range(13, 16))
def test_c_kernel_equals_integer_model_at_the_sizes_hypothesis_leaves_out(backend, m):
    # Hypothesis draws n = 2 .. 4096 and one test covers 65536; these are the rest
    # of the supported sizes, every schedule kind once each.
    _only_once(backend)
    rng = np.random.default_rng(m)
    for fmt, schedule in (("q15", "halve"), ("q31", "block"), ("q15", "none"),
                          ("q31", tuple(int(s) for s in rng.integers(0, 3, m)))):
        fft = FixedFft(1 << m, fmt=fmt, schedule=schedule, rounding="convergent")
        _assert_identical(*_both(fft, _codes(rng, fmt, (1, 1 << m, 2), 1)))
