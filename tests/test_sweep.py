"""Error-rate sweeps (tonebank.sweep): statistics, stop rules, parallel runs, resuming.

The trials here are our own and small: uncoded BPSK over AWGN written
with numpy and tonebank.Constellation, and deterministic trials whose
counts are fixed, so that stop rules can be checked batch by batch.

Sources of the reference values are named beside each check.  Monte-Carlo
checks use fixed seeds and a stated confidence bound, so they cannot
flake.  Parallel runs use a small module-wide process pool and one local
dask cluster (skipped without dask.distributed).
"""

import builtins
import concurrent.futures as cf
import csv
import io
import json
import math
import multiprocessing
import os
import sys

import numpy as np
import pytest
import scipy.special
import scipy.stats

from tonebank import Constellation, sweep
from tonebank.metrics import ErrorCount
from tonebank.sweep import StopRule, Sweep, TrialResult
from tonebank.sweep_results import read_results

# -- trials of our own ---------------------------------------------------------------


class BpskTrial:
    """Uncoded BPSK over real AWGN; snr_db is Eb/N0 in dB (Es = Eb = 1)."""

    def __init__(self, bits_per_frame=1000):
        self.bits_per_frame = bits_per_frame
        self.bpsk = Constellation.bpsk()

    def run(self, n_frames, snr_db, rng):
        bits = rng.integers(0, 2, (n_frames, self.bits_per_frame))
        sent = self.bpsk.map(bits)
        n0 = 10.0 ** (-snr_db / 10.0)
        received = sent + np.sqrt(n0 / 2) * rng.standard_normal(sent.shape)
        wrong = self.bpsk.demap(received) != bits
        return TrialResult({
            "bit_errors": int(wrong.sum()), "bits": bits.size,
            "symbol_errors": int(wrong.sum()), "symbols": bits.size,
            "frame_errors": int(wrong.any(axis=1).sum()), "frames": n_frames,
            "evm_error_energy": float(np.sum(np.abs(received - sent) ** 2)),
            "evm_reference_energy": float(np.sum(np.abs(sent) ** 2)),
        })

    def describe(self):
        return {"name": "test BPSK", "bits_per_frame": self.bits_per_frame}


class FixedTrial:
    """Deterministic counts: per frame, fixed errors out of fixed totals."""

    def __init__(self, bit_errors=0, bits=100, frame_errors=0):
        self.bit_errors, self.bits, self.frame_errors = bit_errors, bits, frame_errors

    def run(self, n_frames, snr_db, rng):
        return TrialResult({
            "bit_errors": self.bit_errors * n_frames, "bits": self.bits * n_frames,
            "symbol_errors": self.bit_errors * n_frames, "symbols": self.bits * n_frames,
            "frame_errors": min(self.frame_errors, 1) * n_frames, "frames": n_frames})


class CountsTrial:
    """Returns the counts it is given (for bad-count checks)."""

    def __init__(self, counts):
        self.counts = counts

    def run(self, n_frames, snr_db, rng):
        return TrialResult(dict(self.counts))


class SpeculationTrap(FixedTrial):
    """10 errors per batch of 1 frame; raises from batch 2 on (the spawn key
    of its stream says which batch it is)."""

    def __init__(self):
        super().__init__(bit_errors=10, bits=100)

    def run(self, n_frames, snr_db, rng):
        if rng.bit_generator.seed_seq.spawn_key[1] >= 2:
            raise RuntimeError("batch 2 must never be used")
        counts = super().run(n_frames, snr_db, rng).counts
        import tonebank
        counts["on_c_backend"] = int(tonebank.backend_info()["backend"] == "c")
        return TrialResult(counts)


class FailingTrial(BpskTrial):
    def run(self, n_frames, snr_db, rng):
        if snr_db >= 5.0:
            raise RuntimeError("receiver lost lock at 5 dB")
        return super().run(n_frames, snr_db, rng)


# -- shared executors ----------------------------------------------------------------


