"""Shared set-up of the tonebank benchmarks (pytest-benchmark).

Every benchmark records what it measured in ``benchmark.extra_info`` so
that ``benchmarks/report.py`` can find it in the JSON without parsing test
names:

``impl``
    The implementation (keys of ``bench_common.IMPLEMENTATIONS``).
``kind``
    ``"execute"`` (steady-state transform), ``"plan"`` (plan creation
    only) or ``"first_call"`` (a call that has to plan a new size first).
``n``, ``batch``, ``dtype``
    Transform size, number of rows (transform along the last axis) and
    dtype name.

Inputs come from the fixtures below and are made once per session with a
fixed seed.  Each benchmark times one call; its result is checked once
against :func:`numpy.fft.fft` after timing, outside the timed call.
Constants and helpers shared with the test files and report.py live in
``bench_common.py``.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

# The import warns once when tonebank runs on its numpy fallback; that is
# expected here (the C cases are then skipped), so record the warning
# instead of letting the suite's warnings-as-errors setting stop the run.
with warnings.catch_warnings(record=True) as _import_warnings:
    warnings.simplefilter("always")
    import tonebank
IMPORT_WARNINGS = [str(w.message) for w in _import_warnings]

_INFO = tonebank.backend_info()
C_AVAILABLE = bool(_INFO["c_available"])
C_MISSING_REASON = _INFO["c_unavailable_reason"]


def pytest_report_header(config):
    lines = [f"tonebank {tonebank.__version__}: C kernel "
             + ("available" if C_AVAILABLE else f"unavailable ({C_MISSING_REASON})")]
    if C_AVAILABLE:
        lines.append(f"tonebank C flags: {_INFO['c_flags']} ({_INFO['c_compiler']})")
    return lines


def pytest_benchmark_update_machine_info(config, machine_info):
    """Store how tonebank was built next to pytest-benchmark's machine facts."""
    info = {k: (list(v) if isinstance(v, tuple) else v)
            for k, v in tonebank.backend_info().items()}
    info["import_warnings"] = IMPORT_WARNINGS
    info["version"] = tonebank.__version__
    machine_info["tonebank"] = info


# -- fixtures ----------------------------------------------------------------

_INPUTS: dict = {}


@pytest.fixture(scope="session")
def make_signal():
    """Return ``make(n, batch, dtype)``: seeded complex Gaussian rows.

    The arrays are made once per session and must not be modified; the
    shape is ``(batch, n)`` (C order), the transform runs along the last
    axis.
    """

    def make(n: int, batch: int, dtype: str) -> np.ndarray:
        key = (n, batch, dtype)
        if key not in _INPUTS:
            rng = np.random.default_rng([n, batch, np.dtype(dtype).itemsize])
            x = rng.standard_normal((batch, n)) + 1j * rng.standard_normal((batch, n))
            x = x.astype(dtype)
            x.flags.writeable = False
            _INPUTS[key] = x
        return _INPUTS[key]

    return make


@pytest.fixture
def c_backend():
    """Run the test inside ``tonebank.use_backend("c")``; skip without the kernel."""
    if not C_AVAILABLE:
        pytest.skip(f"C kernel unavailable: {C_MISSING_REASON}")
    with tonebank.use_backend("c"):
        yield


class CKernel:
    """The compiled module's ``ffi`` and ``lib`` with small helpers.

    Only the C header's contract is used here (``tb_fft_plan_create``,
    ``tb_fft_execute_f32/f64``, ...), not the Python binding's internals,
    so the bare-kernel benchmarks keep measuring the same thing while the
    binding changes.
    """

    def __init__(self):
        from tonebank._kernel._tonebank_c import ffi, lib

        self.ffi, self.lib = ffi, lib

    def plan(self, n: int, dtype: str):
        """A new plan (released when the returned object is collected)."""
        ffi, lib = self.ffi, self.lib
        precision = lib.TB_FLOAT32 if dtype == "complex64" else lib.TB_FLOAT64
        out = ffi.new("tb_fft_plan **")
        status = lib.tb_fft_plan_create(n, precision, out)
        assert status == lib.TB_OK, ffi.string(lib.tb_strerror(status))
        return ffi.gc(out[0], lib.tb_fft_plan_destroy)

    def execute_args(self, plan, a: np.ndarray, b: np.ndarray):
        """``(execute function, arguments)`` of a forward transform a -> b.

        *a* and *b* are C-contiguous ``(batch, n)`` arrays of the plan's
        dtype; the pointers and the workspace are made here, once.
        """
        ffi, lib = self.ffi, self.lib
        single = a.dtype == np.complex64
        scalar = "float[]" if single else "double[]"
        work = ffi.new("double[]", max(1, -(-lib.tb_fft_workspace_size(plan) // 8)))
        batch, n = a.shape
        execute = lib.tb_fft_execute_f32 if single else lib.tb_fft_execute_f64
        args = (plan, lib.TB_FORWARD, batch, ffi.from_buffer(scalar, a), n, 1,
                ffi.from_buffer(scalar, b), n, 1, 1.0, work)
        return execute, args


@pytest.fixture
def c_kernel(c_backend):
    """:class:`CKernel`: the C kernel called directly through cffi."""
    return CKernel()


@pytest.fixture
def c_plan_cache(c_backend):
    """The Python binding's plan cache (``tonebank._kernel._c._plans``).

    An internal of the package, used only to time the first call of a
    size; a rename fails loudly here instead of measuring something else.
    """
    from tonebank._kernel import _c

    cache = getattr(_c, "_plans", None)
    if not isinstance(cache, dict):
        pytest.fail("benchmarks/test_02_plan.py needs tonebank._kernel._c._plans "
                    "(the plan cache, a dict keyed by (n, dtype char)); update it")
    return cache


@pytest.fixture
def numpy_backend():
    """Run the test inside ``tonebank.use_backend("numpy")``."""
    with tonebank.use_backend("numpy"):
        yield


@pytest.fixture(scope="session")
def pyfftw_module():
    """The pyfftw module, or a clean skip when it is not installed."""
    with warnings.catch_warnings():
        # A third-party import may warn about its own deprecations; that is
        # not what these benchmarks test.
        warnings.simplefilter("ignore")
        return pytest.importorskip("pyfftw", reason="pyfftw (FFTW) is not installed")
