"""``tonebank bench`` and :mod:`tonebank.target_bench`.

No timed assertions: the figures are only required to be positive and
finite.  The outside references are numpy.fft (the transform and the
CP-OFDM definition), the numpy backend (every other measured call) and a
direct numpy evaluation of the delay-and-correlate metric.
"""

import contextlib
import copy
import io
import json
import math

import numpy as np
import pytest

import tonebank
from tonebank import cli, target_bench
from tonebank.target_bench import (
    OPS,
    BenchReportError,
    bench_call,
    compare_reports,
    load_report,
    run_bench,
)

C_AVAILABLE = tonebank.backend_info()["c_available"]

#: The smallest run that still covers every op on every backend: one size,
#: 2 ms of timing per measurement.
SMALL = ["--sizes", "64", "--target-time", "0.002"]


def run_cli(argv):
    """``(exit status, stdout, stderr)`` of ``tonebank.cli.main(argv)``."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = cli.main(argv)
    return status, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def quick_run(tmp_path_factory):
    """One ``tonebank bench --quick --json F`` run, shared by the tests below.

    The run itself measures both backends, so it is made once per module,
    not once per backend of the autouse fixture.
    """
    path = tmp_path_factory.mktemp("bench") / "target.json"
    status, out, err = run_cli(["bench", "--quick", *SMALL, "--label", "test box",
                                "--json", str(path)])
    return status, out, err, path


def positive_finite(x):
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x) and x > 0


# -- the end-to-end run ------------------------------------------------------


def test_quick_run_succeeds_and_prints_the_table(quick_run):
    status, out, err, path = quick_run
    assert status == 0, err
    assert "Msamples/s" in out and "C/numpy" in out
    assert f"report written to {path}" in out
    for op in OPS:
        assert f"\n{op} " in out
    assert "measuring fft n=64" in err          # progress goes to stderr
    assert "Every measured call agreed" in out


def test_json_report_has_the_machine_and_every_op(quick_run):
    *_, path = quick_run
    report = json.loads(path.read_text(encoding="utf-8"))
    assert report["schema"] == "tonebank-bench"
    assert report["schema_version"] == target_bench.SCHEMA_VERSION
    assert report["label"] == "test box"
    machine = report["machine"]
    for key in ("cpu_model", "machine", "logical_cores", "usable_cores", "platform",
                "python", "versions", "c_available", "tonebank_cflags_now"):
        assert key in machine, key
    assert set(machine["versions"]) == {"tonebank", "numpy", "scipy", "cffi"}
    assert machine["versions"]["numpy"] == np.__version__
    assert machine["logical_cores"] >= machine["usable_cores"] >= 1
    assert machine["c_available"] == C_AVAILABLE
    if C_AVAILABLE:
        assert machine["c_flags"] == tonebank.backend_info()["c_flags"]
        assert machine["c_compiler"]
    backends = {"numpy", "c"} if C_AVAILABLE else {"numpy"}
    assert report["settings"]["backends"] == sorted(backends, reverse=True)
    found = {(r["op"], r["backend"]) for r in report["results"]}
    assert found == {(op, b) for op in OPS for b in backends}
    for r in report["results"]:
        assert r["n"] == 64
        assert positive_finite(r["batch"]["samples_per_s"])
        assert positive_finite(r["single"]["latency_s"])
        for key in ("best_s", "median_s"):
            assert positive_finite(r["batch"][key]) and positive_finite(r["single"][key])
        assert r["batch"]["best_s"] <= r["batch"]["median_s"]
        assert r["single"]["best_s"] <= r["single"]["median_s"] <= r["single"]["p90_s"]
        assert r["batch"]["symbols"] == target_bench.BATCH_SYMBOLS
        assert r["single"]["symbols"] == 1
        assert r["check"]["passed"], r
    assert report["checks_passed"] is True


# -- the measured calls do real work -----------------------------------------


@pytest.mark.parametrize("op", OPS)
def test_each_measured_call_matches_its_outside_reference(backend, op):
    n, symbols = 64, 3
    call, samples = bench_call(op, n, symbols)
    got = call()
    if op == "fft":
        # Reference: numpy.fft.fft of the same seeded input.
        x = target_bench._noise((symbols, n), [1, n, symbols])
        want = np.fft.fft(x, axis=-1)
    else:
        # Reference: the same call on the numpy backend.
        with tonebank.use_backend("numpy"):
            ref_call, ref_samples = bench_call(op, n, symbols)
            want = ref_call()
        assert ref_samples == samples
        got, want = (target_bench._OPS[op].result(r) for r in (got, want))
    got, want = np.asarray(got), np.asarray(want)
    assert got.shape == want.shape
    tol = 1e-9 if op == "sync.timing" else 1e-12
    assert np.max(np.abs(got - want)) <= tol * np.max(np.abs(want))
    assert samples > 0


def test_ofdm_synthesize_call_is_the_idft_with_its_prefix(backend):
    # Reference: the CP-OFDM symbol from its definition (unitary inverse DFT
    # by numpy.fft.ifft, then the last n/4 samples copied in front).
    n, cp = 64, 16
    call, samples = bench_call("ofdm.synthesize", n, 2)
    plan = target_bench._plan(n)
    grid = plan.place(target_bench._qpsk(2 * plan.n_data, [2, n, 2]))
    body = np.fft.ifft(grid, axis=-1, norm="ortho")
    want = np.concatenate((body[:, -cp:], body), axis=-1).ravel()
    got = call()
    assert samples == 2 * (n + cp)
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-12 * np.abs(want).max())


def test_timing_call_is_the_delay_and_correlate_metric(backend):
    # Reference: M(d) = |P(d)|^2 / R(d)^2 with P(d) = sum_m conj(x[d+m]) x[d+m+L],
    # R(d) = sum_m |x[d+m+L]|^2 over a window of L = n/2 (Schmidl & Cox, IEEE
    # Trans. Commun. 45(12), 1997, the timing metric -- from memory), by
    # direct numpy sums.
    n = 64
    period = n // 2
    call, samples = bench_call("sync.timing", n, 2)
    x = target_bench._noise(samples, [9, n, 2])
    d = np.arange(samples - 2 * period + 1)[:, None]
    m = np.arange(period)[None, :]
    p = np.sum(np.conj(x[d + m]) * x[d + m + period], axis=1)
    r = np.sum(np.abs(x[d + m + period]) ** 2, axis=1)
    np.testing.assert_allclose(call().metric, np.abs(p) ** 2 / r ** 2, rtol=1e-9)


# -- comparison and report files ---------------------------------------------


def test_compare_prints_ratios(quick_run, tmp_path):
    *_, path_a = quick_run
    report = json.loads(path_a.read_text(encoding="utf-8"))
    slower = copy.deepcopy(report)
    slower["label"] = "half-speed board"
    for r in slower["results"]:
        r["batch"]["samples_per_s"] /= 2
        r["single"]["latency_s"] *= 4
    path_b = tmp_path / "b.json"
    path_b.write_text(json.dumps(slower), encoding="utf-8")
    status, out, err = run_cli(["bench", "--compare", str(path_a), str(path_b)])
    assert status == 0, err
    assert "half-speed board" in out and "test box" in out
    assert out.count("0.50x") == len(report["results"])
    assert out.count("0.25x") == len(report["results"])
    rows = compare_reports(report, slower)
    assert len(rows) == len(report["results"])
    assert all(r["throughput_ratio"] == pytest.approx(0.5) for r in rows)
    assert all(r["latency_ratio"] == pytest.approx(0.25) for r in rows)


def test_compare_lists_entries_in_one_report_only(quick_run, tmp_path):
    *_, path_a = quick_run
    report = load_report(path_a)
    fewer = copy.deepcopy(report)
    fewer["results"] = [r for r in fewer["results"] if r["op"] != "fft"]
    text = target_bench.format_comparison(report, fewer)
    only = [line for line in text.splitlines() if line.startswith("only in A: ")]
    assert len(only) == 1 and "fft n=64 [numpy]" in only[0]
    assert "only in B" not in text
    assert len(compare_reports(report, fewer)) == len(fewer["results"])


def test_compare_tolerates_missing_or_zero_figures(quick_run):
    *_, path = quick_run
    report = load_report(path)
    edited = copy.deepcopy(report)
    edited["results"][0]["batch"]["samples_per_s"] = 0.0
    del edited["results"][0]["single"]["latency_s"]
    del edited["machine"]["cpu_model"]
    rows = compare_reports(report, edited)
    assert rows[0]["throughput_ratio"] is None and rows[0]["latency_ratio"] is None
    text = target_bench.format_comparison(report, edited)
    assert "cpu          ? (" in text


@pytest.mark.parametrize("content, message", [
    ("{not json", "is not valid JSON"),
    ("[1, 2]", "is not a tonebank bench report"),
    ('{"schema": "tonebank-bench", "schema_version": 99}', "has schema_version 99"),
    ('{"schema": "tonebank-bench", "schema_version": 1, "machine": {}, "results": [{}]}',
     "lacks its 'machine' or 'results'"),
])
def test_compare_rejects_bad_files_naming_them(quick_run, tmp_path, content, message):
    *_, good = quick_run
    bad = tmp_path / "bad.json"
    bad.write_text(content, encoding="utf-8")
    status, out, err = run_cli(["bench", "--compare", str(good), str(bad)])
    assert status == 2
    assert repr(str(bad)) in err and message in err
    with pytest.raises(BenchReportError, match=message):
        load_report(bad)


def test_compare_names_a_missing_file(quick_run, tmp_path):
    *_, good = quick_run
    missing = tmp_path / "missing.json"
    status, _, err = run_cli(["bench", "--compare", str(missing), str(good)])
    assert status == 2
    assert f"bench report {str(missing)!r} does not exist" in err


def test_json_into_a_missing_folder_fails_before_measuring(tmp_path):
    target = tmp_path / "no" / "such" / "folder" / "r.json"
    status, out, err = run_cli(["bench", *SMALL, "--json", str(target)])
    assert status == 2
    assert str(target) in err and "does not exist" in err
    assert "measuring" not in err and out == ""


# -- bad arguments -----------------------------------------------------------


@pytest.mark.parametrize("argv", [
    ["bench", "--sizes", "63"],
    ["bench", "--sizes", "64,abc"],
    ["bench", "--sizes", "16384"],
    ["bench", "--target-time", "0"],
    ["bench", "--target-time", "nan"],
    ["bench", "--compare", "only-one.json"],
    ["bench", "--frobnicate"],
])
def test_bad_arguments_are_argparse_errors(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main(argv)
    assert exc.value.code == 2
    assert "error:" in capsys.readouterr().err


def test_compare_takes_no_measuring_options():
    status, _, err = run_cli(["bench", "--compare", "a.json", "b.json", "--quick"])
    assert status == 2 and "--compare measures nothing" in err and "--quick" in err


@pytest.mark.parametrize("kwargs, error, message", [
    (dict(sizes=[]), ValueError, "sizes=()"),
    (dict(sizes=[100]), ValueError, "sizes contains 100"),
    (dict(sizes=[64, 64]), ValueError, "repeats a size"),
    (dict(sizes=64), TypeError, "sizes must be a sequence"),
    (dict(ops=["fft", "dance"]), ValueError, "op='dance'"),
    (dict(ops="fft"), TypeError, "ops must be a sequence"),
    (dict(target_time=-1.0), ValueError, "target_time=-1.0"),
    (dict(label=3), TypeError, "label must be a string"),
])
def test_run_bench_rejects_bad_arguments(kwargs, error, message):
    with pytest.raises(error, match=message.replace("(", r"\(").replace(")", r"\)")):
        run_bench(**kwargs)


def test_bench_call_rejects_bad_arguments():
    with pytest.raises(ValueError, match="op='ifft'"):
        bench_call("ifft", 64)
    with pytest.raises(ValueError, match="n=100 is not allowed"):
        bench_call("fft", 100)
    with pytest.raises(ValueError, match="n_symbols=0"):
        bench_call("fft", 64, 0)


# -- without the C kernel ----------------------------------------------------


def test_without_the_c_kernel_measures_numpy_and_says_so(monkeypatch):
    facts = target_bench.machine_report()
    for key in ("c_compiler", "c_flags", "c_simd", "c_kernel_version"):
        facts.pop(key, None)
    facts.update(c_available=False, c_unavailable_reason="no compiler on this board")
    monkeypatch.setattr(target_bench, "machine_report", lambda: facts)
    report = run_bench(sizes=[64], ops=["fft", "ofdm.analyze"], target_time=0.002)
    assert {r["backend"] for r in report["results"]} == {"numpy"}
    text = target_bench.format_report(report)
    assert "not available (no compiler on this board); numpy backend only" in text
