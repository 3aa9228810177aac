"""Print the tonebank FFT benchmark results as a plain-text table.

Usage::

    python benchmarks/report.py benchmarks/.results.json

Reads the JSON written by ``pytest benchmarks --benchmark-json=...``,
finds each benchmark through its ``extra_info`` (impl, kind, n, batch,
dtype; see bench_common.py) and prints, for every (dtype, n, batch), the
median time per call of each implementation, the C kernel's throughput
and the ratios C/numpy.fft, C/FFTW and C/scipy.fft, then the planning
costs and an evaluation of the project's speed targets.  A second section
does the same for the CP-OFDM chain (test_03_ofdm.py): for every
(direction, dtype, n, symbols), the time per call of each implementation,
the C throughput and the ratios against the plain numpy chain and the bare
FFTW transform, then its targets cell by cell.  Implementations missing
from the run (no C kernel, no pyfftw) show as "-" and their targets as
"n/a"; the report itself never fails for that.

Only ratios within one run mean anything: the machines are shared and
their load changes between runs.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections import defaultdict
from pathlib import Path

#: Column key -> header, for the execution table (in order).
EXEC_COLUMNS = (
    ("c", "C"),
    ("c_out", "C out="),
    ("c_plan", "C plan"),
    ("c_bare", "C bare"),
    ("tb_numpy", "tb numpy"),
    ("numpy", "numpy"),
    ("scipy", "scipy"),
    ("fftw", "FFTW"),
)

#: The project's speed targets (see DEVELOPERS.md and benchmarks/README.md).
TARGET_BATCHED_VS_NUMPY = 1.0   # batched C FFT no slower than numpy.fft
TARGET_BATCHED_VS_FFTW = 1.5    # batched C FFT within 1.5x of FFTW
TARGET_SINGLE_64_VS_NUMPY = 1 / 3  # one n=64 call at most 1/3 of numpy.fft's time

#: The OFDM chain's speed targets (see benchmarks/README.md).
TARGET_OFDM_SPEEDUP = 3.0          # numpy chain / C >= 3 at 140 symbols, every n
TARGET_OFDM_VS_FFTW = 1.5          # C / bare FFTW <= 1.5 at 140 symbols
TARGET_OFDM_SINGLE_64 = 1 / 3      # one 64-bin symbol: C / numpy chain <= 1/3
OFDM_BATCH_SYMBOLS = 140           # the symbols per call the batch targets apply to

#: Column key -> header of the OFDM table (in order).
OFDM_COLUMNS = (
    ("tb_c", "C"),
    ("tb_c_grid", "C grid"),
    ("tb_numpy", "tb numpy"),
    ("numpy_chain", "numpy chain"),
    ("fftw_bare", "FFTW bare"),
)
OFDM_DIRECTIONS = {"ofdm_tx": "tx", "ofdm_rx": "rx"}

NOTE = ("Figures are from ONE run on a shared machine: absolute times vary between "
        "runs;\nonly the ratios within this run are meaningful.")


def load(path: Path, stat: str = "median") -> tuple[dict, dict]:
    """Return ``(results, machine_info)`` from a pytest-benchmark JSON file.

    ``results[kind][(dtype, n, batch)][impl]`` is the chosen statistic
    (``"median"`` or ``"min"``) of the time per call, in seconds.
    Benchmarks without the expected ``extra_info`` are ignored.
    """
    data = json.loads(path.read_text(encoding="utf-8"))
    results: dict = defaultdict(lambda: defaultdict(dict))
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        try:
            kind, impl = info["kind"], info["impl"]
            key = (str(info["dtype"]), int(info["n"]), int(info["batch"]))
            seconds = float(bench["stats"][stat])
        except (KeyError, TypeError, ValueError):
            continue
        results[kind][key][impl] = seconds
    return results, data.get("machine_info") or {}


def sort_key(key: tuple) -> tuple:
    """Order rows by precision (single first), then size, then batch."""
    dtype, n, batch = key
    precision = {"complex64": 0, "complex128": 1}.get(dtype, 2)
    return (precision, dtype, n, batch)


def ratio(a: float | None, b: float | None) -> float | None:
    return None if a is None or b is None or b <= 0 else a / b


def fmt_us(seconds: float | None) -> str:
    if seconds is None:
        return "-"
    us = seconds * 1e6
    return f"{us:.2f}" if us < 10 else f"{us:.1f}" if us < 1000 else f"{us:.0f}"


def fmt_ratio(value: float | None) -> str:
    return "-" if value is None else f"{value:.2f}"


def table(rows: list[list[str]], header: list[str]) -> str:
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]
    line = lambda r: "  ".join(  # noqa: E731
        c.ljust(w) if i < 3 else c.rjust(w) for i, (c, w) in enumerate(zip(r, widths)))
    return "\n".join([line(header), "  ".join("-" * w for w in widths),
                      *(line(r) for r in rows)])


def execution_table(execute: dict) -> str:
    header = ["dtype", "n", "batch", *(f"{h} us" for _, h in EXEC_COLUMNS),
              "C Msa/s", "C/numpy", "C/scipy", "C/FFTW", "bare/FFTW"]
    rows = []
    for key in sorted(execute, key=sort_key):
        dtype, n, batch = key
        times = execute[key]
        c = times.get("c")
        rows.append([
            dtype, str(n), str(batch),
            *(fmt_us(times.get(impl)) for impl, _ in EXEC_COLUMNS),
            "-" if c is None else f"{n * batch / c / 1e6:.1f}",
            fmt_ratio(ratio(c, times.get("numpy"))),
            fmt_ratio(ratio(c, times.get("scipy"))),
            fmt_ratio(ratio(c, times.get("fftw"))),
            fmt_ratio(ratio(times.get("c_bare"), times.get("fftw"))),
        ])
    return table(rows, header)


def planning_table(results: dict) -> str:
    plan, first, execute = results.get("plan", {}), results.get("first_call", {}), \
        results.get("execute", {})
    keys = sorted(set(plan) | set(first), key=sort_key)
    if not keys:
        return "(no planning benchmarks in this run)"
    header = ["dtype", "n", "batch", "C plan us", "C 1st call us", "C steady us",
              "FFTW est. plan us", "FFTW meas. plan us"]
    rows = []
    for key in keys:
        rows.append([
            key[0], str(key[1]), str(key[2]),
            fmt_us(plan.get(key, {}).get("c")),
            fmt_us(first.get(key, {}).get("c")),
            fmt_us(execute.get(key, {}).get("c")),
            fmt_us(plan.get(key, {}).get("fftw_estimate")),
            fmt_us(plan.get(key, {}).get("fftw_measure")),
        ])
    return table(rows, header)


def evaluate(execute: dict, mine: str, versus: str, limit: float,
             select) -> tuple[str, list[str]]:
    """Check ``time[mine] / time[versus] <= limit`` on the selected rows.

    Returns a verdict (``PASS``, ``FAIL`` or ``n/a``) with a one-line
    summary and the list of failing rows.
    """
    checked, failures, worst = 0, [], None
    for key in sorted(execute, key=sort_key):
        if not select(key):
            continue
        r = ratio(execute[key].get(mine), execute[key].get(versus))
        if r is None:
            continue
        checked += 1
        if worst is None or r > worst[0]:
            worst = (r, key)
        if r > limit:
            failures.append(f"{key[0]} n={key[1]} batch={key[2]}: {r:.2f}")
    if not checked:
        return "n/a (implementation missing from this run)", []
    verdict = "PASS" if not failures else "FAIL"
    r, (dtype, n, batch) = worst
    return (f"{verdict}: {checked - len(failures)} of {checked} cases within the limit; "
            f"worst {r:.2f} ({dtype} n={n} batch={batch})"), failures


def targets(execute: dict) -> str:
    batched = lambda key: key[2] > 1  # noqa: E731
    single64 = lambda key: key[1] == 64 and key[2] == 1  # noqa: E731
    checks = [
        (f"batched C FFT no slower than numpy.fft: tonebank.fft [c] / numpy.fft.fft "
         f"<= {TARGET_BATCHED_VS_NUMPY:g} (batch > 1)",
         "c", "numpy", TARGET_BATCHED_VS_NUMPY, batched),
        (f"batched C FFT within {TARGET_BATCHED_VS_FFTW:g}x of FFTW, bare transform "
         f"against bare transform: C bare / FFTW <= {TARGET_BATCHED_VS_FFTW:g} (batch > 1)",
         "c_bare", "fftw", TARGET_BATCHED_VS_FFTW, batched),
        (f"the same through the public call: tonebank.fft [c] / FFTW "
         f"<= {TARGET_BATCHED_VS_FFTW:g} (batch > 1; informative)",
         "c", "fftw", TARGET_BATCHED_VS_FFTW, batched),
        ("single n=64 call at most 1/3 of numpy.fft's time: tonebank.fft [c] / "
         "numpy.fft.fft <= 0.33 (batch = 1)",
         "c", "numpy", TARGET_SINGLE_64_VS_NUMPY, single64),
        ("the same through a prepared plan: tonebank.FftPlan [c] call / "
         "numpy.fft.fft <= 0.33 (batch = 1)",
         "c_plan", "numpy", TARGET_SINGLE_64_VS_NUMPY, single64),
    ]
    lines = []
    for title, mine, versus, limit, select in checks:
        verdict, failures = evaluate(execute, mine, versus, limit, select)
        lines.append(f"- {title}\n    {verdict}")
        lines.extend(f"      over the limit: {f}" for f in failures)
    return "\n".join(lines)


def overhead(execute: dict) -> str:
    """Per-call cost of one row (streaming use), split into kernel and wrapper."""
    rows = []
    for key in sorted(execute, key=sort_key):
        if key[2] != 1:
            continue
        t = execute[key]
        c, out, bare = t.get("c"), t.get("c_out"), t.get("c_bare")
        rows.append([
            key[0], str(key[1]), str(key[2]), fmt_us(c), fmt_us(out),
            fmt_us(t.get("c_plan")), fmt_us(bare),
            fmt_us(None if out is None or bare is None else out - bare),
            fmt_us(None if c is None or out is None else c - out),
            fmt_us(t.get("numpy")), fmt_us(t.get("fftw")),
        ])
    if not rows:
        return "(no single-row execution benchmarks in this run)"
    return table(rows, ["dtype", "n", "batch", "C us", "C out= us", "C plan us", "C bare us",
                        "out=-bare us", "C-out= us", "numpy us", "FFTW us"])


# -- the OFDM chain -------------------------------------------------------------


def load_ofdm(path: Path, stat: str = "median") -> dict:
    """Return the OFDM benchmarks of a pytest-benchmark JSON file.

    ``rows[(kind, dtype, n, symbols)]`` is a dict with ``times`` (impl ->
    seconds per call, the chosen statistic) and the plan facts stored by
    ``bench_common.label_ofdm`` (``samples``, ``cp``, ``n_data``,
    ``n_pilots``).  Anything else in the file is ignored.
    """
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") not in OFDM_DIRECTIONS:
            continue
        try:
            key = (info["kind"], str(info["dtype"]), int(info["n"]), int(info["symbols"]))
            seconds = float(bench["stats"][stat])
            facts = {k: int(info[k]) for k in ("samples", "cp", "n_data", "n_pilots")}
        except (KeyError, TypeError, ValueError):
            continue
        row = rows.setdefault(key, {"times": {}, **facts})
        row["times"][str(info["impl"])] = seconds
    return rows


def ofdm_sort_key(key: tuple) -> tuple:
    """Transmit before receive, then as the FFT rows, most symbols first."""
    kind, dtype, n, symbols = key
    return (list(OFDM_DIRECTIONS).index(kind), *sort_key((dtype, n, 0))[:3], -symbols)


def ofdm_plans(rows: dict) -> list[str]:
    """One line per size: the plan the OFDM rows were measured with."""
    plans = {}
    for (_, _, n, _), row in sorted(rows.items(), key=lambda item: item[0][2]):
        used = row["n_data"] + row["n_pilots"]
        plans.setdefault(n, f"  n={n}: {used} of {n} bins used ({row['n_data']} data + "
                            f"{row['n_pilots']} pilots), CP {row['cp']}")
    return list(plans.values())


def ofdm_table(rows: dict) -> str:
    header = ["dir", "dtype", "n", "symbols", *(f"{h} us" for _, h in OFDM_COLUMNS),
              "C Msa/s", "chain/C", "C/FFTW", "grid/FFTW"]
    out = []
    for key in sorted(rows, key=ofdm_sort_key):
        kind, dtype, n, symbols = key
        times = rows[key]["times"]
        c = times.get("tb_c")
        out.append([
            OFDM_DIRECTIONS[kind], dtype, str(n), str(symbols),
            *(fmt_us(times.get(impl)) for impl, _ in OFDM_COLUMNS),
            "-" if c is None else f"{rows[key]['samples'] / c / 1e6:.1f}",
            fmt_ratio(ratio(times.get("numpy_chain"), c)),
            fmt_ratio(ratio(c, times.get("fftw_bare"))),
            fmt_ratio(ratio(times.get("tb_c_grid"), times.get("fftw_bare"))),
        ])
    return table(out, header)


#: The OFDM targets: (column title, summary title, cell filter, figure, test).
#: ``figure(times)`` returns the ratio or None; ``met(value)`` says whether
#: it is within the target.
OFDM_TARGETS = (
    (f"chain/C >= {TARGET_OFDM_SPEEDUP:g}",
     f"speed-up over the plain numpy chain: numpy chain / C >= {TARGET_OFDM_SPEEDUP:g} "
     f"({OFDM_BATCH_SYMBOLS} symbols, every n, both directions)",
     lambda key: key[3] == OFDM_BATCH_SYMBOLS,
     lambda t: ratio(t.get("numpy_chain"), t.get("tb_c")),
     lambda r: r >= TARGET_OFDM_SPEEDUP),
    (f"C/FFTW <= {TARGET_OFDM_VS_FFTW:g}",
     f"whole fused chain within {TARGET_OFDM_VS_FFTW:g}x of the bare FFTW transform: "
     f"C / FFTW bare <= {TARGET_OFDM_VS_FFTW:g} ({OFDM_BATCH_SYMBOLS} symbols)",
     lambda key: key[3] == OFDM_BATCH_SYMBOLS,
     lambda t: ratio(t.get("tb_c"), t.get("fftw_bare")),
     lambda r: r <= TARGET_OFDM_VS_FFTW),
    ("C/chain <= 0.33",
     "one 64-bin symbol at most a third of the numpy chain's time: C / numpy chain "
     "<= 0.33 (n=64, 1 symbol)",
     lambda key: key[2] == 64 and key[3] == 1,
     lambda t: ratio(t.get("tb_c"), t.get("numpy_chain")),
     lambda r: r <= TARGET_OFDM_SINGLE_64),
)


def ofdm_targets(rows: dict) -> str:
    """Each target cell by cell (met / missed with its figure), then a summary."""
    header = ["dir", "dtype", "n", "symbols", *(title for title, *_ in OFDM_TARGETS)]
    out = []
    tally = [[0, 0, []] for _ in OFDM_TARGETS]  # met, checked, missed cells
    for key in sorted(rows, key=ofdm_sort_key):
        kind, dtype, n, symbols = key
        cells = []
        for i, (_, _, applies, figure, met) in enumerate(OFDM_TARGETS):
            if not applies(key):
                cells.append("")
                continue
            value = figure(rows[key]["times"])
            if value is None:
                cells.append("n/a")
                continue
            ok = met(value)
            tally[i][0] += ok
            tally[i][1] += 1
            if not ok:
                tally[i][2].append(f"{OFDM_DIRECTIONS[kind]} {dtype} n={n}x{symbols}: "
                                   f"{value:.2f}")
            cells.append(f"{value:.2f} {'met' if ok else 'MISSED'}")
        if any(cells):
            out.append([OFDM_DIRECTIONS[kind], dtype, str(n), str(symbols), *cells])
    if not out:
        return "(no OFDM target cells in this run)"
    lines = [table(out, header), ""]
    for (_, title, *_), (met_count, checked, missed) in zip(OFDM_TARGETS, tally):
        if not checked:
            verdict = "n/a (implementation missing from this run)"
        else:
            verdict = (f"{'MET' if not missed else 'MISSED'}: met in {met_count} of "
                       f"{checked} cells")
        lines.append(f"- {title}\n    {verdict}")
        lines.extend(f"      missed: {m}" for m in missed)
    return "\n".join(lines)


def ofdm_section(rows: dict, stat: str) -> list[str]:
    if not rows:
        return ["(no OFDM benchmarks in this run)"]
    return [
        f"{stat.capitalize()} time per call in microseconds; one call carries `symbols` OFDM",
        "symbols of n bins.  Plans (centred, DC empty, pilots spread evenly):",
        *ofdm_plans(rows),
        "tx: C = CpOfdm.modulate(data) on the C kernel (data stream -> data and pilot",
        "bins -> unitary IFFT -> cyclic prefix, fused); C grid = CpOfdm.synthesize(grid)",
        "on the C kernel; tb numpy = modulate on the numpy backend; numpy chain = zeros,",
        "scatter, numpy.fft.ifft(norm='ortho'), concatenate; FFTW bare = pyfftw",
        "FFTW.execute() of the (symbols, n) inverse transform alone (FFTW_MEASURE, one",
        "thread, preallocated output): the floor for any implementation.",
        "rx: C = CpOfdm.demodulate(x) (prefix strip -> FFT -> data and pilots, fused);",
        "C grid = CpOfdm.analyze(x); tb numpy = demodulate on the numpy backend; numpy",
        "chain = reshape, slice, numpy.fft.fft(norm='ortho'), gather; FFTW bare = the",
        "forward transform of the (symbols, n) bodies alone.",
        "C Msa/s = time-domain samples per call (symbols x (n + CP)) / C time, in",
        "million complex samples per second.  chain/C = numpy chain time / C time",
        "(the speed-up, above 1: C faster); C/FFTW and grid/FFTW = C time / bare FFTW",
        "time (1 would be the floor).  Single symbols are call-bound: there the",
        "microseconds are mostly per-call overhead.",
        "",
        ofdm_table(rows),
        "",
        "OFDM targets, cell by cell (blank: the target does not apply to that cell)",
        "",
        ofdm_targets(rows),
    ]


def machine_summary(machine: dict) -> str:
    tb = machine.get("tonebank") or {}
    cpu = machine.get("cpu") or {}
    parts = [
        f"machine: {cpu.get('brand_raw') or machine.get('processor') or machine.get('machine', '?')}"
        f" ({cpu.get('count', '?')} logical CPUs)",
        f"python {machine.get('python_version', '?')}, numpy {tb.get('numpy_version', '?')}",
    ]
    if tb:
        if tb.get("c_available"):
            parts.append(f"tonebank {tb.get('version', '?')}: C kernel "
                         f"{tb.get('c_kernel_version', '?')}, flags {tb.get('c_flags', '?')}")
            parts.append(f"compiler: {tb.get('c_compiler', '?')}")
        else:
            parts.append(f"tonebank {tb.get('version', '?')}: C kernel UNAVAILABLE "
                         f"({tb.get('c_unavailable_reason')}); C columns are empty")
    return "\n".join(parts)


def report(path: Path, stat: str = "median") -> str:
    results, machine = load(path, stat)
    execute = results.get("execute", {})
    ofdm = load_ofdm(path, stat)
    head = [
        "tonebank benchmarks",
        "===================",
        NOTE,
        "",
        machine_summary(machine),
        "",
    ]
    tail = [
        "",
        "OFDM chain (CP-OFDM, test_03_ofdm.py)",
        "-------------------------------------",
        *ofdm_section(ofdm, stat),
        "",
        NOTE.replace("\n", " "),
    ]
    if not any(results.get(kind) for kind in ("execute", "plan", "first_call")):
        return "\n".join([*head, "FFT", "---", "(no FFT benchmarks in this run)", *tail])
    out = [
        *head,
        "FFT",
        "---",
        f"{stat.capitalize()} time per call in microseconds (one call transforms `batch` rows of n",
        "points along the last axis).  C = tonebank.fft on the C kernel; C out= = the",
        "same with a preallocated result; C plan = calling a prepared tonebank.FftPlan;",
        "tb numpy = tonebank.fft on its numpy backend;",
        "numpy = numpy.fft.fft; scipy = scipy.fft.fft(workers=1); FFTW = pyfftw",
        "FFTW.execute() of a FFTW_MEASURE plan, one thread; C bare = the kernel's",
        "execute function called through cffi with everything prepared (the two bare",
        "transforms).  C Msa/s = C throughput in million samples per second.  Ratios",
        "are C time / other time: below 1 means tonebank is faster.",
        "",
        execution_table(execute) if execute else "(no execution benchmarks in this run)",
        "",
        "Per-call overhead of one row (streaming use is call-bound): out=-bare = the",
        "public wrapper's cost (argument checks, pointers, dispatch); C-out= = what",
        "allocating the result costs beyond checking a given `out` (negative when the",
        "check costs more).  Differences of two statistics, so only indicative.",
        "",
        overhead(execute),
        "",
        "Planning (one row of n points): C plan = create + release a kernel plan;",
        "C 1st call = tonebank.fft on a size whose plan is not cached yet; C steady =",
        "the same call with the plan cached; FFTW plans start from empty wisdom.",
        "",
        planning_table(results),
        "",
        "FFT targets",
        "",
        targets(execute),
        *tail,
    ]
    return "\n".join(out)


# -- FBMC/OQAM (test_06_fbmc.py) --------------------------------------------------

#: FBMC speed targets (the FBMC/OQAM issue): the fused C kernel at least 3x
#: faster than the numpy fallback at 140 symbols, and FBMC synthesis at
#: most 2x the cost of CP-OFDM synthesis of the same plan (C backend).
TARGET_FBMC_VS_NUMPY = 3.0
TARGET_FBMC_VS_OFDM = 2.0
FBMC_COLUMNS = (("fbmc_c", "FBMC C"), ("fbmc_numpy", "FBMC numpy"),
                ("ofdm_c", "OFDM C"), ("ofdm_cp_c", "OFDM+CP C"))
FBMC_DIRECTIONS = {"fbmc_tx": "tx", "fbmc_rx": "rx"}


def load_fbmc(path: Path, stat: str = "median") -> dict:
    """``rows[(kind, n, symbols)][impl]`` = seconds per call (FBMC file only)."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") not in FBMC_DIRECTIONS:
            continue
        try:
            key = (info["kind"], int(info["n"]), int(info["symbols"]))
            rows.setdefault(key, {})[str(info["impl"])] = float(bench["stats"][stat])
        except (KeyError, TypeError, ValueError):
            continue
    return rows


