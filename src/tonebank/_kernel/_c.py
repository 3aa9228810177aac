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
#: Plans kept for reuse.  A plan costs about 16 n bytes; past this many
#: sizes the oldest is dropped (a sweep over thousands of sizes must not
#: hold them all).  Runners and FftPlan objects keep their own plan alive.
_PLANS_MAX = 128


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
            while len(_plans) >= _PLANS_MAX:
                del _plans[next(iter(_plans))]
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
_SIZE_ARRAY = ffi.typeof("size_t[]")
_FLOAT_ARRAY = ffi.typeof("float[]")
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


#: Inputs of at most this many elements are copied and transformed in
#: place by the prepared runners (see :func:`fft_runner`): below it the copy
#: costs less than the checks and the buffer export it saves (measured on
#: the build machine: about 0.1 us saved per 64-point call).
_COPY_IN_PLACE_MAX = 256


def fft_runner(n: int, dtype: np.dtype, inverse: bool, scale: float):
    """Return ``run(x, out=None) -> out`` doing :func:`fft` for one configuration.

    With ``out=None`` the runner allocates the output.  A C-contiguous,
    aligned input then takes the shortest path there is from Python to
    the kernel: everything the call needs is bound here once, so a
    single-symbol transform costs little more than the cffi call itself.
    """
    key = (n, dtype.char)
    plan = _plans.get(key) or _new_plan(key)
    if plan is None:
        def run_numpy(x, out=None):
            if out is None:
                out = np.empty(x.shape, dtype)
            _numpy.fft(x, out, inverse, scale)
            return out
        return run_numpy
    direction = _INVERSE if inverse else _FORWARD
    # The constant arguments, bound once in a binding-side struct (see
    # tonebank._build_kernel); `plan`, used below, keeps its handle alive.
    call = ffi.new("tbpy_fft_call *", {"plan": plan.handle, "direction": direction,
                                       "single": dtype.char == "F", "n": n, "scale": scale})
    rows = lib.tbpy_fft_rows
    need = plan.work_nbytes
    empty, from_buffer, thread = np.empty, _from_buffer, _thread

    def run(x, out=None):
        # `out`, when given, has x's shape and the result dtype and does
        # not overlap x unless it is x (the caller checked).
        if out is None and x.size <= _COPY_IN_PLACE_MAX:
            # A small input (one short symbol): a C-ordered copy transformed
            # in place costs less than an empty result, the layout checks
            # and a second buffer export.
            out = x.copy()
            src = dst = from_buffer(out)
        else:
            if out is None:
                out = empty(x.shape, dtype)
            flags = x.flags          # the input may be read-only (not "carray")
            if not (out.flags.carray and flags.c_contiguous and flags.aligned):
                fft(x, out, inverse, scale)
                return out
            src, dst = from_buffer(x), from_buffer(out)
        batch = out.size // n
        if batch:
            status = rows(call, batch, src, dst,
                          thread.buf if thread.nbytes >= need else _workspace(need))
            if status:
                _check(status, "an FFT")
        return out
    return run


class _OfdmPlan:
    """A C plan of the fused OFDM operations (see :func:`ofdm_runner`)."""

    __slots__ = ("handle", "work_nbytes", "synth", "analyze", "array_type", "n_a", "n_b")

    def __init__(self, n: int, single: bool, bins_a: np.ndarray, bins_b: np.ndarray):
        precision = lib.TB_FLOAT32 if single else lib.TB_FLOAT64
        out = ffi.new("tb_ofdm_plan **")
        table_a = ffi.new("size_t[]", [int(k) for k in bins_a])
        table_b = ffi.new("size_t[]", [int(k) for k in bins_b]) if len(bins_b) else ffi.NULL
        _check(lib.tb_ofdm_plan_create(n, precision, len(bins_a), table_a, len(bins_b),
                                       table_b, out),
               f"planning OFDM symbols of size {n}")
        self.handle = ffi.gc(out[0], lib.tb_ofdm_plan_destroy)
        self.work_nbytes = lib.tb_ofdm_workspace_size(self.handle)
        self.synth = lib.tb_ofdm_synthesize_f32 if single else lib.tb_ofdm_synthesize_f64
        self.analyze = lib.tb_ofdm_analyze_f32 if single else lib.tb_ofdm_analyze_f64
        self.array_type = ffi.typeof(("float" if single else "double") + "[]")
        self.n_a = len(bins_a)
        self.n_b = len(bins_b)


