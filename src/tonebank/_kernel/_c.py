"""C implementation of the kernel interface, through the cffi-built module.

This is the only module of the package that touches cffi.  It turns numpy
arrays into pointers and strides, keeps a cache of immutable C plans, and
gives every thread its own workspace, so calls from several threads run
in parallel (cffi releases the GIL around each C call).

Importing this module raises ImportError when the compiled kernel is
absent; :mod:`tonebank._kernel` handles that.
"""

from __future__ import annotations

import threading

import numpy as np

from ._tonebank_c import ffi, lib
from . import _numpy

NAME = "c"

#: Sizes that the C kernel could not plan and that ran on numpy instead.
fallback_sizes: set[int] = set()

_plans: dict = {}          # (n, dtype char) -> _Plan, or None if unsupported
_plans_lock = threading.Lock()


class _ThreadWorkspace(threading.local):
    """Per-thread scratch buffer for the kernel (grown on demand)."""

    nbytes = -1
    buf = None


_thread = _ThreadWorkspace()


class KernelError(RuntimeError):
    """A non-zero status from the C kernel after Python-side validation.

    Python validates every argument before calling C, so this signals a
    bug in tonebank, not a user error.
    """


def _status_text(status: int) -> str:
    return ffi.string(lib.tb_strerror(status)).decode("ascii", "replace")


def _check(status: int, what: str) -> None:
    if status != lib.TB_OK:
        raise KernelError(f"tonebank C kernel: {what} failed: {_status_text(status)} "
                          f"(status {status}); please report this as a bug")


class _Plan:
    """A C FFT plan with what a call needs, resolved once."""

    __slots__ = ("handle", "execute", "work_nbytes", "array_type", "pointer_type")

    def __init__(self, n: int, single: bool):
        precision = lib.TB_FLOAT32 if single else lib.TB_FLOAT64
        out = ffi.new("tb_fft_plan **")
        _check(lib.tb_fft_plan_create(n, precision, out), f"planning an FFT of size {n}")
        self.handle = ffi.gc(out[0], lib.tb_fft_plan_destroy)
        self.execute = lib.tb_fft_execute_f32 if single else lib.tb_fft_execute_f64
        self.work_nbytes = lib.tb_fft_workspace_size(self.handle)
        scalar = "float" if single else "double"
        self.array_type = ffi.typeof(scalar + "[]")
        self.pointer_type = ffi.typeof(scalar + " *")


def _new_plan(key):
    """Create (or find) the plan for ``key = (n, dtype char)``; None if unsupported."""
    with _plans_lock:
        if key not in _plans:
            n = key[0]
            if lib.tb_fft_size_supported(n):
                _plans[key] = _Plan(n, key[1] == "F")
            else:
                _plans[key] = None
                fallback_sizes.add(n)
        return _plans[key]