@pytest.fixture(scope="module")
def pool():
    """Two local worker processes for the whole module (started once)."""
    with cf.ProcessPoolExecutor(2, mp_context=multiprocessing.get_context(
            "forkserver" if "forkserver" in multiprocessing.get_all_start_methods()
            else "spawn")) as executor:
        yield executor


@pytest.fixture(scope="module")
def dask_executor():
    """A local dask.distributed cluster of two worker processes."""
    distributed = pytest.importorskip("distributed")
    cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                       host="127.0.0.1", dashboard_address=None)
    client = distributed.Client(cluster)
    # The trials of this file live in a module the workers import by name.
    here = os.path.dirname(os.path.abspath(__file__))
    client.run(lambda: sys.path.insert(0, here) if here not in sys.path else None)
    try:
        yield client.get_executor()
    finally:
        client.close()
        cluster.close()


def small_sweep(seed=3, **stop):
    """A sweep of four short points with speculation to throw away."""
    rule = StopRule(**({"min_errors": 40, "max_bits": 200_000} | stop))
    return Sweep.over_snr(BpskTrial(200), [0.0, 2.0, 4.0, 6.0], stop=rule,
                          frames_per_batch=2, seed=seed)


def uninterrupted(tmp_path, job):
    path = tmp_path / "whole.jsonl"
    job.run(path)
    return path.read_bytes()


# -- statistics against theory -------------------------------------------------------


def test_bpsk_ber_and_evm_match_theory():
    points = [0.0, 2.0, 4.0, 6.0]
    job = Sweep.over_snr(BpskTrial(1000), points, frames_per_batch=10, seed=20261202,
                         stop=StopRule(min_errors=200, max_bits=2_000_000))
    result = job.run()
    assert result.complete and len(result) == 4
    for point, ebn0_db in zip(result, points):
        ebn0 = 10 ** (ebn0_db / 10)
        # BPSK in AWGN: Pb = Q(sqrt(2 Eb/N0)) (Proakis, Digital Communications,
        # BPSK error probability); Q(x) = erfc(x / sqrt(2)) / 2 (scipy.special).
        expected = 0.5 * scipy.special.erfc(np.sqrt(2 * ebn0) / np.sqrt(2))
        low, high = point.interval("bit", 0.999, "clopper-pearson")
        assert low <= expected <= high, (ebn0_db, point.error_count(), expected)
        assert point.stop_reason == "errors" and point.error_count().errors >= 200
        # EVM^2 = sum of n squared N(0, N0/2) errors / n: (N0/2) chi^2_n / n
        # (chi-square distribution of a sum of squared Gaussians, scipy.stats).
        n = point.counts["symbols"]
        lo, hi = scipy.stats.chi2.ppf([0.0005, 0.9995], n) / n / (2 * ebn0)
        assert lo <= point.evm ** 2 <= hi


# -- stop rules -----------------------------------------------------------------------


@pytest.mark.parametrize("min_errors, batches", [(40, 4), (41, 5), (10, 1)])
def test_min_errors_reached_at_a_batch_boundary(min_errors, batches):
    # 5 errors per frame, 2 frames per batch: 10 errors per batch, exactly.
    job = Sweep.over_snr(FixedTrial(bit_errors=5), [1.0], frames_per_batch=2, seed=1,
                         stop=StopRule(min_errors=min_errors, max_bits=10**6))
    (point,) = job.run()
    assert point.batches == batches and point.stop_reason == "errors"
    assert point.counts["bit_errors"] == 10 * batches       # summed, not past the stop


@pytest.mark.parametrize("max_bits, batches", [(1000, 5), (1001, 6), (200, 1)])
def test_max_bits(max_bits, batches):
    job = Sweep.over_snr(FixedTrial(bits=100), [9.0], frames_per_batch=2, seed=1,
                         stop=StopRule(min_errors=1, max_bits=max_bits))
    (point,) = job.run()
    assert (point.batches, point.stop_reason, point.counts["bits"]) == (
        batches, "max_bits", 200 * batches)


