"""Throughput and latency of the kernel operations on the CPU at hand.

This module backs ``tonebank bench``: it times every kernel operation of
the library and every waveform's synthesis and analysis through the
public API, on each available backend, and reports them with the facts
of the machine (CPU model, cores, the compiler and flags the C kernel was
built with, library versions).  It needs only the standard library's
``time.perf_counter`` and what tonebank itself depends on, so it runs
on a target computer that has no test or benchmark extras installed.

Two figures per operation, FFT size and backend:

throughput
    Samples per second for a batch of :data:`BATCH_SYMBOLS` OFDM symbols
    in one call (batch use, mostly memory- and arithmetic-bound).
latency
    The median time of one call holding a single symbol (streaming use,
    mostly bound by the per-call overhead).

Each result is checked once against an outside reference before it is
timed (:func:`numpy.fft.fft` for the transform, otherwise the same call
on the numpy backend), so the figures time real work.

The report is a JSON-ready :class:`dict` whose schema is documented in
``docs/guide_target_bench.rst`` (:data:`SCHEMA_NAME`, version
:data:`SCHEMA_VERSION`); :func:`compare_reports` sets two reports, for
example from two target CPUs, side by side.  See
:doc:`/guide_target_bench`.
"""

from __future__ import annotations

import datetime
import gc
import json
import math
import os
import platform
import statistics
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path
from time import perf_counter

import numpy as np

from . import _kernel
from .channel import DelayProfile, TappedDelayLine
from .papr import SelectiveMapping
from .plan import CarrierPlan
from .sync import timing_metric
from .transforms import FftPlan
from .waveforms import CpOfdm, FbmcOqam, FilteredOfdm, WolaOfdm

__all__ = [
    "BATCH_SYMBOLS",
    "BenchReportError",
    "FULL_SIZES",
    "OPS",
    "QUICK_SIZES",
    "SCHEMA_NAME",
    "SCHEMA_VERSION",
    "bench_call",
    "compare_reports",
    "format_comparison",
    "format_report",
    "load_report",
    "machine_report",
    "run_bench",
    "save_report",
]

#: Value of the report's ``"schema"`` field.
SCHEMA_NAME = "tonebank-bench"
#: Version of the report layout; :func:`load_report` refuses any other.
SCHEMA_VERSION = 1

#: FFT sizes of a full run and of a ``quick`` run.
FULL_SIZES = (64, 256, 1024, 4096)
QUICK_SIZES = (64, 1024)

#: OFDM symbols per call in the throughput figure (a batch the size of a
#: 10 ms frame of 14-symbol slots at 1 ms: common practice, no source).
BATCH_SYMBOLS = 140

#: Timing budget per measurement in seconds, and the number of timed
#: loops of the throughput figure, for a full and a quick run.
_FULL_TIMING = (0.2, 5)
_QUICK_TIMING = (0.02, 3)

#: Smallest and largest FFT size accepted (the largest keeps the numpy
#: backend's batch of 140 symbols within memory of a small target).
_MIN_SIZE, _MAX_SIZE = 32, 8192

#: Relative error (max |error| / max |reference|) accepted by the check of
#: each measured call, complex128: a few hundred ulps, the test suite's
#: tolerance between the backends (common practice, no source).  The
#: timing metric's running sums restart every 4096 outputs and are
#: compared more loosely, as in benchmarks/test_12_sync.py.
_TOLERANCE = 1e-12
_TOLERANCE_RUNNING_SUMS = 1e-9

#: The invented scenario's sample rate (only the channel model needs one).
_SAMPLE_RATE = 15.36e6


class BenchReportError(ValueError):
    """A bench report file cannot be read, is not JSON, or has another schema.

    The message names the file.
    """


# -- the measured calls ------------------------------------------------------


@dataclass(frozen=True)
class _Op:
    """One measured operation: how to build its call, what it exercises."""

    kernel_op: str       # the kernel interface entry it runs (see _kernel)
    call: str            # the public call timed, as the report prints it
    build: Callable      # (n, n_symbols) -> (zero-argument call, samples per call)
    result: Callable     # call output -> the array checked against the reference


def _plan(n: int, pilots: bool = True) -> CarrierPlan:
    """About 80 % of the bins used (DC empty); pilots every 12th, prefix n/4."""
    if pilots:
        return CarrierPlan.centered(n, 2 * round(0.4 * n), pilot_spacing=12,
                                    pilot_offset=6, cp_length=n // 4,
                                    sample_rate=_SAMPLE_RATE)
    return CarrierPlan.centered(n, 2 * round(0.4 * n), sample_rate=_SAMPLE_RATE)


