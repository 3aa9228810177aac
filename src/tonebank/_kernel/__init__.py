"""The kernel seam: one small interface, two implementations.

Everything above this package calls the kernel through :func:`active`,
which returns the implementation module in force (:mod:`._c` or
:mod:`._numpy`); nothing above it imports cffi or branches on the backend.

The interface
-------------
Each implementation module provides:

``NAME``
    ``"c"`` or ``"numpy"``.
``fft(x, out, inverse, scale) -> None``
    ``out[...] = scale * DFT(x)`` along the last axis, where the forward
    DFT uses ``exp(-2j*pi*j*k/n)`` and the inverse ``exp(+2j*pi*j*k/n)``
    (neither scaled).  ``x`` and ``out`` are numpy arrays of the same shape
    ``(..., n)`` with ``n >= 1`` and the same dtype, complex64 or
    complex128, any strides; ``out`` is writeable and is either ``x``
    itself (in place) or does not overlap it.  The public wrapper
    (:func:`tonebank.fft`) validates all of this before the call.
``fft_runner(n, dtype, inverse, scale) -> run``
    Prepare ``run(x, out=None) -> out``, which does what ``fft(x, out,
    inverse, scale)`` does for arrays of that last-axis length ``n`` and
    dtype, with the per-call work (plan look-up, constants) done once.
    With ``out=None`` it allocates a C-contiguous output itself, which
    lets the C runner take its shortest path for single symbols.
``ofdm_runner(n, dtype, bins_a, bins_b) -> runner``
    Fused OFDM symbols on an ``n``-point transform: values of table "a"
    go to FFT positions ``bins_a`` and of table "b" to ``bins_b``
    (distinct, natural FFT order, ``numpy.uintp``).  The runner's
    ``synthesize(a, b, cp, out, scale)`` scatters, inverse-transforms and
    writes each symbol with its cyclic prefix; ``analyze(x, cp, a, b,
    scale)`` skips the prefixes, transforms and gathers.
    ``synthesizer(n_symbols, cp, b, scale)`` and ``analyzer(n_symbols,
    cp, scale)`` return prepared single-signal calls with those arguments
    bound.  Shapes and layouts: :class:`tonebank._kernel._numpy._OfdmRunner`.
``fbmc_runner(m, overlap, dtype, prototype) -> runner``
    FBMC/OQAM on ``m`` subcarriers (even) with a real prototype of
    ``overlap * m`` taps (``_numpy_fbmc.py`` / ``_c_fbmc.py``, C kernel
    ``csrc/tb_fbmc.c``).  The runner's ``synthesize(grid, start_symbol,
    out)`` sends each complex value of the (B, S, m) grid as two staggered
    real half-symbols and writes (B, S m + tail) samples, tail =
    ``overlap * m - m/2``; ``analyze(x, start_symbol, out, separate)``
    writes the real decisions packed as (B, S, m) complex values, or with
    ``separate`` the (B, S, 2, m) complex matched-filter outputs.  Shapes
    and the signal model: :class:`tonebank._kernel._numpy_fbmc._FbmcRunner`.
``slm_runner(n, m, dtype) -> runner``
    Selective mapping (:mod:`tonebank.papr`): ``runner.select(grid,
    phases, out, index, peak, scale, tie_margin)`` multiplies each grid
    row (S, n) by each of U phase sequences (U, n), zero-pads it to an
    ``m``-point inverse transform, measures the peak power and keeps only
    the lowest-peak candidate (ties within ``tie_margin`` go to the lowest
    index): ``out`` (S, m) its samples, ``index`` (S,) ``numpy.uintp`` and
    ``peak`` (S,) float64.  The C kernel never holds more than two
    candidates; the numpy twin materialises them in blocks.  Contract:
    :class:`tonebank._kernel._numpy_papr._SlmRunner`.
``channel_fir(x, hist, taps, interval, offset, out) -> None``
    Time-varying FIR of the channel models (C op ``tb_channel_fir_*``,
    ``csrc/tb_channel.c``; modules ``_c_channel`` / ``_numpy_channel``):
    ``out[r, i] = sum_m c_m(i) x[r, i - m]`` over ``L`` lags, with the
    ``L - 1`` samples before ``x[r, 0]`` in ``hist[r]`` and taps linear in
    time between knots ``interval`` samples apart (``offset``: samples
    from knot 0 to ``x[:, 0]``; one knot = constant taps).  ``x``, ``out``
    (R, n), ``hist`` (R, L - 1), ``taps`` (S, K, L), row ``r`` using set
    ``r % S``; C-contiguous, one complex dtype.  Contract:
    :func:`tonebank._kernel._numpy_channel.channel_fir`.
``halves_correlation(x, period, window) -> (p, r)``
    Sliding correlation behind the synchronisation metrics (C op
    ``tb_halves_correlation_*``, ``csrc/tb_halves.c``; modules ``_c_sync``
    / ``_numpy_sync``): ``p[..., d] = sum_{m < window} conj(x[..., d+m])
    x[..., d+m+period]`` and ``r[..., d] = sum_{m < window}
    |x[..., d+m+period]|^2`` for ``d < n - period - window + 1``, as
    running sums in double restarted every 4096 outputs.  Unlike the
    other ops it allocates and returns its outputs (``p`` of ``x``'s
    complex dtype, ``r`` real) and checks its own arguments.  Contract:
    :func:`tonebank._kernel._numpy_sync.halves_correlation`.
``wola_runner(n, dtype, bins_a, bins_b, tx_up, rx_up) -> runner``
    Windowed-overlap-add OFDM: as ``ofdm_runner``,
    plus the rising transmit and receive ramps (float64 arrays of ``tx``
    and ``rx`` values).  ``synthesize`` writes each windowed symbol with
    its cyclic suffix and adds the suffix onto the next symbol's ramp-up
    (``sum(n + cp) + tx`` samples per signal); ``analyze`` weights the
    ``rx`` samples before each FFT window and at its end and folds them
    together before the transform.  Same ``synthesizer`` / ``analyzer``.
    Contract: :class:`tonebank._kernel._numpy_filterbank._WolaRunner`.
``fofdm_runner(n, m, dtype, bins_a, bins_b, taps, gain) -> runner``
    Filtered OFDM: each CP-OFDM symbol is convolved
    with the complex FIR ``taps`` by ``m``-point fast convolution and
    overlap-added (``sum(n + cp) + len(taps) - 1`` samples per signal);
    analysis applies the matched filter the same way, transforms the
    delayed window and scales bin ``k`` by ``gain[k]``.  Same methods.
    Contract: :class:`tonebank._kernel._numpy_filterbank._FofdmRunner`.
``fixed_fft_runner(n, precision, twiddles, shifts, convergent) -> runner``
    Fixed-point FFT (:mod:`tonebank.fixedpoint`; C op ``tb_fixed_fft_q15``
    / ``_q31``, ``csrc/tb_fixed.c``; modules ``_c_fixed`` /
    ``_numpy_fixed``): ``precision`` ``"q15"`` or ``"q31"``, ``twiddles``
    the quantised ``(n // 2, 2)`` table, ``shifts`` one right shift (0, 1
    or 2) per radix-2 stage or None for block floating point,
    ``convergent`` the rounding of every shift.  ``runner.run(x)`` takes
    ``(B, n, 2)`` int16 / int32 codes, C-contiguous, and returns ``(out,
    exponent, saturations)``: ``out`` of ``x``'s dtype and shape,
    ``exponent`` and ``saturations`` int64 ``(B,)``.  The numpy integer
    model is the specification and both give identical integers.
    Contract: :class:`tonebank._kernel._numpy_fixed.FixedFftRunner`.
``info() -> dict``
    Facts for :func:`tonebank.backend_info`.

Selection
---------
At import the C kernel is used when its compiled module loads, numpy
otherwise (with one :class:`RuntimeWarning` giving the reason).  The
environment variable ``TONEBANK_BACKEND`` (``c``, ``numpy`` or ``auto``)
forces a choice; ``TONEBANK_REQUIRE_C=1`` turns a missing C kernel into an
error.  :func:`set_backend` changes the process-wide default and
:func:`use_backend` overrides it in the current thread or async context.
"""