def test_max_frames_and_frame_watch():
    job = Sweep.over_snr(FixedTrial(bits=10, frame_errors=1), [1.0, 2.0],
                         frames_per_batch=3, seed=4,
                         stop=StopRule(min_errors=7, max_bits=None, max_frames=100,
                                       watch="frame"))
    assert [p.batches for p in job.run()] == [3, 3]          # 9 >= 7 frame errors
    fixed = Sweep.over_snr(FixedTrial(bits=10), [1.0], frames_per_batch=3, seed=4,
                           stop=StopRule(min_errors=None, max_bits=None, max_frames=10))
    (point,) = fixed.run()
    assert (point.frames, point.stop_reason) == (12, "max_frames")


def test_target_precision_clopper_pearson():
    # 3 errors in 1000 bits per batch; stop once the 90 % Clopper-Pearson interval's
    # half-width is at most 25 % of the rate.  The expected batch is found here with
    # the beta quantiles of Clopper & Pearson, Biometrika 26 (1934), through
    # scipy.stats.beta (independent of tonebank.metrics).
    rule = StopRule(min_errors=None, relative_half_width=0.25, confidence=0.9,
                    method="clopper-pearson", max_bits=10**8)
    expected = None
    for k in range(1, 10_000):
        e, n = 3 * k, 1000 * k
        low = scipy.stats.beta.ppf(0.05, e, n - e + 1)
        high = scipy.stats.beta.ppf(0.95, e + 1, n - e)
        if (high - low) / 2 / (e / n) <= 0.25:
            expected = k
            break
    job = Sweep.over_snr(FixedTrial(bit_errors=3, bits=1000), [1.0], frames_per_batch=1,
                         seed=1, stop=rule)
    (point,) = job.run()
    assert (point.batches, point.stop_reason) == (expected, "precision")
    assert rule.reason({"bit_errors": 3 * (expected - 1), "bits": 1000 * (expected - 1)}) \
        is None


# -- identical results however the work is split ------------------------------------


def test_process_pool_matches_serial_bit_for_bit(tmp_path, pool):
    job = small_sweep()
    serial = job.run(tmp_path / "serial.jsonl")
    for slots in (1, 3):
        path = tmp_path / f"pool{slots}.jsonl"
        result = job.run(path, executor=pool, workers=2, max_in_flight=slots)
        assert result == serial
        assert path.read_bytes() == (tmp_path / "serial.jsonl").read_bytes()
    assert [p.batches for p in serial] == [2, 3, 8, 49]     # several batches per point


def test_speculative_batches_are_discarded_with_their_errors(pool, backend):
    # Stops after batch 1 (20 errors); with 4 batches in flight, batches 2 and 3
    # run in the workers and raise there: their errors must not surface.
    job = Sweep.over_snr(SpeculationTrap(), [1.0, 2.0], frames_per_batch=1, seed=5,
                         stop=StopRule(min_errors=20, max_bits=10**6))
    serial = job.run()
    parallel = job.run(executor=pool, max_in_flight=4)
    assert parallel == serial and [p.batches for p in parallel] == [2, 2]
    # The workers ran each batch on the caller's kernel backend.
    assert [p.counts["on_c_backend"] for p in parallel] == [2 * (backend == "c")] * 2


def test_default_local_pool_and_waste_bound():
    job = small_sweep(min_errors=30)
    result = job.run(workers=2, max_in_flight=4)
    assert result == job.run()
    # At most max_in_flight - 1 speculative batches are thrown away per point.
    assert 0 <= result.discarded_batches <= 3 * len(result)


def test_dask_cluster_matches_serial(tmp_path, dask_executor):
    job = small_sweep()
    serial = job.run(tmp_path / "serial.jsonl")
    result = job.run(tmp_path / "dask.jsonl", executor=dask_executor, workers=2)
    assert result == serial
    assert (tmp_path / "dask.jsonl").read_bytes() == (tmp_path / "serial.jsonl").read_bytes()


