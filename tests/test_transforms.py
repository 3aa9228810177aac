"""tonebank.fft against numpy.fft, on both backends.

Outside references:
- numpy.fft (a general-purpose reference library) for every value check;
- Parseval's relation and linearity of the DFT (Oppenheim & Schafer,
  Discrete-Time Signal Processing, the table of DFT properties; from memory).

Tolerances: relative to the largest reference magnitude, 1e-12 for
complex128 and 1e-5 for complex64 (the house tolerances of the design
notes; common practice, no source).
"""

import contextvars
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest
from hypothesis import given, strategies as st

import tonebank

TOL = {np.complex128: 1e-12, np.complex64: 1e-5}

# 5-smooth sizes (C kernel) spanning every radix mix, plus n = 1.
SMOOTH = [1, 2, 3, 4, 5, 6, 8, 9, 10, 12, 15, 16, 20, 25, 27, 30, 32, 45, 48, 60, 64,
          75, 81, 96, 100, 125, 128, 135, 243, 256, 360, 480, 500, 625, 720, 1000,
          1024, 1152, 1536, 2048, 2187, 3125, 4096, 6000, 8192, 15625, 32768, 65536]
# Sizes with a prime factor above 5: the C backend hands them to numpy.
ROUGH = [7, 11, 14, 97, 154, 1009]


def _all_smooth(limit):
    return sorted(2**a * 3**b * 5**c for a in range(21) for b in range(14) for c in range(9)
                  if 2**a * 3**b * 5**c <= limit)


def _signal(rng, shape, dtype):
    return (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)).astype(dtype)


def _reference(x, axis=-1, inverse=False, norm=None):
    x = x.astype(np.complex128)
    return (np.fft.ifft if inverse else np.fft.fft)(x, axis=axis, norm=norm)


def _assert_close(got, ref, dtype):
    assert got.dtype == np.dtype(dtype)
    scale = max(np.max(np.abs(ref)), 1e-300) if ref.size else 1.0
    err = np.max(np.abs(got - ref)) / scale if ref.size else 0.0
    assert err <= TOL[dtype], f"relative error {err:.3e} > {TOL[dtype]:.0e}"


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
@pytest.mark.parametrize("n", SMOOTH + ROUGH)
def test_matches_numpy_both_directions(n, dtype):
    rng = np.random.default_rng(n)
    x = _signal(rng, (3, n), dtype)
    _assert_close(tonebank.fft(x), _reference(x), dtype)
    _assert_close(tonebank.fft(x, inverse=True), _reference(x, inverse=True), dtype)


@pytest.mark.parametrize("norm", [None, "backward", "ortho", "forward"])
@pytest.mark.parametrize("inverse", [False, True])
def test_norm_meanings_follow_numpy(norm, inverse):
    rng = np.random.default_rng(1)
    for n in (60, 97):
        x = _signal(rng, (2, n), np.complex128)
        got = tonebank.fft(x, inverse=inverse, norm=norm)
        _assert_close(got, _reference(x, inverse=inverse, norm=norm), np.complex128)


@pytest.mark.parametrize("axis", [0, 1, 2, -1, -2, -3])
def test_any_axis_of_a_batch(axis):
    rng = np.random.default_rng(2)
    x = _signal(rng, (4, 12, 10), np.complex128)
    _assert_close(tonebank.fft(x, axis), _reference(x, axis=axis), np.complex128)
    _assert_close(tonebank.fft(x, axis=axis, inverse=True),
                  _reference(x, axis=axis, inverse=True), np.complex128)


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_strided_and_reversed_views(dtype):
    rng = np.random.default_rng(3)
    base = _signal(rng, (6, 7, 128), dtype)
    views = {
        "every other sample": base[..., ::2],
        "reversed samples": base[..., ::-1],
        "reversed rows": base[::-1, :, :64],
        "non-collapsible batch": base[::2, ::3, 3:67],
        "transposed": np.swapaxes(base[:, 0, :64].reshape(6, 8, 8), 1, 2),
    }
    for v in views.values():
        _assert_close(tonebank.fft(v), _reference(v), dtype)
        _assert_close(tonebank.fft(v, inverse=True), _reference(v, inverse=True), dtype)


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_in_place_and_out_argument(dtype):
    rng = np.random.default_rng(4)
    x = _signal(rng, (5, 256), dtype)
    ref = _reference(x)
    y = x.copy()
    got = tonebank.fft(y, out=y)
    assert got is y
    _assert_close(y, ref, dtype)
    # In place on a strided view leaves the other elements alone.
    z = np.zeros((5, 512), dtype)
    z[:, ::2] = x
    tonebank.fft(z[:, ::2], out=z[:, ::2])
    _assert_close(z[:, ::2], ref, dtype)
    assert not np.any(z[:, 1::2])
    # A separate, strided out array.
    out = np.empty((5, 512), dtype)[:, ::2]
    assert tonebank.fft(x, out=out) is out
    _assert_close(out, ref, dtype)


