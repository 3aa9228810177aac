"""C implementation of the windowed and filtered OFDM kernel operations.

The cffi side of ``tb_wola_*`` and ``tb_fofdm_*`` (``csrc/tonebank.h``);
the numpy twins and the contracts are in :mod:`._numpy_filterbank`.
Arrays arrive validated and C-contiguous.  Sizes the C FFT does not plan
run on the numpy twin (and are listed in ``backend_info()``).
"""

from __future__ import annotations

import numpy as np

from . import _numpy_filterbank
from ._c import _SIZE_ARRAY, _check, _from_buffer, _thread, _workspace, fallback_sizes
from ._tonebank_c import ffi, lib


def _size_table(values) -> object:
    return ffi.new("size_t[]", [int(k) for k in values]) if len(values) else ffi.NULL


def _double_table(values) -> object:
    values = np.ascontiguousarray(values, dtype=np.float64).ravel()
    return ffi.new("double[]", values.tolist()) if values.size else ffi.NULL


class _Runner:
    """What the two fused operations share: pointers, strides, single-signal calls."""

    def _bind(self, handle, single, work_nbytes, synth32, synth64, an32, an64, n_a, n_b):
        self._handle = handle
        self._synth = synth32 if single else synth64
        self._analyze = an32 if single else an64
        self._atype = ffi.typeof(("float" if single else "double") + "[]")
        self._need = work_nbytes
        self._n_a, self._n_b = n_a, n_b

    def synthesize(self, a, b, cp, out, scale):
        if self._fallback is not None:
            return self._fallback.synthesize(a, b, cp, out, scale)
        batch, n_symbols, n_a = a.shape
        if batch * n_symbols == 0:
            out[...] = 0
            return
        atype = self._atype
        if self._n_b:
            b_ptr = _from_buffer(atype, b)
            b_batch = b.shape[1] * b.shape[2] if b.shape[0] > 1 else 0
            b_symbol = b.shape[2]
        else:
            b_ptr, b_batch, b_symbol = ffi.NULL, 0, 0
        status = self._synth(self._handle, batch, n_symbols, _from_buffer(_SIZE_ARRAY, cp),
                             _from_buffer(atype, a), n_symbols * n_a, n_a, b_ptr, b_batch,
                             b_symbol, _from_buffer(atype, out), out.shape[-1], scale,
                             _workspace(self._need))
        if status:
            _check(status, self._what + " synthesis")

    def analyze(self, x, cp, a, b, scale):
        if self._fallback is not None:
            return self._fallback.analyze(x, cp, a, b, scale)
        batch, n_symbols, n_a = a.shape
        if batch * n_symbols == 0:
            return
        atype = self._atype
        if b is not None and self._n_b:
            b_ptr, b_batch, b_symbol = (_from_buffer(atype, b), n_symbols * b.shape[2],
                                        b.shape[2])
        else:
            b_ptr, b_batch, b_symbol = ffi.NULL, 0, 0
        status = self._analyze(self._handle, batch, n_symbols, _from_buffer(_SIZE_ARRAY, cp),
                               _from_buffer(atype, x), x.shape[-1],
                               _from_buffer(atype, a), n_symbols * n_a, n_a,
                               b_ptr, b_batch, b_symbol, scale, _workspace(self._need))
        if status:
            _check(status, self._what + " analysis")

    def synthesizer(self, n_symbols, cp, b, scale):
        """``run(a, out)`` for one signal with everything but the data fixed."""
        if self._fallback is not None:
            return self._fallback.synthesizer(n_symbols, cp, b, scale)
        handle, call, atype, n_a, need = (self._handle, self._synth, self._atype,
                                          self._n_a, self._need)
        cp_ptr = _from_buffer(_SIZE_ARRAY, cp)
        if self._n_b:
            b_ptr, n_b = _from_buffer(atype, b), b.shape[-1]
        else:
            b_ptr, n_b = ffi.NULL, 0
        what = self._what + " synthesis"

        def run(a, out, _keep=(cp, b)):
            if n_symbols == 0:
                out[...] = 0
                return
            status = call(handle, 1, n_symbols, cp_ptr, _from_buffer(atype, a), 0, n_a,
                          b_ptr, 0, n_b, _from_buffer(atype, out), 0, scale,
                          _thread.buf if _thread.nbytes >= need else _workspace(need))
            if status:
                _check(status, what)
        return run

    def analyzer(self, n_symbols, cp, scale):
        """``run(x, a, b)`` for one signal, ``b`` may be None."""
        if self._fallback is not None:
            return self._fallback.analyzer(n_symbols, cp, scale)
        handle, call, atype, n_a, n_b, need = (self._handle, self._analyze, self._atype,
                                               self._n_a, self._n_b, self._need)
        cp_ptr = _from_buffer(_SIZE_ARRAY, cp)
        null = ffi.NULL
        what = self._what + " analysis"

        def run(x, a, b, _keep=cp):
            if n_symbols == 0:
                return
            status = call(handle, 1, n_symbols, cp_ptr, _from_buffer(atype, x), 0,
                          _from_buffer(atype, a), 0, n_a,
                          null if b is None else _from_buffer(atype, b), 0, n_b, scale,
                          _thread.buf if _thread.nbytes >= need else _workspace(need))
            if status:
                _check(status, what)
        return run