def _workspace(nbytes: int):
    """This thread's workspace, grown to at least *nbytes* bytes."""
    if _thread.nbytes < nbytes:
        # double[] guarantees the alignment the kernel asks for.
        _thread.buf = ffi.new("double[]", max(1, -(-nbytes // 8)))
        _thread.nbytes = nbytes
    return _thread.buf


def _rows(arr: np.ndarray):
    """Describe *arr* (..., n) as ``(batch, row_stride, stride)`` in elements.

    Returns None when the leading axes cannot be expressed with a single
    row stride (or a stride is not a whole number of elements); the caller
    then copies.
    """
    if arr.flags.c_contiguous:
        n = arr.shape[-1]
        return arr.size // n, n, 1
    itemsize = arr.itemsize
    strides = arr.strides
    batch, row_stride, span = 1, 0, None
    for dim, stride in zip(arr.shape[-2::-1], strides[-2::-1]):
        if dim == 1:
            continue
        if span is None:
            row_stride = stride
        elif stride != span:
            return None
        span = stride * dim
        batch *= dim
    stride = strides[-1]
    if row_stride % itemsize or stride % itemsize:
        return None
    return batch, row_stride // itemsize, stride // itemsize


def _pointer(arr: np.ndarray, plan: _Plan):
    if arr.flags.c_contiguous:
        return _from_buffer(plan.array_type, arr)
    # Strided views (including negative strides) are not buffers cffi can
    # take; address the first element directly.  The caller keeps *arr*
    # alive for the duration of the call.
    return ffi.cast(plan.pointer_type, arr.ctypes.data)


_from_buffer = ffi.from_buffer
_FORWARD, _INVERSE = lib.TB_FORWARD, lib.TB_INVERSE


def _execute_contiguous(plan: _Plan, direction: int, x: np.ndarray, out: np.ndarray,
                        scale: float) -> None:
    """The common case: whole, aligned rows back to back on both sides.

    Kept short because every single-symbol call goes through it.
    """
    n = x.shape[-1]
    batch = x.size // n
    if batch:
        need = plan.work_nbytes
        status = plan.execute(
            plan.handle, direction, batch,
            _from_buffer(plan.array_type, x), n, 1,
            _from_buffer(plan.array_type, out), n, 1,
            scale, _thread.buf if _thread.nbytes >= need else _workspace(need))
        if status:
            _check(status, "an FFT")


def fft(x: np.ndarray, out: np.ndarray, inverse: bool, scale: float) -> None:
    """``out[...] = scale * DFT(x)`` along the last axis (see the interface)."""
    key = (x.shape[-1], x.dtype.char)
    plan = _plans.get(key)
    if plan is None:
        plan = _new_plan(key)
        if plan is None:
            _numpy.fft(x, out, inverse, scale)
            return
    if out.flags.carray and x.flags.c_contiguous and x.flags.aligned:
        _execute_contiguous(plan, _INVERSE if inverse else _FORWARD, x, out, scale)
        return
    # The kernel needs each scalar aligned to its size (numpy's "aligned"
    # flag); a misaligned view (from a byte buffer) goes through a copy.
    x_rows = _rows(x) if x.flags.aligned else None
    if x_rows is None:
        x = np.array(x, order="C")
        x_rows = _rows(x)
    if x_rows[0] == 0:
        return
    target = out
    out_rows = _rows(out) if out.flags.aligned else None
    if out_rows is None:
        target = np.empty(out.shape, out.dtype)
        out_rows = _rows(target)
    status = plan.execute(
        plan.handle, _INVERSE if inverse else _FORWARD, x_rows[0],
        _pointer(x, plan), x_rows[1], x_rows[2],
        _pointer(target, plan), out_rows[1], out_rows[2],
        scale, _workspace(plan.work_nbytes),
    )
    if status:
        _check(status, "an FFT")
    if target is not out:
        out[...] = target


def fft_runner(n: int, dtype: np.dtype, inverse: bool, scale: float):
    """Return ``run(x, out)`` doing :func:`fft` for one prepared configuration."""
    key = (n, dtype.char)
    plan = _plans.get(key) or _new_plan(key)
    if plan is None:
        def run_numpy(x, out):
            _numpy.fft(x, out, inverse, scale)
        return run_numpy
    direction = _INVERSE if inverse else _FORWARD

    def run(x, out):
        if out.flags.carray and x.flags.c_contiguous and x.flags.aligned:
            _execute_contiguous(plan, direction, x, out, scale)
        else:
            fft(x, out, inverse, scale)
    return run


def info() -> dict:
    """Facts about this backend for :func:`tonebank.backend_info`."""
    return {
        "c_kernel_version": ffi.string(lib.tb_version()).decode(),
        "c_compiler": ffi.string(lib.tbpy_compiler()).decode(),
        "c_flags": ffi.string(lib.tbpy_cflags()).decode(),
        "c_simd": ffi.string(lib.tb_fft_plan_simd(_new_plan((64, "D")).handle)).decode(),
        "c_fft_max_size": int(lib.TB_FFT_MAX_SIZE),
        "numpy_fallback_sizes": tuple(sorted(fallback_sizes)),
    }
