"""The ``tonebank`` command line.

``tonebank demo``
    Print the backend report, run a kernel self-check, and run a short
    CP-OFDM link end to end (bits to samples through noise and back) in an
    invented scenario, printing its bit error rate and EVM.
``tonebank info``
    Print the backend report only.
``tonebank bench``
    Measure throughput and single-symbol latency of every kernel operation
    and waveform on this CPU, on both backends (:mod:`tonebank.target_bench`);
    ``--json FILE`` writes the report, ``--compare A.json B.json`` compares two.
"""

from __future__ import annotations

import argparse
import os
import sys

import numpy as np

from . import __version__, backend_info, channel, fft, metrics, presets, theory
from .channel import DelayProfile, TappedDelayLine
from .constellation import Constellation
from .equalization import equalize_mmse
from .estimation import estimate_from_training
from .waveforms import CpOfdm

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


#: Es/N0 points of the demo link, dB.
DEMO_ESN0_DB = (10.0, 13.0, 16.0, 19.0)


def link_demo(rng=2026, *, n_symbols: int = 200) -> list[dict]:
    """A short CP-OFDM link: 16-QAM on the IEEE 802.11a 20 MHz layout in AWGN.

    The invented scenario: the irrigation controllers of a hillside
    vineyard report to the farm office over a 20 MHz, 64-subcarrier link.
    Each point sends ``n_symbols`` OFDM symbols of random bits through
    the whole chain -- constellation, plan, fused synthesis, AWGN at the
    stated Es/N0 (per used subcarrier, cyclic prefix included), analysis,
    max-log LLRs, hard decisions -- and scores them.

    Returns
    -------
    list of dict
        One row per Es/N0 point with the keys ``esn0_db``, ``errors``
        (:class:`tonebank.metrics.ErrorCount`), ``ber_theory`` (Gray
        16-QAM in AWGN at the SNR each subcarrier sees after the cyclic
        prefix loss), ``evm_percent`` and ``mer_db``.
    """
    rng = np.random.default_rng(rng)
    plan = presets.ieee80211a()
    qam = Constellation.qam(16)
    ofdm = CpOfdm(plan)
    rows = []
    for esn0_db in DEMO_ESN0_DB:
        bits = rng.integers(0, 2, n_symbols * plan.n_data * qam.bits_per_symbol)
        data = qam.map(bits)
        rx, noise_var = channel.awgn(ofdm.modulate(data), esn0_db, rng=rng,
                                     convention="esn0", plan=plan, return_noise_var=True)
        rx_data, _ = ofdm.demodulate(rx)
        decided = (qam.llr(rx_data, noise_var) < 0).astype(np.uint8)
        ebn0_bin = theory.esn0_to_ebn0_db(channel.esn0_to_bin_snr_db(esn0_db, plan),
                                          qam.bits_per_symbol)
        rows.append({
            "esn0_db": esn0_db,
            "errors": metrics.bit_errors(bits, decided),
            "ber_theory": float(theory.ber_qam_gray(16, ebn0_bin)),
            "evm_percent": float(metrics.evm(rx_data, data)),
            "mer_db": float(metrics.mer_db(rx_data, data)),
        })
    return rows


#: SNR points of the fading demo, dB (per sample, preamble and data alike).
FADING_SNR_DB = (10.0, 20.0, 30.0)