class _WolaRunner(_Runner):
    _what = "WOLA OFDM"

    def __init__(self, n, dtype, bins_a, bins_b, tx_up, rx_up):
        single = np.dtype(dtype).char == "F"
        if not lib.tb_fft_size_supported(n):
            fallback_sizes.add(n)
            self._fallback = _numpy_filterbank.wola_runner(n, dtype, bins_a, bins_b,
                                                           tx_up, rx_up)
            return
        self._fallback = None
        out = ffi.new("tb_wola_plan **")
        _check(lib.tb_wola_plan_create(
            n, lib.TB_FLOAT32 if single else lib.TB_FLOAT64,
            len(bins_a), _size_table(bins_a), len(bins_b), _size_table(bins_b),
            len(tx_up), _double_table(tx_up), len(rx_up), _double_table(rx_up), out),
            f"planning WOLA OFDM symbols of size {n}")
        handle = ffi.gc(out[0], lib.tb_wola_plan_destroy)
        self._bind(handle, single, lib.tb_wola_workspace_size(handle),
                   lib.tb_wola_synthesize_f32, lib.tb_wola_synthesize_f64,
                   lib.tb_wola_analyze_f32, lib.tb_wola_analyze_f64,
                   len(bins_a), len(bins_b))


def wola_runner(n, dtype, bins_a, bins_b, tx_up, rx_up):
    """Prepared WOLA OFDM operations (see :func:`._numpy_filterbank.wola_runner`)."""
    return _WolaRunner(n, dtype, bins_a, bins_b, tx_up, rx_up)


class _FofdmRunner(_Runner):
    _what = "filtered OFDM"

    def __init__(self, n, m, dtype, bins_a, bins_b, taps, gain):
        single = np.dtype(dtype).char == "F"
        if not (lib.tb_fft_size_supported(n) and lib.tb_fft_size_supported(m)):
            fallback_sizes.update(k for k in (n, m) if not lib.tb_fft_size_supported(k))
            self._fallback = _numpy_filterbank.fofdm_runner(n, m, dtype, bins_a, bins_b,
                                                            taps, gain)
            return
        self._fallback = None
        h = np.ascontiguousarray(taps, dtype=np.complex128)
        out = ffi.new("tb_fofdm_plan **")
        _check(lib.tb_fofdm_plan_create(
            n, m, lib.TB_FLOAT32 if single else lib.TB_FLOAT64,
            len(bins_a), _size_table(bins_a), len(bins_b), _size_table(bins_b),
            h.size, _double_table(h.view(np.float64)), _double_table(gain), out),
            f"planning filtered OFDM symbols of size {n} (convolution size {m})")
        handle = ffi.gc(out[0], lib.tb_fofdm_plan_destroy)
        self._bind(handle, single, lib.tb_fofdm_workspace_size(handle),
                   lib.tb_fofdm_synthesize_f32, lib.tb_fofdm_synthesize_f64,
                   lib.tb_fofdm_analyze_f32, lib.tb_fofdm_analyze_f64,
                   len(bins_a), len(bins_b))


def fofdm_runner(n, m, dtype, bins_a, bins_b, taps, gain):
    """Prepared filtered-OFDM operations (see :func:`._numpy_filterbank.fofdm_runner`)."""
    return _FofdmRunner(n, m, dtype, bins_a, bins_b, taps, gain)