from __future__ import annotations

import contextvars
import os
import platform
import warnings
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from pathlib import Path

from . import _numpy

__all__ = [
    "BackendInfo",
    "BackendUnavailableError",
    "active",
    "backend_info",
    "set_backend",
    "use_backend",
]

#: Names accepted by :func:`set_backend` and :func:`use_backend`.
BACKEND_NAMES = ("auto", "c", "numpy")


class BackendUnavailableError(RuntimeError):
    """Raised when the C kernel is asked for but is not available."""


def _load_c():
    """Return ``(module, None)`` or ``(None, reason it is unavailable)``."""
    try:
        from . import _c
    except ImportError as exc:
        note = Path(__file__).with_name("_build_failure.txt")
        if note.exists():
            detail = note.read_text(encoding="utf-8").strip()
            return None, f"the C kernel failed to build when tonebank was installed ({detail})"
        return None, f"the compiled C kernel could not be imported ({exc})"
    return _c, None


_c_impl, _c_missing_reason = _load_c()
_impls = {"numpy": _numpy}
if _c_impl is not None:
    _impls["c"] = _c_impl


def _resolve(name: object, argument: str):
    """Map a backend name to its implementation, or raise a clear error."""
    if not isinstance(name, str) or name.strip().lower() not in BACKEND_NAMES:
        raise ValueError(f"{argument}={name!r} is not a backend; allowed: "
                         + ", ".join(repr(n) for n in BACKEND_NAMES))
    name = name.strip().lower()
    if name == "auto":
        return _impls.get("c", _numpy)
    if name == "c" and _c_impl is None:
        raise BackendUnavailableError(
            f"{argument}='c' asks for the C kernel, but {_c_missing_reason}; "
            "reinstall tonebank with a working C compiler, or use 'numpy'")
    return _impls[name]


