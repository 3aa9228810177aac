"""C side of the FBMC/OQAM kernel operation (``csrc/tb_fbmc.c``), via cffi.

Same contract as :class:`tonebank._kernel._numpy_fbmc._FbmcRunner`; the
arrays arrive validated and C-contiguous.  Sizes the C FFT does not plan
run on the numpy twin (and are listed among the fallback sizes).
"""

from __future__ import annotations

import numpy as np

from . import _numpy_fbmc
from ._c import _check, _workspace, fallback_sizes, ffi, lib

_from_buffer = ffi.from_buffer


class _FbmcRunner:
    """FBMC/OQAM synthesis and analysis for one (m, K, dtype) on the C kernel."""

    def __init__(self, m: int, overlap: int, dtype, prototype: np.ndarray):
        single = np.dtype(dtype).char == "F"
        self._fallback = None
        if not lib.tb_fft_size_supported(m):
            fallback_sizes.add(m)
            self._fallback = _numpy_fbmc.fbmc_runner(m, overlap, dtype, prototype)
            return
        out = ffi.new("tb_fbmc_plan **")
        taps = np.ascontiguousarray(prototype, dtype=np.float64)
        _check(lib.tb_fbmc_plan_create(m, overlap, lib.TB_FLOAT32 if single else
                                       lib.TB_FLOAT64, _from_buffer("double[]", taps), out),
               f"planning FBMC/OQAM with {m} subcarriers")
        self._handle = ffi.gc(out[0], lib.tb_fbmc_plan_destroy)
        self._need = lib.tb_fbmc_workspace_size(self._handle)
        self._synth = lib.tb_fbmc_synthesize_f32 if single else lib.tb_fbmc_synthesize_f64
        self._analyze = lib.tb_fbmc_analyze_f32 if single else lib.tb_fbmc_analyze_f64
        self._atype = ffi.typeof(("float" if single else "double") + "[]")

    def synthesize(self, grid, start_symbol, out):
        if self._fallback is not None:
            return self._fallback.synthesize(grid, start_symbol, out)
        batch, n_symbols, m = grid.shape
        if batch == 0:
            return
        atype = self._atype
        status = self._synth(self._handle, batch, n_symbols, start_symbol,
                             _from_buffer(atype, grid), n_symbols * m,
                             _from_buffer(atype, out), out.shape[-1],
                             _workspace(self._need))
        if status:
            _check(status, "FBMC/OQAM synthesis")

    def analyze(self, x, start_symbol, out, separate):
        if self._fallback is not None:
            return self._fallback.analyze(x, start_symbol, out, separate)
        batch, n_symbols = out.shape[0], out.shape[1]
        if batch * n_symbols == 0:
            return
        atype = self._atype
        status = self._analyze(self._handle, batch, n_symbols, start_symbol,
                               _from_buffer(atype, x), x.shape[-1], 1 if separate else 0,
                               _from_buffer(atype, out), out[0].size, _workspace(self._need))
        if status:
            _check(status, "FBMC/OQAM analysis")


def fbmc_runner(m: int, overlap: int, dtype, prototype: np.ndarray):
    """Prepared FBMC/OQAM operations (see :func:`._numpy_fbmc.fbmc_runner`)."""
    return _FbmcRunner(m, overlap, dtype, prototype)