def fbmc_report(path: Path, stat: str = "median") -> str:
    """The FBMC/OQAM table and its two targets, as text."""
    rows = load_fbmc(path, stat)
    head = ["", "FBMC/OQAM (test_06_fbmc.py, complex128, overlap K = 4)",
            "------------------------------------------------------"]
    if not rows:
        return "\n".join([*head, "(no FBMC benchmarks in this run)"])
    header = ["dir", "n", "symbols", *(f"{h} us" for _, h in FBMC_COLUMNS),
              "numpy/C", "FBMC/OFDM", "FBMC/OFDM+CP"]
    out, met_speed, met_ofdm = [], [], []
    order = lambda key: (list(FBMC_DIRECTIONS).index(key[0]), key[1], -key[2])  # noqa: E731
    for key in sorted(rows, key=order):
        kind, n, symbols = key
        t = rows[key]
        speed = ratio(t.get("fbmc_numpy"), t.get("fbmc_c"))
        versus = ratio(t.get("fbmc_c"), t.get("ofdm_c"))
        out.append([FBMC_DIRECTIONS[kind], str(n), str(symbols),
                    *(fmt_us(t.get(impl)) for impl, _ in FBMC_COLUMNS),
                    fmt_ratio(speed), fmt_ratio(versus),
                    fmt_ratio(ratio(t.get("fbmc_c"), t.get("ofdm_cp_c")))])
        if symbols == OFDM_BATCH_SYMBOLS and speed is not None:
            met_speed.append((speed >= TARGET_FBMC_VS_NUMPY, f"{kind} n={n}: {speed:.2f}"))
        if symbols == OFDM_BATCH_SYMBOLS and kind == "fbmc_tx" and versus is not None:
            met_ofdm.append((versus <= TARGET_FBMC_VS_OFDM, f"n={n}: {versus:.2f}"))

    def verdict(title, cells):
        if not cells:
            return f"- {title}\n    n/a (implementation missing from this run)"
        missed = [c for ok, c in cells if not ok]
        return (f"- {title}\n    {'MET' if not missed else 'MISSED'}: met in "
                f"{len(cells) - len(missed)} of {len(cells)} cells"
                + "".join(f"\n      missed: {m}" for m in missed))

    return "\n".join([
        *head,
        f"{stat.capitalize()} time per call in microseconds; one call carries `symbols`",
        "symbols of n subcarriers (centred, ~80 % used).  FBMC C / numpy =",
        "FbmcOqam.synthesize or .analyze on the C kernel / the numpy backend; OFDM C =",
        "CpOfdm on the same plan (no prefix); OFDM+CP C = CpOfdm with a prefix of n/4.",
        "numpy/C = the fused kernel's speed-up; FBMC/OFDM = FBMC C time / OFDM C time.",
        "",
        table(out, header),
        "",
        verdict(f"fused C at least {TARGET_FBMC_VS_NUMPY:g}x faster than the numpy fallback "
                f"(numpy/C >= {TARGET_FBMC_VS_NUMPY:g}, {OFDM_BATCH_SYMBOLS} symbols, both "
                "directions)", met_speed),
        verdict(f"FBMC synthesis at most {TARGET_FBMC_VS_OFDM:g}x CP-OFDM synthesis of the "
                f"same plan (FBMC/OFDM <= {TARGET_FBMC_VS_OFDM:g}, tx, "
                f"{OFDM_BATCH_SYMBOLS} symbols)", met_ofdm),
    ])


