"""C implementation of the fused selective-mapping search (cffi wrapper).

See :class:`tonebank._kernel._numpy_papr._SlmRunner` for the contract;
the arrays arrive validated and C-contiguous.  Grid sizes n the C kernel
cannot plan (it runs the oversampled transform as L polyphase branches
of n-point FFTs) run on the numpy twin and are listed among the fallback
sizes.
"""

from __future__ import annotations

import threading

import numpy as np

from ._c import _check, _workspace, fallback_sizes, ffi, lib
from . import _numpy_papr

_SIZE_ARRAY = ffi.typeof("size_t[]")
_DOUBLE_ARRAY = ffi.typeof("double[]")
_plans: dict = {}
_plans_lock = threading.Lock()


class _SlmPlan:
    """A C plan of the SLM search, shared by every runner of its key."""

    __slots__ = ("handle", "work_nbytes", "select", "array_type")

    def __init__(self, n: int, m: int, single: bool):
        precision = lib.TB_FLOAT32 if single else lib.TB_FLOAT64
        out = ffi.new("tb_slm_plan **")
        _check(lib.tb_slm_plan_create(n, m, precision, out),
               f"planning selective mapping of {n} bins on {m} points")
        self.handle = ffi.gc(out[0], lib.tb_slm_plan_destroy)
        self.work_nbytes = lib.tb_slm_workspace_size(self.handle)
        self.select = lib.tb_slm_select_f32 if single else lib.tb_slm_select_f64
        self.array_type = ffi.typeof(("float" if single else "double") + "[]")


def _plan(n: int, m: int, single: bool) -> _SlmPlan:
    key = (n, m, single)
    with _plans_lock:
        plan = _plans.get(key)
        if plan is None:
            plan = _plans[key] = _SlmPlan(n, m, single)
        return plan


class _SlmRunner:
    """Selective mapping on the C kernel: one fused pass per symbol."""

    def __init__(self, n: int, m: int, dtype):
        # The kernel runs m = L n as L branches of n-point FFTs.
        if lib.tb_fft_size_supported(n) and m % n == 0 and m <= lib.TB_FFT_MAX_SIZE:
            self._plan = _plan(n, m, np.dtype(dtype) == np.complex64)
            self._fallback = None
        else:
            fallback_sizes.add(n)
            self._plan = None
            self._fallback = _numpy_papr.slm_runner(n, m, dtype)

    def select(self, grid, phases, out, index, peak, scale, tie_margin):
        if self._plan is None:
            return self._fallback.select(grid, phases, out, index, peak, scale, tie_margin)
        plan = self._plan
        n_symbols = grid.shape[0]
        if n_symbols == 0:
            return
        atype = plan.array_type
        status = plan.select(
            plan.handle, n_symbols, phases.shape[0],
            ffi.from_buffer(atype, grid), grid.shape[1],
            ffi.from_buffer(atype, phases), phases.shape[1],
            ffi.from_buffer(atype, out), out.shape[1],
            ffi.from_buffer(_SIZE_ARRAY, index), ffi.from_buffer(_DOUBLE_ARRAY, peak),
            scale, tie_margin, _workspace(plan.work_nbytes))
        if status:
            _check(status, "selective mapping")


def slm_runner(n: int, m: int, dtype):
    """Prepared selective-mapping search (see :mod:`._numpy_papr`)."""
    return _SlmRunner(n, m, dtype)
