"""Channel convolution: a 24-tap tapped delay line over 10^6 samples.

One call filters ``N_SAMPLES`` complex samples through a sample-spaced
24-path profile (delays 0 .. 23 samples, powers falling 0.5 dB per tap)
at 15.36 MHz.  Cases (``extra_info["case"]``):

``time_varying``   maximum Doppler 500 Hz: taps at knots every 480
                   samples, linear in between (the model of
                   ``tonebank.channel.tdl``);
``static``         block fading, constant taps.

Implementations (``extra_info["impl"]``):

``tb_c``            ``TappedDelayLine.filter(x)`` on the C backend: knot taps
                    (sum of sinusoids, numpy) + kernel op ``channel_fir`` (C);
``tb_numpy``        the same call on the numpy backend (the numpy twin);
``kernel_c``        the C kernel op alone, knot taps prepared outside the
                    timed call (time-varying case);
``lfilter``         ``scipy.signal.lfilter(h, [1], x)`` (static case);
``convolve``        ``numpy.convolve(x, h)[:n]`` (static case);
``oaconvolve``      ``scipy.signal.oaconvolve(x, h)[:n]`` (static case,
                    FFT overlap-add).

Every result is checked once, outside the timed call: the static ones
against ``numpy.convolve``, the time-varying ones against the numpy
backend (``TOLERANCE``).  Timings on shared machines are noisy: only
ratios within one run count.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal

import tonebank
from tonebank._kernel import _numpy_channel
from tonebank.channel import DelayProfile, TappedDelayLine

N_SAMPLES = 10 ** 6
N_TAPS = 24
SAMPLE_RATE = 15.36e6
DOPPLER_HZ = 500.0
TOLERANCE = {"complex64": 1e-5, "complex128": 1e-12}
C_AVAILABLE = tonebank.backend_info()["c_available"]


def _profile() -> DelayProfile:
    return DelayProfile(np.arange(N_TAPS) / SAMPLE_RATE, -0.5 * np.arange(N_TAPS))


def _channel(case: str) -> TappedDelayLine:
    doppler = DOPPLER_HZ if case == "time_varying" else 0.0
    return TappedDelayLine(_profile(), SAMPLE_RATE, max_doppler_hz=doppler, rng=2026)


@pytest.fixture(scope="module")
def signal() -> dict:
    rng = np.random.default_rng(7)
    x = rng.standard_normal(N_SAMPLES) + 1j * rng.standard_normal(N_SAMPLES)
    x.flags.writeable = False
    x64 = x.astype(np.complex64)
    x64.flags.writeable = False
    return {"complex128": x, "complex64": x64}


@pytest.fixture(scope="module")
def references(signal) -> dict:
    """Outputs of the numpy backend (time-varying) and numpy.convolve (static)."""
    out = {}
    for dtype, x in signal.items():
        with tonebank.use_backend("numpy"):
            out["time_varying", dtype] = _channel("time_varying").filter(x)
        taps = _channel("static").impulse_response([0])[0]
        out["static", dtype] = np.convolve(x.astype(np.complex128), taps)[:N_SAMPLES]
    return out


def _label(benchmark, impl: str, case: str, dtype: str) -> None:
    benchmark.group = f"channel {case} {dtype} n={N_SAMPLES} taps={N_TAPS}"
    benchmark.extra_info.update(kind="channel", impl=impl, case=case, dtype=dtype,
                                n=N_SAMPLES, taps=N_TAPS)


def _check(result, reference, dtype: str) -> None:
    error = float(np.abs(np.asarray(result) - reference).max() / np.abs(reference).max())
    assert error <= TOLERANCE[dtype], f"relative error {error:.3g} for {dtype}"


CASES = [pytest.param(case, dtype, id=f"{case}-{dtype}")
         for case in ("time_varying", "static") for dtype in ("complex128", "complex64")]


@pytest.mark.parametrize("case, dtype", CASES)
@pytest.mark.parametrize("backend", ["c", "numpy"])
def test_tapped_delay_line(benchmark, signal, references, backend, case, dtype):
    if backend == "c" and not C_AVAILABLE:
        pytest.skip("C kernel unavailable")
    if backend == "numpy" and dtype == "complex64":
        pytest.skip("numpy backend timed in complex128 only (keeps the run short)")
    _label(benchmark, "tb_c" if backend == "c" else "tb_numpy", case, dtype)
    ch = _channel(case)
    x = signal[dtype]
    with tonebank.use_backend(backend):
        ch.filter(x[:1000])
        result = benchmark(ch.filter, x)
    _check(result, references[case, dtype], dtype)


@pytest.mark.parametrize("dtype", ["complex128", "complex64"])
def test_kernel_op_alone(benchmark, signal, references, dtype):
    if not C_AVAILABLE:
        pytest.skip("C kernel unavailable")
    from tonebank._kernel import _c_channel

    _label(benchmark, "kernel_c", "time_varying", dtype)
    ch = _channel("time_varying")
    step = ch.update_interval
    knots = np.arange(0, (N_SAMPLES - 1) // step + 2)
    taps = np.ascontiguousarray(ch._knot_taps(knots), dtype=dtype)
    x = np.ascontiguousarray(signal[dtype][None, :])
    hist = np.zeros((1, N_TAPS - 1), dtype=dtype)
    out = np.empty_like(x)
    benchmark(_c_channel.channel_fir, x, hist, taps, step, 0, out)
    _check(out[0], references["time_varying", dtype], dtype)
    # the numpy twin gives the same numbers from the same knots
    twin = np.empty_like(x)
    _numpy_channel.channel_fir(x, hist, taps, step, 0, twin)
    _check(twin[0], out[0].astype(np.complex128), dtype)


@pytest.mark.parametrize("impl", ["lfilter", "convolve", "oaconvolve"])
def test_static_references(benchmark, signal, references, impl):
    _label(benchmark, impl, "static", "complex128")
    taps = _channel("static").impulse_response([0])[0]
    x = signal["complex128"]
    if impl == "lfilter":
        result = benchmark(scipy.signal.lfilter, taps, [1.0], x)
    elif impl == "convolve":
        result = benchmark(lambda: np.convolve(x, taps)[:N_SAMPLES])
    else:
        result = benchmark(lambda: scipy.signal.oaconvolve(x, taps)[:N_SAMPLES])
    _check(result, references["static", "complex128"], "complex128")