# ---- channel estimation (test_08_estimation.py) -------------------------------------
# A section of its own: read the same JSON, keep the "estimation" kinds.

ESTIMATION_KINDS = ("estimation", "estimation_prepare")
ESTIMATION_IMPLS = (
    ("lmmse_full", "LMMSE"),
    ("lmmse_rank", "LMMSE r=64"),
    ("ls_linear", "LS+linear"),
    ("ls_spline", "LS+spline"),
    ("dft", "DFT fit"),
    ("numpy_solve", "numpy solve"),
)


def load_estimation(path: Path, stat: str = "median") -> dict:
    """``rows[(kind, pattern, dtype)] = {"times": {impl: s}, "cells": n, "pilots": n}``."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") not in ESTIMATION_KINDS:
            continue
        try:
            key = (info["kind"], str(info["pattern"]), str(info["dtype"]))
            seconds = float(bench["stats"][stat])
            cells = int(info["symbols"]) * int(info["used"])
            pilots = int(info["pilot_cells"])
        except (KeyError, TypeError, ValueError):
            continue
        row = rows.setdefault(key, {"times": {}, "cells": cells, "pilots": pilots})
        row["times"][str(info["impl"])] = seconds
    return rows


def estimation_report(path: Path, stat: str = "median") -> str:
    """The channel-estimation table: ms per call, Mcells/s, full/low-rank ratios."""
    rows = load_estimation(path, stat)
    head = ["", "Channel estimation (test_08_estimation.py, 1024 bins x 140 symbols)",
            "-------------------------------------------------------------------"]
    if not rows:
        return "\n".join(head + ["(no estimation benchmarks in this run)"])
    header = ["kind", "pattern", "dtype", "pilot cells",
              *(f"{h} ms" for _, h in ESTIMATION_IMPLS),
              "LMMSE Mcell/s", "full/r64", "solve/LMMSE"]
    out = []
    for key in sorted(rows):
        kind, pattern, dtype = key
        times, cells = rows[key]["times"], rows[key]["cells"]
        full = times.get("lmmse_full")
        out.append([
            "estimate" if kind == "estimation" else "prepare", pattern, dtype,
            str(rows[key]["pilots"]),
            *("-" if times.get(i) is None else f"{times[i] * 1e3:.2f}"
              for i, _ in ESTIMATION_IMPLS),
            "-" if not full or kind != "estimation" else f"{cells / full / 1e6:.1f}",
            fmt_ratio(ratio(full, times.get("lmmse_rank"))),
            fmt_ratio(ratio(times.get("numpy_solve"), full)),
        ])
    notes = [
        f"{stat.capitalize()} time per call in milliseconds.  estimate = a prepared",
        "ChannelEstimator's estimate(grid) (filters made beforehand); prepare = building",
        "the estimator and its filters plus the first call.  LMMSE Mcell/s = channel",
        "cells estimated per second (symbols x used subcarriers / time).  full/r64 =",
        "full-rank time / rank-64 time; solve/LMMSE = a numpy solve in every call /",
        "the prepared LMMSE.  All numpy/BLAS (no C kernel op): BLAS threading on a",
        "loaded machine moves these figures a lot (try OPENBLAS_NUM_THREADS=1).",
        "",
    ]
    return "\n".join(head + notes + [table(out, header)])
# ---- end channel estimation ----


# -- PAPR (test_09_papr.py) -------------------------------------------------------


def papr_report(path: Path, stat: str = "median") -> str:
    """The PAPR section: fused selective mapping and CCDF, C vs numpy.

    Reads the benchmarks with ``extra_info["kind"]`` ``"papr_slm"`` or
    ``"papr_ccdf"``; anything else in the file is ignored.  Returns an
    empty string when the run has none.
    """
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") not in ("papr_slm", "papr_ccdf"):
            continue
        try:
            key = (str(info["kind"]), str(info["case"]))
            rows.setdefault(key, {})[str(info["impl"])] = float(bench["stats"][stat])
        except (KeyError, TypeError, ValueError):
            continue
    if not rows:
        return ""
    lines = ["PAPR (test_09_papr.py)", "----------------------",
             f"{stat.capitalize()} time per call in milliseconds; C = the C backend (SLM: one "
             "fused pass per",
             "symbol), numpy = the numpy twin; ratio = numpy time / C time (above 1: C is "
             "faster).", ""]
    table_rows = []
    for (kind, case), times in sorted(rows.items()):
        c, npy = times.get("tb_c"), times.get("tb_numpy")
        table_rows.append([kind.replace("papr_", ""), case,
                           "-" if c is None else f"{c * 1e3:.1f}",
                           "-" if npy is None else f"{npy * 1e3:.1f}",
                           fmt_ratio(ratio(npy, c))])
    lines.append(table(table_rows, ["op", "case", "C ms", "numpy ms", "numpy/C"]))
    big = rows.get(("papr_slm", "U16-N1024-L4-S1000"), {})
    r = ratio(big.get("tb_numpy"), big.get("tb_c"))
    lines += ["", "PAPR targets", "",
              "  SLM U=16 N=1024 L=4 S=1000, fused C vs numpy >= 3x: "
              + ("not measured" if r is None else
                 f"{r:.2f}x {'MET' if r >= 3.0 else 'NOT MET'}")]
    return "\n".join(lines)


# -- channel convolution (test_07_channel.py) -----------------------------------

#: Target of the channel kernel op (set by the channel work, no source):
#: the C backend at least this many times faster than the numpy backend
#: on the time-varying 24-tap case.
TARGET_CHANNEL_SPEEDUP = 5.0


def channel_report(path: Path, stat: str = "median") -> str:
    """The channel-convolution section: times, throughput and ratios."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = {}
    n_samples = taps = None
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") != "channel":
            continue
        try:
            key = (str(info["case"]), str(info["dtype"]))
            rows.setdefault(key, {})[str(info["impl"])] = float(bench["stats"][stat])
            n_samples, taps = int(info["n"]), int(info["taps"])
        except (KeyError, TypeError, ValueError):
            continue
    head = ["", "Channel convolution (TappedDelayLine, test_07_channel.py)",
            "---------------------------------------------------------"]
    if not rows:
        return "\n".join(head + ["(no channel benchmarks in this run)"])
    impls = ("tb_c", "kernel_c", "tb_numpy", "lfilter", "convolve", "oaconvolve")
    out = []
    for (case, dtype) in sorted(rows, key=lambda k: (k[0] != "time_varying", k[1])):
        t = rows[case, dtype]
        c = t.get("tb_c")
        out.append([case, dtype, *("-" if t.get(i) is None else f"{t[i] * 1e3:.1f}"
                                   for i in impls),
                    "-" if c is None else f"{n_samples / c / 1e6:.1f}",
                    fmt_ratio(ratio(t.get("tb_numpy"), c)),
                    fmt_ratio(ratio(t.get("lfilter"), c))])
    lines = head + [
        f"{stat.capitalize()} time per call in milliseconds: {n_samples} complex samples "
        f"through a {taps}-tap",
        "sample-spaced profile (time_varying: maximum Doppler 500 Hz at 15.36 MHz, taps",
        "linear between knots 480 samples apart; static: block fading).  C = TappedDelayLine",
        ".filter on the C backend (knot taps in numpy + kernel op); C op = the kernel op",
        "alone; numpy = the numpy backend; lfilter / convolve / oaconvolve = scipy.signal",
        ".lfilter, numpy.convolve, scipy.signal.oaconvolve on the static taps.  C Msa/s =",
        "samples / C time; numpy/C and lfilter/C are speed-ups (above 1: C faster).",
        "",
        table(out, ["case", "dtype", *(f"{h} ms" for h in ("C", "C op", "numpy", "lfilter",
                                                           "convolve", "oaconv")),
                    "C Msa/s", "numpy/C", "lfilter/C"]),
        "",
    ]
    tv = rows.get(("time_varying", "complex128"), {})
    speedup = ratio(tv.get("tb_numpy"), tv.get("tb_c"))
    if speedup is None:
        lines.append("- time-varying C vs numpy backend: n/a (missing from this run)")
    else:
        ok = speedup >= TARGET_CHANNEL_SPEEDUP
        lines.append(f"- time-varying 24 taps, complex128: numpy backend / C >= "
                     f"{TARGET_CHANNEL_SPEEDUP:g}: {speedup:.2f} {'MET' if ok else 'MISSED'}")
    return "\n".join(lines)