def test_trial_error_is_raised_serial_and_parallel(pool, tmp_path):
    job = Sweep.over_snr(FailingTrial(100), [1.0, 5.0], seed=2,
                         stop=StopRule(min_errors=5, max_bits=10**5))
    for kwargs in ({}, {"executor": pool}):
        path = tmp_path / f"fail{len(kwargs)}.jsonl"
        with pytest.raises(RuntimeError, match="lost lock"):
            job.run(path, **kwargs)
        assert len(read_results(path)) == 1       # the first point stays written


# -- resuming -------------------------------------------------------------------------


class Interrupt:
    """on_point callback: a KeyboardInterrupt after the first `after` points."""

    def __init__(self, after):
        self.after = after

    def __call__(self, point):
        if point.index + 1 == self.after:
            raise KeyboardInterrupt


class OpenSpy:
    """Records the modes in which the sweep modules open files."""

    def __init__(self, monkeypatch):
        self.modes = []
        for module in ("tonebank.sweep", "tonebank.sweep_results"):
            monkeypatch.setattr(f"{module}.open", self, raising=False)
        self.truncations = []
        self.os_truncate = os.truncate
        monkeypatch.setattr(sweep.os, "truncate", self.truncate)

    def __call__(self, file, mode="r", *args, **kwargs):
        self.modes.append(mode)
        return builtins.open(file, mode, *args, **kwargs)

    def truncate(self, path, length):
        self.truncations.append(length)
        self.os_truncate(path, length)


@pytest.mark.parametrize("after", [1, 3])
def test_resume_after_interrupt_appends_only(tmp_path, monkeypatch, after):
    job = small_sweep()
    whole = uninterrupted(tmp_path, job)
    path = tmp_path / "cut.jsonl"
    with pytest.raises(KeyboardInterrupt):
        job.run(path, on_point=Interrupt(after))
    first = path.read_bytes()
    assert first.count(b"\n") == 1 + after and whole.startswith(first)
    inode = os.stat(path).st_ino
    spy = OpenSpy(monkeypatch)
    seen = []
    result = job.run(path, on_point=seen.append)
    assert path.read_bytes() == whole                    # byte-identical to one run
    assert os.stat(path).st_ino == inode                 # same file, not replaced
    assert set(spy.modes) <= {"rb", "a"} and spy.truncations == []   # append only
    assert [p.index for p in seen] == list(range(after, 4))
    assert result == read_results(tmp_path / "whole.jsonl")


def test_parallel_interrupt_then_serial_resume(tmp_path, pool):
    job = small_sweep()
    whole = uninterrupted(tmp_path, job)
    path = tmp_path / "cut.jsonl"
    with pytest.raises(KeyboardInterrupt):
        job.run(path, executor=pool, on_point=Interrupt(2))
    job.run(path)
    assert path.read_bytes() == whole