def test_partially_overlapping_out_is_computed_from_the_original_input():
    rng = np.random.default_rng(5)
    buf = _signal(rng, 65, np.complex128)
    x = buf[:64].copy()
    tonebank.fft(buf[:64], out=buf[1:])
    _assert_close(buf[1:], _reference(x), np.complex128)


def test_parseval_relation():
    # sum |x|^2 = (1/n) sum |X|^2 (Parseval's relation for the DFT; from memory).
    rng = np.random.default_rng(6)
    for n in (64, 960, 4096, 97):
        x = _signal(rng, n, np.complex128)
        X = tonebank.fft(x)
        np.testing.assert_allclose(np.sum(np.abs(X) ** 2) / n, np.sum(np.abs(x) ** 2),
                                   rtol=1e-12)
        # With "ortho" the transform is unitary: energy is kept exactly.
        Xo = tonebank.fft(x, norm="ortho")
        np.testing.assert_allclose(np.sum(np.abs(Xo) ** 2), np.sum(np.abs(x) ** 2),
                                   rtol=1e-12)


def test_linearity():
    # DFT{a x + b y} = a DFT{x} + b DFT{y} (linearity of the DFT; from memory).
    rng = np.random.default_rng(7)
    x, y = _signal(rng, (2, 2, 1000), np.complex128)
    a, b = 0.3 - 1.1j, -2.0 + 0.5j
    lhs = tonebank.fft(a * x + b * y)
    rhs = a * tonebank.fft(x) + b * tonebank.fft(y)
    np.testing.assert_allclose(lhs, rhs, rtol=0, atol=1e-12 * np.max(np.abs(rhs)))


def test_round_trip_is_identity():
    rng = np.random.default_rng(8)
    for n in (1, 2, 64, 3125, 4096, 11):
        x = _signal(rng, (3, n), np.complex128)
        back = tonebank.fft(tonebank.fft(x), inverse=True)
        np.testing.assert_allclose(back, x, rtol=0, atol=1e-12 * max(1, np.max(np.abs(x))))


@given(
    n=st.sampled_from(_all_smooth(8192)),
    batch=st.integers(min_value=0, max_value=5),
    single=st.booleans(),
    inverse=st.booleans(),
    norm=st.sampled_from([None, "ortho", "forward"]),
    seed=st.integers(min_value=0, max_value=2**32 - 1),
)
def test_property_any_supported_size(n, batch, single, inverse, norm, seed):
    dtype = np.complex64 if single else np.complex128
    x = _signal(np.random.default_rng(seed), (batch, n), dtype)
    got = tonebank.fft(x, inverse=inverse, norm=norm)
    assert got.shape == x.shape
    _assert_close(got, _reference(x, inverse=inverse, norm=norm), dtype)


@pytest.mark.parametrize("n", [2**20, 3 * 2**18])
def test_large_sizes(n):
    rng = np.random.default_rng(9)
    x = _signal(rng, n, np.complex128)
    _assert_close(tonebank.fft(x), _reference(x), np.complex128)


def test_backends_agree():
    if not tonebank.backend_info()["c_available"]:
        pytest.skip("C kernel unavailable")
    rng = np.random.default_rng(10)
    for dtype in (np.complex128, np.complex64):
        for n in (64, 1000, 4096, 97):
            x = _signal(rng, (4, n), dtype)
            with tonebank.use_backend("c"):
                c = tonebank.fft(x)
            with tonebank.use_backend("numpy"):
                p = tonebank.fft(x)
            assert c.dtype == p.dtype == np.dtype(dtype)
            _assert_close(c, p.astype(np.complex128), dtype)