# ---- windowed (WOLA) and filtered OFDM (test_05_filterbank.py) ----

#: Target: the fused C kernel at least this many times faster than the
#: numpy fallback at FILTERBANK_BATCH symbols per call, every variant and n.
TARGET_FILTERBANK_SPEEDUP = 3.0
FILTERBANK_BATCH = 140


def filterbank_report(path: Path, stat: str = "median") -> str:
    """The WOLA / filtered-OFDM table (C vs numpy fallback) and its target lines."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = defaultdict(dict)
    samples: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") != "filterbank":
            continue
        try:
            key = (str(info["variant"]), str(info["direction"]), int(info["n"]),
                   int(info["symbols"]))
            rows[key][str(info["impl"])] = float(bench["stats"][stat])
            samples[key] = int(info["samples"])
        except (KeyError, TypeError, ValueError):
            continue
    lines = ["", "Windowed and filtered OFDM (test_05_filterbank.py)",
             "--------------------------------------------------"]
    if not rows:
        return "\n".join(lines + ["(no filterbank benchmarks in this run)"])
    lines += [
        f"{stat.capitalize()} time per call in microseconds, complex128.  wola = WolaOfdm",
        "(ramps cp/4 + cp/4), fofdm = FilteredOfdm (n/2+1 taps); plans as the CP-OFDM",
        "benchmark (prefix n/4).  C = fused kernel, numpy = numpy fallback;",
        "speed-up = numpy / C; C Msa/s = samples per call / C time.",
        "",
    ]
    table_rows = []
    verdicts = []
    for key in sorted(rows, key=lambda k: (k[0], k[1], k[2], -k[3])):
        t = rows[key]
        c, npy = t.get("c"), t.get("numpy")
        speed = ratio(npy, c)
        msa = f"{samples[key] / c / 1e6:.1f}" if c else "-"
        table_rows.append([key[0], key[1], str(key[2]), str(key[3]), fmt_us(c), fmt_us(npy),
                           fmt_ratio(speed), msa])
        if key[3] == FILTERBANK_BATCH:
            ok = "n/a" if speed is None else ("PASS" if speed >= TARGET_FILTERBANK_SPEEDUP
                                              else "MISS")
            verdicts.append(f"  {ok}: {key[0]} {key[1]} n={key[2]}: numpy/C = "
                            f"{fmt_ratio(speed)} (target >= {TARGET_FILTERBANK_SPEEDUP:g})")
    lines.append(table(table_rows, ["variant", "direction", "n", "symbols", "C us",
                                    "numpy us", "speed-up", "C Msa/s"]))
    lines += ["", f"Filterbank target: C >= {TARGET_FILTERBANK_SPEEDUP:g}x the numpy "
              f"fallback at {FILTERBANK_BATCH} symbols", *verdicts]
    return "\n".join(lines)


# ---- diversity combining (test_10_combining.py) ----

#: Combining runs on numpy and has no kernel op; the lines under the table
#: say how far MRC is from one read of its inputs, the best a fused C op
#: could reach (informational: no target was set for combining).
COMBINING_METHODS = ("mrc", "mrc_branch_noise", "egc", "selection", "square_law")


def combining_report(path: Path, stat: str = "median") -> str:
    """The combining table: ms per call, Mcells/s, tb / numpy expression, tb / read floor."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = defaultdict(dict)
    cells = branches = None
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") != "combining":
            continue
        try:
            key = (str(info["method"]), str(info["dtype"]))
            rows[key][str(info["impl"])] = float(bench["stats"][stat])
            cells, branches = int(info["cells"]), int(info["branches"])
        except (KeyError, TypeError, ValueError):
            continue
    head = ["", "Diversity combining (test_10_combining.py)",
            "------------------------------------------"]
    if not rows:
        return "\n".join(head + ["(no combining benchmarks in this run)"])
    floors = {d: rows.get(("mrc", d), {}).get("read_floor") for _, d in rows}
    out = []
    order = {m: i for i, m in enumerate(COMBINING_METHODS)}
    for method, dtype in sorted(rows, key=lambda k: (k[1], order.get(k[0], 99))):
        t = rows[method, dtype]
        tb = t.get("tb")
        out.append([method, dtype,
                    "-" if tb is None else f"{tb * 1e3:.2f}",
                    "-" if t.get("numpy_expr") is None else f"{t['numpy_expr'] * 1e3:.2f}",
                    "-" if tb is None else f"{cells / tb / 1e6:.0f}",
                    fmt_ratio(ratio(tb, t.get("numpy_expr"))),
                    fmt_ratio(ratio(tb, floors.get(dtype)))])
    lines = head + [
        f"{stat.capitalize()} time per call in milliseconds, {branches} branches x {cells} "
        "cells (140 symbols x 1024",
        "bins; square_law: 140 x 256 cells x 4 tones).  tb = the tonebank.combining",
        "function (checks, noise variance and SNR out); numpy expr = one bare numpy",
        "expression of the same combining (no checks, symbols only); read floor = one",
        "read of received and channel.  Mcell/s = combined cells per second (tb).",
        "tb/expr and tb/floor: above 1 means tb is slower.  numpy only (no kernel op).",
        "",
        table(out, ["method", "dtype", "tb ms", "numpy expr ms", "tb Mcell/s",
                    "tb/expr", "tb/floor"]),
        "",
    ]
    for dtype in ("complex128", "complex64"):
        t = rows.get(("mrc", dtype), {})
        to_floor = ratio(t.get("tb"), floors.get(dtype))
        to_expr = ratio(t.get("tb"), t.get("numpy_expr"))
        if to_floor is None:
            lines.append(f"- MRC {dtype}: n/a (missing from this run)")
        else:
            lines.append(f"- MRC {dtype}: tb / read floor = {to_floor:.2f} (a fused C op "
                         f"could at best reach 1), tb / numpy expr = {fmt_ratio(to_expr)}")
    return "\n".join(lines)


