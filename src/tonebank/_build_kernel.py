"""cffi builder for the tonebank C kernel (out-of-line API mode).

The package build (``pip install .``) calls :func:`make_builder` through
setuptools' ``cffi_modules`` hook; nothing here runs at import time of
:mod:`tonebank`, and importing this module has no side effect.

The cdef is the block of ``csrc/tonebank.h`` between the markers
``---- begin cffi declarations ----`` and ``---- end cffi declarations ----``,
read verbatim: the public header stays the single contract, and the only
reason for the markers is that cffi's parser does not accept the include
guard and ``#include`` lines a real C header needs around the declarations.

Compiler flags are portable by default (``-O3``, no ``-march=native``).
Set ``TONEBANK_CFLAGS`` (a shell-style string, e.g. ``"-march=native"``) to
tune the build for a target CPU; the flags actually used are compiled into
the module and reported by :func:`tonebank.backend_info`.
"""

from __future__ import annotations

import os
import re
import shlex
from pathlib import Path

import cffi

#: Flags used for every build; portable across CPUs of one architecture.
#: ``-O3`` (gcc's -O2 leaves the pass loops unvectorised, about 2x slower);
#: ``-fno-math-errno`` lets sqrt/sin/cos inline without changing results
#: (the kernel never reads errno); ``-ffp-contract=off`` forbids fusing
#: multiply-adds, so results do not depend on the CPU's FMA support and
#: match the standalone C tests bit for bit.  ``-ffast-math`` is
#: deliberately absent: it would break NaN/inf propagation and IEEE rounding.
DEFAULT_CFLAGS = ("-O3", "-fno-math-errno", "-ffp-contract=off")

_HERE = Path(__file__).resolve().parent
_CSRC = _HERE.parent.parent / "csrc"
_BEGIN = "/* ---- begin cffi declarations ---- */"
_END = "/* ---- end cffi declarations ---- */"

#: Declarations of the two build-information functions defined in the
#: module source below (not part of the portable kernel).
_BUILD_INFO_CDEF = """
const char *tbpy_compiler(void);
const char *tbpy_cflags(void);
"""

#: Binding-side shortcuts for single-symbol calls (not part of the
#: portable kernel): the constant arguments of a prepared transform or
#: OFDM signal live in a small struct, so a call from Python passes 4 or 5
#: arguments instead of 11 to 15.  cffi's cost per argument is a sizeable
#: part of a 64-point call.
_SHORTCUT_TYPES = """
typedef struct {
    const tb_fft_plan *plan;
    int direction;
    int single;
    size_t n;
    double scale;
} tbpy_fft_call;

/* One signal of n_symbols OFDM symbols with the prefixes, the pilot
 * table b (may be NULL) and the scale bound in the struct. */
typedef struct {
    const tb_ofdm_plan *plan;
    int single;
    size_t n_symbols;
    const size_t *cp;
    const void *b;
    size_t n_a;
    size_t n_b;
    double scale;
} tbpy_ofdm_call;
"""

_SHORTCUT_CDEF = _SHORTCUT_TYPES + """
int tbpy_fft_rows(const tbpy_fft_call *call, size_t batch, void *in, void *out,
                  void *work);
int tbpy_ofdm_synthesize1(const tbpy_ofdm_call *call, void *a, void *out, void *work);
int tbpy_ofdm_analyze1(const tbpy_ofdm_call *call, void *in, void *a, void *b,
                       void *work);
"""