def fading_demo(rng=2027, *, n_frames: int = 40, n_symbols: int = 20) -> list[dict]:
    """The same link through a fading channel, estimated from its preamble.

    The vineyard link of :func:`link_demo`, now between the rows of vines:
    each frame (the 802.11a preamble and ``n_symbols`` 16-QAM symbols)
    passes through its own static realisation of 3GPP TR 38.901 TDL-A
    scaled to a 50 ns delay spread, then AWGN.  The receiver estimates the
    channel from the two long training symbols (averaged, then a 16-tap
    DFT fit), equalises with one-tap MMSE and scores EVM (per frame,
    averaged in dB over the frames) and bit errors, beside the same
    receiver given the true channel.

    Returns
    -------
    list of dict
        One row per SNR with the keys ``snr_db``, ``evm_db`` and
        ``evm_perfect_db`` (EVM with the estimate and with the true
        channel), ``errors`` and ``errors_perfect``
        (:class:`tonebank.metrics.ErrorCount`).
    """
    rng = np.random.default_rng(rng)
    plan = presets.ieee80211a()
    qam = Constellation.qam(16)
    ofdm = CpOfdm(plan)
    preamble = presets.ieee80211a_preamble(norm="ortho")
    training = presets.ieee80211a_long_training()
    profile = DelayProfile.published("tdl_a", delay_spread_s=50e-9)
    bits = rng.integers(0, 2, (n_frames, n_symbols * plan.n_data * qam.bits_per_symbol))
    sent = qam.map(bits)
    frames = np.concatenate((np.broadcast_to(preamble, (n_frames, preamble.size)),
                             ofdm.modulate(sent)), axis=-1)
    received = np.empty_like(frames)
    truth = np.empty((n_frames, plan.n_data), complex)
    for f in range(n_frames):
        # Sample-spaced paths: no interpolation delay to synchronise away.
        tdl = TappedDelayLine(profile, plan.sample_rate, interpolation="nearest", rng=rng)
        received[f] = tdl.filter(frames[f])
        truth[f] = tdl.frequency_response(plan, 1)[0, plan.data_bins]
    rows = []
    for snr_db in FADING_SNR_DB:
        rx, noise_var = channel.awgn(received, snr_db, rng=rng, return_noise_var=True)
        noise_var = np.asarray(noise_var)[:, None, None]
        # The long training symbols: samples 192..319 of the preamble.
        ltf = fft(rx[:, 192:320].reshape(n_frames, 2, 64), norm="ortho")
        est = estimate_from_training(ltf, training, frequency="dft", n_taps=16)
        data, _ = ofdm.demodulate(rx[:, preamble.size:])
        data = data.reshape(n_frames, n_symbols, plan.n_data)
        want = sent.reshape(data.shape)
        row = {"snr_db": snr_db}
        est_nv = est.noise_var[:, None, None]
        # The estimate's own error (a 16-tap fit over 52 bins of two averaged
        # repeats: about 16/52/2 of the noise) enters the equaliser as such.
        for key, h, nv, h_err in (("", est.channel[:, None, plan.data_bins], est_nv,
                                   est_nv * 16 / 52 / 2),
                                  ("_perfect", truth[:, None, :], noise_var, 0.0)):
            eq = equalize_mmse(data, h, nv, channel_error_var=h_err)
            decided = (qam.llr(eq.symbols, eq.noise_var) < 0).astype(np.uint8)
            # EVM per frame, then averaged in dB over the frames, as transmitter
            # tests usually average it (common practice, no source): one frame
            # in a deep fade does not swamp the others.
            per_frame = metrics.evm(eq.symbols, want, axis=(1, 2), unit="db")
            row["evm" + key + "_db"] = float(np.mean(per_frame))
            row["errors" + key] = metrics.bit_errors(bits.reshape(decided.shape), decided)
        rows.append(row)
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

    print("\nLink demo (invented scenario): vineyard irrigation controllers report to the")
    print("farm office over a 20 MHz, 64-subcarrier CP-OFDM link (IEEE 802.11a layout),")
    print("16-QAM, AWGN, 200 symbols per point.  Engineering estimates from a simulation")
    print("model, not measurements.")
    print(f"  {'Es/N0':>6s}  {'bit errors':>14s}  {'BER':>9s}  {'95% interval':>21s}  "
          f"{'theory':>9s}  {'EVM':>7s}  {'MER':>7s}")
    for row in link_demo():
        e = row["errors"]
        low, high = e.interval(0.95)
        print(f"  {row['esn0_db']:4.1f}dB  {e.errors:6d}/{e.total:<7d}  {e.rate:9.2e}  "
              f"[{low:9.2e}, {high:9.2e}]  {row['ber_theory']:9.2e}  "
              f"{row['evm_percent']:6.2f}%  {row['mer_db']:5.2f}dB")

    print("\nThe same link between the rows of vines: a fading channel (3GPP TR 38.901")
    print("TDL-A, 50 ns delay spread), a new static realisation per frame, 40 frames of")
    print("20 symbols; the channel estimated from the preamble's long training symbols")
    print("(a 16-tap DFT fit), one-tap MMSE equalisation, beside the true channel.")
    print(f"  {'SNR':>6s}  {'EVM':>8s}  {'EVM, true':>9s}  {'BER':>9s}  {'BER, true':>9s}")
    for row in fading_demo():
        print(f"  {row['snr_db']:4.1f}dB  {row['evm_db']:6.1f}dB  {row['evm_perfect_db']:7.1f}dB"
              f"  {row['errors'].rate:9.2e}  {row['errors_perfect'].rate:9.2e}")
    return 1 if failures else 0


def _info(_args) -> int:
    _print_report()
    return 0


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
    parser = argparse.ArgumentParser(prog="tonebank", description=__doc__.splitlines()[0])
    parser.add_argument("--version", action="version", version=f"tonebank {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.add_parser("demo", help="backend report, kernel self-check and a short link").set_defaults(run=_demo)
    sub.add_parser("info", help="backend report").set_defaults(run=_info)
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