# -- bit loading (test_11_loading.py) ---------------------------------------------

#: Target of the loading work (set by it, no source): water-filling and
#: Levin-Campello over 4096 tones within this many seconds per call.
TARGET_LOADING_SECONDS = 10e-3


def loading_report(path: Path, stat: str = "median") -> str:
    """The bit-loading section: time per call of each operation and channel.

    Reads the benchmarks with ``extra_info["kind"] == "loading"``; returns
    an empty string when the run has none.
    """
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") != "loading":
            continue
        try:
            rows.setdefault(str(info["op"]), {})[str(info["case"])] = float(
                bench["stats"][stat])
        except (KeyError, TypeError, ValueError):
            continue
    if not rows:
        return ""
    cases = sorted({case for times in rows.values() for case in times})
    lines = ["Bit loading (test_11_loading.py)", "--------------------------------",
             f"{stat.capitalize()} time per call in milliseconds, 4096 tones (numpy only: "
             "the loading module", "does not use the C kernel); table_map / table_llr: "
             "14 symbols of the loaded table.", ""]
    table_rows = [[op] + ["-" if times.get(case) is None else f"{times[case] * 1e3:.2f}"
                          for case in cases]
                  for op, times in rows.items()]
    lines.append(table(table_rows, ["op"] + [f"{case} ms" for case in cases]))
    lines += ["", "Loading targets", ""]
    for op in ("water_filling", "levin_campello"):
        for case in cases:
            t = rows.get(op, {}).get(case)
            verdict = ("not measured" if t is None else
                       f"{t * 1e3:.2f} ms {'MET' if t <= TARGET_LOADING_SECONDS else 'NOT MET'}")
            lines.append(f"  {op} n=4096 {case} <= {TARGET_LOADING_SECONDS * 1e3:.0f} ms: "
                         f"{verdict}")
    return "\n".join(lines)


