"""Error-rate sweeps: one sweep run serially and on local worker processes.

The sweep: ``tonebank.sweep.UncodedBpskTrial(10_000)`` (uncoded BPSK over
AWGN, 10^4 bits per frame) at Eb/N0 = 0, 2, 4, 6 dB, 8 frames per batch.
Two stop rules (``extra_info["case"]``):

``fixed``   a fixed budget, ``StopRule(min_errors=None, max_frames=160)``:
            20 batches per point, 80 in all, no speculation to discard;
``errors``  ``StopRule(min_errors=5000, max_bits=10**8)``: points of 1 to
            about 20 batches; parallel runs compute some batches beyond a
            point's stop and discard them (``extra_info["discarded"]``);
``sleep``   the fixed budget with a trial that sleeps 5 ms per batch
            instead of computing (``SleepTrial`` below): the scheduler's
            own ceiling, which other jobs on the machine hardly disturb.

Implementations (``extra_info["impl"]``): ``serial`` (``workers=1``, in
this process), ``pool1`` and ``pool2`` (a ProcessPoolExecutor of 1 or 2
processes, started once per module and passed as ``executor``, so the
time is the steady-state sweep, not the process start-up).  The result
of every parallel run is checked once against the serial one (bit for
bit).  The machine is shared by several engineers and has 2 cores: the
speed-up of ``pool2`` is bounded by what the other jobs leave free.
"""

from __future__ import annotations

import concurrent.futures as cf
import multiprocessing
import time

import pytest

from tonebank import sweep

SNR_DB = (0.0, 2.0, 4.0, 6.0)
BITS_PER_FRAME = 10_000
FRAMES_PER_BATCH = 8
CASES = {
    "fixed": sweep.StopRule(min_errors=None, max_frames=160),
    "errors": sweep.StopRule(min_errors=5000, max_bits=10**8),
    "sleep": sweep.StopRule(min_errors=None, max_frames=160),
}


class SleepTrial:
    """A trial that waits 5 ms per batch and reports error-free frames."""

    def run(self, n_frames, snr_db, rng):
        time.sleep(0.005)
        bits = BITS_PER_FRAME * n_frames
        return sweep.TrialResult({"bit_errors": 0, "bits": bits, "symbol_errors": 0,
                                  "symbols": bits, "frame_errors": 0, "frames": n_frames})


def _job(case: str) -> sweep.Sweep:
    trial = SleepTrial() if case == "sleep" else sweep.UncodedBpskTrial(BITS_PER_FRAME)
    return sweep.Sweep.over_snr(trial, SNR_DB,
                                stop=CASES[case], frames_per_batch=FRAMES_PER_BATCH,
                                seed=14)


@pytest.fixture(scope="module")
def pools():
    methods = multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("forkserver" if "forkserver" in methods
                                          else "spawn")
    with cf.ProcessPoolExecutor(1, mp_context=context) as one, \
            cf.ProcessPoolExecutor(2, mp_context=context) as two:
        # Start the workers and import tonebank there outside the timed calls.
        warm = sweep.Sweep.over_snr(sweep.UncodedBpskTrial(10), [0.0] * 4, seed=0,
                                    stop=sweep.StopRule(min_errors=None, max_frames=8),
                                    frames_per_batch=1)
        for workers, pool in ((1, one), (2, two)):
            warm.run(executor=pool, workers=workers, progress=False)
        yield {1: one, 2: two}


@pytest.fixture(scope="module")
def reference():
    return {case: _job(case).run(progress=False) for case in CASES}


@pytest.mark.parametrize("case", sorted(CASES))
@pytest.mark.parametrize("impl", ["serial", "pool1", "pool2"])
def test_sweep(benchmark, pools, reference, case, impl):
    job = _job(case)
    if impl == "serial":
        def run():
            return job.run(progress=False)
    else:
        workers = int(impl[-1])

        def run():
            return job.run(executor=pools[workers], workers=workers, progress=False)
    result = benchmark(run)
    assert result == reference[case]
    benchmark.group = f"sweep {case}"
    benchmark.extra_info.update(
        kind="sweep", case=case, impl=impl,
        batches=sum(p.batches for p in result),
        bits=sum(p.counts["bits"] for p in result),
        discarded=result.discarded_batches)