_SHORTCUT_SOURCE = _SHORTCUT_TYPES + """
/* batch contiguous rows of n complex values, in to out. */
int tbpy_fft_rows(const tbpy_fft_call *call, size_t batch, void *in, void *out,
                  void *work)
{
    ptrdiff_t n = (ptrdiff_t)call->n;
    if (call->single)
        return tb_fft_execute_f32(call->plan, call->direction, batch, (const float *)in,
                                  n, 1, (float *)out, n, 1, (float)call->scale, work);
    return tb_fft_execute_f64(call->plan, call->direction, batch, (const double *)in,
                              n, 1, (double *)out, n, 1, call->scale, work);
}

int tbpy_ofdm_synthesize1(const tbpy_ofdm_call *call, void *a, void *out, void *work)
{
    ptrdiff_t na = (ptrdiff_t)call->n_a, nb = (ptrdiff_t)call->n_b;
    if (call->single)
        return tb_ofdm_synthesize_f32(call->plan, 1, call->n_symbols, call->cp,
                                      (const float *)a, 0, na, (const float *)call->b, 0,
                                      nb, (float *)out, 0, (float)call->scale, work);
    return tb_ofdm_synthesize_f64(call->plan, 1, call->n_symbols, call->cp,
                                  (const double *)a, 0, na, (const double *)call->b, 0,
                                  nb, (double *)out, 0, call->scale, work);
}

/* b may be NULL (pilots not wanted). */
int tbpy_ofdm_analyze1(const tbpy_ofdm_call *call, void *in, void *a, void *b,
                       void *work)
{
    ptrdiff_t na = (ptrdiff_t)call->n_a, nb = (ptrdiff_t)call->n_b;
    if (call->single)
        return tb_ofdm_analyze_f32(call->plan, 1, call->n_symbols, call->cp,
                                   (const float *)in, 0, (float *)a, 0, na, (float *)b, 0,
                                   nb, (float)call->scale, work);
    return tb_ofdm_analyze_f64(call->plan, 1, call->n_symbols, call->cp,
                               (const double *)in, 0, (double *)a, 0, na, (double *)b, 0,
                               nb, call->scale, work);
}
"""


def header_declarations(header_path: Path | None = None) -> str:
    """Return the cffi declarations block of the public header, verbatim."""
    path = Path(header_path) if header_path is not None else _CSRC / "tonebank.h"
    text = path.read_text(encoding="utf-8")
    begin, end = text.find(_BEGIN), text.find(_END)
    if begin < 0 or end < begin:
        raise RuntimeError(f"{path}: cffi declaration markers not found")
    return text[begin + len(_BEGIN):end]


def build_cflags() -> list[str]:
    """Default flags followed by the user's ``TONEBANK_CFLAGS``."""
    if os.name == "nt":  # MSVC spells optimisation differently
        flags = ["/O2"]
    else:
        flags = list(DEFAULT_CFLAGS)
    flags += shlex.split(os.environ.get("TONEBANK_CFLAGS", ""))
    return flags


def _c_string(text: str) -> str:
    """Quote *text* as a C string literal."""
    return '"' + re.sub(r'(["\\])', r"\\\1", text) + '"'


def make_builder() -> cffi.FFI:
    """Return the configured :class:`cffi.FFI` builder."""
    # setuptools insists on paths relative to the setup.py directory, which
    # is the working directory of a package build.
    sources = sorted(Path(os.path.relpath(p)).as_posix() for p in _CSRC.glob("tb_*.c"))
    if not sources:
        raise RuntimeError(f"no kernel sources (tb_*.c) found in {_CSRC}")
    cflags = build_cflags()
    module_source = f"""
#include "tonebank.h"

/* Build information baked in at compile time: what actually compiled
 * this module, not what the Python side believes. */
#if defined(__clang__)
static const char tbpy_compiler_text[] = __VERSION__;  /* names clang itself */
#elif defined(__GNUC__)
static const char tbpy_compiler_text[] = "gcc " __VERSION__;
#elif defined(__VERSION__)
static const char tbpy_compiler_text[] = __VERSION__;
#else
static const char tbpy_compiler_text[] = "unknown compiler";
#endif
const char *tbpy_compiler(void) {{ return tbpy_compiler_text; }}
const char *tbpy_cflags(void) {{ return {_c_string(" ".join(cflags))}; }}
""" + _SHORTCUT_SOURCE
    ffibuilder = cffi.FFI()
    ffibuilder.cdef(header_declarations() + _BUILD_INFO_CDEF + _SHORTCUT_CDEF)
    ffibuilder.set_source(
        "tonebank._kernel._tonebank_c",
        module_source,
        sources=sources,
        include_dirs=[Path(os.path.relpath(_CSRC)).as_posix()],
        extra_compile_args=cflags,
        libraries=[] if os.name == "nt" else ["m"],
    )
    return ffibuilder


if __name__ == "__main__":  # pragma: no cover - manual use from the repository root
    make_builder().compile(verbose=True)