def _initial_choice():
    env = os.environ.get("TONEBANK_BACKEND", "").strip()
    if os.environ.get("TONEBANK_REQUIRE_C", "") == "1" and _c_impl is None:
        raise BackendUnavailableError(
            f"TONEBANK_REQUIRE_C=1 but {_c_missing_reason}")
    if env and env.lower() != "auto":
        impl = _resolve(env, "TONEBANK_BACKEND")
        return impl, f"forced by the environment (TONEBANK_BACKEND={env})"
    if _c_impl is not None:
        return _c_impl, "automatic: the C kernel is available"
    warnings.warn(f"tonebank is running on its numpy fallback: {_c_missing_reason}",
                  RuntimeWarning, stacklevel=3)
    return _numpy, f"automatic: {_c_missing_reason}"


_default, _default_reason = _initial_choice()
_override: contextvars.ContextVar = contextvars.ContextVar("tonebank_backend", default=None)


def active():
    """Return the implementation module in force for the caller."""
    override = _override.get()
    return _default if override is None else override[0]


def set_backend(name: str) -> None:
    """Choose the process-wide default kernel backend.

    Parameters
    ----------
    name : {"auto", "c", "numpy"}
        ``"auto"`` picks the C kernel when it is available.

    Raises
    ------
    ValueError
        If *name* is not one of the allowed names.
    BackendUnavailableError
        If ``"c"`` is asked for and the C kernel is not available.

    See Also
    --------
    use_backend : override the backend in a ``with`` block only.
    backend_info : report which backend runs and why.

    Notes
    -----
    A :func:`use_backend` block in force in the calling thread still takes
    precedence inside that block.

    Examples
    --------
    >>> import tonebank
    >>> tonebank.set_backend("numpy")
    >>> tonebank.backend_info()["backend"]
    'numpy'
    >>> tonebank.set_backend("auto")
    """
    global _default, _default_reason
    _default = _resolve(name, "name")
    _default_reason = f"set_backend({name!r})"


