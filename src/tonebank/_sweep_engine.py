"""The machinery behind :meth:`tonebank.sweep.Sweep.run` (internal).

The results file (append-only writes, resume checks), the batches (one
seeded stream each, counts checked), the in-order summing of batches
with the stop rule, and the serial and executor-driven schedulers.
"""

from __future__ import annotations

import concurrent.futures as cf
import math
import multiprocessing
import numbers
import os
import sys
import time

import numpy as np

from .sweep_results import REQUIRED_COUNTS, UNITS, PointResult, dumps, scan_file


def context():
    """Start method of the default process pool: forkserver where available
    (forking a process that runs threads, such as a dask client, can
    deadlock), else spawn."""
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")


# -- the results file --------------------------------------------------------------


def append_line(path, line: str) -> None:
    """Append one line and push it to the disk (append mode only: finished
    lines are never rewritten)."""
    with open(path, "a", encoding="utf-8", newline="\n") as handle:
        handle.write(line + "\n")
        handle.flush()
        os.fsync(handle.fileno())


def resume(path, header: dict) -> list[dict]:
    """Check an existing file against ``header``; return its point records.

    A last line cut short is removed (the file is truncated to its last
    complete line); a file without a complete header gets the header.
    """
    old, records, complete, size = scan_file(path)
    if old is None:
        # No complete line: empty, or the header's own write was cut short.
        # Start again only if what is there is the start of this header, so
        # that an unrelated file is never cut.
        with open(path, "rb") as handle:
            start = handle.read()
        if not (dumps(header) + "\n").encode("utf-8").startswith(start):
            raise ValueError(f"{os.fspath(path)!r} is not a tonebank sweep file of this "
                             "sweep (no complete header line, and its bytes are not the "
                             "start of this sweep's header); use another file")
        if size:
            os.truncate(path, 0)
        append_line(path, dumps(header))
        return []
    differences = []
    for key in sorted(set(old) | set(header)):
        if old.get(key) != header.get(key):
            if key == "points":
                differences.append(_points_difference(old.get(key), header.get(key)))
            else:
                differences.append(f"{key} is {old.get(key)!r} in the file and "
                                   f"{header.get(key)!r} here")
    if differences:
        raise ValueError(f"results file {os.fspath(path)!r} belongs to a different sweep: "
                         + "; ".join(differences)
                         + ". Resume with the same settings, or use another file.")
    if len(records) > len(header["points"]):
        raise ValueError(f"results file {os.fspath(path)!r} holds {len(records)} points, "
                         f"more than the sweep's {len(header['points'])}")
    for record, point in zip(records, header["points"]):
        if (record.get("value"), record.get("snr_db")) != (point["value"], point["snr_db"]):
            raise ValueError(f"results file {os.fspath(path)!r}: point {point['index']} "
                             f"has value={record.get('value')!r}, "
                             f"snr_db={record.get('snr_db')!r}; the header says "
                             f"value={point['value']!r}, snr_db={point['snr_db']!r}")
    if complete < size:
        # The last write was cut short (killed mid-line): drop that part
        # only; the complete lines before it are left as they are.
        os.truncate(path, complete)
    return records


def _points_difference(old, new) -> str:
    if not isinstance(old, list) or len(old) != len(new):
        count = len(old) if isinstance(old, list) else old
        return f"points: {count} in the file and {len(new)} here"
    for a, b in zip(old, new):
        if a != b:
            return f"points[{b['index']}] is {a!r} in the file and {b!r} here"
    return "points differ"      # pragma: no cover


# -- the engine --------------------------------------------------------------------


def run_batch(trial, n_frames: int, snr_db: float, seed: int, point: int, batch: int,
               backend: str) -> dict:
    """Run one batch (in a worker or here); return its raw counts."""
    from ._kernel import use_backend

    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(point, batch)))
    with use_backend(backend):
        result = trial.run(n_frames, snr_db, rng)
    counts = getattr(result, "counts", None)
    if not hasattr(counts, "items"):
        raise TypeError(f"trial.run(...) of point {point} must return an object whose "
                        f"counts is a dict; got {type(result).__name__} with counts="
                        f"{counts!r}")
    return dict(counts)