# ---- receiver impairments (test_13_impairments.py) ----

#: Target: each impairment stage at most this many times slower than the plain
#: numpy expression of the same model (the price of bit-identical streaming).
TARGET_IMPAIRMENT_OVERHEAD = 2.5
#: Target: TimingOffset on the C backend at least this many times faster than on
#: the numpy backend (the kernel op channel_fir).
TARGET_IMPAIRMENT_TIMING_SPEEDUP = 3.0


def impairments_report(path: Path, stat: str = "median") -> str:
    """The receiver-impairment table (throughput, ratios) and its target lines."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = defaultdict(dict)
    sizes: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") != "impairments":
            continue
        try:
            rows[str(info["stage"])][str(info["impl"])] = float(bench["stats"][stat])
            sizes[str(info["stage"])] = int(info["n"])
        except (KeyError, TypeError, ValueError):
            continue
    lines = ["", "Receiver impairments (test_13_impairments.py)",
             "---------------------------------------------"]
    if not rows:
        return "\n".join(lines + ["(no impairment benchmarks in this run)"])
    lines += [
        f"{stat.capitalize()} time per call in milliseconds, complex128, one filter() call",
        "on n samples.  tb = the library stage (C backend where it has a kernel op),",
        "numpy_ref = the plain numpy expression of the model, tb_numpy = the library stage",
        "on the numpy backend, lfilter / resample_poly = scipy.signal.  Msa/s = n / time;",
        "ratio = time / time of the reference named (above 1: the library is slower).",
        "",
    ]
    table_rows = []
    for stage in ("cfo", "phase_noise", "iq", "timing", "sco"):
        for impl, t in sorted(rows.get(stage, {}).items()):
            ref_name = {"timing": "lfilter", "sco": "resample_poly"}.get(stage, "numpy_ref")
            ref = rows[stage].get(ref_name)
            table_rows.append([stage, impl, f"{t * 1e3:.1f}", f"{sizes[stage] / t / 1e6:.1f}",
                               ref_name, fmt_ratio(ratio(t, ref))])
    lines.append(table(table_rows, ["stage", "impl", "ms", "Msa/s", "versus", "ratio"]))
    lines += ["", "Impairment targets"]
    for stage, impl in (("cfo", "tb"), ("phase_noise", "tb"), ("phase_noise", "tb_psd"),
                        ("iq", "tb")):
        value = ratio(rows.get(stage, {}).get(impl), rows.get(stage, {}).get("numpy_ref"))
        verdict = "n/a" if value is None else (
            "MET" if value <= TARGET_IMPAIRMENT_OVERHEAD else "MISSED")
        lines.append(f"- {stage} {impl} / numpy_ref <= {TARGET_IMPAIRMENT_OVERHEAD:g}: "
                     f"{fmt_ratio(value)} {verdict}")
    timing = rows.get("timing", {})
    speed = ratio(timing.get("tb_numpy"), timing.get("tb_c"))
    verdict = "n/a" if speed is None else (
        "MET" if speed >= TARGET_IMPAIRMENT_TIMING_SPEEDUP else "MISSED")
    lines.append(f"- timing: numpy backend / C >= {TARGET_IMPAIRMENT_TIMING_SPEEDUP:g}: "
                 f"{fmt_ratio(speed)} {verdict}")
    lines.append("- sco: no target (numpy only; a C kernel op is the next step if it matters)")
    return "\n".join(lines)


# ---- synchronisation (test_12_sync.py) ----

#: Target of the synchronisation op (set by the sync work, no source): the
#: timing metric over 10^6 samples at least this many times faster on the
#: C backend than on the numpy backend.
TARGET_SYNC_SPEEDUP = 3.0


def sync_report(path: Path, stat: str = "median") -> str:
    """The synchronisation section: timing metric (C, numpy, numpy.convolve) and receiver throughput."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = defaultdict(dict)
    sizes: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        kind = info.get("kind")
        if kind not in ("sync_metric", "sync_op", "sync_naive", "sync_receiver"):
            continue
        try:
            key = ("receiver" if kind == "sync_receiver" else "metric", str(info["case"]))
            rows[key][str(info["impl"])] = float(bench["stats"][stat])
            sizes[key] = int(info["n"])
        except (KeyError, TypeError, ValueError):
            continue
    lines = ["", "Synchronisation (test_12_sync.py)", "---------------------------------"]
    if not rows:
        return "\n".join(lines + ["(no synchronisation benchmarks in this run)"])
    lines += [
        f"{stat.capitalize()} time per call in milliseconds.  metric = sync.timing_metric over",
        "10^6 samples (period = window = 32); C op = halves_correlation alone; convolve =",
        "numpy.convolve of the lag products with a box (what a user writes without the op);",
        "receiver = FrameReceiver.receive on 20 frames of 20 16-QAM symbols (64-point plan).",
        "Msa/s = samples per call / time; numpy/C = numpy backend time / C time.",
        "",
    ]
    table_rows = []
    for key in sorted(rows):
        t = rows[key]
        c, npy = t.get("tb_c"), t.get("tb_numpy")
        fmt = lambda v: "-" if v is None else f"{v * 1e3:.1f}"  # noqa: E731
        table_rows.append([key[0], key[1], fmt(c), fmt(t.get("kernel_c")), fmt(npy),
                           fmt(t.get("numpy_convolve")),
                           "-" if not c else f"{sizes[key] / c / 1e6:.2f}",
                           "-" if not npy else f"{sizes[key] / npy / 1e6:.2f}",
                           fmt_ratio(ratio(npy, c))])
    lines.append(table(table_rows, ["what", "case", "C ms", "C op ms", "numpy ms",
                                    "convolve ms", "C Msa/s", "numpy Msa/s", "numpy/C"]))
    metric = rows.get(("metric", "second_half"), {})
    speedup = ratio(metric.get("tb_numpy"), metric.get("tb_c"))
    lines += ["", "Synchronisation target"]
    if speedup is None:
        lines.append("  timing metric 10^6 samples, numpy/C: n/a (missing from this run)")
    else:
        ok = "MET" if speedup >= TARGET_SYNC_SPEEDUP else "MISSED"
        lines.append(f"  timing metric 10^6 samples, numpy/C >= {TARGET_SYNC_SPEEDUP:g}: "
                     f"{speedup:.2f} {ok}")
    return "\n".join(lines)