def test_truncated_last_line_is_dropped(tmp_path, monkeypatch):
    job = small_sweep()
    whole = uninterrupted(tmp_path, job)
    lines = whole.split(b"\n")
    path = tmp_path / "killed.jsonl"
    # Killed while writing point 2: header, points 0 and 1, half of point 2.
    kept = b"\n".join(lines[:3]) + b"\n"
    path.write_bytes(kept + lines[3][: len(lines[3]) // 2])
    partial = read_results(path)                          # reading changes nothing
    assert (len(partial), partial.complete) == (2, False)
    assert path.read_bytes().startswith(kept)
    spy = OpenSpy(monkeypatch)
    job.run(path)
    assert path.read_bytes() == whole
    assert spy.truncations == [len(kept)]
    # A header cut short: the file starts again.
    path.write_bytes(lines[0][:20])
    job.run(path)
    assert path.read_bytes() == whole


def test_finished_file_runs_nothing(tmp_path):
    job = small_sweep()
    uninterrupted(tmp_path, job)
    again = Sweep.over_snr(FailingTrial(200), [0.0, 2.0, 4.0, 6.0], frames_per_batch=2,
                           seed=3, stop=job.stop)
    # Same description and settings: nothing left to run, so nothing fails.
    assert again.run(tmp_path / "whole.jsonl") == read_results(tmp_path / "whole.jsonl")


def test_header_mismatch_names_the_difference(tmp_path):
    path = tmp_path / "a.jsonl"
    small_sweep(seed=3).run(path, on_point=None)
    with pytest.raises(ValueError, match=r"seed is 3 in the file and 4 here"):
        small_sweep(seed=4).run(path)
    with pytest.raises(ValueError, match=r"stop is .*'min_errors': 40.*'min_errors': 41"):
        small_sweep(min_errors=41).run(path)
    other = Sweep.over_snr(BpskTrial(200), [0.0, 2.0, 4.0, 8.0], stop=small_sweep().stop,
                           frames_per_batch=2, seed=3)
    with pytest.raises(ValueError, match=r"points\[3\]"):
        other.run(path)
    bad = tmp_path / "bad.jsonl"
    bad.write_text('{"format": "something else"}\n')
    with pytest.raises(ValueError, match="not a tonebank sweep file"):
        small_sweep().run(bad)
    notes = tmp_path / "notes.txt"          # no complete line: never cut
    notes.write_bytes(b"ship log, day 3")
    with pytest.raises(ValueError, match="not a tonebank sweep file of this sweep"):
        small_sweep().run(notes)
    assert notes.read_bytes() == b"ship log, day 3"


# -- results, CSV, progress -------------------------------------------------------------


def test_over_parameter_builds_in_the_parent_and_exports_csv(tmp_path):
    built = []

    def build(bits):
        built.append(bits)
        return FixedTrial(bit_errors=1, bits=bits)

    job = Sweep.over("frame_bits", [50, 100], build, snr_db=7.5, frames_per_batch=4,
                     seed=9, stop=StopRule(min_errors=None, max_frames=8))
    assert built == [50, 100]
    result = job.run(tmp_path / "p.jsonl")
    header = result.metadata
    assert header["parameter"] == "frame_bits" and header["frames_per_batch"] == 4
    # FixedTrial has no describe(): both points share its class name.
    assert [p["trial"] for p in header["points"]] == [0, 0]
    assert header["trials"] == [{"type": "test_sweep.FixedTrial"}]
    assert {"tonebank", "numpy", "python", "seed", "stop", "backend"} <= set(header)
    result.to_csv(tmp_path / "p.csv", confidence=0.9, method="clopper-pearson")
    with open(tmp_path / "p.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert [int(r["frame_bits"]) for r in rows] == [50, 100]
    assert [float(r["snr_db"]) for r in rows] == [7.5, 7.5]
    assert [float(r["ber"]) for r in rows] == [1 / 50, 1 / 100]
    low, high = ErrorCount(8, 400).interval(0.9, "clopper-pearson")
    assert (float(rows[0]["ber_low"]), float(rows[0]["ber_high"])) == (low, high)
    assert "evm_percent" not in rows[0]
    lines = (tmp_path / "p.jsonl").read_text().splitlines()
    record = json.loads(lines[2])
    assert record["spawn_key_first"] == [1, 0] and record["spawn_key_last"] == [1, 1]
    assert record["entropy"] == 9 and record["batches"] == 2


def test_point_result_reproduces_from_its_seed():
    job = Sweep.over_snr(BpskTrial(100), [2.0], frames_per_batch=3, seed=77,
                         stop=StopRule(min_errors=None, max_frames=6))
    (point,) = job.run()
    total = 0
    for key in point.spawn_keys:
        rng = np.random.default_rng(np.random.SeedSequence(77, spawn_key=key))
        total += BpskTrial(100).run(3, 2.0, rng).counts["bit_errors"]
    assert total == point.counts["bit_errors"]


class TtyBuffer(io.StringIO):
    def __init__(self, tty):
        super().__init__()
        self.tty = tty

    def isatty(self):
        return self.tty


@pytest.mark.parametrize("tty, enabled", [(True, True), (False, True), (True, False)])
def test_progress_line_only_on_a_terminal(monkeypatch, tty, enabled):
    stream = TtyBuffer(tty)
    monkeypatch.setattr(sys, "stderr", stream)
    small_sweep().run(progress=enabled)
    text = stream.getvalue()
    if tty and enabled:
        assert "4/4 points" in text and text.endswith("\n")
    else:
        assert text == ""


# -- bad input ---------------------------------------------------------------------------


@pytest.mark.parametrize("kwargs, error, match", [
    ({"min_errors": 0}, ValueError, "min_errors"),
    ({"min_errors": 2.5}, TypeError, "min_errors"),
    ({"max_bits": None}, ValueError, "max_bits and max_frames"),
    ({"max_frames": -1}, ValueError, "max_frames"),
    ({"relative_half_width": 0.0}, ValueError, "relative_half_width"),
    ({"relative_half_width": "tight"}, TypeError, "relative_half_width"),
    ({"confidence": 1.0}, ValueError, "confidence"),
    ({"method": "exact"}, ValueError, "method"),
    ({"watch": "bits"}, ValueError, "watch"),
    ({"watch": 1}, TypeError, "watch"),
])
def test_stop_rule_rejects_bad_values(kwargs, error, match):
    with pytest.raises(error, match=match):
        StopRule(**kwargs)


def test_sweep_rejects_bad_values():
    trial = FixedTrial()
    with pytest.raises(TypeError, match="trial must have a run"):
        Sweep.over_snr(object(), [1.0])
    with pytest.raises(ValueError, match=r"snr_db_values\[1\]"):
        Sweep.over_snr(trial, [1.0, float("nan")])
    with pytest.raises(ValueError, match="points is empty"):
        Sweep.over_snr(trial, [])
    with pytest.raises(ValueError, match="frames_per_batch"):
        Sweep.over_snr(trial, [1.0], frames_per_batch=0)
    with pytest.raises(ValueError, match="seed"):
        Sweep.over_snr(trial, [1.0], seed=-1)
    with pytest.raises(TypeError, match="stop must be"):
        Sweep.over_snr(trial, [1.0], stop={"min_errors": 3})
    with pytest.raises(TypeError, match="build must be callable"):
        Sweep.over("x", [1], None, snr_db=1.0)
    with pytest.raises(TypeError, match=r"points\[0\] value"):
        Sweep.over("x", [(1, 2)], lambda v: trial, snr_db=1.0)
    job = Sweep.over_snr(trial, [1.0], seed=1, stop=StopRule(max_bits=100))
    with pytest.raises(ValueError, match="workers"):
        job.run(workers=0)
    with pytest.raises(TypeError, match="executor"):
        job.run(executor="local")
    with pytest.raises(TypeError, match="path"):
        job.run(path=3)
    with pytest.raises(TypeError, match="cannot be pickled"):
        Sweep.over("x", [1], lambda v: CountsTrial(lambda: 0), snr_db=1.0).run(workers=2)


@pytest.mark.parametrize("counts, error, match", [
    ({"bits": 10}, ValueError, "lack"),
    ({"bit_errors": 11}, ValueError, "bit_errors=11 exceeds bits=10"),
    ({"frames": 2}, ValueError, "n_frames=1"),
    ({"bits": 10.0}, TypeError, "bits=10.0 must be an integer"),
    ({"evm_error_energy": float("inf")}, ValueError, "evm_error_energy"),
    ({"symbol_errors": -1}, ValueError, "symbol_errors"),
])
def test_bad_counts_are_named(counts, error, match):
    good = {"bit_errors": 1, "bits": 10, "symbol_errors": 1, "symbols": 10,
            "frame_errors": 1, "frames": 1}
    bad = good | counts if match != "lack" else counts
    job = Sweep.over_snr(CountsTrial(bad), [1.0], frames_per_batch=1, seed=1,
                         stop=StopRule(max_bits=100))
    with pytest.raises(error, match=match):
        job.run()


def test_unit_names_are_checked():
    (point,) = Sweep.over_snr(FixedTrial(bit_errors=1), [1.0], seed=1,
                              stop=StopRule(max_bits=100)).run()
    with pytest.raises(ValueError, match="unit='byte'"):
        point.error_count("byte")
    assert math.isclose(point.ber, 0.01) and point.evm is None