@contextmanager
def use_backend(name: str) -> Iterator[None]:
    """Run a block of code on a given kernel backend.

    The choice applies to the current thread (or async task) only, like
    :func:`decimal.localcontext`; threads started inside the block use the
    process-wide default unless they run in a copy of this context
    (:func:`contextvars.copy_context`).

    Parameters
    ----------
    name : {"auto", "c", "numpy"}
        Backend to use inside the block.

    Raises
    ------
    ValueError
        If *name* is not one of the allowed names.
    BackendUnavailableError
        If ``"c"`` is asked for and the C kernel is not available.

    See Also
    --------
    set_backend : change the process-wide default.

    Examples
    --------
    >>> import numpy as np, tonebank
    >>> with tonebank.use_backend("numpy"):
    ...     y = tonebank.fft(np.ones(4))
    >>> y
    array([4.+0.j, 0.+0.j, 0.+0.j, 0.+0.j])
    """
    impl = _resolve(name, "name")
    token = _override.set((impl, f"use_backend({name!r}) in this context"))
    try:
        yield
    finally:
        _override.reset(token)


class BackendInfo(Mapping):
    """Read-only report of the kernel backend in force (a mapping).

    Notes
    -----
    The keys are:

    ``backend``
        ``"c"`` or ``"numpy"``: the implementation that runs now.
    ``reason``
        Why that backend runs.
    ``c_available``, ``c_unavailable_reason``
        Whether the compiled C kernel loaded, and if not, why.
    ``c_kernel_version``, ``c_compiler``, ``c_flags``, ``c_fft_max_size``
        Facts compiled into the C kernel (present when it is available).
    ``c_simd``
        Which compiled copy of the C kernels runs on this CPU: ``"avx2"``
        (x86-64 with AVX2, builds by gcc or clang) or ``"portable"``; both
        give bit-identical results.
    ``fft_sizes``
        Which transform sizes each backend computes.
    ``numpy_fallback_sizes``
        Sizes the C backend could not plan so far in this process, which
        ran on numpy instead.
    ``numpy_version``, ``python_version``, ``machine``
        The environment.

    ``str(info)`` gives a printable report.
    """

    def __init__(self, data: dict):
        self._data = dict(data)

    def __getitem__(self, key):
        return self._data[key]

    def __iter__(self):
        return iter(self._data)

    def __len__(self):
        return len(self._data)

    def __repr__(self):
        return f"BackendInfo({self._data!r})"

    def __str__(self):
        width = max(len(k) for k in self._data)
        return "\n".join(f"{k:<{width}}  {v}" for k, v in self._data.items())


def backend_info() -> BackendInfo:
    """Report which kernel backend runs, why, and how the C kernel was built.

    Returns
    -------
    BackendInfo
        A read-only mapping; see :class:`BackendInfo` for its keys.
        ``print(tonebank.backend_info())`` shows it as a table.

    See Also
    --------
    set_backend, use_backend

    Examples
    --------
    >>> import tonebank
    >>> info = tonebank.backend_info()
    >>> info["backend"] in ("c", "numpy")
    True
    """
    override = _override.get()
    impl, reason = (_default, _default_reason) if override is None else override
    data = {
        "backend": impl.NAME,
        "reason": reason,
        "c_available": _c_impl is not None,
        "c_unavailable_reason": _c_missing_reason,
    }
    data.update(_numpy.info())
    if _c_impl is not None:
        data.update(_c_impl.info())
        data["fft_sizes"] = (f"C: n = 2^a 3^b 5^c, 1 <= n <= {data['c_fft_max_size']}; "
                             "other n >= 1 on numpy")
    else:
        data["fft_sizes"] = "numpy: any n >= 1"
    data["python_version"] = platform.python_version()
    data["machine"] = platform.machine()
    return BackendInfo(data)