def _clean(raw: dict, point: int, batch: int, n_frames: int) -> dict:
    """Checked counts as plain Python numbers."""
    where = f"the counts of point {point}, batch {batch}"
    missing = [k for k in REQUIRED_COUNTS if k not in raw]
    if missing:
        raise ValueError(f"{where} lack {missing}; a trial must report "
                         f"{list(REQUIRED_COUNTS)}")
    clean = {}
    for key, value in raw.items():
        if not isinstance(key, str):
            raise TypeError(f"{where} have a key {key!r} that is not a string")
        if isinstance(value, np.generic):
            value = value.item()
        if isinstance(value, bool) or not isinstance(value, numbers.Real):
            raise TypeError(f"{where}: {key}={value!r} is not a number")
        if key in REQUIRED_COUNTS and not isinstance(value, numbers.Integral):
            raise TypeError(f"{where}: {key}={value!r} must be an integer")
        value = int(value) if isinstance(value, numbers.Integral) else float(value)
        if not (math.isfinite(value) and value >= 0):
            raise ValueError(f"{where}: {key}={value!r} must be finite and >= 0")
        clean[key] = value
    for errors_key, total_key in UNITS.values():
        if clean[errors_key] > clean[total_key]:
            raise ValueError(f"{where}: {errors_key}={clean[errors_key]} exceeds "
                             f"{total_key}={clean[total_key]}")
    if clean["frames"] != n_frames:
        raise ValueError(f"{where}: frames={clean['frames']} but the batch asked for "
                         f"n_frames={n_frames}")
    return clean


def _add(total: dict | None, counts: dict) -> dict:
    if total is None:
        return dict(counts)
    out = dict(total)
    for key, value in counts.items():
        out[key] = out.get(key, 0) + value
    return out


class _State:
    """Book-keeping of one point while it runs."""

    def __init__(self, point):
        self.point = point
        self.next_batch = 0          # next batch index to submit
        self.summed = 0              # batches 0 .. summed-1 are in `counts`
        self.counts = None
        self.waiting = {}            # batch -> counts or exception, out of order
        self.in_flight = 0
        self.reason = None
        self.error = None            # exception of the next batch in order

    def absorb(self, stop) -> int:
        """Sum the batches that follow in order; stop at the rule.

        Returns the number of batches received beyond the stop (dropped).
        """
        while self.reason is None and self.summed in self.waiting:
            item = self.waiting[self.summed]
            if isinstance(item, BaseException):
                self.error = item    # raised when the point is next in order
                break
            del self.waiting[self.summed]
            self.counts = _add(self.counts, item)
            self.summed += 1
            self.reason = stop.reason(self.counts)
        dropped = 0
        if self.reason is not None:
            dropped = len(self.waiting)
            self.waiting.clear()
        return dropped


