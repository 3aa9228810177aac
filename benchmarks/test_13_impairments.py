"""Receiver impairments: throughput of each stage over 2^20 samples.

One call passes ``N_SAMPLES`` complex128 samples (2^20; the sampling
clock offset 2^17, it is slower) through one impairment with
``filter``.  Stages (``extra_info["stage"]``) and implementations
(``extra_info["impl"]``):

``cfo``          ``FrequencyOffset`` (``tb``) vs ``x * exp(j 2 pi f n / fs)``
                 in numpy (``numpy_ref``);
``phase_noise``  ``PhaseNoise`` Wiener path (``tb``) and the mask-shaped
                 path of ``PhaseNoise.from_psd`` (``tb_psd``), vs the
                 plain ``x * exp(j cumsum(sigma w))`` (``numpy_ref``);
``iq``           ``IqImbalance`` (``tb``) vs ``mu x + nu conj(x)``
                 (``numpy_ref``);
``timing``       ``TimingOffset(3.3)`` (32-tap windowed sinc through the kernel
                 op ``channel_fir``) on the C (``tb_c``) and numpy
                 (``tb_numpy``) backends vs ``scipy.signal.lfilter`` of the same
                 taps (``lfilter``);
``sco``          ``SamplingClockOffset(1000)`` (``tb``) vs
                 ``scipy.signal.resample_poly(x, 1001, 1000)`` (``resample_poly``,
                 a different interpolator, for scale only).

The library stages write complex products as separate real operations so
that streams stay bit-identical however they are cut; the ``numpy_ref``
rows show what that costs.  Results are checked once against the
references outside the timed call.  Timings on shared machines are noisy:
only ratios within one run count.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal

import tonebank
from tonebank.channel import (
    FrequencyOffset,
    IqImbalance,
    PhaseNoise,
    SamplingClockOffset,
    TimingOffset,
)

N_SAMPLES = 1 << 20
N_SCO = 1 << 17
FS = 1e6
C_AVAILABLE = tonebank.backend_info()["c_available"]


@pytest.fixture(scope="module")
def signal() -> np.ndarray:
    rng = np.random.default_rng(12)
    x = rng.standard_normal(N_SAMPLES) + 1j * rng.standard_normal(N_SAMPLES)
    x.flags.writeable = False
    return x


def _label(benchmark, stage: str, impl: str, n: int) -> None:
    benchmark.group = f"impairments {stage} n={n}"
    benchmark.extra_info.update(kind="impairments", stage=stage, impl=impl, n=n)


def test_cfo(benchmark, signal):
    _label(benchmark, "cfo", "tb", N_SAMPLES)
    y = benchmark(FrequencyOffset(1234.5, FS).filter, signal)
    ref = signal * np.exp(2j * np.pi * 1234.5 * np.arange(N_SAMPLES) / FS)
    assert np.max(np.abs(y - ref)) < 1e-8


def test_cfo_numpy_reference(benchmark, signal):
    _label(benchmark, "cfo", "numpy_ref", N_SAMPLES)
    n = np.arange(N_SAMPLES)
    benchmark(lambda: signal * np.exp(2j * np.pi * 1234.5 * n / FS))


@pytest.mark.parametrize("impl", ["tb", "tb_psd"])
def test_phase_noise(benchmark, signal, impl):
    _label(benchmark, "phase_noise", impl, N_SAMPLES)
    if impl == "tb":
        make = lambda: PhaseNoise(100.0, FS, rng=1)                      # noqa: E731
    else:
        make = lambda: PhaseNoise.from_psd([1e3, 1e5], [-80.0, -110.0], FS,  # noqa: E731
                                           rng=1)
    # a fresh object per round: the block cache must not make later rounds free
    y = benchmark.pedantic(lambda stage: stage.filter(signal),
                           setup=lambda: ((make(),), {}), rounds=3)
    assert np.allclose(np.abs(y), np.abs(signal))


def test_phase_noise_numpy_reference(benchmark, signal):
    _label(benchmark, "phase_noise", "numpy_ref", N_SAMPLES)
    rng = np.random.default_rng(1)
    sigma = np.sqrt(2 * np.pi * 100.0 / FS)
    benchmark(lambda: signal * np.exp(1j * np.cumsum(sigma * rng.standard_normal(N_SAMPLES))))


@pytest.mark.parametrize("impl", ["tb", "numpy_ref"])
def test_iq(benchmark, signal, impl):
    _label(benchmark, "iq", impl, N_SAMPLES)
    iq = IqImbalance(gain_db=0.5, phase_deg=3.0)
    if impl == "tb":
        y = benchmark(iq.filter, signal)
        assert np.allclose(y, iq.mu * signal + iq.nu * np.conj(signal), atol=1e-12)
    else:
        benchmark(lambda: iq.mu * signal + iq.nu * np.conj(signal))


@pytest.mark.parametrize("impl", ["tb_c", "tb_numpy", "lfilter"])
def test_timing(benchmark, signal, impl):
    _label(benchmark, "timing", impl, N_SAMPLES)
    stage = TimingOffset(3.3)
    reference = scipy.signal.lfilter(stage.taps, [1.0], signal)
    if impl == "lfilter":
        benchmark(scipy.signal.lfilter, stage.taps, [1.0], signal)
        return
    if impl == "tb_c" and not C_AVAILABLE:
        pytest.skip("C kernel unavailable")
    with tonebank.use_backend("c" if impl == "tb_c" else "numpy"):
        y = benchmark(stage.filter, signal)
    assert np.max(np.abs(y - reference)) < 1e-10


@pytest.mark.parametrize("impl", ["tb", "resample_poly"])
def test_sco(benchmark, signal, impl):
    _label(benchmark, "sco", impl, N_SCO)
    x = signal[:N_SCO]
    if impl == "tb":
        y = benchmark(SamplingClockOffset(1000.0).filter, x)
        assert abs(y.size - N_SCO * 1.001) <= 1
    else:
        benchmark(scipy.signal.resample_poly, x, 1001, 1000)