class _OfdmRunner:
    """Fused OFDM synthesis and analysis for one configuration (C kernel).

    See :func:`tonebank._kernel._numpy.ofdm_runner` for the contract; the
    arrays arrive validated and C-contiguous.
    """

    def __init__(self, n, dtype, bins_a, bins_b):
        if lib.tb_fft_size_supported(n):
            self._plan = _OfdmPlan(n, np.dtype(dtype).char == "F", bins_a, bins_b)
            self._fallback = None
        else:
            fallback_sizes.add(n)
            self._plan = None
            self._fallback = _numpy.ofdm_runner(n, dtype, bins_a, bins_b)

    def synthesize(self, a, b, cp, out, scale):
        if self._plan is None:
            return self._fallback.synthesize(a, b, cp, out, scale)
        plan = self._plan
        batch, n_symbols, n_a = a.shape
        if batch * n_symbols == 0:
            return
        if plan.n_b:
            b_ptr = _from_buffer(plan.array_type, b)
            b_batch = b.shape[1] * b.shape[2] if b.shape[0] > 1 else 0
            b_symbol = b.shape[2]
        else:
            b_ptr, b_batch, b_symbol = ffi.NULL, 0, 0
        status = plan.synth(
            plan.handle, batch, n_symbols, _from_buffer(_SIZE_ARRAY, cp),
            _from_buffer(plan.array_type, a), n_symbols * n_a, n_a,
            b_ptr, b_batch, b_symbol,
            _from_buffer(plan.array_type, out), out.shape[-1], scale,
            _workspace(plan.work_nbytes))
        if status:
            _check(status, "OFDM synthesis")

    def analyze(self, x, cp, a, b, scale):
        if self._plan is None:
            return self._fallback.analyze(x, cp, a, b, scale)
        plan = self._plan
        batch, n_symbols, n_a = a.shape
        if batch * n_symbols == 0:
            return
        if b is not None and plan.n_b:
            b_ptr, b_batch, b_symbol = (_from_buffer(plan.array_type, b),
                                        n_symbols * b.shape[2], b.shape[2])
        else:
            b_ptr, b_batch, b_symbol = ffi.NULL, 0, 0
        status = plan.analyze(
            plan.handle, batch, n_symbols, _from_buffer(_SIZE_ARRAY, cp),
            _from_buffer(plan.array_type, x), x.shape[-1],
            _from_buffer(plan.array_type, a), n_symbols * n_a, n_a,
            b_ptr, b_batch, b_symbol, scale,
            _workspace(plan.work_nbytes))
        if status:
            _check(status, "OFDM analysis")

    def synthesizer(self, n_symbols, cp, b, scale):
        """``run(a, out)`` for one signal with everything but the data fixed
        (see :meth:`._numpy._OfdmRunner.synthesizer`)."""
        if self._plan is None:
            return self._fallback.synthesizer(n_symbols, cp, b, scale)
        plan = self._plan
        atype, need = plan.array_type, plan.work_nbytes
        # Everything but the data is bound in a binding-side struct (see
        # tonebank._build_kernel); `keep` holds what it points into.
        keep = (plan, _from_buffer(_SIZE_ARRAY, cp),
                _from_buffer(atype, b) if plan.n_b else ffi.NULL)
        call = ffi.new("tbpy_ofdm_call *", {
            "plan": plan.handle, "single": atype is _FLOAT_ARRAY, "n_symbols": n_symbols,
            "cp": keep[1], "b": keep[2], "n_a": plan.n_a,
            "n_b": b.shape[-1] if plan.n_b else 0, "scale": scale})
        synthesize1, from_buffer = lib.tbpy_ofdm_synthesize1, _from_buffer

        def run(a, out, _keep=(keep, cp, b)):
            status = synthesize1(call, from_buffer(a), from_buffer(out),
                                 _thread.buf if _thread.nbytes >= need else _workspace(need))
            if status:
                _check(status, "OFDM synthesis")
        return run

    def analyzer(self, n_symbols, cp, scale):
        """``run(x, a, b)`` for one signal (see :meth:`._numpy._OfdmRunner.analyzer`)."""
        if self._plan is None:
            return self._fallback.analyzer(n_symbols, cp, scale)
        plan = self._plan
        atype, need = plan.array_type, plan.work_nbytes
        keep = (plan, _from_buffer(_SIZE_ARRAY, cp))
        call = ffi.new("tbpy_ofdm_call *", {
            "plan": plan.handle, "single": atype is _FLOAT_ARRAY, "n_symbols": n_symbols,
            "cp": keep[1], "b": ffi.NULL, "n_a": plan.n_a, "n_b": plan.n_b,
            "scale": scale})
        analyze1, from_buffer, null = lib.tbpy_ofdm_analyze1, _from_buffer, ffi.NULL

        def run(x, a, b, _keep=(keep, cp)):
            status = analyze1(call, from_buffer(x), from_buffer(a),
                              null if b is None else from_buffer(b),
                              _thread.buf if _thread.nbytes >= need else _workspace(need))
            if status:
                _check(status, "OFDM analysis")
        return run


def ofdm_runner(n: int, dtype: np.dtype, bins_a: np.ndarray, bins_b: np.ndarray):
    """Prepared fused OFDM operations (see :func:`._numpy.ofdm_runner`)."""
    return _OfdmRunner(n, dtype, bins_a, bins_b)


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


# The kernel operations of the other modem stages: cffi wrappers, one module per
# family (each states its contract), re-exported here as the interface.
from ._c_channel import channel_fir  # noqa: E402,F401
from ._c_fbmc import fbmc_runner  # noqa: E402,F401
from ._c_filterbank import fofdm_runner, wola_runner  # noqa: E402,F401
from ._c_papr import slm_runner  # noqa: E402,F401
from ._c_sync import halves_correlation  # noqa: E402,F401
from ._c_fixed import fixed_fft_runner  # noqa: E402,F401
