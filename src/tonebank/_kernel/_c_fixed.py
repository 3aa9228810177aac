"""C implementation of the fixed-point FFT (cffi wrapper).

See :class:`tonebank._kernel._numpy_fixed.FixedFftRunner` for the
contract (the numpy integer model is the specification; the C kernel
returns identical integers, exponents and saturation counts).  The
arrays arrive validated: ``x`` is ``(B, n, 2)`` int16 (Q15) or int32
(Q31), C-contiguous.  The plan holds a copy of the quantised twiddle
table the Python side made, so both backends use the same codes.
"""

from __future__ import annotations

import numpy as np

from ._c import _check, ffi, lib

_STORAGE = {"q15": (np.dtype(np.int16), "int16_t[]"), "q31": (np.dtype(np.int32), "int32_t[]")}
_I64_ARRAY = ffi.typeof("int64_t[]")


class _FixedFftRunner:
    """One fixed-point FFT configuration on the C kernel (plan created once)."""

    def __init__(self, n: int, precision: str, twiddles: np.ndarray, shifts, convergent: bool):
        dtype, ctype = _STORAGE[precision]
        self.n = n
        self._dtype = dtype
        self._array_type = ffi.typeof(ctype)
        table = np.ascontiguousarray(twiddles, dtype=dtype)
        shift_bytes = ffi.NULL if shifts is None else ffi.new("unsigned char[]", list(shifts))
        fmt = lib.TB_Q15 if precision == "q15" else lib.TB_Q31
        rounding = lib.TB_ROUND_CONVERGENT if convergent else lib.TB_ROUND_HALF_UP
        out = ffi.new("tb_fixed_plan **")
        _check(lib.tb_fixed_plan_create(n, fmt, ffi.from_buffer(self._array_type, table),
                                        shift_bytes, rounding, out),
               f"planning a {precision} fixed-point FFT of size {n}")
        self._handle = ffi.gc(out[0], lib.tb_fixed_plan_destroy)
        self._execute = lib.tb_fixed_fft_q15 if precision == "q15" else lib.tb_fixed_fft_q31

    def run(self, x: np.ndarray):
        count = x.shape[0]
        out = np.empty_like(x, dtype=self._dtype)
        exponent = np.zeros(count, dtype=np.int64)
        saturations = np.zeros(count, dtype=np.int64)
        if count == 0:
            return out, exponent, saturations
        atype = self._array_type
        status = self._execute(self._handle, count, ffi.from_buffer(atype, x),
                               ffi.from_buffer(atype, out), ffi.from_buffer(_I64_ARRAY, exponent),
                               ffi.from_buffer(_I64_ARRAY, saturations))
        if status:
            _check(status, "fixed-point FFT")
        return out, exponent, saturations


def fixed_fft_runner(n: int, precision: str, twiddles: np.ndarray, shifts,
                     convergent: bool) -> _FixedFftRunner:
    """Prepared fixed-point FFT (see :mod:`._numpy_fixed`)."""
    return _FixedFftRunner(n, precision, twiddles, shifts, convergent)