def _noise(shape, seed) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)) / math.sqrt(2)


def _qpsk(shape, seed) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.exp(0.5j * np.pi * (rng.integers(0, 4, shape) + 0.5))


def _fixed(arr: np.ndarray) -> np.ndarray:
    arr.flags.writeable = False
    return arr


def _build_fft(n, s):
    fft_plan = FftPlan(n)
    x = _fixed(_noise((s, n), [1, n, s]))
    return (lambda: fft_plan(x)), s * n


def _waveform(kind: str, n: int):
    plan = _plan(n, pilots=kind != "fbmc")
    cp = n // 4
    if kind == "ofdm":
        return CpOfdm(plan)
    if kind == "wola":
        return WolaOfdm(plan, tx_ramp=cp // 4, rx_ramp=cp // 4)
    if kind == "fofdm":
        return FilteredOfdm(plan)
    return FbmcOqam(plan, overlap=4)


def _build_synthesize(kind):
    def build(n, s):
        wf = _waveform(kind, n)
        grid = _fixed(wf.plan.place(_qpsk(s * wf.plan.n_data, [2, n, s])))
        return (lambda: wf.synthesize(grid)), wf.n_samples(s)
    return build


def _build_analyze(kind):
    def build(n, s):
        wf = _waveform(kind, n)
        grid = wf.plan.place(_qpsk(s * wf.plan.n_data, [3, n, s]))
        x = _fixed(wf.synthesize(grid) + 0.01 * _noise(wf.n_samples(s) + wf.tail, [4, n, s]))
        return (lambda: wf.analyze(x)), wf.n_samples(s)
    return build


def _build_modulate(n, s):
    wf = _waveform("ofdm", n)
    data = _fixed(_qpsk(s * wf.plan.n_data, [5, n, s]))
    return (lambda: wf.modulate(data)), wf.n_samples(s)


def _build_demodulate(n, s):
    wf = _waveform("ofdm", n)
    x = _fixed(wf.modulate(_qpsk(s * wf.plan.n_data, [6, n, s])))
    return (lambda: wf.demodulate(x)), wf.n_samples(s)


def _build_slm(n, s):
    slm = SelectiveMapping(_plan(n, pilots=False), n_candidates=4, oversampling=4, rng=1)
    payload = _fixed(_qpsk((s, slm.n_payload), [7, n, s]))
    return (lambda: slm.select(payload)), s * n


def _build_channel(n, s):
    # A sample-spaced 12-path profile (powers falling 1 dB per path) with a
    # 300 Hz maximum Doppler shift: time-varying taps, the kernel's general case.
    profile = DelayProfile(np.arange(12) / _SAMPLE_RATE, -1.0 * np.arange(12))
    tdl = TappedDelayLine(profile, _SAMPLE_RATE, max_doppler_hz=300.0, rng=8)
    x = _fixed(_noise(s * (n + n // 4), [8, n, s]))
    return (lambda: tdl.filter(x)), x.size


def _build_timing(n, s):
    x = _fixed(_noise(s * (n + n // 4), [9, n, s]))
    return (lambda: timing_metric(x, n // 2)), x.size


def _first(result):
    return result[0]


def _same(result):
    return result


#: Operation name -> how it is measured, in report order.
_OPS = {
    "fft": _Op("fft_runner", "FftPlan(n)(x)", _build_fft, _same),
    "ofdm.synthesize": _Op("ofdm_runner", "CpOfdm.synthesize(grid)",
                           _build_synthesize("ofdm"), _same),
    "ofdm.analyze": _Op("ofdm_runner", "CpOfdm.analyze(samples)", _build_analyze("ofdm"), _same),
    "ofdm.modulate": _Op("ofdm_runner", "CpOfdm.modulate(data)", _build_modulate, _same),
    "ofdm.demodulate": _Op("ofdm_runner", "CpOfdm.demodulate(samples)", _build_demodulate,
                           _first),
    "wola.synthesize": _Op("wola_runner", "WolaOfdm.synthesize(grid)",
                           _build_synthesize("wola"), _same),
    "wola.analyze": _Op("wola_runner", "WolaOfdm.analyze(samples)", _build_analyze("wola"),
                        _same),
    "fofdm.synthesize": _Op("fofdm_runner", "FilteredOfdm.synthesize(grid)",
                            _build_synthesize("fofdm"), _same),
    "fofdm.analyze": _Op("fofdm_runner", "FilteredOfdm.analyze(samples)",
                         _build_analyze("fofdm"), _same),
    "fbmc.synthesize": _Op("fbmc_runner", "FbmcOqam.synthesize(grid)",
                           _build_synthesize("fbmc"), _same),
    "fbmc.analyze": _Op("fbmc_runner", "FbmcOqam.analyze(samples)", _build_analyze("fbmc"),
                        _same),
    "papr.slm": _Op("slm_runner", "SelectiveMapping.select(payload)", _build_slm,
                    lambda r: r.samples),
    "channel.tdl": _Op("channel_fir", "TappedDelayLine.filter(samples)", _build_channel,
                       _same),
    "sync.timing": _Op("halves_correlation", "sync.timing_metric(samples, n/2)",
                       _build_timing, lambda r: r.metric),
}

#: Names of the measured operations, in report order.
OPS = tuple(_OPS)


def _check_sizes(sizes) -> tuple[int, ...]:
    if isinstance(sizes, (str, bytes)) or not isinstance(sizes, Iterable):
        raise TypeError(f"sizes must be a sequence of integers; got {sizes!r}")
    sizes = tuple(sizes)
    if not sizes:
        raise ValueError("sizes=() is empty; give at least one FFT size")
    for n in sizes:
        if (not isinstance(n, (int, np.integer)) or isinstance(n, bool)
                or not _MIN_SIZE <= n <= _MAX_SIZE or n % 16):
            raise ValueError(f"sizes contains {n!r}; allowed: multiples of 16 from "
                             f"{_MIN_SIZE} to {_MAX_SIZE}")
    if len(set(sizes)) != len(sizes):
        raise ValueError(f"sizes={sizes!r} repeats a size; give each size once")
    return tuple(int(n) for n in sizes)


def _check_op(op) -> _Op:
    if op not in _OPS:
        raise ValueError(f"op={op!r} is not a measured operation; allowed: "
                         + ", ".join(OPS))
    return _OPS[op]


def bench_call(op: str, n: int, n_symbols: int = 1) -> tuple[Callable, int]:
    """Build one measured call on the backend in force.

    Parameters
    ----------
    op : str
        One of :data:`OPS`.
    n : int
        FFT size: a multiple of 16 from 32 to 8192.
    n_symbols : int, optional
        OFDM symbols per call (default 1, the latency case).

    Returns
    -------
    call : collections.abc.Callable
        Takes no argument and returns the operation's output (its inputs,
        fixed and seeded, are bound inside).
    samples : int
        Time-domain samples one call produces or consumes (cyclic
        prefixes included, tails excluded); for ``"fft"`` and
        ``"papr.slm"`` ``n_symbols * n``.

    Raises
    ------
    ValueError
        An unknown *op*, a size outside the allowed ones, ``n_symbols < 1``.

    See Also
    --------
    run_bench : times these calls.

    Notes
    -----
    The objects (plans, waveforms, channel) are made inside this call on
    the backend in force: call it inside :func:`tonebank.use_backend`.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> from tonebank.target_bench import bench_call
    >>> call, samples = bench_call("ofdm.synthesize", 64, 2)
    >>> call().shape, samples
    ((160,), 160)
    """
    spec = _check_op(op)
    if (not isinstance(n, (int, np.integer)) or isinstance(n, bool)
            or not _MIN_SIZE <= n <= _MAX_SIZE or n % 16):
        raise ValueError(f"n={n!r} is not allowed; use a multiple of 16 from {_MIN_SIZE} "
                         f"to {_MAX_SIZE}")
    if not isinstance(n_symbols, (int, np.integer)) or isinstance(n_symbols, bool) \
            or n_symbols < 1:
        raise ValueError(f"n_symbols={n_symbols!r} is not allowed; use an integer >= 1")
    return spec.build(int(n), int(n_symbols))


# -- timing ------------------------------------------------------------------


def _time_batch(call: Callable, target: float, loops: int) -> dict:
    """Best and median seconds per call over ``loops`` timed loops.

    The loop count is chosen so that each loop lasts about ``target /
    loops`` seconds; the best loop is the figure least disturbed by other
    work on the machine (interference only ever adds time).
    """
    t0 = perf_counter()
    call()
    one = max(perf_counter() - t0, 1e-9)
    calls = max(1, min(100_000, int(target / loops / one)))
    per_call = []
    for _ in range(loops):
        t0 = perf_counter()
        for _ in range(calls):
            call()
        per_call.append((perf_counter() - t0) / calls)
    return {"best_s": min(per_call), "median_s": statistics.median(per_call),
            "loops": loops, "calls_per_loop": calls}


def _time_single(call: Callable, target: float) -> dict:
    """Median, best and 90th percentile of individually timed calls."""
    t0 = perf_counter()
    call()
    one = max(perf_counter() - t0, 1e-9)
    count = max(7, min(20_000, int(target / one)))
    times = []
    for _ in range(count):
        t0 = perf_counter()
        call()
        times.append(perf_counter() - t0)
    times.sort()
    return {"median_s": statistics.median(times), "best_s": times[0],
            "p90_s": times[min(count - 1, (9 * count) // 10)], "calls": count}


def _relative_error(result, reference) -> float:
    result = np.asarray(result)
    reference = np.asarray(reference)
    if result.shape != reference.shape:
        return math.inf
    scale = float(np.max(np.abs(reference))) if reference.size else 0.0
    err = float(np.max(np.abs(result - reference))) if reference.size else 0.0
    return err / scale if scale > 0 else err


def _reference(op: str, n: int, s: int) -> tuple[np.ndarray, str]:
    """The outside reference of ``bench_call(op, n, s)()`` and its name."""
    if op == "fft":
        x = _noise((s, n), [1, n, s])          # the input _build_fft binds
        return np.fft.fft(x, axis=-1), "numpy.fft.fft"
    with _kernel.use_backend("numpy"):
        call, _ = _OPS[op].build(n, s)
        return _OPS[op].result(call()), "numpy backend"


# -- the machine -------------------------------------------------------------


def _cpu_model() -> str:
    """The CPU's name from /proc/cpuinfo where present, else from platform."""
    try:
        text = Path("/proc/cpuinfo").read_text(encoding="utf-8", errors="replace")
    except OSError:
        text = ""
    # x86 names it "model name"; ARM and RISC-V kernels use other keys.
    for key in ("model name", "Hardware", "Model", "cpu model", "uarch", "Processor", "cpu"):
        for line in text.splitlines():
            name, sep, value = line.partition(":")
            if sep and name.strip() == key and value.strip():
                return value.strip()
    return platform.processor() or platform.machine() or "unknown"


def _version(distribution: str):
    try:
        return metadata.version(distribution)
    except metadata.PackageNotFoundError:
        return None


def machine_report() -> dict:
    """Facts of the machine and the build that the figures depend on.

    Returns
    -------
    dict
        ``cpu_model``, ``machine`` (architecture), ``logical_cores``
        (:func:`os.cpu_count`), ``usable_cores`` (the process's CPU
        affinity where the system reports it, else ``logical_cores``),
        ``platform``, ``python``, ``versions`` (``tonebank``, ``numpy``,
        ``scipy``, ``cffi``; ``None`` where not installed),
        ``c_available`` and, with the C kernel, ``c_compiler``,
        ``c_flags`` (the flags the kernel was built with, including any
        ``TONEBANK_CFLAGS`` of that build), ``c_simd`` and
        ``c_kernel_version``; else ``c_unavailable_reason``.  Also
        ``tonebank_cflags_now``: the ``TONEBANK_CFLAGS`` of the current
        environment, which affects only the next build.

    Examples
    --------
    >>> from tonebank.target_bench import machine_report
    >>> facts = machine_report()
    >>> facts["logical_cores"] >= 1
    True
    """
    from . import __version__

    info = _kernel.backend_info()
    cores = os.cpu_count() or 1
    try:
        usable = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        usable = cores
    facts = {
        "cpu_model": _cpu_model(),
        "machine": platform.machine(),
        "logical_cores": cores,
        "usable_cores": usable,
        "platform": platform.platform(),
        "python": f"{platform.python_implementation()} {platform.python_version()}",
        "versions": {
            "tonebank": __version__,
            "numpy": np.__version__,
            "scipy": _version("scipy"),
            "cffi": _version("cffi"),
        },
        "c_available": bool(info["c_available"]),
    }
    if info["c_available"]:
        for key in ("c_compiler", "c_flags", "c_simd", "c_kernel_version"):
            facts[key] = info[key]
    else:
        facts["c_unavailable_reason"] = info["c_unavailable_reason"]
    facts["tonebank_cflags_now"] = os.environ.get("TONEBANK_CFLAGS", "")
    return facts


# -- the run -----------------------------------------------------------------


def run_bench(*, quick: bool = False, sizes: Sequence[int] | None = None,
              ops: Sequence[str] | None = None, target_time: float | None = None,
              label: str | None = None, progress: Callable[[str], None] | None = None,
              ) -> dict:
    """Time every operation on every available backend.

    Parameters
    ----------
    quick : bool, optional
        Fewer sizes (:data:`QUICK_SIZES`) and a tenth of the timing
        budget: a few seconds in all instead of about a minute.
    sizes : collections.abc.Sequence of int, optional
        FFT sizes to measure (multiples of 16 from 32 to 8192); default
        :data:`FULL_SIZES`, or :data:`QUICK_SIZES` with ``quick``.
    ops : collections.abc.Sequence of str, optional
        Subset of :data:`OPS` (default all).
    target_time : float, optional
        Seconds of timing per measurement (two per operation, size and
        backend); default 0.2, or 0.02 with ``quick``.
    label : str, optional
        A name for the target, stored in the report.
    progress : collections.abc.Callable, optional
        Called with a short text before each operation (e.g. ``print``
        to stderr); default silent.

    Returns
    -------
    dict
        The report (JSON-ready); layout in ``docs/guide_target_bench.rst``.
        ``report["results"]`` holds one entry per operation, size and
        backend, and ``report["checks_passed"]`` whether every measured
        call agreed with its reference.

    Raises
    ------
    TypeError, ValueError
        Bad ``sizes``, ``ops``, ``target_time`` or ``label``.

    See Also
    --------
    format_report, save_report, compare_reports

    Notes
    -----
    Throughput: the batch call (:data:`BATCH_SYMBOLS` symbols) runs in
    ``loops`` timed loops of as many calls as fill ``target_time /
    loops`` seconds; samples per second come from the best loop.
    Latency: single-symbol calls are timed one by one for about
    ``target_time`` seconds (at least 7 calls); the median is reported,
    with the best and the 90th percentile.  The garbage collector is off
    while timing.  The C backend runs only where the C kernel is
    available (``machine["c_available"]``).  Figures from a shared or
    throttling machine are noisy: ratios within one report count most.

    Examples
    --------
    >>> from tonebank.target_bench import run_bench
    >>> report = run_bench(sizes=[64], ops=["fft"], target_time=0.002)
    >>> sorted({r["backend"] for r in report["results"]}) in (["c", "numpy"], ["numpy"])
    True
    >>> report["checks_passed"]
    True
    """
    budget, loops = _QUICK_TIMING if quick else _FULL_TIMING
    sizes = _check_sizes((QUICK_SIZES if quick else FULL_SIZES) if sizes is None else sizes)
    if ops is None:
        ops = OPS
    elif isinstance(ops, str) or not isinstance(ops, Iterable):
        raise TypeError(f"ops must be a sequence of operation names; got {ops!r}")
    ops = tuple(ops)
    if not ops:
        raise ValueError("ops=() is empty; give at least one of: " + ", ".join(OPS))
    for op in ops:
        _check_op(op)
    if target_time is None:
        target_time = budget
    elif (not isinstance(target_time, (int, float)) or isinstance(target_time, bool)
          or not 0 < target_time <= 60):
        raise ValueError(f"target_time={target_time!r} is not allowed; give seconds "
                         "per measurement, > 0 and <= 60")
    if label is not None and not isinstance(label, str):
        raise TypeError(f"label must be a string; got {label!r}")

    machine = machine_report()
    backends = ("numpy", "c") if machine["c_available"] else ("numpy",)
    results = []
    for op in ops:
        spec = _OPS[op]
        for n in sizes:
            if progress is not None:
                progress(f"{op} n={n}")
            references = {s: _reference(op, n, s) for s in (BATCH_SYMBOLS, 1)}
            for backend in backends:
                with _kernel.use_backend(backend):
                    entry = {"op": op, "kernel_op": spec.kernel_op, "call": spec.call,
                             "n": n, "backend": backend}
                    errors = []
                    for key, s in (("batch", BATCH_SYMBOLS), ("single", 1)):
                        call, samples = spec.build(n, s)
                        reference, ref_name = references[s]
                        errors.append(_relative_error(spec.result(call()), reference))
                        was_enabled = gc.isenabled()
                        gc.disable()
                        try:
                            if key == "batch":
                                timing = _time_batch(call, target_time, loops)
                            else:
                                timing = _time_single(call, target_time)
                        finally:
                            if was_enabled:
                                gc.enable()
                        timing["symbols"] = s
                        timing["samples"] = samples
                        entry[key] = timing
                    entry["batch"]["samples_per_s"] = (entry["batch"]["samples"]
                                                       / entry["batch"]["best_s"])
                    entry["single"]["latency_s"] = entry["single"]["median_s"]
                    tolerance = _TOLERANCE_RUNNING_SUMS if op == "sync.timing" else _TOLERANCE
                    worst = max(errors)
                    # JSON has no infinity: a shape mismatch is recorded as null.
                    entry["check"] = {"reference": ref_name,
                                      "max_rel_error": worst if math.isfinite(worst) else None,
                                      "tolerance": tolerance, "passed": worst <= tolerance}
                    results.append(entry)
    return {
        "schema": SCHEMA_NAME,
        "schema_version": SCHEMA_VERSION,
        "label": label if label is not None else "",
        "created_utc": datetime.datetime.now(datetime.timezone.utc)
        .strftime("%Y-%m-%dT%H:%M:%SZ"),
        "settings": {"quick": bool(quick), "sizes": list(sizes), "ops": list(ops),
                     "batch_symbols": BATCH_SYMBOLS, "dtype": "complex128",
                     "target_time_s": float(target_time), "loops": loops,
                     "backends": list(backends)},
        "machine": machine,
        "results": results,
        "checks_passed": all(r["check"]["passed"] for r in results),
    }


# -- printing ----------------------------------------------------------------


def _number(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _msps(x) -> str:
    return f"{x / 1e6:10.2f}" if _number(x) else f"{'-':>10s}"


def _micro(x) -> str:
    return f"{x * 1e6:10.1f}" if _number(x) else f"{'-':>10s}"


def _ratio(x) -> str:
    return f"{x:7.2f}x" if x is not None and math.isfinite(x) else f"{'-':>8s}"


class _Facts(dict):
    """A machine section read leniently: a field a report lacks prints as "?"."""

    def __missing__(self, key):
        return "?"


def _machine_lines(report: dict) -> list[str]:
    m = _Facts(report["machine"])
    v = m["versions"] if isinstance(m["versions"], dict) else {}
    lines = [f"target       {report.get('label') or '(no label)'}  "
             f"({report.get('created_utc', '?')})",
             f"cpu          {m['cpu_model']} ({m['machine']}), {m['logical_cores']} logical "
             f"cores, {m['usable_cores']} usable",
             f"platform     {m['platform']}, {m['python']}",
             "versions     " + ", ".join(f"{k} {v[k]}" for k in v)]
    if m["c_available"] is True:
        lines.append(f"C kernel     {m['c_kernel_version']}, {m['c_compiler']}, "
                     f"flags: {m['c_flags']}, simd: {m['c_simd']}")
    else:
        lines.append(f"C kernel     not available ({m['c_unavailable_reason']}); "
                     "numpy backend only")
    return lines


def _share(a, b):
    """``a / b``, or None unless both are positive finite numbers."""
    return a / b if all(_number(x) and x > 0 for x in (a, b)) else None


def format_report(report: dict) -> str:
    """The report as a text table, one line per operation, size and backend.

    Parameters
    ----------
    report : dict
        From :func:`run_bench` or :func:`load_report`.

    Returns
    -------
    str
        The machine facts, then columns ``op``, ``n``, ``backend``,
        ``Msamples/s`` (batch throughput, millions of samples per second),
        ``latency us`` (median single-symbol call, microseconds) and, on
        the C lines, ``C/numpy`` speed-ups of both figures.

    Examples
    --------
    >>> from tonebank.target_bench import format_report, run_bench
    >>> text = format_report(run_bench(sizes=[64], ops=["fft"], target_time=0.002))
    >>> "Msamples/s" in text
    True
    """
    rows = report["results"]
    numpy_rows = {(r["op"], r["n"]): r for r in rows if r["backend"] == "numpy"}
    width = max([len("op")] + [len(r["op"]) for r in rows])
    lines = _machine_lines(report)
    lines.append("")
    lines.append(f"{'op':<{width}s} {'n':>6s} {'backend':<7s} {'Msamples/s':>10s} "
                 f"{'latency us':>10s} {'C/numpy':>8s} {'C/numpy':>8s}")
    lines.append(f"{'':<{width}s} {'':>6s} {'':<7s} {'(batch)':>10s} {'(1 symbol)':>10s} "
                 f"{'batch':>8s} {'1 symbol':>8s}")
    for r in rows:
        batch_ratio = single_ratio = None
        ref = numpy_rows.get((r["op"], r["n"]))
        if r["backend"] == "c" and ref is not None:
            batch_ratio = _share(r["batch"].get("samples_per_s"),
                                 ref["batch"].get("samples_per_s"))
            single_ratio = _share(ref["single"].get("latency_s"), r["single"].get("latency_s"))
        flag = "" if r.get("check", {}).get("passed", True) else "  CHECK FAILED"
        lines.append(f"{r['op']:<{width}s} {r['n']:6d} {r['backend']:<7s} "
                     f"{_msps(r['batch'].get('samples_per_s'))} "
                     f"{_micro(r['single'].get('latency_s'))} "
                     f"{_ratio(batch_ratio)} {_ratio(single_ratio)}{flag}")
    lines.append("")
    lines.append(f"Batch: {report['settings']['batch_symbols']} symbols per call, best of "
                 f"{report['settings']['loops']} loops; latency: median of single-symbol "
                 "calls; complex128.")
    if report.get("checks_passed", True):
        lines.append("Every measured call agreed with its reference (numpy.fft or the "
                     "numpy backend).")
    else:
        lines.append("SOME MEASURED CALLS DISAGREED WITH THEIR REFERENCE (marked above).")
    return "\n".join(lines)


# -- files and comparison ----------------------------------------------------


def save_report(report: dict, path) -> None:
    """Write *report* to *path* as JSON (UTF-8, indented).

    Parameters
    ----------
    report : dict
        From :func:`run_bench`.
    path : str or os.PathLike
        The file to write (replaced if it exists).

    Raises
    ------
    BenchReportError
        The file cannot be written (the message names it).

    See Also
    --------
    load_report : read it back.
    """
    try:
        with open(path, "w", encoding="utf-8") as f:
            json.dump(report, f, indent=1, allow_nan=False)
            f.write("\n")
    except OSError as exc:
        raise BenchReportError(f"cannot write the bench report {str(path)!r}: "
                               f"{exc.strerror or exc}") from None


_REQUIRED_RESULT_KEYS = ("op", "n", "backend", "batch", "single")


def load_report(path) -> dict:
    """Read a report written by ``tonebank bench --json`` or by ``save_report``.

    Parameters
    ----------
    path : str or os.PathLike
        The JSON file.

    Returns
    -------
    dict
        The report.

    Raises
    ------
    BenchReportError
        The file is missing or unreadable, not JSON, not a bench report,
        or of another :data:`SCHEMA_VERSION`; the message names the file.

    Examples
    --------
    >>> import os, tempfile
    >>> from tonebank.target_bench import load_report, run_bench, save_report
    >>> path = os.path.join(tempfile.mkdtemp(), "target.json")
    >>> save_report(run_bench(sizes=[64], ops=["fft"], target_time=0.002), path)
    >>> load_report(path)["schema_version"]
    1
    """
    name = repr(str(path))
    try:
        text = Path(path).read_text(encoding="utf-8")
    except FileNotFoundError:
        raise BenchReportError(f"bench report {name} does not exist") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise BenchReportError(f"bench report {name} cannot be read: {exc}") from None
    try:
        report = json.loads(text)
    except json.JSONDecodeError as exc:
        raise BenchReportError(f"bench report {name} is not valid JSON: {exc}") from None
    if not isinstance(report, dict) or report.get("schema") != SCHEMA_NAME:
        raise BenchReportError(f"bench report {name} is not a tonebank bench report "
                               f"(its 'schema' field is not {SCHEMA_NAME!r})")
    version = report.get("schema_version")
    if version != SCHEMA_VERSION:
        raise BenchReportError(f"bench report {name} has schema_version {version!r}; this "
                               f"tonebank reads schema_version {SCHEMA_VERSION}")
    results = report.get("results")
    if (not isinstance(results, list) or not isinstance(report.get("machine"), dict)
            or not all(isinstance(r, dict) and all(k in r for k in _REQUIRED_RESULT_KEYS)
                       for r in results)):
        raise BenchReportError(f"bench report {name} lacks its 'machine' or 'results' "
                               "entries (or a result lacks op, n, backend, batch, single)")
    return report


def compare_reports(a: dict, b: dict) -> list[dict]:
    """Pair the results of two reports and give B's speed relative to A's.

    Parameters
    ----------
    a, b : dict
        Reports (:func:`run_bench` or :func:`load_report`).

    Returns
    -------
    list of dict
        One entry per ``(op, n, backend)`` present in both, in A's order,
        with ``a_samples_per_s``, ``b_samples_per_s``, ``throughput_ratio``
        (B / A: above 1 means B is faster), ``a_latency_s``,
        ``b_latency_s`` and ``latency_ratio`` (A / B: above 1 means B
        answers sooner); a ratio is None where a figure is missing, zero
        or not finite.  Entries present in one report only are left out
        (:func:`format_comparison` lists them).

    Examples
    --------
    >>> from tonebank.target_bench import compare_reports, run_bench
    >>> one = run_bench(sizes=[64], ops=["fft"], target_time=0.002)
    >>> rows = compare_reports(one, one)
    >>> rows[0]["throughput_ratio"]
    1.0
    """
    index_b = {(r["op"], r["n"], r["backend"]): r for r in b["results"]}
    rows = []
    for r in a["results"]:
        other = index_b.get((r["op"], r["n"], r["backend"]))
        if other is None:
            continue
        ta, tb = r["batch"].get("samples_per_s"), other["batch"].get("samples_per_s")
        la, lb = r["single"].get("latency_s"), other["single"].get("latency_s")
        rows.append({"op": r["op"], "n": r["n"], "backend": r["backend"],
                     "a_samples_per_s": ta, "b_samples_per_s": tb,
                     "throughput_ratio": _share(tb, ta), "a_latency_s": la,
                     "b_latency_s": lb, "latency_ratio": _share(la, lb)})
    return rows


def format_comparison(a: dict, b: dict, *, name_a: str = "A", name_b: str = "B") -> str:
    """Two reports side by side as a text table, with B's speed relative to A's.

    Parameters
    ----------
    a, b : dict
        Reports.
    name_a, name_b : str, optional
        How the table heads the two (default "A" and "B"; the command
        line passes the file names).

    Returns
    -------
    str
        Both machines' facts, then per operation, size and backend the
        two throughputs and latencies and the ratios ``B/A`` (throughput)
        and ``A/B`` (latency): above 1, B is faster.
    """
    rows = compare_reports(a, b)
    lines = [f"A = {name_a}"] + ["  " + s for s in _machine_lines(a)]
    lines += [f"B = {name_b}"] + ["  " + s for s in _machine_lines(b)]
    lines.append("")
    width = max([len("op")] + [len(r["op"]) for r in rows])
    lines.append(f"{'op':<{width}s} {'n':>6s} {'backend':<7s} {'A Msa/s':>10s} "
                 f"{'B Msa/s':>10s} {'B/A':>8s} {'A lat us':>10s} {'B lat us':>10s} "
                 f"{'A/B':>8s}")
    for r in rows:
        lines.append(f"{r['op']:<{width}s} {r['n']:6d} {r['backend']:<7s} "
                     f"{_msps(r['a_samples_per_s'])} {_msps(r['b_samples_per_s'])} "
                     f"{_ratio(r['throughput_ratio'])} {_micro(r['a_latency_s'])} "
                     f"{_micro(r['b_latency_s'])} {_ratio(r['latency_ratio'])}")
    keys_a = {(r["op"], r["n"], r["backend"]) for r in a["results"]}
    keys_b = {(r["op"], r["n"], r["backend"]) for r in b["results"]}
    for only, keys, other in (("A", keys_a - keys_b, a), ("B", keys_b - keys_a, b)):
        if keys:
            shown = ", ".join(f"{op} n={n} [{be}]" for op, n, be in sorted(keys))
            lines.append(f"only in {only}: {shown}")
    lines.append("")
    lines.append("Ratios above 1: B is faster (throughput B/A, latency A/B).  Single runs "
                 "on shared machines are noisy; repeat before drawing conclusions.")
    if not rows:
        lines.append("The two reports have no operation, size and backend in common.")
    return "\n".join(lines)
