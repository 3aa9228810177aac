"""The ``tonebank`` command line (also ``python -m tonebank``).

``tonebank demo [--out DIR] [--quick] [--workers N]``
    The main job on an invented scenario (see :mod:`tonebank.demo`): a
    short report, and with ``--out`` the figures and results tables.
``tonebank info [--no-check]``
    The backend report and a self-check of the kernel's FFT.
``tonebank sweep CONFIG``
    An error-rate sweep described in a TOML file
    (:mod:`tonebank.sweep_config`), resumable through its result file.
``tonebank bench [--quick] [--json FILE] [--compare A.json B.json]``
    Throughput and single-symbol latency of every kernel operation and
    waveform on this CPU, on both backends (:mod:`tonebank.target_bench`).
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


def _demo(args) -> int:
    from .demo import run_demo

    try:
        run_demo(args.out, quick=args.quick, workers=args.workers)
    except (OSError, ImportError) as exc:      # an unwritable --out, no matplotlib
        print(f"tonebank demo: {exc}", file=sys.stderr)
        return 2
    return 0


def _info(args) -> int:
    _print_report()
    if args.no_check:
        return 0
    print("\nKernel self-check against numpy.fft (relative max error):")
    rows = self_check()
    failures = 0
    for n, dtype, direction, err, ok in rows:
        failures += not ok
        print(f"  n={n:<5d} {dtype:<10s} {direction:<8s} {err:9.2e}  {'ok' if ok else 'FAILED'}")
    print(f"\n{len(rows) - failures} of {len(rows)} checks passed")
    return 1 if failures else 0


def _run_on_cluster(job, address: str, output, workers, progress: bool):
    """Run a sweep on the dask.distributed scheduler at ``address`` (extra ``dist``)."""
    try:
        import distributed
    except ImportError:
        raise ImportError("running on a cluster needs dask.distributed: "
                          "pip install 'tonebank[dist]'") from None
    with distributed.Client(address, timeout=30) as client:
        n = workers or max(1, sum(client.nthreads().values()))
        return job.run(output, executor=client.get_executor(), workers=n, progress=progress)


def _sweep(args) -> int:
    from .sweep import Sweep
    from .sweep_config import ConfigError, load_config

    try:
        cfg = load_config(args.config)
    except ConfigError as exc:
        print(f"tonebank sweep: {exc}", file=sys.stderr)
        return 2
    output = cfg.output if args.output is None else args.output
    workers = cfg.workers if args.workers is None else args.workers
    if cfg.parameter == "snr_db":
        job = Sweep.over_snr(cfg.link, cfg.values, stop=cfg.stop,
                             frames_per_batch=cfg.frames_per_batch, seed=cfg.seed)
    else:
        job = Sweep.over(cfg.parameter, cfg.values, cfg.build, snr_db=cfg.snr_db, stop=cfg.stop,
                         frames_per_batch=cfg.frames_per_batch, seed=cfg.seed)
    try:
        if args.scheduler is None:
            result = job.run(output, workers=workers, progress=not args.quiet)
        else:
            result = _run_on_cluster(job, args.scheduler, output, args.workers,
                                     not args.quiet)
    except ValueError as exc:            # e.g. a result file that belongs to another sweep
        print(f"tonebank sweep: {exc}", file=sys.stderr)
        return 2
    except (ImportError, OSError) as exc:   # no dask, or no scheduler at that address
        print(f"tonebank sweep: --scheduler {args.scheduler}: {exc}", file=sys.stderr)
        return 2
    print(f"{cfg.parameter:>24s}  {'snr_db':>7s}  {'bits':>10s}  {'BER':>9s}  {'SER':>9s}  "
          f"{'FER':>7s}")
    for p in result.points:
        print(f"{p.value!s:>24s}  {p.snr_db:7.2f}  {p.counts['bits']:10d}  {p.ber:9.2e}  "
              f"{p.ser:9.2e}  {p.fer:7.4f}")
    if args.csv is not None:
        result.to_csv(args.csv)
    if output is not None:
        print(f"results: {output}")
    return 0


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a whole number, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be >= 1, got {value}")
    return value


# -- tonebank bench ----------------------------------------------------------
# Throughput and latency on the CPU at hand (tonebank.target_bench); a block
# of its own so that it merges apart from the commands above.


def _bench_sizes(text: str) -> tuple[int, ...]:
    """argparse type of ``--sizes``: comma-separated FFT sizes."""
    from .target_bench import _check_sizes

    try:
        return _check_sizes(tuple(int(part) for part in text.split(",")))
    except ValueError as exc:
        raise argparse.ArgumentTypeError(
            f"{text!r} is not a list of sizes ({exc}); e.g. --sizes 64,1024") from None


def _bench_seconds(text: str) -> float:
    """argparse type of ``--target-time``: seconds, > 0 and <= 60."""
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not 0 < value <= 60:
        raise argparse.ArgumentTypeError(f"{text!r} is not allowed; give seconds per "
                                         "measurement, > 0 and <= 60")
    return value


def _bench(args) -> int:
    from . import target_bench

    try:
        if args.compare is not None:
            clash = [flag for flag, value in (("--quick", args.quick), ("--json", args.json),
                                              ("--sizes", args.sizes),
                                              ("--target-time", args.target_time),
                                              ("--label", args.label)) if value]
            if clash:
                print(f"tonebank bench: error: --compare measures nothing and takes no "
                      f"{', '.join(clash)}", file=sys.stderr)
                return 2
            path_a, path_b = args.compare
            a = target_bench.load_report(path_a)
            b = target_bench.load_report(path_b)
            print(target_bench.format_comparison(a, b, name_a=path_a, name_b=path_b))
            return 0
        if args.json is not None:
            # Fail before a minute of measuring, not after it.
            folder = os.path.dirname(os.path.abspath(args.json))
            if not os.path.isdir(folder):
                raise target_bench.BenchReportError(
                    f"cannot write the bench report {args.json!r}: folder {folder!r} "
                    "does not exist")
        report = target_bench.run_bench(
            quick=args.quick, sizes=args.sizes, target_time=args.target_time,
            label=args.label,
            progress=lambda text: print(f"  measuring {text}", file=sys.stderr, flush=True))
        print(target_bench.format_report(report))
        if args.json is not None:
            target_bench.save_report(report, args.json)
            print(f"\nreport written to {args.json}")
    except target_bench.BenchReportError as exc:
        print(f"tonebank bench: error: {exc}", file=sys.stderr)
        return 2
    return 0 if report["checks_passed"] else 1


_BENCH_DESCRIPTION = """\
Measure, on this computer, the throughput (samples/s for a batch of 140 OFDM
symbols per call) and the single-symbol latency (median time of a one-symbol
call) of every kernel operation and waveform, on the C kernel and on the numpy
fallback, each result checked once against numpy.  Prints a table with the
CPU, core count, the C kernel's compiler and flags, and library versions.
A full run takes about a minute, --quick a few seconds."""


def _add_bench_parser(sub) -> None:
    bench = sub.add_parser(
        "bench", help="throughput and latency of every kernel op on this CPU",
        description=_BENCH_DESCRIPTION, formatter_class=argparse.RawDescriptionHelpFormatter)
    bench.add_argument("--quick", action="store_true",
                       help="fewer sizes (64 and 1024) and a tenth of the timing budget: a "
                            "few seconds instead of about a minute")
    bench.add_argument("--json", metavar="FILE",
                       help="also write the full report as JSON to FILE, for comparing "
                            "targets with --compare")
    bench.add_argument("--compare", nargs=2, metavar=("A.json", "B.json"),
                       help="measure nothing; print B's speed relative to A's per op, size "
                            "and backend from two reports written by --json")
    bench.add_argument("--sizes", type=_bench_sizes, metavar="N[,N...]",
                       help="FFT sizes to measure, comma-separated multiples of 16 from 32 "
                            "to 8192 (default 64,256,1024,4096; with --quick 64,1024)")
    bench.add_argument("--target-time", type=_bench_seconds, metavar="SECONDS",
                       help="seconds of timing per measurement (default 0.2; with "
                            "--quick 0.02); raise it on a noisy machine")
    bench.add_argument("--label", metavar="TEXT",
                       help="a name for this target, stored in the report and shown by "
                            "--compare")
    bench.set_defaults(run=_bench)


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser of the ``tonebank`` command."""
    parser = argparse.ArgumentParser(
        prog="tonebank", description=__doc__.splitlines()[0],
        epilog="Every figure the commands print is an engineering estimate from a simulation "
               "model, not a measurement or a compliance result.")
    parser.add_argument("--version", action="version", version=f"tonebank {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    demo = sub.add_parser(
        "demo", help="run the main job on an invented scenario and report",
        description="Simulate an invented river-sensor telemetry link end to end (SLM, "
                    "amplifier, fading on two antennas, LMMSE estimation, MRC): error rates "
                    "with confidence intervals beside theory, EVM, PAPR, occupied bandwidth and "
                    "out-of-band emission, throughput.  With --out, also write the figures "
                    "(PNG), results.csv and the sweep's result file.")
    demo.add_argument("--out", metavar="DIR", default=None,
                      help="folder for figures and tables (created if missing); none: print only")
    demo.add_argument("--quick", action="store_true",
                      help="a reduced run (fewer points and frames), a few seconds")
    demo.add_argument("--workers", type=_positive_int, default=1, metavar="N",
                      help="processes for the error-rate sweep (default 1)")
    demo.set_defaults(run=_demo)

    info = sub.add_parser(
        "info", help="backend report and kernel self-check",
        description="Print which kernel backend runs (compiled C or the numpy fallback), how "
                    "it was built, and a self-check of the FFT against numpy.fft.")
    info.add_argument("--no-check", action="store_true", help="skip the self-check")
    info.set_defaults(run=_info)

    sweep = sub.add_parser(
        "sweep", help="run an error-rate sweep described in a TOML file",
        description="Run the sweep a TOML file describes (see tonebank.sweep_config for the "
                    "keys).  The file is checked completely first: a mistake is reported with "
                    "its line and key and nothing is written.  Results go point by point to "
                    "the output file; running the same command again resumes an interrupted "
                    "sweep.")
    sweep.add_argument("config", metavar="CONFIG", help="the sweep's TOML file")
    sweep.add_argument("--workers", type=_positive_int, default=None, metavar="N",
                       help="processes (default: sweep.workers of the file)")
    sweep.add_argument("--output", metavar="FILE", default=None,
                       help="result file, JSON lines (default: sweep.output of the file)")
    sweep.add_argument("--csv", metavar="FILE", default=None,
                       help="also write the results as CSV")
    sweep.add_argument("--scheduler", metavar="ADDRESS", default=None,
                       help="run the batches on the dask.distributed scheduler at ADDRESS "
                            "(e.g. tcp://10.0.0.5:8786; needs the dist extra); --workers "
                            "then sets how many batches are in flight (default: the "
                            "cluster's threads)")
    sweep.add_argument("--quiet", action="store_true", help="no progress line")
    sweep.set_defaults(run=_sweep)

    _add_bench_parser(sub)
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
