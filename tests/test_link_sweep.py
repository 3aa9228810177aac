"""Error-rate sweeps of a Link (tonebank.sweep on tonebank.link) against theory.

BPSK over AWGN: at every point the closed form Q(sqrt(2 Eb/N0)) (J. G.
Proakis and M. Salehi, Digital Communications, 5th ed., the BPSK error
probability; tonebank.theory.ber_bpsk, checked against scipy.special in
test_theory.py) must lie in the point's 99.9 % Clopper-Pearson interval.
Seeds are fixed.  A serial run, a run on a two-process pool and a run on
a local dask.distributed cluster (loopback) must give identical counts (the
sweep's batches have their own random streams): the link travels to the
workers by pickling.
"""

import concurrent.futures as cf
import multiprocessing

import pytest

from tonebank import CarrierPlan, Constellation, theory
from tonebank.link import Link, Receiver
from tonebank.sweep import StopRule, Sweep


def _bpsk_link():
    # No prefix: the bin SNR equals Eb/N0.
    plan = CarrierPlan.centered(64, 48, sample_rate=1e6)
    return Link(plan, Constellation.bpsk(), n_symbols=8, snr="ebn0",
                receiver=Receiver(estimation="perfect"))


def test_bpsk_awgn_sweep_matches_q_function_at_every_point():
    ebn0 = [0.0, 2.0, 4.0, 6.0, 8.0]
    job = Sweep.over_snr(_bpsk_link(), ebn0, seed=9, frames_per_batch=20,
                         stop=StopRule(min_errors=200, max_bits=400_000))
    result = job.run(progress=False)
    for point, e in zip(result.points, ebn0):
        low, high = point.interval("bit", 0.999, method="clopper-pearson")
        assert low <= float(theory.ber_bpsk(e)) <= high, (e, point.counts)


def test_serial_process_pool_and_dask_give_identical_counts():
    job = Sweep.over_snr(_bpsk_link(), [2.0, 5.0], seed=3, frames_per_batch=5,
                         stop=StopRule(min_errors=30, max_bits=50_000))
    serial = [p.counts for p in job.run(progress=False).points]
    method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"
    with cf.ProcessPoolExecutor(2, mp_context=multiprocessing.get_context(method)) as pool:
        assert [p.counts for p in job.run(executor=pool, progress=False).points] == serial
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        on_dask = job.run(executor=client.get_executor(), workers=2, progress=False)
    assert [p.counts for p in on_dask.points] == serial