def test_unsupported_sizes_fall_back_and_are_reported(backend):
    rng = np.random.default_rng(11)
    x = _signal(rng, (2, 1009), np.complex128)
    _assert_close(tonebank.fft(x), _reference(x), np.complex128)
    info = tonebank.backend_info()
    if backend == "c":
        assert 1009 in info["numpy_fallback_sizes"]
        assert "numpy" in info["fft_sizes"]


@pytest.mark.parametrize("dtype, expected", [
    (np.complex128, np.complex128), (np.complex64, np.complex64),
    (np.float64, np.complex128), (np.float32, np.complex64), (np.float16, np.complex64),
    (np.int16, np.complex128), (np.uint8, np.complex128), (np.bool_, np.complex128),
])
def test_result_dtype(dtype, expected):
    x = np.arange(16).astype(dtype)
    got = tonebank.fft(x)
    assert got.dtype == np.dtype(expected)
    _assert_close(got, _reference(x.astype(np.complex128)), expected)


def test_array_like_input():
    got = tonebank.fft([1, 0, 0, 0])
    np.testing.assert_array_equal(got, np.ones(4, np.complex128))


def test_nan_and_inf_propagate_without_crash():
    rng = np.random.default_rng(12)
    for dtype in (np.complex128, np.complex64):
        x = _signal(rng, (3, 64), dtype)
        x[0, 5] = np.nan
        x[1, 9] = np.inf
        # No RuntimeWarning on either backend (pytest turns warnings into errors).
        got = tonebank.fft(x)
        assert np.all(np.isnan(got[0]))
        assert not np.any(np.isfinite(got[1]))
        _assert_close(got[2], _reference(x[2]), dtype)


def test_concurrent_use_from_threads():
    rng = np.random.default_rng(13)
    cases = [_signal(rng, (8, n), dt) for n in (64, 256, 1024, 4096, 97)
             for dt in (np.complex128, np.complex64)]
    refs = [_reference(x) for x in cases]

    def work(i):
        x = cases[i % len(cases)]
        return i % len(cases), tonebank.fft(x)

    # Each task runs in a copy of this context, so the backend chosen by
    # the fixture applies inside the worker threads too.
    ctx = contextvars.copy_context()
    with ThreadPoolExecutor(max_workers=4) as pool:
        futures = [pool.submit(ctx.copy().run, work, i) for i in range(200)]
        for f in futures:
            i, got = f.result()
            _assert_close(got, refs[i], cases[i].dtype.type)


@pytest.mark.parametrize("bad", [np.array(["a", "b"]), np.arange(4, dtype=object),
                                 np.zeros(4, np.clongdouble), np.zeros(4, np.longdouble)])
def test_rejects_unsupported_dtypes(bad):
    if bad.dtype in (np.dtype(np.complex128), np.dtype(np.float64)):
        pytest.skip("long double is double on this platform")
    with pytest.raises(TypeError, match="x has dtype"):
        tonebank.fft(bad)


def test_rejects_bad_shapes_axes_and_norms():
    with pytest.raises(ValueError, match="x must have at least one dimension"):
        tonebank.fft(np.complex128(1))
    with pytest.raises(ValueError, match="x has length 0 along axis 1"):
        tonebank.fft(np.zeros((3, 0), complex), axis=1)
    with pytest.raises(ValueError, match="axis=2 is out of range"):
        tonebank.fft(np.zeros((3, 4), complex), axis=2)
    with pytest.raises(TypeError, match="axis must be an integer"):
        tonebank.fft(np.zeros(4, complex), axis=1.0)
    with pytest.raises(ValueError, match="norm='unitary' is not allowed"):
        tonebank.fft(np.zeros(4, complex), norm="unitary")