# ---- link throughput (test_15_link.py) ----


def link_report(path: Path, stat: str = "median") -> str:
    """The link section: frames per second of the demo link on each backend."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = defaultdict(dict)
    frames: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") != "link":
            continue
        try:
            rows[str(info["case"])][str(info["impl"])] = float(bench["stats"][stat])
            frames[str(info["case"])] = int(info["frames"])
        except (KeyError, TypeError, ValueError):
            continue
    lines = ["", "Link throughput (test_15_link.py)", "---------------------------------"]
    if not rows:
        return "\n".join(lines + ["(no link benchmarks in this run)"])
    lines += [
        f"{stat.capitalize()} over rounds.  demo = the demo link (SLM, amplifier, TDL-C on 2",
        "antennas, LMMSE, MRC); plain = the same plan and channel, perfect channel knowledge,",
        "no peak control or amplifier.  frames/s = frames per call / time; numpy/C = numpy",
        "backend time / C time.",
        "",
    ]
    out = []
    for case in sorted(rows):
        t = rows[case]
        c, npy = t.get("tb_c"), t.get("tb_numpy")
        fps = lambda v: "-" if not v else f"{frames[case] / v:.0f}"  # noqa: E731
        out.append([case, fps(c), fps(npy), fmt_ratio(ratio(npy, c))])
    lines.append(table(out, ["link", "C frames/s", "numpy frames/s", "numpy/C"]))
    return "\n".join(lines)


# ---- error-rate sweeps (test_14_sweep.py) ----

#: Target of the sweep engine (our own, no source): the same sweep on two
#: worker processes at least this many times faster than serial.  Only
#: reachable when two cores are free: the figure is information on a
#: shared machine, not a verdict on the code.
TARGET_SWEEP_SPEEDUP_2 = 1.5


def sweep_report(path: Path, stat: str = "median") -> str:
    """The sweep section: serial vs 1 and 2 worker processes, speed-ups, waste."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = defaultdict(dict)
    facts: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") != "sweep":
            continue
        try:
            key = (str(info["case"]), str(info["impl"]))
            rows[key[0]][key[1]] = float(bench["stats"][stat])
            facts[key] = (int(info["batches"]), int(info["bits"]), int(info["discarded"]))
        except (KeyError, TypeError, ValueError):
            continue
    lines = ["", "Error-rate sweeps (test_14_sweep.py)", "------------------------------------"]
    if not rows:
        return "\n".join(lines + ["(no sweep benchmarks in this run)"])
    lines += [
        f"{stat.capitalize()} time per sweep in milliseconds: uncoded BPSK over AWGN, 4 SNR",
        "points, 8 frames of 10^4 bits per batch.  serial = workers=1 in the process;",
        "pool1 / pool2 = a warm ProcessPoolExecutor of 1 / 2 processes passed as executor.",
        "Mbit/s = simulated bits / time; speed-up = serial time / time; discarded =",
        "speculative batches computed beyond a point's stop and thrown away (last round).",
        "Case sleep: each batch sleeps 5 ms instead of computing (the scheduler's ceiling).",
        "",
    ]
    table_rows = []
    for case in sorted(rows):
        serial = rows[case].get("serial")
        for impl in ("serial", "pool1", "pool2"):
            t = rows[case].get(impl)
            if t is None:
                continue
            batches, bits, discarded = facts[(case, impl)]
            table_rows.append([case, impl, f"{t * 1e3:.1f}", f"{bits / t / 1e6:.1f}",
                               str(batches), str(discarded), fmt_ratio(ratio(serial, t))])
    lines.append(table(table_rows, ["case", "impl", "ms", "Mbit/s", "batches", "discarded",
                                    "speed-up"]))
    lines += ["", "Sweep target (our own, no source; needs two free cores)"]
    for case in sorted(rows):
        speedup = ratio(rows[case].get("serial"), rows[case].get("pool2"))
        verdict = "n/a" if speedup is None else (
            "MET" if speedup >= TARGET_SWEEP_SPEEDUP_2 else "MISSED")
        lines.append(f"- {case}: serial / pool2 >= {TARGET_SWEEP_SPEEDUP_2:g}: "
                     f"{fmt_ratio(speedup)} {verdict}")
    return "\n".join(lines)


