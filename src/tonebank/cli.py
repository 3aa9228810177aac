"""The ``tonebank`` command line.

``tonebank demo``
    Print the backend report and run a kernel self-check (later the demo
    grows into a full link in an invented scenario).
``tonebank info``
    Print the backend report only.
"""

from __future__ import annotations

import argparse
import os
import sys

import numpy as np

from . import __version__, backend_info, fft

#: Sizes the self-check transforms: powers of 2, 3 and 5, mixed radix,
#: the kernel's edge case n = 1 and a size (97, prime) that the C kernel
#: hands to numpy.
SELF_CHECK_SIZES = (1, 64, 243, 625, 960, 4096, 97)

#: Relative error (max |error| / max |reference|) accepted by the self-check
#: per precision: a few hundred ulps, far above FFT round-off for these
#: sizes and far below any real defect (common practice, no source).
SELF_CHECK_TOLERANCE = {np.complex128: 1e-12, np.complex64: 1e-5}


def self_check(rng=0) -> list[tuple[int, str, str, float, bool]]:
    """Compare :func:`tonebank.fft` with :func:`numpy.fft.fft` in float64.

    Returns
    -------
    list of tuple
        One ``(n, dtype name, direction, relative error, passed)`` row per
        case, for both precisions and both directions.
    """
    rng = np.random.default_rng(rng)
    rows = []
    for n in SELF_CHECK_SIZES:
        ref_in = rng.standard_normal((3, n)) + 1j * rng.standard_normal((3, n))
        for dtype, tol in SELF_CHECK_TOLERANCE.items():
            x = ref_in.astype(dtype)
            for inverse in (False, True):
                ref = (np.fft.ifft if inverse else np.fft.fft)(x.astype(np.complex128))
                got = fft(x, inverse=inverse)
                err = float(np.max(np.abs(got - ref)) / np.max(np.abs(ref)))
                ok = got.dtype == dtype and err <= tol
                rows.append((n, np.dtype(dtype).name, "inverse" if inverse else "forward",
                             err, ok))
    return rows


def _print_report() -> None:
    print(f"tonebank {__version__}")
    print(backend_info())


def _demo(_args) -> int:
    _print_report()
    print("\nKernel self-check against numpy.fft (relative max error):")
    rows = self_check()
    failures = 0
    for n, dtype, direction, err, ok in rows:
        failures += not ok
        print(f"  n={n:<5d} {dtype:<10s} {direction:<8s} {err:9.2e}  {'ok' if ok else 'FAILED'}")
    print(f"\n{len(rows) - failures} of {len(rows)} checks passed")
    return 1 if failures else 0


def _info(_args) -> int:
    _print_report()
    return 0


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser of the ``tonebank`` command."""
    parser = argparse.ArgumentParser(prog="tonebank", description=__doc__.splitlines()[0])
    parser.add_argument("--version", action="version", version=f"tonebank {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.add_parser("demo", help="backend report and kernel self-check").set_defaults(run=_demo)
    sub.add_parser("info", help="backend report").set_defaults(run=_info)
    return parser


def main(argv=None) -> int:
    """Run the command line; return the process exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if getattr(args, "run", None) is None:
        parser.print_help(sys.stderr)
        return 2
    try:
        return args.run(args)
    except BrokenPipeError:
        # The reader went away (e.g. `tonebank info | head`): stop quietly.
        # Point stdout at devnull so the interpreter's final flush is silent.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 1