def test_rejects_bad_out():
    x = np.zeros((2, 8), np.complex128)
    with pytest.raises(TypeError, match="out must be a numpy.ndarray"):
        tonebank.fft(x, out=[0] * 16)
    with pytest.raises(TypeError, match="out has dtype complex64"):
        tonebank.fft(x, out=np.zeros((2, 8), np.complex64))
    with pytest.raises(ValueError, match=r"out has shape \(8, 2\)"):
        tonebank.fft(x, out=np.zeros((8, 2), np.complex128))
    ro = np.zeros((2, 8), np.complex128)
    ro.flags.writeable = False
    with pytest.raises(ValueError, match="out is read-only"):
        tonebank.fft(x, out=ro)


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_out_checks_hold_once_the_size_is_prepared(dtype):
    # After a first call, fft() takes a prepared shortcut for its common case,
    # also with out=; every out= rule above must still hold on that path.
    rng = np.random.default_rng(21)
    x = _signal(rng, (3, 64), dtype)
    ref = _reference(x)
    tonebank.fft(x)
    out = np.empty_like(x)
    assert tonebank.fft(x, out=out) is out
    _assert_close(out, ref, dtype)
    y = x.copy()
    assert tonebank.fft(y, out=y) is y                     # exact in-place use
    _assert_close(y, ref, dtype)
    buf = _signal(rng, 3 * 64 + 1, dtype)
    src = buf[:192].reshape(3, 64)
    expect = _reference(src.copy())
    tonebank.fft(src, out=buf[1:].reshape(3, 64))          # partial overlap
    _assert_close(buf[1:].reshape(3, 64), expect, dtype)
    strided = np.empty((3, 128), dtype)[:, ::2]
    assert tonebank.fft(x, out=strided) is strided
    _assert_close(strided, ref, dtype)
    other = np.complex64 if dtype == np.complex128 else np.complex128
    with pytest.raises(TypeError, match="out has dtype"):
        tonebank.fft(x, out=np.empty((3, 64), other))
    with pytest.raises(ValueError, match="out has shape"):
        tonebank.fft(x, out=np.empty((64, 3), dtype))
    ro = np.empty_like(x)
    ro.flags.writeable = False
    with pytest.raises(ValueError, match="out is read-only"):
        tonebank.fft(x, out=ro)
    with pytest.raises(TypeError, match="out must be a numpy.ndarray"):
        tonebank.fft(x, out=list(range(192)))


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_small_inputs_of_any_layout_once_the_size_is_prepared(dtype):
    # The prepared shortcut copies small inputs and transforms the copy in
    # place: the input must stay untouched whatever its layout.
    rng = np.random.default_rng(22)
    base = _signal(rng, (4, 32), dtype)
    tonebank.fft(base[0, :16])                       # prepare n = 16
    strided = base[0, ::2]                           # 16 values, stride 2
    readonly = base[1, :16].copy()
    readonly.flags.writeable = False
    raw = np.zeros(16 * readonly.itemsize + 1, np.uint8)[1:]
    misaligned = raw.view(dtype)                     # not aligned to its scalar
    misaligned[:] = base[2, :16]
    for x in (strided, readonly, misaligned, base[:, :16].T[:16, :4].T):
        before = x.copy()
        _assert_close(tonebank.fft(x), _reference(before), dtype)
        np.testing.assert_array_equal(x, before)


def test_zero_rows_batch():
    got = tonebank.fft(np.zeros((0, 64), np.complex64))
    assert got.shape == (0, 64) and got.dtype == np.complex64


# -- FftPlan: the prepared form, checked against numpy.fft as above ----------

@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
@pytest.mark.parametrize("n", [1, 64, 960, 4096, 97])
@pytest.mark.parametrize("inverse", [False, True])
@pytest.mark.parametrize("norm", [None, "ortho", "forward"])
def test_plan_matches_numpy(n, dtype, inverse, norm):
    rng = np.random.default_rng(n)
    plan = tonebank.FftPlan(n, dtype=dtype, inverse=inverse, norm=norm)
    for x in (_signal(rng, n, dtype), _signal(rng, (3, 2, n), dtype),
              _signal(rng, (4, 2 * n), dtype)[:, ::2]):
        got = plan(x)
        _assert_close(got, _reference(x, inverse=inverse, norm=norm), dtype)


def test_plan_out_in_place_and_overlap():
    rng = np.random.default_rng(20)
    plan = tonebank.FftPlan(64)
    x = _signal(rng, (2, 64), np.complex128)
    ref = _reference(x)
    y = x.copy()
    assert plan(y, out=y) is y
    _assert_close(y, ref, np.complex128)
    buf = np.concatenate([x[0], [0]])
    plan(buf[:64], out=buf[1:])
    _assert_close(buf[1:], ref[0], np.complex128)


def test_plan_accepts_real_input_of_its_precision():
    plan = tonebank.FftPlan(8, dtype=np.complex64)
    got = plan(np.ones(8, np.float32))
    assert got.dtype == np.complex64
    _assert_close(got, _reference(np.ones(8)), np.complex64)