class Engine:
    def __init__(self, sweep, path, backend: str, finished: list, on_point,
                 progress: bool):
        self.sweep, self.path, self.backend = sweep, path, backend
        self.finished = list(finished)
        self.on_point = on_point
        self.discarded = 0
        self.progress = _Progress(len(sweep.points), len(finished), progress)

    def _args(self, state: _State, batch: int):
        p, s = state.point, self.sweep
        return (p.trial, s.frames_per_batch, p.snr_db, s.seed, p.index, batch, self.backend)

    def _emit(self, state: _State) -> None:
        p = state.point
        point = PointResult(p.index, p.value, p.snr_db, tuple(sorted(state.counts.items())),
                            state.summed, state.reason, self.sweep.seed)
        if self.path is not None:
            append_line(self.path, dumps(point.to_record()))
        self.finished.append(point)
        self.progress.show(len(self.finished), None)
        if self.on_point is not None:
            self.on_point(point)

    def run_serial(self, todo) -> None:
        n = self.sweep.frames_per_batch
        for point in todo:
            state = _State(point)
            while state.reason is None:
                raw = run_batch(*self._args(state, state.summed))
                state.waiting[state.summed] = _clean(raw, point.index, state.summed, n)
                state.absorb(self.sweep.stop)
                self.progress.show(len(self.finished), state)
            self._emit(state)

    def _allowance(self, state: _State, slots: int) -> int:
        """Batches this point may have out while later points wait."""
        stop = self.sweep.stop
        allowance = max(1, state.summed)
        if state.counts is not None and stop.min_errors is not None:
            errors = state.counts.get(UNITS[stop.watch][0], 0)
            if errors > 0:
                needed = math.ceil(max(0, stop.min_errors - errors) * state.summed / errors)
                allowance = min(allowance, max(1, needed))
        return min(allowance, slots)

    def _cap(self, state: _State) -> float:
        """Batch index beyond which the maxima end the point for sure
        (estimated from the bits of the first batch for max_bits)."""
        stop, n = self.sweep.stop, self.sweep.frames_per_batch
        cap = math.inf
        if stop.max_frames is not None:
            cap = math.ceil(stop.max_frames / n)
        if stop.max_bits is not None and state.counts is not None and state.summed:
            per_batch = state.counts.get("bits", 0) / state.summed
            if per_batch > 0:
                cap = min(cap, math.ceil(stop.max_bits / per_batch))
        return cap

    def run_parallel(self, todo, executor: cf.Executor, slots: int) -> None:
        states = [_State(p) for p in todo]
        pending: dict = {}
        next_out = 0                       # first state not yet emitted
        n = self.sweep.frames_per_batch
        try:
            while next_out < len(states):
                self._fill(states[next_out:], executor, slots, pending)
                ready, _ = cf.wait(list(pending), return_when=cf.FIRST_COMPLETED)
                for future in ready:
                    state, batch = pending.pop(future)
                    state.in_flight -= 1
                    if future.cancelled():
                        continue
                    if state.reason is not None:
                        self.discarded += 1      # speculative, beyond the stop
                        continue
                    # An error (the trial's, or bad counts) is kept in order and
                    # raised only if the serial order would have run this batch.
                    item = future.exception()
                    if item is None:
                        try:
                            item = _clean(future.result(), state.point.index, batch, n)
                        except (TypeError, ValueError) as exc:
                            item = exc
                    state.waiting[batch] = item
                    self.discarded += state.absorb(self.sweep.stop)
                    if state.reason is not None:
                        for other, (owner, _) in pending.items():
                            if owner is state:
                                other.cancel()
                while next_out < len(states) and states[next_out].reason is not None:
                    self._emit(states[next_out])
                    next_out += 1
                if next_out < len(states) and states[next_out].error is not None:
                    raise states[next_out].error
                if next_out < len(states):
                    self.progress.show(len(self.finished), states[next_out])
        finally:
            for future in pending:
                future.cancel()

    def _fill(self, states, executor, slots: int, pending: dict) -> None:
        """Submit batches, earliest points first: first each point up to its
        allowance, then, while slots are free, more of the earliest."""
        for greedy in (False, True):
            for state in states:
                if len(pending) >= slots:
                    return
                if state.reason is not None or state.error is not None:
                    continue
                limit = slots if greedy else self._allowance(state, slots)
                cap = self._cap(state)
                # The window: never more than `slots` batches past the first
                # one not yet summed, so a slow batch cannot let the point's
                # speculation run away.
                while len(pending) < slots and state.in_flight < limit \
                        and state.next_batch < state.summed + slots \
                        and (state.in_flight == 0 or state.next_batch < cap):
                    future = executor.submit(run_batch, *self._args(state, state.next_batch))
                    pending[future] = (state, state.next_batch)
                    state.next_batch += 1
                    state.in_flight += 1

    def close(self) -> None:
        self.progress.close()


class _Progress:
    """One self-rewriting line on standard error, only on a terminal."""

    def __init__(self, total: int, done: int, enabled: bool):
        stream = sys.stderr
        try:
            tty = bool(enabled) and stream is not None and stream.isatty()
        except (AttributeError, ValueError):
            tty = False
        self.stream = stream if tty else None
        self.total, self.last, self.shown = total, 0.0, False
        self.show(done, None)

    def show(self, done: int, state: _State | None) -> None:
        if self.stream is None:
            return
        now = time.monotonic()
        if state is not None and now - self.last < 0.2 and done < self.total:
            return                        # redraw at most five times a second
        self.last = now
        width = 24
        filled = round(width * done / self.total)
        line = f"\rsweep [{'#' * filled}{'.' * (width - filled)}] {done}/{self.total} points"
        if state is not None and state.counts is not None:
            c = state.counts
            line += (f"  point {state.point.index}: {c['bit_errors']} bit errors in "
                     f"{c['bits']} bits, {state.summed} batches")
        self.stream.write(line.ljust(100)[:100])
        self.stream.flush()
        self.shown = True

    def close(self) -> None:
        if self.stream is not None and self.shown:
            self.stream.write("\n")
            self.stream.flush()