# ---- fixed-point FFT (test_16_fixed.py) ----

#: Q15 on C against the numpy integer model at n = 1024 (our own target, no source).
TARGET_FIXED_SPEEDUP = 5.0
FIXED_CASES = ("q15_c", "q15_c_block", "q31_c", "f32_c", "q15_numpy")


def fixed_report(path: Path, stat: str = "median") -> str:
    """The fixed-point FFT section: Q15 / Q31 on C against float32 C and the numpy model."""
    data = json.loads(path.read_text(encoding="utf-8"))
    rows: dict = defaultdict(dict)
    batches: dict = {}
    for bench in data.get("benchmarks", []):
        info = bench.get("extra_info") or {}
        if info.get("kind") != "fixed_fft":
            continue
        try:
            n = int(info["n"])
            rows[n][str(info["case"])] = float(bench["stats"][stat])
            batches[n] = int(info["batch"])
        except (KeyError, TypeError, ValueError):
            continue
    lines = ["", "Fixed-point FFT (test_16_fixed.py)", "----------------------------------"]
    if not rows:
        return "\n".join(lines + ["(no fixed-point FFT benchmarks in this run)"])
    lines += [
        f"{stat.capitalize()} time per call of 100 transforms in microseconds.  q15 / q31 =",
        "FixedFft schedule 'halve' on the C backend; q15 block = block floating point;",
        "f32 = FftPlan complex64 on C; q15 numpy = the integer model.  ns/bfly = q15 C time",
        "per radix-2 butterfly; f32/q15 = float32 time / Q15 time; numpy/q15 = model / C.",
        "",
    ]
    table_rows = []
    for n in sorted(rows):
        t = rows[n]
        q15 = t.get("q15_c")
        bfly = None if q15 is None else q15 / (batches[n] * n // 2 * (n.bit_length() - 1))
        table_rows.append([str(n), *(fmt_us(t.get(c)) for c in FIXED_CASES),
                           "-" if bfly is None else f"{bfly * 1e9:.2f}",
                           fmt_ratio(ratio(t.get("f32_c"), q15)),
                           fmt_ratio(ratio(t.get("q15_numpy"), q15))])
    lines.append(table(table_rows, ["n", "q15 C", "q15 block C", "q31 C", "f32 C",
                                    "q15 numpy", "ns/bfly", "f32/q15", "numpy/q15"]))
    speedup = ratio(rows.get(1024, {}).get("q15_numpy"), rows.get(1024, {}).get("q15_c"))
    lines += ["", "Fixed-point target (our own, no source)"]
    if speedup is None:
        lines.append("  q15 n=1024, numpy model / C: n/a (missing from this run)")
    else:
        ok = "MET" if speedup >= TARGET_FIXED_SPEEDUP else "MISSED"
        lines.append(f"  q15 n=1024, numpy model / C >= {TARGET_FIXED_SPEEDUP:g}: "
                     f"{speedup:.2f} {ok}")
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("json", type=Path, help="pytest-benchmark JSON file")
    parser.add_argument("--stat", choices=("median", "min"), default="median",
                        help="statistic of the rounds to report (default: median; "
                             "min is less sensitive to other jobs on a busy machine)")
    args = parser.parse_args(argv)
    if not args.json.exists():
        print(f"report.py: {args.json} does not exist; run `make bench` first",
              file=sys.stderr)
        return 2
    # One section per benchmark file, in file order.
    print(report(args.json, args.stat))                # FFT and CP-OFDM
    print(filterbank_report(args.json, args.stat))     # WOLA, filtered OFDM
    print(fbmc_report(args.json, args.stat))           # FBMC/OQAM
    print(channel_report(args.json, args.stat))        # channel convolution
    print(estimation_report(args.json, args.stat))     # channel estimation
    papr = papr_report(args.json, args.stat)           # selective mapping, CCDF
    if papr:
        print()
        print(papr)
    print()
    print(combining_report(args.json, args.stat))      # diversity combining
    loading_section = loading_report(args.json, args.stat)   # water-filling, bit loading
    if loading_section:
        print()
        print(loading_section)
    print(sync_report(args.json, args.stat))           # synchronisation
    print(impairments_report(args.json, args.stat))    # receiver impairments
    print(sweep_report(args.json, args.stat))          # error-rate sweeps
    print(link_report(args.json, args.stat))           # link throughput
    print(fixed_report(args.json, args.stat))          # fixed-point FFT
    return 0


if __name__ == "__main__":
    sys.exit(main())