def test_plan_records_its_backend_and_is_immutable(backend):
    plan = tonebank.FftPlan(16)
    assert plan.backend == backend
    assert (plan.n, plan.dtype, plan.inverse, plan.norm) == (16, np.complex128, False, None)
    assert "FftPlan(16" in repr(plan)
    with pytest.raises(AttributeError, match="immutable"):
        plan.n = 32


def test_plan_rejects_bad_arguments():
    with pytest.raises(TypeError, match="n must be an integer"):
        tonebank.FftPlan(64.0)
    with pytest.raises(ValueError, match="n=0 is not allowed"):
        tonebank.FftPlan(0)
    with pytest.raises(TypeError, match="dtype=.* is not allowed"):
        tonebank.FftPlan(64, dtype=np.float64)
    with pytest.raises(TypeError, match="dtype=.* is not allowed"):
        tonebank.FftPlan(64, dtype="nonsense")
    with pytest.raises(ValueError, match="norm='both' is not allowed"):
        tonebank.FftPlan(64, norm="both")
    plan = tonebank.FftPlan(64)
    with pytest.raises(ValueError, match=r"x has shape \(32,\); this plan transforms"):
        plan(np.zeros(32, complex))
    with pytest.raises(ValueError, match=r"x has shape \(\)"):
        plan(np.complex128(1))
    with pytest.raises(TypeError, match="x has dtype complex64; this plan takes complex128"):
        plan(np.zeros(64, np.complex64))
    with pytest.raises(TypeError, match="out has dtype"):
        plan(np.zeros(64, complex), out=np.zeros(64, np.complex64))


@pytest.mark.parametrize("dtype", [np.complex128, np.complex64])
def test_misaligned_views_are_handled(dtype):
    # Arrays viewed at an odd byte offset of a buffer are legal numpy arrays
    # that the kernel cannot address directly; the result must not change.
    rng = np.random.default_rng(21)
    x = _signal(rng, (3, 64), dtype)
    raw = bytearray(x.nbytes + 1)
    mis = np.frombuffer(raw, dtype, count=x.size, offset=1).reshape(x.shape)
    mis[...] = x
    assert not mis.flags.aligned
    _assert_close(tonebank.fft(mis), _reference(x), dtype)
    out_raw = bytearray(x.nbytes + 1)
    out = np.frombuffer(out_raw, dtype, count=x.size, offset=1).reshape(x.shape)
    assert tonebank.fft(x, out=out) is out
    _assert_close(out, _reference(x), dtype)


@pytest.mark.parametrize("dtype", [np.complex64, np.complex128])
def test_repeated_calls_take_the_prepared_path_with_the_same_results(dtype):
    # The second and later calls of fft(x) with default arguments go through
    # a prepared runner (and FftPlan(x) through its allocating path): every
    # layout must still give numpy's numbers.
    rng = np.random.default_rng(11)
    base = (rng.standard_normal((6, 64)) + 1j * rng.standard_normal((6, 64))).astype(dtype)
    plan = tonebank.FftPlan(64, dtype=dtype)
    read_only = base.copy()
    read_only.flags.writeable = False
    layouts = [base[0], base, base[::2], base[:, ::-1].copy()[:, ::-1], base[:0],
               np.asfortranarray(base), read_only]
    for x in layouts + layouts:
        want = np.fft.fft(x.astype(np.complex128), axis=-1)
        for got in (tonebank.fft(x), plan(x)):
            assert got.dtype == dtype and got.shape == x.shape
            _assert_close(got, want, dtype)
    for _ in range(2):
        _assert_close(tonebank.fft(base[1], inverse=True),
                      np.fft.ifft(base[1].astype(np.complex128)), dtype)


def test_plan_cache_is_bounded(backend):
    # Sweeping over many sizes must not keep a plan for every one of them;
    # results stay right after older plans are dropped.
    if backend != "c":
        pytest.skip("the plan cache belongs to the C backend")
    from tonebank._kernel import _c
    sizes = [2 ** a * 3 ** b * 5 ** c for a in range(6) for b in range(4) for c in range(3)]
    assert len(sizes) > _c._PLANS_MAX / 2
    rng = np.random.default_rng(5)
    for dtype in (np.complex64, np.complex128):
        for n in sizes:
            x = _signal(rng, (2, n), dtype)
            _assert_close(tonebank.fft(x, norm="ortho"), _reference(x, norm="ortho"), dtype)
    assert len(_c._plans) <= _c._PLANS_MAX
